//! Reading and writing the output folder: atomic writes through fresh
//! temporaries, the folder lock, the hand-edit guard and `check`'s diff.

use std::io::Write;
use std::path::{Path, PathBuf};

use crate::output::emit::{self, GeneratedFile};
use crate::output::plan::Plan;
use crate::output::report;

use super::failure::Failure;

/// The plan in `dir/plan.json`, if there is a readable one.
pub(super) fn previous_plan(dir: &Path) -> Option<Plan> {
    let text = read_output(&dir.join("plan.json")).ok()??;
    serde_json::from_str(&text).ok()
}

/// An existing output file's text: `None` when there is none. Only a
/// regular file is read (a FIFO planted there would block the read, a link
/// would lead elsewhere), up to the input size cap.
pub(super) fn read_output(path: &Path) -> Result<Option<String>, String> {
    match std::fs::symlink_metadata(path) {
        Err(e) if e.kind() == std::io::ErrorKind::NotFound => Ok(None),
        Err(e) => Err(e.to_string()),
        Ok(m) if m.file_type().is_symlink() => Err("it is a symbolic link".into()),
        Ok(m) if !m.is_file() => Err("it is not a regular file".into()),
        Ok(_) => crate::input::load::read_text(path, "a file pwmplan wrote")
            .map(Some)
            .map_err(|crate::input::load::ReadRefusal(why, _)| why),
    }
}

/// Name of the advisory lock file inside an output folder.
pub const LOCK_FILE: &str = ".pwmplan.lock";

/// An exclusive advisory lock on an output folder (`DIR/.pwmplan.lock`),
/// held while a run compares and writes, so two runs on one folder take
/// turns. The lock file is removed on release (a waiting run then finds
/// the file it locked gone and locks the new one), so the folder holds
/// only outputs between runs.
pub(super) struct OutputLock {
    dir: PathBuf,
    /// The folder did not exist before this run.
    created_dir: bool,
    file: std::fs::File,
}

impl OutputLock {
    pub(super) fn acquire(dir: &Path) -> Result<OutputLock, Failure> {
        let created_dir = !dir.exists();
        std::fs::create_dir_all(dir)
            .map_err(|e| Failure::Usage(format!("cannot create {}: {e}", dir.display())))?;
        let path = dir.join(LOCK_FILE);
        loop {
            let file = std::fs::OpenOptions::new()
                .read(true)
                .write(true)
                .create(true)
                .truncate(false)
                .open(&path)
                .map_err(|e| {
                    Failure::Usage(format!("cannot open the lock {}: {e}", path.display()))
                })?;
            file.lock()
                .map_err(|e| Failure::Usage(format!("cannot lock {}: {e}", path.display())))?;
            // A run that gave up may have removed the lock file while this
            // one waited: lock the file that is there now.
            if same_file(&file, &path) {
                return Ok(OutputLock {
                    dir: dir.to_path_buf(),
                    created_dir,
                    file,
                });
            }
        }
    }

    /// Release after a successful run.
    pub(super) fn release(self) {
        let _ = std::fs::remove_file(self.dir.join(LOCK_FILE));
        let _ = self.file.unlock();
    }

    /// Release after a failed run: when this run made the folder, take the
    /// (then empty) folder away again.
    pub(super) fn abandon(self) {
        let _ = std::fs::remove_file(self.dir.join(LOCK_FILE));
        if self.created_dir {
            let _ = std::fs::remove_dir(&self.dir);
        }
        let _ = self.file.unlock();
    }
}

#[cfg(unix)]
pub(super) fn same_file(file: &std::fs::File, path: &Path) -> bool {
    use std::os::unix::fs::MetadataExt;
    match (file.metadata(), std::fs::metadata(path)) {
        (Ok(a), Ok(b)) => a.dev() == b.dev() && a.ino() == b.ino(),
        _ => false,
    }
}

#[cfg(not(unix))]
pub(super) fn same_file(_file: &std::fs::File, path: &Path) -> bool {
    path.exists()
}

/// Create a new temporary file beside `path` with a name no other run uses
/// (process id, a counter and the clock) and write `bytes` to it. The
/// create is exclusive (`create_new`): it never opens an existing file and
/// never follows a symbolic link planted at the name.
pub(super) fn write_temp(path: &Path, bytes: &[u8]) -> std::io::Result<PathBuf> {
    use std::sync::atomic::{AtomicU64, Ordering};
    static COUNTER: AtomicU64 = AtomicU64::new(0);
    let dir = path
        .parent()
        .filter(|d| !d.as_os_str().is_empty())
        .unwrap_or(Path::new("."));
    let name = path
        .file_name()
        .map(|n| n.to_string_lossy().to_string())
        .unwrap_or_default();
    let mut last = None;
    for _ in 0..16 {
        let nanos = std::time::SystemTime::now()
            .duration_since(std::time::UNIX_EPOCH)
            .map_or(0, |d| d.subsec_nanos());
        let tmp = dir.join(format!(
            ".{name}.{}-{}-{nanos:08x}{TEMP_SUFFIX}",
            std::process::id(),
            COUNTER.fetch_add(1, Ordering::Relaxed)
        ));
        match create_exclusive(&tmp, bytes) {
            Ok(()) => return Ok(tmp),
            Err(e) if e.kind() == std::io::ErrorKind::AlreadyExists => last = Some(e),
            Err(e) => return Err(e),
        }
    }
    Err(last.unwrap_or_else(|| std::io::Error::other("no free temporary name")))
}

/// Create `path` anew (failing with `AlreadyExists` when anything, a link
/// included, is there) and write `bytes` to it; on a write error the file
/// is removed again.
pub(super) fn create_exclusive(path: &Path, bytes: &[u8]) -> std::io::Result<()> {
    let mut f = std::fs::OpenOptions::new()
        .write(true)
        .create_new(true)
        .open(path)?;
    f.write_all(bytes)
        .and_then(|_| f.sync_all())
        .inspect_err(|_| {
            let _ = std::fs::remove_file(path);
        })
}

/// How every temporary file's name ends.
pub const TEMP_SUFFIX: &str = ".pwmplan-tmp";

/// Refuse to overwrite a file a person edited (or one pwmplan did not
/// write) unless forced; then write every changed file through a temporary
/// file and rename them only when all temporaries are written. A file whose
/// content is already what would be written is left alone (its time stamp
/// too, so a build does not recompile an unchanged header). Returns the
/// names written and the names left unchanged.
pub(super) fn write_outputs(
    dir: &Path,
    files: &[GeneratedFile],
    force: bool,
) -> Result<(Vec<PathBuf>, Vec<PathBuf>), Failure> {
    let mut changed = Vec::new();
    let mut unchanged = Vec::new();
    for f in files {
        let path = dir.join(&f.name);
        match read_output(&path) {
            Ok(None) => changed.push((path, f)),
            Ok(Some(existing)) if existing == f.text => unchanged.push(path),
            Ok(Some(existing)) if !force => match emit::is_untouched(&existing) {
                Some(true) => changed.push((path, f)),
                Some(false) => {
                    return Err(Failure::Usage(format!(
                        "{} was edited after pwmplan wrote it; nothing was written. Keep your edits elsewhere, or pass --force to overwrite",
                        path.display()
                    )));
                }
                None => {
                    return Err(Failure::Usage(format!(
                        "{} exists and was not written by pwmplan; nothing was written. Move it, or pass --force to overwrite",
                        path.display()
                    )));
                }
            },
            Ok(Some(_)) => changed.push((path, f)),
            Err(e) if !force => {
                return Err(Failure::Usage(format!(
                    "{} exists but cannot be read as pwmplan output ({e}); nothing was written. Move it, or pass --force to overwrite",
                    path.display()
                )));
            }
            Err(_) => changed.push((path, f)),
        }
    }
    let mut temps: Vec<(PathBuf, PathBuf)> = Vec::new();
    let remove_all = |temps: &[(PathBuf, PathBuf)]| {
        for (t, _) in temps {
            let _ = std::fs::remove_file(t);
        }
    };
    for (path, f) in &changed {
        match write_temp(path, f.text.as_bytes()) {
            Ok(tmp) => temps.push((tmp, path.clone())),
            Err(e) => {
                remove_all(&temps);
                return Err(Failure::Usage(format!(
                    "cannot write {}: {e}; nothing was written",
                    path.display()
                )));
            }
        }
    }
    for (i, (tmp, path)) in temps.iter().enumerate() {
        if let Err(e) = std::fs::rename(tmp, path) {
            remove_all(&temps[i..]);
            return Err(Failure::Usage(format!(
                "cannot write {}: {e}",
                path.display()
            )));
        }
    }
    Ok((temps.into_iter().map(|(_, p)| p).collect(), unchanged))
}

/// Differences between the files on disk and those the inputs generate now,
/// as unified diffs and plain notes.
pub(super) fn check_outputs(dir: &Path, files: &[GeneratedFile]) -> Vec<String> {
    let mut problems = Vec::new();
    for f in files {
        let path = dir.join(&f.name);
        match read_output(&path) {
            Ok(None) => problems.push(format!("{}: missing\n", path.display())),
            Err(e) => problems.push(format!("{}: cannot be read ({e})\n", path.display())),
            Ok(Some(existing)) if existing == f.text => {}
            Ok(Some(existing)) => {
                if emit::is_untouched(&existing) == Some(false) {
                    problems.push(format!(
                        "{}: edited by hand since pwmplan wrote it\n",
                        path.display()
                    ));
                }
                let diff = similar::TextDiff::from_lines(&existing, &f.text)
                    .unified_diff()
                    .context_radius(2)
                    .header(
                        &format!("{} (on disk)", path.display()),
                        &format!("{} (generated now)", path.display()),
                    )
                    .to_string();
                problems.push(diff);
            }
        }
    }
    problems
}

pub(super) fn write_text(out: &mut dyn Write, text: &str) -> Result<(), Failure> {
    out.write_all(text.as_bytes())
        .map_err(|e| Failure::Usage(format!("cannot write the report: {e}")))
}

/// Write `bytes` to `path` through a temporary file in the same folder and a
/// rename, so a reader never sees half a file.
pub fn write_atomically(path: &Path, bytes: &[u8]) -> Result<(), Failure> {
    let dir = path
        .parent()
        .filter(|d| !d.as_os_str().is_empty())
        .unwrap_or(Path::new("."));
    std::fs::create_dir_all(dir)
        .map_err(|e| Failure::Usage(format!("cannot create {}: {e}", dir.display())))?;
    let fail = |e: std::io::Error| Failure::Usage(format!("cannot write {}: {e}", path.display()));
    let tmp = write_temp(path, bytes).map_err(fail)?;
    std::fs::rename(&tmp, path).map_err(|e| {
        let _ = std::fs::remove_file(&tmp);
        fail(e)
    })
}

/// The emitted constants (C `#define`s, or Rust `pub const`s when no
/// header is written) that differ between the files in `dir` and the
/// files generated now: `(name, old, new)`, `old`/`new` empty when the
/// constant is new or gone.
pub(super) fn constant_changes(
    dir: &Path,
    files: &[GeneratedFile],
) -> Vec<(String, String, String)> {
    let code = files
        .iter()
        .find(|f| f.name.extension().is_some_and(|e| e == "h"))
        .or_else(|| {
            files
                .iter()
                .find(|f| f.name.extension().is_some_and(|e| e == "rs"))
        });
    let Some(f) = code else {
        return Vec::new();
    };
    let Ok(old) = std::fs::read_to_string(dir.join(&f.name)) else {
        return Vec::new();
    };
    report::constant_changes(&old, &f.text)
}

#[cfg(test)]
mod tests {
    use super::*;

    /// A link planted at the temporary name is not followed: the create
    /// fails and the link's target keeps its content.
    #[cfg(unix)]
    #[test]
    fn exclusive_create_does_not_follow_a_planted_link() {
        let dir = tempfile::tempdir().expect("temp dir");
        let victim = dir.path().join("victim");
        std::fs::write(&victim, "untouched").expect("write");
        let tmp = dir.path().join(".plan.json.1-0-0.pwmplan-tmp");
        std::os::unix::fs::symlink(&victim, &tmp).expect("link");
        let e = create_exclusive(&tmp, b"payload").expect_err("must not open");
        assert_eq!(e.kind(), std::io::ErrorKind::AlreadyExists);
        assert_eq!(std::fs::read_to_string(&victim).expect("read"), "untouched");
        // A fresh name is used instead.
        let made = write_temp(&dir.path().join("plan.json"), b"payload").expect("temp");
        assert_ne!(made, tmp);
        assert_eq!(std::fs::read(&made).expect("read"), b"payload");
    }

    /// Each temporary name is new, even within one process.
    #[test]
    fn temporary_names_differ() {
        let dir = tempfile::tempdir().expect("temp dir");
        let p = dir.path().join("x.h");
        let a = write_temp(&p, b"a").expect("a");
        let b = write_temp(&p, b"b").expect("b");
        assert_ne!(a, b);
        assert!(a.to_string_lossy().ends_with(TEMP_SUFFIX));
    }
}

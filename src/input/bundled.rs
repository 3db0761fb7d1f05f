//! The boards, switches and designs compiled into the binary.
//!
//! They are the files under `boards/` in the repository, included verbatim,
//! so `pwmplan plan` works on a fresh machine with no arguments and a user's
//! design can start from `board: bundled:wren-hb24`.

/// What a bundled file describes.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Kind {
    Design,
    Board,
    Switch,
}

impl Kind {
    pub fn noun(self) -> &'static str {
        match self {
            Kind::Design => "design",
            Kind::Board => "board",
            Kind::Switch => "switch",
        }
    }
}

/// Path under the repository, kind, text.
const FILES: &[(&str, Kind, &str)] = &[
    (
        "boards/belt-feeder.yaml",
        Kind::Design,
        include_str!("../../boards/belt-feeder.yaml"),
    ),
    (
        "boards/vent-fan.yaml",
        Kind::Design,
        include_str!("../../boards/vent-fan.yaml"),
    ),
    (
        "boards/winch.yaml",
        Kind::Design,
        include_str!("../../boards/winch.yaml"),
    ),
    (
        "boards/pump-bldc.yaml",
        Kind::Design,
        include_str!("../../boards/pump-bldc.yaml"),
    ),
    (
        "boards/wren-hb24.yaml",
        Kind::Board,
        include_str!("../../boards/wren-hb24.yaml"),
    ),
    (
        "boards/kite-ls12.yaml",
        Kind::Board,
        include_str!("../../boards/kite-ls12.yaml"),
    ),
    (
        "boards/heron-hb48.yaml",
        Kind::Board,
        include_str!("../../boards/heron-hb48.yaml"),
    ),
    (
        "boards/osprey-3p48.yaml",
        Kind::Board,
        include_str!("../../boards/osprey-3p48.yaml"),
    ),
    (
        "boards/switches/tarn-40.yaml",
        Kind::Switch,
        include_str!("../../boards/switches/tarn-40.yaml"),
    ),
    (
        "boards/switches/scree-60.yaml",
        Kind::Switch,
        include_str!("../../boards/switches/scree-60.yaml"),
    ),
    (
        "boards/switches/corrie-100.yaml",
        Kind::Switch,
        include_str!("../../boards/switches/corrie-100.yaml"),
    ),
];

/// The design `pwmplan plan` runs when given no file.
pub const DEMO_DESIGN: &str = "boards/belt-feeder.yaml";

/// The text of a bundled file by its repository path.
pub fn text(path: &str) -> Option<&'static str> {
    FILES
        .iter()
        .find(|(p, _, _)| *p == path)
        .map(|(_, _, t)| *t)
}

/// `boards/switches/tarn-40.yaml` → `switches/tarn-40`.
pub fn short_name(path: &str) -> String {
    path.trim_start_matches("boards/")
        .trim_end_matches(".yaml")
        .to_string()
}

/// Every bundled file of `kind`: (short name, repository path, text).
pub fn all(kind: Kind) -> impl Iterator<Item = (String, &'static str, &'static str)> {
    FILES
        .iter()
        .filter(move |(_, k, _)| *k == kind)
        .map(|(p, _, t)| (short_name(p), *p, *t))
}

/// Short names of every bundled file of `kind`.
pub fn names(kind: Kind) -> Vec<&'static str> {
    FILES
        .iter()
        .filter(|(_, k, _)| *k == kind)
        .map(|(p, _, _)| p.trim_start_matches("boards/").trim_end_matches(".yaml"))
        .collect()
}

/// Find a bundled file by short name; a switch may be named without its
/// `switches/` folder.
pub fn find(name: &str, kind: Kind) -> Option<&'static str> {
    let name = name.trim().trim_end_matches(".yaml");
    FILES
        .iter()
        .filter(|(_, k, _)| *k == kind)
        .map(|(p, _, _)| *p)
        .find(|p| {
            let short = p.trim_start_matches("boards/").trim_end_matches(".yaml");
            short == name || short.trim_start_matches("switches/") == name
        })
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn demo_is_bundled_and_names_resolve() {
        assert!(text(DEMO_DESIGN).is_some());
        assert_eq!(
            find("wren-hb24", Kind::Board),
            Some("boards/wren-hb24.yaml")
        );
        assert_eq!(
            find("tarn-40", Kind::Switch),
            Some("boards/switches/tarn-40.yaml")
        );
        assert_eq!(
            find("switches/tarn-40", Kind::Switch),
            Some("boards/switches/tarn-40.yaml")
        );
        assert_eq!(find("tarn-40", Kind::Board), None);
    }

    #[test]
    fn every_file_under_boards_is_bundled() {
        // A file added to boards/ but not to FILES would be missing from the binary.
        let root = std::path::Path::new(env!("CARGO_MANIFEST_DIR")).join("boards");
        let mut on_disk = Vec::new();
        for dir in [root.clone(), root.join("switches")] {
            for e in std::fs::read_dir(&dir).expect("boards/ is readable") {
                let p = e.expect("entry").path();
                if p.extension().is_some_and(|x| x == "yaml") {
                    let rel = p
                        .strip_prefix(env!("CARGO_MANIFEST_DIR"))
                        .expect("under the crate");
                    on_disk.push(rel.to_string_lossy().replace('\\', "/"));
                }
            }
        }
        on_disk.sort();
        let mut bundled: Vec<String> = FILES.iter().map(|(p, _, _)| p.to_string()).collect();
        bundled.sort();
        assert_eq!(on_disk, bundled);
    }
}

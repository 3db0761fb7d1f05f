//! `pwmplan boards`: list the bundled files.

use std::io::Write;

use crate::input::bundled::{self, Kind};
use crate::input::load::{Origin, SourceFile};
use crate::input::spec::{BoardFile, DesignFile, SwitchFile};

use super::failure::Failure;
use super::files::*;

/// Run the command; returns the exit status.
pub fn run(out: &mut dyn Write) -> Result<u8, Failure> {
    write_text(out, &list_bundled()?)?;
    Ok(0)
}

/// The bundled files, each with the name written inside it.
fn list_bundled() -> Result<String, Failure> {
    let mut s = String::new();
    for (kind, title) in [
        (Kind::Board, "Boards (use as `board: bundled:NAME`)"),
        (
            Kind::Switch,
            "Switches (use as `switch: bundled:NAME` or `--switch bundled:NAME`)",
        ),
        (
            Kind::Design,
            "Designs (run with `pwmplan plan boards/NAME.yaml`)",
        ),
    ] {
        s.push_str(title);
        s.push('\n');
        for (short, path, _) in bundled::all(kind) {
            let src = SourceFile::read(Origin::Bundled(path.to_string()))?;
            let name = match kind {
                Kind::Board => src.parse::<BoardFile>()?.board.name,
                Kind::Switch => src.parse::<SwitchFile>()?.switch.name,
                Kind::Design => src.parse::<DesignFile>()?.design.name,
            };
            let short = short.trim_start_matches("switches/").to_string();
            s.push_str(&format!("  {short:<14} {name}\n"));
        }
    }
    Ok(s)
}

//! `schema`: the JSON Schema of the input files, for YAML editors'
//! completion, hover documentation and validation; generated from the types
//! that parse the files (`input::spec::schema`), so it follows the parser.

use std::io::Write;
use std::path::PathBuf;

use clap::Args as ClapArgs;

use super::failure::Failure;
use super::files::write_atomically;
use crate::input::spec::schema::schemas;

/// Which input file's schema.
#[derive(Debug, Clone, Copy, PartialEq, Eq, clap::ValueEnum)]
pub enum SchemaKind {
    Switch,
    Board,
    Design,
}

#[derive(Debug, ClapArgs)]
pub struct SchemaArgs {
    /// Print this file kind's schema to standard output.
    #[arg(value_enum)]
    pub kind: Option<SchemaKind>,
    /// Write all three (switch.schema.json, board.schema.json,
    /// design.schema.json) into this folder instead.
    #[arg(long, value_name = "DIR", conflicts_with = "kind")]
    pub out: Option<PathBuf>,
}

/// Print one schema or write the three.
pub fn run(a: SchemaArgs, out: &mut dyn Write) -> Result<u8, Failure> {
    let all = schemas();
    match (a.kind, a.out) {
        (Some(kind), None) => {
            let name = match kind {
                SchemaKind::Switch => "switch.schema.json",
                SchemaKind::Board => "board.schema.json",
                SchemaKind::Design => "design.schema.json",
            };
            let text = all
                .iter()
                .find(|(n, _)| *n == name)
                .map(|(_, t)| t.as_str())
                .unwrap_or_default();
            out.write_all(text.as_bytes())
                .map_err(|e| Failure::Usage(format!("cannot write the schema: {e}")))?;
            Ok(0)
        }
        (None, Some(dir)) => {
            std::fs::create_dir_all(&dir)
                .map_err(|e| Failure::Usage(format!("cannot create {}: {e}", dir.display())))?;
            for (name, text) in &all {
                write_atomically(&dir.join(name), text.as_bytes())?;
            }
            Ok(0)
        }
        _ => Err(Failure::Usage(
            "schema: expected a file kind (switch, board or design) to print, or --out DIR to write all three".into(),
        )),
    }
}

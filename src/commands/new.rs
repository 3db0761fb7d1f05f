//! `pwmplan new`: write a commented starter design.

use std::io::Write;
use std::path::PathBuf;

use super::failure::Failure;
use super::files::*;

// The options of the command; its help text is the variant's doc in
// `args.rs`.
#[derive(Debug, clap::Args)]
pub struct NewArgs {
    /// Where to write it.
    #[arg(default_value = "drive.yaml")]
    pub path: PathBuf,
    /// The power stage: half-bridge (brushed DC, one direction),
    /// h-bridge (brushed DC, both directions), low-side (brushed DC, one
    /// switch and a freewheel diode) or three-phase (brushless).
    #[arg(long, value_enum, default_value_t = StarterTopology::HalfBridge)]
    pub topology: StarterTopology,
    /// Overwrite an existing file.
    #[arg(long)]
    pub force: bool,
}

/// Run the command; returns the exit status.
pub fn run(args: NewArgs, out: &mut dyn Write) -> Result<u8, Failure> {
    let NewArgs {
        path,
        force,
        topology,
    } = args;
    if path.exists() && !force {
        return Err(Failure::Usage(format!(
            "{} exists; pass --force to overwrite it",
            path.display()
        )));
    }
    let (text, board) = topology.starter();
    write_atomically(&path, text.as_bytes())?;
    write_text(
        out,
        &format!(
            "wrote {}: a starter design on the bundled board {board}; edit the motor and constraints, then run `pwmplan plan {}`\n",
            path.display(),
            path.display()
        ),
    )?;
    Ok(0)
}

/// The starter designs of `pwmplan new`, one per topology.
#[derive(Debug, Clone, Copy, PartialEq, Eq, clap::ValueEnum)]
pub enum StarterTopology {
    HalfBridge,
    HBridge,
    LowSide,
    ThreePhase,
}

impl StarterTopology {
    /// The starter's text and the bundled board it uses.
    pub fn starter(self) -> (&'static str, &'static str) {
        match self {
            StarterTopology::HalfBridge => (STARTER_DESIGN, "wren-hb24"),
            StarterTopology::HBridge => (STARTER_H_BRIDGE, "heron-hb48"),
            StarterTopology::LowSide => (STARTER_LOW_SIDE, "kite-ls12"),
            StarterTopology::ThreePhase => (STARTER_THREE_PHASE, "osprey-3p48"),
        }
    }
}

/// What `pwmplan new` writes: the half-bridge starter (the default), and
/// one per other topology.
const STARTER_DESIGN: &str = include_str!("../../templates/starter-design.yaml");

const STARTER_H_BRIDGE: &str = include_str!("../../templates/starter-h-bridge.yaml");

const STARTER_LOW_SIDE: &str = include_str!("../../templates/starter-low-side.yaml");

const STARTER_THREE_PHASE: &str = include_str!("../../templates/starter-three-phase.yaml");

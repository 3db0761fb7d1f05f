//! `explain`: what a finding code means, where its rule comes from; without a code, the list.

use std::io::Write;

use clap::Args as ClapArgs;

use super::failure::Failure;
use crate::output::explain::{EXPLANATIONS, explain};

#[derive(Debug, ClapArgs)]
pub struct ExplainArgs {
    /// A finding's code as a plan shows it (e.g. `vdss-margin-low`); omit to list them.
    pub code: Option<String>,
}

/// Print the explanation of the code, or every code with its first sentence.
pub fn run(a: ExplainArgs, out: &mut dyn Write) -> Result<u8, Failure> {
    let w = |e: std::io::Error| Failure::Internal(format!("writing the explanation: {e}"));
    let Some(code) = a.code else {
        for x in EXPLANATIONS {
            let first = x.text.split(". ").next().unwrap_or(x.text);
            writeln!(out, "{:<28} {}", x.code, first.trim_end_matches('.')).map_err(w)?;
        }
        return Ok(0);
    };
    let x = explain(&code).ok_or_else(|| {
        Failure::Usage(format!(
            "no finding code `{code}`; `pwmplan explain` lists them"
        ))
    })?;
    writeln!(out, "{code}\n\n{}\n\nsource: {}", x.text, x.source).map_err(w)?;
    Ok(0)
}

//! `completions` and `manual`: the shell completion script and the manual page, generated
//! from the same clap definitions that parse the command line (`clap_complete`,
//! `clap_mangen`), so they never drift from it.

use std::io::Write;

use clap::Args as ClapArgs;
use clap_complete::Shell;

use super::failure::Failure;

#[derive(Debug, ClapArgs)]
pub struct CompletionsArgs {
    /// The shell to write the completion script for.
    #[arg(value_enum)]
    pub shell: Shell,
}

/// Write the completion script of `shell` for the command tree `cmd` to `out`.
pub fn completions(
    a: CompletionsArgs,
    mut cmd: clap::Command,
    out: &mut dyn Write,
) -> Result<u8, Failure> {
    clap_complete::generate(a.shell, &mut cmd, "pwmplan", out);
    Ok(0)
}

#[derive(Debug, ClapArgs)]
pub struct ManualArgs {
    /// A command's own page (`pwmplan-COMMAND`, which the main page lists); omit for the
    /// main page.
    pub command: Option<String>,
}

/// Write the manual page (roff, section 1) of pwmplan (the command tree `main`) or of one of
/// its commands to `out`. A reader that stops early (a closed pipe) is not an error.
pub fn manual(a: ManualArgs, main: clap::Command, out: &mut dyn Write) -> Result<u8, Failure> {
    let page = match &a.command {
        None => main,
        Some(name) => {
            let names: Vec<String> = main
                .get_subcommands()
                .map(|c| c.get_name().to_string())
                .collect();
            let sub = main.find_subcommand(name).cloned().ok_or_else(|| {
                Failure::Usage(format!(
                    "no command `{name}`; expected one of: {}",
                    names.join(", ")
                ))
            })?;
            sub.name(format!("pwmplan-{name}"))
                .version(env!("CARGO_PKG_VERSION"))
        }
    };
    match clap_mangen::Man::new(page).render(out) {
        Ok(()) => Ok(0),
        Err(e) if e.kind() == std::io::ErrorKind::BrokenPipe => Ok(0),
        Err(e) => Err(Failure::Internal(format!("writing the manual page: {e}"))),
    }
}

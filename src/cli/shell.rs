//! `skidroute completions SHELL` and `skidroute man [COMMAND]`: shell completion scripts
//! (clap_complete) and roff manual pages (clap_mangen) generated from the flag definitions, so
//! they never drift from the real flags.

use std::process::ExitCode;

use anyhow::{anyhow, Result};
use clap::Args;
use clap_complete::Shell;

use super::emit;

#[derive(Args)]
pub struct CompletionsArgs {
    /// The shell to complete for.
    #[arg(value_enum)]
    pub shell: Shell,
}

#[derive(Args)]
pub struct ManArgs {
    /// A command's own page (check, compare, relax, drift, fit, replay, profile) instead of the main one.
    pub command: Option<String>,
}

/// Prints the completion script of `shell` for the command line `cmd`.
pub fn run_completions(a: CompletionsArgs, mut cmd: clap::Command) -> Result<ExitCode> {
    let mut script = Vec::new();
    clap_complete::generate(a.shell, &mut cmd, "skidroute", &mut script);
    emit(&String::from_utf8_lossy(&script))?;
    Ok(ExitCode::SUCCESS)
}

/// Prints the manual page (roff) of the whole program or of one command.
pub fn run_man(a: ManArgs, cmd: clap::Command) -> Result<ExitCode> {
    let man = match a.command.as_deref() {
        None => clap_mangen::Man::new(cmd),
        Some(name) => {
            let names: Vec<String> = cmd.get_subcommands().map(|c| c.get_name().to_string()).collect();
            let sub = cmd
                .find_subcommand(name)
                .cloned()
                .ok_or_else(|| anyhow!("man: no command '{name}'; the commands are {}", names.join(", ")))?;
            clap_mangen::Man::new(sub).title(format!("skidroute-{name}"))
        }
    };
    let mut roff = Vec::new();
    man.render(&mut roff)?;
    emit(&String::from_utf8_lossy(&roff))?;
    Ok(ExitCode::SUCCESS)
}

//! Command-line entry: parse flags, call the library through the `cli` layer, and map the
//! outcome to an exit code (0 all pass, 1 a leg fails or a fit failed, 2 usage, input or I/O
//! error).

mod cli;

use std::process::ExitCode;

use clap::{CommandFactory, Parser, Subcommand};

#[derive(Parser)]
#[command(name = "skidroute", version, about = "Screen planned routes for skid-steered vehicles on mixed terrain")]
struct Cli {
    #[command(subcommand)]
    command: Command,
}

#[derive(Subcommand)]
enum Command {
    /// Roll routes out through the terrain models and report every leg.
    Check(cli::check::CheckArgs),
    /// Check alternative routes and rank them (verdict first, then --by).
    Compare(cli::compare::CompareArgs),
    /// Widen corners too tight for the terrain and write the repaired route.
    Relax(cli::relax::RelaxArgs),
    /// Monte Carlo of the position error at each leg end when localization is lost.
    Drift(cli::drift::DriftArgs),
    /// Calibrate per-terrain motion models from drive logs and write a profile.
    Fit(cli::fit::FitArgs),
    /// Score a profile on new drive logs without refitting: does the calibration still hold?
    Replay(cli::replay::ReplayArgs),
    /// Print the built-in demo profile, or validate a profile file.
    Profile(cli::profile::ProfileArgs),
    /// Print a shell completion script (bash, zsh, fish, elvish, powershell).
    Completions(cli::shell::CompletionsArgs),
    /// Print the manual page (roff): `skidroute man > skidroute.1`, `skidroute man check`.
    Man(cli::shell::ManArgs),
}

fn main() -> ExitCode {
    cli::clean_up_on_interrupt();
    let cli = match Cli::try_parse() {
        Ok(c) => c,
        Err(e) => return cli::usage_error(e),
    };
    let result = match cli.command {
        Command::Check(a) => cli::check::run_check(a),
        Command::Drift(a) => cli::drift::run_drift_command(a),
        Command::Fit(a) => cli::fit::run_fit(a),
        Command::Replay(a) => cli::replay::run_replay(a),
        Command::Profile(a) => cli::profile::run_profile(a),
        Command::Compare(a) => cli::compare::run_compare(a),
        Command::Relax(a) => cli::relax::run_relax(a),
        Command::Completions(a) => cli::shell::run_completions(a, Cli::command()),
        Command::Man(a) => cli::shell::run_man(a, Cli::command()),
    };
    match result {
        Ok(code) => code,
        Err(e) => {
            cli::print_error(&e.to_string());
            ExitCode::from(2)
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    /// clap's own checks of the flag definitions (clashing names or short flags, bad
    /// `requires`), which it runs only in builds with debug assertions (`cargo test --bin skidroute`).
    #[test]
    fn flag_definitions_are_consistent() {
        Cli::command().debug_assert();
    }
}

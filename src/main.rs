//! Command-line entry: parse flags, call the library, print, map the outcome to an exit code
//! (0 all pass, 1 a leg fails or a fit failed, 2 usage, input or I/O error).

use std::io::IsTerminal;
use std::path::PathBuf;
use std::process::ExitCode;

use anyhow::{Context, Result};
use clap::{Args, Parser, Subcommand};
use skidroute::assess::Verdict;
use skidroute::report::{self, CheckOutputs};
use skidroute::vehicle::{Profile, DEMO_PROFILE_TOML};

#[derive(Parser)]
#[command(name = "skidroute", version, about = "Screen planned routes for skid-steered vehicles on mixed terrain")]
struct Cli {
    #[command(subcommand)]
    command: Command,
}

#[derive(Subcommand)]
enum Command {
    /// Roll routes out through the terrain models and report every leg.
    Check(CheckArgs),
    /// Print the built-in demo profile, or validate a profile file.
    Profile(ProfileArgs),
}

#[derive(Args)]
struct CheckArgs {
    /// Route files (.geojson, .json or .csv).
    #[arg(required = true)]
    routes: Vec<PathBuf>,
    /// Vehicle profile (TOML); the built-in demo profile when omitted.
    #[arg(long)]
    vehicle: Option<PathBuf>,
    /// Print the JSON report to stdout instead of the table.
    #[arg(long)]
    json: bool,
    /// Write the JSON report to this file.
    #[arg(long, value_name = "FILE")]
    report: Option<PathBuf>,
    /// Write the simulated trace (CSV, local frame).
    #[arg(long, value_name = "FILE")]
    trace: Option<PathBuf>,
    /// Write the predicted path as GeoJSON (GeoJSON routes only).
    #[arg(long, value_name = "FILE")]
    predicted: Option<PathBuf>,
    /// Write a plot (.svg or .png).
    #[arg(long, value_name = "FILE")]
    plot: Option<PathBuf>,
    /// Treat cautions as failures for the exit code.
    #[arg(long)]
    strict: bool,
    /// Print nothing but errors.
    #[arg(long)]
    quiet: bool,
}

#[derive(Args)]
struct ProfileArgs {
    /// Print the built-in demo profile (TOML).
    #[arg(long, conflicts_with = "file")]
    demo: bool,
    /// A profile to validate.
    file: Option<PathBuf>,
}

fn color_wanted() -> bool {
    std::io::stdout().is_terminal() && std::env::var_os("NO_COLOR").is_none_or(|v| v.is_empty())
}

fn load_profile(path: &Option<PathBuf>) -> Result<(Profile, bool)> {
    match path {
        Some(p) => Ok((Profile::read(p)?, false)),
        None => Ok((Profile::demo(), true)),
    }
}

fn run_check(a: CheckArgs) -> Result<ExitCode> {
    let outputs =
        CheckOutputs { report_json: a.report, trace_csv: a.trace, predicted_geojson: a.predicted, plot: a.plot };
    let inputs: Vec<PathBuf> = a.routes.iter().chain(a.vehicle.iter()).cloned().collect();
    report::refuse_overwriting_inputs(&inputs, outputs.paths())?;
    let (profile, demo) = load_profile(&a.vehicle)?;
    let routes = skidroute::check::load_routes(&a.routes, &profile)?;
    let run = skidroute::check::check_routes(routes, &profile, demo);
    report::write_check_outputs(&run, &outputs)?;
    if a.json {
        print!("{}", report::json::check_json(&run));
    } else if !a.quiet {
        print!("{}", report::table::check_table(&run, color_wanted()));
    }
    let failing = match run.verdict() {
        Verdict::Fail => true,
        Verdict::Caution => a.strict,
        Verdict::Pass => false,
    };
    Ok(if failing { ExitCode::from(1) } else { ExitCode::SUCCESS })
}

fn run_profile(a: ProfileArgs) -> Result<ExitCode> {
    match (a.demo, a.file) {
        (_, Some(file)) => {
            let p = Profile::read(&file)?;
            println!(
                "{}: valid profile for '{}' with terrains {}",
                file.display(),
                p.vehicle.name,
                p.terrain_names().join(", ")
            );
        }
        (true, None) => print!("{DEMO_PROFILE_TOML}"),
        (false, None) => anyhow::bail!("give a profile file to validate, or --demo to print the built-in one"),
    }
    Ok(ExitCode::SUCCESS)
}

fn main() -> ExitCode {
    let cli = match Cli::try_parse() {
        Ok(c) => c,
        Err(e) => {
            let _ = e.print();
            return if e.use_stderr() { ExitCode::from(2) } else { ExitCode::SUCCESS };
        }
    };
    let result = match cli.command {
        Command::Check(a) => run_check(a).context("check"),
        Command::Profile(a) => run_profile(a).context("profile"),
    };
    match result {
        Ok(code) => code,
        Err(e) => {
            eprintln!("skidroute: error: {:#}", e.root_cause());
            ExitCode::from(2)
        }
    }
}

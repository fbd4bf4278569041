//! `skidroute check`: roll routes out and report every leg.

use std::path::PathBuf;
use std::process::ExitCode;

use anyhow::Result;
use clap::Args;
use skidroute::assess::Verdict;
use skidroute::report::{self, CheckOutputs};

use super::{color_wanted, emit, load_profile};

#[derive(Args)]
pub struct CheckArgs {
    /// Route files (.geojson, .json or .csv).
    #[arg(required = true)]
    pub routes: Vec<PathBuf>,
    /// Vehicle profile (TOML); the built-in demo profile when omitted.
    #[arg(long)]
    pub vehicle: Option<PathBuf>,
    /// Print the JSON report to stdout instead of the table.
    #[arg(long)]
    pub json: bool,
    /// Write the JSON report to this file.
    #[arg(long, value_name = "FILE")]
    pub report: Option<PathBuf>,
    /// Write the simulated trace (CSV, local frame).
    #[arg(long, value_name = "FILE")]
    pub trace: Option<PathBuf>,
    /// Write the predicted path as GeoJSON (GeoJSON routes only).
    #[arg(long, value_name = "FILE")]
    pub predicted: Option<PathBuf>,
    /// Write a plot (.svg or .png).
    #[arg(long, value_name = "FILE")]
    pub plot: Option<PathBuf>,
    /// Treat cautions as failures for the exit code.
    #[arg(long)]
    pub strict: bool,
    /// Print nothing but errors.
    #[arg(long)]
    pub quiet: bool,
    #[command(flatten)]
    pub limits: super::limits::LimitArgs,
}

pub fn run_check(a: CheckArgs) -> Result<ExitCode> {
    let outputs =
        CheckOutputs { report_json: a.report, trace_csv: a.trace, predicted_geojson: a.predicted, plot: a.plot };
    let inputs: Vec<PathBuf> = a.routes.iter().chain(a.vehicle.iter()).cloned().collect();
    report::refuse_overwriting_inputs(&inputs, outputs.paths())?;
    let (profile, demo) = load_profile(&a.vehicle)?;
    let limits = a.limits.resolve()?;
    let routes = skidroute::check::load_routes_with(&a.routes, &profile, &limits)?;
    let run = skidroute::check::check_routes_with(routes, &profile, demo, &limits);
    report::write_check_outputs(&run, &outputs)?;
    if a.json {
        emit(&report::json::check_json(&run))?;
    } else if !a.quiet {
        emit(&report::table::check_table(&run, color_wanted()))?;
    }
    let failing = match run.verdict() {
        Verdict::Fail => true,
        Verdict::Caution => a.strict,
        Verdict::Pass => false,
    };
    Ok(if failing { ExitCode::from(1) } else { ExitCode::SUCCESS })
}

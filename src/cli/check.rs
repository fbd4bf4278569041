//! `skidroute check`: roll routes out and report every leg.

use std::path::PathBuf;
use std::process::ExitCode;

use anyhow::Result;
use clap::Args;
use skidroute::assess::Verdict;
use skidroute::report::{self, CheckOutputs};

use skidroute::drift::DriftSettings;

use super::progress::Bar;
use super::{color_wanted, emit, load_profile};

#[derive(Args)]
pub struct CheckArgs {
    /// Route files (.geojson, .json or .csv) or folders of them (taken sorted by name).
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
    /// Stdout format: the table, the JSON document, or JSON Lines (one route per line).
    #[arg(long, value_enum, default_value = "table")]
    pub format: super::batch::Format,
    /// Write a self-contained HTML report (plot inline, per-leg table, reasons, caution).
    #[arg(long, value_name = "FILE")]
    pub html: Option<PathBuf>,
    /// Print nothing but errors.
    #[arg(long)]
    pub quiet: bool,
    /// Also estimate the drift at every leg end if localization is lost (Monte Carlo).
    #[arg(long)]
    pub drift: bool,
    /// Monte Carlo samples for --drift.
    #[arg(long, default_value_t = 1000, requires = "drift",
          value_parser = clap::value_parser!(u64).range(1..=skidroute::drift::MAX_SAMPLES as u64))]
    pub samples: u64,
    /// Seed for --drift (the same seed gives the same figures).
    #[arg(long, default_value_t = 7, requires = "drift")]
    pub seed: u64,
    /// Leg (from 1) at whose start localization is lost, for --drift.
    #[arg(long, default_value_t = 1, requires = "drift", value_parser = clap::value_parser!(u64).range(1..))]
    pub lost_from_leg: u64,
    /// Odometry model for --drift; default: the profile's follower `inverse_model`.
    #[arg(long, value_enum, requires = "drift")]
    pub odometry: Option<super::drift::OdometryArg>,
    /// Heading source for --drift; default: the gyro when the profile has an [imu] section.
    #[arg(long, value_enum, requires = "drift")]
    pub heading: Option<super::drift::HeadingArg>,
    #[command(flatten)]
    pub limits: super::limits::LimitArgs,
}

pub fn run_check(a: CheckArgs) -> Result<ExitCode> {
    let outputs =
        CheckOutputs { report_json: a.report, trace_csv: a.trace, predicted_geojson: a.predicted, plot: a.plot };
    let files = skidroute::batch::expand_inputs(&a.routes)?;
    let inputs: Vec<PathBuf> = files.iter().chain(a.vehicle.iter()).cloned().collect();
    report::refuse_overwriting_inputs(&inputs, outputs.paths().chain(a.html.iter()))?;
    let (profile, demo) = load_profile(&a.vehicle)?;
    let limits = a.limits.resolve()?;
    let routes = skidroute::batch::load_routes_parallel_with(&files, &profile, &limits)?;
    let mut run = skidroute::check::check_routes_with(routes, &profile, demo, &limits);
    if a.drift {
        let settings = DriftSettings {
            samples: a.samples as usize,
            seed: a.seed,
            lost_from_leg: a.lost_from_leg as usize,
            odometry: super::drift::odometry(a.odometry, &profile),
            heading: super::drift::heading(a.heading, &profile),
            paths_kept: 0,
        };
        skidroute::check::add_drift(&mut run, &profile, &settings, &Bar::new(a.quiet || a.json))?;
    }
    report::write_check_outputs(&run, &outputs)?;
    super::batch::write_html(&run, a.html.as_deref())?;
    if a.format == super::batch::Format::Jsonl && !a.json {
        emit(&report::jsonl::check_jsonl(&run))?;
    } else if a.json || a.format == super::batch::Format::Json {
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

//! `skidroute check`: roll routes out and report every leg.

use std::path::PathBuf;
use std::process::ExitCode;

use anyhow::Result;
use clap::Args;
use skidroute::assess::Verdict;
use skidroute::report::table::TableOptions;
use skidroute::report::{self, CheckOutputs};

use skidroute::drift::DriftSettings;

use super::common::{check_outputs, table_width, CommonArgs};
use super::progress::Bar;
use super::{color_wanted, emit, load_profile};

#[derive(Args)]
#[command(
    mut_arg("json", |a| {
        a.help("Print the JSON report to stdout instead of the table (the same as --format json)").conflicts_with("format")
    }),
    mut_arg("odometry", |a| {
        a.requires("drift").help("Odometry model for --drift; default: the profile's follower `inverse_model`")
    }),
    mut_arg("heading", |a| {
        a.requires("drift").help("Heading source for --drift; default: the gyro when the profile has an [imu] section")
    }),
)]
pub struct CheckArgs {
    /// Route files (.geojson, .json or .csv) or folders of them (taken sorted by name); `-` reads
    /// one route file from standard input (GeoJSON when it starts with `{`, CSV otherwise).
    #[arg(required = true)]
    pub routes: Vec<PathBuf>,
    #[command(flatten)]
    pub common: CommonArgs,
    /// Write the simulated trace (CSV, local frame).
    #[arg(long, value_name = "FILE")]
    pub trace: Option<PathBuf>,
    /// Write every N-th control step to --trace (each leg's first and last step and every change
    /// of traction_limited are always written).
    #[arg(long, value_name = "N", default_value_t = 1, requires = "trace",
          value_parser = clap::value_parser!(u64).range(1..))]
    pub trace_every: u64,
    /// Write the predicted path as GeoJSON (GeoJSON routes only).
    #[arg(long, value_name = "FILE")]
    pub predicted: Option<PathBuf>,
    /// Treat cautions as failures for the exit code (the table says so).
    #[arg(long)]
    pub strict: bool,
    /// Show every column of the table even when the terminal is narrower (pipes always get all).
    #[arg(long)]
    pub wide: bool,
    /// Stdout format: the table, the JSON document, or JSON Lines (one route per line).
    #[arg(long, value_enum, default_value = "table")]
    pub format: super::batch::Format,
    /// Write a self-contained HTML report (plot inline, per-leg table, reasons, caution).
    #[arg(long, value_name = "FILE")]
    pub html: Option<PathBuf>,
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
    #[command(flatten)]
    pub drift_sources: super::drift::DriftSourceArgs,
    /// Go on past route files that cannot be read: report each (stderr, and a JSON line with
    /// --format jsonl), check the others, and exit 2 at the end.
    #[arg(long)]
    pub keep_going: bool,
    #[command(flatten)]
    pub site: super::site::SiteArgs,
    #[command(flatten)]
    pub limits: super::limits::LimitArgs,
}

pub fn run_check(a: CheckArgs) -> Result<ExitCode> {
    let CommonArgs { vehicle, json, report: report_json, plot, quiet } = a.common;
    let outputs = CheckOutputs {
        report_json,
        trace_csv: a.trace,
        trace_every: usize::try_from(a.trace_every).unwrap_or(usize::MAX),
        predicted_geojson: a.predicted,
        plot,
    };
    let files = skidroute::batch::expand_inputs(&a.routes)?;
    let inputs: Vec<PathBuf> = files.iter().chain(vehicle.iter()).chain(a.site.inputs()).cloned().collect();
    report::refuse_overwriting_inputs(&inputs, outputs.paths().chain(a.html.iter()))?;
    let stdout_taken = report::stdout_is_an_output(outputs.paths().chain(a.html.iter()));
    let files_out = [&outputs.report_json, &outputs.trace_csv, &outputs.predicted_geojson, &a.html];
    check_outputs(outputs.plot.as_ref(), files_out.into_iter().flatten())?;
    let limits = a.limits.resolve()?;
    let (profile, demo) = load_profile(&vehicle, &limits)?;
    let site = a.site.load(&limits)?;
    let (routes, bad_files) = if a.keep_going {
        skidroute::batch::load_routes_keep_going_on_site(&files, &profile, &limits, &site)
    } else {
        (skidroute::batch::load_routes_parallel_on_site(&files, &profile, &limits, &site)?, Vec::new())
    };
    let budget = limits.work_budget();
    skidroute::check::charge_check(&budget, &routes, &profile, &limits, "checking")?;
    if a.drift {
        skidroute::check::charge_work(&budget, &routes, &profile, a.samples, "the drift estimate of")?;
    }
    let mut run = skidroute::check::check_routes_with(routes, &profile, demo, &limits);
    run.terrain_map = site.terrain_map.clone();
    if a.drift {
        let settings = DriftSettings {
            samples: a.samples as usize,
            seed: a.seed,
            lost_from_leg: a.lost_from_leg as usize,
            odometry: a.drift_sources.odometry(&profile),
            heading: a.drift_sources.heading(&profile),
            paths_kept: 0,
        };
        skidroute::check::add_drift(&mut run, &profile, &settings, &Bar::new(quiet || json))?;
    }
    report::write_check_outputs(&run, &outputs)?;
    super::batch::write_html(&run, a.html.as_deref(), a.strict)?;
    for bad in &bad_files {
        super::print_error(&bad.error);
    }
    if stdout_taken {
        // An output named `-` has standard output to itself.
    } else if a.format == super::batch::Format::Jsonl {
        emit(&super::batch::jsonl_with_bad_files(&run, &files, &bad_files))?;
    } else if json || a.format == super::batch::Format::Json {
        emit(&report::json::check_json(&run))?;
    } else if !quiet {
        let opts = TableOptions { color: color_wanted(), strict: a.strict, max_width: table_width(a.wide) };
        emit(&report::table::check_table(&run, &opts))?;
    }
    if !bad_files.is_empty() {
        return Ok(ExitCode::from(2));
    }
    let failing = match run.verdict() {
        Verdict::Fail => true,
        Verdict::Caution => a.strict,
        Verdict::Pass => false,
    };
    Ok(if failing { ExitCode::from(1) } else { ExitCode::SUCCESS })
}

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
    // The drift estimate is asked for, the margin search is extra: charge the search last, so it
    // takes only what is left.
    if a.drift {
        skidroute::check::charge_work(&budget, &routes, &profile, a.samples, "the drift estimate of")?;
    }
    let search = skidroute::check::charge_check(&budget, &routes, &profile, &limits, "checking")?;
    // Only these outputs draw on the traces; without them each trace is dropped once assessed.
    let keep_traces = outputs.trace_csv.is_some()
        || outputs.predicted_geojson.is_some()
        || outputs.plot.is_some()
        || a.html.is_some();
    if a.format == super::batch::Format::Jsonl
        && !keep_traces
        && !a.drift
        && outputs.report_json.is_none()
        && !stdout_taken
    {
        let verdict = jsonl_streamed(routes, &search, &profile, demo, &limits, &files, &bad_files)?;
        return Ok(exit_code(verdict, &bad_files, a.strict));
    }
    let mut run = skidroute::check::check_routes_searching(routes, &profile, demo, &limits, keep_traces, &search);
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
    Ok(exit_code(run.verdict(), &bad_files, a.strict))
}

/// Routes the JSON Lines pipeline checks at once: enough to keep every core busy, few enough
/// that the memory of their simulations stays small whatever the number of routes.
const JSONL_ROUTES_IN_FLIGHT: usize = 64;

/// `check --format jsonl` with no other output: the routes are checked a bounded number at a
/// time and only their lines are kept, then printed in input order (bad files' lines in their
/// place). The same lines as checking them all at once; returns the worst verdict.
fn jsonl_streamed(
    routes: Vec<skidroute::route::Route>,
    search: &[bool],
    profile: &skidroute::vehicle::Profile,
    demo: bool,
    limits: &skidroute::limits::Limits,
    files: &[PathBuf],
    bad_files: &[skidroute::batch::BadFile],
) -> Result<Verdict> {
    let mut lines: Vec<(PathBuf, String)> = Vec::with_capacity(routes.len());
    let mut verdict = Verdict::Pass;
    let mut routes = routes.into_iter();
    let mut searches = search.chunks(JSONL_ROUTES_IN_FLIGHT);
    loop {
        let batch: Vec<_> = routes.by_ref().take(JSONL_ROUTES_IN_FLIGHT).collect();
        if batch.is_empty() {
            break;
        }
        let search = searches.next().unwrap_or(&[]);
        let run = skidroute::check::check_routes_searching(batch, profile, demo, limits, false, search);
        verdict = verdict.max(run.verdict());
        let text = report::jsonl::check_jsonl(&run);
        lines.extend(run.routes.iter().map(|r| r.route.source.clone()).zip(text.lines().map(str::to_string)));
    }
    for bad in bad_files {
        super::print_error(&bad.error);
    }
    let refs: Vec<(&std::path::Path, &str)> = lines.iter().map(|(p, l)| (p.as_path(), l.as_str())).collect();
    emit(&super::batch::jsonl_lines_with_bad_files(&refs, files, bad_files))?;
    Ok(verdict)
}

/// 2 when files were skipped; 1 when a route fails (or earns a caution under `--strict`); 0.
fn exit_code(verdict: Verdict, bad_files: &[skidroute::batch::BadFile], strict: bool) -> ExitCode {
    if !bad_files.is_empty() {
        return ExitCode::from(2);
    }
    let failing = match verdict {
        Verdict::Fail => true,
        Verdict::Caution => strict,
        Verdict::Pass => false,
    };
    if failing {
        ExitCode::from(1)
    } else {
        ExitCode::SUCCESS
    }
}

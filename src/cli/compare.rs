//! `skidroute compare`: check alternative routes and rank them.

use std::path::PathBuf;
use std::process::ExitCode;

use anyhow::Result;
use clap::{Args, ValueEnum};
use skidroute::compare::RankBy;
use skidroute::report::table::TableOptions;
use skidroute::report::{self, compare_report};

use super::common::{check_outputs, table_width, CommonArgs};
use super::{emit, load_profile};

/// Ranking criterion on the command line.
#[derive(Clone, Copy, ValueEnum)]
pub enum By {
    Time,
    Energy,
    Deviation,
    Drift,
}

#[derive(Args)]
#[command(
    mut_arg("json", |a| a.help("Print the JSON document to stdout instead of the table")),
    mut_arg("report", |a| a.help("Write the JSON document to this file")),
    mut_arg("plot", |a| a.help("Write an overlay plot of all alternatives (.svg or .png)")),
    mut_arg("odometry", |a| a.help("Odometry model of the drift (with --by drift); default: the profile's follower `inverse_model`")),
    mut_arg("heading", |a| a.help("Heading source of the drift (with --by drift); default: the gyro when the profile has an [imu] section")),
)]
pub struct CompareArgs {
    /// Route files (or folders of them); every `route` group is one alternative.
    #[arg(required = true)]
    pub routes: Vec<PathBuf>,
    #[command(flatten)]
    pub common: CommonArgs,
    /// Rank alternatives with the same verdict by this (lower is better).
    #[arg(long, value_enum, default_value = "energy")]
    pub by: By,
    /// Seed of the drift Monte Carlo (with --by drift).
    #[arg(long, default_value_t = 7)]
    pub seed: u64,
    #[command(flatten)]
    pub drift_sources: super::drift::DriftSourceArgs,
    /// Write a self-contained HTML report.
    #[arg(long, value_name = "FILE")]
    pub html: Option<PathBuf>,
    /// A caution does not count as acceptable for the exit code (the table says so).
    #[arg(long)]
    pub strict: bool,
    /// Show every column of the table even when the terminal is narrower (pipes always get all).
    #[arg(long)]
    pub wide: bool,
    #[command(flatten)]
    pub site: super::site::SiteArgs,
    #[command(flatten)]
    pub limits: super::limits::LimitArgs,
}

pub fn run_compare(a: CompareArgs) -> Result<ExitCode> {
    let CommonArgs { vehicle, json, report: report_json, plot, quiet } = a.common;
    let outputs: Vec<PathBuf> = [&report_json, &plot, &a.html].into_iter().flatten().cloned().collect();
    let files = skidroute::batch::expand_inputs(&a.routes)?;
    let inputs: Vec<PathBuf> = files.iter().chain(vehicle.iter()).chain(a.site.inputs()).cloned().collect();
    report::refuse_overwriting_inputs(&inputs, &outputs)?;
    check_outputs(plot.as_ref(), [&report_json, &a.html].into_iter().flatten())?;
    let by = match a.by {
        By::Time => RankBy::Time,
        By::Energy => RankBy::Energy,
        By::Deviation => RankBy::Deviation,
        By::Drift => RankBy::Drift,
    };
    let limits = a.limits.resolve()?;
    let (profile, demo) = load_profile(&vehicle, &limits)?;
    let site = a.site.load(&limits)?;
    let routes = skidroute::batch::load_routes_parallel_on_site(&files, &profile, &limits, &site)?;
    super::site::print_warnings(&routes, quiet);
    let budget = limits.work_budget();
    // Ranking by drift is asked for, the margin search is extra: charge the search last.
    if let RankBy::Drift = by {
        let samples = skidroute::compare::DRIFT_RANKING_SAMPLES as u64;
        skidroute::check::charge_work(&budget, &routes, &profile, samples, "ranking by drift")?;
    }
    let search = skidroute::check::charge_check(&budget, &routes, &profile, &limits, "checking")?;
    let mut run = skidroute::check::check_routes_searching(routes, &profile, demo, &limits, true, &search);
    run.terrain_map = site.terrain_map.clone();
    let cmp = match by {
        RankBy::Drift => skidroute::compare::rank_by_drift_with(
            run,
            &profile,
            a.seed,
            a.drift_sources.odometry(&profile),
            a.drift_sources.heading(&profile),
        )?,
        _ => skidroute::compare::rank(run, by)?,
    };
    if let Some(p) = &report_json {
        report::write_atomic(p, compare_report::compare_json(&cmp).as_bytes())?;
    }
    if let Some(p) = &plot {
        compare_report::write_compare_plot(&cmp, p)?;
    }
    if let Some(p) = &a.html {
        let fail = |what: String| report::ReportError::Output { file: p.clone(), what };
        let svg = compare_report::compare_plot_svg(&cmp).map_err(fail)?;
        report::write_atomic(p, report::html::report_html(&cmp.run, &svg, Some(&cmp), a.strict).as_bytes())?;
    }
    if report::stdout_is_an_output(&outputs) {
        // An output named `-` has standard output to itself.
    } else if json {
        emit(&compare_report::compare_json(&cmp))?;
    } else if !quiet {
        let opts = TableOptions { color: false, strict: a.strict, max_width: table_width(a.wide) };
        emit(&compare_report::compare_table(&cmp, &opts))?;
    }
    Ok(if cmp.any_acceptable(a.strict) { ExitCode::SUCCESS } else { ExitCode::from(1) })
}

//! `skidroute compare`: check alternative routes and rank them.

use std::path::PathBuf;
use std::process::ExitCode;

use anyhow::Result;
use clap::{Args, ValueEnum};
use skidroute::compare::RankBy;
use skidroute::report::{self, compare_report};

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
pub struct CompareArgs {
    /// Route files (or folders of them); every `route` group is one alternative.
    #[arg(required = true)]
    pub routes: Vec<PathBuf>,
    /// Vehicle profile (TOML); the built-in demo profile when omitted.
    #[arg(long)]
    pub vehicle: Option<PathBuf>,
    /// Rank alternatives with the same verdict by this (lower is better).
    #[arg(long, value_enum, default_value = "energy")]
    pub by: By,
    /// Print the JSON document to stdout instead of the table.
    #[arg(long)]
    pub json: bool,
    /// Seed of the drift Monte Carlo (with --by drift).
    #[arg(long, default_value_t = 7)]
    pub seed: u64,
    /// Odometry model of the drift (with --by drift); default: the profile's follower `inverse_model`.
    #[arg(long, value_enum)]
    pub odometry: Option<super::drift::OdometryArg>,
    /// Heading source of the drift (with --by drift); default: the gyro when the profile has an [imu] section.
    #[arg(long, value_enum)]
    pub heading: Option<super::drift::HeadingArg>,
    /// Write the JSON document to this file.
    #[arg(long, value_name = "FILE")]
    pub report: Option<PathBuf>,
    /// Write an overlay plot of all alternatives (.svg or .png).
    #[arg(long, value_name = "FILE")]
    pub plot: Option<PathBuf>,
    /// Write a self-contained HTML report.
    #[arg(long, value_name = "FILE")]
    pub html: Option<PathBuf>,
    /// A caution does not count as acceptable for the exit code.
    #[arg(long)]
    pub strict: bool,
    /// Print nothing but errors.
    #[arg(long)]
    pub quiet: bool,
}

pub fn run_compare(a: CompareArgs) -> Result<ExitCode> {
    let outputs: Vec<PathBuf> = [&a.report, &a.plot, &a.html].into_iter().flatten().cloned().collect();
    let files = skidroute::batch::expand_inputs(&a.routes)?;
    let inputs: Vec<PathBuf> = files.iter().chain(a.vehicle.iter()).cloned().collect();
    report::refuse_overwriting_inputs(&inputs, &outputs)?;
    let by = match a.by {
        By::Time => RankBy::Time,
        By::Energy => RankBy::Energy,
        By::Deviation => RankBy::Deviation,
        By::Drift => RankBy::Drift,
    };
    let (profile, demo) = load_profile(&a.vehicle)?;
    let limits = super::limits::LimitArgs::default().resolve()?; // SKIDROUTE_MAX_* from the environment
    let routes = skidroute::batch::load_routes_parallel_with(&files, &profile, &limits)?;
    let run = skidroute::check::check_routes(routes, &profile, demo);
    let cmp = match by {
        RankBy::Drift => skidroute::compare::rank_by_drift_with(
            run,
            &profile,
            a.seed,
            super::drift::odometry(a.odometry, &profile),
            super::drift::heading(a.heading, &profile),
        )?,
        _ => skidroute::compare::rank(run, by)?,
    };
    if let Some(p) = &a.report {
        report::write_atomic(p, compare_report::compare_json(&cmp).as_bytes())?;
    }
    if let Some(p) = &a.plot {
        compare_report::write_compare_plot(&cmp, p)?;
    }
    if let Some(p) = &a.html {
        let fail = |what: String| report::ReportError::Output { file: p.clone(), what };
        let svg = compare_report::compare_plot_svg(&cmp).map_err(fail)?;
        report::write_atomic(p, report::html::report_html(&cmp.run, &svg, Some(&cmp)).as_bytes())?;
    }
    if a.json {
        emit(&compare_report::compare_json(&cmp))?;
    } else if !a.quiet {
        emit(&compare_report::compare_table(&cmp))?;
    }
    Ok(if cmp.any_acceptable(a.strict) { ExitCode::SUCCESS } else { ExitCode::from(1) })
}

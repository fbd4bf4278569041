//! `skidroute replay`: replay new drive logs through an existing profile's terrain models and
//! say, per terrain, whether the calibration still holds. Exit 0 when no terrain changed, 1 when
//! one did, 2 on bad input.

use std::path::PathBuf;
use std::process::ExitCode;

use anyhow::Result;
use clap::Args;
use skidroute::fit::replay::replay_logs;
use skidroute::report::{self, replay_report};
use skidroute::vehicle::Profile;

use super::emit;

#[derive(Args)]
pub struct ReplayArgs {
    /// Drive logs (CSV: t_s,left_mps,right_mps,x_m,y_m,yaw_rad,terrain; lat_deg,lon_deg may replace x_m,y_m).
    #[arg(required = true)]
    pub logs: Vec<PathBuf>,
    /// The profile to score (TOML), normally one written by `skidroute fit`.
    #[arg(long, required = true)]
    pub vehicle: PathBuf,
    /// Window horizon, seconds; default: each terrain's calibration_horizon_s, else 2.
    #[arg(long, value_name = "SECONDS")]
    pub horizon_s: Option<f64>,
    /// Print the JSON report to stdout instead of the table.
    #[arg(long)]
    pub json: bool,
    /// Write the JSON report to this file.
    #[arg(long, value_name = "FILE")]
    pub report: Option<PathBuf>,
    /// Write a plot of replayed against logged paths (.svg or .png).
    #[arg(long, value_name = "FILE")]
    pub plot: Option<PathBuf>,
    /// Print nothing but errors.
    #[arg(long)]
    pub quiet: bool,
}

pub fn run_replay(a: ReplayArgs) -> Result<ExitCode> {
    let outputs: Vec<PathBuf> = [&a.report, &a.plot].into_iter().flatten().cloned().collect();
    let inputs: Vec<PathBuf> = a.logs.iter().chain(std::iter::once(&a.vehicle)).cloned().collect();
    report::refuse_overwriting_inputs(&inputs, &outputs)?;
    if let Some(p) = &a.plot {
        report::drift_report::check_plot_extension(p)?;
    }
    let profile = Profile::read(&a.vehicle)?;
    let limits = super::limits::LimitArgs::default().resolve()?; // SKIDROUTE_MAX_* from the environment
    let logs = super::logs::load_drive_logs(&a.logs, &limits)?;
    let run = replay_logs(&logs, &profile, &a.vehicle.display().to_string(), a.horizon_s)?;
    if let Some(p) = &a.report {
        report::write_atomic(p, replay_report::replay_json(&run).as_bytes())?;
    }
    if let Some(p) = &a.plot {
        report::replay_plot::write_replay_plot(&run, p)?;
    }
    if a.json {
        emit(&replay_report::replay_json(&run))?;
    } else if !a.quiet {
        emit(&replay_report::replay_table(&run))?;
    }
    Ok(if run.any_changed() { ExitCode::from(1) } else { ExitCode::SUCCESS })
}

//! `skidroute replay`: replay new drive logs through an existing profile's terrain models and
//! say, per terrain, whether the calibration still holds. Exit 0 when no terrain changed, 1 when
//! one did, 2 on bad input.

use std::path::PathBuf;
use std::process::ExitCode;

use anyhow::Result;
use clap::Args;
use skidroute::fit::replay::replay_logs;
use skidroute::report::{self, replay_report};

use super::common::{check_outputs, CommonArgs};
use super::{emit, load_profile};

#[derive(Args)]
#[command(
    mut_arg("vehicle", |a| a.required(true).help("The profile to score (TOML), normally one written by `skidroute fit`")),
    mut_arg("plot", |a| a.help("Write a plot of replayed against logged paths (.svg or .png)")),
)]
pub struct ReplayArgs {
    #[command(flatten)]
    pub inputs: super::logs::LogInputArgs,
    #[command(flatten)]
    pub common: CommonArgs,
    /// Window horizon, seconds; default: each terrain's calibration_horizon_s, else 2.
    #[arg(long, value_name = "SECONDS")]
    pub horizon_s: Option<f64>,
    #[command(flatten)]
    pub limits: super::limits::LimitArgs,
}

pub fn run_replay(a: ReplayArgs) -> Result<ExitCode> {
    let CommonArgs { vehicle, json, report: report_json, plot, quiet } = a.common;
    let limits = a.limits.resolve()?;
    let map = super::logs::recording_map(a.inputs.recording_map.as_ref(), a.inputs.logs.iter(), &limits)?;
    let map_files = super::logs::map_files(map.as_ref());
    let outputs: Vec<&PathBuf> = report_json.iter().chain(plot.iter()).collect();
    let inputs: Vec<PathBuf> = a.inputs.logs.iter().chain(vehicle.iter()).chain(&map_files).cloned().collect();
    report::refuse_overwriting_inputs(&inputs, outputs.iter().copied())?;
    check_outputs(plot.as_ref(), report_json.iter())?;
    let (profile, _) = load_profile(&vehicle, &limits)?;
    let profile_name =
        vehicle.as_ref().map_or_else(|| "built-in demo profile".to_string(), |p| p.display().to_string());
    let logs = super::logs::load_drive_logs(
        &a.inputs.logs,
        map.as_ref(),
        profile.vehicle.track_width_m,
        &limits,
        quiet || json,
    )?;
    let run = replay_logs(&logs, &profile, &profile_name, a.horizon_s)?;
    if let Some(p) = &report_json {
        report::write_atomic(p, replay_report::replay_json(&run).as_bytes())?;
    }
    if let Some(p) = &plot {
        report::replay_plot::write_replay_plot(&run, p)?;
    }
    if report::stdout_is_an_output(outputs.iter().copied()) {
        // An output named `-` has standard output to itself.
    } else if json {
        emit(&replay_report::replay_json(&run))?;
    } else if !quiet {
        emit(&replay_report::replay_table(&run))?;
    }
    Ok(if run.any_changed() { ExitCode::from(1) } else { ExitCode::SUCCESS })
}

//! `skidroute fit`: calibrate per-terrain models from drive logs and write a profile.

use std::path::PathBuf;
use std::process::ExitCode;

use anyhow::Result;
use clap::Args;
use skidroute::fit::{fit_logs, FitSettings};
use skidroute::report::{self, FitOutputs};

use super::common::{check_outputs, CommonArgs};
use super::progress::Bar;
use super::{emit, load_profile};

#[derive(Args)]
#[command(
    mut_arg("vehicle", |a| a.help("Base profile for geometry, limits and traction coefficients; the built-in demo when omitted")),
    mut_arg("json", |a| a.help("Print the JSON fit report to stdout instead of the table")),
    mut_arg("report", |a| a.help("Write the JSON fit report to this file")),
    mut_arg("plot", |a| a.help("Write a plot of the fit (.svg or .png)")),
)]
pub struct FitArgs {
    #[command(flatten)]
    pub inputs: super::logs::LogInputArgs,
    #[command(flatten)]
    pub common: CommonArgs,
    /// Where to write the calibrated profile (TOML).
    #[arg(short, long, value_name = "FILE")]
    pub out: PathBuf,
    /// Prediction horizon of the identification windows, seconds.
    #[arg(long, default_value_t = 2.0, value_name = "SECONDS")]
    pub horizon_s: f64,
    /// Validate on these logs instead of held-out time blocks of the training logs.
    #[arg(long, value_name = "LOG")]
    pub validate: Vec<PathBuf>,
    /// Name of the calibrated profile (default: the base profile's name with " (calibrated)").
    #[arg(long, value_name = "NAME")]
    pub name: Option<String>,
    /// Horizon sweep: train and evaluate at each of these horizons (seconds, comma-separated).
    #[arg(long, value_delimiter = ',', value_name = "SECONDS")]
    pub sweep: Vec<f64>,
    #[command(flatten)]
    pub limits: super::limits::LimitArgs,
}

pub fn run_fit(a: FitArgs) -> Result<ExitCode> {
    let CommonArgs { vehicle, json, report: report_json, plot, quiet } = a.common;
    let mut settings = FitSettings::new(a.horizon_s, &a.sweep)?;
    if let Some(name) = &a.name {
        settings = settings.with_profile_name(name)?;
    }
    let outputs = FitOutputs { profile: a.out.clone(), plot };
    let limits = a.limits.resolve()?;
    let map =
        super::logs::recording_map(a.inputs.recording_map.as_ref(), a.inputs.logs.iter().chain(&a.validate), &limits)?;
    let map_files = super::logs::map_files(map.as_ref());
    let inputs: Vec<PathBuf> =
        a.inputs.logs.iter().chain(&a.validate).chain(vehicle.iter()).chain(&map_files).cloned().collect();
    let output_paths: Vec<&PathBuf> =
        [&outputs.profile].into_iter().chain(outputs.plot.iter()).chain(report_json.iter()).collect();
    report::refuse_overwriting_inputs(&inputs, output_paths.iter().copied())?;
    check_outputs(outputs.plot.as_ref(), std::iter::once(&outputs.profile).chain(report_json.iter()))?;
    let (base, demo) = load_profile(&vehicle, &limits)?;
    let base_name = match &vehicle {
        Some(p) => p.display().to_string(),
        None => "built-in demo profile".to_string(),
    };
    let width_m = base.vehicle.track_width_m;
    let logs = super::logs::load_drive_logs(&a.inputs.logs, map.as_ref(), width_m, &limits, quiet || json)?;
    let validation = super::logs::load_drive_logs(&a.validate, map.as_ref(), width_m, &limits, quiet || json)?;
    let bar = Bar::new(quiet || json);
    let run = fit_logs(&logs, &validation, &base, &base_name, demo, &settings, &bar)?;
    report::write_fit_outputs(&run, &outputs)?;
    if let Some(p) = &report_json {
        report::write_atomic(p, report::fit_json::fit_json(&run).as_bytes())?;
    }
    if report::stdout_is_an_output(output_paths.iter().copied()) {
        // An output named `-` has standard output to itself.
    } else if json {
        emit(&report::fit_json::fit_json(&run))?;
    } else if !quiet {
        let table = report::fit_table::fit_table(&run);
        emit(&format!("{table}profile '{}' written to {}\n", run.profile.vehicle.name, a.out.display()))?;
    }
    Ok(if run.failed() { ExitCode::from(1) } else { ExitCode::SUCCESS })
}

//! `skidroute fit`: calibrate per-terrain models from drive logs and write a profile.

use std::path::PathBuf;
use std::process::ExitCode;

use anyhow::Result;
use clap::Args;
use skidroute::fit::{fit_logs, log::read_log_with, FitSettings};
use skidroute::report::{self, FitOutputs};

use super::common::{check_outputs, CommonArgs};
use super::load_profile;
use super::progress::Bar;

#[derive(Args)]
#[command(
    mut_arg("vehicle", |a| a.help("Base profile for geometry, limits and traction coefficients; the built-in demo when omitted")),
    mut_arg("json", |a| a.help("Print the JSON fit report to stdout instead of the table")),
    mut_arg("report", |a| a.help("Write the JSON fit report to this file")),
    mut_arg("plot", |a| a.help("Write a plot of the fit (.svg or .png)")),
)]
pub struct FitArgs {
    /// Drive logs (CSV: t_s,left_mps,right_mps,x_m,y_m,yaw_rad,terrain; lat_deg,lon_deg may replace x_m,y_m).
    #[arg(required = true)]
    pub logs: Vec<PathBuf>,
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
    /// Horizon sweep: train and evaluate at each of these horizons (seconds, comma-separated).
    #[arg(long, value_delimiter = ',', value_name = "SECONDS")]
    pub sweep: Vec<f64>,
}

pub fn run_fit(a: FitArgs) -> Result<ExitCode> {
    let CommonArgs { vehicle, json, report: report_json, plot, quiet } = a.common;
    let settings = FitSettings::new(a.horizon_s, &a.sweep)?;
    let outputs = FitOutputs { profile: a.out.clone(), plot };
    let inputs: Vec<PathBuf> = a.logs.iter().chain(&a.validate).chain(vehicle.iter()).cloned().collect();
    report::refuse_overwriting_inputs(
        &inputs,
        [&outputs.profile].into_iter().chain(outputs.plot.iter()).chain(report_json.iter()),
    )?;
    check_outputs(outputs.plot.as_ref(), std::iter::once(&outputs.profile).chain(report_json.iter()))?;
    let (base, demo) = load_profile(&vehicle)?;
    let base_name = match &vehicle {
        Some(p) => p.display().to_string(),
        None => "built-in demo profile".to_string(),
    };
    // Limits from the environment (SKIDROUTE_MAX_FILE_MIB, SKIDROUTE_MAX_TOTAL_POINTS).
    let limits = super::limits::LimitArgs::default().resolve()?;
    let logs = a.logs.iter().map(|p| read_log_with(p, &limits)).collect::<Result<Vec<_>, _>>()?;
    let validation = a.validate.iter().map(|p| read_log_with(p, &limits)).collect::<Result<Vec<_>, _>>()?;
    let bar = Bar::new(quiet || json);
    let run = fit_logs(&logs, &validation, &base, &base_name, demo, &settings, &bar)?;
    report::write_fit_outputs(&run, &outputs)?;
    if let Some(p) = &report_json {
        report::write_atomic(p, report::fit_json::fit_json(&run).as_bytes())?;
    }
    if json {
        print!("{}", report::fit_json::fit_json(&run));
    } else if !quiet {
        print!("{}", report::fit_table::fit_table(&run));
        println!("profile written to {}", a.out.display());
    }
    Ok(if run.failed() { ExitCode::from(1) } else { ExitCode::SUCCESS })
}

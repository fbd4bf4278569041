//! `skidroute fit`: calibrate per-terrain models from drive logs and write a profile.

use std::path::PathBuf;
use std::process::ExitCode;

use anyhow::Result;
use clap::Args;
use skidroute::fit::{fit_logs, FitSettings};
use skidroute::report::{self, FitOutputs};

use super::load_profile;
use super::progress::Bar;

#[derive(Args)]
pub struct FitArgs {
    /// Drive logs (CSV: t_s,left_mps,right_mps,x_m,y_m,yaw_rad,terrain; lat_deg,lon_deg may replace x_m,y_m).
    #[arg(required = true)]
    pub logs: Vec<PathBuf>,
    /// Base profile for geometry, limits and traction coefficients; the built-in demo when omitted.
    #[arg(long)]
    pub vehicle: Option<PathBuf>,
    /// Where to write the calibrated profile (TOML).
    #[arg(long, value_name = "FILE")]
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
    /// Write a plot of the fit (.svg or .png).
    #[arg(long, value_name = "FILE")]
    pub plot: Option<PathBuf>,
    /// Print the JSON report to stdout instead of the table.
    #[arg(long)]
    pub json: bool,
    /// Print nothing but errors, and no progress bar.
    #[arg(long)]
    pub quiet: bool,
}

pub fn run_fit(a: FitArgs) -> Result<ExitCode> {
    let mut settings = FitSettings::new(a.horizon_s, &a.sweep)?;
    if let Some(name) = &a.name {
        settings = settings.with_profile_name(name)?;
    }
    let outputs = FitOutputs { profile: a.out.clone(), plot: a.plot.clone() };
    let inputs: Vec<PathBuf> = a.logs.iter().chain(&a.validate).chain(a.vehicle.iter()).cloned().collect();
    report::refuse_overwriting_inputs(&inputs, [&outputs.profile].into_iter().chain(outputs.plot.iter()))?;
    let (base, demo) = load_profile(&a.vehicle)?;
    let base_name = match &a.vehicle {
        Some(p) => p.display().to_string(),
        None => "built-in demo profile".to_string(),
    };
    // Limits from the environment (SKIDROUTE_MAX_FILE_MIB, SKIDROUTE_MAX_TOTAL_POINTS).
    let limits = super::limits::LimitArgs::default().resolve()?;
    let logs = super::logs::load_drive_logs(&a.logs, &limits)?;
    let validation = super::logs::load_drive_logs(&a.validate, &limits)?;
    let bar = Bar::new(a.quiet || a.json);
    let run = fit_logs(&logs, &validation, &base, &base_name, demo, &settings, &bar)?;
    report::write_fit_outputs(&run, &outputs)?;
    if a.json {
        print!("{}", report::fit_json::fit_json(&run));
    } else if !a.quiet {
        print!("{}", report::fit_table::fit_table(&run));
        println!("profile '{}' written to {}", run.profile.vehicle.name, a.out.display());
    }
    Ok(if run.failed() { ExitCode::from(1) } else { ExitCode::SUCCESS })
}

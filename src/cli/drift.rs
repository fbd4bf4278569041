//! `skidroute drift`: Monte Carlo of the position error at each leg end when localization is
//! lost, with the table, JSON, plot and ellipse outputs.

use std::path::PathBuf;
use std::process::ExitCode;

use anyhow::{bail, Result};
use clap::{Args, ValueEnum};
use skidroute::drift::{run_drift, DriftSettings, HeadingSource, Odometry, DEFAULT_PATHS_KEPT, MAX_SAMPLES};
use skidroute::report::drift_report::{self, DriftOutputs};
use skidroute::report::{self};
use skidroute::route::Route;
use skidroute::vehicle::Profile;

use super::load_profile;
use super::progress::Bar;

/// The odometry model the vehicle dead-reckons with.
#[derive(Clone, Copy, Debug, ValueEnum)]
pub enum OdometryArg {
    /// Ideal differential drive with the nominal track width.
    Ideal,
    /// The profile's calibrated model of each terrain.
    Calibrated,
}

/// Where the believed heading comes from while localization is lost.
#[derive(Clone, Copy, Debug, ValueEnum)]
pub enum HeadingArg {
    /// The odometry model's yaw rate.
    Odometry,
    /// The gyro of the profile's [imu] section.
    Gyro,
}

#[derive(Args)]
pub struct DriftArgs {
    /// Route file (.geojson, .json or .csv).
    pub route: PathBuf,
    /// Vehicle profile (TOML); the built-in demo profile when omitted.
    #[arg(long)]
    pub vehicle: Option<PathBuf>,
    /// Which route of the file, by its `route` name, when the file holds several.
    #[arg(long = "route", value_name = "NAME")]
    pub route_name: Option<String>,
    /// Monte Carlo samples (1 to 1000000).
    #[arg(long, default_value_t = 2000, value_parser = clap::value_parser!(u64).range(1..=MAX_SAMPLES as u64))]
    pub samples: u64,
    /// Seed of the random draws; the same seed gives the same output on any number of threads.
    #[arg(long, default_value_t = 7)]
    pub seed: u64,
    /// Leg (1-based) at whose start localization is lost.
    #[arg(long, default_value_t = 1, value_parser = clap::value_parser!(u64).range(1..))]
    pub lost_from_leg: u64,
    /// Odometry model; default: the profile's follower `inverse_model`.
    #[arg(long, value_enum)]
    pub odometry: Option<OdometryArg>,
    /// Heading source; default: the gyro when the profile has an [imu] section, else odometry.
    #[arg(long, value_enum)]
    pub heading: Option<HeadingArg>,
    /// Print the JSON report to stdout instead of the table.
    #[arg(long)]
    pub json: bool,
    /// Write the JSON report to this file.
    #[arg(long, value_name = "FILE")]
    pub report: Option<PathBuf>,
    /// Write a plot (.svg or .png).
    #[arg(long, value_name = "FILE")]
    pub plot: Option<PathBuf>,
    /// Write the 95 % ellipses and CEP95 circles as GeoJSON polygons (GeoJSON routes only).
    #[arg(long, value_name = "FILE")]
    pub ellipses: Option<PathBuf>,
    /// Print nothing but errors, and draw no progress bar.
    #[arg(long)]
    pub quiet: bool,
}

/// The one route of the file, or the one named by `--route`.
fn pick_route(mut routes: Vec<Route>, name: Option<&str>, file: &std::path::Path) -> Result<Route> {
    let names = || routes.iter().map(|r| format!("'{}'", r.name)).collect::<Vec<_>>().join(", ");
    match name {
        Some(n) => match routes.iter().position(|r| r.name == n) {
            Some(i) => Ok(routes.swap_remove(i)),
            None => bail!("{}: no route named '{n}'; the file has {}", file.display(), names()),
        },
        None if routes.len() == 1 => Ok(routes.remove(0)),
        None => bail!(
            "{}: the file has {} routes ({}); choose one with --route NAME",
            file.display(),
            routes.len(),
            names()
        ),
    }
}

/// The odometry from the flag, or the profile's default (the same for every command).
pub fn odometry(arg: Option<OdometryArg>, profile: &Profile) -> Odometry {
    match arg {
        Some(OdometryArg::Ideal) => Odometry::Ideal,
        Some(OdometryArg::Calibrated) => Odometry::Calibrated,
        None => skidroute::drift::default_odometry(profile),
    }
}

/// The heading source from the flag, or the profile's default (the same for every command).
pub fn heading(arg: Option<HeadingArg>, profile: &Profile) -> HeadingSource {
    match arg {
        Some(HeadingArg::Odometry) => HeadingSource::Odometry,
        Some(HeadingArg::Gyro) => HeadingSource::Gyro,
        None => skidroute::drift::default_heading(profile),
    }
}

pub fn run_drift_command(a: DriftArgs) -> Result<ExitCode> {
    let outputs = DriftOutputs { report_json: a.report, plot: a.plot, ellipses_geojson: a.ellipses };
    let inputs: Vec<PathBuf> = std::iter::once(&a.route).chain(a.vehicle.iter()).cloned().collect();
    report::refuse_overwriting_inputs(&inputs, outputs.paths())?;
    if let Some(p) = &outputs.plot {
        drift_report::check_plot_extension(p)?;
    }
    let (profile, demo) = load_profile(&a.vehicle)?;
    let limits = super::limits::LimitArgs::default().resolve()?; // SKIDROUTE_MAX_* from the environment
    let routes = skidroute::check::load_routes_with(std::slice::from_ref(&a.route), &profile, &limits)?;
    let route = pick_route(routes, a.route_name.as_deref(), &a.route)?;
    if outputs.ellipses_geojson.is_some() && route.origin.is_none() {
        bail!(
            "{}: --ellipses needs a GeoJSON route (a CSV route is in a local map frame without a geographic \
             origin); use --json or --report for the ellipses in local metres",
            a.route.display()
        );
    }
    let settings = DriftSettings {
        samples: usize::try_from(a.samples)?,
        seed: a.seed,
        lost_from_leg: usize::try_from(a.lost_from_leg)?,
        odometry: odometry(a.odometry, &profile),
        heading: heading(a.heading, &profile),
        paths_kept: if outputs.plot.is_some() { DEFAULT_PATHS_KEPT } else { 0 },
    };
    let bar = Bar::new(a.quiet);
    let result = run_drift(&route, &profile, &settings, &bar)?;
    drift_report::write_drift_outputs(&route, &result, demo, &outputs)?;
    if a.json {
        print!("{}", drift_report::drift_json(&result, demo));
    } else if !a.quiet {
        print!("{}", drift_report::drift_table(&result, demo));
    }
    Ok(ExitCode::SUCCESS)
}

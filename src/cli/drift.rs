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

use super::common::{check_outputs, CommonArgs};
use super::progress::Bar;
use super::{emit, load_profile};

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

/// The odometry model and heading source of a drift estimate, flattened into `drift`,
/// `check` (with `--drift`) and `compare` (with `--by drift`). Each defaults to the profile's
/// choice, the same in all three.
#[derive(Args, Debug, Clone, Default)]
pub struct DriftSourceArgs {
    /// Odometry model; default: the profile's follower `inverse_model`.
    #[arg(long, value_enum)]
    pub odometry: Option<OdometryArg>,
    /// Heading source; default: the gyro when the profile has an [imu] section, else odometry.
    #[arg(long, value_enum)]
    pub heading: Option<HeadingArg>,
}

impl DriftSourceArgs {
    /// The odometry from the flag, or the profile's default.
    pub fn odometry(&self, profile: &Profile) -> Odometry {
        match self.odometry {
            Some(OdometryArg::Ideal) => Odometry::Ideal,
            Some(OdometryArg::Calibrated) => Odometry::Calibrated,
            None => skidroute::drift::default_odometry(profile),
        }
    }

    /// The heading source from the flag, or the profile's default.
    pub fn heading(&self, profile: &Profile) -> HeadingSource {
        match self.heading {
            Some(HeadingArg::Odometry) => HeadingSource::Odometry,
            Some(HeadingArg::Gyro) => HeadingSource::Gyro,
            None => skidroute::drift::default_heading(profile),
        }
    }
}

#[derive(Args)]
pub struct DriftArgs {
    /// Route file (.geojson, .json or .csv).
    pub route: PathBuf,
    #[command(flatten)]
    pub common: CommonArgs,
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
    #[command(flatten)]
    pub sources: DriftSourceArgs,
    /// Write the 95 % ellipses and CEP95 circles as GeoJSON polygons (GeoJSON routes only).
    #[arg(long, value_name = "FILE")]
    pub ellipses: Option<PathBuf>,
    #[command(flatten)]
    pub site: super::site::SiteArgs,
    #[command(flatten)]
    pub limits: super::limits::LimitArgs,
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

pub fn run_drift_command(a: DriftArgs) -> Result<ExitCode> {
    let CommonArgs { vehicle, json, report: report_json, plot, quiet } = a.common;
    let mut outputs = DriftOutputs { report_json, plot, ellipses_geojson: a.ellipses, terrain_map: None };
    let inputs: Vec<PathBuf> =
        std::iter::once(&a.route).chain(vehicle.iter()).chain(a.site.inputs()).cloned().collect();
    report::refuse_overwriting_inputs(&inputs, outputs.paths())?;
    check_outputs(outputs.plot.as_ref(), [&outputs.report_json, &outputs.ellipses_geojson].into_iter().flatten())?;
    if let Some(p) = &outputs.plot {
        drift_report::check_plot_extension(p)?;
    }
    let limits = a.limits.resolve()?;
    let (profile, demo) = load_profile(&vehicle, &limits)?;
    let site = a.site.load(&limits)?;
    let routes = skidroute::check::load_routes_on_site(std::slice::from_ref(&a.route), &profile, &limits, &site)?;
    let route = pick_route(routes, a.route_name.as_deref(), &a.route)?;
    outputs.terrain_map = site.terrain_map.clone();
    super::site::print_warnings(std::iter::once(&route), quiet);
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
        odometry: a.sources.odometry(&profile),
        heading: a.sources.heading(&profile),
        paths_kept: if outputs.plot.is_some() { DEFAULT_PATHS_KEPT } else { 0 },
    };
    let route_name = skidroute::limits::clip(&route.name).into_owned();
    limits.work_budget().charge_rollouts(skidroute::rollout::step_bound(&route, &profile), a.samples, || {
        format!("{}: {} drift samples of route '{route_name}'", a.route.display(), a.samples)
    })?;
    let bar = Bar::new(quiet);
    let result = run_drift(&route, &profile, &settings, &bar)?;
    drift_report::write_drift_outputs(&route, &result, demo, &outputs)?;
    if report::stdout_is_an_output(outputs.paths()) {
        // An output named `-` has standard output to itself.
    } else if json {
        emit(&drift_report::drift_json(&result, demo))?;
    } else if !quiet {
        emit(&drift_report::drift_table(&result, demo))?;
    }
    Ok(ExitCode::SUCCESS)
}

//! The route check: read routes, resolve them against the profile, roll each out and assess
//! it. Routes are simulated in parallel (rayon); results keep the input order.

use std::path::PathBuf;

use rayon::prelude::*;

use crate::assess::{assess_route, DriftNote, RouteReport, Verdict};
use crate::drift::{run_drift, DriftSettings};
use crate::progress::Progress;
use crate::rollout::{roll_out, RouteDrive, Trace};
use crate::route::{check_terrains, read_routes, Route};
use crate::vehicle::Profile;
use crate::Error;

/// One checked route with everything the reports draw on.
#[derive(Debug, Clone)]
pub struct CheckedRoute {
    pub route: Route,
    pub drive: RouteDrive,
    pub trace: Trace,
    pub report: RouteReport,
}

/// The result of checking a set of routes with one profile.
#[derive(Debug, Clone)]
pub struct CheckRun {
    pub vehicle_name: String,
    /// True when the built-in demo profile was used.
    pub demo_profile: bool,
    pub routes: Vec<CheckedRoute>,
}

impl CheckRun {
    /// The worst verdict over all routes.
    pub fn verdict(&self) -> Verdict {
        self.routes.iter().map(|r| r.report.verdict).max().unwrap_or(Verdict::Pass)
    }
}

/// Reads every route of every file and checks that the profile knows each leg's terrain.
pub fn load_routes(paths: &[PathBuf], profile: &Profile) -> Result<Vec<Route>, Error> {
    let known = profile.terrain_names();
    let mut routes = Vec::new();
    for path in paths {
        for route in read_routes(path)? {
            check_terrains(&route, &known)?;
            routes.push(route);
        }
    }
    Ok(routes)
}

/// Simulates and assesses one route.
pub fn check_route(route: Route, profile: &Profile) -> CheckedRoute {
    let drive = RouteDrive::new(&route, profile);
    let trace = roll_out(&drive);
    let report = assess_route(&route, &drive, &trace, profile.vehicle.battery_wh);
    CheckedRoute { route, drive, trace, report }
}

/// Checks routes in parallel; the output keeps the input order.
pub fn check_routes(routes: Vec<Route>, profile: &Profile, demo_profile: bool) -> CheckRun {
    let routes = routes.into_par_iter().map(|r| check_route(r, profile)).collect();
    CheckRun { vehicle_name: profile.vehicle.name.clone(), demo_profile, routes }
}

/// Adds the drift estimate (CEP95 at every leg end, DESIGN 6.8) to each route of a check, so one
/// command screens a plan. Routes run one after another; each runs its samples in parallel.
pub fn add_drift(
    run: &mut CheckRun,
    profile: &Profile,
    settings: &DriftSettings,
    progress: &dyn Progress,
) -> Result<(), Error> {
    for cr in &mut run.routes {
        let drift = run_drift(&cr.route, profile, settings, progress)?;
        for (leg, d) in cr.report.legs.iter_mut().zip(&drift.legs) {
            leg.drift_cep95_m = d.cep95_m();
        }
        cr.report.drift = Some(DriftNote {
            samples: settings.samples,
            seed: settings.seed,
            odometry: settings.odometry.name(),
            lost_from_leg: settings.lost_from_leg,
        });
    }
    progress.finish();
    Ok(())
}

//! The route check: read routes, resolve them against the profile, roll each out and assess
//! it. Routes are simulated in parallel (rayon); results keep the input order.

use std::path::PathBuf;
use std::sync::Arc;

use rayon::prelude::*;

use crate::assess::{assess_summary, leg_plans, DriftNote, RouteReport, TraceSummary, Verdict};
use crate::drift::{run_drift, DriftSettings};
use crate::limits::Limits;
use crate::margin::max_passing_speeds;
use crate::progress::Progress;
use crate::rollout::{reserved_trace, roll_out_observing, step_bound, Resume, RouteDrive, Trace};
use crate::route::{Route, RouteError};
use crate::site::{Site, TerrainMap};
use crate::vehicle::Profile;
use crate::Error;

/// One checked route with everything the reports draw on.
#[derive(Debug, Clone)]
pub struct CheckedRoute {
    pub route: Route,
    pub drive: RouteDrive,
    pub trace: Trace,
    pub report: RouteReport,
    /// Control steps simulated for this route: its rollout and the margins' simulations (for a
    /// run-wide work budget).
    pub steps_simulated: u64,
}

/// The result of checking a set of routes with one profile.
#[derive(Debug, Clone)]
pub struct CheckRun {
    pub vehicle_name: String,
    /// True when the built-in demo profile was used.
    pub demo_profile: bool,
    pub routes: Vec<CheckedRoute>,
    /// The terrain map the routes were cut by, for the plots to shade.
    pub terrain_map: Option<Arc<TerrainMap>>,
}

impl CheckRun {
    /// The worst verdict over all routes.
    pub fn verdict(&self) -> Verdict {
        self.routes.iter().map(|r| r.report.verdict).max().unwrap_or(Verdict::Pass)
    }
}

/// Reads every route of every file and checks that the profile knows each leg's terrain, with
/// the default [`Limits`].
pub fn load_routes(paths: &[PathBuf], profile: &Profile) -> Result<Vec<Route>, Error> {
    load_routes_with(paths, profile, &Limits::default())
}

/// [`load_routes`] with explicit limits: file size, points per leg, legs per route, points in
/// the whole run, and the rollout's step bound (time bound x control rate) of every route, so a
/// route that could not be simulated within [`Limits::max_rollout_steps`] is refused before
/// anything is simulated.
pub fn load_routes_with(paths: &[PathBuf], profile: &Profile, limits: &Limits) -> Result<Vec<Route>, Error> {
    load_routes_on_site(paths, profile, limits, &Site::default())
}

/// [`load_routes_with`] with the site inputs (terrain map, elevation raster) applied to every
/// route before its terrains are checked.
pub fn load_routes_on_site(
    paths: &[PathBuf],
    profile: &Profile,
    limits: &Limits,
    site: &Site,
) -> Result<Vec<Route>, Error> {
    let mut routes = Vec::new();
    for path in paths {
        routes.extend(crate::batch::load_file(path, profile, limits, site)?);
    }
    check_run_limits(&routes, profile, limits)?;
    Ok(routes)
}

/// The limits over a whole run that no single file can check: plan points over all files, and
/// every route's step bound against [`Limits::max_rollout_steps`].
pub fn check_run_limits(routes: &[Route], profile: &Profile, limits: &Limits) -> Result<(), RouteError> {
    let mut total_points = 0usize;
    for route in routes {
        total_points = total_points.saturating_add(route.legs.iter().map(|l| l.points.len()).sum::<usize>());
        if total_points > limits.max_total_points {
            let what = format!(
                "brings the run to {total_points} plan points, more than the limit of {} over all files (raise it with \
                 --max-total-points or SKIDROUTE_MAX_TOTAL_POINTS)",
                limits.max_total_points
            );
            return Err(RouteError::File { file: route.source.clone(), what });
        }
        check_step_bound(route, profile, limits)?;
    }
    Ok(())
}

/// The simulation work of rolling every route out once, in control steps: the sum of their step
/// bounds ([`step_bound`]). A drift estimate costs this times its samples; the CLI charges it to
/// the run's [`crate::limits::WorkBudget`] before simulating.
pub fn work_steps(routes: &[Route], profile: &Profile) -> f64 {
    routes.iter().map(|r| step_bound(r, profile)).sum()
}

/// Charges `rollouts` rollouts of every route to `budget`, up front; the message counts the
/// routes and says what the work is for (`what`, e.g. "checking").
pub fn charge_work(
    budget: &crate::limits::WorkBudget,
    routes: &[Route],
    profile: &Profile,
    rollouts: u64,
    what: &str,
) -> Result<(), crate::limits::WorkBudgetError> {
    budget.charge_rollouts(work_steps(routes, profile), rollouts, || {
        let n = routes.len();
        let times = if rollouts == 1 { String::new() } else { format!(" {rollouts} times") };
        format!("{what} {n} route{}{times}", if n == 1 { "" } else { "s" })
    })
}

/// Charges a check of `routes` ([`check_routes_with`]) to `budget`, up front: one rollout of
/// every route (refused whole when it does not fit, with a message that counts the routes and
/// says what the work is for, `what`, e.g. "checking"), then the margin search of each route
/// ([`crate::margin::work_bound`]) in input order. The margin search is extra information, so
/// a route whose search no longer fits is not refused: it and every route after it are checked
/// without it (their legs say the passing speed was not searched, and the route carries
/// [`MARGINS_NOT_SEARCHED`]). Returns, per route in input order, whether to search its margins;
/// the same inputs and budget always give the same answer.
pub fn charge_check(
    budget: &crate::limits::WorkBudget,
    routes: &[Route],
    profile: &Profile,
    limits: &Limits,
    what: &str,
) -> Result<Vec<bool>, crate::limits::WorkBudgetError> {
    charge_work(budget, routes, profile, 1, what)?;
    let mut fits = true;
    Ok(routes
        .iter()
        .map(|r| {
            let bound = crate::margin::work_bound(r, profile, limits.max_rollout_steps);
            fits = fits && budget.charge_rollouts(bound, 1, String::new).is_ok();
            fits
        })
        .collect())
}

/// The warning of a route checked without its margin search ([`charge_check`]).
pub const MARGINS_NOT_SEARCHED: &str = "the highest passing speed of the legs was not searched: added to those of \
the routes before it, the search could take more control steps than the run's work budget (the bound assumes every search \
bisects down to 0.1 m/s, far above what searches take); raise it with --max-work-steps or SKIDROUTE_MAX_WORK_STEPS";

/// Refuses a route whose rollout could need more than `limits.max_rollout_steps` steps.
fn check_step_bound(route: &Route, profile: &Profile, limits: &Limits) -> Result<(), RouteError> {
    let steps = step_bound(route, profile);
    if steps <= limits.max_rollout_steps as f64 {
        return Ok(());
    }
    let what = format!(
        "route '{}': simulating it could take up to {steps:.0} control steps at {} Hz (three times its planned \
         driving time plus a minute), more than the limit of {}; check the leg lengths and speeds, or raise the \
         limit with --max-steps or SKIDROUTE_MAX_STEPS",
        crate::limits::clip(&route.name),
        profile.follower.control_rate_hz,
        limits.max_rollout_steps
    );
    Err(match route.legs.first() {
        Some(leg) => RouteError::At { file: route.source.clone(), position: leg.position, what },
        None => RouteError::File { file: route.source.clone(), what },
    })
}

/// The warning for a route with cross slopes checked with a profile that gives no
/// centre-of-gravity height (docs/method.md, Effort).
pub const NO_COG_HEIGHT: &str = "the vehicle profile gives no vehicle.cog_height_m, so on this route's cross slopes \
the load shift to the downhill side and tipping over are not judged (sliding sideways is); add the height of the \
centre of gravity above the ground to the profile";

/// Simulates and assesses one route (at most the default step budget).
pub fn check_route(route: Route, profile: &Profile) -> CheckedRoute {
    check_route_with(route, profile, &Limits::default())
}

/// Simulates and assesses one route within `limits.max_rollout_steps` control steps per
/// simulation, then finds each leg's highest passing speed (`crate::margin`; those simulations
/// are counted in [`CheckedRoute::steps_simulated`]).
pub fn check_route_with(route: Route, profile: &Profile, limits: &Limits) -> CheckedRoute {
    check_route_searching(route, profile, limits, true)
}

/// [`check_route_with`], with the margin search only when `search_margins` (else each leg's
/// `max_passing_speed_searched` is false and the route carries [`MARGINS_NOT_SEARCHED`]).
pub fn check_route_searching(route: Route, profile: &Profile, limits: &Limits, search_margins: bool) -> CheckedRoute {
    check_route_keeping(route, profile, limits, search_margins, true)
}

/// [`check_route_searching`], keeping the trace only when `keep_trace` (without it the rollout
/// is assessed as it runs and [`CheckedRoute::trace`] has no steps, only the outcome).
pub fn check_route_keeping(
    mut route: Route,
    profile: &Profile,
    limits: &Limits,
    search_margins: bool,
    keep_trace: bool,
) -> CheckedRoute {
    let drive = RouteDrive::new(&route, profile);
    if drive.plan.has_cross_slope() && profile.vehicle.cog_height_m.is_none() {
        route.warnings.push(NO_COG_HEIGHT.to_string());
    }
    // The legs' plan facts (curvature, turns, slopes) do not depend on the simulation: read
    // them on another thread while it runs.
    let (plans, (trace, summary, resumes)) =
        rayon::join(|| leg_plans(&drive), || summarize_rollout(&drive, limits.max_rollout_steps, keep_trace));
    let mut report = assess_summary(&route, &drive, &summary, profile.vehicle.battery_wh, &plans);
    let mut steps_simulated = summary.steps();
    if search_margins {
        let margins = max_passing_speeds(&drive, &plans, &resumes, &report, limits.max_rollout_steps);
        for (leg, m) in report.legs.iter_mut().zip(&margins) {
            leg.max_passing_speed_mps = m.speed_mps;
            leg.max_passing_speed_searched = true;
        }
        steps_simulated += margins.iter().map(|m| m.steps).sum::<u64>();
    } else {
        route.warnings.push(MARGINS_NOT_SEARCHED.to_string());
    }
    CheckedRoute { route, drive, trace, report, steps_simulated }
}

/// Checks one route held in memory, for a planner screening candidate paths in a loop: no file
/// is read or written, nothing is printed. The route's legs are checked first (every terrain
/// known to `profile`, at least two finite points a leg, the legs joined, and the rollout's
/// step bound within the default [`Limits`]); then the route is simulated and assessed as
/// `skidroute check` does, without the margin search (each leg's
/// [`max_passing_speed_mps`](crate::assess::LegReport::max_passing_speed_mps) stays `None`, and
/// `max_passing_speed_searched` false;
/// [`check_route`] adds it). The trace is not kept.
///
/// ```
/// use skidroute::check::screen_route;
/// use skidroute::route::{Leg, Route, SourcePosition};
/// use skidroute::vehicle::Profile;
///
/// let profile = Profile::demo();
/// // 200 m: a straight, then a gentle left bend, points every metre, on gravel at 1.2 m/s.
/// let mut points = vec![[0.0, 0.0]];
/// let (mut x, mut y, mut yaw) = (0.0_f64, 0.0_f64, 0.0_f64);
/// for i in 0..200 {
///     if i >= 100 {
///         yaw += 0.01;
///     }
///     x += yaw.cos();
///     y += yaw.sin();
///     points.push([x, y]);
/// }
/// let leg = Leg { speed_mps: Some(1.2), ..Leg::new("gravel", points, SourcePosition::Feature(0)) };
/// let legs = vec![leg];
/// let route = Route { name: "candidate".into(), source: "planner".into(), origin: None, legs, warnings: vec![] };
/// let report = screen_route(&route, &profile).unwrap();
/// assert_eq!(report.legs.len(), 1);
/// println!("{:?}: largest deviation {:.2} m", report.verdict, report.legs[0].max_deviation_m);
/// ```
pub fn screen_route(route: &Route, profile: &Profile) -> Result<RouteReport, Error> {
    let limits = Limits::default();
    check_in_memory_route(route)?;
    crate::route::check_terrains(route, &profile.terrain_names())?;
    check_step_bound(route, profile, &limits)?;
    let drive = RouteDrive::new(route, profile);
    let (_, summary, _) = summarize_rollout(&drive, limits.max_rollout_steps, false);
    let plans = leg_plans(&drive);
    Ok(assess_summary(route, &drive, &summary, profile.vehicle.battery_wh, &plans))
}

/// Simulates `drive`, gathering what the assessment needs as the steps come; the trace keeps
/// the steps only when `keep_trace` (else it holds just the outcome).
fn summarize_rollout(
    drive: &RouteDrive,
    max_steps: u64,
    keep_trace: bool,
) -> (Trace, TraceSummary, Vec<Option<Resume>>) {
    let mut summary = TraceSummary::new(drive);
    let mut steps = if keep_trace { reserved_trace(drive) } else { Vec::new() };
    let (outcome, resumes) = roll_out_observing(drive, max_steps, |s| {
        summary.add(drive, s);
        if keep_trace {
            steps.push(*s);
        }
    });
    summary.end(outcome);
    (Trace { steps, outcome }, summary, resumes)
}

/// The checks a route read from a file has passed, for one built in memory: legs of at least two
/// finite points, no two consecutive points closer than `route::DUPLICATE_POINT_M`, each leg
/// starting where the previous one ends.
fn check_in_memory_route(route: &Route) -> Result<(), RouteError> {
    let at = |position, what: String| RouteError::At { file: route.source.clone(), position, what };
    if route.legs.is_empty() {
        return Err(RouteError::File { file: route.source.clone(), what: "route has no legs".to_string() });
    }
    let mut previous_end: Option<[f64; 2]> = None;
    for leg in &route.legs {
        let n = leg.points.len();
        if n < 2 {
            return Err(at(
                leg.position,
                format!("leg has {n} point{}, at least 2 are needed", if n == 1 { "" } else { "s" }),
            ));
        }
        if leg.points.iter().flatten().any(|v| !v.is_finite()) {
            return Err(at(leg.position, "leg has a point that is not finite".to_string()));
        }
        if leg.points.windows(2).any(|w| crate::route::plan::dist(w[0], w[1]) < crate::route::DUPLICATE_POINT_M) {
            return Err(at(leg.position, "leg has two consecutive points closer than 1 mm".to_string()));
        }
        if let (Some(end), Some(&start)) = (previous_end, leg.points.first()) {
            if crate::route::plan::dist(end, start) > crate::route::DUPLICATE_POINT_M {
                return Err(at(leg.position, "leg does not start where the previous leg ends".to_string()));
            }
        }
        previous_end = leg.points.last().copied();
    }
    Ok(())
}

/// Checks routes in parallel; the output keeps the input order.
pub fn check_routes(routes: Vec<Route>, profile: &Profile, demo_profile: bool) -> CheckRun {
    check_routes_with(routes, profile, demo_profile, &Limits::default())
}

/// [`check_routes`] within `limits.max_rollout_steps` control steps per route.
pub fn check_routes_with(routes: Vec<Route>, profile: &Profile, demo_profile: bool, limits: &Limits) -> CheckRun {
    check_routes_keeping(routes, profile, demo_profile, limits, true)
}

/// [`check_routes_with`], keeping each route's trace only when `keep_traces` (the trace CSV, the
/// predicted path, plots and HTML draw on it; the tables, JSON and JSON Lines do not). Without
/// traces a run's memory holds only the traces of the routes being simulated, one per thread,
/// instead of all of them (a 500 m route's trace is about 1.5 MB).
pub fn check_routes_keeping(
    routes: Vec<Route>,
    profile: &Profile,
    demo_profile: bool,
    limits: &Limits,
    keep_traces: bool,
) -> CheckRun {
    check_routes_searching(routes, profile, demo_profile, limits, keep_traces, &[])
}

/// [`check_routes_keeping`], searching the margins of route `i` only when `search_margins[i]`
/// (as [`charge_check`] returns it; a route past the end of the slice is searched).
pub fn check_routes_searching(
    routes: Vec<Route>,
    profile: &Profile,
    demo_profile: bool,
    limits: &Limits,
    keep_traces: bool,
    search_margins: &[bool],
) -> CheckRun {
    let routes = routes
        .into_par_iter()
        .enumerate()
        .map(|(i, r)| {
            let search = search_margins.get(i).copied().unwrap_or(true);
            check_route_keeping(r, profile, limits, search, keep_traces)
        })
        .collect();
    CheckRun { vehicle_name: profile.vehicle.name.clone(), demo_profile, routes, terrain_map: None }
}

/// Adds the drift estimate (CEP95 at every leg end, docs/method.md, Drift) to each route of a check, so one
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
            heading: settings.heading.name(),
            sources: drift.sources,
            lost_from_leg: settings.lost_from_leg,
            warnings: drift.warnings,
        });
    }
    progress.finish();
    Ok(())
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::route::{Leg, SourcePosition};

    fn route(legs: Vec<Leg>) -> Route {
        Route { name: "r".into(), source: "planner".into(), origin: None, legs, warnings: Vec::new() }
    }

    fn straight(terrain: &str, from_x: f64, n: usize) -> Leg {
        let points = (0..n).map(|i| [from_x + i as f64, 0.0]).collect();
        Leg { speed_mps: Some(1.0), ..Leg::new(terrain, points, SourcePosition::Feature(0)) }
    }

    #[test]
    fn screening_in_memory_matches_the_check_without_margins() {
        let r = route(vec![straight("gravel", 0.0, 31), straight("asphalt", 30.0, 21)]);
        let screened = screen_route(&r, &Profile::demo()).unwrap();
        let mut checked = check_route(r, &Profile::demo()).report;
        for leg in &mut checked.legs {
            assert!(leg.max_passing_speed_searched);
            leg.max_passing_speed_mps = None;
            leg.max_passing_speed_searched = false;
        }
        assert_eq!(format!("{screened:?}"), format!("{checked:?}"));
    }

    #[test]
    fn a_rollout_assessed_as_it_runs_reports_what_its_kept_trace_does() {
        // A gravel straight into a right-angle deep-snow corner the tracks cannot turn (traction
        // widens it, the corridor is left) and out onto asphalt: every per-leg figure, the
        // margins and the step count must not depend on whether the trace was kept.
        let corner: Vec<[f64; 2]> = (0..=20).map(|i| [30.0 + i as f64, 0.0]).collect::<Vec<_>>();
        let mut snow = corner;
        snow.extend((1..=20).map(|i| [50.0, i as f64]));
        let legs = vec![
            straight("gravel", 0.0, 31),
            Leg { speed_mps: Some(1.0), ..Leg::new("deep-snow", snow, SourcePosition::Feature(1)) },
            Leg {
                speed_mps: Some(1.0),
                ..Leg::new("asphalt", (0..=15).map(|i| [50.0, 20.0 + i as f64]).collect(), SourcePosition::Feature(2))
            },
        ];
        let p = Profile::demo();
        let kept = check_route_keeping(route(legs.clone()), &p, &Limits::default(), true, true);
        let streamed = check_route_keeping(route(legs), &p, &Limits::default(), true, false);
        assert!(kept.trace.steps.iter().any(|s| s.traction_limited()), "the corner must bind traction");
        assert!(streamed.trace.steps.is_empty());
        assert_eq!(streamed.trace.outcome, kept.trace.outcome);
        assert_eq!(streamed.steps_simulated, kept.steps_simulated);
        assert_eq!(format!("{:?}", streamed.report), format!("{:?}", kept.report));
        assert_eq!(kept.report.legs[1].verdict, Verdict::Fail, "{:?}", kept.report.legs[1].reasons);
        // A 30 % climb on deep snow stalls the vehicle (f_r + tan g = 0.45 > mu = 0.25; Wong
        // 2008, grade resistance), so the asphalt leg after it is never driven: no steps at all.
        let climb = Leg {
            speed_mps: Some(1.0),
            altitude_m: Some((0..=20).map(|i| 0.3 * i as f64).collect()),
            ..Leg::new("deep-snow", (0..=20).map(|i| [i as f64, 0.0]).collect(), SourcePosition::Feature(0))
        };
        let after = Leg {
            speed_mps: Some(1.0),
            altitude_m: Some(vec![6.0; 11]),
            ..Leg::new("asphalt", (20..=30).map(|i| [i as f64, 0.0]).collect(), SourcePosition::Feature(1))
        };
        let legs = vec![climb, after];
        let kept = check_route_keeping(route(legs.clone()), &p, &Limits::default(), true, true);
        let streamed = check_route_keeping(route(legs), &p, &Limits::default(), true, false);
        assert!(matches!(kept.trace.outcome, crate::rollout::Outcome::Stalled { .. }), "{:?}", kept.trace.outcome);
        assert!(kept.trace.steps.iter().all(|s| s.leg == 0));
        assert_eq!(streamed.trace.outcome, kept.trace.outcome);
        assert_eq!(format!("{:?}", streamed.report), format!("{:?}", kept.report));
    }

    #[test]
    fn screening_refuses_what_a_file_could_not_give() {
        let p = Profile::demo();
        let err = |r: Route| screen_route(&r, &p).unwrap_err().to_string();
        assert!(err(route(vec![straight("moon-dust", 0.0, 5)])).contains("unknown terrain"));
        assert!(err(route(vec![straight("gravel", 0.0, 1)])).contains("at least 2"));
        assert!(err(route(vec![straight("gravel", 0.0, 5), straight("gravel", 9.0, 5)])).contains("previous leg"));
        let mut nan = straight("gravel", 0.0, 5);
        nan.points[2][1] = f64::NAN;
        assert!(err(route(vec![nan])).contains("not finite"));
        assert!(err(route(Vec::new())).contains("no legs"));
    }
}

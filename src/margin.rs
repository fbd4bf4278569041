//! Margins to failure per leg (docs/method.md, Verdicts: margins): the highest speed at which a
//! leg does not fail, found by bisection over full simulations of the leg. A leg with a
//! planner's speed profile is searched with the whole profile scaled: the speed reported is the
//! profile's largest value at which the leg passes (the shape of the profile is kept).
//!
//! A leg fails at a speed when a turn needs more than the vehicle can drive there at that speed
//! (checked on the plan, cheap), when its grades or cross slopes need more than traction or the
//! vehicle's stance gives (independent of speed), or when the simulated vehicle leaves the
//! corridor, stalls or does not get past the leg's end. Everything else only earns a caution. So the search first finds, on the plan
//! alone, the highest speed whose turns pass; then simulates the leg, resumed from the main
//! simulation just before the leg (its earlier legs do not depend on this leg's speed), and
//! bisects between a speed that passes and one that fails until they are within 1 %. Each
//! simulation stops at the first step that decides it.
//!
//! Work: up to about ten simulations of one leg per leg, legs in parallel (rayon; each leg's
//! result depends only on its own inputs, so the output is the same on any thread count). The
//! steps simulated are returned, and [`work_bound`] bounds them from the route alone, so a
//! run-wide work budget can charge the search before anything is simulated.

use rayon::prelude::*;

use crate::assess::{check_turns, slopes_pass, LegPlan, RouteReport, Verdict};
use crate::rollout::{leg_passes, step_bounds_with_each_leg_at, Resume, RouteDrive};
use crate::route::Route;
use crate::vehicle::Profile;

/// Lowest speed tried, m/s: a leg that fails even at this speed has no passing speed (`null`).
pub const MIN_TRIED_SPEED_MPS: f64 = 0.1;
/// The bisection stops when the passing and the failing speed are within this ratio minus one.
pub const SPEED_RESOLUTION: f64 = 0.01;

/// Most simulations the search makes for one leg when the top side speed is `max_side_speed_mps`
/// (see [`max_passing_speed`]): one at the highest speed whose turns pass, the bisection in log
/// speed between the lowest tried speed and the top speed until they are within
/// [`SPEED_RESOLUTION`] (each step halves the log ratio; one more for rounding), and one at the
/// lowest tried speed.
pub fn max_simulations_per_leg(max_side_speed_mps: f64) -> u64 {
    let top = max_side_speed_mps.max(MIN_TRIED_SPEED_MPS);
    let halvings_to_resolution = (top / MIN_TRIED_SPEED_MPS).ln() / SPEED_RESOLUTION.ln_1p();
    let bisection = if halvings_to_resolution > 1.0 { halvings_to_resolution.log2().ceil() as u64 + 1 } else { 1 };
    bisection + 2
}

/// Upper bound of the control steps the search of every leg of `route` simulates under
/// `profile`, each simulation within `max_steps`: per leg, [`max_simulations_per_leg`] times the
/// step bound of the route with that leg at the lowest tried speed (the slowest, so the longest,
/// of the simulations; `rollout::step_bounds_with_each_leg_at`). Known before anything is
/// simulated, for the run-wide work budget.
pub fn work_bound(route: &Route, profile: &Profile, max_steps: u64) -> f64 {
    let simulations = max_simulations_per_leg(profile.vehicle.max_side_speed_mps) as f64;
    step_bounds_with_each_leg_at(route, profile, MIN_TRIED_SPEED_MPS)
        .into_iter()
        .map(|bound| simulations * bound.min(max_steps as f64))
        .sum()
}

/// The highest passing speed of one leg and the work it took.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct PassingSpeed {
    /// `None` when the leg fails at every speed tried.
    pub speed_mps: Option<f64>,
    /// Control steps simulated to find it.
    pub steps: u64,
}

/// The highest passing speed of every leg (see the module documentation). `resumes` are the
/// states from which each leg can be resumed (`rollout::roll_out_with_resumes`), `report` the
/// route's assessment at its planned speeds, `max_steps` the budget of each simulation.
pub fn max_passing_speeds(
    drive: &RouteDrive,
    plans: &[LegPlan],
    resumes: &[Option<Resume>],
    report: &RouteReport,
    max_steps: u64,
) -> Vec<PassingSpeed> {
    (0..drive.legs.len())
        .into_par_iter()
        .map(|i| {
            let own_passes = report.legs.get(i).is_some_and(|l| l.verdict != Verdict::Fail);
            match (plans.get(i), resumes.get(i).copied().flatten()) {
                (Some(plan), Some(from)) => max_passing_speed(drive, i, plan, &from, own_passes, max_steps),
                _ => PassingSpeed { speed_mps: None, steps: 0 },
            }
        })
        .collect()
}

/// The highest passing speed of leg `leg`; `own_passes` says whether it passes at its planned
/// speed (already simulated).
pub fn max_passing_speed(
    drive: &RouteDrive,
    leg: usize,
    plan: &LegPlan,
    from: &Resume,
    own_passes: bool,
    max_steps: u64,
) -> PassingSpeed {
    let none = PassingSpeed { speed_mps: None, steps: 0 };
    if !slopes_pass(plan) {
        return none;
    }
    let turns_pass = |v: f64| check_turns(drive, leg, plan, v).failing.is_empty();
    let top = drive.limits.max_side_speed_mps.max(MIN_TRIED_SPEED_MPS);
    if !turns_pass(MIN_TRIED_SPEED_MPS) {
        return none;
    }
    let plan_top = if turns_pass(top) { top } else { bisect(MIN_TRIED_SPEED_MPS, top, 1e-4, turns_pass) };
    let mut steps = 0u64;
    let nominal = drive.legs[leg].speed_mps;
    let mut simulate_passes = |v: f64| {
        // The leg's profile scaled so its largest value is v; the envelope is rebuilt from
        // where the simulation resumes.
        let scaled = drive.speeds.scaled(&drive.plan, leg, v / nominal, from.progress_m());
        let (ok, n) = leg_passes(drive, drive.speeds.view_with(&scaled), from, leg, max_steps);
        steps += n;
        ok
    };
    let own = drive.legs[leg].speed_mps.min(top);
    if simulate_passes(plan_top) {
        return PassingSpeed { speed_mps: Some(plan_top), steps };
    }
    // Bracket: a speed known (or assumed, at the lowest tried) to pass and one that fails.
    let (mut lo, mut lo_known) = if own_passes && own < plan_top { (own, true) } else { (MIN_TRIED_SPEED_MPS, false) };
    let mut hi = if !own_passes && own > lo && own < plan_top { own } else { plan_top };
    while hi > lo * (1.0 + SPEED_RESOLUTION) {
        let mid = (lo * hi).sqrt();
        if turns_pass(mid) && simulate_passes(mid) {
            (lo, lo_known) = (mid, true);
        } else {
            hi = mid;
        }
    }
    if !lo_known && !simulate_passes(lo) {
        return PassingSpeed { speed_mps: None, steps };
    }
    PassingSpeed { speed_mps: Some(lo), steps }
}

/// Largest speed in [lo, hi] at which `passes` holds, by bisection in log speed to within
/// `resolution`, given that it holds at `lo` and not at `hi`.
fn bisect(mut lo: f64, mut hi: f64, resolution: f64, passes: impl Fn(f64) -> bool) -> f64 {
    while hi > lo * (1.0 + resolution) {
        let mid = (lo * hi).sqrt();
        if passes(mid) {
            lo = mid;
        } else {
            hi = mid;
        }
    }
    lo
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::check::{check_route, load_routes};

    /// The search's worst case, emulated: every simulation fails, so the bisection starts from
    /// the widest bracket (the lowest tried speed to the top speed) and only lowers its top.
    #[test]
    fn simulation_count_covers_the_worst_bisection() {
        for top in [0.05, 0.1, 0.1005, 0.5, 2.0, 7.3, 100.0] {
            let (lo, mut hi, mut bisection) = (MIN_TRIED_SPEED_MPS, f64::max(top, MIN_TRIED_SPEED_MPS), 0u64);
            while hi > lo * (1.0 + SPEED_RESOLUTION) {
                hi = (lo * hi).sqrt();
                bisection += 1;
            }
            // One simulation at the highest speed whose turns pass, one at the lowest tried.
            assert!(bisection + 2 <= max_simulations_per_leg(top), "top {top}: {bisection} halvings");
        }
        // 0.1 to 2 m/s to 1 %: ln 20 / ln 1.01 = 301.1 is 2^8.23, so 9 halvings (+1 for
        // rounding) and the two end simulations (closed form).
        assert_eq!(max_simulations_per_leg(2.0), 12);
    }

    /// The steps the margin search of every example route actually simulated stay within the
    /// bound charged up front.
    #[test]
    fn steps_simulated_stay_within_the_work_bound() {
        let profile = Profile::demo();
        let dir = std::path::Path::new(concat!(env!("CARGO_MANIFEST_DIR"), "/example-routes"));
        let routes = load_routes(&[dir.join("supply-run.geojson"), dir.join("yard-lap.csv")], &profile).expect("load");
        let mut searched = 0;
        for route in routes {
            let bound = work_bound(&route, &profile, crate::limits::DEFAULT_MAX_ROLLOUT_STEPS);
            let checked = check_route(route, &profile);
            let margin_steps = checked.steps_simulated - checked.trace.steps.len() as u64;
            assert!(margin_steps as f64 <= bound, "{}: {margin_steps} > {bound}", checked.route.name);
            searched += usize::from(margin_steps > 0);
        }
        assert!(searched > 0, "no margin search ran");
    }
}

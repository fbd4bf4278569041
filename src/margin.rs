//! Margins to failure per leg (docs/method.md, Verdicts: margins): the highest speed at which a
//! leg does not fail, found by bisection over full simulations of the leg.
//!
//! A leg fails at a speed when a turn needs more than the vehicle can drive there at that speed
//! (checked on the plan, cheap), when its grades need more than traction gives (independent of
//! speed), or when the simulated vehicle leaves the leg's corridor, stalls or does not get past
//! the leg's end. Everything else only earns a caution. So the search first finds, on the plan
//! alone, the highest speed whose turns pass; then simulates the leg, resumed from the main
//! simulation just before the leg (its earlier legs do not depend on this leg's speed), and
//! bisects between a speed that passes and one that fails until they are within 1 %. Each
//! simulation stops at the first step that decides it.
//!
//! Work: up to about ten simulations of one leg per leg, legs in parallel (rayon; each leg's
//! result depends only on its own inputs, so the output is the same on any thread count). The
//! steps simulated are returned so a run-wide work budget can charge them.

use rayon::prelude::*;

use crate::assess::{check_turns, grades_pass, LegPlan, RouteReport, Verdict};
use crate::rollout::{leg_passes, Resume, RouteDrive};

/// Lowest speed tried, m/s: a leg that fails even at this speed has no passing speed (`null`).
pub const MIN_TRIED_SPEED_MPS: f64 = 0.1;
/// The bisection stops when the passing and the failing speed are within this ratio minus one.
pub const SPEED_RESOLUTION: f64 = 0.01;

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
    if !grades_pass(drive, leg, plan) {
        return none;
    }
    let turns_pass = |v: f64| check_turns(drive, leg, plan, v).failing.is_empty();
    let top = drive.limits.max_side_speed_mps.max(MIN_TRIED_SPEED_MPS);
    if !turns_pass(MIN_TRIED_SPEED_MPS) {
        return none;
    }
    let plan_top = if turns_pass(top) { top } else { bisect(MIN_TRIED_SPEED_MPS, top, 1e-4, turns_pass) };
    let mut steps = 0u64;
    let mut speeds = drive.speeds_mps.clone();
    let mut simulate_passes = |v: f64| {
        speeds[leg] = v;
        let (ok, n) = leg_passes(drive, &speeds, from, leg, max_steps);
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

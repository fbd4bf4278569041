//! Per-leg assessment of a simulated route (docs/method.md, Plan curvature, Achievable curvature, Verdicts): the plan's required
//! curvature, the achievable curvature at the leg's speed, predicted deviation against the
//! corridor, time, and a verdict with reasons in plain words.
//!
//! Units: metres, seconds, 1/m; deviations are distances to the plan near the progress point.

use serde::Serialize;

use crate::effort::{effort_step, side_thrust_limit_n, traction_curvature_limit};
use crate::follow::{saturate_sides, FollowerLimits};
use crate::kinematics::{Model, MotionModel};
use crate::rollout::{Outcome, RouteDrive, Trace};
use crate::route::Route;

/// Resampling step for the plan's curvature (docs/method.md, Plan curvature).
pub const CURVATURE_STEP_M: f64 = 0.1;
/// Share of the achievable curvature above which a turn earns a caution.
pub const CAUTION_CURVATURE_SHARE: f64 = 0.8;
/// Share of the corridor above which a deviation earns a caution.
pub const CAUTION_CORRIDOR_SHARE: f64 = 0.5;

/// Screening verdict, ordered from best to worst.
#[derive(Debug, Clone, Copy, PartialEq, Eq, PartialOrd, Ord, Hash, Serialize)]
#[serde(rename_all = "lowercase")]
pub enum Verdict {
    Pass,
    Caution,
    Fail,
}

impl Verdict {
    pub fn name(self) -> &'static str {
        match self {
            Verdict::Pass => "pass",
            Verdict::Caution => "caution",
            Verdict::Fail => "fail",
        }
    }
}

/// What limits the curvature the vehicle can drive on a leg.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize)]
#[serde(rename_all = "kebab-case")]
pub enum CurvatureLimit {
    /// The yaw-rate clamp, side-speed saturation and the terrain's slip (kinematic model).
    Kinematic,
    /// Thrust on the outer track against traction, the thrust rating or the power rating.
    Traction,
}

/// Achievable curvature of a leg and what binds it (docs/method.md, Achievable curvature).
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Achievable {
    pub kinematic_per_m: f64,
    /// Traction/thrust/power limit, when the effort model has computed one.
    pub traction_per_m: Option<f64>,
}

impl Achievable {
    pub fn curvature_per_m(&self) -> f64 {
        self.traction_per_m.map_or(self.kinematic_per_m, |t| t.min(self.kinematic_per_m))
    }
    pub fn binding(&self) -> CurvatureLimit {
        match self.traction_per_m {
            Some(t) if t < self.kinematic_per_m => CurvatureLimit::Traction,
            _ => CurvatureLimit::Kinematic,
        }
    }
}

/// Kinematic curvature limit at `speed_mps`: the actual curvature (omega / vx of the terrain
/// model) when the controller commands its largest yaw rate, after the inverse model and
/// side-speed saturation; the smaller of the left and right turn. Infinite where the terrain
/// turns on the spot (vx <= 0) at that command.
pub fn kinematic_curvature_limit(limits: &FollowerLimits, controller: &Model, actual: &Model, speed_mps: f64) -> f64 {
    let v = speed_mps.min(limits.max_side_speed_mps);
    let mut worst = f64::INFINITY;
    for sign in [1.0, -1.0] {
        let omega = sign * limits.max_yaw_rate_radps;
        let half = 0.5 * omega * limits.track_width_m;
        let (l, r) = controller.inverse(v, omega).unwrap_or((v - half, v + half));
        let (l, r) = saturate_sides(l, r, limits.max_side_speed_mps);
        let t = actual.twist(l, r);
        let k = if t.vx_mps > 1e-9 { (t.omega_radps / t.vx_mps).abs() } else { f64::INFINITY };
        worst = worst.min(k);
    }
    worst
}

/// The assessment of one leg.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct LegReport {
    /// 1-based leg number within the route.
    pub index: usize,
    pub name: Option<String>,
    pub terrain: String,
    pub length_m: f64,
    pub speed_mps: f64,
    pub corridor_m: f64,
    /// Tightest planned radius (1 / required curvature); `None` for a straight leg.
    pub min_planned_radius_m: Option<f64>,
    pub required_curvature_per_m: f64,
    /// Arc length along the route where the tightest turn is.
    pub tightest_turn_at_m: f64,
    /// `None` when the vehicle can turn on the spot at this speed.
    pub achievable_curvature_per_m: Option<f64>,
    pub kinematic_curvature_per_m: Option<f64>,
    pub traction_curvature_per_m: Option<f64>,
    pub curvature_limited_by: CurvatureLimit,
    pub max_deviation_m: f64,
    pub rms_deviation_m: f64,
    pub end_deviation_m: f64,
    pub time_s: f64,
    /// Energy drawn from the source on this leg.
    pub energy_wh: f64,
    pub energy_wh_per_m: f64,
    /// Largest thrust of either side.
    pub peak_side_thrust_n: f64,
    /// Largest power drawn from the source.
    pub peak_power_w: f64,
    pub mean_power_w: f64,
    /// Steepest uphill grade of the plan on this leg, percent (0 without altitude).
    pub max_uphill_grade_pct: f64,
    /// 95 % radial error at the leg end when localization is lost (`check --drift`).
    #[serde(skip_serializing_if = "Option::is_none")]
    pub drift_cep95_m: Option<f64>,
    pub verdict: Verdict,
    pub reasons: Vec<String>,
}

/// The assessment of one route.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct RouteReport {
    pub route: String,
    pub source: String,
    pub verdict: Verdict,
    pub length_m: f64,
    pub time_s: f64,
    pub max_deviation_m: f64,
    /// False when the rollout hit its time bound before the end.
    pub completed: bool,
    pub energy_wh: f64,
    pub peak_power_w: f64,
    /// Share of `battery_wh` the route uses, when the profile gives a battery.
    pub battery_used_fraction: Option<f64>,
    /// Route-level reasons (battery reserve).
    pub reasons: Vec<String>,
    /// How the drift figures were computed, when `check --drift` asked for them.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub drift: Option<DriftNote>,
    pub legs: Vec<LegReport>,
}

/// The settings behind the drift figures of a check report.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct DriftNote {
    pub samples: usize,
    pub seed: u64,
    pub odometry: &'static str,
    /// Where the believed heading comes from: "odometry" or "gyro".
    pub heading: &'static str,
    /// The odometry and heading source in words.
    pub sources: String,
    pub lost_from_leg: usize,
    /// What the drift figures leave out (terrains without covariance or noise intensities).
    pub warnings: Vec<String>,
}

/// Battery reserve below which a route earns a caution.
pub const BATTERY_RESERVE_FRACTION: f64 = 0.2;

fn finite(x: f64) -> Option<f64> {
    x.is_finite().then_some(x)
}

/// The steps driven on one leg. The progress point only moves forward, so steps are sorted
/// by leg and each leg's steps are one slice.
pub fn leg_steps(trace: &Trace, leg: usize) -> &[crate::rollout::Step] {
    let a = trace.steps.partition_point(|s| s.leg < leg);
    let b = trace.steps.partition_point(|s| s.leg <= leg);
    &trace.steps[a..b.max(a)]
}

/// Deviation statistics of the steps on one leg: (max, rms, end, time).
fn deviation_stats(trace: &Trace, leg: usize, dt_s: f64) -> (f64, f64, f64, f64) {
    let (mut max, mut sum_sq, mut n, mut end) = (0.0_f64, 0.0, 0usize, 0.0);
    for s in leg_steps(trace, leg) {
        max = max.max(s.deviation_m);
        sum_sq += s.deviation_m * s.deviation_m;
        n += 1;
        end = s.deviation_m;
    }
    let rms = if n > 0 { (sum_sq / n as f64).sqrt() } else { 0.0 };
    (max, rms, end, n as f64 * dt_s)
}

/// Assesses every leg of a simulated route, and the route's energy against the battery.
pub fn assess_route(route: &Route, drive: &RouteDrive, trace: &Trace, battery_wh: Option<f64>) -> RouteReport {
    let legs: Vec<LegReport> = (0..drive.legs.len()).map(|i| assess_leg(route, drive, trace, i)).collect();
    let energy_wh: f64 = legs.iter().map(|l| l.energy_wh).sum();
    let battery_used_fraction = battery_wh.map(|b| energy_wh / b);
    let mut reasons = Vec::new();
    let mut verdict = legs.iter().map(|l| l.verdict).max().unwrap_or(Verdict::Pass);
    if let (Some(share), Some(b)) = (battery_used_fraction, battery_wh) {
        if share > 1.0 - BATTERY_RESERVE_FRACTION {
            let v = if share > 1.0 { Verdict::Fail } else { Verdict::Caution };
            verdict = verdict.max(v);
            reasons.push(format!(
                "the route needs {energy_wh:.0} Wh, {:.0} % of the {b:.0} Wh battery; less than {:.0} % would be left",
                100.0 * share,
                100.0 * BATTERY_RESERVE_FRACTION
            ));
        }
    }
    RouteReport {
        route: route.name.clone(),
        source: route.source.display().to_string(),
        verdict,
        length_m: drive.plan.length_m(),
        time_s: trace.steps.last().map_or(0.0, |s| s.t_s),
        max_deviation_m: legs.iter().map(|l| l.max_deviation_m).fold(0.0, f64::max),
        completed: matches!(trace.outcome, Outcome::Reached),
        energy_wh,
        peak_power_w: legs.iter().map(|l| l.peak_power_w).fold(0.0, f64::max),
        battery_used_fraction,
        reasons,
        drift: None,
        legs,
    }
}

/// Effort totals of one leg's steps.
#[derive(Debug, Clone, Copy, Default)]
struct LegEffort {
    energy_j: f64,
    peak_thrust_n: f64,
    peak_power_w: f64,
    /// Largest outer thrust and drawn power without the acceleration share, and where.
    peak_steady_thrust_n: f64,
    peak_steady_thrust_at_m: f64,
    peak_steady_power_w: f64,
}

fn leg_effort(drive: &RouteDrive, trace: &Trace, leg: usize) -> LegEffort {
    let dt = drive.limits.dt_s;
    let ground = &drive.legs[leg].ground;
    let mut e = LegEffort::default();
    for s in leg_steps(trace, leg) {
        let f = &s.effort;
        e.energy_j += f.drawn_power_w * dt;
        e.peak_thrust_n = e.peak_thrust_n.max(f.left_thrust_n.abs()).max(f.right_thrust_n.abs());
        e.peak_power_w = e.peak_power_w.max(f.drawn_power_w);
        let steady = effort_step(
            &drive.vehicle,
            ground,
            s.twist.vx_mps,
            s.twist.omega_radps,
            s.left_mps,
            s.right_mps,
            0.0,
            f.grade_rad,
        );
        if steady.outer_thrust_n > e.peak_steady_thrust_n {
            e.peak_steady_thrust_n = steady.outer_thrust_n;
            e.peak_steady_thrust_at_m = s.progress_m;
        }
        e.peak_steady_power_w = e.peak_steady_power_w.max(steady.drawn_power_w);
    }
    e
}

/// Steepest uphill grade of the plan over a leg, rad, sampled every metre.
fn max_uphill_grade_rad(drive: &RouteDrive, leg: usize) -> f64 {
    if !drive.plan.has_altitude() {
        return 0.0;
    }
    let (a, b) = drive.plan.leg_bounds_m(leg);
    let n = (b - a).ceil().clamp(1.0, crate::route::plan::MAX_SAMPLES_PER_LEG) as usize;
    (0..=n).map(|k| drive.plan.grade_at(a + (b - a) * k as f64 / n as f64)).fold(0.0, f64::max)
}

fn assess_leg(route: &Route, drive: &RouteDrive, trace: &Trace, i: usize) -> LegReport {
    let ld = &drive.legs[i];
    let traction_per_m = Some(traction_curvature_limit(&drive.vehicle, &ld.ground, ld.speed_mps));
    let effort = leg_effort(drive, trace, i);
    let grade_rad = max_uphill_grade_rad(drive, i);
    let (start_m, end_m) = drive.plan.leg_bounds_m(i);
    let scale_m = drive.curvature_scale_m;
    let (required, at_m) = drive.plan.required_curvature(i, scale_m, CURVATURE_STEP_M);
    let achievable = Achievable {
        kinematic_per_m: kinematic_curvature_limit(&drive.limits, &ld.controller, &ld.actual, ld.speed_mps),
        traction_per_m,
    };
    let (max_dev, rms_dev, end_dev, time_s) = deviation_stats(trace, i, drive.limits.dt_s);
    let mut leg = LegReport {
        index: i + 1,
        name: route.legs.get(i).and_then(|l| l.name.clone()),
        terrain: ld.terrain.clone(),
        length_m: end_m - start_m,
        speed_mps: ld.speed_mps,
        corridor_m: ld.corridor_m,
        min_planned_radius_m: (required > 1e-9).then(|| 1.0 / required),
        required_curvature_per_m: required,
        tightest_turn_at_m: at_m,
        achievable_curvature_per_m: finite(achievable.curvature_per_m()),
        kinematic_curvature_per_m: finite(achievable.kinematic_per_m),
        traction_curvature_per_m: traction_per_m,
        curvature_limited_by: achievable.binding(),
        max_deviation_m: max_dev,
        rms_deviation_m: rms_dev,
        end_deviation_m: end_dev,
        time_s,
        energy_wh: effort.energy_j / 3600.0,
        energy_wh_per_m: if end_m > start_m { effort.energy_j / 3600.0 / (end_m - start_m) } else { 0.0 },
        peak_side_thrust_n: effort.peak_thrust_n,
        peak_power_w: effort.peak_power_w,
        mean_power_w: if time_s > 0.0 { effort.energy_j / time_s } else { 0.0 },
        max_uphill_grade_pct: 100.0 * grade_rad.tan(),
        drift_cep95_m: None,
        verdict: Verdict::Pass,
        reasons: Vec::new(),
    };
    judge(&mut leg, &achievable, drive, trace, i);
    judge_effort(&mut leg, &effort, grade_rad, drive, i);
    leg
}

/// The effort part of the verdict rules (docs/method.md, Verdicts): climbing, thrust and power against traction and ratings.
fn judge_effort(leg: &mut LegReport, e: &LegEffort, grade_rad: f64, drive: &RouteDrive, i: usize) {
    let ground = &drive.legs[i].ground;
    let veh = &drive.vehicle;
    let limit_n = side_thrust_limit_n(veh, ground);
    let traction_n = 0.5 * ground.traction_coefficient * veh.weight_n();
    let what = if traction_n <= veh.max_side_thrust_n {
        format!("traction on {} gives {traction_n:.0} N", leg.terrain)
    } else {
        format!("the drive is rated {:.0} N", veh.max_side_thrust_n)
    };
    let mut add = |v: Verdict, why: String| {
        leg.verdict = leg.verdict.max(v);
        leg.reasons.push(why);
    };
    let climb = ground.rolling_resistance + grade_rad.sin();
    if grade_rad > 0.0 && 0.5 * climb * veh.weight_n() > limit_n {
        add(
            Verdict::Fail,
            format!(
                "cannot climb: the {:.0} % grade with rolling resistance needs {:.0} N per side; {what}",
                100.0 * grade_rad.tan(),
                0.5 * climb * veh.weight_n()
            ),
        );
    } else if e.peak_steady_thrust_n > limit_n {
        add(
            Verdict::Fail,
            format!(
                "the turn at {1:.0} m along the route needs {0:.0} N on the outer track without braking; {what}",
                e.peak_steady_thrust_n, e.peak_steady_thrust_at_m
            ),
        );
    } else if e.peak_thrust_n > limit_n {
        add(
            Verdict::Caution,
            format!(
                "changing speed needs up to {:.0} N per side (driving or braking); {what}, so the vehicle will speed up or slow down more gently than planned",
                e.peak_thrust_n
            ),
        );
    }
    if e.peak_steady_power_w > veh.max_power_w {
        add(
            Verdict::Fail,
            format!("needs {:.0} W, above the {:.0} W power rating", e.peak_steady_power_w, veh.max_power_w),
        );
    } else if e.peak_power_w > veh.max_power_w {
        add(
            Verdict::Caution,
            format!(
                "accelerating draws up to {:.0} W, above the {:.0} W rating; acceleration will be slower",
                e.peak_power_w, veh.max_power_w
            ),
        );
    }
}

/// Applies the verdict rules (docs/method.md, Verdicts) and writes the reasons.
fn judge(leg: &mut LegReport, achievable: &Achievable, drive: &RouteDrive, trace: &Trace, i: usize) {
    let mut add = |v: Verdict, why: String| {
        leg.verdict = leg.verdict.max(v);
        leg.reasons.push(why);
    };
    let ach = achievable.curvature_per_m();
    let req = leg.required_curvature_per_m;
    let limiter = match achievable.binding() {
        CurvatureLimit::Kinematic => "slip and the yaw-rate limit".to_string(),
        CurvatureLimit::Traction => format!("thrust against traction on {}", leg.terrain),
    };
    let at = format!("{:.0} m along the route", leg.tightest_turn_at_m);
    if req > ach {
        add(
            Verdict::Fail,
            format!(
                "turn needs radius {:.1} m ({at}); at {:.1} m/s on {} the tightest is {:.1} m ({limiter})",
                1.0 / req,
                leg.speed_mps,
                leg.terrain,
                1.0 / ach
            ),
        );
    } else if req > CAUTION_CURVATURE_SHARE * ach {
        add(
            Verdict::Caution,
            format!(
                "turn radius {:.1} m ({at}) uses {:.0} % of what {} allows at {:.1} m/s (tightest {:.1} m)",
                1.0 / req,
                100.0 * req / ach,
                leg.terrain,
                leg.speed_mps,
                1.0 / ach
            ),
        );
    }
    if leg.max_deviation_m > leg.corridor_m {
        add(
            Verdict::Fail,
            format!("predicted deviation {:.2} m leaves the {:.2} m corridor", leg.max_deviation_m, leg.corridor_m),
        );
    } else if leg.max_deviation_m > CAUTION_CORRIDOR_SHARE * leg.corridor_m {
        add(
            Verdict::Caution,
            format!(
                "predicted deviation {:.2} m is over half the {:.2} m corridor",
                leg.max_deviation_m, leg.corridor_m
            ),
        );
    }
    if leg.speed_mps > drive.limits.max_side_speed_mps {
        add(
            Verdict::Caution,
            format!(
                "planned speed {:.1} m/s is above the top side speed {:.1} m/s; the prediction drives slower",
                leg.speed_mps, drive.limits.max_side_speed_mps
            ),
        );
    }
    if let Outcome::StepBudget { max_steps, progress_m } = trace.outcome {
        if progress_m < drive.plan.leg_bounds_m(i).1 {
            add(
                Verdict::Fail,
                format!("the simulation stopped at its budget of {max_steps} control steps, {progress_m:.0} m along the route"),
            );
        }
    }
    if let Outcome::TimedOut { limit_s, progress_m } = trace.outcome {
        let (start_m, end_m) = drive.plan.leg_bounds_m(i);
        if progress_m < end_m && progress_m >= start_m {
            add(
                Verdict::Fail,
                format!("the vehicle did not get past {progress_m:.0} m along the route within {limit_s:.0} s (stalled or circling)"),
            );
        } else if progress_m < start_m {
            add(Verdict::Fail, "the vehicle never reached this leg (stalled or circling earlier)".to_string());
        }
    }
}

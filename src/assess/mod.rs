//! Per-leg assessment of a simulated route (docs/method.md, Plan curvature, Achievable curvature,
//! Verdicts): every turn of the plan against what the vehicle can drive there at the speed planned
//! there and the slope of the turn, climbs, descents and cross slopes against traction and the
//! tipping limit (`slopes.rs`), the predicted deviation against the corridor where it happens,
//! time and effort, the margins to failure, and a verdict with reasons in plain words (every
//! reason through one function, `add_at`, which also records what the reason is about and where).
//!
//! Units: metres, seconds, 1/m; deviations are distances to the plan near the progress point.

mod slopes;
mod turns;

use serde::Serialize;

use crate::effort::{side_thrust_limits_n, Slope, STANDARD_GRAVITY_MPS2};
use crate::rollout::{Outcome, RouteDrive, Step, Trace};
use crate::route::Route;
use crate::turn_limit::{lateral_accel_caution_mps2, StepLimit, LATERAL_ACCEL_CAUTION_SHARE};

pub use crate::turn_limit::{kinematic_curvature_limit, Achievable, CurvatureLimit};
pub use slopes::{slopes_pass, CrossNeed, SideNeed, SlopeFacts};
pub use turns::{check_turns, FailingTurn, LegPlan, TurnCheck, TurnPoint};

/// Step at which `relax` samples the plan's curvature around a corner (docs/method.md, Plan curvature).
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
    /// Steepest downhill grade of the plan on this leg, percent, as a positive number.
    pub max_downhill_grade_pct: f64,
    /// Steepest cross slope of the plan on this leg, percent (100 |tan|); `None` without cross
    /// slopes (no elevation raster).
    pub max_cross_slope_pct: Option<f64>,
    /// The terrain's traction coefficient (mu).
    pub traction_coefficient: f64,
    /// Smallest traction coefficient with which the leg's turns and climbs (and descents) stay
    /// within traction at the planned speed; speed changes are left out (they only earn a
    /// caution). Compare with `traction_coefficient`.
    pub traction_coefficient_needed: f64,
    /// Highest leg speed at which this leg does not fail (full simulations, bisection to 1 %);
    /// `None` when it fails at any speed down to the lowest tried (docs/method.md, Verdicts).
    pub max_passing_speed_mps: Option<f64>,
    /// False when the search for `max_passing_speed_mps` was not run (it did not fit the run's
    /// work budget, or the route was screened without it): then `None` above says nothing.
    pub max_passing_speed_searched: bool,
    /// Time during which traction, the thrust rating or the power rating bound the simulated
    /// motion on this leg, s.
    pub traction_limited_s: f64,
    /// Every turn of the leg the vehicle cannot drive at the leg's speed.
    pub failing_turns: Vec<FailingTurn>,
    /// 95 % radial error at the leg end when localization is lost (`check --drift`).
    #[serde(skip_serializing_if = "Option::is_none")]
    pub drift_cep95_m: Option<f64>,
    pub verdict: Verdict,
    pub reasons: Vec<String>,
    /// The verdict each reason stands for, in the order of `reasons` (a failing leg may also
    /// carry reasons for a caution).
    #[serde(skip)]
    pub reason_verdicts: Vec<Verdict>,
    /// What each reason is about and where, in the order of `reasons` (for marking them on plots).
    #[serde(skip)]
    pub reason_spots: Vec<ReasonSpot>,
}

/// What a reason of a leg is about.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash, PartialOrd, Ord)]
pub enum ReasonAbout {
    /// A turn of the plan beyond (or near) what the vehicle can drive.
    Turn,
    /// The peak of the predicted deviation.
    Deviation,
    /// The planned speed (the whole leg).
    Speed,
    /// Where the simulation stopped (stalled, circling, out of budget).
    Stop,
    /// The steepest climb.
    Climb,
    /// The steepest descent.
    Descent,
    /// A speed change beyond traction or the thrust rating.
    SpeedChange,
    /// The power rating.
    Power,
    /// A simulated turn widened by traction.
    TurnTraction,
    /// Lateral acceleration.
    Lateral,
    /// Slope across the direction of travel.
    CrossSlope,
    /// Anything else (no position).
    Other,
}

/// Where a reason applies: what it is about and its distance along the route, when it has one.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct ReasonSpot {
    pub about: ReasonAbout,
    pub at_m: Option<f64>,
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

/// Deviation statistics of the steps on one leg.
#[derive(Debug, Clone, Copy, Default)]
struct Deviation {
    max_m: f64,
    rms_m: f64,
    end_m: f64,
    time_s: f64,
    /// The step whose deviation is the largest share of the corridor where it is: that share,
    /// the deviation, the corridor there and where.
    worst_share: f64,
    worst_m: f64,
    worst_corridor_m: f64,
    worst_at_m: f64,
}

/// What the assessment reads from the steps driven on one leg, gathered one step at a time in
/// the order driven, so a rollout can be assessed as it runs without keeping its trace (the
/// same figures, to the bit, as from the kept trace).
#[derive(Debug, Clone, Default)]
pub struct LegTally {
    effort: LegEffort,
    max_m: f64,
    sum_sq_m2: f64,
    n: usize,
    end_m: f64,
    worst_share: f64,
    worst_m: f64,
    worst_corridor_m: f64,
    worst_at_m: f64,
    /// Walk with the steps: the corridor and ground lookups are O(1) a step.
    corridor_cursor: crate::route::Cursor,
    span: crate::route::LegSpan,
}

impl LegTally {
    /// Adds step `s` (on this leg, after the steps added before it).
    #[inline]
    pub fn add(&mut self, drive: &RouteDrive, s: &Step) {
        // Deviation against the corridor at the progress point (the corridor profile, linear
        // between the plan's points).
        self.max_m = self.max_m.max(s.deviation_m);
        self.sum_sq_m2 += s.deviation_m * s.deviation_m;
        self.n += 1;
        self.end_m = s.deviation_m;
        let corridor_m = drive.speeds.view().corridor_at(&drive.plan, s.progress_m, &mut self.corridor_cursor);
        let share = s.deviation_m / corridor_m;
        if share > self.worst_share {
            (self.worst_share, self.worst_m, self.worst_corridor_m, self.worst_at_m) =
                (share, s.deviation_m, corridor_m, s.progress_m);
        }
        // Effort and traction.
        let dt = drive.limits.dt_s;
        let (e, span) = (&mut self.effort, &mut self.span);
        let f = &s.effort;
        e.energy_j += f.drawn_power_w * dt;
        let thrust = f.left_thrust_n.abs().max(f.right_thrust_n.abs());
        if thrust > e.peak_thrust_n {
            e.peak_thrust_n = thrust;
            e.peak_thrust_at_m = s.progress_m;
            let ground = drive.ground_in(s.progress_m, span);
            let (left, right) = side_thrust_limits_n(&drive.vehicle, &ground, Slope::new(f.grade_rad, f.cross_slope));
            e.peak_thrust_limit_n = if f.left_thrust_n.abs() >= f.right_thrust_n.abs() { left } else { right };
        }
        if f.drawn_power_w > e.peak_power_w {
            (e.peak_power_w, e.peak_power_at_m) = (f.drawn_power_w, s.progress_m);
        }
        if s.traction_limited() {
            e.limited_s += dt;
        }
        match s.limit {
            StepLimit::Turn => {
                e.turn_limited_s += dt;
                e.turn_limited_from_m.get_or_insert(s.progress_m);
            }
            StepLimit::Power => {
                e.power_limited_s += dt;
                e.power_limited_from_m.get_or_insert(s.progress_m);
            }
            _ => {}
        }
        // Lateral acceleration as a share of its caution threshold on the ground there.
        let lateral = (s.twist.vx_mps * s.twist.omega_radps).abs();
        if lateral > 0.0 {
            let share = lateral / lateral_accel_caution_mps2(&drive.ground_in(s.progress_m, span));
            if share > e.peak_lateral_share {
                (e.peak_lateral_share, e.peak_lateral_mps2, e.peak_lateral_at_m) = (share, lateral, s.progress_m);
            }
        }
    }

    /// The deviation statistics of the steps added.
    fn deviation(&self, dt_s: f64) -> Deviation {
        Deviation {
            max_m: self.max_m,
            rms_m: if self.n > 0 { (self.sum_sq_m2 / self.n as f64).sqrt() } else { 0.0 },
            end_m: self.end_m,
            time_s: self.n as f64 * dt_s,
            worst_share: self.worst_share,
            worst_m: self.worst_m,
            worst_corridor_m: self.worst_corridor_m,
            worst_at_m: self.worst_at_m,
        }
    }
}

/// What the assessment reads from a rollout: the tally of every leg, how it ended, the time of
/// its last step and the number of steps. Built from a kept trace ([`TraceSummary::of_trace`])
/// or step by step as the simulation runs ([`TraceSummary::add`], then [`TraceSummary::end`]).
#[derive(Debug, Clone)]
pub struct TraceSummary {
    legs: Vec<LegTally>,
    outcome: Outcome,
    end_t_s: f64,
    steps: u64,
}

impl TraceSummary {
    /// An empty summary for the legs of `drive`.
    pub fn new(drive: &RouteDrive) -> TraceSummary {
        TraceSummary {
            legs: vec![LegTally::default(); drive.legs.len()],
            outcome: Outcome::Reached,
            end_t_s: 0.0,
            steps: 0,
        }
    }

    /// Adds the next step of the rollout.
    #[inline]
    pub fn add(&mut self, drive: &RouteDrive, s: &Step) {
        if let Some(t) = self.legs.get_mut(s.leg) {
            t.add(drive, s);
        }
        self.end_t_s = s.t_s;
        self.steps += 1;
    }

    /// Records how the rollout ended.
    pub fn end(&mut self, outcome: Outcome) {
        self.outcome = outcome;
    }

    /// The summary of a kept trace.
    pub fn of_trace(drive: &RouteDrive, trace: &Trace) -> TraceSummary {
        let mut sum = TraceSummary::new(drive);
        for s in &trace.steps {
            sum.add(drive, s);
        }
        sum.end(trace.outcome);
        sum
    }

    /// Control steps in the rollout.
    pub fn steps(&self) -> u64 {
        self.steps
    }
}

/// The speed-independent plan facts of every leg of a drive.
pub fn leg_plans(drive: &RouteDrive) -> Vec<LegPlan> {
    (0..drive.legs.len()).map(|i| LegPlan::new(drive, i)).collect()
}

/// Assesses every leg of a simulated route, and the route's energy against the battery. The
/// margins' `max_passing_speed_mps` is left `None` (`crate::margin` fills it in).
pub fn assess_route(route: &Route, drive: &RouteDrive, trace: &Trace, battery_wh: Option<f64>) -> RouteReport {
    assess_route_with(route, drive, trace, battery_wh, &leg_plans(drive))
}

/// [`assess_route`] with the legs' plan facts already read.
pub fn assess_route_with(
    route: &Route,
    drive: &RouteDrive,
    trace: &Trace,
    battery_wh: Option<f64>,
    plans: &[LegPlan],
) -> RouteReport {
    assess_summary(route, drive, &TraceSummary::of_trace(drive, trace), battery_wh, plans)
}

/// [`assess_route_with`] from the summary of the rollout (the trace need not be kept).
pub fn assess_summary(
    route: &Route,
    drive: &RouteDrive,
    trace: &TraceSummary,
    battery_wh: Option<f64>,
    plans: &[LegPlan],
) -> RouteReport {
    let legs: Vec<LegReport> =
        (0..drive.legs.len()).map(|i| assess_leg(route, drive, trace, i, &plans[i], drive.legs[i].speed_mps)).collect();
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
        time_s: trace.end_t_s,
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

/// Effort and traction figures of one leg's steps.
#[derive(Debug, Clone, Copy, Default)]
struct LegEffort {
    energy_j: f64,
    /// Largest |thrust| of either side (acceleration included) and where, with the thrust
    /// limit at that step's grade.
    peak_thrust_n: f64,
    peak_thrust_at_m: f64,
    peak_thrust_limit_n: f64,
    peak_power_w: f64,
    peak_power_at_m: f64,
    /// Time bound by traction or a rating, and time widened by traction in a turn (and where
    /// that first happened).
    limited_s: f64,
    turn_limited_s: f64,
    turn_limited_from_m: Option<f64>,
    /// Time the drive was slowed by its power rating, and where that first happened.
    power_limited_s: f64,
    power_limited_from_m: Option<f64>,
    /// Largest lateral acceleration |vx omega| against its caution threshold (as a share of
    /// it), the acceleration and where.
    peak_lateral_share: f64,
    peak_lateral_mps2: f64,
    peak_lateral_at_m: f64,
}

/// Assesses leg `i` as if planned at `speed_mps` (the drive's own speed for the report; other
/// speeds for the margins, whose simulation `trace` was driven at that speed).
pub(crate) fn assess_leg(
    route: &Route,
    drive: &RouteDrive,
    trace: &TraceSummary,
    i: usize,
    plan: &LegPlan,
    speed_mps: f64,
) -> LegReport {
    let ld = &drive.legs[i];
    let never_driven = LegTally::default();
    let tally = trace.legs.get(i).unwrap_or(&never_driven);
    let effort = tally.effort;
    let (start_m, end_m) = drive.plan.leg_bounds_m(i);
    let turns = check_turns(drive, i, plan, speed_mps);
    let achievable = turns.achievable;
    let dev = tally.deviation(drive.limits.dt_s);
    let (max_dev, rms_dev, end_dev, time_s) = (dev.max_m, dev.rms_m, dev.end_m, dev.time_s);
    let mut failing_turns = turns.failing.clone();
    if let Some(origin) = &route.origin {
        for t in &mut failing_turns {
            let (lon, lat, _) = origin.to_geodetic(t.x_m, t.y_m, 0.0);
            (t.lon_deg, t.lat_deg) = (Some(lon), Some(lat));
        }
    }
    let required = plan.tightest_per_m;
    let mut leg = LegReport {
        index: i + 1,
        name: route.legs.get(i).and_then(|l| l.name.clone()),
        terrain: ld.terrain.clone(),
        length_m: end_m - start_m,
        speed_mps,
        corridor_m: ld.corridor_m,
        min_planned_radius_m: (required > 1e-9).then(|| 1.0 / required),
        required_curvature_per_m: required,
        tightest_turn_at_m: plan.tightest_at_m,
        achievable_curvature_per_m: finite(achievable.curvature_per_m()),
        kinematic_curvature_per_m: finite(achievable.kinematic_per_m),
        traction_curvature_per_m: achievable.traction_per_m,
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
        max_uphill_grade_pct: 100.0 * plan.max_uphill_grade_rad.tan(),
        max_downhill_grade_pct: 100.0 * plan.max_downhill_grade_rad.tan(),
        max_cross_slope_pct: route.legs.get(i).and_then(crate::site::max_cross_slope_pct),
        traction_coefficient: ld.ground.traction_coefficient,
        traction_coefficient_needed: plan.traction_needed,
        max_passing_speed_mps: None,
        max_passing_speed_searched: false,
        traction_limited_s: effort.limited_s,
        failing_turns,
        drift_cep95_m: None,
        verdict: Verdict::Pass,
        reasons: Vec::new(),
        reason_verdicts: Vec::new(),
        reason_spots: Vec::new(),
    };
    judge_turns(&mut leg, &turns, drive);
    let corridor_varies = route.legs.get(i).is_some_and(|l| l.corridors_m.is_some());
    judge_motion(&mut leg, drive, trace, i, &dev, corridor_varies);
    slopes::judge_slopes(&mut leg, plan, drive);
    judge_effort(&mut leg, &effort, plan, drive);
    leg
}

/// Most failing turns spelled out in the reasons of one leg; the JSON lists them all.
pub const MAX_TURN_REASONS: usize = 10;

/// Adds a verdict and its reason, what it is about and where (metres along the route); every
/// reason goes through here so that `reason_verdicts` and `reason_spots` stay in step with
/// `reasons`.
fn add_at(leg: &mut LegReport, v: Verdict, why: String, about: ReasonAbout, at_m: Option<f64>) {
    leg.verdict = leg.verdict.max(v);
    leg.reasons.push(why);
    leg.reason_verdicts.push(v);
    leg.reason_spots.push(ReasonSpot { about, at_m: at_m.filter(|x| x.is_finite()) });
}

/// The turn rules (docs/method.md, Verdicts): a turn the vehicle cannot drive at the speed planned
/// there and the grade where it is fails the leg, each such turn named; a turn above 80 % of what it
/// can drive earns a caution.
fn judge_turns(leg: &mut LegReport, turns: &TurnCheck, drive: &RouteDrive) {
    let scale_m = drive.curvature_scale_m;
    let (speed, terrain) = (turns.worst_speed_mps, leg.terrain.clone());
    let n = turns.failing.len();
    for t in turns.failing.iter().take(MAX_TURN_REASONS) {
        add_at(leg, Verdict::Fail, t.reason(&terrain, scale_m), ReasonAbout::Turn, Some(t.at_m));
    }
    if n > MAX_TURN_REASONS {
        let more = n - MAX_TURN_REASONS;
        let why = format!("and {more} more failing turns (all are listed in the JSON report's failing_turns)");
        add_at(leg, Verdict::Fail, why, ReasonAbout::Turn, None);
    }
    let ach = turns.achievable.curvature_per_m();
    if n == 0 && turns.worst_ratio > CAUTION_CURVATURE_SHARE {
        // Reasons never print "inf m": a caution needs a finite ratio, so both radii are
        // finite here, but the words do not rely on it.
        let radius = |k: f64| {
            if k > 0.0 && (1.0 / k).is_finite() {
                format!("{:.1} m", 1.0 / k)
            } else {
                "none (it cannot turn at all)".to_string()
            }
        };
        let why = format!(
            "turn radius {} ({:.0} m along the route) uses {:.0} % of what {terrain} allows at {speed:.1} m/s (tightest {})",
            radius(turns.worst_per_m),
            turns.worst_at_m,
            100.0 * turns.worst_ratio,
            radius(ach)
        );
        add_at(leg, Verdict::Caution, why, ReasonAbout::Turn, Some(turns.worst_at_m));
    }
}

/// The motion rules (docs/method.md, Verdicts): deviation against the corridor where it happens,
/// planned speed above the top side speed, and a simulation that stalled, timed out or ran out of
/// budget.
fn judge_motion(
    leg: &mut LegReport,
    drive: &RouteDrive,
    trace: &TraceSummary,
    i: usize,
    dev: &Deviation,
    varies: bool,
) {
    // With a corridor profile the place and the corridor there are named.
    let (at, there) =
        if varies { (format!(" ({:.0} m along the route)", dev.worst_at_m), " there") } else { (String::new(), "") };
    if dev.worst_share > 1.0 {
        let why = format!(
            "predicted deviation {:.2} m{at} leaves the {:.2} m corridor{there}",
            dev.worst_m, dev.worst_corridor_m
        );
        add_at(leg, Verdict::Fail, why, ReasonAbout::Deviation, Some(dev.worst_at_m));
    } else if dev.worst_share > CAUTION_CORRIDOR_SHARE {
        let why = format!(
            "predicted deviation {:.2} m{at} is over half the {:.2} m corridor{there}",
            dev.worst_m, dev.worst_corridor_m
        );
        add_at(leg, Verdict::Caution, why, ReasonAbout::Deviation, Some(dev.worst_at_m));
    }
    if leg.speed_mps > drive.limits.max_side_speed_mps {
        let why = format!(
            "planned speed {:.1} m/s is above the top side speed {:.1} m/s; the prediction drives slower",
            leg.speed_mps, drive.limits.max_side_speed_mps
        );
        add_at(leg, Verdict::Caution, why, ReasonAbout::Speed, None);
    }
    let (start_m, end_m) = drive.plan.leg_bounds_m(i);
    let here = |p: f64| p < end_m && p >= start_m;
    match trace.outcome {
        Outcome::Reached => {}
        Outcome::StepBudget { max_steps, progress_m } => {
            if progress_m < end_m {
                let why = format!("the simulation stopped at its budget of {max_steps} control steps, {progress_m:.0} m along the route");
                add_at(leg, Verdict::Fail, why, ReasonAbout::Stop, here(progress_m).then_some(progress_m));
            }
        }
        Outcome::TimedOut { limit_s, progress_m } => {
            if here(progress_m) {
                let why = format!("the vehicle did not get past {progress_m:.0} m along the route within {limit_s:.0} s (stalled or circling)");
                add_at(leg, Verdict::Fail, why, ReasonAbout::Stop, Some(progress_m));
            } else if progress_m < start_m {
                let why = "the vehicle never reached this leg (stalled or circling earlier)".to_string();
                add_at(leg, Verdict::Fail, why, ReasonAbout::Stop, None);
            }
        }
        Outcome::Stalled { progress_m, grade_rad } => {
            if here(progress_m) {
                let why = format!(
                    "cannot climb: the simulated vehicle stalls {progress_m:.0} m along the route on the {:.0} % grade; the prediction ends there",
                    100.0 * grade_rad.tan()
                );
                add_at(leg, Verdict::Fail, why, ReasonAbout::Climb, Some(progress_m));
            } else if progress_m < start_m {
                let why = "the vehicle never reached this leg (it stalled on a climb earlier)".to_string();
                add_at(leg, Verdict::Fail, why, ReasonAbout::Stop, None);
            }
        }
    }
}

/// The effort rules (docs/method.md, Verdicts): speed changes beyond traction, the power rating
/// or the lateral-acceleration threshold earn cautions, and so does a simulated turn that
/// traction widened where the plan's turns all pass.
fn judge_effort(leg: &mut LegReport, e: &LegEffort, plan: &LegPlan, drive: &RouteDrive) {
    let veh = &drive.vehicle;
    if e.peak_thrust_n > e.peak_thrust_limit_n + 0.5 {
        let gives = if e.peak_thrust_limit_n < veh.max_side_thrust_n {
            format!("traction gives {:.0} N there", e.peak_thrust_limit_n)
        } else {
            format!("the drive is rated {:.0} N", veh.max_side_thrust_n)
        };
        let why = format!(
            "changing speed needs up to {:.0} N per side ({:.0} m along the route; driving or braking); {gives}, so the vehicle will speed up or slow down more gently than planned",
            e.peak_thrust_n, e.peak_thrust_at_m
        );
        add_at(leg, Verdict::Caution, why, ReasonAbout::SpeedChange, Some(e.peak_thrust_at_m));
    }
    if e.power_limited_s > 0.0 {
        let why = format!(
            "the {:.0} W power rating slows the vehicle for {:.0} s on this leg (a climb or turn at this speed needs more)",
            veh.max_power_w, e.power_limited_s
        );
        add_at(leg, Verdict::Caution, why, ReasonAbout::Power, e.power_limited_from_m);
    } else if e.peak_power_w > veh.max_power_w {
        let why = format!(
            "accelerating draws up to {:.0} W, above the {:.0} W rating; acceleration will be slower",
            e.peak_power_w, veh.max_power_w
        );
        add_at(leg, Verdict::Caution, why, ReasonAbout::Power, Some(e.peak_power_at_m));
    }
    if leg.failing_turns.is_empty() && e.turn_limited_s > 0.0 {
        let why = format!(
            "traction widens the simulated turn for {:.1} s from {:.0} m along the route: the tracks slip at their limit there",
            e.turn_limited_s,
            e.turn_limited_from_m.unwrap_or(plan.tightest_at_m)
        );
        let at_m = Some(e.turn_limited_from_m.unwrap_or(plan.tightest_at_m));
        add_at(leg, Verdict::Caution, why, ReasonAbout::TurnTraction, at_m);
    }
    if e.peak_lateral_share > 1.0 {
        let mu = drive.ground_at(e.peak_lateral_at_m).traction_coefficient;
        let why = format!(
            "lateral acceleration reaches {:.2} m/s^2 ({:.0} m along the route), above {LATERAL_ACCEL_CAUTION_SHARE} mu g = {:.2} m/s^2 with mu {mu:.2} there: risk of sliding sideways",
            e.peak_lateral_mps2,
            e.peak_lateral_at_m,
            LATERAL_ACCEL_CAUTION_SHARE * mu * STANDARD_GRAVITY_MPS2
        );
        add_at(leg, Verdict::Caution, why, ReasonAbout::Lateral, Some(e.peak_lateral_at_m));
    }
}

#[cfg(test)]
mod tests;

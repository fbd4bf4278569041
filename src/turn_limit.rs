//! How tight the vehicle can turn (docs/method.md, Achievable curvature): the one place that
//! computes the kinematic limit (what the controller and the terrain's slip let it drive) and the
//! traction limit (what the tracks can push, after Wong 2008), for the verdicts (`assess`), the
//! repairs (`relax`), the margins and, step by step, the simulation (`rollout`).
//!
//! Traction limit, quasi-static (Wong, "Theory of Ground Vehicles", 4th ed. 2008, ch. 7, steering
//! of tracked vehicles): a steady turn on a slope loads each side with rolling resistance
//! f_r N_side (N_side its own normal load: N / 2 each without a cross slope, more on the downhill
//! side of a cross slope), the weight component W sin(grade) / 2 and the turning-resistance term
//! M_r / B, pushing the outer side forward and the inner side back. Each side's thrust, driving
//! or braking, must stay within traction mu N_side and the drive's rating, and the drawn power
//! within the power rating. On a cross slope the limit depends on the direction of the turn
//! (which side is outer). Yaw inertia and centrifugal load transfer are neglected (low speeds), so
//! the thrust part of the limit does not depend on speed; the power part does.
//!
//! Sideways, the ground must hold the weight's component across the slope: the vehicle slides
//! sideways when c cos(grade) (tan(phi) on a pure side slope of angle phi) exceeds the lateral
//! grip, taken as the traction coefficient mu (Wong 2008, vehicle on a side slope: it slides
//! when tan(phi) > mu), and tips when it exceeds B / (2 h) (the static stability factor, common
//! practice). Units: metres, seconds, newtons, watts; curvature 1/m.

use serde::Serialize;

use crate::effort::{
    drawn_power_w, side_thrust_limits_n, twist_curvature, EffortVehicle, Ground, SideForces, Slope,
    STANDARD_GRAVITY_MPS2,
};
use crate::follow::{saturate_sides, FollowerLimits};
use crate::kinematics::{Model, MotionModel, Twist};
use crate::vehicle::RunningGear;

/// What limits the curvature the vehicle can drive on a leg.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize)]
#[serde(rename_all = "kebab-case")]
pub enum CurvatureLimit {
    /// The yaw-rate clamp, side-speed saturation and the terrain's slip (kinematic model).
    Kinematic,
    /// Thrust on the tracks against traction, the thrust rating or the power rating.
    Traction,
}

/// Achievable curvature at one place and speed, and what binds it.
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

/// The achievable curvature at `speed_mps` on `slope`: the kinematic limit and the traction limit.
pub fn achievable(
    limits: &FollowerLimits,
    controller: &Model,
    actual: &Model,
    veh: &EffortVehicle,
    ground: &Ground,
    speed_mps: f64,
    slope: Slope,
) -> Achievable {
    Achievable {
        kinematic_per_m: kinematic_curvature_limit(limits, controller, actual, speed_mps),
        traction_per_m: Some(traction_curvature_limit(veh, ground, speed_mps, slope)),
    }
}

/// Largest turning term M_r / B, N, that keeps both sides within their thrust limit on `slope`
/// in a turn of sign `turn` (+1 left, -1 right; the outer side is the right one in a left turn)
/// with the outer side moving in direction `outer_dir` and the inner side in `inner_dir` (+1
/// forward, -1 back, 0 at rest); `None` when even going straight (M_r = 0) needs more thrust than
/// a side can give: the vehicle cannot hold its way on that slope. Each side's limit and rolling
/// resistance follow its own normal load. Acceleration is left out (the steady turn).
#[inline]
fn turning_budget_n(
    veh: &EffortVehicle,
    ground: &Ground,
    slope: Slope,
    turn: f64,
    outer_dir: f64,
    inner_dir: f64,
) -> Option<f64> {
    let straight = SideForces::new(veh, ground, 0.0, 0.0, slope);
    turning_budget_from(veh, ground, slope, &straight, turn, outer_dir, inner_dir)
}

/// [`turning_budget_n`] given the side forces of going straight on `slope` (curvature and
/// acceleration 0).
#[inline]
fn turning_budget_from(
    veh: &EffortVehicle,
    ground: &Ground,
    slope: Slope,
    straight: &SideForces,
    turn: f64,
    outer_dir: f64,
    inner_dir: f64,
) -> Option<f64> {
    let (limit_left, limit_right) = side_thrust_limits_n(veh, ground, slope);
    let (b_o, b_i) = straight.outer_inner_n(turn, outer_dir, inner_dir);
    let (limit_o, limit_i) = if turn >= 0.0 { (limit_right, limit_left) } else { (limit_left, limit_right) };
    // Outer thrust b_o + D and inner b_i - D must both lie within their limits, D >= 0.
    if b_o.abs() > limit_o || b_i.abs() > limit_i {
        return None;
    }
    Some((limit_o - b_o).min(limit_i + b_i))
}

/// Curvature whose turning term M_r / B equals `budget_n` (the inverse of Wong's lateral
/// resistance relation), capped at a pivot turn (2 / B).
#[inline]
fn curvature_for_turning_term(veh: &EffortVehicle, ground: &Ground, slope: Slope, budget_n: f64) -> f64 {
    let b = veh.track_width_m;
    let n = slope.normal_load_n(veh.weight_n());
    let per_mu_t = match veh.running_gear {
        RunningGear::Tracks => n * veh.contact_length_m / (4.0 * b),
        RunningGear::Wheels => n * veh.contact_length_m / (2.0 * b),
    };
    let mu_max = ground.lateral_resistance_max;
    if per_mu_t <= 0.0 || budget_n >= mu_max * per_mu_t {
        return 2.0 / b;
    }
    // mu_t = mu_max k B / (0.925 k B + 0.15)  =>  k = 0.15 mu_t / (B (mu_max - 0.925 mu_t)).
    let mu_t = (budget_n / per_mu_t).max(0.0);
    0.15 * mu_t / (b * (mu_max - 0.925 * mu_t))
}

/// Drawn power of a steady turn of curvature `k` (>= 0) and sign `turn` at `speed_mps` driven
/// forward, side speeds from the turn's geometry v (1 +- B k / 2).
fn steady_turn_power_w(veh: &EffortVehicle, ground: &Ground, speed_mps: f64, k: f64, slope: Slope, turn: f64) -> f64 {
    let f = SideForces::new(veh, ground, k, 0.0, slope);
    let half = 0.5 * veh.track_width_m * k;
    let (v_o, v_i) = (speed_mps * (1.0 + half), speed_mps * (1.0 - half));
    let (f_o, f_i) = f.outer_inner_n(turn, 1.0, 1.0);
    drawn_power_w(veh, f_i * v_i, f_o * v_o)
}

/// The traction/thrust/power limit on curvature at `speed_mps` on `slope` (docs/method.md,
/// Achievable curvature) for the weaker of a left and a right turn (they differ on a cross
/// slope): see [`traction_curvature_limit_toward`].
pub fn traction_curvature_limit(veh: &EffortVehicle, ground: &Ground, speed_mps: f64, slope: Slope) -> f64 {
    let left = traction_curvature_limit_toward(veh, ground, speed_mps, slope, 1.0);
    if slope.cross_slope == 0.0 {
        return left;
    }
    left.min(traction_curvature_limit_toward(veh, ground, speed_mps, slope, -1.0))
}

/// The traction/thrust/power limit on curvature at `speed_mps` on `slope` for a turn of sign
/// `turn` (+1 left, -1 right): the largest curvature up to a pivot turn (2 / B) whose steady
/// turn keeps both sides' thrust within traction on their own normal loads and the rating, and
/// the drawn power within the rating. The thrust part is in closed form; where power binds the
/// curvature is found by bisection (drawn power grows with curvature). 0 when the vehicle cannot
/// even drive straight at this speed on this slope.
pub fn traction_curvature_limit_toward(
    veh: &EffortVehicle,
    ground: &Ground,
    speed_mps: f64,
    slope: Slope,
    turn: f64,
) -> f64 {
    let turn = if turn < 0.0 { -1.0 } else { 1.0 };
    let Some(budget_n) = turning_budget_n(veh, ground, slope, turn, 1.0, 1.0) else { return 0.0 };
    let k_thrust = curvature_for_turning_term(veh, ground, slope, budget_n);
    let power_ok = |k: f64| steady_turn_power_w(veh, ground, speed_mps, k, slope, turn) <= veh.max_power_w;
    if power_ok(k_thrust) {
        return k_thrust;
    }
    if !power_ok(0.0) {
        return 0.0;
    }
    let (mut lo, mut hi) = (0.0, k_thrust);
    for _ in 0..60 {
        let mid = 0.5 * (lo + hi);
        if power_ok(mid) {
            lo = mid;
        } else {
            hi = mid;
        }
    }
    lo
}

/// The smallest traction coefficient with which a steady turn of signed curvature
/// `curvature_per_m` (positive left) on `slope` stays within traction: each side's thrust over
/// its own normal load, |F_side| / N_side, and the weight across the slope over the normal load,
/// |c| cos(grade), which the lateral grip (mu) must hold. Without a cross slope this is the
/// steerability condition of Wong 2008 with the grade term, |f_r + tan(grade)| + mu_t(R) l / (2 B)
/// for tracks (l / B for wheels). A side without load (past the tipping point) is left to the
/// tipping rule. Thrust and power ratings are separate limits; acceleration is left out.
pub fn traction_coefficient_needed(veh: &EffortVehicle, ground: &Ground, curvature_per_m: f64, slope: Slope) -> f64 {
    let f = SideForces::new(veh, ground, curvature_per_m, 0.0, slope);
    let (f_o, f_i) = f.outer_inner_n(if curvature_per_m < 0.0 { -1.0 } else { 1.0 }, 1.0, 1.0);
    let (n_left, n_right) = veh.side_loads_n(slope);
    let (n_o, n_i) = if curvature_per_m < 0.0 { (n_left, n_right) } else { (n_right, n_left) };
    let ratio = |thrust: f64, load: f64| if load > 0.0 { thrust.abs() / load } else { 0.0 };
    ratio(f_o, n_o).max(ratio(f_i, n_i)).max(slope.side_ratio().abs())
}

/// Share of a limit above which a cross slope earns a caution (as for turns, 80 %).
pub const CROSS_SLOPE_CAUTION_SHARE: f64 = 0.8;

/// What limits how steep a cross slope the vehicle can stand on.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize)]
#[serde(rename_all = "kebab-case")]
pub enum SideLimit {
    /// The ground's lateral grip (the traction coefficient): beyond it the vehicle slides
    /// sideways.
    Grip,
    /// The static stability factor B / (2 h): beyond it the uphill side lifts and the vehicle
    /// tips over.
    Tipping,
}

/// The steepest cross slope ratio (weight across the slope over normal load, c cos(grade);
/// tan(phi) on a pure side slope) the vehicle can stand on, and what sets it: the lateral grip
/// mu (sliding sideways when tan(phi) > mu, Wong 2008, vehicle on a side slope) or the static
/// stability factor B / (2 h) (tipping, common practice for rollover screening; only with a
/// centre-of-gravity height), whichever is smaller.
pub fn cross_slope_limit(veh: &EffortVehicle, ground: &Ground) -> (f64, SideLimit) {
    let grip = ground.traction_coefficient;
    match veh.tipping_ratio() {
        Some(tip) if tip < grip => (tip, SideLimit::Tipping),
        _ => (grip, SideLimit::Grip),
    }
}

/// The steerability condition of Wong 2008 in closed form for a steady turn on `slope`:
/// |f_r + tan(grade)| + mu_t l / (2 B) <= mu (tracks; l / B for wheels) with
/// mu_t = mu_max / (0.925 + 0.15 R / B) gives the smallest radius
/// R = (B / 0.15) (mu_max l / (2 B (mu - |f_r + tan(grade)|)) - 0.925), at least B/2.
/// `None` when the slope alone takes all the traction. Traction only: the thrust and power
/// ratings are not part of it.
pub fn steerability_min_radius_m(veh: &EffortVehicle, ground: &Ground, slope: Slope) -> Option<f64> {
    let budget = ground.traction_coefficient - (ground.rolling_resistance + slope.grade_rad.tan()).abs();
    if budget <= 0.0 {
        return None;
    }
    let (b, l) = (veh.track_width_m, veh.contact_length_m);
    let factor = match veh.running_gear {
        RunningGear::Tracks => 2.0,
        RunningGear::Wheels => 1.0,
    };
    let r = (b / 0.15) * (ground.lateral_resistance_max * l / (factor * b * budget) - 0.925);
    Some(r.max(0.5 * b))
}

/// Lateral acceleration above which a turn earns a caution, as a share of mu g: 0.3 (common
/// practice for skid-steered vehicles on loose ground, no source: it keeps sideways sliding well
/// short of the traction limit).
pub const LATERAL_ACCEL_CAUTION_SHARE: f64 = 0.3;

/// The lateral acceleration caution threshold on `ground`, m/s^2: 0.3 mu g.
pub fn lateral_accel_caution_mps2(ground: &Ground) -> f64 {
    LATERAL_ACCEL_CAUTION_SHARE * ground.traction_coefficient * STANDARD_GRAVITY_MPS2
}

/// The highest speed at which a steady turn of curvature `curvature_per_m` on `slope` stays
/// within the traction limit (docs/method.md, Following: slow-down in turns). In this
/// quasi-static model only the power part of the limit depends on speed (thrust does not:
/// centrifugal load transfer is neglected), so: infinite when the turn is within traction and
/// the rating at any speed, the speed at which its drawn power reaches the rating when power
/// binds (drawn power is proportional to speed at given thrusts), and infinite too when
/// thrust alone forbids the turn (slowing down would not help; the simulation widens it).
pub fn turn_speed_limit_mps(veh: &EffortVehicle, ground: &Ground, curvature_per_m: f64, slope: Slope) -> f64 {
    let k = curvature_per_m.abs().min(2.0 / veh.track_width_m);
    let turn = if curvature_per_m < 0.0 { -1.0 } else { 1.0 };
    let Some(budget_n) = turning_budget_n(veh, ground, slope, turn, 1.0, 1.0) else { return f64::INFINITY };
    if SideForces::new(veh, ground, k, 0.0, slope).turning_n > budget_n {
        return f64::INFINITY;
    }
    let per_mps = steady_turn_power_w(veh, ground, 1.0, k, slope, turn);
    if per_mps <= 0.0 {
        f64::INFINITY
    } else {
        veh.max_power_w / per_mps
    }
}

/// How traction bounded one control step of the simulation.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default)]
pub enum StepLimit {
    /// Nothing bound: the motion is the terrain model's.
    #[default]
    Free,
    /// The turn was widened to the traction/thrust limit (the tracks slip more).
    Turn,
    /// The turn was widened, or the vehicle slowed, to keep the drawn power within the rating.
    Power,
    /// Uphill: even holding still needs more thrust than a side can give; the vehicle stalls.
    Stall,
    /// Downhill: holding back needs more braking than a side can give; the vehicle slides.
    Slide,
    /// Across a slope steeper than the lateral grip or the tipping limit: the vehicle would slide
    /// sideways (or tip); the simulation marks the step and does not predict the slide.
    Sideways,
}

impl StepLimit {
    /// True when traction, the thrust rating or the power rating changed the motion.
    pub fn is_limited(self) -> bool {
        self != StepLimit::Free
    }
}

/// Applies traction to one control step of the simulation (docs/method.md, Following, traction):
/// `twist` is what the terrain model gives for the commanded side speeds `left_mps`,
/// `right_mps`; the steady turn at its curvature, the current speed and `slope` must keep each
/// side's thrust within traction and the rating (each side's rolling resistance opposing its own
/// motion) and the drawn power within the rating. Otherwise:
/// - thrust: the yaw rate is reduced to the largest curvature traction allows at this forward
///   speed (the tracks keep their speeds and slip more; a lateral velocity scales with the yaw
///   rate);
/// - power: the curvature is reduced further by bisection, and if even a straight needs more
///   power, the side speeds and the twist are scaled down together (the drive slows);
/// - uphill, when even holding still needs more thrust than traction gives: [`StepLimit::Stall`]
///   (the caller stops the vehicle); downhill, when holding back needs more braking than traction
///   gives: [`StepLimit::Slide`], the vehicle loses its steering and runs straight on;
/// - across a slope beyond the lateral grip or the tipping limit ([`cross_slope_limit`]):
///   [`StepLimit::Sideways`]; the motion is left as it is (the slide is not predicted; the
///   verdict fails the leg on the plan's cross slope).
///
/// Each side's traction is taken on its own normal load, so on a cross slope a turn is limited by
/// the lighter, uphill side's traction too, and differently for left and right turns.
///
/// Acceleration is left out of the limit, as in the verdict's steady turns: the drive changes
/// speed more gently instead (a speed-change caution in the report).
pub fn limit_step(
    veh: &EffortVehicle,
    ground: &Ground,
    slope: Slope,
    twist: &mut Twist,
    left_mps: &mut f64,
    right_mps: &mut f64,
) -> StepLimit {
    limit_step_keeping_forces(veh, ground, slope, twist, left_mps, right_mps).0
}

/// [`limit_step`], also returning the side forces of the steady turn (no acceleration) at the
/// twist's curvature when traction and the ratings left the twist as it was
/// ([`StepLimit::Free`]), so the step's effort need not work them out again
/// ([`crate::effort::effort_from_forces`]).
#[inline]
pub fn limit_step_keeping_forces(
    veh: &EffortVehicle,
    ground: &Ground,
    slope: Slope,
    twist: &mut Twist,
    left_mps: &mut f64,
    right_mps: &mut f64,
) -> (StepLimit, Option<SideForces>) {
    if slope.cross_slope != 0.0 && slope.side_ratio().abs() > cross_slope_limit(veh, ground).0 {
        return (StepLimit::Sideways, None);
    }
    let (dl, dr) = (crate::effort::motion_direction(*left_mps), crate::effort::motion_direction(*right_mps));
    // Turning left, the right side is outer.
    let turn = if twist.omega_radps >= 0.0 { 1.0 } else { -1.0 };
    let (outer_dir, inner_dir) = if turn > 0.0 { (dr, dl) } else { (dl, dr) };
    let straight = SideForces::new(veh, ground, 0.0, 0.0, slope);
    let Some(budget_n) = turning_budget_from(veh, ground, slope, &straight, turn, outer_dir, inner_dir) else {
        if straight.grade_n > 0.0 {
            return (StepLimit::Stall, None);
        }
        scale_yaw(twist, 0.0);
        return (StepLimit::Slide, None);
    };
    let k = twist_curvature(twist.vx_mps, twist.omega_radps);
    let forces = straight.at_curvature(veh, ground, k);
    let mut limit = StepLimit::Free;
    if forces.turning_n > budget_n {
        let k_max = curvature_for_turning_term(veh, ground, slope, budget_n);
        scale_yaw(twist, k_max * twist.vx_mps.abs() / twist.omega_radps.abs());
        limit = StepLimit::Turn;
    }
    let power = |t: &Twist| {
        let e = crate::effort::effort_step(veh, ground, t.vx_mps, t.omega_radps, *left_mps, *right_mps, 0.0, slope);
        e.drawn_power_w
    };
    if limit == StepLimit::Free {
        // The twist is as it came: the forces above are the ones its effort takes.
        let e = crate::effort::effort_from_forces(veh, &forces, twist.omega_radps, *left_mps, *right_mps, slope);
        if e.drawn_power_w <= veh.max_power_w {
            return (limit, Some(forces));
        }
    } else if power(twist) <= veh.max_power_w {
        return (limit, None);
    }
    let full = *twist;
    let mut straight = full;
    scale_yaw(&mut straight, 0.0);
    let p_straight = power(&straight);
    if p_straight > veh.max_power_w {
        // Drawn power is proportional to the side speeds at given forces.
        let f = veh.max_power_w / p_straight;
        *twist = Twist { vx_mps: straight.vx_mps * f, vy_mps: straight.vy_mps * f, omega_radps: 0.0 };
        *left_mps *= f;
        *right_mps *= f;
        return (StepLimit::Power, None);
    }
    let (mut lo, mut hi) = (0.0, 1.0);
    for _ in 0..40 {
        let mid = 0.5 * (lo + hi);
        let mut t = full;
        scale_yaw(&mut t, mid);
        if power(&t) <= veh.max_power_w {
            lo = mid;
        } else {
            hi = mid;
        }
    }
    scale_yaw(twist, lo);
    (StepLimit::Power, None)
}

/// Scales the yaw rate (and the lateral velocity that comes with it) by `f`.
#[inline]
fn scale_yaw(twist: &mut Twist, f: f64) {
    let f = if f.is_finite() { f.clamp(0.0, 1.0) } else { 0.0 };
    twist.omega_radps *= f;
    twist.vy_mps *= f;
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::effort::tests::wong_example;
    use crate::effort::{side_thrusts, turning_moment};
    use approx::assert_relative_eq;

    fn demo() -> (EffortVehicle, Ground) {
        let veh = EffortVehicle::from_profile(&crate::vehicle::Profile::demo());
        let deep = &crate::vehicle::Profile::demo().terrain["deep-snow"];
        (veh, Ground::from_terrain(deep))
    }

    #[test]
    fn forces_kept_by_a_free_step_give_the_effort_of_a_fresh_computation() {
        // Where traction and the ratings leave the twist alone, the forces handed on with the
        // step's acceleration must give effort_step's values to the bit; elsewhere none are
        // handed on. Gentle and tight turns, both directions, level and on a grade.
        let (veh, ground) = demo();
        let (mut free, mut bound) = (0, 0);
        for (vx, omega) in [(1.0, 0.0), (1.0, 0.05), (1.2, -0.1), (0.8, 0.6), (1.5, -0.9), (0.3, 0.4)] {
            for slope in [Slope::LEVEL, Slope::grade(0.05), Slope::new(-0.03, 0.02)] {
                let half = 0.5 * omega * veh.track_width_m;
                let (mut l, mut r) = (vx - half, vx + half);
                let mut twist = Twist { vx_mps: vx, vy_mps: 0.0, omega_radps: omega };
                let (limit, forces) = limit_step_keeping_forces(&veh, &ground, slope, &mut twist, &mut l, &mut r);
                assert_eq!(forces.is_some(), limit == StepLimit::Free, "{vx} {omega} {slope:?}");
                let Some(f) = forces else {
                    bound += 1;
                    continue;
                };
                free += 1;
                let accel = 0.37;
                let kept = f.with_acceleration(&veh, accel);
                assert_eq!(
                    crate::effort::effort_from_forces(&veh, &kept, twist.omega_radps, l, r, slope),
                    crate::effort::effort_step(&veh, &ground, twist.vx_mps, twist.omega_radps, l, r, accel, slope)
                );
            }
        }
        assert!(free > 0 && bound > 0, "free {free}, bound {bound}");
    }

    #[test]
    fn traction_limit_matches_the_steerability_closed_form_with_grade() {
        // Steerability condition of Wong 2008 (ch. 7), F_o <= mu N / 2, written per unit normal
        // load with the grade term: |f_r + tan g| + mu_t l / (2 B) <= mu, solved for R with
        // mu_t = mu_max / (0.925 + 0.15 R / B). Here the closed form is solved again in the test
        // itself, for W = 50 kN, l = 2 m, B = 1.6 m, mu_max = 0.6, f_r = 0.05 (power and rating
        // out of the way), against the limit the simulation and the verdicts use.
        let (veh, mut ground) = wong_example();
        for mu in [0.3, 0.45, 0.62] {
            for grade in [0.0_f64, 0.05, -0.05, 0.12, -0.2] {
                ground.traction_coefficient = mu;
                let budget = mu - (0.05 + grade.tan()).abs();
                let r_closed = (1.6 / 0.15) * (0.6 * 2.0 / (2.0 * 1.6 * budget) - 0.925);
                let r_closed = r_closed.max(0.8);
                let slope = Slope::grade(grade);
                assert_relative_eq!(
                    steerability_min_radius_m(&veh, &ground, slope).expect("drivable"),
                    r_closed,
                    max_relative = 1e-12
                );
                let k = traction_curvature_limit(&veh, &ground, 0.5, slope);
                assert_relative_eq!(1.0 / k, r_closed, max_relative = 1e-9);
                // At that radius the steady outer (or, downhill, inner) thrust is exactly mu N / 2.
                if r_closed > 0.8 {
                    let (f_o, f_i) = side_thrusts(&veh, &ground, k, 0.0, slope);
                    let n = veh.weight_n() * grade.cos();
                    assert_relative_eq!(f_o.abs().max(f_i.abs()), 0.5 * mu * n, max_relative = 1e-9);
                }
            }
        }
        ground.traction_coefficient = 0.04;
        assert_eq!(steerability_min_radius_m(&veh, &ground, Slope::LEVEL), None);
        assert_eq!(traction_curvature_limit(&veh, &ground, 0.5, Slope::LEVEL), 0.0);
        ground.traction_coefficient = 2.0;
        assert_relative_eq!(traction_curvature_limit(&veh, &ground, 0.5, Slope::LEVEL), 2.0 / 1.6);
    }

    #[test]
    fn deep_snow_needs_a_wider_turn_uphill() {
        // From the formulas above with the demo vehicle (m = 480 kg, B = 0.9 m, l = 1.1 m) on deep
        // snow (f_r = 0.15, mu = 0.25, mu_max = 0.3): on the level mu_t <= 2 B (mu - f_r) / l =
        // 0.163636, so 0.925 + R / 6 = 0.3 / 0.163636 and R = 5.45 m; at a 2.1 % climb
        // (tan g = 0.021) mu_t <= 2 B (0.1 - 0.021) / l = 0.129273 and R = 8.37 m.
        let (veh, ground) = demo();
        let level = 1.0 / traction_curvature_limit(&veh, &ground, 0.8, Slope::LEVEL);
        assert_relative_eq!(level, 6.0 * (0.3 / (1.8 * 0.1 / 1.1) - 0.925), max_relative = 1e-9);
        assert_relative_eq!(level, 5.45, epsilon = 0.005);
        let g = 0.021_f64.atan();
        let uphill = 1.0 / traction_curvature_limit(&veh, &ground, 0.8, Slope::grade(g));
        assert_relative_eq!(uphill, 6.0 * (0.3 / (1.8 * 0.079 / 1.1) - 0.925), max_relative = 1e-9);
        assert_relative_eq!(uphill, 8.37, epsilon = 0.01);
    }

    #[test]
    fn needed_traction_is_the_closed_form_and_matches_the_limit() {
        // f_r + mu_t(R) l / (2 B) for a steady turn of radius R on the level (Wong 2008).
        let (veh, ground) = demo();
        let r = 3.0;
        let mu_t = 0.3 / (0.925 + 0.15 * r / 0.9);
        let expected = 0.15 + mu_t * 1.1 / (2.0 * 0.9);
        assert_relative_eq!(
            traction_coefficient_needed(&veh, &ground, 1.0 / r, Slope::LEVEL),
            expected,
            max_relative = 1e-12
        );
        // A terrain giving exactly that coefficient turns exactly that tight (rating and power
        // far away).
        let mut exact = ground;
        exact.traction_coefficient = expected;
        let mut big = veh;
        big.max_side_thrust_n = 1e9;
        big.max_power_w = 1e12;
        assert_relative_eq!(traction_curvature_limit(&big, &exact, 0.8, Slope::LEVEL), 1.0 / r, max_relative = 1e-9);
        // Straight down a 50 % grade on packed snow: |f_r - 0.5|.
        let snow = Ground { rolling_resistance: 0.06, traction_coefficient: 0.3, lateral_resistance_max: 0.35 };
        let g = (-0.5_f64).atan();
        assert_relative_eq!(traction_coefficient_needed(&veh, &snow, 0.0, Slope::grade(g)), 0.44, max_relative = 1e-12);
        assert_relative_eq!(
            traction_coefficient_needed(&veh, &snow, 0.0, Slope::grade(-g)),
            0.56,
            max_relative = 1e-12
        );
    }

    #[test]
    fn a_steep_descent_on_packed_snow_cannot_be_held() {
        // 50 % descent (tan g = -0.5): holding needs W sin|g| / 2 - f_r W cos g / 2 per side of
        // braking; m = 480 kg, W = 4707.2 N: 1052.6 - 126.3 = 926 N against traction
        // mu W cos g / 2 = 631.5 N (mu = 0.3).
        let (veh, _) = demo();
        let snow = Ground { rolling_resistance: 0.06, traction_coefficient: 0.3, lateral_resistance_max: 0.35 };
        let g = (-0.5_f64).atan();
        let w = 480.0 * 9.80665;
        let hold = 0.5 * w * g.sin().abs() - 0.5 * 0.06 * w * g.cos();
        assert_relative_eq!(hold, 926.3, epsilon = 0.5);
        assert_eq!(traction_curvature_limit(&veh, &snow, 0.5, Slope::grade(g)), 0.0);
        let mut twist = Twist { vx_mps: 0.5, vy_mps: 0.0, omega_radps: 0.2 };
        let (mut l, mut r) = (0.4, 0.6);
        assert_eq!(limit_step(&veh, &snow, Slope::grade(g), &mut twist, &mut l, &mut r), StepLimit::Slide);
        assert_eq!(twist.omega_radps, 0.0);
        assert_eq!(limit_step(&veh, &snow, Slope::grade(-g), &mut twist, &mut l, &mut r), StepLimit::Stall);
    }

    #[test]
    fn a_step_tighter_than_traction_allows_is_widened_to_the_limit() {
        let (veh, ground) = demo();
        let k_lim = traction_curvature_limit(&veh, &ground, 0.8, Slope::LEVEL);
        // A 1 m radius turn at 0.8 m/s: far tighter than the 5.45 m traction radius.
        let mut twist = Twist { vx_mps: 0.8, vy_mps: 0.0, omega_radps: -0.8 };
        let (mut l, mut r) = (1.16, 0.44);
        assert_eq!(limit_step(&veh, &ground, Slope::LEVEL, &mut twist, &mut l, &mut r), StepLimit::Turn);
        assert_relative_eq!(twist.omega_radps / twist.vx_mps, -k_lim, max_relative = 1e-9);
        assert_eq!((l, r), (1.16, 0.44), "the tracks keep their speeds");
        // A gentle turn is left alone.
        let mut gentle = Twist { vx_mps: 0.8, vy_mps: 0.0, omega_radps: 0.05 };
        let before = gentle;
        assert_eq!(limit_step(&veh, &ground, Slope::LEVEL, &mut gentle, &mut l, &mut r), StepLimit::Free);
        assert_eq!(gentle, before);
    }

    #[test]
    fn power_limit_binds_at_speed() {
        // With ample traction but little power, a faster vehicle must turn wider.
        let (mut veh, mut ground) = wong_example();
        ground.traction_coefficient = 5.0;
        veh.max_power_w = 20_000.0;
        let slow = traction_curvature_limit(&veh, &ground, 0.5, Slope::LEVEL);
        let fast = traction_curvature_limit(&veh, &ground, 1.5, Slope::LEVEL);
        assert!(fast < slow, "{fast} vs {slow}");
        assert!(steady_turn_power_w(&veh, &ground, 1.5, fast, Slope::LEVEL, 1.0) <= 20_000.0 + 1e-6);
        // Straight up a climb too steep for the power at this speed: the drive slows.
        let mut twist = Twist { vx_mps: 3.0, vy_mps: 0.0, omega_radps: 0.0 };
        let (mut l, mut r) = (3.0, 3.0);
        let slope = Slope::grade(0.2);
        assert_eq!(limit_step(&veh, &ground, slope, &mut twist, &mut l, &mut r), StepLimit::Power);
        let e = crate::effort::effort_step(&veh, &ground, twist.vx_mps, 0.0, l, r, 0.0, slope);
        assert_relative_eq!(e.drawn_power_w, 20_000.0, max_relative = 1e-9);
        assert!(twist.vx_mps < 3.0 && (l - r).abs() < 1e-12);
    }

    #[test]
    fn the_turn_speed_limit_puts_the_drawn_power_at_the_rating() {
        let (mut veh, mut ground) = wong_example();
        ground.traction_coefficient = 5.0;
        veh.max_power_w = 20_000.0;
        let k = 0.4;
        let v = turn_speed_limit_mps(&veh, &ground, k, Slope::LEVEL);
        assert_relative_eq!(
            steady_turn_power_w(&veh, &ground, v, k, Slope::LEVEL, 1.0),
            20_000.0,
            max_relative = 1e-12
        );
        assert_relative_eq!(traction_curvature_limit(&veh, &ground, v, Slope::LEVEL), k, max_relative = 1e-6);
        // Thrust-bound turns are not helped by slowing down.
        ground.traction_coefficient = 0.3;
        assert_eq!(turn_speed_limit_mps(&veh, &ground, 1.0, Slope::LEVEL), f64::INFINITY);
    }

    /// The demo carrier with its centre of gravity 0.55 m up, thrust rating and power out of
    /// the way, and packed snow (f_r 0.06, mu 0.3, mu_max 0.35).
    fn carrier_on_snow() -> (EffortVehicle, Ground) {
        let (mut veh, _) = demo();
        veh.cog_height_m = Some(0.55);
        veh.max_side_thrust_n = 1e9;
        veh.max_power_w = 1e12;
        (veh, Ground { rolling_resistance: 0.06, traction_coefficient: 0.3, lateral_resistance_max: 0.35 })
    }

    #[test]
    fn on_a_side_slope_a_turn_with_the_light_side_outside_is_wider() {
        // Deep snow (f_r 0.15, mu 0.25, mu_max 0.3) on a 20 % cross slope, left side higher,
        // h = 0.55 m, B = 0.9 m, l = 1.1 m. Loads (moments about the long axis):
        // N_l,r = N / 2 -+ N 0.2 h / B, N = W / sqrt(1.04). Steady turn (Wong 2008): the outer
        // side needs f_r N_o + M_r / B <= mu N_o and the inner side brakes
        // f_r N_i - M_r / B >= -mu N_i, so M_r / B <= min((mu - f_r) N_o, (mu + f_r) N_i), with
        // M_r = mu_t N l / 4 and R = (B / 0.15) (mu_max / mu_t - 0.925). A left turn has the
        // heavy right side outside; a right turn the light left side.
        let (mut veh, ground) = demo();
        veh.cog_height_m = Some(0.55);
        veh.max_side_thrust_n = 1e9;
        veh.max_power_w = 1e12;
        let n = veh.weight_n() / 1.04_f64.sqrt();
        let shift = n * 0.2 * 0.55 / 0.9;
        let (n_l, n_r) = (n / 2.0 - shift, n / 2.0 + shift);
        let radius = |n_o: f64, n_i: f64| {
            let budget = ((0.25 - 0.15) * n_o).min((0.25 + 0.15) * n_i);
            let mu_t = budget * 4.0 * 0.9 / (n * 1.1);
            (0.9 / 0.15) * (0.3 / mu_t - 0.925)
        };
        let (r_left, r_right) = (radius(n_r, n_l), radius(n_l, n_r));
        let slope = Slope::new(0.0, 0.2);
        assert_relative_eq!(
            1.0 / traction_curvature_limit_toward(&veh, &ground, 0.8, slope, 1.0),
            r_left,
            max_relative = 1e-9
        );
        assert_relative_eq!(
            1.0 / traction_curvature_limit_toward(&veh, &ground, 0.8, slope, -1.0),
            r_right,
            max_relative = 1e-9
        );
        assert!(r_right > r_left, "{r_right} vs {r_left}");
        // The direction-blind limit is the weaker one; on level ground both are the same.
        assert_relative_eq!(1.0 / traction_curvature_limit(&veh, &ground, 0.8, slope), r_right, max_relative = 1e-9);
        let level = traction_curvature_limit_toward(&veh, &ground, 0.8, Slope::LEVEL, 1.0);
        assert_eq!(level, traction_curvature_limit_toward(&veh, &ground, 0.8, Slope::LEVEL, -1.0));
        // The simulation's limiter widens a right turn on that slope to the same radius.
        let mut twist = Twist { vx_mps: 0.8, vy_mps: 0.0, omega_radps: -0.8 };
        let (mut l, mut r) = (1.16, 0.44);
        assert_eq!(limit_step(&veh, &ground, slope, &mut twist, &mut l, &mut r), StepLimit::Turn);
        assert_relative_eq!(-twist.vx_mps / twist.omega_radps, r_right, max_relative = 1e-9);
    }

    #[test]
    fn a_cross_slope_beyond_the_grip_or_the_tipping_limit_is_marked_sideways() {
        // Wong 2008 (vehicle on a side slope): it slides sideways when tan(phi) > mu; packed snow
        // mu = 0.3. Tipping at B / (2 h) = 0.9 / 1.1 = 0.818 (static stability factor, common
        // practice) is the lower limit once mu exceeds it.
        let (mut veh, mut ground) = carrier_on_snow();
        assert_eq!(cross_slope_limit(&veh, &ground), (0.3, SideLimit::Grip));
        let mut twist = Twist { vx_mps: 0.8, vy_mps: 0.0, omega_radps: 0.0 };
        let (mut l, mut r) = (0.8, 0.8);
        assert_eq!(limit_step(&veh, &ground, Slope::new(0.0, 0.31), &mut twist, &mut l, &mut r), StepLimit::Sideways);
        assert_eq!(limit_step(&veh, &ground, Slope::new(0.0, -0.29), &mut twist, &mut l, &mut r), StepLimit::Free);
        // On a 20 % grade the weight across the slope is c cos(g): 0.31 cos(atan 0.2) = 0.304,
        // still beyond; 0.305 cos(atan 0.2) = 0.299 holds (without a load shift, so the climb
        // itself, f_r + tan g = 0.26 < mu, stays within traction on both sides).
        veh.cog_height_m = None;
        let g = 0.2_f64.atan();
        assert_eq!(limit_step(&veh, &ground, Slope::new(g, 0.31), &mut twist, &mut l, &mut r), StepLimit::Sideways);
        assert_eq!(limit_step(&veh, &ground, Slope::new(g, 0.305), &mut twist, &mut l, &mut r), StepLimit::Free);
        veh.cog_height_m = Some(0.55);
        ground.traction_coefficient = 0.9;
        let (tip, by) = cross_slope_limit(&veh, &ground);
        assert_eq!(by, SideLimit::Tipping);
        assert_relative_eq!(tip, 0.9 / 1.1, max_relative = 1e-15);
        veh.cog_height_m = None;
        assert_eq!(cross_slope_limit(&veh, &ground), (0.9, SideLimit::Grip));
    }

    #[test]
    fn the_traction_needed_on_a_cross_slope_is_the_worst_side_or_the_sideways_hold() {
        // Straight ahead: each side needs f_r N_side / (mu N_side) = f_r of traction, and holding
        // the weight across the slope needs c cos(g): on a 25 % cross slope that is 0.25. On a
        // 20 % climb across a 10 % cross slope the lighter (uphill) side needs
        // (f_r N_l + W sin(g) / 2) / N_l (Wong 2008, grade resistance on each side's load).
        let (veh, ground) = carrier_on_snow();
        assert_relative_eq!(
            traction_coefficient_needed(&veh, &ground, 0.0, Slope::new(0.0, 0.25)),
            0.25,
            max_relative = 1e-12
        );
        let g = 0.2_f64.atan();
        let slope = Slope::new(g, 0.1);
        let w = veh.weight_n();
        let n = w / (1.0_f64 + 0.04 + 0.01).sqrt();
        let n_l = n / 2.0 - n * 0.1 * g.cos() * 0.55 / 0.9;
        let expected = (0.06 * n_l + w * g.sin() / 2.0) / n_l;
        assert_relative_eq!(traction_coefficient_needed(&veh, &ground, 0.0, slope), expected, max_relative = 1e-12);
    }

    #[test]
    fn the_turning_term_inverts_the_lateral_resistance_relation() {
        let (veh, ground) = wong_example();
        for r in [0.9, 2.0, 8.0, 50.0] {
            let mu_t = 0.6 / (0.925 + 0.15 * r / 1.6);
            let term = turning_moment(mu_t, veh.weight_n(), 2.0, RunningGear::Tracks) / 1.6;
            assert_relative_eq!(
                curvature_for_turning_term(&veh, &ground, Slope::LEVEL, term),
                1.0 / r,
                max_relative = 1e-12
            );
        }
        assert_relative_eq!(curvature_for_turning_term(&veh, &ground, Slope::LEVEL, 1e9), 2.0 / 1.6);
    }
}

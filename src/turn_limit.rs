//! How tight the vehicle can turn (docs/method.md, Achievable curvature): the one place that
//! computes the kinematic limit (what the controller and the terrain's slip let it drive) and the
//! traction limit (what the tracks can push, after Wong 2008), for the verdicts (`assess`), the
//! repairs (`relax`), the margins and, step by step, the simulation (`rollout`).
//!
//! Traction limit, quasi-static (Wong, "Theory of Ground Vehicles", 4th ed. 2008, ch. 7, steering
//! of tracked vehicles): a steady turn on a slope loads each side with rolling resistance
//! f_r N / 2 (N = W cos(grade), the normal load), the weight component W sin(grade) / 2 and the
//! turning-resistance term M_r / B, pushing the outer side forward and the inner side back. Each
//! side's thrust, driving or braking, must stay within traction mu N / 2 and the drive's rating,
//! and the drawn power within the power rating. Yaw inertia and centrifugal load transfer are
//! neglected (low speeds), so the thrust part of the limit does not depend on speed; the power
//! part does. Units: metres, seconds, newtons, watts; curvature 1/m.

use serde::Serialize;

use crate::effort::{
    drawn_power_w, side_thrust_limit_on_n, twist_curvature, EffortVehicle, Ground, SideForces, Slope,
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
/// with the outer side moving in direction `outer_dir` and the inner side in `inner_dir` (+1
/// forward, -1 back, 0 at rest); `None` when even going straight (M_r = 0) needs more thrust than
/// a side can give: the vehicle cannot hold its way on that slope. Acceleration is left out (the
/// steady turn).
#[inline]
fn turning_budget_n(veh: &EffortVehicle, ground: &Ground, slope: Slope, outer_dir: f64, inner_dir: f64) -> Option<f64> {
    let limit = side_thrust_limit_on_n(veh, ground, slope);
    let f = SideForces::new(veh, ground, 0.0, 0.0, slope);
    // Outer thrust b_o + D and inner b_i - D must both lie within +-limit, D >= 0.
    let (b_o, b_i) = (f.outer_n(outer_dir), f.inner_n(inner_dir));
    if b_o.abs() > limit || b_i.abs() > limit {
        return None;
    }
    Some((limit - b_o).min(limit + b_i))
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

/// Drawn power of a steady turn of curvature `k` at `speed_mps` driven forward, side speeds from
/// the turn's geometry v (1 +- B k / 2).
fn steady_turn_power_w(veh: &EffortVehicle, ground: &Ground, speed_mps: f64, k: f64, slope: Slope) -> f64 {
    let f = SideForces::new(veh, ground, k, 0.0, slope);
    let half = 0.5 * veh.track_width_m * k;
    let (v_o, v_i) = (speed_mps * (1.0 + half), speed_mps * (1.0 - half));
    drawn_power_w(veh, f.inner_n(1.0) * v_i, f.outer_n(1.0) * v_o)
}

/// The traction/thrust/power limit on curvature at `speed_mps` on `slope` (docs/method.md,
/// Achievable curvature): the largest curvature up to a pivot turn (2 / B) whose steady turn
/// keeps both sides' thrust within traction and the rating, and the drawn power within the
/// rating. The thrust part is in closed form; where power binds the curvature is found by
/// bisection (drawn power grows with curvature). 0 when the vehicle cannot even drive straight
/// at this speed on this slope.
pub fn traction_curvature_limit(veh: &EffortVehicle, ground: &Ground, speed_mps: f64, slope: Slope) -> f64 {
    let Some(budget_n) = turning_budget_n(veh, ground, slope, 1.0, 1.0) else { return 0.0 };
    let k_thrust = curvature_for_turning_term(veh, ground, slope, budget_n);
    let power_ok = |k: f64| steady_turn_power_w(veh, ground, speed_mps, k, slope) <= veh.max_power_w;
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

/// The smallest traction coefficient with which a steady turn of curvature `curvature_per_m` on
/// `slope` stays within traction (Wong 2008, the steerability condition with the grade term):
/// |f_r + tan(grade)| + mu_t(R) l / (2 B) for tracks, with l / B for wheels. Thrust and power
/// ratings are separate limits; acceleration is left out.
pub fn traction_coefficient_needed(veh: &EffortVehicle, ground: &Ground, curvature_per_m: f64, slope: Slope) -> f64 {
    let mu_t = crate::effort::lateral_resistance(ground.lateral_resistance_max, curvature_per_m, veh.track_width_m);
    let gear = match veh.running_gear {
        RunningGear::Tracks => 2.0,
        RunningGear::Wheels => 1.0,
    };
    (ground.rolling_resistance + slope.grade_rad.tan()).abs() + mu_t * veh.contact_length_m / (gear * veh.track_width_m)
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
    let Some(budget_n) = turning_budget_n(veh, ground, slope, 1.0, 1.0) else { return f64::INFINITY };
    if SideForces::new(veh, ground, k, 0.0, slope).turning_n > budget_n {
        return f64::INFINITY;
    }
    let per_mps = steady_turn_power_w(veh, ground, 1.0, k, slope);
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
///   gives: [`StepLimit::Slide`], the vehicle loses its steering and runs straight on.
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
    let (dl, dr) = (crate::effort::motion_direction(*left_mps), crate::effort::motion_direction(*right_mps));
    // Turning left, the right side is outer.
    let (outer_dir, inner_dir) = if twist.omega_radps >= 0.0 { (dr, dl) } else { (dl, dr) };
    let Some(budget_n) = turning_budget_n(veh, ground, slope, outer_dir, inner_dir) else {
        if SideForces::new(veh, ground, 0.0, 0.0, slope).grade_n > 0.0 {
            return StepLimit::Stall;
        }
        scale_yaw(twist, 0.0);
        return StepLimit::Slide;
    };
    let k = twist_curvature(twist.vx_mps, twist.omega_radps);
    let turning_n = SideForces::new(veh, ground, k, 0.0, slope).turning_n;
    let mut limit = StepLimit::Free;
    if turning_n > budget_n {
        let k_max = curvature_for_turning_term(veh, ground, slope, budget_n);
        scale_yaw(twist, k_max * twist.vx_mps.abs() / twist.omega_radps.abs());
        limit = StepLimit::Turn;
    }
    let power = |t: &Twist| {
        let e = crate::effort::effort_step(veh, ground, t.vx_mps, t.omega_radps, *left_mps, *right_mps, 0.0, slope);
        e.drawn_power_w
    };
    if power(twist) <= veh.max_power_w {
        return limit;
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
        return StepLimit::Power;
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
    StepLimit::Power
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
        assert!(steady_turn_power_w(&veh, &ground, 1.5, fast, Slope::LEVEL) <= 20_000.0 + 1e-6);
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
        assert_relative_eq!(steady_turn_power_w(&veh, &ground, v, k, Slope::LEVEL), 20_000.0, max_relative = 1e-12);
        assert_relative_eq!(traction_curvature_limit(&veh, &ground, v, Slope::LEVEL), k, max_relative = 1e-6);
        // Thrust-bound turns are not helped by slowing down.
        ground.traction_coefficient = 0.3;
        assert_eq!(turn_speed_limit_mps(&veh, &ground, 1.0, Slope::LEVEL), f64::INFINITY);
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

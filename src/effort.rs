//! Track effort: thrust per side, mechanical and drawn power, energy, and the traction-limited
//! tightest turn, after Wong, "Theory of Ground Vehicles", 4th ed. (2008), ch. 7, steering of
//! tracked vehicles (docs/method.md, Effort).
//!
//! Quasi-static: rolling resistance, turning resistance, acceleration and grade; yaw inertia and
//! centrifugal load transfer are neglected, which holds at the low speeds of these vehicles.
//! Units: newtons, watts, joules (Wh only at the report edge), metres, seconds.
//!
//! Tracks and skid-steered wheels differ only in the turning-resistance moment: a track's
//! lateral resistance is spread uniformly over its contact length l (M_r = mu_t W l / 4), while
//! wheels carry their load at the axles, l/2 ahead and behind the centre (M_r = mu_t W l / 2,
//! l the wheelbase), so wheels need twice the turning moment of a track of the same length.

use crate::vehicle::{Profile, RunningGear, TerrainSpec};

/// Standard gravity, m/s^2 (3rd CGPM, 1901).
pub const STANDARD_GRAVITY_MPS2: f64 = 9.80665;

/// Vehicle constants the effort model needs.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct EffortVehicle {
    pub mass_kg: f64,
    pub track_width_m: f64,
    pub contact_length_m: f64,
    pub running_gear: RunningGear,
    pub max_side_thrust_n: f64,
    pub max_power_w: f64,
    pub drivetrain_efficiency: f64,
    pub regenerative: bool,
}

impl EffortVehicle {
    pub fn from_profile(p: &Profile) -> EffortVehicle {
        let v = &p.vehicle;
        EffortVehicle {
            mass_kg: v.mass_kg,
            track_width_m: v.track_width_m,
            contact_length_m: v.contact_length_m,
            running_gear: v.running_gear,
            max_side_thrust_n: v.max_side_thrust_n,
            max_power_w: v.max_power_w,
            drivetrain_efficiency: v.drivetrain_efficiency,
            regenerative: v.regenerative,
        }
    }

    /// Weight W = m g.
    pub fn weight_n(&self) -> f64 {
        self.mass_kg * STANDARD_GRAVITY_MPS2
    }
}

/// Ground coefficients of one terrain.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Ground {
    /// f_r
    pub rolling_resistance: f64,
    /// mu, limit of thrust / normal load
    pub traction_coefficient: f64,
    /// mu_t at a pivot turn (R = B/2)
    pub lateral_resistance_max: f64,
}

impl Ground {
    pub fn from_terrain(t: &TerrainSpec) -> Ground {
        Ground {
            rolling_resistance: t.rolling_resistance,
            traction_coefficient: t.traction_coefficient,
            lateral_resistance_max: t.lateral_resistance_max,
        }
    }
}

/// Coefficient of lateral resistance at turning radius `radius_m` (Wong 2008, the empirical
/// relation mu_t = mu_max / (0.925 + 0.15 R / B) for R >= B/2; mu_max below). Written in
/// curvature so a straight (kappa = 0) gives 0 and a turn on the spot gives mu_max.
#[inline]
pub fn lateral_resistance(mu_max: f64, curvature_per_m: f64, track_width_m: f64) -> f64 {
    let k = curvature_per_m.abs();
    if k * track_width_m >= 2.0 {
        return mu_max;
    }
    // mu_max / (0.925 + 0.15 R/B) with R = 1/k, multiplied through by k B to stay finite at k = 0.
    mu_max * k * track_width_m / (0.925 * k * track_width_m + 0.15)
}

/// Turning resistance moment M_r, N m: tracks mu_t W l / 4 (uniform pressure), wheels
/// mu_t W l / 2 (loads at the axles).
#[inline]
pub fn turning_moment(mu_t: f64, weight_n: f64, contact_length_m: f64, gear: RunningGear) -> f64 {
    match gear {
        RunningGear::Tracks => mu_t * weight_n * contact_length_m / 4.0,
        RunningGear::Wheels => mu_t * weight_n * contact_length_m / 2.0,
    }
}

/// Thrusts of the outer and inner side, N (Wong 2008): F_o = f_r W/2 + M_r/B + extra,
/// F_i = f_r W/2 - M_r/B + extra, where `extra` per side is m a / 2 + W sin(grade) / 2.
#[inline]
pub fn side_thrusts(
    veh: &EffortVehicle,
    ground: &Ground,
    curvature_per_m: f64,
    accel_mps2: f64,
    grade_rad: f64,
) -> (f64, f64) {
    let w = veh.weight_n();
    let mu_t = lateral_resistance(ground.lateral_resistance_max, curvature_per_m, veh.track_width_m);
    let m_r = turning_moment(mu_t, w, veh.contact_length_m, veh.running_gear);
    let slope = if grade_rad == 0.0 { 0.0 } else { grade_rad.sin() };
    let base = 0.5 * ground.rolling_resistance * w + 0.5 * veh.mass_kg * accel_mps2 + 0.5 * w * slope;
    (base + m_r / veh.track_width_m, base - m_r / veh.track_width_m)
}

/// Power drawn from the source for side powers `p_left_w`, `p_right_w` (mechanical, at the
/// track): a driving side draws P / eta; a braking side returns -P * eta when the drive is
/// regenerative and nothing otherwise (its energy is lost in the brakes).
#[inline]
pub fn drawn_power_w(veh: &EffortVehicle, p_left_w: f64, p_right_w: f64) -> f64 {
    let eta = veh.drivetrain_efficiency;
    let side = |p: f64| {
        if p >= 0.0 {
            p / eta
        } else if veh.regenerative {
            p * eta
        } else {
            0.0
        }
    };
    side(p_left_w) + side(p_right_w)
}

/// Thrust limit per side: the smaller of traction (mu W / 2) and the drive's rating.
pub fn side_thrust_limit_n(veh: &EffortVehicle, ground: &Ground) -> f64 {
    (0.5 * ground.traction_coefficient * veh.weight_n()).min(veh.max_side_thrust_n)
}

/// Whether a steady turn of radius `radius_m` at speed `speed_mps` on level ground keeps the
/// outer thrust within [`side_thrust_limit_n`] and the drawn power within `max_power_w`. Side
/// speeds from the turn's geometry, v (1 +- B / 2R).
fn steady_turn_ok(veh: &EffortVehicle, ground: &Ground, speed_mps: f64, radius_m: f64) -> bool {
    let (f_o, f_i) = side_thrusts(veh, ground, 1.0 / radius_m, 0.0, 0.0);
    let half = veh.track_width_m / (2.0 * radius_m);
    let (v_o, v_i) = (speed_mps * (1.0 + half), speed_mps * (1.0 - half));
    f_o <= side_thrust_limit_n(veh, ground) && drawn_power_w(veh, f_i * v_i, f_o * v_o) <= veh.max_power_w
}

/// Radius above which a turn is treated as a straight for the traction limit, m.
const STRAIGHT_RADIUS_M: f64 = 1.0e5;

/// The traction/thrust/power limit on curvature at `speed_mps` on level ground (docs/method.md, Achievable curvature):
/// 1 / R_min with R_min the smallest radius >= B/2 whose steady turn keeps the outer thrust
/// within traction and the rating and the drawn power within the rating. Outer thrust and power
/// both fall as the radius grows (mu_t falls with R, the outer side slows), so the condition is
/// monotone in R and R_min is found by bisection (60 halvings of [B/2, 1e5 m] in log R).
/// Returns 2/B when even a pivot-radius turn is fine, and 0 when the vehicle cannot even drive
/// straight at this speed.
pub fn traction_curvature_limit(veh: &EffortVehicle, ground: &Ground, speed_mps: f64) -> f64 {
    let r_pivot = 0.5 * veh.track_width_m;
    if steady_turn_ok(veh, ground, speed_mps, r_pivot) {
        return 1.0 / r_pivot;
    }
    if !steady_turn_ok(veh, ground, speed_mps, STRAIGHT_RADIUS_M) {
        return 0.0;
    }
    let (mut lo, mut hi) = (r_pivot.ln(), STRAIGHT_RADIUS_M.ln());
    for _ in 0..60 {
        let mid = 0.5 * (lo + hi);
        if steady_turn_ok(veh, ground, speed_mps, mid.exp()) {
            hi = mid;
        } else {
            lo = mid;
        }
    }
    1.0 / hi.exp()
}

/// The steerability condition of Wong 2008 in closed form for tracks on level ground at steady
/// speed: F_o <= mu W / 2 is f_r + mu_t l / (2 B) <= mu; with mu_t = mu_max / (0.925 + 0.15 R/B)
/// the smallest radius is R = (B / 0.15) (mu_max l / (2 B (mu - f_r)) - 0.925), at least B/2.
/// `None` when even a straight is not possible (mu <= f_r).
pub fn steerability_min_radius_m(veh: &EffortVehicle, ground: &Ground) -> Option<f64> {
    let budget = ground.traction_coefficient - ground.rolling_resistance;
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

/// Effort at one control step.
#[derive(Debug, Clone, Copy, PartialEq, Default)]
pub struct EffortStep {
    pub left_thrust_n: f64,
    pub right_thrust_n: f64,
    /// Thrust of the outer side of the turn (the larger one on a straight).
    pub outer_thrust_n: f64,
    pub inner_thrust_n: f64,
    /// Mechanical power at the tracks, both sides, W (negative when braking).
    pub mechanical_power_w: f64,
    /// Power drawn from the source, W.
    pub drawn_power_w: f64,
    /// Grade along the plan, rad (positive uphill).
    pub grade_rad: f64,
}

/// Effort at one step from the actual twist, side speeds, acceleration and grade.
#[inline]
pub fn effort_step(
    veh: &EffortVehicle,
    ground: &Ground,
    vx_mps: f64,
    omega_radps: f64,
    left_mps: f64,
    right_mps: f64,
    accel_mps2: f64,
    grade_rad: f64,
) -> EffortStep {
    let curvature = if vx_mps.abs() > 1e-9 {
        omega_radps / vx_mps
    } else if omega_radps.abs() > 1e-9 {
        f64::INFINITY
    } else {
        0.0
    };
    let (f_o, f_i) = side_thrusts(veh, ground, curvature, accel_mps2, grade_rad);
    // Turning left (omega > 0) the right side is outer.
    let (left, right) = if omega_radps >= 0.0 { (f_i, f_o) } else { (f_o, f_i) };
    let (p_l, p_r) = (left * left_mps, right * right_mps);
    EffortStep {
        left_thrust_n: left,
        right_thrust_n: right,
        outer_thrust_n: f_o,
        inner_thrust_n: f_i,
        mechanical_power_w: p_l + p_r,
        drawn_power_w: drawn_power_w(veh, p_l, p_r),
        grade_rad,
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use approx::assert_relative_eq;

    fn wong_example() -> (EffortVehicle, Ground) {
        // Values of the worked example below: W = 50 kN, l = 2.0 m, B = 1.6 m, mu_max = 0.6,
        // f_r = 0.05.
        let veh = EffortVehicle {
            mass_kg: 50_000.0 / STANDARD_GRAVITY_MPS2,
            track_width_m: 1.6,
            contact_length_m: 2.0,
            running_gear: RunningGear::Tracks,
            max_side_thrust_n: 1e9,
            max_power_w: 1e12,
            drivetrain_efficiency: 1.0,
            regenerative: false,
        };
        let ground = Ground { rolling_resistance: 0.05, traction_coefficient: 0.7, lateral_resistance_max: 0.6 };
        (veh, ground)
    }

    #[test]
    fn steady_turn_worked_example() {
        // Computed from Wong's formulas (Wong 2008, ch. 7) by hand for R = 8 m:
        // mu_t = 0.6 / (0.925 + 0.15 * 8 / 1.6) = 0.6 / 1.675 = 0.358209,
        // M_r = mu_t W l / 4 = 0.358209 * 50000 * 2 / 4 = 8955.22 N m,
        // F_o = f_r W / 2 + M_r / B = 1250 + 5597.01 = 6847.0 N, F_i = 1250 - 5597.01 = -4347.0 N.
        let (veh, ground) = wong_example();
        let mu_t = lateral_resistance(0.6, 1.0 / 8.0, 1.6);
        assert_relative_eq!(mu_t, 0.358209, max_relative = 1e-5);
        let m_r = turning_moment(mu_t, veh.weight_n(), 2.0, RunningGear::Tracks);
        assert_relative_eq!(m_r, 8955.22, max_relative = 1e-6);
        let (f_o, f_i) = side_thrusts(&veh, &ground, 1.0 / 8.0, 0.0, 0.0);
        assert_relative_eq!(f_o, 6847.0, epsilon = 0.1);
        assert_relative_eq!(f_i, -4347.0, epsilon = 0.1);
    }

    #[test]
    fn pivot_turn_uses_mu_max_exactly() {
        // Wong 2008: the relation gives mu_max at R = B/2 (0.925 + 0.15 * 0.5 = 1).
        assert_relative_eq!(lateral_resistance(0.6, 2.0 / 1.6, 1.6), 0.6, epsilon = 1e-15);
        assert_relative_eq!(lateral_resistance(0.6, 1.0 / (0.8 + 1e-9), 1.6), 0.6, max_relative = 1e-9);
        assert_eq!(lateral_resistance(0.6, f64::INFINITY, 1.6), 0.6);
        assert_eq!(lateral_resistance(0.6, 0.0, 1.6), 0.0);
    }

    #[test]
    fn traction_limit_matches_the_steerability_closed_form() {
        // Steerability condition f_r + mu_t l / (2B) <= mu (Wong 2008) solved for R in closed
        // form, against the numerical bisection (power and rating out of the way).
        let (veh, mut ground) = wong_example();
        for mu in [0.3, 0.4, 0.5, 0.62] {
            ground.traction_coefficient = mu;
            let r_closed = steerability_min_radius_m(&veh, &ground).expect("can drive");
            let k = traction_curvature_limit(&veh, &ground, 0.5);
            assert_relative_eq!(1.0 / k, r_closed, max_relative = 1e-9);
        }
        ground.traction_coefficient = 0.04;
        assert_eq!(steerability_min_radius_m(&veh, &ground), None);
        assert_eq!(traction_curvature_limit(&veh, &ground, 0.5), 0.0);
        ground.traction_coefficient = 2.0;
        assert_relative_eq!(traction_curvature_limit(&veh, &ground, 0.5), 2.0 / 1.6);
    }

    #[test]
    fn power_limit_binds_at_speed() {
        // With ample traction but little power, a faster vehicle must turn wider.
        let (mut veh, mut ground) = wong_example();
        ground.traction_coefficient = 5.0;
        veh.max_power_w = 20_000.0;
        let slow = traction_curvature_limit(&veh, &ground, 0.5);
        let fast = traction_curvature_limit(&veh, &ground, 1.5);
        assert!(fast < slow, "{fast} vs {slow}");
    }

    #[test]
    fn wheels_need_twice_the_moment_of_tracks() {
        let m_t = turning_moment(0.4, 1000.0, 1.2, RunningGear::Tracks);
        let m_w = turning_moment(0.4, 1000.0, 1.2, RunningGear::Wheels);
        assert_relative_eq!(m_w, 2.0 * m_t);
    }

    #[test]
    fn braking_side_returns_energy_only_when_regenerative() {
        let (mut veh, _) = wong_example();
        veh.drivetrain_efficiency = 0.8;
        assert_relative_eq!(drawn_power_w(&veh, 800.0, -400.0), 1000.0);
        veh.regenerative = true;
        assert_relative_eq!(drawn_power_w(&veh, 800.0, -400.0), 1000.0 - 320.0);
    }

    #[test]
    fn outer_side_follows_the_turn_direction() {
        let (veh, ground) = wong_example();
        let left_turn = effort_step(&veh, &ground, 1.0, 0.2, 0.5, 1.5, 0.0, 0.0);
        assert!(left_turn.right_thrust_n > left_turn.left_thrust_n);
        let right_turn = effort_step(&veh, &ground, 1.0, -0.2, 1.5, 0.5, 0.0, 0.0);
        assert!(right_turn.left_thrust_n > right_turn.right_thrust_n);
        assert_relative_eq!(left_turn.outer_thrust_n, right_turn.outer_thrust_n);
    }
}

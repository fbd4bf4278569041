//! Track effort: thrust per side, mechanical and drawn power and energy, after Wong, "Theory of Ground Vehicles", 4th ed. (2008), ch. 7, steering of
//! tracked vehicles (docs/method.md, Effort).
//!
//! Quasi-static: rolling resistance, turning resistance, acceleration, grade and cross slope; yaw
//! inertia and centrifugal load transfer are neglected, which holds at the low speeds of these
//! vehicles. On a cross slope the downhill side carries more of the load (lateral load transfer,
//! with the centre-of-gravity height when the profile gives it), and each side's rolling
//! resistance and traction follow its own normal load (docs/method.md, Effort).
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
    /// Height of the centre of gravity above the ground, m, when the profile gives it
    /// (`cog_height_m`); without it the load is not shifted between the sides on a cross slope
    /// and tipping is not judged.
    pub cog_height_m: Option<f64>,
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
            cog_height_m: v.cog_height_m,
        }
    }

    /// Weight W = m g.
    pub fn weight_n(&self) -> f64 {
        self.mass_kg * STANDARD_GRAVITY_MPS2
    }

    /// Normal loads on the left and right side on `slope`, N: the total normal load N split
    /// N / 2 -+ F h / B, with F = N c cos(grade) the weight component across the slope (c the
    /// cross slope, positive when the left side is higher), h the centre-of-gravity height and
    /// B the track width (moments about the vehicle's long axis at the ground; statics, common
    /// practice, no source). With F = W sin(phi) and N = W cos(phi) on a pure side slope of angle
    /// phi this is W cos(phi) / 2 -+ W h sin(phi) / B. The uphill side's load is never below zero
    /// (beyond the tipping point the downhill side carries everything). Without a
    /// centre-of-gravity height the sides share the load equally.
    #[inline]
    pub fn side_loads_n(&self, slope: Slope) -> (f64, f64) {
        let n = slope.normal_load_n(self.weight_n());
        let half = 0.5 * n;
        let shift = match self.cog_height_m {
            Some(h) if slope.cross_slope != 0.0 => (n * slope.side_ratio() * h / self.track_width_m).clamp(-half, half),
            _ => 0.0,
        };
        (half - shift, half + shift)
    }

    /// The static stability factor B / (2 h): the cross slope ratio (weight across the slope
    /// over normal load) at which the uphill side lifts off (common practice for rollover
    /// screening, no source); `None` without a centre-of-gravity height.
    pub fn tipping_ratio(&self) -> Option<f64> {
        self.cog_height_m.filter(|&h| h > 0.0).map(|h| self.track_width_m / (2.0 * h))
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

impl Ground {
    /// The coefficients a share `w` (0..1) of the way from `self` to `other`, each linear: the
    /// ground under a contact patch that straddles a terrain boundary (docs/method.md, Following).
    #[inline]
    pub fn blend(&self, other: &Ground, w: f64) -> Ground {
        let mix = |a: f64, b: f64| {
            if w <= 0.0 {
                a
            } else if w >= 1.0 {
                b
            } else {
                a + w * (b - a)
            }
        };
        Ground {
            rolling_resistance: mix(self.rolling_resistance, other.rolling_resistance),
            traction_coefficient: mix(self.traction_coefficient, other.traction_coefficient),
            lateral_resistance_max: mix(self.lateral_resistance_max, other.lateral_resistance_max),
        }
    }
}

/// The attitude of the ground under the vehicle: the grade along the direction of travel and the
/// cross slope across it, both from the plan (the plan's direction stands for the vehicle's).
#[derive(Debug, Clone, Copy, PartialEq, Default)]
pub struct Slope {
    /// Grade along the direction of travel, rad, positive uphill.
    pub grade_rad: f64,
    /// Cross slope: tangent of the ground's slope across the direction of travel (rise per
    /// horizontal metre to the left), positive when the left side is higher.
    pub cross_slope: f64,
}

impl Slope {
    pub const LEVEL: Slope = Slope { grade_rad: 0.0, cross_slope: 0.0 };

    /// A grade with no cross slope.
    pub fn grade(grade_rad: f64) -> Slope {
        Slope { grade_rad, cross_slope: 0.0 }
    }

    pub fn new(grade_rad: f64, cross_slope: f64) -> Slope {
        Slope { grade_rad, cross_slope }
    }

    /// Normal load on the ground, N: the weight's component along the ground's normal. The ground
    /// z = tan(grade) x + c y (x along the travel, y to the left, both horizontal) has the normal
    /// (-tan(grade), -c, 1), so N = W / sqrt(1 + tan^2(grade) + c^2), which is W cos(grade)
    /// without a cross slope and W cos(phi) on a pure side slope of angle phi.
    #[inline]
    pub fn normal_load_n(&self, weight_n: f64) -> f64 {
        if self.cross_slope == 0.0 {
            if self.grade_rad == 0.0 {
                weight_n
            } else {
                weight_n * self.grade_rad.cos()
            }
        } else {
            let t = self.grade_rad.tan();
            weight_n / (1.0 + t * t + self.cross_slope * self.cross_slope).sqrt()
        }
    }

    /// The weight's component across the direction of travel, in the ground's plane, per unit
    /// normal load: c cos(grade) (signed like the cross slope; it pushes the vehicle to its
    /// right when positive). On a pure side slope of angle phi it is tan(phi). Derived from the
    /// plane above: the in-plane lateral component of W is W |c| / sqrt((1 + tan^2 g + c^2)
    /// (1 + tan^2 g)), which is N |c| cos(g).
    #[inline]
    pub fn side_ratio(&self) -> f64 {
        if self.grade_rad == 0.0 {
            self.cross_slope
        } else {
            self.cross_slope * self.grade_rad.cos()
        }
    }

    /// Weight component down the slope per side, N: W sin(grade) / 2 (positive uphill: it
    /// opposes forward motion).
    #[inline]
    pub fn grade_force_per_side_n(&self, weight_n: f64) -> f64 {
        if self.grade_rad == 0.0 {
            0.0
        } else {
            0.5 * weight_n * self.grade_rad.sin()
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

/// Turning resistance moment M_r, N m, for a normal load `normal_load_n`: tracks mu_t N l / 4
/// (uniform pressure), wheels mu_t N l / 2 (loads at the axles).
#[inline]
pub fn turning_moment(mu_t: f64, normal_load_n: f64, contact_length_m: f64, gear: RunningGear) -> f64 {
    match gear {
        RunningGear::Tracks => mu_t * normal_load_n * contact_length_m / 4.0,
        RunningGear::Wheels => mu_t * normal_load_n * contact_length_m / 2.0,
    }
}

/// The forces behind each side's thrust on a slope, N (Wong 2008, steering of tracked vehicles):
/// a side moving in direction `dir` (+1 forward, -1 backward, 0 at rest) needs
/// `dir * rolling + grade_n + accel_n`, plus `turning_n` on the outer side and minus it on the
/// inner side, its rolling resistance from its own normal load.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct SideForces {
    /// Rolling resistance of the left side, f_r N_left, and of the right side; each opposes that
    /// side's motion (N_left + N_right = N, [`EffortVehicle::side_loads_n`]).
    pub rolling_left_n: f64,
    pub rolling_right_n: f64,
    /// W sin(grade) / 2.
    pub grade_n: f64,
    /// m a / 2.
    pub accel_n: f64,
    /// M_r / B, with M_r from the total normal load N.
    pub turning_n: f64,
    /// The total normal load N.
    pub normal_n: f64,
}

/// m a / 2: the thrust each side adds for the forward acceleration `accel_mps2`.
#[inline]
fn accel_force_per_side_n(veh: &EffortVehicle, accel_mps2: f64) -> f64 {
    0.5 * veh.mass_kg * accel_mps2
}

/// The sign of a turn: +1 left (anticlockwise), -1 right, 0 straight.
#[inline]
pub fn turn_sign(x: f64) -> f64 {
    if x > 0.0 {
        1.0
    } else if x < 0.0 {
        -1.0
    } else {
        0.0
    }
}

impl SideForces {
    #[inline]
    pub fn new(veh: &EffortVehicle, ground: &Ground, curvature_per_m: f64, accel_mps2: f64, slope: Slope) -> Self {
        let w = veh.weight_n();
        let n = slope.normal_load_n(w);
        let (n_left, n_right) = veh.side_loads_n(slope);
        let mu_t = lateral_resistance(ground.lateral_resistance_max, curvature_per_m, veh.track_width_m);
        SideForces {
            rolling_left_n: ground.rolling_resistance * n_left,
            rolling_right_n: ground.rolling_resistance * n_right,
            grade_n: slope.grade_force_per_side_n(w),
            accel_n: accel_force_per_side_n(veh, accel_mps2),
            turning_n: turning_moment(mu_t, n, veh.contact_length_m, veh.running_gear) / veh.track_width_m,
            normal_n: n,
        }
    }

    /// These forces with the forward acceleration `accel_mps2` instead (the same values as
    /// [`SideForces::new`] with it).
    #[inline]
    pub fn with_acceleration(self, veh: &EffortVehicle, accel_mps2: f64) -> Self {
        SideForces { accel_n: accel_force_per_side_n(veh, accel_mps2), ..self }
    }

    /// These forces at curvature `curvature_per_m` instead: only the turning term depends on
    /// it (the same values as [`SideForces::new`] at that curvature).
    #[inline]
    pub fn at_curvature(&self, veh: &EffortVehicle, ground: &Ground, curvature_per_m: f64) -> Self {
        let mu_t = lateral_resistance(ground.lateral_resistance_max, curvature_per_m, veh.track_width_m);
        let turning_n = turning_moment(mu_t, self.normal_n, veh.contact_length_m, veh.running_gear) / veh.track_width_m;
        SideForces { turning_n, ..*self }
    }

    /// Thrust of the left side moving in direction `dir` in a turn of sign `turn` (+1 left: the
    /// left side is inner; -1 right: it is outer; 0 straight).
    #[inline]
    pub fn left_n(&self, dir: f64, turn: f64) -> f64 {
        dir * self.rolling_left_n + self.grade_n + self.accel_n - turn * self.turning_n
    }

    /// Thrust of the right side moving in direction `dir` in a turn of sign `turn`.
    #[inline]
    pub fn right_n(&self, dir: f64, turn: f64) -> f64 {
        dir * self.rolling_right_n + self.grade_n + self.accel_n + turn * self.turning_n
    }

    /// Thrusts of the outer and inner side of a turn of sign `turn` (+1 left, -1 right), each
    /// moving in its direction.
    #[inline]
    pub fn outer_inner_n(&self, turn: f64, outer_dir: f64, inner_dir: f64) -> (f64, f64) {
        if turn >= 0.0 {
            (self.right_n(outer_dir, 1.0), self.left_n(inner_dir, 1.0))
        } else {
            (self.left_n(outer_dir, -1.0), self.right_n(inner_dir, -1.0))
        }
    }
}

/// Thrusts of the outer and inner side of a steady turn of signed curvature `curvature_per_m`
/// driven forward, N (Wong 2008): F_o = f_r N_o + M_r/B + extra, F_i = f_r N_i - M_r/B + extra,
/// with N_o, N_i the two sides' normal loads (N / 2 each without a cross slope) and `extra` per
/// side m a / 2 + W sin(grade) / 2. A left turn's outer side is the right one.
#[inline]
pub fn side_thrusts(
    veh: &EffortVehicle,
    ground: &Ground,
    curvature_per_m: f64,
    accel_mps2: f64,
    slope: Slope,
) -> (f64, f64) {
    let f = SideForces::new(veh, ground, curvature_per_m, accel_mps2, slope);
    f.outer_inner_n(if curvature_per_m < 0.0 { -1.0 } else { 1.0 }, 1.0, 1.0)
}

/// Direction of a side's motion for its rolling resistance: +1, -1, or 0 at rest.
#[inline]
pub fn motion_direction(side_mps: f64) -> f64 {
    if side_mps > 1e-9 {
        1.0
    } else if side_mps < -1e-9 {
        -1.0
    } else {
        0.0
    }
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

/// Thrust limit per side on level ground: the smaller of traction (mu W / 2) and the drive's rating.
pub fn side_thrust_limit_n(veh: &EffortVehicle, ground: &Ground) -> f64 {
    side_thrust_limit_on_n(veh, ground, Slope::LEVEL)
}

/// Thrust limit per side on a slope with the load shared equally: the smaller of traction
/// (mu N / 2) and the drive's rating. Driving and braking alike.
#[inline]
pub fn side_thrust_limit_on_n(veh: &EffortVehicle, ground: &Ground, slope: Slope) -> f64 {
    (0.5 * ground.traction_coefficient * slope.normal_load_n(veh.weight_n())).min(veh.max_side_thrust_n)
}

/// Thrust limit of the left and the right side on a slope: the smaller of traction on that
/// side's own normal load (mu N_side, [`EffortVehicle::side_loads_n`]) and the drive's rating.
#[inline]
pub fn side_thrust_limits_n(veh: &EffortVehicle, ground: &Ground, slope: Slope) -> (f64, f64) {
    let (n_left, n_right) = veh.side_loads_n(slope);
    let mu = ground.traction_coefficient;
    ((mu * n_left).min(veh.max_side_thrust_n), (mu * n_right).min(veh.max_side_thrust_n))
}

/// Effort at one control step.
#[derive(Debug, Clone, Copy, PartialEq, Default)]
pub struct EffortStep {
    pub left_thrust_n: f64,
    pub right_thrust_n: f64,
    /// Thrust of the outer side of the turn (the left one on a straight).
    pub outer_thrust_n: f64,
    pub inner_thrust_n: f64,
    /// Mechanical power at the tracks, both sides, W (negative when braking).
    pub mechanical_power_w: f64,
    /// Power drawn from the source, W.
    pub drawn_power_w: f64,
    /// Grade along the plan, rad (positive uphill).
    pub grade_rad: f64,
    /// Cross slope there (tangent, positive when the left side is higher).
    pub cross_slope: f64,
}

/// Curvature of a twist, 1/m: omega / vx, infinite for a turn on the spot, 0 at rest.
#[inline]
pub fn twist_curvature(vx_mps: f64, omega_radps: f64) -> f64 {
    if vx_mps.abs() > 1e-9 {
        omega_radps / vx_mps
    } else if omega_radps.abs() > 1e-9 {
        f64::INFINITY
    } else {
        0.0
    }
}

/// Effort at one step from the actual twist (forward speed, yaw rate), the side speeds, the
/// forward acceleration and the slope. Each side's rolling resistance opposes that side's own
/// motion, so a counter-rotating inner track is pushed back by it; the turning moment pushes the
/// outer side forward and the inner side back.
#[inline]
pub fn effort_step(
    veh: &EffortVehicle,
    ground: &Ground,
    vx_mps: f64,
    omega_radps: f64,
    left_mps: f64,
    right_mps: f64,
    accel_mps2: f64,
    slope: Slope,
) -> EffortStep {
    let f = SideForces::new(veh, ground, twist_curvature(vx_mps, omega_radps), accel_mps2, slope);
    effort_from_forces(veh, &f, omega_radps, left_mps, right_mps, slope)
}

/// [`effort_step`] from the side forces `f` already worked out for its curvature and
/// acceleration (the step's traction check has them): the same values.
#[inline]
pub fn effort_from_forces(
    veh: &EffortVehicle,
    f: &SideForces,
    omega_radps: f64,
    left_mps: f64,
    right_mps: f64,
    slope: Slope,
) -> EffortStep {
    let (dl, dr) = (motion_direction(left_mps), motion_direction(right_mps));
    let turn = turn_sign(omega_radps);
    let (left, right) = (f.left_n(dl, turn), f.right_n(dr, turn));
    // Turning left (omega > 0) the right side is outer.
    let (outer, inner) = if turn > 0.0 { (right, left) } else { (left, right) };
    let (p_l, p_r) = (left * left_mps, right * right_mps);
    EffortStep {
        left_thrust_n: left,
        right_thrust_n: right,
        outer_thrust_n: outer,
        inner_thrust_n: inner,
        mechanical_power_w: p_l + p_r,
        drawn_power_w: drawn_power_w(veh, p_l, p_r),
        grade_rad: slope.grade_rad,
        cross_slope: slope.cross_slope,
    }
}

#[cfg(test)]
pub(crate) mod tests {
    use super::*;
    use approx::assert_relative_eq;

    pub(crate) fn wong_example() -> (EffortVehicle, Ground) {
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
            cog_height_m: None,
        };
        let ground = Ground { rolling_resistance: 0.05, traction_coefficient: 0.7, lateral_resistance_max: 0.6 };
        (veh, ground)
    }

    #[test]
    fn forces_moved_to_another_curvature_are_those_worked_out_there() {
        // Only the turning term depends on the curvature: moving the forces of a straight to a
        // curvature must give SideForces::new there to the bit, on level ground, a grade and a
        // cross slope, for tracks and wheels, gentle turns to a pivot.
        let (mut veh, ground) = wong_example();
        veh.cog_height_m = Some(0.9);
        for gear in [RunningGear::Tracks, RunningGear::Wheels] {
            veh.running_gear = gear;
            for slope in [Slope::LEVEL, Slope::grade(0.08), Slope::new(-0.05, 0.12)] {
                let straight = SideForces::new(&veh, &ground, 0.0, 0.0, slope);
                for k in [0.0, 0.01, -0.2, 0.9, -1.25, 3.0] {
                    assert_eq!(straight.at_curvature(&veh, &ground, k), SideForces::new(&veh, &ground, k, 0.0, slope));
                }
            }
        }
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
        let (f_o, f_i) = side_thrusts(&veh, &ground, 1.0 / 8.0, 0.0, Slope::LEVEL);
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
    fn each_side_s_rolling_resistance_opposes_its_own_motion() {
        // Wong 2008: rolling resistance opposes the motion of the track it acts on. Pivot turn
        // (left track back, right forward): the left track's rolling resistance pushes it
        // forward, so its thrust is -f_r W/2 - M_r/B, the right one's +f_r W/2 + M_r/B; both
        // sides then consume power. Reversing straight, both thrusts are -f_r W/2 and the
        // drive still delivers f_r W |v| (it used to come out as power returned).
        let (veh, ground) = wong_example();
        let w = veh.weight_n();
        let m_r = turning_moment(0.6, w, 2.0, RunningGear::Tracks);
        let pivot = effort_step(&veh, &ground, 0.0, 0.5, -0.4, 0.4, 0.0, Slope::LEVEL);
        assert_relative_eq!(pivot.left_thrust_n, -0.05 * w / 2.0 - m_r / 1.6, max_relative = 1e-12);
        assert_relative_eq!(pivot.right_thrust_n, 0.05 * w / 2.0 + m_r / 1.6, max_relative = 1e-12);
        assert_relative_eq!(pivot.mechanical_power_w, 0.8 * (0.05 * w / 2.0 + m_r / 1.6), max_relative = 1e-12);
        let back = effort_step(&veh, &ground, -1.0, 0.0, -1.0, -1.0, 0.0, Slope::LEVEL);
        assert_relative_eq!(back.left_thrust_n, -0.05 * w / 2.0, max_relative = 1e-12);
        assert_relative_eq!(back.mechanical_power_w, 0.05 * w * 1.0, max_relative = 1e-12);
    }

    #[test]
    fn normal_load_falls_with_the_cosine_of_the_grade() {
        // On a 30 % grade N = W cos(atan 0.3) and the weight component per side is
        // W sin(atan 0.3) / 2 (statics of a body on an incline, common practice, no source).
        let (veh, ground) = wong_example();
        let g = 0.3_f64.atan();
        let (f_o, f_i) = side_thrusts(&veh, &ground, 0.0, 0.0, Slope::grade(g));
        let w = veh.weight_n();
        let expected = 0.05 * w * (1.0 / 1.09_f64.sqrt()) / 2.0 + w * (0.3 / 1.09_f64.sqrt()) / 2.0;
        assert_relative_eq!(f_o, expected, max_relative = 1e-12);
        assert_relative_eq!(f_i, expected, max_relative = 1e-12);
        assert_relative_eq!(
            side_thrust_limit_on_n(&veh, &ground, Slope::grade(g)),
            0.7 * w / 1.09_f64.sqrt() / 2.0,
            max_relative = 1e-12
        );
    }

    /// The demo carrier's numbers (m = 480 kg, B = 0.9 m) with a centre of gravity `h_m` up.
    fn carrier(h_m: f64) -> EffortVehicle {
        let mut veh = EffortVehicle::from_profile(&crate::vehicle::Profile::demo());
        veh.cog_height_m = Some(h_m);
        veh
    }

    #[test]
    fn the_downhill_side_carries_the_load_shifted_by_the_side_slope() {
        // Pure side slope of angle phi, left side higher (tan phi = 0.3): moments about the
        // vehicle's long axis at the ground (statics, common practice, no source) give
        // N_left = W cos(phi) / 2 - W h sin(phi) / B and N_right = W cos(phi) / 2 + W h sin(phi) / B.
        let (h, b) = (0.55, 0.9);
        let veh = carrier(h);
        let w = veh.weight_n();
        let phi = 0.3_f64.atan();
        let (n_left, n_right) = veh.side_loads_n(Slope::new(0.0, 0.3));
        assert_relative_eq!(n_left, w * phi.cos() / 2.0 - w * h * phi.sin() / b, max_relative = 1e-12);
        assert_relative_eq!(n_right, w * phi.cos() / 2.0 + w * h * phi.sin() / b, max_relative = 1e-12);
        // The right side higher: mirrored.
        let (l2, r2) = veh.side_loads_n(Slope::new(0.0, -0.3));
        assert_relative_eq!(l2, n_right, max_relative = 1e-12);
        assert_relative_eq!(r2, n_left, max_relative = 1e-12);
        // No height given: equal shares of W cos(phi).
        let mut unknown = veh;
        unknown.cog_height_m = None;
        let (a, c) = unknown.side_loads_n(Slope::new(0.0, 0.3));
        assert_relative_eq!(a, w * phi.cos() / 2.0, max_relative = 1e-12);
        assert_relative_eq!(c, a);
    }

    #[test]
    fn the_uphill_side_lifts_at_the_static_stability_factor() {
        // B / (2 h) = 0.9 / 1.1 (common practice for rollover screening): the uphill side's load
        // reaches zero there and stays at zero beyond.
        let veh = carrier(0.55);
        let ssf = 0.9 / 1.1;
        assert_relative_eq!(veh.tipping_ratio().expect("height"), ssf, max_relative = 1e-15);
        let (up, down) = veh.side_loads_n(Slope::new(0.0, ssf));
        assert!(up.abs() < 1e-9 * veh.weight_n(), "{up}");
        assert_relative_eq!(down, Slope::new(0.0, ssf).normal_load_n(veh.weight_n()), max_relative = 1e-12);
        let (up, _) = veh.side_loads_n(Slope::new(0.0, 1.2 * ssf));
        assert_eq!(up, 0.0);
    }

    #[test]
    fn normal_load_and_side_ratio_follow_the_ground_plane() {
        // Independent vector geometry: the ground z = tan(g) x + c y has the unit normal
        // n = (-tan g, -c, 1) / |.|; the unit along-track tangent t = (1, 0, tan g) / |.| and the
        // lateral axis l = n x t lie in it. Weight (0, 0, -W): normal load W n_z, across the
        // track |W l_z|.
        let w = 1000.0;
        for (tg, c) in [(0.0, 0.3), (0.2, 0.3), (-0.35, -0.15), (0.5, 0.0)] {
            let norm = |v: [f64; 3]| (v[0] * v[0] + v[1] * v[1] + v[2] * v[2]).sqrt();
            let n0 = [-tg, -c, 1.0];
            let n = n0.map(|x| x / norm(n0));
            let t0 = [1.0, 0.0, tg];
            let t = t0.map(|x| x / norm(t0));
            let l = [n[1] * t[2] - n[2] * t[1], n[2] * t[0] - n[0] * t[2], n[0] * t[1] - n[1] * t[0]];
            let slope = Slope::new(f64::atan(tg), c);
            let normal = slope.normal_load_n(w);
            assert_relative_eq!(normal, w * n[2], max_relative = 1e-12);
            assert_relative_eq!(slope.side_ratio().abs() * normal, (w * l[2]).abs(), epsilon = 1e-9);
            // Along the track, W sin(grade) as before.
            assert_relative_eq!(2.0 * slope.grade_force_per_side_n(w), (w * t[2]).abs() * tg.signum(), epsilon = 1e-9);
        }
    }

    #[test]
    fn each_side_rolls_on_its_own_load() {
        // Straight ahead across a 30 % side slope, left side higher: each side's thrust is f_r
        // times its own normal load (Wong 2008, rolling resistance), the right (downhill) side's
        // the larger; the traction limits follow the loads too.
        let veh = carrier(0.55);
        let ground = Ground { rolling_resistance: 0.06, traction_coefficient: 0.3, lateral_resistance_max: 0.35 };
        let slope = Slope::new(0.0, 0.3);
        let (n_left, n_right) = veh.side_loads_n(slope);
        let e = effort_step(&veh, &ground, 1.0, 0.0, 1.0, 1.0, 0.0, slope);
        assert_relative_eq!(e.left_thrust_n, 0.06 * n_left, max_relative = 1e-12);
        assert_relative_eq!(e.right_thrust_n, 0.06 * n_right, max_relative = 1e-12);
        assert_eq!(e.cross_slope, 0.3);
        let (lim_l, lim_r) = side_thrust_limits_n(&veh, &ground, slope);
        assert_relative_eq!(lim_l, 0.3 * n_left, max_relative = 1e-12);
        assert_relative_eq!(lim_r, 0.3 * n_right, max_relative = 1e-12);
    }

    #[test]
    fn outer_side_follows_the_turn_direction() {
        let (veh, ground) = wong_example();
        let left_turn = effort_step(&veh, &ground, 1.0, 0.2, 0.5, 1.5, 0.0, Slope::LEVEL);
        assert!(left_turn.right_thrust_n > left_turn.left_thrust_n);
        let right_turn = effort_step(&veh, &ground, 1.0, -0.2, 1.5, 0.5, 0.0, Slope::LEVEL);
        assert!(right_turn.left_thrust_n > right_turn.right_thrust_n);
        assert_relative_eq!(left_turn.outer_thrust_n, right_turn.outer_thrust_n);
    }
}

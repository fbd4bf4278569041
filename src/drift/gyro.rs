//! The gyro of gyro-aided dead reckoning (docs/drift.md, "Heading from the gyro").
//!
//! When localization is lost most vehicles keep their gyro, so the believed heading follows the
//! gyro's rate rather than the track model's yaw rate. The gyro reads the true yaw rate plus a
//! bias that is constant over a run (a new draw each run: turn-on to turn-on variation) plus white
//! rate noise, whose integral is the angle random walk: the standard error model of a gyro
//! (Groves 2013, "Principles of GNSS, Inertial, and Multisensor Integrated Navigation Systems",
//! 2nd ed., ch. 4, inertial sensor error characteristics; Titterton & Weston 2004, "Strapdown
//! Inertial Navigation Technology", 2nd ed.). Over a step of dt the measured rate is
//! omega + b + N z / sqrt(dt) with z standard normal, so the heading error after t seconds is
//! b t plus a random walk of variance N^2 t.
//!
//! Check value (derived in the tests from this model): a constant bias b on a straight driven at
//! speed v turns the believed heading b t away from the true one, and the position error across
//! the track grows as the integral of v b t, v b t^2 / 2.
//!
//! Units: the profile gives degrees per hour (bias) and degrees per square-root hour (angle
//! random walk), the trade's units; inside, rad/s and rad/sqrt(s).

use rand::Rng;
use rand_distr::{Distribution, StandardNormal};
use serde::Serialize;

use crate::vehicle::ImuSpec;

/// Where the believed heading comes from while localization is lost.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize)]
#[serde(rename_all = "lowercase")]
pub enum HeadingSource {
    /// The odometry model's yaw rate (the side speeds through the model).
    Odometry,
    /// The gyro of the profile's `[imu]`.
    Gyro,
}

impl HeadingSource {
    pub fn name(self) -> &'static str {
        match self {
            HeadingSource::Odometry => "odometry",
            HeadingSource::Gyro => "gyro",
        }
    }
}

/// Degrees per hour to radians per second.
pub fn deg_per_h_to_radps(x: f64) -> f64 {
    x.to_radians() / 3600.0
}

/// Degrees per square-root hour to radians per square-root second (sqrt(3600 s) = 60).
pub fn deg_per_sqrt_h_to_rad_per_sqrt_s(x: f64) -> f64 {
    x.to_radians() / 60.0
}

/// A gyro's error model in SI units.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Gyro {
    /// Standard deviation of the run's constant bias, rad/s.
    pub bias_sd_radps: f64,
    /// Angle random walk N, rad/sqrt(s).
    pub arw_rad_per_sqrt_s: f64,
}

impl Gyro {
    pub fn from_spec(imu: &ImuSpec) -> Gyro {
        Gyro {
            bias_sd_radps: deg_per_h_to_radps(imu.gyro_bias_sd_deg_per_h),
            arw_rad_per_sqrt_s: deg_per_sqrt_h_to_rad_per_sqrt_s(imu.gyro_arw_deg_per_sqrt_h),
        }
    }

    /// The bias of one run: N(0, bias_sd^2). Uses one standard normal from `rng`.
    pub fn draw_bias<R: Rng + ?Sized>(&self, rng: &mut R) -> f64 {
        let z: f64 = StandardNormal.sample(rng);
        self.bias_sd_radps * z
    }

    /// The rate the gyro reads over a step of `dt_s` when the vehicle turns at `true_radps`
    /// with run bias `bias_radps`. Uses one standard normal from `rng` when the angle random
    /// walk is not zero, none otherwise.
    #[inline]
    pub fn measure<R: Rng + ?Sized>(&self, true_radps: f64, bias_radps: f64, dt_s: f64, rng: &mut R) -> f64 {
        if self.arw_rad_per_sqrt_s == 0.0 || dt_s <= 0.0 {
            return true_radps + bias_radps;
        }
        let z: f64 = StandardNormal.sample(rng);
        true_radps + bias_radps + self.arw_rad_per_sqrt_s * z / dt_s.sqrt()
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::kinematics::{Pose, Twist};
    use approx::assert_relative_eq;
    use rand::rngs::ChaCha8Rng;
    use rand::SeedableRng;

    #[test]
    fn units_convert() {
        // 3600 deg/h = 1 deg/s; 60 deg/sqrt(h) = 1 deg/sqrt(s).
        assert_relative_eq!(deg_per_h_to_radps(3600.0), 1f64.to_radians(), epsilon = 1e-15);
        assert_relative_eq!(deg_per_sqrt_h_to_rad_per_sqrt_s(60.0), 1f64.to_radians(), epsilon = 1e-15);
    }

    #[test]
    fn a_constant_bias_on_a_straight_gives_v_b_t_squared_over_two_across() {
        // Derived from the error model (module text): the true vehicle drives straight east at
        // v; the believed heading turns at the bias b, so after t seconds the believed position
        // lies v b t^2 / 2 to the left of the true one (small angles: b t = 0.01 rad here, so the
        // second-order terms are 1e-4 relative). Integrated with the same exact SE(2) steps as
        // the Monte Carlo.
        let gyro = Gyro { bias_sd_radps: 0.0, arw_rad_per_sqrt_s: 0.0 };
        let (v, b, dt) = (1.5, deg_per_h_to_radps(20.0), 0.05);
        let mut rng = ChaCha8Rng::seed_from_u64(1);
        let (mut truth, mut believed) = (Pose::new(0.0, 0.0, 0.0), Pose::new(0.0, 0.0, 0.0));
        let steps = 2000;
        for _ in 0..steps {
            let twist = Twist { vx_mps: v, vy_mps: 0.0, omega_radps: 0.0 };
            let omega = gyro.measure(twist.omega_radps, b, dt, &mut rng);
            truth = truth.step(twist, dt);
            believed = believed.step(Twist { omega_radps: omega, ..twist }, dt);
        }
        let t = steps as f64 * dt;
        let cross_m = believed.y_m - truth.y_m;
        assert_relative_eq!(cross_m, v * b * t * t / 2.0, max_relative = 1e-3);
        assert_relative_eq!(believed.yaw_rad - truth.yaw_rad, b * t, max_relative = 1e-12);
    }

    #[test]
    fn angle_random_walk_grows_with_the_square_root_of_time() {
        // Heading error variance N^2 t (module text): over 400 runs of 100 s with
        // N = 0.3 deg/sqrt(h), the sample variance lies within 20 % of N^2 t (its relative
        // standard error is sqrt(2 / 400) = 7 %; common practice, no source).
        let gyro = Gyro { bias_sd_radps: 0.0, arw_rad_per_sqrt_s: deg_per_sqrt_h_to_rad_per_sqrt_s(0.3) };
        let mut rng = ChaCha8Rng::seed_from_u64(2);
        let (dt, steps) = (0.05, 2000);
        let errors: Vec<f64> =
            (0..400).map(|_| (0..steps).map(|_| gyro.measure(0.0, 0.0, dt, &mut rng) * dt).sum()).collect();
        let var = errors.iter().map(|e| e * e).sum::<f64>() / errors.len() as f64;
        let n = gyro.arw_rad_per_sqrt_s;
        assert_relative_eq!(var, n * n * steps as f64 * dt, max_relative = 0.2);
    }
}

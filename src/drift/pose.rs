//! A pose that carries the sine and cosine of its yaw, stepped by the exact SE(2) exponential of
//! a constant body twist (Lynch & Park 2017, "Modern Robotics", ch. 3; docs/method.md, Drift).
//!
//! The Monte Carlo steps two poses (true and believed) tens of millions of times. Instead of
//! calling the library's sine and cosine of the yaw every step, the pose keeps (sin, cos) and
//! rotates them by the step's turn theta = omega dt, renormalised to unit length each step so
//! rounding does not accumulate. The body displacement uses the series of sin(theta)/theta and
//! (1 - cos(theta))/theta, which needs no division by omega and no branch at omega = 0:
//! dx = (vx S - vy C) dt, dy = (vx C + vy S) dt with S = sin(theta)/theta, C = (1 - cos(theta))/theta.
//! The result agrees with [`Pose::step`] to rounding (about 1e-15 relative a step).
//!
//! Units: metres, seconds, radians; local frame x east, y north, yaw anticlockwise from x.

use crate::kinematics::{Pose, Twist};

/// Largest |theta| of a step for which the series are used (the first omitted terms,
/// theta^14/15! and theta^13/14!, are below 1e-16 at 0.5); larger turns use the library.
const SERIES_MAX_RAD: f64 = 0.5;

/// A pose with the sine and cosine of its yaw.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct CarriedPose {
    pub pose: Pose,
    /// (sin, cos) of `pose.yaw_rad`, as [`f64::sin_cos`] orders them.
    pub sin_cos: (f64, f64),
}

impl CarriedPose {
    pub fn new(pose: Pose) -> CarriedPose {
        CarriedPose { pose, sin_cos: pose.yaw_rad.sin_cos() }
    }

    /// Applies the constant body twist for `dt_s` seconds.
    #[inline]
    pub fn step(&mut self, twist: Twist, dt_s: f64) {
        let theta = twist.omega_radps * dt_s;
        let (sinc, cosc, s, c) = if theta.abs() <= SERIES_MAX_RAD {
            let t2 = theta * theta;
            // sin(t)/t = 1 - t^2/3! + t^4/5! - ...; (1 - cos t)/t = t (1/2! - t^2/4! + t^4/6! - ...).
            let sinc = 1.0
                + t2 * (-1.0 / 6.0
                    + t2 * (1.0 / 120.0 + t2 * (-1.0 / 5040.0 + t2 * (1.0 / 362_880.0 + t2 * (-1.0 / 39_916_800.0)))));
            let cosc = theta
                * (0.5
                    + t2 * (-1.0 / 24.0
                        + t2 * (1.0 / 720.0
                            + t2 * (-1.0 / 40_320.0 + t2 * (1.0 / 3_628_800.0 + t2 * (-1.0 / 479_001_600.0))))));
            (sinc, cosc, theta * sinc, 1.0 - theta * cosc)
        } else {
            let (s, c) = theta.sin_cos();
            (s / theta, (1.0 - c) / theta, s, c)
        };
        let (vx, vy) = (twist.vx_mps * dt_s, twist.vy_mps * dt_s);
        let (dx, dy) = (vx * sinc - vy * cosc, vx * cosc + vy * sinc);
        let (sy, cy) = self.sin_cos;
        self.pose = Pose {
            x_m: self.pose.x_m + cy * dx - sy * dy,
            y_m: self.pose.y_m + sy * dx + cy * dy,
            yaw_rad: self.pose.yaw_rad + theta,
        };
        let (ns, nc) = (sy * c + cy * s, cy * c - sy * s);
        // One Newton step towards 1/sqrt(r) (r is 1 to rounding) keeps the pair on the unit circle.
        let k = 1.5 - 0.5 * (ns * ns + nc * nc);
        self.sin_cos = (ns * k, nc * k);
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use approx::assert_relative_eq;

    #[test]
    fn agrees_with_the_exact_step_over_many_steps() {
        // Reference: Pose::step (the SE(2) exponential with the library's sine and cosine),
        // stepped alongside; turns from zero to past the series range, side slip included.
        for &(vx, vy, w, dt) in
            &[(1.2, 0.0, 0.0, 0.05), (1.2, -0.1, 0.35, 0.05), (0.8, 0.05, -1.1, 0.05), (1.0, 0.2, 7.0, 0.1)]
        {
            let twist = Twist { vx_mps: vx, vy_mps: vy, omega_radps: w };
            let start = Pose::new(3.0, -2.0, 2.9);
            let (mut exact, mut carried) = (start, CarriedPose::new(start));
            for _ in 0..20_000 {
                exact = exact.step(twist, dt);
                carried.step(twist, dt);
            }
            assert_relative_eq!(carried.pose.x_m, exact.x_m, epsilon = 1e-9);
            assert_relative_eq!(carried.pose.y_m, exact.y_m, epsilon = 1e-9);
            assert_relative_eq!(carried.pose.yaw_rad, exact.yaw_rad, epsilon = 1e-9);
            // Against the turn computed in one go: the summed yaw itself carries rounding of up to
            // 1e-8 rad after 20 000 steps of 0.7 rad.
            let (s, c) = (start.yaw_rad + 20_000.0 * (w * dt)).sin_cos();
            assert_relative_eq!(carried.sin_cos.0, s, epsilon = 1e-9);
            assert_relative_eq!(carried.sin_cos.1, c, epsilon = 1e-9);
            assert_relative_eq!(carried.sin_cos.0.hypot(carried.sin_cos.1), 1.0, epsilon = 1e-15);
        }
    }

    #[test]
    fn quarter_turn_reference() {
        // Lynch & Park 2017, "Modern Robotics", SE(2) exponential: twist (1, 0, pi/2) for 1 s
        // from the origin ends at (2/pi, 2/pi, pi/2); here in 100 steps inside the series range.
        let mut p = CarriedPose::new(Pose::default());
        let half_pi = std::f64::consts::FRAC_PI_2;
        for _ in 0..100 {
            p.step(Twist { vx_mps: 1.0, vy_mps: 0.0, omega_radps: half_pi }, 0.01);
        }
        let pi = std::f64::consts::PI;
        assert_relative_eq!(p.pose.x_m, 2.0 / pi, epsilon = 1e-13);
        assert_relative_eq!(p.pose.y_m, 2.0 / pi, epsilon = 1e-13);
        assert_relative_eq!(p.sin_cos.0, 1.0, epsilon = 1e-14);
        assert_relative_eq!(p.sin_cos.1, 0.0, epsilon = 1e-14);
    }
}

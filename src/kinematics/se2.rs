//! Planar poses and twists, and exact integration of a constant body twist over a step
//! (the SE(2) exponential; Lynch & Park 2017, "Modern Robotics", ch. 3). Local frame x east,
//! y north, yaw anticlockwise from x; body frame x forward, y left.

/// A planar pose in the local frame.
#[derive(Debug, Clone, Copy, PartialEq, Default)]
pub struct Pose {
    pub x_m: f64,
    pub y_m: f64,
    pub yaw_rad: f64,
}

/// A body-frame twist.
#[derive(Debug, Clone, Copy, PartialEq, Default)]
pub struct Twist {
    pub vx_mps: f64,
    pub vy_mps: f64,
    pub omega_radps: f64,
}

impl Pose {
    pub fn new(x_m: f64, y_m: f64, yaw_rad: f64) -> Self {
        Pose { x_m, y_m, yaw_rad }
    }

    /// Applies the constant twist for `dt_s` seconds (exact exponential map):
    /// theta = omega dt; body displacement
    /// dx = (vx sin theta - vy (1 - cos theta)) / omega, dy = (vx (1 - cos theta) + vy sin theta) / omega,
    /// rotated by the current yaw; for |theta| < 1e-9 the straight step (vx dt, vy dt).
    #[inline]
    pub fn step(self, twist: Twist, dt_s: f64) -> Pose {
        self.step_with(twist, dt_s, self.yaw_rad.sin_cos())
    }

    /// [`Pose::step`] given `(sin, cos)` of this pose's yaw, as [`f64::sin_cos`] returns them (a
    /// caller that already has them for [`Pose::to_body_with`] saves computing them again; the
    /// result is the same to the bit).
    #[inline]
    pub fn step_with(self, twist: Twist, dt_s: f64, sin_cos_yaw: (f64, f64)) -> Pose {
        let theta = twist.omega_radps * dt_s;
        let (dx, dy) = if theta.abs() < 1e-9 {
            (twist.vx_mps * dt_s, twist.vy_mps * dt_s)
        } else {
            let (s, c) = small_sin_cos(theta);
            let inv_w = 1.0 / twist.omega_radps;
            // 1 - cos(theta) = sin^2(theta) / (1 + cos(theta)) keeps precision for small steps.
            let one_minus_c = if c > 0.0 { s * s / (1.0 + c) } else { 1.0 - c };
            (
                (twist.vx_mps * s - twist.vy_mps * one_minus_c) * inv_w,
                (twist.vx_mps * one_minus_c + twist.vy_mps * s) * inv_w,
            )
        };
        let (sy, cy) = sin_cos_yaw;
        Pose { x_m: self.x_m + cy * dx - sy * dy, y_m: self.y_m + sy * dx + cy * dy, yaw_rad: self.yaw_rad + theta }
    }

    /// A local-frame point expressed in this pose's body frame.
    #[inline]
    pub fn to_body(self, x_m: f64, y_m: f64) -> (f64, f64) {
        self.to_body_with(x_m, y_m, self.yaw_rad.sin_cos())
    }

    /// [`Pose::to_body`] given `(sin, cos)` of this pose's yaw (see [`Pose::step_with`]).
    #[inline]
    pub fn to_body_with(self, x_m: f64, y_m: f64, sin_cos_yaw: (f64, f64)) -> (f64, f64) {
        let (s, c) = sin_cos_yaw;
        let (dx, dy) = (x_m - self.x_m, y_m - self.y_m);
        (c * dx + s * dy, -s * dx + c * dy)
    }
}

/// sin and cos, by their Taylor series for the small angles of one control step (|a| <= 0.25:
/// the first omitted terms, a^13/13! and a^14/14!, are below 1e-17, under f64 rounding), and
/// by the library otherwise.
#[inline]
fn small_sin_cos(a: f64) -> (f64, f64) {
    if a.abs() > 0.25 {
        return a.sin_cos();
    }
    let a2 = a * a;
    let s = a * (1.0 - a2 / 6.0 * (1.0 - a2 / 20.0 * (1.0 - a2 / 42.0 * (1.0 - a2 / 72.0 * (1.0 - a2 / 110.0)))));
    let c = 1.0
        - a2 / 2.0 * (1.0 - a2 / 12.0 * (1.0 - a2 / 30.0 * (1.0 - a2 / 56.0 * (1.0 - a2 / 90.0 * (1.0 - a2 / 132.0)))));
    (s, c)
}

/// Wraps an angle to (-pi, pi].
#[inline]
pub fn wrap_angle(a_rad: f64) -> f64 {
    let two_pi = std::f64::consts::TAU;
    let mut a = a_rad % two_pi;
    if a <= -std::f64::consts::PI {
        a += two_pi;
    } else if a > std::f64::consts::PI {
        a -= two_pi;
    }
    a
}

#[cfg(test)]
mod tests {
    use super::*;
    use approx::assert_relative_eq;
    use std::f64::consts::{FRAC_PI_2, PI};

    #[test]
    fn exponential_quarter_turn_reference() {
        // Lynch & Park 2017, "Modern Robotics", SE(2) exponential: twist (1, 0, pi/2) for 1 s
        // from the origin ends at (2/pi, 2/pi, pi/2).
        let p = Pose::default().step(Twist { vx_mps: 1.0, vy_mps: 0.0, omega_radps: FRAC_PI_2 }, 1.0);
        assert_relative_eq!(p.x_m, 2.0 / PI, epsilon = 1e-12);
        assert_relative_eq!(p.y_m, 2.0 / PI, epsilon = 1e-12);
        assert_relative_eq!(p.yaw_rad, FRAC_PI_2, epsilon = 1e-12);
    }

    #[test]
    fn steps_compose_exactly() {
        // Exactness: ten steps of 0.1 s equal one step of 1 s for a constant twist.
        let t = Twist { vx_mps: 1.3, vy_mps: -0.2, omega_radps: 0.7 };
        let start = Pose::new(2.0, -1.0, 0.4);
        let one = start.step(t, 1.0);
        let mut many = start;
        for _ in 0..10 {
            many = many.step(t, 0.1);
        }
        assert_relative_eq!(one.x_m, many.x_m, epsilon = 1e-12);
        assert_relative_eq!(one.y_m, many.y_m, epsilon = 1e-12);
        assert_relative_eq!(one.yaw_rad, many.yaw_rad, epsilon = 1e-12);
    }

    #[test]
    fn straight_step_and_small_angle_limit_agree() {
        let p0 = Pose::new(0.0, 0.0, 1.0);
        let straight = p0.step(Twist { vx_mps: 1.0, vy_mps: 0.5, omega_radps: 0.0 }, 2.0);
        let nearly = p0.step(Twist { vx_mps: 1.0, vy_mps: 0.5, omega_radps: 1e-7 }, 2.0);
        assert_relative_eq!(straight.x_m, nearly.x_m, epsilon = 1e-6);
        assert_relative_eq!(straight.y_m, nearly.y_m, epsilon = 1e-6);
    }

    #[test]
    fn to_body_inverts_rotation() {
        let p = Pose::new(1.0, 2.0, FRAC_PI_2);
        let (bx, by) = p.to_body(1.0, 5.0);
        assert_relative_eq!(bx, 3.0, epsilon = 1e-12);
        assert_relative_eq!(by, 0.0, epsilon = 1e-12);
    }

    #[test]
    fn small_angle_series_matches_the_library() {
        for k in -300..=300 {
            let a = k as f64 * 0.001;
            let (s, c) = small_sin_cos(a);
            assert!((s - a.sin()).abs() <= 2.0 * f64::EPSILON * a.abs().max(1e-300), "sin {a}");
            assert!((c - a.cos()).abs() <= 2.0 * f64::EPSILON, "cos {a}");
        }
    }

    #[test]
    fn wrap_angle_range() {
        for k in -20..20 {
            let a = k as f64 * 0.77;
            let w = wrap_angle(a);
            assert!(w > -PI && w <= PI);
            assert_relative_eq!(w.sin(), a.sin(), epsilon = 1e-9);
            assert_relative_eq!(w.cos(), a.cos(), epsilon = 1e-9);
        }
    }
}

//! The six model families of docs/method.md, Model families, each with its forward twist and inverse.

use super::{MotionModel, Twist};

/// Ideal differential drive: vx = (vl+vr)/2, omega = (vr-vl)/B, no side slip
/// (Siegwart, Nourbakhsh & Scaramuzza 2011, "Introduction to Autonomous Mobile Robots", 2nd ed.).
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Ideal {
    pub track_width_m: f64,
}

impl MotionModel for Ideal {
    #[inline]
    fn twist(&self, left_mps: f64, right_mps: f64) -> Twist {
        Twist {
            vx_mps: 0.5 * (left_mps + right_mps),
            vy_mps: 0.0,
            omega_radps: (right_mps - left_mps) / self.track_width_m,
        }
    }
    #[inline]
    fn inverse(&self, vx_mps: f64, omega_radps: f64) -> Option<(f64, f64)> {
        let half = 0.5 * omega_radps * self.track_width_m;
        Some((vx_mps - half, vx_mps + half))
    }
    fn params(&self) -> Vec<f64> {
        Vec::new()
    }
}

/// Symmetric extended differential drive: a common slip factor `alpha` on both sides and an
/// effective track width `track_expansion * B` (Mandow, Martinez, Morales, Blanco, Garcia-Cerezo
/// & Gonzalez 2007, "Experimental kinematics for wheeled skid-steer mobile robots", IROS; their
/// steering efficiency is 1/track_expansion).
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct ExtendedSymmetric {
    pub track_width_m: f64,
    pub alpha: f64,
    pub track_expansion: f64,
}

impl MotionModel for ExtendedSymmetric {
    #[inline]
    fn twist(&self, left_mps: f64, right_mps: f64) -> Twist {
        Twist {
            vx_mps: self.alpha * 0.5 * (left_mps + right_mps),
            vy_mps: 0.0,
            omega_radps: self.alpha * (right_mps - left_mps) / (self.track_expansion * self.track_width_m),
        }
    }
    #[inline]
    fn inverse(&self, vx_mps: f64, omega_radps: f64) -> Option<(f64, f64)> {
        if self.alpha.abs() < 1e-9 {
            return None;
        }
        let sum_half = vx_mps / self.alpha;
        let diff_half = 0.5 * omega_radps * self.track_expansion * self.track_width_m / self.alpha;
        Some((sum_half - diff_half, sum_half + diff_half))
    }
    fn params(&self) -> Vec<f64> {
        vec![self.alpha, self.track_expansion]
    }
}

/// Extended differential drive with a slip factor per side (Mandow et al. 2007, as above).
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Extended {
    pub track_width_m: f64,
    pub alpha_left: f64,
    pub alpha_right: f64,
    pub track_expansion: f64,
}

impl MotionModel for Extended {
    #[inline]
    fn twist(&self, left_mps: f64, right_mps: f64) -> Twist {
        let (l, r) = (self.alpha_left * left_mps, self.alpha_right * right_mps);
        Twist { vx_mps: 0.5 * (l + r), vy_mps: 0.0, omega_radps: (r - l) / (self.track_expansion * self.track_width_m) }
    }
    #[inline]
    fn inverse(&self, vx_mps: f64, omega_radps: f64) -> Option<(f64, f64)> {
        if self.alpha_left.abs() < 1e-9 || self.alpha_right.abs() < 1e-9 {
            return None;
        }
        let half = 0.5 * omega_radps * self.track_expansion * self.track_width_m;
        Some(((vx_mps - half) / self.alpha_left, (vx_mps + half) / self.alpha_right))
    }
    fn params(&self) -> Vec<f64> {
        vec![self.alpha_left, self.alpha_right, self.track_expansion]
    }
}

/// Instantaneous centres of rotation of the two tracks: y_l > 0 > y_r lateral ICR positions and
/// x_v the longitudinal position of the vehicle ICR (Martinez, Mandow, Morales, Pedraza &
/// Garcia-Cerezo 2005, "Approximating kinematics for tracked mobile robots", IJRR 24(10)).
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Icr {
    pub icr_left_m: f64,
    pub icr_right_m: f64,
    pub icr_long_m: f64,
}

impl MotionModel for Icr {
    #[inline]
    fn twist(&self, left_mps: f64, right_mps: f64) -> Twist {
        let span = self.icr_left_m - self.icr_right_m;
        let omega = (right_mps - left_mps) / span;
        Twist {
            vx_mps: (right_mps * self.icr_left_m - left_mps * self.icr_right_m) / span,
            vy_mps: -self.icr_long_m * omega,
            omega_radps: omega,
        }
    }
    #[inline]
    fn inverse(&self, vx_mps: f64, omega_radps: f64) -> Option<(f64, f64)> {
        // From omega = (vr - vl)/(y_l - y_r) and vx = (vr y_l - vl y_r)/(y_l - y_r):
        // vl = vx - omega y_l, vr = vx - omega y_r.
        Some((vx_mps - omega_radps * self.icr_left_m, vx_mps - omega_radps * self.icr_right_m))
    }
    fn params(&self) -> Vec<f64> {
        vec![self.icr_left_m, self.icr_right_m, self.icr_long_m]
    }
}

/// A free linear map (vx, vy, omega) = J (vl, vr), J 3x2 row-major.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Linear {
    pub j: [[f64; 2]; 3],
}

impl MotionModel for Linear {
    #[inline]
    fn twist(&self, left_mps: f64, right_mps: f64) -> Twist {
        let j = &self.j;
        Twist {
            vx_mps: j[0][0] * left_mps + j[0][1] * right_mps,
            vy_mps: j[1][0] * left_mps + j[1][1] * right_mps,
            omega_radps: j[2][0] * left_mps + j[2][1] * right_mps,
        }
    }
    #[inline]
    fn inverse(&self, vx_mps: f64, omega_radps: f64) -> Option<(f64, f64)> {
        let j = &self.j;
        let det = j[0][0] * j[2][1] - j[0][1] * j[2][0];
        let scale = j[0][0].abs().max(j[0][1].abs()) * j[2][0].abs().max(j[2][1].abs());
        if det.abs() <= 1e-9 * scale.max(1e-300) {
            return None;
        }
        Some(((j[2][1] * vx_mps - j[0][1] * omega_radps) / det, (j[0][0] * omega_radps - j[2][0] * vx_mps) / det))
    }
    fn params(&self) -> Vec<f64> {
        self.j.iter().flatten().copied().collect()
    }
}

/// One row of an `extended-scheduled` table: at commanded curvature `curvature_per_m` the
/// symmetric extended model has these parameters.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct ScheduleRow {
    pub curvature_per_m: f64,
    pub alpha: f64,
    pub track_expansion: f64,
}

/// `extended-symmetric` whose alpha and track_expansion are piecewise linear in the commanded
/// curvature |kappa_cmd| = |2 (vr - vl) / (B (vl + vr))|, clamped at the table ends. Rows are
/// sorted by curvature (the profile reader checks this) and there is at least one.
#[derive(Debug, Clone, PartialEq)]
pub struct ExtendedScheduled {
    pub track_width_m: f64,
    pub schedule: Vec<ScheduleRow>,
}

impl ExtendedScheduled {
    /// (alpha, track_expansion) at commanded curvature magnitude `curvature_per_m`.
    #[inline]
    pub fn at(&self, curvature_per_m: f64) -> (f64, f64) {
        let rows = &self.schedule;
        let (Some(first), Some(last)) = (rows.first(), rows.last()) else {
            return (1.0, 1.0);
        };
        if !(curvature_per_m > first.curvature_per_m) {
            return (first.alpha, first.track_expansion);
        }
        if curvature_per_m >= last.curvature_per_m {
            return (last.alpha, last.track_expansion);
        }
        let i = rows.partition_point(|r| r.curvature_per_m <= curvature_per_m);
        let (a, b) = (&rows[i - 1], &rows[i]);
        let t = (curvature_per_m - a.curvature_per_m) / (b.curvature_per_m - a.curvature_per_m);
        (a.alpha + t * (b.alpha - a.alpha), a.track_expansion + t * (b.track_expansion - a.track_expansion))
    }

    fn commanded_curvature(&self, left_mps: f64, right_mps: f64) -> f64 {
        let sum = left_mps + right_mps;
        if sum.abs() < 1e-12 {
            return f64::INFINITY;
        }
        (2.0 * (right_mps - left_mps) / (self.track_width_m * sum)).abs()
    }
}

impl MotionModel for ExtendedScheduled {
    #[inline]
    fn twist(&self, left_mps: f64, right_mps: f64) -> Twist {
        let (alpha, chi) = self.at(self.commanded_curvature(left_mps, right_mps));
        ExtendedSymmetric { track_width_m: self.track_width_m, alpha, track_expansion: chi }.twist(left_mps, right_mps)
    }

    /// The actual curvature is kappa_cmd / chi(kappa_cmd); the commanded curvature giving the
    /// wanted actual curvature is found by bisection (60 halvings, no allocation), assuming the
    /// actual curvature grows with the commanded one, as it does for any physical table.
    fn inverse(&self, vx_mps: f64, omega_radps: f64) -> Option<(f64, f64)> {
        let b = self.track_width_m;
        if vx_mps.abs() < 1e-12 {
            let (alpha, chi) = self.at(f64::INFINITY);
            return ExtendedSymmetric { track_width_m: b, alpha, track_expansion: chi }.inverse(vx_mps, omega_radps);
        }
        let want = (omega_radps / vx_mps).abs();
        let max_chi = self.schedule.iter().map(|r| r.track_expansion).fold(1.0, f64::max);
        let (mut lo, mut hi) = (0.0_f64, want * max_chi.max(1.0) * 2.0 + 1e-12);
        for _ in 0..60 {
            let mid = 0.5 * (lo + hi);
            let (_, chi) = self.at(mid);
            if mid / chi < want {
                lo = mid;
            } else {
                hi = mid;
            }
        }
        let (alpha, chi) = self.at(0.5 * (lo + hi));
        ExtendedSymmetric { track_width_m: b, alpha, track_expansion: chi }.inverse(vx_mps, omega_radps)
    }

    fn params(&self) -> Vec<f64> {
        self.schedule.iter().flat_map(|r| [r.curvature_per_m, r.alpha, r.track_expansion]).collect()
    }
}

#[cfg(test)]
mod tests {
    use super::super::{Family, Model, MotionModel};
    use super::*;
    use approx::assert_relative_eq;

    const B: f64 = 0.9;

    fn all_models() -> Vec<Model> {
        vec![
            Model::Ideal(Ideal { track_width_m: B }),
            Model::ExtendedSymmetric(ExtendedSymmetric { track_width_m: B, alpha: 0.9, track_expansion: 1.5 }),
            Model::Extended(Extended { track_width_m: B, alpha_left: 0.85, alpha_right: 0.95, track_expansion: 1.4 }),
            Model::Icr(Icr { icr_left_m: 0.7, icr_right_m: -0.6, icr_long_m: 0.05 }),
            Model::Linear(Linear { j: [[0.45, 0.47], [0.01, -0.02], [-0.8, 0.75]] }),
            Model::ExtendedScheduled(ExtendedScheduled {
                track_width_m: B,
                schedule: vec![
                    ScheduleRow { curvature_per_m: 0.0, alpha: 0.95, track_expansion: 1.2 },
                    ScheduleRow { curvature_per_m: 1.0, alpha: 0.85, track_expansion: 1.6 },
                    ScheduleRow { curvature_per_m: 3.0, alpha: 0.7, track_expansion: 2.2 },
                ],
            }),
        ]
    }

    #[test]
    fn ideal_circle_radius_reference() {
        // Differential drive (Siegwart, Nourbakhsh & Scaramuzza 2011, "Introduction to Autonomous
        // Mobile Robots", sec. 3.2): constant side speeds drive a circle of radius
        // R = (B/2)(vl + vr)/(vr - vl). Integrate a full turn and measure the circle.
        let (vl, vr) = (0.8, 1.2);
        let expected_r = 0.5 * B * (vl + vr) / (vr - vl);
        let m = Ideal { track_width_m: B };
        let mut p = crate::kinematics::Pose::default();
        let dt = 0.01;
        let mut max_y: f64 = 0.0;
        let steps = (std::f64::consts::TAU / ((vr - vl) / B) / dt) as usize;
        for _ in 0..steps {
            p = p.step(m.twist(vl, vr), dt);
            max_y = max_y.max(p.y_m);
        }
        // Starting at the origin heading +x, the centre is (0, R): the farthest point is y = 2R.
        assert_relative_eq!(max_y, 2.0 * expected_r, max_relative = 1e-4);
    }

    #[test]
    fn icr_with_half_track_is_ideal_reference() {
        // Martinez et al. 2005 (IJRR): with y_l = -y_r = B/2 and x_v = 0 the ICR model is the
        // ideal differential drive.
        let icr = Icr { icr_left_m: B / 2.0, icr_right_m: -B / 2.0, icr_long_m: 0.0 };
        let ideal = Ideal { track_width_m: B };
        for (l, r) in [(1.0, 1.0), (0.3, 1.1), (-0.5, 0.5), (1.7, -0.2)] {
            let (a, b) = (icr.twist(l, r), ideal.twist(l, r));
            assert_relative_eq!(a.vx_mps, b.vx_mps, epsilon = 1e-12);
            assert_relative_eq!(a.vy_mps, b.vy_mps, epsilon = 1e-12);
            assert_relative_eq!(a.omega_radps, b.omega_radps, epsilon = 1e-12);
        }
    }

    #[test]
    fn extended_with_unit_parameters_is_ideal_reference() {
        // Mandow et al. 2007 (IROS): alpha = 1 and track expansion 1 is the ideal model.
        let sym = ExtendedSymmetric { track_width_m: B, alpha: 1.0, track_expansion: 1.0 };
        let ext = Extended { track_width_m: B, alpha_left: 1.0, alpha_right: 1.0, track_expansion: 1.0 };
        let ideal = Ideal { track_width_m: B };
        for (l, r) in [(1.0, 1.0), (0.3, 1.1), (-0.5, 0.5)] {
            let i = ideal.twist(l, r);
            for t in [sym.twist(l, r), ext.twist(l, r)] {
                assert_relative_eq!(t.vx_mps, i.vx_mps, epsilon = 1e-12);
                assert_relative_eq!(t.omega_radps, i.omega_radps, epsilon = 1e-12);
            }
        }
    }

    #[test]
    fn inverse_recovers_vx_and_omega_for_every_family() {
        for m in all_models() {
            for (vx, w) in [(1.0, 0.0), (1.2, 0.4), (0.5, -0.8), (0.8, 1.5)] {
                let (l, r) = m.inverse(vx, w).expect("invertible");
                let t = m.twist(l, r);
                assert_relative_eq!(t.vx_mps, vx, epsilon = 1e-7);
                assert_relative_eq!(t.omega_radps, w, epsilon = 1e-7);
            }
        }
    }

    #[test]
    fn zero_side_speeds_give_no_motion() {
        for m in all_models() {
            let t = m.twist(0.0, 0.0);
            assert_eq!((t.vx_mps, t.vy_mps, t.omega_radps), (0.0, 0.0, 0.0), "{:?}", m.family());
        }
    }

    #[test]
    fn params_round_trip() {
        for m in all_models() {
            let f = m.family();
            if f == Family::ExtendedScheduled {
                continue;
            }
            let again = Model::from_params(f, &m.params(), B).expect("rebuild");
            assert_eq!(again, m);
            assert_eq!(Family::from_name(f.name()), Some(f));
        }
    }

    #[test]
    fn schedule_interpolates_and_clamps() {
        let Model::ExtendedScheduled(s) = all_models().remove(5) else { unreachable!() };
        assert_eq!(s.at(-1.0), (0.95, 1.2));
        assert_eq!(s.at(10.0), (0.7, 2.2));
        let (a, c) = s.at(0.5);
        assert_relative_eq!(a, 0.9, epsilon = 1e-12);
        assert_relative_eq!(c, 1.4, epsilon = 1e-12);
    }

    #[test]
    fn singular_linear_model_has_no_inverse() {
        let m = Linear { j: [[0.5, 0.5], [0.0, 0.0], [0.5, 0.5]] };
        assert!(m.inverse(1.0, 0.2).is_none());
    }
}

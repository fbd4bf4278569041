//! The parameter vector of each model family as the fit sees it, the body twist it gives for
//! measured side speeds, and the twist's derivatives with respect to the parameters (for the
//! analytic Jacobian of the integrated prediction error). Twists and parameters follow docs/method.md, Model families
//! exactly, so a fitted vector turns into the same [`Model`] that `check` drives.
//!
//! `extended-scheduled` fits (alpha, track_expansion) at fixed nodes of commanded curvature
//! (1/m) chosen from the data; its vector is [alpha_0, track_expansion_0, alpha_1, ...].

use nalgebra::DMatrix;

use crate::kinematics::{ExtendedScheduled, Family, Model, ScheduleRow, Twist};

/// Most parameters of any family (six schedule rows of two).
pub const MAX_PARAMS: usize = 12;
/// Most rows of a fitted schedule.
pub const MAX_SCHEDULE_ROWS: usize = MAX_PARAMS / 2;

/// Derivatives of (vx, vy, omega) with respect to each parameter.
pub type TwistJacobian = [[f64; MAX_PARAMS]; 3];

/// A family with what the fit keeps fixed: the nominal track width and, for a schedule, its
/// curvature nodes (strictly increasing, >= 0, at most [`MAX_SCHEDULE_ROWS`]).
#[derive(Debug, Clone, PartialEq)]
pub struct Parametrisation {
    pub family: Family,
    pub track_width_m: f64,
    pub nodes_per_m: Vec<f64>,
}

impl Parametrisation {
    /// A scalar family (`nodes_per_m` ignored) or a schedule over `nodes_per_m`.
    pub fn new(family: Family, track_width_m: f64, nodes_per_m: &[f64]) -> Parametrisation {
        let nodes = if family == Family::ExtendedScheduled {
            nodes_per_m.iter().copied().take(MAX_SCHEDULE_ROWS).collect()
        } else {
            Vec::new()
        };
        Parametrisation { family, track_width_m, nodes_per_m: nodes }
    }

    /// Number of free parameters.
    pub fn len(&self) -> usize {
        match self.family {
            Family::ExtendedScheduled => 2 * self.nodes_per_m.len(),
            f => f.param_names().len(),
        }
    }

    pub fn is_empty(&self) -> bool {
        self.len() == 0
    }

    /// Names of the free parameters, for reports (`alpha@0.25/m` for schedule rows).
    pub fn names(&self) -> Vec<String> {
        match self.family {
            Family::ExtendedScheduled => self
                .nodes_per_m
                .iter()
                .flat_map(|k| [format!("alpha@{k}/m"), format!("track_expansion@{k}/m")])
                .collect(),
            f => f.param_names().iter().map(|s| s.to_string()).collect(),
        }
    }

    /// The model of parameter vector `p`, or `None` for a wrong length.
    pub fn model(&self, p: &[f64]) -> Option<Model> {
        if p.len() != self.len() {
            return None;
        }
        match self.family {
            Family::ExtendedScheduled => Some(Model::ExtendedScheduled(ExtendedScheduled {
                track_width_m: self.track_width_m,
                schedule: self
                    .nodes_per_m
                    .iter()
                    .zip(p.chunks_exact(2))
                    .map(|(k, ac)| ScheduleRow { curvature_per_m: *k, alpha: ac[0], track_expansion: ac[1] })
                    .collect(),
            })),
            f => Model::from_params(f, p, self.track_width_m),
        }
    }

    /// Why `p` cannot go into a profile (the ranges the profile reader enforces), if it cannot.
    pub fn physical_problem(&self, p: &[f64]) -> Option<String> {
        if let Some(x) = p.iter().find(|x| !x.is_finite()) {
            return Some(format!("a parameter is not finite ({x})"));
        }
        let names = self.names();
        let bad = |i: usize, need: &str| Some(format!("{} = {:.4} must be {need}", names[i], p[i]));
        match self.family {
            Family::ExtendedSymmetric | Family::Extended | Family::ExtendedScheduled => {
                p.iter().position(|x| *x <= 0.0).and_then(|i| bad(i, "positive"))
            }
            Family::Icr if p[0] <= 0.0 => bad(0, "positive"),
            Family::Icr if p[1] >= 0.0 => bad(1, "negative"),
            Family::Linear => {
                let det = p[0] * p[5] - p[1] * p[4];
                let scale = p[0].abs().max(p[1].abs()) * p[4].abs().max(p[5].abs());
                (det.abs() <= 1e-9 * scale.max(1e-300))
                    .then(|| "forward and yaw rows are singular, the model has no inverse".to_string())
            }
            _ => None,
        }
    }

    /// Commanded curvature magnitude |2 (vr - vl) / (B (vl + vr))|, infinite at a pivot,
    /// exactly as [`ExtendedScheduled`] computes it.
    #[inline]
    fn commanded_curvature(&self, left_mps: f64, right_mps: f64) -> f64 {
        let sum = left_mps + right_mps;
        if sum.abs() < 1e-12 {
            return f64::INFINITY;
        }
        (2.0 * (right_mps - left_mps) / (self.track_width_m * sum)).abs()
    }

    /// Node pair and interpolation weight t at curvature `k`: value = v[i] + t (v[j] - v[i]),
    /// clamped at the table ends like [`ExtendedScheduled::at`].
    #[inline]
    fn bracket(&self, k: f64) -> (usize, usize, f64) {
        let n = &self.nodes_per_m;
        let last = n.len().saturating_sub(1);
        match (n.first(), n.last()) {
            (Some(first), _) if !(k > *first) => (0, 0, 0.0),
            (_, Some(l)) if k >= *l => (last, last, 0.0),
            (Some(_), Some(_)) => {
                let j = n.partition_point(|x| *x <= k);
                (j - 1, j, (k - n[j - 1]) / (n[j] - n[j - 1]))
            }
            _ => (0, 0, 0.0),
        }
    }

    /// The twist for side speeds (vl, vr) under parameters `p`, and d(vx, vy, omega)/dp into `jac`
    /// (only the first `len()` columns are written). Allocates nothing.
    #[inline]
    pub fn twist_and_jacobian(&self, p: &[f64], vl: f64, vr: f64, jac: &mut TwistJacobian) -> Twist {
        let b = self.track_width_m;
        match self.family {
            Family::Ideal => Twist { vx_mps: 0.5 * (vl + vr), vy_mps: 0.0, omega_radps: (vr - vl) / b },
            Family::ExtendedSymmetric => {
                let (a, c) = (p[0], p[1]);
                let (s, d) = (0.5 * (vl + vr), vr - vl);
                jac[0][0] = s;
                jac[0][1] = 0.0;
                jac[1][0] = 0.0;
                jac[1][1] = 0.0;
                jac[2][0] = d / (c * b);
                jac[2][1] = -a * d / (c * c * b);
                Twist { vx_mps: a * s, vy_mps: 0.0, omega_radps: a * d / (c * b) }
            }
            Family::Extended => {
                let (al, ar, c) = (p[0], p[1], p[2]);
                let u = ar * vr - al * vl;
                jac[0][..3].copy_from_slice(&[0.5 * vl, 0.5 * vr, 0.0]);
                jac[1][..3].copy_from_slice(&[0.0; 3]);
                jac[2][..3].copy_from_slice(&[-vl / (c * b), vr / (c * b), -u / (c * c * b)]);
                Twist { vx_mps: 0.5 * (al * vl + ar * vr), vy_mps: 0.0, omega_radps: u / (c * b) }
            }
            Family::Icr => {
                let (yl, yr, xv) = (p[0], p[1], p[2]);
                let span = yl - yr;
                let span2 = span * span;
                let omega = (vr - vl) / span;
                let dw = [-(vr - vl) / span2, (vr - vl) / span2, 0.0];
                jac[0][..3].copy_from_slice(&[yr * (vl - vr) / span2, yl * (vr - vl) / span2, 0.0]);
                jac[1][..3].copy_from_slice(&[-xv * dw[0], -xv * dw[1], -omega]);
                jac[2][..3].copy_from_slice(&dw);
                Twist { vx_mps: (vr * yl - vl * yr) / span, vy_mps: -xv * omega, omega_radps: omega }
            }
            Family::Linear => {
                for (r, row) in jac.iter_mut().enumerate() {
                    row[2 * r] = vl;
                    row[2 * r + 1] = vr;
                    for (c, cell) in row.iter_mut().enumerate().take(6) {
                        if c / 2 != r {
                            *cell = 0.0;
                        }
                    }
                }
                Twist {
                    vx_mps: p[0] * vl + p[1] * vr,
                    vy_mps: p[2] * vl + p[3] * vr,
                    omega_radps: p[4] * vl + p[5] * vr,
                }
            }
            Family::ExtendedScheduled => {
                let (i, j, t) = self.bracket(self.commanded_curvature(vl, vr));
                let a = p[2 * i] + t * (p[2 * j] - p[2 * i]);
                let c = p[2 * i + 1] + t * (p[2 * j + 1] - p[2 * i + 1]);
                let (s, d) = (0.5 * (vl + vr), vr - vl);
                let (dvx_da, dw_da, dw_dc) = (s, d / (c * b), -a * d / (c * c * b));
                for row in jac.iter_mut() {
                    row[..self.len()].fill(0.0);
                }
                // d value / d v[i] = 1 - t, d value / d v[j] = t (the same node when clamped).
                for (node, w) in [(i, 1.0 - t), (j, t)] {
                    jac[0][2 * node] += w * dvx_da;
                    jac[2][2 * node] += w * dw_da;
                    jac[2][2 * node + 1] += w * dw_dc;
                }
                Twist { vx_mps: a * s, vy_mps: 0.0, omega_radps: a * d / (c * b) }
            }
        }
    }

    /// The twist alone.
    #[inline]
    pub fn twist(&self, p: &[f64], vl: f64, vr: f64) -> Twist {
        let mut jac = [[0.0; MAX_PARAMS]; 3];
        self.twist_and_jacobian(p, vl, vr, &mut jac)
    }

    /// A covariance of the free parameters in the profile's order: the family's parameters, or
    /// for a schedule (curvature_per_m, alpha, track_expansion) per row, where the curvature
    /// nodes were fixed by the fit and so have zero variance and covariance.
    pub fn profile_covariance(&self, cov: &DMatrix<f64>) -> Vec<Vec<f64>> {
        let n = self.len();
        if self.family != Family::ExtendedScheduled {
            return (0..n).map(|i| (0..n).map(|j| cov[(i, j)]).collect()).collect();
        }
        // Position of each free parameter in the 3-per-row layout.
        let slot = |i: usize| 3 * (i / 2) + 1 + i % 2;
        let size = 3 * self.nodes_per_m.len();
        let mut out = vec![vec![0.0; size]; size];
        for i in 0..n {
            for j in 0..n {
                out[slot(i)][slot(j)] = cov[(i, j)];
            }
        }
        out
    }
}

#[cfg(test)]
pub(crate) mod tests {
    use super::*;
    use crate::kinematics::MotionModel;
    use approx::assert_relative_eq;

    const B: f64 = 0.9;

    pub(crate) fn examples() -> Vec<(Parametrisation, Vec<f64>)> {
        let p = |f: Family| Parametrisation::new(f, B, &[]);
        vec![
            (p(Family::Ideal), vec![]),
            (p(Family::ExtendedSymmetric), vec![0.9, 1.5]),
            (p(Family::Extended), vec![0.85, 0.95, 1.4]),
            (p(Family::Icr), vec![0.7, -0.6, 0.05]),
            (p(Family::Linear), vec![0.45, 0.47, 0.01, -0.02, -0.8, 0.75]),
            (
                Parametrisation::new(Family::ExtendedScheduled, B, &[0.0, 0.5, 1.5]),
                vec![0.95, 1.2, 0.85, 1.6, 0.7, 2.2],
            ),
        ]
    }

    const SPEEDS: [(f64, f64); 6] = [(1.0, 1.0), (0.3, 1.1), (-0.5, 0.5), (1.7, -0.2), (0.9, 1.0), (0.0, 0.0)];

    #[test]
    fn twist_matches_the_kinematics_model() {
        for (par, p) in examples() {
            let model = par.model(&p).expect("model");
            assert_eq!(model.params().len(), if par.family == Family::ExtendedScheduled { 9 } else { p.len() });
            for (l, r) in SPEEDS {
                let (a, b) = (par.twist(&p, l, r), model.twist(l, r));
                assert_relative_eq!(a.vx_mps, b.vx_mps, epsilon = 1e-14);
                assert_relative_eq!(a.vy_mps, b.vy_mps, epsilon = 1e-14);
                assert_relative_eq!(a.omega_radps, b.omega_radps, epsilon = 1e-14);
            }
        }
    }

    #[test]
    fn twist_jacobian_matches_central_differences() {
        for (par, p) in examples() {
            for (l, r) in SPEEDS {
                let mut jac = [[0.0; MAX_PARAMS]; 3];
                par.twist_and_jacobian(&p, l, r, &mut jac);
                for i in 0..p.len() {
                    let h = 1e-6;
                    let (mut up, mut down) = (p.clone(), p.clone());
                    up[i] += h;
                    down[i] -= h;
                    let (a, b) = (par.twist(&up, l, r), par.twist(&down, l, r));
                    let fd = [(a.vx_mps - b.vx_mps), (a.vy_mps - b.vy_mps), (a.omega_radps - b.omega_radps)];
                    for (row, d) in fd.iter().enumerate() {
                        assert_relative_eq!(jac[row][i], d / (2.0 * h), epsilon = 1e-7);
                    }
                }
            }
        }
    }

    #[test]
    fn schedule_covariance_has_zero_rows_for_the_nodes() {
        let par = Parametrisation::new(Family::ExtendedScheduled, B, &[0.0, 1.0]);
        let cov = DMatrix::from_fn(4, 4, |i, j| (1 + i + j) as f64);
        let out = par.profile_covariance(&cov);
        assert_eq!(out.len(), 6);
        assert_eq!(out[0], vec![0.0; 6]);
        assert_eq!(out[3], vec![0.0; 6]);
        assert_eq!(out[1], vec![0.0, 1.0, 2.0, 0.0, 3.0, 4.0]);
    }

    #[test]
    fn physical_ranges() {
        let icr = Parametrisation::new(Family::Icr, B, &[]);
        assert!(icr.physical_problem(&[0.5, 0.2, 0.0]).is_some_and(|s| s.contains("icr_right_m")));
        assert!(icr.physical_problem(&[0.5, -0.5, 0.0]).is_none());
        let sym = Parametrisation::new(Family::ExtendedSymmetric, B, &[]);
        assert!(sym.physical_problem(&[0.9, -1.0]).is_some());
    }
}

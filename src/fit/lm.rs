//! Integrated prediction error minimisation (Seegmiller, Rogers-Marcovitz, Miller & Kelly 2013,
//! "Vehicle model identification by integrated prediction error minimization", IJRR 32(8)).
//!
//! For every window the measured side speeds are integrated through the model from the measured
//! start pose (exact SE(2) steps with the speeds held over each sample interval, docs/method.md, Integration); the
//! residual is the measured end pose minus the predicted one, in the start pose's body frame
//! (forward m, left m, yaw change rad), each component divided by its own noise scale.
//! Levenberg-Marquardt (the `levenberg-marquardt` crate, a port of MINPACK's lmder) minimises the
//! sum of squares with an analytic Jacobian: the pose sensitivities d(pose)/d(parameters) are
//! propagated through every step alongside the pose. Windows are integrated in parallel (rayon);
//! results do not depend on the thread count.
//!
//! **Weights** ([`fit_weighted`]): a first pass weighs forward and left errors 1 per metre and
//! yaw `yaw_scale_m_per_rad`; each component's noise scale is then estimated from its residuals
//! robustly (1.4826 times the median absolute deviation, the normal-consistent scale of Huber
//! 1981, "Robust Statistics"), and a second pass from the first one's estimate weighs each
//! component by the inverse of its scale, so forward, lateral and yaw errors count by their own
//! noise instead of one pooled variance.
//!
//! **Covariance** ([`sandwich_covariance`]): the windows overlap by half and share end samples,
//! so their residuals are correlated, and their noise differs from window to window. The
//! covariance is the sandwich A^-1 B A^-1 (Huber 1967; White 1980, "A heteroskedasticity-
//! consistent covariance matrix estimator", Econometrica 48(4)) with A = J^T J and B the
//! autocorrelation-consistent sum of Newey & West 1987 ("A simple, positive semi-definite,
//! heteroskedasticity and autocorrelation consistent covariance matrix", Econometrica 55(3)):
//! B = sum_i g_i g_i^T + sum over later windows k of the same run at lag l <= L of
//! w_l (g_i g_k^T + g_k g_i^T), with g_i = J_i^T r_i the window's score and Bartlett weights
//! w_l = 1 - l / (L + 1), which keep B positive semi-definite. Noise of the vehicle itself (a
//! heading random walk) and of the poses at shared samples correlates windows that share a sample
//! (Hansen & Hodrick 1980, "Forward exchange rates as optimal predictors of future spot rates",
//! Journal of Political Economy 88(5), for overlapping horizons); the bandwidth L is
//! [`BANDWIDTH_PER_OVERLAP`] times the overlap depth (the most later windows sharing a sample with
//! one window: 2 for half-overlapping windows, so L = 8, weighing lags 1 and 2 by 0.89 and 0.78).
//! Windows of different runs share nothing. The result is scaled by W / (W - n) for W windows and
//! n parameters.

use std::cell::Cell;

use levenberg_marquardt::{LeastSquaresProblem, LevenbergMarquardt, TerminationReason};
use nalgebra::storage::Owned;
use nalgebra::{DMatrix, DVector, Dyn, OMatrix};
use rayon::prelude::*;

use super::params::{Parametrisation, TwistJacobian, MAX_PARAMS};
use super::windows::{Series, Window};

/// Below this |omega dt| the SE(2) step uses its Taylor series (error below 1e-16 relative).
const SERIES_THETA: f64 = 1e-2;

/// sin(t)/t, (1 - cos t)/t and their derivatives with respect to t.
#[inline]
fn step_coefficients(t: f64) -> (f64, f64, f64, f64) {
    if t.abs() < SERIES_THETA {
        let t2 = t * t;
        (
            1.0 - t2 / 6.0 + t2 * t2 / 120.0,
            t * (0.5 - t2 / 24.0 + t2 * t2 / 720.0),
            t * (-1.0 / 3.0 + t2 / 30.0 - t2 * t2 / 840.0),
            0.5 - t2 / 8.0 + t2 * t2 / 144.0,
        )
    } else {
        let (s, c) = t.sin_cos();
        let one_minus_c = 2.0 * (0.5 * t).sin().powi(2);
        (s / t, one_minus_c / t, (t * c - s) / (t * t), (t * s - one_minus_c) / (t * t))
    }
}

/// Predicted motion over a window in the start pose's body frame (forward m, left m, yaw rad).
/// With `sens`, also d(prediction)/d(parameters) (first `par.len()` columns).
pub fn predict(
    par: &Parametrisation,
    p: &[f64],
    s: &Series,
    w: Window,
    mut sens: Option<&mut TwistJacobian>,
) -> [f64; 3] {
    let n = par.len();
    let (mut x, mut y, mut th) = (0.0f64, 0.0f64, 0.0f64);
    let mut jac: TwistJacobian = [[0.0; MAX_PARAMS]; 3];
    if let Some(sn) = sens.as_deref_mut() {
        for row in sn.iter_mut() {
            row[..n].fill(0.0);
        }
    }
    for k in w.start..w.end {
        let dt = s.dt_s[k];
        let tw = par.twist_and_jacobian(p, s.left_mps[k], s.right_mps[k], &mut jac);
        let (vx, vy, om) = (tw.vx_mps, tw.vy_mps, tw.omega_radps);
        let (sa, ca, dsa, dca) = step_coefficients(om * dt);
        let (a, b) = (dt * sa, dt * ca);
        let (da, db) = (dt * dt * dsa, dt * dt * dca);
        let (dxb, dyb) = (vx * a - vy * b, vx * b + vy * a);
        let (sn_th, cs_th) = th.sin_cos();
        if let Some(sn) = sens.as_deref_mut() {
            let dx_dth = -sn_th * dxb - cs_th * dyb;
            let dy_dth = cs_th * dxb - sn_th * dyb;
            let (dxb_dw, dyb_dw) = (vx * da - vy * db, vx * db + vy * da);
            for j in 0..n {
                let (jx, jy, jw) = (jac[0][j], jac[1][j], jac[2][j]);
                let ddxb = a * jx - b * jy + dxb_dw * jw;
                let ddyb = b * jx + a * jy + dyb_dw * jw;
                let sth = sn[2][j];
                sn[0][j] += dx_dth * sth + cs_th * ddxb - sn_th * ddyb;
                sn[1][j] += dy_dth * sth + sn_th * ddxb + cs_th * ddyb;
                sn[2][j] += dt * jw;
            }
        }
        x += cs_th * dxb - sn_th * dyb;
        y += sn_th * dxb + cs_th * dyb;
        th += om * dt;
    }
    [x, y, th]
}

/// The least-squares problem of one family on one terrain's training windows.
pub struct IpemProblem<'a> {
    par: &'a Parametrisation,
    series: &'a Series,
    windows: &'a [Window],
    measured: Vec<[f64; 3]>,
    /// Multiplies the forward, left and yaw errors (1/m, 1/m, 1/rad, or m/rad for a yaw scale).
    weights: [f64; 3],
    p: DVector<f64>,
    residuals: Option<DVector<f64>>,
    /// Jacobian evaluations, one per LM iteration.
    jacobians: Cell<usize>,
}

/// Windows per rayon task: enough work to amortise scheduling.
const MIN_WINDOWS_PER_TASK: usize = 32;

impl<'a> IpemProblem<'a> {
    pub fn new(
        par: &'a Parametrisation,
        series: &'a Series,
        windows: &'a [Window],
        weights: [f64; 3],
        start: &[f64],
    ) -> Self {
        let measured = windows.iter().map(|w| series.measured_delta(*w)).collect();
        let mut problem = IpemProblem {
            par,
            series,
            windows,
            measured,
            weights,
            p: DVector::from_column_slice(start),
            residuals: None,
            jacobians: Cell::new(0),
        };
        problem.residuals = problem.compute_residuals();
        problem
    }

    fn residual_of(&self, meas: &[f64; 3], pred: &[f64; 3]) -> [f64; 3] {
        let w = &self.weights;
        [w[0] * (meas[0] - pred[0]), w[1] * (meas[1] - pred[1]), w[2] * (meas[2] - pred[2])]
    }

    /// Unweighted errors (measured minus predicted: forward m, left m, yaw rad) at the current
    /// parameters, one per window.
    pub fn errors(&self) -> Option<Vec<[f64; 3]>> {
        let r = self.residuals.as_ref()?;
        let w = &self.weights;
        Some(r.as_slice().chunks_exact(3).map(|e| [e[0] / w[0], e[1] / w[1], e[2] / w[2]]).collect())
    }

    fn compute_residuals(&self) -> Option<DVector<f64>> {
        let p = self.p.as_slice();
        let preds: Vec<[f64; 3]> = self
            .windows
            .par_iter()
            .with_min_len(MIN_WINDOWS_PER_TASK)
            .map(|w| predict(self.par, p, self.series, *w, None))
            .collect();
        let mut r = DVector::zeros(3 * preds.len());
        for (i, (pred, meas)) in preds.iter().zip(&self.measured).enumerate() {
            let e = self.residual_of(meas, pred);
            r.fixed_rows_mut::<3>(3 * i).copy_from_slice(&e);
        }
        r.iter().all(|x| x.is_finite()).then_some(r)
    }

    /// Sum of squared residuals at the current parameters.
    pub fn cost(&self) -> Option<f64> {
        self.residuals.as_ref().map(|r| r.norm_squared())
    }

    pub fn residual_count(&self) -> usize {
        3 * self.windows.len()
    }

    pub fn jacobian_evaluations(&self) -> usize {
        self.jacobians.get()
    }
}

impl LeastSquaresProblem<f64, Dyn, Dyn> for IpemProblem<'_> {
    type ResidualStorage = Owned<f64, Dyn>;
    type JacobianStorage = Owned<f64, Dyn, Dyn>;
    type ParameterStorage = Owned<f64, Dyn>;

    fn set_params(&mut self, x: &DVector<f64>) {
        self.p.copy_from(x);
        self.residuals = self.compute_residuals();
    }

    fn params(&self) -> DVector<f64> {
        self.p.clone()
    }

    fn residuals(&self) -> Option<DVector<f64>> {
        self.residuals.clone()
    }

    fn jacobian(&self) -> Option<OMatrix<f64, Dyn, Dyn>> {
        self.jacobians.set(self.jacobians.get() + 1);
        let n = self.par.len();
        let p = self.p.as_slice();
        let sens: Vec<TwistJacobian> = self
            .windows
            .par_iter()
            .with_min_len(MIN_WINDOWS_PER_TASK)
            .map(|w| {
                let mut s = [[0.0; MAX_PARAMS]; 3];
                predict(self.par, p, self.series, *w, Some(&mut s));
                s
            })
            .collect();
        let mut j = DMatrix::zeros(3 * sens.len(), n);
        for (i, s) in sens.iter().enumerate() {
            for c in 0..n {
                // residual = measured - predicted, so its derivative is minus the sensitivity.
                j[(3 * i, c)] = -self.weights[0] * s[0][c];
                j[(3 * i + 1, c)] = -self.weights[1] * s[1][c];
                j[(3 * i + 2, c)] = -self.weights[2] * s[2][c];
            }
        }
        j.iter().all(|x| x.is_finite()).then_some(j)
    }
}

/// The result of minimising one family's integrated prediction error.
#[derive(Debug, Clone)]
pub struct Estimate {
    pub params: Vec<f64>,
    /// The sandwich covariance in the order of the free parameters; `None` when J^T J is singular.
    pub covariance: Option<DMatrix<f64>>,
    /// Noise scales of the forward (m), left (m) and yaw (rad) errors the final pass weighed by.
    pub noise_scales: [f64; 3],
    pub converged: bool,
    /// The optimiser's termination reason in words.
    pub termination: String,
    /// Levenberg-Marquardt iterations (Jacobian evaluations).
    pub iterations: usize,
    /// Residual evaluations.
    pub evaluations: usize,
    /// Sum of squared weighted residuals at the estimate.
    pub cost: f64,
}

fn describe(t: &TerminationReason) -> String {
    match t {
        TerminationReason::Converged { .. } => "converged".to_string(),
        TerminationReason::Orthogonal => "converged (gradient orthogonal to residuals)".to_string(),
        TerminationReason::ResidualsZero => "converged (residuals zero)".to_string(),
        TerminationReason::LostPatience => "did not converge within the evaluation limit".to_string(),
        TerminationReason::Numerical(what) => format!("numerical failure ({what} not finite)"),
        TerminationReason::User(what) => format!("the model could not be evaluated ({what})"),
        other => format!("stopped: {other:?}"),
    }
}

/// Minimises the integrated prediction error of `par` over `windows` from `start`, with the
/// forward, left and yaw errors multiplied by `weights`.
pub fn minimise(
    par: &Parametrisation,
    series: &Series,
    windows: &[Window],
    weights: [f64; 3],
    start: &[f64],
) -> Estimate {
    let problem = IpemProblem::new(par, series, windows, weights, start);
    let (problem, converged, termination, evaluations) = if par.is_empty() {
        (problem, true, "nothing to fit".to_string(), 1)
    } else {
        let (problem, report) = LevenbergMarquardt::new().minimize(problem);
        let ok = report.termination.was_successful();
        (problem, ok, describe(&report.termination), report.number_of_evaluations)
    };
    let iterations = problem.jacobian_evaluations();
    let cost = problem.cost().unwrap_or(f64::NAN);
    let covariance = if par.is_empty() { None } else { sandwich_covariance(&problem) };
    Estimate {
        params: problem.p.iter().copied().collect(),
        covariance,
        noise_scales: [1.0 / weights[0], 1.0 / weights[1], 1.0 / weights[2]],
        converged: converged && cost.is_finite(),
        termination,
        iterations,
        evaluations,
        cost,
    }
}

/// Smallest noise scale a component may get (m or rad): noise-free synthetic data would
/// otherwise give weights of 1e15.
const MIN_NOISE_SCALE: f64 = 1e-6;

/// 1.4826 times the median absolute deviation from the median: the standard deviation for
/// normal errors, unmoved by the largest half (Huber 1981, "Robust Statistics").
pub fn robust_scale(values: impl Iterator<Item = f64>) -> Option<f64> {
    let mut v: Vec<f64> = values.filter(|x| x.is_finite()).collect();
    v.sort_by(f64::total_cmp);
    let median = super::stats::quantile_sorted(&v, 0.5)?;
    let mut dev: Vec<f64> = v.iter().map(|x| (x - median).abs()).collect();
    dev.sort_by(f64::total_cmp);
    Some(1.4826 * super::stats::quantile_sorted(&dev, 0.5)?)
}

/// Two passes (see the module text): weights 1, 1, `yaw_scale_m_per_rad`, then each component
/// weighed by the inverse of its robust noise scale, started from the first pass's estimate.
pub fn fit_weighted(
    par: &Parametrisation,
    series: &Series,
    windows: &[Window],
    yaw_scale_m_per_rad: f64,
    start: &[f64],
) -> Estimate {
    let first = minimise(par, series, windows, [1.0, 1.0, yaw_scale_m_per_rad], start);
    if par.is_empty() || !first.converged {
        return first;
    }
    let problem = IpemProblem::new(par, series, windows, [1.0; 3], &first.params);
    let Some(errors) = problem.errors() else { return first };
    let mut weights = [1.0; 3];
    for (c, w) in weights.iter_mut().enumerate() {
        let scale = robust_scale(errors.iter().map(|e| e[c])).unwrap_or(1.0);
        *w = 1.0 / scale.max(MIN_NOISE_SCALE);
    }
    let mut second = minimise(par, series, windows, weights, &first.params);
    second.iterations += first.iterations;
    second.evaluations += first.evaluations;
    second
}

/// How many lags the Bartlett kernel spans, in multiples of the overlap depth.
pub const BANDWIDTH_PER_OVERLAP: usize = 4;

/// The sandwich covariance A^-1 B A^-1 W / (W - n) at the problem's parameters (module text);
/// `None` when J^T J is singular or there are no more windows than parameters.
pub fn sandwich_covariance(problem: &IpemProblem) -> Option<DMatrix<f64>> {
    let j = problem.jacobian()?;
    let r = problem.residuals.as_ref()?;
    let n = j.ncols();
    let windows = problem.windows;
    let w = windows.len();
    if w <= n {
        return None;
    }
    let a_inv = (j.transpose() * &j).cholesky()?.inverse();
    let scores: Vec<DVector<f64>> = (0..w).map(|i| j.rows(3 * i, 3).transpose() * r.rows(3 * i, 3)).collect();
    // Windows are sorted by start within each run and runs follow each other.
    let runs = &problem.series.runs;
    let run_of: Vec<usize> = windows.iter().map(|x| runs.partition_point(|r| r.end <= x.start)).collect();
    // Overlap depth: the most later windows of the same run that share a sample with one window.
    let depth = (0..w)
        .map(|i| (i + 1..w).take_while(|&k| run_of[k] == run_of[i] && windows[k].start <= windows[i].end).count())
        .max()
        .unwrap_or(0);
    let bandwidth = (BANDWIDTH_PER_OVERLAP * depth).max(1);
    let mut b = DMatrix::<f64>::zeros(n, n);
    for i in 0..w {
        b += &scores[i] * scores[i].transpose();
        for lag in 1..=bandwidth {
            let k = i + lag;
            if k >= w || run_of[k] != run_of[i] {
                break;
            }
            let weight = 1.0 - lag as f64 / (bandwidth + 1) as f64;
            let cross = &scores[i] * scores[k].transpose() * weight;
            b += &cross + cross.transpose();
        }
    }
    let cov = &a_inv * b * &a_inv * (w as f64 / (w - n) as f64);
    let ok = cov.iter().all(|x| x.is_finite()) && (0..n).all(|i| cov[(i, i)] >= 0.0);
    ok.then_some(cov)
}

/// s^2 (J^T J)^-1 with s^2 = SSR / (m - n): the textbook covariance for independent residuals
/// of one variance, kept to show in tests what ignoring the overlap costs.
#[cfg(test)]
pub fn naive_covariance(problem: &IpemProblem) -> Option<DMatrix<f64>> {
    let j = problem.jacobian()?;
    let (m, n) = j.shape();
    let cost = problem.cost()?;
    let inv = (j.transpose() * &j).cholesky()?.inverse();
    Some(inv * (cost / (m - n) as f64))
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::fit::params::Parametrisation;
    use crate::fit::testdata::{synthetic_series, Manoeuvres};
    use crate::kinematics::Family;
    use approx::assert_relative_eq;
    use levenberg_marquardt::differentiate_numerically;

    #[test]
    fn analytic_jacobian_matches_finite_differences() {
        // The crate's own central-difference check (`differentiate_numerically`, levenberg-marquardt
        // 0.15) against the propagated sensitivities, for every family, at parameters away from
        // the truth so the residuals are not zero.
        for (par, truth) in crate::fit::params::tests::examples() {
            if par.is_empty() {
                continue;
            }
            let s = synthetic_series(&par, &truth, &Manoeuvres::mixed(40.0), 0.0, 3);
            let (train, _) = crate::fit::windows::cut_windows(&s, 2.0);
            // The numerical Jacobian differentiates every residual separately (cost m^2 n):
            // a handful of windows over straights, arcs and pivots is enough.
            let train: Vec<Window> = train.into_iter().step_by(3).take(10).collect();
            let start: Vec<f64> = truth.iter().map(|x| x * 1.07 + 0.01).collect();
            let mut problem = IpemProblem::new(&par, &s, &train, [1.0, 1.0, 1.0], &start);
            let analytic = problem.jacobian().expect("jacobian");
            let numeric = differentiate_numerically(&mut problem).expect("numeric jacobian");
            assert_relative_eq!(analytic, numeric, epsilon = 1e-6, max_relative = 1e-5);
        }
    }

    #[test]
    fn straight_run_lateral_sensitivity_to_yaw_rate_reference() {
        // Kelly 2004, "Linearized error propagation in odometry" (IJRR 23(2)): on a straight line at
        // speed v a constant yaw-rate error dw gives lateral error v dw T^2 / 2 after T seconds,
        // so d(lateral end)/d(yaw rate) = T^2/2 at v = 1 m/s. The `linear` family's j32 - j31 part
        // is a pure yaw-rate offset when vl = vr = 1: omega = j31 + j32.
        let par = Parametrisation::new(Family::Linear, 0.9, &[]);
        let p = [0.5, 0.5, 0.0, 0.0, 0.0, 0.0];
        let horizon_s = 3.0;
        let n = 300;
        let s = crate::fit::testdata::constant_series(1.0, 1.0, horizon_s / n as f64, n + 1);
        let mut sens = [[0.0; MAX_PARAMS]; 3];
        let w = Window { start: 0, end: n };
        predict(&par, &p, &s, w, Some(&mut sens));
        // d lateral / d j32 = d lateral / d omega * d omega / d j32 = (T^2/2) * vr.
        assert_relative_eq!(sens[1][5], horizon_s * horizon_s / 2.0, max_relative = 1e-12);
        assert_relative_eq!(sens[2][5], horizon_s, max_relative = 1e-12);
    }

    #[test]
    fn noise_free_logs_give_back_each_family_reference() {
        // Property of the method (Seegmiller et al. 2013): data generated by a model of the family
        // is fitted exactly. Started 10 % away, every family returns its parameters to 1e-6.
        for (par, truth) in crate::fit::params::tests::examples() {
            if par.is_empty() {
                continue;
            }
            let s = synthetic_series(&par, &truth, &Manoeuvres::mixed(120.0), 0.0, 11);
            let (train, _) = crate::fit::windows::cut_windows(&s, 2.0);
            let start: Vec<f64> = truth.iter().map(|x| x * 1.1 + 0.02).collect();
            let est = minimise(&par, &s, &train, [1.0, 1.0, 1.0], &start);
            assert!(est.converged, "{:?}: {}", par.family, est.termination);
            for (got, want) in est.params.iter().zip(&truth) {
                assert_relative_eq!(*got, *want, max_relative = 1e-6, epsilon = 1e-9);
            }
        }
    }
}

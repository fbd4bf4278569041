//! Starting values for the integrated fit: a velocity-level linear least-squares fit of each
//! family (the usual first step before integrated prediction error minimisation, Seegmiller et
//! al. 2013, IJRR, sec. 4). Body velocities are differenced from the measured poses over
//! +-[`DIFF_S`] seconds and regressed on the mean side speeds over the same span. Also picks the
//! curvature nodes of `extended-scheduled` from the commanded curvatures in the data.

use nalgebra::{DMatrix, DVector};

use super::params::{Parametrisation, MAX_SCHEDULE_ROWS};
use super::stats::quantile_sorted;
use super::windows::Series;
use crate::kinematics::Family;

/// Half-span of the pose differences, seconds (long enough to average pose noise, short enough
/// to stay a velocity).
pub const DIFF_S: f64 = 0.1;
/// Commanded curvature (1/m) from which a sample counts as turning when placing schedule nodes.
pub const TURNING_CURVATURE_PER_M: f64 = 0.05;

/// Measured body velocities with the side speeds that produced them.
#[derive(Debug, Clone, Copy)]
pub struct VelocitySample {
    pub left_mps: f64,
    pub right_mps: f64,
    pub vx_mps: f64,
    pub vy_mps: f64,
    pub omega_radps: f64,
}

/// Velocity samples from the training part of a series (every `h`-th sample, h = DIFF_S / period).
pub fn velocity_samples(s: &Series) -> Vec<VelocitySample> {
    let mut out = Vec::new();
    for run in &s.runs {
        let h = ((DIFF_S / run.period_s).round() as usize).max(1);
        let mut k = run.start + h;
        while k + h < run.end {
            let (a, b) = (k - h, k + h);
            if (a..=b).any(|i| s.held_out[i]) || !(s.pose_ok[a] && s.pose_ok[b] && s.pose_ok[k]) {
                k += h;
                continue;
            }
            let span_s = s.t_s[b] - s.t_s[a];
            let (sn, cs) = s.yaw_rad[k].sin_cos();
            let (dx, dy) = (s.x_m[b] - s.x_m[a], s.y_m[b] - s.y_m[a]);
            let n = (b - a) as f64;
            out.push(VelocitySample {
                left_mps: s.left_mps[a..b].iter().sum::<f64>() / n,
                right_mps: s.right_mps[a..b].iter().sum::<f64>() / n,
                vx_mps: (cs * dx + sn * dy) / span_s,
                vy_mps: (-sn * dx + cs * dy) / span_s,
                omega_radps: (s.yaw_rad[b] - s.yaw_rad[a]) / span_s,
            });
            k += h;
        }
    }
    out
}

/// Least squares y ~ X b through the normal equations; `None` when X^T X is singular.
fn lstsq(rows: impl Iterator<Item = (Vec<f64>, f64)>, n: usize) -> Option<Vec<f64>> {
    let (mut xtx, mut xty) = (DMatrix::<f64>::zeros(n, n), DVector::<f64>::zeros(n));
    for (x, y) in rows {
        for i in 0..n {
            xty[i] += x[i] * y;
            for j in 0..n {
                xtx[(i, j)] += x[i] * x[j];
            }
        }
    }
    let b = xtx.cholesky()?.solve(&xty);
    b.iter().all(|x| x.is_finite()).then(|| b.iter().copied().collect())
}

/// A positive finite value, or `fallback`.
fn positive_or(x: f64, fallback: f64) -> f64 {
    if x.is_finite() && x > 0.0 {
        x
    } else {
        fallback
    }
}

/// Velocity-level start for `par`; every value is in the family's physical range.
pub fn initial_params(par: &Parametrisation, v: &[VelocitySample]) -> Vec<f64> {
    let b = par.track_width_m;
    let sym = symmetric(v, b);
    match par.family {
        Family::Ideal => Vec::new(),
        Family::ExtendedSymmetric => vec![sym.0, sym.1],
        Family::Extended => {
            let a = lstsq(v.iter().map(|s| (vec![0.5 * s.left_mps, 0.5 * s.right_mps], s.vx_mps)), 2)
                .unwrap_or(vec![sym.0, sym.0]);
            let (al, ar) = (positive_or(a[0], sym.0), positive_or(a[1], sym.0));
            let g = lstsq(v.iter().map(|s| (vec![(ar * s.right_mps - al * s.left_mps) / b], s.omega_radps)), 1);
            vec![al, ar, positive_or(g.map_or(f64::NAN, |g| 1.0 / g[0]), sym.1)]
        }
        Family::Icr => {
            let span = lstsq(v.iter().map(|s| (vec![s.right_mps - s.left_mps], s.omega_radps)), 1)
                .map_or(f64::NAN, |g| 1.0 / g[0]);
            let span = positive_or(span, sym.1 * b);
            let j = lstsq(v.iter().map(|s| (vec![s.left_mps, s.right_mps], s.vx_mps)), 2).unwrap_or(vec![0.5, 0.5]);
            let yl = positive_or(j[1] * span, 0.5 * span);
            let yr = -positive_or(j[0] * span, 0.5 * span);
            let xv = lstsq(v.iter().map(|s| (vec![-s.omega_radps], s.vy_mps)), 1).map_or(0.0, |x| x[0]);
            vec![yl, yr, xv]
        }
        Family::Linear => {
            let row = |f: fn(&VelocitySample) -> f64, fallback: [f64; 2]| {
                lstsq(v.iter().map(|s| (vec![s.left_mps, s.right_mps], f(s))), 2).unwrap_or(fallback.to_vec())
            };
            let mut p = row(|s| s.vx_mps, [0.5, 0.5]);
            p.extend(row(|s| s.vy_mps, [0.0, 0.0]));
            p.extend(row(|s| s.omega_radps, [-1.0 / b, 1.0 / b]));
            p
        }
        Family::ExtendedScheduled => schedule_start(par, v, sym),
    }
}

/// (alpha, track_expansion) of the symmetric family, with ideal values as the fallback.
fn symmetric(v: &[VelocitySample], b: f64) -> (f64, f64) {
    let alpha = lstsq(v.iter().map(|s| (vec![0.5 * (s.left_mps + s.right_mps)], s.vx_mps)), 1).map_or(1.0, |a| a[0]);
    let alpha = positive_or(alpha, 1.0);
    let g = lstsq(v.iter().map(|s| (vec![alpha * (s.right_mps - s.left_mps) / b], s.omega_radps)), 1);
    (alpha, positive_or(g.map_or(f64::NAN, |g| 1.0 / g[0]), 1.0))
}

/// Hat-function weights of each schedule node for side speeds (left, right): the schedule's
/// interpolation at their commanded curvature.
fn hat_weights(par: &Parametrisation, left: f64, right: f64) -> Vec<f64> {
    let mut w = vec![0.0; par.nodes_per_m.len()];
    let p = vec![1.0; par.len()];
    // The twist Jacobian of the schedule with unit parameters holds the weights times d(vx)/d(alpha).
    let mut jac = [[0.0; super::params::MAX_PARAMS]; 3];
    par.twist_and_jacobian(&p, left, right, &mut jac);
    let s = 0.5 * (left + right);
    for (i, wi) in w.iter_mut().enumerate() {
        *wi = if s.abs() > 1e-9 { jac[0][2 * i] / s } else { 0.0 };
    }
    w
}

/// Per-node alpha from vx ~ sum_i w_i alpha_i s and alpha/track_expansion from
/// omega B ~ sum_i w_i g_i (vr - vl), with a light pull towards the symmetric fit so that nodes
/// with little data stay well defined.
fn schedule_start(par: &Parametrisation, v: &[VelocitySample], sym: (f64, f64)) -> Vec<f64> {
    let rows = par.nodes_per_m.len();
    let ridge = 1e-3 * v.len().max(1) as f64;
    let b = par.track_width_m;
    let weights: Vec<Vec<f64>> = v.iter().map(|s| hat_weights(par, s.left_mps, s.right_mps)).collect();
    let prior = |target: f64| {
        (0..rows).map(move |i| {
            let mut x = vec![0.0; rows];
            x[i] = ridge.sqrt();
            (x, ridge.sqrt() * target)
        })
    };
    let alpha_rows = v.iter().zip(&weights).map(|(s, w)| {
        let sum = 0.5 * (s.left_mps + s.right_mps);
        (w.iter().map(|wi| wi * sum).collect::<Vec<f64>>(), s.vx_mps)
    });
    let alphas = lstsq(alpha_rows.chain(prior(sym.0)), rows).unwrap_or(vec![sym.0; rows]);
    let g_rows = v.iter().zip(&weights).map(|(s, w)| {
        let d = s.right_mps - s.left_mps;
        (w.iter().map(|wi| wi * d).collect::<Vec<f64>>(), s.omega_radps * b)
    });
    let gs = lstsq(g_rows.chain(prior(sym.0 / sym.1)), rows).unwrap_or(vec![sym.0 / sym.1; rows]);
    alphas
        .iter()
        .zip(&gs)
        .flat_map(|(a, g)| {
            let a = positive_or(*a, sym.0);
            [a, positive_or(a / g, sym.1)]
        })
        .collect()
}

/// Curvature nodes (1/m) for `extended-scheduled`: the 1/10, 1/3, 2/3 and 9/10 quantiles
/// (type 7) of the commanded curvature of turning training samples, rounded to two significant
/// digits and kept only when each is at least 1.3 times the one before. Below the first node the
/// table is constant, so straight driving shares the first row with gentle turns (a node at 0
/// would have a track expansion that straight driving cannot identify). Fewer than 100 turning
/// samples give the single node 0 (a constant table).
pub fn schedule_nodes(s: &Series, track_width_m: f64) -> Vec<f64> {
    let mut k: Vec<f64> = (0..s.len())
        .filter(|i| !s.held_out[*i])
        .filter_map(|i| {
            let (l, r) = (s.left_mps[i], s.right_mps[i]);
            let sum = l + r;
            (sum.abs() > 0.1).then(|| (2.0 * (r - l) / (track_width_m * sum)).abs())
        })
        .filter(|k| *k >= TURNING_CURVATURE_PER_M && k.is_finite())
        .collect();
    if k.len() < 100 {
        return vec![0.0];
    }
    k.sort_by(f64::total_cmp);
    let mut nodes: Vec<f64> = Vec::new();
    for p in [0.1, 1.0 / 3.0, 2.0 / 3.0, 0.9] {
        let Some(q) = quantile_sorted(&k, p) else { continue };
        let q = round_significant(q, 2);
        let ok = nodes.last().is_none_or(|prev| q >= 1.3 * prev && q > prev + 1e-3);
        if ok && nodes.len() < MAX_SCHEDULE_ROWS {
            nodes.push(q);
        }
    }
    if nodes.is_empty() {
        nodes.push(0.0);
    }
    nodes
}

fn round_significant(x: f64, digits: i32) -> f64 {
    if x <= 0.0 || !x.is_finite() {
        return x;
    }
    let scale = 10f64.powi(digits - 1 - x.log10().floor() as i32);
    (x * scale).round() / scale
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::fit::params::tests::examples;
    use crate::fit::testdata::{synthetic_series, Manoeuvres};
    use approx::assert_relative_eq;

    #[test]
    fn velocity_fit_is_close_to_the_truth_on_clean_data() {
        // On noise-free data the velocity-level fit is biased only by differencing over arcs,
        // a few percent at most: a good start, not the answer.
        for (par, truth) in examples() {
            let s = synthetic_series(&par, &truth, &Manoeuvres::mixed(120.0), 0.0, 5);
            let start = initial_params(&par, &velocity_samples(&s));
            assert_eq!(start.len(), truth.len());
            // The schedule's start interpolates alpha / track_expansion instead of each: looser.
            let tol = if par.family == crate::kinematics::Family::ExtendedScheduled { 0.25 } else { 0.1 };
            for (got, want) in start.iter().zip(&truth) {
                assert!((got - want).abs() < tol * want.abs() + 0.03, "{:?}: {start:?} vs {truth:?}", par.family);
            }
        }
    }

    #[test]
    fn nodes_are_increasing_and_rounded() {
        let (par, truth) = examples().remove(1);
        let s = synthetic_series(&par, &truth, &Manoeuvres::mixed(200.0), 0.0, 5);
        let nodes = schedule_nodes(&s, 0.9);
        assert!(nodes.len() >= 2, "{nodes:?}");
        assert!(nodes[0] >= TURNING_CURVATURE_PER_M);
        for w in nodes.windows(2) {
            assert!(w[1] >= 1.3 * w[0] && w[1] > w[0]);
        }
        assert_relative_eq!(round_significant(0.012345, 2), 0.012, epsilon = 1e-15);
    }
}

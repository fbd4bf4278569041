//! Drawing a terrain's model parameters from the profile's parameter covariance (docs/method.md, Drift).
//!
//! The covariance is factorised once per terrain as L = V diag(sqrt(max(lambda_i, 0))) from its
//! symmetric eigen-decomposition C = V diag(lambda) V^T, so L L^T = C for any positive
//! semi-definite C (a Cholesky factor would refuse the singular matrices `fit` writes when a
//! parameter is held fixed, such as the curvature column of a schedule), and tiny negative
//! eigenvalues from rounding are clamped to zero. A draw is nominal + L z with z standard
//! normal, then clamped to the parameter's physical range so every drawn model can be driven.
//! Units are those of the parameters (dimensionless slip factors, metres for ICR positions,
//! 1/m for schedule curvatures).

use nalgebra::DMatrix;
use rand::Rng;
use rand_distr::{Distribution, StandardNormal};

use crate::kinematics::{ExtendedScheduled, Model, MotionModel, ScheduleRow};

/// Smallest slip factor or track expansion a draw may take: a vehicle whose tracks still move it.
pub const MIN_POSITIVE_FACTOR: f64 = 0.01;
/// Smallest distance of a track ICR from the centreline a draw may take, metres.
pub const MIN_ICR_OFFSET_M: f64 = 0.01;
/// Smallest step between successive schedule curvatures after a draw, 1/m (keeps rows sorted).
const MIN_SCHEDULE_STEP_PER_M: f64 = 1e-9;

/// A terrain's nominal model and the factor of its parameter covariance.
#[derive(Debug, Clone)]
pub struct ParamSampler {
    nominal: Model,
    nominal_params: Vec<f64>,
    /// L with L L^T = covariance; `None` when the terrain has no covariance (or an all-zero one).
    factor: Option<DMatrix<f64>>,
}

impl ParamSampler {
    /// Factorises `covariance` (in the order of `model.params()`). The error says what is wrong
    /// with the matrix (wrong size, not finite).
    pub fn new(model: &Model, covariance: Option<&[Vec<f64>]>) -> Result<ParamSampler, String> {
        let nominal_params = model.params();
        let n = nominal_params.len();
        let factor = match covariance {
            None => None,
            Some(c) => psd_factor(c, n)?,
        };
        Ok(ParamSampler { nominal: model.clone(), nominal_params, factor })
    }

    /// True when draws can differ from the nominal model.
    pub fn is_random(&self) -> bool {
        self.factor.is_some()
    }

    /// The nominal model.
    pub fn nominal(&self) -> &Model {
        &self.nominal
    }

    /// One draw of the model: nominal parameters + L z, clamped to valid ranges. Uses exactly
    /// `n` standard normals from `rng` when the terrain has a covariance, none otherwise.
    pub fn draw<R: Rng + ?Sized>(&self, rng: &mut R) -> Model {
        let Some(l) = &self.factor else {
            return self.nominal.clone();
        };
        let n = self.nominal_params.len();
        let z: Vec<f64> = (0..n).map(|_| StandardNormal.sample(rng)).collect();
        let mut p = self.nominal_params.clone();
        for (i, pi) in p.iter_mut().enumerate() {
            *pi += (0..n).map(|j| l[(i, j)] * z[j]).sum::<f64>();
        }
        build_clamped(&self.nominal, &mut p)
    }
}

/// L = V diag(sqrt(max(lambda, 0))) of a symmetric positive semi-definite n x n matrix, or
/// `None` for an all-zero matrix.
pub fn psd_factor(c: &[Vec<f64>], n: usize) -> Result<Option<DMatrix<f64>>, String> {
    if c.len() != n || c.iter().any(|row| row.len() != n) {
        return Err(format!("covariance must be {n}x{n} to match the model's {n} parameters"));
    }
    if c.iter().flatten().any(|x| !x.is_finite()) {
        return Err("covariance has a value that is not finite".into());
    }
    if c.iter().flatten().all(|&x| x == 0.0) {
        return Ok(None);
    }
    // Symmetrise: the profile reader accepts a relative asymmetry of 1e-9.
    let m = DMatrix::from_fn(n, n, |i, j| 0.5 * (c[i][j] + c[j][i]));
    let eig = m.symmetric_eigen();
    let mut l = eig.eigenvectors;
    for (j, &lambda) in eig.eigenvalues.iter().enumerate() {
        let s = lambda.max(0.0).sqrt();
        l.column_mut(j).scale_mut(s);
    }
    if l.iter().any(|x| !x.is_finite()) {
        return Err("covariance could not be factorised (eigen-decomposition not finite)".into());
    }
    Ok(Some(l))
}

/// Builds a model of the nominal's family from drawn parameters, clamping each to its range:
/// slip factors and track expansion >= [`MIN_POSITIVE_FACTOR`], icr_left_m >= [`MIN_ICR_OFFSET_M`],
/// icr_right_m <= -[`MIN_ICR_OFFSET_M`], schedule curvatures >= 0 and strictly increasing.
fn build_clamped(nominal: &Model, p: &mut [f64]) -> Model {
    if let Model::ExtendedScheduled(s) = nominal {
        let mut rows: Vec<ScheduleRow> = Vec::with_capacity(p.len() / 3);
        for chunk in p.chunks_exact(3) {
            let floor = rows.last().map_or(0.0, |r| r.curvature_per_m + MIN_SCHEDULE_STEP_PER_M);
            rows.push(ScheduleRow {
                curvature_per_m: chunk[0].max(floor),
                alpha: chunk[1].max(MIN_POSITIVE_FACTOR),
                track_expansion: chunk[2].max(MIN_POSITIVE_FACTOR),
            });
        }
        return Model::ExtendedScheduled(ExtendedScheduled { track_width_m: s.track_width_m, schedule: rows });
    }
    let family = nominal.family();
    for (value, name) in p.iter_mut().zip(family.param_names()) {
        *value = match *name {
            "alpha" | "alpha_left" | "alpha_right" | "track_expansion" => value.max(MIN_POSITIVE_FACTOR),
            "icr_left_m" => value.max(MIN_ICR_OFFSET_M),
            "icr_right_m" => value.min(-MIN_ICR_OFFSET_M),
            _ => *value,
        };
    }
    Model::from_params(family, p, track_width_of(nominal)).unwrap_or_else(|| nominal.clone())
}

/// Track width stored in a model (families without one do not use it).
fn track_width_of(m: &Model) -> f64 {
    match m {
        Model::Ideal(x) => x.track_width_m,
        Model::ExtendedSymmetric(x) => x.track_width_m,
        Model::Extended(x) => x.track_width_m,
        Model::ExtendedScheduled(x) => x.track_width_m,
        Model::Icr(_) | Model::Linear(_) => 1.0,
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::kinematics::{ExtendedSymmetric, Icr};
    use approx::assert_relative_eq;
    use rand::rngs::ChaCha8Rng;
    use rand::SeedableRng;

    fn llt(l: &DMatrix<f64>) -> DMatrix<f64> {
        l * l.transpose()
    }

    #[test]
    fn factor_reproduces_a_positive_definite_covariance() {
        let c = vec![vec![4.0, 1.0], vec![1.0, 2.0]];
        let l = psd_factor(&c, 2).expect("ok").expect("nonzero");
        let back = llt(&l);
        for i in 0..2 {
            for j in 0..2 {
                assert_relative_eq!(back[(i, j)], c[i][j], epsilon = 1e-12);
            }
        }
    }

    #[test]
    fn factor_accepts_singular_and_slightly_negative_matrices() {
        // Rank one: [[1, 1], [1, 1]] has eigenvalues 2 and 0; Cholesky would fail on it.
        let c = vec![vec![1.0, 1.0], vec![1.0, 1.0]];
        let back = llt(&psd_factor(&c, 2).expect("ok").expect("nonzero"));
        assert_relative_eq!(back[(0, 1)], 1.0, epsilon = 1e-12);
        // A rounding-level negative eigenvalue (-1e-18) is clamped to zero.
        let c = vec![vec![1.0, 1.0 + 1e-18], vec![1.0 + 1e-18, 1.0]];
        assert!(psd_factor(&c, 2).expect("ok").is_some());
        // A schedule whose curvature entries have zero variance.
        let c = vec![vec![0.0, 0.0, 0.0], vec![0.0, 1e-4, 2e-5], vec![0.0, 2e-5, 4e-4]];
        let back = llt(&psd_factor(&c, 3).expect("ok").expect("nonzero"));
        assert_relative_eq!(back[(0, 0)], 0.0, epsilon = 1e-15);
        assert_relative_eq!(back[(2, 2)], 4e-4, epsilon = 1e-15);
        assert!(psd_factor(&[vec![0.0; 2], vec![0.0; 2]], 2).expect("ok").is_none());
        assert!(psd_factor(&[vec![0.0; 2]], 2).is_err());
    }

    #[test]
    fn draws_have_the_covariance_and_stay_in_range() {
        // Sample covariance of 20 000 draws within Monte Carlo error of the profile covariance
        // (relative standard error of a variance sqrt(2/N) = 1 %); common practice, no source.
        let m = Model::ExtendedSymmetric(ExtendedSymmetric { track_width_m: 0.9, alpha: 0.9, track_expansion: 1.5 });
        let c = vec![vec![1e-3, 2e-4], vec![2e-4, 4e-3]];
        let s = ParamSampler::new(&m, Some(&c)).expect("sampler");
        let mut rng = ChaCha8Rng::seed_from_u64(1);
        let n = 20_000;
        let draws: Vec<Vec<f64>> = (0..n).map(|_| s.draw(&mut rng).params()).collect();
        let mean = |k: usize| draws.iter().map(|d| d[k]).sum::<f64>() / n as f64;
        let (m0, m1) = (mean(0), mean(1));
        let cov = |a: usize, ma: f64, b: usize, mb: f64| {
            draws.iter().map(|d| (d[a] - ma) * (d[b] - mb)).sum::<f64>() / (n - 1) as f64
        };
        assert_relative_eq!(m0, 0.9, epsilon = 2e-3);
        assert_relative_eq!(cov(0, m0, 0, m0), 1e-3, max_relative = 0.05);
        assert_relative_eq!(cov(1, m1, 1, m1), 4e-3, max_relative = 0.05);
        assert_relative_eq!(cov(0, m0, 1, m1), 2e-4, max_relative = 0.25);
        // A huge variance would push parameters through zero: the clamp keeps them valid.
        let wide = vec![vec![1.0, 0.0], vec![0.0, 1.0]];
        let s = ParamSampler::new(&m, Some(&wide)).expect("sampler");
        for _ in 0..500 {
            let p = s.draw(&mut rng).params();
            assert!(p[0] >= MIN_POSITIVE_FACTOR && p[1] >= MIN_POSITIVE_FACTOR, "{p:?}");
        }
        let icr = Model::Icr(Icr { icr_left_m: 0.5, icr_right_m: -0.5, icr_long_m: 0.0 });
        let s = ParamSampler::new(&icr, Some(&[vec![1.0, 0.0, 0.0], vec![0.0, 1.0, 0.0], vec![0.0, 0.0, 1.0]]))
            .expect("sampler");
        for _ in 0..500 {
            let p = s.draw(&mut rng).params();
            assert!(p[0] > 0.0 && p[1] < 0.0, "{p:?}");
        }
    }

    #[test]
    fn scheduled_draws_keep_curvatures_sorted() {
        let m = Model::ExtendedScheduled(ExtendedScheduled {
            track_width_m: 0.9,
            schedule: vec![
                ScheduleRow { curvature_per_m: 0.0, alpha: 0.85, track_expansion: 1.7 },
                ScheduleRow { curvature_per_m: 0.5, alpha: 0.8, track_expansion: 2.0 },
            ],
        });
        let mut c = vec![vec![0.0; 6]; 6];
        for (i, row) in c.iter_mut().enumerate() {
            row[i] = 1.0;
        }
        let s = ParamSampler::new(&m, Some(&c)).expect("sampler");
        let mut rng = ChaCha8Rng::seed_from_u64(3);
        for _ in 0..200 {
            let Model::ExtendedScheduled(d) = s.draw(&mut rng) else { panic!("family changed") };
            assert!(d.schedule[0].curvature_per_m >= 0.0);
            assert!(d.schedule[1].curvature_per_m > d.schedule[0].curvature_per_m);
            assert!(d.schedule.iter().all(|r| r.alpha > 0.0 && r.track_expansion > 0.0));
        }
    }
}

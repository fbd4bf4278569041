//! Statistics of the position errors at one leg end: mean (bias), sample covariance, the 95 %
//! confidence ellipse and the circular error probable (CEP) as empirical radial quantiles.
//!
//! Errors are in metres in the local frame (x east, y north); the ellipse orientation is the
//! angle of its major axis anticlockwise from east, radians in (-pi/2, pi/2].

use serde::Serialize;

/// Chi-square quantile with 2 degrees of freedom at probability 0.95. The chi-square
/// distribution with 2 dof is exponential with mean 2, so its CDF is 1 - exp(-x/2) and the
/// p-quantile is -2 ln(1 - p) = -2 ln(0.05) = 5.991464547107979 (standard result; tabulated as
/// 5.991 in any statistics table, e.g. Abramowitz & Stegun 1964, table 26.8).
pub const CHI2_2DOF_95: f64 = 5.991_464_547_107_979;

/// A confidence ellipse about the mean error.
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct Ellipse {
    pub semi_major_m: f64,
    pub semi_minor_m: f64,
    /// Direction of the major axis, anticlockwise from east (local x), radians in (-pi/2, pi/2].
    pub orientation_rad: f64,
}

impl Ellipse {
    /// Points of the ellipse outline about `centre`, closed (first point repeated), `n` segments.
    pub fn outline(&self, centre: [f64; 2], n: usize) -> Vec<[f64; 2]> {
        let (s, c) = self.orientation_rad.sin_cos();
        (0..=n)
            .map(|k| {
                let t = std::f64::consts::TAU * k as f64 / n.max(3) as f64;
                let (u, v) = (self.semi_major_m * t.cos(), self.semi_minor_m * t.sin());
                [centre[0] + c * u - s * v, centre[1] + s * u + c * v]
            })
            .collect()
    }

    /// True when `p` (relative to the ellipse centre) lies inside or on the ellipse.
    pub fn contains(&self, p: [f64; 2]) -> bool {
        let (s, c) = self.orientation_rad.sin_cos();
        let (u, v) = (c * p[0] + s * p[1], -s * p[0] + c * p[1]);
        let (a, b) = (self.semi_major_m, self.semi_minor_m);
        if b <= 0.0 {
            return v == 0.0 && u.abs() <= a;
        }
        (u / a).powi(2) + (v / b).powi(2) <= 1.0
    }
}

/// Eigenvalues (larger first) and major-axis angle of a symmetric 2x2 matrix [[a, b], [b, c]]:
/// lambda = (a + c)/2 +- sqrt(((a - c)/2)^2 + b^2), angle = atan2(2b, a - c) / 2.
pub fn eigen_2x2(cov: [[f64; 2]; 2]) -> (f64, f64, f64) {
    let (a, b, c) = (cov[0][0], 0.5 * (cov[0][1] + cov[1][0]), cov[1][1]);
    let mid = 0.5 * (a + c);
    let r = (0.25 * (a - c) * (a - c) + b * b).sqrt();
    let angle = if b == 0.0 && a >= c { 0.0 } else { 0.5 * (2.0 * b).atan2(a - c) };
    (mid + r, (mid - r).max(0.0), angle)
}

/// The 95 % confidence ellipse of a bivariate normal with covariance `cov`: semi-axes
/// sqrt(chi2_{2,0.95} lambda_i) along the eigenvectors (docs/method.md, Drift; [`CHI2_2DOF_95`]).
pub fn ellipse95(cov: [[f64; 2]; 2]) -> Ellipse {
    let (l1, l2, angle) = eigen_2x2(cov);
    let mut orientation_rad = angle;
    if orientation_rad <= -std::f64::consts::FRAC_PI_2 {
        orientation_rad += std::f64::consts::PI;
    }
    Ellipse { semi_major_m: (CHI2_2DOF_95 * l1).sqrt(), semi_minor_m: (CHI2_2DOF_95 * l2).sqrt(), orientation_rad }
}

/// The p-quantile of sorted values with linear interpolation between order statistics
/// (Hyndman & Fan 1996, "Sample quantiles in statistical packages", type 7; numpy's default).
pub fn quantile_sorted(sorted: &[f64], p: f64) -> f64 {
    match sorted.len() {
        0 => f64::NAN,
        1 => sorted[0],
        n => {
            let h = (n - 1) as f64 * p.clamp(0.0, 1.0);
            let lo = h.floor() as usize;
            let hi = (lo + 1).min(n - 1);
            sorted[lo] + (h - lo as f64) * (sorted[hi] - sorted[lo])
        }
    }
}

/// Statistics of the errors at one leg end.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct ErrorStats {
    /// Mean error (true minus believed), east and north.
    pub bias_east_m: f64,
    pub bias_north_m: f64,
    /// Mean error along the plan's direction at the leg end (positive: the vehicle is ahead of
    /// where it believes it is) and across it (positive: left of where it believes it is).
    pub bias_along_m: f64,
    pub bias_cross_m: f64,
    /// Sample covariance (divisor N - 1) of the error, [[ee, en], [ne, nn]], square metres.
    pub covariance_m2: [[f64; 2]; 2],
    /// Empirical median and 95th percentile of the radial error |true - believed| (type 7).
    pub cep50_m: f64,
    pub cep95_m: f64,
    /// 95 % confidence ellipse about the mean error.
    pub ellipse95: Ellipse,
    /// Mean and standard deviation of the heading error, degrees.
    pub heading_bias_deg: f64,
    pub heading_sd_deg: f64,
}

/// Statistics of errors `[east, north, yaw]` (metres, metres, radians). `direction` is the
/// plan's unit direction at the leg end. `None` for no samples.
pub fn error_stats(errors: &[[f64; 3]], direction: [f64; 2]) -> Option<ErrorStats> {
    let n = errors.len();
    if n == 0 {
        return None;
    }
    let nf = n as f64;
    let mean = |k: usize| errors.iter().map(|e| e[k]).sum::<f64>() / nf;
    let (me, mn, my) = (mean(0), mean(1), mean(2));
    let denom = if n > 1 { nf - 1.0 } else { 1.0 };
    let co =
        |a: usize, ma: f64, b: usize, mb: f64| errors.iter().map(|e| (e[a] - ma) * (e[b] - mb)).sum::<f64>() / denom;
    let (cee, cen, cnn, cyy) = (co(0, me, 0, me), co(0, me, 1, mn), co(1, mn, 1, mn), co(2, my, 2, my));
    let covariance_m2 = [[cee, cen], [cen, cnn]];
    let mut radial: Vec<f64> = errors.iter().map(|e| e[0].hypot(e[1])).collect();
    radial.sort_by(f64::total_cmp);
    let [dx, dy] = direction;
    Some(ErrorStats {
        bias_east_m: me,
        bias_north_m: mn,
        bias_along_m: me * dx + mn * dy,
        bias_cross_m: -me * dy + mn * dx,
        covariance_m2,
        cep50_m: quantile_sorted(&radial, 0.5),
        cep95_m: quantile_sorted(&radial, 0.95),
        ellipse95: ellipse95(covariance_m2),
        heading_bias_deg: my.to_degrees(),
        heading_sd_deg: cyy.max(0.0).sqrt().to_degrees(),
    })
}

#[cfg(test)]
mod tests {
    use super::*;
    use approx::assert_relative_eq;
    use rand::rngs::ChaCha8Rng;
    use rand::SeedableRng;
    use rand_distr::{Distribution, StandardNormal};

    #[test]
    fn chi_square_quantile_is_minus_two_log_five_percent() {
        // Chi-square with 2 dof: CDF 1 - exp(-x/2), so the 0.95 quantile is -2 ln 0.05.
        assert_relative_eq!(CHI2_2DOF_95, -2.0 * 0.05_f64.ln(), epsilon = 1e-12);
        assert_relative_eq!(CHI2_2DOF_95, 5.991, epsilon = 5e-4);
    }

    #[test]
    fn ellipse_of_a_known_covariance() {
        // C = [[4, 1], [1, 2]]: lambda = 3 +- sqrt(1 + 1) = 4.414214, 1.585786; semi-axes
        // sqrt(5.991465 * 4.414214) = sqrt(26.44760) = 5.1427 and sqrt(5.991465 * 1.585786)
        // = sqrt(9.50118) = 3.0824; major axis at atan2(2, 4 - 2) / 2 = 22.5 degrees.
        // Chi-square 2 dof 95 % quantile -2 ln(0.05) = 5.991 (see CHI2_2DOF_95). Hand computation.
        let e = ellipse95([[4.0, 1.0], [1.0, 2.0]]);
        assert_relative_eq!(e.semi_major_m, 5.1427, epsilon = 1e-4);
        assert_relative_eq!(e.semi_minor_m, 3.0824, epsilon = 1e-4);
        assert_relative_eq!(e.orientation_rad.to_degrees(), 22.5, epsilon = 1e-9);
        // Axis-aligned and degenerate cases.
        let v = ellipse95([[1.0, 0.0], [0.0, 4.0]]);
        assert_relative_eq!(v.orientation_rad, std::f64::consts::FRAC_PI_2, epsilon = 1e-12);
        assert_relative_eq!(v.semi_major_m, (CHI2_2DOF_95 * 4.0).sqrt(), epsilon = 1e-12);
        let z = ellipse95([[0.0, 0.0], [0.0, 0.0]]);
        assert_eq!((z.semi_major_m, z.semi_minor_m, z.orientation_rad), (0.0, 0.0, 0.0));
    }

    #[test]
    fn ellipse_covers_95_percent_of_gaussian_samples() {
        // 20 000 draws from N(mu, C), C = [[4, 1], [1, 2]] via its Cholesky factor
        // [[2, 0], [0.5, sqrt(1.75)]]; the ellipse from the sample statistics should hold 95 %
        // of them within 1 % (binomial standard error sqrt(0.95 * 0.05 / 20000) = 0.15 %).
        // Common practice, no source.
        let mut rng = ChaCha8Rng::seed_from_u64(11);
        let (l11, l21, l22) = (2.0, 0.5, 1.75_f64.sqrt());
        let pts: Vec<[f64; 3]> = (0..20_000)
            .map(|_| {
                let (z1, z2): (f64, f64) = (StandardNormal.sample(&mut rng), StandardNormal.sample(&mut rng));
                [1.0 + l11 * z1, -2.0 + l21 * z1 + l22 * z2, 0.0]
            })
            .collect();
        let s = error_stats(&pts, [1.0, 0.0]).expect("stats");
        assert_relative_eq!(s.covariance_m2[0][0], 4.0, max_relative = 0.05);
        assert_relative_eq!(s.covariance_m2[0][1], 1.0, max_relative = 0.1);
        let inside = pts.iter().filter(|p| s.ellipse95.contains([p[0] - s.bias_east_m, p[1] - s.bias_north_m])).count()
            as f64
            / pts.len() as f64;
        assert!((inside - 0.95).abs() < 0.01, "coverage {inside}");
    }

    #[test]
    fn type_7_quantiles() {
        // numpy.quantile([1, 2, 3, 4], [0.5, 0.95]) = [2.5, 3.85] (linear method, type 7);
        // computed by hand: h = 3 * 0.95 = 2.85 -> 3 + 0.85 * (4 - 3).
        let v = [1.0, 2.0, 3.0, 4.0];
        assert_relative_eq!(quantile_sorted(&v, 0.5), 2.5, epsilon = 1e-12);
        assert_relative_eq!(quantile_sorted(&v, 0.95), 3.85, epsilon = 1e-12);
        assert_eq!(quantile_sorted(&[7.0], 0.95), 7.0);
        assert!(quantile_sorted(&[], 0.5).is_nan());
    }

    #[test]
    fn along_and_cross_follow_the_plan_direction() {
        // Plan heading north: an error of +1 m north is 1 m ahead, +1 m east is 1 m to the right.
        let s = error_stats(&[[1.0, 2.0, 0.0], [1.0, 2.0, 0.0]], [0.0, 1.0]).expect("stats");
        assert_relative_eq!(s.bias_along_m, 2.0, epsilon = 1e-12);
        assert_relative_eq!(s.bias_cross_m, -1.0, epsilon = 1e-12);
        assert_relative_eq!(s.cep95_m, 5.0_f64.sqrt(), epsilon = 1e-12);
        assert_eq!(s.covariance_m2, [[0.0, 0.0], [0.0, 0.0]]);
        assert!(error_stats(&[], [1.0, 0.0]).is_none());
    }
}

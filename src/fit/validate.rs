//! Validation of a fitted model on held-out windows (docs/method.md, Calibration): relative translation error
//! |dp_pred - dp_meas| / |dp_meas| (windows that move less than [`MIN_TRANSLATION_M`] skipped) and
//! absolute yaw error in degrees, summarised by median and quartiles (Hyndman & Fan 1996 type 7).
//!
//! Only moving windows reach validation (`windows`), so standing time does not dilute the errors.
//!
//! Also the random-walk noise intensities the `drift` Monte Carlo uses, from the same residuals,
//! taking the variance proportional to distance driven d (odometry distance over the window,
//! windows of at least [`MIN_TRANSLATION_M`]): each error is normalised, z = e / sqrt(d), and its
//! variance estimated as median(z^2) / 0.4549, where 0.4549 = 0.67449^2 is the median of z^2 for a
//! standard normal z (0.67449 its upper quartile). For normal errors this is the variance; the
//! largest half of the errors (outliers, a bad stretch of localization) cannot move it. Heading
//! q_h in rad^2/m, along-track q_a in m^2/m; cross-track q_c = q_c,raw - q_h median(d^2) / 3,
//! removing the cross-track variance the heading walk already produces on a straight line (Kelly
//! 2004, "Linearized error propagation in odometry", IJRR), but never below a quarter of
//! q_c,raw ([`CROSS_FLOOR_FRACTION`]; the notes say when the floor applies). Reported as square
//! roots: rad/sqrt(m) and m/sqrt(m). Errors are taken raw, bias included, so the intensities are
//! on the cautious side; an intensity that comes out 0 is reported in the notes, never silently.

use rayon::prelude::*;
use serde::Serialize;

use super::bootstrap::Interval;
use super::lm::predict;
use super::params::Parametrisation;
use super::stats::{quantile_sorted, Spread};
use super::windows::{Series, Window};

/// Windows whose measured displacement is shorter than this are left out of translation error.
pub const MIN_TRANSLATION_M: f64 = 0.5;
/// Median of z^2 for a standard normal z: the square of its upper quartile 0.674490 (any normal
/// table, e.g. Abramowitz & Stegun 1964, table 26.1).
pub const CHI2_1_MEDIAN: f64 = 0.674_489_750_196_081_7 * 0.674_489_750_196_081_7;
/// Cross-track noise keeps at least this fraction of its raw estimate after the heading walk's
/// share is removed.
pub const CROSS_FLOOR_FRACTION: f64 = 0.25;

/// The error of one validation window. Positions in the start pose's body frame.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct WindowError {
    pub measured: [f64; 3],
    pub predicted: [f64; 3],
    /// Odometry distance over the window, m.
    pub odometry_m: f64,
}

impl WindowError {
    pub fn displacement_m(&self) -> f64 {
        self.measured[0].hypot(self.measured[1])
    }

    /// |dp_pred - dp_meas| / |dp_meas|, or `None` for a window shorter than [`MIN_TRANSLATION_M`].
    pub fn translation_rel(&self) -> Option<f64> {
        let d = self.displacement_m();
        (d >= MIN_TRANSLATION_M)
            .then(|| (self.predicted[0] - self.measured[0]).hypot(self.predicted[1] - self.measured[1]) / d)
    }

    /// Measured minus predicted yaw change, rad.
    pub fn yaw_error_rad(&self) -> f64 {
        self.measured[2] - self.predicted[2]
    }

    /// Position error (measured - predicted) along and across the measured displacement, m.
    pub fn along_cross_m(&self) -> (f64, f64) {
        let d = self.displacement_m().max(1e-12);
        let (ux, uy) = (self.measured[0] / d, self.measured[1] / d);
        let (ex, ey) = (self.measured[0] - self.predicted[0], self.measured[1] - self.predicted[1]);
        (ex * ux + ey * uy, -ex * uy + ey * ux)
    }
}

/// Validation summary of one model on one terrain.
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct Validation {
    /// Validation windows (moving windows only).
    pub windows: usize,
    /// Windows long enough for the translation error.
    pub translation_windows: usize,
    /// Validation blocks the windows come from (the bootstrap's resampling units).
    pub blocks: usize,
    /// Relative translation error (fraction, not percent).
    pub translation_rel: Option<Spread>,
    /// 95 % paired block-bootstrap percentile interval of the median translation error.
    pub translation_interval95: Option<Interval>,
    /// Absolute yaw error, degrees.
    pub yaw_deg: Option<Spread>,
}

/// Errors of `par(p)` on each window.
pub fn window_errors(par: &Parametrisation, p: &[f64], s: &Series, windows: &[Window]) -> Vec<WindowError> {
    windows
        .par_iter()
        .with_min_len(32)
        .map(|w| WindowError {
            measured: s.measured_delta(*w),
            predicted: predict(par, p, s, *w, None),
            odometry_m: s.odometry_m(*w),
        })
        .collect()
}

/// Median and quartiles of the errors (the interval and block count are filled in by the
/// bootstrap).
pub fn summarise(errors: &[WindowError]) -> Validation {
    let translation: Vec<f64> = errors.iter().filter_map(WindowError::translation_rel).collect();
    Validation {
        windows: errors.len(),
        translation_windows: translation.len(),
        blocks: 0,
        translation_rel: Spread::of(translation),
        translation_interval95: None,
        yaw_deg: Spread::of(errors.iter().map(|e| e.yaw_error_rad().abs().to_degrees())),
    }
}

/// Random-walk intensities for `drift` (square roots of variance per metre).
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct NoiseIntensities {
    pub heading_rad_per_sqrt_m: f64,
    pub along_m_per_sqrt_m: f64,
    pub cross_m_per_sqrt_m: f64,
}

/// Variance of normal errors from their normalised values: median(z^2) / [`CHI2_1_MEDIAN`].
fn robust_variance(z: impl Iterator<Item = f64>) -> Option<f64> {
    let mut sq: Vec<f64> = z.map(|x| x * x).filter(|x| x.is_finite()).collect();
    sq.sort_by(f64::total_cmp);
    Some(quantile_sorted(&sq, 0.5)? / CHI2_1_MEDIAN)
}

/// Intensities from validation errors (windows driving at least [`MIN_TRANSLATION_M`]), with
/// notes on anything a reader should know (a floor that applied, an intensity that is 0).
pub fn noise_intensities(errors: &[WindowError]) -> Option<(NoiseIntensities, Vec<String>)> {
    let used: Vec<&WindowError> = errors.iter().filter(|e| e.odometry_m >= MIN_TRANSLATION_M).collect();
    let root = |e: &WindowError| e.odometry_m.sqrt();
    let q_h = robust_variance(used.iter().map(|e| e.yaw_error_rad() / root(e)))?;
    let q_a = robust_variance(used.iter().map(|e| e.along_cross_m().0 / root(e)))?;
    let q_c_raw = robust_variance(used.iter().map(|e| e.along_cross_m().1 / root(e)))?;
    let mut d2: Vec<f64> = used.iter().map(|e| e.odometry_m * e.odometry_m).collect();
    d2.sort_by(f64::total_cmp);
    let from_heading = q_h * quantile_sorted(&d2, 0.5)? / 3.0;
    let mut notes = Vec::new();
    let q_c = if q_c_raw - from_heading >= CROSS_FLOOR_FRACTION * q_c_raw {
        q_c_raw - from_heading
    } else {
        notes.push(format!(
            "cross-track noise: the heading walk explains more than {:.0} % of the cross-track errors; kept {:.0} % \
             of the raw estimate ({:.4} m/sqrt(m)) rather than 0",
            100.0 * (1.0 - CROSS_FLOOR_FRACTION),
            100.0 * CROSS_FLOOR_FRACTION,
            q_c_raw.sqrt()
        ));
        CROSS_FLOOR_FRACTION * q_c_raw
    };
    let q = NoiseIntensities {
        heading_rad_per_sqrt_m: q_h.sqrt(),
        along_m_per_sqrt_m: q_a.sqrt(),
        cross_m_per_sqrt_m: q_c.sqrt(),
    };
    for (name, value) in [
        ("noise_heading_rad_per_sqrt_m", q.heading_rad_per_sqrt_m),
        ("noise_along_m_per_sqrt_m", q.along_m_per_sqrt_m),
        ("noise_cross_m_per_sqrt_m", q.cross_m_per_sqrt_m),
    ] {
        if value == 0.0 {
            notes.push(format!(
                "{name} is 0: more than half of the {} validation windows have no error in it (noise-free or \
                 quantised data?); drift will leave this noise out and say so",
                used.len()
            ));
        }
    }
    Some((q, notes))
}

#[cfg(test)]
mod tests {
    use super::*;
    use approx::assert_relative_eq;

    fn e(measured: [f64; 3], predicted: [f64; 3], odometry_m: f64) -> WindowError {
        WindowError { measured, predicted, odometry_m }
    }

    #[test]
    fn errors_of_a_window() {
        let w = e([2.0, 0.0, 0.1], [1.9, 0.1, 0.0], 2.0);
        assert_relative_eq!(w.translation_rel().expect("long enough"), 0.02f64.sqrt() / 2.0, epsilon = 1e-12);
        let (along, cross) = w.along_cross_m();
        assert_relative_eq!(along, 0.1, epsilon = 1e-12);
        assert_relative_eq!(cross, -0.1, epsilon = 1e-12);
        assert!(e([0.3, 0.0, 1.0], [0.0; 3], 0.3).translation_rel().is_none());
    }

    #[test]
    fn intensities_scale_with_distance() {
        // Heading errors of +-0.02 rad over 4 m: every z^2 = 0.0004 / 4 = 1e-4 rad^2/m, so the
        // median-based variance is 1e-4 / 0.4549 and the intensity sqrt of that. Along and cross
        // errors are 0: reported in the notes, not silently.
        let errs = vec![e([4.0, 0.0, 0.02], [4.0, 0.0, 0.0], 4.0), e([4.0, 0.0, -0.02], [4.0, 0.0, 0.0], 4.0)];
        let (q, notes) = noise_intensities(&errs).expect("some");
        assert_relative_eq!(q.heading_rad_per_sqrt_m, (1e-4 / CHI2_1_MEDIAN).sqrt(), epsilon = 1e-12);
        assert_eq!(q.along_m_per_sqrt_m, 0.0);
        assert!(notes.iter().any(|n| n.starts_with("noise_along_m_per_sqrt_m is 0")), "{notes:?}");
    }

    #[test]
    fn median_based_intensities_recover_a_random_walk_and_ignore_outliers() {
        // Along-track errors N(0, q d) with q = 4e-4 m^2/m (0.02 m/sqrt(m)) on 400 windows of
        // 1 to 3 m, then every 20th replaced by a gross outlier (1 m). Derived here: 5 % outliers
        // move the median of z^2 to the 0.5 / 0.95 = 0.526 quantile of the clean values, whose
        // z is the normal 0.763 quantile 0.7165, so the intensity reads 0.7165 / 0.6745 = 6 %
        // high; the sample median of 400 values has a standard error 1 / (2 f sqrt(n)) = 0.053
        // (f = 0.471, the chi-square(1) density at its median), 6 % in the intensity. A 20 %
        // band is three standard errors beyond the shift; a mean of squares is ruined instead.
        use rand::SeedableRng;
        use rand_distr::{Distribution, Normal};
        let mut rng = rand::rngs::ChaCha8Rng::seed_from_u64(3);
        let unit = Normal::new(0.0, 1.0).expect("normal");
        let mut errs: Vec<WindowError> = (0..400)
            .map(|i| {
                let d = 1.0 + 2.0 * (i as f64 / 400.0);
                let along = 0.02 * d.sqrt() * unit.sample(&mut rng);
                e([d, 0.0, 0.0], [d - along, 0.0, 0.0], d)
            })
            .collect();
        for w in errs.iter_mut().step_by(20) {
            w.predicted[0] = w.measured[0] - 1.0;
        }
        let (q, _) = noise_intensities(&errs).expect("some");
        assert_relative_eq!(q.along_m_per_sqrt_m, 0.02, max_relative = 0.2);
        let mean_square = errs.iter().map(|w| w.along_cross_m().0.powi(2) / w.odometry_m).sum::<f64>() / 400.0;
        assert!(mean_square.sqrt() > 0.1, "a mean of squares is dominated by the outliers: {}", mean_square.sqrt());
    }

    #[test]
    fn cross_track_noise_is_floored_not_zeroed() {
        // Cross-track errors that the heading walk alone would explain: q_c keeps a quarter.
        let errs: Vec<WindowError> =
            (0..20).map(|i| e([4.0, 0.0, 0.05], [4.0, if i % 2 == 0 { 0.1 } else { -0.1 }, 0.0], 4.0)).collect();
        let (q, notes) = noise_intensities(&errs).expect("some");
        assert!(q.cross_m_per_sqrt_m > 0.0);
        let raw = (0.01 / 4.0 / CHI2_1_MEDIAN).sqrt();
        assert_relative_eq!(q.cross_m_per_sqrt_m, raw * CROSS_FLOOR_FRACTION.sqrt(), epsilon = 1e-12);
        assert!(notes.iter().any(|n| n.starts_with("cross-track noise")), "{notes:?}");
    }
}

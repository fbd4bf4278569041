//! Validation of a fitted model on held-out windows (docs/method.md, Calibration): relative translation error
//! |dp_pred - dp_meas| / |dp_meas| (windows that move less than [`MIN_TRANSLATION_M`] skipped) and
//! absolute yaw error in degrees, summarised by median and quartiles (Hyndman & Fan 1996 type 7).
//!
//! Also the random-walk noise intensities the `drift` Monte Carlo uses, from the same residuals,
//! taking the variance proportional to distance driven d (odometry distance over the window):
//! heading q_h = mean(e_yaw^2 / d) in rad^2/m, along-track q_a = mean(e_along^2 / d) in m^2/m,
//! and cross-track q_c = mean((e_cross^2 - q_h d^3 / 3) / d), floored at 0, in m^2/m; the
//! q_h d^3 / 3 term is the cross-track variance the heading walk already produces on a straight
//! line (Kelly 2004, "Linearized error propagation in odometry", IJRR), so it is not counted twice.
//! Reported as square roots: rad/sqrt(m) and m/sqrt(m). Errors are taken raw, bias included, so
//! the intensities are on the cautious side.

use rayon::prelude::*;
use serde::Serialize;

use super::lm::predict;
use super::params::Parametrisation;
use super::stats::Spread;
use super::windows::{Series, Window};

/// Windows whose measured displacement is shorter than this are left out of translation error.
pub const MIN_TRANSLATION_M: f64 = 0.5;

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
    /// Validation windows.
    pub windows: usize,
    /// Windows long enough for the translation error.
    pub translation_windows: usize,
    /// Relative translation error (fraction, not percent).
    pub translation_rel: Option<Spread>,
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

/// Median and quartiles of the errors.
pub fn summarise(errors: &[WindowError]) -> Validation {
    let translation: Vec<f64> = errors.iter().filter_map(WindowError::translation_rel).collect();
    Validation {
        windows: errors.len(),
        translation_windows: translation.len(),
        translation_rel: Spread::of(translation),
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

/// Intensities from validation errors (windows driving at least [`MIN_TRANSLATION_M`]).
pub fn noise_intensities(errors: &[WindowError]) -> Option<NoiseIntensities> {
    let used: Vec<&WindowError> = errors.iter().filter(|e| e.odometry_m >= MIN_TRANSLATION_M).collect();
    if used.is_empty() {
        return None;
    }
    let n = used.len() as f64;
    let q_h = used.iter().map(|e| e.yaw_error_rad().powi(2) / e.odometry_m).sum::<f64>() / n;
    let q_a = used.iter().map(|e| e.along_cross_m().0.powi(2) / e.odometry_m).sum::<f64>() / n;
    let q_c = used
        .iter()
        .map(|e| (e.along_cross_m().1.powi(2) - q_h * e.odometry_m.powi(3) / 3.0) / e.odometry_m)
        .sum::<f64>()
        / n;
    Some(NoiseIntensities {
        heading_rad_per_sqrt_m: q_h.sqrt(),
        along_m_per_sqrt_m: q_a.sqrt(),
        cross_m_per_sqrt_m: q_c.max(0.0).sqrt(),
    })
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
        // Heading errors of 0.02 rad over 4 m: q_h = 0.0004 / 4 = 1e-4 rad^2/m -> 0.01 rad/sqrt(m).
        let errs = vec![e([4.0, 0.0, 0.02], [4.0, 0.0, 0.0], 4.0), e([4.0, 0.0, -0.02], [4.0, 0.0, 0.0], 4.0)];
        let q = noise_intensities(&errs).expect("some");
        assert_relative_eq!(q.heading_rad_per_sqrt_m, 0.01, epsilon = 1e-12);
        assert_eq!(q.along_m_per_sqrt_m, 0.0);
        assert_eq!(q.cross_m_per_sqrt_m, 0.0);
    }
}

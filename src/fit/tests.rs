//! Statistical tests of the whole identification: coverage of the reported standard errors,
//! and the short-versus-long horizon trade-off on the example logs.

use super::lm::minimise;
use super::params::Parametrisation;
use super::testdata::{noisy_log, Manoeuvres, Noise};
use super::windows::{build_series, cut_windows};
use crate::kinematics::Family;

/// Fraction of (seed, parameter) pairs whose estimate lies within `k` reported standard errors.
fn coverage(par: &Parametrisation, truth: &[f64], noise: Noise, seeds: u64, k: f64) -> f64 {
    let m = Manoeuvres::mixed(150.0);
    let (mut inside, mut total) = (0usize, 0usize);
    for seed in 0..seeds {
        let s = build_series(&[noisy_log(par, truth, &m, noise, 1000 + seed)], &[]).remove(0);
        let (train, _) = cut_windows(&s, 2.0);
        let est = minimise(par, &s, &train, 1.0, truth);
        let cov = est.covariance.expect("identifiable");
        for (i, (got, want)) in est.params.iter().zip(truth).enumerate() {
            total += 1;
            if (got - want).abs() <= k * cov[(i, i)].sqrt() {
                inside += 1;
            }
        }
    }
    inside as f64 / total as f64
}

#[test]
fn standard_errors_cover_the_truth_at_about_the_stated_rate() {
    // Normal-theory coverage (any statistics text, e.g. Seber & Wild 1989, "Nonlinear
    // Regression", ch. 5): an estimate lies within one standard error of the truth about 68 % of
    // the time and within two about 95 %. 40 seeds x 3 parameters give a binomial spread of about
    // +-4 % at one standard error, and the half-overlapping windows share data, so the bands are
    // wide. Side-speed noise dominates here, as with real encoders; with pose noise alone the
    // overlap makes s^2 (J^T J)^-1 conservative (about 88 % within one standard error).
    let par = Parametrisation::new(Family::Extended, 0.9, &[]);
    let truth = [0.93, 0.97, 1.4];
    let noise = Noise { position_m: 0.005, yaw_rad: 0.002, speed_mps: 0.03 };
    let one = coverage(&par, &truth, noise, 40, 1.0);
    let two = coverage(&par, &truth, noise, 40, 2.0);
    eprintln!("coverage: {one:.3} within 1 SE, {two:.3} within 2 SE");
    assert!((0.55..=0.85).contains(&one), "within 1 SE: {one}");
    assert!((0.88..=1.0).contains(&two), "within 2 SE: {two}");
}

#[test]
fn short_horizon_models_predict_short_horizons_and_long_ones_long() {
    // Fact of the trade (common practice, no source): a model trained on short windows predicts
    // short horizons better than one trained on long windows, and the reverse. Checked on the
    // committed generator logs (grass), whose truth has lags and slip no family captures.
    let path = std::path::Path::new(concat!(env!("CARGO_MANIFEST_DIR"), "/example-logs/meadow-grass.csv"));
    let log = super::log::read_log(path).expect("example log");
    let s = build_series(&[log], &[]).remove(0);
    let par = Parametrisation::new(Family::Extended, 0.9, &[]);
    let start = [0.95, 0.95, 1.5];
    let table = super::sweep::sweep(&par, &s, &start, &[0.5, 8.0], 1.0);
    let e = |train: usize, eval: usize| table.error_rel[train][eval].expect("error");
    assert!(e(0, 0) < e(1, 0), "at 0.5 s: trained 0.5 s {} vs trained 8 s {}", e(0, 0), e(1, 0));
    assert!(e(1, 1) < e(0, 1), "at 8 s: trained 8 s {} vs trained 0.5 s {}", e(1, 1), e(0, 1));
}

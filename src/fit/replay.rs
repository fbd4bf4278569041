//! Replay: score an existing profile on new drive logs without refitting (`skidroute replay`,
//! docs/fit.md, "Does my calibration still hold?"). Conditions change (snow within hours, grass
//! after rain); replay answers whether each terrain's model still predicts today's driving.
//!
//! The logs go through the same checks and repairs as `fit` (`hygiene`) and are cut into the
//! same moving windows (`windows`) at the horizon the terrain was calibrated at
//! (`calibration_horizon_s`, else [`DEFAULT_HORIZON_S`], or `--horizon-s`). On every window the
//! logged side speeds are integrated through the terrain's model from the logged start pose
//! (exact SE(2) steps, docs/method.md, Integration) and compared with the logged end pose:
//! relative translation error and absolute yaw error, medians and quartiles (`validate`), and a
//! 95 % block-bootstrap interval of the median translation error over blocks of moving time
//! (`bootstrap`; Efron & Tibshirani 1993, "An Introduction to the Bootstrap").
//!
//! **Changed**: a terrain has changed when the whole 95 % interval of today's median translation
//! error lies above [`CHANGE_FACTOR`] times its `calibration_translation_error`: the error is
//! clearly higher (not a scatter of today's sample) and by more than the scatter a calibration's
//! own median has. Without a `calibration_translation_error`, or without translation windows,
//! `changed` is unknown (`None`) and the report says why. Units: SI, local frame of the logs.

use rayon::prelude::*;
use serde::Serialize;

use super::bootstrap::{resample_medians, Interval};
use super::hygiene::{check_logs, LogCheck};
use super::log::DriveLog;
use super::validate::{summarise, Validation, WindowError};
use super::windows::{build_series, cut_windows, Series, Window};
use super::{check_terrains, FitError, InputSummary, MIN_VALIDATION_WINDOWS};
use crate::kinematics::{Model, MotionModel, Pose};
use crate::vehicle::Profile;

/// Horizon when neither the profile nor the command line gives one (the `fit` default).
pub const DEFAULT_HORIZON_S: f64 = 2.0;
/// Today's error must exceed the calibration's by this factor, with the whole interval, to count
/// as changed.
pub const CHANGE_FACTOR: f64 = 1.25;
/// Replayed windows kept per terrain for the plot.
pub const PLOTTED_WINDOWS: usize = 300;
/// Logged path points kept per terrain for the plot.
pub const PLOTTED_POINTS: usize = 4000;

/// One terrain's replay.
#[derive(Debug, Clone, Serialize)]
pub struct TerrainReplay {
    pub terrain: String,
    /// The profile's model family on this terrain.
    pub model: String,
    pub horizon_s: f64,
    /// Moving windows replayed, their blocks, and the errors (the same summary `fit` validates with).
    #[serde(flatten)]
    pub validation: Validation,
    /// The profile's `calibration_translation_error` for this terrain.
    pub calibration_translation_error: Option<f64>,
    /// True when the terrain's model no longer holds (rule in the module text); `None`: cannot tell.
    pub changed: Option<bool>,
    /// Why `changed` is what it is, in plain words.
    pub finding: String,
    pub warnings: Vec<String>,
    /// Logged path (local frame), one polyline per run, thinned, for the plot.
    #[serde(skip)]
    pub logged_paths: Vec<Vec<[f64; 2]>>,
    /// Replayed paths of every other window (those do not overlap), from their logged start poses.
    #[serde(skip)]
    pub replayed_paths: Vec<Vec<[f64; 2]>>,
    /// Every window's logged and replayed end, for the plot.
    #[serde(skip)]
    pub end_points: Vec<WindowError>,
}

/// The result of a replay.
#[derive(Debug, Clone, Serialize)]
pub struct ReplayRun {
    pub vehicle: String,
    pub profile: String,
    pub inputs: Vec<InputSummary>,
    pub log_checks: Vec<LogCheck>,
    pub terrains: Vec<TerrainReplay>,
    /// Terrains of the profile without data in these logs.
    pub not_in_logs: Vec<String>,
}

impl ReplayRun {
    /// True when some terrain has changed (exit code 1).
    pub fn any_changed(&self) -> bool {
        self.terrains.iter().any(|t| t.changed == Some(true))
    }
}

/// Checks a `--horizon-s` value: positive, finite, at most 600 s.
pub fn check_horizon(horizon_s: Option<f64>) -> Result<Option<f64>, FitError> {
    match horizon_s {
        Some(h) if !(h.is_finite() && h > 0.0 && h <= 600.0) => {
            Err(FitError::Settings(format!("--horizon-s must be in (0, 600] seconds, got {h}")))
        }
        h => Ok(h),
    }
}

/// Replays `logs` through `profile`'s terrain models (`profile_name` names it in the report).
/// Fails only on input problems: a terrain the profile does not know, dead encoders.
pub fn replay_logs(
    logs: &[DriveLog],
    profile: &Profile,
    profile_name: &str,
    horizon_s: Option<f64>,
) -> Result<ReplayRun, FitError> {
    let horizon_s = check_horizon(horizon_s)?;
    check_terrains(logs, profile)?;
    let (logs, log_checks) = check_logs(logs)?;
    // Every sample is "held out": replay validates, it never trains.
    let series = build_series(&[], &logs);
    let terrains: Vec<TerrainReplay> = series
        .iter()
        .filter_map(|s| {
            let spec = profile.terrain.get(&s.terrain)?;
            let calibration = spec.calibration.as_ref();
            let h = horizon_s.or(calibration.and_then(|c| c.horizon_s)).unwrap_or(DEFAULT_HORIZON_S);
            Some(replay_terrain(s, &spec.model, h, calibration.and_then(|c| c.translation_error)))
        })
        .collect();
    let present: Vec<&str> = series.iter().map(|s| s.terrain.as_str()).collect();
    let not_in_logs = profile.terrain_names().into_iter().filter(|n| !present.contains(n)).map(String::from).collect();
    let inputs = logs
        .iter()
        .map(|l| InputSummary { file: l.source.display().to_string(), samples: l.samples.len(), role: "replayed" })
        .collect();
    Ok(ReplayRun {
        vehicle: profile.vehicle.name.clone(),
        profile: profile_name.to_string(),
        inputs,
        log_checks,
        terrains,
        not_in_logs,
    })
}

/// Integrates the logged side speeds of window `w` through `model` from the start pose; the
/// error in the start pose's frame, and with `path`, the world positions of every step.
fn replay_window(model: &Model, s: &Series, w: Window, path: Option<&mut Vec<[f64; 2]>>) -> WindowError {
    let mut pose = Pose::new(0.0, 0.0, 0.0);
    let start = Pose::new(s.x_m[w.start], s.y_m[w.start], s.yaw_rad[w.start]);
    let (sn, cs) = start.yaw_rad.sin_cos();
    let world = |p: &Pose| [start.x_m + cs * p.x_m - sn * p.y_m, start.y_m + sn * p.x_m + cs * p.y_m];
    let mut path = path;
    if let Some(out) = path.as_deref_mut() {
        out.push(world(&pose));
    }
    for k in w.start..w.end {
        pose = pose.step(model.twist(s.left_mps[k], s.right_mps[k]), s.dt_s[k]);
        if let Some(out) = path.as_deref_mut() {
            out.push(world(&pose));
        }
    }
    WindowError {
        measured: s.measured_delta(w),
        predicted: [pose.x_m, pose.y_m, pose.yaw_rad],
        odometry_m: s.odometry_m(w),
    }
}

fn replay_terrain(s: &Series, model: &Model, horizon_s: f64, calibration_error: Option<f64>) -> TerrainReplay {
    let (_, windows) = cut_windows(s, horizon_s);
    let errors: Vec<WindowError> =
        windows.par_iter().with_min_len(32).map(|w| replay_window(model, s, *w, None)).collect();
    let validation = summarise(&errors);
    let blocks: Vec<u32> = windows.iter().map(|w| s.block_of(*w)).collect();
    let values = vec![errors.iter().map(WindowError::translation_rel).collect::<Vec<_>>()];
    let resampled = resample_medians(&values, &blocks);
    let interval = resampled.as_ref().and_then(|r| r.interval(0));
    let mut warnings = Vec::new();
    if validation.translation_windows < MIN_VALIDATION_WINDOWS {
        warnings.push(format!(
            "only {} of {} windows move far enough (0.5 m) for a translation error, fewer than {MIN_VALIDATION_WINDOWS}: \
             the median and its interval are rough",
            validation.translation_windows, validation.windows
        ));
    }
    let (changed, finding) = judge(interval, calibration_error);
    let step = windows.len().div_ceil(2 * PLOTTED_WINDOWS).max(1) * 2;
    let replayed_paths = windows
        .iter()
        .step_by(step)
        .map(|w| {
            let mut p = Vec::with_capacity(w.end - w.start + 1);
            replay_window(model, s, *w, Some(&mut p));
            p
        })
        .collect();
    TerrainReplay {
        terrain: s.terrain.clone(),
        model: model.family().name().to_string(),
        horizon_s,
        validation: Validation {
            blocks: resampled.as_ref().map_or(0, |r| r.blocks),
            translation_interval95: interval,
            ..validation
        },
        calibration_translation_error: calibration_error,
        changed,
        finding,
        warnings,
        logged_paths: logged_paths(s),
        replayed_paths,
        end_points: errors,
    }
}

/// The `changed` rule of the module text.
fn judge(interval: Option<Interval>, calibration_error: Option<f64>) -> (Option<bool>, String) {
    let pct = |x: f64| format!("{:.1} %", 100.0 * x);
    match (interval, calibration_error) {
        (_, None) => (
            None,
            "cannot tell: the profile has no calibration_translation_error for this terrain (write one with \
             skidroute fit)"
                .to_string(),
        ),
        (None, Some(_)) => (None, "cannot tell: no window moved far enough for a translation error".to_string()),
        (Some(i), Some(c)) => {
            let limit = CHANGE_FACTOR * c;
            if i.lo > limit {
                let why = format!(
                    "changed: today's median translation error (95 % interval {} to {}) lies above {CHANGE_FACTOR} times \
                     the calibration's {} ({}); refit this terrain",
                    pct(i.lo),
                    pct(i.hi),
                    pct(c),
                    pct(limit)
                );
                (Some(true), why)
            } else {
                let why = format!(
                    "holds: today's median translation error (95 % interval {} to {}) is not clearly above {CHANGE_FACTOR} \
                     times the calibration's {} ({})",
                    pct(i.lo),
                    pct(i.hi),
                    pct(c),
                    pct(limit)
                );
                (Some(false), why)
            }
        }
    }
}

/// The measured poses of each run, thinned to about [`PLOTTED_POINTS`] in all.
fn logged_paths(s: &Series) -> Vec<Vec<[f64; 2]>> {
    let step = s.len().div_ceil(PLOTTED_POINTS).max(1);
    s.runs
        .iter()
        .map(|r| (r.start..r.end).step_by(step).filter(|k| s.pose_ok[*k]).map(|k| [s.x_m[k], s.y_m[k]]).collect())
        .filter(|p: &Vec<[f64; 2]>| p.len() >= 2)
        .collect()
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::fit::testdata::{defective_text, Defects, DEFECTIVE_TRUTH};
    use crate::kinematics::{ExtendedSymmetric, Family};
    use crate::vehicle::TerrainCalibration;
    use std::path::Path;

    fn profile(alpha: f64, track_expansion: f64, calibration_error: Option<f64>) -> Profile {
        let mut p = Profile::demo();
        let mut grass = p.terrain["grass"].clone();
        grass.model = Model::ExtendedSymmetric(ExtendedSymmetric { track_width_m: 0.9, alpha, track_expansion });
        grass.calibration = Some(TerrainCalibration {
            calibrated: true,
            source: None,
            translation_error: calibration_error,
            horizon_s: Some(2.0),
        });
        p.terrain.insert("grass".into(), grass);
        p
    }

    fn log(seed: u64) -> DriveLog {
        let text = defective_text(&Defects::none(), 300.0, seed);
        crate::fit::log::parse_log(Path::new("today.csv"), &text).expect("valid")
    }

    #[test]
    fn the_true_model_holds_and_a_stale_one_has_changed() {
        // The log is driven by DEFECTIVE_TRUTH with small noise: that model replays it to well
        // under 1 %; a model from "yesterday" (10 % more forward slip factor, 15 % less track
        // expansion, as before a snowfall) is about 9 % off on every window: changed.
        let l = log(1);
        let [a, chi] = DEFECTIVE_TRUTH;
        let run = replay_logs(std::slice::from_ref(&l), &profile(a, chi, Some(0.02)), "p.toml", None).expect("replay");
        let t = &run.terrains[0];
        assert_eq!((t.terrain.as_str(), t.model.as_str()), ("grass", Family::ExtendedSymmetric.name()));
        assert!(t.validation.translation_rel.expect("errors").median < 0.01, "{:?}", t.validation.translation_rel);
        assert_eq!(t.changed, Some(false), "{}", t.finding);
        assert!(!run.any_changed());
        assert!(run.not_in_logs.contains(&"asphalt".to_string()));
        let stale = replay_logs(&[l], &profile(1.1 * a, 0.85 * chi, Some(0.02)), "p.toml", None).expect("replay");
        let t = &stale.terrains[0];
        assert_eq!(t.changed, Some(true), "{}", t.finding);
        assert!(t.finding.starts_with("changed: "), "{}", t.finding);
        assert!(stale.any_changed());
        assert!(!t.replayed_paths.is_empty() && !t.logged_paths.is_empty());
    }

    #[test]
    fn without_a_calibration_error_changed_is_unknown() {
        let [a, chi] = DEFECTIVE_TRUTH;
        let run = replay_logs(&[log(2)], &profile(a, chi, None), "p.toml", None).expect("replay");
        assert_eq!(run.terrains[0].changed, None);
        assert!(run.terrains[0].finding.contains("no calibration_translation_error"));
        assert!(!run.any_changed());
    }

    #[test]
    fn a_terrain_the_profile_lacks_is_an_error() {
        let mut p = Profile::demo();
        p.terrain.remove("grass");
        let e = replay_logs(&[log(3)], &p, "p.toml", None).expect_err("unknown terrain").to_string();
        assert!(e.contains("terrain 'grass' is not in the"), "{e}");
        assert!(check_horizon(Some(0.0)).is_err());
    }
}

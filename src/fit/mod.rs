//! Identification of per-terrain motion models from drive logs (`skidroute fit`, docs/method.md, Calibration).
//!
//! Logs ([`log`]) are checked and repaired ([`hygiene`]), split into runs and moving windows
//! ([`windows`]); every family of docs/method.md, Model families, is started from a
//! velocity-level least-squares fit ([`initial`]) and refined by integrated prediction error
//! minimisation (Seegmiller, Rogers-Marcovitz, Miller & Kelly 2013, "Vehicle model
//! identification by integrated prediction error minimization", IJRR 32(8); [`lm`], with each
//! error component weighed by its own noise and a covariance that survives overlapping windows),
//! validated on held-out blocks of moving time ([`validate`], medians and quartiles by Hyndman &
//! Fan 1996 type 7, [`stats`]; intervals by a paired block bootstrap, [`bootstrap`]), and the
//! simplest family not credibly worse than the best is chosen per terrain ([`select`]). The
//! result is a complete profile for `check` that says where each terrain's model came from, plus
//! everything the reports show. [`replay`] scores an existing profile on new logs. Units: SI,
//! local frame of the logs.
//!
//! A terrain that cannot be fitted (too few windows, no turning, no convergence) is a value in
//! the result, not an error: it keeps the base profile's entry and [`FitRun::failed`] is true.

pub mod bootstrap;
pub mod hygiene;
pub mod initial;
pub mod lm;
pub mod log;
pub mod params;
pub mod replay;
pub mod select;
pub mod stats;
pub mod sweep;
pub mod validate;
pub mod windows;

#[cfg(test)]
pub(crate) mod testdata;
#[cfg(test)]
mod tests;

use std::path::PathBuf;

use serde::Serialize;

use crate::kinematics::{Family, Model};
use crate::progress::Progress;
use crate::vehicle::{profile_to_toml, Profile, TerrainCalibration};
use hygiene::{check_logs, LogCheck};
use log::DriveLog;
use params::Parametrisation;
use select::{choose, Candidate};
use sweep::SweepTable;
use validate::{noise_intensities, summarise, window_errors, NoiseIntensities, Validation, WindowError};
use windows::{build_series, cut_windows, Series, Window};

/// A problem with the fit's inputs or settings (exit code 2). Messages name the file, line and
/// column where there is one.
#[derive(Debug, thiserror::Error)]
pub enum FitError {
    #[error("{file}: cannot read: {source}")]
    Io { file: PathBuf, source: std::io::Error },
    #[error("{file}: {what}")]
    File { file: PathBuf, what: String },
    #[error("{file}: line {line}: {what}")]
    Line { file: PathBuf, line: usize, what: String },
    #[error("{file}: line {line}, column {column}: {what}")]
    Cell { file: PathBuf, line: usize, column: String, what: String },
    #[error("{file}: line {line}: terrain '{terrain}' is not in the base profile (it knows {known}); add a [terrain.{terrain}] table with its traction coefficients to the --vehicle profile")]
    UnknownTerrain { file: PathBuf, line: usize, terrain: String, known: String },
    #[error("{0}")]
    Settings(String),
}

/// Families serialise as their profile names.
fn family_name<S: serde::Serializer>(f: &Family, s: S) -> Result<S::Ok, S::Error> {
    s.serialize_str(f.name())
}

/// Fewest training windows for a terrain fit.
pub const MIN_WINDOWS: usize = 50;
/// Fewest training windows that turn by at least [`TURN_RAD`] (else the turning parameters are
/// not identifiable).
pub const MIN_TURNING_WINDOWS: usize = 10;
/// Yaw change (rad) from which a window counts as turning.
pub const TURN_RAD: f64 = 0.1;
/// Default weight of yaw in the residual: metres per radian (docs/method.md, Calibration).
pub const DEFAULT_YAW_SCALE_M_PER_RAD: f64 = 1.0;
/// Validation windows kept per terrain for the end-point plot.
pub const PLOTTED_END_POINTS: usize = 400;
/// Fewest validation windows counting for translation error before the report warns: below 30
/// the median's own scatter is a sizeable part of the differences between families.
pub const MIN_VALIDATION_WINDOWS: usize = 30;
/// Fewest validation blocks before the report warns that the bootstrap interval is rough.
pub const MIN_VALIDATION_BLOCKS: usize = 5;

/// Validated settings of a fit.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct FitSettings {
    pub horizon_s: f64,
    /// Horizons of the sweep; empty for no sweep.
    pub sweep_horizons_s: Vec<f64>,
    pub yaw_scale_m_per_rad: f64,
    /// Name of the calibrated profile; `None`: the base profile's name with " (calibrated)".
    pub profile_name: Option<String>,
}

impl FitSettings {
    /// Checks that the horizons are positive and finite, and sorts the sweep.
    pub fn new(horizon_s: f64, sweep_horizons_s: &[f64]) -> Result<FitSettings, FitError> {
        let bad = |h: f64| !(h.is_finite() && h > 0.0 && h <= 600.0);
        if bad(horizon_s) {
            return Err(FitError::Settings(format!("--horizon-s must be in (0, 600] seconds, got {horizon_s}")));
        }
        if let Some(h) = sweep_horizons_s.iter().find(|h| bad(**h)) {
            return Err(FitError::Settings(format!("--sweep horizons must be in (0, 600] seconds, got {h}")));
        }
        let mut sweep = sweep_horizons_s.to_vec();
        sweep.sort_by(f64::total_cmp);
        sweep.dedup();
        Ok(FitSettings {
            horizon_s,
            sweep_horizons_s: sweep,
            yaw_scale_m_per_rad: DEFAULT_YAW_SCALE_M_PER_RAD,
            profile_name: None,
        })
    }

    /// The same settings with the calibrated profile named `name` (non-empty after trimming).
    pub fn with_profile_name(mut self, name: &str) -> Result<FitSettings, FitError> {
        let name = name.trim();
        if name.is_empty() {
            return Err(FitError::Settings("--name must not be empty".to_string()));
        }
        self.profile_name = Some(name.to_string());
        Ok(self)
    }
}

/// The calibrated profile's name: `explicit`, or the base name with " (calibrated)".
pub fn calibrated_name(base: &str, explicit: Option<&str>) -> String {
    match explicit {
        Some(n) => n.to_string(),
        None if base.ends_with("(calibrated)") => base.to_string(),
        None => format!("{base} (calibrated)"),
    }
}

/// One family fitted on one terrain.
#[derive(Debug, Clone, Serialize)]
pub struct FamilyFit {
    #[serde(serialize_with = "family_name")]
    pub family: Family,
    /// Names of the free parameters, in order.
    pub names: Vec<String>,
    pub params: Vec<f64>,
    /// Standard errors (square roots of the covariance diagonal); `None` if not identifiable.
    pub std_errors: Option<Vec<f64>>,
    /// Curvature nodes (1/m) of an `extended-scheduled` table, fixed by the fit.
    pub nodes_per_m: Vec<f64>,
    /// Covariance in the profile's parameter order.
    #[serde(skip)]
    pub covariance: Option<Vec<Vec<f64>>>,
    /// Noise scales of the forward (m), left (m) and yaw (rad) errors that weighed the fit.
    pub noise_scales: [f64; 3],
    pub converged: bool,
    pub termination: String,
    /// Why the family cannot be used although it converged (parameters out of range), if so.
    pub problem: Option<String>,
    pub iterations: usize,
    pub evaluations: usize,
    pub validation: Validation,
    #[serde(skip)]
    pub model: Option<Model>,
    #[serde(skip)]
    pub errors: Vec<WindowError>,
}

impl FamilyFit {
    /// Converged, physically valid and validated.
    pub fn usable(&self) -> bool {
        self.converged && self.problem.is_none() && self.model.is_some()
    }
}

/// What happened on a terrain.
#[derive(Debug, Clone, Serialize)]
#[serde(tag = "status", rename_all = "kebab-case")]
pub enum TerrainOutcome {
    Fitted {
        #[serde(serialize_with = "family_name")]
        family: Family,
        reason: String,
        noise: Option<NoiseIntensities>,
    },
    Failed {
        reason: String,
    },
}

/// Commanded and measured yaw change per metre driven over a window (1/m), for the plot.
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct TurnPoint {
    pub commanded_per_m: f64,
    pub measured_per_m: f64,
}

/// Everything about one terrain.
#[derive(Debug, Clone, Serialize)]
pub struct TerrainFit {
    pub terrain: String,
    pub samples: usize,
    pub training_samples: usize,
    /// Time covered by the terrain's runs, and the part of it that moved (s).
    pub duration_s: f64,
    pub moving_s: f64,
    pub training_windows: usize,
    pub validation_windows: usize,
    /// Validation windows long enough (0.5 m) for the translation error.
    pub translation_windows: usize,
    /// Validation blocks (bootstrap units) the validation windows come from.
    pub validation_blocks: usize,
    pub turning_windows: usize,
    pub outcome: TerrainOutcome,
    /// What the reader should know about this terrain's fit (too few windows, a noise floor).
    pub warnings: Vec<String>,
    pub families: Vec<FamilyFit>,
    pub sweep: Option<SweepTable>,
    #[serde(skip)]
    pub turn_points: Vec<TurnPoint>,
}

impl TerrainFit {
    pub fn chosen(&self) -> Option<&FamilyFit> {
        match &self.outcome {
            TerrainOutcome::Fitted { family, .. } => self.families.iter().find(|f| f.family == *family),
            TerrainOutcome::Failed { .. } => None,
        }
    }
}

/// One input log in the summary.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct InputSummary {
    pub file: String,
    pub samples: usize,
    /// "training" or "validation".
    pub role: &'static str,
}

/// The whole result of a fit.
#[derive(Debug, Clone, Serialize)]
pub struct FitRun {
    pub inputs: Vec<InputSummary>,
    /// What the log checks found in each input (training logs first, then `--validate` logs).
    pub log_checks: Vec<LogCheck>,
    pub settings: FitSettings,
    /// The base profile's file, or "built-in demo profile".
    pub base_profile: String,
    pub demo_base: bool,
    pub terrains: Vec<TerrainFit>,
    /// Terrains of the base profile without log data, kept as they were.
    pub kept_from_base: Vec<String>,
    /// How validation data were chosen, in words.
    pub holdout: String,
    #[serde(skip)]
    pub profile: Profile,
}

impl FitRun {
    /// True when a terrain could not be fitted or a family's fit did not converge (exit code 1).
    pub fn failed(&self) -> bool {
        self.terrains
            .iter()
            .any(|t| matches!(t.outcome, TerrainOutcome::Failed { .. }) || t.families.iter().any(|f| !f.converged))
    }

    /// The provenance comment of the written profile (no date, so output is reproducible).
    pub fn provenance(&self) -> String {
        let mut s = String::from(
            "Vehicle profile calibrated by `skidroute fit`: integrated prediction error minimisation\n\
             (Seegmiller, Rogers-Marcovitz, Miller & Kelly 2013, IJRR) on these drive logs:\n",
        );
        for i in &self.inputs {
            s += &format!("  {} ({} samples, {})\n", i.file, i.samples, i.role);
        }
        s += &format!(
            "horizon {} s, moving windows overlapping by half, each error component weighed by its own noise; \
             validation: {}\n",
            self.settings.horizon_s, self.holdout
        );
        for c in &self.log_checks {
            for note in &c.notes {
                s += &format!("log check, {}: {note}\n", c.file);
            }
        }
        s += &format!("geometry, limits, follower and traction coefficients from: {}\n", self.base_profile);
        for t in &self.terrains {
            match t.chosen() {
                Some(f) => {
                    let err = f
                        .validation
                        .translation_rel
                        .map_or("n/a".to_string(), |e| format!("{:.1} %", 100.0 * e.median));
                    let interval = f.validation.translation_interval95.map_or(String::new(), |i| {
                        format!(" (95 % interval {:.1} to {:.1} %)", 100.0 * i.lo, 100.0 * i.hi)
                    });
                    s += &format!(
                        "terrain {}: {} from {} samples, {} training and {} validation windows, median translation error {err}{interval}\n",
                        t.terrain, f.family, t.samples, t.training_windows, t.validation_windows
                    );
                }
                None => {
                    let reason = match &t.outcome {
                        TerrainOutcome::Failed { reason } => reason.as_str(),
                        TerrainOutcome::Fitted { .. } => "no usable family",
                    };
                    s += &format!("terrain {}: NOT FITTED, kept from the base profile: {reason}\n", t.terrain);
                }
            }
        }
        for k in &self.kept_from_base {
            s += &format!("terrain {k}: not in the logs, kept from the base profile\n");
        }
        s += "Predictions from this profile are estimates, not guarantees.";
        s
    }

    /// The calibrated profile as TOML with the provenance header.
    pub fn profile_toml(&self) -> String {
        profile_to_toml(&self.profile, &self.provenance())
    }
}

/// Reads nothing and writes nothing: fits `logs` (validation from held-out blocks, or from
/// `validation_logs` when given) against the base profile and returns the run. `base_name` names
/// the base profile in the provenance. Fails only on input problems (a terrain the base profile
/// does not know).
pub fn fit_logs(
    logs: &[DriveLog],
    validation_logs: &[DriveLog],
    base: &Profile,
    base_name: &str,
    demo_base: bool,
    settings: &FitSettings,
    progress: &dyn Progress,
) -> Result<FitRun, FitError> {
    check_terrains(logs, base)?;
    check_terrains(validation_logs, base)?;
    let (logs, mut log_checks) = check_logs(logs)?;
    let (validation_logs, validation_checks) = check_logs(validation_logs)?;
    log_checks.extend(validation_checks);
    let series = build_series(&logs, &validation_logs);
    let per_terrain = Family::ALL.len() + settings.sweep_horizons_s.len();
    progress.start((series.len() * per_terrain) as u64, "fitting");
    let terrains: Vec<TerrainFit> = series.iter().map(|s| fit_terrain(s, base, settings, progress)).collect();
    progress.finish();
    let summary =
        |l: &DriveLog, role| InputSummary { file: l.source.display().to_string(), samples: l.samples.len(), role };
    let inputs: Vec<InputSummary> = logs
        .iter()
        .map(|l| summary(l, "training"))
        .chain(validation_logs.iter().map(|l| summary(l, "validation")))
        .collect();
    let holdout = if validation_logs.is_empty() {
        format!(
            "held-out blocks of moving time (block {} of every {} blocks of {} s of moving time on each terrain)",
            windows::HELD_OUT_BLOCK + 1,
            windows::BLOCK_CYCLE,
            windows::BLOCK_S
        )
    } else {
        "the --validate logs (the training logs are used whole)".to_string()
    };
    let fitted: Vec<&str> = terrains.iter().map(|t| t.terrain.as_str()).collect();
    let kept_from_base: Vec<String> =
        base.terrain_names().into_iter().filter(|n| !fitted.contains(n)).map(String::from).collect();
    let mut profile = base.clone();
    profile.vehicle.name = calibrated_name(&base.vehicle.name, settings.profile_name.as_deref());
    // The logs each terrain came from.
    let files_of = |terrain: &str| -> Vec<String> {
        logs.iter()
            .chain(&validation_logs)
            .filter(|l| l.terrains.iter().any(|n| n == terrain))
            .map(|l| l.source.display().to_string())
            .collect()
    };
    for t in &terrains {
        let Some(spec) = profile.terrain.get_mut(&t.terrain) else { continue };
        let (TerrainOutcome::Fitted { noise, .. }, Some(f)) = (&t.outcome, t.chosen()) else {
            let reason = match &t.outcome {
                TerrainOutcome::Failed { reason } => reason.as_str(),
                TerrainOutcome::Fitted { .. } => "no usable family",
            };
            spec.calibration = Some(not_fitted(&format!("{reason}; values from {base_name}")));
            continue;
        };
        let Some(model) = f.model.clone() else { continue };
        spec.model = model;
        spec.covariance = f.covariance.clone();
        if let Some(q) = noise {
            spec.noise_heading_rad_per_sqrt_m = q.heading_rad_per_sqrt_m;
            spec.noise_along_m_per_sqrt_m = q.along_m_per_sqrt_m;
            spec.noise_cross_m_per_sqrt_m = q.cross_m_per_sqrt_m;
        }
        spec.calibration = Some(TerrainCalibration {
            calibrated: true,
            source: Some(format!(
                "{} fitted by skidroute fit on {}: {} training and {} validation windows of {} s",
                f.family,
                files_of(&t.terrain).join(", "),
                t.training_windows,
                t.validation_windows,
                settings.horizon_s
            )),
            translation_error: f.validation.translation_rel.map(|e| e.median),
            horizon_s: Some(settings.horizon_s),
        });
    }
    for k in &kept_from_base {
        if let Some(spec) = profile.terrain.get_mut(k) {
            spec.calibration = Some(not_fitted(&format!("no drive-log data on this terrain; values from {base_name}")));
        }
    }
    Ok(FitRun {
        inputs,
        log_checks,
        settings: settings.clone(),
        base_profile: base_name.to_string(),
        demo_base,
        terrains,
        kept_from_base,
        holdout,
        profile,
    })
}

/// The calibration record of a terrain `fit` did not fit.
fn not_fitted(why: &str) -> TerrainCalibration {
    TerrainCalibration {
        calibrated: false,
        source: Some(format!("not fitted: {why}")),
        translation_error: None,
        horizon_s: None,
    }
}

/// An error for the first log row whose terrain `profile` does not know.
pub fn check_terrains(logs: &[DriveLog], profile: &Profile) -> Result<(), FitError> {
    for log in logs {
        for s in &log.samples {
            let name = &log.terrains[s.terrain];
            if !profile.terrain.contains_key(name) {
                let known = profile.terrain_names().join(", ");
                return Err(FitError::UnknownTerrain {
                    file: log.source.clone(),
                    line: s.line,
                    terrain: name.clone(),
                    known,
                });
            }
        }
    }
    Ok(())
}

/// Windows that turn by at least [`TURN_RAD`].
fn turning_windows(s: &Series, windows: &[Window]) -> usize {
    windows.iter().filter(|w| s.measured_delta(**w)[2].abs() >= TURN_RAD).count()
}

fn turn_points(s: &Series, windows: &[Window], track_width_m: f64) -> Vec<TurnPoint> {
    windows
        .iter()
        .filter_map(|w| {
            let d = s.odometry_m(*w);
            (d >= validate::MIN_TRANSLATION_M).then(|| TurnPoint {
                commanded_per_m: s.commanded_yaw_rad(*w, track_width_m) / d,
                measured_per_m: s.measured_delta(*w)[2] / d,
            })
        })
        .collect()
}

/// Why a terrain's data cannot support a fit, if so.
fn data_problem(train: usize, validation: usize, turning: usize, horizon_s: f64) -> Option<String> {
    if train < MIN_WINDOWS {
        return Some(format!(
            "too little data: {train} moving training windows of {horizon_s} s, at least {MIN_WINDOWS} are needed (drive about {:.0} s more on this terrain)",
            (MIN_WINDOWS - train) as f64 * horizon_s / 2.0 * 1.25
        ));
    }
    if turning < MIN_TURNING_WINDOWS {
        return Some(format!(
            "no turning: {turning} training windows turn by {:.0} degrees or more, at least {MIN_TURNING_WINDOWS} are needed to identify turning",
            TURN_RAD.to_degrees()
        ));
    }
    if validation == 0 {
        return Some(
            "no validation windows: the logs are too short to hold out a block of moving time; drive longer or give --validate"
                .to_string(),
        );
    }
    None
}

fn fit_terrain(s: &Series, base: &Profile, settings: &FitSettings, progress: &dyn Progress) -> TerrainFit {
    let b = base.vehicle.track_width_m;
    let (train, val) = cut_windows(s, settings.horizon_s);
    let turning = turning_windows(s, &train);
    let mut all = train.clone();
    all.extend_from_slice(&val);
    let val_blocks: Vec<u32> = val.iter().map(|w| s.block_of(*w)).collect();
    let mut t = TerrainFit {
        terrain: s.terrain.clone(),
        samples: s.len(),
        training_samples: s.training_samples(),
        duration_s: s.duration_s(),
        moving_s: s.moving_s(),
        training_windows: train.len(),
        validation_windows: val.len(),
        translation_windows: 0,
        validation_blocks: count_distinct(&val_blocks),
        turning_windows: turning,
        outcome: TerrainOutcome::Failed { reason: String::new() },
        warnings: Vec::new(),
        families: Vec::new(),
        sweep: None,
        turn_points: turn_points(s, &all, b),
    };
    let per_terrain = (Family::ALL.len() + settings.sweep_horizons_s.len()) as u64;
    if let Some(reason) = data_problem(train.len(), val.len(), turning, settings.horizon_s) {
        t.outcome = TerrainOutcome::Failed { reason };
        progress.advance(per_terrain);
        return t;
    }
    let velocities = initial::velocity_samples(s);
    let nodes = initial::schedule_nodes(s, b);
    for family in Family::ALL {
        let par = Parametrisation::new(family, b, &nodes);
        t.families.push(fit_family(&par, s, &train, &val, &velocities, settings));
        progress.advance(1);
    }
    t.translation_windows = val
        .iter()
        .filter(|w| {
            let d = s.measured_delta(**w);
            d[0].hypot(d[1]) >= validate::MIN_TRANSLATION_M
        })
        .count();
    let candidates = bootstrap_families(&mut t.families, &val_blocks);
    t.warnings.extend(data_warnings(&t));
    t.outcome = match choose(&candidates) {
        Some(choice) => {
            let chosen = t.families.iter().find(|f| f.family == choice.family);
            let noise = chosen.and_then(|f| noise_intensities(&f.errors));
            let noise = noise.map(|(q, notes)| {
                t.warnings.extend(notes);
                q
            });
            if !settings.sweep_horizons_s.is_empty() {
                if let Some(f) = chosen {
                    let par = Parametrisation::new(f.family, b, &f.nodes_per_m);
                    t.sweep = Some(sweep::sweep(
                        &par,
                        s,
                        &f.params,
                        &settings.sweep_horizons_s,
                        settings.yaw_scale_m_per_rad,
                    ));
                }
            }
            TerrainOutcome::Fitted { family: choice.family, reason: choice.reason, noise }
        }
        None => TerrainOutcome::Failed {
            reason: "no family converged to parameters in their physical range with a validation error".to_string(),
        },
    };
    progress.advance(settings.sweep_horizons_s.len() as u64);
    let chosen = t.chosen().map(|c| c.family);
    for f in &mut t.families {
        if Some(f.family) != chosen {
            f.errors.clear();
        }
    }
    t
}

fn count_distinct(ids: &[u32]) -> usize {
    let mut v = ids.to_vec();
    v.sort_unstable();
    v.dedup();
    v.len()
}

/// Warnings about thin validation data (thresholds [`MIN_VALIDATION_WINDOWS`], [`MIN_VALIDATION_BLOCKS`]).
fn data_warnings(t: &TerrainFit) -> Vec<String> {
    let mut out = Vec::new();
    if t.translation_windows < MIN_VALIDATION_WINDOWS {
        out.push(format!(
            "only {} of {} validation windows move far enough (0.5 m) for a translation error, fewer than {}: the \
             medians and intervals are rough; drive longer on this terrain or give --validate",
            t.translation_windows, t.validation_windows, MIN_VALIDATION_WINDOWS
        ));
    }
    if t.validation_blocks < MIN_VALIDATION_BLOCKS {
        out.push(format!(
            "validation comes from {} block{} of moving time, fewer than {}: the bootstrap intervals are rough",
            t.validation_blocks,
            if t.validation_blocks == 1 { "" } else { "s" },
            MIN_VALIDATION_BLOCKS
        ));
    }
    out
}

/// Paired block bootstrap over the usable families' validation errors: fills each family's
/// interval and block count, and returns the candidates for the choice.
fn bootstrap_families(families: &mut [FamilyFit], blocks: &[u32]) -> Vec<Candidate> {
    let usable: Vec<usize> = (0..families.len())
        .filter(|&i| families[i].usable() && families[i].validation.translation_rel.is_some())
        .collect();
    let values: Vec<Vec<Option<f64>>> =
        usable.iter().map(|&i| families[i].errors.iter().map(WindowError::translation_rel).collect()).collect();
    let resampled = bootstrap::resample_medians(&values, blocks);
    let mut candidates = Vec::new();
    for (column, &i) in usable.iter().enumerate() {
        let f = &mut families[i];
        f.validation.blocks = resampled.as_ref().map_or(0, |r| r.blocks);
        f.validation.translation_interval95 = resampled.as_ref().and_then(|r| r.interval(column));
        let Some(error) = f.validation.translation_rel.map(|e| e.median) else { continue };
        let column_medians = resampled.as_ref().map_or(Vec::new(), |r| r.medians.iter().map(|m| m[column]).collect());
        candidates.push(Candidate { family: f.family, params: f.params.len(), error, resampled: column_medians });
    }
    candidates
}

/// Fits one family: start, minimise (two passes, own weights per component), check ranges, validate.
fn fit_family(
    par: &Parametrisation,
    s: &Series,
    train: &[Window],
    val: &[Window],
    velocities: &[initial::VelocitySample],
    settings: &FitSettings,
) -> FamilyFit {
    let start = initial::initial_params(par, velocities);
    let est = lm::fit_weighted(par, s, train, settings.yaw_scale_m_per_rad, &start);
    let problem = par.physical_problem(&est.params);
    let model = if est.converged && problem.is_none() { par.model(&est.params) } else { None };
    let errors = if model.is_some() { window_errors(par, &est.params, s, val) } else { Vec::new() };
    let std_errors = est.covariance.as_ref().map(|c| (0..c.nrows()).map(|i| c[(i, i)].max(0.0).sqrt()).collect());
    FamilyFit {
        family: par.family,
        names: par.names(),
        params: est.params.clone(),
        std_errors,
        nodes_per_m: par.nodes_per_m.clone(),
        covariance: est.covariance.as_ref().map(|c| par.profile_covariance(c)),
        noise_scales: est.noise_scales,
        converged: est.converged,
        termination: est.termination,
        problem,
        iterations: est.iterations,
        evaluations: est.evaluations,
        validation: summarise(&errors),
        model,
        errors,
    }
}

/// Validation windows whose end points the plot draws: at most [`PLOTTED_END_POINTS`], evenly spread.
pub fn plotted_end_points(errors: &[WindowError]) -> impl Iterator<Item = &WindowError> {
    let step = errors.len().div_ceil(PLOTTED_END_POINTS).max(1);
    errors.iter().step_by(step)
}

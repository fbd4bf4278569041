//! `[terrain.NAME]`: one motion model per terrain (its family decides the parameter keys), the
//! traction coefficients, an optional schedule, covariance and noise intensities, and the marks
//! `fit` leaves on a terrain it calibrated (`calibrated`, `calibration_*`).

use std::collections::BTreeMap;

use toml::de::DeValue;

use super::section::{check_number, describe, Plausible, Rule, Section};
use crate::kinematics::{ExtendedScheduled, Family, Model, MotionModel, ScheduleRow};
use crate::limits::{clip, show_number};
use crate::vehicle::{TerrainCalibration, TerrainSpec};

/// Keys every terrain table may hold, whatever its family.
pub(super) const TERRAIN_COMMON_KEYS: &[&str] = &[
    "model",
    "rolling_resistance",
    "traction_coefficient",
    "lateral_resistance_max",
    "covariance",
    "noise_heading_rad_per_sqrt_m",
    "noise_along_m_per_sqrt_m",
    "noise_cross_m_per_sqrt_m",
    "calibrated",
    "calibration_source",
    "calibration_translation_error",
    "calibration_horizon_s",
];

/// The keys of a terrain's calibration marks.
const CALIBRATION_KEYS: [&str; 4] =
    ["calibrated", "calibration_source", "calibration_translation_error", "calibration_horizon_s"];

/// Relative tolerance for covariance symmetry.
const SYMMETRY_REL_TOL: f64 = 1e-9;

/// Most rows of an `extended-scheduled` model's schedule.
const MAX_SCHEDULE_ROWS: usize = 1000;

/// Traction and resistance coefficients (ratios of force to normal load).
const COEFFICIENT: Plausible = Plausible { unit: "", max: 10.0, usual: (0.0, 2.0), hint: "a ratio of force to load" };
/// Dimensionless model parameters (slip factors, track expansion) and ICR offsets, in metres.
const PARAMETER: Plausible = Plausible { unit: "", max: 1e3, usual: (-1e3, 1e3), hint: "" };
const NOISE: Plausible = Plausible { unit: "", max: 1e3, usual: (0.0, 1.0), hint: "per square-root metre" };
/// Median relative translation error of the validation windows: a fraction (0.04 is 4 %).
const TRANSLATION_ERROR: Plausible =
    Plausible { unit: "", max: 100.0, usual: (0.0, 1.0), hint: "a fraction, not percent" };
/// Horizon of the identification windows: `fit` takes seconds to minutes.
const HORIZON: Plausible = Plausible { unit: "s", max: 1e5, usual: (0.05, 600.0), hint: "is it in seconds?" };

pub(crate) fn valid_terrain_name(name: &str) -> bool {
    !name.is_empty() && name.chars().all(|c| c.is_ascii_alphanumeric() || c == '-' || c == '_')
}

pub(super) fn parse_terrains(s: &Section, track_width_m: f64) -> BTreeMap<String, TerrainSpec> {
    if s.table.is_empty() {
        s.table_error("at least one [terrain.NAME] table is needed");
    }
    let mut out = BTreeMap::new();
    for (k, _) in s.table.iter() {
        let name: &str = k.get_ref();
        if !valid_terrain_name(name) {
            s.error(name, "terrain names must be non-empty and use only letters, digits, '-' and '_'");
            continue;
        }
        if let Some(t) = s.table(name) {
            if let Some(spec) = parse_terrain(&t, track_width_m) {
                out.insert(name.to_string(), spec);
            }
        }
    }
    out
}

fn parse_terrain(s: &Section, track_width_m: f64) -> Option<TerrainSpec> {
    let coefficients = (
        s.plausible_number("rolling_resistance", Rule::NonNegative, &COEFFICIENT),
        s.plausible_number("traction_coefficient", Rule::NonNegative, &COEFFICIENT),
        s.plausible_number("lateral_resistance_max", Rule::NonNegative, &COEFFICIENT),
    );
    let noises = (
        noise(s, "noise_heading_rad_per_sqrt_m"),
        noise(s, "noise_along_m_per_sqrt_m"),
        noise(s, "noise_cross_m_per_sqrt_m"),
    );
    let family_name = s.string("model");
    let Some(family) = Family::from_name(family_name) else {
        if s.get("model").is_some_and(|v| v.get_ref().as_str().is_some()) {
            let names: Vec<&str> = Family::ALL.into_iter().map(Family::name).collect();
            let what = format!("unknown model family {:?}, expected one of {}", clip(family_name), names.join(", "));
            s.error("model", what);
        }
        return None;
    };
    let mut allowed = TERRAIN_COMMON_KEYS.to_vec();
    allowed.extend_from_slice(family.param_names());
    if family == Family::ExtendedScheduled {
        allowed.push("schedule");
    }
    s.check_keys(&allowed, Some(family));
    let model = parse_model(s, family, track_width_m)?;
    let covariance = s.get("covariance").and_then(|v| parse_covariance(s, v.get_ref(), &model));
    let (rolling_resistance, traction_coefficient, lateral_resistance_max) = coefficients;
    let (noise_heading_rad_per_sqrt_m, noise_along_m_per_sqrt_m, noise_cross_m_per_sqrt_m) = noises;
    let calibration = parse_calibration(s);
    Some(TerrainSpec {
        model,
        rolling_resistance,
        traction_coefficient,
        lateral_resistance_max,
        covariance,
        noise_heading_rad_per_sqrt_m,
        noise_along_m_per_sqrt_m,
        noise_cross_m_per_sqrt_m,
        calibration,
    })
}

/// The optional calibration marks `fit` writes; `None` when the terrain has none of them.
/// `calibrated` defaults to false (a terrain `fit` kept as it was).
fn parse_calibration(s: &Section) -> Option<TerrainCalibration> {
    if CALIBRATION_KEYS.iter().all(|k| s.get(k).is_none()) {
        return None;
    }
    Some(TerrainCalibration {
        calibrated: s.get("calibrated").is_some() && s.boolean("calibrated"),
        source: s.get("calibration_source").map(|_| s.string("calibration_source").to_string()),
        translation_error: s.optional_plausible_number(
            "calibration_translation_error",
            Rule::NonNegative,
            &TRANSLATION_ERROR,
        ),
        horizon_s: s.optional_plausible_number("calibration_horizon_s", Rule::Positive, &HORIZON),
    })
}

fn noise(s: &Section, key: &str) -> f64 {
    s.optional_plausible_number(key, Rule::NonNegative, &NOISE).unwrap_or(0.0)
}

/// Physical range of each scalar model parameter.
fn param_rule(key: &str) -> Rule {
    match key {
        "alpha" | "alpha_left" | "alpha_right" | "track_expansion" | "icr_left_m" => Rule::Positive,
        "icr_right_m" => Rule::Negative,
        _ => Rule::Finite,
    }
}

fn parse_model(s: &Section, family: Family, track_width_m: f64) -> Option<Model> {
    if family == Family::ExtendedScheduled {
        let schedule = parse_schedule(s)?;
        return Some(Model::ExtendedScheduled(ExtendedScheduled { track_width_m, schedule }));
    }
    let errors_before = s.errors();
    let keys = family.param_names();
    let params: Vec<f64> = keys.iter().map(|k| s.plausible_number(k, param_rule(k), &PARAMETER)).collect();
    if s.errors() > errors_before {
        return None;
    }
    if let (Family::Linear, [j11, j12, _, _, j31, j32]) = (family, params.as_slice()) {
        // Same threshold as the inverse in `kinematics::Linear`, so an accepted model inverts.
        let det = j11 * j32 - j12 * j31;
        let scale = j11.abs().max(j12.abs()) * j31.abs().max(j32.abs());
        if det.abs() <= 1e-9 * scale.max(1e-300) {
            let what =
                format!("forward and yaw rows are singular (j11*j32 - j12*j31 = {det}), the model has no inverse");
            s.error("model", what);
            return None;
        }
    }
    let model = Model::from_params(family, &params, track_width_m);
    if model.is_none() {
        s.error("model", format!("cannot build a {family} model from {} parameters", params.len()));
    }
    model
}

/// `schedule = [[curvature_per_m, alpha, track_expansion], ...]`, strictly increasing curvature.
fn parse_schedule(s: &Section) -> Option<Vec<ScheduleRow>> {
    const EXPECTED: &str = "an array of [curvature_per_m, alpha, track_expansion] rows";
    let rows = match s.required("schedule", EXPECTED)? {
        DeValue::Array(rows) if rows.is_empty() => {
            s.error("schedule", "must have at least one row");
            return None;
        }
        DeValue::Array(rows) if rows.len() > MAX_SCHEDULE_ROWS => {
            s.error("schedule", format!("has {} rows, more than {MAX_SCHEDULE_ROWS}", rows.len()));
            return None;
        }
        DeValue::Array(rows) => rows,
        v => {
            s.error("schedule", format!("must be {EXPECTED}, got {}", describe(v)));
            return None;
        }
    };
    let mut out: Vec<ScheduleRow> = Vec::with_capacity(rows.len());
    for (i, row) in rows.iter().enumerate() {
        let key = format!("schedule[{i}]");
        let cells = match row.get_ref() {
            DeValue::Array(cells) => cells,
            v => {
                s.error(&key, format!("must be [curvature_per_m, alpha, track_expansion], got {}", describe(v)));
                return None;
            }
        };
        let [c, a, x] = cells.as_ref() else {
            s.error(&key, "must have exactly 3 numbers: [curvature_per_m, alpha, track_expansion]");
            return None;
        };
        let cell = |v: &DeValue, name: &str, rule: Rule| {
            check_number(v, rule).map_err(|w| s.error(&key, format!("{name} {w}"))).ok()
        };
        let r = ScheduleRow {
            curvature_per_m: cell(c.get_ref(), "curvature_per_m", Rule::NonNegative)?,
            alpha: cell(a.get_ref(), "alpha", Rule::Positive)?,
            track_expansion: cell(x.get_ref(), "track_expansion", Rule::Positive)?,
        };
        if let Some(prev) = out.last().filter(|p| r.curvature_per_m <= p.curvature_per_m) {
            let what = format!(
                "curvature_per_m must be greater than the previous row's ({}), got {}",
                show_number(prev.curvature_per_m),
                show_number(r.curvature_per_m)
            );
            s.error(&key, what);
            return None;
        }
        out.push(r);
    }
    Some(out)
}

/// The parameters' names in covariance order, for messages.
fn covariance_order(model: &Model) -> String {
    match model {
        Model::ExtendedScheduled(_) => "curvature_per_m, alpha, track_expansion per schedule row".to_string(),
        m => m.family().param_names().join(", "),
    }
}

/// Square, finite, symmetric (relative 1e-9) with a non-negative diagonal, of the model's size.
fn parse_covariance(s: &Section, v: &DeValue, model: &Model) -> Option<Vec<Vec<f64>>> {
    let n = model.params().len();
    let shape = format!("a {n}x{n} matrix (parameters in the order {})", covariance_order(model));
    let rows = match v {
        DeValue::Array(rows) if rows.len() == n => rows,
        DeValue::Array(rows) => {
            s.error("covariance", format!("must be {shape}, got {} rows", rows.len()));
            return None;
        }
        v => {
            s.error("covariance", format!("must be {shape}, got {}", describe(v)));
            return None;
        }
    };
    let mut out = Vec::with_capacity(n);
    for (i, row) in rows.iter().enumerate() {
        let cells = match row.get_ref() {
            DeValue::Array(cells) if cells.len() == n => cells,
            DeValue::Array(cells) => {
                s.error(&format!("covariance[{i}]"), format!("must have {n} entries, got {}", cells.len()));
                return None;
            }
            v => {
                s.error(&format!("covariance[{i}]"), format!("must be an array, got {}", describe(v)));
                return None;
            }
        };
        let mut numbers = Vec::with_capacity(n);
        for (j, cell) in cells.iter().enumerate() {
            match check_number(cell.get_ref(), Rule::Finite) {
                Ok(x) => numbers.push(x),
                Err(w) => {
                    s.error(&format!("covariance[{i}][{j}]"), w);
                    return None;
                }
            }
        }
        out.push(numbers);
    }
    check_covariance(s, &out).then_some(out)
}

fn check_covariance(s: &Section, c: &[Vec<f64>]) -> bool {
    for (i, row) in c.iter().enumerate() {
        if row[i] < 0.0 {
            s.error(&format!("covariance[{i}][{i}]"), format!("variance must be >= 0, got {}", show_number(row[i])));
            return false;
        }
        for j in 0..i {
            let (a, b) = (row[j], c[j][i]);
            let scale = a.abs().max(b.abs()).max((row[i] * c[j][j]).abs().sqrt());
            if (a - b).abs() > SYMMETRY_REL_TOL * scale {
                let what = format!("matrix must be symmetric, but [{i}][{j}] = {a} and [{j}][{i}] = {b}");
                s.error(&format!("covariance[{i}][{j}]"), what);
                return false;
            }
        }
    }
    true
}

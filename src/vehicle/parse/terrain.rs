//! `[terrain.NAME]`: one motion model per terrain (its family decides the parameter keys), the
//! traction coefficients, an optional schedule, covariance and noise intensities.

use std::collections::BTreeMap;

use toml::Value;

use super::section::{check_number, describe, Rule, Section};
use crate::kinematics::{ExtendedScheduled, Family, Model, MotionModel, ScheduleRow};
use crate::limits::clip;
use crate::vehicle::{TerrainSpec, VehicleError};

/// Keys every terrain table may hold, whatever its family.
const TERRAIN_COMMON_KEYS: &[&str] = &[
    "model",
    "rolling_resistance",
    "traction_coefficient",
    "lateral_resistance_max",
    "covariance",
    "noise_heading_rad_per_sqrt_m",
    "noise_along_m_per_sqrt_m",
    "noise_cross_m_per_sqrt_m",
];

/// Relative tolerance for covariance symmetry.
const SYMMETRY_REL_TOL: f64 = 1e-9;

fn valid_terrain_name(name: &str) -> bool {
    !name.is_empty() && name.chars().all(|c| c.is_ascii_alphanumeric() || c == '-' || c == '_')
}

pub(super) fn parse_terrains(s: &Section, track_width_m: f64) -> Result<BTreeMap<String, TerrainSpec>, VehicleError> {
    if s.table.is_empty() {
        return Err(VehicleError::Key {
            file: s.file.to_path_buf(),
            key: s.prefix.clone(),
            what: "at least one [terrain.NAME] table is needed".to_string(),
        });
    }
    let mut out = BTreeMap::new();
    for name in s.table.keys() {
        if !valid_terrain_name(name) {
            let what = "terrain names must be non-empty and use only letters, digits, '-' and '_'";
            return Err(s.error(name, what));
        }
        out.insert(name.clone(), parse_terrain(&s.table(name)?, track_width_m)?);
    }
    Ok(out)
}

fn parse_terrain(s: &Section, track_width_m: f64) -> Result<TerrainSpec, VehicleError> {
    let family_name = s.string("model")?;
    let family = Family::from_name(family_name).ok_or_else(|| {
        let names: Vec<&str> = Family::ALL.into_iter().map(Family::name).collect();
        s.error("model", format!("unknown model family {:?}, expected one of {}", clip(family_name), names.join(", ")))
    })?;
    let mut allowed = TERRAIN_COMMON_KEYS.to_vec();
    allowed.extend_from_slice(family.param_names());
    if family == Family::ExtendedScheduled {
        allowed.push("schedule");
    }
    s.check_keys(&allowed, Some(family))?;
    let model = parse_model(s, family, track_width_m)?;
    let covariance = match s.table.get("covariance") {
        None => None,
        Some(v) => Some(parse_covariance(s, v, &model)?),
    };
    Ok(TerrainSpec {
        model,
        rolling_resistance: s.number("rolling_resistance", Rule::NonNegative)?,
        traction_coefficient: s.number("traction_coefficient", Rule::NonNegative)?,
        lateral_resistance_max: s.number("lateral_resistance_max", Rule::NonNegative)?,
        covariance,
        noise_heading_rad_per_sqrt_m: noise(s, "noise_heading_rad_per_sqrt_m")?,
        noise_along_m_per_sqrt_m: noise(s, "noise_along_m_per_sqrt_m")?,
        noise_cross_m_per_sqrt_m: noise(s, "noise_cross_m_per_sqrt_m")?,
    })
}

fn noise(s: &Section, key: &str) -> Result<f64, VehicleError> {
    Ok(s.optional_number(key, Rule::NonNegative)?.unwrap_or(0.0))
}

/// Physical range of each scalar model parameter.
fn param_rule(key: &str) -> Rule {
    match key {
        "alpha" | "alpha_left" | "alpha_right" | "track_expansion" | "icr_left_m" => Rule::Positive,
        "icr_right_m" => Rule::Negative,
        _ => Rule::Finite,
    }
}

fn parse_model(s: &Section, family: Family, track_width_m: f64) -> Result<Model, VehicleError> {
    if family == Family::ExtendedScheduled {
        let schedule = parse_schedule(s)?;
        return Ok(Model::ExtendedScheduled(ExtendedScheduled { track_width_m, schedule }));
    }
    let keys = family.param_names();
    let params = keys.iter().map(|k| s.number(k, param_rule(k))).collect::<Result<Vec<f64>, _>>()?;
    if let (Family::Linear, [j11, j12, _, _, j31, j32]) = (family, params.as_slice()) {
        // Same threshold as the inverse in `kinematics::Linear`, so an accepted model inverts.
        let det = j11 * j32 - j12 * j31;
        let scale = j11.abs().max(j12.abs()) * j31.abs().max(j32.abs());
        if det.abs() <= 1e-9 * scale.max(1e-300) {
            let what =
                format!("forward and yaw rows are singular (j11*j32 - j12*j31 = {det}), the model has no inverse");
            return Err(s.error("model", what));
        }
    }
    Model::from_params(family, &params, track_width_m)
        .ok_or_else(|| s.error("model", format!("cannot build a {family} model from {} parameters", params.len())))
}

/// `schedule = [[curvature_per_m, alpha, track_expansion], ...]`, strictly increasing curvature.
fn parse_schedule(s: &Section) -> Result<Vec<ScheduleRow>, VehicleError> {
    const EXPECTED: &str = "an array of [curvature_per_m, alpha, track_expansion] rows";
    let rows = match s.required("schedule", EXPECTED)? {
        Value::Array(rows) if !rows.is_empty() => rows,
        Value::Array(_) => return Err(s.error("schedule", "must have at least one row")),
        v => return Err(s.error("schedule", format!("must be {EXPECTED}, got {}", describe(v)))),
    };
    let mut out: Vec<ScheduleRow> = Vec::with_capacity(rows.len());
    for (i, row) in rows.iter().enumerate() {
        let key = format!("schedule[{i}]");
        let cells = match row {
            Value::Array(cells) => cells.as_slice(),
            v => {
                return Err(
                    s.error(&key, format!("must be [curvature_per_m, alpha, track_expansion], got {}", describe(v)))
                )
            }
        };
        let [c, a, x] = cells else {
            return Err(s.error(&key, "must have exactly 3 numbers: [curvature_per_m, alpha, track_expansion]"));
        };
        let cell =
            |v: &Value, name: &str, rule: Rule| check_number(v, rule).map_err(|w| s.error(&key, format!("{name} {w}")));
        let r = ScheduleRow {
            curvature_per_m: cell(c, "curvature_per_m", Rule::NonNegative)?,
            alpha: cell(a, "alpha", Rule::Positive)?,
            track_expansion: cell(x, "track_expansion", Rule::Positive)?,
        };
        if let Some(prev) = out.last().filter(|p| r.curvature_per_m <= p.curvature_per_m) {
            let what = format!(
                "curvature_per_m must be greater than the previous row's ({}), got {}",
                prev.curvature_per_m, r.curvature_per_m
            );
            return Err(s.error(&key, what));
        }
        out.push(r);
    }
    Ok(out)
}

/// The parameters' names in covariance order, for messages.
fn covariance_order(model: &Model) -> String {
    match model {
        Model::ExtendedScheduled(_) => "curvature_per_m, alpha, track_expansion per schedule row".to_string(),
        m => m.family().param_names().join(", "),
    }
}

/// Square, finite, symmetric (relative 1e-9) with a non-negative diagonal, of the model's size.
fn parse_covariance(s: &Section, v: &Value, model: &Model) -> Result<Vec<Vec<f64>>, VehicleError> {
    let n = model.params().len();
    let shape = format!("a {n}x{n} matrix (parameters in the order {})", covariance_order(model));
    let rows = match v {
        Value::Array(rows) if rows.len() == n => rows,
        Value::Array(rows) => return Err(s.error("covariance", format!("must be {shape}, got {} rows", rows.len()))),
        v => return Err(s.error("covariance", format!("must be {shape}, got {}", describe(v)))),
    };
    let mut out = Vec::with_capacity(n);
    for (i, row) in rows.iter().enumerate() {
        let cells = match row {
            Value::Array(cells) if cells.len() == n => cells,
            Value::Array(cells) => {
                return Err(s.error(&format!("covariance[{i}]"), format!("must have {n} entries, got {}", cells.len())))
            }
            v => return Err(s.error(&format!("covariance[{i}]"), format!("must be an array, got {}", describe(v)))),
        };
        let mut numbers = Vec::with_capacity(n);
        for (j, cell) in cells.iter().enumerate() {
            numbers.push(check_number(cell, Rule::Finite).map_err(|w| s.error(&format!("covariance[{i}][{j}]"), w))?);
        }
        out.push(numbers);
    }
    check_covariance(s, &out)?;
    Ok(out)
}

fn check_covariance(s: &Section, c: &[Vec<f64>]) -> Result<(), VehicleError> {
    for (i, row) in c.iter().enumerate() {
        if row[i] < 0.0 {
            return Err(s.error(&format!("covariance[{i}][{i}]"), format!("variance must be >= 0, got {}", row[i])));
        }
        for j in 0..i {
            let (a, b) = (row[j], c[j][i]);
            let scale = a.abs().max(b.abs()).max((row[i] * c[j][j]).abs().sqrt());
            if (a - b).abs() > SYMMETRY_REL_TOL * scale {
                let what = format!("matrix must be symmetric, but [{i}][{j}] = {a} and [{j}][{i}] = {b}");
                return Err(s.error(&format!("covariance[{i}][{j}]"), what));
            }
        }
    }
    Ok(())
}

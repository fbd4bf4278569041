//! Strict reader for vehicle profiles (README, "Vehicle profile, TOML").
//!
//! The text is parsed into a `toml::Table` and walked by hand, because the keys allowed in a
//! `[terrain.NAME]` table depend on its `model` family, which serde's `deny_unknown_fields` cannot
//! express. Every unknown key, missing key, wrong type and out-of-range number is an error that
//! names the full key path (`terrain.gravel.alpha_left`) and what was expected. SI units.

use std::collections::BTreeMap;
use std::path::Path;

use toml::{Table, Value};

use super::{
    FollowerSpec, ImuSpec, InverseChoice, Profile, RunningGear, TerrainCalibration, TerrainSpec, VehicleError,
    VehicleSpec,
};
use crate::kinematics::{ExtendedScheduled, Family, Model, MotionModel, ScheduleRow};
use crate::limits::clip;

const TOP_KEYS: &[&str] = &["vehicle", "follower", "terrain", "imu"];

const IMU_KEYS: &[&str] = &["gyro_bias_sd_deg_per_h", "gyro_arw_deg_per_sqrt_h"];

const VEHICLE_KEYS: &[&str] = &[
    "name",
    "running_gear",
    "track_width_m",
    "contact_length_m",
    "mass_kg",
    "max_side_speed_mps",
    "max_side_accel_mps2",
    "max_side_thrust_n",
    "max_power_w",
    "drivetrain_efficiency",
    "regenerative",
    "cruise_speed_mps",
    "max_yaw_rate_radps",
    "battery_wh",
];

const FOLLOWER_KEYS: &[&str] = &["lookahead_m", "control_rate_hz", "inverse_model", "corridor_m", "curvature_scale_m"];

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
    "calibrated",
    "calibration_source",
    "calibration_translation_error",
    "calibration_horizon_s",
];

/// Relative tolerance for covariance symmetry.
const SYMMETRY_REL_TOL: f64 = 1e-9;

/// Reads and validates a profile from `text`; `path` only names the file in error messages.
///
/// ```
/// use std::path::Path;
/// use skidroute::vehicle::{parse_profile, DEMO_PROFILE_TOML};
/// let profile = parse_profile(Path::new("demo.toml"), DEMO_PROFILE_TOML).unwrap();
/// assert!(profile.terrain.contains_key("gravel"));
/// ```
pub fn parse_profile(path: &Path, text: &str) -> Result<Profile, VehicleError> {
    let root: Table = text.parse().map_err(|e| syntax_error(path, text, &e))?;
    let root = Section { file: path, prefix: String::new(), table: &root };
    root.check_keys(TOP_KEYS, None)?;
    let vehicle = parse_vehicle(&root.table("vehicle")?)?;
    let follower = parse_follower(&root.table("follower")?)?;
    let terrain = parse_terrains(&root.table("terrain")?, vehicle.track_width_m)?;
    let imu = match root.table.get("imu") {
        None => None,
        Some(_) => Some(parse_imu(&root.table("imu")?)?),
    };
    Ok(Profile { vehicle, follower, terrain, imu })
}

/// A TOML syntax error with the 1-based line and column of the span the parser reports.
fn syntax_error(path: &Path, text: &str, e: &toml::de::Error) -> VehicleError {
    let message = e.message().trim().replace('\n', "; ");
    let message = match e.span() {
        Some(span) => {
            let before = text.get(..span.start).unwrap_or(text);
            let line = before.matches('\n').count() + 1;
            let column = before.rsplit('\n').next().map_or(0, |l| l.chars().count()) + 1;
            format!("line {line}, column {column}: {message}")
        }
        None => message,
    };
    VehicleError::Syntax { file: path.to_path_buf(), message }
}

/// What a number must be.
#[derive(Debug, Clone, Copy)]
enum Rule {
    Finite,
    Positive,
    Negative,
    NonNegative,
    /// In (0, 1].
    Fraction,
}

impl Rule {
    fn expected(self) -> &'static str {
        match self {
            Rule::Finite => "a finite number",
            Rule::Positive => "a positive number",
            Rule::Negative => "a negative number",
            Rule::NonNegative => "a number >= 0",
            Rule::Fraction => "a number in (0, 1]",
        }
    }

    fn accepts(self, x: f64) -> bool {
        x.is_finite()
            && match self {
                Rule::Finite => true,
                Rule::Positive => x > 0.0,
                Rule::Negative => x < 0.0,
                Rule::NonNegative => x >= 0.0,
                Rule::Fraction => x > 0.0 && x <= 1.0,
            }
    }
}

/// Short description of a TOML value for error messages.
fn describe(v: &Value) -> String {
    match v {
        Value::Integer(i) => i.to_string(),
        Value::Float(f) => f.to_string(),
        Value::String(s) => format!("the string {:?}", clip(s)),
        Value::Boolean(b) => format!("the boolean {b}"),
        Value::Datetime(d) => format!("the date-time {d}"),
        Value::Array(_) => "an array".to_string(),
        Value::Table(_) => "a table".to_string(),
    }
}

/// The number in `v` if it satisfies `rule`, otherwise the "must be ..., got ..." message.
/// TOML integers are accepted wherever a number is expected.
fn check_number(v: &Value, rule: Rule) -> Result<f64, String> {
    let x = match v {
        Value::Integer(i) => *i as f64,
        Value::Float(f) => *f,
        _ => return Err(format!("must be {}, got {}", rule.expected(), describe(v))),
    };
    if rule.accepts(x) {
        Ok(x)
    } else {
        Err(format!("must be {}, got {}", rule.expected(), describe(v)))
    }
}

/// Edit distance counting insertions, deletions, substitutions and swaps of neighbours (optimal
/// string alignment), for "did you mean" suggestions: `alpah` is one edit from `alpha`.
fn edit_distance(a: &str, b: &str) -> usize {
    let (a, b): (Vec<char>, Vec<char>) = (a.chars().collect(), b.chars().collect());
    let mut d = vec![vec![0usize; b.len() + 1]; a.len() + 1];
    for (i, row) in d.iter_mut().enumerate() {
        row[0] = i;
    }
    for (j, cell) in d[0].iter_mut().enumerate() {
        *cell = j;
    }
    for i in 1..=a.len() {
        for j in 1..=b.len() {
            let cost = usize::from(a[i - 1] != b[j - 1]);
            let mut best = (d[i - 1][j] + 1).min(d[i][j - 1] + 1).min(d[i - 1][j - 1] + cost);
            if i > 1 && j > 1 && a[i - 1] == b[j - 2] && a[i - 2] == b[j - 1] {
                best = best.min(d[i - 2][j - 2] + 1);
            }
            d[i][j] = best;
        }
    }
    d[a.len()][b.len()]
}

/// The allowed key closest to `key`, if it is close enough to be a likely typo.
fn suggestion<'k>(key: &str, allowed: &[&'k str]) -> Option<&'k str> {
    let len = key.chars().count();
    let limit = (len / 3).clamp(1, 3);
    // Lengths further apart than the limit cannot be within it; skipping them keeps a huge
    // hostile key from costing a len x len table.
    allowed
        .iter()
        .filter(|k| k.chars().count().abs_diff(len) <= limit)
        .map(|k| (edit_distance(key, k), *k))
        .filter(|(d, _)| *d <= limit)
        .min_by_key(|(d, _)| *d)
        .map(|(_, k)| k)
}

/// One TOML table being validated, with its dotted path for messages.
struct Section<'a> {
    file: &'a Path,
    prefix: String,
    table: &'a Table,
}

impl<'a> Section<'a> {
    fn key_path(&self, key: &str) -> String {
        if self.prefix.is_empty() {
            clip(key).into_owned()
        } else {
            format!("{}.{}", self.prefix, clip(key))
        }
    }

    fn error(&self, key: &str, what: impl Into<String>) -> VehicleError {
        VehicleError::Key { file: self.file.to_path_buf(), key: self.key_path(key), what: what.into() }
    }

    /// Rejects any key not in `allowed`; for terrain tables `family` adds a hint when the key
    /// belongs to another model family.
    fn check_keys(&self, allowed: &[&str], family: Option<Family>) -> Result<(), VehicleError> {
        let Some(key) = self.table.keys().find(|k| !allowed.contains(&k.as_str())) else {
            return Ok(());
        };
        if let Some(near) = suggestion(key, allowed) {
            return Err(self.error(key, format!("unknown key (did you mean {near}?)")));
        }
        if let Some(family) = family {
            let owners: Vec<&str> = Family::ALL
                .into_iter()
                .filter(|f| {
                    f.param_names().contains(&key.as_str()) || (key == "schedule" && *f == Family::ExtendedScheduled)
                })
                .map(Family::name)
                .collect();
            if !owners.is_empty() {
                let what = format!("unknown key for model {family} (it belongs to model {})", owners.join(", "));
                return Err(self.error(key, what));
            }
        }
        Err(self.error(key, "unknown key"))
    }

    fn required(&self, key: &str, expected: &str) -> Result<&'a Value, VehicleError> {
        self.table.get(key).ok_or_else(|| self.error(key, format!("missing required key, expected {expected}")))
    }

    fn table(&self, key: &str) -> Result<Section<'a>, VehicleError> {
        match self.required(key, "a table")? {
            Value::Table(t) => Ok(Section { file: self.file, prefix: self.key_path(key), table: t }),
            v => Err(self.error(key, format!("must be a table, got {}", describe(v)))),
        }
    }

    fn number(&self, key: &str, rule: Rule) -> Result<f64, VehicleError> {
        check_number(self.required(key, rule.expected())?, rule).map_err(|what| self.error(key, what))
    }

    fn optional_number(&self, key: &str, rule: Rule) -> Result<Option<f64>, VehicleError> {
        match self.table.get(key) {
            None => Ok(None),
            Some(v) => check_number(v, rule).map(Some).map_err(|what| self.error(key, what)),
        }
    }

    fn string(&self, key: &str) -> Result<&'a str, VehicleError> {
        match self.required(key, "a string")? {
            Value::String(s) => Ok(s),
            v => Err(self.error(key, format!("must be a string, got {}", describe(v)))),
        }
    }

    fn boolean(&self, key: &str) -> Result<bool, VehicleError> {
        match self.required(key, "true or false")? {
            Value::Boolean(b) => Ok(*b),
            v => Err(self.error(key, format!("must be true or false, got {}", describe(v)))),
        }
    }
}

fn parse_vehicle(s: &Section) -> Result<VehicleSpec, VehicleError> {
    s.check_keys(VEHICLE_KEYS, None)?;
    let name = s.string("name")?;
    if name.trim().is_empty() {
        return Err(s.error("name", "must be a non-empty string"));
    }
    let running_gear = match s.string("running_gear")? {
        "tracks" => RunningGear::Tracks,
        "wheels" => RunningGear::Wheels,
        other => {
            return Err(s.error("running_gear", format!("must be \"tracks\" or \"wheels\", got {:?}", clip(other))))
        }
    };
    Ok(VehicleSpec {
        name: name.to_string(),
        running_gear,
        track_width_m: s.number("track_width_m", Rule::Positive)?,
        contact_length_m: s.number("contact_length_m", Rule::Positive)?,
        mass_kg: s.number("mass_kg", Rule::Positive)?,
        max_side_speed_mps: s.number("max_side_speed_mps", Rule::Positive)?,
        max_side_accel_mps2: s.number("max_side_accel_mps2", Rule::Positive)?,
        max_side_thrust_n: s.number("max_side_thrust_n", Rule::Positive)?,
        max_power_w: s.number("max_power_w", Rule::Positive)?,
        drivetrain_efficiency: s.number("drivetrain_efficiency", Rule::Fraction)?,
        regenerative: s.boolean("regenerative")?,
        cruise_speed_mps: s.number("cruise_speed_mps", Rule::Positive)?,
        max_yaw_rate_radps: s.number("max_yaw_rate_radps", Rule::Positive)?,
        battery_wh: s.optional_number("battery_wh", Rule::Positive)?,
    })
}

fn parse_follower(s: &Section) -> Result<FollowerSpec, VehicleError> {
    s.check_keys(FOLLOWER_KEYS, None)?;
    let inverse_model = match s.string("inverse_model")? {
        "ideal" => InverseChoice::Ideal,
        "calibrated" => InverseChoice::Calibrated,
        other => {
            return Err(s.error("inverse_model", format!("must be \"ideal\" or \"calibrated\", got {:?}", clip(other))))
        }
    };
    Ok(FollowerSpec {
        lookahead_m: s.number("lookahead_m", Rule::Positive)?,
        control_rate_hz: control_rate_hz(s)?,
        inverse_model,
        corridor_m: s.number("corridor_m", Rule::Positive)?,
        curvature_scale_m: s.number("curvature_scale_m", Rule::Positive)?,
    })
}

/// Controllers of these vehicles run at a few to a few hundred hertz; outside 0.1 to 10 000 Hz
/// the value is a unit mistake, and the simulation step (its inverse) would be meaningless.
fn control_rate_hz(s: &Section) -> Result<f64, VehicleError> {
    let hz = s.number("control_rate_hz", Rule::Positive)?;
    if !(0.1..=10_000.0).contains(&hz) {
        return Err(s.error("control_rate_hz", format!("must be between 0.1 and 10000 Hz, got {hz}")));
    }
    Ok(hz)
}

fn valid_terrain_name(name: &str) -> bool {
    !name.is_empty() && name.chars().all(|c| c.is_ascii_alphanumeric() || c == '-' || c == '_')
}

fn parse_terrains(s: &Section, track_width_m: f64) -> Result<BTreeMap<String, TerrainSpec>, VehicleError> {
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
        calibration: parse_calibration(s)?,
    })
}

/// `[imu]`: both keys required, each >= 0.
fn parse_imu(s: &Section) -> Result<ImuSpec, VehicleError> {
    s.check_keys(IMU_KEYS, None)?;
    Ok(ImuSpec {
        gyro_bias_sd_deg_per_h: s.number("gyro_bias_sd_deg_per_h", Rule::NonNegative)?,
        gyro_arw_deg_per_sqrt_h: s.number("gyro_arw_deg_per_sqrt_h", Rule::NonNegative)?,
    })
}

/// The optional `calibrat*` keys `fit` writes; `None` when the terrain has none of them.
fn parse_calibration(s: &Section) -> Result<Option<TerrainCalibration>, VehicleError> {
    let keys = ["calibrated", "calibration_source", "calibration_translation_error", "calibration_horizon_s"];
    if keys.iter().all(|k| !s.table.contains_key(*k)) {
        return Ok(None);
    }
    let calibrated = match s.table.get("calibrated") {
        None => false,
        Some(_) => s.boolean("calibrated")?,
    };
    let source = match s.table.get("calibration_source") {
        None => None,
        Some(_) => Some(s.string("calibration_source")?.to_string()),
    };
    Ok(Some(TerrainCalibration {
        calibrated,
        source,
        translation_error: s.optional_number("calibration_translation_error", Rule::NonNegative)?,
        horizon_s: s.optional_number("calibration_horizon_s", Rule::Positive)?,
    }))
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

#[cfg(test)]
mod tests {
    use super::*;
    use crate::vehicle::DEMO_PROFILE_TOML;
    use approx::assert_relative_eq;

    /// A small valid profile that tests edit with `str::replace`.
    const BASE: &str = r#"
[vehicle]
name = "test carrier"
running_gear = "tracks"
track_width_m = 0.9
contact_length_m = 1.1
mass_kg = 480.0
max_side_speed_mps = 2.0
max_side_accel_mps2 = 1.0
max_side_thrust_n = 2500.0
max_power_w = 4000.0
drivetrain_efficiency = 0.85
regenerative = false
cruise_speed_mps = 1.2
max_yaw_rate_radps = 1.2

[follower]
lookahead_m = 1.5
control_rate_hz = 20.0
inverse_model = "ideal"
corridor_m = 0.5
curvature_scale_m = 0.5

[terrain.packed-snow]
model = "extended-symmetric"
alpha = 0.92
track_expansion = 1.6
rolling_resistance = 0.06
traction_coefficient = 0.3
lateral_resistance_max = 0.35
"#;

    fn parse(text: &str) -> Result<Profile, VehicleError> {
        parse_profile(Path::new("test.toml"), text)
    }

    /// The error message of a profile that must be rejected.
    fn error_of(text: &str) -> String {
        match parse(text) {
            Ok(_) => panic!("profile was accepted:\n{text}"),
            Err(e) => e.to_string(),
        }
    }

    fn replaced(from: &str, to: &str) -> String {
        assert!(BASE.contains(from), "{from} not in the base profile");
        BASE.replace(from, to)
    }

    #[test]
    fn base_parses() {
        let p = parse(BASE).expect("base profile");
        assert_eq!(p.vehicle.battery_wh, None);
        let t = &p.terrain["packed-snow"];
        assert_eq!(t.noise_cross_m_per_sqrt_m, 0.0);
        assert_eq!(t.covariance, None);
    }

    #[test]
    fn demo_parses_with_all_terrains() {
        let p = parse(DEMO_PROFILE_TOML).expect("demo profile");
        assert_eq!(p.terrain_names(), ["asphalt", "deep-snow", "grass", "gravel", "packed-snow", "slush"]);
        assert_eq!(p.vehicle.running_gear, RunningGear::Tracks);
        assert_eq!(p.vehicle.battery_wh, Some(3000.0));
        assert_eq!(p.terrain["deep-snow"].model.family(), Family::ExtendedScheduled);
        assert_eq!(p.terrain["grass"].model.family(), Family::Icr);
        for (name, t) in &p.terrain {
            assert!(t.noise_heading_rad_per_sqrt_m > 0.0, "{name} has no heading noise");
            if let Some(c) = &t.covariance {
                assert_eq!(c.len(), t.model.params().len(), "{name}");
            }
        }
    }

    #[test]
    fn demo_constructor_works() {
        let p = Profile::demo();
        assert_relative_eq!(p.vehicle.track_width_m, 0.9);
        assert_eq!(p.terrain.len(), 6);
        // The model carries the vehicle's track width.
        let Model::ExtendedSymmetric(m) = &p.terrain["asphalt"].model else { panic!("asphalt family") };
        assert_relative_eq!(m.track_width_m, 0.9);
    }

    #[test]
    fn typo_key_is_named_with_suggestion() {
        let e = error_of(&replaced("mass_kg = 480.0", "mas_kg = 480.0"));
        assert!(e.contains("vehicle.mas_kg: unknown key (did you mean mass_kg?)"), "{e}");
        let e = error_of(&replaced("alpha = 0.92", "alpah = 0.92"));
        assert!(e.contains("terrain.packed-snow.alpah: unknown key (did you mean alpha?)"), "{e}");
        let e = error_of(&format!("{BASE}\n[vehicles]\nx = 1\n"));
        assert!(e.contains("vehicles: unknown key (did you mean vehicle?)"), "{e}");
    }

    #[test]
    fn key_of_another_family_is_explained() {
        let e = error_of(&replaced("alpha = 0.92", "alpha_left = 0.92"));
        assert!(e.contains("terrain.packed-snow.alpha_left: unknown key for model extended-symmetric"), "{e}");
        assert!(e.contains("belongs to model extended"), "{e}");
    }

    #[test]
    fn negative_mass_names_key_and_value() {
        let e = error_of(&replaced("mass_kg = 480.0", "mass_kg = -480"));
        assert!(e.contains("test.toml: vehicle.mass_kg: must be a positive number, got -480"), "{e}");
    }

    #[test]
    fn missing_key_is_named() {
        let e = error_of(&replaced("lookahead_m = 1.5\n", ""));
        assert!(e.contains("follower.lookahead_m: missing required key"), "{e}");
        let e = error_of(&replaced("track_expansion = 1.6\n", ""));
        assert!(e.contains("terrain.packed-snow.track_expansion: missing required key"), "{e}");
    }

    #[test]
    fn unknown_family_lists_the_six() {
        let e = error_of(&replaced("\"extended-symmetric\"", "\"magic\""));
        assert!(e.contains("terrain.packed-snow.model: unknown model family \"magic\""), "{e}");
        for f in Family::ALL {
            assert!(e.contains(f.name()), "{e}");
        }
    }

    #[test]
    fn missing_or_empty_terrain_table() {
        let cut = BASE.find("[terrain.packed-snow]").expect("terrain in base");
        let e = error_of(&BASE[..cut]);
        assert!(e.contains("terrain: missing required key"), "{e}");
        let e = error_of(&format!("{}[terrain]\n", &BASE[..cut]));
        assert!(e.contains("terrain: at least one [terrain.NAME] table is needed"), "{e}");
    }

    #[test]
    fn bad_terrain_name_rejected() {
        let e = error_of(&replaced("[terrain.packed-snow]", "[terrain.\"packed snow\"]"));
        assert!(e.contains("terrain.packed snow: terrain names must be non-empty"), "{e}");
    }

    fn scheduled(schedule: &str) -> String {
        replaced(
            "model = \"extended-symmetric\"\nalpha = 0.92\ntrack_expansion = 1.6",
            &format!("model = \"extended-scheduled\"\nschedule = {schedule}"),
        )
    }

    #[test]
    fn schedule_parses_and_must_increase() {
        let p = parse(&scheduled("[[0, 0.9, 1.5], [1.0, 0.8, 2.0]]")).expect("schedule");
        let Model::ExtendedScheduled(m) = &p.terrain["packed-snow"].model else { panic!("family") };
        assert_eq!(m.schedule.len(), 2);
        assert_relative_eq!(m.schedule[1].track_expansion, 2.0);
        let e = error_of(&scheduled("[[0.0, 0.9, 1.5], [1.0, 0.8, 2.0], [1.0, 0.7, 2.5]]"));
        assert!(e.contains("terrain.packed-snow.schedule[2]: curvature_per_m must be greater"), "{e}");
        let e = error_of(&scheduled("[]"));
        assert!(e.contains("schedule: must have at least one row"), "{e}");
        let e = error_of(&scheduled("[[0.0, 0.9]]"));
        assert!(e.contains("schedule[0]: must have exactly 3 numbers"), "{e}");
        let e = error_of(&scheduled("[[0.0, 0.0, 1.5]]"));
        assert!(e.contains("schedule[0]: alpha must be a positive number, got 0"), "{e}");
        let e = error_of(&scheduled("[[-0.5, 0.9, 1.5]]"));
        assert!(e.contains("schedule[0]: curvature_per_m must be a number >= 0"), "{e}");
    }

    #[test]
    fn covariance_size_and_shape_checked() {
        let with = |c: &str| {
            replaced("lateral_resistance_max = 0.35", &format!("lateral_resistance_max = 0.35\ncovariance = {c}"))
        };
        let p = parse(&with("[[1e-4, 2e-5], [2e-5, 4e-4]]")).expect("covariance");
        assert_eq!(p.terrain["packed-snow"].covariance.as_ref().map(Vec::len), Some(2));
        let e = error_of(&with("[[1e-4, 0, 0], [0, 1e-4, 0], [0, 0, 1e-4]]"));
        assert!(e.contains("terrain.packed-snow.covariance: must be a 2x2 matrix"), "{e}");
        assert!(e.contains("alpha, track_expansion"), "{e}");
        let e = error_of(&with("[[1e-4], [0, 1e-4]]"));
        assert!(e.contains("covariance[0]: must have 2 entries, got 1"), "{e}");
        let e = error_of(&with("[[1e-4, 2e-5], [3e-5, 4e-4]]"));
        assert!(e.contains("must be symmetric"), "{e}");
        let e = error_of(&with("[[-1e-4, 0], [0, 4e-4]]"));
        assert!(e.contains("covariance[0][0]: variance must be >= 0"), "{e}");
        let e = error_of(&with("[[nan, 0], [0, 4e-4]]"));
        assert!(e.contains("covariance[0][0]: must be a finite number, got NaN"), "{e}");
    }

    #[test]
    fn efficiency_must_be_a_fraction() {
        let e = error_of(&replaced("drivetrain_efficiency = 0.85", "drivetrain_efficiency = 1.5"));
        assert!(e.contains("vehicle.drivetrain_efficiency: must be a number in (0, 1], got 1.5"), "{e}");
        parse(&replaced("drivetrain_efficiency = 0.85", "drivetrain_efficiency = 1")).expect("efficiency 1");
    }

    #[test]
    fn integers_accepted_for_floats() {
        let text =
            replaced("mass_kg = 480.0", "mass_kg = 480").replace("control_rate_hz = 20.0", "control_rate_hz = 20");
        let p = parse(&text).expect("integers");
        assert_relative_eq!(p.vehicle.mass_kg, 480.0);
        assert_relative_eq!(p.follower.control_rate_hz, 20.0);
    }

    #[test]
    fn types_and_enumerations_checked() {
        let e = error_of(&replaced("mass_kg = 480.0", "mass_kg = \"480\""));
        assert!(e.contains("vehicle.mass_kg: must be a positive number, got the string \"480\""), "{e}");
        let e = error_of(&replaced("regenerative = false", "regenerative = 0"));
        assert!(e.contains("vehicle.regenerative: must be true or false, got 0"), "{e}");
        let e = error_of(&replaced("\"tracks\"", "\"treads\""));
        assert!(e.contains("vehicle.running_gear: must be \"tracks\" or \"wheels\""), "{e}");
        let e = error_of(&replaced("inverse_model = \"ideal\"", "inverse_model = \"perfect\""));
        assert!(e.contains("follower.inverse_model: must be \"ideal\" or \"calibrated\""), "{e}");
        let e = error_of(&replaced("mass_kg = 480.0", "mass_kg = inf"));
        assert!(e.contains("vehicle.mass_kg: must be a positive number, got inf"), "{e}");
        let e = error_of(&replaced("traction_coefficient = 0.3", "traction_coefficient = -0.1"));
        assert!(e.contains("traction_coefficient: must be a number >= 0, got -0.1"), "{e}");
    }

    #[test]
    fn model_parameters_physical() {
        let e = error_of(&replaced("alpha = 0.92", "alpha = 0"));
        assert!(e.contains("terrain.packed-snow.alpha: must be a positive number, got 0"), "{e}");
        let icr = |l: &str, r: &str| {
            replaced(
                "model = \"extended-symmetric\"\nalpha = 0.92\ntrack_expansion = 1.6",
                &format!("model = \"icr\"\nicr_left_m = {l}\nicr_right_m = {r}\nicr_long_m = -0.02"),
            )
        };
        parse(&icr("0.6", "-0.6")).expect("icr");
        let e = error_of(&icr("0.6", "0.1"));
        assert!(e.contains("terrain.packed-snow.icr_right_m: must be a negative number, got 0.1"), "{e}");
        let e = error_of(&icr("-0.6", "-0.7"));
        assert!(e.contains("icr_left_m: must be a positive number"), "{e}");
    }

    #[test]
    fn singular_linear_model_rejected() {
        let linear = |j: [f64; 6]| {
            replaced(
                "model = \"extended-symmetric\"\nalpha = 0.92\ntrack_expansion = 1.6",
                &format!(
                    "model = \"linear\"\nj11 = {:?}\nj12 = {:?}\nj21 = {:?}\nj22 = {:?}\nj31 = {:?}\nj32 = {:?}",
                    j[0], j[1], j[2], j[3], j[4], j[5]
                ),
            )
        };
        parse(&linear([0.45, 0.47, 0.01, -0.02, -0.8, 0.75])).expect("linear");
        let e = error_of(&linear([0.5, 0.5, 0.0, 0.0, 0.5, 0.5]));
        assert!(e.contains("terrain.packed-snow.model: forward and yaw rows are singular"), "{e}");
    }

    #[test]
    fn battery_optional_and_positive() {
        let text = replaced("max_yaw_rate_radps = 1.2", "max_yaw_rate_radps = 1.2\nbattery_wh = 2500");
        assert_eq!(parse(&text).expect("battery").vehicle.battery_wh, Some(2500.0));
        let e = error_of(&replaced("max_yaw_rate_radps = 1.2", "max_yaw_rate_radps = 1.2\nbattery_wh = 0"));
        assert!(e.contains("vehicle.battery_wh: must be a positive number, got 0"), "{e}");
    }

    #[test]
    fn syntax_error_has_line_and_column() {
        let e = parse(&replaced("mass_kg = 480.0", "mass_kg = = 480.0")).expect_err("bad syntax");
        let VehicleError::Syntax { message, .. } = &e else { panic!("not a syntax error: {e}") };
        // `mass_kg` is on line 7 of the base text (which starts with a newline).
        assert!(message.starts_with("line 7, column "), "{message}");
        assert!(e.to_string().starts_with("test.toml: not valid TOML: line 7"), "{e}");
    }

    #[test]
    fn imu_section_is_optional_and_checked() {
        assert_eq!(parse(BASE).expect("base").imu, None);
        let with = |body: &str| format!("{BASE}\n[imu]\n{body}\n");
        let p = parse(&with("gyro_bias_sd_deg_per_h = 10\ngyro_arw_deg_per_sqrt_h = 0.3")).expect("imu");
        let imu = p.imu.expect("imu present");
        assert_relative_eq!(imu.gyro_bias_sd_deg_per_h, 10.0);
        assert_relative_eq!(imu.gyro_arw_deg_per_sqrt_h, 0.3);
        let e = error_of(&with("gyro_bias_sd_deg_per_h = 10"));
        assert!(e.contains("imu.gyro_arw_deg_per_sqrt_h: missing required key"), "{e}");
        let e = error_of(&with("gyro_bias_sd_deg_per_h = -1\ngyro_arw_deg_per_sqrt_h = 0.3"));
        assert!(e.contains("imu.gyro_bias_sd_deg_per_h: must be a number >= 0, got -1"), "{e}");
        let e = error_of(&with("gyro_bias_sd_deg_per_hr = 1\ngyro_arw_deg_per_sqrt_h = 0.3"));
        assert!(e.contains("imu.gyro_bias_sd_deg_per_hr: unknown key (did you mean gyro_bias_sd_deg_per_h?)"), "{e}");
    }

    #[test]
    fn calibration_keys_are_optional_and_checked() {
        let with =
            |extra: &str| replaced("lateral_resistance_max = 0.35", &format!("lateral_resistance_max = 0.35\n{extra}"));
        assert_eq!(parse(BASE).expect("base").terrain["packed-snow"].calibration, None);
        let p = parse(&with(
            "calibrated = true\ncalibration_source = \"fit of a.csv\"\ncalibration_translation_error = 0.043\ncalibration_horizon_s = 2.0",
        ))
        .expect("calibrated");
        let c = p.terrain["packed-snow"].calibration.clone().expect("calibration");
        assert!(c.calibrated);
        assert_eq!(c.source.as_deref(), Some("fit of a.csv"));
        assert_eq!(c.translation_error, Some(0.043));
        assert_eq!(c.horizon_s, Some(2.0));
        let e = error_of(&with("calibration_translation_error = -0.1"));
        assert!(e.contains("calibration_translation_error: must be a number >= 0"), "{e}");
        let e = error_of(&with("calibrated = \"yes\""));
        assert!(e.contains("terrain.packed-snow.calibrated: must be true or false"), "{e}");
    }

    #[test]
    fn suggestions_only_for_near_keys() {
        assert_eq!(suggestion("mas_kg", VEHICLE_KEYS), Some("mass_kg"));
        assert_eq!(suggestion("colour", VEHICLE_KEYS), None);
        assert_eq!(edit_distance("kitten", "sitting"), 3);
        assert_eq!(edit_distance("alpah", "alpha"), 1);
        assert_eq!(edit_distance("", "abc"), 3);
    }

    #[test]
    fn rejects_an_implausible_control_rate() {
        for bad in ["1e-300", "0.01", "1e6"] {
            let text = BASE.replace("control_rate_hz = 20.0", &format!("control_rate_hz = {bad}"));
            let e = parse_profile(Path::new("p.toml"), &text).expect_err(bad).to_string();
            assert!(e.starts_with("p.toml: follower.control_rate_hz: must be between 0.1 and 10000 Hz"), "{e}");
        }
    }
}

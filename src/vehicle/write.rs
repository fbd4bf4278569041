//! Writes a [`Profile`] back as TOML in the layout of README, Inputs (used by `fit` to emit calibrated
//! profiles). Every key is written; floats use Rust's shortest round-trip representation, so
//! `parse_profile(profile_to_toml(p))` gives back exactly `p`. SI units, as in the input format.

use super::{FollowerSpec, ImuSpec, InverseChoice, Profile, TerrainSpec, VehicleSpec};
use crate::kinematics::{Model, MotionModel};

/// The complete profile as TOML text. Each line of `header_comment` becomes a `# ` comment line
/// at the top.
///
/// ```
/// use std::path::Path;
/// use skidroute::vehicle::{parse_profile, profile_to_toml, Profile};
/// let demo = Profile::demo();
/// let text = profile_to_toml(&demo, "demo profile, written back");
/// assert_eq!(parse_profile(Path::new("again.toml"), &text).unwrap(), demo);
/// ```
pub fn profile_to_toml(p: &Profile, header_comment: &str) -> String {
    let mut out = String::new();
    for line in header_comment.lines() {
        let line = line.trim_end();
        if line.is_empty() {
            out.push_str("#\n");
        } else {
            out.push_str("# ");
            out.push_str(line);
            out.push('\n');
        }
    }
    if !out.is_empty() {
        out.push('\n');
    }
    write_vehicle(&mut out, &p.vehicle);
    write_follower(&mut out, &p.follower);
    if let Some(imu) = &p.imu {
        write_imu(&mut out, imu);
    }
    for (name, terrain) in &p.terrain {
        write_terrain(&mut out, name, terrain);
    }
    out
}

fn write_imu(out: &mut String, imu: &ImuSpec) {
    out.push_str("[imu]\n");
    assign(out, "gyro_bias_sd_deg_per_h", &float(imu.gyro_bias_sd_deg_per_h));
    assign(out, "gyro_arw_deg_per_sqrt_h", &float(imu.gyro_arw_deg_per_sqrt_h));
    out.push('\n');
}

/// A float as a TOML float that parses back to the same `f64` (integers keep their `.0`).
fn float(x: f64) -> String {
    if x.is_nan() {
        "nan".to_string()
    } else if x.is_infinite() {
        if x > 0.0 { "inf" } else { "-inf" }.to_string()
    } else {
        // `{:?}` is the shortest representation that round-trips, and always has a `.` or an
        // exponent, both of which TOML reads as a float.
        format!("{x:?}")
    }
}

/// A TOML basic string literal with the needed escapes.
fn string(s: &str) -> String {
    toml::Value::String(s.to_string()).to_string()
}

/// A table-name segment: bare when TOML allows it, quoted otherwise.
fn key(s: &str) -> String {
    if !s.is_empty() && s.chars().all(|c| c.is_ascii_alphanumeric() || c == '-' || c == '_') {
        s.to_string()
    } else {
        string(s)
    }
}

fn assign(out: &mut String, name: &str, value: &str) {
    out.push_str(name);
    out.push_str(" = ");
    out.push_str(value);
    out.push('\n');
}

fn write_vehicle(out: &mut String, v: &VehicleSpec) {
    out.push_str("[vehicle]\n");
    assign(out, "name", &string(&v.name));
    assign(out, "running_gear", &string(v.running_gear.name()));
    assign(out, "track_width_m", &float(v.track_width_m));
    assign(out, "contact_length_m", &float(v.contact_length_m));
    assign(out, "mass_kg", &float(v.mass_kg));
    assign(out, "max_side_speed_mps", &float(v.max_side_speed_mps));
    assign(out, "max_side_accel_mps2", &float(v.max_side_accel_mps2));
    assign(out, "max_side_thrust_n", &float(v.max_side_thrust_n));
    assign(out, "max_power_w", &float(v.max_power_w));
    assign(out, "drivetrain_efficiency", &float(v.drivetrain_efficiency));
    assign(out, "regenerative", if v.regenerative { "true" } else { "false" });
    assign(out, "cruise_speed_mps", &float(v.cruise_speed_mps));
    assign(out, "max_yaw_rate_radps", &float(v.max_yaw_rate_radps));
    if let Some(wh) = v.battery_wh {
        assign(out, "battery_wh", &float(wh));
    }
    if let Some(h) = v.cog_height_m {
        assign(out, "cog_height_m", &float(h));
    }
    out.push('\n');
}

fn write_follower(out: &mut String, f: &FollowerSpec) {
    out.push_str("[follower]\n");
    assign(out, "lookahead_m", &float(f.lookahead_m));
    assign(out, "control_rate_hz", &float(f.control_rate_hz));
    let inverse = match f.inverse_model {
        InverseChoice::Ideal => "ideal",
        InverseChoice::Calibrated => "calibrated",
    };
    assign(out, "inverse_model", &string(inverse));
    assign(out, "corridor_m", &float(f.corridor_m));
    assign(out, "curvature_scale_m", &float(f.curvature_scale_m));
    if let Some(a) = f.max_lateral_accel_mps2 {
        assign(out, "max_lateral_accel_mps2", &float(a));
    }
    out.push('\n');
}

/// `[a, b, c]` of floats.
fn row(values: &[f64]) -> String {
    let cells: Vec<String> = values.iter().map(|x| float(*x)).collect();
    format!("[{}]", cells.join(", "))
}

/// A multi-line array of rows, one per line.
fn rows<'r>(out: &mut String, name: &str, values: impl Iterator<Item = &'r [f64]>) {
    out.push_str(name);
    out.push_str(" = [\n");
    for r in values {
        out.push_str("  ");
        out.push_str(&row(r));
        out.push_str(",\n");
    }
    out.push_str("]\n");
}

fn write_model(out: &mut String, model: &Model) {
    let family = model.family();
    assign(out, "model", &string(family.name()));
    if let Model::ExtendedScheduled(s) = model {
        let table: Vec<[f64; 3]> = s.schedule.iter().map(|r| [r.curvature_per_m, r.alpha, r.track_expansion]).collect();
        out.push_str("# [curvature_per_m, alpha, track_expansion]\n");
        rows(out, "schedule", table.iter().map(|r| r.as_slice()));
        return;
    }
    for (name, value) in family.param_names().iter().zip(model.params()) {
        assign(out, name, &float(value));
    }
}

fn write_terrain(out: &mut String, name: &str, t: &TerrainSpec) {
    out.push_str(&format!("[terrain.{}]\n", key(name)));
    write_model(out, &t.model);
    assign(out, "rolling_resistance", &float(t.rolling_resistance));
    assign(out, "traction_coefficient", &float(t.traction_coefficient));
    assign(out, "lateral_resistance_max", &float(t.lateral_resistance_max));
    if let Some(c) = &t.covariance {
        if c.is_empty() {
            assign(out, "covariance", "[]");
        } else {
            rows(out, "covariance", c.iter().map(Vec::as_slice));
        }
    }
    assign(out, "noise_heading_rad_per_sqrt_m", &float(t.noise_heading_rad_per_sqrt_m));
    assign(out, "noise_along_m_per_sqrt_m", &float(t.noise_along_m_per_sqrt_m));
    assign(out, "noise_cross_m_per_sqrt_m", &float(t.noise_cross_m_per_sqrt_m));
    if let Some(c) = &t.calibration {
        assign(out, "calibrated", if c.calibrated { "true" } else { "false" });
        if let Some(source) = &c.source {
            assign(out, "calibration_source", &string(source));
        }
        if let Some(e) = c.translation_error {
            assign(out, "calibration_translation_error", &float(e));
        }
        if let Some(h) = c.horizon_s {
            assign(out, "calibration_horizon_s", &float(h));
        }
    }
    out.push('\n');
}

#[cfg(test)]
mod tests {
    use std::path::Path;

    use super::*;
    use crate::kinematics::{ExtendedScheduled, Family, Linear, ScheduleRow};
    use crate::vehicle::{parse_profile, TerrainSpec};

    fn round_trip(p: &Profile) -> Profile {
        let text = profile_to_toml(p, "written by a test\n\nsecond paragraph");
        match parse_profile(Path::new("round-trip.toml"), &text) {
            Ok(again) => again,
            Err(e) => panic!("written profile does not parse: {e}\n{text}"),
        }
    }

    /// A terrain of `model` with a diagonal covariance and awkward float values.
    fn terrain(model: Model) -> TerrainSpec {
        let n = model.params().len();
        let covariance =
            (0..n).map(|i| (0..n).map(|j| if i == j { 1e-4 * (i + 1) as f64 } else { 0.1 * 1e-5 }).collect()).collect();
        TerrainSpec {
            model,
            rolling_resistance: 0.1 + 0.2,
            traction_coefficient: 1.0 / 3.0,
            lateral_resistance_max: 0.55,
            covariance: Some(covariance),
            noise_heading_rad_per_sqrt_m: 4.2e-3,
            noise_along_m_per_sqrt_m: 1e-7,
            noise_cross_m_per_sqrt_m: 0.0,
            calibration: Some(crate::vehicle::TerrainCalibration {
                calibrated: true,
                source: Some("fit of \"quoted\" logs".to_string()),
                translation_error: Some(0.1 + 0.2),
                horizon_s: None,
            }),
        }
    }

    fn every_family(track_width_m: f64) -> Vec<Model> {
        let scalar = |f: Family, p: &[f64]| Model::from_params(f, p, track_width_m).expect("scalar family");
        vec![
            scalar(Family::Ideal, &[]),
            scalar(Family::ExtendedSymmetric, &[0.92, 1.6]),
            scalar(Family::Extended, &[0.95, 0.93, 1.35]),
            scalar(Family::Icr, &[0.62, -0.6100000000000001, 0.03]),
            Model::Linear(Linear { j: [[0.45, 0.47], [0.01, -0.02], [-0.8, 0.75]] }),
            Model::ExtendedScheduled(ExtendedScheduled {
                track_width_m,
                schedule: vec![
                    ScheduleRow { curvature_per_m: 0.0, alpha: 0.85, track_expansion: 1.7 },
                    ScheduleRow { curvature_per_m: 0.5, alpha: 0.8, track_expansion: 2.0 },
                    ScheduleRow { curvature_per_m: 1.5, alpha: 0.7, track_expansion: 2.6 },
                ],
            }),
        ]
    }

    #[test]
    fn demo_round_trips() {
        let demo = Profile::demo();
        assert_eq!(round_trip(&demo), demo);
    }

    #[test]
    fn every_family_round_trips_with_covariance_and_noise() {
        let mut p = Profile::demo();
        p.vehicle.battery_wh = None;
        p.vehicle.running_gear = crate::vehicle::RunningGear::Wheels;
        p.vehicle.regenerative = true;
        p.vehicle.mass_kg = 480.0 + 0.1 + 0.2; // an awkward float within the plausible range
        p.follower.inverse_model = InverseChoice::Calibrated;
        p.follower.max_lateral_accel_mps2 = Some(0.65);
        p.imu = Some(ImuSpec { gyro_bias_sd_deg_per_h: 1.0 / 3.0, gyro_arw_deg_per_sqrt_h: 0.0 });
        p.terrain.clear();
        for model in every_family(p.vehicle.track_width_m) {
            p.terrain.insert(format!("{}_t", model.family()), terrain(model));
        }
        let again = round_trip(&p);
        assert_eq!(again, p);
        assert_eq!(again.terrain.len(), 6);
    }

    #[test]
    fn integer_valued_floats_keep_their_point() {
        let text = profile_to_toml(&Profile::demo(), "");
        assert!(text.starts_with("[vehicle]\n"), "{text}");
        assert!(text.contains("mass_kg = 480.0\n"), "{text}");
        assert!(text.contains("battery_wh = 3000.0\n"), "{text}");
        assert!(text.contains("[terrain.deep-snow]\n"), "{text}");
        assert_eq!(float(1e-7), "1e-7");
        assert_eq!(float(-0.0), "-0.0");
    }

    #[test]
    fn header_lines_become_comments() {
        let text = profile_to_toml(&Profile::demo(), "fitted by skidroute\n\nseed 7");
        assert!(text.starts_with("# fitted by skidroute\n#\n# seed 7\n\n[vehicle]\n"), "{text}");
    }

    #[test]
    fn names_needing_quotes_are_quoted() {
        let mut p = Profile::demo();
        p.vehicle.name = "Fernhollow \"quoted\"\tback\\slash".to_string();
        let snow = p.terrain.remove("slush").expect("slush in demo");
        p.terrain.insert("wet snow".to_string(), snow);
        let text = profile_to_toml(&p, "");
        assert!(text.contains("[terrain.\"wet snow\"]"), "{text}");
        // The parser rejects the name on purpose, so read the TOML back directly.
        let table: toml::Table = text.parse().expect("valid TOML");
        let name = table.get("vehicle").and_then(|v| v.get("name")).and_then(toml::Value::as_str);
        assert_eq!(name, Some(p.vehicle.name.as_str()));
    }
}

//! Tests of the profile reader.

use std::path::Path;

use super::parse_profile;
use super::section::{edit_distance, suggestion};
use super::vehicle::VEHICLE_KEYS;
use crate::kinematics::{Family, Model, MotionModel};
use crate::vehicle::DEMO_PROFILE_TOML;
use crate::vehicle::{Profile, RunningGear, VehicleError};
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
fn demo_has_a_gyro_and_the_fuzz_seed_is_a_copy_of_it() {
    let imu = parse(DEMO_PROFILE_TOML).expect("demo profile").imu.expect("the demo profile has an [imu]");
    assert_relative_eq!(imu.gyro_bias_sd_deg_per_h, 10.0);
    assert_relative_eq!(imu.gyro_arw_deg_per_sqrt_h, 0.3);
    // The fuzz target's seed profile must stay the demo, section for section.
    assert_eq!(include_str!("../../../fuzz/seeds/profile_toml/demo.toml"), DEMO_PROFILE_TOML);
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
    assert!(e.contains("follower: missing required key lookahead_m (a positive number) (line 17)"), "{e}");
    let e = error_of(&replaced("track_expansion = 1.6\n", ""));
    assert!(e.contains("terrain.packed-snow: missing required key track_expansion (a positive number)"), "{e}");
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
    assert!(e.contains("top level: missing required key terrain (a table) (line 1)"), "{e}");
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
    let text = replaced("mass_kg = 480.0", "mass_kg = 480").replace("control_rate_hz = 20.0", "control_rate_hz = 20");
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
fn slow_down_in_turns_is_optional_and_positive() {
    let off = parse(BASE).expect("default");
    assert_eq!(off.follower.max_lateral_accel_mps2, None);
    let text = replaced("curvature_scale_m = 0.5", "curvature_scale_m = 0.5\nmax_lateral_accel_mps2 = 0.6");
    assert_eq!(parse(&text).expect("slow-down").follower.max_lateral_accel_mps2, Some(0.6));
    // `curvature_scale_m` is on line 22 of the base text, so the new key is on line 23.
    let e = error_of(&replaced("curvature_scale_m = 0.5", "curvature_scale_m = 0.5\nmax_lateral_accel_mps2 = -1"));
    assert!(e.contains("follower.max_lateral_accel_mps2: must be a positive number, got -1"), "{e}");
    assert!(e.contains("line 23"), "{e}");
    let text = replaced("curvature_scale_m = 0.5", "curvature_scale_m = 0.5\nmax_lateral_accel_mps2 = 600");
    let (_, warnings) = super::parse_profile_with_warnings(Path::new("test.toml"), &text).expect("unusual, kept");
    assert!(warnings.iter().any(|w| w.contains("max_lateral_accel_mps2") && w.contains("(line 23)")), "{warnings:?}");
    let e = error_of(&replaced("curvature_scale_m = 0.5", "curvature_scale_m = 0.5\nmax_lateral_accel_mps2 = 5000"));
    assert!(e.contains("follower.max_lateral_accel_mps2: 5000 m/s^2 is beyond the possible 1000 m/s^2"), "{e}");
}

#[test]
fn battery_optional_and_positive() {
    let text = replaced("max_yaw_rate_radps = 1.2", "max_yaw_rate_radps = 1.2\nbattery_wh = 2500");
    assert_eq!(parse(&text).expect("battery").vehicle.battery_wh, Some(2500.0));
    let e = error_of(&replaced("max_yaw_rate_radps = 1.2", "max_yaw_rate_radps = 1.2\nbattery_wh = 0"));
    assert!(e.contains("vehicle.battery_wh: must be a positive number, got 0"), "{e}");
}

#[test]
fn centre_of_gravity_height_optional_and_positive() {
    assert_eq!(parse(BASE).expect("base").vehicle.cog_height_m, None);
    assert_eq!(parse(DEMO_PROFILE_TOML).expect("demo").vehicle.cog_height_m, Some(0.55));
    let text = replaced("max_yaw_rate_radps = 1.2", "max_yaw_rate_radps = 1.2\ncog_height_m = 0.7");
    assert_eq!(parse(&text).expect("height").vehicle.cog_height_m, Some(0.7));
    let e = error_of(&replaced("max_yaw_rate_radps = 1.2", "max_yaw_rate_radps = 1.2\ncog_height_m = -0.7"));
    assert!(e.contains("vehicle.cog_height_m: must be a positive number, got -0.7"), "{e}");
    let text = replaced("max_yaw_rate_radps = 1.2", "max_yaw_rate_radps = 1.2\ncog_height_m = 550");
    let (_, warnings) = super::parse_profile_with_warnings(Path::new("test.toml"), &text).expect("unusual, kept");
    assert!(warnings.iter().any(|w| w.contains("vehicle.cog_height_m: 550 m is unusual")), "{warnings:?}");
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

#[test]
fn imu_section_is_optional_and_checked() {
    assert_eq!(parse(BASE).expect("base").imu, None);
    let with = |body: &str| format!("{BASE}\n[imu]\n{body}\n");
    let p = parse(&with("gyro_bias_sd_deg_per_h = 10\ngyro_arw_deg_per_sqrt_h = 0.3")).expect("imu");
    let imu = p.imu.expect("imu present");
    assert_relative_eq!(imu.gyro_bias_sd_deg_per_h, 10.0);
    assert_relative_eq!(imu.gyro_arw_deg_per_sqrt_h, 0.3);
    // `lateral_resistance_max` ends the base text on line 30, so `[imu]` is on line 32.
    let e = error_of(&with("gyro_bias_sd_deg_per_h = 10"));
    assert!(e.contains("imu: missing required key gyro_arw_deg_per_sqrt_h (a number >= 0) (line 32)"), "{e}");
    let e = error_of(&with("gyro_bias_sd_deg_per_h = -1\ngyro_arw_deg_per_sqrt_h = 0.3"));
    assert!(e.contains("imu.gyro_bias_sd_deg_per_h: must be a number >= 0, got -1 (line 33)"), "{e}");
    let e = error_of(&with("gyro_bias_sd_deg_per_hr = 1\ngyro_arw_deg_per_sqrt_h = 0.3"));
    assert!(e.contains("imu.gyro_bias_sd_deg_per_hr: unknown key (did you mean gyro_bias_sd_deg_per_h?)"), "{e}");
    // Several problems are listed together.
    let e = error_of(&with("gyro_bias_sd_deg_per_h = -1\ngyro_arw_deg_per_sqrt_h = \"0.3\""));
    assert!(
        e.contains("gyro_bias_sd_deg_per_h") && e.contains("gyro_arw_deg_per_sqrt_h: must be a number >= 0"),
        "{e}"
    );
    let e = error_of(&format!("imu = 3\n{BASE}"));
    assert!(e.contains("test.toml: imu: must be a table, got 3 (line 1)"), "{e}");
    // Degrees per second mistaken for per hour is beyond any gyro that measures a heading;
    // an unusual value is a warning.
    let e = error_of(&with("gyro_bias_sd_deg_per_h = 2e5\ngyro_arw_deg_per_sqrt_h = 0.3"));
    assert!(e.contains("imu.gyro_bias_sd_deg_per_h: 200000 deg/h is beyond the possible 100000 deg/h"), "{e}");
    let (_, warnings) = super::parse_profile_with_warnings(
        Path::new("test.toml"),
        &with("gyro_bias_sd_deg_per_h = 10\ngyro_arw_deg_per_sqrt_h = 30"),
    )
    .expect("unusual, kept");
    assert!(
        warnings.iter().any(|w| w.contains("imu.gyro_arw_deg_per_sqrt_h") && w.contains("(line 34)")),
        "{warnings:?}"
    );
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
    // Any one key gives the marks; `calibrated` defaults to false.
    let p = parse(&with("calibration_source = \"kept: no logs on this terrain\"")).expect("source only");
    let c = p.terrain["packed-snow"].calibration.clone().expect("calibration");
    assert!(!c.calibrated);
    assert_eq!(c.horizon_s, None);
    // `lateral_resistance_max` is on line 30 of the base text, so the new key is on line 31.
    let e = error_of(&with("calibration_translation_error = -0.1"));
    assert!(e.contains("terrain.packed-snow.calibration_translation_error: must be a number >= 0"), "{e}");
    assert!(e.contains("(line 31)"), "{e}");
    let e = error_of(&with("calibrated = \"yes\""));
    assert!(e.contains("terrain.packed-snow.calibrated: must be true or false"), "{e}");
    let e = error_of(&with("calibration_horizon_s = 0"));
    assert!(e.contains("terrain.packed-snow.calibration_horizon_s: must be a positive number, got 0"), "{e}");
    let e = error_of(&with("calibration_source = 3"));
    assert!(e.contains("terrain.packed-snow.calibration_source: must be a string"), "{e}");
    let e = error_of(&with("calibrated_on = 3"));
    assert!(e.contains("calibrated_on: unknown key (did you mean calibrated?)"), "{e}");
}

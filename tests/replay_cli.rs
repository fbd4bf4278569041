//! End-to-end tests of `skidroute replay` (and the `fit` it checks): the real binary in a
//! temporary folder on the committed defective example log (4 Hz encoders in a 20 Hz log, pose
//! dropouts, irregular steps, standing time, CR LF; example-logs/README.md). Exit codes: 0 no
//! terrain changed, 1 a terrain changed, 2 bad input.

mod common;

use std::path::{Path, PathBuf};

use common::{run, s, text};
use skidroute::kinematics::{Model, MotionModel};
use skidroute::vehicle::{profile_to_toml, Profile};

fn defective_log() -> PathBuf {
    Path::new(env!("CARGO_MANIFEST_DIR")).join("example-logs/defective/meadow-grass-20hz-defects.csv")
}

/// Fits the defective example log into `dir/fitted.toml`.
fn fitted(dir: &Path) -> PathBuf {
    let out = dir.join("fitted.toml");
    let log = defective_log();
    let o = run(&["fit", s(&log), "--out", s(&out), "--quiet"]);
    assert!(matches!(o.status.code(), Some(0 | 1)), "{}", text(&o.stderr));
    out
}

#[test]
fn a_fitted_profile_holds_on_its_own_logs_and_the_report_has_the_documented_format() {
    let dir = tempfile::tempdir().expect("tempdir");
    let profile = fitted(dir.path());
    let log = defective_log();
    let plot = dir.path().join("replay.svg");
    let o = run(&["replay", s(&log), "--vehicle", s(&profile), "--json", "--plot", s(&plot)]);
    assert_eq!(o.status.code(), Some(0), "{}{}", text(&o.stdout), text(&o.stderr));
    let v: serde_json::Value = serde_json::from_slice(&o.stdout).expect("json");
    assert_eq!(v["format"], "skidroute-replay/1");
    assert_eq!(v["changed"], false);
    let t = &v["terrains"][0];
    assert_eq!(t["terrain"], "grass");
    assert!(t["windows"].as_u64().expect("windows") > 100);
    for key in ["median", "q25", "q75"] {
        assert!(t["translation_rel"][key].as_f64().is_some(), "translation_rel.{key}: {t}");
        assert!(t["yaw_deg"][key].as_f64().is_some(), "yaw_deg.{key}: {t}");
    }
    assert!(t["calibration_translation_error"].as_f64().expect("calibration error") > 0.0);
    assert_eq!(t["changed"], false);
    // The log checks found the defects of the log.
    let checks = &v["log_checks"][0];
    for key in ["held_encoders", "pose_gaps", "irregular_steps"] {
        assert!(checks[key].is_object(), "{key}: {checks}");
    }
    let svg = std::fs::read_to_string(&plot).expect("plot");
    assert!(svg.contains("<svg") && svg.contains("replayed"));
    assert!(v["caution"].as_str().expect("caution").contains("not guarantees"));
}

#[test]
fn a_stale_profile_has_changed_and_exits_1() {
    let dir = tempfile::tempdir().expect("tempdir");
    let mut p = Profile::read(&fitted(dir.path())).expect("fitted profile");
    // As if the ground had changed since the calibration: 10 % more forward slip factor.
    let grass = p.terrain.get_mut("grass").expect("grass");
    let family = grass.model.family();
    let names = family.param_names();
    let scaled: Vec<f64> = grass
        .model
        .params()
        .iter()
        .zip(names)
        .map(|(x, name)| if name.starts_with("alpha") { x * 1.1 } else { *x })
        .collect();
    assert!(names.iter().any(|n| n.starts_with("alpha")), "expected an alpha family, got {family}");
    grass.model = Model::from_params(family, &scaled, 0.9).expect("model");
    let stale = dir.path().join("stale.toml");
    std::fs::write(&stale, profile_to_toml(&p, "stale")).expect("write");
    let log = defective_log();
    let o = run(&["replay", s(&log), "--vehicle", s(&stale)]);
    let out = text(&o.stdout);
    assert_eq!(o.status.code(), Some(1), "{out}{}", text(&o.stderr));
    assert!(out.contains("CHANGED") && out.contains("grass (2 s windows): changed:"), "{out}");
    assert!(out.contains("log checks:") && out.contains("encoders update slower than the log"), "{out}");
}

#[test]
fn bad_input_exits_2_naming_the_file() {
    let dir = tempfile::tempdir().expect("tempdir");
    let header = "t_s,left_mps,right_mps,x_m,y_m,yaw_rad,terrain\r\n";
    // A CR LF log with a bad cell on line 4.
    let bad = dir.path().join("bad.csv");
    std::fs::write(&bad, format!("{header}0,1,1,0,0,0,grass\r\n0.1,1,1,0.1,0,0,grass\r\n0.2,1,?,0.2,0,0,grass\r\n"))
        .expect("write");
    // Encoders that read 0 while the poses drive 20 m.
    let dead = dir.path().join("dead.csv");
    let rows: String = (0..400).map(|i| format!("{},0,0,{},0,0,grass\n", 0.05 * i as f64, 0.05 * i as f64)).collect();
    std::fs::write(&dead, format!("t_s,left_mps,right_mps,x_m,y_m,yaw_rad,terrain\n{rows}")).expect("write");
    let mut no_grass = Profile::demo();
    no_grass.terrain.remove("grass");
    let profile = dir.path().join("no-grass.toml");
    std::fs::write(&profile, profile_to_toml(&no_grass, "")).expect("write");
    let demo = dir.path().join("demo.toml");
    std::fs::write(&demo, profile_to_toml(&Profile::demo(), "")).expect("write");
    let log = defective_log();
    let cases: Vec<(Vec<&str>, &str)> = vec![
        (vec![s(&bad), "--vehicle", s(&demo)], "bad.csv: line 4, column right_mps: '?' is not a number"),
        (vec![s(&dead), "--vehicle", s(&demo)], "columns left_mps and right_mps stay near zero"),
        (vec![s(&log), "--vehicle", s(&profile)], "terrain 'grass' is not in the"),
        (vec![s(&log)], "--vehicle"),
        (vec![s(&log), "--vehicle", s(&demo), "--horizon-s", "0"], "--horizon-s must be in (0, 600]"),
        (vec![s(&log), "--vehicle", s(&demo), "--report", s(&demo)], "refusing to overwrite"),
    ];
    for (args, expected) in cases {
        let mut all = vec!["replay"];
        all.extend(args.iter().copied());
        let o = run(&all);
        assert_eq!(o.status.code(), Some(2), "{args:?}: {}", text(&o.stderr));
        assert!(text(&o.stderr).contains(expected), "{args:?}: {}", text(&o.stderr));
    }
}

/// A ROS 2 recording of `tests/fixtures/recordings` (see `make_recordings.py` there).
fn recording(name: &str) -> PathBuf {
    Path::new(env!("CARGO_MANIFEST_DIR")).join("tests/fixtures/recordings").join(name)
}

/// The demo profile with grass set to `alpha` and the generating script's track expansion 1.6
/// (its truth: alpha 0.9, track_expansion 1.6, track width 0.9 m), calibrated at a 5 %
/// translation error on 2 s windows.
fn grass_profile(dir: &Path, alpha: f64) -> PathBuf {
    use skidroute::kinematics::Family;
    let mut p = Profile::demo();
    let grass = p.terrain.get_mut("grass").expect("grass");
    grass.model = Model::from_params(Family::ExtendedSymmetric, &[alpha, 1.6], 0.9).expect("model");
    grass.covariance = None;
    grass.calibration = Some(skidroute::vehicle::TerrainCalibration {
        calibrated: true,
        source: Some("test".into()),
        translation_error: Some(0.05),
        horizon_s: Some(2.0),
    });
    let path = dir.join(format!("grass-{alpha}.toml"));
    std::fs::write(&path, profile_to_toml(&p, "")).expect("write profile");
    path
}

#[test]
fn replay_reads_a_recording_through_the_map_like_its_csv_twin() {
    let dir = tempfile::tempdir().expect("tempdir");
    let (mcap, map, csv) =
        (recording("joints-odom.mcap"), recording("joints-odom.map.toml"), recording("joints-odom.csv"));
    let truth = grass_profile(dir.path(), 0.9);
    let replay = |log: &Path, profile: &Path, map: Option<&Path>| {
        let mut args = vec!["replay", s(log), "--vehicle", s(profile), "--json"];
        if let Some(m) = map {
            args.extend(["--recording-map", s(m)]);
        }
        run(&args)
    };
    let o = replay(&mcap, &truth, Some(&map));
    assert_eq!(o.status.code(), Some(0), "{}", text(&o.stderr));
    let from_mcap: serde_json::Value = serde_json::from_slice(&o.stdout).expect("json");
    let o = replay(&csv, &truth, None);
    assert_eq!(o.status.code(), Some(0), "{}", text(&o.stderr));
    let from_csv: serde_json::Value = serde_json::from_slice(&o.stdout).expect("json");
    let (a, b) = (&from_mcap["terrains"][0], &from_csv["terrains"][0]);
    assert_eq!(a["terrain"], "grass");
    assert!(a["windows"].as_u64().expect("windows") > 50, "{a}");
    assert_eq!(a["windows"], b["windows"], "the same samples, so the same windows");
    // Noise-free data integrated exactly through the generating model: no error to speak of
    // (the twin's values agree to rounding, see recording_reference.rs).
    let median = |t: &serde_json::Value| t["translation_rel"]["median"].as_f64().expect("median");
    assert!(median(a) < 1e-6 && (median(a) - median(b)).abs() < 1e-9, "{a}\n{b}");
    assert_eq!(a["changed"], false);
    // The log checks ran on the recording as on any log.
    let checks = &from_mcap["log_checks"][0];
    assert!(checks["file"].as_str().expect("file").ends_with("joints-odom.mcap"), "{checks}");
    assert_eq!(checks["samples"], from_csv["log_checks"][0]["samples"]);
    // A profile whose forward slip factor is 10 % off: the recording shows the change.
    let stale = grass_profile(dir.path(), 0.99);
    let o = replay(&mcap, &stale, Some(&map));
    assert_eq!(o.status.code(), Some(1), "{}", text(&o.stderr));
    let v: serde_json::Value = serde_json::from_slice(&o.stdout).expect("json");
    assert_eq!(v["terrains"][0]["changed"], true, "{v}");
}

#[test]
fn a_recording_needs_its_map_and_the_map_is_an_input() {
    let dir = tempfile::tempdir().expect("tempdir");
    let (mcap, map) = (recording("joints-odom.mcap"), recording("joints-odom.map.toml"));
    let profile = grass_profile(dir.path(), 0.9);
    let report = dir.path().join("replay.json");
    let o = run(&["replay", s(&mcap), "--vehicle", s(&profile), "--report", s(&report)]);
    assert_eq!(o.status.code(), Some(2));
    let err = text(&o.stderr);
    assert!(
        err.contains("needs a recording map (--recording-map MAP.toml)") && err.contains("joints-odom.mcap"),
        "{err}"
    );
    assert!(!report.exists(), "nothing written");
    // A copy of the map, so the refusal is tested without any risk to the fixture.
    let map_copy = dir.path().join("map.toml");
    std::fs::copy(&map, &map_copy).expect("copy map");
    let before = std::fs::read(&map_copy).expect("read");
    let o =
        run(&["replay", s(&mcap), "--vehicle", s(&profile), "--recording-map", s(&map_copy), "--report", s(&map_copy)]);
    assert_eq!(o.status.code(), Some(2));
    assert!(text(&o.stderr).contains("refusing to overwrite"), "{}", text(&o.stderr));
    assert_eq!(std::fs::read(&map_copy).expect("read"), before);
    // Output paths are checked before any log is read.
    let o = run(&[
        "replay",
        s(&mcap),
        "--vehicle",
        s(&profile),
        "--recording-map",
        s(&map),
        "--plot",
        s(&dir.path().join("nodir").join("r.svg")),
    ]);
    assert_eq!(o.status.code(), Some(2));
    assert!(text(&o.stderr).contains("does not exist"), "{}", text(&o.stderr));
}

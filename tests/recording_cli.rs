//! End-to-end tests of `skidroute fit` on ROS 2 recordings: the real binary in a temporary
//! folder. The recordings and their CSV twins were written by
//! `tests/fixtures/recordings/make_recordings.py` with the reference Python libraries `mcap`
//! 1.6.0 and `mcap-ros2-support` 0.6.0, from an invented vehicle driven by a known
//! `extended-symmetric` model (alpha 0.9, track_expansion 1.6) integrated exactly, without noise.

mod common;

use std::path::{Path, PathBuf};
use std::process::Output;

use common::{bin, s, text};
use serde_json::Value;

/// The truth of the generating script (invented; see its doc string).
const TRUTH_ALPHA: f64 = 0.9;
const TRUTH_TRACK_EXPANSION: f64 = 1.6;

fn fixture(name: &str) -> PathBuf {
    Path::new(env!("CARGO_MANIFEST_DIR")).join("tests/fixtures/recordings").join(name)
}

fn run_in(dir: &Path, args: &[&str]) -> Output {
    bin().current_dir(dir).args(args).output().expect("run skidroute")
}

fn fit_json(dir: &Path, args: &[&str]) -> Value {
    let mut all = vec!["fit"];
    all.extend_from_slice(args);
    all.extend_from_slice(&["--out", "out.toml", "--json"]);
    let o = run_in(dir, &all);
    assert_eq!(o.status.code(), Some(0), "{}", text(&o.stderr));
    serde_json::from_slice(&o.stdout).expect("json report")
}

/// Parameters of each family fitted on the first terrain, by family name.
fn family_params(doc: &Value) -> Vec<(String, Vec<f64>)> {
    doc["terrains"][0]["families"]
        .as_array()
        .expect("families")
        .iter()
        .map(|f| {
            let params = f["params"].as_array().expect("params").iter().map(|p| p.as_f64().expect("number")).collect();
            (f["family"].as_str().expect("name").to_string(), params)
        })
        .collect()
}

#[test]
fn fit_from_a_recording_matches_the_fit_from_its_csv_twin() {
    for stem in ["joints-odom", "twist-pose"] {
        let dir = tempfile::tempdir().expect("tempdir");
        let mcap = fixture(&format!("{stem}.mcap"));
        let map = fixture(&format!("{stem}.map.toml"));
        let from_mcap = fit_json(dir.path(), &[s(&mcap), "--recording-map", s(&map)]);
        let from_csv = fit_json(dir.path(), &[s(&fixture(&format!("{stem}.csv")))]);
        assert_eq!(from_mcap["inputs"][0]["samples"], from_csv["inputs"][0]["samples"], "{stem}");
        let (a, b) = (family_params(&from_mcap), family_params(&from_csv));
        assert_eq!(a.len(), 6, "{stem}: every family fitted");
        for ((family, pa), (_, pb)) in a.iter().zip(&b) {
            assert_eq!(pa.len(), pb.len());
            // The inputs agree to rounding (1e-12, see recording_reference.rs); identifiable
            // families then agree to rounding, the misspecified icr fit to its stopping tolerance.
            let tol = if family == "icr" { 1e-7 } else { 1e-12 };
            for (x, y) in pa.iter().zip(pb) {
                assert!((x - y).abs() <= tol, "{stem} {family}: {x} vs {y}");
            }
        }
    }
}

#[test]
fn the_truth_model_is_recovered_from_recordings() {
    for stem in ["joints-odom", "twist-pose"] {
        let dir = tempfile::tempdir().expect("tempdir");
        let map = fixture(&format!("{stem}.map.toml"));
        let doc = fit_json(dir.path(), &[s(&fixture(&format!("{stem}.mcap"))), "--recording-map", s(&map)]);
        let params = family_params(&doc);
        let (_, p) = params.iter().find(|(f, _)| f == "extended-symmetric").expect("extended-symmetric");
        // Noise-free data integrated exactly as the fit integrates: recovered to 1e-9.
        assert!((p[0] - TRUTH_ALPHA).abs() < 1e-9, "{stem}: alpha {}", p[0]);
        assert!((p[1] - TRUTH_TRACK_EXPANSION).abs() < 1e-9, "{stem}: track_expansion {}", p[1]);
    }
}

#[test]
fn recordings_and_csv_logs_mix_in_one_run() {
    let dir = tempfile::tempdir().expect("tempdir");
    let map = fixture("joints-odom.map.toml");
    let (mcap, csv) = (fixture("joints-odom.mcap"), fixture("twist-pose.csv"));
    let o = run_in(dir.path(), &["fit", s(&mcap), s(&csv), "--recording-map", s(&map), "--out", "out.toml", "--quiet"]);
    assert_eq!(o.status.code(), Some(0), "{}", text(&o.stderr));
    let profile = std::fs::read_to_string(dir.path().join("out.toml")).expect("profile");
    assert!(profile.contains("joints-odom.mcap (2000 samples, training)"), "{profile}");
    assert!(profile.contains("twist-pose.csv (1781 samples, training)"), "{profile}");
    assert!(profile.contains("terrain grass: ") && profile.contains("terrain gravel: "), "{profile}");
}

/// Runs a fit expected to fail on input: exit 2, one line on stderr naming `file`, no output.
fn refused(dir: &Path, args: &[&str], file: &str) -> String {
    let mut all = vec!["fit"];
    all.extend_from_slice(args);
    all.extend_from_slice(&["--out", "out.toml"]);
    let o = run_in(dir, &all);
    let err = text(&o.stderr);
    assert_eq!(o.status.code(), Some(2), "{err}");
    assert_eq!(err.trim_end().lines().count(), 1, "one line: {err}");
    assert!(err.contains(file), "names {file}: {err}");
    assert!(o.stdout.is_empty(), "{}", text(&o.stdout));
    assert!(!dir.join("out.toml").exists(), "nothing written");
    err
}

/// A temporary folder holding a copy of the joint-states recording as `run.mcap` and its map
/// as `map.toml`, with `edit` applied to the map text.
fn setup(edit: impl Fn(&str) -> String) -> tempfile::TempDir {
    let dir = tempfile::tempdir().expect("tempdir");
    std::fs::copy(fixture("joints-odom.mcap"), dir.path().join("run.mcap")).expect("copy");
    let map = std::fs::read_to_string(fixture("joints-odom.map.toml")).expect("map");
    std::fs::write(dir.path().join("map.toml"), edit(&map)).expect("write map");
    dir
}

#[test]
fn a_file_that_is_not_mcap_is_refused() {
    let dir = setup(str::to_string);
    std::fs::write(dir.path().join("run.mcap"), "t_s,left_mps,right_mps,x_m,y_m,yaw_rad,terrain\n").expect("write");
    let err = refused(dir.path(), &["run.mcap", "--recording-map", "map.toml"], "run.mcap");
    assert!(err.contains("not an MCAP file"), "{err}");
}

#[test]
fn a_truncated_recording_says_how_far_it_read() {
    let dir = setup(str::to_string);
    let bytes = std::fs::read(fixture("joints-odom.mcap")).expect("read");
    std::fs::write(dir.path().join("run.mcap"), &bytes[..bytes.len() / 2]).expect("write");
    let err = refused(dir.path(), &["run.mcap", "--recording-map", "map.toml"], "run.mcap");
    let half = bytes.len() / 2;
    assert!(err.contains(&format!("truncated: it ends in the middle of a record at byte {half}, after ")), "{err}");
    // Some messages of the first half were read, not all 4100 of the file.
    let messages: u64 =
        err.split("after ").nth(1).and_then(|t| t.split(' ').next()).and_then(|n| n.parse().ok()).expect("count");
    assert!(messages > 0 && messages < 4100, "{err}");
}

#[test]
fn a_missing_topic_lists_the_topics_present() {
    let dir = setup(|m| m.replace("\"/reference/odom\"", "\"/reference/odm\""));
    let err = refused(dir.path(), &["run.mcap", "--recording-map", "map.toml"], "run.mcap");
    assert!(err.contains("no messages on topic /reference/odm (named in [pose]"), "{err}");
    assert!(err.contains("/reference/odom (nav_msgs/msg/Odometry)"), "{err}");
    assert!(err.contains("/joint_states (sensor_msgs/msg/JointState)"), "{err}");
}

#[test]
fn a_wrong_message_type_names_topic_found_and_accepted_types() {
    let dir = setup(|m| m.replace("\"/reference/odom\"", "\"/joint_states\""));
    let err = refused(dir.path(), &["run.mcap", "--recording-map", "map.toml"], "run.mcap");
    assert!(
        err.contains(
            "topic /joint_states holds sensor_msgs/msg/JointState, but [pose] accepts nav_msgs/msg/Odometry, \
             geometry_msgs/msg/PoseStamped, geometry_msgs/msg/PoseWithCovarianceStamped"
        ),
        "{err}"
    );
}

#[test]
fn joints_not_found_lists_the_joint_names_present() {
    let dir = setup(|m| m.replace("\"fl_wheel\"", "\"front_left\""));
    let err = refused(dir.path(), &["run.mcap", "--recording-map", "map.toml"], "run.mcap");
    assert!(err.contains("joint \"front_left\" (from side_speeds.left_joints) is not in its messages"), "{err}");
    assert!(err.contains("the joints present are rr_wheel, fl_wheel, fr_wheel, rl_wheel"), "{err}");
}

#[test]
fn a_map_with_an_unknown_key_suggests_the_right_one() {
    let dir = setup(|m| m.replace("wheel_radius_m", "wheel_radius"));
    let err = refused(dir.path(), &["run.mcap", "--recording-map", "map.toml"], "map.toml");
    assert!(err.contains("side_speeds.wheel_radius: unknown key (did you mean wheel_radius_m?)"), "{err}");
}

#[test]
fn a_recording_without_a_map_is_a_usage_error() {
    let dir = setup(str::to_string);
    let err = refused(dir.path(), &["run.mcap"], "run.mcap");
    assert!(err.contains("needs a recording map (--recording-map MAP.toml)"), "{err}");
    // Recognised by its magic bytes too, whatever its name.
    std::fs::rename(dir.path().join("run.mcap"), dir.path().join("run.log")).expect("rename");
    let err = refused(dir.path(), &["run.log"], "run.log");
    assert!(err.contains("is a ROS 2 recording"), "{err}");
}

#[test]
fn the_map_is_never_overwritten() {
    let dir = setup(str::to_string);
    let before = std::fs::read(dir.path().join("map.toml")).expect("read");
    let o = run_in(dir.path(), &["fit", "run.mcap", "--recording-map", "map.toml", "--out", "map.toml"]);
    assert_eq!(o.status.code(), Some(2), "{}", text(&o.stderr));
    assert_eq!(std::fs::read(dir.path().join("map.toml")).expect("read"), before);
}

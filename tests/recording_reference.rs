//! ROS 2 recordings written by the reference Python libraries `mcap` 1.6.0 and
//! `mcap-ros2-support` 0.6.0 (`tests/fixtures/recordings/make_recordings.py`) read back as drive
//! logs, compared sample by sample with the same data the script wrote as drive-log CSV.
//! Covered: JointState + Odometry (chunked zstd), TwistStamped at 50 Hz with a 1 s dropout +
//! PoseStamped at 20 Hz (chunked lz4), Odometry twist + PoseWithCovarianceStamped + a String
//! terrain topic (unchunked), big-endian CDR payloads.

use std::path::{Path, PathBuf};

use approx::assert_relative_eq;
use skidroute::fit::log::{read_log, DriveLog};
use skidroute::limits::Limits;
use skidroute::progress::NoProgress;
use skidroute::recording::{read_drive_log, read_recording, RecordingMap};

/// The built-in demo profile's track width, which the script also used for the twist topics.
const TRACK_WIDTH_M: f64 = 0.9;

fn fixture(name: &str) -> PathBuf {
    Path::new(env!("CARGO_MANIFEST_DIR")).join("tests/fixtures/recordings").join(name)
}

fn recording(stem: &str) -> DriveLog {
    let limits = Limits::default();
    let map = RecordingMap::read(&fixture(&format!("{stem}.map.toml")), &limits).expect("map");
    read_recording(&fixture(&format!("{stem}.mcap")), &map, TRACK_WIDTH_M, &limits, &NoProgress).expect("recording")
}

fn wrap(a: f64) -> f64 {
    a.sin().atan2(a.cos())
}

/// Every sample of the recording equals the CSV row of the same time, to rounding.
fn same_log(stem: &str) -> (DriveLog, DriveLog) {
    let rec = recording(stem);
    let csv = read_log(&fixture(&format!("{stem}.csv"))).expect("csv");
    assert_eq!(rec.samples.len(), csv.samples.len(), "{stem}: sample count");
    assert_eq!(rec.terrains, csv.terrains, "{stem}");
    for (a, b) in rec.samples.iter().zip(&csv.samples) {
        assert_relative_eq!(a.t_s, b.t_s, epsilon = 1e-12);
        assert_relative_eq!(a.left_mps, b.left_mps, epsilon = 1e-12);
        assert_relative_eq!(a.right_mps, b.right_mps, epsilon = 1e-12);
        assert_relative_eq!(a.x_m, b.x_m, epsilon = 1e-12);
        assert_relative_eq!(a.y_m, b.y_m, epsilon = 1e-12);
        assert!(wrap(a.yaw_rad - b.yaw_rad).abs() < 1e-12, "{stem} at {} s: yaw {} vs {}", a.t_s, a.yaw_rad, b.yaw_rad);
        assert_eq!(rec.terrains[a.terrain], csv.terrains[b.terrain]);
    }
    assert_relative_eq!(rec.period_s, csv.period_s, epsilon = 1e-12);
    (rec, csv)
}

#[test]
fn joint_states_and_odometry_chunked_zstd() {
    let (rec, _) = same_log("joints-odom");
    // 100 s at 20 Hz, times from the first pose stamp.
    assert_eq!(rec.samples.len(), 2000);
    assert_relative_eq!(rec.period_s, 0.05, epsilon = 1e-12);
    assert_eq!(rec.samples[0].t_s, 0.0);
    assert_eq!(rec.samples[9].line, 10, "the message number on the pose topic");
}

#[test]
fn twist_at_50_hz_onto_poses_at_20_hz_chunked_lz4_never_across_the_dropout() {
    let (rec, _) = same_log("twist-pose");
    // The 1 s dropout of side speeds (40 s to 41 s) drops the 19 poses strictly inside it.
    assert_eq!(rec.samples.len(), 1800 - 19);
    let gap = rec.samples.windows(2).map(|w| w[1].t_s - w[0].t_s).fold(0.0, f64::max);
    assert_relative_eq!(gap, 1.0, epsilon = 1e-9);
}

#[test]
fn odometry_twist_pose_with_covariance_and_terrain_topic_unchunked() {
    let (rec, _) = same_log("unchunked-terrain");
    assert_eq!(rec.terrains, ["grass", "gravel"]);
    let first_gravel = rec.samples.iter().find(|s| s.terrain == 1).expect("gravel");
    assert_relative_eq!(first_gravel.t_s, 15.0, epsilon = 1e-12);
}

#[test]
fn big_endian_payloads() {
    let (rec, _) = same_log("big-endian");
    assert_eq!(rec.samples.len(), 100);
}

#[test]
fn terrain_ranges_from_a_csv_beside_the_map() {
    let dir = tempfile::tempdir().expect("tempdir");
    let map = std::fs::read_to_string(fixture("joints-odom.map.toml")).expect("map");
    std::fs::write(dir.path().join("map.toml"), map.replace("value = \"grass\"", "csv = \"ranges.csv\""))
        .expect("write");
    std::fs::write(dir.path().join("ranges.csv"), "start_s,end_s,terrain\n10,40,grass\n60,200,gravel\n")
        .expect("write");
    let limits = Limits::default();
    let map = RecordingMap::read(&dir.path().join("map.toml"), &limits).expect("map");
    let log = read_recording(&fixture("joints-odom.mcap"), &map, TRACK_WIDTH_M, &limits, &NoProgress).expect("read");
    assert_eq!(log.terrains, ["grass", "gravel"]);
    // 10 s .. 40 s and 60 s .. 100 s at 20 Hz (end exclusive).
    assert_eq!(log.samples.len(), 600 + 800);
    assert_relative_eq!(log.samples[0].t_s, 10.0, epsilon = 1e-12);
    assert_relative_eq!(log.samples[600].t_s, 60.0, epsilon = 1e-12);
}

#[test]
fn any_log_loader_takes_csv_and_recordings() {
    let limits = Limits::default();
    let map = RecordingMap::read(&fixture("big-endian.map.toml"), &limits).expect("map");
    let csv = read_drive_log(&fixture("big-endian.csv"), None, TRACK_WIDTH_M, &limits, &NoProgress).expect("csv");
    let rec =
        read_drive_log(&fixture("big-endian.mcap"), Some(&map), TRACK_WIDTH_M, &limits, &NoProgress).expect("mcap");
    assert_eq!(csv.samples.len(), rec.samples.len());
    let e = read_drive_log(&fixture("big-endian.mcap"), None, TRACK_WIDTH_M, &limits, &NoProgress).expect_err("map");
    assert!(e.to_string().contains("needs a recording map"), "{e}");
}

#[test]
fn the_file_size_limit_is_honoured() {
    let limits = Limits { max_file_bytes: 1000, ..Limits::default() };
    let map = RecordingMap::read(&fixture("big-endian.map.toml"), &Limits::default()).expect("map");
    let e = read_recording(&fixture("big-endian.mcap"), &map, TRACK_WIDTH_M, &limits, &NoProgress).expect_err("limit");
    assert!(e.to_string().contains("larger than the file-size limit"), "{e}");
}

/// Small deterministic pseudo-random numbers (a linear congruential generator).
struct Lcg(u64);
impl Lcg {
    fn next(&mut self) -> u64 {
        self.0 = self.0.wrapping_mul(6364136223846793005).wrapping_add(1442695040888963407);
        self.0 >> 33
    }
}

#[test]
fn corrupted_recordings_are_errors_or_logs_never_panics() {
    // Bytes of the small big-endian recording overwritten at random places: the reader must
    // return (a log or an error naming the file), whatever the damage.
    let original = std::fs::read(fixture("big-endian.mcap")).expect("read");
    let limits = Limits::default();
    let map = RecordingMap::read(&fixture("big-endian.map.toml"), &limits).expect("map");
    let dir = tempfile::tempdir().expect("tempdir");
    let path = dir.path().join("damaged.mcap");
    let mut rng = Lcg(7);
    let (mut errors, mut logs) = (0, 0);
    for _ in 0..300 {
        let mut bytes = original.clone();
        for _ in 0..1 + rng.next() % 4 {
            let at = (rng.next() as usize) % bytes.len();
            bytes[at] = (rng.next() & 0xff) as u8;
        }
        std::fs::write(&path, &bytes).expect("write");
        match read_recording(&path, &map, TRACK_WIDTH_M, &limits, &NoProgress) {
            Ok(_) => logs += 1,
            Err(e) => {
                assert!(e.to_string().contains("damaged.mcap"), "{e}");
                errors += 1;
            }
        }
    }
    assert_eq!(errors + logs, 300);
    assert!(errors > 0, "some damage must be noticed");
}

#[test]
fn joints_and_twist_topics_need_matching_map_keys() {
    let limits = Limits::default();
    let dir = tempfile::tempdir().expect("tempdir");
    let read_with = |map_text: String, recording: &str| {
        let path = dir.path().join("map.toml");
        std::fs::write(&path, map_text).expect("write");
        let map = RecordingMap::read(&path, &limits).expect("map");
        read_recording(&fixture(recording), &map, TRACK_WIDTH_M, &limits, &NoProgress).expect_err("refused").to_string()
    };
    let joints = std::fs::read_to_string(fixture("joints-odom.map.toml")).expect("map");
    let twist =
        joints.replace("\"/joint_states\"", "\"/wheel/twist\"").replace("\"/reference/odom\"", "\"/reference/pose\"");
    let e = read_with(twist, "twist-pose.mcap");
    assert!(
        e.contains(
            "topic /wheel/twist: left_joints, right_joints and wheel_radius_m apply to sensor_msgs/msg/JointState only"
        ),
        "{e}"
    );
    let bare =
        "[side_speeds]\ntopic = \"/joint_states\"\n[pose]\ntopic = \"/reference/odom\"\n[terrain]\nvalue = \"grass\"\n";
    let e = read_with(bare.to_string(), "joints-odom.mcap");
    assert!(e.contains("topic /joint_states: a sensor_msgs/msg/JointState topic needs left_joints"), "{e}");
}

//! End-to-end tests of `skidroute drift`: the real binary in a temporary directory on the
//! example routes, with small sample counts. Exit codes: 0 success, 2 usage, input or I/O error.

use std::path::{Path, PathBuf};
use std::process::{Command, Output};

fn example(name: &str) -> PathBuf {
    Path::new(env!("CARGO_MANIFEST_DIR")).join("example-routes").join(name)
}

fn drift(dir: &Path, args: &[&str], threads: &str) -> Output {
    Command::new(env!("CARGO_BIN_EXE_skidroute"))
        .arg("drift")
        .args(args)
        .current_dir(dir)
        .env("RAYON_NUM_THREADS", threads)
        .output()
        .expect("run skidroute")
}

fn stderr(o: &Output) -> String {
    String::from_utf8_lossy(&o.stderr).into_owned()
}

#[test]
fn json_report_has_the_documented_format() {
    let dir = tempfile::tempdir().expect("tempdir");
    let route = example("supply-run.geojson");
    let o = drift(dir.path(), &[route.to_str().expect("path"), "--samples", "12", "--json"], "2");
    assert_eq!(o.status.code(), Some(0), "{}", stderr(&o));
    let v: serde_json::Value = serde_json::from_slice(&o.stdout).expect("json");
    assert_eq!(v["format"], "skidroute-drift/1");
    assert_eq!(v["seed"], 7);
    assert_eq!(v["samples"], 12);
    assert_eq!(v["odometry"], "ideal", "the demo profile's controller inverse is ideal");
    let legs = v["legs"].as_array().expect("legs");
    assert_eq!(legs.len(), 4);
    for leg in legs {
        for key in ["index", "terrain", "distance_m", "bias_along_m", "bias_cross_m", "cep50_m", "cep95_m"] {
            assert!(!leg[key].is_null(), "{key} missing: {leg}");
        }
        assert!(leg["ellipse95"]["semi_major_m"].as_f64().expect("semi-major") >= 0.0);
        assert!(leg["cep95_m"].as_f64().expect("cep95") >= leg["cep50_m"].as_f64().expect("cep50"));
    }
    assert!(v["caution"].as_str().expect("caution").contains("estimates, not guarantees"));
}

#[test]
fn output_is_byte_identical_with_one_or_two_threads() {
    // Each sample has its own random stream (seed + sample index), so the thread count must not
    // change a byte of the output.
    let dir = tempfile::tempdir().expect("tempdir");
    let route = example("switchback-loop.geojson");
    let args = [route.to_str().expect("path"), "--samples", "10", "--seed", "11", "--json"];
    let one = drift(dir.path(), &args, "1");
    let two = drift(dir.path(), &args, "2");
    assert_eq!(one.status.code(), Some(0), "{}", stderr(&one));
    assert_eq!(two.status.code(), Some(0), "{}", stderr(&two));
    assert_eq!(one.stdout, two.stdout);
}

#[test]
fn table_plot_ellipses_and_report_are_written() {
    let dir = tempfile::tempdir().expect("tempdir");
    let route = example("store-alternatives.geojson");
    let o = drift(
        dir.path(),
        &[
            route.to_str().expect("path"),
            "--route",
            "direct",
            "--samples",
            "8",
            "--lost-from-leg",
            "2",
            "--odometry",
            "calibrated",
            "--plot",
            "drift.svg",
            "--ellipses",
            "drift.geojson",
            "--report",
            "drift.json",
        ],
        "2",
    );
    assert_eq!(o.status.code(), Some(0), "{}", stderr(&o));
    let table = String::from_utf8_lossy(&o.stdout);
    assert!(table.contains("CEP95") && table.contains("calibrated odometry"), "{table}");
    assert!(table.contains("lost at the start of leg 2"), "{table}");
    let svg = std::fs::read_to_string(dir.path().join("drift.svg")).expect("svg");
    assert!(svg.contains("<svg") && svg.contains("end of leg"));
    let gj: serde_json::Value =
        serde_json::from_str(&std::fs::read_to_string(dir.path().join("drift.geojson")).expect("geojson"))
            .expect("geojson json");
    assert_eq!(gj["type"], "FeatureCollection");
    assert!(!gj["features"].as_array().expect("features").is_empty());
    let report: serde_json::Value =
        serde_json::from_str(&std::fs::read_to_string(dir.path().join("drift.json")).expect("report"))
            .expect("report json");
    assert_eq!(report["legs"][0]["distance_m"], 0.0, "leg 1 ends before the loss");
}

#[test]
fn quiet_prints_nothing() {
    let dir = tempfile::tempdir().expect("tempdir");
    let route = example("yard-lap.csv");
    let o = drift(dir.path(), &[route.to_str().expect("path"), "--samples", "3", "--quiet"], "2");
    assert_eq!(o.status.code(), Some(0), "{}", stderr(&o));
    assert!(o.stdout.is_empty() && o.stderr.is_empty());
}

#[test]
fn bad_input_exits_with_code_2_and_a_clear_message() {
    let dir = tempfile::tempdir().expect("tempdir");
    let csv = example("yard-lap.csv");
    let csv = csv.to_str().expect("path");
    let alternatives = example("store-alternatives.geojson");
    let cases: Vec<(Vec<&str>, &str)> = vec![
        (vec![csv, "--samples", "0"], "0 is not in 1..=1000000"),
        (vec![csv, "--samples", "1000001"], "not in 1..=1000000"),
        (vec![csv, "--lost-from-leg", "9", "--samples", "2"], "--lost-from-leg must be between 1 and"),
        (vec![csv, "--samples", "2", "--ellipses", "e.geojson"], "--ellipses needs a GeoJSON route"),
        (vec![csv, "--samples", "2", "--plot", "p.pdf"], "unknown plot format"),
        (vec![csv, "--samples", "2", "--report", csv], "refusing to overwrite"),
        (vec![csv, "--odometry", "perfect"], "invalid value 'perfect'"),
        (vec![alternatives.to_str().expect("path"), "--samples", "2"], "choose one with --route NAME"),
        (vec!["missing.geojson", "--samples", "2"], "cannot read"),
    ];
    for (args, expected) in cases {
        let o = drift(dir.path(), &args, "2");
        assert_eq!(o.status.code(), Some(2), "{args:?}: {}", stderr(&o));
        assert!(stderr(&o).contains(expected), "{args:?}: {}", stderr(&o));
    }
    assert!(!dir.path().join("e.geojson").exists() && !dir.path().join("p.pdf").exists());
}

#[test]
fn heading_source_defaults_to_the_gyro_and_every_table_says_which() {
    // The demo profile has an [imu]: drift, check --drift and compare --by drift all default to
    // the gyro heading and the profile's inverse_model (ideal) odometry, and say so.
    let dir = tempfile::tempdir().expect("tempdir");
    let route = example("supply-run.geojson");
    let route = route.to_str().expect("path");
    let o = drift(dir.path(), &[route, "--samples", "6", "--json"], "2");
    assert_eq!(o.status.code(), Some(0), "{}", stderr(&o));
    let v: serde_json::Value = serde_json::from_slice(&o.stdout).expect("json");
    assert_eq!((v["odometry"].as_str(), v["heading"].as_str()), (Some("ideal"), Some("gyro")));
    // supply-run crosses deep snow, which has no covariance in the demo: named, not hidden.
    let warnings = v["warnings"].as_array().expect("warnings");
    assert!(warnings.iter().any(|w| w.as_str().unwrap_or("").starts_with("terrain 'deep-snow' has no covariance")));
    let o = drift(dir.path(), &[route, "--samples", "6", "--heading", "odometry"], "2");
    let table = String::from_utf8_lossy(&o.stdout);
    assert!(table.contains("dead reckoning: ideal odometry, heading from odometry"), "{table}");
    assert!(table.contains("warning: terrain 'deep-snow'"), "{table}");
    let check = Command::new(env!("CARGO_BIN_EXE_skidroute"))
        .args(["check", route, "--drift", "--samples", "6"])
        .output()
        .expect("run");
    let table = String::from_utf8_lossy(&check.stdout);
    assert!(table.contains("ideal odometry, heading from the gyro (bias sd 10 deg/h"), "{table}");
    let alternatives = example("store-alternatives.geojson");
    let cmp = Command::new(env!("CARGO_BIN_EXE_skidroute"))
        .args(["compare", alternatives.to_str().expect("path"), "--by", "drift", "--heading", "odometry"])
        .output()
        .expect("run");
    let table = String::from_utf8_lossy(&cmp.stdout);
    assert!(
        table.contains("drift: CEP95 at the route end") && table.contains("ideal odometry, heading from odometry"),
        "{table}"
    );
}

#[test]
fn gyro_heading_needs_an_imu_section() {
    let dir = tempfile::tempdir().expect("tempdir");
    let mut p = skidroute::vehicle::Profile::demo();
    p.imu = None;
    let profile = dir.path().join("no-imu.toml");
    std::fs::write(&profile, skidroute::vehicle::profile_to_toml(&p, "")).expect("write");
    let route = example("yard-lap.csv");
    let args = [route.to_str().expect("path"), "--vehicle", profile.to_str().expect("path"), "--samples", "3"];
    let o = drift(dir.path(), &args, "2");
    assert_eq!(o.status.code(), Some(0), "without --heading the default is odometry: {}", stderr(&o));
    assert!(String::from_utf8_lossy(&o.stdout).contains("heading from odometry"));
    let mut gyro = args.to_vec();
    gyro.extend(["--heading", "gyro"]);
    let o = drift(dir.path(), &gyro, "2");
    assert_eq!(o.status.code(), Some(2));
    assert!(
        stderr(&o).contains("[imu] section with gyro_bias_sd_deg_per_h and gyro_arw_deg_per_sqrt_h"),
        "{}",
        stderr(&o)
    );
}

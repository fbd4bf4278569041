//! End-to-end tests of `skidroute fit`: the real binary in a temporary folder, its exit codes
//! (0 fitted, 1 a terrain could not be fitted, 2 bad input) and its outputs. Logs are small and
//! synthetic (an `extended-symmetric` vehicle with a little pseudo-random pose noise).

use std::path::{Path, PathBuf};
use std::process::{Command, Output};

use skidroute::kinematics::{Model, MotionModel, Pose};

const BIN: &str = env!("CARGO_BIN_EXE_skidroute");
const HEADER: &str = "t_s,left_mps,right_mps,x_m,y_m,yaw_rad,terrain\n";

/// Small deterministic pseudo-random numbers in [-1, 1) (a linear congruential generator).
struct Lcg(u64);
impl Lcg {
    fn next(&mut self) -> f64 {
        self.0 = self.0.wrapping_mul(6364136223846793005).wrapping_add(1442695040888963407);
        (self.0 >> 11) as f64 / (1u64 << 52) as f64 - 1.0
    }
}

/// Rows of `duration_s` seconds at 25 Hz on `terrain`, starting at `t0_s`: straights, arcs and
/// pivot turns through an extended-symmetric model.
fn rows(terrain: &str, t0_s: f64, duration_s: f64, seed: u64) -> String {
    let model = Model::from_params(skidroute::kinematics::Family::ExtendedSymmetric, &[0.92, 1.5], 0.9).unwrap();
    let pattern = [(1.0, 1.0), (0.8, 1.2), (1.2, 0.7), (-0.4, 0.4), (1.1, 1.1), (0.5, 1.3), (1.3, 0.9), (0.5, -0.5)];
    let dt = 0.04;
    let mut rng = Lcg(seed);
    let mut pose = Pose::new(5.0, 2.0, 0.4);
    let mut out = String::new();
    let steps = (duration_s / dt) as usize;
    for k in 0..steps {
        let (l, r) = pattern[(k / 75) % pattern.len()];
        let t = t0_s + k as f64 * dt;
        out += &format!(
            "{t:.2},{l},{r},{:.5},{:.5},{:.5},{terrain}\n",
            pose.x_m + 0.005 * rng.next(),
            pose.y_m + 0.005 * rng.next(),
            pose.yaw_rad + 0.002 * rng.next()
        );
        pose = pose.step(model.twist(l, r), dt);
    }
    out
}

fn write(dir: &Path, name: &str, text: &str) -> PathBuf {
    let p = dir.join(name);
    std::fs::write(&p, text).unwrap();
    p
}

fn run(dir: &Path, args: &[&str]) -> Output {
    Command::new(BIN).current_dir(dir).args(args).output().unwrap()
}

fn text(o: &Output) -> (String, String) {
    (String::from_utf8_lossy(&o.stdout).into_owned(), String::from_utf8_lossy(&o.stderr).into_owned())
}

#[test]
fn a_good_fit_writes_a_profile_that_check_accepts() {
    let dir = tempfile::tempdir().unwrap();
    write(dir.path(), "grass.csv", &format!("{HEADER}{}", rows("grass", 0.0, 240.0, 1)));
    let o = run(dir.path(), &["fit", "grass.csv", "--out", "out.toml", "--plot", "fit.svg", "--quiet"]);
    let (out, err) = text(&o);
    assert_eq!(o.status.code(), Some(0), "{out}\n{err}");
    let profile = std::fs::read_to_string(dir.path().join("out.toml")).unwrap();
    assert!(profile.starts_with("# Vehicle profile calibrated by `skidroute fit`"), "{profile}");
    assert!(profile.contains("grass.csv (6000 samples, training)"), "{profile}");
    assert!(std::fs::metadata(dir.path().join("fit.svg")).unwrap().len() > 1000);
    // The written profile is usable by `check` at once (exit 0 or 1 are verdicts; 2 would be an input error).
    let route = Path::new(env!("CARGO_MANIFEST_DIR")).join("example-routes/supply-run.geojson");
    let o = run(dir.path(), &["check", route.to_str().unwrap(), "--vehicle", "out.toml"]);
    let (out, err) = text(&o);
    assert!(matches!(o.status.code(), Some(0 | 1)), "{out}\n{err}");
    assert!(out.contains("total:"), "{out}");
}

#[test]
fn json_report_and_reproducible_output() {
    let dir = tempfile::tempdir().unwrap();
    write(dir.path(), "grass.csv", &format!("{HEADER}{}", rows("grass", 0.0, 240.0, 2)));
    let first = run(dir.path(), &["fit", "grass.csv", "--out", "a.toml", "--json"]);
    let second = run(dir.path(), &["fit", "grass.csv", "--out", "b.toml", "--json"]);
    assert_eq!(first.status.code(), Some(0));
    let doc: serde_json::Value = serde_json::from_slice(&first.stdout).unwrap();
    assert_eq!(doc["format"], "skidroute-fit/1");
    assert_eq!(doc["terrains"][0]["terrain"], "grass");
    assert_eq!(doc["terrains"][0]["outcome"]["status"], "fitted");
    assert_eq!(first.stdout, second.stdout, "same inputs must give the same report");
    let (a, b) = (std::fs::read(dir.path().join("a.toml")).unwrap(), std::fs::read(dir.path().join("b.toml")).unwrap());
    assert_eq!(a, b, "same inputs must give a byte-identical profile");
}

#[test]
fn a_malformed_log_exits_2_naming_file_line_and_column() {
    let dir = tempfile::tempdir().unwrap();
    let good = rows("grass", 0.0, 1.0, 3);
    let bad = format!(
        "{HEADER}{}0.5,1.0,abc,0,0,0,grass\n",
        good.lines().take(3).map(|l| format!("{l}\n")).collect::<String>()
    );
    write(dir.path(), "bad.csv", &bad);
    let o = run(dir.path(), &["fit", "bad.csv", "--out", "out.toml"]);
    let (_, err) = text(&o);
    assert_eq!(o.status.code(), Some(2), "{err}");
    assert!(err.contains("bad.csv: line 5, column right_mps: 'abc' is not a number"), "{err}");
    assert!(!dir.path().join("out.toml").exists());
}

#[test]
fn too_little_data_exits_1_and_keeps_the_base_entry() {
    let dir = tempfile::tempdir().unwrap();
    let log = format!("{HEADER}{}{}", rows("grass", 0.0, 240.0, 4), rows("gravel", 300.0, 20.0, 5));
    write(dir.path(), "mixed.csv", &log);
    let o = run(dir.path(), &["fit", "mixed.csv", "--out", "out.toml"]);
    let (out, err) = text(&o);
    assert_eq!(o.status.code(), Some(1), "{out}\n{err}");
    assert!(out.contains("NOT FITTED: too little data"), "{out}");
    let fitted = skidroute::vehicle::Profile::read(&dir.path().join("out.toml")).unwrap();
    let demo = skidroute::vehicle::Profile::demo();
    let mut gravel = fitted.terrain["gravel"].clone();
    let mark = gravel.calibration.take().expect("gravel is marked");
    assert_eq!(gravel, demo.terrain["gravel"], "gravel must keep the base entry");
    assert!(!mark.calibrated);
    assert!(mark.source.is_some_and(|s| s.starts_with("not fitted: too little data")));
    assert_ne!(fitted.terrain["grass"].model, demo.terrain["grass"].model, "grass must be fitted");
}

#[test]
fn an_output_naming_an_input_is_refused() {
    let dir = tempfile::tempdir().unwrap();
    write(dir.path(), "grass.csv", &format!("{HEADER}{}", rows("grass", 0.0, 10.0, 6)));
    let before = std::fs::read(dir.path().join("grass.csv")).unwrap();
    let o = run(dir.path(), &["fit", "grass.csv", "--out", "grass.csv"]);
    assert_eq!(o.status.code(), Some(2));
    assert_eq!(std::fs::read(dir.path().join("grass.csv")).unwrap(), before);
}

#[test]
fn the_fitted_profile_says_what_it_is() {
    let dir = tempfile::tempdir().unwrap();
    write(dir.path(), "grass.csv", &format!("{HEADER}{}", rows("grass", 0.0, 240.0, 7)));
    let o = run(dir.path(), &["fit", "grass.csv", "--out", "a.toml", "--quiet"]);
    assert_eq!(o.status.code(), Some(0), "{}", text(&o).1);
    let a = skidroute::vehicle::Profile::read(&dir.path().join("a.toml")).unwrap();
    assert_eq!(a.vehicle.name, "Tarnwick demo carrier (calibrated)");
    let grass = a.terrain["grass"].calibration.clone().expect("grass calibration");
    assert!(grass.calibrated);
    assert!(grass.source.as_deref().is_some_and(|s| s.contains("fitted by skidroute fit on grass.csv")), "{grass:?}");
    assert!(grass.translation_error.is_some_and(|e| e > 0.0 && e < 0.2), "{grass:?}");
    assert_eq!(grass.horizon_s, Some(2.0));
    let gravel = a.terrain["gravel"].calibration.clone().expect("gravel is marked");
    assert!(!gravel.calibrated);
    assert!(gravel.source.is_some_and(|s| s.starts_with("not fitted: no drive-log data on this terrain")));
    let o = run(dir.path(), &["fit", "grass.csv", "--out", "b.toml", "--name", "Quarry carrier, June", "--quiet"]);
    assert_eq!(o.status.code(), Some(0));
    let b = skidroute::vehicle::Profile::read(&dir.path().join("b.toml")).unwrap();
    assert_eq!(b.vehicle.name, "Quarry carrier, June");
    let o = run(dir.path(), &["fit", "grass.csv", "--out", "c.toml", "--name", " "]);
    assert_eq!(o.status.code(), Some(2));
    assert!(text(&o).1.contains("--name must not be empty"));
}

#[test]
fn validate_logs_leave_the_training_logs_whole() {
    let dir = tempfile::tempdir().unwrap();
    write(dir.path(), "train.csv", &format!("{HEADER}{}", rows("grass", 0.0, 240.0, 8)));
    write(dir.path(), "check.csv", &format!("{HEADER}{}", rows("grass", 0.0, 120.0, 9)));
    let o = run(dir.path(), &["fit", "train.csv", "--validate", "check.csv", "--out", "v.toml", "--json"]);
    assert_eq!(o.status.code(), Some(0), "{}", text(&o).1);
    let doc: serde_json::Value = serde_json::from_slice(&o.stdout).unwrap();
    let t = &doc["terrains"][0];
    // 240 s at 25 Hz = 6000 training samples, none held out.
    assert_eq!(t["training_samples"], 6000, "{t}");
    assert_eq!(t["samples"], 9000);
    assert!(doc["holdout"].as_str().unwrap().contains("training logs are used whole"));
}

#[test]
fn logs_with_real_defects_are_checked_and_dead_encoders_refused() {
    let dir = tempfile::tempdir().unwrap();
    let log = Path::new(env!("CARGO_MANIFEST_DIR")).join("example-logs/defective/meadow-grass-20hz-defects.csv");
    let o = run(dir.path(), &["fit", log.to_str().unwrap(), "--out", "d.toml"]);
    let (out, err) = text(&o);
    assert!(matches!(o.status.code(), Some(0 | 1)), "{out}{err}");
    assert!(out.contains("encoders update slower than the log"), "{out}");
    assert!(out.contains("rows without a pose"), "{out}");
    assert!(out.contains("time steps are irregular"), "{out}");
    assert!(out.contains("s moving ("), "{out}");
    // Side speeds of 0 while the poses drive 48 m: dead or unmapped encoders, exit 2.
    let dead: String =
        (0..1200).map(|i| format!("{:.2},0,0,{:.3},0,0,grass\n", 0.04 * i as f64, 0.04 * i as f64)).collect();
    write(dir.path(), "dead.csv", &format!("{HEADER}{dead}"));
    let o = run(dir.path(), &["fit", "dead.csv", "--out", "x.toml"]);
    assert_eq!(o.status.code(), Some(2));
    let err = text(&o).1;
    assert!(
        err.contains("dead.csv: the poses move") && err.contains("columns left_mps and right_mps stay near zero"),
        "{err}"
    );
    assert!(!dir.path().join("x.toml").exists());
}

#[test]
fn the_fit_plot_with_a_sweep_never_labels_a_tick_minus_zero() {
    let dir = tempfile::tempdir().unwrap();
    write(dir.path(), "grass.csv", &format!("{HEADER}{}", rows("grass", 0.0, 240.0, 1)));
    let o =
        run(dir.path(), &["fit", "grass.csv", "--out", "out.toml", "--plot", "fit.svg", "--sweep", "1,2,4", "--quiet"]);
    let (out, err) = text(&o);
    assert_eq!(o.status.code(), Some(0), "{out}\n{err}");
    let svg = std::fs::read_to_string(dir.path().join("fit.svg")).unwrap();
    assert!(svg.contains("horizon sweep"), "no sweep panel");
    let texts: Vec<&str> =
        svg.split("<text").skip(1).filter_map(|t| t.split_once('>')?.1.split("</text").next()).map(str::trim).collect();
    assert!(texts.iter().any(|t| *t == "0.0" || *t == "0"), "no zero tick at all: the check would prove nothing");
    for t in &texts {
        let minus_zero = t.strip_prefix('-').is_some_and(|n| !n.is_empty() && n.chars().all(|c| c == '0' || c == '.'));
        assert!(!minus_zero, "a tick reads {t:?}");
    }
}

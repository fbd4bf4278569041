//! Regression inputs for the readers: the files in `tests/fuzz-regressions/` (inputs found by the
//! fuzz targets in `fuzz/` and by reviewing the readers for hostile inputs) and larger hostile
//! inputs generated here. Each must exit 2 through the real binary with a short message that
//! names the file and the position, and never panic.
//!
//! A file goes to the command that reads its kind: `.geojson`/`.json`/`.csv` routes to `check`,
//! `.toml` profiles to `profile`, and `log-*.csv` drive logs to `fit`. To add a finding, drop the
//! minimised input there and give it an expected message fragment in `EXPECTED`.

use std::path::{Path, PathBuf};
use std::process::{Command, Output};

/// Expected message fragment (after the file name) for each committed regression input.
const EXPECTED: &[(&str, &str)] = &[
    ("huge-coordinate.csv", ": line 2: column x_m: 1e300 m is beyond +-100000000 m"),
    ("not-utf8.csv", ": is not UTF-8 text (first invalid byte at offset"),
    ("huge-altitude.geojson", ": feature 0: point 0: altitude 1e300 m is beyond"),
    ("log-huge-coordinate.csv", ": line 3, column x_m: 1e200 m is beyond"),
    ("deep-array.toml", ": not valid TOML: line 1, column"),
    ("deep-nesting.geojson", ": feature 0: LineString coordinates must be an array of"),
];

fn regressions_dir() -> PathBuf {
    Path::new(env!("CARGO_MANIFEST_DIR")).join("tests").join("fuzz-regressions")
}

/// Runs the command that reads `file`'s kind, from a scratch folder for any outputs.
fn run_reader(file: &Path, scratch: &Path) -> Output {
    let name = file.file_name().map(|n| n.to_string_lossy().into_owned()).unwrap_or_default();
    let ext = file.extension().map(|e| e.to_string_lossy().to_ascii_lowercase()).unwrap_or_default();
    let mut c = Command::new(env!("CARGO_BIN_EXE_skidroute"));
    c.env("NO_COLOR", "1").current_dir(scratch);
    if name.starts_with("log-") {
        c.arg("fit").arg(file).arg("--out").arg(scratch.join("fitted.toml"));
    } else if ext == "toml" {
        c.arg("profile").arg(file);
    } else {
        c.arg("check").arg(file);
    }
    c.output().expect("run skidroute")
}

/// Exit 2, no panic, one short line naming the file; returns the message after the file name.
fn refused(file: &Path, scratch: &Path) -> String {
    let o = run_reader(file, scratch);
    let e = String::from_utf8_lossy(&o.stderr).into_owned();
    assert_eq!(o.status.code(), Some(2), "{}: {e}", file.display());
    assert!(!e.contains("panicked"), "{e}");
    let prefix = format!("skidroute: error: {}", file.display());
    assert!(e.starts_with(&prefix), "message does not name the file: {e}");
    // A profile reports all its problems, one line each; every line stays short.
    for line in e.lines() {
        assert!(line.len() < 600, "message line too long ({} bytes): {}", line.len(), &line[..600]);
        assert!(line.starts_with("skidroute: error: "), "{e}");
    }
    e[prefix.len()..].trim_end().to_string()
}

#[test]
fn every_committed_regression_input_is_refused_cleanly() {
    let scratch = tempfile::tempdir().expect("tempdir");
    let mut files: Vec<PathBuf> =
        std::fs::read_dir(regressions_dir()).expect("regression folder").map(|e| e.expect("entry").path()).collect();
    files.sort();
    assert!(files.len() >= EXPECTED.len());
    for file in &files {
        let message = refused(file, scratch.path());
        let name = file.file_name().map(|n| n.to_string_lossy().into_owned()).unwrap_or_default();
        if let Some((_, fragment)) = EXPECTED.iter().find(|(n, _)| *n == name) {
            assert!(message.starts_with(fragment), "{name}: {message}");
        }
    }
}

#[test]
fn a_megabyte_long_profile_key_is_refused_quickly_with_a_clipped_message() {
    // The typo suggestion compared every allowed key with the unknown one in a len x len table:
    // gigabytes for a hostile key. Lengths too far apart are now skipped.
    let dir = tempfile::tempdir().expect("tempdir");
    let file = dir.path().join("huge-key.toml");
    std::fs::write(&file, format!("[vehicle]\n{} = 1\n", "k".repeat(1_000_000))).expect("write");
    let message = refused(&file, dir.path());
    let line = message.lines().find(|l| l.contains(": vehicle.kkkk")).unwrap_or_else(|| panic!("{message}"));
    assert!(line.contains("... (1000000 bytes in all): unknown key (line 2)"), "{message}");
}

#[test]
fn a_route_per_row_is_read_in_linear_time() {
    // Grouping legs by route name searched a list of groups per row: quadratic for a file that
    // gives every row its own route. Each route here has one point, so the file is refused.
    let dir = tempfile::tempdir().expect("tempdir");
    let file = dir.path().join("route-per-row.csv");
    let mut text = String::from("route,x_m,y_m,terrain\n");
    for i in 0..200_000 {
        text.push_str(&format!("r{i},{i},0,grass\n"));
    }
    std::fs::write(&file, text).expect("write");
    assert_eq!(refused(&file, dir.path()), ": line 2: leg has 1 point, at least 2 are needed");
}

#[test]
fn a_drive_log_with_a_terrain_per_row_is_read_in_linear_time() {
    // The same quadratic lookup in the drive-log reader's terrain list.
    let dir = tempfile::tempdir().expect("tempdir");
    let file = dir.path().join("log-terrain-per-row.csv");
    let mut text = String::from("t_s,left_mps,right_mps,x_m,y_m,yaw_rad,terrain\n");
    for i in 0..200_000 {
        text.push_str(&format!("{},1,1,{},0,0,t{i}\n", i as f64 * 0.02, i as f64 * 0.02));
    }
    std::fs::write(&file, text).expect("write");
    let message = refused(&file, dir.path());
    assert!(message.starts_with(": line 2: terrain 't0' is not in the base profile"), "{message}");
}

#[test]
fn a_cell_of_a_megabyte_is_quoted_clipped() {
    let dir = tempfile::tempdir().expect("tempdir");
    let file = dir.path().join("huge-cell.csv");
    std::fs::write(&file, format!("x_m,y_m,terrain\n0,{},grass\n1,0,grass\n", "9".repeat(1_000_000) + "x"))
        .expect("write");
    let message = refused(&file, dir.path());
    assert!(message.starts_with(": line 2: column y_m: '9999"), "{message}");
    assert!(message.ends_with("(1000001 bytes in all)' is not a number"), "{message}");
}

//! End-to-end tests of the limits and of atomic outputs through the real binary: every bad
//! input exits 2 with a message naming the file (and position), nothing panics, a failed or
//! killed write leaves no partial output and never touches an input.

use std::path::{Path, PathBuf};
use std::process::{Command, Output};
use std::time::Instant;

fn bin() -> Command {
    let mut c = Command::new(env!("CARGO_BIN_EXE_skidroute"));
    c.env("NO_COLOR", "1");
    for var in skidroute::limits::Limits::ENV {
        c.env_remove(var);
    }
    c
}

fn run(c: &mut Command) -> Output {
    c.output().expect("run skidroute")
}

fn stderr(o: &Output) -> String {
    String::from_utf8_lossy(&o.stderr).into_owned()
}

/// Exit code 2, no panic, and the message names `file`.
fn assert_input_error(o: &Output, file: &Path) -> String {
    let e = stderr(o);
    assert_eq!(o.status.code(), Some(2), "{e}");
    assert!(!e.contains("panicked"), "{e}");
    assert!(e.contains(&file.display().to_string()), "message does not name {}: {e}", file.display());
    e
}

/// A straight CSV route of `n` points `spacing_m` apart on asphalt.
fn straight_csv(dir: &Path, name: &str, n: usize, spacing_m: f64) -> PathBuf {
    let mut text = String::from("x_m,y_m,terrain\n");
    for i in 0..n {
        text.push_str(&format!("{},0,asphalt\n", i as f64 * spacing_m));
    }
    let path = dir.join(name);
    std::fs::write(&path, text).expect("write route");
    path
}

/// Every entry of `dir`, sorted.
fn listing(dir: &Path) -> Vec<String> {
    let mut names: Vec<String> = std::fs::read_dir(dir)
        .expect("ls")
        .map(|e| e.expect("entry").file_name().to_string_lossy().into_owned())
        .collect();
    names.sort();
    names
}

#[test]
fn a_file_over_the_size_limit_is_refused_before_reading() {
    let dir = tempfile::tempdir().expect("tempdir");
    let route = straight_csv(dir.path(), "big.csv", 80_000, 0.5); // about 1.1 MiB
    let o = run(bin().args(["check", "--max-file-mib", "1"]).arg(&route));
    let e = assert_input_error(&o, &route);
    assert!(e.contains("larger than the file-size limit of 1 MiB"), "{e}");
    let o = run(bin().args(["check", "--quiet", "--max-file-mib", "2"]).arg(&route));
    assert_ne!(o.status.code(), Some(2), "{}", stderr(&o));
}

#[test]
fn limits_come_from_the_environment_and_flags_win() {
    let dir = tempfile::tempdir().expect("tempdir");
    let route = straight_csv(dir.path(), "r.csv", 5, 10.0);
    let o = run(bin().arg("check").arg(&route).env("SKIDROUTE_MAX_POINTS_PER_LEG", "4"));
    let e = assert_input_error(&o, &route);
    assert!(e.contains(": line 2: leg has 5 points, more than the limit of 4 per leg"), "{e}");
    let o = run(bin()
        .args(["check", "--quiet", "--max-points-per-leg", "5"])
        .arg(&route)
        .env("SKIDROUTE_MAX_POINTS_PER_LEG", "4"));
    assert_eq!(o.status.code(), Some(0), "{}", stderr(&o));
    let o = run(bin().arg("check").arg(&route).env("SKIDROUTE_MAX_STEPS", "lots"));
    assert_eq!(o.status.code(), Some(2));
    assert!(stderr(&o).contains("SKIDROUTE_MAX_STEPS: \"lots\" is not a whole number >= 1"), "{}", stderr(&o));
    let o = run(bin().args(["check", "--max-legs-per-route", "0"]).arg(&route));
    assert_eq!(o.status.code(), Some(2), "a zero limit is a usage error");
}

#[test]
fn a_route_beyond_the_step_budget_is_refused_with_its_first_line() {
    let dir = tempfile::tempdir().expect("tempdir");
    let route = straight_csv(dir.path(), "long.csv", 3, 50.0);
    let o = run(bin().args(["check", "--max-steps", "1000"]).arg(&route));
    let e = assert_input_error(&o, &route);
    assert!(e.contains("long.csv: line 2: route 'long': simulating it could take up to"), "{e}");
}

#[test]
fn an_output_that_is_a_directory_fails_cleanly_leaving_nothing_and_the_input_untouched() {
    let dir = tempfile::tempdir().expect("tempdir");
    let route = straight_csv(dir.path(), "r.csv", 5, 10.0);
    let before = (std::fs::read(&route).expect("read"), std::fs::metadata(&route).expect("meta").modified().ok());
    let out_dir = dir.path().join("report.json");
    std::fs::create_dir(&out_dir).expect("mkdir");
    let o = run(bin().args(["check", "--quiet", "--report"]).arg(&out_dir).arg(&route));
    assert_input_error(&o, &out_dir);
    assert_eq!(listing(dir.path()), ["r.csv", "report.json"], "a temporary file was left behind");
    assert!(listing(&out_dir).is_empty());
    let after = (std::fs::read(&route).expect("read"), std::fs::metadata(&route).expect("meta").modified().ok());
    assert_eq!(before, after, "the input was touched");
}

#[test]
fn an_output_in_a_missing_folder_fails_before_any_output_is_written() {
    let dir = tempfile::tempdir().expect("tempdir");
    let route = straight_csv(dir.path(), "r.csv", 5, 10.0);
    let report = dir.path().join("report.json");
    let trace = dir.path().join("no-such-folder").join("trace.csv");
    let o = run(bin().args(["check", "--quiet", "--report"]).arg(&report).arg("--trace").arg(&trace).arg(&route));
    let e = assert_input_error(&o, &trace);
    assert!(e.contains("folder") && e.contains("does not exist"), "{e}");
    // Every output path is checked before any is written: the report is not written either.
    assert!(!report.exists());
    assert_eq!(listing(dir.path()), ["r.csv"]);
}

#[test]
fn an_output_naming_an_input_is_refused_and_the_input_kept() {
    let dir = tempfile::tempdir().expect("tempdir");
    let route = straight_csv(dir.path(), "r.csv", 5, 10.0);
    let before = std::fs::read(&route).expect("read");
    let o = run(bin().args(["check", "--trace"]).arg(&route).arg(&route));
    let e = assert_input_error(&o, &route);
    assert!(e.contains("is one of the inputs; refusing to overwrite it"), "{e}");
    assert_eq!(std::fs::read(&route).expect("read"), before);
}

/// Kills the process at spread-out moments while it writes a large trace: the target is
/// always either absent or complete (the size of an uninterrupted run), never partial.
#[test]
fn a_killed_run_never_leaves_a_partial_target() {
    let dir = tempfile::tempdir().expect("tempdir");
    // 8 km at the demo cruise speed: a trace of a few tens of MB.
    let route = straight_csv(dir.path(), "r.csv", 801, 10.0);
    let trace = dir.path().join("trace.csv");
    let started = Instant::now();
    let o = run(bin().args(["check", "--quiet", "--trace"]).arg(&trace).arg(&route));
    let full_run = started.elapsed();
    assert_eq!(o.status.code(), Some(0), "{}", stderr(&o));
    let complete_len = std::fs::metadata(&trace).expect("trace").len();
    assert!(complete_len > 1_000_000, "{complete_len}");
    for k in 1..=8 {
        std::fs::remove_file(&trace).ok();
        let mut child = bin().args(["check", "--quiet", "--trace"]).arg(&trace).arg(&route).spawn().expect("spawn");
        std::thread::sleep(full_run.mul_f64(k as f64 / 9.0));
        child.kill().ok(); // SIGKILL on Unix
        child.wait().expect("wait");
        if let Ok(meta) = std::fs::metadata(&trace) {
            assert_eq!(meta.len(), complete_len, "partial target after a kill at {k}/9 of the run");
        }
        // Only the route, the target and the killed run's temporary file may be there.
        for name in listing(dir.path()) {
            assert!(
                name == "r.csv" || name == "trace.csv" || name.starts_with(".trace.csv.partial-"),
                "unexpected file {name}"
            );
        }
    }
}

//! End-to-end tests of the second hardening pass, through the real binary: outputs that name
//! FIFOs, devices, symlinks and standard output; a full or closed stdout; profiles and GeoJSON
//! with large ignored members; the run-wide work budget; control characters in names; interrupt
//! cleanup; plausibility bounds; CSV quotes; FIFO inputs; `--keep-going`.
//!
//! Device nodes and FIFOs are made in private temporary folders; the machine's /dev is only
//! written through (`/dev/full` as a full stdout), never replaced.

mod common;

use std::io::Read;
use std::os::unix::fs::{FileTypeExt, PermissionsExt};
use std::path::{Path, PathBuf};
use std::process::{Command, Output, Stdio};
use std::time::{Duration, Instant};

use common::{s, text};

fn bin() -> Command {
    let mut c = common::bin();
    for var in skidroute::limits::Limits::ENV {
        c.env_remove(var);
    }
    c
}

fn run(c: &mut Command) -> Output {
    c.output().expect("run skidroute")
}

fn stderr(o: &Output) -> String {
    text(&o.stderr)
}

/// A straight CSV route of `n` points `spacing_m` apart on asphalt.
fn straight_csv(dir: &Path, name: &str, n: usize, spacing_m: f64) -> PathBuf {
    let mut t = String::from("x_m,y_m,terrain\n");
    for i in 0..n {
        t.push_str(&format!("{},0,asphalt\n", i as f64 * spacing_m));
    }
    let path = dir.join(name);
    std::fs::write(&path, t).expect("write route");
    path
}

fn mkfifo(path: &Path) {
    let ok = Command::new("mkfifo").arg(path).status().expect("mkfifo").success();
    assert!(ok, "mkfifo failed");
}

/// Exit 2 with exactly one `skidroute: error:` line, no panic; returns that line.
fn one_error_line(o: &Output) -> String {
    let e = stderr(o);
    assert_eq!(o.status.code(), Some(2), "{e}");
    assert!(!e.contains("panicked"), "{e}");
    assert_eq!(e.lines().count(), 1, "{e}");
    assert!(e.starts_with("skidroute: error: "), "{e}");
    e
}

// ---- outputs -----------------------------------------------------------------------------

#[test]
fn a_fifo_output_is_written_through_and_stays_a_fifo() {
    let dir = tempfile::tempdir().expect("tempdir");
    let route = straight_csv(dir.path(), "r.csv", 5, 10.0);
    let fifo = dir.path().join("report.json");
    mkfifo(&fifo);
    let reader_path = fifo.clone();
    let reader = std::thread::spawn(move || {
        let mut got = String::new();
        std::fs::File::open(&reader_path).expect("open fifo").read_to_string(&mut got).expect("read");
        got
    });
    let o = run(bin().args(["check", "--quiet", "--report"]).arg(&fifo).arg(&route));
    assert_eq!(o.status.code(), Some(0), "{}", stderr(&o));
    let json: serde_json::Value = serde_json::from_str(&reader.join().expect("reader")).expect("json");
    assert_eq!(json["format"], "skidroute-check/1");
    assert!(std::fs::symlink_metadata(&fifo).expect("meta").file_type().is_fifo(), "the FIFO was replaced");
}

#[test]
fn a_symlinked_output_writes_the_file_it_names_with_its_permissions() {
    let dir = tempfile::tempdir().expect("tempdir");
    let route = straight_csv(dir.path(), "r.csv", 5, 10.0);
    std::fs::create_dir(dir.path().join("reports")).expect("mkdir");
    let real = dir.path().join("reports").join("real.json");
    std::fs::write(&real, "old").expect("seed");
    std::fs::set_permissions(&real, std::fs::Permissions::from_mode(0o640)).expect("chmod");
    let link = dir.path().join("latest.json");
    std::os::unix::fs::symlink("reports/real.json", &link).expect("symlink");
    let o = run(bin().args(["check", "--quiet", "--report"]).arg(&link).arg(&route));
    assert_eq!(o.status.code(), Some(0), "{}", stderr(&o));
    assert!(std::fs::symlink_metadata(&link).expect("meta").file_type().is_symlink(), "the link was replaced");
    let json: serde_json::Value = serde_json::from_slice(&std::fs::read(&real).expect("read")).expect("json");
    assert_eq!(json["format"], "skidroute-check/1");
    assert_eq!(std::fs::metadata(&real).expect("meta").permissions().mode() & 0o777, 0o640);
}

#[test]
fn dash_and_a_link_to_our_own_stdout_write_to_standard_output() {
    let dir = tempfile::tempdir().expect("tempdir");
    let route = straight_csv(dir.path(), "r.csv", 5, 10.0);
    let o = run(bin().args(["check", "--report", "-"]).arg(&route));
    assert_eq!(o.status.code(), Some(0), "{}", stderr(&o));
    let json: serde_json::Value = serde_json::from_slice(&o.stdout).expect("stdout is the JSON document alone");
    assert_eq!(json["format"], "skidroute-check/1");
    // A private link to the process's own stdout (a pipe here) is written through, not replaced.
    let link = dir.path().join("out.json");
    std::os::unix::fs::symlink("/proc/self/fd/1", &link).expect("symlink");
    let o = run(bin().args(["check", "--quiet", "--report"]).arg(&link).arg(&route));
    assert_eq!(o.status.code(), Some(0), "{}", stderr(&o));
    assert!(text(&o.stdout).contains("\"skidroute-check/1\""), "{}", text(&o.stdout));
    assert!(std::fs::symlink_metadata(&link).expect("meta").file_type().is_symlink());
}

#[test]
fn a_character_device_output_is_written_through() {
    let dir = tempfile::tempdir().expect("tempdir");
    let route = straight_csv(dir.path(), "r.csv", 5, 10.0);
    let null = dir.path().join("null");
    // A private node like /dev/null (major 1, minor 3); making one needs root, else skip.
    let made = Command::new("mknod").arg(&null).args(["c", "1", "3"]).stderr(Stdio::null()).status();
    if !made.is_ok_and(|s| s.success()) {
        eprintln!("skipped: cannot make a device node here (not root)");
        return;
    }
    let o = run(bin().args(["check", "--quiet", "--report"]).arg(&null).arg(&route));
    assert_eq!(o.status.code(), Some(0), "{}", stderr(&o));
    assert!(std::fs::symlink_metadata(&null).expect("meta").file_type().is_char_device(), "the device was replaced");
}

#[test]
fn two_outputs_naming_one_file_are_refused() {
    let dir = tempfile::tempdir().expect("tempdir");
    let route = straight_csv(dir.path(), "r.csv", 5, 10.0);
    let a = dir.path().join("a.out");
    let same = dir.path().join(".").join("a.out");
    let o = run(bin().args(["check", "--report"]).arg(&a).arg("--trace").arg(&same).arg(&route));
    let e = one_error_line(&o);
    assert!(e.contains("names the same file as the output"), "{e}");
    assert!(!a.exists());
    let o = run(bin().args(["drift", "--report", "-", "--plot", "-"]).arg(&route));
    assert!(one_error_line(&o).contains("names the same file"));
}

// ---- stdout and stderr ----------------------------------------------------------------------

/// Every command with a report on stdout, as arguments after the binary.
fn stdout_commands(dir: &Path) -> Vec<Vec<String>> {
    let route = straight_csv(dir, "r.csv", 5, 10.0);
    let r = s(&route).to_string();
    // The first two minutes of an example log.
    let example = std::path::Path::new(env!("CARGO_MANIFEST_DIR")).join("example-logs").join("yard-asphalt.csv");
    let head: Vec<String> =
        std::fs::read_to_string(example).expect("log").lines().take(6000).map(String::from).collect();
    let log = dir.join("log.csv");
    std::fs::write(&log, head.join("\n") + "\n").expect("write log");
    let out = |name: &str| s(&dir.join(name)).to_string();
    let mut cmds = vec![
        vec!["check".into(), r.clone()],
        vec!["check".into(), "--json".into(), r.clone()],
        vec!["compare".into(), r.clone()],
        vec!["drift".into(), "--samples".into(), "20".into(), r.clone()],
        vec!["drift".into(), "--samples".into(), "20".into(), "--json".into(), r.clone()],
        vec!["relax".into(), r.clone(), "--out".into(), out("relaxed.csv")],
        vec!["profile".into(), "--demo".into()],
    ];
    cmds.push(vec!["fit".into(), s(&log).into(), "--out".into(), out("fitted.toml")]);
    cmds.push(vec!["fit".into(), s(&log).into(), "--out".into(), out("fitted.toml"), "--json".into()]);
    cmds
}

#[test]
fn a_full_stdout_is_one_error_line_for_every_command() {
    if !Path::new("/dev/full").exists() {
        eprintln!("skipped: no /dev/full");
        return;
    }
    let dir = tempfile::tempdir().expect("tempdir");
    for args in stdout_commands(dir.path()) {
        let full = std::fs::OpenOptions::new().write(true).open("/dev/full").expect("/dev/full");
        let o = bin().args(&args).stdout(full).output().expect("run");
        let e = one_error_line(&o);
        assert!(e.contains("standard output: cannot write"), "{args:?}: {e}");
    }
}

#[test]
fn a_closed_pipe_ends_quietly_with_the_runs_exit_code() {
    let dir = tempfile::tempdir().expect("tempdir");
    for args in stdout_commands(dir.path()) {
        let mut child = bin().args(&args).stdout(Stdio::piped()).stderr(Stdio::piped()).spawn().expect("spawn");
        drop(child.stdout.take()); // the reader goes away before anything is written
        let o = child.wait_with_output().expect("wait");
        let e = stderr(&o);
        assert!(!e.contains("panicked"), "{args:?}: {e}");
        assert!(matches!(o.status.code(), Some(0 | 1)), "{args:?}: {:?} {e}", o.status);
        assert!(e.is_empty(), "{args:?}: {e}");
    }
}

#[test]
fn a_failing_stderr_never_panics() {
    if !Path::new("/dev/full").exists() {
        return;
    }
    let full = std::fs::OpenOptions::new().write(true).open("/dev/full").expect("/dev/full");
    let o = bin().args(["check", "no-such-route.csv"]).stderr(full).output().expect("run");
    assert_eq!(o.status.code(), Some(2));
    let o = bin().args(["check", "no-such-route.csv"]).stderr(Stdio::null()).output().expect("run");
    assert_eq!(o.status.code(), Some(2));
}

#[test]
fn flag_errors_are_one_prefixed_line() {
    let o = run(bin().args(["check", "--no-such-flag", "r.csv"]));
    let e = one_error_line(&o);
    assert!(e.contains("unexpected argument '--no-such-flag'") && e.contains("usage: skidroute check"), "{e}");
    let o = run(bin().args(["fit", "log.csv"]));
    assert!(one_error_line(&o).contains("--out <FILE>"));
}

// ---- memory: ignored members are skipped, profiles are bounded ------------------------------

#[test]
fn a_profile_with_a_huge_unknown_array_is_refused_by_its_key_quickly() {
    let dir = tempfile::tempdir().expect("tempdir");
    let demo = run(bin().args(["profile", "--demo"])).stdout;
    let array = format!("junk = [{}]\n", vec!["1"; 1_500_000].join(","));
    let profile = text(&demo).replacen("[vehicle]\n", &format!("[vehicle]\n{array}"), 1);
    let file = dir.path().join("big.toml");
    std::fs::write(&file, profile).expect("write");
    let started = Instant::now();
    let o = run(bin().arg("profile").arg(&file));
    let e = one_error_line(&o);
    assert!(e.contains("big.toml: vehicle.junk: unknown key (line 8)"), "{e}");
    assert!(started.elapsed() < Duration::from_secs(5), "{:?}", started.elapsed());
    // The file-size limit applies to profiles too: flag, then environment.
    let o = run(bin().args(["profile", "--max-file-mib", "1"]).arg(&file));
    assert!(one_error_line(&o).contains("larger than the file-size limit of 1 MiB"));
    let o = run(bin().arg("profile").arg(&file).env("SKIDROUTE_MAX_FILE_MIB", "1"));
    assert!(one_error_line(&o).contains("larger than the file-size limit of 1 MiB"));
}

#[test]
fn a_geojson_route_with_large_ignored_members_is_read() {
    let dir = tempfile::tempdir().expect("tempdir");
    let junk = format!("[{}]", vec!["[1, {\"a\": 2}]"; 200_000].join(","));
    let text = format!(
        r#"{{"type": "FeatureCollection", "extra": {junk}, "features": [{{"type": "Feature", "id": {junk},
            "properties": {{"terrain": "gravel", "style": {junk}, "name": "out"}},
            "geometry": {{"type": "LineString", "coordinates": [[18.95, 69.65], [18.951, 69.65]]}}}}]}}"#
    );
    let file = dir.path().join("extra.geojson");
    std::fs::write(&file, text).expect("write");
    let o = run(bin().args(["check", "--json"]).arg(&file));
    assert_eq!(o.status.code(), Some(0), "{}", stderr(&o));
    let json: serde_json::Value = serde_json::from_slice(&o.stdout).expect("json");
    assert_eq!(json["routes"][0]["legs"][0]["name"], "out");
}

// ---- the work budget ---------------------------------------------------------------------------

#[test]
fn work_beyond_the_run_budget_is_refused_up_front_for_every_simulating_command() {
    let dir = tempfile::tempdir().expect("tempdir");
    let route = straight_csv(dir.path(), "r.csv", 5, 10.0);
    let started = Instant::now();
    let o = run(bin().args(["drift", "--samples", "1000000"]).arg(&route));
    let e = one_error_line(&o);
    assert!(e.contains("1000000 drift samples of route 'r' could take up to"), "{e}");
    assert!(e.contains("--max-work-steps or SKIDROUTE_MAX_WORK_STEPS"), "{e}");
    assert!(started.elapsed() < Duration::from_secs(5), "not refused up front: {:?}", started.elapsed());
    let out = dir.path().join("relaxed.csv");
    for args in [vec!["check", s(&route)], vec!["compare", s(&route)], vec!["relax", s(&route), "--out", s(&out)]] {
        let o = run(bin().args(&args).env("SKIDROUTE_MAX_WORK_STEPS", "100"));
        let e = one_error_line(&o);
        assert!(e.contains("work budget of 100"), "{args:?}: {e}");
    }
    let o = run(bin().args(["check", "--max-work-steps", "100"]).arg(&route));
    assert!(one_error_line(&o).contains("checking 1 route could take up to"));
    let o = run(bin().args(["check", "--quiet", "--max-work-steps", "1000000"]).arg(&route));
    assert_eq!(o.status.code(), Some(0), "{}", stderr(&o));
}

/// `relax` charges the check of the relaxed routes before it writes them: with a budget that
/// holds the first rollout (3201 steps for the 40 m straight, derived in the test below) but not
/// the second, it exits 2 and leaves no relaxed file behind.
#[test]
fn relax_is_refused_before_it_writes_anything() {
    let dir = tempfile::tempdir().expect("tempdir");
    let route = straight_csv(dir.path(), "r.csv", 5, 10.0);
    let out = dir.path().join("relaxed.csv");
    let rollout = ((3.0 * 40.0 / 1.2 + 60.0) * 20.0_f64).ceil() + 1.0;
    let budget = (rollout + 1.0).to_string();
    let o = run(bin().args(["relax", "--max-work-steps", &budget]).arg(&route).arg("--out").arg(&out));
    let e = one_error_line(&o);
    assert!(e.contains("--max-work-steps or SKIDROUTE_MAX_WORK_STEPS"), "{e}");
    assert!(!out.exists(), "the relaxed file was written before the refusal");
    // With room for both checks it runs and writes.
    let o =
        run(bin().args(["relax", "--max-work-steps", &(2.0 * rollout).to_string()]).arg(&route).arg("--out").arg(&out));
    assert_eq!(o.status.code(), Some(0), "{}", stderr(&o));
    assert!(out.exists());
}

/// The margin search (each leg's highest passing speed) is charged up front with the check: the
/// 40 m straight on the demo profile (cruise 1.2 m/s, top side speed 2 m/s, 20 Hz) has a rollout
/// bound of (3 x 40 / 1.2 + 60) s x 20 Hz + 1 = 3201 steps, and each simulation of the search
/// at most (3 x 40 / 0.1 + 60) s x 20 Hz + 1 = 25201 steps (the leg at the lowest tried speed,
/// 0.1 m/s). The search makes one simulation at the top speed, one at the lowest, and a
/// bisection in log speed from 0.1 to 2 m/s down to 1 %: ceil(log2(ln 20 / ln 1.01)) halvings,
/// plus one for rounding (docs/method.md, Verdicts: margins; closed form, no source).
/// The rollouts that do not fit are refused; a margin search that does not fit is left out, for
/// that route and every later one (input order), and the legs say so.
#[test]
fn the_margin_search_is_charged_to_the_work_budget_up_front() {
    let dir = tempfile::tempdir().expect("tempdir");
    let route = straight_csv(dir.path(), "r.csv", 5, 10.0);
    let rollout = ((3.0 * 40.0 / 1.2 + 60.0) * 20.0_f64).ceil() + 1.0;
    let per_simulation = ((3.0 * 40.0 / 0.1 + 60.0) * 20.0_f64).ceil() + 1.0;
    let halvings = (20.0_f64.ln() / 1.01_f64.ln()).log2().ceil() + 1.0;
    let needed = rollout + (halvings + 2.0) * per_simulation;
    assert!((needed - 305_613.0).abs() < 0.5, "{needed}");
    let check = |budget: f64, routes: &[&Path]| {
        run(bin().args(["check", "--json", "--max-work-steps", &budget.to_string()]).args(routes))
    };
    let started = Instant::now();
    let e = one_error_line(&check(rollout - 1.0, &[&route]));
    assert!(e.contains("checking 1 route could take up to 3201 control steps"), "{e}");
    assert!(e.contains("--max-work-steps or SKIDROUTE_MAX_WORK_STEPS"), "{e}");
    assert!(started.elapsed() < Duration::from_secs(5), "not refused up front: {:?}", started.elapsed());
    let searched = |o: &Output| -> Vec<bool> {
        assert_eq!(o.status.code(), Some(0), "{}", stderr(o));
        let v: serde_json::Value = serde_json::from_slice(&o.stdout).expect("json");
        v["routes"]
            .as_array()
            .expect("routes")
            .iter()
            .map(|r| {
                let leg = &r["legs"][0];
                let s = leg["max_passing_speed_searched"].as_bool().expect("searched key");
                let warned = r["warnings"].as_array().is_some_and(|ws| {
                    ws.iter().any(|w| {
                        w.as_str().is_some_and(|w| w.contains("highest passing speed of the legs was not searched"))
                    })
                });
                assert_eq!(warned, !s, "{r}");
                assert_eq!(leg["max_passing_speed_mps"].is_null(), !s, "{r}");
                s
            })
            .collect()
    };
    assert_eq!(searched(&check(needed - 1.0, &[&route])), vec![false]);
    assert_eq!(searched(&check(needed, &[&route])), vec![true]);
    // Two routes: room for both rollouts and the first search only.
    let second = straight_csv(dir.path(), "s.csv", 5, 10.0);
    assert_eq!(searched(&check(needed + rollout, &[&route, &second])), vec![true, false]);
    assert_eq!(searched(&check(2.0 * needed, &[&route, &second])), vec![true, true]);
    // The environment variable sets the same budget.
    let o =
        run(bin().args(["check", "--json"]).arg(&route).env("SKIDROUTE_MAX_WORK_STEPS", (needed - 1.0).to_string()));
    assert_eq!(searched(&o), vec![false]);
}

#[test]
fn a_crawling_or_absurd_speed_is_refused_when_read() {
    let dir = tempfile::tempdir().expect("tempdir");
    let file = dir.path().join("crawl.csv");
    std::fs::write(&file, "x_m,y_m,terrain,speed_mps\n0,0,asphalt,1e-6\n10,0,asphalt,1e-6\n").expect("write");
    let o = run(bin().arg("drift").arg(&file));
    assert!(one_error_line(&o).contains("crawl.csv: line 2: column speed_mps: 1e-6 m/s is slower than 0.05 m/s"));
    std::fs::write(&file, "x_m,y_m,terrain,speed_mps\n0,0,asphalt,1e308\n10,0,asphalt,1\n").expect("write");
    let o = run(bin().arg("check").arg(&file));
    assert!(one_error_line(&o).contains("1e308 m/s is faster than 100 m/s"));
}

// ---- control characters -------------------------------------------------------------------------

#[test]
fn control_characters_in_names_are_escaped_everywhere() {
    let dir = tempfile::tempdir().expect("tempdir");
    let file = dir.path().join("esc.csv");
    let name = "\u{1b}[2J\u{7}evil\r\nPASS\0";
    std::fs::write(&file, format!("x_m,y_m,terrain,route\n0,0,asphalt,\"{name}\"\n10,0,asphalt,\"{name}\"\n"))
        .expect("write");
    let plot = dir.path().join("p.svg");
    let o = run(bin().arg("check").arg("--plot").arg(&plot).arg(&file));
    assert_eq!(o.status.code(), Some(0), "{}", stderr(&o));
    let out = text(&o.stdout);
    assert!(out.contains("\\u{1b}[2J\\u{7}evil\\r\\nPASS\\0"), "{out}");
    for bad in ['\u{1b}', '\u{7}', '\r', '\0'] {
        assert!(!out.contains(bad), "raw {:?} in the table", bad);
        assert!(!std::fs::read_to_string(&plot).expect("plot").contains(bad), "raw {bad:?} in the plot");
    }
    // A terrain name with a newline: one error line, escaped.
    std::fs::write(&file, "x_m,y_m,terrain\n0,0,\"mud\nall legs pass\"\n10,0,\"mud\nall legs pass\"\n").expect("write");
    let o = run(bin().arg("check").arg(&file));
    let e = one_error_line(&o);
    assert!(e.contains("unknown terrain 'mud\\nall legs pass'"), "{e}");
}

// ---- smaller ones --------------------------------------------------------------------------------

/// SIGTERM at spread-out moments of a run writing a large trace: the run ends by the signal
/// and never leaves a temporary file (SIGKILL may; see docs/hardening.md).
#[test]
fn sigterm_leaves_no_temporary_files() {
    let dir = tempfile::tempdir().expect("tempdir");
    let route = straight_csv(dir.path(), "r.csv", 801, 10.0);
    let trace = dir.path().join("trace.csv");
    let started = Instant::now();
    let o = run(bin().args(["check", "--quiet", "--trace"]).arg(&trace).arg(&route));
    assert_eq!(o.status.code(), Some(0), "{}", stderr(&o));
    let full_run = started.elapsed();
    for k in 1..=8 {
        std::fs::remove_file(&trace).ok();
        let child = bin().args(["check", "--quiet", "--trace"]).arg(&trace).arg(&route).spawn().expect("spawn");
        std::thread::sleep(full_run.mul_f64(0.5 + k as f64 / 18.0));
        let _ = Command::new("kill").args(["-TERM", &child.id().to_string()]).status();
        let o = child.wait_with_output().expect("wait");
        assert!(!stderr(&o).contains("panicked"));
        let left: Vec<String> = std::fs::read_dir(dir.path())
            .expect("ls")
            .map(|e| e.expect("entry").file_name().to_string_lossy().into_owned())
            .filter(|n| n.contains(".partial-"))
            .collect();
        assert!(left.is_empty(), "temporary files left after SIGTERM at {k}: {left:?}");
    }
}

#[test]
fn a_vehicle_that_cannot_turn_gets_words_not_inf() {
    let dir = tempfile::tempdir().expect("tempdir");
    let demo = text(&run(bin().args(["profile", "--demo"])).stdout);
    // No traction on asphalt: no turn is possible at any speed.
    let profile = demo.replacen("traction_coefficient = 0.8 ", "traction_coefficient = 0.0 ", 1);
    assert_ne!(profile, demo);
    let vehicle = dir.path().join("v.toml");
    std::fs::write(&vehicle, profile).expect("write");
    let file = dir.path().join("turn.csv");
    std::fs::write(&file, "x_m,y_m,terrain\n0,0,asphalt\n10,0,asphalt\n10,10,asphalt\n").expect("write");
    let o = run(bin().args(["check", "--json", "--vehicle"]).arg(&vehicle).arg(&file));
    let out = text(&o.stdout);
    assert_eq!(o.status.code(), Some(1), "{}", stderr(&o));
    assert!(out.contains("it cannot turn at all"), "{out}");
    assert!(!out.contains("inf m") && !out.contains("NaN"), "{out}");
}

#[test]
fn an_unterminated_csv_quote_is_named_with_its_line() {
    let dir = tempfile::tempdir().expect("tempdir");
    let file = dir.path().join("q.csv");
    std::fs::write(&file, "x_m,y_m,terrain\n0,0,asphalt\n5,0,\"asphalt\n10,0,asphalt\n").expect("write");
    let o = run(bin().arg("check").arg(&file));
    let e = one_error_line(&o);
    assert!(e.contains("q.csv: line 3: a quoted field opens here and is never closed"), "{e}");
}

#[test]
fn a_fifo_input_without_a_writer_is_refused_at_once() {
    let dir = tempfile::tempdir().expect("tempdir");
    let fifo = dir.path().join("route.csv");
    mkfifo(&fifo);
    let vehicle = dir.path().join("v.toml");
    mkfifo(&vehicle);
    let started = Instant::now();
    let o = run(bin().arg("check").arg(&fifo));
    assert!(one_error_line(&o).contains("route.csv: is not a regular file"));
    let o = run(bin().arg("profile").arg(&vehicle));
    assert!(one_error_line(&o).contains("v.toml: is not a regular file"));
    assert!(started.elapsed() < Duration::from_secs(5));
}

#[test]
fn keep_going_reports_a_bad_file_and_checks_the_rest() {
    let dir = tempfile::tempdir().expect("tempdir");
    let good = straight_csv(dir.path(), "a-good.csv", 5, 10.0);
    let bad = dir.path().join("b-bad.csv");
    std::fs::write(&bad, "x_m,y_m,terrain\n0,0,lava\n10,0,lava\n").expect("write");
    let o = run(bin().args(["check", "--format", "jsonl"]).arg(dir.path()));
    one_error_line(&o);
    let o = run(bin().args(["check", "--format", "jsonl", "--keep-going"]).arg(dir.path()));
    assert_eq!(o.status.code(), Some(2), "{}", stderr(&o));
    let lines: Vec<serde_json::Value> =
        text(&o.stdout).lines().map(|l| serde_json::from_str(l).expect("json line")).collect();
    assert_eq!(lines.len(), 2, "{}", text(&o.stdout));
    assert_eq!(lines[0]["source"], s(&good));
    assert_eq!(lines[0]["verdict"], "pass");
    assert_eq!(lines[1]["source"], s(&bad));
    assert!(lines[1]["error"].as_str().expect("error").contains("unknown terrain 'lava'"));
    assert_eq!(stderr(&o).lines().count(), 1, "{}", stderr(&o));
}

// ---- the profile reader ---------------------------------------------------------------------------

#[test]
fn a_profile_reports_every_error_at_once_each_with_its_line() {
    let dir = tempfile::tempdir().expect("tempdir");
    let demo = text(&run(bin().args(["profile", "--demo"])).stdout);
    let broken = demo
        .replacen("mass_kg = 480.0", "mass_kg = -480", 1)
        .replacen("lookahead_m = 1.5", "lookahed_m = 1.5", 1)
        .replacen("traction_coefficient = 0.6", "traction_coefficient = \"high\"", 1);
    let file = dir.path().join("p.toml");
    std::fs::write(&file, broken).expect("write");
    let o = run(bin().arg("profile").arg(&file));
    let e = stderr(&o);
    assert_eq!(o.status.code(), Some(2), "{e}");
    let lines: Vec<&str> = e.lines().collect();
    assert_eq!(lines.len(), 4, "{e}");
    assert!(lines.iter().all(|l| l.starts_with("skidroute: error: ") && l.contains("p.toml: ")), "{e}");
    assert!(lines[0].contains("vehicle.mass_kg: must be a positive number, got -480 (line 12)"), "{e}");
    assert!(lines[1].contains("follower: missing required key lookahead_m"), "{e}");
    assert!(lines[2].contains("follower.lookahed_m: unknown key (did you mean lookahead_m?) (line 25)"), "{e}");
    assert!(lines[3].contains("terrain.gravel.traction_coefficient: must be a number >= 0, got the string"), "{e}");
}

#[test]
fn wheelbase_alias_warnings_and_boolean_words() {
    let dir = tempfile::tempdir().expect("tempdir");
    let demo = text(&run(bin().args(["profile", "--demo"])).stdout);
    let file = dir.path().join("w.toml");
    let wheels = demo.replacen("\"tracks\"", "\"wheels\"", 1);
    std::fs::write(&file, wheels.replacen("contact_length_m = 1.1 ", "wheelbase_m = 1.1 ", 1)).expect("write");
    let o = run(bin().arg("profile").arg(&file));
    assert_eq!(o.status.code(), Some(0), "{}", stderr(&o));
    std::fs::write(&file, wheels.replacen("contact_length_m = 1.1 ", "contact_length_m = 1.1\nwheelbase_m = 1.1 ", 1))
        .expect("write");
    let o = run(bin().arg("profile").arg(&file));
    assert!(
        one_error_line(&o).contains("vehicle.wheelbase_m: give contact_length_m or its alias wheelbase_m, not both")
    );
    std::fs::write(&file, demo.replacen("track_width_m = 0.9 ", "track_width_m = 550 ", 1)).expect("write");
    let o = run(bin().arg("profile").arg(&file));
    assert_eq!(o.status.code(), Some(0), "a warning is no error: {}", stderr(&o));
    assert!(stderr(&o).starts_with("skidroute: warning: "), "{}", stderr(&o));
    assert!(stderr(&o).contains("vehicle.track_width_m: 550 m is unusual"), "{}", stderr(&o));
    std::fs::write(&file, demo.replacen("track_width_m = 0.9 ", "track_width_m = 5e10 ", 1)).expect("write");
    let o = run(bin().arg("profile").arg(&file));
    assert!(one_error_line(&o).contains("vehicle.track_width_m: 5e10 m is beyond the possible 1000 m"));
    std::fs::write(&file, demo.replacen("regenerative = false", "regenerative = no", 1)).expect("write");
    let o = run(bin().arg("profile").arg(&file));
    assert!(one_error_line(&o).contains("regenerative = no: expected true or false"));
}

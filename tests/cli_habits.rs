//! End-to-end tests of the command-line habits every command shares: the common flags
//! (`--vehicle --json --report --plot -q/--quiet`), `-o` for a single output, per-command help.

mod common;

use std::path::{Path, PathBuf};

use common::*;

/// The first `rows` data rows of an example drive log, as a small log in `dir`.
fn small_log(dir: &Path, rows: usize) -> PathBuf {
    let full = Path::new(env!("CARGO_MANIFEST_DIR")).join("example-logs").join("meadow-grass.csv");
    let text = std::fs::read_to_string(full).expect("example log");
    let head: Vec<&str> = text.lines().take(rows + 1).collect();
    let p = dir.join("meadow.csv");
    std::fs::write(&p, head.join("\n") + "\n").expect("write log");
    p
}

/// A CSV route with one right-angle corner on deep snow (fails at 1.2 m/s; relax repairs it).
const SHARP_CSV: &str = "x_m,y_m,terrain,speed_mps\n0,0,deep-snow,1.2\n30,0,deep-snow,1.2\n30,30,deep-snow,1.2\n";

#[test]
fn short_quiet_flag_silences_every_route_command() {
    let dir = tempfile::tempdir().expect("tempdir");
    let route = dir.path().join("sharp.csv");
    std::fs::write(&route, SHARP_CSV).expect("w");
    let yard = example("yard-lap.csv");
    let relaxed = dir.path().join("relaxed.csv");
    let cases: Vec<Vec<&str>> = vec![
        vec!["check", "-q", s(&yard)],
        vec!["compare", "-q", s(&yard)],
        vec!["drift", "-q", "--samples", "2", s(&yard)],
        vec!["relax", "-q", s(&route), "-o", s(&relaxed)],
    ];
    for args in cases {
        let out = run(&args);
        assert!(matches!(out.status.code(), Some(0 | 1)), "{args:?}: {}", text(&out.stderr));
        assert!(out.stdout.is_empty(), "{args:?} printed: {}", text(&out.stdout));
    }
    assert!(relaxed.exists(), "-o names relax's output");
}

#[test]
fn fit_takes_short_out_and_writes_its_json_report_to_a_file() {
    let dir = tempfile::tempdir().expect("tempdir");
    let log = small_log(dir.path(), 3000);
    let (profile, report) = (dir.path().join("fitted.toml"), dir.path().join("fit.json"));
    let out = run(&["fit", "-q", s(&log), "-o", s(&profile), "--report", s(&report)]);
    assert!(matches!(out.status.code(), Some(0 | 1)), "{}", text(&out.stderr));
    assert!(out.stdout.is_empty());
    assert!(std::fs::read_to_string(&profile).expect("profile").contains("[terrain."));
    let doc: serde_json::Value =
        serde_json::from_str(&std::fs::read_to_string(&report).expect("report")).expect("json");
    assert_eq!(doc["format"], "skidroute-fit/1");
}

#[test]
fn relax_writes_its_change_document_and_a_plot_of_the_relaxed_route() {
    let dir = tempfile::tempdir().expect("tempdir");
    let route = dir.path().join("sharp.csv");
    std::fs::write(&route, SHARP_CSV).expect("w");
    let (relaxed, report, plot) =
        (dir.path().join("relaxed.csv"), dir.path().join("relax.json"), dir.path().join("relaxed.svg"));
    let out = run(&["relax", s(&route), "-o", s(&relaxed), "--report", s(&report), "--plot", s(&plot), "--json"]);
    assert_eq!(out.status.code(), Some(0), "{}", text(&out.stderr));
    let written = std::fs::read_to_string(&report).expect("report");
    assert_eq!(written, text(&out.stdout), "--report holds what --json prints");
    let doc: serde_json::Value = serde_json::from_str(&written).expect("json");
    assert_eq!(doc["format"], "skidroute-relax/1");
    assert_eq!(doc["routes"][0]["changes"].as_array().expect("changes").len(), 1);
    assert!(std::fs::read_to_string(&plot).expect("plot").contains("<svg"));
}

#[test]
fn shared_flags_carry_each_commands_own_help() {
    let help = |cmd: &str| text(&run(&[cmd, "--help"]).stdout);
    assert!(help("compare").contains("overlay plot of all alternatives"));
    assert!(help("fit").contains("Base profile for geometry"));
    assert!(help("relax").contains("plot of the relaxed route"));
    assert!(help("check").contains("-q, --quiet"));
    for cmd in ["fit", "relax"] {
        assert!(help(cmd).contains("-o, --out <FILE>"), "{cmd}");
    }
}

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

/// A straight asphalt leg planned above the demo's 2.0 m/s top side speed: a caution only.
const FAST_CSV: &str = "x_m,y_m,terrain,speed_mps\n0,0,asphalt,2.5\n60,0,asphalt,2.5\n";

#[test]
fn strict_says_in_the_table_that_cautions_count_as_failures() {
    let dir = tempfile::tempdir().expect("tempdir");
    let route = dir.path().join("fast.csv");
    std::fs::write(&route, FAST_CSV).expect("w");
    let plain = run(&["check", s(&route)]);
    assert_eq!(plain.status.code(), Some(0), "{}", text(&plain.stdout));
    assert!(text(&plain.stdout).contains("CAUTION") && !text(&plain.stdout).contains("--strict"));
    let strict = run(&["check", "--strict", s(&route)]);
    assert_eq!(strict.status.code(), Some(1));
    let table = text(&strict.stdout);
    assert!(table.contains("--strict: a CAUTION counts as a failure"), "{table}");
    assert!(table.contains("(a failure under --strict)"), "{table}");
}

#[test]
fn json_and_format_jsonl_are_a_usage_conflict() {
    let out = run(&["check", "--json", "--format", "jsonl", s(&example("yard-lap.csv"))]);
    assert_eq!(out.status.code(), Some(2));
    let err = text(&out.stderr);
    assert!(err.contains("--json") && err.contains("--format"), "{err}");
    assert!(out.stdout.is_empty());
}

#[test]
fn compare_html_headline_and_reason_tags_agree_with_the_exit_code() {
    let dir = tempfile::tempdir().expect("tempdir");
    let html = dir.path().join("compare.html");
    let out = run(&["compare", "-q", "--html", s(&html), s(&example("store-alternatives.geojson"))]);
    assert_eq!(out.status.code(), Some(0), "the ridge route passes: {}", text(&out.stderr));
    let page = std::fs::read_to_string(&html).expect("html");
    let h1 = page.split("<h1>").nth(1).and_then(|r| r.split("</h1>").next()).expect("headline");
    assert!(h1.contains("best 'ridge'") && h1.contains("PASS") && !h1.contains("FAIL"), "{h1}");
    // Caution-level wording (the verdict rules in docs/method.md) is never tagged "(fail)".
    let caution_words = ["uses ", "over half the", "above the top side speed", "changing speed", "accelerating draws"];
    let no_caution_tagged_fail = |page: &str| {
        for li in page.split("<li>").skip(1).filter_map(|l| l.split("</li>").next()) {
            if li.contains("(fail)") {
                assert!(!caution_words.iter().any(|w| li.contains(w)), "a caution tagged as a failure: {li}");
            }
        }
    };
    no_caution_tagged_fail(&page);
    // A leg that fails at its corner and is planned above the demo's 2.0 m/s top side speed (a
    // caution of its own): the caution keeps its tag.
    let route = dir.path().join("fast.csv");
    std::fs::write(&route, SHARP_CSV.replace("1.2", "2.5")).expect("w");
    let fast_html = dir.path().join("fast.html");
    let out = run(&["check", "-q", "--html", s(&fast_html), s(&route)]);
    assert_eq!(out.status.code(), Some(1), "{}", text(&out.stderr));
    let page = std::fs::read_to_string(&fast_html).expect("html");
    no_caution_tagged_fail(&page);
    assert!(page.contains("(caution): planned speed 2.5 m/s is above the top side speed"), "{page}");
    assert!(page.contains("(fail): "), "{page}");
    // Under --strict the best route's caution would fail the exit code; a passing best does not.
    let strict = run(&["compare", "-q", "--strict", s(&example("store-alternatives.geojson"))]);
    assert_eq!(strict.status.code(), Some(0));
}

#[test]
fn completions_and_man_pages_are_printed() {
    let bash = run(&["completions", "bash"]);
    assert_eq!(bash.status.code(), Some(0));
    let script = text(&bash.stdout);
    assert!(script.contains("_skidroute") && script.contains("--vehicle") && script.contains("relax"), "{script}");
    let zsh = run(&["completions", "zsh"]);
    assert!(text(&zsh.stdout).starts_with("#compdef skidroute"));
    let man = run(&["man"]);
    assert_eq!(man.status.code(), Some(0));
    assert!(text(&man.stdout).contains(".TH skidroute"), "{}", text(&man.stdout));
    let check = text(&run(&["man", "check"]).stdout);
    assert!(check.contains(".TH skidroute-check") && check.contains("strict"), "{check}");
    let bad = run(&["man", "nosuch"]);
    assert_eq!(bad.status.code(), Some(2));
    assert!(text(&bad.stderr).contains("the commands are"), "{}", text(&bad.stderr));
}

/// Every output path is checked before anything is written: a plot into a missing folder gives
/// one plain line for PNG as for SVG, and no other output (the profile of `fit`, the route of
/// `relax`) is written first.
#[test]
fn outputs_are_checked_before_any_is_written() {
    let dir = tempfile::tempdir().expect("tempdir");
    let yard = example("yard-lap.csv");
    let mut messages = Vec::new();
    for ext in ["svg", "png"] {
        let plot = dir.path().join("nodir").join(format!("plot.{ext}"));
        let out = run(&["check", "-q", "--plot", s(&plot), s(&yard)]);
        assert_eq!(out.status.code(), Some(2));
        let err = text(&out.stderr);
        assert_eq!(err.lines().count(), 1, "{err}");
        assert!(err.contains("nodir") && err.contains("does not exist") && !err.contains("Error("), "{err}");
        messages.push(err.replace(ext, "EXT"));
    }
    assert_eq!(messages[0], messages[1], "PNG and SVG fail alike");
    let log = small_log(dir.path(), 600);
    let profile = dir.path().join("fitted.toml");
    let bad_plot = dir.path().join("nodir").join("f.png");
    let out = run(&["fit", "-q", s(&log), "-o", s(&profile), "--plot", s(&bad_plot)]);
    assert_eq!(out.status.code(), Some(2), "{}", text(&out.stderr));
    assert!(!profile.exists(), "fit wrote its profile before failing on the plot");
    let route = dir.path().join("sharp.csv");
    std::fs::write(&route, SHARP_CSV).expect("w");
    let relaxed = dir.path().join("relaxed.csv");
    let out = run(&["relax", "-q", s(&route), "-o", s(&relaxed), "--report", s(dir.path())]);
    assert_eq!(out.status.code(), Some(2));
    assert!(text(&out.stderr).contains("is a folder"), "{}", text(&out.stderr));
    assert!(!relaxed.exists());
    let out = run(&["drift", "-q", "--plot", s(&dir.path().join("d.jpg")), s(&yard)]);
    assert_eq!(out.status.code(), Some(2));
    assert!(text(&out.stderr).contains("expected .svg or .png"));
}

/// Widest line of `text` in characters.
fn widest(text: &str) -> usize {
    text.lines().map(|l| l.chars().count()).max().unwrap_or(0)
}

/// In a pipe every column is shown, whatever COLUMNS says.
#[test]
fn piped_tables_keep_every_column() {
    let out = bin().env("COLUMNS", "60").args(["check", s(&example("supply-run.geojson"))]).output().expect("run");
    let table = text(&out.stdout);
    for header in ["RMS dev.", "peak", "energy", "corridor", "verdict"] {
        assert!(table.contains(header), "{header} missing: {table}");
    }
    assert!(widest(table.split("\n  leg").next().unwrap_or("")) > 60);
    assert!(!table.contains("--wide shows all"));
}

/// On a terminal the table fits its width, leaving out low-priority columns first, and says
/// which; --wide shows them all. Runs under `script` (util-linux) for a terminal, and is
/// skipped with a message where that is not installed.
#[test]
fn terminal_tables_fit_the_width_and_wide_shows_all() {
    if !Path::new("/usr/bin/script").exists() {
        eprintln!("skipping: /usr/bin/script (util-linux) is not installed");
        return;
    }
    let bin_path = env!("CARGO_BIN_EXE_skidroute");
    let route = example("supply-run.geojson");
    let in_terminal = |extra: &str| {
        let cmd = format!("COLUMNS=100 NO_COLOR=1 '{bin_path}' check {extra} '{}'", s(&route));
        let out =
            std::process::Command::new("/usr/bin/script").args(["-qec", &cmd, "/dev/null"]).output().expect("script");
        text(&out.stdout).replace('\r', "")
    };
    let narrow = in_terminal("");
    let table: Vec<&str> = narrow.lines().filter(|l| l.starts_with(['┌', '│', '╞', '├', '└', '╭'])).collect();
    assert!(!table.is_empty(), "{narrow}");
    assert!(table.iter().all(|l| l.chars().count() <= 100), "{narrow}");
    assert!(narrow.contains("left out to fit the terminal: ") && narrow.contains("--wide shows all"), "{narrow}");
    assert!(narrow.contains("verdict") && narrow.contains("max dev."), "{narrow}");
    assert!(table.iter().all(|l| !l.contains("thrust")), "the lowest-priority column goes first: {narrow}");
    assert!(narrow.contains("left out to fit the terminal: ") && narrow.contains("peak thrust N"), "{narrow}");
    let wide = in_terminal("--wide");
    assert!(wide.contains("thrust N") && wide.contains("RMS dev.") && !wide.contains("left out"), "{wide}");
}

/// `check FOLDER --format jsonl` alone checks the routes a bounded number at a time; its lines
/// are the ones a run holding every route gives (the same command with `--report`, which keeps
/// them all), in input order, with a bad file's error line in its place under `--keep-going`.
#[test]
fn json_lines_of_a_large_folder_are_streamed_in_input_order() {
    let dir = tempfile::tempdir().expect("temp dir");
    let routes = dir.path().join("routes");
    std::fs::create_dir(&routes).expect("mkdir");
    for i in 0..150 {
        // 20 m routes, some with a corner too sharp for deep snow, so verdicts differ.
        let corner = if i % 7 == 0 { "20,10" } else { "30,0" };
        let text = format!(
            "x_m,y_m,terrain,speed_mps\n0,0,deep-snow,1.2\n10,{},deep-snow,1.2\n{corner},deep-snow,1.2\n",
            i % 3
        );
        std::fs::write(routes.join(format!("r{i:03}.csv")), text).expect("write route");
    }
    std::fs::write(routes.join("r070.csv"), "x_m,y_m,terrain\n0,0,moon-dust\n5,0,moon-dust\n").expect("write bad");
    let report = dir.path().join("all.json");
    let streamed = run(&["check", s(&routes), "--format", "jsonl", "--keep-going"]);
    let held = run(&["check", s(&routes), "--format", "jsonl", "--keep-going", "--report", s(&report)]);
    assert_eq!(streamed.status.code(), Some(2));
    assert_eq!(held.status.code(), Some(2));
    let lines = text(&streamed.stdout);
    assert_eq!(lines.lines().count(), 150);
    assert!(lines.lines().nth(70).is_some_and(|l| l.contains("skidroute-check-error/1") && l.contains("r070.csv")));
    assert!(lines.lines().nth(71).is_some_and(|l| l.contains("r071")));
    assert_eq!(lines, text(&held.stdout));
    assert!(lines.contains("\"verdict\":\"fail\"") && lines.contains("\"verdict\":\"pass\""));
}

/// On a narrow terminal the measure `compare` ranks by stays in the table, whatever its place
/// among the other columns (runs under `script`, skipped where it is not installed).
#[test]
fn compare_keeps_the_ranked_measure_on_a_narrow_terminal() {
    if !Path::new("/usr/bin/script").exists() {
        eprintln!("skipping: /usr/bin/script (util-linux) is not installed");
        return;
    }
    let bin_path = env!("CARGO_BIN_EXE_skidroute");
    let route = example("store-alternatives.geojson");
    for (by, header) in [("drift", "drift CEP95"), ("deviation", "max dev."), ("energy", "energy")] {
        let cmd = format!("COLUMNS=50 NO_COLOR=1 '{bin_path}' compare --by {by} '{}'", s(&route));
        let out =
            std::process::Command::new("/usr/bin/script").args(["-qec", &cmd, "/dev/null"]).output().expect("script");
        let shown = text(&out.stdout).replace('\r', "");
        let table: Vec<&str> = shown.lines().filter(|l| l.starts_with(['┌', '│', '╞', '├', '└', '╭'])).collect();
        assert!(shown.contains("left out to fit the terminal"), "{shown}");
        assert!(table.iter().any(|l| l.contains(header)), "--by {by}: {shown}");
    }
}

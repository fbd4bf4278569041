//! End-to-end tests of `skidroute compare` and of batch screening with `check` (folders,
//! `--format jsonl`, `--html`): the real binary in a temporary folder.

mod common;

use common::*;

use std::path::Path;
use std::process::Command;

/// A GeoJSON file with one LineString leg given in local metres about an invented origin.
fn geojson_route(origin_lon_lat: (f64, f64), points_m: &[[f64; 2]], terrain: &str) -> String {
    let (lon0, lat0) = origin_lon_lat;
    let m_per_deg_lat = 111_320.0;
    let m_per_deg_lon = m_per_deg_lat * lat0.to_radians().cos();
    let coords: Vec<String> = points_m
        .iter()
        .map(|p| format!("[{:.9}, {:.9}]", lon0 + p[0] / m_per_deg_lon, lat0 + p[1] / m_per_deg_lat))
        .collect();
    format!(
        r#"{{"type": "FeatureCollection", "features": [{{"type": "Feature", "properties": {{"terrain": "{terrain}", "speed_mps": 1.2}},
           "geometry": {{"type": "LineString", "coordinates": [{}]}}}}]}}"#,
        coords.join(", ")
    )
}

#[test]
fn example_alternatives_rank_the_passing_route_first_with_the_designed_json() {
    let dir = tempfile::tempdir().expect("tempdir");
    let plot = dir.path().join("overlay.svg");
    let out = run(&["compare", "--json", "--plot", s(&plot), s(&example("store-alternatives.geojson"))]);
    assert_eq!(out.status.code(), Some(0), "{}", text(&out.stderr));
    let v: serde_json::Value = serde_json::from_slice(&out.stdout).expect("json");
    assert_eq!(v["format"], "skidroute-compare/1");
    assert_eq!(v["ranked_by"], "energy");
    let ranking = v["ranking"].as_array().expect("ranking");
    assert_eq!(ranking.len(), 2);
    for key in ["route", "verdict", "length_m", "time_s", "energy_wh", "max_deviation_m", "failing_legs"] {
        assert!(ranking[0].get(key).is_some(), "missing {key}");
    }
    assert_eq!(ranking[0]["verdict"], "pass");
    assert_eq!(ranking[1]["verdict"], "fail");
    assert!(!ranking[1]["failing_legs"].as_array().expect("legs").is_empty());
    let svg = std::fs::read_to_string(&plot).expect("plot written");
    assert!(svg.contains("<svg") && svg.contains("ridge") && svg.contains("direct"));
}

#[test]
fn alternatives_from_separate_geojson_files_share_one_plot_frame() {
    let dir = tempfile::tempdir().expect("tempdir");
    let a = dir.path().join("hairpin.geojson");
    let b = dir.path().join("sweep.geojson");
    // The shorter alternative turns back sharply on deep snow; the longer one sweeps round.
    std::fs::write(&a, geojson_route((10.0, 50.0), &[[0.0, 0.0], [20.0, 0.0], [5.0, 8.0]], "deep-snow")).expect("w");
    let sweep: Vec<[f64; 2]> = std::iter::once([0.0, 0.0])
        .chain((0..=400).map(|k| {
            let t = std::f64::consts::PI * f64::from(k) / 400.0;
            [20.0 + 25.0 * t.sin(), 25.0 - 25.0 * t.cos()]
        }))
        .chain(std::iter::once([5.0, 50.0]))
        .collect();
    // The second file starts 3 m east of the first: its own projection origin differs.
    let shifted: Vec<[f64; 2]> = sweep.iter().map(|p| [p[0] - 3.0, p[1]]).collect();
    let lon_shift = 3.0 / (111_320.0 * 50.0_f64.to_radians().cos());
    std::fs::write(&b, geojson_route((10.0 + lon_shift, 50.0), &shifted, "deep-snow")).expect("w");
    let png = dir.path().join("overlay.png");
    let html = dir.path().join("compare.html");
    let out = run(&["compare", "--by", "time", "--plot", s(&png), "--html", s(&html), s(&a), s(&b)]);
    let stdout = text(&out.stdout);
    assert_eq!(out.status.code(), Some(0), "{stdout}{}", text(&out.stderr));
    let first_row = stdout.lines().find(|l| l.contains("│ 1")).expect("rank 1 row");
    assert!(first_row.contains("sweep"), "{stdout}");
    assert!(std::fs::metadata(&png).expect("png").len() > 10_000);
    assert!(std::fs::read_to_string(&html).expect("html").contains("ranking"));
}

#[test]
fn drift_ranking_is_seeded_and_no_passing_alternative_exits_one() {
    let alternatives = example("store-alternatives.geojson");
    let args = ["compare", "--by", "drift", "--seed", "3", "--json", s(&alternatives)];
    let out = run(&args);
    assert_eq!(out.status.code(), Some(0), "{}", text(&out.stderr));
    let v: serde_json::Value = serde_json::from_slice(&out.stdout).expect("json");
    assert_eq!((v["ranked_on"].as_str(), v["seed"].as_u64()), (Some("drift"), Some(3)));
    assert_eq!(v["ranking"][0]["route"], "ridge");
    assert!(v["ranking"][0]["drift_cep95_m"].as_f64().expect("cep95") > 0.0);
    assert_eq!(run(&args).stdout, out.stdout, "the same seed gives the same document");
    let dir = tempfile::tempdir().expect("tempdir");
    let bad = dir.path().join("bad.csv");
    std::fs::write(&bad, "x_m,y_m,terrain\n0,0,deep-snow\n20,0,deep-snow\n20,0.5,deep-snow\n0,1,deep-snow\n")
        .expect("w");
    let out = run(&["compare", s(&bad)]);
    assert_eq!(out.status.code(), Some(1), "{}", text(&out.stdout));
    assert!(text(&out.stdout).contains("no alternative passes"));
}

#[test]
fn check_screens_a_folder_as_json_lines_in_name_order() {
    let dir = tempfile::tempdir().expect("tempdir");
    for (i, name) in ["b.csv", "a.csv", "c.csv"].iter().enumerate() {
        let body = format!("x_m,y_m,terrain\n0,0,asphalt\n{},0,asphalt\n", 10 + i);
        std::fs::write(dir.path().join(name), body).expect("w");
    }
    std::fs::write(dir.path().join("readme.txt"), "skipped").expect("w");
    let out = run(&["check", "--format", "jsonl", s(dir.path())]);
    assert_eq!(out.status.code(), Some(0), "{}", text(&out.stderr));
    let lines: Vec<serde_json::Value> =
        text(&out.stdout).lines().map(|l| serde_json::from_str(l).expect("one object per line")).collect();
    let names: Vec<&str> = lines.iter().map(|v| v["route"].as_str().expect("route")).collect();
    assert_eq!(names, ["a", "b", "c"]);
    assert!(lines.iter().all(|v| v["format"] == "skidroute-check-route/1" && v["verdict"] == "pass"));
    // A bad file in the folder is exit 2 naming the file and line.
    std::fs::write(dir.path().join("d.csv"), "x_m,y_m,terrain\n0,0,asphalt\nfoo,0,asphalt\n").expect("w");
    let out = run(&["check", "--format", "jsonl", s(dir.path())]);
    assert_eq!(out.status.code(), Some(2));
    let err = text(&out.stderr);
    assert!(err.contains("d.csv") && err.contains("line 3"), "{err}");
}

/// The HTML report renders in a headless browser (Debian's chromium) without network access.
/// Skipped, with a message, where no browser is installed.
#[test]
fn html_report_renders_headless() {
    let chromium = Path::new("/usr/bin/chromium");
    let dir = tempfile::tempdir().expect("tempdir");
    let html = dir.path().join("report.html");
    let out = run(&["check", "--quiet", "--html", s(&html), s(&example("supply-run.geojson"))]);
    assert_eq!(out.status.code(), Some(1), "{}", text(&out.stderr));
    let page = std::fs::read_to_string(&html).expect("html written");
    assert!(
        page.contains("<svg") && page.contains("Caution.") && page.contains("through the snowbank to the weather mast")
    );
    assert!(!page.contains("<script") && !page.contains("<link") && !page.contains("src=\"http"));
    if !chromium.exists() {
        eprintln!("skipping the headless render: /usr/bin/chromium is not installed (apt-get install chromium)");
        return;
    }
    let shot = dir.path().join("shot.png");
    let profile = dir.path().join("chromium-profile");
    let status = Command::new(chromium)
        .args([
            "--headless",
            "--no-sandbox",
            "--disable-gpu",
            "--disable-quic",
            "--no-first-run",
            "--disable-background-networking",
            "--disable-component-update",
            "--disable-sync",
            &format!("--user-data-dir={}", s(&profile)),
            &format!("--screenshot={}", s(&shot)),
            "--window-size=1400,2000",
            &format!("file://{}", s(&html)),
        ])
        .output()
        .expect("run chromium");
    assert!(shot.exists(), "no screenshot: {}", text(&status.stderr));
    // A blank 1400x2000 page compresses to a few kB; text, tables and the plot make it far larger.
    let bytes = std::fs::metadata(&shot).expect("screenshot").len();
    assert!(bytes > 40_000, "screenshot looks blank ({bytes} bytes)");
    if let Ok(keep) = std::env::var("SKIDROUTE_KEEP_SCREENSHOT") {
        let _ = std::fs::copy(&shot, keep);
    }
}

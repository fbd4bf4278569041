//! End-to-end tests of the plot and trace outputs sized by need: the check plot of a failing
//! route carries a zoom of the failing spot, a crawl route plots small, and `--trace-every`
//! thins the trace but keeps every leg's first and last step.

mod common;

use common::{example, run, s, text};

/// A route that crawls at 0.05 m/s: 60 m in two legs (about 24 000 control steps).
fn crawl_csv() -> String {
    let mut out = String::from("x_m,y_m,z_m,terrain,speed_mps\n");
    for i in 0..=40 {
        out += &format!("{i}.0,0.0,0.0,asphalt,0.05\n");
    }
    for i in 1..=20 {
        out += &format!("40.0,{i}.0,0.0,gravel,0.05\n");
    }
    out
}

/// The data rows of a trace CSV as (leg, t_s) pairs.
fn rows(csv: &str) -> Vec<(u32, f64)> {
    csv.lines()
        .skip(1)
        .map(|l| {
            let f: Vec<&str> = l.split(',').collect();
            (f[4].parse().expect("leg"), f[0].parse().expect("t_s"))
        })
        .collect()
}

#[test]
fn the_plot_of_a_failing_route_zooms_on_the_failing_leg() {
    let dir = tempfile::tempdir().expect("tempdir");
    let svg = dir.path().join("plot.svg");
    let o = run(&["check", s(&example("supply-run.geojson")), "--plot", s(&svg), "-q"]);
    assert_eq!(o.status.code(), Some(1), "supply-run fails on leg 4: {}", text(&o.stderr));
    let svg = std::fs::read_to_string(&svg).expect("svg");
    // The zoom's title names its letter and the failing leg; the top view labels the frame.
    assert!(svg.contains("A: leg 4 FAIL, from"), "no zoom on leg 4");
    assert!(svg.contains(">\nA\n</text>") || svg.contains(">A</text>"), "the zoom frame is not lettered");
    assert!(svg.contains("turn too tight"), "the failing turn is not marked");
}

#[test]
fn a_crawl_route_plots_small_and_the_html_too() {
    let dir = tempfile::tempdir().expect("tempdir");
    let route = dir.path().join("crawl.csv");
    std::fs::write(&route, crawl_csv()).expect("route");
    let (svg, html) = (dir.path().join("crawl.svg"), dir.path().join("crawl.html"));
    let o = run(&["check", s(&route), "--plot", s(&svg), "--html", s(&html), "-q"]);
    assert!(matches!(o.status.code(), Some(0 | 1)), "{}", text(&o.stderr));
    let svg_bytes = std::fs::metadata(&svg).expect("svg").len();
    let html_bytes = std::fs::metadata(&html).expect("html").len();
    // A screen shows a few thousand points per series; 2 MB is far above what that needs.
    assert!(svg_bytes < 2_000_000, "svg {svg_bytes} bytes");
    assert!(html_bytes < 2_000_000, "html {html_bytes} bytes");
}

#[test]
fn trace_every_writes_about_a_tenth_and_keeps_each_legs_first_and_last_step() {
    let dir = tempfile::tempdir().expect("tempdir");
    let route = dir.path().join("crawl.csv");
    std::fs::write(&route, crawl_csv()).expect("route");
    let (full, thin) = (dir.path().join("full.csv"), dir.path().join("thin.csv"));
    let o = run(&["check", s(&route), "--trace", s(&full), "-q"]);
    assert!(matches!(o.status.code(), Some(0 | 1)), "{}", text(&o.stderr));
    let o = run(&["check", s(&route), "--trace", s(&thin), "--trace-every", "10", "-q"]);
    assert!(matches!(o.status.code(), Some(0 | 1)), "{}", text(&o.stderr));
    let full = rows(&std::fs::read_to_string(&full).expect("full"));
    let thin = rows(&std::fs::read_to_string(&thin).expect("thin"));
    assert!(full.len() > 10_000, "{} rows", full.len());
    let tenth = full.len() as f64 / 10.0;
    assert!((thin.len() as f64 - tenth).abs() < 0.02 * tenth + 50.0, "{} rows of {}", thin.len(), full.len());
    // Each leg's first and last row of the full trace are in the thin one, and the thin rows
    // are a subsequence of the full ones (same times, same order).
    for leg in [1, 2] {
        let of_leg: Vec<&(u32, f64)> = full.iter().filter(|r| r.0 == leg).collect();
        let (first, last) = (of_leg.first().expect("leg rows"), of_leg.last().expect("leg rows"));
        for want in [first, last] {
            assert!(thin.iter().any(|r| r.0 == want.0 && (r.1 - want.1).abs() < 1e-9), "leg {leg}: {want:?} missing");
        }
    }
    assert!(thin.windows(2).all(|w| w[0].1 < w[1].1));
}

#[test]
fn trace_every_needs_a_trace_and_a_positive_count() {
    let route = example("yard-lap.csv");
    let o = run(&["check", s(&route), "--trace-every", "10", "-q"]);
    assert_eq!(o.status.code(), Some(2), "--trace-every without --trace");
    let dir = tempfile::tempdir().expect("tempdir");
    let t = dir.path().join("t.csv");
    let o = run(&["check", s(&route), "--trace", s(&t), "--trace-every", "0", "-q"]);
    assert_eq!(o.status.code(), Some(2), "--trace-every 0");
}

#[test]
fn a_speed_change_caution_is_marked_where_the_speed_changes_not_at_a_turn() {
    // The demo vehicle with a 400 N thrust rating per side: starting up to 1.2 m/s on slush
    // needs more (m a / 2 plus rolling resistance), a caution at 0 m. The route is 30 m straight,
    // then a gentle 300 m radius arc well within what slush allows, so no turn reason exists.
    let dir = tempfile::tempdir().expect("tempdir");
    let demo = std::fs::read_to_string(concat!(env!("CARGO_MANIFEST_DIR"), "/src/vehicle/demo.toml")).expect("demo");
    assert!(demo.contains("max_side_thrust_n = 2500.0"), "the demo profile's rating moved");
    let weak = dir.path().join("weak.toml");
    std::fs::write(&weak, demo.replace("max_side_thrust_n = 2500.0", "max_side_thrust_n = 400.0")).expect("profile");
    let mut csv = String::from("x_m,y_m,z_m,terrain,speed_mps\n");
    for i in 0..=30 {
        csv += &format!("{i}.0,0.0,0.0,slush,1.2\n");
    }
    for k in 1..=40 {
        let a = f64::from(k) / 300.0;
        csv += &format!("{:.4},{:.4},0.0,slush,1.2\n", 30.0 + 300.0 * a.sin(), 300.0 * (1.0 - a.cos()));
    }
    let route = dir.path().join("weak.csv");
    std::fs::write(&route, csv).expect("route");
    let (svg, report) = (dir.path().join("weak.svg"), dir.path().join("weak.json"));
    let o = run(&["check", s(&route), "--vehicle", s(&weak), "--plot", s(&svg), "--report", s(&report), "-q"]);
    assert_eq!(o.status.code(), Some(0), "a caution only: {}", text(&o.stderr));
    let json = std::fs::read_to_string(&report).expect("report");
    assert!(json.contains("changing speed needs up to"), "no speed-change caution: {json}");
    assert!(!json.contains("turn radius") && !json.contains("turn needs radius"), "a turn reason: {json}");
    let svg = std::fs::read_to_string(&svg).expect("svg");
    assert!(svg.contains("speed change beyond traction"), "the speed change is not marked");
    assert!(!svg.contains("turn too tight") && !svg.contains("tight turn"), "a turn is marked");
}

#[test]
fn the_compare_plot_zooms_on_the_failing_alternative() {
    // store-alternatives.geojson: 'ridge' passes, 'direct' fails at its corners (legs 1 and 2).
    let dir = tempfile::tempdir().expect("tempdir");
    let svg = dir.path().join("overlay.svg");
    let o = run(&["compare", s(&example("store-alternatives.geojson")), "--plot", s(&svg), "-q"]);
    assert!(matches!(o.status.code(), Some(0 | 1)), "{}", text(&o.stderr));
    // SVG text escapes the quotes.
    let svg = std::fs::read_to_string(&svg).expect("svg").replace("&apos;", "'");
    assert!(svg.contains("'direct' A: leg 1 FAIL, from"), "no zoom on the failing alternative");
    assert!(!svg.contains("'ridge' A:") && !svg.contains("'ridge' B:"), "a zoom on the passing alternative");
}

#[test]
fn the_html_table_shows_margins_and_the_cross_slope_when_there_is_one() {
    let dir = tempfile::tempdir().expect("tempdir");
    let (with, without) = (dir.path().join("with.html"), dir.path().join("without.html"));
    let route = example("hillside-traverse.geojson");
    let (map, dem) = (example("hillside-map.geojson"), example("hillside-dem.tif"));
    let o = run(&["check", s(&route), "--terrain-map", s(&map), "--elevation", s(&dem), "--html", s(&with), "-q"]);
    assert_eq!(o.status.code(), Some(1), "the drift leg fails: {}", text(&o.stderr));
    // Without the raster the route is level (the map still gives its terrain).
    let o = run(&["check", s(&route), "--terrain-map", s(&map), "--html", s(&without), "-q"]);
    assert!(matches!(o.status.code(), Some(0 | 1)), "{}", text(&o.stderr));
    let with = std::fs::read_to_string(&with).expect("html");
    let without = std::fs::read_to_string(&without).expect("html");
    for head in ["<th>traction needs/has</th>", "<th>traction-limited s</th>", "<th>passes up to m/s</th>"] {
        assert!(with.contains(head) && without.contains(head), "{head} missing");
    }
    assert!(with.contains("<th>cross slope %</th>"), "no cross slope column on the raster");
    assert!(!without.contains("<th>cross slope %</th>"), "a cross slope column without a raster");
    // The fail on deep snow: 27 % across where 25 % holds (example-routes/README.md).
    assert!(with.contains("<td class=n>27</td>"), "the 27 % cross slope is not shown");
}

#[test]
fn a_long_vehicle_name_wraps_in_the_plot_title_instead_of_running_off() {
    let dir = tempfile::tempdir().expect("tempdir");
    let demo = std::fs::read_to_string(concat!(env!("CARGO_MANIFEST_DIR"), "/src/vehicle/demo.toml")).expect("demo");
    let long = "six-wheel demonstration carrier with the long-range battery pack, winter tracks and the spring trial \
                calibration from the north yard";
    let profile = dir.path().join("long.toml");
    let named: Vec<String> = demo
        .lines()
        .map(|l| if l.starts_with("name = ") { format!("name = \"{long}\"") } else { l.to_string() })
        .collect();
    assert!(named.iter().any(|l| l.contains(long)), "the demo profile has no name line");
    let named = named.join("\n");
    std::fs::write(&profile, named).expect("profile");
    let svg = dir.path().join("long.svg");
    let o = run(&["check", s(&example("yard-lap.csv")), "--vehicle", s(&profile), "--plot", s(&svg), "-q"]);
    assert_eq!(o.status.code(), Some(0), "{}", text(&o.stderr));
    let svg = std::fs::read_to_string(&svg).expect("svg").replace("&apos;", "'");
    // The title's text elements: the first starts with the route, a later one ends the name.
    let texts: Vec<&str> = svg.split("<text").skip(1).filter_map(|t| t.split('>').nth(1)).collect();
    let first = texts.iter().position(|t| t.contains("route 'yard-lap': PASS")).expect("title");
    assert!(!texts[first].contains("north yard"), "the whole title on one line: {}", texts[first]);
    assert!(
        texts[first + 1..].iter().any(|t| t.trim_end_matches("</text").trim().ends_with("north yard)")),
        "name cut"
    );
}

#[test]
fn rank_numbers_at_a_shared_end_point_do_not_overlap() {
    // Both alternatives of store-alternatives.geojson end at the same point.
    let dir = tempfile::tempdir().expect("tempdir");
    let svg = dir.path().join("overlay.svg");
    let o = run(&["compare", s(&example("store-alternatives.geojson")), "--plot", s(&svg), "-q"]);
    assert!(matches!(o.status.code(), Some(0 | 1)), "{}", text(&o.stderr));
    let svg = std::fs::read_to_string(&svg).expect("svg");
    // Each text element as (attributes, content); the rank numbers are the texts "1" and "2" in
    // the largest label font drawn on the map (tick labels are smaller).
    let attr = |a: &str, name: &str| -> Option<f64> {
        let rest = a.split(&format!(" {name}=\"")).nth(1)?;
        rest.split('"').next()?.parse().ok()
    };
    let texts: Vec<(f64, f64, f64, String)> = svg
        .split("<text")
        .skip(1)
        .filter_map(|t| {
            let (a, rest) = t.split_once('>')?;
            let content = rest.split("</text").next()?.trim().to_string();
            Some((attr(a, "x")?, attr(a, "y")?, attr(a, "font-size")?, content))
        })
        .collect();
    let rank =
        |n: &str| texts.iter().filter(|t| t.3 == n).max_by(|a, b| a.2.total_cmp(&b.2)).cloned().expect("rank label");
    let (one, two) = (rank("1"), rank("2"));
    // A digit of DejaVu Sans is about 0.64 em wide and 1 em tall (common practice, no source).
    let (w, h) = (0.64 * one.2, one.2);
    let apart = (one.0 - two.0).abs() >= w || (one.1 - two.1).abs() >= h;
    assert!(apart, "rank labels overlap: {one:?} and {two:?}");
}

#[test]
fn leg_labels_on_many_short_failing_legs_do_not_overlap() {
    // 24 legs of 6 m in a zigzag of right-angle-ish corners, deep snow and slush by turns, at
    // 1.5 m/s: every leg fails, and their labels crowd the top view.
    let mut csv = String::from("x_m,y_m,z_m,terrain,speed_mps\n");
    let (mut x, mut y) = (0.0, 0.0);
    for k in 0..24 {
        let terrain = if k % 2 == 0 { "deep-snow" } else { "slush" };
        for _ in 0..3 {
            csv += &format!("{x:.1},{y:.1},0.0,{terrain},1.5\n");
            x += 2.0;
        }
        y += if k % 2 == 0 { 3.0 } else { -3.0 };
    }
    let dir = tempfile::tempdir().expect("tempdir");
    let route = dir.path().join("short.csv");
    std::fs::write(&route, csv).expect("route");
    let svg = dir.path().join("short.svg");
    let o = run(&["check", s(&route), "--plot", s(&svg), "-q"]);
    assert_eq!(o.status.code(), Some(1), "{}", text(&o.stderr));
    let svg = std::fs::read_to_string(&svg).expect("svg");
    let attr = |a: &str, name: &str| -> Option<f64> {
        a.split(&format!(" {name}=\"")).nth(1)?.split('"').next()?.parse().ok()
    };
    // Boxes of the "leg N FAIL" labels (drawn from their top left corner: text-anchor start,
    // dy 0.76em). Widths are underestimated at 0.5 em a character, heights at 0.8 em (DejaVu
    // Sans averages about 0.6 em; common practice, no source), so a reported overlap is real.
    let boxes: Vec<(f64, f64, f64, f64, String)> = svg
        .split("<text")
        .skip(1)
        .filter_map(|t| {
            let (a, rest) = t.split_once('>')?;
            let content = rest.split("</text").next()?.trim();
            let is_leg =
                content.starts_with("leg ") && content.ends_with(" FAIL") && a.contains("text-anchor=\"start\"");
            let (x, y, fs) = (attr(a, "x")?, attr(a, "y")?, attr(a, "font-size")?);
            is_leg.then(|| (x, y, x + 0.5 * fs * content.len() as f64, y + 0.8 * fs, content.to_string()))
        })
        .collect();
    assert!(boxes.len() >= 10, "only {} leg labels drawn", boxes.len());
    for (i, a) in boxes.iter().enumerate() {
        for b in &boxes[i + 1..] {
            let overlap = a.0 < b.2 && b.0 < a.2 && a.1 < b.3 && b.1 < a.3;
            assert!(!overlap, "{a:?} overlaps {b:?}");
        }
    }
}

//! End-to-end tests of `skidroute relax`: the real binary in a temporary folder, both input
//! formats, exit codes, kept properties and refused outputs.

mod common;

use common::*;

/// A CSV route with two right-angle corners on deep snow, with an extra `leg` column.
const SHARP_CSV: &str = "x_m,y_m,terrain,leg,speed_mps\n\
0,0,deep-snow,out,1.0\n\
30,0,deep-snow,out,1.0\n\
30,30,deep-snow,up,1.0\n\
60,30,deep-snow,up,1.0\n";

#[test]
fn relaxed_csv_keeps_columns_and_legs_and_passes_the_check() {
    let dir = tempfile::tempdir().expect("tempdir");
    let input = dir.path().join("sharp.csv");
    let output = dir.path().join("relaxed.csv");
    std::fs::write(&input, SHARP_CSV).expect("w");
    assert_eq!(run(&["check", "--quiet", s(&input)]).status.code(), Some(1), "the sharp route must fail first");
    let out = run(&["relax", s(&input), "--out", s(&output)]);
    let stdout = text(&out.stdout);
    assert_eq!(out.status.code(), Some(0), "{stdout}{}", text(&out.stderr));
    assert!(stdout.contains("radius") && stdout.contains("not checked for obstacles"), "{stdout}");
    let written = std::fs::read_to_string(&output).expect("output");
    assert!(written.starts_with("x_m,y_m,terrain,leg,speed_mps\n"), "{written}");
    assert!(written.lines().count() > 20, "the fillets are sampled densely");
    assert!(written.lines().skip(1).all(|l| l.contains(",deep-snow,")));
    assert!(written.contains(",out,") && written.contains(",up,"));
    let check = run(&["check", s(&output)]);
    assert_ne!(check.status.code(), Some(1), "{}", text(&check.stdout));
    assert_eq!(check.status.code(), Some(0));
}

#[test]
fn relaxed_geojson_keeps_foreign_properties_and_endpoints() {
    let dir = tempfile::tempdir().expect("tempdir");
    let input = dir.path().join("sharp.geojson");
    let output = dir.path().join("relaxed.geojson");
    let doc = r#"{"type": "FeatureCollection", "planner": {"version": 3}, "features": [
      {"type": "Feature", "properties": {"terrain": "deep-snow", "name": "bend", "planner_id": "p-17", "speed_mps": 0.8},
       "geometry": {"type": "LineString", "coordinates": [[10.0, 50.0], [10.0004, 50.0], [10.0004, 50.0006]]}}]}"#;
    std::fs::write(&input, doc).expect("w");
    let json = run(&["relax", "--json", s(&input), "--out", s(&output)]);
    assert_eq!(json.status.code(), Some(0), "{}{}", text(&json.stdout), text(&json.stderr));
    let report: serde_json::Value = serde_json::from_slice(&json.stdout).expect("json");
    let change = &report["routes"][0]["changes"][0];
    assert!(change["new_radius_m"].as_f64().expect("r") > change["old_radius_m"].as_f64().expect("r"));
    assert!(change["max_displacement_m"].as_f64().expect("d") > 0.0);
    let v: serde_json::Value = serde_json::from_str(&std::fs::read_to_string(&output).expect("out")).expect("json");
    assert_eq!(v["planner"]["version"], 3);
    let f = &v["features"][0];
    assert_eq!(f["properties"]["planner_id"], "p-17");
    assert_eq!(f["properties"]["name"], "bend");
    let coords = f["geometry"]["coordinates"].as_array().expect("coords");
    assert!(coords.len() > 20);
    let close = |a: &serde_json::Value, lon: f64, lat: f64| {
        (a[0].as_f64().expect("lon") - lon).abs() < 1e-8 && (a[1].as_f64().expect("lat") - lat).abs() < 1e-8
    };
    assert!(close(&coords[0], 10.0, 50.0));
    assert!(close(coords.last().expect("last"), 10.0004, 50.0006));
}

#[test]
fn relax_refuses_to_overwrite_its_input_or_change_format() {
    let dir = tempfile::tempdir().expect("tempdir");
    let input = dir.path().join("sharp.csv");
    std::fs::write(&input, SHARP_CSV).expect("w");
    let out = run(&["relax", s(&input), "--out", s(&input)]);
    assert_eq!(out.status.code(), Some(2));
    assert!(text(&out.stderr).contains("refusing to overwrite"));
    assert_eq!(std::fs::read_to_string(&input).expect("input"), SHARP_CSV);
    let out = run(&["relax", s(&input), "--out", s(&dir.path().join("x.geojson"))]);
    assert_eq!(out.status.code(), Some(2));
    let bad = dir.path().join("bad.csv");
    std::fs::write(&bad, "x_m,y_m,terrain\n0,0,lava\n5,0,lava\n").expect("w");
    let out = run(&["relax", s(&bad), "--out", s(&dir.path().join("o.csv"))]);
    assert_eq!(out.status.code(), Some(2));
    assert!(text(&out.stderr).contains("bad.csv"), "{}", text(&out.stderr));
}

/// The direct route of the example file has two corners far enough apart for a fillet each;
/// each change reports its own displacement. The first is a sharp 60 deg vertex:
/// r (1/cos(theta/2) - 1) from the vertex to the arc (plane geometry). The second was already rounded a little
/// (its old radius), so the plan moves less than from a sharp vertex, and at least what two
/// concentric-bisector arcs of radius r and r_old are apart, (r - r_old) (1/cos(theta/2) - 1).
#[test]
fn each_change_reports_its_own_displacement() {
    let dir = tempfile::tempdir().expect("tempdir");
    let output = dir.path().join("relaxed.geojson");
    let out = run(&["relax", "--json", s(&example("store-alternatives.geojson")), "-o", s(&output)]);
    assert!(matches!(out.status.code(), Some(0 | 1)), "{}", text(&out.stderr));
    let report: serde_json::Value = serde_json::from_slice(&out.stdout).expect("json");
    let changes = report["routes"][0]["changes"].as_array().expect("changes");
    assert_eq!(changes.len(), 2, "{changes:#?}");
    let field = |c: &serde_json::Value, k: &str| c[k].as_f64().expect(k);
    let secant_minus_one = |c: &serde_json::Value| 1.0 / (0.5 * field(c, "turn_deg").abs().to_radians()).cos() - 1.0;
    let (first, second) = (&changes[0], &changes[1]);
    let sharp = field(first, "new_radius_m") * secant_minus_one(first);
    assert!((field(first, "max_displacement_m") - sharp).abs() < 0.005, "{first:#?}");
    let d2 = field(second, "max_displacement_m");
    let upper = field(second, "new_radius_m") * secant_minus_one(second);
    let lower = (field(second, "new_radius_m") - field(second, "old_radius_m")) * secant_minus_one(second);
    assert!(d2 <= upper + 0.005 && d2 >= lower - 0.05, "{d2} outside [{lower}, {upper}]: {second:#?}");
    assert!((d2 - field(first, "max_displacement_m")).abs() > 1.0, "the second reports its own, not the first's");
}

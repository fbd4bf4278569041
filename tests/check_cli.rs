//! End-to-end tests of `skidroute check` and `skidroute profile`: the real binary in a
//! temporary folder, exit codes, outputs, and one test per malformed input class.

mod common;

use common::*;

#[test]
fn demo_route_prints_table_totals_caution_and_demo_notice() {
    let out = run(&["check", example("supply-run.geojson").to_str().unwrap()]);
    let stdout = text(&out.stdout);
    assert!(stdout.contains("built-in demo profile"), "{stdout}");
    for col in ["terrain", "tightest", "required", "achievable", "max dev.", "RMS dev.", "corridor", "verdict"] {
        assert!(stdout.contains(col), "missing column {col}");
    }
    assert!(stdout.contains("total:"));
    assert!(stdout.contains("caution: Predictions come from a model calibrated on past drives"));
    // The deep-snow snowbank leg has a corner tighter than the demo carrier can turn there.
    assert!(stdout.contains("FAIL"));
    assert_eq!(out.status.code(), Some(1));
}

#[test]
fn passing_route_exits_zero_and_strict_turns_cautions_into_failures() {
    let out = run(&["check", example("yard-lap.csv").to_str().unwrap()]);
    assert_eq!(out.status.code(), Some(0), "{}", text(&out.stdout));
    let json: serde_json::Value =
        serde_json::from_slice(&run(&["check", "--json", example("yard-lap.csv").to_str().unwrap()]).stdout)
            .expect("json");
    let verdict = json["verdict"].as_str().expect("verdict");
    let strict = run(&["check", "--strict", "--quiet", example("yard-lap.csv").to_str().unwrap()]);
    let expected = if verdict == "pass" { 0 } else { 1 };
    assert_eq!(strict.status.code(), Some(expected));
    assert!(strict.stdout.is_empty(), "--quiet printed something");
}

#[test]
fn json_document_has_the_designed_keys() {
    let out = run(&["check", "--json", example("store-alternatives.geojson").to_str().unwrap()]);
    let v: serde_json::Value = serde_json::from_slice(&out.stdout).expect("valid json");
    assert_eq!(v["format"], "skidroute-check/1");
    assert_eq!(v["demo_profile"], true);
    assert!(v["vehicle"].is_string());
    let routes = v["routes"].as_array().expect("routes");
    assert_eq!(routes.len(), 2, "two route groups in one file");
    for r in routes {
        for k in ["route", "verdict", "length_m", "time_s", "max_deviation_m", "legs"] {
            assert!(!r[k].is_null(), "route key {k}");
        }
        for leg in r["legs"].as_array().expect("legs") {
            for k in [
                "index",
                "terrain",
                "length_m",
                "speed_mps",
                "required_curvature_per_m",
                "max_deviation_m",
                "rms_deviation_m",
                "end_deviation_m",
                "time_s",
                "verdict",
                "reasons",
            ] {
                assert!(!leg[k].is_null(), "leg key {k}");
            }
            let verdict = leg["verdict"].as_str().expect("verdict");
            assert!(["pass", "caution", "fail"].contains(&verdict));
            assert_eq!(verdict == "pass", leg["reasons"].as_array().expect("reasons").is_empty());
        }
    }
}

#[test]
fn file_outputs_are_written_and_deterministic() {
    let dir = tempfile::tempdir().expect("tempdir");
    let route = example("supply-run.geojson");
    let mut firsts = Vec::new();
    for round in 0..2 {
        let p = |n: &str| dir.path().join(format!("{round}-{n}"));
        let out = run(&[
            "check",
            route.to_str().unwrap(),
            "--report",
            p("r.json").to_str().unwrap(),
            "--trace",
            p("t.csv").to_str().unwrap(),
            "--predicted",
            p("p.geojson").to_str().unwrap(),
            "--plot",
            p("plot.svg").to_str().unwrap(),
        ]);
        assert_eq!(out.status.code(), Some(1), "{}", text(&out.stderr));
        firsts
            .push([p("r.json"), p("t.csv"), p("p.geojson"), p("plot.svg")].map(|f| std::fs::read(f).expect("output")));
    }
    assert_eq!(firsts[0], firsts[1], "same inputs must give byte-identical outputs");
    let [_, trace, predicted, svg] = &firsts[0];
    let trace = text(trace);
    assert!(trace.starts_with("t_s,x_m,y_m,yaw_rad,leg,deviation_m,left_mps,right_mps"));
    assert!(trace.lines().count() > 100);
    let gj: serde_json::Value = serde_json::from_slice(predicted).expect("geojson");
    assert_eq!(gj["type"], "FeatureCollection");
    let first = &gj["features"][0]["geometry"]["coordinates"][0];
    // RFC 7946: [longitude, latitude]; the example lies near 22.8 E, 68.4 N.
    assert!((first[0].as_f64().unwrap() - 22.83).abs() < 0.05 && (first[1].as_f64().unwrap() - 68.41).abs() < 0.05);
    let svg = text(svg);
    assert!(svg.contains("<svg") && svg.contains("deviation (m)"), "plot text must be drawn");
    let left: Vec<_> = std::fs::read_dir(dir.path()).unwrap().filter_map(|e| e.ok()).collect();
    assert!(left.iter().all(|e| !e.file_name().to_string_lossy().contains(".partial-")), "temporary files left");
}

#[test]
fn png_plot_is_a_png() {
    let dir = tempfile::tempdir().expect("tempdir");
    let png = dir.path().join("plot.png");
    let out = run(&[
        "check",
        "--quiet",
        example("switchback-loop.geojson").to_str().unwrap(),
        "--plot",
        png.to_str().unwrap(),
    ]);
    assert!(out.status.code() == Some(1) || out.status.code() == Some(0), "{}", text(&out.stderr));
    let bytes = std::fs::read(&png).expect("png written");
    assert_eq!(&bytes[..8], b"\x89PNG\r\n\x1a\n");
    assert!(bytes.len() > 20_000, "suspiciously small plot");
}

#[test]
fn predicted_geojson_needs_geographic_input() {
    let dir = tempfile::tempdir().expect("tempdir");
    let out = run(&[
        "check",
        example("yard-lap.csv").to_str().unwrap(),
        "--predicted",
        dir.path().join("p.geojson").to_str().unwrap(),
    ]);
    assert_eq!(out.status.code(), Some(2));
    assert!(text(&out.stderr).contains("local map frame"));
}

#[test]
fn refuses_to_overwrite_an_input() {
    let dir = tempfile::tempdir().expect("tempdir");
    let route = dir.path().join("route.geojson");
    std::fs::copy(example("supply-run.geojson"), &route).expect("copy");
    let before = std::fs::read(&route).expect("read");
    let out = run(&["check", route.to_str().unwrap(), "--report", route.to_str().unwrap()]);
    assert_eq!(out.status.code(), Some(2));
    assert!(text(&out.stderr).contains("refusing to overwrite"));
    assert_eq!(std::fs::read(&route).expect("read"), before);
}

#[test]
fn demo_profile_round_trips_through_the_validator() {
    let dir = tempfile::tempdir().expect("tempdir");
    let demo = run(&["profile", "--demo"]);
    assert_eq!(demo.status.code(), Some(0));
    let p = dir.path().join("demo.toml");
    std::fs::write(&p, &demo.stdout).expect("write");
    let out = run(&["profile", p.to_str().unwrap()]);
    assert_eq!(out.status.code(), Some(0), "{}", text(&out.stderr));
    let checked =
        run(&["check", "--quiet", "--vehicle", p.to_str().unwrap(), example("yard-lap.csv").to_str().unwrap()]);
    assert_eq!(checked.status.code(), Some(0));
}

// --- malformed inputs: each exits 2 with a message naming the file and the place ----------

/// Writes `content` to a file named `name`, runs check on it (with `profile` as vehicle when
/// given) and returns stderr after checking exit code 2 and no panic.
fn bad_input(name: &str, content: &str, profile: Option<&str>) -> String {
    let dir = tempfile::tempdir().expect("tempdir");
    let file = dir.path().join(name);
    std::fs::write(&file, content).expect("write");
    let mut args = vec!["check".to_string()];
    if let Some(prof) = profile {
        let pf = dir.path().join("vehicle.toml");
        std::fs::write(&pf, prof).expect("write profile");
        args.extend(["--vehicle".to_string(), pf.to_string_lossy().into_owned()]);
        args.push(example("yard-lap.csv").to_string_lossy().into_owned());
    } else {
        args.push(file.to_string_lossy().into_owned());
    }
    let out = bin().args(&args).output().expect("run");
    let err = text(&out.stderr);
    assert_eq!(out.status.code(), Some(2), "stderr: {err}");
    assert!(!err.contains("panicked"), "{err}");
    let named = if profile.is_some() { "vehicle.toml" } else { name };
    assert!(err.contains(named), "message must name the file: {err}");
    err
}

fn feature(coords: &str, props: &str) -> String {
    format!(
        r#"{{"type":"Feature","properties":{{{props}}},"geometry":{{"type":"LineString","coordinates":{coords}}}}}"#
    )
}

fn collection(features: &[String]) -> String {
    format!(r#"{{"type":"FeatureCollection","features":[{}]}}"#, features.join(","))
}

const A: &str = "[[22.83,68.41],[22.831,68.41],[22.832,68.4105]]";

#[test]
fn bad_empty_file() {
    bad_input("empty.geojson", "", None);
}

#[test]
fn bad_not_json() {
    let err = bad_input("notjson.geojson", "this is not json {", None);
    assert!(err.contains("line") || err.contains("column"), "{err}");
}

#[test]
fn bad_wrong_geometry_type() {
    let f =
        r#"{"type":"Feature","properties":{"terrain":"grass"},"geometry":{"type":"Point","coordinates":[22.8,68.4]}}"#;
    let err = bad_input("point.geojson", &collection(&[f.to_string()]), None);
    assert!(err.contains("feature 0") && err.contains("Point"), "{err}");
}

#[test]
fn bad_missing_terrain() {
    let err = bad_input("noterrain.geojson", &collection(&[feature(A, r#""name":"x""#)]), None);
    assert!(err.contains("feature 0") && err.contains("terrain"), "{err}");
}

#[test]
fn bad_unknown_terrain() {
    let err = bad_input("lava.geojson", &collection(&[feature(A, r#""terrain":"lava""#)]), None);
    assert!(err.contains("feature 0") && err.contains("lava"), "{err}");
}

#[test]
fn bad_one_point_leg() {
    let err = bad_input("one.geojson", &collection(&[feature("[[22.83,68.41]]", r#""terrain":"grass""#)]), None);
    assert!(err.contains("feature 0") && err.contains("1 point"), "{err}");
}

#[test]
fn bad_duplicate_consecutive_points() {
    let coords = "[[22.83,68.41],[22.831,68.41],[22.831,68.41]]";
    let err = bad_input("dup.geojson", &collection(&[feature(coords, r#""terrain":"grass""#)]), None);
    assert!(err.contains("feature 0") && err.contains("duplicate"), "{err}");
}

#[test]
fn bad_latitude_out_of_range() {
    let coords = "[[22.83,68.41],[22.831,98.41]]";
    let err = bad_input("lat.geojson", &collection(&[feature(coords, r#""terrain":"grass""#)]), None);
    assert!(err.contains("feature 0") && err.contains("latitude"), "{err}");
}

#[test]
fn bad_non_finite_numbers() {
    let csv = "x_m,y_m,terrain\n0,0,grass\n1,NaN,grass\n2,0,grass\n";
    let err = bad_input("nan.csv", csv, None);
    assert!(err.contains("line 3"), "{err}");
    let coords = "[[22.83,68.41],[22.831,1e999]]";
    bad_input("huge.geojson", &collection(&[feature(coords, r#""terrain":"grass""#)]), None);
}

#[test]
fn bad_legs_that_do_not_join() {
    let b = "[[22.84,68.42],[22.841,68.42]]";
    let err = bad_input(
        "gap.geojson",
        &collection(&[feature(A, r#""terrain":"grass""#), feature(b, r#""terrain":"gravel""#)]),
        None,
    );
    assert!(err.contains("feature 0") && err.contains("feature 1"), "{err}");
}

#[test]
fn bad_negative_speed() {
    let err = bad_input("speed.geojson", &collection(&[feature(A, r#""terrain":"grass","speed_mps":-1.0"#)]), None);
    assert!(err.contains("feature 0") && err.contains("speed_mps"), "{err}");
}

fn demo_with(from: &str, to: &str) -> String {
    let demo = skidroute::vehicle::DEMO_PROFILE_TOML;
    assert!(demo.contains(from), "demo profile has no '{from}'");
    demo.replacen(from, to, 1)
}

#[test]
fn bad_profile_typo_key() {
    let err = bad_input("x.txt", "", Some(&demo_with("mass_kg = 480.0", "mas_kg = 480.0")));
    assert!(err.contains("vehicle.mas_kg"), "{err}");
}

#[test]
fn bad_profile_negative_mass() {
    let err = bad_input("x.txt", "", Some(&demo_with("mass_kg = 480.0", "mass_kg = -480.0")));
    assert!(err.contains("vehicle.mass_kg"), "{err}");
}

#[test]
fn bad_profile_unknown_model_family() {
    let err = bad_input("x.txt", "", Some(&demo_with("model = \"icr\"", "model = \"magic\"")));
    assert!(err.contains("model") && err.contains("magic"), "{err}");
}

#[test]
fn usage_errors_exit_two() {
    assert_eq!(run(&["check"]).status.code(), Some(2));
    assert_eq!(run(&["frobnicate"]).status.code(), Some(2));
    let out = run(&["check", "no-such-file.geojson"]);
    assert_eq!(out.status.code(), Some(2));
    assert!(text(&out.stderr).contains("no-such-file.geojson"));
}

#[test]
fn check_with_drift_adds_cep95_per_leg_end() {
    let route = example("supply-run.geojson");
    let args = ["check", "--json", "--drift", "--samples", "60", "--seed", "3", route.to_str().unwrap()];
    let a = run(&args);
    let b = run(&args);
    assert_eq!(a.stdout, b.stdout, "same seed, same figures");
    let v: serde_json::Value = serde_json::from_slice(&a.stdout).expect("json");
    let r = &v["routes"][0];
    assert_eq!(r["drift"]["samples"], 60);
    assert_eq!(r["drift"]["seed"], 3);
    let ceps: Vec<f64> =
        r["legs"].as_array().unwrap().iter().map(|l| l["drift_cep95_m"].as_f64().expect("cep95")).collect();
    assert!(ceps.iter().all(|c| c.is_finite() && *c > 0.0));
    // Dead reckoning only gets worse with distance on this route.
    assert!(ceps.windows(2).all(|w| w[1] >= w[0]), "{ceps:?}");
    let table = text(&run(&["check", "--drift", "--samples", "20", route.to_str().unwrap()]).stdout);
    assert!(table.contains("CEP95"));
    let plain = text(&run(&["check", route.to_str().unwrap()]).stdout);
    assert!(!plain.contains("CEP95"), "no drift column unless asked");
    assert_eq!(
        run(&["check", "--samples", "5", route.to_str().unwrap()]).status.code(),
        Some(2),
        "--samples needs --drift"
    );
}

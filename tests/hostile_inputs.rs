//! Structurally valid but extreme routes through the whole check pipeline (read from a file,
//! limits, rollout, assessment): huge and tiny coordinates, zero-length segments, spikes,
//! U-turns, self-crossing loops, antimeridian and polar routes, all legs on one point, extreme
//! speeds and altitudes, and legs of a million points just under and over the limit.
//!
//! Property: the pipeline never panics and terminates; it returns either a clean error whose
//! message names the file (and the feature or line where one applies) or a report whose numbers
//! are all finite, with every unfinished leg failed.
//!
//! The suite runs with a fixed seed and a bounded case count (see `config`), so CI is
//! reproducible and stays well under a minute of test time.

use std::f64::consts::{PI, TAU};
use std::path::Path;

use proptest::prelude::*;
use proptest::test_runner::{Config, RngAlgorithm, RngSeed};
use skidroute::assess::{RouteReport, Verdict};
use skidroute::check::{check_routes_with, load_routes_with, CheckRun};
use skidroute::limits::Limits;
use skidroute::vehicle::Profile;

const TERRAINS: [&str; 5] = ["asphalt", "gravel", "grass", "packed-snow", "deep-snow"];

fn config(cases: u32) -> Config {
    Config {
        cases,
        rng_algorithm: RngAlgorithm::ChaCha,
        rng_seed: RngSeed::Fixed(SEED),
        failure_persistence: None,
        max_shrink_iters: 256,
        ..Config::default()
    }
}

/// The fixed seed of the suite.
const SEED: u64 = 0x5eed_2026;

/// Limits for the suite: the defaults, with a step budget small enough that a route too long to
/// simulate quickly is refused (which exercises that error path too).
fn test_limits() -> Limits {
    Limits { max_rollout_steps: 150_000, ..Limits::default() }
}

/// What the pipeline made of one input file.
enum Outcome {
    Error(String),
    Checked(CheckRun),
}

/// Writes `text` to a fresh folder as `name` and runs the check pipeline on it.
fn run_pipeline(name: &str, text: &str, limits: &Limits) -> Outcome {
    let dir = tempfile::tempdir().expect("tempdir");
    let path = dir.path().join(name);
    std::fs::write(&path, text).expect("write input");
    let profile = Profile::demo();
    let routes = match load_routes_with(std::slice::from_ref(&path), &profile, limits) {
        Ok(routes) => routes,
        Err(e) => {
            let message = e.to_string();
            assert!(message.starts_with(&format!("{}: ", path.display())), "message does not name the file: {message}");
            return Outcome::Error(message);
        }
    };
    let run = check_routes_with(routes, &profile, true, limits);
    for checked in &run.routes {
        assert_report_sane(&checked.report);
        for step in &checked.trace.steps {
            let p = step.pose;
            assert!(p.x_m.is_finite() && p.y_m.is_finite() && p.yaw_rad.is_finite(), "trace pose {p:?}");
        }
    }
    Outcome::Checked(run)
}

fn finite(what: &str, x: f64) {
    assert!(x.is_finite(), "{what} = {x}");
}

fn finite_opt(what: &str, x: Option<f64>) {
    if let Some(x) = x {
        finite(what, x);
    }
}

/// Every number of the report is finite; an unfinished rollout fails a leg with a reason.
fn assert_report_sane(r: &RouteReport) {
    for (what, x) in [
        ("length_m", r.length_m),
        ("time_s", r.time_s),
        ("max_deviation_m", r.max_deviation_m),
        ("energy_wh", r.energy_wh),
        ("peak_power_w", r.peak_power_w),
    ] {
        finite(what, x);
    }
    finite_opt("battery_used_fraction", r.battery_used_fraction);
    for leg in &r.legs {
        for (what, x) in [
            ("length_m", leg.length_m),
            ("speed_mps", leg.speed_mps),
            ("corridor_m", leg.corridor_m),
            ("required_curvature_per_m", leg.required_curvature_per_m),
            ("tightest_turn_at_m", leg.tightest_turn_at_m),
            ("max_deviation_m", leg.max_deviation_m),
            ("rms_deviation_m", leg.rms_deviation_m),
            ("end_deviation_m", leg.end_deviation_m),
            ("time_s", leg.time_s),
            ("energy_wh", leg.energy_wh),
            ("energy_wh_per_m", leg.energy_wh_per_m),
            ("peak_side_thrust_n", leg.peak_side_thrust_n),
            ("peak_power_w", leg.peak_power_w),
            ("mean_power_w", leg.mean_power_w),
            ("max_uphill_grade_pct", leg.max_uphill_grade_pct),
        ] {
            finite(what, x);
        }
        finite_opt("min_planned_radius_m", leg.min_planned_radius_m);
        finite_opt("achievable_curvature_per_m", leg.achievable_curvature_per_m);
        finite_opt("kinematic_curvature_per_m", leg.kinematic_curvature_per_m);
        finite_opt("traction_curvature_per_m", leg.traction_curvature_per_m);
        if leg.verdict != Verdict::Pass {
            assert!(!leg.reasons.is_empty(), "non-pass leg without a reason");
        }
    }
    if !r.completed {
        assert_eq!(r.verdict, Verdict::Fail, "an unfinished rollout must fail");
    }
}

/// A CSV route: one row per point, with a leg column, terrain and speed per leg.
fn csv_text(legs: &[(Vec<[f64; 2]>, &str, f64)]) -> String {
    let mut text = String::from("x_m,y_m,terrain,speed_mps,leg\n");
    for (k, (points, terrain, speed_mps)) in legs.iter().enumerate() {
        for p in points {
            text.push_str(&format!("{:e},{:e},{terrain},{speed_mps:e},L{k}\n", p[0], p[1]));
        }
    }
    text
}

// ---- shapes, in metres, about the origin ----

/// A random walk: steps of 0.05 to 6 m in any direction give spikes, U-turns and crossings.
fn walk() -> impl Strategy<Value = Vec<[f64; 2]>> {
    prop::collection::vec((0.05f64..6.0, -PI..PI), 1..40).prop_map(|steps| {
        let mut p = [0.0, 0.0];
        let mut out = vec![p];
        for (len, heading) in steps {
            p = [p[0] + len * heading.cos(), p[1] + len * heading.sin()];
            out.push(p);
        }
        out
    })
}

/// A straight run with a spike (out and straight back) of height 0.01 to 20 m.
fn spike() -> impl Strategy<Value = Vec<[f64; 2]>> {
    (0.01f64..20.0, 1.0f64..20.0).prop_map(|(h, at)| vec![[0.0, 0.0], [at, 0.0], [at, h], [at, 0.0], [at + 10.0, 0.0]])
}

/// A hairpin of radius 0.02 to 5 m between two straights.
fn u_turn() -> impl Strategy<Value = Vec<[f64; 2]>> {
    (0.02f64..5.0, 3usize..30).prop_map(|(r, n)| {
        let mut out = vec![[0.0, 0.0], [10.0, 0.0]];
        out.extend((1..n).map(|i| {
            let a = PI * i as f64 / n as f64 - PI / 2.0;
            [10.0 + r * a.cos(), r + r * a.sin()]
        }));
        out.extend([[10.0, 2.0 * r], [0.0, 2.0 * r]]);
        out
    })
}

/// Self-crossing loops: figure eights and multi-turn circles of radius 0.3 to 15 m.
fn self_crossing_loop() -> impl Strategy<Value = Vec<[f64; 2]>> {
    (0.3f64..15.0, 8usize..80, 1usize..4, any::<bool>()).prop_map(|(r, n, turns, eight)| {
        let total = n * turns;
        (0..=total)
            .map(|i| {
                let a = TAU * i as f64 / n as f64;
                if eight {
                    [r * a.sin(), r * a.sin() * a.cos()]
                } else {
                    [r * a.sin(), r - r * a.cos()]
                }
            })
            .collect::<Vec<_>>()
    })
}

fn any_shape() -> impl Strategy<Value = Vec<[f64; 2]>> {
    prop_oneof![walk(), spike(), u_turn(), self_crossing_loop()]
}

fn speed() -> impl Strategy<Value = f64> {
    // Mostly within the 0.05 to 100 m/s a route may plan (so the simulation is exercised at its
    // extremes), sometimes beyond (refused when read).
    prop_oneof![1 => Just(1e-9), 2 => Just(0.05), 4 => 0.2f64..3.0, 2 => Just(50.0), 1 => Just(100.0), 1 => Just(1e300)]
}

fn terrain() -> impl Strategy<Value = &'static str> {
    prop::sample::select(TERRAINS.to_vec())
}

/// Splits a polyline into legs sharing their boundary points.
fn split(points: &[[f64; 2]], cuts: &[usize]) -> Vec<Vec<[f64; 2]>> {
    let mut bounds: Vec<usize> = cuts.iter().map(|c| c % points.len().max(1)).filter(|&c| c > 0).collect();
    bounds.sort_unstable();
    bounds.dedup();
    bounds.push(points.len().saturating_sub(1));
    let mut out = Vec::new();
    let mut start = 0;
    for end in bounds {
        if end > start {
            out.push(points[start..=end].to_vec());
            start = end;
        }
    }
    out
}

/// A route is either refused with a message naming the file, or checked with finite numbers.
fn expect_clean(name: &str, text: &str) -> Outcome {
    run_pipeline(name, text, &test_limits())
}

proptest! {
    #![proptest_config(config(48))]

    /// Spikes, U-turns, loops and random walks on every terrain at extreme speeds.
    #[test]
    fn extreme_shapes_and_speeds_are_checked_or_refused(
        shape in any_shape(),
        cuts in prop::collection::vec(0usize..200, 0..4),
        terrains in prop::collection::vec(terrain(), 4),
        speeds in prop::collection::vec(speed(), 4),
    ) {
        let legs: Vec<_> = split(&shape, &cuts)
            .into_iter()
            .enumerate()
            .map(|(k, pts)| (pts, terrains[k % 4], speeds[k % 4]))
            .collect();
        prop_assume!(!legs.is_empty());
        let text = csv_text(&legs);
        if let Outcome::Error(message) = expect_clean("shape.csv", &text) {
            // The only refusals possible here: a speed outside 0.05 to 100 m/s, a loop too long
            // to simulate within the step budget, or a U-turn so tight that its points coincide.
            prop_assert!(
                message.contains("control steps")
                    || message.contains("remove the duplicate")
                    || message.contains("m/s is slower than")
                    || message.contains("m/s is faster than"),
                "{message}"
            );
        }
    }

    /// The same shapes far from the origin (up to and beyond the coordinate limit) and scaled
    /// down to micrometres or up to thousands of kilometres.
    #[test]
    fn huge_and_tiny_coordinates_are_checked_or_refused(
        shape in any_shape(),
        base in prop::sample::select(vec![0.0, 1e-300, -1e5, 5e6, 9.99e7, -1.0000001e8, 1e12, 1e300]),
        scale in prop::sample::select(vec![1e-300, 1e-6, 1e-2, 1.0, 1e3, 1e6]),
    ) {
        let points: Vec<[f64; 2]> = shape.iter().map(|p| [base + scale * p[0], base - scale * p[1]]).collect();
        let text = csv_text(&[(points, "gravel", 1.0)]);
        if let Outcome::Error(message) = expect_clean("far.csv", &text) {
            prop_assert!(message.contains(": line "), "{message}");
        }
    }

    /// Inserting a repeated point anywhere is refused with the lines of both copies.
    #[test]
    fn zero_length_segments_are_refused_with_their_lines(shape in any_shape(), at in 0usize..100) {
        let mut points = shape;
        let i = at % points.len();
        points.insert(i, points[i]);
        let text = csv_text(&[(points, "grass", 1.0)]);
        match expect_clean("repeat.csv", &text) {
            Outcome::Error(message) => {
                prop_assert!(message.contains("remove the duplicate"), "{message}");
                prop_assert!(message.contains(&format!("lines {} and {}", i + 2, i + 3)), "{message}");
            }
            Outcome::Checked(_) => prop_assert!(false, "a zero-length segment was accepted"),
        }
    }

    /// Every leg on one point: refused, in CSV and in GeoJSON.
    #[test]
    fn all_legs_on_one_point_are_refused(x in -1e7f64..1e7, y in -1e7f64..1e7, legs in 1usize..5, n in 2usize..5) {
        let same = vec![[x, y]; n];
        let csv: Vec<_> = (0..legs).map(|_| (same.clone(), "grass", 1.0)).collect();
        match expect_clean("point.csv", &csv_text(&csv)) {
            Outcome::Error(message) => prop_assert!(message.contains(": line 2: "), "{message}"),
            Outcome::Checked(_) => prop_assert!(false, "accepted"),
        }
        let (lon, lat) = (x / 1e5, y / 2e5);
        let features: Vec<Vec<[f64; 3]>> = (0..legs).map(|_| vec![[lon, lat, 0.0]; n]).collect();
        match expect_clean("point.geojson", &geojson_text(&features)) {
            Outcome::Error(message) => prop_assert!(message.contains(": feature 0: "), "{message}"),
            Outcome::Checked(_) => prop_assert!(false, "accepted"),
        }
    }

    /// Routes across the antimeridian and over or near the poles, with extreme altitudes.
    #[test]
    fn antimeridian_and_polar_routes_are_checked_or_refused(
        shape in any_shape(),
        lon0 in prop::sample::select(vec![179.99995, -179.99995, 180.0, -180.0, 0.0, 45.0]),
        lat0 in prop::sample::select(vec![89.99995, 90.0, -89.99995, -90.0, 0.0, 69.65]),
        alt in prop::sample::select(vec![-1e5, -430.0, 0.0, 8848.0, 1e5, 2e5]),
        cuts in prop::collection::vec(0usize..200, 0..3),
    ) {
        // Metres to degrees with a local spherical approximation: near a pole the longitude
        // steps become huge and wrap, which is the point of the test.
        let to_lon_lat = |p: &[f64; 2]| {
            let lat = (lat0 + p[1] / 111_000.0).clamp(-90.0, 90.0);
            let coslat = lat.to_radians().cos().max(1e-9);
            let mut lon = lon0 + p[0] / (111_000.0 * coslat);
            lon = (lon + 180.0).rem_euclid(360.0) - 180.0;
            [lon, lat, alt]
        };
        let features: Vec<Vec<[f64; 3]>> =
            split(&shape, &cuts).iter().map(|leg| leg.iter().map(to_lon_lat).collect()).collect();
        prop_assume!(!features.is_empty());
        if let Outcome::Error(message) = expect_clean("polar.geojson", &geojson_text(&features)) {
            prop_assert!(message.contains(": feature "), "{message}");
        }
    }
}

/// A GeoJSON FeatureCollection, one LineString feature per leg, all on gravel.
fn geojson_text(features: &[Vec<[f64; 3]>]) -> String {
    let features: Vec<String> = features
        .iter()
        .map(|points| {
            let coords: Vec<String> = points.iter().map(|p| format!("[{:e},{:e},{:e}]", p[0], p[1], p[2])).collect();
            format!(
                r#"{{"type":"Feature","properties":{{"terrain":"gravel"}},"geometry":{{"type":"LineString","coordinates":[{}]}}}}"#,
                coords.join(",")
            )
        })
        .collect();
    format!(r#"{{"type":"FeatureCollection","features":[{}]}}"#, features.join(","))
}

/// A straight leg of `n` points 2 mm apart (2 km for a million points), gently curving.
fn long_leg(n: usize) -> Vec<[f64; 2]> {
    (0..n)
        .map(|i| {
            let s = i as f64 * 0.002;
            [s, 5.0 * (s / 400.0).sin()]
        })
        .collect()
}

#[test]
fn a_million_point_leg_just_under_the_limit_is_checked() {
    let limits = Limits { max_points_per_leg: 1_000_000, ..test_limits() };
    let text = csv_text(&[(long_leg(1_000_000), "asphalt", 1.5)]);
    match run_pipeline("long.csv", &text, &limits) {
        Outcome::Checked(run) => {
            let report = &run.routes[0].report;
            assert!(report.completed, "{report:?}");
            assert!((report.length_m - 2000.0).abs() < 5.0, "{}", report.length_m);
        }
        Outcome::Error(message) => panic!("refused: {message}"),
    }
}

#[test]
fn a_leg_one_point_over_the_limit_is_refused_naming_file_line_and_limit() {
    let limits = Limits { max_points_per_leg: 1_000_000, ..test_limits() };
    let text = csv_text(&[(long_leg(1_000_001), "asphalt", 1.5)]);
    match run_pipeline("long.csv", &text, &limits) {
        Outcome::Error(message) => {
            assert!(
                message.contains(": line 2: leg 'L0' has 1000001 points, more than the limit of 1000000"),
                "{message}"
            );
            assert!(message.contains("--max-points-per-leg"), "{message}");
        }
        Outcome::Checked(_) => panic!("accepted a leg over the limit"),
    }
}

#[test]
fn a_geojson_leg_over_the_limit_is_refused_naming_the_feature() {
    let limits = Limits { max_points_per_leg: 1_000, ..test_limits() };
    let leg = |n: usize| -> Vec<[f64; 3]> { (0..n).map(|i| [10.0 + i as f64 * 1e-5, 60.0, 0.0]).collect() };
    assert!(matches!(run_pipeline("ok.geojson", &geojson_text(&[leg(1_000)]), &limits), Outcome::Checked(_)));
    match run_pipeline("over.geojson", &geojson_text(&[leg(1_001)]), &limits) {
        Outcome::Error(message) => assert!(message.contains(": feature 0: has 1001 points, more than"), "{message}"),
        Outcome::Checked(_) => panic!("accepted"),
    }
}

#[test]
fn legs_per_route_and_total_points_are_limited() {
    let limits = Limits { max_legs_per_route: 3, max_total_points: 12, ..test_limits() };
    let legs = |k: usize| -> Vec<(Vec<[f64; 2]>, &str, f64)> {
        (0..k).map(|i| (vec![[i as f64, 0.0], [i as f64 + 1.0, 0.0]], "asphalt", 1.0)).collect()
    };
    assert!(matches!(run_pipeline("three.csv", &csv_text(&legs(3)), &limits), Outcome::Checked(_)));
    match run_pipeline("four.csv", &csv_text(&legs(4)), &limits) {
        Outcome::Error(message) => assert!(message.contains("has 4 legs, more than the limit of 3"), "{message}"),
        Outcome::Checked(_) => panic!("accepted four legs"),
    }
    let many: Vec<[f64; 2]> = (0..13).map(|i| [i as f64, 0.0]).collect();
    match run_pipeline("many.csv", &csv_text(&[(many, "asphalt", 1.0)]), &limits) {
        Outcome::Error(message) => assert!(message.contains(": line 14: has 13 plan points in all"), "{message}"),
        Outcome::Checked(_) => panic!("accepted 13 points"),
    }
}

#[test]
fn a_pathologically_slow_leg_is_refused_before_simulating() {
    // 1e-6 m/s is refused when read (slower than the 0.05 m/s creep speed).
    let text = csv_text(&[(vec![[0.0, 0.0], [10_000.0, 0.0]], "gravel", 1e-6)]);
    match run_pipeline("crawl.csv", &text, &Limits::default()) {
        Outcome::Error(message) => assert!(message.contains("1e-6 m/s is slower than 0.05 m/s"), "{message}"),
        Outcome::Checked(_) => panic!("accepted"),
    }
    // 0.05 m/s on 10 km: the rollout's time bound would be a week of simulated driving.
    let text = csv_text(&[(vec![[0.0, 0.0], [10_000.0, 0.0]], "gravel", 0.05)]);
    match run_pipeline("slow.csv", &text, &Limits::default()) {
        Outcome::Error(message) => {
            assert!(message.contains("slow.csv: line 2: route 'slow': simulating it could take up to"), "{message}");
            assert!(message.contains("--max-steps"), "{message}");
        }
        Outcome::Checked(_) => panic!("accepted"),
    }
}

#[test]
fn a_route_per_row_is_grouped_without_quadratic_cost() {
    // Every row its own route (a hostile file); grouping must not be quadratic.
    let mut text = String::from("route,x_m,y_m,terrain\n");
    for i in 0..60_000 {
        text.push_str(&format!("r{},0,0,grass\n", i));
    }
    let out = skidroute::route::parse_route_text(
        Path::new("groups.csv"),
        &text,
        skidroute::route::RouteFormat::Csv,
        &Limits::default(),
    );
    let message = out.expect_err("one-point legs").to_string();
    assert!(message.starts_with("groups.csv: line 2: leg has 1 point"), "{message}");
}

#[test]
fn the_total_points_limit_counts_over_all_files() {
    let dir = tempfile::tempdir().expect("tempdir");
    let paths: Vec<_> = ["a.csv", "b.csv"]
        .iter()
        .map(|name| {
            let path = dir.path().join(name);
            let points: Vec<[f64; 2]> = (0..6).map(|i| [i as f64, 0.0]).collect();
            std::fs::write(&path, csv_text(&[(points, "asphalt", 1.0)])).expect("write");
            path
        })
        .collect();
    let limits = Limits { max_total_points: 11, ..test_limits() };
    let message = load_routes_with(&paths, &Profile::demo(), &limits).expect_err("12 points").to_string();
    assert!(message.starts_with(&format!("{}: brings the run to 12 plan points", paths[1].display())), "{message}");
    assert!(load_routes_with(&paths, &Profile::demo(), &Limits { max_total_points: 12, ..limits }).is_ok());
}

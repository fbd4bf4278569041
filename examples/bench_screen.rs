//! Benchmark of the in-memory entry point planners call in a loop
//! (`skidroute::check::screen_route`): one 200 m route (a straight and a bend, points every
//! metre, on gravel) checked with the demo profile already loaded, no file I/O; the target is
//! under 1 ms per route on one core. Prints the median and the spread over 201 calls. Run with
//! `cargo run --release --example bench_screen [SPACING_M]`.

use std::time::Instant;

use skidroute::check::screen_route;
use skidroute::route::{Leg, Route, SourcePosition};
use skidroute::vehicle::Profile;

/// 200 m: 100 m straight, then a left bend of 0.01 rad per metre, points `spacing_m` apart.
fn route(spacing_m: f64) -> Route {
    let mut points = vec![[0.0, 0.0]];
    let (mut x, mut y, mut yaw) = (0.0_f64, 0.0_f64, 0.0_f64);
    let n = (200.0 / spacing_m).round() as usize;
    for i in 0..n {
        if i as f64 * spacing_m >= 100.0 {
            yaw += 0.01 * spacing_m;
        }
        x += spacing_m * yaw.cos();
        y += spacing_m * yaw.sin();
        points.push([x, y]);
    }
    let leg = Leg { speed_mps: Some(1.2), ..Leg::new("gravel", points, SourcePosition::Feature(0)) };
    Route { name: "candidate".into(), source: "planner".into(), origin: None, legs: vec![leg], warnings: vec![] }
}

fn main() {
    let spacing_m: f64 = std::env::args().nth(1).and_then(|s| s.parse().ok()).unwrap_or(1.0);
    let profile = Profile::demo();
    let route = route(spacing_m);
    let mut times_us = Vec::new();
    let mut verdict = None;
    for _ in 0..201 {
        let t0 = Instant::now();
        let report = screen_route(&route, &profile).expect("a valid route");
        times_us.push(t0.elapsed().as_secs_f64() * 1e6);
        verdict = Some(report.verdict);
    }
    times_us.sort_by(f64::total_cmp);
    let cores = std::thread::available_parallelism().map_or(0, |n| n.get());
    println!(
        "screen_route, 200 m route, points every {spacing_m} m, demo profile: median {:.0} us (fastest {:.0}, 90th \
         percentile {:.0}, slowest {:.0}; 201 calls on one core of {cores}); verdict {:?}; target < 1000 us",
        times_us[100], times_us[0], times_us[180], times_us[200], verdict
    );
}

//! Benchmark of the drift Monte Carlo: 2000 samples on a synthetic 2 km route (straights and
//! arcs, plan points every metre, four terrains of the demo profile) at the demo's 20 Hz
//! control rate, with 1 and 2 rayon threads.
//!
//! Run with `cargo run --release --example bench_drift [SAMPLES] [gyro] [--runs N]`: each thread
//! count is timed over N runs (3 unless given), printing the median, the fastest and the
//! slowest, with the machine's core count. With the environment variable
//! `BENCH_DRIFT_JSON=FILE` the 2-thread report is also written to FILE as JSON, to compare the
//! output of two builds byte for byte.

use std::time::Instant;

use skidroute::drift::{run_drift, DriftSettings, HeadingSource, Odometry};
use skidroute::progress::NoProgress;
use skidroute::route::{Leg, Route, SourcePosition};
use skidroute::vehicle::Profile;

/// A 2 km route of eight 250 m legs, each a straight followed by an arc of radius 15 m that
/// turns alternately left and right, sampled every metre.
fn synthetic_route() -> Route {
    let terrains = ["asphalt", "gravel", "packed-snow", "grass"];
    let (mut x, mut y, mut yaw) = (0.0_f64, 0.0_f64, 0.0_f64);
    let mut legs = Vec::new();
    for k in 0..8 {
        let mut points = vec![[x, y]];
        let turn = if k % 2 == 0 { 1.0 } else { -1.0 };
        for s in 1..=250 {
            // First 200 m straight, then 50 m of arc (curvature 1/15 m).
            let curvature_per_m = if s > 200 { turn / 15.0 } else { 0.0 };
            yaw += curvature_per_m;
            x += yaw.cos();
            y += yaw.sin();
            points.push([x, y]);
        }
        legs.push(Leg {
            name: Some(format!("leg {}", k + 1)),
            ..Leg::new(terrains[k % terrains.len()], points, SourcePosition::Feature(k))
        });
    }
    Route { name: "synthetic 2 km".into(), source: "synthetic".into(), origin: None, legs, warnings: Vec::new() }
}

fn main() {
    let samples: usize = std::env::args().nth(1).and_then(|s| s.parse().ok()).unwrap_or(2000);
    let route = synthetic_route();
    let profile = Profile::demo();
    // Heading from odometry: the same work as before the gyro existed (the demo profile's [imu]
    // would make the gyro the default); pass `gyro` as the second argument to time that.
    let args: Vec<String> = std::env::args().collect();
    let runs: usize =
        args.iter().position(|a| a == "--runs").and_then(|i| args.get(i + 1)).and_then(|n| n.parse().ok()).unwrap_or(3);
    let runs = runs.max(1);
    let heading = match args.get(2).map(String::as_str) {
        Some("gyro") => HeadingSource::Gyro,
        _ => HeadingSource::Odometry,
    };
    let settings =
        DriftSettings { samples, seed: 7, lost_from_leg: 1, odometry: Odometry::Calibrated, heading, paths_kept: 50 };
    let cores = std::thread::available_parallelism().map_or(0, |n| n.get());
    println!(
        "drift benchmark: {samples} samples, {:.0} m route, {} legs, {:.0} Hz control; {cores} cores; {runs} runs \
         per thread count",
        route
            .legs
            .iter()
            .map(|l| l.points.windows(2).map(|w| (w[1][0] - w[0][0]).hypot(w[1][1] - w[0][1])).sum::<f64>())
            .sum::<f64>(),
        route.legs.len(),
        profile.follower.control_rate_hz
    );
    // Reference: the deterministic rollout of the same route (follower, plan queries, one
    // model and one SE(2) step per control step), single thread.
    let drive = skidroute::rollout::RouteDrive::new(&route, &profile);
    let t0 = Instant::now();
    let reps = 20;
    let mut steps = 0;
    for _ in 0..reps {
        steps += skidroute::rollout::roll_out(&drive).steps.len();
    }
    let secs = t0.elapsed().as_secs_f64();
    println!("reference rollout: {:.0} ns per step ({steps} steps)", secs / steps as f64 * 1e9);
    let mut times = Vec::new();
    let mut outputs = Vec::new();
    for threads in [1, 2] {
        let pool = match rayon::ThreadPoolBuilder::new().num_threads(threads).build() {
            Ok(p) => p,
            Err(e) => {
                eprintln!("cannot build a pool of {threads} threads: {e}");
                return;
            }
        };
        let mut secs_each = Vec::with_capacity(runs);
        let mut last_report = None;
        for _ in 0..runs {
            let t0 = Instant::now();
            let report = match pool.install(|| run_drift(&route, &profile, &settings, &NoProgress)) {
                Ok(r) => r,
                Err(e) => {
                    eprintln!("drift failed: {e}");
                    return;
                }
            };
            secs_each.push(t0.elapsed().as_secs_f64());
            let json = serde_json::to_string(&report).unwrap_or_default();
            // Every run of a seeded drift gives the same report.
            if let Some((_, earlier)) = &last_report {
                if *earlier != json {
                    println!("  runs on {threads} thread(s) gave different reports");
                }
            }
            last_report = Some((report, json));
        }
        let Some((report, json)) = last_report else { return };
        secs_each.sort_by(f64::total_cmp);
        let secs = secs_each[secs_each.len() / 2];
        let last = report.legs.last().and_then(|l| l.cep95_m()).unwrap_or(f64::NAN);
        println!(
            "{threads} thread(s): median {secs:.2} s (fastest {:.2}, slowest {:.2}), {} steps, {:.1} M steps/s ({:.0} ns \
             per step per thread), timed out {}, CEP95 at the end {last:.2} m",
            secs_each[0],
            secs_each[secs_each.len() - 1],
            report.steps,
            report.steps as f64 / secs / 1e6,
            secs * threads as f64 / report.steps as f64 * 1e9,
            report.timed_out
        );
        times.push(secs);
        outputs.push(json);
    }
    println!("speed-up 1 -> 2 threads: {:.2}x", times[0] / times[1]);
    if let Some(path) = std::env::var_os("BENCH_DRIFT_JSON") {
        if let Err(e) = std::fs::write(&path, outputs[1].as_bytes()) {
            eprintln!("cannot write {}: {e}", path.to_string_lossy());
        }
    }
    println!("outputs identical across thread counts: {}", outputs[0] == outputs[1]);
}

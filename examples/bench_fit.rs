//! Benchmark of `fit`: all six families on a synthetic one-hour, 50 Hz log of two terrains
//! (grass and packed-snow, half an hour each, from the invented truth vehicle of
//! `common/truth.rs`). Prints wall time, windows, Levenberg-Marquardt iterations and the time
//! per iteration. Target: under 5 s on 2 cores.
//!
//! `cargo run --release --example bench_fit`

#[allow(dead_code)] // the benchmark drives two of the three terrains
#[path = "common/truth.rs"]
mod truth;

use std::path::Path;
use std::time::Instant;

use skidroute::fit::log::parse_log;
use skidroute::fit::{fit_logs, FitSettings};
use skidroute::kinematics::Pose;
use skidroute::progress::NoProgress;
use skidroute::vehicle::Profile;

fn main() {
    let mut text = String::new();
    for (i, terrain) in [truth::GRASS, truth::PACKED_SNOW].iter().enumerate() {
        let rows = truth::drive(terrain, &truth::programme(1800.0, 40 + i as u64), Pose::default(), 0.0, 40 + i as u64);
        // The second half-hour follows the first in time.
        let shifted: Vec<truth::Row> =
            rows.into_iter().map(|r| truth::Row { t_s: r.t_s + 1800.0 * i as f64 + 10.0 * i as f64, ..r }).collect();
        text += &truth::csv(&shifted, terrain.name, i == 0);
    }
    let t0 = Instant::now();
    let log = match parse_log(Path::new("bench.csv"), &text) {
        Ok(l) => l,
        Err(e) => panic!("generated log does not parse: {e}"),
    };
    let read_s = t0.elapsed().as_secs_f64();
    let settings = match FitSettings::new(2.0, &[]) {
        Ok(s) => s,
        Err(e) => panic!("{e}"),
    };
    let t1 = Instant::now();
    let run = match fit_logs(&[log], &[], &Profile::demo(), "built-in demo profile", true, &settings, &NoProgress) {
        Ok(r) => r,
        Err(e) => panic!("{e}"),
    };
    let fit_s = t1.elapsed().as_secs_f64();
    let iterations: usize = run.terrains.iter().flat_map(|t| &t.families).map(|f| f.iterations).sum();
    let evaluations: usize = run.terrains.iter().flat_map(|t| &t.families).map(|f| f.evaluations).sum();
    let windows: usize = run.terrains.iter().map(|t| t.training_windows + t.validation_windows).sum();
    let samples: usize = run.terrains.iter().map(|t| t.samples).sum();
    println!("threads: {}", rayon::current_num_threads());
    println!("samples: {samples} (one hour at 50 Hz, two terrains)");
    println!("windows: {windows} of 2 s (training and validation)");
    println!("reading the log: {read_s:.3} s");
    println!("fitting six families on both terrains: {fit_s:.3} s wall");
    println!(
        "Levenberg-Marquardt iterations: {iterations} (plus {evaluations} residual evaluations), {:.1} ms of wall time per iteration",
        1e3 * fit_s / iterations.max(1) as f64
    );
    for t in &run.terrains {
        let chosen = t.chosen().map_or("none".to_string(), |f| f.family.to_string());
        println!("  {}: {} training windows, chosen {chosen}", t.terrain, t.training_windows);
    }
}

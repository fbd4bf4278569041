//! Benchmark of batch screening: 1000 routes of 500 m each (gentle bends over the demo
//! terrains), written as CSV files into a temporary folder, then read, checked in parallel and
//! rendered as JSON Lines as `skidroute check FOLDER --format jsonl` does (traces dropped once
//! assessed, as that command does). Prints the wall time (target: under 3 s on 2 cores). Run
//! with `cargo run --release --example bench_batch [ROUTES] [--keep DIR]`; with `--keep` the
//! routes are written to DIR and left there, so the whole command's peak memory can be measured:
//! `/usr/bin/time -v skidroute check DIR --format jsonl --max-work-steps 1000000000000`
//! (target: under 300 MB for 1000 and for 10 000 routes).

use std::fmt::Write;
use std::time::Instant;

use skidroute::batch::{expand_inputs, load_routes_parallel};
use skidroute::check::check_routes_keeping;
use skidroute::limits::Limits;
use skidroute::report::jsonl::check_jsonl;
use skidroute::vehicle::Profile;

/// A 500 m route as CSV: two legs of 250 m, points every 2 m, gentle S-bends.
fn route_csv(i: usize) -> String {
    let terrains = ["asphalt", "gravel", "grass", "packed-snow"];
    let mut out = String::from("x_m,y_m,terrain,speed_mps\n");
    let (mut x, mut y, mut yaw) = (0.0_f64, 0.0_f64, 0.1 * (i % 7) as f64);
    for k in 0..=250 {
        let s = 2.0 * k as f64;
        let terrain = terrains[(i + usize::from(s >= 250.0)) % terrains.len()];
        let _ = writeln!(out, "{x:.3},{y:.3},{terrain},1.2");
        yaw += 2.0 * 0.02 * (s / 60.0 + i as f64).sin();
        x += 2.0 * yaw.cos();
        y += 2.0 * yaw.sin();
    }
    out
}

fn main() -> Result<(), Box<dyn std::error::Error>> {
    let args: Vec<String> = std::env::args().skip(1).collect();
    let n: usize = args.first().and_then(|a| a.parse().ok()).unwrap_or(1000);
    let keep = args.iter().position(|a| a == "--keep").and_then(|i| args.get(i + 1)).map(std::path::PathBuf::from);
    let dir = keep
        .clone()
        .unwrap_or_else(|| std::env::temp_dir().join(format!("skidroute-bench-batch-{}", std::process::id())));
    std::fs::create_dir_all(&dir)?;
    for i in 0..n {
        std::fs::write(dir.join(format!("route-{i:05}.csv")), route_csv(i))?;
    }
    if keep.is_some() {
        println!("wrote {n} routes to {}", dir.display());
        return Ok(());
    }
    let profile = Profile::demo();
    println!("batch screening: {n} routes of 500 m, {} rayon threads", rayon::current_num_threads());
    let mut best = f64::INFINITY;
    for round in 0..3 {
        let t0 = Instant::now();
        let files = expand_inputs(std::slice::from_ref(&dir))?;
        let routes = load_routes_parallel(&files, &profile)?;
        let run = check_routes_keeping(routes, &profile, true, &Limits::default(), false);
        let lines = check_jsonl(&run);
        let wall_s = t0.elapsed().as_secs_f64();
        best = best.min(wall_s);
        let length_km: f64 = run.routes.iter().map(|r| r.report.length_m).sum::<f64>() / 1000.0;
        println!(
            "  round {round}: {wall_s:.2} s wall for {} routes ({length_km:.0} km, {} JSON lines)",
            run.routes.len(),
            lines.lines().count()
        );
    }
    println!("best wall time: {best:.2} s (target < 3 s on 2 cores)");
    std::fs::remove_dir_all(&dir)?;
    Ok(())
}

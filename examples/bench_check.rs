//! Benchmark of the route check: a 20 km synthetic route at 20 Hz control on the demo profile,
//! reporting simulated controller steps per second on one core (the rollout keeping its trace,
//! and streamed into the per-leg tallies as `check` runs it when no output needs the trace),
//! and the wall time of checking
//! each example route (reading, simulating, assessing and the margins' extra simulations;
//! median of 21 runs; the target is under 100 ms each). Run with
//! `cargo run --release --example bench_check [SPACING_M] [--write ROUTE.csv]`: the plan's
//! points are SPACING_M apart (1 m unless given; 0.1 m is a planner-dense path); `--write`
//! also writes the route as CSV, to time the whole `skidroute check` process on it;
//! `--rollouts N` only runs N streamed rollouts of the route, for instruction counts.
//!
//! The yardstick is a bare loop over the same route doing only the irreducible work of a control
//! step (pursuit goal from a forward-only index, one terrain-model evaluation, one exact SE(2)
//! step, nothing stored): the rollout's rate is also given as a share of it, which holds across
//! machines better than the absolute figure.

use std::path::PathBuf;
use std::time::Instant;

use skidroute::assess::TraceSummary;
use skidroute::check::{check_route, check_routes, load_routes};
use skidroute::kinematics::{MotionModel, Pose};
use skidroute::rollout::{roll_out, roll_out_observing, RouteDrive};
use skidroute::route::{Leg, Route, SourcePosition};
use skidroute::vehicle::Profile;

/// A 20 km route of gentle S-bends and straights over the demo terrains.
fn synthetic_route(length_m: f64, step_m: f64) -> Route {
    let terrains = ["asphalt", "gravel", "grass", "packed-snow", "deep-snow"];
    let (mut x, mut y, mut yaw) = (0.0_f64, 0.0_f64, 0.0_f64);
    let mut legs = Vec::new();
    let leg_len_m = 500.0;
    let n_legs = (length_m / leg_len_m) as usize;
    for k in 0..n_legs {
        let mut points = vec![[x, y]];
        for i in 0..(leg_len_m / step_m).round() as usize {
            let s = (k as f64 * leg_len_m) + i as f64 * step_m;
            yaw += step_m * 0.04 * (s / 90.0).sin();
            x += step_m * yaw.cos();
            y += step_m * yaw.sin();
            points.push([x, y]);
        }
        legs.push(Leg {
            speed_mps: Some(1.2),
            ..Leg::new(terrains[k % terrains.len()].to_string(), points, SourcePosition::Feature(k))
        });
    }
    Route { name: "bench".into(), source: PathBuf::from("<synthetic>"), origin: None, legs, warnings: Vec::new() }
}

/// The route as CSV (`x_m,y_m,terrain,speed_mps`, millimetres), one row per point; a leg's first
/// point repeats the previous leg's last one.
fn route_csv(route: &Route) -> String {
    use std::fmt::Write;
    let mut out = String::from("x_m,y_m,terrain,speed_mps\n");
    for leg in &route.legs {
        for p in &leg.points {
            let _ = writeln!(out, "{:.3},{:.3},{},{}", p[0], p[1], leg.terrain, leg.speed_mps.unwrap_or(1.2));
        }
    }
    out
}

/// The bare loop: pure pursuit on a goal found by walking a forward-only point index, the leg's
/// terrain model, the exact SE(2) step; the planned speed, no ramps, no trace. Returns the steps.
fn bare_loop(drive: &RouteDrive) -> u64 {
    let pts = drive.plan.points();
    let (dt, l) = (drive.limits.dt_s, drive.limits.lookahead_m);
    let half_b = 0.5 * drive.limits.track_width_m;
    let dir = [pts[1][0] - pts[0][0], pts[1][1] - pts[0][1]];
    let mut pose = Pose::new(pts[0][0], pts[0][1], dir[1].atan2(dir[0]));
    let (mut goal, mut steps) = (0usize, 0u64);
    let end = pts.len() - 1;
    while steps < 10_000_000 {
        let d2 = |i: usize| (pts[i][0] - pose.x_m).powi(2) + (pts[i][1] - pose.y_m).powi(2);
        while goal < end && d2(goal) < l * l {
            goal += 1;
        }
        if goal == end && d2(end) < 0.25 {
            break;
        }
        let sc = pose.yaw_rad.sin_cos();
        let (gx, gy) = pose.to_body_with(pts[goal][0], pts[goal][1], sc);
        let kappa = 2.0 * gy / (gx * gx + gy * gy).max(1e-12);
        let leg = drive.plan.segment_leg(goal.min(end - 1));
        let v = drive.legs[leg].speed_mps;
        let omega = kappa * v;
        let twist = drive.legs[leg].actual.twist(v - omega * half_b, v + omega * half_b);
        pose = pose.step_with(twist, dt, sc);
        steps += 1;
    }
    steps
}

fn main() {
    let args: Vec<String> = std::env::args().skip(1).collect();
    let step_m: f64 = args.first().and_then(|s| s.parse().ok()).unwrap_or(1.0);
    let profile = Profile::demo();
    let route = synthetic_route(20_000.0, step_m);
    if let Some(i) = args.iter().position(|a| a == "--write") {
        if let Some(path) = args.get(i + 1) {
            std::fs::write(path, route_csv(&route)).expect("writing the route");
            println!("wrote {path}");
        }
    }
    if let Some(i) = args.iter().position(|a| a == "--rollouts") {
        // For instruction counts (valgrind --tool=cachegrind --cache-sim=no): N streamed
        // rollouts and nothing else; the count with 1 less the count with 0, over the steps, is
        // the cost of a step.
        let n: usize = args.get(i + 1).and_then(|s| s.parse().ok()).unwrap_or(1);
        let drive = RouteDrive::new(&route, &profile);
        let (mut steps, mut sum_m) = (0u64, 0.0);
        for _ in 0..n {
            roll_out_observing(&drive, skidroute::limits::DEFAULT_MAX_ROLLOUT_STEPS, |s| {
                steps += 1;
                sum_m += s.deviation_m + s.offset_m;
            });
        }
        println!("{n} streamed rollouts: {steps} steps (deviations summed: {sum_m:.6} m)");
        return;
    }
    let mut best = f64::INFINITY;
    let mut steps = 0;
    for _ in 0..5 {
        let t0 = Instant::now();
        let checked = check_route(route.clone(), &profile);
        best = best.min(t0.elapsed().as_secs_f64());
        steps = checked.trace.steps.len();
    }
    let drive = RouteDrive::new(&route, &profile);
    let mut rolls = Vec::new();
    for _ in 0..7 {
        let t0 = Instant::now();
        let trace = roll_out(&drive);
        rolls.push(t0.elapsed().as_secs_f64());
        assert_eq!(trace.steps.len(), steps);
    }
    rolls.sort_by(f64::total_cmp);
    // The rollout as `check` runs it when no output needs the trace: every step tallied into the
    // per-leg summary as it comes, nothing kept.
    let mut streamed = Vec::new();
    for _ in 0..7 {
        let t0 = Instant::now();
        let mut summary = TraceSummary::new(&drive);
        let (outcome, _) =
            roll_out_observing(&drive, skidroute::limits::DEFAULT_MAX_ROLLOUT_STEPS, |s| summary.add(&drive, s));
        summary.end(outcome);
        streamed.push(t0.elapsed().as_secs_f64());
        assert_eq!(summary.steps() as usize, steps);
    }
    streamed.sort_by(f64::total_cmp);
    let rate = |t: f64| steps as f64 / t / 1e6;
    let cores = std::thread::available_parallelism().map_or(0, |n| n.get());
    println!(
        "20 km synthetic route, points every {step_m} m, at 20 Hz: {steps} controller steps (timed on one core of \
         {cores})"
    );
    for (label, times) in
        [("rollout keeping the trace", &rolls), ("rollout streamed into the leg tallies (as check runs it)", &streamed)]
    {
        println!(
            "  {label}: median {:.3} s, {:.2} million steps per second (fastest {:.2}, slowest {:.2}; 7 runs)",
            times[3],
            rate(times[3]),
            rate(times[0]),
            rate(times[6])
        );
    }
    println!("  whole check (rollout + assessment, no margins): best of 5 {:.3} s", best);
    let mut bare = Vec::new();
    let mut bare_steps = 0;
    for _ in 0..7 {
        let t0 = Instant::now();
        bare_steps = std::hint::black_box(bare_loop(std::hint::black_box(&drive)));
        bare.push(t0.elapsed().as_secs_f64());
    }
    bare.sort_by(f64::total_cmp);
    let bare_rate = bare_steps as f64 / bare[3] / 1e6;
    println!(
        "  bare loop (pursuit goal, model, SE(2) step; {bare_steps} steps): median {:.2} million steps per second; rollout at {:.0} % of it keeping the trace, {:.0} % streamed",
        bare_rate,
        100.0 * rate(rolls[3]) / bare_rate,
        100.0 * rate(streamed[3]) / bare_rate
    );

    let files: Vec<PathBuf> = std::fs::read_dir("example-routes")
        .map(|d| {
            d.filter_map(|e| e.ok().map(|e| e.path()))
                .filter(|p| p.extension().is_some_and(|e| e == "geojson" || e == "csv"))
                .collect()
        })
        .unwrap_or_default();
    let mut files = files;
    files.sort();
    for f in &files {
        let mut times_ms = Vec::new();
        let (mut n, mut with_margins) = (0, 0);
        for _ in 0..21 {
            let t0 = Instant::now();
            let Ok(routes) = load_routes(std::slice::from_ref(f), &profile) else { continue };
            let run = check_routes(routes, &profile, true);
            times_ms.push(t0.elapsed().as_secs_f64() * 1e3);
            n = run.routes.iter().map(|r| r.trace.steps.len()).sum::<usize>();
            with_margins = run.routes.iter().map(|r| r.steps_simulated).sum::<u64>();
        }
        if times_ms.is_empty() {
            // A terrain map, or a route that needs its site inputs (see example-routes/README.md).
            println!("check {}: not checkable on its own, skipped", f.display());
            continue;
        }
        times_ms.sort_by(f64::total_cmp);
        let median = times_ms.get(times_ms.len() / 2).copied().unwrap_or(f64::NAN);
        let worst = times_ms.last().copied().unwrap_or(f64::NAN);
        println!(
            "check {}: median {median:.1} ms, slowest {worst:.1} ms ({n} steps in the rollout, {with_margins} with the margins){}",
            f.display(),
            if median < 100.0 { "" } else { "  OVER 100 ms" }
        );
    }
}

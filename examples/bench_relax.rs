//! Benchmark of `relax` on long zigzags: staircases of right-angle corners 20 m apart on deep
//! snow at 1.2 m/s, where every corner fails and gets its own fillet (5 000, 10 000 and 20 000
//! corners). Prints the wall time of `relax_route` (median of three runs) and the time per
//! corner, which stays flat when the repair is near-linear in the number of corners.
//! Run with `cargo run --release --example bench_relax`.
//!
//! Recorded on the project's 2-core machine while other builds ran (load average 6 to 12;
//! medians of 3, release), before and after making the repair linear:
//!
//! | corners | before | after |
//! |---|---|---|
//! | 5 000 | 112 s | 0.51 s |
//! | 10 000 | not run (quadratic: about 450 s) | 0.99 s |
//! | 20 000 | not run (quadratic: about 1 800 s) | 2.03 s |
//!
//! Before, each change measured its displacement against the whole plan and the corner finder
//! simplified a long leg in one Ramer-Douglas-Peucker pass (quadratic on a zigzag); now each
//! change looks only at its own stretch and long legs are simplified in bounded stretches.

use std::path::PathBuf;
use std::time::Instant;

use skidroute::relax::{relax_route, RelaxSettings};
use skidroute::route::{Leg, Route, SourcePosition};
use skidroute::vehicle::Profile;

/// A staircase of `corners` right-angle corners, sides `side_m` long, as one deep-snow leg.
fn zigzag(corners: usize, side_m: f64) -> Route {
    let mut points = vec![[0.0, 0.0]];
    let (mut x, mut y) = (0.0, 0.0);
    for i in 0..=corners {
        if i % 2 == 0 {
            x += side_m;
        } else {
            y += side_m;
        }
        points.push([x, y]);
    }
    let leg = Leg { speed_mps: Some(1.2), ..Leg::new("deep-snow", points, SourcePosition::Line(2)) };
    Route {
        name: format!("zigzag-{corners}"),
        source: PathBuf::from("<synthetic>"),
        origin: None,
        legs: vec![leg],
        warnings: Vec::new(),
    }
}

fn main() {
    let profile = Profile::demo();
    let settings = RelaxSettings::default();
    println!("corners  relax_route s (median of 3)  us per corner  changes");
    for corners in [5_000usize, 10_000, 20_000] {
        let route = zigzag(corners, 20.0);
        let mut times = Vec::new();
        let mut changes = 0;
        for _ in 0..3 {
            let t0 = Instant::now();
            let relaxed = relax_route(&route, &profile, &settings).expect("relax");
            times.push(t0.elapsed().as_secs_f64());
            changes = relaxed.changes.len();
        }
        times.sort_by(f64::total_cmp);
        let median = times[1];
        println!("{corners:>7}  {median:>27.3}  {:>13.1}  {changes:>7}", 1e6 * median / corners as f64);
    }
}

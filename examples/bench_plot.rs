//! Benchmark of the plots: the check plot of each example route and of a long crawl (1 km at
//! 0.05 m/s, 400 000 control steps) drawn as SVG and as anti-aliased PNG, with the file
//! sizes; median of 7 runs each, after one warm-up. Run with
//! `cargo run --release --example bench_plot`.

use std::path::{Path, PathBuf};
use std::time::Instant;

use skidroute::check::{check_route, check_routes, load_routes, CheckRun};
use skidroute::route::{Leg, Route, SourcePosition};
use skidroute::vehicle::Profile;

fn crawl() -> Route {
    let leg = |terrain: &str, points: Vec<[f64; 2]>, k: usize| Leg {
        speed_mps: Some(0.05),
        ..Leg::new(terrain, points, SourcePosition::Feature(k))
    };
    Route {
        name: "crawl".into(),
        source: PathBuf::from("<synthetic>"),
        origin: None,
        legs: vec![
            leg("asphalt", vec![[0.0, 0.0], [600.0, 0.0]], 0),
            leg("gravel", vec![[600.0, 0.0], [600.0, 400.0]], 1),
        ],
        warnings: Vec::new(),
    }
}

fn median_ms(mut f: impl FnMut()) -> f64 {
    f();
    let mut t: Vec<f64> = (0..7)
        .map(|_| {
            let t0 = Instant::now();
            f();
            t0.elapsed().as_secs_f64() * 1e3
        })
        .collect();
    t.sort_by(f64::total_cmp);
    t[3]
}

fn bench(name: &str, run: &CheckRun, dir: &Path) {
    let svg = dir.join(format!("{name}.svg"));
    let png = dir.join(format!("{name}.png"));
    let svg_ms = median_ms(|| skidroute::report::plot::write_plot(run, &svg).expect("svg"));
    let png_ms = median_ms(|| skidroute::report::plot::write_plot(run, &png).expect("png"));
    let size = |p: &Path| std::fs::metadata(p).map_or(0, |m| m.len()) as f64 / 1e3;
    println!("{name:<22} svg {svg_ms:7.1} ms {:8.0} kB   png {png_ms:7.1} ms {:8.0} kB", size(&svg), size(&png));
}

fn main() {
    let profile = Profile::demo();
    let dir = tempfile::tempdir().expect("tempdir");
    for file in ["supply-run.geojson", "store-alternatives.geojson", "switchback-loop.geojson", "yard-lap.csv"] {
        let path = Path::new(env!("CARGO_MANIFEST_DIR")).join("example-routes").join(file);
        let routes = load_routes(&[path], &profile).expect("example route");
        let run = check_routes(routes, &profile, true);
        bench(file, &run, dir.path());
    }
    let cr = check_route(crawl(), &profile);
    println!("(crawl: {} control steps)", cr.trace.steps.len());
    let run = CheckRun { vehicle_name: "demo".into(), demo_profile: true, routes: vec![cr], terrain_map: None };
    bench("crawl-1km-0.05mps", &run, dir.path());
}

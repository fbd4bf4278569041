//! Benchmark of the site inputs: a 20 km synthetic route (1 m vertex spacing, in local metres)
//! cut by a terrain map of 2500 square polygons (10 000 edges, looked up through R-trees), then
//! densified and sampled on a 2 m elevation raster (4000 x 4000 pixels, held in memory). Prints
//! the median of 5 runs of each stage. Run with `cargo run --release --example bench_site`.

use std::path::Path;
use std::time::Instant;

use geo::{LineString, Polygon};
use skidroute::limits::Limits;
use skidroute::route::{Leg, Route, SourcePosition};
use skidroute::site::terrain_map::MapPolygon;
use skidroute::site::utm::UtmZone;
use skidroute::site::{apply_site, MapFrame, Raster, RasterCrs, Site, TerrainMap};

/// A 20 km meander (circling a few times) inside an 8 km square, one leg per 500 m.
fn synthetic_route() -> Route {
    let (mut x, mut y, mut yaw) = (2000.0_f64, 2000.0_f64, 0.3_f64);
    let mut legs = Vec::new();
    for k in 0..40 {
        let mut points = vec![[x, y]];
        for i in 0..500 {
            let s = k as f64 * 500.0 + i as f64;
            yaw += 0.004 * (s / 300.0).sin() + 0.0012;
            x += yaw.cos();
            y += yaw.sin();
            points.push([x, y]);
        }
        let leg = Leg::new("asphalt", points, SourcePosition::Line(2 + 500 * k));
        legs.push(leg);
    }
    Route { name: "bench".into(), source: "bench.csv".into(), origin: None, legs, warnings: Vec::new() }
}

/// A 50 x 50 grid of 160 m squares in two terrains.
fn synthetic_map() -> TerrainMap {
    let mut polygons = Vec::new();
    for i in 0..50 {
        for j in 0..50 {
            let (x0, y0) = (-200.0 + 160.0 * i as f64, -200.0 + 160.0 * j as f64);
            let ring = LineString::from(vec![
                (x0, y0),
                (x0 + 160.0, y0),
                (x0 + 160.0, y0 + 160.0),
                (x0, y0 + 160.0),
                (x0, y0),
            ]);
            let terrain = if (i + j) % 2 == 0 { "grass" } else { "gravel" };
            polygons.push(MapPolygon {
                feature: polygons.len(),
                terrain: terrain.into(),
                polygon: Polygon::new(ring, vec![]),
            });
        }
    }
    TerrainMap { source: "grid.geojson".into(), frame: MapFrame::Local, polygons }
}

/// A 2 m raster over 8 km of rolling ground, in the route's metres (UTM-like).
fn synthetic_raster() -> Raster {
    let n = 4000usize;
    let mut values = Vec::with_capacity(n * n);
    for r in 0..n {
        for c in 0..n {
            let (e, north) = (-200.0 + 2.0 * c as f64, 7800.0 - 2.0 * r as f64);
            values.push(300.0 + 8.0 * (e / 400.0).sin() + 5.0 * (north / 250.0).cos());
        }
    }
    let crs = RasterCrs::Utm(UtmZone { zone: 33, north: true });
    Raster::from_grid(Path::new("dem.tif"), crs, n, values, [-199.0, 7799.0], [2.0, -2.0], false, None)
}

fn median_s(mut f: impl FnMut()) -> f64 {
    let mut t: Vec<f64> = (0..5)
        .map(|_| {
            let t0 = Instant::now();
            f();
            t0.elapsed().as_secs_f64()
        })
        .collect();
    t.sort_by(f64::total_cmp);
    t[2]
}

fn main() {
    let route = synthetic_route();
    let points: usize = route.legs.iter().map(|l| l.points.len()).sum();
    let limits = Limits::default();
    let map_only = Site { terrain_map: Some(synthetic_map().into()), map_frame: MapFrame::Local, ..Site::default() };
    let cut = apply_site(route.clone(), &map_only, &limits).expect("cut");
    let t_map = median_s(|| {
        apply_site(route.clone(), &map_only, &limits).expect("cut");
    });
    println!(
        "terrain map: {points} route points, 2500 polygons -> {} legs in {:.3} s (median of 5)",
        cut.legs.len(),
        t_map
    );
    let raster_only = Site { elevation: Some(synthetic_raster()), map_frame: MapFrame::Local, ..Site::default() };
    let sampled = apply_site(cut.clone(), &raster_only, &limits).expect("sampled");
    let dense: usize = sampled.legs.iter().map(|l| l.points.len()).sum();
    let t_dem = median_s(|| {
        apply_site(cut.clone(), &raster_only, &limits).expect("sampled");
    });
    println!("elevation: {dense} points after densifying at 2 m, altitude + cross slope in {t_dem:.3} s (median of 5)");
}

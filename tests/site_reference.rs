//! Site inputs against outside references: terrain-map cuts against shapely, the GeoTIFF reader
//! against rasters written by tifffile (values from an independent numpy bilinear), and the UTM
//! series against PROJ (pyproj). The fixtures and the scripts that wrote them are in
//! `tests/fixtures/site/` (gen_splits.py, gen_rasters.py, gen_utm.py; library versions in each
//! script and in each JSON file's "library" key).

use std::path::{Path, PathBuf};

use approx::assert_relative_eq;
use serde_json::Value;
use skidroute::limits::Limits;
use skidroute::route::{read_routes, Route};
use skidroute::site::terrain_map::MapPolygon;
use skidroute::site::utm::UtmZone;
use skidroute::site::{apply_site, MapFrame, Raster, RasterCrs, SampleError, Site, TerrainMap};

fn fixture(name: &str) -> PathBuf {
    Path::new(env!("CARGO_MANIFEST_DIR")).join("tests").join("fixtures").join("site").join(name)
}

fn json(name: &str) -> Value {
    serde_json::from_str(&std::fs::read_to_string(fixture(name)).expect("fixture")).expect("json")
}

fn f(v: &Value) -> f64 {
    v.as_f64().expect("number")
}

/// The route cut by the map; `indexed` adds a 300-gon far away first, which takes the map past
/// the edge count where the cutting looks edges and polygons up through R-trees.
fn cut(map: &str, route: &str, indexed: bool) -> Route {
    let limits = Limits::default();
    let mut map = TerrainMap::read(&fixture(map), MapFrame::Local, &limits).expect("map");
    if indexed {
        let ring: geo::LineString<f64> = (0..=300)
            .map(|k| {
                let a = std::f64::consts::TAU * f64::from(k) / 300.0;
                (5000.0 + 10.0 * a.cos(), 5000.0 + 10.0 * a.sin())
            })
            .collect();
        let far = MapPolygon { feature: 0, terrain: "ice".into(), polygon: geo::Polygon::new(ring, vec![]) };
        map.polygons.insert(0, far);
    }
    let site = Site { terrain_map: Some(map.into()), map_frame: MapFrame::Local, ..Site::default() };
    let route = read_routes(&fixture(route)).expect("route").remove(0);
    apply_site(route, &site, &limits).expect("cut")
}

#[test]
fn cuts_match_shapely() {
    // Reference: shapely 2.2.0 (GEOS 3.14.1), tests/fixtures/site/gen_splits.py: the route
    // intersected with each polygon from the last to the first, each taking what the later ones
    // left; polygons closed; consecutive pieces on one terrain joined.
    let reference = json("splits_reference.json");
    let cases = reference["cases"].as_object().expect("cases");
    assert!(cases.len() >= 9);
    for ((name, case), indexed) in cases.iter().flat_map(|c| [(c, false), (c, true)]) {
        let route = cut(case["map"].as_str().expect("map"), case["route"].as_str().expect("route"), indexed);
        let expected = case["pieces"].as_array().expect("pieces");
        assert_eq!(
            route.legs.len(),
            expected.len(),
            "{name} (indexed: {indexed}): {:?}",
            route.legs.iter().map(|l| &l.terrain).collect::<Vec<_>>()
        );
        for (k, (leg, piece)) in route.legs.iter().zip(expected).enumerate() {
            assert_eq!(leg.terrain, piece["terrain"].as_str().expect("terrain"), "{name} piece {k}");
            let (first, last) = (leg.points[0], leg.points[leg.points.len() - 1]);
            for (got, want) in [(first, &piece["from"]), (last, &piece["to"])] {
                assert_relative_eq!(got[0], f(&want[0]), epsilon = 1e-9);
                assert_relative_eq!(got[1], f(&want[1]), epsilon = 1e-9);
            }
            let length_m: f64 = leg.points.windows(2).map(|w| (w[1][0] - w[0][0]).hypot(w[1][1] - w[0][1])).sum();
            assert_relative_eq!(length_m, f(&piece["length_m"]), epsilon = 1e-9);
            assert!(leg.points.len() >= 2, "{name} piece {k}");
            assert!(leg.points.windows(2).all(|w| (w[1][0] - w[0][0]).hypot(w[1][1] - w[0][1]) >= 1e-3));
            if expected.len() > 1 {
                assert!(
                    leg.name.as_deref().is_some_and(|n| n.ends_with(&format!("(part {})", k + 1))),
                    "{:?}",
                    leg.name
                );
            }
        }
    }
}

#[test]
fn rasters_written_by_tifffile_read_back() {
    // Reference: tifffile 2026.3.3 rasters, values by numpy bilinear interpolation between pixel
    // centres placed by the GeoTIFF 1.0 raster-to-model rules (gen_rasters.py).
    let reference = json("rasters_reference.json");
    for (name, r) in reference["rasters"].as_object().expect("rasters") {
        let raster = Raster::read(&fixture(name), &Limits::default()).unwrap_or_else(|e| panic!("{name}: {e}"));
        let epsg = r["epsg"].as_u64().expect("epsg");
        assert_eq!(u64::from(raster.crs.epsg()), epsg, "{name}");
        if epsg == 4326 {
            assert_eq!(raster.crs, RasterCrs::Wgs84LonLat);
            assert_eq!(raster.pixel_is_point, r["pixel_is_point"].as_bool().expect("flag"), "{name}");
        }
        for s in r["samples"].as_array().expect("samples") {
            let got = raster.sample(f(&s["x"]), f(&s["y"]));
            match s["z"].as_f64() {
                // Float32 storage: values are exact to its rounding, which numpy applied too.
                Some(z) => assert_relative_eq!(got.unwrap_or_else(|e| panic!("{name}: {e:?}")), z, epsilon = 1e-6),
                None => assert_eq!(got, Err(SampleError::NoData), "{name}"),
            }
        }
        for p in r["uncovered"].as_array().into_iter().flatten() {
            assert_eq!(raster.sample(f(&p[0]), f(&p[1])), Err(SampleError::Uncovered), "{name} at {p}");
        }
    }
    let nodata = Raster::read(&fixture("dem_i16_utm33n_nodata.tif"), &Limits::default()).expect("read");
    assert_eq!(nodata.nodata, Some(-32768.0));
    assert_eq!(nodata.crs, RasterCrs::Utm(UtmZone { zone: 33, north: true }));
}

#[test]
fn pixel_is_point_and_pixel_is_area_place_the_same_pixels_alike() {
    // The two fixtures hold the same grid with their pixel centres at the same places, tagged
    // differently (gen_rasters.py). Read naively alike, they would differ by half a pixel:
    // 0.05 m here (500 m/deg x 0.0001 deg / 2 east, 2000 m/deg x 0.0001 deg / 2 north = 0.1 m).
    let area = Raster::read(&fixture("dem_f32_lonlat_area.tif"), &Limits::default()).expect("area");
    let point = Raster::read(&fixture("dem_f32_lonlat_point.tif"), &Limits::default()).expect("point");
    for (x, y) in [(18.95123, 69.65234), (18.9531, 69.6504)] {
        assert_relative_eq!(area.sample(x, y).expect("in"), point.sample(x, y).expect("in"), epsilon = 1e-9);
    }
}

#[test]
fn unusable_rasters_are_refused_naming_what_and_what_to_do() {
    // The messages name the EPSG code, the compression and the bands (gen_rasters.py writes them).
    let reference = json("rasters_reference.json");
    for (name, fragment) in reference["refused"].as_object().expect("refused") {
        let e = Raster::read(&fixture(name), &Limits::default()).expect_err(name).to_string();
        assert!(e.starts_with(&fixture(name).display().to_string()), "{e}");
        assert!(e.contains(fragment.as_str().expect("text")), "{e}");
        assert!(!e.contains('\n'), "{e}");
    }
}

#[test]
fn utm_matches_proj() {
    // Reference: pyproj 3.7.2 (PROJ 9.5.1) EPSG:4326 -> EPSG:326zz/327zz (gen_utm.py); PROJ's
    // extended transverse Mercator and Krueger's series (Karney 2011) agree to nanometres in a
    // zone, and to well under a millimetre 3 degrees beyond it.
    let reference = json("utm_reference.json");
    for p in reference["points"].as_array().expect("points") {
        let zone =
            UtmZone::from_epsg(p["epsg"].as_u64().and_then(|c| u16::try_from(c).ok()).expect("epsg")).expect("utm");
        let (e, n) = zone.to_utm(f(&p["lat_deg"]), f(&p["lon_deg"]));
        assert_relative_eq!(e, f(&p["easting_m"]), epsilon = 1e-7);
        assert_relative_eq!(n, f(&p["northing_m"]), epsilon = 1e-7);
    }
}

//! End-to-end tests of the site inputs (`--terrain-map`, `--elevation`) and the planner file
//! habits (standard input, CRLF, byte-order marks, per-row speeds) through the real binary.

mod common;

use std::path::{Path, PathBuf};

use common::*;

fn fixture(name: &str) -> PathBuf {
    Path::new(env!("CARGO_MANIFEST_DIR")).join("tests").join("fixtures").join("site").join(name)
}

fn fx(name: &str) -> String {
    fixture(name).to_str().expect("utf-8").to_string()
}

/// Runs the binary; returns (exit code, stdout, stderr).
fn go(args: &[&str]) -> (Option<i32>, String, String) {
    let o = run(args);
    (o.status.code(), text(&o.stdout), text(&o.stderr))
}

/// Exit 2 with one line naming `file`; returns the line.
fn refused(args: &[&str], file: &str) -> String {
    let (code, _, err) = go(args);
    assert_eq!(code, Some(2), "{err}");
    assert!(err.starts_with(&format!("skidroute: error: {file}")), "{err}");
    assert_eq!(err.trim_end().lines().count(), 1, "{err}");
    assert!(!err.contains("panicked"), "{err}");
    err
}

/// A lon/lat route over the tifffile lon/lat raster (18.95-18.954 E, 69.65-69.653 N): two legs,
/// the first tagged grass with optional altitudes, the second without a terrain.
fn geo_route(dir: &Path, altitudes: Option<(f64, f64)>) -> PathBuf {
    let c = |lon: f64, lat: f64, z: Option<f64>| match z {
        Some(z) => format!("[{lon}, {lat}, {z}]"),
        None => format!("[{lon}, {lat}]"),
    };
    let (z0, z1) = (altitudes.map(|a| a.0), altitudes.map(|a| a.1));
    let text = format!(
        r#"{{"type": "FeatureCollection", "features": [
        {{"type": "Feature", "properties": {{"terrain": "grass", "name": "up"}},
          "geometry": {{"type": "LineString", "coordinates": [{}, {}]}}}},
        {{"type": "Feature", "properties": {{}},
          "geometry": {{"type": "LineString", "coordinates": [{}, {}]}}}}]}}"#,
        c(18.9505, 69.6505, z0),
        c(18.9520, 69.6515, z1),
        c(18.9520, 69.6515, z1),
        c(18.9535, 69.6525, z1)
    );
    let p = dir.join("hill.geojson");
    std::fs::write(&p, text).expect("write");
    p
}

/// A lon/lat map: gravel over the east part of the raster.
fn geo_map(dir: &Path) -> PathBuf {
    let text = r#"{"type": "FeatureCollection", "features": [{"type": "Feature", "properties": {"terrain": "gravel"},
        "geometry": {"type": "Polygon", "coordinates": [[[18.951, 69.650], [18.954, 69.650], [18.954, 69.653],
        [18.951, 69.653], [18.951, 69.650]]]}}]}"#;
    let p = dir.join("site-map.geojson");
    std::fs::write(&p, text).expect("write");
    p
}

#[test]
fn a_terrain_map_cuts_tags_and_warns_in_every_report() {
    let dir = tempfile::tempdir().expect("tempdir");
    let (route, map) = (geo_route(dir.path(), None), geo_map(dir.path()));
    let (route, map) = (s(&route), s(&map));
    let (code, out, err) = go(&["check", route, "--terrain-map", map, "--json"]);
    assert_eq!(code, Some(0), "{err}");
    let v: serde_json::Value = serde_json::from_str(&out).expect("json");
    let legs = v["routes"][0]["legs"].as_array().expect("legs");
    let seen: Vec<(&str, &str)> =
        legs.iter().map(|l| (l["name"].as_str().unwrap_or("-"), l["terrain"].as_str().unwrap_or(""))).collect();
    assert_eq!(seen, [("up (part 1)", "grass"), ("up (part 2)", "gravel"), ("-", "gravel")]);
    let warnings = v["routes"][0]["warnings"].as_array().expect("warnings");
    assert_eq!(warnings.len(), 1);
    assert!(warnings[0].as_str().unwrap_or("").contains("the route says grass but the terrain map"), "{warnings:?}");
    let (_, table, _) = go(&["check", route, "--terrain-map", map]);
    assert!(table.contains("  warning: leg 1 (feature 0): the route says grass"), "{table}");
    // The route's own terrain where it has one.
    let (code, out, _) = go(&["check", route, "--terrain-map", map, "--prefer-route-terrain", "--json"]);
    assert_eq!(code, Some(0));
    let v: serde_json::Value = serde_json::from_str(&out).expect("json");
    let terrains: Vec<&str> =
        v["routes"][0]["legs"].as_array().expect("legs").iter().map(|l| l["terrain"].as_str().unwrap_or("")).collect();
    assert_eq!(terrains, ["grass", "gravel"]);
    // Without a map the untagged leg is refused.
    let e = refused(&["check", route], route);
    assert!(e.contains("feature 1: has no terrain: give it one"), "{e}");
}

#[test]
fn an_untagged_stretch_outside_the_map_names_its_place() {
    let dir = tempfile::tempdir().expect("tempdir");
    let route = geo_route(dir.path(), None);
    let map = dir.path().join("small.geojson");
    std::fs::write(
        &map,
        r#"{"type": "FeatureCollection", "features": [{"type": "Feature", "properties": {"terrain": "gravel"},
        "geometry": {"type": "Polygon", "coordinates": [[[18.951, 69.650], [18.953, 69.650], [18.953, 69.653],
        [18.951, 69.653], [18.951, 69.650]]]}}]}"#,
    )
    .expect("write");
    let e = refused(&["check", s(&route), "--terrain-map", s(&map)], s(&route));
    assert!(e.contains("feature 1: leg 2 has no terrain of its own and from lon 18.953"), "{e}");
    assert!(e.contains("lies outside every polygon of the terrain map"), "{e}");
}

#[test]
fn a_local_map_with_a_csv_route_and_the_frames_that_do_not_fit() {
    let (route, map) = (fx("route_overlap_straight.csv"), fx("map_overlap.geojson"));
    let (code, out, err) = go(&["check", &route, "--terrain-map", &map, "--map-frame", "local", "--json"]);
    assert!(code == Some(0) || code == Some(1), "{err}");
    let v: serde_json::Value = serde_json::from_str(&out).expect("json");
    assert_eq!(v["routes"][0]["legs"].as_array().expect("legs").len(), 6);
    // Without --map-frame local the map is taken as lon/lat, which a CSV route cannot place.
    let e = refused(&["check", &route, "--terrain-map", &map], &route);
    assert!(e.contains("pass --map-frame local"), "{e}");
    // A metre map read as lon/lat says which flag to pass when its numbers cannot be lon/lat.
    let dir = tempfile::tempdir().expect("tempdir");
    let metres = dir.path().join("metres.geojson");
    std::fs::write(
        &metres,
        r#"{"type": "FeatureCollection", "features": [{"type": "Feature", "properties": {"terrain": "gravel"},
        "geometry": {"type": "Polygon", "coordinates": [[[0, 0], [400, 0], [400, 300], [0, 0]]]}}]}"#,
    )
    .expect("write");
    let e = refused(&["check", &route, "--terrain-map", s(&metres)], s(&metres));
    assert!(e.contains("feature 0: ring 0 point 1: [400, 0] is not [lon, lat]"), "{e}");
}

#[test]
fn an_elevation_raster_fills_altitudes_and_reports_disagreements() {
    let dir = tempfile::tempdir().expect("tempdir");
    let dem = fx("dem_f32_lonlat_area.tif");
    // The raster's plane near the route is about 101-106 m: 104 m agrees, 150 m does not.
    let near = geo_route(dir.path(), Some((101.5, 104.0)));
    let (code, out, err) =
        go(&["check", s(&near), "--elevation", &dem, "--terrain-map", s(&geo_map(dir.path())), "--json"]);
    assert_eq!(code, Some(0), "{err}");
    let v: serde_json::Value = serde_json::from_str(&out).expect("json");
    // Closed form of the fixture's plane (gen_rasters.py): 101.25 m and 104.0 m at the two points.
    let warnings = v["routes"][0]["warnings"].as_array().expect("the map's warning");
    assert!(warnings.iter().all(|w| !w.as_str().unwrap_or("").contains("altitudes")), "{out}");
    // The plane rises 500 m per degree east and 2000 per degree north: the route climbs.
    let grade = v["routes"][0]["legs"][0]["max_uphill_grade_pct"].as_f64().expect("grade");
    assert!(grade > 1.0, "{grade}");
    let far = geo_route(dir.path(), Some((150.0, 150.0)));
    let (_, out, _) = go(&["check", s(&far), "--elevation", &dem, "--terrain-map", s(&geo_map(dir.path())), "--json"]);
    let v: serde_json::Value = serde_json::from_str(&out).expect("json");
    let warnings = v["routes"][0]["warnings"].as_array().expect("warnings");
    let w = warnings.iter().filter_map(|w| w.as_str()).find(|w| w.contains("altitudes")).expect("altitude warning");
    assert!(w.starts_with("leg 1 (feature 0): its altitudes differ from the elevation raster"), "{w}");
    assert!(w.contains("in median"), "{w}");
}

#[test]
fn bad_rasters_and_routes_off_them_are_refused_with_one_line() {
    let dir = tempfile::tempdir().expect("tempdir");
    let route = geo_route(dir.path(), None);
    let map = geo_map(dir.path());
    let (r, m) = (s(&route), s(&map));
    for (tif, fragment) in [
        ("dem_epsg3857.tif", "its coordinate reference system is EPSG:3857"),
        ("dem_lzma.tif", "compressed with LZMA (TIFF compression 34925)"),
        ("dem_rgb.tif", "has 3 bands"),
    ] {
        let e = refused(&["check", r, "--terrain-map", m, "--elevation", &fx(tif)], &fx(tif));
        assert!(e.contains(fragment), "{e}");
    }
    // A route leaving the raster: the leg and the first point beyond it.
    let east = dir.path().join("east.geojson");
    std::fs::write(
        &east,
        r#"{"type": "FeatureCollection", "features": [{"type": "Feature", "properties": {"terrain": "grass"},
        "geometry": {"type": "LineString", "coordinates": [[18.9525, 69.6515], [18.9560, 69.6515]]}}]}"#,
    )
    .expect("write");
    let e = refused(&["check", s(&east), "--elevation", &fx("dem_f32_lonlat_area.tif")], s(&east));
    assert!(e.contains("feature 0: leg 1 leaves the elevation raster"), "{e}");
    assert!(e.contains("at lon 18.954"), "{e}");
    // Nodata under a CSV route in the UTM raster's coordinates (its lower-left block is nodata).
    let csv = dir.path().join("utm.csv");
    std::fs::write(&csv, "x_m,y_m,terrain\n653150,7731850,grass\n653104,7731806,grass\n").expect("write");
    let dem = fx("dem_i16_utm33n_nodata.tif");
    let e = refused(&["check", s(&csv), "--elevation", &dem, "--map-frame", "local"], s(&csv));
    assert!(
        e.contains("line 2: the elevation raster") && e.contains("has no data (nodata value -32768) under leg 1"),
        "{e}"
    );
    let e = refused(&["check", s(&csv), "--elevation", &dem], s(&csv));
    assert!(e.contains("pass --map-frame local"), "{e}");
    let e =
        refused(&["check", s(&csv), "--elevation", &fx("dem_f32_lonlat_area.tif"), "--map-frame", "local"], s(&csv));
    assert!(e.contains("is in lon/lat (EPSG:4326) and a CSV route has no geographic origin"), "{e}");
}

#[test]
fn the_plot_shades_the_map_under_the_route() {
    let dir = tempfile::tempdir().expect("tempdir");
    let (route, map) = (geo_route(dir.path(), None), geo_map(dir.path()));
    let plot = dir.path().join("plot.svg");
    let (code, _, err) = go(&["check", s(&route), "--terrain-map", s(&map), "--plot", s(&plot), "--quiet"]);
    assert_eq!(code, Some(0), "{err}");
    let svg = std::fs::read_to_string(&plot).expect("plot");
    // The gravel fill: the gravel colour (184, 134, 72) two thirds of the way to white.
    let fill = skidroute::report::plot::terrain_fill("gravel");
    let hex = format!("#{:02X}{:02X}{:02X}", fill.0, fill.1, fill.2);
    assert!(svg.contains(&hex) || svg.contains(&hex.to_lowercase()), "no {hex} in the plot");
    assert!(svg.contains("map: gravel"));
}

#[test]
fn a_route_on_standard_input_is_read_and_named() {
    let csv = "\u{feff}x_m,y_m,terrain\r\n0,0,asphalt\r\n10,0,asphalt\r\n";
    let mut child = bin()
        .args(["check", "-", "--json"])
        .stdin(std::process::Stdio::piped())
        .stdout(std::process::Stdio::piped())
        .spawn()
        .expect("spawn");
    use std::io::Write;
    child.stdin.take().expect("stdin").write_all(csv.as_bytes()).expect("write");
    let out = child.wait_with_output().expect("wait");
    assert_eq!(out.status.code(), Some(0));
    let v: serde_json::Value = serde_json::from_slice(&out.stdout).expect("json");
    assert_eq!(v["routes"][0]["source"], "<stdin>");
    // GeoJSON, told by its content, and an error named after <stdin>.
    let geo = r#"  {"type": "FeatureCollection", "features": [{"type": "Feature", "properties": {"terrain": "grass"},
        "geometry": {"type": "LineString", "coordinates": [[18.95, 69.65], [18.951, 69.65], [18.951, 69.65]]}}]}"#;
    let mut child = bin()
        .args(["check", "-"])
        .stdin(std::process::Stdio::piped())
        .stderr(std::process::Stdio::piped())
        .spawn()
        .expect("spawn");
    child.stdin.take().expect("stdin").write_all(geo.as_bytes()).expect("write");
    let out = child.wait_with_output().expect("wait");
    assert_eq!(out.status.code(), Some(2));
    let e = text(&out.stderr);
    assert!(e.starts_with("skidroute: error: <stdin>: feature 0: points 1 and 2 are 0.0000 m apart"), "{e}");
    // The file-size limit holds while reading.
    let mut child = bin()
        .args(["check", "-", "--max-file-mib", "1"])
        .stdin(std::process::Stdio::piped())
        .stderr(std::process::Stdio::piped())
        .spawn()
        .expect("spawn");
    let big = "x_m,y_m,terrain\n".to_string() + &"1,1,grass\n".repeat(120_000);
    let _ = child.stdin.take().expect("stdin").write_all(big.as_bytes());
    let out = child.wait_with_output().expect("wait");
    assert_eq!(out.status.code(), Some(2));
    assert!(
        text(&out.stderr).contains("<stdin>: is larger than the file-size limit of 1 MiB"),
        "{}",
        text(&out.stderr)
    );
    let e = refused(&["check", "-", "-"], "<stdin>");
    assert!(e.contains("named more than once"), "{e}");
}

#[test]
fn json_lines_carry_the_route_read_from_standard_input() {
    use std::io::Write;
    let dir = tempfile::tempdir().expect("tempdir");
    let bad = dir.path().join("bad.csv");
    std::fs::write(&bad, "x_m,y_m,terrain\n0,0,lava\n10,0,lava\n").expect("write");
    let csv = "x_m,y_m,terrain\r\n0,0,asphalt\r\n10,0,asphalt\r\n";
    for keep_going in [false, true] {
        let mut args = vec!["check", "-", "--format", "jsonl"];
        if keep_going {
            args.extend(["--keep-going", bad.to_str().expect("utf-8")]);
        }
        let mut child = bin()
            .args(&args)
            .stdin(std::process::Stdio::piped())
            .stdout(std::process::Stdio::piped())
            .stderr(std::process::Stdio::piped())
            .spawn()
            .expect("spawn");
        child.stdin.take().expect("stdin").write_all(csv.as_bytes()).expect("write");
        let out = child.wait_with_output().expect("wait");
        assert_eq!(out.status.code(), Some(if keep_going { 2 } else { 0 }), "{}", text(&out.stderr));
        let lines: Vec<serde_json::Value> =
            text(&out.stdout).lines().map(|l| serde_json::from_str(l).expect("json line")).collect();
        // The standard-input route first (input order), then the bad file's error line.
        assert_eq!(lines.len(), if keep_going { 2 } else { 1 }, "{}", text(&out.stdout));
        assert_eq!(lines[0]["source"], "<stdin>");
        if keep_going {
            assert_eq!(lines[1]["format"], "skidroute-check-error/1");
        }
    }
    // `-` as input is standard input and as output standard output: not the same file.
    let mut child = bin()
        .args(["check", "-", "--report", "-"])
        .stdin(std::process::Stdio::piped())
        .stdout(std::process::Stdio::piped())
        .stderr(std::process::Stdio::piped())
        .spawn()
        .expect("spawn");
    child.stdin.take().expect("stdin").write_all(csv.as_bytes()).expect("write");
    let out = child.wait_with_output().expect("wait");
    assert_eq!(out.status.code(), Some(0), "{}", text(&out.stderr));
    let v: serde_json::Value = serde_json::from_slice(&out.stdout).expect("json report on stdout");
    assert_eq!(v["routes"][0]["source"], "<stdin>");
}

#[test]
fn crlf_files_report_the_right_line() {
    let dir = tempfile::tempdir().expect("tempdir");
    let p = dir.path().join("crlf.csv");
    // The bad cell is on line 6 (header on line 1).
    std::fs::write(&p, "x_m,y_m,terrain\r\n0,0,grass\r\n1,0,grass\r\n2,0,grass\r\n3,0,grass\r\n4,x,grass\r\n")
        .expect("write");
    let e = refused(&["check", s(&p)], s(&p));
    assert!(e.contains(": line 6: column y_m: 'x' is not a number"), "{e}");
}

#[test]
fn a_planner_speed_ramp_on_every_row_checks_as_one_leg() {
    // 300 rows, speed ramping from 0.3 to 1.5 m/s: once refused ("leg has 1 point").
    let dir = tempfile::tempdir().expect("tempdir");
    let p = dir.path().join("ramp.csv");
    let mut text = String::from("x_m,y_m,terrain,speed_mps\n");
    for i in 0..300 {
        text.push_str(&format!("{},0,asphalt,{:.4}\n", 0.5 * i as f64, 0.3 + 1.2 * i as f64 / 299.0));
    }
    std::fs::write(&p, text).expect("write");
    let (code, out, err) = go(&["check", s(&p), "--json"]);
    assert_eq!(code, Some(0), "{err}");
    let v: serde_json::Value = serde_json::from_str(&out).expect("json");
    let legs = v["routes"][0]["legs"].as_array().expect("legs");
    assert_eq!(legs.len(), 1);
    // The leg's nominal speed is the profile's largest.
    assert!((legs[0]["speed_mps"].as_f64().expect("speed") - 1.5).abs() < 1e-9);
}

#[test]
fn relax_with_a_terrain_map_writes_the_legs_as_read() {
    let dir = tempfile::tempdir().expect("tempdir");
    let (route, map) = (geo_route(dir.path(), None), geo_map(dir.path()));
    let out = dir.path().join("relaxed.geojson");
    let (code, _, err) = go(&["relax", s(&route), "--out", s(&out), "--terrain-map", s(&map), "--quiet"]);
    assert_eq!(code, Some(0), "{err}");
    let written = skidroute::route::read_routes(&out).expect("reads back");
    assert_eq!(written[0].legs.len(), 2);
    assert_eq!(written[0].legs[0].terrain, "grass");
    assert!(!written[0].legs[1].has_terrain());
}

#[test]
fn relax_keeps_a_per_row_speed_profile() {
    // A sharp corner on deep snow (the demo carrier cannot turn it) with the speed changing per
    // row; the relaxed file must read back with a speed on every row of the new path.
    let dir = tempfile::tempdir().expect("tempdir");
    let p = dir.path().join("corner.csv");
    let mut text = String::from("x_m,y_m,terrain,speed_mps\r\n");
    for i in 0..=30 {
        text.push_str(&format!("{i},0,deep-snow,{:.2}\r\n", 0.6 + 0.01 * f64::from(i)));
    }
    for j in 1..=30 {
        text.push_str(&format!("30,{j},deep-snow,{:.2}\r\n", 0.9 - 0.01 * f64::from(j)));
    }
    std::fs::write(&p, text).expect("write");
    let out = dir.path().join("relaxed.csv");
    let (code, _, err) = go(&["relax", s(&p), "--out", s(&out), "--quiet"]);
    assert!(code == Some(0) || code == Some(1), "{err}");
    let routes = skidroute::route::read_routes(&out).expect("reads back");
    let leg = &routes[0].legs[0];
    assert_eq!(routes[0].legs.len(), 1);
    let profile = leg.speeds_mps.as_ref().expect("a profile");
    assert_eq!(profile.len(), leg.points.len());
    assert!(leg.points.len() > 61, "the corner was not replaced by an arc");
    // Relax only lowers speeds: none above the input's largest, 0.9 m/s.
    assert!(profile.iter().all(|&v| v > 0.0 && v <= 0.9 + 1e-9), "{profile:?}");
}

/// Five routes on the tilted plane of `dem_side_slope_utm33n.tif` (gen_side_slope.py: z rises
/// 27 % to the north, level east-west), in its UTM easting and northing: three heading east
/// along the contour on packed snow, deep snow and grass (higher ground on the left: cross slope
/// +27 %, no grade), one climbing north on deep snow and one descending south on packed snow.
fn side_slope_routes(dir: &Path) -> PathBuf {
    let mut text = String::from("x_m,y_m,terrain,route\n");
    for terrain in ["packed-snow", "deep-snow", "grass"] {
        text.push_str(&format!("600010,7099940,{terrain},east-{terrain}\n600060,7099940,{terrain},east-{terrain}\n"));
    }
    text.push_str("600030,7099890,deep-snow,north\n600030,7099990,deep-snow,north\n");
    text.push_str("600090,7099990,packed-snow,south\n600090,7099890,packed-snow,south\n");
    let p = dir.join("slopes.csv");
    std::fs::write(&p, text).expect("write");
    p
}

#[test]
fn a_tilted_plane_raster_gives_the_cross_slope_and_grade_their_verdicts() {
    let dir = tempfile::tempdir().expect("tempdir");
    let route = side_slope_routes(dir.path());
    let dem = fx("dem_side_slope_utm33n.tif");
    let args = ["check", s(&route), "--elevation", &dem, "--map-frame", "local", "--json"];
    let (code, out, err) = go(&args);
    assert_eq!(code, Some(1), "{err}");
    let v: serde_json::Value = serde_json::from_str(&out).expect("json");
    let routes = v["routes"].as_array().expect("routes");
    let by_name = |name: &str| routes.iter().find(|r| r["route"] == name).unwrap_or_else(|| panic!("{name}"));
    let leg = |name: &str| &by_name(name)["legs"][0];
    let reasons = |name: &str| -> Vec<String> {
        leg(name)["reasons"].as_array().expect("reasons").iter().filter_map(|r| r.as_str().map(String::from)).collect()
    };
    // The plane z = 100 + 0.27 (N - N0) (gen_side_slope.py): heading east the left normal points
    // north, so the cross slope is +0.27 and the grade 0; heading north the grade is 0.27 and the
    // cross slope 0.
    for terrain in ["packed-snow", "deep-snow", "grass"] {
        let l = leg(&format!("east-{terrain}"));
        assert!((l["max_cross_slope_pct"].as_f64().expect("pct") - 27.0).abs() < 1e-6, "{l}");
        assert!(l["max_uphill_grade_pct"].as_f64().expect("grade").abs() < 1e-6, "{l}");
    }
    assert!(leg("north")["max_cross_slope_pct"].as_f64().expect("pct").abs() < 1e-6);
    assert!((leg("north")["max_uphill_grade_pct"].as_f64().expect("grade") - 27.0).abs() < 1e-6);
    assert!((leg("south")["max_downhill_grade_pct"].as_f64().expect("grade") - 27.0).abs() < 1e-6);
    // Thresholds from the terrains' traction coefficients (the lateral grip; Wong 2008, a
    // vehicle on a side slope slides when tan(phi) > mu): packed snow holds up to 30 %, so 27 %
    // is 90 % of it, above the 80 % caution share; deep snow (25 %) fails; grass (55 %) passes.
    let mu = |t: &str| skidroute::vehicle::Profile::demo().terrain[t].traction_coefficient;
    let packed = format!(
        "cross slope 27 % at 0 m along the route uses {:.0} % of the {:.0} % packed-snow holds before the vehicle \
         slides sideways",
        100.0 * 0.27 / mu("packed-snow"),
        100.0 * mu("packed-snow")
    );
    assert_eq!(leg("east-packed-snow")["verdict"], "caution", "{:?}", reasons("east-packed-snow"));
    assert!(reasons("east-packed-snow").contains(&packed), "{packed} not in {:?}", reasons("east-packed-snow"));
    assert_eq!(leg("east-deep-snow")["verdict"], "fail");
    let deep = format!(
        "cross slope 27 % at 0 m along the route: the vehicle slides sideways; deep-snow holds up to {:.0} %",
        100.0 * mu("deep-snow")
    );
    assert!(reasons("east-deep-snow").iter().any(|r| r.starts_with(&deep)), "{deep}: {:?}", reasons("east-deep-snow"));
    assert!(reasons("east-grass").iter().all(|r| !r.contains("cross slope")), "{:?}", reasons("east-grass"));
    // The grade from the raster: deep snow cannot take the 27 % climb. Per side f_r N / 2 +
    // W sin(g) / 2 against mu N / 2, N = W cos(g) (Wong 2008, grade resistance), W = 480 kg x g.
    let w = 480.0 * 9.80665;
    let (sin, cos) = (0.27 / 1.0729_f64.sqrt(), 1.0 / 1.0729_f64.sqrt());
    let need = 0.15 * w * cos / 2.0 + w * sin / 2.0;
    let climb = format!(
        "cannot climb: the 27 % grade (0 m along the route) with rolling resistance needs {need:.0} N per side"
    );
    assert!(reasons("north").iter().any(|r| r.starts_with(&climb)), "{climb}: {:?}", reasons("north"));
    // Going down it on packed snow needs |f_r - tan g| = 0.21 of traction.
    assert!((leg("south")["traction_coefficient_needed"].as_f64().expect("mu") - 0.21).abs() < 1e-9);
    // The table has the column.
    let (_, table, _) = go(&["check", s(&route), "--elevation", &dem, "--map-frame", "local"]);
    assert!(table.contains("slope %"), "{table}");
    // Without the raster no leg has a cross slope, and the column is left out.
    let (_, flat, _) = go(&["check", s(&route), "--map-frame", "local"]);
    assert!(flat.contains("verdict") && !flat.contains("slope %"), "{flat}");
}

#[test]
fn the_hillside_example_reads_as_its_readme_says() {
    // example-routes/gen_hillside.py: z = 430 + 25 exp(-r^2 / (2 x 55^2)) m; on the route's 60 m
    // contour the slope across it is 25 r / 55^2 exp(-r^2 / (2 x 55^2)) (the derivative of the
    // Gaussian), 27.35 %, up to the raster's 2 m pixels and bilinear interpolation.
    let r: f64 = 60.0;
    let expected_pct = 100.0 * 25.0 * r / 55.0_f64.powi(2) * (-r * r / (2.0 * 55.0 * 55.0)).exp();
    assert!((expected_pct - 27.35).abs() < 0.01, "{expected_pct}");
    let ex = |name: &str| Path::new(env!("CARGO_MANIFEST_DIR")).join("example-routes").join(name);
    let (route, map, dem) = (ex("hillside-traverse.geojson"), ex("hillside-map.geojson"), ex("hillside-dem.tif"));
    let (code, out, err) = go(&["check", s(&route), "--terrain-map", s(&map), "--elevation", s(&dem), "--json"]);
    assert_eq!(code, Some(1), "{err}");
    let v: serde_json::Value = serde_json::from_str(&out).expect("json");
    let legs = v["routes"][0]["legs"].as_array().expect("legs");
    let seen: Vec<(&str, &str)> =
        legs.iter().map(|l| (l["terrain"].as_str().unwrap_or(""), l["verdict"].as_str().unwrap_or(""))).collect();
    assert_eq!(
        seen,
        [
            ("grass", "pass"),
            ("packed-snow", "caution"),
            ("deep-snow", "fail"),
            ("packed-snow", "caution"),
            ("grass", "pass")
        ]
    );
    for l in legs {
        let pct = l["max_cross_slope_pct"].as_f64().expect("cross slope");
        assert!((pct - expected_pct).abs() < 0.2, "{pct} vs {expected_pct}");
        assert!(l["max_uphill_grade_pct"].as_f64().expect("grade") < 0.5, "{l}");
    }
    // Without the raster the route is level and passes.
    let (code, _, err) = go(&["check", s(&route), "--terrain-map", s(&map), "--quiet"]);
    assert_eq!(code, Some(0), "{err}");
}

//! Reports of a drift run (docs/method.md, Drift): the terminal table, the JSON document
//! (`"format": "skidroute-drift/1"`) and the ellipses as GeoJSON polygons in lon/lat.
//!
//! The error at a leg end is the true position minus the position the vehicle believes it is
//! at, when it believes it has reached the leg end. Along-track is positive ahead of the
//! believed position, cross-track positive to its left, both relative to the plan's direction at
//! the leg end. Lengths in metres; angles in the JSON in radians, in the table and GeoJSON
//! properties in degrees.

use std::fmt::Write;
use std::path::{Path, PathBuf};

use comfy_table::{presets, Cell, CellAlignment, ContentArrangement, Table};
use serde::Serialize;
use serde_json::{json, Value};

use super::{write_atomic, ReportError};
use crate::drift::{DriftReport, LegDrift};
use crate::route::Route;
use crate::CAUTION;

/// Format tag of the drift document.
pub const DRIFT_FORMAT: &str = "skidroute-drift/1";

/// Segments of an ellipse or circle outline in the GeoJSON output.
const OUTLINE_SEGMENTS: usize = 72;

/// Where the file outputs of a drift run go; `None` skips an output.
#[derive(Debug, Clone, Default)]
pub struct DriftOutputs {
    pub report_json: Option<PathBuf>,
    pub plot: Option<PathBuf>,
    pub ellipses_geojson: Option<PathBuf>,
    /// A terrain map to shade under the plan on the plot.
    pub terrain_map: Option<std::sync::Arc<crate::site::TerrainMap>>,
}

impl DriftOutputs {
    /// All output paths that are set.
    pub fn paths(&self) -> impl Iterator<Item = &PathBuf> {
        [&self.report_json, &self.plot, &self.ellipses_geojson].into_iter().flatten()
    }
}

/// Writes every requested file output of a drift run. The ellipses need a GeoJSON route.
pub fn write_drift_outputs(
    route: &Route,
    report: &DriftReport,
    demo_profile: bool,
    out: &DriftOutputs,
) -> Result<(), ReportError> {
    if let Some(p) = &out.ellipses_geojson {
        let text = ellipses_geojson(route, report).map_err(|what| ReportError::Output { file: p.clone(), what })?;
        write_atomic(p, text.as_bytes())?;
    }
    if let Some(p) = &out.report_json {
        write_atomic(p, drift_json(report, demo_profile).as_bytes())?;
    }
    if let Some(p) = &out.plot {
        let polygons = super::plot::map_polygons(out.terrain_map.as_deref(), route.origin.as_ref());
        super::drift_plot::write_drift_plot(route, report, demo_profile, &polygons, p)?;
    }
    Ok(())
}

#[derive(Serialize)]
struct DriftDocument<'a> {
    format: &'static str,
    demo_profile: bool,
    #[serde(flatten)]
    report: &'a DriftReport,
    caution: &'static str,
}

/// The JSON document of a drift run, pretty-printed, ending in a newline.
pub fn drift_json(report: &DriftReport, demo_profile: bool) -> String {
    let doc = DriftDocument { format: DRIFT_FORMAT, demo_profile, report, caution: CAUTION };
    let mut s = serde_json::to_string_pretty(&doc).unwrap_or_else(|e| format!("{{\"error\": \"{e}\"}}"));
    s.push('\n');
    s
}

fn num(x: f64, decimals: usize) -> Cell {
    Cell::new(format!("{x:.decimals$}")).set_alignment(CellAlignment::Right)
}

fn leg_row(l: &LegDrift) -> Vec<Cell> {
    let label = match &l.name {
        Some(n) => format!("{} {}", l.index, n),
        None => l.index.to_string(),
    };
    let mut row = vec![Cell::new(label), Cell::new(&l.terrain), num(l.distance_m, 0)];
    match &l.stats {
        Some(s) => row.extend([
            num(s.bias_along_m, 2),
            num(s.bias_cross_m, 2),
            num(s.cep50_m, 2),
            num(s.cep95_m, 2),
            num(s.ellipse95.semi_major_m, 2),
            num(s.ellipse95.semi_minor_m, 2),
            num(s.ellipse95.orientation_rad.to_degrees(), 0),
            num(s.heading_sd_deg, 1),
        ]),
        None => row.push(Cell::new("no sample reached this leg end")),
    }
    row
}

/// Renders a drift run for a terminal.
pub fn drift_table(report: &DriftReport, demo_profile: bool) -> String {
    let mut out = String::new();
    let profile = if demo_profile { " (built-in demo profile; pass --vehicle FILE for your own)" } else { "" };
    let _ = writeln!(out, "vehicle: {}{profile}", report.vehicle);
    let _ = writeln!(out, "route '{}' from {}", report.route, crate::limits::printable(&report.source));
    let _ = writeln!(
        out,
        "localization lost at the start of leg {} ({:.0} m along the route); dead reckoning: {}; {} samples, seed {}",
        report.lost_from_leg, report.loss_start_m, report.sources, report.samples, report.seed
    );
    let mut t = Table::new();
    t.load_style(presets::UTF8_FULL_CONDENSED).set_content_arrangement(ContentArrangement::Disabled);
    t.set_header(vec![
        "leg",
        "terrain",
        "since loss\nm",
        "bias along\nm",
        "bias across\nm",
        "CEP50\nm",
        "CEP95\nm",
        "95% ellipse\nhalf-length m",
        "95% ellipse\nhalf-width m",
        "ellipse axis\ndeg from east",
        "heading\nsd deg",
    ]);
    for l in &report.legs {
        t.add_row(leg_row(l));
    }
    let _ = writeln!(out, "{t}");
    let _ = writeln!(
        out,
        "error = true position minus the position the vehicle believes it is at when it believes it has \
         reached the leg end;\nalong is positive ahead, across positive to the left; CEP50/CEP95: half / 95 % \
         of samples lie within this distance."
    );
    for w in &report.warnings {
        let _ = writeln!(out, "warning: {w}");
    }
    if report.timed_out > 0 {
        let _ = writeln!(
            out,
            "{} of {} samples did not finish within the time bound; leg ends they did not reach are left out.",
            report.timed_out, report.samples
        );
    }
    let _ = writeln!(out, "\ncaution: {CAUTION}");
    out
}

/// Rounds a degree value to 1e-9 degrees (about 0.1 mm), which keeps files small and stable.
fn round_deg(x: f64) -> f64 {
    (x * 1e9).round() / 1e9
}

fn ring_lonlat(route_origin: &crate::route::GeoOrigin, pts: &[[f64; 2]]) -> Vec<Value> {
    pts.iter()
        .map(|p| {
            let (lon, lat, _) = route_origin.to_geodetic(p[0], p[1], 0.0);
            json!([round_deg(lon), round_deg(lat)])
        })
        .collect()
}

fn circle(centre: [f64; 2], radius_m: f64) -> Vec<[f64; 2]> {
    (0..=OUTLINE_SEGMENTS)
        .map(|k| {
            let t = std::f64::consts::TAU * k as f64 / OUTLINE_SEGMENTS as f64;
            [centre[0] + radius_m * t.cos(), centre[1] + radius_m * t.sin()]
        })
        .collect()
}

/// Polygon of a closed outline, or the centre as a Point when the outline has no area (a
/// degenerate polygon is not valid GeoJSON).
fn area_geometry(origin: &crate::route::GeoOrigin, outline: &[[f64; 2]], centre: [f64; 2], size_m: f64) -> Value {
    if size_m < 1e-3 {
        let (lon, lat, _) = origin.to_geodetic(centre[0], centre[1], 0.0);
        return json!({ "type": "Point", "coordinates": [round_deg(lon), round_deg(lat)] });
    }
    json!({ "type": "Polygon", "coordinates": [ring_lonlat(origin, outline)] })
}

/// The ellipses of a drift run as a GeoJSON FeatureCollection in lon/lat (RFC 7946): per leg
/// end, the 95 % ellipse about the mean true position (`"kind": "ellipse95"`) and the CEP95
/// circle about the leg end (`"kind": "cep95"`). Rings run anticlockwise. Only for routes read
/// from GeoJSON, whose projection origin is known.
pub fn ellipses_geojson(route: &Route, report: &DriftReport) -> Result<String, String> {
    let Some(origin) = route.origin else {
        return Err(format!(
            "route '{}' was read from CSV in a local map frame, which has no geographic origin; \
             use --json for the ellipses in local metres",
            route.name
        ));
    };
    let mut features = Vec::new();
    for l in &report.legs {
        let Some(s) = &l.stats else { continue };
        let end = [l.end_east_m, l.end_north_m];
        let centre = [end[0] + s.bias_east_m, end[1] + s.bias_north_m];
        let props = |kind: &str| {
            json!({
                "kind": kind,
                "route": report.route,
                "leg": l.index,
                "name": l.name,
                "terrain": l.terrain,
                "distance_m": l.distance_m,
                "bias_along_m": s.bias_along_m,
                "bias_cross_m": s.bias_cross_m,
                "cep50_m": s.cep50_m,
                "cep95_m": s.cep95_m,
                "semi_major_m": s.ellipse95.semi_major_m,
                "semi_minor_m": s.ellipse95.semi_minor_m,
                "orientation_deg": s.ellipse95.orientation_rad.to_degrees(),
                "samples": l.samples_reached,
            })
        };
        let outline = s.ellipse95.outline(centre, OUTLINE_SEGMENTS);
        features.push(json!({
            "type": "Feature",
            "properties": props("ellipse95"),
            "geometry": area_geometry(&origin, &outline, centre, s.ellipse95.semi_minor_m),
        }));
        features.push(json!({
            "type": "Feature",
            "properties": props("cep95"),
            "geometry": area_geometry(&origin, &circle(end, s.cep95_m), end, s.cep95_m),
        }));
    }
    let doc = json!({ "type": "FeatureCollection", "features": features });
    let mut s = serde_json::to_string(&doc).map_err(|e| e.to_string())?;
    s.push('\n');
    Ok(s)
}

/// Checks an output path's extension early, before a long run (plots: `.svg` or `.png`).
pub fn check_plot_extension(path: &Path) -> Result<(), ReportError> {
    let ext = path.extension().and_then(|e| e.to_str()).unwrap_or("").to_ascii_lowercase();
    match ext.as_str() {
        "svg" | "png" => Ok(()),
        _ => Err(ReportError::Output {
            file: path.to_path_buf(),
            what: format!("unknown plot format '.{ext}': expected .svg or .png"),
        }),
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::drift::{run_drift, DriftSettings, Odometry};
    use crate::progress::NoProgress;
    use crate::route::{GeoOrigin, Leg, SourcePosition};
    use crate::vehicle::Profile;

    fn small_run(origin: Option<GeoOrigin>) -> (Route, DriftReport) {
        let leg = |terrain: &str, points: Vec<[f64; 2]>| Leg {
            name: Some("a leg".into()),
            ..Leg::new(terrain, points, SourcePosition::Feature(0))
        };
        let route = Route {
            name: "r".into(),
            source: "r.geojson".into(),
            origin,
            legs: vec![leg("gravel", vec![[0.0, 0.0], [15.0, 0.0]]), leg("grass", vec![[15.0, 0.0], [15.0, 10.0]])],
            warnings: Vec::new(),
        };
        let settings = DriftSettings {
            samples: 30,
            seed: 3,
            odometry: Odometry::Ideal,
            paths_kept: 5,
            ..DriftSettings::default()
        };
        let report = run_drift(&route, &Profile::demo(), &settings, &NoProgress).expect("run");
        (route, report)
    }

    #[test]
    fn json_has_the_documented_keys() {
        let (_, report) = small_run(None);
        let v: Value = serde_json::from_str(&drift_json(&report, true)).expect("json");
        assert_eq!(v["format"], DRIFT_FORMAT);
        assert_eq!(v["seed"], 3);
        assert_eq!(v["samples"], 30);
        assert_eq!(v["odometry"], "ideal");
        assert_eq!(v["caution"], CAUTION);
        let leg = &v["legs"][1];
        assert_eq!(leg["index"], 2);
        assert_eq!(leg["terrain"], "grass");
        for key in ["distance_m", "bias_along_m", "bias_cross_m", "cep50_m", "cep95_m"] {
            assert!(leg[key].is_number(), "{key}: {leg}");
        }
        for key in ["semi_major_m", "semi_minor_m", "orientation_rad"] {
            assert!(leg["ellipse95"][key].is_number(), "{key}");
        }
    }

    #[test]
    fn table_names_units_and_caution() {
        let (_, report) = small_run(None);
        let t = drift_table(&report, true);
        assert!(t.contains("CEP95\nm") || t.contains("CEP95"), "{t}");
        assert!(t.contains("built-in demo profile"));
        assert!(t.contains(CAUTION));
    }

    #[test]
    fn ellipses_are_closed_anticlockwise_rings_in_lon_lat() {
        let (route, report) = small_run(Some(GeoOrigin::new(60.0, 10.0, 0.0)));
        let v: Value = serde_json::from_str(&ellipses_geojson(&route, &report).expect("geojson")).expect("json");
        let features = v["features"].as_array().expect("features");
        assert_eq!(features.len(), 4);
        let ring = features[0]["geometry"]["coordinates"][0].as_array().expect("ring");
        assert_eq!(ring.first(), ring.last());
        let pts: Vec<(f64, f64)> =
            ring.iter().map(|p| (p[0].as_f64().expect("lon"), p[1].as_f64().expect("lat"))).collect();
        // Shoelace: positive signed area means anticlockwise (RFC 7946 exterior ring).
        let area: f64 = pts.windows(2).map(|w| w[0].0 * w[1].1 - w[1].0 * w[0].1).sum();
        assert!(area > 0.0);
        assert!((pts[0].0 - 10.0).abs() < 0.01 && (pts[0].1 - 60.0).abs() < 0.01);
        let (csv_route, _) = small_run(None);
        assert!(ellipses_geojson(&csv_route, &report).expect_err("no origin").contains("no geographic origin"));
    }
}

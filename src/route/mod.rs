//! Planned routes: reading GeoJSON (RFC 7946, lon/lat on WGS 84) and local-frame CSV, projecting
//! to local metres (x east, y north) once at read time, and the plan geometry used downstream.
//! Nothing after this module sees degrees.

pub mod enu;
pub mod plan;
mod read_csv;
mod read_geojson;

use std::path::{Path, PathBuf};

pub use enu::GeoOrigin;
pub use plan::{Cursor, PlanPath};

/// Where in the input file a leg came from, for error messages and reports.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum SourcePosition {
    /// Index of the GeoJSON feature in the collection's `features` array (0-based).
    Feature(usize),
    /// 1-based line number in a CSV file (the header is line 1) of the leg's first point.
    Line(usize),
}

impl std::fmt::Display for SourcePosition {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        match self {
            SourcePosition::Feature(i) => write!(f, "feature {i}"),
            SourcePosition::Line(n) => write!(f, "line {n}"),
        }
    }
}

/// One leg of a planned route: a polyline on one terrain with one target speed and corridor.
#[derive(Debug, Clone, PartialEq)]
pub struct Leg {
    pub name: Option<String>,
    /// Key of the profile's `[terrain.*]` table.
    pub terrain: String,
    /// Target speed; `None` means the profile's cruise speed.
    pub speed_mps: Option<f64>,
    /// Allowed lateral deviation either side; `None` means the profile's default.
    pub corridor_m: Option<f64>,
    /// Plan points in the local frame, metres (x east, y north). At least 2, no two consecutive equal.
    pub points: Vec<[f64; 2]>,
    /// Altitude of each point (same length as `points`) when the input carried one.
    pub altitude_m: Option<Vec<f64>>,
    pub position: SourcePosition,
}

/// A route: legs in driving order, each joining the next.
#[derive(Debug, Clone, PartialEq)]
pub struct Route {
    /// The `route` property/column value, or the file stem when absent.
    pub name: String,
    pub source: PathBuf,
    /// Projection origin for GeoJSON input (the first point of the file); `None` for CSV input,
    /// whose coordinates are already in the planner's local map frame.
    pub origin: Option<GeoOrigin>,
    pub legs: Vec<Leg>,
}

/// Largest gap allowed between the end of one leg and the start of the next (DESIGN 4).
pub const JOIN_TOLERANCE_M: f64 = 0.5;
/// Two consecutive plan points closer than this are a duplicate point (an input error).
pub const DUPLICATE_POINT_M: f64 = 1e-3;

/// An input problem in a route file. Every message names the file and the feature or line.
#[derive(Debug, thiserror::Error)]
pub enum RouteError {
    #[error("{file}: cannot read: {source}")]
    Io { file: PathBuf, source: std::io::Error },
    #[error("{file}: {what}")]
    File { file: PathBuf, what: String },
    #[error("{file}: {position}: {what}")]
    At { file: PathBuf, position: SourcePosition, what: String },
}

/// Reads every route in a file. The format is chosen by extension: `.geojson`/`.json` or `.csv`.
///
/// A GeoJSON file is projected about its first point (exact WGS 84 geodetic -> ECEF -> ENU).
/// Legs are grouped by their `route` property (in order of first appearance); without it the
/// whole file is one route named after the file stem. Consecutive legs must join within
/// [`JOIN_TOLERANCE_M`].
pub fn read_routes(path: &Path) -> Result<Vec<Route>, RouteError> {
    let ext = path.extension().and_then(|e| e.to_str()).unwrap_or("").to_ascii_lowercase();
    let text = std::fs::read_to_string(path).map_err(|source| RouteError::Io { file: path.to_path_buf(), source })?;
    match ext.as_str() {
        "geojson" | "json" => read_geojson::parse(path, &text),
        "csv" => read_csv::parse(path, &text),
        _ => Err(RouteError::File {
            file: path.to_path_buf(),
            what: format!("unknown route format '.{ext}': expected .geojson, .json or .csv"),
        }),
    }
}

/// Checks that every leg's terrain is one the profile knows; the error names the leg's position
/// and lists the known terrains.
pub fn check_terrains(route: &Route, known: &[&str]) -> Result<(), RouteError> {
    for leg in &route.legs {
        if !known.contains(&leg.terrain.as_str()) {
            return Err(RouteError::At {
                file: route.source.clone(),
                position: leg.position,
                what: format!("unknown terrain '{}': the profile knows {}", leg.terrain, known.join(", ")),
            });
        }
    }
    Ok(())
}

/// The name of the route formed by legs without a `route` property/column: the file stem.
fn file_stem_name(path: &Path) -> String {
    path.file_stem().map_or_else(|| "route".to_string(), |s| s.to_string_lossy().into_owned())
}

/// The first pair of consecutive points (i, i + 1) closer than [`DUPLICATE_POINT_M`], as the
/// index i and the distance between them in metres.
fn find_duplicate_point(points: &[[f64; 2]]) -> Option<(usize, f64)> {
    points.windows(2).enumerate().find_map(|(i, pair)| {
        let distance_m = (pair[1][0] - pair[0][0]).hypot(pair[1][1] - pair[0][1]);
        (distance_m < DUPLICATE_POINT_M).then_some((i, distance_m))
    })
}

/// Groups items by name, groups in order of each name's first appearance, items in input order.
fn group_in_order<T>(items: impl IntoIterator<Item = (String, T)>) -> Vec<(String, Vec<T>)> {
    let mut groups: Vec<(String, Vec<T>)> = Vec::new();
    for (name, item) in items {
        match groups.iter_mut().find(|(existing, _)| *existing == name) {
            Some((_, members)) => members.push(item),
            None => groups.push((name, vec![item])),
        }
    }
    groups
}

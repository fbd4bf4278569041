//! Planned routes: reading GeoJSON (RFC 7946, lon/lat on WGS 84) and local-frame CSV, projecting
//! to local metres (x east, y north) once at read time, and the plan geometry used downstream.
//! Nothing after this module sees degrees.

pub mod enu;
mod geojson_doc;
pub mod plan;
pub mod profile;
mod read_csv;
mod read_geojson;

use std::path::{Path, PathBuf};

use crate::limits::{clip, read_stream_text_limited, read_text_limited, Limits, ReadLimitedError};

pub use enu::GeoOrigin;
pub use plan::{Cursor, GoalCursors, LegSpan, PlanPath, TerrainShare};

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

/// One leg of a planned route: a polyline on one terrain, with its target speed and corridor
/// (one value for the leg, or a profile along it).
///
/// Every per-point vector (`altitude_m`, `speeds_mps`, `corridors_m`, `cross_slope`) has the
/// length of `points` when present; between two points a value is linear in arc length (see
/// [`profile`] for the functions that keep that true when points are inserted or a leg is cut).
#[derive(Debug, Clone, PartialEq)]
pub struct Leg {
    pub name: Option<String>,
    /// Key of the profile's `[terrain.*]` table. Empty while a leg read without a terrain waits
    /// for a terrain map ([`Leg::has_terrain`]); [`check_terrains`] refuses it after that.
    pub terrain: String,
    /// Target speed; `None` means the profile's cruise speed. With a profile (`speeds_mps`) it
    /// is the profile's largest value: the leg's nominal speed.
    pub speed_mps: Option<f64>,
    /// Allowed lateral deviation either side; `None` means the profile's default. With a
    /// profile (`corridors_m`) it is the profile's smallest value.
    pub corridor_m: Option<f64>,
    /// Plan points in the local frame, metres (x east, y north). At least 2, no two consecutive equal.
    pub points: Vec<[f64; 2]>,
    /// Altitude of each point (same length as `points`) when the input or an elevation raster
    /// gave one.
    pub altitude_m: Option<Vec<f64>>,
    /// Target speed at each point, m/s, when it changes along the leg (a planner's speed
    /// profile); `None` when one speed holds for the whole leg (`speed_mps`).
    pub speeds_mps: Option<Vec<f64>>,
    /// Corridor half-width at each point, metres, when it changes along the leg.
    pub corridors_m: Option<Vec<f64>>,
    /// Cross slope of the ground at each point from an elevation raster: the tangent of the
    /// slope angle across the direction of travel, positive when the ground is higher on the
    /// left (README, "Elevation raster").
    pub cross_slope: Option<Vec<f64>>,
    /// For each point, true when it was added after reading (a terrain-map cut or the spacing
    /// of an elevation raster: it lies on a segment of the planner's path), so the plan's
    /// curvature is read on the planner's own vertices only; `None` when every point is the
    /// planner's.
    pub added_points: Option<Vec<bool>>,
    pub position: SourcePosition,
}

impl Leg {
    /// A leg on `terrain` through `points` with no speed, corridor, altitude or profile given
    /// (the profile's defaults apply), at `position`.
    pub fn new(terrain: impl Into<String>, points: Vec<[f64; 2]>, position: SourcePosition) -> Leg {
        Leg {
            name: None,
            terrain: terrain.into(),
            speed_mps: None,
            corridor_m: None,
            points,
            altitude_m: None,
            speeds_mps: None,
            corridors_m: None,
            cross_slope: None,
            position,
            added_points: None,
        }
    }

    /// False while the leg waits for a terrain map to give it a terrain.
    pub fn has_terrain(&self) -> bool {
        !self.terrain.is_empty()
    }
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
    /// Things worth a look that do not stop the check (a route terrain the map disagrees with,
    /// route altitudes far from the elevation raster's), one sentence each.
    pub warnings: Vec<String>,
}

/// Largest gap allowed between the end of one leg and the start of the next (README, Inputs).
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

/// The format of a route file.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum RouteFormat {
    /// RFC 7946 GeoJSON FeatureCollection, lon/lat on WGS 84.
    GeoJson,
    /// Planner CSV in a local map frame.
    Csv,
}

/// The route argument that means standard input.
pub const STDIN_ARG: &str = "-";
/// How messages and reports name a route read from standard input.
pub const STDIN_NAME: &str = "<stdin>";

impl RouteFormat {
    /// The format of route text by its content: GeoJSON when the first character after any
    /// byte-order mark and white space is `{`, CSV otherwise (for standard input, which has no
    /// extension).
    pub fn sniff(text: &str) -> RouteFormat {
        let body = text.strip_prefix('\u{feff}').unwrap_or(text).trim_start();
        if body.starts_with('{') {
            RouteFormat::GeoJson
        } else {
            RouteFormat::Csv
        }
    }

    /// The format named by the file's extension: `.geojson`/`.json` or `.csv` (any case).
    pub fn from_path(path: &Path) -> Result<RouteFormat, RouteError> {
        let ext = path.extension().and_then(|e| e.to_str()).unwrap_or("").to_ascii_lowercase();
        match ext.as_str() {
            "geojson" | "json" => Ok(RouteFormat::GeoJson),
            "csv" => Ok(RouteFormat::Csv),
            _ => Err(RouteError::File {
                file: path.to_path_buf(),
                what: format!("unknown route format '.{ext}': expected .geojson, .json or .csv"),
            }),
        }
    }
}

/// Reads every route in a file with the default [`Limits`]. The format is chosen by extension:
/// `.geojson`/`.json` or `.csv`. The path `-` ([`STDIN_ARG`]) reads standard input instead, its
/// format told by [`RouteFormat::sniff`] and its name in messages `<stdin>`.
///
/// A GeoJSON file is projected about its first point (exact WGS 84 geodetic -> ECEF -> ENU).
/// Legs are grouped by their `route` property (in order of first appearance); without it the
/// whole file is one route named after the file stem. Consecutive legs must join within
/// [`JOIN_TOLERANCE_M`].
pub fn read_routes(path: &Path) -> Result<Vec<Route>, RouteError> {
    read_routes_with(path, &Limits::default())
}

/// [`read_routes`] with explicit limits: the file size is checked before reading, and points
/// per leg, legs per route and points per file while parsing.
pub fn read_routes_with(path: &Path, limits: &Limits) -> Result<Vec<Route>, RouteError> {
    if path == Path::new(STDIN_ARG) {
        let name = Path::new(STDIN_NAME);
        let text = read_stream_text_limited(std::io::stdin().lock(), limits.max_file_bytes).map_err(|e| match e {
            ReadLimitedError::Io(source) => RouteError::Io { file: name.to_path_buf(), source },
            other => RouteError::File { file: name.to_path_buf(), what: other.to_string() },
        })?;
        return parse_route_text(name, &text, RouteFormat::sniff(&text), limits);
    }
    let format = RouteFormat::from_path(path)?;
    let text = read_text_limited(path, limits.max_file_bytes).map_err(|e| match e {
        ReadLimitedError::Io(source) => RouteError::Io { file: path.to_path_buf(), source },
        other => RouteError::File { file: path.to_path_buf(), what: other.to_string() },
    })?;
    parse_route_text(path, &text, format, limits)
}

/// Parses route text already in memory; `path` only names the file in messages, routes without
/// a `route` property and `Route::source`. This is the reader behind [`read_routes`], public for
/// tools that hold the text (and for the fuzz targets).
///
/// ```
/// use std::path::Path;
/// use skidroute::limits::Limits;
/// use skidroute::route::{parse_route_text, RouteFormat};
/// let text = "x_m,y_m,terrain\n0,0,grass\n10,0,grass\n";
/// let routes = parse_route_text(Path::new("yard.csv"), text, RouteFormat::Csv, &Limits::default()).unwrap();
/// assert_eq!(routes[0].legs[0].points.len(), 2);
/// let err = parse_route_text(Path::new("yard.csv"), "x_m,y_m\n", RouteFormat::Csv, &Limits::default());
/// assert!(err.unwrap_err().to_string().starts_with("yard.csv: line 1: "));
/// ```
pub fn parse_route_text(
    path: &Path,
    text: &str,
    format: RouteFormat,
    limits: &Limits,
) -> Result<Vec<Route>, RouteError> {
    match format {
        RouteFormat::GeoJson => read_geojson::parse(path, text, limits),
        RouteFormat::Csv => read_csv::parse(path, text, limits),
    }
}

/// Checks that every leg has a terrain and that the profile knows it; the error names the leg's
/// position and lists the known terrains.
pub fn check_terrains(route: &Route, known: &[&str]) -> Result<(), RouteError> {
    for leg in &route.legs {
        if !leg.has_terrain() {
            return Err(RouteError::At {
                file: route.source.clone(),
                position: leg.position,
                what: "has no terrain: give it one (the terrain property or column), or pass --terrain-map with a map \
                       that covers it"
                    .to_string(),
            });
        }
        if !known.contains(&leg.terrain.as_str()) {
            return Err(RouteError::At {
                file: route.source.clone(),
                position: leg.position,
                what: format!("unknown terrain '{}': the profile knows {}", clip(&leg.terrain), known.join(", ")),
            });
        }
    }
    Ok(())
}

/// The name of the route formed by legs without a `route` property/column: the file stem, with
/// control characters escaped ([`crate::limits::printable`]) like every name read from input.
fn file_stem_name(path: &Path) -> String {
    path.file_stem()
        .map_or_else(|| "route".to_string(), |s| crate::limits::printable(&s.to_string_lossy()).into_owned())
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
/// Linear in the number of items however many distinct names there are (a file can give every
/// row its own route).
fn group_in_order<T>(items: impl IntoIterator<Item = (String, T)>) -> Vec<(String, Vec<T>)> {
    let mut index: std::collections::HashMap<String, usize> = std::collections::HashMap::new();
    let mut groups: Vec<(String, Vec<T>)> = Vec::new();
    for (name, item) in items {
        match index.get(&name) {
            Some(&k) => groups[k].1.push(item),
            None => {
                index.insert(name.clone(), groups.len());
                groups.push((name, vec![item]));
            }
        }
    }
    groups
}

/// Checks the leg count of every route and the number of points in a file against `limits`.
pub(crate) fn check_route_limits(path: &Path, routes: &[Route], limits: &Limits) -> Result<(), RouteError> {
    let mut total = 0usize;
    for route in routes {
        if route.legs.len() > limits.max_legs_per_route {
            let what = format!(
                "route '{}' has {} legs, more than the limit of {} (raise it with --max-legs-per-route or SKIDROUTE_MAX_LEGS_PER_ROUTE)",
                clip(&route.name),
                route.legs.len(),
                limits.max_legs_per_route
            );
            return Err(RouteError::File { file: path.to_path_buf(), what });
        }
        total = total.saturating_add(route.legs.iter().map(|l| l.points.len()).sum::<usize>());
    }
    if total > limits.max_total_points {
        return Err(RouteError::File { file: path.to_path_buf(), what: too_many_total_points(total, limits) });
    }
    Ok(())
}

/// The message for a run or file above the total-points limit.
pub(crate) fn too_many_total_points(total: usize, limits: &Limits) -> String {
    format!(
        "has {total} plan points in all, more than the limit of {} (raise it with --max-total-points or SKIDROUTE_MAX_TOTAL_POINTS)",
        limits.max_total_points
    )
}

/// The message for a leg above the points-per-leg limit.
fn too_many_points(n: usize, limits: &Limits) -> String {
    format!(
        "has {n} points, more than the limit of {} per leg (raise it with --max-points-per-leg or SKIDROUTE_MAX_POINTS_PER_LEG)",
        limits.max_points_per_leg
    )
}

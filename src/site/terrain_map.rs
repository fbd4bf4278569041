//! Reads a terrain map: a GeoJSON FeatureCollection (RFC 7946) of Polygon and MultiPolygon
//! features, each with a `terrain` property (a key of the profile's `[terrain.*]` tables), and
//! places its polygons in a route's local frame.
//!
//! Frames: a geographic map holds [lon, lat] on WGS 84, as RFC 7946 says; it is projected
//! exactly about the route's origin (geodetic -> ECEF -> ENU at the origin's height, as the
//! route's own points without altitude). A local map (`--map-frame local`) holds plain metres
//! in the frame of CSV routes (x east, y north) and is used as is. A local route cannot take a
//! geographic map (it has no geographic origin) and a GeoJSON route cannot take a local map.
//! Polygon rings must be closed; holes are honoured; a third coordinate is ignored. Where
//! polygons overlap, the later feature in the file wins (README, "Terrain map").

use std::path::{Path, PathBuf};

use geo::{Coord, LineString, Polygon};
use geojson::{GeoJson, GeometryValue, JsonValue, Position};

use super::SiteError;
use crate::limits::{clip, read_text_limited, show_number, Limits, ReadLimitedError, MAX_ABS_COORDINATE_M};
use crate::route::GeoOrigin;

/// The frame a terrain map's coordinates are in.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default)]
pub enum MapFrame {
    /// [longitude, latitude] degrees on WGS 84 (RFC 7946).
    #[default]
    Geographic,
    /// Metres in the local frame of CSV routes (x east, y north).
    Local,
}

/// One polygon of the map, in the map's own coordinates.
#[derive(Debug, Clone, PartialEq)]
pub struct MapPolygon {
    /// Index of its feature in the file (0-based).
    pub feature: usize,
    pub terrain: String,
    pub polygon: Polygon<f64>,
}

/// A terrain map as read: polygons in file order (a MultiPolygon gives one per part).
#[derive(Debug, Clone, PartialEq)]
pub struct TerrainMap {
    pub source: PathBuf,
    pub frame: MapFrame,
    pub polygons: Vec<MapPolygon>,
}

impl TerrainMap {
    /// Reads a map file no larger than `limits.max_file_bytes`, with at most
    /// `limits.max_total_points` vertices.
    pub fn read(path: &Path, frame: MapFrame, limits: &Limits) -> Result<TerrainMap, SiteError> {
        let text = read_text_limited(path, limits.max_file_bytes).map_err(|e| match e {
            ReadLimitedError::Io(source) => SiteError::Io { file: path.to_path_buf(), source },
            other => SiteError::File { file: path.to_path_buf(), what: other.to_string() },
        })?;
        TerrainMap::parse(path, &text, frame, limits)
    }

    /// Parses map text; `path` names the file in messages.
    pub fn parse(path: &Path, text: &str, frame: MapFrame, limits: &Limits) -> Result<TerrainMap, SiteError> {
        let file_error = |what: String| SiteError::File { file: path.to_path_buf(), what };
        let text = text.strip_prefix('\u{feff}').unwrap_or(text);
        let features = match text.parse::<GeoJson>() {
            Ok(GeoJson::FeatureCollection(c)) => c.features,
            Ok(_) => return Err(file_error("top level is not a FeatureCollection".to_string())),
            Err(e) => return Err(file_error(format!("not valid GeoJSON: {e}"))),
        };
        let mut polygons = Vec::new();
        let mut vertices = 0usize;
        for (index, feature) in features.iter().enumerate() {
            let at = |what: String| SiteError::MapFeature { file: path.to_path_buf(), feature: index, what };
            let terrain = terrain_of(feature.properties.as_ref()).map_err(at)?;
            let parts: Vec<&Vec<Vec<Position>>> = match feature.geometry.as_ref().map(|g| &g.value) {
                Some(GeometryValue::Polygon { coordinates }) => vec![coordinates],
                Some(GeometryValue::MultiPolygon { coordinates }) => coordinates.iter().collect(),
                Some(other) => {
                    return Err(at(format!("geometry is {}, expected Polygon or MultiPolygon", other.type_name())))
                }
                None => return Err(at("geometry is null, expected Polygon or MultiPolygon".to_string())),
            };
            for rings in parts {
                let polygon = read_polygon(rings, frame).map_err(at)?;
                vertices = vertices.saturating_add(polygon.exterior().0.len());
                vertices = vertices.saturating_add(polygon.interiors().iter().map(|r| r.0.len()).sum::<usize>());
                if vertices > limits.max_total_points {
                    return Err(file_error(format!(
                        "has more than {} vertices in all (raise it with --max-total-points or SKIDROUTE_MAX_TOTAL_POINTS)",
                        limits.max_total_points
                    )));
                }
                polygons.push(MapPolygon { feature: index, terrain: terrain.clone(), polygon });
            }
        }
        if polygons.is_empty() {
            return Err(file_error("has no Polygon or MultiPolygon features".to_string()));
        }
        Ok(TerrainMap { source: path.to_path_buf(), frame, polygons })
    }

    /// The polygons in the local frame of a route with projection origin `origin` (`None`: a
    /// CSV route in its own metres). Frames must match; the message says how to fix it.
    pub fn local_polygons(&self, origin: Option<&GeoOrigin>) -> Result<Vec<MapPolygon>, String> {
        match (self.frame, origin) {
            (MapFrame::Local, None) => Ok(self.polygons.clone()),
            (MapFrame::Geographic, Some(o)) => {
                Ok(self.polygons.iter().map(|p| MapPolygon { polygon: project(&p.polygon, o), ..p.clone() }).collect())
            }
            (MapFrame::Geographic, None) => Err(format!(
                "a CSV route is in a local map frame with no geographic origin, so the lon/lat terrain map {} cannot \
                 be placed on it: give the map in the route's own metres and pass --map-frame local",
                self.source.display()
            )),
            (MapFrame::Local, Some(_)) => Err(format!(
                "--map-frame local places the terrain map {} in a CSV route's own metres; this route is GeoJSON \
                 (lon/lat): give a lon/lat map and drop --map-frame local",
                self.source.display()
            )),
        }
    }
}

fn terrain_of(properties: Option<&geojson::JsonObject>) -> Result<String, String> {
    match properties.and_then(|p| p.get("terrain")) {
        // Shown in plot legends and messages: control characters escaped, like every name read.
        Some(JsonValue::String(s)) if !s.trim().is_empty() => Ok(crate::limits::printable(s.trim()).into_owned()),
        Some(JsonValue::String(_)) | None | Some(JsonValue::Null) => {
            Err("lacks the property terrain (a string naming a terrain of the profile)".to_string())
        }
        Some(_) => Err("property terrain must be a string".to_string()),
    }
}

fn read_polygon(rings: &[Vec<Position>], frame: MapFrame) -> Result<Polygon<f64>, String> {
    let mut read = rings.iter().enumerate().map(|(k, ring)| read_ring(k, ring, frame));
    let exterior = read.next().ok_or("polygon has no rings")??;
    let interiors = read.collect::<Result<Vec<_>, _>>()?;
    Ok(Polygon::new(exterior, interiors))
}

/// A ring: at least 4 positions, closed, every coordinate finite and in range for its frame.
fn read_ring(k: usize, ring: &[Position], frame: MapFrame) -> Result<LineString<f64>, String> {
    if ring.len() < 4 {
        return Err(format!("ring {k} has {} positions, a closed ring needs at least 4", ring.len()));
    }
    let mut coords = Vec::with_capacity(ring.len());
    for (j, position) in ring.iter().enumerate() {
        let (x, y) = match *position.as_slice() {
            [x, y] | [x, y, _] => (x, y),
            ref other => return Err(format!("ring {k} point {j} has {} coordinates, expected 2 or 3", other.len())),
        };
        check_coordinate(k, j, x, y, frame)?;
        coords.push(Coord { x, y });
    }
    if coords.first() != coords.last() {
        return Err(format!("ring {k} is not closed: its last position must repeat its first (RFC 7946)"));
    }
    Ok(LineString::new(coords))
}

fn check_coordinate(k: usize, j: usize, x: f64, y: f64, frame: MapFrame) -> Result<(), String> {
    if !(x.is_finite() && y.is_finite()) {
        return Err(format!("ring {k} point {j} has a coordinate that is not a finite number"));
    }
    match frame {
        MapFrame::Geographic if !((-180.0..=180.0).contains(&x) && (-90.0..=90.0).contains(&y)) => Err(format!(
            "ring {k} point {j}: [{}, {}] is not [lon, lat] in degrees; if the map is in a CSV route's metres, pass \
             --map-frame local",
            clip(&show_number(x)),
            clip(&show_number(y))
        )),
        MapFrame::Local if x.abs() > MAX_ABS_COORDINATE_M || y.abs() > MAX_ABS_COORDINATE_M => {
            Err(format!("ring {k} point {j} is beyond +-{MAX_ABS_COORDINATE_M} m (is it in metres?)"))
        }
        _ => Ok(()),
    }
}

/// Projects a lon/lat polygon about `origin` at the origin's height.
fn project(polygon: &Polygon<f64>, origin: &GeoOrigin) -> Polygon<f64> {
    let ring = |r: &LineString<f64>| -> LineString<f64> {
        r.0.iter()
            .map(|c| {
                let [x, y, _] = origin.to_local(c.x, c.y, origin.alt_m);
                Coord { x, y }
            })
            .collect()
    };
    Polygon::new(ring(polygon.exterior()), polygon.interiors().iter().map(ring).collect())
}

#[cfg(test)]
mod tests {
    use super::*;

    const FILE: &str = "maps/site.geojson";

    fn parse(text: &str, frame: MapFrame) -> Result<TerrainMap, SiteError> {
        TerrainMap::parse(Path::new(FILE), text, frame, &Limits::default())
    }

    fn error_of(text: &str, frame: MapFrame) -> String {
        match parse(text, frame) {
            Ok(_) => panic!("expected an error"),
            Err(e) => e.to_string(),
        }
    }

    fn collection(features: &[&str]) -> String {
        format!(r#"{{"type": "FeatureCollection", "features": [{}]}}"#, features.join(","))
    }

    const SQUARE: &str = r#"{"type": "Feature", "properties": {"terrain": "grass"},
        "geometry": {"type": "Polygon", "coordinates": [[[0,0],[10,0],[10,10],[0,10],[0,0]],
                                                        [[2,2],[4,2],[4,4],[2,4],[2,2]]]}}"#;
    const TWO: &str = r#"{"type": "Feature", "properties": {"terrain": "gravel"},
        "geometry": {"type": "MultiPolygon", "coordinates": [[[[20,0],[30,0],[30,5],[20,0]]],
                                                             [[[40,0],[50,0],[50,5],[40,0]]]]}}"#;

    #[test]
    fn reads_polygons_with_holes_and_multipolygons_in_file_order() {
        let map = parse(&collection(&[SQUARE, TWO]), MapFrame::Local).expect("valid map");
        assert_eq!(map.polygons.len(), 3);
        assert_eq!(map.polygons[0].polygon.interiors().len(), 1);
        let features: Vec<_> = map.polygons.iter().map(|p| (p.feature, p.terrain.as_str())).collect();
        assert_eq!(features, [(0, "grass"), (1, "gravel"), (1, "gravel")]);
    }

    #[test]
    fn refuses_bad_features_naming_them() {
        let line = r#"{"type": "Feature", "properties": {"terrain": "grass"},
                       "geometry": {"type": "LineString", "coordinates": [[0,0],[1,1]]}}"#;
        let m = error_of(&collection(&[SQUARE, line]), MapFrame::Local);
        assert_eq!(m, format!("{FILE}: feature 1: geometry is LineString, expected Polygon or MultiPolygon"));
        let open = SQUARE.replace("[0,10],[0,0]]", "[0,10],[0,1]]");
        assert!(error_of(&collection(&[&open]), MapFrame::Local).contains("feature 0: ring 0 is not closed"));
        let untagged = SQUARE.replace(r#""terrain": "grass""#, r#""name": "x""#);
        assert!(error_of(&collection(&[&untagged]), MapFrame::Local).contains("feature 0: lacks the property terrain"));
        assert_eq!(
            error_of(&collection(&[]), MapFrame::Local),
            format!("{FILE}: has no Polygon or MultiPolygon features")
        );
    }

    #[test]
    fn a_metre_map_read_as_lon_lat_says_which_flag_to_pass() {
        let metres = SQUARE.replace("[10,0],[10,10]", "[500,0],[500,10]");
        let m = error_of(&collection(&[&metres]), MapFrame::Geographic);
        assert!(m.contains("feature 0: ring 0 point 1: [500, 0] is not [lon, lat]"), "{m}");
        assert!(m.contains("--map-frame local"), "{m}");
    }

    #[test]
    fn frames_must_match_the_route() {
        let map = parse(&collection(&[SQUARE]), MapFrame::Geographic).expect("valid");
        assert!(map.local_polygons(None).expect_err("no origin").contains("pass --map-frame local"));
        let origin = GeoOrigin::new(0.0, 0.0, 0.0);
        let local = map.local_polygons(Some(&origin)).expect("projects");
        // 10 degrees of longitude on the equator: about 1113 km east (WGS 84 ENU, chord of the arc).
        let x_max = local[0].polygon.exterior().0.iter().map(|c| c.x).fold(f64::MIN, f64::max);
        assert!((1.09e6..1.12e6).contains(&x_max), "{x_max}");
        let local_map = parse(&collection(&[SQUARE]), MapFrame::Local).expect("valid");
        assert!(local_map.local_polygons(Some(&origin)).is_err());
    }
}

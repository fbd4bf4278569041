//! Reads a GeoJSON route file (RFC 7946: [lon, lat(, alt)] degrees and metres on WGS 84) and
//! projects it once to the local east-north frame, metres, about the file's first point.
//!
//! Every LineString Feature is one leg, in file order; any other geometry is an error rather than
//! silently skipped, because a screening tool must not pass a route it did not fully read.
//! Properties (README, Inputs): `terrain`, `speed_mps`, `corridor_m`, `name`, `route`, and
//! `speeds_mps` (a speed per vertex, the planner's speed profile); other properties are left
//! alone, since GIS tools attach their own (styles, ids). A leg without `terrain` waits for a
//! terrain map (`route::check_terrains` refuses it when none gives one). The document is
//! deserialised in one pass (`geojson_doc.rs`): members the reader ignores are skipped unread.

use std::path::Path;

use serde_json::{Map, Value as JsonValue};

use super::geojson_doc::{parse_document, FeatureDoc, Position};

use super::{
    check_route_limits, file_stem_name, find_duplicate_point, group_in_order, too_many_points, too_many_total_points,
    GeoOrigin, Leg, Route, RouteError, SourcePosition, DUPLICATE_POINT_M, JOIN_TOLERANCE_M,
};
use crate::limits::{check_corridor_m, check_speed_mps, clip, printable, show_number, Limits, MAX_ABS_ALTITUDE_M};

/// The properties of one feature that the reader reads (see `geojson_doc::SCALAR_PROPERTIES`).
type JsonObject = Map<String, JsonValue>;

/// The properties of one leg, validated.
struct LegProperties {
    /// Empty when the feature has none.
    terrain: String,
    speed_mps: Option<f64>,
    /// One speed per vertex, checked against the coordinates' count.
    speeds_mps: Option<Vec<f64>>,
    corridor_m: Option<f64>,
    name: Option<String>,
    route: Option<String>,
}

/// One LineString feature, validated but not yet projected.
struct GeoLeg {
    feature: usize,
    properties: LegProperties,
    /// [lon_deg, lat_deg] of each point.
    lon_lat_deg: Vec<[f64; 2]>,
    /// Altitude of every point, when every point has one.
    altitude_m: Option<Vec<f64>>,
}

/// Parses and projects a GeoJSON route file; `path` is only used in messages and `Route::source`.
/// Points per leg and per file are checked against `limits` before the projected copy is made.
pub(super) fn parse(path: &Path, text: &str, limits: &Limits) -> Result<Vec<Route>, RouteError> {
    let features = read_features(text).map_err(|what| RouteError::File { file: path.to_path_buf(), what })?;
    let mut total_points = 0usize;
    let mut geo_legs = Vec::new();
    for (index, feature) in features.into_iter().enumerate() {
        let geo_leg = read_feature(index, &feature, limits).map_err(|what| at(path, index, what))?;
        total_points = total_points.saturating_add(geo_leg.lon_lat_deg.len());
        if total_points > limits.max_total_points {
            let what = too_many_total_points(total_points, limits);
            return Err(RouteError::File { file: path.to_path_buf(), what });
        }
        geo_legs.push(geo_leg);
    }
    let Some(origin) = origin_of(&geo_legs) else {
        return Err(RouteError::File { file: path.to_path_buf(), what: "contains no LineString features".to_string() });
    };
    let stem = file_stem_name(path);
    let legs = geo_legs
        .into_iter()
        .map(|geo_leg| {
            let route = geo_leg.properties.route.clone().unwrap_or_else(|| stem.clone());
            project_leg(path, &origin, geo_leg).map(|leg| (route, leg))
        })
        .collect::<Result<Vec<_>, _>>()?;
    let routes = group_in_order(legs)
        .into_iter()
        .map(|(name, legs)| Route {
            name,
            source: path.to_path_buf(),
            origin: Some(origin),
            legs,
            warnings: Vec::new(),
        })
        .collect::<Vec<_>>();
    check_route_limits(path, &routes, limits)?;
    for route in &routes {
        check_joins(route)?;
    }
    Ok(routes)
}

/// GeoJSON geometry types, for the message about a top level that is one of them.
const GEOMETRY_TYPES: [&str; 7] =
    ["Point", "MultiPoint", "LineString", "MultiLineString", "Polygon", "MultiPolygon", "GeometryCollection"];

/// The features of the top-level FeatureCollection.
fn read_features(text: &str) -> Result<Vec<FeatureDoc>, String> {
    // Spreadsheet and Windows tools often prepend a UTF-8 byte-order mark.
    let text = text.strip_prefix('\u{feff}').unwrap_or(text);
    if text.trim().is_empty() {
        return Err("file is empty".to_string());
    }
    // serde_json's own message carries the line and column.
    let doc = parse_document(text).map_err(|e| format!("not valid GeoJSON: {e}"))?;
    match (doc.kind.as_deref(), doc.features) {
        (Some("FeatureCollection"), Some(features)) => Ok(features),
        (Some("FeatureCollection"), None) => Err("the FeatureCollection has no features array".to_string()),
        (Some("Feature"), _) => Err("top level is a Feature, expected a FeatureCollection".to_string()),
        (Some(kind), _) if GEOMETRY_TYPES.contains(&kind) => {
            Err(format!("top level is a {kind} geometry, expected a FeatureCollection"))
        }
        (Some(kind), _) => Err(format!("top level has type '{}', expected a FeatureCollection", clip(kind))),
        (None, _) => Err("top level has no \"type\", expected a FeatureCollection".to_string()),
    }
}

fn at(path: &Path, feature: usize, what: String) -> RouteError {
    RouteError::At { file: path.to_path_buf(), position: SourcePosition::Feature(feature), what }
}

/// The projection origin: the first point of the first LineString, altitude 0 when it has none.
fn origin_of(geo_legs: &[GeoLeg]) -> Option<GeoOrigin> {
    let first = geo_legs.first()?;
    let [lon_deg, lat_deg] = *first.lon_lat_deg.first()?;
    let alt_m = first.altitude_m.as_ref().and_then(|a| a.first().copied()).unwrap_or(0.0);
    Some(GeoOrigin::new(lat_deg, lon_deg, alt_m))
}

const ALL_OR_NONE: &str = "give every point of a leg an altitude, or none";

type Coordinates = (Vec<[f64; 2]>, Option<Vec<f64>>);

/// Validates one feature: a LineString with valid properties and coordinates.
fn read_feature(index: usize, feature: &FeatureDoc, limits: &Limits) -> Result<GeoLeg, String> {
    match feature.kind.as_deref() {
        Some("Feature") => {}
        Some(kind) => return Err(format!("has type '{}', expected Feature", clip(kind))),
        None => return Err("has no \"type\": \"Feature\"".to_string()),
    }
    let positions = match feature.geometry.as_ref() {
        Some(g) if g.kind == "LineString" && g.coordinates.is_position_array => &g.coordinates.positions,
        Some(g) if g.kind == "LineString" => {
            return Err("LineString coordinates must be an array of [lon, lat] or [lon, lat, alt] positions".to_string())
        }
        Some(g) => return Err(format!("geometry is {}, expected LineString", clip(&g.kind))),
        None => return Err("geometry is null, expected LineString".to_string()),
    };
    if positions.len() > limits.max_points_per_leg {
        return Err(too_many_points(positions.len(), limits));
    }
    let properties = read_properties(feature.properties.as_ref())?;
    let (lon_lat_deg, altitude_m) = read_coordinates(positions)?;
    if let Some(n) = properties.speeds_mps.as_ref().map(Vec::len).filter(|&n| n != positions.len()) {
        return Err(format!(
            "property speeds_mps has {n} values but the line has {} points: give one speed per point",
            positions.len()
        ));
    }
    Ok(GeoLeg { feature: index, properties, lon_lat_deg, altitude_m })
}

fn read_properties(properties: Option<&JsonObject>) -> Result<LegProperties, String> {
    let in_range = |key: &str, value: Option<f64>, check: fn(f64) -> Result<f64, String>| {
        value.map(check).transpose().map_err(|what| format!("property {key}: {what}"))
    };
    let speed_mps = in_range("speed_mps", positive_property(properties, "speed_mps")?, check_speed_mps)?;
    let speeds_mps = positive_array_property(properties, "speeds_mps", check_speed_mps)?;
    if speed_mps.is_some() && speeds_mps.is_some() {
        return Err("gives both speed_mps and speeds_mps: give one speed for the leg or one per point".to_string());
    }
    Ok(LegProperties {
        terrain: string_property(properties, "terrain")?.unwrap_or_default(),
        speed_mps,
        speeds_mps,
        corridor_m: in_range("corridor_m", positive_property(properties, "corridor_m")?, check_corridor_m)?,
        // Names are shown in tables, plots and messages: control characters escaped.
        name: string_property(properties, "name")?.map(|n| printable(&n).into_owned()),
        route: string_property(properties, "route")?.map(|r| printable(&r).into_owned()),
    })
}

/// A string property; absent, null and "" all mean "not given".
fn string_property(properties: Option<&JsonObject>, key: &str) -> Result<Option<String>, String> {
    match properties.and_then(|p| p.get(key)) {
        None | Some(JsonValue::Null) => Ok(None),
        Some(JsonValue::String(s)) if s.trim().is_empty() => Ok(None),
        Some(JsonValue::String(s)) => Ok(Some(s.trim().to_string())),
        Some(other) => Err(format!("property {key} must be a string, found {}", json_type(other))),
    }
}

/// A finite number > 0; absent or null means "not given".
fn positive_property(properties: Option<&JsonObject>, key: &str) -> Result<Option<f64>, String> {
    match properties.and_then(|p| p.get(key)) {
        None | Some(JsonValue::Null) => Ok(None),
        Some(JsonValue::Number(n)) => match n.as_f64() {
            Some(value) if value.is_finite() && value > 0.0 => Ok(Some(value)),
            _ => Err(format!("property {key} must be a finite number > 0, found {n}")),
        },
        Some(other) => Err(format!("property {key} must be a number, found {}", json_type(other))),
    }
}

/// An array of finite numbers > 0, each one within the range `check` allows (the same as the
/// property's single value); absent or null means "not given".
fn positive_array_property(
    properties: Option<&JsonObject>,
    key: &str,
    check: fn(f64) -> Result<f64, String>,
) -> Result<Option<Vec<f64>>, String> {
    let values = match properties.and_then(|p| p.get(key)) {
        None | Some(JsonValue::Null) => return Ok(None),
        Some(JsonValue::Array(values)) => values,
        Some(other) => return Err(format!("property {key} must be an array of numbers, found {}", json_type(other))),
    };
    let number = |(j, value): (usize, &JsonValue)| match value {
        JsonValue::Number(n) => match n.as_f64() {
            Some(v) if v.is_finite() && v > 0.0 => {
                check(v).map_err(|what| format!("property {key}: value {j}: {what}"))
            }
            _ => Err(format!("property {key}: value {j} must be a finite number > 0, found {n}")),
        },
        other => Err(format!("property {key}: value {j} must be a number, found {}", json_type(other))),
    };
    values.iter().enumerate().map(number).collect::<Result<Vec<_>, _>>().map(Some)
}

fn json_type(value: &JsonValue) -> &'static str {
    match value {
        JsonValue::Null => "null",
        JsonValue::Bool(_) => "a boolean",
        JsonValue::Number(_) => "a number",
        JsonValue::String(_) => "a string",
        JsonValue::Array(_) => "an array",
        JsonValue::Object(_) => "an object",
    }
}

/// Checks every position: 2 or 3 finite coordinates, lon/lat in range, altitude on all or none.
fn read_coordinates(positions: &[Position]) -> Result<Coordinates, String> {
    if positions.len() < 2 {
        let n = positions.len();
        return Err(format!("has {n} point{}, at least 2 are needed", if n == 1 { "" } else { "s" }));
    }
    let mut lon_lat_deg = Vec::with_capacity(positions.len());
    let mut altitude_m = Vec::with_capacity(positions.len());
    let mut first_has_altitude = None;
    for (j, position) in positions.iter().enumerate() {
        if position.len > 3 {
            return Err(format!("point {j} has {} coordinates, expected [lon, lat] or [lon, lat, alt]", position.len));
        }
        let (lon_deg, lat_deg, alt_m) = match *position.as_slice() {
            [lon_deg, lat_deg] => (lon_deg, lat_deg, None),
            [lon_deg, lat_deg, alt_m] => (lon_deg, lat_deg, Some(alt_m)),
            ref other => {
                return Err(format!(
                    "point {j} has {} coordinates, expected [lon, lat] or [lon, lat, alt]",
                    other.len()
                ))
            }
        };
        check_lon_lat(j, lon_deg, lat_deg, alt_m)?;
        let has_altitude = *first_has_altitude.get_or_insert(alt_m.is_some());
        match (alt_m, has_altitude) {
            (Some(alt_m), true) => altitude_m.push(alt_m),
            (None, false) => {}
            (Some(_), false) => return Err(format!("point {j} has an altitude but point 0 has none: {ALL_OR_NONE}")),
            (None, true) => return Err(format!("point {j} has no altitude but point 0 has one: {ALL_OR_NONE}")),
        }
        lon_lat_deg.push([lon_deg, lat_deg]);
    }
    let altitude_m = (first_has_altitude == Some(true)).then_some(altitude_m);
    Ok((lon_lat_deg, altitude_m))
}

fn check_lon_lat(j: usize, lon_deg: f64, lat_deg: f64, alt_m: Option<f64>) -> Result<(), String> {
    if !(lon_deg.is_finite() && lat_deg.is_finite() && alt_m.is_none_or(f64::is_finite)) {
        return Err(format!("point {j} has a coordinate that is not a finite number"));
    }
    if !(-180.0..=180.0).contains(&lon_deg) {
        return Err(format!(
            "point {j}: longitude {} is outside [-180, 180] (positions are [lon, lat])",
            show_number(lon_deg)
        ));
    }
    if !(-90.0..=90.0).contains(&lat_deg) {
        return Err(format!(
            "point {j}: latitude {} is outside [-90, 90] (positions are [lon, lat])",
            show_number(lat_deg)
        ));
    }
    if let Some(alt_m) = alt_m.filter(|a| a.abs() > MAX_ABS_ALTITUDE_M) {
        return Err(format!(
            "point {j}: altitude {} m is beyond +-{MAX_ABS_ALTITUDE_M} m (positions are [lon, lat, alt_m])",
            show_number(alt_m)
        ));
    }
    Ok(())
}

/// Projects a validated leg to local metres and checks it for duplicate consecutive points.
/// Points without altitude are projected at the origin's height.
fn project_leg(path: &Path, origin: &GeoOrigin, geo_leg: GeoLeg) -> Result<Leg, RouteError> {
    let GeoLeg { feature, properties, lon_lat_deg, altitude_m } = geo_leg;
    let points = lon_lat_deg
        .iter()
        .enumerate()
        .map(|(j, &[lon_deg, lat_deg])| {
            let alt_m = altitude_m.as_ref().and_then(|a| a.get(j).copied()).unwrap_or(origin.alt_m);
            let [east_m, north_m, _up_m] = origin.to_local(lon_deg, lat_deg, alt_m);
            [east_m, north_m]
        })
        .collect::<Vec<_>>();
    if let Some((i, distance_m)) = find_duplicate_point(&points) {
        let what = format!(
            "points {i} and {} are {distance_m:.4} m apart (closer than {DUPLICATE_POINT_M} m): remove the duplicate",
            i + 1
        );
        return Err(at(path, feature, what));
    }
    let LegProperties { terrain, speed_mps, speeds_mps, corridor_m, name, route: _ } = properties;
    let mut leg =
        Leg { name, speed_mps, corridor_m, altitude_m, ..Leg::new(terrain, points, SourcePosition::Feature(feature)) };
    if let Some(speeds_mps) = speeds_mps {
        leg.set_speed_profile(speeds_mps);
    }
    Ok(leg)
}

/// Consecutive legs of a route must join within [`JOIN_TOLERANCE_M`].
fn check_joins(route: &Route) -> Result<(), RouteError> {
    for pair in route.legs.windows(2) {
        let (previous, next) = (&pair[0], &pair[1]);
        let (Some(end), Some(start)) = (previous.points.last(), next.points.first()) else {
            continue;
        };
        let gap_m = (start[0] - end[0]).hypot(start[1] - end[1]);
        if gap_m > JOIN_TOLERANCE_M {
            return Err(RouteError::At {
                file: route.source.clone(),
                position: next.position,
                what: format!(
                    "does not join {} in route '{}': its start is {gap_m:.2} m from that leg's end (at most {JOIN_TOLERANCE_M} m allowed)",
                    previous.position, crate::limits::clip(&route.name)
                ),
            });
        }
    }
    Ok(())
}

#[cfg(test)]
mod tests {
    use super::*;
    use approx::assert_relative_eq;

    const FILE: &str = "plans/demo.geojson";

    /// Invented points at 69.6 N (a high-latitude case, where a flat shortcut is worst).
    const P0: &str = "[18.95, 69.65]";
    const P1: &str = "[18.96, 69.65]";
    const P2: &str = "[18.96, 69.66]";
    const P3: &str = "[18.97, 69.66]";

    fn feature(properties: &str, coordinates: &str) -> String {
        format!(
            r#"{{"type": "Feature", "properties": {{{properties}}},
               "geometry": {{"type": "LineString", "coordinates": {coordinates}}}}}"#
        )
    }

    fn collection(features: &[String]) -> String {
        format!(r#"{{"type": "FeatureCollection", "features": [{}]}}"#, features.join(",\n"))
    }

    fn read(text: &str) -> Result<Vec<Route>, RouteError> {
        parse(Path::new(FILE), text, &Limits::default())
    }

    /// The error message, checked to name the file.
    fn error_of(text: &str) -> String {
        let message = match read(text) {
            Ok(routes) => panic!("expected an error, read {} routes", routes.len()),
            Err(e) => e.to_string(),
        };
        assert!(message.starts_with(&format!("{FILE}: ")), "{message}");
        message
    }

    #[test]
    fn reads_one_route_named_after_the_file() {
        let text = collection(&[
            feature(r#""terrain": "grass", "speed_mps": 1.5, "name": "out""#, &format!("[{P0}, {P1}]")),
            feature(
                r#""terrain": "packed-snow", "corridor_m": 0.4, "speed_mps": null"#,
                &format!("[{P1}, {P2}, {P3}]"),
            ),
        ]);
        let routes = read(&text).expect("valid file");
        assert_eq!(routes.len(), 1);
        let route = &routes[0];
        assert_eq!(route.name, "demo");
        assert_eq!(route.source, Path::new(FILE));
        assert_eq!(route.origin, Some(GeoOrigin::new(69.65, 18.95, 0.0)));
        let (a, b) = (&route.legs[0], &route.legs[1]);
        assert_eq!(
            (a.name.as_deref(), a.terrain.as_str(), a.speed_mps, a.corridor_m),
            (Some("out"), "grass", Some(1.5), None)
        );
        assert_eq!(
            (b.name.as_deref(), b.terrain.as_str(), b.speed_mps, b.corridor_m),
            (None, "packed-snow", None, Some(0.4))
        );
        assert_eq!((a.position, b.position), (SourcePosition::Feature(0), SourcePosition::Feature(1)));
        assert_eq!(a.altitude_m, None);
        assert_relative_eq!(a.points[0][0], 0.0, epsilon = 1e-9);
        assert_relative_eq!(a.points[0][1], 0.0, epsilon = 1e-9);
        // 0.01 deg of longitude at 69.65 N is about 387 m east; 0.01 deg of latitude ~1116 m north.
        assert_relative_eq!(a.points[1][0], 387.4, epsilon = 1.0);
        assert_relative_eq!(a.points[1][1], 0.0, epsilon = 0.1);
        assert_relative_eq!(b.points[1][1], 1116.0, epsilon = 2.0);
        assert_eq!(a.points[1], b.points[0]);
    }

    #[test]
    fn projects_with_the_enu_origin() {
        let text = collection(&[feature(r#""terrain": "grass""#, &format!("[{P0}, {P3}]"))]);
        let routes = read(&text).expect("valid file");
        let expected_m = GeoOrigin::new(69.65, 18.95, 0.0).to_local(18.97, 69.66, 0.0);
        assert_relative_eq!(routes[0].legs[0].points[1][0], expected_m[0], epsilon = 1e-9);
        assert_relative_eq!(routes[0].legs[0].points[1][1], expected_m[1], epsilon = 1e-9);
    }

    #[test]
    fn keeps_altitude_and_uses_the_first_point_as_origin() {
        let text = collection(&[
            feature(r#""terrain": "gravel""#, "[[18.95, 69.65, 12.5], [18.96, 69.65, 14.0]]"),
            feature(r#""terrain": "gravel""#, &format!("[{P1}, {P2}]")),
        ]);
        let routes = read(&text).expect("valid file");
        assert_eq!(routes[0].origin, Some(GeoOrigin::new(69.65, 18.95, 12.5)));
        assert_eq!(routes[0].legs[0].altitude_m, Some(vec![12.5, 14.0]));
        assert_eq!(routes[0].legs[1].altitude_m, None);
    }

    #[test]
    fn groups_legs_by_route_in_order_of_first_appearance() {
        let text = collection(&[
            feature(r#""terrain": "grass", "route": "north""#, &format!("[{P0}, {P1}]")),
            feature(r#""terrain": "grass""#, &format!("[{P2}, {P3}]")),
            feature(r#""terrain": "grass", "route": "east""#, &format!("[{P0}, {P2}]")),
            feature(r#""terrain": "asphalt", "route": "north""#, &format!("[{P1}, {P2}]")),
            feature(r#""terrain": "grass", "route": "", "name": "joined""#, &format!("[{P3}, {P0}]")),
        ]);
        let routes = read(&text).expect("valid file");
        let names: Vec<_> = routes.iter().map(|r| r.name.as_str()).collect();
        assert_eq!(names, ["north", "demo", "east"]);
        let positions = |r: &Route| r.legs.iter().map(|l| l.position).collect::<Vec<_>>();
        assert_eq!(positions(&routes[0]), [SourcePosition::Feature(0), SourcePosition::Feature(3)]);
        assert_eq!(positions(&routes[1]), [SourcePosition::Feature(1), SourcePosition::Feature(4)]);
        assert!(routes.iter().all(|r| r.origin == Some(GeoOrigin::new(69.65, 18.95, 0.0))));
    }

    #[test]
    fn accepts_a_byte_order_mark() {
        let text = format!("\u{feff}{}", collection(&[feature(r#""terrain": "grass""#, &format!("[{P0}, {P1}]"))]));
        assert!(read(&text).is_ok());
    }

    #[test]
    fn rejects_an_empty_file() {
        assert_eq!(error_of(""), format!("{FILE}: file is empty"));
        assert_eq!(error_of(" \n\t"), format!("{FILE}: file is empty"));
    }

    #[test]
    fn rejects_text_that_is_not_json_with_its_line_and_column() {
        let message = error_of("{\"type\": \"FeatureCollection\",\n \"features\": [oops]}");
        assert!(message.contains("not valid GeoJSON") && message.contains("line 2 column"), "{message}");
    }

    #[test]
    fn rejects_a_top_level_feature() {
        let message = error_of(&feature(r#""terrain": "grass""#, &format!("[{P0}, {P1}]")));
        assert!(message.contains("top level is a Feature, expected a FeatureCollection"), "{message}");
    }

    #[test]
    fn rejects_an_empty_collection() {
        let message = error_of(&collection(&[]));
        assert_eq!(message, format!("{FILE}: contains no LineString features"));
    }

    #[test]
    fn rejects_a_wrong_geometry_type() {
        let point = r#"{"type": "Feature", "properties": {"terrain": "grass"},
                        "geometry": {"type": "Point", "coordinates": [18.95, 69.65]}}"#;
        let text = collection(&[
            feature(r#""terrain": "grass""#, &format!("[{P0}, {P1}]")),
            feature(r#""terrain": "grass""#, &format!("[{P1}, {P2}]")),
            point.to_string(),
        ]);
        assert_eq!(error_of(&text), format!("{FILE}: feature 2: geometry is Point, expected LineString"));
        let null = r#"{"type": "Feature", "properties": {"terrain": "grass"}, "geometry": null}"#;
        let message = error_of(&collection(&[null.to_string()]));
        assert!(message.contains("feature 0: geometry is null"), "{message}");
    }

    #[test]
    fn a_missing_terrain_waits_for_a_map_and_a_mistyped_one_is_refused() {
        let text = collection(&[
            feature(r#""terrain": "grass""#, &format!("[{P0}, {P1}]")),
            feature(r#""speed_mps": 1.0"#, &format!("[{P1}, {P2}]")),
        ]);
        let legs = &read(&text).expect("valid")[0].legs;
        assert!(legs[0].has_terrain() && !legs[1].has_terrain());
        let text = collection(&[feature(r#""terrain": 3"#, &format!("[{P0}, {P1}]"))]);
        assert!(error_of(&text).contains("feature 0: property terrain must be a string, found a number"));
    }

    #[test]
    fn reads_a_speed_per_vertex() {
        let text = collection(&[feature(
            r#""terrain": "grass", "speeds_mps": [0.5, 1.5, 1.0]"#,
            &format!("[{P0}, {P1}, {P2}]"),
        )]);
        let leg = &read(&text).expect("valid")[0].legs[0];
        assert_eq!(leg.speeds_mps.as_deref(), Some(&[0.5, 1.5, 1.0][..]));
        assert_eq!(leg.speed_mps, Some(1.5));
        let wrong_length =
            collection(&[feature(r#""terrain": "grass", "speeds_mps": [0.5, 1.5]"#, &format!("[{P0}, {P1}, {P2}]"))]);
        assert_eq!(
            error_of(&wrong_length),
            format!("{FILE}: feature 0: property speeds_mps has 2 values but the line has 3 points: give one speed per point")
        );
        let zero = collection(&[feature(r#""terrain": "grass", "speeds_mps": [0.5, 0]"#, &format!("[{P0}, {P1}]"))]);
        assert!(
            error_of(&zero).contains("feature 0: property speeds_mps: value 1 must be a finite number > 0, found 0")
        );
        let text = collection(&[feature(r#""terrain": "grass", "speeds_mps": [0.5, "x"]"#, &format!("[{P0}, {P1}]"))]);
        assert!(error_of(&text).contains("feature 0: property speeds_mps: value 1 must be a number, found a string"));
        let both = collection(&[feature(
            r#""terrain": "grass", "speed_mps": 1, "speeds_mps": [1, 1]"#,
            &format!("[{P0}, {P1}]"),
        )]);
        assert!(error_of(&both).contains("feature 0: gives both speed_mps and speeds_mps"));
        // Each value keeps the bounds of a leg's speed_mps (0.05 to 100 m/s).
        let slow = collection(&[feature(r#""terrain": "grass", "speeds_mps": [0.5, 1e-6]"#, &format!("[{P0}, {P1}]"))]);
        let message = error_of(&slow);
        assert!(
            message.contains("feature 0: property speeds_mps: value 1: 1e-6 m/s is slower than 0.05 m/s"),
            "{message}"
        );
        let fast = collection(&[feature(r#""terrain": "grass", "speeds_mps": [250, 1]"#, &format!("[{P0}, {P1}]"))]);
        let message = error_of(&fast);
        assert!(
            message.contains("feature 0: property speeds_mps: value 0: 250 m/s is faster than 100 m/s"),
            "{message}"
        );
        // A speeds_mps with other members around it is read, not skipped.
        let styled = collection(&[feature(
            r#""stroke": [1, 2], "terrain": "grass", "speeds_mps": [0.5, 2], "fill": {"a": [3]}"#,
            &format!("[{P0}, {P1}]"),
        )]);
        assert_eq!(read(&styled).expect("valid")[0].legs[0].speeds_mps.as_deref(), Some(&[0.5, 2.0][..]));
    }

    #[test]
    fn rejects_a_one_point_leg() {
        let text = collection(&[
            feature(r#""terrain": "grass""#, &format!("[{P0}, {P1}]")),
            feature(r#""terrain": "grass""#, &format!("[{P1}]")),
        ]);
        assert_eq!(error_of(&text), format!("{FILE}: feature 1: has 1 point, at least 2 are needed"));
        let text = collection(&[feature(r#""terrain": "grass""#, "[]")]);
        assert!(error_of(&text).contains("feature 0: has 0 points"));
    }

    #[test]
    fn rejects_duplicate_consecutive_points() {
        let text = collection(&[feature(r#""terrain": "grass""#, &format!("[{P0}, {P1}, {P1}, {P2}]"))]);
        let message = error_of(&text);
        assert!(message.contains("feature 0: points 1 and 2 are 0.0000 m apart"), "{message}");
    }

    #[test]
    fn rejects_a_latitude_out_of_range() {
        let text = collection(&[feature(r#""terrain": "grass""#, "[[18.95, 69.65], [18.95, 91.0]]")]);
        let message = error_of(&text);
        assert!(message.contains("feature 0: point 1: latitude 91 is outside [-90, 90]"), "{message}");
        // Swapped [lat, lon] order is the usual cause.
        let text = collection(&[feature(r#""terrain": "grass""#, "[[-200.0, 10.0], [18.95, 69.0]]")]);
        assert!(error_of(&text).contains("feature 0: point 0: longitude -200 is outside [-180, 180]"));
    }

    #[test]
    fn rejects_wrong_coordinate_counts() {
        let text = collection(&[feature(r#""terrain": "grass""#, "[[18.95, 69.65], [18.96]]")]);
        assert!(error_of(&text).contains("feature 0: point 1 has 1 coordinates"));
        let text = collection(&[feature(r#""terrain": "grass""#, "[[18.95, 69.65, 1, 2], [18.96, 69.65, 1, 2]]")]);
        assert!(error_of(&text).contains("feature 0: point 0 has 4 coordinates"));
    }

    #[test]
    fn rejects_a_huge_number() {
        // JSON has no NaN or Infinity literal; 1e999 overflows f64. serde_json rejects it with its
        // position; were it ever read as infinite, the finiteness checks would reject it.
        let text = collection(&[feature(r#""terrain": "grass""#, "[[18.95, 69.65], [1e999, 69.65]]")]);
        let message = error_of(&text);
        assert!(message.contains("line") || message.contains("feature 0"), "{message}");
        let text = collection(&[feature(r#""terrain": "grass", "speed_mps": 1e999"#, &format!("[{P0}, {P1}]"))]);
        let message = error_of(&text);
        assert!(message.contains("line") || message.contains("feature 0: property speed_mps"), "{message}");
        assert!(check_lon_lat(3, f64::INFINITY, 0.0, None).is_err());
        assert!(check_lon_lat(3, 0.0, 0.0, Some(f64::NAN)).is_err());
    }

    #[test]
    fn rejects_legs_that_do_not_join() {
        let text = collection(&[
            feature(r#""terrain": "grass""#, &format!("[{P0}, {P1}]")),
            feature(r#""terrain": "grass""#, &format!("[{P1}, {P2}]")),
            feature(r#""terrain": "grass""#, &format!("[{P3}, {P0}]")),
        ]);
        let message = error_of(&text);
        assert!(message.contains("feature 2: does not join feature 1 in route 'demo'"), "{message}");
        assert!(message.contains("388.") && message.contains(" m from that leg's end"), "{message}");
    }

    #[test]
    fn accepts_a_gap_within_the_join_tolerance() {
        // 0.000004 deg of latitude is about 0.45 m.
        let text = collection(&[
            feature(r#""terrain": "grass""#, "[[18.95, 69.65], [18.95, 69.651]]"),
            feature(r#""terrain": "grass""#, "[[18.95, 69.651004], [18.95, 69.652]]"),
        ]);
        assert!(read(&text).is_ok());
    }

    #[test]
    fn rejects_a_negative_speed_and_other_bad_numbers() {
        let text = collection(&[feature(r#""terrain": "grass", "speed_mps": -1.0"#, &format!("[{P0}, {P1}]"))]);
        let message = error_of(&text);
        assert!(message.contains("feature 0: property speed_mps must be a finite number > 0, found -1"), "{message}");
        let text = collection(&[feature(r#""terrain": "grass", "corridor_m": 0"#, &format!("[{P0}, {P1}]"))]);
        assert!(error_of(&text).contains("feature 0: property corridor_m must be a finite number > 0, found 0"));
        let text = collection(&[feature(r#""terrain": "grass", "speed_mps": "1.2""#, &format!("[{P0}, {P1}]"))]);
        assert!(error_of(&text).contains("feature 0: property speed_mps must be a number, found a string"));
    }

    #[test]
    fn rejects_mixed_altitudes_within_a_leg() {
        let text = collection(&[feature(r#""terrain": "grass""#, "[[18.95, 69.65, 10], [18.96, 69.65]]")]);
        assert!(error_of(&text).contains("feature 0: point 1 has no altitude but point 0 has one"));
        let text = collection(&[feature(r#""terrain": "grass""#, "[[18.95, 69.65], [18.96, 69.65, 10]]")]);
        assert!(error_of(&text).contains("feature 0: point 1 has an altitude but point 0 has none"));
    }
}

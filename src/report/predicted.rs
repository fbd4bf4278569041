//! The predicted path as GeoJSON (RFC 7946): one LineString Feature per leg in lon/lat, with
//! the leg's metrics as properties. Only for routes read from GeoJSON, whose projection origin
//! is known; the local frame is taken back through the exact inverse (ENU -> ECEF -> geodetic).

use serde_json::{json, Map, Value};

use crate::check::{CheckRun, CheckedRoute};

/// Rounds a degree value to 1e-9 degrees (about 0.1 mm), which keeps files small and stable.
fn round_deg(x: f64) -> f64 {
    (x * 1e9).round() / 1e9
}

fn leg_features(cr: &CheckedRoute, features: &mut Vec<Value>) -> Result<(), String> {
    let Some(origin) = cr.route.origin else {
        return Err(format!(
            "route '{}' was read from CSV in a local map frame, which has no geographic origin; \
             use --trace for its predicted path",
            cr.route.name
        ));
    };
    for leg in &cr.report.legs {
        let i = leg.index - 1;
        let coords: Vec<Value> = cr
            .trace
            .steps
            .iter()
            .filter(|s| s.leg == i)
            .map(|s| {
                let (lon, lat, _) = origin.to_geodetic(s.pose.x_m, s.pose.y_m, 0.0);
                json!([round_deg(lon), round_deg(lat)])
            })
            .collect();
        if coords.len() < 2 {
            continue;
        }
        let mut props = match serde_json::to_value(leg) {
            Ok(Value::Object(m)) => m,
            _ => Map::new(),
        };
        props.insert("route".into(), Value::String(cr.route.name.clone()));
        features.push(json!({
            "type": "Feature",
            "properties": props,
            "geometry": { "type": "LineString", "coordinates": coords },
        }));
    }
    Ok(())
}

/// The predicted-path FeatureCollection of a run, or a message when a route has no
/// geographic origin (CSV input).
pub fn predicted_geojson(run: &CheckRun) -> Result<String, String> {
    let mut features = Vec::new();
    for cr in &run.routes {
        leg_features(cr, &mut features)?;
    }
    let doc = json!({ "type": "FeatureCollection", "features": features });
    let mut s = serde_json::to_string(&doc).map_err(|e| e.to_string())?;
    s.push('\n');
    Ok(s)
}

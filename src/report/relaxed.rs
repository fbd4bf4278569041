//! Writing a relaxed route back in its input's format, with everything else kept: GeoJSON
//! features keep all their properties and the collection its other members (only a leg's
//! coordinates change, `speed_mps` where relax lowered it, and `speeds_mps` rewritten for the new
//! points where the feature had one); lon/lat go through the exact inverse projection. CSV keeps
//! its columns and each leg's other cells, with per-row speeds and corridors written where the
//! leg has a profile; `speed_mps` is added as a column when a speed was lowered and the file had
//! none.

use std::collections::HashMap;

use serde_json::{json, Value};

use crate::route::{GeoOrigin, Leg, Route, SourcePosition};

/// Rounds degrees to 1e-9 (about 0.1 mm).
fn round_deg(x: f64) -> f64 {
    (x * 1e9).round() / 1e9
}

/// Local metres to lon/lat whose ellipsoidal height is `height_m` (the altitude the reader
/// projected with), so unchanged points come back to their input coordinates.
fn geodetic_at_height(origin: &GeoOrigin, east_m: f64, north_m: f64, height_m: f64) -> (f64, f64) {
    origin.to_lon_lat_at_height(east_m, north_m, height_m)
}

fn leg_coordinates(origin: &GeoOrigin, leg: &Leg) -> Vec<Value> {
    leg.points
        .iter()
        .enumerate()
        .map(|(i, p)| match leg.altitude_m.as_ref().and_then(|a| a.get(i)) {
            Some(&h) => {
                let (lon, lat) = geodetic_at_height(origin, p[0], p[1], h);
                json!([round_deg(lon), round_deg(lat), (h * 1e3).round() / 1e3])
            }
            None => {
                let (lon, lat) = geodetic_at_height(origin, p[0], p[1], origin.alt_m);
                json!([round_deg(lon), round_deg(lat)])
            }
        })
        .collect()
}

/// The original GeoJSON text with each relaxed leg's coordinates (and lowered speed) replaced.
/// `original` and `relaxed` are the routes as read and as relaxed, in the same order.
pub fn relaxed_geojson(text: &str, original: &[Route], relaxed: &[Route]) -> Result<String, String> {
    let text = text.strip_prefix('\u{feff}').unwrap_or(text);
    let mut doc: Value = serde_json::from_str(text).map_err(|e| format!("not valid JSON: {e}"))?;
    let features = doc.get_mut("features").and_then(Value::as_array_mut).ok_or("has no features array")?;
    for (orig, new) in original.iter().zip(relaxed) {
        let origin = new.origin.ok_or_else(|| format!("route '{}' has no geographic origin", new.name))?;
        for (old_leg, leg) in orig.legs.iter().zip(&new.legs) {
            let SourcePosition::Feature(i) = leg.position else { continue };
            let feature = features.get_mut(i).ok_or_else(|| format!("feature {i} is missing"))?;
            if let Some(geometry) = feature.get_mut("geometry").and_then(Value::as_object_mut) {
                geometry.insert("coordinates".into(), Value::Array(leg_coordinates(&origin, leg)));
            }
            let had_profile = feature.pointer("/properties/speeds_mps").is_some_and(|v| !v.is_null());
            if had_profile || leg.speeds_mps.is_some() {
                let speeds: Option<Vec<f64>> = (0..leg.points.len()).map(|i| leg.speed_at_point(i)).collect();
                if let (Some(speeds), Some(p)) = (speeds, feature.get_mut("properties").and_then(Value::as_object_mut))
                {
                    p.remove("speed_mps");
                    p.insert("speeds_mps".into(), json!(speeds));
                }
            } else if leg.speed_mps != old_leg.speed_mps {
                if let (Some(v), Some(props)) = (leg.speed_mps, feature.get_mut("properties")) {
                    if props.is_null() {
                        *props = json!({});
                    }
                    if let Some(p) = props.as_object_mut() {
                        p.insert("speed_mps".into(), json!(v));
                    }
                }
            }
        }
    }
    let mut s = serde_json::to_string_pretty(&doc).map_err(|e| e.to_string())?;
    s.push('\n');
    Ok(s)
}

fn metres(x: f64) -> String {
    format!("{}", (x * 1e4).round() / 1e4)
}

/// The CSV file rewritten with the relaxed routes: same header (plus `speed_mps` when a speed
/// was lowered and the file had no such column), each route's rows together, each leg's cells
/// copied from its first row with x_m, y_m (and z_m, speed_mps) replaced.
pub fn relaxed_csv(text: &str, original: &[Route], relaxed: &[Route]) -> Result<String, String> {
    let text = text.strip_prefix('\u{feff}').unwrap_or(text);
    let mut reader = csv::ReaderBuilder::new().trim(csv::Trim::All).from_reader(text.as_bytes());
    let mut header: Vec<String> = reader.headers().map_err(|e| e.to_string())?.iter().map(str::to_string).collect();
    let mut rows: HashMap<usize, Vec<String>> = HashMap::new();
    // The same line numbers as the route reader's (right for CRLF files too).
    let mut lines = crate::csv_line::LineCounter::new(text);
    for (k, rec) in reader.records().enumerate() {
        let rec = rec.map_err(|e| e.to_string())?;
        let line = lines.line_of(rec.position(), k + 2);
        rows.insert(line, rec.iter().map(str::to_string).collect());
    }
    let col = |h: &[String], name: &str| h.iter().position(|c| c == name);
    let speed_changed =
        original.iter().zip(relaxed).any(|(o, n)| o.legs.iter().zip(&n.legs).any(|(a, b)| a.speed_mps != b.speed_mps));
    if speed_changed && col(&header, "speed_mps").is_none() {
        header.push("speed_mps".into());
    }
    let (cx, cy, cz, cs) = (col(&header, "x_m"), col(&header, "y_m"), col(&header, "z_m"), col(&header, "speed_mps"));
    let cc = col(&header, "corridor_m");
    let mut w = csv::Writer::from_writer(Vec::new());
    w.write_record(&header).map_err(|e| e.to_string())?;
    for (orig, new) in original.iter().zip(relaxed) {
        let n_legs = new.legs.len();
        for (k, (old_leg, leg)) in orig.legs.iter().zip(&new.legs).enumerate() {
            let SourcePosition::Line(line) = leg.position else { return Err("a leg has no CSV line".into()) };
            let mut template = rows.get(&line).cloned().ok_or_else(|| format!("line {line} is missing"))?;
            template.resize(header.len(), String::new());
            // The boundary point is written once: as the first row of the next leg.
            let last = if k + 1 < n_legs { leg.points.len().saturating_sub(1) } else { leg.points.len() };
            for (i, p) in leg.points.iter().enumerate().take(last) {
                let mut row = template.clone();
                let mut set = |c: Option<usize>, v: String| {
                    if let Some(c) = c {
                        row[c] = v;
                    }
                };
                set(cx, metres(p[0]));
                set(cy, metres(p[1]));
                if let Some(z) = leg.altitude_m.as_ref().and_then(|a| a.get(i)) {
                    set(cz, metres(*z));
                }
                if leg.speeds_mps.is_some() || leg.speed_mps != old_leg.speed_mps {
                    set(cs, leg.speed_at_point(i).map(|v| format!("{v}")).unwrap_or_default());
                }
                if leg.corridors_m.is_some() {
                    set(cc, leg.corridor_at_point(i).map(|v| format!("{v}")).unwrap_or_default());
                }
                w.write_record(&row).map_err(|e| e.to_string())?;
            }
        }
    }
    let bytes = w.into_inner().map_err(|e| e.to_string())?;
    String::from_utf8(bytes).map_err(|e| e.to_string())
}

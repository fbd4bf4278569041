//! The parts of a GeoJSON route document the reader uses, deserialised in one pass straight
//! from the text, without first building a `serde_json::Value` tree of the whole file.
//!
//! Members the reader ignores (foreign members such as styles or ids, properties it does not
//! read, the coordinates of other geometry types, deeply nested arrays) are skipped while they are
//! parsed and never held in memory, so memory follows the legs actually read: about 32 bytes per
//! point, whatever else the file carries. serde_json's messages keep the line and column of a
//! syntax error.

use serde::de::{self, Deserializer, IgnoredAny, MapAccess, SeqAccess, Visitor};
use serde::Deserialize;
use serde_json::{Map, Value};

/// Properties the reader reads whose value is a single string or number; any other property is
/// skipped unread. An array or object given for one of these keeps only its kind (for the
/// "must be a string, found an array" message), never its content.
pub(super) const SCALAR_PROPERTIES: &[&str] = &["terrain", "speed_mps", "corridor_m", "name", "route"];
/// Properties the reader reads whose value is an array of scalars: the array's elements are
/// kept when they are scalars; a nested array or object keeps only its kind, as above.
pub(super) const ARRAY_PROPERTIES: &[&str] = &["speeds_mps"];

/// The top-level object.
#[derive(Deserialize)]
pub(super) struct Document {
    #[serde(rename = "type", default)]
    pub kind: Option<String>,
    #[serde(default)]
    pub features: Option<Vec<FeatureDoc>>,
}

/// One element of `features`.
#[derive(Deserialize)]
pub(super) struct FeatureDoc {
    #[serde(rename = "type", default)]
    pub kind: Option<String>,
    #[serde(default, deserialize_with = "known_properties")]
    pub properties: Option<Map<String, Value>>,
    #[serde(default)]
    pub geometry: Option<GeometryDoc>,
}

/// A feature's geometry: its type and, when they are an array of positions, its coordinates.
#[derive(Deserialize)]
pub(super) struct GeometryDoc {
    #[serde(rename = "type")]
    pub kind: String,
    #[serde(default)]
    pub coordinates: Coordinates,
}

/// `coordinates` read as an array of positions (a LineString's shape). Any other shape (a
/// Point's single position, a Polygon's rings, null) is skipped and marked.
#[derive(Default)]
pub(super) struct Coordinates {
    pub positions: Vec<Position>,
    /// True when `coordinates` was an array whose every element is an array of numbers.
    pub is_position_array: bool,
}

/// One position: its first three numbers and how many it had.
#[derive(Clone, Copy, Debug, PartialEq)]
pub(super) struct Position {
    pub values: [f64; 3],
    pub len: usize,
}

impl Position {
    /// The numbers given, at most three.
    pub fn as_slice(&self) -> &[f64] {
        &self.values[..self.len.min(3)]
    }
}

/// Parses the document; the error is serde_json's (with line and column).
pub(super) fn parse_document(text: &str) -> Result<Document, serde_json::Error> {
    serde_json::from_str(text)
}

/// `properties`: an object (only the keys the reader reads are kept) or null.
fn known_properties<'de, D: Deserializer<'de>>(d: D) -> Result<Option<Map<String, Value>>, D::Error> {
    struct Properties;
    impl<'de> Visitor<'de> for Properties {
        type Value = Option<Map<String, Value>>;
        fn expecting(&self, f: &mut std::fmt::Formatter) -> std::fmt::Result {
            f.write_str("an object or null")
        }
        fn visit_unit<E: de::Error>(self) -> Result<Self::Value, E> {
            Ok(None)
        }
        fn visit_none<E: de::Error>(self) -> Result<Self::Value, E> {
            Ok(None)
        }
        fn visit_some<D2: Deserializer<'de>>(self, d: D2) -> Result<Self::Value, D2::Error> {
            d.deserialize_map(self)
        }
        fn visit_map<A: MapAccess<'de>>(self, mut map: A) -> Result<Self::Value, A::Error> {
            let mut out = Map::new();
            while let Some(key) = map.next_key::<String>()? {
                if SCALAR_PROPERTIES.contains(&key.as_str()) {
                    out.insert(key, map.next_value::<Shallow>()?.0);
                } else if ARRAY_PROPERTIES.contains(&key.as_str()) {
                    out.insert(key, map.next_value::<ShallowList>()?.0);
                } else {
                    map.next_value::<IgnoredAny>()?;
                }
            }
            Ok(Some(out))
        }
    }
    d.deserialize_option(Properties)
}

/// A property value kept whole when it is a scalar; an array or object becomes an empty one of
/// its kind (its content skipped), which is all a "found an array" message needs.
struct Shallow(Value);

/// A property value like [`Shallow`], except that an array keeps its elements, each one as a
/// [`Shallow`] (an array property such as `speeds_mps`).
struct ShallowList(Value);

impl<'de> Deserialize<'de> for ShallowList {
    fn deserialize<D: Deserializer<'de>>(d: D) -> Result<Self, D::Error> {
        d.deserialize_any(ShallowVisitor { keep_elements: true }).map(|Shallow(v)| ShallowList(v))
    }
}

impl<'de> Deserialize<'de> for Shallow {
    fn deserialize<D: Deserializer<'de>>(d: D) -> Result<Self, D::Error> {
        d.deserialize_any(ShallowVisitor { keep_elements: false })
    }
}

/// The visitor of [`Shallow`] and [`ShallowList`].
struct ShallowVisitor {
    /// Keep an array's elements (each shallow) rather than skipping them.
    keep_elements: bool,
}

impl<'de> Visitor<'de> for ShallowVisitor {
    type Value = Shallow;
    fn expecting(&self, f: &mut std::fmt::Formatter) -> std::fmt::Result {
        f.write_str("a JSON value")
    }
    fn visit_bool<E: de::Error>(self, v: bool) -> Result<Shallow, E> {
        Ok(Shallow(Value::Bool(v)))
    }
    fn visit_i64<E: de::Error>(self, v: i64) -> Result<Shallow, E> {
        Ok(Shallow(Value::from(v)))
    }
    fn visit_u64<E: de::Error>(self, v: u64) -> Result<Shallow, E> {
        Ok(Shallow(Value::from(v)))
    }
    fn visit_f64<E: de::Error>(self, v: f64) -> Result<Shallow, E> {
        Ok(Shallow(Value::from(v)))
    }
    fn visit_str<E: de::Error>(self, v: &str) -> Result<Shallow, E> {
        Ok(Shallow(Value::String(v.to_string())))
    }
    fn visit_unit<E: de::Error>(self) -> Result<Shallow, E> {
        Ok(Shallow(Value::Null))
    }
    fn visit_seq<A: SeqAccess<'de>>(self, mut seq: A) -> Result<Shallow, A::Error> {
        let mut elements = Vec::new();
        if self.keep_elements {
            while let Some(Shallow(v)) = seq.next_element::<Shallow>()? {
                elements.push(v);
            }
        } else {
            while seq.next_element::<IgnoredAny>()?.is_some() {}
        }
        Ok(Shallow(Value::Array(elements)))
    }
    fn visit_map<A: MapAccess<'de>>(self, mut map: A) -> Result<Shallow, A::Error> {
        while map.next_entry::<IgnoredAny, IgnoredAny>()?.is_some() {}
        Ok(Shallow(Value::Object(Map::new())))
    }
}

/// A number, or anything else (skipped).
struct Number(Option<f64>);

impl<'de> Deserialize<'de> for Number {
    fn deserialize<D: Deserializer<'de>>(d: D) -> Result<Self, D::Error> {
        struct V;
        impl<'de> Visitor<'de> for V {
            type Value = Number;
            fn expecting(&self, f: &mut std::fmt::Formatter) -> std::fmt::Result {
                f.write_str("a number")
            }
            fn visit_i64<E: de::Error>(self, v: i64) -> Result<Number, E> {
                Ok(Number(Some(v as f64)))
            }
            fn visit_u64<E: de::Error>(self, v: u64) -> Result<Number, E> {
                Ok(Number(Some(v as f64)))
            }
            fn visit_f64<E: de::Error>(self, v: f64) -> Result<Number, E> {
                Ok(Number(Some(v)))
            }
            fn visit_bool<E: de::Error>(self, _: bool) -> Result<Number, E> {
                Ok(Number(None))
            }
            fn visit_str<E: de::Error>(self, _: &str) -> Result<Number, E> {
                Ok(Number(None))
            }
            fn visit_unit<E: de::Error>(self) -> Result<Number, E> {
                Ok(Number(None))
            }
            fn visit_seq<A: SeqAccess<'de>>(self, mut seq: A) -> Result<Number, A::Error> {
                while seq.next_element::<IgnoredAny>()?.is_some() {}
                Ok(Number(None))
            }
            fn visit_map<A: MapAccess<'de>>(self, mut map: A) -> Result<Number, A::Error> {
                while map.next_entry::<IgnoredAny, IgnoredAny>()?.is_some() {}
                Ok(Number(None))
            }
        }
        d.deserialize_any(V)
    }
}

/// A position (an array of numbers), or `None` for anything else (skipped).
struct MaybePosition(Option<Position>);

impl<'de> Deserialize<'de> for MaybePosition {
    fn deserialize<D: Deserializer<'de>>(d: D) -> Result<Self, D::Error> {
        struct V;
        impl<'de> Visitor<'de> for V {
            type Value = MaybePosition;
            fn expecting(&self, f: &mut std::fmt::Formatter) -> std::fmt::Result {
                f.write_str("a position")
            }
            fn visit_seq<A: SeqAccess<'de>>(self, mut seq: A) -> Result<MaybePosition, A::Error> {
                let mut p = Position { values: [0.0; 3], len: 0 };
                let mut all_numbers = true;
                while let Some(Number(x)) = seq.next_element::<Number>()? {
                    match x {
                        Some(x) if all_numbers => {
                            if let Some(slot) = p.values.get_mut(p.len) {
                                *slot = x;
                            }
                            p.len += 1;
                        }
                        _ => all_numbers = false,
                    }
                }
                Ok(MaybePosition(all_numbers.then_some(p)))
            }
            fn visit_i64<E: de::Error>(self, _: i64) -> Result<MaybePosition, E> {
                Ok(MaybePosition(None))
            }
            fn visit_u64<E: de::Error>(self, _: u64) -> Result<MaybePosition, E> {
                Ok(MaybePosition(None))
            }
            fn visit_f64<E: de::Error>(self, _: f64) -> Result<MaybePosition, E> {
                Ok(MaybePosition(None))
            }
            fn visit_bool<E: de::Error>(self, _: bool) -> Result<MaybePosition, E> {
                Ok(MaybePosition(None))
            }
            fn visit_str<E: de::Error>(self, _: &str) -> Result<MaybePosition, E> {
                Ok(MaybePosition(None))
            }
            fn visit_unit<E: de::Error>(self) -> Result<MaybePosition, E> {
                Ok(MaybePosition(None))
            }
            fn visit_map<A: MapAccess<'de>>(self, mut map: A) -> Result<MaybePosition, A::Error> {
                while map.next_entry::<IgnoredAny, IgnoredAny>()?.is_some() {}
                Ok(MaybePosition(None))
            }
        }
        d.deserialize_any(V)
    }
}

impl<'de> Deserialize<'de> for Coordinates {
    fn deserialize<D: Deserializer<'de>>(d: D) -> Result<Self, D::Error> {
        struct V;
        impl<'de> Visitor<'de> for V {
            type Value = Coordinates;
            fn expecting(&self, f: &mut std::fmt::Formatter) -> std::fmt::Result {
                f.write_str("coordinates")
            }
            fn visit_seq<A: SeqAccess<'de>>(self, mut seq: A) -> Result<Coordinates, A::Error> {
                let mut c = Coordinates { positions: Vec::new(), is_position_array: true };
                while let Some(MaybePosition(p)) = seq.next_element::<MaybePosition>()? {
                    match p {
                        Some(p) if c.is_position_array => c.positions.push(p),
                        Some(_) => {}
                        None => {
                            // Not a LineString's shape: keep skipping, hold nothing.
                            c.is_position_array = false;
                            c.positions = Vec::new();
                        }
                    }
                }
                Ok(c)
            }
            fn visit_i64<E: de::Error>(self, _: i64) -> Result<Coordinates, E> {
                Ok(Coordinates::default())
            }
            fn visit_u64<E: de::Error>(self, _: u64) -> Result<Coordinates, E> {
                Ok(Coordinates::default())
            }
            fn visit_f64<E: de::Error>(self, _: f64) -> Result<Coordinates, E> {
                Ok(Coordinates::default())
            }
            fn visit_bool<E: de::Error>(self, _: bool) -> Result<Coordinates, E> {
                Ok(Coordinates::default())
            }
            fn visit_str<E: de::Error>(self, _: &str) -> Result<Coordinates, E> {
                Ok(Coordinates::default())
            }
            fn visit_unit<E: de::Error>(self) -> Result<Coordinates, E> {
                Ok(Coordinates::default())
            }
            fn visit_map<A: MapAccess<'de>>(self, mut map: A) -> Result<Coordinates, A::Error> {
                while map.next_entry::<IgnoredAny, IgnoredAny>()?.is_some() {}
                Ok(Coordinates::default())
            }
        }
        d.deserialize_any(V)
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn keeps_what_the_reader_reads_and_skips_the_rest() {
        let text = r#"{"type": "FeatureCollection", "style": {"a": [1, 2, [3]]}, "features": [
            {"type": "Feature", "id": 7, "properties": {"terrain": "grass", "fill": [1, 2], "name": [1, [2]]},
             "geometry": {"coordinates": [[1, 2], [3, 4, 5]], "type": "LineString"}},
            {"type": "Feature", "properties": null, "geometry": {"type": "Polygon", "coordinates": [[[0, 0], [1, 0]]]}},
            {"type": "Feature", "geometry": null}
        ]}"#;
        let doc = parse_document(text).expect("parses");
        assert_eq!(doc.kind.as_deref(), Some("FeatureCollection"));
        let features = doc.features.expect("features");
        let p = features[0].properties.as_ref().expect("properties");
        assert_eq!(p.len(), 2, "only terrain and name are kept: {p:?}");
        assert_eq!(p["name"], Value::Array(Vec::new()));
        let speeds = r#"{"features": [{"properties": {"speeds_mps": [1, [2, 3], {"a": 4}, "x"], "speed_mps": [5]}}]}"#;
        let doc = parse_document(speeds).expect("parses");
        let p = doc.features.as_ref().and_then(|f| f[0].properties.as_ref()).expect("properties");
        let kept = serde_json::json!([1, [], {}, "x"]);
        assert_eq!((&p["speeds_mps"], &p["speed_mps"]), (&kept, &Value::Array(Vec::new())));
        let g = features[0].geometry.as_ref().expect("geometry");
        assert!(g.coordinates.is_position_array);
        assert_eq!(g.coordinates.positions[1].as_slice(), [3.0, 4.0, 5.0]);
        let polygon = features[1].geometry.as_ref().expect("geometry");
        assert_eq!(polygon.kind, "Polygon");
        assert!(!polygon.coordinates.is_position_array && polygon.coordinates.positions.is_empty());
        assert!(features[1].properties.is_none() && features[2].geometry.is_none());
    }

    #[test]
    fn syntax_errors_keep_line_and_column() {
        let e = parse_document("{\"type\": \"FeatureCollection\",\n \"features\": [oops]}").err().expect("error");
        assert!(e.to_string().contains("line 2 column"), "{e}");
    }
}

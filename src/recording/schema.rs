//! ROS 2 message definitions (schema encoding `ros2msg`) parsed into a small type tree, and the
//! generic CDR decoding that tree drives.
//!
//! A recording stores, for each message type, the `.msg` text of the type followed by one
//! section per nested type, each introduced by a line of `=` characters and `MSG: pkg/Type`.
//! Field lines are `TYPE NAME` with optional default value; constant lines (`TYPE NAME=VALUE`)
//! and comments (`#`) are skipped. Types are primitives (`bool byte char int8 .. uint64 float32
//! float64 string`, strings optionally bounded `string<=N`), nested types (`pkg/Type`,
//! `pkg/msg/Type`, or a bare `Type` from the same package; bare `Header` is `std_msgs/Header`),
//! each optionally a fixed array `[N]`, a sequence `[]` or a bounded sequence `[<=N]`.
//! A nested type the text does not define is taken from the built-in definitions of the
//! standard types this reader needs (time, header, geometry, odometry, joint states, string);
//! `builtin_interfaces/Time` and `Duration` are often left out of recorded texts.

use std::collections::HashMap;

use super::cdr::{CdrError, CdrReader};

/// Standard ROS 2 definitions of the types the recording reader accepts and their parts
/// (fields only, as in the `.msg` files of the ROS 2 common interfaces).
const BUILTIN: &[(&str, &str)] = &[
    ("builtin_interfaces/msg/Time", "int32 sec\nuint32 nanosec"),
    ("builtin_interfaces/msg/Duration", "int32 sec\nuint32 nanosec"),
    ("std_msgs/msg/Header", "builtin_interfaces/Time stamp\nstring frame_id"),
    ("std_msgs/msg/String", "string data"),
    ("geometry_msgs/msg/Point", "float64 x\nfloat64 y\nfloat64 z"),
    ("geometry_msgs/msg/Vector3", "float64 x\nfloat64 y\nfloat64 z"),
    ("geometry_msgs/msg/Quaternion", "float64 x 0\nfloat64 y 0\nfloat64 z 0\nfloat64 w 1"),
    ("geometry_msgs/msg/Pose", "Point position\nQuaternion orientation"),
    ("geometry_msgs/msg/Twist", "Vector3 linear\nVector3 angular"),
    ("geometry_msgs/msg/PoseWithCovariance", "Pose pose\nfloat64[36] covariance"),
    ("geometry_msgs/msg/TwistWithCovariance", "Twist twist\nfloat64[36] covariance"),
    ("geometry_msgs/msg/PoseStamped", "std_msgs/Header header\nPose pose"),
    ("geometry_msgs/msg/PoseWithCovarianceStamped", "std_msgs/Header header\nPoseWithCovariance pose"),
    ("geometry_msgs/msg/TwistStamped", "std_msgs/Header header\nTwist twist"),
    (
        "nav_msgs/msg/Odometry",
        "std_msgs/Header header\nstring child_frame_id\ngeometry_msgs/PoseWithCovariance pose\n\
         geometry_msgs/TwistWithCovariance twist",
    ),
    (
        "sensor_msgs/msg/JointState",
        "std_msgs/Header header\nstring[] name\nfloat64[] position\nfloat64[] velocity\nfloat64[] effort",
    ),
];

/// Most message types one schema may define (nested types included).
const MAX_TYPES: usize = 1024;

/// A primitive field type.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Primitive {
    Bool,
    Byte,
    Char,
    Int8,
    UInt8,
    Int16,
    UInt16,
    Int32,
    UInt32,
    Int64,
    UInt64,
    Float32,
    Float64,
    String,
}

impl Primitive {
    fn parse(name: &str) -> Option<Primitive> {
        // Bounded strings (`string<=10`) decode like strings.
        let name = if name.starts_with("string<=") { "string" } else { name };
        Some(match name {
            "bool" => Primitive::Bool,
            "byte" => Primitive::Byte,
            "char" => Primitive::Char,
            "int8" => Primitive::Int8,
            "uint8" => Primitive::UInt8,
            "int16" => Primitive::Int16,
            "uint16" => Primitive::UInt16,
            "int32" => Primitive::Int32,
            "uint32" => Primitive::UInt32,
            "int64" => Primitive::Int64,
            "uint64" => Primitive::UInt64,
            "float32" => Primitive::Float32,
            "float64" => Primitive::Float64,
            "string" => Primitive::String,
            _ => return None,
        })
    }

    /// Fewest bytes one value takes (a string's length word).
    fn min_bytes(self) -> usize {
        match self {
            Primitive::Bool | Primitive::Byte | Primitive::Char | Primitive::Int8 | Primitive::UInt8 => 1,
            Primitive::Int16 | Primitive::UInt16 => 2,
            Primitive::Int32 | Primitive::UInt32 | Primitive::Float32 | Primitive::String => 4,
            Primitive::Int64 | Primitive::UInt64 | Primitive::Float64 => 8,
        }
    }
}

/// What one element of a field is.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Kind {
    Primitive(Primitive),
    /// Index of a nested message type in [`Schema`].
    Message(usize),
}

/// How many elements a field has.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Arity {
    Single,
    /// A fixed-size array: no count on the wire.
    Fixed(usize),
    /// A sequence (bounded or not): a `u32` count on the wire.
    Sequence,
}

#[derive(Debug, Clone, PartialEq, Eq)]
pub struct Field {
    pub name: String,
    pub kind: Kind,
    pub arity: Arity,
}

#[derive(Debug, Clone, PartialEq, Eq)]
pub struct MessageDef {
    /// Full name, `pkg/msg/Type`.
    pub name: String,
    pub fields: Vec<Field>,
    /// Fewest bytes one value takes (alignment ignored: a lower bound for count checks).
    min_bytes: usize,
}

/// A message type with every nested type resolved; `defs[0]` is the top-level type.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct Schema {
    defs: Vec<MessageDef>,
}

/// A decoded value. Structures hold their fields in definition order.
#[derive(Debug, Clone, PartialEq)]
pub enum Value {
    Bool(bool),
    Int(i64),
    UInt(u64),
    Float(f64),
    Text(String),
    List(Vec<Value>),
    Struct(Vec<Value>),
}

impl Value {
    /// The value at a field-index path from [`Schema::path`].
    pub fn at(&self, path: &[usize]) -> Option<&Value> {
        path.iter().try_fold(self, |v, &i| match v {
            Value::Struct(fields) => fields.get(i),
            _ => None,
        })
    }

    /// A number as `f64` (integers converted).
    pub fn as_f64(&self) -> Option<f64> {
        match *self {
            Value::Float(x) => Some(x),
            Value::Int(i) => Some(i as f64),
            Value::UInt(u) => Some(u as f64),
            _ => None,
        }
    }

    /// An integer as `i64` (unsigned values above `i64::MAX` are not).
    pub fn as_i64(&self) -> Option<i64> {
        match *self {
            Value::Int(i) => Some(i),
            Value::UInt(u) => i64::try_from(u).ok(),
            _ => None,
        }
    }

    pub fn as_str(&self) -> Option<&str> {
        match self {
            Value::Text(s) => Some(s),
            _ => None,
        }
    }

    pub fn as_list(&self) -> Option<&[Value]> {
        match self {
            Value::List(v) => Some(v),
            _ => None,
        }
    }
}

/// `pkg/Type` and `pkg/msg/Type` both as `pkg/msg/Type`.
pub fn full_type_name(name: &str) -> String {
    let parts: Vec<&str> = name.split('/').collect();
    match parts.as_slice() {
        [pkg, ty] => format!("{pkg}/msg/{ty}"),
        _ => name.to_string(),
    }
}

/// One parsed field line before its type is resolved.
struct RawField {
    type_name: String,
    arity: Arity,
    name: String,
}

impl Schema {
    /// Parses the definition text of `type_name` (`None`: use the built-in definition) and
    /// resolves every nested type. Errors are plain sentences naming the type and field.
    pub fn parse(type_name: &str, text: Option<&str>) -> Result<Schema, String> {
        let root = full_type_name(type_name);
        let mut sections: HashMap<String, Vec<RawField>> = HashMap::new();
        if let Some(text) = text {
            for (name, body) in split_sections(&root, text)? {
                let fields = parse_fields(&name, &body)?;
                sections.entry(name).or_insert(fields);
            }
        }
        let mut resolver = Resolver { sections, index: HashMap::new(), defs: Vec::new(), stack: Vec::new() };
        resolver.resolve(&root, None)?;
        Ok(Schema { defs: resolver.defs })
    }

    /// The built-in definition of one of the standard types, if known.
    pub fn builtin(type_name: &str) -> Option<Schema> {
        let full = full_type_name(type_name);
        BUILTIN.iter().any(|(n, _)| *n == full).then(|| Schema::parse(&full, None).ok()).flatten()
    }

    /// The top-level type's full name.
    pub fn name(&self) -> &str {
        self.defs.first().map_or("", |d| d.name.as_str())
    }

    /// Resolves a dotted field path (`pose.pose.position.x`) to field indices, with the leaf
    /// field. Every step but the last must be a single nested message.
    pub fn path(&self, dotted: &str) -> Result<(Vec<usize>, &Field), String> {
        let mut def = self.defs.first().ok_or_else(|| "empty schema".to_string())?;
        let mut indices = Vec::new();
        let mut parts = dotted.split('.').peekable();
        while let Some(part) = parts.next() {
            let (i, field) = def
                .fields
                .iter()
                .enumerate()
                .find(|(_, f)| f.name == part)
                .ok_or_else(|| format!("{} has no field {part} (needed: {dotted})", def.name))?;
            indices.push(i);
            if parts.peek().is_none() {
                return Ok((indices, field));
            }
            def = match (field.kind, field.arity) {
                (Kind::Message(m), Arity::Single) => self.defs.get(m).ok_or_else(|| "bad schema index".to_string())?,
                _ => return Err(format!("field {part} of {} is not a single nested message", def.name)),
            };
        }
        Err(format!("empty field path {dotted:?}"))
    }

    /// Decodes one CDR payload of the top-level type.
    pub fn decode(&self, payload: &[u8]) -> Result<Value, CdrError> {
        let mut r = CdrReader::new(payload)?;
        self.decode_message(0, &mut r)
    }

    fn decode_message(&self, index: usize, r: &mut CdrReader) -> Result<Value, CdrError> {
        let Some(def) = self.defs.get(index) else { return Ok(Value::Struct(Vec::new())) };
        if def.fields.is_empty() {
            // An empty type is sent as one placeholder byte (ROS 2 adds a uint8 member so the
            // IDL structure is not empty).
            r.u8()?;
            return Ok(Value::Struct(Vec::new()));
        }
        let mut out = Vec::with_capacity(def.fields.len());
        for f in &def.fields {
            let v = match f.arity {
                Arity::Single => self.decode_element(f.kind, r)?,
                Arity::Fixed(n) => {
                    let n = r.check_count(n as u64, self.min_bytes(f.kind))?;
                    Value::List((0..n).map(|_| self.decode_element(f.kind, r)).collect::<Result<_, _>>()?)
                }
                Arity::Sequence => {
                    let n = r.sequence_len(self.min_bytes(f.kind))?;
                    Value::List((0..n).map(|_| self.decode_element(f.kind, r)).collect::<Result<_, _>>()?)
                }
            };
            out.push(v);
        }
        Ok(Value::Struct(out))
    }

    fn min_bytes(&self, kind: Kind) -> usize {
        match kind {
            Kind::Primitive(p) => p.min_bytes(),
            Kind::Message(m) => self.defs.get(m).map_or(1, |d| d.min_bytes),
        }
    }

    fn decode_element(&self, kind: Kind, r: &mut CdrReader) -> Result<Value, CdrError> {
        Ok(match kind {
            Kind::Message(m) => return self.decode_message(m, r),
            Kind::Primitive(p) => match p {
                Primitive::Bool => Value::Bool(r.bool()?),
                Primitive::Byte | Primitive::UInt8 => Value::UInt(u64::from(r.u8()?)),
                Primitive::Char | Primitive::Int8 => Value::Int(i64::from(r.i8()?)),
                Primitive::Int16 => Value::Int(i64::from(r.i16()?)),
                Primitive::UInt16 => Value::UInt(u64::from(r.u16()?)),
                Primitive::Int32 => Value::Int(i64::from(r.i32()?)),
                Primitive::UInt32 => Value::UInt(u64::from(r.u32()?)),
                Primitive::Int64 => Value::Int(r.i64()?),
                Primitive::UInt64 => Value::UInt(r.u64()?),
                Primitive::Float32 => Value::Float(f64::from(r.f32()?)),
                Primitive::Float64 => Value::Float(r.f64()?),
                Primitive::String => Value::Text(r.string()?),
            },
        })
    }
}

/// Splits a concatenated definition into (full type name, text) sections.
fn split_sections(root: &str, text: &str) -> Result<Vec<(String, String)>, String> {
    let mut sections = vec![(root.to_string(), String::new())];
    let mut expect_name = false;
    for line in text.lines() {
        let t = line.trim();
        if t.len() >= 3 && t.bytes().all(|b| b == b'=') {
            expect_name = true;
            continue;
        }
        if expect_name {
            if t.is_empty() {
                continue;
            }
            let name = t
                .strip_prefix("MSG:")
                .map(str::trim)
                .ok_or_else(|| format!("a section of the definition of {root} does not start with MSG: pkg/Type"))?;
            if sections.len() >= MAX_TYPES {
                return Err(format!("the definition of {root} has more than {MAX_TYPES} sections"));
            }
            sections.push((full_type_name(name), String::new()));
            expect_name = false;
            continue;
        }
        if let Some((_, body)) = sections.last_mut() {
            body.push_str(line);
            body.push('\n');
        }
    }
    Ok(sections)
}

/// Parses the field lines of one section.
fn parse_fields(type_name: &str, body: &str) -> Result<Vec<RawField>, String> {
    let mut fields = Vec::new();
    for (k, line) in body.lines().enumerate() {
        let code = line.split('#').next().unwrap_or("").trim();
        if code.is_empty() {
            continue;
        }
        let mut tokens = code.split_whitespace();
        let (Some(type_text), Some(name_text)) = (tokens.next(), tokens.next()) else {
            return Err(format!("line {} of the definition of {type_name} is not 'TYPE NAME': {code:?}", k + 1));
        };
        // Constants: `TYPE NAME=VALUE` or `TYPE NAME = VALUE`.
        if name_text.contains('=') || tokens.next().is_some_and(|t| t.starts_with('=')) {
            continue;
        }
        let (base, arity) = parse_type(type_text)
            .ok_or_else(|| format!("field {name_text} of {type_name} has an unreadable type {type_text:?}"))?;
        fields.push(RawField { type_name: base, arity, name: name_text.to_string() });
    }
    Ok(fields)
}

/// `float64[36]` -> (`float64`, Fixed(36)); `string[]`, `int32[<=5]` -> Sequence.
fn parse_type(text: &str) -> Option<(String, Arity)> {
    let Some(open) = text.find('[') else { return Some((text.to_string(), Arity::Single)) };
    let base = text.get(..open)?;
    let inner = text.get(open + 1..)?.strip_suffix(']')?;
    let arity =
        if inner.is_empty() || inner.starts_with("<=") { Arity::Sequence } else { Arity::Fixed(inner.parse().ok()?) };
    (!base.is_empty()).then(|| (base.to_string(), arity))
}

struct Resolver {
    sections: HashMap<String, Vec<RawField>>,
    index: HashMap<String, usize>,
    defs: Vec<MessageDef>,
    stack: Vec<String>,
}

impl Resolver {
    /// Resolves a full type name to its index in `defs`, adding it (and its nested types).
    fn resolve(&mut self, name: &str, used_by: Option<(&str, &str)>) -> Result<usize, String> {
        // A type still being resolved is already indexed: check the stack first.
        if self.stack.iter().any(|s| s == name) {
            return Err(format!("type {name} contains itself"));
        }
        if let Some(&i) = self.index.get(name) {
            return Ok(i);
        }
        if self.defs.len() >= MAX_TYPES {
            return Err(format!("more than {MAX_TYPES} nested types"));
        }
        let raw = match self.sections.remove(name) {
            Some(fields) => fields,
            None => match BUILTIN.iter().find(|(n, _)| *n == name) {
                Some((n, text)) => parse_fields(n, text)?,
                None => {
                    return Err(match used_by {
                        Some((owner, field)) => {
                            format!("type {name} of field {field} in {owner} is not defined in the recording")
                        }
                        None => format!("type {name} is not defined in the recording"),
                    })
                }
            },
        };
        // Reserve the slot first so the top-level type keeps index 0.
        let slot = self.defs.len();
        self.defs.push(MessageDef { name: name.to_string(), fields: Vec::new(), min_bytes: 1 });
        self.index.insert(name.to_string(), slot);
        self.stack.push(name.to_string());
        let package = name.split('/').next().unwrap_or("").to_string();
        let mut fields = Vec::with_capacity(raw.len());
        let mut min_bytes = 0usize;
        for f in raw {
            let kind = match Primitive::parse(&f.type_name) {
                Some(p) => Kind::Primitive(p),
                None => {
                    if f.type_name == "wstring" || f.type_name.starts_with("wstring<=") {
                        return Err(format!("field {} of {name} is a wstring, which is not supported", f.name));
                    }
                    let nested = nested_name(&package, &f.type_name);
                    Kind::Message(self.resolve(&nested, Some((name, &f.name)))?)
                }
            };
            let element = match kind {
                Kind::Primitive(p) => p.min_bytes(),
                Kind::Message(m) => self.defs.get(m).map_or(1, |d| d.min_bytes),
            };
            min_bytes = min_bytes.saturating_add(match f.arity {
                Arity::Single => element,
                Arity::Fixed(n) => element.saturating_mul(n),
                Arity::Sequence => 4,
            });
            fields.push(Field { name: f.name, kind, arity: f.arity });
        }
        self.stack.pop();
        if let Some(def) = self.defs.get_mut(slot) {
            def.min_bytes = if fields.is_empty() { 1 } else { min_bytes };
            def.fields = fields;
        }
        Ok(slot)
    }
}

/// The full name of a nested type written in a definition of package `package`.
fn nested_name(package: &str, written: &str) -> String {
    if written.contains('/') {
        full_type_name(written)
    } else if written == "Header" {
        "std_msgs/msg/Header".to_string()
    } else {
        format!("{package}/msg/{written}")
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    /// A definition text in the layout recorders write (comments, constants, defaults, bounded
    /// types, nested sections), common practice, no source.
    const TEXT: &str = "\
# A test type
int32 MODE_A=1
int32 MODE_B = 2
std_msgs/Header header   # stamped
string<=8 label
float64 gain 1.5
float64[3] xyz
Inner[<=4] inners
================================================================================
MSG: std_msgs/Header
builtin_interfaces/Time stamp
string frame_id
================================================================================
MSG: demo_msgs/Inner
uint8 flag
float64[] values
";

    #[test]
    fn parses_sections_constants_defaults_and_arrays() {
        let s = Schema::parse("demo_msgs/msg/Outer", Some(TEXT)).expect("parses");
        assert_eq!(s.name(), "demo_msgs/msg/Outer");
        let root = &s.defs[0];
        let names: Vec<&str> = root.fields.iter().map(|f| f.name.as_str()).collect();
        assert_eq!(names, ["header", "label", "gain", "xyz", "inners"]);
        assert_eq!(root.fields[3].arity, Arity::Fixed(3));
        assert_eq!(root.fields[4].arity, Arity::Sequence);
        // Time is not in the text: taken from the built-in definitions.
        let (path, leaf) = s.path("header.stamp.nanosec").expect("path");
        assert_eq!(path, vec![0, 0, 1]);
        assert_eq!(leaf.kind, Kind::Primitive(Primitive::UInt32));
        assert!(s.path("header.stamp.usec").expect_err("missing").contains("has no field usec"));
        assert!(s.path("xyz.x").expect_err("array").contains("not a single nested message"));
    }

    #[test]
    fn decodes_a_payload_built_by_the_cdr_rules() {
        let s = Schema::parse("demo_msgs/Outer", Some(TEXT)).expect("parses");
        // OMG CDR (DDS-XTypes 1.3, 7.4), little-endian, offsets from the body start:
        let mut p = vec![0x00, 0x01, 0x00, 0x00];
        p.extend_from_slice(&7i32.to_le_bytes()); // 0: stamp.sec
        p.extend_from_slice(&9u32.to_le_bytes()); // 4: stamp.nanosec
        p.extend_from_slice(&4u32.to_le_bytes()); // 8: frame_id length incl. NUL
        p.extend_from_slice(b"map\0"); // 12..16
        p.extend_from_slice(&2u32.to_le_bytes()); // 16: label length
        p.extend_from_slice(b"a\0"); // 20..22
        p.extend_from_slice(&[0; 2]); // pad to 24
        p.extend_from_slice(&0.5f64.to_le_bytes()); // 24: gain
        for x in [1.0f64, 2.0, 3.0] {
            p.extend_from_slice(&x.to_le_bytes()); // 32, 40, 48: xyz, no count
        }
        p.extend_from_slice(&1u32.to_le_bytes()); // 56: one Inner
        p.push(5); // 60: flag
        p.extend_from_slice(&[0; 3]); // pad to 64
        p.extend_from_slice(&1u32.to_le_bytes()); // 64: one value
        p.extend_from_slice(&[0; 4]); // pad to 72
        p.extend_from_slice(&(-4.25f64).to_le_bytes()); // 72
        let v = s.decode(&p).expect("decodes");
        assert_eq!(v.at(&[0, 0, 0]).and_then(Value::as_i64), Some(7));
        assert_eq!(v.at(&[0, 1]).and_then(Value::as_str), Some("map"));
        assert_eq!(v.at(&[1]).and_then(Value::as_str), Some("a"));
        assert_eq!(v.at(&[2]).and_then(Value::as_f64), Some(0.5));
        let inners = v.at(&[4]).and_then(Value::as_list).expect("list");
        assert_eq!(inners[0].at(&[0]).and_then(Value::as_i64), Some(5));
        let values = inners[0].at(&[1]).and_then(Value::as_list).expect("values");
        assert_eq!(values[0].as_f64(), Some(-4.25));
        // One byte short is an error, not a panic.
        assert!(s.decode(&p[..p.len() - 1]).is_err());
    }

    #[test]
    fn builtins_cover_the_accepted_types() {
        for (name, _) in BUILTIN {
            assert!(Schema::builtin(name).is_some(), "{name}");
        }
        let odom = Schema::builtin("nav_msgs/Odometry").expect("odometry");
        let (_, leaf) = odom.path("pose.covariance").expect("covariance");
        assert_eq!(leaf.arity, Arity::Fixed(36));
        assert!(Schema::builtin("nav_msgs/msg/Path").is_none());
    }

    #[test]
    fn bad_definitions_are_errors() {
        let e = Schema::parse("a/msg/B", Some("Missing thing\n")).expect_err("undefined");
        assert!(e.contains("type a/msg/Missing of field thing in a/msg/B is not defined"), "{e}");
        let looped =
            "C c\n================================================================================\nMSG: a/C\nB b\n";
        assert!(Schema::parse("a/msg/B", Some(looped)).expect_err("cycle").contains("contains itself"));
        assert!(Schema::parse("a/msg/B", Some("float64[x] v\n")).expect_err("bad type").contains("unreadable"));
        assert!(Schema::parse("a/msg/B", Some("float64\n")).expect_err("no name").contains("not 'TYPE NAME'"));
        assert!(Schema::parse("a/msg/B", Some("wstring w\n")).expect_err("wstring").contains("wstring"));
    }

    #[test]
    fn empty_type_is_one_placeholder_byte() {
        let s = Schema::parse("a/msg/E", Some("# nothing\n")).expect("parses");
        assert_eq!(s.decode(&[0, 1, 0, 0, 0]).expect("decodes"), Value::Struct(Vec::new()));
        assert!(s.decode(&[0, 1, 0, 0]).is_err());
    }
}

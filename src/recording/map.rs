//! The recording map: a small TOML file that says which topics of a ROS 2 recording hold the
//! side speeds, the reference poses and the terrain (README, "Reading ROS 2 recordings").
//!
//! ```toml
//! [side_speeds]
//! topic = "/joint_states"          # sensor_msgs/msg/JointState, wheel velocities in rad/s
//! left_joints = ["fl_wheel", "rl_wheel"]
//! right_joints = ["fr_wheel", "rr_wheel"]
//! wheel_radius_m = 0.25
//! # or only topic = "/wheel/odometry" (nav_msgs/msg/Odometry or geometry_msgs/msg/TwistStamped)
//! [pose]
//! topic = "/reference/odom"
//! [terrain]
//! value = "grass"                  # or topic = "/terrain", or csv = "terrain.csv"
//! ```
//!
//! Validation is as strict as the profile reader's: an unknown key names the key with a "did
//! you mean" suggestion, a wrong type names the key and what was expected. A terrain CSV
//! (`start_s,end_s,terrain`, seconds from the first pose message) is read here, relative to the
//! map file's folder.

use std::path::{Path, PathBuf};

use toml::{Table, Value};

use super::RecordingError;
use crate::limits::{clip, read_text_limited, show_number, Limits, ReadLimitedError};
use crate::vehicle::{suggestion, valid_terrain_name};

const TOP_KEYS: &[&str] = &["side_speeds", "pose", "terrain"];
const SIDE_KEYS: &[&str] = &["topic", "left_joints", "right_joints", "wheel_radius_m"];
const POSE_KEYS: &[&str] = &["topic"];
const TERRAIN_KEYS: &[&str] = &["value", "topic", "csv"];

/// Most terrain ranges one CSV may hold.
const MAX_TERRAIN_RANGES: usize = 1_000_000;

/// Which topics of a recording become a drive log.
#[derive(Debug, Clone, PartialEq)]
pub struct RecordingMap {
    /// The map file, for messages.
    pub file: PathBuf,
    pub side_speeds: SideSpeedMap,
    /// Topic of the reference poses.
    pub pose_topic: String,
    pub terrain: TerrainMap,
}

/// Where the side speeds come from.
#[derive(Debug, Clone, PartialEq)]
pub struct SideSpeedMap {
    pub topic: String,
    /// Wheel joints of a `JointState` topic; `None` for an odometry or twist topic.
    pub wheels: Option<WheelJoints>,
}

/// Wheel joints whose velocities (rad/s) times the wheel radius give the side speeds; several
/// joints on a side are averaged.
#[derive(Debug, Clone, PartialEq)]
pub struct WheelJoints {
    pub left: Vec<String>,
    pub right: Vec<String>,
    pub wheel_radius_m: f64,
}

/// Where the terrain comes from.
#[derive(Debug, Clone, PartialEq)]
pub enum TerrainMap {
    /// One terrain for the whole recording.
    Value(String),
    /// A `std_msgs/msg/String` topic: each message sets the terrain from its time on.
    Topic(String),
    /// Time ranges from a CSV file.
    Ranges { file: PathBuf, ranges: Vec<TerrainRange> },
}

/// One row of a terrain CSV: `terrain` applies for `start_s <= t < end_s`, seconds from the
/// first pose message.
#[derive(Debug, Clone, PartialEq)]
pub struct TerrainRange {
    /// 1-based line in the CSV.
    pub line: usize,
    pub start_s: f64,
    pub end_s: f64,
    pub terrain: String,
}

impl RecordingMap {
    /// Reads and validates a map file (and its terrain CSV, if it names one), each no larger
    /// than `limits.max_file_bytes`.
    pub fn read(path: &Path, limits: &Limits) -> Result<RecordingMap, RecordingError> {
        let text = read_limited(path, limits)?;
        RecordingMap::parse(path, &text, limits)
    }

    /// Validates map text; `path` names the file in messages and locates a terrain CSV.
    ///
    /// ```
    /// use std::path::Path;
    /// use skidroute::recording::{RecordingMap, TerrainMap};
    /// let text = "[side_speeds]\ntopic = \"/odom\"\n[pose]\ntopic = \"/ref\"\n[terrain]\nvalue = \"grass\"\n";
    /// let map = RecordingMap::parse(Path::new("map.toml"), text, &Default::default()).unwrap();
    /// assert_eq!(map.terrain, TerrainMap::Value("grass".into()));
    /// ```
    pub fn parse(path: &Path, text: &str, limits: &Limits) -> Result<RecordingMap, RecordingError> {
        let root: Table = text.parse().map_err(|e: toml::de::Error| RecordingError::MapSyntax {
            file: path.to_path_buf(),
            message: syntax_message(text, &e),
        })?;
        let root = Section { file: path, prefix: String::new(), table: &root };
        root.check_keys(TOP_KEYS)?;
        let side = root.table("side_speeds")?;
        side.check_keys(SIDE_KEYS)?;
        let side_speeds = SideSpeedMap { topic: side.topic("topic")?, wheels: wheel_joints(&side)? };
        let pose = root.table("pose")?;
        pose.check_keys(POSE_KEYS)?;
        let pose_topic = pose.topic("topic")?;
        let terrain = terrain_map(&root.table("terrain")?, limits)?;
        Ok(RecordingMap { file: path.to_path_buf(), side_speeds, pose_topic, terrain })
    }

    /// The files this map reads (the map and a terrain CSV), so outputs never overwrite them.
    pub fn files(&self) -> Vec<PathBuf> {
        let mut files = vec![self.file.clone()];
        if let TerrainMap::Ranges { file, .. } = &self.terrain {
            files.push(file.clone());
        }
        files
    }
}

fn read_limited(path: &Path, limits: &Limits) -> Result<String, RecordingError> {
    read_text_limited(path, limits.max_file_bytes).map_err(|e| match e {
        ReadLimitedError::Io(source) => RecordingError::Io { file: path.to_path_buf(), source },
        other => RecordingError::File { file: path.to_path_buf(), what: other.to_string() },
    })
}

fn syntax_message(text: &str, e: &toml::de::Error) -> String {
    let message = e.message().trim().replace('\n', "; ");
    match e.span() {
        Some(span) => {
            let before = text.get(..span.start).unwrap_or(text);
            let line = before.matches('\n').count() + 1;
            let column = before.rsplit('\n').next().map_or(0, |l| l.chars().count()) + 1;
            format!("line {line}, column {column}: {message}")
        }
        None => message,
    }
}

fn wheel_joints(s: &Section) -> Result<Option<WheelJoints>, RecordingError> {
    let present: Vec<&str> =
        ["left_joints", "right_joints", "wheel_radius_m"].into_iter().filter(|k| s.table.contains_key(*k)).collect();
    if present.is_empty() {
        return Ok(None);
    }
    for key in ["left_joints", "right_joints", "wheel_radius_m"] {
        if !present.contains(&key) {
            let what = format!(
                "missing required key (left_joints, right_joints and wheel_radius_m go together; {} given)",
                present.join(", ")
            );
            return Err(s.error(key, what));
        }
    }
    let left = s.names("left_joints")?;
    let right = s.names("right_joints")?;
    if let Some(both) = left.iter().find(|j| right.contains(j)) {
        return Err(s.error("right_joints", format!("joint {both:?} is also in left_joints")));
    }
    let wheel_radius_m = match s.table.get("wheel_radius_m") {
        Some(Value::Float(x)) if x.is_finite() && *x > 0.0 => *x,
        Some(Value::Integer(i)) if *i > 0 => *i as f64,
        Some(v) => return Err(s.error("wheel_radius_m", format!("must be a positive number, got {}", describe(v)))),
        None => return Err(s.error("wheel_radius_m", "missing required key, expected a positive number")),
    };
    Ok(Some(WheelJoints { left, right, wheel_radius_m }))
}

fn terrain_map(s: &Section, limits: &Limits) -> Result<TerrainMap, RecordingError> {
    s.check_keys(TERRAIN_KEYS)?;
    let given: Vec<&str> = TERRAIN_KEYS.iter().copied().filter(|k| s.table.contains_key(*k)).collect();
    match given.as_slice() {
        ["value"] => {
            let name = s.string("value")?;
            if !valid_terrain_name(name) {
                return Err(
                    s.error("value", format!("{:?} is not a terrain name (letters, digits, - and _)", clip(name)))
                );
            }
            Ok(TerrainMap::Value(name.to_string()))
        }
        ["topic"] => Ok(TerrainMap::Topic(s.topic("topic")?)),
        ["csv"] => {
            let relative = s.string("csv")?;
            let file = s.file.parent().unwrap_or(Path::new("")).join(relative);
            let text = read_limited(&file, limits)?;
            let ranges = parse_terrain_csv(&file, &text)?;
            Ok(TerrainMap::Ranges { file, ranges })
        }
        [] => Err(RecordingError::Map {
            file: s.file.to_path_buf(),
            key: s.prefix.clone(),
            what: "needs one of value = \"NAME\", topic = \"/TOPIC\" or csv = \"FILE\"".to_string(),
        }),
        several => Err(RecordingError::Map {
            file: s.file.to_path_buf(),
            key: s.prefix.clone(),
            what: format!("give only one of value, topic and csv, not {}", several.join(" and ")),
        }),
    }
}

/// Parses a terrain CSV: header `start_s,end_s,terrain`, ranges that do not overlap.
fn parse_terrain_csv(file: &Path, text: &str) -> Result<Vec<TerrainRange>, RecordingError> {
    let line_error = |line: usize, what: String| RecordingError::TerrainLine { file: file.to_path_buf(), line, what };
    let mut lines = text.strip_prefix('\u{feff}').unwrap_or(text).lines().enumerate();
    let header = lines.next().map(|(_, l)| l.trim()).unwrap_or("");
    let columns: Vec<&str> = header.split(',').map(str::trim).collect();
    if columns != ["start_s", "end_s", "terrain"] {
        return Err(line_error(1, format!("header must be start_s,end_s,terrain, got {:?}", clip(header))));
    }
    let mut ranges: Vec<TerrainRange> = Vec::new();
    for (k, raw) in lines {
        let line = k + 1;
        if raw.trim().is_empty() {
            continue;
        }
        let cells: Vec<&str> = raw.split(',').map(str::trim).collect();
        let [start, end, terrain] = cells.as_slice() else {
            return Err(line_error(line, format!("has {} fields, the header has 3", cells.len())));
        };
        let number = |column: &str, text: &str| match text.parse::<f64>() {
            Ok(x) if x.is_finite() => Ok(x),
            _ => Err(line_error(line, format!("column {column}: {:?} is not a finite number of seconds", clip(text)))),
        };
        let (start_s, end_s) = (number("start_s", start)?, number("end_s", end)?);
        if end_s <= start_s {
            let what = format!("end_s {} is not after start_s {}", show_number(end_s), show_number(start_s));
            return Err(line_error(line, what));
        }
        if !valid_terrain_name(terrain) {
            let what = format!("column terrain: {:?} is not a terrain name (letters, digits, - and _)", clip(terrain));
            return Err(line_error(line, what));
        }
        if ranges.len() >= MAX_TERRAIN_RANGES {
            return Err(line_error(line, format!("more than {MAX_TERRAIN_RANGES} ranges")));
        }
        ranges.push(TerrainRange { line, start_s, end_s, terrain: terrain.to_string() });
    }
    if ranges.is_empty() {
        return Err(RecordingError::File { file: file.to_path_buf(), what: "has no terrain ranges".to_string() });
    }
    ranges.sort_by(|a, b| a.start_s.total_cmp(&b.start_s));
    for pair in ranges.windows(2) {
        if let [a, b] = pair {
            if b.start_s < a.end_s {
                let what = format!("range {}..{} s overlaps the range on line {}", b.start_s, b.end_s, a.line);
                return Err(line_error(b.line, what));
            }
        }
    }
    Ok(ranges)
}

/// One TOML table being validated, with its dotted path for messages.
struct Section<'a> {
    file: &'a Path,
    prefix: String,
    table: &'a Table,
}

impl<'a> Section<'a> {
    fn key_path(&self, key: &str) -> String {
        if self.prefix.is_empty() {
            clip(key).into_owned()
        } else {
            format!("{}.{}", self.prefix, clip(key))
        }
    }

    fn error(&self, key: &str, what: impl Into<String>) -> RecordingError {
        RecordingError::Map { file: self.file.to_path_buf(), key: self.key_path(key), what: what.into() }
    }

    fn check_keys(&self, allowed: &[&str]) -> Result<(), RecordingError> {
        let Some(key) = self.table.keys().find(|k| !allowed.contains(&k.as_str())) else {
            return Ok(());
        };
        match suggestion(key, allowed) {
            Some(near) => Err(self.error(key, format!("unknown key (did you mean {near}?)"))),
            None => Err(self.error(key, format!("unknown key (expected {})", allowed.join(", ")))),
        }
    }

    fn table(&self, key: &str) -> Result<Section<'a>, RecordingError> {
        match self.table.get(key) {
            Some(Value::Table(t)) => Ok(Section { file: self.file, prefix: self.key_path(key), table: t }),
            Some(v) => Err(self.error(key, format!("must be a table, got {}", describe(v)))),
            None => Err(self.error(key, "missing required table")),
        }
    }

    fn string(&self, key: &str) -> Result<&'a str, RecordingError> {
        match self.table.get(key) {
            Some(Value::String(s)) if !s.trim().is_empty() => Ok(s),
            Some(Value::String(_)) => Err(self.error(key, "must not be empty")),
            Some(v) => Err(self.error(key, format!("must be a string, got {}", describe(v)))),
            None => Err(self.error(key, "missing required key, expected a string")),
        }
    }

    /// A ROS 2 topic name: absolute, as recordings store them.
    fn topic(&self, key: &str) -> Result<String, RecordingError> {
        let topic = self.string(key)?;
        if !topic.starts_with('/') {
            let what = format!("{:?} must start with / (recordings store absolute topic names)", clip(topic));
            return Err(self.error(key, what));
        }
        Ok(topic.to_string())
    }

    /// A non-empty array of non-empty, distinct strings.
    fn names(&self, key: &str) -> Result<Vec<String>, RecordingError> {
        let expected = "a non-empty array of joint names";
        let items = match self.table.get(key) {
            Some(Value::Array(items)) if !items.is_empty() => items,
            Some(v) => return Err(self.error(key, format!("must be {expected}, got {}", describe(v)))),
            None => return Err(self.error(key, format!("missing required key, expected {expected}"))),
        };
        let mut names: Vec<String> = Vec::with_capacity(items.len());
        for (i, item) in items.iter().enumerate() {
            match item {
                Value::String(s) if !s.is_empty() && !names.contains(s) => names.push(s.clone()),
                Value::String(s) if !s.is_empty() => {
                    return Err(self.error(key, format!("joint {:?} is listed twice", clip(s))))
                }
                v => {
                    let what = format!("item {} must be a joint name (a non-empty string), got {}", i + 1, describe(v));
                    return Err(self.error(key, what));
                }
            }
        }
        Ok(names)
    }
}

/// Short description of a TOML value for error messages.
fn describe(v: &Value) -> String {
    match v {
        Value::Integer(i) => i.to_string(),
        Value::Float(f) => crate::limits::show_number(*f),
        Value::String(s) => format!("the string {:?}", crate::limits::clip(s)),
        Value::Boolean(b) => format!("the boolean {b}"),
        Value::Datetime(d) => format!("the date-time {d}"),
        Value::Array(_) => "an array".to_string(),
        Value::Table(_) => "a table".to_string(),
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    const JOINTS: &str = r#"
[side_speeds]
topic = "/joint_states"
left_joints = ["fl_wheel", "rl_wheel"]
right_joints = ["fr_wheel", "rr_wheel"]
wheel_radius_m = 0.25
[pose]
topic = "/reference/odom"
[terrain]
value = "grass"
"#;

    fn parse(text: &str) -> Result<RecordingMap, RecordingError> {
        RecordingMap::parse(Path::new("map.toml"), text, &Limits::default())
    }

    fn error(text: &str) -> String {
        parse(text).expect_err("must be refused").to_string()
    }

    #[test]
    fn reads_joints_map() {
        let m = parse(JOINTS).expect("valid");
        let w = m.side_speeds.wheels.expect("joints");
        assert_eq!(w.left, ["fl_wheel", "rl_wheel"]);
        assert!((w.wheel_radius_m - 0.25).abs() < 1e-15);
        assert_eq!(m.pose_topic, "/reference/odom");
        assert_eq!(m.terrain, TerrainMap::Value("grass".into()));
    }

    #[test]
    fn unknown_keys_get_suggestions() {
        let e = error(&JOINTS.replace("left_joints", "left_jionts"));
        assert_eq!(e, "map.toml: side_speeds.left_jionts: unknown key (did you mean left_joints?)");
        let e = error(&JOINTS.replace("[pose]", "[poses]"));
        assert_eq!(e, "map.toml: poses: unknown key (did you mean pose?)");
        let e = error(&JOINTS.replace("value = ", "colour = "));
        assert!(e.contains("terrain.colour: unknown key (expected value, topic, csv)"), "{e}");
    }

    #[test]
    fn wrong_types_name_key_and_expectation() {
        let e = error(&JOINTS.replace("wheel_radius_m = 0.25", "wheel_radius_m = \"big\""));
        assert_eq!(e, "map.toml: side_speeds.wheel_radius_m: must be a positive number, got the string \"big\"");
        let e = error(&JOINTS.replace("[\"fl_wheel\", \"rl_wheel\"]", "\"fl_wheel\""));
        assert!(e.contains("side_speeds.left_joints: must be a non-empty array of joint names"), "{e}");
        let e = error(&JOINTS.replace("\"/reference/odom\"", "\"reference/odom\""));
        assert!(e.contains("pose.topic: \"reference/odom\" must start with /"), "{e}");
        let e = error(&JOINTS.replace("wheel_radius_m = 0.25\n", ""));
        assert!(e.contains("side_speeds.wheel_radius_m: missing required key"), "{e}");
        let e = error(&JOINTS.replace("value = \"grass\"", "value = \"grass\"\ntopic = \"/t\""));
        assert!(e.contains("terrain: give only one of value, topic and csv"), "{e}");
        let e = error(&JOINTS.replace("[pose]\ntopic = \"/reference/odom\"\n", ""));
        assert!(e.contains("map.toml: pose: missing required table"), "{e}");
        assert!(error("[side_speeds\n").contains("not valid TOML: line 1"));
    }

    #[test]
    fn terrain_csv_ranges_are_checked() {
        let ok =
            parse_terrain_csv(Path::new("t.csv"), "start_s,end_s,terrain\n10,20,gravel\n0,10,grass\n").expect("ok");
        assert_eq!(ok[0].terrain, "grass");
        assert_eq!(ok[1].line, 2);
        let overlap = parse_terrain_csv(Path::new("t.csv"), "start_s,end_s,terrain\n0,10,grass\n5,20,gravel\n");
        assert_eq!(
            overlap.expect_err("overlap").to_string(),
            "t.csv: line 3: range 5..20 s overlaps the range on line 2"
        );
        let bad = parse_terrain_csv(Path::new("t.csv"), "start_s,end_s,terrain\n0,x,grass\n");
        assert!(bad.expect_err("bad").to_string().contains("line 2: column end_s"));
        let header = parse_terrain_csv(Path::new("t.csv"), "from,to,terrain\n");
        assert!(header.expect_err("header").to_string().contains("line 1: header must be start_s,end_s,terrain"));
    }
}

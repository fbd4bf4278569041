//! Streams an MCAP recording from disk, message by message, and keeps only the numbers the
//! drive log needs.
//!
//! The container (chunked or not, zstd- or lz4-compressed, indexed or not) is read front to
//! back by the `mcap` crate's streaming reader, so memory follows the largest chunk, not the
//! file. Each channel is checked once, at its first message: topics the map does not name are
//! skipped without decoding; a mapped topic must carry CDR messages of an accepted type, whose
//! definition (from the recording, or built in) is parsed once. Per message only the side speeds,
//! the pose or the terrain name are kept.

use std::cell::Cell;
use std::collections::{BTreeMap, HashMap};
use std::fs::File;
use std::io::{BufReader, Read};
use std::path::Path;
use std::rc::Rc;

use mcap::sans_io::LinearReaderOptions;
use mcap::{McapError, Message};

use super::align::{assemble, TerrainSource};
use super::extract::{
    ExtractError, PoseExtract, PoseSample, SideExtract, SideSample, TextExtract, POSE_TYPES, SIDE_SPEED_TYPES,
    TERRAIN_TYPES,
};
use super::map::{RecordingMap, TerrainMap};
use super::schema::{full_type_name, Schema};
use super::RecordingError;
use crate::fit::log::DriveLog;
use crate::limits::Limits;
use crate::progress::Progress;

/// The 8 bytes every MCAP file starts with.
pub const MCAP_MAGIC: &[u8; 8] = b"\x89MCAP0\r\n";

/// Reads a ROS 2 recording (MCAP, CDR messages) into a drive log, through `map`. Side speeds
/// from an odometry or twist topic use `track_width_m` (the profile's) in the ideal inverse.
/// The file must be within `limits.max_file_bytes`; `progress` counts bytes read.
///
/// ```no_run
/// use std::path::Path;
/// use skidroute::{limits::Limits, progress::NoProgress, recording::{read_recording, RecordingMap}};
/// let limits = Limits::default();
/// let map = RecordingMap::read(Path::new("map.toml"), &limits)?;
/// let log = read_recording(Path::new("run.mcap"), &map, 0.9, &limits, &NoProgress)?;
/// println!("{} samples on {:?}", log.samples.len(), log.terrains);
/// # Ok::<(), skidroute::recording::RecordingError>(())
/// ```
pub fn read_recording(
    path: &Path,
    map: &RecordingMap,
    track_width_m: f64,
    limits: &Limits,
    progress: &dyn Progress,
) -> Result<DriveLog, RecordingError> {
    let io = |source| RecordingError::Io { file: path.to_path_buf(), source };
    let mut file = File::open(path).map_err(io)?;
    let meta = file.metadata().map_err(io)?;
    if meta.is_dir() {
        return Err(io(std::io::Error::other("is a directory")));
    }
    let too_large = || RecordingError::File {
        file: path.to_path_buf(),
        what: format!(
            "is larger than the file-size limit of {} MiB (raise it with SKIDROUTE_MAX_FILE_MIB)",
            limits.max_file_mib()
        ),
    };
    if meta.len() > limits.max_file_bytes {
        return Err(too_large());
    }
    let mut magic = [0u8; 8];
    let got = read_up_to(&mut file, &mut magic).map_err(io)?;
    if got < magic.len() || &magic != MCAP_MAGIC {
        return Err(RecordingError::NotMcap { file: path.to_path_buf() });
    }
    let read = Rc::new(Cell::new(magic.len() as u64));
    progress.start(meta.len(), "reading");
    progress.advance(magic.len() as u64);
    let source = Counted {
        inner: BufReader::with_capacity(1 << 20, file.take(limits.max_file_bytes)),
        read: read.clone(),
        progress,
    };
    let record_limit = usize::try_from(limits.max_file_bytes).unwrap_or(usize::MAX);
    let options = LinearReaderOptions::default().with_skip_start_magic(true).with_record_length_limit(record_limit);
    let mut collector = Collector::new(path, map, track_width_m, limits);
    for item in mcap::io::MessageReader::new_with_options(source, options) {
        let message = item.map_err(|e| container_error(path, &e, read.get(), &collector))?;
        collector.message(&message)?;
    }
    progress.finish();
    if read.get() > limits.max_file_bytes {
        return Err(too_large());
    }
    collector.finish()
}

/// Reads into `buf` until it is full or the file ends; returns the bytes read.
fn read_up_to(file: &mut File, buf: &mut [u8]) -> std::io::Result<usize> {
    let mut n = 0;
    while n < buf.len() {
        match file.read(buf.get_mut(n..).unwrap_or_default()) {
            Ok(0) => break,
            Ok(k) => n += k,
            Err(e) if e.kind() == std::io::ErrorKind::Interrupted => {}
            Err(e) => return Err(e),
        }
    }
    Ok(n)
}

fn container_error(path: &Path, e: &McapError, bytes: u64, seen: &Collector) -> RecordingError {
    let messages = seen.messages;
    let truncated = match e {
        McapError::UnexpectedEof => true,
        McapError::Io(source) => source.kind() == std::io::ErrorKind::UnexpectedEof,
        _ => false,
    };
    if truncated {
        let seconds = match seen.log_span_ns {
            Some((first, last)) => last.saturating_sub(first) as f64 / 1e9,
            None => 0.0,
        };
        RecordingError::Truncated { file: path.to_path_buf(), bytes, messages, seconds }
    } else {
        RecordingError::Container { file: path.to_path_buf(), bytes, messages, what: e.to_string() }
    }
}

/// A reader that counts the bytes it hands out and reports them as progress.
struct Counted<'p, R> {
    inner: R,
    read: Rc<Cell<u64>>,
    progress: &'p dyn Progress,
}

impl<R: Read> Read for Counted<'_, R> {
    fn read(&mut self, buf: &mut [u8]) -> std::io::Result<usize> {
        let n = self.inner.read(buf)?;
        self.read.set(self.read.get() + n as u64);
        self.progress.advance(n as u64);
        Ok(n)
    }
}

/// What one channel contributes; `None` entries mean the channel plays no such part.
struct Plan {
    topic: String,
    schema: Schema,
    side: Option<SideExtract>,
    pose: Option<PoseExtract>,
    terrain: Option<TextExtract>,
    /// Messages seen on this channel.
    count: usize,
}

/// Gathers the needed fields of every mapped message.
struct Collector<'a> {
    file: &'a Path,
    map: &'a RecordingMap,
    track_width_m: f64,
    limits: &'a Limits,
    /// Plans by channel id; `None` for channels the map does not name.
    plans: HashMap<u16, Option<Plan>>,
    /// Every topic with messages, with its type, for messages.
    topics: BTreeMap<String, String>,
    messages: u64,
    /// Log times (ns) of the first and the latest message.
    log_span_ns: Option<(u64, u64)>,
    side: Vec<SideSample>,
    poses: Vec<PoseSample>,
    marks: Vec<(i64, String)>,
    pose_count: usize,
}

impl<'a> Collector<'a> {
    fn new(file: &'a Path, map: &'a RecordingMap, track_width_m: f64, limits: &'a Limits) -> Collector<'a> {
        Collector {
            file,
            map,
            track_width_m,
            limits,
            plans: HashMap::new(),
            topics: BTreeMap::new(),
            messages: 0,
            log_span_ns: None,
            side: Vec::new(),
            poses: Vec::new(),
            marks: Vec::new(),
            pose_count: 0,
        }
    }

    fn topic_error(&self, topic: &str, what: String) -> RecordingError {
        RecordingError::Topic { file: self.file.to_path_buf(), topic: topic.to_string(), what }
    }

    fn terrain_topic(&self) -> Option<&str> {
        match &self.map.terrain {
            TerrainMap::Topic(t) => Some(t),
            _ => None,
        }
    }

    /// The plan of a channel seen for the first time.
    fn plan(&self, channel: &mcap::Channel) -> Result<Option<Plan>, RecordingError> {
        let topic = channel.topic.as_str();
        let roles = [
            (topic == self.map.side_speeds.topic).then_some(("side_speeds", SIDE_SPEED_TYPES)),
            (topic == self.map.pose_topic).then_some(("pose", POSE_TYPES)),
            (Some(topic) == self.terrain_topic()).then_some(("terrain", TERRAIN_TYPES)),
        ];
        if roles.iter().all(Option::is_none) {
            return Ok(None);
        }
        let type_name = channel.schema.as_ref().map(|s| full_type_name(&s.name)).unwrap_or_default();
        for &(section, accepted) in roles.iter().flatten() {
            if !accepted.contains(&type_name.as_str()) {
                return Err(RecordingError::WrongType {
                    file: self.file.to_path_buf(),
                    topic: topic.to_string(),
                    found: if type_name.is_empty() { "messages without a schema".to_string() } else { type_name },
                    section,
                    accepted,
                });
            }
        }
        if channel.message_encoding != "cdr" {
            let what = format!("messages are encoded as {:?}, not CDR (ROS 2)", channel.message_encoding);
            return Err(self.topic_error(topic, what));
        }
        let schema = self.schema(topic, &type_name, channel)?;
        let type_error = |e: ExtractError| match e {
            ExtractError::Type(what) | ExtractError::Message(what) => self.topic_error(topic, what),
            ExtractError::Joint { .. } => self.topic_error(topic, "unexpected joint error".to_string()),
        };
        let side = match roles[0] {
            Some(_) => Some(
                SideExtract::new(&schema, &type_name, self.map.side_speeds.wheels.as_ref(), self.track_width_m)
                    .map_err(type_error)?,
            ),
            None => None,
        };
        let pose = match roles[1] {
            Some(_) => Some(PoseExtract::new(&schema, &type_name).map_err(type_error)?),
            None => None,
        };
        let terrain = match roles[2] {
            Some(_) => Some(TextExtract::new(&schema).map_err(type_error)?),
            None => None,
        };
        Ok(Some(Plan { topic: topic.to_string(), schema, side, pose, terrain, count: 0 }))
    }

    /// The channel's message definition: parsed from the recording when it is `ros2msg` text,
    /// else the built-in definition of the type.
    fn schema(&self, topic: &str, type_name: &str, channel: &mcap::Channel) -> Result<Schema, RecordingError> {
        // A blank definition (some writers leave it empty) falls back to the built-in one.
        let recorded =
            channel.schema.as_ref().filter(|s| s.encoding == "ros2msg" && !s.data.iter().all(u8::is_ascii_whitespace));
        match recorded {
            Some(s) => {
                let text = std::str::from_utf8(&s.data)
                    .map_err(|_| self.topic_error(topic, format!("the definition of {type_name} is not UTF-8 text")))?;
                Schema::parse(type_name, Some(text)).map_err(|what| self.topic_error(topic, what))
            }
            None => Schema::builtin(type_name).ok_or_else(|| {
                let encoding = channel.schema.as_ref().map_or("none", |s| s.encoding.as_str());
                self.topic_error(topic, format!("schema encoding {encoding:?} is not supported (expected ros2msg)"))
            }),
        }
    }

    fn message(&mut self, message: &Message) -> Result<(), RecordingError> {
        self.messages += 1;
        let first = self.log_span_ns.map_or(message.log_time, |(first, _)| first);
        self.log_span_ns = Some((first, message.log_time));
        let channel = &message.channel;
        if !self.plans.contains_key(&channel.id) {
            let type_name =
                channel.schema.as_ref().map_or_else(|| "no schema".to_string(), |s| full_type_name(&s.name));
            self.topics.entry(channel.topic.clone()).or_insert(type_name);
            let plan = self.plan(channel)?;
            self.plans.insert(channel.id, plan);
        }
        let Some(Some(plan)) = self.plans.get_mut(&channel.id) else { return Ok(()) };
        plan.count += 1;
        let number = plan.count;
        let topic = plan.topic.as_str();
        let file = self.file;
        let at = |what: String| RecordingError::Topic {
            file: file.to_path_buf(),
            topic: topic.to_string(),
            what: format!("message {number}: {what}"),
        };
        let value = plan.schema.decode(&message.data).map_err(|e| at(format!("cannot decode: {e}")))?;
        let limit = self.limits.max_total_points;
        let over = |n: usize| match n >= limit {
            true => Err(at(format!(
                "more than {limit} messages kept, the limit (raise it with SKIDROUTE_MAX_TOTAL_POINTS)"
            ))),
            false => Ok(()),
        };
        if let Some(side) = &plan.side {
            let sample = side.sample(&value).map_err(|e| match e {
                ExtractError::Joint { joint, key, present } => RecordingError::JointsNotFound {
                    file: file.to_path_buf(),
                    topic: topic.to_string(),
                    joint,
                    key,
                    present: if present.is_empty() { "none".to_string() } else { present.join(", ") },
                },
                ExtractError::Type(w) | ExtractError::Message(w) => at(w),
            })?;
            over(self.side.len())?;
            self.side.push(sample);
        }
        if let Some(pose) = &plan.pose {
            self.pose_count += 1;
            let sample = pose.sample(&value, self.pose_count).map_err(|e| match e {
                ExtractError::Type(w) | ExtractError::Message(w) => at(w),
                ExtractError::Joint { joint, .. } => at(format!("joint {joint}")),
            })?;
            over(self.poses.len())?;
            self.poses.push(sample);
        }
        if let Some(terrain) = &plan.terrain {
            let name = terrain.text(&value).map_err(|_| at("has no data string".to_string()))?.trim();
            if !crate::vehicle::valid_terrain_name(name) {
                let what = format!("{:?} is not a terrain name (letters, digits, - and _)", crate::limits::clip(name));
                return Err(at(what));
            }
            let t_ns = i64::try_from(message.log_time).map_err(|_| at("log time out of range".to_string()))?;
            over(self.marks.len())?;
            // Consecutive repeats of the same terrain add nothing.
            if self.marks.last().is_none_or(|(_, last)| last != name) {
                self.marks.push((t_ns, name.to_string()));
            }
        }
        Ok(())
    }

    fn missing(&self, topic: &str, section: &'static str) -> RecordingError {
        let present = if self.topics.is_empty() {
            "no messages at all".to_string()
        } else {
            self.topics.iter().map(|(t, ty)| format!("{t} ({ty})")).collect::<Vec<_>>().join(", ")
        };
        RecordingError::MissingTopic { file: self.file.to_path_buf(), topic: topic.to_string(), section, present }
    }

    fn finish(self) -> Result<DriveLog, RecordingError> {
        let side_topic = self.map.side_speeds.topic.as_str();
        if self.side.is_empty() {
            return Err(self.missing(side_topic, "side_speeds"));
        }
        if self.poses.is_empty() {
            return Err(self.missing(&self.map.pose_topic, "pose"));
        }
        let terrain = match &self.map.terrain {
            TerrainMap::Value(v) => TerrainSource::Value(v),
            TerrainMap::Topic(t) if self.marks.is_empty() => return Err(self.missing(t, "terrain")),
            TerrainMap::Topic(_) => TerrainSource::Marks(&self.marks),
            TerrainMap::Ranges { ranges, .. } => TerrainSource::Ranges(ranges),
        };
        assemble(self.file, [side_topic, &self.map.pose_topic], self.side, self.poses, terrain, self.limits)
    }
}

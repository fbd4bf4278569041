//! ROS 2 recordings (MCAP files with CDR-encoded messages) read directly as drive logs, through a
//! recording map that names the side-speed, pose and terrain topics (README, "Reading ROS 2
//! recordings").
//!
//! The result is the same [`DriveLog`] the CSV reader gives, so everything downstream (windows,
//! checks, the fit) works unchanged. Pieces: the map file ([`map`]), the CDR reader ([`cdr`]),
//! message definitions and generic decoding ([`schema`]), the fields taken from each message
//! ([`extract`]), resampling onto the pose times ([`align`]) and the streaming container reader
//! ([`read`]). Units: SI; poses in the recording's local map frame (x, y metres; yaw radians
//! anticlockwise about z); sample times in seconds from the first pose message.

pub mod align;
pub mod cdr;
pub mod extract;
pub mod map;
pub mod read;
pub mod schema;

use std::io::Read as _;
use std::path::{Path, PathBuf};

pub use map::{RecordingMap, SideSpeedMap, TerrainMap, TerrainRange, WheelJoints};
pub use read::{read_recording, MCAP_MAGIC};

use crate::fit::log::{read_log_with, DriveLog};
use crate::limits::Limits;
use crate::progress::Progress;

/// A problem with a recording or its map (exit code 2). Every message names the file; those
/// about a topic name the topic, and those about a message its number on the topic.
#[derive(Debug, thiserror::Error)]
pub enum RecordingError {
    #[error("{file}: cannot read: {source}")]
    Io { file: PathBuf, source: std::io::Error },
    #[error("{file}: {what}")]
    File { file: PathBuf, what: String },
    #[error("{file}: not valid TOML: {message}")]
    MapSyntax { file: PathBuf, message: String },
    #[error("{file}: {key}: {what}")]
    Map { file: PathBuf, key: String, what: String },
    #[error("{file}: line {line}: {what}")]
    TerrainLine { file: PathBuf, line: usize, what: String },
    #[error("{file} is a ROS 2 recording (MCAP): reading it needs a recording map (--recording-map MAP.toml) naming its side-speed, pose and terrain topics")]
    MapNeeded { file: PathBuf },
    #[error("{file}: not an MCAP file (it does not start with the MCAP magic bytes); give drive logs as .csv and ROS 2 recordings as .mcap")]
    NotMcap { file: PathBuf },
    #[error("{file}: the recording is truncated: it ends in the middle of a record at byte {bytes}, after {messages} complete messages ({seconds:.1} s of recording); was the recorder stopped abruptly?")]
    Truncated { file: PathBuf, bytes: u64, messages: u64, seconds: f64 },
    #[error("{file}: cannot read the recording near byte {bytes} (after {messages} messages): {what}")]
    Container { file: PathBuf, bytes: u64, messages: u64, what: String },
    #[error(
        "{file}: no messages on topic {topic} (named in [{section}] of the recording map); the recording has {present}"
    )]
    MissingTopic { file: PathBuf, topic: String, section: &'static str, present: String },
    #[error("{file}: topic {topic} holds {found}, but [{section}] accepts {}", accepted.join(", "))]
    WrongType { file: PathBuf, topic: String, found: String, section: &'static str, accepted: &'static [&'static str] },
    #[error(
        "{file}: topic {topic}: joint {joint:?} (from side_speeds.{key}) is not in its messages; the joints present are {present}"
    )]
    JointsNotFound { file: PathBuf, topic: String, joint: String, key: &'static str, present: String },
    #[error("{file}: topic {topic}: {what}")]
    Topic { file: PathBuf, topic: String, what: String },
}

/// True when `path` is a recording: its extension is `.mcap` (any case) or it starts with the
/// MCAP magic bytes. A file that cannot be opened is not (the CSV reader reports why).
pub fn is_recording(path: &Path) -> bool {
    if path.extension().is_some_and(|e| e.eq_ignore_ascii_case("mcap")) {
        return true;
    }
    let mut head = [0u8; 8];
    std::fs::File::open(path).and_then(|mut f| f.read_exact(&mut head)).is_ok() && &head == MCAP_MAGIC
}

/// Reads any drive log: a ROS 2 recording through `map` (an error when there is none), else a
/// CSV drive log. `track_width_m` (the profile's) turns an odometry or twist topic into side
/// speeds; `progress` counts the bytes of a recording.
///
/// ```no_run
/// use std::path::Path;
/// use skidroute::{limits::Limits, progress::NoProgress, recording::read_drive_log};
/// let log = read_drive_log(Path::new("drive.csv"), None, 0.9, &Limits::default(), &NoProgress)?;
/// # Ok::<(), skidroute::Error>(())
/// ```
pub fn read_drive_log(
    path: &Path,
    map: Option<&RecordingMap>,
    track_width_m: f64,
    limits: &Limits,
    progress: &dyn Progress,
) -> Result<DriveLog, crate::Error> {
    if is_recording(path) {
        let map = map.ok_or_else(|| RecordingError::MapNeeded { file: path.to_path_buf() })?;
        Ok(read_recording(path, map, track_width_m, limits, progress)?)
    } else {
        Ok(read_log_with(path, limits)?)
    }
}

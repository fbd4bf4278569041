//! Reading drive logs for `fit` and `replay`: every log file goes through [`load_drive_logs`]
//! (CSV drive logs, and ROS 2 recordings through the `--recording-map`), so both commands read
//! the same formats the same way.

use std::path::PathBuf;

use anyhow::Result;
use clap::Args;
use skidroute::fit::log::DriveLog;
use skidroute::limits::Limits;
use skidroute::recording::{is_recording, read_drive_log, RecordingError, RecordingMap};

use super::progress::Bar;

/// The log inputs `fit` and `replay` share: drive logs or recordings, and the map for recordings.
#[derive(Args)]
pub struct LogInputArgs {
    /// Drive logs (CSV: t_s,left_mps,right_mps,x_m,y_m,yaw_rad,terrain; lat_deg,lon_deg may replace x_m,y_m),
    /// or ROS 2 recordings (.mcap) read through --recording-map.
    #[arg(required = true)]
    pub logs: Vec<PathBuf>,
    /// Recording map (TOML): which topics of the ROS 2 recordings hold side speeds, poses and terrain.
    #[arg(long, value_name = "MAP")]
    pub recording_map: Option<PathBuf>,
}

/// The map of `--recording-map`, read once for the run. Without one, a recording among `logs`
/// is refused here, before any log or profile is read.
pub fn recording_map<'a>(
    map: Option<&PathBuf>,
    mut logs: impl Iterator<Item = &'a PathBuf>,
    limits: &Limits,
) -> Result<Option<RecordingMap>> {
    match map {
        Some(p) => Ok(Some(RecordingMap::read(p, limits)?)),
        None => match logs.find(|p| is_recording(p)) {
            Some(file) => Err(RecordingError::MapNeeded { file: file.clone() }.into()),
            None => Ok(None),
        },
    }
}

/// The files a recording map reads (the map and its terrain CSV), for the inputs no output may
/// overwrite.
pub fn map_files(map: Option<&RecordingMap>) -> Vec<PathBuf> {
    map.map(RecordingMap::files).unwrap_or_default()
}

/// Reads every log in `paths` within `limits`: a recording through `map` (its side speeds from a
/// twist use `track_width_m`, the profile's; a progress bar counts its bytes unless `quiet`),
/// anything else as a CSV drive log. The first bad file is an error naming it.
pub fn load_drive_logs(
    paths: &[PathBuf],
    map: Option<&RecordingMap>,
    track_width_m: f64,
    limits: &Limits,
    quiet: bool,
) -> Result<Vec<DriveLog>> {
    paths
        .iter()
        .map(|p| {
            let bar = Bar::new(quiet || !is_recording(p));
            Ok(read_drive_log(p, map, track_width_m, limits, &bar)?)
        })
        .collect()
}

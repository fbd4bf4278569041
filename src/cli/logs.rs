//! Reading drive logs for `fit` and `replay`: every log file goes through [`load_drive_logs`], so
//! a new log format (a recording read by another module) is added in one place.

use std::path::PathBuf;

use anyhow::Result;
use skidroute::fit::log::{read_log_with, DriveLog};
use skidroute::limits::Limits;

/// Reads every log in `paths` (CSV drive logs) within `limits`; the first bad file is an error
/// naming it.
pub fn load_drive_logs(paths: &[PathBuf], limits: &Limits) -> Result<Vec<DriveLog>> {
    paths.iter().map(|p| Ok(read_log_with(p, limits)?)).collect()
}

//! Strict reader for vehicle profiles (README, "Vehicle profile, TOML").
//!
//! The text is parsed into a `toml::Table` and walked by hand, because the keys allowed in a
//! `[terrain.NAME]` table depend on its `model` family, which serde's `deny_unknown_fields` cannot
//! express. Every unknown key, missing key, wrong type and out-of-range number is an error that
//! names the full key path (`terrain.gravel.alpha_left`) and what was expected. SI units.
//!
//! One file per part of the profile: `vehicle.rs` (`[vehicle]`), `follower.rs` (`[follower]`),
//! `terrain.rs` (`[terrain.NAME]`, models, schedules, covariances); `section.rs` holds the table
//! walker and the number rules they share.

mod follower;
mod section;
mod terrain;
mod vehicle;

use std::path::Path;

use toml::Table;

use super::{Profile, VehicleError};
use section::Section;

const TOP_KEYS: &[&str] = &["vehicle", "follower", "terrain"];

/// Reads and validates a profile from `text`; `path` only names the file in error messages.
///
/// ```
/// use std::path::Path;
/// use skidroute::vehicle::{parse_profile, DEMO_PROFILE_TOML};
/// let profile = parse_profile(Path::new("demo.toml"), DEMO_PROFILE_TOML).unwrap();
/// assert!(profile.terrain.contains_key("gravel"));
/// ```
pub fn parse_profile(path: &Path, text: &str) -> Result<Profile, VehicleError> {
    let root: Table = text.parse().map_err(|e| syntax_error(path, text, &e))?;
    let root = Section { file: path, prefix: String::new(), table: &root };
    root.check_keys(TOP_KEYS, None)?;
    let vehicle = vehicle::parse_vehicle(&root.table("vehicle")?)?;
    let follower = follower::parse_follower(&root.table("follower")?)?;
    let terrain = terrain::parse_terrains(&root.table("terrain")?, vehicle.track_width_m)?;
    Ok(Profile { vehicle, follower, terrain })
}

/// A TOML syntax error with the 1-based line and column of the span the parser reports.
fn syntax_error(path: &Path, text: &str, e: &toml::de::Error) -> VehicleError {
    let message = e.message().trim().replace('\n', "; ");
    let message = match e.span() {
        Some(span) => {
            let before = text.get(..span.start).unwrap_or(text);
            let line = before.matches('\n').count() + 1;
            let column = before.rsplit('\n').next().map_or(0, |l| l.chars().count()) + 1;
            format!("line {line}, column {column}: {message}")
        }
        None => message,
    };
    VehicleError::Syntax { file: path.to_path_buf(), message }
}

#[cfg(test)]
mod tests;

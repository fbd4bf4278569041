//! Strict reader for vehicle profiles (README, "Vehicle profile, TOML").
//!
//! The text is parsed into a spanned TOML tree (`toml::de::DeTable`, borrowing from the text)
//! and walked by hand, because the keys allowed in a `[terrain.NAME]` table depend on its
//! `model` family, which serde's `deny_unknown_fields` cannot express. Every unknown key,
//! missing key, wrong type and out-of-range number is reported, all of them at once, each naming
//! the full key path (`terrain.gravel.alpha_left`), what was expected and its line. Implausible
//! magnitudes (a track width of 550 m is likely millimetres) are warnings. SI units.
//!
//! Before the tree is built, a streaming pass over the TOML tokens ([`prescan`]) refuses a file
//! with more tokens than any profile needs, naming the first unknown key it saw, so a huge
//! unknown array never reaches memory.
//!
//! One file per part of the profile: `vehicle.rs` (`[vehicle]`), `follower.rs` (`[follower]`),
//! `terrain.rs` (`[terrain.NAME]`, models, schedules, covariances, calibration marks), `imu.rs`
//! (the optional `[imu]`); `section.rs` holds the table walker and the number rules they share.

mod follower;
mod imu;
mod section;
mod terrain;
mod vehicle;

pub(crate) use section::suggestion;
pub(crate) use terrain::valid_terrain_name;

use std::path::Path;

use toml::de::DeTable;

use super::{Profile, VehicleError};
use section::{Diagnostics, Section};

const TOP_KEYS: &[&str] = &["vehicle", "follower", "terrain", "imu"];

/// Most TOML tokens (keys, values, punctuation, blanks, comments, line ends) a profile may hold.
/// A complete profile has a few thousand; at this bound the parsed tree stays within a few tens
/// of megabytes.
pub const MAX_PROFILE_TOKENS: usize = 200_000;

/// Reads and validates a profile from `text`; `path` only names the file in error messages.
///
/// ```
/// use std::path::Path;
/// use skidroute::vehicle::{parse_profile, DEMO_PROFILE_TOML};
/// let profile = parse_profile(Path::new("demo.toml"), DEMO_PROFILE_TOML).unwrap();
/// assert!(profile.terrain.contains_key("gravel"));
/// ```
pub fn parse_profile(path: &Path, text: &str) -> Result<Profile, VehicleError> {
    parse_profile_with_warnings(path, text).map(|(profile, _)| profile)
}

/// [`parse_profile`], also returning the warnings (implausible magnitudes), one line each.
pub fn parse_profile_with_warnings(path: &Path, text: &str) -> Result<(Profile, Vec<String>), VehicleError> {
    prescan(path, text)?;
    let root = DeTable::parse(text).map_err(|e| syntax_error(path, text, &e))?;
    let diag = Diagnostics::new(path, text);
    let root = Section::root(&diag, root.get_ref());
    root.check_keys(TOP_KEYS, None);
    let vehicle = root.table("vehicle").map(|s| vehicle::parse_vehicle(&s));
    let follower = root.table("follower").map(|s| follower::parse_follower(&s));
    let track_width_m = vehicle.as_ref().map_or(1.0, |v| v.track_width_m);
    let terrain = root.table("terrain").map(|s| terrain::parse_terrains(&s, track_width_m));
    // Optional: only a present `[imu]` is read (and must then be a table with both keys).
    let imu = root.get("imu").and_then(|_| root.table("imu")).map(|s| imu::parse_imu(&s));
    let warnings = diag.finish()?;
    match (vehicle, follower, terrain) {
        (Some(vehicle), Some(follower), Some(terrain)) => Ok((Profile { vehicle, follower, terrain, imu }, warnings)),
        // A missing table is an error, and `finish` has returned it.
        _ => Err(VehicleError::File { file: path.to_path_buf(), what: "incomplete profile".to_string() }),
    }
}

/// A TOML syntax error with the 1-based line and column of the span the parser reports. A bare
/// word where a value belongs (`regenerative = no`) gets a plain explanation.
fn syntax_error(path: &Path, text: &str, e: &toml::de::Error) -> VehicleError {
    let mut message = e.message().trim().replace('\n', "; ");
    if let Some(span) = e.span() {
        let before = text.get(..span.start).unwrap_or(text);
        let line = before.matches('\n').count() + 1;
        let column = before.rsplit('\n').next().map_or(0, |l| l.chars().count()) + 1;
        if let Some(hint) = bare_word_hint(text, span.start) {
            message = hint;
        }
        message = format!("line {line}, column {column}: {message}");
    }
    VehicleError::Syntax { file: path.to_path_buf(), message: crate::limits::printable(&message).into_owned() }
}

/// For `key = word` with an unquoted word at `offset`'s line: what TOML expects instead.
fn bare_word_hint(text: &str, offset: usize) -> Option<String> {
    let start = text.get(..offset)?.rfind('\n').map_or(0, |i| i + 1);
    let end = text.get(offset..)?.find('\n').map_or(text.len(), |i| offset + i);
    let line = text.get(start..end)?;
    let (key, value) = line.split_once('=')?;
    let value = value.split('#').next()?.trim();
    let key = key.trim();
    let bare = !value.is_empty() && value.chars().all(|c| c.is_ascii_alphanumeric() || c == '_' || c == '-');
    if !bare || value.parse::<f64>().is_ok() {
        return None;
    }
    let expected = match value.to_ascii_lowercase().as_str() {
        "yes" | "no" | "on" | "off" | "y" | "n" | "true" | "false" => "expected true or false (lowercase, unquoted)",
        _ => "expected true or false, a number, or a quoted string",
    };
    Some(format!("{} = {}: {expected}", crate::limits::clip(key), crate::limits::clip(value)))
}

/// A streaming pass over the tokens, before any tree is built: refuses more than
/// [`MAX_PROFILE_TOKENS`] tokens, naming the first unknown key seen by then (a huge unknown
/// array is refused for its key, without being held in memory).
fn prescan(path: &Path, text: &str) -> Result<(), VehicleError> {
    use toml_parser::lexer::TokenKind;
    let mut keys = KeyTracker::default();
    for (count, token) in toml_parser::Source::new(text).lex().enumerate() {
        if count >= MAX_PROFILE_TOKENS {
            let line = |offset: usize| text.get(..offset).unwrap_or(text).matches('\n').count() + 1;
            return Err(match keys.first_unknown {
                Some((key, offset)) => {
                    let what = match unknown_key_suggestion(&key) {
                        Some(near) => format!("unknown key (did you mean {near}?)"),
                        None => "unknown key".to_string(),
                    };
                    VehicleError::Key { file: path.to_path_buf(), key, what, line: line(offset) }
                }
                None => VehicleError::File {
                    file: path.to_path_buf(),
                    what: format!(
                        "holds more than {MAX_PROFILE_TOKENS} TOML tokens (keys, values, punctuation); a vehicle \
                         profile needs a few thousand: is this the right file?"
                    ),
                },
            });
        }
        let span = token.span();
        let raw = text.get(span.start()..span.end()).unwrap_or("");
        keys.feed(token.kind() == TokenKind::Newline, token.kind(), raw, span.start());
    }
    Ok(())
}

/// The "did you mean" for an unknown dotted key found by the prescan.
fn unknown_key_suggestion(path: &str) -> Option<&'static str> {
    let parts: Vec<&str> = path.split('.').collect();
    match parts.as_slice() {
        [top] => section::suggestion(top, TOP_KEYS),
        ["vehicle", key] => section::suggestion(key, vehicle::VEHICLE_KEYS),
        ["follower", key] => section::suggestion(key, follower::FOLLOWER_KEYS),
        ["imu", key] => section::suggestion(key, imu::IMU_KEYS),
        _ => None,
    }
}

/// Follows table headers and `key =` lines at the top level of the token stream (never inside a
/// value) and remembers the first key the profile format does not allow.
#[derive(Default)]
struct KeyTracker {
    /// The current table header, as dotted parts.
    table: Vec<String>,
    /// Key parts of the line being read, and whether the line is a header.
    parts: Vec<String>,
    state: KeyState,
    /// Bracket depth inside a value.
    depth: usize,
    first_unknown: Option<(String, usize)>,
    /// Offset of the line's first key token.
    key_at: usize,
}

#[derive(Default, PartialEq)]
enum KeyState {
    #[default]
    LineStart,
    Key,
    Header,
    Value,
    /// After a header's closing bracket, or past a value: skip to the end of the line.
    Rest,
}

impl KeyTracker {
    fn feed(&mut self, newline: bool, kind: toml_parser::lexer::TokenKind, raw: &str, offset: usize) {
        use toml_parser::lexer::TokenKind as T;
        match self.state {
            KeyState::LineStart => match kind {
                T::LeftSquareBracket => {
                    self.parts.clear();
                    self.state = KeyState::Header;
                }
                T::Atom | T::BasicString | T::LiteralString => {
                    self.parts.clear();
                    self.parts.push(unquote(raw));
                    self.key_at = offset;
                    self.state = KeyState::Key;
                }
                _ => {}
            },
            KeyState::Header => match kind {
                T::LeftSquareBracket => {}
                T::Atom | T::BasicString | T::LiteralString => {
                    if self.parts.is_empty() {
                        self.key_at = offset;
                    }
                    self.parts.extend(unquote(raw).split('.').map(str::to_string));
                }
                T::RightSquareBracket => {
                    self.table = std::mem::take(&mut self.parts);
                    let table = self.table.clone();
                    self.check(&table, true);
                    self.state = KeyState::Rest;
                }
                _ => {}
            },
            KeyState::Key => match kind {
                T::Atom | T::BasicString | T::LiteralString => {
                    self.parts.extend(unquote(raw).split('.').map(str::to_string));
                }
                T::Equals => {
                    let mut path = self.table.clone();
                    path.append(&mut self.parts);
                    self.check(&path, false);
                    self.state = KeyState::Value;
                    self.depth = 0;
                }
                _ if newline => self.state = KeyState::LineStart,
                _ => {}
            },
            KeyState::Value => match kind {
                T::LeftSquareBracket | T::LeftCurlyBracket => self.depth += 1,
                T::RightSquareBracket | T::RightCurlyBracket => self.depth = self.depth.saturating_sub(1),
                _ if newline && self.depth == 0 => self.state = KeyState::LineStart,
                _ => {}
            },
            KeyState::Rest => {
                if newline {
                    self.state = KeyState::LineStart;
                }
            }
        }
    }

    /// Records `path` if the profile format has no such key (terrain tables: any family's key).
    fn check(&mut self, path: &[String], header: bool) {
        if self.first_unknown.is_some() {
            return;
        }
        let parts: Vec<&str> = path.iter().map(String::as_str).filter(|p| !p.is_empty()).collect();
        let known = match parts.as_slice() {
            [] => true,
            [top] => TOP_KEYS.contains(top),
            ["vehicle", key] => vehicle::VEHICLE_KEYS.contains(key),
            ["follower", key] => follower::FOLLOWER_KEYS.contains(key),
            ["imu", key] => imu::IMU_KEYS.contains(key),
            ["terrain", _] => header,
            ["terrain", _, key] => {
                terrain::TERRAIN_COMMON_KEYS.contains(key)
                    || *key == "schedule"
                    || crate::kinematics::Family::ALL.iter().any(|f| f.param_names().contains(key))
            }
            _ => false,
        };
        if !known {
            self.first_unknown = Some((crate::limits::clip(&parts.join(".")).into_owned(), self.key_at));
        }
    }
}

/// A key token without its quotes (escapes are left as they are; this is only for messages).
fn unquote(raw: &str) -> String {
    let t = raw.trim();
    t.strip_prefix('"')
        .and_then(|s| s.strip_suffix('"'))
        .or_else(|| t.strip_prefix('\'').and_then(|s| s.strip_suffix('\'')))
        .unwrap_or(t)
        .to_string()
}

#[cfg(test)]
mod tests;

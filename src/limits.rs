//! Resource limits for hostile or runaway inputs: file size, points per leg, legs per route,
//! points per run (and rows per drive log), simulation steps per route and Monte Carlo samples.
//!
//! Every limit is checked before the memory it guards is allocated, and exceeding one is an
//! input error (exit code 2) whose message names the file, the position, the limit and how to
//! raise it. No count read from a file sizes an allocation by itself: readers grow their
//! buffers as they read, so memory follows the bytes actually present, and the file-size limit
//! bounds those.
//!
//! The defaults suit routes up to a few hundred kilometres at 0.1 m point spacing. Each can be
//! raised (or lowered) with an environment variable read by the binary (see [`Limits::ENV`])
//! and, on `skidroute check`, with a flag of the same name (`--max-file-mib` ...).

use std::io::Read;
use std::path::Path;

/// Largest input file read, in bytes (256 MiB).
pub const DEFAULT_MAX_FILE_BYTES: u64 = 256 * 1024 * 1024;
/// Most points one leg may have.
pub const DEFAULT_MAX_POINTS_PER_LEG: usize = 2_000_000;
/// Most legs one route may have.
pub const DEFAULT_MAX_LEGS_PER_ROUTE: usize = 100_000;
/// Most plan points in one run, over all files and routes.
pub const DEFAULT_MAX_TOTAL_POINTS: usize = 20_000_000;
/// Most control steps one route's rollout may take. The rollout's time bound (three times the
/// planned time plus a minute) times the control rate must stay within it; about 190 bytes of
/// trace per step, so the default bounds one trace near 1 GB. At 20 Hz it admits routes of about
/// 30 h of planned driving.
pub const DEFAULT_MAX_ROLLOUT_STEPS: u64 = 5_000_000;
/// Most Monte Carlo samples one `drift` run may draw (its `--samples` flag is checked against
/// this by the drift module); not configurable, since each sample's cost is already bounded by the
/// route's step bound.
pub const MAX_SAMPLES: usize = crate::drift::MAX_SAMPLES;

/// Largest decoded size of an elevation raster, bytes (1 GiB: a 16 000 x 16 000 float32 grid).
/// A compressed file can decode to far more than its size on disk, so this bounds the decoder.
pub const MAX_RASTER_DECODED_BYTES: usize = 1 << 30;

/// Largest magnitude of a local-frame coordinate (CSV `x_m`, `y_m`), metres. A local map frame
/// stays well within this (UTM northings are below 1e7 m); larger values are almost always a
/// unit or column mix-up, and squaring them would overflow the geometry.
pub const MAX_ABS_COORDINATE_M: f64 = 1e8;
/// Largest magnitude of an altitude (CSV `z_m`, GeoJSON third coordinate), metres.
pub const MAX_ABS_ALTITUDE_M: f64 = 1e5;

/// The limits of one run. `Limits::default()` holds the documented defaults.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct Limits {
    pub max_file_bytes: u64,
    pub max_points_per_leg: usize,
    pub max_legs_per_route: usize,
    pub max_total_points: usize,
    pub max_rollout_steps: u64,
}

impl Default for Limits {
    fn default() -> Self {
        Limits {
            max_file_bytes: DEFAULT_MAX_FILE_BYTES,
            max_points_per_leg: DEFAULT_MAX_POINTS_PER_LEG,
            max_legs_per_route: DEFAULT_MAX_LEGS_PER_ROUTE,
            max_total_points: DEFAULT_MAX_TOTAL_POINTS,
            max_rollout_steps: DEFAULT_MAX_ROLLOUT_STEPS,
        }
    }
}

/// A limit setting that is not a positive whole number.
#[derive(Debug, thiserror::Error)]
#[error("{name}: {value:?} is not a whole number >= 1")]
pub struct LimitSettingError {
    pub name: String,
    pub value: String,
}

impl Limits {
    /// Environment variables that override the defaults, with the limit each sets:
    /// file size in MiB, points per leg, legs per route, total points (also drive-log rows),
    /// rollout steps.
    pub const ENV: [&'static str; 5] = [
        "SKIDROUTE_MAX_FILE_MIB",
        "SKIDROUTE_MAX_POINTS_PER_LEG",
        "SKIDROUTE_MAX_LEGS_PER_ROUTE",
        "SKIDROUTE_MAX_TOTAL_POINTS",
        "SKIDROUTE_MAX_STEPS",
    ];

    /// These limits with overrides from `lookup` (the binary passes the process environment;
    /// the library never reads it). Unset or empty variables keep the current value.
    pub fn with_overrides(mut self, lookup: impl Fn(&str) -> Option<String>) -> Result<Limits, LimitSettingError> {
        let [file, per_leg, legs, total, steps] = Self::ENV;
        if let Some(mib) = setting(file, &lookup)? {
            self.max_file_bytes = mib.saturating_mul(1024 * 1024);
        }
        if let Some(n) = setting(per_leg, &lookup)? {
            self.max_points_per_leg = to_usize(n);
        }
        if let Some(n) = setting(legs, &lookup)? {
            self.max_legs_per_route = to_usize(n);
        }
        if let Some(n) = setting(total, &lookup)? {
            self.max_total_points = to_usize(n);
        }
        if let Some(n) = setting(steps, &lookup)? {
            self.max_rollout_steps = n;
        }
        Ok(self)
    }

    /// The file-size limit in MiB, for messages.
    pub fn max_file_mib(&self) -> f64 {
        self.max_file_bytes as f64 / (1024.0 * 1024.0)
    }
}

fn to_usize(n: u64) -> usize {
    usize::try_from(n).unwrap_or(usize::MAX)
}

fn setting(name: &str, lookup: &impl Fn(&str) -> Option<String>) -> Result<Option<u64>, LimitSettingError> {
    match lookup(name) {
        None => Ok(None),
        Some(v) if v.trim().is_empty() => Ok(None),
        Some(v) => match v.trim().parse::<u64>() {
            Ok(n) if n >= 1 => Ok(Some(n)),
            _ => Err(LimitSettingError { name: name.to_string(), value: v }),
        },
    }
}

/// Input text quoted in a message, shortened to its first 60 characters when longer than 80,
/// so a hostile megabyte-long key or cell does not flood the terminal.
pub fn clip(text: &str) -> std::borrow::Cow<'_, str> {
    if text.chars().count() <= 80 {
        return std::borrow::Cow::Borrowed(text);
    }
    let head: String = text.chars().take(60).collect();
    std::borrow::Cow::Owned(format!("{head}... ({} bytes in all)", text.len()))
}

/// A number from the input for a message: plain when moderate, in exponent form when huge or
/// tiny (`1e300` rather than 301 digits).
pub fn show_number(x: f64) -> String {
    if x != 0.0 && !(1e-4..1e7).contains(&x.abs()) {
        format!("{x:e}")
    } else {
        format!("{x}")
    }
}

/// Why [`read_text_limited`] failed.
#[derive(Debug, thiserror::Error)]
pub enum ReadLimitedError {
    #[error("cannot read: {0}")]
    Io(#[from] std::io::Error),
    #[error(
        "is larger than the file-size limit of {limit_mib} MiB (raise it with --max-file-mib or SKIDROUTE_MAX_FILE_MIB)"
    )]
    TooLarge { limit_mib: f64 },
    #[error("is not UTF-8 text (first invalid byte at offset {offset})")]
    NotUtf8 { offset: usize },
}

/// Reads a text file of at most `max_bytes`. The size is checked from the metadata before
/// anything is read, and again while reading (a pipe or a growing file has no reliable size),
/// so a huge or endless input never fills memory.
pub fn read_text_limited(path: &Path, max_bytes: u64) -> Result<String, ReadLimitedError> {
    utf8(read_bytes_limited(path, max_bytes)?)
}

/// [`read_text_limited`] for a file read as bytes (a raster).
pub fn read_bytes_limited(path: &Path, max_bytes: u64) -> Result<Vec<u8>, ReadLimitedError> {
    let file = std::fs::File::open(path)?;
    let meta = file.metadata()?;
    if meta.is_dir() {
        return Err(std::io::Error::other("is a directory").into());
    }
    if meta.len() > max_bytes {
        return Err(ReadLimitedError::TooLarge { limit_mib: max_bytes as f64 / (1024.0 * 1024.0) });
    }
    // The metadata size only sizes the first buffer, and it is at most the limit.
    let capacity = usize::try_from(meta.len()).unwrap_or(0).min(1 << 26);
    read_limited(file, max_bytes, capacity)
}

/// Reads a stream (standard input) of at most `max_bytes` as UTF-8 text; the limit is checked
/// while reading.
pub fn read_stream_text_limited(reader: impl Read, max_bytes: u64) -> Result<String, ReadLimitedError> {
    utf8(read_limited(reader, max_bytes, 1 << 16)?)
}

fn read_limited(reader: impl Read, max_bytes: u64, capacity: usize) -> Result<Vec<u8>, ReadLimitedError> {
    let mut bytes = Vec::with_capacity(capacity);
    reader.take(max_bytes.saturating_add(1)).read_to_end(&mut bytes)?;
    if bytes.len() as u64 > max_bytes {
        return Err(ReadLimitedError::TooLarge { limit_mib: max_bytes as f64 / (1024.0 * 1024.0) });
    }
    Ok(bytes)
}

fn utf8(bytes: Vec<u8>) -> Result<String, ReadLimitedError> {
    String::from_utf8(bytes).map_err(|e| ReadLimitedError::NotUtf8 { offset: e.utf8_error().valid_up_to() })
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn overrides_replace_defaults_and_reject_nonsense() {
        let env = |name: &str| match name {
            "SKIDROUTE_MAX_FILE_MIB" => Some("2".to_string()),
            "SKIDROUTE_MAX_POINTS_PER_LEG" => Some(" 10 ".to_string()),
            "SKIDROUTE_MAX_STEPS" => Some(String::new()),
            _ => None,
        };
        let l = Limits::default().with_overrides(env).expect("valid");
        assert_eq!(l.max_file_bytes, 2 * 1024 * 1024);
        assert_eq!(l.max_points_per_leg, 10);
        assert_eq!(l.max_rollout_steps, DEFAULT_MAX_ROLLOUT_STEPS);
        let bad = |name: &str| (name == "SKIDROUTE_MAX_STEPS").then(|| "-3".to_string());
        let e = Limits::default().with_overrides(bad).expect_err("negative");
        assert_eq!(e.to_string(), "SKIDROUTE_MAX_STEPS: \"-3\" is not a whole number >= 1");
        let zero = |name: &str| (name == "SKIDROUTE_MAX_TOTAL_POINTS").then(|| "0".to_string());
        assert!(Limits::default().with_overrides(zero).is_err());
    }

    #[test]
    fn reads_within_the_limit_and_refuses_above_it() {
        let dir = tempfile::tempdir().expect("tempdir");
        let p = dir.path().join("a.csv");
        std::fs::write(&p, "x_m,y_m,terrain\n").expect("write");
        assert_eq!(read_text_limited(&p, 16).expect("fits"), "x_m,y_m,terrain\n");
        let e = read_text_limited(&p, 15).expect_err("too large");
        assert!(matches!(e, ReadLimitedError::TooLarge { .. }), "{e}");
        std::fs::write(&p, b"ok\xff").expect("write");
        assert!(matches!(read_text_limited(&p, 100), Err(ReadLimitedError::NotUtf8 { offset: 2 })));
        assert!(matches!(read_text_limited(dir.path(), 100), Err(ReadLimitedError::Io(_))));
        let stream = std::io::Cursor::new(vec![b'a'; 17]);
        assert!(matches!(read_stream_text_limited(stream, 16), Err(ReadLimitedError::TooLarge { .. })));
        assert_eq!(read_stream_text_limited(std::io::Cursor::new(b"ok".to_vec()), 16).expect("fits"), "ok");
    }

    #[test]
    fn huge_numbers_show_in_exponent_form() {
        assert_eq!(show_number(1e300), "1e300");
        assert_eq!(show_number(-1.5e8), "-1.5e8");
        assert_eq!(show_number(91.0), "91");
        assert_eq!(show_number(0.0), "0");
    }

    #[test]
    fn clip_shortens_only_long_text() {
        assert_eq!(clip("speed"), "speed");
        let long = "k".repeat(1000);
        assert_eq!(clip(&long), format!("{}... (1000 bytes in all)", "k".repeat(60)));
    }
}

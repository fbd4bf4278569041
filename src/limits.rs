//! Resource limits for hostile or runaway inputs: file size, points per leg, legs per route,
//! points per run (and rows per drive log), simulation steps per route, simulation work over a
//! whole run ([`WorkBudget`]) and Monte Carlo samples; the plausible range of speeds and corridors;
//! and the escaping of input text quoted in messages ([`printable`], [`clip`]).
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
/// Most control steps a whole run may simulate, counted from step bounds: every route's step
/// bound, times the Monte Carlo samples of a drift estimate, plus any further rollouts a command
/// makes (the margin search of every check, `crate::margin::work_bound`; relax checks the route
/// before and after). Step bounds are about three times the steps
/// a run takes (2000 drift samples of the supply-run example: a bound of 53.6 million, 17.1
/// million taken, in 9.7 s on two busy cores), so the default admits a few minutes of work.
pub const DEFAULT_MAX_WORK_STEPS: u64 = 1_000_000_000;
/// Most Monte Carlo samples one `drift` run may draw (its `--samples` flag is checked against
/// this by the drift module); not configurable, since each sample's cost is already bounded by the
/// route's step bound.
pub const MAX_SAMPLES: usize = 1_000_000;

/// Largest decoded size of an elevation raster, bytes (1 GiB: a 16 000 x 16 000 float32 grid).
/// A compressed file can decode to far more than its size on disk, so this bounds the decoder.
pub const MAX_RASTER_DECODED_BYTES: usize = 1 << 30;

/// Largest magnitude of a local-frame coordinate (CSV `x_m`, `y_m`), metres. A local map frame
/// stays well within this (UTM northings are below 1e7 m); larger values are almost always a
/// unit or column mix-up, and squaring them would overflow the geometry.
pub const MAX_ABS_COORDINATE_M: f64 = 1e8;
/// Largest magnitude of an altitude (CSV `z_m`, GeoJSON third coordinate), metres.
pub const MAX_ABS_ALTITUDE_M: f64 = 1e5;
/// Slowest planned leg speed, m/s: the speed the follower creeps at on its final approach. A
/// slower plan would be simulated for days of vehicle time and is almost always a unit mistake.
pub const MIN_SPEED_MPS: f64 = 0.05;
/// Fastest planned leg speed, m/s (360 km/h): far beyond any skid-steered vehicle, so a larger
/// value is a unit mistake (mm/s, km/h) or garbage.
pub const MAX_SPEED_MPS: f64 = 100.0;
/// Widest corridor, metres either side.
pub const MAX_CORRIDOR_M: f64 = 1e4;

/// A planned speed within [`MIN_SPEED_MPS`, `MAX_SPEED_MPS`], or the reason it is not.
pub fn check_speed_mps(speed_mps: f64) -> Result<f64, String> {
    if !speed_mps.is_finite() || speed_mps <= 0.0 {
        Err(format!("{} must be > 0", show_number(speed_mps)))
    } else if speed_mps < MIN_SPEED_MPS {
        Err(format!(
            "{} m/s is slower than {MIN_SPEED_MPS} m/s, the slowest speed simulated (is it in m/s?)",
            show_number(speed_mps)
        ))
    } else if speed_mps > MAX_SPEED_MPS {
        Err(format!("{} m/s is faster than {MAX_SPEED_MPS} m/s (is it in m/s?)", show_number(speed_mps)))
    } else {
        Ok(speed_mps)
    }
}

/// A corridor half-width within (0, [`MAX_CORRIDOR_M`]], or the reason it is not.
pub fn check_corridor_m(corridor_m: f64) -> Result<f64, String> {
    if !corridor_m.is_finite() || corridor_m <= 0.0 {
        Err(format!("{} must be > 0", show_number(corridor_m)))
    } else if corridor_m > MAX_CORRIDOR_M {
        Err(format!("{} m is wider than {MAX_CORRIDOR_M} m (is it in metres?)", show_number(corridor_m)))
    } else {
        Ok(corridor_m)
    }
}

/// The limits of one run. `Limits::default()` holds the documented defaults.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct Limits {
    pub max_file_bytes: u64,
    pub max_points_per_leg: usize,
    pub max_legs_per_route: usize,
    pub max_total_points: usize,
    pub max_rollout_steps: u64,
    /// Most control steps over the whole run ([`WorkBudget`]).
    pub max_work_steps: u64,
}

impl Default for Limits {
    fn default() -> Self {
        Limits {
            max_file_bytes: DEFAULT_MAX_FILE_BYTES,
            max_points_per_leg: DEFAULT_MAX_POINTS_PER_LEG,
            max_legs_per_route: DEFAULT_MAX_LEGS_PER_ROUTE,
            max_total_points: DEFAULT_MAX_TOTAL_POINTS,
            max_rollout_steps: DEFAULT_MAX_ROLLOUT_STEPS,
            max_work_steps: DEFAULT_MAX_WORK_STEPS,
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
    /// rollout steps, work over the run.
    pub const ENV: [&'static str; 6] = [
        "SKIDROUTE_MAX_FILE_MIB",
        "SKIDROUTE_MAX_POINTS_PER_LEG",
        "SKIDROUTE_MAX_LEGS_PER_ROUTE",
        "SKIDROUTE_MAX_TOTAL_POINTS",
        "SKIDROUTE_MAX_STEPS",
        "SKIDROUTE_MAX_WORK_STEPS",
    ];

    /// These limits with overrides from `lookup` (the binary passes the process environment;
    /// the library never reads it). Unset or empty variables keep the current value.
    pub fn with_overrides(mut self, lookup: impl Fn(&str) -> Option<String>) -> Result<Limits, LimitSettingError> {
        let [file, per_leg, legs, total, steps, work] = Self::ENV;
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
        if let Some(n) = setting(work, &lookup)? {
            self.max_work_steps = n;
        }
        Ok(self)
    }

    /// A fresh work budget of [`Limits::max_work_steps`] for one run.
    pub fn work_budget(&self) -> WorkBudget {
        WorkBudget::new(self.max_work_steps)
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

/// The simulation work of one run, in control steps, shared by everything the run simulates.
///
/// Work is charged up front, before it is done, from step bounds (a route's time bound times its
/// control rate, [`crate::rollout::step_bound`]): a run whose work would exceed the budget is
/// refused before anything is simulated, with a message naming `--max-work-steps` and
/// `SKIDROUTE_MAX_WORK_STEPS`. The counter is atomic, so parallel code (rayon) may charge it;
/// a charge that does not fit leaves the counter unchanged.
///
/// ```
/// use skidroute::limits::WorkBudget;
/// let budget = WorkBudget::new(1000);
/// budget.charge(600, || "drift of route 'a'".into()).unwrap();
/// assert!(budget.charge(600, || "drift of route 'b'".into()).is_err());
/// assert_eq!(budget.used(), 600);
/// ```
#[derive(Debug)]
pub struct WorkBudget {
    limit: u64,
    used: std::sync::atomic::AtomicU64,
}

/// A run whose simulation work would exceed its [`WorkBudget`].
#[derive(Debug, thiserror::Error)]
#[error(
    "{what} could take up to {needed} control steps, and the run has {left} of its work budget of {limit} left; \
     reduce the routes or samples, or raise the budget with --max-work-steps or SKIDROUTE_MAX_WORK_STEPS"
)]
pub struct WorkBudgetError {
    pub what: String,
    pub needed: u64,
    pub left: u64,
    pub limit: u64,
}

impl WorkBudget {
    /// A budget of `limit` control steps, none used yet.
    pub fn new(limit: u64) -> WorkBudget {
        WorkBudget { limit, used: std::sync::atomic::AtomicU64::new(0) }
    }

    /// A budget that never refuses (for library callers that bound their own work).
    pub fn unlimited() -> WorkBudget {
        WorkBudget::new(u64::MAX)
    }

    /// Reserves `steps` of work; `what` describes it for the message when it does not fit.
    pub fn charge(&self, steps: u64, what: impl FnOnce() -> String) -> Result<(), WorkBudgetError> {
        use std::sync::atomic::Ordering;
        let fits = |used: u64| used.checked_add(steps).filter(|&total| total <= self.limit);
        match self.used.fetch_update(Ordering::SeqCst, Ordering::SeqCst, fits) {
            Ok(_) => Ok(()),
            Err(used) => Err(WorkBudgetError {
                what: what(),
                needed: steps,
                left: self.limit.saturating_sub(used),
                limit: self.limit,
            }),
        }
    }

    /// [`WorkBudget::charge`] for a step bound given as a float (as `rollout::step_bound` returns
    /// it) times a count of rollouts; a huge or non-finite product never fits.
    pub fn charge_rollouts(
        &self,
        step_bound: f64,
        rollouts: u64,
        what: impl FnOnce() -> String,
    ) -> Result<(), WorkBudgetError> {
        let steps = step_bound * rollouts as f64;
        let steps =
            if steps.is_finite() && steps >= 0.0 && steps < u64::MAX as f64 { steps.ceil() as u64 } else { u64::MAX };
        self.charge(steps, what)
    }

    /// Control steps reserved so far.
    pub fn used(&self) -> u64 {
        self.used.load(std::sync::atomic::Ordering::SeqCst)
    }

    /// The budget, in control steps.
    pub fn limit(&self) -> u64 {
        self.limit
    }
}

/// Text from an input made safe to print: control characters (C0, DEL, C1: escape sequences,
/// bell, carriage return, NUL, newlines, tabs) and the bidirectional overrides become visible
/// escapes such as `\n` and `\u{1b}`, so a name cannot move the cursor, recolour the terminal,
/// or split one message into two lines. Borrowed when nothing needs escaping.
pub fn printable(text: &str) -> std::borrow::Cow<'_, str> {
    fn unsafe_char(c: char) -> bool {
        c.is_control() || matches!(c, '\u{202a}'..='\u{202e}' | '\u{2066}'..='\u{2069}')
    }
    if !text.chars().any(unsafe_char) {
        return std::borrow::Cow::Borrowed(text);
    }
    let mut out = String::with_capacity(text.len() + 8);
    for c in text.chars() {
        match c {
            '\n' => out.push_str("\\n"),
            '\r' => out.push_str("\\r"),
            '\t' => out.push_str("\\t"),
            '\0' => out.push_str("\\0"),
            c if unsafe_char(c) => out.push_str(&format!("\\u{{{:x}}}", c as u32)),
            c => out.push(c),
        }
    }
    std::borrow::Cow::Owned(out)
}

/// Input text quoted in a message: [`printable`], and shortened to its first 60 characters when
/// longer than 80, so a hostile megabyte-long key or cell does not flood the terminal.
pub fn clip(text: &str) -> std::borrow::Cow<'_, str> {
    if text.chars().count() <= 80 {
        return printable(text);
    }
    let head: String = text.chars().take(60).collect();
    std::borrow::Cow::Owned(format!("{}... ({} bytes in all)", printable(&head), text.len()))
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
    #[error("is not a regular file (a FIFO, device or socket); save the input to a file and name that")]
    NotRegular,
}

/// Reads a text file of at most `max_bytes`. The size is checked from the metadata before
/// anything is read, and again while reading (a growing file has no reliable size), so a huge
/// or endless input never fills memory.
///
/// Only regular files are read: a FIFO, a device or a socket is refused before it is opened,
/// since opening a FIFO that no program writes to would wait forever.
pub fn read_text_limited(path: &Path, max_bytes: u64) -> Result<String, ReadLimitedError> {
    utf8(read_bytes_limited(path, max_bytes)?)
}

/// [`read_text_limited`] for a file read as bytes (a raster); the same checks.
pub fn read_bytes_limited(path: &Path, max_bytes: u64) -> Result<Vec<u8>, ReadLimitedError> {
    let kind = std::fs::metadata(path)?.file_type();
    if kind.is_dir() {
        return Err(std::io::Error::other("is a directory").into());
    }
    if !kind.is_file() {
        return Err(ReadLimitedError::NotRegular);
    }
    let file = std::fs::File::open(path)?;
    let meta = file.metadata()?;
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
    fn printable_escapes_control_characters_only() {
        assert!(matches!(printable("packed-snow"), std::borrow::Cow::Borrowed(_)));
        assert_eq!(printable("a\u{1b}[31mred\u{7}\r\n\0b"), "a\\u{1b}[31mred\\u{7}\\r\\n\\0b");
        assert_eq!(printable("\u{202e}txt.exe"), "\\u{202e}txt.exe");
        assert_eq!(printable("Schnee \u{e9}"), "Schnee \u{e9}");
        assert_eq!(clip("x\ny"), "x\\ny");
    }

    #[test]
    fn work_budget_refuses_what_does_not_fit_and_keeps_the_count() {
        let b = WorkBudget::new(100);
        b.charge(60, || "a".into()).expect("fits");
        let e = b.charge(41, || "route 'b'".into()).expect_err("over");
        assert_eq!((e.needed, e.left, e.limit), (41, 40, 100));
        assert!(e.to_string().contains("--max-work-steps or SKIDROUTE_MAX_WORK_STEPS"), "{e}");
        b.charge(40, || "c".into()).expect("exactly fits");
        assert_eq!(b.used(), 100);
        assert!(b.charge_rollouts(f64::INFINITY, 1, || "d".into()).is_err());
        assert!(WorkBudget::unlimited().charge_rollouts(1e12, 1000, || "e".into()).is_ok());
    }

    #[test]
    fn speeds_and_corridors_have_plausible_bounds() {
        assert_eq!(check_speed_mps(1.2), Ok(1.2));
        assert!(check_speed_mps(1e-6).expect_err("slow").contains("slower than 0.05 m/s"));
        assert!(check_speed_mps(1e308).expect_err("fast").starts_with("1e308 m/s is faster than 100 m/s"));
        assert!(check_speed_mps(-1.5).expect_err("negative").starts_with("-1.5 must be > 0"));
        assert!(check_corridor_m(2e4).is_err());
        assert!(check_corridor_m(0.0).is_err());
    }

    #[test]
    fn clip_shortens_only_long_text() {
        assert_eq!(clip("speed"), "speed");
        let long = "k".repeat(1000);
        assert_eq!(clip(&long), format!("{}... (1000 bytes in all)", "k".repeat(60)));
    }
}

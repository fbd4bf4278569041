//! From drive logs to identification windows (README, Calibrating from drive logs; docs/method.md, Calibration).
//!
//! Each log is split into runs at gaps longer than [`GAP_PERIODS`] sample periods, at pose
//! dropouts longer than [`MAX_POSE_GAP_S`] and at terrain changes. A terrain's runs are gathered
//! into one [`Series`] with the yaw unwrapped inside each run.
//!
//! **Moving data.** A sample interval is *moving* when the tracks' mean surface speed
//! (|vl| + |vr|) / 2 is at least [`MOVING_SPEED_MPS`] (pivot turns move the tracks, so they
//! count). Windows of horizon H seconds are cut by time (each ends at the first sample at least
//! H after its start, the next starts H/2 later, so they overlap by half even when the log's time
//! steps are irregular), never span a run boundary, need a measured pose at both ends, and count
//! only when at least [`MIN_MOVING_FRACTION`] of their time is moving: standing windows are
//! neither trained on nor validated. Validation data are held-out time blocks counted in
//! *moving* time: the terrain's moving time is cut into blocks of [`BLOCK_S`] seconds and every
//! fifth block (the third of each five) is held out, so a fifth of the moving data is held out
//! however long the vehicle stood. Standing samples belong to the block they fall in. Training
//! and validation come from the same day and manoeuvres but never share a sample. With
//! `--validate` logs, those logs are the validation data (cut into blocks the same way, for the
//! bootstrap) and the training logs are used whole. Units: seconds, metres, radians; local frame
//! as in the logs.

use super::log::DriveLog;
use crate::kinematics::se2::wrap_angle;

/// A gap longer than this many sample periods splits a log into runs (README, Inputs).
pub const GAP_PERIODS: f64 = 5.0;
/// Length of the held-out (and bootstrap) time blocks, seconds of moving time on the terrain.
pub const BLOCK_S: f64 = 20.0;
/// One block in this many is held out for validation.
pub const BLOCK_CYCLE: usize = 5;
/// Which block of each cycle is held out (0-based).
pub const HELD_OUT_BLOCK: usize = 2;
/// Tracks' mean surface speed (m/s) from which a sample interval counts as moving: a slow walk
/// is 1 m/s; encoder noise on a standing vehicle stays far below.
pub const MOVING_SPEED_MPS: f64 = 0.1;
/// Fraction of a window's time that must be moving for the window to count.
pub const MIN_MOVING_FRACTION: f64 = 0.5;
/// Pose dropouts up to this long are bridged by the side speeds (windows may span them; the yaw
/// is unwrapped across them, which holds while the vehicle turns less than half a turn in the
/// dropout); longer ones split the run.
pub const MAX_POSE_GAP_S: f64 = 2.5;

/// True when side speeds (m/s) move the tracks at [`MOVING_SPEED_MPS`] or more.
#[inline]
pub fn is_moving(left_mps: f64, right_mps: f64) -> bool {
    0.5 * (left_mps.abs() + right_mps.abs()) >= MOVING_SPEED_MPS
}

/// A contiguous stretch of samples on one terrain without gaps: indices `start..end` of a [`Series`].
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Run {
    pub start: usize,
    pub end: usize,
    pub period_s: f64,
}

/// All samples of one terrain, as parallel arrays. `dt_s[k]` is the time from sample k to k+1
/// (0 at the last sample of a run); `yaw_rad` is continuous within each run. Where `pose_ok` is
/// false the pose holds the last measured one and is not used.
#[derive(Debug, Clone, Default)]
pub struct Series {
    pub terrain: String,
    pub t_s: Vec<f64>,
    pub left_mps: Vec<f64>,
    pub right_mps: Vec<f64>,
    pub dt_s: Vec<f64>,
    pub x_m: Vec<f64>,
    pub y_m: Vec<f64>,
    pub yaw_rad: Vec<f64>,
    /// True where the sample has a measured pose.
    pub pose_ok: Vec<bool>,
    /// True for samples used only for validation.
    pub held_out: Vec<bool>,
    /// Block of moving time ([`BLOCK_S`]) each sample falls in, counted over the whole series.
    pub block: Vec<u32>,
    pub runs: Vec<Run>,
    /// Moving time so far on this terrain, for the blocks.
    moving_s: f64,
    /// Whether time blocks of the training logs are held out (no `--validate` logs).
    hold_out_blocks: bool,
}

/// A window: the poses at samples `start` and `end`, and the side speeds of the steps between.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct Window {
    pub start: usize,
    pub end: usize,
}

impl Series {
    pub fn len(&self) -> usize {
        self.t_s.len()
    }

    pub fn is_empty(&self) -> bool {
        self.t_s.is_empty()
    }

    /// Number of samples used for training.
    pub fn training_samples(&self) -> usize {
        self.held_out.iter().filter(|h| !**h).count()
    }

    /// Moving time over the whole series, seconds.
    pub fn moving_s(&self) -> f64 {
        self.moving_s
    }

    /// Total time covered by the runs, seconds.
    pub fn duration_s(&self) -> f64 {
        self.dt_s.iter().sum()
    }

    /// Whether the interval from sample k to k+1 is moving.
    #[inline]
    pub fn moving_at(&self, k: usize) -> bool {
        is_moving(self.left_mps[k], self.right_mps[k])
    }

    /// The measured motion over a window, in the body frame of its start pose:
    /// (forward m, left m, yaw change rad).
    #[inline]
    pub fn measured_delta(&self, w: Window) -> [f64; 3] {
        let (s, c) = self.yaw_rad[w.start].sin_cos();
        let dx = self.x_m[w.end] - self.x_m[w.start];
        let dy = self.y_m[w.end] - self.y_m[w.start];
        [c * dx + s * dy, -s * dx + c * dy, self.yaw_rad[w.end] - self.yaw_rad[w.start]]
    }

    /// Distance the tracks' mean surface speed covers over a window (odometry distance, m).
    pub fn odometry_m(&self, w: Window) -> f64 {
        (w.start..w.end).map(|k| 0.5 * (self.left_mps[k] + self.right_mps[k]).abs() * self.dt_s[k]).sum()
    }

    /// Yaw change an ideal differential drive with track width `track_width_m` would make (rad).
    pub fn commanded_yaw_rad(&self, w: Window, track_width_m: f64) -> f64 {
        (w.start..w.end).map(|k| (self.right_mps[k] - self.left_mps[k]) / track_width_m * self.dt_s[k]).sum()
    }

    /// The validation block of a window (the block of its first sample).
    pub fn block_of(&self, w: Window) -> u32 {
        self.block[w.start]
    }

    fn push_run(&mut self, log: &DriveLog, range: std::ops::Range<usize>, from_validation_log: bool) {
        let start = self.len();
        let samples = &log.samples[range];
        let mut yaw = 0.0;
        // The last sample with a measured pose: its logged yaw and its unwrapped yaw.
        let mut last_pose: Option<(f64, f64)> = None;
        for (k, s) in samples.iter().enumerate() {
            let pose_ok = !s.pose_missing;
            if pose_ok {
                yaw = match last_pose {
                    None => s.yaw_rad,
                    Some((logged, unwrapped)) => unwrapped + wrap_angle(s.yaw_rad - logged),
                };
                last_pose = Some((s.yaw_rad, yaw));
            }
            let dt = samples.get(k + 1).map_or(0.0, |n| n.t_s - s.t_s);
            let block = (self.moving_s / BLOCK_S) as usize;
            let held_out = from_validation_log || (self.hold_out_blocks && block % BLOCK_CYCLE == HELD_OUT_BLOCK);
            self.t_s.push(s.t_s);
            self.left_mps.push(s.left_mps);
            self.right_mps.push(s.right_mps);
            self.dt_s.push(dt);
            self.x_m.push(s.x_m);
            self.y_m.push(s.y_m);
            self.yaw_rad.push(yaw);
            self.pose_ok.push(pose_ok);
            self.held_out.push(held_out);
            self.block.push(u32::try_from(block).unwrap_or(u32::MAX));
            if is_moving(s.left_mps, s.right_mps) {
                self.moving_s += dt;
            }
        }
        self.runs.push(Run { start, end: self.len(), period_s: log.period_s });
    }
}

/// Where a log splits into runs: before sample k when the terrain changes, the time step is
/// longer than [`GAP_PERIODS`] periods, or the pose has been missing for longer than
/// [`MAX_POSE_GAP_S`] (measured from the last pose before the dropout to the next one).
fn split_points(log: &DriveLog) -> Vec<usize> {
    let mut out = Vec::new();
    let mut last_pose_t: Option<f64> = None;
    for (k, b) in log.samples.iter().enumerate() {
        if k > 0 {
            let a = &log.samples[k - 1];
            let pose_gap = !b.pose_missing && last_pose_t.is_some_and(|t| b.t_s - t > MAX_POSE_GAP_S);
            if a.terrain != b.terrain || b.t_s - a.t_s > GAP_PERIODS * log.period_s || pose_gap {
                out.push(k);
                last_pose_t = None;
            }
        }
        if !b.pose_missing {
            last_pose_t = Some(b.t_s);
        }
    }
    out.push(log.samples.len());
    out
}

/// Splits the logs into runs and gathers them per terrain (sorted by terrain name). Samples of
/// `validation_logs` are all held out; when there are none, time blocks of the training logs are.
pub fn build_series(logs: &[DriveLog], validation_logs: &[DriveLog]) -> Vec<Series> {
    let hold_out_blocks = validation_logs.is_empty();
    let mut by_terrain: std::collections::BTreeMap<String, Series> = Default::default();
    let all = logs.iter().map(|l| (l, false)).chain(validation_logs.iter().map(|l| (l, true)));
    for (log, validation) in all {
        let mut start = 0;
        for end in split_points(log) {
            if end <= start {
                continue;
            }
            let name = &log.terrains[log.samples[start].terrain];
            let series = by_terrain.entry(name.clone()).or_insert_with(|| Series {
                terrain: name.clone(),
                hold_out_blocks,
                ..Default::default()
            });
            series.push_run(log, start..end, validation);
            start = end;
        }
    }
    by_terrain.into_values().collect()
}

/// Windows of horizon `horizon_s` in one run, cut by time: `(start, end)` pairs. A window ends at
/// the first sample at least `horizon_s` after its start and the next starts at the first sample
/// at least `horizon_s / 2` after it (a quarter period of slack absorbs rounding of logged times).
fn run_windows(s: &Series, run: &Run, horizon_s: f64) -> Vec<Window> {
    let slack = 0.25 * run.period_s;
    let mut out = Vec::new();
    let (mut start, mut end) = (run.start, run.start);
    while start < run.end {
        let t0 = s.t_s[start];
        while end < run.end && s.t_s[end] - t0 < horizon_s - slack {
            end += 1;
        }
        if end >= run.end {
            break;
        }
        if end > start {
            out.push(Window { start, end });
        }
        let next = t0 + 0.5 * horizon_s - slack;
        start += 1;
        while start < run.end && s.t_s[start] < next {
            start += 1;
        }
    }
    out
}

/// Training and validation windows of horizon `horizon_s`. A training window touches no
/// held-out sample; a validation window lies wholly in held-out samples; windows without a pose
/// at either end, or moving for less than [`MIN_MOVING_FRACTION`] of their time, and windows
/// across the boundary of a held-out block are dropped.
pub fn cut_windows(s: &Series, horizon_s: f64) -> (Vec<Window>, Vec<Window>) {
    // Prefix counts of held-out samples and of moving time, to classify a window in O(1).
    let mut held = Vec::with_capacity(s.len() + 1);
    let mut moving = Vec::with_capacity(s.len() + 1);
    held.push(0usize);
    moving.push(0.0f64);
    for k in 0..s.len() {
        held.push(held[k] + usize::from(s.held_out[k]));
        moving.push(moving[k] + if s.moving_at(k) { s.dt_s[k] } else { 0.0 });
    }
    let (mut training, mut validation) = (Vec::new(), Vec::new());
    for run in &s.runs {
        for w in run_windows(s, run, horizon_s) {
            if !(s.pose_ok[w.start] && s.pose_ok[w.end]) {
                continue;
            }
            let duration = s.t_s[w.end] - s.t_s[w.start];
            if moving[w.end] - moving[w.start] < MIN_MOVING_FRACTION * duration {
                continue;
            }
            let held_in = held[w.end + 1] - held[w.start];
            if held_in == 0 {
                training.push(w);
            } else if held_in == w.end - w.start + 1 {
                validation.push(w);
            }
        }
    }
    (training, validation)
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::fit::log::parse_log;
    use std::path::Path;

    fn log(rows: &[(f64, &str)]) -> DriveLog {
        let mut text = String::from("t_s,left_mps,right_mps,x_m,y_m,yaw_rad,terrain\n");
        for (i, (t, terrain)) in rows.iter().enumerate() {
            // Yaw passes through +-pi to exercise unwrapping.
            let yaw = wrap_angle(3.0 + 0.05 * i as f64);
            text.push_str(&format!("{t},1,1,{t},0,{yaw},{terrain}\n"));
        }
        parse_log(Path::new("t.csv"), &text).expect("valid log")
    }

    #[test]
    fn runs_split_at_gaps_and_terrain_changes() {
        let mut rows: Vec<(f64, &str)> = (0..10).map(|i| (0.1 * i as f64, "grass")).collect();
        rows.extend((10..20).map(|i| (0.1 * i as f64, "gravel")));
        // A gap of 0.6 s (6 periods) splits; 0.5 s (5 periods) does not.
        rows.extend((0..5).map(|i| (2.5 + 0.1 * i as f64, "gravel")));
        rows.extend((0..5).map(|i| (3.3 + 0.1 * i as f64, "gravel")));
        let series = build_series(&[log(&rows)], &[]);
        assert_eq!(series.len(), 2);
        assert_eq!(series[0].terrain, "grass");
        assert_eq!(series[0].runs.len(), 1);
        assert_eq!(series[1].runs.len(), 2, "{:?}", series[1].runs);
        // Yaw is continuous within a run although the log wraps it.
        for w in series[0].yaw_rad.windows(2) {
            assert!((w[1] - w[0] - 0.05).abs() < 1e-9);
        }
    }

    #[test]
    fn windows_overlap_by_half_and_stay_inside_runs() {
        let rows: Vec<(f64, &str)> = (0..101).map(|i| (0.1 * i as f64, "grass")).collect();
        let series = build_series(&[log(&rows)], &[]);
        let (train, val) = cut_windows(&series[0], 1.0);
        assert!(val.is_empty(), "10 s of driving is all in the first two blocks");
        assert_eq!(train.first(), Some(&Window { start: 0, end: 10 }));
        assert_eq!(train.get(1), Some(&Window { start: 5, end: 15 }));
        assert_eq!(train.last(), Some(&Window { start: 90, end: 100 }));
    }

    #[test]
    fn held_out_blocks_separate_training_from_validation() {
        let rows: Vec<(f64, &str)> = (0..2000).map(|i| (0.1 * i as f64, "grass")).collect();
        let series = build_series(&[log(&rows)], &[]);
        let s = &series[0];
        let (train, val) = cut_windows(s, 2.0);
        assert!(!val.is_empty() && !train.is_empty());
        for w in &train {
            assert!((w.start..=w.end).all(|k| !s.held_out[k]));
        }
        for w in &val {
            assert!((w.start..=w.end).all(|k| s.held_out[k]));
            // The third block of five: 40 s to 60 s or 140 s to 160 s of moving time.
            let t = s.t_s[w.start];
            assert!((40.0..60.0).contains(&t) || (140.0..160.0).contains(&t), "{t}");
            assert_eq!(s.block_of(*w), if t < 100.0 { 2 } else { 7 });
        }
    }

    /// A log of `(t_s, left_mps, right_mps)` rows on grass moving east.
    fn speeds_log(rows: &[(f64, f64, f64)]) -> DriveLog {
        let mut text = String::from("t_s,left_mps,right_mps,x_m,y_m,yaw_rad,terrain\n");
        let mut x = 0.0;
        for (i, (t, l, r)) in rows.iter().enumerate() {
            if i > 0 {
                x += 0.5 * (l + r) * (t - rows[i - 1].0);
            }
            text.push_str(&format!("{t},{l},{r},{x},0,0,grass\n"));
        }
        parse_log(Path::new("s.csv"), &text).expect("valid log")
    }

    #[test]
    fn blocks_count_moving_time_and_standing_windows_are_dropped() {
        // 60 s driving, 100 s standing, 60 s driving at 10 Hz: moving time 120 s, six blocks of
        // 20 s. Held out: block 2 (40 s to 60 s of moving time = 40 s to 60 s of the log) and
        // none of the standing time counts towards a block.
        let mut rows = Vec::new();
        for i in 0..2200 {
            let t = 0.1 * i as f64;
            let v = if (60.0..160.0).contains(&t) { 0.0 } else { 1.0 };
            rows.push((t, v, v));
        }
        let s = build_series(&[speeds_log(&rows)], &[]).remove(0);
        approx::assert_relative_eq!(s.moving_s(), 120.0, epsilon = 0.15);
        let (train, val) = cut_windows(&s, 2.0);
        for w in train.iter().chain(&val) {
            let t = s.t_s[w.start];
            assert!(!(60.0..158.0).contains(&t), "a standing window at {t} s was kept");
        }
        // Every held-out window lies in 40 s to 60 s; the second driving stretch (moving time
        // 60 s to 120 s = blocks 3, 4, 5) holds nothing out.
        assert!(!val.is_empty());
        assert!(val.iter().all(|w| (40.0..60.0).contains(&s.t_s[w.start])), "{val:?}");
        assert_eq!(s.block[s.len() - 1], 5);
    }

    #[test]
    fn validation_logs_are_all_held_out_and_training_logs_stay_whole() {
        let rows: Vec<(f64, &str)> = (0..1000).map(|i| (0.1 * i as f64, "grass")).collect();
        let series = build_series(&[log(&rows)], &[log(&rows)]);
        let s = &series[0];
        assert_eq!(s.runs.len(), 2);
        assert_eq!(s.training_samples(), 1000, "no block of the training log is held out");
        let (train, val) = cut_windows(s, 1.0);
        assert_eq!(train.len(), val.len());
    }

    #[test]
    fn irregular_time_steps_give_windows_of_the_horizon() {
        // Steps alternate 0.04 s and 0.06 s (mean 0.05 s): windows still span 2 s of time.
        let mut t = 0.0;
        let mut rows = Vec::new();
        for i in 0..1200 {
            rows.push((t, 1.0, 1.0));
            t += if i % 2 == 0 { 0.04 } else { 0.06 };
        }
        let s = build_series(&[speeds_log(&rows)], &[]).remove(0);
        let (train, _) = cut_windows(&s, 2.0);
        assert!(train.len() > 30, "{}", train.len());
        for w in &train {
            let span = s.t_s[w.end] - s.t_s[w.start];
            assert!((2.0 - 0.02..2.0 + 0.06).contains(&span), "{span}");
        }
    }

    #[test]
    fn pose_dropouts_are_bridged_or_split() {
        // Poses missing for 1.2 s (bridged: windows may span it, none may end in it) and for
        // 3 s (longer than MAX_POSE_GAP_S: the run splits).
        let mut text = String::from("t_s,left_mps,right_mps,x_m,y_m,yaw_rad,terrain\n");
        for i in 0..600 {
            let t = 0.1 * i as f64;
            let gap = (10.2..11.4).contains(&t) || (30.0..33.0).contains(&t);
            if gap {
                text.push_str(&format!("{t},1,1,,,,grass\n"));
            } else {
                text.push_str(&format!("{t},1,1,{t},0,0,grass\n"));
            }
        }
        let log = parse_log(Path::new("g.csv"), &text).expect("valid");
        let s = build_series(&[log], &[]).remove(0);
        assert_eq!(s.runs.len(), 2, "{:?}", s.runs);
        let (train, _) = cut_windows(&s, 2.0);
        assert!(train.iter().all(|w| s.pose_ok[w.start] && s.pose_ok[w.end]));
        assert!(
            train.iter().any(|w| s.t_s[w.start] <= 10.2 && s.t_s[w.end] >= 11.4),
            "a window spans the short dropout"
        );
    }
}

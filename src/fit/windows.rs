//! From drive logs to identification windows (README, Calibrating from drive logs; docs/method.md, Calibration).
//!
//! Each log is split into runs at gaps longer than [`GAP_PERIODS`] sample periods and at terrain
//! changes. A terrain's runs are gathered into one [`Series`] with the yaw unwrapped inside each
//! run. Windows of horizon H seconds start every H/2 (overlapping by half) and never span a run
//! boundary. Validation data are held-out time blocks: the terrain's driving time is cut into
//! blocks of [`BLOCK_S`] seconds and every fifth block (the third of each five) is held out, so
//! training and validation come from the same day and manoeuvres but never share a sample.
//! With `--validate` logs, those logs are the validation data and the others all train.
//! Units: seconds, metres, radians; local frame as in the logs.

use super::log::DriveLog;
use crate::kinematics::se2::wrap_angle;

/// A gap longer than this many sample periods splits a log into runs (README, Inputs).
pub const GAP_PERIODS: f64 = 5.0;
/// Length of the held-out time blocks, seconds of driving on the terrain.
pub const BLOCK_S: f64 = 30.0;
/// One block in this many is held out for validation.
pub const BLOCK_CYCLE: usize = 5;
/// Which block of each cycle is held out (0-based).
pub const HELD_OUT_BLOCK: usize = 2;

/// A contiguous stretch of samples on one terrain without gaps: indices `start..end` of a [`Series`].
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Run {
    pub start: usize,
    pub end: usize,
    pub period_s: f64,
}

/// All samples of one terrain, as parallel arrays. `dt_s[k]` is the time from sample k to k+1
/// (0 at the last sample of a run); `yaw_rad` is continuous within each run.
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
    /// True for samples used only for validation.
    pub held_out: Vec<bool>,
    pub runs: Vec<Run>,
    /// Driving time so far on this terrain, for the held-out blocks.
    driven_s: f64,
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

    fn push_run(&mut self, log: &DriveLog, range: std::ops::Range<usize>, from_validation_log: bool) {
        let start = self.len();
        let samples = &log.samples[range];
        let mut yaw = 0.0;
        for (k, s) in samples.iter().enumerate() {
            yaw = if k == 0 { s.yaw_rad } else { yaw + wrap_angle(s.yaw_rad - samples[k - 1].yaw_rad) };
            let dt = samples.get(k + 1).map_or(0.0, |n| n.t_s - s.t_s);
            let held_out = if from_validation_log {
                true
            } else {
                (self.driven_s / BLOCK_S) as usize % BLOCK_CYCLE == HELD_OUT_BLOCK
            };
            self.t_s.push(s.t_s);
            self.left_mps.push(s.left_mps);
            self.right_mps.push(s.right_mps);
            self.dt_s.push(dt);
            self.x_m.push(s.x_m);
            self.y_m.push(s.y_m);
            self.yaw_rad.push(yaw);
            self.held_out.push(held_out);
            self.driven_s += dt;
        }
        self.runs.push(Run { start, end: self.len(), period_s: log.period_s });
    }
}

/// Splits the logs into runs and gathers them per terrain (sorted by terrain name). Samples of
/// `validation_logs` are all held out; when there are none, time blocks of the training logs are.
pub fn build_series(logs: &[DriveLog], validation_logs: &[DriveLog]) -> Vec<Series> {
    let mut by_terrain: std::collections::BTreeMap<String, Series> = Default::default();
    let all = logs.iter().map(|l| (l, false)).chain(validation_logs.iter().map(|l| (l, true)));
    for (log, validation) in all {
        let mut start = 0;
        for k in 1..=log.samples.len() {
            let split = match (log.samples.get(k - 1), log.samples.get(k)) {
                (Some(a), Some(b)) => a.terrain != b.terrain || b.t_s - a.t_s > GAP_PERIODS * log.period_s,
                _ => true,
            };
            if split {
                let name = &log.terrains[log.samples[start].terrain];
                let series = by_terrain
                    .entry(name.clone())
                    .or_insert_with(|| Series { terrain: name.clone(), ..Default::default() });
                series.push_run(log, start..k, validation);
                start = k;
            }
        }
    }
    by_terrain.into_values().collect()
}

/// Training and validation windows of horizon `horizon_s`. A training window touches no
/// held-out sample; a validation window lies wholly in held-out samples; others are dropped.
pub fn cut_windows(s: &Series, horizon_s: f64) -> (Vec<Window>, Vec<Window>) {
    // held[k] = number of held-out samples before k, to classify a window in O(1).
    let mut held = Vec::with_capacity(s.len() + 1);
    held.push(0usize);
    for (k, h) in s.held_out.iter().enumerate() {
        held.push(held[k] + usize::from(*h));
    }
    let (mut training, mut validation) = (Vec::new(), Vec::new());
    for run in &s.runs {
        let steps = ((horizon_s / run.period_s).round() as usize).max(1);
        let stride = (steps / 2).max(1);
        let mut start = run.start;
        while start + steps < run.end {
            let w = Window { start, end: start + steps };
            let held_in = held[w.end + 1] - held[w.start];
            if held_in == 0 {
                training.push(w);
            } else if held_in == steps + 1 {
                validation.push(w);
            }
            start += stride;
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
            // The third block of five: 60 s to 90 s or 210 s to 240 s of driving.
            let t = s.t_s[w.start];
            assert!((60.0..90.0).contains(&t) || (210.0..240.0).contains(&t), "{t}");
        }
    }

    #[test]
    fn validation_logs_are_all_held_out() {
        let rows: Vec<(f64, &str)> = (0..100).map(|i| (0.1 * i as f64, "grass")).collect();
        let series = build_series(&[log(&rows)], &[log(&rows)]);
        let s = &series[0];
        assert_eq!(s.runs.len(), 2);
        assert_eq!(s.training_samples(), 100);
        let (train, val) = cut_windows(s, 1.0);
        assert_eq!(train.len(), val.len());
    }
}

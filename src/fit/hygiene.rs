//! Checks every drive log for the defects real logs have and repairs what can be repaired
//! (docs/fit.md, "Log checks"), before any window is cut. Reported per log, in plain words:
//!
//! - **Held encoder values**: encoders that update slower than the log is written (say 4 Hz in a
//!   20 Hz log) repeat their last value. Among moving samples (windows, `MOVING_SPEED_MPS`), when
//!   at least [`HELD_MIN_FRACTION`] repeat the previous pair of side speeds exactly and the
//!   median time between changes is at least [`HELD_MIN_PERIODS`] log periods and at most
//!   [`MAX_HOLD_S`], the log is *held*. Each new value is then taken as the mean speed since the
//!   previous change (as a driver that differences wheel counts at every update reports it) and
//!   spread back over the samples it was held for, so the distance integrated between changes is
//!   the distance the counts measured. Holds longer than [`MAX_HOLD_S`] (steady driving with a
//!   quantised reading) are left alone.
//! - **Pose gaps**: rows without a pose (empty pose cells), and poses repeated exactly while the
//!   vehicle moves (a localization that stopped publishing), are marked missing. Windows never
//!   start or end on a missing pose; a dropout up to `MAX_POSE_GAP_S` is bridged by the side
//!   speeds and a longer one splits the run (`windows`).
//! - **Irregular time steps**: reported when more than [`IRREGULAR_MIN_FRACTION`] of the steps
//!   differ from the median period by more than [`IRREGULAR_TOLERANCE`]. Nothing is resampled:
//!   the integration uses each step's own duration and windows are cut by time.
//! - **Dead or unmapped encoders** are an error: a side whose speeds cover less than
//!   [`DEAD_SIDE_FRACTION`] of the distance the poses move (once the poses have moved
//!   [`DEAD_CHECK_MIN_M`] or more) cannot be fitted.
//!
//! Units: seconds, metres, metres per second.

use serde::Serialize;

use super::log::{DriveLog, LogSample};
use super::stats::quantile_sorted;
use super::windows::{is_moving, GAP_PERIODS};
use super::FitError;

/// Fewest repeated moving samples (fraction) for a log's encoders to count as held.
pub const HELD_MIN_FRACTION: f64 = 0.3;
/// Shortest median time between encoder changes, in log periods, for a held log.
pub const HELD_MIN_PERIODS: f64 = 1.5;
/// Longest hold that is spread back; longer holds are kept as logged (seconds).
pub const MAX_HOLD_S: f64 = 1.0;
/// Fraction of steps off the median period above which a log's rate is irregular.
pub const IRREGULAR_MIN_FRACTION: f64 = 0.05;
/// Relative deviation from the median period at which a step counts as irregular.
pub const IRREGULAR_TOLERANCE: f64 = 0.2;
/// A side covering less than this fraction of the poses' travel is dead or unmapped.
pub const DEAD_SIDE_FRACTION: f64 = 0.1;
/// Pose travel (m) from which the dead-encoder check applies.
pub const DEAD_CHECK_MIN_M: f64 = 5.0;
/// Span (s) over which pose travel is measured, long enough that pose noise does not add up.
const POSE_TRAVEL_SPAN_S: f64 = 1.0;

/// Encoders that repeat their values.
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct HeldEncoders {
    /// Fraction of moving samples that repeat the previous pair of side speeds.
    pub repeated_fraction: f64,
    /// Median time between changes of the side speeds while moving (s): the encoders' update period.
    pub update_period_s: f64,
    /// Samples whose side speeds were replaced by the next update's value.
    pub resampled_samples: usize,
}

/// Rows without a usable pose.
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct PoseGaps {
    /// Stretches of consecutive rows without a pose.
    pub gaps: usize,
    pub samples: usize,
    /// Rows whose pose repeated the previous one exactly while the vehicle moved.
    pub repeated_samples: usize,
    /// Longest time between two measured poses across a gap (s).
    pub longest_s: f64,
}

/// Time steps far from the median period.
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct IrregularSteps {
    /// Fraction of steps (gaps that split runs excluded) more than 20 % off the median period.
    pub fraction: f64,
    pub median_s: f64,
    pub min_s: f64,
    pub max_s: f64,
}

/// What the checks found in one log and what was done about it.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct LogCheck {
    pub file: String,
    pub samples: usize,
    pub period_s: f64,
    /// Fraction of the log's time that is moving.
    pub moving_fraction: f64,
    pub held_encoders: Option<HeldEncoders>,
    pub pose_gaps: Option<PoseGaps>,
    pub irregular_steps: Option<IrregularSteps>,
    /// The findings and the repairs, in plain words (empty for a clean log).
    pub notes: Vec<String>,
}

/// Checks `log`, returns the repaired copy and what was found; an error for dead or unmapped
/// encoders.
pub fn check_log(log: &DriveLog) -> Result<(DriveLog, LogCheck), FitError> {
    let mut out = log.clone();
    check_encoders_alive(log)?;
    let held = resample_held_encoders(&mut out.samples, log.period_s);
    let pose_gaps = mark_pose_gaps(&mut out.samples);
    let irregular = irregular_steps(&log.samples, log.period_s);
    let mut notes = Vec::new();
    if let Some(h) = &held {
        notes.push(format!(
            "side speeds repeat on {:.0} % of moving rows and change every {:.2} s (log period {:.3} s): the \
             encoders update slower than the log; each new value was spread back over the rows before it since the \
             previous change ({} rows resampled)",
            100.0 * h.repeated_fraction,
            h.update_period_s,
            log.period_s,
            h.resampled_samples
        ));
    }
    if let Some(g) = &pose_gaps {
        let repeated = if g.repeated_samples > 0 {
            format!(" ({} repeated the previous pose while moving)", g.repeated_samples)
        } else {
            String::new()
        };
        notes.push(format!(
            "{} rows without a pose{repeated} in {} gaps, the longest {:.1} s between poses: no window starts or \
             ends on them; gaps up to {} s are bridged by the side speeds, longer ones split the run",
            g.samples,
            g.gaps,
            g.longest_s,
            super::windows::MAX_POSE_GAP_S
        ));
    }
    if let Some(i) = &irregular {
        notes.push(format!(
            "time steps are irregular: {:.0} % differ from the median {:.3} s by more than {:.0} % ({:.3} to {:.3} s); \
             each step is integrated with its own duration and windows are cut by time",
            100.0 * i.fraction,
            i.median_s,
            100.0 * IRREGULAR_TOLERANCE,
            i.min_s,
            i.max_s
        ));
    }
    let check = LogCheck {
        file: log.source.display().to_string(),
        samples: log.samples.len(),
        period_s: log.period_s,
        moving_fraction: moving_fraction(&log.samples, log.period_s),
        held_encoders: held,
        pose_gaps,
        irregular_steps: irregular,
        notes,
    };
    Ok((out, check))
}

/// Checks and repairs every log; the first dead-encoder error stops.
pub fn check_logs(logs: &[DriveLog]) -> Result<(Vec<DriveLog>, Vec<LogCheck>), FitError> {
    let mut repaired = Vec::with_capacity(logs.len());
    let mut checks = Vec::with_capacity(logs.len());
    for log in logs {
        let (l, c) = check_log(log)?;
        repaired.push(l);
        checks.push(c);
    }
    Ok((repaired, checks))
}

/// True when the step from `a` to `b` stays inside a run (no gap, same terrain).
fn same_run(a: &LogSample, b: &LogSample, period_s: f64) -> bool {
    a.terrain == b.terrain && b.t_s - a.t_s <= GAP_PERIODS * period_s
}

fn moving_fraction(samples: &[LogSample], period_s: f64) -> f64 {
    let (mut moving, mut total) = (0.0, 0.0);
    for w in samples.windows(2) {
        if same_run(&w[0], &w[1], period_s) {
            let dt = w[1].t_s - w[0].t_s;
            total += dt;
            if is_moving(w[0].left_mps, w[0].right_mps) {
                moving += dt;
            }
        }
    }
    if total > 0.0 {
        moving / total
    } else {
        0.0
    }
}

/// Distance the poses move, summed over spans of [`POSE_TRAVEL_SPAN_S`], and the distance each
/// side's speed covers; an error when a side covers almost none of the poses' travel.
fn check_encoders_alive(log: &DriveLog) -> Result<(), FitError> {
    let mut pose_m = 0.0;
    let mut anchor: Option<&LogSample> = None;
    let (mut left_m, mut right_m) = (0.0, 0.0);
    for (k, s) in log.samples.iter().enumerate() {
        if let Some(next) = log.samples.get(k + 1).filter(|n| same_run(s, n, log.period_s)) {
            let dt = next.t_s - s.t_s;
            left_m += s.left_mps.abs() * dt;
            right_m += s.right_mps.abs() * dt;
        }
        if s.pose_missing {
            continue;
        }
        match anchor {
            Some(a) if s.t_s - a.t_s >= POSE_TRAVEL_SPAN_S => {
                if s.t_s - a.t_s <= 5.0 * POSE_TRAVEL_SPAN_S {
                    pose_m += (s.x_m - a.x_m).hypot(s.y_m - a.y_m);
                }
                anchor = Some(s);
            }
            None => anchor = Some(s),
            Some(_) => {}
        }
    }
    if pose_m < DEAD_CHECK_MIN_M {
        return Ok(());
    }
    let dead: Vec<&str> = [("left_mps", left_m), ("right_mps", right_m)]
        .into_iter()
        .filter(|(_, m)| *m < DEAD_SIDE_FRACTION * pose_m)
        .map(|(c, _)| c)
        .collect();
    if dead.is_empty() {
        return Ok(());
    }
    let what = format!(
        "the poses move {pose_m:.0} m but the side speeds cover only {left_m:.1} m (left_mps) and {right_m:.1} m \
         (right_mps): column{} {} stay{} near zero; are the encoders dead or the columns mapped to the wrong signal?",
        if dead.len() > 1 { "s" } else { "" },
        dead.join(" and "),
        if dead.len() > 1 { "" } else { "s" }
    );
    Err(FitError::File { file: log.source.clone(), what })
}

/// Finds held encoder values and spreads each update back over its hold (see the module text).
fn resample_held_encoders(samples: &mut [LogSample], period_s: f64) -> Option<HeldEncoders> {
    let repeats = |a: &LogSample, b: &LogSample| a.left_mps == b.left_mps && a.right_mps == b.right_mps;
    let (mut moving, mut repeated) = (0usize, 0usize);
    // Times between changes of the side speeds while moving.
    let mut intervals = Vec::new();
    let mut last_change: Option<f64> = None;
    for k in 1..samples.len() {
        let (a, b) = (&samples[k - 1], &samples[k]);
        if !same_run(a, b, period_s) {
            last_change = None;
            continue;
        }
        if !(is_moving(a.left_mps, a.right_mps) || is_moving(b.left_mps, b.right_mps)) {
            last_change = None;
            continue;
        }
        moving += 1;
        if repeats(a, b) {
            repeated += 1;
        } else {
            if let Some(t) = last_change {
                intervals.push(b.t_s - t);
            }
            last_change = Some(b.t_s);
        }
    }
    if moving == 0 || intervals.is_empty() {
        return None;
    }
    let fraction = repeated as f64 / moving as f64;
    intervals.sort_by(f64::total_cmp);
    let update_period_s = quantile_sorted(&intervals, 0.5)?;
    if fraction < HELD_MIN_FRACTION || update_period_s < HELD_MIN_PERIODS * period_s || update_period_s > MAX_HOLD_S {
        return None;
    }
    let mut resampled = 0;
    // `a` is the sample where the current value first appeared.
    let mut a = 0;
    for b in 1..samples.len() {
        if !same_run(&samples[b - 1], &samples[b], period_s) {
            a = b;
            continue;
        }
        if repeats(&samples[b - 1], &samples[b]) {
            continue;
        }
        // Samples a..b held the value of a; the value first seen at b is the mean speed over
        // [t_a, t_b): it replaces them when the hold was short enough to be an update period.
        if b - a >= 2 && samples[b].t_s - samples[a].t_s <= MAX_HOLD_S {
            let (l, r) = (samples[b].left_mps, samples[b].right_mps);
            for s in &mut samples[a..b] {
                s.left_mps = l;
                s.right_mps = r;
            }
            resampled += b - a;
        }
        a = b;
    }
    Some(HeldEncoders { repeated_fraction: fraction, update_period_s, resampled_samples: resampled })
}

/// Marks poses repeated exactly while moving as missing and measures the gaps.
fn mark_pose_gaps(samples: &mut [LogSample]) -> Option<PoseGaps> {
    let mut repeated = 0;
    for k in 1..samples.len() {
        let (a, b) = (samples[k - 1], samples[k]);
        let same_pose = a.x_m == b.x_m && a.y_m == b.y_m && a.yaw_rad == b.yaw_rad;
        if !b.pose_missing && same_pose && (is_moving(a.left_mps, a.right_mps) || a.pose_missing) {
            // The previous row either moved (so the pose should have changed) or was itself a
            // held pose: a localization that stopped publishing.
            if is_moving(a.left_mps, a.right_mps) || a.pose_missing {
                samples[k].pose_missing = true;
                repeated += 1;
            }
        }
    }
    let (mut gaps, mut missing, mut longest_s) = (0, 0, 0.0f64);
    let mut last_pose_t: Option<f64> = None;
    let mut in_gap = false;
    for s in samples.iter() {
        if s.pose_missing {
            missing += 1;
            if !in_gap {
                gaps += 1;
                in_gap = true;
            }
        } else {
            if in_gap {
                if let Some(t) = last_pose_t {
                    longest_s = longest_s.max(s.t_s - t);
                }
                in_gap = false;
            }
            last_pose_t = Some(s.t_s);
        }
    }
    (missing > 0).then_some(PoseGaps { gaps, samples: missing, repeated_samples: repeated, longest_s })
}

/// Steps more than [`IRREGULAR_TOLERANCE`] off the median period (gaps excluded), if many.
fn irregular_steps(samples: &[LogSample], period_s: f64) -> Option<IrregularSteps> {
    let steps: Vec<f64> =
        samples.windows(2).filter(|w| same_run(&w[0], &w[1], period_s)).map(|w| w[1].t_s - w[0].t_s).collect();
    if steps.is_empty() {
        return None;
    }
    let off = steps.iter().filter(|d| (*d - period_s).abs() > IRREGULAR_TOLERANCE * period_s).count();
    let fraction = off as f64 / steps.len() as f64;
    (fraction > IRREGULAR_MIN_FRACTION).then(|| IrregularSteps {
        fraction,
        median_s: period_s,
        min_s: steps.iter().copied().fold(f64::INFINITY, f64::min),
        max_s: steps.iter().copied().fold(0.0, f64::max),
    })
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::fit::testdata::{defective_text, Defects};
    use approx::assert_relative_eq;
    use std::path::Path;

    fn log_of(text: &str) -> DriveLog {
        crate::fit::log::parse_log(Path::new("d.csv"), text).expect("valid log")
    }

    #[test]
    fn a_clean_log_has_no_notes() {
        let text = defective_text(&Defects::none(), 60.0, 1);
        let (repaired, check) = check_log(&log_of(&text)).expect("alive");
        assert!(check.notes.is_empty(), "{:?}", check.notes);
        assert_eq!(repaired, log_of(&text));
    }

    #[test]
    fn held_encoders_are_found_and_spread_back() {
        // Encoders counting at 4 Hz in a 20 Hz log: five rows per value, update period 0.25 s.
        let d = Defects { encoder_hz: Some(4.0), ..Defects::none() };
        let log = log_of(&defective_text(&d, 120.0, 2));
        let (repaired, check) = check_log(&log).expect("alive");
        let h = check.held_encoders.expect("held encoders found");
        assert_relative_eq!(h.update_period_s, 0.25, epsilon = 1e-9);
        assert!(h.repeated_fraction > 0.75, "{h:?}");
        // Spread back: the value first logged at the end of a hold covers the hold before it, so
        // the distance between two updates is that value times the update period.
        let s = &repaired.samples;
        let k = (10..s.len()).find(|&k| s[k].left_mps != s[k - 1].left_mps).expect("a change");
        let next = (k + 1..s.len()).find(|&j| s[j].left_mps != s[j - 1].left_mps).expect("next change");
        assert_eq!(next - k, 5);
        assert!(s[k..next].iter().all(|x| x.left_mps == log.samples[next].left_mps));
        assert_eq!(check.notes.len(), 1);
    }

    #[test]
    fn steady_driving_with_a_constant_reading_is_not_held() {
        // Noise-free logs repeat exact speeds for seconds: longer than MAX_HOLD_S, not a hold.
        let mut text = String::from("t_s,left_mps,right_mps,x_m,y_m,yaw_rad,terrain\n");
        for i in 0..600 {
            let t = 0.05 * i as f64;
            let v = if (i / 60) % 2 == 0 { 1.0 } else { 0.8 };
            text.push_str(&format!("{t},{v},{v},{},0,0,grass\n", t * 0.9));
        }
        let (_, check) = check_log(&log_of(&text)).expect("alive");
        assert!(check.held_encoders.is_none(), "{:?}", check.held_encoders);
    }

    #[test]
    fn pose_dropouts_and_repeated_poses_are_gaps() {
        let d = Defects { pose_dropouts_s: vec![(20.0, 2.0), (50.0, 1.0)], ..Defects::none() };
        let (repaired, check) = check_log(&log_of(&defective_text(&d, 80.0, 3))).expect("alive");
        let g = check.pose_gaps.expect("gaps");
        assert_eq!(g.gaps, 2);
        // The generator repeats the last pose: 2 s and 1 s at 20 Hz, 60 rows.
        assert_eq!(g.samples, 60);
        assert_eq!(g.repeated_samples, 60);
        assert_relative_eq!(g.longest_s, 2.05, epsilon = 1e-6);
        assert_eq!(repaired.samples.iter().filter(|s| s.pose_missing).count(), 60);
    }

    #[test]
    fn irregular_steps_are_reported() {
        let d = Defects { jitter: true, ..Defects::none() };
        let (_, check) = check_log(&log_of(&defective_text(&d, 60.0, 4))).expect("alive");
        let i = check.irregular_steps.expect("irregular");
        assert!(i.fraction > 0.3 && i.min_s < 0.05 && i.max_s > 0.05, "{i:?}");
    }

    #[test]
    fn dead_or_unmapped_encoders_are_an_error() {
        let d = Defects { dead_left: true, ..Defects::none() };
        let e = check_log(&log_of(&defective_text(&d, 60.0, 5))).expect_err("dead left side").to_string();
        assert!(e.starts_with("d.csv: the poses move"), "{e}");
        assert!(e.contains("column left_mps stays near zero"), "{e}");
        // A standing log (poses still) is not an error.
        let mut text = String::from("t_s,left_mps,right_mps,x_m,y_m,yaw_rad,terrain\n");
        for i in 0..100 {
            text.push_str(&format!("{},0,0,0.001,0,0,grass\n", 0.1 * i as f64));
        }
        assert!(check_log(&log_of(&text)).is_ok());
    }
}

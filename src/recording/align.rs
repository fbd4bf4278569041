//! Puts side speeds, poses and terrain, which arrive at their own rates, onto one time base: the
//! pose times (README, "Reading ROS 2 recordings").
//!
//! Rules:
//! - each stream is sorted by time; messages repeating an earlier message's exact time are
//!   dropped (the first one is kept);
//! - every pose is one drive-log sample; poses are never interpolated, so a gap in the poses
//!   stays a gap (and the fit splits its runs there, as for CSV logs);
//! - the side speeds at a pose time are interpolated linearly between the neighbouring
//!   side-speed messages (exactly the message's values at a shared time), but never across a gap
//!   longer than [`GAP_PERIODS`] median side-speed periods: poses inside such a gap are dropped,
//!   as are poses before the first or after the last side-speed message;
//! - the terrain at a pose time is the map's value, the latest terrain message at or before it,
//!   or the CSV range containing it; poses without a terrain are dropped;
//! - sample times `t_s` are seconds from the first pose message's time.

use std::collections::HashMap;
use std::path::Path;

use super::extract::{PoseSample, SideSample};
use super::map::TerrainRange;
use super::RecordingError;
use crate::fit::log::{DriveLog, LogSample};
use crate::limits::{show_number, Limits, MAX_ABS_COORDINATE_M};

/// A gap longer than this many sample periods is not bridged (the drive-log gap rule).
pub const GAP_PERIODS: i64 = 5;

/// Where the terrain of each sample comes from, with times already collected.
#[derive(Debug, Clone, Copy)]
pub enum TerrainSource<'a> {
    Value(&'a str),
    /// Terrain messages (time in ns, name), any order.
    Marks(&'a [(i64, String)]),
    /// Ranges in seconds from the first pose, sorted and disjoint.
    Ranges(&'a [TerrainRange]),
}

/// Sorts by time and drops messages whose time repeats an earlier one.
fn sort_dedup<T>(items: &mut Vec<T>, time: impl Fn(&T) -> i64) {
    items.sort_by_key(&time);
    items.dedup_by(|b, a| time(a) == time(b));
}

/// Median of the positive steps between sorted times (ns); `None` with fewer than 2 times.
fn median_step_ns(times: impl Iterator<Item = i64>) -> Option<i64> {
    let times: Vec<i64> = times.collect();
    let mut steps: Vec<i64> = times.windows(2).map(|w| w[1] - w[0]).collect();
    steps.sort_unstable();
    steps.get(steps.len() / 2).copied()
}

/// Side speeds at `t_ns` from sorted, deduplicated samples; `cursor` is the index of the last
/// sample at or before the previous (earlier) query and only moves forward.
fn side_at(side: &[SideSample], cursor: &mut usize, t_ns: i64, gap_ns: i64) -> Option<(f64, f64)> {
    while side.get(*cursor + 1).is_some_and(|s| s.t_ns <= t_ns) {
        *cursor += 1;
    }
    let a = side.get(*cursor)?;
    if a.t_ns == t_ns {
        return Some((a.left_mps, a.right_mps));
    }
    if a.t_ns > t_ns {
        return None; // before the first side-speed message
    }
    let b = side.get(*cursor + 1)?; // none: after the last one
    let span = b.t_ns - a.t_ns;
    if span > gap_ns {
        return None;
    }
    let w = (t_ns - a.t_ns) as f64 / span as f64;
    // (1 - w) a + w b gives a and b exactly at w = 0 and 1.
    Some(((1.0 - w) * a.left_mps + w * b.left_mps, (1.0 - w) * a.right_mps + w * b.right_mps))
}

/// Builds the drive log. `side` and `poses` come straight from the messages; `file` names the
/// recording, `topics` the side-speed and pose topics, for messages.
pub fn assemble(
    file: &Path,
    topics: [&str; 2],
    mut side: Vec<SideSample>,
    mut poses: Vec<PoseSample>,
    terrain: TerrainSource,
    limits: &Limits,
) -> Result<DriveLog, RecordingError> {
    let error = |what: String| RecordingError::File { file: file.to_path_buf(), what };
    let [side_topic, pose_topic] = topics;
    for (topic, first, last, n) in [
        (side_topic, side.first().map(|s| s.t_ns), side.last().map(|s| s.t_ns), side.len()),
        (pose_topic, poses.first().map(|p| p.t_ns), poses.last().map(|p| p.t_ns), poses.len()),
    ] {
        if n > 1 && first == last {
            let at = first.map_or(0.0, |t| t as f64 / 1e9);
            return Err(error(format!(
                "all {n} messages on {topic} carry the same header stamp ({} s): the publisher does not stamp its messages",
                show_number(at)
            )));
        }
    }
    sort_dedup(&mut side, |s| s.t_ns);
    sort_dedup(&mut poses, |p| p.t_ns);
    let gap_ns = median_step_ns(side.iter().map(|s| s.t_ns))
        .ok_or_else(|| {
            error(format!("{side_topic} has fewer than 2 messages with distinct times; side speeds need a time series"))
        })?
        .saturating_mul(GAP_PERIODS);
    let t0_ns = poses.first().map_or(0, |p| p.t_ns);
    let marks = match terrain {
        TerrainSource::Marks(m) => {
            let mut m: Vec<(i64, &str)> = m.iter().map(|(t, s)| (*t, s.as_str())).collect();
            m.sort_by_key(|(t, _)| *t);
            m
        }
        _ => Vec::new(),
    };
    let mut terrains: Vec<String> = Vec::new();
    let mut index: HashMap<String, usize> = HashMap::new();
    let mut samples: Vec<LogSample> = Vec::new();
    let (mut side_cursor, mut mark_cursor, mut range_cursor) = (0usize, None::<usize>, 0usize);
    for p in &poses {
        let Some((left_mps, right_mps)) = side_at(&side, &mut side_cursor, p.t_ns, gap_ns) else { continue };
        let t_s = (p.t_ns - t0_ns) as f64 / 1e9;
        let name = match terrain {
            TerrainSource::Value(v) => Some(v),
            TerrainSource::Marks(_) => {
                while marks.get(mark_cursor.map_or(0, |c| c + 1)).is_some_and(|(t, _)| *t <= p.t_ns) {
                    mark_cursor = Some(mark_cursor.map_or(0, |c| c + 1));
                }
                mark_cursor.and_then(|c| marks.get(c)).map(|(_, s)| *s)
            }
            TerrainSource::Ranges(r) => {
                while r.get(range_cursor).is_some_and(|x| x.end_s <= t_s) {
                    range_cursor += 1;
                }
                r.get(range_cursor).filter(|x| x.start_s <= t_s).map(|x| x.terrain.as_str())
            }
        };
        let Some(name) = name else { continue };
        let terrain = match index.get(name) {
            Some(&i) => i,
            None => {
                index.insert(name.to_string(), terrains.len());
                terrains.push(name.to_string());
                terrains.len() - 1
            }
        };
        for (what, value) in [("x", p.x_m), ("y", p.y_m)] {
            if value.abs() > MAX_ABS_COORDINATE_M {
                return Err(error(format!(
                    "message {} on {pose_topic}: position {what} {} m is beyond +-{MAX_ABS_COORDINATE_M} m (is the pose in a local map frame?)",
                    p.number,
                    show_number(value)
                )));
            }
        }
        if samples.len() >= limits.max_total_points {
            return Err(error(format!(
                "more than {} drive-log samples, the limit (raise it with SKIDROUTE_MAX_TOTAL_POINTS)",
                limits.max_total_points
            )));
        }
        samples.push(LogSample {
            line: p.number,
            t_s,
            left_mps,
            right_mps,
            x_m: p.x_m,
            y_m: p.y_m,
            yaw_rad: p.yaw_rad,
            terrain,
            // Samples are taken at the pose times, so every sample has a measured pose; a pose
            // the recording repeats while moving is marked by the log checks (`fit::hygiene`).
            pose_missing: false,
        });
    }
    if samples.len() < 2 {
        return Err(error(format!(
            "{} of {} poses on {pose_topic} have side speeds from {side_topic} and a terrain; a drive log needs at least 2 (do the two topics overlap in time?)",
            samples.len(),
            poses.len()
        )));
    }
    let mut dts: Vec<f64> = samples.windows(2).map(|w| w[1].t_s - w[0].t_s).collect();
    dts.sort_by(f64::total_cmp);
    let period_s = dts[dts.len() / 2];
    Ok(DriveLog { source: file.to_path_buf(), terrains, samples, origin: None, period_s })
}

#[cfg(test)]
mod tests {
    use super::*;
    use approx::assert_relative_eq;

    const MS: i64 = 1_000_000;

    fn side(t_ms: i64, l: f64, r: f64) -> SideSample {
        SideSample { t_ns: t_ms * MS, left_mps: l, right_mps: r }
    }

    fn pose(t_ms: i64, n: usize) -> PoseSample {
        PoseSample { t_ns: t_ms * MS, x_m: n as f64, y_m: 0.0, yaw_rad: 0.0, number: n }
    }

    fn run(side: Vec<SideSample>, poses: Vec<PoseSample>, terrain: TerrainSource) -> DriveLog {
        assemble(Path::new("r.mcap"), ["/s", "/p"], side, poses, terrain, &Limits::default()).expect("assembles")
    }

    #[test]
    fn interpolates_linearly_and_exactly_at_shared_times() {
        // Side speeds every 20 ms; poses at 0, 10, 30, 40 ms.
        let s = vec![side(0, 1.0, 2.0), side(20, 2.0, 2.0), side(40, 3.0, 0.0)];
        let log = run(s, vec![pose(0, 1), pose(10, 2), pose(30, 3), pose(40, 4)], TerrainSource::Value("grass"));
        let left: Vec<f64> = log.samples.iter().map(|x| x.left_mps).collect();
        // Closed form: linear interpolation halfway between neighbours.
        assert_eq!(left, vec![1.0, 1.5, 2.5, 3.0]);
        assert_relative_eq!(log.samples[2].right_mps, 1.0, epsilon = 1e-15);
        assert_relative_eq!(log.samples[1].t_s, 0.010, epsilon = 1e-15);
        assert_relative_eq!(log.period_s, 0.010, epsilon = 1e-15);
        assert_eq!(log.samples[3].line, 4);
    }

    #[test]
    fn never_bridges_a_gap_and_drops_poses_outside_the_side_speeds() {
        // Side speeds every 10 ms with a 100 ms hole (more than 5 periods) between 40 and 140.
        let mut s: Vec<SideSample> = (0..=4).map(|k| side(10 + 10 * k, 1.0, 1.0)).collect();
        s.extend((0..=4).map(|k| side(140 + 10 * k, 2.0, 2.0)));
        let poses: Vec<PoseSample> = (0..20).map(|k| pose(10 * k, k as usize + 1)).collect();
        let log = run(s, poses, TerrainSource::Value("grass"));
        let times: Vec<i64> = log.samples.iter().map(|x| (x.t_s * 1000.0).round() as i64).collect();
        // 0 ms is before the first side speed, 190 after the last; 50..130 inside the hole.
        assert_eq!(times, vec![10, 20, 30, 40, 50, 140, 150, 160, 170, 180]);
        // 50 ms falls on the last message before the hole: its own values, no bridging.
        assert_eq!(log.samples[4].left_mps, 1.0);
        assert_eq!(log.samples[5].left_mps, 2.0);
    }

    #[test]
    fn terrain_marks_and_ranges() {
        let s: Vec<SideSample> = (0..=10).map(|k| side(100 * k, 1.0, 1.0)).collect();
        let poses: Vec<PoseSample> = (0..=10).map(|k| pose(100 * k, k as usize + 1)).collect();
        let marks = vec![(250 * MS, "gravel".to_string()), (50 * MS, "grass".to_string())];
        let log = run(s.clone(), poses.clone(), TerrainSource::Marks(&marks));
        assert_eq!(log.terrains, ["grass", "gravel"]);
        let terr: Vec<usize> = log.samples.iter().map(|x| x.terrain).collect();
        // Pose at 0 ms precedes every mark: dropped.
        assert_eq!(terr, vec![0, 0, 1, 1, 1, 1, 1, 1, 1, 1]);
        let ranges = vec![
            TerrainRange { line: 2, start_s: 0.0, end_s: 0.3, terrain: "snow".into() },
            TerrainRange { line: 3, start_s: 0.5, end_s: 0.8, terrain: "mud".into() },
        ];
        let log = run(s, poses, TerrainSource::Ranges(&ranges));
        let t: Vec<i64> = log.samples.iter().map(|x| (x.t_s * 1000.0).round() as i64).collect();
        assert_eq!(t, vec![0, 100, 200, 500, 600, 700]);
        assert_eq!(log.terrains, ["snow", "mud"]);
    }

    #[test]
    fn unstamped_or_disjoint_streams_are_errors() {
        let s = vec![side(0, 1.0, 1.0), side(0, 1.0, 1.0)];
        let e = assemble(
            Path::new("r.mcap"),
            ["/s", "/p"],
            s,
            vec![pose(0, 1)],
            TerrainSource::Value("g"),
            &Limits::default(),
        );
        assert!(e.expect_err("same stamps").to_string().contains("all 2 messages on /s carry the same header stamp"));
        let s = vec![side(0, 1.0, 1.0), side(10, 1.0, 1.0)];
        let e = assemble(
            Path::new("r.mcap"),
            ["/s", "/p"],
            s,
            vec![pose(500, 1), pose(510, 2)],
            TerrainSource::Value("g"),
            &Limits::default(),
        );
        assert!(e.expect_err("disjoint").to_string().contains("0 of 2 poses on /p have side speeds"));
    }
}

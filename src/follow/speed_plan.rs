//! The planner's speed and corridor profiles along a route's plan, one entry per plan segment,
//! and the braking envelope the follower's target speed follows (docs/method.md, Following).
//!
//! Within a leg the planned speed and corridor are linear in arc length between points (README,
//! "Route, CSV"); at a leg boundary they may jump (the boundary point belongs to both legs, each
//! with its own value), so every segment keeps the values at its two ends from its own leg.
//!
//! Braking envelope: the follower slows in time for every slower stretch ahead, braking at the
//! acceleration limit a, so at arc length s its target speed is the smallest over s' >= s of
//! sqrt(v(s')^2 + 2 a (s' - s)) (constant deceleration from v to v(s') over s' - s; kinematics,
//! common practice, no source). One backward pass over the segments, when the plan is built,
//! stores for each segment the squared envelope just past its end; at the progress point only
//! the rest of its own segment is left, minimised in closed form, so a control step is O(1) and
//! allocates nothing. Units: metres, m/s, m/s^2.

use super::FollowerLimits;
use crate::route::{Cursor, PlanPath, Route};

/// Slowest target speed the follower is given, m/s: the creep of its final approach (and the
/// slowest planned speed a route may give).
pub const CREEP_SPEED_MPS: f64 = 0.05;

/// One segment of the plan: planned speed and corridor at both ends (from the segment's own
/// leg), and the braking envelope beyond it.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct SegmentPlan {
    /// Target speed at the segment's start and end, m/s.
    pub speed_mps: [f64; 2],
    /// Corridor half-width at the segment's start and end, m.
    pub corridor_m: [f64; 2],
    /// Smallest v(s')^2 + 2 a (s' - s_end) over the plan past the segment's end, m^2/s^2;
    /// infinite on the last segment (the stop at the end is a separate rule of the follower).
    after_end_sq: f64,
}

const FALLBACK: SegmentPlan =
    SegmentPlan { speed_mps: [CREEP_SPEED_MPS; 2], corridor_m: [f64::INFINITY; 2], after_end_sq: f64::INFINITY };

/// The speed and corridor profiles of a whole route's plan, with the braking envelope for one
/// acceleration limit.
#[derive(Debug, Clone, PartialEq)]
pub struct SpeedPlan {
    segments: Vec<SegmentPlan>,
    /// Planned driving time of each leg (speeds clamped to [`CREEP_SPEED_MPS`] and the top side
    /// speed), s.
    leg_time_s: Vec<f64>,
    accel_mps2: f64,
    max_side_speed_mps: f64,
}

/// One leg's speeds scaled by a factor (the margin search), with the envelope recomputed from a
/// place before the leg (where the simulation resumes) to the leg's end.
#[derive(Debug, Clone, PartialEq)]
pub struct ScaledLeg {
    leg: usize,
    /// First segment covered by `segments`.
    from: usize,
    segments: Vec<SegmentPlan>,
    time_s: f64,
}

/// The speed plan one simulation drives: a route's own, or with one leg scaled.
#[derive(Debug, Clone, Copy)]
pub struct SpeedView<'a> {
    base: &'a SpeedPlan,
    scaled: Option<&'a ScaledLeg>,
}

impl SpeedPlan {
    /// The profiles of `route` along its `plan` (built from it by [`PlanPath::new`]): each
    /// point's speed and corridor, the profile's `cruise_speed_mps` and `default_corridor_m`
    /// where a leg gives none.
    pub fn from_route(
        route: &Route,
        plan: &PlanPath,
        cruise_speed_mps: f64,
        default_corridor_m: f64,
        limits: &FollowerLimits,
    ) -> SpeedPlan {
        let segments = (0..plan.segment_count())
            .map(|j| {
                let leg_i = plan.segment_leg(j);
                let k = j.saturating_sub(plan.leg_point_range(leg_i).0);
                let leg = route.legs.get(leg_i);
                let v = |i: usize| leg.and_then(|l| l.speed_at_point(i)).unwrap_or(cruise_speed_mps);
                let c = |i: usize| leg.and_then(|l| l.corridor_at_point(i)).unwrap_or(default_corridor_m);
                SegmentPlan { speed_mps: [v(k), v(k + 1)], corridor_m: [c(k), c(k + 1)], after_end_sq: f64::INFINITY }
            })
            .collect();
        SpeedPlan::finish(plan, segments, limits)
    }

    /// One speed and one corridor per leg (for tools and tests).
    pub fn per_leg(plan: &PlanPath, speeds_mps: &[f64], corridors_m: &[f64], limits: &FollowerLimits) -> SpeedPlan {
        let segments = (0..plan.segment_count())
            .map(|j| {
                let leg = plan.segment_leg(j);
                let v = speeds_mps.get(leg).or(speeds_mps.last()).copied().unwrap_or(CREEP_SPEED_MPS);
                let c = corridors_m.get(leg).or(corridors_m.last()).copied().unwrap_or(f64::INFINITY);
                SegmentPlan { speed_mps: [v, v], corridor_m: [c, c], after_end_sq: f64::INFINITY }
            })
            .collect();
        SpeedPlan::finish(plan, segments, limits)
    }

    fn finish(plan: &PlanPath, mut segments: Vec<SegmentPlan>, limits: &FollowerLimits) -> SpeedPlan {
        let a = limits.max_side_accel_mps2;
        braking_pass(plan, &mut segments, 0, f64::INFINITY, a);
        let top = limits.max_side_speed_mps;
        let leg_time_s = (0..plan.leg_count()).map(|leg| leg_time(plan, &segments, 0, leg, 1.0, top)).collect();
        SpeedPlan { segments, leg_time_s, accel_mps2: a, max_side_speed_mps: top }
    }

    /// The route's own plan.
    pub fn view(&self) -> SpeedView<'_> {
        SpeedView { base: self, scaled: None }
    }

    /// The plan with `scaled` in place of its leg's own speeds.
    pub fn view_with<'a>(&'a self, scaled: &'a ScaledLeg) -> SpeedView<'a> {
        SpeedView { base: self, scaled: Some(scaled) }
    }

    /// Leg `leg`'s speeds times `factor`, the braking envelope recomputed from arc length
    /// `from_m` (where a simulation resumes; earlier segments keep the route's own envelope,
    /// which such a simulation never reads) to the leg's end. Allocates once; O(segments from
    /// `from_m` to the leg's end).
    pub fn scaled(&self, plan: &PlanPath, leg: usize, factor: f64, from_m: f64) -> ScaledLeg {
        let (first_point, last_point) = plan.leg_point_range(leg);
        let last = last_point.saturating_sub(1).min(self.segments.len().saturating_sub(1));
        let from = plan.segment_at_cursor(from_m, &mut Cursor::default()).min(first_point).min(last);
        let mut segments: Vec<SegmentPlan> = self.segments.get(from..=last).map(<[_]>::to_vec).unwrap_or_default();
        for (j, seg) in segments.iter_mut().enumerate() {
            if plan.segment_leg(from + j) == leg {
                seg.speed_mps = seg.speed_mps.map(|v| v * factor);
            }
        }
        let tail = self.segments.get(last).map_or(f64::INFINITY, |s| s.after_end_sq);
        braking_pass(plan, &mut segments, from, tail, self.accel_mps2);
        let time_s = leg_time(plan, &segments, from, leg, 1.0, self.max_side_speed_mps);
        ScaledLeg { leg, from, segments, time_s }
    }

    /// The largest planned speed of the route, m/s.
    pub fn max_speed_mps(&self) -> f64 {
        self.segments.iter().flat_map(|s| s.speed_mps).fold(0.0, f64::max)
    }

    /// The planned speed at plan point `point` as leg `leg` gives it (a boundary point has a
    /// value in each of its legs).
    pub fn speed_at_point(&self, plan: &PlanPath, leg: usize, point: usize) -> f64 {
        let (first, last) = plan.leg_point_range(leg);
        let seg = |j: usize| self.segments.get(j).unwrap_or(&FALLBACK);
        if point < last {
            seg(point.max(first)).speed_mps[0]
        } else {
            seg(last.saturating_sub(1)).speed_mps[1]
        }
    }

    /// The segments, in plan order.
    pub fn segments(&self) -> &[SegmentPlan] {
        &self.segments
    }
}

impl<'a> SpeedView<'a> {
    #[inline]
    fn segment(&self, i: usize) -> &'a SegmentPlan {
        if let Some(sc) = self.scaled {
            if let Some(seg) = i.checked_sub(sc.from).and_then(|k| sc.segments.get(k)) {
                return seg;
            }
        }
        let segs = &self.base.segments;
        segs.get(i).or(segs.last()).unwrap_or(&FALLBACK)
    }

    /// Target speed at distance `u_m` into segment `segment` of length `len_m`: the braking
    /// envelope, sqrt of the smallest v(s')^2 + 2 a (s' - s) over the plan ahead (module
    /// documentation). O(1).
    #[inline]
    pub fn target_mps(&self, segment: usize, u_m: f64, len_m: f64) -> f64 {
        let seg = self.segment(segment);
        let a = self.base.accel_mps2;
        let [v0, v1] = seg.speed_mps;
        let beyond = seg.after_end_sq + 2.0 * a * (len_m - u_m).max(0.0);
        segment_min_sq(v0, v1, len_m, u_m, a).min(beyond).max(0.0).sqrt()
    }

    /// Planned speed (without the envelope) at distance `u_m` into segment `segment`.
    #[inline]
    pub fn planned_mps(&self, segment: usize, u_m: f64, len_m: f64) -> f64 {
        let [v0, v1] = self.segment(segment).speed_mps;
        lerp(v0, v1, u_m, len_m)
    }

    /// Corridor at distance `u_m` into segment `segment`, linear between its ends.
    #[inline]
    pub fn corridor_m(&self, segment: usize, u_m: f64, len_m: f64) -> f64 {
        let [c0, c1] = self.segment(segment).corridor_m;
        lerp(c0, c1, u_m, len_m)
    }

    /// Corridor at arc length `s_m` of `plan`, found from `cursor` (O(1) for a walk along it).
    #[inline]
    pub fn corridor_at(&self, plan: &PlanPath, s_m: f64, cursor: &mut Cursor) -> f64 {
        let i = plan.segment_at_cursor(s_m, cursor);
        let (s0, s1) = plan.segment_bounds_m(i);
        self.corridor_m(i, s_m - s0, s1 - s0)
    }

    /// Planned driving time of leg `leg`, s (speeds clamped to [`CREEP_SPEED_MPS`] and the top
    /// side speed; linear in arc length between points, so each segment takes
    /// L ln(v1 / v0) / (v1 - v0)).
    pub fn leg_time_s(&self, leg: usize) -> f64 {
        match self.scaled {
            Some(sc) if sc.leg == leg => sc.time_s,
            _ => self.base.leg_time_s.get(leg).copied().unwrap_or(0.0),
        }
    }

    /// Planned driving time of the whole route, s.
    pub fn total_time_s(&self) -> f64 {
        (0..self.base.leg_time_s.len()).map(|leg| self.leg_time_s(leg)).sum()
    }

    /// The acceleration limit the envelope brakes at, m/s^2.
    pub fn accel_mps2(&self) -> f64 {
        self.base.accel_mps2
    }
}

#[inline]
fn lerp(a: f64, b: f64, u_m: f64, len_m: f64) -> f64 {
    if len_m > 0.0 {
        a + (b - a) * (u_m / len_m).clamp(0.0, 1.0)
    } else {
        a
    }
}

/// Smallest v(w)^2 + 2 a (w - u) over w in [u, len] for v linear from `v0` at 0 to `v1` at
/// `len_m`. The function is a convex quadratic in w, so the minimum is at an end or where its
/// derivative 2 v v' + 2 a vanishes, v(w) = -a / v' (a ramp down steeper than braking at the
/// start of the segment but not at its end).
#[inline]
fn segment_min_sq(v0: f64, v1: f64, len_m: f64, u_m: f64, a: f64) -> f64 {
    if len_m <= 0.0 {
        return v0.min(v1).powi(2);
    }
    let u = u_m.clamp(0.0, len_m);
    let slope = (v1 - v0) / len_m;
    let vu = v0 + slope * u;
    let mut m = (vu * vu).min(v1 * v1 + 2.0 * a * (len_m - u));
    if slope < 0.0 && a > 0.0 {
        let v_star = -a / slope;
        if v_star > v1 && v_star < vu {
            let w = u + (v_star - vu) / slope;
            m = m.min(v_star * v_star + 2.0 * a * (w - u));
        }
    }
    m
}

/// The backward pass of the braking envelope over `segments` (plan segments `from..`), with
/// `tail_sq` the envelope past the last of them.
fn braking_pass(plan: &PlanPath, segments: &mut [SegmentPlan], from: usize, tail_sq: f64, a: f64) {
    let mut after = tail_sq;
    for (k, seg) in segments.iter_mut().enumerate().rev() {
        let (s0, s1) = plan.segment_bounds_m(from + k);
        let len = s1 - s0;
        seg.after_end_sq = after;
        let [v0, v1] = seg.speed_mps;
        after = segment_min_sq(v0, v1, len, 0.0, a).min(after + 2.0 * a * len);
    }
}

/// Driving time of a segment of length `len_m` whose speed is linear from `v0_mps` to `v1_mps`:
/// the integral of ds / v(s), L ln(v1 / v0) / (v1 - v0) (L / v for a constant speed).
pub fn segment_time_s(len_m: f64, v0_mps: f64, v1_mps: f64) -> f64 {
    if (v1_mps - v0_mps).abs() <= 1e-9 * v0_mps.max(v1_mps) {
        len_m / (0.5 * (v0_mps + v1_mps))
    } else {
        len_m * (v1_mps / v0_mps).ln() / (v1_mps - v0_mps)
    }
}

/// A planned speed as driven for the time bound: at least the creep speed, at most the top
/// side speed.
pub fn driven_speed_mps(v_mps: f64, max_side_speed_mps: f64) -> f64 {
    v_mps.min(max_side_speed_mps).max(CREEP_SPEED_MPS)
}

/// Planned time of leg `leg` over `segments` (plan segments `from..`), speeds times `factor`.
fn leg_time(plan: &PlanPath, segments: &[SegmentPlan], from: usize, leg: usize, factor: f64, top: f64) -> f64 {
    let (first, last) = plan.leg_point_range(leg);
    (first..last)
        .filter_map(|j| {
            let seg = segments.get(j.checked_sub(from)?)?;
            let (s0, s1) = plan.segment_bounds_m(j);
            let [v0, v1] = seg.speed_mps.map(|v| driven_speed_mps(v * factor, top));
            Some(segment_time_s(s1 - s0, v0, v1))
        })
        .sum()
}

#[cfg(test)]
mod tests {
    use super::*;
    use approx::assert_relative_eq;

    fn limits(a: f64) -> FollowerLimits {
        FollowerLimits {
            lookahead_m: 1.5,
            dt_s: 0.05,
            max_yaw_rate_radps: 1.2,
            max_side_speed_mps: 3.0,
            max_side_accel_mps2: a,
            track_width_m: 0.9,
            max_lateral_accel_mps2: f64::INFINITY,
        }
    }

    /// The envelope by brute force: the smallest v(s')^2 + 2 a (s' - s) over a fine grid ahead,
    /// every segment sampled with its own end values (so a jump at a leg boundary counts).
    fn brute(plan: &PlanPath, sp: &SpeedPlan, s: f64, a: f64) -> f64 {
        let view = sp.view();
        let mut best = f64::INFINITY;
        for i in 0..plan.segment_count() {
            let (s0, s1) = plan.segment_bounds_m(i);
            if s1 < s {
                continue;
            }
            let from = s0.max(s);
            let n = 20_000;
            for k in 0..=n {
                let s2 = from + (s1 - from) * k as f64 / n as f64;
                let v = view.planned_mps(i, s2 - s0, s1 - s0);
                best = best.min(v * v + 2.0 * a * (s2 - s));
            }
        }
        best.sqrt()
    }

    #[test]
    fn the_envelope_is_the_smallest_braking_speed_over_the_plan_ahead() {
        // A ramp down from 2 to 0.5 m/s over 2 m (steeper than braking at 1 m/s^2 at its fast
        // end, gentler at its slow end, so the binding place is inside the segment), a slow
        // stretch, then a fast leg and a second, slower leg.
        let pts: Vec<[f64; 2]> = [0.0, 10.0, 12.0, 20.0, 30.0, 40.0].iter().map(|&x| [x, 0.0]).collect();
        let plan = PlanPath::from_parts(pts, &[0, 4], None);
        let mut route = Route {
            name: "r".into(),
            source: "r.csv".into(),
            origin: None,
            legs: vec![
                crate::route::Leg::new(
                    "a",
                    vec![[0.0, 0.0], [10.0, 0.0], [12.0, 0.0], [20.0, 0.0], [30.0, 0.0]],
                    crate::route::SourcePosition::Line(2),
                ),
                crate::route::Leg::new("a", vec![[30.0, 0.0], [40.0, 0.0]], crate::route::SourcePosition::Line(6)),
            ],
            warnings: Vec::new(),
        };
        route.legs[0].set_speed_profile(vec![2.0, 2.0, 0.5, 0.5, 2.5]);
        route.legs[1].speed_mps = Some(0.8);
        let a = 1.0;
        let sp = SpeedPlan::from_route(&route, &plan, 1.0, 0.5, &limits(a));
        let view = sp.view();
        for s in [0.0, 3.0, 7.5, 9.9, 10.0, 10.7, 11.5, 12.0, 19.0, 25.0, 29.9, 30.0, 35.0] {
            let i = plan.segment_at_cursor(s, &mut Cursor::default());
            let (s0, s1) = plan.segment_bounds_m(i);
            assert_relative_eq!(view.target_mps(i, s - s0, s1 - s0), brute(&plan, &sp, s, a), max_relative = 1e-6);
        }
        // Closed form at the ramp's start: its binding point has v = a / |v'| = 1 / 0.75 m/s, at
        // w = (2 - 4/3) / 0.75 = 8/9 m into it, so the target is sqrt(v^2 + 2 a w) < 2 m/s.
        let expected = ((4.0_f64 / 3.0).powi(2) + 2.0 * 8.0 / 9.0).sqrt();
        assert_relative_eq!(view.target_mps(1, 0.0, 2.0), expected, max_relative = 1e-12);
        assert!(expected < 1.9);
        // 1 m before the second leg (0.8 m/s, one value for the leg: a step at the boundary).
        assert_relative_eq!(view.target_mps(3, 9.0, 10.0), (0.64_f64 + 2.0).sqrt(), max_relative = 1e-12);
    }

    #[test]
    fn scaling_a_leg_rebuilds_the_envelope_before_it() {
        let pts: Vec<[f64; 2]> = (0..=4).map(|i| [10.0 * i as f64, 0.0]).collect();
        let plan = PlanPath::from_parts(pts, &[0, 2], None);
        let sp = SpeedPlan::per_leg(&plan, &[2.0, 1.5], &[0.5, 0.5], &limits(0.5));
        let scaled = sp.scaled(&plan, 1, 0.2, 12.0);
        let view = sp.view_with(&scaled);
        // Leg 1 at 0.3 m/s: 2 m before it the target is sqrt(0.09 + 2 x 0.5 x 2) (below 2 m/s).
        assert_relative_eq!(view.target_mps(1, 8.0, 10.0), (0.09_f64 + 2.0).sqrt(), max_relative = 1e-12);
        assert_relative_eq!(sp.view().target_mps(1, 8.0, 10.0), 2.0, max_relative = 1e-12);
        assert_relative_eq!(view.target_mps(2, 3.0, 10.0), 0.3, max_relative = 1e-12);
        // Times: 20 m at 2 m/s and 20 m at 0.3 m/s.
        assert_relative_eq!(view.leg_time_s(0), 10.0, max_relative = 1e-12);
        assert_relative_eq!(view.leg_time_s(1), 20.0 / 0.3, max_relative = 1e-12);
        assert_relative_eq!(sp.view().leg_time_s(1), 20.0 / 1.5, max_relative = 1e-12);
    }

    #[test]
    fn a_linear_ramp_takes_the_logarithmic_mean_time() {
        // Integral of ds / (v0 + (v1 - v0) s / L) = L ln(v1 / v0) / (v1 - v0) (calculus).
        assert_relative_eq!(segment_time_s(10.0, 0.5, 1.5), 10.0 * 3.0_f64.ln(), max_relative = 1e-12);
        assert_relative_eq!(segment_time_s(10.0, 2.0, 2.0), 5.0, max_relative = 1e-12);
        assert_relative_eq!(segment_time_s(10.0, 1.0, 1.0 + 1e-12), 10.0, max_relative = 1e-9);
    }
}

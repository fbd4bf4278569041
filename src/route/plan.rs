//! The plan as one polyline per route, in local metres, with arc length, leg boundaries and the
//! queries the follower and the assessment need: point at arc length, nearest point within a
//! window of arc length (so a loop's far side never counts), pure-pursuit goal search, and the
//! plan's curvature measured at a stated scale (docs/method.md, Plan curvature).
//!
//! All queries are allocation-free.

use super::Route;

mod curvature;

pub use curvature::{VertexCurvature, ARC_SAMPLE_MAX_SPACING_M, ARC_SAMPLE_MAX_TURN};

/// Most samples taken along one leg by the sampled queries (curvature, grade): 1e7, which is
/// 1000 km at the 0.1 m curvature spacing.
pub const MAX_SAMPLES_PER_LEG: f64 = 1e7;

/// A route's plan as one polyline. Leg boundaries are arc lengths; the boundary point is shared.
#[derive(Debug, Clone)]
pub struct PlanPath {
    points: Vec<[f64; 2]>,
    /// Arc length at each point, metres; `s_m[0] == 0`.
    s_m: Vec<f64>,
    /// Unit direction of each segment (zero for a zero-length segment).
    dir: Vec<[f64; 2]>,
    /// Leg of each segment.
    segment_leg: Vec<u32>,
    /// Arc length where each leg starts and ends.
    leg_bounds_m: Vec<(f64, f64)>,
    /// Altitude at each point when every leg carries it.
    altitude_m: Option<Vec<f64>>,
    /// Cross slope at each point (tangent, positive when the ground is higher on the left) when
    /// every leg carries it (from an elevation raster).
    cross_slope: Option<Vec<f64>>,
    /// Index of each leg's first point.
    leg_first_point: Vec<usize>,
    /// Signed curvature each segment bends with when the plan's curvature is read
    /// (docs/method.md, Plan curvature).
    bend_per_m: Vec<f64>,
    /// A circle around the points of every block of [`BLOCK_SEGMENTS`] segments: the window
    /// searches skip a block that cannot hold their answer, so a dense plan costs them O(1)
    /// segments per query instead of one per point in the window.
    blocks: Vec<BlockBound>,
    /// Sum of the absolute turning angles at points `1..=i`, rad (0 at the first point; pi for a
    /// turn next to a zero-length segment): the directions of segments `first..=last` lie within
    /// `turn_sum_rad[last] - turn_sum_rad[first]` of one another, which bounds how close two far
    /// apart points of that stretch can be (see [`PlanPath::nearest_near_seed`]).
    turn_sum_rad: Vec<f64>,
    /// The planner's own vertices, when points were added after reading (map cuts, raster
    /// spacing): the plan's curvature is read on them alone (docs/method.md, Plan curvature).
    own: Option<OwnVertices>,
}

/// The plan through the planner's own vertices only, and where each is in the full plan.
#[derive(Debug, Clone)]
struct OwnVertices {
    /// Index in the full plan of each own vertex.
    index: Vec<usize>,
    plan: Box<PlanPath>,
}

/// Segments per block of [`PlanPath`]'s bounding circles.
const BLOCK_SEGMENTS: usize = 4;

/// Slack, metres, by which a bounding circle must clear a query before its block is skipped, far
/// above the rounding of the per-segment arithmetic, so skipping never changes an answer.
const BLOCK_SLACK_M: f64 = 1e-6;

/// The nearest segment a window search has found so far: its squared distance, the arc length
/// and side of its nearest point, and its index (ties go to the earliest segment, as in a scan
/// of the window in order).
#[derive(Debug, Clone, Copy)]
struct Best {
    d2: f64,
    s_m: f64,
    side: f64,
    segment: usize,
}

impl Best {
    /// Takes segment `i`'s measurement when it is nearer, or as near and earlier; says whether
    /// it did.
    #[inline(always)]
    fn offer(&mut self, i: usize, measured: Option<(f64, f64, f64)>) -> bool {
        match measured {
            Some((d2, s_m, side)) if d2 < self.d2 || (d2 == self.d2 && i < self.segment) => {
                *self = Best { d2, s_m, side, segment: i };
                true
            }
            _ => false,
        }
    }

    #[inline(always)]
    fn nearest(&self) -> Nearest {
        Nearest::new(self.d2, self.s_m, self.side)
    }
}

/// Smallest `1 - theta^2 / 8` (the lower bound of `cos(theta / 2)` for a window whose segment
/// directions spread over `theta`) for which [`PlanPath::nearest_near_seed`] is tried: a window
/// turning by more than about 115 degrees is searched by blocks.
const NEAR_SEED_MIN_SPREAD: f64 = 0.5;

/// Largest reach of [`PlanPath::nearest_near_seed`] as a share of the window's length: beyond
/// it the block search measures fewer segments.
const NEAR_SEED_MAX_REACH_SHARE: f64 = 0.25;

/// The running sums of the absolute turning angle at each point, given the unit direction of
/// every segment (see `PlanPath::turn_sum_rad`): 0 at the first point, at an inner point a bound
/// of the angle between the directions of the segments on either side, nothing added at the
/// last. The bound is `2 tan(theta / 2) = 2 |cross| / (1 + dot)` (at least theta, and above it
/// by about theta^3 / 12: no arc tangent), at most pi, and pi next to a zero-length segment.
fn turn_sums(dir: &[[f64; 2]]) -> Vec<f64> {
    use std::f64::consts::PI;
    let mut sums = Vec::with_capacity(dir.len() + 1);
    let mut sum = 0.0;
    sums.push(sum);
    for w in dir.windows(2) {
        let (a, b) = (w[0], w[1]);
        let zero = |d: [f64; 2]| d[0] == 0.0 && d[1] == 0.0;
        let (cross, dot) = (a[0] * b[1] - a[1] * b[0], a[0] * b[0] + a[1] * b[1]);
        let turn = 2.0 * cross.abs() / (1.0 + dot);
        // Also pi for a reversal (1 + dot = 0: infinite or NaN).
        sum += if zero(a) || zero(b) || turn.is_nan() || turn >= PI { PI } else { turn };
        sums.push(sum);
    }
    if !dir.is_empty() {
        sums.push(sum);
    }
    sums
}

/// A circle holding every point of a block of segments (so every point between them).
#[derive(Debug, Clone, Copy, PartialEq)]
struct BlockBound {
    centre: [f64; 2],
    radius_m: f64,
}

impl BlockBound {
    /// The bounding circle of `points` (the centre of their bounding box).
    fn around(points: &[[f64; 2]]) -> BlockBound {
        let (mut lo, mut hi) = ([f64::INFINITY; 2], [f64::NEG_INFINITY; 2]);
        for p in points {
            for k in 0..2 {
                lo[k] = lo[k].min(p[k]);
                hi[k] = hi[k].max(p[k]);
            }
        }
        let centre = [0.5 * (lo[0] + hi[0]), 0.5 * (lo[1] + hi[1])];
        let radius_m = points.iter().map(|&p| dist(p, centre)).fold(0.0, f64::max);
        BlockBound { centre, radius_m }
    }

    /// Squared distance from `p` to the centre (the block tests compare squares: no root).
    #[inline]
    fn centre_distance2_m2(&self, p: [f64; 2]) -> f64 {
        let (dx, dy) = (p[0] - self.centre[0], p[1] - self.centre[1]);
        dx * dx + dy * dy
    }
}

/// A remembered segment index that makes repeated queries near the same place cheap: the
/// search walks from it instead of bisecting the whole plan. Results never depend on it.
#[derive(Debug, Clone, Copy, Default, PartialEq, Eq)]
pub struct Cursor {
    segment: usize,
}

impl Cursor {
    /// The segment the cursor is at.
    pub fn segment(&self) -> usize {
        self.segment
    }
}

/// The nearest point of the plan to a query point.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Nearest {
    pub s_m: f64,
    pub distance_m: f64,
    /// Positive when the query point lies left of the plan's direction.
    pub signed_offset_m: f64,
}

impl Nearest {
    /// From the squared distance, the arc length and the side (>= 0: left).
    #[inline(always)]
    fn new(distance2_m2: f64, s_m: f64, side: f64) -> Nearest {
        let distance_m = distance2_m2.sqrt();
        Nearest { s_m, distance_m, signed_offset_m: if side >= 0.0 { distance_m } else { -distance_m } }
    }
}

impl PlanPath {
    /// Joins the legs of a route (a leg's first point replaces the previous leg's last point,
    /// which the reader has checked lies within the join tolerance).
    pub fn new(route: &Route) -> PlanPath {
        let mut points: Vec<[f64; 2]> = Vec::new();
        let mut alt: Vec<f64> = Vec::new();
        let mut cross: Vec<f64> = Vec::new();
        let has_alt = route.legs.iter().all(|l| l.altitude_m.is_some());
        let has_cross = route.legs.iter().all(|l| l.cross_slope.is_some());
        let mut leg_first_index = Vec::with_capacity(route.legs.len());
        let mut added: Vec<bool> = Vec::new();
        let any_added = route.legs.iter().any(|l| l.added_points.is_some());
        for leg in &route.legs {
            // A boundary point was added when either leg says so (a map cut adds it to both).
            let mut boundary_added = false;
            if !points.is_empty() {
                points.pop();
                alt.pop();
                cross.pop();
                boundary_added = added.pop().unwrap_or(false);
            }
            if any_added {
                let first = added.len();
                added.extend(
                    (0..leg.points.len())
                        .map(|i| leg.added_points.as_ref().and_then(|a| a.get(i).copied()).unwrap_or(false)),
                );
                if let Some(a) = added.get_mut(first) {
                    *a |= boundary_added;
                }
            }
            leg_first_index.push(points.len());
            points.extend_from_slice(&leg.points);
            if let Some(a) = &leg.altitude_m {
                alt.extend_from_slice(a);
            }
            if let Some(c) = &leg.cross_slope {
                cross.extend_from_slice(c);
            }
        }
        Self::from_parts(points, &leg_first_index, has_alt.then_some(alt))
            .with_cross_slope(has_cross.then_some(cross))
            .with_added_points(any_added.then_some(added))
    }

    /// This plan with the points marked in `added` (one flag per point) taken as added after
    /// reading: its curvature is then read on the other points, the planner's own vertices
    /// (the two ends always count as own). Ignored unless it has one flag per point.
    pub fn with_added_points(mut self, added: Option<Vec<bool>>) -> PlanPath {
        let n = self.points.len();
        let Some(added) = added.filter(|a| a.len() == n && a.iter().any(|&x| x)) else { return self };
        let index: Vec<usize> = (0..n).filter(|&i| i == 0 || i + 1 == n || !added[i]).collect();
        let points = index.iter().map(|&i| self.points[i]).collect();
        let plan = Box::new(PlanPath::from_parts(points, &[0], None));
        self.own = Some(OwnVertices { index, plan });
        self
    }

    /// This plan with a cross slope at every point (tangent, positive when the ground is higher
    /// on the left); ignored unless it has one value per point.
    pub fn with_cross_slope(mut self, cross_slope: Option<Vec<f64>>) -> PlanPath {
        self.cross_slope = cross_slope.filter(|c| c.len() == self.points.len());
        self
    }

    /// A plan from raw points and the index of each leg's first point (for tests and tools).
    pub fn from_parts(points: Vec<[f64; 2]>, leg_first_index: &[usize], altitude_m: Option<Vec<f64>>) -> PlanPath {
        let mut s_m = Vec::with_capacity(points.len());
        let mut s = 0.0;
        for (i, p) in points.iter().enumerate() {
            if i > 0 {
                s += dist(points[i - 1], *p);
            }
            s_m.push(s);
        }
        let total = s;
        let leg_bounds_m = leg_first_index
            .iter()
            .enumerate()
            .map(|(k, &i)| {
                let start = s_m.get(i).copied().unwrap_or(total);
                let end = leg_first_index.get(k + 1).and_then(|&j| s_m.get(j).copied()).unwrap_or(total);
                (start, end)
            })
            .collect();
        let dir: Vec<[f64; 2]> = points
            .windows(2)
            .map(|w| {
                let len = dist(w[0], w[1]);
                if len > 0.0 {
                    [(w[1][0] - w[0][0]) / len, (w[1][1] - w[0][1]) / len]
                } else {
                    [0.0, 0.0]
                }
            })
            .collect();
        let turn_sum_rad = turn_sums(&dir);
        let segment_leg = (0..points.len().saturating_sub(1))
            .map(|i| leg_first_index.partition_point(|&first| first <= i).saturating_sub(1) as u32)
            .collect();
        let bend_per_m = curvature::segment_bends(&points);
        let leg_first_point = leg_first_index.to_vec();
        let altitude_m = altitude_m.filter(|a| a.len() == points.len());
        let blocks = (0..points.len().saturating_sub(1).div_ceil(BLOCK_SEGMENTS))
            .map(|b| {
                let first = b * BLOCK_SEGMENTS;
                BlockBound::around(&points[first..(first + BLOCK_SEGMENTS + 1).min(points.len())])
            })
            .collect();
        PlanPath {
            points,
            s_m,
            dir,
            segment_leg,
            leg_bounds_m,
            altitude_m,
            cross_slope: None,
            leg_first_point,
            bend_per_m,
            blocks,
            turn_sum_rad,
            own: None,
        }
    }

    pub fn length_m(&self) -> f64 {
        self.s_m.last().copied().unwrap_or(0.0)
    }

    pub fn points(&self) -> &[[f64; 2]] {
        &self.points
    }

    pub fn leg_count(&self) -> usize {
        self.leg_bounds_m.len()
    }

    /// (start, end) arc length of leg `leg`.
    pub fn leg_bounds_m(&self, leg: usize) -> (f64, f64) {
        self.leg_bounds_m[leg]
    }

    /// Number of segments (points less one).
    pub fn segment_count(&self) -> usize {
        self.points.len().saturating_sub(1)
    }

    /// The leg segment `segment` belongs to.
    pub fn segment_leg(&self, segment: usize) -> usize {
        self.segment_leg.get(segment).map_or(0, |&l| l as usize)
    }

    /// (start, end) arc length of segment `segment` (joining points `segment` and
    /// `segment + 1`).
    #[inline]
    pub fn segment_bounds_m(&self, segment: usize) -> (f64, f64) {
        let i = segment.min(self.points.len().saturating_sub(2));
        (self.s_m.get(i).copied().unwrap_or(0.0), self.s_m.get(i + 1).copied().unwrap_or(0.0))
    }

    /// Indices of the first and last plan points of leg `leg` (the last is the next leg's first).
    pub fn leg_point_range(&self, leg: usize) -> (usize, usize) {
        let last_point = self.points.len().saturating_sub(1);
        let first = self.leg_first_point.get(leg).copied().unwrap_or(0).min(last_point);
        (first, self.leg_first_point.get(leg + 1).copied().unwrap_or(last_point).min(last_point))
    }

    /// Arc length of point `i`.
    pub fn point_s_m(&self, i: usize) -> f64 {
        self.s_m.get(i).copied().unwrap_or_else(|| self.length_m())
    }

    /// The segment containing arc length `s_m`, found from a cursor near it (a few steps when
    /// `s_m` moves little between calls, as the follower's progress does); the cursor moves to it.
    #[inline]
    pub fn segment_at_cursor(&self, s_m: f64, cursor: &mut Cursor) -> usize {
        cursor.segment = self.segment_from(s_m, cursor.segment);
        cursor.segment
    }

    /// The leg containing arc length `s_m` (a boundary belongs to the leg it starts).
    pub fn leg_at(&self, s_m: f64) -> usize {
        let n = self.leg_bounds_m.len();
        let i = self.leg_bounds_m.partition_point(|&(start, _)| start <= s_m);
        i.saturating_sub(1).min(n.saturating_sub(1))
    }

    /// The leg containing arc length `s_m`, found from a cursor near it (same result as
    /// [`PlanPath::leg_at`]); the cursor moves to the segment of `s_m`.
    #[inline]
    pub fn leg_at_cursor(&self, s_m: f64, cursor: &mut Cursor) -> usize {
        cursor.segment = self.segment_from(s_m, cursor.segment);
        self.segment_leg.get(cursor.segment).map_or(0, |&l| l as usize)
    }

    /// Index of the segment containing arc length `s_m` (clamped to the path).
    #[inline]
    fn segment_at(&self, s_m: f64) -> usize {
        let i = self.s_m.partition_point(|&s| s <= s_m);
        i.saturating_sub(1).min(self.points.len().saturating_sub(2))
    }

    /// Same result as `segment_at`, found from `hint` by a galloping search (steps of 1, 2, 4,
    /// ... then bisection inside the bracket): O(log d) for an answer d segments from the hint,
    /// so a window search costs the same on a dense plan as on a sparse one.
    #[inline(always)]
    fn segment_from(&self, s_m: f64, hint: usize) -> usize {
        // The common case inline (the answer is the hint: a walk along the plan), the search out
        // of line.
        let last = self.points.len().saturating_sub(2);
        let i = hint.min(last);
        if self.s_m.get(i).is_some_and(|&s_i| s_m >= s_i) {
            // Forward a few segments by a scan (the end of a lookahead window): the last segment
            // starting at or before `s_m`, as the search gives it.
            for j in i..i + 8 {
                if j >= last || self.s_m.get(j + 1).is_none_or(|&s_j| s_m < s_j) {
                    return j;
                }
            }
        }
        self.segment_search(s_m, hint)
    }

    /// The search of [`PlanPath::segment_from`].
    #[inline(never)]
    fn segment_search(&self, s_m: f64, hint: usize) -> usize {
        let last = self.points.len().saturating_sub(2);
        let i = hint.min(last);
        if s_m.is_nan() {
            return i;
        }
        if s_m < self.s_m[i] {
            if i == 0 {
                return 0;
            }
            // Gallop back to a point at or before `s_m` (or the first point).
            let (mut hi, mut step) = (i, 1);
            let lo = loop {
                let lo = hi.saturating_sub(step);
                if lo == 0 || self.s_m[lo] <= s_m {
                    break lo;
                }
                hi = lo;
                step *= 2;
            };
            let k = self.s_m[lo..hi].partition_point(|&x| x <= s_m);
            return (lo + k).saturating_sub(1);
        }
        if i >= last || s_m < self.s_m[i + 1] {
            return i;
        }
        // Gallop forward to a point beyond `s_m` (or past the last segment).
        let (mut lo, mut step) = (i + 1, 1);
        let hi = loop {
            let hi = lo + step;
            if hi > last {
                break last + 1;
            }
            if self.s_m[hi] > s_m {
                break hi;
            }
            lo = hi;
            step *= 2;
        };
        let k = self.s_m[lo..hi].partition_point(|&x| x <= s_m);
        (lo + k).saturating_sub(1).max(lo.min(last))
    }

    /// Point at arc length `s_m`, clamped to the ends.
    #[inline]
    pub fn point_at(&self, s_m: f64) -> [f64; 2] {
        let i = self.segment_at(s_m);
        self.point_on_segment(i, s_m)
    }

    #[inline]
    fn point_on_segment(&self, i: usize, s_m: f64) -> [f64; 2] {
        let (a, b) = (self.points[i], self.points[i + 1]);
        let len = self.s_m[i + 1] - self.s_m[i];
        let t = if len > 0.0 { ((s_m - self.s_m[i]) / len).clamp(0.0, 1.0) } else { 0.0 };
        [a[0] + t * (b[0] - a[0]), a[1] + t * (b[1] - a[1])]
    }

    /// Unit direction of the plan at arc length `s_m`.
    pub fn direction_at(&self, s_m: f64) -> [f64; 2] {
        let i = self.segment_at(s_m);
        let (a, b) = (self.points[i], self.points[i + 1]);
        let len = dist(a, b).max(1e-12);
        [(b[0] - a[0]) / len, (b[1] - a[1]) / len]
    }

    /// Altitude at arc length `s_m`, when the plan has altitude.
    pub fn altitude_at(&self, s_m: f64) -> Option<f64> {
        let alt = self.altitude_m.as_ref()?;
        let i = self.segment_at(s_m);
        let len = self.s_m[i + 1] - self.s_m[i];
        let t = if len > 0.0 { ((s_m - self.s_m[i]) / len).clamp(0.0, 1.0) } else { 0.0 };
        Some(alt[i] + t * (alt[i + 1] - alt[i]))
    }

    /// Grade of the plan at arc length `s_m`, rad, positive uphill: the altitude change over the
    /// metre around `s_m` (0 without altitude).
    pub fn grade_at(&self, s_m: f64) -> f64 {
        let (a, b) = ((s_m - 0.5).max(0.0), (s_m + 0.5).min(self.length_m()));
        match (self.altitude_at(a), self.altitude_at(b)) {
            (Some(za), Some(zb)) if b > a => (zb - za).atan2(b - a),
            _ => 0.0,
        }
    }

    pub fn has_altitude(&self) -> bool {
        self.altitude_m.is_some()
    }

    /// Cross slope at arc length `s_m` (tangent, positive when the ground is higher on the left
    /// of the plan's direction), linear between points; 0 without cross slopes.
    pub fn cross_slope_at(&self, s_m: f64) -> f64 {
        let i = self.segment_at(s_m);
        self.value_on_segment(self.cross_slope.as_deref(), i, s_m)
    }

    pub fn has_cross_slope(&self) -> bool {
        self.cross_slope.is_some()
    }

    /// Grade (rad, as [`PlanPath::grade_at`]) and cross slope (as [`PlanPath::cross_slope_at`])
    /// at arc length `s_m`, found from a cursor near it: O(1) for a progress point that moves a
    /// little between calls. Same values as the two plain queries.
    #[inline]
    pub fn slope_at_cursor(&self, s_m: f64, cursor: &mut Cursor) -> (f64, f64) {
        // A level plan (no altitude, no cross slope) needs no lookup.
        if self.altitude_m.is_none() && self.cross_slope.is_none() {
            return (0.0, 0.0);
        }
        let hint = cursor.segment;
        let i = self.segment_at_cursor(s_m, cursor);
        let cross = self.value_on_segment(self.cross_slope.as_deref(), i, s_m);
        let Some(alt) = self.altitude_m.as_deref() else { return (0.0, cross) };
        let (a, b) = ((s_m - 0.5).max(0.0), (s_m + 0.5).min(self.length_m()));
        if b <= a {
            return (0.0, cross);
        }
        let za = self.value_on_segment(Some(alt), self.segment_from(a, hint.min(i)), a);
        let zb = self.value_on_segment(Some(alt), self.segment_from(b, i), b);
        ((zb - za).atan2(b - a), cross)
    }

    /// A per-point value at arc length `s_m` on segment `i`, linear between its ends (0 without
    /// values).
    #[inline]
    fn value_on_segment(&self, values: Option<&[f64]>, i: usize, s_m: f64) -> f64 {
        let Some(v) = values else { return 0.0 };
        let (Some(&v0), Some(&v1), Some(&s0), Some(&s1)) =
            (v.get(i), v.get(i + 1), self.s_m.get(i), self.s_m.get(i + 1))
        else {
            return v.first().copied().unwrap_or(0.0);
        };
        let len = s1 - s0;
        let t = if len > 0.0 { ((s_m - s0) / len).clamp(0.0, 1.0) } else { 0.0 };
        v0 + t * (v1 - v0)
    }

    /// The terrain under a contact patch `contact_length_m` long centred at arc length `s_m`
    /// (docs/method.md, Following: terrain changes): the legs under its rear and front ends and
    /// the share of the patch on the front one. A leg shorter than the patch between two others
    /// is skipped (the patch is split between the legs under its ends).
    #[inline]
    pub fn terrain_share(&self, s_m: f64, contact_length_m: f64) -> TerrainShare {
        let half = 0.5 * contact_length_m.max(0.0);
        let rear = self.leg_at((s_m - half).max(0.0));
        let front = self.leg_at(s_m + half);
        if front == rear || half <= 0.0 {
            return TerrainShare { rear, front: rear, front_share: 0.0 };
        }
        let boundary_m = self.leg_bounds_m[front].0;
        let front_share = ((s_m + half - boundary_m) / (2.0 * half)).clamp(0.0, 1.0);
        TerrainShare { rear, front, front_share }
    }

    /// Arc length of the point of segment `segment` (joining points `segment` and `segment + 1`)
    /// nearest to `p`.
    #[inline]
    pub fn arc_length_on_segment(&self, segment: usize, p: [f64; 2]) -> f64 {
        let i = segment.min(self.points.len().saturating_sub(2));
        if self.points.len() < 2 {
            return 0.0;
        }
        let (a, d) = (self.points[i], self.dir[i]);
        let along = (p[0] - a[0]) * d[0] + (p[1] - a[1]) * d[1];
        self.s_m[i] + along.clamp(0.0, self.s_m[i + 1] - self.s_m[i])
    }

    /// Nearest point of the plan to `p` among the parts with arc length in `[from_m, to_m]`.
    #[inline]
    pub fn nearest_within(&self, p: [f64; 2], from_m: f64, to_m: f64) -> Nearest {
        let mut cursor = Cursor { segment: self.segment_at(from_m) };
        self.nearest_within_at(p, from_m, to_m, &mut cursor)
    }

    /// [`PlanPath::nearest_within`] with a cursor, which is moved to the segment of `from_m`.
    /// Long windows start from the segment the cursor was at and skip every block of segments
    /// whose bounding circle lies farther than the best point found so far; ties go to the
    /// earliest segment, so the answer is the one a scan of every segment in order gives.
    #[inline(always)]
    pub fn nearest_within_at(&self, p: [f64; 2], from_m: f64, to_m: f64, cursor: &mut Cursor) -> Nearest {
        let hint = cursor.segment;
        let first = self.segment_from(from_m, cursor.segment);
        cursor.segment = first;
        let last = self.segment_from(to_m, first);
        self.nearest_between(p, from_m, to_m, hint, first, last)
    }

    /// [`PlanPath::nearest_within`] for a window whose ends are walked by two cursors (each moved
    /// to the segment of its end), the search starting from segment `seed` (a segment near the
    /// answer, such as the previous one's). Same answer as [`PlanPath::nearest_within`].
    #[inline(always)]
    pub fn nearest_in_window(
        &self,
        p: [f64; 2],
        from_m: f64,
        to_m: f64,
        seed: usize,
        from_cursor: &mut Cursor,
        to_cursor: &mut Cursor,
    ) -> Nearest {
        let first = self.segment_from(from_m, from_cursor.segment);
        from_cursor.segment = first;
        let last = self.segment_from(to_m, to_cursor.segment.max(first));
        to_cursor.segment = last;
        self.nearest_between(p, from_m, to_m, seed, first, last)
    }

    /// The search of the window `[from_m, to_m]`, segments `first..=last`, from `hint`.
    #[inline(always)]
    fn nearest_between(&self, p: [f64; 2], from_m: f64, to_m: f64, hint: usize, first: usize, last: usize) -> Nearest {
        if last > first {
            if let Some(near) = self.nearest_near_seed(p, from_m, to_m, hint, first, last) {
                return near;
            }
        }
        if last >= first + BLOCK_SEGMENTS {
            return self.nearest_in_blocks(p, from_m, to_m, hint, first, last);
        }
        let (mut best_d2, mut best_s, mut best_side) = (f64::INFINITY, from_m, 0.0);
        for i in first..=last {
            if let Some((d2, s, side)) = self.segment_distance(p, i, from_m, to_m) {
                if d2 < best_d2 {
                    (best_d2, best_s, best_side) = (d2, s, side);
                }
            }
        }
        Nearest::new(best_d2, best_s, best_side)
    }

    /// The window search measuring only the segments near the seed, when a bound proves that no
    /// other segment of the window can hold the answer; `None` when it cannot (then the window is
    /// searched by blocks). The answer is the one a scan of every segment in order gives.
    ///
    /// The bound: the directions of the window's segments lie within an angle `theta` of one
    /// another (the turning summed over the window), so two of its points `a` apart along the
    /// plan are at least `a cos(theta / 2)` apart in the plane (each step along the plan advances
    /// at least `cos(theta / 2)` along the middle direction), and `cos(x) >= 1 - x^2 / 2`. With
    /// `q` the seed's nearest point at distance `d` from `p`, every point at least
    /// `r = (2 d + slack) / (1 - theta^2 / 8)` from `q` along the plan is, by the triangle
    /// inequality, farther than `d` from `p` by the slack: only the segments within `r` of `q`
    /// are measured. A vehicle near the plan (small `d`) measures one or two segments a query.
    /// The plan's end segments measure only the lateral offset beyond the ends, which the bound
    /// does not cover: windows holding them are left to the block search.
    #[inline(always)]
    fn nearest_near_seed(
        &self,
        p: [f64; 2],
        from_m: f64,
        to_m: f64,
        hint: usize,
        first: usize,
        last: usize,
    ) -> Option<Nearest> {
        let end_segment = self.points.len().checked_sub(2)?;
        if first == 0 || last >= end_segment {
            return None;
        }
        let theta = self.turn_sum_rad.get(last)? - self.turn_sum_rad.get(first)?;
        let spread = 1.0 - theta * theta / 8.0;
        if spread.is_nan() || spread < NEAR_SEED_MIN_SPREAD {
            return None;
        }
        let seed = hint.clamp(first, last);
        let (seed_d2, seed_s, seed_side) = self.segment_distance(p, seed, from_m, to_m)?;
        let reach_m = (2.0 * seed_d2.sqrt() + BLOCK_SLACK_M) / spread;
        // Measuring most of the window this way costs more than the blocks (and a query that is
        // not a number is left to them too).
        if reach_m.is_nan() || reach_m > NEAR_SEED_MAX_REACH_SHARE * (to_m - from_m) {
            return None;
        }
        let (lo_m, hi_m) = (seed_s - reach_m, seed_s + reach_m);
        let mut best = Best { d2: seed_d2, s_m: seed_s, side: seed_side, segment: seed };
        // Back while the segment before reaches past `lo_m` (it ends where this one starts).
        let mut i = seed;
        while i > first && self.s_m[i] > lo_m {
            i -= 1;
            best.offer(i, self.window_distance(p, i, (first, last), from_m, to_m));
        }
        // Ahead while the next segment starts before `hi_m`.
        let mut j = seed;
        while j < last && self.s_m[j + 1] < hi_m {
            j += 1;
            best.offer(j, self.window_distance(p, j, (first, last), from_m, to_m));
        }
        Some(best.nearest())
    }

    /// [`PlanPath::segment_distance`] of segment `i` of the window `[from_m, to_m]` whose
    /// segments are `first..=last`: the plain arithmetic of [`PlanPath::interior_distance`]
    /// strictly inside it.
    #[inline(always)]
    fn window_distance(
        &self,
        p: [f64; 2],
        i: usize,
        (first, last): (usize, usize),
        from_m: f64,
        to_m: f64,
    ) -> Option<(f64, f64, f64)> {
        if i == first || i == last {
            self.segment_distance(p, i, from_m, to_m)
        } else {
            self.interior_distance(p, i)
        }
    }

    /// The long-window search of [`PlanPath::nearest_within_at`], segments `first..=last`.
    #[inline(never)]
    fn nearest_in_blocks(
        &self,
        p: [f64; 2],
        from_m: f64,
        to_m: f64,
        hint: usize,
        first: usize,
        last: usize,
    ) -> Nearest {
        let mut best = Best { d2: f64::INFINITY, s_m: from_m, side: 0.0, segment: usize::MAX };
        {
            let seed = hint.clamp(first, last);
            if let Some((d2, s_m, side)) = self.segment_distance(p, seed, from_m, to_m) {
                best = Best { d2, s_m, side, segment: seed };
            }
            let mut best_m = best.d2.sqrt();
            let end_segment = self.points.len().saturating_sub(2);
            for b in first / BLOCK_SEGMENTS..last / BLOCK_SEGMENTS + 1 {
                let (lo, hi) = (b * BLOCK_SEGMENTS, b * BLOCK_SEGMENTS + BLOCK_SEGMENTS - 1);
                // The end segments measure only the lateral offset beyond the plan's ends, which
                // the circle does not bound: their blocks are always searched.
                if lo > 0 && hi < end_segment {
                    if let Some(block) = self.blocks.get(b) {
                        // Every point of the block is farther than the best by the slack.
                        let reach_m = block.radius_m + BLOCK_SLACK_M + best_m;
                        if block.centre_distance2_m2(p) > reach_m * reach_m {
                            continue;
                        }
                    }
                }
                for i in lo.max(first)..hi.min(last) + 1 {
                    if i == seed {
                        continue;
                    }
                    if best.offer(i, self.window_distance(p, i, (first, last), from_m, to_m)) {
                        best_m = best.d2.sqrt();
                    }
                }
            }
        }
        best.nearest()
    }

    /// Squared distance from `p` to the part of segment `i` with arc length in `[from_m, to_m]`,
    /// the arc length of the nearest point there and the signed lateral offset; `None` for a
    /// zero-length segment or one outside the window.
    #[inline(always)]
    fn segment_distance(&self, p: [f64; 2], i: usize, from_m: f64, to_m: f64) -> Option<(f64, f64, f64)> {
        let (s_i, s_j) = (self.s_m[i], self.s_m[i + 1]);
        let (s0, s1) = (s_i.max(from_m), s_j.min(to_m));
        if s_j <= s_i || s1 < s0 {
            return None;
        }
        let (a, d) = (self.points[i], self.dir[i]);
        let (px, py) = (p[0] - a[0], p[1] - a[1]);
        let along = px * d[0] + py * d[1];
        let lateral = d[0] * py - d[1] * px;
        let raw_s = s_i + along;
        let s = raw_s.clamp(s0, s1);
        // Before the start or past the end of the plan only the lateral offset counts (the
        // plan's end lines extend straight), so overshooting the end is not a deviation.
        let off_ends =
            (i == 0 && raw_s < 0.0 && s0 <= 0.0) || (i + 2 == self.points.len() && raw_s > s1 && s1 >= self.length_m());
        let gap = if off_ends { 0.0 } else { raw_s - s };
        Some((lateral * lateral + gap * gap, s, lateral))
    }

    /// [`PlanPath::segment_distance`] of a segment strictly between the first and last segment
    /// of the window: it lies wholly inside the window and is at neither end of the plan, so the
    /// window's clamps and the end rules change nothing, and this is the same arithmetic without
    /// them.
    #[inline(always)]
    fn interior_distance(&self, p: [f64; 2], i: usize) -> Option<(f64, f64, f64)> {
        let (Some(&[s_i, s_j]), Some(&a), Some(&d)) =
            (self.s_m.get(i..i + 2).and_then(|w| <&[f64; 2]>::try_from(w).ok()), self.points.get(i), self.dir.get(i))
        else {
            return None;
        };
        if s_j <= s_i {
            return None;
        }
        let (px, py) = (p[0] - a[0], p[1] - a[1]);
        let along = px * d[0] + py * d[1];
        let lateral = d[0] * py - d[1] * px;
        let raw_s = s_i + along;
        let s = raw_s.clamp(s_i, s_j);
        let gap = raw_s - s;
        Some((lateral * lateral + gap * gap, s, lateral))
    }

    /// The pure-pursuit goal: the first point of the plan beyond arc length `from_m` that lies at
    /// Euclidean distance `lookahead_m` from `p`, searched up to `from_m + search_m`. When the
    /// vehicle is farther than the lookahead from the plan, no such point exists and the goal is
    /// the point `lookahead_m` ahead of the progress point; past the end it is the end point.
    #[inline]
    pub fn pursuit_goal(&self, p: [f64; 2], from_m: f64, lookahead_m: f64, search_m: f64) -> [f64; 2] {
        let cursor = Cursor { segment: self.segment_at(from_m) };
        let mut walk = GoalCursors { inside: cursor, reach: cursor };
        self.pursuit_goal_within(p, from_m, lookahead_m, search_m, cursor, &mut walk)
    }

    /// [`PlanPath::pursuit_goal`] searching from a cursor near `from_m`, with the cursors of
    /// `walk` (see [`GoalCursors`]) moved to their segments (the follower walks them along).
    /// Same answer.
    #[inline]
    pub fn pursuit_goal_within(
        &self,
        p: [f64; 2],
        from_m: f64,
        lookahead_m: f64,
        search_m: f64,
        cursor: Cursor,
        walk: &mut GoalCursors,
    ) -> [f64; 2] {
        let total = self.length_m();
        let to_m = (from_m + search_m).min(total);
        let first = self.segment_from(from_m, cursor.segment);
        let last = self.segment_from(to_m, walk.reach.segment.max(first));
        walk.reach.segment = last;
        let l2 = lookahead_m * lookahead_m;
        // A segment whose end lies inside the circle by the slack leaves it only past that end
        // (by about the slack, far above the rounding of the root): no goal, and no root taken.
        let inner_m = lookahead_m - BLOCK_SLACK_M;
        let inner2 = if inner_m > 0.0 { inner_m * inner_m } else { -1.0 };
        let start = self.goal_search_start(p, from_m, lookahead_m, (first, last), &mut walk.inside);
        for b in start / BLOCK_SEGMENTS..last / BLOCK_SEGMENTS + 1 {
            // A block wholly inside or wholly outside the circle of radius L round `p` has no
            // point at distance L.
            if let Some(block) = self.blocks.get(b) {
                let c2 = block.centre_distance2_m2(p);
                let (inner_m, outer_m) =
                    (lookahead_m - BLOCK_SLACK_M - block.radius_m, lookahead_m + BLOCK_SLACK_M + block.radius_m);
                if (inner_m > 0.0 && c2 < inner_m * inner_m) || c2 > outer_m * outer_m {
                    continue;
                }
            }
            let (lo, hi) = ((b * BLOCK_SEGMENTS).max(start), (b * BLOCK_SEGMENTS + BLOCK_SEGMENTS - 1).min(last));
            if let Some(goal) = self.goal_on_segments(p, lo, hi, from_m, to_m, (l2, inner2)) {
                return goal;
            }
        }
        if to_m >= total {
            // Near the end the plan is extended straight beyond its last point, so the goal
            // stays a lookahead away and the vehicle does not swerve onto the end point.
            let (end, d) = (self.point_at(total), self.direction_at(total));
            let (fx, fy) = (end[0] - p[0], end[1] - p[1]);
            let fd = fx * d[0] + fy * d[1];
            let disc = fd * fd - (fx * fx + fy * fy - l2);
            if disc >= 0.0 {
                let u = -fd + disc.sqrt();
                if u >= 0.0 {
                    return [end[0] + u * d[0], end[1] + u * d[1]];
                }
            }
        }
        self.point_at((from_m + lookahead_m).min(total))
    }

    /// The first segment the pursuit goal's search of segments `first..=last` (the window from
    /// arc length `from_m`) needs to look at: every point within `L - d` of the progress point
    /// `q` along the plan (`d` its distance from `p`, `L` the lookahead) is within `L` of `p`,
    /// since a chord is never longer than its arc, so a segment ending there lies inside the
    /// circle (by twice the slack) and holds no goal. The search starts at the segment of
    /// arc length `from_m + L - d - 2 slack`, found from `inside` (moved there).
    #[inline(always)]
    fn goal_search_start(
        &self,
        p: [f64; 2],
        from_m: f64,
        lookahead_m: f64,
        (first, last): (usize, usize),
        inside: &mut Cursor,
    ) -> usize {
        if first + 1 >= self.points.len() {
            return first;
        }
        let q = self.point_on_segment(first, from_m);
        let inside_m = lookahead_m - dist(p, q) - 2.0 * BLOCK_SLACK_M;
        if inside_m > 0.0 {
            inside.segment = self.segment_from(from_m + inside_m, inside.segment.max(first));
            // Within the window (`max` before `min`: an empty window, last < first, gives first).
            inside.segment.min(last).max(first)
        } else {
            first
        }
    }

    /// The first point of segments `lo..=hi` with arc length in `[from_m, to_m]` at squared
    /// distance `l2` from `p` where the segment leaves the circle (the pursuit goal's test);
    /// `inner2` is the square of the lookahead less the slack (-1 when that is not positive).
    #[inline]
    fn goal_on_segments(
        &self,
        p: [f64; 2],
        lo: usize,
        hi: usize,
        from_m: f64,
        to_m: f64,
        (l2, inner2): (f64, f64),
    ) -> Option<[f64; 2]> {
        for i in lo..hi + 1 {
            let (s_i, s_j) = (self.s_m[i], self.s_m[i + 1]);
            let b = self.points[i + 1];
            let (bx, by) = (b[0] - p[0], b[1] - p[1]);
            if s_j <= s_i || bx * bx + by * by < inner2 {
                continue;
            }
            // Points a + u d of the segment at distance L from p: u^2 + 2 u (f.d) + |f|^2 - L^2 = 0
            // with f = a - p; the larger root, if it lies on the searched part of the segment.
            let (a, d) = (self.points[i], self.dir[i]);
            let (fx, fy) = (a[0] - p[0], a[1] - p[1]);
            let fd = fx * d[0] + fy * d[1];
            let disc = fd * fd - (fx * fx + fy * fy - l2);
            if disc < 0.0 {
                continue;
            }
            let u = -fd + disc.sqrt();
            if u >= from_m.max(s_i) - s_i && u <= to_m.min(s_j) - s_i {
                return Some([a[0] + u * d[0], a[1] + u * d[1]]);
            }
        }
        None
    }
}

/// The cursors a follower walks along for its pursuit goal ([`PlanPath::pursuit_goal_within`]):
/// at the point ahead of the progress point before which the goal cannot lie, and at the end of
/// the search. Results never depend on them.
#[derive(Debug, Clone, Copy, Default, PartialEq, Eq)]
pub struct GoalCursors {
    pub inside: Cursor,
    pub reach: Cursor,
}

/// The stretch of arc length where [`PlanPath::leg_at`] gives the leg `leg`, remembered from
/// the last call: while both ends of the contact patch lie in it, the terrain share is that
/// leg's alone and needs no search (the answer is the same as [`PlanPath::terrain_share`]'s).
#[derive(Debug, Clone, Copy)]
pub struct LegSpan {
    leg: usize,
    from_m: f64,
    to_m: f64,
}

impl Default for LegSpan {
    fn default() -> Self {
        // An empty stretch: the first call searches.
        LegSpan { leg: 0, from_m: f64::INFINITY, to_m: f64::NEG_INFINITY }
    }
}

impl LegSpan {
    /// [`PlanPath::terrain_share`] of `plan`, searched only when the patch leaves the remembered
    /// stretch (then the stretch of the new rear leg is remembered). Same answer for any `s_m`.
    #[inline]
    pub fn terrain_share(&mut self, plan: &PlanPath, s_m: f64, contact_length_m: f64) -> TerrainShare {
        let half = 0.5 * contact_length_m.max(0.0);
        if (s_m - half).max(0.0) >= self.from_m && s_m + half < self.to_m {
            return TerrainShare { rear: self.leg, front: self.leg, front_share: 0.0 };
        }
        let share = plan.terrain_share(s_m, contact_length_m);
        // leg_at(x) is the last leg whose start is <= x: leg i from its start up to the next
        // larger start (the first and last legs open-ended).
        let n = plan.leg_count();
        let leg = share.rear;
        let from_m = if leg == 0 { f64::NEG_INFINITY } else { plan.leg_bounds_m(leg).0 };
        let to_m = (leg + 1..n).map(|j| plan.leg_bounds_m(j).0).find(|&s| s > from_m).unwrap_or(f64::INFINITY);
        *self = LegSpan { leg, from_m, to_m };
        share
    }
}

/// The legs under the two ends of the vehicle's contact patch and the share on the front one.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct TerrainShare {
    pub rear: usize,
    pub front: usize,
    /// Share of the contact length on the front leg, 0..1 (0 when both ends are on one leg).
    pub front_share: f64,
}

impl TerrainShare {
    /// The leg with the larger share of the patch.
    pub fn dominant(&self) -> usize {
        if self.front_share > 0.5 {
            self.front
        } else {
            self.rear
        }
    }
}

/// Signed Menger curvature of three points: 2 cross(p2 - p1, p3 - p2) / (|p1p2| |p2p3| |p1p3|);
/// positive for a left turn, 0 for coincident points.
#[inline]
pub fn menger_curvature(p1: [f64; 2], p2: [f64; 2], p3: [f64; 2]) -> f64 {
    let cross = (p2[0] - p1[0]) * (p3[1] - p2[1]) - (p2[1] - p1[1]) * (p3[0] - p2[0]);
    let denom = dist(p1, p2) * dist(p2, p3) * dist(p1, p3);
    if denom <= 0.0 {
        return 0.0;
    }
    2.0 * cross / denom
}

#[inline]
pub fn dist(a: [f64; 2], b: [f64; 2]) -> f64 {
    ((b[0] - a[0]).powi(2) + (b[1] - a[1]).powi(2)).sqrt()
}

/// Points of a circle of `radius_m` through the origin, centre (0, R), heading +x at the start,
/// anticlockwise, `n` segments over `turns` turns (for tests).
#[cfg(test)]
pub(crate) fn circle_points(radius_m: f64, n: usize, turns: f64) -> Vec<[f64; 2]> {
    (0..=n)
        .map(|i| {
            let a = turns * std::f64::consts::TAU * i as f64 / n as f64 - std::f64::consts::FRAC_PI_2;
            [radius_m * a.cos(), radius_m + radius_m * a.sin()]
        })
        .collect()
}

#[cfg(test)]
mod tests {
    use super::*;
    use approx::assert_relative_eq;

    #[test]
    fn menger_reference_values() {
        // Menger curvature (plane geometry: the circumscribed circle of three points has
        // radius abc / (4 area)): (0,0),(1,1),(2,0) lie on a circle of radius 1 turning right.
        assert_relative_eq!(menger_curvature([0.0, 0.0], [1.0, 1.0], [2.0, 0.0]), -1.0, epsilon = 1e-12);
        for r in [0.5, 3.0, 40.0] {
            let (a, b, c) = (0.3_f64, 1.1_f64, 2.0_f64);
            let on = |t: f64| [r * t.cos(), r * t.sin()];
            assert_relative_eq!(menger_curvature(on(a), on(b), on(c)), 1.0 / r, max_relative = 1e-12);
        }
        assert_eq!(menger_curvature([1.0, 1.0], [1.0, 1.0], [2.0, 3.0]), 0.0);
    }

    #[test]
    fn circle_curvature_is_inverse_radius() {
        let plan = PlanPath::from_parts(circle_points(5.0, 2000, 0.75), &[0], None);
        let (k, _) = plan.required_curvature(0, 0.5);
        assert_relative_eq!(k, 0.2, max_relative = 1e-9);
    }

    #[test]
    fn nearest_within_ignores_far_side_of_a_loop() {
        // A hairpin: out along y = 0, back along y = 1.
        let pts = vec![[0.0, 0.0], [10.0, 0.0], [10.0, 1.0], [0.0, 1.0]];
        let plan = PlanPath::from_parts(pts, &[0], None);
        let p = [5.0, 0.8];
        let near = plan.nearest_within(p, 3.0, 7.0);
        assert_relative_eq!(near.distance_m, 0.8, epsilon = 1e-12);
        assert!(near.signed_offset_m > 0.0);
        let all = plan.nearest_within(p, 0.0, plan.length_m());
        assert_relative_eq!(all.distance_m, 0.2, epsilon = 1e-12);
    }

    #[test]
    fn beyond_the_ends_only_the_lateral_offset_counts() {
        let plan = PlanPath::from_parts(vec![[0.0, 0.0], [10.0, 0.0]], &[0], None);
        let past = plan.nearest_within([10.5, 0.1], 9.0, 10.0);
        assert_relative_eq!(past.distance_m, 0.1, epsilon = 1e-12);
        assert_relative_eq!(past.s_m, 10.0, epsilon = 1e-12);
        let before = plan.nearest_within([-0.5, -0.2], 0.0, 1.0);
        assert_relative_eq!(before.distance_m, 0.2, epsilon = 1e-12);
        assert!(before.signed_offset_m < 0.0);
        // Inside the plan the end clamps as usual.
        let inside = plan.nearest_within([10.5, 0.1], 2.0, 5.0);
        assert_relative_eq!(inside.distance_m, (5.5f64 * 5.5 + 0.01).sqrt(), epsilon = 1e-12);
    }

    #[test]
    fn pursuit_goal_lies_at_lookahead_ahead() {
        let plan = PlanPath::from_parts(vec![[0.0, 0.0], [20.0, 0.0]], &[0], None);
        let g = plan.pursuit_goal([2.0, 0.5], 2.0, 1.5, 10.0);
        assert_relative_eq!(dist(g, [2.0, 0.5]), 1.5, epsilon = 1e-12);
        assert!(g[0] > 2.0 && g[1] == 0.0);
        let far = plan.pursuit_goal([2.0, 5.0], 2.0, 1.5, 10.0);
        assert_relative_eq!(far[0], 3.5, epsilon = 1e-12);
        // Near the end the goal lies on the straight extension, a lookahead away.
        let end = plan.pursuit_goal([19.5, 0.2], 19.5, 1.5, 10.0);
        assert_relative_eq!(dist(end, [19.5, 0.2]), 1.5, epsilon = 1e-12);
        assert!(end[0] > 20.0 && end[1] == 0.0, "{end:?}");
    }

    #[test]
    fn cursor_queries_match_plain_queries() {
        let pts: Vec<[f64; 2]> = (0..200).map(|i| [i as f64 * 0.7, (i as f64 * 0.3).sin() * 3.0]).collect();
        let plan = PlanPath::from_parts(pts, &[0], None);
        let mut cursor = Cursor::default();
        for k in 0..400 {
            let s = (k as f64 * 0.37) % plan.length_m();
            let p = [s * 0.9, 1.0];
            let plain = plan.nearest_within(p, s - 1.5, s + 1.5);
            assert_eq!(plan.nearest_within_at(p, s - 1.5, s + 1.5, &mut cursor), plain);
            assert_eq!(
                plan.pursuit_goal_within(p, s, 1.5, 4.5, cursor, &mut GoalCursors::default()),
                plan.pursuit_goal(p, s, 1.5, 4.5)
            );
        }
        for k in 0..400 {
            let s = k as f64 * 0.37;
            assert_eq!(plan.leg_at_cursor(s, &mut cursor), plan.leg_at(s));
        }
        // A stale cursor far away still gives the same answer.
        let mut far = Cursor { segment: 190 };
        assert_eq!(plan.nearest_within_at([1.0, 0.0], 0.0, 2.0, &mut far), plan.nearest_within([1.0, 0.0], 0.0, 2.0));
    }

    /// The window searches without blocks or galloping: every segment in order.
    fn nearest_by_scan(plan: &PlanPath, p: [f64; 2], from_m: f64, to_m: f64) -> Nearest {
        let (first, last) = (plan.segment_at(from_m), plan.segment_at(to_m));
        let (mut best_d2, mut best_s, mut best_side) = (f64::INFINITY, from_m, 0.0);
        for i in first..=last {
            if let Some((d2, s, side)) = plan.segment_distance(p, i, from_m, to_m) {
                if d2 < best_d2 {
                    (best_d2, best_s, best_side) = (d2, s, side);
                }
            }
        }
        let d = best_d2.sqrt();
        Nearest { s_m: best_s, distance_m: d, signed_offset_m: if best_side >= 0.0 { d } else { -d } }
    }

    /// The pursuit goal's root test on every segment of the window in order, nothing skipped:
    /// the larger root of |a + u d - p| = L on the searched part of each segment.
    fn goal_by_scan(plan: &PlanPath, p: [f64; 2], from_m: f64, to_m: f64, l: f64) -> Option<[f64; 2]> {
        for i in plan.segment_at(from_m)..=plan.segment_at(to_m) {
            let (s_i, s_j) = (plan.s_m[i], plan.s_m[i + 1]);
            if s_j <= s_i {
                continue;
            }
            let (a, d) = (plan.points[i], plan.dir[i]);
            let (fx, fy) = (a[0] - p[0], a[1] - p[1]);
            let fd = fx * d[0] + fy * d[1];
            let disc = fd * fd - (fx * fx + fy * fy - l * l);
            if disc < 0.0 {
                continue;
            }
            let u = -fd + disc.sqrt();
            if u >= from_m.max(s_i) - s_i && u <= to_m.min(s_j) - s_i {
                return Some([a[0] + u * d[0], a[1] + u * d[1]]);
            }
        }
        None
    }

    #[test]
    fn block_skipping_and_galloping_give_the_answers_of_a_full_scan() {
        // A dense wavy plan (points every 0.1 m) that doubles back on itself, with a repeated
        // point, queried from stale cursors near and far, from points off the plan, on it and on
        // its vertices (where segments tie), with one cursor or two for the window's ends.
        let mut pts: Vec<[f64; 2]> = (0..3000).map(|i| [i as f64 * 0.1, (i as f64 * 0.01).sin() * 2.0]).collect();
        pts.extend((0..3000).rev().map(|i| [i as f64 * 0.1, 1.5 + (i as f64 * 0.013).cos()]));
        pts.insert(1234, pts[1234]);
        let plan = PlanPath::from_parts(pts, &[0, 2000], None);
        let mut cursor = Cursor::default();
        for k in 0..3000 {
            let s = (k as f64 * 0.917) % plan.length_m();
            let p = [(s * 0.37) % 300.0, ((k % 17) as f64 - 8.0) * 0.3];
            for (w_back, w_ahead) in [(1.5, 1.5), (0.0, 1.5), (0.0, 4.5), (6.0, 30.0)] {
                let (from_m, to_m) = (s - w_back, s + w_ahead);
                let mut c = if k % 5 == 0 { Cursor { segment: (k * 7919) % 6000 } } else { cursor };
                assert_eq!(plan.nearest_within_at(p, from_m, to_m, &mut c), nearest_by_scan(&plan, p, from_m, to_m));
                let on_plan = plan.point_at(s + 0.3 * w_ahead);
                let vertex = plan.points()[plan.segment_at(s) + 1];
                for q in [p, on_plan, vertex] {
                    let (mut a, mut b) = (Cursor { segment: (k * 13) % 6000 }, Cursor { segment: k % 7 });
                    let seed = (k * 101) % 6000;
                    assert_eq!(
                        plan.nearest_in_window(q, from_m, to_m, seed, &mut a, &mut b),
                        nearest_by_scan(&plan, q, from_m, to_m),
                        "{q:?} in [{from_m}, {to_m}] from {seed}"
                    );
                }
            }
            for l in [0.3, 1.5, 4.0] {
                let to_m = (s + 3.0 * l).min(plan.length_m());
                for q in [p, plan.point_at(s + 0.5 * l), plan.points()[plan.segment_at(s + l) + 1]] {
                    let far = Cursor { segment: 5999 };
                    let mut far_cursors = GoalCursors { inside: far, reach: far };
                    assert_eq!(plan.pursuit_goal_within(q, s, l, 3.0 * l, cursor, &mut far_cursors), {
                        // The same goal from the root test on every segment in order: no block
                        // and no segment skipped.
                        goal_by_scan(&plan, q, s, to_m, l)
                            .unwrap_or_else(|| plan.pursuit_goal_within(q, s, l, 3.0 * l, cursor, &mut far_cursors))
                    });
                }
            }
            for hint in [0, k, 5999, (k * 31) % 6000] {
                assert_eq!(plan.segment_from(s, hint), plan.segment_at(s), "at {s} from {hint}");
            }
            plan.segment_at_cursor(s, &mut cursor);
        }
    }

    #[test]
    fn the_search_near_the_seed_gives_the_answers_of_a_full_scan() {
        // Three plans, points every 0.1 m: gentle waves; a hairpin whose return runs 0.6 m from
        // its way out (a window across it turns by more than the bound allows); and a zigzag of
        // sharp corners. Query points on the plan and off it by up to 0.5 m, seeds at and near
        // the segment of the query's arc length, windows ahead and around.
        let waves: Vec<[f64; 2]> = (0..600).map(|i| [i as f64 * 0.1, (i as f64 * 0.02).sin() * 1.5]).collect();
        let mut hairpin: Vec<[f64; 2]> = (0..60).map(|i| [i as f64 * 0.1, 0.0]).collect();
        hairpin.extend((1..10).map(|k| {
            let a = std::f64::consts::PI * k as f64 / 10.0;
            [5.9 + 0.3 * a.sin(), 0.3 - 0.3 * a.cos()]
        }));
        hairpin.extend((0..60).rev().map(|i| [i as f64 * 0.1, 0.6]));
        let zigzag: Vec<[f64; 2]> = (0..400)
            .map(|i| [i as f64 * 0.1, if (i / 7) % 2 == 0 { (i % 7) as f64 * 0.1 } else { 0.7 - (i % 7) as f64 * 0.1 }])
            .collect();
        let (mut near_plan, mut taken) = (0, 0);
        for (plan_index, pts) in [waves, hairpin, zigzag].into_iter().enumerate() {
            let plan = PlanPath::from_parts(pts, &[0], None);
            let n_seg = plan.segment_count();
            for k in 0..700 {
                let s = 0.3 + (k as f64 * 0.0917) % (plan.length_m() - 0.6);
                let on = plan.point_at(s);
                let d = plan.direction_at(s);
                for offset_m in [0.0, 0.01, -0.03, 0.05, 0.2, -0.5] {
                    let p = [on[0] - offset_m * d[1], on[1] + offset_m * d[0]];
                    for (back_m, ahead_m) in [(0.0, 1.5), (1.5, 1.5), (3.0, 3.0), (0.0, 0.5)] {
                        let (from_m, to_m) = (s - back_m, s + ahead_m);
                        let reference = nearest_by_scan(&plan, p, from_m, to_m);
                        let (first, last) = (plan.segment_at(from_m), plan.segment_at(to_m));
                        let at = plan.segment_at(s);
                        for seed in [at, at.saturating_sub(1), (at + 3).min(n_seg - 1), first, last] {
                            let (mut a, mut b) = (Cursor { segment: first }, Cursor { segment: last });
                            assert_eq!(
                                plan.nearest_in_window(p, from_m, to_m, seed, &mut a, &mut b),
                                reference,
                                "{p:?} in [{from_m}, {to_m}] from {seed}"
                            );
                            if last > first {
                                if let Some(near) = plan.nearest_near_seed(p, from_m, to_m, seed, first, last) {
                                    assert_eq!(near, reference, "{p:?} in [{from_m}, {to_m}] from {seed}");
                                    if plan_index == 0 && seed == at && offset_m.abs() <= 0.05 && ahead_m >= 1.5 {
                                        taken += 1;
                                    }
                                }
                                if plan_index == 0 && seed == at && offset_m.abs() <= 0.05 && ahead_m >= 1.5 {
                                    near_plan += 1;
                                }
                            }
                        }
                    }
                }
            }
        }
        // On the gentle waves the bound holds for nearly every query near the plan from the
        // progress point's segment (it fails only at the plan's ends): the search measures a few
        // segments there, not the window.
        assert!(taken * 10 >= near_plan * 9, "near the seed in {taken} of {near_plan} queries");
    }

    #[test]
    fn a_pursuit_search_ending_before_it_starts_falls_back_to_the_point_ahead() {
        // A negative search length (a caller's mistake) leaves an empty window: no panic, and the
        // goal is the point a lookahead ahead of the progress point, as the documentation says
        // for a search that finds no point at the lookahead.
        let pts: Vec<[f64; 2]> = (0..200).map(|i| [i as f64 * 0.1, 0.0]).collect();
        let plan = PlanPath::from_parts(pts, &[0], None);
        let goal = plan.pursuit_goal([5.0, 0.0], 5.0, 1.5, -3.0);
        assert!((goal[0] - 6.5).abs() < 1e-9 && goal[1] == 0.0, "{goal:?}");
    }

    #[test]
    fn turn_sums_bound_the_turning_of_a_circle() {
        // Points every 0.1 rad on a circle of radius 2 m: each inner point turns by 0.1 rad (the
        // chord directions of a regular polygon, from plane geometry), so the sums grow by the
        // bound 2 tan(0.1 / 2) each, which is at least the turn of 0.1.
        let pts: Vec<[f64; 2]> =
            (0..40).map(|i| [2.0 * (i as f64 * 0.1).cos(), 2.0 * (i as f64 * 0.1).sin()]).collect();
        let plan = PlanPath::from_parts(pts, &[0], None);
        let sums = &plan.turn_sum_rad;
        assert_eq!(sums.len(), 40);
        assert_eq!(sums[0], 0.0);
        assert_eq!(sums[39], sums[38]);
        for w in sums[..39].windows(2) {
            let step = w[1] - w[0];
            assert!((step - 2.0 * 0.05_f64.tan()).abs() < 1e-12 && step >= 0.1, "{step}");
        }
        // A reversal and a repeated point each count as half a turn.
        let back = PlanPath::from_parts(vec![[0.0, 0.0], [1.0, 0.0], [0.5, 0.0], [0.5, 0.0], [0.5, 1.0]], &[0], None);
        let pi = std::f64::consts::PI;
        assert_eq!(back.turn_sum_rad, vec![0.0, pi, 2.0 * pi, 3.0 * pi, 3.0 * pi]);
    }

    #[test]
    fn slope_lookups_from_a_cursor_match_the_plain_ones() {
        let pts: Vec<[f64; 2]> = (0..300).map(|i| [i as f64 * 0.3, (i as f64 * 0.05).sin() * 4.0]).collect();
        let alt: Vec<f64> = (0..300).map(|i| (i as f64 * 0.07).cos() * 3.0).collect();
        let cross: Vec<f64> = (0..300).map(|i| 0.01 * i as f64 - 1.0).collect();
        let plan = PlanPath::from_parts(pts, &[0, 120], Some(alt)).with_cross_slope(Some(cross));
        let mut cursor = Cursor::default();
        for k in 0..1200 {
            let s = k as f64 * 0.083;
            let (g, c) = plan.slope_at_cursor(s, &mut cursor);
            assert_eq!(g, plan.grade_at(s), "grade at {s}");
            assert_eq!(c, plan.cross_slope_at(s), "cross slope at {s}");
        }
        // Halfway between points 10 and 11 the cross slope is the mean of theirs.
        let mid = 0.5 * (plan.point_s_m(10) + plan.point_s_m(11));
        assert_relative_eq!(plan.cross_slope_at(mid), 0.5 * (0.1 - 1.0 + 0.11 - 1.0), epsilon = 1e-12);
        let flat = PlanPath::from_parts(vec![[0.0, 0.0], [5.0, 0.0]], &[0], None);
        assert_eq!(flat.slope_at_cursor(2.0, &mut Cursor::default()), (0.0, 0.0));
    }

    #[test]
    fn the_contact_patch_is_shared_linearly_across_a_boundary() {
        let plan = PlanPath::from_parts(vec![[0.0, 0.0], [10.0, 0.0], [20.0, 0.0]], &[0, 1], None);
        assert_eq!(plan.terrain_share(5.0, 1.0), TerrainShare { rear: 0, front: 0, front_share: 0.0 });
        for (s, share) in [(9.5, 0.0), (9.75, 0.25), (10.0, 0.5), (10.3, 0.8), (10.5, 1.0), (11.0, 1.0)] {
            let t = plan.terrain_share(s, 1.0);
            // Share of the patch on leg 1.
            let on_second = if t.front == 1 && t.rear == 0 { t.front_share } else { f64::from(u8::from(t.rear == 1)) };
            assert_relative_eq!(on_second, share, epsilon = 1e-12);
        }
        assert_eq!(plan.terrain_share(10.6, 1.0).dominant(), 1);
        assert_relative_eq!(plan.arc_length_on_segment(1, [13.0, 2.0]), 13.0, epsilon = 1e-12);
        assert_relative_eq!(plan.arc_length_on_segment(1, [25.0, 0.0]), 20.0, epsilon = 1e-12);
    }

    #[test]
    fn legs_and_boundaries() {
        let pts = vec![[0.0, 0.0], [3.0, 0.0], [3.0, 4.0], [6.0, 4.0]];
        let plan = PlanPath::from_parts(pts, &[0, 1, 2], None);
        assert_eq!(plan.leg_bounds_m(1), (3.0, 7.0));
        assert_eq!(plan.leg_at(0.0), 0);
        assert_eq!(plan.leg_at(3.0), 1);
        assert_eq!(plan.leg_at(9.9), 2);
        assert_eq!(plan.leg_at(100.0), 2);
        let mut c = Cursor::default();
        for s in [0.0, 2.9, 3.0, 6.99, 7.0, 9.9, 100.0, 1.0] {
            assert_eq!(plan.leg_at_cursor(s, &mut c), plan.leg_at(s), "at {s}");
        }
        assert_relative_eq!(plan.length_m(), 10.0);
    }
}

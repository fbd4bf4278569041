//! The plan's curvature, measured on the planner's own vertices (docs/method.md, Plan curvature).
//!
//! The polyline is read as a chain of circular arcs: each segment bends along the circle through
//! its two end points and one neighbouring vertex, the neighbour whose circle bends it least
//! (plane geometry: three points fix one circle). A segment whose neighbours turn opposite ways
//! (an inflection) stays straight, and so does a segment beside a corner: a vertex counts as a
//! sample of a curve only when its two segments are at most [`ARC_SAMPLE_MAX_SPACING_M`] long and
//! turn by at most [`ARC_SAMPLE_MAX_TURN`] (spacing x curvature, so R >= 2 d); otherwise it is a
//! corner between straight sides. The curvature at a vertex is then the Menger curvature of the
//! vertex and the points one curvature scale before and after it along that chain.
//!
//! Consequences, each covered by a test: every vertex of a circular arc sampled at any spacing up
//! to R/2 and 1.05 m lies on the chain's circle, so the arc reads exactly 1/R (to rounding), with
//! no dependence on where the samples fall; a sharp corner of turning angle theta between straight
//! sides reads 2 sin(theta/2) / scale whatever the spacing of the points along its sides; and the
//! reading depends on distances and angles only, so moving or rotating the plan changes nothing.
//! Before the start and past the end the plan is extended straight along its end segments, as the
//! follower extends it. Cost: O(1) per segment to build, O(1) amortised per vertex to read; nothing
//! is allocated per query. Units: metres, 1/m; positive curvature turns left.

use super::{dist, menger_curvature, PlanPath};

/// Longest segment read as a sample of a curve, m. Planners sample curves every 0.1-1 m; a longer
/// segment is a straight side, and the vertex at its end a corner.
pub const ARC_SAMPLE_MAX_SPACING_M: f64 = 1.05;
/// Largest spacing x curvature of a vertex read as a sample of a curve (0.5: radius at least twice
/// the spacing, a turn of at most about 29 degrees per vertex).
pub const ARC_SAMPLE_MAX_TURN: f64 = 0.5;

/// The curvature reading at one vertex of the plan.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct VertexCurvature {
    /// Index of the vertex in the plan's points.
    pub index: usize,
    /// Arc length of the vertex along the route.
    pub s_m: f64,
    pub point: [f64; 2],
    /// Signed curvature read at the vertex, 1/m (positive left).
    pub curvature_per_m: f64,
    /// Turning angle at the vertex itself, rad (positive left; 0 at the ends of the plan).
    pub turn_rad: f64,
    /// True for a corner: the vertex turns while the segments beside it run (nearly) straight, so
    /// its reading is set by the curvature scale rather than by the plan's own radius.
    pub sharp: bool,
}

/// Curvature of the circle through vertices `i - 1`, `i`, `i + 1` when the vertex reads as a sample
/// of a curve; `None` for a corner (a long side or a large turn).
fn sampled_curve_curvature(points: &[[f64; 2]], i: usize) -> Option<f64> {
    let (a, v, b) = (points[i - 1], points[i], points[i + 1]);
    let spacing = dist(a, v).max(dist(v, b));
    let k = menger_curvature(a, v, b);
    (spacing <= ARC_SAMPLE_MAX_SPACING_M && spacing * k.abs() <= ARC_SAMPLE_MAX_TURN).then_some(k)
}

/// Curvatures closer than this to zero count as straight when comparing neighbouring vertices,
/// 1/m (a radius of 100 m: far beyond any turn that matters to a skid-steered vehicle, and well
/// above the noise of coordinates rounded to a millimetre at 1 m spacing).
const STRAIGHT_FLOOR_PER_M: f64 = 0.01;

/// Largest relative mismatch between a vertex's circle and the next vertex's for the circle to be
/// trusted as part of a smooth curve.
const SMOOTH_MISMATCH: f64 = 0.5;

/// The signed curvature each segment bends with (see the module documentation). Segment j has two
/// candidate circles, through vertex j and its neighbours and through vertex j + 1 and its
/// neighbours. A candidate is trusted when the vertex beyond it, away from the segment, reads
/// about the same (relative mismatch below [`SMOOTH_MISMATCH`], with [`STRAIGHT_FLOOR_PER_M`] as
/// the floor): that is the side where the curve continues smoothly, while the other side may hold
/// a corner. Of two trusted candidates the more curved wins (where a straight runs into an arc
/// between two vertices, the circle reaching into the arc is the closer one); with none the
/// segment is straight.
pub(super) fn segment_bends(points: &[[f64; 2]]) -> Vec<f64> {
    let n = points.len();
    let reading = |i: usize| if i >= 1 && i + 1 < n { sampled_curve_curvature(points, i) } else { None };
    let mismatch = |a: f64, b: f64| (a - b).abs() / (a.abs().max(b.abs()) + STRAIGHT_FLOOR_PER_M);
    // The candidate of a vertex reading `k`, looking away from the segment to the reading
    // `beyond` of the next vertex that way.
    let candidate = |k: Option<f64>, beyond: Option<f64>| {
        let k = k?;
        let m = mismatch(k, beyond?);
        (m < SMOOTH_MISMATCH).then_some(k)
    };
    // The readings of vertices j - 1 ..= j + 2 for segment j, each worked out once as the
    // window moves along (there is no vertex before the first).
    let mut near = [None, reading(0), reading(1), reading(2)];
    let mut bends = Vec::with_capacity(n.saturating_sub(1));
    for j in 0..n.saturating_sub(1) {
        let before = candidate(near[1], near[0]);
        let after = candidate(near[2], near[3]);
        bends.push(match (before, after) {
            (Some(a), Some(b)) => {
                if a.abs() >= b.abs() {
                    a
                } else {
                    b
                }
            }
            (Some(k), None) | (None, Some(k)) => k,
            (None, None) => 0.0,
        });
        near = [near[1], near[2], near[3], reading(j + 3)];
    }
    bends
}

impl PlanPath {
    /// Point at arc length `s_m` on the arc chain (segment `j` contains `s_m`); straight beyond the
    /// ends.
    #[inline]
    fn chain_point(&self, j: usize, s_m: f64) -> [f64; 2] {
        let total = self.length_m();
        if s_m < 0.0 || s_m > total {
            let (p, d, past) = if s_m < 0.0 {
                (self.points[0], self.dir[0], s_m)
            } else {
                (self.points[self.points.len() - 1], self.dir[self.dir.len() - 1], s_m - total)
            };
            return [p[0] + past * d[0], p[1] + past * d[1]];
        }
        let (a, c, k) = (self.points[j], self.s_m[j + 1] - self.s_m[j], self.bend_per_m[j]);
        let u = if c > 0.0 { ((s_m - self.s_m[j]) / c).clamp(0.0, 1.0) } else { 0.0 };
        let d = self.dir[j];
        if k.abs() * c < 1e-12 {
            return [a[0] + u * c * d[0], a[1] + u * c * d[1]];
        }
        // The arc from a turns by 2 beta over the segment (sin beta = k c / 2); its chord to the
        // point a fraction u along has length 2 sin(beta u) / k and direction rotated from the
        // segment's by beta (u - 1).
        let beta = (0.5 * k * c).clamp(-1.0, 1.0).asin();
        let len = 2.0 * (beta * u).sin() / k;
        let (sin, cos) = (beta * (u - 1.0)).sin_cos();
        let e = [d[0] * cos - d[1] * sin, d[0] * sin + d[1] * cos];
        [a[0] + len * e[0], a[1] + len * e[1]]
    }

    /// Signed curvature of the plan at arc length `s_m` read at scale `scale_m`: the Menger
    /// curvature kappa = 2 cross(p2 - p1, p3 - p2) / (|p1p2| |p2p3| |p1p3|) of the arc-chain points
    /// at `s_m - scale_m`, `s_m` and `s_m + scale_m` (docs/method.md, Plan curvature).
    pub fn curvature_at(&self, s_m: f64, scale_m: f64) -> f64 {
        if let Some(own) = &self.own {
            return own.plan.curvature_at(s_m, scale_m);
        }
        if self.points.len() < 2 {
            return 0.0;
        }
        let at = |s: f64| self.chain_point(self.segment_at(s), s);
        menger_curvature(at(s_m - scale_m), at(s_m), at(s_m + scale_m))
    }

    /// Calls `f` with the curvature reading at every vertex of leg `leg` (both boundary vertices
    /// included, so a corner at a leg boundary counts for both legs), in order. O(1) amortised
    /// per vertex; allocates nothing.
    /// Points added after reading (map cuts, raster spacing) are skipped: the readings are those
    /// of the planner's own vertices of the leg, on the plan through them alone.
    pub fn for_each_vertex_curvature(&self, leg: usize, scale_m: f64, mut f: impl FnMut(&VertexCurvature)) {
        let n = self.points.len();
        if n < 2 || leg >= self.leg_first_point.len() {
            return;
        }
        let first = self.leg_first_point[leg].min(n - 1);
        let last = self.leg_first_point.get(leg + 1).copied().unwrap_or(n - 1).min(n - 1);
        match &self.own {
            None => self.vertex_readings(first, last, scale_m, f),
            Some(own) => {
                let lo = own.index.partition_point(|&i| i < first);
                let hi = own.index.partition_point(|&i| i <= last);
                if lo < hi {
                    own.plan.vertex_readings(lo, hi - 1, scale_m, |v| {
                        let index = own.index.get(v.index).copied().unwrap_or(first);
                        f(&VertexCurvature { index, s_m: self.s_m[index], ..*v })
                    });
                }
            }
        }
    }

    /// The readings of [`PlanPath::for_each_vertex_curvature`] at vertices `first..=last`.
    fn vertex_readings(&self, first: usize, last: usize, scale_m: f64, mut f: impl FnMut(&VertexCurvature)) {
        let n = self.points.len();
        let (mut back, mut ahead) = (first.saturating_sub(1), first);
        for i in first..=last {
            let s = self.s_m[i];
            back = self.segment_from(s - scale_m, back);
            ahead = self.segment_from(s + scale_m, ahead);
            let p = self.points[i];
            let kappa = menger_curvature(self.chain_point(back, s - scale_m), p, self.chain_point(ahead, s + scale_m));
            let (turn_rad, sharp) = if i >= 1 && i + 1 < n {
                let (a, b) = (self.points[i - 1], self.points[i + 1]);
                let (d1, d2) = ([p[0] - a[0], p[1] - a[1]], [b[0] - p[0], b[1] - p[1]]);
                let turn = (d1[0] * d2[1] - d1[1] * d2[0]).atan2(d1[0] * d2[0] + d1[1] * d2[1]);
                let own = menger_curvature(a, p, b).abs();
                let beside = self.bend_per_m[i - 1].abs().max(self.bend_per_m[i].abs());
                (turn, own > 1e-9 && beside < 0.5 * own)
            } else {
                (0.0, false)
            };
            f(&VertexCurvature { index: i, s_m: s, point: p, curvature_per_m: kappa, turn_rad, sharp });
        }
    }

    /// Largest |curvature| over the vertices of leg `leg` and its arc length (docs/method.md, Plan
    /// curvature); (0, leg start) for a straight leg.
    pub fn required_curvature(&self, leg: usize, scale_m: f64) -> (f64, f64) {
        let mut best = (0.0, self.leg_bounds_m.get(leg).map_or(0.0, |b| b.0));
        self.for_each_vertex_curvature(leg, scale_m, |v| {
            if v.curvature_per_m.abs() > best.0 {
                best = (v.curvature_per_m.abs(), v.s_m);
            }
        });
        best
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use approx::assert_relative_eq;
    use rand::{RngExt, SeedableRng};

    /// A straight approach of 5 m, an arc of radius `r` turning `turn_rad` and a straight exit of
    /// 5 m, all sampled every `d` along the path starting `phase` (0..1) of a spacing in (so the
    /// tangent points are generally not vertices; the two ends are kept), then rotated by `rot`
    /// and moved by `shift`.
    fn sampled_arc(r: f64, d: f64, turn_rad: f64, phase: f64, rot: f64, shift: [f64; 2]) -> Vec<[f64; 2]> {
        let arc_m = r * turn_rad;
        let total = 10.0 + arc_m;
        let at = |s: f64| -> [f64; 2] {
            if s < 5.0 {
                [s - 5.0, 0.0]
            } else if s < 5.0 + arc_m {
                // Circle of radius r centred (0, r), starting at the origin heading +x.
                let phi = (s - 5.0) / r;
                [r * phi.sin(), r - r * phi.cos()]
            } else {
                let t = s - 5.0 - arc_m;
                [r * turn_rad.sin() + t * turn_rad.cos(), r - r * turn_rad.cos() + t * turn_rad.sin()]
            }
        };
        let mut pts = vec![at(0.0)];
        let mut s = phase * d;
        while s < total {
            pts.push(at(s));
            s += d;
        }
        pts.push(at(total));
        pts.dedup_by(|a, b| dist(*a, *b) < 1e-3);
        let (sin, cos) = rot.sin_cos();
        pts.iter().map(|p| [shift[0] + cos * p[0] - sin * p[1], shift[1] + sin * p[0] + cos * p[1]]).collect()
    }

    #[test]
    fn points_added_on_chords_leave_the_curvature_of_the_planners_vertices() {
        use crate::route::profile::Station;
        use crate::route::{Leg, Route, SourcePosition};
        // A 6 m radius arc sampled every 1 m of chord (30 points, under one turn), then a point added at every chord's midpoint as a map cut or a
        // raster's spacing adds them. Closed form: a circle of radius R has curvature 1/R.
        let r = 6.0_f64;
        let step = 2.0 * (0.5 / r).asin();
        let pts: Vec<[f64; 2]> = (0..30).map(|i| [r * (i as f64 * step).cos(), r * (i as f64 * step).sin()]).collect();
        let leg = Leg::new("grass", pts.clone(), SourcePosition::Feature(0));
        let n = pts.len();
        let mut stations: Vec<Station> =
            (0..n - 1).flat_map(|i| [Station { segment: i, t: 0.0 }, Station { segment: i, t: 0.5 }]).collect();
        stations.push(Station::at_point(n, n - 1));
        let dense = leg.resampled(&stations);
        assert_eq!(dense.points.len(), 2 * n - 1);
        let added = dense.added_points.clone().unwrap_or_default();
        assert_eq!(added.iter().filter(|&&a| a).count(), n - 1);
        let route = |leg: Leg| Route {
            name: "arc".into(),
            source: "arc.csv".into(),
            origin: None,
            legs: vec![leg],
            warnings: Vec::new(),
        };
        let plain = PlanPath::new(&route(leg));
        let with_added = PlanPath::new(&route(dense.clone()));
        let mut readings = Vec::new();
        with_added.for_each_vertex_curvature(0, 0.5, |v| readings.push((v.index, v.s_m, v.curvature_per_m)));
        let mut own = Vec::new();
        plain.for_each_vertex_curvature(0, 0.5, |v| own.push((v.s_m, v.curvature_per_m)));
        // Only the planner's vertices are read, at the same arc lengths and curvatures.
        assert_eq!(readings.len(), n);
        for ((index, s, k), (s_own, k_own)) in readings.iter().zip(&own) {
            assert!(!added[*index]);
            assert_relative_eq!(*s, *s_own, epsilon = 1e-9);
            assert_relative_eq!(*k, *k_own, max_relative = 1e-6);
            if *s > 1.0 && *s < plain.length_m() - 1.0 {
                assert_relative_eq!(*k, 1.0 / r, max_relative = 1e-6);
            }
        }
        for k in 1..40 {
            let s = 1.0 + k as f64 * (plain.length_m() - 2.0) / 40.0;
            assert_relative_eq!(with_added.curvature_at(s, 0.5), 1.0 / r, max_relative = 1e-6);
        }
        // Read on every point instead, the added midpoints bend the reading away from 1/R.
        let all = PlanPath::from_parts(dense.points.clone(), &[0], None);
        let mut worst: f64 = 0.0;
        all.for_each_vertex_curvature(0, 0.5, |v| {
            if v.s_m > 1.0 && v.s_m < all.length_m() - 1.0 {
                worst = worst.max((v.curvature_per_m * r - 1.0).abs());
            }
        });
        assert!(worst > 1e-3, "worst relative error {worst}");
    }

    #[test]
    fn sampled_arcs_read_their_radius_at_every_spacing() {
        // Circle geometry (three points of a circle fix it, so its circumscribed circle is the
        // circle itself): an arc of radius R sampled every d read at scale 0.5 m must give R.
        // Sweep d from 0.05 m to min(R/3, 1 m) with random phase, rotation and offset; 1.5 %.
        let mut rng = rand::rngs::ChaCha8Rng::seed_from_u64(7);
        let mut worst = 0.0_f64;
        for r in [1.5_f64, 3.0, 6.0, 20.0, 80.0] {
            let top = (r / 3.0).min(1.0);
            for k in 0..=12 {
                let d = 0.05 * (top / 0.05).powf(k as f64 / 12.0);
                for _ in 0..3 {
                    let phase: f64 = rng.random_range(0.0..1.0);
                    let rot: f64 = rng.random_range(-3.2..3.2);
                    let shift = [rng.random_range(-500.0..500.0), rng.random_range(-500.0..500.0)];
                    let pts = sampled_arc(r, d, 2.0, phase, rot, shift);
                    let plan = PlanPath::from_parts(pts, &[0], None);
                    let (kappa, _) = plan.required_curvature(0, 0.5);
                    let err = (1.0 / kappa - r).abs() / r;
                    worst = worst.max(err);
                    assert!(err < 0.015, "R {r} d {d} phase {phase}: read {}", 1.0 / kappa);
                }
            }
        }
        eprintln!("sampled arcs: largest radius error {:.2e}", worst);
    }

    #[test]
    fn the_old_chord_resampling_reads_sampled_arcs_tight() {
        // The reason for reading on the vertices: points resampled along the chords lie inside
        // the arc (sagitta geometry). A 6 m arc sampled every 1 m, read every 0.1 m from chord
        // points 0.5 m either side, comes out far too tight; on the vertices it reads 6 m.
        let pts = sampled_arc(6.0, 1.0, 2.0, 0.0, 0.0, [0.0, 0.0]);
        let plan = PlanPath::from_parts(pts, &[0], None);
        let (a, b) = (5.0 + 1.0, 5.0 + 11.0);
        let chords = (0..=100)
            .map(|i| {
                let s = a + (b - a) * i as f64 / 100.0;
                menger_curvature(plan.point_at(s - 0.5), plan.point_at(s), plan.point_at(s + 0.5)).abs()
            })
            .fold(0.0, f64::max);
        assert!(1.0 / chords < 0.7 * 6.0, "chords read {}", 1.0 / chords);
        let (k, _) = plan.required_curvature(0, 0.5);
        assert_relative_eq!(k, 1.0 / 6.0, max_relative = 1e-9);
    }

    #[test]
    fn a_sharp_corner_reads_two_sin_half_angle_over_scale_at_any_spacing() {
        // Plane geometry: an isosceles triangle with legs s and turning angle theta has
        // circumradius s / (2 sin(theta/2)). The sides are sampled every 10 m, 1 m, 0.3 m or
        // 0.05 m; the corner reads the same.
        let theta = 1.2_f64;
        for spacing in [10.0, 1.0, 0.3, 0.05] {
            let n = (10.0 / spacing) as usize;
            let mut pts: Vec<[f64; 2]> = (0..n).map(|i| [-10.0 + i as f64 * spacing, 0.0]).collect();
            pts.extend((0..=n).map(|i| {
                let t = i as f64 * spacing;
                [t * theta.cos(), t * theta.sin()]
            }));
            let plan = PlanPath::from_parts(pts, &[0], None);
            let scale = 0.5;
            let (k, at) = plan.required_curvature(0, scale);
            assert_relative_eq!(k, 2.0 * (theta / 2.0).sin() / scale, max_relative = 1e-9);
            assert_relative_eq!(at, 10.0, epsilon = 1e-9);
            let mut sharp = Vec::new();
            plan.for_each_vertex_curvature(0, scale, |v| {
                if v.sharp {
                    sharp.push((v.s_m, v.turn_rad));
                }
            });
            assert_eq!(sharp.len(), 1, "spacing {spacing}: {sharp:?}");
            assert_relative_eq!(sharp[0].1, theta, epsilon = 1e-12);
        }
    }

    #[test]
    fn a_corner_at_the_start_reads_as_if_approached_straight() {
        let theta = 0.8_f64;
        let plan = PlanPath::from_parts(
            vec![[0.0, 0.0], [0.2, 0.0], [0.2 + 5.0 * theta.cos(), 5.0 * theta.sin()]],
            &[0],
            None,
        );
        let (k, at) = plan.required_curvature(0, 0.5);
        assert_relative_eq!(k, 2.0 * (theta / 2.0).sin() / 0.5, max_relative = 1e-9);
        assert_relative_eq!(at, 0.2, epsilon = 1e-12);
    }

    #[test]
    fn arcs_are_not_corners_and_readings_do_not_depend_on_the_frame() {
        let pts = sampled_arc(4.0, 0.4, 2.5, 0.3, 0.0, [0.0, 0.0]);
        let moved = sampled_arc(4.0, 0.4, 2.5, 0.3, 2.1, [1234.5, -987.6]);
        let (a, b) = (PlanPath::from_parts(pts, &[0], None), PlanPath::from_parts(moved, &[0], None));
        let mut ra = Vec::new();
        a.for_each_vertex_curvature(0, 0.5, |v| ra.push(*v));
        let mut rb = Vec::new();
        b.for_each_vertex_curvature(0, 0.5, |v| rb.push(*v));
        assert_eq!(ra.len(), rb.len());
        for (x, y) in ra.iter().zip(&rb) {
            assert_relative_eq!(x.curvature_per_m, y.curvature_per_m, epsilon = 1e-9);
            assert_eq!(x.sharp, y.sharp);
            assert!(!x.sharp || x.turn_rad.abs() < 1e-9, "{x:?}");
        }
    }

    /// Points along pieces of constant curvature (length, curvature), sampled every `d`, starting
    /// at the origin heading +x (exact circle arcs).
    fn pieces(parts: &[(f64, f64)], d: f64) -> Vec<[f64; 2]> {
        let (mut p, mut yaw) = ([0.0_f64, 0.0_f64], 0.0_f64);
        let mut pts = vec![p];
        for &(len, k) in parts {
            let n = (len / d).round().max(1.0) as usize;
            let ds = len / n as f64;
            for _ in 0..n {
                let dyaw = k * ds;
                let chord = if k.abs() < 1e-12 { ds } else { 2.0 * (0.5 * dyaw).sin() / k };
                let h = yaw + 0.5 * dyaw;
                p = [p[0] + chord * h.cos(), p[1] + chord * h.sin()];
                yaw += dyaw;
                pts.push(p);
            }
        }
        pts
    }

    #[test]
    fn an_s_bend_reads_both_turns_with_their_signs() {
        let pts = pieces(&[(5.0, 0.0), (5.0, 0.2), (5.0, -0.2), (5.0, 0.0)], 0.25);
        let plan = PlanPath::from_parts(pts, &[0], None);
        let (mut max, mut min) = (0.0_f64, 0.0_f64);
        plan.for_each_vertex_curvature(0, 0.5, |v| {
            max = max.max(v.curvature_per_m);
            min = min.min(v.curvature_per_m);
        });
        assert_relative_eq!(max, 0.2, max_relative = 1e-9);
        assert_relative_eq!(min, -0.2, max_relative = 1e-9);
    }
}

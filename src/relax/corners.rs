//! Finding the corners that need widening: the plan is simplified per leg so the corners of dense
//! polylines show as vertices, each vertex's measured curvature is compared with what its legs
//! allow, and failing corners are grouped. Neighbouring corners keep fillets of their own; only
//! corners whose tangent points would overlap are merged into one corner at the intersection of
//! the outer sides (a dense curve is one corner, not many small ones). Local metres, radians.

use geo::{LineString, SimplifyIdx};

use super::fillet::{tangent_length_m, turning_angle_rad};
use crate::assess::{CAUTION_CURVATURE_SHARE, CURVATURE_STEP_M};
use crate::rollout::RouteDrive;

/// A corner of the simplified plan.
pub(super) struct Corner {
    /// Position in the simplified vertex list.
    pub j: usize,
    pub turn_rad: f64,
    pub kappa_per_m: f64,
    /// 0-based legs the corner's curvature window touches.
    pub legs: Vec<usize>,
    pub failing: bool,
    /// Arc length of the vertex, where its traction limit is read (at the grade there).
    pub at_m: f64,
}

/// One failing corner, or several merged because their fillets would overlap.
#[derive(Debug, Clone)]
pub(super) struct Group {
    /// First and last corner vertex (positions in the simplified vertex list).
    pub a: usize,
    pub b: usize,
    /// The corner vertex: where the two outer sides meet (the vertex itself for one corner).
    pub x: [f64; 2],
    pub turn_rad: f64,
    pub kappa_per_m: f64,
    /// 0-based legs, sorted, without repeats.
    pub legs: Vec<usize>,
    /// Arc length of the tightest vertex of the group, where its traction limit is read.
    pub at_m: f64,
    /// The fillet radius the terrain asks for at the legs' speeds (at the grade at `at_m`).
    pub needed_radius_m: f64,
}

impl Group {
    /// Distance from the corner vertex to each tangent point of the needed fillet.
    pub fn needed_tangent_m(&self) -> f64 {
        tangent_length_m(self.needed_radius_m, self.turn_rad)
    }
}

/// Points per stretch simplified at once. Ramer-Douglas-Peucker takes time quadratic in the
/// points of a stretch when its splits are lopsided (a long zigzag), so long legs are simplified
/// in stretches of this many points, whose ends are kept; the work is then linear in the points.
const SIMPLIFY_STRETCH_POINTS: usize = 512;

/// Indices of the simplified plan's vertices: Ramer-Douglas-Peucker (the geo crate's
/// `SimplifyIdx`) per leg and per stretch of [`SIMPLIFY_STRETCH_POINTS`], leg boundaries always
/// kept. Every original point stays within `tolerance_m` of the simplified line.
pub(super) fn simplified_vertices(pts: &[[f64; 2]], first_index: &[usize], tolerance_m: f64) -> Vec<usize> {
    let mut verts: Vec<usize> = Vec::new();
    for (k, &first) in first_index.iter().enumerate() {
        let last = first_index.get(k + 1).copied().unwrap_or(pts.len().saturating_sub(1));
        let mut a = first;
        while a < last {
            let b = (a + SIMPLIFY_STRETCH_POINTS).min(last);
            let ls: LineString<f64> = pts[a..=b].iter().map(|p| (p[0], p[1])).collect();
            for i in ls.simplify_idx(tolerance_m) {
                let idx = a + i;
                if verts.last() != Some(&idx) {
                    verts.push(idx);
                }
            }
            a = b;
        }
    }
    verts
}

/// Every interior simplified vertex with its turn, measured curvature (docs/method.md, Plan
/// curvature, on the original plan within one curvature scale of the vertex) and whether it is
/// above the caution share of the achievable curvature `ach(leg, at_m)` of the legs it touches,
/// read at the vertex (the traction limit depends on the grade there).
pub(super) fn find_corners(
    drive: &RouteDrive,
    verts: &[usize],
    s_m: &[f64],
    ach: &dyn Fn(usize, f64) -> f64,
) -> Vec<Corner> {
    let plan = &drive.plan;
    let pts = plan.points();
    let scale_m = drive.curvature_scale_m;
    let total_m = plan.length_m();
    (1..verts.len().saturating_sub(1))
        .filter_map(|j| {
            let turn_rad = turning_angle_rad(pts[verts[j - 1]], pts[verts[j]], pts[verts[j + 1]])?;
            let s_v = s_m[verts[j]];
            let (from, to) = ((s_v - scale_m).max(0.0), (s_v + scale_m).min(total_m));
            let n = ((to - from) / CURVATURE_STEP_M).ceil().max(1.0) as usize;
            let kappa_per_m = (0..=n)
                .map(|k| plan.curvature_at(from + (to - from) * k as f64 / n as f64, scale_m).abs())
                .fold(0.0, f64::max);
            let mut legs: Vec<usize> = [from, s_v, to].iter().map(|&s| plan.leg_at(s)).collect();
            legs.dedup();
            let limit = legs.iter().map(|&l| ach(l, s_v)).fold(f64::INFINITY, f64::min);
            let failing = turn_rad.abs() > 1e-6 && kappa_per_m > CAUTION_CURVATURE_SHARE * limit;
            Some(Corner { j, turn_rad, kappa_per_m, legs, failing, at_m: s_v })
        })
        .collect()
}

/// Groups the failing corners, in order. A corner joins the group before it only when they
/// are neighbours turning the same way and their needed fillets' tangent points overlap on the
/// side between them; the merged group may then overlap the one before it, and so on. Each
/// corner is merged at most once into each group, so the work is linear in the corners.
/// `needed_radius_m` gives the fillet radius for a set of legs at an arc length.
pub(super) fn group_corners(
    corners: &[Corner],
    vp: &dyn Fn(usize) -> [f64; 2],
    needed_radius_m: &dyn Fn(&[usize], f64) -> f64,
) -> Vec<Group> {
    let mut groups: Vec<Group> = Vec::new();
    for c in corners.iter().filter(|c| c.failing) {
        let mut g = Group {
            a: c.j,
            b: c.j,
            x: vp(c.j),
            turn_rad: c.turn_rad,
            kappa_per_m: c.kappa_per_m,
            legs: c.legs.clone(),
            at_m: c.at_m,
            needed_radius_m: needed_radius_m(&c.legs, c.at_m),
        };
        while let Some(prev) = groups.last() {
            let neighbours = prev.b + 1 == g.a && prev.turn_rad.signum() == g.turn_rad.signum();
            if !neighbours || !fillets_overlap(prev, &g, vp) {
                break;
            }
            match merge(prev, &g, vp, needed_radius_m) {
                Some(m) => {
                    groups.pop();
                    g = m;
                }
                None => break,
            }
        }
        groups.push(g);
    }
    groups
}

/// Signed length of the side from `prev`'s corner vertex to `next`'s (both on the line through
/// simplified vertices `prev.b` and `next.a`), positive in the direction of travel.
pub(super) fn shared_side_m(prev: &Group, next: &Group, vp: &dyn Fn(usize) -> [f64; 2]) -> f64 {
    let (p, q) = (vp(prev.b), vp(next.a));
    let len = (q[0] - p[0]).hypot(q[1] - p[1]);
    if len <= 0.0 {
        return 0.0;
    }
    let d = [(q[0] - p[0]) / len, (q[1] - p[1]) / len];
    (next.x[0] - prev.x[0]) * d[0] + (next.x[1] - prev.x[1]) * d[1]
}

/// True when the needed fillets of two neighbouring groups would overlap on the side between them.
fn fillets_overlap(prev: &Group, next: &Group, vp: &dyn Fn(usize) -> [f64; 2]) -> bool {
    prev.needed_tangent_m() + next.needed_tangent_m() > shared_side_m(prev, next, vp)
}

/// The two neighbouring groups as one corner where the side before `first` and the side after
/// `second` meet; `None` when those sides do not meet ahead of the corners or the whole turns
/// back by about 180 degrees.
fn merge(
    first: &Group,
    second: &Group,
    vp: &dyn Fn(usize) -> [f64; 2],
    needed_radius_m: &dyn Fn(&[usize], f64) -> f64,
) -> Option<Group> {
    let (a, b) = (first.a, second.b);
    let turn_rad = first.turn_rad + second.turn_rad;
    if turn_rad.abs() >= std::f64::consts::PI - 0.05 {
        return None;
    }
    // Intersect p + l d1 (the side into the first corner) with q + m d2 (the side out of the last).
    let (p, q) = (vp(a - 1), vp(b + 1));
    let d1 = [vp(a)[0] - p[0], vp(a)[1] - p[1]];
    let d2 = [q[0] - vp(b)[0], q[1] - vp(b)[1]];
    let den = d1[0] * d2[1] - d1[1] * d2[0];
    if den.abs() < 1e-12 {
        return None;
    }
    let w = [vp(b)[0] - p[0], vp(b)[1] - p[1]];
    let l = (w[0] * d2[1] - w[1] * d2[0]) / den;
    let m = (w[0] * d1[1] - w[1] * d1[0]) / den;
    // The corner lies beyond the first vertex on the incoming side and before the last on the
    // outgoing side.
    if l < 1.0 - 1e-9 || m > 1e-9 {
        return None;
    }
    let mut legs: Vec<usize> = first.legs.iter().chain(&second.legs).copied().collect();
    legs.sort_unstable();
    legs.dedup();
    // The tightest of the two stands for the merged corner (its grade sets the traction limit).
    let tightest = if second.kappa_per_m > first.kappa_per_m { second } else { first };
    Some(Group {
        a,
        b,
        x: [p[0] + l * d1[0], p[1] + l * d1[1]],
        turn_rad,
        kappa_per_m: tightest.kappa_per_m,
        at_m: tightest.at_m,
        needed_radius_m: needed_radius_m(&legs, tightest.at_m),
        legs,
    })
}

//! Reporting the repair: one [`Change`] per filleted corner with its own largest displacement of
//! the plan, one [`Unrepaired`] per corner left as it was.
//!
//! A change's displacement is the Hausdorff distance between the original and the new plan over
//! the stretch that change replaced: from the original vertex before the corner to the one after
//! it, or, on a side shared with a neighbouring fillet, from the middle between the two
//! fillets' tangent points. Neighbouring changes therefore never see each other's fillets. At a
//! single corner of turn theta filleted at radius r this is r (1/cos(theta/2) - 1), the distance
//! from the vertex to the arc's midpoint (see [`super::fillet::tangent_length_m`]).
//! Local metres.

use serde::Serialize;

use super::corners::Group;
use super::fillet::Fillet;
use super::path::NewPoint;
use crate::route::plan::dist;

/// One repaired corner.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Change {
    /// Arc length of the corner along the original route, metres.
    pub at_m: f64,
    /// The corner vertex, local frame.
    pub x_m: f64,
    pub y_m: f64,
    /// 1-based legs the corner touches.
    pub legs: Vec<usize>,
    pub turn_deg: f64,
    /// Radius the corner measured before (1 / measured curvature).
    pub old_radius_m: f64,
    pub new_radius_m: f64,
    pub old_speed_mps: f64,
    /// Lowered speed of the touching legs, when the fillet alone could not make it pass.
    pub new_speed_mps: Option<f64>,
    /// Largest displacement of the plan at this change (Hausdorff distance of the stretch it
    /// replaced).
    pub max_displacement_m: f64,
}

/// A failing corner that could not be repaired.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Unrepaired {
    pub at_m: f64,
    pub x_m: f64,
    pub y_m: f64,
    pub legs: Vec<usize>,
    pub turn_deg: f64,
    pub old_radius_m: f64,
    /// Radius needed at the leg's speed.
    pub needed_radius_m: f64,
    /// Largest fillet the adjoining segments leave room for.
    pub room_radius_m: f64,
    pub reason: String,
}

/// A repaired group with its fillet, proposed speed and the tangent points' original arc lengths.
pub(super) struct Repaired<'a> {
    pub group: &'a Group,
    pub fillet: &'a Fillet,
    pub speed_mps: Option<f64>,
    pub span_m: (f64, f64),
}

/// The original plan as points with their arc lengths.
pub(super) struct Original<'a> {
    pub pts: &'a [[f64; 2]],
    pub s_m: &'a [f64],
    pub verts: &'a [usize],
}

/// The changes, in route order. `old_speed_mps` gives a leg's planned speed (0-based leg).
pub(super) fn changes(
    orig: &Original,
    new: &[NewPoint],
    repaired: &[Repaired],
    old_speed_mps: &dyn Fn(usize) -> f64,
) -> Vec<Change> {
    repaired
        .iter()
        .enumerate()
        .map(|(k, r)| {
            let g = r.group;
            let (s0, s1) = r.span_m;
            // The replaced stretch, cut at the middle of a side shared with a neighbouring fillet.
            let prev = k.checked_sub(1).and_then(|p| repaired.get(p)).filter(|p| p.group.b + 1 == g.a);
            let next = repaired.get(k + 1).filter(|n| n.group.a == g.b + 1);
            let from_m = prev.map_or(orig.s_m[orig.verts[g.a - 1]], |p| 0.5 * (p.span_m.1 + s0));
            let to_m = next.map_or(orig.s_m[orig.verts[g.b + 1]], |n| 0.5 * (s1 + n.span_m.0));
            // Start each walk just before the stretch (arc lengths are sorted), so the work per
            // change is the size of its stretch and the whole stays linear in the corners.
            let i0 = orig.s_m.partition_point(|&s| s < from_m).saturating_sub(1);
            let a = stretch(orig.pts[i0..].iter().copied().zip(orig.s_m[i0..].iter().copied()), from_m, to_m);
            let j0 = new.partition_point(|q| q.s_m < from_m).saturating_sub(1);
            let b = stretch(new[j0..].iter().map(|q| (q.p, q.s_m)), from_m, to_m);
            Change {
                at_m: 0.5 * (orig.s_m[orig.verts[g.a]] + orig.s_m[orig.verts[g.b]]),
                x_m: g.x[0],
                y_m: g.x[1],
                legs: g.legs.iter().map(|l| l + 1).collect(),
                turn_deg: r.fillet.turn_rad.to_degrees(),
                old_radius_m: 1.0 / g.kappa_per_m,
                new_radius_m: r.fillet.radius_m,
                old_speed_mps: g.legs.iter().map(|&l| old_speed_mps(l)).fold(0.0, f64::max),
                new_speed_mps: r.speed_mps,
                max_displacement_m: directed_max_m(&a, &b).max(directed_max_m(&b, &a)),
            }
        })
        .collect()
}

/// The polyline between arc lengths `from_m` and `to_m` of a path given as (point, arc length)
/// in order, with its ends interpolated; stops at the first point past `to_m`.
fn stretch(path: impl Iterator<Item = ([f64; 2], f64)>, from_m: f64, to_m: f64) -> Vec<[f64; 2]> {
    let mut out = Vec::new();
    let mut prev: Option<([f64; 2], f64)> = None;
    for (p, s) in path {
        let lerp = |(q, sq): ([f64; 2], f64), at: f64| {
            let t = if s > sq { ((at - sq) / (s - sq)).clamp(0.0, 1.0) } else { 0.0 };
            [q[0] + t * (p[0] - q[0]), q[1] + t * (p[1] - q[1])]
        };
        if s >= from_m {
            if out.is_empty() {
                if let Some(q) = prev.filter(|q| q.1 < from_m) {
                    out.push(lerp(q, from_m));
                }
            }
            if s > to_m {
                if let Some(q) = prev {
                    out.push(lerp(q, to_m));
                }
                break;
            }
            out.push(p);
        }
        prev = Some((p, s));
    }
    out
}

/// Distance from `p` to the polyline `to` (a single point when it has one).
fn to_polyline_m(p: [f64; 2], to: &[[f64; 2]]) -> f64 {
    if to.len() == 1 {
        return dist(p, to[0]);
    }
    to.windows(2)
        .map(|w| {
            let (a, b) = (w[0], w[1]);
            let d = [b[0] - a[0], b[1] - a[1]];
            let len2 = d[0] * d[0] + d[1] * d[1];
            let t =
                if len2 > 0.0 { (((p[0] - a[0]) * d[0] + (p[1] - a[1]) * d[1]) / len2).clamp(0.0, 1.0) } else { 0.0 };
            dist(p, [a[0] + t * d[0], a[1] + t * d[1]])
        })
        .fold(f64::INFINITY, f64::min)
}

/// How far below the true largest distance the directed distance may be refined before it
/// stops: the value returned is an upper bound within this of the truth.
const DISPLACEMENT_TOLERANCE_M: f64 = 0.001;

/// Largest distance from a point of the polyline `from` to the polyline `to` (0 when either is
/// empty): an upper bound at most [`DISPLACEMENT_TOLERANCE_M`] above the true value. The distance
/// to a set changes by at most the distance moved, so along a piece with end distances d0, d1
/// and length l it is at most (d0 + d1 + l) / 2; pieces whose bound cannot beat the largest
/// distance found so far are not refined further (branch and bound).
fn directed_max_m(from: &[[f64; 2]], to: &[[f64; 2]]) -> f64 {
    if from.is_empty() || to.is_empty() {
        return 0.0;
    }
    let d = |p: [f64; 2]| to_polyline_m(p, to);
    let ends: Vec<f64> = from.iter().map(|&p| d(p)).collect();
    let mut best = ends.iter().copied().fold(0.0, f64::max);
    let mut stack: Vec<([f64; 2], [f64; 2], f64, f64)> =
        from.windows(2).zip(ends.windows(2)).map(|(p, e)| (p[0], p[1], e[0], e[1])).collect();
    let mut upper = best;
    while let Some((a, b, da, db)) = stack.pop() {
        let bound = 0.5 * (da + db + dist(a, b));
        if bound <= best + DISPLACEMENT_TOLERANCE_M {
            upper = upper.max(bound);
            continue;
        }
        let m = [0.5 * (a[0] + b[0]), 0.5 * (a[1] + b[1])];
        let dm = d(m);
        best = best.max(dm);
        stack.push((a, m, da, dm));
        stack.push((m, b, dm, db));
    }
    upper.max(best)
}

#[cfg(test)]
mod tests {
    use super::*;
    use approx::assert_relative_eq;

    #[test]
    fn directed_distance_finds_the_peak_between_vertices_within_its_tolerance() {
        // From a straight segment to a polyline that bends away from it: the largest distance is
        // at the segment's middle (common practice, no source: plane geometry, a tent of height 2
        // seen from its base is 2 away at the apex, 0 at the ends).
        let from = [[0.0, 0.0], [10.0, 0.0]];
        let to = [[0.0, 0.0], [5.0, 2.0], [10.0, 0.0]];
        let up = directed_max_m(&from, &to);
        // Distance from (5, 0) to the tent's sides: 2 cos(atan(2/5)) = 10 / sqrt(29).
        let truth = 10.0 / 29.0_f64.sqrt();
        assert!(up >= truth - 1e-12 && up <= truth + DISPLACEMENT_TOLERANCE_M, "{up} vs {truth}");
        // The other way the apex is 2 from the base.
        assert_relative_eq!(directed_max_m(&to, &from), 2.0, epsilon = DISPLACEMENT_TOLERANCE_M);
    }

    #[test]
    fn stretch_interpolates_its_ends_and_stops_past_them() {
        let path = [([0.0, 0.0], 0.0), ([10.0, 0.0], 10.0), ([10.0, 10.0], 20.0), ([0.0, 10.0], 30.0)];
        let s = stretch(path.iter().copied(), 5.0, 15.0);
        assert_eq!(s, vec![[5.0, 0.0], [10.0, 0.0], [10.0, 5.0]]);
    }
}

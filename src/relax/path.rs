//! Building the relaxed plan: the original points between untouched vertices, straight
//! simplified sides and fillets in place of repaired corners, cut back into the route's legs.
//! Every new point carries the arc length of the original plan it stands for, so changes are
//! measured against the stretch they replace. Local metres.

use super::corners::Group;
use super::fillet::Fillet;
use super::RelaxError;
use crate::rollout::RouteDrive;
use crate::route::plan::dist;
use crate::route::{Route, DUPLICATE_POINT_M};

/// A point of the new plan with the arc length of the original plan it stands for.
#[derive(Clone, Copy)]
pub(super) struct NewPoint {
    pub p: [f64; 2],
    pub s_m: f64,
}

/// Cumulative arc length at every point.
pub(super) fn arc_lengths(pts: &[[f64; 2]]) -> Vec<f64> {
    let mut s = 0.0;
    let mut out = Vec::with_capacity(pts.len());
    for (i, p) in pts.iter().enumerate() {
        if i > 0 {
            s += dist(pts[i - 1], *p);
        }
        out.push(s);
    }
    out
}

/// Index of each leg's first point in the joined plan (as `PlanPath::new` joins them).
pub(super) fn leg_first_indices(route: &Route) -> Vec<usize> {
    let mut n = 0usize;
    route
        .legs
        .iter()
        .map(|leg| {
            let first = n.saturating_sub(usize::from(n > 0));
            n = first + leg.points.len();
            first
        })
        .collect()
}

/// Arc length on the original plan of a point `u` metres along the simplified segment j..j+1
/// (clamped to the segment).
fn s_on_segment(pts: &[[f64; 2]], verts: &[usize], s_m: &[f64], j: usize, u_m: f64) -> f64 {
    let (a, b) = (verts[j], verts[j + 1]);
    let len = dist(pts[a], pts[b]);
    let f = if len > 0.0 { (u_m / len).clamp(0.0, 1.0) } else { 0.0 };
    s_m[a] + f * (s_m[b] - s_m[a])
}

/// Original arc lengths of a fillet's two tangent points.
pub(super) fn fillet_span_m(pts: &[[f64; 2]], s_m: &[f64], verts: &[usize], g: &Group, f: &Fillet) -> (f64, f64) {
    let u_in = dist(pts[verts[g.a - 1]], g.x) - f.tangent_length_m;
    let u_out = f.tangent_length_m - dist(g.x, pts[verts[g.b]]);
    (s_on_segment(pts, verts, s_m, g.a - 1, u_in), s_on_segment(pts, verts, s_m, g.b, u_out))
}

/// The new plan. `fillets` are in route order, each with its tangent points' original arc
/// lengths. Near-duplicate points are dropped.
pub(super) fn new_polyline(
    pts: &[[f64; 2]],
    s_m: &[f64],
    verts: &[usize],
    fillets: &[(&Group, &Fillet, (f64, f64))],
) -> Vec<NewPoint> {
    let mut in_group: Vec<Option<usize>> = vec![None; verts.len()];
    for (k, (g, _, _)) in fillets.iter().enumerate() {
        for slot in in_group.iter_mut().take(g.b + 1).skip(g.a) {
            *slot = Some(k);
        }
    }
    let mut out: Vec<NewPoint> = Vec::with_capacity(pts.len());
    let mut push = |q: NewPoint| {
        if out.last().is_none_or(|last| dist(last.p, q.p) >= 2.0 * DUPLICATE_POINT_M) {
            out.push(q);
        }
    };
    for j in 0..verts.len() {
        match in_group[j].and_then(|k| fillets.get(k)) {
            Some((g, f, (s0, s1))) if g.a == j => {
                let n = f.points.len().saturating_sub(1).max(1);
                for (k, p) in f.points.iter().enumerate() {
                    push(NewPoint { p: *p, s_m: s0 + (s1 - s0) * k as f64 / n as f64 });
                }
            }
            Some(_) => {}
            None => push(NewPoint { p: pts[verts[j]], s_m: s_m[verts[j]] }),
        }
        if j + 1 < verts.len() && in_group[j].is_none() && in_group[j + 1].is_none() {
            for i in verts[j] + 1..verts[j + 1] {
                push(NewPoint { p: pts[i], s_m: s_m[i] });
            }
        }
    }
    out
}

/// Cuts the new plan into the route's legs at the original leg boundaries (by original arc
/// length); the boundary point is shared. Altitude and every per-point profile (speed,
/// corridor, cross slope) are carried over by arc length; a lowered speed caps the profile. One
/// pass over the new points.
pub(super) fn split_into_legs(
    route: &Route,
    drive: &RouteDrive,
    s_m: &[f64],
    new: &[NewPoint],
    speeds: &[Option<f64>],
) -> Result<Route, RelaxError> {
    let first = leg_first_indices(route);
    let last_index = new.len().saturating_sub(1);
    let mut cut: Vec<usize> = vec![0];
    let mut i = 0usize;
    for &fi in first.iter().skip(1) {
        let sb = s_m.get(fi).copied().unwrap_or(0.0);
        while i < new.len() && new[i].s_m < sb - 1e-9 {
            i += 1;
        }
        cut.push(i.min(last_index));
    }
    cut.push(last_index);
    let has_alt = route.legs.iter().all(|l| l.altitude_m.is_some());
    let mut legs = Vec::with_capacity(route.legs.len());
    for (i, leg) in route.legs.iter().enumerate() {
        let (a, b) = (cut[i], cut[i + 1]);
        if b <= a {
            return Err(RelaxError::LegSwallowed { route: route.name.clone(), leg: i + 1 });
        }
        let slice = &new[a..=b];
        let (arc_m, leg_start_m) = (leg.arc_lengths_m(), s_m.get(first[i]).copied().unwrap_or(0.0));
        let stations: Vec<_> = slice.iter().map(|q| leg.station_at_arc_m(&arc_m, q.s_m - leg_start_m)).collect();
        let mut out = leg.resampled(&stations);
        out.points = slice.iter().map(|q| q.p).collect();
        // The new plan's points are all its own vertices (the fillets are the new curves).
        out.added_points = None;
        out.altitude_m = has_alt.then(|| slice.iter().map(|q| drive.plan.altitude_at(q.s_m).unwrap_or(0.0)).collect());
        if let Some(v) = speeds.get(i).copied().flatten() {
            match out.speeds_mps.take() {
                Some(profile) => out.set_speed_profile(profile.into_iter().map(|p| p.min(v)).collect()),
                None => out.speed_mps = Some(v),
            }
        }
        legs.push(out);
    }
    Ok(Route { legs, ..route.clone() })
}

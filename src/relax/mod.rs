//! Widening corners that are too tight for the terrain (`skidroute relax`).
//!
//! A route's plan is first simplified per leg (Ramer-Douglas-Peucker through the geo crate's
//! `SimplifyIdx`, tolerance [`RelaxSettings::simplify_tolerance_m`]) so the corners of dense
//! polylines show as vertices; leg boundaries are always kept. A vertex is a failing corner when
//! the plan's measured curvature near it (docs/method.md, Plan curvature, on the original plan) is above the caution
//! share (80 %) of the achievable curvature of the legs it touches. Each failing corner is
//! replaced by a circular fillet tangent to both simplified sides, with radius
//! 1 / ([`RelaxSettings::target_share`] x achievable), sampled at most a fifth of the curvature
//! scale apart so its measured curvature is the fillet's. When a side is too short for the
//! tangent length R tan(theta/2), the largest fillet that fits is used and the touching legs'
//! speed is lowered until it passes; if even [`RelaxSettings::min_speed_mps`] does not make it
//! pass, the corner is reported as not repairable and left as it was.
//!
//! Outside replaced stretches the plan keeps its original points exactly. Every change reports
//! its largest displacement from the original plan (directed distances both ways, i.e. the
//! Hausdorff distance of the changed stretch). The new path was not checked for obstacles.
//! Units: metres, seconds, radians inside; local frame of the route.

pub mod fillet;

use geo::{Distance, Euclidean, LineString, Point, SimplifyIdx};
use serde::Serialize;

use crate::assess::{kinematic_curvature_limit, CAUTION_CURVATURE_SHARE, CURVATURE_STEP_M};
use crate::rollout::{LegDrive, RouteDrive};
use crate::route::plan::dist;
use crate::route::{Route, DUPLICATE_POINT_M};
use crate::vehicle::Profile;

pub use fillet::{fillet, tangent_length_m, turning_angle_rad, Fillet};

/// Tuning of the repair.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct RelaxSettings {
    /// Points within this distance of the simplified line are dropped when finding corners.
    pub simplify_tolerance_m: f64,
    /// Share of the achievable curvature a fillet is sized for. Well below the 80 % caution
    /// share: the follower's transient curvature entering an arc, and the thrust it takes, run
    /// above the plan's steady value, and 0.6 left the demo's deep-snow corners passing where
    /// 0.75 still failed on outer-track thrust.
    pub target_share: f64,
    /// Lowest leg speed relax will propose.
    pub min_speed_mps: f64,
}

impl Default for RelaxSettings {
    fn default() -> Self {
        RelaxSettings { simplify_tolerance_m: 0.02, target_share: 0.6, min_speed_mps: 0.2 }
    }
}

/// A route could not be relaxed.
#[derive(Debug, thiserror::Error)]
pub enum RelaxError {
    #[error("route '{route}': leg {leg} would be left with fewer than 2 points after relaxing; the legs around it are too short")]
    LegSwallowed { route: String, leg: usize },
}

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
    /// Largest displacement of the plan at this change (Hausdorff distance of the stretch).
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

/// The outcome of relaxing one route.
#[derive(Debug, Clone)]
pub struct Relaxed {
    pub route: Route,
    pub changes: Vec<Change>,
    pub unrepaired: Vec<Unrepaired>,
    /// Largest displacement of the new plan from the original (max over changes; 0 if none).
    pub max_displacement_m: f64,
}

/// The traction/thrust/power curvature limit of a leg at `speed_mps` at the grade of the plan
/// at arc length `at_m`, where the turn is (docs/method.md, Achievable curvature and Effort).
/// The single place relax reads it.
pub fn traction_limit_per_m(drive: &RouteDrive, leg: &LegDrive, speed_mps: f64, at_m: f64) -> Option<f64> {
    let slope = crate::effort::Slope::new(drive.plan.grade_at(at_m), drive.plan.cross_slope_at(at_m));
    Some(crate::turn_limit::traction_curvature_limit(&drive.vehicle, &leg.ground, speed_mps, slope))
}

/// Achievable curvature of a leg at a speed (docs/method.md, Achievable curvature): kinematic limit, and the traction
/// limit where known.
pub fn achievable_per_m(drive: &RouteDrive, leg: usize, speed_mps: f64, at_m: f64) -> f64 {
    let Some(ld) = drive.legs.get(leg) else { return f64::INFINITY };
    let k = kinematic_curvature_limit(&drive.limits, &ld.controller, &ld.actual, speed_mps);
    traction_limit_per_m(drive, ld, speed_mps, at_m).map_or(k, |t| t.min(k))
}

/// A corner of the simplified plan.
struct Corner {
    /// Position in the simplified vertex list.
    j: usize,
    turn_rad: f64,
    kappa_per_m: f64,
    legs: Vec<usize>,
    failing: bool,
    /// Arc length of the vertex.
    at_m: f64,
}

/// Consecutive failing corners turning the same way, repaired as one corner at the
/// intersection of the side before the first and the side after the last (a dense curve is
/// one corner, not many small ones).
struct Group {
    /// First and last corner vertex (positions in the simplified vertex list).
    a: usize,
    b: usize,
    /// The virtual corner vertex: where the two outer sides meet (the vertex itself for one corner).
    x: [f64; 2],
    turn_rad: f64,
    kappa_per_m: f64,
    legs: Vec<usize>,
    /// Arc length of the tightest vertex of the group, where its traction limit is read.
    at_m: f64,
}

/// What to do at a failing corner group.
enum Plan {
    Fillet { fillet: Fillet, speed_mps: Option<f64> },
    Leave(String, f64, f64),
}

/// Relaxes every failing corner of a route. See the module documentation for the method.
///
/// ```
/// use skidroute::relax::{relax_route, RelaxSettings};
/// use skidroute::route::{Leg, Route, SourcePosition};
/// use skidroute::vehicle::Profile;
/// let points = vec![[0.0, 0.0], [30.0, 0.0], [30.0, 30.0]];
/// let leg = Leg { speed_mps: Some(1.2), ..Leg::new("deep-snow", points, SourcePosition::Line(2)) };
/// let route = Route { name: "r".into(), source: "r.csv".into(), origin: None, legs: vec![leg], warnings: vec![] };
/// let relaxed = relax_route(&route, &Profile::demo(), &RelaxSettings::default()).unwrap();
/// assert_eq!(relaxed.changes.len(), 1);
/// assert!(relaxed.changes[0].new_radius_m > relaxed.changes[0].old_radius_m);
/// ```
pub fn relax_route(route: &Route, profile: &Profile, settings: &RelaxSettings) -> Result<Relaxed, RelaxError> {
    let drive = RouteDrive::new(route, profile);
    let plan = &drive.plan;
    let pts = plan.points();
    let s_m = arc_lengths(pts);
    let first_index = leg_first_indices(route);
    let verts = simplified_vertices(pts, &first_index, settings.simplify_tolerance_m);
    let ach = |l: usize, at_m: f64| achievable_per_m(&drive, l, drive.legs[l].speed_mps, at_m);
    let corners = find_corners(&drive, &verts, &s_m, &ach);
    let vp = |j: usize| pts[verts[j]];
    let groups = group_corners(&corners, &vp);
    let spacing_m = (drive.curvature_scale_m / 5.0).min(0.1);
    let plans: Vec<Plan> = groups
        .iter()
        .enumerate()
        .map(|(g, group)| {
            let prev_adjacent = g.checked_sub(1).and_then(|p| groups.get(p)).is_some_and(|p| p.b + 1 == group.a);
            let next_adjacent = groups.get(g + 1).is_some_and(|n| n.a == group.b + 1);
            let share = |adjacent: bool| if adjacent { 0.5 } else { 1.0 };
            let room_in = dist(vp(group.a - 1), group.x) * share(prev_adjacent);
            let room_out = dist(group.x, vp(group.b + 1)) * share(next_adjacent);
            let corner = [vp(group.a - 1), group.x, vp(group.b + 1)];
            plan_corner(&drive, settings, group, room_in.min(room_out), &ach, corner, spacing_m)
        })
        .collect();
    build(route, &drive, &s_m, &verts, &groups, plans)
}

/// Groups consecutive failing corners that turn the same way; a group whose outer sides do not
/// meet ahead of it (or that turns back by about 180 degrees) is split into single corners.
fn group_corners(corners: &[Corner], vp: &dyn Fn(usize) -> [f64; 2]) -> Vec<Group> {
    let mut runs: Vec<Vec<&Corner>> = Vec::new();
    for c in corners.iter().filter(|c| c.failing) {
        match runs.last_mut() {
            Some(run) if run.last().is_some_and(|l| l.j + 1 == c.j && l.turn_rad.signum() == c.turn_rad.signum()) => {
                run.push(c)
            }
            _ => runs.push(vec![c]),
        }
    }
    let mut groups = Vec::new();
    for run in runs {
        match run_group(&run, vp) {
            Some(g) => groups.push(g),
            None => groups.extend(run.iter().filter_map(|c| run_group(&[*c], vp))),
        }
    }
    groups
}

fn run_group(run: &[&Corner], vp: &dyn Fn(usize) -> [f64; 2]) -> Option<Group> {
    let (first, last) = (run.first()?, run.last()?);
    let (a, b) = (first.j, last.j);
    let turn_rad: f64 = run.iter().map(|c| c.turn_rad).sum();
    if turn_rad.abs() >= std::f64::consts::PI - 0.05 {
        return None;
    }
    let x = if a == b {
        vp(a)
    } else {
        // Intersect p + l d1 (through the first corner) with q + m d2 (through the last).
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
        // The corner lies beyond the first vertex on the incoming side and before the last on
        // the outgoing side.
        if l < 1.0 - 1e-9 || m > 1e-9 {
            return None;
        }
        [p[0] + l * d1[0], p[1] + l * d1[1]]
    };
    let mut legs: Vec<usize> = run.iter().flat_map(|c| c.legs.iter().copied()).collect();
    legs.sort_unstable();
    legs.dedup();
    let (kappa_per_m, at_m) =
        run.iter()
            .map(|c| (c.kappa_per_m, c.at_m))
            .fold((0.0, first.at_m), |best, c| if c.0 > best.0 { c } else { best });
    Some(Group { a, b, x, turn_rad, kappa_per_m, legs, at_m })
}

/// Chooses the fillet radius and speed for one failing corner group.
fn plan_corner(
    drive: &RouteDrive,
    settings: &RelaxSettings,
    corner: &Group,
    room_m: f64,
    ach: &dyn Fn(usize, f64) -> f64,
    [a, v, b]: [[f64; 2]; 3],
    spacing_m: f64,
) -> Plan {
    let at_m = corner.at_m;
    let ach_min = corner.legs.iter().map(|&l| ach(l, at_m)).fold(f64::INFINITY, f64::min);
    let needed_m = 1.0 / (settings.target_share * ach_min);
    let half_tan = (0.5 * corner.turn_rad.abs()).tan();
    let room_radius_m = if half_tan > 0.0 { room_m / half_tan } else { f64::INFINITY };
    if needed_m <= room_radius_m {
        return match fillet(a, v, b, needed_m, spacing_m) {
            Some(f) => Plan::Fillet { fillet: f, speed_mps: None },
            None => Plan::Leave("the corner turns back on itself".into(), needed_m, room_radius_m),
        };
    }
    // The largest fillet that fits; find the highest speed at which it passes on every leg.
    let radius_m = room_radius_m * 0.999;
    let passes = |v_mps: f64| {
        corner.legs.iter().all(|&l| {
            let speed = v_mps.min(drive.legs[l].speed_mps);
            1.0 / radius_m <= settings.target_share * achievable_per_m(drive, l, speed, at_m)
        })
    };
    let v_max = corner.legs.iter().map(|&l| drive.legs[l].speed_mps).fold(0.0, f64::max);
    if !(radius_m > 0.0) || !passes(settings.min_speed_mps) {
        let why = format!(
            "the segments beside it leave room for a radius of {radius_m:.2} m, and even at {:.1} m/s the terrain needs more",
            settings.min_speed_mps
        );
        return Plan::Leave(why, needed_m, room_radius_m);
    }
    let (mut lo, mut hi) = (settings.min_speed_mps, v_max);
    for _ in 0..40 {
        let mid = 0.5 * (lo + hi);
        if passes(mid) {
            lo = mid;
        } else {
            hi = mid;
        }
    }
    // Round down to 0.05 m/s so the proposed speed is a plain number that still passes.
    let speed = ((lo / 0.05).floor() * 0.05).max(settings.min_speed_mps);
    match fillet(a, v, b, radius_m, spacing_m) {
        Some(f) => Plan::Fillet { fillet: f, speed_mps: Some(speed) },
        None => Plan::Leave("the corner turns back on itself".into(), needed_m, room_radius_m),
    }
}

fn arc_lengths(pts: &[[f64; 2]]) -> Vec<f64> {
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
fn leg_first_indices(route: &Route) -> Vec<usize> {
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

/// Indices of the simplified plan's vertices: RDP per leg, leg boundaries always kept.
fn simplified_vertices(pts: &[[f64; 2]], first_index: &[usize], tolerance_m: f64) -> Vec<usize> {
    let mut verts: Vec<usize> = Vec::new();
    for (k, &a) in first_index.iter().enumerate() {
        let b = first_index.get(k + 1).copied().unwrap_or(pts.len().saturating_sub(1));
        if b <= a {
            continue;
        }
        let ls: LineString<f64> = pts[a..=b].iter().map(|p| (p[0], p[1])).collect();
        for i in ls.simplify_idx(tolerance_m) {
            let idx = a + i;
            if verts.last() != Some(&idx) {
                verts.push(idx);
            }
        }
    }
    verts
}

/// Every interior simplified vertex with its turn, measured curvature and whether it fails.
fn find_corners(drive: &RouteDrive, verts: &[usize], s_m: &[f64], ach: &dyn Fn(usize, f64) -> f64) -> Vec<Corner> {
    let plan = &drive.plan;
    let pts = plan.points();
    let scale_m = drive.curvature_scale_m;
    let total_m = plan.length_m();
    (1..verts.len().saturating_sub(1))
        .filter_map(|j| {
            let turn_rad = turning_angle_rad(pts[verts[j - 1]], pts[verts[j]], pts[verts[j + 1]])?;
            let s_v = s_m[verts[j]];
            // The measured curvature within one scale of the vertex, on the original plan.
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

/// A point of the new plan with the arc length of the original plan it stands for.
#[derive(Clone, Copy)]
struct NewPoint {
    p: [f64; 2],
    s_m: f64,
}

/// Arc length on the original plan of a point `u` metres along the simplified segment j..j+1
/// (clamped to the segment).
fn s_on_segment(pts: &[[f64; 2]], verts: &[usize], s_m: &[f64], j: usize, u_m: f64) -> f64 {
    let (a, b) = (verts[j], verts[j + 1]);
    let len = dist(pts[a], pts[b]);
    let f = if len > 0.0 { (u_m / len).clamp(0.0, 1.0) } else { 0.0 };
    s_m[a] + f * (s_m[b] - s_m[a])
}

fn build(
    route: &Route,
    drive: &RouteDrive,
    s_m: &[f64],
    verts: &[usize],
    groups: &[Group],
    plans: Vec<Plan>,
) -> Result<Relaxed, RelaxError> {
    let pts = drive.plan.points();
    let mut unrepaired = Vec::new();
    let mut speeds: Vec<Option<f64>> = vec![None; route.legs.len()];
    let mut repaired: Vec<(&Group, &Fillet, Option<f64>)> = Vec::new();
    for (g, plan) in groups.iter().zip(plans.iter()) {
        match plan {
            Plan::Fillet { fillet, speed_mps } => {
                if let Some(sp) = speed_mps {
                    for &l in &g.legs {
                        let cur = speeds[l].unwrap_or(drive.legs[l].speed_mps);
                        speeds[l] = Some(cur.min(*sp));
                    }
                }
                repaired.push((g, fillet, *speed_mps));
            }
            Plan::Leave(reason, needed_m, room_m) => unrepaired.push(Unrepaired {
                at_m: s_m[verts[g.a]],
                x_m: g.x[0],
                y_m: g.x[1],
                legs: g.legs.iter().map(|l| l + 1).collect(),
                turn_deg: g.turn_rad.to_degrees(),
                old_radius_m: 1.0 / g.kappa_per_m,
                needed_radius_m: *needed_m,
                room_radius_m: *room_m,
                reason: reason.clone(),
            }),
        }
    }
    let fillets: Vec<(&Group, &Fillet)> = repaired.iter().map(|(g, f, _)| (*g, *f)).collect();
    let new_points = new_polyline(pts, s_m, verts, &fillets);
    let mut changes = Vec::new();
    for (g, f, speed) in repaired {
        let (from_m, to_m) = (s_m[verts[g.a - 1]], s_m[verts[g.b + 1]]);
        let old_speed = g.legs.iter().map(|&l| drive.legs[l].speed_mps).fold(0.0, f64::max);
        changes.push(Change {
            at_m: 0.5 * (s_m[verts[g.a]] + s_m[verts[g.b]]),
            x_m: g.x[0],
            y_m: g.x[1],
            legs: g.legs.iter().map(|l| l + 1).collect(),
            turn_deg: f.turn_rad.to_degrees(),
            old_radius_m: 1.0 / g.kappa_per_m,
            new_radius_m: f.radius_m,
            old_speed_mps: old_speed,
            new_speed_mps: speed,
            max_displacement_m: stretch_displacement_m(pts, s_m, &new_points, from_m, to_m),
        });
    }
    let max_displacement_m = changes.iter().map(|c| c.max_displacement_m).fold(0.0, f64::max);
    let route = split_into_legs(route, drive, s_m, &new_points, &speeds)?;
    Ok(Relaxed { route, changes, unrepaired, max_displacement_m })
}

/// The new plan: original points between untouched vertices, straight simplified sides and
/// fillets in place of repaired corner groups. Near-duplicate points are dropped.
fn new_polyline(pts: &[[f64; 2]], s_m: &[f64], verts: &[usize], fillets: &[(&Group, &Fillet)]) -> Vec<NewPoint> {
    let mut in_group: Vec<Option<usize>> = vec![None; verts.len()];
    for (k, (g, _)) in fillets.iter().enumerate() {
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
            Some((g, f)) if g.a == j => {
                let (a, b) = (g.a, g.b);
                let u_in = dist(pts[verts[a - 1]], g.x) - f.tangent_length_m;
                let s0 = s_on_segment(pts, verts, s_m, a - 1, u_in);
                let u_out = f.tangent_length_m - dist(g.x, pts[verts[b]]);
                let s1 = s_on_segment(pts, verts, s_m, b, u_out);
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

/// Largest displacement between the original and new plan over original arc lengths
/// [from_m, to_m]: directed distances both ways, each against the other plan a little beyond
/// the stretch (so it is never smaller than the true Hausdorff distance of the stretch).
fn stretch_displacement_m(pts: &[[f64; 2]], s_m: &[f64], new: &[NewPoint], from_m: f64, to_m: f64) -> f64 {
    const SAMPLE_M: f64 = 0.02;
    let margin_m = 0.25 * (to_m - from_m);
    let orig_in = |a: f64, b: f64| -> Vec<[f64; 2]> {
        (0..pts.len()).filter(|&i| s_m[i] >= a - 1e-9 && s_m[i] <= b + 1e-9).map(|i| pts[i]).collect()
    };
    let new_in = |a: f64, b: f64| -> Vec<[f64; 2]> {
        new.iter().filter(|q| q.s_m >= a - 1e-9 && q.s_m <= b + 1e-9).map(|q| q.p).collect()
    };
    let directed = |from: &[[f64; 2]], to: &[[f64; 2]]| -> f64 {
        if from.is_empty() || to.len() < 2 {
            return 0.0;
        }
        let target: LineString<f64> = to.iter().map(|p| (p[0], p[1])).collect();
        let mut worst = 0.0_f64;
        for w in from.windows(2).chain(std::iter::once(&from[from.len() - 1..])) {
            let (a, b) = (w[0], *w.last().unwrap_or(&w[0]));
            let n = (dist(a, b) / SAMPLE_M).ceil().max(1.0) as usize;
            for k in 0..=n {
                let t = k as f64 / n as f64;
                let p = Point::new(a[0] + t * (b[0] - a[0]), a[1] + t * (b[1] - a[1]));
                worst = worst.max(Euclidean.distance(&p, &target));
            }
        }
        worst
    };
    let o2n = directed(&orig_in(from_m, to_m), &new_in(from_m - margin_m, to_m + margin_m));
    let n2o = directed(&new_in(from_m, to_m), &orig_in(from_m - margin_m, to_m + margin_m));
    o2n.max(n2o)
}

/// Cuts the new plan into the route's legs at the original leg boundaries (by original arc
/// length); the boundary point is shared. Altitude and every per-point profile (speed,
/// corridor, cross slope) are carried over by arc length; a lowered speed caps the profile.
fn split_into_legs(
    route: &Route,
    drive: &RouteDrive,
    s_m: &[f64],
    new: &[NewPoint],
    speeds: &[Option<f64>],
) -> Result<Route, RelaxError> {
    let first = leg_first_indices(route);
    let n_legs = route.legs.len();
    let mut cut: Vec<usize> = vec![0];
    for &fi in first.iter().skip(1) {
        let sb = s_m.get(fi).copied().unwrap_or(0.0);
        cut.push(new.iter().position(|q| q.s_m >= sb - 1e-9).unwrap_or(new.len().saturating_sub(1)));
    }
    cut.push(new.len().saturating_sub(1));
    let has_alt = route.legs.iter().all(|l| l.altitude_m.is_some());
    let mut legs = Vec::with_capacity(n_legs);
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

#[cfg(test)]
mod tests;

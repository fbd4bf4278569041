//! Widening corners that are too tight for the terrain (`skidroute relax`).
//!
//! A route's plan is first simplified per leg (Ramer-Douglas-Peucker through the geo crate's
//! `SimplifyIdx`, tolerance [`RelaxSettings::simplify_tolerance_m`]) so the corners of dense
//! polylines show as vertices; leg boundaries are always kept. A vertex is a failing corner when
//! the plan's measured curvature near it (docs/method.md, Plan curvature, on the original plan)
//! is above the caution share (80 %) of the achievable curvature of the legs it touches
//! (`corners.rs`). Each failing corner gets its own circular fillet tangent to both simplified
//! sides, with radius 1 / ([`RelaxSettings::target_share`] x achievable), sampled at most a fifth
//! of the curvature scale apart so its measured curvature is the fillet's (`fillet.rs`); only
//! neighbouring corners whose tangent points would overlap are filleted as one. When a side is
//! too short for the tangent length R tan(theta/2), the largest fillet that fits is used and the
//! touching legs' speed is lowered until it passes; if even [`RelaxSettings::min_speed_mps`] does
//! not make it pass, the corner is reported as not repairable and left as it was (`repair.rs`).
//!
//! Outside replaced stretches the plan keeps its original points exactly (`path.rs`). Every
//! change reports its own largest displacement from the original plan, the Hausdorff distance of
//! the stretch it replaced (`changes.rs`). The new path was not checked for obstacles. The work
//! is linear in the number of corners (`cargo run --release --example bench_relax`).
//! Units: metres, seconds, radians inside; local frame of the route.

mod changes;
mod corners;
pub mod fillet;
mod path;
mod repair;

use crate::assess::kinematic_curvature_limit;
use crate::rollout::{LegDrive, RouteDrive};
use crate::route::Route;
use crate::vehicle::Profile;

pub use changes::{Change, Unrepaired};
pub use fillet::{fillet, tangent_length_m, turning_angle_rad, Fillet};

use changes::Repaired;
use corners::Group;
use repair::Plan;

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

/// The speed planned on leg `leg` at arc length `at_m` of the plan: the leg's per-point profile
/// at its first plan point at or after `at_m` (its last point beyond), else the leg's speed.
pub(crate) fn planned_speed_mps(drive: &RouteDrive, leg: usize, at_m: f64) -> f64 {
    let (mut lo, mut hi) = drive.plan.leg_point_range(leg);
    while lo < hi {
        let mid = lo + (hi - lo) / 2;
        if drive.plan.point_s_m(mid) < at_m - 1e-9 {
            lo = mid + 1;
        } else {
            hi = mid;
        }
    }
    drive.speeds.speed_at_point(&drive.plan, leg, lo)
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
    let pts = drive.plan.points();
    let s_m = path::arc_lengths(pts);
    let verts = corners::simplified_vertices(pts, &path::leg_first_indices(route), settings.simplify_tolerance_m);
    // Achievable curvature of leg `l` at the speed planned where a turn is (arc length `at_m`:
    // a per-point speed profile is read there), at the grade there.
    let ach = |l: usize, at_m: f64| achievable_per_m(&drive, l, planned_speed_mps(&drive, l, at_m), at_m);
    let found = corners::find_corners(&drive, &verts, &s_m, &ach);
    let vp = |j: usize| pts[verts[j]];
    let needed_radius_m = |legs: &[usize], at_m: f64| {
        let ach_min = legs.iter().map(|&l| ach(l, at_m)).fold(f64::INFINITY, f64::min);
        1.0 / (settings.target_share * ach_min)
    };
    let groups = corners::group_corners(&found, &vp, &needed_radius_m);
    let spacing_m = (drive.curvature_scale_m / 5.0).min(0.1);
    let plans = repair::plan_groups(&drive, settings, &groups, &vp, spacing_m);
    build(route, &drive, &s_m, &verts, &groups, plans)
}

/// The relaxed route and its report from the chosen repair of every group.
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
    let mut repaired: Vec<Repaired> = Vec::new();
    for (g, plan) in groups.iter().zip(plans.iter()) {
        match plan {
            Plan::Fillet { fillet, speed_mps } => {
                if let Some(sp) = speed_mps {
                    for &l in &g.legs {
                        let cur = speeds[l].unwrap_or(drive.legs[l].speed_mps);
                        speeds[l] = Some(cur.min(*sp));
                    }
                }
                let span_m = path::fillet_span_m(pts, s_m, verts, g, fillet);
                repaired.push(Repaired { group: g, fillet, speed_mps: *speed_mps, span_m });
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
    let fillets: Vec<_> = repaired.iter().map(|r| (r.group, r.fillet, r.span_m)).collect();
    let new_points = path::new_polyline(pts, s_m, verts, &fillets);
    let orig = changes::Original { pts, s_m, verts };
    let changes = changes::changes(&orig, &new_points, &repaired, &|l| drive.legs[l].speed_mps);
    let max_displacement_m = changes.iter().map(|c| c.max_displacement_m).fold(0.0, f64::max);
    let route = path::split_into_legs(route, drive, s_m, &new_points, &speeds)?;
    Ok(Relaxed { route, changes, unrepaired, max_displacement_m })
}

#[cfg(test)]
mod tests;

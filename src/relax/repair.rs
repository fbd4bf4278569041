//! Choosing the repair of each failing corner: the fillet radius the terrain asks for, the room
//! the sides leave for its tangent points, and, where the room is too short, the largest fillet
//! that fits with the highest leg speed at which it passes. Local metres, seconds, radians.

use super::corners::{shared_side_m, Group};
use super::fillet::{fillet, Fillet};
use super::{achievable_per_m, RelaxSettings};
use crate::rollout::RouteDrive;
use crate::route::plan::dist;

/// What to do at a failing corner group.
pub(super) enum Plan {
    Fillet {
        fillet: Fillet,
        speed_mps: Option<f64>,
    },
    /// Left as it was: the reason, the needed radius and the radius the sides leave room for.
    Leave(String, f64, f64),
}

/// The room along one side for a group's tangent point. Against a neighbouring group the side
/// is shared: when both needed fillets fit, this group gets what the neighbour's leaves;
/// otherwise (neighbours that could not be merged) the side is split in proportion to the
/// tangent lengths they need.
fn room_beside(side_m: f64, own_tangent_m: f64, neighbour_tangent_m: Option<f64>) -> f64 {
    match neighbour_tangent_m {
        None => side_m,
        Some(t) if own_tangent_m + t <= side_m => side_m - t,
        Some(t) if own_tangent_m + t > 0.0 => side_m * own_tangent_m / (own_tangent_m + t),
        Some(_) => 0.5 * side_m,
    }
}

/// The repair of every group, in order.
pub(super) fn plan_groups(
    drive: &RouteDrive,
    settings: &RelaxSettings,
    groups: &[Group],
    vp: &dyn Fn(usize) -> [f64; 2],
    spacing_m: f64,
) -> Vec<Plan> {
    groups
        .iter()
        .enumerate()
        .map(|(k, g)| {
            let prev = k.checked_sub(1).and_then(|p| groups.get(p)).filter(|p| p.b + 1 == g.a);
            let next = groups.get(k + 1).filter(|n| n.a == g.b + 1);
            let own_t = g.needed_tangent_m();
            let room_in = match prev {
                Some(p) => room_beside(shared_side_m(p, g, vp), own_t, Some(p.needed_tangent_m())),
                None => dist(vp(g.a - 1), g.x),
            };
            let room_out = match next {
                Some(n) => room_beside(shared_side_m(g, n, vp), own_t, Some(n.needed_tangent_m())),
                None => dist(g.x, vp(g.b + 1)),
            };
            let corner = [vp(g.a - 1), g.x, vp(g.b + 1)];
            plan_corner(drive, settings, g, room_in.min(room_out), corner, spacing_m)
        })
        .collect()
}

/// Chooses the fillet radius and speed for one failing corner group.
fn plan_corner(
    drive: &RouteDrive,
    settings: &RelaxSettings,
    corner: &Group,
    room_m: f64,
    [a, v, b]: [[f64; 2]; 3],
    spacing_m: f64,
) -> Plan {
    let needed_m = corner.needed_radius_m;
    let half_tan = (0.5 * corner.turn_rad.abs()).tan();
    let room_radius_m = if half_tan > 0.0 { room_m.max(0.0) / half_tan } else { f64::INFINITY };
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
            let speed = v_mps.min(super::planned_speed_mps(drive, l, corner.at_m));
            1.0 / radius_m <= settings.target_share * achievable_per_m(drive, l, speed, corner.at_m)
        })
    };
    let v_max = corner.legs.iter().map(|&l| super::planned_speed_mps(drive, l, corner.at_m)).fold(0.0, f64::max);
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

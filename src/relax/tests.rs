use std::path::PathBuf;

use approx::assert_relative_eq;
use geo::{Distance, Euclidean, LineString, Point};

use super::*;
use crate::assess::{Verdict, CAUTION_CURVATURE_SHARE};
use crate::check::check_route;
use crate::route::plan::dist;
use crate::route::{Leg, SourcePosition};

fn leg(points: Vec<[f64; 2]>, terrain: &str, speed_mps: f64) -> Leg {
    Leg { speed_mps: Some(speed_mps), corridor_m: Some(1.0), ..Leg::new(terrain, points, SourcePosition::Line(2)) }
}

fn route(legs: Vec<Leg>) -> Route {
    Route { name: "r".into(), source: PathBuf::from("r.csv"), origin: None, legs, warnings: Vec::new() }
}

/// Largest distance from any point of `a` (sampled every 2 cm) to the polyline `b`.
fn directed_m(a: &[[f64; 2]], b: &[[f64; 2]]) -> f64 {
    let target: LineString<f64> = b.iter().map(|p| (p[0], p[1])).collect();
    let mut worst = 0.0_f64;
    for w in a.windows(2) {
        let n = (dist(w[0], w[1]) / 0.02).ceil() as usize;
        for k in 0..=n {
            let t = k as f64 / n as f64;
            let p = Point::new(w[0][0] + t * (w[1][0] - w[0][0]), w[0][1] + t * (w[1][1] - w[0][1]));
            worst = worst.max(Euclidean.distance(&p, &target));
        }
    }
    worst
}

fn all_points(r: &Route) -> Vec<[f64; 2]> {
    crate::route::PlanPath::new(r).points().to_vec()
}

fn curvature_ok(r: &Route, profile: &Profile) -> bool {
    let checked = check_route(r.clone(), profile);
    checked
        .report
        .legs
        .iter()
        .all(|l| l.achievable_curvature_per_m.is_none_or(|a| l.required_curvature_per_m <= CAUTION_CURVATURE_SHARE * a))
}

/// A zig-zag of right-angle corners on deep snow: every corner fails at 1.2 m/s. After relaxing
/// the route passes, and no point of either plan is farther from the other than reported.
#[test]
fn relax_makes_a_sharp_cornered_route_pass_and_reports_its_largest_displacement() {
    let profile = Profile::demo();
    let pts = vec![[0.0, 0.0], [25.0, 0.0], [25.0, 25.0], [50.0, 25.0], [50.0, 0.0], [75.0, 0.0]];
    // Dense input: points every 0.25 m along the sides, so simplification must find the corners.
    let mut dense = vec![pts[0]];
    for w in pts.windows(2) {
        let n = (dist(w[0], w[1]) / 0.25).round() as usize;
        for k in 1..=n {
            let t = k as f64 / n as f64;
            dense.push([w[0][0] + t * (w[1][0] - w[0][0]), w[0][1] + t * (w[1][1] - w[0][1])]);
        }
    }
    let original = route(vec![leg(dense, "deep-snow", 1.2)]);
    let before = check_route(original.clone(), &profile);
    assert_eq!(before.report.verdict, Verdict::Fail);
    let relaxed = relax_route(&original, &profile, &RelaxSettings::default()).expect("relax");
    assert_eq!(relaxed.changes.len(), 4, "{:?}", relaxed.unrepaired);
    assert!(relaxed.unrepaired.is_empty());
    for c in &relaxed.changes {
        assert!((c.turn_deg.abs() - 90.0).abs() < 1e-6);
        assert!(c.new_radius_m > c.old_radius_m);
        assert!(c.new_speed_mps.is_none());
    }
    let after = check_route(relaxed.route.clone(), &profile);
    assert_ne!(after.report.verdict, Verdict::Fail, "{:#?}", after.report.legs);
    assert!(curvature_ok(&relaxed.route, &profile));
    let (a, b) = (all_points(&original), all_points(&relaxed.route));
    let true_m = directed_m(&a, &b).max(directed_m(&b, &a));
    assert!(true_m <= relaxed.max_displacement_m + 1e-9, "true {true_m} > reported {}", relaxed.max_displacement_m);
    assert!(relaxed.max_displacement_m > 0.1, "a fillet moves the corner");
    // Ends stay where they were.
    assert_eq!(b.first(), a.first());
    assert_eq!(b.last(), a.last());
}

/// A corner at a leg boundary (terrain change) is filleted across both legs; the boundary
/// moves onto the fillet and the legs still join.
#[test]
fn corner_at_a_leg_boundary_is_shared_by_both_legs() {
    let profile = Profile::demo();
    let r = route(vec![
        leg(vec![[0.0, 0.0], [30.0, 0.0]], "grass", 1.2),
        leg(vec![[30.0, 0.0], [30.0, 30.0]], "deep-snow", 1.2),
    ]);
    let relaxed = relax_route(&r, &profile, &RelaxSettings::default()).expect("relax");
    assert_eq!(relaxed.changes.len(), 1);
    assert_eq!(relaxed.changes[0].legs, vec![1, 2]);
    let legs = &relaxed.route.legs;
    assert_eq!(legs.len(), 2);
    assert_eq!(legs[0].points.last(), legs[1].points.first());
    assert!(legs[0].points.len() > 3 && legs[1].points.len() > 3);
    assert!(curvature_ok(&relaxed.route, &profile));
}

/// Sides too short for the needed tangent length: the fillet that fits is used and the speed
/// lowered; with sides that leave almost no room the corner is reported as not repairable.
#[test]
fn short_sides_lower_the_speed_or_leave_the_corner_unrepaired() {
    let profile = Profile::demo();
    let r = route(vec![leg(vec![[0.0, 0.0], [3.0, 0.0], [3.0, 3.0]], "deep-snow", 1.8)]);
    let relaxed = relax_route(&r, &profile, &RelaxSettings::default()).expect("relax");
    if let Some(c) = relaxed.changes.first() {
        let v = c.new_speed_mps.expect("speed lowered");
        assert!(v < 1.8 && v >= 0.2);
        assert_eq!(relaxed.route.legs[0].speed_mps, Some(v));
        assert!(curvature_ok(&relaxed.route, &profile));
    } else {
        assert_eq!(relaxed.unrepaired.len(), 1);
    }
    // A 0.2 m jog between two right angles: no room for any fillet that deep snow allows.
    let tiny = route(vec![leg(vec![[0.0, 0.0], [10.0, 0.0], [10.0, 0.2], [20.0, 0.2]], "deep-snow", 1.2)]);
    let relaxed = relax_route(&tiny, &profile, &RelaxSettings::default()).expect("relax");
    assert!(relaxed.changes.is_empty(), "{:?}", relaxed.changes);
    assert_eq!(relaxed.unrepaired.len(), 2);
    assert!(relaxed.unrepaired[0].reason.contains("room"), "{}", relaxed.unrepaired[0].reason);
    assert_eq!(relaxed.route, tiny, "an unrepairable corner is left as it was");
}

#[test]
fn passing_routes_are_left_alone() {
    let profile = Profile::demo();
    let r = route(vec![leg(vec![[0.0, 0.0], [30.0, 0.0], [60.0, 1.0]], "asphalt", 1.0)]);
    let relaxed = relax_route(&r, &profile, &RelaxSettings::default()).expect("relax");
    assert!(relaxed.changes.is_empty() && relaxed.unrepaired.is_empty());
    assert_eq!(relaxed.route, r);
    assert_eq!(relaxed.max_displacement_m, 0.0);
}

/// Distance from `p` to the polyline `line` (geo's Euclidean point-to-linestring distance).
fn to_line_m(p: [f64; 2], line: &[[f64; 2]]) -> f64 {
    let target: LineString<f64> = line.iter().map(|q| (q[0], q[1])).collect();
    Euclidean.distance(&Point::new(p[0], p[1]), &target)
}

/// Two corners 100 m apart on deep snow, 60 deg then 30 deg the same way: their fillets do not
/// overlap, so each gets its own, and each reports its own displacement. The expected value is
/// plane geometry (see `fillet::tangent_length_m`): a corner of turn theta filleted at radius r
/// moves the plan by r (1/cos(theta/2) - 1), at the vertex.
#[test]
fn corners_far_apart_get_their_own_fillets_and_displacements() {
    let profile = Profile::demo();
    let (h1, h2) = (60.0_f64.to_radians(), 90.0_f64.to_radians());
    let p1 = [50.0, 0.0];
    let p2 = [p1[0] + 100.0 * h1.cos(), p1[1] + 100.0 * h1.sin()];
    let p3 = [p2[0] + 50.0 * h2.cos(), p2[1] + 50.0 * h2.sin()];
    let original = route(vec![leg(vec![[0.0, 0.0], p1, p2, p3], "deep-snow", 1.2)]);
    let relaxed = relax_route(&original, &profile, &RelaxSettings::default()).expect("relax");
    assert!(relaxed.unrepaired.is_empty(), "{:?}", relaxed.unrepaired);
    assert_eq!(relaxed.changes.len(), 2, "{:#?}", relaxed.changes);
    let new_plan = all_points(&relaxed.route);
    for (c, turn_deg, vertex) in [(&relaxed.changes[0], 60.0_f64, p1), (&relaxed.changes[1], 30.0, p2)] {
        assert_relative_eq!(c.turn_deg, turn_deg, epsilon = 1e-9);
        assert_relative_eq!(c.x_m, vertex[0], epsilon = 1e-9);
        assert_relative_eq!(c.y_m, vertex[1], epsilon = 1e-9);
        let expected = c.new_radius_m * (1.0 / (0.5 * turn_deg.to_radians()).cos() - 1.0);
        assert_relative_eq!(c.max_displacement_m, expected, epsilon = 2e-3);
        // The vertex is where the plan moved most: its distance to the new plan.
        assert_relative_eq!(to_line_m(vertex, &new_plan), expected, epsilon = 1e-3);
    }
    assert!(relaxed.changes[0].max_displacement_m > 3.0 * relaxed.changes[1].max_displacement_m);
    // The straight between the fillets is kept: its midpoint is still on the plan.
    let mid = [0.5 * (p1[0] + p2[0]), 0.5 * (p1[1] + p2[1])];
    assert!(to_line_m(mid, &new_plan) < 1e-9);
}

/// Two 45 deg corners 2 m apart turning the same way: the fillets deep snow needs would
/// overlap on the 2 m side, so they are filleted as one 90 deg corner at the intersection of
/// the outer sides.
#[test]
fn corners_whose_fillets_overlap_are_filleted_as_one() {
    let profile = Profile::demo();
    let h = 45.0_f64.to_radians();
    let p1 = [40.0, 0.0];
    let p2 = [p1[0] + 2.0 * h.cos(), p1[1] + 2.0 * h.sin()];
    let p3 = [p2[0], p2[1] + 40.0];
    let original = route(vec![leg(vec![[0.0, 0.0], p1, p2, p3], "deep-snow", 1.2)]);
    let relaxed = relax_route(&original, &profile, &RelaxSettings::default()).expect("relax");
    assert_eq!(relaxed.changes.len(), 1, "{:#?}", relaxed.changes);
    let c = &relaxed.changes[0];
    assert_relative_eq!(c.turn_deg, 90.0, epsilon = 1e-9);
    // The outer sides (y = 0 and x = p2.x) meet at (p2.x, 0).
    assert_relative_eq!(c.x_m, p2[0], epsilon = 1e-9);
    assert_relative_eq!(c.y_m, 0.0, epsilon = 1e-9);
}

/// With a planner's speed profile, a corner's fillet is sized for the speed planned at the
/// corner (as the check judges the turn there), not for the leg's top speed: an L on gravel
/// (where the yaw-rate limit, omega_max / v, sets the radius) planned at 1.5 m/s but slowed to
/// 0.5 m/s around the corner gets the fillet of the same L planned at 0.5 m/s throughout, and
/// a tighter one than at 1.5 m/s.
#[test]
fn fillets_are_sized_for_the_speed_planned_at_the_corner() {
    let profile = Profile::demo();
    let mut pts = Vec::new();
    for k in 0..=120 {
        pts.push([k as f64 * 0.25, 0.0]);
    }
    for k in 1..=120 {
        pts.push([30.0, k as f64 * 0.25]);
    }
    let slow_near_corner: Vec<f64> = pts.iter().map(|p| if dist(*p, [30.0, 0.0]) < 6.0 { 0.5 } else { 1.5 }).collect();
    let mut profiled = leg(pts.clone(), "gravel", 1.5);
    profiled.set_speed_profile(slow_near_corner);
    let radius = |l: Leg| {
        let relaxed = relax_route(&route(vec![l]), &profile, &RelaxSettings::default()).expect("relax");
        assert_eq!(relaxed.changes.len(), 1, "{:?}", relaxed.unrepaired);
        relaxed.changes[0].new_radius_m
    };
    let (with_profile, slow, fast) =
        (radius(profiled), radius(leg(pts.clone(), "gravel", 0.5)), radius(leg(pts, "gravel", 1.5)));
    assert_relative_eq!(with_profile, slow, max_relative = 1e-9);
    assert!(with_profile < 0.5 * fast, "{with_profile} m against {fast} m at 1.5 m/s");
}

/// A planner that slows for a corner: relax reads the speed planned at the corner, not the leg's
/// top speed. A 90 deg arc of radius 2 m on gravel between straights driven at 1.5 m/s: at that
/// speed the arc is too tight (relax widens it, and `check` agrees it is tight); with the profile
/// slowing to 0.3 m/s through the arc, `check` finds the arc within the caution share and relax
/// leaves the route as it is.
#[test]
fn relax_reads_the_speed_planned_at_the_corner() {
    let profile = Profile::demo();
    let radius_m = 2.0;
    let mut pts: Vec<[f64; 2]> = (0..=100).map(|i| [-20.0 + 0.2 * f64::from(i), 0.0]).collect();
    for k in 1..=40 {
        let a = std::f64::consts::FRAC_PI_2 * f64::from(k) / 40.0;
        pts.push([radius_m * a.sin(), radius_m * (1.0 - a.cos())]);
    }
    for i in 1..=100 {
        pts.push([radius_m, radius_m + 0.2 * f64::from(i)]);
    }
    let fast = route(vec![leg(pts.clone(), "gravel", 1.5)]);
    assert!(!curvature_ok(&fast, &profile), "the arc must be tight at 1.5 m/s for this test to mean anything");
    let relaxed = relax_route(&fast, &profile, &RelaxSettings::default()).expect("relax");
    assert_eq!(relaxed.changes.len(), 1, "{:?}", relaxed.unrepaired);
    // Slow from 5 m before the arc to 5 m after it (the straights are 0.2 m apart).
    let speeds: Vec<f64> = (0..pts.len()).map(|i| if (75..=165).contains(&i) { 0.3 } else { 1.5 }).collect();
    let mut slow_leg = leg(pts, "gravel", 1.5);
    slow_leg.set_speed_profile(speeds);
    let slow = route(vec![slow_leg]);
    assert!(curvature_ok(&slow, &profile), "at 0.3 m/s the arc is within the caution share");
    let relaxed = relax_route(&slow, &profile, &RelaxSettings::default()).expect("relax");
    assert!(relaxed.changes.is_empty(), "{:?}", relaxed.changes);
}

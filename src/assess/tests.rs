//! Verdict rules of `assess` (docs/method.md, Verdicts), each with the value it turns on derived
//! here from a closed form, never read back from the code under test.

use std::path::PathBuf;

use approx::assert_relative_eq;

use super::*;
use crate::check::check_route;
use crate::effort::STANDARD_GRAVITY_MPS2;
use crate::kinematics::{ExtendedSymmetric, Model};
use crate::route::{Leg, Route, SourcePosition};
use crate::vehicle::Profile;

/// The demo vehicle (m = 480 kg, B = 0.9 m, l = 1.1 m) with ideal kinematics on every terrain, a
/// generous yaw-rate clamp and ample power, so the rule under test is the only one that binds.
fn profile() -> Profile {
    let mut p = Profile::demo();
    let b = p.vehicle.track_width_m;
    for t in p.terrain.values_mut() {
        t.model = Model::ideal(b);
    }
    p.vehicle.max_yaw_rate_radps = 10.0;
    p.vehicle.max_power_w = 1e6;
    p.vehicle.max_side_thrust_n = 1e6;
    p.vehicle.battery_wh = None;
    p
}

fn leg(points: Vec<[f64; 2]>, terrain: &str, speed_mps: f64, corridor_m: f64) -> Leg {
    Leg {
        speed_mps: Some(speed_mps),
        corridor_m: Some(corridor_m),
        ..Leg::new(terrain, points, SourcePosition::Line(2))
    }
}

fn route(legs: Vec<Leg>) -> Route {
    Route { name: "t".into(), source: PathBuf::from("t.csv"), origin: None, legs, warnings: Vec::new() }
}

/// Straight lead-in of 20 m along +x, an arc of radius `r_m` turning left by `turn_rad` sampled
/// every 0.25 m, and a straight lead-out of 20 m.
fn arc(r_m: f64, turn_rad: f64) -> Vec<[f64; 2]> {
    let mut pts: Vec<[f64; 2]> = (0..=80).map(|i| [-20.0 + 0.25 * i as f64, 0.0]).collect();
    let n = (r_m * turn_rad / 0.25).ceil() as usize;
    pts.extend((1..=n).map(|i| {
        let a = turn_rad * i as f64 / n as f64;
        [r_m * a.sin(), r_m - r_m * a.cos()]
    }));
    let end = [r_m * turn_rad.sin(), r_m - r_m * turn_rad.cos()];
    pts.extend(
        (1..=80).map(|i| [end[0] + 0.25 * i as f64 * turn_rad.cos(), end[1] + 0.25 * i as f64 * turn_rad.sin()]),
    );
    pts
}

/// Deep snow's traction radius on the level (Wong 2008 steerability: f_r + mu_t l / (2B) = mu
/// with mu_t = mu_max / (0.925 + 0.15 R / B); f_r 0.15, mu 0.25, mu_max 0.3, B 0.9, l 1.1).
fn deep_snow_radius_m() -> f64 {
    let mu_t = (0.25 - 0.15) * 2.0 * 0.9 / 1.1;
    (0.9 / 0.15) * (0.3 / mu_t - 0.925)
}

#[test]
fn a_turn_tighter_than_traction_allows_fails_and_one_at_90_percent_earns_a_caution() {
    let r_min = deep_snow_radius_m();
    assert_relative_eq!(r_min, 5.45, epsilon = 0.005);
    let p = profile();
    // 90 % of the achievable curvature: radius r_min / 0.9. Caution, not fail.
    let at_90 = check_route(route(vec![leg(arc(r_min / 0.9, 1.5), "deep-snow", 0.8, 5.0)]), &p);
    let l = &at_90.report.legs[0];
    assert_relative_eq!(l.achievable_curvature_per_m.expect("finite"), 1.0 / r_min, max_relative = 1e-6);
    assert_relative_eq!(l.required_curvature_per_m, 0.9 / r_min, max_relative = 1e-6);
    assert_eq!(l.verdict, Verdict::Caution, "{:?}", l.reasons);
    assert!(l.reasons.iter().any(|r| r.contains("uses 90 %")), "{:?}", l.reasons);
    assert!(l.failing_turns.is_empty());
    // 75 %: below the 80 % caution share, the turn rules pass.
    let at_75 = check_route(route(vec![leg(arc(r_min / 0.75, 1.5), "deep-snow", 0.8, 5.0)]), &p);
    assert!(at_75.report.legs[0].reasons.iter().all(|r| !r.contains("turn")), "{:?}", at_75.report.legs[0].reasons);
    // 110 %: fails, and the turn is listed.
    let at_110 = check_route(route(vec![leg(arc(r_min / 1.1, 1.5), "deep-snow", 0.8, 5.0)]), &p);
    let l = &at_110.report.legs[0];
    assert_eq!(l.verdict, Verdict::Fail);
    assert_eq!(l.failing_turns.len(), 1, "{:?}", l.failing_turns);
    let t = &l.failing_turns[0];
    assert_relative_eq!(t.radius_m, r_min / 1.1, max_relative = 1e-6);
    assert_relative_eq!(t.tightest_radius_m, r_min, max_relative = 1e-6);
    assert!(!t.sharp_corner);
    assert!(t.at_m > 20.0 && t.at_m < 20.0 + r_min / 1.1 * 1.5, "{}", t.at_m);
}

#[test]
fn every_failing_sharp_corner_is_listed_with_its_position_and_points_at_relax() {
    // Two right-angle corners at 20 m and 40 m along the route. Each reads
    // 2 sin(45 deg) / 0.5 m (the circle through the corner and the points a scale along each
    // side), far tighter than deep snow allows.
    let pts = vec![[0.0, 0.0], [20.0, 0.0], [20.0, 20.0], [40.0, 20.0]];
    let c = check_route(route(vec![leg(pts, "deep-snow", 0.8, 50.0)]), &profile());
    let l = &c.report.legs[0];
    assert_eq!(l.verdict, Verdict::Fail);
    let expected_k = 2.0 * std::f64::consts::FRAC_PI_4.sin() / 0.5;
    assert_relative_eq!(l.required_curvature_per_m, expected_k, max_relative = 1e-9);
    assert_eq!(l.failing_turns.len(), 2, "{:?}", l.failing_turns);
    for (t, at) in l.failing_turns.iter().zip([20.0, 40.0]) {
        assert_relative_eq!(t.at_m, at, epsilon = 1e-9);
        assert!(t.sharp_corner);
        assert_relative_eq!(t.turn_deg.abs(), 90.0, epsilon = 1e-9);
    }
    let corner_reasons: Vec<&String> = l.reasons.iter().filter(|r| r.contains("skidroute relax")).collect();
    assert_eq!(corner_reasons.len(), 2, "{:?}", l.reasons);
    assert!(
        corner_reasons[0].contains("(20 m along the route)") && corner_reasons[1].contains("(40 m along the route)")
    );
    assert_eq!(l.max_passing_speed_mps, None, "traction-bound corners fail at any speed");
    // Each corner's reason is marked at the corner (20 m and 40 m along the route, from the
    // geometry above) as a turn.
    assert_eq!(l.reason_spots.len(), l.reasons.len(), "one spot per reason");
    let turns: Vec<f64> =
        l.reason_spots.iter().filter(|s| s.about == super::ReasonAbout::Turn).filter_map(|s| s.at_m).collect();
    assert_eq!(turns.len(), 2, "{:?}", l.reason_spots);
    assert_relative_eq!(turns[0], 20.0, epsilon = 1e-9);
    assert_relative_eq!(turns[1], 40.0, epsilon = 1e-9);
}

#[test]
fn deviation_beyond_the_corridor_fails_and_beyond_half_of_it_earns_a_caution() {
    // Pure-pursuit geometry (docs/method.md, Following; derived from the geometry, no source):
    // a controller assuming the ideal model on terrain with track expansion chi settles on a
    // concentric circle of radius sqrt(R^2 + (chi - 1) L^2). R = 6 m, L = 1.5 m, chi = 1.6:
    // 6.0827 m, a steady deviation of 0.0827 m.
    let mut p = profile();
    p.terrain.get_mut("gravel").expect("gravel").model =
        Model::ExtendedSymmetric(ExtendedSymmetric { track_width_m: 0.9, alpha: 1.0, track_expansion: 1.6 });
    let steady = (36.0_f64 + 0.6 * 1.5 * 1.5).sqrt() - 6.0;
    let circle = crate::route::plan::circle_points(6.0, 1500, 1.5);
    let at = |corridor_m: f64| check_route(route(vec![leg(circle.clone(), "gravel", 0.8, corridor_m)]), &p);
    let fail = at(0.9 * steady);
    let l = &fail.report.legs[0];
    assert!(l.max_deviation_m >= steady * 0.99, "{} vs {steady}", l.max_deviation_m);
    assert_eq!(l.verdict, Verdict::Fail);
    assert!(l.reasons.iter().any(|r| r.contains("leaves the")), "{:?}", l.reasons);
    let caution = at(1.5 * steady);
    assert_eq!(caution.report.legs[0].verdict, Verdict::Caution, "{:?}", caution.report.legs[0].reasons);
    assert!(caution.report.legs[0].reasons.iter().any(|r| r.contains("over half the")));
    // The deviation reason is marked where the trace reaches its largest deviation on the leg.
    let peak =
        fail.trace.steps.iter().fold(&fail.trace.steps[0], |m, s| if s.deviation_m > m.deviation_m { s } else { m });
    let spot = l.reason_spots.iter().find(|s| s.about == super::ReasonAbout::Deviation).expect("a deviation spot");
    assert_relative_eq!(spot.at_m.expect("a position"), peak.progress_m, epsilon = 1e-9);
    let pass = at(4.0 * steady);
    assert_eq!(pass.report.legs[0].verdict, Verdict::Pass, "{:?}", pass.report.legs[0].reasons);
}

/// A straight 40 m leg along +x whose altitude changes by `grade` (rise over run) from x = 10 m.
fn graded(terrain: &str, grade: f64) -> Route {
    let pts: Vec<[f64; 2]> = (0..=40).map(|i| [i as f64, 0.0]).collect();
    let alt = (0..=40).map(|i| if i < 10 { 0.0 } else { grade * (i - 10) as f64 }).collect();
    route(vec![Leg { altitude_m: Some(alt), ..leg(pts, terrain, 0.8, 1.0) }])
}

#[test]
fn a_climb_beyond_traction_fails_and_a_gentle_one_passes() {
    // Grade resistance (Wong 2008): per side f_r N / 2 + W sin(g) / 2 against mu N / 2, N =
    // W cos g. Deep snow, 30 % grade: (0.15 + 0.3) / sqrt(1.09) W / 2 = 1014.6 N > 563.6 N.
    let w = 480.0 * STANDARD_GRAVITY_MPS2;
    let c = check_route(graded("deep-snow", 0.3), &profile());
    let l = &c.report.legs[0];
    assert_eq!(l.verdict, Verdict::Fail);
    let need = (0.15 + 0.3) / 1.09_f64.sqrt() * w / 2.0;
    let gives = 0.25 / 1.09_f64.sqrt() * w / 2.0;
    assert!(
        l.reasons.iter().any(|r| r.starts_with("cannot climb: the 30 % grade")
            && r.contains(&format!("{need:.0} N per side"))
            && r.contains(&format!("{gives:.0} N there"))),
        "{:?}",
        l.reasons
    );
    assert_relative_eq!(l.traction_coefficient_needed, 0.45, max_relative = 1e-9);
    // The climb's reason is marked on the graded part, from 10 m to 40 m along the route; the
    // grade is read over the 1.1 m contact length, so its first reading may start that much
    // before 10 m.
    let climb = l.reason_spots.iter().find(|s| s.about == super::ReasonAbout::Climb).expect("a climb spot");
    assert!(climb.at_m.is_some_and(|x| (10.0 - 1.1..=40.0).contains(&x)), "{climb:?}");
    // 5 %: 0.15 + 0.05 = 0.2 < 0.25.
    let gentle = check_route(graded("deep-snow", 0.05), &profile());
    assert!(gentle.report.legs[0].reasons.iter().all(|r| !r.contains("climb")), "{:?}", gentle.report.legs[0].reasons);
    assert_relative_eq!(gentle.report.legs[0].traction_coefficient_needed, 0.2, max_relative = 1e-9);
}

#[test]
fn a_descent_the_ground_cannot_hold_fails() {
    // 50 % descent on packed snow: holding needs W sin|g| / 2 - f_r W cos g / 2 = 926 N of
    // braking per side against mu W cos g / 2 = 631 N (statics on an incline; f_r 0.06, mu 0.3).
    let w = 480.0 * STANDARD_GRAVITY_MPS2;
    let (sin, cos) = (0.5 / 1.25_f64.sqrt(), 1.0 / 1.25_f64.sqrt());
    let hold = w * sin / 2.0 - 0.06 * w * cos / 2.0;
    assert_relative_eq!(hold, 926.3, epsilon = 0.1);
    let c = check_route(graded("packed-snow", -0.5), &profile());
    let l = &c.report.legs[0];
    assert_eq!(l.verdict, Verdict::Fail);
    assert!(
        l.reasons.iter().any(|r| r.starts_with("cannot hold on the descent: the 50 % downhill grade")
            && r.contains(&format!("{hold:.0} N of braking"))
            && r.contains(&format!("{:.0} N there", 0.3 * w * cos / 2.0))),
        "{:?}",
        l.reasons
    );
    assert_relative_eq!(l.max_downhill_grade_pct, 50.0, max_relative = 1e-6);
    assert_eq!(l.max_passing_speed_mps, None);
    // 10 %: 0.1 - 0.06 = 0.04 of traction, fine.
    let gentle = check_route(graded("packed-snow", -0.1), &profile());
    assert!(gentle.report.legs[0].reasons.iter().all(|r| !r.contains("descent")));
}

#[test]
fn the_traction_needed_is_the_steerability_closed_form_of_the_tightest_turn() {
    // f_r + mu_t(R) l / (2B) (Wong 2008) for R = 3 m on packed snow (f_r 0.06, mu_max 0.35).
    let c = check_route(route(vec![leg(arc(3.0, 1.5), "packed-snow", 0.8, 5.0)]), &profile());
    let mu_t = 0.35 / (0.925 + 0.15 * 3.0 / 0.9);
    assert_relative_eq!(c.report.legs[0].traction_coefficient_needed, 0.06 + mu_t * 1.1 / 1.8, max_relative = 1e-6);
    assert_relative_eq!(c.report.legs[0].traction_coefficient, 0.3);
}

#[test]
fn the_highest_passing_speed_is_where_the_yaw_rate_clamp_meets_the_turn() {
    // Ideal kinematics with a yaw-rate clamp of 0.5 rad/s: the tightest curvature at speed v is
    // 0.5 / v, so a 2 m arc passes up to v = 0.5 x 2 = 1.0 m/s (kinematics of the clamp).
    let mut p = profile();
    p.vehicle.max_yaw_rate_radps = 0.5;
    let c = check_route(route(vec![leg(arc(2.0, 1.5), "asphalt", 0.6, 5.0)]), &p);
    let v = c.report.legs[0].max_passing_speed_mps.expect("passes below 1 m/s");
    assert!((0.99 - 1e-3..=1.0 + 1e-9).contains(&v), "{v}");
    // A leg that passes at the top side speed reports that speed.
    let easy = check_route(route(vec![leg(arc(30.0, 0.5), "asphalt", 0.6, 5.0)]), &p);
    assert_relative_eq!(easy.report.legs[0].max_passing_speed_mps.expect("passes"), p.vehicle.max_side_speed_mps);
}

#[test]
fn lateral_acceleration_above_three_tenths_of_mu_g_earns_a_caution() {
    // Circular motion: v^2 / R. On a 4 m arc at 1.5 m/s that is 0.5625 m/s^2; on ground with
    // mu = 0.15 the caution threshold 0.3 mu g (common practice, no source) is 0.441 m/s^2. At
    // 1.0 m/s (0.25 m/s^2) there is none. Turning resistance kept small so traction allows it.
    let mut p = profile();
    let t = p.terrain.get_mut("slush").expect("slush");
    (t.rolling_resistance, t.traction_coefficient, t.lateral_resistance_max) = (0.01, 0.15, 0.02);
    let threshold = 0.3 * 0.15 * STANDARD_GRAVITY_MPS2;
    assert!(1.5 * 1.5 / 4.0 > threshold && 1.0 / 4.0 < threshold);
    let fast = check_route(route(vec![leg(arc(4.0, 1.5), "slush", 1.5, 5.0)]), &p);
    let l = &fast.report.legs[0];
    assert!(l.reasons.iter().any(|r| r.starts_with("lateral acceleration reaches")), "{:?}", l.reasons);
    assert_eq!(l.verdict, Verdict::Caution, "{:?}", l.reasons);
    let slow = check_route(route(vec![leg(arc(4.0, 1.5), "slush", 1.0, 5.0)]), &p);
    assert!(slow.report.legs[0].reasons.iter().all(|r| !r.contains("lateral")), "{:?}", slow.report.legs[0].reasons);
}

#[test]
fn the_speed_change_caution_quotes_the_table_s_thrust() {
    // Slush with a thrust rating below what starting up needs: m a / 2 = 480 x 1.0 / 2 = 240 N
    // plus rolling resistance f_r W / 2 = 0.12 x 4707 / 2 = 282 N, above a 400 N rating.
    let mut p = profile();
    p.vehicle.max_side_thrust_n = 400.0;
    let pts: Vec<[f64; 2]> = (0..=30).map(|i| [i as f64, 0.0]).collect();
    let c = check_route(route(vec![leg(pts, "slush", 1.2, 1.0)]), &p);
    let l = &c.report.legs[0];
    assert!(l.peak_side_thrust_n > 400.0);
    let quoted = format!("changing speed needs up to {:.0} N per side", l.peak_side_thrust_n);
    assert!(l.reasons.iter().any(|r| r.starts_with(&quoted)), "{quoted} not in {:?}", l.reasons);
    assert_eq!(l.verdict, Verdict::Caution, "{:?}", l.reasons);
}

#[test]
fn every_reason_carries_its_own_level_and_a_caution_on_a_failing_leg_is_never_tagged_fail() {
    // A failing leg (two right-angle corners on deep snow, as above) planned above the top side
    // speed, which alone earns a caution.
    let mut p = profile();
    p.vehicle.max_side_speed_mps = 0.5;
    let pts = vec![[0.0, 0.0], [20.0, 0.0], [20.0, 20.0], [40.0, 20.0]];
    let c = check_route(route(vec![leg(pts, "deep-snow", 0.8, 50.0)]), &p);
    let l = &c.report.legs[0];
    assert_eq!(l.verdict, Verdict::Fail, "{:?}", l.reasons);
    assert_eq!(l.reasons.len(), l.reason_verdicts.len(), "one level per reason");
    let level_of = |needle: &str| {
        let k =
            l.reasons.iter().position(|r| r.contains(needle)).unwrap_or_else(|| panic!("{needle}: {:?}", l.reasons));
        l.reason_verdicts[k]
    };
    assert_eq!(level_of("above the top side speed"), Verdict::Caution);
    assert_eq!(level_of("skidroute relax"), Verdict::Fail);
    // The leg's verdict is the worst of its reasons' levels.
    assert_eq!(l.reason_verdicts.iter().copied().max(), Some(l.verdict));
    // The HTML report tags each reason with its own level.
    let run = crate::check::CheckRun {
        vehicle_name: "v".into(),
        demo_profile: false,
        routes: vec![c.clone()],
        terrain_map: None,
    };
    let html = crate::report::html::report_html(&run, "<svg></svg>", None, false);
    let speed_line = html.lines().find(|s| s.contains("above the top side speed")).expect("the caution is listed");
    assert!(speed_line.contains("(caution): ") && !speed_line.contains("(fail)"), "{speed_line}");
    assert!(html.lines().any(|s| s.contains("(fail): ") && s.contains("skidroute relax")), "{html}");

    // Site rules go through the same door: a cross slope beyond the grip or the tipping limit
    // fails, one above 80 % of it earns a caution (packed snow holds up to 30 %, see the
    // cross-slope tests below), each reason tagged with its own level.
    let level = |c: &crate::check::CheckedRoute, needle: &str| {
        let l = &c.report.legs[0];
        assert_eq!(l.reasons.len(), l.reason_verdicts.len(), "one level per reason: {:?}", l.reasons);
        let k =
            l.reasons.iter().position(|r| r.contains(needle)).unwrap_or_else(|| panic!("{needle}: {:?}", l.reasons));
        l.reason_verdicts[k]
    };
    let p = profile();
    assert_eq!(level(&check_route(across("packed-snow", 0.38), &p), "slides sideways"), Verdict::Fail);
    assert_eq!(level(&check_route(across("packed-snow", 0.27), &p), "uses 90 % of the 30 %"), Verdict::Caution);
    let mut tall = profile();
    tall.vehicle.cog_height_m = Some(0.9);
    assert_eq!(level(&check_route(across("asphalt", 0.55), &tall), "tips over"), Verdict::Fail);
    assert_eq!(level(&check_route(across("asphalt", 0.45), &tall), "at which the vehicle tips over"), Verdict::Caution);
}

/// `leg` on `terrain` with a per-point speed or corridor profile given by `f(point)`.
fn with_profile(points: Vec<[f64; 2]>, terrain: &str, corridor_m: f64, speed: impl Fn([f64; 2]) -> f64) -> Leg {
    let speeds = points.iter().map(|&p| speed(p)).collect();
    let mut l = Leg { corridor_m: Some(corridor_m), ..Leg::new(terrain, points, SourcePosition::Line(2)) };
    l.set_speed_profile(speeds);
    l
}

#[test]
fn turns_are_judged_at_the_speed_planned_there_and_the_margin_scales_the_profile() {
    // Ideal kinematics with a yaw-rate clamp of 0.3 rad/s: the tightest curvature at speed v is
    // 0.3 / v, so a 3 m arc passes up to v = 0.3 x 3 = 0.9 m/s (kinematics of the clamp). The
    // planner drives the lead-in at 1.0 m/s, slows to 0.5 m/s from 3 m before the arc, and takes
    // the arc at 0.5 m/s: the arc passes although the leg's nominal (largest) speed, 1.0 m/s,
    // would not.
    let mut p = profile();
    p.vehicle.max_yaw_rate_radps = 0.3;
    let speed = |q: [f64; 2]| {
        if q[1] == 0.0 && q[0] <= -3.0 {
            1.0
        } else if q[1] == 0.0 && q[0] < -1.0 {
            1.0 - 0.25 * (q[0] + 3.0)
        } else {
            0.5
        }
    };
    let c = check_route(route(vec![with_profile(arc(3.0, 1.5), "asphalt", 5.0, speed)]), &p);
    let l = &c.report.legs[0];
    assert_relative_eq!(l.speed_mps, 1.0);
    assert!(l.failing_turns.is_empty(), "{:?}", l.failing_turns);
    assert_ne!(l.verdict, Verdict::Fail, "{:?}", l.reasons);
    // The margin scales the whole profile: the arc reaches 0.9 m/s when the profile's largest
    // value is 1.0 x 0.9 / 0.5 = 1.8 m/s, the speed reported.
    let v = l.max_passing_speed_mps.expect("passes");
    assert!((1.8 * 0.99..=1.8 + 1e-9).contains(&v), "{v}");
    // One speed for the whole leg: judged at 1.0 m/s, the arc fails.
    let flat = check_route(route(vec![leg(arc(3.0, 1.5), "asphalt", 1.0, 5.0)]), &p);
    assert_eq!(flat.report.legs[0].verdict, Verdict::Fail);
    assert_relative_eq!(flat.report.legs[0].failing_turns[0].speed_mps, 1.0);
}

#[test]
fn deviation_is_judged_against_the_corridor_where_it_happens() {
    // Track expansion 1.6 on a 6 m arc: a few centimetres of deviation on the arc (see the
    // corridor test above) and none on the straight lead-in, which ideal sides drive exactly.
    let mut p = profile();
    p.terrain.get_mut("gravel").expect("gravel").model =
        Model::ExtendedSymmetric(ExtendedSymmetric { track_width_m: 0.9, alpha: 1.0, track_expansion: 1.6 });
    let pts = arc(6.0, 1.5);
    let corridor = |narrow_on_lead_in: bool| {
        let c: Vec<f64> = pts
            .iter()
            .map(|q| {
                let lead_in = q[1] == 0.0 && q[0] <= -5.0;
                if lead_in == narrow_on_lead_in {
                    0.02
                } else {
                    1.0
                }
            })
            .collect();
        let mut l = leg(pts.clone(), "gravel", 0.8, 1.0);
        l.set_corridor_profile(c);
        l
    };
    // Narrow only where the vehicle runs exactly on the plan: passes, though the leg's corridor
    // (the profile's smallest, as the table shows it) is narrower than its largest deviation.
    let ok = check_route(route(vec![corridor(true)]), &p);
    let l = &ok.report.legs[0];
    assert_relative_eq!(l.corridor_m, 0.02);
    assert!(l.max_deviation_m > 0.02, "{}", l.max_deviation_m);
    assert_eq!(l.verdict, Verdict::Pass, "{:?}", l.reasons);
    // Narrow on the arc: fails, naming the place and the corridor there.
    let bad = check_route(route(vec![corridor(false)]), &p);
    let l = &bad.report.legs[0];
    assert_eq!(l.verdict, Verdict::Fail);
    let why = l.reasons.iter().find(|r| r.contains("leaves the 0.02 m corridor there")).expect("corridor reason");
    assert!(why.contains(" m along the route)"), "{why}");
}

/// A straight 40 m leg along +x whose cross slope (tangent, left side higher) is `cross` from
/// x = 10 m on, level before, with level altitudes.
fn across(terrain: &str, cross: f64) -> Route {
    let pts: Vec<[f64; 2]> = (0..=40).map(|i| [i as f64, 0.0]).collect();
    let c = (0..=40).map(|i| if i < 10 { 0.0 } else { cross }).collect();
    route(vec![Leg { altitude_m: Some(vec![0.0; 41]), cross_slope: Some(c), ..leg(pts, terrain, 0.8, 1.0) }])
}

#[test]
fn a_cross_slope_beyond_the_grip_fails_and_one_above_80_percent_of_it_earns_a_caution() {
    // Wong 2008 (vehicle on a side slope): it slides sideways when tan(phi) > mu, the lateral
    // grip taken as the traction coefficient; packed snow mu = 0.3, so it holds up to 30 %.
    // Caution above 80 % of that, 24 %.
    let p = profile();
    let c = check_route(across("packed-snow", 0.38), &p);
    let l = &c.report.legs[0];
    assert_eq!(l.verdict, Verdict::Fail);
    assert_relative_eq!(l.max_cross_slope_pct.expect("cross slopes"), 38.0, max_relative = 1e-12);
    let why = l.reasons.iter().find(|r| r.starts_with("cross slope")).expect("a cross-slope reason");
    assert_eq!(
        why,
        "cross slope 38 % at 10 m along the route: the vehicle slides sideways; packed-snow holds up to 30 % (its \
         traction coefficient 0.30 is the lateral grip)"
    );
    assert_relative_eq!(l.traction_coefficient_needed, 0.38, max_relative = 1e-12);
    assert_eq!(l.max_passing_speed_mps, None, "a cross slope fails at any speed");
    let caution = check_route(across("packed-snow", 0.27), &p);
    let l = &caution.report.legs[0];
    assert_eq!(l.verdict, Verdict::Caution, "{:?}", l.reasons);
    assert!(
        l.reasons.iter().any(|r| r
            == "cross slope 27 % at 10 m along the route uses 90 % of the 30 % packed-snow holds \
                                          before the vehicle slides sideways"),
        "{:?}",
        l.reasons
    );
    // 23 %: 77 % of the grip, no cross-slope reason.
    let fine = check_route(across("packed-snow", 0.23), &p);
    assert!(
        fine.report.legs[0].reasons.iter().all(|r| !r.contains("cross slope")),
        "{:?}",
        fine.report.legs[0].reasons
    );
    // A leg without cross slopes reports none.
    let flat = check_route(route(vec![leg(vec![[0.0, 0.0], [10.0, 0.0]], "packed-snow", 0.8, 1.0)]), &p);
    assert_eq!(flat.report.legs[0].max_cross_slope_pct, None);
}

#[test]
fn a_cross_slope_beyond_the_static_stability_factor_tips_the_vehicle() {
    // Centre of gravity 0.9 m up on a 0.9 m track: B / (2 h) = 0.5 (static stability factor,
    // common practice), below asphalt's grip of 0.8, so tipping sets the limit: 55 % fails,
    // 45 % (90 % of it) earns a caution.
    let mut p = profile();
    p.vehicle.cog_height_m = Some(0.9);
    let c = check_route(across("asphalt", 0.55), &p);
    let l = &c.report.legs[0];
    assert_eq!(l.verdict, Verdict::Fail);
    assert!(
        l.reasons.iter().any(|r| r == "cross slope 55 % at 10 m along the route: the vehicle tips over; with its centre \
                                          of gravity 0.90 m up and 0.90 m between its tracks (B / 2h) it stands up to 50 %"),
        "{:?}",
        l.reasons
    );
    let caution = check_route(across("asphalt", 0.45), &p);
    assert!(caution.report.legs[0]
        .reasons
        .iter()
        .any(|r| r.ends_with("uses 90 % of the 50 % at which the vehicle tips over (B / 2h)")));
    // Without a centre-of-gravity height tipping is not judged, and the check says so.
    p.vehicle.cog_height_m = None;
    let unknown = check_route(across("asphalt", 0.55), &p);
    assert_ne!(unknown.report.legs[0].verdict, Verdict::Fail, "{:?}", unknown.report.legs[0].reasons);
    assert_eq!(unknown.route.warnings, vec![crate::check::NO_COG_HEIGHT.to_string()]);
}

#[test]
fn a_climb_across_a_side_slope_is_judged_on_the_lighter_side() {
    // A 20 % climb on packed snow: f_r + tan g = 0.26 < mu = 0.3, fine with equal loads. Across
    // a 25 % cross slope with h = 0.55 m the uphill side carries
    // N_l = N / 2 - N c cos(g) h / B (moments about the long axis) and must push
    // f_r N_l + W sin(g) / 2 against mu N_l (Wong 2008, grade resistance): it cannot.
    let p = profile();
    let g = 0.2_f64.atan();
    let w = 480.0 * STANDARD_GRAVITY_MPS2;
    let n = w / (1.0_f64 + 0.04 + 0.0625).sqrt();
    let n_l = n / 2.0 - n * 0.25 * g.cos() * 0.55 / 0.9;
    let need = 0.06 * n_l + w * g.sin() / 2.0;
    assert!(need > 0.3 * n_l);
    let pts: Vec<[f64; 2]> = (0..=40).map(|i| [i as f64, 0.0]).collect();
    let alt: Vec<f64> = (0..=40).map(|i| 0.2 * i as f64).collect();
    let uphill = |cross: f64| {
        let l = Leg {
            altitude_m: Some(alt.clone()),
            cross_slope: Some(vec![cross; 41]),
            ..leg(pts.clone(), "packed-snow", 0.8, 1.0)
        };
        check_route(route(vec![l]), &p)
    };
    let c = uphill(0.25);
    let l = &c.report.legs[0];
    assert_eq!(l.verdict, Verdict::Fail);
    let expected = format!(
        "cannot climb: the 20 % grade (0 m along the route) with rolling resistance needs {need:.0} N on its uphill side, \
         which carries less of the load on the 25 % cross slope; traction on packed-snow gives {:.0} N there",
        0.3 * n_l
    );
    assert!(l.reasons.contains(&expected), "{expected} not in {:?}", l.reasons);
    assert!(uphill(0.0).report.legs[0].reasons.iter().all(|r| !r.contains("climb")));
}

//! Effort of whole rollouts against closed forms: rolling resistance and kinetic energy on a
//! straight, climbing work on a grade, additivity over legs, independence of the control rate.

use std::path::PathBuf;

use approx::assert_relative_eq;
use skidroute::check::check_route;
use skidroute::effort::STANDARD_GRAVITY_MPS2;
use skidroute::route::{Leg, Route, SourcePosition};
use skidroute::vehicle::Profile;

fn straight_leg(x0_m: f64, x1_m: f64, terrain: &str, altitude: Option<(f64, f64)>) -> Leg {
    let n = ((x1_m - x0_m) / 2.0) as usize;
    let points: Vec<[f64; 2]> = (0..=n).map(|i| [x0_m + (x1_m - x0_m) * i as f64 / n as f64, 0.0]).collect();
    let altitude_m = altitude.map(|(z0, z1)| (0..=n).map(|i| z0 + (z1 - z0) * i as f64 / n as f64).collect());
    Leg { speed_mps: Some(1.0), altitude_m, ..Leg::new(terrain, points, SourcePosition::Feature(0)) }
}

/// The demo profile with the ideal kinematic model on every terrain, so track travel equals
/// ground travel and the closed forms below hold exactly.
fn no_slip_profile() -> Profile {
    let mut p = Profile::demo();
    let b = p.vehicle.track_width_m;
    for t in p.terrain.values_mut() {
        t.model = skidroute::kinematics::Model::ideal(b);
    }
    p
}

fn route(legs: Vec<Leg>) -> Route {
    Route { name: "t".into(), source: PathBuf::from("<test>"), origin: None, legs, warnings: Vec::new() }
}

#[test]
fn straight_flat_energy_is_rolling_work_plus_kinetic_energy_over_efficiency() {
    // Work-energy balance (common practice, no source): on a straight flat route driven from
    // rest to rest, the drive delivers rolling-resistance work f_r m g d (standard gravity
    // 9.80665 m/s^2, 3rd CGPM 1901) plus the kinetic energy m v^2 / 2 once (braking returns
    // nothing without regeneration); the source supplies that divided by the efficiency.
    let profile = no_slip_profile();
    let v = &profile.vehicle;
    let checked = check_route(route(vec![straight_leg(0.0, 400.0, "asphalt", None)]), &profile);
    let f_r = profile.terrain["asphalt"].rolling_resistance;
    let d = checked.trace.steps.last().expect("steps").pose.x_m;
    let expected_j = (f_r * v.mass_kg * STANDARD_GRAVITY_MPS2 * d + 0.5 * v.mass_kg * 1.0) / v.drivetrain_efficiency;
    assert_relative_eq!(checked.report.energy_wh * 3600.0, expected_j, max_relative = 0.005);
    assert_eq!(STANDARD_GRAVITY_MPS2, 9.80665);
}

#[test]
fn climbing_costs_the_potential_energy() {
    // Work against gravity on a slope: m g h more at the track (common practice, no source).
    let profile = no_slip_profile();
    let v = &profile.vehicle;
    let flat = check_route(route(vec![straight_leg(0.0, 300.0, "gravel", Some((0.0, 0.0)))]), &profile);
    let climb = check_route(route(vec![straight_leg(0.0, 300.0, "gravel", Some((0.0, 15.0)))]), &profile);
    let extra_j = (climb.report.energy_wh - flat.report.energy_wh) * 3600.0;
    let expected_j = v.mass_kg * STANDARD_GRAVITY_MPS2 * 15.0 / v.drivetrain_efficiency;
    // The slope also shortens the horizontal-distance rolling work slightly: 1 % tolerance.
    assert_relative_eq!(extra_j, expected_j, max_relative = 0.01);
    assert!(climb.report.legs[0].max_uphill_grade_pct > 4.9 && climb.report.legs[0].max_uphill_grade_pct < 5.1);
}

#[test]
fn slip_costs_energy_in_proportion_to_track_travel() {
    // With slip factor alpha the tracks travel d / alpha to move the vehicle d, so the rolling
    // work grows by 1 / alpha (kinematics of docs/method.md, Model families; common practice, no source).
    let ideal = no_slip_profile();
    let mut slipping = no_slip_profile();
    let b = slipping.vehicle.track_width_m;
    let alpha = 0.9;
    slipping.terrain.get_mut("asphalt").expect("asphalt").model =
        skidroute::kinematics::Model::ExtendedSymmetric(skidroute::kinematics::ExtendedSymmetric {
            track_width_m: b,
            alpha,
            track_expansion: 1.0,
        });
    let leg = || route(vec![straight_leg(0.0, 400.0, "asphalt", None)]);
    let (a, s) = (check_route(leg(), &ideal), check_route(leg(), &slipping));
    let per_m = |c: &skidroute::check::CheckedRoute| c.report.energy_wh / c.trace.steps.last().expect("steps").pose.x_m;
    assert_relative_eq!(per_m(&s) / per_m(&a), 1.0 / alpha, max_relative = 0.01);
}

#[test]
fn energy_is_additive_over_legs() {
    let profile = Profile::demo();
    let one = check_route(route(vec![straight_leg(0.0, 300.0, "grass", None)]), &profile);
    let two = check_route(
        route(vec![straight_leg(0.0, 140.0, "grass", None), straight_leg(140.0, 300.0, "grass", None)]),
        &profile,
    );
    let sum: f64 = two.report.legs.iter().map(|l| l.energy_wh).sum();
    assert_relative_eq!(sum, two.report.energy_wh, max_relative = 1e-12);
    assert_relative_eq!(two.report.energy_wh, one.report.energy_wh, max_relative = 1e-3);
}

#[test]
fn energy_does_not_depend_on_the_control_rate() {
    let mut profile = Profile::demo();
    let bendy = {
        let pts: Vec<[f64; 2]> = (0..=300).map(|i| [i as f64, 8.0 * (i as f64 / 25.0).sin()]).collect();
        Leg { points: pts, ..straight_leg(0.0, 10.0, "packed-snow", None) }
    };
    let at_20 = check_route(route(vec![bendy.clone()]), &profile);
    profile.follower.control_rate_hz = 50.0;
    let at_50 = check_route(route(vec![bendy]), &profile);
    assert_relative_eq!(at_20.report.energy_wh, at_50.report.energy_wh, max_relative = 0.01);
}

#[test]
fn low_traction_limits_the_turn_and_says_so() {
    // Steerability (Wong 2008): on slush the outer track cannot push hard enough for a tight
    // turn, so the achievable curvature is the traction limit, well below the kinematic one.
    let profile = Profile::demo();
    let pts: Vec<[f64; 2]> = (0..=40).map(|i| [i as f64, 0.0]).chain((1..=40).map(|i| [40.0, i as f64])).collect();
    let leg = Leg { points: pts, ..straight_leg(0.0, 10.0, "slush", None) };
    let checked = check_route(route(vec![leg]), &profile);
    let l = &checked.report.legs[0];
    let traction = l.traction_curvature_per_m.expect("traction limit");
    assert!(traction < l.kinematic_curvature_per_m.expect("kinematic"));
    assert_eq!(l.verdict, skidroute::assess::Verdict::Fail);
    assert!(l.reasons.iter().any(|r| r.contains("traction on slush")), "{:?}", l.reasons);
}

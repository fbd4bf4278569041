//! Property tests of invariants of the route check: a rigid motion of the plan (rotation and
//! translation) changes no deviation, curvature, time or energy; zero side speeds give no motion.

use std::path::PathBuf;

use proptest::prelude::*;
use proptest::test_runner::{Config, FileFailurePersistence, RngSeed};
use skidroute::check::check_route;
use skidroute::kinematics::{Family, Model, MotionModel};
use skidroute::route::{Leg, Route, SourcePosition};
use skidroute::vehicle::Profile;

/// A wiggly two-leg plan built from turning angles per 2 m step.
fn plan(turns_rad: &[f64]) -> Vec<[f64; 2]> {
    let (mut x, mut y, mut yaw) = (0.0_f64, 0.0_f64, 0.0_f64);
    let mut pts = vec![[x, y]];
    for t in turns_rad {
        yaw += t;
        x += 2.0 * yaw.cos();
        y += 2.0 * yaw.sin();
        pts.push([x, y]);
    }
    pts
}

fn route(points: &[[f64; 2]]) -> Route {
    let mid = points.len() / 2;
    let leg = |pts: &[[f64; 2]], terrain: &str, i: usize| Leg {
        speed_mps: Some(1.1),
        ..Leg::new(terrain, pts.to_vec(), SourcePosition::Feature(i))
    };
    Route {
        name: "p".into(),
        source: PathBuf::from("<prop>"),
        origin: None,
        legs: vec![leg(&points[..=mid], "grass", 0), leg(&points[mid..], "packed-snow", 1)],
        warnings: Vec::new(),
    }
}

fn config() -> Config {
    // Bounded and reproducible in CI: a fixed number of cases, no failure files written.
    Config {
        cases: 16,
        rng_seed: RngSeed::Fixed(20261201),
        failure_persistence: Some(Box::new(FileFailurePersistence::Off)),
        ..Config::default()
    }
}

proptest! {
    #![proptest_config(config())]

    #[test]
    fn rigid_motion_changes_no_metric(
        turns in proptest::collection::vec(-0.25f64..0.25, 20..40),
        angle in -3.1f64..3.1,
        dx in -5000.0f64..5000.0,
        dy in -5000.0f64..5000.0,
    ) {
        let profile = Profile::demo();
        let pts = plan(&turns);
        let (s, c) = angle.sin_cos();
        let moved: Vec<[f64; 2]> = pts.iter().map(|p| [c * p[0] - s * p[1] + dx, s * p[0] + c * p[1] + dy]).collect();
        let a = check_route(route(&pts), &profile).report;
        let b = check_route(route(&moved), &profile).report;
        prop_assert_eq!(a.legs.len(), b.legs.len());
        for (la, lb) in a.legs.iter().zip(&b.legs) {
            prop_assert!((la.max_deviation_m - lb.max_deviation_m).abs() < 1e-3, "{} vs {}", la.max_deviation_m, lb.max_deviation_m);
            prop_assert!((la.required_curvature_per_m - lb.required_curvature_per_m).abs() < 1e-6);
            prop_assert!((la.time_s - lb.time_s).abs() <= 0.1);
            prop_assert!((la.energy_wh - lb.energy_wh).abs() < 1e-3 * la.energy_wh.max(1.0));
            prop_assert_eq!(la.verdict, lb.verdict);
        }
    }

    #[test]
    fn zero_side_speeds_give_no_motion(params in proptest::collection::vec(0.2f64..2.0, 6)) {
        for family in Family::ALL {
            let n = family.param_names().len();
            let mut p = params[..n].to_vec();
            if family == Family::Icr {
                p[1] = -p[1];
            }
            if let Some(m) = Model::from_params(family, &p, 0.9) {
                let t = m.twist(0.0, 0.0);
                prop_assert_eq!((t.vx_mps, t.vy_mps, t.omega_radps), (0.0, 0.0, 0.0));
            }
        }
    }
}

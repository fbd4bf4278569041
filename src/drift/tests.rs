//! Unit tests of the drift Monte Carlo, with the source of each check value beside it.

use approx::assert_relative_eq;

use super::*;
use crate::kinematics::ExtendedSymmetric;
use crate::progress::NoProgress;
use crate::route::{Leg, SourcePosition};
use crate::vehicle::TerrainSpec;

fn leg(terrain: &str, points: Vec<[f64; 2]>) -> Leg {
    Leg {
        name: None,
        terrain: terrain.into(),
        speed_mps: Some(1.0),
        corridor_m: None,
        points,
        altitude_m: None,
        position: SourcePosition::Feature(0),
    }
}

fn route(legs: Vec<Leg>) -> Route {
    Route { name: "test".into(), source: "test.geojson".into(), origin: None, legs }
}

fn terrain(model: Model, covariance: Option<Vec<Vec<f64>>>, noise: [f64; 3]) -> TerrainSpec {
    TerrainSpec {
        model,
        rolling_resistance: 0.05,
        traction_coefficient: 0.5,
        lateral_resistance_max: 0.4,
        covariance,
        noise_heading_rad_per_sqrt_m: noise[0],
        noise_along_m_per_sqrt_m: noise[1],
        noise_cross_m_per_sqrt_m: noise[2],
        calibration: None,
    }
}

/// The demo profile with extra terrains `a` and `b`.
fn profile_with(a: TerrainSpec, b: TerrainSpec) -> Profile {
    let mut p = Profile::demo();
    p.terrain.insert("a".into(), a);
    p.terrain.insert("b".into(), b);
    p
}

fn slip(alpha: f64) -> Model {
    Model::ExtendedSymmetric(ExtendedSymmetric { track_width_m: 0.9, alpha, track_expansion: 1.0 })
}

fn settings(samples: usize, odometry: Odometry) -> DriftSettings {
    DriftSettings { samples, seed: 7, lost_from_leg: 1, odometry, paths_kept: 0 }
}

fn stats(r: &DriftReport, leg: usize) -> &ErrorStats {
    r.legs[leg].stats.as_ref().expect("some samples reached the leg end")
}

#[test]
fn heading_random_walk_gives_kelly_cross_track_variance() {
    // Kelly 2004, "Linearized error propagation in odometry", IJRR 23(2): a heading random walk
    // of intensity q (rad^2/m) on a straight line gives cross-track variance q d^3 / 3 at
    // distance d. Here q = 0.01^2 = 1e-4, d = 40 m: 1e-4 * 64000 / 3 = 2.133 m^2. The believed
    // path is noise-free and straight (odometry = the true model), so the error is the walk.
    // Monte Carlo: the sample variance of N = 2000 normals has relative standard error
    // sqrt(2 / N) = 3.2 %; 12 % allows about 4 standard errors.
    let d = 40.0;
    let p =
        profile_with(terrain(Model::ideal(0.9), None, [0.01, 0.0, 0.0]), terrain(Model::ideal(0.9), None, [0.0; 3]));
    let r = run_drift(
        &route(vec![leg("a", vec![[0.0, 0.0], [d, 0.0]])]),
        &p,
        &settings(2000, Odometry::Calibrated),
        &NoProgress,
    )
    .expect("run");
    let s = stats(&r, 0);
    let expected = 1e-4 * d * d * d / 3.0;
    assert_relative_eq!(s.covariance_m2[1][1], expected, max_relative = 0.12);
    assert!(s.bias_cross_m.abs() < 4.0 * (expected / 2000.0).sqrt(), "bias {}", s.bias_cross_m);
    assert_eq!(r.timed_out, 0);
    assert_relative_eq!(r.legs[0].distance_m, d);
}

#[test]
fn no_noise_and_no_covariance_give_zero_spread() {
    // Every sample is the same deterministic drive (no source needed: nothing is random).
    let p = profile_with(terrain(slip(0.9), None, [0.0; 3]), terrain(slip(0.8), None, [0.0; 3]));
    let rt = route(vec![leg("a", vec![[0.0, 0.0], [15.0, 0.0]]), leg("b", vec![[15.0, 0.0], [15.0, 12.0]])]);
    let r = run_drift(&rt, &p, &settings(16, Odometry::Ideal), &NoProgress).expect("run");
    for l in &r.legs {
        let s = l.stats.as_ref().expect("reached");
        assert!(s.covariance_m2.iter().flatten().all(|c| c.abs() < 1e-18), "{:?}", s.covariance_m2);
        assert_relative_eq!(s.cep50_m, s.cep95_m, epsilon = 1e-12);
        assert!(s.ellipse95.semi_major_m < 1e-8);
        assert_eq!(l.samples_reached, 16);
    }
}

#[test]
fn ideal_odometry_on_slipping_terrain_stops_short_and_calibrated_does_not() {
    // Derived here (no outside source): on a straight, equal side speeds v move the believed
    // pose (ideal odometry, vx = v) and the true pose (extended-symmetric, vx = alpha v) in the
    // same direction without turning. The vehicle believes it has reached the end d when it has
    // truly travelled alpha d, so the error at the end is -(1 - alpha) d along track:
    // alpha = 0.9, d = 30 m gives -3 m. The crossing is detected within one control step of
    // the final creep (0.05 m/s * 0.05 s), hence the 1 cm tolerance.
    let d = 30.0;
    let p = profile_with(terrain(slip(0.9), None, [0.0; 3]), terrain(slip(0.9), None, [0.0; 3]));
    let rt = route(vec![leg("a", vec![[0.0, 0.0], [d, 0.0]])]);
    let ideal = run_drift(&rt, &p, &settings(4, Odometry::Ideal), &NoProgress).expect("run");
    assert_relative_eq!(stats(&ideal, 0).bias_along_m, -(1.0 - 0.9) * d, epsilon = 1e-2);
    assert!(stats(&ideal, 0).bias_cross_m.abs() < 1e-9);
    // Calibrated odometry integrates the true model: no error at all.
    let cal = run_drift(&rt, &p, &settings(4, Odometry::Calibrated), &NoProgress).expect("run");
    assert!(stats(&cal, 0).cep95_m < 1e-9, "{:?}", stats(&cal, 0));
}

#[test]
fn legs_before_the_loss_have_no_error() {
    let noisy = terrain(slip(0.95), Some(vec![vec![1e-4, 0.0], vec![0.0, 1e-3]]), [0.005, 0.01, 0.005]);
    let p = profile_with(noisy.clone(), noisy);
    let rt = route(vec![
        leg("a", vec![[0.0, 0.0], [10.0, 0.0]]),
        leg("b", vec![[10.0, 0.0], [20.0, 5.0]]),
        leg("a", vec![[20.0, 5.0], [30.0, 5.0]]),
    ]);
    let mut s = settings(40, Odometry::Calibrated);
    s.lost_from_leg = 2;
    let r = run_drift(&rt, &p, &s, &NoProgress).expect("run");
    assert_eq!(r.legs[0].distance_m, 0.0);
    assert!(stats(&r, 0).cep95_m < 1e-12);
    assert_relative_eq!(r.legs[1].distance_m, 125.0_f64.sqrt(), epsilon = 1e-9);
    assert!(stats(&r, 1).cep95_m > 0.0);
    assert!(stats(&r, 2).cep95_m > stats(&r, 1).cep50_m);
    assert_relative_eq!(r.loss_start_m, 10.0, epsilon = 1e-9);
}

#[test]
fn output_does_not_depend_on_the_thread_count() {
    // Each sample has its own ChaCha8 stream and results are combined in sample order.
    let noisy = terrain(slip(0.93), Some(vec![vec![2e-4, 1e-5], vec![1e-5, 1e-3]]), [0.006, 0.01, 0.004]);
    let p = profile_with(noisy, terrain(slip(0.85), Some(vec![vec![4e-4, 0.0], vec![0.0, 2e-3]]), [0.01, 0.02, 0.01]));
    let rt = route(vec![leg("a", vec![[0.0, 0.0], [12.0, 0.0]]), leg("b", vec![[12.0, 0.0], [12.0, 10.0]])]);
    let mut s = settings(48, Odometry::Ideal);
    s.paths_kept = 5;
    let run_with = |threads: usize, s: &DriftSettings| {
        let pool = rayon::ThreadPoolBuilder::new().num_threads(threads).build().expect("pool");
        let r = pool.install(|| run_drift(&rt, &p, s, &NoProgress)).expect("run");
        (serde_json::to_string(&r).expect("json"), r.sample_paths)
    };
    let (one, paths_one) = run_with(1, &s);
    let (two, paths_two) = run_with(2, &s);
    assert_eq!(one, two);
    assert_eq!(paths_one, paths_two);
    assert_eq!(paths_one.len(), 5);
    s.seed = 8;
    let (other, _) = run_with(2, &s);
    assert_ne!(one, other);
}

#[test]
fn a_sample_that_cannot_move_times_out_and_is_counted() {
    // Calibrated odometry believes the crawl, so the follower never reaches the end; the time
    // bound of RouteDrive::time_limit_s stops each sample.
    let p = profile_with(terrain(slip(1e-3), None, [0.0; 3]), terrain(slip(1.0), None, [0.0; 3]));
    let rt = route(vec![leg("a", vec![[0.0, 0.0], [5.0, 0.0]])]);
    let r = run_drift(&rt, &p, &settings(3, Odometry::Calibrated), &NoProgress).expect("run");
    assert_eq!(r.timed_out, 3);
    assert_eq!(r.legs[0].samples_reached, 0);
    assert!(r.legs[0].cep95_m().is_none());
}

#[test]
fn bad_settings_are_refused() {
    let p = Profile::demo();
    let rt = route(vec![leg("gravel", vec![[0.0, 0.0], [5.0, 0.0]])]);
    let e = run_drift(&rt, &p, &settings(0, Odometry::Ideal), &NoProgress).expect_err("0 samples");
    assert_eq!(e.to_string(), "--samples must be between 1 and 1000000, got 0");
    let mut s = settings(2, Odometry::Ideal);
    s.lost_from_leg = 2;
    let e = run_drift(&rt, &p, &s, &NoProgress).expect_err("leg 2 of 1");
    assert!(e.to_string().contains("between 1 and 1"), "{e}");
    let bad = route(vec![leg("lava", vec![[0.0, 0.0], [5.0, 0.0]])]);
    let e = run_drift(&bad, &p, &settings(2, Odometry::Ideal), &NoProgress).expect_err("terrain");
    assert!(e.to_string().contains("unknown terrain 'lava'"), "{e}");
}

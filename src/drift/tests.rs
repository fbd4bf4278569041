//! Unit tests of the drift Monte Carlo, with the source of each check value beside it.

use approx::assert_relative_eq;

use super::*;
use crate::kinematics::ExtendedSymmetric;
use crate::progress::NoProgress;
use crate::route::{Leg, SourcePosition};
use crate::vehicle::TerrainSpec;

fn leg(terrain: &str, points: Vec<[f64; 2]>) -> Leg {
    Leg { speed_mps: Some(1.0), ..Leg::new(terrain, points, SourcePosition::Feature(0)) }
}

fn route(legs: Vec<Leg>) -> Route {
    Route { name: "test".into(), source: "test.geojson".into(), origin: None, legs, warnings: Vec::new() }
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
    DriftSettings { samples, seed: 7, lost_from_leg: 1, odometry, heading: HeadingSource::Odometry, paths_kept: 0 }
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

/// The profile of `profile_with` with a gyro.
fn with_imu(mut p: Profile, bias_deg_per_h: f64, arw_deg_per_sqrt_h: f64) -> Profile {
    p.imu = Some(crate::vehicle::ImuSpec {
        gyro_bias_sd_deg_per_h: bias_deg_per_h,
        gyro_arw_deg_per_sqrt_h: arw_deg_per_sqrt_h,
    });
    p
}

#[test]
fn a_gyro_bias_on_a_straight_gives_the_closed_form_cross_track_error() {
    // Gyro error model (Groves 2013, "Principles of GNSS, Inertial, and Multisensor Integrated
    // Navigation Systems", ch. 4): a run's constant bias b turns the believed heading by b t, and
    // on a straight at speed v the position error across the track grows as the integral of
    // v(t) b t, which is v b t^2 / 2 at constant speed. Derived here for the drive as simulated:
    // the vehicle speeds up from rest and slows to a stop, and for any speed profile symmetric in
    // time the integral of v(t) t over the drive is d T / 2 (d distance, T duration). With only
    // the bias random (no noise, no covariance, odometry = the true model), every sample's
    // cross-track error is b d T / 2 and its heading error b T, so across samples
    // sd(cross) / sd(heading) = d / 2 exactly, whatever the bias draws were: 30 m here. The end
    // of the drive is not quite symmetric (the final creep onto the end point), hence 1 %.
    let d = 60.0;
    let quiet = terrain(Model::ideal(0.9), None, [0.0; 3]);
    let p = with_imu(profile_with(quiet.clone(), quiet), 20.0, 0.0);
    let mut s = settings(400, Odometry::Calibrated);
    s.heading = HeadingSource::Gyro;
    let r = run_drift(&route(vec![leg("a", vec![[0.0, 0.0], [d, 0.0]])]), &p, &s, &NoProgress).expect("run");
    let st = stats(&r, 0);
    let cross_sd = st.covariance_m2[1][1].sqrt();
    let heading_sd_rad = st.heading_sd_deg.to_radians();
    assert_relative_eq!(cross_sd / heading_sd_rad, d / 2.0, max_relative = 0.01);
    // The bias itself: sd of b T over 400 draws within 20 % of 20 deg/h times the drive's
    // duration, about d / v + v / a = 61 s for a trapezoidal speed profile at 1 m/s and 1 m/s^2
    // (relative standard error of a sample sd: 1 / sqrt(2 * 400) = 3.5 %).
    let t_s = d / 1.0 + 1.0 / 1.0;
    assert_relative_eq!(heading_sd_rad, crate::drift::gyro::deg_per_h_to_radps(20.0) * t_s, max_relative = 0.2);
    assert_eq!(r.heading, HeadingSource::Gyro);
    assert!(r.sources.contains("heading from the gyro (bias sd 20 deg/h"), "{}", r.sources);
}

#[test]
fn the_samples_drive_the_planner_s_speed_profile() {
    // With only a gyro bias b random (no noise, no covariance, no angle random walk) every
    // sample's heading error is b T, T the drive's duration, so the ratio of the heading spreads
    // of two runs with the same seed is the ratio of their durations, whatever the draws. Derived
    // here for a trapezoidal profile at the side-acceleration limit a = 1 m/s^2 (kinematics of
    // constant acceleration): 60 m at 1 m/s takes 1 + 59 + 1 = 61 s. With the planner's profile
    // at 1 m/s to 29.9 m, down to 0.5 m/s at 30.1 m and 0.5 m/s on, the follower reaches
    // 0.5 m/s at 30.1 m (the braking envelope: the ramp between is steeper than a allows), so
    // 1 s up to speed (0.5 m), 0.5 s braking from 1 to 0.5 m/s (0.375 m), 0.5 s to a stop
    // (0.125 m): T = 1 + (30.1 - 0.875) + 0.5 + (29.9 - 0.125) / 0.5 + 0.5 = 90.775 s. The
    // final creep onto the end point adds a little to both, hence 2 %.
    let quiet = terrain(Model::ideal(0.9), None, [0.0; 3]);
    let p = with_imu(profile_with(quiet.clone(), quiet), 20.0, 0.0);
    let mut s = settings(50, Odometry::Calibrated);
    s.heading = HeadingSource::Gyro;
    let pts = vec![[0.0, 0.0], [29.9, 0.0], [30.1, 0.0], [60.0, 0.0]];
    let flat = run_drift(&route(vec![leg("a", pts.clone())]), &p, &s, &NoProgress).expect("run");
    let mut slowing = leg("a", pts);
    slowing.set_speed_profile(vec![1.0, 1.0, 0.5, 0.5]);
    let profiled = run_drift(&route(vec![slowing]), &p, &s, &NoProgress).expect("run");
    let ratio = stats(&profiled, 0).heading_sd_deg / stats(&flat, 0).heading_sd_deg;
    assert_relative_eq!(ratio, 90.775 / 61.0, max_relative = 0.02);
}

#[test]
fn a_gyro_keeps_the_heading_that_odometry_loses() {
    // A slipping terrain whose odometry yaw is off (track expansion 1.6 against an ideal
    // odometry model) turns the believed heading on every curve; a gyro of 10 deg/h does not.
    let chi = Model::ExtendedSymmetric(ExtendedSymmetric { track_width_m: 0.9, alpha: 0.95, track_expansion: 1.6 });
    let t = terrain(chi, None, [0.0; 3]);
    let p = with_imu(profile_with(t.clone(), t), 10.0, 0.1);
    let rt = route(vec![leg("a", vec![[0.0, 0.0], [20.0, 0.0], [20.0, 20.0]])]);
    let mut s = settings(50, Odometry::Ideal);
    let odometry = run_drift(&rt, &p, &s, &NoProgress).expect("run");
    s.heading = HeadingSource::Gyro;
    let gyro = run_drift(&rt, &p, &s, &NoProgress).expect("run");
    let (a, b) = (stats(&odometry, 0), stats(&gyro, 0));
    assert!(b.cep95_m < 0.5 * a.cep95_m, "gyro {} m against odometry {} m", b.cep95_m, a.cep95_m);
    assert!(b.heading_bias_deg.abs() < 0.2 * a.heading_bias_deg.abs());
}

#[test]
fn gyro_heading_without_an_imu_is_refused() {
    let quiet = terrain(Model::ideal(0.9), None, [0.0; 3]);
    let mut p = profile_with(quiet.clone(), quiet);
    p.imu = None;
    let mut s = settings(4, Odometry::Ideal);
    s.heading = HeadingSource::Gyro;
    let e = run_drift(&route(vec![leg("a", vec![[0.0, 0.0], [5.0, 0.0]])]), &p, &s, &NoProgress).expect_err("no imu");
    assert!(e.to_string().contains("[imu] section with gyro_bias_sd_deg_per_h and gyro_arw_deg_per_sqrt_h"), "{e}");
}

#[test]
fn defaults_are_shared_and_follow_the_profile() {
    let mut p = Profile::demo();
    let d = DriftSettings::for_profile(&p);
    assert_eq!((d.odometry, d.heading), (Odometry::Ideal, HeadingSource::Gyro), "the demo has an [imu]");
    p.imu = None;
    p.follower.inverse_model = crate::vehicle::InverseChoice::Calibrated;
    let d = DriftSettings::for_profile(&p);
    assert_eq!((d.odometry, d.heading), (Odometry::Calibrated, HeadingSource::Odometry));
}

#[test]
fn terrains_without_noise_or_covariance_are_named_not_hidden() {
    // No covariance and no noise: a CEP near 0 would look precise, so the report names the keys.
    let p = profile_with(
        terrain(slip(0.9), None, [0.0; 3]),
        terrain(slip(0.8), Some(vec![vec![1e-4, 0.0], vec![0.0, 1e-4]]), [0.01, 0.0, 0.0]),
    );
    let rt = route(vec![leg("a", vec![[0.0, 0.0], [15.0, 0.0]]), leg("b", vec![[15.0, 0.0], [15.0, 12.0]])]);
    let r = run_drift(&rt, &p, &settings(8, Odometry::Calibrated), &NoProgress).expect("run");
    assert_eq!(r.warnings.len(), 2, "{:?}", r.warnings);
    assert!(r.warnings[0].starts_with(
        "terrain 'a' has no covariance, noise_heading_rad_per_sqrt_m, noise_along_m_per_sqrt_m, noise_cross_m_per_sqrt_m"
    ));
    assert!(r.warnings[0].contains("no spread"), "{}", r.warnings[0]);
    assert!(r.warnings[1].starts_with("terrain 'b' has no noise_along_m_per_sqrt_m, noise_cross_m_per_sqrt_m"));
    // Legs before the loss do not count.
    let mut s = settings(8, Odometry::Calibrated);
    s.lost_from_leg = 2;
    let r = run_drift(&rt, &p, &s, &NoProgress).expect("run");
    assert_eq!(r.warnings.len(), 1);
    // The demo's deep snow has noise but no covariance.
    let demo = Profile::demo();
    let r = run_drift(
        &route(vec![leg("deep-snow", vec![[0.0, 0.0], [5.0, 0.0]])]),
        &demo,
        &settings(4, Odometry::Ideal),
        &NoProgress,
    )
    .expect("run");
    assert_eq!(r.warnings.len(), 1);
    assert!(
        r.warnings[0].contains("has no covariance (absent or 0): the uncertainty of its model parameters"),
        "{:?}",
        r.warnings
    );
}

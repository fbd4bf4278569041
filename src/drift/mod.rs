//! Mission drift when localization is lost (docs/method.md, Drift): a seeded Monte Carlo over samples, run
//! in parallel with rayon. Each sample draws every terrain's model parameters from the profile's
//! covariance and drives the route closed-loop on the pose it believes (dead reckoning of the
//! measured side speeds through the odometry model), while its true pose follows the drawn
//! model plus random-walk noise (Kelly 2004, "Linearized error propagation in odometry", IJRR).
//!
//! **Error at a leg end** = true pose minus believed pose, taken at the first control step at
//! which the follower's progress point (which moves on the believed pose) reaches the leg's end,
//! or, for the last leg, when the follower considers the route finished. It is what a vehicle
//! that thinks it has arrived at the leg end is off by. Reported per leg end: bias (mean error,
//! also along and across the plan's direction at the leg end), covariance, 95 % ellipse
//! (semi-axes sqrt(5.991 lambda_i), chi-square 2 dof), CEP50 and CEP95 as empirical quantiles of
//! |error|, and the distance along the plan since localization was lost.
//!
//! **Heading source.** With [`HeadingSource::Odometry`] the believed heading follows the odometry
//! model's yaw rate; with [`HeadingSource::Gyro`] it follows the profile's gyro (`[imu]`, see
//! [`gyro`]): the true yaw rate plus the run's bias and angle random walk. Positions are dead
//! reckoned through the odometry model either way.
//!
//! **Defaults** ([`DriftSettings::for_profile`]): odometry from the profile's
//! `inverse_model` and heading from the gyro when the profile has an `[imu]`; `drift`,
//! `check --drift` and `compare --by drift` all start from these, and every report says which.
//!
//! **Warnings.** A terrain on the route without a covariance, or with noise intensities absent or
//! 0, contributes no spread of its own; the report names the missing keys ([`DriftReport::warnings`])
//! instead of showing a CEP that looks precise.
//!
//! Determinism: sample i uses ChaCha8 seeded with the run's seed on stream i, and results are
//! combined in sample order, so output is identical whatever the number of threads.
//!
//! Units: metres, seconds, radians in the local frame (x east, y north); degrees only for the
//! reported heading error.

mod draw;
pub mod gyro;
mod pose;
mod sample;
pub mod stats;

use rayon::prelude::*;
use serde::Serialize;

use crate::kinematics::Model;
use crate::progress::Progress;
use crate::rollout::RouteDrive;
use crate::route::Route;
use crate::vehicle::Profile;

pub use draw::{psd_factor, ParamSampler};
pub use gyro::{Gyro, HeadingSource};
pub use sample::Noise;
pub use stats::{ellipse95, error_stats, Ellipse, ErrorStats, CHI2_2DOF_95};

/// Most samples a run may ask for (the value lives with the other limits).
pub use crate::limits::MAX_SAMPLES;
/// True paths kept for plots by default.
pub const DEFAULT_PATHS_KEPT: usize = 50;

/// The model the vehicle dead-reckons with.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize)]
#[serde(rename_all = "lowercase")]
pub enum Odometry {
    /// Ideal differential drive with the nominal track width (uncalibrated odometry).
    Ideal,
    /// The profile's nominal model of the terrain the vehicle believes it is on.
    Calibrated,
}

impl Odometry {
    pub fn name(self) -> &'static str {
        match self {
            Odometry::Ideal => "ideal",
            Odometry::Calibrated => "calibrated",
        }
    }
}

/// Settings of a drift run.
#[derive(Debug, Clone, PartialEq)]
pub struct DriftSettings {
    /// Monte Carlo samples, 1..=[`MAX_SAMPLES`].
    pub samples: usize,
    pub seed: u64,
    /// Leg (1-based) at whose start localization is lost; 1 = from the start of the route.
    pub lost_from_leg: usize,
    pub odometry: Odometry,
    /// Where the believed heading comes from.
    pub heading: HeadingSource,
    /// True paths of the first samples kept for plots.
    pub paths_kept: usize,
}

impl Default for DriftSettings {
    fn default() -> Self {
        DriftSettings {
            samples: 2000,
            seed: 7,
            lost_from_leg: 1,
            odometry: Odometry::Calibrated,
            heading: HeadingSource::Odometry,
            paths_kept: DEFAULT_PATHS_KEPT,
        }
    }
}

impl DriftSettings {
    /// The defaults every command uses with `profile`: odometry from its follower's
    /// `inverse_model`, heading from the gyro when it has an `[imu]`, otherwise from odometry.
    pub fn for_profile(profile: &Profile) -> DriftSettings {
        DriftSettings { odometry: default_odometry(profile), heading: default_heading(profile), ..Default::default() }
    }
}

/// The odometry a vehicle with this profile dead-reckons with by default: the model its
/// controller inverts (`[follower] inverse_model`).
pub fn default_odometry(profile: &Profile) -> Odometry {
    match profile.follower.inverse_model {
        crate::vehicle::InverseChoice::Ideal => Odometry::Ideal,
        crate::vehicle::InverseChoice::Calibrated => Odometry::Calibrated,
    }
}

/// The heading source by default: the gyro when the profile has an `[imu]`.
pub fn default_heading(profile: &Profile) -> HeadingSource {
    if profile.imu.is_some() {
        HeadingSource::Gyro
    } else {
        HeadingSource::Odometry
    }
}

/// The odometry and heading source in words, for every report ("ideal odometry, heading from
/// the gyro (bias 10 deg/h, angle random walk 0.3 deg/sqrt(h))").
pub fn sources_text(odometry: Odometry, heading: HeadingSource, imu: Option<&crate::vehicle::ImuSpec>) -> String {
    let heading = match (heading, imu) {
        (HeadingSource::Gyro, Some(i)) => format!(
            "heading from the gyro (bias sd {} deg/h, angle random walk {} deg/sqrt(h))",
            i.gyro_bias_sd_deg_per_h, i.gyro_arw_deg_per_sqrt_h
        ),
        (HeadingSource::Gyro, None) => "heading from the gyro".to_string(),
        (HeadingSource::Odometry, _) => "heading from odometry".to_string(),
    };
    format!("{} odometry, {heading}", odometry.name())
}

/// A drift run that cannot start.
#[derive(Debug, thiserror::Error)]
pub enum DriftError {
    #[error("--samples must be between 1 and {max}, got {samples}")]
    Samples { samples: usize, max: usize },
    #[error("--lost-from-leg must be between 1 and {legs} (the route's legs), got {leg}")]
    LostFromLeg { leg: usize, legs: usize },
    #[error("route '{route}' has no legs")]
    NoLegs { route: String },
    #[error("route '{route}' leg {leg}: unknown terrain '{terrain}'")]
    UnknownTerrain { route: String, leg: usize, terrain: String },
    #[error("terrain '{terrain}': {what}")]
    Covariance { terrain: String, what: String },
    #[error(
        "--heading gyro needs the profile's [imu] section with gyro_bias_sd_deg_per_h and gyro_arw_deg_per_sqrt_h"
    )]
    NoImu,
}

/// The drift at one leg end.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct LegDrift {
    /// 1-based leg index.
    pub index: usize,
    #[serde(skip_serializing_if = "Option::is_none")]
    pub name: Option<String>,
    pub terrain: String,
    /// Distance along the plan from where localization was lost to this leg end (0 for legs
    /// that end before the loss).
    pub distance_m: f64,
    /// Arc length of the leg end along the route.
    pub end_along_route_m: f64,
    /// Plan point of the leg end, local frame.
    pub end_east_m: f64,
    pub end_north_m: f64,
    /// Unit direction of the plan arriving at the leg end (along-track axis).
    #[serde(skip)]
    pub direction: [f64; 2],
    /// Samples that reached this leg end (the others timed out before it).
    pub samples_reached: usize,
    /// Statistics over the samples that reached the leg end; absent when none did.
    #[serde(flatten)]
    pub stats: Option<ErrorStats>,
}

impl LegDrift {
    /// CEP95 at this leg end, when any sample reached it.
    pub fn cep95_m(&self) -> Option<f64> {
        self.stats.as_ref().map(|s| s.cep95_m)
    }
}

/// The result of a drift run on one route.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct DriftReport {
    pub route: String,
    pub source: String,
    pub vehicle: String,
    pub seed: u64,
    pub samples: usize,
    pub odometry: Odometry,
    pub heading: HeadingSource,
    /// The odometry and heading source in words.
    pub sources: String,
    pub lost_from_leg: usize,
    /// Arc length where localization is lost.
    pub loss_start_m: f64,
    /// Samples that did not finish within the time bound (counted, their later leg ends missing).
    pub timed_out: usize,
    /// Control steps simulated over all samples.
    pub steps: u64,
    pub legs: Vec<LegDrift>,
    /// What the figures leave out: terrains without covariance or noise intensities.
    pub warnings: Vec<String>,
    /// True paths of the first samples, for plots (local frame).
    #[serde(skip)]
    pub sample_paths: Vec<Vec<[f64; 2]>>,
}

/// Runs the drift Monte Carlo of `route` with `profile` (docs/method.md, Drift) on the current rayon pool.
///
/// ```
/// use skidroute::drift::{run_drift, DriftSettings};
/// use skidroute::progress::NoProgress;
/// use skidroute::route::{Leg, Route, SourcePosition};
/// use skidroute::vehicle::Profile;
///
/// let leg = Leg {
///     name: None,
///     terrain: "gravel".into(),
///     speed_mps: None,
///     corridor_m: None,
///     points: vec![[0.0, 0.0], [20.0, 0.0]],
///     altitude_m: None,
///     speeds_mps: None,
///     corridors_m: None,
///     cross_slope: None,
///     position: SourcePosition::Feature(0),
///     added_points: None,
/// };
/// let route = Route { name: "r".into(), source: "r.geojson".into(), origin: None, legs: vec![leg], warnings: vec![] };
/// let settings = DriftSettings { samples: 20, ..DriftSettings::default() };
/// let report = run_drift(&route, &Profile::demo(), &settings, &NoProgress).unwrap();
/// assert!(report.legs[0].cep95_m().unwrap() > 0.0);
/// ```
pub fn run_drift(
    route: &Route,
    profile: &Profile,
    settings: &DriftSettings,
    progress: &dyn Progress,
) -> Result<DriftReport, DriftError> {
    let setup = setup(route, profile, settings)?;
    progress.start(settings.samples as u64, "drift");
    let outcomes: Vec<sample::SampleOutcome> = (0..settings.samples)
        .into_par_iter()
        .map(|i| {
            let out = sample::run_sample(&setup, settings.seed, i as u64, i < settings.paths_kept);
            progress.advance(1);
            out
        })
        .collect();
    progress.finish();
    Ok(summarise(route, profile, settings, &setup, outcomes))
}

fn validate(route: &Route, profile: &Profile, settings: &DriftSettings) -> Result<(), DriftError> {
    if !(1..=MAX_SAMPLES).contains(&settings.samples) {
        return Err(DriftError::Samples { samples: settings.samples, max: MAX_SAMPLES });
    }
    if route.legs.is_empty() {
        return Err(DriftError::NoLegs { route: route.name.clone() });
    }
    if settings.heading == HeadingSource::Gyro && profile.imu.is_none() {
        return Err(DriftError::NoImu);
    }
    if !(1..=route.legs.len()).contains(&settings.lost_from_leg) {
        return Err(DriftError::LostFromLeg { leg: settings.lost_from_leg, legs: route.legs.len() });
    }
    for (i, leg) in route.legs.iter().enumerate() {
        if !profile.terrain.contains_key(&leg.terrain) {
            return Err(DriftError::UnknownTerrain {
                route: route.name.clone(),
                leg: i + 1,
                terrain: leg.terrain.clone(),
            });
        }
    }
    Ok(())
}

fn setup(route: &Route, profile: &Profile, settings: &DriftSettings) -> Result<sample::SampleSetup, DriftError> {
    validate(route, profile, settings)?;
    let drive = RouteDrive::new(route, profile);
    let b = profile.vehicle.track_width_m;
    let mut names: Vec<&str> = Vec::new();
    let mut samplers = Vec::new();
    let mut leg_terrain = Vec::with_capacity(route.legs.len());
    let (mut odometry, mut noise) = (Vec::new(), Vec::new());
    for leg in &route.legs {
        // `validate` checked every terrain.
        let Some(t) = profile.terrain.get(&leg.terrain) else { continue };
        let idx = match names.iter().position(|n| *n == leg.terrain) {
            Some(i) => i,
            None => {
                let s = ParamSampler::new(&t.model, t.covariance.as_deref())
                    .map_err(|what| DriftError::Covariance { terrain: leg.terrain.clone(), what })?;
                names.push(&leg.terrain);
                samplers.push(s);
                names.len() - 1
            }
        };
        leg_terrain.push(idx);
        odometry.push(match settings.odometry {
            Odometry::Ideal => Model::ideal(b),
            Odometry::Calibrated => t.model.clone(),
        });
        noise.push(Noise {
            heading_rad_per_sqrt_m: t.noise_heading_rad_per_sqrt_m,
            along_m_per_sqrt_m: t.noise_along_m_per_sqrt_m,
            cross_m_per_sqrt_m: t.noise_cross_m_per_sqrt_m,
        });
    }
    let loss_start_m = drive.plan.leg_bounds_m(settings.lost_from_leg - 1).0;
    let time_limit_s = drive.time_limit_s();
    let path_spacing_m = (drive.plan.length_m() / 1500.0).max(0.25);
    let gyro = match settings.heading {
        HeadingSource::Gyro => profile.imu.as_ref().map(Gyro::from_spec),
        HeadingSource::Odometry => None,
    };
    let segment_inv_len2 = sample::inverse_lengths2(drive.plan.points());
    Ok(sample::SampleSetup {
        drive,
        gyro,
        samplers,
        leg_terrain,
        odometry,
        noise,
        segment_inv_len2,
        loss_start_m,
        time_limit_s,
        path_spacing_m,
    })
}

fn summarise(
    route: &Route,
    profile: &Profile,
    settings: &DriftSettings,
    setup: &sample::SampleSetup,
    outcomes: Vec<sample::SampleOutcome>,
) -> DriftReport {
    let plan = &setup.drive.plan;
    let timed_out = outcomes.iter().filter(|o| o.timed_out).count();
    let steps = outcomes.iter().map(|o| o.steps).sum();
    let legs = route
        .legs
        .iter()
        .enumerate()
        .map(|(i, leg)| {
            let (start_m, end_m) = plan.leg_bounds_m(i);
            let direction = plan.direction_at((end_m - 1e-6).max(start_m));
            let end = plan.point_at(end_m);
            let errors: Vec<[f64; 3]> = outcomes.iter().filter_map(|o| o.ends.get(i).copied().flatten()).collect();
            LegDrift {
                index: i + 1,
                name: leg.name.clone(),
                terrain: leg.terrain.clone(),
                distance_m: (end_m - setup.loss_start_m).max(0.0),
                end_along_route_m: end_m,
                end_east_m: end[0],
                end_north_m: end[1],
                direction,
                samples_reached: errors.len(),
                stats: error_stats(&errors, direction),
            }
        })
        .collect();
    let sample_paths = outcomes.into_iter().filter_map(|o| o.path).collect();
    DriftReport {
        route: route.name.clone(),
        source: route.source.display().to_string(),
        vehicle: profile.vehicle.name.clone(),
        seed: settings.seed,
        samples: settings.samples,
        odometry: settings.odometry,
        heading: settings.heading,
        sources: sources_text(settings.odometry, settings.heading, profile.imu.as_ref()),
        lost_from_leg: settings.lost_from_leg,
        loss_start_m: setup.loss_start_m,
        timed_out,
        steps,
        legs,
        warnings: drift_warnings(route, profile, settings),
        sample_paths,
    }
}

/// The keys a terrain lacks for its drift to have a spread: `covariance` (absent or all 0) and
/// the noise intensities (absent or 0).
pub fn missing_noise_keys(t: &crate::vehicle::TerrainSpec) -> Vec<&'static str> {
    let mut out = Vec::new();
    if t.covariance.as_ref().is_none_or(|c| c.iter().flatten().all(|x| *x == 0.0)) {
        out.push("covariance");
    }
    for (key, value) in [
        ("noise_heading_rad_per_sqrt_m", t.noise_heading_rad_per_sqrt_m),
        ("noise_along_m_per_sqrt_m", t.noise_along_m_per_sqrt_m),
        ("noise_cross_m_per_sqrt_m", t.noise_cross_m_per_sqrt_m),
    ] {
        if value == 0.0 {
            out.push(key);
        }
    }
    out
}

/// One warning per terrain driven after the loss that lacks noise keys, in route order; a
/// heading walk the gyro measures does not need `noise_heading_rad_per_sqrt_m`.
pub fn drift_warnings(route: &Route, profile: &Profile, settings: &DriftSettings) -> Vec<String> {
    let mut seen: Vec<&str> = Vec::new();
    let mut out = Vec::new();
    for leg in route.legs.iter().skip(settings.lost_from_leg.saturating_sub(1)) {
        if seen.contains(&leg.terrain.as_str()) {
            continue;
        }
        seen.push(&leg.terrain);
        let Some(t) = profile.terrain.get(&leg.terrain) else { continue };
        let missing: Vec<&str> = missing_noise_keys(t)
            .into_iter()
            .filter(|k| !(settings.heading == HeadingSource::Gyro && *k == "noise_heading_rad_per_sqrt_m"))
            .collect();
        if missing.is_empty() {
            continue;
        }
        let all = missing.len() == 4 || (missing.len() == 3 && settings.heading == HeadingSource::Gyro);
        let effect = if all {
            "its drift shows only the difference between the odometry and the terrain model, with no spread (a CEP \
             near 0 m here means nothing was simulated, not that the vehicle stays on track)"
        } else if missing == ["covariance"] {
            "the uncertainty of its model parameters is left out of the spread"
        } else {
            "the random-walk noise these keys describe is left out of the spread"
        };
        out.push(format!(
            "terrain '{}' has no {} (absent or 0): {effect}; calibrate it with skidroute fit",
            leg.terrain,
            missing.join(", ")
        ));
    }
    out
}

#[cfg(test)]
mod tests;

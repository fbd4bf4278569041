//! Vehicle profiles: geometry, limits, follower settings and one calibrated model per terrain,
//! read from TOML with strict validation (unknown keys and out-of-range values name the key), and
//! the built-in demo profile. SI units throughout.

mod parse;
mod write;

use std::collections::BTreeMap;
use std::path::{Path, PathBuf};

use crate::kinematics::{Family, Model};

pub use parse::{parse_profile, parse_profile_with_warnings, MAX_PROFILE_TOKENS};
pub(crate) use parse::{suggestion, valid_terrain_name};
pub use write::profile_to_toml;

/// The built-in demo profile: an invented tracked carrier. Its coefficients are invented for the
/// demo and are not data.
pub const DEMO_PROFILE_TOML: &str = include_str!("demo.toml");

/// Running gear: changes the turning-resistance moment (Wong 2008).
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum RunningGear {
    Tracks,
    Wheels,
}

impl RunningGear {
    pub fn name(self) -> &'static str {
        match self {
            RunningGear::Tracks => "tracks",
            RunningGear::Wheels => "wheels",
        }
    }
}

/// Geometry and limits of the vehicle (`[vehicle]`).
#[derive(Debug, Clone, PartialEq)]
pub struct VehicleSpec {
    pub name: String,
    pub running_gear: RunningGear,
    /// B, track centreline to centreline.
    pub track_width_m: f64,
    /// l, track ground contact length, or wheelbase for wheels.
    pub contact_length_m: f64,
    pub mass_kg: f64,
    pub max_side_speed_mps: f64,
    pub max_side_accel_mps2: f64,
    pub max_side_thrust_n: f64,
    pub max_power_w: f64,
    /// Electrical/mechanical to track, in (0, 1].
    pub drivetrain_efficiency: f64,
    pub regenerative: bool,
    pub cruise_speed_mps: f64,
    pub max_yaw_rate_radps: f64,
    /// Usable battery energy, when known (optional key `battery_wh`).
    pub battery_wh: Option<f64>,
    /// Height of the centre of gravity above the ground, when known (optional key
    /// `cog_height_m`): it shifts load to the downhill side on a cross slope and sets the
    /// tipping limit B / (2 h). Without it neither is judged (docs/method.md, Effort).
    pub cog_height_m: Option<f64>,
}

/// How the onboard controller turns a (v, omega) command into side speeds.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum InverseChoice {
    /// Ideal differential drive with the nominal track width.
    Ideal,
    /// The terrain's calibrated model (the controller knows the terrain).
    Calibrated,
}

/// Path follower settings (`[follower]`).
#[derive(Debug, Clone, PartialEq)]
pub struct FollowerSpec {
    pub lookahead_m: f64,
    pub control_rate_hz: f64,
    pub inverse_model: InverseChoice,
    /// Default corridor (allowed lateral deviation either side) for legs without one.
    pub corridor_m: f64,
    /// Spacing used to measure the plan's curvature (docs/method.md, Plan curvature).
    pub curvature_scale_m: f64,
    /// Optional slow-down in turns (docs/method.md, Following): when set, the follower limits
    /// its speed so the lateral acceleration of its pursuit arc stays under this value and the
    /// turn within the traction radius. `None` (the default): the follower does not slow.
    pub max_lateral_accel_mps2: Option<f64>,
}

/// One terrain (`[terrain.NAME]`): its calibrated motion model and traction coefficients.
#[derive(Debug, Clone, PartialEq)]
pub struct TerrainSpec {
    pub model: Model,
    /// f_r, rolling resistance coefficient.
    pub rolling_resistance: f64,
    /// mu, limit of thrust / normal load.
    pub traction_coefficient: f64,
    /// mu_t at a pivot turn (R = B/2).
    pub lateral_resistance_max: f64,
    /// Parameter covariance in the family's parameter order (written by `fit`).
    pub covariance: Option<Vec<Vec<f64>>>,
    pub noise_heading_rad_per_sqrt_m: f64,
    pub noise_along_m_per_sqrt_m: f64,
    pub noise_cross_m_per_sqrt_m: f64,
    /// Where the model came from, when `fit` wrote it (the `calibrat*` keys).
    pub calibration: Option<TerrainCalibration>,
}

/// What `fit` records about a terrain's model (keys `calibrated`, `calibration_source`,
/// `calibration_translation_error`, `calibration_horizon_s`).
#[derive(Debug, Clone, PartialEq, Default)]
pub struct TerrainCalibration {
    /// True when the model was fitted to drive logs; false for a terrain `fit` kept unchanged.
    pub calibrated: bool,
    /// The data it came from, or why it was not fitted, in words.
    pub source: Option<String>,
    /// Median relative translation error on the validation windows (a fraction), what
    /// `replay` compares new logs with.
    pub translation_error: Option<f64>,
    /// Horizon of the windows the model was fitted and validated on, seconds.
    pub horizon_s: Option<f64>,
}

/// The vehicle's gyro (`[imu]`), for dead reckoning with gyro heading in `drift` (docs/drift.md).
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct ImuSpec {
    /// Standard deviation of the gyro's bias over a run (turn-on to turn-on), degrees per hour.
    pub gyro_bias_sd_deg_per_h: f64,
    /// Angle random walk, degrees per square-root hour.
    pub gyro_arw_deg_per_sqrt_h: f64,
}

/// A validated vehicle profile.
#[derive(Debug, Clone, PartialEq)]
pub struct Profile {
    pub vehicle: VehicleSpec,
    pub follower: FollowerSpec,
    /// Terrains by name, sorted.
    pub terrain: BTreeMap<String, TerrainSpec>,
    /// The gyro, when the profile has an `[imu]` section.
    pub imu: Option<ImuSpec>,
}

impl Profile {
    /// The built-in demo profile.
    pub fn demo() -> Profile {
        match parse_profile(Path::new("<built-in demo profile>"), DEMO_PROFILE_TOML) {
            Ok(p) => p,
            // The demo text is a compile-time constant covered by a unit test.
            Err(e) => unreachable!("built-in demo profile is invalid: {e}"),
        }
    }

    /// Reads and validates a profile file (at most the default file-size limit).
    pub fn read(path: &Path) -> Result<Profile, VehicleError> {
        Profile::read_with(path, &crate::limits::Limits::default())
    }

    /// Reads and validates a profile file no larger than `limits.max_file_bytes`.
    pub fn read_with(path: &Path, limits: &crate::limits::Limits) -> Result<Profile, VehicleError> {
        Profile::read_with_warnings(path, limits).map(|(profile, _)| profile)
    }

    /// [`Profile::read_with`], also returning the warnings about implausible magnitudes (one
    /// line each, naming the file, key and line) for the caller to show.
    pub fn read_with_warnings(
        path: &Path,
        limits: &crate::limits::Limits,
    ) -> Result<(Profile, Vec<String>), VehicleError> {
        use crate::limits::{read_text_limited, ReadLimitedError};
        let text = read_text_limited(path, limits.max_file_bytes).map_err(|e| match e {
            ReadLimitedError::Io(source) => VehicleError::Io { file: path.to_path_buf(), source },
            other => VehicleError::File { file: path.to_path_buf(), what: other.to_string() },
        })?;
        parse_profile_with_warnings(path, &text)
    }

    /// Terrain names, sorted.
    pub fn terrain_names(&self) -> Vec<&str> {
        self.terrain.keys().map(String::as_str).collect()
    }

    /// The model the onboard controller inverts on a terrain.
    pub fn controller_model(&self, terrain: &TerrainSpec) -> Model {
        match self.follower.inverse_model {
            InverseChoice::Ideal => Model::ideal(self.vehicle.track_width_m),
            InverseChoice::Calibrated => terrain.model.clone(),
        }
    }
}

/// Family of a terrain model, for reports.
pub fn family_of(t: &TerrainSpec) -> Family {
    t.model.family()
}

/// A problem in a profile file. Messages name the file and the key (with its table path).
#[derive(Debug, thiserror::Error)]
pub enum VehicleError {
    #[error("{file}: cannot read: {source}")]
    Io { file: PathBuf, source: std::io::Error },
    #[error("{file}: {what}")]
    File { file: PathBuf, what: String },
    #[error("{file}: not valid TOML: {message}")]
    Syntax { file: PathBuf, message: String },
    #[error("{file}: {key}: {what} (line {line})")]
    Key { file: PathBuf, key: String, what: String, line: usize },
    /// Several problems, in line order: the message has one line per problem.
    #[error("{}", several(.errors))]
    Several { errors: Vec<VehicleError> },
}

fn several(errors: &[VehicleError]) -> String {
    errors.iter().map(ToString::to_string).collect::<Vec<_>>().join("\n")
}

//! Skid-steer motion models: measured or commanded side speeds (left, right; m/s, positive
//! forward) to the body twist (vx forward m/s, vy left m/s, omega anticlockwise rad/s), and back.
//! Body frame: x forward, y left. Curvature and yaw rate are positive for a left turn.
//!
//! Six families (docs/method.md, Model families) share the [`MotionModel`] trait; [`Model`] is the enum the rest of
//! the crate stores so hot loops dispatch without allocation or virtual calls.

mod families;
pub mod se2;

pub use families::{Extended, ExtendedScheduled, ExtendedSymmetric, Icr, Ideal, Linear, ScheduleRow};
pub use se2::{Pose, Twist};

/// Forward and inverse kinematics of one calibrated model.
pub trait MotionModel {
    /// Body twist produced by side speeds `(left_mps, right_mps)`.
    fn twist(&self, left_mps: f64, right_mps: f64) -> Twist;
    /// Side speeds `(left_mps, right_mps)` that produce forward speed `vx_mps` and yaw rate
    /// `omega_radps`, or `None` where the model cannot produce that pair (a singular model).
    /// Families with a lateral velocity match vx and omega and accept the vy they produce.
    fn inverse(&self, vx_mps: f64, omega_radps: f64) -> Option<(f64, f64)>;
    /// The family's parameters in the order of [`Family::param_names`].
    fn params(&self) -> Vec<f64>;
}

/// The model families, with the names used in profiles and reports.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash, PartialOrd, Ord)]
pub enum Family {
    Ideal,
    ExtendedSymmetric,
    Extended,
    Icr,
    Linear,
    ExtendedScheduled,
}

impl Family {
    pub const ALL: [Family; 6] = [
        Family::Ideal,
        Family::ExtendedSymmetric,
        Family::Extended,
        Family::Icr,
        Family::Linear,
        Family::ExtendedScheduled,
    ];

    /// The profile name of the family (`model = "..."`).
    pub fn name(self) -> &'static str {
        match self {
            Family::Ideal => "ideal",
            Family::ExtendedSymmetric => "extended-symmetric",
            Family::Extended => "extended",
            Family::Icr => "icr",
            Family::Linear => "linear",
            Family::ExtendedScheduled => "extended-scheduled",
        }
    }

    pub fn from_name(name: &str) -> Option<Family> {
        Family::ALL.into_iter().find(|f| f.name() == name)
    }

    /// Profile keys of the family's scalar parameters, in parameter-vector order.
    /// `extended-scheduled` keeps its parameters in a `schedule` table instead.
    pub fn param_names(self) -> &'static [&'static str] {
        match self {
            Family::Ideal => &[],
            Family::ExtendedSymmetric => &["alpha", "track_expansion"],
            Family::Extended => &["alpha_left", "alpha_right", "track_expansion"],
            Family::Icr => &["icr_left_m", "icr_right_m", "icr_long_m"],
            Family::Linear => &["j11", "j12", "j21", "j22", "j31", "j32"],
            Family::ExtendedScheduled => &[],
        }
    }
}

impl std::fmt::Display for Family {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        f.write_str(self.name())
    }
}

/// A model of any family. The track width `B` of the vehicle is stored in the families that need it.
#[derive(Debug, Clone, PartialEq)]
pub enum Model {
    Ideal(Ideal),
    ExtendedSymmetric(ExtendedSymmetric),
    Extended(Extended),
    Icr(Icr),
    Linear(Linear),
    ExtendedScheduled(ExtendedScheduled),
}

macro_rules! dispatch {
    ($self:ident, $m:ident => $e:expr) => {
        match $self {
            Model::Ideal($m) => $e,
            Model::ExtendedSymmetric($m) => $e,
            Model::Extended($m) => $e,
            Model::Icr($m) => $e,
            Model::Linear($m) => $e,
            Model::ExtendedScheduled($m) => $e,
        }
    };
}

impl Model {
    pub fn family(&self) -> Family {
        match self {
            Model::Ideal(_) => Family::Ideal,
            Model::ExtendedSymmetric(_) => Family::ExtendedSymmetric,
            Model::Extended(_) => Family::Extended,
            Model::Icr(_) => Family::Icr,
            Model::Linear(_) => Family::Linear,
            Model::ExtendedScheduled(_) => Family::ExtendedScheduled,
        }
    }

    /// Builds a scalar-parameter family from its parameter vector (order of
    /// [`Family::param_names`]). Returns `None` for a wrong length or for `extended-scheduled`.
    pub fn from_params(family: Family, params: &[f64], track_width_m: f64) -> Option<Model> {
        if params.len() != family.param_names().len() {
            return None;
        }
        let b = track_width_m;
        Some(match family {
            Family::Ideal => Model::Ideal(Ideal { track_width_m: b }),
            Family::ExtendedSymmetric => Model::ExtendedSymmetric(ExtendedSymmetric {
                track_width_m: b,
                alpha: params[0],
                track_expansion: params[1],
            }),
            Family::Extended => Model::Extended(Extended {
                track_width_m: b,
                alpha_left: params[0],
                alpha_right: params[1],
                track_expansion: params[2],
            }),
            Family::Icr => Model::Icr(Icr { icr_left_m: params[0], icr_right_m: params[1], icr_long_m: params[2] }),
            Family::Linear => {
                Model::Linear(Linear { j: [[params[0], params[1]], [params[2], params[3]], [params[4], params[5]]] })
            }
            Family::ExtendedScheduled => return None,
        })
    }

    /// The ideal differential-drive model of a vehicle with track width `track_width_m`.
    pub fn ideal(track_width_m: f64) -> Model {
        Model::Ideal(Ideal { track_width_m })
    }
}

impl MotionModel for Model {
    // Always inlined: the simulation loops call these every step, and a call returns its result
    // through memory, which the next arithmetic waits for.
    #[inline(always)]
    fn twist(&self, left_mps: f64, right_mps: f64) -> Twist {
        dispatch!(self, m => m.twist(left_mps, right_mps))
    }
    #[inline(always)]
    fn inverse(&self, vx_mps: f64, omega_radps: f64) -> Option<(f64, f64)> {
        dispatch!(self, m => m.inverse(vx_mps, omega_radps))
    }
    fn params(&self) -> Vec<f64> {
        dispatch!(self, m => m.params())
    }
}

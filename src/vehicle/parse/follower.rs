//! `[follower]`: the path follower being predicted.

use super::section::{Rule, Section};
use crate::limits::clip;
use crate::vehicle::{FollowerSpec, InverseChoice, VehicleError};

const FOLLOWER_KEYS: &[&str] = &["lookahead_m", "control_rate_hz", "inverse_model", "corridor_m", "curvature_scale_m"];

pub(super) fn parse_follower(s: &Section) -> Result<FollowerSpec, VehicleError> {
    s.check_keys(FOLLOWER_KEYS, None)?;
    let inverse_model = match s.string("inverse_model")? {
        "ideal" => InverseChoice::Ideal,
        "calibrated" => InverseChoice::Calibrated,
        other => {
            return Err(s.error("inverse_model", format!("must be \"ideal\" or \"calibrated\", got {:?}", clip(other))))
        }
    };
    Ok(FollowerSpec {
        lookahead_m: s.number("lookahead_m", Rule::Positive)?,
        control_rate_hz: control_rate_hz(s)?,
        inverse_model,
        corridor_m: s.number("corridor_m", Rule::Positive)?,
        curvature_scale_m: s.number("curvature_scale_m", Rule::Positive)?,
    })
}

/// Controllers of these vehicles run at a few to a few hundred hertz; outside 0.1 to 10 000 Hz
/// the value is a unit mistake, and the simulation step (its inverse) would be meaningless.
fn control_rate_hz(s: &Section) -> Result<f64, VehicleError> {
    let hz = s.number("control_rate_hz", Rule::Positive)?;
    if !(0.1..=10_000.0).contains(&hz) {
        return Err(s.error("control_rate_hz", format!("must be between 0.1 and 10000 Hz, got {hz}")));
    }
    Ok(hz)
}

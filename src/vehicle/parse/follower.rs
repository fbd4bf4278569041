//! `[follower]`: the path follower being predicted.

use super::section::{Plausible, Rule, Section};
use crate::limits::{clip, MAX_CORRIDOR_M};
use crate::vehicle::{FollowerSpec, InverseChoice};

pub(super) const FOLLOWER_KEYS: &[&str] =
    &["lookahead_m", "control_rate_hz", "inverse_model", "corridor_m", "curvature_scale_m", "max_lateral_accel_mps2"];

const LOOKAHEAD: Plausible = Plausible { unit: "m", max: 1e4, usual: (0.05, 100.0), hint: "is it in metres?" };
const CORRIDOR: Plausible =
    Plausible { unit: "m", max: MAX_CORRIDOR_M, usual: (0.01, 100.0), hint: "is it in metres?" };
const SCALE: Plausible = Plausible { unit: "m", max: 1e4, usual: (0.01, 100.0), hint: "is it in metres?" };
/// Lateral acceleration the follower keeps its turns under (optional slow-down in turns).
const LATERAL_ACCEL: Plausible = Plausible { unit: "m/s^2", max: 1000.0, usual: (0.01, 20.0), hint: "is it in m/s^2?" };

pub(super) fn parse_follower(s: &Section) -> FollowerSpec {
    s.check_keys(FOLLOWER_KEYS, None);
    let inverse_model = match s.string("inverse_model") {
        "ideal" => InverseChoice::Ideal,
        "calibrated" => InverseChoice::Calibrated,
        other => {
            if s.get("inverse_model").is_some_and(|v| v.get_ref().as_str().is_some()) {
                let what = format!("must be \"ideal\" or \"calibrated\", got {:?}", clip(other));
                s.error("inverse_model", what);
            }
            InverseChoice::Ideal
        }
    };
    FollowerSpec {
        lookahead_m: s.plausible_number("lookahead_m", Rule::Positive, &LOOKAHEAD),
        control_rate_hz: control_rate_hz(s),
        inverse_model,
        corridor_m: s.plausible_number("corridor_m", Rule::Positive, &CORRIDOR),
        curvature_scale_m: s.plausible_number("curvature_scale_m", Rule::Positive, &SCALE),
        max_lateral_accel_mps2: s.optional_plausible_number("max_lateral_accel_mps2", Rule::Positive, &LATERAL_ACCEL),
    }
}

/// Controllers of these vehicles run at a few to a few hundred hertz; outside 0.1 to 10 000 Hz
/// the value is a unit mistake, and the simulation step (its inverse) would be meaningless.
fn control_rate_hz(s: &Section) -> f64 {
    let Some(hz) = s.number_opt("control_rate_hz", Rule::Positive) else {
        return 20.0;
    };
    if !(0.1..=10_000.0).contains(&hz) {
        s.error("control_rate_hz", format!("must be between 0.1 and 10000 Hz, got {}", crate::limits::show_number(hz)));
        return 20.0;
    }
    hz
}

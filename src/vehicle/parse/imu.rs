//! `[imu]` (optional): the gyro that keeps the heading when localization is lost
//! (docs/drift.md, gyro heading).

use super::section::{Plausible, Rule, Section};
use crate::vehicle::ImuSpec;

pub(super) const IMU_KEYS: &[&str] = &["gyro_bias_sd_deg_per_h", "gyro_arw_deg_per_sqrt_h"];

/// Run-to-run bias: a navigation-grade gyro has hundredths of a degree per hour, a low-cost MEMS
/// part tens to hundreds; above 100 000 deg/h (28 deg/s) it no longer measures a heading.
const BIAS: Plausible =
    Plausible { unit: "deg/h", max: 1e5, usual: (0.0, 1000.0), hint: "degrees per hour, not per second?" };
/// Angle random walk: from thousandths (navigation grade) to a few degrees per root hour (MEMS).
const ARW: Plausible =
    Plausible { unit: "deg/sqrt(h)", max: 1e3, usual: (0.0, 10.0), hint: "degrees per square-root hour?" };

/// Both keys are required, each >= 0.
pub(super) fn parse_imu(s: &Section) -> ImuSpec {
    s.check_keys(IMU_KEYS, None);
    ImuSpec {
        gyro_bias_sd_deg_per_h: s.plausible_number("gyro_bias_sd_deg_per_h", Rule::NonNegative, &BIAS),
        gyro_arw_deg_per_sqrt_h: s.plausible_number("gyro_arw_deg_per_sqrt_h", Rule::NonNegative, &ARW),
    }
}

//! `[vehicle]`: geometry, limits and energy of the vehicle.

use super::section::{Rule, Section};
use crate::limits::clip;
use crate::vehicle::{RunningGear, VehicleError, VehicleSpec};

pub(super) const VEHICLE_KEYS: &[&str] = &[
    "name",
    "running_gear",
    "track_width_m",
    "contact_length_m",
    "mass_kg",
    "max_side_speed_mps",
    "max_side_accel_mps2",
    "max_side_thrust_n",
    "max_power_w",
    "drivetrain_efficiency",
    "regenerative",
    "cruise_speed_mps",
    "max_yaw_rate_radps",
    "battery_wh",
];

pub(super) fn parse_vehicle(s: &Section) -> Result<VehicleSpec, VehicleError> {
    s.check_keys(VEHICLE_KEYS, None)?;
    let name = s.string("name")?;
    if name.trim().is_empty() {
        return Err(s.error("name", "must be a non-empty string"));
    }
    let running_gear = match s.string("running_gear")? {
        "tracks" => RunningGear::Tracks,
        "wheels" => RunningGear::Wheels,
        other => {
            return Err(s.error("running_gear", format!("must be \"tracks\" or \"wheels\", got {:?}", clip(other))))
        }
    };
    Ok(VehicleSpec {
        name: name.to_string(),
        running_gear,
        track_width_m: s.number("track_width_m", Rule::Positive)?,
        contact_length_m: s.number("contact_length_m", Rule::Positive)?,
        mass_kg: s.number("mass_kg", Rule::Positive)?,
        max_side_speed_mps: s.number("max_side_speed_mps", Rule::Positive)?,
        max_side_accel_mps2: s.number("max_side_accel_mps2", Rule::Positive)?,
        max_side_thrust_n: s.number("max_side_thrust_n", Rule::Positive)?,
        max_power_w: s.number("max_power_w", Rule::Positive)?,
        drivetrain_efficiency: s.number("drivetrain_efficiency", Rule::Fraction)?,
        regenerative: s.boolean("regenerative")?,
        cruise_speed_mps: s.number("cruise_speed_mps", Rule::Positive)?,
        max_yaw_rate_radps: s.number("max_yaw_rate_radps", Rule::Positive)?,
        battery_wh: s.optional_number("battery_wh", Rule::Positive)?,
    })
}

//! `[vehicle]`: geometry, limits and energy of the vehicle.

use super::section::{Plausible, Rule, Section};
use crate::limits::{clip, printable, MAX_SPEED_MPS, MIN_SPEED_MPS};
use crate::vehicle::{RunningGear, VehicleSpec};

pub(super) const VEHICLE_KEYS: &[&str] = &[
    "name",
    "running_gear",
    "track_width_m",
    "contact_length_m",
    "wheelbase_m",
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
    "cog_height_m",
];

const LENGTH: Plausible =
    Plausible { unit: "m", max: 1000.0, usual: (0.1, 5.0), hint: "is it in metres, not millimetres?" };
const CONTACT: Plausible = Plausible { usual: (0.05, 10.0), ..LENGTH };
const MASS: Plausible = Plausible { unit: "kg", max: 1e7, usual: (1.0, 1e5), hint: "is it in kilograms?" };
const SPEED: Plausible = Plausible { unit: "m/s", max: MAX_SPEED_MPS, usual: (0.05, 30.0), hint: "is it in m/s?" };
const ACCEL: Plausible = Plausible { unit: "m/s^2", max: 1000.0, usual: (0.01, 20.0), hint: "is it in m/s^2?" };
const THRUST: Plausible = Plausible { unit: "N", max: 1e8, usual: (1.0, 1e6), hint: "is it in newtons?" };
const POWER: Plausible = Plausible { unit: "W", max: 1e9, usual: (10.0, 1e7), hint: "is it in watts, not kilowatts?" };
const YAW_RATE: Plausible =
    Plausible { unit: "rad/s", max: 100.0, usual: (0.01, 10.0), hint: "is it in rad/s, not deg/s?" };
const COG_HEIGHT: Plausible = Plausible { usual: (0.05, 5.0), ..LENGTH };
const ENERGY: Plausible = Plausible { unit: "Wh", max: 1e9, usual: (1.0, 1e7), hint: "is it in watt-hours?" };

pub(super) fn parse_vehicle(s: &Section) -> VehicleSpec {
    s.check_keys(VEHICLE_KEYS, None);
    let name = s.string("name");
    if name.trim().is_empty() && s.get("name").is_some_and(|v| v.get_ref().as_str().is_some()) {
        s.error("name", "must be a non-empty string");
    }
    let running_gear = match s.string("running_gear") {
        "tracks" => RunningGear::Tracks,
        "wheels" => RunningGear::Wheels,
        other => {
            if s.get("running_gear").is_some_and(|v| v.get_ref().as_str().is_some()) {
                s.error("running_gear", format!("must be \"tracks\" or \"wheels\", got {:?}", clip(other)));
            }
            RunningGear::Tracks
        }
    };
    let cruise_speed_mps = s.plausible_number("cruise_speed_mps", Rule::Positive, &SPEED);
    if cruise_speed_mps < MIN_SPEED_MPS {
        s.error("cruise_speed_mps", format!("must be at least {MIN_SPEED_MPS} m/s, the slowest speed simulated"));
    }
    VehicleSpec {
        // Shown in every report: control characters escaped.
        name: printable(name).into_owned(),
        running_gear,
        track_width_m: s.plausible_number("track_width_m", Rule::Positive, &LENGTH),
        contact_length_m: contact_length_m(s, running_gear),
        mass_kg: s.plausible_number("mass_kg", Rule::Positive, &MASS),
        max_side_speed_mps: s.plausible_number("max_side_speed_mps", Rule::Positive, &SPEED),
        max_side_accel_mps2: s.plausible_number("max_side_accel_mps2", Rule::Positive, &ACCEL),
        max_side_thrust_n: s.plausible_number("max_side_thrust_n", Rule::Positive, &THRUST),
        max_power_w: s.plausible_number("max_power_w", Rule::Positive, &POWER),
        drivetrain_efficiency: s.number("drivetrain_efficiency", Rule::Fraction),
        regenerative: s.boolean("regenerative"),
        cruise_speed_mps,
        max_yaw_rate_radps: s.plausible_number("max_yaw_rate_radps", Rule::Positive, &YAW_RATE),
        battery_wh: s.optional_plausible_number("battery_wh", Rule::Positive, &ENERGY),
        cog_height_m: s.optional_plausible_number("cog_height_m", Rule::Positive, &COG_HEIGHT),
    }
}

/// `contact_length_m`: the track's ground contact length, or for wheels the wheelbase, which may
/// also be given as `wheelbase_m` (not both).
fn contact_length_m(s: &Section, gear: RunningGear) -> f64 {
    match (s.get("contact_length_m").is_some(), s.get("wheelbase_m").is_some(), gear) {
        (true, true, _) => {
            s.error("wheelbase_m", "give contact_length_m or its alias wheelbase_m, not both");
            1.0
        }
        (false, true, RunningGear::Tracks) => {
            s.error("wheelbase_m", "is for running_gear = \"wheels\"; give a tracked vehicle's contact_length_m");
            1.0
        }
        (false, true, RunningGear::Wheels) => s.plausible_number("wheelbase_m", Rule::Positive, &CONTACT),
        (false, false, RunningGear::Wheels) => {
            s.missing("contact_length_m", "for wheels the wheelbase, also accepted as wheelbase_m");
            1.0
        }
        _ => s.plausible_number("contact_length_m", Rule::Positive, &CONTACT),
    }
}

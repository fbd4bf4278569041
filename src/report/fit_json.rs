//! The fit report as a JSON document (`"format": "skidroute-fit/1"`): the same content as the
//! table. Fractions are fractions (0.031 is 3.1 %), yaw errors in degrees, parameters in SI.

use serde::Serialize;

use crate::fit::hygiene::LogCheck;
use crate::fit::{FitRun, FitSettings, InputSummary, TerrainFit};
use crate::CAUTION;

/// Format tag of the fit document.
pub const FIT_FORMAT: &str = "skidroute-fit/1";

#[derive(Serialize)]
struct FitDocument<'a> {
    format: &'static str,
    vehicle: &'a str,
    base_profile: &'a str,
    demo_profile: bool,
    failed: bool,
    settings: &'a FitSettings,
    holdout: &'a str,
    inputs: &'a [InputSummary],
    log_checks: &'a [LogCheck],
    terrains: &'a [TerrainFit],
    kept_from_base: &'a [String],
    caution: &'static str,
}

/// The JSON document of a fit run, pretty-printed, ending in a newline.
pub fn fit_json(run: &FitRun) -> String {
    let doc = FitDocument {
        format: FIT_FORMAT,
        vehicle: &run.profile.vehicle.name,
        base_profile: &run.base_profile,
        demo_profile: run.demo_base,
        failed: run.failed(),
        settings: &run.settings,
        holdout: &run.holdout,
        inputs: &run.inputs,
        log_checks: &run.log_checks,
        terrains: &run.terrains,
        kept_from_base: &run.kept_from_base,
        caution: CAUTION,
    };
    let mut s = serde_json::to_string_pretty(&doc).unwrap_or_else(|e| format!("{{\"error\": \"{e}\"}}"));
    s.push('\n');
    s
}

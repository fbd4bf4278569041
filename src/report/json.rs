//! The check report as a JSON document (`"format": "skidroute-check/1"`, docs/method.md, Outputs).
//! Each route entry is the route's report plus, when there are some, its `warnings` (the site
//! inputs' remarks: a route terrain the map disagrees with, altitudes far from the raster's).

use serde::Serialize;

use crate::assess::{RouteReport, Verdict};
use crate::check::CheckRun;
use crate::CAUTION;

/// Format tag of the check document.
pub const CHECK_FORMAT: &str = "skidroute-check/1";

#[derive(Serialize)]
struct CheckDocument<'a> {
    format: &'static str,
    vehicle: &'a str,
    demo_profile: bool,
    verdict: Verdict,
    caution: &'static str,
    routes: Vec<RouteEntry<'a>>,
}

/// A route's report with its warnings after the report's own keys.
#[derive(Serialize)]
pub(crate) struct RouteEntry<'a> {
    #[serde(flatten)]
    pub report: &'a RouteReport,
    #[serde(skip_serializing_if = "<[String]>::is_empty")]
    pub warnings: &'a [String],
}

impl<'a> RouteEntry<'a> {
    pub fn of(cr: &'a crate::check::CheckedRoute) -> Self {
        RouteEntry { report: &cr.report, warnings: &cr.route.warnings }
    }
}

/// The JSON document of a check run, pretty-printed, ending in a newline.
pub fn check_json(run: &CheckRun) -> String {
    let doc = CheckDocument {
        format: CHECK_FORMAT,
        vehicle: &run.vehicle_name,
        demo_profile: run.demo_profile,
        verdict: run.verdict(),
        caution: CAUTION,
        routes: run.routes.iter().map(RouteEntry::of).collect(),
    };
    let mut s = serde_json::to_string_pretty(&doc).unwrap_or_else(|e| format!("{{\"error\": \"{e}\"}}"));
    s.push('\n');
    s
}

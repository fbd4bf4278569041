//! Check results as JSON Lines for pipelines: one compact JSON object per route per line, in
//! input order. Each line carries the route's report (the `routes[]` entry of the check
//! document), the vehicle and the format tag `skidroute-check-route/1`.

use serde::Serialize;

use super::json::RouteEntry;
use crate::check::CheckRun;

/// Format tag of one line.
pub const ROUTE_LINE_FORMAT: &str = "skidroute-check-route/1";

#[derive(Serialize)]
struct RouteLine<'a> {
    format: &'static str,
    vehicle: &'a str,
    demo_profile: bool,
    #[serde(flatten)]
    report: RouteEntry<'a>,
}

/// One line (ending in a newline) per route, in the run's order.
pub fn check_jsonl(run: &CheckRun) -> String {
    let mut out = String::new();
    for cr in &run.routes {
        let line = RouteLine {
            format: ROUTE_LINE_FORMAT,
            vehicle: &run.vehicle_name,
            demo_profile: run.demo_profile,
            report: RouteEntry::of(cr),
        };
        match serde_json::to_string(&line) {
            Ok(s) => out.push_str(&s),
            Err(e) => out.push_str(
                &serde_json::json!({ "format": ROUTE_LINE_FORMAT, "route": cr.report.route, "error": e.to_string() })
                    .to_string(),
            ),
        }
        out.push('\n');
    }
    out
}

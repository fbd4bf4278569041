//! Reports of a replay (docs/fit.md, "Does my calibration still hold?"): the terminal table and
//! the JSON document (`"format": "skidroute-replay/1"`). Translation errors are fractions in the
//! JSON (0.031 is 3.1 %) and percent in the table; yaw errors in degrees.

use std::fmt::Write;

use comfy_table::{presets, Cell, CellAlignment, ContentArrangement, Table};
use serde::Serialize;

use crate::fit::hygiene::LogCheck;
use crate::fit::replay::{ReplayRun, TerrainReplay, CHANGE_FACTOR};
use crate::fit::stats::Spread;
use crate::fit::InputSummary;
use crate::CAUTION;

/// Format tag of the replay document.
pub const REPLAY_FORMAT: &str = "skidroute-replay/1";

#[derive(Serialize)]
struct ReplayDocument<'a> {
    format: &'static str,
    vehicle: &'a str,
    profile: &'a str,
    /// True when some terrain changed (exit code 1).
    changed: bool,
    /// The rule behind `changed`, in words.
    changed_rule: String,
    inputs: &'a [InputSummary],
    log_checks: &'a [LogCheck],
    terrains: &'a [TerrainReplay],
    not_in_logs: &'a [String],
    caution: &'static str,
}

fn rule() -> String {
    format!(
        "a terrain has changed when the whole 95 % block-bootstrap interval of its median translation error lies above \
         {CHANGE_FACTOR} times its calibration_translation_error"
    )
}

/// The JSON document of a replay, pretty-printed, ending in a newline.
pub fn replay_json(run: &ReplayRun) -> String {
    let doc = ReplayDocument {
        format: REPLAY_FORMAT,
        vehicle: &run.vehicle,
        profile: &run.profile,
        changed: run.any_changed(),
        changed_rule: rule(),
        inputs: &run.inputs,
        log_checks: &run.log_checks,
        terrains: &run.terrains,
        not_in_logs: &run.not_in_logs,
        caution: CAUTION,
    };
    let mut s = serde_json::to_string_pretty(&doc).unwrap_or_else(|e| format!("{{\"error\": \"{e}\"}}"));
    s.push('\n');
    s
}

fn spread(s: Option<Spread>, scale: f64, decimals: usize) -> Cell {
    let text = s.map_or("n/a".to_string(), |s| {
        let s = s.scaled(scale);
        format!("{:.decimals$} ({:.decimals$} to {:.decimals$})", s.median, s.q25, s.q75)
    });
    Cell::new(text).set_alignment(CellAlignment::Right)
}

fn changed_cell(t: &TerrainReplay) -> Cell {
    Cell::new(match t.changed {
        Some(true) => "CHANGED",
        Some(false) => "holds",
        None => "unknown",
    })
}

/// Renders a replay for a terminal.
pub fn replay_table(run: &ReplayRun) -> String {
    let mut out = String::new();
    let _ = writeln!(out, "profile: {} ({})", run.vehicle, run.profile);
    let inputs: Vec<String> = run.inputs.iter().map(|i| format!("{} ({} samples)", i.file, i.samples)).collect();
    let _ = writeln!(out, "logs: {}", inputs.join(", "));
    super::fit_table::log_checks(&mut out, &run.log_checks);
    let _ = writeln!(
        out,
        "the logged side speeds are replayed through each terrain's model over moving windows, from the logged start pose"
    );
    let mut t = Table::new();
    t.load_style(presets::UTF8_FULL_CONDENSED).set_content_arrangement(ContentArrangement::Disabled);
    t.set_header(vec![
        "terrain",
        "model",
        "windows\n(translation)",
        "translation error %\nmedian (quartiles)",
        "95 % interval\nof the median, %",
        "yaw error deg\nmedian (quartiles)",
        "calibration\nerror %",
        "changed",
    ]);
    for r in &run.terrains {
        t.add_row(vec![
            Cell::new(&r.terrain),
            Cell::new(&r.model),
            Cell::new(format!("{} ({})", r.validation.windows, r.validation.translation_windows))
                .set_alignment(CellAlignment::Right),
            spread(r.validation.translation_rel, 100.0, 1),
            Cell::new(
                r.validation
                    .translation_interval95
                    .map_or("n/a".to_string(), |i| format!("{:.1} to {:.1}", 100.0 * i.lo, 100.0 * i.hi)),
            )
            .set_alignment(CellAlignment::Right),
            spread(r.validation.yaw_deg, 1.0, 2),
            Cell::new(r.calibration_translation_error.map_or("none".to_string(), |e| format!("{:.1}", 100.0 * e)))
                .set_alignment(CellAlignment::Right),
            changed_cell(r),
        ]);
    }
    let _ = writeln!(out, "{t}");
    for r in &run.terrains {
        let _ = writeln!(out, "  {} ({} s windows): {}", r.terrain, r.horizon_s, r.finding);
        for w in &r.warnings {
            let _ = writeln!(out, "  {}: warning: {w}", r.terrain);
        }
    }
    if !run.not_in_logs.is_empty() {
        let _ = writeln!(out, "not in these logs: {}", run.not_in_logs.join(", "));
    }
    let _ = writeln!(out, "rule: {}.", rule());
    let _ = writeln!(out, "\ncaution: {CAUTION}");
    out
}

//! The terminal report: one row per leg in plain words with units, the reasons for every
//! non-pass verdict, route totals and the caution text.

use std::fmt::Write;

use comfy_table::{presets, Cell, CellAlignment, Color, ContentArrangement, Table};

use crate::assess::{LegReport, RouteReport, Verdict};
use crate::check::CheckRun;
use crate::CAUTION;

fn verdict_cell(v: Verdict, color: bool) -> Cell {
    let cell = Cell::new(v.name().to_uppercase());
    if !color {
        return cell;
    }
    match v {
        Verdict::Pass => cell.fg(Color::Green),
        Verdict::Caution => cell.fg(Color::Yellow),
        Verdict::Fail => cell.fg(Color::Red),
    }
}

fn num(x: f64, decimals: usize) -> Cell {
    Cell::new(format!("{x:.decimals$}")).set_alignment(CellAlignment::Right)
}

fn opt_num(x: Option<f64>, decimals: usize, none: &str) -> Cell {
    match x {
        Some(v) => num(v, decimals),
        None => Cell::new(none).set_alignment(CellAlignment::Right),
    }
}

fn leg_row(l: &LegReport, color: bool) -> Vec<Cell> {
    let label = match &l.name {
        Some(n) => format!("{} {}", l.index, n),
        None => l.index.to_string(),
    };
    vec![
        Cell::new(label),
        Cell::new(&l.terrain),
        num(l.length_m, 1),
        num(l.speed_mps, 1),
        opt_num(l.min_planned_radius_m, 1, "straight"),
        num(l.required_curvature_per_m, 3),
        opt_num(l.achievable_curvature_per_m, 3, "pivot"),
        num(l.max_deviation_m, 2),
        num(l.rms_deviation_m, 2),
        num(l.corridor_m, 2),
        num(l.time_s, 0),
        num(l.energy_wh, 1),
        num(l.peak_side_thrust_n, 0),
        opt_num(l.drift_cep95_m, 1, "-"),
        verdict_cell(l.verdict, color),
    ]
}

fn route_table(r: &RouteReport, color: bool) -> Table {
    let mut t = Table::new();
    t.load_style(presets::UTF8_FULL_CONDENSED).set_content_arrangement(ContentArrangement::Disabled);
    let mut header = vec![
        "leg",
        "terrain",
        "length\nm",
        "speed\nm/s",
        "tightest\nradius m",
        "required\ncurv. 1/m",
        "achievable\ncurv. 1/m",
        "max dev.\nm",
        "RMS dev.\nm",
        "corridor\nm",
        "time\ns",
        "energy\nWh",
        "peak\nthrust N",
        "drift\nCEP95 m",
        "verdict",
    ];
    if r.drift.is_none() {
        header.remove(header.len() - 2);
    }
    t.set_header(header);
    if color {
        t.enforce_styling();
    }
    let with_drift = r.drift.is_some();
    for l in &r.legs {
        let mut row = leg_row(l, color);
        if !with_drift {
            row.remove(row.len() - 2);
        }
        t.add_row(row);
    }
    t
}

fn duration(t_s: f64) -> String {
    let total = t_s.round() as u64;
    if total >= 60 {
        format!("{} min {:02} s", total / 60, total % 60)
    } else {
        format!("{total} s")
    }
}

/// Renders the whole check run for a terminal. `color` adds ANSI colour to verdicts (callers
/// pass false when output is not a terminal or `NO_COLOR` is set).
pub fn check_table(run: &CheckRun, color: bool) -> String {
    let mut out = String::new();
    let profile = if run.demo_profile { " (built-in demo profile; pass --vehicle FILE for your own)" } else { "" };
    let _ = writeln!(out, "vehicle: {}{profile}", run.vehicle_name);
    for cr in &run.routes {
        let r = &cr.report;
        let _ = writeln!(out, "\nroute '{}' from {}", r.route, r.source);
        let _ = writeln!(out, "{}", route_table(r, color));
        for l in r.legs.iter().filter(|l| !l.reasons.is_empty()) {
            for why in &l.reasons {
                let _ = writeln!(out, "  leg {}: {why}", l.index);
            }
        }
        for why in &r.reasons {
            let _ = writeln!(out, "  route: {why}");
        }
        if let Some(d) = &r.drift {
            let _ = writeln!(
                out,
                "  drift: CEP95 = 95 % of {} simulated drives end within this distance of where the vehicle believes \
                 it is, localization lost from leg {}; {}; seed {}",
                d.samples, d.lost_from_leg, d.sources, d.seed
            );
            for w in &d.warnings {
                let _ = writeln!(out, "  drift warning: {w}");
            }
        }
        let battery = match r.battery_used_fraction {
            Some(f) => format!(" ({:.0} % of the battery)", 100.0 * f),
            None => String::new(),
        };
        let _ = writeln!(
            out,
            "total: {:.0} m in {}, largest deviation {:.2} m, {:.1} Wh{battery}, peak power {:.0} W{} -> {}",
            r.length_m,
            duration(r.time_s),
            r.max_deviation_m,
            r.energy_wh,
            r.peak_power_w,
            if r.completed { "" } else { ", did not reach the end" },
            r.verdict.name().to_uppercase()
        );
    }
    let _ = writeln!(out, "\ncaution: {CAUTION}");
    out
}

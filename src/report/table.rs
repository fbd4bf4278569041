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

/// The traction the leg needs next to what its terrain gives, "0.41/0.25" (docs/method.md,
/// Verdicts: margins).
fn traction_cell(l: &LegReport) -> Cell {
    Cell::new(format!("{:.2}/{:.2}", l.traction_coefficient_needed, l.traction_coefficient))
        .set_alignment(CellAlignment::Right)
}

/// Columns shown only when a route has their data.
#[derive(Clone, Copy)]
struct Optional {
    /// Steepest cross slope, when the route was put on an elevation raster.
    cross_slope: bool,
    drift: bool,
}

impl Optional {
    fn of(r: &RouteReport) -> Optional {
        Optional { cross_slope: r.legs.iter().any(|l| l.max_cross_slope_pct.is_some()), drift: r.drift.is_some() }
    }
}

/// Index of the cross-slope column in the full header and row, and of the drift column.
const CROSS_SLOPE_COLUMN: usize = 13;
const DRIFT_COLUMN: usize = 16;

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
        opt_num(l.max_cross_slope_pct, 0, "-"),
        traction_cell(l),
        opt_num(l.max_passing_speed_mps, 2, "none"),
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
        "cross\nslope %",
        "traction\nneeds/has",
        "passes up\nto m/s",
        "drift\nCEP95 m",
        "verdict",
    ];
    let shown = Optional::of(r);
    // Later columns first, so the earlier index stays valid.
    fn drop_absent<T>(v: &mut Vec<T>, shown: Optional) {
        if !shown.drift {
            v.remove(DRIFT_COLUMN);
        }
        if !shown.cross_slope {
            v.remove(CROSS_SLOPE_COLUMN);
        }
    }
    drop_absent(&mut header, shown);
    t.set_header(header);
    if color {
        t.enforce_styling();
    }
    for l in &r.legs {
        let mut row = leg_row(l, color);
        drop_absent(&mut row, shown);
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
        let _ = writeln!(out, "\nroute '{}' from {}", r.route, crate::limits::printable(&r.source));
        let _ = writeln!(out, "{}", route_table(r, color));
        for l in r.legs.iter().filter(|l| !l.reasons.is_empty()) {
            for why in &l.reasons {
                let _ = writeln!(out, "  leg {}: {why}", l.index);
            }
        }
        for why in &r.reasons {
            let _ = writeln!(out, "  route: {why}");
        }
        for warning in &cr.route.warnings {
            let _ = writeln!(out, "  warning: {warning}");
        }
        if let Some(d) = &r.drift {
            let _ = writeln!(
                out,
                "  drift: CEP95 = 95 % of {} simulated drives end within this distance of where the vehicle believes \
                 it is, localization lost from leg {}, {} odometry, seed {}",
                d.samples, d.lost_from_leg, d.odometry, d.seed
            );
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

//! The terminal report: one row per leg in plain words with units, the reasons for every
//! non-pass verdict, route totals and the caution text.

use std::fmt::Write;

use comfy_table::{Cell, CellAlignment, Color};

use super::fitted_table::{fitted_table, Column, Fitted, ALWAYS};

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

/// How a terminal table is drawn.
#[derive(Debug, Clone, Copy, Default)]
pub struct TableOptions {
    /// ANSI colour on verdicts (callers pass false off a terminal or with `NO_COLOR`).
    pub color: bool,
    /// Cautions count as failures (`--strict`); the table says so.
    pub strict: bool,
    /// Fit the per-leg table to this many characters by leaving out low-priority columns (then
    /// wrapping); `None` shows every column (pipes, files, `--wide`).
    pub max_width: Option<usize>,
}

fn leg_label(l: &LegReport) -> String {
    match &l.name {
        Some(n) => format!("{} {}", l.index, n),
        None => l.index.to_string(),
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

/// The per-leg columns in display order, each with its priority on a narrow terminal (higher
/// stays longer): label, terrain and verdict always; then the deviation, the margins (the highest
/// speed that passes, the traction needed against what the terrain gives: each readable on its
/// own), the curvature the plan needs against what the vehicle achieves, and the corridor; time,
/// energy and thrust go first. A new column slots in with its own priority. The steepest cross
/// slope shows only when a leg has one (the route was put on an elevation raster), the drift
/// only when it was estimated.
fn leg_columns(shown: Optional, color: bool) -> Vec<Column<'static, LegReport>> {
    let mut cols = vec![
        Column::new("leg", ALWAYS, |l: &LegReport| Cell::new(leg_label(l))).wrap_at(20),
        Column::new("terrain", ALWAYS, |l: &LegReport| Cell::new(&l.terrain)),
        Column::new("length\nm", 40, |l: &LegReport| num(l.length_m, 1)),
        Column::new("speed\nm/s", 60, |l: &LegReport| num(l.speed_mps, 1)),
        Column::new("tightest\nradius m", 50, |l: &LegReport| opt_num(l.min_planned_radius_m, 1, "straight")),
        Column::new("required\ncurv. 1/m", 80, |l: &LegReport| num(l.required_curvature_per_m, 3)),
        Column::new("achievable\ncurv. 1/m", 80, |l: &LegReport| opt_num(l.achievable_curvature_per_m, 3, "pivot")),
        Column::new("max dev.\nm", 90, |l: &LegReport| num(l.max_deviation_m, 2)),
        Column::new("RMS dev.\nm", 20, |l: &LegReport| num(l.rms_deviation_m, 2)),
        Column::new("corridor\nm", 70, |l: &LegReport| num(l.corridor_m, 2)),
        Column::new("time\ns", 30, |l: &LegReport| num(l.time_s, 0)),
        Column::new("energy\nWh", 25, |l: &LegReport| num(l.energy_wh, 1)),
        Column::new("peak\nthrust N", 10, |l: &LegReport| num(l.peak_side_thrust_n, 0)),
    ];
    if shown.cross_slope {
        cols.push(Column::new("cross\nslope %", 45, |l: &LegReport| opt_num(l.max_cross_slope_pct, 0, "-")));
    }
    cols.extend([
        Column::new("traction\nneeds/has", 82, traction_cell),
        Column::new(PASSING_HEADER, 85, |l: &LegReport| {
            opt_num(l.max_passing_speed_mps, 2, if l.max_passing_speed_searched { "none" } else { "not searched" })
        }),
    ]);
    if shown.drift {
        cols.push(Column::new("drift\nCEP95 m", 65, |l: &LegReport| opt_num(l.drift_cep95_m, 1, "-")));
    }
    cols.push(Column::new("verdict", ALWAYS, move |l: &LegReport| verdict_cell(l.verdict, color)));
    cols
}

fn route_table(r: &RouteReport, opts: &TableOptions) -> Fitted {
    let color = opts.color;
    fitted_table(&leg_columns(Optional::of(r), color), &r.legs, opts.max_width, |t| {
        if color {
            t.enforce_styling();
        }
    })
}

/// Header of the table's column of the margins' highest passing speed.
const PASSING_HEADER: &str = "passes up\nto m/s";

fn duration(t_s: f64) -> String {
    let total = t_s.round() as u64;
    if total >= 60 {
        format!("{} min {:02} s", total / 60, total % 60)
    } else {
        format!("{total} s")
    }
}

/// Renders the whole check run for a terminal (see [`TableOptions`]).
pub fn check_table(run: &CheckRun, opts: &TableOptions) -> String {
    let mut out = String::new();
    let profile = if run.demo_profile { " (built-in demo profile; pass --vehicle FILE for your own)" } else { "" };
    let _ = writeln!(out, "vehicle: {}{profile}", run.vehicle_name);
    if opts.strict {
        let _ = writeln!(out, "--strict: a CAUTION counts as a failure (exit code 1)");
    }
    // The note on "passes up to" only where a table shows that column with a value in it.
    let mut passing_shown = false;
    for cr in &run.routes {
        let r = &cr.report;
        let _ = writeln!(out, "\nroute '{}' from {}", r.route, crate::limits::printable(&r.source));
        let fitted = route_table(r, opts);
        passing_shown |=
            r.legs.iter().any(|l| l.max_passing_speed_mps.is_some()) && !fitted.hidden.contains(&PASSING_HEADER);
        let _ = writeln!(out, "{}", fitted.table);
        if !fitted.hidden.is_empty() {
            let _ = writeln!(out, "  (left out to fit the terminal: {}; --wide shows all)", fitted.hidden_list());
        }
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
        if opts.strict && r.verdict == Verdict::Caution {
            let _ = writeln!(out, "  (a failure under --strict)");
        }
    }
    if passing_shown {
        let _ = writeln!(
            out,
            "\n\"passes up to\": the highest leg speed at which the leg does not fail, searched up to the vehicle's \
             top side speed (a leg showing the top speed passes at any speed the vehicle can drive)"
        );
    }
    let _ = writeln!(out, "\ncaution: {CAUTION}");
    out
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::route::{Leg, Route, SourcePosition};
    use crate::vehicle::Profile;

    #[test]
    fn the_passing_speed_note_comes_only_with_its_column() {
        let points = (0..=30).map(|i| [i as f64, 0.0]).collect();
        let leg = Leg { speed_mps: Some(1.0), ..Leg::new("gravel", points, SourcePosition::Feature(0)) };
        let route = Route { name: "r".into(), source: "r.csv".into(), origin: None, legs: vec![leg], warnings: vec![] };
        let run = crate::check::check_routes(vec![route], &Profile::demo(), true);
        assert!(run.routes[0].report.legs[0].max_passing_speed_mps.is_some());
        let note = "\"passes up to\":";
        let wide = check_table(&run, &TableOptions { max_width: None, ..TableOptions::default() });
        assert!(wide.contains(note), "{wide}");
        // A terminal too narrow for the column leaves it out, and the note with it.
        let narrow = check_table(&run, &TableOptions { max_width: Some(40), ..TableOptions::default() });
        assert!(narrow.contains("left out to fit the terminal: ") && narrow.contains("passes up to m/s"), "{narrow}");
        assert!(!narrow.contains(note), "{narrow}");
    }
}

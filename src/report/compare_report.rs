//! Reports of a comparison of alternative routes: the ranking table, the JSON document
//! (`"format": "skidroute-compare/1"`) and one overlay plot of all alternatives in a common
//! frame (the first route's), SVG or PNG.

use std::fmt::Write;
use std::path::Path;

use comfy_table::{Cell, CellAlignment};
use plotters::coord::Shift;
use plotters::prelude::*;
use serde::Serialize;

use super::fitted_table::{fitted_table, Column, ALWAYS};
use super::plot::terrain_color;
use super::table::TableOptions;
use super::ReportError;
use crate::assess::Verdict;
use crate::compare::{common_frame, Comparison, FramedRoute, RankBy, Ranked};
use crate::CAUTION;

/// Format tag of the comparison document.
pub const COMPARE_FORMAT: &str = "skidroute-compare/1";

#[derive(Serialize)]
struct CompareDocument<'a> {
    format: &'static str,
    vehicle: &'a str,
    demo_profile: bool,
    ranked_by: &'static str,
    /// The criterion actually used within a verdict class (time when `ranked_by` was unavailable).
    ranked_on: &'static str,
    /// Seed of the drift Monte Carlo, when ranked by drift.
    #[serde(skip_serializing_if = "Option::is_none")]
    seed: Option<u64>,
    /// The drift's odometry and heading source, when ranked by drift.
    #[serde(skip_serializing_if = "Option::is_none")]
    drift_sources: Option<&'a str>,
    /// What the drift figures leave out, when ranked by drift.
    #[serde(skip_serializing_if = "<[String]>::is_empty")]
    warnings: &'a [String],
    caution: &'static str,
    ranking: &'a [Ranked],
}

fn ranked_on(c: &Comparison) -> &'static str {
    if c.fell_back_to_time {
        "time"
    } else {
        c.by.name()
    }
}

/// The JSON document of a comparison, pretty-printed, ending in a newline.
pub fn compare_json(c: &Comparison) -> String {
    let doc = CompareDocument {
        format: COMPARE_FORMAT,
        vehicle: &c.run.vehicle_name,
        demo_profile: c.run.demo_profile,
        ranked_by: c.by.name(),
        ranked_on: ranked_on(c),
        seed: c.seed,
        drift_sources: c.drift_sources.as_deref(),
        warnings: &c.warnings,
        caution: CAUTION,
        ranking: &c.ranking,
    };
    let mut s = serde_json::to_string_pretty(&doc).unwrap_or_else(|e| format!("{{\"error\": \"{e}\"}}"));
    s.push('\n');
    s
}

fn num(x: f64, decimals: usize) -> Cell {
    Cell::new(format!("{x:.decimals$}")).set_alignment(CellAlignment::Right)
}

fn legs_list(legs: &[usize]) -> String {
    if legs.is_empty() {
        "-".to_string()
    } else {
        legs.iter().map(|l| l.to_string()).collect::<Vec<_>>().join(", ")
    }
}

/// The ranking's columns with their priorities on a narrow terminal (higher stays longer); the
/// measure the routes are ranked by stays with rank, route and verdict.
fn ranking_columns(by: RankBy) -> Vec<Column<'static, Ranked>> {
    let ranked = |measure: RankBy, otherwise: u8| if measure == by { 95 } else { otherwise };
    vec![
        Column::new("rank", ALWAYS, |r: &Ranked| Cell::new(r.rank)),
        Column::new("route", ALWAYS, |r: &Ranked| Cell::new(&r.route)).wrap_at(20),
        Column::new("verdict", ALWAYS, |r: &Ranked| Cell::new(r.verdict.name().to_uppercase())),
        Column::new("length\nm", 40, |r: &Ranked| num(r.length_m, 0)),
        Column::new("time\ns", ranked(RankBy::Time, 50), |r: &Ranked| num(r.time_s, 0)),
        Column::new("energy\nWh", ranked(RankBy::Energy, 60), |r: &Ranked| {
            r.energy_wh.map_or_else(|| Cell::new("-"), |e| num(e, 1))
        }),
        Column::new("max dev.\nm", ranked(RankBy::Deviation, 55), |r: &Ranked| num(r.max_deviation_m, 2)),
        Column::new("failing\nlegs", 70, |r: &Ranked| Cell::new(legs_list(&r.failing_legs))),
        Column::new("drift CEP95\nm", ranked(RankBy::Drift, 15), |r: &Ranked| {
            r.drift_cep95_m.map_or_else(|| Cell::new("-"), |d| num(d, 2))
        }),
        Column::new("source", 20, |r: &Ranked| Cell::new(crate::limits::printable(&r.source))).wrap_at(30),
    ]
}

/// The ranking for a terminal, best first, with the caution (see [`TableOptions`]; colour is
/// not used here).
pub fn compare_table(c: &Comparison, opts: &TableOptions) -> String {
    let mut out = String::new();
    let profile = if c.run.demo_profile { " (built-in demo profile; pass --vehicle FILE for your own)" } else { "" };
    let _ = writeln!(out, "vehicle: {}{profile}", c.run.vehicle_name);
    let _ = writeln!(out, "ranked by verdict, then {}", ranked_on(c));
    if let (Some(sources), Some(seed)) = (&c.drift_sources, c.seed) {
        let _ = writeln!(
            out,
            "drift: CEP95 at the route end if localization is lost at its start; {sources}; {} samples, seed {seed}",
            crate::compare::DRIFT_RANKING_SAMPLES
        );
    }
    for w in &c.warnings {
        let _ = writeln!(out, "drift warning: {w}");
    }
    if c.fell_back_to_time {
        let _ = writeln!(out, "({} is not available for every route; ranked by time instead)", c.by.name());
    }
    if opts.strict {
        let _ = writeln!(out, "--strict: a CAUTION counts as a failure (exit code 1 unless an alternative passes)");
    }
    let fitted = fitted_table(&ranking_columns(c.by), &c.ranking, opts.max_width, |_| {});
    let t = &fitted.table;
    let _ = writeln!(out, "{t}");
    if !fitted.hidden.is_empty() {
        let _ = writeln!(out, "  (left out to fit the terminal: {}; --wide shows all)", fitted.hidden_list());
    }
    for r in &c.ranking {
        if let Some(cr) = c.run.routes.get(r.run_index) {
            for l in cr.report.legs.iter().filter(|l| l.verdict == Verdict::Fail) {
                for why in &l.reasons {
                    let _ = writeln!(out, "  {} leg {}: {why}", r.route, l.index);
                }
            }
        }
    }
    match c.ranking.first() {
        Some(best) if best.verdict == Verdict::Caution && opts.strict => {
            let _ = writeln!(out, "no alternative passes under --strict; best: '{}' (caution)", best.route);
        }
        Some(best) if best.verdict != Verdict::Fail => {
            let _ = writeln!(out, "best: '{}' ({})", best.route, best.verdict.name());
        }
        _ => {
            let _ = writeln!(out, "no alternative passes");
        }
    }
    let _ = writeln!(out, "\ncaution: {CAUTION}");
    out
}

const WIDTH_PX: u32 = 1400;
const HEIGHT_PX: u32 = 1000;
const LEGEND_WIDTH_PX: u32 = 380;
const FAIL_RED: RGBColor = RGBColor(220, 30, 30);
/// Colours of the alternatives' predicted paths, by rank.
const PATH_COLORS: [RGBColor; 6] = [
    RGBColor(0, 0, 0),
    RGBColor(200, 30, 160),
    RGBColor(20, 110, 200),
    RGBColor(230, 120, 0),
    RGBColor(0, 140, 110),
    RGBColor(120, 60, 20),
];

/// The overlay plot of all alternatives, in one frame.
struct OverlayFigure<'a> {
    c: &'a Comparison,
    framed: Vec<FramedRoute>,
}

impl super::plot::Figure for OverlayFigure<'_> {
    fn size_px(&self) -> (u32, u32) {
        (WIDTH_PX, HEIGHT_PX)
    }
    fn draw<DB: DrawingBackend>(&self, root: &DrawingArea<DB, Shift>) -> DrawResult<()>
    where
        DB::ErrorType: 'static,
    {
        draw_overlay(root, self.c, &self.framed)
    }
}

fn overlay_figure(c: &Comparison) -> Result<OverlayFigure<'_>, String> {
    Ok(OverlayFigure { c, framed: common_frame(&c.run.routes).map_err(|e| e.to_string())? })
}

/// The overlay plot as an SVG document string.
pub fn compare_plot_svg(c: &Comparison) -> Result<String, String> {
    super::plot::svg_string(&overlay_figure(c)?)
}

/// Writes the overlay plot of all alternatives (`.svg` or `.png` by extension).
pub fn write_compare_plot(c: &Comparison, path: &Path) -> Result<(), ReportError> {
    let fig = overlay_figure(c).map_err(|what| ReportError::Output { file: path.to_path_buf(), what })?;
    super::plot::write_figure(&fig, path)
}

use super::plot::DrawResult;

fn draw_overlay<DB: DrawingBackend>(
    root: &DrawingArea<DB, Shift>,
    c: &Comparison,
    framed: &[FramedRoute],
) -> DrawResult<()>
where
    DB::ErrorType: 'static,
{
    root.fill(&WHITE)?;
    let title = format!("{} alternatives, ranked by verdict then {}", c.ranking.len(), ranked_on(c));
    let body = root.titled(&title, ("sans-serif", 26))?;
    let (w, _) = body.dim_in_pixel();
    let (map, legend) = body.split_horizontally(w.saturating_sub(LEGEND_WIDTH_PX));
    let all = framed.iter().flat_map(|f| f.plan_legs.iter().flatten().chain(f.predicted.iter())).copied();
    let frame = if c.run.routes.first().is_some_and(|r| r.route.origin.is_some()) {
        "of the first route's start"
    } else {
        "in the map frame"
    };
    let mut chart = super::plot::map_chart(&map, all, frame)?;
    // Alternatives share the first route's frame (see FramedRoute), so the map is placed in it.
    let origin = c.run.routes.first().and_then(|r| r.route.origin);
    let polygons = super::plot::map_polygons(c.run.terrain_map.as_deref(), origin.as_ref());
    super::plot::draw_terrain_map(&mut chart, &polygons)?;
    let pts = |v: &[[f64; 2]]| v.iter().map(|p| (p[0], p[1])).collect::<Vec<_>>();
    for r in &c.ranking {
        let (Some(f), Some(cr)) = (framed.get(r.run_index), c.run.routes.get(r.run_index)) else { continue };
        for (leg, l) in f.plan_legs.iter().zip(&cr.report.legs) {
            if l.verdict == Verdict::Fail {
                chart.draw_series(LineSeries::new(pts(leg), FAIL_RED.mix(0.4).stroke_width(16)))?;
            }
        }
        for (leg, l) in f.plan_legs.iter().zip(&cr.report.legs) {
            chart.draw_series(LineSeries::new(pts(leg), terrain_color(&l.terrain).stroke_width(6)))?;
        }
    }
    for r in c.ranking.iter().rev() {
        let Some(f) = framed.get(r.run_index) else { continue };
        let color = PATH_COLORS[(r.rank - 1) % PATH_COLORS.len()];
        chart.draw_series(LineSeries::new(pts(&f.predicted), color.stroke_width(2)))?;
        if let Some(end) = f.predicted.last() {
            chart.draw_series(std::iter::once(Text::new(
                format!("{}", r.rank),
                (end[0], end[1]),
                ("sans-serif", 20).into_font().color(&color),
            )))?;
        }
    }
    draw_legend(&legend, c)?;
    Ok(())
}

fn draw_legend<DB: DrawingBackend>(area: &DrawingArea<DB, Shift>, c: &Comparison) -> DrawResult<()>
where
    DB::ErrorType: 'static,
{
    let (x0, mut y) = (12i32, 30i32);
    let font = ("sans-serif", 17).into_font();
    area.draw(&Text::new("predicted path, by rank", (x0, y - 10), ("sans-serif", 18).into_font()))?;
    y += 22;
    for r in c.ranking.iter().take(12) {
        let color = PATH_COLORS[(r.rank - 1) % PATH_COLORS.len()];
        area.draw(&PathElement::new(vec![(x0, y), (x0 + 30, y)], color.stroke_width(3)))?;
        let text = format!("{}. {} - {}", r.rank, r.route, r.verdict.name().to_uppercase());
        area.draw(&Text::new(text, (x0 + 40, y - 9), font.clone()))?;
        y += 28;
    }
    y += 16;
    area.draw(&Text::new("plan, by terrain", (x0, y - 10), ("sans-serif", 18).into_font()))?;
    y += 22;
    let mut seen: Vec<&str> = Vec::new();
    for cr in &c.run.routes {
        for l in &cr.report.legs {
            if !seen.contains(&l.terrain.as_str()) {
                seen.push(&l.terrain);
            }
        }
    }
    for t in seen.iter().take(12) {
        area.draw(&PathElement::new(vec![(x0, y), (x0 + 30, y)], terrain_color(t).stroke_width(6)))?;
        area.draw(&Text::new(t.to_string(), (x0 + 40, y - 9), font.clone()))?;
        y += 28;
    }
    area.draw(&PathElement::new(vec![(x0, y), (x0 + 30, y)], FAIL_RED.mix(0.4).stroke_width(14)))?;
    area.draw(&Text::new("failing leg", (x0 + 40, y - 9), font.clone()))?;
    Ok(())
}

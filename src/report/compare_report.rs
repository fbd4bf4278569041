//! Reports of a comparison of alternative routes: the ranking table, the JSON document
//! (`"format": "skidroute-compare/1"`) and one overlay plot of all alternatives in a common
//! frame (the first route's), SVG or PNG, with a row of up to three zooms of the worst spots of
//! all alternatives below it (failing before cautioned, then by rank; see `report::inset`), each
//! drawn in its own route's frame and framed and lettered on the overlay.

use std::fmt::Write;
use std::path::Path;

use comfy_table::{Cell, CellAlignment};
use plotters::coord::Shift;
use plotters::prelude::*;
use serde::Serialize;

use super::axis::{map_chart, FULL};
use super::decimate::{simplify_path, thin};
use super::figure::{DrawResult, Figure};
use super::fitted_table::{fitted_table, Column, ALWAYS};
use super::inset::{zoom_title, Zoom, MAX_ZOOMS};
use super::legend::{draw_legend_column, draw_shape, Glyph};
use super::marks::LIMITED_COLOR;
use super::marks::{peak_steps, shape_of, spot_entries, spots, verdict_color, Spot};
use super::palette::{route_color, terrain_color, CAUTION_AMBER, FAIL_RED};
use super::placer::Rect;
use super::plot::{
    chart_placer, draw_polyline, draw_terrain_map, draw_zoom, draw_zoom_frame, map_entries, map_polygons,
    metres_per_px, terrain_entries, to_px, RoutePanel, ZOOM_PX,
};
use super::table::TableOptions;
use super::text::{draw_label, font, titled};
use super::ReportError;
use crate::assess::Verdict;
use crate::check::CheckedRoute;
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

/// The overlay plot of all alternatives, in one frame.
struct OverlayFigure<'a> {
    c: &'a Comparison,
    framed: Vec<FramedRoute>,
    /// Each route's predicted path thinned below the plot's scale, with its deviation peaks
    /// kept (their indices), worked out once (PNG output draws the figure once per band).
    paths: Vec<(Vec<[f64; 2]>, Vec<usize>)>,
    /// Each route's deviation peaks in the common frame, by leg.
    peaks: Vec<Vec<(usize, [f64; 2])>>,
    /// Each route's spots (see `report::marks`).
    spots: Vec<Vec<Spot>>,
    /// The routes with a zoom, as drawn by the check plot, and the zooms: the panel's index, the
    /// zoom (lettered across all routes) and its shift from the route's frame to the common one.
    panels: Vec<RoutePanel<'a>>,
    zooms: Vec<PlacedZoom>,
}

/// A zoom of the overlay: its route's panel (an index), the zoom, its shift into the common frame.
type PlacedZoom = (usize, Zoom, [f64; 2]);

impl Figure for OverlayFigure<'_> {
    fn size_px(&self) -> (u32, u32) {
        (WIDTH_PX, HEIGHT_PX + if self.zooms.is_empty() { 0 } else { ZOOM_PX })
    }
    fn draw<DB: DrawingBackend>(&self, root: &DrawingArea<DB, Shift>) -> DrawResult<()>
    where
        DB::ErrorType: 'static,
    {
        draw_overlay(root, self)
    }
}

fn overlay_figure(c: &Comparison) -> Result<OverlayFigure<'_>, String> {
    let framed = common_frame(&c.run.routes).map_err(|e| e.to_string())?;
    let all = framed.iter().flat_map(|f| f.plan_legs.iter().flatten().chain(f.predicted.iter()));
    let (mut lo, mut hi) = ([f64::INFINITY; 2], [f64::NEG_INFINITY; 2]);
    for p in all.filter(|p| p[0].is_finite() && p[1].is_finite()) {
        for k in 0..2 {
            lo[k] = lo[k].min(p[k]);
            hi[k] = hi[k].max(p[k]);
        }
    }
    // A quarter of a pixel of the map (about 1000 pixels across).
    let tol_m = 0.25 * ((hi[0] - lo[0]).max(hi[1] - lo[1]) / 1000.0).max(1e-3);
    let mut paths = Vec::new();
    let mut peaks = Vec::new();
    for (f, cr) in framed.iter().zip(&c.run.routes) {
        let keep = peak_steps(cr);
        peaks.push(keep.iter().filter_map(|&i| Some((cr.trace.steps.get(i)?.leg + 1, *f.predicted.get(i)?))).collect());
        paths.push(thin(&f.predicted, tol_m, &keep));
    }
    let spots = c.run.routes.iter().map(spots).collect();
    let (panels, zooms) = overlay_zooms(c, &framed);
    Ok(OverlayFigure { c, framed, paths, peaks, spots, panels, zooms })
}

/// The zooms of the overlay: every route's own zooms (worked out as for its check plot), the
/// failing ones first, then by rank, at most [`MAX_ZOOMS`], lettered from A; each with the shift
/// that takes its window into the common frame (at the predicted step nearest its centre).
fn overlay_zooms<'a>(c: &'a Comparison, framed: &[FramedRoute]) -> (Vec<RoutePanel<'a>>, Vec<PlacedZoom>) {
    let mut candidates: Vec<(Verdict, usize, usize, Zoom)> = Vec::new();
    let mut panels = Vec::new();
    for r in &c.ranking {
        let Some(cr) = c.run.routes.get(r.run_index) else { continue };
        let panel = RoutePanel::new(cr, &c.run);
        if panel.zooms.is_empty() {
            continue;
        }
        for z in &panel.zooms {
            candidates.push((z.worst, r.rank, panels.len(), z.clone()));
        }
        panels.push((r.run_index, panel));
    }
    candidates.sort_by(|a, b| b.0.cmp(&a.0).then(a.1.cmp(&b.1)));
    let mut zooms = Vec::new();
    for (k, (_, _, pi, mut z)) in candidates.into_iter().take(MAX_ZOOMS).enumerate() {
        let Some((run_index, panel)) = panels.get(pi) else { continue };
        let Some(f) = framed.get(*run_index) else { continue };
        let near = |i: &usize| {
            let p = panel.cr.trace.steps[*i].pose;
            (p.x_m - z.centre[0]).hypot(p.y_m - z.centre[1])
        };
        let steps = 0..panel.cr.trace.steps.len().min(f.predicted.len());
        let shift = steps.min_by(|a, b| near(a).total_cmp(&near(b))).map_or([0.0, 0.0], |i| {
            let p = panel.cr.trace.steps[i].pose;
            [f.predicted[i][0] - p.x_m, f.predicted[i][1] - p.y_m]
        });
        z.letter = char::from(b'A' + k as u8);
        zooms.push((pi, z, shift));
    }
    (panels.into_iter().map(|(_, p)| p).collect(), zooms)
}

/// The overlay plot as an SVG document string.
pub fn compare_plot_svg(c: &Comparison) -> Result<String, String> {
    super::figure::svg_string(&overlay_figure(c)?)
}

/// Writes the overlay plot of all alternatives (`.svg` or `.png` by extension).
pub fn write_compare_plot(c: &Comparison, path: &Path) -> Result<(), ReportError> {
    let fig = overlay_figure(c).map_err(|what| ReportError::Output { file: path.to_path_buf(), what })?;
    super::figure::write_figure(&fig, path)
}

/// A spot of a route placed in the common frame: the plan is sampled evenly along each leg's
/// arc length there, and the deviation peak is a step of the predicted path.
fn framed_spot(cr: &CheckedRoute, f: &FramedRoute, s: &Spot, peaks: &[(usize, [f64; 2])]) -> Option<[f64; 2]> {
    if s.about == crate::assess::ReasonAbout::Deviation {
        return peaks.iter().find(|(leg, _)| *leg == s.leg).map(|(_, p)| *p);
    }
    let leg = f.plan_legs.get(s.leg - 1)?;
    let (a, b) = cr.drive.plan.leg_bounds_m(s.leg - 1);
    let n = leg.len().saturating_sub(1);
    let k = if b > a { (((s.at_m - a) / (b - a)) * n as f64).round().clamp(0.0, n as f64) as usize } else { 0 };
    leg.get(k).copied()
}

fn draw_overlay<DB: DrawingBackend>(root: &DrawingArea<DB, Shift>, fig: &OverlayFigure<'_>) -> DrawResult<()>
where
    DB::ErrorType: 'static,
{
    let (c, framed) = (fig.c, &fig.framed);
    root.fill(&WHITE)?;
    let (top, zoom_row) = if fig.zooms.is_empty() {
        (root.clone(), None)
    } else {
        let (top, row) = root.split_vertically(HEIGHT_PX);
        (top, Some(row))
    };
    let title = format!("{} alternatives, ranked by verdict then {}", c.ranking.len(), ranked_on(c));
    let body = titled(&top, &title, 26)?;
    let (w, _) = body.dim_in_pixel();
    let (map, legend) = body.split_horizontally(w.saturating_sub(LEGEND_WIDTH_PX));
    let all = framed.iter().flat_map(|f| f.plan_legs.iter().flatten().chain(f.predicted.iter())).copied();
    let frame = if c.run.routes.first().is_some_and(|r| r.route.origin.is_some()) {
        "of the first route's start"
    } else {
        "in the map frame"
    };
    let mut chart = map_chart(&map, all, frame, FULL)?;
    let mut placer = chart_placer(&chart);
    // Alternatives share the first route's frame (see FramedRoute), so the map is placed in it.
    let origin = c.run.routes.first().and_then(|r| r.route.origin);
    let polygons = map_polygons(c.run.terrain_map.as_deref(), origin.as_ref());
    draw_terrain_map(&mut chart, &polygons)?;
    let tol = 0.5 * metres_per_px(&chart);
    for r in &c.ranking {
        let (Some(f), Some(cr)) = (framed.get(r.run_index), c.run.routes.get(r.run_index)) else { continue };
        for (leg, l) in f.plan_legs.iter().zip(&cr.report.legs) {
            if l.verdict != Verdict::Pass {
                let halo = verdict_color(l.verdict).mix(0.4).stroke_width(16);
                draw_polyline(&mut chart, &mut placer, &simplify_path(leg, tol, &[]), halo)?;
            }
        }
        for (leg, l) in f.plan_legs.iter().zip(&cr.report.legs) {
            let line = terrain_color(&l.terrain).stroke_width(6);
            draw_polyline(&mut chart, &mut placer, &simplify_path(leg, tol, &[]), line)?;
        }
    }
    let mut ends = Vec::new();
    for r in c.ranking.iter().rev() {
        let (Some(f), Some((thinned, keep))) = (framed.get(r.run_index), fig.paths.get(r.run_index)) else { continue };
        let color = route_color(r.rank - 1);
        let path = simplify_path(thinned, tol, keep);
        draw_polyline(&mut chart, &mut placer, &path, color.stroke_width(3))?;
        if let Some(end) = f.predicted.last() {
            ends.push((r.rank, *end, color));
        }
    }
    let area = chart.plotting_area().strip_coord_spec();
    let mut spot_list = Vec::new();
    for r in &c.ranking {
        let (Some(f), Some(cr)) = (framed.get(r.run_index), c.run.routes.get(r.run_index)) else { continue };
        let peaks = fig.peaks.get(r.run_index).map_or(&[][..], |p| &p[..]);
        for s in fig.spots.get(r.run_index).into_iter().flatten() {
            let (Some(pos), Some((shape, _))) = (framed_spot(cr, f, s, peaks), shape_of(s.about)) else { continue };
            let p = to_px(&chart, (pos[0], pos[1]));
            draw_shape(&area, p, shape, verdict_color(s.verdict), 6)?;
            placer.mark(Rect::around(p, 8));
            spot_list.push(s.clone());
        }
    }
    // Rank numbers at each predicted path's end, placed so shared end points stay readable.
    let f = font(20);
    for (rank, end, color) in ends.iter().rev() {
        let p = to_px(&chart, (end[0], end[1]));
        draw_label(&area, &mut placer, p, 8, &rank.to_string(), &f, *color)?;
    }
    for (_, z, shift) in &fig.zooms {
        let mut framed_zoom = z.clone();
        framed_zoom.centre = [z.centre[0] + shift[0], z.centre[1] + shift[1]];
        draw_zoom_frame(&mut chart, &area, &mut placer, &framed_zoom)?;
    }
    if let Some(row) = zoom_row {
        let cells = row.split_evenly((1, MAX_ZOOMS));
        for ((pi, z, _), cell) in fig.zooms.iter().zip(cells.iter()) {
            let Some(panel) = fig.panels.get(*pi) else { continue };
            let title =
                format!("'{}' {}", crate::limits::printable(&panel.cr.report.route), zoom_title(z, &panel.spots));
            draw_zoom(cell, panel, z, &title)?;
        }
    }
    let limited = fig.zooms.iter().any(|(pi, _, _)| fig.panels.get(*pi).is_some_and(RoutePanel::has_limited));
    draw_legend(&legend, c, &spot_list, &polygons, !fig.zooms.is_empty(), limited)?;
    Ok(())
}

fn draw_legend<DB: DrawingBackend>(
    area: &DrawingArea<DB, Shift>,
    c: &Comparison,
    spot_list: &[Spot],
    polygons: &[crate::site::terrain_map::MapPolygon],
    zoomed: bool,
    limited: bool,
) -> DrawResult<()>
where
    DB::ErrorType: 'static,
{
    let mut entries: Vec<(Glyph, String)> = c
        .ranking
        .iter()
        .take(12)
        .map(|r| {
            let text =
                format!("{}. {} - {}", r.rank, crate::limits::printable(&r.route), r.verdict.name().to_uppercase());
            (Glyph::Line(route_color(r.rank - 1), 3), text)
        })
        .collect();
    if c.ranking.len() > 12 {
        entries.push((Glyph::None, format!("and {} more alternatives", c.ranking.len() - 12)));
    }
    entries
        .extend(terrain_entries(c.run.routes.iter().flat_map(|cr| cr.report.legs.iter().map(|l| l.terrain.as_str()))));
    let has = |v: Verdict| c.run.routes.iter().any(|cr| cr.report.legs.iter().any(|l| l.verdict == v));
    if has(Verdict::Caution) {
        entries.push((Glyph::Halo(CAUTION_AMBER), "leg with a caution".to_string()));
    }
    if has(Verdict::Fail) {
        entries.push((Glyph::Halo(FAIL_RED), "failing leg".to_string()));
    }
    entries.extend(spot_entries(spot_list));
    if zoomed {
        entries.push((Glyph::Line(BLACK, 2), "predicted path in a zoom (below)".to_string()));
    }
    if limited {
        entries.push((Glyph::Line(LIMITED_COLOR, 6), "traction or a rating limits it".to_string()));
    }
    entries.extend(map_entries(polygons));
    draw_legend_column(area, "predicted path, by rank", &entries)
}

//! The check plot (SVG or PNG by extension), per route: a top view with the plan coloured by
//! terrain over the terrain map's polygons (light fills, when a map was given), non-passing
//! legs haloed, the predicted path with its traction-limited stretches, a glyph at every spot a
//! reason is about, labelled legs, equal axis scales in metres; below it up to three zooms of
//! the worst spots (see `report::inset`), then the deviation against distance along the route
//! with each leg's corridor and the peak marked, and the outer-track thrust and drawn power.
//!
//! Every series is cut to what the plot can show (`report::decimate`), so the plot of a long
//! or slow route stays small; labels go where the shared placer finds room.

use std::path::Path;

use plotters::coord::Shift;
use plotters::prelude::*;

use super::axis::{equal_about, map_chart, map_chart_of, LinearChart, FULL, SMALL};
use super::decimate::{clip_polyline, per_column, simplify_path};
use super::figure::{write_figure, DrawResult, Figure};
use super::inset::{zoom_title, zooms, Zoom};
use super::legend::{draw_legend_box, draw_legend_column, draw_shape, Glyph, Shape};
use super::marks::{
    limited_runs, peak_steps, shape_of, spot_entries, spots, verdict_color, verdict_text_color, Spot, LIMITED_COLOR,
};
use super::palette::{CAUTION_AMBER, FAIL_RED, INK};
use super::placer::{Placer, Rect};
use super::text::{draw_label, font, titled};
use super::ReportError;
use crate::assess::Verdict;
use crate::check::{CheckRun, CheckedRoute};
use crate::site::terrain_map::MapPolygon;

pub use super::figure::register_fonts;
pub use super::palette::{terrain_color, terrain_fill};

/// Width of the image in pixels.
const WIDTH_PX: u32 = 1400;
/// Heights of a route's title, top view, zoom row and each chart row, pixels.
const TITLE_PX: u32 = 74;
const MAP_PX: u32 = 760;
pub(crate) const ZOOM_PX: u32 = 440;
const CHART_PX: u32 = 270;
/// Width of the legend column beside the top view.
const LEGEND_WIDTH_PX: u32 = 330;
/// Routes drawn at most in one image.
pub const MAX_ROUTES_PLOTTED: usize = 6;

/// Pixel columns at which the charts' series are thinned once, before drawing (more than any
/// chart has; drawing thins them again to its own width).
const SERIES_COLUMNS: usize = 8192;

/// One route's part of the check plot, worked out once before drawing (PNG output draws the
/// figure once per band, so nothing here is recomputed per band).
pub(crate) struct RoutePanel<'a> {
    pub(crate) cr: &'a CheckedRoute,
    pub(crate) spots: Vec<Spot>,
    pub(crate) zooms: Vec<Zoom>,
    unzoomed: Vec<usize>,
    polygons: Vec<MapPolygon>,
    /// Corners of the box around the plan and the predicted path.
    extent: [[f64; 2]; 2],
    /// The predicted path thinned below the finest scale drawn, with each leg's deviation peak
    /// kept (its indices in `path_keep`).
    path: Vec<[f64; 2]>,
    path_keep: Vec<usize>,
    /// Traction-limited stretches of the predicted path (thinned), and where they lie along
    /// the route.
    limited: Vec<Vec<[f64; 2]>>,
    limited_m: Vec<(f64, f64)>,
    /// Deviation, outer-track thrust and drawn power against distance, thinned per column.
    deviation: Vec<(f64, f64)>,
    thrust: Vec<(f64, f64)>,
    power: Vec<(f64, f64)>,
}

impl<'a> RoutePanel<'a> {
    pub(crate) fn new(cr: &'a CheckedRoute, run: &CheckRun) -> Self {
        let spots = spots(cr);
        let extent = extent(cr);
        let view_half_m = (0.5 * (extent[1][0] - extent[0][0]).max(extent[1][1] - extent[0][1])).max(1.0);
        let (zooms, unzoomed) = zooms(cr, &spots, view_half_m);
        let polygons = map_polygons(run.terrain_map.as_deref(), cr.route.origin.as_ref());
        // A quarter of the smallest metres per pixel any view of this route has.
        let finest_m = zooms.iter().map(|z| 2.0 * z.half_m / 400.0).fold(2.0 * view_half_m / 1100.0, f64::min);
        let tol_m = 0.25 * finest_m;
        let poses: Vec<[f64; 2]> = cr.trace.steps.iter().map(|s| [s.pose.x_m, s.pose.y_m]).collect();
        let (path, path_keep) = super::decimate::thin(&poses, tol_m, &peak_steps(cr));
        let runs = limited_runs(cr);
        let limited = runs.iter().map(|r| super::decimate::thin(&poses[r.clone()], tol_m, &[]).0).collect();
        let steps = &cr.trace.steps;
        let limited_m = runs.iter().map(|r| (steps[r.start].progress_m, steps[r.end - 1].progress_m)).collect();
        let total_m = cr.drive.plan.length_m().max(1.0);
        let series = |f: fn(&crate::rollout::Step) -> f64| {
            let pts: Vec<(f64, f64)> = steps.iter().map(|s| (s.progress_m, f(s))).collect();
            per_column(&pts, 0.0, total_m, SERIES_COLUMNS)
        };
        RoutePanel {
            cr,
            spots,
            zooms,
            unzoomed,
            polygons,
            extent,
            path,
            path_keep,
            limited,
            limited_m,
            deviation: series(|s| s.deviation_m),
            thrust: series(|s| s.effort.outer_thrust_n),
            power: series(|s| s.effort.drawn_power_w),
        }
    }

    /// True when traction or a rating bound the motion somewhere on the route.
    pub(crate) fn has_limited(&self) -> bool {
        !self.limited.is_empty()
    }

    fn height_px(&self) -> u32 {
        TITLE_PX + MAP_PX + if self.zooms.is_empty() { 0 } else { ZOOM_PX } + 2 * CHART_PX
    }
}

/// The check plot of a run.
struct CheckFigure<'a> {
    run: &'a CheckRun,
    panels: Vec<RoutePanel<'a>>,
}

impl<'a> CheckFigure<'a> {
    fn new(run: &'a CheckRun) -> Self {
        let panels = run.routes.iter().take(MAX_ROUTES_PLOTTED).map(|cr| RoutePanel::new(cr, run)).collect();
        CheckFigure { run, panels }
    }
}

impl Figure for CheckFigure<'_> {
    fn size_px(&self) -> (u32, u32) {
        let h: u32 = self.panels.iter().map(RoutePanel::height_px).sum();
        (WIDTH_PX, h.max(TITLE_PX + MAP_PX + 2 * CHART_PX))
    }
    fn draw<DB: DrawingBackend>(&self, root: &DrawingArea<DB, Shift>) -> DrawResult<()>
    where
        DB::ErrorType: 'static,
    {
        root.fill(&WHITE)?;
        let mut rest = root.clone();
        for p in &self.panels {
            let (area, below) = rest.split_vertically(p.height_px());
            draw_route(&area, p, self.run).map_err(|e| format!("drawing route '{}': {e}", p.cr.route.name))?;
            rest = below;
        }
        Ok(())
    }
}

/// Writes the plot of a run; the format follows the extension (`.svg` or `.png`).
pub fn write_plot(run: &CheckRun, path: &Path) -> Result<(), ReportError> {
    write_figure(&CheckFigure::new(run), path)
}

/// The plot of a run as an SVG document string, for embedding (the HTML report).
pub fn plot_svg_string(run: &CheckRun) -> Result<String, String> {
    super::figure::svg_string(&CheckFigure::new(run))
}

/// Corners of the box around a route's plan and predicted path (non-finite points left out).
fn extent(cr: &CheckedRoute) -> [[f64; 2]; 2] {
    let pts = cr.drive.plan.points().iter().copied().chain(cr.trace.steps.iter().map(|s| [s.pose.x_m, s.pose.y_m]));
    let (mut lo, mut hi) = ([f64::INFINITY; 2], [f64::NEG_INFINITY; 2]);
    for p in pts.filter(|p| p[0].is_finite() && p[1].is_finite()) {
        for k in 0..2 {
            lo[k] = lo[k].min(p[k]);
            hi[k] = hi[k].max(p[k]);
        }
    }
    if !lo[0].is_finite() {
        return [[-1.0, -1.0], [1.0, 1.0]];
    }
    [lo, hi]
}

/// Shades terrain-map polygons (already in the chart's local frame) under everything else,
/// in file order, each clipped to the chart's view. A polygon without holes is one filled
/// shape; one with holes is filled triangle by triangle (ear clipping, geo's
/// `TriangulateEarcut`), each triangle outlined in its fill so no seam shows.
pub(crate) fn draw_terrain_map<DB: DrawingBackend>(
    chart: &mut LinearChart<'_, DB>,
    polygons: &[MapPolygon],
) -> DrawResult<()>
where
    DB::ErrorType: 'static,
{
    use geo::{BooleanOps, TriangulateEarcut};
    let (xr, yr) = (chart.x_range(), chart.y_range());
    let view =
        geo::Rect::new(geo::coord! { x: xr.start, y: yr.start }, geo::coord! { x: xr.end, y: yr.end }).to_polygon();
    let ring = |ls: &geo::LineString<f64>| ls.0.iter().map(|c| (c.x, c.y)).collect::<Vec<_>>();
    for mp in polygons {
        let fill = terrain_fill(&mp.terrain);
        for part in mp.polygon.intersection(&view) {
            if part.interiors().is_empty() {
                chart.draw_series(std::iter::once(Polygon::new(ring(part.exterior()), fill.filled())))?;
                continue;
            }
            for t in part.earcut_triangles() {
                let pts: Vec<(f64, f64)> = [t.v1(), t.v2(), t.v3()].iter().map(|c| (c.x, c.y)).collect();
                chart.draw_series(std::iter::once(Polygon::new(pts.clone(), fill.filled())))?;
                let mut closed = pts;
                closed.push(closed[0]);
                chart.draw_series(std::iter::once(PathElement::new(closed, fill.stroke_width(1))))?;
            }
        }
    }
    Ok(())
}

/// The terrain map's polygons in a route's frame, when the run has a map that fits it.
pub(crate) fn map_polygons(
    map: Option<&crate::site::TerrainMap>,
    origin: Option<&crate::route::GeoOrigin>,
) -> Vec<MapPolygon> {
    map.and_then(|m| m.local_polygons(origin).ok()).unwrap_or_default()
}

/// Legend lines for the map terrains shaded on a plot, in first-appearance order.
pub(crate) fn map_entries(polygons: &[MapPolygon]) -> Vec<(Glyph, String)> {
    let mut seen: Vec<&str> = Vec::new();
    for p in polygons {
        if !seen.contains(&p.terrain.as_str()) {
            seen.push(&p.terrain);
        }
    }
    seen.into_iter().map(|t| (Glyph::Fill(terrain_fill(t)), format!("map: {t}"))).collect()
}

/// Legend lines for the terrains of `terrains`, in first-appearance order.
pub(crate) fn terrain_entries<'a>(terrains: impl Iterator<Item = &'a str>) -> Vec<(Glyph, String)> {
    let mut seen: Vec<&str> = Vec::new();
    let mut entries = Vec::new();
    for t in terrains {
        if !seen.contains(&t) {
            seen.push(t);
            entries.push((Glyph::Line(terrain_color(t), 7), format!("plan on {t}")));
        }
    }
    entries
}

/// Metres per pixel of a map chart.
pub(crate) fn metres_per_px<DB: DrawingBackend>(chart: &LinearChart<'_, DB>) -> f64 {
    let (w, _) = chart.plotting_area().dim_in_pixel();
    let xr = chart.x_range();
    (xr.end - xr.start) / f64::from(w.max(1))
}

/// Pixel position of a chart point within its plotting area.
pub(crate) fn to_px<DB: DrawingBackend>(chart: &LinearChart<'_, DB>, p: (f64, f64)) -> (i32, i32) {
    let q = chart.backend_coord(&p);
    let b = chart.plotting_area().get_base_pixel();
    (q.0 - b.0, q.1 - b.1)
}

/// A placer over a chart's plotting area.
pub(crate) fn chart_placer<DB: DrawingBackend>(chart: &LinearChart<'_, DB>) -> Placer {
    let (w, h) = chart.plotting_area().dim_in_pixel();
    Placer::new(Rect::new(0, 0, w as i32, h as i32))
}

/// Draws a polyline (chart coordinates) and records it for the label placer.
pub(crate) fn draw_polyline<DB: DrawingBackend>(
    chart: &mut LinearChart<'_, DB>,
    placer: &mut Placer,
    pts: &[[f64; 2]],
    style: ShapeStyle,
) -> DrawResult<()>
where
    DB::ErrorType: 'static,
{
    if pts.len() < 2 {
        return Ok(());
    }
    chart
        .draw_series(std::iter::once(PathElement::new(pts.iter().map(|p| (p[0], p[1])).collect::<Vec<_>>(), style)))?;
    let px: Vec<(i32, i32)> = pts.iter().map(|p| to_px(chart, (p[0], p[1]))).collect();
    placer.mark_line(&px, (style.stroke_width as i32 / 2).max(1));
    Ok(())
}

/// The chart's window `[x0, x1, y0, y1]`.
fn window<DB: DrawingBackend>(chart: &LinearChart<'_, DB>) -> [f64; 4] {
    let (xr, yr) = (chart.x_range(), chart.y_range());
    [xr.start, xr.end, yr.start, yr.end]
}

/// Draws `pts` simplified to the chart's scale and cut to its window.
fn draw_path<DB: DrawingBackend>(
    chart: &mut LinearChart<'_, DB>,
    placer: &mut Placer,
    pts: &[[f64; 2]],
    keep: &[usize],
    style: ShapeStyle,
) -> DrawResult<()>
where
    DB::ErrorType: 'static,
{
    let tol = 0.5 * metres_per_px(chart);
    let simple = simplify_path(pts, tol, keep);
    for part in clip_polyline(&simple, window(chart)) {
        draw_polyline(chart, placer, &part, style)?;
    }
    Ok(())
}

fn inside(w: [f64; 4], p: [f64; 2]) -> bool {
    p[0] >= w[0] && p[0] <= w[1] && p[1] >= w[2] && p[1] <= w[3]
}

/// Draws a route on a map chart (the whole view or a zoom): map shading, plan by terrain with
/// halos, traction-limited stretches, the predicted path, start and end, zoom frames (on the
/// whole view), spot glyphs and labels. Returns the texts of labels that found no room.
fn draw_route_map<DB: DrawingBackend>(
    chart: &mut LinearChart<'_, DB>,
    p: &RoutePanel<'_>,
    zoomed: Option<&Zoom>,
) -> DrawResult<Vec<String>>
where
    DB::ErrorType: 'static,
{
    let cr = p.cr;
    let mut placer = chart_placer(chart);
    draw_terrain_map(chart, &p.polygons)?;
    let halo_w = if zoomed.is_some() { 18 } else { 16 };
    for (leg, l) in cr.route.legs.iter().zip(&cr.report.legs) {
        if l.verdict != Verdict::Pass {
            let c = verdict_color(l.verdict).mix(0.45);
            draw_path(chart, &mut placer, &leg.points, &[], c.stroke_width(halo_w))?;
        }
    }
    for (leg, l) in cr.route.legs.iter().zip(&cr.report.legs) {
        draw_path(chart, &mut placer, &leg.points, &[], terrain_color(&l.terrain).stroke_width(7))?;
    }
    for run in &p.limited {
        draw_path(chart, &mut placer, run, &[], LIMITED_COLOR.mix(0.85).stroke_width(6))?;
    }
    draw_path(chart, &mut placer, &p.path, &p.path_keep, BLACK.stroke_width(2))?;
    let win = window(chart);
    let area = chart.plotting_area().strip_coord_spec();
    let plan = &cr.drive.plan;
    let (start, end) = (plan.point_at(0.0), plan.point_at(plan.length_m()));
    for (q, shape, color) in [(start, Shape::Dot, RGBColor(0, 140, 0)), (end, Shape::Square, INK)] {
        if inside(win, q) {
            let c = to_px(chart, (q[0], q[1]));
            draw_shape(&area, c, shape, color, 7)?;
            placer.mark(Rect::around(c, 9));
        }
    }
    if zoomed.is_none() {
        for z in &p.zooms {
            draw_zoom_frame(chart, &area, &mut placer, z)?;
        }
    }
    let shown: Vec<usize> = match zoomed {
        Some(z) => z.spots.clone(),
        None => (0..p.spots.len()).collect(),
    };
    let label_font = font(if zoomed.is_some() { 14 } else { 17 });
    for &i in &shown {
        let s = &p.spots[i];
        if let (true, Some((shape, _))) = (inside(win, s.pos), shape_of(s.about)) {
            let c = to_px(chart, (s.pos[0], s.pos[1]));
            draw_shape(&area, c, shape, verdict_color(s.verdict), 7)?;
            placer.mark(Rect::around(c, 9));
        }
    }
    let mut dropped = Vec::new();
    if let Some(z) = zoomed {
        // In a zoom every spot is labelled with what it is about.
        for &i in &z.spots {
            let s = &p.spots[i];
            let c = to_px(chart, (s.pos[0], s.pos[1]));
            if !draw_label(&area, &mut placer, c, 11, &s.label, &label_font, verdict_text_color(s.verdict))? {
                dropped.push(s.label.clone());
            }
        }
    } else {
        for (leg, anchor) in leg_label_anchors(p) {
            let l = &cr.report.legs[leg];
            let text = format!("leg {} {}", l.index, l.verdict.name().to_uppercase());
            if !inside(win, anchor) {
                continue;
            }
            let c = to_px(chart, (anchor[0], anchor[1]));
            if !draw_label(&area, &mut placer, c, 12, &text, &label_font, verdict_text_color(l.verdict))? {
                dropped.push(text);
            }
        }
    }
    Ok(dropped)
}

/// Where each non-passing leg's label goes: its worst spot, or the middle of the leg.
fn leg_label_anchors(p: &RoutePanel<'_>) -> Vec<(usize, [f64; 2])> {
    let plan = &p.cr.drive.plan;
    p.cr.report
        .legs
        .iter()
        .enumerate()
        .filter(|(_, l)| l.verdict != Verdict::Pass)
        .map(|(i, l)| {
            let worst = p
                .spots
                .iter()
                .filter(|s| s.leg == l.index)
                .max_by(|a, b| a.verdict.cmp(&b.verdict).then(b.at_m.total_cmp(&a.at_m)));
            let anchor = worst.map_or_else(
                || {
                    let (a, b) = plan.leg_bounds_m(i);
                    plan.point_at(0.5 * (a + b))
                },
                |s| s.pos,
            );
            (i, anchor)
        })
        .collect()
}

/// A zoom's frame and letter on the whole view.
pub(crate) fn draw_zoom_frame<DB: DrawingBackend>(
    chart: &mut LinearChart<'_, DB>,
    area: &DrawingArea<DB, Shift>,
    placer: &mut Placer,
    z: &Zoom,
) -> DrawResult<()>
where
    DB::ErrorType: 'static,
{
    let [x0, x1, y0, y1] = z.window();
    let (a, b) = (to_px(chart, (x0, y1)), to_px(chart, (x1, y0)));
    // At least a visible square, even when the zoom is a few pixels on the map.
    let (cx, cy) = ((a.0 + b.0) / 2, (a.1 + b.1) / 2);
    let r = ((b.0 - a.0) / 2).max(8);
    let frame = Rect::around((cx, cy), r);
    let ring = vec![
        (frame.x0, frame.y0),
        (frame.x1, frame.y0),
        (frame.x1, frame.y1),
        (frame.x0, frame.y1),
        (frame.x0, frame.y0),
    ];
    area.draw(&PathElement::new(ring.clone(), WHITE.stroke_width(4)))?;
    area.draw(&PathElement::new(ring.clone(), INK.stroke_width(2)))?;
    placer.mark_line(&ring, 2);
    let text = z.letter.to_string();
    let f = font(20);
    draw_label(area, placer, (frame.x0, frame.y0), 4, &text, &f, INK)?;
    Ok(())
}

fn draw_route<DB: DrawingBackend>(area: &DrawingArea<DB, Shift>, p: &RoutePanel<'_>, run: &CheckRun) -> DrawResult<()>
where
    DB::ErrorType: 'static,
{
    let r = &p.cr.report;
    let profile = if run.demo_profile { "built-in demo profile" } else { run.vehicle_name.as_str() };
    let title =
        format!("route '{}': {}   ({:.0} m, {})", r.route, r.verdict.name().to_uppercase(), r.length_m, profile);
    let body = titled(area, &title, 26)?;
    let (w, _) = body.dim_in_pixel();
    let (top, rest) = body.split_vertically(MAP_PX);
    let (map, legend) = top.split_horizontally(w.saturating_sub(LEGEND_WIDTH_PX));
    let frame = if p.cr.route.origin.is_some() { "of the route start" } else { "in the map frame" };
    let mut chart = map_chart(&map, p.extent.iter().copied(), frame, FULL)?;
    let mut dropped = draw_route_map(&mut chart, p, None)?;
    let rest = if p.zooms.is_empty() {
        rest
    } else {
        let (row, below) = rest.split_vertically(ZOOM_PX);
        let cells = row.split_evenly((1, super::inset::MAX_ZOOMS));
        for (z, cell) in p.zooms.iter().zip(cells.iter()) {
            dropped.extend(draw_zoom(cell, p, z, &zoom_title(z, &p.spots))?);
        }
        below
    };
    draw_legend_column(&legend, "legend", &legend_entries(p, &dropped))?;
    let (deviation, effort) = rest.split_vertically(CHART_PX);
    draw_deviation(&deviation, p)?;
    let (thrust, power) = effort.split_horizontally(w / 2);
    draw_effort(&thrust, p, EffortPanel::Thrust)?;
    draw_effort(&power, p, EffortPanel::Power)?;
    Ok(())
}

/// Draws zoom `z` of a route in `cell` under `title`; returns the labels left out for want of room.
pub(crate) fn draw_zoom<DB: DrawingBackend>(
    cell: &DrawingArea<DB, Shift>,
    p: &RoutePanel<'_>,
    z: &Zoom,
    title: &str,
) -> DrawResult<Vec<String>>
where
    DB::ErrorType: 'static,
{
    let body = titled(cell, title, 16)?;
    let frame = if p.cr.route.origin.is_some() { "of the route start" } else { "in the map frame" };
    let side = 2.0 * z.half_m;
    let mut chart = map_chart_of(&body, |w, h| equal_about(z.centre, [side, side], w, h, 1.0), frame, SMALL)?;
    let color = verdict_color(z.worst);
    let (pw, ph) = chart.plotting_area().dim_in_pixel();
    let dropped = draw_route_map(&mut chart, p, Some(z))?;
    // The zoom's frame in its level's colour.
    let area = chart.plotting_area().strip_coord_spec();
    area.draw(&Rectangle::new([(0, 0), (pw as i32 - 1, ph as i32 - 1)], color.stroke_width(2)))?;
    Ok(dropped)
}

fn legend_entries(p: &RoutePanel<'_>, dropped: &[String]) -> Vec<(Glyph, String)> {
    let cr = p.cr;
    let mut entries = terrain_entries(cr.report.legs.iter().map(|l| l.terrain.as_str()));
    entries.push((Glyph::Line(BLACK, 2), "predicted path".to_string()));
    if !p.limited.is_empty() {
        entries.push((Glyph::Line(LIMITED_COLOR, 6), "traction or a rating limits it".to_string()));
    }
    entries.push((Glyph::Mark(Shape::Dot, RGBColor(0, 140, 0)), "start".to_string()));
    entries.push((Glyph::Mark(Shape::Square, INK), "end".to_string()));
    if cr.report.legs.iter().any(|l| l.verdict == Verdict::Caution) {
        entries.push((Glyph::Halo(CAUTION_AMBER), "leg with a caution".to_string()));
    }
    if cr.report.legs.iter().any(|l| l.verdict == Verdict::Fail) {
        entries.push((Glyph::Halo(FAIL_RED), "failing leg".to_string()));
    }
    entries.extend(spot_entries(&p.spots));
    if !p.zooms.is_empty() {
        let letters = match p.zooms.last().map_or('A', |z| z.letter) {
            'A' => "A".to_string(),
            last => format!("A-{last}"),
        };
        entries.push((Glyph::Line(INK, 2), format!("zoom frame ({letters}, below)")));
    }
    entries.extend(map_entries(&p.polygons));
    if !p.unzoomed.is_empty() {
        let mut legs: Vec<usize> = p.unzoomed.iter().map(|&i| p.spots[i].leg).collect();
        legs.sort_unstable();
        legs.dedup();
        let legs: Vec<String> = legs.iter().map(|l| l.to_string()).collect();
        entries.push((Glyph::None, format!("not zoomed: legs {}", legs.join(", "))));
    }
    if !dropped.is_empty() {
        entries.push((Glyph::None, format!("no room to label: {}", dropped.join(", "))));
    }
    entries
}

#[derive(Clone, Copy, PartialEq)]
enum EffortPanel {
    Thrust,
    Power,
}

/// Columns of a distance chart's plotting area, for decimation.
fn columns<DB: DrawingBackend>(chart: &LinearChart<'_, DB>) -> usize {
    chart.plotting_area().dim_in_pixel().0 as usize
}

/// Outer-track thrust (with each leg's limit: traction or rating) or drawn power (with the
/// rating) against distance along the route.
fn draw_effort<DB: DrawingBackend>(
    area: &DrawingArea<DB, Shift>,
    p: &RoutePanel<'_>,
    panel: EffortPanel,
) -> DrawResult<()>
where
    DB::ErrorType: 'static,
{
    let cr = p.cr;
    let total_m = cr.drive.plan.length_m().max(1.0);
    let veh = &cr.drive.vehicle;
    let limits: Vec<(f64, f64)> = cr
        .report
        .legs
        .iter()
        .flat_map(|l| {
            let (a, b) = cr.drive.plan.leg_bounds_m(l.index - 1);
            let lim = match panel {
                EffortPanel::Thrust => crate::effort::side_thrust_limit_n(veh, &cr.drive.legs[l.index - 1].ground),
                EffortPanel::Power => veh.max_power_w,
            };
            [(a, lim), (b, lim)]
        })
        .collect();
    let series = match panel {
        EffortPanel::Thrust => &p.thrust,
        EffortPanel::Power => &p.power,
    };
    let peak = series.iter().map(|p| p.1).fold(0.0, f64::max);
    let low = series.iter().map(|p| p.1).fold(0.0, f64::min);
    let lim_max = limits.iter().map(|l| l.1).fold(0.0, f64::max);
    let y_max = (peak.max(lim_max) * 1.12).max(1.0);
    let y_min = (low * 1.12).min(0.0);
    let (y_desc, line_label, limit_label) = match panel {
        EffortPanel::Thrust => ("outer-track thrust (N)", "outer-track thrust", "limit: traction or rating"),
        EffortPanel::Power => ("drawn power (W)", "drawn power", "power rating"),
    };
    let mut chart = super::axis::distance_chart(area, total_m, y_min..y_max, y_desc)?;
    if panel == EffortPanel::Thrust {
        // Where traction or a rating bound the motion, shaded.
        for &(a, b) in &p.limited_m {
            let shade = LIMITED_COLOR.mix(0.12).filled();
            chart.draw_series(std::iter::once(Rectangle::new([(a, y_min), (b.max(a), y_max)], shade)))?;
        }
    }
    let line = super::palette::route_color(1);
    chart.draw_series(DashedLineSeries::new(limits.iter().copied(), 10, 6, FAIL_RED.stroke_width(2)))?;
    let shown = per_column(series, 0.0, total_m, columns(&chart));
    chart.draw_series(LineSeries::new(shown.iter().copied(), line.stroke_width(2)))?;
    let mut entries =
        vec![(Glyph::Dashed(FAIL_RED, 2), limit_label.to_string()), (Glyph::Line(line, 2), line_label.to_string())];
    if panel == EffortPanel::Thrust && !p.limited_m.is_empty() {
        entries.push((Glyph::Fill(super::palette::tint(LIMITED_COLOR, 0.75)), "traction or a rating limits it".into()));
    }
    draw_legend_box(&chart, &entries, &[&shown, &limits], 14)?;
    Ok(())
}

fn draw_deviation<DB: DrawingBackend>(area: &DrawingArea<DB, Shift>, p: &RoutePanel<'_>) -> DrawResult<()>
where
    DB::ErrorType: 'static,
{
    let cr = p.cr;
    let total_m = cr.drive.plan.length_m().max(1.0);
    let corridor = corridor_line(cr);
    let max_corr = corridor.iter().map(|p| p.1).fold(0.0, f64::max);
    let y_max = (cr.report.max_deviation_m.max(max_corr) * 1.18).max(0.1);
    let mut chart = super::axis::distance_chart(area, total_m, 0.0..y_max, "deviation (m)")?;
    for leg in &cr.report.legs {
        let (a, b) = cr.drive.plan.leg_bounds_m(leg.index - 1);
        chart.draw_series(std::iter::once(PathElement::new(
            vec![(a, 0.0), (a, y_max)],
            RGBColor(190, 190, 190).stroke_width(1),
        )))?;
        let color = terrain_color(&leg.terrain);
        chart.draw_series(std::iter::once(Rectangle::new([(a, 0.0), (b, y_max * 0.03)], color.filled())))?;
    }
    chart.draw_series(DashedLineSeries::new(corridor.iter().copied(), 10, 6, FAIL_RED.stroke_width(2)))?;
    let shown = per_column(&p.deviation, 0.0, total_m, columns(&chart));
    chart.draw_series(LineSeries::new(shown.iter().copied(), BLACK.stroke_width(2)))?;
    let mut entries = vec![
        (Glyph::Dashed(FAIL_RED, 2), "corridor".to_string()),
        (Glyph::Line(BLACK, 2), "predicted deviation".to_string()),
    ];
    // The largest deviation, marked and labelled with its value.
    if let Some(&(x, y)) = shown.iter().max_by(|a, b| a.1.total_cmp(&b.1).then(b.0.total_cmp(&a.0))) {
        if y > 0.0 {
            let area = chart.plotting_area().strip_coord_spec();
            let c = to_px(&chart, (x, y));
            draw_shape(&area, c, Shape::Ring, INK, 6)?;
            let mut placer = chart_placer(&chart);
            let px: Vec<(i32, i32)> = shown.iter().map(|&q| to_px(&chart, q)).collect();
            placer.mark_line(&px, 1);
            placer.mark(Rect::around(c, 8));
            let text = format!("largest {y:.2} m at {x:.0} m");
            draw_label(&area, &mut placer, c, 10, &text, &font(15), INK)?;
            entries.push((Glyph::Mark(Shape::Ring, INK), "largest deviation".to_string()));
        }
    }
    draw_legend_box(&chart, &entries, &[&shown, &corridor], 14)?;
    Ok(())
}

/// The corridor along the route as (arc length, corridor) points: the corridor profile where a
/// leg has one (linear between its points), a step at a leg boundary; a stretch of one value is
/// two points.
fn corridor_line(cr: &CheckedRoute) -> Vec<(f64, f64)> {
    let mut line: Vec<(f64, f64)> = Vec::new();
    for (j, seg) in cr.drive.speeds.segments().iter().enumerate() {
        let (s0, s1) = cr.drive.plan.segment_bounds_m(j);
        let [c0, c1] = seg.corridor_m;
        let n = line.len();
        let flat_run = n >= 2 && c0 == c1 && line[n - 1].1 == c0 && line[n - 2].1 == c0;
        if flat_run {
            line[n - 1].0 = s1;
        } else {
            line.extend([(s0, c0), (s1, c1)]);
        }
    }
    line
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn a_long_crawl_plots_small_and_shows_its_peak_deviation() {
        // 300 m at the slowest accepted speed (0.05 m/s): 120 000 control steps.
        let leg = |terrain: &str, points: Vec<[f64; 2]>| crate::route::Leg {
            speed_mps: Some(0.05),
            ..crate::route::Leg::new(terrain, points, crate::route::SourcePosition::Feature(0))
        };
        let route = crate::route::Route {
            name: "crawl".into(),
            source: "crawl.csv".into(),
            origin: None,
            legs: vec![
                leg("asphalt", vec![[0.0, 0.0], [200.0, 0.0]]),
                leg("gravel", vec![[200.0, 0.0], [200.0, 100.0]]),
            ],
            warnings: Vec::new(),
        };
        let cr = crate::check::check_route(route, &crate::vehicle::Profile::demo());
        assert!(cr.trace.steps.len() > 100_000, "{} steps", cr.trace.steps.len());
        let run = CheckRun { vehicle_name: "v".into(), demo_profile: true, routes: vec![cr], terrain_map: None };
        let svg = plot_svg_string(&run).expect("svg");
        assert!(svg.len() < 2_000_000, "{} bytes", svg.len());
        let peak = run.routes[0].report.max_deviation_m;
        assert!(svg.contains(&format!("largest {peak:.2} m")), "the peak deviation is labelled");
    }
}

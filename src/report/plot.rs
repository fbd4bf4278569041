//! The check plot (SVG or PNG by extension): per route, a top view with the plan coloured by
//! terrain over the terrain map's polygons (light fills, when a map was given), the predicted
//! path, failing legs marked, equal axis scales in metres; below it the deviation against
//! distance along the route with each leg's corridor.
//!
//! Text is drawn with a bundled DejaVu Sans (Bitstream Vera licence, see fonts/LICENSE-DejaVu)
//! through plotters' pure-Rust font path, so no system font library is needed.

use std::path::Path;
use std::sync::Once;

use plotters::coord::types::RangedCoordf64;
use plotters::coord::Shift;
use plotters::prelude::*;
use plotters::style::FontStyle;

use super::ReportError;
use crate::assess::Verdict;
use crate::check::{CheckRun, CheckedRoute};

/// Width of the image in pixels.
const WIDTH_PX: u32 = 1400;
/// Height of the panels of one route in pixels.
const ROUTE_HEIGHT_PX: u32 = 1350;
/// Width of the legend column beside the top view.
const LEGEND_WIDTH_PX: u32 = 330;
/// Routes drawn at most in one image.
pub const MAX_ROUTES_PLOTTED: usize = 6;

static FONTS: Once = Once::new();

/// Registers the bundled font with plotters (needed for SVG too: layout needs metrics).
pub fn register_fonts() {
    FONTS.call_once(|| {
        let _ = plotters::style::register_font("sans-serif", FontStyle::Normal, dejavu::sans::regular());
        let _ = plotters::style::register_font("sans-serif", FontStyle::Bold, dejavu::sans::bold());
    });
}

/// Colour of a terrain on plots. The known terrains have fixed colours of our own choosing;
/// others take one from a fallback palette by a stable hash of the name.
pub fn terrain_color(terrain: &str) -> RGBColor {
    match terrain {
        "asphalt" => RGBColor(70, 70, 78),
        "gravel" => RGBColor(184, 134, 72),
        "grass" => RGBColor(76, 154, 42),
        "packed-snow" => RGBColor(96, 170, 220),
        "deep-snow" => RGBColor(36, 84, 150),
        "slush" => RGBColor(150, 120, 200),
        "mud" => RGBColor(110, 80, 50),
        "ice" => RGBColor(0, 190, 190),
        other => {
            const PALETTE: [RGBColor; 6] = [
                RGBColor(230, 150, 20),
                RGBColor(200, 60, 150),
                RGBColor(20, 150, 130),
                RGBColor(130, 130, 20),
                RGBColor(90, 90, 200),
                RGBColor(200, 100, 80),
            ];
            let h = other.bytes().fold(5381u32, |h, b| h.wrapping_mul(33) ^ u32::from(b));
            PALETTE[(h % PALETTE.len() as u32) as usize]
        }
    }
}

/// The light fill of a terrain on the map: its colour two thirds of the way to white, opaque,
/// so overlapping polygons show the later one (as the cutting does) and the plan stays legible.
pub fn terrain_fill(terrain: &str) -> RGBColor {
    let RGBColor(r, g, b) = terrain_color(terrain);
    let light = |c: u8| (f64::from(c) + (255.0 - f64::from(c)) * 0.68).round() as u8;
    RGBColor(light(r), light(g), light(b))
}

/// Shades terrain-map polygons (already in the chart's local frame) under everything else,
/// in file order, each clipped to the chart's view. A polygon without holes is one filled
/// shape; one with holes is filled triangle by triangle (ear clipping, geo's
/// `TriangulateEarcut`), each triangle outlined in its fill so no seam shows.
pub(crate) fn draw_terrain_map<DB: DrawingBackend>(
    chart: &mut LinearChart<'_, DB>,
    polygons: &[crate::site::terrain_map::MapPolygon],
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
) -> Vec<crate::site::terrain_map::MapPolygon> {
    map.and_then(|m| m.local_polygons(origin).ok()).unwrap_or_default()
}

/// Legend lines for the map terrains shaded on a plot, in first-appearance order.
pub(crate) fn map_entries(polygons: &[crate::site::terrain_map::MapPolygon]) -> Vec<(Glyph, String)> {
    let mut seen: Vec<&str> = Vec::new();
    for p in polygons {
        if !seen.contains(&p.terrain.as_str()) {
            seen.push(&p.terrain);
        }
    }
    seen.into_iter().map(|t| (Glyph::Fill(terrain_fill(t)), format!("map: {t}"))).collect()
}

const FAIL_RED: RGBColor = RGBColor(220, 30, 30);
const CAUTION_AMBER: RGBColor = RGBColor(240, 170, 0);

/// A figure the reports render to SVG or PNG.
pub(crate) trait Figure {
    fn size_px(&self) -> (u32, u32);
    fn draw<DB: DrawingBackend>(&self, root: &DrawingArea<DB, Shift>) -> DrawResult<()>
    where
        DB::ErrorType: 'static;
}

/// A figure as an SVG document string.
pub(crate) fn svg_string(fig: &impl Figure) -> Result<String, String> {
    register_fonts();
    let mut svg = String::new();
    {
        let root = SVGBackend::with_string(&mut svg, fig.size_px()).into_drawing_area();
        fig.draw(&root).map_err(|e| e.to_string())?;
        root.present().map_err(|e| e.to_string())?;
    }
    Ok(svg)
}

/// Writes a figure atomically; the format follows the extension (`.svg` or `.png`).
pub(crate) fn write_figure(fig: &impl Figure, path: &Path) -> Result<(), ReportError> {
    register_fonts();
    let ext = path.extension().and_then(|e| e.to_str()).unwrap_or("").to_ascii_lowercase();
    let fail = |what: String| ReportError::Output { file: path.to_path_buf(), what };
    match ext.as_str() {
        "svg" => super::write_atomic(path, svg_string(fig).map_err(fail)?.as_bytes()),
        "png" => super::write_atomic_with(path, |tmp| {
            // Created here first, so a folder that cannot be written to fails as a plain I/O
            // error (the encoder would report it as a nested debug dump).
            std::fs::File::create(tmp)?;
            let root = BitMapBackend::new(tmp, fig.size_px()).into_drawing_area();
            fig.draw(&root).map_err(|e| std::io::Error::other(e.to_string()))?;
            root.present().map_err(|e| std::io::Error::other(e.to_string()))
        }),
        _ => Err(fail(format!("unknown plot format '.{ext}': expected .svg or .png"))),
    }
}

/// The check plot of a run.
struct CheckFigure<'a>(&'a CheckRun);

impl Figure for CheckFigure<'_> {
    fn size_px(&self) -> (u32, u32) {
        (WIDTH_PX, ROUTE_HEIGHT_PX * self.0.routes.len().clamp(1, MAX_ROUTES_PLOTTED) as u32)
    }
    fn draw<DB: DrawingBackend>(&self, root: &DrawingArea<DB, Shift>) -> DrawResult<()>
    where
        DB::ErrorType: 'static,
    {
        Ok(draw_run(root, self.0)?)
    }
}

/// Writes the plot of a run; the format follows the extension (`.svg` or `.png`).
pub fn write_plot(run: &CheckRun, path: &Path) -> Result<(), ReportError> {
    write_figure(&CheckFigure(run), path)
}

fn draw_run<DB: DrawingBackend>(root: &DrawingArea<DB, Shift>, run: &CheckRun) -> Result<(), String>
where
    DB::ErrorType: 'static,
{
    root.fill(&WHITE).map_err(|e| e.to_string())?;
    let n = run.routes.len().clamp(1, MAX_ROUTES_PLOTTED);
    let areas = root.split_evenly((n, 1));
    for (cr, area) in run.routes.iter().zip(areas.iter()) {
        draw_route(area, cr, run).map_err(|e| format!("drawing route '{}': {e}", cr.route.name))?;
    }
    Ok(())
}

/// Result of drawing code; plotters' errors are boxed.
pub(crate) type DrawResult<T> = Result<T, Box<dyn std::error::Error>>;

/// A top view in local metres with equal scales on both axes, fitted around `points`, with
/// its mesh drawn; `frame` completes the axis titles ("east {frame} (m)").
pub(crate) fn map_chart<'a, DB>(
    area: &'a DrawingArea<DB, Shift>,
    points: impl Iterator<Item = [f64; 2]>,
    frame: &str,
) -> DrawResult<LinearChart<'a, DB>>
where
    DB: DrawingBackend,
    DB::ErrorType: 'static,
{
    let (margin, x_lab, y_lab) = (12u32, 45u32, 70u32);
    let (w, h) = area.dim_in_pixel();
    let plot_w = f64::from(w.saturating_sub(2 * margin + y_lab).max(10));
    let plot_h = f64::from(h.saturating_sub(2 * margin + x_lab).max(10));
    let ((x0, x1), (y0, y1)) = equal_ranges(points, plot_w, plot_h);
    let mut chart = ChartBuilder::on(area)
        .margin(margin)
        .x_label_area_size(x_lab)
        .y_label_area_size(y_lab)
        .build_cartesian_2d(x0..x1, y0..y1)?;
    let sep = if frame.is_empty() { "" } else { " " };
    chart
        .configure_mesh()
        .x_desc(format!("east{sep}{frame} (m)"))
        .y_desc(format!("north{sep}{frame} (m)"))
        .label_style(("sans-serif", 16))
        .axis_desc_style(("sans-serif", 17))
        .light_line_style(RGBColor(235, 235, 235))
        .bold_line_style(RGBColor(215, 215, 215))
        .draw()?;
    Ok(chart)
}

/// A chart with linear f64 axes (maps, charts against distance, fit panels).
pub(crate) type LinearChart<'a, DB> = ChartContext<'a, DB, Cartesian2d<RangedCoordf64, RangedCoordf64>>;

/// Builds a [`LinearChart`] over `[0, x_max_m]` x `y_range` with the reports' common style.
pub(crate) fn distance_chart<'a, DB>(
    area: &'a DrawingArea<DB, Shift>,
    x_max_m: f64,
    y_range: std::ops::Range<f64>,
    y_desc: &str,
) -> DrawResult<LinearChart<'a, DB>>
where
    DB: DrawingBackend,
    DB::ErrorType: 'static,
{
    let mut chart = ChartBuilder::on(area)
        .margin(12)
        .x_label_area_size(45)
        .y_label_area_size(80)
        .build_cartesian_2d(0.0..x_max_m, y_range)?;
    chart
        .configure_mesh()
        .x_desc("distance along the route (m)")
        .y_desc(y_desc)
        .label_style(("sans-serif", 16))
        .axis_desc_style(("sans-serif", 17))
        .light_line_style(RGBColor(240, 240, 240))
        .draw()?;
    Ok(chart)
}

/// Draws a chart's series labels in the upper left: the legend box every chart of the
/// reports uses.
pub(crate) fn draw_series_labels<'a, DB, CT>(chart: &mut ChartContext<'a, DB, CT>, font_px: u32) -> DrawResult<()>
where
    DB: DrawingBackend + 'a,
    DB::ErrorType: 'static,
    CT: plotters::coord::CoordTranslate,
{
    chart
        .configure_series_labels()
        .position(SeriesLabelPosition::UpperLeft)
        .label_font(("sans-serif", font_px))
        .background_style(WHITE.mix(0.85))
        .border_style(RGBColor(160, 160, 160))
        .draw()?;
    Ok(())
}

fn draw_route<DB: DrawingBackend>(area: &DrawingArea<DB, Shift>, cr: &CheckedRoute, run: &CheckRun) -> DrawResult<()>
where
    DB::ErrorType: 'static,
{
    let r = &cr.report;
    let profile = if run.demo_profile { "built-in demo profile" } else { run.vehicle_name.as_str() };
    let title =
        format!("route '{}': {}   ({:.0} m, {})", r.route, r.verdict.name().to_uppercase(), r.length_m, profile);
    let body = area.titled(&title, ("sans-serif", 26))?;
    let (w, h) = body.dim_in_pixel();
    let (top, bottom) = body.split_vertically((h as f64 * 0.6) as u32);
    let (map, legend) = top.split_horizontally(w.saturating_sub(LEGEND_WIDTH_PX));
    let polygons = map_polygons(run.terrain_map.as_deref(), cr.route.origin.as_ref());
    draw_top_view(&map, cr, &polygons)?;
    let mut entries = legend_entries(cr);
    entries.extend(map_entries(&polygons));
    draw_legend(&legend, &entries)?;
    let (_, bh) = bottom.dim_in_pixel();
    let (deviation, effort) = bottom.split_vertically(bh / 2);
    draw_deviation(&deviation, cr)?;
    let (thrust, power) = effort.split_horizontally(w / 2);
    draw_effort(&thrust, cr, EffortPanel::Thrust)?;
    draw_effort(&power, cr, EffortPanel::Power)?;
    Ok(())
}

/// Axis ranges with equal metres per pixel on both axes, padded by 6 %; non-finite points are
/// ignored.
pub(crate) fn equal_ranges(points: impl Iterator<Item = [f64; 2]>, w_px: f64, h_px: f64) -> ((f64, f64), (f64, f64)) {
    let (mut x0, mut x1, mut y0, mut y1) = (f64::INFINITY, f64::NEG_INFINITY, f64::INFINITY, f64::NEG_INFINITY);
    for [x, y] in points.filter(|p| p[0].is_finite() && p[1].is_finite()) {
        x0 = x0.min(x);
        x1 = x1.max(x);
        y0 = y0.min(y);
        y1 = y1.max(y);
    }
    if !x0.is_finite() {
        return ((-1.0, 1.0), (-1.0, 1.0));
    }
    let (cx, cy) = (0.5 * (x0 + x1), 0.5 * (y0 + y1));
    let m_per_px = ((x1 - x0).max(1.0) / w_px).max((y1 - y0).max(1.0) / h_px) * 1.06;
    let (hw, hh) = (0.5 * m_per_px * w_px, 0.5 * m_per_px * h_px);
    ((cx - hw, cx + hw), (cy - hh, cy + hh))
}

fn draw_top_view<DB: DrawingBackend>(
    area: &DrawingArea<DB, Shift>,
    cr: &CheckedRoute,
    polygons: &[crate::site::terrain_map::MapPolygon],
) -> DrawResult<()>
where
    DB::ErrorType: 'static,
{
    let plan_pts = cr.drive.plan.points().iter().copied();
    let trace_pts = cr.trace.steps.iter().map(|s| [s.pose.x_m, s.pose.y_m]);
    let frame = if cr.route.origin.is_some() { "of the route start" } else { "in the map frame" };
    let mut chart = map_chart(area, plan_pts.chain(trace_pts), frame)?;
    draw_terrain_map(&mut chart, polygons)?;
    draw_plan_legs(&mut chart, cr)?;
    let pred = cr.trace.steps.iter().map(|s| (s.pose.x_m, s.pose.y_m));
    chart.draw_series(LineSeries::new(pred, BLACK.stroke_width(2)))?;
    draw_markers(&mut chart, cr)?;
    Ok(())
}

type TopChart<'a, DB> =
    ChartContext<'a, DB, Cartesian2d<plotters::coord::types::RangedCoordf64, plotters::coord::types::RangedCoordf64>>;

fn leg_points(cr: &CheckedRoute, leg: usize, step_m: f64) -> Vec<(f64, f64)> {
    let (a, b) = cr.drive.plan.leg_bounds_m(leg);
    let n = (((b - a) / step_m).ceil() as usize).clamp(1, 20_000);
    (0..=n)
        .map(|k| {
            let p = cr.drive.plan.point_at(a + (b - a) * k as f64 / n as f64);
            (p[0], p[1])
        })
        .collect()
}

fn draw_plan_legs<DB: DrawingBackend>(chart: &mut TopChart<'_, DB>, cr: &CheckedRoute) -> DrawResult<()>
where
    DB::ErrorType: 'static,
{
    let step_m = (cr.drive.plan.length_m() / 4000.0).max(0.05);
    for leg in &cr.report.legs {
        let pts = leg_points(cr, leg.index - 1, step_m);
        let halo = match leg.verdict {
            Verdict::Fail => Some(FAIL_RED),
            Verdict::Caution => Some(CAUTION_AMBER),
            Verdict::Pass => None,
        };
        if let Some(c) = halo {
            chart.draw_series(LineSeries::new(pts.clone(), c.mix(0.45).stroke_width(16)))?;
        }
    }
    for leg in &cr.report.legs {
        let pts = leg_points(cr, leg.index - 1, step_m);
        chart.draw_series(LineSeries::new(pts, terrain_color(&leg.terrain).stroke_width(7)))?;
    }
    Ok(())
}

fn draw_markers<DB: DrawingBackend>(chart: &mut TopChart<'_, DB>, cr: &CheckedRoute) -> DrawResult<()>
where
    DB::ErrorType: 'static,
{
    let plan = &cr.drive.plan;
    let start = plan.point_at(0.0);
    let end = plan.point_at(plan.length_m());
    chart.draw_series(std::iter::once(Circle::new((start[0], start[1]), 7, RGBColor(0, 140, 0).filled())))?;
    chart.draw_series(std::iter::once(
        EmptyElement::at((end[0], end[1])) + Rectangle::new([(-6, -6), (6, 6)], BLACK.filled()),
    ))?;
    // Labels alternate above and below their marker, so two legs failing at one shared corner
    // stay readable.
    for (k, leg) in cr.report.legs.iter().filter(|l| l.verdict != Verdict::Pass).enumerate() {
        let color = if leg.verdict == Verdict::Fail { FAIL_RED } else { CAUTION_AMBER };
        let p = plan.point_at(leg.tightest_turn_at_m);
        let label = format!("leg {} {}", leg.index, leg.verdict.name().to_uppercase());
        chart.draw_series(std::iter::once(
            EmptyElement::at((p[0], p[1])) + Cross::new((0, 0), 9, color.stroke_width(4)),
        ))?;
        chart.draw_series(std::iter::once(Text::new(
            label,
            (p[0], p[1]),
            ("sans-serif", 18).into_font().color(&color).pos(plotters::style::text_anchor::Pos::new(
                plotters::style::text_anchor::HPos::Left,
                if k % 2 == 0 {
                    plotters::style::text_anchor::VPos::Bottom
                } else {
                    plotters::style::text_anchor::VPos::Top
                },
            )),
        )))?;
    }
    Ok(())
}

/// A legend line: what its glyph looks like and its text.
pub(crate) enum Glyph {
    Line(RGBColor, u32),
    /// A filled square (a shaded map area).
    Fill(RGBColor),
    Halo(RGBColor),
    Cross(RGBColor),
    Dot(RGBColor),
    Square,
    Triangle(RGBColor),
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

fn legend_entries(cr: &CheckedRoute) -> Vec<(Glyph, String)> {
    let mut entries = terrain_entries(cr.report.legs.iter().map(|l| l.terrain.as_str()));
    entries.push((Glyph::Line(BLACK, 2), "predicted path".to_string()));
    entries.push((Glyph::Dot(RGBColor(0, 140, 0)), "start".to_string()));
    entries.push((Glyph::Square, "end".to_string()));
    let worst = cr.report.legs.iter().map(|l| l.verdict).max().unwrap_or(Verdict::Pass);
    if worst >= Verdict::Caution {
        entries.push((Glyph::Halo(CAUTION_AMBER), "leg with a caution".to_string()));
        entries.push((Glyph::Halo(FAIL_RED), "failing leg".to_string()));
        entries.push((Glyph::Cross(FAIL_RED), "tightest turn of the leg".to_string()));
    }
    entries
}

/// Draws a legend column: a glyph and a line of text per entry.
pub(crate) fn draw_legend<DB: DrawingBackend>(
    area: &DrawingArea<DB, Shift>,
    entries: &[(Glyph, String)],
) -> DrawResult<()>
where
    DB::ErrorType: 'static,
{
    let (x0, mut y) = (16i32, 24i32);
    let font = ("sans-serif", 17).into_font();
    area.draw(&Text::new("legend", (x0, y - 8), ("sans-serif", 18).into_font()))?;
    y += 22;
    for (glyph, text) in entries {
        let seg = vec![(x0, y), (x0 + 34, y)];
        match glyph {
            Glyph::Line(c, w) => area.draw(&PathElement::new(seg, c.stroke_width(*w)))?,
            Glyph::Halo(c) => area.draw(&PathElement::new(seg, c.mix(0.45).stroke_width(14)))?,
            Glyph::Cross(c) => area.draw(&Cross::new((x0 + 17, y), 8, c.stroke_width(4)))?,
            Glyph::Dot(c) => area.draw(&Circle::new((x0 + 17, y), 7, c.filled()))?,
            Glyph::Square => area.draw(&Rectangle::new([(x0 + 11, y - 6), (x0 + 23, y + 6)], BLACK.filled()))?,
            Glyph::Fill(c) => area.draw(&Rectangle::new([(x0 + 3, y - 9), (x0 + 31, y + 9)], c.filled()))?,
            Glyph::Triangle(c) => {
                area.draw(&(EmptyElement::at((x0 + 17, y)) + TriangleMarker::new((0, 0), 9, c.filled())))?
            }
        }
        area.draw(&Text::new(text.as_str(), (x0 + 46, y - 9), font.clone()))?;
        y += 30;
    }
    Ok(())
}

#[derive(Clone, Copy, PartialEq)]
enum EffortPanel {
    Thrust,
    Power,
}

/// Outer-track thrust (with each leg's limit: traction or rating) or drawn power (with the
/// rating) against distance along the route.
fn draw_effort<DB: DrawingBackend>(
    area: &DrawingArea<DB, Shift>,
    cr: &CheckedRoute,
    panel: EffortPanel,
) -> DrawResult<()>
where
    DB::ErrorType: 'static,
{
    let total_m = cr.drive.plan.length_m().max(1.0);
    let veh = &cr.drive.vehicle;
    let value = |s: &crate::rollout::Step| match panel {
        EffortPanel::Thrust => s.effort.outer_thrust_n,
        EffortPanel::Power => s.effort.drawn_power_w,
    };
    let limits: Vec<(f64, f64, f64)> = cr
        .report
        .legs
        .iter()
        .map(|l| {
            let (a, b) = cr.drive.plan.leg_bounds_m(l.index - 1);
            let lim = match panel {
                EffortPanel::Thrust => crate::effort::side_thrust_limit_n(veh, &cr.drive.legs[l.index - 1].ground),
                EffortPanel::Power => veh.max_power_w,
            };
            (a, b, lim)
        })
        .collect();
    let peak = cr.trace.steps.iter().map(value).fold(0.0, f64::max);
    let low = cr.trace.steps.iter().map(value).fold(0.0, f64::min);
    let lim_max = limits.iter().map(|l| l.2).fold(0.0, f64::max);
    let y_max = (peak.max(lim_max) * 1.12).max(1.0);
    let y_min = (low * 1.12).min(0.0);
    let (y_desc, line_label, limit_label) = match panel {
        EffortPanel::Thrust => ("outer-track thrust (N)", "outer-track thrust", "limit: traction or rating"),
        EffortPanel::Power => ("drawn power (W)", "drawn power", "power rating"),
    };
    let mut chart = distance_chart(area, total_m, y_min..y_max, y_desc)?;
    let limit_pts = limits.iter().flat_map(|&(a, b, lim)| [(a, lim), (b, lim)]);
    chart
        .draw_series(DashedLineSeries::new(limit_pts, 10, 6, FAIL_RED.stroke_width(2)))?
        .label(limit_label)
        .legend(|(x, y)| PathElement::new(vec![(x, y), (x + 24, y)], FAIL_RED.stroke_width(2)));
    let pts = cr.trace.steps.iter().map(|s| (s.progress_m, value(s)));
    chart
        .draw_series(LineSeries::new(pts, RGBColor(30, 60, 160).stroke_width(2)))?
        .label(line_label)
        .legend(|(x, y)| PathElement::new(vec![(x, y), (x + 24, y)], RGBColor(30, 60, 160).stroke_width(2)));
    draw_series_labels(&mut chart, 15)?;
    Ok(())
}

fn draw_deviation<DB: DrawingBackend>(area: &DrawingArea<DB, Shift>, cr: &CheckedRoute) -> DrawResult<()>
where
    DB::ErrorType: 'static,
{
    let total_m = cr.drive.plan.length_m().max(1.0);
    let corridor = corridor_line(cr);
    let max_corr = corridor.iter().map(|p| p.1).fold(0.0, f64::max);
    let y_max = (cr.report.max_deviation_m.max(max_corr) * 1.15).max(0.1);
    let mut chart = distance_chart(area, total_m, 0.0..y_max, "deviation (m)")?;
    for leg in &cr.report.legs {
        let (a, b) = cr.drive.plan.leg_bounds_m(leg.index - 1);
        chart.draw_series(std::iter::once(PathElement::new(
            vec![(a, 0.0), (a, y_max)],
            RGBColor(190, 190, 190).stroke_width(1),
        )))?;
        let color = terrain_color(&leg.terrain);
        chart.draw_series(std::iter::once(Rectangle::new([(a, 0.0), (b, y_max * 0.03)], color.filled())))?;
    }
    chart
        .draw_series(DashedLineSeries::new(corridor, 10, 6, FAIL_RED.stroke_width(2)))?
        .label("corridor")
        .legend(|(x, y)| PathElement::new(vec![(x, y), (x + 24, y)], FAIL_RED.stroke_width(2)));
    let dev = cr.trace.steps.iter().map(|s| (s.progress_m, s.deviation_m));
    chart
        .draw_series(LineSeries::new(dev, BLACK.stroke_width(2)))?
        .label("predicted deviation")
        .legend(|(x, y)| PathElement::new(vec![(x, y), (x + 24, y)], BLACK.stroke_width(2)));
    draw_series_labels(&mut chart, 16)?;
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

/// The plot of a run as an SVG document string, for embedding (the HTML report).
pub fn plot_svg_string(run: &CheckRun) -> Result<String, String> {
    svg_string(&CheckFigure(run))
}

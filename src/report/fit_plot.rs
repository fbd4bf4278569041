//! The fit figure (SVG or PNG by extension), one row of panels per terrain:
//! 1. commanded against measured yaw change per metre driven over each window (1/m), the median
//!    and quartile band in bins of the commanded value, with the ideal 1:1 line: where the band
//!    bends away from a straight line, turning stops being linear in the command;
//! 2. the end points of validation windows in the start pose's frame, measured and as predicted
//!    by the chosen model, joined by a line;
//! 3. with `--sweep`, validation error against evaluation horizon, one line per training horizon.
//!
//! Text uses the bundled DejaVu font (see [`super::figure::register_fonts`]).

use std::path::Path;

use plotters::coord::Shift;
use plotters::prelude::*;

use super::axis::{chart, equal_chart, LinearChart, Span, SMALL};
use super::figure::{DrawResult, Figure};
use super::legend::{draw_legend_box, Glyph};
use super::palette::{route_color, terrain_color, INK};
use super::text::{ellipsized, font, titled, wrapped};
use super::ReportError;
use crate::fit::stats::Spread;
use crate::fit::validate::WindowError;
use crate::fit::{plotted_end_points, FitRun, TerrainFit, TerrainOutcome, TurnPoint};

const PANEL_W_PX: u32 = 620;
const ROW_H_PX: u32 = 520;
/// Bins of commanded curvature in the first panel.
const BINS: usize = 16;
/// Fewest windows for a bin's quartiles to be drawn.
const MIN_PER_BIN: usize = 5;

/// Writes the fit figure; the format follows the extension (`.svg` or `.png`).
pub fn write_fit_plot(run: &FitRun, path: &Path) -> Result<(), ReportError> {
    let columns: u32 = if run.terrains.iter().any(|t| t.sweep.is_some()) { 3 } else { 2 };
    super::figure::write_figure(&FitFigure { run, columns }, path)
}

/// The fit figure: a row of panels per terrain.
struct FitFigure<'a> {
    run: &'a FitRun,
    columns: u32,
}

impl Figure for FitFigure<'_> {
    fn size_px(&self) -> (u32, u32) {
        (PANEL_W_PX * self.columns, ROW_H_PX * self.run.terrains.len().max(1) as u32)
    }
    fn draw<DB: DrawingBackend>(&self, root: &DrawingArea<DB, Shift>) -> DrawResult<()>
    where
        DB::ErrorType: 'static,
    {
        draw(root, self.run, self.columns)
    }
}

fn draw<DB: DrawingBackend>(root: &DrawingArea<DB, Shift>, run: &FitRun, columns: u32) -> DrawResult<()>
where
    DB::ErrorType: 'static,
{
    root.fill(&WHITE)?;
    let rows = root.split_evenly((run.terrains.len().max(1), 1));
    for (t, row) in run.terrains.iter().zip(rows.iter()) {
        let panels = row.split_evenly((1, columns as usize));
        draw_turning(&panels[0], t)?;
        match &t.outcome {
            TerrainOutcome::Fitted { .. } => draw_end_points(&panels[1], t)?,
            TerrainOutcome::Failed { reason } => {
                let (w, _) = panels[1].dim_in_pixel();
                let text = ellipsized(&format!("{}: not fitted", t.terrain), &font(20), w.saturating_sub(40));
                panels[1].draw(&Text::new(text, (20, 40), font(20).color(&INK)))?;
                for (k, line) in wrapped(reason, &font(14), w.saturating_sub(40), 4).into_iter().enumerate() {
                    panels[1].draw(&Text::new(line, (20, 70 + 20 * k as i32), font(14).color(&INK)))?;
                }
            }
        }
        if columns == 3 {
            draw_sweep(&panels[2], t)?;
        }
    }
    Ok(())
}

/// (lo, hi) of the 2nd and 98th percentiles, padded; a unit range when empty.
fn robust_range(values: impl Iterator<Item = f64>) -> (f64, f64) {
    let mut v: Vec<f64> = values.filter(|x| x.is_finite()).collect();
    v.sort_by(f64::total_cmp);
    let q = |p| crate::fit::stats::quantile_sorted(&v, p);
    match (q(0.02), q(0.98)) {
        (Some(lo), Some(hi)) if hi > lo => {
            let pad = 0.08 * (hi - lo);
            (lo - pad, hi + pad)
        }
        (Some(x), _) => (x - 1.0, x + 1.0),
        _ => (-1.0, 1.0),
    }
}

/// Median and quartiles of the measured value in bins of the commanded value.
fn binned(points: &[TurnPoint], lo: f64, hi: f64) -> Vec<(f64, Spread)> {
    let width = (hi - lo) / BINS as f64;
    (0..BINS)
        .filter_map(|b| {
            let (a, z) = (lo + b as f64 * width, lo + (b + 1) as f64 * width);
            let inside: Vec<f64> = points
                .iter()
                .filter(|p| p.commanded_per_m >= a && p.commanded_per_m < z)
                .map(|p| p.measured_per_m)
                .collect();
            if inside.len() < MIN_PER_BIN {
                return None;
            }
            Spread::of(inside).map(|s| (0.5 * (a + z), s))
        })
        .collect()
}

fn draw_turning<DB: DrawingBackend>(area: &DrawingArea<DB, Shift>, t: &TerrainFit) -> DrawResult<()>
where
    DB::ErrorType: 'static,
{
    let (x0, x1) = robust_range(t.turn_points.iter().map(|p| p.commanded_per_m));
    let (y0, y1) = robust_range(t.turn_points.iter().map(|p| p.measured_per_m));
    let caption = format!("{}: yaw change per metre driven", t.terrain);
    let axes = ("commanded (ideal drive), rad/m", "measured, rad/m");
    let body = captioned(area, &caption)?;
    let mut chart = panel_chart(&body, x0..x1, y0..y1, axes)?;
    let color = terrain_color(&t.terrain);
    let step = t.turn_points.len().div_ceil(1500).max(1);
    let shown: Vec<(f64, f64)> = t
        .turn_points
        .iter()
        .step_by(step)
        .map(|p| (p.commanded_per_m, p.measured_per_m))
        .filter(|&(x, y)| x >= x0 && x <= x1 && y >= y0 && y <= y1)
        .collect();
    chart.draw_series(shown.iter().map(|&p| Circle::new(p, 1, color.mix(0.25).filled())))?;
    let bins = binned(&t.turn_points, x0, x1);
    let mut entries = Vec::new();
    let dark = super::palette::route_color(0);
    if !bins.is_empty() {
        let mut band: Vec<(f64, f64)> = bins.iter().map(|(x, s)| (*x, s.q75)).collect();
        band.extend(bins.iter().rev().map(|(x, s)| (*x, s.q25)));
        chart.draw_series(std::iter::once(Polygon::new(band, color.mix(0.45).filled())))?;
        chart.draw_series(LineSeries::new(bins.iter().map(|(x, s)| (*x, s.median)), dark.stroke_width(2)))?;
        entries.push((Glyph::Fill(super::palette::tint(color, 0.4)), "quartile band".to_string()));
        entries.push((Glyph::Line(dark, 2), "median".to_string()));
    }
    let (a, b) = (x0.max(y0), x1.min(y1));
    let ideal = [(a, a), (b, b)];
    if b > a {
        chart.draw_series(DashedLineSeries::new(ideal, 8, 5, INK.stroke_width(1)))?;
        entries.push((Glyph::Dashed(INK, 1), "ideal drive (1:1)".to_string()));
    }
    draw_legend_box(&chart, &entries, &[&shown], 13)?;
    Ok(())
}

/// A linear panel of the fit figure on `body` (the area below its caption, see [`captioned`]):
/// axes and mesh in the figure's style.
fn panel_chart<'a, DB>(
    body: &'a DrawingArea<DB, Shift>,
    x: std::ops::Range<f64>,
    y: std::ops::Range<f64>,
    axes: (&str, &str),
) -> DrawResult<LinearChart<'a, DB>>
where
    DB: DrawingBackend,
    DB::ErrorType: 'static,
{
    chart(body, Span::Linear(x.start, x.end), Span::Linear(y.start, y.end), axes, SMALL)
}

/// Draws a panel's caption and returns the area below it.
fn captioned<DB>(area: &DrawingArea<DB, Shift>, caption: &str) -> DrawResult<DrawingArea<DB, Shift>>
where
    DB: DrawingBackend,
    DB::ErrorType: 'static,
{
    titled(area, caption, 17)
}

fn draw_end_points<DB: DrawingBackend>(area: &DrawingArea<DB, Shift>, t: &TerrainFit) -> DrawResult<()>
where
    DB::ErrorType: 'static,
{
    let Some(chosen) = t.chosen() else { return Ok(()) };
    let ends: Vec<&WindowError> = plotted_end_points(&chosen.errors).collect();
    let caption = format!("{}: validation window ends, {} ({} windows)", t.terrain, chosen.family, ends.len());
    end_points_panel(area, &caption, &ends, "predicted end")
}

/// Measured against model-predicted window ends in each window's start frame (forward, left),
/// joined by a line, equal scales: the panel `fit` and `replay` share.
pub(crate) fn end_points_panel<DB: DrawingBackend>(
    area: &DrawingArea<DB, Shift>,
    caption: &str,
    ends: &[&WindowError],
    predicted_label: &str,
) -> DrawResult<()>
where
    DB::ErrorType: 'static,
{
    let xs = ends.iter().flat_map(|e| [e.measured[0], e.predicted[0]]);
    let ys = ends.iter().flat_map(|e| [e.measured[1], e.predicted[1]]);
    let (x0, x1) = robust_range(xs.chain(std::iter::once(0.0)));
    let (y0, y1) = robust_range(ys.chain(std::iter::once(0.0)));
    let axes = ("forward from the window start, m", "left, m");
    let body = captioned(area, caption)?;
    let fit =
        |w: f64, h: f64| super::axis::equal_about([0.5 * (x0 + x1), 0.5 * (y0 + y1)], [x1 - x0, y1 - y0], w, h, 1.0);
    let mut chart = equal_chart(&body, fit, axes, SMALL)?;
    let win = {
        let (xr, yr) = (chart.x_range(), chart.y_range());
        move |p: [f64; 3]| xr.contains(&p[0]) && yr.contains(&p[1])
    };
    let shown: Vec<&&WindowError> = ends.iter().filter(|e| win(e.measured) && win(e.predicted)).collect();
    chart.draw_series(shown.iter().map(|e| {
        PathElement::new(
            vec![(e.measured[0], e.measured[1]), (e.predicted[0], e.predicted[1])],
            RGBColor(170, 170, 170),
        )
    }))?;
    let (measured, predicted) = (route_color(1), route_color(4));
    chart.draw_series(shown.iter().map(|e| Circle::new((e.measured[0], e.measured[1]), 3, measured.filled())))?;
    chart.draw_series(
        shown.iter().map(|e| Cross::new((e.predicted[0], e.predicted[1]), 3, predicted.stroke_width(2))),
    )?;
    let data: Vec<(f64, f64)> =
        shown.iter().flat_map(|e| [(e.measured[0], e.measured[1]), (e.predicted[0], e.predicted[1])]).collect();
    let entries = [
        (Glyph::Mark(super::legend::Shape::Dot, measured), "measured end".to_string()),
        (Glyph::Mark(super::legend::Shape::Cross, predicted), predicted_label.to_string()),
    ];
    draw_legend_box(&chart, &entries, &[&data], 13)?;
    Ok(())
}

fn draw_sweep<DB: DrawingBackend>(area: &DrawingArea<DB, Shift>, t: &TerrainFit) -> DrawResult<()>
where
    DB::ErrorType: 'static,
{
    let Some(sw) = &t.sweep else {
        area.draw(&Text::new(format!("{}: no sweep", t.terrain), (20, 40), font(18).color(&INK)))?;
        return Ok(());
    };
    let h_lo = sw.horizons_s.first().copied().unwrap_or(1.0);
    let h_hi = sw.horizons_s.last().copied().unwrap_or(1.0).max(h_lo * 1.01);
    let e_max = sw.error_rel.iter().flatten().flatten().fold(0.0f64, |a, b| a.max(*b)) * 100.0 * 1.15;
    let body = captioned(area, &format!("{}: horizon sweep, {}", t.terrain, sw.family))?;
    let x = Span::Log(h_lo * 0.8, h_hi * 1.25, sw.horizons_s.clone());
    let axes = ("evaluated at horizon, s", "median translation error, %");
    let mut chart = chart(&body, x, Span::Linear(0.0, e_max.max(1.0)), axes, SMALL)?;
    let mut entries = Vec::new();
    let mut data = Vec::new();
    for (i, (h, row)) in sw.horizons_s.iter().zip(&sw.error_rel).enumerate() {
        let color = route_color(i);
        let pts: Vec<(f64, f64)> =
            sw.horizons_s.iter().zip(row).filter_map(|(he, e)| e.map(|e| (*he, 100.0 * e))).collect();
        chart.draw_series(pts.iter().map(|p| Circle::new(*p, 3, color.filled())))?;
        chart.draw_series(LineSeries::new(pts.iter().copied(), color.stroke_width(2)))?;
        entries.push((
            Glyph::Line(color, 2),
            format!("trained at {} s", super::axis::tick_label(*h, 3).trim_end_matches('0').trim_end_matches('.')),
        ));
        data.extend(pts);
    }
    draw_legend_box(&chart, &entries, &[&data], 13)?;
    Ok(())
}

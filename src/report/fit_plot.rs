//! The fit figure (SVG or PNG by extension), one row of panels per terrain:
//! 1. commanded against measured yaw change per metre driven over each window (1/m), the median
//!    and quartile band in bins of the commanded value, with the ideal 1:1 line: where the band
//!    bends away from a straight line, turning stops being linear in the command;
//! 2. the end points of validation windows in the start pose's frame, measured and as predicted
//!    by the chosen model, joined by a line;
//! 3. with `--sweep`, validation error against evaluation horizon, one line per training horizon.
//!
//! Text uses the bundled DejaVu font (see [`super::plot::register_fonts`]).

use std::path::Path;

use plotters::coord::Shift;
use plotters::prelude::*;

use super::plot::terrain_color;
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

use super::plot::DrawResult;

/// Writes the fit figure; the format follows the extension (`.svg` or `.png`).
pub fn write_fit_plot(run: &FitRun, path: &Path) -> Result<(), ReportError> {
    let columns: u32 = if run.terrains.iter().any(|t| t.sweep.is_some()) { 3 } else { 2 };
    super::plot::write_figure(&FitFigure { run, columns }, path)
}

/// The fit figure: a row of panels per terrain.
struct FitFigure<'a> {
    run: &'a FitRun,
    columns: u32,
}

impl super::plot::Figure for FitFigure<'_> {
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
                let text = format!("{}: not fitted", t.terrain);
                panels[1].draw(&Text::new(text, (20, 40), ("sans-serif", 20)))?;
                let short: String = reason.chars().take(70).collect();
                panels[1].draw(&Text::new(short, (20, 70), ("sans-serif", 14)))?;
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
    let mut chart = panel_chart(area, &caption, x0..x1, y0..y1, axes)?;
    let color = terrain_color(&t.terrain);
    let step = t.turn_points.len().div_ceil(1500).max(1);
    chart.draw_series(
        t.turn_points
            .iter()
            .step_by(step)
            .filter(|p| {
                p.commanded_per_m >= x0 && p.commanded_per_m <= x1 && p.measured_per_m >= y0 && p.measured_per_m <= y1
            })
            .map(|p| Circle::new((p.commanded_per_m, p.measured_per_m), 1, color.mix(0.25).filled())),
    )?;
    let bins = binned(&t.turn_points, x0, x1);
    if !bins.is_empty() {
        let mut band: Vec<(f64, f64)> = bins.iter().map(|(x, s)| (*x, s.q75)).collect();
        band.extend(bins.iter().rev().map(|(x, s)| (*x, s.q25)));
        chart
            .draw_series(std::iter::once(Polygon::new(band, color.mix(0.35).filled())))?
            .label("quartile band")
            .legend(move |(x, y)| Rectangle::new([(x, y - 5), (x + 20, y + 5)], color.mix(0.35).filled()));
        chart
            .draw_series(LineSeries::new(bins.iter().map(|(x, s)| (*x, s.median)), color.stroke_width(3)))?
            .label("median")
            .legend(move |(x, y)| PathElement::new(vec![(x, y), (x + 20, y)], color.stroke_width(3)));
    }
    let (a, b) = (x0.max(y0), x1.min(y1));
    if b > a {
        chart
            .draw_series(DashedLineSeries::new(vec![(a, a), (b, b)], 8, 5, BLACK.stroke_width(1)))?
            .label("ideal drive (1:1)")
            .legend(|(x, y)| PathElement::new(vec![(x, y), (x + 20, y)], BLACK.stroke_width(1)));
    }
    super::plot::draw_series_labels(&mut chart, 13)?;
    Ok(())
}

/// A linear panel of the fit figure: caption, axes and mesh in the figure's style.
fn panel_chart<'a, DB>(
    area: &'a DrawingArea<DB, Shift>,
    caption: &str,
    x: std::ops::Range<f64>,
    y: std::ops::Range<f64>,
    (x_desc, y_desc): (&str, &str),
) -> DrawResult<super::plot::LinearChart<'a, DB>>
where
    DB: DrawingBackend,
    DB::ErrorType: 'static,
{
    let mut chart = ChartBuilder::on(area)
        .caption(caption, ("sans-serif", 18))
        .margin(10)
        .x_label_area_size(40)
        .y_label_area_size(60)
        .build_cartesian_2d(x, y)?;
    chart
        .configure_mesh()
        .x_desc(x_desc)
        .y_desc(y_desc)
        .label_style(("sans-serif", 13))
        .axis_desc_style(("sans-serif", 14))
        .light_line_style(RGBColor(238, 238, 238))
        .draw()?;
    Ok(chart)
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
    // Equal metres per pixel on both axes.
    let (w, h) = area.dim_in_pixel();
    let (pw, ph) = (f64::from(w.saturating_sub(90).max(10)), f64::from(h.saturating_sub(80).max(10)));
    let m_per_px = ((x1 - x0) / pw).max((y1 - y0) / ph);
    let (cx, cy) = (0.5 * (x0 + x1), 0.5 * (y0 + y1));
    let (hx, hy) = (0.5 * m_per_px * pw, 0.5 * m_per_px * ph);
    let axes = ("forward from the window start, m", "left, m");
    let mut chart = panel_chart(area, caption, (cx - hx)..(cx + hx), (cy - hy)..(cy + hy), axes)?;
    chart.draw_series(ends.iter().map(|e| {
        PathElement::new(
            vec![(e.measured[0], e.measured[1]), (e.predicted[0], e.predicted[1])],
            RGBColor(170, 170, 170),
        )
    }))?;
    let measured = RGBColor(30, 90, 200);
    let predicted = RGBColor(230, 110, 20);
    chart
        .draw_series(ends.iter().map(|e| Circle::new((e.measured[0], e.measured[1]), 3, measured.filled())))?
        .label("measured end")
        .legend(move |(x, y)| Circle::new((x + 10, y), 4, measured.filled()));
    chart
        .draw_series(ends.iter().map(|e| Cross::new((e.predicted[0], e.predicted[1]), 3, predicted.stroke_width(2))))?
        .label(predicted_label.to_string())
        .legend(move |(x, y)| Cross::new((x + 10, y), 4, predicted.stroke_width(2)));
    super::plot::draw_series_labels(&mut chart, 13)?;
    Ok(())
}

const SWEEP_COLORS: [RGBColor; 6] = [
    RGBColor(30, 90, 200),
    RGBColor(230, 110, 20),
    RGBColor(40, 160, 60),
    RGBColor(200, 40, 40),
    RGBColor(130, 60, 180),
    RGBColor(120, 90, 60),
];

fn draw_sweep<DB: DrawingBackend>(area: &DrawingArea<DB, Shift>, t: &TerrainFit) -> DrawResult<()>
where
    DB::ErrorType: 'static,
{
    let Some(sw) = &t.sweep else {
        area.draw(&Text::new(format!("{}: no sweep", t.terrain), (20, 40), ("sans-serif", 18)))?;
        return Ok(());
    };
    let h_lo = sw.horizons_s.first().copied().unwrap_or(1.0);
    let h_hi = sw.horizons_s.last().copied().unwrap_or(1.0).max(h_lo * 1.01);
    let e_max = sw.error_rel.iter().flatten().flatten().fold(0.0f64, |a, b| a.max(*b)) * 100.0 * 1.1;
    let mut chart = ChartBuilder::on(area)
        .caption(format!("{}: horizon sweep, {}", t.terrain, sw.family), ("sans-serif", 18))
        .margin(10)
        .x_label_area_size(40)
        .y_label_area_size(60)
        .build_cartesian_2d((h_lo * 0.8..h_hi * 1.25).log_scale(), 0.0..e_max.max(1.0))?;
    chart
        .configure_mesh()
        .x_desc("evaluated at horizon, s")
        .y_desc("median translation error, %")
        .label_style(("sans-serif", 13))
        .axis_desc_style(("sans-serif", 14))
        .light_line_style(RGBColor(238, 238, 238))
        .draw()?;
    for (i, (h, row)) in sw.horizons_s.iter().zip(&sw.error_rel).enumerate() {
        let color = SWEEP_COLORS[i % SWEEP_COLORS.len()];
        let pts: Vec<(f64, f64)> =
            sw.horizons_s.iter().zip(row).filter_map(|(he, e)| e.map(|e| (*he, 100.0 * e))).collect();
        chart.draw_series(pts.iter().map(|p| Circle::new(*p, 3, color.filled())))?;
        chart
            .draw_series(LineSeries::new(pts, color.stroke_width(2)))?
            .label(format!("trained at {h} s"))
            .legend(move |(x, y)| PathElement::new(vec![(x, y), (x + 20, y)], color.stroke_width(2)));
    }
    super::plot::draw_series_labels(&mut chart, 13)?;
    Ok(())
}

//! The replay figure (SVG or PNG by extension), one row per terrain: a top view with the logged
//! path and, from the logged start pose of every other window (those do not overlap), the path
//! the terrain's model predicts from the logged side speeds; beside it the window ends in each
//! window's start frame, logged against replayed, where an error of a few per cent is visible.
//! Equal scales in metres, local frame of the logs.
//! Text uses the bundled DejaVu font (see [`super::figure::register_fonts`]).

use std::path::Path;

use plotters::coord::Shift;
use plotters::prelude::*;

use super::axis::{map_chart, SMALL};
use super::decimate::simplify_path;
use super::figure::{DrawResult, Figure};
use super::legend::{draw_legend_box, Glyph, Shape};
use super::palette::{route_color, tint};
use super::plot::{chart_placer, draw_polyline, metres_per_px};
use super::text::titled;
use super::ReportError;
use crate::fit::replay::{ReplayRun, TerrainReplay};

const PANEL_W_PX: u32 = 820;
const PANEL_H_PX: u32 = 760;

/// Writes the replay figure; the format follows the extension (`.svg` or `.png`).
pub fn write_replay_plot(run: &ReplayRun, path: &Path) -> Result<(), ReportError> {
    super::figure::write_figure(&ReplayFigure(run), path)
}

struct ReplayFigure<'a>(&'a ReplayRun);

impl Figure for ReplayFigure<'_> {
    fn size_px(&self) -> (u32, u32) {
        (2 * PANEL_W_PX, PANEL_H_PX * self.0.terrains.len().max(1) as u32)
    }
    fn draw<DB: DrawingBackend>(&self, root: &DrawingArea<DB, Shift>) -> DrawResult<()>
    where
        DB::ErrorType: 'static,
    {
        root.fill(&WHITE)?;
        let rows = root.split_evenly((self.0.terrains.len().max(1), 1));
        for (t, area) in self.0.terrains.iter().zip(rows.iter()) {
            draw_terrain(area, t)?;
        }
        Ok(())
    }
}

fn draw_terrain<DB: DrawingBackend>(area: &DrawingArea<DB, Shift>, t: &TerrainReplay) -> DrawResult<()>
where
    DB::ErrorType: 'static,
{
    let verdict = match t.changed {
        Some(true) => "CHANGED",
        Some(false) => "holds",
        None => "unknown",
    };
    let median = t.validation.translation_rel.map_or("n/a".to_string(), |s| format!("{:.1} %", 100.0 * s.median));
    let title = format!("{}: {} replayed, median translation error {median}, {verdict}", t.terrain, t.model);
    let body = titled(area, &title, 20)?;
    let panels = body.split_evenly((1, 2));
    let ends: Vec<_> = crate::fit::plotted_end_points(&t.end_points).collect();
    let caption = format!("window ends in the start frame ({} windows)", ends.len());
    super::fit_plot::end_points_panel(&panels[1], &caption, &ends, "replayed end")?;
    let body = &panels[0];
    let points = t.logged_paths.iter().chain(&t.replayed_paths).flatten().copied();
    let mut chart = map_chart(body, points, "", SMALL)?;
    let mut placer = chart_placer(&chart);
    let tol = 0.5 * metres_per_px(&chart);
    // The logged path wide and pale underneath, so a replayed path that leaves it shows.
    let logged = tint(route_color(0), 0.65);
    let replayed = route_color(4);
    for p in &t.logged_paths {
        draw_polyline(&mut chart, &mut placer, &simplify_path(p, tol, &[]), logged.stroke_width(5))?;
    }
    for p in &t.replayed_paths {
        draw_polyline(&mut chart, &mut placer, &simplify_path(p, tol, &[]), replayed.stroke_width(1))?;
    }
    let ends: Vec<(f64, f64)> = t.replayed_paths.iter().filter_map(|p| p.last()).map(|q| (q[0], q[1])).collect();
    chart.draw_series(ends.iter().map(|&q| Cross::new(q, 3, replayed)))?;
    let entries = [
        (Glyph::Line(logged, 5), "logged path".to_string()),
        (Glyph::Line(replayed, 1), format!("replayed over a window ({} s) from its logged start", t.horizon_s)),
        (Glyph::Mark(Shape::Cross, replayed), "replayed window end".to_string()),
    ];
    let logged_pts: Vec<(f64, f64)> = t.logged_paths.iter().flatten().step_by(7).map(|q| (q[0], q[1])).collect();
    draw_legend_box(&chart, &entries, &[&logged_pts, &ends], 14)?;
    Ok(())
}

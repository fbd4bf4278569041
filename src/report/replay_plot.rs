//! The replay figure (SVG or PNG by extension), one row per terrain: a top view with the logged
//! path and, from the logged start pose of every other window (those do not overlap), the path
//! the terrain's model predicts from the logged side speeds; beside it the window ends in each
//! window's start frame, logged against replayed, where an error of a few per cent is visible.
//! Equal scales in metres, local frame of the logs.
//! Text uses the bundled DejaVu font (see [`super::plot::register_fonts`]).

use std::path::Path;

use plotters::coord::Shift;
use plotters::prelude::*;

use super::plot::{map_chart, DrawResult};
use super::ReportError;
use crate::fit::replay::{ReplayRun, TerrainReplay};

const PANEL_W_PX: u32 = 820;
const PANEL_H_PX: u32 = 760;

/// Writes the replay figure; the format follows the extension (`.svg` or `.png`).
pub fn write_replay_plot(run: &ReplayRun, path: &Path) -> Result<(), ReportError> {
    super::plot::write_figure(&ReplayFigure(run), path)
}

struct ReplayFigure<'a>(&'a ReplayRun);

impl super::plot::Figure for ReplayFigure<'_> {
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
    let body = area.titled(&title, ("sans-serif", 20))?;
    let panels = body.split_evenly((1, 2));
    let ends: Vec<_> = crate::fit::plotted_end_points(&t.end_points).collect();
    let caption = format!("window ends in the start frame ({} windows)", ends.len());
    super::fit_plot::end_points_panel(&panels[1], &caption, &ends, "replayed end")?;
    let body = &panels[0];
    let points = t.logged_paths.iter().chain(&t.replayed_paths).flatten().copied();
    let mut chart = map_chart(body, points, "")?;
    // The logged path wide and pale underneath, so a replayed path that leaves it shows.
    let logged = RGBColor(175, 175, 175);
    let replayed = RGBColor(230, 110, 20);
    for (i, p) in t.logged_paths.iter().enumerate() {
        let s = chart.draw_series(LineSeries::new(p.iter().map(|q| (q[0], q[1])), logged.stroke_width(5)))?;
        if i == 0 {
            s.label("logged path")
                .legend(move |(x, y)| PathElement::new(vec![(x, y), (x + 20, y)], logged.stroke_width(5)));
        }
    }
    for (i, p) in t.replayed_paths.iter().enumerate() {
        let s = chart.draw_series(LineSeries::new(p.iter().map(|q| (q[0], q[1])), replayed.stroke_width(1)))?;
        if i == 0 {
            s.label(format!("replayed over a window ({} s) from its logged start", t.horizon_s))
                .legend(move |(x, y)| PathElement::new(vec![(x, y), (x + 20, y)], replayed.stroke_width(1)));
        }
    }
    let ends = t.replayed_paths.iter().filter_map(|p| p.last()).map(|q| Cross::new((q[0], q[1]), 3, replayed));
    chart.draw_series(ends)?.label("replayed window end").legend(move |(x, y)| Cross::new((x + 10, y), 3, replayed));
    super::plot::draw_series_labels(&mut chart, 14)?;
    Ok(())
}

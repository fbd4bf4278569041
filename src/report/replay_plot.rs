//! The replay figure (SVG or PNG by extension): one top view per terrain with the logged path
//! and, from the logged start pose of every other window (those do not overlap), the path the
//! terrain's model predicts from the logged side speeds. Where the replayed paths fan away from
//! the logged one, the model no longer holds. Equal scales in metres, local frame of the logs.
//! Text uses the bundled DejaVu font (see [`super::plot::register_fonts`]).

use std::path::Path;

use plotters::coord::Shift;
use plotters::prelude::*;

use super::plot::{map_chart, DrawResult};
use super::ReportError;
use crate::fit::replay::{ReplayRun, TerrainReplay};

const PANEL_W_PX: u32 = 900;
const PANEL_H_PX: u32 = 820;

/// Writes the replay figure; the format follows the extension (`.svg` or `.png`).
pub fn write_replay_plot(run: &ReplayRun, path: &Path) -> Result<(), ReportError> {
    super::plot::write_figure(&ReplayFigure(run), path)
}

struct ReplayFigure<'a>(&'a ReplayRun);

impl super::plot::Figure for ReplayFigure<'_> {
    fn size_px(&self) -> (u32, u32) {
        (PANEL_W_PX, PANEL_H_PX * self.0.terrains.len().max(1) as u32)
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
    let median = t.translation_rel.map_or("n/a".to_string(), |s| format!("{:.1} %", 100.0 * s.median));
    let title = format!("{}: {} replayed, median translation error {median}, {verdict}", t.terrain, t.model);
    let body = area.titled(&title, ("sans-serif", 20))?;
    let points = t.logged_paths.iter().chain(&t.replayed_paths).flatten().copied();
    let mut chart = map_chart(&body, points, "")?;
    let logged = RGBColor(40, 40, 40);
    let replayed = RGBColor(230, 110, 20);
    for (i, p) in t.logged_paths.iter().enumerate() {
        let s = chart.draw_series(LineSeries::new(p.iter().map(|q| (q[0], q[1])), logged.stroke_width(1)))?;
        if i == 0 {
            s.label("logged path").legend(move |(x, y)| PathElement::new(vec![(x, y), (x + 20, y)], logged));
        }
    }
    for (i, p) in t.replayed_paths.iter().enumerate() {
        let s = chart.draw_series(LineSeries::new(p.iter().map(|q| (q[0], q[1])), replayed.stroke_width(2)))?;
        if i == 0 {
            s.label(format!("replayed from each window's start ({} s)", t.horizon_s))
                .legend(move |(x, y)| PathElement::new(vec![(x, y), (x + 20, y)], replayed.stroke_width(2)));
        }
    }
    super::plot::draw_series_labels(&mut chart, 14)?;
    Ok(())
}

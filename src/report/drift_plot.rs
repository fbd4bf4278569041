//! The drift plot (SVG or PNG by extension): a top view of the plan coloured by terrain, a
//! sample of true paths, and at each leg end the 95 % ellipse about the mean true position and
//! the CEP95 circle about the leg end, on equal axis scales in metres; below it CEP50 and CEP95
//! against distance along the route. Text uses the bundled font (see `report::plot`).

use std::path::Path;

use plotters::coord::Shift;
use plotters::prelude::*;

use super::axis::{map_chart, FULL};
use super::decimate::simplify_path;
use super::figure::{DrawResult, Figure};
use super::legend::{draw_legend_box, draw_legend_column, draw_shape, Glyph, Shape};
use super::palette::{route_color, terrain_color, tint, INK};
use super::placer::Rect;
use super::plot::{chart_placer, draw_polyline, draw_terrain_map, map_entries, metres_per_px, terrain_entries, to_px};
use super::text::{draw_label, font, titled};
use super::ReportError;
use crate::drift::DriftReport;
use crate::route::{PlanPath, Route};
use crate::site::terrain_map::MapPolygon;

const SIZE_PX: (u32, u32) = (1400, 1250);
const LEGEND_WIDTH_PX: u32 = 330;
/// The 95 % ellipses and CEP95 (route colours, apart from every terrain colour).
const ELLIPSE: RGBColor = RGBColor(225, 60, 135);
const CEP: RGBColor = RGBColor(0, 45, 255);
const LOSS: RGBColor = RGBColor(240, 170, 0);

/// The drift plot of one route.
struct DriftFigure<'a> {
    plan: PlanPath,
    report: &'a DriftReport,
    demo: bool,
    /// Terrain-map polygons in the route's frame, shaded under the plan.
    polygons: &'a [MapPolygon],
}

impl Figure for DriftFigure<'_> {
    fn size_px(&self) -> (u32, u32) {
        SIZE_PX
    }
    fn draw<DB: DrawingBackend>(&self, root: &DrawingArea<DB, Shift>) -> DrawResult<()>
    where
        DB::ErrorType: 'static,
    {
        draw(root, self)
    }
}

/// Writes the plot of a drift run, terrain-map `polygons` (in the route's frame) shaded under
/// the plan; the format follows the extension (`.svg` or `.png`).
pub fn write_drift_plot(
    route: &Route,
    report: &DriftReport,
    demo: bool,
    polygons: &[MapPolygon],
    path: &Path,
) -> Result<(), ReportError> {
    super::figure::write_figure(&DriftFigure { plan: PlanPath::new(route), report, demo, polygons }, path)
}

fn draw<DB: DrawingBackend>(root: &DrawingArea<DB, Shift>, fig: &DriftFigure) -> DrawResult<()>
where
    DB::ErrorType: 'static,
{
    let (plan, r, demo) = (&fig.plan, fig.report, fig.demo);
    root.fill(&WHITE)?;
    let vehicle = if demo { "built-in demo profile" } else { r.vehicle.as_str() };
    let title = format!(
        "drift of route '{}': localization lost at leg {}, {} odometry, {} samples ({vehicle})",
        r.route,
        r.lost_from_leg,
        r.odometry.name(),
        r.samples
    );
    let body = titled(root, &title, 24)?;
    let (w, h) = body.dim_in_pixel();
    let (top, bottom) = body.split_vertically((h as f64 * 0.72) as u32);
    let (map, legend) = top.split_horizontally(w.saturating_sub(LEGEND_WIDTH_PX));
    draw_map(&map, plan, r, fig.polygons)?;
    draw_legend(&legend, r, fig.polygons)?;
    draw_cep(&bottom, r)?;
    Ok(())
}

/// One leg end on the map: leg index, 95 % ellipse outline about the mean true position, the
/// leg end point and the CEP95 radius (local frame, metres).
type LegEndShapes = (usize, Vec<[f64; 2]>, [f64; 2], f64);

fn ellipse_outlines(r: &DriftReport) -> Vec<LegEndShapes> {
    r.legs
        .iter()
        .filter_map(|l| {
            let s = l.stats.as_ref()?;
            let end = [l.end_east_m, l.end_north_m];
            let centre = [end[0] + s.bias_east_m, end[1] + s.bias_north_m];
            Some((l.index, s.ellipse95.outline(centre, 96), end, s.cep95_m))
        })
        .collect()
}

fn circle(c: [f64; 2], radius_m: f64) -> Vec<(f64, f64)> {
    (0..=96)
        .map(|k| {
            let t = std::f64::consts::TAU * f64::from(k) / 96.0;
            (c[0] + radius_m * t.cos(), c[1] + radius_m * t.sin())
        })
        .collect()
}

fn draw_map<DB: DrawingBackend>(
    area: &DrawingArea<DB, Shift>,
    plan: &PlanPath,
    r: &DriftReport,
    polygons: &[MapPolygon],
) -> DrawResult<()>
where
    DB::ErrorType: 'static,
{
    let ellipses = ellipse_outlines(r);
    let extent = plan
        .points()
        .iter()
        .copied()
        .chain(r.sample_paths.iter().flatten().copied())
        .chain(ellipses.iter().flat_map(|e| e.1.iter().copied()))
        .chain(ellipses.iter().flat_map(|e| circle(e.2, e.3).into_iter().map(|(x, y)| [x, y])));
    let mut chart = map_chart(area, extent, "", FULL)?;
    let mut placer = chart_placer(&chart);
    draw_terrain_map(&mut chart, polygons)?;
    let tol = 0.5 * metres_per_px(&chart);
    for path in &r.sample_paths {
        draw_polyline(
            &mut chart,
            &mut placer,
            &simplify_path(path, tol, &[]),
            RGBColor(90, 90, 90).mix(0.35).stroke_width(1),
        )?;
    }
    for l in &r.legs {
        let (a, b) = plan.leg_bounds_m(l.index - 1);
        let n = (((b - a) / 0.5).ceil() as usize).clamp(1, 4000);
        let pts: Vec<[f64; 2]> = (0..=n).map(|k| plan.point_at(a + (b - a) * k as f64 / n as f64)).collect();
        draw_polyline(
            &mut chart,
            &mut placer,
            &simplify_path(&pts, tol, &[]),
            terrain_color(&l.terrain).stroke_width(5),
        )?;
    }
    for (_, outline, end, cep95_m) in &ellipses {
        let ring: Vec<[f64; 2]> = circle(*end, *cep95_m).into_iter().map(|(x, y)| [x, y]).collect();
        draw_polyline(&mut chart, &mut placer, &ring, CEP.stroke_width(2))?;
        draw_polyline(&mut chart, &mut placer, outline, ELLIPSE.stroke_width(3))?;
    }
    let area = chart.plotting_area().strip_coord_spec();
    let loss = plan.point_at(r.loss_start_m);
    let lp = to_px(&chart, (loss[0], loss[1]));
    draw_shape(&area, lp, Shape::TriangleUp, LOSS, 8)?;
    placer.mark(Rect::around(lp, 10));
    let ends: Vec<(usize, (i32, i32))> =
        ellipses.iter().map(|(i, _, end, _)| (*i, to_px(&chart, (end[0], end[1])))).collect();
    for (_, p) in &ends {
        draw_shape(&area, *p, Shape::Dot, INK, 4)?;
        placer.mark(Rect::around(*p, 6));
    }
    let f = font(16);
    for (index, p) in &ends {
        draw_label(&area, &mut placer, *p, 8, &format!("end of leg {index}"), &f, INK)?;
    }
    Ok(())
}

fn draw_legend<DB: DrawingBackend>(
    area: &DrawingArea<DB, Shift>,
    r: &DriftReport,
    polygons: &[MapPolygon],
) -> DrawResult<()>
where
    DB::ErrorType: 'static,
{
    let mut entries = terrain_entries(r.legs.iter().map(|l| l.terrain.as_str()));
    entries.extend([
        (Glyph::Line(tint(RGBColor(90, 90, 90), 0.5), 1), format!("true paths ({} samples)", r.sample_paths.len())),
        (Glyph::Line(ELLIPSE, 3), "95 % ellipse, true position".to_string()),
        (Glyph::Line(CEP, 2), "CEP95 circle about leg end".to_string()),
        (Glyph::Mark(Shape::TriangleUp, LOSS), "localization lost here".to_string()),
        (Glyph::Mark(Shape::Dot, INK), "leg end (planned)".to_string()),
    ]);
    entries.extend(map_entries(polygons));
    draw_legend_column(area, "legend", &entries)
}

fn draw_cep<DB: DrawingBackend>(area: &DrawingArea<DB, Shift>, r: &DriftReport) -> DrawResult<()>
where
    DB::ErrorType: 'static,
{
    let pts = |f: fn(&crate::drift::ErrorStats) -> f64| -> Vec<(f64, f64)> {
        std::iter::once((r.loss_start_m, 0.0))
            .chain(r.legs.iter().filter(|l| l.distance_m > 0.0).filter_map(|l| {
                let s = l.stats.as_ref()?;
                Some((l.end_along_route_m, f(s)))
            }))
            .collect()
    };
    let cep95 = pts(|s| s.cep95_m);
    let cep50 = pts(|s| s.cep50_m);
    let x_max = r.legs.last().map_or(1.0, |l| l.end_along_route_m).max(1.0);
    let y_max = cep95.iter().map(|p| p.1).fold(0.0, f64::max).max(0.01) * 1.15;
    let mut chart = super::axis::distance_chart(area, x_max, 0.0..y_max, "radial error (m)")?;
    let (c95, c50) = (CEP, route_color(2));
    chart.draw_series(LineSeries::new(cep95.clone(), c95.stroke_width(2)))?;
    chart.draw_series(cep95.iter().map(|&p| Circle::new(p, 4, c95.filled())))?;
    chart.draw_series(LineSeries::new(cep50.clone(), c50.stroke_width(2)))?;
    chart.draw_series(cep50.iter().map(|&p| Circle::new(p, 4, c50.filled())))?;
    let entries = [
        (Glyph::Line(c95, 2), "CEP95 at leg ends".to_string()),
        (Glyph::Line(c50, 2), "CEP50 at leg ends".to_string()),
    ];
    draw_legend_box(&chart, &entries, &[&cep95, &cep50], 15)?;
    Ok(())
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::drift::{run_drift, DriftSettings, Odometry};
    use crate::progress::NoProgress;
    use crate::route::{Leg, SourcePosition};
    use crate::vehicle::Profile;

    #[test]
    fn svg_and_png_are_written_with_text() {
        let leg = |terrain: &str, points: Vec<[f64; 2]>| Leg::new(terrain, points, SourcePosition::Feature(0));
        let route = Route {
            name: "r".into(),
            source: "r.csv".into(),
            origin: None,
            legs: vec![leg("gravel", vec![[0.0, 0.0], [12.0, 0.0]]), leg("asphalt", vec![[12.0, 0.0], [12.0, 8.0]])],
            warnings: Vec::new(),
        };
        let settings = DriftSettings {
            samples: 12,
            seed: 1,
            odometry: Odometry::Calibrated,
            paths_kept: 4,
            ..DriftSettings::default()
        };
        let report = run_drift(&route, &Profile::demo(), &settings, &NoProgress).expect("run");
        let dir = tempfile::tempdir().expect("tempdir");
        let svg = dir.path().join("d.svg");
        write_drift_plot(&route, &report, true, &[], &svg).expect("svg");
        let text = std::fs::read_to_string(&svg).expect("read");
        assert!(text.contains("CEP95") && text.contains("end of leg 2"));
        let png = dir.path().join("d.png");
        write_drift_plot(&route, &report, true, &[], &png).expect("png");
        assert!(std::fs::metadata(&png).expect("png").len() > 10_000);
        assert!(write_drift_plot(&route, &report, true, &[], &dir.path().join("d.pdf")).is_err());
    }
}

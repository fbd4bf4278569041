//! Glyphs and legends shared by every plot: the marker shapes (each outlined so it reads on any
//! background), the legend column beside a map, and the legend box inside a chart, put in the
//! corner where it covers the fewest data points.

use plotters::coord::Shift;
use plotters::prelude::*;
use plotters::style::text_anchor::{HPos, Pos, VPos};

use super::axis::{text_size, LinearChart};
use super::figure::DrawResult;
use super::palette::INK;
use super::text::{ellipsized, font, wrapped};

/// A line segment between two pixel points.
type Segment = ((i32, i32), (i32, i32));
/// A marker shape.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub(crate) enum Shape {
    Dot,
    Square,
    Cross,
    Plus,
    Ring,
    TriangleUp,
    TriangleDown,
    Diamond,
    Star,
    /// A slanted bar (a slope across the way).
    Slant,
}

/// What a legend line shows.
#[derive(Debug, Clone, Copy, PartialEq)]
pub(crate) enum Glyph {
    Line(RGBColor, u32),
    Dashed(RGBColor, u32),
    /// A filled square (a shaded map area).
    Fill(RGBColor),
    /// A wide pale band under a line.
    Halo(RGBColor),
    Mark(Shape, RGBColor),
    /// No glyph: a note.
    None,
}

/// Draws `shape` of half-size `r` pixels centred on `c` (pixels of `area`).
pub(crate) fn draw_shape<DB>(
    area: &DrawingArea<DB, Shift>,
    c: (i32, i32),
    shape: Shape,
    color: RGBColor,
    r: i32,
) -> DrawResult<()>
where
    DB: DrawingBackend,
    DB::ErrorType: 'static,
{
    let (x, y) = c;
    let poly = |pts: Vec<(i32, i32)>| -> DrawResult<()> {
        area.draw(&Polygon::new(pts.clone(), color.filled()))?;
        let mut ring = pts;
        ring.push(ring[0]);
        area.draw(&PathElement::new(ring, INK.stroke_width(1)))?;
        Ok(())
    };
    let strokes = |segs: &[Segment], w: u32| -> DrawResult<()> {
        for (a, b) in segs {
            area.draw(&PathElement::new(vec![*a, *b], WHITE.stroke_width(w + 3)))?;
        }
        for (a, b) in segs {
            area.draw(&PathElement::new(vec![*a, *b], color.stroke_width(w)))?;
        }
        Ok(())
    };
    match shape {
        Shape::Dot => {
            area.draw(&Circle::new(c, r as u32, color.filled()))?;
            area.draw(&Circle::new(c, r as u32, INK.stroke_width(1)))?;
        }
        Shape::Square => poly(vec![(x - r, y - r), (x + r, y - r), (x + r, y + r), (x - r, y + r)])?,
        Shape::TriangleUp => poly(vec![(x, y - r - 2), (x + r + 1, y + r), (x - r - 1, y + r)])?,
        Shape::TriangleDown => poly(vec![(x, y + r + 2), (x + r + 1, y - r), (x - r - 1, y - r)])?,
        Shape::Diamond => poly(vec![(x, y - r - 2), (x + r + 1, y), (x, y + r + 2), (x - r - 1, y)])?,
        Shape::Slant => poly(vec![(x - r, y + r), (x - r + 4, y + r), (x + r, y - r), (x + r - 4, y - r)])?,
        Shape::Star => {
            let pts = (0..10)
                .map(|k| {
                    let a = std::f64::consts::PI * (f64::from(k) / 5.0 - 0.5);
                    let rr = if k % 2 == 0 { f64::from(r) + 2.0 } else { f64::from(r) * 0.5 };
                    (x + (rr * a.cos()).round() as i32, y + (rr * a.sin()).round() as i32)
                })
                .collect();
            poly(pts)?
        }
        Shape::Cross => strokes(&[((x - r, y - r), (x + r, y + r)), ((x - r, y + r), (x + r, y - r))], 4)?,
        Shape::Plus => strokes(&[((x - r, y), (x + r, y)), ((x, y - r), (x, y + r))], 4)?,
        Shape::Ring => {
            area.draw(&Circle::new(c, r as u32, WHITE.stroke_width(6)))?;
            area.draw(&Circle::new(c, r as u32, color.stroke_width(3)))?;
        }
    }
    Ok(())
}

/// Draws a legend glyph `w` pixels wide centred vertically on `y`, from `x0`.
fn draw_glyph<DB>(area: &DrawingArea<DB, Shift>, glyph: &Glyph, x0: i32, y: i32, w: i32) -> DrawResult<()>
where
    DB: DrawingBackend,
    DB::ErrorType: 'static,
{
    let seg = vec![(x0, y), (x0 + w, y)];
    match glyph {
        Glyph::Line(c, lw) => area.draw(&PathElement::new(seg, c.stroke_width(*lw)))?,
        Glyph::Dashed(c, lw) => {
            let step = (w / 3).max(4);
            for k in 0..3 {
                let a = x0 + k * step;
                area.draw(&PathElement::new(vec![(a, y), (a + step * 2 / 3, y)], c.stroke_width(*lw)))?;
            }
        }
        Glyph::Halo(c) => area.draw(&PathElement::new(seg, c.mix(0.45).stroke_width(14)))?,
        Glyph::Fill(c) => area.draw(&Rectangle::new([(x0 + 3, y - 9), (x0 + w - 3, y + 9)], c.filled()))?,
        Glyph::Mark(shape, c) => draw_shape(area, (x0 + w / 2, y), *shape, *c, 6)?,
        Glyph::None => {}
    }
    Ok(())
}

/// Draws a legend column: a heading, then a glyph and a line of text per entry (cut with an
/// ellipsis to the column's width). Entries that do not fit the column's height are summed up
/// in a last line.
pub(crate) fn draw_legend_column<DB>(
    area: &DrawingArea<DB, Shift>,
    heading: &str,
    entries: &[(Glyph, String)],
) -> DrawResult<()>
where
    DB: DrawingBackend,
    DB::ErrorType: 'static,
{
    let (w, h) = area.dim_in_pixel();
    let (x0, mut y) = (16i32, 24i32);
    let f = font(16);
    let top = Pos::new(HPos::Left, VPos::Center);
    area.draw(&Text::new(heading.to_string(), (x0, y - 6), font(18).color(&BLACK).pos(top)))?;
    y += 24;
    let max_w = w.saturating_sub(x0 as u32 + 50);
    for (k, (glyph, text)) in entries.iter().enumerate() {
        if y + 28 > h as i32 && k + 1 < entries.len() {
            let more = format!("and {} more", entries.len() - k);
            area.draw(&Text::new(more, (x0, y), f.color(&BLACK).pos(top)))?;
            break;
        }
        if *glyph == Glyph::None {
            // A note: up to three lines across the column.
            let small = font(14);
            for line in wrapped(text, &small, w.saturating_sub(x0 as u32 + 8), 3) {
                area.draw(&Text::new(line, (x0, y), small.color(&INK).pos(top)))?;
                y += 19;
            }
            y += 6;
            continue;
        }
        draw_glyph(area, glyph, x0, y, 34)?;
        area.draw(&Text::new(ellipsized(text, &f, max_w), (x0 + 44, y), f.color(&BLACK).pos(top)))?;
        y += 27;
    }
    Ok(())
}

/// Draws a legend box inside `chart`, in whichever corner covers the fewest points of `data`
/// (in the chart's coordinates); ties go to the upper left, upper right, lower left, lower right.
pub(crate) fn draw_legend_box<DB>(
    chart: &LinearChart<'_, DB>,
    entries: &[(Glyph, String)],
    data: &[&[(f64, f64)]],
    font_px: u32,
) -> DrawResult<()>
where
    DB: DrawingBackend,
    DB::ErrorType: 'static,
{
    if entries.is_empty() {
        return Ok(());
    }
    let area = chart.plotting_area().strip_coord_spec();
    let base = chart.plotting_area().get_base_pixel();
    let (pw, ph) = area.dim_in_pixel();
    let f = font(font_px);
    let row_h = (text_size(&f, "Ag").1 as i32 + 8).max(16);
    let text_w = entries.iter().map(|(_, t)| text_size(&f, t).0).max().unwrap_or(0) as i32;
    let (bw, bh) = ((text_w + 50).min(pw as i32 - 8), row_h * entries.len() as i32 + 10);
    let pad = 8;
    let corners = [
        (pad, pad),
        (pw as i32 - bw - pad, pad),
        (pad, ph as i32 - bh - pad),
        (pw as i32 - bw - pad, ph as i32 - bh - pad),
    ];
    let px: Vec<(i32, i32)> = data
        .iter()
        .flat_map(|s| s.iter())
        .map(|p| {
            let q = chart.backend_coord(p);
            (q.0 - base.0, q.1 - base.1)
        })
        .collect();
    let covered = |(x, y): (i32, i32)| {
        px.iter().filter(|p| p.0 >= x - 4 && p.0 <= x + bw + 4 && p.1 >= y - 4 && p.1 <= y + bh + 4).count()
    };
    let (x, y) = corners.iter().copied().min_by_key(|&c| covered(c)).unwrap_or(corners[0]);
    area.draw(&Rectangle::new([(x, y), (x + bw, y + bh)], WHITE.mix(0.9).filled()))?;
    area.draw(&Rectangle::new([(x, y), (x + bw, y + bh)], RGBColor(160, 160, 160).stroke_width(1)))?;
    let mid = Pos::new(HPos::Left, VPos::Center);
    for (k, (glyph, text)) in entries.iter().enumerate() {
        let cy = y + 5 + row_h * k as i32 + row_h / 2;
        draw_glyph(&area, glyph, x + 8, cy, 26)?;
        let t = ellipsized(text, &f, (bw - 46).max(10) as u32);
        area.draw(&Text::new(t, (x + 42, cy), f.color(&BLACK).pos(mid)))?;
    }
    Ok(())
}

//! Text on plots: titles that wrap onto a second line and end in an ellipsis when even that is
//! too short, text cut to a width, and labels placed by the shared [`Placer`] (with a white box
//! when they lie over a line, and a leader line when moved away from their anchor). Widths come
//! from the bundled font's metrics.

use plotters::coord::Shift;
use plotters::prelude::*;
use plotters::style::text_anchor::{HPos, Pos, VPos};
use plotters::style::FontDesc;

use super::axis::text_size;
use super::figure::DrawResult;
use super::placer::{Placer, Rect};

/// The font of plot text at `px` pixels.
pub(crate) fn font(px: u32) -> FontDesc<'static> {
    ("sans-serif", f64::from(px)).into_font()
}

/// `text` cut to fit `max_w` pixels in `f`, ending in an ellipsis when cut.
pub(crate) fn ellipsized(text: &str, f: &FontDesc, max_w: u32) -> String {
    if text_size(f, text).0 <= max_w {
        return text.to_string();
    }
    let chars: Vec<char> = text.chars().collect();
    // Longest prefix that fits with the ellipsis (binary search on the character count).
    let (mut lo, mut hi) = (0usize, chars.len());
    while lo < hi {
        let mid = (lo + hi).div_ceil(2);
        let cand: String = chars[..mid].iter().collect::<String>() + "\u{2026}";
        if text_size(f, &cand).0 <= max_w {
            lo = mid;
        } else {
            hi = mid - 1;
        }
    }
    chars[..lo].iter().collect::<String>().trim_end().to_string() + "\u{2026}"
}

/// `text` in at most `max_lines` lines of at most `max_w` pixels, broken at spaces; the last
/// line ends in an ellipsis when the text does not fit.
pub(crate) fn wrapped(text: &str, f: &FontDesc, max_w: u32, max_lines: usize) -> Vec<String> {
    let mut lines: Vec<String> = Vec::new();
    let mut rest = text.trim();
    while !rest.is_empty() {
        if lines.len() + 1 == max_lines.max(1) || text_size(f, rest).0 <= max_w {
            lines.push(ellipsized(rest, f, max_w));
            break;
        }
        // The longest run of words that fits; a single word too long is cut.
        let mut cut = None;
        for (i, ch) in rest.char_indices() {
            if ch == ' ' && text_size(f, &rest[..i]).0 <= max_w {
                cut = Some(i);
            }
        }
        match cut {
            Some(i) if i > 0 => {
                lines.push(rest[..i].trim_end().to_string());
                rest = rest[i..].trim_start();
            }
            _ => {
                lines.push(ellipsized(rest, f, max_w));
                break;
            }
        }
    }
    lines
}

/// Draws a title centred at the top of `area` (wrapped onto two lines when long, see
/// [`wrapped`]) and returns the area below it.
pub(crate) fn titled<DB>(area: &DrawingArea<DB, Shift>, title: &str, px: u32) -> DrawResult<DrawingArea<DB, Shift>>
where
    DB: DrawingBackend,
    DB::ErrorType: 'static,
{
    let f = font(px);
    let (w, _) = area.dim_in_pixel();
    let lines = wrapped(title, &f, w.saturating_sub(24), 2);
    let line_h = px as i32 * 5 / 4;
    for (k, line) in lines.iter().enumerate() {
        let style = f.clone().color(&BLACK).pos(Pos::new(HPos::Center, VPos::Top));
        area.draw(&Text::new(line.clone(), (w as i32 / 2, 6 + k as i32 * line_h), style))?;
    }
    let used = (6 + lines.len() as i32 * line_h + 6).max(0) as u32;
    Ok(area.split_vertically(used).1)
}

/// Draws `text` near `anchor` (pixels of `area`) where `placer` finds room; returns false when
/// the label fits nowhere (nothing is drawn then).
pub(crate) fn draw_label<DB>(
    area: &DrawingArea<DB, Shift>,
    placer: &mut Placer,
    anchor: (i32, i32),
    clear: i32,
    text: &str,
    f: &FontDesc,
    color: RGBColor,
) -> DrawResult<bool>
where
    DB: DrawingBackend,
    DB::ErrorType: 'static,
{
    let (w, h) = text_size(f, text);
    let Some(pl) = placer.place(anchor, (w + 4, h + 2), clear) else { return Ok(false) };
    let Rect { x0, y0, x1, y1 } = pl.rect;
    if let Some((a, b)) = pl.leader {
        area.draw(&PathElement::new(vec![a, b], color.mix(0.8).stroke_width(1)))?;
    }
    if pl.boxed || pl.leader.is_some() {
        area.draw(&Rectangle::new([(x0, y0), (x1, y1)], WHITE.mix(0.88).filled()))?;
    }
    let style = f.clone().color(&color).pos(Pos::new(HPos::Left, VPos::Top));
    area.draw(&Text::new(text.to_string(), (x0 + 2, y0 + 1), style))?;
    Ok(true)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn long_titles_wrap_then_end_in_an_ellipsis_within_the_width() {
        super::super::figure::register_fonts();
        let f = font(26);
        let title = "route 'supply-run': FAIL   (530 m, a calibrated profile of the snowfield tracked carrier with a very long name indeed)";
        // About 1290 px in one line: more than two lines of 500 px.
        assert!(text_size(&f, title).0 > 1000);
        let lines = wrapped(title, &f, 500, 2);
        assert_eq!(lines.len(), 2);
        for l in &lines {
            assert!(text_size(&f, l).0 <= 500, "{l}");
        }
        assert!(lines[1].ends_with('\u{2026}'));
        assert!(lines[0].starts_with("route 'supply-run': FAIL"));
        // A short title stays one line and whole.
        assert_eq!(wrapped("route 'a': PASS", &f, 700, 2), vec!["route 'a': PASS".to_string()]);
        // One word wider than the line is cut.
        let cut = ellipsized(&"x".repeat(400), &f, 300);
        assert!(text_size(&f, &cut).0 <= 300 && cut.ends_with('\u{2026}'));
    }
}

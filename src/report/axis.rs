//! Axes of every chart: nice tick steps (1, 2, 2.5 or 5 times a power of ten) chosen so the
//! labels, measured with the bundled font's metrics, never touch; labels with as many decimals
//! as the step needs and never "-0"; log axes with ticks at given values. [`Axis`] is a plotters
//! coordinate, so the mesh draws exactly these ticks; [`chart`] and [`map_chart`] build the
//! reports' charts on it.

use std::ops::Range;

use plotters::coord::ranged1d::{KeyPointHint, NoDefaultFormatting, Ranged, ValueFormatter};
use plotters::coord::Shift;
use plotters::prelude::*;
use plotters::style::FontDesc;

use super::figure::DrawResult;

/// Pixels kept free between neighbouring tick labels.
const LABEL_GAP_PX: u32 = 14;

/// A chart axis: its range, scale and ticks.
#[derive(Debug, Clone)]
pub(crate) struct Axis {
    lo: f64,
    hi: f64,
    log: bool,
    major: Vec<f64>,
    minor: Vec<f64>,
    decimals: usize,
}

/// Decimals that print every multiple of `step` exactly (at most 6).
fn decimals_for(step: f64) -> usize {
    (0..=6)
        .find(|&d| {
            let scaled = step * 10f64.powi(d as i32);
            (scaled - scaled.round()).abs() < 1e-6 * scaled.abs().max(1.0)
        })
        .unwrap_or(6)
}

/// A tick label: `decimals` places, and zero printed without a sign ("0.0", never "-0.0").
pub(crate) fn tick_label(v: f64, decimals: usize) -> String {
    let s = format!("{v:.decimals$}");
    if s.starts_with('-') && s[1..].chars().all(|c| c == '0' || c == '.') {
        s[1..].to_string()
    } else {
        s
    }
}

/// Shortest label of a value given for a log axis (up to 3 decimals, trailing zeros dropped).
fn short_label(v: f64) -> String {
    let s = tick_label(v, 3);
    let s = if s.contains('.') { s.trim_end_matches('0').trim_end_matches('.').to_string() } else { s };
    if s == "-0" {
        "0".into()
    } else {
        s
    }
}

/// Size of `text` in `font`, pixels (0 when the font cannot lay it out).
pub(crate) fn text_size(font: &FontDesc, text: &str) -> (u32, u32) {
    font.box_size(text).unwrap_or((0, 0))
}

/// Nice steps from about `smallest` upward: 1, 2, 2.5, 5 times powers of ten.
fn nice_steps(smallest: f64) -> impl Iterator<Item = f64> {
    let e0 = smallest.max(1e-12).log10().floor() as i32 - 1;
    (e0..e0 + 30).flat_map(|e| [1.0, 2.0, 2.5, 5.0].map(move |m| m * 10f64.powi(e))).filter(move |&s| s >= smallest)
}

impl Axis {
    /// A linear axis over `lo..hi`, `length_px` long: the finest nice step whose labels in `font`
    /// keep [`LABEL_GAP_PX`] apart, side by side (`horizontal`) or stacked.
    pub(crate) fn linear(lo: f64, hi: f64, length_px: u32, font: &FontDesc, horizontal: bool) -> Axis {
        let (lo, hi) = if hi > lo && (hi - lo).is_finite() { (lo, hi) } else { (lo - 1.0, lo + 1.0) };
        let (lo, hi) = if lo.is_finite() { (lo, hi) } else { (-1.0, 1.0) };
        let span = hi - lo;
        let length = f64::from(length_px.max(20));
        let mut chosen = None;
        for step in nice_steps(span / 40.0) {
            let ticks = ticks_of(lo, hi, step);
            let d = decimals_for(step);
            let extent = ticks
                .iter()
                .map(|&v| {
                    let (w, h) = text_size(font, &tick_label(v, d));
                    if horizontal {
                        w
                    } else {
                        h
                    }
                })
                .max()
                .unwrap_or(0);
            let spacing_px = step / span * length;
            if spacing_px >= f64::from(extent + LABEL_GAP_PX) || ticks.len() <= 2 {
                chosen = Some(step);
                break;
            }
        }
        let step = chosen.unwrap_or(span);
        let minor_step = step / if (step / 10f64.powf(step.log10().floor()) - 2.0).abs() < 1e-9 { 4.0 } else { 5.0 };
        Axis {
            lo,
            hi,
            log: false,
            major: ticks_of(lo, hi, step),
            minor: ticks_of(lo, hi, minor_step),
            decimals: decimals_for(step),
        }
    }

    /// A log axis over `lo..hi` (both positive) with ticks at `at` (those inside the range), each
    /// dropped when its label would touch the one before.
    pub(crate) fn log_at(lo: f64, hi: f64, at: &[f64], length_px: u32, font: &FontDesc) -> Axis {
        let lo = if lo > 0.0 && lo.is_finite() { lo } else { 1e-3 };
        let hi = if hi > lo && hi.is_finite() { hi } else { lo * 10.0 };
        let mut axis = Axis { lo, hi, log: true, major: Vec::new(), minor: Vec::new(), decimals: 3 };
        let mut last_right: Option<f64> = None;
        let mut sorted: Vec<f64> = at.iter().copied().filter(|v| (lo..=hi).contains(v)).collect();
        sorted.sort_by(f64::total_cmp);
        sorted.dedup();
        for v in sorted {
            let x = axis.fraction(v) * f64::from(length_px);
            let half = f64::from(text_size(font, &short_label(v)).0) / 2.0;
            if last_right.is_none_or(|r| x - half >= r + f64::from(LABEL_GAP_PX)) {
                axis.major.push(v);
                last_right = Some(x + half);
            }
        }
        axis.minor = axis.major.clone();
        axis
    }

    /// Position of `v` along the axis, 0 at `lo` and 1 at `hi`.
    fn fraction(&self, v: f64) -> f64 {
        if self.log {
            (v.max(f64::MIN_POSITIVE).ln() - self.lo.ln()) / (self.hi.ln() - self.lo.ln())
        } else {
            (v - self.lo) / (self.hi - self.lo)
        }
    }

    /// The label of a tick value.
    pub(crate) fn label(&self, v: f64) -> String {
        if self.log {
            short_label(v)
        } else {
            tick_label(v, self.decimals)
        }
    }

    /// The major ticks.
    #[cfg(test)]
    pub(crate) fn ticks(&self) -> &[f64] {
        &self.major
    }

    /// Width of the widest tick label in `font`, pixels.
    pub(crate) fn widest_label_px(&self, font: &FontDesc) -> u32 {
        self.major.iter().map(|&v| text_size(font, &self.label(v)).0).max().unwrap_or(0)
    }
}

/// Multiples of `step` within `lo..=hi` (with a little slack for rounding).
fn ticks_of(lo: f64, hi: f64, step: f64) -> Vec<f64> {
    // A NaN step fails `step > 0.0` too.
    let usable = step > 0.0 && ((hi - lo) / step).is_finite() && (hi - lo) / step <= 10_000.0;
    if !usable {
        return vec![lo, hi];
    }
    let eps = step * 1e-9;
    let first = ((lo - eps) / step).ceil() as i64;
    let last = ((hi + eps) / step).floor() as i64;
    (first..=last).map(|k| if k == 0 { 0.0 } else { k as f64 * step }).collect()
}

impl Ranged for Axis {
    type FormatOption = NoDefaultFormatting;
    type ValueType = f64;

    fn map(&self, v: &f64, limit: (i32, i32)) -> i32 {
        let t = self.fraction(*v);
        let t = if t.is_finite() { t.clamp(-1e4, 1e4) } else { 0.0 };
        limit.0 + (f64::from(limit.1 - limit.0) * t).round() as i32
    }

    fn key_points<Hint: KeyPointHint>(&self, hint: Hint) -> Vec<f64> {
        if hint.weight().allow_light_points() {
            self.minor.clone()
        } else {
            self.major.clone()
        }
    }

    fn range(&self) -> Range<f64> {
        self.lo..self.hi
    }
}

impl ValueFormatter<f64> for Axis {
    fn format_ext(&self, value: &f64) -> String {
        self.label(*value)
    }
}

/// A chart of the reports: two [`Axis`] coordinates.
pub(crate) type LinearChart<'a, DB> = ChartContext<'a, DB, Cartesian2d<Axis, Axis>>;

/// The text sizes of a chart, pixels.
#[derive(Debug, Clone, Copy)]
pub(crate) struct ChartText {
    pub label_px: u32,
    pub desc_px: u32,
}

/// Text of full-size panels.
pub(crate) const FULL: ChartText = ChartText { label_px: 16, desc_px: 17 };
/// Text of small panels (fit, replay, zooms).
pub(crate) const SMALL: ChartText = ChartText { label_px: 13, desc_px: 14 };

/// What an axis spans.
#[derive(Debug, Clone)]
pub(crate) enum Span {
    Linear(f64, f64),
    /// Log scale with ticks at the given values.
    Log(f64, f64, Vec<f64>),
}

const MARGIN_PX: u32 = 12;

fn font(px: u32) -> FontDesc<'static> {
    ("sans-serif", f64::from(px)).into_font()
}

/// Height of the x label area: labels, the description and gaps.
fn x_area_px(t: ChartText) -> u32 {
    text_size(&font(t.label_px), "0.9").1 + text_size(&font(t.desc_px), "Ag").1 + 22
}

/// Width of the y label area for `axis`.
fn y_area_px(axis: &Axis, t: ChartText) -> u32 {
    axis.widest_label_px(&font(t.label_px)) + text_size(&font(t.desc_px), "Ag").1 + 26
}

fn make_axis(span: &Span, length_px: u32, t: ChartText, horizontal: bool) -> Axis {
    match span {
        Span::Linear(lo, hi) => Axis::linear(*lo, *hi, length_px, &font(t.label_px), horizontal),
        Span::Log(lo, hi, at) => Axis::log_at(*lo, *hi, at, length_px, &font(t.label_px)),
    }
}

/// A chart over `x` and `y` on `area` with its mesh, tick labels and axis descriptions.
pub(crate) fn chart<'a, DB>(
    area: &'a DrawingArea<DB, Shift>,
    x: Span,
    y: Span,
    (x_desc, y_desc): (&str, &str),
    t: ChartText,
) -> DrawResult<LinearChart<'a, DB>>
where
    DB: DrawingBackend,
    DB::ErrorType: 'static,
{
    let (w, h) = area.dim_in_pixel();
    let x_lab = x_area_px(t);
    let plot_h = h.saturating_sub(2 * MARGIN_PX + x_lab).max(10);
    let y_axis = make_axis(&y, plot_h, t, false);
    let y_lab = y_area_px(&y_axis, t);
    let plot_w = w.saturating_sub(2 * MARGIN_PX + y_lab).max(10);
    let x_axis = make_axis(&x, plot_w, t, true);
    build(area, x_axis, y_axis, (x_lab, y_lab), (x_desc, y_desc), t)
}

fn build<'a, DB>(
    area: &'a DrawingArea<DB, Shift>,
    x_axis: Axis,
    y_axis: Axis,
    (x_lab, y_lab): (u32, u32),
    (x_desc, y_desc): (&str, &str),
    t: ChartText,
) -> DrawResult<LinearChart<'a, DB>>
where
    DB: DrawingBackend,
    DB::ErrorType: 'static,
{
    let mut chart = ChartBuilder::on(area)
        .margin(MARGIN_PX)
        .x_label_area_size(x_lab)
        .y_label_area_size(y_lab)
        .build_cartesian_2d(x_axis, y_axis)?;
    chart
        .configure_mesh()
        .x_desc(x_desc)
        .y_desc(y_desc)
        .label_style(font(t.label_px))
        .axis_desc_style(font(t.desc_px))
        .set_all_tick_mark_size(5)
        .light_line_style(RGBColor(240, 240, 240))
        .bold_line_style(RGBColor(212, 212, 212))
        .draw()?;
    Ok(chart)
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
    equal_about([0.5 * (x0 + x1), 0.5 * (y0 + y1)], [(x1 - x0).max(1.0), (y1 - y0).max(1.0)], w_px, h_px, 1.06)
}

/// Ranges centred on `centre` showing at least `extent` metres across and up, equal metres per
/// pixel, scaled by `pad`.
pub(crate) fn equal_about(
    centre: [f64; 2],
    extent: [f64; 2],
    w_px: f64,
    h_px: f64,
    pad: f64,
) -> ((f64, f64), (f64, f64)) {
    let m_per_px = (extent[0] / w_px).max(extent[1] / h_px) * pad;
    let (hw, hh) = (0.5 * m_per_px * w_px, 0.5 * m_per_px * h_px);
    ((centre[0] - hw, centre[0] + hw), (centre[1] - hh, centre[1] + hh))
}

/// A chart with equal scales on both axes: `fit(plot_w_px, plot_h_px)` gives the x and y
/// ranges for the plot's size in pixels.
pub(crate) fn equal_chart<'a, DB>(
    area: &'a DrawingArea<DB, Shift>,
    fit: impl Fn(f64, f64) -> ((f64, f64), (f64, f64)),
    (x_desc, y_desc): (&str, &str),
    t: ChartText,
) -> DrawResult<LinearChart<'a, DB>>
where
    DB: DrawingBackend,
    DB::ErrorType: 'static,
{
    let (w, h) = area.dim_in_pixel();
    let x_lab = x_area_px(t);
    let plot_h = h.saturating_sub(2 * MARGIN_PX + x_lab).max(10);
    // The y labels' width depends on the y range, which depends on the plot's width: two rounds.
    let mut y_lab = 70;
    let mut ranges = fit(f64::from(w.saturating_sub(2 * MARGIN_PX + y_lab).max(10)), f64::from(plot_h));
    for _ in 0..2 {
        let y_axis = Axis::linear(ranges.1 .0, ranges.1 .1, plot_h, &font(t.label_px), false);
        y_lab = y_area_px(&y_axis, t);
        ranges = fit(f64::from(w.saturating_sub(2 * MARGIN_PX + y_lab).max(10)), f64::from(plot_h));
    }
    let plot_w = w.saturating_sub(2 * MARGIN_PX + y_lab).max(10);
    let ((x0, x1), (y0, y1)) = ranges;
    let x_axis = Axis::linear(x0, x1, plot_w, &font(t.label_px), true);
    let y_axis = Axis::linear(y0, y1, plot_h, &font(t.label_px), false);
    build(area, x_axis, y_axis, (x_lab, y_lab), (x_desc, y_desc), t)
}

/// A top view in local metres with equal scales on both axes (see [`equal_chart`]); `frame`
/// completes the axis titles ("east {frame} (m)").
pub(crate) fn map_chart_of<'a, DB>(
    area: &'a DrawingArea<DB, Shift>,
    fit: impl Fn(f64, f64) -> ((f64, f64), (f64, f64)),
    frame: &str,
    t: ChartText,
) -> DrawResult<LinearChart<'a, DB>>
where
    DB: DrawingBackend,
    DB::ErrorType: 'static,
{
    let sep = if frame.is_empty() { "" } else { " " };
    let descs = (format!("east{sep}{frame} (m)"), format!("north{sep}{frame} (m)"));
    equal_chart(area, fit, (&descs.0, &descs.1), t)
}

/// A top view fitted around `points` (see [`map_chart_of`]).
pub(crate) fn map_chart<'a, DB>(
    area: &'a DrawingArea<DB, Shift>,
    points: impl Iterator<Item = [f64; 2]> + Clone,
    frame: &str,
    t: ChartText,
) -> DrawResult<LinearChart<'a, DB>>
where
    DB: DrawingBackend,
    DB::ErrorType: 'static,
{
    map_chart_of(area, |w, h| equal_ranges(points.clone(), w, h), frame, t)
}

/// A chart against distance along the route, `[0, x_max_m]` x `y`.
pub(crate) fn distance_chart<'a, DB>(
    area: &'a DrawingArea<DB, Shift>,
    x_max_m: f64,
    y: Range<f64>,
    y_desc: &str,
) -> DrawResult<LinearChart<'a, DB>>
where
    DB: DrawingBackend,
    DB::ErrorType: 'static,
{
    chart(
        area,
        Span::Linear(0.0, x_max_m),
        Span::Linear(y.start, y.end),
        ("distance along the route (m)", y_desc),
        FULL,
    )
}

#[cfg(test)]
mod tests {
    use super::*;

    fn dejavu(px: u32) -> FontDesc<'static> {
        super::super::figure::register_fonts();
        font(px)
    }

    #[test]
    fn labels_never_read_minus_zero() {
        for (v, d) in [(-0.0, 1), (-0.04, 1), (-0.0004, 3), (-1e-12, 0), (-0.0, 0)] {
            let s = tick_label(v, d);
            assert!(!s.starts_with('-'), "{v} at {d} decimals gave {s}");
        }
        assert_eq!(tick_label(-0.25, 2), "-0.25");
        assert_eq!(tick_label(-1.0, 0), "-1");
        // The axis of the fit's turning panel ran from about -0.7 to 1.1 and read "-0.0" at zero.
        let axis = Axis::linear(-0.71, 1.13, 400, &dejavu(13), true);
        assert!(axis.ticks().contains(&0.0));
        for &v in axis.ticks() {
            let label = axis.label(v);
            let value: f64 = label.parse().expect("a number");
            assert!(value != 0.0 || !label.starts_with('-'), "{label}");
        }
    }

    #[test]
    fn steps_are_nice_and_decimals_follow_the_step() {
        let axis = Axis::linear(0.0, 530.0, 1200, &dejavu(16), true);
        let t = axis.ticks();
        let step = t[1] - t[0];
        let mantissa = step / 10f64.powf(step.log10().floor());
        assert!([1.0, 2.0, 2.5, 5.0].iter().any(|m| (m - mantissa).abs() < 1e-9), "step {step}");
        // Whole metres need no decimals: "50", not "50.0".
        assert!(
            t.iter().all(|&v| !axis.label(v).contains('.')),
            "{:?}",
            t.iter().map(|&v| axis.label(v)).collect::<Vec<_>>()
        );
        let small = Axis::linear(0.0, 0.93, 300, &dejavu(16), false);
        let step = small.ticks()[1] - small.ticks()[0];
        assert_eq!(small.label(small.ticks()[1]), tick_label(step, decimals_for(step)));
        assert_eq!(decimals_for(0.25), 2);
        assert_eq!(decimals_for(2.5), 1);
        assert_eq!(decimals_for(50.0), 0);
    }

    #[test]
    fn tick_labels_never_touch_on_any_length() {
        let f = dejavu(16);
        for (lo, hi) in [(0.0, 530.0), (-0.71, 1.13), (0.0, 4000.0), (-95.0, 270.0), (0.0, 21_000.0), (1e-4, 3e-4)] {
            for length in [120u32, 200, 333, 600, 1250] {
                let axis = Axis::linear(lo, hi, length, &f, true);
                let centres: Vec<(f64, u32)> = axis
                    .ticks()
                    .iter()
                    .map(|&v| ((v - lo) / (hi - lo) * f64::from(length), text_size(&f, &axis.label(v)).0))
                    .collect();
                if centres.len() <= 2 {
                    continue;
                }
                for pair in centres.windows(2) {
                    let room = pair[1].0 - pair[0].0;
                    let need = f64::from(pair[0].1 + pair[1].1) / 2.0;
                    assert!(room >= need, "{lo}..{hi} on {length} px: labels overlap ({room:.1} < {need:.1})");
                }
            }
        }
    }

    #[test]
    fn log_ticks_sit_at_the_given_values_and_drop_the_crowded_ones() {
        let f = dejavu(13);
        let axis = Axis::log_at(0.4, 5.0, &[0.5, 1.0, 2.0, 4.0], 500, &f);
        assert_eq!(axis.ticks(), &[0.5, 1.0, 2.0, 4.0]);
        assert_eq!(axis.label(0.5), "0.5");
        assert_eq!(axis.label(4.0), "4");
        // On a 40 px axis not all four fit.
        let tight = Axis::log_at(0.4, 5.0, &[0.5, 1.0, 2.0, 4.0], 40, &f);
        assert!(tight.ticks().len() < 4 && !tight.ticks().is_empty());
    }
}

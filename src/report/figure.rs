//! The one drawing path of every plot. A [`Figure`] draws itself on a plotters drawing area in
//! logical pixels; SVG takes the drawing as it is, PNG through a supersampling backend that
//! draws every shape and glyph at [`SUPERSAMPLE`] times the size and averages each
//! `SUPERSAMPLE` x `SUPERSAMPLE` block into one pixel (a box filter), so edges of thick diagonal
//! lines and curves come out anti-aliased. The large image is drawn in horizontal bands of at
//! most [`BAND_BYTES`] bytes, so memory stays bounded for tall figures: each band draws the whole
//! figure and keeps what falls inside it.
//!
//! Text is drawn with a bundled DejaVu Sans (Bitstream Vera licence, see fonts/LICENSE-DejaVu)
//! through plotters' pure-Rust font path, so no system font library is needed.

use std::path::Path;
use std::sync::Once;

use plotters::coord::Shift;
use plotters::prelude::*;
use plotters::style::{FontDesc, FontStyle, TextStyle};
use plotters_backend::{BackendColor, BackendCoord, BackendStyle, BackendTextStyle, DrawingErrorKind};

use super::ReportError;

/// Result of drawing code; plotters' errors are boxed.
pub(crate) type DrawResult<T> = Result<T, Box<dyn std::error::Error>>;

/// A figure the reports render to SVG or PNG.
pub(crate) trait Figure {
    /// Width and height in logical pixels (the SVG's size, the PNG's size in pixels).
    fn size_px(&self) -> (u32, u32);
    fn draw<DB: DrawingBackend>(&self, root: &DrawingArea<DB, Shift>) -> DrawResult<()>
    where
        DB::ErrorType: 'static;
}

/// Linear supersampling factor of PNG output (9 samples per pixel).
pub(crate) const SUPERSAMPLE: u32 = 3;
/// Largest band of the supersampled image held in memory at once, bytes.
pub(crate) const BAND_BYTES: usize = 8 << 20;

static FONTS: Once = Once::new();

/// Registers the bundled font with plotters (needed for SVG too: layout needs metrics).
pub fn register_fonts() {
    FONTS.call_once(|| {
        let _ = plotters::style::register_font("sans-serif", FontStyle::Normal, dejavu::sans::regular());
        let _ = plotters::style::register_font("sans-serif", FontStyle::Bold, dejavu::sans::bold());
    });
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

/// A figure as anti-aliased RGB pixels (row-major, 3 bytes a pixel) of `fig.size_px()`.
pub(crate) fn rgb_pixels(fig: &impl Figure) -> Result<Vec<u8>, String> {
    rgb_pixels_in_bands(fig, BAND_BYTES)
}

/// [`rgb_pixels`] drawn in bands of at most `band_bytes` of the supersampled image.
fn rgb_pixels_in_bands(fig: &impl Figure, band_bytes: usize) -> Result<Vec<u8>, String> {
    register_fonts();
    let (w, h) = fig.size_px();
    let s = SUPERSAMPLE;
    let (big_w, big_h) = (w as usize * s as usize, h as usize * s as usize);
    // Rows of the supersampled image per band: a multiple of the factor, within the budget.
    let band_rows =
        ((band_bytes / (3 * big_w.max(1))) / s as usize * s as usize).max(s as usize).min(big_h.max(s as usize));
    let mut out = vec![0u8; w as usize * h as usize * 3];
    let mut band = vec![255u8; band_rows * big_w * 3];
    let mut y0 = 0usize;
    while y0 < big_h {
        let rows = band_rows.min(big_h - y0);
        let buf = &mut band[..rows * big_w * 3];
        buf.fill(255);
        {
            let inner = BitMapBackend::with_buffer(buf, (big_w as u32, rows as u32));
            let backend = Supersampled { inner, s: s as i32, y0: y0 as i32, size: (w, h) };
            let root = backend.into_drawing_area();
            fig.draw(&root).map_err(|e| e.to_string())?;
            root.present().map_err(|e| e.to_string())?;
        }
        box_filter(buf, big_w, rows, s as usize, &mut out[(y0 / s as usize) * w as usize * 3..]);
        y0 += rows;
    }
    Ok(out)
}

/// Averages each `s` x `s` block of `src` (`big_w` x `rows`, RGB) into one pixel of `dst`.
fn box_filter(src: &[u8], big_w: usize, rows: usize, s: usize, dst: &mut [u8]) {
    let w = big_w / s;
    let n = (s * s) as u32;
    let mut acc = vec![0u32; w * 3];
    for (oy, out) in dst.chunks_exact_mut(w * 3).take(rows / s).enumerate() {
        acc.fill(0);
        for row in src[oy * s * big_w * 3..].chunks_exact(big_w * 3).take(s) {
            for (a, block) in acc.chunks_exact_mut(3).zip(row.chunks_exact(3 * s)) {
                for px in block.chunks_exact(3) {
                    a[0] += u32::from(px[0]);
                    a[1] += u32::from(px[1]);
                    a[2] += u32::from(px[2]);
                }
            }
        }
        for (o, a) in out.iter_mut().zip(&acc) {
            *o = ((a + n / 2) / n) as u8;
        }
    }
}

/// A figure as PNG bytes (anti-aliased, see the module comment).
pub(crate) fn png_bytes(fig: &impl Figure) -> Result<Vec<u8>, String> {
    use image::ImageEncoder;
    let (w, h) = fig.size_px();
    let pixels = rgb_pixels(fig)?;
    let mut bytes = Vec::new();
    image::codecs::png::PngEncoder::new(&mut bytes)
        .write_image(&pixels, w, h, image::ColorType::Rgb8)
        .map_err(|e| e.to_string())?;
    Ok(bytes)
}

/// Writes a figure atomically; the format follows the extension (`.svg` or `.png`).
pub(crate) fn write_figure(fig: &impl Figure, path: &Path) -> Result<(), ReportError> {
    let ext = path.extension().and_then(|e| e.to_str()).unwrap_or("").to_ascii_lowercase();
    let fail = |what: String| ReportError::Output { file: path.to_path_buf(), what };
    match ext.as_str() {
        "svg" => super::write_atomic(path, svg_string(fig).map_err(fail)?.as_bytes()),
        "png" => super::write_atomic(path, &png_bytes(fig).map_err(fail)?),
        _ => Err(fail(format!("unknown plot format '.{ext}': expected .svg or .png"))),
    }
}

/// Draws in logical pixels onto a bitmap `s` times larger, of which it holds the band of rows
/// from `y0` (in the large image's pixels). A logical point maps to the centre of its `s` x `s`
/// block, so a line one logical pixel wide fills exactly one pixel after the box filter.
struct Supersampled<'a> {
    inner: BitMapBackend<'a>,
    s: i32,
    y0: i32,
    size: (u32, u32),
}

/// A stroke `s` times wider.
struct Wide {
    color: BackendColor,
    width: u32,
}

impl BackendStyle for Wide {
    fn color(&self) -> BackendColor {
        self.color
    }
    fn stroke_width(&self) -> u32 {
        self.width
    }
}

impl Supersampled<'_> {
    fn pt(&self, p: BackendCoord) -> BackendCoord {
        (p.0 * self.s + self.s / 2, p.1 * self.s + self.s / 2 - self.y0)
    }
    fn corner(&self, p: BackendCoord) -> BackendCoord {
        (p.0 * self.s, p.1 * self.s - self.y0)
    }
    fn wide<S: BackendStyle>(&self, style: &S) -> Wide {
        Wide { color: style.color(), width: style.stroke_width().max(1) * self.s as u32 }
    }

    /// Fills a polygon (large-image pixels) by the nonzero winding rule, sampling at pixel
    /// centres, over the band's rows only. A thick path outlined by plotters crosses itself
    /// where the path does; nonzero fills such overlaps once, so translucent lines stay even.
    fn fill_nonzero(&mut self, pts: &[BackendCoord], color: BackendColor) -> Result<(), BitmapError> {
        struct Edge {
            y0: f64,
            y1: f64,
            x0: f64,
            dxdy: f64,
            dir: i32,
        }
        let (cols, rows) = self.inner.get_size();
        let mut edges: Vec<Edge> = Vec::with_capacity(pts.len());
        for (k, a) in pts.iter().enumerate() {
            let b = pts[(k + 1) % pts.len()];
            if a.1 == b.1 {
                continue;
            }
            let (p, q, dir) = if a.1 < b.1 { (*a, b, 1) } else { (b, *a, -1) };
            let dxdy = f64::from(q.0 - p.0) / f64::from(q.1 - p.1);
            edges.push(Edge { y0: f64::from(p.1), y1: f64::from(q.1), x0: f64::from(p.0), dxdy, dir });
        }
        if edges.is_empty() {
            return Ok(());
        }
        edges.sort_by(|a, b| a.y0.total_cmp(&b.y0));
        let y_lo = edges.iter().map(|e| e.y0).fold(f64::INFINITY, f64::min).floor().max(0.0) as i32;
        let y_hi =
            edges.iter().map(|e| e.y1).fold(f64::NEG_INFINITY, f64::max).ceil().min(f64::from(rows) - 1.0) as i32;
        let (mut active, mut next, mut xs): (Vec<usize>, usize, Vec<(f64, i32)>) = (Vec::new(), 0, Vec::new());
        for y in y_lo..=y_hi {
            let yc = f64::from(y) + 0.5;
            while next < edges.len() && edges[next].y0 <= yc {
                active.push(next);
                next += 1;
            }
            active.retain(|&e| edges[e].y1 > yc);
            xs.clear();
            xs.extend(active.iter().map(|&e| (edges[e].x0 + (yc - edges[e].y0) * edges[e].dxdy, edges[e].dir)));
            if xs.len() == 2 {
                if xs[1].0 < xs[0].0 {
                    xs.swap(0, 1);
                }
            } else {
                xs.sort_unstable_by(|a, b| a.0.total_cmp(&b.0));
            }
            let mut winding = 0;
            let mut start = 0.0;
            for &(x, dir) in &xs {
                let before = winding;
                winding += dir;
                if before == 0 && winding != 0 {
                    start = x;
                } else if before != 0 && winding == 0 {
                    let a = ((start - 0.5).ceil() as i32).max(0);
                    let b = ((x - 0.5).ceil() as i32).min(cols as i32);
                    if a < b {
                        self.inner.draw_rect((a, y), (b, y + 1), &color, true)?;
                    }
                }
            }
        }
        Ok(())
    }

    /// Outlines a path of `width` (large-image pixels) and fills it.
    fn stroke(&mut self, pts: &[BackendCoord], color: BackendColor, width: u32) -> Result<(), BitmapError> {
        if pts.len() < 2 || color.alpha == 0.0 {
            return Ok(());
        }
        // Paths wholly above or below the band draw nothing.
        let half = width as i32;
        let (lo, hi) = pts.iter().fold((i32::MAX, i32::MIN), |(lo, hi), p| (lo.min(p.1), hi.max(p.1)));
        if hi + half < 0 || lo - half >= self.inner.get_size().1 as i32 {
            return Ok(());
        }
        if let [a, b] = pts {
            // Grid lines and ticks: an axis-aligned line is a rectangle.
            let (w0, w1) = (width as i32 / 2, width as i32 - width as i32 / 2);
            if a.0 == b.0 {
                let (y0, y1) = (a.1.min(b.1), a.1.max(b.1));
                return self.inner.draw_rect((a.0 - w0, y0), (a.0 + w1, y1 + 1), &color, true);
            }
            if a.1 == b.1 {
                let (x0, x1) = (a.0.min(b.0), a.0.max(b.0));
                return self.inner.draw_rect((x0, a.1 - w0), (x1 + 1, a.1 + w1), &color, true);
            }
        }
        let outline = plotters_backend::rasterizer::polygonize(pts, width);
        self.fill_nonzero(&outline, color)
    }
}

type BitmapError = DrawingErrorKind<<BitMapBackend<'static> as DrawingBackend>::ErrorType>;

impl DrawingBackend for Supersampled<'_> {
    type ErrorType = <BitMapBackend<'static> as DrawingBackend>::ErrorType;

    fn get_size(&self) -> (u32, u32) {
        self.size
    }
    fn ensure_prepared(&mut self) -> Result<(), BitmapError> {
        self.inner.ensure_prepared()
    }
    fn present(&mut self) -> Result<(), BitmapError> {
        self.inner.present()
    }
    fn draw_pixel(&mut self, point: BackendCoord, color: BackendColor) -> Result<(), BitmapError> {
        let (a, b) = (self.corner(point), self.corner((point.0 + 1, point.1 + 1)));
        self.inner.draw_rect(a, b, &color, true)
    }
    fn draw_line<S: BackendStyle>(
        &mut self,
        from: BackendCoord,
        to: BackendCoord,
        style: &S,
    ) -> Result<(), BitmapError> {
        let wide = self.wide(style);
        // A wide straight line is a filled quadrilateral (plotters' bitmap lines are one pixel).
        self.stroke(&[self.pt(from), self.pt(to)], wide.color, wide.width)
    }
    fn draw_rect<S: BackendStyle>(
        &mut self,
        upper_left: BackendCoord,
        bottom_right: BackendCoord,
        style: &S,
        fill: bool,
    ) -> Result<(), BitmapError> {
        if fill {
            let (a, b) = (self.corner(upper_left), self.corner(bottom_right));
            return self.inner.draw_rect(a, b, &style.color(), true);
        }
        let (a, b) = (self.pt(upper_left), self.pt(bottom_right));
        let wide = self.wide(style);
        self.stroke(&[a, (b.0, a.1), b, (a.0, b.1), a], wide.color, wide.width)
    }
    fn draw_path<S: BackendStyle, I: IntoIterator<Item = BackendCoord>>(
        &mut self,
        path: I,
        style: &S,
    ) -> Result<(), BitmapError> {
        let pts: Vec<BackendCoord> = path.into_iter().map(|p| self.pt(p)).collect();
        let wide = self.wide(style);
        self.stroke(&pts, wide.color, wide.width)
    }
    fn draw_circle<S: BackendStyle>(
        &mut self,
        center: BackendCoord,
        radius: u32,
        style: &S,
        fill: bool,
    ) -> Result<(), BitmapError> {
        // A polygon of short chords, filled by the same rule as every other shape (so a circle
        // reads the same whichever band it falls in); a ring is the outer circle with the inner
        // one cut out (traced backwards).
        let c = self.pt(center);
        let r = f64::from(radius * self.s as u32);
        let ring = |r: f64, backwards: bool| -> Vec<BackendCoord> {
            let n = ((std::f64::consts::TAU * r / 3.0).ceil() as usize).clamp(12, 720);
            (0..n)
                .map(|k| {
                    let k = if backwards { n - k } else { k };
                    let a = std::f64::consts::TAU * k as f64 / n as f64;
                    (c.0 + (r * a.cos()).round() as i32, c.1 + (r * a.sin()).round() as i32)
                })
                .collect()
        };
        if fill {
            return self.fill_nonzero(&ring(r, false), style.color());
        }
        let half = f64::from(self.wide(style).width) / 2.0;
        let mut pts = ring(r + half, false);
        let outer_start = pts[0];
        let inner = ring((r - half).max(0.0), true);
        let inner_start = inner[0];
        pts.push(outer_start);
        pts.extend(inner);
        pts.push(inner_start);
        self.fill_nonzero(&pts, style.color())
    }
    fn fill_polygon<S: BackendStyle, I: IntoIterator<Item = BackendCoord>>(
        &mut self,
        vert: I,
        style: &S,
    ) -> Result<(), BitmapError> {
        let pts: Vec<BackendCoord> = vert.into_iter().map(|p| self.pt(p)).collect();
        self.fill_nonzero(&pts, style.color())
    }
    fn draw_text<T: BackendTextStyle>(&mut self, text: &str, style: &T, pos: BackendCoord) -> Result<(), BitmapError> {
        let font =
            FontDesc::new(style.family(), style.size() * f64::from(self.s), style.style()).transform(style.transform());
        let big = TextStyle { font, color: style.color(), pos: style.anchor() };
        let p = (pos.0 * self.s, pos.1 * self.s - self.y0);
        // Text wholly outside the band (in any rotation) draws nothing.
        if let Ok(((x0, y0), (x1, y1))) = style.layout_box(text) {
            let reach = ((x1 - x0).abs().max((y1 - y0).abs()) + 4) * self.s;
            if p.1 + reach < 0 || p.1 - reach >= self.inner.get_size().1 as i32 {
                return Ok(());
            }
        }
        self.inner.draw_text(text, &big, p)
    }
}

#[cfg(test)]
mod tests {
    use super::{png_bytes, rgb_pixels, rgb_pixels_in_bands, DrawResult, Figure};
    use plotters::coord::Shift;
    use plotters::prelude::*;

    /// A thick diagonal line on white.
    struct Diagonal;

    impl Figure for Diagonal {
        fn size_px(&self) -> (u32, u32) {
            (60, 40)
        }
        fn draw<DB: DrawingBackend>(&self, root: &DrawingArea<DB, Shift>) -> DrawResult<()>
        where
            DB::ErrorType: 'static,
        {
            root.fill(&WHITE)?;
            root.draw(&PathElement::new(vec![(5, 35), (55, 5)], BLACK.stroke_width(6)))?;
            Ok(())
        }
    }

    #[test]
    fn a_thick_diagonal_line_has_intermediate_grey_levels_at_its_edges() {
        let px = rgb_pixels(&Diagonal).expect("pixels");
        assert_eq!(px.len(), 60 * 40 * 3);
        let grey = |v: u8| v > 20 && v < 235;
        let edge = px.chunks(3).filter(|p| p[0] == p[1] && p[1] == p[2] && grey(p[0])).count();
        let black = px.chunks(3).filter(|p| p[0] < 20).count();
        // The line covers about 50 x 6 px; its two long edges are about 2 x 58 px long, and an
        // aliased line would have no grey at all.
        assert!(black > 150, "line body: {black} dark pixels");
        assert!(edge > 60, "only {edge} intermediate pixels: edges are not anti-aliased");
        // Same figure, same bytes.
        assert_eq!(png_bytes(&Diagonal).expect("png"), png_bytes(&Diagonal).expect("png"));
    }

    #[test]
    fn bands_give_the_same_image_as_one_pass() {
        // Text, a thick line and a circle crossing the band edges.
        struct Mixed;
        impl Figure for Mixed {
            fn size_px(&self) -> (u32, u32) {
                (120, 200)
            }
            fn draw<DB: DrawingBackend>(&self, root: &DrawingArea<DB, Shift>) -> DrawResult<()>
            where
                DB::ErrorType: 'static,
            {
                root.fill(&WHITE)?;
                root.draw(&PathElement::new(vec![(10, 10), (110, 190)], BLACK.stroke_width(5)))?;
                root.draw(&Circle::new((60, 100), 30, RED.stroke_width(3)))?;
                root.draw(&Text::new("band edge", (20, 95), ("sans-serif", 18)))?;
                Ok(())
            }
        }
        let one = rgb_pixels_in_bands(&Mixed, usize::MAX / 4).expect("one pass");
        // Bands of 11 logical rows (33 rows of the supersampled image).
        let banded = rgb_pixels_in_bands(&Mixed, 33 * 360 * 3).expect("bands");
        assert_eq!(one.len(), banded.len());
        let differing = one.iter().zip(&banded).filter(|(a, b)| a != b).count();
        assert_eq!(differing, 0, "{differing} bytes differ between one pass and bands");
    }
}

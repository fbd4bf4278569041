//! Placing text labels beside their anchors without collisions, shared by every plot. The
//! plot area is a grid of small cells; markers and placed labels occupy cells for good, drawn
//! lines occupy them softly. A label tries positions around its anchor (right, upper right,
//! lower right, left, ..., above, below), first close by and then in widening rings, and takes
//! the first that stays inside the plot and touches nothing; failing that, the first that
//! touches only lines (drawn on a white box so no line strikes it through). A label moved away
//! from its anchor gets a leader line; one that fits nowhere is dropped, and the caller says so
//! in a note. Pixel coordinates, y down.

/// A rectangle of pixels, `x0..x1` by `y0..y1` (ends excluded).
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub(crate) struct Rect {
    pub x0: i32,
    pub y0: i32,
    pub x1: i32,
    pub y1: i32,
}

impl Rect {
    pub(crate) fn new(x0: i32, y0: i32, x1: i32, y1: i32) -> Rect {
        Rect { x0: x0.min(x1), y0: y0.min(y1), x1: x0.max(x1), y1: y0.max(y1) }
    }
    /// A square of half-size `r` about `c`.
    pub(crate) fn around(c: (i32, i32), r: i32) -> Rect {
        Rect::new(c.0 - r, c.1 - r, c.0 + r + 1, c.1 + r + 1)
    }
    pub(crate) fn overlaps(&self, o: &Rect) -> bool {
        self.x0 < o.x1 && o.x0 < self.x1 && self.y0 < o.y1 && o.y0 < self.y1
    }
    pub(crate) fn inside(&self, o: &Rect) -> bool {
        self.x0 >= o.x0 && self.y0 >= o.y0 && self.x1 <= o.x1 && self.y1 <= o.y1
    }
    /// The point of the rectangle nearest to `p`.
    pub(crate) fn nearest(&self, p: (i32, i32)) -> (i32, i32) {
        (p.0.clamp(self.x0, self.x1 - 1), p.1.clamp(self.y0, self.y1 - 1))
    }
    fn grow(&self, by: i32) -> Rect {
        Rect { x0: self.x0 - by, y0: self.y0 - by, x1: self.x1 + by, y1: self.y1 + by }
    }
}

/// Where a label went.
#[derive(Debug, Clone, Copy, PartialEq)]
pub(crate) struct Placement {
    /// The label's box (text drawn from its upper left corner).
    pub rect: Rect,
    /// A leader line from the anchor to the box, when the label was moved away.
    pub leader: Option<((i32, i32), (i32, i32))>,
    /// True when the label lies over a drawn line and needs a background box.
    pub boxed: bool,
}

/// Grid cell size, pixels.
const CELL_PX: i32 = 4;
/// Free pixels kept around every placed label.
const PAD_PX: i32 = 2;

/// The occupancy of one plot area and the labels placed on it.
pub(crate) struct Placer {
    bounds: Rect,
    cols: i32,
    rows: i32,
    hard: Vec<bool>,
    soft: Vec<bool>,
    placed: Vec<Rect>,
}

impl Placer {
    pub(crate) fn new(bounds: Rect) -> Placer {
        let cols = ((bounds.x1 - bounds.x0) / CELL_PX + 1).max(1);
        let rows = ((bounds.y1 - bounds.y0) / CELL_PX + 1).max(1);
        let n = (cols * rows) as usize;
        Placer { bounds, cols, rows, hard: vec![false; n], soft: vec![false; n], placed: Vec::new() }
    }

    /// The cells a rectangle touches, clipped to the grid: (columns, rows).
    fn cells(&self, r: &Rect) -> Option<(std::ops::Range<i32>, std::ops::Range<i32>)> {
        let c0 = ((r.x0 - self.bounds.x0).max(0)) / CELL_PX;
        let c1 = ((r.x1 - 1 - self.bounds.x0) / CELL_PX).min(self.cols - 1);
        let r0 = ((r.y0 - self.bounds.y0).max(0)) / CELL_PX;
        let r1 = ((r.y1 - 1 - self.bounds.y0) / CELL_PX).min(self.rows - 1);
        (r.x1 > self.bounds.x0 && r.y1 > self.bounds.y0 && c0 <= c1 && r0 <= r1).then_some((c0..c1 + 1, r0..r1 + 1))
    }

    fn fill(grid: &mut [bool], cols: i32, cells: (std::ops::Range<i32>, std::ops::Range<i32>)) {
        for row in cells.1 {
            for col in cells.0.clone() {
                grid[(row * cols + col) as usize] = true;
            }
        }
    }

    fn any(grid: &[bool], cols: i32, cells: (std::ops::Range<i32>, std::ops::Range<i32>)) -> bool {
        cells.1.into_iter().any(|row| cells.0.clone().any(|col| grid[(row * cols + col) as usize]))
    }

    /// Marks a marker or another shape no label may cover.
    pub(crate) fn mark(&mut self, r: Rect) {
        if let Some(c) = self.cells(&r) {
            Self::fill(&mut self.hard, self.cols, c);
        }
    }

    /// Marks a drawn line (a polyline `half_width` pixels either side): labels avoid it when
    /// they can.
    pub(crate) fn mark_line(&mut self, pts: &[(i32, i32)], half_width: i32) {
        for w in pts.windows(2) {
            let (a, b) = (w[0], w[1]);
            let len = f64::from((b.0 - a.0).abs().max((b.1 - a.1).abs()));
            let n = (len / f64::from(CELL_PX) * 2.0).ceil().clamp(1.0, 100_000.0) as i32;
            for k in 0..=n {
                let t = f64::from(k) / f64::from(n);
                let p = (
                    (f64::from(a.0) + t * f64::from(b.0 - a.0)).round() as i32,
                    (f64::from(a.1) + t * f64::from(b.1 - a.1)).round() as i32,
                );
                if let Some(c) = self.cells(&Rect::around(p, half_width)) {
                    Self::fill(&mut self.soft, self.cols, c);
                }
            }
        }
    }

    /// The labels placed so far.
    #[cfg(test)]
    pub(crate) fn placed(&self) -> &[Rect] {
        &self.placed
    }

    /// Places a label of `size` (pixels) near `anchor`, `clear` pixels from it at the closest;
    /// `None` when it fits nowhere inside the bounds.
    pub(crate) fn place(&mut self, anchor: (i32, i32), size: (u32, u32), clear: i32) -> Option<Placement> {
        let (w, h) = (size.0 as i32, size.1 as i32);
        let clear = clear.max(2);
        let rings = [1.0, 2.2, 3.6, 5.5, 8.0, 11.0];
        let dirs: [(f64, f64); 8] = [
            (1.0, 0.0),
            (0.71, -0.71),
            (0.71, 0.71),
            (-1.0, 0.0),
            (-0.71, -0.71),
            (-0.71, 0.71),
            (0.0, -1.0),
            (0.0, 1.0),
        ];
        for lines_allowed in [false, true] {
            for (ring, scale) in rings.iter().enumerate() {
                for (dx, dy) in dirs {
                    let r = f64::from(clear) * scale;
                    let p = (anchor.0 + (dx * r).round() as i32, anchor.1 + (dy * r).round() as i32);
                    let x0 = if dx > 0.1 {
                        p.0
                    } else if dx < -0.1 {
                        p.0 - w
                    } else {
                        p.0 - w / 2
                    };
                    let y0 = if dy > 0.1 {
                        p.1
                    } else if dy < -0.1 {
                        p.1 - h
                    } else {
                        p.1 - h / 2
                    };
                    let rect = Rect::new(x0, y0, x0 + w, y0 + h);
                    if !rect.inside(&self.bounds) {
                        continue;
                    }
                    let Some(cells) = self.cells(&rect.grow(PAD_PX)) else { continue };
                    if Self::any(&self.hard, self.cols, cells.clone())
                        || (!lines_allowed && Self::any(&self.soft, self.cols, cells.clone()))
                    {
                        continue;
                    }
                    if self.placed.iter().any(|q| q.overlaps(&rect)) {
                        continue;
                    }
                    Self::fill(&mut self.hard, self.cols, cells);
                    self.placed.push(rect);
                    let leader = (ring > 0).then(|| (anchor, rect.nearest(anchor)));
                    return Some(Placement { rect, leader, boxed: lines_allowed });
                }
            }
        }
        None
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use rand::{RngExt, SeedableRng};

    #[test]
    fn placed_labels_never_overlap_and_stay_inside() {
        let bounds = Rect::new(0, 0, 600, 400);
        let mut rng = rand::rngs::ChaCha8Rng::seed_from_u64(11);
        for round in 0..20 {
            let mut p = Placer::new(bounds);
            // A crowd: 60 labels around 12 anchors, some on the edge, with markers and a line.
            let anchors: Vec<(i32, i32)> =
                (0..12).map(|_| (rng.random_range(-10..610), rng.random_range(-10..410))).collect();
            for a in &anchors {
                p.mark(Rect::around(*a, 6));
            }
            p.mark_line(&[(0, 0), (600, 400)], 3);
            let mut placed = 0;
            for k in 0..60 {
                let a = anchors[k % anchors.len()];
                let size = (rng.random_range(20..140), rng.random_range(12..24));
                if let Some(pl) = p.place(a, size, 8) {
                    assert!(pl.rect.inside(&bounds), "round {round}: {pl:?} outside");
                    assert_eq!((pl.rect.x1 - pl.rect.x0, pl.rect.y1 - pl.rect.y0), (size.0 as i32, size.1 as i32));
                    // Never on a marker.
                    for m in &anchors {
                        assert!(!pl.rect.overlaps(&Rect::around(*m, 6)), "round {round}: on the marker at {m:?}");
                    }
                    placed += 1;
                }
            }
            let rects = p.placed();
            assert_eq!(rects.len(), placed);
            for (i, a) in rects.iter().enumerate() {
                for b in &rects[i + 1..] {
                    assert!(!a.overlaps(b), "round {round}: {a:?} overlaps {b:?}");
                }
            }
            assert!(placed >= 20, "round {round}: only {placed} of 60 placed on an open plot");
        }
    }

    #[test]
    fn a_label_steps_off_a_line_and_one_that_fits_nowhere_is_dropped() {
        let mut p = Placer::new(Rect::new(0, 0, 300, 200));
        // A thick horizontal line through the anchor: the label goes above or below it.
        p.mark_line(&[(0, 100), (300, 100)], 6);
        let pl = p.place((150, 100), (60, 14), 10).expect("room above and below");
        assert!(!pl.boxed);
        assert!(pl.rect.y1 <= 100 - 6 || pl.rect.y0 >= 100 + 6, "{pl:?} on the line");
        // Too big for the bounds.
        assert!(p.place((150, 50), (400, 14), 10).is_none());
        // Two labels at one shared anchor (rank labels at a common end point) do not overlap.
        let a = p.place((40, 40), (12, 16), 8).expect("first");
        let b = p.place((40, 40), (12, 16), 8).expect("second");
        assert!(!a.rect.overlaps(&b.rect));
    }

    #[test]
    fn a_label_crossing_only_lines_is_boxed_when_no_free_place_is_left() {
        let mut p = Placer::new(Rect::new(0, 0, 100, 40));
        for y in (0..40).step_by(4) {
            p.mark_line(&[(0, y), (100, y)], 1);
        }
        let pl = p.place((50, 20), (30, 12), 6).expect("placed over the lines");
        assert!(pl.boxed);
    }
}

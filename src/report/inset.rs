//! Zoomed views of the spots a check found (see `report::marks`): at whole-route scale a failing
//! corner or a deviation peak of a metre is a few pixels, so the check plot adds a row of up to
//! [`MAX_ZOOMS`] zooms below the map, the worst first (failing spots before cautions, then along
//! the route), each framed and lettered on the map. Spots close together share a zoom; spots
//! beyond the last zoom are named in a note; a route small enough to read whole gets none.

use super::marks::Spot;
use crate::assess::{ReasonAbout, Verdict};
use crate::check::CheckedRoute;

/// Most zooms per route.
pub const MAX_ZOOMS: usize = 3;
/// Smallest and largest half-width of a zoom, metres.
const MIN_HALF_M: f64 = 12.0;
const MAX_HALF_M: f64 = 80.0;
/// A zoom is drawn only when it magnifies the map at least this much.
const MIN_MAGNIFICATION: f64 = 3.0;

/// One zoomed view.
#[derive(Debug, Clone, PartialEq)]
pub(crate) struct Zoom {
    pub letter: char,
    pub centre: [f64; 2],
    pub half_m: f64,
    /// Indices of the spots it shows.
    pub spots: Vec<usize>,
    pub worst: Verdict,
}

impl Zoom {
    /// The window `[x0, x1, y0, y1]`, metres.
    pub(crate) fn window(&self) -> [f64; 4] {
        let [x, y] = self.centre;
        [x - self.half_m, x + self.half_m, y - self.half_m, y + self.half_m]
    }
    fn holds(&self, p: [f64; 2]) -> bool {
        (p[0] - self.centre[0]).abs() <= self.half_m && (p[1] - self.centre[1]).abs() <= self.half_m
    }
}

/// Half-width of a zoom about a spot: room for the predicted path's deviation within 30 m of it.
fn half_width_m(cr: &CheckedRoute, s: &Spot) -> f64 {
    let near = cr.trace.steps.iter().filter(|t| (t.progress_m - s.at_m).abs() <= 30.0);
    let dev = near.map(|t| t.deviation_m).fold(0.0, f64::max);
    (2.5 * dev + 6.0).clamp(MIN_HALF_M, MAX_HALF_M)
}

/// Order of importance of what a spot is about, among spots of one level.
fn rank(a: ReasonAbout) -> u8 {
    match a {
        ReasonAbout::Stop => 0,
        ReasonAbout::Turn => 1,
        ReasonAbout::Deviation => 2,
        ReasonAbout::Climb | ReasonAbout::Descent => 3,
        ReasonAbout::CrossSlope => 4,
        _ => 5,
    }
}

/// The zooms of a route whose map shows about `view_half_m` metres either side of its centre,
/// and the spots left without a zoom (beyond [`MAX_ZOOMS`]).
pub(crate) fn zooms(cr: &CheckedRoute, spots: &[Spot], view_half_m: f64) -> (Vec<Zoom>, Vec<usize>) {
    let mut order: Vec<usize> = (0..spots.len()).collect();
    order.sort_by(|&a, &b| {
        let (sa, sb) = (&spots[a], &spots[b]);
        sb.verdict.cmp(&sa.verdict).then(rank(sa.about).cmp(&rank(sb.about))).then(sa.at_m.total_cmp(&sb.at_m))
    });
    let mut all: Vec<Zoom> = Vec::new();
    for i in order {
        let s = &spots[i];
        if let Some(z) = all.iter_mut().find(|z| z.holds(s.pos)) {
            z.spots.push(i);
            z.worst = z.worst.max(s.verdict);
            continue;
        }
        let half_m = half_width_m(cr, s);
        if half_m * MIN_MAGNIFICATION > view_half_m {
            continue;
        }
        all.push(Zoom { letter: ' ', centre: s.pos, half_m, spots: vec![i], worst: s.verdict });
    }
    // Centre each zoom on its spots, with room about them.
    for z in &mut all {
        let (mut lo, mut hi) = ([f64::INFINITY; 2], [f64::NEG_INFINITY; 2]);
        for &i in &z.spots {
            for k in 0..2 {
                lo[k] = lo[k].min(spots[i].pos[k]);
                hi[k] = hi[k].max(spots[i].pos[k]);
            }
        }
        z.centre = [0.5 * (lo[0] + hi[0]), 0.5 * (lo[1] + hi[1])];
        let spread = 0.5 * (hi[0] - lo[0]).max(hi[1] - lo[1]);
        z.half_m = z.half_m.max(spread + 0.5 * MIN_HALF_M).min(MAX_HALF_M.max(spread + 1.0));
    }
    let left: Vec<usize> = all.iter().skip(MAX_ZOOMS).flat_map(|z| z.spots.iter().copied()).collect();
    all.truncate(MAX_ZOOMS);
    for (z, letter) in all.iter_mut().zip('A'..='Z') {
        z.letter = letter;
    }
    (all, left)
}

/// The title of a zoom: its letter, the legs and levels it shows, and where along the route.
pub(crate) fn zoom_title(z: &Zoom, spots: &[Spot]) -> String {
    let mut legs: Vec<(usize, Verdict)> = Vec::new();
    for &i in &z.spots {
        let s = &spots[i];
        match legs.iter_mut().find(|(l, _)| *l == s.leg) {
            Some(e) => e.1 = e.1.max(s.verdict),
            None => legs.push((s.leg, s.verdict)),
        }
    }
    legs.sort();
    let legs: Vec<String> = legs.iter().map(|(l, v)| format!("leg {l} {}", v.name().to_uppercase())).collect();
    let at = z.spots.iter().map(|&i| spots[i].at_m).fold(f64::INFINITY, f64::min);
    format!("{}: {}, from {:.0} m along the route", z.letter, legs.join(", "), at)
}

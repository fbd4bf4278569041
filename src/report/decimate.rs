//! Fewer vertices for what a screen can show. A simulated trace has a step every 50 ms, so a
//! slow or long route gives hundreds of thousands of points per series, far more than a plot
//! has pixels; drawn as they are they made SVG and HTML outputs hundreds of megabytes.
//!
//! - Charts against distance keep, in every pixel column, the first, lowest, highest and last
//!   point (the M4 aggregation: Jugel, Jerzak, Hackenbroich & Markl 2014, "M4: A
//!   Visualization-Oriented Time Series Data Aggregation", PVLDB 7(10)). The line drawn from them
//!   covers the same pixels as the full series, and every peak keeps its exact value.
//! - Map polylines drop points closer than a tolerance to the last kept one, then simplify with
//!   the Ramer-Douglas-Peucker algorithm (Douglas & Peucker 1973, "Algorithms for the reduction of
//!   the number of points required to represent a digitized line or its caricature"), the
//!   tolerance half a pixel of the plot in metres, so no drawn point moves by more than about a
//!   pixel. Points the caller must keep (deviation peaks) split the line and stay; a polyline
//!   still above [`MAX_PATH_VERTICES`] is simplified again at twice the tolerance. The
//!   algorithm runs on chunks of at most 1024 points, which bounds its work on any input.

/// Most vertices of one simplified map polyline.
pub(crate) const MAX_PATH_VERTICES: usize = 5000;
/// Longest run of points one Douglas-Peucker pass works on.
const RDP_CHUNK: usize = 1024;

/// The M4 points of `points` (in drawing order, x along the chart) over `columns` pixel columns
/// spanning `x0..x1`. Points with a non-finite coordinate are left out.
pub(crate) fn per_column(points: &[(f64, f64)], x0: f64, x1: f64, columns: usize) -> Vec<(f64, f64)> {
    let columns = columns.max(1);
    let scale = if x1 > x0 { columns as f64 / (x1 - x0) } else { 0.0 };
    let column = |x: f64| ((x - x0) * scale).floor().clamp(-1.0, columns as f64) as i64;
    let mut out = Vec::with_capacity(points.len().min(4 * columns + 8));
    let finite: Vec<(f64, f64)> = points.iter().copied().filter(|p| p.0.is_finite() && p.1.is_finite()).collect();
    let mut start = 0;
    while start < finite.len() {
        let col = column(finite[start].0);
        let mut end = start + 1;
        while end < finite.len() && column(finite[end].0) == col {
            end += 1;
        }
        let group = &finite[start..end];
        let (mut lo, mut hi) = (0, 0);
        for (i, p) in group.iter().enumerate() {
            if p.1 < group[lo].1 {
                lo = i;
            }
            if p.1 > group[hi].1 {
                hi = i;
            }
        }
        let mut keep = [0, lo, hi, group.len() - 1];
        keep.sort_unstable();
        let mut last = usize::MAX;
        for k in keep {
            if k != last {
                out.push(group[k]);
                last = k;
            }
        }
        start = end;
    }
    out
}

/// The points of `points` at least `tol_m` from the last one kept, with the first, the last,
/// the non-finite ones left out, and every index in `keep`; returns the points and where the
/// kept indices went. A cheap first pass over a long path, before drawing simplifies it further
/// at each view's own scale.
pub(crate) fn thin(points: &[[f64; 2]], tol_m: f64, keep: &[usize]) -> (Vec<[f64; 2]>, Vec<usize>) {
    let mut must = vec![false; points.len()];
    for &k in keep {
        if let Some(m) = must.get_mut(k) {
            *m = true;
        }
    }
    let last = points.iter().rposition(|p| p[0].is_finite() && p[1].is_finite());
    let (mut out, mut kept): (Vec<[f64; 2]>, Vec<usize>) = (Vec::new(), Vec::new());
    for (i, p) in points.iter().enumerate() {
        if !(p[0].is_finite() && p[1].is_finite()) {
            continue;
        }
        let far = out.last().is_none_or(|q: &[f64; 2]| (p[0] - q[0]).hypot(p[1] - q[1]) >= tol_m);
        if far || must[i] || Some(i) == last {
            if must[i] {
                kept.push(out.len());
            }
            out.push(*p);
        }
    }
    (out, kept)
}

/// `points` simplified to a tolerance of `tol_m` (see the module comment), keeping every index
/// in `keep` (sorted or not), the first and the last point. Non-finite points are left out.
pub(crate) fn simplify_path(points: &[[f64; 2]], tol_m: f64, keep: &[usize]) -> Vec<[f64; 2]> {
    let mut tol = if tol_m > 0.0 && tol_m.is_finite() { tol_m } else { 0.0 };
    loop {
        let out = simplify_once(points, tol, keep);
        if out.len() <= MAX_PATH_VERTICES.max(keep.len() + 2) || tol == 0.0 || tol > 1e9 {
            return out;
        }
        tol *= 2.0;
    }
}

fn simplify_once(points: &[[f64; 2]], tol: f64, keep: &[usize]) -> Vec<[f64; 2]> {
    let mut must: Vec<bool> = vec![false; points.len()];
    for &k in keep {
        if let Some(m) = must.get_mut(k) {
            *m = true;
        }
    }
    // Radial pass: indices of finite points at least `tol` from the last kept one.
    let finite = |p: &[f64; 2]| p[0].is_finite() && p[1].is_finite();
    let mut idx: Vec<usize> = Vec::new();
    let last_finite = points.iter().rposition(finite);
    for (i, p) in points.iter().enumerate() {
        if !finite(p) {
            continue;
        }
        let far = idx.last().is_none_or(|&j| {
            let q = points[j];
            (p[0] - q[0]).hypot(p[1] - q[1]) >= tol
        });
        if far || must[i] || Some(i) == last_finite {
            idx.push(i);
        }
    }
    if idx.len() <= 2 || tol == 0.0 {
        return idx.iter().map(|&i| points[i]).collect();
    }
    // Douglas-Peucker on the radial points, between consecutive must-keep points.
    let mut kept = vec![false; idx.len()];
    kept[0] = true;
    kept[idx.len() - 1] = true;
    for (k, &i) in idx.iter().enumerate() {
        // Chunks of at most RDP_CHUNK points bound the work at RDP_CHUNK per point even when
        // the splits come out lopsided (a zigzag, a path circling many times).
        if must[i] || k % RDP_CHUNK == 0 {
            kept[k] = true;
        }
    }
    let anchors: Vec<usize> = (0..idx.len()).filter(|&k| kept[k]).collect();
    let mut stack: Vec<(usize, usize)> = anchors.windows(2).map(|w| (w[0], w[1])).collect();
    while let Some((a, b)) = stack.pop() {
        if b <= a + 1 {
            continue;
        }
        let (pa, pb) = (points[idx[a]], points[idx[b]]);
        let (mut worst, mut worst_d) = (a, -1.0);
        for (k, &i) in idx.iter().enumerate().take(b).skip(a + 1) {
            let d = distance_to_segment(points[i], pa, pb);
            if d > worst_d {
                (worst, worst_d) = (k, d);
            }
        }
        if worst_d > tol {
            kept[worst] = true;
            stack.push((a, worst));
            stack.push((worst, b));
        }
    }
    idx.iter().zip(&kept).filter(|(_, &k)| k).map(|(&i, _)| points[i]).collect()
}

/// Distance from `p` to the segment `a`-`b`.
pub(crate) fn distance_to_segment(p: [f64; 2], a: [f64; 2], b: [f64; 2]) -> f64 {
    let (dx, dy) = (b[0] - a[0], b[1] - a[1]);
    let len2 = dx * dx + dy * dy;
    let t = if len2 > 0.0 { (((p[0] - a[0]) * dx + (p[1] - a[1]) * dy) / len2).clamp(0.0, 1.0) } else { 0.0 };
    (p[0] - a[0] - t * dx).hypot(p[1] - a[1] - t * dy)
}

/// The parts of polyline `pts` inside the window `[x0, x1] x [y0, y1]`, each segment cut at
/// the window's edges (Liang & Barsky 1984, "A new concept and method for line clipping").
pub(crate) fn clip_polyline(pts: &[[f64; 2]], [x0, x1, y0, y1]: [f64; 4]) -> Vec<Vec<[f64; 2]>> {
    let mut parts: Vec<Vec<[f64; 2]>> = Vec::new();
    let mut current: Vec<[f64; 2]> = Vec::new();
    for w in pts.windows(2) {
        let (a, b) = (w[0], w[1]);
        let (dx, dy) = (b[0] - a[0], b[1] - a[1]);
        let (mut t0, mut t1) = (0.0f64, 1.0f64);
        let mut inside = true;
        for (p, q) in [(-dx, a[0] - x0), (dx, x1 - a[0]), (-dy, a[1] - y0), (dy, y1 - a[1])] {
            if p == 0.0 {
                if q < 0.0 {
                    inside = false;
                }
            } else {
                let r = q / p;
                if p < 0.0 {
                    t0 = t0.max(r);
                } else {
                    t1 = t1.min(r);
                }
            }
        }
        if !inside || t0 > t1 || !(t0.is_finite() && t1.is_finite()) {
            if current.len() > 1 {
                parts.push(std::mem::take(&mut current));
            }
            current.clear();
            continue;
        }
        let pa = [a[0] + t0 * dx, a[1] + t0 * dy];
        let pb = [a[0] + t1 * dx, a[1] + t1 * dy];
        if current.last() != Some(&pa) {
            if current.len() > 1 {
                parts.push(std::mem::take(&mut current));
            }
            current.clear();
            current.push(pa);
        }
        current.push(pb);
        if t1 < 1.0 {
            parts.push(std::mem::take(&mut current));
        }
    }
    if current.len() > 1 {
        parts.push(current);
    }
    parts
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn per_column_keeps_every_peak_value_and_at_most_four_points_a_column() {
        // A million points of a wiggly series with one sharp peak of 0.93 (near x = 520.4) and
        // one dip of -0.4 (near x = 12), each a single point.
        let n = 1_000_000;
        let (peak, dip) = (981_887, 22_641);
        let pts: Vec<(f64, f64)> = (0..n)
            .map(|i| {
                let x = 530.0 * i as f64 / (n - 1) as f64;
                let y = 0.02 * (x * 7.0).sin();
                let y = if i == peak {
                    0.93
                } else if i == dip {
                    -0.4
                } else {
                    y
                };
                (x, y)
            })
            .collect();
        let out = per_column(&pts, 0.0, 530.0, 1300);
        assert!(out.len() <= 4 * 1301, "{} points", out.len());
        let max = out.iter().map(|p| p.1).fold(f64::NEG_INFINITY, f64::max);
        let min = out.iter().map(|p| p.1).fold(f64::INFINITY, f64::min);
        assert_eq!(max, 0.93, "the peak value itself survives");
        assert_eq!(min, -0.4);
        // In order along x, first and last kept.
        assert!(out.windows(2).all(|w| w[0].0 <= w[1].0));
        assert_eq!(out.first(), pts.first());
        assert_eq!(out.last(), pts.last());
    }

    #[test]
    fn the_highest_and_lowest_point_of_every_column_survive() {
        // 50 000 points of a noisy series over 0..100 m, cut to 300 columns. The column of a
        // point is worked out here from its x (floor((x - x0) * columns / width)), and the
        // extremes of every column by a plain scan, independently of the decimator's grouping.
        let n = 50_000;
        let pts: Vec<(f64, f64)> = (0..n)
            .map(|i| {
                let x = 100.0 * i as f64 / (n - 1) as f64;
                (x, (x * 3.7).sin() + 0.3 * ((i * 7919 % 101) as f64 / 101.0 - 0.5))
            })
            .collect();
        let columns = 300;
        let out = per_column(&pts, 0.0, 100.0, columns);
        let mut lo = vec![f64::INFINITY; columns + 1];
        let mut hi = vec![f64::NEG_INFINITY; columns + 1];
        for &(x, y) in &pts {
            let c = ((x / 100.0 * columns as f64).floor() as usize).min(columns);
            lo[c] = lo[c].min(y);
            hi[c] = hi[c].max(y);
        }
        for c in 0..=columns {
            if lo[c].is_finite() {
                assert!(out.iter().any(|p| p.1 == lo[c]), "column {c}: minimum {} lost", lo[c]);
                assert!(out.iter().any(|p| p.1 == hi[c]), "column {c}: maximum {} lost", hi[c]);
            }
        }
        assert!(out.len() <= 4 * (columns + 1), "{} points", out.len());
    }

    #[test]
    fn a_path_is_cut_to_the_vertex_bound_and_keeps_its_peaks_and_shape() {
        // A crawl: 400 000 steps along 500 m with 2 mm of jitter and one excursion to 0.9 m.
        let n = 400_000;
        let pts: Vec<[f64; 2]> = (0..n)
            .map(|i| {
                let x = 500.0 * i as f64 / (n - 1) as f64;
                let bump = 0.9 * (-((x - 300.0) / 3.0).powi(2)).exp();
                [x, bump + 0.002 * ((i * 7919) % 13) as f64 / 13.0]
            })
            .collect();
        let peak = (0..n).max_by(|&a, &b| pts[a][1].total_cmp(&pts[b][1])).expect("points");
        let tol = 0.2;
        let out = simplify_path(&pts, tol, &[peak]);
        assert!(out.len() <= MAX_PATH_VERTICES, "{} vertices", out.len());
        assert!(out.len() < 200, "a straight run with one bump needs few vertices: {}", out.len());
        assert!(out.contains(&pts[peak]), "the peak vertex is kept");
        assert_eq!(out.first(), pts.first());
        assert_eq!(out.last(), pts.last());
        // Every original point lies within two tolerances of the simplified line.
        for p in pts.iter().step_by(97) {
            let d = out.windows(2).map(|w| distance_to_segment(*p, w[0], w[1])).fold(f64::INFINITY, f64::min);
            assert!(d <= 2.0 * tol + 1e-9, "{p:?} is {d} m off");
        }
    }

    #[test]
    fn clipping_keeps_what_lies_in_the_window_and_cuts_at_its_edges() {
        // A line from (-10, 5) to (30, 5) through the window [0, 10] x [0, 10], out, and back in
        // from above at x = 5.
        let pts = [[-10.0, 5.0], [30.0, 5.0], [5.0, 20.0], [5.0, 2.0]];
        let parts = clip_polyline(&pts, [0.0, 10.0, 0.0, 10.0]);
        assert_eq!(parts.len(), 2, "{parts:?}");
        assert_eq!(parts[0], vec![[0.0, 5.0], [10.0, 5.0]]);
        assert_eq!(parts[1], vec![[5.0, 10.0], [5.0, 2.0]]);
        assert!(clip_polyline(&[[20.0, 20.0], [30.0, 30.0]], [0.0, 10.0, 0.0, 10.0]).is_empty());
    }

    #[test]
    fn a_path_above_the_bound_at_its_tolerance_is_simplified_further() {
        // A zigzag of 20 000 corners 1 m apart: every corner matters at 1 cm.
        let pts: Vec<[f64; 2]> = (0..20_000).map(|i| [i as f64, if i % 2 == 0 { 0.0 } else { 1.0 }]).collect();
        let out = simplify_path(&pts, 0.01, &[]);
        assert!(out.len() <= MAX_PATH_VERTICES);
        assert!(out.len() >= 2);
    }
}

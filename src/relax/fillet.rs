//! A circular fillet at a polyline corner: the arc of radius R tangent to both sides of the
//! corner, sampled densely. Plane geometry, local metres.

/// A fillet replacing the corner at `vertex`.
#[derive(Debug, Clone, PartialEq)]
pub struct Fillet {
    /// Tangent point on the incoming side.
    pub start: [f64; 2],
    /// Tangent point on the outgoing side.
    pub end: [f64; 2],
    pub center: [f64; 2],
    pub radius_m: f64,
    /// Signed turning angle, radians (positive left).
    pub turn_rad: f64,
    /// Distance from the vertex to each tangent point, R tan(|theta|/2).
    pub tangent_length_m: f64,
    /// Arc points from `start` to `end` inclusive, at most `spacing_m` apart.
    pub points: Vec<[f64; 2]>,
}

/// Signed turning angle at a corner from the incoming direction `a -> v` to the outgoing
/// direction `v -> b`, radians in (-pi, pi], positive for a left turn. `None` when a side has
/// zero length.
pub fn turning_angle_rad(a: [f64; 2], v: [f64; 2], b: [f64; 2]) -> Option<f64> {
    let d1 = [v[0] - a[0], v[1] - a[1]];
    let d2 = [b[0] - v[0], b[1] - v[1]];
    if d1[0].hypot(d1[1]) <= 0.0 || d2[0].hypot(d2[1]) <= 0.0 {
        return None;
    }
    Some((d1[0] * d2[1] - d1[1] * d2[0]).atan2(d1[0] * d2[0] + d1[1] * d2[1]))
}

/// Tangent length of a fillet of radius `radius_m` at a corner turning by `turn_rad`.
///
/// Plane geometry: the centre lies on the bisector of the corner's interior angle pi - theta,
/// at distance R from both sides. The right triangle vertex - tangent point - centre has its
/// angle at the vertex equal to half the interior angle, (pi - theta)/2, with the opposite
/// side R, so the tangent length is R / tan((pi - theta)/2) = R tan(theta/2). Its hypotenuse,
/// the vertex-to-centre distance, is R / sin((pi - theta)/2) = R / cos(theta/2), so the arc's
/// midpoint (on that line, R from the centre) lies R (1/cos(theta/2) - 1) from the vertex.
pub fn tangent_length_m(radius_m: f64, turn_rad: f64) -> f64 {
    radius_m * (0.5 * turn_rad.abs()).tan()
}

/// The fillet of radius `radius_m` at the corner `a -> v -> b`, sampled with at most
/// `spacing_m` between points. `None` for a straight (|theta| < 1e-9) or reversing corner or
/// degenerate input. The caller checks that the tangent length fits on both sides.
pub fn fillet(a: [f64; 2], v: [f64; 2], b: [f64; 2], radius_m: f64, spacing_m: f64) -> Option<Fillet> {
    let theta = turning_angle_rad(a, v, b)?;
    if theta.abs() < 1e-9 || theta.abs() >= std::f64::consts::PI - 1e-9 || !(radius_m > 0.0) || !(spacing_m > 0.0) {
        return None;
    }
    let unit = |p: [f64; 2], q: [f64; 2]| {
        let l = (q[0] - p[0]).hypot(q[1] - p[1]);
        [(q[0] - p[0]) / l, (q[1] - p[1]) / l]
    };
    let (d1, d2) = (unit(a, v), unit(v, b));
    let t = tangent_length_m(radius_m, theta);
    let start = [v[0] - t * d1[0], v[1] - t * d1[1]];
    let end = [v[0] + t * d2[0], v[1] + t * d2[1]];
    let side = theta.signum();
    // Centre: from the start tangent point, R along the normal on the side the route turns to.
    let center = [start[0] - side * radius_m * d1[1], start[1] + side * radius_m * d1[0]];
    let n = ((radius_m * theta.abs() / spacing_m).ceil() as usize).max(2);
    let r0 = [start[0] - center[0], start[1] - center[1]];
    let points = (0..=n)
        .map(|k| {
            if k == n {
                return end;
            }
            let phi = theta * k as f64 / n as f64;
            let (s, c) = phi.sin_cos();
            [center[0] + c * r0[0] - s * r0[1], center[1] + s * r0[0] + c * r0[1]]
        })
        .collect();
    Some(Fillet { start, end, center, radius_m, turn_rad: theta, tangent_length_m: t, points })
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::route::plan::{dist, menger_curvature};
    use approx::assert_relative_eq;

    #[test]
    fn tangent_length_and_midpoint_offset_follow_plane_geometry() {
        let r = 3.0;
        for deg in [20.0_f64, 60.0, 90.0, 135.0] {
            let theta = deg.to_radians();
            // Incoming along +x into the vertex at the origin, leaving at angle theta (left turn).
            let a = [-20.0, 0.0];
            let v = [0.0, 0.0];
            let b = [20.0 * theta.cos(), 20.0 * theta.sin()];
            let f = fillet(a, v, b, r, 0.01).expect("fillet");
            assert_relative_eq!(f.turn_rad, theta, epsilon = 1e-12);
            assert_relative_eq!(f.tangent_length_m, r * (theta / 2.0).tan(), epsilon = 1e-12);
            assert_relative_eq!(dist(v, f.start), r * (theta / 2.0).tan(), epsilon = 1e-9);
            assert_relative_eq!(dist(v, f.end), r * (theta / 2.0).tan(), epsilon = 1e-9);
            // Every arc point is R from the centre; the centre is R from both sides' lines.
            for p in &f.points {
                assert_relative_eq!(dist(*p, f.center), r, epsilon = 1e-9);
            }
            assert_relative_eq!(f.center[1], r, epsilon = 1e-9);
            // Arc midpoint: R (1/cos(theta/2) - 1) from the vertex.
            let mid_phi = theta / 2.0;
            let mid = [
                f.center[0] + r * (mid_phi - std::f64::consts::FRAC_PI_2).cos(),
                f.center[1] + r * (mid_phi - std::f64::consts::FRAC_PI_2).sin(),
            ];
            assert_relative_eq!(dist(v, mid), r * (1.0 / (theta / 2.0).cos() - 1.0), epsilon = 1e-9);
            let closest = f.points.iter().map(|p| dist(v, *p)).fold(f64::INFINITY, f64::min);
            assert_relative_eq!(closest, r * (1.0 / (theta / 2.0).cos() - 1.0), epsilon = 1e-3);
        }
    }

    #[test]
    fn right_turns_mirror_and_sampled_points_read_the_fillet_curvature() {
        let f = fillet([0.0, 10.0], [0.0, 0.0], [10.0, 0.0], 2.0, 0.1).expect("fillet");
        assert!(f.turn_rad > 0.0); // south then east is a left turn
        let g = fillet([0.0, -10.0], [0.0, 0.0], [10.0, 0.0], 2.0, 0.1).expect("fillet");
        assert!(g.turn_rad < 0.0);
        // Heading north then east: the centre lies east of the incoming side.
        assert_relative_eq!(g.center[0], 2.0, epsilon = 1e-9);
        assert_relative_eq!(g.center[1], -2.0, epsilon = 1e-9);
        for w in g.points.windows(2) {
            assert!(dist(w[0], w[1]) <= 0.1 + 1e-12);
        }
        let n = g.points.len();
        let k = menger_curvature(g.points[0], g.points[n / 2], g.points[n - 1]);
        assert_relative_eq!(k, -0.5, epsilon = 1e-9);
        assert!(fillet([0.0, 0.0], [1.0, 0.0], [2.0, 0.0], 1.0, 0.1).is_none());
    }
}

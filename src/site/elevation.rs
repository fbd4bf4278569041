//! Altitude and cross slope along a route from an elevation raster (README, "Elevation
//! raster"). Local frame, metres; slopes as the tangent of the angle.
//!
//! Each leg is first densified so no two points are farther apart than the raster's pixel size
//! (at least [`MIN_SPACING_M`]), so a hill between two distant vertices is not missed; the
//! inserted points lie on the leg's segments. Every point takes the raster's altitude
//! (bilinear), replacing the route's own. The cross slope at a point is the ground's gradient
//! component across the direction of travel, a central difference over one pixel size either
//! side along the left normal: (z(p + d n) - z(p - d n)) / 2d, positive when the left side is
//! higher (one-sided where one side leaves the raster). The direction at a vertex bisects its
//! two segments. On a plane z = a x + b y the difference is exact: with heading h the cross
//! slope is -a sin h + b cos h and the grade along the leg a cos h + b sin h.
//!
//! Points reach the raster's CRS through the route's frame: a GeoJSON route's local metres go
//! back to lon/lat (the exact inverse of the reader's projection) and, for a UTM raster, on
//! through Krueger's series; a CSV route's metres are the raster's easting and northing
//! (`--map-frame local`).

use super::geotiff::{Raster, RasterCrs, SampleError};
use super::split::place;
use crate::route::plan::dist;
use crate::route::{GeoOrigin, Leg, Route};

/// Least spacing of the points the raster is sampled at, metres.
pub const MIN_SPACING_M: f64 = 0.5;
/// Route altitudes differing from the raster's by more than this in median are reported.
pub const MEDIAN_DISAGREEMENT_M: f64 = 5.0;
/// Route altitudes differing from the raster's by more than this anywhere are reported.
pub const MAX_DISAGREEMENT_M: f64 = 20.0;

/// Where a route meets the raster's coordinates.
pub enum RouteFrame<'a> {
    /// A GeoJSON route: local metres about this origin.
    Geographic(&'a GeoOrigin),
    /// A CSV route whose metres are the raster's projected coordinates.
    Projected,
}

/// A point the raster could not give an altitude for.
#[derive(Debug, Clone, PartialEq)]
pub struct Unsampled {
    pub leg: usize,
    pub at: [f64; 2],
    pub why: SampleError,
}

/// Why a route could not be put on the raster.
#[derive(Debug, Clone, PartialEq)]
pub enum ElevationError {
    Unsampled(Unsampled),
    /// Densified at `spacing_m`, leg `leg` would have `points` points, above the limit (checked
    /// before anything is allocated).
    TooManyPoints {
        leg: usize,
        points: f64,
        spacing_m: f64,
    },
}

/// Points a leg has once densified at `spacing_m` (as [`Leg::densify_stations`] makes them).
fn densified_count(leg: &Leg, spacing_m: f64) -> f64 {
    1.0 + leg.points.windows(2).map(|w| (dist(w[0], w[1]) / spacing_m - 1e-9).ceil().max(1.0)).sum::<f64>()
}

impl Raster {
    /// Model coordinates of a local point.
    fn model_xy(&self, frame: &RouteFrame, p: [f64; 2]) -> (f64, f64) {
        match frame {
            RouteFrame::Projected => (p[0], p[1]),
            RouteFrame::Geographic(o) => {
                let (lon, lat) = o.to_lon_lat_at_height(p[0], p[1], o.alt_m);
                match self.crs {
                    RasterCrs::Wgs84LonLat => (lon, lat),
                    RasterCrs::Utm(zone) => zone.to_utm(lat, lon),
                }
            }
        }
    }

    /// The raster's altitude at a local point.
    pub fn altitude_at(&self, frame: &RouteFrame, p: [f64; 2]) -> Result<f64, SampleError> {
        let (x, y) = self.model_xy(frame, p);
        self.sample(x, y)
    }

    /// The smaller pixel side in metres near local point `p` (degrees converted on the WGS 84
    /// sphere of equal area radius, close enough for a sampling step).
    pub fn pixel_size_m(&self, frame: &RouteFrame, p: [f64; 2]) -> f64 {
        const R_M: f64 = 6_371_007.2;
        let (sx, sy) = self.pixel_size();
        match self.crs {
            RasterCrs::Utm(_) => sx.min(sy),
            RasterCrs::Wgs84LonLat => {
                let (_, lat) = self.model_xy(frame, p);
                let m_per_deg = R_M * std::f64::consts::PI / 180.0;
                (sx * m_per_deg * lat.to_radians().cos()).min(sy * m_per_deg)
            }
        }
    }
}

/// Fills every leg's altitude and cross slope from the raster, densifying the legs first; a leg
/// that would get more than `max_points_per_leg` points is refused before it is densified.
/// Returns the warnings for legs whose own altitudes disagree with the raster's.
pub fn apply_elevation(
    route: &mut Route,
    raster: &Raster,
    frame: &RouteFrame,
    max_points_per_leg: usize,
) -> Result<Vec<String>, ElevationError> {
    let start = route.legs.first().and_then(|l| l.points.first()).copied().unwrap_or([0.0, 0.0]);
    let spacing_m = raster.pixel_size_m(frame, start).max(MIN_SPACING_M);
    for (leg, l) in route.legs.iter().enumerate() {
        let points = densified_count(l, spacing_m);
        if points > max_points_per_leg as f64 {
            return Err(ElevationError::TooManyPoints { leg, points, spacing_m });
        }
    }
    let mut warnings = Vec::new();
    for index in 0..route.legs.len() {
        let leg = &route.legs[index];
        if let Some(w) = compare_altitudes(route, index, raster, frame) {
            warnings.push(w);
        }
        let mut dense = leg.resampled(&leg.densify_stations(spacing_m));
        let unsampled = |at: [f64; 2], why| ElevationError::Unsampled(Unsampled { leg: index, at, why });
        let altitude_m = dense
            .points
            .iter()
            .map(|&p| raster.altitude_at(frame, p).map_err(|why| unsampled(p, why)))
            .collect::<Result<Vec<_>, _>>()?;
        let cross_slope = (0..dense.points.len())
            .map(|i| {
                cross_slope_at(&dense.points, i, raster, frame, spacing_m)
                    .map_err(|why| unsampled(dense.points[i], why))
            })
            .collect::<Result<Vec<_>, _>>()?;
        dense.altitude_m = Some(altitude_m);
        dense.cross_slope = Some(cross_slope);
        route.legs[index] = dense;
    }
    Ok(warnings)
}

/// Unit direction of travel at point `i` of a polyline: the bisector of its segments.
fn direction_at(points: &[[f64; 2]], i: usize) -> [f64; 2] {
    let unit = |a: [f64; 2], b: [f64; 2]| {
        let d = dist(a, b).max(1e-12);
        [(b[0] - a[0]) / d, (b[1] - a[1]) / d]
    };
    let before = i.checked_sub(1).and_then(|j| Some(unit(*points.get(j)?, *points.get(i)?)));
    let after = points.get(i + 1).and_then(|&b| Some(unit(*points.get(i)?, b)));
    let d = match (before, after) {
        (Some(u), Some(v)) => [u[0] + v[0], u[1] + v[1]],
        (Some(u), None) | (None, Some(u)) => u,
        (None, None) => [1.0, 0.0],
    };
    let n = d[0].hypot(d[1]);
    // A full reversal has no bisector; the outgoing segment then decides.
    if n < 1e-9 {
        after.or(before).unwrap_or([1.0, 0.0])
    } else {
        [d[0] / n, d[1] / n]
    }
}

/// The cross slope at point `i`: positive when the ground is higher on the left.
fn cross_slope_at(
    points: &[[f64; 2]],
    i: usize,
    raster: &Raster,
    frame: &RouteFrame,
    step_m: f64,
) -> Result<f64, SampleError> {
    let p = points.get(i).copied().unwrap_or([0.0, 0.0]);
    let d = direction_at(points, i);
    let left = [-d[1], d[0]];
    let at = |s: f64| raster.altitude_at(frame, [p[0] + s * left[0], p[1] + s * left[1]]);
    match (at(step_m), at(-step_m)) {
        (Ok(zl), Ok(zr)) => Ok((zl - zr) / (2.0 * step_m)),
        (Ok(zl), Err(_)) => Ok((zl - at(0.0)?) / step_m),
        (Err(_), Ok(zr)) => Ok((at(0.0)? - zr) / step_m),
        (Err(e), Err(_)) => Err(e),
    }
}

/// A warning when the leg's own altitudes differ from the raster's by more than
/// [`MEDIAN_DISAGREEMENT_M`] in median or [`MAX_DISAGREEMENT_M`] anywhere.
fn compare_altitudes(route: &Route, index: usize, raster: &Raster, frame: &RouteFrame) -> Option<String> {
    let leg: &Leg = route.legs.get(index)?;
    let own = leg.altitude_m.as_ref()?;
    let mut diffs: Vec<(f64, [f64; 2])> = Vec::with_capacity(own.len());
    for (&p, &z) in leg.points.iter().zip(own) {
        diffs.push((z - raster.altitude_at(frame, p).ok()?, p));
    }
    let mut abs: Vec<f64> = diffs.iter().map(|d| d.0.abs()).collect();
    abs.sort_by(f64::total_cmp);
    let median = match abs.len() {
        0 => return None,
        n if n % 2 == 1 => abs[n / 2],
        n => 0.5 * (abs[n / 2 - 1] + abs[n / 2]),
    };
    let (worst, at) = diffs.iter().copied().max_by(|a, b| a.0.abs().total_cmp(&b.0.abs()))?;
    if median <= MEDIAN_DISAGREEMENT_M && worst.abs() <= MAX_DISAGREEMENT_M {
        return None;
    }
    Some(format!(
        "leg {} ({}): its altitudes differ from the elevation raster {} by {median:.1} m in median and by {:+.1} m at \
         most, at {}; the raster's are used (a steady offset often means one is above the ellipsoid and the other \
         above sea level)",
        index + 1,
        leg.position,
        raster.source.display(),
        worst,
        place(route.origin.as_ref(), at)
    ))
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::route::SourcePosition;
    use crate::site::utm::UtmZone;
    use approx::assert_relative_eq;
    use std::path::Path;

    /// A UTM raster of the plane z = z0 + a (E - E0) + b (N - N0), 2 m pixels, 200 x 200.
    fn plane(a: f64, b: f64) -> Raster {
        let (e0, n0, z0) = (400_000.0, 7_000_000.0, 300.0);
        let (w, h) = (200usize, 200usize);
        let mut values = Vec::with_capacity(w * h);
        for r in 0..h {
            for c in 0..w {
                let (e, n) = (e0 + 2.0 * c as f64, n0 - 2.0 * r as f64);
                values.push(z0 + a * (e - e0) + b * (n - n0));
            }
        }
        let crs = RasterCrs::Utm(UtmZone { zone: 33, north: true });
        Raster::from_grid(Path::new("plane.tif"), crs, w, values, [e0, n0], [2.0, -2.0], false, None)
    }

    fn route(points: Vec<[f64; 2]>) -> Route {
        let leg = Leg::new("grass", points, SourcePosition::Line(2));
        Route { name: "r".into(), source: "r.csv".into(), origin: None, legs: vec![leg], warnings: Vec::new() }
    }

    #[test]
    fn grade_and_cross_slope_of_a_tilted_plane() {
        let (a, b) = (0.05, -0.02);
        let raster = plane(a, b);
        for h_deg in [0.0_f64, 30.0, 135.0, 250.0] {
            let h = h_deg.to_radians();
            let p0 = [400_150.0, 6_999_800.0];
            let p1 = [p0[0] + 40.0 * h.cos(), p0[1] + 40.0 * h.sin()];
            let mut r = route(vec![p0, p1]);
            apply_elevation(&mut r, &raster, &RouteFrame::Projected, usize::MAX).expect("covered");
            let leg = &r.legs[0];
            let (alt, cross) = (leg.altitude_m.as_ref().expect("alt"), leg.cross_slope.as_ref().expect("cross"));
            // Densified at the 2 m pixel size: 20 segments.
            assert_eq!(leg.points.len(), 21);
            // Derived here: along heading h the grade is tan = a cos h + b sin h; across (left
            // normal (-sin h, cos h)) the slope is -a sin h + b cos h.
            let n = leg.points.len() - 1;
            let grade = (alt[n] - alt[0]) / 40.0;
            assert_relative_eq!(grade.atan(), (a * h.cos() + b * h.sin()).atan(), epsilon = 1e-9);
            for &c in cross {
                assert_relative_eq!(c, -a * h.sin() + b * h.cos(), epsilon = 1e-9);
            }
            assert_relative_eq!(
                crate::site::max_cross_slope_pct(leg).expect("pct"),
                100.0 * (-a * h.sin() + b * h.cos()).abs(),
                epsilon = 1e-7
            );
        }
    }

    #[test]
    fn a_point_off_the_raster_names_its_leg_and_place() {
        let raster = plane(0.0, 0.0);
        let mut r = route(vec![[400_100.0, 6_999_900.0], [400_100.0, 7_000_100.0]]);
        let Err(ElevationError::Unsampled(e)) = apply_elevation(&mut r, &raster, &RouteFrame::Projected, usize::MAX)
        else {
            panic!("expected an uncovered point")
        };
        assert_eq!((e.leg, e.why), (0, SampleError::Uncovered));
        // The raster's north edge is at N0 + 1 m (half a pixel); the first point beyond it on the 2 m spacing.
        assert!(e.at[1] > 7_000_001.0 && e.at[1] <= 7_000_003.0, "{:?}", e.at);
    }

    #[test]
    fn route_altitudes_far_from_the_raster_are_reported() {
        let raster = plane(0.0, 0.0);
        let mut r = route(vec![[400_100.0, 6_999_900.0], [400_110.0, 6_999_900.0], [400_120.0, 6_999_900.0]]);
        r.legs[0].altitude_m = Some(vec![300.5, 301.0, 299.0]);
        assert!(apply_elevation(&mut r.clone(), &raster, &RouteFrame::Projected, usize::MAX).expect("ok").is_empty());
        // 20 m at the 2 m pixel size: 11 points; a limit of 10 refuses it before densifying.
        let too_many = apply_elevation(&mut r.clone(), &raster, &RouteFrame::Projected, 10);
        assert!(matches!(too_many, Err(ElevationError::TooManyPoints { leg: 0, points, .. }) if points == 11.0));
        r.legs[0].altitude_m = Some(vec![300.5, 330.0, 299.0]);
        let w = apply_elevation(&mut r, &raster, &RouteFrame::Projected, usize::MAX).expect("ok");
        assert_eq!(w.len(), 1);
        assert!(w[0].starts_with("leg 1 (line 2): its altitudes differ from the elevation raster plane.tif by 1.0 m in median and by +30.0 m at most, at x 400110.00 m, y 6999900.00 m"), "{}", w[0]);
        // The raster's altitudes replace the route's.
        assert!(r.legs[0].altitude_m.as_ref().expect("alt").iter().all(|&z| (z - 300.0).abs() < 1e-9));
    }
}

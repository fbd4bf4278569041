//! Reference test of the GeoJSON projection (`skidroute::route::GeoOrigin`, exact WGS 84
//! geodetic -> ECEF -> ENU) against geodesic distances on the WGS 84 ellipsoid.
//!
//! Source of the reference values: the geographiclib-rs crate (0.2.7), a Rust port of
//! C. F. F. Karney (2013), "Algorithms for geodesics", J. Geodesy 87:43-55, which solves the
//! direct and inverse geodesic problems to round-off. WGS 84 constants (a = 6378137 m,
//! 1/f = 298.257223563) from NIMA TR8350.2, the same ones `Geodesic::wgs84()` uses.
//!
//! Within 20 km the horizontal distance in the local tangent plane differs from the geodesic
//! length by a few parts per million (curvature, about d^2 / 6R^2), so 0.05 % leaves a wide
//! margin for the method while still catching a wrong axis, scale or constant.

use approx::assert_relative_eq;
use geographiclib_rs::{DirectGeodesic, Geodesic, InverseGeodesic};
use skidroute::route::GeoOrigin;

/// Relative tolerance on distances: 0.05 %.
const TOLERANCE: f64 = 5e-4;

/// (lat_deg, lon_deg, alt_m) origins: high northern latitude, mid latitude with altitude, near
/// the equator and the antimeridian, and two in the southern hemisphere (invented points).
const ORIGINS: [(f64, f64, f64); 5] =
    [(69.61, 18.73, 0.0), (47.21, 8.12, 400.0), (0.5, 179.9, 0.0), (-45.61, 170.31, 0.0), (-54.62, -68.07, 20.0)];

/// Geodesic azimuths, degrees clockwise from north.
const BEARINGS_DEG: [f64; 9] = [0.0, 17.0, 45.0, 90.0, 135.0, 180.0, 225.0, 270.0, 315.0];
const DISTANCES_M: [f64; 5] = [10.0, 100.0, 1_000.0, 5_000.0, 20_000.0];

/// Horizontal (east, north) distance between two local points, metres.
fn horizontal_m(a: [f64; 3], b: [f64; 3]) -> f64 {
    (b[0] - a[0]).hypot(b[1] - a[1])
}

/// Projects a point on the ellipsoid (height 0), where the geodesic lies.
fn project(origin: &GeoOrigin, lat_deg: f64, lon_deg: f64) -> [f64; 3] {
    origin.to_local(lon_deg, lat_deg, 0.0)
}

#[test]
fn distance_from_the_origin_matches_the_geodesic() {
    let geodesic = Geodesic::wgs84();
    for (lat0_deg, lon0_deg, alt0_m) in ORIGINS {
        let origin = GeoOrigin::new(lat0_deg, lon0_deg, alt0_m);
        let origin_local_m = project(&origin, lat0_deg, lon0_deg);
        for bearing_deg in BEARINGS_DEG {
            for distance_m in DISTANCES_M {
                let (lat_deg, lon_deg): (f64, f64) = geodesic.direct(lat0_deg, lon0_deg, bearing_deg, distance_m);
                let s12_m: f64 = geodesic.inverse(lat0_deg, lon0_deg, lat_deg, lon_deg);
                let local_m = horizontal_m(origin_local_m, project(&origin, lat_deg, lon_deg));
                assert_relative_eq!(local_m, s12_m, max_relative = TOLERANCE);
            }
        }
    }
}

#[test]
fn distance_between_nearby_far_points_matches_the_geodesic() {
    let geodesic = Geodesic::wgs84();
    for (lat0_deg, lon0_deg, alt0_m) in ORIGINS {
        let origin = GeoOrigin::new(lat0_deg, lon0_deg, alt0_m);
        for bearing_deg in BEARINGS_DEG {
            // A point 20 km out, and a second one 50 m from it in another direction.
            let (lat1_deg, lon1_deg): (f64, f64) = geodesic.direct(lat0_deg, lon0_deg, bearing_deg, 20_000.0);
            let (lat2_deg, lon2_deg): (f64, f64) = geodesic.direct(lat1_deg, lon1_deg, bearing_deg + 70.0, 50.0);
            let s12_m: f64 = geodesic.inverse(lat1_deg, lon1_deg, lat2_deg, lon2_deg);
            let local_m = horizontal_m(project(&origin, lat1_deg, lon1_deg), project(&origin, lat2_deg, lon2_deg));
            assert_relative_eq!(local_m, s12_m, max_relative = TOLERANCE);
        }
    }
}

#[test]
fn bearing_from_the_origin_is_preserved() {
    // East and north axes: a geodesic leaving at azimuth az lands near atan2(east, north) = az.
    // 0.05 % of the distance across track is 5e-4 rad.
    let geodesic = Geodesic::wgs84();
    for (lat0_deg, lon0_deg, alt0_m) in ORIGINS {
        let origin = GeoOrigin::new(lat0_deg, lon0_deg, alt0_m);
        for bearing_deg in BEARINGS_DEG {
            let (lat_deg, lon_deg): (f64, f64) = geodesic.direct(lat0_deg, lon0_deg, bearing_deg, 5_000.0);
            let [east_m, north_m, _up_m] = project(&origin, lat_deg, lon_deg);
            let azimuth_rad = east_m.atan2(north_m);
            let difference_rad = (azimuth_rad - bearing_deg.to_radians() + std::f64::consts::PI)
                .rem_euclid(std::f64::consts::TAU)
                - std::f64::consts::PI;
            assert!(
                difference_rad.abs() < TOLERANCE,
                "origin {lat0_deg}, {lon0_deg} bearing {bearing_deg}: {difference_rad} rad"
            );
        }
    }
}

#[test]
fn round_trip_through_the_public_api() {
    let geodesic = Geodesic::wgs84();
    for (lat0_deg, lon0_deg, alt0_m) in ORIGINS {
        let origin = GeoOrigin::new(lat0_deg, lon0_deg, alt0_m);
        for bearing_deg in BEARINGS_DEG {
            let (lat_deg, lon_deg): (f64, f64) = geodesic.direct(lat0_deg, lon0_deg, bearing_deg, 20_000.0);
            let [east_m, north_m, up_m] = origin.to_local(lon_deg, lat_deg, 35.0);
            let (lon_back_deg, lat_back_deg, alt_back_m) = origin.to_geodetic(east_m, north_m, up_m);
            // Longitudes near the antimeridian may come back as +-180 apart.
            let dlon_deg = (lon_back_deg - lon_deg + 180.0).rem_euclid(360.0) - 180.0;
            assert!(dlon_deg.abs() < 1e-10, "{lon_back_deg} vs {lon_deg}");
            assert_relative_eq!(lat_back_deg, lat_deg, epsilon = 1e-10);
            assert_relative_eq!(alt_back_m, 35.0, epsilon = 1e-6);
        }
    }
}

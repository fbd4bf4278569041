//! Exact WGS 84 projection between geodetic coordinates (degrees, metres above the ellipsoid) and
//! a local east-north-up frame (metres) about an origin: geodetic -> ECEF -> ENU and back.
//!
//! GeoJSON routes are projected with this once, when they are read (docs/method.md, Frames); predicted paths go
//! back through [`GeoOrigin::to_geodetic`]. No flat-earth shortcut: an equirectangular
//! approximation is metres off at 20 km, this is sub-millimetre.

/// WGS 84 semi-major axis a, metres (NIMA TR8350.2, 3rd ed., Table 3.1).
const WGS84_A_M: f64 = 6_378_137.0;
/// WGS 84 flattening f = 1 / 298.257223563 (NIMA TR8350.2, 3rd ed., Table 3.1).
const WGS84_F: f64 = 1.0 / 298.257_223_563;
/// First eccentricity squared, e^2 = f (2 - f).
const WGS84_E2: f64 = WGS84_F * (2.0 - WGS84_F);
/// Most iterations of the ECEF -> geodetic loop; it converges in 2-3 near the Earth's surface.
const MAX_GEODETIC_ITERATIONS: usize = 10;

/// The origin of a local east-north-up frame on the WGS 84 ellipsoid.
///
/// Constants: a = 6378137.0 m, 1/f = 298.257223563, from NIMA TR8350.2 "Department of Defense
/// World Geodetic System 1984" (3rd ed., 2000), Table 3.1. Note the argument orders: `new` takes
/// latitude first, while [`to_local`](Self::to_local) takes and
/// [`to_geodetic`](Self::to_geodetic) returns longitude first, as GeoJSON positions do.
///
/// ```
/// use skidroute::route::GeoOrigin;
///
/// let origin = GeoOrigin::new(69.65, 18.96, 0.0);
/// let [east_m, north_m, _up_m] = origin.to_local(18.97, 69.66, 0.0);
/// assert!(east_m > 300.0 && north_m > 1000.0);
/// let (lon_deg, lat_deg, alt_m) = origin.to_geodetic(east_m, north_m, 0.0);
/// assert!((lon_deg - 18.97).abs() < 1e-9 && (lat_deg - 69.66).abs() < 1e-9);
/// assert!(alt_m > 0.0); // the tangent plane rises above the curved ellipsoid
/// ```
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct GeoOrigin {
    pub lat_deg: f64,
    pub lon_deg: f64,
    /// Height above the WGS 84 ellipsoid, metres.
    pub alt_m: f64,
}

impl GeoOrigin {
    /// An origin at geodetic latitude and longitude (degrees) and ellipsoidal height (metres).
    pub fn new(lat_deg: f64, lon_deg: f64, alt_m: f64) -> Self {
        GeoOrigin { lat_deg, lon_deg, alt_m }
    }

    /// Projects a geodetic point to local [east, north, up] metres about this origin.
    pub fn to_local(&self, lon_deg: f64, lat_deg: f64, alt_m: f64) -> [f64; 3] {
        let point_m = geodetic_to_ecef(lat_deg.to_radians(), lon_deg.to_radians(), alt_m);
        let origin_m = self.ecef_m();
        let d = [point_m[0] - origin_m[0], point_m[1] - origin_m[1], point_m[2] - origin_m[2]];
        let r = self.rotation();
        [
            r[0][0] * d[0] + r[0][1] * d[1] + r[0][2] * d[2],
            r[1][0] * d[0] + r[1][1] * d[1] + r[1][2] * d[2],
            r[2][0] * d[0] + r[2][1] * d[1] + r[2][2] * d[2],
        ]
    }

    /// Inverse of [`to_local`](Self::to_local): local east, north, up metres to
    /// (longitude degrees, latitude degrees, ellipsoidal height metres).
    pub fn to_geodetic(&self, east_m: f64, north_m: f64, up_m: f64) -> (f64, f64, f64) {
        // The ENU -> ECEF rotation is the transpose of the ECEF -> ENU one.
        let r = self.rotation();
        let o = self.ecef_m();
        let x_m = o[0] + r[0][0] * east_m + r[1][0] * north_m + r[2][0] * up_m;
        let y_m = o[1] + r[0][1] * east_m + r[1][1] * north_m + r[2][1] * up_m;
        let z_m = o[2] + r[0][2] * east_m + r[1][2] * north_m + r[2][2] * up_m;
        let (lat_rad, lon_rad, alt_m) = ecef_to_geodetic([x_m, y_m, z_m]);
        (lon_rad.to_degrees(), lat_rad.to_degrees(), alt_m)
    }

    /// Local east, north metres to (longitude, latitude) degrees of the point whose
    /// ellipsoidal height is `height_m`: the inverse of projecting (lon, lat, `height_m`) with
    /// [`to_local`](Self::to_local) and dropping the up component. Routes and maps without
    /// altitude are projected at the origin's height, so `height_m = self.alt_m` brings their
    /// points back exactly.
    pub fn to_lon_lat_at_height(&self, east_m: f64, north_m: f64, height_m: f64) -> (f64, f64) {
        let mut up_m = height_m - self.alt_m;
        let (mut lon, mut lat, mut alt) = self.to_geodetic(east_m, north_m, up_m);
        for _ in 0..3 {
            up_m += height_m - alt;
            (lon, lat, alt) = self.to_geodetic(east_m, north_m, up_m);
        }
        (lon, lat)
    }

    fn ecef_m(&self) -> [f64; 3] {
        geodetic_to_ecef(self.lat_deg.to_radians(), self.lon_deg.to_radians(), self.alt_m)
    }

    /// Rows are the east, north and up unit vectors expressed in ECEF.
    fn rotation(&self) -> [[f64; 3]; 3] {
        let (sin_lat, cos_lat) = self.lat_deg.to_radians().sin_cos();
        let (sin_lon, cos_lon) = self.lon_deg.to_radians().sin_cos();
        [
            [-sin_lon, cos_lon, 0.0],
            [-sin_lat * cos_lon, -sin_lat * sin_lon, cos_lat],
            [cos_lat * cos_lon, cos_lat * sin_lon, sin_lat],
        ]
    }
}

/// Geodetic (radians, metres) to Earth-centred Earth-fixed metres (NIMA TR8350.2 eq. 4-14).
fn geodetic_to_ecef(lat_rad: f64, lon_rad: f64, alt_m: f64) -> [f64; 3] {
    let (sin_lat, cos_lat) = lat_rad.sin_cos();
    let (sin_lon, cos_lon) = lon_rad.sin_cos();
    // Prime-vertical radius of curvature N.
    let n_m = WGS84_A_M / (1.0 - WGS84_E2 * sin_lat * sin_lat).sqrt();
    [(n_m + alt_m) * cos_lat * cos_lon, (n_m + alt_m) * cos_lat * sin_lon, (n_m * (1.0 - WGS84_E2) + alt_m) * sin_lat]
}

/// ECEF metres to geodetic (latitude rad, longitude rad, height m) by Bowring's (1976) formula
/// iterated on the parametric latitude until the latitude stops changing. The height formula
/// h = p cos(lat) + z sin(lat) - a sqrt(1 - e^2 sin^2(lat)) holds at every latitude, poles included.
fn ecef_to_geodetic(ecef_m: [f64; 3]) -> (f64, f64, f64) {
    let [x_m, y_m, z_m] = ecef_m;
    let b_m = WGS84_A_M * (1.0 - WGS84_F);
    let ep2 = WGS84_E2 / (1.0 - WGS84_E2); // second eccentricity squared
    let p_m = x_m.hypot(y_m);
    let lon_rad = y_m.atan2(x_m);
    let mut beta_rad = ((1.0 - WGS84_F) * z_m).atan2(p_m);
    let mut lat_rad = beta_rad;
    for _ in 0..MAX_GEODETIC_ITERATIONS {
        let (sin_b, cos_b) = beta_rad.sin_cos();
        let next_rad = (z_m + ep2 * b_m * sin_b.powi(3)).atan2(p_m - WGS84_E2 * WGS84_A_M * cos_b.powi(3));
        let converged = (next_rad - lat_rad).abs() < 1e-15;
        lat_rad = next_rad;
        if converged {
            break;
        }
        let (sin_lat, cos_lat) = lat_rad.sin_cos();
        beta_rad = ((1.0 - WGS84_F) * sin_lat).atan2(cos_lat);
    }
    let (sin_lat, cos_lat) = lat_rad.sin_cos();
    let alt_m = p_m * cos_lat + z_m * sin_lat - WGS84_A_M * (1.0 - WGS84_E2 * sin_lat * sin_lat).sqrt();
    (lat_rad, lon_rad, alt_m)
}

#[cfg(test)]
mod tests {
    use super::*;
    use approx::assert_relative_eq;

    #[test]
    fn ecef_matches_nima_tr8350_2_axes() {
        // Equator/prime meridian lies at a; the pole at b = 6356752.3142 m and e^2 =
        // 0.00669437999014 (NIMA TR8350.2, Table 3.3, derived geometric constants).
        let equator_m = geodetic_to_ecef(0.0, 0.0, 0.0);
        assert_relative_eq!(equator_m[0], 6_378_137.0, epsilon = 1e-9);
        assert_relative_eq!(equator_m[1], 0.0, epsilon = 1e-9);
        let pole_m = geodetic_to_ecef(90f64.to_radians(), 0.0, 0.0);
        assert_relative_eq!(pole_m[2], 6_356_752.314_2, epsilon = 1e-4);
        assert_relative_eq!(WGS84_E2, 0.006_694_379_990_14, epsilon = 1e-14);
    }

    #[test]
    fn origin_maps_to_zero() {
        for (lat_deg, lon_deg, alt_m) in [(0.0, 0.0, 0.0), (69.65, 18.96, 120.0), (-45.9, 170.5, -30.0)] {
            let origin = GeoOrigin::new(lat_deg, lon_deg, alt_m);
            let enu_m = origin.to_local(lon_deg, lat_deg, alt_m);
            for c in enu_m {
                assert_relative_eq!(c, 0.0, epsilon = 1e-8);
            }
        }
    }

    #[test]
    fn a_point_one_km_north_is_1000_m_north() {
        let lat0_deg: f64 = 60.0;
        let origin = GeoOrigin::new(lat0_deg, 10.0, 0.0);
        // Meridian radius of curvature M = a (1 - e^2) / (1 - e^2 sin^2 lat)^1.5; at 1 km the arc
        // differs from the tangent-plane distance by ~4e-6 m.
        let s = lat0_deg.to_radians().sin();
        let m_m = WGS84_A_M * (1.0 - WGS84_E2) / (1.0 - WGS84_E2 * s * s).powf(1.5);
        let lat1_deg = lat0_deg + (1000.0 / m_m).to_degrees();
        let [east_m, north_m, up_m] = origin.to_local(10.0, lat1_deg, 0.0);
        assert_relative_eq!(east_m, 0.0, epsilon = 1e-9);
        assert_relative_eq!(north_m, 1000.0, epsilon = 1e-3);
        // The ellipsoid drops below the tangent plane by about d^2 / (2 M).
        assert_relative_eq!(up_m, -1000.0f64.powi(2) / (2.0 * m_m), epsilon = 1e-3);
    }

    #[test]
    fn a_point_east_at_the_equator_is_east() {
        let origin = GeoOrigin::new(0.0, 0.0, 0.0);
        // 0.01 degree of longitude on the equator: arc a * dlon; the plane sees a * sin(dlon).
        let [east_m, north_m, _] = origin.to_local(0.01, 0.0, 0.0);
        assert_relative_eq!(east_m, WGS84_A_M * 0.01f64.to_radians().sin(), epsilon = 1e-6);
        assert_relative_eq!(north_m, 0.0, epsilon = 1e-9);
    }

    #[test]
    fn round_trip_is_sub_micrometre() {
        let origins = [
            GeoOrigin::new(69.65, 18.96, 15.0),
            GeoOrigin::new(-33.9, 18.4, 0.0),
            GeoOrigin::new(0.0, 179.99, 0.0),
            GeoOrigin::new(89.9, -45.0, 2500.0),
        ];
        for origin in origins {
            for enu_m in [[0.0, 0.0, 0.0], [20_000.0, -15_000.0, 35.0], [-7_000.0, 19_000.0, -400.0]] {
                let (lon_deg, lat_deg, alt_m) = origin.to_geodetic(enu_m[0], enu_m[1], enu_m[2]);
                let back_m = origin.to_local(lon_deg, lat_deg, alt_m);
                for k in 0..3 {
                    assert_relative_eq!(back_m[k], enu_m[k], epsilon = 1e-6);
                }
            }
        }
    }

    #[test]
    fn geodetic_round_trip_through_ecef() {
        for (lat_deg, lon_deg, alt_m) in
            [(45.0, 7.0, 300.0), (-89.5, 120.0, 10.0), (90.0, 0.0, 0.0), (0.0, -180.0, -50.0)]
        {
            let ecef_m = geodetic_to_ecef(f64::to_radians(lat_deg), f64::to_radians(lon_deg), alt_m);
            let (lat_rad, lon_rad, h_m) = ecef_to_geodetic(ecef_m);
            assert_relative_eq!(lat_rad.to_degrees(), lat_deg, epsilon = 1e-11);
            assert_relative_eq!(h_m, alt_m, epsilon = 1e-6);
            if lat_deg.abs() < 90.0 {
                let dlon_deg = (lon_rad.to_degrees() - lon_deg).rem_euclid(360.0);
                assert!(!(1e-9..=360.0 - 1e-9).contains(&dlon_deg), "lon {lon_deg} -> {}", lon_rad.to_degrees());
            }
        }
    }
}

//! WGS 84 geodetic coordinates to Universal Transverse Mercator easting and northing (metres),
//! for sampling elevation rasters georeferenced in a WGS 84 UTM zone (EPSG:326zz north,
//! EPSG:327zz south).
//!
//! The forward transverse Mercator map is Krueger's series in the third flattening n, to order
//! n^6, as given by Karney (2011), "Transverse Mercator with an accuracy of a few nanometers",
//! Journal of Geodesy 85(8), eqs. (7)-(11) and (35). Within a UTM zone it is accurate to a few
//! nanometres, and to well under a millimetre a few degrees beyond the zone's edge.
//! UTM: scale factor k0 = 0.9996, false easting 500 km, false northing 10 000 km in the
//! southern hemisphere, central meridian 6 zone - 183 degrees.

/// WGS 84 semi-major axis a, metres (NIMA TR8350.2, 3rd ed., Table 3.1).
const A_M: f64 = 6_378_137.0;
/// WGS 84 flattening f (NIMA TR8350.2, 3rd ed., Table 3.1).
const F: f64 = 1.0 / 298.257_223_563;
/// UTM central scale factor.
const K0: f64 = 0.9996;
const FALSE_EASTING_M: f64 = 500_000.0;
const FALSE_NORTHING_SOUTH_M: f64 = 10_000_000.0;

/// A WGS 84 UTM zone.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct UtmZone {
    /// 1 to 60.
    pub zone: u8,
    pub north: bool,
}

impl UtmZone {
    /// The zone of an EPSG code 32601-32660 (north) or 32701-32760 (south).
    pub fn from_epsg(code: u16) -> Option<UtmZone> {
        let (north, zone) = match code {
            32601..=32660 => (true, code - 32600),
            32701..=32760 => (false, code - 32700),
            _ => return None,
        };
        Some(UtmZone { zone: u8::try_from(zone).ok()?, north })
    }

    /// Central meridian, degrees.
    pub fn central_meridian_deg(&self) -> f64 {
        6.0 * f64::from(self.zone) - 183.0
    }

    /// (easting, northing) in metres of a geodetic point (degrees).
    pub fn to_utm(&self, lat_deg: f64, lon_deg: f64) -> (f64, f64) {
        let (x_m, y_m) = transverse_mercator(lat_deg, lon_deg - self.central_meridian_deg());
        let false_northing_m = if self.north { 0.0 } else { FALSE_NORTHING_SOUTH_M };
        (FALSE_EASTING_M + K0 * x_m, false_northing_m + K0 * y_m)
    }
}

/// Krueger's coefficients alpha_1..alpha_6 (Karney 2011, eq. 35) and the rectifying radius A
/// (eq. 14), from the third flattening n = f / (2 - f).
fn series() -> ([f64; 6], f64) {
    let n = F / (2.0 - F);
    let n2 = n * n;
    let n3 = n2 * n;
    let n4 = n3 * n;
    let n5 = n4 * n;
    let n6 = n5 * n;
    let alpha = [
        n / 2.0 - 2.0 / 3.0 * n2 + 5.0 / 16.0 * n3 + 41.0 / 180.0 * n4 - 127.0 / 288.0 * n5 + 7891.0 / 37800.0 * n6,
        13.0 / 48.0 * n2 - 3.0 / 5.0 * n3 + 557.0 / 1440.0 * n4 + 281.0 / 630.0 * n5 - 1_983_433.0 / 1_935_360.0 * n6,
        61.0 / 240.0 * n3 - 103.0 / 140.0 * n4 + 15061.0 / 26880.0 * n5 + 167_603.0 / 181_440.0 * n6,
        49561.0 / 161_280.0 * n4 - 179.0 / 168.0 * n5 + 6_601_661.0 / 7_257_600.0 * n6,
        34729.0 / 80640.0 * n5 - 3_418_889.0 / 1_995_840.0 * n6,
        212_378_941.0 / 319_334_400.0 * n6,
    ];
    let a_rect = A_M / (1.0 + n) * (1.0 + n2 / 4.0 + n4 / 64.0 + n6 / 256.0);
    (alpha, a_rect)
}

/// Transverse Mercator (scale 1 on the central meridian) of latitude `lat_deg` and longitude
/// `dlon_deg` from the central meridian: (x east, y north) metres. Karney (2011) eqs. (7)-(11):
/// conformal latitude through tau' = tau sqrt(1 + sigma^2) - sigma sqrt(1 + tau^2), then the
/// Gauss-Schreiber coordinates (xi', eta') and Krueger's series.
pub fn transverse_mercator(lat_deg: f64, dlon_deg: f64) -> (f64, f64) {
    let (alpha, a_rect) = series();
    let e = (F * (2.0 - F)).sqrt();
    let (phi, lambda) = (lat_deg.to_radians(), dlon_deg.to_radians());
    let tau = phi.tan();
    let sigma = (e * (e * tau / tau.hypot(1.0)).atanh()).sinh();
    let tau_p = tau * sigma.hypot(1.0) - sigma * tau.hypot(1.0);
    let (sin_l, cos_l) = lambda.sin_cos();
    let xi_p = tau_p.atan2(cos_l);
    let eta_p = (sin_l / tau_p.hypot(cos_l)).asinh();
    let (mut xi, mut eta) = (xi_p, eta_p);
    for (j, a) in alpha.iter().enumerate() {
        let k = 2.0 * (j + 1) as f64;
        xi += a * (k * xi_p).sin() * (k * eta_p).cosh();
        eta += a * (k * xi_p).cos() * (k * eta_p).sinh();
    }
    (a_rect * eta, a_rect * xi)
}

#[cfg(test)]
mod tests {
    use super::*;
    use approx::assert_relative_eq;

    #[test]
    fn zones_from_epsg_codes() {
        assert_eq!(UtmZone::from_epsg(32633), Some(UtmZone { zone: 33, north: true }));
        assert_eq!(UtmZone::from_epsg(32760), Some(UtmZone { zone: 60, north: false }));
        assert_eq!(UtmZone::from_epsg(32600), None);
        assert_eq!(UtmZone::from_epsg(3857), None);
        assert_relative_eq!(UtmZone { zone: 33, north: true }.central_meridian_deg(), 15.0);
    }

    #[test]
    fn the_equator_on_the_central_meridian_is_the_false_origin() {
        // Definition of UTM: (0, lambda0) maps to (500 km, 0) north and (500 km, 10 000 km) south.
        let (e, n) = UtmZone { zone: 31, north: true }.to_utm(0.0, 3.0);
        assert_relative_eq!(e, 500_000.0, epsilon = 1e-9);
        assert_relative_eq!(n, 0.0, epsilon = 1e-9);
        let (_, n) = UtmZone { zone: 31, north: false }.to_utm(0.0, 3.0);
        assert_relative_eq!(n, 10_000_000.0, epsilon = 1e-9);
    }

    #[test]
    fn the_central_meridian_gives_the_meridian_arc() {
        // On the central meridian y is k0 times the meridian arc length. The quarter meridian of
        // WGS 84 is 10 001 965.729 m (Karney 2011, section 2, from the series for A; also
        // geographiclib's Geodesic.WGS84.Inverse(0, 0, 90, 0) s12 = 10001965.729 m).
        let (_, n) = UtmZone { zone: 31, north: true }.to_utm(90.0, 3.0);
        assert_relative_eq!(n, 0.9996 * 10_001_965.729_3, epsilon = 1e-3);
    }
}

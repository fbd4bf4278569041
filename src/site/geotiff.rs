//! Reads a single-band GeoTIFF elevation raster and interpolates it bilinearly.
//!
//! Georeferencing (GeoTIFF 1.0 / OGC GeoTIFF 1.1): ModelPixelScale (tag 33550) with the first
//! ModelTiepoint (33922), or a ModelTransformation (34264) without rotation; the
//! GeoKeyDirectory (34735) names the CRS: geographic WGS 84 (EPSG:4326, model x = longitude,
//! y = latitude, degrees) or a WGS 84 UTM zone (EPSG:326zz / 327zz, metres). Raster type (key
//! 1025): PixelIsArea (the default) puts raster coordinate (0, 0) at the outer corner of the
//! first pixel, so pixel (c, r) is centred at raster (c + 0.5, r + 0.5); PixelIsPoint puts it
//! at the first pixel's centre, so pixel (c, r) is at raster (c, r). Either way model
//! x = X_tie + (i - I) Sx, y = Y_tie - (j - J) Sy.
//!
//! Interpolation is bilinear between pixel centres. A PixelIsArea raster covers its outer
//! edges: within half a pixel of the edge the edge pixels' values are held. A PixelIsPoint
//! raster covers the rectangle through its outermost samples. A sample equal to the GDAL
//! nodata value (tag 42113), or NaN, that would weigh in the result makes the point "no data".

use std::io::Cursor;
use std::path::{Path, PathBuf};

use tiff::decoder::{Decoder, DecodingResult, Limits as TiffLimits};
use tiff::tags::Tag;

use super::utm::UtmZone;
use super::SiteError;
use crate::limits::{read_bytes_limited, Limits, ReadLimitedError, MAX_RASTER_DECODED_BYTES};

/// Coordinate reference system of a raster's model coordinates.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum RasterCrs {
    /// EPSG:4326: x longitude, y latitude, degrees.
    Wgs84LonLat,
    /// EPSG:326zz / 327zz: x easting, y northing, metres.
    Utm(UtmZone),
}

impl RasterCrs {
    /// The EPSG code, for messages.
    pub fn epsg(&self) -> u16 {
        match self {
            RasterCrs::Wgs84LonLat => 4326,
            RasterCrs::Utm(z) => (if z.north { 32600 } else { 32700 }) + u16::from(z.zone),
        }
    }
}

/// Pixel values in their stored type (so a large raster is not doubled in memory).
#[derive(Debug, Clone)]
enum Samples {
    U8(Vec<u8>),
    U16(Vec<u16>),
    U32(Vec<u32>),
    I8(Vec<i8>),
    I16(Vec<i16>),
    I32(Vec<i32>),
    F32(Vec<f32>),
    F64(Vec<f64>),
}

impl Samples {
    fn get(&self, i: usize) -> Option<f64> {
        match self {
            Samples::U8(v) => v.get(i).map(|&x| f64::from(x)),
            Samples::U16(v) => v.get(i).map(|&x| f64::from(x)),
            Samples::U32(v) => v.get(i).map(|&x| f64::from(x)),
            Samples::I8(v) => v.get(i).map(|&x| f64::from(x)),
            Samples::I16(v) => v.get(i).map(|&x| f64::from(x)),
            Samples::I32(v) => v.get(i).map(|&x| f64::from(x)),
            Samples::F32(v) => v.get(i).map(|&x| f64::from(x)),
            Samples::F64(v) => v.get(i).copied(),
        }
    }

    fn len(&self) -> usize {
        match self {
            Samples::U8(v) => v.len(),
            Samples::U16(v) => v.len(),
            Samples::U32(v) => v.len(),
            Samples::I8(v) => v.len(),
            Samples::I16(v) => v.len(),
            Samples::I32(v) => v.len(),
            Samples::F32(v) => v.len(),
            Samples::F64(v) => v.len(),
        }
    }
}

/// Why a point has no elevation.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum SampleError {
    /// Outside the raster's coverage.
    Uncovered,
    /// A pixel that weighs in holds the nodata value (or NaN).
    NoData,
}

/// A north-up elevation grid with its georeferencing. Values in metres as stored.
#[derive(Debug, Clone)]
pub struct Raster {
    pub source: PathBuf,
    pub width: usize,
    pub height: usize,
    pub crs: RasterCrs,
    /// True when the file says PixelIsPoint (key 1025 = 2).
    pub pixel_is_point: bool,
    pub nodata: Option<f64>,
    /// Model coordinates of the centre of pixel (0, 0), and the step per column and per row
    /// (`dy` is negative for the usual north-up raster).
    x0: f64,
    y0: f64,
    dx: f64,
    dy: f64,
    samples: Samples,
}

/// TIFF compression codes this reader decodes: none, LZW, Deflate (both codes), PackBits.
const DECODED_COMPRESSIONS: [u16; 5] = [1, 5, 8, 32946, 32773];

/// A name for a TIFF compression code (TIFF 6.0, libtiff's registry).
fn compression_name(code: u16) -> &'static str {
    match code {
        2 => "CCITT Huffman",
        3 => "CCITT Group 3 fax",
        4 => "CCITT Group 4 fax",
        6 | 7 => "JPEG",
        34712 => "JPEG 2000",
        34887 => "LERC",
        34925 => "LZMA",
        50000 => "ZSTD",
        50001 => "WebP",
        50002 | 52546 => "JPEG XL",
        _ => "an unknown method",
    }
}

impl Raster {
    /// Reads a GeoTIFF no larger than `limits.max_file_bytes`.
    pub fn read(path: &Path, limits: &Limits) -> Result<Raster, SiteError> {
        let bytes = read_bytes_limited(path, limits.max_file_bytes).map_err(|e| match e {
            ReadLimitedError::Io(source) => SiteError::Io { file: path.to_path_buf(), source },
            other => SiteError::File { file: path.to_path_buf(), what: other.to_string() },
        })?;
        Raster::parse(path, &bytes)
    }

    /// Parses GeoTIFF bytes; `path` names the file in messages.
    pub fn parse(path: &Path, bytes: &[u8]) -> Result<Raster, SiteError> {
        let fail = |what: String| SiteError::File { file: path.to_path_buf(), what };
        let tiff_fail = |e: tiff::TiffError| fail(format!("not a readable TIFF: {e}"));
        let limits = {
            let mut l = TiffLimits::default();
            l.decoding_buffer_size = MAX_RASTER_DECODED_BYTES;
            l.intermediate_buffer_size = MAX_RASTER_DECODED_BYTES;
            l
        };
        let mut dec = Decoder::new(Cursor::new(bytes)).map_err(tiff_fail)?.with_limits(limits);
        let compression: u16 = dec.find_tag_unsigned(Tag::Compression).map_err(tiff_fail)?.unwrap_or(1);
        if !DECODED_COMPRESSIONS.contains(&compression) {
            return Err(fail(format!(
                "compressed with {} (TIFF compression {compression}), which this reader does not decode: rewrite it \
                 uncompressed or with Deflate or LZW (e.g. gdal_translate -co COMPRESS=DEFLATE)",
                compression_name(compression)
            )));
        }
        let bands: u16 = dec.find_tag_unsigned(Tag::SamplesPerPixel).map_err(tiff_fail)?.unwrap_or(1);
        if bands != 1 {
            return Err(fail(format!(
                "has {bands} bands, expected a single-band elevation raster: extract the elevation band (e.g. \
                 gdal_translate -b 1)"
            )));
        }
        let (w, h) = dec.dimensions().map_err(tiff_fail)?;
        let (width, height) = (w as usize, h as usize);
        let keys = read_geo_keys(&mut dec).map_err(&fail)?;
        let crs = crs_of(&keys).map_err(&fail)?;
        let pixel_is_point = keys.get(1025) == Some(2);
        let (x0, y0, dx, dy) = georeference(&mut dec, pixel_is_point).map_err(&fail)?;
        let nodata = read_nodata(&mut dec).map_err(&fail)?;
        let samples = match dec.read_image().map_err(|e| fail(format!("cannot decode the pixels: {e}")))? {
            DecodingResult::U8(v) => Samples::U8(v),
            DecodingResult::U16(v) => Samples::U16(v),
            DecodingResult::U32(v) => Samples::U32(v),
            DecodingResult::I8(v) => Samples::I8(v),
            DecodingResult::I16(v) => Samples::I16(v),
            DecodingResult::I32(v) => Samples::I32(v),
            DecodingResult::F32(v) => Samples::F32(v),
            DecodingResult::F64(v) => Samples::F64(v),
            _ => return Err(fail("has a sample type other than 8-32 bit integers or 32/64 bit floats".to_string())),
        };
        if samples.len() != width.saturating_mul(height) {
            return Err(fail(format!("holds {} samples for {width} x {height} pixels", samples.len())));
        }
        Ok(Raster { source: path.to_path_buf(), width, height, crs, pixel_is_point, nodata, x0, y0, dx, dy, samples })
    }

    /// A raster from values in memory (row-major, first row north), for tests and tools: pixel
    /// (0, 0) centred at (`x0`, `y0`), steps `dx` per column and `dy` per row.
    #[allow(clippy::too_many_arguments)]
    pub fn from_grid(
        source: &Path,
        crs: RasterCrs,
        width: usize,
        values: Vec<f64>,
        origin_centre: [f64; 2],
        step: [f64; 2],
        pixel_is_point: bool,
        nodata: Option<f64>,
    ) -> Raster {
        Raster {
            source: source.to_path_buf(),
            width,
            height: values.len() / width.max(1),
            crs,
            pixel_is_point,
            nodata,
            x0: origin_centre[0],
            y0: origin_centre[1],
            dx: step[0],
            dy: step[1],
            samples: Samples::F64(values),
        }
    }

    /// Pixel size (column step, row step) in model units (degrees or metres), positive.
    pub fn pixel_size(&self) -> (f64, f64) {
        (self.dx.abs(), self.dy.abs())
    }

    /// The model rectangle covered: (x min, x max, y min, y max).
    pub fn extent(&self) -> (f64, f64, f64, f64) {
        let half = if self.pixel_is_point { 0.0 } else { 0.5 };
        let xa = self.x0 - half * self.dx;
        let xb = self.x0 + (self.width as f64 - 1.0 + half) * self.dx;
        let ya = self.y0 - half * self.dy;
        let yb = self.y0 + (self.height as f64 - 1.0 + half) * self.dy;
        (xa.min(xb), xa.max(xb), ya.min(yb), ya.max(yb))
    }

    /// The value stored for pixel (column, row), `None` for nodata or NaN.
    fn pixel(&self, c: usize, r: usize) -> Option<f64> {
        let v = self.samples.get(r.checked_mul(self.width)?.checked_add(c)?)?;
        let is_nodata = self.nodata.is_some_and(|nd| v == nd || (nd.is_nan() && v.is_nan()));
        (!is_nodata && v.is_finite()).then_some(v)
    }

    /// Bilinear interpolation at model coordinates (x, y).
    pub fn sample(&self, x: f64, y: f64) -> Result<f64, SampleError> {
        const EDGE_TOLERANCE_PX: f64 = 1e-9;
        if self.width == 0 || self.height == 0 || !(x.is_finite() && y.is_finite()) {
            return Err(SampleError::Uncovered);
        }
        // Fractional pixel-centre coordinates.
        let (fc, fr) = ((x - self.x0) / self.dx, (y - self.y0) / self.dy);
        let reach = if self.pixel_is_point { EDGE_TOLERANCE_PX } else { 0.5 + EDGE_TOLERANCE_PX };
        let (max_c, max_r) = ((self.width - 1) as f64, (self.height - 1) as f64);
        if fc < -reach || fr < -reach || fc > max_c + reach || fr > max_r + reach {
            return Err(SampleError::Uncovered);
        }
        let (fc, fr) = (fc.clamp(0.0, max_c), fr.clamp(0.0, max_r));
        let (c0, r0) = (fc.floor() as usize, fr.floor() as usize);
        let (c1, r1) = ((c0 + 1).min(self.width - 1), (r0 + 1).min(self.height - 1));
        let (tc, tr) = (fc - c0 as f64, fr - r0 as f64);
        let mut z = 0.0;
        for (c, r, w) in
            [(c0, r0, (1.0 - tc) * (1.0 - tr)), (c1, r0, tc * (1.0 - tr)), (c0, r1, (1.0 - tc) * tr), (c1, r1, tc * tr)]
        {
            if w > 0.0 {
                z += w * self.pixel(c, r).ok_or(SampleError::NoData)?;
            }
        }
        Ok(z)
    }
}

/// The GeoKeyDirectory's short values by key id.
struct GeoKeys(Vec<(u16, u16)>);

impl GeoKeys {
    fn get(&self, key: u16) -> Option<u16> {
        self.0.iter().find(|(k, _)| *k == key).map(|(_, v)| *v)
    }
}

fn read_geo_keys<R: std::io::Read + std::io::Seek>(dec: &mut Decoder<R>) -> Result<GeoKeys, String> {
    const NO_GEOREFERENCE: &str = "has no GeoTIFF georeferencing (GeoKeyDirectory tag 34735): use a GeoTIFF in \
                                   EPSG:4326 or a WGS 84 UTM zone";
    let dir = match dec.find_tag(Tag::GeoKeyDirectoryTag) {
        Ok(Some(v)) => v.into_u16_vec().map_err(|e| format!("GeoKeyDirectory is not a list of shorts: {e}"))?,
        Ok(None) => return Err(NO_GEOREFERENCE.to_string()),
        Err(e) => return Err(format!("cannot read the GeoKeyDirectory: {e}")),
    };
    let count = usize::from(*dir.get(3).ok_or("GeoKeyDirectory is shorter than its header")?);
    let mut keys = Vec::with_capacity(count.min(64));
    for k in 0..count {
        let entry = dir.get(4 + 4 * k..8 + 4 * k).ok_or("GeoKeyDirectory is shorter than its key count")?;
        // Location 0: the value is the short itself (every key read here is a short).
        if entry[1] == 0 {
            keys.push((entry[0], entry[3]));
        }
    }
    Ok(GeoKeys(keys))
}

/// The raster's CRS from its geokeys: EPSG:4326 or a WGS 84 UTM zone.
fn crs_of(keys: &GeoKeys) -> Result<RasterCrs, String> {
    const SUPPORTED: &str = "supported are EPSG:4326 (WGS 84 longitude/latitude) and the WGS 84 UTM zones \
                             (EPSG:32601-32660, 32701-32760): reproject it (e.g. gdalwarp -t_srs EPSG:4326)";
    let model_type = keys.get(1024);
    let code = match model_type {
        Some(2) => keys.get(2048),
        Some(1) => keys.get(3072),
        Some(3) => return Err(format!("is in a geocentric model space; {SUPPORTED}")),
        _ => keys.get(3072).or(keys.get(2048)),
    };
    match code {
        Some(4326) if model_type != Some(1) => Ok(RasterCrs::Wgs84LonLat),
        Some(code) => UtmZone::from_epsg(code).map(RasterCrs::Utm).ok_or_else(|| {
            if code == 32767 {
                format!("has a user-defined coordinate reference system (geokey code 32767); {SUPPORTED}")
            } else {
                format!("its coordinate reference system is EPSG:{code}; {SUPPORTED}")
            }
        }),
        None => Err(format!("names no EPSG coordinate reference system in its geokeys; {SUPPORTED}")),
    }
}

/// (x0, y0, dx, dy): model coordinates of pixel (0, 0)'s centre and the steps per column/row.
fn georeference<R: std::io::Read + std::io::Seek>(
    dec: &mut Decoder<R>,
    pixel_is_point: bool,
) -> Result<(f64, f64, f64, f64), String> {
    // Raster coordinate of pixel (0, 0)'s centre.
    let centre = if pixel_is_point { 0.0 } else { 0.5 };
    let f64s = |dec: &mut Decoder<R>, tag: Tag| -> Result<Option<Vec<f64>>, String> {
        match dec.find_tag(tag) {
            Ok(Some(v)) => {
                v.into_f64_vec().map(Some).map_err(|e| format!("tag {} is not a list of doubles: {e}", tag.to_u16()))
            }
            Ok(None) => Ok(None),
            Err(e) => Err(format!("cannot read tag {}: {e}", tag.to_u16())),
        }
    };
    let scale = f64s(dec, Tag::ModelPixelScaleTag)?;
    let tie = f64s(dec, Tag::ModelTiepointTag)?;
    let (x0, y0, dx, dy) = match (scale, tie, f64s(dec, Tag::ModelTransformationTag)?) {
        (Some(s), Some(t), _) if s.len() >= 2 && t.len() >= 6 => {
            let (sx, sy) = (s[0], s[1]);
            (t[3] + (centre - t[0]) * sx, t[4] - (centre - t[1]) * sy, sx, -sy)
        }
        (_, _, Some(m)) if m.len() >= 16 => {
            if m[1] != 0.0 || m[4] != 0.0 {
                return Err("is rotated or sheared (ModelTransformation with off-diagonal terms): warp it to a \
                            north-up grid (e.g. gdalwarp)"
                    .to_string());
            }
            (m[3] + centre * m[0], m[7] + centre * m[5], m[0], m[5])
        }
        _ => {
            return Err("lacks ModelPixelScale (tag 33550) with ModelTiepoint (tag 33922), or a ModelTransformation \
                        (tag 34264): it cannot be placed on the map"
                .to_string())
        }
    };
    if !(x0.is_finite() && y0.is_finite() && dx.is_finite() && dy.is_finite() && dx != 0.0 && dy != 0.0) {
        return Err(format!("has an unusable pixel size ({dx} x {dy}) or tie point"));
    }
    Ok((x0, y0, dx, dy))
}

/// The GDAL nodata value (tag 42113, ASCII), when given.
fn read_nodata<R: std::io::Read + std::io::Seek>(dec: &mut Decoder<R>) -> Result<Option<f64>, String> {
    match dec.find_tag(Tag::GdalNodata) {
        Ok(Some(v)) => {
            let text = v.into_string().map_err(|e| format!("nodata tag 42113 is not text: {e}"))?;
            let text = text.trim_matches(|c: char| c == '\0' || c.is_whitespace());
            match text.to_ascii_lowercase().as_str() {
                "nan" | "-nan" => Ok(Some(f64::NAN)),
                t => t.parse::<f64>().map(Some).map_err(|_| format!("nodata tag 42113 '{text}' is not a number")),
            }
        }
        Ok(None) => Ok(None),
        Err(e) => Err(format!("cannot read the nodata tag 42113: {e}")),
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use approx::assert_relative_eq;

    /// A 3 x 2 raster with z = 10 c + r at pixel (c, r), pixel centres 1 m apart from (100, 50).
    fn grid(pixel_is_point: bool) -> Raster {
        let values = vec![0.0, 10.0, 20.0, 1.0, 11.0, 21.0];
        let crs = RasterCrs::Utm(UtmZone { zone: 33, north: true });
        Raster::from_grid(Path::new("g.tif"), crs, 3, values, [100.0, 50.0], [1.0, -1.0], pixel_is_point, None)
    }

    #[test]
    fn bilinear_interpolation_is_exact_on_a_plane() {
        let r = grid(false);
        // z = 10 (x - 100) + (50 - y): closed form of the plane the pixels sample.
        for (x, y) in [(100.0, 50.0), (100.25, 49.5), (101.7, 49.1), (102.0, 49.0)] {
            assert_relative_eq!(r.sample(x, y).expect("covered"), 10.0 * (x - 100.0) + (50.0 - y), epsilon = 1e-12);
        }
    }

    #[test]
    fn pixel_is_area_covers_half_a_pixel_beyond_the_centres_and_point_does_not() {
        let area = grid(false);
        assert_eq!(area.extent(), (99.5, 102.5, 48.5, 50.5));
        // Beyond the outermost centre the edge value is held.
        assert_relative_eq!(area.sample(102.4, 50.4).expect("covered"), 20.0, epsilon = 1e-12);
        assert_eq!(area.sample(102.6, 50.0), Err(SampleError::Uncovered));
        let point = grid(true);
        assert_eq!(point.extent(), (100.0, 102.0, 49.0, 50.0));
        assert_eq!(point.sample(102.4, 50.0), Err(SampleError::Uncovered));
        assert!(point.sample(102.0, 49.0).is_ok());
    }

    #[test]
    fn nodata_counts_only_where_it_weighs_in() {
        let mut r = grid(false);
        r.nodata = Some(11.0);
        assert_eq!(r.sample(100.5, 49.5), Err(SampleError::NoData));
        // On the column of valid pixels, the nodata pixel has zero weight.
        assert_relative_eq!(r.sample(100.0, 49.5).expect("valid"), 0.5, epsilon = 1e-12);
    }

    #[test]
    fn epsg_codes_round_trip() {
        assert_eq!(RasterCrs::Wgs84LonLat.epsg(), 4326);
        assert_eq!(RasterCrs::Utm(UtmZone { zone: 7, north: false }).epsg(), 32707);
    }
}

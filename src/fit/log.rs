//! Reads drive logs (README, "Calibrating from drive logs"): header `t_s,left_mps,right_mps,x_m,y_m,yaw_rad,terrain`
//! in any column order, with `lat_deg,lon_deg` allowed in place of `x_m,y_m`. Side speeds are
//! measured track surface speeds (m/s, positive forward); poses come from a reference
//! localization. Local frame x east, y north, yaw anticlockwise from east (radians).
//!
//! A `lat_deg,lon_deg` log is projected once, here, to east-north metres about its first sample
//! with the exact WGS 84 transform of [`crate::route::GeoOrigin`]; nothing downstream sees degrees.
//! Every problem is an error naming the file, the line (the header is line 1) and the column;
//! CRLF line endings are read as LF first, so line numbers are the ones an editor shows.
//!
//! A row whose pose cells (`x_m,y_m,yaw_rad` or `lat_deg,lon_deg,yaw_rad`) are all empty is a
//! row without a pose (a localization dropout): its side speeds are kept and it is flagged
//! [`LogSample::pose_missing`]. A row with only some pose cells empty is an error.

use std::collections::HashMap;
use std::path::{Path, PathBuf};

use csv::{ReaderBuilder, StringRecord, Trim};

use super::FitError;
use crate::limits::{read_text_limited, show_number, Limits, ReadLimitedError, MAX_ABS_COORDINATE_M};
use crate::route::GeoOrigin;

/// One validated row of a drive log, in local metres. `Default` gives a zero row with a pose,
/// so readers of other formats can write `LogSample { t_s, .., ..LogSample::default() }`.
#[derive(Debug, Clone, Copy, PartialEq, Default)]
pub struct LogSample {
    /// 1-based line in the file, for messages.
    pub line: usize,
    pub t_s: f64,
    pub left_mps: f64,
    pub right_mps: f64,
    pub x_m: f64,
    pub y_m: f64,
    pub yaw_rad: f64,
    /// Index into [`DriveLog::terrains`].
    pub terrain: usize,
    /// True when the row has no pose (a localization dropout, or a pose the log repeated while
    /// the vehicle moved, see `fit::hygiene`). Its `x_m, y_m, yaw_rad` then hold the last pose
    /// before it and must not be used as a measurement.
    pub pose_missing: bool,
}

/// A whole drive log.
#[derive(Debug, Clone, PartialEq)]
pub struct DriveLog {
    pub source: PathBuf,
    /// Terrain names in order of first appearance.
    pub terrains: Vec<String>,
    pub samples: Vec<LogSample>,
    /// Projection origin when the log gave `lat_deg,lon_deg`.
    pub origin: Option<GeoOrigin>,
    /// Median time between samples, the log's sample period.
    pub period_s: f64,
}

const KNOWN_COLUMNS: &str = "t_s, left_mps, right_mps, x_m, y_m (or lat_deg, lon_deg), yaw_rad, terrain";

#[derive(Default)]
struct Columns {
    t_s: Option<usize>,
    left_mps: Option<usize>,
    right_mps: Option<usize>,
    x_m: Option<usize>,
    y_m: Option<usize>,
    lat_deg: Option<usize>,
    lon_deg: Option<usize>,
    yaw_rad: Option<usize>,
    terrain: Option<usize>,
}

/// Reads and validates a drive log file with the default [`Limits`].
pub fn read_log(path: &Path) -> Result<DriveLog, FitError> {
    read_log_with(path, &Limits::default())
}

/// [`read_log`] with explicit limits: the file size is checked before reading, the row count
/// (against `max_total_points`) while parsing.
pub fn read_log_with(path: &Path, limits: &Limits) -> Result<DriveLog, FitError> {
    let text = read_text_limited(path, limits.max_file_bytes).map_err(|e| match e {
        ReadLimitedError::Io(source) => FitError::Io { file: path.to_path_buf(), source },
        other => FitError::File { file: path.to_path_buf(), what: other.to_string() },
    })?;
    parse_log_with(path, &text, limits)
}

/// Parses drive-log text; `path` only names the file in messages.
///
/// ```
/// use std::path::Path;
/// let text = "t_s,left_mps,right_mps,x_m,y_m,yaw_rad,terrain\n0,1,1,0,0,0,grass\n0.02,1,1,0.02,0,0,grass\n";
/// let log = skidroute::fit::log::parse_log(Path::new("a.csv"), text).unwrap();
/// assert_eq!(log.samples.len(), 2);
/// assert!((log.period_s - 0.02).abs() < 1e-12);
/// ```
pub fn parse_log(path: &Path, text: &str) -> Result<DriveLog, FitError> {
    parse_log_with(path, text, &Limits::default())
}

/// [`parse_log`] refusing more than `limits.max_total_points` rows.
pub fn parse_log_with(path: &Path, text: &str, limits: &Limits) -> Result<DriveLog, FitError> {
    let file_error = |what: &str| FitError::File { file: path.to_path_buf(), what: what.to_string() };
    let text = text.strip_prefix('\u{feff}').unwrap_or(text);
    // The CSV reader counts a CR LF pair as a line end only after the CR, which puts the line of
    // an error in a CRLF file one too low; reading LF text keeps line numbers what an editor shows.
    let lf: String;
    let text = if text.contains('\r') {
        lf = text.replace("\r\n", "\n");
        lf.as_str()
    } else {
        text
    };
    if text.trim().is_empty() {
        return Err(file_error("file is empty"));
    }
    let mut reader = ReaderBuilder::new().trim(Trim::All).from_reader(text.as_bytes());
    let mut lines = crate::csv_line::LineCounter::new(text);
    let header = reader.headers().map_err(|e| csv_error(path, &e, &mut lines, 1))?.clone();
    let columns = read_header(&header).map_err(|what| FitError::Line { file: path.to_path_buf(), line: 1, what })?;
    let mut terrains: Vec<String> = Vec::new();
    // Terrain indices by name: a log may name a new terrain on every row.
    let mut terrain_index: HashMap<String, usize> = HashMap::new();
    let mut samples: Vec<LogSample> = Vec::new();
    let mut origin: Option<GeoOrigin> = None;
    for (k, record) in reader.records().enumerate() {
        let record = record.map_err(|e| csv_error(path, &e, &mut lines, k + 2))?;
        let line = lines.line_of(record.position(), k + 2);
        let at = |column: &str, what: String| FitError::Cell {
            file: path.to_path_buf(),
            line,
            column: column.to_string(),
            what,
        };
        let get = |column: &str, index: Option<usize>| -> Result<f64, FitError> {
            number(index.and_then(|i| record.get(i)).unwrap_or("")).map_err(|w| at(column, w))
        };
        let t_s = get("t_s", columns.t_s)?;
        if let Some(prev) = samples.last() {
            if t_s <= prev.t_s {
                let what = format!(
                    "time {t_s} s is not after the previous row's {} s (time must strictly increase)",
                    prev.t_s
                );
                return Err(at("t_s", what));
            }
        }
        let geographic = columns.lat_deg.is_some() && columns.lon_deg.is_some();
        let pose_cells: [(&str, Option<usize>); 3] = if geographic {
            [("lat_deg", columns.lat_deg), ("lon_deg", columns.lon_deg), ("yaw_rad", columns.yaw_rad)]
        } else {
            [("x_m", columns.x_m), ("y_m", columns.y_m), ("yaw_rad", columns.yaw_rad)]
        };
        let empty = |index: Option<usize>| index.and_then(|i| record.get(i)).unwrap_or("").is_empty();
        let pose_missing = pose_cells.iter().all(|(_, i)| empty(*i));
        let (x_m, y_m, yaw_rad) = if pose_missing {
            samples.last().map_or((0.0, 0.0, 0.0), |p| (p.x_m, p.y_m, p.yaw_rad))
        } else if geographic {
            let lat = get("lat_deg", columns.lat_deg)?;
            let lon = get("lon_deg", columns.lon_deg)?;
            if !(-90.0..=90.0).contains(&lat) {
                return Err(at("lat_deg", format!("latitude {} is outside [-90, 90]", show_number(lat))));
            }
            if !(-180.0..=180.0).contains(&lon) {
                return Err(at("lon_deg", format!("longitude {} is outside [-180, 180]", show_number(lon))));
            }
            let o = *origin.get_or_insert_with(|| GeoOrigin::new(lat, lon, 0.0));
            let [e, n, _] = o.to_local(lon, lat, 0.0);
            (e, n, get("yaw_rad", columns.yaw_rad)?)
        } else {
            (get("x_m", columns.x_m)?, get("y_m", columns.y_m)?, get("yaw_rad", columns.yaw_rad)?)
        };
        for (column, value) in [("x_m", x_m), ("y_m", y_m)] {
            if value.abs() > MAX_ABS_COORDINATE_M {
                return Err(at(
                    column,
                    format!("{} m is beyond +-{MAX_ABS_COORDINATE_M} m (is it in metres?)", show_number(value)),
                ));
            }
        }
        let name = columns.terrain.and_then(|i| record.get(i)).unwrap_or("");
        if name.is_empty() {
            return Err(at("terrain", "is empty".to_string()));
        }
        let terrain = match terrain_index.get(name) {
            Some(&i) => i,
            None => {
                terrain_index.insert(name.to_string(), terrains.len());
                terrains.push(name.to_string());
                terrains.len() - 1
            }
        };
        if samples.len() >= limits.max_total_points {
            let what = format!(
                "the log has more than {} rows, the limit (raise it with SKIDROUTE_MAX_TOTAL_POINTS)",
                limits.max_total_points
            );
            return Err(FitError::Line { file: path.to_path_buf(), line, what });
        }
        samples.push(LogSample {
            line,
            t_s,
            left_mps: get("left_mps", columns.left_mps)?,
            right_mps: get("right_mps", columns.right_mps)?,
            x_m,
            y_m,
            yaw_rad,
            terrain,
            pose_missing,
        });
    }
    if samples.len() < 2 {
        return Err(file_error("has fewer than 2 data rows; a drive log needs a time series"));
    }
    if samples.iter().all(|s| s.pose_missing) {
        return Err(file_error("no row has a pose (the pose columns are empty on every row)"));
    }
    let mut dts: Vec<f64> = samples.windows(2).map(|w| w[1].t_s - w[0].t_s).collect();
    dts.sort_by(f64::total_cmp);
    let period_s = dts[dts.len() / 2];
    Ok(DriveLog { source: path.to_path_buf(), terrains, samples, origin, period_s })
}

fn csv_error(
    path: &Path,
    error: &csv::Error,
    lines: &mut crate::csv_line::LineCounter,
    fallback_line: usize,
) -> FitError {
    let line = lines.line_of(error.position(), fallback_line);
    let what = match error.kind() {
        csv::ErrorKind::UnequalLengths { expected_len, len, .. } => {
            format!("has {len} fields, the header has {expected_len}")
        }
        _ => format!("cannot parse CSV: {error}"),
    };
    FitError::Line { file: path.to_path_buf(), line, what }
}

fn read_header(header: &StringRecord) -> Result<Columns, String> {
    let mut c = Columns::default();
    for (index, name) in header.iter().enumerate() {
        let slot = match name {
            "t_s" => &mut c.t_s,
            "left_mps" => &mut c.left_mps,
            "right_mps" => &mut c.right_mps,
            "x_m" => &mut c.x_m,
            "y_m" => &mut c.y_m,
            "lat_deg" => &mut c.lat_deg,
            "lon_deg" => &mut c.lon_deg,
            "yaw_rad" => &mut c.yaw_rad,
            "terrain" => &mut c.terrain,
            _ => return Err(format!("unknown column '{}' (expected {KNOWN_COLUMNS})", crate::limits::clip(name))),
        };
        if slot.replace(index).is_some() {
            return Err(format!("column {name} appears twice"));
        }
    }
    let local = c.x_m.is_some() || c.y_m.is_some();
    let geographic = c.lat_deg.is_some() || c.lon_deg.is_some();
    if local && geographic {
        return Err("give either x_m,y_m or lat_deg,lon_deg, not both".to_string());
    }
    let position: [(&str, Option<usize>); 2] =
        if geographic { [("lat_deg", c.lat_deg), ("lon_deg", c.lon_deg)] } else { [("x_m", c.x_m), ("y_m", c.y_m)] };
    let required = [
        ("t_s", c.t_s),
        ("left_mps", c.left_mps),
        ("right_mps", c.right_mps),
        ("yaw_rad", c.yaw_rad),
        ("terrain", c.terrain),
    ];
    for (name, slot) in required.into_iter().chain(position) {
        if slot.is_none() {
            return Err(format!("header lacks the required column {name} (expected {KNOWN_COLUMNS})"));
        }
    }
    Ok(c)
}

fn number(text: &str) -> Result<f64, String> {
    if text.is_empty() {
        return Err("is empty".to_string());
    }
    match crate::decimal::parse_f64(text) {
        Ok(v) if v.is_finite() => Ok(v),
        Ok(_) => Err(format!("'{}' is not a finite number", crate::limits::clip(text))),
        Err(_) => Err(format!("'{}' is not a number", crate::limits::clip(text))),
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    const HEADER: &str = "t_s,left_mps,right_mps,x_m,y_m,yaw_rad,terrain\n";

    fn err(text: &str) -> String {
        match parse_log(Path::new("drive.csv"), text) {
            Ok(_) => panic!("accepted: {text}"),
            Err(e) => e.to_string(),
        }
    }

    #[test]
    fn reads_local_and_interns_terrains() {
        let text = format!("{HEADER}0,1,1,0,0,0,grass\n0.1,1,1,0.1,0,0,grass\n0.2,1,1,0.2,0,0,gravel\n");
        let log = parse_log(Path::new("a.csv"), &text).expect("valid");
        assert_eq!(log.terrains, vec!["grass", "gravel"]);
        assert_eq!(log.samples[2].terrain, 1);
        assert_eq!(log.samples[2].line, 4);
        assert!(log.origin.is_none());
    }

    #[test]
    fn lat_lon_log_is_projected_about_its_first_sample() {
        let text = "t_s,left_mps,right_mps,lat_deg,lon_deg,yaw_rad,terrain\n\
                    0,1,1,60.0,10.0,0,grass\n1,1,1,60.0001,10.0,1.57,grass\n";
        let log = parse_log(Path::new("geo.csv"), text).expect("valid");
        assert!(log.samples[0].x_m.abs() < 1e-9 && log.samples[0].y_m.abs() < 1e-9);
        // 1e-4 degrees of latitude is about 11.1 m north.
        assert!((log.samples[1].y_m - 11.1).abs() < 0.1, "{}", log.samples[1].y_m);
    }

    #[test]
    fn bad_cell_names_file_line_and_column() {
        let e = err(&format!("{HEADER}0,1,1,0,0,0,grass\n0.1,fast,1,0,0,0,grass\n"));
        assert_eq!(e, "drive.csv: line 3, column left_mps: 'fast' is not a number");
        // The same line with CRLF line endings.
        let crlf = format!("{HEADER}0,1,1,0,0,0,grass\n0.1,fast,1,0,0,0,grass\n").replace('\n', "\r\n");
        assert_eq!(err(&crlf), "drive.csv: line 3, column left_mps: 'fast' is not a number");
    }

    #[test]
    fn time_must_increase() {
        let e = err(&format!("{HEADER}0,1,1,0,0,0,grass\n0,1,1,0,0,0,grass\n"));
        assert!(e.contains("line 3, column t_s") && e.contains("strictly increase"), "{e}");
    }

    #[test]
    fn crlf_logs_report_the_line_an_editor_shows() {
        // Line 1 is the header; the bad cell is on line 4 in both endings.
        let lf = format!("{HEADER}0,1,1,0,0,0,grass\n0.1,1,1,0,0,0,grass\n0.2,1,x,0,0,0,grass\n");
        let crlf = lf.replace('\n', "\r\n");
        assert_eq!(err(&lf), "drive.csv: line 4, column right_mps: 'x' is not a number");
        assert_eq!(err(&crlf), "drive.csv: line 4, column right_mps: 'x' is not a number");
        let short = format!("{HEADER}0,1,1,0,0,0,grass\n0.1,1,1,0,0,0\n").replace('\n', "\r\n");
        assert!(err(&short).starts_with("drive.csv: line 3: has 6 fields"), "{}", err(&short));
        let ok = parse_log(Path::new("a.csv"), &crlf.replace(",x,", ",1,")).expect("valid CRLF log");
        assert_eq!(ok.samples[2].line, 4);
        assert_eq!(ok.terrains, vec!["grass"], "no CR left in the terrain name");
    }

    #[test]
    fn empty_pose_cells_mark_a_dropout_and_half_a_pose_is_an_error() {
        let text = format!("{HEADER}0,1,1,0,0,0,grass\n0.1,1,1,,,,grass\n0.2,1,1,0.2,0,0,grass\n");
        let log = parse_log(Path::new("a.csv"), &text).expect("valid");
        assert!(!log.samples[0].pose_missing && log.samples[1].pose_missing && !log.samples[2].pose_missing);
        assert_eq!(log.samples[1].left_mps, 1.0);
        let e = err(&format!("{HEADER}0,1,1,0,0,0,grass\n0.1,1,1,0.1,,0,grass\n"));
        assert_eq!(e, "drive.csv: line 3, column y_m: is empty");
        let e = err(&format!("{HEADER}0,1,1,,,,grass\n0.1,1,1,,,,grass\n"));
        assert!(e.contains("no row has a pose"), "{e}");
    }

    #[test]
    fn header_problems() {
        assert!(err("t_s,left_mps,right_mps,x_m,yaw_rad,terrain\n0,1,1,0,0,g\n").contains("required column y_m"));
        assert!(err("t_s,left,right_mps,x_m,y_m,yaw_rad,terrain\n").contains("unknown column 'left'"));
        let both = "t_s,left_mps,right_mps,x_m,y_m,lat_deg,lon_deg,yaw_rad,terrain\n";
        assert!(err(both).contains("not both"));
        assert!(err(&format!("{HEADER}0,1,1,0,0,0,grass\n")).contains("fewer than 2"));
        assert!(err(&format!("{HEADER}0,1,1,0,0,0\n")).contains("line 2: has 6 fields"));
        assert!(err(&format!("{HEADER}0,1,1,0,0,inf,grass\n1,1,1,0,0,0,grass\n")).contains("column yaw_rad"));
    }
}

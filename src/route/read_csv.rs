//! Reads a CSV route file: planner output already in a local map frame (x east, y north, metres),
//! kept as is so traces and plots line up with the planner's map (docs/method.md, Frames; README, Inputs).
//!
//! Header `x_m,y_m,terrain` with optional `z_m`, `speed_mps`, `corridor_m`, `leg`, `route`, in any
//! order; an unknown column is an error, so a typo cannot silently drop a speed or corridor.
//! Rows are grouped by `route`; within a route a new leg starts where `leg` changes or, without a
//! `leg` column, where the terrain changes. The boundary point belongs to both legs. A speed or
//! corridor that changes from row to row is a profile along the leg, not a new leg: within a leg
//! every row gives one or none. An empty terrain cell leaves the rows for a terrain map to tag.
//! Line numbers are right for LF and CRLF files (see `csv_line`).

use std::path::Path;
use std::rc::Rc;

use csv::{ReaderBuilder, StringRecord};

use super::{
    check_route_limits, file_stem_name, find_duplicate_point, group_in_order, too_many_points, too_many_total_points,
    Leg, Route, RouteError, SourcePosition, DUPLICATE_POINT_M,
};
use crate::csv_line::LineCounter;
use crate::limits::{
    check_corridor_m, check_speed_mps, clip, printable, show_number, Limits, MAX_ABS_ALTITUDE_M, MAX_ABS_COORDINATE_M,
};

const KNOWN_COLUMNS: &str = "x_m, y_m, terrain and optionally z_m, speed_mps, corridor_m, leg, route";

/// Where each column is in a record.
#[derive(Default)]
struct Columns {
    x_m: Option<usize>,
    y_m: Option<usize>,
    terrain: Option<usize>,
    z_m: Option<usize>,
    speed_mps: Option<usize>,
    corridor_m: Option<usize>,
    leg: Option<usize>,
    route: Option<usize>,
}

/// One data row, validated.
#[derive(Clone)]
struct Row {
    line: usize,
    point: [f64; 2],
    z_m: Option<f64>,
    /// Shared with the previous row when the same (rows of one leg allocate nothing for it).
    terrain: Rc<str>,
    speed_mps: Option<f64>,
    corridor_m: Option<f64>,
    leg: Option<String>,
}

/// A leg being assembled from rows, with the line, speed and corridor of each point.
struct LegBuilder {
    leg: Leg,
    lines: Vec<usize>,
    speeds_mps: Vec<Option<f64>>,
    corridors_m: Vec<Option<f64>>,
}

/// Parses a CSV route file; `path` is only used in messages and `Route::source`. Rows beyond
/// `limits.max_total_points` stop the read at that line; points per leg and legs per route are
/// checked as legs are formed.
pub(super) fn parse(path: &Path, text: &str, limits: &Limits) -> Result<Vec<Route>, RouteError> {
    let file_error = |what: &str| RouteError::File { file: path.to_path_buf(), what: what.to_string() };
    // Spreadsheet and Windows tools often prepend a UTF-8 byte-order mark.
    let text = text.strip_prefix('\u{feff}').unwrap_or(text);
    if text.trim().is_empty() {
        return Err(file_error("file is empty"));
    }
    if let Some(line) = unterminated_quote_line(text) {
        return Err(at(path, line, "a quoted field opens here and is never closed (unterminated \")".to_string()));
    }
    // Cells are trimmed of ASCII blanks as they are read (`cell`), the header's names here.
    let mut reader = ReaderBuilder::new().from_reader(text.as_bytes());
    let mut lines = LineCounter::new(text);
    let header = reader.headers().map_err(|e| csv_error(path, &e, &mut lines, 1))?.clone();
    let columns = read_header(&header).map_err(|what| at(path, 1, what))?;
    // One row a line at most: reserved once (within the point limit) instead of grown.
    let line_count = text.bytes().filter(|&b| b == b'\n').count() + 1;
    let mut rows = Vec::with_capacity(line_count.min(limits.max_total_points.saturating_add(1)));
    // The `route` value of every row, only when the file has that column.
    let mut route_names: Vec<Option<String>> = Vec::new();
    // One record read into again and again, and the previous row's terrain shared.
    let mut record = StringRecord::new();
    let mut terrain: Rc<str> = Rc::from("");
    for k in 0.. {
        match reader.read_record(&mut record) {
            Ok(true) => {}
            Ok(false) => break,
            Err(e) => return Err(csv_error(path, &e, &mut lines, k + 2)),
        }
        let line = lines.line_of(record.position(), k + 2);
        let route = cell(&record, columns.route).filter(|r| !r.is_empty()).map(|r| printable(r).into_owned());
        let cell_terrain = cell(&record, columns.terrain).unwrap_or("");
        if *terrain != *cell_terrain {
            terrain = Rc::from(cell_terrain);
        }
        let row = read_row(&columns, &record, Rc::clone(&terrain), line).map_err(|what| at(path, line, what))?;
        if rows.len() >= limits.max_total_points {
            return Err(at(path, line, too_many_total_points(rows.len() + 1, limits)));
        }
        if columns.route.is_some() {
            route_names.push(route);
        }
        rows.push(row);
    }
    if rows.is_empty() {
        return Err(file_error("has a header but no data rows"));
    }
    let stem = file_stem_name(path);
    let groups = if columns.route.is_some() {
        group_in_order(
            route_names.into_iter().zip(rows).map(|(route, row)| (route.unwrap_or_else(|| stem.clone()), row)),
        )
    } else {
        // Every row belongs to the route named after the file.
        vec![(stem, rows)]
    };
    let routes = groups
        .into_iter()
        .map(|(name, rows)| {
            let legs = split_legs(path, &rows, columns.leg.is_some(), limits)?;
            Ok(Route { name, source: path.to_path_buf(), origin: None, legs, warnings: Vec::new() })
        })
        .collect::<Result<Vec<_>, RouteError>>()?;
    check_route_limits(path, &routes, limits)?;
    Ok(routes)
}

/// The line of a quote that opens a field and is never closed, if any. The CSV reader would
/// otherwise take the rest of the file as one field. A quote opens a field only at its start
/// (after optional blanks); inside a quoted field `""` is a literal quote.
fn unterminated_quote_line(text: &str) -> Option<usize> {
    // Most files quote nothing: one fast scan for a quote instead of the byte-by-byte walk.
    if !text.contains('"') {
        return None;
    }
    let (mut line, mut opened_at, mut in_quotes, mut field_start) = (1, 0, false, true);
    let mut bytes = text.bytes().peekable();
    while let Some(b) = bytes.next() {
        if in_quotes {
            match b {
                b'"' if bytes.peek() == Some(&b'"') => {
                    bytes.next();
                }
                b'"' => in_quotes = false,
                b'\n' => line += 1,
                _ => {}
            }
            continue;
        }
        match b {
            b'"' if field_start => (in_quotes, opened_at) = (true, line),
            b',' => field_start = true,
            b'\n' => (line, field_start) = (line + 1, true),
            b' ' | b'\t' | b'\r' if field_start => {}
            _ => field_start = false,
        }
        if b == b'"' {
            field_start = false;
        }
    }
    in_quotes.then_some(opened_at)
}

fn at(path: &Path, line: usize, what: String) -> RouteError {
    RouteError::At { file: path.to_path_buf(), position: SourcePosition::Line(line), what }
}

fn csv_error(path: &Path, error: &csv::Error, lines: &mut LineCounter, fallback_line: usize) -> RouteError {
    let line = lines.line_of(error.position(), fallback_line);
    let what = match error.kind() {
        csv::ErrorKind::UnequalLengths { expected_len, len, .. } => {
            format!("has {len} fields, the header has {expected_len}")
        }
        _ => format!("cannot parse CSV: {error}"),
    };
    at(path, line, what)
}

fn read_header(header: &StringRecord) -> Result<Columns, String> {
    let mut columns = Columns::default();
    for (index, name) in header.iter().map(str::trim_ascii).enumerate() {
        let slot = match name {
            "x_m" => &mut columns.x_m,
            "y_m" => &mut columns.y_m,
            "terrain" => &mut columns.terrain,
            "z_m" => &mut columns.z_m,
            "speed_mps" => &mut columns.speed_mps,
            "corridor_m" => &mut columns.corridor_m,
            "leg" => &mut columns.leg,
            "route" => &mut columns.route,
            _ => return Err(format!("unknown column '{}' (expected {KNOWN_COLUMNS})", clip(name))),
        };
        if slot.replace(index).is_some() {
            return Err(format!("column {name} appears twice"));
        }
    }
    for (name, slot) in [("x_m", columns.x_m), ("y_m", columns.y_m), ("terrain", columns.terrain)] {
        if slot.is_none() {
            return Err(format!("header lacks the required column {name} (expected {KNOWN_COLUMNS})"));
        }
    }
    Ok(columns)
}

/// The cell `index` of `record`, without leading and trailing ASCII blanks.
fn cell(record: &StringRecord, index: Option<usize>) -> Option<&str> {
    index.and_then(|i| record.get(i)).map(str::trim_ascii)
}

/// The row of `record`, whose terrain cell is `terrain` (an empty terrain waits for a terrain map:
/// `route::check_terrains` refuses it otherwise).
fn read_row(columns: &Columns, record: &StringRecord, terrain: Rc<str>, line: usize) -> Result<Row, String> {
    let z_m = match columns.z_m {
        Some(_) => Some(bounded(required_cell(record, columns.z_m, "z_m")?, "z_m", MAX_ABS_ALTITUDE_M)?),
        None => None,
    };
    Ok(Row {
        line,
        point: [
            bounded(required_cell(record, columns.x_m, "x_m")?, "x_m", MAX_ABS_COORDINATE_M)?,
            bounded(required_cell(record, columns.y_m, "y_m")?, "y_m", MAX_ABS_COORDINATE_M)?,
        ],
        z_m,
        terrain,
        speed_mps: positive_cell(record, columns.speed_mps, "speed_mps")?,
        corridor_m: positive_cell(record, columns.corridor_m, "corridor_m")?,
        leg: cell(record, columns.leg).filter(|l| !l.is_empty()).map(|l| printable(l).into_owned()),
    })
}

fn required_cell<'r>(record: &'r StringRecord, index: Option<usize>, column: &str) -> Result<&'r str, String> {
    match cell(record, index) {
        Some(value) if !value.is_empty() => Ok(value),
        _ => Err(format!("column {column} is empty")),
    }
}

fn number(text: &str, column: &str) -> Result<f64, String> {
    match crate::decimal::parse_f64(text) {
        Ok(value) if value.is_finite() => Ok(value),
        Ok(_) => Err(format!("column {column}: '{}' is not a finite number", clip(text))),
        Err(_) => Err(format!("column {column}: '{}' is not a number", clip(text))),
    }
}

/// A coordinate no larger in magnitude than `max_abs` (see `limits::MAX_ABS_COORDINATE_M`).
fn bounded(text: &str, column: &str, max_abs: f64) -> Result<f64, String> {
    match number(text, column)? {
        value if value.abs() <= max_abs => Ok(value),
        value => Err(format!(
            "column {column}: {} m is beyond +-{max_abs} m (is it in metres, in a local frame?)",
            show_number(value)
        )),
    }
}

/// An optional speed or corridor: an empty cell means "use the profile's default".
fn positive_cell(record: &StringRecord, index: Option<usize>, column: &str) -> Result<Option<f64>, String> {
    match cell(record, index) {
        None | Some("") => Ok(None),
        Some(text) => {
            let value = number(text, column)?;
            let checked = if column == "corridor_m" { check_corridor_m(value) } else { check_speed_mps(value) };
            checked.map(Some).map_err(|what| format!("column {column}: {what}"))
        }
    }
}

/// Splits one route's rows into legs, the first row of each new leg closing the previous one.
fn split_legs(path: &Path, rows: &[Row], has_leg_column: bool, limits: &Limits) -> Result<Vec<Leg>, RouteError> {
    let mut finished = Vec::new();
    let mut current: Option<LegBuilder> = None;
    for row in rows {
        // The builder is changed where it lies: moving it in and out of the option copied the
        // whole leg under construction at every row.
        let Some(builder) = current.as_mut() else {
            current = Some(LegBuilder::start(row));
            continue;
        };
        if !starts_new_leg(&builder.leg, row, has_leg_column).map_err(|what| at(path, row.line, what))? {
            builder.push(row);
        } else {
            builder.close_with(row);
            finished.push(std::mem::replace(builder, LegBuilder::start(row)));
        }
    }
    finished.extend(current);
    finished.into_iter().map(|builder| builder.finish(path, limits)).collect()
}

/// Whether `row` begins a new leg: a change of `leg` or, without a `leg` column, of terrain.
/// A terrain change inside one named leg is an error (which terrain would apply is ambiguous).
fn starts_new_leg(leg: &Leg, row: &Row, has_leg_column: bool) -> Result<bool, String> {
    if !has_leg_column {
        return Ok(*leg.terrain != *row.terrain);
    }
    if leg.name != row.leg {
        return Ok(true);
    }
    if *leg.terrain == *row.terrain {
        return Ok(false);
    }
    let name = leg.name.as_deref().unwrap_or("");
    let name = clip(name);
    Err(format!("terrain changes within leg '{name}': give the new part its own leg value"))
}

impl LegBuilder {
    fn start(row: &Row) -> Self {
        let leg = Leg {
            name: row.leg.clone(),
            altitude_m: row.z_m.map(|z_m| vec![z_m]),
            ..Leg::new(row.terrain.to_string(), vec![row.point], SourcePosition::Line(row.line))
        };
        LegBuilder { leg, lines: vec![row.line], speeds_mps: vec![row.speed_mps], corridors_m: vec![row.corridor_m] }
    }

    fn push(&mut self, row: &Row) {
        self.leg.points.push(row.point);
        if let (Some(altitude_m), Some(z_m)) = (self.leg.altitude_m.as_mut(), row.z_m) {
            altitude_m.push(z_m);
        }
        self.lines.push(row.line);
        self.speeds_mps.push(row.speed_mps);
        self.corridors_m.push(row.corridor_m);
    }

    /// Appends the next leg's first row as this leg's last point, so the legs join exactly. When a
    /// planner already repeated the boundary point (last row of this leg == first row of the next,
    /// within DUPLICATE_POINT_M), it is not added twice: the legs still join. The boundary point
    /// takes the row's speed and corridor where the row gives them and this leg has them, else
    /// it repeats this leg's last ones (a leg without values stays without).
    fn close_with(&mut self, row: &Row) {
        let repeated = self
            .leg
            .points
            .last()
            .is_some_and(|last| (row.point[0] - last[0]).hypot(row.point[1] - last[1]) < DUPLICATE_POINT_M);
        if repeated {
            return;
        }
        let carry = |values: &[Option<f64>], given: Option<f64>| {
            values.last().copied().flatten().map(|last| given.unwrap_or(last))
        };
        let (speed_mps, corridor_m) =
            (carry(&self.speeds_mps, row.speed_mps), carry(&self.corridors_m, row.corridor_m));
        self.push(&Row { speed_mps, corridor_m, ..row.clone() });
    }

    fn finish(self, path: &Path, limits: &Limits) -> Result<Leg, RouteError> {
        let LegBuilder { mut leg, lines, speeds_mps, corridors_m } = self;
        let first_line = lines.first().copied().unwrap_or(1);
        let label = leg.name.as_ref().map_or_else(|| "leg".to_string(), |name| format!("leg '{}'", clip(name)));
        let n = leg.points.len();
        if n < 2 {
            let what = format!("{label} has {n} point{}, at least 2 are needed", if n == 1 { "" } else { "s" });
            return Err(at(path, first_line, what));
        }
        if n > limits.max_points_per_leg {
            return Err(at(path, first_line, format!("{label} {}", too_many_points(n, limits))));
        }
        if let Some((i, distance_m)) = find_duplicate_point(&leg.points) {
            let (line_a, line_b) =
                (lines.get(i).copied().unwrap_or(first_line), lines.get(i + 1).copied().unwrap_or(first_line));
            let what = format!(
                "points on lines {line_a} and {line_b} are {distance_m:.4} m apart (closer than {DUPLICATE_POINT_M} m): remove the duplicate"
            );
            return Err(at(path, line_a, what));
        }
        let profile = |values: Vec<Option<f64>>, column: &str| -> Result<Option<Vec<f64>>, RouteError> {
            match all_or_none(&values) {
                Ok(profile) => Ok(profile),
                Err((given, empty)) => {
                    let (given, empty) = (lines.get(given).copied(), lines.get(empty).copied());
                    let (given, empty) = (given.unwrap_or(first_line), empty.unwrap_or(first_line));
                    let what = format!(
                        "column {column} is empty but line {given} of the same {label} gives one: fill it on every row \
                         of the leg, or on none (an empty leg takes the profile's default)"
                    );
                    Err(at(path, empty, what))
                }
            }
        };
        if let Some(v) = profile(speeds_mps, "speed_mps")? {
            leg.set_speed_profile(v);
        }
        if let Some(v) = profile(corridors_m, "corridor_m")? {
            leg.set_corridor_profile(v);
        }
        Ok(leg)
    }
}

/// Every value, or `None` when none is given; a mix is `Err((index given, index empty))`.
fn all_or_none(values: &[Option<f64>]) -> Result<Option<Vec<f64>>, (usize, usize)> {
    let given = values.iter().position(Option::is_some);
    let empty = values.iter().position(Option::is_none);
    match (given, empty) {
        (None, _) => Ok(None),
        (Some(_), None) => Ok(Some(values.iter().flatten().copied().collect())),
        (Some(g), Some(e)) => Err((g, e)),
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    const FILE: &str = "plans/yard.csv";

    fn read(text: &str) -> Result<Vec<Route>, RouteError> {
        parse(Path::new(FILE), text, &Limits::default())
    }

    /// The error message, checked to name the file.
    fn error_of(text: &str) -> String {
        let message = match read(text) {
            Ok(routes) => panic!("expected an error, read {} routes", routes.len()),
            Err(e) => e.to_string(),
        };
        assert!(message.starts_with(&format!("{FILE}: ")), "{message}");
        message
    }

    fn xs(leg: &Leg) -> Vec<f64> {
        leg.points.iter().map(|p| p[0]).collect()
    }

    #[test]
    fn reads_one_leg_in_the_map_frame() {
        let routes = read("x_m,y_m,terrain\n0,0,grass\n10.5,-2,grass\n20,3.25,grass\n").expect("valid file");
        assert_eq!(routes.len(), 1);
        let route = &routes[0];
        assert_eq!((route.name.as_str(), route.origin, route.source.as_path()), ("yard", None, Path::new(FILE)));
        assert_eq!(route.legs.len(), 1);
        let leg = &route.legs[0];
        assert_eq!(leg.points, vec![[0.0, 0.0], [10.5, -2.0], [20.0, 3.25]]);
        assert_eq!(
            (leg.name.as_deref(), leg.terrain.as_str(), leg.speed_mps, leg.corridor_m),
            (None, "grass", None, None)
        );
        assert_eq!((leg.altitude_m.as_ref(), leg.position), (None, SourcePosition::Line(2)));
    }

    #[test]
    fn splits_legs_where_the_terrain_changes_sharing_the_boundary_point() {
        let text = "terrain, y_m, x_m, speed_mps, corridor_m\n\
                    grass, 0, 0, 1.0, 0.5\n\
                    grass, 0, 10, 1.0, 0.5\n\
                    snow, 0, 20, 1.0, 0.4\n\
                    snow, 0, 30, 0.5, 0.4\n\
                    snow, 0, 40, 0.5, 0.3\n\
                    snow, 0, 50, 0.5, 0.3\n";
        let routes = read(text).expect("valid file");
        let legs = &routes[0].legs;
        assert_eq!(legs.len(), 2);
        assert_eq!(xs(&legs[0]), [0.0, 10.0, 20.0]);
        assert_eq!(xs(&legs[1]), [20.0, 30.0, 40.0, 50.0]);
        let positions: Vec<_> = legs.iter().map(|l| l.position).collect();
        assert_eq!(positions, [2, 4].map(SourcePosition::Line));
        assert_eq!((legs[0].terrain.as_str(), legs[1].terrain.as_str()), ("grass", "snow"));
        // The boundary point takes the next row's values: a profile on the first leg.
        assert_eq!((legs[0].speed_mps, legs[0].speeds_mps.as_ref()), (Some(1.0), None));
        assert_eq!((legs[0].corridor_m, legs[0].corridors_m.as_deref()), (Some(0.4), Some(&[0.5, 0.5, 0.4][..])));
        // Speed and corridor change inside the snow leg: profiles, nominal = max speed, min corridor.
        assert_eq!(legs[1].speeds_mps.as_deref(), Some(&[1.0, 0.5, 0.5, 0.5][..]));
        assert_eq!(legs[1].corridors_m.as_deref(), Some(&[0.4, 0.4, 0.3, 0.3][..]));
        assert_eq!((legs[1].speed_mps, legs[1].corridor_m), (Some(1.0), Some(0.3)));
    }

    #[test]
    fn a_speed_changing_on_every_row_is_a_profile_of_one_leg() {
        // A planner's ramp: 300 rows, speed rising 0.01 m/s per row (once refused as 1-point legs).
        let mut text = String::from("x_m,y_m,terrain,speed_mps\n");
        for i in 0..300 {
            text.push_str(&format!("{},0,grass,{}\n", i, 0.2 + 0.01 * i as f64));
        }
        let routes = read(&text).expect("valid file");
        let legs = &routes[0].legs;
        assert_eq!(legs.len(), 1);
        let profile = legs[0].speeds_mps.as_ref().expect("profile");
        assert_eq!(profile.len(), 300);
        approx::assert_relative_eq!(profile[150], 1.7, epsilon = 1e-12);
        approx::assert_relative_eq!(legs[0].speed_mps.unwrap_or(0.0), 3.19, epsilon = 1e-12);
    }

    #[test]
    fn rejects_a_speed_given_on_some_rows_of_a_leg_only() {
        let message = error_of("x_m,y_m,terrain,speed_mps\n0,0,grass,1\n1,0,grass,\n2,0,grass,1\n");
        assert_eq!(
            message,
            format!(
                "{FILE}: line 3: column speed_mps is empty but line 2 of the same leg gives one: fill it on every row \
                 of the leg, or on none (an empty leg takes the profile's default)"
            )
        );
        // Each leg decides for itself: values on one, none on the next.
        let routes = read("x_m,y_m,terrain,corridor_m\n0,0,grass,0.5\n1,0,grass,0.5\n2,0,snow,\n3,0,snow,\n");
        let legs = &routes.expect("valid")[0].legs;
        assert_eq!((legs[0].corridor_m, legs[1].corridor_m), (Some(0.5), None));
    }

    #[test]
    fn reports_the_right_line_in_a_crlf_file() {
        // The error is on line 5 (header on line 1), whatever the line ending.
        let lf = "x_m,y_m,terrain\n0,0,grass\n1,0,grass\n2,0,grass\n3,abc,grass\n";
        let expected = format!("{FILE}: line 5: column y_m: 'abc' is not a number");
        assert_eq!(error_of(lf), expected);
        assert_eq!(error_of(&lf.replace('\n', "\r\n")), expected);
        let short = "x_m,y_m,terrain\r\n0,0,grass\r\n1,0,grass\r\n2,0\r\n";
        assert!(error_of(short).contains("line 4: has 2 fields, the header has 3"));
        let legs =
            &read("x_m,y_m,terrain\r\n0,0,grass\r\n1,0,grass\r\n2,0,snow\r\n3,0,snow\r\n").expect("valid")[0].legs;
        assert_eq!((legs[0].position, legs[1].position), (SourcePosition::Line(2), SourcePosition::Line(4)));
    }

    #[test]
    fn splits_legs_by_the_leg_column_with_altitude() {
        let text = "x_m,y_m,z_m,terrain,leg\n\
                    0,0,100,grass,approach\n\
                    10,0,101,grass,approach\n\
                    10,10,102,grass,climb\n\
                    10,20,104,grass,climb\n";
        let routes = read(text).expect("valid file");
        let legs = &routes[0].legs;
        assert_eq!(legs.len(), 2);
        assert_eq!((legs[0].name.as_deref(), legs[1].name.as_deref()), (Some("approach"), Some("climb")));
        assert_eq!(legs[0].points, vec![[0.0, 0.0], [10.0, 0.0], [10.0, 10.0]]);
        assert_eq!(legs[0].altitude_m, Some(vec![100.0, 101.0, 102.0]));
        assert_eq!(legs[1].altitude_m, Some(vec![102.0, 104.0]));
        assert_eq!(legs[1].position, SourcePosition::Line(4));
    }

    #[test]
    fn a_repeated_boundary_point_is_not_doubled() {
        // Planners often end one leg and start the next on the same point.
        let text = "x_m,y_m,terrain,leg\n0,0,grass,a\n10,0,grass,a\n10,0,snow,b\n20,0,snow,b\n";
        let legs = &read(text).expect("valid file")[0].legs;
        assert_eq!(xs(&legs[0]), [0.0, 10.0]);
        assert_eq!(xs(&legs[1]), [10.0, 20.0]);
    }

    #[test]
    fn groups_rows_by_route_in_order_of_first_appearance() {
        let text = "route,x_m,y_m,terrain\n\
                    west,0,0,grass\n\
                    ,5,5,grass\n\
                    west,-10,0,grass\n\
                    east,0,0,gravel\n\
                    ,6,6,grass\n\
                    east,10,0,gravel\n";
        let routes = read(text).expect("valid file");
        let names: Vec<_> = routes.iter().map(|r| r.name.as_str()).collect();
        assert_eq!(names, ["west", "yard", "east"]);
        assert_eq!(xs(&routes[0].legs[0]), [0.0, -10.0]);
        assert_eq!(routes[1].legs[0].points, vec![[5.0, 5.0], [6.0, 6.0]]);
        assert_eq!(routes[1].legs[0].position, SourcePosition::Line(3));
        assert_eq!(xs(&routes[2].legs[0]), [0.0, 10.0]);
    }

    #[test]
    fn accepts_a_byte_order_mark() {
        assert!(read("\u{feff}x_m,y_m,terrain\n0,0,grass\n1,0,grass\n").is_ok());
    }

    #[test]
    fn rejects_an_empty_file_or_a_header_alone() {
        assert_eq!(error_of(""), format!("{FILE}: file is empty"));
        assert_eq!(error_of("\n  \n"), format!("{FILE}: file is empty"));
        assert_eq!(error_of("x_m,y_m,terrain\n"), format!("{FILE}: has a header but no data rows"));
    }

    #[test]
    fn rejects_unknown_duplicate_and_missing_columns() {
        let message = error_of("x_m,y_m,terrain,speed\n0,0,grass,1\n");
        assert!(message.starts_with(&format!("{FILE}: line 1: unknown column 'speed'")), "{message}");
        assert!(error_of("x_m,y_m,terrain,x_m\n0,0,grass,1\n").contains("line 1: column x_m appears twice"));
        assert!(error_of("x_m,y_m\n0,0\n").contains("line 1: header lacks the required column terrain"));
    }

    #[test]
    fn an_empty_terrain_cell_leaves_a_leg_for_the_terrain_map() {
        let routes = read("x_m,y_m,terrain\n0,0,grass\n1,0,\n2,0,\n").expect("valid file");
        let legs = &routes[0].legs;
        assert_eq!(legs.len(), 2);
        assert!(legs[0].has_terrain() && !legs[1].has_terrain());
        assert_eq!(legs[1].position, SourcePosition::Line(3));
    }

    #[test]
    fn rejects_non_finite_and_non_numeric_values() {
        let message = error_of("x_m,y_m,terrain\nNaN,0,grass\n1,0,grass\n");
        assert_eq!(message, format!("{FILE}: line 2: column x_m: 'NaN' is not a finite number"));
        assert!(
            error_of("x_m,y_m,terrain\n0,0,grass\n1,inf,grass\n").contains("line 3: column y_m: 'inf' is not a finite")
        );
        assert!(
            error_of("x_m,y_m,terrain,z_m\n0,0,grass,1e999\n").contains("line 2: column z_m: '1e999' is not a finite")
        );
        assert!(
            error_of("x_m,y_m,terrain\n0,0,grass\n1,abc,grass\n").contains("line 3: column y_m: 'abc' is not a number")
        );
        assert!(error_of("x_m,y_m,terrain,z_m\n0,0,grass,1\n1,0,grass,\n").contains("line 3: column z_m is empty"));
    }

    #[test]
    fn rejects_a_negative_speed_or_a_zero_corridor() {
        let message = error_of("x_m,y_m,terrain,speed_mps\n0,0,grass,1\n1,0,grass,-1.5\n");
        assert_eq!(message, format!("{FILE}: line 3: column speed_mps: -1.5 must be > 0"));
        assert!(
            error_of("x_m,y_m,terrain,corridor_m\n0,0,grass,0\n").contains("line 2: column corridor_m: 0 must be > 0")
        );
    }

    #[test]
    fn rejects_an_unterminated_quote_with_its_line() {
        let message = error_of("x_m,y_m,terrain\n0,0,grass\n1,0,\"grass\n2,0,grass\n");
        assert_eq!(message, format!("{FILE}: line 3: a quoted field opens here and is never closed (unterminated \")"));
        // Closed quotes, doubled quotes and a quote inside a field are fine.
        assert_eq!(unterminated_quote_line("a,\"b\"\"c\",d\n\"e\nf\",5\"\n"), None);
    }

    #[test]
    fn rejects_speeds_and_corridors_out_of_their_plausible_range() {
        let message = error_of("x_m,y_m,terrain,speed_mps\n0,0,grass,1e-6\n1,0,grass,1e-6\n");
        assert!(message.contains("line 2: column speed_mps: 1e-6 m/s is slower than 0.05 m/s"), "{message}");
        let message = error_of("x_m,y_m,terrain,speed_mps\n0,0,grass,1e308\n1,0,grass,1\n");
        assert!(message.contains("line 2: column speed_mps: 1e308 m/s is faster than 100 m/s"), "{message}");
        let message = error_of("x_m,y_m,terrain,corridor_m\n0,0,grass,1e5\n1,0,grass,1\n");
        assert!(message.contains("line 2: column corridor_m: 100000 m is wider than 10000 m"), "{message}");
    }

    #[test]
    fn rejects_a_row_with_the_wrong_field_count() {
        let message = error_of("x_m,y_m,terrain\n0,0,grass\n1,0\n");
        assert!(message.contains("line 3: has 2 fields, the header has 3"), "{message}");
    }

    #[test]
    fn rejects_a_one_point_leg() {
        assert_eq!(
            error_of("x_m,y_m,terrain\n0,0,grass\n"),
            format!("{FILE}: line 2: leg has 1 point, at least 2 are needed")
        );
        // A terrain change on the last row leaves the new leg with a single point.
        let message = error_of("x_m,y_m,terrain,leg\n0,0,grass,a\n1,0,grass,a\n2,0,snow,b\n");
        assert_eq!(message, format!("{FILE}: line 4: leg 'b' has 1 point, at least 2 are needed"));
    }

    #[test]
    fn rejects_duplicate_consecutive_points() {
        let message = error_of("x_m,y_m,terrain\n0,0,grass\n5,5,grass\n5,5.0001,grass\n9,9,grass\n");
        assert!(
            message.starts_with(&format!("{FILE}: line 3: points on lines 3 and 4 are 0.0001 m apart")),
            "{message}"
        );
    }

    #[test]
    fn rejects_a_terrain_change_within_a_named_leg() {
        let message = error_of("x_m,y_m,terrain,leg\n0,0,grass,a\n1,0,snow,a\n2,0,snow,a\n");
        assert!(message.contains("line 3: terrain changes within leg 'a'"), "{message}");
        // Speed may change within a named leg: a profile.
        let routes = read("x_m,y_m,terrain,leg,speed_mps\n0,0,grass,a,1\n1,0,grass,a,2\n2,0,grass,a,1\n");
        assert_eq!(routes.expect("valid")[0].legs[0].speeds_mps.as_deref(), Some(&[1.0, 2.0, 1.0][..]));
    }
}

//! Batch screening inputs: expands folders into the route files inside (`.geojson`, `.json`,
//! `.csv`, sorted by name, not recursive) and reads many files in parallel (rayon), keeping
//! the input order so outputs are stable. Each route read gets the run's site inputs (terrain
//! map, elevation raster; `crate::site`) before its terrains are checked against the profile.

use std::path::{Path, PathBuf};

use rayon::prelude::*;

use crate::limits::Limits;
use crate::route::{check_terrains, read_routes_with, Route, RouteError, STDIN_ARG};
use crate::site::{apply_site, Site};
use crate::vehicle::Profile;
use crate::Error;

/// Route file extensions taken from a folder.
pub const ROUTE_EXTENSIONS: [&str; 3] = ["geojson", "json", "csv"];

fn is_route_file(p: &Path) -> bool {
    p.is_file()
        && p.extension()
            .and_then(|e| e.to_str())
            .is_some_and(|e| ROUTE_EXTENSIONS.contains(&e.to_ascii_lowercase().as_str()))
}

/// Files and folders to route files: a file stays as given, a folder gives its route files
/// sorted by name. An empty folder is an error (a pipeline must not pass on nothing), and so is
/// standard input (`-`) named twice.
pub fn expand_inputs(paths: &[PathBuf]) -> Result<Vec<PathBuf>, RouteError> {
    let mut out = Vec::new();
    if paths.iter().filter(|p| p.as_path() == Path::new(STDIN_ARG)).count() > 1 {
        return Err(RouteError::File {
            file: PathBuf::from(crate::route::STDIN_NAME),
            what: "standard input (-) is named more than once; it can be read only once".into(),
        });
    }
    for path in paths {
        if !path.is_dir() {
            out.push(path.clone());
            continue;
        }
        let io = |source| RouteError::Io { file: path.clone(), source };
        let mut files = Vec::new();
        for entry in std::fs::read_dir(path).map_err(io)? {
            let p = entry.map_err(io)?.path();
            if is_route_file(&p) {
                files.push(p);
            }
        }
        if files.is_empty() {
            return Err(RouteError::File {
                file: path.clone(),
                what: "folder holds no .geojson, .json or .csv files".into(),
            });
        }
        files.sort();
        out.extend(files);
    }
    Ok(out)
}

/// Reads every route of every file in parallel and checks each leg's terrain against the
/// profile; routes come out in file order, then in order within each file. The first error in
/// input order is returned.
pub fn load_routes_parallel(paths: &[PathBuf], profile: &Profile) -> Result<Vec<Route>, Error> {
    load_routes_parallel_with(paths, profile, &Limits::default())
}

/// [`load_routes_parallel`] with explicit limits (per file while reading, then over the run as
/// [`crate::check::check_run_limits`]).
pub fn load_routes_parallel_with(paths: &[PathBuf], profile: &Profile, limits: &Limits) -> Result<Vec<Route>, Error> {
    load_routes_parallel_on_site(paths, profile, limits, &Site::default())
}

/// [`load_routes_parallel_with`] with the site inputs applied to every route.
pub fn load_routes_parallel_on_site(
    paths: &[PathBuf],
    profile: &Profile,
    limits: &Limits,
    site: &Site,
) -> Result<Vec<Route>, Error> {
    let per_file: Vec<Result<Vec<Route>, Error>> =
        paths.par_iter().map(|p| load_file(p, profile, limits, site)).collect();
    let mut routes = Vec::new();
    for r in per_file {
        routes.extend(r?);
    }
    crate::check::check_run_limits(&routes, profile, limits)?;
    Ok(routes)
}

/// A route file that could not be read, for `--keep-going`: its path and the one-line message.
#[derive(Debug, Clone)]
pub struct BadFile {
    pub file: PathBuf,
    pub error: String,
}

/// [`load_routes_parallel_with`] that goes on past bad files: every file that cannot be read,
/// names an unknown terrain, or breaks a per-route or run limit is returned as a [`BadFile`]
/// (in input order) and its routes are left out; the other files' routes come back in order.
pub fn load_routes_keep_going(paths: &[PathBuf], profile: &Profile, limits: &Limits) -> (Vec<Route>, Vec<BadFile>) {
    load_routes_keep_going_on_site(paths, profile, limits, &Site::default())
}

/// [`load_routes_keep_going`] with the site inputs applied to every route; a file whose routes
/// the site inputs cannot be applied to (outside the map, off the raster) is a [`BadFile`] too.
pub fn load_routes_keep_going_on_site(
    paths: &[PathBuf],
    profile: &Profile,
    limits: &Limits,
    site: &Site,
) -> (Vec<Route>, Vec<BadFile>) {
    let per_file: Vec<Result<Vec<Route>, Error>> = paths
        .par_iter()
        .map(|p| {
            let routes = load_file(p, profile, limits, site)?;
            for r in &routes {
                crate::check::check_run_limits(std::slice::from_ref(r), profile, limits)?;
            }
            Ok(routes)
        })
        .collect();
    let (mut routes, mut bad, mut total_points) = (Vec::new(), Vec::new(), 0usize);
    for (path, r) in paths.iter().zip(per_file) {
        let file_routes = match r {
            Ok(file_routes) => file_routes,
            Err(e) => {
                bad.push(BadFile { file: path.clone(), error: e.to_string() });
                continue;
            }
        };
        let points: usize = file_routes.iter().flat_map(|r| &r.legs).map(|l| l.points.len()).sum();
        if total_points.saturating_add(points) > limits.max_total_points {
            let what = crate::route::too_many_total_points(total_points.saturating_add(points), limits);
            bad.push(BadFile { file: path.clone(), error: format!("{}: {what}", path.display()) });
            continue;
        }
        total_points += points;
        routes.extend(file_routes);
    }
    (routes, bad)
}

/// The routes of one file with the site inputs applied and their terrains checked.
pub(crate) fn load_file(path: &Path, profile: &Profile, limits: &Limits, site: &Site) -> Result<Vec<Route>, Error> {
    let known = profile.terrain_names();
    let mut routes = read_routes_with(path, limits)?;
    if !site.is_empty() {
        routes = routes.into_iter().map(|r| apply_site(r, site, limits)).collect::<Result<_, _>>()?;
    }
    for r in &routes {
        check_terrains(r, &known)?;
    }
    Ok(routes)
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::check::check_routes;

    /// 1000 small routes in 1000 files in a folder: every route is reported once, in name order,
    /// and a second run gives the same order.
    #[test]
    fn batch_of_a_thousand_routes_reports_each_once_in_stable_order() {
        let dir = tempfile::tempdir().expect("tempdir");
        for i in 0..1000 {
            let text = format!("x_m,y_m,terrain\n0,0,asphalt\n{},0,asphalt\n{},2,asphalt\n", 5 + i % 7, 9 + i % 5);
            std::fs::write(dir.path().join(format!("r{i:04}.csv")), text).expect("write");
        }
        std::fs::write(dir.path().join("notes.txt"), "not a route").expect("write");
        let files = expand_inputs(&[dir.path().to_path_buf()]).expect("expand");
        assert_eq!(files.len(), 1000);
        let profile = Profile::demo();
        let routes = load_routes_parallel(&files, &profile).expect("load");
        let run = check_routes(routes, &profile, true);
        let names: Vec<String> = run.routes.iter().map(|r| r.report.route.clone()).collect();
        let expected: Vec<String> = (0..1000).map(|i| format!("r{i:04}")).collect();
        assert_eq!(names, expected);
        let lines = crate::report::jsonl::check_jsonl(&run);
        assert_eq!(lines.lines().count(), 1000);
        let again = check_routes(load_routes_parallel(&files, &profile).expect("load"), &profile, true);
        assert_eq!(crate::report::jsonl::check_jsonl(&again), lines);
    }

    #[test]
    fn keep_going_reports_bad_files_and_reads_the_rest() {
        let dir = tempfile::tempdir().expect("tempdir");
        let good = dir.path().join("a.csv");
        std::fs::write(&good, "x_m,y_m,terrain\n0,0,asphalt\n10,0,asphalt\n").expect("write");
        let bad = dir.path().join("b.csv");
        std::fs::write(&bad, "x_m,y_m,terrain\n0,0,lava\n10,0,lava\n").expect("write");
        let (routes, errors) = load_routes_keep_going(&[bad.clone(), good], &Profile::demo(), &Limits::default());
        assert_eq!(routes.len(), 1);
        assert_eq!(errors.len(), 1);
        assert_eq!(errors[0].file, bad);
        assert!(errors[0].error.contains("unknown terrain 'lava'"), "{}", errors[0].error);
    }

    #[test]
    fn empty_folder_is_an_error_naming_it() {
        let dir = tempfile::tempdir().expect("tempdir");
        let e = expand_inputs(&[dir.path().to_path_buf()]).expect_err("empty");
        assert!(e.to_string().contains("holds no"), "{e}");
    }
}

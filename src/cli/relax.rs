//! `skidroute relax`: widen corners too tight for the terrain and write the repaired route.

use std::fmt::Write;
use std::path::{Path, PathBuf};
use std::process::ExitCode;

use anyhow::{bail, Result};
use clap::Args;
use serde::Serialize;
use skidroute::assess::Verdict;
use skidroute::relax::{relax_route, Change, RelaxSettings, Relaxed, Unrepaired};
use skidroute::report;
use skidroute::site::split::rejoin_pieces;
use skidroute::site::{apply_site, Site};
use skidroute::CAUTION;

use super::common::{check_outputs, CommonArgs};
use super::{emit, load_profile};

/// Said with every relax result.
pub const NOT_CHECKED_FOR_OBSTACLES: &str =
    "The new path was not checked for obstacles, slopes or boundaries: review it on the map before use.";

#[derive(Args)]
#[command(
    mut_arg("json", |a| a.help("Print the changes as JSON instead of text")),
    mut_arg("report", |a| a.help("Write the JSON document of the changes to this file")),
    mut_arg("plot", |a| a.help("Write a plot of the relaxed route as check draws it (.svg or .png)")),
)]
pub struct RelaxArgs {
    /// Route file (.geojson, .json or .csv).
    pub route: PathBuf,
    /// Where to write the relaxed route, in the input's format.
    #[arg(short, long, value_name = "FILE")]
    pub out: PathBuf,
    #[command(flatten)]
    pub common: CommonArgs,
    #[command(flatten)]
    pub site: super::site::SiteArgs,
    #[command(flatten)]
    pub limits: super::limits::LimitArgs,
}

fn family(p: &Path) -> Option<&'static str> {
    match p.extension().and_then(|e| e.to_str()).map(str::to_ascii_lowercase).as_deref() {
        Some("geojson" | "json") => Some("geojson"),
        Some("csv") => Some("csv"),
        _ => None,
    }
}

#[derive(Serialize)]
struct RouteResult<'a> {
    route: &'a str,
    changes: &'a [Change],
    unrepaired: &'a [Unrepaired],
    max_displacement_m: f64,
    verdict_before: Verdict,
    verdict_after: Verdict,
}

#[derive(Serialize)]
struct RelaxDocument<'a> {
    format: &'static str,
    input: String,
    output: String,
    demo_profile: bool,
    routes: Vec<RouteResult<'a>>,
    note: &'static str,
    caution: &'static str,
}

fn describe(out: &mut String, name: &str, r: &Relaxed, before: Verdict, after: Verdict) {
    let _ = writeln!(out, "route '{name}': {} -> {}", before.name().to_uppercase(), after.name().to_uppercase());
    for c in &r.changes {
        let legs = c.legs.iter().map(|l| l.to_string()).collect::<Vec<_>>().join("+");
        let speed = c.new_speed_mps.map_or(String::new(), |v| format!(", speed {:.2} -> {v:.2} m/s", c.old_speed_mps));
        let _ = writeln!(
            out,
            "  leg {legs} at {:.0} m (x {:.2}, y {:.2}): {:.0} deg turn, radius {:.2} -> {:.2} m{speed}; plan moves up to {:.2} m",
            c.at_m, c.x_m, c.y_m, c.turn_deg.abs(), c.old_radius_m, c.new_radius_m, c.max_displacement_m
        );
    }
    for u in &r.unrepaired {
        let legs = u.legs.iter().map(|l| l.to_string()).collect::<Vec<_>>().join("+");
        let _ = writeln!(
            out,
            "  leg {legs} at {:.0} m (x {:.2}, y {:.2}): NOT REPAIRED, needs radius {:.2} m: {}",
            u.at_m, u.x_m, u.y_m, u.needed_radius_m, u.reason
        );
    }
    if r.changes.is_empty() && r.unrepaired.is_empty() {
        let _ = writeln!(out, "  no corner needed widening");
    }
}

pub fn run_relax(a: RelaxArgs) -> Result<ExitCode> {
    let CommonArgs { vehicle, json, report: report_json, plot, quiet } = a.common;
    let (Some(fin), Some(fout)) = (family(&a.route), family(&a.out)) else {
        bail!("{}: relax reads and writes .geojson, .json or .csv", a.out.display());
    };
    if fin != fout {
        bail!("{}: the output must be {fin} like the input {}", a.out.display(), a.route.display());
    }
    let inputs: Vec<PathBuf> =
        std::iter::once(a.route.clone()).chain(vehicle.iter().cloned()).chain(a.site.inputs().cloned()).collect();
    let outputs: Vec<&PathBuf> = std::iter::once(&a.out).chain(&report_json).chain(&plot).collect();
    report::refuse_overwriting_inputs(&inputs, outputs.iter().copied())?;
    check_outputs(plot.as_ref(), std::iter::once(&a.out).chain(&report_json))?;
    let limits = a.limits.resolve()?;
    let (profile, demo) = load_profile(&vehicle, &limits)?;
    let site = a.site.load(&limits)?;
    let routes = skidroute::check::load_routes_on_site(std::slice::from_ref(&a.route), &profile, &limits, &site)?;
    super::site::print_warnings(&routes, quiet);
    // Read for rewriting only after the reader accepted it (within the size limit, a regular file).
    let text = std::fs::read_to_string(&a.route)
        .map_err(|source| skidroute::route::RouteError::Io { file: a.route.clone(), source })?;
    let budget = limits.work_budget();
    let search_before = skidroute::check::charge_check(&budget, &routes, &profile, &limits, "checking")?;
    let settings = RelaxSettings::default();
    let relaxed = routes.iter().map(|r| relax_route(r, &profile, &settings)).collect::<Result<Vec<_>, _>>()?;
    let mut new_routes: Vec<_> = relaxed.iter().map(|r| r.route.clone()).collect();
    // The file is written leg for leg as read: pieces cut by a terrain map are joined again.
    let (as_read, to_write) = if site.is_empty() {
        (routes.clone(), new_routes.clone())
    } else {
        let as_read = skidroute::route::read_routes_with(&a.route, &limits)?;
        let joined = new_routes.iter().zip(&as_read).map(|(n, r)| rejoin_pieces(n, r)).collect();
        (as_read, joined)
    };
    if site.elevation.is_some() {
        // The new corners' altitude and cross slope come from the raster, not from the old plan.
        let raster_only = Site { terrain_map: None, ..site.clone() };
        for r in &mut new_routes {
            *r = apply_site(r.clone(), &raster_only, &limits)?;
        }
    }
    let written = match fin {
        "geojson" => report::relaxed::relaxed_geojson(&text, &as_read, &to_write),
        _ => report::relaxed::relaxed_csv(&text, &as_read, &to_write),
    }
    .map_err(|what| report::ReportError::Output { file: a.route.clone(), what })?;
    // Charged before anything is written: a refusal leaves no relaxed file behind.
    let search_after = skidroute::check::charge_check(&budget, &new_routes, &profile, &limits, "checking the relaxed")?;
    report::write_atomic(&a.out, written.as_bytes())?;
    let before =
        skidroute::check::check_routes_searching(routes.clone(), &profile, demo, &limits, true, &search_before);
    let mut after = skidroute::check::check_routes_searching(new_routes, &profile, demo, &limits, true, &search_after);
    after.terrain_map = site.terrain_map.clone();
    let results: Vec<RouteResult> = relaxed
        .iter()
        .zip(before.routes.iter().zip(&after.routes))
        .map(|(r, (b, c))| RouteResult {
            route: &r.route.name,
            changes: &r.changes,
            unrepaired: &r.unrepaired,
            max_displacement_m: r.max_displacement_m,
            verdict_before: b.report.verdict,
            verdict_after: c.report.verdict,
        })
        .collect();
    let ok = results.iter().all(|r| r.unrepaired.is_empty() && r.verdict_after != Verdict::Fail);
    if let Some(p) = &plot {
        report::plot::write_plot(&after, p)?;
    }
    let doc = RelaxDocument {
        format: "skidroute-relax/1",
        input: a.route.display().to_string(),
        output: a.out.display().to_string(),
        demo_profile: demo,
        routes: results,
        note: NOT_CHECKED_FOR_OBSTACLES,
        caution: CAUTION,
    };
    let doc_json = format!("{}\n", serde_json::to_string_pretty(&doc)?);
    if let Some(p) = &report_json {
        report::write_atomic(p, doc_json.as_bytes())?;
    }
    if report::stdout_is_an_output(outputs.iter().copied()) {
        // An output named `-` has standard output to itself.
    } else if json {
        emit(&doc_json)?;
    } else if !quiet {
        let mut out = String::new();
        if demo {
            let _ = writeln!(
                out,
                "vehicle: {} (built-in demo profile; pass --vehicle FILE for your own)",
                profile.vehicle.name
            );
        }
        for (r, res) in relaxed.iter().zip(&doc.routes) {
            describe(&mut out, res.route, r, res.verdict_before, res.verdict_after);
        }
        let _ = writeln!(out, "wrote {}", a.out.display());
        let _ = writeln!(out, "\nnote: {NOT_CHECKED_FOR_OBSTACLES}\ncaution: {CAUTION}");
        emit(&out)?;
    }
    Ok(if ok { ExitCode::SUCCESS } else { ExitCode::from(1) })
}

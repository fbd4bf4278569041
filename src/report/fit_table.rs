//! The terminal report of a fit: what the log checks found and repaired; per terrain its moving
//! time and window counts, one row per model family with its parameters and standard errors,
//! validation errors (median and interquartile range, and the 95 % bootstrap interval of the
//! median), which family was chosen and why, warnings (too few validation windows, a noise
//! floor), the noise intensities for `drift`, the horizon sweep when asked for, and the caution
//! text. Plain words and units.

use std::fmt::Write;

use comfy_table::{presets, Cell, CellAlignment, ContentArrangement, Table};

use crate::fit::bootstrap::Interval;
use crate::fit::stats::Spread;
use crate::fit::sweep::SweepTable;
use crate::fit::{FamilyFit, FitRun, TerrainFit, TerrainOutcome};
use crate::CAUTION;

/// A number with about four significant digits.
fn sig(x: f64) -> String {
    if x == 0.0 || !x.is_finite() {
        return format!("{x}");
    }
    let decimals = (3 - x.abs().log10().floor() as i32).clamp(0, 8) as usize;
    format!("{x:.decimals$}")
}

fn params_cell(f: &FamilyFit) -> String {
    if f.params.is_empty() {
        return "(none)".to_string();
    }
    f.names
        .iter()
        .zip(&f.params)
        .enumerate()
        .map(|(i, (n, p))| match f.std_errors.as_ref().and_then(|s| s.get(i)) {
            Some(se) => format!("{n} = {} ± {}", sig(*p), sig(*se)),
            None => format!("{n} = {} (± n/a)", sig(*p)),
        })
        .collect::<Vec<_>>()
        .join("\n")
}

fn spread_cell(s: Option<Spread>, scale: f64, decimals: usize) -> Cell {
    let text = match s {
        Some(s) => {
            let s = s.scaled(scale);
            format!("{:.decimals$} ({:.decimals$})", s.median, s.iqr())
        }
        None => "n/a".to_string(),
    };
    Cell::new(text).set_alignment(CellAlignment::Right)
}

fn interval_cell(i: Option<Interval>) -> Cell {
    let text = i.map_or("n/a".to_string(), |i| format!("{:.1} to {:.1}", 100.0 * i.lo, 100.0 * i.hi));
    Cell::new(text).set_alignment(CellAlignment::Right)
}

fn family_table(t: &TerrainFit) -> Table {
    let mut table = Table::new();
    table.load_style(presets::UTF8_FULL_CONDENSED).set_content_arrangement(ContentArrangement::Disabled);
    table.set_header(vec![
        "model family",
        "parameters ± standard error",
        "translation error\n% median (IQR)",
        "95 % interval\nof the median, %",
        "yaw error\ndeg median (IQR)",
        "LM\niterations",
        "status",
    ]);
    let chosen = t.chosen().map(|c| c.family);
    for f in &t.families {
        let status = if Some(f.family) == chosen {
            "CHOSEN".to_string()
        } else if !f.converged {
            format!("not converged: {}", f.termination)
        } else if let Some(p) = &f.problem {
            format!("unusable: {p}")
        } else {
            String::new()
        };
        table.add_row(vec![
            Cell::new(f.family.name()),
            Cell::new(params_cell(f)),
            spread_cell(f.validation.translation_rel, 100.0, 1),
            interval_cell(f.validation.translation_interval95),
            spread_cell(f.validation.yaw_deg, 1.0, 2),
            Cell::new(f.iterations).set_alignment(CellAlignment::Right),
            Cell::new(status),
        ]);
    }
    table
}

/// The sweep as a table: rows train at, columns evaluate at, cells median translation error %.
pub fn sweep_table(sw: &SweepTable) -> Table {
    let mut table = Table::new();
    table.load_style(presets::UTF8_FULL_CONDENSED).set_content_arrangement(ContentArrangement::Disabled);
    let mut header = vec!["trained at\n(windows)".to_string()];
    header.extend(sw.horizons_s.iter().map(|h| format!("evaluated\nat {h} s")));
    table.set_header(header);
    for (i, h) in sw.horizons_s.iter().enumerate() {
        let mut row = vec![Cell::new(format!("{h} s ({})", sw.training_windows.get(i).copied().unwrap_or(0)))];
        for cell in sw.error_rel.get(i).into_iter().flatten() {
            let text = cell.map_or("n/a".to_string(), |e| format!("{:.1} %", 100.0 * e));
            row.push(Cell::new(text).set_alignment(CellAlignment::Right));
        }
        table.add_row(row);
    }
    table
}

fn terrain_section(out: &mut String, t: &TerrainFit) {
    let moving_pct = if t.duration_s > 0.0 { 100.0 * t.moving_s / t.duration_s } else { 0.0 };
    let _ = writeln!(
        out,
        "\nterrain {}: {} samples, {:.0} s of which {:.0} s moving ({moving_pct:.0} %); moving windows: {} training \
         ({} turning), {} validation in {} blocks, {} of them long enough (0.5 m) for the translation error",
        t.terrain,
        t.samples,
        t.duration_s,
        t.moving_s,
        t.training_windows,
        t.turning_windows,
        t.validation_windows,
        t.validation_blocks,
        t.translation_windows
    );
    match &t.outcome {
        TerrainOutcome::Failed { reason } => {
            if !t.families.is_empty() {
                let _ = writeln!(out, "{}", family_table(t));
            }
            let _ = writeln!(out, "  NOT FITTED: {reason}; the base profile's entry is kept");
        }
        TerrainOutcome::Fitted { family, reason, noise } => {
            let _ = writeln!(out, "{}", family_table(t));
            let _ = writeln!(out, "  chosen: {family}, {reason}");
            if let Some(q) = noise {
                let _ = writeln!(
                    out,
                    "  drift noise (median-based): heading {:.4} rad/sqrt(m), along-track {:.4} m/sqrt(m), cross-track \
                     {:.4} m/sqrt(m)",
                    q.heading_rad_per_sqrt_m, q.along_m_per_sqrt_m, q.cross_m_per_sqrt_m
                );
            }
        }
    }
    for w in &t.warnings {
        let _ = writeln!(out, "  warning: {w}");
    }
    if let Some(sw) = &t.sweep {
        let _ = writeln!(out, "  horizon sweep of {} (median translation error on validation windows):", sw.family);
        let _ = writeln!(out, "{}", sweep_table(sw));
    }
}

/// What the log checks found and repaired, one line per finding.
pub fn log_checks(out: &mut String, checks: &[crate::fit::hygiene::LogCheck]) {
    if checks.iter().all(|c| c.notes.is_empty()) {
        let _ = writeln!(out, "log checks: no held encoder values, pose gaps or irregular time steps found");
        return;
    }
    let _ = writeln!(out, "log checks:");
    for c in checks {
        for note in &c.notes {
            let _ = writeln!(out, "  {}: {note}", c.file);
        }
    }
}

/// Renders the fit for a terminal.
pub fn fit_table(run: &FitRun) -> String {
    let mut out = String::new();
    let _ = writeln!(out, "calibrated profile: {} (base: {})", run.profile.vehicle.name, run.base_profile);
    let inputs: Vec<String> =
        run.inputs.iter().map(|i| format!("{} ({} samples, {})", i.file, i.samples, i.role)).collect();
    let _ = writeln!(out, "logs: {}", inputs.join(", "));
    log_checks(&mut out, &run.log_checks);
    let _ = writeln!(
        out,
        "horizon {} s, moving windows only; validation on {}; family: the simplest not credibly worse than the best \
         (paired block bootstrap)",
        run.settings.horizon_s, run.holdout
    );
    for t in &run.terrains {
        terrain_section(&mut out, t);
    }
    for k in &run.kept_from_base {
        let _ = writeln!(out, "\nterrain {k}: not in the logs, kept from the base profile");
    }
    let _ = writeln!(out, "\ncaution: {CAUTION}");
    out
}

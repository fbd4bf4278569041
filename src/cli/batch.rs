//! Flags shared by the batch-screening additions of `check`: the stdout format and the HTML
//! report.

use std::path::Path;

use anyhow::Result;
use clap::ValueEnum;
use skidroute::check::CheckRun;
use skidroute::report::{self, ReportError};

/// What `check` prints on stdout.
#[derive(Clone, Copy, PartialEq, Eq, ValueEnum)]
pub enum Format {
    /// The terminal table (default).
    Table,
    /// The JSON document (same as --json).
    Json,
    /// JSON Lines: one compact JSON object per route per line, in input order.
    Jsonl,
}

/// Writes the self-contained HTML report when a path is given.
pub fn write_html(run: &CheckRun, path: Option<&Path>, strict: bool) -> Result<()> {
    let Some(p) = path else { return Ok(()) };
    let svg = report::plot::plot_svg_string(run).map_err(|what| ReportError::Output { file: p.to_path_buf(), what })?;
    report::write_atomic(p, report::html::report_html(run, &svg, None, strict).as_bytes())?;
    Ok(())
}

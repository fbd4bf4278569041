//! Flags shared by the batch-screening additions of `check`: the stdout format and the HTML
//! report.

use std::path::Path;

use anyhow::Result;
use clap::ValueEnum;
use skidroute::batch::BadFile;
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

/// The JSON Lines of a run checked with `--keep-going`: in input-file order, each good file's
/// route lines, and for each bad file one line `{"format": "skidroute-check-error/1", "source":
/// FILE, "error": MESSAGE}`.
pub fn jsonl_with_bad_files(run: &CheckRun, files: &[std::path::PathBuf], bad: &[BadFile]) -> String {
    let all = report::jsonl::check_jsonl(run);
    let lines: Vec<(&Path, &str)> = run.routes.iter().map(|r| r.route.source.as_path()).zip(all.lines()).collect();
    jsonl_lines_with_bad_files(&lines, files, bad)
}

/// [`jsonl_with_bad_files`] from the route lines already rendered, each with its source file,
/// in the run's order.
pub fn jsonl_lines_with_bad_files(lines: &[(&Path, &str)], files: &[std::path::PathBuf], bad: &[BadFile]) -> String {
    // Each source's lines in order, found in one pass (a folder of 10 000 files would otherwise
    // take 10 000 scans of every line).
    let mut by_source: std::collections::HashMap<&Path, Vec<&str>> = std::collections::HashMap::new();
    for (from, line) in lines {
        by_source.entry(from).or_default().push(line);
    }
    let mut out = String::new();
    for file in files {
        // Routes read from standard input (`-`) carry the name the reader gives it.
        let source = if file.as_path() == Path::new(skidroute::route::STDIN_ARG) {
            Path::new(skidroute::route::STDIN_NAME)
        } else {
            file.as_path()
        };
        if let Some(b) = bad.iter().find(|b| &b.file == file) {
            let line = serde_json::json!({
                "format": "skidroute-check-error/1",
                "source": b.file.display().to_string(),
                "error": b.error,
            });
            out.push_str(&line.to_string());
            out.push('\n');
        }
        for line in by_source.get(source).into_iter().flatten() {
            out.push_str(line);
            out.push('\n');
        }
    }
    out
}

/// Writes the self-contained HTML report when a path is given.
pub fn write_html(run: &CheckRun, path: Option<&Path>, strict: bool) -> Result<()> {
    let Some(p) = path else { return Ok(()) };
    let svg = report::plot::plot_svg_string(run).map_err(|what| ReportError::Output { file: p.to_path_buf(), what })?;
    report::write_atomic(p, report::html::report_html(run, &svg, None, strict).as_bytes())?;
    Ok(())
}

//! Reports of a check, a drift run and a fit: terminal tables, JSON documents, the trace CSV,
//! the predicted path and drift ellipses as GeoJSON, and plots. This is the only module that
//! writes files; every file is written to a temporary file in the target folder and renamed
//! into place, so a failure never leaves a partial output.

mod atomic;
pub(crate) mod axis;
pub mod compare_report;
pub(crate) mod decimate;
pub mod drift_plot;
pub mod drift_report;
pub(crate) mod figure;
pub mod fit_json;
pub mod fit_plot;
pub mod fit_table;
pub(crate) mod fitted_table;
pub mod html;
pub(crate) mod inset;
pub mod json;
pub mod jsonl;
pub(crate) mod legend;
pub(crate) mod marks;
pub(crate) mod palette;
pub(crate) mod placer;
pub mod plot;
pub mod predicted;
mod preflight;
pub mod relaxed;
pub mod replay_plot;
pub mod replay_report;
pub mod table;
pub(crate) mod text;
pub mod trace_csv;

use std::path::{Path, PathBuf};

pub use atomic::{output_target, remove_partial_outputs, write_atomic, write_atomic_with, OutputTarget};
pub use preflight::{check_output_path, check_plot_path};

/// An output could not be produced or written.
#[derive(Debug, thiserror::Error)]
pub enum ReportError {
    #[error("{file}: cannot write: {source}")]
    Io { file: PathBuf, source: std::io::Error },
    #[error("{file}: {what}")]
    Output { file: PathBuf, what: String },
}

/// Where the outputs of a check go; `None` skips an output.
#[derive(Debug, Clone, Default)]
pub struct CheckOutputs {
    pub report_json: Option<PathBuf>,
    pub trace_csv: Option<PathBuf>,
    /// Write every n-th step of the trace (with each leg's first and last step and every change
    /// of `traction_limited`); 0 or 1 writes every step.
    pub trace_every: usize,
    pub predicted_geojson: Option<PathBuf>,
    pub plot: Option<PathBuf>,
}

impl CheckOutputs {
    /// All output paths that are set.
    pub fn paths(&self) -> impl Iterator<Item = &PathBuf> {
        [&self.report_json, &self.trace_csv, &self.predicted_geojson, &self.plot].into_iter().flatten()
    }
}

/// Writes every requested file output of a check run.
pub fn write_check_outputs(run: &crate::check::CheckRun, out: &CheckOutputs) -> Result<(), ReportError> {
    if let Some(p) = &out.predicted_geojson {
        let text = predicted::predicted_geojson(run).map_err(|what| ReportError::Output { file: p.clone(), what })?;
        write_atomic(p, text.as_bytes())?;
    }
    if let Some(p) = &out.report_json {
        write_atomic(p, json::check_json(run).as_bytes())?;
    }
    if let Some(p) = &out.trace_csv {
        write_atomic(p, trace_csv::trace_csv_every(run, out.trace_every).as_bytes())?;
    }
    if let Some(p) = &out.plot {
        plot::write_plot(run, p)?;
    }
    Ok(())
}

/// Refuses an output path that names one of the inputs (nothing the user gave is overwritten),
/// and two outputs that name the same file (after resolving symbolic links and `..`), which
/// would leave only the last one written. `-` (standard output) counts as one path.
pub fn refuse_overwriting_inputs<'a>(
    inputs: impl IntoIterator<Item = &'a PathBuf>,
    outputs: impl IntoIterator<Item = &'a PathBuf>,
) -> Result<(), ReportError> {
    // An input `-` is standard input, which no output can overwrite (an output `-` is stdout).
    let inputs: Vec<PathBuf> = inputs.into_iter().filter(|p| p.as_os_str() != "-").map(|p| resolved(p)).collect();
    let mut seen: Vec<(PathBuf, &PathBuf)> = Vec::new();
    for out in outputs {
        let r = resolved(out);
        if inputs.contains(&r) {
            return Err(ReportError::Output {
                file: out.clone(),
                what: "is one of the inputs; refusing to overwrite it".into(),
            });
        }
        if let Some((_, first)) = seen.iter().find(|(p, _)| *p == r) {
            let what = format!("names the same file as the output {}; give each output its own path", first.display());
            return Err(ReportError::Output { file: out.clone(), what });
        }
        seen.push((r, out));
    }
    Ok(())
}

/// A path with symbolic links and `..` resolved as far as it exists (an output not written yet
/// resolves through its folder); `-` stays `-`.
fn resolved(p: &Path) -> PathBuf {
    if p.as_os_str() == "-" {
        return p.to_path_buf();
    }
    if let Ok(c) = std::fs::canonicalize(p) {
        return c;
    }
    let parent = p.parent().filter(|d| !d.as_os_str().is_empty()).unwrap_or(Path::new("."));
    match (std::fs::canonicalize(parent), p.file_name()) {
        (Ok(dir), Some(name)) => dir.join(name),
        _ => p.to_path_buf(),
    }
}

/// True when one of `outputs` is `-`, standard output: the command then prints nothing else there.
pub fn stdout_is_an_output<'a>(outputs: impl IntoIterator<Item = &'a PathBuf>) -> bool {
    outputs.into_iter().any(|p| p.as_os_str() == "-")
}

/// Where the file outputs of a fit go.
#[derive(Debug, Clone, Default)]
pub struct FitOutputs {
    /// The calibrated profile (always written).
    pub profile: PathBuf,
    pub plot: Option<PathBuf>,
}

/// Writes the calibrated profile (with its provenance header) and the plot when asked for.
/// The profile text is read back with the strict reader first, so a written profile always loads.
pub fn write_fit_outputs(run: &crate::fit::FitRun, out: &FitOutputs) -> Result<(), ReportError> {
    let text = run.profile_toml();
    if let Err(e) = crate::vehicle::parse_profile(&out.profile, &text) {
        return Err(ReportError::Output {
            file: out.profile.clone(),
            what: format!("calibrated profile does not read back: {e}"),
        });
    }
    write_atomic(&out.profile, text.as_bytes())?;
    if let Some(p) = &out.plot {
        fit_plot::write_fit_plot(run, p)?;
    }
    Ok(())
}

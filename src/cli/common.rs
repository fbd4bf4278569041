//! The flags every route command shares (`--vehicle --json --report --plot --quiet`), flattened
//! into each subcommand. A subcommand whose words differ overrides the help with
//! `#[command(mut_arg("json", |a| a.help("..")))]`.

use std::path::PathBuf;

use clap::Args;
use skidroute::report::{check_output_path, check_plot_path, ReportError};

#[derive(Args, Debug, Clone, Default)]
pub struct CommonArgs {
    /// Vehicle profile (TOML); the built-in demo profile when omitted.
    #[arg(long, value_name = "FILE")]
    pub vehicle: Option<PathBuf>,
    /// Print the JSON report to stdout instead of the table.
    #[arg(long)]
    pub json: bool,
    /// Write the JSON report to this file.
    #[arg(long, value_name = "FILE")]
    pub report: Option<PathBuf>,
    /// Write a plot (.svg or .png).
    #[arg(long, value_name = "FILE")]
    pub plot: Option<PathBuf>,
    /// Print nothing but errors, and draw no progress bar.
    #[arg(short, long)]
    pub quiet: bool,
}

/// Checks every output path of a command before any work and any write (a missing folder, a
/// folder named as a file, a plot that is neither `.svg` nor `.png`), so a run that could not
/// write one of its outputs writes none of them.
pub fn check_outputs<'a>(
    plot: Option<&PathBuf>,
    files: impl IntoIterator<Item = &'a PathBuf>,
) -> Result<(), ReportError> {
    if let Some(p) = plot {
        check_plot_path(p)?;
    }
    files.into_iter().try_for_each(|p| check_output_path(p))
}

/// The width the terminal table must fit: `None` (every column) with `--wide` or when stdout is
/// not a terminal (pipes and files get every column); otherwise `COLUMNS` when set to a number,
/// else the terminal's width as comfy-table reads it.
pub fn table_width(wide: bool) -> Option<usize> {
    use std::io::IsTerminal;
    if wide || !std::io::stdout().is_terminal() {
        return None;
    }
    let from_env = std::env::var("COLUMNS").ok().and_then(|c| c.trim().parse::<usize>().ok()).filter(|&c| c > 0);
    from_env.or_else(|| comfy_table::Table::new().width().map(usize::from).filter(|&c| c > 0))
}

//! The flags every route command shares (`--vehicle --json --report --plot --quiet`), flattened
//! into each subcommand. A subcommand whose words differ overrides the help with
//! `#[command(mut_arg("json", |a| a.help("..")))]`.

use std::path::PathBuf;

use clap::Args;

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

//! `skidroute profile`: print the built-in demo profile or validate a profile file.

use std::path::PathBuf;
use std::process::ExitCode;

use anyhow::Result;
use clap::Args;
use skidroute::vehicle::DEMO_PROFILE_TOML;

#[derive(Args)]
pub struct ProfileArgs {
    /// Print the built-in demo profile (TOML).
    #[arg(long, conflicts_with = "file")]
    pub demo: bool,
    /// A profile to validate.
    pub file: Option<PathBuf>,
    #[command(flatten)]
    pub limits: super::limits::LimitArgs,
}

pub fn run_profile(a: ProfileArgs) -> Result<ExitCode> {
    match (a.demo, a.file) {
        (_, Some(file)) => {
            let (p, _demo) = super::load_profile(&Some(file.clone()), &a.limits.resolve()?)?;
            super::emit(&format!(
                "{}: valid profile for '{}' with terrains {}\n",
                skidroute::limits::printable(&file.display().to_string()),
                p.vehicle.name,
                p.terrain_names().join(", ")
            ))?;
        }
        (true, None) => super::emit(DEMO_PROFILE_TOML)?,
        (false, None) => anyhow::bail!("give a profile file to validate, or --demo to print the built-in one"),
    }
    Ok(ExitCode::SUCCESS)
}

//! `skidroute profile`: print the built-in demo profile or validate a profile file.

use std::path::PathBuf;
use std::process::ExitCode;

use anyhow::Result;
use clap::Args;
use skidroute::vehicle::{Profile, DEMO_PROFILE_TOML};

#[derive(Args)]
pub struct ProfileArgs {
    /// Print the built-in demo profile (TOML).
    #[arg(long, conflicts_with = "file")]
    pub demo: bool,
    /// A profile to validate.
    pub file: Option<PathBuf>,
}

pub fn run_profile(a: ProfileArgs) -> Result<ExitCode> {
    match (a.demo, a.file) {
        (_, Some(file)) => {
            let p = Profile::read(&file)?;
            super::emit(&format!(
                "{}: valid profile for '{}' with terrains {}\n",
                file.display(),
                p.vehicle.name,
                p.terrain_names().join(", ")
            ))?;
        }
        (true, None) => super::emit(DEMO_PROFILE_TOML)?,
        (false, None) => anyhow::bail!("give a profile file to validate, or --demo to print the built-in one"),
    }
    Ok(ExitCode::SUCCESS)
}

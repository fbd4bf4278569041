//! Flags that override the resource limits (`skidroute::limits`), shared by subcommands that read
//! routes. Precedence: flag, then environment variable (`SKIDROUTE_MAX_*`), then default.

use anyhow::Result;
use clap::Args;
use skidroute::limits::Limits;

#[derive(Args, Debug, Clone, Default)]
pub struct LimitArgs {
    /// Largest input file read, MiB [env: SKIDROUTE_MAX_FILE_MIB; default 256].
    #[arg(long, value_name = "MIB", value_parser = clap::value_parser!(u64).range(1..))]
    pub max_file_mib: Option<u64>,
    /// Most points per leg [env: SKIDROUTE_MAX_POINTS_PER_LEG; default 2000000].
    #[arg(long, value_name = "N", value_parser = clap::value_parser!(u64).range(1..))]
    pub max_points_per_leg: Option<u64>,
    /// Most legs per route [env: SKIDROUTE_MAX_LEGS_PER_ROUTE; default 100000].
    #[arg(long, value_name = "N", value_parser = clap::value_parser!(u64).range(1..))]
    pub max_legs_per_route: Option<u64>,
    /// Most plan points over all route files [env: SKIDROUTE_MAX_TOTAL_POINTS; default 20000000].
    #[arg(long, value_name = "N", value_parser = clap::value_parser!(u64).range(1..))]
    pub max_total_points: Option<u64>,
    /// Most simulation steps per route [env: SKIDROUTE_MAX_STEPS; default 5000000].
    #[arg(long, value_name = "N", value_parser = clap::value_parser!(u64).range(1..))]
    pub max_steps: Option<u64>,
    /// Most simulation steps over the whole run (routes x samples) [env: SKIDROUTE_MAX_WORK_STEPS; default 1000000000].
    #[arg(long, value_name = "N", value_parser = clap::value_parser!(u64).range(1..))]
    pub max_work_steps: Option<u64>,
}

impl LimitArgs {
    /// The limits of this run: defaults, overridden by the environment, overridden by flags.
    pub fn resolve(&self) -> Result<Limits> {
        let mut l = Limits::default().with_overrides(|name| std::env::var(name).ok())?;
        let to_usize = |n: u64| usize::try_from(n).unwrap_or(usize::MAX);
        if let Some(mib) = self.max_file_mib {
            l.max_file_bytes = mib.saturating_mul(1024 * 1024);
        }
        if let Some(n) = self.max_points_per_leg {
            l.max_points_per_leg = to_usize(n);
        }
        if let Some(n) = self.max_legs_per_route {
            l.max_legs_per_route = to_usize(n);
        }
        if let Some(n) = self.max_total_points {
            l.max_total_points = to_usize(n);
        }
        if let Some(n) = self.max_steps {
            l.max_rollout_steps = n;
        }
        if let Some(n) = self.max_work_steps {
            l.max_work_steps = n;
        }
        Ok(l)
    }
}

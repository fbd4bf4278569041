//! Command-line layer of the binary: one file per subcommand turns its flags into settings,
//! calls the library and maps the outcome to an exit code. Helpers shared by subcommands live
//! here.

pub mod batch;
pub mod check;
pub mod compare;
pub mod drift;
pub mod fit;
pub mod limits;
pub mod logs;
pub mod profile;
pub mod progress;
pub mod relax;
pub mod replay;

use std::io::IsTerminal;
use std::path::PathBuf;

use anyhow::Result;
use skidroute::vehicle::Profile;

/// True when stdout is a terminal and `NO_COLOR` is unset or empty.
pub fn color_wanted() -> bool {
    std::io::stdout().is_terminal() && std::env::var_os("NO_COLOR").is_none_or(|v| v.is_empty())
}

/// The profile from `--vehicle`, or the built-in demo (the bool says which).
pub fn load_profile(path: &Option<PathBuf>) -> Result<(Profile, bool)> {
    match path {
        Some(p) => Ok((Profile::read(p)?, false)),
        None => Ok((Profile::demo(), true)),
    }
}

/// Prints to stdout; a closed pipe (`skidroute check ... | head`) is not an error.
pub fn emit(text: &str) -> Result<()> {
    use std::io::Write;
    let mut out = std::io::stdout().lock();
    match out.write_all(text.as_bytes()).and_then(|_| out.flush()) {
        Err(e) if e.kind() != std::io::ErrorKind::BrokenPipe => Err(e.into()),
        _ => Ok(()),
    }
}

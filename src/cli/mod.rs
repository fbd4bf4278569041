//! Command-line layer of the binary: one file per subcommand turns its flags into settings,
//! calls the library and maps the outcome to an exit code. Helpers shared by subcommands live
//! here.

pub mod batch;
pub mod check;
pub mod common;
pub mod compare;
pub mod drift;
pub mod fit;
pub mod limits;
pub mod logs;
pub mod profile;
pub mod progress;
pub mod relax;
pub mod replay;
pub mod shell;
pub mod site;

use std::io::{IsTerminal, Write};
use std::path::PathBuf;
use std::process::ExitCode;

use anyhow::Result;
use skidroute::limits::{printable, Limits};
use skidroute::vehicle::Profile;

/// True when stdout is a terminal and `NO_COLOR` is unset or empty.
pub fn color_wanted() -> bool {
    std::io::stdout().is_terminal() && std::env::var_os("NO_COLOR").is_none_or(|v| v.is_empty())
}

/// The profile from `--vehicle` (within the file-size limit of `limits`), or the built-in demo
/// (the bool says which). Implausible magnitudes in the profile are warned about on stderr.
pub fn load_profile(path: &Option<PathBuf>, limits: &Limits) -> Result<(Profile, bool)> {
    match path {
        Some(p) => {
            let (profile, warnings) = Profile::read_with_warnings(p, limits)?;
            for w in &warnings {
                warn(w);
            }
            Ok((profile, false))
        }
        None => Ok((Profile::demo(), true)),
    }
}

/// Prints to stdout. A closed pipe (`skidroute check ... | head`) ends the output quietly and is
/// not an error (the exit code is the run's); any other failure (a full disk, `/dev/full`) is
/// an error naming standard output, exit code 2.
pub fn emit(text: &str) -> Result<()> {
    let mut out = std::io::stdout().lock();
    match out.write_all(text.as_bytes()).and_then(|_| out.flush()) {
        Err(e) if e.kind() != std::io::ErrorKind::BrokenPipe => {
            Err(anyhow::anyhow!("standard output: cannot write: {e}"))
        }
        _ => Ok(()),
    }
}

/// Writes `lines` to stderr, each line after `prefix`, with control characters escaped. A
/// failing stderr is ignored: there is nowhere left to report it, and it must not panic.
fn to_stderr(prefix: &str, lines: &str) {
    let mut text = String::new();
    for line in lines.lines().filter(|l| !l.trim().is_empty()) {
        text.push_str(prefix);
        text.push_str(&printable(line));
        text.push('\n');
    }
    let _ = std::io::stderr().lock().write_all(text.as_bytes());
}

/// A warning on stderr (`skidroute: warning: ...`).
pub fn warn(text: &str) {
    to_stderr("skidroute: warning: ", text);
}

/// An error on stderr, one `skidroute: error: ...` line per line of the message (a profile with
/// several problems lists each on its own line).
pub fn print_error(text: &str) {
    to_stderr("skidroute: error: ", text);
}

/// Reports a command-line error from the flag parser on one line (`skidroute: error: ...`, with
/// its tip and the usage), exit code 2; `--help` and `--version` print to stdout, exit code 0.
pub fn usage_error(e: clap::Error) -> ExitCode {
    use clap::error::ErrorKind;
    if matches!(e.kind(), ErrorKind::DisplayHelp | ErrorKind::DisplayVersion) {
        return match emit(&e.render().to_string()) {
            Ok(()) => ExitCode::SUCCESS,
            Err(err) => {
                print_error(&err.to_string());
                ExitCode::from(2)
            }
        };
    }
    if e.kind() == ErrorKind::DisplayHelpOnMissingArgumentOrSubcommand {
        let _ = std::io::stderr().lock().write_all(e.render().to_string().as_bytes());
        return ExitCode::from(2);
    }
    print_error(&one_line(&e.render().to_string()));
    ExitCode::from(2)
}

/// clap's error text on one line: the message (its indented continuation lines joined), the
/// tip, and the usage.
fn one_line(rendered: &str) -> String {
    let mut parts: Vec<String> = Vec::new();
    let mut message = String::new();
    for line in rendered.lines().map(str::trim).filter(|l| !l.is_empty()) {
        if let Some(usage) = line.strip_prefix("Usage: ") {
            parts.push(format!("usage: {usage}"));
        } else if line.starts_with("tip:") {
            parts.push(line.to_string());
        } else if line.starts_with("For more information") {
            continue;
        } else {
            if !message.is_empty() {
                message.push(' ');
            }
            message.push_str(line.strip_prefix("error: ").unwrap_or(line));
        }
    }
    parts.insert(0, message);
    parts.join("; ")
}

/// Removes the temporary files of outputs being written when SIGINT or SIGTERM arrives, then
/// ends the process as that signal would. (SIGKILL cannot be caught: it may leave a
/// `.NAME.partial-PID.EXT` file beside an output, never a partial output.)
pub fn clean_up_on_interrupt() {
    use signal_hook::consts::{SIGINT, SIGTERM};
    let Ok(mut signals) = signal_hook::iterator::Signals::new([SIGINT, SIGTERM]) else {
        return;
    };
    std::thread::spawn(move || {
        if let Some(signal) = signals.forever().next() {
            skidroute::report::remove_partial_outputs();
            let _ = signal_hook::low_level::emulate_default_handler(signal);
            std::process::exit(128 + signal);
        }
    });
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn clap_errors_fold_to_one_line() {
        let rendered = "error: the following required arguments were not provided:\n  --out <FILE>\n\n\
                        Usage: skidroute fit --out <FILE> <LOGS>...\n\nFor more information, try '--help'.\n";
        assert_eq!(
            one_line(rendered),
            "the following required arguments were not provided: --out <FILE>; usage: skidroute fit --out <FILE> <LOGS>..."
        );
    }
}

//! Helpers shared by the end-to-end tests: run the real binary and read its output.
#![allow(dead_code)] // each test crate uses its own subset

use std::path::{Path, PathBuf};
use std::process::{Command, Output};

/// The skidroute binary, with colour off.
pub fn bin() -> Command {
    let mut c = Command::new(env!("CARGO_BIN_EXE_skidroute"));
    c.env("NO_COLOR", "1");
    c
}

/// A file of `example-routes/`.
pub fn example(name: &str) -> PathBuf {
    Path::new(env!("CARGO_MANIFEST_DIR")).join("example-routes").join(name)
}

/// Runs the binary with `args` and waits for it.
pub fn run(args: &[&str]) -> Output {
    bin().args(args).output().expect("run skidroute")
}

/// A path as an argument.
pub fn s(p: &Path) -> &str {
    p.to_str().expect("utf-8 path")
}

/// Output bytes as text.
pub fn text(b: &[u8]) -> String {
    String::from_utf8_lossy(b).into_owned()
}

//! Progress reporting for long work (fits, Monte Carlo). The library only counts; the binary
//! decides whether and how to draw (a bar on a terminal, nothing when piped or `--quiet`).

/// Receives progress from long-running library work. Called from several threads at once.
pub trait Progress: Sync {
    /// Announces the total amount of work (in the caller's units) and a short label.
    fn start(&self, _total: u64, _label: &str) {}
    /// `n` more units are done.
    fn advance(&self, n: u64);
    /// The work is over.
    fn finish(&self) {}
}

/// Progress that goes nowhere.
#[derive(Debug, Clone, Copy, Default)]
pub struct NoProgress;

impl Progress for NoProgress {
    fn advance(&self, _n: u64) {}
}

//! A terminal progress bar for library work: drawn on stderr only when it is a terminal and
//! the user did not ask for `--quiet`; hidden otherwise.

use std::io::IsTerminal;

use indicatif::{ProgressBar, ProgressDrawTarget, ProgressStyle};
use skidroute::progress::Progress;

pub struct Bar(ProgressBar);

impl Bar {
    pub fn new(quiet: bool) -> Bar {
        let bar = ProgressBar::hidden();
        if !quiet && std::io::stderr().is_terminal() {
            bar.set_draw_target(ProgressDrawTarget::stderr());
        }
        let style = ProgressStyle::with_template("{msg:>12} [{bar:40}] {pos}/{len} {elapsed}/{eta}")
            .unwrap_or_else(|_| ProgressStyle::default_bar())
            .progress_chars("=> ");
        bar.set_style(style);
        Bar(bar)
    }
}

impl Progress for Bar {
    fn start(&self, total: u64, label: &str) {
        self.0.set_length(total);
        self.0.set_position(0);
        self.0.set_message(label.to_string());
    }
    fn advance(&self, n: u64) {
        self.0.inc(n);
    }
    fn finish(&self) {
        self.0.finish_and_clear();
    }
}

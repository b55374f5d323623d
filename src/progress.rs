//! Progress bars on stderr for runs that take more than a moment (generating, the
//! benchmark). A bar draws only when stderr is a terminal, and only after the first
//! second, so short runs, pipes and CI logs stay clean.

use std::io::IsTerminal;
use std::time::Duration;

use indicatif::{ProgressBar, ProgressDrawTarget, ProgressStyle};

/// A bar of `len` steps labelled `what`; hidden when stderr is not a terminal.
pub fn bar(len: u64, what: &str) -> ProgressBar {
    if !std::io::stderr().is_terminal() {
        return ProgressBar::hidden();
    }
    let b = ProgressBar::with_draw_target(Some(len), ProgressDrawTarget::hidden());
    b.set_style(
        ProgressStyle::with_template("{prefix} [{elapsed_precise}] {wide_bar} {pos}/{len} {msg}")
            .unwrap_or_else(|_| ProgressStyle::default_bar()),
    );
    b.set_prefix(what.to_string());
    // Drawn from the first second on: a run shorter than that shows nothing.
    let shown = b.clone();
    std::thread::spawn(move || {
        std::thread::sleep(Duration::from_secs(1));
        if !shown.is_finished() {
            shown.set_draw_target(ProgressDrawTarget::stderr());
        }
    });
    b
}

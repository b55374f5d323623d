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

/// A spinner naming the stage being run, driven by the stages' root spans; `None` when
/// stderr is not a terminal.
#[derive(Clone)]
pub struct StageSpinner {
    bar: ProgressBar,
}

impl StageSpinner {
    pub fn new() -> Option<Self> {
        if !std::io::stderr().is_terminal() {
            return None;
        }
        let bar = ProgressBar::with_draw_target(None, ProgressDrawTarget::hidden());
        bar.set_style(
            ProgressStyle::with_template("{spinner} [{elapsed_precise}] {msg}")
                .unwrap_or_else(|_| ProgressStyle::default_spinner()),
        );
        bar.enable_steady_tick(Duration::from_millis(120));
        let shown = bar.clone();
        std::thread::spawn(move || {
            std::thread::sleep(Duration::from_secs(1));
            if !shown.is_finished() {
                shown.set_draw_target(ProgressDrawTarget::stderr());
            }
        });
        Some(Self { bar })
    }

    pub fn finish(&self) {
        self.bar.finish_and_clear();
    }
}

impl<S> tracing_subscriber::Layer<S> for StageSpinner
where
    S: tracing::Subscriber + for<'a> tracing_subscriber::registry::LookupSpan<'a>,
{
    fn on_new_span(
        &self,
        _attrs: &tracing::span::Attributes<'_>,
        id: &tracing::span::Id,
        ctx: tracing_subscriber::layer::Context<'_, S>,
    ) {
        if let Some(span) = ctx.span(id)
            && span.parent().is_none()
        {
            self.bar.set_message(span.name().to_string());
        }
    }
}

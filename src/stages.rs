//! Stage figures from the tracing spans: a `tracing` layer that records, for every root
//! span (a stage of the pipeline: `load`, `map_accounts`, `validate`, `translate`, ...),
//! its wall time and the peak resident memory while it ran. The benchmark runs each close
//! in a child process with `--stages FILE` and reads these figures back.
//!
//! Peak memory per stage: the kernel's high-water mark (VmHWM) is reset when a stage
//! starts and read when it ends (`load::machine`); where the reset is not allowed the
//! figure is the process's peak so far, and `peak_reset` says so.

use std::sync::{Arc, Mutex};
use std::time::Instant;

use tracing::Subscriber;
use tracing::span::{Attributes, Id};
use tracing_subscriber::Layer;
use tracing_subscriber::layer::Context;
use tracing_subscriber::registry::LookupSpan;

/// One run of a stage.
#[derive(Debug, Clone, PartialEq, serde::Serialize, serde::Deserialize)]
pub struct StageRecord {
    pub stage: String,
    /// Wall time in seconds (f64 holds a duration here, never money).
    pub seconds: f64,
    /// Peak resident memory while the stage ran, bytes.
    pub peak_bytes: u64,
    /// Whether the peak was reset at the stage's start (else it is the process's peak).
    pub peak_reset: bool,
}

struct Started(Instant, bool);

/// The recording layer; `records` is shared with whoever writes them out.
#[derive(Clone, Default)]
pub struct StageRecorder {
    records: Arc<Mutex<Vec<StageRecord>>>,
}

impl StageRecorder {
    pub fn new() -> Self {
        Self::default()
    }

    /// The records so far, in the order the stages ended.
    pub fn records(&self) -> Vec<StageRecord> {
        self.records.lock().map(|r| r.clone()).unwrap_or_default()
    }
}

impl<S> Layer<S> for StageRecorder
where
    S: Subscriber + for<'a> LookupSpan<'a>,
{
    fn on_new_span(&self, _attrs: &Attributes<'_>, id: &Id, ctx: Context<'_, S>) {
        let Some(span) = ctx.span(id) else { return };
        if span.parent().is_some() {
            return;
        }
        let reset = crate::load::machine::reset_peak_memory();
        span.extensions_mut().insert(Started(Instant::now(), reset));
    }

    fn on_close(&self, id: Id, ctx: Context<'_, S>) {
        let Some(span) = ctx.span(&id) else { return };
        let ext = span.extensions();
        let Some(Started(t0, reset)) = ext.get::<Started>() else { return };
        let record = StageRecord {
            stage: span.name().to_string(),
            seconds: t0.elapsed().as_secs_f64(),
            peak_bytes: crate::load::machine::peak_memory().unwrap_or(0),
            peak_reset: *reset,
        };
        if let Ok(mut r) = self.records.lock() {
            r.push(record);
        }
    }
}

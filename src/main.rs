//! The `tessera` binary: parses arguments, runs the library and maps the outcome to an
//! exit code. The only place that decides what the process prints on failure.

use clap::Parser;
use tracing_subscriber::EnvFilter;
use tracing_subscriber::prelude::*;

fn main() {
    let cli = tessera::Cli::parse();
    let level = match cli.verbose {
        0 => "warn",
        1 => "tessera=info",
        _ => "tessera=debug",
    };
    let filter = EnvFilter::try_from_default_env().unwrap_or_else(|_| EnvFilter::new(level));
    let log = tracing_subscriber::fmt::layer()
        .with_writer(std::io::stderr)
        .with_span_events(tracing_subscriber::fmt::format::FmtSpan::CLOSE)
        .with_filter(filter);
    // Stage figures are recorded only when asked for (`--stages FILE`).
    let recorder = cli.stages.as_ref().map(|_| tessera::stages::StageRecorder::new());
    tracing_subscriber::registry().with(log).with(recorder.clone()).init();
    let stages = cli.stages.clone();
    let stdout = std::io::stdout();
    let mut out = stdout.lock();
    let code = match tessera::run(cli, &mut out) {
        Ok(code) => code,
        Err(e) => {
            eprintln!("tessera: {e}");
            2
        }
    };
    if let (Some(path), Some(r)) = (stages, recorder)
        && let Err(e) = tessera::report::bench::write_stages(&path, &r.records())
    {
        eprintln!("tessera: cannot write the stage figures: {e}");
    }
    std::process::exit(code);
}

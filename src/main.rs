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
    // A spinner names the running stage on a terminal, unless the log already does.
    // generate and bench draw bars of their own.
    let own_bars = matches!(
        cli.command,
        tessera::cli::Command::Generate { .. }
            | tessera::cli::Command::Bench { .. }
            | tessera::cli::Command::Completions { .. }
    );
    let spinner = if cli.verbose == 0 && !own_bars { tessera::progress::StageSpinner::new() } else { None };
    tracing_subscriber::registry().with(log).with(recorder.clone()).with(spinner.clone()).init();
    let stages = cli.stages.clone();
    tessera::report::fit_to_terminal();
    let stdout = std::io::stdout();
    let mut out = stdout.lock();
    let result = tessera::run(cli, &mut out);
    if let Some(s) = &spinner {
        s.finish();
    }
    let code = match result {
        Ok(code) => code,
        // A reader that stops early (`tessera close | head`) closes the pipe: that is
        // the reader's choice, not a failure, so the run ends quietly.
        Err(tessera::Error::Io(e)) if e.kind() == std::io::ErrorKind::BrokenPipe => 0,
        Err(e) => {
            eprintln!("tessera: {e}");
            tessera::cli::error_exit_code(&e)
        }
    };
    if let (Some(path), Some(r)) = (stages, recorder)
        && let Err(e) = tessera::report::bench::write_stages(&path, &r.records())
    {
        eprintln!("tessera: cannot write the stage figures: {e}");
    }
    std::process::exit(code);
}

//! The `tessera` binary: parses arguments, runs the library and maps the outcome to an
//! exit code. The only place that decides what the process prints on failure.

use clap::Parser;
use tracing_subscriber::EnvFilter;

fn main() {
    let cli = tessera::Cli::parse();
    let level = match cli.verbose {
        0 => "warn",
        1 => "tessera=info",
        _ => "tessera=debug",
    };
    let filter = EnvFilter::try_from_default_env().unwrap_or_else(|_| EnvFilter::new(level));
    tracing_subscriber::fmt()
        .with_env_filter(filter)
        .with_writer(std::io::stderr)
        .with_span_events(tracing_subscriber::fmt::format::FmtSpan::CLOSE)
        .init();
    let stdout = std::io::stdout();
    let mut out = stdout.lock();
    let code = match tessera::run(cli, &mut out) {
        Ok(code) => code,
        Err(e) => {
            eprintln!("tessera: {e}");
            2
        }
    };
    std::process::exit(code);
}

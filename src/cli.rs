//! Command-line interface: argument definitions (clap derive) and the dispatch from a
//! parsed command to the pipeline. Output text goes to the writer handed in; exit codes
//! are returned, never decided by `std::process::exit` here.

use std::io::Write;
use std::path::PathBuf;
use std::str::FromStr;

use clap::{Parser, Subcommand};
use rust_decimal::Decimal;

use crate::Error;
use crate::model::Period;
use crate::report::Format;

/// What `tessera --help` shows below the commands: a workflow, the exit codes and the
/// environment. The exit codes are the contract scripts rely on (see README).
const AFTER_HELP: &str = "\
Examples (from a data folder holding entities/ and rates/, such as the repository root):
  tessera check                          every finding of the latest month's deliveries
  tessera match --fail-on-open           intercompany pairs; exit 1 while one is open
  tessera close --period 2026-12         group statements, workbook and report in out/2026-12/
  tessera segments --by geography        the close by segment (IFRS 8)
  tessera trace 1100                     how the goodwill figure is made
  tessera --data ~/close/acme close --view month --format json

Exit codes:
  0  clean: no blocking finding, the proof tied
  1  blocking findings, a failed proof, or an open pair with --fail-on-open
  2  usage error: an unknown option, a bad value, an entity or account not in the data
  3  unreadable input: a file missing or unreadable, a column missing; or a file that
     could not be written

Environment:
  TESSERA_DATA  the data folder when --data is not given
  RUST_LOG      log filter, e.g. tessera=debug (see -v)";

#[derive(Debug, Parser)]
#[command(
    name = "tessera",
    version,
    about = "Group close: consolidates subsidiaries' trial balances into group statements",
    after_help = AFTER_HELP
)]
pub struct Cli {
    /// The data folder holding entities/ and rates/; output folders given with --out are
    /// taken relative to it.
    #[arg(long, global = true, env = "TESSERA_DATA", default_value = ".")]
    pub data: PathBuf,
    /// Log stage timings and details to stderr (e.g. -v, or RUST_LOG=tessera=debug).
    #[arg(short, long, global = true, action = clap::ArgAction::Count)]
    pub verbose: u8,
    /// Write each stage's wall time and peak memory to this JSON file when the run ends
    /// (what `tessera bench` reads from each close it runs).
    #[arg(long, global = true)]
    pub stages: Option<PathBuf>,
    #[command(subcommand)]
    pub command: Command,
}

/// The period option's help, the same on every command.
const PERIOD_HELP: &str = "Period to work on (YYYY-MM); the latest period delivered by default";
/// The format option's help, the same on every command.
const FORMAT_HELP: &str = "What to print: an aligned table for people, JSON (amounts as decimal strings) or CSV";
/// The view option's help, the same on every command.
const VIEW_HELP: &str = "Months the income statement covers: the month, the quarter to date or the year to date";

/// The commands, in the order of a month's work: check the deliveries, agree
/// intercompany, close, then look into the figures; the set-up and tooling last.
#[derive(Debug, Subcommand)]
pub enum Command {
    /// Checks every delivery against every rule and lists all findings in one run.
    #[command(after_help = "Examples:\n  tessera check\n  tessera check --period 2026-06 --format csv > findings.csv")]
    Check {
        #[arg(long, value_parser = parse_period, help = PERIOD_HELP)]
        period: Option<Period>,
        #[arg(long, value_enum, default_value = "table", help = FORMAT_HELP)]
        format: Format,
    },
    /// Agrees intercompany positions pair by pair and explains each difference.
    ///
    /// Works on whatever has been delivered, pair by pair and kind by kind; each
    /// difference is explained (FX, timing) or marked open, with who must act.
    #[command(
        name = "match",
        after_help = "Examples:\n  tessera match\n  tessera match --entity ALD-UK --period 2026-12\n  tessera match --fail-on-open   # exit 1 while a pair is open: a gate before the close"
    )]
    Match {
        #[arg(long, value_parser = parse_period, help = PERIOD_HELP)]
        period: Option<Period>,
        /// Show the pairs of one entity only.
        #[arg(long)]
        entity: Option<String>,
        #[arg(long, value_enum, default_value = "table", help = FORMAT_HELP)]
        format: Format,
        /// Absolute tolerance in the presentation currency (overrides group.toml).
        #[arg(long, value_parser = parse_tolerance)]
        tolerance_absolute: Option<Decimal>,
        /// Relative tolerance, a share of the larger side (overrides group.toml).
        #[arg(long, value_parser = parse_tolerance)]
        tolerance_relative: Option<Decimal>,
        /// Exit 1 when any pair is open (a gate before the close).
        #[arg(long)]
        fail_on_open: bool,
    },
    /// Closes the period: group statements, eliminations, NCI, workbook and report.
    ///
    /// Prints the statements and the proof; writes CSV tables, close.xlsx and
    /// close.html into a folder per period.
    #[command(
        after_help = "Examples:\n  tessera close\n  tessera close --period 2026-06 --view qtd\n  tessera close --entity ALD-US --out sub-groups   # the sub-group below ALD-US\n  tessera close --format json | jq .proof.tied"
    )]
    Close {
        #[arg(long, value_parser = parse_period, help = PERIOD_HELP)]
        period: Option<Period>,
        #[arg(long, value_enum, default_value = "ytd", help = VIEW_HELP)]
        view: View,
        /// Close the sub-group below this intermediate holding on its own.
        #[arg(long)]
        entity: Option<String>,
        /// Folder for the output files, relative to the data folder; a sub-folder per
        /// period is written.
        #[arg(long = "out", default_value = "out")]
        out_dir: PathBuf,
        /// Also write every table as Parquet beside its CSV.
        #[arg(long)]
        parquet: bool,
        /// Also write the translated lines (every grain and month of the year, the
        /// translation's audit trail; large for a big group) as `translated.csv` or
        /// `translated.parquet`: once, in the format named here.
        #[arg(long, value_enum, value_name = "FORMAT")]
        translated_lines: Option<TableFormat>,
        /// Close despite blocking findings, leaving out the deliveries they concern;
        /// every output is marked draft and lists the exceptions (exit code 1).
        #[arg(long)]
        draft: bool,
        /// Compare with `budget`, `forecast-NAME` (a folder under entities/plans/) or
        /// `prior-year`: variance columns, the currency effect and the profit walk.
        #[arg(long, value_parser = crate::compare::Source::parse)]
        compare: Option<crate::compare::Source>,
        #[arg(long, value_enum, default_value = "table", help = FORMAT_HELP)]
        format: Format,
    },
    /// Segment figures by geography, business line or any segment key (IFRS 8).
    ///
    /// With the reconciliation to the group, the thresholds and the entity-wide view.
    #[command(
        after_help = "Examples:\n  tessera segments\n  tessera segments --by geography --period 2026-12\n  tessera segments --view month --format json --out out"
    )]
    Segments {
        #[arg(long, value_parser = parse_period, help = PERIOD_HELP)]
        period: Option<Period>,
        #[arg(long, value_enum, default_value = "ytd", help = VIEW_HELP)]
        view: View,
        /// Segment key: a `segment_<key>` column of entities.csv, or region / subregion
        /// from the country; `segments.key` of group.toml by default.
        #[arg(long)]
        by: Option<String>,
        /// Also write segments-<key>.json and .csv into a sub-folder per period of this
        /// folder (relative to the data folder).
        #[arg(long = "out")]
        out_dir: Option<PathBuf>,
        /// Compare with `budget`, `forecast-NAME` or `prior-year`: each segment's
        /// revenue and results beside the comparison, with the currency effect.
        #[arg(long, value_parser = crate::compare::Source::parse)]
        compare: Option<crate::compare::Source>,
        #[arg(long, value_enum, default_value = "table", help = FORMAT_HELP)]
        format: Format,
    },
    /// Shows how a group figure is made, down to the ledger lines.
    ///
    /// Each entity's translated contribution, the ledger lines behind it and each
    /// elimination, summing to the figure.
    #[command(after_help = "Examples:\n  tessera trace 1100\n  tessera trace 4000 --period 2026-06 --format csv")]
    Trace {
        /// Group account to trace (an id of accounts.csv).
        account: String,
        #[arg(long, value_parser = parse_period, help = PERIOD_HELP)]
        period: Option<Period>,
        /// Trace within the sub-group below this entity.
        #[arg(long)]
        entity: Option<String>,
        #[arg(long, value_enum, default_value = "table", help = FORMAT_HELP)]
        format: Format,
    },
    /// Translates every entity (IAS 21) and explains each translation difference.
    #[command(after_help = "Examples:\n  tessera translate\n  tessera translate --entity KIS-JP --period 2026-03")]
    Translate {
        #[arg(long, value_parser = parse_period, help = PERIOD_HELP)]
        period: Option<Period>,
        /// Show one entity only.
        #[arg(long)]
        entity: Option<String>,
        #[arg(long, value_enum, default_value = "table", help = FORMAT_HELP)]
        format: Format,
    },
    /// Shows the group structure: control, interest, NCI and method per entity.
    #[command(after_help = "Examples:\n  tessera structure\n  tessera structure --period 2026-03 --format json")]
    Structure {
        /// Period whose last day the structure is taken at; the latest delivered by default.
        #[arg(long, value_parser = parse_period)]
        period: Option<Period>,
        #[arg(long, value_enum, default_value = "table", help = FORMAT_HELP)]
        format: Format,
    },
    /// Derives monthly closing and average rates from daily reference rates.
    ///
    /// Cross rates through the bank's currency, with provenance; prints them, and
    /// writes the rates file the close reads only when --out is given.
    #[command(
        after_help = "Examples:\n  tessera rates --daily eurofxref-hist.csv                          # print only\n  tessera rates --daily eurofxref-hist.csv --out rates/monthly.csv  # write the close's rates file"
    )]
    Rates {
        /// Daily series files (wide: Date,USD,JPY,...; or long: date,currency,rate),
        /// relative to the working folder.
        #[arg(long, required = true, num_args = 1..)]
        daily: Vec<PathBuf>,
        /// The bank's own currency: the daily values are units per 1 unit of it.
        #[arg(long, default_value = "EUR")]
        base: String,
        /// Months to derive, FIRST..LAST (e.g. 2025-12..2026-12); by default the opening
        /// month through the latest period delivered.
        #[arg(long)]
        months: Option<String>,
        /// Rates fixed by policy (period,currency,closing,average,quote,note); they win.
        #[arg(long)]
        overrides: Option<PathBuf>,
        /// Currencies to derive (comma separated); by default the group's functional ones.
        #[arg(long, value_delimiter = ',')]
        currencies: Option<Vec<String>>,
        /// Presentation currency; by default the group's.
        #[arg(long)]
        presentation: Option<String>,
        /// Write the rates file here, relative to the data folder (e.g. rates/monthly.csv);
        /// without it nothing is written.
        #[arg(long = "out")]
        out_file: Option<PathBuf>,
        #[arg(long, value_enum, default_value = "table", help = FORMAT_HELP)]
        format: Format,
    },
    /// Writes a synthetic group (invented data in the input format) into a folder.
    ///
    /// A multi-tier structure in many currencies with intercompany pairs on both sides.
    #[command(
        after_help = "Examples:\n  tessera generate --entities 40 --months 3 --out /tmp/acme\n  tessera --data /tmp/acme close"
    )]
    Generate {
        /// Entities in the group, the parent included.
        #[arg(long, default_value_t = 300)]
        entities: usize,
        /// Accounts in the group chart.
        #[arg(long, default_value_t = 1500)]
        accounts: usize,
        /// Group accounts each entity uses.
        #[arg(long, default_value_t = 400)]
        used: usize,
        /// Months of the fiscal year delivered (from January 2026).
        #[arg(long, default_value_t = 1)]
        months: u32,
        /// Seed of the random stream: the same seed gives byte-identical files.
        #[arg(long, default_value_t = 1)]
        seed: u64,
        /// Intercompany document lines to aim for, over all entities and months.
        #[arg(long, default_value_t = 0)]
        documents: usize,
        /// Write trial balances as Parquet instead of CSV.
        #[arg(long)]
        parquet: bool,
        /// The data folder to create, relative to the working folder (it must not hold
        /// entities/ yet).
        #[arg(long = "out")]
        out_dir: PathBuf,
    },
    /// Measures the close on synthetic groups (run it from a release build).
    ///
    /// Generates groups of the sizes asked, closes each from CSV and from Parquet in a
    /// child process, and writes wall time, rows per second and peak memory per stage
    /// to a JSON file.
    #[command(
        after_help = "Examples:\n  cargo run --release -- bench --sizes S\n  cargo run --release -- bench --sizes S,M,L --out docs/bench/results.json"
    )]
    Bench {
        /// Sizes to run: XS (40 entities, 3 months), S (300 entities, 1 month), M (300
        /// entities, 12 months), L (2,000 entities, 12 months, 1M document lines), XL
        /// (5,000 entities x 1,000 accounts x 12 months, about 60M rows).
        #[arg(long, value_delimiter = ',', default_value = "S,M")]
        sizes: Vec<String>,
        /// Input formats of the trial balances: csv, parquet.
        #[arg(long, value_delimiter = ',', default_value = "csv,parquet")]
        formats: Vec<String>,
        /// The results file, relative to the working folder; results.json in the work
        /// folder by default (the tracked docs/bench/results.json only when named).
        #[arg(long = "out")]
        out_file: Option<PathBuf>,
        /// Folder for the generated groups; a group already there for the same options
        /// is reused.
        #[arg(long, default_value = "target/bench-data")]
        work: PathBuf,
        /// Seed of the generated groups.
        #[arg(long, default_value_t = 1)]
        seed: u64,
    },
    /// Prints a completion script for a shell.
    ///
    /// E.g. `tessera completions bash > ~/.local/share/bash-completion/completions/tessera`.
    Completions {
        /// The shell to complete in.
        #[arg(value_enum)]
        shell: clap_complete::Shell,
    },
}

/// The format of a table written on request.
#[derive(Debug, Clone, Copy, PartialEq, Eq, clap::ValueEnum)]
pub enum TableFormat {
    Csv,
    Parquet,
}

/// Which months the income statement covers.
#[derive(Debug, Clone, Copy, PartialEq, Eq, clap::ValueEnum)]
pub enum View {
    Month,
    Qtd,
    Ytd,
}

impl View {
    pub fn as_str(&self) -> &'static str {
        match self {
            View::Month => "month",
            View::Qtd => "qtd",
            View::Ytd => "ytd",
        }
    }
}

pub fn parse_period(s: &str) -> Result<Period, String> {
    s.parse()
}

/// A non-negative decimal written plainly (a tolerance).
pub fn parse_tolerance(s: &str) -> Result<Decimal, String> {
    match Decimal::from_str(s.trim()) {
        Ok(d) if d >= Decimal::ZERO => Ok(d),
        _ => Err(format!("{s:?} is not a non-negative decimal such as 50.00 or 0.001")),
    }
}

/// The exit code of an error that stopped a run: 2 for a usage error (as clap's own),
/// 3 for input that cannot be read or output that cannot be written.
pub fn error_exit_code(e: &Error) -> i32 {
    match e {
        Error::Usage(_) => 2,
        Error::Io(_) | Error::Polars(_) | Error::Workbook(_) => 3,
    }
}

/// An output path given on the command line: relative to the data folder, so that a
/// close run from anywhere writes beside its data.
fn under_data(data: &std::path::Path, path: &std::path::Path) -> PathBuf {
    if path.is_absolute() { path.to_path_buf() } else { data.join(path) }
}

/// Runs a parsed command, writing its report to `out`; returns the exit code.
pub fn run(cli: Cli, out: &mut dyn Write) -> Result<i32, Error> {
    let data = cli.data.as_path();
    match cli.command {
        Command::Check { period, format } => crate::commands::check(data, period, format, out),
        Command::Match { period, entity, format, tolerance_absolute, tolerance_relative, fail_on_open } => {
            let ask = crate::commands::MatchRequest {
                period,
                entity: entity.map(crate::model::EntityId::new),
                tolerance_absolute,
                tolerance_relative,
                fail_on_open,
            };
            crate::commands::match_intercompany(data, &ask, format, out)
        }
        Command::Close { period, view, entity, out_dir, parquet, translated_lines, draft, compare, format } => {
            let out_dir = under_data(data, &out_dir);
            crate::commands::close(
                data,
                crate::commands::CloseRequest {
                    period,
                    view,
                    entity: entity.map(crate::model::EntityId::new),
                    draft,
                    out_dir: &out_dir,
                    parquet,
                    translated_lines,
                    compare,
                },
                format,
                out,
            )
        }
        Command::Segments { period, view, by, out_dir, compare, format } => {
            let out_dir = out_dir.map(|d| under_data(data, &d));
            let ask = crate::commands::SegmentsRequest { period, view, by, out_dir: out_dir.as_deref(), compare };
            crate::commands::segments(data, ask, format, out)
        }
        Command::Trace { account, period, entity, format } => crate::commands::trace(
            data,
            &crate::model::GroupAccount::new(account),
            period,
            entity.map(crate::model::EntityId::new),
            format,
            out,
        ),
        Command::Translate { period, entity, format } => {
            crate::commands::translate(data, period, entity.map(crate::model::EntityId::new), format, out)
        }
        Command::Structure { period, format } => crate::commands::structure(data, period, format, out),
        Command::Rates { daily, base, months, overrides, currencies, presentation, out_file, format } => {
            let out_file = out_file.map(|f| under_data(data, &f));
            let args =
                crate::commands::RatesArgs { daily, base, months, overrides, currencies, presentation, out_file };
            crate::commands::rates(data, args, format, out)
        }
        Command::Generate { entities, accounts, used, months, seed, documents, parquet, out_dir } => {
            let options = crate::generate::Options { entities, accounts, used, months, seed, documents, parquet };
            crate::commands::generate(options, &out_dir, out)
        }
        Command::Bench { sizes, formats, out_file, work, seed } => {
            let out_file = out_file.unwrap_or_else(|| work.join("results.json"));
            crate::bench::run(&crate::bench::Request { sizes, formats, out_file, work, seed }, out)
        }
        Command::Completions { shell } => {
            let mut command = <Cli as clap::CommandFactory>::command();
            clap_complete::generate(shell, &mut command, "tessera", out);
            Ok(0)
        }
    }
}

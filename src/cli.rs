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

#[derive(Debug, Parser)]
#[command(
    name = "tessera",
    version,
    about = "Group close: consolidates subsidiaries' trial balances into group statements"
)]
pub struct Cli {
    /// The data folder holding entities/ and rates/.
    #[arg(long, global = true, default_value = ".")]
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

#[derive(Debug, Subcommand)]
pub enum Command {
    /// Checks every delivery against every rule and lists all findings in one run.
    Check {
        /// Period to check (YYYY-MM); the latest period delivered by default.
        #[arg(long, value_parser = parse_period)]
        period: Option<Period>,
        #[arg(long, value_enum, default_value = "table")]
        format: Format,
    },
    /// Shows the group structure: control, effective interest, NCI and method per entity.
    Structure {
        /// Period whose last day the structure is taken at; the latest delivered by default.
        #[arg(long, value_parser = parse_period)]
        period: Option<Period>,
        #[arg(long, value_enum, default_value = "table")]
        format: Format,
    },
    /// Derives each month's closing and average rates from a central bank's daily
    /// reference rates and writes the rates file the close reads.
    Rates {
        /// Daily series files (wide: Date,USD,JPY,...; or long: date,currency,rate).
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
        /// Write the rates file here (e.g. rates/monthly.csv).
        #[arg(long = "out")]
        out_file: Option<PathBuf>,
        #[arg(long, value_enum, default_value = "table")]
        format: Format,
    },
    /// Closes the period: group statements, elimination journal, NCI and proof.
    Close {
        #[arg(long, value_parser = parse_period)]
        period: Option<Period>,
        #[arg(long, value_enum, default_value = "ytd")]
        view: View,
        /// Close the sub-group below this intermediate holding on its own.
        #[arg(long)]
        entity: Option<String>,
        /// Folder for the output files (written to <period>/<scope>/<view>/ below it).
        #[arg(long = "out", default_value = "out")]
        out_dir: PathBuf,
        /// Close despite blocking findings, leaving out the deliveries they concern;
        /// every output is marked draft and lists the exceptions.
        #[arg(long)]
        draft: bool,
        #[arg(long, value_enum, default_value = "table")]
        format: Format,
    },
    /// Segment figures by geography, business line or any segment key (IFRS 8), with
    /// the reconciliation to the group, the thresholds and the entity-wide view.
    Segments {
        #[arg(long, value_parser = parse_period)]
        period: Option<Period>,
        #[arg(long, value_enum, default_value = "ytd")]
        view: View,
        /// Segment key: a `segment_<key>` column of entities.csv; `segments.key` of
        /// group.toml by default.
        #[arg(long)]
        by: Option<String>,
        /// Also write segments-<key>.json and .csv into a sub-folder per period here.
        #[arg(long = "out")]
        out_dir: Option<PathBuf>,
        #[arg(long, value_enum, default_value = "table")]
        format: Format,
    },
    /// Shows how a group figure is made: each entity's translated contribution, the
    /// ledger lines behind it and each elimination, summing to the figure.
    Trace {
        /// Group account to trace.
        account: String,
        #[arg(long, value_parser = parse_period)]
        period: Option<Period>,
        /// Trace within the sub-group below this entity.
        #[arg(long)]
        entity: Option<String>,
        #[arg(long, value_enum, default_value = "table")]
        format: Format,
    },
    /// Translates every entity into the presentation currency (IAS 21) and explains
    /// each translation difference.
    Translate {
        /// Period to report (YYYY-MM); the latest period delivered by default.
        #[arg(long, value_parser = parse_period)]
        period: Option<Period>,
        /// Show one entity only.
        #[arg(long)]
        entity: Option<String>,
        #[arg(long, value_enum, default_value = "table")]
        format: Format,
    },
    /// Generates synthetic groups of the sizes asked, closes each from CSV and from
    /// Parquet in a child process, and writes wall time, rows per second and peak memory
    /// per stage to a JSON file. Run it from a release build.
    Bench {
        /// Sizes to run: S (300 entities, 1 month), M (300 entities, 12 months), L (2,000
        /// entities, 12 months, 1M document lines).
        #[arg(long, value_delimiter = ',', default_value = "S,M")]
        sizes: Vec<String>,
        /// Input formats of the trial balances: csv, parquet.
        #[arg(long, value_delimiter = ',', default_value = "csv,parquet")]
        formats: Vec<String>,
        /// The results file.
        #[arg(long = "out", default_value = "docs/bench/results.json")]
        out_file: PathBuf,
        /// Folder for the generated groups; a group already there for the same options
        /// is reused.
        #[arg(long, default_value = "target/bench-data")]
        work: PathBuf,
        #[arg(long, default_value_t = 1)]
        seed: u64,
    },
    /// Writes a synthetic group (invented data in the input format) into a folder: a
    /// multi-tier structure in many currencies with intercompany pairs on both sides.
    Generate {
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
        #[arg(long, default_value_t = 1)]
        seed: u64,
        /// Intercompany document lines to aim for, over all entities and months.
        #[arg(long, default_value_t = 0)]
        documents: usize,
        /// Write trial balances as Parquet instead of CSV.
        #[arg(long)]
        parquet: bool,
        /// The data folder to create (it must not hold entities/ yet).
        #[arg(long = "out")]
        out_dir: PathBuf,
    },
    /// Agrees intercompany positions pair by pair and kind by kind on whatever has been
    /// delivered, and explains each difference (FX, timing) or marks it open.
    Match {
        /// Period to match (YYYY-MM); the latest period delivered by default.
        #[arg(long, value_parser = parse_period)]
        period: Option<Period>,
        /// Show the pairs of one entity only.
        #[arg(long)]
        entity: Option<String>,
        #[arg(long, value_enum, default_value = "table")]
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

/// Runs a parsed command, writing its report to `out`; returns the exit code.
pub fn run(cli: Cli, out: &mut dyn Write) -> Result<i32, Error> {
    match cli.command {
        Command::Check { period, format } => crate::commands::check(&cli.data, period, format, out),
        Command::Structure { period, format } => crate::commands::structure(&cli.data, period, format, out),
        Command::Rates { daily, base, months, overrides, currencies, presentation, out_file, format } => {
            let args =
                crate::commands::RatesArgs { daily, base, months, overrides, currencies, presentation, out_file };
            crate::commands::rates(&cli.data, args, format, out)
        }
        Command::Close { period, view, entity, out_dir, draft, format } => crate::commands::close(
            &cli.data,
            crate::commands::CloseRequest {
                period,
                view,
                entity: entity.map(crate::model::EntityId::new),
                draft,
                out_dir: &out_dir,
            },
            format,
            out,
        ),
        Command::Segments { period, view, by, out_dir, format } => {
            crate::commands::segments(&cli.data, period, view, by, out_dir.as_deref(), format, out)
        }
        Command::Trace { account, period, entity, format } => crate::commands::trace(
            &cli.data,
            &crate::model::GroupAccount::new(account),
            period,
            entity.map(crate::model::EntityId::new),
            format,
            out,
        ),
        Command::Translate { period, entity, format } => {
            crate::commands::translate(&cli.data, period, entity.map(crate::model::EntityId::new), format, out)
        }
        Command::Bench { sizes, formats, out_file, work, seed } => {
            crate::bench::run(&crate::bench::Request { sizes, formats, out_file, work, seed }, out)
        }
        Command::Generate { entities, accounts, used, months, seed, documents, parquet, out_dir } => {
            let options = crate::generate::Options { entities, accounts, used, months, seed, documents, parquet };
            crate::commands::generate(options, &out_dir, out)
        }
        Command::Match { period, entity, format, tolerance_absolute, tolerance_relative, fail_on_open } => {
            let ask = crate::commands::MatchRequest {
                period,
                entity: entity.map(crate::model::EntityId::new),
                tolerance_absolute,
                tolerance_relative,
                fail_on_open,
            };
            crate::commands::match_intercompany(&cli.data, &ask, format, out)
        }
    }
}

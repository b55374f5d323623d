//! Tessera: the group close from a folder of plain files. Trial balances of many entities
//! in many currencies are checked, mapped to the group chart, translated (IAS 21),
//! matched and eliminated, and rolled up into group, sub-group and segment statements
//! that prove their own tie-out. `docs/architecture.md` is the map of this crate.

#![warn(clippy::too_many_lines)]

pub mod bench;
pub mod cash_flows;
pub mod cli;
pub mod close;
pub mod commands;
pub mod compare;
pub mod equity;
pub mod findings;
pub mod generate;
pub mod intercompany;
pub mod layout;
pub mod load;
pub mod map_accounts;
pub mod model;
pub mod money;
pub mod ownership;
pub mod progress;
pub mod proof;
pub mod rates;
pub mod report;
pub mod restate;
pub mod segments;
pub mod stages;
pub mod structure;
pub mod trace;
pub mod translate;
pub mod validate;
pub mod years;

/// Errors that stop a run. Problems in the user's data are not errors but findings.
#[derive(Debug, thiserror::Error)]
pub enum Error {
    /// The command line or the data folder cannot be used as asked.
    #[error("{0}")]
    Usage(String),
    #[error("cannot read or write a file: {0}")]
    Io(#[from] std::io::Error),
    #[error("table processing failed: {0}")]
    Polars(#[from] polars::prelude::PolarsError),
    #[error("cannot write the workbook: {0}")]
    Workbook(String),
}

pub use cli::{Cli, run};

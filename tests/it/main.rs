//! Integration tests, one binary. Each module tests one command or stage end to end on
//! the bundled demo group or on small data built inside the test:
//!
//! - `support`: building data folders and running commands in-process;
//! - `bad_input`: sixty-odd broken copies of the demo, each with the finding it must give,
//!   and a bounded random mutation test (no panic, no silent change of figures);
//! - `check`: `tessera check` on the demo (clean) and on broken copies, one per finding kind;
//! - `close`: published consolidation cases as folders under `tests/cases/`, the demo
//!   closing tied (under both IFRIC 16 methods), net investment loans (IAS 21.32), trace;
//! - `cash_flows`: the statement of cash flows (IAS 7): an acquisition net of cash acquired
//!   (IAS 7 illustrative example A), a foreign subsidiary's exchange effect, the demo tied
//!   in every month and view, the findings of cash_flow_lines.csv, a property test;
//! - `close_oracle`: property tests of the close against a naive consolidation: a month,
//!   and a quarter with subsidiaries acquired, sold and changing stake during it;
//! - `compare`: `close --compare`: the walk adds up (demo, hand example, random groups),
//!   the currency effect, a plan's findings;
//! - `golden`: every output of the demo's main commands against the committed copies under
//!   `tests/golden/` (regenerate with `TESSERA_GOLDEN=write`);
//! - `generate`: the synthetic group passes `check`, closes tied from CSV and Parquet,
//!   is byte-identical per seed, and `match` finds the difference each pair was given;
//! - `currencies`: ISO 4217 minor units against the published table;
//! - `delivery_basis`: months delivered as balances among months of movements give the
//!   same figures (a property test over any set of months);
//! - `pack`: the command line (help, exit codes, closed pipe, TESSERA_DATA) and the
//!   close's files, workbook (read back by openpyxl) and HTML report (headless Chromium),
//!   and the figures docs/demo.md quotes;
//! - `rates_ecb`: `rates` derivation against the euro system's reference rates (a pinned
//!   PyPI extract) and an independent Python `decimal` oracle;
//! - `rates_findings`: the rate derivation's findings, each from a small inline file;
//! - `readme`: the README's commands exist with their options and its shell lines run as
//!   written; no dead links in the README and docs;
//! - `segments`: `tessera segments` (IFRS 8): a study-text thresholds problem, head office
//!   and account refinements, the demo reconciled by business and geography with its
//!   inter-segment revenue by hand, and a property test;
//! - `structure`: `tessera structure` on the demo and over-held structures;
//! - `intercompany`: `tessera match` on the demo's deliberate differences, partial
//!   deliveries, document detail, an IAS 21.45 loan and a property test;
//! - `ownership`: changes in ownership: control in stages, sales and changes in stake
//!   closed, a property test of random sales against the standard worked naively, and
//!   every change the close cannot express yet refused with a blocking finding;
//! - `translate`: IAS 21 translation against published examples, policies end to end,
//!   IFRIC 16 on a three-tier group;
//! - `translate_oracle`: the translation against a naive row-by-row oracle (property test);
//! - `years`: several fiscal years in one folder: the year-end close carried into the next
//!   opening, a delivered opening that differs, the prior-year comparatives.

mod bad_input;
mod cash_flows;
mod check;
mod close;
mod close_oracle;
mod compare;
mod currencies;
mod delivery_basis;
mod generate;
mod golden;
mod intercompany;
mod ownership;
mod pack;
mod rates_ecb;
mod rates_findings;
mod readme;
mod segments;
mod structure;
mod support;
mod translate;
mod translate_oracle;
mod years;

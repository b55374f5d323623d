//! Integration tests, one binary. Each module tests one command or stage end to end on
//! the bundled demo group or on small data built inside the test:
//!
//! - `support`: building data folders and running commands in-process;
//! - `check`: `tessera check` on the demo (clean) and on broken copies, one per finding kind;
//! - `currencies`: ISO 4217 minor units against the published table;
//! - `intercompany`: `tessera match` on the demo's deliberate differences, partial
//!   deliveries, document detail, an IAS 21.45 loan and a property test;
//! - `translate`: IAS 21 translation against published examples and a property test.

mod check;
mod currencies;
mod intercompany;
mod support;
mod translate;

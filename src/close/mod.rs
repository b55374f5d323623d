//! The close: from translated entity balances to the group trial balance, through the
//! elimination journal (IFRS 10.B86) and the non-controlling interests.
//!
//! [`close_at`] is the chain, on year-to-date balances at one period end (balance-sheet
//! accounts cumulative, income and expense since the start of the fiscal year):
//!
//! `aggregate -> eliminate -> nci -> reserves -> roll_up`, then [`prove`].
//!
//! - `aggregate` (aggregate.rs): each entity's translated balances and translation
//!   difference, taken by consolidation method.
//! - `eliminate`: the elimination journal, one file per rule, each posting balanced
//!   entries named by an [`EliminationRule`], in this order: `pre_acquisition`,
//!   `intercompany` (loans and interest included), `dividends`, `ifric16`,
//!   `net_investment`, `unrealised_profit`, `investment` (and goodwill),
//!   `equity_method`, then the top-side entries (`topside`, rule `group_adjustment`),
//!   which the NCI shares where a line names a subsidiary.
//! - `nci` (nci.rs): the NCI's share of post-acquisition equity, multi-tier.
//! - `reserves` (reserves.rs): the translation reserve per foreign operation.
//! - `roll_up` (roll_up.rs): contributions plus eliminations, per group account.
//! - `prove` (prove.rs): the close's invariants.
//!
//! Month and quarter views, the attribution between owners and NCI and the statements'
//! arithmetic are in `view.rs`. Close knows nothing about files and formats no number
//! (entry descriptions quote amounts as text).

pub mod aggregate;
pub mod check;
pub mod context;
pub mod dividends;
pub mod equity_method;
pub mod ifric16;
pub mod intercompany;
pub mod investment;
pub mod journal;
pub mod nci;
pub mod net_investment;
pub mod pre_acquisition;
pub mod prove;
pub mod reserves;
pub mod roll_up;
pub mod topside;
pub mod unrealised_profit;
pub mod view;

use std::collections::BTreeMap;

use polars::prelude::*;
use rust_decimal::Decimal;
use serde::Serialize;

use crate::findings::Finding;
use crate::load::Dataset;
use crate::model::*;
use crate::structure::GroupStructure;
use crate::translate::Translated;

pub use aggregate::{aggregate, year_start};
pub use investment::findings as acquisition_findings;
pub use journal::{EliminationRule, Entry, EntryLine, Journal};
pub use prove::prove;
pub use roll_up::roll_up;

/// The NCI of one subsidiary.
#[derive(Debug, Clone, PartialEq, Eq, Serialize)]
pub struct NciRow {
    pub entity: EntityId,
    pub nci_share: Decimal,
    /// Share of the subsidiary's profit of the year (credit positive).
    pub profit: Decimal,
    /// Share of its OCI of the year, translation difference included (IAS 21.41).
    pub oci: Decimal,
    /// NCI in equity at the period end (credit positive).
    pub equity: Decimal,
}

/// The translation reserve of one consolidated foreign operation at the period end
/// (IFRIC 16.17), gains (credits) positive, before the NCI's share: what was brought
/// forward (as delivered in the opening balances), the year's differences that belong to
/// the operation under the group's method, and their sum, the amount IAS 21.48 would
/// reclassify to profit or loss on its disposal. It covers the operation's own
/// translated figures; the exchange difference on its goodwill (IAS 21.47) is in its
/// `investment_and_goodwill` entry.
#[derive(Debug, Clone, PartialEq, Eq, Serialize)]
pub struct OperationReserveRow {
    pub operation: EntityId,
    pub method: Ifric16Method,
    pub brought_forward: Decimal,
    pub year: Decimal,
    pub reserve: Decimal,
}

/// A close on year-to-date balances at one period end.
pub struct Close {
    pub period: Period,
    /// entity, group_account, counterparty, amount: each entity's contribution by method.
    pub contributions: DataFrame,
    pub journal: Vec<Entry>,
    /// Group account -> amount (debit positive).
    pub group: BTreeMap<GroupAccount, Decimal>,
    pub nci: Vec<NciRow>,
    /// The translation reserve per consolidated foreign operation.
    pub reserves: Vec<OperationReserveRow>,
    pub findings: Vec<Finding>,
}

/// The close at `period` on year-to-date balances: the chain of the module header.
pub fn close_at(ds: &Dataset, t: &Translated, s: &GroupStructure, period: Period) -> PolarsResult<Close> {
    let fiscal_start = year_start(ds, t, period);
    let contributions = aggregate(ds, t, s, period)?;
    let balances = aggregate::balances(&contributions)?;
    let cx = context::Context::new(ds, t, s, period, fiscal_start, balances);
    let mut findings = Vec::new();
    let mut j = Journal::default();

    let eliminate_span = tracing::info_span!("eliminate", period = %period).entered();
    let before = aggregate::balances_at(
        ds,
        t,
        s,
        pre_acquisition::months_needed(&cx).into_iter().chain(net_investment::months_needed(&cx, &ds.net_investments)),
    )?;
    pre_acquisition::post(&mut j, &cx, &before);
    intercompany::post(&mut j, &cx);
    dividends::post(&mut j, &cx);
    let operations = crate::translate::reserves_by_operation(ds, t, &s.immediate_parents())?;
    let year_parts = ifric16::parts_of_year(&cx, &operations);
    ifric16::post(&mut j, &cx, &year_parts);
    net_investment::post(&mut j, &cx, &ds.net_investments, &before);
    unrealised_profit::post(&mut j, &cx, &ds.inventory_profits, &mut findings);
    let invest = investment::investments(&cx);
    let months = investment::investment_months(t, &cx, &invest)?;
    let for_nci = investment::post(&mut j, &cx, &ds.acquisitions, &invest, &months, &mut findings);
    let investees = equity_method::investees(ds, t, &cx, &ds.acquisitions)?;
    equity_method::post(&mut j, &cx, &ds.acquisitions, &investees, &mut findings);
    topside::post(&mut j, &cx, &ds.group_adjustments);
    drop(eliminate_span);

    let nci = nci::post(&mut j, &cx, &for_nci);
    let mut brought_forward = crate::translate::brought_forward(t, fiscal_start)?;
    // The reserve per operation at the prior year end, where the folder holds that year.
    brought_forward.extend(ds.brought_forward.operation_reserves.iter().map(|(e, v)| (e.clone(), *v)));
    let reserves = reserves::reserves(&cx, &brought_forward, &year_parts, ds.settings.policies.ifric16);

    let _span = tracing::info_span!("roll_up", period = %period).entered();
    let group = roll_up(&contributions, &j.entries)?;
    Ok(Close { period, contributions, journal: j.entries, group, nci, reserves, findings })
}

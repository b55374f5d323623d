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
//!   `fair_value` (depreciation of the fair value adjustments), `step_acquisition`,
//!   `loss_of_control`, `equity_method`, then the top-side entries (`topside`, rule
//!   `group_adjustment`), which the NCI shares where a line names a subsidiary, and
//!   after the NCI `change_in_stake` (which corrects the NCI rows). A subsidiary sold in
//!   the year contributes what the close at its last month end consolidated gives it
//!   (`loss_of_control.rs`, which runs that close).
//! - `nci` (nci.rs): the NCI's share of post-acquisition equity, multi-tier.
//! - `reserves` (reserves.rs): the translation reserve per foreign operation.
//! - `roll_up` (roll_up.rs): contributions plus eliminations, per group account.
//! - `prove` (prove.rs): the close's invariants.
//!
//! Month and quarter views, the attribution between owners and NCI and the statements'
//! arithmetic are in `view.rs`. Close knows nothing about files and formats no number
//! (entry descriptions quote amounts as text).

pub mod aggregate;
pub mod change_in_stake;
pub mod check;
pub mod context;
pub mod dividends;
pub mod equity_method;
pub mod fair_value;
pub mod ifric16;
pub mod impairment;
pub mod intercompany;
pub mod investment;
pub mod journal;
pub mod loss_of_control;
pub mod nci;
pub mod net_investment;
pub mod pre_acquisition;
pub mod prove;
pub mod reserves;
pub mod roll_up;
pub mod step_acquisition;
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
pub use journal::{EliminationRule, Entry, EntryLine, EquityShare, Journal};
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

/// The findings of `fair_value_adjustments.csv` for the close's structure.
fn fair_value_findings(ds: &Dataset, cx: &context::Context) -> Vec<Finding> {
    let method_of = |e: &EntityId| cx.structure.entities().iter().find(|x| &x.id == e).map(|x| x.method);
    let statement_of = |a: &GroupAccount| cx.chart.get(a).map(|d| d.statement);
    fair_value::findings(&ds.uplifts, &ds.acquisitions, &method_of, &statement_of)
}

/// The findings of the equity method for the close's structure.
fn equity_method_findings(ds: &Dataset, cx: &context::Context) -> Vec<Finding> {
    let method_of = |e: &EntityId| cx.structure.entities().iter().find(|x| &x.id == e).map(|x| x.method);
    let mut out = equity_method::findings(ds, &method_of, cx.period);
    out.extend(equity_method::long_term_findings(ds, &method_of));
    out
}

/// The findings of `goodwill_impairments.csv` for the close.
fn impairment_findings(ds: &Dataset, cx: &context::Context) -> Vec<Finding> {
    let has_rate = |e: &EntityId, p: Period| impairment_rate_known(ds, e, p);
    let when = (cx.period, cx.fiscal_start);
    let method_of = |e: &EntityId| cx.structure.entities().iter().find(|x| &x.id == e).map(|x| x.method);
    impairment::findings(&ds.impairments, &ds.acquisitions, when, cx.roles, &has_rate, &method_of)
}

/// Whether `rates/monthly.csv` has month `p` (its closing and average rates, either of
/// which the impairment policy may ask for) for `e`'s currency; always true in the
/// presentation currency.
pub(crate) fn impairment_rate_known(ds: &Dataset, e: &EntityId, p: Period) -> bool {
    let Some(c) = ds.entity(e).map(|x| x.currency) else { return true };
    c == ds.settings.presentation_currency || ds.rates.iter().any(|r| r.currency == c && r.period == p)
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
    /// Subsidiaries sold in the fiscal year to the period (`loss_of_control`).
    pub disposals: Vec<loss_of_control::Disposal>,
    /// Changes in stake with control kept in the fiscal year to the period.
    pub stake_changes: Vec<change_in_stake::StakeChange>,
    /// The NCI at acquisition of each subsidiary the investment rule eliminated, credit
    /// positive (`investment::ForNci::nci_at_acquisition`).
    pub nci_at_acquisition: BTreeMap<EntityId, Decimal>,
    /// Each subsidiary's post-acquisition exchange differences that its NCI shares,
    /// debit positive (`nci::differences`): what a change in stake reattributes.
    pub differences: BTreeMap<EntityId, Decimal>,
    /// The equity method's measure per holder and investee (`Journal::equity_shares`).
    pub equity_shares: BTreeMap<(EntityId, EntityId), EquityShare>,
}

/// The close at the last month end before an ownership change (the month rule of
/// `ownership::last_controlled_month`), on the group's structure of that day: what a
/// sale (`loss_of_control`) and a change in stake (`change_in_stake`) carry from.
pub fn close_before_change(
    ds: &Dataset,
    t: &Translated,
    change: &OwnershipChange,
) -> PolarsResult<(Period, GroupStructure, Close)> {
    let last_month = crate::ownership::last_controlled_month(change.date);
    let ids: Vec<EntityId> = ds.entities.iter().map(|e| e.id.clone()).collect();
    let (s, _) = crate::structure::build(
        &ids,
        &ds.holdings,
        &ds.settings.parent,
        last_month.last_day(),
        ds.settings.policies.significant_influence,
    );
    let then = close_at(ds, t, &s, last_month)?;
    Ok((last_month, s, then))
}

/// The close at `period` on year-to-date balances: the chain of the module header.
pub fn close_at(ds: &Dataset, t: &Translated, s: &GroupStructure, period: Period) -> PolarsResult<Close> {
    let fiscal_start = year_start(ds, t, period);
    let sold = sold_in_year(ds, t, s, period, fiscal_start)?;
    let stakes = stakes_changed_in_year(ds, t, s, period, fiscal_start)?;
    let contributions = with_sold(aggregate(ds, t, s, period)?, &sold)?;
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
    let units = crate::restate::acquisition_units(ds, period, fiscal_start);
    pre_acquisition::post(&mut j, &cx, &pre_acquisition::restated(&cx, t, &units, &before)?);
    intercompany::post(&mut j, &cx);
    dividends::post(&mut j, &cx);
    let operations = crate::translate::reserves_by_operation(ds, t, &s.immediate_parents())?;
    let year_parts = ifric16::parts_of_year(&cx, &operations);
    ifric16::post(&mut j, &cx, &year_parts);
    net_investment::post(&mut j, &cx, &ds.net_investments, &before);
    let tax = fair_value::DeferredTax::of(ds);
    unrealised_profit::post(&mut j, &cx, &ds.inventory_profits, tax.as_ref(), &mut findings);
    let invest = investment::investments(&cx);
    let months = investment::investment_months(t, &cx, &invest)?;
    let rates = fair_value::ExpenseRates::of(ds);
    let uplifts = fair_value::all_uplifts(&ds.acquisitions, &ds.uplifts, tax.as_ref());
    let records = investment::Records {
        uplifts: &uplifts,
        impairments: impairment::dated(&cx, &ds.impairments, &rates),
        reserves: &ds.reserves_at_acquisition,
        units,
    };
    let for_nci = investment::post(&mut j, &cx, &ds.acquisitions, &invest, &months, &records, &mut findings);
    findings.extend(fair_value_findings(ds, &cx));
    findings.extend(investment::reserve_findings(ds));
    findings.extend(impairment_findings(ds, &cx));
    findings.extend(fair_value::deferred_tax_findings(ds, cx.period));
    fair_value::post(&mut j, &cx, &ds.acquisitions, &uplifts, (&rates, &records.units));
    let steps =
        crate::ownership::step_acquisitions(ds, crate::validate::Scope::new(period, ds.settings.fiscal_year_start));
    let associates = associates_before(ds, t, &steps, period, fiscal_start)?;
    step_acquisition::post(&mut j, &cx, &ds.acquisitions, &steps, &invest, &associates);
    for sale in associates_sold(ds, t, period, fiscal_start)? {
        equity_method::post_disposal(&mut j, &cx, &sale, &mut findings);
    }
    let disposals: Vec<loss_of_control::Disposal> =
        sold.iter().filter_map(|x| loss_of_control::post(&mut j, &cx, x, &mut findings)).collect();
    let investees = equity_method::investees(ds, t, &cx, &ds.acquisitions)?;
    let long_term = equity_method::long_term_interests(ds, t, &cx)?;
    let inputs = equity_method::Inputs {
        uplifts: &uplifts,
        impairments: &records.impairments,
        rates: &rates,
        long_term: &long_term,
    };
    equity_method::post(&mut j, &cx, &ds.acquisitions, &investees, &inputs, &mut findings);
    findings.extend(equity_method_findings(ds, &cx));
    topside::post(&mut j, &cx, &ds.group_adjustments);
    drop(eliminate_span);

    let (mut nci, differences) = nci::post(&mut j, &cx, &for_nci);
    nci.extend(sold.iter().filter_map(loss_of_control::nci_row));
    let stake_changes: Vec<change_in_stake::StakeChange> = stakes
        .iter()
        .filter_map(|b| {
            // The next change of the same subsidiary in the year, if any (IFRS 10.B96 per change).
            let next = stakes
                .iter()
                .filter(|n| n.change.owned == b.change.owned && n.change.date > b.change.date)
                .min_by_key(|n| n.change.date);
            change_in_stake::post(&mut j, &cx, &ds.acquisitions, &ds.holdings, (b, next), &invest, &mut nci)
        })
        .collect();
    let mut brought_forward = crate::translate::brought_forward(t, fiscal_start)?;
    // The reserve per operation at the prior year end, where the folder holds that year.
    brought_forward.extend(ds.brought_forward.operation_reserves.iter().map(|(e, v)| (e.clone(), *v)));
    let reserves = reserves::reserves(&cx, &brought_forward, &year_parts, ds.settings.policies.ifric16);

    let _span = tracing::info_span!("roll_up", period = %period).entered();
    let group = roll_up(&contributions, &j.entries)?;
    let nci_at_acquisition = for_nci.nci_at_acquisition;
    let equity_shares = std::mem::take(&mut j.equity_shares);
    Ok(Close {
        period,
        contributions,
        journal: j.entries,
        group,
        nci,
        reserves,
        findings,
        disposals,
        stake_changes,
        nci_at_acquisition,
        differences,
        equity_shares,
    })
}

/// Whether the holder of a change is in the view of `s` (its root or an entity it
/// controls): a sub-group's close has only the changes made within it.
fn in_view(s: &GroupStructure, c: &OwnershipChange) -> bool {
    s.parent() == &c.holder || s.entity(&c.holder).is_some_and(|x| x.controlled)
}

/// The subsidiaries sold in the fiscal year to `period` (none for the close of the
/// opening balances) by a holder in the view, each as the close at its last month end
/// consolidated shows it.
fn sold_in_year<'a>(
    ds: &'a Dataset,
    t: &Translated,
    s: &GroupStructure,
    period: Period,
    fiscal_start: Period,
) -> PolarsResult<Vec<loss_of_control::AtLastMonth<'a>>> {
    if period < t.fiscal_start {
        return Ok(Vec::new());
    }
    let scope = crate::validate::Scope { period, fiscal_start };
    crate::ownership::losses_of_control(ds, scope)
        .into_iter()
        .filter(|c| in_view(s, c))
        .map(|c| loss_of_control::at_last_month(ds, t, c))
        .collect()
}

/// The step acquisitions of the fiscal year to `period` from an associate or joint
/// venture, each with the equity method at the month end before control.
fn associates_before<'a>(
    ds: &Dataset,
    t: &Translated,
    steps: &[&'a OwnershipChange],
    period: Period,
    fiscal_start: Period,
) -> PolarsResult<Vec<step_acquisition::AssociateBefore<'a>>> {
    if period < t.fiscal_start {
        return Ok(Vec::new());
    }
    steps
        .iter()
        .filter(|c| c.date >= fiscal_start.first_day())
        .filter(|c| crate::ownership::classify(ds, c).method_before == Method::Equity)
        .map(|c| step_acquisition::associate_before(ds, t, c))
        .collect()
}

/// The associates sold in the fiscal year to `period` (significant influence ended, IAS
/// 28.22), each with the equity method at the last month end before the sale.
fn associates_sold<'a>(
    ds: &'a Dataset,
    t: &Translated,
    period: Period,
    fiscal_start: Period,
) -> PolarsResult<Vec<step_acquisition::AssociateBefore<'a>>> {
    if period < t.fiscal_start {
        return Ok(Vec::new());
    }
    let scope = crate::validate::Scope { period, fiscal_start };
    crate::ownership::associate_sales(ds, scope)
        .into_iter()
        .map(|c| step_acquisition::associate_before(ds, t, c))
        .collect()
}

/// The changes in stake with control kept in the fiscal year to `period`, each with the
/// subsidiary as the close at the last month end before it shows it.
fn stakes_changed_in_year<'a>(
    ds: &'a Dataset,
    t: &Translated,
    s: &GroupStructure,
    period: Period,
    fiscal_start: Period,
) -> PolarsResult<Vec<change_in_stake::Before<'a>>> {
    if period < t.fiscal_start {
        return Ok(Vec::new());
    }
    let scope = crate::validate::Scope { period, fiscal_start };
    crate::ownership::changes_in_stake(ds, scope)
        .into_iter()
        .filter(|c| in_view(s, c))
        .map(|c| change_in_stake::before(ds, t, c))
        .collect()
}

/// The contribution frame with the sold subsidiaries' contributions at their last month
/// end added, in the frame's order.
fn with_sold(contributions: DataFrame, sold: &[loss_of_control::AtLastMonth]) -> PolarsResult<DataFrame> {
    if sold.is_empty() {
        return Ok(contributions);
    }
    let mut all = contributions;
    for x in sold {
        all.vstack_mut(&x.contributions)?;
    }
    all.lazy()
        .sort(["entity", "group_account", "counterparty"], SortMultipleOptions::default().with_nulls_last(false))
        .collect()
}

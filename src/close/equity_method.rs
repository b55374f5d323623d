//! Rule `equity_method`: an associate or joint venture is not aggregated; its holder
//! carries it at cost plus its share of the post-acquisition results (IAS 28.10). Per
//! investee the rule posts, in entries of the same rule:
//!
//! - the share of profit and OCI from the month significant influence begins (IAS
//!   28.32: from the acquisition date). The acquisition month counts as a whole month,
//!   whatever the day (2026-04-15 counts from April), as for a subsidiary
//!   (`pre_acquisition.rs`): an investee acquired in the fiscal year contributes its
//!   results since the end of the month before, nothing before and no earlier years;
//! - the share after the fair value adjustments inside the investee (IAS 28.32(b)):
//!   `fair_value_adjustments.csv` (and the undepreciated `fair_value_adjustment` of the
//!   acquisition) name them. They are inside the cost, not separately recognised; their
//!   depreciation of the year (at the investee's expense rates, as for a subsidiary,
//!   `fair_value.rs`) reduces the share of profit, earlier years' reduce retained
//!   earnings, and their exchange difference (IAS 21.47) is in the share of OCI. Goodwill
//!   stays inside the carrying amount, neither recognised nor amortised (IAS 28.32(a));
//!   a bargain purchase (the share of the net assets above the cost) is income in the
//!   share of result of the period of acquisition (IAS 28.32(b), `bargain_purchase`);
//! - dividends received from the investee reduce the investment, not profit (IAS 28.10):
//!   the holder's dividend income naming it is reversed against the investment;
//! - losses beyond the carrying amount (cost at the acquisition date's rate plus the
//!   share since) first reduce the long-term interests that form part of the net
//!   investment (`long_term_interests.csv`, IAS 28.38, `split_over_interests`); beyond
//!   them they are not recognised: the net investment stops at zero, the unrecognised
//!   share is shown in the entry and as a warning, and profits are recognised again only
//!   once they cover it (IAS 28.38-39); the same figures from the start of the
//!   acquisition make the tracking carry from year to year;
//! - impairment of the investment as a whole (IAS 28.40-43), by month from
//!   `goodwill_impairments.csv`, at its month's rate fixed once, in the share of result
//!   of the year it is recognised in (retained earnings in later years), not allocated to
//!   goodwill (IAS 28.42);
//! - unrealised profit on goods between the group and the investee, eliminated to the
//!   extent of the investor's interest (IAS 28.28, [`unrealised_lines`], posted from
//!   `unrealised_profit.rs`).
//!
//! [`findings`] names what the rule cannot express (blocking); `check` raises the same.

use std::collections::BTreeMap;

use polars::prelude::PolarsResult;
use rust_decimal::Decimal;

use super::aggregate::aggregate_one;
use super::context::Context;
use super::fair_value::{ExpenseRates, depreciated_to};
use super::impairment::Dated;
use super::journal::{EliminationRule, EntryLine, EquityShare, Journal, line};
use crate::findings::{Finding, Rule, Severity};
use crate::load::Dataset;
use crate::model::*;
use crate::money;
use crate::structure::EntityStructure;
use crate::translate::Translated;

type Accounts = BTreeMap<GroupAccount, Decimal>;

/// An investee's own translated balances by group account (it is not aggregated, so
/// they are read one by one).
#[derive(Debug, Default, Clone)]
pub struct Investee {
    /// At the period.
    pub own: Accounts,
    /// At the month end before the fiscal year.
    pub opening: Accounts,
    /// At the month end before the acquisition month, for an acquisition in the fiscal
    /// year after its first month (its results before significant influence); else empty.
    pub before: Accounts,
}

/// The investees by entity.
pub type Investees = BTreeMap<EntityId, Investee>;

/// When the investor's share counts from, for a close: the acquisition's month.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
enum Start {
    /// Acquired before the fiscal year: earlier years' share in retained earnings.
    BeforeYear,
    /// Acquired in the fiscal year, in this month, at or before the period.
    InYear(Period),
    /// Acquired after the period: nothing to post yet.
    Later,
}

fn start_of(cx: &Context, a: &Acquisition) -> Start {
    let m = Period::of_date(a.date);
    if m < cx.fiscal_start {
        Start::BeforeYear
    } else if m <= cx.period {
        Start::InYear(m)
    } else {
        Start::Later
    }
}

/// The acquisition record of each entity for a close at `until` ([`acquisition_records`]):
/// closed before control, an associate that becomes a subsidiary starts from the
/// associate's record; after a loss of control, an associate retained from its own.
fn last_records(acquisitions: &[Acquisition], until: chrono::NaiveDate) -> BTreeMap<&EntityId, &Acquisition> {
    acquisition_records(acquisitions, until)
}

/// The balances of every equity-accounted investee with an acquisition record.
pub fn investees(ds: &Dataset, t: &Translated, cx: &Context, acquisitions: &[Acquisition]) -> PolarsResult<Investees> {
    let acq = last_records(acquisitions, cx.period.last_day());
    let mut out = Investees::new();
    for e in cx.of_method(Method::Equity) {
        let Some(a) = acq.get(&e.id) else { continue };
        let before = match start_of(cx, a) {
            Start::InYear(m) if m > cx.fiscal_start => aggregate_one(ds, t, &e.id, m.prev())?,
            _ => Accounts::new(),
        };
        let own = aggregate_one(ds, t, &e.id, cx.period)?;
        let opening = aggregate_one(ds, t, &e.id, cx.fiscal_start.prev())?;
        out.insert(e.id.clone(), Investee { own, opening, before });
    }
    Ok(out)
}

/// The finding for an equity-accounted investee without an acquisition record; `check`
/// raises it too.
pub fn acquisition_missing(e: &EntityId) -> Finding {
    Finding::new(
        Rule::AcquisitionMissing,
        format!("{e} is accounted for by the equity method but entities/acquisitions.csv has no row for it"),
        "add its acquisition date and net assets at acquisition, so that the share of post-acquisition results can be computed",
    )
    .entity(e)
}

/// What the rule reads besides the investees' balances.
pub struct Inputs<'a> {
    /// The fair value adjustments of every acquisition (`fair_value::all_uplifts`).
    pub uplifts: &'a [Uplift],
    /// The impairments by month (`impairment::dated`), for investees of the investment.
    pub impairments: &'a BTreeMap<EntityId, Vec<Dated>>,
    pub rates: &'a ExpenseRates,
    /// The long-term interests in each investee ([`long_term_interests`]).
    pub long_term: &'a LongTerms,
}

/// `x` of the investee's currency `fc` at the acquisition date's rate, as the
/// acquisition row implies it (`net_assets_presentation / net_assets`), rounded; `None`
/// when it cannot be derived (net assets 0 in a foreign currency, or beyond exact
/// arithmetic: [`findings`]).
fn at_acquisition(cx: &Context, fc: Currency, a: &Acquisition, x: Decimal) -> Option<Decimal> {
    if fc == cx.presentation {
        return Some(cx.round(x));
    }
    if a.net_assets.is_zero() {
        return None;
    }
    x.checked_mul(a.net_assets_presentation)?.checked_div(a.net_assets).map(|v| cx.round(v))
}

/// The investee's fair value adjustments in the presentation currency at 100%: the
/// change brought forward (earlier years' depreciation and exchange difference, to
/// retained earnings), this year's depreciation (an expense, positive) and this year's
/// exchange difference (OCI, a gain positive).
#[derive(Debug, Default, Clone, Copy, PartialEq, Eq)]
struct UpliftParts {
    prior: Decimal,
    expense: Decimal,
    fx: Decimal,
}

/// Each adjustment is in the cost at the acquisition date's rate; its net amount (less
/// the depreciation to date) is at the closing rate (IAS 21.47), the year's
/// depreciation at the investee's expense rates; the rest of the change is exchange
/// difference. In the presentation currency the exchange parts are zero.
fn uplift_parts(
    cx: &Context,
    rates: &ExpenseRates,
    fc: Currency,
    a: &Acquisition,
    uplifts: &[Uplift],
) -> Option<UpliftParts> {
    let acquired = Period::of_date(a.date);
    let start = start_of(cx, a);
    let mut out = UpliftParts::default();
    for u in uplifts.iter().filter(|u| u.owned == a.owned) {
        let dep = |m: Period| depreciated_to(u, acquired, m, fc.minor_unit(), cx.mode);
        let at_acq = at_acquisition(cx, fc, a, u.amount)?;
        let now = cx.at_closing(fc, u.amount - dep(cx.period), cx.period)?;
        let first = if acquired > cx.fiscal_start { acquired } else { cx.fiscal_start };
        let expense = rates.expense_of_year(cx, fc, u, acquired, first);
        let base = match start {
            Start::BeforeYear => {
                let open = cx.fiscal_start.prev();
                let opening = cx.at_closing(fc, u.amount - dep(open), open)?;
                out.prior += opening - at_acq;
                opening
            }
            Start::InYear(_) => at_acq,
            Start::Later => continue,
        };
        out.expense += expense;
        out.fx += now - base + expense;
    }
    Some(out)
}

/// The investor's share after IAS 28.38-39: the cumulative share since acquisition does
/// not take the carrying amount (`cost` plus it) below zero.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct Capped {
    /// Earlier years' share recognised.
    pub prior: Decimal,
    /// This year's share of profit recognised.
    pub profit: Decimal,
    /// Losses not recognised at the opening and at the period (positive).
    pub unrecognised_open: Decimal,
    pub unrecognised: Decimal,
}

/// The share recognised of `prior` (earlier years), `profit`, `oci` and the year's
/// `dividends` received, for an investment of `cost`: both the opening and the closing
/// cumulative shares are floored at `-cost`. OCI and dividends are taken in full; the
/// floor moves the share of profit, so that a profit first covers the losses not
/// recognised before it is recognised (IAS 28.39).
pub fn cap_losses(cost: Decimal, prior: Decimal, profit: Decimal, oci: Decimal, dividends: Decimal) -> Capped {
    let floor = -cost.max(Decimal::ZERO);
    cap_losses_at((floor, floor), prior, profit, oci, dividends)
}

/// [`cap_losses`] with the floor of the opening and of the period given apart: the net
/// investment the losses may take to zero is the cost plus the long-term interests
/// (IAS 28.38), whose balances can differ at the two dates.
pub fn cap_losses_at(
    (floor_open, floor_now): (Decimal, Decimal),
    prior: Decimal,
    profit: Decimal,
    oci: Decimal,
    dividends: Decimal,
) -> Capped {
    let prior_rec = prior.max(floor_open);
    let cumulative = prior + profit + oci - dividends;
    let cumulative_rec = cumulative.max(floor_now);
    let year = cumulative_rec - prior_rec;
    Capped {
        prior: prior_rec,
        profit: year - oci + dividends,
        unrecognised_open: prior_rec - prior,
        unrecognised: cumulative_rec - cumulative,
    }
}

/// The dividends the consolidated entities received from `e` this year: receiver,
/// account (of kind `dividend`, profit or loss) and the income (a credit, positive).
fn dividends_received(cx: &Context, e: &EntityId) -> Vec<(EntityId, GroupAccount, Decimal)> {
    let mut out = Vec::new();
    for (receiver, accts) in &cx.balances {
        for ((acct, cp), amount) in accts {
            if cp.as_ref() == Some(e) && cx.kind_of(acct) == Some("dividend") && cx.is_flow(acct) && !amount.is_zero() {
                out.push((receiver.clone(), acct.clone(), -*amount));
            }
        }
    }
    out
}

/// The holder an entry about `e` is posted in: its first direct holder.
fn holder_of(cx: &Context, e: &EntityStructure) -> EntityId {
    e.direct_holders.first().map(|h| h.owner.clone()).unwrap_or_else(|| cx.structure.parent().clone())
}

/// Posts the entries of each equity-accounted investee.
pub fn post(
    j: &mut Journal,
    cx: &Context,
    acquisitions: &[Acquisition],
    investees: &Investees,
    inputs: &Inputs,
    findings: &mut Vec<Finding>,
) {
    let acq = last_records(acquisitions, cx.period.last_day());
    let none = Investee::default();
    for e in cx.of_method(Method::Equity) {
        let Some(a) = acq.get(&e.id) else {
            findings.push(acquisition_missing(&e.id));
            continue;
        };
        if start_of(cx, a) == Start::Later {
            continue;
        }
        let carrying = post_share(j, cx, e, a, investees.get(&e.id).unwrap_or(&none), inputs, findings);
        if let Some(rows) = inputs.impairments.get(&e.id) {
            findings.extend(post_impairment(j, cx, e, rows, carrying));
        }
    }
}

/// The share of results, after the fair value adjustments, the dividends received and
/// the floor of IAS 28.38-39, in one entry; returns the carrying amount it leaves (cost
/// plus the share since acquisition less the dividends), `None` when it posts nothing.
fn post_share(
    j: &mut Journal,
    cx: &Context,
    e: &EntityStructure,
    a: &Acquisition,
    inv: &Investee,
    inputs: &Inputs,
    findings: &mut Vec<Finding>,
) -> Option<Decimal> {
    let roles = cx.roles;
    let fc = cx.currencies.get(&e.id).copied().unwrap_or(cx.presentation);
    let (Some(up), Some(cost)) =
        (uplift_parts(cx, inputs.rates, fc, a, inputs.uplifts), at_acquisition(cx, fc, a, a.consideration))
    else {
        // `findings` raises the blocking finding for the acquisition row.
        return None;
    };
    let sum_where = |m: &Accounts, f: &dyn Fn(&AccountDef) -> bool| -> Decimal {
        m.iter().filter(|(a, _)| cx.chart.get(a).is_some_and(|d| f(d))).map(|(_, v)| *v).sum()
    };
    let pl = |m: &Accounts| -sum_where(m, &|d| d.statement == Statement::ProfitOrLoss);
    let oci = |m: &Accounts| -sum_where(m, &|d| d.statement == Statement::Oci);
    let (profit, oci_year, prior) = match start_of(cx, a) {
        Start::BeforeYear => {
            let equity_open = -sum_where(&inv.opening, &|d| d.class == AccountClass::Equity);
            (pl(&inv.own), oci(&inv.own), equity_open - a.net_assets_presentation + at_acq_uplifts(cx, fc, a, inputs))
        }
        _ => (pl(&inv.own) - pl(&inv.before), oci(&inv.own) - oci(&inv.before), Decimal::ZERO),
    };
    let share = e.effective_interest;
    let r = |x: Decimal| cx.round(x * share);
    let (sp, so, spr) = (r(profit - up.expense), r(oci_year + up.fx), r(prior + up.prior));
    let bargain = bargain_purchase(cx, fc, a, share, inputs.uplifts);
    let (sp, spr) = if let Start::InYear(_) = start_of(cx, a) { (sp + bargain, spr) } else { (sp, spr + bargain) };
    let holder = holder_of(cx, e);
    // Held at the opening of a year whose prior year end the folder holds: the earlier
    // years' share as that close rounded it (its parts, each rounded), not the share of
    // the carried equity rounded once, so that the opening is that year end to the cent.
    let spr = match (start_of(cx, a), cx.brought_forward.equity_method_share.get(&(holder.clone(), e.id.clone()))) {
        (Start::BeforeYear, Some(carried)) => *carried,
        _ => spr,
    };
    let dividends = dividends_received(cx, &e.id);
    let div: Decimal = dividends.iter().map(|d| d.2).sum();
    j.equity_shares
        .insert((holder.clone(), e.id.clone()), EquityShare { to_date: spr + sp + so - div, oci_of_year: so });
    let interests = inputs.long_term.get(&e.id).map(Vec::as_slice).unwrap_or_default();
    let c = cap_losses_at(net_investment_floors(cost, interests), spr, sp, so, div);
    let (to_investment, to_interests) = split_over_interests(cost, c.prior + c.profit + so - div, interests);
    // The share of OCI of the earlier years the folder holds stays in the translation
    // reserve where the year-end close put it (IAS 28.10), not in retained earnings.
    let oci_before =
        cx.brought_forward.equity_method_oci.get(&(holder.clone(), e.id.clone())).copied().unwrap_or_default();
    let mut lines = vec![
        line(&roles.equity_investments, &holder, Some(&e.id), to_investment),
        line(&roles.equity_result, &holder, Some(&e.id), -c.profit),
        line(&roles.translation_difference, &holder, Some(&e.id), -so),
        line(&roles.retained_earnings, &holder, Some(&e.id), -(c.prior - oci_before)),
    ];
    if !oci_before.is_zero() {
        lines.push(line(&roles.translation_reserve, &holder, Some(&e.id), -oci_before));
    }
    lines.extend(dividends.iter().map(|(receiver, acct, x)| line(acct, receiver, Some(&e.id), *x)));
    lines.extend(interests.iter().zip(&to_interests).map(|(l, x)| line(&l.account, &l.holder, Some(&e.id), *x)));
    let m = |x: Decimal| money::format_amount(x, cx.minor);
    let from = match start_of(cx, a) {
        Start::InYear(month) => format!(" from {month}"),
        _ => String::new(),
    };
    let mut text = format!(
        "share {} of {}{from}: profit {}, OCI {}, prior years {}",
        share.normalize(),
        e.id,
        m(c.profit),
        m(so),
        m(c.prior)
    );
    if !up.expense.is_zero() {
        text.push_str(&format!(" (after fair value depreciation {} at 100%)", m(up.expense)));
    }
    if !div.is_zero() {
        text.push_str(&format!("; dividends received {} off the investment", m(div)));
    }
    if !bargain.is_zero() {
        text.push_str(&format!(
            "; bargain purchase {} in the share of result of {} (IAS 28.32(b))",
            m(bargain),
            a.date
        ));
    }
    let absorbed: Decimal = to_interests.iter().sum();
    if !absorbed.is_zero() {
        text.push_str(&format!("; losses applied to long-term interests {} (IAS 28.38)", m(-absorbed)));
    }
    if !c.unrecognised.is_zero() || !c.unrecognised_open.is_zero() {
        text.push_str(&format!("; losses not recognised {} (opening {})", m(c.unrecognised), m(c.unrecognised_open)));
        let net_investment = -net_investment_floors(cost, interests).1;
        findings.push(losses_unrecognised(&e.id, cx.period, net_investment, spr + sp + so - div, c.unrecognised));
    }
    j.post(EliminationRule::EquityMethod, holder.clone(), vec![holder, e.id.clone()], text, lines);
    Some(cost + to_investment)
}

/// A bargain purchase of an investee (IAS 28.32(b)): the excess of the investor's
/// `share` of the net fair value of the identifiable net assets (`net_assets`, less the
/// deferred tax on its fair value adjustments, as for a subsidiary, IAS 12.19) over the
/// cost, at the acquisition date's rate; 0 when the cost is not below it. It is income
/// in the share of the investee's result of the period of acquisition: the caller puts
/// it in the year's share when the acquisition is in the fiscal year, in the earlier
/// years' (retained earnings) after. The carrying amount includes it, so the floor of
/// IAS 28.38 needs no change.
fn bargain_purchase(cx: &Context, fc: Currency, a: &Acquisition, share: Decimal, uplifts: &[Uplift]) -> Decimal {
    let tax: Decimal = uplifts.iter().filter(|u| u.owned == a.owned && u.deferred_tax).map(|u| u.amount).sum();
    let excess = (a.net_assets + tax) * share - a.consideration;
    if excess <= Decimal::ZERO {
        return Decimal::ZERO;
    }
    at_acquisition(cx, fc, a, excess).unwrap_or_default()
}

/// One long-term interest in an investee as the close reads it (IAS 28.38): the
/// holder's balance on the account naming the investee, in the presentation currency,
/// at the month end before the fiscal year and at the period (an asset, debit
/// positive).
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct LongTerm {
    pub holder: EntityId,
    pub account: GroupAccount,
    pub opening: Decimal,
    pub now: Decimal,
}

/// The long-term interests by investee, in the order of `long_term_interests.csv`.
pub type LongTerms = BTreeMap<EntityId, Vec<LongTerm>>;

/// The long-term interests of `long_term_interests.csv` whose holder is consolidated
/// and whose investee is equity-accounted (the others are [`long_term_findings`]). The
/// balances are the holder's as booked, after any loss allowance it recognised under
/// IFRS 9, which applies to them before IAS 28.38 does (IAS 28.14A).
pub fn long_term_interests(ds: &Dataset, t: &Translated, cx: &Context) -> PolarsResult<LongTerms> {
    let mut out = LongTerms::new();
    for r in &ds.long_term_interests {
        if !cx.consolidated.contains(&r.holder) || !cx.of_method(Method::Equity).any(|e| e.id == r.investee) {
            continue;
        }
        let key = (r.account.clone(), Some(r.investee.clone()));
        let now = cx.balances.get(&r.holder).and_then(|b| b.get(&key)).copied().unwrap_or_default();
        let opening = balance_naming(t, &r.holder, &r.account, &r.investee, cx.fiscal_start.prev())?;
        out.entry(r.investee.clone()).or_default().push(LongTerm {
            holder: r.holder.clone(),
            account: r.account.clone(),
            opening,
            now,
        });
    }
    Ok(out)
}

/// The translated balance of `holder` on `account` naming `counterparty` at `period`.
fn balance_naming(
    t: &Translated,
    holder: &EntityId,
    account: &GroupAccount,
    counterparty: &EntityId,
    period: Period,
) -> PolarsResult<Decimal> {
    use polars::prelude::*;
    let df = t
        .lines
        .clone()
        .lazy()
        .filter(
            col("entity")
                .eq(lit(holder.as_str()))
                .and(col("group_account").eq(lit(account.as_str())))
                .and(col("counterparty").eq(lit(counterparty.as_str())))
                .and(col("period_index").eq(lit(crate::map_accounts::period_index(period)))),
        )
        .select([col("balance_presentation").sum()])
        .collect()?;
    Ok(money::column_decimals(df.column("balance_presentation")?)?.first().copied().flatten().unwrap_or_default())
}

/// The floors of the cumulative share at the opening and at the period: minus the net
/// investment, the cost plus the long-term interests at each date (IAS 28.38).
fn net_investment_floors(cost: Decimal, interests: &[LongTerm]) -> (Decimal, Decimal) {
    let base = cost.max(Decimal::ZERO);
    let open: Decimal = interests.iter().map(|l| l.opening.max(Decimal::ZERO)).sum();
    let now: Decimal = interests.iter().map(|l| l.now.max(Decimal::ZERO)).sum();
    (-(base + open), -(base + now))
}

/// The recognised change of the net investment since acquisition (`change`, a loss
/// negative) split between the investment in the ordinary shares at `cost` and the
/// long-term interests. Losses beyond the cost reduce the interests in the file's order,
/// each to zero at most (IAS 28.38: in the reverse order of their seniority); as the
/// split is of the cumulative change, later profits, once the losses not recognised are
/// covered (IAS 28.39), restore the interests in the opposite order and the investment
/// last. Returns the investment's change and each interest's (zero or a credit).
fn split_over_interests(cost: Decimal, change: Decimal, interests: &[LongTerm]) -> (Decimal, Vec<Decimal>) {
    let base = cost.max(Decimal::ZERO);
    let mut beyond = (-(base + change)).max(Decimal::ZERO);
    let to_investment = change + beyond;
    let to_interests = interests
        .iter()
        .map(|l| {
            let take = beyond.min(l.now.max(Decimal::ZERO));
            beyond -= take;
            -take
        })
        .collect();
    (to_investment, to_interests)
}

/// What `long_term_interests.csv` names that the close cannot use (blocking): a holder
/// that is not consolidated, an investee that is not equity-accounted at the period, an
/// account that is not a balance-sheet asset of the chart, a row given twice, and an
/// investee whose ownership changes (`ownership_changes.csv`: not carried through).
pub fn long_term_findings(ds: &Dataset, method_of: &dyn Fn(&EntityId) -> Option<Method>) -> Vec<Finding> {
    let mut out = Vec::new();
    let mut seen = std::collections::BTreeSet::new();
    for r in &ds.long_term_interests {
        let problem = if !matches!(method_of(&r.holder), Some(Method::Full | Method::Proportionate)) {
            Some(format!("the holder {} is not consolidated", r.holder))
        } else if method_of(&r.investee) != Some(Method::Equity) {
            Some(format!("{} is not accounted for by the equity method", r.investee))
        } else if !ds.account(&r.account).is_some_and(|a| a.class == AccountClass::Asset) {
            Some(format!("{} is not an asset account of entities/accounts.csv", r.account))
        } else if !seen.insert((&r.holder, &r.investee, &r.account)) {
            Some("the row is given twice".to_string())
        } else if ds.ownership_changes.iter().any(|c| c.owned == r.investee) {
            // A sale or a step to control carries the equity method's entry over
            // (`step_acquisition.rs`) without the reduction of the long-term interest.
            Some(format!(
                "{} has a change in ownership in ownership_changes.csv, which the close does not carry a long-term interest through",
                r.investee
            ))
        } else {
            None
        };
        if let Some(problem) = problem {
            out.push(
                Finding::new(
                    Rule::ValueInvalid,
                    format!("long-term interest of {} in {} on {}: {problem}", r.holder, r.investee, r.account),
                    "name a consolidated holder, an equity-accounted investee and the asset account of the holder's long-term loan or receivable naming it (IAS 28.38), once",
                )
                .at(&r.source)
                .entity(&r.investee),
            );
        }
    }
    out
}

/// The fair value adjustments at the acquisition date's rate: the investee's books at
/// acquisition are `net_assets_presentation` less them (0 where one cannot be derived:
/// its finding blocks the close).
fn at_acq_uplifts(cx: &Context, fc: Currency, a: &Acquisition, inputs: &Inputs) -> Decimal {
    inputs.uplifts.iter().filter(|u| u.owned == a.owned).filter_map(|u| at_acquisition(cx, fc, a, u.amount)).sum()
}

/// The warning that shows the losses not recognised (IAS 28.39).
fn losses_unrecognised(e: &EntityId, period: Period, net: Decimal, share: Decimal, unrecognised: Decimal) -> Finding {
    Finding::new(
        Rule::AssociateLossesUnrecognised,
        format!(
            "{e}: the share since acquisition {share} against a net investment of {net} (the cost and the long-term interests) would take it below zero; losses of {unrecognised} are not recognised (IAS 28.38)"
        ),
        "nothing to correct: later profits are recognised only once they cover the unrecognised losses (IAS 28.39); a long-term interest in the investee that is part of the net investment (IAS 28.38) absorbs losses first when entities/long_term_interests.csv names it",
    )
    .entity(e)
    .period(period)
    .severity(Severity::Warning)
}

/// The impairments of the investment as a whole to the period (IAS 28.40-43), each at
/// its month's fixed rate: the year's in the share of result, earlier years' in retained
/// earnings, against the investment. They are posted as given; impairments beyond the
/// `carrying` amount left by the share (an investment below zero) are a warning.
fn post_impairment(
    j: &mut Journal,
    cx: &Context,
    e: &EntityStructure,
    rows: &[Dated],
    carrying: Option<Decimal>,
) -> Option<Finding> {
    let (mut year, mut prior) = (Decimal::ZERO, Decimal::ZERO);
    for d in rows {
        let x = d.at_rate(cx, d.amount);
        if d.in_year { year += x } else { prior += x }
    }
    if year.is_zero() && prior.is_zero() {
        return None;
    }
    let holder = holder_of(cx, e);
    let roles = cx.roles;
    j.post(
        EliminationRule::EquityMethod,
        holder.clone(),
        vec![holder.clone(), e.id.clone()],
        format!(
            "impairment of the investment in {}: this year {}, earlier years {} (IAS 28.40-43)",
            e.id,
            money::format_amount(year, cx.minor),
            money::format_amount(prior, cx.minor)
        ),
        vec![
            line(&roles.equity_investments, &holder, Some(&e.id), -(year + prior)),
            line(&roles.equity_result, &holder, Some(&e.id), year),
            line(&roles.retained_earnings, &holder, Some(&e.id), prior),
        ],
    );
    let carrying = carrying?;
    (year + prior > carrying).then(|| {
        let m = |x: Decimal| money::format_amount(x, cx.minor);
        Finding::new(
            Rule::ValueInvalid,
            format!(
                "{}: impairments of the investment to date {} exceed its carrying amount {} before them: the investment is {} (IAS 28.40-43)",
                e.id,
                m(year + prior),
                m(carrying),
                m(carrying - year - prior)
            ),
            "check the impairments in goodwill_impairments.csv: an impairment takes the investment to its recoverable amount, at least zero",
        )
        .entity(&e.id)
        .period(cx.period)
        .severity(Severity::Warning)
    })
}

/// Posts the sale of an associate (or joint venture) that ends significant influence
/// (IAS 28.22), from the equity method at the last month end before the date
/// (`step_acquisition::associate_before`, the month rule of a loss of control):
///
/// - its lines carried (share of profit and OCI of the year to then, earlier years), but
///   the investment, which is derecognised (IAS 28.22(a));
/// - an investment retained at its fair value (IAS 28.22(b)), at the closing rate of that
///   month end, in place of the holder's remaining cost;
/// - the holder's own gain (proceeds less the cost of the shares sold, in its books)
///   adjusted to the group's: proceeds + fair value retained - the equity-method carrying
///   amount (cost + the share since), on the row's `gain_account`;
/// - the investor's share of the associate's OCI reclassified to profit or loss through
///   OCI of the year, as if the associate had disposed of the related assets (IAS
///   28.22(c), IAS 1.92-93).
pub fn post_disposal(
    j: &mut Journal,
    cx: &Context,
    before: &super::step_acquisition::AssociateBefore,
    found: &mut Vec<Finding>,
) {
    let c = before.change;
    let (e, holder) = (&c.owned, &c.holder);
    // Without the account the finding of `ownership` blocks the close.
    let Some(gain_account) = c.gain_account.as_ref() else { return };
    let share = super::step_acquisition::equity_share(cx, &before.lines);
    let fc = cx.currencies.get(e).copied().unwrap_or(cx.presentation);
    let fair_value = cx.at_closing(fc, c.fair_value_held.unwrap_or_default(), before.last_month).unwrap_or_default();
    let investment: Vec<(&GroupAccount, Decimal)> = cx
        .balances_of(holder)
        .filter(|((a, cp), _)| cp.as_ref() == Some(e) && cx.kind_of(a) == Some("investment"))
        .map(|((a, _), v)| (a, *v))
        .collect();
    let remaining: Decimal = investment.iter().map(|x| x.1).sum();
    let account = investment.first().map(|x| x.0.clone());
    if account.is_none() && !fair_value.is_zero() {
        found.push(
            Finding::new(
                Rule::OwnershipChangeUnsupported,
                format!("sale of {e} by {} on {}: an interest is retained but {} has no investment line naming {e}", holder, c.date, holder),
                "book the investment retained on an account of kind `investment` naming the entity, or correct `fair_value_held`",
            )
            .at(&c.source)
            .entity(e),
        );
        return;
    }
    let adjustment = fair_value - remaining - share.since;
    let mut lines = share.carried.clone();
    if let Some(account) = &account {
        lines.push(line(account, holder, Some(e), fair_value - remaining));
    }
    lines.push(line(gain_account, holder, Some(e), -adjustment));
    lines.extend(super::step_acquisition::reclassified(cx, c, gain_account, share.oci, before.revaluation));
    let m = |x: Decimal| money::format_amount(x, cx.minor);
    j.post(
        EliminationRule::EquityMethod,
        holder.clone(),
        vec![holder.clone(), e.clone()],
        format!(
            "{e} sold by {holder} on {}, equity-accounted to {}: share since significant influence {} derecognised (IAS 28.22(a)), interest retained at fair value {} (IAS 28.22(b)), the holder's gain adjusted by {}; share of OCI {} reclassified to profit or loss, {} of revaluation to retained earnings (IAS 28.22(c))",
            c.date,
            before.last_month,
            m(share.since),
            m(fair_value),
            m(adjustment),
            m(share.oci - before.revaluation),
            m(before.revaluation)
        ),
        lines,
    );
}

/// One side of goods between the group and an investee (IAS 28.28).
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Direction {
    /// The group sold to the investee, which holds the goods.
    Downstream,
    /// The investee sold to the group, which holds the goods.
    Upstream,
}

/// The entry lines that eliminate the investor's share of unrealised profit on goods
/// between consolidated entity `group` and investee `investee` (held by `holder`):
/// `now` the share at the period's closing rate, `open_then` and `open_now` the share
/// counted at the opening at the opening and the period's closing rates, `carried` the
/// earlier years' exchange differences on it (`unrealised_profit::earlier_years`).
/// Downstream the seller's cost of sales bears it and the investment holds it (the goods
/// are inside the investee); upstream the group's inventory is reduced and the share of
/// result bears it. The opening part is in retained earnings but for the earlier years'
/// exchange differences, which stay in the translation reserve (IAS 21.41); this year's
/// is in OCI.
pub fn unrealised_lines(
    cx: &Context,
    dir: Direction,
    (group, investee, holder): (&EntityId, &EntityId, &EntityId),
    (now, open_then, open_now, carried): (Decimal, Decimal, Decimal, Decimal),
) -> Option<Vec<EntryLine>> {
    let roles = cx.roles;
    let (inventory, cogs) = (roles.inventory.as_ref()?, roles.cost_of_sales.as_ref()?);
    let (change, fx) = (now - open_now, open_now - open_then);
    // Who bears the elimination, which asset holds the goods and whose, and the line of
    // the year's change.
    let (bearer, (asset, of), result) = match dir {
        Direction::Downstream => (group, (&roles.equity_investments, holder), cogs),
        Direction::Upstream => (holder, (inventory, group), &roles.equity_result),
    };
    Some(vec![
        line(asset, of, Some(investee), -now),
        line(&roles.retained_earnings, bearer, Some(investee), open_then - carried),
        line(&roles.translation_reserve, bearer, Some(investee), carried),
        line(result, bearer, Some(investee), change),
        line(&roles.translation_difference, bearer, Some(investee), fx),
    ])
}

/// The investee of an `inventory_profit.csv` pair and the direction, when one side is
/// consolidated and the other equity-accounted; `None` otherwise.
pub fn investee_pair<'a>(
    cx: &Context<'a>,
    seller: &EntityId,
    buyer: &EntityId,
) -> Option<(&'a EntityStructure, Direction)> {
    let equity = |x: &EntityId| cx.of_method(Method::Equity).find(|e| &e.id == x);
    if cx.consolidated.contains(seller) {
        equity(buyer).map(|e| (e, Direction::Downstream))
    } else if cx.consolidated.contains(buyer) {
        equity(seller).map(|e| (e, Direction::Upstream))
    } else {
        None
    }
}

/// Posts the elimination of `investee_pair`'s unrealised profit (amounts of
/// [`unrealised_lines`]).
pub fn post_unrealised(
    j: &mut Journal,
    cx: &Context,
    (e, dir): (&EntityStructure, Direction),
    group: &EntityId,
    amounts: (Decimal, Decimal, Decimal, Decimal),
    text: String,
) {
    let holder = holder_of(cx, e);
    let Some(lines) = unrealised_lines(cx, dir, (group, &e.id, &holder), amounts) else { return };
    j.post(EliminationRule::EquityMethod, holder.clone(), vec![group.clone(), e.id.clone()], text, lines);
}

/// What the equity method cannot express, for a close at `period` (blocking): the
/// undated `impairment` of an investee's acquisition (give it by month), an NCI fair
/// value for an investee (it has no NCI), an acquisition
/// row whose date's rate cannot be derived, unrealised profit on goods between an
/// investee and an entity the group does not consolidate, and unrealised profit with an
/// investee under the deferred tax policy (its deferred tax is not modelled).
pub fn findings(ds: &Dataset, method_of: &dyn Fn(&EntityId) -> Option<Method>, period: Period) -> Vec<Finding> {
    let equity = |e: &EntityId| method_of(e) == Some(Method::Equity);
    let consolidated = |e: &EntityId| matches!(method_of(e), Some(Method::Full | Method::Proportionate));
    let mut out = Vec::new();
    for (_, a) in last_records(&ds.acquisitions, period.last_day()).into_iter().filter(|(e, _)| equity(e)) {
        let at = |message: String, action: &str| {
            Finding::new(Rule::ValueInvalid, message, action).at(&a.source).entity(&a.owned)
        };
        if a.nci_fair_value.is_some_and(|x| !x.is_zero()) {
            out.push(at(
                format!("{}: `nci_fair_value` {} given for an equity-accounted investee, which has no NCI in the group", a.owned, a.nci_fair_value.unwrap_or_default()),
                "leave `nci_fair_value` empty for an associate or joint venture; its goodwill is inside the investment (IAS 28.32(a))",
            ));
        }
        if !a.impairment.is_zero() || !a.impairment_year.is_zero() {
            out.push(at(
                format!("{}: an undated `impairment` {} of an equity-accounted investment", a.owned, a.impairment),
                "give the impairment of the investment (IAS 28.40-43) by month in goodwill_impairments.csv and leave `impairment` and `impairment_year` empty",
            ));
        }
        let foreign = ds.entity(&a.owned).is_some_and(|x| x.currency != ds.settings.presentation_currency);
        let too_large = |x: Decimal| {
            x.checked_mul(a.net_assets_presentation)
                .is_none_or(|p| p.abs() >= Decimal::from_i128_with_scale(10i128.pow(27), 0))
        };
        if foreign && (a.net_assets.is_zero() || too_large(a.consideration)) {
            out.push(at(
                format!("{}: the acquisition date's rate cannot be derived from `net_assets` {} and `net_assets_presentation` {} (for the cost {})", a.owned, a.net_assets, a.net_assets_presentation, a.consideration),
                "give the net assets at acquisition in both currencies, so that the cost and the fair value adjustments are at the acquisition date's rate",
            ));
        }
    }
    let tax = ds.settings.policies.deferred_tax;
    for ip in ds.inventory_profits.iter().filter(|x| x.period <= period) {
        let (s, b) = (&ip.seller, &ip.buyer);
        if !equity(s) && !equity(b) {
            continue;
        }
        let at = |message: String, action: &str| {
            Finding::new(Rule::ValueInvalid, message, action)
                .at(&ip.source)
                .entity(if equity(s) { s } else { b })
                .period(ip.period)
        };
        if !(consolidated(s) || consolidated(b)) {
            out.push(at(
                format!("unrealised profit of {s} on goods held by {b}: neither is consolidated"),
                "only goods between the group and an equity-accounted investee are eliminated (IAS 28.28); remove the row",
            ));
        } else if tax {
            out.push(at(
                format!("unrealised profit between {s} and {b} under `policies.deferred_tax`: the deferred tax on an investee's elimination is not supported"),
                "post the elimination and its tax as a top-side entry, or close without the deferred tax policy",
            ));
        }
    }
    out
}

#[cfg(test)]
mod tests {
    use super::super::context::fixture::*;
    use super::*;
    use crate::load::{Quote, Rate};

    fn usd() -> Currency {
        Currency::parse("USD").unwrap_or_else(|| panic!("USD"))
    }

    fn two() -> Rate {
        Rate { value: d("2"), quote: Quote::UnitsPerPresentation }
    }

    /// Averages of 2 USD per EUR for every month of 2025 and 2026, as the closing rates
    /// of the fixture.
    fn rates() -> ExpenseRates {
        ExpenseRates {
            average: p("2025-01").through(&p("2026-12")).into_iter().map(|m| ((usd(), m), two())).collect(),
            policy: Some(IncomeTranslation::Periodic),
            ..ExpenseRates::default()
        }
    }

    /// A's acquisition: `consideration` and net assets USD 800 (EUR 400 at the
    /// acquisition date's 2 USD per EUR).
    fn acquired(date: &str, consideration: &str) -> Acquisition {
        Acquisition {
            owned: id("A"),
            date: chrono::NaiveDate::parse_from_str(date, "%Y-%m-%d").unwrap_or_default(),
            consideration: d(consideration),
            nci_measurement: NciMeasurement::ShareOfNetAssets,
            nci_fair_value: None,
            net_assets: d("800"),
            net_assets_presentation: d("400"),
            impairment: Decimal::ZERO,
            impairment_year: Decimal::ZERO,
            fair_value_adjustment: Decimal::ZERO,
            fair_value_account: None,
            source: Source::file("entities/acquisitions.csv"),
        }
    }

    fn world() -> World {
        World::new(&["P", "A"], &[holding("P", "A", "0.3", "2020-01-01")], p("2026-06"))
    }

    fn run(
        cx: &Context,
        a: &Acquisition,
        inv: Investee,
        uplifts: &[Uplift],
        dated: &[Dated],
    ) -> (Journal, Vec<Finding>) {
        let rates = rates();
        let impairments = BTreeMap::from([(id("A"), dated.to_vec())]);
        let inputs = Inputs { uplifts, impairments: &impairments, rates: &rates, long_term: &LongTerms::new() };
        let mut j = Journal::default();
        let mut found = Vec::new();
        post(&mut j, cx, std::slice::from_ref(a), &Investees::from([(id("A"), inv)]), &inputs, &mut found);
        (j, found)
    }

    fn rows(x: &[(&str, &str)]) -> Accounts {
        x.iter().map(|(a, v)| (acct(a), d(v))).collect()
    }

    /// P holds 30% of associate A since 2020 (IAS 28.5: significant influence). Net
    /// assets at acquisition EUR 400. At the opening A's equity was 300 capital + 200
    /// retained earnings = 500: 100 earned since acquisition, 30 of it P's (prior
    /// years). This year A made a profit of 100 (revenue 100) and an OCI gain of 20:
    /// P's shares 30 and 6. The investment goes up by 30 + 6 + 30 = 66 (IAS 28.10).
    #[test]
    fn cost_plus_the_share_of_post_acquisition_results() {
        let w = world();
        let cx = w.context(p("2026-06"), p("2026-01"), Default::default());
        let a = acquired("2020-01-01", "240");
        let inv = Investee {
            own: rows(&[("4000", "-100"), ("9000", "-20")]),
            opening: rows(&[("3000", "-300"), ("3200", "-200")]),
            before: Accounts::new(),
        };
        let (j, found) = run(&cx, &a, inv.clone(), &[], &[]);
        assert!(found.is_empty());
        assert_eq!(
            lines(&j.entries[0]),
            [
                ("1300".into(), "P".into(), "66".into()),
                ("4900".into(), "P".into(), "-30".into()),
                ("9000".into(), "P".into(), "-6".into()),
                ("3200".into(), "P".into(), "-30".into())
            ]
        );
        let rates = rates();
        let none = BTreeMap::new();
        let inputs = Inputs { uplifts: &[], impairments: &none, rates: &rates, long_term: &LongTerms::new() };
        let (mut j, mut found) = (Journal::default(), Vec::new());
        post(&mut j, &cx, &[], &Investees::from([(id("A"), inv)]), &inputs, &mut found);
        assert!(j.entries.is_empty());
        assert_eq!(found.iter().map(|f| f.rule).collect::<Vec<_>>(), [Rule::AcquisitionMissing]);
    }

    /// A (USD, 2 USD per EUR at every month end and on average) is acquired on
    /// 2026-04-15: April counts whole. At June A's year to date is revenue EUR 150 and
    /// OCI 20; at March (the month before) 60 and 5: since acquisition profit 90 and OCI
    /// 15. A plant uplift of USD 120 over 60 months: USD 6 for April to June, EUR 3 at
    /// the averages. P's 30%: profit (90 - 3) x 0.3 = 26.10; OCI 15 x 0.3 = 4.50 (the
    /// uplift's exchange difference is 57 - 60 + 3 = 0 at unchanged rates); no prior
    /// years (the opening equity before the acquisition is not P's). The dividend of
    /// EUR 10 P received from A in June is taken off the investment and out of income
    /// (IAS 28.10): investment 26.10 + 4.50 - 10 = 20.60.
    #[test]
    fn from_the_acquisition_month_after_the_uplift_less_dividends() {
        let w = world();
        let cx = w.context(p("2026-06"), p("2026-01"), balances(&[("P", "7400", Some("A"), "-10")]));
        let a = acquired("2026-04-15", "240");
        let inv = Investee {
            own: rows(&[("4000", "-150"), ("9000", "-20")]),
            opening: rows(&[("3000", "-300"), ("3200", "-900")]),
            before: rows(&[("4000", "-60"), ("9000", "-5")]),
        };
        let plant = Uplift {
            owned: id("A"),
            account: acct("1500"),
            amount: d("120"),
            life_months: Some(60),
            expense_account: Some(acct("5000")),
            deferred_tax: false,
            source: Source::file("entities/fair_value_adjustments.csv"),
        };
        let (j, found) = run(&cx, &a, inv, &[plant], &[]);
        assert!(found.is_empty());
        assert_eq!(
            lines(&j.entries[0]),
            [
                ("1300".into(), "P".into(), "20.6".into()),
                ("4900".into(), "P".into(), "-26.1".into()),
                ("9000".into(), "P".into(), "-4.5".into()),
                ("7400".into(), "P".into(), "10".into())
            ]
        );
        // Acquired in the fiscal year's first month (2026-01-20): the whole year to date,
        // 30% x 150 = 45 and 30% x 20 = 6, and still no earlier years.
        let a_jan = acquired("2026-01-20", "240");
        let inv = Investee {
            own: rows(&[("4000", "-150"), ("9000", "-20")]),
            opening: rows(&[("3000", "-300"), ("3200", "-900")]),
            before: Accounts::new(),
        };
        let cx_jan = w.context(p("2026-06"), p("2026-01"), Default::default());
        let (j, _) = run(&cx_jan, &a_jan, inv, &[], &[]);
        assert_eq!(
            lines(&j.entries[0]),
            [
                ("1300".into(), "P".into(), "51".into()),
                ("4900".into(), "P".into(), "-45".into()),
                ("9000".into(), "P".into(), "-6".into())
            ]
        );
        // Closed at March, before the acquisition: nothing.
        let cx = w.context(p("2026-03"), p("2026-01"), Default::default());
        let (j, _) = run(&cx, &a, Investee::default(), &[], &[]);
        assert!(j.entries.is_empty());
    }

    /// A (USD) acquired on 2025-07-01 with a plant uplift of USD 120 over 60 months, EUR
    /// 60 at the acquisition date's rate (EUR 400 for USD 800). By the opening six
    /// months are depreciated (USD 12): the net USD 108 at the opening's 2 USD per EUR
    /// is 54, so earlier years lose 60 - 54 = 6 (A's own books are as at acquisition:
    /// equity 340 = 400 less the uplift). This year six months more (USD 12) at averages
    /// of 2: an expense of 6; the net USD 96 at June's closing rate of 2.5 is 38.40, so
    /// the exchange difference is 38.40 - 54 + 6 = -9.60 (IAS 21.47). P's 30%: prior
    /// -1.80, profit -1.80, OCI -2.88; the investment -6.48 = 30% x (38.40 - 60).
    #[test]
    fn a_foreign_investees_uplift_at_the_closing_rate() {
        let w = world();
        let mut cx = w.context(p("2026-06"), p("2026-01"), Default::default());
        cx.closing.insert((usd(), p("2026-06")), Rate { value: d("2.5"), quote: Quote::UnitsPerPresentation });
        let a = acquired("2025-07-01", "240");
        let inv = Investee { opening: rows(&[("3000", "-340")]), ..Investee::default() };
        let plant = Uplift {
            owned: id("A"),
            account: acct("1500"),
            amount: d("120"),
            life_months: Some(60),
            expense_account: Some(acct("5000")),
            deferred_tax: false,
            source: Source::file("entities/fair_value_adjustments.csv"),
        };
        let (j, found) = run(&cx, &a, inv, &[plant], &[]);
        assert!(found.is_empty());
        assert_eq!(
            lines(&j.entries[0]),
            [
                ("1300".into(), "P".into(), "-6.48".into()),
                ("4900".into(), "P".into(), "1.8".into()),
                ("9000".into(), "P".into(), "2.88".into()),
                ("3200".into(), "P".into(), "1.8".into())
            ]
        );
    }

    /// An entity with two records (a subsidiary of 2021 sold on 1 April 2026, an
    /// associate retained from that date, IFRS 10.25(b)): a close at June takes the
    /// associate's, so the share counts from April (IAS 28.32): revenue since March
    /// 150 - 60 = 90, 30% = 27, and no earlier years. A close at March, before the
    /// associate's date, takes the record of its time.
    #[test]
    fn the_record_of_the_closes_time() {
        let w = world();
        let both = [acquired("2021-01-01", "400"), acquired("2026-04-01", "240")];
        let inv = Investee {
            own: rows(&[("4000", "-150")]),
            opening: rows(&[("3000", "-400")]),
            before: rows(&[("4000", "-60")]),
        };
        let rates = rates();
        let none = BTreeMap::new();
        let inputs = Inputs { uplifts: &[], impairments: &none, rates: &rates, long_term: &LongTerms::new() };
        let cx = w.context(p("2026-06"), p("2026-01"), Default::default());
        let (mut j, mut found) = (Journal::default(), Vec::new());
        post(&mut j, &cx, &both, &Investees::from([(id("A"), inv.clone())]), &inputs, &mut found);
        assert_eq!(
            lines(&j.entries[0]),
            [("1300".into(), "P".into(), "27".into()), ("4900".into(), "P".into(), "-27".into())]
        );
        assert!(j.entries[0].description.contains("from 2026-04"), "{}", j.entries[0].description);
        assert_eq!(
            acquisition_records(&both, p("2026-03").last_day()).get(&id("A")).map(|a| a.date),
            Some(both[0].date)
        );
        assert_eq!(
            acquisition_records(&both[1..], p("2026-03").last_day()).get(&id("A")).map(|a| a.date),
            Some(both[1].date)
        );
        // The order of the file does not matter: the latest dated by the period.
        let reversed = [both[1].clone(), both[0].clone()];
        assert_eq!(
            acquisition_records(&reversed, p("2026-06").last_day()).get(&id("A")).map(|a| a.date),
            Some(both[1].date)
        );
    }

    /// P sells 20% of its 30% associate A (USD) on 1 April 2026 and keeps 10%, worth USD
    /// 256 (EUR 128 at March's 2 USD per EUR). The equity method to March left the
    /// investment 90 above cost: 30 of earlier years (24 in retained earnings, 6 of OCI
    /// in the reserve), 45 share of profit, 15 share of OCI of the year. P's books keep
    /// 60 of the cost. IAS 28.22: the retained interest from 60 to 128 (+68), the share
    /// of 90 derecognised, the holder's gain adjusted by 128 - 60 - 90 = -22 (a debit of
    /// 22); the share of OCI 6 + 15 = 21 reclassified through OCI to profit or loss:
    /// -45 - 15 - 24 - 6 + 68 + 22 + 21 - 21 = 0. Nothing retained and no investment
    /// line: the share 90 is derecognised against the gain alone.
    #[test]
    fn the_sale_of_an_associate_derecognises_the_share_and_reclassifies_its_oci() {
        let w = World::new(&["P", "A"], &[holding("P", "A", "0.1", "2026-04-01")], p("2026-06"));
        let cx = w.context(p("2026-06"), p("2026-01"), balances(&[("P", "1200", Some("A"), "60")]));
        let change = OwnershipChange {
            date: chrono::NaiveDate::from_ymd_opt(2026, 4, 1).unwrap_or_default(),
            holder: id("P"),
            owned: id("A"),
            share: d("-0.2"),
            consideration: d("480"),
            fair_value_held: Some(d("256")),
            costs: Decimal::ZERO,
            gain_account: Some(acct("7300")),
            note: String::new(),
            source: Source::file("entities/ownership_changes.csv"),
        };
        let l = |a: &str, x: &str| line(&acct(a), &id("P"), Some(&id("A")), d(x));
        let before = super::super::step_acquisition::AssociateBefore {
            change: &change,
            last_month: p("2026-03"),
            lines: vec![l("1300", "90"), l("4900", "-45"), l("9000", "-15"), l("3200", "-24"), l("3300", "-6")],
            revaluation: Decimal::ZERO,
        };
        let (mut j, mut found) = (Journal::default(), Vec::new());
        post_disposal(&mut j, &cx, &before, &mut found);
        assert!(found.is_empty(), "{found:?}");
        let s = |a: &str, x: &str| (a.to_string(), "P".to_string(), x.to_string());
        assert_eq!(
            lines(&j.entries[0]),
            [
                s("4900", "-45"),
                s("9000", "-15"),
                s("3200", "-24"),
                s("3300", "-6"),
                s("1200", "68"),
                s("7300", "22"),
                s("9000", "21"),
                s("7300", "-21")
            ]
        );
        let all = OwnershipChange { fair_value_held: None, share: d("-0.3"), ..change.clone() };
        let cx = w.context(p("2026-06"), p("2026-01"), Default::default());
        let mut j = Journal::default();
        post_disposal(
            &mut j,
            &cx,
            &super::super::step_acquisition::AssociateBefore { change: &all, ..before },
            &mut found,
        );
        assert!(found.is_empty(), "{found:?}");
        assert!(lines(&j.entries[0]).contains(&s("7300", "90")), "{:?}", lines(&j.entries[0]));
    }

    /// Cost USD 240 = EUR 120 at the acquisition date's rate. Earlier years: opening
    /// equity 300 against net assets 400, P's 30% = -30. This year a loss of 500: -150.
    /// The cumulative -180 would take the investment of 120 below zero: -120 is
    /// recognised, of it -90 this year, and 60 is not (IAS 28.38), shown as a warning.
    #[test]
    fn losses_stop_at_zero_and_are_shown() {
        let w = world();
        let cx = w.context(p("2026-06"), p("2026-01"), Default::default());
        let a = acquired("2020-01-01", "240");
        let inv = Investee {
            own: rows(&[("5000", "500")]),
            opening: rows(&[("3000", "-400"), ("3200", "100")]),
            before: Accounts::new(),
        };
        let (j, found) = run(&cx, &a, inv, &[], &[]);
        assert_eq!(
            lines(&j.entries[0]),
            [
                ("1300".into(), "P".into(), "-120".into()),
                ("4900".into(), "P".into(), "90".into()),
                ("3200".into(), "P".into(), "30".into())
            ]
        );
        assert!(j.entries[0].description.contains("losses not recognised 60.00"), "{}", j.entries[0].description);
        assert_eq!(
            found.iter().map(|f| (f.rule, f.severity)).collect::<Vec<_>>(),
            [(Rule::AssociateLossesUnrecognised, Severity::Warning)]
        );
    }

    /// Three years of an investment of 100: a share of -80 brought forward and -50 this
    /// year recognises -20 (30 unrecognised); the next year +20 covers 20 of the 30 and
    /// recognises nothing (10 left); the year after +30 covers the 10 and recognises 20
    /// (IAS 28.39).
    #[test]
    fn profits_resume_only_after_the_unrecognised_losses_are_covered() {
        let z = Decimal::ZERO;
        let c = cap_losses(d("100"), d("-80"), d("-50"), z, z);
        assert_eq!((c.prior, c.profit, c.unrecognised_open, c.unrecognised), (d("-80"), d("-20"), z, d("30")));
        let c = cap_losses(d("100"), d("-130"), d("20"), z, z);
        assert_eq!((c.prior, c.profit, c.unrecognised_open, c.unrecognised), (d("-100"), z, d("30"), d("10")));
        let c = cap_losses(d("100"), d("-110"), d("30"), z, z);
        assert_eq!((c.prior, c.profit, c.unrecognised_open, c.unrecognised), (d("-100"), d("20"), d("10"), z));
        // OCI and dividends are taken in full; profit absorbs the floor.
        let c = cap_losses(d("100"), d("-90"), d("-30"), d("5"), d("2"));
        assert_eq!((c.prior, c.profit, c.unrecognised), (d("-90"), d("-13"), d("17")));
    }

    /// IAS 28.38-39 with long-term interests: cost 100, a subordinated loan L1 of 50 and
    /// a senior loan L2 of 30 (the file lists L1 first: it absorbs losses first). A
    /// cumulative share of -170 takes the investment to zero, L1 to zero and L2 by 20;
    /// a share of -200 takes everything to zero and leaves 20 unrecognised. A later
    /// profit of 50 first covers the 20 (IAS 28.39), then restores L2 fully (its 30)
    /// before L1; the investment comes back last.
    #[test]
    fn losses_run_through_the_long_term_interests_and_profits_restore_them_in_reverse() {
        let z = Decimal::ZERO;
        let loan = |a: &str, x: &str| LongTerm { holder: id("P"), account: acct(a), opening: d(x), now: d(x) };
        let interests = [loan("1400", "50"), loan("1650", "30")];
        assert_eq!(net_investment_floors(d("100"), &interests), (d("-180"), d("-180")));
        assert_eq!(split_over_interests(d("100"), d("-170"), &interests), (d("-100"), vec![d("-50"), d("-20")]));
        assert_eq!(split_over_interests(d("100"), d("-60"), &interests), (d("-60"), vec![z, z]));
        let c = cap_losses_at((d("-180"), d("-180")), d("-150"), d("-50"), z, z);
        assert_eq!((c.prior, c.profit, c.unrecognised), (d("-150"), d("-30"), d("20")));
        assert_eq!(
            split_over_interests(d("100"), c.prior + c.profit, &interests),
            (d("-100"), vec![d("-50"), d("-30")])
        );
        let c = cap_losses_at((d("-180"), d("-180")), d("-200"), d("50"), z, z);
        assert_eq!((c.prior, c.profit, c.unrecognised_open, c.unrecognised), (d("-180"), d("30"), d("20"), z));
        assert_eq!(split_over_interests(d("100"), c.prior + c.profit, &interests), (d("-100"), vec![d("-50"), z]));
    }

    /// The entry with a long-term interest: the first test's associate after a loss
    /// (cost USD 240 = EUR 120; earlier years -30; this year -150) and P's loan of 50 to
    /// A on 1400 naming A. The investment takes -120, the loan -50; 10 is not recognised.
    /// The share of result is -(120 + 50 - 30) = -140.
    #[test]
    fn the_loan_in_the_net_investment_absorbs_losses_beyond_the_investment() {
        let w = world();
        let cx = w.context(p("2026-06"), p("2026-01"), Default::default());
        let a = acquired("2020-01-01", "240");
        let inv = Investee {
            own: rows(&[("5000", "500")]),
            opening: rows(&[("3000", "-400"), ("3200", "100")]),
            before: Accounts::new(),
        };
        let rates = rates();
        let none = BTreeMap::new();
        let loan = LongTerm { holder: id("P"), account: acct("1400"), opening: d("50"), now: d("50") };
        let long_term = LongTerms::from([(id("A"), vec![loan])]);
        let inputs = Inputs { uplifts: &[], impairments: &none, rates: &rates, long_term: &long_term };
        let (mut j, mut found) = (Journal::default(), Vec::new());
        post(&mut j, &cx, std::slice::from_ref(&a), &Investees::from([(id("A"), inv)]), &inputs, &mut found);
        assert_eq!(
            lines(&j.entries[0]),
            [
                ("1300".into(), "P".into(), "-120".into()),
                ("4900".into(), "P".into(), "140".into()),
                ("3200".into(), "P".into(), "30".into()),
                ("1400".into(), "P".into(), "-50".into())
            ]
        );
        assert!(found[0].message.contains("losses of 10.00 are not recognised"), "{}", found[0].message);
    }

    /// A bargain purchase (IAS 28.32(b)): 30% of net assets USD 800 = USD 240 against a
    /// cost of USD 200: an excess of USD 40, EUR 20 at the acquisition date's 2 USD per
    /// EUR (400 / 800). Bought on 2026-04-15, it is income of the year in the share of
    /// result, beside 30% x 90 = 27 of profit since; bought in 2020, it is in the
    /// earlier years' share (retained earnings) with 30% x (500 - 400) = 30.
    #[test]
    fn a_bargain_purchase_of_an_investee_is_income_of_the_year_of_acquisition() {
        let w = world();
        let cx = w.context(p("2026-06"), p("2026-01"), Default::default());
        let inv = Investee {
            own: rows(&[("4000", "-150")]),
            opening: rows(&[("3000", "-300"), ("3200", "-200")]),
            before: rows(&[("4000", "-60")]),
        };
        let (j, _) = run(&cx, &acquired("2026-04-15", "200"), inv.clone(), &[], &[]);
        assert_eq!(
            lines(&j.entries[0]),
            [("1300".into(), "P".into(), "47".into()), ("4900".into(), "P".into(), "-47".into())]
        );
        assert!(j.entries[0].description.contains("bargain purchase 20.00"), "{}", j.entries[0].description);
        let inv = Investee { before: Accounts::new(), ..inv };
        let (j, _) = run(&cx, &acquired("2020-01-01", "200"), inv, &[], &[]);
        assert_eq!(
            lines(&j.entries[0]),
            [
                ("1300".into(), "P".into(), "95".into()),
                ("4900".into(), "P".into(), "-45".into()),
                ("3200".into(), "P".into(), "-50".into())
            ]
        );
        // At or above the share of the net assets there is no bargain.
        assert_eq!(bargain_purchase(&cx, usd(), &acquired("2020-01-01", "240"), d("0.3"), &[]), Decimal::ZERO);
    }

    /// Impairments of the investment of USD 50 in 2026-02 (this year) and USD 20 in
    /// 2025-11 (last year), each at 2 USD per EUR: 25 in the share of result, 10 in
    /// retained earnings, 35 off the investment (IAS 28.40-43).
    #[test]
    fn impairment_of_the_investment_as_a_whole() {
        let w = world();
        let cx = w.context(p("2026-06"), p("2026-01"), Default::default());
        let a = acquired("2020-01-01", "240");
        let dated = [
            Dated { period: p("2025-11"), amount: d("20"), rate: Some(two()), in_year: false },
            Dated { period: p("2026-02"), amount: d("50"), rate: Some(two()), in_year: true },
        ];
        let inv = Investee { opening: rows(&[("3000", "-400")]), ..Investee::default() };
        let (j, found) = run(&cx, &a, inv.clone(), &[], &dated);
        assert!(found.is_empty());
        // The share entry has no amount (no results since acquisition) and is not posted.
        assert_eq!(j.entries.len(), 1);
        assert_eq!(
            lines(&j.entries[0]),
            [
                ("1300".into(), "P".into(), "-35".into()),
                ("4900".into(), "P".into(), "25".into()),
                ("3200".into(), "P".into(), "10".into())
            ]
        );
        // USD 300 more in March (EUR 150) takes the investment of EUR 120 below zero
        // (120 - 185 = -65): a warning with the figures.
        let more = Dated { period: p("2026-03"), amount: d("300"), rate: Some(two()), in_year: true };
        let (_, found) = run(&cx, &a, inv, &[], &[dated[0].clone(), dated[1].clone(), more]);
        assert_eq!(
            found.iter().map(|f| (f.rule, f.severity)).collect::<Vec<_>>(),
            [(Rule::ValueInvalid, Severity::Warning)]
        );
        assert!(found[0].message.contains("185.00 exceed its carrying amount 120.00"), "{}", found[0].message);
    }

    /// P's share of unrealised profit now 30, at the opening 20 (24 at today's rate), of
    /// which 3 earlier years' exchange differences. Downstream (P sold to A): the
    /// investment -30, P's retained earnings +17 and translation reserve +3, cost of sales
    /// +6, OCI +4. Upstream (A sold to P): P's inventory -30, the share of result bears
    /// the change.
    #[test]
    fn unrealised_profit_with_an_investee_both_ways() {
        let w = world();
        let cx = w.context(p("2026-06"), p("2026-01"), Default::default());
        let amounts = (d("30"), d("20"), d("24"), d("3"));
        let who = (&id("P"), &id("A"), &id("P"));
        let got = |dir| {
            unrealised_lines(&cx, dir, who, amounts)
                .unwrap_or_default()
                .iter()
                .map(|l| (l.account.to_string(), l.amount.normalize().to_string()))
                .collect::<Vec<_>>()
        };
        let s = |a: &str, x: &str| (a.to_string(), x.to_string());
        // The lines before the journal drops those of no amount.
        let tr = cx.roles.translation_reserve.to_string();
        let got_down = got(Direction::Downstream);
        assert_eq!(got_down, [s("1300", "-30"), s("3200", "17"), s(&tr, "3"), s("5000", "6"), s("9000", "4")]);
        assert_eq!(
            got(Direction::Upstream),
            [s("1500", "-30"), s("3200", "17"), s(&tr, "3"), s("4900", "6"), s("9000", "4")]
        );
        assert_eq!(investee_pair(&cx, &id("P"), &id("A")).map(|x| x.1), Some(Direction::Downstream));
        assert_eq!(investee_pair(&cx, &id("A"), &id("P")).map(|x| x.1), Some(Direction::Upstream));
        assert!(investee_pair(&cx, &id("A"), &id("A")).is_none());
    }
}

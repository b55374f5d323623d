//! Restatement of a hyperinflationary entity's figures in the measuring unit current at
//! each month end (IAS 29), before translation: translate then takes every restated
//! balance at the closing rate (IAS 21.42(a)).
//!
//! For an entity with `hyperinflationary_from`, from the first restated month `f` (that
//! month, or the first month of the fiscal year if later) to the last month closed:
//! - monetary assets and liabilities (the chart's `monetary = true`) keep their amount
//!   (IAS 29.12);
//! - non-monetary assets and liabilities, and every equity account, are restated by the
//!   change in the index since the month their amount was recorded (IAS 29.15-19,
//!   29.24-25); amounts brought forward from before `f` (the opening balances, and the
//!   movements of the year's months before hyperinflation began) are taken as expressed
//!   in the measuring unit of the month before `f`, the base month: the index at the
//!   start of the year, or at the date hyperinflation begins when that is later. IAS
//!   29.25 restates equity "from the beginning of the period", which is this base; the
//!   first period's restatement from the original contribution dates (IAS 29.24, IFRIC
//!   7.3) is the user's to deliver in the opening balances;
//! - income and expenses are restated from the month they are recorded (IAS 29.26);
//! - the gain or loss on the net monetary position is the balancing figure that keeps
//!   the restated trial balance at zero (IAS 29.27-28), posted to the profit or loss
//!   account `accounts.net_monetary_position`.
//!
//! Each restated balance is rounded once, to the entity's currency minor unit with the
//! group's rounding mode; the net monetary position absorbs the residue, so the restated
//! trial balance sums to zero exactly. Comparatives are not restated (IAS 21.42(b): the
//! presentation currency is never hyperinflationary here; a hyperinflationary entity in
//! the presentation currency is a blocking finding), so the months before `f`
//! and the figures brought forward in the presentation currency stay as they were.
//!
//! An acquired hyperinflationary subsidiary's acquisition amounts (equity at acquisition,
//! goodwill, the NCI at acquisition, the fair value adjustments) are non-monetary too:
//! [`acquisition_units`] gives the close the indices to restate them from the
//! acquisition month (IAS 29.24-25; for an acquisition before hyperinflation began, from
//! the acquisition as well, IAS 29.34), and [`acquisition_findings`] blocks what the close
//! cannot restate. Restate knows nothing about files.

use std::collections::BTreeMap;

use polars::prelude::*;
use rust_decimal::Decimal;

use crate::findings::{Finding, Rule};
use crate::load::Dataset;
use crate::map_accounts::{period_index, period_of_index};
use crate::model::*;
use crate::money::{AMOUNT_SCALE, column_decimals, column_strings};

/// entity, group account, counterparty, transaction currency.
pub type Grain = (String, String, Option<String>, Option<String>);

/// How IAS 29 treats an account's amount.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Item {
    /// Kept at its amount (IAS 29.12).
    Monetary,
    /// Restated from the month it was recorded (IAS 29.15-26).
    NonMonetary,
}

/// What one hyperinflationary entity's restatement needs: its months and indices.
pub struct Plan<'a> {
    /// The base month (index at the start of the year or of hyperinflation).
    pub base: i32,
    /// The first restated month (`base + 1`) and the last.
    pub last: i32,
    /// Index at the end of each month from `base` to `last`.
    pub index: &'a BTreeMap<i32, Decimal>,
    pub minor: u32,
    pub mode: RoundingMode,
}

/// The restated movements of one entity: for every grain, the month's movement such that
/// the cumulated movements give the restated balance of each month from `base + 1`;
/// months up to `base` keep their movement. `movements` holds every grain's movement by
/// month (the opening balance in the first month of the frame). The net monetary
/// position grain is `nmp` (created when absent).
pub fn restate_entity(
    movements: &BTreeMap<Grain, BTreeMap<i32, Decimal>>,
    item: &dyn Fn(&str) -> Item,
    plan: &Plan,
    nmp: &Grain,
) -> BTreeMap<Grain, BTreeMap<i32, Decimal>> {
    let mut balances: BTreeMap<Grain, BTreeMap<i32, Decimal>> = BTreeMap::new();
    let first = movements.values().flat_map(|m| m.keys().copied()).min().unwrap_or(plan.base).min(plan.base);
    let mut grains: Vec<&Grain> = movements.keys().collect();
    if !movements.contains_key(nmp) {
        grains.push(nmp);
    }
    let none = BTreeMap::new();
    for g in grains {
        let m = movements.get(g).unwrap_or(&none);
        let kind = if g == nmp { Item::NonMonetary } else { item(&g.1) };
        let mut out = BTreeMap::new();
        for p in first..=plan.last {
            out.insert(p, restated_balance(m, p, kind, plan));
        }
        balances.insert(g.clone(), out);
    }
    // IAS 29.27-28: the gain or loss on the net monetary position is what the restatement
    // of everything else leaves; the historical trial balance sums to zero, so up to the
    // base month this adds nothing.
    for p in plan.base + 1..=plan.last {
        let total: Decimal = balances.values().map(|b| b[&p]).sum();
        if let Some(b) = balances.get_mut(nmp) {
            *b.get_mut(&p).expect("every month of the range") -= total;
        }
    }
    balances
        .into_iter()
        .map(|(g, b)| {
            let mut prev = Decimal::ZERO;
            let moves = b
                .into_iter()
                .map(|(p, bal)| {
                    let mv = bal - prev;
                    prev = bal;
                    (p, mv)
                })
                .collect();
            (g, moves)
        })
        .collect()
}

/// The balance of one grain at the end of month `p`: historical up to the base month,
/// then monetary items at their amount and the rest restated from the month each
/// movement was recorded (the base month for anything recorded up to it), rounded once.
fn restated_balance(m: &BTreeMap<i32, Decimal>, p: i32, kind: Item, plan: &Plan) -> Decimal {
    let historical: Decimal = m.range(..=p).map(|(_, a)| *a).sum();
    if p <= plan.base || kind == Item::Monetary {
        return historical;
    }
    let (Some(now), Some(base)) = (plan.index.get(&p), plan.index.get(&plan.base)) else { return historical };
    let mut exact = Decimal::ZERO;
    for (k, a) in m.range(..=p) {
        let then = if *k <= plan.base { base } else { plan.index.get(k).unwrap_or(base) };
        exact += *a * *now / *then;
    }
    crate::money::round(exact, plan.minor, plan.mode)
}

/// The months of a close of `fiscal_start..=last` that `e` is restated in: the base month
/// and the last, or `None` when the entity is not hyperinflationary by `last`.
pub fn months(e: &Entity, fiscal_start: Period, last: Period) -> Option<(i32, i32)> {
    let from = e.hyperinflationary_from?;
    let first = period_index(from).max(period_index(fiscal_start));
    (first <= period_index(last)).then_some((first - 1, period_index(last)))
}

/// The month end whose measuring unit an acquisition's amounts are expressed in: the
/// month before the control month. The close consolidates whole months from the control
/// month (`close/pre_acquisition.rs`), and the price index is a month-end index, so the
/// acquisition is restated from the last index before the group's results begin (common
/// practice with a monthly index; IAS 29.17 accepts an estimate where the exact date's
/// index is not available).
pub fn acquisition_month(a: &Acquisition) -> Period {
    Period::of_date(a.date).prev()
}

/// The IAS 29 restatement of an acquired hyperinflationary subsidiary's acquisition
/// amounts in one close: equity at acquisition, goodwill, the NCI at acquisition and the
/// fair value adjustments, all non-monetary (IAS 29.12, 29.24-25), restated by the
/// change in the general price index since the acquisition month and then translated at
/// the closing rate like every other restated amount (IAS 21.42(a)).
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct AcquisitionUnit {
    /// The index at the end of the acquisition month ([`acquisition_month`]).
    pub then: Decimal,
    /// The index at the end of the close's period.
    pub now: Decimal,
    /// The index at the end of the month before the fiscal year (the opening), when the
    /// entity was hyperinflationary then; `None` when it was not (the opening amounts
    /// are the acquisition's as recorded).
    pub opening: Option<Decimal>,
}

impl AcquisitionUnit {
    /// `x` of the acquisition date in the unit of the period end, rounded once to the
    /// functional currency's minor unit (IAS 29.24-25: restated by the index change since
    /// the acquisition).
    pub fn now(&self, x: Decimal, minor: u32, mode: RoundingMode) -> Decimal {
        crate::money::round(x * self.now / self.then, minor, mode)
    }

    /// `x` of the acquisition date in the unit of the opening, rounded like [`Self::now`].
    pub fn opening(&self, x: Decimal, minor: u32, mode: RoundingMode) -> Decimal {
        match self.opening {
            Some(i) => crate::money::round(x * i / self.then, minor, mode),
            None => x,
        }
    }

    /// An amount in the unit of the period end taken back to the unit of the opening
    /// (unrounded: it is translated and rounded once by the caller).
    pub fn back_to_opening(&self, x_now: Decimal) -> Decimal {
        x_now * self.opening.unwrap_or(self.then) / self.now
    }
}

/// The restatement of every acquired subsidiary that is hyperinflationary at `period`
/// (and not in the presentation currency, which `findings` blocks), for a close of the
/// fiscal year from `fiscal_start`. An entity whose indices at the acquisition month, the
/// period or the opening are missing is left out: `findings` blocks the close on them.
pub fn acquisition_units(ds: &Dataset, period: Period, fiscal_start: Period) -> BTreeMap<EntityId, AcquisitionUnit> {
    let mut out = BTreeMap::new();
    // The record of the close's time, where an entity has two (`acquisition_records`).
    for a in acquisition_records(&ds.acquisitions, period.last_day()).into_values() {
        let Some(e) = ds.entity(&a.owned) else { continue };
        let Some(from) = e.hyperinflationary_from else { continue };
        if from > period || e.currency == ds.settings.presentation_currency {
            continue;
        }
        let index =
            |p: Period| ds.price_indices.iter().find(|x| x.currency == e.currency && x.period == p).map(|x| x.index);
        let (Some(then), Some(now)) = (index(acquisition_month(a)), index(period)) else { continue };
        let p0 = fiscal_start.prev();
        let opening = if from <= p0 {
            let Some(i) = index(p0) else { continue };
            Some(i)
        } else {
            None
        };
        out.insert(a.owned.clone(), AcquisitionUnit { then, now, opening });
    }
    out
}

/// How the chart makes IAS 29 treat `account`: assets and liabilities by the chart's
/// `monetary` column (an unclassified one counts as monetary here; `findings` blocks the
/// close on it), everything else non-monetary.
pub fn item_of(ds: &Dataset, account: &str) -> Item {
    match ds.accounts.iter().find(|a| a.account.as_str() == account) {
        Some(a) if matches!(a.class, AccountClass::Asset | AccountClass::Liability) => {
            if a.monetary == Some(false) {
                Item::NonMonetary
            } else {
                Item::Monetary
            }
        }
        Some(_) => Item::NonMonetary,
        None => Item::Monetary,
    }
}

/// The movement frame (`map_accounts::movements` columns) with every hyperinflationary
/// entity's movements restated, and a column `restatement`: the part of each movement
/// that is restatement (zero for every other entity, and for all when a month's index
/// is missing, a blocking finding of `findings`).
pub fn restate(ds: &Dataset, movements: DataFrame, fiscal_start: Period, last: Period) -> PolarsResult<DataFrame> {
    let zero = crate::money::decimal_lit(Decimal::ZERO, AMOUNT_SCALE);
    let unchanged = |m: DataFrame| m.lazy().with_column(zero.clone().alias("restatement")).collect();
    let Some(nmp) = ds.settings.accounts.net_monetary_position.as_ref() else { return unchanged(movements) };
    let plans: Vec<(&Entity, i32, i32, BTreeMap<i32, Decimal>)> = ds
        .entities
        .iter()
        .filter_map(|e| {
            let (base, end) = months(e, fiscal_start, last)?;
            let index = indices(ds, e.currency, base, end)?;
            Some((e, base, end, index))
        })
        .collect();
    if plans.is_empty() {
        return unchanged(movements);
    }
    let _span = tracing::info_span!("restate", period = %last).entered();
    let ent = column_strings(&movements, "entity")?;
    let acc = column_strings(&movements, "group_account")?;
    let cp = column_strings(&movements, "counterparty")?;
    let txc = column_strings(&movements, "txn_currency")?;
    let per: Vec<Option<i32>> = movements.column("period_index")?.i32()?.iter().collect();
    let amt = column_decimals(movements.column("amount")?)?;
    let txa = column_decimals(movements.column("txn_amount")?)?;
    let hyper: Vec<&str> = plans.iter().map(|p| p.0.id.as_str()).collect();
    let mut cells: BTreeMap<String, BTreeMap<Grain, BTreeMap<i32, Decimal>>> = BTreeMap::new();
    let mut txn: BTreeMap<(Grain, i32), Option<Decimal>> = BTreeMap::new();
    for i in 0..movements.height() {
        let (Some(e), Some(a), Some(p)) = (&ent[i], &acc[i], per[i]) else { continue };
        if !hyper.contains(&e.as_str()) {
            continue;
        }
        let g: Grain = (e.clone(), a.clone(), cp[i].clone(), txc[i].clone());
        *cells.entry(e.clone()).or_default().entry(g.clone()).or_default().entry(p).or_default() +=
            amt[i].unwrap_or_default();
        txn.insert((g, p), txa[i]);
    }
    let mut rows: Vec<Row> = Vec::new();
    for (e, base, end, index) in &plans {
        let plan = Plan {
            base: *base,
            last: *end,
            index,
            minor: e.currency.minor_unit(),
            mode: ds.settings.policies.rounding,
        };
        let nmp_grain: Grain = (e.id.to_string(), nmp.to_string(), None, None);
        let item = |a: &str| item_of(ds, a);
        let none = BTreeMap::new();
        let historical = cells.get(e.id.as_str()).unwrap_or(&none);
        let restated = restate_entity(historical, &item, &plan, &nmp_grain);
        for (g, moves) in restated {
            for (p, a) in moves {
                let t = txn.get(&(g.clone(), p)).copied().flatten();
                let was = historical.get(&g).and_then(|m| m.get(&p)).copied().unwrap_or_default();
                rows.push((g.clone(), p, a, t, a - was));
            }
        }
    }
    let keep = movements
        .lazy()
        .filter(col("entity").is_in(lit(Series::new("h".into(), hyper)).implode(false), false).not())
        .with_column(zero.alias("restatement"));
    let restated = rows_frame(&rows)?.lazy();
    concat([keep, restated], UnionArgs::default())?.collect()
}

/// The index of `currency` for every month `base..=end`, or `None` when one is missing.
fn indices(ds: &Dataset, currency: Currency, base: i32, end: i32) -> Option<BTreeMap<i32, Decimal>> {
    let all: BTreeMap<i32, Decimal> =
        ds.price_indices.iter().filter(|x| x.currency == currency).map(|x| (period_index(x.period), x.index)).collect();
    (base..=end).map(|p| all.get(&p).map(|x| (p, *x))).collect()
}

/// A restated movement: grain, month, amount, transaction amount, restatement.
type Row = (Grain, i32, Decimal, Option<Decimal>, Decimal);

fn rows_frame(rows: &[Row]) -> PolarsResult<DataFrame> {
    let dt = crate::money::amount_dtype();
    let dec = |d: Decimal| {
        let mut d = d;
        d.rescale(AMOUNT_SCALE as u32);
        d.to_string()
    };
    DataFrame::new(
        rows.len(),
        vec![
            Column::new("entity".into(), rows.iter().map(|r| r.0.0.clone()).collect::<Vec<_>>()),
            Column::new("group_account".into(), rows.iter().map(|r| r.0.1.clone()).collect::<Vec<_>>()),
            Column::new("counterparty".into(), rows.iter().map(|r| r.0.2.clone()).collect::<Vec<_>>()),
            Column::new("txn_currency".into(), rows.iter().map(|r| r.0.3.clone()).collect::<Vec<_>>()),
            Column::new("period_index".into(), rows.iter().map(|r| r.1).collect::<Vec<_>>()),
            Column::new("amount".into(), rows.iter().map(|r| dec(r.2)).collect::<Vec<_>>()).strict_cast(&dt)?,
            Column::new("txn_amount".into(), rows.iter().map(|r| r.3.map(dec)).collect::<Vec<_>>()).strict_cast(&dt)?,
            Column::new("restatement".into(), rows.iter().map(|r| dec(r.4)).collect::<Vec<_>>()).strict_cast(&dt)?,
        ],
    )
}

/// The findings of the IAS 29 inputs for a close of `fiscal_start..=last`: the net
/// monetary position account, a missing index of a month the restatement needs, an
/// unclassified asset or liability of a hyperinflationary entity, what the close cannot
/// restate of an acquired one ([`acquisition_findings`]), a restated entity in a group
/// with a statement of cash flows (all blocking), and the indices
/// of a currency no hyperinflationary entity uses (a warning). `method_of` is the
/// structure's consolidation method at `last`.
pub fn findings(
    ds: &Dataset,
    mapped: &crate::map_accounts::Mapped,
    fiscal_start: Period,
    last: Period,
    method_of: &dyn Fn(&EntityId) -> Option<Method>,
) -> PolarsResult<Vec<Finding>> {
    let mut out = Vec::new();
    let hyper: Vec<(&Entity, i32, i32)> =
        ds.entities.iter().filter_map(|e| months(e, fiscal_start, last).map(|(b, l)| (e, b, l))).collect();
    if !hyper.is_empty() {
        out.extend(nmp_account_finding(ds));
    }
    for (e, base, end) in &hyper {
        for p in *base..=*end {
            let known = ds.price_indices.iter().any(|x| x.currency == e.currency && period_index(x.period) == p);
            if !known {
                let period = period_of_index(p);
                out.push(
                    Finding::new(
                        Rule::PriceIndexMissing,
                        format!(
                            "{} is hyperinflationary from {}; restating its {} figures needs the {} price index at the end of {period}, and rates/price_index.csv has none",
                            e.id,
                            e.hyperinflationary_from.map(|h| h.to_string()).unwrap_or_default(),
                            e.currency.code(),
                            e.currency.code(),
                        ),
                        format!("add `{},{period},<index>` to rates/price_index.csv (IAS 29.37: a general price index)", e.currency.code()),
                    )
                    .in_file("rates/price_index.csv")
                    .entity(&e.id)
                    .period(period),
                );
            }
        }
    }
    out.extend(unclassified(ds, mapped, &hyper)?);
    out.extend(intercompany_restated(ds, mapped, &hyper)?);
    for (e, _, _) in &hyper {
        if e.currency == ds.settings.presentation_currency {
            out.push(
                Finding::new(
                    Rule::RestatementUnsupported,
                    format!(
                        "{} is hyperinflationary in {}, the presentation currency: IAS 21.42(b) would restate the comparatives and the close does not",
                        e.id,
                        e.currency.code()
                    ),
                    "present the group in a currency that is not hyperinflationary, or restate outside tessera",
                )
                .at(&e.source)
                .entity(&e.id),
            );
        }
        // The statement of cash flows takes a restated entity's movements as flows: the
        // restatement of its non-monetary items (IAS 29.15-19) and its net monetary
        // position would show as cash flows of the lines they restate.
        if ds.cash_flow_lines.is_some() {
            out.push(
                Finding::new(
                    Rule::RestatementUnsupported,
                    format!(
                        "{} is restated for hyperinflation in the year and the group has a statement of cash flows, which does not yet take the restatement of non-monetary items and the net monetary position out of the cash flows (IAS 7 with IAS 29.33)",
                        e.id
                    ),
                    "close without entities/cash_flow_lines.csv (the other statements are unaffected), or without the entity, until the statement of cash flows supports a hyperinflationary entity",
                )
                .at(&e.source)
                .entity(&e.id),
            );
        }
        out.extend(acquisition_findings(ds, e, (fiscal_start, last), method_of));
    }
    let used: Vec<Currency> =
        ds.entities.iter().filter(|e| e.hyperinflationary_from.is_some()).map(|e| e.currency).collect();
    let mut told: Vec<Currency> = Vec::new();
    for x in &ds.price_indices {
        if used.contains(&x.currency) || told.contains(&x.currency) {
            continue;
        }
        told.push(x.currency);
        let rows = ds.price_indices.iter().filter(|y| y.currency == x.currency).count();
        out.push(
            Finding::new(
                Rule::PriceIndexUnused,
                format!("{rows} price index row(s) of {}, but no entity with that currency has `hyperinflationary_from`: the rows restate nothing", x.currency.code()),
                "remove the rows, or set `hyperinflationary_from` in entities/entities.csv for the entities reporting in that currency",
            )
            .at(&x.source)
            .period(x.period),
        );
    }
    Ok(out)
}

/// What the close cannot restate of a hyperinflationary entity `e` with an acquisition
/// record, in a close of the fiscal year from `fiscal_start` to `last`. Supported: a
/// subsidiary consolidated in full, its equity at acquisition, goodwill, NCI at
/// acquisition and fair value adjustments restated from the acquisition month
/// ([`AcquisitionUnit`]), which needs that month's index (a missing one is
/// `PriceIndexMissing`); acquired in the fiscal year, its results before control restated
/// on too. Blocking (`RestatementUnsupported`): an entity equity-accounted or consolidated
/// proportionately, hyperinflation beginning after the first month of the fiscal year, a
/// goodwill impairment, a change in ownership in the year.
fn acquisition_findings(
    ds: &Dataset,
    e: &Entity,
    (fiscal_start, last): (Period, Period),
    method_of: &dyn Fn(&EntityId) -> Option<Method>,
) -> Vec<Finding> {
    let records = acquisition_records(&ds.acquisitions, last.last_day());
    let Some(a) = records.get(&e.id).copied() else { return Vec::new() };
    let action = "close without the entity (or without `hyperinflationary_from`) and restate its contribution outside tessera until the close supports it";
    let unsupported = |why: String| {
        Finding::new(
            Rule::RestatementUnsupported,
            format!(
                "{} is hyperinflationary and acquired ({}): {why}, which the close does not support yet",
                e.id, a.date
            ),
            action,
        )
        .at(&a.source)
        .entity(&e.id)
    };
    let mut out = Vec::new();
    match method_of(&e.id) {
        Some(m @ (Method::Equity | Method::Proportionate)) => out.push(unsupported(format!(
            "it is consolidated by the {} method, and its restated figures (IAS 29.20) would have to be taken into that method",
            m.as_str()
        ))),
        Some(Method::Full) | Some(Method::None) | None => {}
    }
    // Hyperinflation beginning after the year's first month: the entity's own equity is
    // restated from the month before it began (its opening cannot carry the restatement
    // from the dates the equity was contributed, IAS 29.34), while the equity at
    // acquisition it is eliminated against is restated from the acquisition; and results
    // before control in the year would be restated partly from their months and partly
    // from the start of hyperinflation (`close/pre_acquisition.rs`).
    if let Some(h) = e.hyperinflationary_from.filter(|h| *h > fiscal_start) {
        out.push(unsupported(format!(
            "it is hyperinflationary only from {h}, after the start of the fiscal year from {fiscal_start}: its own equity is restated from then, its equity at acquisition from the acquisition (IAS 29.24-25, 29.34), and the two would not agree"
        )));
    }
    let impaired = !a.impairment.is_zero() || ds.impairments.iter().any(|i| i.owned == e.id);
    if impaired {
        out.push(unsupported(
            "its goodwill is impaired, and the impairment of restated goodwill (IAS 36 on IAS 29 amounts) would have to be measured in the unit of its month".into(),
        ));
    }
    let year = fiscal_start.first_day()..=last.last_day();
    if let Some(c) = ds.ownership_changes.iter().find(|c| c.owned == e.id && year.contains(&c.date)) {
        out.push(unsupported(format!(
            "its ownership changes on {}, and the change would have to be measured on restated amounts",
            c.date
        )));
    }
    let month = acquisition_month(a);
    if !ds.price_indices.iter().any(|x| x.currency == e.currency && x.period == month) {
        out.push(
            Finding::new(
                Rule::PriceIndexMissing,
                format!(
                    "{} is hyperinflationary and acquired on {}: its equity at acquisition, goodwill and fair value adjustments are restated from the {} price index at the end of {month} (IAS 29.24-25), and rates/price_index.csv has none",
                    e.id,
                    a.date,
                    e.currency.code()
                ),
                format!(
                    "add `{},{month},<index>` to rates/price_index.csv (IAS 29.37: a general price index)",
                    e.currency.code()
                ),
            )
            .in_file("rates/price_index.csv")
            .entity(&e.id)
            .period(month),
        );
    }
    out
}

/// `accounts.net_monetary_position` is needed by a hyperinflationary entity and must be
/// a profit or loss account (IAS 29.28).
fn nmp_account_finding(ds: &Dataset) -> Option<Finding> {
    let bad = |msg: String| {
        Finding::new(
            Rule::SettingInvalid,
            msg,
            "name a profit or loss account of the chart as `net_monetary_position` under [accounts] in entities/group.toml (IAS 29.28)",
        )
        .in_file("entities/group.toml")
    };
    match ds.settings.accounts.net_monetary_position.as_ref() {
        None => Some(bad(
            "`accounts.net_monetary_position`: missing; a hyperinflationary entity's gain or loss on its net monetary position needs an account".into(),
        )),
        Some(a) => match ds.account(a) {
            Some(d) if d.statement == Statement::ProfitOrLoss => None,
            Some(_) => Some(bad(format!("`accounts.net_monetary_position`: {a} is not a profit or loss account"))),
            None => Some(bad(format!("`accounts.net_monetary_position`: {a} is not in the chart"))),
        },
    }
}

/// The group accounts `e`'s trial balances use up to month `end`.
fn used_accounts(mapped: &crate::map_accounts::Mapped, e: &Entity, end: i32) -> PolarsResult<Vec<String>> {
    let used = mapped
        .lines
        .clone()
        .lazy()
        .filter(col("entity").eq(lit(e.id.as_str())).and(col("period_index").lt_eq(lit(end))))
        .select([col("group_account")])
        .unique(None, UniqueKeepStrategy::Any)
        .collect()?;
    Ok(column_strings(&used, "group_account")?.into_iter().flatten().collect())
}

/// The intercompany accounts a hyperinflationary entity uses that the chart makes
/// non-monetary (an advance for goods or services, say; IAS 29.12-15), a warning: the
/// entity's side is restated and the counterparty's is not, so the two sides agree in
/// the transaction currency and differ once translated by the restatement, which
/// matching classifies as `fx` and the close posts to the intercompany difference account
/// in profit or loss (where it offsets the smaller loss on the net monetary position the
/// restatement gave the entity). Monetary intercompany items are not restated (IAS
/// 29.12) and match as they are. Investments are eliminated against equity, not matched.
fn intercompany_restated(
    ds: &Dataset,
    mapped: &crate::map_accounts::Mapped,
    hyper: &[(&Entity, i32, i32)],
) -> PolarsResult<Vec<Finding>> {
    let mut out = Vec::new();
    let restated: Vec<&AccountDef> = ds
        .accounts
        .iter()
        .filter(|a| {
            a.ic_kind.as_deref().is_some_and(|k| k != "investment")
                && matches!(a.class, AccountClass::Asset | AccountClass::Liability)
                && a.monetary == Some(false)
        })
        .collect();
    if restated.is_empty() {
        return Ok(out);
    }
    for (e, base, end) in hyper {
        let used = used_accounts(mapped, e, *end)?;
        for a in restated.iter().filter(|a| used.iter().any(|u| u == a.account.as_str())) {
            out.push(
                Finding::new(
                    Rule::IntercompanyItemRestated,
                    format!(
                        "{} is hyperinflationary from {}, and the intercompany account {} ({}) is not monetary: {}'s side is restated (IAS 29.15) and its counterparty's is not, so the pair differs by the restatement once translated; matching shows it as `fx` and the close posts it to the intercompany difference account",
                        e.id,
                        period_of_index(*base + 1),
                        a.account,
                        a.name,
                        e.id,
                    ),
                    "if the item is to be received or paid in money, write `true` in the `monetary` column of entities/accounts.csv (IAS 29.12); an advance for goods or services is non-monetary and its difference is the restatement, not an exchange difference",
                )
                .at(&a.source)
                .entity(&e.id)
                .account(a.account.to_string()),
            );
        }
    }
    Ok(out)
}

/// The asset and liability accounts a hyperinflationary entity uses in the close's
/// months that the chart does not classify as monetary or not (IAS 29.12-14).
fn unclassified(
    ds: &Dataset,
    mapped: &crate::map_accounts::Mapped,
    hyper: &[(&Entity, i32, i32)],
) -> PolarsResult<Vec<Finding>> {
    let mut out = Vec::new();
    let open: Vec<&AccountDef> = ds
        .accounts
        .iter()
        .filter(|a| matches!(a.class, AccountClass::Asset | AccountClass::Liability) && a.monetary.is_none())
        .collect();
    if hyper.is_empty() || open.is_empty() {
        return Ok(out);
    }
    for (e, base, end) in hyper {
        let used = used_accounts(mapped, e, *end)?;
        for a in open.iter().filter(|a| used.iter().any(|u| u == a.account.as_str())) {
            out.push(
                Finding::new(
                    Rule::MonetaryClassMissing,
                    format!(
                        "{} is hyperinflationary from {}, and the chart does not say whether {} ({}) is a monetary item: its restatement (IAS 29.12-14) is unknown",
                        e.id,
                        period_of_index(*base + 1),
                        a.account,
                        a.name,
                    ),
                    "write `true` (money, amounts to be received or paid in money) or `false` in the `monetary` column of entities/accounts.csv",
                )
                .at(&a.source)
                .entity(&e.id)
                .account(a.account.to_string()),
            );
        }
    }
    Ok(out)
}

#[cfg(test)]
mod tests {
    //! Figures worked by hand from IAS 29.12 (monetary items kept), 29.15-19 and 29.25
    //! (non-monetary items and equity restated from the start of the period), 29.26
    //! (income and expenses from the month recorded) and 29.27-28 (the net monetary
    //! position as the balancing gain or loss).
    use super::*;

    fn d(s: &str) -> Decimal {
        s.parse().unwrap()
    }

    fn g(account: &str) -> Grain {
        ("S".into(), account.into(), None, None)
    }

    /// Monetary: cash 1000, borrowings 2100; the rest is non-monetary.
    fn item(a: &str) -> Item {
        if a == "1000" || a == "2100" { Item::Monetary } else { Item::NonMonetary }
    }

    fn moves(rows: &[(&str, i32, &str)]) -> BTreeMap<Grain, BTreeMap<i32, Decimal>> {
        let mut m: BTreeMap<Grain, BTreeMap<i32, Decimal>> = BTreeMap::new();
        for (a, p, x) in rows {
            *m.entry(g(a)).or_default().entry(*p).or_default() += d(x);
        }
        m
    }

    fn balance(r: &BTreeMap<Grain, BTreeMap<i32, Decimal>>, a: &str, p: i32) -> Decimal {
        r[&g(a)].range(..=p).map(|(_, x)| *x).sum()
    }

    /// Month 0 is the opening (index 100), then 110 and 121. Opening: cash 1,000, land
    /// 2,000, borrowings (1,500), share capital (1,000), retained earnings (500). Month 1:
    /// a cash sale of 330; month 2: an expense of 242 paid in cash.
    fn example() -> (BTreeMap<Grain, BTreeMap<i32, Decimal>>, BTreeMap<i32, Decimal>) {
        let m = moves(&[
            ("1000", 0, "1000"),
            ("1200", 0, "2000"),
            ("2100", 0, "-1500"),
            ("3000", 0, "-1000"),
            ("3200", 0, "-500"),
            ("1000", 1, "330"),
            ("4000", 1, "-330"),
            ("1000", 2, "-242"),
            ("5000", 2, "242"),
        ]);
        let index = BTreeMap::from([(0, d("100")), (1, d("110")), (2, d("121"))]);
        (m, index)
    }

    #[test]
    fn restates_non_monetary_items_equity_and_income_and_balances_on_the_net_monetary_position() {
        let (m, index) = example();
        let plan = Plan { base: 0, last: 2, index: &index, minor: 2, mode: RoundingMode::HalfAwayFromZero };
        let r = restate_entity(&m, &item, &plan, &g("6900"));
        // End of month 2 (index 121): monetary items at their amount (IAS 29.12).
        assert_eq!(balance(&r, "1000", 2), d("1088"));
        assert_eq!(balance(&r, "2100", 2), d("-1500"));
        // Land and equity x 121/100 (IAS 29.15, 29.25).
        assert_eq!(balance(&r, "1200", 2), d("2420"));
        assert_eq!(balance(&r, "3000", 2), d("-1210"));
        assert_eq!(balance(&r, "3200", 2), d("-605"));
        // The sale of month 1 x 121/110, the expense of month 2 x 121/121 (IAS 29.26).
        assert_eq!(balance(&r, "4000", 2), d("-363"));
        assert_eq!(balance(&r, "5000", 2), d("242"));
        // Net monetary liability of 500 through month 1 at 10%: 50 in month 1's unit,
        // 55 in month 2's; 170 through month 2 at 10%: 17. Gain 72 (a credit).
        assert_eq!(balance(&r, "6900", 1), d("-50"));
        assert_eq!(balance(&r, "6900", 2), d("-72"));
        // Month 1 (index 110): land 2,200, the sale as recorded.
        assert_eq!(balance(&r, "1200", 1), d("2200"));
        assert_eq!(balance(&r, "4000", 1), d("-330"));
        // The opening month is not restated (IAS 21.42(b): comparatives as presented).
        assert_eq!(balance(&r, "1200", 0), d("2000"));
        for p in 0..=2 {
            let total: Decimal = r.keys().map(|k| balance(&r, &k.1, p)).sum();
            assert_eq!(total, Decimal::ZERO, "restated trial balance of month {p}");
        }
    }

    #[test]
    fn rounds_each_restated_balance_once_and_the_net_monetary_position_takes_the_residue() {
        // Two plots of land of 1,000 each and equity (2,000), index 3 then 7: each plot
        // 2,333.333... -> 2,333.33, equity (4,666.666...) -> (4,666.67). Nothing is
        // monetary, so the position's 0.01 is the rounding residue and nothing else.
        let m = moves(&[("1200", 0, "1000"), ("1300", 0, "1000"), ("3000", 0, "-2000")]);
        let index = BTreeMap::from([(0, d("3")), (1, d("7"))]);
        let plan = Plan { base: 0, last: 1, index: &index, minor: 2, mode: RoundingMode::HalfAwayFromZero };
        let r = restate_entity(&m, &item, &plan, &g("6900"));
        assert_eq!(balance(&r, "1200", 1), d("2333.33"));
        assert_eq!(balance(&r, "1300", 1), d("2333.33"));
        assert_eq!(balance(&r, "3000", 1), d("-4666.67"));
        assert_eq!(balance(&r, "6900", 1), d("0.01"));
    }

    #[test]
    fn amounts_before_the_base_month_are_restated_from_the_base() {
        // Hyperinflation begins in month 2: the base is month 1. The sale of month 1
        // counts as recorded at the base; the index of month 0 is not needed.
        let m = moves(&[("1000", 0, "100"), ("3000", 0, "-100"), ("1000", 1, "50"), ("4000", 1, "-50")]);
        let index = BTreeMap::from([(1, d("200")), (2, d("300"))]);
        let plan = Plan { base: 1, last: 2, index: &index, minor: 2, mode: RoundingMode::HalfAwayFromZero };
        let r = restate_entity(&m, &item, &plan, &g("6900"));
        assert_eq!(balance(&r, "4000", 1), d("-50"), "month 1 is before hyperinflation");
        assert_eq!(balance(&r, "4000", 2), d("-75"));
        assert_eq!(balance(&r, "3000", 2), d("-150"));
        // Net monetary asset 150 held while prices rose by half: a loss of 75.
        assert_eq!(balance(&r, "6900", 2), d("75"));
    }

    #[test]
    fn the_restated_months_run_from_the_later_of_the_year_start_and_hyperinflation() {
        let p = |s: &str| s.parse::<Period>().unwrap();
        let mut e = Entity {
            id: EntityId::new("S"),
            name: String::new(),
            country: String::new(),
            currency: Currency::parse("ARS").unwrap(),
            segments: Vec::new(),
            hyperinflationary_from: Some(p("2025-06")),
            source: Source::line("entities/entities.csv", 2),
        };
        let (start, last) = (p("2026-01"), p("2026-03"));
        assert_eq!(months(&e, start, last), Some((period_index(p("2025-12")), period_index(last))));
        e.hyperinflationary_from = Some(p("2026-03"));
        assert_eq!(months(&e, start, last), Some((period_index(p("2026-02")), period_index(last))));
        e.hyperinflationary_from = Some(p("2026-04"));
        assert_eq!(months(&e, start, last), None);
        e.hyperinflationary_from = None;
        assert_eq!(months(&e, start, last), None);
    }

    #[test]
    fn acquisition_amounts_are_restated_from_the_month_before_control() {
        let date = |s: &str| chrono::NaiveDate::parse_from_str(s, "%Y-%m-%d").unwrap();
        let mut a = Acquisition {
            owned: EntityId::new("S"),
            date: date("2025-07-01"),
            consideration: d("1600"),
            nci_measurement: NciMeasurement::ShareOfNetAssets,
            nci_fair_value: None,
            net_assets: d("1600"),
            net_assets_presentation: d("320"),
            impairment: Decimal::ZERO,
            impairment_year: Decimal::ZERO,
            fair_value_adjustment: Decimal::ZERO,
            fair_value_account: None,
            source: Source::line("entities/acquisitions.csv", 2),
        };
        // Control from July: the group's months begin there, the index is June's.
        assert_eq!(acquisition_month(&a), "2025-06".parse().unwrap());
        a.date = date("2025-07-31");
        assert_eq!(acquisition_month(&a), "2025-06".parse().unwrap());
        // Index 80 at acquisition, 100 at the opening, 120 now (IAS 29.24-25).
        let u = AcquisitionUnit { then: d("80"), now: d("120"), opening: Some(d("100")) };
        let half = RoundingMode::HalfAwayFromZero;
        assert_eq!(u.now(d("1600"), 2, half), d("2400"));
        assert_eq!(u.opening(d("1600"), 2, half), d("2000"));
        assert_eq!(u.back_to_opening(d("480")), d("400"));
        // Not yet hyperinflationary at the opening: the opening carried the amount as
        // recorded.
        let later = AcquisitionUnit { opening: None, ..u };
        assert_eq!(later.opening(d("1600"), 2, half), d("1600"));
        assert_eq!(later.back_to_opening(d("2400")), d("1600"));
        // Rounded once, in the functional currency: 1 x 7/3 = 2.333... -> 2.33; JPY 0.
        let odd = AcquisitionUnit { then: d("3"), now: d("7"), opening: None };
        assert_eq!(odd.now(d("1"), 2, half), d("2.33"));
        assert_eq!(odd.now(d("1"), 0, half), d("2"));
    }

    /// The case `hyperinflationary-subsidiary-acquired-ias29` (S in ARS, hyperinflationary
    /// from 2025-01, acquired 2025-07-01; index 80 at 2025-06, 100 at 2025-12, 120 at
    /// 2026-02) loaded, then broken one way at a time.
    #[test]
    fn an_acquired_subsidiary_is_restated_and_what_is_not_supported_blocks() {
        let dir = std::path::Path::new(env!("CARGO_MANIFEST_DIR"))
            .join("tests/cases/hyperinflationary-subsidiary-acquired-ias29");
        let (ds, found) = crate::load::load(&dir);
        let mut ds = ds.unwrap_or_else(|| panic!("{found:?}"));
        let p = |s: &str| s.parse::<Period>().unwrap();
        let s = EntityId::new("S");
        let units = acquisition_units(&ds, p("2026-02"), p("2026-01"));
        assert_eq!(units.get(&s), Some(&AcquisitionUnit { then: d("80"), now: d("120"), opening: Some(d("100")) }));
        let full = |_: &EntityId| Some(Method::Full);
        let e = ds.entity(&s).unwrap().clone();
        let rules_of = |ds: &Dataset, e: &Entity, m: &dyn Fn(&EntityId) -> Option<Method>| -> Vec<Rule> {
            acquisition_findings(ds, e, (p("2026-01"), p("2026-02")), m).iter().map(|f| f.rule).collect()
        };
        let rules = |ds: &Dataset, m: &dyn Fn(&EntityId) -> Option<Method>| rules_of(ds, &e, m);
        assert_eq!(rules(&ds, &full), []);
        let equity = |_: &EntityId| Some(Method::Equity);
        assert_eq!(rules(&ds, &equity), [Rule::RestatementUnsupported]);
        ds.acquisitions[0].impairment = d("10");
        assert_eq!(rules(&ds, &full), [Rule::RestatementUnsupported]);
        ds.acquisitions[0].impairment = Decimal::ZERO;
        // Acquired in the year (its month's index, 2026-01's, is there): supported when
        // the whole year is restated.
        let july = ds.acquisitions[0].date;
        ds.acquisitions[0].date = chrono::NaiveDate::from_ymd_opt(2026, 2, 1).unwrap();
        assert_eq!(rules(&ds, &full), []);
        ds.acquisitions[0].date = july;
        // Hyperinflation beginning after the year's first month blocks, whenever the
        // entity was acquired: its own equity is restated from then only.
        let later = Entity { hyperinflationary_from: Some(p("2026-02")), ..e.clone() };
        assert_eq!(rules_of(&ds, &later, &full), [Rule::RestatementUnsupported]);
        let at_the_start = Entity { hyperinflationary_from: Some(p("2026-01")), ..e.clone() };
        assert_eq!(rules_of(&ds, &at_the_start, &full), []);
        // Without the acquisition month's index nothing is restated, and the close blocks.
        ds.price_indices.retain(|x| x.period != p("2025-06"));
        assert_eq!(rules(&ds, &full), [Rule::PriceIndexMissing]);
        assert!(acquisition_units(&ds, p("2026-02"), p("2026-01")).is_empty());
        // Hyperinflationary from 2026-01, the year's start: the opening (2025-12) carried
        // the acquisition as recorded.
        ds.price_indices.push(PriceIndex {
            currency: e.currency,
            period: p("2025-06"),
            index: d("80"),
            source: Source::file("rates/price_index.csv"),
        });
        ds.entities.iter_mut().filter(|x| x.id == s).for_each(|x| x.hyperinflationary_from = Some(p("2026-01")));
        let units = acquisition_units(&ds, p("2026-02"), p("2026-01"));
        assert_eq!(units.get(&s).map(|u| u.opening), Some(None));
        assert!(acquisition_units(&ds, p("2025-12"), p("2026-01")).is_empty(), "not yet hyperinflationary");
    }
}

//! Rule `pre_acquisition_results`: the results a subsidiary made in this fiscal year
//! before the group obtained control belong to the equity acquired (IFRS 10.B88), not to
//! the group's profit; they are moved from income and expense (translation difference
//! included) into pre-acquisition retained earnings, which the investment entry then
//! eliminates.
//!
//! A hyperinflationary subsidiary's results before control are, in the close, restated
//! into the unit of the period end and at its closing rate like the rest of its figures
//! (IAS 29.26, IAS 21.42(a)), not as the month end before control showed them: the
//! amounts moved are that month end's restated balances, restated on by the index since
//! it ([`restated`]).

use std::collections::BTreeMap;

use chrono::NaiveDate;
use polars::prelude::*;
use rust_decimal::Decimal;

use super::aggregate::{Balances, EntityBalances};
use super::context::Context;
use super::journal::{EliminationRule, Journal, line};
use crate::map_accounts::period_index;
use crate::model::{EntityId, GroupAccount, Method, Period};
use crate::money::{self, column_decimals};
use crate::restate::AcquisitionUnit;
use crate::structure::EntityStructure;
use crate::translate::Translated;

/// The subsidiaries that came under control during this fiscal year, up to the period:
/// each with its control date and the month end before it, whose balances hold its
/// results before control.
pub fn acquired_this_year<'a>(cx: &Context<'a>) -> Vec<(&'a EntityStructure, NaiveDate, Period)> {
    cx.of_method(Method::Full)
        .filter_map(|e| {
            let from = e.controlled_from?;
            let control_month = Period::of_date(from);
            (control_month > cx.fiscal_start && control_month <= cx.period).then(|| (e, from, control_month.prev()))
        })
        .collect()
}

/// Posts one entry per subsidiary acquired this year, from the balances at the month
/// end before its control month (`before`, one aggregate per month).
pub fn post(j: &mut Journal, cx: &Context, before: &BTreeMap<Period, Balances>) {
    let none = EntityBalances::new();
    for (e, from, month) in acquired_this_year(cx) {
        let own = before.get(&month).and_then(|b| b.get(&e.id)).unwrap_or(&none);
        let mut lines = Vec::new();
        let mut total = Decimal::ZERO;
        for ((acct, cp), amount) in own {
            if cx.is_flow(acct) {
                lines.push(line(acct, &e.id, cp.as_ref(), -*amount));
                total += *amount;
            }
        }
        lines.push(line(&cx.roles.retained_earnings, &e.id, None, total));
        j.post(
            EliminationRule::PreAcquisitionResults,
            cx.parent_of(e),
            vec![e.id.clone()],
            format!("results of {} before control on {from} moved into equity at acquisition", e.id),
            lines,
        );
    }
}

/// `before` with each hyperinflationary subsidiary acquired this year (one with a unit in
/// `units`) in the unit of the period end: every line of its balances at the month end
/// before control that the translated lines hold in its currency (its results, restated
/// into that month's unit by `restate`) is restated on by the index since that month
/// (the acquisition month of `units`, index `then`) to the period's (`now`), rounded once
/// in its currency, and taken at the period's closing rate (IAS 29.26, IAS 21.42(a)). Its
/// translation difference before control, an amount of the presentation currency that
/// the later months leave as it was, is moved as it stands.
pub fn restated(
    cx: &Context,
    t: &Translated,
    units: &BTreeMap<EntityId, AcquisitionUnit>,
    before: &BTreeMap<Period, Balances>,
) -> PolarsResult<BTreeMap<Period, Balances>> {
    let mut out = before.clone();
    for (e, _, month) in acquired_this_year(cx) {
        let (Some(unit), Some(fc)) = (units.get(&e.id), cx.currencies.get(&e.id).copied()) else { continue };
        let Some(own) = out.get_mut(&month).and_then(|b| b.get_mut(&e.id)) else { continue };
        let local = local_balances(t, &e.id, month)?;
        for (key, amount) in own.iter_mut() {
            if let Some(x) = local.get(key) {
                let now = unit.now(*x, fc.minor_unit(), cx.mode);
                *amount = cx.at_closing(fc, now, cx.period).unwrap_or_default();
            }
        }
    }
    Ok(out)
}

/// One entity's balances in its own currency at the end of `month`, by group account and
/// counterparty, from the translated lines (restated where it is hyperinflationary).
fn local_balances(
    t: &Translated,
    e: &EntityId,
    month: Period,
) -> PolarsResult<BTreeMap<(GroupAccount, Option<EntityId>), Decimal>> {
    let df = t
        .lines
        .clone()
        .lazy()
        .filter(col("entity").eq(lit(e.as_str())).and(col("period_index").eq(lit(period_index(month)))))
        .group_by([col("group_account"), col("counterparty")])
        .agg([col("balance_local").sum()])
        .collect()?;
    let acct = money::column_strings(&df, "group_account")?;
    let cp = money::column_strings(&df, "counterparty")?;
    let bal = column_decimals(df.column("balance_local")?)?;
    Ok((0..df.height())
        .filter_map(|i| {
            let a = acct[i].as_ref()?;
            Some(((GroupAccount::new(a), cp[i].as_ref().map(EntityId::new)), bal[i].unwrap_or_default()))
        })
        .collect())
}

/// The month ends whose balances [`post`] reads.
pub fn months_needed(cx: &Context) -> Vec<Period> {
    acquired_this_year(cx).into_iter().map(|(_, _, m)| m).collect()
}

#[cfg(test)]
mod tests {
    use super::super::context::fixture::*;
    use super::*;

    /// S is bought on 15 April 2026 (fiscal year from January). At 31 March its books
    /// show revenue 100 (a credit, -100) and cost of sales 60: a profit of 40 made
    /// before control. The entry reverses both (4000 +100, 5000 -60) and credits the 40
    /// to retained earnings at acquisition (3200 -40); 100 - 60 - 40 = 0.
    #[test]
    fn results_before_control_move_into_equity() {
        let w = World::new(&["P", "S"], &[holding("P", "S", "0.8", "2026-04-15")], p("2026-06"));
        let cx = w.context(p("2026-06"), p("2026-01"), Balances::new());
        let before =
            BTreeMap::from([(p("2026-03"), balances(&[("S", "4000", None, "-100"), ("S", "5000", None, "60")]))]);
        let mut j = Journal::default();
        post(&mut j, &cx, &before);
        assert_eq!(j.entries.len(), 1);
        let e = &j.entries[0];
        assert_eq!((e.rule, e.posted_at.as_str()), (EliminationRule::PreAcquisitionResults, "P"));
        assert_eq!(
            lines(e),
            [
                ("4000".into(), "S".into(), "100".into()),
                ("5000".into(), "S".into(), "-60".into()),
                ("3200".into(), "S".into(), "-40".into())
            ]
        );
        assert_eq!(months_needed(&cx), [p("2026-03")]);
    }

    /// Bought before the fiscal year (or after the period): nothing to move.
    #[test]
    fn acquisitions_outside_the_year_post_nothing() {
        let w = World::new(&["P", "S"], &[holding("P", "S", "0.8", "2025-06-01")], p("2026-06"));
        let cx = w.context(p("2026-06"), p("2026-01"), Balances::new());
        assert!(acquired_this_year(&cx).is_empty());
    }

    /// S, hyperinflationary, is bought on 1 February 2026 (the acquisition month is
    /// January, index 125; February's index is 150). January's restated results in its
    /// own currency: revenue 250 (a credit) and a loss of 100 on the net monetary
    /// position; its translation difference to January, EUR 0.50, is a presentation
    /// amount. Restated on by 150/125 and at February's 0.06 EUR per unit (IAS 29.26, IAS
    /// 21.42(a)): revenue -300 x 0.06 = -18.00, the loss 120 x 0.06 = 7.20; the
    /// difference stays 0.50. The entry: 4000 +18, 5100 -7.20, 9000 -0.50 and retained
    /// earnings -10.30; 18 - 7.20 - 0.50 - 10.30 = 0. Worked by hand
    /// (tests/cases/hyperinflationary-subsidiary-acquired-mid-year-ias29 has the same
    /// restatement). Without a unit the balances are as January showed them.
    #[test]
    fn a_hyperinflationary_subsidiarys_results_before_control_are_restated_on() {
        let w = World::new(&["P", "S"], &[holding("P", "S", "0.75", "2026-02-01")], p("2026-02"));
        let mut cx = w.context(p("2026-02"), p("2026-01"), Balances::new());
        let usd = crate::model::Currency::parse("USD").unwrap_or_else(|| panic!("USD"));
        let rate = crate::load::Rate { value: d("0.06"), quote: crate::load::Quote::PresentationPerUnit };
        cx.closing.insert((usd, p("2026-02")), rate);
        let january = period_index(p("2026-01"));
        let dt = crate::money::amount_dtype();
        let rows = DataFrame::new(
            2,
            vec![
                Column::new("entity".into(), ["S", "S"]),
                Column::new("group_account".into(), ["4000", "5100"]),
                Column::new("counterparty".into(), [None::<&str>, None]),
                Column::new("period_index".into(), [january, january]),
                Column::new("balance_local".into(), ["-250.000", "100.000"]).strict_cast(&dt).unwrap(),
            ],
        )
        .unwrap();
        let t = Translated {
            lines: rows,
            differences: DataFrame::empty(),
            explanations: Vec::new(),
            minor: 2,
            fiscal_start: p("2026-01"),
        };
        let before = BTreeMap::from([(
            p("2026-01"),
            balances(&[("S", "4000", None, "-20.00"), ("S", "5100", None, "8.00"), ("S", "9000", None, "0.50")]),
        )]);
        let unit = AcquisitionUnit { then: d("125"), now: d("150"), opening: Some(d("100")) };
        let units = BTreeMap::from([(id("S"), unit)]);
        let mut j = Journal::default();
        post(&mut j, &cx, &restated(&cx, &t, &units, &before).unwrap());
        assert_eq!(
            lines(&j.entries[0]),
            [
                ("4000".into(), "S".into(), "18".into()),
                ("5100".into(), "S".into(), "-7.2".into()),
                ("9000".into(), "S".into(), "-0.5".into()),
                ("3200".into(), "S".into(), "-10.3".into())
            ]
        );
        assert_eq!(restated(&cx, &t, &BTreeMap::new(), &before).unwrap(), before);
    }
}

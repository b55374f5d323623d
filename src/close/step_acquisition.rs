//! Rule `step_acquisition`: control obtained in stages (IFRS 3.41-42). The interest the
//! group held before control is remeasured to its fair value at the acquisition date
//! and the gain or loss is recognised in profit or loss.
//!
//! The investment entry (`investment.rs`) eliminates the holder's investment, which
//! carries the interest held before at its carrying amount, against goodwill measured
//! with that interest at fair value (IFRS 3.32): the difference between the two is left
//! in the entry's residual, the translation reserve. This rule takes exactly that
//! difference back out of the reserve and recognises it: on the row's `gain_account` in
//! the fiscal year of the acquisition, in retained earnings in the years after (the
//! gain of an earlier year is part of the equity brought forward).
//!
//! An associate (or joint venture) that becomes a subsidiary is equity-accounted to the
//! month end before the month of control and consolidated in full from that month, the
//! month rule of `pre_acquisition.rs` (control on 1 or 15 April: the equity method to
//! 31 March, April consolidated whole; `ownership::last_controlled_month` gives the
//! month end). [`associate_before`] runs the close at that month end and keeps the
//! equity method's lines about the associate. In the fiscal year of control the entry
//! carries them (the share of profit to that month end, of OCI, of earlier years), so
//! the carrying amount remeasured is the equity-method one: cost plus the share since
//! significant influence (IFRS 3.42); and it reclassifies the investor's share of the
//! associate's OCI as if the interest were disposed of (IAS 28.22(c)): the translation
//! reserve part to profit or loss through OCI of the year (IAS 1.92-93), on the row's
//! `gain_account`. In the years after, the same amounts are all in retained earnings:
//! the entry is that of an investment held before.
//!
//! Which rows reach here is decided by `ownership` (an investment or an associate held
//! before, by one holder in the presentation currency without NCI of its own); the
//! rest is blocking.

use std::collections::BTreeMap;

use polars::prelude::PolarsResult;
use rust_decimal::Decimal;

use super::context::Context;
use super::investment::Investments;
use super::journal::{EliminationRule, EntryLine, Journal, line};
use crate::load::Dataset;
use crate::model::*;
use crate::money;
use crate::translate::Translated;

/// An associate that becomes a subsidiary, as the equity method left it at the month
/// end before the month of control.
#[derive(Debug, Clone)]
pub struct AssociateBefore<'a> {
    pub change: &'a OwnershipChange,
    /// The month end the equity method runs to.
    pub last_month: Period,
    /// The lines of that close's equity method entries naming the associate (its
    /// investment line included).
    pub lines: Vec<EntryLine>,
}

/// Runs the close at the month end before the month of control in `change`, on the
/// structure of that day (the associate equity-accounted), and keeps the equity
/// method's lines about the associate.
pub fn associate_before<'a>(
    ds: &Dataset,
    t: &Translated,
    change: &'a OwnershipChange,
) -> PolarsResult<AssociateBefore<'a>> {
    let (last_month, _, then) = super::close_before_change(ds, t, change)?;
    let lines = then
        .journal
        .iter()
        .filter(|e| e.rule == EliminationRule::EquityMethod)
        .flat_map(|e| e.lines.iter())
        .filter(|l| l.counterparty.as_ref() == Some(&change.owned))
        .cloned()
        .collect();
    Ok(AssociateBefore { change, last_month, lines })
}

/// The equity method's figures of an associate before control, in the presentation
/// currency.
#[derive(Debug, Default, Clone, PartialEq, Eq)]
pub struct EquityShare {
    /// The share since significant influence, net of dividends and impairment: the
    /// equity-method carrying amount less cost.
    pub since: Decimal,
    /// The share of OCI in the translation reserve and in OCI of the year (a gain
    /// positive): what IAS 28.22(c) reclassifies to profit or loss.
    pub oci: Decimal,
    /// The lines carried into the entry: all but the investment.
    pub carried: Vec<EntryLine>,
}

/// Splits the equity method's lines about the associate.
pub fn equity_share(cx: &Context, lines: &[EntryLine]) -> EquityShare {
    let mut out = EquityShare::default();
    for l in lines {
        if l.account == cx.roles.equity_investments {
            out.since += l.amount;
            continue;
        }
        if l.account == cx.roles.translation_difference || l.account == cx.roles.translation_reserve {
            out.oci -= l.amount;
        }
        out.carried.push(l.clone());
    }
    out
}

/// The amounts of one step acquisition in the presentation currency.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct Remeasured {
    /// Fair value of the interest held before, at the acquisition date's rate.
    pub fair_value: Decimal,
    /// Its carrying amount: the holder's investment less the consideration and the
    /// costs of the shares bought on the date.
    pub carrying: Decimal,
    /// Transaction costs carried in the holder's investment, an expense in the group
    /// (IFRS 3.53).
    pub costs: Decimal,
}

impl Remeasured {
    /// The remeasurement gain (a loss when negative), IFRS 3.42.
    pub fn gain(&self) -> Decimal {
        self.fair_value - self.carrying
    }
}

/// The figures of one row against its acquisition record, at the acquisition date's
/// rate (`net_assets_presentation / net_assets`, multiplied before dividing so that
/// the amount rounds once, as the investment entry translates the equity acquired).
pub fn remeasure(cx: &Context, c: &OwnershipChange, a: &Acquisition, investment: Decimal) -> Remeasured {
    let at_hist = |x: Decimal| {
        if a.net_assets.is_zero() { cx.round(x) } else { cx.round(x * a.net_assets_presentation / a.net_assets) }
    };
    let costs = at_hist(c.costs);
    Remeasured {
        fair_value: at_hist(c.fair_value_held.unwrap_or_default()),
        carrying: investment - at_hist(c.consideration) - costs,
        costs,
    }
}

/// Posts one entry per step acquisition of a subsidiary consolidated in full;
/// `associates` holds the equity method before control of those that were associates,
/// for the steps of this fiscal year.
pub fn post(
    j: &mut Journal,
    cx: &Context,
    acquisitions: &[Acquisition],
    steps: &[&OwnershipChange],
    invest: &Investments,
    associates: &[AssociateBefore],
) {
    let acq: BTreeMap<(&EntityId, chrono::NaiveDate), &Acquisition> =
        acquisitions.iter().map(|a| ((&a.owned, a.date), a)).collect();
    let m = |x: Decimal| money::format_amount(x, cx.minor);
    for c in steps {
        let (Some(e), Some(a)) = (cx.structure.entity(&c.owned), acq.get(&(&c.owned, c.date))) else { continue };
        if !cx.full.contains(&c.owned) {
            continue;
        }
        let investment: Decimal =
            invest.get(&c.owned).into_iter().flatten().filter(|(h, _, _)| h == &c.holder).map(|(_, _, x)| *x).sum();
        let r = remeasure(cx, c, a, investment);
        // In the acquisition year the gain is profit of the year; later it is part of
        // the retained earnings brought forward.
        let this_year = Period::of_date(c.date) >= cx.fiscal_start;
        let account = if this_year { c.gain_account.as_ref() } else { Some(&cx.roles.retained_earnings) };
        // Without the account the finding of `ownership` blocks the close.
        let Some(account) = account else { continue };
        let associate = associates.iter().find(|x| x.change == *c).filter(|_| this_year);
        let share = associate.map(|x| equity_share(cx, &x.lines)).unwrap_or_default();
        // The gain against the equity-method carrying amount: cost plus the share since
        // significant influence, which the carried lines put back where the equity
        // method had it (IFRS 3.42).
        let gain = r.gain() - share.since;
        let mut lines = vec![
            line(&cx.roles.translation_reserve, &c.owned, None, r.gain() - r.costs),
            line(account, &c.holder, Some(&c.owned), -gain),
            line(account, &c.holder, Some(&c.owned), r.costs),
        ];
        lines.extend(share.carried.iter().cloned());
        // The share of OCI reclassified as if the interest were disposed of (IAS
        // 28.22(c)): out of OCI of the year (IAS 1.92-93), into profit or loss.
        lines.push(line(&cx.roles.translation_difference, &c.holder, Some(&c.owned), share.oci));
        lines.push(line(account, &c.holder, Some(&c.owned), -share.oci));
        let mut text = format!(
            "interest in {} held by {} before control on {} remeasured to fair value {} from {}",
            c.owned,
            c.holder,
            c.date,
            m(r.fair_value),
            m(r.carrying + share.since)
        );
        if let Some(x) = associate {
            text.push_str(&format!(
                " (cost {} + share since significant influence {}, equity method to {})",
                m(r.carrying),
                m(share.since),
                x.last_month
            ));
        }
        text.push_str(&format!(": gain {} (IFRS 3.42)", m(gain)));
        if associate.is_some() {
            text.push_str(&format!("; share of OCI {} reclassified to profit or loss (IAS 28.22(c))", m(share.oci)));
        }
        if !r.costs.is_zero() {
            text.push_str(&format!(", acquisition costs {} expensed (IFRS 3.53)", m(r.costs)));
        }
        j.post(EliminationRule::StepAcquisition, cx.parent_of(e), vec![c.holder.clone(), c.owned.clone()], text, lines);
    }
}

#[cfg(test)]
mod tests {
    use super::super::context::fixture::*;
    use super::super::investment;
    use super::*;

    fn change(fair_value: &str, costs: &str) -> OwnershipChange {
        OwnershipChange {
            date: chrono::NaiveDate::from_ymd_opt(2026, 4, 1).unwrap_or_default(),
            holder: id("P"),
            owned: id("S"),
            share: d("0.6"),
            consideration: d("900"),
            fair_value_held: Some(d(fair_value)),
            costs: d(costs),
            gain_account: Some(acct("7300")),
            note: String::new(),
            source: Source::file("entities/ownership_changes.csv"),
        }
    }

    fn acquisition() -> Acquisition {
        Acquisition {
            owned: id("S"),
            date: chrono::NaiveDate::from_ymd_opt(2026, 4, 1).unwrap_or_default(),
            consideration: d("1200"),
            nci_measurement: NciMeasurement::ShareOfNetAssets,
            nci_fair_value: None,
            net_assets: d("1000"),
            net_assets_presentation: d("500"),
            impairment: Decimal::ZERO,
            impairment_year: Decimal::ZERO,
            fair_value_adjustment: Decimal::ZERO,
            fair_value_account: None,
            source: Source::file("entities/acquisitions.csv"),
        }
    }

    /// P held 10% of S (USD) at a cost of EUR 100 and buys 60% more on 1 April 2026 for
    /// USD 900 (EUR 450 at 2 USD per EUR, the rate of net assets USD 1,000 = EUR 500).
    /// The 10% is worth USD 300 = EUR 150 then. P's investment is 100 + 450 + 5 of
    /// costs = EUR 555. Carrying amount of the 10%: 555 - 450 - 5 = 100; gain 150 - 100
    /// = 50 (IFRS 3.42); the costs of 5 are an expense (IFRS 3.53). The investment
    /// entry left 150 - 100 - 5 = 45 in the reserve: the entry debits it, credits 50
    /// and debits 5 on 7300 (45 - 50 + 5 = 0).
    #[test]
    fn the_interest_held_before_is_remeasured_through_profit_or_loss() {
        let w = World::new(&["P", "S"], &[holding("P", "S", "0.7", "2026-04-01")], p("2026-06"));
        let cx = w.context(p("2026-06"), p("2026-01"), balances(&[("P", "1200", Some("S"), "555")]));
        let invest = investment::investments(&cx);
        let c = change("300", "10");
        let r = remeasure(&cx, &c, &acquisition(), d("555"));
        assert_eq!((r.fair_value, r.carrying, r.costs, r.gain()), (d("150"), d("100"), d("5"), d("50")));
        let mut j = Journal::default();
        post(&mut j, &cx, &[acquisition()], &[&c], &invest, &[]);
        assert_eq!(j.entries.len(), 1);
        assert_eq!(j.entries[0].rule, EliminationRule::StepAcquisition);
        assert_eq!(
            lines(&j.entries[0]),
            [
                ("3300".into(), "S".into(), "45".into()),
                ("7300".into(), "P".into(), "-50".into()),
                ("7300".into(), "P".into(), "5".into())
            ]
        );
    }

    /// The same step from an associate: P's 10% was equity-accounted to 31 March, and
    /// the equity method then left the investment 40 above cost: 20 of earlier years
    /// (14 in retained earnings, 6 of OCI in the reserve), 12 share of profit and 8
    /// share of OCI of the year. Carrying amount 100 + 40 = 140; gain 150 - 140 = 10 (IFRS 3.42). The
    /// entry carries the equity method's lines (but the investment, which the
    /// remeasurement replaces) and reclassifies the share of OCI 6 + 8 = 14 from OCI
    /// to profit or loss (IAS 28.22(c), IAS 1.92-93): 45 - 10 + 5 - 12 - 8 - 14 - 6 +
    /// 14 - 14 = 0.
    #[test]
    fn an_associate_is_remeasured_from_its_equity_method_carrying_amount() {
        let w = World::new(&["P", "S"], &[holding("P", "S", "0.7", "2026-04-01")], p("2026-06"));
        let cx = w.context(p("2026-06"), p("2026-01"), balances(&[("P", "1200", Some("S"), "555")]));
        let invest = investment::investments(&cx);
        let c = change("300", "10");
        let l = |a: &str, x: &str| line(&acct(a), &id("P"), Some(&id("S")), d(x));
        let before = AssociateBefore {
            change: &c,
            last_month: p("2026-03"),
            lines: vec![l("1300", "40"), l("4900", "-12"), l("9000", "-8"), l("3200", "-14"), l("3300", "-6")],
        };
        let share = equity_share(&cx, &before.lines);
        assert_eq!((share.since, share.oci, share.carried.len()), (d("40"), d("14"), 4));
        let mut j = Journal::default();
        post(&mut j, &cx, &[acquisition()], &[&c], &invest, std::slice::from_ref(&before));
        let s = |a: &str, e: &str, x: &str| (a.to_string(), e.to_string(), x.to_string());
        assert_eq!(
            lines(&j.entries[0]),
            [
                s("3300", "S", "45"),
                s("7300", "P", "-10"),
                s("7300", "P", "5"),
                s("4900", "P", "-12"),
                s("9000", "P", "-8"),
                s("3200", "P", "-14"),
                s("3300", "P", "-6"),
                s("9000", "P", "14"),
                s("7300", "P", "-14")
            ]
        );
        assert!(
            j.entries[0].description.contains("from 140.00 (cost 100.00 + share since significant influence 40.00")
        );
        // Closed in 2027 the same amounts are all in retained earnings: the entry is that
        // of an investment held before.
        let w = World::new(&["P", "S"], &[holding("P", "S", "0.7", "2026-04-01")], p("2027-03"));
        let cx = w.context(p("2027-03"), p("2027-01"), balances(&[("P", "1200", Some("S"), "550")]));
        let mut j = Journal::default();
        let c = change("300", "0");
        let before = AssociateBefore { change: &c, ..before };
        post(&mut j, &cx, &[acquisition()], &[&c], &investment::investments(&cx), &[before]);
        assert_eq!(lines(&j.entries[0]), [s("3300", "S", "50"), s("3200", "P", "-50")]);
    }

    /// The same acquisition closed in 2027: the gain was profit of 2026 and is in
    /// retained earnings now.
    #[test]
    fn a_later_year_takes_the_gain_to_retained_earnings() {
        let w = World::new(&["P", "S"], &[holding("P", "S", "0.7", "2026-04-01")], p("2027-03"));
        let cx = w.context(p("2027-03"), p("2027-01"), balances(&[("P", "1200", Some("S"), "550")]));
        let invest = investment::investments(&cx);
        let mut j = Journal::default();
        post(&mut j, &cx, &[acquisition()], &[&change("300", "0")], &invest, &[]);
        assert_eq!(
            lines(&j.entries[0]),
            [("3300".into(), "S".into(), "50".into()), ("3200".into(), "P".into(), "-50".into())]
        );
    }
}

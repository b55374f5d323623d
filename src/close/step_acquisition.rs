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
//! Which rows reach here is decided by `ownership` (an investment held before, by one
//! holder in the presentation currency without NCI of its own); the rest is blocking.

use std::collections::BTreeMap;

use rust_decimal::Decimal;

use super::context::Context;
use super::investment::Investments;
use super::journal::{EliminationRule, Journal, line};
use crate::model::*;
use crate::money;

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

/// Posts one entry per step acquisition of a subsidiary consolidated in full.
pub fn post(
    j: &mut Journal,
    cx: &Context,
    acquisitions: &[Acquisition],
    steps: &[&OwnershipChange],
    invest: &Investments,
) {
    let acq: BTreeMap<(&EntityId, chrono::NaiveDate), &Acquisition> =
        acquisitions.iter().map(|a| ((&a.owned, a.date), a)).collect();
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
        let lines = vec![
            line(&cx.roles.translation_reserve, &c.owned, None, r.gain() - r.costs),
            line(account, &c.holder, Some(&c.owned), -r.gain()),
            line(account, &c.holder, Some(&c.owned), r.costs),
        ];
        j.post(
            EliminationRule::StepAcquisition,
            cx.parent_of(e),
            vec![c.holder.clone(), c.owned.clone()],
            format!(
                "interest in {} held by {} before control on {} remeasured to fair value {} from {}: gain {} (IFRS 3.42){}",
                c.owned,
                c.holder,
                c.date,
                money::format_amount(r.fair_value, cx.minor),
                money::format_amount(r.carrying, cx.minor),
                money::format_amount(r.gain(), cx.minor),
                if r.costs.is_zero() {
                    String::new()
                } else {
                    format!(", acquisition costs {} expensed (IFRS 3.53)", money::format_amount(r.costs, cx.minor))
                }
            ),
            lines,
        );
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
        post(&mut j, &cx, &[acquisition()], &[&c], &invest);
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

    /// The same acquisition closed in 2027: the gain was profit of 2026 and is in
    /// retained earnings now.
    #[test]
    fn a_later_year_takes_the_gain_to_retained_earnings() {
        let w = World::new(&["P", "S"], &[holding("P", "S", "0.7", "2026-04-01")], p("2027-03"));
        let cx = w.context(p("2027-03"), p("2027-01"), balances(&[("P", "1200", Some("S"), "550")]));
        let invest = investment::investments(&cx);
        let mut j = Journal::default();
        post(&mut j, &cx, &[acquisition()], &[&change("300", "0")], &invest);
        assert_eq!(
            lines(&j.entries[0]),
            [("3300".into(), "S".into(), "50".into()), ("3200".into(), "P".into(), "-50".into())]
        );
    }
}

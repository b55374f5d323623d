//! Rule `change_in_stake`: more or less of a subsidiary bought or sold with control kept
//! (IFRS 10.23, B96): an equity transaction. No goodwill changes, no gain or loss; the
//! NCI is adjusted to its new share and the difference from the consideration goes to
//! the owners' equity.
//!
//! The rest of the close measures the subsidiary with the shares at the period end: the
//! investment entry takes its NCI at acquisition at today's outside share (so goodwill
//! moves with it) and leaves the consideration of the change in its residual, the
//! translation reserve; the NCI rule shares all post-acquisition equity at today's NCI.
//! Under NCI at its share of net assets the NCI balance that gives is the right one
//! (its new share of the net assets); this rule puts the rest right:
//!
//! - goodwill back to its amount at acquisition (NCI at acquisition at the outside
//!   share of the acquisition date, IFRS 3.19, 3.32), at the closing rate for a foreign
//!   subsidiary (IAS 21.47), its exchange difference of the year in OCI;
//! - the consideration out of the translation reserve, and the holder's own gain on
//!   shares sold out of profit or loss;
//! - the balance to retained earnings: the owners' side of the transaction
//!   (consideration less the NCI's carrying amount transferred, B96) and the NCI's
//!   share of the results before the change that the period-end share gave the owners;
//! - the NCI row: the NCI's share of profit at the old share to the last month end
//!   before the change (month granularity, as for a sale: `ownership`), at the new one
//!   after.
//!
//! Several changes of one subsidiary in the year are posted one by one, each measured
//! at the close of the last month end before it and from its share before to its share
//! after (the next change's share before, or the period end's): the goodwill moved and
//! the NCI's shares add up over the changes to what the period-end share needs.
//!
//! A foreign subsidiary's translation reserve is reattributed between the owners and
//! the NCI, never reclassified to profit or loss (IAS 21.48C): the NCI rule takes the
//! NCI's share of the subsidiary's exchange differences out of the reserve at the
//! period-end share (IAS 21.41), so after the change the owners' share is the new one,
//! and a later disposal reclassifies that share (IAS 21.48); the share that changed
//! hands is `StakeChange::reserve_reattributed`, on the change's row of the changes in
//! equity.
//!
//! Which changes reach here (a holder in the presentation currency, one holder,
//! partial goodwill, no intercompany items) is decided by `ownership`; the rest is
//! blocking.

use polars::prelude::*;
use rust_decimal::Decimal;

use super::NciRow;
use super::context::Context;
use super::investment::Investments;
use super::journal::{EliminationRule, Journal, line};
use crate::load::Dataset;
use crate::model::*;
use crate::money;
use crate::translate::Translated;

/// The subsidiary before the change, as the close at the last month end at the old
/// share shows it.
pub struct Before<'a> {
    pub change: &'a OwnershipChange,
    pub last_month: Period,
    /// The NCI share then.
    pub nci_share: Decimal,
    /// Its net assets in the group then (equity and the year's result, credit positive).
    pub net_assets: Decimal,
    /// Its profit and OCI of the year to then, credit positive.
    pub profit: Decimal,
    pub oci: Decimal,
    /// The holder's investment in it then.
    pub investment: Decimal,
    /// Its post-acquisition exchange differences then, debit positive (`nci.rs`).
    pub differences: Decimal,
}

/// What a change in stake did, for the statement of changes in equity.
#[derive(Debug, Clone, PartialEq, Eq, serde::Serialize)]
pub struct StakeChange {
    pub entity: EntityId,
    pub date: chrono::NaiveDate,
    /// The NCI's carrying amount transferred to the owners (negative when the NCI grows).
    pub nci_transferred: Decimal,
    /// The consideration: paid negative, received positive.
    pub cash: Decimal,
    /// The owners' gain in the translation reserve from the NCI's share of the
    /// subsidiary's exchange differences that changed hands (IAS 21.48C), credit
    /// positive: part of `cash + nci_transferred`, in the reserve's column.
    pub reserve_reattributed: Decimal,
}

/// Runs the close at the last month end before the change, on the structure of that day.
pub fn before<'a>(ds: &Dataset, t: &Translated, change: &'a OwnershipChange) -> PolarsResult<Before<'a>> {
    let (last_month, s, then) = super::close_before_change(ds, t, change)?;
    let nci_share = s.entity(&change.owned).map(|e| e.nci).unwrap_or_default();
    let e = &change.owned;
    let chart: std::collections::BTreeMap<&GroupAccount, &AccountDef> =
        ds.accounts.iter().map(|a| (&a.account, a)).collect();
    let statement = |a: &GroupAccount| chart.get(a).map(|d| (d.statement, d.class));
    let own = super::aggregate::balances(&then.contributions)?.remove(e).unwrap_or_default();
    let mut b = Before {
        change,
        last_month,
        nci_share,
        net_assets: Decimal::ZERO,
        profit: Decimal::ZERO,
        oci: Decimal::ZERO,
        investment: Decimal::ZERO,
        differences: then.differences.get(e).copied().unwrap_or_default(),
    };
    let mut add = |a: &GroupAccount, v: Decimal| match statement(a) {
        Some((Statement::ProfitOrLoss, _)) => b.profit -= v,
        Some((Statement::Oci, _)) => b.oci -= v,
        _ => {}
    };
    for ((a, _), v) in &own {
        add(a, *v);
    }
    // Results before control are not the group's (IFRS 10.B88).
    for x in then.journal.iter().filter(|x| x.rule == EliminationRule::PreAcquisitionResults) {
        for l in x.lines.iter().filter(|l| &l.entity == e) {
            add(&l.account, l.amount);
        }
    }
    b.net_assets = -own
        .iter()
        .filter(|((a, _), _)| {
            statement(a).is_some_and(|(st, c)| st != Statement::BalanceSheet || c == AccountClass::Equity)
        })
        .map(|(_, v)| *v)
        .sum::<Decimal>();
    b.investment = super::aggregate::balances(&then.contributions)?
        .remove(&change.holder)
        .unwrap_or_default()
        .iter()
        .filter(|((a, cp), _)| {
            cp.as_ref() == Some(e) && chart.get(a).and_then(|d| d.ic_kind.as_deref()) == Some("investment")
        })
        .map(|(_, v)| *v)
        .sum();
    Ok(b)
}

/// Posts the entry of one change in stake (`b`, with the next change of the subsidiary
/// in the year, if any) and corrects the subsidiary's NCI row.
pub fn post(
    j: &mut Journal,
    cx: &Context,
    acquisitions: &[Acquisition],
    holdings: &[Holding],
    (b, next): (&Before, Option<&Before>),
    invest: &Investments,
    nci: &mut Vec<NciRow>,
) -> Option<StakeChange> {
    let c = b.change;
    let (e, holder) = (&c.owned, &c.holder);
    let s = cx.structure.entity(e)?;
    let a = acquisitions.iter().rfind(|a| &a.owned == e && a.date < c.date)?;
    // Each change of the year moves goodwill by its own change of the outside share;
    // over the year's changes these add up to the acquisition's outside share less the
    // period end's, which the investment entry measured.
    let share_on = |day| crate::ownership::capital_share_on(holdings, holder, e, day);
    let outside_before = Decimal::ONE - share_on(c.date.pred_opt().unwrap_or(a.date));
    let outside_after = Decimal::ONE - share_on(c.date);
    // After this change and up to the next one of the year (or the period end).
    let nci_after = next.map_or(s.nci, |n| n.nci_share);
    let fc = cx.currencies.get(e).copied().unwrap_or(cx.presentation);
    let g = goodwill_moved(cx, a, fc, (goodwill_at(a, outside_before), goodwill_at(a, outside_after)))?;
    let investment_now: Decimal =
        invest.get(e).into_iter().flatten().filter(|(h, _, _)| h == holder).map(|(_, _, x)| *x).sum();
    let investment_change = next.map_or(investment_now, |n| n.investment) - b.investment;
    // The consideration is in the subsidiary's currency (ownership_changes.csv), at the
    // closing rate of the last month end at the old share, as for a sale (month
    // granularity; the holder keeps its books in the presentation currency).
    let consideration = cx.at_closing(fc, c.consideration, b.last_month)?;
    let cash = if c.share.is_sign_negative() { consideration } else { -consideration };
    // The holder's own gain on shares sold: the proceeds less the investment's carrying
    // amount sold (nothing for a purchase, whose price the investment carries).
    let own_gain = cash + investment_change;
    let nci_transferred = cx.round((b.nci_share - nci_after) * b.net_assets);
    // Goodwill at the closing rate (IAS 21.47): the part moved since the opening is the
    // year's exchange difference (OCI), the part before it sits in the reserve; the
    // consideration leaves the reserve where the investment entry left it. The NCI's
    // share of the operation's reserve follows its new share through the NCI rule,
    // which takes it at the period-end share: the reserve is reattributed, not
    // reclassified (IAS 21.48C).
    let mut lines = vec![
        line(&cx.roles.goodwill, e, None, g.closing),
        line(&cx.roles.translation_difference, e, None, g.opening - g.closing),
        line(&cx.roles.translation_reserve, e, None, g.historical - g.opening - investment_change),
    ];
    lines.retain(|l| !(l.amount.is_zero() && l.account == cx.roles.translation_difference));
    if let Some(acct) = &c.gain_account {
        lines.push(line(acct, holder, Some(e), own_gain));
    }
    let rest: Decimal = lines.iter().map(|l| l.amount).sum();
    lines.push(line(&cx.roles.retained_earnings, e, None, -rest));
    j.post(
        EliminationRule::ChangeInStake,
        holder.clone(),
        vec![holder.clone(), e.clone()],
        format!(
            "{holder} {} {} of {e} on {} for {}, control kept (IFRS 10.23, B96): NCI {} -> {}, its carrying amount {} transferred; goodwill at acquisition kept",
            if c.share.is_sign_negative() { "sells" } else { "buys" },
            c.share.abs().normalize(),
            c.date,
            money::format_amount(c.consideration, cx.minor),
            b.nci_share.normalize(),
            nci_after.normalize(),
            money::format_amount(nci_transferred, cx.minor)
        ),
        lines,
    );
    // The NCI's share of the results to the last month end at the old share.
    let extra_profit = cx.round((b.nci_share - nci_after) * b.profit);
    let extra_oci = cx.round((b.nci_share - nci_after) * b.oci);
    match nci.iter_mut().find(|r| &r.entity == e) {
        Some(r) => {
            r.profit += extra_profit;
            r.oci += extra_oci;
        }
        None => nci.push(NciRow {
            entity: e.clone(),
            nci_share: s.nci,
            profit: extra_profit,
            oci: extra_oci,
            equity: Decimal::ZERO,
        }),
    }
    // The NCI's share of the exchange differences to then that changed hands: the NCI
    // rule takes the NCI's share at the period-end share, so the owners' reserve gains
    // what the NCI gave up (IAS 21.48C), a credit for a gain.
    let reserve_reattributed = cx.round(-b.differences * (b.nci_share - nci_after));
    Some(StakeChange { entity: e.clone(), date: c.date, nci_transferred, cash, reserve_reattributed })
}

/// Goodwill in the subsidiary's currency with the NCI at acquisition at its share
/// `outside` of the net assets (IFRS 3.19, 3.32), after impairment, as the investment
/// entry measures it.
fn goodwill_at(a: &Acquisition, outside: Decimal) -> Decimal {
    a.consideration + outside * a.net_assets - a.net_assets - a.impairment
}

/// The goodwill a change in stake moves back towards its amount at acquisition, from
/// goodwill at the share after the change (`after_fc`, in the subsidiary's currency) to
/// goodwill at the share before it (`before_fc`), in the presentation currency: at the
/// acquisition date's rate, at the opening of the year (the acquisition date's rate
/// when acquired in the year) and at the closing rate. Each is the difference of the
/// two goodwill amounts translated whole, so that over the year's changes the pieces
/// telescope and the investment entry's goodwill (at the period end's share) plus them
/// is goodwill at acquisition translated with one rounding (IAS 21.47), not a sum of
/// pieces rounded each. One currency: three times the same amount.
struct Moved {
    historical: Decimal,
    opening: Decimal,
    closing: Decimal,
}

fn goodwill_moved(
    cx: &Context,
    a: &Acquisition,
    fc: Currency,
    (before_fc, after_fc): (Decimal, Decimal),
) -> Option<Moved> {
    let at_hist = |x: Decimal| {
        if fc == cx.presentation || a.net_assets.is_zero() {
            cx.round(x)
        } else {
            cx.round(x * a.net_assets_presentation / a.net_assets)
        }
    };
    let at = |p: Period| Some(cx.at_closing(fc, before_fc, p)? - cx.at_closing(fc, after_fc, p)?);
    let historical = at_hist(before_fc) - at_hist(after_fc);
    let opening = if Period::of_date(a.date) >= cx.fiscal_start { historical } else { at(cx.fiscal_start.prev())? };
    Some(Moved { historical, opening, closing: at(cx.period)? })
}

#[cfg(test)]
mod tests {
    use super::super::context::fixture::*;
    use super::super::investment;
    use super::*;

    /// The change, the acquisition and the subsidiary before it of the tests below. S
    /// keeps its books in USD (the fixture's rate: 2 USD per EUR). P bought 80% of S in
    /// 2021 for USD 800 (net assets USD 800, EUR 400 at 2; NCI at its share USD 160,
    /// goodwill USD 160) and buys 10% more on 1 March 2026 for USD 180 (EUR 90 at the
    /// 28 February rate), when S's net assets are EUR 700 and its profit of the year 100.
    fn purchase() -> (OwnershipChange, Acquisition) {
        let change = OwnershipChange {
            date: chrono::NaiveDate::from_ymd_opt(2026, 3, 1).unwrap_or_default(),
            holder: id("P"),
            owned: id("S"),
            share: d("0.1"),
            consideration: d("180"),
            fair_value_held: None,
            costs: Decimal::ZERO,
            gain_account: None,
            note: String::new(),
            source: Source::file("entities/ownership_changes.csv"),
        };
        let a = Acquisition {
            owned: id("S"),
            date: chrono::NaiveDate::from_ymd_opt(2021, 1, 1).unwrap_or_default(),
            consideration: d("800"),
            nci_measurement: NciMeasurement::ShareOfNetAssets,
            nci_fair_value: None,
            net_assets: d("800"),
            net_assets_presentation: d("400"),
            impairment: Decimal::ZERO,
            impairment_year: Decimal::ZERO,
            fair_value_adjustment: Decimal::ZERO,
            fair_value_account: None,
            source: Source::file("entities/acquisitions.csv"),
        };
        (change, a)
    }

    /// Posts the purchase at 31 March with `rates` (month, USD per EUR) over the
    /// fixture's 2 at every month end.
    fn post_purchase(rates: &[(&str, &str)]) -> (Journal, Vec<NciRow>, Option<StakeChange>) {
        let mut before_change = holding("P", "S", "0.8", "2021-01-01");
        before_change.valid_to = chrono::NaiveDate::from_ymd_opt(2026, 2, 28);
        let holdings = vec![before_change, holding("P", "S", "0.9", "2026-03-01")];
        let w = World::new(&["P", "S"], &holdings, p("2026-03"));
        let mut cx = w.context(p("2026-03"), p("2026-01"), balances(&[("P", "1200", Some("S"), "490")]));
        let usd = Currency::parse("USD").unwrap_or_else(|| panic!("USD"));
        for (m, r) in rates {
            cx.closing.insert(
                (usd, p(m)),
                crate::load::Rate { value: d(r), quote: crate::load::Quote::UnitsPerPresentation },
            );
        }
        let invest = investment::investments(&cx);
        let (change, a) = purchase();
        let b = Before {
            change: &change,
            last_month: p("2026-02"),
            nci_share: d("0.2"),
            net_assets: d("700"),
            profit: d("100"),
            oci: Decimal::ZERO,
            investment: d("400"),
            differences: Decimal::ZERO,
        };
        let mut nci =
            vec![NciRow { entity: id("S"), nci_share: d("0.1"), profit: d("20"), oci: Decimal::ZERO, equity: d("80") }];
        let mut j = Journal::default();
        let done = post(&mut j, &cx, &[a], &holdings, (&b, None), &invest, &mut nci);
        (j, nci, done)
    }

    /// At one rate throughout: at the period end the investment entry took the NCI at
    /// acquisition at 10% (goodwill USD 80) and left the EUR 90 in the reserve. The
    /// entry: goodwill +40 (USD 80 at 2, back to USD 160), reserve -90, retained earnings
    /// +50 (the owners paid 90 for a carrying amount of 70: 20; and 10% of the 300
    /// earned before the change that the period-end share gave them: 30); no exchange
    /// difference. The NCI row gains 10% of the 100 made to February (IFRS 10.B96).
    #[test]
    fn goodwill_kept_the_consideration_to_equity_and_the_ncis_earlier_share() {
        let (j, nci, done) = post_purchase(&[]);
        assert_eq!(
            lines(&j.entries[0]),
            [
                ("1100".into(), "S".into(), "40".into()),
                ("3300".into(), "S".into(), "-90".into()),
                ("3200".into(), "S".into(), "50".into())
            ]
        );
        assert_eq!(nci[0].profit, d("30"));
        assert_eq!(done.map(|x| (x.nci_transferred, x.cash)), Some((d("70"), d("-90"))));
    }

    /// The same with the dollar moving: 2.5 per EUR at the opening, 1.6 at 31 March (2
    /// at acquisition and at 28 February). The goodwill put back, USD 80, is 40 at the
    /// acquisition rate, 32 at the opening, 50 at the closing rate (IAS 21.47): +50 on
    /// goodwill, its 18 of the year in OCI (credit), its 8 before the year in the
    /// reserve, where the investment entry had measured the exchange difference on the
    /// smaller goodwill. Retained earnings take the same 50 as at one rate: B96's
    /// difference is measured at the date, and nothing reaches profit or loss (IAS
    /// 21.48C: the reserve is re-attributed, not reclassified).
    #[test]
    fn a_foreign_subsidiarys_goodwill_at_the_closing_rate_and_no_reclassification() {
        let (j, _, done) = post_purchase(&[("2025-12", "2.5"), ("2026-03", "1.6")]);
        assert_eq!(
            lines(&j.entries[0]),
            [
                ("1100".into(), "S".into(), "50".into()),
                ("9000".into(), "S".into(), "-18".into()),
                ("3300".into(), "S".into(), "-82".into()),
                ("3200".into(), "S".into(), "50".into())
            ]
        );
        assert_eq!(done.map(|x| (x.nci_transferred, x.cash)), Some((d("70"), d("-90"))));
    }

    /// Goodwill is translated whole (IAS 21.47, one rounding). At 3 USD per EUR at 31
    /// March, goodwill at acquisition, USD 160, is 53.33; the investment entry takes the
    /// USD 80 of the period end's share at 26.67, so this entry adds 53.33 - 26.67 =
    /// 26.66, not the USD 80 moved rounded on its own (26.67, making 53.34). At the
    /// opening rate of 2 the same move is 80 - 40 = 40: the year's exchange difference
    /// 40 - 26.66 = 13.34 in OCI; retained earnings take B96's 50 as at one rate.
    #[test]
    fn goodwill_moved_is_the_difference_of_goodwill_translated_whole() {
        let (j, _, _) = post_purchase(&[("2026-03", "3")]);
        assert_eq!(
            lines(&j.entries[0]),
            [
                ("1100".into(), "S".into(), "26.66".into()),
                ("9000".into(), "S".into(), "13.34".into()),
                ("3300".into(), "S".into(), "-90".into()),
                ("3200".into(), "S".into(), "50".into())
            ]
        );
    }
}

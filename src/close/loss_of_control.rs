//! Rule `loss_of_control`: a subsidiary sold during the year (IFRS 10.25, B97-B99, IAS
//! 21.48-48B).
//!
//! Month granularity: the subsidiary is consolidated to the last month end the group
//! controlled it at (`ownership::last_controlled_month`). The close at that month end is
//! run (the same chain, on the structure of that day) and the subsidiary's part of it is
//! carried into this close: its contribution (its results of the year to that month
//! end, its balances then) and the journal lines about it. The entry then, in one
//! place:
//!
//! - derecognises its assets and liabilities, goodwill and NCI at that month end;
//! - carries the rest of the lines of that close about it (the equity eliminated at
//!   acquisition, the NCI's share moved out of retained earnings, results before
//!   control, exchange differences on goodwill), so that the owners' share of its
//!   earlier results stays in retained earnings (IFRS 10.B99);
//! - replaces the holder's remaining investment by the fair value of the interest
//!   retained (IFRS 10.25(b), B98(b)(iii)); an associate retained is then
//!   equity-accounted from the month of the date (`equity_method.rs`, from the
//!   associate's acquisitions.csv row, whose cost is that fair value);
//! - recognises the gain or loss: proceeds + fair value retained + NCI derecognised -
//!   net assets and goodwill derecognised (B98), in place of the holder's own gain
//!   (proceeds less the investment's carrying amount sold, in its books);
//! - reclassifies the owners' share of the cumulative translation reserve of the
//!   operation (its own reserve and the exchange differences on its goodwill) to profit
//!   or loss, through OCI of the year (IAS 21.48, IAS 1.92-93), and derecognises the
//!   NCI's share with the NCI, without reclassification (IAS 21.48B).
//!
//! The holder's proceeds are what its own books say: the posted gain is the holder's
//! gain adjusted to the group's, so it needs no proceeds figure; `consideration` is
//! translated at the closing rate of the last month consolidated for the description
//! and the disposal row. Which sales reach here is decided by `ownership`.

use chrono::NaiveDate;
use polars::prelude::*;
use rust_decimal::Decimal;

use super::NciRow;
use super::aggregate::EntityBalances;
use super::context::Context;
use super::journal::{EliminationRule, Entry, EntryLine, Journal, line};
use crate::findings::{Finding, Rule};
use crate::load::Dataset;
use crate::model::*;
use crate::money;
use crate::translate::Translated;

/// A subsidiary sold, as the close at its last month end consolidated shows it.
pub struct AtLastMonth<'a> {
    pub change: &'a OwnershipChange,
    pub last_month: Period,
    /// Its contribution rows (entity, group_account, counterparty, amount).
    pub contributions: DataFrame,
    /// The same as balances by account and counterparty.
    pub balances: EntityBalances,
    /// The lines of that close's journal about it: its own, and the other entities'
    /// lines naming it, but for its intercompany pairs.
    pub lines: Vec<(EliminationRule, EntryLine)>,
    /// That close's intercompany entries between it and the rest of the group, whole
    /// (difference lines included): see [`pairs`].
    pub pairs: Vec<Entry>,
    /// That close's intragroup dividends it paid or received, whole: posted again as
    /// they were (the months consolidated stay eliminated), beside the entry of the sale.
    pub dividends: Vec<Entry>,
    /// Its NCI share then, and the NCI's share of its profit and OCI of the year.
    pub nci: Option<NciRow>,
}

/// What a loss of control did, for the statement of changes in equity and the outputs.
#[derive(Debug, Clone, PartialEq, Eq, serde::Serialize)]
pub struct Disposal {
    pub entity: EntityId,
    pub date: NaiveDate,
    /// The last month end consolidated.
    pub last_month: Period,
    /// The NCI derecognised (credit positive).
    pub nci_derecognised: Decimal,
    /// The owners' share of the translation reserve reclassified to profit or loss
    /// (a gain positive).
    pub reserve_recycled: Decimal,
    /// The NCI's share of the translation reserve, derecognised with the NCI.
    pub reserve_nci: Decimal,
    /// Proceeds + fair value retained + NCI - net assets - goodwill (a gain positive),
    /// before the reclassification.
    pub gain: Decimal,
    /// The proceeds at the closing rate of the last month end consolidated.
    pub proceeds: Decimal,
}

/// Runs the close at the last month end the group controlled the subsidiary sold in
/// `change`, on the structure of that day, and keeps its part.
pub fn at_last_month<'a>(ds: &Dataset, t: &Translated, change: &'a OwnershipChange) -> PolarsResult<AtLastMonth<'a>> {
    let (last_month, _, then) = super::close_before_change(ds, t, change)?;
    let e = &change.owned;
    let contributions = then.contributions.clone().lazy().filter(col("entity").eq(lit(e.as_str()))).collect()?;
    let balances = super::aggregate::balances(&contributions)?.remove(e).unwrap_or_default();
    let of_rule = |x: &Entry, r: EliminationRule| x.rule == r && x.entities.contains(e);
    let whole = |r: EliminationRule| -> Vec<Entry> { then.journal.iter().filter(|x| of_rule(x, r)).cloned().collect() };
    let (pairs, dividends) = (whole(EliminationRule::Intercompany), whole(EliminationRule::IntragroupDividend));
    let lines = then
        .journal
        .iter()
        .filter(|x| !of_rule(x, EliminationRule::Intercompany) && !of_rule(x, EliminationRule::IntragroupDividend))
        .flat_map(|x| x.lines.iter().map(move |l| (x.rule, l)))
        .filter(|(_, l)| &l.entity == e || l.counterparty.as_ref() == Some(e))
        .map(|(r, l)| (r, l.clone()))
        .collect();
    let nci = then.nci.iter().find(|r| &r.entity == e).cloned();
    Ok(AtLastMonth { change, last_month, contributions, balances, lines, pairs, dividends, nci })
}

/// The group's carrying amounts at the last month end, in the presentation currency.
#[derive(Debug, Default)]
struct Carrying {
    /// Assets less liabilities in the subsidiary's contribution.
    net_assets: Decimal,
    /// Goodwill (all of it, the NCI's part too where the NCI was measured at fair
    /// value).
    goodwill: Decimal,
    /// The other assets and liabilities the journal adds for it: its fair value
    /// adjustments less their depreciation and deferred tax (IFRS 10.B98(a)(i)).
    adjustments: Decimal,
    /// The NCI in it (credit positive).
    nci: Decimal,
    /// The holder's investment eliminated then, and its account.
    investment: Decimal,
    investment_account: Option<GroupAccount>,
    /// The lines carried into the entry.
    carried: Vec<EntryLine>,
    /// The intercompany balance pairs with it no longer eliminated.
    third_party: usize,
    /// Its intercompany pairs of income and expense, posted again whole.
    flow_pairs: Vec<Entry>,
}

/// What becomes of the intercompany entries of the close at the last month end between
/// the subsidiary sold and the rest of the group. A pair of income and expense (fees,
/// sales, interest, with its difference) is posted again whole, as the entry it was:
/// those months' transactions were within the group and stay eliminated. A pair of balances is not carried: its
/// side in the subsidiary's books is derecognised with its other assets and
/// liabilities (IFRS 10.B98(a)(i)), and the side the group keeps is a balance with a
/// third party from the date, no longer eliminated (after the month of the sale the
/// close does not pair it, `intercompany.rs`). An entry mixing the two is not split.
fn pairs(cx: &Context, sold: &AtLastMonth, k: &mut Carrying) -> Result<(), String> {
    let difference = &cx.roles.intercompany_difference;
    let balance = |a: &GroupAccount| {
        cx.chart.get(a).is_some_and(|d| matches!(d.class, AccountClass::Asset | AccountClass::Liability))
    };
    for x in &sold.pairs {
        let own = x.lines.iter().filter(|l| &l.account != difference || l.counterparty.is_some());
        let (mut balances, mut flows) = (0, 0);
        for l in own {
            if balance(&l.account) { balances += 1 } else { flows += 1 }
        }
        match (balances, flows) {
            (_, 0) => k.third_party += 1,
            (0, _) => k.flow_pairs.push(x.clone()),
            _ => {
                return Err(format!(
                    "its intercompany entry {} at {} ({}) mixes balances and income or expense",
                    x.id, sold.last_month, x.description
                ));
            }
        }
    }
    Ok(())
}

fn carrying(cx: &Context, sold: &AtLastMonth) -> Result<Carrying, String> {
    let (e, holder) = (&sold.change.owned, &sold.change.holder);
    let asset_or_liability = |a: &GroupAccount| {
        cx.chart.get(a).is_some_and(|d| matches!(d.class, AccountClass::Asset | AccountClass::Liability))
    };
    let mut k = Carrying::default();
    pairs(cx, sold, &mut k)?;
    for ((a, _), v) in &sold.balances {
        if asset_or_liability(a) {
            k.net_assets += *v;
        }
    }
    for (rule, l) in &sold.lines {
        if &l.entity == e {
            if l.account == cx.roles.goodwill {
                k.goodwill += l.amount;
            } else if asset_or_liability(&l.account) {
                k.adjustments += l.amount;
            } else if l.account == cx.roles.non_controlling_interest {
                k.nci -= l.amount;
            } else {
                k.carried.push(l.clone());
            }
        } else if &l.entity == holder && cx.kind_of(&l.account) == Some("investment") {
            k.investment -= l.amount;
            k.investment_account = Some(l.account.clone());
        } else if cx.is_flow(&l.account) {
            k.carried.push(l.clone());
        } else {
            return Err(format!(
                "the {rule} line of {} on {} naming {e} at {} is not one the derecognition handles",
                l.entity, l.account, sold.last_month
            ));
        }
    }
    Ok(k)
}

/// Posts the entry of one subsidiary sold; `None` (with a finding) when the lines of
/// the earlier close cannot be carried.
pub fn post(j: &mut Journal, cx: &Context, sold: &AtLastMonth, found: &mut Vec<Finding>) -> Option<Disposal> {
    let c = sold.change;
    let (e, holder) = (&c.owned, &c.holder);
    let blocked = |why: String| {
        Finding::new(
            Rule::OwnershipChangeUnsupported,
            format!("loss of control of {e} on {}: {why}", c.date),
            "the close does not guess this disposal: account for it outside tessera",
        )
        .at(&c.source)
        .entity(e)
    };
    let k = match carrying(cx, sold) {
        Ok(k) => k,
        Err(why) => {
            found.push(blocked(why));
            return None;
        }
    };
    let (Some(gain_account), Some(fc)) = (c.gain_account.as_ref(), cx.currencies.get(e).copied()) else {
        return None;
    };
    let at_last = |x: Decimal| cx.at_closing(fc, x, sold.last_month).unwrap_or_default();
    let fair_value = at_last(c.fair_value_held.unwrap_or_default());
    let proceeds = at_last(c.consideration);
    let investment_account = k.investment_account.clone().or_else(|| {
        cx.balances_of(holder)
            .find(|((a, cp), _)| cp.as_ref() == Some(e) && cx.kind_of(a) == Some("investment"))
            .map(|((a, _), _)| a.clone())
    });
    let investment_now: Decimal = cx
        .balances_of(holder)
        .filter(|((a, cp), _)| cp.as_ref() == Some(e) && Some(a) == investment_account.as_ref())
        .map(|(_, v)| *v)
        .sum();
    // The reserve of the operation in this close's lines: its own (brought forward and
    // of the year to the date), the exchange differences of the lines carried
    // (goodwill, IAS 21.47) and, among them, the NCI's share the NCI rule took out of
    // the reserve (IAS 21.41). What is left is the owners' and is reclassified (IAS
    // 21.48); the NCI's share leaves with the NCI (IAS 21.48B).
    let reserve_accounts = [&cx.roles.translation_reserve, &cx.roles.translation_difference];
    let recycled =
        -(sold.balances.iter().filter(|((a, _), _)| reserve_accounts.contains(&a)).map(|(_, v)| *v).sum::<Decimal>()
            + k.carried
                .iter()
                .filter(|l| &l.entity == e && reserve_accounts.contains(&&l.account))
                .map(|l| l.amount)
                .sum::<Decimal>());
    let reserve_nci: Decimal = sold
        .lines
        .iter()
        .filter(|(rule, l)| {
            *rule == EliminationRule::NonControllingInterest
                && &l.entity == e
                && l.account == cx.roles.translation_reserve
        })
        .map(|(_, l)| l.amount)
        .sum();
    let adjustment = fair_value + k.nci - k.net_assets - k.goodwill - k.adjustments + k.investment - investment_now;
    let mut lines: Vec<EntryLine> = Vec::new();
    for ((a, cp), v) in &sold.balances {
        if cx.chart.get(a).is_some_and(|d| matches!(d.class, AccountClass::Asset | AccountClass::Liability)) {
            lines.push(line(a, e, cp.as_ref(), -*v));
        }
    }
    lines.extend(k.carried.iter().cloned());
    lines.push(line(&cx.roles.translation_difference, e, None, recycled));
    lines.push(line(gain_account, holder, Some(e), -recycled));
    if let Some(acct) = &investment_account {
        lines.push(line(acct, holder, Some(e), fair_value - investment_now));
    }
    lines.push(line(gain_account, holder, Some(e), -adjustment));
    let residual: Decimal = lines.iter().map(|l| l.amount).sum();
    if !residual.is_zero() {
        found.push(blocked(format!(
            "the lines carried from the close at {} do not balance by {}",
            sold.last_month,
            money::format_amount(residual, cx.minor)
        )));
        return None;
    }
    let gain = proceeds + fair_value + k.nci - k.net_assets - k.goodwill - k.adjustments;
    let (adjusted, third_party) = described(cx, sold, &k);
    j.post(
        EliminationRule::LossOfControl,
        holder.clone(),
        vec![holder.clone(), e.clone()],
        format!(
            "{e} sold by {holder} on {}, consolidated to {}: proceeds {} + fair value retained {} + NCI {} - net assets {} - goodwill {}{adjusted} = gain {} (IFRS 10.B98); translation reserve reclassified {} (IAS 21.48), NCI's share {} derecognised (IAS 21.48B){third_party}",
            c.date,
            sold.last_month,
            money::format_amount(proceeds, cx.minor),
            money::format_amount(fair_value, cx.minor),
            money::format_amount(k.nci, cx.minor),
            money::format_amount(k.net_assets, cx.minor),
            money::format_amount(k.goodwill, cx.minor),
            money::format_amount(gain, cx.minor),
            money::format_amount(recycled, cx.minor),
            money::format_amount(reserve_nci, cx.minor)
        ),
        lines,
    );
    repost(j, sold, &k);
    Some(Disposal {
        entity: e.clone(),
        date: c.date,
        last_month: sold.last_month,
        nci_derecognised: k.nci,
        reserve_recycled: recycled,
        reserve_nci,
        gain,
        proceeds,
    })
}

/// The parts of the entry's description shown only where there are any (so that the
/// usual description stays as it was): the fair value adjustments derecognised, and the
/// intercompany balance pairs left with a third party.
fn described(cx: &Context, sold: &AtLastMonth, k: &Carrying) -> (String, String) {
    let adjusted = if k.adjustments.is_zero() {
        String::new()
    } else {
        format!(" - fair value adjustments {}", money::format_amount(k.adjustments, cx.minor))
    };
    let third_party = if k.third_party == 0 {
        String::new()
    } else {
        let pairs = if k.third_party == 1 { "1 pair".to_string() } else { format!("{} pairs", k.third_party) };
        format!("; its intercompany balances at {} ({pairs}) stay as balances with a third party", sold.last_month)
    };
    (adjusted, third_party)
}

/// The pairs of income and expense and the dividends of the months consolidated stay
/// eliminated, each its own entry as it was, so that they read (and are classified, by
/// segment and in the statement of cash flows) as what they are.
fn repost(j: &mut Journal, sold: &AtLastMonth, k: &Carrying) {
    let e = &sold.change.owned;
    for x in k.flow_pairs.iter().chain(&sold.dividends) {
        j.post(
            x.rule,
            x.posted_at.clone(),
            x.entities.clone(),
            format!("{}: of the months to {}, before the sale of {e}", x.description, sold.last_month),
            x.lines.clone(),
        );
    }
}

/// The NCI row of a subsidiary sold: its share of profit and OCI to the date, no NCI in
/// equity at the period end (derecognised).
pub fn nci_row(sold: &AtLastMonth) -> Option<NciRow> {
    sold.nci.clone().map(|n| NciRow { equity: Decimal::ZERO, ..n })
}

#[cfg(test)]
mod tests {
    use super::super::context::fixture::*;
    use super::*;

    /// P (EUR) held 80% of S (USD, 2 USD per EUR at every month end) and sells 70% on
    /// 15 March 2026 for USD 1,400 (EUR 700), keeping 10% worth USD 200 (EUR 100).
    /// S is consolidated to 28 February, when it had net assets EUR 700 (inventory),
    /// share capital 400, retained earnings 200 brought forward, revenue 100. The close
    /// then eliminated P's investment 400 against S's capital, with goodwill 80 and NCI
    /// at acquisition 80, and the NCI's share 60 of the post-acquisition equity 300:
    /// NCI 140. P keeps its investment at the remaining cost 50. By IFRS 10.B98 the
    /// gain is 700 + 100 + 140 - 700 - 80 = 160; P's own gain (700 - 350 = 350) is
    /// reduced by 350 - 160 = 190: 100 + 140 - 700 - 80 + 400 - 50 = -190. The entry:
    /// inventory -700, the carried capital +400 and retained earnings +60, the
    /// investment 100 - 50 = +50, the gain +190; -700 + 400 + 60 + 50 + 190 = 0.
    #[test]
    fn derecognition_gain_and_retained_interest_at_fair_value() {
        let w = World::new(&["P", "S"], &[holding("P", "S", "0.1", "2026-03-15")], p("2026-03"));
        let cx = w.context(p("2026-03"), p("2026-01"), balances(&[("P", "1200", Some("S"), "50")]));
        let change = OwnershipChange {
            date: chrono::NaiveDate::from_ymd_opt(2026, 3, 15).unwrap_or_default(),
            holder: id("P"),
            owned: id("S"),
            share: d("-0.7"),
            consideration: d("1400"),
            fair_value_held: Some(d("200")),
            costs: Decimal::ZERO,
            gain_account: Some(acct("7300")),
            note: String::new(),
            source: Source::file("entities/ownership_changes.csv"),
        };
        let own = balances(&[
            ("S", "1500", None, "700"),
            ("S", "3000", None, "-400"),
            ("S", "3200", None, "-200"),
            ("S", "4000", None, "-100"),
        ]);
        let l = |a: &str, e: &str, cp: Option<&str>, v: &str| line(&acct(a), &id(e), cp.map(id).as_ref(), d(v));
        let sold = AtLastMonth {
            change: &change,
            last_month: p("2026-02"),
            contributions: DataFrame::empty(),
            balances: own.get(&id("S")).cloned().unwrap_or_default(),
            lines: vec![
                (EliminationRule::InvestmentAndGoodwill, l("1200", "P", Some("S"), "-400")),
                (EliminationRule::InvestmentAndGoodwill, l("3000", "S", None, "400")),
                (EliminationRule::InvestmentAndGoodwill, l("1100", "S", None, "80")),
                (EliminationRule::InvestmentAndGoodwill, l("3900", "S", None, "-80")),
                (EliminationRule::NonControllingInterest, l("3900", "S", None, "-60")),
                (EliminationRule::NonControllingInterest, l("3200", "S", None, "60")),
            ],
            pairs: Vec::new(),
            dividends: Vec::new(),
            nci: Some(NciRow {
                entity: id("S"),
                nci_share: d("0.2"),
                profit: d("20"),
                oci: Decimal::ZERO,
                equity: d("140"),
            }),
        };
        let mut j = Journal::default();
        let mut found = Vec::new();
        let disposal = post(&mut j, &cx, &sold, &mut found);
        assert!(found.is_empty(), "{found:?}");
        assert_eq!(
            lines(&j.entries[0]),
            [
                ("1500".into(), "S".into(), "-700".into()),
                ("3000".into(), "S".into(), "400".into()),
                ("3200".into(), "S".into(), "60".into()),
                ("1200".into(), "P".into(), "50".into()),
                ("7300".into(), "P".into(), "190".into())
            ]
        );
        let disposal = disposal.unwrap_or_else(|| panic!("no disposal"));
        assert_eq!((disposal.nci_derecognised, disposal.gain, disposal.reserve_recycled), (d("140"), d("160"), d("0")));
        assert_eq!(nci_row(&sold).map(|r| (r.profit, r.equity)), Some((d("20"), Decimal::ZERO)));
    }

    /// A reserve of the operation: its own 60 (a gain) with an NCI of 20%, whose 12 the
    /// NCI rule of the close at March took out of the reserve (IAS 21.41): the owners'
    /// 48 left in it is reclassified through OCI to profit or loss (IAS 21.48), the
    /// NCI's 12 leaves with the NCI, not reclassified (IAS 21.48B).
    #[test]
    fn the_owners_share_of_the_reserve_is_reclassified_the_ncis_is_not() {
        let w = World::new(&["P", "S"], &[], p("2026-04"));
        let cx = w.context(p("2026-04"), p("2026-01"), super::super::aggregate::Balances::default());
        let change = OwnershipChange {
            date: chrono::NaiveDate::from_ymd_opt(2026, 4, 1).unwrap_or_default(),
            holder: id("P"),
            owned: id("S"),
            share: d("-0.8"),
            consideration: d("1800"),
            fair_value_held: None,
            costs: Decimal::ZERO,
            gain_account: Some(acct("7300")),
            note: String::new(),
            source: Source::file("entities/ownership_changes.csv"),
        };
        // Net assets 900 = capital 500 + retained earnings 220 + revenue 120 + reserve
        // brought forward -120 + the year's difference 180.
        let own = balances(&[
            ("S", "1500", None, "900"),
            ("S", "3000", None, "-500"),
            ("S", "3200", None, "-220"),
            ("S", "3300", None, "120"),
            ("S", "4000", None, "-120"),
            ("S", "9000", None, "-180"),
        ]);
        let sold = AtLastMonth {
            change: &change,
            last_month: p("2026-03"),
            contributions: DataFrame::empty(),
            balances: own.get(&id("S")).cloned().unwrap_or_default(),
            lines: vec![
                (EliminationRule::NonControllingInterest, line(&acct("3900"), &id("S"), None, d("-12"))),
                (EliminationRule::NonControllingInterest, line(&acct("3300"), &id("S"), None, d("12"))),
            ],
            pairs: Vec::new(),
            dividends: Vec::new(),
            nci: Some(NciRow { entity: id("S"), nci_share: d("0.2"), profit: d("24"), oci: d("36"), equity: d("180") }),
        };
        let mut j = Journal::default();
        let disposal = post(&mut j, &cx, &sold, &mut Vec::new()).unwrap_or_else(|| panic!("no disposal"));
        assert_eq!((disposal.reserve_recycled, disposal.reserve_nci), (d("48"), d("12")));
        let l = lines(&j.entries[0]);
        for want in [("9000", "S", "48"), ("7300", "P", "-48"), ("3300", "S", "12")] {
            assert!(l.contains(&(want.0.into(), want.1.into(), want.2.into())), "{want:?} not in {l:?}");
        }
    }
    /// P (EUR) holds all of S (USD, 2 USD per EUR) and sells it on 1 April 2026 for
    /// USD 1,200 (EUR 600); S is consolidated to 31 March. S then had inventory 600 and
    /// owed P 100 on trade (net assets 500), capital 300, retained earnings 100 and
    /// revenue 100, 40 of it sales to P, which P booked as 38 (a difference of 2). The
    /// close at March eliminated P's investment 300 against S's capital, the trade
    /// balances 100 and the sales with the difference. By IFRS 10.B98 the gain is
    /// 600 - 500 = 100; P's own gain (600 - 300 = 300) is reduced by 200. The trade pair
    /// is not carried: S's payable leaves with S's net assets, P's receivable is then a
    /// balance with a third party. The sales pair of January to March is posted again
    /// whole (difference line included). The entry: inventory -600, payable +100,
    /// capital +300, the gain +200; it sums to 0.
    #[test]
    fn intercompany_balances_with_the_subsidiary_sold_become_third_party_balances() {
        let w = World::new(&["P", "S"], &[], p("2026-12"));
        let cx = w.context(p("2026-12"), p("2026-01"), balances(&[("P", "1650", Some("S"), "100")]));
        let change = OwnershipChange {
            date: chrono::NaiveDate::from_ymd_opt(2026, 4, 1).unwrap_or_default(),
            holder: id("P"),
            owned: id("S"),
            share: d("-1"),
            consideration: d("1200"),
            fair_value_held: None,
            costs: Decimal::ZERO,
            gain_account: Some(acct("7300")),
            note: String::new(),
            source: Source::file("entities/ownership_changes.csv"),
        };
        let own = balances(&[
            ("S", "1500", None, "600"),
            ("S", "2450", Some("P"), "-100"),
            ("S", "3000", None, "-300"),
            ("S", "3200", None, "-100"),
            ("S", "4000", None, "-60"),
            ("S", "4100", Some("P"), "-40"),
        ]);
        let l = |a: &str, e: &str, cp: Option<&str>, v: &str| line(&acct(a), &id(e), cp.map(id).as_ref(), d(v));
        let entry = |id: &str, lines: Vec<EntryLine>| Entry {
            id: id.into(),
            rule: EliminationRule::Intercompany,
            posted_at: super::super::context::fixture::id("P"),
            entities: vec![super::super::context::fixture::id("P"), super::super::context::fixture::id("S")],
            description: String::new(),
            lines,
        };
        let sold = AtLastMonth {
            change: &change,
            last_month: p("2026-03"),
            contributions: DataFrame::empty(),
            balances: own.get(&id("S")).cloned().unwrap_or_default(),
            lines: vec![
                (EliminationRule::InvestmentAndGoodwill, l("1200", "P", Some("S"), "-300")),
                (EliminationRule::InvestmentAndGoodwill, l("3000", "S", None, "300")),
            ],
            dividends: Vec::new(),
            pairs: vec![
                entry("E0001", vec![l("1650", "P", Some("S"), "-100"), l("2450", "S", Some("P"), "100")]),
                entry(
                    "E0002",
                    vec![l("4100", "S", Some("P"), "40"), l("5100", "P", Some("S"), "-38"), l("6950", "P", None, "-2")],
                ),
            ],
            nci: None,
        };
        let mut j = Journal::default();
        let mut found = Vec::new();
        let disposal = post(&mut j, &cx, &sold, &mut found).unwrap_or_else(|| panic!("no disposal: {found:?}"));
        assert!(found.is_empty(), "{found:?}");
        assert_eq!((disposal.gain, disposal.proceeds), (d("100"), d("600")));
        assert_eq!(j.entries.len(), 2, "the sale, and the sales pair posted again");
        assert_eq!(j.entries[1].rule, EliminationRule::Intercompany);
        assert_eq!(
            lines(&j.entries[1]),
            [
                ("4100".into(), "S".into(), "40".into()),
                ("5100".into(), "P".into(), "-38".into()),
                ("6950".into(), "P".into(), "-2".into())
            ]
        );
        let mut got = lines(&j.entries[0]);
        got.sort();
        let mut want: Vec<(String, String, String)> =
            [("1500", "S", "-600"), ("2450", "S", "100"), ("3000", "S", "300"), ("7300", "P", "200")]
                .iter()
                .map(|(a, e, v)| ((*a).into(), (*e).into(), (*v).into()))
                .collect();
        want.sort();
        assert_eq!(got, want);
        assert!(
            j.entries[0].description.contains("(1 pair) stay as balances with a third party"),
            "{}",
            j.entries[0].description
        );

        // An intercompany entry mixing a balance and income is not split: blocking.
        let mixed = AtLastMonth {
            pairs: vec![entry("E0003", vec![l("1650", "P", Some("S"), "-40"), l("4100", "S", Some("P"), "40")])],
            ..sold
        };
        let mut found = Vec::new();
        assert!(post(&mut Journal::default(), &cx, &mixed, &mut found).is_none());
        assert_eq!(found.len(), 1, "{found:?}");
        assert!(found[0].message.contains("mixes balances and income or expense"), "{found:?}");
    }
    /// NCI at fair value and a fair value adjustment (IFRS 10.B98(a)). P (EUR) bought
    /// 60% of S (USD, 2 USD per EUR) for 300 when S's share capital was 400 and its
    /// inventory was worth 50 more than its books: net assets 450, NCI at fair value
    /// 300, goodwill 300 + 300 - 450 = 150, all of it in the group (the NCI's part
    /// too). By 28 February 10 of the uplift is expensed, and the NCI holds 40% of the
    /// post-acquisition equity 200 + 100 - 10 = 290: 116, so the NCI is 300 + 116 =
    /// 416. P sells all of it on 15 March for USD 1,200 (EUR 600). S's own net assets
    /// 700; the group derecognises them, goodwill 150 whole, the uplift's 50 - 10 = 40
    /// and the NCI 416: gain 600 + 416 - 700 - 150 - 40 = 126. P's own gain (600 - 300
    /// = 300) is reduced by 174: 416 - 700 - 150 - 40 + 300 = -174. The entry:
    /// inventory -700, the carried capital +400, expense +10 and retained earnings +116,
    /// the gain +174; it sums to 0.
    #[test]
    fn nci_at_fair_value_and_a_fair_value_adjustment_leave_with_the_subsidiary() {
        let w = World::new(&["P", "S"], &[], p("2026-03"));
        let cx = w.context(p("2026-03"), p("2026-01"), super::super::aggregate::Balances::default());
        let change = OwnershipChange {
            date: chrono::NaiveDate::from_ymd_opt(2026, 3, 15).unwrap_or_default(),
            holder: id("P"),
            owned: id("S"),
            share: d("-0.6"),
            consideration: d("1200"),
            fair_value_held: None,
            costs: Decimal::ZERO,
            gain_account: Some(acct("7300")),
            note: String::new(),
            source: Source::file("entities/ownership_changes.csv"),
        };
        let own = balances(&[
            ("S", "1500", None, "700"),
            ("S", "3000", None, "-400"),
            ("S", "3200", None, "-200"),
            ("S", "4000", None, "-100"),
        ]);
        let l = |a: &str, e: &str, cp: Option<&str>, v: &str| line(&acct(a), &id(e), cp.map(id).as_ref(), d(v));
        let sold = AtLastMonth {
            change: &change,
            last_month: p("2026-02"),
            contributions: DataFrame::empty(),
            balances: own.get(&id("S")).cloned().unwrap_or_default(),
            lines: vec![
                (EliminationRule::InvestmentAndGoodwill, l("1200", "P", Some("S"), "-300")),
                (EliminationRule::InvestmentAndGoodwill, l("3000", "S", None, "400")),
                (EliminationRule::InvestmentAndGoodwill, l("1100", "S", None, "150")),
                (EliminationRule::InvestmentAndGoodwill, l("1500", "S", None, "50")),
                (EliminationRule::InvestmentAndGoodwill, l("3900", "S", None, "-300")),
                (EliminationRule::FairValueDepreciation, l("5000", "S", None, "10")),
                (EliminationRule::FairValueDepreciation, l("1500", "S", None, "-10")),
                (EliminationRule::NonControllingInterest, l("3900", "S", None, "-116")),
                (EliminationRule::NonControllingInterest, l("3200", "S", None, "116")),
            ],
            pairs: Vec::new(),
            dividends: Vec::new(),
            nci: None,
        };
        let mut j = Journal::default();
        let mut found = Vec::new();
        let disposal = post(&mut j, &cx, &sold, &mut found).unwrap_or_else(|| panic!("no disposal: {found:?}"));
        assert!(found.is_empty(), "{found:?}");
        assert_eq!((disposal.nci_derecognised, disposal.gain), (d("416"), d("126")));
        let mut got = lines(&j.entries[0]);
        got.sort();
        let mut want: Vec<(String, String, String)> = [
            ("1500", "S", "-700"),
            ("3000", "S", "400"),
            ("5000", "S", "10"),
            ("3200", "S", "116"),
            ("7300", "P", "174"),
        ]
        .iter()
        .map(|(a, e, v)| ((*a).into(), (*e).into(), (*v).into()))
        .collect();
        want.sort();
        assert_eq!(got, want);
        let text = &j.entries[0].description;
        assert!(text.contains("- goodwill 150.00 - fair value adjustments 40.00 = gain 126.00"), "{text}");
    }
}

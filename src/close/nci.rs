//! Rule `non_controlling_interest`: the effective outside share of each subsidiary's
//! post-acquisition equity (IFRS 10.22, B94), profit, OCI and translation difference
//! included (IAS 21.41), multi-tier through effective interests, posted against each
//! reserve the chart names for its part (`reserve` of accounts.csv, IAS 1.106(a)), the
//! translation reserve for its share of the subsidiary's exchange differences (IAS
//! 21.41) and retained earnings for the rest. Also the NCI rows: the
//! NCI's share of the subsidiary's profit and OCI of the year and its NCI in equity.
//!
//! It reads the journal posted so far: each subsidiary's own lines of the earlier rules
//! (the unrealised profit it made, its results before control, the exchange difference
//! moved from its profit or loss, the NCI at acquisition), and what the investment rule
//! measured ([`ForNci`]).

use std::collections::BTreeMap;

use rust_decimal::Decimal;

use super::NciRow;
use super::context::Context;
use super::investment::ForNci;
use super::journal::{EliminationRule, EntryLine, Journal, line};
use crate::model::*;
use crate::money;
use crate::structure::EntityStructure;

/// The journal's lines by the entity they correct, with their rule.
type LinesOf<'j> = BTreeMap<&'j EntityId, Vec<(EliminationRule, &'j EntryLine)>>;

/// Posts one entry per subsidiary with an NCI and returns its NCI row, with the
/// exchange differences of every subsidiary that the NCI shares ([`differences`]),
/// what a change in stake reattributes (IAS 21.48C).
pub fn post(j: &mut Journal, cx: &Context, measured: &ForNci) -> (Vec<NciRow>, BTreeMap<EntityId, Decimal>) {
    let journal_so_far = j.entries.clone();
    // Each subsidiary's NCI reads only its own lines.
    let mut lines_of: LinesOf = BTreeMap::new();
    for x in &journal_so_far {
        for l in &x.lines {
            lines_of.entry(&l.entity).or_default().push((x.rule, l));
        }
    }
    let no_lines = Vec::new();
    let mut rows = Vec::new();
    let mut all = BTreeMap::new();
    for e in cx.of_method(Method::Full).filter(|e| &e.id != cx.structure.parent()) {
        let own = lines_of.get(&e.id).unwrap_or(&no_lines);
        let diff = differences(cx, measured, e, own);
        if !e.nci.is_zero() {
            rows.push(post_one(j, cx, measured, e, own, diff));
        }
        all.insert(e.id.clone(), diff);
    }
    (rows, all)
}

/// The sum of a subsidiary's own journal lines of `rules` on accounts that pass `keep`.
fn own_sum(
    own: &[(EliminationRule, &EntryLine)],
    rules: &[EliminationRule],
    keep: &dyn Fn(&EntryLine) -> bool,
) -> Decimal {
    own.iter().filter(|(rule, l)| rules.contains(rule) && keep(l)).map(|(_, l)| l.amount).sum()
}

fn post_one(
    j: &mut Journal,
    cx: &Context,
    m: &ForNci,
    e: &EntityStructure,
    own: &[(EliminationRule, &EntryLine)],
    differences: Decimal,
) -> NciRow {
    let roles = cx.roles;
    let of = |x: &BTreeMap<EntityId, Decimal>| x.get(&e.id).copied().unwrap_or_default();
    // The subsidiary's own equity, results of the year and translation difference
    // included, less the equity at acquisition that the investment entry removed.
    let equity_total =
        -cx.balances_of(&e.id).filter(|((a, _), _)| cx.is_equity_or_flow(a)).map(|(_, v)| *v).sum::<Decimal>();
    // Unrealised profit the subsidiary made on sales inside the group reduces its
    // post-acquisition equity, and so the NCI's share (upstream).
    let unrealised = own_sum(own, &[EliminationRule::UnrealisedProfit], &|l| cx.is_equity_or_flow(&l.account));
    // A top-side line naming the subsidiary (or booked in its sub-group without naming
    // another entity) is its figure, shared by its NCI (IFRS 10.B94; close/topside.rs).
    let topside = own_sum(own, &[EliminationRule::GroupAdjustment], &|l| cx.is_equity_or_flow(&l.account));
    // The depreciation of the fair value adjustments to date (earlier years', the
    // year's expense and its exchange difference) reduces the net assets the NCI
    // shares, as the adjustments at acquisition were part of them.
    let fair_value_rules = [EliminationRule::FairValueDepreciation, EliminationRule::FairValueDeferredTax];
    let depreciation = own_sum(own, &fair_value_rules, &|l| cx.is_equity_or_flow(&l.account));
    // The fair value adjustment at the closing rate is part of the subsidiary's net
    // assets in the group, as it was part of the net assets acquired. A holder's
    // exchange difference of the year on its investments in subsidiaries is eliminated
    // (the investment rule): its NCI's share of that exchange exposure is already in
    // the subsidiaries' effective NCI, so it is not part of the holder's own equity.
    let holder_fx = of(&m.investment_fx);
    // The same exchange difference of the earlier years the folder holds, carried from
    // the prior year's close, so that the NCI at a year end is the next year's opening.
    let holder_fx_before = cx.brought_forward.investment_fx.get(&e.id).copied().unwrap_or_default();
    let post = equity_total + of(&m.fair_value_now)
        - unrealised
        - topside
        - depreciation
        - of(&m.pre_acquisition)
        - holder_fx
        - holder_fx_before;
    let nci_post = cx.round(post * e.nci);
    // No adjustment for the holder's investments in its own subsidiaries: each
    // subsidiary's NCI at acquisition is its direct outside share (or fair value), and
    // its post-acquisition equity is shared by the effective NCI, which already holds
    // the holder's NCI's indirect part (P 80% of S, S 60% of T: 40% + 20% x 60% = 52%).
    // Deducting the holder's NCI's share of the investment's cost as well would count
    // that part twice. Results before control are not the group's (nor the NCI's); the
    // subsidiary's result as the group sees it also moves by its unrealised profit, the
    // net investment difference moved to OCI and the top-side lines that name it. The
    // depreciation of the fair value adjustments is the subsidiary's expense in the
    // group, and its exchange difference the subsidiary's OCI: the NCI shares both
    // ([`SHARED_RULES`]).
    let result_of = |st: Statement| -> Decimal {
        let view: Decimal = cx.balances_of(&e.id).filter(|((a, _), _)| cx.in_statement(a, st)).map(|(_, v)| *v).sum();
        view + own_sum(own, &SHARED_RULES, &|l| cx.in_statement(&l.account, st))
    };
    let profit = -result_of(Statement::ProfitOrLoss);
    let oci = -result_of(Statement::Oci) + of(&m.fair_value_oci) - holder_fx;
    // The NCI's share leaves each reserve the chart names for its part and the
    // translation reserve for its share of the exchange differences (IAS 21.41), the
    // rest leaves retained earnings.
    let mut from_reserves = reserve_shares(cx, e, own);
    // The NCI's difference on its part of full goodwill, which the investment entry
    // takes from retained earnings, leaves the reserve too, where the difference is.
    let translation = cx.round(-differences * e.nci) + of(&m.nci_goodwill_fx);
    if !translation.is_zero() {
        from_reserves.push((roles.translation_reserve.clone(), translation));
    }
    let from_retained = nci_post - from_reserves.iter().map(|(_, x)| *x).sum::<Decimal>();
    let mut lines = vec![
        line(&roles.non_controlling_interest, &e.id, None, -nci_post),
        line(&roles.retained_earnings, &e.id, None, from_retained),
    ];
    lines.extend(from_reserves.iter().map(|(r, x)| line(r, &e.id, None, *x)));
    j.post(
        EliminationRule::NonControllingInterest,
        cx.parent_of(e),
        vec![e.id.clone()],
        format!(
            "NCI {} of post-acquisition equity {} of {}",
            e.nci.normalize(),
            money::format_amount(post, cx.minor),
            e.id
        ),
        lines,
    );
    // The NCI at acquisition, posted by the investment rule.
    let nci_acq =
        -own_sum(own, &[EliminationRule::InvestmentAndGoodwill], &|l| l.account == roles.non_controlling_interest);
    NciRow {
        entity: e.id.clone(),
        nci_share: e.nci,
        profit: cx.round(profit * e.nci) - of(&m.nci_impairment_year),
        oci: cx.round(oci * e.nci) + of(&m.nci_goodwill_oci),
        equity: nci_acq + nci_post,
    }
}

/// The rules whose lines on a subsidiary are its own figures in the group, shared with
/// its NCI: results before control moved out, unrealised profit, the net investment
/// difference, top-side lines naming it and the fair value adjustments' depreciation.
const SHARED_RULES: [EliminationRule; 6] = [
    EliminationRule::PreAcquisitionResults,
    EliminationRule::UnrealisedProfit,
    EliminationRule::NetInvestmentFx,
    EliminationRule::GroupAdjustment,
    EliminationRule::FairValueDepreciation,
    EliminationRule::FairValueDeferredTax,
];

/// The subsidiary's post-acquisition exchange differences, debit positive, whose NCI
/// share leaves the translation reserve (IAS 21.41: the differences attributable to
/// the NCI are part of the NCI; IAS 1.106(a)). They are those of the translation
/// reserve and the OCI accounts that accumulate into it: in its books, less its reserve
/// at acquisition, plus the exchange differences on its fair value adjustments
/// (`ForNci::reserve_shared`) and on the lines of the rules that are its own figures
/// ([`SHARED_RULES`]); not a holder's difference on its investments in subsidiaries,
/// which the investment rule eliminates (as for the post-acquisition equity).
fn differences(cx: &Context, m: &ForNci, e: &EntityStructure, own: &[(EliminationRule, &EntryLine)]) -> Decimal {
    let of = |x: &BTreeMap<EntityId, Decimal>| x.get(&e.id).copied().unwrap_or_default();
    let tr = &cx.roles.translation_reserve;
    let into = |a: &GroupAccount| {
        a == tr
            || cx
                .chart
                .get(a)
                .is_some_and(|d| d.statement == Statement::Oci && d.reserve.as_ref().is_none_or(|r| r == tr))
    };
    let books: Decimal = cx.balances_of(&e.id).filter(|((a, _), _)| into(a)).map(|(_, v)| *v).sum();
    let journal = own_sum(own, &SHARED_RULES, &|l| into(&l.account));
    let holder_fx = of(&m.investment_fx) + cx.brought_forward.investment_fx.get(&e.id).copied().unwrap_or_default();
    books + journal + of(&m.reserve_shared) + holder_fx
}

/// The NCI's share of the subsidiary's post-acquisition amount in each reserve the
/// chart names (`reserve` of accounts.csv; IAS 1.106(a), (d): each component of equity
/// attributed between the owners and the NCI), debit positive: the reserve's own
/// balance and the OCI accounts accumulating into it, with the subsidiary's journal
/// lines so far on them (what the investment entry removed at acquisition).
fn reserve_shares(
    cx: &Context,
    e: &EntityStructure,
    own: &[(EliminationRule, &EntryLine)],
) -> Vec<(GroupAccount, Decimal)> {
    let named: std::collections::BTreeSet<&GroupAccount> =
        cx.chart.values().filter_map(|d| d.reserve.as_ref()).filter(|r| **r != cx.roles.translation_reserve).collect();
    let into =
        |a: &GroupAccount, r: &GroupAccount| a == r || cx.chart.get(a).and_then(|d| d.reserve.as_ref()) == Some(r);
    named
        .into_iter()
        .map(|r| {
            let books: Decimal = cx.balances_of(&e.id).filter(|((a, _), _)| into(a, r)).map(|(_, v)| *v).sum();
            let journal: Decimal = own.iter().filter(|(_, l)| into(&l.account, r)).map(|(_, l)| l.amount).sum();
            // A reserve is a credit; the NCI's share of it leaves the reserve as a debit.
            (r.clone(), cx.round(-(books + journal) * e.nci))
        })
        .filter(|(_, x)| !x.is_zero())
        .collect()
}

#[cfg(test)]
mod tests {
    use super::super::context::fixture::*;
    use super::*;

    /// P holds 80% of S: NCI 20%. S's books: capital 600, retained earnings 100,
    /// revenue 300, cost of sales 200 (profit 100), OCI gain 50: equity 850 in all,
    /// credits. The equity at acquisition was 500, so post-acquisition equity is 350.
    /// S sold goods to P with 25 of profit still unrealised (upstream): 325 is left,
    /// and the NCI's share is 20% x 325 = 65 (3900 -65): 20% x 50 = 10 of it leaves the
    /// translation reserve (IAS 21.41: the OCI gain is a translation difference), 55
    /// retained earnings. NCI row: profit 20% x (100 - 25) = 15, OCI 20% x 50 = 10,
    /// equity 100 at acquisition + 65 = 165.
    #[test]
    fn the_effective_outside_share_of_post_acquisition_equity() {
        let w = World::new(&["P", "S"], &[holding("P", "S", "0.8", "2020-01-01")], p("2026-06"));
        let bal = balances(&[
            ("S", "3000", None, "-600"),
            ("S", "3200", None, "-100"),
            ("S", "4000", None, "-300"),
            ("S", "5000", None, "200"),
            ("S", "9000", None, "-50"),
        ]);
        let cx = w.context(p("2026-06"), p("2026-01"), bal);
        let mut j = Journal::default();
        let (s, pp) = (id("S"), id("P"));
        j.post(
            EliminationRule::InvestmentAndGoodwill,
            pp.clone(),
            vec![s.clone()],
            "at acquisition".into(),
            vec![line(&acct("3900"), &s, None, d("-100")), line(&acct("3200"), &s, None, d("100"))],
        );
        j.post(
            EliminationRule::UnrealisedProfit,
            pp.clone(),
            vec![s.clone(), pp.clone()],
            "upstream".into(),
            vec![line(&acct("1500"), &pp, Some(&s), d("-25")), line(&acct("5000"), &s, Some(&pp), d("25"))],
        );
        let measured = ForNci { pre_acquisition: BTreeMap::from([(s.clone(), d("500"))]), ..ForNci::default() };
        let (rows, _) = post(&mut j, &cx, &measured);
        let entry = j.entries.last().unwrap_or_else(|| panic!("no entry"));
        assert_eq!(entry.rule, EliminationRule::NonControllingInterest);
        assert_eq!(
            lines(entry),
            [
                ("3900".into(), "S".into(), "-65".into()),
                ("3200".into(), "S".into(), "55".into()),
                ("3300".into(), "S".into(), "10".into())
            ]
        );
        let r = &rows[0];
        assert_eq!((r.nci_share, r.profit, r.oci, r.equity), (d("0.2"), d("15"), d("10"), d("165")));
    }

    /// The same S with a plant fair value adjustment of EUR 600 at the closing rate
    /// (measured by the investment rule) and its depreciation entry: 24 off the plant,
    /// an expense of 23 and an exchange loss of 1 in OCI. Post-acquisition equity
    /// 850 + 600 - 24 - 500 = 926, the NCI's 20% = 185.20, of which 20% x (50 - 1) =
    /// 9.80 leaves the translation reserve (the adjustment is measured at the closing
    /// rate with no difference to date here). NCI row: profit 20% x (100 - 23) = 15.40,
    /// OCI 9.80 (IAS 21.41).
    #[test]
    fn the_nci_bears_its_share_of_the_fair_value_depreciation() {
        let w = World::new(&["P", "S"], &[holding("P", "S", "0.8", "2020-01-01")], p("2026-06"));
        let bal = balances(&[
            ("S", "3000", None, "-600"),
            ("S", "3200", None, "-100"),
            ("S", "4000", None, "-300"),
            ("S", "5000", None, "200"),
            ("S", "9000", None, "-50"),
        ]);
        let cx = w.context(p("2026-06"), p("2026-01"), bal);
        let mut j = Journal::default();
        let s = id("S");
        j.post(
            EliminationRule::FairValueDepreciation,
            id("P"),
            vec![s.clone()],
            "depreciation".into(),
            vec![
                line(&acct("1300"), &s, None, d("-24")),
                line(&acct("5000"), &s, None, d("23")),
                line(&acct("9000"), &s, None, d("1")),
            ],
        );
        let measured = ForNci {
            pre_acquisition: BTreeMap::from([(s.clone(), d("500"))]),
            fair_value_now: BTreeMap::from([(s.clone(), d("600"))]),
            ..ForNci::default()
        };
        let (rows, _) = post(&mut j, &cx, &measured);
        let entry = j.entries.last().unwrap_or_else(|| panic!("no entry"));
        assert_eq!(
            lines(entry),
            [
                ("3900".into(), "S".into(), "-185.2".into()),
                ("3200".into(), "S".into(), "175.4".into()),
                ("3300".into(), "S".into(), "9.8".into())
            ]
        );
        let r = &rows[0];
        assert_eq!((r.profit, r.oci, r.equity), (d("15.4"), d("9.8"), d("185.2")));
    }

    /// S (80%) with a revaluation gain of 40 in OCI on 9100, which the chart puts in the
    /// revaluation surplus 3400, besides the translation difference 50 on 9000 (to the
    /// translation reserve). Equity 600 + 100 + 100 + 50 + 40 = 890 less 500 at
    /// acquisition: 390, NCI 20% = 78. Of it, 20% x 40 = 8 leaves the revaluation
    /// surplus, 20% x 50 = 10 the translation reserve and 60 retained earnings.
    #[test]
    fn the_nci_share_of_a_named_reserve_leaves_that_reserve() {
        let mut w = World::new(&["P", "S"], &[holding("P", "S", "0.8", "2020-01-01")], p("2026-06"));
        let mut surplus = w.chart.iter().find(|a| a.account == acct("3300")).cloned().unwrap_or_else(|| panic!("3300"));
        surplus.account = acct("3400");
        let mut gains = w.chart.iter().find(|a| a.account == acct("9000")).cloned().unwrap_or_else(|| panic!("9000"));
        gains.account = acct("9100");
        gains.reserve = Some(acct("3400"));
        w.chart.extend([surplus, gains]);
        let bal = balances(&[
            ("S", "3000", None, "-600"),
            ("S", "3200", None, "-100"),
            ("S", "4000", None, "-300"),
            ("S", "5000", None, "200"),
            ("S", "9000", None, "-50"),
            ("S", "9100", None, "-40"),
        ]);
        let cx = w.context(p("2026-06"), p("2026-01"), bal);
        let mut j = Journal::default();
        let measured = ForNci { pre_acquisition: BTreeMap::from([(id("S"), d("500"))]), ..ForNci::default() };
        let (rows, _) = post(&mut j, &cx, &measured);
        let entry = j.entries.last().unwrap_or_else(|| panic!("no entry"));
        assert_eq!(
            lines(entry),
            [
                ("3900".into(), "S".into(), "-78".into()),
                ("3200".into(), "S".into(), "60".into()),
                ("3400".into(), "S".into(), "8".into()),
                ("3300".into(), "S".into(), "10".into())
            ]
        );
        assert_eq!(rows[0].oci, d("18"));
    }
}

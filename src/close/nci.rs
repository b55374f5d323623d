//! Rule `non_controlling_interest`: the effective outside share of each subsidiary's
//! post-acquisition equity (IFRS 10.22, B94), profit, OCI and translation difference
//! included (IAS 21.41), multi-tier through effective interests. Also the NCI rows: the
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

/// Posts one entry per subsidiary with an NCI and returns its NCI row.
pub fn post(j: &mut Journal, cx: &Context, measured: &ForNci) -> Vec<NciRow> {
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
    for e in cx.of_method(Method::Full).filter(|e| !e.nci.is_zero()) {
        let own = lines_of.get(&e.id).unwrap_or(&no_lines);
        rows.push(post_one(j, cx, measured, e, own));
    }
    rows
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
    // The fair value adjustment at the closing rate is part of the subsidiary's net
    // assets in the group, as it was part of the net assets acquired. A holder's
    // exchange difference of the year on its investments in subsidiaries is eliminated
    // (the investment rule): its NCI's share of that exchange exposure is already in
    // the subsidiaries' effective NCI, so it is not part of the holder's own equity.
    let holder_fx = of(&m.investment_fx);
    let post = equity_total + of(&m.fair_value_now) - unrealised - of(&m.pre_acquisition) - holder_fx;
    let nci_post = cx.round(post * e.nci);
    // No adjustment for the holder's investments in its own subsidiaries: each
    // subsidiary's NCI at acquisition is its direct outside share (or fair value), and
    // its post-acquisition equity is shared by the effective NCI, which already holds
    // the holder's NCI's indirect part (P 80% of S, S 60% of T: 40% + 20% x 60% = 52%).
    // Deducting the holder's NCI's share of the investment's cost as well would count
    // that part twice. Results before control are not the group's (nor the NCI's).
    let not_the_groups =
        [EliminationRule::PreAcquisitionResults, EliminationRule::UnrealisedProfit, EliminationRule::NetInvestmentFx];
    let result_of = |st: Statement| -> Decimal {
        let view: Decimal = cx.balances_of(&e.id).filter(|((a, _), _)| cx.in_statement(a, st)).map(|(_, v)| *v).sum();
        view + own_sum(own, &not_the_groups, &|l| cx.in_statement(&l.account, st))
    };
    let profit = -result_of(Statement::ProfitOrLoss);
    let oci = -result_of(Statement::Oci) + of(&m.fair_value_oci) - holder_fx;
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
        vec![
            line(&roles.non_controlling_interest, &e.id, None, -nci_post),
            line(&roles.retained_earnings, &e.id, None, nci_post),
        ],
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

//! Rule `intercompany`: intercompany balances and transactions (IFRS 10.B86(c)), pair by
//! pair and kind by kind: every line with a consolidated counterparty on an account with
//! an intercompany kind is reversed, and what the two sides leave over goes to the
//! intercompany difference account, in one balanced entry posted at the pair's lowest
//! common parent.
//!
//! Loans and interest are eliminated here too: their kinds (`loan`, `interest` in the
//! demo chart) are words of the chart like any other, matched per kind. Two kinds have
//! rules of their own: `investment` (`investment.rs`) and a dividend in profit or loss
//! (`dividends.rs`); the exchange difference on a loan that is part of a net investment
//! is moved by `net_investment.rs`.

use std::collections::BTreeMap;

use rust_decimal::Decimal;

use super::context::Context;
use super::journal::{EliminationRule, EntryLine, Journal, line};
use crate::model::EntityId;
use crate::money;

/// Whether a line of `ent` on `acct` with counterparty `cp` belongs to this rule. Both
/// must be consolidated: a subsidiary sold in the year contributes its figures to its
/// last month end, and its pairs of those months are in its `loss_of_control` entry;
/// after the month of the sale they are balances and transactions with a third party
/// (IFRS 10.B98), not eliminated.
fn is_pair_line(cx: &Context, ent: &EntityId, acct: &crate::model::GroupAccount, cp: &EntityId) -> Option<String> {
    let kind = cx.kind_of(acct)?;
    let own_rule = kind == "investment" || (kind == "dividend" && cx.is_flow(acct));
    (cx.consolidated.contains(cp) && cx.consolidated.contains(ent) && !own_rule).then(|| kind.to_string())
}

/// Posts one entry per pair of entities and kind.
pub fn post(j: &mut Journal, cx: &Context) {
    let mut pairs: BTreeMap<(EntityId, EntityId, String), Vec<EntryLine>> = BTreeMap::new();
    for (ent, accts) in &cx.balances {
        for ((acct, cp), amount) in accts {
            let Some(cp) = cp else { continue };
            let Some(kind) = is_pair_line(cx, ent, acct, cp) else { continue };
            let (a, b) = if ent < cp { (ent.clone(), cp.clone()) } else { (cp.clone(), ent.clone()) };
            pairs.entry((a, b, kind)).or_default().push(line(acct, ent, Some(cp), -*amount));
        }
    }
    let difference = &cx.roles.intercompany_difference;
    for ((a, b, kind), mut lines) in pairs {
        let residual: Decimal = lines.iter().map(|l| l.amount).sum();
        let at = cx.lcp(&a, &b);
        if !residual.is_zero() {
            lines.push(line(difference, &at, None, -residual));
        }
        j.post(
            EliminationRule::Intercompany,
            at,
            vec![a.clone(), b.clone()],
            format!(
                "{kind} between {a} and {b}; difference {} to {difference}",
                money::format_amount(residual, cx.minor)
            ),
            lines,
        );
    }
}

#[cfg(test)]
mod tests {
    use super::super::context::fixture::*;
    use super::*;

    /// P lends S 500 (1400 +500 at P, 2100 -500 at S, both naming the other) and S
    /// owes P 120 on trade while P shows 125 receivable: the loan entry reverses both
    /// sides exactly (-500 + 500 = 0); the trade entry reverses 125 and -120, and the
    /// residual 5 goes to the intercompany difference (6950 +5 at P, the pair's lowest
    /// common parent): -125 + 120 + 5 = 0.
    #[test]
    fn pairs_are_reversed_kind_by_kind_with_the_residual_to_the_difference_account() {
        let w = World::new(&["P", "S"], &[holding("P", "S", "0.8", "2020-01-01")], p("2026-06"));
        let bal = balances(&[
            ("P", "1400", Some("S"), "500"),
            ("S", "2100", Some("P"), "-500"),
            ("P", "1650", Some("S"), "125"),
            ("S", "2450", Some("P"), "-120"),
            ("P", "1200", Some("S"), "900"),
            ("S", "7400", Some("P"), "-10"),
        ]);
        let cx = w.context(p("2026-06"), p("2026-01"), bal);
        let mut j = Journal::default();
        post(&mut j, &cx);
        assert_eq!(j.entries.len(), 2, "the investment and the dividend income have their own rules");
        assert_eq!(
            lines(&j.entries[0]),
            [("1400".into(), "P".into(), "-500".into()), ("2100".into(), "S".into(), "500".into())]
        );
        assert_eq!(
            lines(&j.entries[1]),
            [
                ("1650".into(), "P".into(), "-125".into()),
                ("2450".into(), "S".into(), "120".into()),
                ("6950".into(), "P".into(), "5".into())
            ]
        );
        assert_eq!(j.entries[1].description, "trade between P and S; difference (5.00) to 6950");
    }

    /// A counterparty outside the consolidation (an associate, an outsider) is not a pair.
    #[test]
    fn a_counterparty_not_consolidated_is_left_alone() {
        let w = World::new(
            &["P", "S", "A"],
            &[holding("P", "S", "0.8", "2020-01-01"), holding("P", "A", "0.3", "2020-01-01")],
            p("2026-06"),
        );
        let cx = w.context(p("2026-06"), p("2026-01"), balances(&[("P", "1650", Some("A"), "40")]));
        let mut j = Journal::default();
        post(&mut j, &cx);
        assert!(j.entries.is_empty());
    }
    /// A subsidiary sold in the year (S, outside the structure at the period end) still
    /// contributes its balances to the sale; neither its lines naming P nor P's naming
    /// it are paired after the sale (IFRS 10.B98): they are with a third party.
    #[test]
    fn a_subsidiary_sold_is_no_longer_paired() {
        let w = World::new(&["P", "S"], &[], p("2026-12"));
        let bal = balances(&[("P", "1650", Some("S"), "100"), ("S", "2450", Some("P"), "-100")]);
        let cx = w.context(p("2026-12"), p("2026-01"), bal);
        let mut j = Journal::default();
        post(&mut j, &cx);
        assert!(j.entries.is_empty(), "{:?}", j.entries);
    }
}

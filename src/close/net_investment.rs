//! Rule `net_investment_fx`: a monetary item that forms part of the net investment in a
//! foreign operation (IAS 21.15, 21.32). The exchange difference the entity booked in
//! profit or loss on the item stays there in its own accounts and survives the
//! elimination of the item (IAS 21.45); in the group it is recognised in OCI and
//! accumulated in the translation reserve. Only the part since the designation date is
//! moved: this fiscal year's, less what was booked before a designation made during it.

use std::collections::BTreeMap;

use rust_decimal::Decimal;

use super::aggregate::Balances;
use super::context::Context;
use super::journal::{EliminationRule, Journal, line};
use crate::model::{NetInvestment, Period};
use crate::money;

/// The designations of this close: both sides consolidated, designated by the period.
fn in_force<'n>(cx: &Context, items: &'n [NetInvestment]) -> impl Iterator<Item = &'n NetInvestment> {
    items.iter().filter(move |n| {
        cx.consolidated.contains(&n.entity)
            && cx.consolidated.contains(&n.counterparty)
            && Period::of_date(n.from) <= cx.period
    })
}

/// The month ends whose balances [`post`] reads: the one before each designation made
/// during the fiscal year.
pub fn months_needed(cx: &Context, items: &[NetInvestment]) -> Vec<Period> {
    in_force(cx, items).map(|n| Period::of_date(n.from)).filter(|f| *f > cx.fiscal_start).map(|f| f.prev()).collect()
}

/// Posts one entry per designated item, `before` holding the balances of
/// [`months_needed`].
pub fn post(j: &mut Journal, cx: &Context, items: &[NetInvestment], before: &BTreeMap<Period, Balances>) {
    for n in in_force(cx, items) {
        let from = Period::of_date(n.from);
        let key = (n.fx_account.clone(), Some(n.counterparty.clone()));
        let at = |b: &Balances| b.get(&n.entity).and_then(|m| m.get(&key)).copied().unwrap_or_default();
        let ytd = at(&cx.balances);
        let booked_before =
            if from > cx.fiscal_start { before.get(&from.prev()).map(at).unwrap_or_default() } else { Decimal::ZERO };
        let amount = ytd - booked_before;
        j.post(
            EliminationRule::NetInvestmentFx,
            cx.lcp(&n.entity, &n.counterparty),
            vec![n.entity.clone(), n.counterparty.clone()],
            format!(
                "exchange difference of {} on {} with {} (net investment since {}, {}:{}): {} from {} to OCI (IAS 21.32)",
                n.entity,
                n.account,
                n.counterparty,
                n.from,
                n.source.file,
                n.source.line.unwrap_or(0),
                money::format_amount(-amount, cx.minor),
                n.fx_account
            ),
            vec![
                line(&n.fx_account, &n.entity, Some(&n.counterparty), -amount),
                line(&cx.roles.translation_difference, &n.entity, Some(&n.counterparty), amount),
            ],
        );
    }
}

#[cfg(test)]
mod tests {
    use super::super::context::fixture::*;
    use super::*;
    use crate::model::Source;

    fn item(from: &str) -> NetInvestment {
        NetInvestment {
            entity: id("P"),
            counterparty: id("S"),
            account: acct("1400"),
            fx_account: acct("7300"),
            from: chrono::NaiveDate::parse_from_str(from, "%Y-%m-%d").unwrap_or_else(|_| panic!("date")),
            note: String::new(),
            source: Source::file("entities/net_investment.csv"),
        }
    }

    /// P's loan to S, designated on 1 April 2026. P booked exchange gains of 30 on it
    /// this year (7300 -30 with counterparty S), 12 of them by 31 March. Only the 18
    /// since the designation moves to OCI: 7300 +18, 9000 -18.
    #[test]
    fn the_exchange_difference_since_designation_moves_to_oci() {
        let w = World::new(&["P", "S"], &[holding("P", "S", "1", "2020-01-01")], p("2026-06"));
        let cx = w.context(p("2026-06"), p("2026-01"), balances(&[("P", "7300", Some("S"), "-30")]));
        let items = [item("2026-04-01")];
        assert_eq!(months_needed(&cx, &items), [p("2026-03")]);
        let before = BTreeMap::from([(p("2026-03"), balances(&[("P", "7300", Some("S"), "-12")]))]);
        let mut j = Journal::default();
        post(&mut j, &cx, &items, &before);
        assert_eq!(
            lines(&j.entries[0]),
            [("7300".into(), "P".into(), "18".into()), ("9000".into(), "P".into(), "-18".into())]
        );
    }

    /// Designated before the fiscal year: the whole year's difference moves (30).
    #[test]
    fn designated_before_the_year_moves_the_whole_year() {
        let w = World::new(&["P", "S"], &[holding("P", "S", "1", "2020-01-01")], p("2026-06"));
        let cx = w.context(p("2026-06"), p("2026-01"), balances(&[("P", "7300", Some("S"), "-30")]));
        let items = [item("2024-01-01")];
        assert!(months_needed(&cx, &items).is_empty());
        let mut j = Journal::default();
        post(&mut j, &cx, &items, &BTreeMap::new());
        assert_eq!(
            lines(&j.entries[0]),
            [("7300".into(), "P".into(), "30".into()), ("9000".into(), "P".into(), "-30".into())]
        );
    }
}

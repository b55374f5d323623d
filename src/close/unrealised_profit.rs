//! Rule `unrealised_profit`: profit a group entity made on goods another still holds is
//! not realised by the group (IFRS 10.B86(c)). The latest count at or before the period,
//! in the buyer's currency at the closing rate, is taken out of the buyer's inventory.
//! The seller bears it (upstream it is shared with the seller's NCI, `nci.rs`;
//! downstream it is borne by the parent): what was eliminated at the opening is charged
//! to retained earnings, the change of the year to cost of sales, and the exchange
//! difference on the opening part to OCI. Under `policies.deferred_tax` the entry also
//! recognises the deferred tax asset on the elimination (IAS 12.19: the group's
//! carrying amount of the inventory falls below its tax base), at the buyer's rate (the
//! buyer holds the goods and recovers them, IAS 12.47; common practice), with the same
//! split between retained earnings, tax expense of the year and OCI.
//!
//! Goods between the group and an equity-accounted investee are eliminated to the extent
//! of the investor's interest only (IAS 28.28), in an entry of rule `equity_method`
//! (`equity_method::unrealised_lines`: downstream against the investment, upstream
//! against the share of result).

use std::collections::BTreeMap;

use rust_decimal::Decimal;

use super::context::Context;
use super::equity_method;
use super::fair_value::DeferredTax;
use super::journal::{EliminationRule, EntryLine, Journal, line};
use crate::findings::{Finding, Rule};
use crate::model::{EntityId, InventoryProfit, Period, RoleAccounts};
use crate::money;

/// Per seller and buyer: the latest count to the period, and the latest count before the
/// fiscal year (the opening), if any.
type Counts<'a> = BTreeMap<(EntityId, EntityId), (&'a InventoryProfit, Option<&'a InventoryProfit>)>;

fn latest_counts<'a>(items: &'a [InventoryProfit], period: Period, fiscal_start: Period) -> Counts<'a> {
    let mut latest: Counts<'a> = BTreeMap::new();
    for ip in items.iter().filter(|x| x.period <= period) {
        let key = (ip.seller.clone(), ip.buyer.clone());
        let opening = ip.period < fiscal_start;
        let slot = latest.entry(key).or_insert((ip, None));
        if opening {
            slot.1 = Some(match slot.1 {
                Some(o) if o.period >= ip.period => o,
                _ => ip,
            });
        }
        if ip.period >= slot.0.period {
            slot.0 = ip;
        }
    }
    latest
}

/// The settings this rule needs when there are counts to the period: the inventory and
/// cost of sales accounts. `check` raises the same finding.
pub fn missing_accounts(roles: &RoleAccounts, items: &[InventoryProfit], period: Period) -> Option<Finding> {
    let needed = items.iter().any(|x| x.period <= period);
    (needed && (roles.inventory.is_none() || roles.cost_of_sales.is_none())).then(|| {
        Finding::new(
            Rule::SettingInvalid,
            "inventory_profit.csv has rows but group.toml names no `accounts.inventory` and `accounts.cost_of_sales`",
            "name the group accounts for inventory and cost of sales",
        )
    })
}

/// Posts one entry per seller and buyer, both consolidated; raises the missing
/// settings as a finding instead.
pub fn post(
    j: &mut Journal,
    cx: &Context,
    items: &[InventoryProfit],
    tax: Option<&DeferredTax>,
    findings: &mut Vec<Finding>,
) {
    let (Some(inventory), Some(cogs)) = (&cx.roles.inventory, &cx.roles.cost_of_sales) else {
        findings.extend(missing_accounts(cx.roles, items, cx.period));
        return;
    };
    for ((seller, buyer), (now, open)) in &latest_counts(items, cx.period, cx.fiscal_start) {
        // With an equity-accounted investee on one side, the investor's share only
        // (IAS 28.28); pairs the group does not consolidate are findings of
        // `equity_method::findings`.
        let investee = equity_method::investee_pair(cx, seller, buyer);
        let share = match investee {
            Some((e, _)) if tax.is_none() => e.effective_interest,
            None if cx.consolidated.contains(seller) && cx.consolidated.contains(buyer) => Decimal::ONE,
            _ => continue,
        };
        let Some(bc) = cx.currencies.get(buyer).copied() else { continue };
        let urp_now_fc = if now.period < cx.fiscal_start && open.is_none() {
            Decimal::ZERO
        } else {
            now.inventory_amount * now.margin_rate * share
        };
        let urp_open_fc = open.map(|o| o.inventory_amount * o.margin_rate * share).unwrap_or_default();
        let (Some(urp_now), Some(urp_open_then), Some(urp_open_now)) = (
            cx.at_closing(bc, urp_now_fc, cx.period),
            cx.at_closing(bc, urp_open_fc, cx.fiscal_start.prev()),
            cx.at_closing(bc, urp_open_fc, cx.period),
        ) else {
            continue;
        };
        // The opening as the earlier years' closes left it: their exchange differences
        // on it in the translation reserve (IAS 21.41), the rest in retained earnings.
        let earlier = earlier_years(cx, items, (seller, buyer), share, bc);
        let carried: Decimal = earlier.iter().map(|(then, now)| now - then).sum();
        if let Some(pair) = investee {
            let group = if pair.1 == equity_method::Direction::Downstream { seller } else { buyer };
            let text = format!(
                "share {} of the profit of {seller} on goods held by {buyer}: {bc} {} x {} x {} = {} (IAS 28.28)",
                share.normalize(),
                now.inventory_amount,
                now.margin_rate,
                share.normalize(),
                money::format_amount(urp_now, cx.minor)
            );
            equity_method::post_unrealised(j, cx, pair, group, (urp_now, urp_open_then, urp_open_now, carried), text);
            continue;
        }
        let change = urp_now - urp_open_now;
        let fx = urp_open_now - urp_open_then;
        let mut lines = vec![
            line(inventory, buyer, Some(seller), -urp_now),
            line(&cx.roles.retained_earnings, seller, Some(buyer), urp_open_then - carried),
            line(&cx.roles.translation_reserve, seller, Some(buyer), carried),
            line(cogs, seller, Some(buyer), change),
            line(&cx.roles.translation_difference, seller, Some(buyer), fx),
        ];
        if let Some((tax, t)) = tax.and_then(|x| Some((x, x.rate(buyer)?))) {
            let carried_tax: Decimal = earlier.iter().map(|(then, now)| cx.round(*now * t) - cx.round(*then * t)).sum();
            let amounts = (urp_now, urp_open_then, urp_open_now);
            lines.extend(deferred_tax_lines(cx, tax, t, (seller, buyer), amounts, carried_tax));
        }
        lines.retain(|l| !(l.amount.is_zero() && l.account == cx.roles.translation_reserve));
        j.post(
            EliminationRule::UnrealisedProfit,
            cx.lcp(seller, buyer),
            vec![seller.clone(), buyer.clone()],
            format!(
                "profit of {seller} on goods held by {buyer}: {bc} {} x {} = {}",
                now.inventory_amount,
                now.margin_rate,
                money::format_amount(urp_now, cx.minor)
            ),
            lines,
        );
    }
}

/// The elimination at the opening as the earlier fiscal years' closes left it: each
/// year's exchange difference on its own opening count (the count before it, at the
/// closing rates of the year's start and end: `(then, now)` per year) went to OCI and
/// so to the translation reserve, the rest is in retained earnings. Walks back year by
/// year while there is a count before the year and its rates; a year without them ends
/// the walk (its difference, and the earlier ones', stay in retained earnings, as a
/// folder that does not hold them cannot tell).
fn earlier_years(
    cx: &Context,
    items: &[InventoryProfit],
    (seller, buyer): (&EntityId, &EntityId),
    share: Decimal,
    bc: crate::model::Currency,
) -> Vec<(Decimal, Decimal)> {
    let mut out = Vec::new();
    let mut year_start = cx.fiscal_start.plus_months(-12);
    loop {
        let before = items
            .iter()
            .filter(|x| &x.seller == seller && &x.buyer == buyer && x.period < year_start)
            .max_by_key(|x| x.period);
        let Some(count) = before else { break };
        let fc = count.inventory_amount * count.margin_rate * share;
        let (Some(then), Some(now)) =
            (cx.at_closing(bc, fc, year_start.prev()), cx.at_closing(bc, fc, year_start.plus_months(11)))
        else {
            break;
        };
        out.push((then, now));
        year_start = year_start.plus_months(-12);
    }
    out
}

/// The deferred tax asset on an elimination of unrealised profit: rate `t` times each
/// part, in the buyer's books' currency as translated, mirrored on the seller's side
/// (retained earnings for the opening, tax income of the year for the change, OCI for
/// the exchange difference on the opening part), so that the NCI of an upstream seller
/// shares the profit net of tax. `carried` is the tax on the earlier years' exchange
/// differences ([`earlier_years`]): in the translation reserve, not retained earnings.
fn deferred_tax_lines(
    cx: &Context,
    tax: &DeferredTax,
    t: Decimal,
    (seller, buyer): (&EntityId, &EntityId),
    (now, open_then, open_now): (Decimal, Decimal, Decimal),
    carried: Decimal,
) -> Vec<EntryLine> {
    let (now, open_then, open_now) = (cx.round(now * t), cx.round(open_then * t), cx.round(open_now * t));
    vec![
        line(&tax.account, buyer, Some(seller), now),
        line(&cx.roles.retained_earnings, seller, Some(buyer), -open_then + carried),
        line(&cx.roles.translation_reserve, seller, Some(buyer), -carried),
        line(&tax.expense, seller, Some(buyer), -(now - open_now)),
        line(&cx.roles.translation_difference, seller, Some(buyer), -(open_now - open_then)),
    ]
}

#[cfg(test)]
mod tests {
    use super::super::context::fixture::*;
    use super::*;
    use crate::load::{Quote, Rate};
    use crate::model::{Currency, Source};

    fn count(period: &str, inventory: &str, margin: &str) -> InventoryProfit {
        InventoryProfit {
            seller: id("P"),
            buyer: id("S"),
            period: p(period),
            inventory_amount: d(inventory),
            margin_rate: d(margin),
            source: Source::file("entities/inventory_profit.csv"),
        }
    }

    /// P sells to S (USD). At the opening S held USD 1,000 of P's goods at a 20% margin:
    /// USD 200 unrealised, EUR 100 at 2 USD per EUR. At the period S holds USD 600 at
    /// 25%: USD 150, and the dollar has fallen to 2.5 per EUR, so EUR 60. The opening
    /// USD 200 is EUR 80 at today's rate. Inventory -60; retained earnings +100 (the
    /// opening elimination); cost of sales 60 - 80 = -20 (less unrealised profit than
    /// at the opening); OCI 80 - 100 = -20 (the exchange loss on the opening part).
    /// -60 + 100 - 20 - 20 = 0.
    /// P sells to its 30% associate A (USD), which holds USD 1,000 of P's goods at a 20%
    /// margin: USD 200 unrealised, of which P's interest USD 60 (IAS 28.28), EUR 30 at 2
    /// USD per EUR, charged to P's cost of sales and off the investment in A. With the
    /// deferred tax policy the pair is left to its finding (`equity_method::findings`).
    #[test]
    fn downstream_to_an_associate_to_the_extent_of_the_interest() {
        let w = World::new(&["P", "A"], &[holding("P", "A", "0.3", "2020-01-01")], p("2026-06"));
        let cx = w.context(p("2026-06"), p("2026-01"), Default::default());
        let items = [InventoryProfit { buyer: id("A"), ..count("2026-05", "1000", "0.2") }];
        let mut j = Journal::default();
        let mut findings = Vec::new();
        post(&mut j, &cx, &items, None, &mut findings);
        assert!(findings.is_empty());
        assert_eq!(j.entries[0].rule, EliminationRule::EquityMethod);
        assert_eq!(
            lines(&j.entries[0]),
            [("1300".into(), "P".into(), "-30".into()), ("5000".into(), "P".into(), "30".into())]
        );
        let tax = DeferredTax { account: acct("1700"), expense: acct("8100"), rates: Default::default() };
        let mut j = Journal::default();
        post(&mut j, &cx, &items, Some(&tax), &mut findings);
        assert!(j.entries.is_empty());
    }

    #[test]
    fn downstream_with_an_opening_count_and_a_rate_change() {
        let w = World::new(&["P", "S"], &[holding("P", "S", "1", "2020-01-01")], p("2026-06"));
        let mut cx = w.context(p("2026-06"), p("2026-01"), Default::default());
        let usd = Currency::parse("USD").unwrap_or_else(|| panic!("USD"));
        cx.closing.insert((usd, p("2026-06")), Rate { value: d("2.5"), quote: Quote::UnitsPerPresentation });
        let items = [count("2025-12", "1000", "0.2"), count("2026-05", "600", "0.25"), count("2026-07", "1", "0.5")];
        let mut j = Journal::default();
        let mut findings = Vec::new();
        post(&mut j, &cx, &items, None, &mut findings);
        assert!(findings.is_empty());
        assert_eq!(
            lines(&j.entries[0]),
            [
                ("1500".into(), "S".into(), "-60".into()),
                ("3200".into(), "P".into(), "100".into()),
                ("5000".into(), "P".into(), "-20".into()),
                ("9000".into(), "P".into(), "-20".into())
            ]
        );
    }

    /// Counts but no inventory account: a finding, nothing posted.
    #[test]
    fn counts_without_the_accounts_are_a_finding() {
        let w = World::new(&["P", "S"], &[holding("P", "S", "1", "2020-01-01")], p("2026-06"));
        let mut roles = roles();
        roles.inventory = None;
        let mut cx = w.context(p("2026-06"), p("2026-01"), Default::default());
        cx.roles = &roles;
        let mut j = Journal::default();
        let mut findings = Vec::new();
        post(&mut j, &cx, &[count("2026-05", "600", "0.25")], None, &mut findings);
        assert!(j.entries.is_empty());
        assert_eq!(findings.iter().map(|f| f.rule).collect::<Vec<_>>(), [Rule::SettingInvalid]);
        assert!(missing_accounts(&roles, &[count("2026-07", "600", "0.25")], p("2026-06")).is_none());
    }

    /// The same counts with deferred tax at the buyer S's 25% (IAS 12.19): the asset
    /// 25% x 60 = 15 on S (2500); the opening 25% x 100 = 25 credited to P's retained
    /// earnings; tax expense 25% x (60 - 80) = -5 reversed: +5; OCI 25% x -20 mirrored:
    /// +5. 15 - 25 + 5 + 5 = 0. The profit eliminated net of tax is 75%.
    #[test]
    fn deferred_tax_on_the_elimination_at_the_buyers_rate() {
        let w = World::new(&["P", "S"], &[holding("P", "S", "1", "2020-01-01")], p("2026-06"));
        let mut cx = w.context(p("2026-06"), p("2026-01"), Default::default());
        let usd = Currency::parse("USD").unwrap_or_else(|| panic!("USD"));
        cx.closing.insert((usd, p("2026-06")), Rate { value: d("2.5"), quote: Quote::UnitsPerPresentation });
        let tax = DeferredTax {
            rates: std::collections::BTreeMap::from([(id("S"), d("0.25")), (id("P"), d("0.4"))]),
            account: acct("2500"),
            expense: acct("8000"),
        };
        let items = [count("2025-12", "1000", "0.2"), count("2026-05", "600", "0.25")];
        let mut j = Journal::default();
        let mut findings = Vec::new();
        post(&mut j, &cx, &items, Some(&tax), &mut findings);
        assert_eq!(
            lines(&j.entries[0])[4..],
            [
                ("2500".into(), "S".into(), "15".into()),
                ("3200".into(), "P".into(), "-25".into()),
                ("8000".into(), "P".into(), "5".into()),
                ("9000".into(), "P".into(), "5".into())
            ]
        );
    }
}

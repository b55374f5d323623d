//! The close: from translated entity balances to the group trial balance, through the
//! elimination journal (IFRS 10.B86) and the non-controlling interests.
//!
//! The chain is `aggregate -> eliminate -> roll_up`, all on year-to-date balances at the
//! period end (balance-sheet accounts cumulative, income and expense since the start of
//! the fiscal year); month and quarter views are differences of two such closes.
//!
//! - `aggregate`: each entity's translated balances, plus its translation difference
//!   (OCI for the year, the reserve for what was brought forward), taken by method:
//!   full 100%, proportionate at the group's share (IFRS 11.20), equity and none not at all.
//! - `eliminate`: the elimination journal, every entry balanced and posted at the lowest
//!   common parent of the entities it concerns: intercompany balances and transactions
//!   (both sides reversed, the residual to the intercompany difference account);
//!   intragroup dividends against the payer's retained earnings; results before the
//!   acquisition date into pre-acquisition equity; the investment against the equity at
//!   acquisition with goodwill (IFRS 3.32) held in the subsidiary's currency at the
//!   closing rate (IAS 21.47); the equity method (IAS 28.10); the exchange difference on
//!   a loan that is part of a net investment, from profit or loss to OCI (IAS 21.32); the
//!   IFRIC 16 step-by-step attribution of translation differences between operations;
//!   and the NCI's share of post-acquisition equity, multi-tier through effective
//!   interests.
//! - `roll_up`: contributions plus eliminations, per group account.
//!
//! Close knows nothing about files.

use std::collections::{BTreeMap, BTreeSet};

use polars::prelude::*;
use rust_decimal::Decimal;
use serde::Serialize;

use crate::load::Dataset;
use crate::map_accounts::period_index;
use crate::model::*;
use crate::money::{self, column_decimals};
use crate::proof::Check;
use crate::structure::GroupStructure;
use crate::translate::Translated;

/// One line of an elimination entry.
#[derive(Debug, Clone, PartialEq, Eq, Serialize)]
pub struct EntryLine {
    pub account: GroupAccount,
    /// The entity whose figure the line corrects.
    pub entity: EntityId,
    pub counterparty: Option<EntityId>,
    /// Presentation currency, debit positive.
    pub amount: Decimal,
}

/// An elimination entry: balanced, named after its rule, posted at the lowest common
/// parent of the entities it concerns.
#[derive(Debug, Clone, PartialEq, Eq, Serialize)]
pub struct Entry {
    pub id: String,
    pub rule: &'static str,
    pub posted_at: EntityId,
    pub entities: Vec<EntityId>,
    pub description: String,
    pub lines: Vec<EntryLine>,
}

impl Entry {
    pub fn total(&self) -> Decimal {
        self.lines.iter().map(|l| l.amount).sum()
    }
}

/// The NCI of one subsidiary.
#[derive(Debug, Clone, PartialEq, Eq, Serialize)]
pub struct NciRow {
    pub entity: EntityId,
    pub nci_share: Decimal,
    /// Share of the subsidiary's profit of the year (credit positive).
    pub profit: Decimal,
    /// Share of its OCI of the year, translation difference included (IAS 21.41).
    pub oci: Decimal,
    /// NCI in equity at the period end (credit positive).
    pub equity: Decimal,
}

/// The translation reserve of one consolidated foreign operation at the period end
/// (IFRIC 16.17), gains (credits) positive, before the NCI's share: what was brought
/// forward (as delivered in the opening balances), the year's differences that belong to
/// the operation under the group's method, and their sum, the amount IAS 21.48 would
/// reclassify to profit or loss on its disposal. It covers the operation's own
/// translated figures; the exchange difference on its goodwill (IAS 21.47) is in its
/// `investment_and_goodwill` entry.
#[derive(Debug, Clone, PartialEq, Eq, Serialize)]
pub struct OperationReserveRow {
    pub operation: EntityId,
    pub method: Ifric16Method,
    pub brought_forward: Decimal,
    pub year: Decimal,
    pub reserve: Decimal,
}

/// A close on year-to-date balances at one period end.
pub struct Close {
    pub period: Period,
    /// entity, group_account, counterparty, amount: each entity's contribution by method.
    pub contributions: DataFrame,
    pub journal: Vec<Entry>,
    /// Group account -> amount (debit positive).
    pub group: BTreeMap<GroupAccount, Decimal>,
    pub nci: Vec<NciRow>,
    /// The translation reserve per consolidated foreign operation.
    pub reserves: Vec<OperationReserveRow>,
    pub findings: Vec<crate::findings::Finding>,
}

/// Each entity's translated year-to-date balances at `period`, translation difference
/// included, taken by its consolidation method.
pub fn aggregate(ds: &Dataset, t: &Translated, s: &GroupStructure, period: Period) -> PolarsResult<DataFrame> {
    let _span = tracing::info_span!("aggregate", period = %period).entered();
    let fiscal_start = year_start(ds, t, period);
    let p = period_index(period);
    let p0 = period_index(fiscal_start.prev());
    let minor = t.minor as usize;
    // Shares by method: full 1, proportionate the group's share, others excluded.
    let mut ids = Vec::new();
    let mut shares = Vec::new();
    for e in s.entities() {
        if matches!(e.method, Method::Full | Method::Proportionate) {
            ids.push(e.id.to_string());
            shares.push(s.share_for_proportionate(&e.id).to_string());
        }
    }
    let share_df = DataFrame::new(
        ids.len(),
        vec![
            Column::new("entity".into(), ids),
            Column::new("share".into(), shares)
                .strict_cast(&DataType::Decimal(38, crate::structure::INTEREST_DECIMALS as usize))?,
        ],
    )?;
    let lines = t.lines.clone().lazy().filter(col("period_index").eq(lit(p))).select([
        col("entity"),
        col("group_account"),
        col("counterparty"),
        col("balance_presentation").alias("amount"),
    ]);
    let roles = &ds.settings.accounts;
    // The translation difference of the year goes to OCI, what was brought forward to
    // the reserve (IAS 21.39c, 21.41).
    let td = t.differences.clone().lazy().filter(col("period_index").lt_eq(lit(p))).select([
        col("entity"),
        when(col("period_index").eq(lit(p0)))
            .then(lit(roles.translation_reserve.as_str()))
            .otherwise(lit(roles.translation_difference.as_str()))
            .alias("group_account"),
        lit(NULL).cast(DataType::String).alias("counterparty"),
        col("translation_difference").alias("amount"),
    ]);
    let all = concat([lines, td], UnionArgs::default())?
        .join(share_df.lazy(), [col("entity")], [col("entity")], JoinArgs::new(JoinType::Inner))
        .with_column(
            (col("amount").strict_cast(DataType::Decimal(38, minor + crate::structure::INTEREST_DECIMALS as usize))
                * col("share"))
            .round(minor as u32, money::polars_round_mode(ds.settings.policies.rounding))
            .strict_cast(DataType::Decimal(38, minor))
            .alias("amount"),
        )
        .group_by([col("entity"), col("group_account"), col("counterparty")])
        .agg([col("amount").sum()])
        .sort(["entity", "group_account", "counterparty"], SortMultipleOptions::default().with_nulls_last(false))
        .collect()?;
    Ok(all)
}

/// The start of the fiscal year a close at `period` belongs to. A close at the month
/// before the translated year (the opening, for the statement of changes in equity) is
/// a close of the opening balances: its brought-forward translation difference is the
/// reserve, not OCI, and nothing of the year has happened yet.
fn year_start(ds: &Dataset, t: &Translated, period: Period) -> Period {
    period.fiscal_year_start(ds.settings.fiscal_year_start).max(t.fiscal_start)
}

/// Builds a journal; ids are assigned in order.
struct Journal {
    entries: Vec<Entry>,
}

impl Journal {
    fn post(
        &mut self,
        rule: &'static str,
        posted_at: EntityId,
        entities: Vec<EntityId>,
        description: String,
        lines: Vec<EntryLine>,
    ) {
        let lines: Vec<EntryLine> = lines.into_iter().filter(|l| !l.amount.is_zero()).collect();
        if lines.is_empty() {
            return;
        }
        let id = format!("E{:04}", self.entries.len() + 1);
        let entry = Entry { id, rule, posted_at, entities, description, lines };
        // A broken entry is a bug in this module, never a data problem.
        assert!(
            entry.total().is_zero(),
            "elimination {} ({}) does not balance: {}",
            entry.id,
            entry.rule,
            entry.total()
        );
        self.entries.push(entry);
    }
}

fn line(account: &GroupAccount, entity: &EntityId, counterparty: Option<&EntityId>, amount: Decimal) -> EntryLine {
    EntryLine { account: account.clone(), entity: entity.clone(), counterparty: counterparty.cloned(), amount }
}

/// Per entity: balances by group account and counterparty (the contribution frame).
type Balances = BTreeMap<EntityId, BTreeMap<(GroupAccount, Option<EntityId>), Decimal>>;

fn balances(contrib: &DataFrame) -> PolarsResult<Balances> {
    let e = crate::money::column_strings(contrib, "entity")?;
    let a = crate::money::column_strings(contrib, "group_account")?;
    let c = crate::money::column_strings(contrib, "counterparty")?;
    let v = column_decimals(contrib.column("amount")?)?;
    let mut out: Balances = BTreeMap::new();
    for i in 0..contrib.height() {
        let (Some(e), Some(a)) = (&e[i], &a[i]) else { continue };
        *out.entry(EntityId::new(e))
            .or_default()
            .entry((GroupAccount::new(a), c[i].clone().map(EntityId::new)))
            .or_default() += v[i].unwrap_or_default();
    }
    Ok(out)
}

/// The close at `period` on year-to-date balances.
pub fn close_at(ds: &Dataset, t: &Translated, s: &GroupStructure, period: Period) -> PolarsResult<Close> {
    let contributions = aggregate(ds, t, s, period)?;
    let eliminate_span = tracing::info_span!("eliminate", period = %period).entered();
    let bal = balances(&contributions)?;
    let mut findings = Vec::new();
    let roles = &ds.settings.accounts;
    let minor = t.minor;
    let mode = ds.settings.policies.rounding;
    let chart: BTreeMap<&GroupAccount, &AccountDef> = ds.accounts.iter().map(|a| (&a.account, a)).collect();
    let consolidated: BTreeSet<EntityId> = s
        .entities()
        .iter()
        .filter(|e| matches!(e.method, Method::Full | Method::Proportionate))
        .map(|e| e.id.clone())
        .collect();
    let lcp = |a: &EntityId, b: &EntityId| s.lowest_common_parent(a, b).unwrap_or_else(|| s.parent().clone());
    let mut j = Journal { entries: Vec::new() };
    let kind_of = |a: &GroupAccount| chart.get(a).and_then(|d| d.ic_kind.clone());
    let is_pl = |a: &GroupAccount| chart.get(a).is_some_and(|d| d.statement != Statement::BalanceSheet);

    // 1. Results before the acquisition date belong to the equity acquired (IFRS 10.B88):
    //    they are moved from income and expense into pre-acquisition retained earnings.
    let fiscal_start = year_start(ds, t, period);
    let mut pre_control: BTreeMap<Period, Balances> = BTreeMap::new();
    for e in s.entities().iter().filter(|e| e.method == Method::Full) {
        let Some(from) = e.controlled_from else { continue };
        let control_month = Period::of_date(from);
        if control_month <= fiscal_start || control_month > period {
            continue;
        }
        // Income and expense (and translation difference) of the months before control.
        let before = control_month.prev();
        // One aggregate per month, shared by every entity acquired in the month after it.
        if let std::collections::btree_map::Entry::Vacant(slot) = pre_control.entry(before) {
            slot.insert(aggregate(ds, t, s, before).and_then(|c| balances(&c))?);
        }
        let mut lines = Vec::new();
        let mut total = Decimal::ZERO;
        if let Some(b) = pre_control.get(&before).and_then(|pre| pre.get(&e.id)) {
            for ((acct, cp), amount) in b {
                if is_pl(acct) {
                    lines.push(line(acct, &e.id, cp.as_ref(), -*amount));
                    total += *amount;
                }
            }
        }
        lines.push(line(&roles.retained_earnings, &e.id, None, total));
        j.post(
            "pre_acquisition_results",
            e.immediate_parent.clone().unwrap_or_else(|| s.parent().clone()),
            vec![e.id.clone()],
            format!("results of {} before control on {from} moved into equity at acquisition", e.id),
            lines,
        );
    }

    // 2. Intercompany balances and transactions, pair by pair and kind by kind.
    let mut pairs: BTreeMap<(EntityId, EntityId, String), Vec<EntryLine>> = BTreeMap::new();
    let mut dividends: Vec<(EntityId, EntityId, GroupAccount, Decimal)> = Vec::new();
    for (ent, accts) in &bal {
        for ((acct, cp), amount) in accts {
            let (Some(kind), Some(cp)) = (kind_of(acct), cp) else { continue };
            if !consolidated.contains(cp) || kind == "investment" {
                continue;
            }
            if kind == "dividend" && is_pl(acct) {
                dividends.push((ent.clone(), cp.clone(), acct.clone(), *amount));
                continue;
            }
            let (a, b) = if ent < cp { (ent.clone(), cp.clone()) } else { (cp.clone(), ent.clone()) };
            pairs.entry((a, b, kind)).or_default().push(line(acct, ent, Some(cp), -*amount));
        }
    }
    for ((a, b, kind), mut lines) in pairs {
        let residual: Decimal = lines.iter().map(|l| l.amount).sum();
        let at = lcp(&a, &b);
        if !residual.is_zero() {
            lines.push(line(&roles.intercompany_difference, &at, None, -residual));
        }
        j.post(
            "intercompany",
            at,
            vec![a.clone(), b.clone()],
            format!(
                "{kind} between {a} and {b}; difference {} to {}",
                money::format_amount(residual, minor),
                roles.intercompany_difference
            ),
            lines,
        );
    }
    // Dividends from group entities: income of the receiver against the payer's
    // retained earnings, where the dividend was charged.
    for (receiver, payer, acct, amount) in dividends {
        let at = lcp(&receiver, &payer);
        j.post(
            "intragroup_dividend",
            at,
            vec![receiver.clone(), payer.clone()],
            format!("dividend of {payer} to {receiver}"),
            vec![line(&acct, &receiver, Some(&payer), -amount), line(&roles.retained_earnings, &payer, None, amount)],
        );
    }

    // 2a. IFRIC 16 step by step: the part of an indirect operation's translation
    //     difference that arises on retranslating its intermediate-currency figures
    //     belongs to the intermediate parent's operation (IFRIC 16.17). The entry moves it
    //     in OCI from the entity to its intermediate parent; group totals do not change.
    let split = crate::translate::reserves_by_operation(ds, t, &s.immediate_parents())?;
    let year_parts: Vec<&crate::translate::OperationReserve> =
        split.iter().filter(|r| r.period >= fiscal_start && r.period <= period).collect();
    let full: BTreeSet<&EntityId> = s.entities().iter().filter(|e| e.method == Method::Full).map(|e| &e.id).collect();
    let mut moved: BTreeMap<(EntityId, EntityId), Decimal> = BTreeMap::new();
    for r in year_parts.iter().filter(|r| r.operation != r.entity) {
        *moved.entry((r.entity.clone(), r.operation.clone())).or_default() += r.amount;
    }
    for ((entity, operation), amount) in &moved {
        if !full.contains(entity) || !full.contains(operation) {
            continue;
        }
        // Gains are credits: the intermediate parent takes the credit off the entity.
        j.post(
            "ifric16_step_by_step",
            lcp(entity, operation),
            vec![entity.clone(), operation.clone()],
            format!(
                "translation difference of {entity} on retranslating its figures in {}'s currency belongs to {operation}'s operation: {}",
                operation,
                money::format_amount(*amount, minor)
            ),
            vec![
                line(&roles.translation_difference, entity, None, *amount),
                line(&roles.translation_difference, operation, None, -*amount),
            ],
        );
    }
    // 2a'. Monetary items that form part of the net investment in a foreign operation
    //     (IAS 21.32): the exchange difference the entity booked in profit or loss on the
    //     item stays there in its own accounts and survived the elimination of the item
    //     (IAS 21.45); in the group it is recognised in OCI and accumulated in the
    //     translation reserve. Only the part since the designation date is moved.
    for n in &ds.net_investments {
        if !consolidated.contains(&n.entity) || !consolidated.contains(&n.counterparty) {
            continue;
        }
        let from = Period::of_date(n.from);
        if from > period {
            continue;
        }
        let key = (n.fx_account.clone(), Some(n.counterparty.clone()));
        let ytd = bal.get(&n.entity).and_then(|m| m.get(&key)).copied().unwrap_or_default();
        let before = if from > fiscal_start {
            let b = aggregate(ds, t, s, from.prev()).and_then(|c| balances(&c))?;
            b.get(&n.entity).and_then(|m| m.get(&key)).copied().unwrap_or_default()
        } else {
            Decimal::ZERO
        };
        let amount = ytd - before;
        j.post(
            "net_investment_fx",
            lcp(&n.entity, &n.counterparty),
            vec![n.entity.clone(), n.counterparty.clone()],
            format!(
                "exchange difference of {} on {} with {} (net investment since {}, {}:{}): {} from {} to OCI (IAS 21.32)",
                n.entity,
                n.account,
                n.counterparty,
                n.from,
                n.source.file,
                n.source.line.unwrap_or(0),
                money::format_amount(-amount, minor),
                n.fx_account
            ),
            vec![
                line(&n.fx_account, &n.entity, Some(&n.counterparty), -amount),
                line(&roles.translation_difference, &n.entity, Some(&n.counterparty), amount),
            ],
        );
    }

    let p0_index = period_index(fiscal_start.prev());
    let mut brought_forward: BTreeMap<EntityId, Decimal> = BTreeMap::new();
    {
        let ent = crate::money::column_strings(&t.differences, "entity")?;
        let idx: Vec<Option<i32>> = t.differences.column("period_index")?.i32()?.iter().collect();
        let td = column_decimals(t.differences.column("translation_difference")?)?;
        for i in 0..t.differences.height() {
            if let (Some(e), Some(p)) = (&ent[i], idx[i])
                && p == p0_index
            {
                *brought_forward.entry(EntityId::new(e)).or_default() -= td[i].unwrap_or_default();
            }
        }
    }
    let mut reserves: BTreeMap<EntityId, (Decimal, Decimal)> = BTreeMap::new();
    for e in &full {
        reserves.insert((*e).clone(), (brought_forward.get(*e).copied().unwrap_or_default(), Decimal::ZERO));
    }
    for r in &year_parts {
        // A part whose entity or operation is not consolidated in full stays where it arose.
        let op = if full.contains(&r.entity) && full.contains(&r.operation) { &r.operation } else { &r.entity };
        if let Some(slot) = reserves.get_mut(op) {
            slot.1 += r.amount;
        }
    }
    let reserves: Vec<OperationReserveRow> = reserves
        .into_iter()
        .map(|(operation, (bf, year))| OperationReserveRow {
            operation,
            method: ds.settings.policies.ifric16,
            brought_forward: money::unsigned_zero(bf),
            year: money::unsigned_zero(year),
            reserve: money::unsigned_zero(bf + year),
        })
        .collect();

    let closing: BTreeMap<(Currency, Period), crate::load::Rate> =
        ds.rates.iter().map(|r| ((r.currency, r.period), r.closing)).collect();
    let rate_of = |c: Currency, p: Period| closing.get(&(c, p)).copied();
    let pres = ds.settings.presentation_currency;
    // 2b. Unrealised profit on goods still held inside the group: the latest count at
    //     or before the period, in the buyer's currency at the closing rate. The
    //     seller bears it (upstream it is shared with the seller's NCI, downstream
    //     borne by the parent); what was eliminated at the opening is charged to
    //     retained earnings, the change of the year to cost of sales, and the exchange
    //     difference on the opening part to OCI.
    let mut latest: BTreeMap<(EntityId, EntityId), (&InventoryProfit, Option<&InventoryProfit>)> = BTreeMap::new();
    for ip in ds.inventory_profits.iter().filter(|x| x.period <= period) {
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
    if let (Some(inventory), Some(cogs)) = (&roles.inventory, &roles.cost_of_sales) {
        for ((seller, buyer), (now, open)) in &latest {
            if !consolidated.contains(seller) || !consolidated.contains(buyer) {
                continue;
            }
            let Some(bc) = ds.entity(buyer).map(|e| e.currency) else { continue };
            let at_rate = |x: Decimal, p: Period| -> Option<Decimal> {
                if bc == pres {
                    Some(money::round(x, minor, mode))
                } else {
                    rate_of(bc, p).map(|r| money::round(r.apply(x), minor, mode))
                }
            };
            let urp_now_fc = if now.period < fiscal_start && open.is_none() {
                Decimal::ZERO
            } else {
                now.inventory_amount * now.margin_rate
            };
            let urp_open_fc = open.map(|o| o.inventory_amount * o.margin_rate).unwrap_or_default();
            let (Some(urp_now), Some(urp_open_then), Some(urp_open_now)) =
                (at_rate(urp_now_fc, period), at_rate(urp_open_fc, fiscal_start.prev()), at_rate(urp_open_fc, period))
            else {
                continue;
            };
            let change = urp_now - urp_open_now;
            let fx = urp_open_now - urp_open_then;
            j.post(
                "unrealised_profit",
                lcp(seller, buyer),
                vec![seller.clone(), buyer.clone()],
                format!(
                    "profit of {seller} on goods held by {buyer}: {bc} {} x {} = {}",
                    now.inventory_amount,
                    now.margin_rate,
                    money::format_amount(urp_now, minor)
                ),
                vec![
                    line(inventory, buyer, Some(seller), -urp_now),
                    line(&roles.retained_earnings, seller, Some(buyer), urp_open_then),
                    line(cogs, seller, Some(buyer), change),
                    line(&roles.translation_difference, seller, Some(buyer), fx),
                ],
            );
        }
    } else if !latest.is_empty() {
        findings.push(crate::findings::Finding::new(
            crate::findings::Rule::SettingInvalid,
            "inventory_profit.csv has rows but group.toml names no `accounts.inventory` and `accounts.cost_of_sales`",
            "name the group accounts for inventory and cost of sales",
        ));
    }

    // 3. Investments against equity at acquisition, goodwill (IFRS 3.32), for every
    //    subsidiary consolidated in full with an acquisition record.
    let acq: BTreeMap<&EntityId, &Acquisition> = ds.acquisitions.iter().map(|a| (&a.owned, a)).collect();
    // Investment lines: holder -> (owned -> carrying amount).
    let mut invest: BTreeMap<EntityId, Vec<(EntityId, GroupAccount, Decimal)>> = BTreeMap::new();
    for (ent, accts) in &bal {
        for ((acct, cp), amount) in accts {
            if let (Some(k), Some(cp)) = (kind_of(acct), cp)
                && k == "investment"
            {
                invest.entry(cp.clone()).or_default().push((ent.clone(), acct.clone(), *amount));
            }
        }
    }
    let investment_accounts: BTreeSet<&GroupAccount> = invest.values().flatten().map(|(_, a, _)| a).collect();
    let investment_lines = investment_months(ds, t, &investment_accounts, period)?;
    let mut pre_acquisition: BTreeMap<EntityId, Decimal> = BTreeMap::new();
    // The NCI's exchange difference of the year on its part of full goodwill.
    let mut nci_goodwill_oci: BTreeMap<EntityId, Decimal> = BTreeMap::new();
    // Fair value adjustments at the closing rate and their exchange difference of the
    // year, per subsidiary.
    let mut fair_value_now: BTreeMap<EntityId, Decimal> = BTreeMap::new();
    // The NCI's share of this fiscal year's goodwill impairment, under full goodwill.
    let mut nci_impairment_year: BTreeMap<EntityId, Decimal> = BTreeMap::new();
    let mut fair_value_oci: BTreeMap<EntityId, Decimal> = BTreeMap::new();
    // This fiscal year's exchange difference on each holder's eliminated investments in
    // subsidiaries, per holder (step 5 takes it out of the holder's NCI).
    let mut investment_fx: BTreeMap<EntityId, Decimal> = BTreeMap::new();
    for e in s.entities().iter().filter(|e| e.method == Method::Full && &e.id != s.parent()) {
        let Some(a) = acq.get(&e.id) else {
            if invest.contains_key(&e.id) {
                findings.push(
                    crate::findings::Finding::new(
                        crate::findings::Rule::AcquisitionMissing,
                        format!("{} is consolidated and held as an investment, but entities/acquisitions.csv has no row for it", e.id),
                        "add its acquisition: date, consideration, NCI measurement and net assets at acquisition",
                    )
                    .entity(&e.id),
                );
            }
            continue;
        };
        // At the opening, this year's impairment has not been recognised yet.
        let at_opening;
        let a: &Acquisition = if period < t.fiscal_start {
            at_opening = Acquisition {
                impairment: a.impairment - a.impairment_year,
                impairment_year: Decimal::ZERO,
                ..(*a).clone()
            };
            &at_opening
        } else {
            a
        };
        let Some(entity) = ds.entity(&e.id) else { continue };
        let fc = entity.currency;
        // NCI at acquisition: the direct outside share of net assets, or fair value.
        let outside = Decimal::ONE - e.group_capital;
        // A fair value for an NCI that does not exist would put an NCI in the trial
        // balance that no NCI row explains: it blocks, and nothing is posted for it.
        let fair_value_without_nci = outside.is_zero() && a.nci_fair_value.is_some_and(|x| !x.is_zero());
        if fair_value_without_nci {
            findings.push(
                crate::findings::Finding::new(
                    crate::findings::Rule::ValueInvalid,
                    format!(
                        "{}: `nci_fair_value` is {} {} but the parent and its subsidiaries hold a capital share of {} in {}: there is no non-controlling interest",
                        e.id,
                        fc,
                        a.nci_fair_value.unwrap_or_default(),
                        e.group_capital.normalize(),
                        e.id
                    ),
                    "leave `nci_fair_value` empty and measure `share_of_net_assets` for a wholly owned subsidiary, or correct the holding in entities/holdings.csv if outside shareholders exist",
                )
                .at(&a.source)
                .entity(&e.id),
            );
        }
        let nci_fc = match a.nci_measurement {
            _ if outside.is_zero() => Decimal::ZERO,
            NciMeasurement::FairValue => a.nci_fair_value.unwrap_or_default(),
            NciMeasurement::ShareOfNetAssets => a.net_assets * outside,
        };
        let goodwill_fc = a.consideration + nci_fc - a.net_assets - a.impairment;
        let to_pres = |x: Decimal, p: Period| -> Decimal {
            if fc == pres {
                money::round(x, minor, mode)
            } else {
                rate_of(fc, p).map(|r| money::round(r.apply(x), minor, mode)).unwrap_or_default()
            }
        };
        // A bargain purchase (IFRS 3.34): the excess of the net assets over consideration
        // and NCI is a gain of the acquirer at the acquisition date, not negative
        // goodwill. It is measured once, at the acquisition date's rate, and belongs to
        // the owners of the parent (the NCI is measured by its own basis, IFRS 3.19).
        let gross_goodwill_fc = goodwill_fc + a.impairment;
        let bargain_fc = if gross_goodwill_fc.is_sign_negative() { -gross_goodwill_fc } else { Decimal::ZERO };
        let bargain_account = if bargain_fc.is_zero() {
            None
        } else if Period::of_date(a.date) >= fiscal_start {
            // In the acquisition year the gain is profit of the year; later it is part of
            // retained earnings.
            match &roles.bargain_purchase_gain {
                Some(acct) => Some(acct.clone()),
                None => {
                    findings.push(
                        crate::findings::Finding::new(
                            crate::findings::Rule::SettingInvalid,
                            format!(
                                "{}: the acquisition on {} is a bargain purchase but group.toml names no `accounts.bargain_purchase_gain`",
                                e.id, a.date
                            ),
                            "name the profit or loss account for the gain on a bargain purchase as `bargain_purchase_gain` in [accounts] (IFRS 3.34)",
                        )
                        .at(&a.source)
                        .entity(&e.id),
                    );
                    None
                }
            }
        } else {
            Some(roles.retained_earnings.clone())
        };
        let bargain_fc = if bargain_account.is_some() { bargain_fc } else { Decimal::ZERO };
        if goodwill_fc.is_sign_negative() {
            findings.push(
                crate::findings::Finding::new(
                    crate::findings::Rule::GoodwillNegative,
                    format!(
                        "{}: consideration {} + NCI {} - net assets {} = {} {} is negative: a bargain purchase{}",
                        e.id,
                        a.consideration,
                        nci_fc.round_dp(fc.minor_unit()),
                        a.net_assets,
                        fc,
                        goodwill_fc.round_dp(fc.minor_unit()),
                        match &bargain_account {
                            Some(acct) => format!(", recognised as a gain of {} {} on {acct} at {} (IFRS 3.34)", fc, bargain_fc.round_dp(fc.minor_unit()), a.date),
                            None => String::new(),
                        }
                    ),
                    "before keeping the gain, reassess whether every asset acquired and liability assumed is identified, and review the measurement of the net assets, the NCI and the consideration (IFRS 3.36)",
                )
                .at(&a.source)
                .entity(&e.id)
                .severity(crate::findings::Severity::Warning),
            );
        }
        // With the gain recognised there is no goodwill.
        let goodwill_fc = goodwill_fc + bargain_fc;
        let goodwill = to_pres(goodwill_fc, period);
        // At the acquisition date's rate, the ratio of the net assets in the two
        // currencies. Multiplied before dividing, so that a share of the net assets is
        // exact and rounds once (the ratio alone need not terminate in 28 digits).
        let at_hist = |x: Decimal| -> Decimal {
            if a.net_assets.is_zero() {
                money::round(x, minor, mode)
            } else {
                money::round(x * a.net_assets_presentation / a.net_assets, minor, mode)
            }
        };
        let nci_pres = at_hist(nci_fc);
        let impairment_pres = to_pres(a.impairment, period);
        pre_acquisition.insert(e.id.clone(), a.net_assets_presentation);
        // Fair value adjustments at acquisition (IFRS 3.18): part of the net assets
        // acquired that the subsidiary's books do not hold. The group carries them in the
        // subsidiary's currency at the closing rate (IAS 21.47).
        let fva = match &a.fair_value_account {
            Some(acct) if !a.fair_value_adjustment.is_zero() => {
                if chart.get(acct).is_some_and(|d| d.statement == Statement::BalanceSheet) {
                    Some((acct.clone(), at_hist(a.fair_value_adjustment), to_pres(a.fair_value_adjustment, period)))
                } else {
                    findings.push(
                        crate::findings::Finding::new(
                            crate::findings::Rule::AccountUnknown,
                            format!(
                                "{}: `fair_value_account` {acct} is not a balance-sheet account of entities/accounts.csv",
                                e.id
                            ),
                            "name the group account of the asset or liability the fair value adjustment belongs to",
                        )
                        .at(&a.source)
                        .entity(&e.id),
                    );
                    None
                }
            }
            _ => None,
        };
        let mut lines = Vec::new();
        let mut investment_total = Decimal::ZERO;
        // This year's exchange difference on each eliminated investment, per holder.
        let mut holders_fx_year: Vec<(EntityId, Decimal)> = Vec::new();
        for (holder, acct, amount) in invest.get(&e.id).into_iter().flatten() {
            if consolidated.contains(holder) {
                lines.push(line(acct, holder, Some(&e.id), -*amount));
                investment_total += *amount;
                let acquired_this_year =
                    Period::of_date(a.date) >= fiscal_start && ds.entity(holder).is_some_and(|h| h.currency == fc);
                let acquired: Option<(Period, &dyn Fn(Decimal) -> Decimal)> =
                    if acquired_this_year { Some((Period::of_date(a.date), &at_hist)) } else { None };
                let months = investment_lines.get(&(holder.clone(), acct.clone(), e.id.clone()));
                let fx = investment_fx_year(ds, t, months, period, acquired);
                if !fx.is_zero() {
                    holders_fx_year.push((holder.clone(), fx));
                }
            }
        }
        // The equity acquired: the subsidiary's contributed capital (share capital,
        // premium and other equity accounts that are not reserves of the group) in full,
        // and the rest of the net assets acquired from its retained earnings.
        let reserves = [&roles.retained_earnings, &roles.translation_reserve, &roles.non_controlling_interest];
        let mut capital = Decimal::ZERO;
        for ((acct, cp), amount) in bal.get(&e.id).into_iter().flatten() {
            let is_capital =
                chart.get(acct).is_some_and(|d| d.class == AccountClass::Equity) && !reserves.contains(&acct);
            if is_capital && !amount.is_zero() {
                lines.push(line(acct, &e.id, cp.as_ref(), -*amount));
                capital += -*amount;
            }
        }
        // The books hold the net assets acquired less the fair value adjustment: only
        // that part of the retained earnings is pre-acquisition in the books, and the
        // adjustment itself is added to its account.
        let fva_hist = fva.as_ref().map(|x| x.1).unwrap_or_default();
        lines.push(line(&roles.retained_earnings, &e.id, None, a.net_assets_presentation - fva_hist - capital));
        if let Some((acct, _, now)) = &fva {
            lines.push(line(acct, &e.id, None, *now));
            fair_value_now.insert(e.id.clone(), *now);
        }
        lines.push(line(&roles.goodwill, &e.id, None, goodwill));
        if let Some(acct) = &bargain_account {
            lines.push(line(acct, &e.id, None, -at_hist(bargain_fc)));
        }
        lines.push(line(&roles.non_controlling_interest, &e.id, None, -nci_pres));
        // Goodwill impairment to date (IAS 36.124: never reversed), at the rate goodwill
        // is carried at: the part of this fiscal year is an expense of the year (IAS
        // 36.60), the part of earlier years sits in retained earnings.
        let impairment_year_pres = match (&roles.goodwill_impairment, a.impairment_year.is_zero()) {
            (_, true) => Decimal::ZERO,
            (Some(acct), false) => {
                let x = to_pres(a.impairment_year, period);
                lines.push(line(acct, &e.id, None, x));
                x
            }
            (None, false) => {
                findings.push(
                    crate::findings::Finding::new(
                        crate::findings::Rule::SettingInvalid,
                        format!(
                            "{}: `impairment_year` is {} but group.toml names no `accounts.goodwill_impairment`",
                            e.id, a.impairment_year
                        ),
                        "name the expense account for goodwill impairment in [accounts]",
                    )
                    .at(&a.source)
                    .entity(&e.id),
                );
                Decimal::ZERO
            }
        };
        if !(impairment_pres - impairment_year_pres).is_zero() {
            lines.push(line(&roles.retained_earnings, &e.id, None, impairment_pres - impairment_year_pres));
        }
        let residual: Decimal = lines.iter().map(|l| l.amount).sum();
        // The residual is exchange difference: goodwill at the closing rate against
        // equity at historical rates (IAS 21.47). This year's part goes to OCI, the part
        // brought forward to the reserve.
        let opening_period =
            if Period::of_date(a.date) > fiscal_start.prev() { None } else { Some(fiscal_start.prev()) };
        // The exchange difference is that of the goodwill before impairment: the
        // impairment is charged at the closing rate, so together they move the carrying
        // amount from its rate at acquisition to the closing rate exactly.
        let gross_fc = goodwill_fc + a.impairment;
        let goodwill_fx_year = match opening_period {
            Some(p0) => to_pres(gross_fc, period) - to_pres(gross_fc, p0),
            None => to_pres(gross_fc, period) - at_hist(gross_fc),
        };
        // The fair value adjustment's exchange difference, like goodwill's, is OCI of
        // the year for the part since the opening; it is shared with the NCI as the
        // subsidiary's other net assets are (step 5).
        let fva_fx_year = match (&fva, opening_period) {
            (None, _) => Decimal::ZERO,
            (Some((_, _, now)), Some(p0)) => *now - to_pres(a.fair_value_adjustment, p0),
            (Some((_, hist, now)), None) => *now - *hist,
        };
        if !fva_fx_year.is_zero() {
            fair_value_oci.insert(e.id.clone(), fva_fx_year);
        }
        let goodwill_fx_year = goodwill_fx_year + fva_fx_year;
        // A fall in goodwill's value in the presentation currency is a loss (a debit).
        lines.push(line(&roles.translation_difference, &e.id, None, -goodwill_fx_year));
        // The holder's translation difference of the year includes the exchange
        // difference on its investment, retranslated at the closing rate; in the group the
        // investment is replaced by the subsidiary's net assets, whose exchange difference
        // is the subsidiary's own translation difference (IAS 21.39c). The investment's
        // part of the year is reversed against the holder's OCI of the year (a gain on
        // the investment was a credit: the reversal is a debit); only the part brought
        // forward goes to the reserve.
        let mut investment_fx_total = Decimal::ZERO;
        for (holder, fx) in &holders_fx_year {
            lines.push(line(&roles.translation_difference, holder, Some(&e.id), *fx));
            *investment_fx.entry(holder.clone()).or_default() += *fx;
            investment_fx_total += *fx;
        }
        lines.push(line(&roles.translation_reserve, &e.id, None, -residual + goodwill_fx_year - investment_fx_total));
        // Under full goodwill (IFRS 3.19) part of the goodwill is the NCI's: its fair
        // value less its share of the net assets. The exchange difference on that part
        // is the NCI's (IAS 21.41), and so is its share of the impairment, allocated on
        // the same basis as profit (IAS 36.C6): both are moved from the owners' equity
        // to the NCI.
        if a.nci_measurement == NciMeasurement::FairValue {
            let nci_goodwill_fc = nci_fc - outside * a.net_assets;
            let nci_impairment = to_pres(outside * a.impairment, period);
            if !impairment_year_pres.is_zero() {
                // The NCI's share of the year's impairment is part of its share of profit.
                nci_impairment_year.insert(e.id.clone(), to_pres(outside * a.impairment_year, period));
            }
            let nci_goodwill_now = to_pres(nci_goodwill_fc, period);
            let fx_to_date = nci_goodwill_now - at_hist(nci_goodwill_fc);
            let fx_year = match opening_period {
                Some(p0) => nci_goodwill_now - to_pres(nci_goodwill_fc, p0),
                None => fx_to_date,
            };
            lines.push(line(&roles.non_controlling_interest, &e.id, None, nci_impairment - fx_to_date));
            lines.push(line(&roles.retained_earnings, &e.id, None, fx_to_date - nci_impairment));
            nci_goodwill_oci.insert(e.id.clone(), fx_year);
        }
        let holders: Vec<EntityId> = invest.get(&e.id).into_iter().flatten().map(|(h, _, _)| h.clone()).collect();
        let mut involved = holders.clone();
        involved.push(e.id.clone());
        j.post(
            "investment_and_goodwill",
            e.immediate_parent.clone().unwrap_or_else(|| s.parent().clone()),
            involved,
            format!(
                "investment in {} ({}) against equity at acquisition {}, goodwill {} {} (IFRS 3.32), NCI at acquisition {}{}",
                e.id,
                money::format_amount(investment_total, minor),
                money::format_amount(a.net_assets_presentation, minor),
                fc,
                money::format_amount(goodwill_fc, fc.minor_unit()),
                money::format_amount(nci_pres, minor),
                if impairment_pres.is_zero() { String::new() } else { format!(", impairment to date {}", money::format_amount(impairment_pres, minor)) }
            ),
            lines,
        );
    }

    // 4. Equity method (IAS 28.10): cost plus the share of post-acquisition results.
    for e in s.entities().iter().filter(|e| e.method == Method::Equity) {
        let Some(a) = acq.get(&e.id) else {
            findings.push(
                crate::findings::Finding::new(
                    crate::findings::Rule::AcquisitionMissing,
                    format!("{} is accounted for by the equity method but entities/acquisitions.csv has no row for it", e.id),
                    "add its acquisition date and net assets at acquisition, so that the share of post-acquisition results can be computed",
                )
                .entity(&e.id),
            );
            continue;
        };
        let share = e.effective_interest;
        // The associate's own translated balances (it is not aggregated).
        let own = aggregate_one(ds, t, &e.id, period)?;
        let opening = aggregate_one(ds, t, &e.id, fiscal_start.prev())?;
        let sum_where = |m: &BTreeMap<GroupAccount, Decimal>, f: &dyn Fn(&AccountDef) -> bool| -> Decimal {
            m.iter().filter(|(a, _)| chart.get(a).is_some_and(|d| f(d))).map(|(_, v)| *v).sum()
        };
        let profit = -sum_where(&own, &|d| d.statement == Statement::ProfitOrLoss);
        let oci = -sum_where(&own, &|d| d.statement == Statement::Oci);
        let equity_open = -sum_where(&opening, &|d| d.class == AccountClass::Equity);
        let prior = equity_open - a.net_assets_presentation;
        let r = |x: Decimal| money::round(x * share, minor, mode);
        let (sp, so, spr) = (r(profit), r(oci), r(prior));
        let holder = e.direct_holders.first().map(|h| h.owner.clone()).unwrap_or_else(|| s.parent().clone());
        j.post(
            "equity_method",
            holder.clone(),
            vec![holder.clone(), e.id.clone()],
            format!(
                "share {} of {}: profit {}, OCI {}, prior years {}",
                share.normalize(),
                e.id,
                money::format_amount(sp, minor),
                money::format_amount(so, minor),
                money::format_amount(spr, minor)
            ),
            vec![
                line(&roles.equity_investments, &holder, Some(&e.id), sp + so + spr),
                line(&roles.equity_result, &holder, Some(&e.id), -sp),
                line(&roles.translation_difference, &holder, Some(&e.id), -so),
                line(&roles.retained_earnings, &holder, Some(&e.id), -spr),
            ],
        );
    }

    // 5. Non-controlling interests: the effective outside share of each subsidiary's
    //    post-acquisition equity (profit, OCI and translation difference included, IAS
    //    21.41).
    let mut nci_rows = Vec::new();
    let view_pl = |ent: &EntityId, st: Statement| -> Decimal {
        bal.get(ent)
            .map(|m| {
                m.iter().filter(|((a, _), _)| chart.get(a).is_some_and(|d| d.statement == st)).map(|(_, v)| *v).sum()
            })
            .unwrap_or_default()
    };
    let journal_so_far = j.entries.clone();
    // The lines of the journal so far by the entity they correct, with their rule: each
    // subsidiary's NCI reads only its own.
    let mut lines_of: BTreeMap<&EntityId, Vec<(&'static str, &EntryLine)>> = BTreeMap::new();
    for x in &journal_so_far {
        for l in &x.lines {
            lines_of.entry(&l.entity).or_default().push((x.rule, l));
        }
    }
    let no_lines = Vec::new();
    for e in s.entities().iter().filter(|e| e.method == Method::Full && !e.nci.is_zero()) {
        let own_lines = lines_of.get(&e.id).unwrap_or(&no_lines);
        // The subsidiary's own equity, results of the year and translation difference
        // included, less the equity at acquisition that the investment entry removed.
        let equity_total = -bal
            .get(&e.id)
            .map(|m| {
                m.iter()
                    .filter(|((a, _), _)| {
                        chart
                            .get(a)
                            .is_some_and(|d| d.class == AccountClass::Equity || d.statement != Statement::BalanceSheet)
                    })
                    .map(|(_, v)| *v)
                    .sum::<Decimal>()
            })
            .unwrap_or_default();
        // Unrealised profit the subsidiary made on sales inside the group reduces its
        // post-acquisition equity, and so the NCI's share (upstream).
        let unrealised: Decimal = own_lines
            .iter()
            .filter(|(rule, _)| *rule == "unrealised_profit")
            .map(|(_, l)| *l)
            .filter(|l| {
                chart
                    .get(&l.account)
                    .is_some_and(|d| d.class == AccountClass::Equity || d.statement != Statement::BalanceSheet)
            })
            .map(|l| l.amount)
            .sum();
        // The fair value adjustment at the closing rate is part of the subsidiary's net
        // assets in the group, as it was part of the net assets acquired.
        // A holder's exchange difference of the year on its investments in subsidiaries
        // is eliminated (step 3): its NCI's share of that exchange exposure is already in
        // the subsidiaries' effective NCI, so it is not part of the holder's own equity.
        let holder_fx = investment_fx.get(&e.id).copied().unwrap_or_default();
        let post = equity_total + fair_value_now.get(&e.id).copied().unwrap_or_default()
            - unrealised
            - pre_acquisition.get(&e.id).copied().unwrap_or_default()
            - holder_fx;
        let nci_post = money::round(post * e.nci, minor, mode);
        // No adjustment for the holder's investments in its own subsidiaries: each
        // subsidiary's NCI at acquisition is its direct outside share (or fair value),
        // and its post-acquisition equity is shared by the effective NCI, which already
        // holds the holder's NCI's indirect part (P 80% of S, S 60% of T: 40% + 20% x
        // 60% = 52%). Deducting the holder's NCI's share of the investment's cost as
        // well would count that part twice.
        // Results before control are not the group's (nor the NCI's): the entry of step 1.
        let pre_results = |st: Statement| -> Decimal {
            own_lines
                .iter()
                .filter(|(rule, _)| {
                    matches!(*rule, "pre_acquisition_results" | "unrealised_profit" | "net_investment_fx")
                })
                .map(|(_, l)| *l)
                .filter(|l| chart.get(&l.account).is_some_and(|d| d.statement == st))
                .map(|l| l.amount)
                .sum()
        };
        let profit = -(view_pl(&e.id, Statement::ProfitOrLoss) + pre_results(Statement::ProfitOrLoss));
        let oci = -(view_pl(&e.id, Statement::Oci) + pre_results(Statement::Oci))
            + fair_value_oci.get(&e.id).copied().unwrap_or_default()
            - holder_fx;
        j.post(
            "non_controlling_interest",
            e.immediate_parent.clone().unwrap_or_else(|| s.parent().clone()),
            vec![e.id.clone()],
            format!(
                "NCI {} of post-acquisition equity {} of {}",
                e.nci.normalize(),
                money::format_amount(post, minor),
                e.id
            ),
            vec![
                line(&roles.non_controlling_interest, &e.id, None, -nci_post),
                line(&roles.retained_earnings, &e.id, None, nci_post),
            ],
        );
        // Posted before this loop, so in the journal so far.
        let nci_acq: Decimal = own_lines
            .iter()
            .filter(|(rule, _)| *rule == "investment_and_goodwill")
            .map(|(_, l)| *l)
            .filter(|l| l.account == roles.non_controlling_interest)
            .map(|l| -l.amount)
            .sum();
        nci_rows.push(NciRow {
            entity: e.id.clone(),
            nci_share: e.nci,
            profit: money::round(profit * e.nci, minor, mode)
                - nci_impairment_year.get(&e.id).copied().unwrap_or_default(),
            oci: money::round(oci * e.nci, minor, mode) + nci_goodwill_oci.get(&e.id).copied().unwrap_or_default(),
            equity: nci_acq + nci_post,
        });
    }

    // Roll-up: contributions plus eliminations, per account.
    drop(eliminate_span);
    let _span = tracing::info_span!("roll_up", period = %period).entered();
    let group = roll_up(&contributions, &j.entries)?;
    Ok(Close { period, contributions, journal: j.entries, group, nci: nci_rows, reserves, findings })
}

/// This fiscal year's exchange difference on one holder's translated investment in
/// one subsidiary (account `account`, counterparty `owned`): month by month, the change
/// in the translated balance less the month's local movement at the month's rate
/// (the translated balance over the local balance, the closing rate of a closing-basis
/// account). One held at the opening starts from its translation at the opening. One
/// acquired this year enters at its translation at acquisition: `acquired` names the
/// month and translates at the acquisition date's rate, given where the holder's
/// currency is the subsidiary's; otherwise it enters at the month's closing rate. In
/// the presentation currency the difference is 0. A month that takes the
/// balance to zero (a disposal) adds no difference; the rest is the holder's own.
/// The holder's translation difference of the year holds exactly this amount for the
/// investment, which the subsidiary's own translation difference replaces in the group.
/// Per month: (movement, balance) in the local currency and balance in the presentation
/// currency of one investment line.
type LineMonths = BTreeMap<i32, (Decimal, Decimal, Decimal)>;

/// The translated investment lines (holder, account, owned) of the fiscal year to
/// `period`, by month, read in one pass over the translated lines.
fn investment_months(
    ds: &Dataset,
    t: &Translated,
    accounts: &BTreeSet<&GroupAccount>,
    period: Period,
) -> PolarsResult<BTreeMap<(EntityId, GroupAccount, EntityId), LineMonths>> {
    let mut out: BTreeMap<(EntityId, GroupAccount, EntityId), LineMonths> = BTreeMap::new();
    let Some(is_investment) = accounts.iter().map(|a| col("group_account").eq(lit(a.as_str()))).reduce(|x, y| x.or(y))
    else {
        return Ok(out);
    };
    let p = period_index(period);
    let p0 = period_index(year_start(ds, t, period).prev());
    let df = t
        .lines
        .clone()
        .lazy()
        .filter(
            is_investment
                .and(col("counterparty").is_not_null())
                .and(col("period_index").gt_eq(lit(p0)))
                .and(col("period_index").lt_eq(lit(p))),
        )
        .group_by([col("entity"), col("group_account"), col("counterparty"), col("period_index")])
        .agg([col("amount_local").sum(), col("balance_local").sum(), col("balance_presentation").sum()])
        .collect()?;
    let ent = money::column_strings(&df, "entity")?;
    let acct = money::column_strings(&df, "group_account")?;
    let cp = money::column_strings(&df, "counterparty")?;
    let idx: Vec<Option<i32>> = df.column("period_index")?.i32()?.iter().collect();
    let al = column_decimals(df.column("amount_local")?)?;
    let bl = column_decimals(df.column("balance_local")?)?;
    let bp = column_decimals(df.column("balance_presentation")?)?;
    for i in 0..df.height() {
        let (Some(e), Some(a), Some(c), Some(m)) = (&ent[i], &acct[i], &cp[i], idx[i]) else { continue };
        out.entry((EntityId::new(e), GroupAccount::new(a), EntityId::new(c)))
            .or_default()
            .insert(m, (al[i].unwrap_or_default(), bl[i].unwrap_or_default(), bp[i].unwrap_or_default()));
    }
    Ok(out)
}

fn investment_fx_year(
    ds: &Dataset,
    t: &Translated,
    by_month: Option<&LineMonths>,
    period: Period,
    acquired: Option<(Period, &dyn Fn(Decimal) -> Decimal)>,
) -> Decimal {
    let p = period_index(period);
    let p0 = period_index(year_start(ds, t, period).prev());
    let empty = LineMonths::new();
    let by_month = by_month.unwrap_or(&empty);
    let mode = ds.settings.policies.rounding;
    let mut fx = Decimal::ZERO;
    let mut before = by_month.get(&p0).map(|x| x.2).unwrap_or_default();
    for m in (p0 + 1)..=p {
        let (amount_local, balance_local, balance_pres) = by_month.get(&m).copied().unwrap_or_default();
        if !balance_local.is_zero() {
            let movement = match acquired {
                Some((month, at_acquisition)) if period_index(month) == m => at_acquisition(amount_local),
                _ => money::round(amount_local * balance_pres / balance_local, t.minor, mode),
            };
            fx += balance_pres - before - movement;
        }
        before = balance_pres;
    }
    fx
}

/// One entity's translated balances by group account at `period`, translation
/// difference included, at 100%.
fn aggregate_one(
    ds: &Dataset,
    t: &Translated,
    entity: &EntityId,
    period: Period,
) -> PolarsResult<BTreeMap<GroupAccount, Decimal>> {
    let p = period_index(period);
    let fiscal_start = year_start(ds, t, period);
    let p0 = period_index(fiscal_start.prev());
    let roles = &ds.settings.accounts;
    let df = t
        .lines
        .clone()
        .lazy()
        .filter(col("entity").eq(lit(entity.as_str())).and(col("period_index").eq(lit(p))))
        .group_by([col("group_account")])
        .agg([col("balance_presentation").sum().alias("amount")])
        .collect()?;
    let mut out: BTreeMap<GroupAccount, Decimal> = BTreeMap::new();
    let a = crate::money::column_strings(&df, "group_account")?;
    let v = column_decimals(df.column("amount")?)?;
    for i in 0..df.height() {
        if let Some(a) = &a[i] {
            *out.entry(GroupAccount::new(a)).or_default() += v[i].unwrap_or_default();
        }
    }
    let td = t
        .differences
        .clone()
        .lazy()
        .filter(col("entity").eq(lit(entity.as_str())).and(col("period_index").lt_eq(lit(p))))
        .collect()?;
    let idx: Vec<Option<i32>> = td.column("period_index")?.i32()?.iter().collect();
    let v = column_decimals(td.column("translation_difference")?)?;
    for i in 0..td.height() {
        let acct = if idx[i] == Some(p0) { &roles.translation_reserve } else { &roles.translation_difference };
        *out.entry(acct.clone()).or_default() += v[i].unwrap_or_default();
    }
    Ok(out)
}

/// Contributions plus eliminations, per group account (columnar).
pub fn roll_up(contributions: &DataFrame, journal: &[Entry]) -> PolarsResult<BTreeMap<GroupAccount, Decimal>> {
    let scale = match contributions.column("amount")?.dtype() {
        DataType::Decimal(_, s) => *s,
        _ => 2,
    };
    let accounts: Vec<String> = journal.iter().flat_map(|e| e.lines.iter().map(|l| l.account.to_string())).collect();
    let amounts: Vec<String> = journal.iter().flat_map(|e| e.lines.iter().map(|l| l.amount.to_string())).collect();
    let elim = DataFrame::new(
        accounts.len(),
        vec![
            Column::new("group_account".into(), accounts),
            Column::new("amount".into(), amounts).strict_cast(&DataType::Decimal(38, scale))?,
        ],
    )?;
    let df = concat(
        [
            contributions
                .clone()
                .lazy()
                .select([col("group_account"), col("amount").strict_cast(DataType::Decimal(38, scale))]),
            elim.lazy(),
        ],
        UnionArgs::default(),
    )?
    .group_by([col("group_account")])
    .agg([col("amount").sum()])
    .sort(["group_account"], SortMultipleOptions::default())
    .collect()?;
    let a = crate::money::column_strings(&df, "group_account")?;
    let v = column_decimals(df.column("amount")?)?;
    Ok(a.into_iter().zip(v).filter_map(|(a, v)| Some((GroupAccount::new(a?), v.unwrap_or_default()))).collect())
}

/// The invariants of a close, each with its figures.
pub fn prove(c: &Close) -> PolarsResult<Vec<Check>> {
    let mut checks = Vec::new();
    let unbalanced: Vec<String> =
        c.journal.iter().filter(|e| !e.total().is_zero()).map(|e| format!("{} {}", e.id, e.total())).collect();
    checks.push(Check::new(
        "eliminations_balance",
        unbalanced.is_empty(),
        if unbalanced.is_empty() {
            format!("{} entries, each summing to 0", c.journal.len())
        } else {
            unbalanced.join("; ")
        },
    ));
    // Group = entities + eliminations, recomputed row by row, independently of roll_up.
    let mut naive: BTreeMap<GroupAccount, Decimal> = BTreeMap::new();
    let a = crate::money::column_strings(&c.contributions, "group_account")?;
    let v = column_decimals(c.contributions.column("amount")?)?;
    for (a, v) in a.iter().zip(v.iter()) {
        if let Some(a) = a {
            *naive.entry(GroupAccount::new(a)).or_default() += v.unwrap_or_default();
        }
    }
    for e in &c.journal {
        for l in &e.lines {
            *naive.entry(l.account.clone()).or_default() += l.amount;
        }
    }
    naive.retain(|_, v| !v.is_zero());
    let mut group = c.group.clone();
    group.retain(|_, v| !v.is_zero());
    checks.push(Check::new(
        "group_equals_entities_plus_eliminations",
        naive == group,
        format!("{} group accounts recomputed line by line", group.len()),
    ));
    let total: Decimal = c.group.values().copied().sum();
    checks.push(Check::new(
        "group_trial_balance_sums_to_zero",
        total.is_zero(),
        format!("sum of the group trial balance = {}", money::plain(total)),
    ));
    let contrib_total: Decimal = v.iter().flatten().copied().sum();
    checks.push(Check::new(
        "contributions_sum_to_zero",
        contrib_total.is_zero(),
        format!("sum of the entities' translated contributions = {}", money::plain(contrib_total)),
    ));
    Ok(checks)
}

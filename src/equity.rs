//! The statement of changes in equity (IAS 1.106-110): per component of equity, the
//! balance at the start of the view's period, each movement, and the balance at its end.
//!
//! The balances come from the balance sheet of two closes (the opening and the closing
//! one), with the result of the year counted in retained earnings and OCI in the
//! reserve of each OCI account (the translation reserve unless the chart names
//! another), as the balance sheet shows them. The movements are computed on a
//! second path, from the entities' contributions and the elimination journal of the two
//! closes, and split into rows by their source:
//!
//! - profit and OCI of the view, each reserve's OCI in its column, the NCI's share of
//!   each moved to the NCI column (the close takes the NCI's share of the exchange
//!   differences from the translation reserve, IAS 21.41, of a reserve the chart names
//!   from that reserve, and of every other post-acquisition movement from retained
//!   earnings);
//! - dividends: the direct movements of retained earnings in the books of the entities
//!   consolidated at both dates, less the intragroup dividends eliminated against them
//!   (IFRS 10.B86), the NCI's share of a subsidiary's dividend in the NCI column; not
//!   of a hyperinflationary entity, whose retained earnings are restated and translated
//!   at the closing rate (IAS 29.25, IAS 21.42), so that all of its movement, a
//!   dividend included, is among the other movements;
//! - changes from acquisitions: the NCI recognised at acquisition of a subsidiary first
//!   consolidated in the period (IFRS 3.19);
//! - other movements: what remains of each column's movement.
//!
//! The proof `equity_changes_reconcile` checks that opening + movements = closing for
//! every column exactly, the closing balances being those of the balance sheet (roll-up)
//! and the movements those of the contributions and journal (row by row), and that the
//! components cover every equity account of the chart. Equity knows nothing about files
//! and formats no number.

use std::collections::{BTreeMap, BTreeSet};

use polars::prelude::*;
use rust_decimal::Decimal;

use crate::close::change_in_stake::StakeChange;
use crate::close::loss_of_control::Disposal;
use crate::close::view::{Attribution, Chart, balance_sheet_amounts};
use crate::close::{Close, EliminationRule};
use crate::model::*;
use crate::money::{self, column_decimals, column_strings};
use crate::proof::Check;

/// One component (column) of equity: its id, label and group accounts.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct Component {
    pub id: String,
    pub label: String,
    pub accounts: Vec<GroupAccount>,
}

/// A column of the statement: a component, or one of the two totals.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct EquityColumn {
    pub id: String,
    pub label: String,
}

/// A row of the statement: its id, label and one amount per column (credit positive).
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct Row {
    pub id: &'static str,
    pub label: String,
    pub amounts: Vec<Decimal>,
}

/// The statement of changes in equity of one view.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct EquityChanges {
    pub columns: Vec<EquityColumn>,
    pub rows: Vec<Row>,
}

/// Id of the owners' total and of the total equity column.
pub const OWNERS: &str = "owners_of_the_parent";
pub const TOTAL: &str = "total_equity";

/// The components of equity: the account lines of the `equity_changes` layout, else one
/// per equity account of the chart.
pub fn components(statements: &[crate::layout::ResolvedStatement], chart: &[AccountDef]) -> Vec<Component> {
    if let Some(st) = statements.iter().find(|s| s.statement == "equity_changes") {
        let out: Vec<Component> = st
            .lines
            .iter()
            .filter_map(|l| match &l.body {
                crate::layout::LineBody::Accounts(a) => {
                    Some(Component { id: l.line.clone(), label: l.label.clone(), accounts: a.clone() })
                }
                crate::layout::LineBody::Total(_) => None,
            })
            .collect();
        if !out.is_empty() {
            return out;
        }
    }
    chart
        .iter()
        .filter(|a| a.class == AccountClass::Equity)
        .map(|a| Component { id: a.account.to_string(), label: a.name.clone(), accounts: vec![a.account.clone()] })
        .collect()
}

/// Equity accounts as the balance sheet shows them (debit positive): the group trial
/// balance with profit or loss in retained earnings and OCI in the translation reserve
/// (`close::view::balance_sheet_amounts`).
fn balance_sheet_equity(
    c: &Close,
    chart: &Chart,
    equity: &BTreeSet<GroupAccount>,
    roles: &RoleAccounts,
) -> BTreeMap<GroupAccount, Decimal> {
    let mut out = balance_sheet_amounts(&c.group, chart, roles);
    out.retain(|a, _| equity.contains(a));
    out
}

/// Contributions by entity and group account.
type Contributions = BTreeMap<(EntityId, GroupAccount), Decimal>;

/// Per entity and group account, the contributions on the accounts in `accounts`
/// (columnar: the contribution frame is summed by polars).
fn contributions_on(c: &Close, accounts: &BTreeSet<GroupAccount>) -> PolarsResult<Contributions> {
    let list: Vec<String> = accounts.iter().map(|a| a.to_string()).collect();
    let df = c
        .contributions
        .clone()
        .lazy()
        .filter(col("group_account").is_in(lit(Series::new("accounts".into(), list)).implode(false), false))
        .group_by([col("entity"), col("group_account")])
        .agg([col("amount").sum()])
        .collect()?;
    let e = column_strings(&df, "entity")?;
    let a = column_strings(&df, "group_account")?;
    let v = column_decimals(df.column("amount")?)?;
    let mut out = BTreeMap::new();
    for i in 0..df.height() {
        if let (Some(e), Some(a)) = (&e[i], &a[i]) {
            *out.entry((EntityId::new(e), GroupAccount::new(a))).or_default() += v[i].unwrap_or_default();
        }
    }
    Ok(out)
}

/// Entities with a contribution in a close.
fn contributing(c: &Close) -> PolarsResult<BTreeSet<EntityId>> {
    Ok(column_strings(&c.contributions, "entity")?.into_iter().flatten().map(EntityId::new).collect())
}

/// Sum of the journal lines of a close on `account`, optionally of one rule and entity.
fn journal_sum(c: &Close, account: &GroupAccount, rule: Option<EliminationRule>, entity: Option<&EntityId>) -> Decimal {
    c.journal
        .iter()
        .filter(|e| rule.is_none_or(|r| e.rule == r))
        .flat_map(|e| e.lines.iter())
        .filter(|l| &l.account == account && entity.is_none_or(|x| &l.entity == x))
        .map(|l| l.amount)
        .sum()
}

/// The dividends row: direct movements of retained earnings in the books of entities
/// consolidated at both dates (the NCI bearing its share of a subsidiary's dividend),
/// less the intragroup ones the close eliminated against them.
fn dividends_row(
    ds: &crate::load::Dataset,
    (opening, closing): (&Close, &Close),
    (c_open, c_close): (&Contributions, &Contributions),
    (before, after): (&BTreeSet<EntityId>, &BTreeSet<EntityId>),
    (re, nci): (Option<usize>, Option<usize>),
    n: usize,
    minor: u32,
) -> Vec<Decimal> {
    let roles = &ds.settings.accounts;
    let mut dividends = vec![Decimal::ZERO; n];
    let mut add = |at: Option<usize>, x: Decimal| {
        if let Some(i) = at {
            dividends[i] += x;
        }
    };
    let nci_share: BTreeMap<&EntityId, Decimal> = closing.nci.iter().map(|r| (&r.entity, r.nci_share)).collect();
    // A hyperinflationary entity's retained earnings move also by their restatement and
    // their translation at the closing rate (IAS 29.25, IAS 21.42(a)), which are no
    // dividends: its movement stays in other movements.
    let hyper = |e: &EntityId| ds.entity(e).and_then(|x| x.hyperinflationary_from).is_some_and(|h| h <= closing.period);
    for e in before.intersection(after).filter(|e| !hyper(e)) {
        let key = (e.clone(), roles.retained_earnings.clone());
        let own = -(c_close.get(&key).copied().unwrap_or_default() - c_open.get(&key).copied().unwrap_or_default());
        add(re, own);
        if let Some(share) = nci_share.get(e) {
            let part = money::round(own * *share, minor, ds.settings.policies.rounding);
            add(re, -part);
            add(nci, part);
        }
    }
    add(
        re,
        -(journal_sum(closing, &roles.retained_earnings, Some(EliminationRule::IntragroupDividend), None)
            - journal_sum(opening, &roles.retained_earnings, Some(EliminationRule::IntragroupDividend), None)),
    );
    dividends
}

/// The statement of changes in equity between the `opening` close (the start of the
/// view's period) and the `closing` one, with its proof.
pub fn changes_in_equity(
    ds: &crate::load::Dataset,
    components: &[Component],
    opening: &Close,
    closing: &Close,
    view: &Attribution,
    minor: u32,
    labels: (String, String),
) -> PolarsResult<(EquityChanges, Check)> {
    let _span = tracing::info_span!("changes_in_equity", period = %closing.period).entered();
    let roles = &ds.settings.accounts;
    let chart = Chart::new(&ds.accounts);
    let balance_sheet_equity_accounts: BTreeSet<GroupAccount> = ds
        .accounts
        .iter()
        .filter(|a| a.class == AccountClass::Equity && a.statement == Statement::BalanceSheet)
        .map(|a| a.account.clone())
        .collect();
    let equity_accounts: BTreeSet<GroupAccount> =
        ds.accounts.iter().filter(|a| a.class == AccountClass::Equity).map(|a| a.account.clone()).collect();
    let n = components.len();
    let find = |acct: &GroupAccount| components.iter().position(|c| c.accounts.contains(acct));
    let (re, tr, nci) =
        (find(&roles.retained_earnings), find(&roles.translation_reserve), find(&roles.non_controlling_interest));
    // Balances as the balance sheet shows them, presented credit positive.
    let presented = |c: &Close| -> Vec<Decimal> {
        let bs = balance_sheet_equity(c, &chart, &balance_sheet_equity_accounts, roles);
        components.iter().map(|k| -k.accounts.iter().filter_map(|a| bs.get(a)).copied().sum::<Decimal>()).collect()
    };
    let open = presented(opening);
    let close = presented(closing);

    // The movement of each equity account on the second path.
    let c_open = contributions_on(opening, &equity_accounts)?;
    let c_close = contributions_on(closing, &equity_accounts)?;
    let movement = movements(components, &equity_accounts, (opening, closing), (&c_open, &c_close), &chart, roles);

    let mut profit = vec![Decimal::ZERO; n];
    let mut acquisitions = vec![Decimal::ZERO; n];
    let add = |row: &mut Vec<Decimal>, at: Option<usize>, x: Decimal| {
        if let Some(i) = at {
            row[i] += x;
        }
    };
    add(&mut profit, re, view.profit - view.profit_nci);
    add(&mut profit, nci, view.profit_nci);
    let oci = oci_row(ds, &chart, components, (opening, closing), view);

    let before = contributing(opening)?;
    let after = contributing(closing)?;
    let dividends = dividends_row(ds, (opening, closing), (&c_open, &c_close), (&before, &after), (re, nci), n, minor);
    // Acquisitions: the NCI at acquisition of each subsidiary first consolidated, as
    // measured at the acquisition date; the later movements the investment entry posts
    // to the NCI (its part of full goodwill's exchange difference and impairment) are
    // in its OCI and profit rows already.
    for e in after.difference(&before) {
        add(&mut acquisitions, nci, closing.nci_at_acquisition.get(e).copied().unwrap_or_default());
    }
    let disposals = disposals_row(opening, closing, n, nci);
    let with_nci = transactions_with_nci_row(opening, closing, n, (re, tr, nci));
    let other: Vec<Decimal> = (0..n)
        .map(|i| movement[i] - profit[i] - oci[i] - dividends[i] - acquisitions[i] - disposals[i] - with_nci[i])
        .collect();

    let columns = columns(components, nci);
    let widen = |v: &[Decimal]| widen(v, nci);
    let mut rows = vec![
        Row { id: "opening", label: labels.0, amounts: widen(&open) },
        Row { id: "profit", label: "Profit for the period".into(), amounts: widen(&profit) },
        Row { id: "oci", label: "Other comprehensive income".into(), amounts: widen(&oci) },
        Row { id: "dividends", label: "Dividends".into(), amounts: widen(&dividends) },
        Row {
            id: "acquisitions",
            label: "Non-controlling interests on acquisition".into(),
            amounts: widen(&acquisitions),
        },
        Row {
            id: "transactions_with_nci",
            label: "Transactions with non-controlling interests".into(),
            amounts: widen(&with_nci),
        },
        Row { id: "disposals", label: "Disposals of subsidiaries".into(), amounts: widen(&disposals) },
        Row { id: "other", label: "Other movements".into(), amounts: widen(&other) },
        Row { id: "closing", label: labels.1, amounts: widen(&close) },
    ];
    // Each row is shown only for a view in which such a change happened.
    if !closing.stake_changes.iter().any(|d| !opening.stake_changes.contains(d)) {
        rows.retain(|r| r.id != "transactions_with_nci");
    }
    // The row is shown only for a view in which a subsidiary was sold.
    if disposals.iter().all(Decimal::is_zero) && !closing.disposals.iter().any(|d| !opening.disposals.contains(d)) {
        rows.retain(|r| r.id != "disposals");
    }
    let check = prove(components, &equity_accounts, &open, &movement, &close);
    Ok((EquityChanges { columns, rows }, check))
}

/// The OCI row: each reserve's OCI of the view in its own column (IAS 1.106(d)), the
/// rest of the view's OCI, as its statement shows it, in the translation reserve's; the
/// NCI's share of it in the NCI column.
fn oci_row(
    ds: &crate::load::Dataset,
    chart: &Chart,
    components: &[Component],
    (opening, closing): (&Close, &Close),
    view: &Attribution,
) -> Vec<Decimal> {
    let roles = &ds.settings.accounts;
    let find = |acct: &GroupAccount| components.iter().position(|c| c.accounts.contains(acct));
    let (re, tr, nci) =
        (find(&roles.retained_earnings), find(&roles.translation_reserve), find(&roles.non_controlling_interest));
    let mut oci = vec![Decimal::ZERO; components.len()];
    let mut add = |at: Option<usize>, x: Decimal| {
        if let Some(i) = at {
            oci[i] += x;
        }
    };
    let mut named_oci = Decimal::ZERO;
    for (reserve, x) in
        oci_of_view(chart, roles, (opening, closing)).iter().filter(|(r, _)| **r != roles.translation_reserve)
    {
        add(find(reserve).or(tr), -*x);
        named_oci += -*x;
    }
    add(tr, view.oci - named_oci);
    // The NCI's share of OCI leaves each reserve: the NCI entry takes its share from
    // the translation reserve and each reserve the chart names directly (close/nci.rs),
    // which the movement of its lines on them measures (a subsidiary sold carries its
    // NCI line on the translation reserve into the disposal entry, which leaves with
    // the NCI: IAS 21.48B); the rest of the NCI's share of OCI leaves retained earnings.
    let mut nci_from_reserves = Decimal::ZERO;
    let named: BTreeSet<&GroupAccount> =
        ds.accounts.iter().filter_map(|a| a.reserve.as_ref()).chain([&roles.translation_reserve]).collect();
    let sold_reserve_nci: Decimal = new_disposals(opening, closing).map(|d| d.reserve_nci).sum();
    // The NCI rule takes the NCI's share at the period-end share: a change in stake's
    // reattribution is in the movement of its line, and on the change's own row.
    let reattributed: Decimal = new_stake_changes(opening, closing).map(|d| d.reserve_reattributed).sum();
    for reserve in named {
        let mut x = journal_sum(closing, reserve, Some(EliminationRule::NonControllingInterest), None)
            - journal_sum(opening, reserve, Some(EliminationRule::NonControllingInterest), None);
        if *reserve == roles.translation_reserve {
            x += sold_reserve_nci + reattributed;
        }
        add(find(reserve).or(tr), -x);
        nci_from_reserves += x;
    }
    add(re, -view.oci_nci + nci_from_reserves);
    add(nci, view.oci_nci);
    oci
}

/// Subsidiaries sold between the two closes (IFRS 10.25, IAS 21.48B).
fn new_disposals<'c>(opening: &'c Close, closing: &'c Close) -> impl Iterator<Item = &'c Disposal> {
    let earlier: BTreeSet<(&EntityId, chrono::NaiveDate)> =
        opening.disposals.iter().map(|d| (&d.entity, d.date)).collect();
    closing.disposals.iter().filter(move |d| !earlier.contains(&(&d.entity, d.date)))
}

/// The NCI derecognised with the subsidiaries sold between the two closes (IFRS 10.25,
/// B98(a)(ii)). Its share of the translation reserve had been taken out of the reserve
/// (IAS 21.41) and leaves with it (IAS 21.48B); the owners' share of the reserve is
/// reclassified through OCI and profit, in those rows.
fn disposals_row(opening: &Close, closing: &Close, n: usize, nci: Option<usize>) -> Vec<Decimal> {
    let mut row = vec![Decimal::ZERO; n];
    for d in new_disposals(opening, closing) {
        if let Some(i) = nci {
            row[i] -= d.nci_derecognised;
        }
    }
    row
}

/// Changes in stake with control kept between the two closes (IFRS 10.23, B96).
fn new_stake_changes<'c>(opening: &'c Close, closing: &'c Close) -> impl Iterator<Item = &'c StakeChange> {
    closing.stake_changes.iter().filter(|d| !opening.stake_changes.contains(d))
}

/// Changes in stake with control kept between the two closes (IFRS 10.23, B96): the
/// NCI's carrying amount transferred, and the owners' side, the consideration less it:
/// in the translation reserve the NCI's share of its exchange differences reattributed
/// (IAS 21.48C), the rest in retained earnings.
fn transactions_with_nci_row(
    opening: &Close,
    closing: &Close,
    n: usize,
    (re, tr, nci): (Option<usize>, Option<usize>, Option<usize>),
) -> Vec<Decimal> {
    let mut row = vec![Decimal::ZERO; n];
    for d in new_stake_changes(opening, closing) {
        let owners = d.cash + d.nci_transferred;
        let reserve = if tr.is_some() { d.reserve_reattributed } else { Decimal::ZERO };
        for (at, x) in [(nci, -d.nci_transferred), (re, owners - reserve), (tr, reserve)] {
            if let Some(i) = at {
                row[i] += x;
            }
        }
    }
    row
}

/// The movement of each component on the second path, credit positive: contributions
/// and journal lines of the two closes, and the result of the view counted in retained
/// earnings and the translation reserve.
fn movements(
    components: &[Component],
    equity_accounts: &BTreeSet<GroupAccount>,
    (opening, closing): (&Close, &Close),
    (c_open, c_close): (&Contributions, &Contributions),
    chart: &Chart,
    roles: &RoleAccounts,
) -> Vec<Decimal> {
    let mut moved: BTreeMap<GroupAccount, Decimal> = BTreeMap::new();
    for ((_, a), v) in c_close {
        *moved.entry(a.clone()).or_default() += *v;
    }
    for ((_, a), v) in c_open {
        *moved.entry(a.clone()).or_default() -= *v;
    }
    for a in equity_accounts {
        *moved.entry(a.clone()).or_default() +=
            journal_sum(closing, a, None, None) - journal_sum(opening, a, None, None);
    }
    let result_of = |c: &Close, st: Statement| -> Decimal { chart.sum(&c.group, st) };
    *moved.entry(roles.retained_earnings.clone()).or_default() +=
        result_of(closing, Statement::ProfitOrLoss) - result_of(opening, Statement::ProfitOrLoss);
    for (reserve, x) in oci_of_view(chart, roles, (opening, closing)) {
        *moved.entry(reserve).or_default() += x;
    }
    components.iter().map(|k| -k.accounts.iter().filter_map(|a| moved.get(a)).copied().sum::<Decimal>()).collect()
}

/// The OCI between the two closes by the reserve each OCI account accumulates into
/// (debit positive): the closing close's year to date less the opening's.
fn oci_of_view(
    chart: &Chart,
    roles: &RoleAccounts,
    (opening, closing): (&Close, &Close),
) -> BTreeMap<GroupAccount, Decimal> {
    let mut out = chart.oci_by_reserve(&closing.group, roles);
    for (reserve, x) in chart.oci_by_reserve(&opening.group, roles) {
        *out.entry(reserve).or_default() -= x;
    }
    out
}

/// Columns: the components, the owners' total before the NCI (`nci`: its component),
/// the total.
fn columns(components: &[Component], nci: Option<usize>) -> Vec<EquityColumn> {
    let n = components.len();
    let owners_at = nci.unwrap_or(n);
    let mut columns: Vec<EquityColumn> = Vec::new();
    for (i, k) in components.iter().enumerate() {
        if i == owners_at {
            columns.push(EquityColumn { id: OWNERS.into(), label: "Total owners of the parent".into() });
        }
        columns.push(EquityColumn { id: k.id.clone(), label: k.label.clone() });
    }
    if owners_at == n {
        columns.push(EquityColumn { id: OWNERS.into(), label: "Total owners of the parent".into() });
    }
    columns.push(EquityColumn { id: TOTAL.into(), label: "Total equity".into() });
    columns
}

/// One row per component widened to the [`columns`]: the owners' total inserted before
/// the NCI's component, the total at the end.
fn widen(v: &[Decimal], nci: Option<usize>) -> Vec<Decimal> {
    let owners_at = nci.unwrap_or(v.len());
    let owners: Decimal = v.iter().enumerate().filter(|(i, _)| Some(*i) != nci).map(|(_, x)| *x).sum();
    let mut out: Vec<Decimal> = v.iter().take(owners_at).copied().collect();
    out.push(owners);
    out.extend(v.iter().skip(owners_at).copied());
    out.push(v.iter().copied().sum());
    out.into_iter().map(money::unsigned_zero).collect()
}

/// The proof `equity_changes_reconcile`: every column's opening + movements = closing,
/// exactly; every equity account of the chart in one component.
fn prove(
    components: &[Component],
    equity_accounts: &BTreeSet<GroupAccount>,
    open: &[Decimal],
    movement: &[Decimal],
    close: &[Decimal],
) -> Check {
    let n = components.len();
    let mut broken = Vec::new();
    for (i, k) in components.iter().enumerate() {
        if open[i] + movement[i] != close[i] {
            broken.push(format!(
                "{}: {} + {} != {}",
                k.id,
                money::plain(open[i]),
                money::plain(movement[i]),
                money::plain(close[i])
            ));
        }
    }
    let covered: BTreeSet<&GroupAccount> = components.iter().flat_map(|k| k.accounts.iter()).collect();
    let missing: Vec<String> = equity_accounts.iter().filter(|a| !covered.contains(a)).map(|a| a.to_string()).collect();
    if !missing.is_empty() {
        broken.push(format!("equity accounts in no component: {}", missing.join(" ")));
    }
    let total = |v: &[Decimal]| v.iter().copied().sum::<Decimal>();
    Check::new(
        "equity_changes_reconcile",
        broken.is_empty(),
        if broken.is_empty() {
            format!(
                "{n} components: opening {} + movements {} = closing {}",
                money::plain(total(open)),
                money::plain(total(movement)),
                money::plain(total(close))
            )
        } else {
            broken.join("; ")
        },
    )
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::layout::{LineBody, ResolvedLine, ResolvedStatement};

    fn account(id: &str, name: &str, class: AccountClass) -> AccountDef {
        AccountDef {
            account: GroupAccount::new(id),
            name: name.into(),
            statement: if class == AccountClass::Equity { Statement::BalanceSheet } else { Statement::ProfitOrLoss },
            class,
            basis: Basis::Historical,
            ic_kind: None,
            non_current: false,
            reserve: None,
            monetary: None,
            source: Source::file("entities/accounts.csv"),
        }
    }

    /// The columns are the layout's account lines (its totals are recomputed, not
    /// copied); without an `equity_changes` layout, one column per equity account.
    #[test]
    fn components_follow_the_layout_else_the_chart() {
        let chart = vec![
            account("3000", "Share capital", AccountClass::Equity),
            account("3200", "Retained earnings", AccountClass::Equity),
            account("3900", "Non-controlling interests", AccountClass::Equity),
            account("4000", "Revenue", AccountClass::Income),
        ];
        let line = |id: &str, body: LineBody| ResolvedLine {
            line: id.into(),
            label: id.into(),
            presentation: crate::layout::Presentation::CreditPositive,
            body,
        };
        let layout = ResolvedStatement {
            statement: "equity_changes".into(),
            lines: vec![
                line("OWN", LineBody::Accounts(vec![GroupAccount::new("3000"), GroupAccount::new("3200")])),
                line("NCI", LineBody::Accounts(vec![GroupAccount::new("3900")])),
                line("TOT", LineBody::Total(vec![("OWN".into(), 1), ("NCI".into(), 1)])),
            ],
            ratios: Vec::new(),
        };
        let ids = |c: &[Component]| c.iter().map(|k| k.id.clone()).collect::<Vec<_>>();
        assert_eq!(ids(&components(&[layout], &chart)), ["OWN", "NCI"]);
        assert_eq!(ids(&components(&[], &chart)), ["3000", "3200", "3900"]);
    }
}

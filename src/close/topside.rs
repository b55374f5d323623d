//! Rule `group_adjustment`: top-side entries, booked by the group on the group chart in
//! the presentation currency above the entities' ledgers (a late audit adjustment, a
//! remeasurement only the group makes), read from `entities/group_adjustments.csv`.
//!
//! An entry is the rows sharing an id. It is counted in a close on year-to-date balances
//! when its month is in the close's fiscal year and at or before the period end, so a
//! month or quarter view shows it in its month (the view subtracts the base close). It
//! belongs to a scope, the group's parent or the holding entity of a sub-group, and is
//! posted in every close whose structure contains that scope: a sub-group's entry in the
//! sub-group's close and the group's, a group entry in the group's only.
//!
//! Attribution to the NCI (IFRS 10.B94): a line is the figure of the entity it names,
//! else of the scope entity. The NCI of that entity in the close bears its share through
//! the `non_controlling_interest` rule, as it does for the entity's own figures; the
//! group's parent has no NCI, so a group entry that names no entity is the owners' alone.
//!
//! The checks ([`check`]) are the same for `validate` (so `tessera check` lists every
//! finding) and for the close, which posts only entries with no blocking finding (a
//! draft close runs despite them).

use std::collections::{BTreeMap, BTreeSet};

use rust_decimal::Decimal;

use super::context::Context;
use super::journal::{EliminationRule, EntryLine, Journal, line};
use crate::findings::{Finding, Rule, Severity};
use crate::load::adjustments::GroupAdjustments;
use crate::model::*;
use crate::money;
use crate::structure::GroupStructure;

/// What the checks of an entry read: the chart, the role accounts, the known entities,
/// the structure of the close and its period.
pub struct Frame<'a> {
    pub chart: BTreeMap<&'a GroupAccount, &'a AccountDef>,
    pub roles: &'a RoleAccounts,
    pub known: BTreeSet<&'a EntityId>,
    pub structure: &'a GroupStructure,
    pub fiscal_start: Period,
    pub period: Period,
    /// The presentation currency's minor unit.
    pub minor: u32,
}

impl<'a> Frame<'a> {
    /// The frame of a close's context.
    pub fn of_context(cx: &Context<'a>) -> Self {
        Frame {
            chart: cx.chart.clone(),
            roles: cx.roles,
            known: cx.currencies.keys().copied().collect(),
            structure: cx.structure,
            fiscal_start: cx.fiscal_start,
            period: cx.period,
            minor: cx.minor,
        }
    }

    /// The months of the fiscal year: an entry must be booked in one of them.
    fn in_fiscal_year(&self, p: Period) -> bool {
        p >= self.fiscal_start && p < self.fiscal_start.plus_months(12)
    }
}

/// One top-side entry: its id and its rows, in file order.
#[derive(Debug)]
pub struct TopsideEntry<'a> {
    pub id: &'a str,
    pub rows: Vec<&'a GroupAdjustment>,
}

impl TopsideEntry<'_> {
    fn first(&self) -> &GroupAdjustment {
        self.rows[0]
    }

    fn total(&self) -> Decimal {
        self.rows.iter().map(|r| r.amount).sum()
    }

    /// The file and its line numbers, for descriptions and findings.
    fn lines_text(&self) -> String {
        let lines: Vec<String> = self.rows.iter().map(|r| r.source.line.unwrap_or(0).to_string()).collect();
        format!("{} line{} {}", self.first().source.file, if lines.len() == 1 { "" } else { "s" }, lines.join(", "))
    }
}

/// The entries of the file, in the order of their first row.
pub fn entries(adj: &GroupAdjustments) -> Vec<TopsideEntry<'_>> {
    let mut out: Vec<TopsideEntry> = Vec::new();
    let mut at: BTreeMap<&str, usize> = BTreeMap::new();
    for r in &adj.lines {
        match at.get(r.entry.as_str()) {
            Some(&i) => out[i].rows.push(r),
            None => {
                at.insert(&r.entry, out.len());
                out.push(TopsideEntry { id: &r.entry, rows: vec![r] });
            }
        }
    }
    out
}

/// Every finding about the file's entries for a close at `fr.period`: `validate` calls
/// it on the group's structure.
pub fn findings(adj: &GroupAdjustments, fr: &Frame) -> Vec<Finding> {
    entries(adj).iter().flat_map(|e| check(e, fr)).collect()
}

/// The findings of one entry. The checks that read the structure (the scope and the
/// entities named) apply to an entry counted by the close (booked at or before its
/// period end); a later entry is checked by the close of its month.
pub fn check(e: &TopsideEntry, fr: &Frame) -> Vec<Finding> {
    let mut out = consistency(e);
    let first = e.first();
    let at = |r: &GroupAdjustment, rule: Rule, msg: String, action: &str| {
        Finding::new(rule, format!("top-side entry {}: {msg}", e.id), action).at(&r.source).period(r.period)
    };
    if !fr.in_fiscal_year(first.period) {
        out.push(at(
            first,
            Rule::PeriodOutsideYear,
            format!(
                "booked in {}, outside the fiscal year {} to {}",
                first.period,
                fr.fiscal_start,
                fr.fiscal_start.plus_months(11)
            ),
            "book the entry in a month of the fiscal year being closed, or remove it",
        ));
    }
    let total = e.total();
    if !total.is_zero() {
        let debits: Decimal = e.rows.iter().map(|r| r.amount).filter(|a| a.is_sign_positive()).sum();
        out.push(at(
            first,
            Rule::GroupAdjustmentUnbalanced,
            format!(
                "does not balance: debits {} - credits {} = {} ({})",
                money::format_amount(debits, fr.minor),
                money::format_amount(debits - total, fr.minor),
                money::format_amount(total, fr.minor),
                e.lines_text()
            ),
            "correct the amounts so that the entry's lines sum to zero (debit positive, credit negative)",
        ));
    }
    for r in &e.rows {
        out.extend(check_line(e, r, fr));
    }
    if first.period <= fr.period {
        out.extend(check_scope(e, fr));
    }
    out
}

/// The rows of one entry agree on what defines it: period, scope, reason, preparer.
fn consistency(e: &TopsideEntry) -> Vec<Finding> {
    let first = e.first();
    let key = |r: &GroupAdjustment| (r.period, r.scope.clone(), r.reason.clone(), r.prepared_by.clone());
    e.rows
        .iter()
        .skip(1)
        .filter(|r| key(r) != key(first))
        .map(|r| {
            Finding::new(
                Rule::GroupAdjustmentInconsistent,
                format!(
                    "top-side entry {}: this row says period {}, scope {}, reason {:?}, prepared by {:?}; its first row (line {}) says {}, {}, {:?}, {:?}",
                    e.id,
                    r.period,
                    r.scope,
                    r.reason,
                    r.prepared_by,
                    first.source.line.unwrap_or(0),
                    first.period,
                    first.scope,
                    first.reason,
                    first.prepared_by
                ),
                "give every row of an entry the same period, scope, reason and prepared_by, or a different entry id",
            )
            .at(&r.source)
            .period(r.period)
        })
        .collect()
}

/// One line: a known account the close does not compute itself, an amount at the
/// presentation currency's minor unit, known entities.
fn check_line(e: &TopsideEntry, r: &GroupAdjustment, fr: &Frame) -> Vec<Finding> {
    let mut out = Vec::new();
    let at = |rule: Rule, msg: String, action: &str| {
        Finding::new(rule, format!("top-side entry {}: {msg}", e.id), action)
            .at(&r.source)
            .period(r.period)
            .account(r.account.as_str())
    };
    if !fr.chart.contains_key(&r.account) {
        out.push(at(
            Rule::AccountUnknown,
            format!("account {} is not in accounts.csv", r.account),
            "name an account of the group chart",
        ));
    } else if r.account == fr.roles.non_controlling_interest || r.account == fr.roles.translation_difference {
        // The close computes both; a line on them would not reach the NCI rows or the
        // translation reserve per operation, so the figures would disagree.
        out.push(at(
            Rule::AccountInvalid,
            format!("account {} is computed by the close (NCI or translation difference), not booked", r.account),
            "book the adjustment on the accounts it concerns and name the subsidiary in `entity`: its NCI then bears its share",
        ));
    }
    if r.amount.scale() > fr.minor && r.amount != money::round(r.amount, fr.minor, RoundingMode::HalfEven) {
        out.push(at(
            Rule::AmountSurplusDecimals,
            format!("amount {} has more decimals than the presentation currency's {}", r.amount, fr.minor),
            "write the amount in the presentation currency's minor unit; the engine never rounds input",
        ));
    }
    if r.amount.is_zero() {
        out.push(
            at(Rule::ValueInvalid, "a line of amount 0 posts nothing".into(), "remove the line or give its amount")
                .severity(Severity::Warning),
        );
    }
    for (what, x, rule) in
        [("entity", &r.entity, Rule::EntityUnknown), ("counterparty", &r.counterparty, Rule::CounterpartyUnknown)]
    {
        if let Some(x) = x
            && !fr.known.contains(x)
        {
            out.push(at(
                rule,
                format!("{what} {x} is not in entities.csv"),
                "correct the entity id, or leave the cell empty",
            ));
        }
    }
    if r.entity.is_some() && r.entity == r.counterparty {
        out.push(at(
            Rule::CounterpartySelf,
            format!("names {} as its own counterparty", r.counterparty.as_ref().map_or("", |c| c.as_str())),
            "name the other entity of the intercompany position, or leave counterparty empty",
        ));
    }
    out
}

/// The scope is the parent of the structure or an entity consolidated in full that
/// holds a sub-group; every entity a line names is consolidated in that sub-group.
fn check_scope(e: &TopsideEntry, fr: &Frame) -> Vec<Finding> {
    let first = e.first();
    let s = fr.structure;
    let scope = &first.scope;
    let holding = s.entity(scope).is_some_and(|x| x.method == Method::Full) && s.subgroup(scope).len() > 1;
    if scope != s.parent() && !holding {
        return vec![
            Finding::new(
                Rule::GroupAdjustmentScopeInvalid,
                format!(
                    "top-side entry {}: scope {} is neither the parent {} nor an entity consolidated in full that holds subsidiaries at {}",
                    e.id,
                    scope,
                    s.parent(),
                    fr.period
                ),
                "name the parent for a group entry, or the holding entity of the sub-group the entry belongs to",
            )
            .at(&first.source)
            .period(first.period),
        ];
    }
    let members = s.subgroup(scope);
    let consolidated = |x: &EntityId| {
        members.contains(x) && s.entity(x).is_some_and(|x| matches!(x.method, Method::Full | Method::Proportionate))
    };
    e.rows
        .iter()
        .filter_map(|r| r.entity.as_ref().filter(|x| fr.known.contains(x) && !consolidated(x)).map(|x| (r, x)))
        .map(|(r, x)| {
            Finding::new(
                Rule::GroupAdjustmentScopeInvalid,
                format!("top-side entry {}: entity {x} is not consolidated in the sub-group of {scope}", e.id),
                "name an entity the scope consolidates, or widen the scope to a holding above it",
            )
            .at(&r.source)
            .period(r.period)
            .entity(x)
            .account(r.account.as_str())
        })
        .collect()
}

/// Posts every entry the close counts: booked in its fiscal year at or before its
/// period end, with its scope in the close's structure, and without a blocking finding.
pub fn post(j: &mut Journal, cx: &Context, adj: &GroupAdjustments) {
    let fr = Frame::of_context(cx);
    let in_close: BTreeSet<EntityId> = cx.structure.subgroup(cx.structure.parent()).into_iter().collect();
    for e in entries(adj) {
        let first = e.first();
        let counted = first.period >= cx.fiscal_start && first.period <= cx.period;
        if !counted || !in_close.contains(&first.scope) || adj.incomplete.contains(e.id) {
            continue;
        }
        if check(&e, &fr).iter().any(|f| f.severity >= Severity::Blocking) {
            continue;
        }
        let description = format!(
            "top-side {} booked {} in {}: {}; prepared by {} ({})",
            e.id,
            first.period,
            first.scope,
            first.reason,
            first.prepared_by,
            e.lines_text()
        );
        post_entry(j, cx, &e, &|a| a.clone(), description);
    }
    post_carried(j, cx, adj, &in_close);
}

/// Posts `e` as a `group_adjustment` entry at its scope, each line on the account
/// `account_of` gives for the row's, naming the entities its lines name. Each line's
/// entity is the one it names, else the scope; its amount at the minor unit, like every
/// other entry's amounts (the check refused more decimals, so this only adds zeros).
fn post_entry(
    j: &mut Journal,
    cx: &Context,
    e: &TopsideEntry,
    account_of: &dyn Fn(&GroupAccount) -> GroupAccount,
    description: String,
) {
    let first = e.first();
    let mut named: Vec<EntityId> = Vec::new();
    for x in e.rows.iter().filter_map(|r| r.entity.as_ref()) {
        if !named.contains(x) {
            named.push(x.clone());
        }
    }
    let lines: Vec<EntryLine> = e
        .rows
        .iter()
        .map(|r| {
            let mut x = r.amount;
            x.rescale(cx.minor);
            line(&account_of(&r.account), r.entity.as_ref().unwrap_or(&first.scope), r.counterparty.as_ref(), x)
        })
        .collect();
    j.post(EliminationRule::GroupAdjustment, first.scope.clone(), named, description, lines);
}

/// Posts the entries of earlier fiscal years the folder holds (`GroupAdjustments::
/// carried`) by what they left in the balance sheet: their year closed their profit or
/// loss into retained earnings and their OCI into its reserve (the chart's `reserve`,
/// else the translation reserve), and their balance-sheet lines stay, so that the
/// opening is the prior year's closing. Posted in every close of the year, the opening
/// close included; an entry that does not balance (its year's close blocked it) is
/// left out.
fn post_carried(j: &mut Journal, cx: &Context, adj: &GroupAdjustments, in_close: &BTreeSet<EntityId>) {
    let file = GroupAdjustments { lines: adj.carried.clone(), ..GroupAdjustments::default() };
    for e in entries(&file) {
        let first = e.first();
        if !in_close.contains(&first.scope) || !e.total().is_zero() || !consistency(&e).is_empty() {
            continue;
        }
        let closed_into = |a: &GroupAccount| -> GroupAccount {
            match cx.chart.get(a).map(|d| (d.statement, d.reserve.as_ref())) {
                Some((Statement::ProfitOrLoss, _)) => cx.roles.retained_earnings.clone(),
                Some((Statement::Oci, reserve)) => reserve.unwrap_or(&cx.roles.translation_reserve).clone(),
                _ => a.clone(),
            }
        };
        let description = format!(
            "top-side {} booked {} in {}, carried from its year (its profit or loss in retained earnings, its OCI in its reserve): {}; prepared by {}",
            e.id, first.period, first.scope, first.reason, first.prepared_by
        );
        post_entry(j, cx, &e, &closed_into, description);
    }
}

#[cfg(test)]
mod tests {
    use super::super::context::fixture::*;
    use super::*;

    /// A row of the file.
    fn row(
        entry: &str,
        period: &str,
        scope: &str,
        account: &str,
        amount: &str,
        entity: Option<&str>,
    ) -> GroupAdjustment {
        GroupAdjustment {
            entry: entry.into(),
            period: p(period),
            scope: id(scope),
            account: acct(account),
            amount: d(amount),
            entity: entity.map(id),
            counterparty: None,
            reason: "late audit adjustment".into(),
            prepared_by: "A. Auditor".into(),
            source: Source::line("entities/group_adjustments.csv", 2),
        }
    }

    fn file(rows: Vec<GroupAdjustment>) -> GroupAdjustments {
        let lines = rows
            .into_iter()
            .enumerate()
            .map(|(i, mut r)| {
                r.source = Source::line("entities/group_adjustments.csv", i as u64 + 2);
                r
            })
            .collect();
        GroupAdjustments { lines, incomplete: BTreeSet::new(), carried: Vec::new() }
    }

    /// P 80% of S, S 60% of T (a sub-group below S), all consolidated in full.
    fn world(period: &str) -> World {
        World::new(
            &["P", "S", "T"],
            &[holding("P", "S", "0.8", "2020-01-01"), holding("S", "T", "0.6", "2020-01-01")],
            p(period),
        )
    }

    fn findings_of(w: &World, period: &str, adj: &GroupAdjustments) -> Vec<(Rule, String)> {
        let cx = w.context(p(period), p("2026-01"), Balances::new());
        findings(adj, &Frame::of_context(&cx)).into_iter().map(|f| (f.rule, f.message)).collect()
    }

    use super::super::aggregate::Balances;

    /// A group entry of March (expense 5000 debit 120.00, payable 2450 credit 120.00)
    /// counts in the close at June, not in the close at February: the year to date at
    /// June has it, and a month or quarter view shows it in March only.
    #[test]
    fn an_entry_counts_from_its_month() {
        let w = world("2026-06");
        let adj = file(vec![
            row("T1", "2026-03", "P", "5000", "120.00", None),
            row("T1", "2026-03", "P", "2450", "-120.00", None),
        ]);
        let mut j = Journal::default();
        post(&mut j, &w.context(p("2026-06"), p("2026-01"), Balances::new()), &adj);
        assert_eq!(j.entries.len(), 1);
        let e = &j.entries[0];
        assert_eq!((e.rule, e.posted_at.as_str(), e.entities.len()), (EliminationRule::GroupAdjustment, "P", 0));
        assert_eq!(lines(e), [("5000".into(), "P".into(), "120".into()), ("2450".into(), "P".into(), "-120".into())]);
        assert!(e.description.contains("T1") && e.description.contains("lines 2, 3"), "{}", e.description);
        let mut j = Journal::default();
        post(&mut j, &w.context(p("2026-02"), p("2026-01"), Balances::new()), &adj);
        assert!(j.entries.is_empty());
    }

    /// An entry of the sub-group below S, naming T, is in the group's close and in S's
    /// own close; a group entry is in the group's close only.
    #[test]
    fn a_sub_group_entry_is_in_its_sub_group_and_the_group() {
        let adj = file(vec![
            row("S1", "2026-04", "S", "5000", "30", Some("T")),
            row("S1", "2026-04", "S", "2450", "-30", Some("T")),
            row("G1", "2026-04", "P", "5000", "10", None),
            row("G1", "2026-04", "P", "2450", "-10", None),
        ]);
        let mut w = world("2026-06");
        let mut j = Journal::default();
        post(&mut j, &w.context(p("2026-06"), p("2026-01"), Balances::new()), &adj);
        let posted: Vec<(&str, &str)> =
            j.entries.iter().map(|e| (e.posted_at.as_str(), e.lines[0].entity.as_str())).collect();
        assert_eq!(posted, [("S", "T"), ("P", "P")]);
        let ids: Vec<EntityId> = ["P", "S", "T"].iter().map(|e| id(e)).collect();
        let holdings = [holding("P", "S", "0.8", "2020-01-01"), holding("S", "T", "0.6", "2020-01-01")];
        w.structure = crate::structure::build(&ids, &holdings, &id("S"), p("2026-06").last_day(), d("0.2")).0;
        let mut j = Journal::default();
        post(&mut j, &w.context(p("2026-06"), p("2026-01"), Balances::new()), &adj);
        assert_eq!(j.entries.len(), 1);
        assert_eq!(j.entries[0].posted_at.as_str(), "S");
    }

    /// Debits 100.00 + 20.00 against a credit of 119.50 leave 0.50: a blocking finding
    /// with the arithmetic, and the entry is not posted.
    #[test]
    fn an_unbalanced_entry_is_a_finding_and_not_posted() {
        let w = world("2026-06");
        let adj = file(vec![
            row("U", "2026-05", "P", "5000", "100.00", None),
            row("U", "2026-05", "P", "1500", "20.00", None),
            row("U", "2026-05", "P", "2450", "-119.50", None),
        ]);
        let found = findings_of(&w, "2026-06", &adj);
        assert_eq!(found.len(), 1, "{found:?}");
        assert_eq!(found[0].0, Rule::GroupAdjustmentUnbalanced);
        assert!(found[0].1.contains("debits 120.00 - credits 119.50 = 0.50"), "{}", found[0].1);
        let mut j = Journal::default();
        post(&mut j, &w.context(p("2026-06"), p("2026-01"), Balances::new()), &adj);
        assert!(j.entries.is_empty());
    }

    /// Each rule of a line and of the scope, one broken row each.
    #[test]
    fn bad_lines_and_scopes_are_findings() {
        let w = world("2026-06");
        let mut other_reason = row("A", "2026-05", "P", "2450", "-1", None);
        other_reason.reason = "something else".into();
        let adj = file(vec![
            row("A", "2026-05", "P", "5999", "1", None),
            other_reason,
            row("B", "2027-02", "P", "5000", "1", None),
            row("B", "2027-02", "P", "3900", "-1", None),
            row("C", "2026-05", "T", "5000", "0.001", None),
            row("C", "2026-05", "T", "2450", "-0.001", None),
            row("D", "2026-05", "S", "5000", "1", Some("P")),
            row("D", "2026-05", "S", "2450", "-1", Some("X")),
        ]);
        let rules: Vec<Rule> = findings_of(&w, "2026-06", &adj).into_iter().map(|(r, _)| r).collect();
        assert_eq!(
            rules,
            [
                Rule::GroupAdjustmentInconsistent,
                Rule::AccountUnknown,
                Rule::PeriodOutsideYear,
                Rule::AccountInvalid,
                Rule::AmountSurplusDecimals,
                Rule::AmountSurplusDecimals,
                Rule::GroupAdjustmentScopeInvalid,
                Rule::EntityUnknown,
                Rule::GroupAdjustmentScopeInvalid,
            ]
        );
    }

    /// A line naming S, a subsidiary with an NCI of 20%, is S's figure: the NCI bears
    /// its share. S's equity 850 (capital 600, retained earnings 100, profit 100, OCI
    /// 50) less 500 at acquisition: 350 post-acquisition. A top-side expense of 50
    /// naming S (5000 +50, 2450 -50) leaves 300, NCI 20% = 60; its profit 100 - 50 =
    /// 50, NCI 10. The same entry naming no entity is the owners' (scope P): NCI 70, 20.
    #[test]
    fn the_nci_bears_its_share_of_a_line_naming_its_subsidiary() {
        use super::super::investment::ForNci;
        let w = World::new(&["P", "S"], &[holding("P", "S", "0.8", "2020-01-01")], p("2026-06"));
        let nci_of = |entity: Option<&str>| {
            let bal = balances(&[
                ("S", "3000", None, "-600"),
                ("S", "3200", None, "-100"),
                ("S", "4000", None, "-300"),
                ("S", "5000", None, "200"),
                ("S", "9000", None, "-50"),
            ]);
            let cx = w.context(p("2026-06"), p("2026-01"), bal);
            let adj = file(vec![
                row("N", "2026-06", "P", "5000", "50", entity),
                row("N", "2026-06", "P", "2450", "-50", entity),
            ]);
            let mut j = Journal::default();
            post(&mut j, &cx, &adj);
            let measured = ForNci { pre_acquisition: BTreeMap::from([(id("S"), d("500"))]), ..ForNci::default() };
            let (rows, _) = super::super::nci::post(&mut j, &cx, &measured);
            (rows[0].equity, rows[0].profit)
        };
        assert_eq!(nci_of(Some("S")), (d("60"), d("10")));
        assert_eq!(nci_of(None), (d("70"), d("20")));
    }
}

//! The comparison's arithmetic: statement lines beside the comparison (variance, in
//! percent, favourable or not), the currency effect, and the walk from the comparison's
//! figure to the actual one.
//!
//! Every figure here is read off closes (their contributions, journal and NCI rows),
//! never recomputed: the group of a close is its contributions plus its elimination
//! lines (`close::roll_up`, proved by `close::prove`), which is what makes the walk add
//! up exactly. For a measure `m` (a signed sum of accounts, credit positive), with `A`
//! the actual close, `C` the actual close at the comparison's rates and `P` the
//! comparison's close:
//!
//! - currency effect: `m(A) - m(C)`;
//! - scope: `m(C_e) - m(P_e)` of each entity in one and not the other (an entity is in
//!   the actuals when the close consolidates it, in a plan when the plan has its file);
//!   an entity's part `X_e` is its contribution with its results before control
//!   removed (the `pre_acquisition_results` lines, IFRS 10.B88);
//! - operating variance at constant currency: `m(C_e) - m(P_e)` of the entities in both,
//!   summed by segment (by entity without segments);
//! - elimination effect: `m(C_r) - m(P_r)` of the elimination lines of each rule `r`;
//! - for the profit attributable to the owners of the parent, the attribution to the
//!   NCI: `-(nci(A) - nci(P))`.
//!
//! The steps sum to `m(A) - m(P)` (less the change in the NCI's share for the owners'
//! profit) by construction; [`walk`] asserts it.

use std::collections::{BTreeMap, BTreeSet};

use polars::prelude::PolarsResult;
use rust_decimal::Decimal;
use serde::Serialize;

use crate::close::{Close, EliminationRule};
use crate::layout::{LineBody, ResolvedStatement};
use crate::model::{AccountDef, EntityId, GroupAccount, Statement};

pub type Amounts = BTreeMap<GroupAccount, Decimal>;

/// A figure the walk explains: a signed sum of group accounts, shown credit positive.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct Measure {
    pub id: String,
    pub label: String,
    pub weights: BTreeMap<GroupAccount, i32>,
    /// Whether the figure is the profit attributable to the owners of the parent (the
    /// walk then has the NCI step).
    pub owners: bool,
}

impl Measure {
    /// The measure's value on debit-positive amounts, credit positive.
    pub fn value(&self, amounts: &Amounts) -> Decimal {
        -self.weights.iter().filter_map(|(a, w)| amounts.get(a).map(|v| *v * Decimal::from(*w))).sum::<Decimal>()
    }
}

/// The accounts a layout line collects, with their signs, totals expanded.
pub fn line_weights(st: &ResolvedStatement, line: &str) -> Option<BTreeMap<GroupAccount, i32>> {
    let l = st.lines.iter().find(|l| l.line == line)?;
    let mut out: BTreeMap<GroupAccount, i32> = BTreeMap::new();
    match &l.body {
        LineBody::Accounts(accts) => {
            for a in accts {
                *out.entry(a.clone()).or_default() += 1;
            }
        }
        LineBody::Total(parts) => {
            for (id, sign) in parts {
                // A layout's totals refer to earlier lines only (`layout::resolve`), so
                // the recursion ends.
                for (a, w) in line_weights(st, id)? {
                    *out.entry(a).or_default() += w * sign;
                }
            }
        }
    }
    Some(out)
}

/// The walk's measures: revenue and the profit measure of the `[segments]` settings
/// when they name lines of the income statement's layout (the figures management
/// reviews), then the profit attributable to the owners of the parent.
pub fn walk_measures(
    statements: &[ResolvedStatement],
    segments: Option<&crate::model::SegmentSettings>,
    chart: &[AccountDef],
) -> Vec<Measure> {
    let mut out = Vec::new();
    let pl = statements.iter().find(|s| s.statement == "profit_or_loss");
    if let (Some(pl), Some(seg)) = (pl, segments) {
        for id in [&seg.revenue, &seg.profit] {
            let Some(l) = pl.lines.iter().find(|l| &l.line == id) else { continue };
            if let Some(weights) = line_weights(pl, id) {
                out.push(Measure { id: id.clone(), label: l.label.clone(), weights, owners: false });
            }
        }
    }
    let weights =
        chart.iter().filter(|a| a.statement == Statement::ProfitOrLoss).map(|a| (a.account.clone(), 1)).collect();
    out.push(Measure {
        id: "profit_owners".into(),
        label: "Profit attributable to owners of the parent".into(),
        weights,
        owners: true,
    });
    out
}

/// A close's view (the close less its base) split by where each amount comes from.
#[derive(Debug, Clone, Default)]
pub struct Parts {
    pub by_entity: BTreeMap<EntityId, Amounts>,
    pub by_rule: BTreeMap<EliminationRule, Amounts>,
    pub group: Amounts,
    /// The NCI's share of the view's profit.
    pub profit_nci: Decimal,
}

impl Parts {
    fn add(&mut self, c: &Close, sign: Decimal) -> PolarsResult<()> {
        for (e, a, v) in crate::segments::contribution_rows(c)? {
            *self.by_entity.entry(e).or_default().entry(a).or_default() += v * sign;
        }
        for x in &c.journal {
            for l in &x.lines {
                // An entity's results before control are not the group's (IFRS 10.B88):
                // they count with the entity, whose contribution is then its results
                // from control, and a scope difference shows no pre-acquisition step.
                let slot = if x.rule == EliminationRule::PreAcquisitionResults {
                    self.by_entity.entry(l.entity.clone()).or_default()
                } else {
                    self.by_rule.entry(x.rule).or_default()
                };
                *slot.entry(l.account.clone()).or_default() += l.amount * sign;
            }
        }
        for (a, v) in &c.group {
            *self.group.entry(a.clone()).or_default() += *v * sign;
        }
        self.profit_nci += c.nci.iter().map(|n| n.profit).sum::<Decimal>() * sign;
        Ok(())
    }

    /// The parts of `close` less those of `base`. Only flows are meaningful in a view
    /// with a base; the walk reads income and expense only.
    pub fn of(close: &Close, base: Option<&Close>) -> PolarsResult<Parts> {
        let mut p = Parts::default();
        p.add(close, Decimal::ONE)?;
        if let Some(b) = base {
            p.add(b, -Decimal::ONE)?;
        }
        Ok(p)
    }
}

/// One step of a walk.
#[derive(Debug, Clone, PartialEq, Eq, Serialize)]
pub struct Step {
    /// `currency`, `scope`, `operating`, `elimination` or `nci`.
    pub step: &'static str,
    /// The entity, segment, elimination rule or `group` the step is about.
    pub item: String,
    pub amount: Decimal,
}

/// The walk of one measure from the comparison to the actuals.
#[derive(Debug, Clone, PartialEq, Eq, Serialize)]
pub struct Walk {
    pub measure: String,
    pub label: String,
    pub comparison: Decimal,
    pub actual: Decimal,
    pub steps: Vec<Step>,
}

/// The three closes a walk reads, as parts.
pub struct Sides<'a> {
    pub actual: &'a Parts,
    pub at_rates: &'a Parts,
    pub comparison: &'a Parts,
    /// The entities the comparison plans.
    pub planned: &'a BTreeSet<EntityId>,
}

/// The walk of `m` (see the module header), each step's item named by `segment_of`.
pub fn walk(m: &Measure, s: &Sides<'_>, segment_of: &dyn Fn(&EntityId) -> String) -> Walk {
    let empty = Amounts::new();
    let nci = |p: &Parts| if m.owners { p.profit_nci } else { Decimal::ZERO };
    let comparison = m.value(&s.comparison.group) - nci(s.comparison);
    let actual = m.value(&s.actual.group) - nci(s.actual);
    let mut steps = vec![Step {
        step: "currency",
        item: "group".into(),
        amount: m.value(&s.actual.group) - m.value(&s.at_rates.group),
    }];
    let entities: BTreeSet<&EntityId> = s.at_rates.by_entity.keys().chain(s.comparison.by_entity.keys()).collect();
    let mut operating: BTreeMap<String, Decimal> = BTreeMap::new();
    for e in entities {
        let amount = m.value(s.at_rates.by_entity.get(e).unwrap_or(&empty))
            - m.value(s.comparison.by_entity.get(e).unwrap_or(&empty));
        let in_actuals = s.at_rates.by_entity.contains_key(e);
        let in_plan = s.planned.contains(e) && s.comparison.by_entity.contains_key(e);
        if in_actuals && in_plan {
            *operating.entry(segment_of(e)).or_default() += amount;
        } else if !amount.is_zero() {
            steps.push(Step { step: "scope", item: e.to_string(), amount });
        }
    }
    steps.extend(operating.into_iter().map(|(item, amount)| Step { step: "operating", item, amount }));
    let mut rules: BTreeSet<&EliminationRule> = s.at_rates.by_rule.keys().chain(s.comparison.by_rule.keys()).collect();
    rules.insert(&EliminationRule::Intercompany);
    for r in rules {
        let amount = m.value(s.at_rates.by_rule.get(r).unwrap_or(&empty))
            - m.value(s.comparison.by_rule.get(r).unwrap_or(&empty));
        if !amount.is_zero() || *r == EliminationRule::Intercompany {
            steps.push(Step { step: "elimination", item: r.as_str().to_string(), amount });
        }
    }
    if m.owners {
        steps.push(Step {
            step: "nci",
            item: "attributable to non-controlling interests".into(),
            amount: -(s.actual.profit_nci - s.comparison.profit_nci),
        });
    }
    let total: Decimal = steps.iter().map(|x| x.amount).sum();
    // The group is its contributions plus its elimination lines (proved by the close),
    // so the steps add up by construction; a difference is a bug.
    assert_eq!(
        comparison + total,
        actual,
        "walk of {}: comparison {comparison} + steps {total} != actual {actual}",
        m.id
    );
    Walk { measure: m.id.clone(), label: m.label.clone(), comparison, actual, steps }
}

/// The currency effect of a measure by entity and by elimination rule, which sum to the
/// group's (the walk's currency step).
#[derive(Debug, Clone, PartialEq, Eq, Serialize)]
pub struct CurrencyRow {
    pub measure: String,
    /// `entity`, `segment`, `elimination` or `group`.
    pub level: &'static str,
    pub item: String,
    pub actual: Decimal,
    pub at_comparison_rates: Decimal,
    pub effect: Decimal,
}

/// The currency effect of `m` by entity, segment, elimination rule and for the group.
pub fn currency_effect(
    m: &Measure,
    actual: &Parts,
    at_rates: &Parts,
    segment_of: &dyn Fn(&EntityId) -> String,
) -> Vec<CurrencyRow> {
    let empty = Amounts::new();
    let row = |level, item: String, a: &Amounts, c: &Amounts| {
        let (x, y) = (m.value(a), m.value(c));
        CurrencyRow { measure: m.id.clone(), level, item, actual: x, at_comparison_rates: y, effect: x - y }
    };
    let mut out = Vec::new();
    let mut segments: BTreeMap<String, (Decimal, Decimal)> = BTreeMap::new();
    let entities: BTreeSet<&EntityId> = actual.by_entity.keys().chain(at_rates.by_entity.keys()).collect();
    for e in entities {
        let r = row(
            "entity",
            e.to_string(),
            actual.by_entity.get(e).unwrap_or(&empty),
            at_rates.by_entity.get(e).unwrap_or(&empty),
        );
        let s = segments.entry(segment_of(e)).or_default();
        s.0 += r.actual;
        s.1 += r.at_comparison_rates;
        out.push(r);
    }
    for (item, (x, y)) in segments {
        out.push(CurrencyRow {
            measure: m.id.clone(),
            level: "segment",
            item,
            actual: x,
            at_comparison_rates: y,
            effect: x - y,
        });
    }
    let rules: BTreeSet<&EliminationRule> = actual.by_rule.keys().chain(at_rates.by_rule.keys()).collect();
    for r in rules {
        let x = row(
            "elimination",
            r.as_str().into(),
            actual.by_rule.get(r).unwrap_or(&empty),
            at_rates.by_rule.get(r).unwrap_or(&empty),
        );
        if !x.actual.is_zero() || !x.at_comparison_rates.is_zero() {
            out.push(x);
        }
    }
    out.push(row("group", "group".into(), &actual.group, &at_rates.group));
    out
}

/// One statement line beside its comparison.
#[derive(Debug, Clone, PartialEq, Eq, Serialize)]
pub struct LineComparison {
    pub line: String,
    pub label: String,
    /// As presented, like the statement's amount.
    pub actual: Decimal,
    pub comparison: Decimal,
    /// `actual - comparison`, as presented.
    pub variance: Decimal,
    /// The variance in percent of the comparison's magnitude, one decimal; `None` when
    /// the comparison is zero.
    pub variance_percent: Option<Decimal>,
    /// `favourable` or `unfavourable` for income, expense and OCI lines (more income or
    /// less expense is favourable, common practice); `None` for balance-sheet lines and
    /// no variance.
    pub direction: Option<&'static str>,
    /// The actual line at the comparison's rates, and the currency effect (actual less
    /// that), as presented.
    pub at_comparison_rates: Decimal,
    pub currency_effect: Decimal,
}

/// The currency effect of every line of a statement the comparison does not compare
/// (the balance sheet of a plan): the actual line less the same line at the
/// comparison's rates, as rows of level `line` named `<statement>:<line>`.
pub fn line_currency_effect(st: &ResolvedStatement, actual: &Amounts, at_rates: &Amounts) -> Vec<CurrencyRow> {
    let (a, r) = (st.evaluate(actual), st.evaluate(at_rates));
    st.lines
        .iter()
        .zip(a.into_iter().zip(r))
        .map(|(l, ((_, a), (_, r)))| {
            let (a, r) = (l.presentation.show(a), l.presentation.show(r));
            CurrencyRow {
                measure: format!("{}:{}", st.statement, l.line),
                level: "line",
                item: l.label.clone(),
                actual: a,
                at_comparison_rates: r,
                effect: a - r,
            }
        })
        .collect()
}

/// The variance in percent of the comparison's magnitude, rounded to one decimal.
pub fn variance_percent(variance: Decimal, comparison: Decimal) -> Option<Decimal> {
    if comparison.is_zero() {
        return None;
    }
    Some(crate::money::round(
        variance * Decimal::ONE_HUNDRED / comparison.abs(),
        1,
        crate::model::RoundingMode::HalfAwayFromZero,
    ))
}

/// Every line of `st` with the actual, comparison and at-comparison-rates amounts
/// (debit positive, by account); `flows` for statements of income, expense and OCI.
pub fn compare_statement(
    st: &ResolvedStatement,
    actual: &Amounts,
    comparison: &Amounts,
    at_rates: &Amounts,
    flows: bool,
) -> Vec<LineComparison> {
    let (a, c, r) = (st.evaluate(actual), st.evaluate(comparison), st.evaluate(at_rates));
    st.lines
        .iter()
        .zip(a.into_iter().zip(c).zip(r))
        .map(|(l, (((_, a), (_, c)), (_, r)))| {
            let show = |x: Decimal| l.presentation.show(x);
            let variance_debit = a - c;
            // Debit positive, a variance below zero is more income or less expense.
            let direction = match (flows, variance_debit.cmp(&Decimal::ZERO)) {
                (true, std::cmp::Ordering::Less) => Some("favourable"),
                (true, std::cmp::Ordering::Greater) => Some("unfavourable"),
                _ => None,
            };
            let variance = show(variance_debit);
            LineComparison {
                line: l.line.clone(),
                label: l.label.clone(),
                actual: show(a),
                comparison: show(c),
                variance,
                variance_percent: variance_percent(variance, show(c)),
                direction,
                at_comparison_rates: show(r),
                currency_effect: show(a - r),
            }
        })
        .collect()
}

/// A ratio line beside its comparison, in percent; each `None` where a denominator is
/// zero.
#[derive(Debug, Clone, PartialEq, Eq, Serialize)]
pub struct RatioComparison {
    pub line: String,
    pub label: String,
    pub actual: Option<Decimal>,
    pub comparison: Option<Decimal>,
    /// `actual - comparison`, in percentage points.
    pub variance_points: Option<Decimal>,
    /// A ratio whose numerator is shown credit positive (a margin) is favourable when it
    /// rises, one shown debit positive (a cost ratio) when it falls (common practice).
    pub direction: Option<&'static str>,
    pub at_comparison_rates: Option<Decimal>,
    /// `actual - at_comparison_rates`, in percentage points.
    pub currency_effect_points: Option<Decimal>,
}

/// The ratio lines of `st` (see [`compare_statement`] for the amounts).
pub fn compare_ratios(
    st: &ResolvedStatement,
    actual: &Amounts,
    comparison: &Amounts,
    at_rates: &Amounts,
) -> Vec<RatioComparison> {
    let (a, c, r) = (st.evaluate_ratios(actual), st.evaluate_ratios(comparison), st.evaluate_ratios(at_rates));
    let diff = |x: Option<Decimal>, y: Option<Decimal>| Some(x? - y?);
    st.ratios
        .iter()
        .zip(a.into_iter().zip(c).zip(r))
        .map(|(l, (((_, a), (_, c)), (_, r)))| {
            let rising_is_good = st
                .lines
                .iter()
                .find(|x| x.line == l.numerator)
                .is_some_and(|x| x.presentation == crate::layout::Presentation::CreditPositive);
            let variance_points = diff(a, c);
            let direction = variance_points.and_then(|v| match (v.cmp(&Decimal::ZERO), rising_is_good) {
                (std::cmp::Ordering::Equal, _) => None,
                (std::cmp::Ordering::Greater, true) | (std::cmp::Ordering::Less, false) => Some("favourable"),
                _ => Some("unfavourable"),
            });
            RatioComparison {
                line: l.line.clone(),
                label: l.label.clone(),
                actual: a,
                comparison: c,
                variance_points,
                direction,
                at_comparison_rates: r,
                currency_effect_points: diff(a, r),
            }
        })
        .collect()
}

/// One figure of a segment (or the group) beside its comparison.
#[derive(Debug, Clone, PartialEq, Eq, Serialize)]
pub struct SegmentComparison {
    /// The segment, or `group` for the group's figure.
    pub segment: String,
    /// The segment report's line (`revenue`, `revenue_external`, `profit`, ...).
    pub line: String,
    pub actual: Decimal,
    pub comparison: Decimal,
    pub variance: Decimal,
    pub variance_percent: Option<Decimal>,
    /// Flow figures are shown credit positive in the segment report, so more is
    /// favourable.
    pub direction: Option<&'static str>,
    pub at_comparison_rates: Decimal,
    pub currency_effect: Decimal,
}

/// Every flow figure (not segment assets or liabilities: a plan has no balance sheet)
/// of every segment and of the group, in the actual report, the comparison's and the
/// actual one at the comparison's rates, all by the same key.
pub fn compare_segments(
    actual: &crate::segments::SegmentReport,
    comparison: &crate::segments::SegmentReport,
    at_rates: &crate::segments::SegmentReport,
) -> Vec<SegmentComparison> {
    let value = |r: &crate::segments::SegmentReport, segment: &str, line: &str| {
        if segment == "group" {
            return r.reconciliation.iter().find(|l| l.line == line).map(|l| l.group).unwrap_or_default();
        }
        r.segments.iter().find(|s| s.segment == segment).and_then(|s| s.values.get(line)).copied().unwrap_or_default()
    };
    let mut segments: Vec<String> = actual.segments.iter().map(|s| s.segment.clone()).collect();
    for s in &comparison.segments {
        if !segments.contains(&s.segment) {
            segments.push(s.segment.clone());
        }
    }
    segments.push("group".into());
    let lines: Vec<&str> =
        actual.lines.iter().map(|l| l.line.as_str()).filter(|l| !matches!(*l, "assets" | "liabilities")).collect();
    let mut out = Vec::new();
    for s in &segments {
        for l in &lines {
            let (a, c, r) = (value(actual, s, l), value(comparison, s, l), value(at_rates, s, l));
            let variance = a - c;
            let direction = match variance.cmp(&Decimal::ZERO) {
                std::cmp::Ordering::Greater => Some("favourable"),
                std::cmp::Ordering::Less => Some("unfavourable"),
                std::cmp::Ordering::Equal => None,
            };
            out.push(SegmentComparison {
                segment: s.clone(),
                line: l.to_string(),
                actual: a,
                comparison: c,
                variance,
                variance_percent: variance_percent(variance, c),
                direction,
                at_comparison_rates: r,
                currency_effect: a - r,
            });
        }
    }
    out
}

#[cfg(test)]
mod tests {
    use super::*;

    fn d(s: &str) -> Decimal {
        s.parse().unwrap()
    }

    fn amounts(rows: &[(&str, &str)]) -> Amounts {
        rows.iter().map(|(a, v)| (GroupAccount::new(*a), d(v))).collect()
    }

    fn parts(entities: &[(&str, &[(&str, &str)])], rules: &[(EliminationRule, &[(&str, &str)])], nci: &str) -> Parts {
        let mut p = Parts { profit_nci: d(nci), ..Parts::default() };
        for (e, rows) in entities {
            let a = amounts(rows);
            for (k, v) in &a {
                *p.group.entry(k.clone()).or_default() += *v;
            }
            p.by_entity.insert(EntityId::new(*e), a);
        }
        for (r, rows) in rules {
            let a = amounts(rows);
            for (k, v) in &a {
                *p.group.entry(k.clone()).or_default() += *v;
            }
            p.by_rule.insert(*r, a);
        }
        p
    }

    /// Worked by hand (invented figures, debit positive; profit = -(4000 + 5000)):
    /// actual A: P revenue 1,000 cost 600; S revenue 500 cost 200; N (not planned)
    /// revenue 300 cost 100; the intercompany elimination debits revenue 50 and credits
    /// cost 50 (revenue 50 less, profit unchanged). NCI 40.
    /// At plan rates C: P as A; S revenue 550 cost 220; N revenue 330 cost 110;
    /// eliminations as A. Plan P: P revenue 900 cost 500; S revenue 520 cost 260;
    /// eliminations revenue +30 cost -30. NCI 35.
    /// Profit: A = 400 + 300 + 200 = 900, less NCI 40 = 860. C = 400 + 330 + 220 = 950.
    /// Plan = 400 + 260 = 660, less NCI 35 = 625.
    /// Steps: currency 900 - 950 = -50; scope N 220 - 0 = 220; operating P 400 - 400 = 0,
    /// S 330 - 260 = 70; eliminations 0 - 0 = 0; NCI -(40 - 35) = -5.
    /// 625 - 50 + 220 + 0 + 70 + 0 - 5 = 860.
    #[test]
    fn walk_of_profit_worked_by_hand() {
        let ic: &[(&str, &str)] = &[("4000", "50"), ("5000", "-50")];
        let actual = parts(
            &[
                ("P", &[("4000", "-1000"), ("5000", "600")]),
                ("S", &[("4000", "-500"), ("5000", "200")]),
                ("N", &[("4000", "-300"), ("5000", "100")]),
            ],
            &[(EliminationRule::Intercompany, ic)],
            "40",
        );
        let at_rates = parts(
            &[
                ("P", &[("4000", "-1000"), ("5000", "600")]),
                ("S", &[("4000", "-550"), ("5000", "220")]),
                ("N", &[("4000", "-330"), ("5000", "110")]),
            ],
            &[(EliminationRule::Intercompany, ic)],
            "40",
        );
        let plan = parts(
            &[("P", &[("4000", "-900"), ("5000", "500")]), ("S", &[("4000", "-520"), ("5000", "260")])],
            &[(EliminationRule::Intercompany, &[("4000", "30"), ("5000", "-30")])],
            "35",
        );
        let planned = [EntityId::new("P"), EntityId::new("S")].into_iter().collect();
        let sides = Sides { actual: &actual, at_rates: &at_rates, comparison: &plan, planned: &planned };
        let m = Measure {
            id: "profit_owners".into(),
            label: "profit".into(),
            weights: [(GroupAccount::new("4000"), 1), (GroupAccount::new("5000"), 1)].into(),
            owners: true,
        };
        let w = walk(&m, &sides, &|e| e.to_string());
        assert_eq!((w.comparison, w.actual), (d("625"), d("860")));
        let steps: Vec<(&str, &str, Decimal)> = w.steps.iter().map(|s| (s.step, s.item.as_str(), s.amount)).collect();
        assert_eq!(
            steps,
            vec![
                ("currency", "group", d("-50")),
                ("scope", "N", d("220")),
                ("operating", "P", d("0")),
                ("operating", "S", d("70")),
                ("elimination", "intercompany", d("0")),
                ("nci", "attributable to non-controlling interests", d("-5")),
            ]
        );
        // Revenue (4000 only): the intercompany elimination moves it: at plan rates
        // -(50) against the plan's -(30): -20.
        let rev = Measure {
            id: "REV".into(),
            label: "Revenue".into(),
            weights: [(GroupAccount::new("4000"), 1)].into(),
            owners: false,
        };
        let w = walk(&rev, &sides, &|e| e.to_string());
        assert_eq!((w.comparison, w.actual), (d("1390"), d("1750")));
        let elim = w.steps.iter().find(|s| s.step == "elimination").unwrap();
        assert_eq!(elim.amount, d("-20"));
        // The currency effect by entity sums to the group's.
        let fx = currency_effect(&m, &actual, &at_rates, &|e| e.to_string());
        let by_entity: Decimal = fx.iter().filter(|r| r.level == "entity").map(|r| r.effect).sum();
        let group = fx.iter().find(|r| r.level == "group").unwrap().effect;
        assert_eq!((by_entity, group), (d("-50"), d("-50")));
    }
}

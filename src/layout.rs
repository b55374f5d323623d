//! Statement layouts: which group accounts each printed line collects and which lines
//! it totals, as defined in `entities/layouts.csv`, never in code. This module resolves
//! a layout against the chart and checks it covers every account exactly once; it does
//! not format anything (that is `report`).

use std::collections::{BTreeMap, BTreeSet};

use rust_decimal::Decimal;

use crate::findings::{Finding, Rule};
use crate::model::{AccountClass, AccountDef, GroupAccount, Source, Statement};

/// How a statement shows signs: ledgers are debit positive; income, equity and
/// liabilities are usually shown positive (credit positive).
#[derive(Debug, Clone, Copy, PartialEq, Eq, serde::Serialize)]
#[serde(rename_all = "snake_case")]
pub enum Presentation {
    DebitPositive,
    CreditPositive,
}

impl Presentation {
    /// The shown value of a debit-positive amount.
    pub fn show(&self, debit_positive: Decimal) -> Decimal {
        match self {
            Presentation::DebitPositive => debit_positive,
            Presentation::CreditPositive => -debit_positive,
        }
    }
}

/// One row of `layouts.csv`.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct LayoutLine {
    pub statement: String,
    pub line: String,
    pub label: String,
    pub accounts: Option<String>,
    pub total_of: Option<String>,
    pub presentation: Presentation,
    pub source: Source,
}

/// The statements a layout may define.
pub const STATEMENTS: &[&str] = &["profit_or_loss", "oci", "balance_sheet", "equity_changes"];

/// A line resolved against the chart.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct ResolvedLine {
    pub line: String,
    pub label: String,
    pub presentation: Presentation,
    pub body: LineBody,
}

#[derive(Debug, Clone, PartialEq, Eq)]
pub enum LineBody {
    Accounts(Vec<GroupAccount>),
    /// Line ids with their sign (+1 or -1).
    Total(Vec<(String, i32)>),
}

/// A ratio line: one line of the statement divided by another, in percent (`total_of`
/// written `GP / REV`). It is no amount: totals cannot add it, and it is shown apart
/// from the statement's amounts.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct RatioLine {
    pub line: String,
    pub label: String,
    pub numerator: String,
    pub denominator: String,
}

/// A statement resolved against the chart: lines in print order, and its ratio lines.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct ResolvedStatement {
    pub statement: String,
    pub lines: Vec<ResolvedLine>,
    pub ratios: Vec<RatioLine>,
}

/// `numerator / denominator` in percent, one decimal (half away from zero); `None` when
/// the denominator is zero.
pub fn percent_of(numerator: Decimal, denominator: Decimal) -> Option<Decimal> {
    if denominator.is_zero() {
        return None;
    }
    let p = numerator * Decimal::ONE_HUNDRED / denominator;
    Some(p.round_dp_with_strategy(1, rust_decimal::RoundingStrategy::MidpointAwayFromZero))
}

impl ResolvedStatement {
    /// Values of every line (debit positive) from account amounts.
    pub fn evaluate(&self, amounts: &BTreeMap<GroupAccount, Decimal>) -> Vec<(String, Decimal)> {
        let mut values: BTreeMap<String, Decimal> = BTreeMap::new();
        let mut out = Vec::new();
        for l in &self.lines {
            let v = match &l.body {
                LineBody::Accounts(accts) => accts.iter().filter_map(|a| amounts.get(a)).copied().sum(),
                LineBody::Total(parts) => parts
                    .iter()
                    .map(|(id, sign)| values.get(id).copied().unwrap_or_default() * Decimal::from(*sign))
                    .sum(),
            };
            values.insert(l.line.clone(), v);
            out.push((l.line.clone(), v));
        }
        out
    }

    /// The ratio lines' percentages from account amounts (debit positive): each line's
    /// value as presented over the other's as presented, so that a margin of income
    /// over income is positive when both are income.
    pub fn evaluate_ratios(&self, amounts: &BTreeMap<GroupAccount, Decimal>) -> Vec<(String, Option<Decimal>)> {
        let values = self.evaluate(amounts);
        let shown = |id: &str| {
            let l = self.lines.iter().find(|l| l.line == id)?;
            let v = values.iter().find(|(x, _)| x == id)?.1;
            Some(l.presentation.show(v))
        };
        self.ratios
            .iter()
            .map(|r| {
                let p = match (shown(&r.numerator), shown(&r.denominator)) {
                    (Some(n), Some(d)) => percent_of(n, d),
                    _ => None,
                };
                (r.line.clone(), p)
            })
            .collect()
    }
}

/// Whether `account` falls in the token `spec`: an account id, or an inclusive range
/// `from..to` compared as text among ids of the same length.
pub(crate) fn matches(spec: &str, account: &str) -> bool {
    match spec.split_once("..") {
        Some((from, to)) => {
            account.len() == from.len() && account.len() == to.len() && from <= account && account <= to
        }
        None => spec == account,
    }
}

/// Which accounts a statement collects.
fn in_statement(statement: &str, a: &AccountDef) -> bool {
    match statement {
        "profit_or_loss" => a.statement == Statement::ProfitOrLoss,
        "oci" => a.statement == Statement::Oci,
        "balance_sheet" => a.statement == Statement::BalanceSheet,
        "equity_changes" => a.class == AccountClass::Equity,
        _ => false,
    }
}

/// Resolves every statement and reports uncovered, doubly covered and malformed lines.
pub fn resolve(lines: &[LayoutLine], chart: &[AccountDef], findings: &mut Vec<Finding>) -> Vec<ResolvedStatement> {
    let mut out = Vec::new();
    for st in STATEMENTS {
        let rows: Vec<&LayoutLine> = lines.iter().filter(|l| l.statement == *st).collect();
        if rows.is_empty() {
            findings.push(Finding::new(
                Rule::LayoutInvalid,
                format!("layouts.csv defines no line of statement {st}"),
                format!("add the lines of {st} to entities/layouts.csv"),
            ));
            continue;
        }
        let mut seen_ids = BTreeSet::new();
        let mut covered: BTreeMap<&str, &LayoutLine> = BTreeMap::new();
        let mut resolved = Vec::new();
        let mut ratios = Vec::new();
        for l in rows {
            if !seen_ids.insert(l.line.clone()) {
                findings.push(
                    Finding::new(
                        Rule::LayoutInvalid,
                        format!("line id {} appears twice in {st}", l.line),
                        "give each line its own id",
                    )
                    .at(&l.source),
                );
                continue;
            }
            if let (None, Some(parts)) = (&l.accounts, &l.total_of)
                && parts.contains('/')
            {
                if let Some(r) = ratio_line(l, parts, &seen_ids, &ratios, st, findings) {
                    ratios.push(r);
                }
                continue;
            }
            let body = match (&l.accounts, &l.total_of) {
                (Some(specs), None) => {
                    let specs: Vec<&str> = specs.split_whitespace().collect();
                    let mut accts = Vec::new();
                    for a in chart.iter().filter(|a| in_statement(st, a)) {
                        if specs.iter().any(|s| matches(s, a.account.as_str())) {
                            if let Some(prev) = covered.insert(a.account.as_str(), l) {
                                findings.push(
                                    Finding::new(
                                        Rule::LayoutAccountTwice,
                                        format!(
                                            "account {} is collected by line {} and by line {} of {st}",
                                            a.account, prev.line, l.line
                                        ),
                                        "collect each account on exactly one line of a statement",
                                    )
                                    .at(&l.source)
                                    .account(a.account.as_str()),
                                );
                            }
                            accts.push(a.account.clone());
                        }
                    }
                    LineBody::Accounts(accts)
                }
                (None, Some(parts)) => total_body(l, parts, &seen_ids, &ratios, st, findings),
                _ => {
                    findings.push(
                        Finding::new(
                            Rule::LayoutInvalid,
                            format!("line {} of {st} must have either `accounts` or `total_of`", l.line),
                            "fill in exactly one of the two columns",
                        )
                        .at(&l.source),
                    );
                    continue;
                }
            };
            resolved.push(ResolvedLine {
                line: l.line.clone(),
                label: l.label.clone(),
                presentation: l.presentation,
                body,
            });
        }
        for a in chart.iter().filter(|a| in_statement(st, a)) {
            if !covered.contains_key(a.account.as_str()) {
                findings.push(
                    Finding::new(
                        Rule::LayoutAccountUncovered,
                        format!("group account {} ({}) is on no line of {st}", a.account, a.name),
                        format!("add it to a line of {st} in entities/layouts.csv"),
                    )
                    .at(&a.source)
                    .account(a.account.as_str()),
                );
            }
        }
        out.push(ResolvedStatement { statement: st.to_string(), lines: resolved, ratios });
    }
    out
}

/// The lines a total line `l` adds, each with its sign; a finding for a line that is
/// not above it or is a ratio line.
fn total_body(
    l: &LayoutLine,
    parts: &str,
    seen_ids: &BTreeSet<String>,
    ratios: &[RatioLine],
    st: &str,
    findings: &mut Vec<Finding>,
) -> LineBody {
    let mut v = Vec::new();
    for p in parts.split_whitespace() {
        let (id, sign) = match p.strip_prefix('-') {
            Some(id) => (id, -1),
            None => (p.strip_prefix('+').unwrap_or(p), 1),
        };
        if ratios.iter().any(|r| r.line == id) {
            findings.push(
                Finding::new(
                    Rule::LayoutInvalid,
                    format!("line {} totals {id}, a ratio line of {st}", l.line),
                    "a total adds amounts: leave the ratio out of it",
                )
                .at(&l.source),
            );
        } else if !seen_ids.contains(id) {
            findings.push(
                Finding::new(
                    Rule::LayoutInvalid,
                    format!("line {} totals {id}, which is not a line above it in {st}", l.line),
                    "a total may only add lines defined above it",
                )
                .at(&l.source),
            );
        }
        v.push((id.to_string(), sign));
    }
    LineBody::Total(v)
}

/// A ratio line `A / B` of `l`, both lines above it that are not ratios; `None` with a
/// finding otherwise.
fn ratio_line(
    l: &LayoutLine,
    parts: &str,
    seen_ids: &BTreeSet<String>,
    ratios: &[RatioLine],
    st: &str,
    findings: &mut Vec<Finding>,
) -> Option<RatioLine> {
    let mut bad = |why: String| {
        findings.push(
            Finding::new(
                Rule::LayoutInvalid,
                format!("ratio line {} of {st}: {why}", l.line),
                "write a ratio line's total_of as `NUMERATOR / DENOMINATOR`, two lines above it",
            )
            .at(&l.source),
        );
        None
    };
    let Some((n, d)) = parts.split_once('/') else { return bad(format!("{parts:?} is not A / B")) };
    let (n, d) = (n.trim(), d.trim());
    if n.is_empty() || d.is_empty() || n.contains(char::is_whitespace) || d.contains(char::is_whitespace) {
        return bad(format!("{parts:?} is not one line over one line"));
    }
    for id in [n, d] {
        if !seen_ids.contains(id) || ratios.iter().any(|r| r.line == id) {
            return bad(format!("{id} is not an amount line above it"));
        }
    }
    Some(RatioLine { line: l.line.clone(), label: l.label.clone(), numerator: n.into(), denominator: d.into() })
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn ratio_lines_are_percent_of_presented_values_to_one_decimal() {
        let line = |id: &str, body: LineBody| ResolvedLine {
            line: id.into(),
            label: id.into(),
            presentation: Presentation::CreditPositive,
            body,
        };
        let acct = |a: &str| GroupAccount::new(a);
        let st = ResolvedStatement {
            statement: "profit_or_loss".into(),
            lines: vec![
                line("REV", LineBody::Accounts(vec![acct("4000")])),
                line("COS", LineBody::Accounts(vec![acct("5000")])),
                line("GP", LineBody::Total(vec![("REV".into(), 1), ("COS".into(), 1)])),
            ],
            ratios: vec![RatioLine {
                line: "GM".into(),
                label: "Gross margin".into(),
                numerator: "GP".into(),
                denominator: "REV".into(),
            }],
        };
        // Revenue 3,000.00 (a credit), cost 1,999.85: gross profit 1,000.15, and
        // 1,000.15 / 3,000.00 = 33.338...% = 33.3%.
        let amounts: BTreeMap<GroupAccount, Decimal> =
            [(acct("4000"), Decimal::new(-300000, 2)), (acct("5000"), Decimal::new(199985, 2))].into();
        assert_eq!(st.evaluate_ratios(&amounts), vec![("GM".to_string(), Some(Decimal::new(333, 1)))]);
        // No revenue: no margin.
        assert_eq!(st.evaluate_ratios(&BTreeMap::new()), vec![("GM".to_string(), None)]);
        // Ties round away from zero: 1 / 8 = 12.5% exactly, 1 / 16 = 6.25% -> 6.3%.
        assert_eq!(percent_of(Decimal::ONE, Decimal::from(16)), Some(Decimal::new(63, 1)));
        assert_eq!(percent_of(-Decimal::ONE, Decimal::from(16)), Some(Decimal::new(-63, 1)));
    }

    #[test]
    fn ranges_compare_ids_of_equal_length() {
        assert!(matches("4000..4099", "4050"));
        assert!(!matches("4000..4099", "40500"));
        assert!(!matches("4000..4099", "4100"));
        assert!(matches("1550", "1550"));
    }
}

//! Rendering and writing of a close: the statements laid out from `layouts.csv` with
//! subtotals, thousands separators and negatives in parentheses; the group trial
//! balance, the elimination journal, the NCI schedule and the proof, as files (CSV and
//! Parquet, byte-identical on rerun) and as JSON.

use std::collections::BTreeMap;
use std::path::Path;

use polars::prelude::*;
use rust_decimal::Decimal;
use serde::Serialize;

use crate::close::{Entry, NciRow, OperationReserveRow};
use crate::layout::{LineBody, ResolvedStatement};
use crate::load::InputFile;
use crate::model::{GroupAccount, Period};
use crate::money::format_amount;
use crate::proof::Check;

use super::{CsvOut, Format, to_json, write_file};

/// One printed line of a statement.
#[derive(Debug, Clone, Serialize)]
pub struct StatementLine {
    pub line: String,
    pub label: String,
    /// As presented (income, equity and liabilities positive where the layout says so).
    pub amount: Decimal,
    pub total: bool,
    /// Whether the layout shows this line debit positive (assets, expenses).
    #[serde(skip)]
    pub debit_positive: bool,
    /// The comparative of the prior year (IAS 1.38), as presented, when the data folder
    /// holds it.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub prior_year: Option<Decimal>,
}

#[derive(Debug, Clone, Serialize)]
pub struct StatementOut {
    pub statement: String,
    pub lines: Vec<StatementLine>,
    /// The layout's ratio lines, in percent (`None` when the denominator is zero).
    #[serde(skip_serializing_if = "Vec::is_empty")]
    pub ratios: Vec<RatioOut>,
}

/// One ratio line of a statement, in percent.
#[derive(Debug, Clone, Serialize)]
pub struct RatioOut {
    pub line: String,
    pub label: String,
    pub percent: Option<Decimal>,
}

/// Lays a statement out from account amounts (debit positive).
pub fn lay_out(st: &ResolvedStatement, amounts: &BTreeMap<GroupAccount, Decimal>) -> StatementOut {
    let values = st.evaluate(amounts);
    let lines = st
        .lines
        .iter()
        .zip(values)
        .map(|(l, (_, v))| StatementLine {
            line: l.line.clone(),
            label: l.label.clone(),
            amount: l.presentation.show(v),
            total: matches!(l.body, LineBody::Total(_)),
            debit_positive: l.presentation == crate::layout::Presentation::DebitPositive,
            prior_year: None,
        })
        .collect();
    let ratios = st
        .ratios
        .iter()
        .zip(st.evaluate_ratios(amounts))
        .map(|(r, (_, percent))| RatioOut { line: r.line.clone(), label: r.label.clone(), percent })
        .collect();
    StatementOut { statement: st.statement.clone(), lines, ratios }
}

/// Sets each line's prior-year comparative from the same statement laid out on the
/// prior year's amounts (one layout, so the lines correspond one to one).
pub fn with_prior_year(out: &mut StatementOut, prior: &StatementOut) {
    for (l, p) in out.lines.iter_mut().zip(&prior.lines) {
        debug_assert_eq!(l.line, p.line);
        l.prior_year = Some(p.amount);
    }
}

/// The statement of changes in equity as output: columns by component, rows by
/// movement, amounts by column id (credit positive, decimal strings in JSON).
#[derive(Debug, Clone, Serialize)]
pub struct EquityChangesOut {
    pub columns: Vec<EquityColumnOut>,
    pub rows: Vec<EquityRowOut>,
}

#[derive(Debug, Clone, Serialize)]
pub struct EquityColumnOut {
    pub column: String,
    pub label: String,
}

#[derive(Debug, Clone, Serialize)]
pub struct EquityRowOut {
    pub row: &'static str,
    pub label: String,
    pub amounts: BTreeMap<String, Decimal>,
}

pub fn equity_changes_out(x: &crate::equity::EquityChanges) -> EquityChangesOut {
    EquityChangesOut {
        columns: x.columns.iter().map(|c| EquityColumnOut { column: c.id.clone(), label: c.label.clone() }).collect(),
        rows: x
            .rows
            .iter()
            .map(|r| EquityRowOut {
                row: r.id,
                label: r.label.clone(),
                amounts: x.columns.iter().map(|c| c.id.clone()).zip(r.amounts.iter().copied()).collect(),
            })
            .collect(),
    }
}

/// The statements of a close: those laid out from `layouts.csv` by statement, and the
/// statement of changes in equity under `changes_in_equity`.
#[derive(Serialize)]
pub struct Statements {
    #[serde(flatten)]
    pub laid_out: BTreeMap<String, StatementOut>,
    pub changes_in_equity: EquityChangesOut,
    /// The statement of cash flows (IAS 7), when the group classifies its accounts.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub cash_flows: Option<crate::cash_flows::CashFlows>,
    /// The comparison asked with `--compare`.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub comparison: Option<crate::compare::Comparison>,
    /// The prior year's comparison (IAS 1.38), when the data folder holds it.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub prior_year: Option<PriorYearOut>,
}

/// What a close shows of the prior year besides each line's `prior_year`: the period
/// compared with, the attribution and the prior year's statement of changes in equity.
#[derive(Serialize)]
pub struct PriorYearOut {
    pub period: String,
    pub attribution: Attribution,
    pub changes_in_equity: EquityChangesOut,
}

#[derive(Serialize)]
pub struct Attribution {
    pub profit: Decimal,
    pub profit_owners: Decimal,
    pub profit_nci: Decimal,
    pub oci: Decimal,
    pub oci_owners: Decimal,
    pub oci_nci: Decimal,
    pub result_in_equity: Decimal,
}

#[derive(Serialize)]
pub struct Proof<'a> {
    /// `final`, or `draft` for a close run with `--draft` despite its exceptions.
    pub status: &'static str,
    pub period: String,
    /// `group`, or the root entity of a sub-group.
    pub scope: String,
    pub view: &'a str,
    /// Every blocking finding the close was run despite (none in a final close).
    pub exceptions: &'a [crate::findings::Finding],
    pub tied: bool,
    pub checks: &'a [Check],
    pub inputs: &'a [InputFile],
    pub tessera_version: &'static str,
    pub policies: serde_json::Value,
}

#[derive(Serialize)]
pub struct CloseReport<'a> {
    pub period: String,
    pub currency: String,
    pub view: &'a str,
    pub scope: String,
    pub proof: Proof<'a>,
    pub group_trial_balance: Vec<serde_json::Value>,
    pub statements: Statements,
    pub attribution: Attribution,
    pub eliminations: &'a [Entry],
    pub nci: &'a [NciRow],
    /// The translation reserve per consolidated foreign operation (IFRIC 16.17).
    pub translation_reserves: &'a [OperationReserveRow],
    /// Findings of the close itself (e.g. a bargain purchase to reassess).
    pub findings: &'a [crate::findings::Finding],
    pub caution: &'static str,
}

pub fn tb_json(
    group: &BTreeMap<GroupAccount, Decimal>,
    names: &BTreeMap<GroupAccount, String>,
) -> Vec<serde_json::Value> {
    group
        .iter()
        .filter(|(_, v)| !v.is_zero())
        .map(|(a, v)| serde_json::json!({"account": a.as_str(), "name": names.get(a).cloned().unwrap_or_default(), "amount": crate::money::plain(*v)}))
        .collect()
}

pub fn render(r: &CloseReport<'_>, minor: u32, format: Format) -> String {
    match format {
        Format::Json => to_json(r),
        Format::Csv => {
            let mut out = CsvOut::new(&["account", "name", "amount"]);
            for row in &r.group_trial_balance {
                out.row(&[
                    row["account"].as_str().unwrap_or_default().to_string(),
                    row["name"].as_str().unwrap_or_default().to_string(),
                    row["amount"].as_str().unwrap_or_default().to_string(),
                ]);
            }
            out.finish()
        }
        Format::Table => table(r, minor),
    }
}

/// The statements the terminal shows, in the order of IAS 1.10, with their titles.
pub const TITLES: [(&str, &str); 3] = [
    ("profit_or_loss", "Statement of profit or loss"),
    ("oci", "Other comprehensive income"),
    ("balance_sheet", "Statement of financial position"),
];

/// The heading of the amount column of a statement: what the figures cover.
pub fn amount_heading(statement: &str, view: &str, period: &str, currency: &str) -> String {
    if statement == "balance_sheet" {
        return format!("{currency} at end of {period}");
    }
    let span = match view {
        "month" => "month",
        "qtd" => "quarter to date",
        _ => "year to date",
    };
    format!("{currency} {span} {period}")
}

/// A statement's rows as shown: its lines (items indented under their totals) and the
/// attribution lines that IAS 1.81B asks under profit and OCI.
pub fn statement_rows(r: &CloseReport<'_>, key: &str) -> Vec<(String, Decimal, bool)> {
    let Some(st) = r.statements.laid_out.get(key) else { return Vec::new() };
    let a = &r.attribution;
    let mut rows: Vec<(String, Decimal, bool)> = st
        .lines
        .iter()
        .map(|l| (if l.total { l.label.clone() } else { format!("  {}", l.label) }, l.amount, l.total))
        .collect();
    let extra: Vec<(&str, Decimal)> = match key {
        "profit_or_loss" => vec![
            ("attributable to owners of the parent", a.profit_owners),
            ("attributable to non-controlling interests", a.profit_nci),
        ],
        "oci" => vec![
            ("attributable to owners of the parent", a.oci_owners),
            ("attributable to non-controlling interests", a.oci_nci),
        ],
        _ => vec![("of which profit and OCI of the year to date", a.result_in_equity)],
    };
    rows.extend(extra.into_iter().map(|(l, v)| (format!("    {l}"), v, false)));
    rows
}

/// The prior-year comparatives of `statement_rows(r, key)`, row by row, when the close
/// has them.
pub fn statement_prior_rows(r: &CloseReport<'_>, key: &str) -> Option<Vec<Decimal>> {
    let prior = r.statements.prior_year.as_ref()?;
    let st = r.statements.laid_out.get(key)?;
    let a = &prior.attribution;
    let mut rows: Vec<Decimal> = st.lines.iter().map(|l| l.prior_year.unwrap_or_default()).collect();
    rows.extend(match key {
        "profit_or_loss" => vec![a.profit_owners, a.profit_nci],
        "oci" => vec![a.oci_owners, a.oci_nci],
        _ => vec![a.result_in_equity],
    });
    Some(rows)
}

/// One statement as a terminal table: its lines, the prior year's column when the close
/// has one, and its ratios; labels and amounts at the widths `(width, amounts)`.
fn statement_text(r: &CloseReport<'_>, key: &str, title: &str, minor: u32, (width, amounts): (usize, usize)) -> String {
    let mut out = String::new();
    let prior = statement_prior_rows(r, key);
    let rows: Vec<Vec<String>> = statement_rows(r, key)
        .into_iter()
        .enumerate()
        .map(|(i, (label, v, _))| {
            let mut row = vec![format!("{label:<width$}"), format!("{:>amounts$}", format_amount(v, minor))];
            if let Some(p) = &prior {
                row.push(format!("{:>amounts$}", format_amount(p[i], minor)));
            }
            row
        })
        .collect();
    let heading = format!("{:>amounts$}", amount_heading(key, r.view, &r.period, &r.currency));
    out.push('\n');
    match (&prior, &r.statements.prior_year) {
        (Some(_), Some(p)) => {
            let before = format!("{:>amounts$}", amount_heading(key, r.view, &p.period, &r.currency));
            out.push_str(&super::text_table(
                &[&format!("{title:<width$}"), &heading, &before],
                &rows,
                &[false, true, true],
            ));
        }
        _ => out.push_str(&super::text_table(&[&format!("{title:<width$}"), &heading], &rows, &[false, true])),
    }
    for x in &r.statements.laid_out[key].ratios {
        let p = x.percent.map(|p| format!("{p:.1}%")).unwrap_or_else(|| "n/a".into());
        out.push_str(&format!("{:<width$}   {p:>amounts$}\n", x.label));
    }
    out
}

fn table(r: &CloseReport<'_>, minor: u32) -> String {
    let mut out = String::new();
    if r.proof.status == "draft" {
        out.push_str(&format!(
            "DRAFT, NOT A FINAL CLOSE: run despite {} exception(s), listed below; every file written is marked draft\n",
            r.proof.exceptions.len()
        ));
    }
    out.push_str(&format!("{} statements for {} ({} view), in {}\n", r.scope, r.period, r.view, r.currency));
    // One label width for every statement, so that the amounts stand in one column.
    let width = TITLES
        .iter()
        .flat_map(|(key, title)| {
            statement_rows(r, key).into_iter().map(|(l, _, _)| l.chars().count()).chain([title.chars().count()])
        })
        .max()
        .unwrap_or(40);
    // And one amount width, headings included.
    let amounts = TITLES
        .iter()
        .flat_map(|(key, _)| {
            let heading = amount_heading(key, r.view, &r.period, &r.currency).chars().count();
            let prior = statement_prior_rows(r, key).unwrap_or_default();
            statement_rows(r, key)
                .into_iter()
                .map(|(_, v, _)| v)
                .chain(prior)
                .map(|v| format_amount(v, minor).len())
                .chain([heading])
        })
        .max()
        .unwrap_or(18);
    for (key, title) in TITLES {
        if r.statements.laid_out.contains_key(key) {
            out.push_str(&statement_text(r, key, title, minor, (width, amounts)));
        }
    }
    out.push_str(&equity_table(&r.statements.changes_in_equity, minor));
    if let Some(p) = &r.statements.prior_year {
        out.push_str(&format!("\nPrior year: changes in equity to {}", p.period));
        out.push_str(&equity_table(&p.changes_in_equity, minor));
    }
    if let Some(cf) = &r.statements.cash_flows {
        out.push_str(&super::cash_flows::table(cf, minor));
    }
    if let Some(c) = &r.statements.comparison {
        out.push_str(&super::compare::table(c, &r.currency, minor));
    }
    let mut by_rule: BTreeMap<&str, usize> = BTreeMap::new();
    for e in r.eliminations {
        *by_rule.entry(e.rule.as_str()).or_default() += 1;
    }
    let journal = format!(
        "elimination journal: {} entries ({})",
        r.eliminations.len(),
        by_rule.iter().map(|(k, v)| format!("{k} {v}")).collect::<Vec<_>>().join(", ")
    );
    out.push('\n');
    out.push_str(&super::wrap(&journal, super::terminal_width().map(usize::from).unwrap_or(88).clamp(40, 88)));
    if let Some(first) = r.translation_reserves.first() {
        let method = match first.method {
            crate::model::Ifric16Method::Direct => "direct",
            crate::model::Ifric16Method::StepByStep => "step by step",
        };
        out.push_str(&format!(
            "\ntranslation reserve by foreign operation (IFRIC 16, {method} method; before the NCI's share, credits positive)\n"
        ));
        let rows: Vec<Vec<String>> = r
            .translation_reserves
            .iter()
            .map(|x| {
                let mut v = vec![x.operation.to_string()];
                v.extend([x.brought_forward, x.year, x.reserve].map(|d| format_amount(d, minor)));
                v
            })
            .collect();
        out.push_str(&super::text_table(
            &["operation", "brought forward", "year to date", "reserve"],
            &rows,
            &[false, true, true, true],
        ));
    }
    for f in r.findings {
        out.push_str(&format!(
            "\n{} {}: {}\n  what to do: {}\n",
            super::findings::severity_word(f.severity),
            f.rule,
            f.message,
            f.action
        ));
    }
    out.push_str(&proof_text(r, minor));
    out.push('\n');
    out.push_str(&super::caution_text());
    out
}

/// The balance sheet check in words, from the statement's own totals: the last
/// debit-positive total (total assets) against the last credit-positive one (total
/// equity and liabilities).
pub fn balance_sheet_words(r: &CloseReport<'_>, ok: bool, minor: u32) -> Option<String> {
    let bs = r.statements.laid_out.get("balance_sheet")?;
    let assets = bs.lines.iter().rev().find(|l| l.total && l.debit_positive)?;
    let claims = bs.lines.iter().rev().find(|l| l.total && !l.debit_positive)?;
    let verdict = if ok { "the balance sheet balances" } else { "the balance sheet does NOT balance" };
    Some(format!(
        "{verdict}: {} {} = {} {} (the year's profit and OCI, {}, counted in equity)",
        assets.label.to_lowercase(),
        format_amount(assets.amount, minor),
        claims.label.to_lowercase(),
        format_amount(claims.amount, minor),
        format_amount(r.attribution.result_in_equity, minor)
    ))
}

/// The close's checks in words, each with whether it holds; the balance sheet's in the
/// statement's own figures.
pub fn proof_items(r: &CloseReport<'_>, minor: u32) -> Vec<(bool, String)> {
    r.proof
        .checks
        .iter()
        .map(|c| {
            let words = match c.name {
                "balance_sheet_balances" => balance_sheet_words(r, c.ok, minor),
                _ => None,
            }
            .unwrap_or_else(|| format!("{}: {}", super::check_words(c.name), super::readable_detail(&c.detail)));
            (c.ok, words)
        })
        .collect()
}

/// The close's proof as printed: the verdict, then each check in words.
pub fn proof_text(r: &CloseReport<'_>, minor: u32) -> String {
    let mut out = super::proof_lines(r.proof.tied, &[]);
    for (ok, words) in proof_items(r, minor) {
        out.push_str(&format!("  {} {words}\n", if ok { "ok  " } else { "FAIL" }));
    }
    out
}

/// The statement of changes in equity as a table: one column per component.
fn equity_table(x: &EquityChangesOut, minor: u32) -> String {
    let mut header: Vec<&str> = vec![""];
    header.extend(x.columns.iter().map(|c| c.label.as_str()));
    let rows: Vec<Vec<String>> = x
        .rows
        .iter()
        .map(|r| {
            let mut v = vec![r.label.clone()];
            v.extend(
                x.columns.iter().map(|c| format_amount(r.amounts.get(&c.column).copied().unwrap_or_default(), minor)),
            );
            v
        })
        .collect();
    let mut right = vec![false];
    right.extend(x.columns.iter().map(|_| true));
    format!("\nStatement of changes in equity\n{}", super::text_table(&header, &rows, &right))
}

fn frame_bytes(df: &mut DataFrame, parquet: bool) -> PolarsResult<Vec<u8>> {
    let mut buf = Vec::new();
    if parquet {
        ParquetWriter::new(&mut buf).finish(df)?;
    } else {
        CsvWriter::new(&mut buf).include_header(true).finish(df)?;
    }
    Ok(buf)
}

fn write_frame(dir: &Path, name: &str, mut df: DataFrame, parquet: bool) -> Result<(), crate::Error> {
    write_file(&dir.join(format!("{name}.csv")), &frame_bytes(&mut df, false)?)?;
    if parquet {
        write_file(&dir.join(format!("{name}.parquet")), &frame_bytes(&mut df, true)?)?;
    }
    Ok(())
}

fn journal_frame(journal: &[Entry], names: &BTreeMap<GroupAccount, String>) -> PolarsResult<DataFrame> {
    let mut name = Vec::new();
    let mut id = Vec::new();
    let mut rule = Vec::new();
    let mut at = Vec::new();
    let mut acct = Vec::new();
    let mut ent = Vec::new();
    let mut cp = Vec::new();
    let mut amount = Vec::new();
    let mut desc = Vec::new();
    for e in journal {
        for l in &e.lines {
            id.push(e.id.clone());
            rule.push(e.rule.as_str());
            at.push(e.posted_at.to_string());
            acct.push(l.account.to_string());
            name.push(names.get(&l.account).cloned().unwrap_or_default());
            ent.push(l.entity.to_string());
            cp.push(l.counterparty.as_ref().map(|c| c.to_string()));
            amount.push(crate::money::plain(l.amount));
            desc.push(e.description.clone());
        }
    }
    DataFrame::new(
        id.len(),
        vec![
            Column::new("entry".into(), id),
            Column::new("rule".into(), rule),
            Column::new("posted_at".into(), at),
            Column::new("account".into(), acct),
            Column::new("account_name".into(), name),
            Column::new("entity".into(), ent),
            Column::new("counterparty".into(), cp),
            Column::new("amount".into(), amount),
            Column::new("description".into(), desc),
        ],
    )
}

/// Writes every table of a close to `dir` (the only place a close touches the disk).
/// A decimal column as text at `decimals` places. Amounts are exact at their unit, so
/// the rounding changes no value; it makes the cast to the narrower scale strict-safe.
fn text_at(c: &str, decimals: u32) -> Expr {
    col(c)
        .round(decimals, RoundMode::HalfAwayFromZero)
        .strict_cast(DataType::Decimal(38, decimals as usize))
        .cast(DataType::String)
}

/// A decimal column as text, each row at the decimals named by `minor_col`; `fallback`
/// where that names none.
fn text_at_minor(c: &str, minor_col: &str, minors: &[u32], fallback: Expr) -> Expr {
    let mut e = fallback;
    for m in minors {
        e = when(col(minor_col).eq(lit(*m))).then(text_at(c, *m)).otherwise(e);
    }
    e.alias(c)
}

/// `col` mapped through `old` -> `new` into a column `alias` of type `dtype`; all null
/// when there is nothing to map (polars cannot map through an empty list).
fn mapped(c: &str, old: Series, new: Series, dtype: DataType, alias: &str) -> Expr {
    if old.is_empty() {
        return lit(NULL).cast(dtype).alias(alias);
    }
    // A value with no mapping (none is expected) becomes null rather than an error.
    let default = lit(NULL).cast(dtype.clone());
    col(c).replace_strict(lit(old), lit(new), Some(default), Some(dtype)).alias(alias)
}

/// Account names beside the `group_account` column.
fn with_names(lf: LazyFrame, names: &BTreeMap<GroupAccount, String>) -> LazyFrame {
    let old = Series::new("old".into(), names.keys().map(|a| a.as_str().to_string()).collect::<Vec<_>>());
    let new = Series::new("new".into(), names.values().cloned().collect::<Vec<_>>());
    lf.with_column(mapped("group_account", old, new, DataType::String, "account_name"))
}

/// The contributions with account names; amounts stay decimals until written.
fn contributions_frame(df: &DataFrame, t: &Tables<'_>) -> PolarsResult<DataFrame> {
    with_names(df.clone().lazy(), t.names)
        .select([col("entity"), col("group_account"), col("account_name"), col("counterparty"), col("amount")])
        .collect()
}

/// The translated lines with the period as YYYY-MM (not its index), account names and
/// each row's local currency minor unit (`minor_local`) and transaction currency's
/// (`minor_txn`), which the CSV uses and then drops.
fn translated_frame(df: &DataFrame, t: &Tables<'_>) -> PolarsResult<DataFrame> {
    let idx: Vec<i32> = df.column("period_index")?.i32()?.unique()?.iter().flatten().collect();
    let periods: Vec<String> = idx.iter().map(|i| crate::map_accounts::period_of_index(*i).to_string()).collect();
    let txn: Vec<String> = df.column("txn_currency")?.str()?.unique()?.iter().flatten().map(String::from).collect();
    let txn_minor: Vec<u32> = txn
        .iter()
        .map(|c| crate::model::Currency::parse(c).map(|c| c.minor_unit()).unwrap_or(crate::money::AMOUNT_SCALE as u32))
        .collect();
    let entities: Vec<String> = t.entity_minor.keys().cloned().collect();
    let entity_minor: Vec<u32> = t.entity_minor.values().copied().collect();
    with_names(df.clone().lazy(), t.names)
        .with_columns([
            mapped(
                "period_index",
                Series::new("old".into(), idx),
                Series::new("new".into(), periods),
                DataType::String,
                "period",
            ),
            mapped(
                "entity",
                Series::new("old".into(), entities),
                Series::new("new".into(), entity_minor),
                DataType::UInt32,
                "minor_local",
            ),
            mapped(
                "txn_currency",
                Series::new("old".into(), txn),
                Series::new("new".into(), txn_minor),
                DataType::UInt32,
                "minor_txn",
            ),
        ])
        .select([
            col("entity"),
            col("group_account"),
            col("account_name"),
            col("counterparty"),
            col("txn_currency"),
            col("period"),
            col("basis"),
            col("amount_local"),
            col("balance_local"),
            col("restatement_local"),
            col("txn_amount"),
            col("rate"),
            col("quote"),
            col("rate_kind"),
            col("amount_presentation"),
            col("balance_presentation"),
            col("minor_local"),
            col("minor_txn"),
        ])
        .collect()
}

/// Writes the translated lines once, in `format`: Parquet keeps the decimals, CSV shows
/// each amount at its currency's minor unit (as [`write_money_frame`]).
fn write_translated(
    dir: &Path,
    name: &str,
    df: DataFrame,
    format: crate::cli::TableFormat,
    t: &Tables<'_>,
) -> Result<(), crate::Error> {
    let parquet = format == crate::cli::TableFormat::Parquet;
    write_money_frame(dir, name, df, &Tables { parquet, ..*t }, !parquet)
}

/// Writes a frame holding amounts: the Parquet twin (when asked) keeps the decimals;
/// the CSV shows each amount at its currency's minor unit: local amounts at the local
/// currency's (JPY 0, BHD 3), transaction amounts at the transaction currency's and
/// the rest at the presentation currency's. `csv` false writes the Parquet alone.
fn write_money_frame(dir: &Path, name: &str, df: DataFrame, t: &Tables<'_>, csv: bool) -> Result<(), crate::Error> {
    let helpers = ["minor_local", "minor_txn"];
    let has = |c: &str| df.get_column_names().iter().any(|n| n.as_str() == c);
    let keep: Vec<Expr> =
        df.get_column_names().iter().filter(|n| !helpers.contains(&n.as_str())).map(|n| col(n.as_str())).collect();
    if t.parquet {
        let mut typed = df.clone().lazy().select(keep.clone()).collect()?;
        write_file(&dir.join(format!("{name}.parquet")), &frame_bytes(&mut typed, true)?)?;
    }
    if !csv {
        return Ok(());
    }
    let minors: Vec<u32> = (0..=4).collect();
    let mut exprs = Vec::new();
    for n in df.get_column_names() {
        let n = n.as_str();
        if helpers.contains(&n) {
            continue;
        }
        exprs.push(match n {
            "amount_local" | "balance_local" | "restatement_local" if has("minor_local") => {
                text_at_minor(n, "minor_local", &minors, col(n).cast(DataType::String))
            }
            // A line with no transaction currency has no transaction amount.
            "txn_amount" if has("minor_txn") => {
                text_at_minor(n, "minor_txn", &minors, lit(NULL).cast(DataType::String))
            }
            "amount" | "amount_presentation" | "balance_presentation" => text_at(n, t.minor).alias(n),
            _ => col(n),
        });
    }
    let mut text = df.lazy().select(exprs).collect()?;
    write_file(&dir.join(format!("{name}.csv")), &frame_bytes(&mut text, false)?)?;
    Ok(())
}

/// `statements.csv`: every laid-out line of every statement, in layout order, amounts
/// as presented.
fn write_statements(dir: &Path, file: &str, r: &CloseReport<'_>) -> Result<(), crate::Error> {
    // The prior year's comparative (empty without one), then, with a comparison, its
    // columns (empty on lines not compared).
    let compared = r.statements.comparison.as_ref();
    let mut header = vec!["statement", "line", "label", "total", "amount", "prior_year"];
    if compared.is_some() {
        header.extend(super::compare::STATEMENT_COLUMNS);
    }
    let mut out = super::CsvOut::new(&header);
    for (key, st) in &r.statements.laid_out {
        for l in &st.lines {
            let mut row = vec![
                key.clone(),
                l.line.clone(),
                l.label.clone(),
                l.total.to_string(),
                crate::money::plain(l.amount),
                l.prior_year.map(crate::money::plain).unwrap_or_default(),
            ];
            if let Some(c) = compared {
                let line = c.statements.get(key).and_then(|ls| ls.iter().find(|x| x.line == l.line));
                row.extend(super::compare::statement_cells(line));
            }
            out.row(&row);
        }
    }
    write_file(&dir.join(file), out.finish().as_bytes())?;
    Ok(())
}

/// The frames of a close written beside the report, and whether Parquet twins are asked.
pub struct Tables<'a> {
    /// Group account names, written beside account ids.
    pub names: &'a BTreeMap<GroupAccount, String>,
    /// Each entity's functional currency's minor unit (ISO 4217), for local amounts.
    pub entity_minor: &'a BTreeMap<String, u32>,
    /// The presentation currency's minor unit.
    pub minor: u32,
    pub contributions: &'a DataFrame,
    /// The translated lines and the one format to write them in, when asked (at a
    /// large group they are the bulk of a close's output: one row per grain and month).
    pub translated: Option<(&'a DataFrame, crate::cli::TableFormat)>,
    pub explanations: &'a [crate::translate::Explanation],
    pub parquet: bool,
}

pub fn write_outputs(dir: &Path, r: &CloseReport<'_>, tables: &Tables<'_>) -> Result<(), crate::Error> {
    let parquet = tables.parquet;
    let (contributions, translated, explanations) = (tables.contributions, tables.translated, tables.explanations);
    let tb = DataFrame::new(
        r.group_trial_balance.len(),
        vec![
            Column::new(
                "account".into(),
                r.group_trial_balance
                    .iter()
                    .map(|x| x["account"].as_str().unwrap_or_default().to_string())
                    .collect::<Vec<_>>(),
            ),
            Column::new(
                "name".into(),
                r.group_trial_balance
                    .iter()
                    .map(|x| x["name"].as_str().unwrap_or_default().to_string())
                    .collect::<Vec<_>>(),
            ),
            Column::new(
                "amount".into(),
                r.group_trial_balance
                    .iter()
                    .map(|x| x["amount"].as_str().unwrap_or_default().to_string())
                    .collect::<Vec<_>>(),
            ),
        ],
    )?;
    // A draft's every file says so in its name (a CSV table has no place for a note).
    let name = |n: &str| if r.proof.status == "draft" { format!("draft-{n}") } else { n.to_string() };
    write_frame(dir, &name("group_trial_balance"), tb, parquet)?;
    write_frame(dir, &name("eliminations"), journal_frame(r.eliminations, tables.names)?, parquet)?;
    write_money_frame(dir, &name("contributions"), contributions_frame(contributions, tables)?, tables, true)?;
    if let Some((lines, format)) = translated {
        write_translated(dir, &name("translated"), translated_frame(lines, tables)?, format, tables)?;
    }
    write_statements(dir, &name("statements.csv"), r)?;
    if let Some(c) = &r.statements.comparison {
        super::compare::write_files(dir, c, &name)?;
    }
    let nci = DataFrame::new(
        r.nci.len(),
        vec![
            Column::new("entity".into(), r.nci.iter().map(|n| n.entity.to_string()).collect::<Vec<_>>()),
            Column::new("nci_share".into(), r.nci.iter().map(|n| n.nci_share.to_string()).collect::<Vec<_>>()),
            Column::new("profit".into(), r.nci.iter().map(|n| crate::money::plain(n.profit)).collect::<Vec<_>>()),
            Column::new("oci".into(), r.nci.iter().map(|n| crate::money::plain(n.oci)).collect::<Vec<_>>()),
            Column::new("equity".into(), r.nci.iter().map(|n| crate::money::plain(n.equity)).collect::<Vec<_>>()),
        ],
    )?;
    write_frame(dir, &name("nci"), nci, parquet)?;
    let rs = r.translation_reserves;
    let reserves = DataFrame::new(
        rs.len(),
        vec![
            Column::new("operation".into(), rs.iter().map(|x| x.operation.to_string()).collect::<Vec<_>>()),
            Column::new(
                "method".into(),
                rs.iter()
                    .map(|x| match x.method {
                        crate::model::Ifric16Method::Direct => "direct",
                        crate::model::Ifric16Method::StepByStep => "step_by_step",
                    })
                    .collect::<Vec<_>>(),
            ),
            Column::new(
                "brought_forward".into(),
                rs.iter().map(|x| crate::money::plain(x.brought_forward)).collect::<Vec<_>>(),
            ),
            Column::new("year".into(), rs.iter().map(|x| crate::money::plain(x.year)).collect::<Vec<_>>()),
            Column::new("reserve".into(), rs.iter().map(|x| crate::money::plain(x.reserve)).collect::<Vec<_>>()),
        ],
    )?;
    write_frame(dir, &name("translation_reserves"), reserves, parquet)?;
    let x = explanations;
    let col = |name: &str, f: &dyn Fn(&crate::translate::Explanation) -> String| {
        Column::new(name.into(), x.iter().map(f).collect::<Vec<_>>())
    };
    let td = DataFrame::new(
        x.len(),
        vec![
            col("entity", &|e| e.entity.to_string()),
            col("period", &|e| e.period.to_string()),
            col("currency", &|e| e.currency.to_string()),
            col("on_opening_net_assets", &|e| crate::money::plain(e.on_opening_net_assets)),
            col("on_profit", &|e| crate::money::plain(e.on_profit)),
            col("on_equity_movements", &|e| crate::money::plain(e.on_equity_movements)),
            col("on_hyperinflation", &|e| crate::money::plain(e.on_hyperinflation)),
            col("rounding", &|e| crate::money::plain(e.rounding)),
            col("translation_difference", &|e| crate::money::plain(e.total)),
        ],
    )?;
    write_frame(dir, &name("translation_differences"), td, parquet)?;
    let eq = &r.statements.changes_in_equity;
    let cells: Vec<(&EquityRowOut, &EquityColumnOut)> =
        eq.rows.iter().flat_map(|row| eq.columns.iter().map(move |c| (row, c))).collect();
    let equity = DataFrame::new(
        cells.len(),
        vec![
            Column::new("row".into(), cells.iter().map(|(r, _)| r.row).collect::<Vec<_>>()),
            Column::new("label".into(), cells.iter().map(|(r, _)| r.label.clone()).collect::<Vec<_>>()),
            Column::new("column".into(), cells.iter().map(|(_, c)| c.column.clone()).collect::<Vec<_>>()),
            Column::new(
                "amount".into(),
                cells
                    .iter()
                    .map(|(r, c)| crate::money::plain(r.amounts.get(&c.column).copied().unwrap_or_default()))
                    .collect::<Vec<_>>(),
            ),
        ],
    )?;
    write_frame(dir, &name("equity_changes"), equity, parquet)?;
    if let Some(cf) = &r.statements.cash_flows {
        super::cash_flows::write(&dir.join(name("cash_flows.csv")), cf)?;
    }
    write_file(&dir.join(name("proof.json")), to_json(&r.proof).as_bytes())?;
    write_file(&dir.join(name("statements.json")), to_json(&r.statements).as_bytes())?;
    Ok(())
}

/// The folder of a close's outputs: `<out>/<period>/<scope>/<view>`, the scope being
/// `group` or the root entity of a sub-group, so that no close overwrites another's
/// files; a draft's folder is `<view>-draft`.
pub fn output_dir(out: &Path, period: Period, scope: &str, view: &str, draft: bool) -> std::path::PathBuf {
    let view = if draft { format!("{view}-draft") } else { view.to_string() };
    out.join(period.to_string()).join(scope).join(view)
}

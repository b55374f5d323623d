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

use super::{CAUTION, Format, csv_line, to_json, write_file};

/// One printed line of a statement.
#[derive(Debug, Clone, Serialize)]
pub struct StatementLine {
    pub line: String,
    pub label: String,
    /// As presented (income, equity and liabilities positive where the layout says so).
    pub amount: Decimal,
    pub total: bool,
}

#[derive(Debug, Clone, Serialize)]
pub struct StatementOut {
    pub statement: String,
    pub lines: Vec<StatementLine>,
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
        })
        .collect();
    StatementOut { statement: st.statement.clone(), lines }
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
            let mut out = csv_line(&["account", "name", "amount"].map(String::from));
            for row in &r.group_trial_balance {
                out.push_str(&csv_line(&[
                    row["account"].as_str().unwrap_or_default().to_string(),
                    row["name"].as_str().unwrap_or_default().to_string(),
                    row["amount"].as_str().unwrap_or_default().to_string(),
                ]));
            }
            out
        }
        Format::Table => table(r, minor),
    }
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
    let titles = [
        ("profit_or_loss", "Statement of profit or loss"),
        ("oci", "Other comprehensive income"),
        ("balance_sheet", "Statement of financial position"),
    ];
    for (key, title) in titles {
        let Some(st) = r.statements.laid_out.get(key) else { continue };
        out.push_str(&format!("\n{title}\n"));
        let a = &r.attribution;
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
        let labels = st.lines.iter().map(|l| l.label.chars().count()).chain(extra.iter().map(|(l, _)| l.len() + 2));
        let width = labels.max().unwrap_or(10).max(40);
        for l in &st.lines {
            let amount = format_amount(l.amount, minor);
            if l.total {
                out.push_str(&format!("  {:<width$}  {:>18}\n", l.label.to_uppercase(), amount));
            } else {
                out.push_str(&format!("    {:<w2$}  {:>18}\n", l.label, amount, w2 = width - 2));
            }
        }
        for (label, amount) in extra {
            out.push_str(&format!("      {label:<w4$}  {:>18}\n", format_amount(amount, minor), w4 = width - 4));
        }
    }
    out.push_str(&equity_table(&r.statements.changes_in_equity, minor));
    if let Some(cf) = &r.statements.cash_flows {
        out.push_str(&super::cash_flows::table(cf, minor));
    }
    out.push_str(&format!("\nelimination journal: {} entries", r.eliminations.len()));
    let mut by_rule: BTreeMap<&str, usize> = BTreeMap::new();
    for e in r.eliminations {
        *by_rule.entry(e.rule.as_str()).or_default() += 1;
    }
    out.push_str(&format!(" ({})\n", by_rule.iter().map(|(k, v)| format!("{k} {v}")).collect::<Vec<_>>().join(", ")));
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
        out.push_str(&format!("\n{:?} {}: {}\n  what to do: {}\n", f.severity, f.rule, f.message, f.action));
    }
    out.push_str(&super::proof_lines(r.proof.tied, r.proof.checks));
    out.push_str(&format!("\n{CAUTION}\n"));
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

fn write_frame(dir: &Path, name: &str, mut df: DataFrame) -> Result<(), crate::Error> {
    write_file(&dir.join(format!("{name}.csv")), &frame_bytes(&mut df, false)?)?;
    write_file(&dir.join(format!("{name}.parquet")), &frame_bytes(&mut df, true)?)?;
    Ok(())
}

fn journal_frame(journal: &[Entry]) -> PolarsResult<DataFrame> {
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
            Column::new("entity".into(), ent),
            Column::new("counterparty".into(), cp),
            Column::new("amount".into(), amount),
            Column::new("description".into(), desc),
        ],
    )
}

/// Writes every table of a close to `dir` (the only place a close touches the disk).
pub fn write_outputs(
    dir: &Path,
    r: &CloseReport<'_>,
    contributions: &DataFrame,
    translated: &DataFrame,
    explanations: &[crate::translate::Explanation],
) -> Result<(), crate::Error> {
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
    write_frame(dir, &name("group_trial_balance"), tb)?;
    write_frame(dir, &name("eliminations"), journal_frame(r.eliminations)?)?;
    write_frame(dir, &name("contributions"), contributions.clone())?;
    write_frame(dir, &name("translated"), translated.clone())?;
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
    write_frame(dir, &name("nci"), nci)?;
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
    write_frame(dir, &name("translation_reserves"), reserves)?;
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
    write_frame(dir, &name("translation_differences"), td)?;
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
    write_frame(dir, &name("equity_changes"), equity)?;
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

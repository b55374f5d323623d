//! The close workbook (`close.xlsx`): one sheet per statement laid out from the layouts,
//! with `--compare` the statements beside the comparison and the walks, then the statement of changes in equity, the group trial balance, the elimination
//! journal with account names and rule, the NCI schedule, the intercompany matching with
//! who must act, the segment report, the translation reserve by operation and the proof. Every figure is a
//! number cell taken from the close's own report, so that the workbook says exactly
//! what `close --format json` says.

use std::collections::BTreeMap;
use std::str::FromStr;

use rust_decimal::Decimal;

use super::close::{CloseReport, TITLES, amount_heading, statement_prior_rows, statement_rows};
use super::xlsx::{Cell, Sheet, workbook};
use crate::model::GroupAccount;

/// Short sheet names of the statements (a sheet name holds at most 31 characters).
pub const STATEMENT_SHEETS: [(&str, &str); 3] =
    [("profit_or_loss", "Profit or loss"), ("oci", "OCI"), ("balance_sheet", "Financial position")];

fn amount_of(v: &serde_json::Value) -> Decimal {
    v.as_str().and_then(|s| Decimal::from_str(s).ok()).unwrap_or_default()
}

/// The sheets of the statements of profit or loss, OCI and financial position, each
/// with the prior year's column (IAS 1.38) when the close has one.
fn statement_sheets(r: &CloseReport<'_>) -> Vec<Sheet> {
    let mut sheets = Vec::new();
    for ((key, title), (_, sheet_name)) in TITLES.iter().zip(STATEMENT_SHEETS) {
        if !r.statements.laid_out.contains_key(*key) {
            continue;
        }
        let mut s = Sheet::new(sheet_name);
        // The prior year's column (IAS 1.38), when the close has one.
        let prior = statement_prior_rows(r, key).zip(r.statements.prior_year.as_ref());
        let now = amount_heading(key, r.view, &r.period, &r.currency);
        match &prior {
            Some((_, p)) => s.header(&[title, &now, &amount_heading(key, r.view, &p.period, &r.currency)]),
            None => s.header(&[title, &now]),
        }
        for (i, (label, amount, total)) in statement_rows(r, key).into_iter().enumerate() {
            let mut cells = vec![Cell::Text(label), Cell::Amount(amount)];
            if let Some((rows, _)) = &prior {
                cells.push(Cell::Amount(rows[i]));
            }
            if total { s.bold_row(cells) } else { s.row(cells) }
        }
        // The layout's ratio lines (margins), in percent of the statement's own lines.
        for x in &r.statements.laid_out[*key].ratios {
            let value = x.percent.map(Cell::Percent).unwrap_or_else(|| Cell::from("n/a"));
            s.row(vec![Cell::Text(x.label.clone()), value]);
        }
        sheets.push(s);
    }
    sheets
}

/// The workbook's bytes for a close; `matching` adds the intercompany sheets.
pub fn close_workbook(
    r: &CloseReport<'_>,
    names: &BTreeMap<GroupAccount, String>,
    matching: Option<&crate::intercompany::Matching>,
    segments: Option<&crate::segments::SegmentReport>,
    minor: u32,
) -> Result<Vec<u8>, crate::Error> {
    let mut sheets = statement_sheets(r);
    if let Some(c) = &r.statements.comparison {
        sheets.extend(super::compare::sheets(c));
    }
    let eq = &r.statements.changes_in_equity;
    let mut s = Sheet::new("Changes in equity");
    let mut head: Vec<&str> = vec!["Statement of changes in equity"];
    head.extend(eq.columns.iter().map(|c| c.label.as_str()));
    s.header(&head);
    for row in &eq.rows {
        let mut cells = vec![Cell::Text(row.label.clone())];
        cells.extend(eq.columns.iter().map(|c| Cell::Amount(row.amounts.get(&c.column).copied().unwrap_or_default())));
        if row.row == "opening" || row.row == "closing" { s.bold_row(cells) } else { s.row(cells) }
    }
    sheets.push(s);
    if let Some(cf) = &r.statements.cash_flows {
        sheets.push(cash_flow_sheet(cf));
    }

    let mut s = Sheet::new("Trial balance");
    s.header(&["account", "name", "amount (debit positive)"]);
    for row in &r.group_trial_balance {
        s.row(vec![
            Cell::Text(row["account"].as_str().unwrap_or_default().to_string()),
            Cell::Text(row["name"].as_str().unwrap_or_default().to_string()),
            Cell::Amount(amount_of(&row["amount"])),
        ]);
    }
    sheets.push(s);

    let mut s = Sheet::new("Eliminations");
    s.header(&[
        "entry",
        "rule",
        "posted at",
        "account",
        "account name",
        "entity",
        "counterparty",
        "amount (debit positive)",
        "description",
    ]);
    for e in r.eliminations {
        for l in &e.lines {
            s.row(vec![
                Cell::Text(e.id.clone()),
                Cell::from(e.rule.as_str()),
                Cell::Text(e.posted_at.to_string()),
                Cell::Text(l.account.to_string()),
                Cell::Text(names.get(&l.account).cloned().unwrap_or_default()),
                Cell::Text(l.entity.to_string()),
                Cell::Text(l.counterparty.as_ref().map(|c| c.to_string()).unwrap_or_default()),
                Cell::Amount(l.amount),
                Cell::Text(e.description.clone()),
            ]);
        }
    }
    sheets.push(s);

    let mut s = Sheet::new("NCI");
    s.header(&["entity", "NCI share", "profit", "OCI", "equity"]);
    for n in r.nci {
        s.row(vec![
            Cell::Text(n.entity.to_string()),
            Cell::Number(n.nci_share),
            Cell::Amount(n.profit),
            Cell::Amount(n.oci),
            Cell::Amount(n.equity),
        ]);
    }
    sheets.push(s);

    if let Some(m) = matching {
        let (pairs, act) = super::intercompany::sheets(m);
        sheets.push(pairs);
        sheets.push(act);
    }

    if let Some(rep) = segments {
        sheets.push(segment_sheet(rep));
    }

    let mut s = Sheet::new("Translation reserve");
    s.header(&["operation", "method", "brought forward", "year to date", "reserve"]);
    for x in r.translation_reserves {
        s.row(vec![
            Cell::Text(x.operation.to_string()),
            Cell::from(match x.method {
                crate::model::Ifric16Method::Direct => "direct",
                crate::model::Ifric16Method::StepByStep => "step by step",
            }),
            Cell::Amount(x.brought_forward),
            Cell::Amount(x.year),
            Cell::Amount(x.reserve),
        ]);
    }
    sheets.push(s);

    let mut s = Sheet::new("Proof");
    s.header(&["check", "holds", "figures"]);
    for (ok, words) in super::close::proof_items(r, minor) {
        let (check, figures) = words.split_once(": ").unwrap_or((words.as_str(), ""));
        s.row(vec![
            Cell::Text(check.to_string()),
            Cell::from(if ok { "yes" } else { "NO" }),
            Cell::Text(figures.to_string()),
        ]);
    }
    s.row(vec![]);
    s.row(vec![Cell::from(super::CAUTION)]);
    sheets.push(s);
    workbook(&sheets, minor)
}

/// The statement of cash flows (IAS 7), its totals in bold.
fn cash_flow_sheet(cf: &crate::cash_flows::CashFlows) -> Sheet {
    let mut s = Sheet::new("Cash flows");
    s.header(&[
        "Statement of cash flows (IAS 7, indirect method)",
        &format!("{} to {}", cf.opening_period.next(), cf.period),
    ]);
    for (section, line, label, amount) in super::cash_flows::rows(cf) {
        let cells = vec![Cell::Text(label), Cell::Amount(amount)];
        if super::cash_flows::is_total(&section, &line) { s.bold_row(cells) } else { s.row(cells) }
    }
    s
}

/// The segment report (IFRS 8.23, 8.28): each line by segment, then its reconciliation
/// to the group, item by item.
fn segment_sheet(rep: &crate::segments::SegmentReport) -> Sheet {
    let mut s = Sheet::new(&format!("Segments by {}", rep.key));
    let mut head: Vec<&str> = vec!["line"];
    head.extend(rep.segments.iter().map(|x| x.segment.as_str()));
    s.header(&head);
    for l in &rep.lines {
        let mut cells = vec![Cell::Text(l.label.clone())];
        cells.extend(rep.segments.iter().map(|x| Cell::Amount(x.values.get(&l.line).copied().unwrap_or_default())));
        s.row(cells);
    }
    s.row(vec![]);
    s.bold_row(vec![Cell::from("Reconciliation to the group (IFRS 8.28)")]);
    for l in &rep.reconciliation {
        s.bold_row(vec![Cell::Text(l.label.clone())]);
        s.row(vec![Cell::from("  reportable segments"), Cell::Amount(l.reportable_segments)]);
        for i in &l.items {
            s.row(vec![Cell::Text(format!("  {}", i.label)), Cell::Amount(i.amount)]);
        }
        s.bold_row(vec![Cell::from("  group"), Cell::Amount(l.group)]);
    }
    s
}

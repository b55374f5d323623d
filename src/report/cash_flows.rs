//! Rendering and writing of the statement of cash flows (IAS 7): a section of the
//! terminal statements and `cash_flows.csv`, one figure per row
//! (`section,line,label,amount`). The statement itself is computed by `cash_flows`.

use std::path::Path;

use crate::cash_flows::CashFlows;
use crate::money::{format_amount, plain};

use super::{csv_text, write_file};

/// Every figure of the statement, in the order printed: (section, line, label, amount).
pub(super) fn rows(cf: &CashFlows) -> Vec<(String, String, String, rust_decimal::Decimal)> {
    let mut out = Vec::new();
    for s in &cf.sections {
        let section = s.section.as_str().to_string();
        for l in &s.lines {
            out.push((section.clone(), l.line.clone(), l.label.clone(), l.amount));
        }
        out.push((section, "total".into(), total_label(s.section).into(), s.total));
    }
    let cash = "cash".to_string();
    out.push((
        cash.clone(),
        "net_change".into(),
        "Net increase (decrease) in cash and cash equivalents".into(),
        cf.net_change,
    ));
    out.push((
        cash.clone(),
        "opening".into(),
        format!("Cash and cash equivalents at the end of {}", cf.opening_period),
        cf.cash_opening,
    ));
    out.push((
        "exchange".into(),
        "total".into(),
        "Effect of exchange rate changes on cash and cash equivalents".into(),
        cf.exchange.total,
    ));
    out.push((
        "exchange".into(),
        "on_cash".into(),
        "of which on cash held and the flows of the view".into(),
        cf.exchange.on_cash,
    ));
    out.push((
        "exchange".into(),
        "residue".into(),
        "of which translation residue (rounding, equity movements at their own rates)".into(),
        cf.exchange.residue,
    ));
    out.push((
        cash,
        "closing".into(),
        format!("Cash and cash equivalents at the end of {}", cf.period),
        cf.cash_closing,
    ));
    out
}

/// Whether a row of [`rows`] is a total (printed in bold in the pack): a section's
/// total, the net change and the closing cash. The exchange line (IAS 7.28) is one
/// reconciling item, its parts indented below it.
pub(super) fn is_total(section: &str, line: &str) -> bool {
    match section {
        "exchange" => false,
        "cash" => line != "opening",
        _ => line == "total",
    }
}

fn total_label(s: crate::cash_flows::Section) -> &'static str {
    use crate::cash_flows::Section::*;
    match s {
        Operating => "Net cash from operating activities",
        Investing => "Net cash from investing activities",
        Financing => "Net cash from financing activities",
        Cash | Exchange => "",
    }
}

/// The statement as a section of the terminal statements.
pub fn table(cf: &CashFlows, minor: u32) -> String {
    let all = rows(cf);
    let width = all.iter().map(|r| r.2.chars().count()).max().unwrap_or(40).max(40) + 2;
    let mut out =
        format!("\nStatement of cash flows (IAS 7, indirect method), {} to {}\n", cf.opening_period.next(), cf.period);
    let line = |label: &str, amount: rust_decimal::Decimal, indent: usize| {
        format!("{:indent$}{:<w$}  {:>18}\n", "", label, format_amount(amount, minor), w = width + 2 - indent)
    };
    for s in &cf.sections {
        out.push_str(&format!("  {}\n", s.label));
        for l in &s.lines {
            out.push_str(&line(&l.label, l.amount, 4));
        }
        out.push_str(&line(&total_label(s.section).to_uppercase(), s.total, 2));
    }
    for (section, id, label, amount) in all.iter().filter(|r| r.0 == "cash" || r.0 == "exchange") {
        let indent = match (section.as_str(), id.as_str()) {
            ("exchange", "on_cash" | "residue") => 6,
            ("cash", "net_change" | "closing") => 2,
            _ => 4,
        };
        let label = if indent == 2 { label.to_uppercase() } else { label.clone() };
        out.push_str(&line(&label, *amount, indent));
    }
    for a in &cf.acquisitions {
        out.push_str(&format!(
            "  acquisition of {} ({}): consideration paid {}, cash acquired {} (IAS 7.40)\n",
            a.entity,
            a.period,
            format_amount(a.consideration, minor),
            format_amount(a.cash_acquired, minor)
        ));
    }
    for x in &cf.disposals {
        out.push_str(&format!(
            "  disposal of {} ({}, consolidated to {}): proceeds {}, cash disposed of {}, gain {} (IAS 7.40)\n",
            x.entity,
            x.date,
            x.last_month,
            format_amount(x.proceeds, minor),
            format_amount(x.cash_disposed, minor),
            format_amount(x.gain, minor)
        ));
    }
    out
}

/// Writes the statement as `cash_flows.csv` to `path`.
pub fn write(path: &Path, cf: &CashFlows) -> std::io::Result<()> {
    let text = csv_text(
        &["section", "line", "label", "amount"],
        rows(cf).into_iter().map(|(section, line, label, amount)| vec![section, line, label, plain(amount)]),
    );
    write_file(path, text.as_bytes())
}

//! Rendering of a trace (`crate::trace`): how one group figure is made, from the ledger
//! lines through each entity's translated contribution and each elimination, summing to
//! the figure. Formats only: the figures and whether they reconcile come with the trace.

use crate::money::format_amount;
use crate::trace::Trace;

use super::{CsvOut, Format, to_json};

/// The trace in `format`.
pub fn render(t: &Trace, minor: u32, format: Format) -> String {
    match format {
        Format::Json => to_json(t),
        Format::Csv => {
            let mut out = CsvOut::new(&["source", "entity", "reference", "counterparty", "amount"]);
            for p in &t.entities {
                for c in &p.by_counterparty {
                    out.row(&[
                        "contribution".into(),
                        p.entity.clone(),
                        String::new(),
                        c.counterparty.clone().unwrap_or_default(),
                        crate::money::plain(c.amount),
                    ]);
                }
            }
            for e in &t.eliminations {
                out.row(&[
                    format!("elimination {}", e.rule),
                    e.entity.clone(),
                    e.entry.clone(),
                    e.counterparty.clone().unwrap_or_default(),
                    crate::money::plain(e.amount),
                ]);
            }
            out.finish()
        }
        Format::Table => {
            let mut out =
                format!("trace of {} {} at {} (year to date, debit positive)\n\n", t.account, t.name, t.period);
            for p in &t.entities {
                out.push_str(&format!(
                    "{} ({}): local {} -> contribution {}\n",
                    p.entity,
                    p.currency,
                    format_amount(p.balance_local, 3),
                    format_amount(p.contribution, minor)
                ));
                for l in &p.ledger_lines {
                    out.push_str(&format!(
                        "    {}:{}  {}  {}{}  {}\n",
                        l.file,
                        l.line,
                        l.period.clone().unwrap_or_else(|| "opening".into()),
                        l.local_account,
                        l.counterparty.as_ref().map(|c| format!(" [{c}]")).unwrap_or_default(),
                        format_amount(l.amount_local, 3)
                    ));
                }
            }
            out.push_str("\neliminations\n");
            for e in &t.eliminations {
                out.push_str(&format!(
                    "    {} {} {}  {}  {}\n",
                    e.entry,
                    e.rule,
                    e.entity,
                    format_amount(e.amount, minor),
                    e.description
                ));
            }
            out.push_str(&format!(
                "\ncontributions {} + eliminations {} = {} (group figure {}): {}\n",
                format_amount(t.contributions_total, minor),
                format_amount(t.eliminations_total, minor),
                format_amount(t.contributions_total + t.eliminations_total, minor),
                format_amount(t.group_amount, minor),
                if t.reconciles { "reconciles" } else { "DOES NOT RECONCILE" }
            ));
            out
        }
    }
}

//! Rendering of derived monthly rates with their provenance and the findings met.

use std::path::Path;

use serde::Serialize;

use crate::findings::Findings;
use crate::rates::{MonthlyRateRow, RateRecord};

use super::{Format, to_json};

#[derive(Serialize)]
struct Report<'a> {
    rates: Vec<MonthlyRateRow>,
    findings: &'a [crate::findings::Finding],
    written_to: Option<String>,
}

pub fn render(records: &[RateRecord], findings: &Findings, written: Option<&Path>, format: Format) -> String {
    let rows: Vec<MonthlyRateRow> = records.iter().map(MonthlyRateRow::from).collect();
    let written_to = if findings.has_blocking() { None } else { written.map(|p| p.display().to_string()) };
    match format {
        Format::Json => to_json(&Report { rates: rows, findings: findings.items(), written_to }),
        Format::Csv => crate::rates::render_csv(records),
        Format::Table => {
            let head = ["period", "currency", "closing", "average", "average ytd", "quote", "source"];
            let body: Vec<Vec<String>> = rows
                .iter()
                .map(|r| {
                    vec![
                        r.period.clone(),
                        r.currency.clone(),
                        r.closing.clone(),
                        r.average.clone(),
                        r.average_ytd.clone(),
                        r.quote.clone(),
                        r.source.clone(),
                    ]
                })
                .collect();
            let mut out = super::text_table(&head, &body, &[false, false, true, true, true, false, false]);
            if !findings.is_empty() {
                out.push('\n');
                out.push_str(&super::findings::render_check(findings, None, Format::Table));
            }
            match (&written_to, written) {
                (Some(p), _) => out.push_str(&format!("\nwritten to {p}\n")),
                (None, Some(p)) => {
                    out.push_str(&format!("\nnot written to {}: fix the blocking findings first\n", p.display()))
                }
                _ => {}
            }
            out
        }
    }
}

//! Rendering of findings: the `check` report as a table or JSON.

use serde::Serialize;

use crate::findings::{Findings, Severity};
use crate::model::Period;

use super::{CsvOut, Format, to_json};

#[derive(Serialize)]
struct CheckJson<'a> {
    period: Option<String>,
    clean: bool,
    blocking: usize,
    warnings: usize,
    findings: &'a [crate::findings::Finding],
}

pub fn render_check(findings: &Findings, period: Option<Period>, format: Format) -> String {
    let blocking = findings.items().iter().filter(|f| f.severity >= Severity::Blocking).count();
    let warnings = findings.len() - blocking;
    match format {
        Format::Json => to_json(&CheckJson {
            period: period.map(|p| p.to_string()),
            clean: blocking == 0,
            blocking,
            warnings,
            findings: findings.items(),
        }),
        Format::Csv => {
            let mut out =
                CsvOut::new(&["severity", "rule", "file", "line", "entity", "account", "period", "message", "action"]);
            for f in findings.items() {
                out.row(&[
                    severity_word(f.severity).to_string(),
                    f.rule.to_string(),
                    f.file.clone().unwrap_or_default(),
                    f.line.map(|l| l.to_string()).unwrap_or_default(),
                    f.entity.as_ref().map(|e| e.to_string()).unwrap_or_default(),
                    f.account.clone().unwrap_or_default(),
                    f.period.map(|p| p.to_string()).unwrap_or_default(),
                    f.message.clone(),
                    f.action.clone(),
                ]);
            }
            out.finish()
        }
        Format::Table => {
            let mut out = String::new();
            let head = match period {
                Some(p) => format!("check of the deliveries for {p}\n\n"),
                None => "check of the deliveries\n\n".to_string(),
            };
            out.push_str(&head);
            for f in findings.items() {
                let mut ctx = Vec::new();
                if let Some(e) = &f.entity {
                    ctx.push(format!("entity {e}"));
                }
                if let Some(a) = &f.account {
                    ctx.push(format!("account {a}"));
                }
                if let Some(p) = f.period {
                    ctx.push(format!("period {p}"));
                }
                let loc = f.location();
                out.push_str(&format!("{:<10} {}", severity_word(f.severity), f.rule));
                if !loc.is_empty() {
                    out.push_str(&format!("  {loc}"));
                }
                if !ctx.is_empty() {
                    out.push_str(&format!("  ({})", ctx.join(", ")));
                }
                out.push('\n');
                out.push_str(&format!("           {}\n           what to do: {}\n", f.message, f.action));
            }
            if findings.is_empty() {
                out.push_str("no findings: every delivery passes every rule\n");
            } else {
                out.push_str(&format!("\n{blocking} blocking, {warnings} warning(s)\n"));
            }
            out.push('\n');
            out.push_str(&super::caution_text());
            out
        }
    }
}

/// A severity as every report spells it: the same word as in JSON.
pub fn severity_word(s: Severity) -> &'static str {
    match s {
        Severity::Warning => "warning",
        Severity::Blocking => "blocking",
        Severity::Unreadable => "unreadable",
    }
}

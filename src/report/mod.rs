//! Reporting: the only module that formats numbers for people and writes output files.
//! Every command's result is rendered here as a table for the terminal, JSON (amounts
//! as decimal strings) or CSV. Nothing here computes a figure.

pub mod bench;
pub mod close;
pub mod findings;
pub mod generate;
pub mod intercompany;
pub mod rates;
pub mod segments;
pub mod structure;
pub mod trace;
pub mod translation;

use std::path::Path;

use serde::Serialize;

/// Output formats a command can print.
#[derive(Debug, Clone, Copy, PartialEq, Eq, clap::ValueEnum)]
pub enum Format {
    Table,
    Json,
    Csv,
}

/// The cautions every report carries (see README).
pub const CAUTION: &str = "This output supports, and does not replace, a qualified accountant's judgement and \
the audit. Policy choices (control, functional currency, net investment, hyperinflation) are judgements the \
user makes; local law and local GAAP may require other treatments.";

/// Pretty JSON with a trailing newline, stable key order as declared.
pub fn to_json<T: Serialize>(value: &T) -> String {
    let mut s = serde_json::to_string_pretty(value).expect("report values serialise");
    s.push('\n');
    s
}

/// Writes `bytes` to `path`, creating folders, and reads them back to prove the write.
pub fn write_file(path: &Path, bytes: &[u8]) -> std::io::Result<()> {
    if let Some(dir) = path.parent() {
        std::fs::create_dir_all(dir)?;
    }
    std::fs::write(path, bytes)?;
    let back = std::fs::read(path)?;
    if back != bytes {
        return Err(std::io::Error::other(format!("{} did not read back as written", path.display())));
    }
    Ok(())
}

/// Renders rows as an aligned text table; `right` marks right-aligned columns.
pub fn text_table(header: &[&str], rows: &[Vec<String>], right: &[bool]) -> String {
    let n = header.len();
    let mut width: Vec<usize> = header.iter().map(|h| h.chars().count()).collect();
    for r in rows {
        for (i, c) in r.iter().enumerate().take(n) {
            width[i] = width[i].max(c.chars().count());
        }
    }
    let fmt_row = |cells: &[String]| -> String {
        let mut line = String::new();
        for (i, c) in cells.iter().enumerate().take(n) {
            let pad = width[i] - c.chars().count();
            if i > 0 {
                line.push_str("  ");
            }
            if right.get(i).copied().unwrap_or(false) {
                line.push_str(&" ".repeat(pad));
                line.push_str(c);
            } else {
                line.push_str(c);
                if i + 1 < n {
                    line.push_str(&" ".repeat(pad));
                }
            }
        }
        line.trim_end().to_string()
    };
    let mut out = String::new();
    out.push_str(&fmt_row(&header.iter().map(|s| s.to_string()).collect::<Vec<_>>()));
    out.push('\n');
    out.push_str(&width.iter().map(|w| "-".repeat(*w)).collect::<Vec<_>>().join("  "));
    out.push('\n');
    for r in rows {
        out.push_str(&fmt_row(r));
        out.push('\n');
    }
    out
}

/// Quotes a CSV field when it needs it.
pub fn csv_field(s: &str) -> String {
    if s.contains([',', '"', '\n']) { format!("\"{}\"", s.replace('"', "\"\"")) } else { s.to_string() }
}

pub fn csv_line(fields: &[String]) -> String {
    let mut l = fields.iter().map(|f| csv_field(f)).collect::<Vec<_>>().join(",");
    l.push('\n');
    l
}

/// The proof as printed under every table report: the verdict, then each check.
pub fn proof_lines(tied: bool, checks: &[crate::proof::Check]) -> String {
    let mut out = format!("\nproof: {}\n", if tied { "tied" } else { "NOT TIED" });
    for c in checks {
        out.push_str(&format!("  {} {}: {}\n", if c.ok { "ok  " } else { "FAIL" }, c.name, c.detail));
    }
    out
}

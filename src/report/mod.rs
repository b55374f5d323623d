//! Reporting: the only module that formats numbers for people and writes output files.
//! Every command's result is rendered here as a table for the terminal, JSON (amounts
//! as decimal strings) or CSV. Nothing here computes a figure.

pub mod bench;
pub mod cash_flows;
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

/// Pretty JSON with a trailing newline, stable key order as declared. This is the one
/// place JSON is written: amounts are decimal strings, and a zero never carries a sign
/// (rust_decimal keeps the sign of a negated zero and prints "-0.00").
pub fn to_json<T: Serialize>(value: &T) -> String {
    let mut buf = Vec::new();
    let formatter = AmountFormatter { pretty: serde_json::ser::PrettyFormatter::new(), string: None };
    let mut ser = serde_json::Serializer::with_formatter(&mut buf, formatter);
    value.serialize(&mut ser).expect("report values serialise");
    let mut s = String::from_utf8(buf).expect("serde_json writes UTF-8");
    s.push('\n');
    s
}

/// serde_json's pretty layout, with every string value that is a signed zero amount
/// ("-0", "-0.00") written unsigned. A string is held back until it ends; one that
/// needs an escape is not an amount and is written as it comes.
struct AmountFormatter<'a> {
    pretty: serde_json::ser::PrettyFormatter<'a>,
    string: Option<String>,
}

impl serde_json::ser::Formatter for AmountFormatter<'_> {
    fn begin_array<W: ?Sized + std::io::Write>(&mut self, w: &mut W) -> std::io::Result<()> {
        self.pretty.begin_array(w)
    }
    fn end_array<W: ?Sized + std::io::Write>(&mut self, w: &mut W) -> std::io::Result<()> {
        self.pretty.end_array(w)
    }
    fn begin_array_value<W: ?Sized + std::io::Write>(&mut self, w: &mut W, first: bool) -> std::io::Result<()> {
        self.pretty.begin_array_value(w, first)
    }
    fn end_array_value<W: ?Sized + std::io::Write>(&mut self, w: &mut W) -> std::io::Result<()> {
        self.pretty.end_array_value(w)
    }
    fn begin_object<W: ?Sized + std::io::Write>(&mut self, w: &mut W) -> std::io::Result<()> {
        self.pretty.begin_object(w)
    }
    fn end_object<W: ?Sized + std::io::Write>(&mut self, w: &mut W) -> std::io::Result<()> {
        self.pretty.end_object(w)
    }
    fn begin_object_key<W: ?Sized + std::io::Write>(&mut self, w: &mut W, first: bool) -> std::io::Result<()> {
        self.pretty.begin_object_key(w, first)
    }
    fn begin_object_value<W: ?Sized + std::io::Write>(&mut self, w: &mut W) -> std::io::Result<()> {
        self.pretty.begin_object_value(w)
    }
    fn end_object_value<W: ?Sized + std::io::Write>(&mut self, w: &mut W) -> std::io::Result<()> {
        self.pretty.end_object_value(w)
    }
    fn begin_string<W: ?Sized + std::io::Write>(&mut self, w: &mut W) -> std::io::Result<()> {
        self.string = Some(String::new());
        w.write_all(b"\"")
    }
    fn write_string_fragment<W: ?Sized + std::io::Write>(&mut self, w: &mut W, fragment: &str) -> std::io::Result<()> {
        match &mut self.string {
            Some(held) => {
                held.push_str(fragment);
                Ok(())
            }
            None => w.write_all(fragment.as_bytes()),
        }
    }
    fn write_char_escape<W: ?Sized + std::io::Write>(
        &mut self,
        w: &mut W,
        escape: serde_json::ser::CharEscape,
    ) -> std::io::Result<()> {
        if let Some(held) = self.string.take() {
            w.write_all(held.as_bytes())?;
        }
        self.pretty.write_char_escape(w, escape)
    }
    fn end_string<W: ?Sized + std::io::Write>(&mut self, w: &mut W) -> std::io::Result<()> {
        if let Some(held) = self.string.take() {
            w.write_all(crate::money::unsigned_zero_text(&held).as_bytes())?;
        }
        w.write_all(b"\"")
    }
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

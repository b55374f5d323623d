//! Reporting: the only module that formats numbers for people and writes output files.
//! Every command's result is rendered here as a table for the terminal, JSON (amounts
//! as decimal strings) or CSV. Nothing here computes a figure.

pub mod bench;
pub mod cash_flows;
pub mod close;
pub mod compare;
pub mod findings;
pub mod generate;
pub mod html;
pub mod intercompany;
pub mod rates;
pub mod segments;
pub mod structure;
pub mod trace;
pub mod translation;
pub mod workbook;
pub mod xlsx;

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

/// The width tables are fitted to; unset (natural width) unless the binary found a
/// terminal, so that what the library renders for a test or a file never depends on
/// the terminal the run was started from.
static WIDTH: std::sync::OnceLock<Option<u16>> = std::sync::OnceLock::new();

/// Fits tables to the terminal when standard output is one (`COLUMNS` wins, as shells
/// set it); called once by the binary. Output to a file or a pipe keeps tables at their
/// natural width.
pub fn fit_to_terminal() {
    let width = if console::Term::stdout().is_term() {
        std::env::var("COLUMNS")
            .ok()
            .and_then(|c| c.trim().parse::<u16>().ok())
            .or_else(|| console::Term::stdout().size_checked().map(|(_, cols)| cols))
    } else {
        None
    };
    let _ = WIDTH.set(width);
}

/// The width tables are fitted to, if any (see [`fit_to_terminal`]).
pub fn terminal_width() -> Option<u16> {
    WIDTH.get().copied().flatten()
}

/// The one table style: a rule under the header and nothing else, so that a table
/// reads like a printed schedule. Order of the 19 characters: comfy-table's preset.
const TABLE_STYLE: &str = "     ──            ";

/// Renders rows as an aligned text table that fits the terminal (long cells wrap);
/// `right` marks right-aligned (amount) columns.
pub fn text_table(header: &[&str], rows: &[Vec<String>], right: &[bool]) -> String {
    table_at(header, rows, right, terminal_width())
}

/// [`text_table`] at a given width (`None`: natural width).
pub fn table_at(header: &[&str], rows: &[Vec<String>], right: &[bool], width: Option<u16>) -> String {
    if let Some(w) = width
        && let Some(parts) = column_groups(header, rows, right, usize::from(w))
    {
        // A schedule wider than the terminal (a label, then amounts) is printed in
        // groups of columns, each repeating the labels, rather than breaking amounts.
        let mut out = String::new();
        for (k, cols) in parts.iter().enumerate() {
            let pick = |r: &[String]| -> Vec<String> {
                std::iter::once(0).chain(cols.iter().copied()).map(|i| r.get(i).cloned().unwrap_or_default()).collect()
            };
            let head: Vec<String> = pick(&header.iter().map(|h| h.to_string()).collect::<Vec<_>>());
            let head: Vec<&str> = head.iter().map(String::as_str).collect();
            let body: Vec<Vec<String>> = rows.iter().map(|r| pick(r)).collect();
            let mut align = vec![false];
            align.extend(cols.iter().map(|_| true));
            if k > 0 {
                out.push('\n');
            }
            out.push_str(&table_at(&head, &body, &align, width));
        }
        return out;
    }
    use comfy_table::{CellAlignment, ContentArrangement, Table};
    let mut t = Table::new();
    t.load_preset(TABLE_STYLE);
    match width {
        Some(w) => {
            t.set_width(w);
            t.set_content_arrangement(ContentArrangement::Dynamic);
        }
        None => {
            t.set_content_arrangement(ContentArrangement::Disabled);
        }
    }
    t.set_header(header.to_vec());
    for r in rows {
        t.add_row(r.clone());
    }
    for i in 0..header.len() {
        let r = right.get(i).unwrap_or(&false);
        // An amount is never broken over lines: only text columns give way to fit.
        // Headers may wrap between words, not inside one.
        let word = header.get(i).map(|h| h.split_whitespace().map(|w| w.chars().count()).max().unwrap_or(0));
        let widest = rows.iter().filter_map(|row| row.get(i)).map(|c| c.chars().count()).chain(word).max().unwrap_or(0);
        // The width comfy-table fixes includes the cell's padding, one space a side.
        let fixed = |w: usize| comfy_table::Width::Fixed(u16::try_from(w + 2).unwrap_or(u16::MAX));
        if let Some(c) = t.column_mut(i) {
            if *r {
                c.set_cell_alignment(CellAlignment::Right);
                c.set_constraint(comfy_table::ColumnConstraint::Absolute(fixed(widest)));
            } else {
                // Text wraps, but not below a readable width.
                c.set_constraint(comfy_table::ColumnConstraint::LowerBoundary(fixed(widest.min(16))));
            }
        }
    }
    let mut out = String::new();
    for line in t.lines() {
        // comfy-table pads one space left of the first column; the report's own
        // margin is enough.
        let line = line.strip_prefix(' ').unwrap_or(&line).trim_end().to_string();
        out.push_str(&line);
        out.push('\n');
    }
    out
}

/// For a schedule (a text column, then only amount columns) wider than `width`: the
/// amount columns split into groups that fit beside the label column; `None` when the
/// table is not a schedule or fits as it is.
fn column_groups(header: &[&str], rows: &[Vec<String>], right: &[bool], width: usize) -> Option<Vec<Vec<usize>>> {
    let n = header.len();
    if n < 3 || right.len() != n || right[0] || !right[1..].iter().all(|r| *r) {
        return None;
    }
    let cell = |i: usize| {
        let word = header[i].split_whitespace().map(|w| w.chars().count()).max().unwrap_or(0);
        rows.iter().filter_map(|r| r.get(i)).map(|c| c.chars().count()).chain([word]).max().unwrap_or(0)
    };
    // Each column takes its content, one space of padding a side and a separator.
    let label = cell(0).min(30) + 3;
    let amounts: Vec<usize> = (1..n).map(|i| cell(i) + 3).collect();
    if label + amounts.iter().sum::<usize>() <= width {
        return None;
    }
    let mut groups: Vec<Vec<usize>> = Vec::new();
    let mut used = label;
    for (k, w) in amounts.iter().enumerate() {
        match groups.last_mut() {
            Some(g) if used + w <= width => g.push(k + 1),
            _ => {
                groups.push(vec![k + 1]);
                used = label;
            }
        }
        used += w;
    }
    Some(groups)
}

/// CSV text through the `csv` crate (RFC 4180 quoting, carriage returns included).
pub fn csv_text<I>(header: &[&str], rows: I) -> String
where
    I: IntoIterator<Item = Vec<String>>,
{
    let mut w = csv::WriterBuilder::new().terminator(csv::Terminator::Any(b'\n')).from_writer(Vec::new());
    // Writing into memory cannot fail but for a record of the wrong length, which is a
    // bug of the caller.
    w.write_record(header).expect("header written");
    for r in rows {
        w.write_record(&r).expect("row written");
    }
    let bytes = w.into_inner().expect("csv flushed into memory");
    String::from_utf8(bytes).expect("csv of UTF-8 fields is UTF-8")
}

/// CSV built row by row through the `csv` crate; [`CsvOut::finish`] gives the text.
pub struct CsvOut {
    header: Vec<String>,
    rows: Vec<Vec<String>>,
}

impl CsvOut {
    pub fn new(header: &[&str]) -> Self {
        Self { header: header.iter().map(|h| h.to_string()).collect(), rows: Vec::new() }
    }
    pub fn row(&mut self, fields: &[String]) {
        self.rows.push(fields.to_vec());
    }
    pub fn finish(self) -> String {
        let header: Vec<&str> = self.header.iter().map(String::as_str).collect();
        csv_text(&header, self.rows)
    }
}

/// `text` wrapped at word boundaries to lines of at most `width` characters.
pub fn wrap(text: &str, width: usize) -> String {
    let mut out = String::new();
    let mut line = String::new();
    for word in text.split_whitespace() {
        if !line.is_empty() && line.chars().count() + 1 + word.chars().count() > width {
            out.push_str(&line);
            out.push('\n');
            line.clear();
        }
        if !line.is_empty() {
            line.push(' ');
        }
        line.push_str(word);
    }
    out.push_str(&line);
    out.push('\n');
    out
}

/// The caution as a printed paragraph: wrapped to the terminal, at most 88 columns.
pub fn caution_text() -> String {
    let width = terminal_width().map(|w| usize::from(w).clamp(40, 88)).unwrap_or(88);
    wrap(CAUTION, width)
}

/// A check's name in words: `balance_sheet_balances` -> "balance sheet balances".
pub fn check_words(name: &str) -> String {
    name.replace('_', " ")
}

/// The figures of a check's detail formatted for people: every decimal number gets its
/// thousands separators ("9505969.62" -> "9,505,969.62"). Integers are left alone:
/// they are counts, years or account numbers.
pub fn readable_detail(detail: &str) -> String {
    let chars: Vec<char> = detail.chars().collect();
    let mut out = String::new();
    let mut i = 0;
    while i < chars.len() {
        let starts_number = chars[i].is_ascii_digit() && (i == 0 || !is_word_char(chars[i - 1]));
        if !starts_number {
            out.push(chars[i]);
            i += 1;
            continue;
        }
        let mut j = i;
        while j < chars.len() && chars[j].is_ascii_digit() {
            j += 1;
        }
        let is_decimal = j + 1 < chars.len() && chars[j] == '.' && chars[j + 1].is_ascii_digit();
        if !is_decimal {
            out.extend(&chars[i..j]);
            i = j;
            continue;
        }
        let mut k = j + 1;
        while k < chars.len() && chars[k].is_ascii_digit() {
            k += 1;
        }
        if k < chars.len() && is_word_char(chars[k]) {
            out.extend(&chars[i..k]);
            i = k;
            continue;
        }
        let int: String = chars[i..j].iter().collect();
        out.push_str(&group_thousands(&int));
        out.extend(&chars[j..k]);
        i = k;
    }
    out
}

fn is_word_char(c: char) -> bool {
    c.is_alphanumeric() || c == '.' || c == '_'
}

/// Digits with a comma every three from the right.
fn group_thousands(digits: &str) -> String {
    let mut out = String::new();
    for (i, ch) in digits.chars().enumerate() {
        if i > 0 && (digits.len() - i).is_multiple_of(3) {
            out.push(',');
        }
        out.push(ch);
    }
    out
}

/// The proof as printed under every table report: the verdict, then each check in
/// words with its figures formatted.
pub fn proof_lines(tied: bool, checks: &[crate::proof::Check]) -> String {
    let mut out =
        format!("\nproof: {}\n", if tied { "tied, every check holds" } else { "NOT TIED, a check fails (see below)" });
    for c in checks {
        out.push_str(&format!(
            "  {} {}: {}\n",
            if c.ok { "ok  " } else { "FAIL" },
            check_words(c.name),
            readable_detail(&c.detail)
        ));
    }
    out
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn details_get_thousands_separators_on_amounts_only() {
        assert_eq!(
            readable_detail("assets - equity - liabilities = 9505969.62, profit = -1234.5"),
            "assets - equity - liabilities = 9,505,969.62, profit = -1,234.5"
        );
        // Counts, account numbers, periods and rates keep their form.
        assert_eq!(readable_detail("12 deliveries, account 131500, 2026-12"), "12 deliveries, account 131500, 2026-12");
        assert_eq!(readable_detail("rate 1.1102 on 2026-09-15"), "rate 1.1102 on 2026-09-15");
        assert_eq!(readable_detail("v0.1.0 and 2.5x"), "v0.1.0 and 2.5x");
    }

    #[test]
    fn csv_quotes_separators_quotes_and_line_breaks() {
        let text = csv_text(
            &["a", "b"],
            [vec!["x,y".to_string(), "say \"hi\"".to_string()], vec!["line\rbreak".to_string(), "plain".to_string()]],
        );
        assert_eq!(text, "a,b\n\"x,y\",\"say \"\"hi\"\"\"\n\"line\rbreak\",plain\n");
    }

    #[test]
    fn a_wide_schedule_is_printed_in_groups_of_columns() {
        let header = ["", "one", "two", "three", "four", "five", "six", "seven"];
        let rows: Vec<Vec<String>> = ["Balance at the start", "Profit", "Balance at the end"]
            .iter()
            .map(|l| std::iter::once(l.to_string()).chain((1..8).map(|k| format!("{k}00,000,000.00"))).collect())
            .collect();
        let mut right = vec![false];
        right.extend([true; 7]);
        let t = table_at(&header, &rows, &right, Some(80));
        assert!(t.lines().all(|l| l.chars().count() <= 80), "{t}");
        for k in 1..8 {
            assert_eq!(t.matches(&format!("{k}00,000,000.00")).count(), 3, "each amount whole, once per row: {t}");
        }
        assert_eq!(t.matches("Balance at the start").count(), 3, "labels repeated in each of 3 groups: {t}");
        // At its natural width it is one table.
        assert_eq!(table_at(&header, &rows, &right, None).matches("Profit").count(), 1);
    }

    #[test]
    fn wrap_keeps_lines_within_the_width() {
        let w = wrap(CAUTION, 60);
        assert!(w.lines().count() > 3);
        assert!(w.lines().all(|l| l.chars().count() <= 60), "{w}");
        assert_eq!(w.split_whitespace().collect::<Vec<_>>(), CAUTION.split_whitespace().collect::<Vec<_>>());
    }

    #[test]
    fn tables_fit_the_width_asked() {
        let rows = vec![vec!["a long label that will need to wrap somewhere".to_string(), "1,234.56".to_string()]];
        let t = table_at(&["label", "amount"], &rows, &[false, true], Some(30));
        assert!(t.lines().all(|l| l.chars().count() <= 30), "{t}");
        assert!(t.contains("1,234.56"), "an amount is never broken: {t}");
        let natural = table_at(&["label", "amount"], &rows, &[false, true], None);
        assert_eq!(natural.lines().count(), 3, "{natural}");
    }
}

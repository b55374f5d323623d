//! Reading one delimited or Parquet table as text columns, with its header checked
//! against what the format requires. Every value stays text here, trimmed, an empty or
//! quoted empty cell being null; the caller parses it and reports what does not parse,
//! with the line it came from. CSV is tokenised record by record so that every problem
//! of the file's shape (text that is not UTF-8, a ragged row, a comment line, a column
//! named twice) is a finding with its line, never a parser message without one.

use std::path::Path;

use polars::prelude::*;

use crate::findings::{Finding, Rule, Severity};

/// Which columns a table must and may have.
pub struct Spec<'a> {
    pub required: &'a [&'a str],
    pub optional: &'a [&'a str],
    /// Column name prefixes accepted in any number (e.g. `segment_`).
    pub prefixes: &'a [&'a str],
}

/// A table read as text, with every optional column present (null when absent).
pub struct TextTable {
    /// Path relative to the data folder, as shown in findings.
    pub file: String,
    pub df: DataFrame,
    /// The line of each data row (in CSV the line its record starts on, the header
    /// being line 1; in Parquet the row number from 1).
    pub lines: Vec<u64>,
}

impl TextTable {
    pub fn height(&self) -> usize {
        self.df.height()
    }

    /// Line number of data row `row`.
    pub fn line(&self, row: usize) -> u64 {
        self.lines.get(row).copied().unwrap_or(row as u64 + 2)
    }

    /// The text of `column` at `row`, trimmed; `None` when empty.
    pub fn get(&self, column: &str, row: usize) -> Option<String> {
        let c = self.df.column(column).ok()?;
        let v = c.str().ok()?.get(row)?;
        let t = v.trim();
        (!t.is_empty()).then(|| t.to_string())
    }

    /// Names of prefixed columns present, in header order.
    pub fn prefixed(&self, prefix: &str) -> Vec<String> {
        self.df.get_column_names().iter().filter(|n| n.starts_with(prefix)).map(|n| n.to_string()).collect()
    }
}

/// Reads `path` (CSV, or Parquet by extension) as text columns and checks its header.
/// A missing required column is reported and the table is not returned; unknown
/// columns are reported as warnings and kept out.
pub fn read(path: &Path, file: &str, spec: &Spec<'_>, findings: &mut Vec<Finding>) -> Option<TextTable> {
    match std::fs::read(path) {
        Ok(bytes) => read_bytes(path, &bytes, file, spec, findings),
        Err(e) => {
            let finding = if is_parquet(path) {
                Finding::new(
                    Rule::FileUnreadable,
                    format!("cannot read the table: {e}"),
                    "check that the file is Parquet and not truncated",
                )
            } else {
                Finding::new(Rule::FileUnreadable, format!("cannot read the file: {e}"), "check the file")
            };
            findings.push(finding.in_file(file));
            None
        }
    }
}

fn is_parquet(path: &Path) -> bool {
    path.extension().is_some_and(|e| e == "parquet")
}

/// [`read`] from the file's `bytes`, already read (so that the caller can hash the same
/// bytes rather than read the file twice); `path` says by its extension what they are.
pub fn read_bytes(
    path: &Path,
    bytes: &[u8],
    file: &str,
    spec: &Spec<'_>,
    findings: &mut Vec<Finding>,
) -> Option<TextTable> {
    let (mut df, lines) = if is_parquet(path) {
        match read_parquet_text(bytes) {
            Ok(df) => {
                let n = df.height() as u64;
                (df, (1..=n).collect())
            }
            Err(e) => {
                findings.push(
                    Finding::new(
                        Rule::FileUnreadable,
                        format!("cannot read the table: {e}"),
                        "check that the file is Parquet and not truncated",
                    )
                    .in_file(file),
                );
                return None;
            }
        }
    } else {
        read_csv_text(bytes, file, findings)?
    };
    let names: Vec<String> = df.get_column_names().iter().map(|s| s.to_string()).collect();
    let mut ok = true;
    for req in spec.required {
        if !names.iter().any(|n| n == req) {
            ok = false;
            findings.push(
                Finding::new(
                    Rule::ColumnMissing,
                    format!("required column `{req}` is missing (the header has: {})", names.join(", ")),
                    format!("add a `{req}` column; docs/formats.md lists every column of this file"),
                )
                .in_file(file)
                .line(1),
            );
        }
    }
    let mut keep: Vec<String> = Vec::new();
    for n in &names {
        let known = spec.required.contains(&n.as_str())
            || spec.optional.contains(&n.as_str())
            || spec.prefixes.iter().any(|p| n.starts_with(p));
        if known {
            keep.push(n.clone());
        } else {
            findings.push(
                Finding::new(
                    Rule::ColumnUnknown,
                    format!("column `{n}` is not part of this file's format and is ignored"),
                    "remove or rename the column (see docs/formats.md)",
                )
                .in_file(file)
                .line(1)
                .severity(Severity::Warning),
            );
        }
    }
    if !ok {
        return None;
    }
    df = match df.select(keep.iter().map(|s| s.as_str())) {
        Ok(d) => d,
        Err(e) => {
            findings.push(Finding::new(Rule::FileUnreadable, e.to_string(), "check the file").in_file(file));
            return None;
        }
    };
    for opt in spec.optional {
        if df.column(opt).is_err() {
            let col = Column::full_null((*opt).into(), df.height(), &DataType::String);
            if df.with_column(col).is_err() {
                return None;
            }
        }
    }
    Some(TextTable { file: file.to_string(), df, lines })
}

/// Tokenises CSV `bytes` (RFC 4180: commas, double quotes, a header row) into text
/// columns and the line of each kept row. A file that cannot be read as a whole (not
/// UTF-8, no header, a column named twice) returns `None` with its finding; a row of the
/// wrong shape is a finding on its line and is left out.
pub fn read_csv_text(bytes: &[u8], file: &str, findings: &mut Vec<Finding>) -> Option<(DataFrame, Vec<u64>)> {
    let bytes = bytes.strip_prefix(b"\xEF\xBB\xBF").unwrap_or(bytes);
    let mut reader = csv::ReaderBuilder::new().has_headers(false).flexible(true).from_reader(bytes);
    let mut header: Option<Vec<String>> = None;
    // Cells go straight into the columns' buffers: no text is allocated per cell.
    let rows = bytes.iter().filter(|b| **b == b'\n').count();
    let mut columns: Vec<StringChunkedBuilder> = Vec::new();
    let mut lines: Vec<u64> = Vec::with_capacity(rows);
    let mut record = csv::ByteRecord::new();
    loop {
        let line = reader.position().line();
        match reader.read_byte_record(&mut record) {
            Ok(false) => break,
            Ok(true) => {}
            Err(e) => {
                findings.push(
                    Finding::new(
                        Rule::FileUnreadable,
                        format!("the file cannot be read as CSV from line {line}: {e}"),
                        "save it as UTF-8 CSV, comma separated, with one header row",
                    )
                    .in_file(file)
                    .line(line),
                );
                return None;
            }
        }
        let line = record.position().map(|p| p.line()).unwrap_or(line);
        let fields = decode_fields(&record, line, file, findings)?;
        if fields.len() == 1 && fields[0].is_empty() {
            continue; // a blank line holds no row
        }
        let Some(names) = &header else {
            if !check_header(&fields, line, file, findings) {
                return None;
            }
            columns = fields.iter().map(|n| StringChunkedBuilder::new((*n).into(), rows)).collect();
            header = Some(fields.iter().map(|n| n.to_string()).collect());
            continue;
        };
        if !check_row_shape(&fields, names.len(), line, file, findings) {
            continue;
        }
        for (c, v) in columns.iter_mut().zip(fields) {
            if v.is_empty() {
                c.append_null();
            } else {
                c.append_value(v);
            }
        }
        lines.push(line);
    }
    if header.is_none() {
        findings.push(
            Finding::new(
                Rule::FileUnreadable,
                "the file is empty: it has no header row",
                "write the header row and the data (docs/formats.md has an example of every file)",
            )
            .in_file(file),
        );
        return None;
    }
    let n = lines.len();
    let cols: Vec<Column> = columns.into_iter().map(|b| b.finish().into_column()).collect();
    match DataFrame::new(n, cols) {
        Ok(df) => Some((df, lines)),
        Err(e) => {
            findings.push(Finding::new(Rule::FileUnreadable, e.to_string(), "check the file").in_file(file));
            None
        }
    }
}

/// Decodes one CSV record's fields as trimmed UTF-8 text; a field that is not UTF-8 is
/// a finding on its line and `None`, as the whole file then cannot be trusted.
fn decode_fields<'r>(
    record: &'r csv::ByteRecord,
    line: u64,
    file: &str,
    findings: &mut Vec<Finding>,
) -> Option<Vec<&'r str>> {
    let mut fields: Vec<&str> = Vec::with_capacity(record.len());
    for raw in record.iter() {
        match std::str::from_utf8(raw) {
            Ok(s) => fields.push(s.trim()),
            Err(e) => {
                let bad = raw.get(e.valid_up_to()).copied().unwrap_or(0);
                findings.push(
                    Finding::new(
                        Rule::FileUnreadable,
                        format!(
                            "line {line} is not UTF-8 text (byte 0x{bad:02X} after {:?}); the file is not read",
                            String::from_utf8_lossy(&raw[..e.valid_up_to()])
                        ),
                        "save the file as UTF-8 (an export in Latin-1 or Windows-1252 must be converted)",
                    )
                    .in_file(file)
                    .line(line),
                );
                return None;
            }
        }
    }
    Some(fields)
}

/// Checks the header row names every column once, with a finding on its line for each
/// column unnamed or named twice; `false` when the file cannot be read by its header.
fn check_header(fields: &[&str], line: u64, file: &str, findings: &mut Vec<Finding>) -> bool {
    let mut seen: std::collections::BTreeMap<&str, usize> = std::collections::BTreeMap::new();
    let mut ok = true;
    for (i, n) in fields.iter().enumerate() {
        if n.is_empty() {
            ok = false;
            findings.push(
                Finding::new(
                    Rule::ColumnMissing,
                    format!("column {} of the header has no name", i + 1),
                    "name every column of the header row (docs/formats.md lists them)",
                )
                .in_file(file)
                .line(line),
            );
        } else if let Some(first) = seen.insert(n, i) {
            ok = false;
            findings.push(
                Finding::new(
                    Rule::ColumnDuplicated,
                    format!("column `{n}` is named twice in the header (columns {} and {})", first + 1, i + 1),
                    format!("keep one `{n}` column: tessera cannot tell which one holds the values"),
                )
                .in_file(file)
                .line(line),
            );
        }
    }
    ok
}

/// Checks a data row is neither a comment line nor of a width other than the header's
/// (`width`), with a finding on its line when it is; `false` leaves the row out.
fn check_row_shape(fields: &[&str], width: usize, line: u64, file: &str, findings: &mut Vec<Finding>) -> bool {
    if fields.first().is_some_and(|f| f.starts_with('#')) {
        findings.push(
            Finding::new(
                Rule::RowMalformed,
                format!("line {line} is a comment line; tessera's tables have none, so the line is not read"),
                "remove the line (or put the note in a `note` column where the file has one)",
            )
            .in_file(file)
            .line(line),
        );
        return false;
    }
    if fields.len() != width {
        findings.push(
            Finding::new(
                Rule::RowMalformed,
                format!("line {line} has {} fields, the header has {}; the row is not read", fields.len(), width),
                "give every row exactly the header's columns (a comma inside a value needs double quotes)",
            )
            .in_file(file)
            .line(line),
        );
        return false;
    }
    true
}

fn read_parquet_text(bytes: &[u8]) -> PolarsResult<DataFrame> {
    let df = ParquetReader::new(std::io::Cursor::new(bytes)).finish()?;
    // Trimmed, and an empty text null, as in CSV; column by column rather than through a
    // query plan, which costs more than the work on a file of a few hundred rows.
    let cols = df
        .columns()
        .iter()
        .map(|c| {
            let text = c.as_materialized_series().strict_cast(&DataType::String)?;
            let trimmed = text.str()?.iter().map(|v| v.map(str::trim).filter(|t| !t.is_empty()));
            Ok(StringChunked::from_iter_options(c.name().clone(), trimmed).into_column())
        })
        .collect::<PolarsResult<Vec<Column>>>()?;
    DataFrame::new(df.height(), cols)
}

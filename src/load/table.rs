//! Reading one delimited or Parquet table as text columns, with its header checked
//! against what the format requires. Every value stays text here; the caller parses it
//! and reports what does not parse, with the line it came from.

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
    /// The first data row's line number (2 for CSV below its header, 1 for Parquet).
    pub first_line: u64,
}

impl TextTable {
    pub fn height(&self) -> usize {
        self.df.height()
    }

    /// Line number of data row `row`.
    pub fn line(&self, row: usize) -> u64 {
        self.first_line + row as u64
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
    let is_parquet = path.extension().is_some_and(|e| e == "parquet");
    let raw = if is_parquet { read_parquet_text(path) } else { read_csv_text(path) };
    let mut df = match raw {
        Ok(df) => df,
        Err(e) => {
            findings.push(
                Finding::new(
                    Rule::FileUnreadable,
                    format!("cannot read the table: {e}"),
                    "check that the file is UTF-8 CSV with a header row (or Parquet) and not truncated",
                )
                .in_file(file),
            );
            return None;
        }
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
    Some(TextTable { file: file.to_string(), df, first_line: if is_parquet { 1 } else { 2 } })
}

fn read_csv_text(path: &Path) -> PolarsResult<DataFrame> {
    CsvReadOptions::default()
        .with_has_header(true)
        .with_infer_schema_length(Some(0))
        .with_raise_if_empty(false)
        .try_into_reader_with_file_path(Some(path.to_path_buf()))?
        .finish()
}

fn read_parquet_text(path: &Path) -> PolarsResult<DataFrame> {
    let file = std::fs::File::open(path)?;
    let df = ParquetReader::new(file).finish()?;
    let cols: Vec<Expr> = df.get_column_names().iter().map(|n| col(n.as_str()).strict_cast(DataType::String)).collect();
    df.lazy().select(cols).collect()
}

//! `rates/price_index.csv` (optional): the general price index of each hyperinflationary
//! currency at the end of each month (IAS 29.11, 29.37), and the chart's `monetary`
//! column that says which assets and liabilities keep their amount under IAS 29.12.
//! Only the shape is read here: a month the close needs and lacks, an index of a
//! currency no hyperinflationary entity uses and an unclassified account are the close's
//! findings (`restate::findings`), since only the close knows its months.

use std::collections::BTreeMap;
use std::path::Path;
use std::str::FromStr;

use rust_decimal::Decimal;

use super::table::TextTable;
use super::{InputFile, Spec, invalid, open_table, required};
use crate::findings::{Finding, Rule};
use crate::model::{AccountClass, Currency, Period, PriceIndex, Source};

pub const PRICE_INDEX_FILE: &str = "price_index.csv";

/// The largest index accepted: restating multiplies amounts by a ratio of two indices,
/// and this bound keeps every product well inside 28 significant digits.
const MAX_INDEX: i64 = 1_000_000_000;

pub(super) fn load_price_indices(
    root: &Path,
    path: &Path,
    f: &mut Vec<Finding>,
    inputs: &mut Vec<InputFile>,
) -> Vec<PriceIndex> {
    if !path.is_file() {
        return Vec::new();
    }
    let spec = Spec { required: &["currency", "period", "index"], optional: &["note"], prefixes: &[] };
    let Some(t) = open_table(root, path, &spec, f, inputs) else { return Vec::new() };
    let mut seen: BTreeMap<(Currency, Period), u64> = BTreeMap::new();
    let mut out = Vec::new();
    for row in 0..t.height() {
        let line = t.line(row);
        let currency = required(&t, "currency", row, f).and_then(|c| match Currency::parse(&c) {
            Some(x) => Some(x),
            None => {
                f.push(invalid(&t, row, "currency", &c, "an ISO 4217 code"));
                None
            }
        });
        let period = required(&t, "period", row, f).and_then(|p| match Period::from_str(&p) {
            Ok(x) => Some(x),
            Err(_) => {
                f.push(invalid(&t, row, "period", &p, "a period YYYY-MM"));
                None
            }
        });
        let index = required(&t, "index", row, f).and_then(|v| parse_index(&t, row, &v, f));
        let (Some(currency), Some(period), Some(index)) = (currency, period, index) else { continue };
        if let Some(first) = seen.insert((currency, period), line) {
            f.push(
                Finding::new(
                    Rule::RowDuplicated,
                    format!(
                        "the price index of {} for {period} is given twice (first on line {first})",
                        currency.code()
                    ),
                    "keep one row per currency and month",
                )
                .in_file(&t.file)
                .line(line)
                .period(period),
            );
            continue;
        }
        out.push(PriceIndex { currency, period, index, source: Source::line(&t.file, line) });
    }
    out
}

/// The index of one row: a positive decimal no larger than `MAX_INDEX`.
fn parse_index(t: &TextTable, row: usize, v: &str, f: &mut Vec<Finding>) -> Option<Decimal> {
    let Ok(x) = Decimal::from_str(v) else {
        f.push(invalid(t, row, "index", v, "a decimal number"));
        return None;
    };
    if x <= Decimal::ZERO {
        f.push(
            Finding::new(
                Rule::PriceIndexNotPositive,
                format!("the price index is {v}: a restatement factor (index now / index then) needs indices above 0"),
                "write the general price index of the month as published (IAS 29.37), a positive number",
            )
            .in_file(&t.file)
            .line(t.line(row)),
        );
        return None;
    }
    if x > Decimal::from(MAX_INDEX) {
        f.push(invalid(t, row, "index", v, &format!("an index no larger than {MAX_INDEX} (rebase the series)")));
        return None;
    }
    Some(x)
}

/// The chart's `monetary` cell of one row: `true` or `false` for an asset or a
/// liability, empty otherwise. Equity, income and expenses are never monetary under
/// IAS 29 (29.24-26 restate them all), so a value there is a finding.
pub(super) fn parse_monetary(t: &TextTable, row: usize, class: AccountClass, f: &mut Vec<Finding>) -> Option<bool> {
    let v = t.get("monetary", row)?;
    let value = match v.as_str() {
        "true" => true,
        "false" => false,
        other => {
            f.push(invalid(t, row, "monetary", other, "true, false or empty"));
            return None;
        }
    };
    if !matches!(class, AccountClass::Asset | AccountClass::Liability) {
        f.push(invalid(
            t,
            row,
            "monetary",
            &v,
            "empty: only assets and liabilities are monetary or not (IAS 29.12); equity, income and expenses are always restated",
        ));
        return None;
    }
    Some(value)
}

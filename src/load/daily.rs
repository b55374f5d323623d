//! Parsing of the rate inputs: a central bank's daily reference rates and the override file
//! of rates fixed by policy. The loading module reads each file into a `String` and hands
//! the text and the file's display name here; nothing in this module touches the file
//! system. Parsing never stops at the first problem: every malformed value, out-of-order
//! date and unknown currency of a file is collected as a [`RateFinding`], and every value
//! that passes is kept, so a single run shows the user everything to fix.
//!
//! Two layouts of a daily series are read, told apart by the header:
//! - **wide**, as central banks commonly publish it (the euro system's `eurofxref-hist.csv`
//!   is one): `Date,USD,JPY,...`, one row per publication day, each value the units of
//!   the column's currency per 1 unit of the bank's own (base) currency, a marker such as
//!   `N/A` or an empty cell where nothing was published, and a trailing separator on every
//!   line (a last column with no name and no values), which is tolerated;
//! - **long**: `date,currency,rate`, one row per publication day and currency.
//!
//! Values are exact decimals (`rust_decimal`), read with `from_str_exact` so that no digit
//! is ever rounded away while reading.

use std::cmp::Ordering;
use std::collections::{BTreeMap, BTreeSet, HashMap, HashSet};

use chrono::NaiveDate;
use rust_decimal::Decimal;

use crate::model::{Currency, Period};
use crate::rates::{Findings, Quote, RATE_MAX_DECIMALS, RateFinding, RateRule};

/// Cell contents that mean "the bank published no rate for this currency on this day".
/// The euro system's file writes `N/A`; other banks leave the cell empty.
pub const MISSING_MARKERS: [&str; 2] = ["", "N/A"];

/// Rows read from one daily file. 100,000 publication days are about 390 years of
/// business days; a file beyond that is not a rate series, and reading stops there with
/// the finding `RateFileTooLarge`.
pub const MAX_ROWS: usize = 100_000;

/// Columns of a wide file (the euro system's file has 42 currencies). A header beyond
/// this is refused whole with `RateHeaderInvalid`.
pub const MAX_COLUMNS: usize = 1_000;

/// Daily rates must lie below 10^12 units per base unit. The bound keeps every sum of
/// [`MAX_ROWS`] rates, and every cross rate of two of them, inside the 28 digits of a
/// `Decimal`; no currency the author knows of is quoted anywhere near it.
pub const RATE_LIMIT: Decimal = Decimal::from_parts(3_567_587_328, 232, 0, false, 0);

/// How the daily file was laid out.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum DailyLayout {
    /// `Date,USD,JPY,...`: one row per day, one column per currency.
    Wide,
    /// `date,currency,rate`: one row per day and currency.
    Long,
}

/// Settings of the daily parser.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct DailyOptions {
    /// Cell contents (after trimming) that mean "no rate published"; compared exactly.
    pub missing_markers: Vec<String>,
}

impl Default for DailyOptions {
    fn default() -> Self {
        Self { missing_markers: MISSING_MARKERS.iter().map(|m| m.to_string()).collect() }
    }
}

/// One parsed daily file: for each currency, the rate of every day the bank published it,
/// as units of that currency per 1 unit of the base currency.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct DailySeries {
    /// Display name of the file, as given by the loading module.
    pub file: String,
    pub layout: DailyLayout,
    /// Every date that has a row in the file, published values or not: the days the
    /// file covers. Rates derivation uses them to tell a series that ended from a file
    /// that ends.
    pub dates: BTreeSet<NaiveDate>,
    /// Rates per currency and day. A currency whose column holds no value at all is
    /// present with an empty map, so that "no value" and "no column" stay distinct.
    pub rates: BTreeMap<Currency, BTreeMap<NaiveDate, Decimal>>,
}

impl DailySeries {
    pub fn first_date(&self) -> Option<NaiveDate> {
        self.dates.first().copied()
    }

    pub fn last_date(&self) -> Option<NaiveDate> {
        self.dates.last().copied()
    }

    /// The published rate of `currency` on `date`, units per 1 base unit.
    pub fn rate(&self, currency: Currency, date: NaiveDate) -> Option<Decimal> {
        self.rates.get(&currency)?.get(&date).copied()
    }
}

/// What [`parse_daily`] gives back: the values that passed and the findings.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct DailyParse {
    pub series: DailySeries,
    pub findings: Vec<RateFinding>,
}

/// Parses a daily reference-rate file in the wide or the long layout (see the module
/// documentation), collecting every problem as a finding.
pub fn parse_daily(text: &str, file: &str, options: &DailyOptions) -> DailyParse {
    let mut findings = Findings::new();
    let mut series = DailySeries {
        file: file.to_string(),
        layout: DailyLayout::Wide,
        dates: BTreeSet::new(),
        rates: BTreeMap::new(),
    };
    let mut rows = Rows::new(text, file);
    let Some((header_line, header)) = rows.next(&mut findings) else {
        findings.push(RateFinding::new(
            RateRule::RateHeaderInvalid,
            file,
            "the file is empty: a daily rate file starts with a header such as Date,USD,JPY".to_string(),
            "check that the right file was given",
        ));
        return DailyParse { series, findings: findings.finish() };
    };
    let lower: Vec<String> = header.iter().map(|h| h.to_ascii_lowercase()).collect();
    let has = |name: &str| lower.iter().any(|h| h == name);
    let mut unknown = UnknownCodes::default();
    if has("currency") && has("rate") {
        series.layout = DailyLayout::Long;
        parse_long(&mut rows, &header, header_line, options, &mut series, &mut unknown, &mut findings);
    } else if lower.first().is_some_and(|h| h == "date") {
        parse_wide(&mut rows, &header, header_line, options, &mut series, &mut unknown, &mut findings);
    } else {
        findings.push(
            RateFinding::new(
                RateRule::RateHeaderInvalid,
                file,
                format!(
                    "header {:?} is neither the wide layout (first column Date, then one \
                     column per currency) nor the long layout (columns date, currency, rate)",
                    header.join(",")
                ),
                "give the bank's file as published, or rewrite it as date,currency,rate",
            )
            .at_line(header_line),
        );
    }
    unknown.report(file, series.last_date(), &mut findings);
    DailyParse { series, findings: findings.finish() }
}

/// A column of a wide file.
enum Column {
    Rate(Currency),
    /// A well-formed code the ISO 4217 table of `iso_currency` does not know.
    Unknown(String),
    /// A column whose values are not read; the header finding says why.
    Ignored,
    /// The nameless last column left by a trailing separator.
    Trailing,
}

fn parse_wide(
    rows: &mut Rows<'_>,
    header: &[String],
    header_line: u64,
    options: &DailyOptions,
    series: &mut DailySeries,
    unknown: &mut UnknownCodes,
    findings: &mut Findings,
) {
    let file = series.file.clone();
    if header.len() > MAX_COLUMNS {
        findings.push(
            RateFinding::new(
                RateRule::RateHeaderInvalid,
                &file,
                format!("the header has {} columns, above the limit of {MAX_COLUMNS}", header.len()),
                "check that the file is a daily rate series",
            )
            .at_line(header_line),
        );
        return;
    }
    let named = header.iter().rposition(|h| !h.is_empty()).map_or(0, |i| i + 1);
    let mut seen: HashSet<&str> = HashSet::new();
    let columns: Vec<Column> = header
        .iter()
        .enumerate()
        .map(|(i, name)| {
            if i == 0 {
                return Column::Ignored;
            }
            if i >= named {
                return Column::Trailing;
            }
            let at = format!("column {} of the header", i + 1);
            if name.is_empty() {
                findings.push(
                    RateFinding::new(
                        RateRule::RateHeaderInvalid,
                        &file,
                        format!("{at} has no name; its values are not read"),
                        "name the column with its currency code",
                    )
                    .at_line(header_line),
                );
                return Column::Ignored;
            }
            if !seen.insert(name.as_str()) {
                findings.push(
                    RateFinding::new(
                        RateRule::RateHeaderInvalid,
                        &file,
                        format!("{at} repeats currency {name}; only its first column is read"),
                        "remove the repeated column",
                    )
                    .at_line(header_line)
                    .for_currency(name),
                );
                return Column::Ignored;
            }
            classify_code(name, &file, header_line, &at, unknown, findings)
        })
        .collect();
    for column in &columns {
        if let Column::Rate(c) = column {
            series.rates.entry(*c).or_default();
        }
    }

    let mut order = DateOrder::default();
    while let Some((line, record)) = rows.next(findings) {
        if rows.count > MAX_ROWS {
            findings.push(too_large(&file, line));
            break;
        }
        check_width(&record, named, &file, line, findings);
        let Some(date) = read_date(&record[0], &file, line, findings) else {
            continue;
        };
        if !order.accept(date, line, None, &file, findings) {
            continue;
        }
        series.dates.insert(date);
        for (i, cell) in record.iter().enumerate().skip(1) {
            let Some(column) = columns.get(i) else {
                break;
            };
            if options.missing_markers.iter().any(|m| m == cell) {
                continue;
            }
            match column {
                Column::Rate(currency) => {
                    let at = Cell { file: &file, line, column: i + 1, code: currency.code() };
                    if let Some(value) = read_rate(cell, &at, findings) {
                        series.rates.entry(*currency).or_default().insert(date, value);
                    }
                }
                Column::Unknown(code) => unknown.saw(code, date),
                Column::Ignored | Column::Trailing => {}
            }
        }
    }
}

fn parse_long(
    rows: &mut Rows<'_>,
    header: &[String],
    header_line: u64,
    options: &DailyOptions,
    series: &mut DailySeries,
    unknown: &mut UnknownCodes,
    findings: &mut Findings,
) {
    let file = series.file.clone();
    let find = |name: &str| header.iter().position(|h| h.eq_ignore_ascii_case(name));
    let Some(date_at) = find("date") else {
        findings.push(
            RateFinding::new(
                RateRule::RateColumnMissing,
                &file,
                "the long layout needs the columns date, currency and rate; date is missing".to_string(),
                "add the date column",
            )
            .at_line(header_line),
        );
        return;
    };
    // Both found by the caller's layout test.
    let (Some(currency_at), Some(rate_at)) = (find("currency"), find("rate")) else {
        return;
    };
    for (i, name) in header.iter().enumerate() {
        if ![date_at, currency_at, rate_at].contains(&i) && !name.is_empty() {
            findings.push(
                RateFinding::new(
                    RateRule::RateColumnUnknown,
                    &file,
                    format!("column {} ({name}) is not one of date, currency, rate; it is ignored", i + 1),
                    "remove the column, or leave it: it is not read",
                )
                .at_line(header_line),
            );
        }
    }
    // Each code is classified once: a malformed one is reported on its first line only.
    let mut codes: HashMap<String, Option<Currency>> = HashMap::new();
    let mut orders: BTreeMap<String, DateOrder> = BTreeMap::new();
    while let Some((line, record)) = rows.next(findings) {
        if rows.count > MAX_ROWS {
            findings.push(too_large(&file, line));
            break;
        }
        let cell = |i: usize| record.get(i).map(String::as_str).unwrap_or("");
        let Some(date) = read_date(cell(date_at), &file, line, findings) else {
            continue;
        };
        let code = cell(currency_at);
        let currency = match codes.get(code) {
            Some(known) => *known,
            None => {
                let at = format!("line {line}");
                let currency = match classify_code(code, &file, line, &at, unknown, findings) {
                    Column::Rate(c) => {
                        series.rates.entry(c).or_default();
                        Some(c)
                    }
                    _ => None,
                };
                codes.insert(code.to_string(), currency);
                currency
            }
        };
        if !orders.entry(code.to_string()).or_default().accept(date, line, Some(code), &file, findings) {
            continue;
        }
        series.dates.insert(date);
        let value = cell(rate_at);
        if options.missing_markers.iter().any(|m| m == value) {
            continue;
        }
        match currency {
            Some(c) => {
                let at = Cell { file: &file, line, column: rate_at + 1, code: c.code() };
                if let Some(v) = read_rate(value, &at, findings) {
                    series.rates.entry(c).or_default().insert(date, v);
                }
            }
            None if unknown.codes.contains_key(code) => unknown.saw(code, date),
            None => {}
        }
    }
}

/// Sorts a currency code into known (ISO 4217 as packaged by `iso_currency`), unknown but
/// well formed (decided later, see [`UnknownCodes`]), or malformed (reported now).
fn classify_code(
    code: &str,
    file: &str,
    line: u64,
    at: &str,
    unknown: &mut UnknownCodes,
    findings: &mut Findings,
) -> Column {
    if let Some(c) = Currency::parse(code) {
        return Column::Rate(c);
    }
    if code.len() == 3 && code.bytes().all(|b| b.is_ascii_uppercase()) {
        unknown.codes.entry(code.to_string()).or_insert_with(|| UnknownCode { line, ..Default::default() });
        return Column::Unknown(code.to_string());
    }
    findings.push(
        RateFinding::new(
            RateRule::RateCurrencyUnknown,
            file,
            format!(
                "{at}: {code:?} is not an ISO 4217 alphabetic code (three capital letters); its values are not read"
            ),
            "write the currency as its ISO 4217 code, e.g. USD",
        )
        .at_line(line)
        .for_currency(code),
    );
    Column::Ignored
}

/// Codes of three capital letters that the ISO 4217 table of `iso_currency` does not know.
/// The euro system's file still carries columns for currencies withdrawn long ago (CYP,
/// EEK, LTL, LVL, MTL, ROL, SIT, SKK, TRL), with `N/A` ever since. Such a code cannot be
/// any entity's functional currency (entities.csv takes ISO 4217 codes only), so its
/// values are not needed; but they are not dropped silently either. A code whose last
/// value comes before the file's last day (or that has no value) is taken as withdrawn:
/// `RateCurrencyHistoric`, a warning. A code still published on the file's last day is
/// `RateCurrencyUnknown`, an error: a live currency the table does not know, or a
/// misspelt header, and the user must look.
#[derive(Default)]
struct UnknownCodes {
    codes: BTreeMap<String, UnknownCode>,
}

#[derive(Default)]
struct UnknownCode {
    line: u64,
    values: u64,
    first: Option<NaiveDate>,
    last: Option<NaiveDate>,
}

impl UnknownCodes {
    fn saw(&mut self, code: &str, date: NaiveDate) {
        if let Some(u) = self.codes.get_mut(code) {
            u.values += 1;
            u.first = Some(u.first.map_or(date, |f| f.min(date)));
            u.last = Some(u.last.map_or(date, |l| l.max(date)));
        }
    }

    fn report(self, file: &str, file_last: Option<NaiveDate>, findings: &mut Findings) {
        for (code, u) in self.codes {
            let live = matches!((u.last, file_last), (Some(l), Some(f)) if l >= f);
            let finding = match (u.first, u.last) {
                (Some(first), Some(last)) if live => RateFinding::new(
                    RateRule::RateCurrencyUnknown,
                    file,
                    format!(
                        "currency code {code} is not in the ISO 4217 table of iso_currency 0.7, \
                         yet it is published up to the file's last day {last} ({} values from \
                         {first}); its values are not read",
                        u.values
                    ),
                    "check the header for a misspelt code; if the code is new, update the iso_currency crate",
                ),
                (Some(first), Some(last)) => RateFinding::new(
                    RateRule::RateCurrencyHistoric,
                    file,
                    format!(
                        "currency code {code} is not in the ISO 4217 table of iso_currency 0.7 and was \
                         last published on {last} ({} values from {first}): a withdrawn currency; \
                         its values are not read",
                        u.values
                    ),
                    "nothing to do unless a rate of the withdrawn currency is needed: no entity can \
                     have it as functional currency",
                ),
                _ => RateFinding::new(
                    RateRule::RateCurrencyHistoric,
                    file,
                    format!(
                        "currency code {code} is not in the ISO 4217 table of iso_currency 0.7 and \
                         has no value in this file: a withdrawn currency; the column is not read"
                    ),
                    "nothing to do: the column is empty",
                ),
            };
            findings.push(finding.at_line(u.line).for_currency(&code));
        }
    }
}

/// Checks that dates run one way through a file (the euro system's file runs newest
/// first, most others oldest first): the direction is set by the first two dates, a date
/// already seen is a duplicate whose row is not used (the first row wins, so no value is
/// chosen silently between two), and a date against the direction is out of order, still
/// used, since its value is not in doubt, only the file's integrity.
#[derive(Default)]
struct DateOrder {
    seen: BTreeMap<NaiveDate, u64>,
    prev: Option<(NaiveDate, u64)>,
    direction: Option<Ordering>,
}

impl DateOrder {
    /// Whether the row of `date` on `line` is used.
    fn accept(&mut self, date: NaiveDate, line: u64, code: Option<&str>, file: &str, findings: &mut Findings) -> bool {
        let of = code.map(|c| format!(" for {c}")).unwrap_or_default();
        if let Some(first_line) = self.seen.get(&date) {
            let mut f = RateFinding::new(
                RateRule::RateDateDuplicated,
                file,
                format!("date {date}{of} on line {line} already appears on line {first_line}; the row on line {line} is not used"),
                "remove one of the two rows, keeping the bank's value",
            )
            .at_line(line);
            if let Some(c) = code {
                f = f.for_currency(c);
            }
            findings.push(f);
            return false;
        }
        if let Some((prev, prev_line)) = self.prev {
            let step = date.cmp(&prev);
            match self.direction {
                None => self.direction = Some(step),
                Some(direction) if direction != step => {
                    let runs = if direction == Ordering::Greater { "oldest first" } else { "newest first" };
                    let mut f = RateFinding::new(
                        RateRule::RateDateOutOfOrder,
                        file,
                        format!(
                            "date {date}{of} on line {line} comes after {prev} on line {prev_line} \
                             in a file that runs {runs}; the row is used"
                        ),
                        "restore the bank's order of rows and check that the file was not spliced by hand",
                    )
                    .at_line(line);
                    if let Some(c) = code {
                        f = f.for_currency(c);
                    }
                    findings.push(f);
                }
                Some(_) => {}
            }
        }
        self.seen.insert(date, line);
        self.prev = Some((date, line));
        true
    }
}

/// Reads the rows of a file through the `csv` crate rather than by splitting lines on
/// commas: quoted fields, separators inside quotes, `\r\n` line ends and ragged rows are
/// handled by a maintained parser, and every record knows its line number (the header is
/// line 1). Cells are trimmed of surrounding spaces (docs/formats.md, common rules).
struct Rows<'a> {
    records: csv::StringRecordsIntoIter<&'a [u8]>,
    file: &'a str,
    count: usize,
}

impl<'a> Rows<'a> {
    fn new(text: &'a str, file: &'a str) -> Self {
        let text = text.strip_prefix('\u{feff}').unwrap_or(text);
        let reader = csv::ReaderBuilder::new()
            .has_headers(false)
            .flexible(true)
            .trim(csv::Trim::All)
            .from_reader(text.as_bytes());
        Self { records: reader.into_records(), file, count: 0 }
    }

    /// The next record and its line; a record the tokeniser refuses is a finding and skipped.
    fn next(&mut self, findings: &mut Findings) -> Option<(u64, Vec<String>)> {
        loop {
            let record = self.records.next()?;
            self.count += 1;
            match record {
                Ok(r) => {
                    let line = r.position().map_or(0, |p| p.line());
                    return Some((line, r.iter().map(str::to_string).collect()));
                }
                Err(e) => {
                    let line = e.position().map(|p| p.line());
                    let mut f = RateFinding::new(
                        RateRule::RateRowRagged,
                        self.file,
                        format!("the row cannot be read as CSV ({e}); it is not used"),
                        "check the quoting of the row",
                    );
                    f.line = line;
                    findings.push(f);
                }
            }
        }
    }
}

/// A wide row must have a cell for every named column of the header; cells beyond the
/// last named column (trailing separators, in the header or the row) must be empty.
fn check_width(record: &[String], named: usize, file: &str, line: u64, findings: &mut Findings) {
    let len = record.len();
    if len < named {
        findings.push(
            RateFinding::new(
                RateRule::RateRowRagged,
                file,
                format!("line {line} has {len} cells where the header names {named} columns; the missing cells count as not published"),
                "complete the row, writing the bank's missing-value marker where nothing was published",
            )
            .at_line(line),
        );
        return;
    }
    let extra: Vec<&str> = record[named..].iter().map(String::as_str).filter(|c| !c.is_empty()).collect();
    if !extra.is_empty() {
        findings.push(
            RateFinding::new(
                RateRule::RateRowRagged,
                file,
                format!(
                    "line {line} has {len} cells where the header names {named} columns; the values beyond column {named} ({}) are not read",
                    extra.join(" ")
                ),
                "remove the surplus cells or name their columns in the header",
            )
            .at_line(line),
        );
    }
}

fn too_large(file: &str, line: u64) -> RateFinding {
    RateFinding::new(
        RateRule::RateFileTooLarge,
        file,
        format!("the file has more than {MAX_ROWS} rows; reading stopped at line {line}"),
        "give a daily rate series, or an extract of the years needed",
    )
    .at_line(line)
}

/// A date written `YYYY-MM-DD` exactly (docs/formats.md, common rules).
fn parse_date_strict(s: &str) -> Option<NaiveDate> {
    let b = s.as_bytes();
    let shape = b.len() == 10
        && b[4] == b'-'
        && b[7] == b'-'
        && b.iter().enumerate().all(|(i, c)| i == 4 || i == 7 || c.is_ascii_digit());
    if !shape {
        return None;
    }
    NaiveDate::from_ymd_opt(s[0..4].parse().ok()?, s[5..7].parse().ok()?, s[8..10].parse().ok()?)
}

fn read_date(cell: &str, file: &str, line: u64, findings: &mut Findings) -> Option<NaiveDate> {
    let date = parse_date_strict(cell);
    if date.is_none() {
        findings.push(
            RateFinding::new(
                RateRule::RateDateMalformed,
                file,
                format!("date {cell:?} on line {line} is not a date written YYYY-MM-DD; the row is not used"),
                "write the date as YYYY-MM-DD, e.g. 2014-10-31",
            )
            .at_line(line),
        );
    }
    date
}

/// Where a value sits, for its findings.
struct Cell<'a> {
    file: &'a str,
    line: u64,
    column: usize,
    code: &'a str,
}

/// Why a text is not a usable rate.
enum ValueProblem {
    Malformed,
    NotPositive(Decimal),
    OutOfRange(Decimal),
}

/// A plain decimal: optional `-`, digits, optionally `.` and digits; no exponent, no
/// thousands separator, no `+`, no underscore (which `Decimal::from_str` would accept).
fn parse_plain_decimal(s: &str) -> Option<Decimal> {
    let body = s.strip_prefix('-').unwrap_or(s);
    let (int, frac) = match body.split_once('.') {
        Some((i, f)) => (i, Some(f)),
        None => (body, None),
    };
    let digits = |t: &str| !t.is_empty() && t.bytes().all(|b| b.is_ascii_digit());
    if !digits(int) || frac.is_some_and(|f| !digits(f)) {
        return None;
    }
    Decimal::from_str_exact(s).ok()
}

fn check_rate(s: &str) -> Result<Decimal, ValueProblem> {
    let v = parse_plain_decimal(s).ok_or(ValueProblem::Malformed)?;
    if v <= Decimal::ZERO {
        return Err(ValueProblem::NotPositive(v));
    }
    if v >= RATE_LIMIT {
        return Err(ValueProblem::OutOfRange(v));
    }
    Ok(v)
}

fn read_rate(cell: &str, at: &Cell<'_>, findings: &mut Findings) -> Option<Decimal> {
    let Cell { file, line, column, code } = *at;
    let (rule, message, action) = match check_rate(cell) {
        Ok(v) => return Some(v),
        Err(ValueProblem::Malformed) => (
            RateRule::RateValueMalformed,
            format!("value {cell:?} for {code} on line {line}, column {column} is not a plain decimal; it is not used"),
            "write the rate as digits with a decimal point (1.2524), or the missing-value marker where nothing was published".to_string(),
        ),
        Err(ValueProblem::NotPositive(v)) => (
            RateRule::RateNotPositive,
            format!("rate {v} for {code} on line {line}, column {column} is not positive; it is not used"),
            "a rate is units of the currency per 1 base unit and is above 0: correct the value".to_string(),
        ),
        Err(ValueProblem::OutOfRange(v)) => (
            RateRule::RateOutOfRange,
            format!("rate {v} for {code} on line {line}, column {column} is not below the limit {RATE_LIMIT}; it is not used"),
            "check the value and the file's quote direction".to_string(),
        ),
    };
    findings.push(RateFinding::new(rule, file, message, &action).at_line(line).for_currency(code));
    None
}

/// A rate fixed by policy for one currency and month, read from the override file. It
/// wins over a derived rate and is output as given, in the quote direction given.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct RateOverride {
    pub period: Period,
    pub currency: Currency,
    pub closing: Decimal,
    pub average: Decimal,
    /// Optional column `average_ytd`; without it the output's `average_ytd` stays empty.
    pub average_ytd: Option<Decimal>,
    pub quote: Quote,
    /// Why the rate is fixed; required, and shown in the output's provenance.
    pub note: String,
    pub file: String,
    pub line: u64,
}

/// What [`parse_overrides`] gives back.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct OverrideParse {
    pub overrides: Vec<RateOverride>,
    pub findings: Vec<RateFinding>,
}

/// Columns of the override file; all required but `average_ytd`.
pub const OVERRIDE_COLUMNS: [&str; 7] = ["period", "currency", "closing", "average", "average_ytd", "quote", "note"];

/// Parses the override file: columns `period,currency,closing,average,quote,note` (and
/// optionally `average_ytd`), found by name in any order. Each rate is a positive decimal
/// with at most [`RATE_MAX_DECIMALS`] decimals, as `rates/monthly.csv` takes it.
pub fn parse_overrides(text: &str, file: &str) -> OverrideParse {
    let mut findings = Findings::new();
    let mut overrides: Vec<RateOverride> = Vec::new();
    let mut rows = Rows::new(text, file);
    let Some((header_line, header)) = rows.next(&mut findings) else {
        return OverrideParse { overrides, findings: findings.finish() };
    };
    let Some(at) = override_columns(header_line, &header, file, &mut findings) else {
        return OverrideParse { overrides, findings: findings.finish() };
    };
    let mut seen: BTreeMap<(Period, Currency), u64> = BTreeMap::new();
    while let Some((line, record)) = rows.next(&mut findings) {
        if rows.count > MAX_ROWS {
            findings.push(too_large(file, line));
            break;
        }
        let cell = |name: &str| at.get(name).and_then(|&i| record.get(i)).map(String::as_str).unwrap_or("");
        let before = findings.pushed();
        let period = cell("period").parse::<Period>().map_err(|e| {
            findings.push(
                RateFinding::new(
                    RateRule::RatePeriodMalformed,
                    file,
                    format!("line {line}: {e}"),
                    "write the month as YYYY-MM",
                )
                .at_line(line),
            )
        });
        let code = cell("currency");
        let currency = Currency::parse(code).ok_or_else(|| {
            findings.push(
                RateFinding::new(
                    RateRule::RateCurrencyUnknown,
                    file,
                    format!("line {line}: currency {code:?} is not in the ISO 4217 table of iso_currency 0.7"),
                    "write the currency as its ISO 4217 code, e.g. BGN",
                )
                .at_line(line)
                .for_currency(code),
            )
        });
        let quote = Quote::parse(cell("quote")).ok_or_else(|| {
            findings.push(
                RateFinding::new(
                    RateRule::RateQuoteInvalid,
                    file,
                    format!("line {line}: quote {:?} is neither units_per_presentation nor presentation_per_unit", cell("quote")),
                    "write units_per_presentation (units of the currency for 1 unit of the presentation currency) or presentation_per_unit",
                )
                .at_line(line)
                .for_currency(code),
            )
        });
        let mut value = |name: &str, required: bool| -> Option<Decimal> {
            let text = cell(name);
            if text.is_empty() && !required {
                return None;
            }
            override_rate(text, name, file, line, code, &mut findings)
        };
        let closing = value("closing", true);
        let average = value("average", true);
        let average_ytd = value("average_ytd", false);
        let note = cell("note").to_string();
        if note.is_empty() {
            findings.push(
                RateFinding::new(
                    RateRule::RateOverrideNoteMissing,
                    file,
                    format!("line {line}: the override of {code} has no note; it is not used"),
                    "say in the note why the rate is fixed, e.g. \"central bank peg, board minute 2026-02\"",
                )
                .at_line(line)
                .for_currency(code),
            );
        }
        if findings.pushed() > before {
            continue;
        }
        let (Ok(period), Ok(currency), Ok(quote), Some(closing), Some(average)) =
            (period, currency, quote, closing, average)
        else {
            continue;
        };
        if let Some(first) = seen.get(&(period, currency)) {
            findings.push(
                RateFinding::new(
                    RateRule::RateOverrideDuplicated,
                    file,
                    format!("line {line}: {currency} {period} is already overridden on line {first}; line {line} is not used"),
                    "keep one override per currency and month",
                )
                .at_line(line)
                .for_currency(currency.code())
                .for_period(period),
            );
            continue;
        }
        seen.insert((period, currency), line);
        overrides.push(RateOverride {
            period,
            currency,
            closing,
            average,
            average_ytd,
            quote,
            note,
            file: file.to_string(),
            line,
        });
    }
    OverrideParse { overrides, findings: findings.finish() }
}

/// The position of each column of the override file by name; `None` (with a finding)
/// when a required column is missing. Unknown columns are warnings.
fn override_columns(
    header_line: u64,
    header: &[String],
    file: &str,
    findings: &mut Findings,
) -> Option<BTreeMap<&'static str, usize>> {
    let find = |name: &str| header.iter().position(|h| h.eq_ignore_ascii_case(name));
    for (i, name) in header.iter().enumerate() {
        if !name.is_empty() && !OVERRIDE_COLUMNS.iter().any(|c| c.eq_ignore_ascii_case(name)) {
            findings.push(
                RateFinding::new(
                    RateRule::RateColumnUnknown,
                    file,
                    format!("column {} ({name}) is not one of {}; it is ignored", i + 1, OVERRIDE_COLUMNS.join(", ")),
                    "remove the column, or leave it: it is not read",
                )
                .at_line(header_line),
            );
        }
    }
    let mut at = BTreeMap::new();
    let mut missing = Vec::new();
    for name in OVERRIDE_COLUMNS {
        match find(name) {
            Some(i) => {
                at.insert(name, i);
            }
            None if name == "average_ytd" => {}
            None => missing.push(name),
        }
    }
    if !missing.is_empty() {
        findings.push(
            RateFinding::new(
                RateRule::RateColumnMissing,
                file,
                format!("the override file lacks the column(s) {}; no override is read", missing.join(", ")),
                "add the columns period, currency, closing, average, quote, note",
            )
            .at_line(header_line),
        );
        return None;
    }
    Some(at)
}

fn override_rate(
    text: &str,
    column: &str,
    file: &str,
    line: u64,
    code: &str,
    findings: &mut Findings,
) -> Option<Decimal> {
    let (rule, message, action) = match check_rate(text) {
        Ok(v) if v.scale() <= RATE_MAX_DECIMALS => return Some(v),
        Ok(v) => (
            RateRule::RateSurplusDecimals,
            format!(
                "line {line}: {column} {v} of {code} has {} decimals, above the {RATE_MAX_DECIMALS} that rates/monthly.csv takes",
                v.scale()
            ),
            format!("round the rate to at most {RATE_MAX_DECIMALS} decimals as the policy states"),
        ),
        Err(ValueProblem::Malformed) => (
            RateRule::RateValueMalformed,
            format!("line {line}: {column} {text:?} of {code} is not a plain decimal"),
            "write the rate as digits with a decimal point, e.g. 1.95583".to_string(),
        ),
        Err(ValueProblem::NotPositive(v)) => (
            RateRule::RateNotPositive,
            format!("line {line}: {column} {v} of {code} is not positive"),
            "a rate is above 0: correct the value".to_string(),
        ),
        Err(ValueProblem::OutOfRange(v)) => (
            RateRule::RateOutOfRange,
            format!("line {line}: {column} {v} of {code} is not below the limit {RATE_LIMIT}"),
            "check the value and its quote direction".to_string(),
        ),
    };
    findings.push(RateFinding::new(rule, file, message, &action).at_line(line).for_currency(code));
    None
}

#[cfg(test)]
mod tests {
    use super::*;

    fn d(s: &str) -> NaiveDate {
        parse_date_strict(s).unwrap()
    }

    fn usd() -> Currency {
        Currency::parse("USD").unwrap()
    }

    fn rules(findings: &[RateFinding]) -> Vec<RateRule> {
        findings.iter().map(|f| f.rule).collect()
    }

    #[test]
    fn wide_layout_with_trailing_separator_and_missing_markers() {
        let text = "Date,USD,JPY,\n2014-10-02,1.2652,138.11,\n2014-10-01,1.2618,N/A,\n";
        let p = parse_daily(text, "w.csv", &DailyOptions::default());
        assert!(p.findings.is_empty(), "{:?}", p.findings);
        assert_eq!(p.series.layout, DailyLayout::Wide);
        assert_eq!(p.series.dates.len(), 2);
        assert_eq!(p.series.rate(usd(), d("2014-10-01")), Some("1.2618".parse().unwrap()));
        let jpy = Currency::parse("JPY").unwrap();
        assert_eq!(p.series.rates[&jpy].len(), 1);
    }

    #[test]
    fn long_layout_columns_in_any_order() {
        let text = "currency,date,rate\nUSD,2014-10-01,1.2618\nUSD,2014-10-02,1.2652\nJPY,2014-10-01,\n";
        let p = parse_daily(text, "l.csv", &DailyOptions::default());
        assert!(p.findings.is_empty(), "{:?}", p.findings);
        assert_eq!(p.series.layout, DailyLayout::Long);
        assert_eq!(p.series.rate(usd(), d("2014-10-02")), Some("1.2652".parse().unwrap()));
        assert!(p.series.rates[&Currency::parse("JPY").unwrap()].is_empty());
    }

    #[test]
    fn long_layout_findings() {
        // Sorted by currency, then date: the order is checked per currency.
        let text = "date,currency,rate,comment\n\
                    2014-10-01,JPY,138.53,\n\
                    2014-10-02,JPY,138.11,\n\
                    2014-10-01,USD,1.2618,\n\
                    2014-10-01,USD,1.2700,\n\
                    2014-10-01,usd,1.2618,\n\
                    2014-10-02,usd,1.2652,\n\
                    2014-10-01,LTL,3.4528,\n\
                    2014-10-03,USD,1.26.0,\n";
        let p = parse_daily(text, "l.csv", &DailyOptions::default());
        let got: Vec<(RateRule, Option<u64>)> = p.findings.iter().map(|f| (f.rule, f.line)).collect();
        assert_eq!(
            got,
            [
                (RateRule::RateColumnUnknown, Some(1)),
                (RateRule::RateDateDuplicated, Some(5)),
                (RateRule::RateCurrencyUnknown, Some(6)),
                (RateRule::RateValueMalformed, Some(9)),
                (RateRule::RateCurrencyHistoric, Some(8)),
            ]
        );
        assert_eq!(p.series.rate(usd(), d("2014-10-01")), Some("1.2618".parse().unwrap()));
        assert_eq!(p.series.dates.len(), 3);
    }

    #[test]
    fn malformed_values_are_each_a_finding_with_line_and_column() {
        let text = "Date,USD,JPY\n2014-10-01,1.26x,138.1\n2014-10-02,1_262,1e2\n2014-10-03,-1.2,0\n";
        let p = parse_daily(text, "m.csv", &DailyOptions::default());
        assert_eq!(
            rules(&p.findings),
            [
                RateRule::RateValueMalformed,
                RateRule::RateValueMalformed,
                RateRule::RateValueMalformed,
                RateRule::RateNotPositive,
                RateRule::RateNotPositive
            ]
        );
        let first = &p.findings[0];
        assert_eq!((first.file.as_str(), first.line, first.currency.as_deref()), ("m.csv", Some(2), Some("USD")));
        assert!(first.message.contains("line 2, column 2"), "{}", first.message);
        assert!(p.findings[3].message.contains("-1.2"), "{}", p.findings[3].message);
        assert_eq!(p.series.rates[&Currency::parse("JPY").unwrap()].len(), 1);
    }

    #[test]
    fn duplicate_date_keeps_the_first_row() {
        let text = "Date,USD\n2014-10-01,1.2618\n2014-10-02,1.2652\n2014-10-02,1.3000\n";
        let p = parse_daily(text, "d.csv", &DailyOptions::default());
        assert_eq!(rules(&p.findings), [RateRule::RateDateDuplicated]);
        assert_eq!(p.findings[0].line, Some(4));
        assert!(p.findings[0].message.contains("already appears on line 3"));
        assert_eq!(p.series.rate(usd(), d("2014-10-02")), Some("1.2652".parse().unwrap()));
    }

    #[test]
    fn out_of_order_against_the_direction_of_the_file() {
        // Newest first, as the euro system publishes; 2014-10-03 breaks the direction.
        let text = "Date,USD\n2014-10-02,1.2652\n2014-10-01,1.2618\n2014-10-03,1.2700\n";
        let p = parse_daily(text, "o.csv", &DailyOptions::default());
        assert_eq!(rules(&p.findings), [RateRule::RateDateOutOfOrder]);
        assert!(p.findings[0].message.contains("newest first"), "{}", p.findings[0].message);
        assert_eq!(p.series.dates.len(), 3);
    }

    #[test]
    fn malformed_date_and_ragged_rows() {
        let text = "Date,USD,JPY,\n2014-10-1,1.2,138\n2014-10-02,1.2\n2014-10-03,1.2,138,,9\n2014-10-06,1.2,138\n2014-10-07,1.2,138,7\n";
        let p = parse_daily(text, "r.csv", &DailyOptions::default());
        assert_eq!(
            rules(&p.findings),
            [RateRule::RateDateMalformed, RateRule::RateRowRagged, RateRule::RateRowRagged, RateRule::RateRowRagged]
        );
        assert_eq!(p.findings[3].line, Some(6));
        assert_eq!(p.findings[2].line, Some(4));
        assert!(p.findings[2].message.contains("(9)"), "{}", p.findings[2].message);
    }

    #[test]
    fn unknown_codes_historic_or_not() {
        let text = "Date,USD,LTL,USX,Us Dollar\n2014-12-31,1.2141,3.4528,1.1,1\n2015-01-02,1.2043,N/A,1.1,1\n";
        let p = parse_daily(text, "u.csv", &DailyOptions::default());
        let mut got: Vec<(RateRule, Option<String>)> =
            p.findings.iter().map(|f| (f.rule, f.currency.clone())).collect();
        got.sort();
        assert_eq!(
            got,
            [
                (RateRule::RateCurrencyUnknown, Some("USX".into())),
                (RateRule::RateCurrencyUnknown, Some("Us Dollar".into())),
                (RateRule::RateCurrencyHistoric, Some("LTL".into())),
            ]
        );
        let ltl = p.findings.iter().find(|f| f.rule == RateRule::RateCurrencyHistoric).unwrap();
        assert!(ltl.message.contains("last published on 2014-12-31"), "{}", ltl.message);
    }

    #[test]
    fn quoted_fields_are_tokenised_by_the_csv_crate() {
        let text = "\u{feff}Date,\"USD\",JPY\r\n2014-10-01,\"1.2618\", 138.1 \r\n";
        let p = parse_daily(text, "q.csv", &DailyOptions::default());
        assert!(p.findings.is_empty(), "{:?}", p.findings);
        assert_eq!(p.series.rate(usd(), d("2014-10-01")), Some("1.2618".parse().unwrap()));
    }

    #[test]
    fn unrecognised_header() {
        let p = parse_daily("when,USD\n", "h.csv", &DailyOptions::default());
        assert_eq!(rules(&p.findings), [RateRule::RateHeaderInvalid]);
        let p = parse_daily("", "e.csv", &DailyOptions::default());
        assert_eq!(rules(&p.findings), [RateRule::RateHeaderInvalid]);
    }

    #[test]
    fn overrides_parse_and_check() {
        let text = "period,currency,closing,average,quote,note\n\
                    2026-01,BGN,1.95583,1.95583,units_per_presentation,fixed conversion rate\n\
                    2026-01,BGN,1.9,1.9,units_per_presentation,again\n\
                    2026-13,XXY,0.12345678901,-1,sideways,\n";
        let p = parse_overrides(text, "o.csv");
        assert_eq!(p.overrides.len(), 1);
        assert_eq!(p.overrides[0].closing, "1.95583".parse().unwrap());
        let mut got = rules(&p.findings);
        got.sort();
        assert_eq!(
            got,
            [
                RateRule::RateNotPositive,
                RateRule::RateSurplusDecimals,
                RateRule::RateCurrencyUnknown,
                RateRule::RatePeriodMalformed,
                RateRule::RateQuoteInvalid,
                RateRule::RateOverrideNoteMissing,
                RateRule::RateOverrideDuplicated,
            ]
        );
    }

    #[test]
    fn override_columns_missing() {
        let p = parse_overrides("period,currency,closing\n", "o.csv");
        assert_eq!(rules(&p.findings), [RateRule::RateColumnMissing]);
        assert!(p.findings[0].message.contains("average, quote, note"), "{}", p.findings[0].message);
    }
}

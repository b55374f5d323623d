//! Derivation of each month's closing and average rates from a central bank's daily
//! reference rates (IAS 21.39: assets and liabilities at the closing rate, income and
//! expenses at the rate of the transaction date, for which the period's average is the
//! usual approximation, IAS 21.40). The derived records are what `rates/monthly.csv`
//! holds; [`render_csv`] writes them in exactly its column layout, and the report module
//! writes that text to the file.
//!
//! Policies, each applied here and nowhere else:
//! - **Days.** Only days the bank published count: its business days. A day without a
//!   value (a holiday, a currency not yet or no longer published) is left out, never
//!   filled by interpolation or by carrying a rate forward.
//! - **Closing** is the rate of the last published day on or before the month's end,
//!   which must lie inside the month; a month without one is `RateNoPublishedDay`.
//! - **Average** is the arithmetic mean over the published days of the month;
//!   **average_ytd** is the mean over the published days from the first day of the fiscal
//!   year to the month's end (every day weighs the same, not every month).
//! - **Cross rates** (presentation currency P other than the bank's base B) come by
//!   triangulation through the base, day by day: units of C per 1 P = (C per B) / (P per
//!   B), and for the base itself 1 / (P per B). A day counts for C only when the bank
//!   published both C and P on it. The average of a cross rate is the mean of the daily
//!   cross rates, not the ratio of the two averages: it is the mean of the rates at which
//!   the month's transactions would have been translated each day, which is what IAS
//!   21.40 approximates; the ratio of averages is a different number (by Jensen's
//!   inequality the mean of ratios and the ratio of means differ whenever P moves).
//! - **Precision.** Everything is computed at the full precision of `rust_decimal`
//!   (28 significant digits) and rounded once, at the end, to [`RATE_SIGNIFICANT_DIGITS`]
//!   significant digits with ties to even (IEEE 754's default rounding, also the default
//!   of Python's `decimal`, which keeps an independent check simple), and never to more
//!   than [`RATE_MAX_DECIMALS`] decimals, the most that `rates/monthly.csv` takes.
//! - **Overrides.** A rate fixed by policy in the override file wins over a derived one
//!   and is output as given, in the quote direction given, its provenance reading
//!   `override: <note>`.
//!
//! Quotes are explicit: a derived record is always `units_per_presentation` (units of the
//! currency per 1 unit of the presentation currency), the direction central banks use.

use std::collections::{BTreeMap, BTreeSet};
use std::fmt;

use chrono::{Datelike, NaiveDate, Weekday};
use rust_decimal::{Decimal, RoundingStrategy};
use serde::Serialize;

use crate::load::daily::{DailySeries, RateOverride};
use crate::model::{Currency, Period};

/// Significant digits of every derived rate (docs: "rates carry up to 10 significant
/// decimals").
pub const RATE_SIGNIFICANT_DIGITS: u32 = 10;

/// Decimal places a rate may have in `rates/monthly.csv` (docs/formats.md, common rules).
/// A rate below 0.1 therefore keeps fewer than 10 significant digits.
pub const RATE_MAX_DECIMALS: u32 = 10;

/// Ties go to the even digit.
pub const RATE_ROUNDING: RoundingStrategy = RoundingStrategy::MidpointNearestEven;

/// Months one derivation may cover: 100 years. More is refused as an argument error.
pub const MAX_MONTHS: usize = 1_200;

/// Findings of one rule and file listed in full; beyond this, one closing finding counts
/// the rest, so that a file broken in every cell does not bury the user.
pub const FINDINGS_PER_RULE: usize = 50;

pub use crate::findings::Severity;
pub use crate::load::Quote;

/// The rule a finding breaks.
#[derive(Debug, Clone, Copy, PartialEq, Eq, PartialOrd, Ord, Hash, Serialize)]
pub enum RateRule {
    /// The header is neither layout, or a column is nameless or repeated.
    RateHeaderInvalid,
    /// A required column is missing (long layout, override file).
    RateColumnMissing,
    /// A column that is not read (warning).
    RateColumnUnknown,
    /// A row with more or fewer cells than the header, or that is not valid CSV.
    RateRowRagged,
    /// More than `daily::MAX_ROWS` rows.
    RateFileTooLarge,
    /// A date not written `YYYY-MM-DD`.
    RateDateMalformed,
    /// A date that appears twice (for one currency in the long layout).
    RateDateDuplicated,
    /// A date against the direction of the file.
    RateDateOutOfOrder,
    /// A value that is not a plain decimal.
    RateValueMalformed,
    /// A rate at or below zero.
    RateNotPositive,
    /// A rate beyond `daily::RATE_LIMIT`, or a computation beyond 28 digits.
    RateOutOfRange,
    /// An override with more than `RATE_MAX_DECIMALS` decimals.
    RateSurplusDecimals,
    /// A currency code that is malformed, or unknown yet still published.
    RateCurrencyUnknown,
    /// A well-formed code unknown to the ISO 4217 table, no longer published (warning).
    RateCurrencyHistoric,
    /// An override period not written `YYYY-MM`.
    RatePeriodMalformed,
    /// An override quote that is not one of the two directions.
    RateQuoteInvalid,
    /// An override without the note that justifies it.
    RateOverrideNoteMissing,
    /// Two overrides of one currency and month.
    RateOverrideDuplicated,
    /// An override for a month not requested, or for the presentation currency (warning).
    RateOverrideUnused,
    /// A daily column for the base currency itself, which is 1 by definition (warning).
    RateBaseQuoted,
    /// Two daily files give different rates for one currency and day.
    RateSourcesDisagree,
    /// The presentation currency is not the base and the bank does not publish it.
    RatePresentationNotPublished,
    /// The daily files do not reach the start or end of a requested month.
    RatePeriodNotCovered,
    /// A requested currency with no published day in a month.
    RateNoPublishedDay,
    /// A requested currency whose publication ended before the month.
    RateSeriesEnded,
    /// The daily files do not reach back to the fiscal year's start (warning).
    RateYearToDateNotCovered,
    /// A rate that rounds to zero at `RATE_MAX_DECIMALS` decimals.
    RateBelowResolution,
}

impl RateRule {
    pub fn severity(self) -> Severity {
        match self {
            RateRule::RateColumnUnknown
            | RateRule::RateCurrencyHistoric
            | RateRule::RateOverrideUnused
            | RateRule::RateBaseQuoted
            | RateRule::RateYearToDateNotCovered => Severity::Warning,
            _ => Severity::Blocking,
        }
    }

    pub fn as_str(self) -> &'static str {
        match self {
            RateRule::RateHeaderInvalid => "RateHeaderInvalid",
            RateRule::RateColumnMissing => "RateColumnMissing",
            RateRule::RateColumnUnknown => "RateColumnUnknown",
            RateRule::RateRowRagged => "RateRowRagged",
            RateRule::RateFileTooLarge => "RateFileTooLarge",
            RateRule::RateDateMalformed => "RateDateMalformed",
            RateRule::RateDateDuplicated => "RateDateDuplicated",
            RateRule::RateDateOutOfOrder => "RateDateOutOfOrder",
            RateRule::RateValueMalformed => "RateValueMalformed",
            RateRule::RateNotPositive => "RateNotPositive",
            RateRule::RateOutOfRange => "RateOutOfRange",
            RateRule::RateSurplusDecimals => "RateSurplusDecimals",
            RateRule::RateCurrencyUnknown => "RateCurrencyUnknown",
            RateRule::RateCurrencyHistoric => "RateCurrencyHistoric",
            RateRule::RatePeriodMalformed => "RatePeriodMalformed",
            RateRule::RateQuoteInvalid => "RateQuoteInvalid",
            RateRule::RateOverrideNoteMissing => "RateOverrideNoteMissing",
            RateRule::RateOverrideDuplicated => "RateOverrideDuplicated",
            RateRule::RateOverrideUnused => "RateOverrideUnused",
            RateRule::RateBaseQuoted => "RateBaseQuoted",
            RateRule::RateSourcesDisagree => "RateSourcesDisagree",
            RateRule::RatePresentationNotPublished => "RatePresentationNotPublished",
            RateRule::RatePeriodNotCovered => "RatePeriodNotCovered",
            RateRule::RateNoPublishedDay => "RateNoPublishedDay",
            RateRule::RateSeriesEnded => "RateSeriesEnded",
            RateRule::RateYearToDateNotCovered => "RateYearToDateNotCovered",
            RateRule::RateBelowResolution => "RateBelowResolution",
        }
    }
}

impl fmt::Display for RateRule {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        f.write_str(self.as_str())
    }
}

/// A problem in the user's rate data, named after the rule it breaks.
#[derive(Debug, Clone, PartialEq, Eq, Serialize)]
pub struct RateFinding {
    pub rule: RateRule,
    pub file: String,
    pub line: Option<u64>,
    pub currency: Option<String>,
    #[serde(serialize_with = "serialize_period_opt")]
    pub period: Option<Period>,
    /// Lower case, with the numbers.
    pub message: String,
    /// What to do about it.
    pub action: String,
}

impl RateFinding {
    pub fn new(rule: RateRule, file: &str, message: String, action: &str) -> Self {
        Self {
            rule,
            file: file.to_string(),
            line: None,
            currency: None,
            period: None,
            message,
            action: action.to_string(),
        }
    }

    pub fn at_line(mut self, line: u64) -> Self {
        self.line = Some(line);
        self
    }

    pub fn for_currency(mut self, code: &str) -> Self {
        self.currency = Some(code.to_string());
        self
    }

    pub fn for_period(mut self, period: Period) -> Self {
        self.period = Some(period);
        self
    }

    pub fn severity(&self) -> Severity {
        self.rule.severity()
    }
}

impl fmt::Display for RateFinding {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        let severity = match self.severity() {
            Severity::Blocking => "blocking",
            Severity::Warning => "warning",
            Severity::Unreadable => "unreadable",
        };
        write!(f, "{severity} {}: {}", self.rule, self.file)?;
        if let Some(line) = self.line {
            write!(f, ":{line}")?;
        }
        write!(f, ": {}; {}", self.message, self.action)
    }
}

fn serialize_period_opt<S: serde::Serializer>(p: &Option<Period>, s: S) -> Result<S::Ok, S::Error> {
    match p {
        Some(p) => s.serialize_str(&p.to_string()),
        None => s.serialize_none(),
    }
}

/// Collects findings, listing at most [`FINDINGS_PER_RULE`] per rule and file and
/// counting the rest into one closing finding.
pub(crate) struct Findings {
    listed: Vec<RateFinding>,
    counts: BTreeMap<(RateRule, String), usize>,
    pushed: usize,
}

impl Findings {
    pub(crate) fn new() -> Self {
        Self { listed: Vec::new(), counts: BTreeMap::new(), pushed: 0 }
    }

    pub(crate) fn push(&mut self, finding: RateFinding) {
        self.pushed += 1;
        let count = self.counts.entry((finding.rule, finding.file.clone())).or_default();
        *count += 1;
        if *count <= FINDINGS_PER_RULE {
            self.listed.push(finding);
        }
    }

    /// Findings pushed so far, listed or counted.
    pub(crate) fn pushed(&self) -> usize {
        self.pushed
    }

    pub(crate) fn finish(mut self) -> Vec<RateFinding> {
        for ((rule, file), count) in self.counts {
            if count > FINDINGS_PER_RULE {
                self.listed.push(RateFinding::new(
                    rule,
                    &file,
                    format!(
                        "{} more findings of this rule in the file are not listed ({count} in all)",
                        count - FINDINGS_PER_RULE
                    ),
                    "fix the ones listed and run again",
                ));
            }
        }
        self.listed
    }
}

/// Rounds a rate computed at full precision to the published precision: 10 significant
/// digits, ties to even, at most 10 decimals, trailing zeros removed.
pub fn round_rate(x: Decimal) -> Decimal {
    let by_digits =
        x.round_sf_with_strategy(RATE_SIGNIFICANT_DIGITS, RATE_ROUNDING).filter(|r| r.scale() <= RATE_MAX_DECIMALS);
    // Both roundings start from `x`, so the result is rounded exactly once.
    by_digits.unwrap_or_else(|| x.round_dp_with_strategy(RATE_MAX_DECIMALS, RATE_ROUNDING)).normalize()
}

/// One parsed daily file and the SHA-256 of its bytes, for the provenance.
#[derive(Debug, Clone, Copy)]
pub struct DailyInput<'a> {
    pub series: &'a DailySeries,
    /// Lower-case hex, as the loading module computed it.
    pub sha256: &'a str,
}

/// What to derive.
#[derive(Debug, Clone, Copy)]
pub struct RateRequest<'a> {
    /// The bank's own currency: the daily values are units per 1 unit of it.
    pub base: Currency,
    /// The group's presentation currency; the derived rates are units per 1 unit of it.
    pub presentation: Currency,
    /// Currencies to derive (the group's functional currencies); the presentation
    /// currency itself is skipped, its rate being 1.
    pub currencies: &'a [Currency],
    /// Months to derive, in any order; repeated months count once.
    pub months: &'a [Period],
    /// First month of the fiscal year, 1..=12, for `average_ytd`.
    pub fiscal_year_start: u32,
}

/// Misuse of [`derive_rates`] by its caller, as opposed to findings in the data.
#[derive(Debug, Clone, PartialEq, Eq, thiserror::Error)]
pub enum RatesError {
    #[error("fiscal year start {0} is not a month 1..12")]
    FiscalYearStartInvalid(u32),
    #[error("{count} months requested, above the limit of {limit}")]
    MonthsTooMany { count: usize, limit: usize },
}

/// A daily file named in a provenance.
#[derive(Debug, Clone, PartialEq, Eq, PartialOrd, Ord, Serialize)]
pub struct FileRef {
    pub file: String,
    pub sha256: String,
}

/// How a derived record was computed.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct Derivation {
    /// Published days of the month used.
    pub days: u32,
    pub first_day: NaiveDate,
    /// The closing day.
    pub last_day: NaiveDate,
    /// Published days from the fiscal year's start to the month's end, and the first.
    pub days_ytd: Option<u32>,
    pub first_day_ytd: Option<NaiveDate>,
    /// Daily files any of those days came from.
    pub files: Vec<FileRef>,
    /// The base, when the rate is a cross rate through it.
    pub via: Option<Currency>,
}

/// Where a record came from.
#[derive(Debug, Clone, PartialEq, Eq)]
pub enum RateOrigin {
    Derived(Derivation),
    Override { note: String, file: String, line: u64 },
}

/// One row of `rates/monthly.csv`.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct RateRecord {
    pub period: Period,
    pub currency: Currency,
    pub closing: Decimal,
    pub average: Decimal,
    pub average_ytd: Option<Decimal>,
    pub quote: Quote,
    pub origin: RateOrigin,
    /// For cross rates: the presentation currency (needed to word the provenance).
    pub presentation: Currency,
}

impl RateRecord {
    /// The provenance text of the `source` column: files with their hashes, days used
    /// and the closing day, or the override's note. No commas, so the cell needs no
    /// quoting unless an override note has one.
    pub fn source(&self) -> String {
        match &self.origin {
            RateOrigin::Override { note, file, line } => {
                format!("override: {note}; {file} line {line}")
            }
            RateOrigin::Derived(d) => {
                let files: Vec<String> = d.files.iter().map(|f| format!("{} sha256:{}", f.file, f.sha256)).collect();
                let mut s = format!(
                    "{}; days {} {}..{}; closing {}",
                    files.join(" + "),
                    d.days,
                    d.first_day,
                    d.last_day,
                    d.last_day
                );
                if let (Some(n), Some(first)) = (d.days_ytd, d.first_day_ytd) {
                    s.push_str(&format!("; ytd days {n} {first}..{}", d.last_day));
                }
                if let Some(base) = d.via {
                    let p = self.presentation;
                    if self.currency == base {
                        s.push_str(&format!("; cross via {base}: 1 / {p} per {base}"));
                    } else {
                        s.push_str(&format!("; cross via {base}: {} per {base} / {p} per {base}", self.currency));
                    }
                }
                s
            }
        }
    }
}

/// What [`derive_rates`] gives back.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct Derived {
    /// Sorted by period, then currency code.
    pub records: Vec<RateRecord>,
    /// Findings of the derivation; the parse findings are the parser's to return.
    pub findings: Vec<RateFinding>,
}

/// A day's rate of one currency in the presentation currency, with the files it used.
#[derive(Debug, Clone, Copy)]
struct Day {
    value: Decimal,
    files: (usize, Option<usize>),
}

/// The daily files merged: the first file that gives a currency's day wins; a later file
/// that disagrees is `RateSourcesDisagree`.
struct Merged {
    dates: BTreeSet<NaiveDate>,
    rates: BTreeMap<Currency, BTreeMap<NaiveDate, (Decimal, usize)>>,
}

fn merge_daily(inputs: &[DailyInput<'_>], base: Currency, findings: &mut Findings) -> Merged {
    let mut merged = Merged { dates: BTreeSet::new(), rates: BTreeMap::new() };
    for (i, input) in inputs.iter().enumerate() {
        let series = input.series;
        merged.dates.extend(series.dates.iter().copied());
        for (&currency, days) in &series.rates {
            if currency == base {
                findings.push(
                    RateFinding::new(
                        RateRule::RateBaseQuoted,
                        &series.file,
                        format!(
                            "the file has a column for the base currency {base} itself ({} values); \
                             it is not read: 1 {base} is 1 {base}",
                            days.len()
                        ),
                        "nothing to do; or check that the base currency given is the bank's own",
                    )
                    .for_currency(base.code()),
                );
                continue;
            }
            let into = merged.rates.entry(currency).or_default();
            for (&date, &value) in days {
                match into.get(&date) {
                    None => {
                        into.insert(date, (value, i));
                    }
                    Some(&(kept, from)) if kept != value => findings.push(
                        RateFinding::new(
                            RateRule::RateSourcesDisagree,
                            &series.file,
                            format!(
                                "{currency} on {date} is {value} here but {kept} in {}; the value of {} is used",
                                inputs[from].series.file, inputs[from].series.file
                            ),
                            "give one file per currency and day, or check which file is the bank's",
                        )
                        .for_currency(currency.code()),
                    ),
                    Some(_) => {}
                }
            }
        }
    }
    merged
}

/// The first weekday in `from..=to` other than 1 January: a day the bank may well have
/// published. Central banks do not publish on weekends, and 1 January is a holiday in
/// every calendar the author knows (common practice, not a sourced fact); any other
/// holiday counts as a possible publication day, so a file that stops just before one
/// is reported rather than trusted.
fn publication_weekday(from: NaiveDate, to: NaiveDate) -> Option<NaiveDate> {
    let weekend = |d: &NaiveDate| matches!(d.weekday(), Weekday::Sat | Weekday::Sun);
    let new_year = |d: &NaiveDate| d.month() == 1 && d.day() == 1;
    from.iter_days().take_while(|d| *d <= to).find(|d| !weekend(d) && !new_year(d))
}

/// Whether the union of the daily files covers `from..=to` at both ends and has a row in
/// every month of it; the reason when not.
fn uncovered(dates: &BTreeSet<NaiveDate>, from: NaiveDate, to: NaiveDate) -> Option<String> {
    let (Some(&first), Some(&last)) = (dates.first(), dates.last()) else {
        return Some("the daily files have no row at all".to_string());
    };
    if first > from
        && let Some(day) = publication_weekday(from, first.pred_opt()?)
    {
        return Some(format!("the daily files start on {first}, after {day}, a weekday from {from} on"));
    }
    if last < to
        && let Some(day) = publication_weekday(last.succ_opt()?, to)
    {
        return Some(format!("the daily files end on {last}, before {day}, a weekday up to {to}"));
    }
    for month in Period::of_date(from).through(&Period::of_date(to)) {
        if dates.range(month.first_day()..=month.last_day()).next().is_none() {
            return Some(format!("the daily files have no row in {month}"));
        }
    }
    None
}

fn day_files(day: &Day) -> impl Iterator<Item = usize> {
    std::iter::once(day.files.0).chain(day.files.1)
}

/// Mean of the values of `days` and their count; `None` past 28 digits.
fn mean<'a>(mut days: impl Iterator<Item = &'a Day>) -> Option<(Decimal, u32)> {
    let (sum, n) = days.try_fold((Decimal::ZERO, 0u32), |(s, n), d| Some((s.checked_add(d.value)?, n + 1)))?;
    Some((sum.checked_div(Decimal::from(n))?, n))
}

/// Everything the per-currency derivation reads.
struct Context<'a> {
    inputs: &'a [DailyInput<'a>],
    merged: &'a Merged,
    base: Currency,
    presentation: Currency,
    /// The presentation currency's daily rates against the base, when it is not the base.
    per_presentation: Option<&'a BTreeMap<NaiveDate, (Decimal, usize)>>,
    months: &'a BTreeSet<Period>,
    fixed: &'a BTreeMap<(Period, Currency), &'a RateOverride>,
    fiscal_year_start: u32,
    /// Why a month, or a month's fiscal year to date, is not covered by the daily files.
    coverage: BTreeMap<Period, Option<String>>,
    coverage_ytd: BTreeMap<Period, Option<String>>,
    /// The daily files' names, for findings that concern them all.
    files_named: String,
}

impl Context<'_> {
    /// Requested months of `c` that no override fixes.
    fn needed(&self, c: Currency) -> impl Iterator<Item = &Period> {
        self.months.iter().filter(move |p| !self.fixed.contains_key(&(**p, c)))
    }

    fn ytd_start(&self, p: &Period) -> NaiveDate {
        p.fiscal_year_start(self.fiscal_year_start).first_day()
    }

    /// Daily rates of `c` as units per 1 presentation unit, and the count of days whose
    /// cross rate does not fit 28 digits.
    fn daily_in_presentation(&self, c: Currency) -> (BTreeMap<NaiveDate, Day>, usize) {
        let own = self.merged.rates.get(&c);
        let Some(per_presentation) = self.per_presentation else {
            let days =
                own.into_iter().flatten().map(|(&d, &(value, f))| (d, Day { value, files: (f, None) })).collect();
            return (days, 0);
        };
        let mut days = BTreeMap::new();
        let mut failures = 0;
        for (&d, &(pv, pf)) in per_presentation {
            // (C per B) / (P per B); for the base itself 1 / (P per B).
            let (cv, cf) = if c == self.base {
                (Decimal::ONE, None)
            } else {
                match own.and_then(|o| o.get(&d)) {
                    Some(&(cv, cf)) => (cv, Some(cf)),
                    None => continue,
                }
            };
            match cv.checked_div(pv) {
                Some(value) => {
                    days.insert(d, Day { value, files: (pf, cf) });
                }
                None => failures += 1,
            }
        }
        (days, failures)
    }
}

/// Derives the monthly rates of `request` from the daily files and the overrides.
/// Findings of the parsers are not repeated here: the caller has them already.
pub fn derive_rates(
    inputs: &[DailyInput<'_>],
    overrides: &[RateOverride],
    request: &RateRequest<'_>,
) -> Result<Derived, RatesError> {
    if !(1..=12).contains(&request.fiscal_year_start) {
        return Err(RatesError::FiscalYearStartInvalid(request.fiscal_year_start));
    }
    let months: BTreeSet<Period> = request.months.iter().copied().collect();
    if months.len() > MAX_MONTHS {
        return Err(RatesError::MonthsTooMany { count: months.len(), limit: MAX_MONTHS });
    }
    let (base, presentation) = (request.base, request.presentation);
    let mut findings = Findings::new();
    let merged = merge_daily(inputs, base, &mut findings);
    let fixed = select_overrides(overrides, &months, presentation, &mut findings);
    let mut currencies: Vec<Currency> = request.currencies.iter().copied().filter(|c| *c != presentation).collect();
    currencies.sort_by_key(|c| c.code());
    currencies.dedup();

    let empty = BTreeMap::new();
    let per_presentation = (presentation != base).then(|| merged.rates.get(&presentation).unwrap_or(&empty));
    let ytd_start = |p: &Period| p.fiscal_year_start(request.fiscal_year_start).first_day();
    let ctx = Context {
        inputs,
        merged: &merged,
        base,
        presentation,
        per_presentation,
        months: &months,
        fixed: &fixed,
        fiscal_year_start: request.fiscal_year_start,
        coverage: months.iter().map(|p| (*p, uncovered(&merged.dates, p.first_day(), p.last_day()))).collect(),
        coverage_ytd: months.iter().map(|p| (*p, uncovered(&merged.dates, ytd_start(p), p.last_day()))).collect(),
        files_named: inputs.iter().map(|i| i.series.file.as_str()).collect::<Vec<_>>().join(" + "),
    };
    let wanted: Vec<Currency> = currencies.iter().copied().filter(|&c| ctx.needed(c).next().is_some()).collect();
    report_coverage(&ctx, &wanted, &mut findings);

    let mut records: Vec<RateRecord> = Vec::new();
    if per_presentation.is_some_and(|p| p.is_empty()) {
        if !wanted.is_empty() {
            findings.push(RateFinding::new(
                RateRule::RatePresentationNotPublished,
                &ctx.files_named,
                format!(
                    "the presentation currency {presentation} is not the base {base} and the daily \
                     files publish no rate of it, so no cross rate can be formed"
                ),
                "give a daily file that publishes the presentation currency, or the base the file is quoted in",
            ));
        }
    } else {
        let mut cross_failures = 0;
        for &c in &wanted {
            cross_failures += derive_currency(&ctx, c, &mut records, &mut findings);
        }
        if cross_failures > 0 {
            findings.push(RateFinding::new(
                RateRule::RateOutOfRange,
                &ctx.files_named,
                format!("{cross_failures} daily cross rates exceed 28 digits and are not used"),
                "check the daily values and the quote direction of the file",
            ));
        }
    }

    for ((p, c), o) in &fixed {
        assert!(
            !records.iter().any(|r| r.period == *p && r.currency == *c),
            "{c} {p} was derived although the override on line {} fixes it",
            o.line
        );
        records.push(RateRecord {
            period: *p,
            currency: *c,
            closing: o.closing,
            average: o.average,
            average_ytd: o.average_ytd,
            quote: o.quote,
            origin: RateOrigin::Override { note: o.note.clone(), file: o.file.clone(), line: o.line },
            presentation,
        });
    }
    records.sort_by(|a, b| (a.period, a.currency.code()).cmp(&(b.period, b.currency.code())));
    Ok(Derived { records, findings: findings.finish() })
}

/// The overrides that apply, by month and currency; the others are `RateOverrideUnused`.
fn select_overrides<'a>(
    overrides: &'a [RateOverride],
    months: &BTreeSet<Period>,
    presentation: Currency,
    findings: &mut Findings,
) -> BTreeMap<(Period, Currency), &'a RateOverride> {
    let mut fixed = BTreeMap::new();
    for o in overrides {
        let unused = if o.currency == presentation {
            Some(format!("{} is the presentation currency, whose rate is 1", o.currency))
        } else if !months.contains(&o.period) {
            Some(format!("{} is not among the requested months", o.period))
        } else {
            None
        };
        match unused {
            Some(why) => findings.push(
                RateFinding::new(
                    RateRule::RateOverrideUnused,
                    &o.file,
                    format!("the override of {} for {} is not used: {why}", o.currency, o.period),
                    "remove the row, or request its month",
                )
                .at_line(o.line)
                .for_currency(o.currency.code())
                .for_period(o.period),
            ),
            None => {
                fixed.insert((o.period, o.currency), o);
            }
        }
    }
    fixed
}

/// One finding per month the daily files do not cover (when some currency needs it),
/// and per month whose fiscal year to date they do not cover.
fn report_coverage(ctx: &Context<'_>, wanted: &[Currency], findings: &mut Findings) {
    for (p, why) in &ctx.coverage {
        let needed = wanted.iter().any(|&c| !ctx.fixed.contains_key(&(*p, c)));
        if let (Some(why), true) = (why, needed) {
            findings.push(
                RateFinding::new(
                    RateRule::RatePeriodNotCovered,
                    &ctx.files_named,
                    format!("{why}, so no closing or average rate of {p} is derived"),
                    "give a daily file that covers the whole month, or wait for the bank to publish it",
                )
                .for_period(*p),
            );
        }
    }
    for (p, why) in &ctx.coverage_ytd {
        if let (Some(why), None, false) = (why, &ctx.coverage[p], wanted.is_empty()) {
            findings.push(
                RateFinding::new(
                    RateRule::RateYearToDateNotCovered,
                    &ctx.files_named,
                    format!("{why}, so average_ytd of {p} (fiscal year from {}) is left empty", ctx.ytd_start(p)),
                    "give a daily file from the fiscal year's start if the year_to_date income policy is used",
                )
                .for_period(*p),
            );
        }
    }
}

/// Derives every needed month of `c`; returns the count of unusable cross days.
fn derive_currency(ctx: &Context<'_>, c: Currency, records: &mut Vec<RateRecord>, findings: &mut Findings) -> usize {
    let (days, failures) = ctx.daily_in_presentation(c);
    let presentation = ctx.presentation;
    // How the messages name what must be published: C alone, or C with P.
    let (pair, subject) = match ctx.per_presentation {
        Some(_) if c != ctx.base => (format!("{c} and {presentation}"), format!("{c} (with {presentation})")),
        Some(_) => (presentation.to_string(), presentation.to_string()),
        None => (c.to_string(), c.to_string()),
    };
    let (Some((&first_ever, _)), Some((&last_ever, last_published))) = (days.first_key_value(), days.last_key_value())
    else {
        let list: Vec<String> = ctx.needed(c).map(|p| p.to_string()).collect();
        findings.push(
            RateFinding::new(
                RateRule::RateNoPublishedDay,
                &ctx.files_named,
                format!(
                    "no day of the daily files has {pair} published, so {c} has no rate for {} \
                     requested month(s) ({})",
                    list.len(),
                    list.join(" ")
                ),
                "give a daily file that publishes the currency, or put its rates in the override file",
            )
            .for_currency(c.code()),
        );
        return failures;
    };
    let mut ended: Vec<Period> = Vec::new();
    for p in ctx.needed(c) {
        if ctx.coverage[p].is_some() {
            continue; // RatePeriodNotCovered says it once for the month.
        }
        if days.range(p.first_day()..=p.last_day()).next().is_some() {
            if let Some(record) = derive_month(ctx, c, *p, &days, findings) {
                records.push(record);
            }
        } else if last_ever < p.first_day() {
            ended.push(*p);
        } else {
            findings.push(
                RateFinding::new(
                    RateRule::RateNoPublishedDay,
                    &ctx.files_named,
                    format!(
                        "{subject} has no published day in {p}; it is published from {first_ever} \
                         to {last_ever}"
                    ),
                    "give a daily file that has the month, or put the rate in the override file",
                )
                .for_currency(c.code())
                .for_period(*p),
            );
        }
    }
    if let (Some(first), Some(last)) = (ended.first(), ended.last()) {
        let file_index = last_published.files.1.unwrap_or(last_published.files.0);
        let span = if first == last { first.to_string() } else { format!("{first}..{last}") };
        findings.push(
            RateFinding::new(
                RateRule::RateSeriesEnded,
                &ctx.inputs[file_index].series.file,
                format!(
                    "{subject} was last published on {last_ever}; the daily files go on to {}, \
                     so {c} has no rate for {} requested month(s) {span}",
                    ctx.merged.dates.last().copied().unwrap_or(last_ever),
                    ended.len()
                ),
                "if the currency was replaced (e.g. it joined the euro), the entity's functional \
                 currency changed on that date (IAS 21.35); otherwise put the rate in the override file",
            )
            .for_currency(c.code())
            .for_period(*first),
        );
    }
    failures
}

/// Closing, average and year-to-date average of `c` in month `p`, which has at least
/// one published day in `days`.
fn derive_month(
    ctx: &Context<'_>,
    c: Currency,
    p: Period,
    days: &BTreeMap<NaiveDate, Day>,
    findings: &mut Findings,
) -> Option<RateRecord> {
    let month = days.range(p.first_day()..=p.last_day());
    let ytd = ctx.coverage_ytd[&p].is_none().then(|| days.range(ctx.ytd_start(&p)..=p.last_day()));
    let (Some((&first_day, _)), Some((&last_day, closing_day))) = (month.clone().next(), month.clone().next_back())
    else {
        unreachable!("derive_month is called for a month with a published day")
    };
    let average = mean(month.clone().map(|(_, d)| d));
    // Outer `None`: no year-to-date average is due; inner `None`: it overflowed.
    let average_ytd = ytd.clone().map_or(Some(None), |r| mean(r.map(|(_, d)| d)).map(Some));
    let (Some((average, n)), Some(average_ytd)) = (average, average_ytd) else {
        findings.push(
            RateFinding::new(
                RateRule::RateOutOfRange,
                &ctx.files_named,
                format!("the sum of the daily rates of {c} in {p} exceeds 28 digits"),
                "check the daily values and the quote direction of the file",
            )
            .for_currency(c.code())
            .for_period(p),
        );
        return None;
    };
    let closing = round_rate(closing_day.value);
    let average = round_rate(average);
    let average_ytd_rounded = average_ytd.map(|(m, _)| round_rate(m));
    if closing.is_zero() || average.is_zero() || average_ytd_rounded.is_some_and(|a| a.is_zero()) {
        findings.push(
            RateFinding::new(
                RateRule::RateBelowResolution,
                &ctx.files_named,
                format!(
                    "{c} per 1 {} in {p} is {} on {last_day}, which rounds to 0 at {RATE_MAX_DECIMALS} decimals",
                    ctx.presentation, closing_day.value
                ),
                "give the rate in the override file as presentation_per_unit",
            )
            .for_currency(c.code())
            .for_period(p),
        );
        return None;
    }
    let mut used: BTreeSet<usize> = month.flat_map(|(_, d)| day_files(d)).collect();
    if let Some(r) = ytd.clone() {
        used.extend(r.flat_map(|(_, d)| day_files(d)));
    }
    assert!(
        Period::of_date(first_day) == p && Period::of_date(last_day) == p && n > 0,
        "derived {c} {p} from {n} days {first_day}..{last_day}, outside its month"
    );
    let derivation = Derivation {
        days: n,
        first_day,
        last_day,
        days_ytd: average_ytd.map(|(_, n)| n),
        first_day_ytd: ytd.and_then(|mut r| r.next()).map(|(d, _)| *d),
        files: used
            .into_iter()
            .map(|i| FileRef { file: ctx.inputs[i].series.file.clone(), sha256: ctx.inputs[i].sha256.to_string() })
            .collect(),
        via: ctx.per_presentation.map(|_| ctx.base),
    };
    Some(RateRecord {
        period: p,
        currency: c,
        closing,
        average,
        average_ytd: average_ytd_rounded,
        quote: Quote::UnitsPerPresentation,
        origin: RateOrigin::Derived(derivation),
        presentation: ctx.presentation,
    })
}

/// One row of `rates/monthly.csv` as text, in its column order; also what a JSON
/// report serialises.
#[derive(Debug, Clone, PartialEq, Eq, Serialize)]
pub struct MonthlyRateRow {
    pub period: String,
    pub currency: String,
    pub closing: String,
    pub average: String,
    pub average_ytd: String,
    pub quote: String,
    pub source: String,
}

impl From<&RateRecord> for MonthlyRateRow {
    fn from(r: &RateRecord) -> Self {
        Self {
            period: r.period.to_string(),
            currency: r.currency.code().to_string(),
            closing: r.closing.normalize().to_string(),
            average: r.average.normalize().to_string(),
            average_ytd: r.average_ytd.map(|a| a.normalize().to_string()).unwrap_or_default(),
            quote: r.quote.as_str().to_string(),
            source: r.source(),
        }
    }
}

/// Header of `rates/monthly.csv` as written.
pub const MONTHLY_HEADER: &str = "period,currency,closing,average,average_ytd,quote,source";

/// The records as the text of `rates/monthly.csv`: the header, then one line per record,
/// `\n` line ends, cells quoted only when they must be.
pub fn render_csv(records: &[RateRecord]) -> String {
    // The header is written from MONTHLY_HEADER rather than from the field names, so
    // that it is exactly the documented one.
    let mut writer =
        csv::WriterBuilder::new().has_headers(false).terminator(csv::Terminator::Any(b'\n')).from_writer(Vec::new());
    for r in records {
        // Writing to memory cannot fail; a failure here is a bug, not a finding.
        writer.serialize(MonthlyRateRow::from(r)).expect("csv writes to memory");
    }
    let bytes = writer.into_inner().expect("csv flushes to memory");
    let body = String::from_utf8(bytes).expect("csv writes the UTF-8 it is given");
    format!("{MONTHLY_HEADER}\n{body}")
}

impl RateFinding {
    /// The finding as a finding of the run.
    pub fn into_finding(self) -> crate::findings::Finding {
        let mut f = crate::findings::Finding::new(crate::findings::Rule::Rate(self.rule), self.message, self.action)
            .in_file(self.file);
        if let Some(l) = self.line {
            f = f.line(l);
        }
        if let Some(p) = self.period {
            f = f.period(p);
        }
        f
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::load::daily::{DailyOptions, parse_daily};

    fn c(code: &str) -> Currency {
        Currency::parse(code).unwrap()
    }

    fn p(s: &str) -> Period {
        s.parse().unwrap()
    }

    fn dec(s: &str) -> Decimal {
        s.parse().unwrap()
    }

    #[test]
    fn rounding_is_ten_significant_digits_half_even_at_most_ten_decimals() {
        // Ties go to the even digit; anything past the tie goes up.
        assert_eq!(round_rate(dec("1.2345678905")), dec("1.234567890"));
        assert_eq!(round_rate(dec("1.2345678915")), dec("1.234567892"));
        assert_eq!(round_rate(dec("1.23456789051")), dec("1.234567891"));
        assert_eq!(round_rate(dec("1.234567890499")), dec("1.23456789"));
        assert_eq!(round_rate(dec("157.250268528464017")).to_string(), "157.2502685");
        assert_eq!(round_rate(dec("0.8338")).to_string(), "0.8338");
        // Below 0.1 the 10-decimal limit of rates/monthly.csv binds first.
        assert_eq!(round_rate(dec("0.00636942675159235")).to_string(), "0.0063694268");
        assert_eq!(round_rate(dec("9.99999999996")).to_string(), "10");
        assert_eq!(round_rate(dec("20275.1700000")).to_string(), "20275.17");
        assert!(round_rate(dec("0.00000000004")).is_zero());
    }

    #[test]
    fn coverage_ignores_weekends_and_new_year() {
        let dates: BTreeSet<NaiveDate> =
            ["2015-01-02", "2015-01-30"].iter().map(|s| NaiveDate::parse_from_str(s, "%Y-%m-%d").unwrap()).collect();
        let jan = p("2015-01");
        // 1 January is a Thursday, 31 January a Saturday.
        assert_eq!(uncovered(&dates, jan.first_day(), jan.last_day()), None);
        let feb = p("2015-02");
        assert!(uncovered(&dates, feb.first_day(), feb.last_day()).unwrap().contains("end on 2015-01-30"));
    }

    #[test]
    fn derivation_direct_cross_and_override() {
        let text = "Date,USD,JPY,BGN\n\
                    2015-01-30,1.1305,133.17,1.9558\n\
                    2015-01-02,1.2043,145.23,1.9558\n\
                    2014-12-31,1.2141,145.23,1.9558\n";
        let parsed = parse_daily(text, "t.csv", &DailyOptions::default());
        assert!(parsed.findings.is_empty(), "{:?}", parsed.findings);
        let months = [p("2015-01")];
        let currencies = [c("USD"), c("JPY"), c("EUR"), c("BGN")];
        let inputs = [DailyInput { series: &parsed.series, sha256: "abc" }];
        // Direct, EUR presentation.
        let request = RateRequest {
            base: c("EUR"),
            presentation: c("EUR"),
            currencies: &currencies,
            months: &months,
            fiscal_year_start: 1,
        };
        let got = derive_rates(&inputs, &[], &request).unwrap();
        assert!(got.findings.is_empty(), "{:?}", got.findings);
        let usd = &got.records.iter().find(|r| r.currency == c("USD")).unwrap();
        assert_eq!(usd.closing, dec("1.1305"));
        assert_eq!(usd.average, dec("1.1674")); // (1.2043 + 1.1305) / 2
        assert_eq!(usd.average_ytd, Some(dec("1.1674")));
        assert_eq!(
            usd.source(),
            "t.csv sha256:abc; days 2 2015-01-02..2015-01-30; closing 2015-01-30; ytd days 2 2015-01-02..2015-01-30"
        );
        // Cross, USD presentation: JPY per USD day by day, then the mean.
        let request = RateRequest { presentation: c("USD"), ..request };
        let got = derive_rates(&inputs, &[], &request).unwrap();
        let jpy = got.records.iter().find(|r| r.currency == c("JPY")).unwrap();
        assert_eq!(jpy.closing, round_rate(dec("133.17") / dec("1.1305")));
        let mean_of_cross = (dec("145.23") / dec("1.2043") + dec("133.17") / dec("1.1305")) / dec("2");
        assert_eq!(jpy.average, round_rate(mean_of_cross));
        // Not the ratio of the averages.
        assert_ne!(jpy.average, round_rate(((dec("145.23") + dec("133.17")) / dec("2")) / dec("1.1674")));
        let eur = got.records.iter().find(|r| r.currency == c("EUR")).unwrap();
        assert_eq!(eur.closing, round_rate(Decimal::ONE / dec("1.1305")));
        assert!(eur.source().ends_with("cross via EUR: 1 / USD per EUR"), "{}", eur.source());
        // An override wins and says so.
        let o = RateOverride {
            period: p("2015-01"),
            currency: c("BGN"),
            closing: dec("1.73"),
            average: dec("1.70"),
            average_ytd: None,
            quote: Quote::UnitsPerPresentation,
            note: "peg by board decision".into(),
            file: "rates/overrides.csv".into(),
            line: 2,
        };
        let got = derive_rates(&inputs, &[o], &request).unwrap();
        let bgn = got.records.iter().find(|r| r.currency == c("BGN")).unwrap();
        assert_eq!((bgn.closing, bgn.average), (dec("1.73"), dec("1.70")));
        assert_eq!(bgn.source(), "override: peg by board decision; rates/overrides.csv line 2");
        assert_eq!(got.records.iter().filter(|r| r.currency == c("BGN")).count(), 1);
    }

    #[test]
    fn csv_layout_is_monthly_csv() {
        let rec = RateRecord {
            period: p("2026-01"),
            currency: c("USD"),
            closing: dec("1.0412"),
            average: dec("1.03890"),
            average_ytd: None,
            quote: Quote::UnitsPerPresentation,
            origin: RateOrigin::Override { note: "demo, by hand".into(), file: "o.csv".into(), line: 2 },
            presentation: c("EUR"),
        };
        assert_eq!(
            render_csv(&[rec]),
            "period,currency,closing,average,average_ytd,quote,source\n\
             2026-01,USD,1.0412,1.0389,,units_per_presentation,\"override: demo, by hand; o.csv line 2\"\n"
        );
    }

    #[test]
    fn argument_errors() {
        let request =
            RateRequest { base: c("EUR"), presentation: c("EUR"), currencies: &[], months: &[], fiscal_year_start: 13 };
        assert_eq!(derive_rates(&[], &[], &request), Err(RatesError::FiscalYearStartInvalid(13)));
    }
}

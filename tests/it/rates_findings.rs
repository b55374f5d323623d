//! The derivation's findings, each from a small inline daily file. Dates are real
//! weekdays; the values are made up.

use tessera::load::daily::{DailyOptions, DailySeries, parse_daily, parse_overrides};
use tessera::model::{Currency, Period};
use tessera::rates::{DailyInput, Derived, RateRequest, RateRule, RatesError, Severity, derive_rates, render_csv};

fn c(code: &str) -> Currency {
    Currency::parse(code).unwrap()
}

fn p(s: &str) -> Period {
    s.parse().unwrap()
}

fn series(text: &str, file: &str) -> DailySeries {
    let parsed = parse_daily(text, file, &DailyOptions::default());
    assert!(parsed.findings.is_empty(), "{:?}", parsed.findings);
    parsed.series
}

fn derive(files: &[&DailySeries], presentation: &str, codes: &[&str], months: &[&str]) -> Derived {
    let inputs: Vec<DailyInput<'_>> = files.iter().map(|s| DailyInput { series: s, sha256: "00" }).collect();
    let currencies: Vec<Currency> = codes.iter().map(|code| c(code)).collect();
    let months: Vec<Period> = months.iter().map(|m| p(m)).collect();
    let request = RateRequest {
        base: c("EUR"),
        presentation: c(presentation),
        currencies: &currencies,
        months: &months,
        fiscal_year_start: 1,
    };
    derive_rates(&inputs, &[], &request).unwrap()
}

fn rules(d: &Derived) -> Vec<(RateRule, Option<&str>, Option<Period>)> {
    d.findings.iter().map(|f| (f.rule, f.currency.as_deref(), f.period)).collect()
}

/// January and February 2026, whole months at both ends (2 January is the first weekday
/// after New Year's Day, 27 February the last weekday of February).
const JAN_FEB: &str = "Date,USD,BGN,HRK\n\
    2026-01-02,1.17,1.9558,N/A\n\
    2026-01-30,1.18,N/A,N/A\n\
    2026-02-02,1.19,N/A,7.5\n\
    2026-02-27,1.20,N/A,N/A\n";

#[test]
fn series_ended_names_the_last_date_once_per_currency() {
    let s = series(JAN_FEB, "a.csv");
    let d = derive(&[&s], "EUR", &["USD", "BGN"], &["2026-01", "2026-02"]);
    assert_eq!(rules(&d), [(RateRule::RateSeriesEnded, Some("BGN"), Some(p("2026-02")))]);
    assert!(d.findings[0].message.contains("last published on 2026-01-02; the daily files go on to 2026-02-27"));
    assert_eq!(d.findings[0].severity(), Severity::Blocking);
    assert_eq!(d.records.len(), 3);
}

#[test]
fn no_published_day_in_a_month_or_ever() {
    let s = series(JAN_FEB, "a.csv");
    let d = derive(&[&s], "EUR", &["HRK", "GBP"], &["2026-01", "2026-02"]);
    assert_eq!(
        rules(&d),
        [
            (RateRule::RateNoPublishedDay, Some("GBP"), None),
            (RateRule::RateNoPublishedDay, Some("HRK"), Some(p("2026-01"))),
        ]
    );
    assert!(d.findings[0].message.contains("2 requested month(s) (2026-01 2026-02)"), "{}", d.findings[0].message);
    assert!(d.findings[1].message.contains("published from 2026-02-02 to 2026-02-02"), "{}", d.findings[1].message);
}

#[test]
fn a_file_that_ends_before_the_month_does_is_not_trusted() {
    let s = series(JAN_FEB, "a.csv");
    let d = derive(&[&s], "EUR", &["USD"], &["2026-02", "2026-03"]);
    assert_eq!(rules(&d)[0], (RateRule::RatePeriodNotCovered, None, Some(p("2026-03"))));
    assert!(d.findings[0].message.contains("end on 2026-02-27, before 2026-03-02"), "{}", d.findings[0].message);
    assert_eq!(d.records.len(), 1);
    // A file that stops on 2026-01-30 leaves February uncovered, and a fiscal year from
    // January is not covered by a file that starts in February.
    let late = series("Date,USD\n2026-02-02,1.19\n2026-02-27,1.20\n", "b.csv");
    let d = derive(&[&late], "EUR", &["USD"], &["2026-02"]);
    assert_eq!(rules(&d), [(RateRule::RateYearToDateNotCovered, None, Some(p("2026-02")))]);
    assert_eq!(d.findings[0].severity(), Severity::Warning);
    assert_eq!(d.records[0].average_ytd, None);
}

#[test]
fn cross_rates_need_the_presentation_currency() {
    let s = series(JAN_FEB, "a.csv");
    let d = derive(&[&s], "GBP", &["USD"], &["2026-01"]);
    assert_eq!(rules(&d), [(RateRule::RatePresentationNotPublished, None, None)]);
    assert!(d.records.is_empty());
}

#[test]
fn two_files_that_disagree() {
    let a = series("Date,USD\n2026-01-02,1.17\n2026-01-30,1.18\n", "a.csv");
    let b = series("Date,USD,JPY\n2026-01-30,1.19,180\n2026-01-02,1.17,181\n", "b.csv");
    let d = derive(&[&a, &b], "EUR", &["USD", "JPY"], &["2026-01"]);
    assert_eq!(rules(&d), [(RateRule::RateSourcesDisagree, Some("USD"), None)]);
    assert!(
        d.findings[0].message.contains("USD on 2026-01-30 is 1.19 here but 1.18 in a.csv"),
        "{}",
        d.findings[0].message
    );
    assert_eq!(d.findings[0].file, "b.csv");
    let usd = d.records.iter().find(|r| r.currency == c("USD")).unwrap();
    assert_eq!(usd.closing.to_string(), "1.18");
    let jpy = d.records.iter().find(|r| r.currency == c("JPY")).unwrap();
    assert!(jpy.source().starts_with("b.csv sha256:00; days 2"), "{}", jpy.source());
}

#[test]
fn overrides_win_silence_missing_rates_and_are_marked() {
    let s = series(JAN_FEB, "a.csv");
    let o = parse_overrides(
        "period,currency,closing,average,quote,note\n\
         2026-02,BGN,1.95583,1.95583,units_per_presentation,fixed conversion rate of the lev\n\
         2026-05,BGN,1.95583,1.95583,units_per_presentation,not requested\n",
        "rates/overrides.csv",
    );
    assert!(o.findings.is_empty(), "{:?}", o.findings);
    let currencies = [c("USD"), c("BGN")];
    let months = [p("2026-01"), p("2026-02")];
    let request = RateRequest {
        base: c("EUR"),
        presentation: c("EUR"),
        currencies: &currencies,
        months: &months,
        fiscal_year_start: 1,
    };
    let d = derive_rates(&[DailyInput { series: &s, sha256: "00" }], &o.overrides, &request).unwrap();
    assert_eq!(rules(&d), [(RateRule::RateOverrideUnused, Some("BGN"), Some(p("2026-05")))]);
    let text = render_csv(&d.records);
    assert!(
        text.contains("2026-02,BGN,1.95583,1.95583,,units_per_presentation,override: fixed conversion rate of the lev; rates/overrides.csv line 2\n"),
        "{text}"
    );
    assert_eq!(text.lines().count(), 1 + 4);
}

#[test]
fn findings_serialise_for_a_json_report() {
    let s = series(JAN_FEB, "a.csv");
    let d = derive(&[&s], "EUR", &["BGN"], &["2026-02"]);
    let json = serde_json::to_value(&d.findings[0]).unwrap();
    assert_eq!(json["rule"], "RateSeriesEnded");
    assert_eq!(json["period"], "2026-02");
    assert_eq!(json["currency"], "BGN");
    assert_eq!(json["line"], serde_json::Value::Null);
}

#[test]
fn a_broken_file_lists_fifty_findings_per_rule_and_counts_the_rest() {
    let mut text = String::from("Date,USD\n");
    let first = chrono::NaiveDate::from_ymd_opt(2026, 1, 1).unwrap();
    for day in first.iter_days().take(84) {
        text.push_str(&format!("{day},1.1x\n"));
    }
    let parsed = parse_daily(&text, "bad.csv", &DailyOptions::default());
    assert_eq!(parsed.findings.len(), 51);
    assert!(
        parsed.findings[50].message.starts_with("34 more findings of this rule"),
        "{}",
        parsed.findings[50].message
    );
}

#[test]
fn argument_errors_are_not_findings() {
    let months: Vec<Period> = p("1900-01").through(&p("2000-12"));
    let request =
        RateRequest { base: c("EUR"), presentation: c("EUR"), currencies: &[], months: &months, fiscal_year_start: 1 };
    assert_eq!(derive_rates(&[], &[], &request), Err(RatesError::MonthsTooMany { count: 1212, limit: 1200 }));
}

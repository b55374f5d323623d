//! `tessera check`: the demo is clean; each broken copy gives its finding, at its place,
//! with the right exit code (0 clean, 1 blocking, 2 unreadable).

use serde_json::Value;

use crate::support::{Folder, run, run_json};

fn check(f: &Folder) -> (i32, Vec<Value>) {
    let (code, v) = run_json(f.path(), &["check", "--period", "2026-12"]);
    (code, v["findings"].as_array().expect("findings").clone())
}

/// The finding of `rule`, asserting there is exactly one.
fn one<'a>(findings: &'a [Value], rule: &str) -> &'a Value {
    let hits: Vec<&Value> = findings.iter().filter(|f| f["rule"] == rule).collect();
    assert_eq!(hits.len(), 1, "expected one {rule}, got {}: {findings:#?}", hits.len());
    hits[0]
}

fn at(f: &Value, file: &str, line: Option<u64>) {
    assert_eq!(f["file"], file, "{f:#}");
    assert_eq!(f["line"].as_u64(), line, "{f:#}");
}

const UK_DEC: &str = "entities/ALD-UK/tb-2026-12.movements.csv";

#[test]
fn demo_is_clean_from_the_repo_root() {
    let (code, text) = run(&["check", "--data", crate::support::repo().to_str().unwrap()]);
    assert_eq!(code, 0, "{text}");
    assert!(text.contains("no findings"), "{text}");
}

#[test]
fn unbalanced_trial_balance_shows_the_arithmetic() {
    let f = Folder::demo();
    f.replace(UK_DEC, "2026-12,1021,-14000.00,,,", "2026-12,1021,-14000.50,,,");
    let (code, fs) = check(&f);
    assert_eq!(code, 1);
    let x = one(&fs, "TrialBalanceUnbalanced");
    at(x, UK_DEC, None);
    assert_eq!(x["entity"], "ALD-UK");
    assert_eq!(x["period"], "2026-12");
    let msg = x["message"].as_str().unwrap();
    assert!(msg.contains("= (0.500)"), "{msg}");
}

#[test]
fn unmapped_local_account_is_named_with_its_line() {
    let f = Folder::demo();
    f.replace(UK_DEC, "2026-12,1021,-14000.00,,,", "2026-12,1029,-14000.00,,,");
    let line = f.line_of(UK_DEC, "2026-12,1029,");
    let (code, fs) = check(&f);
    assert_eq!(code, 1);
    let x = one(&fs, "AccountUnmapped");
    at(x, UK_DEC, Some(line));
    assert_eq!(x["account"], "1029");
    assert_eq!(x["entity"], "ALD-UK");
}

#[test]
fn account_mapped_twice_lists_both_rows() {
    let f = Folder::demo();
    f.append("entities/ALD-UK/mapping.csv", "1001,Stock again,1000");
    let (code, fs) = check(&f);
    assert_eq!(code, 1);
    let rows: Vec<&Value> = fs.iter().filter(|x| x["rule"] == "AccountMappedTwice").collect();
    assert_eq!(rows.len(), 2, "{fs:#?}");
    assert!(rows.iter().all(|x| x["account"] == "1001" && x["entity"] == "ALD-UK"));
}

#[test]
fn mapping_to_an_unknown_group_account() {
    let f = Folder::demo();
    f.replace("entities/ALD-UK/mapping.csv", "1001,Stock,1500", "1001,Stock,1599");
    let (code, fs) = check(&f);
    assert_eq!(code, 1);
    let x = one(&fs, "AccountUnknown");
    at(x, "entities/ALD-UK/mapping.csv", Some(2));
    assert_eq!(x["account"], "1599");
}

#[test]
fn unknown_currency_and_country_codes() {
    let f = Folder::demo();
    f.replace(
        "entities/entities.csv",
        "ALD-UK,Aldermoor Instruments Ltd,GB,GBP",
        "ALD-UK,Aldermoor Instruments Ltd,UK,GBX",
    );
    let (code, fs) = check(&f);
    assert_eq!(code, 1);
    let line = f.line_of("entities/entities.csv", "ALD-UK,");
    at(one(&fs, "CountryUnknown"), "entities/entities.csv", Some(line));
    at(one(&fs, "CurrencyUnknown"), "entities/entities.csv", Some(line));
}

#[test]
fn missing_and_non_positive_rates() {
    let f = Folder::demo();
    let rates = f.read("rates/monthly.csv");
    let gbp_nov = rates.lines().find(|l| l.starts_with("2026-11,GBP,")).unwrap().to_string();
    f.replace("rates/monthly.csv", &format!("{gbp_nov}\n"), "");
    let jpy_dec = rates.lines().find(|l| l.starts_with("2026-12,JPY,")).unwrap().to_string();
    let mut cells: Vec<&str> = jpy_dec.split(',').collect();
    cells[2] = "-161.2";
    f.replace("rates/monthly.csv", &jpy_dec, &cells.join(","));
    let (code, fs) = check(&f);
    assert_eq!(code, 1);
    let missing: Vec<&Value> = fs.iter().filter(|x| x["rule"] == "RateMissing").collect();
    assert!(
        missing.iter().any(|x| x["period"] == "2026-11" && x["message"].as_str().unwrap().contains("GBP")),
        "{fs:#?}"
    );
    assert!(
        missing.iter().any(|x| x["period"] == "2026-12" && x["message"].as_str().unwrap().contains("JPY")),
        "{fs:#?}"
    );
    let x = one(&fs, "RateNotPositive");
    at(x, "rates/monthly.csv", Some(f.line_of("rates/monthly.csv", "2026-12,JPY,")));
}

#[test]
fn counterparty_unknown_self_and_missing() {
    let f = Folder::demo();
    f.replace(UK_DEC, "2026-12,2111,448.80,ALD-NL,EUR,0.00", "2026-12,2111,448.80,ALD-XX,EUR,0.00");
    f.replace(UK_DEC, "2026-12,8210,20160.00,ALD-NL,EUR,24000.00", "2026-12,8210,20160.00,ALD-UK,EUR,24000.00");
    let (code, fs) = check(&f);
    assert_eq!(code, 1);
    at(one(&fs, "CounterpartyUnknown"), UK_DEC, Some(f.line_of(UK_DEC, "ALD-XX")));
    at(one(&fs, "CounterpartySelf"), UK_DEC, Some(f.line_of(UK_DEC, "8210,20160.00,ALD-UK")));

    let g = Folder::demo();
    g.replace(UK_DEC, "2026-12,2111,448.80,ALD-NL,EUR,0.00", "2026-12,2111,448.80,,,");
    let (code, fs) = check(&g);
    assert_eq!(code, 1);
    at(one(&fs, "CounterpartyMissing"), UK_DEC, Some(g.line_of(UK_DEC, "2026-12,2111,448.80,,,")));
}

#[test]
fn entity_held_over_100_percent() {
    let f = Folder::demo();
    f.append("entities/holdings.csv", "ALD-NL,BRW-US,0.30,0.30,2020-01-01,,,,");
    let (code, fs) = check(&f);
    assert_eq!(code, 1);
    let over: Vec<&Value> = fs.iter().filter(|x| x["rule"] == "EntityOverHeld").collect();
    assert!(!over.is_empty());
    let msg = over[0]["message"].as_str().unwrap();
    assert!(msg.contains("= 1.05"), "{msg}");
    assert_eq!(over[0]["entity"], "BRW-US");
}

#[test]
fn duplicated_row_and_malformed_amount() {
    let f = Folder::demo();
    f.replace(UK_DEC, "2026-12,1031,-3000.00,,,\n", "2026-12,1031,-3000.00,,,\n2026-12,1031,-3000.00,,,\n");
    f.replace(UK_DEC, "2026-12,1100,159300.00,,,", "2026-12,1100,159'300.00,,,");
    let (code, fs) = check(&f);
    assert_eq!(code, 1);
    let dup = one(&fs, "RowDuplicated");
    assert_eq!(dup["file"], UK_DEC);
    assert_eq!(dup["account"], "1031");
    let bad = one(&fs, "AmountMalformed");
    at(bad, UK_DEC, Some(f.line_of(UK_DEC, "159'300.00")));
}

#[test]
fn surplus_decimals_are_reported_not_rounded() {
    let f = Folder::demo();
    // JPY has no minor unit and BHD three (ISO 4217).
    let jp = "entities/KIS-JP/tb-2026-12.balances.csv";
    f.replace(jp, "2026-12,J-1120,300000000,,,", "2026-12,J-1120,300000000.5,,,");
    let bh = "entities/GLF-BH/tb-2026-06.movements.csv";
    f.replace(bh, "2026-06,A1200,4650.000,,,", "2026-06,A1200,4650.0001,,,");
    let (code, fs) = check(&f);
    assert_eq!(code, 1);
    let surplus: Vec<&Value> = fs.iter().filter(|x| x["rule"] == "AmountSurplusDecimals").collect();
    assert_eq!(surplus.len(), 2, "{fs:#?}");
    assert!(surplus.iter().any(|x| x["file"] == jp && x["message"].as_str().unwrap().contains("JPY")));
    assert!(surplus.iter().any(|x| x["file"] == bh && x["message"].as_str().unwrap().contains("BHD")));
}

#[test]
fn missing_file_and_missing_column_are_unreadable_input() {
    let f = Folder::demo();
    f.remove("rates/monthly.csv");
    let (code, fs) = check(&f);
    assert_eq!(code, 3);
    at(one(&fs, "FileMissing"), "rates/monthly.csv", None);

    let g = Folder::demo();
    g.replace(UK_DEC, "period,account,amount,", "period,account,amt,");
    let (code, fs) = check(&g);
    assert_eq!(code, 3);
    at(one(&fs, "ColumnMissing"), UK_DEC, Some(1));
}

/// An equity-accounted associate that has not delivered blocks: the close needs every
/// entity it consolidates or equity-accounts (issue 14). One outside the group only warns.
#[test]
fn an_entity_not_yet_delivered_blocks_when_the_close_needs_it() {
    let f = Folder::demo();
    f.remove("entities/HEL-CH");
    f.append("entities/entities.csv", "ZZZ-01,Zed B.V.,NL,EUR,Europe,Corporate,");
    let (code, fs) = check(&f);
    assert_eq!(code, 1, "{fs:#?}");
    let missing: Vec<&Value> = fs.iter().filter(|x| x["rule"] == "DeliveryMissing").collect();
    assert_eq!(missing.len(), 2, "{missing:#?}");
    let hel = missing.iter().find(|x| x["entity"] == "HEL-CH").expect("HEL-CH");
    assert_eq!(hel["severity"], "blocking");
    assert_eq!(hel["file"], "entities/HEL-CH");
    assert!(hel["message"].as_str().unwrap().contains("equity-accounted"), "{hel:#}");
    let zed = missing.iter().find(|x| x["entity"] == "ZZZ-01").expect("ZZZ-01");
    assert_eq!(zed["severity"], "warning");
}

#[test]
fn all_findings_come_in_one_run() {
    let f = Folder::demo();
    f.replace(UK_DEC, "2026-12,1021,-14000.00,,,", "2026-12,1029,-14000.50,,,");
    f.replace("entities/entities.csv", "ALD-UK,Aldermoor Instruments Ltd,GB,", "ALD-UK,Aldermoor Instruments Ltd,QQ,");
    f.append("entities/holdings.csv", "ALD-NL,BRW-US,0.30,0.30,2020-01-01,,,,");
    let (code, fs) = check(&f);
    assert_eq!(code, 1);
    for rule in ["TrialBalanceUnbalanced", "AccountUnmapped", "CountryUnknown", "EntityOverHeld"] {
        assert!(fs.iter().any(|x| x["rule"] == rule), "{rule} missing: {fs:#?}");
    }
}

/// `entities/net_investment.csv` rows are checked together: an unknown counterparty, an
/// exchange-difference account that is not profit or loss, an item designated twice.
#[test]
fn net_investment_designations_are_checked() {
    let f = Folder::demo();
    let file = "entities/net_investment.csv";
    f.write(
        file,
        "entity,counterparty,account,fx_account,from,note\n\
         ALD-NL,ALD-UK,1400,7350,2026-01-01,\n\
         ALD-NL,NOPE,1400,7350,2026-01-01,\n\
         ALD-NL,ALD-US,1400,1800,2026-01-01,\n\
         ALD-NL,ALD-UK,1400,7350,2026-01-01,again\n",
    );
    let (code, fs) = check(&f);
    assert_eq!(code, 1);
    let x = one(&fs, "EntityUnknown");
    at(x, file, Some(3));
    assert!(x["message"].as_str().unwrap().contains("NOPE"), "{x:#}");
    let x = one(&fs, "AccountInvalid");
    at(x, file, Some(4));
    assert_eq!(x["account"], "1800");
    let x = one(&fs, "RowDuplicated");
    at(x, file, Some(5));
    assert!(x["message"].as_str().unwrap().contains("first on line 2"), "{x:#}");
}

//! `tessera close` and `tessera trace`: published worked examples as case folders under
//! `tests/cases/`, and the demo group closing with its proof tied for every month and view.

use std::path::Path;

use rust_decimal::Decimal;
use serde_json::Value;

use crate::support::{CHART, Folder, LAYOUT, identity_mapping, repo, run_json, settings};

fn tb(v: &Value, account: &str) -> Decimal {
    v["group_trial_balance"]
        .as_array()
        .unwrap()
        .iter()
        .find(|r| r["account"] == account)
        .map(|r| r["amount"].as_str().unwrap().parse().unwrap())
        .unwrap_or_default()
}

/// Closes a folder for one period, asserting exit 0 and a tied proof.
fn close(f: &Folder, period: &str) -> Value {
    let out = f.path().join("out");
    let (code, v) = run_json(f.path(), &["close", "--period", period, "--out", out.to_str().unwrap()]);
    assert_eq!(code, 0, "{v:#}");
    assert_eq!(v["proof"]["tied"], true, "{:#}", v["proof"]);
    v
}

fn d(s: &str) -> Decimal {
    s.parse().unwrap()
}

fn statement_line(v: &Value, statement: &str, line: &str) -> Option<Decimal> {
    v["statements"][statement]["lines"]
        .as_array()?
        .iter()
        .find(|l| l["line"] == line)
        .map(|l| l["amount"].as_str().unwrap().parse().unwrap())
}

fn text_decimal(v: &Value) -> Option<Decimal> {
    v.as_str().and_then(|s| s.parse().ok())
}

/// Closes one case folder and compares every figure of its `expected.toml`; returns the
/// differences, one line each, and the number of figures compared.
fn check_case(dir: &Path) -> (Vec<String>, usize) {
    let name = dir.file_name().unwrap().to_string_lossy().to_string();
    let expected: toml::Table = std::fs::read_to_string(dir.join("expected.toml"))
        .unwrap_or_else(|e| panic!("{name}: expected.toml: {e}"))
        .parse()
        .unwrap_or_else(|e| panic!("{name}: expected.toml: {e}"));
    let period = expected["period"].as_str().expect("period");
    let out = tempfile::tempdir().unwrap();
    let (code, v) = run_json(dir, &["close", "--period", period, "--out", out.path().to_str().unwrap()]);
    if code != 0 || v["proof"]["tied"] != true {
        return (vec![format!("{name}: exit {code}, proof {:#}, findings {:#}", v["proof"], v["findings"])], 0);
    }
    let want = |x: &toml::Value, what: &str| -> Decimal {
        x.as_str().and_then(|s| s.parse().ok()).unwrap_or_else(|| panic!("{name}: {what} must be a decimal string"))
    };
    let mut diffs = Vec::new();
    let mut n = 0;
    let mut compare = |what: String, want: Decimal, got: Option<Decimal>| {
        n += 1;
        if got != Some(want) {
            diffs.push(format!(
                "{name:<45} {what:<32} {want:>12} {:>12}",
                got.map(|g| g.to_string()).unwrap_or("-".into())
            ));
        }
    };
    for (section, body) in &expected {
        let Some(table) = body.as_table() else { continue };
        for (key, x) in table {
            match section.as_str() {
                "group_trial_balance" => compare(format!("tb {key}"), want(x, key), Some(tb(&v, key))),
                "attribution" => {
                    compare(format!("attribution {key}"), want(x, key), text_decimal(&v["attribution"][key]))
                }
                "statements" => {
                    for (line, y) in x.as_table().expect("statement table") {
                        compare(format!("{key} {line}"), want(y, line), statement_line(&v, key, line));
                    }
                }
                "nci" => {
                    let row = v["nci"].as_array().unwrap().iter().find(|r| r["entity"] == key.as_str());
                    for (field, y) in x.as_table().expect("nci table") {
                        compare(
                            format!("nci {key} {field}"),
                            want(y, field),
                            row.and_then(|r| text_decimal(&r[field])),
                        );
                    }
                }
                "changes_in_equity" => {
                    let row = v["statements"]["changes_in_equity"]["rows"]
                        .as_array()
                        .unwrap()
                        .iter()
                        .find(|r| r["row"] == key.as_str());
                    for (column, y) in x.as_table().expect("changes_in_equity table") {
                        compare(
                            format!("equity {key} {column}"),
                            want(y, column),
                            row.and_then(|r| text_decimal(&r["amounts"][column])),
                        );
                    }
                }
                other => panic!("{name}: unknown section [{other}] in expected.toml"),
            }
        }
    }
    (diffs, n)
}

/// Every folder under `tests/cases/` is a small group in our input format with the
/// figures of a published or hand-worked example in `expected.toml` and its source
/// (standard and paragraph, study text, "from memory" where so) in `SOURCE.md`. Each is
/// closed and compared figure by figure; all differences are listed together. The
/// expected figures are the sources', never regenerated from the engine's output.
#[test]
fn case_folders_close_to_their_published_figures() {
    let root = repo().join("tests/cases");
    let mut dirs: Vec<_> =
        std::fs::read_dir(&root).unwrap().map(|e| e.unwrap().path()).filter(|p| p.is_dir()).collect();
    dirs.sort();
    assert!(dirs.len() >= 10, "{dirs:?}");
    let mut all = Vec::new();
    for dir in &dirs {
        let source = std::fs::read_to_string(dir.join("SOURCE.md")).unwrap_or_default();
        assert!(source.contains("Source:"), "{}: SOURCE.md must name its source", dir.display());
        let (diffs, n) = check_case(dir);
        assert!(n > 0 || !diffs.is_empty(), "{}: expected.toml compares nothing", dir.display());
        all.extend(diffs);
    }
    assert!(all.is_empty(), "\n{:<45} {:<32} {:>12} {:>12}\n{}", "case", "figure", "expected", "got", all.join("\n"));
}

/// The comparison itself can fail: a case folder whose expected figure is off by a cent
/// is reported with both figures.
#[test]
fn a_wrong_expected_figure_is_reported() {
    let f = crate::support::Folder::empty();
    let src = repo().join("tests/cases/goodwill-fair-value");
    for sub in ["entities", "rates"] {
        copy_tree(&src.join(sub), &f.path().join(sub));
    }
    f.write("expected.toml", "period = \"2026-01\"\n[group_trial_balance]\n\"1100\" = \"200.01\"\n");
    let (diffs, n) = check_case(f.path());
    assert_eq!(n, 1);
    assert_eq!(diffs.len(), 1, "{diffs:?}");
    assert!(diffs[0].contains("200.01") && diffs[0].contains("200.00"), "{diffs:?}");
}

fn copy_tree(from: &Path, to: &Path) {
    std::fs::create_dir_all(to).unwrap();
    for e in std::fs::read_dir(from).unwrap() {
        let p = e.unwrap().path();
        let target = to.join(p.file_name().unwrap());
        if p.is_dir() { copy_tree(&p, &target) } else { std::fs::copy(&p, &target).map(|_| ()).unwrap() }
    }
}

/// The row of the statement of changes in equity with id `row`, column `column`.
fn equity_cell(v: &Value, row: &str, column: &str) -> Decimal {
    let r = v["statements"]["changes_in_equity"]["rows"].as_array().unwrap().iter().find(|r| r["row"] == row);
    r.and_then(|r| text_decimal(&r["amounts"][column])).unwrap_or_else(|| panic!("no {row} {column}"))
}

/// Every month and view of the demo ties, the statement of changes in equity included:
/// its closing total is the balance sheet's equity, and each month's opening is the
/// previous month's closing (IAS 1.106: a reconciliation of carrying amounts, so what
/// one period closes with the next one opens with).
#[test]
fn demo_closes_tied_for_every_month_and_view() {
    let out = tempfile::tempdir().unwrap();
    let mut previous_close: Option<Value> = None;
    for month in 1..=12 {
        let period = format!("2026-{month:02}");
        for view in ["month", "qtd", "ytd"] {
            let (code, v) = run_json(
                &repo(),
                &["close", "--period", &period, "--view", view, "--out", out.path().to_str().unwrap()],
            );
            assert_eq!(code, 0, "{period} {view}: {:#}", v["proof"]);
            assert_eq!(v["proof"]["tied"], true, "{period} {view}: {:#}", v["proof"]);
            let check =
                v["proof"]["checks"].as_array().unwrap().iter().find(|c| c["name"] == "equity_changes_reconcile");
            assert_eq!(check.map(|c| &c["ok"]), Some(&Value::Bool(true)), "{period} {view}");
            assert_eq!(
                equity_cell(&v, "closing", "total_equity"),
                statement_line(&v, "balance_sheet", "EQ").unwrap(),
                "{period} {view}"
            );
            // The translation reserve moves only through OCI (IAS 21.39(c), 21.41; nothing
            // is disposed of in the demo, so nothing is recycled, 21.48). An intermediate
            // holder's exchange difference on its eliminated investment once showed here
            // as an other movement (225,306.62 in 2026-05). What remains is one cent in the
            // views that hold April, the month GLF-BH is acquired: rounding, not traced to
            // its line.
            let other_reserve = equity_cell(&v, "other", "TR");
            assert!(
                other_reserve.abs() <= Decimal::new(1, 2),
                "{period} {view}: other movements in TR {other_reserve}"
            );
            if view == "month"
                && let Some(p) = &previous_close
            {
                for column in ["RE", "TR", "NCI", "owners_of_the_parent", "total_equity"] {
                    assert_eq!(
                        equity_cell(&v, "opening", column),
                        equity_cell(p, "closing", column),
                        "{period} opening {column}"
                    );
                }
            }
            if view == "ytd" {
                previous_close = Some(v);
            }
        }
    }
}

#[test]
fn outputs_are_byte_identical_on_rerun() {
    let a = tempfile::tempdir().unwrap();
    let b = tempfile::tempdir().unwrap();
    for dir in [&a, &b] {
        let (code, _) = run_json(&repo(), &["close", "--period", "2026-12", "--out", dir.path().to_str().unwrap()]);
        assert_eq!(code, 0);
    }
    let files: Vec<_> =
        std::fs::read_dir(a.path().join("2026-12/group/ytd")).unwrap().map(|e| e.unwrap().file_name()).collect();
    assert!(files.len() >= 10, "{files:?}");
    for name in files {
        let x = std::fs::read(a.path().join("2026-12/group/ytd").join(&name)).unwrap();
        let y = std::fs::read(b.path().join("2026-12/group/ytd").join(&name)).unwrap();
        assert!(x == y, "{name:?} differs between two runs");
    }
}

#[test]
fn trace_reconciles_group_figures_to_the_cent() {
    for account in ["1100", "1600", "3900", "4000", "5000", "9000"] {
        let (code, v) = run_json(&repo(), &["trace", account, "--period", "2026-12"]);
        assert_eq!(code, 0, "{v:#}");
        assert_eq!(v["reconciles"], true, "{account}: {v:#}");
    }
}

#[test]
fn sub_group_closes_on_its_own() {
    let out = tempfile::tempdir().unwrap();
    let (code, v) = run_json(
        &repo(),
        &["close", "--period", "2026-12", "--entity", "ALD-US", "--out", out.path().to_str().unwrap()],
    );
    assert_eq!(code, 0, "{:#}", v["proof"]);
    assert_eq!(v["scope"], "sub-group ALD-US");
}

/// A fair value adjustment needs a balance-sheet account of the chart to sit in: an
/// empty or unknown `fair_value_account` is a finding on the acquisition's line, and the
/// close does not tie (IFRS 3.18 adjustments must not be dropped silently).
#[test]
fn a_fair_value_adjustment_without_its_account_is_a_finding() {
    for (account, rule) in [("", "ValueMissing"), ("9999", "AccountUnknown")] {
        let f = crate::support::Folder::empty();
        let src = repo().join("tests/cases/foreign-subsidiary-fair-value-adjustment");
        for sub in ["entities", "rates"] {
            copy_tree(&src.join(sub), &f.path().join(sub));
        }
        f.replace("entities/acquisitions.csv", "0,1000,1200\n", &format!("0,1000,{account}\n"));
        let out = f.path().join("out");
        let (code, v) = run_json(f.path(), &["close", "--period", "2026-01", "--out", out.to_str().unwrap()]);
        assert_eq!(code, 1, "{account:?}: {v:#}");
        let found = v["findings"].as_array().into_iter().flatten().find(|x| x["rule"] == rule);
        let found = found.unwrap_or_else(|| panic!("{account:?}: no {rule}: {v:#}"));
        assert_eq!(found["line"], 2, "{found:#}");
    }
}

/// The impairment of the year is an expense only with an account to charge it to, and
/// cannot exceed the impairment to date: each is a finding on the acquisition's line.
#[test]
fn an_impairment_of_the_year_needs_its_account_and_its_total() {
    let src = repo().join("tests/cases/foreign-subsidiary-full-goodwill-impairment");
    for (file, from, to, rule) in [
        ("entities/group.toml", "goodwill_impairment = \"5150\"\n", "", "SettingInvalid"),
        ("entities/acquisitions.csv", ",400,400\n", ",400,500\n", "ValueInvalid"),
    ] {
        let f = crate::support::Folder::empty();
        for sub in ["entities", "rates"] {
            copy_tree(&src.join(sub), &f.path().join(sub));
        }
        f.replace(file, from, to);
        let out = f.path().join("out");
        let (code, v) = run_json(f.path(), &["close", "--period", "2026-01", "--out", out.to_str().unwrap()]);
        assert_eq!(code, 1, "{rule}: {v:#}");
        let found = v["findings"].as_array().into_iter().flatten().find(|x| x["rule"] == rule);
        let found = found.unwrap_or_else(|| panic!("no {rule}: {v:#}"));
        assert_eq!(found["line"], 2, "{found:#}");
    }
}

/// A loan that forms part of the net investment in a foreign operation (IAS 21.15,
/// 21.32-33). A textbook-style case from memory, figures invented: a EUR parent lends its
/// UK subsidiary GBP 1,000, settlement neither planned nor likely. GBP per EUR 0.80 at
/// the opening, 1.00 at January's close. The parent remeasures the GBP receivable:
/// 1,000 / 0.80 = 1,250.00 -> 1,000 / 1.00 = 1,000.00, a loss of 250.00 in its profit or
/// loss (account 7100, counterparty S). The subsidiary's loan is in its own currency: no
/// difference there. In the group the loan is eliminated (1,000.00 on both sides) but
/// the 250.00 is not (IAS 21.45): without the designation it stays in the group's profit
/// or loss; designated, the close moves it to OCI (IAS 21.32), where it accumulates in
/// the translation reserve. Total comprehensive income is the same either way.
fn net_investment_group(designated: bool) -> Folder {
    let f = Folder::empty();
    f.write("entities/group.toml", &settings("EUR", "P", "half_away_from_zero", "periodic"));
    f.write("entities/entities.csv", "entity,name,country,currency\nP,Parent,NL,EUR\nS,Subsidiary,GB,GBP\n");
    f.write("entities/holdings.csv", "owner,owned,capital_share,voting_share,valid_from\nP,S,1,1,2020-01-01\n");
    let chart = format!("{CHART}7100,Exchange differences,profit_or_loss,expense,average,,\n");
    f.write("entities/accounts.csv", &chart);
    f.write("entities/layouts.csv", &LAYOUT.replace("5000..5199 6950", "5000..5199 6950 7100"));
    let mut mapping = identity_mapping();
    mapping.push_str("7100,,7100\n");
    for e in ["P", "S"] {
        f.write(&format!("entities/{e}/mapping.csv"), &mapping);
    }
    f.write(
        "entities/P/opening.csv",
        "account,amount,counterparty,txn_currency,txn_amount,amount_presentation\n\
         1000,100.00,,,,\n1600,1250.00,S,GBP,1000.00,\n3000,-1350.00,,,,-1350.00\n",
    );
    f.write(
        "entities/P/tb-2026-01.movements.csv",
        "period,account,amount,counterparty,txn_currency,txn_amount\n\
         2026-01,1600,-250.00,S,GBP,0.00\n2026-01,7100,250.00,S,,\n",
    );
    f.write(
        "entities/S/opening.csv",
        "account,amount,counterparty,txn_currency,txn_amount,amount_presentation\n\
         1000,1000.00,,,,\n2600,-1000.00,P,GBP,-1000.00,\n",
    );
    f.write("entities/S/tb-2026-01.movements.csv", "period,account,amount\n2026-01,1000,0.00\n");
    f.write(
        "rates/monthly.csv",
        "period,currency,closing,average,quote\n2025-12,GBP,0.80,0.80,units_per_presentation\n\
         2026-01,GBP,1.00,0.90,units_per_presentation\n",
    );
    if designated {
        f.write(
            "entities/net_investment.csv",
            "entity,counterparty,account,fx_account,from,note\nP,S,1600,7100,2025-01-01,no settlement planned\n",
        );
    }
    f
}

#[test]
fn net_investment_loan_exchange_difference_goes_to_oci_in_the_group() {
    let plain = close(&net_investment_group(false), "2026-01");
    // IAS 21.45: the loss survives the elimination of the loan and stays in profit or loss.
    assert_eq!(tb(&plain, "1600"), d("0"));
    assert_eq!(tb(&plain, "7100"), d("250.00"));
    assert_eq!(tb(&plain, "8100"), d("0"));
    let v = close(&net_investment_group(true), "2026-01");
    assert_eq!(tb(&v, "7100"), d("0"));
    assert_eq!(tb(&v, "8100"), d("250.00"));
    let entries: Vec<&Value> =
        v["eliminations"].as_array().unwrap().iter().filter(|e| e["rule"] == "net_investment_fx").collect();
    assert_eq!(entries.len(), 1, "{entries:#?}");
    assert_eq!(entries[0]["posted_at"], "P");
    let lines = entries[0]["lines"].as_array().unwrap();
    let sum: Decimal = lines.iter().map(|l| l["amount"].as_str().unwrap().parse::<Decimal>().unwrap()).sum();
    assert_eq!(sum, Decimal::ZERO);
    // Profit is 250.00 better, OCI 250.00 worse, the sum unchanged (-250.00 in all).
    assert_eq!(d(plain["attribution"]["profit"].as_str().unwrap()), d("-250.00"));
    assert_eq!(d(v["attribution"]["profit"].as_str().unwrap()), d("0"));
    assert_eq!(d(v["attribution"]["oci"].as_str().unwrap()), d("-250.00"));
    assert_eq!(plain["attribution"]["result_in_equity"], v["attribution"]["result_in_equity"]);
}

/// The demo under both IFRIC 16 methods (IFRIC 16.17: the method changes which foreign
/// operation a part of the reserve belongs to, not the consolidated figures): the
/// group trial balance is identical, the reserves per operation add up to the same
/// total, and the split differs where an operation sits below a parent in another
/// currency. BRW-US (USD) is held by ALD-US (USD): under step by step its USD figures
/// are part of ALD-US's USD sub-group, so none of the year's difference is its own.
#[test]
fn demo_under_both_ifric16_methods_has_the_same_group_figures() {
    let mut runs = Vec::new();
    for method in ["direct", "step_by_step"] {
        let f = Folder::demo();
        f.replace("entities/group.toml", "ifric16 = \"direct\"", &format!("ifric16 = \"{method}\""));
        let v = close(&f, "2026-12");
        let reserves: Vec<(String, Decimal, Decimal)> = v["translation_reserves"]
            .as_array()
            .unwrap()
            .iter()
            .map(|r| {
                (
                    r["operation"].as_str().unwrap().to_string(),
                    d(r["year"].as_str().unwrap()),
                    d(r["reserve"].as_str().unwrap()),
                )
            })
            .collect();
        runs.push((v["group_trial_balance"].clone(), reserves, v["attribution"]["oci"].clone()));
    }
    assert_eq!(runs[0].0, runs[1].0, "group trial balances differ");
    assert_eq!(runs[0].2, runs[1].2);
    let total = |r: &[(String, Decimal, Decimal)]| r.iter().map(|x| x.2).sum::<Decimal>();
    assert_eq!(total(&runs[0].1), total(&runs[1].1));
    let year = |r: &[(String, Decimal, Decimal)], e: &str| r.iter().find(|x| x.0 == e).map(|x| x.1).unwrap();
    assert!(!year(&runs[0].1, "BRW-US").is_zero());
    assert_eq!(year(&runs[1].1, "BRW-US"), Decimal::ZERO);
    assert_ne!(year(&runs[0].1, "ALD-US"), year(&runs[1].1, "ALD-US"));
    // Entities without an intermediate parent in another currency keep their reserve.
    assert_eq!(year(&runs[0].1, "GLF-BH"), year(&runs[1].1, "GLF-BH"));
}

/// Designated during the year (IAS 21.32 applies from the designation): the same loan
/// designated from 2026-02-01. January's loss of 250.00 stays in profit or loss;
/// February's, GBP 1,000 at 1.00 -> 1.25 GBP per EUR = 1,000.00 -> 800.00, a loss of
/// 200.00, goes to OCI. Invented figures, by hand.
#[test]
fn net_investment_designated_during_the_year_moves_only_the_later_months() {
    let f = net_investment_group(true);
    f.replace("entities/net_investment.csv", "2025-01-01", "2026-02-01");
    f.append("entities/P/tb-2026-01.movements.csv", "2026-02,1600,-200.00,S,GBP,0.00");
    f.append("entities/P/tb-2026-01.movements.csv", "2026-02,7100,200.00,S,,");
    f.append("entities/S/tb-2026-01.movements.csv", "2026-02,1000,0.00");
    f.append("rates/monthly.csv", "2026-02,GBP,1.25,1.10,units_per_presentation");
    let jan = close(&f, "2026-01");
    assert_eq!(tb(&jan, "7100"), d("250.00"));
    assert_eq!(tb(&jan, "8100"), d("0"));
    let feb = close(&f, "2026-02");
    assert_eq!(tb(&feb, "7100"), d("250.00"));
    assert_eq!(tb(&feb, "8100"), d("200.00"));
}

/// A copy of the IFRS 3 IE45-IE49 case folder (figures from memory, see its SOURCE.md).
fn bargain_purchase_group() -> Folder {
    let f = Folder::empty();
    let src = repo().join("tests/cases/ifrs3-ie45-bargain-purchase");
    for sub in ["entities", "rates"] {
        copy_tree(&src.join(sub), &f.path().join(sub));
    }
    f
}

/// IFRS 3.34: the gain on a bargain purchase is recognised at the acquisition date. A
/// year later it is part of retained earnings, not profit of the year, and the finding
/// that asks for the reassessment (IFRS 3.36) stays a warning on the acquisition's line.
#[test]
fn a_bargain_purchase_of_an_earlier_year_is_in_retained_earnings() {
    let f = bargain_purchase_group();
    f.replace("entities/holdings.csv", "2026-01-01", "2025-01-01");
    f.replace("entities/acquisitions.csv", "TC,2026-01-01", "TC,2025-01-01");
    f.write(
        "entities/AC/opening.csv",
        "account,amount,counterparty,amount_presentation\n1400,150,TC,\n3000,-150,,-150\n",
    );
    f.write("entities/AC/tb-2026-01.movements.csv", "period,account,amount,counterparty\n2026-01,1000,0,\n");
    let v = close(&f, "2026-01");
    assert_eq!(tb(&v, "4800"), d("0"));
    assert_eq!(tb(&v, "3200"), d("-50"));
    assert_eq!(tb(&v, "1100"), d("0"));
    assert_eq!(tb(&v, "3900"), d("-50"));
    let found = v["findings"].as_array().unwrap().iter().find(|x| x["rule"] == "GoodwillNegative").unwrap();
    assert_eq!(found["severity"], "warning", "{found:#}");
    assert_eq!(found["line"], 2, "{found:#}");
    assert!(found["action"].as_str().unwrap().contains("IFRS 3.36"), "{found:#}");
}

/// Without an account for the gain in the acquisition year the close cannot recognise it:
/// a blocking finding on the acquisition's line that says which setting to add.
#[test]
fn a_bargain_purchase_needs_an_account_for_its_gain() {
    let f = bargain_purchase_group();
    f.replace("entities/group.toml", "bargain_purchase_gain = \"4800\"\n", "");
    let out = f.path().join("out");
    let (code, v) = run_json(f.path(), &["close", "--period", "2026-01", "--out", out.to_str().unwrap()]);
    assert_eq!(code, 1, "{v:#}");
    let found = v["findings"].as_array().unwrap().iter().find(|x| x["rule"] == "SettingInvalid");
    let found = found.unwrap_or_else(|| panic!("no SettingInvalid: {v:#}"));
    assert_eq!(found["line"], 2, "{found:#}");
    assert!(found["action"].as_str().unwrap().contains("bargain_purchase_gain"), "{found:#}");
}

/// `nci_fair_value` for a subsidiary the group holds wholly: no NCI exists, so a fair
/// value for one is a blocking finding on the acquisition's line, and no NCI reaches the
/// trial balance (IFRS 10.22: NCI is the equity not attributable to the parent).
#[test]
fn an_nci_fair_value_for_a_wholly_owned_subsidiary_is_a_finding() {
    let f = Folder::empty();
    let src = repo().join("tests/cases/goodwill-fair-value");
    for sub in ["entities", "rates"] {
        copy_tree(&src.join(sub), &f.path().join(sub));
    }
    f.replace("entities/holdings.csv", "P,S,0.8,0.8,", "P,S,1,1,");
    let out = f.path().join("out");
    let (code, v) = run_json(f.path(), &["close", "--period", "2026-01", "--out", out.to_str().unwrap()]);
    assert_eq!(code, 1, "{v:#}");
    assert_eq!(v["proof"]["tied"], false);
    let found = v["findings"].as_array().unwrap().iter().find(|x| x["rule"] == "ValueInvalid");
    let found = found.unwrap_or_else(|| panic!("no ValueInvalid: {v:#}"));
    assert_eq!(found["severity"], "blocking", "{found:#}");
    assert_eq!(found["file"], "entities/acquisitions.csv", "{found:#}");
    assert_eq!(found["line"], 2, "{found:#}");
    assert_eq!(found["entity"], "S", "{found:#}");
    assert!(found["action"].as_str().unwrap().contains("nci_fair_value"), "{found:#}");
    assert_eq!(tb(&v, "3900"), d("0"));
    assert!(v["nci"].as_array().unwrap().is_empty(), "{:#}", v["nci"]);
}

/// No signed zero in any output of a close: the JSON on stdout, the terminal table and
/// every CSV and JSON file written. A case folder whose profit, OCI and several
/// statement lines are zero, some of them negated zeros on the way (common practice:
/// a group pack never shows "-0.00").
#[test]
fn no_output_shows_a_negative_zero() {
    let dir = repo().join("tests/cases/goodwill-fair-value");
    let out = tempfile::tempdir().unwrap();
    let o = out.path().to_str().unwrap();
    let signed_zero = |text: &str| -> Vec<String> {
        text.split(|c: char| !(c.is_ascii_digit() || c == '-' || c == '.'))
            .filter(|w| w.starts_with("-0") && w[1..].chars().all(|c| c == '0' || c == '.'))
            .map(String::from)
            .collect()
    };
    let d = dir.to_str().unwrap();
    let (code, json) =
        crate::support::run(&["close", "--period", "2026-01", "--out", o, "--data", d, "--format", "json"]);
    assert_eq!(code, 0);
    assert!(signed_zero(&json).is_empty(), "{:?}", signed_zero(&json));
    let (code, table) = crate::support::run(&["close", "--period", "2026-01", "--out", o, "--data", d]);
    assert_eq!(code, 0);
    assert!(signed_zero(&table).is_empty() && !table.contains("(0.00)"), "{table}");
    let mut files = 0;
    for e in std::fs::read_dir(out.path().join("2026-01/group/ytd")).unwrap() {
        let p = e.unwrap().path();
        if matches!(p.extension().and_then(|x| x.to_str()), Some("csv" | "json")) {
            let text = std::fs::read_to_string(&p).unwrap();
            assert!(signed_zero(&text).is_empty(), "{}: {:?}", p.display(), signed_zero(&text));
            files += 1;
        }
    }
    assert!(files >= 8, "{files} files");
}

/// Every finding the close raises about the data, `check` lists as well (same rule,
/// line and message), so that a close never finds a problem `check` passed. One broken
/// copy of a case folder per finding the close's rules raise.
#[test]
fn every_finding_of_the_close_is_listed_by_check() {
    let broken: [(&str, &str, &str, &str, &str); 13] = [
        (
            "foreign-subsidiary-fair-value-adjustment",
            "entities/acquisitions.csv",
            "0,1000,1200\n",
            "0,1000,9999\n",
            "AccountUnknown",
        ),
        (
            "foreign-subsidiary-full-goodwill-impairment",
            "entities/group.toml",
            "goodwill_impairment = \"5150\"\n",
            "",
            "SettingInvalid",
        ),
        (
            "ifrs3-ie45-bargain-purchase",
            "entities/group.toml",
            "bargain_purchase_gain = \"4800\"\n",
            "",
            "SettingInvalid",
        ),
        ("ifrs3-ie45-bargain-purchase", "entities/group.toml", "", "", "GoodwillNegative"),
        ("goodwill-fair-value", "entities/holdings.csv", "P,S,0.8,0.8,", "P,S,1,1,", "ValueInvalid"),
        (
            "goodwill-fair-value",
            "entities/acquisitions.csv",
            "S,2020-01-01,500,fair_value,100,400,400,0\n",
            "",
            "AcquisitionMissing",
        ),
        (
            "upstream-unrealised-profit-fair-value-nci",
            "entities/group.toml",
            "inventory = \"1500\"\n",
            "",
            "SettingInvalid",
        ),
        (
            "mid-year-acquisition-uplift-depreciation",
            "entities/fair_value_adjustments.csv",
            "S,1200,1200,24,5050",
            "S,5050,1200,24,1200",
            "AccountUnknown",
        ),
        (
            "mid-year-acquisition-uplift-depreciation",
            "entities/fair_value_adjustments.csv",
            "\nS,1200",
            "\nT,1200",
            "AcquisitionMissing",
        ),
        ("mid-year-acquisition-uplift-deferred-tax", "entities/tax_rates.csv", "S,0.25,\n", "", "ValueMissing"),
        (
            "mid-year-acquisition-uplift-deferred-tax",
            "entities/group.toml",
            "deferred_tax = \"recognise\"\n",
            "",
            "ValueInvalid",
        ),
        (
            "mid-year-acquisition-uplift-deferred-tax",
            "entities/group.toml",
            "deferred_tax = \"2700\"\n",
            "",
            "SettingInvalid",
        ),
        (
            "foreign-goodwill-impairment-in-month-closing-rate",
            "entities/goodwill_impairments.csv",
            "S,2026-02,200",
            "S,2019-12,200",
            "ValueInvalid",
        ),
    ];
    // The equity method: an undated impairment of an investee, never posted, and an NCI
    // fair value of an investee, which has no NCI.
    let broken = broken.into_iter().chain([
        (
            "associate-losses-beyond-the-investment",
            "entities/acquisitions.csv",
            "1000,1000,0",
            "1000,1000,50",
            "ValueInvalid",
        ),
        (
            "associate-losses-beyond-the-investment",
            "entities/acquisitions.csv",
            "share_of_net_assets,,1000",
            "fair_value,70,1000",
            "ValueInvalid",
        ),
    ]);
    for (case, file, from, to, rule) in broken {
        let f = Folder::empty();
        let src = repo().join("tests/cases").join(case);
        for sub in ["entities", "rates"] {
            copy_tree(&src.join(sub), &f.path().join(sub));
        }
        if !from.is_empty() {
            f.replace(file, from, to);
        }
        let out = f.path().join("out");
        let (_, closed) = run_json(f.path(), &["close", "--period", "2026-01", "--out", out.to_str().unwrap()]);
        let (_, checked) = run_json(f.path(), &["check", "--period", "2026-01"]);
        let key = |x: &Value| (x["rule"].to_string(), x["line"].to_string(), x["message"].to_string());
        let listed: Vec<_> = checked["findings"].as_array().into_iter().flatten().map(key).collect();
        let found: Vec<_> = closed["findings"].as_array().into_iter().flatten().map(key).collect();
        assert!(found.iter().any(|k| k.0 == format!("{rule:?}")), "{case}: the close raises no {rule}: {closed:#}");
        // The losses of an investee not recognised (IAS 28.39) are a figure of the close,
        // shown as a warning, not a problem of the data that check could see.
        for k in found.iter().filter(|k| k.0 != "\"AssociateLossesUnrecognised\"") {
            assert!(listed.contains(k), "{case}: check does not list {k:?}; it lists {listed:?}");
        }
    }
}

/// The demo's top-side entry (docs/demo.md: EUR 85,000.00 of other operating expenses
/// booked in November in the ALD-US sub-group, naming BRW-US) against the same demo
/// without it: the month views show it in November only; the group's close and the
/// sub-group's both count it, BRW-US's NCI bearing 40% (34,000.00) in the group and
/// 25% (21,250.00) in the sub-group; booked as a group entry (scope ALD-NL) it leaves
/// the sub-group's close alone.
#[test]
fn a_top_side_entry_counts_in_its_month_and_its_scopes() {
    const FILE: &str = "entities/group_adjustments.csv";
    let with = Folder::demo();
    let without = Folder::demo();
    without.remove(FILE);
    let group = Folder::demo();
    let text = group.read(FILE).replace(",ALD-US,", ",ALD-NL,");
    group.write(FILE, &text);
    let close = |f: &Folder, period: &str, view: &str, entity: Option<&str>| -> Value {
        let out = f.path().join("out");
        let mut args = vec!["close", "--period", period, "--view", view, "--out", out.to_str().unwrap()];
        if let Some(e) = entity {
            args.extend(["--entity", e]);
        }
        let (code, v) = run_json(f.path(), &args);
        assert_eq!(code, 0, "{period} {view} {entity:?}: {:#}", v["proof"]);
        assert_eq!(v["proof"]["tied"], true, "{:#}", v["proof"]);
        v
    };
    let op = |v: &Value| statement_line(v, "profit_or_loss", "OP").unwrap();
    let nci_profit = |v: &Value| text_decimal(&v["attribution"]["profit_nci"]).unwrap();
    for (period, moved) in [("2026-10", "0"), ("2026-11", "85000"), ("2026-12", "0")] {
        let (a, b) = (close(&with, period, "month", None), close(&without, period, "month", None));
        assert_eq!(op(&b) - op(&a), d(moved), "{period}");
    }
    let (a, b) = (close(&with, "2026-12", "ytd", None), close(&without, "2026-12", "ytd", None));
    assert_eq!((op(&b) - op(&a), nci_profit(&b) - nci_profit(&a)), (d("85000"), d("34000")));
    assert_eq!(tb(&a, "2600") - tb(&b, "2600"), d("-85000"));
    let sub = |f: &Folder| close(f, "2026-12", "ytd", Some("ALD-US"));
    let (a, b, g) = (sub(&with), sub(&without), sub(&group));
    assert_eq!((op(&b) - op(&a), nci_profit(&b) - nci_profit(&a)), (d("85000"), d("21250")));
    assert_eq!((op(&g), nci_profit(&g)), (op(&b), nci_profit(&b)));
}

/// A long-term interest (IAS 28.38) on an account that is not an asset cannot be part of
/// the net investment: a blocking finding on its row of `long_term_interests.csv`,
/// which `check` lists too.
#[test]
fn a_long_term_interest_on_an_equity_account_is_a_finding() {
    let f = Folder::empty();
    let src = repo().join("tests/cases/associate-losses-long-term-loan");
    for sub in ["entities", "rates"] {
        copy_tree(&src.join(sub), &f.path().join(sub));
    }
    f.replace("entities/long_term_interests.csv", "P,L,1650,", "P,L,3000,");
    let out = f.path().join("out");
    let close = ["close", "--period", "2026-01", "--out", out.to_str().unwrap()];
    for args in [&close[..], &["check", "--period", "2026-01"]] {
        let command = args[0];
        let (code, v) = run_json(f.path(), args);
        assert_eq!(code, 1, "{command}: {v:#}");
        let found = v["findings"].as_array().unwrap().iter().find(|x| x["rule"] == "ValueInvalid");
        let found = found.unwrap_or_else(|| panic!("{command}: no ValueInvalid: {v:#}"));
        assert_eq!(found["file"], "entities/long_term_interests.csv", "{found:#}");
        assert_eq!(found["line"], 2, "{found:#}");
        assert!(found["message"].as_str().unwrap().contains("not an asset account"), "{found:#}");
    }
    // An investee whose ownership changes: the close does not carry the long-term
    // interest through a sale or a step to control, so the row blocks.
    f.replace("entities/long_term_interests.csv", "P,L,3000,", "P,L,1650,");
    f.write("entities/ownership_changes.csv", "date,holder,owned,share,consideration\n2026-01-15,P,L,-0.1,50\n");
    let (code, v) = run_json(f.path(), &["check", "--period", "2026-01"]);
    assert_eq!(code, 1, "{v:#}");
    let found = v["findings"].as_array().unwrap().iter().find(|x| {
        x["file"] == "entities/long_term_interests.csv"
            && x["message"].as_str().unwrap().contains("change in ownership")
    });
    assert!(found.is_some(), "{v:#}");
}

/// A joint operation (IFRS 11.20) held on an investment account: the close takes the
/// group's share of its lines but does not eliminate the investment against that share
/// of its equity, so the close blocks rather than count both (checked in `check` too).
#[test]
fn an_investment_in_a_joint_operation_blocks() {
    let f = Folder::empty();
    let src = repo().join("tests/cases/goodwill-share-of-net-assets");
    for sub in ["entities", "rates"] {
        copy_tree(&src.join(sub), &f.path().join(sub));
    }
    f.write(
        "entities/holdings.csv",
        "owner,owned,capital_share,voting_share,valid_from,arrangement\nP,S,0.5,0.5,2020-01-01,joint_operation\n",
    );
    let out = f.path().join("out");
    let close = ["close", "--period", "2026-01", "--out", out.to_str().unwrap()];
    for args in [&close[..], &["check", "--period", "2026-01"]] {
        let (code, v) = run_json(f.path(), args);
        assert_eq!(code, 1, "{}: {v:#}", args[0]);
        let found = v["findings"].as_array().unwrap().iter().find(|x| x["rule"] == "ValueInvalid");
        let found = found.unwrap_or_else(|| panic!("{}: no ValueInvalid: {v:#}", args[0]));
        assert_eq!(found["severity"], "blocking", "{found:#}");
        assert_eq!(found["entity"], "S", "{found:#}");
        assert!(found["message"].as_str().unwrap().contains("joint operation"), "{found:#}");
    }
}

/// A row of `reserves_at_acquisition.csv` on an account that is not a named reserve
/// would eliminate something else as equity acquired: blocking, on its line.
#[test]
fn a_reserve_at_acquisition_on_an_account_that_is_not_a_named_reserve_is_a_finding() {
    let f = Folder::empty();
    let src = repo().join("tests/cases/revaluation-reserve-given-at-acquisition");
    for sub in ["entities", "rates"] {
        copy_tree(&src.join(sub), &f.path().join(sub));
    }
    f.replace("entities/reserves_at_acquisition.csv", "S,3400,", "S,3000,");
    let out = f.path().join("out");
    let close = ["close", "--period", "2026-01", "--out", out.to_str().unwrap()];
    for args in [&close[..], &["check", "--period", "2026-01"]] {
        let (code, v) = run_json(f.path(), args);
        assert_eq!(code, 1, "{}: {v:#}", args[0]);
        let found = v["findings"].as_array().unwrap().iter().find(|x| x["rule"] == "AccountInvalid");
        let found = found.unwrap_or_else(|| panic!("{}: no AccountInvalid: {v:#}", args[0]));
        assert_eq!(found["file"], "entities/reserves_at_acquisition.csv", "{found:#}");
        assert_eq!(found["line"], 2, "{found:#}");
    }
}

//! The statement of cash flows (IAS 7) of `tessera close`: two small groups worked by
//! hand (an acquisition net of the cash acquired, from the illustrative example appended
//! to IAS 7; a foreign subsidiary's exchange effect on cash, IAS 7.25-28), the demo tied
//! to its change in cash for every month and view with an independent opening cash and
//! the views adding up month by month, the findings of `cash_flow_lines.csv`, and a
//! property test on generated groups.

use std::collections::BTreeMap;
use std::path::Path;

use proptest::prelude::*;
use rust_decimal::{Decimal, RoundingStrategy};
use serde_json::Value;

use crate::support::{Folder, run, run_json, settings};

fn dec(v: &Value) -> Decimal {
    v.as_str().and_then(|s| s.parse().ok()).unwrap_or_else(|| panic!("not a decimal string: {v}"))
}

fn d(s: &str) -> Decimal {
    s.parse().expect("decimal")
}

/// The line amounts of a close's statement of cash flows, by line id.
fn lines(v: &Value) -> BTreeMap<String, Decimal> {
    let mut out = BTreeMap::new();
    for s in v["statements"]["cash_flows"]["sections"].as_array().expect("sections") {
        for l in s["lines"].as_array().expect("lines") {
            out.insert(l["line"].as_str().expect("id").to_string(), dec(&l["amount"]));
        }
    }
    out
}

fn check<'a>(v: &'a Value, name: &str) -> &'a Value {
    v["proof"]["checks"]
        .as_array()
        .expect("checks")
        .iter()
        .find(|c| c["name"] == name)
        .unwrap_or_else(|| panic!("no check {name}: {:#}", v["proof"]))
}

fn close(dir: &Path, period: &str, view: &str, extra: &[&str]) -> Value {
    let (code, v) = close_any(dir, period, view, extra);
    assert_eq!(code, 0, "{period} {view}: {v:#}");
    v
}

/// A close whose exit code may be 1 for reasons of its own (an intercompany difference
/// not accepted, say); its statement of cash flows must still tie.
fn close_any(dir: &Path, period: &str, view: &str, extra: &[&str]) -> (i32, Value) {
    let out = dir.join("out");
    let mut args = vec!["close", "--period", period, "--view", view, "--out", out.to_str().expect("utf-8")];
    args.extend_from_slice(extra);
    let (code, v) = run_json(dir, &args);
    for name in ["cash_flows_reconcile", "cash_flow_lines_cover_movements"] {
        assert_eq!(check(&v, name)["ok"], true, "{period} {view}: {:#}", check(&v, name));
    }
    (code, v)
}

/// A chart with the accounts of the two worked examples, its layout and its lines.
const CHART: &str = "account,name,statement,class,basis,ic_kind,non_current
1000,Cash,balance_sheet,asset,closing,,
1100,Goodwill,balance_sheet,asset,closing,,true
1200,Property plant and equipment,balance_sheet,asset,closing,,true
1300,Investments in associates,balance_sheet,asset,closing,,true
1400,Investments in subsidiaries,balance_sheet,asset,closing,investment,true
1500,Inventories,balance_sheet,asset,closing,,
1600,Trade receivables,balance_sheet,asset,closing,,
2000,Trade payables,balance_sheet,liability,closing,,
2100,Long-term debt,balance_sheet,liability,closing,,
3000,Share capital,balance_sheet,equity,historical,,
3200,Retained earnings,balance_sheet,equity,historical,,
3300,Translation reserve,balance_sheet,equity,historical,,
3900,Non-controlling interests,balance_sheet,equity,historical,,
4000,Revenue,profit_or_loss,income,average,,
4900,Share of profit of associates,profit_or_loss,income,average,,
5000,Cost of sales,profit_or_loss,expense,average,,
6100,Depreciation,profit_or_loss,expense,average,,
6950,Intercompany differences,profit_or_loss,expense,average,,
8100,Exchange differences on translation,oci,income,average,,
";

const LAYOUT: &str = "statement,line,label,accounts,total_of,presentation
profit_or_loss,PROFIT,Profit for the period,4000..6999,,credit_positive
oci,OCI,Other comprehensive income,8100,,credit_positive
balance_sheet,TA,Total assets,1000..1999,,
balance_sheet,TEL,Total equity and liabilities,2000..3999,,credit_positive
equity_changes,SC,Share capital,3000,,credit_positive
equity_changes,RE,Retained earnings,3200,,credit_positive
equity_changes,TR,Translation reserve,3300,,credit_positive
equity_changes,NCI,Non-controlling interests,3900,,credit_positive
";

const LINES: &str = "account,section,line,label,against
4000,operating,profit_before_tax,Profit before tax,
4900,operating,profit_before_tax,Profit before tax,
5000,operating,profit_before_tax,Profit before tax,
6950,operating,profit_before_tax,Profit before tax,
6100,operating,depreciation,Depreciation,purchase_of_ppe
1500,operating,inventories,Decrease (increase) in inventories,
1600,operating,receivables,Decrease (increase) in trade receivables,
2000,operating,payables,Increase (decrease) in trade payables,
1200,investing,purchase_of_ppe,Purchase of property plant and equipment,
1300,investing,associates,Investments in associates,
1400,investing,acquisition_of_subsidiaries,Acquisition of subsidiary net of cash acquired,
2100,financing,borrowings,Proceeds from (repayment of) long-term borrowings,
3000,financing,shares,Proceeds from issue of shares,
3200,financing,dividends,Dividends paid,
3900,financing,dividends_nci,Dividends paid to non-controlling interests,
1100,exchange,translation,Translation,
3300,exchange,translation,Translation,
8100,exchange,translation,Translation,
1000,cash,cash,Cash,
";

/// A two-entity group in the test chart: `P` (EUR) and `S` in `currency`, held 100%
/// from `from`; each entity's opening balances and movements of 2026-01 and 2026-02.
fn group(currency: &str, from: &str, rates: &str, ledgers: [(&str, &str, &str, &str); 2], acquisition: &str) -> Folder {
    let f = Folder::empty();
    f.write("entities/group.toml", &settings("EUR", "P", "half_away_from_zero", "periodic"));
    f.write("entities/accounts.csv", CHART);
    f.write("entities/layouts.csv", LAYOUT);
    f.write("entities/cash_flow_lines.csv", LINES);
    f.write(
        "entities/entities.csv",
        &format!(
            "entity,name,country,currency\nP,Parent N.V.,NL,EUR\nS,Subsidiary,{},{currency}\n",
            if currency == "EUR" { "NL" } else { "US" }
        ),
    );
    f.write(
        "entities/holdings.csv",
        &format!("owner,owned,capital_share,voting_share,valid_from\nP,S,1.00,1.00,{from}\n"),
    );
    f.write(
        "entities/acquisitions.csv",
        &format!(
            "owned,date,consideration,nci_measurement,nci_fair_value,net_assets,net_assets_presentation,impairment\n{acquisition}\n"
        ),
    );
    f.write("rates/monthly.csv", &format!("period,currency,closing,average,quote\n{rates}"));
    let mut mapping = String::from("local_account,local_name,group_account\n");
    for line in CHART.lines().skip(1) {
        let a = line.split(',').next().expect("account");
        mapping.push_str(&format!("{a},,{a}\n"));
    }
    for (entity, (e, opening, jan, feb)) in ["P", "S"].iter().zip(ledgers) {
        assert_eq!(*entity, e);
        f.write(&format!("entities/{e}/mapping.csv"), &mapping);
        f.write(
            &format!("entities/{e}/opening.csv"),
            &format!("account,amount,counterparty,amount_presentation\n{opening}"),
        );
        f.write(
            &format!("entities/{e}/tb-2026-01.movements.csv"),
            &format!(
                "period,account,amount,counterparty\n{}",
                if jan.is_empty() { "2026-01,1000,0.00,\n" } else { jan }
            ),
        );
        f.write(
            &format!("entities/{e}/tb-2026-02.movements.csv"),
            &format!(
                "period,account,amount,counterparty\n{}",
                if feb.is_empty() { "2026-02,1000,0.00,\n" } else { feb }
            ),
        );
    }
    f
}

/// IAS 7, Illustrative Examples, A (statement of cash flows for an entity other than a
/// financial institution), note A "Acquisition of subsidiary" (figures recalled from
/// memory): the group acquires subsidiary X for a purchase price of 590 paid in cash;
/// the fair values acquired are cash 40, inventories 100, accounts receivable 100,
/// property, plant and equipment 650, trade payables (100) and long-term debt (200);
/// "cash paid to acquire subsidiary, net of cash acquired" is 590 - 40 = 550 (IAS
/// 7.39-42). Here X (`S`, acquired on 2026-02-01, no goodwill) then sells 200 on credit,
/// collects 150 and depreciates 10 in February; by hand, the indirect method gives
/// profit before tax 190, depreciation added back 10, receivables (50): operating 150;
/// investing (550), the depreciation taken out of the assets' movement so that no
/// purchase of equipment appears; cash 1,000 -> 600.
#[test]
fn acquisition_net_of_cash_acquired_ias7_illustrative_example() {
    let f = group(
        "EUR",
        "2026-02-01",
        "",
        [
            ("P", "1000,1000.00,,\n3000,-1000.00,,-1000.00\n", "", "2026-02,1400,590.00,S\n2026-02,1000,-590.00,\n"),
            (
                "S",
                "1000,40.00,,\n1500,100.00,,\n1600,100.00,,\n1200,650.00,,\n2000,-100.00,,\n2100,-200.00,,\n3000,-590.00,,-590.00\n",
                "",
                "2026-02,1600,50.00,\n2026-02,4000,-200.00,\n2026-02,1000,150.00,\n2026-02,6100,10.00,\n2026-02,1200,-10.00,\n",
            ),
        ],
        "S,2026-02-01,590.00,share_of_net_assets,,590.00,590.00,0",
    );
    let v = close(f.path(), "2026-02", "ytd", &[]);
    let l = lines(&v);
    let cf = &v["statements"]["cash_flows"];
    assert_eq!(l["acquisition_of_subsidiaries"], d("-550.00"), "IAS 7 IE A note A: 590 - 40 = 550 paid, net");
    assert_eq!(cf["acquisitions"][0]["consideration"], "590.00");
    assert_eq!(cf["acquisitions"][0]["cash_acquired"], "40.00");
    assert_eq!(l["profit_before_tax"], d("190.00"), "by hand: revenue 200 - depreciation 10");
    assert_eq!(l["depreciation"], d("10.00"));
    assert_eq!(l["receivables"], d("-50.00"), "by hand: 200 invoiced - 150 collected");
    // The acquired balances are not working-capital movements.
    assert_eq!(l["inventories"], d("0.00"));
    assert_eq!(l["payables"], d("0.00"));
    assert_eq!(l["purchase_of_ppe"], d("0.00"), "depreciation is not an investing flow");
    assert_eq!(l["borrowings"], d("0.00"), "the debt assumed is not a financing inflow");
    assert_eq!(dec(&cf["sections"][0]["total"]), d("150.00"));
    assert_eq!(dec(&cf["cash_opening"]), d("1000.00"));
    assert_eq!(dec(&cf["net_change"]), d("-400.00"));
    assert_eq!(dec(&cf["cash_closing"]), d("600.00"), "410 at P + 40 acquired + 150 collected");
    // A view that starts after the acquisition has no acquisition line.
    let v = close(f.path(), "2026-01", "ytd", &[]);
    assert!(!lines(&v).contains_key("acquisition_of_subsidiaries"));
}

/// IAS 7.25-28 worked by hand (not a published example): a USD subsidiary holds USD
/// 1,000 of cash at the opening (closing rate 1.25 USD per EUR: EUR 800.00) and sells
/// USD 500 for cash in January (average 1.20, closing 1.10). The flow is its average
/// translation, 500 / 1.20 = 416.67 (IAS 7.26-27); the cash is 1,500 / 1.10 = 1,363.64 at
/// the end, so the effect of exchange rate changes on cash is 1,363.64 - 800.00 -
/// 416.67 = 146.97 = 1,000 x (1/1.10 - 1/1.25) + 500 x (1/1.10 - 1/1.20), and none of it
/// is an operating flow (IAS 7.28). In February nothing happens but the rate (closing
/// 1.00): the whole change in cash, 1,500 - 1,363.64 = 136.36, is exchange.
#[test]
fn foreign_subsidiary_exchange_effect_on_cash_ias7_28() {
    let f = group(
        "USD",
        "2020-01-01",
        "2025-12,USD,1.25,1.25,units_per_presentation\n2026-01,USD,1.10,1.20,units_per_presentation\n2026-02,USD,1.00,1.05,units_per_presentation\n",
        [
            ("P", "1000,200.00,,\n1400,800.00,S,\n3000,-1000.00,,-1000.00\n", "", ""),
            ("S", "1000,1000.00,,\n3000,-1000.00,,-800.00\n", "2026-01,1000,500.00,\n2026-01,4000,-500.00,\n", ""),
        ],
        "S,2020-01-01,1000.00,share_of_net_assets,,1000.00,800.00,0",
    );
    let v = close(f.path(), "2026-01", "ytd", &[]);
    let cf = &v["statements"]["cash_flows"];
    assert_eq!(lines(&v)["profit_before_tax"], d("416.67"));
    assert_eq!(dec(&cf["sections"][0]["total"]), d("416.67"), "the flow at the average rate");
    assert_eq!(dec(&cf["exchange"]["total"]), d("146.97"));
    assert_eq!(dec(&cf["exchange"]["on_cash"]), d("146.97"), "all of it on cash held and the flow");
    assert_eq!(dec(&cf["exchange"]["residue"]), d("0.00"));
    assert_eq!(dec(&cf["cash_opening"]), d("1000.00"), "200 at P + 800 at S");
    assert_eq!(dec(&cf["cash_closing"]), d("1563.64"));
    let v = close(f.path(), "2026-02", "month", &[]);
    let cf = &v["statements"]["cash_flows"];
    assert_eq!(dec(&cf["net_change"]), d("0.00"), "no flow in February");
    assert_eq!(dec(&cf["exchange"]["total"]), d("136.36"));
    assert_eq!(dec(&cf["cash_closing"]), d("1700.00"));
}

fn periods() -> Vec<String> {
    (1..=12).map(|m| format!("2026-{m:02}")).collect()
}

/// The demo's cash at the opening, from the files alone: every consolidated entity's
/// local accounts mapped to 1800, summed, at the 2025-12 closing rate (units per EUR),
/// rounded half away from zero to the cent. GLF-BH is not yet held; HEL-CH is an
/// associate.
fn demo_opening_cash() -> Decimal {
    let root = crate::support::repo();
    let rates = std::fs::read_to_string(root.join("rates/monthly.csv")).expect("rates");
    let mut closing: BTreeMap<String, Decimal> = BTreeMap::new();
    for l in rates.lines().skip(1) {
        let c: Vec<&str> = l.split(',').collect();
        if c[0] == "2025-12" {
            closing.insert(c[1].to_string(), d(c[2]));
        }
    }
    let entities = std::fs::read_to_string(root.join("entities/entities.csv")).expect("entities");
    let mut total = Decimal::ZERO;
    for l in entities.lines().skip(1) {
        let c: Vec<&str> = l.split(',').collect();
        let (e, ccy) = (c[0], c[3]);
        if e == "GLF-BH" || e == "HEL-CH" {
            continue;
        }
        let mapping = std::fs::read_to_string(root.join(format!("entities/{e}/mapping.csv"))).expect("mapping");
        let cash: Vec<&str> = mapping
            .lines()
            .skip(1)
            .filter(|l| l.rsplit(',').next() == Some("1800"))
            .filter_map(|l| l.split(',').next())
            .collect();
        // The 2026 opening: beside the demo's prior year 2025 it is opening-2026-01.csv.
        let dated = root.join(format!("entities/{e}/opening-2026-01.csv"));
        let path = if dated.exists() { dated } else { root.join(format!("entities/{e}/opening.csv")) };
        let opening = std::fs::read_to_string(path).expect("opening");
        let local: Decimal = opening
            .lines()
            .skip(1)
            .map(|l| l.split(',').collect::<Vec<_>>())
            .filter(|c| cash.contains(&c[0]))
            .map(|c| d(c[1]))
            .sum();
        total += if ccy == "EUR" {
            local
        } else {
            (local / closing[ccy]).round_dp_with_strategy(2, RoundingStrategy::MidpointAwayFromZero)
        };
    }
    total
}

/// The demo ties in every month under every view; the opening cash is the files' own;
/// each view's cash at the end is the group trial balance's cash; profit before tax is the
/// statement of profit or loss's; and, flows being translated month by month, every line
/// of a quarter or of the year to date is the sum of the same line of its months.
#[test]
fn demo_ties_for_every_month_and_view() {
    let f = Folder::demo();
    let mut months: Vec<BTreeMap<String, Decimal>> = Vec::new();
    let mut exchange_months: Vec<Decimal> = Vec::new();
    for (i, p) in periods().iter().enumerate() {
        let mut views = BTreeMap::new();
        for view in ["month", "qtd", "ytd"] {
            let v = close(f.path(), p, view, &[]);
            let cf = &v["statements"]["cash_flows"];
            let tb_cash = v["group_trial_balance"]
                .as_array()
                .expect("tb")
                .iter()
                .find(|r| r["account"] == "1800")
                .map(|r| dec(&r["amount"]))
                .expect("cash in the group trial balance");
            assert_eq!(dec(&cf["cash_closing"]), tb_cash, "{p} {view}");
            let pbt = v["statements"]["profit_or_loss"]["lines"]
                .as_array()
                .expect("lines")
                .iter()
                .find(|l| l["line"] == "PBT")
                .map(|l| dec(&l["amount"]))
                .expect("PBT");
            assert_eq!(lines(&v)["profit_before_tax"], pbt, "{p} {view}");
            if view == "ytd" {
                assert_eq!(dec(&cf["cash_opening"]), demo_opening_cash(), "{p}: opening cash from the files");
            }
            views.insert(view, (lines(&v), dec(&cf["exchange"]["total"])));
        }
        let (month, fx) = views["month"].clone();
        months.push(month);
        exchange_months.push(fx);
        let add_up = |from: usize| -> (BTreeMap<String, Decimal>, Decimal) {
            let mut sum: BTreeMap<String, Decimal> = BTreeMap::new();
            for m in &months[from..=i] {
                for (k, x) in m {
                    *sum.entry(k.clone()).or_default() += *x;
                }
            }
            (sum, exchange_months[from..=i].iter().copied().sum())
        };
        for (view, from) in [("ytd", 0), ("qtd", i - i % 3)] {
            let (sum, fx) = add_up(from);
            let (got, got_fx) = &views[view];
            for (k, x) in got {
                assert_eq!(*x, sum.get(k).copied().unwrap_or_default(), "{p} {view} line {k}: the sum of its months");
            }
            assert_eq!(*got_fx, fx, "{p} {view}: exchange line is the sum of its months");
        }
    }
    // The sub-groups tie as well, in the month of the dividend to ALD-US's outside
    // shareholders and for the year.
    for root in ["ALD-US", "BRW-US", "ALD-UK"] {
        for (p, view) in [("2026-10", "month"), ("2026-12", "ytd")] {
            close(f.path(), p, view, &["--entity", root]);
        }
    }
}

/// The demo's acquisition and NCI dividend, on their lines (the demo's own figures, see
/// docs/demo.md): EUR 3,600,000.00 paid for GLF-BH less the cash it held at 2026-03-31,
/// which is its translated cash at March's closing rate; ALD-US's USD 300,000 to its
/// outside shareholders, paid in October, at October's average.
#[test]
fn demo_acquisition_and_nci_dividend() {
    let f = Folder::demo();
    let v = close(f.path(), "2026-04", "month", &[]);
    let cf = &v["statements"]["cash_flows"];
    let acq = &cf["acquisitions"][0];
    assert_eq!(acq["entity"], "GLF-BH");
    assert_eq!(acq["consideration"], "3600000.00", "paid in cash on 2026-04-01 (docs/demo.md)");
    assert_eq!(lines(&v)["acquisition_of_subsidiaries"], dec(&acq["cash_acquired"]) - d("3600000.00"));
    let v = close(f.path(), "2026-10", "month", &[]);
    let rates = std::fs::read_to_string(crate::support::repo().join("rates/monthly.csv")).expect("rates");
    let average = rates
        .lines()
        .map(|l| l.split(',').collect::<Vec<_>>())
        .find(|c| c[0] == "2026-10" && c[1] == "USD")
        .map(|c| d(c[3]))
        .expect("October USD");
    let paid = (d("300000") / average).round_dp_with_strategy(2, RoundingStrategy::MidpointAwayFromZero);
    let nci = lines(&v)["dividends_paid_nci"];
    // October holds only the payment of the payable (declared in September).
    assert_eq!(nci, -paid, "USD 300,000 / {average}");
}

/// `check` on broken copies of the demo's cash_flow_lines.csv: a moving account without
/// a line, an unknown account, one line with two labels, `against` on a balance-sheet
/// account.
#[test]
fn cash_flow_lines_findings() {
    let f = Folder::demo();
    let rel = "entities/cash_flow_lines.csv";
    f.replace(rel, "1600,operating,trade_receivables,Decrease (increase) in trade receivables,,\n", "");
    f.append(rel, "9999,operating,other,Other,,");
    f.replace(rel, "2500,operating,income_taxes_paid,Income taxes paid,,", "2500,operating,income_taxes_paid,Taxes,,");
    f.replace(
        rel,
        "1000,investing,purchase_of_ppe,Purchase of property plant and equipment and intangible assets,,",
        "1000,investing,purchase_of_ppe,Purchase of property plant and equipment and intangible assets,depreciation,",
    );
    let (code, v) = run_json(f.path(), &["check"]);
    assert_eq!(code, 1);
    let found: Vec<(String, String)> = v["findings"]
        .as_array()
        .expect("findings")
        .iter()
        .map(|x| {
            (x["rule"].as_str().unwrap_or_default().to_string(), x["account"].as_str().unwrap_or_default().to_string())
        })
        .collect();
    for want in [
        ("CashFlowLineMissing", "1600"),
        ("AccountUnknown", "9999"),
        ("ValueInvalid", "2500"),
        ("ValueInvalid", "1000"),
    ] {
        assert!(found.contains(&(want.0.to_string(), want.1.to_string())), "{want:?} not in {found:?}");
    }
    // Without the file there is no statement, and the close still ties.
    f.remove(rel);
    let out = f.path().join("out");
    let (code, v) = run_json(f.path(), &["close", "--out", out.to_str().expect("utf-8")]);
    assert_eq!(code, 0);
    assert!(v["statements"].get("cash_flows").is_none());
}

/// Every account of a generated group's chart on a line by its kind: cash, the
/// translation accounts and goodwill as exchange, income tax apart, the rest of profit or
/// loss in profit before tax, non-current assets investing, other assets and liabilities
/// operating, equity financing.
fn classify_generated(dir: &Path) {
    let chart = std::fs::read_to_string(dir.join("entities/accounts.csv")).expect("chart");
    let code = |x: u32| x.to_string();
    let mut out = String::from("account,section,line,label,against\n");
    for l in chart.lines().skip(1) {
        let c: Vec<&str> = l.split(',').collect();
        let (a, statement, class, non_current) = (c[0], c[2], c[3], c[6] == "true");
        let row = if a == code(tessera::generate::CASH) {
            "cash,cash,Cash"
        } else if [tessera::generate::GOODWILL, tessera::generate::TRANSLATION_RESERVE]
            .map(code)
            .contains(&a.to_string())
            || statement == "oci"
        {
            "exchange,translation,Translation"
        } else if a == code(tessera::generate::INCOME_TAX) {
            "operating,taxes,Income taxes paid"
        } else if statement == "profit_or_loss" {
            "operating,profit_before_tax,Profit before tax"
        } else if class == "equity" {
            "financing,equity,Equity"
        } else if class == "asset" && non_current {
            "investing,non_current,Non-current assets"
        } else {
            "operating,working_capital,Working capital"
        };
        out.push_str(&format!("{a},{row},\n"));
    }
    std::fs::write(dir.join("entities/cash_flow_lines.csv"), out).expect("write lines");
}

proptest! {
    #![proptest_config(ProptestConfig { cases: 3, ..ProptestConfig::default() })]

    /// On random generated groups (several currencies, NCI, associates, an acquisition
    /// during the year, intercompany pairs), the statement ties to the change in cash in
    /// every view of every month.
    #[test]
    fn statement_ties_on_generated_groups(seed in 0u64..1_000_000) {
        let f = Folder::empty();
        let out = f.path().to_str().expect("utf-8 path").to_string();
        let (code, text) = run(&[
            "generate", "--entities=12", "--accounts=40", "--used=30", "--months=4",
            &format!("--seed={seed}"), "--documents=0", &format!("--out={out}"),
        ]);
        prop_assert_eq!(code, 0, "{}", text);
        classify_generated(f.path());
        crate::generate::accept_planted(f.path());
        let (code, v) = run_json(f.path(), &["check"]);
        prop_assert_eq!(code, 0, "{:#}", v["findings"]);
        for p in ["2026-01", "2026-02", "2026-03", "2026-04"] {
            for view in ["month", "qtd", "ytd"] {
                close_any(f.path(), p, view, &["--draft"]);
            }
        }
    }
}

/// Under the other policies (year-to-date income translation, IFRIC 16 step by step,
/// half-even rounding) and with BRW-MX hyperinflationary from June (IAS 21.42: its flows
/// at the closing rate), the demo still ties in every view around the change.
#[test]
fn demo_ties_under_other_policies_and_hyperinflation() {
    let f = Folder::demo();
    let toml = "entities/group.toml";
    f.replace(toml, "income_translation = \"periodic\"", "income_translation = \"year_to_date\"");
    f.replace(toml, "ifric16 = \"direct\"", "ifric16 = \"step_by_step\"");
    f.replace(toml, "rounding = \"half_away_from_zero\"", "rounding = \"half_even\"");
    f.replace("entities/entities.csv", "MX,MXN,Americas,Instruments,", "MX,MXN,Americas,Instruments,2026-06");
    for p in ["2026-05", "2026-06", "2026-09", "2026-12"] {
        for view in ["month", "qtd", "ytd"] {
            close_any(f.path(), p, view, &["--draft"]);
        }
    }
}

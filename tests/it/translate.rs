//! Translation (IAS 21) against published examples, policies and a property test.

use crate::support::{CHART, Folder, LAYOUT, identity_mapping, run_json, settings};

/// A parent in EUR and one wholly owned subsidiary in `ccy`, with the given opening
/// balance, one month of movements and rates (units of `ccy` per EUR).
struct Case {
    ccy: &'static str,
    opening: &'static str,
    tb: &'static str,
    rates: String,
    rounding: &'static str,
    income: &'static str,
}

fn build(c: &Case) -> Folder {
    let f = Folder::empty();
    f.write("entities/group.toml", &settings("EUR", "P", c.rounding, c.income));
    f.write(
        "entities/entities.csv",
        &format!("entity,name,country,currency\nP,Parent,NL,EUR\nS,Subsidiary,US,{}\n", c.ccy),
    );
    f.write("entities/holdings.csv", "owner,owned,capital_share,voting_share,valid_from\nP,S,1,1,2020-01-01\n");
    f.write("entities/accounts.csv", CHART);
    f.write("entities/layouts.csv", LAYOUT);
    for e in ["P", "S"] {
        f.write(&format!("entities/{e}/mapping.csv"), &identity_mapping());
    }
    f.write("entities/P/opening.csv", "account,amount,amount_presentation\n1000,100.00,\n3000,-100.00,-100.00\n");
    f.write("entities/P/tb-2026-01.movements.csv", "period,account,amount\n2026-01,1000,0.00\n");
    f.write("entities/S/opening.csv", c.opening);
    f.write("entities/S/tb-2026-01.movements.csv", c.tb);
    f.write("rates/monthly.csv", &c.rates);
    f
}

fn dec(v: &serde_json::Value) -> String {
    v.as_str().unwrap_or_else(|| panic!("not a decimal string: {v}")).to_string()
}

fn entity<'a>(report: &'a serde_json::Value, id: &str) -> &'a serde_json::Value {
    report["entities"].as_array().expect("entities").iter().find(|e| e["entity"] == id).expect("entity in report")
}

fn line<'a>(e: &'a serde_json::Value, account: &str) -> &'a serde_json::Value {
    e["lines"]
        .as_array()
        .expect("lines")
        .iter()
        .find(|l| l["account"] == account)
        .unwrap_or_else(|| panic!("line {account}"))
}

/// IFRScommunity.com, "IAS 21 The Effects of Changes in Foreign Exchange Rates" (basic
/// translation example of a foreign subsidiary): USD subsidiary, EUR group, USD per EUR
/// opening 1.1, average 1.2, closing 1.3; net assets 2,000 -> 2,300, share capital 2,000,
/// profit 300 (revenue 1,000, expenses 700). Published: opening net assets 1,818,
/// closing 1,769, profit 250, translation difference -299 = -280 on opening net assets
/// and -19 on profit (unrounded -298.95 = -279.72 - 19.23). The article rounds to whole
/// euros; tessera rounds to cents, so the cent figures are compared with its unrounded ones.
#[test]
fn basic_translation_example_of_ifrscommunity() {
    let f = build(&Case {
        ccy: "USD",
        opening: "account,amount,amount_presentation\n1000,2000.00,\n3000,-2000.00,-1818.18\n",
        tb: "period,account,amount\n2026-01,1000,300.00\n2026-01,4000,-1000.00\n2026-01,5000,700.00\n",
        rates: "period,currency,closing,average,quote\n2025-12,USD,1.1,1.1,units_per_presentation\n\
                2026-01,USD,1.3,1.2,units_per_presentation\n"
            .to_string(),
        rounding: "half_away_from_zero",
        income: "periodic",
    });
    let (code, r) = run_json(f.path(), &["translate", "--period", "2026-01"]);
    assert_eq!(code, 0, "{r}");
    assert_eq!(r["proof"]["tied"], true);
    let s = entity(&r, "S");
    // Closing net assets 2,300 / 1.3 = 1,769.23 (published 1,769).
    assert_eq!(dec(&line(s, "1000")["balance_presentation"]), "1769.23");
    // Profit 1,000 / 1.2 - 700 / 1.2 = 833.33 - 583.33 = 250.00 (published 250).
    assert_eq!(dec(&line(s, "4000")["amount_presentation"]), "-833.33");
    assert_eq!(dec(&line(s, "5000")["amount_presentation"]), "583.33");
    let m = &s["month"];
    // Published split: -279.72 on opening net assets, -19.23 on profit, -298.95 in all.
    assert_eq!(dec(&m["on_opening_net_assets"]), "-279.72");
    assert_eq!(dec(&m["on_profit"]), "-19.23");
    assert_eq!(dec(&m["total"]), "-298.95");
    assert_eq!(dec(&m["rounding"]), "0.00");
}

/// `tessera rates` turns the euro system's reference rates (fixture, see
/// tests/fixtures/ecb/README.md) into the rates file that check and translate accept.
#[test]
fn rates_command_writes_a_file_the_close_reads() {
    let f = build(&Case {
        ccy: "USD",
        opening: "account,amount,amount_presentation\n1000,2000.00,\n3000,-2000.00,-1818.18\n",
        tb: "period,account,amount\n2026-01,1000,300.00\n2026-01,4000,-1000.00\n2026-01,5000,700.00\n",
        rates: String::new(),
        rounding: "half_away_from_zero",
        income: "periodic",
    });
    let fixture = crate::support::repo().join("tests/fixtures/ecb/eurofxref-2025-12_2026-03.csv");
    let target = f.path().join("rates/monthly.csv");
    let (code, v) = run_json(
        f.path(),
        &[
            "rates",
            "--daily",
            fixture.to_str().unwrap(),
            "--months",
            "2025-12..2026-01",
            "--out",
            target.to_str().unwrap(),
        ],
    );
    assert_eq!(code, 0, "{v:#}");
    let text = f.read("rates/monthly.csv");
    assert!(text.starts_with("period,currency,closing,average,average_ytd,quote,source\n"), "{text}");
    assert!(text.contains("2026-01,USD,"), "{text}");
    let (code, r) = run_json(f.path(), &["translate", "--period", "2026-01"]);
    assert_eq!(code, 0, "{r:#}");
    assert_eq!(r["proof"]["tied"], true);
}

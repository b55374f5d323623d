//! Translation (IAS 21) against published examples, policies and a property test.

use crate::support::{CHART, Folder, LAYOUT, ias29_chart, ias29_settings, identity_mapping, run_json, settings};

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

/// `build`, with the subsidiary hyperinflationary from a period and the parent's
/// (empty) deliveries through `last`.
fn build_through(c: &Case, hyper_from: &str, months: &[&str]) -> Folder {
    let f = build(c);
    f.write(
        "entities/entities.csv",
        &format!(
            "entity,name,country,currency,hyperinflationary_from\nP,Parent,NL,EUR,\nS,Subsidiary,AR,{},{hyper_from}\n",
            c.ccy
        ),
    );
    let mut tb = String::from("period,account,amount\n");
    for m in months {
        tb.push_str(&format!("{m},1000,0.00\n"));
    }
    f.write("entities/P/tb-2026-01.movements.csv", &tb);
    if !hyper_from.is_empty() {
        // What the IAS 29 restatement needs besides the price index: the chart's
        // monetary column and the net monetary position's account.
        f.write("entities/accounts.csv", &ias29_chart());
        f.write("entities/group.toml", &ias29_settings(&settings("EUR", "P", c.rounding, c.income)));
    }
    f
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

/// Both income policies on the same two months (IAS 21.39b, 21.40: the average rate
/// approximates the rates of the transaction dates; which average is a policy). Revenue
/// USD 1,000 in January and again in February; USD per EUR average 1.25 in January, 2.00
/// in February, 1.60 from January to February (invented rates, arithmetic by hand):
/// periodic: 1,000 / 1.25 + 1,000 / 2.00 = 800.00 + 500.00 = 1,300.00 year to date;
/// year to date: 2,000 / 1.60 = 1,250.00, of which February 1,250.00 - 800.00 = 450.00.
/// Cash USD 2,000 at closing 2.00 = 1,000.00 either way, so the translation difference
/// of February is -(1,000.00 - 800.00 - 500.00) = +300.00 (a loss, debit) periodic and
/// -(1,000.00 - 800.00 - 450.00) = +250.00 year to date.
#[test]
fn income_policies_periodic_and_year_to_date() {
    let rates = "period,currency,closing,average,average_ytd,quote\n\
                 2025-12,USD,1.25,1.25,1.25,units_per_presentation\n\
                 2026-01,USD,1.25,1.25,1.25,units_per_presentation\n\
                 2026-02,USD,2.00,2.00,1.60,units_per_presentation\n";
    let tb = "period,account,amount\n2026-01,1000,1000.00\n2026-01,4000,-1000.00\n\
              2026-02,1000,1000.00\n2026-02,4000,-1000.00\n";
    let mut out = Vec::new();
    for income in ["periodic", "year_to_date"] {
        let f = build_through(
            &Case {
                ccy: "USD",
                opening: "account,amount,amount_presentation\n3000,0.00,0.00\n",
                tb,
                rates: rates.to_string(),
                rounding: "half_away_from_zero",
                income,
            },
            "",
            &["2026-01", "2026-02"],
        );
        let (code, r) = run_json(f.path(), &["translate", "--period", "2026-02"]);
        assert_eq!(code, 0, "{r:#}");
        assert_eq!(r["proof"]["tied"], true);
        let s = entity(&r, "S");
        assert_eq!(dec(&line(s, "1000")["balance_presentation"]), "1000.00");
        out.push((
            dec(&line(s, "4000")["balance_presentation"]),
            dec(&line(s, "4000")["amount_presentation"]),
            dec(&s["month"]["total"]),
            dec(&s["month"]["on_profit"]),
        ));
    }
    // Periodic: February's profit at its own average, which is also its closing rate:
    // 1,000 / 2.00 - 1,000 / 2.00 = 0 on profit; the loss is all on February's opening
    // net assets (January's cash): 1,000 x (1/2.00 - 1/1.25) = -300.00.
    assert_eq!(out[0], ("-1300.00".into(), "-500.00".into(), "-300.00".into(), "0.00".into()));
    // Year to date: February's profit as translated is 450.00, at closing 500.00: +50.00 on
    // profit, and -300.00 on the opening net assets again: -250.00 in all.
    assert_eq!(out[1], ("-1250.00".into(), "-450.00".into(), "-250.00".into(), "50.00".into()));
}

/// Ties at half a cent under both rounding modes, and the residue in the translation
/// difference (IAS 21.39c; rounding once per translated balance is common practice).
/// A JPY subsidiary at 0.005 EUR per JPY: JPY 533 is EUR 2.665 exactly, a tie. Expected
/// roundings from Python's `decimal` module (CPython 3.11.7):
/// `Decimal('2.665').quantize(Decimal('0.01'), ROUND_HALF_UP)` = 2.67, with
/// `ROUND_HALF_EVEN` = 2.66, and -2.665 -> -2.67 / -2.66.
/// Opening cash 533 -> 2.67 / 2.66 against share capital brought forward at 2.67 (the
/// opening reserve: 0.00 / +0.01 debit). January: revenue 533 at average 0.005 ->
/// -2.67 / -2.66, cash 1,066 at closing 0.005 = 5.33 exactly, so the month's
/// translated movements are (5.33 - 2.67) - 2.67 = -0.01 and (5.33 - 2.66) - 2.66 =
/// +0.01: a translation difference of -0.01 / +0.01 gains positive, all of it rounding
/// (no rate moved).
#[test]
fn rounding_ties_at_half_in_both_modes() {
    let mut got = Vec::new();
    for rounding in ["half_away_from_zero", "half_even"] {
        let f = build(&Case {
            ccy: "JPY",
            opening: "account,amount,amount_presentation\n1000,533,\n3000,-533,-2.67\n",
            tb: "period,account,amount\n2026-01,1000,533\n2026-01,4000,-533\n",
            rates: "period,currency,closing,average,quote\n2025-12,JPY,0.005,0.005,presentation_per_unit\n\
                    2026-01,JPY,0.005,0.005,presentation_per_unit\n"
                .to_string(),
            rounding,
            income: "periodic",
        });
        let (code, r) = run_json(f.path(), &["translate", "--period", "2026-01"]);
        assert_eq!(code, 0, "{r:#}");
        assert_eq!(r["proof"]["tied"], true);
        let s = entity(&r, "S");
        let m = &s["month"];
        assert_eq!(dec(&m["on_opening_net_assets"]), "0.00");
        assert_eq!(dec(&m["on_profit"]), "0.00");
        got.push((dec(&line(s, "4000")["amount_presentation"]), dec(&m["rounding"]), dec(&m["total"])));
    }
    assert_eq!(got[0], ("-2.67".into(), "-0.01".into(), "-0.01".into()));
    assert_eq!(got[1], ("-2.66".into(), "0.01".into(), "0.01".into()));
}

/// A hyperinflationary subsidiary (IAS 21.42(a)): from the first hyperinflationary period
/// every item, equity and income included, is translated at the closing rate, after the
/// IAS 29 restatement. Invented ARS figures, worked by hand: opening cash 1,000 and share
/// capital 1,000 brought forward at EUR 80.00; ARS per EUR 10 at the opening, 20 at
/// January's close, 15 average; price index 100 at the opening, 125 at January's end.
/// Restated (IAS 29.12, 29.25-28): cash 1,400 kept; share capital 1,000 x 1.25 = 1,250;
/// January revenue 400 as recorded; the net monetary asset of 1,000 held while prices
/// rose 25% loses 250 (1,400 - 1,250 - 400 = -250, balanced by a debit of 250).
/// Translated at 20: cash 70.00, share capital -62.50, revenue -20.00 (not -400 / 15 =
/// -26.67), the loss 12.50. The month's translated movements: (70.00 - 100.00) +
/// (-62.50 + 80.00) - 20.00 + 12.50 = -20.00, so the translation difference is +20.00
/// debit, -20.00 gains positive, all of it the hyperinflation line: the translated
/// balances of the month before (100.00 - 80.00 = 20.00) released.
#[test]
fn hyperinflationary_entity_at_closing_rate_throughout() {
    let f = build_through(
        &Case {
            ccy: "ARS",
            opening: "account,amount,amount_presentation\n1000,1000.00,\n3000,-1000.00,-80.00\n",
            tb: "period,account,amount\n2026-01,1000,400.00\n2026-01,4000,-400.00\n",
            rates: "period,currency,closing,average,quote\n2025-12,ARS,10,10,units_per_presentation\n\
                    2026-01,ARS,20,15,units_per_presentation\n"
                .to_string(),
            rounding: "half_away_from_zero",
            income: "periodic",
        },
        "2026-01",
        &["2026-01"],
    );
    f.write("rates/price_index.csv", "currency,period,index\nARS,2025-12,100\nARS,2026-01,125\n");
    let (code, r) = run_json(f.path(), &["translate", "--period", "2026-01"]);
    assert_eq!(code, 0, "{r:#}");
    assert_eq!(r["proof"]["tied"], true);
    let s = entity(&r, "S");
    assert_eq!(dec(&line(s, "1000")["balance_presentation"]), "70.00");
    assert_eq!(dec(&line(s, "3000")["balance_presentation"]), "-62.50");
    assert_eq!(dec(&line(s, "3000")["balance_local"]), "-1250.00");
    assert_eq!(dec(&line(s, "5150")["balance_local"]), "250.00");
    assert_eq!(dec(&line(s, "5150")["balance_presentation"]), "12.50");
    assert_eq!(line(s, "3000")["rate_kind"], "closing");
    assert_eq!(dec(&line(s, "4000")["balance_presentation"]), "-20.00");
    assert_eq!(line(s, "4000")["rate_kind"], "closing");
    let m = &s["month"];
    assert_eq!(dec(&m["on_hyperinflation"]), "-20.00");
    assert_eq!(dec(&m["rounding"]), "0.00");
    assert_eq!(dec(&m["total"]), "-20.00");
    assert_eq!(dec(&m["on_profit"]), "0.00");
    // The statement of cash flows would take the restatement of the equity (1,000 ->
    // 1,250) and the net monetary position as flows: with one, the close blocks, and
    // says so, rather than present them (IAS 29.33 with IAS 7).
    let (code, v) = run_json(f.path(), &["check", "--period", "2026-01"]);
    assert_eq!(code, 0, "{v:#}");
    f.write(
        "entities/cash_flow_lines.csv",
        "account,section,line,label,against,note
4000,operating,profit_before_tax,Profit before tax,,
",
    );
    let (code, v) = run_json(f.path(), &["check", "--period", "2026-01"]);
    assert_eq!(code, 1, "{v:#}");
    let said = v["findings"].as_array().unwrap().iter().any(|x| {
        x["rule"] == "RestatementUnsupported"
            && x["entity"] == "S"
            && x["message"].as_str().unwrap().contains("statement of cash flows")
    });
    assert!(said, "{:#}", v["findings"]);
}

/// The explanation of a hyperinflationary entity's translation difference, on the case
/// `hyperinflation-begins-mid-year-ias29` (worked by hand in its SOURCE.md from IAS
/// 21.39-42 and IAS 29): January, before hyperinflation, splits as usual into (30.00) on
/// the opening net assets and (3.30) on profit; February, restated and all at closing,
/// releases January's translated balances: a gain of 33.30, the cause `hyperinflation`.
#[test]
fn hyperinflation_beginning_in_the_year_releases_the_earlier_translation() {
    let dir = std::path::Path::new(env!("CARGO_MANIFEST_DIR")).join("tests/cases/hyperinflation-begins-mid-year-ias29");
    let (code, r) = run_json(&dir, &["translate", "--period", "2026-02"]);
    assert_eq!(code, 0, "{r:#}");
    assert_eq!(r["proof"]["tied"], true);
    let p = entity(&r, "P");
    let (m, y) = (&p["month"], &p["year_to_date"]);
    assert_eq!(dec(&m["on_hyperinflation"]), "33.30");
    assert_eq!(dec(&m["on_opening_net_assets"]), "0.00");
    assert_eq!(dec(&m["rounding"]), "0.00");
    assert_eq!(dec(&m["total"]), "33.30");
    assert_eq!(dec(&y["on_opening_net_assets"]), "-30.00");
    assert_eq!(dec(&y["on_profit"]), "-3.30");
    assert_eq!(dec(&y["total"]), "0.00");
    assert_eq!(dec(&line(p, "1200")["balance_local"]), "2200.00");
    // The audit trail (translated.csv): land restated by 121/110 in February, the
    // restatement beside the balance; the gain on the net monetary position all of it.
    let out = tempfile::tempdir().expect("temp dir");
    let out_dir = out.path().to_str().expect("utf-8");
    let (code, _) = run_json(&dir, &["close", "--period", "2026-02", "--out", out_dir, "--translated-lines", "csv"]);
    assert_eq!(code, 0);
    let csv = std::fs::read_to_string(out.path().join("2026-02/group/ytd/translated.csv")).expect("translated.csv");
    assert!(csv.starts_with("entity,group_account,account_name,counterparty,txn_currency,period,basis,amount_local,balance_local,restatement_local,"), "{csv}");
    assert!(csv.contains("\nP,1200,Land,,,2026-02,closing,200.00,2200.00,200.00,"), "{csv}");
    assert!(csv.contains("\nP,1200,Land,,,2026-01,closing,0.00,2000.00,0.00,"), "{csv}");
    assert!(
        csv.contains("\nP,5100,Gain or loss on the net monetary position,,,2026-02,average,-17.00,-17.00,-17.00,"),
        "{csv}"
    );
}

/// The three-tier group of IFRIC 16's reasoning (an ultimate parent, an intermediate
/// parent in another currency, an indirect foreign operation below it); invented
/// figures, worked by hand. P in EUR holds S in GBP, which holds T in USD (100% each,
/// no investment lines). Rates in units per EUR: December closing GBP 0.80, USD 1.25;
/// January closing GBP 1.00, USD 2.00, average GBP 0.80, USD 1.60.
/// S: cash GBP 800 all month: 800 / 1.00 - 800 / 0.80 = 800.00 - 1,000.00 = -200.00.
/// T: opening cash USD 1,000, January revenue USD 300 (cash 1,300).
/// Direct (T straight into EUR): opening net assets 1,000 x (1/2.00 - 1/1.25) = -300.00,
/// profit 300 / 2.00 - 300 / 1.60 = 150.00 - 187.50 = -37.50: T's reserve -337.50.
/// Step by step (IFRIC 16.17): T into GBP through the EUR rates (USD per GBP 1.5625 in
/// December, 2.00 at January's close, 2.00 on average): opening net assets
/// 1,000 / 2.00 - 1,000 / 1.5625 = 500.00 - 640.00 = GBP -140.00, profit 300 / 2.00 -
/// 300 / 2.00 = 0; GBP -140.00 as S's OCI at GBP's average is -140 / 0.80 = EUR -175.00,
/// T's reserve. The rest of T's EUR difference, -337.50 + 175.00 = -162.50, arises on
/// retranslating T's GBP figures into EUR and belongs to S: its GBP net assets 640 at
/// 1.25 = 800.00 become 650 at 1.00 = 650.00, less its GBP profit 150 and difference -140
/// at the 1.25 average (187.50 - 175.00): 650.00 - 800.00 - 12.50 = -162.50. S's reserve
/// is -200.00 - 162.50 = -362.50. Totals agree: -337.50 - 200.00 = -175.00 - 362.50 =
/// -537.50, and so do the group's assets, profit and reserve.
fn three_tier(method: &str) -> Folder {
    let f = Folder::empty();
    f.write(
        "entities/group.toml",
        &settings("EUR", "P", "half_away_from_zero", "periodic")
            .replace("ifric16 = \"direct\"", &format!("ifric16 = \"{method}\"")),
    );
    f.write(
        "entities/entities.csv",
        "entity,name,country,currency\nP,Parent,NL,EUR\nS,Intermediate,GB,GBP\nT,Grandchild,US,USD\n",
    );
    f.write(
        "entities/holdings.csv",
        "owner,owned,capital_share,voting_share,valid_from\nP,S,1,1,2020-01-01\nS,T,1,1,2020-01-01\n",
    );
    f.write("entities/accounts.csv", CHART);
    f.write("entities/layouts.csv", LAYOUT);
    for e in ["P", "S", "T"] {
        f.write(&format!("entities/{e}/mapping.csv"), &identity_mapping());
    }
    f.write("entities/P/opening.csv", "account,amount,amount_presentation\n1000,100.00,\n3000,-100.00,-100.00\n");
    f.write("entities/P/tb-2026-01.movements.csv", "period,account,amount\n2026-01,1000,0.00\n");
    f.write("entities/S/opening.csv", "account,amount,amount_presentation\n1000,800.00,\n3000,-800.00,-1000.00\n");
    f.write("entities/S/tb-2026-01.movements.csv", "period,account,amount\n2026-01,1000,0.00\n");
    f.write("entities/T/opening.csv", "account,amount,amount_presentation\n1000,1000.00,\n3000,-1000.00,-800.00\n");
    f.write(
        "entities/T/tb-2026-01.movements.csv",
        "period,account,amount\n2026-01,1000,300.00\n2026-01,4000,-300.00\n",
    );
    f.write(
        "rates/monthly.csv",
        "period,currency,closing,average,quote\n2025-12,GBP,0.80,0.80,units_per_presentation\n\
         2025-12,USD,1.25,1.25,units_per_presentation\n2026-01,GBP,1.00,0.80,units_per_presentation\n\
         2026-01,USD,2.00,1.60,units_per_presentation\n",
    );
    f
}

fn operation_reserves(r: &serde_json::Value, key: &str, field: &str) -> Vec<(String, String)> {
    r[key]
        .as_array()
        .unwrap_or_else(|| panic!("{key} in {r:#}"))
        .iter()
        .map(|x| (x["operation"].as_str().expect("operation").to_string(), dec(&x[field])))
        .collect()
}

#[test]
fn ifric16_direct_and_step_by_step_agree_in_total_and_split_the_reserve() {
    let want =
        |t: &str, s: &str| vec![("P".to_string(), "0.00".to_string()), ("S".into(), s.into()), ("T".into(), t.into())];
    let mut group_tbs = Vec::new();
    for (method, t_reserve, s_reserve) in [("direct", "-337.50", "-200.00"), ("step_by_step", "-175.00", "-362.50")] {
        let f = three_tier(method);
        let (code, r) = run_json(f.path(), &["translate", "--period", "2026-01"]);
        assert_eq!(code, 0, "{r:#}");
        assert_eq!(r["proof"]["tied"], true);
        // The translated lines are the same under both methods.
        let t = entity(&r, "T");
        assert_eq!(dec(&line(t, "1000")["balance_presentation"]), "650.00");
        assert_eq!(dec(&line(t, "4000")["amount_presentation"]), "-187.50");
        assert_eq!(dec(&t["month"]["total"]), "-337.50");
        assert_eq!(operation_reserves(&r, "reserves_by_operation", "reserve"), want(t_reserve, s_reserve));
        if method == "step_by_step" {
            // T's own part in GBP before translation, and the part that is S's.
            let parts = t["reserves"].as_array().expect("reserves");
            let own = parts.iter().find(|p| p["operation"] == "T").expect("own part");
            assert_eq!(own["intermediate_currency"], "GBP");
            assert_eq!(dec(&own["month_intermediate"]), "-140.00");
            let up = parts.iter().find(|p| p["operation"] == "S").expect("parent's part");
            assert_eq!(dec(&up["month"]), "-162.50");
        }

        let out = tempfile::tempdir().expect("temp dir");
        let (code, c) = run_json(f.path(), &["close", "--period", "2026-01", "--out", out.path().to_str().unwrap()]);
        assert_eq!(code, 0, "{c:#}");
        assert_eq!(c["proof"]["tied"], true);
        assert_eq!(operation_reserves(&c, "translation_reserves", "reserve"), want(t_reserve, s_reserve));
        let moved: Vec<&serde_json::Value> = c["eliminations"]
            .as_array()
            .expect("journal")
            .iter()
            .filter(|e| e["rule"] == "ifric16_step_by_step")
            .collect();
        if method == "direct" {
            assert!(moved.is_empty(), "{moved:#?}");
        } else {
            assert_eq!(moved.len(), 1, "{moved:#?}");
            assert_eq!(moved[0]["posted_at"], "S");
        }
        let written =
            std::fs::read_to_string(out.path().join("2026-01/group/ytd/translation_reserves.csv")).expect("written");
        assert!(written.contains(&format!("T,{method},0.00,{t_reserve},{t_reserve}")), "{written}");
        group_tbs.push(c["group_trial_balance"].clone());
    }
    // Same assets, profit and total translation difference in EUR under both methods.
    assert_eq!(group_tbs[0], group_tbs[1]);
    let oci = group_tbs[0].as_array().unwrap().iter().find(|l| l["account"] == "8100").expect("OCI line");
    assert_eq!(dec(&oci["amount"]), "537.50");
}

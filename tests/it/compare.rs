//! `tessera close --compare`: the walk from a plan's profit to the actual one adds up
//! exactly (on the demo and on random groups), the currency effect is zero when the plan's
//! rates are the actual ones and equals a hand computation on a two-entity group, and a
//! plan's bad rows are findings.

use std::collections::BTreeMap;

use proptest::prelude::*;
use rust_decimal::Decimal;
use serde_json::Value;

use crate::support::{CHART, Folder, LAYOUT, identity_mapping, run_json, settings};

fn d(v: &Value) -> Decimal {
    v.as_str().unwrap_or_else(|| panic!("not a decimal string: {v}")).parse().expect("decimal")
}

/// A walk as read from JSON: comparison, steps (step, item, amount), actual.
type WalkRead = (Decimal, Vec<(String, String, Decimal)>, Decimal);

/// The walks of a close's JSON by measure.
fn walks(v: &Value) -> BTreeMap<String, WalkRead> {
    v["statements"]["comparison"]["walks"]
        .as_array()
        .unwrap_or_else(|| panic!("no walks: {v:#}"))
        .iter()
        .map(|w| {
            let steps = w["steps"]
                .as_array()
                .expect("steps")
                .iter()
                .map(|s| {
                    (s["step"].as_str().unwrap().to_string(), s["item"].as_str().unwrap().to_string(), d(&s["amount"]))
                })
                .collect();
            (w["measure"].as_str().unwrap().to_string(), (d(&w["comparison"]), steps, d(&w["actual"])))
        })
        .collect()
}

/// Each walk's steps sum to actual - comparison, and the owners' profit walk ends at
/// the close's own attribution.
fn assert_walks_add_up(v: &Value) {
    let w = walks(v);
    assert!(w.contains_key("profit_owners"), "{w:?}");
    for (m, (comparison, steps, actual)) in &w {
        let sum: Decimal = steps.iter().map(|s| s.2).sum();
        assert_eq!(*comparison + sum, *actual, "walk {m}: {steps:?}");
    }
    assert_eq!(w["profit_owners"].2, d(&v["attribution"]["profit_owners"]));
}

fn close_json(f: &Folder, period: &str, compare: &str) -> (i32, Value) {
    let out = f.path().join("out");
    run_json(f.path(), &["close", "--period", period, "--out", out.to_str().unwrap(), "--compare", compare])
}

#[test]
fn walk_adds_up_on_the_demo_budget_and_forecast() {
    let f = Folder::demo();
    for plan in ["budget", "forecast-q3"] {
        for period in ["2026-06", "2026-12"] {
            let (code, v) = close_json(&f, period, plan);
            assert_eq!(code, 0, "{plan} {period}: {v:#}");
            assert_walks_add_up(&v);
            // The revenue walk ends at the income statement's revenue line.
            let rev = v["statements"]["profit_or_loss"]["lines"]
                .as_array()
                .unwrap()
                .iter()
                .find(|l| l["line"] == "REV")
                .map(|l| d(&l["amount"]))
                .unwrap();
            assert_eq!(walks(&v)["REV"].2, rev);
        }
    }
}

/// GLF-BH, acquired in April, is not budgeted; NRD-SE, sold on 2026-10-01, is budgeted
/// for the whole year: both are scope steps of the walk, and NRD-SE's plan is used, not
/// left out.
#[test]
fn demo_budget_scope_the_entity_acquired_and_the_entity_sold_in_the_year() {
    let f = Folder::demo();
    let (_, v) = close_json(&f, "2026-12", "budget");
    let w = walks(&v);
    let scope: Vec<&String> = w["REV"].1.iter().filter(|s| s.0 == "scope").map(|s| &s.1).collect();
    assert_eq!(scope, vec!["GLF-BH", "NRD-SE"]);
    let warned = v["findings"].as_array().map(|a| a.iter().any(|x| x["entity"] == "NRD-SE")).unwrap_or(false);
    assert!(!warned, "NRD-SE's plan is used, not left out: {:#}", v["findings"]);
}

#[test]
fn currency_effect_is_zero_when_plan_rates_are_the_actual_rates() {
    let f = Folder::demo();
    // The forecast's rates for January to June are the actual ones: closed at June,
    // nothing of the currency effect is left.
    let (code, v) = close_json(&f, "2026-06", "forecast-q3");
    assert_eq!(code, 0, "{v:#}");
    for r in v["statements"]["comparison"]["currency_effect"].as_array().unwrap() {
        assert_eq!(d(&r["effect"]), Decimal::ZERO, "{r}");
    }
    for (_, (_, steps, _)) in walks(&v) {
        assert_eq!(steps[0].0, "currency");
        assert_eq!(steps[0].2, Decimal::ZERO);
    }
    // Its revenue for those months is the revenue delivered (docs/demo/make_plans.py),
    // so the revenue walk starts where it ends and every step is zero.
    let w = walks(&v);
    let (comparison, steps, actual) = &w["REV"];
    assert_eq!(comparison, actual);
    assert!(steps.iter().all(|s| s.2.is_zero()), "{steps:?}");
}

/// Two entities, worked by hand (invented figures, the arithmetic of IAS 21.39(b):
/// income and expenses at the rates of the transactions, an average for the month).
///
/// E0 (EUR, the parent) owns 100% of E1 (USD). January 2026, USD per EUR: actual average
/// and closing 1.1000, plan rate 1.0000.
///
/// Actual: E0 revenue EUR 500.00; E1 revenue USD 1,100.00 and expenses USD 440.00, so
/// E1's revenue is EUR 1,100.00 / 1.1 = 1,000.00 and expenses 440.00 / 1.1 = 400.00:
/// group revenue 1,500.00, profit 500.00 + 600.00 = 1,100.00.
/// At the plan rate: E1 revenue 1,100.00, expenses 440.00, profit 660.00; group revenue
/// 1,600.00, profit 1,160.00. Currency effect: revenue 1,500.00 - 1,600.00 = -100.00
/// (all E1's), profit 1,100.00 - 1,160.00 = -60.00.
/// Plan: E0 revenue EUR 450.00; E1 revenue USD 1,000.00, expenses USD 400.00, at 1.0000
/// EUR 1,000.00 and 400.00: profit 450.00 + 600.00 = 1,050.00.
/// Walk of the profit: 1,050.00, currency -60.00, operating E0 500.00 - 450.00 = 50.00,
/// E1 660.00 - 600.00 = 60.00, intercompany 0, NCI 0: 1,050 - 60 + 50 + 60 = 1,100.00.
#[test]
fn currency_effect_and_walk_on_two_entities_by_hand() {
    let f = Folder::empty();
    f.write("entities/group.toml", &settings("EUR", "E0", "half_away_from_zero", "periodic"));
    f.write("entities/accounts.csv", CHART);
    f.write(
        "entities/layouts.csv",
        &format!("{LAYOUT}profit_or_loss,MARGIN,Profit margin,,PROFIT / REV,credit_positive\n"),
    );
    f.write("entities/entities.csv", "entity,name,country,currency\nE0,E0 NV,NL,EUR\nE1,E1 Inc,US,USD\n");
    f.write("entities/holdings.csv", "owner,owned,capital_share,voting_share,valid_from\nE0,E1,1.00,1.00,2020-01-01\n");
    f.write(
        "entities/acquisitions.csv",
        "owned,date,consideration,nci_measurement,nci_fair_value,net_assets,net_assets_presentation,impairment\nE1,2020-01-01,1000.00,share_of_net_assets,,1000.00,1000.00,0\n",
    );
    f.write(
        "rates/monthly.csv",
        "period,currency,closing,average,quote\n2025-12,USD,1.0000,1.0000,units_per_presentation\n2026-01,USD,1.1000,1.1000,units_per_presentation\n",
    );
    for e in ["E0", "E1"] {
        f.write(&format!("entities/{e}/mapping.csv"), &identity_mapping());
    }
    f.write(
        "entities/E0/opening.csv",
        "account,amount,counterparty,amount_presentation\n1400,1000.00,E1,\n3000,-1000.00,,-1000.00\n",
    );
    f.write(
        "entities/E0/tb-2026-01.movements.csv",
        "period,account,amount,counterparty\n2026-01,4000,-500.00,\n2026-01,1000,500.00,\n",
    );
    f.write(
        "entities/E1/opening.csv",
        "account,amount,counterparty,amount_presentation\n1000,1000.00,,\n3000,-1000.00,,-1000.00\n",
    );
    f.write(
        "entities/E1/tb-2026-01.movements.csv",
        "period,account,amount,counterparty\n2026-01,4000,-1100.00,\n2026-01,5000,440.00,\n2026-01,1000,660.00,\n",
    );
    f.write(
        "entities/plans/budget/rates.csv",
        "period,currency,closing,average,quote\n2026-01,USD,1.0000,1.0000,units_per_presentation\n",
    );
    f.write("entities/plans/budget/E0.csv", "period,account,amount\n2026-01,4000,-450.00\n");
    f.write("entities/plans/budget/E1.csv", "period,account,amount\n2026-01,4000,-1000.00\n2026-01,5000,400.00\n");
    let (code, v) = close_json(&f, "2026-01", "budget");
    assert_eq!(code, 0, "{v:#}");
    let cmp = &v["statements"]["comparison"];
    let effect = |measure: &str, level: &str, item: &str| {
        cmp["currency_effect"]
            .as_array()
            .unwrap()
            .iter()
            .find(|r| r["measure"] == measure && r["level"] == level && r["item"] == item)
            .map(|r| d(&r["effect"]))
            .unwrap_or_else(|| panic!("no {measure} {level} {item}: {cmp:#}"))
    };
    assert_eq!(effect("profit_owners", "group", "group"), Decimal::new(-6000, 2));
    assert_eq!(effect("profit_owners", "entity", "E1"), Decimal::new(-6000, 2));
    assert_eq!(effect("profit_owners", "entity", "E0"), Decimal::ZERO);
    let w = walks(&v);
    let (comparison, steps, actual) = &w["profit_owners"];
    assert_eq!(*comparison, Decimal::new(105000, 2));
    assert_eq!(*actual, Decimal::new(110000, 2));
    let step = |kind: &str, item: &str| steps.iter().find(|s| s.0 == kind && s.1 == item).map(|s| s.2);
    assert_eq!(step("currency", "group"), Some(Decimal::new(-6000, 2)));
    assert_eq!(step("operating", "E0"), Some(Decimal::new(5000, 2)));
    assert_eq!(step("operating", "E1"), Some(Decimal::new(6000, 2)));
    assert_eq!(step("elimination", "intercompany"), Some(Decimal::ZERO));
    assert_eq!(step("nci", "attributable to non-controlling interests"), Some(Decimal::ZERO));
    // The income statement's revenue line: actual 1,500.00 against 1,450.00 planned,
    // +50.00 or 3.4% (50 / 1,450 = 3.448...%), favourable; currency effect -100.00.
    let rev = cmp["statements"]["profit_or_loss"].as_array().unwrap().iter().find(|l| l["line"] == "REV").unwrap();
    assert_eq!(
        (d(&rev["actual"]), d(&rev["comparison"]), d(&rev["variance"])),
        (Decimal::new(150000, 2), Decimal::new(145000, 2), Decimal::new(5000, 2))
    );
    assert_eq!(d(&rev["variance_percent"]), Decimal::new(34, 1));
    assert_eq!(rev["direction"], "favourable");
    assert_eq!(d(&rev["currency_effect"]), Decimal::new(-10000, 2));
    let exp = cmp["statements"]["profit_or_loss"].as_array().unwrap().iter().find(|l| l["line"] == "EXP").unwrap();
    // The ratio line: profit over revenue, 1,100.00 / 1,500.00 = 73.3% actual, 1,050.00 /
    // 1,450.00 = 72.4% planned (72.41...), 1,160.00 / 1,600.00 = 72.5% at the plan's
    // rates: +0.9 points, favourable, of which currency 0.8 points.
    let m = &cmp["ratios"]["profit_or_loss"][0];
    assert_eq!(m["line"], "MARGIN");
    assert_eq!((d(&m["actual"]), d(&m["comparison"])), (Decimal::new(733, 1), Decimal::new(724, 1)));
    assert_eq!((d(&m["variance_points"]), d(&m["currency_effect_points"])), (Decimal::new(9, 1), Decimal::new(8, 1)));
    assert_eq!(m["direction"], "favourable");
    let pl = &v["statements"]["profit_or_loss"];
    assert_eq!(pl["ratios"][0]["line"], "MARGIN");
    assert_eq!(d(&pl["ratios"][0]["percent"]), Decimal::new(733, 1));
    // Expenses 400.00 actual against 400.00 planned: no variance, no direction.
    assert_eq!(d(&exp["variance"]), Decimal::ZERO);
    assert_eq!(exp["direction"], Value::Null);
}

/// `--compare prior-year` on the demo, which holds fiscal 2025: in every view the
/// comparison column of each line is the statement's own prior-year comparative (the
/// same view a year earlier, `years::prior_year_close`), the walks add up, and GLF-BH,
/// acquired in 2026, is the scope step. The actuals at the prior year's rates differ
/// from the actuals (the demo's rates moved), so there is a currency step.
#[test]
fn prior_year_is_a_comparison_like_a_plan() {
    let f = Folder::demo();
    for (period, view) in [("2026-12", "ytd"), ("2026-06", "month"), ("2026-09", "qtd")] {
        let out = f.path().join("out");
        let (code, v) = run_json(
            f.path(),
            &["close", "--period", period, "--view", view, "--out", out.to_str().unwrap(), "--compare", "prior-year"],
        );
        assert_eq!(code, 0, "{view}: {v:#}");
        assert_walks_add_up(&v);
        let compared = &v["statements"]["comparison"]["statements"]["profit_or_loss"];
        let lines = v["statements"]["profit_or_loss"]["lines"].as_array().expect("lines");
        for (c, l) in compared.as_array().expect("compared lines").iter().zip(lines) {
            assert_eq!(c["line"], l["line"]);
            assert_eq!(d(&c["comparison"]), d(&l["prior_year"]), "{view} {}", l["line"]);
            assert_eq!(d(&c["actual"]), d(&l["amount"]), "{view} {}", l["line"]);
        }
        let w = walks(&v);
        let (_, steps, _) = &w["profit_owners"];
        assert!(steps.iter().any(|s| s.0 == "scope" && s.1 == "GLF-BH"), "{view}: {steps:?}");
        assert!(steps.iter().any(|s| s.0 == "currency" && !s.2.is_zero()), "{view}: {steps:?}");
    }
}

#[test]
fn prior_year_without_one_is_a_blocking_finding() {
    let f = Folder::demo();
    // Without 2025's deliveries (and with the 2026 opening as opening.csv) there is no
    // prior year at all.
    for e in std::fs::read_dir(f.path().join("entities")).expect("entities") {
        let dir = e.expect("entry").path();
        let Some(name) = dir.file_name().and_then(|n| n.to_str()).map(String::from) else { continue };
        if !dir.join("opening-2026-01.csv").exists() {
            continue;
        }
        for m in 1..=12 {
            f.remove(&format!("entities/{name}/tb-2025-{m:02}.movements.csv"));
        }
        let opening = f.read(&format!("entities/{name}/opening-2026-01.csv"));
        f.remove(&format!("entities/{name}/opening-2026-01.csv"));
        f.write(&format!("entities/{name}/opening.csv"), &opening);
    }
    let (code, v) = close_json(&f, "2026-12", "prior-year");
    assert_eq!(code, 1);
    let text = v.to_string();
    assert!(text.contains("ComparisonUnavailable") && text.contains("the folder holds no prior year"), "{v:#}");
}

#[test]
fn a_plans_bad_rows_are_findings_all_in_one_run() {
    let f = Folder::demo();
    f.append("entities/plans/budget/ALD-UK.csv", "2026-02,99999,100.00,");
    f.append("entities/plans/budget/ALD-UK.csv", "2027-01,4000,-100.00,");
    let dup = f.read("entities/plans/budget/ALD-NL.csv").lines().nth(1).unwrap().to_string();
    f.append("entities/plans/budget/ALD-NL.csv", &dup);
    f.write("entities/plans/budget/XYZ.csv", "period,account,amount\n");
    f.replace("entities/plans/budget/rates.csv", "2026-03,USD,", "2026-03,USX,");
    let (code, v) = close_json(&f, "2026-12", "budget");
    assert_eq!(code, 1, "{v:#}");
    let rules: Vec<String> = v["findings"]
        .as_array()
        .unwrap_or_else(|| panic!("{v:#}"))
        .iter()
        .map(|x| x["rule"].as_str().unwrap().to_string())
        .collect();
    for rule in
        ["AccountUnmapped", "PeriodOutsideYear", "RowDuplicated", "EntityUnknown", "RateMissing", "CurrencyUnknown"]
    {
        assert!(rules.iter().any(|r| r == rule), "{rule} missing in {rules:?}");
    }
    // `check` lists them too, without --compare, with their file and line.
    let (code, c) = run_json(f.path(), &["check", "--period", "2026-12"]);
    assert_eq!(code, 1, "{c:#}");
    let unmapped = c["findings"].as_array().unwrap().iter().find(|x| x["rule"] == "AccountUnmapped").expect("unmapped");
    assert_eq!(unmapped["file"], "entities/plans/budget/ALD-UK.csv");
    assert_eq!(unmapped["line"].as_u64(), Some(f.line_of("entities/plans/budget/ALD-UK.csv", "2026-02,99999")));
    let rules: Vec<&str> = c["findings"].as_array().unwrap().iter().map(|x| x["rule"].as_str().unwrap()).collect();
    for rule in ["PeriodOutsideYear", "RowDuplicated", "EntityUnknown", "RateMissing", "CurrencyUnknown"] {
        assert!(rules.contains(&rule), "check: {rule} missing in {rules:?}");
    }
}

proptest! {
    #![proptest_config(ProptestConfig { cases: 12, ..ProptestConfig::default() })]

    /// Random groups of the close oracle with a random plan: some entities unplanned
    /// (scope), the others' revenue and expenses scaled, intercompany sales planned on
    /// both sides, a random plan rate. The walk adds up exactly and ends at the close's
    /// own profit attributable to the owners; the planned profit, the actual profit at
    /// the plan's rates and the currency effect agree with a naive oracle.
    #[test]
    fn walk_adds_up_on_random_groups(
        g in crate::close_oracle::group(),
        planned in prop::collection::vec(any::<bool>(), 5),
        scale in 50i64..150,
        plan_rate in 8_000i64..16_000,
    ) {
        let f = crate::close_oracle::write(&g);
        f.write("entities/plans/budget/rates.csv", &format!(
            "period,currency,closing,average,quote\n2026-01,USD,{r},{r},units_per_presentation\n", r = Decimal::new(plan_rate, 4)));
        let k = Decimal::new(scale, 2);
        for (i, e) in g.ents.iter().enumerate() {
            if !planned[i] && i > 0 {
                continue;
            }
            let mut text = String::from("period,account,amount,counterparty\n");
            text.push_str(&format!("2026-01,4000,{},\n", (-Decimal::new(e.revenue, 2) * k).round_dp(2)));
            text.push_str(&format!("2026-01,5000,{},\n", (Decimal::new(e.expenses, 2) * k).round_dp(2)));
            for &(a, b, _, sales) in &g.ic {
                if a == i {
                    text.push_str(&format!("2026-01,4100,{},E{b}\n", -Decimal::new(sales, 2)));
                }
                if b == i {
                    text.push_str(&format!("2026-01,5100,{},E{a}\n", Decimal::new(sales, 2)));
                }
            }
            f.write(&format!("entities/plans/budget/E{i}.csv"), &text);
        }
        let (code, v) = close_json(&f, "2026-01", "budget");
        prop_assert_eq!(code, 0, "{:#}", v);
        assert_walks_add_up(&v);
        // A naive oracle of the group's profit, planned and at the plan's rates: each
        // line translated on its own (IAS 21.39(b), one rounding half away from zero),
        // intercompany sales cancelling when both sides are there (one currency, so equal
        // when translated, IFRS 10.B86(c)).
        let round2 = |x: Decimal| x.round_dp_with_strategy(2, rust_decimal::RoundingStrategy::MidpointAwayFromZero);
        let at = |x: Decimal, usd: bool, rate: Decimal| if usd { round2(x / rate) } else { x };
        let (plan_rate, actual_rate) = (Decimal::new(plan_rate, 4), Decimal::new(g.rates.2, 4));
        let mut planned_profit = Decimal::ZERO;
        let mut at_plan_rates = Decimal::ZERO;
        let mut actual = Decimal::ZERO;
        for (i, e) in g.ents.iter().enumerate() {
            let (rev, exp) = (Decimal::new(e.revenue, 2), Decimal::new(e.expenses, 2));
            if planned[i] || i == 0 {
                let (pr, pe) = ((rev * k).round_dp(2), (exp * k).round_dp(2));
                planned_profit += at(pr, e.usd, plan_rate) - at(pe, e.usd, plan_rate);
            }
            at_plan_rates += at(rev, e.usd, plan_rate) - at(exp, e.usd, plan_rate);
            actual += at(rev, e.usd, actual_rate) - at(exp, e.usd, actual_rate);
        }
        // A sale planned on one side only stays in profit: its elimination leaves the
        // planned side's line on the intercompany difference account, in profit or loss.
        let is_planned = |i: usize| i == 0 || planned[i];
        for &(a, b, _, sales) in &g.ic {
            let x = at(Decimal::new(sales, 2), g.ents[a].usd, plan_rate);
            match (is_planned(a), is_planned(b)) {
                (true, false) => planned_profit += x,
                (false, true) => planned_profit -= x,
                _ => {}
            }
        }
        let cmp = &v["statements"]["comparison"];
        let profit = cmp["statements"]["profit_or_loss"].as_array().unwrap().iter().find(|l| l["line"] == "PROFIT").unwrap();
        prop_assert_eq!(d(&profit["actual"]), actual);
        prop_assert_eq!(d(&profit["comparison"]), planned_profit);
        prop_assert_eq!(d(&profit["at_comparison_rates"]), at_plan_rates);
        let w = walks(&v);
        prop_assert_eq!(&w["profit_owners"].1[0], &("currency".to_string(), "group".to_string(), actual - at_plan_rates));
    }
}

#[test]
fn a_ratio_line_divides_lines_above_it_and_no_total_adds_it() {
    let f = Folder::demo();
    // A ratio of a line below it, and a total that adds a ratio.
    f.replace(
        "entities/layouts.csv",
        "profit_or_loss,GM,Gross margin,,GP / REV,",
        "profit_or_loss,GM,Gross margin,,GP / XYZ,",
    );
    f.append("entities/layouts.csv", "profit_or_loss,BAD,Not a total,,PROFIT GM OM,credit_positive");
    let (code, v) = run_json(f.path(), &["check", "--period", "2026-12"]);
    assert_eq!(code, 1, "{v:#}");
    let messages: Vec<&str> = v["findings"]
        .as_array()
        .unwrap()
        .iter()
        .filter(|x| x["rule"] == "LayoutInvalid")
        .map(|x| x["message"].as_str().unwrap())
        .collect();
    assert!(
        messages.iter().any(|m| m.contains("ratio line GM of profit_or_loss: XYZ is not an amount line above it")),
        "{messages:?}"
    );
    assert!(messages.iter().any(|m| m.contains("line BAD totals OM, a ratio line of profit_or_loss")), "{messages:?}");
}

#[test]
fn segments_compare_ties_to_the_close_compare() {
    let f = Folder::demo();
    let (code, seg) = run_json(f.path(), &["segments", "--period", "2026-12", "--compare", "budget"]);
    assert_eq!(code, 0, "{seg:#}");
    let (_, close) = close_json(&f, "2026-12", "budget");
    let rows = seg["comparison"]["rows"].as_array().unwrap_or_else(|| panic!("{seg:#}"));
    let group = |line: &str| rows.iter().find(|r| r["segment"] == "group" && r["line"] == line).unwrap();
    let pl = close["statements"]["comparison"]["statements"]["profit_or_loss"].as_array().unwrap();
    // The segment report's revenue is the layout line REV and its profit OP ([segments]).
    for (seg_line, pl_line) in [("revenue", "REV"), ("profit", "OP")] {
        let l = pl.iter().find(|l| l["line"] == pl_line).unwrap();
        for field in ["actual", "comparison", "variance", "currency_effect"] {
            assert_eq!(d(&group(seg_line)[field]), d(&l[field]), "{seg_line} {field}");
        }
    }
    // A segment's variance is its actual less the comparison, its currency effect the
    // actual less the actual at the budget rates.
    for r in rows {
        assert_eq!(d(&r["variance"]), d(&r["actual"]) - d(&r["comparison"]));
        assert_eq!(d(&r["currency_effect"]), d(&r["actual"]) - d(&r["at_comparison_rates"]));
    }
}

#[test]
fn walk_adds_up_in_month_and_quarter_views_and_for_a_sub_group() {
    let f = Folder::demo();
    let out = f.path().join("out");
    let out = out.to_str().unwrap();
    for extra in [&["--view", "month"][..], &["--view", "qtd"], &["--entity", "ALD-US"]] {
        let mut args = vec!["close", "--period", "2026-09", "--out", out, "--compare", "budget"];
        args.extend_from_slice(extra);
        let (code, v) = run_json(f.path(), &args);
        assert_eq!(code, 0, "{extra:?}: {v:#}");
        assert_walks_add_up(&v);
    }
}

#[test]
fn currency_effect_is_zero_for_a_plan_at_the_actual_rates_all_year() {
    let f = Folder::demo();
    // A forecast with the budget's figures at the actual rates of every month.
    let rates: String = f
        .read("rates/monthly.csv")
        .lines()
        .filter(|l| l.starts_with("period") || l.starts_with("2026-"))
        .map(|l| format!("{l}\n"))
        .collect();
    f.write("entities/plans/forecast-same/rates.csv", &rates);
    for e in ["ALD-NL", "ALD-UK", "ALD-US", "BRW-MX", "BRW-US", "HEL-CH", "KIS-JP", "NRD-SE", "WSL-PL"] {
        f.write(&format!("entities/plans/forecast-same/{e}.csv"), &f.read(&format!("entities/plans/budget/{e}.csv")));
    }
    let (code, v) = close_json(&f, "2026-12", "forecast-same");
    assert_eq!(code, 0, "{v:#}");
    let cmp = &v["statements"]["comparison"];
    for r in cmp["currency_effect"].as_array().unwrap() {
        assert_eq!(d(&r["effect"]), Decimal::ZERO, "{r}");
    }
    for l in cmp["statements"]["profit_or_loss"].as_array().unwrap() {
        assert_eq!(d(&l["currency_effect"]), Decimal::ZERO, "{l}");
    }
}

/// Every amount docs/demo.md quotes in its section on plans is a figure of the close
/// against the budget at 2026-12.
#[test]
fn the_demo_story_quotes_figures_of_the_close() {
    let doc = std::fs::read_to_string(crate::support::repo().join("docs/demo.md")).expect("docs/demo.md");
    let section = doc.split("## Plans: a budget and a forecast").nth(1).expect("the plans section");
    let section = section.split("\n## ").next().unwrap();
    let f = Folder::demo();
    let (_, v) = close_json(&f, "2026-12", "budget");
    let mut figures = std::collections::BTreeSet::new();
    fn collect(v: &Value, out: &mut std::collections::BTreeSet<Decimal>) {
        match v {
            Value::String(s) => {
                if let Ok(x) = s.parse::<Decimal>() {
                    out.insert(x.abs());
                }
            }
            Value::Array(a) => a.iter().for_each(|x| collect(x, out)),
            Value::Object(o) => o.values().for_each(|x| collect(x, out)),
            _ => {}
        }
    }
    collect(&v["statements"]["comparison"], &mut figures);
    let mut quoted = 0;
    for word in section.split(|c: char| !(c.is_ascii_digit() || c == ',' || c == '.')) {
        let w = word.trim_matches(|c| c == ',' || c == '.');
        if w.contains('.') && w.contains(',') {
            let x: Decimal = w.replace(',', "").parse().expect("an amount");
            assert!(figures.contains(&x), "docs/demo.md quotes {w}, which the close against the budget does not show");
            quoted += 1;
        }
    }
    assert!(quoted >= 10, "only {quoted} amounts found");
}

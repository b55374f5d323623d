//! Deliveries month by month: a month delivered as balances is read as balances and a
//! month delivered as movements as movements, whatever the other months are. A property
//! test converts any set of months of a movements delivery into balances (computed here,
//! independently of tessera: the opening plus the cumulative movements, row by row) and
//! asserts that the close's figures do not move, year to date and for the month.

use std::collections::BTreeMap;

use proptest::prelude::*;
use rust_decimal::Decimal;
use serde_json::Value;

use crate::support::{Folder, run_json};

/// (account, counterparty, txn_currency) -> (amount, txn_amount).
type Balances = BTreeMap<(String, String, String), (Decimal, Option<Decimal>)>;

fn add(into: &mut Balances, text: &str) {
    let mut lines = text.lines();
    let header: Vec<&str> = lines.next().unwrap_or_default().split(',').collect();
    let at = |name: &str| header.iter().position(|h| *h == name).expect("column");
    let (a, amt, cp, ccy, tx) = (at("account"), at("amount"), at("counterparty"), at("txn_currency"), at("txn_amount"));
    for l in lines {
        let c: Vec<&str> = l.split(',').collect();
        let key = (c[a].to_string(), c[cp].to_string(), c[ccy].to_string());
        let slot = into.entry(key).or_insert((Decimal::ZERO, None));
        slot.0 += c[amt].parse::<Decimal>().expect("amount");
        if !c[tx].is_empty() {
            *slot.1.get_or_insert(Decimal::ZERO) += c[tx].parse::<Decimal>().expect("txn amount");
        }
    }
}

/// Rewrites months `months` (1..=12 of 2026) of `entity`'s movements delivery as
/// balances: the opening balance plus every movement through the month.
fn to_balances(f: &Folder, entity: &str, months: &[u32]) {
    let dir = format!("entities/{entity}");
    let mut running: Balances = BTreeMap::new();
    // The 2026 opening: beside the demo's prior year 2025 it is opening-2026-01.csv.
    let dated = format!("{dir}/opening-2026-01.csv");
    let opening = if f.path().join(&dated).exists() { dated } else { format!("{dir}/opening.csv") };
    add(&mut running, &f.read(&opening));
    let mut snapshots: BTreeMap<u32, Balances> = BTreeMap::new();
    for m in 1..=12u32 {
        add(&mut running, &f.read(&format!("{dir}/tb-2026-{m:02}.movements.csv")));
        snapshots.insert(m, running.clone());
    }
    for m in months {
        let mut out = String::from("period,account,amount,counterparty,txn_currency,txn_amount\n");
        for ((account, cp, ccy), (amount, txn)) in &snapshots[m] {
            let txn = txn.map(|t| t.to_string()).unwrap_or_default();
            out.push_str(&format!("2026-{m:02},{account},{amount},{cp},{ccy},{txn}\n"));
        }
        f.remove(&format!("{dir}/tb-2026-{m:02}.movements.csv"));
        f.write(&format!("{dir}/tb-2026-{m:02}.balances.csv"), &out);
    }
}

fn close(f: &Folder, view: &str) -> (i32, Value) {
    let out = tempfile::tempdir().expect("temp dir");
    let o = out.path().to_str().expect("utf-8").to_string();
    run_json(f.path(), &["close", "--period", "2026-12", "--view", view, "--out", &o])
}

/// What must not move: the group trial balance and the statements.
fn figures(v: &Value) -> (Value, Value) {
    (v["group_trial_balance"].clone(), v["statements"].clone())
}

#[test]
fn december_as_balances_after_eleven_months_of_movements() {
    let demo = Folder::demo();
    let f = Folder::demo();
    to_balances(&f, "ALD-UK", &[12]);
    let (code, v) = run_json(f.path(), &["check", "--period", "2026-12"]);
    assert_eq!(code, 0, "{v:#}");
    for view in ["month", "ytd"] {
        let (a, want) = close(&demo, view);
        let (b, got) = close(&f, view);
        assert_eq!((a, b), (0, 0));
        assert_eq!(figures(&got), figures(&want), "view {view}");
    }
}

proptest! {
    #![proptest_config(ProptestConfig { cases: 6, failure_persistence: None, ..ProptestConfig::default() })]

    #[test]
    fn any_months_as_balances_give_the_same_figures(
        mask in 1u32..(1 << 12),
        entity in prop::sample::select(vec!["ALD-UK", "BRW-US", "GLF-BH", "WSL-PL"]),
    ) {
        static BASE: std::sync::OnceLock<BTreeMap<&'static str, (Value, Value)>> = std::sync::OnceLock::new();
        let base = BASE.get_or_init(|| {
            let demo = Folder::demo();
            ["month", "ytd"].into_iter().map(|v| (v, figures(&close(&demo, v).1))).collect()
        });
        let months: Vec<u32> = (1..=12).filter(|m| mask & (1 << (m - 1)) != 0).collect();
        let f = Folder::demo();
        to_balances(&f, entity, &months);
        for view in ["month", "ytd"] {
            let (code, v) = close(&f, view);
            prop_assert_eq!(code, 0, "{} as balances in {:?}: {:#}", entity, months, v);
            prop_assert_eq!(&figures(&v), &base[view], "{} as balances in {:?}, view {}", entity, months, view);
        }
    }
}

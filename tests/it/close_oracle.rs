//! The close against a naive consolidation on random small groups: 2 to 5 entities in
//! one or two tiers, random holdings (NCI included), trial balances in EUR or USD, and
//! intercompany balances and sales that agree. The oracle below is written with plain
//! rust_decimal loops from the rules (IAS 21.39 translation, IFRS 10.B86 eliminations,
//! IFRS 3.32 goodwill on either NCI basis, IAS 21.47 goodwill at the closing rate with
//! the NCI's part of full goodwill and of its exchange difference, NCI as the effective
//! outside share of post-acquisition equity, profit and OCI; the exchange difference of
//! the year on a USD holder's investment reversed from OCI, not from the reserve); it
//! shares no code with the engine. Group trial balance, NCI and the NCI's profit and OCI
//! must agree to the cent.

use std::collections::BTreeMap;

use proptest::prelude::*;
use rust_decimal::{Decimal, RoundingStrategy};

use crate::support::{CHART, Folder, LAYOUT, identity_mapping, run_json, settings};

fn cents(c: i64) -> Decimal {
    Decimal::new(c, 2)
}

fn round2(x: Decimal) -> Decimal {
    x.round_dp_with_strategy(2, RoundingStrategy::MidpointAwayFromZero)
}

#[derive(Debug, Clone)]
pub(crate) struct Ent {
    /// Index of the parent (entity 0 is the group's parent and has none).
    pub(crate) parent: usize,
    /// Percentage of capital and votes the parent holds, 51..=100.
    pub(crate) share: u32,
    pub(crate) usd: bool,
    /// Share capital, whole units (so that share x capital has two decimals).
    pub(crate) capital: i64,
    /// Historical rate of the share capital, USD per EUR x 10,000.
    pub(crate) hist: i64,
    /// Retained earnings brought forward, local cents (credit positive), and their
    /// translated amount.
    pub(crate) retained: i64,
    pub(crate) retained_presentation: i64,
    /// Goodwill paid, local cents.
    pub(crate) goodwill: i64,
    /// The parent's carrying amount of the investment, the parent's cents.
    pub(crate) investment: i64,
    pub(crate) revenue: i64,
    pub(crate) expenses: i64,
    /// NCI measured at fair value (full goodwill), at its share of the net assets plus
    /// this premium in local cents; otherwise at its share of the net assets.
    pub(crate) nci_fair_value: Option<i64>,
}

#[derive(Debug, Clone)]
pub(crate) struct Group {
    pub(crate) ents: Vec<Ent>,
    /// USD per EUR x 10,000: closing 2025-12, closing 2026-01, average 2026-01.
    pub(crate) rates: (i64, i64, i64),
    /// Intercompany (i, j, receivable cents, sales cents): i sells to j and is owed by j.
    pub(crate) ic: Vec<(usize, usize, i64, i64)>,
}

fn ent() -> impl Strategy<Value = Ent> {
    (
        (0usize..4, 51u32..=100, any::<bool>(), 1_000i64..200_000, 8_000i64..16_000),
        (0i64..5_000_000, 0i64..5_000_000, 0i64..2_000_000, 100_000i64..20_000_000),
        (0i64..10_000_000, 0i64..8_000_000, prop::option::of(0i64..1_000_000)),
    )
        .prop_map(|(a, b, c)| Ent {
            parent: a.0,
            share: a.1,
            usd: a.2,
            capital: a.3,
            hist: a.4,
            retained: b.0,
            retained_presentation: b.1,
            goodwill: b.2,
            investment: b.3,
            revenue: c.0,
            expenses: c.1,
            // A fair value for an NCI that does not exist is not a case of interest.
            nci_fair_value: c.2.filter(|_| a.1 < 100),
        })
}

pub(crate) fn group() -> impl Strategy<Value = Group> {
    (
        prop::collection::vec(ent(), 2..=5),
        any::<bool>(),
        (8_000i64..16_000, 8_000i64..16_000, 8_000i64..16_000),
        prop::collection::vec((0usize..5, 0usize..5, 0i64..3_000_000, 0i64..3_000_000), 0..4),
    )
        .prop_map(|(mut ents, two_currencies, rates, ic)| {
            // Entity 0 is the EUR parent; each other entity hangs below an earlier one
            // that is the parent or its direct subsidiary (at most two tiers).
            let mut depth = vec![0usize; ents.len()];
            for i in 0..ents.len() {
                if i == 0 {
                    ents[0].usd = false;
                    continue;
                }
                let allowed: Vec<usize> = (0..i).filter(|&k| depth[k] <= 1).collect();
                ents[i].parent = allowed[ents[i].parent % allowed.len()];
                depth[i] = depth[ents[i].parent] + 1;
                ents[i].usd &= two_currencies;
            }
            let n = ents.len();
            // Intercompany only between entities of one currency, so that both sides
            // translate to the same amount and agree.
            let ic = ic
                .into_iter()
                .map(|(a, b, r, s)| (a % n, b % n, r, s))
                .filter(|(a, b, _, _)| a != b && ents[*a].usd == ents[*b].usd)
                .fold(Vec::<(usize, usize, i64, i64)>::new(), |mut acc, x| {
                    if !acc.iter().any(|y| (y.0.min(y.1), y.0.max(y.1)) == (x.0.min(x.1), x.0.max(x.1))) {
                        acc.push(x);
                    }
                    acc
                });
            Group { ents, rates, ic }
        })
}

fn id(i: usize) -> String {
    format!("E{i}")
}

/// Local trial balances: (opening rows, movement rows), each (account, counterparty,
/// amount, amount_presentation for historical accounts).
type Rows = Vec<(&'static str, Option<usize>, Decimal, Option<Decimal>)>;

fn ledgers(g: &Group) -> Vec<(Rows, Rows)> {
    let mut out = Vec::new();
    for (i, e) in g.ents.iter().enumerate() {
        let hist = Decimal::new(e.hist, 4);
        let capital = Decimal::from(e.capital);
        let capital_presentation = if e.usd { round2(capital / hist) } else { capital };
        let rp = if e.usd { cents(e.retained_presentation) } else { cents(e.retained) };
        let mut open: Rows =
            vec![("3000", None, -capital, Some(-capital_presentation)), ("3200", None, -cents(e.retained), Some(-rp))];
        for (k, c) in g.ents.iter().enumerate().skip(1) {
            if c.parent == i {
                open.push(("1400", Some(k), cents(c.investment), None));
            }
        }
        let mut moves: Rows = vec![("4000", None, -cents(e.revenue), None), ("5000", None, cents(e.expenses), None)];
        for &(a, b, receivable, sales) in &g.ic {
            if a == i {
                open.push(("1550", Some(b), cents(receivable), None));
                moves.push(("4100", Some(b), -cents(sales), None));
            }
            if b == i {
                open.push(("2550", Some(a), -cents(receivable), None));
                moves.push(("5100", Some(a), cents(sales), None));
            }
        }
        let open_cash = -open.iter().map(|r| r.2).sum::<Decimal>();
        let move_cash = -moves.iter().map(|r| r.2).sum::<Decimal>();
        open.push(("1000", None, open_cash, None));
        moves.push(("1000", None, move_cash, None));
        out.push((open, moves));
    }
    out
}

pub(crate) fn write(g: &Group) -> Folder {
    let f = Folder::empty();
    f.write("entities/group.toml", &settings("EUR", "E0", "half_away_from_zero", "periodic"));
    f.write("entities/accounts.csv", CHART);
    f.write("entities/layouts.csv", LAYOUT);
    let (r0, r1, ra) = g.rates;
    f.write(
        "rates/monthly.csv",
        &format!(
            "period,currency,closing,average,quote\n2025-12,USD,{},{},units_per_presentation\n2026-01,USD,{},{},units_per_presentation\n",
            Decimal::new(r0, 4),
            Decimal::new(r0, 4),
            Decimal::new(r1, 4),
            Decimal::new(ra, 4)
        ),
    );
    let mut entities = String::from("entity,name,country,currency\n");
    let mut holdings = String::from("owner,owned,capital_share,voting_share,valid_from\n");
    let mut acquisitions = String::from(
        "owned,date,consideration,nci_measurement,nci_fair_value,net_assets,net_assets_presentation,impairment\n",
    );
    for (i, ((open, moves), e)) in ledgers(g).iter().zip(&g.ents).enumerate() {
        let ccy = if e.usd { "USD" } else { "EUR" };
        entities.push_str(&format!("{},{} Ltd,{},{ccy}\n", id(i), id(i), if e.usd { "US" } else { "NL" }));
        if i > 0 {
            let share = Decimal::new(e.share as i64, 2);
            holdings.push_str(&format!("{},{},{share},{share},2020-01-01\n", id(e.parent), id(i)));
            let capital = Decimal::from(e.capital);
            let capital_presentation = -open.iter().find(|r| r.0 == "3000").and_then(|r| r.3).unwrap();
            let (basis, fair_value) = match e.nci_fair_value {
                Some(premium) => ("fair_value", ((Decimal::ONE - share) * capital + cents(premium)).to_string()),
                None => ("share_of_net_assets", String::new()),
            };
            acquisitions.push_str(&format!(
                "{},2020-01-01,{},{basis},{fair_value},{capital},{capital_presentation},0\n",
                id(i),
                share * capital + cents(e.goodwill)
            ));
        }
        let cp = |c: &Option<usize>| c.map(id).unwrap_or_default();
        let mut text = String::from("account,amount,counterparty,amount_presentation\n");
        for (a, c, amount, pres) in open {
            text.push_str(&format!("{a},{amount},{},{}\n", cp(c), pres.map(|p| p.to_string()).unwrap_or_default()));
        }
        f.write(&format!("entities/{}/opening.csv", id(i)), &text);
        let mut text = String::from("period,account,amount,counterparty\n");
        for (a, c, amount, _) in moves {
            text.push_str(&format!("2026-01,{a},{amount},{}\n", cp(c)));
        }
        f.write(&format!("entities/{}/tb-2026-01.movements.csv", id(i)), &text);
        f.write(&format!("entities/{}/mapping.csv", id(i)), &identity_mapping());
    }
    f.write("entities/entities.csv", &entities);
    f.write("entities/holdings.csv", &holdings);
    f.write("entities/acquisitions.csv", &acquisitions);
    f
}

/// What the naive consolidation gives.
struct Expected {
    tb: BTreeMap<String, Decimal>,
    nci: Decimal,
    profit_nci: Decimal,
    oci_nci: Decimal,
}

fn oracle(g: &Group) -> Expected {
    let (r0, r1, ra) = (Decimal::new(g.rates.0, 4), Decimal::new(g.rates.1, 4), Decimal::new(g.rates.2, 4));
    let basis = |a: &str| match a {
        "3000" | "3200" => "historical",
        "4000" | "4100" | "5000" | "5100" => "average",
        _ => "closing",
    };
    let mut tb: BTreeMap<String, Decimal> = BTreeMap::new();
    let add = |tb: &mut BTreeMap<String, Decimal>, a: &str, x: Decimal| *tb.entry(a.to_string()).or_default() += x;
    let led = ledgers(g);
    // Effective interests down the tree.
    let mut eff = vec![Decimal::ONE; g.ents.len()];
    for (i, e) in g.ents.iter().enumerate().skip(1) {
        eff[i] = eff[e.parent] * Decimal::new(e.share as i64, 2);
    }
    let mut translated: Vec<BTreeMap<(String, Option<usize>), Decimal>> = Vec::new();
    let mut equity_post = vec![Decimal::ZERO; g.ents.len()];
    let mut profit = vec![Decimal::ZERO; g.ents.len()];
    let mut oci = vec![Decimal::ZERO; g.ents.len()];
    for (i, ((open, moves), e)) in led.iter().zip(&g.ents).enumerate() {
        let at = |x: Decimal, rate: Decimal| if e.usd { round2(x / rate) } else { x };
        // Opening balance sheet at the 2025-12 closing rate: its difference is the
        // reserve brought forward.
        let mut reserve = Decimal::ZERO;
        for (a, _, amount, pres) in open {
            reserve -= if basis(a) == "historical" { pres.unwrap() } else { at(*amount, r0) };
        }
        // Balances at 2026-01: balance sheet at the closing rate, equity historical,
        // profit or loss at the month's average.
        let mut bal: BTreeMap<(String, Option<usize>), (Decimal, Option<Decimal>)> = BTreeMap::new();
        for (a, c, amount, pres) in open.iter().chain(moves) {
            let slot = bal.entry((a.to_string(), *c)).or_default();
            slot.0 += *amount;
            if let Some(p) = pres {
                slot.1 = Some(slot.1.unwrap_or_default() + *p);
            }
        }
        let mut lines = BTreeMap::new();
        for ((a, c), (amount, pres)) in &bal {
            let x = match basis(a) {
                "historical" => pres.unwrap(),
                "average" => at(*amount, ra),
                _ => at(*amount, r1),
            };
            lines.insert((a.clone(), *c), x);
        }
        let total: Decimal = lines.values().copied().sum();
        let td_year = -total - reserve;
        lines.insert(("3300".into(), None), reserve);
        lines.insert(("8100".into(), None), td_year);
        oci[i] = -td_year;
        for ((a, _), x) in &lines {
            add(&mut tb, a, *x);
            if matches!(a.as_str(), "3000" | "3200" | "3300" | "4000" | "4100" | "5000" | "5100" | "8100") {
                equity_post[i] -= *x;
            }
            if matches!(a.as_str(), "4000" | "4100" | "5000" | "5100") {
                profit[i] -= *x;
            }
        }
        translated.push(lines);
    }
    // Intercompany: both sides reversed (they agree, so nothing is left over).
    for &(a, b, _, _) in &g.ic {
        for (ent, acct, cp) in [(a, "1550", b), (b, "2550", a), (a, "4100", b), (b, "5100", a)] {
            let x = translated[ent].get(&(acct.to_string(), Some(cp))).copied().unwrap_or_default();
            add(&mut tb, acct, -x);
        }
    }
    // A holder in USD carries its investment at the closing rate, so its translation
    // difference of the year holds the investment's exchange difference: the investment
    // (in the opening balances, acquired in 2020) at the 2026-01 closing rate less at the
    // 2025-12 one. In the group the subsidiary's net assets replace the investment and
    // their exchange difference is the subsidiary's own: the investment's is not OCI of
    // the group, nor part of the holder's equity or OCI its NCI shares in.
    let mut investment_fx = vec![Decimal::ZERO; g.ents.len()];
    for (c, e) in g.ents.iter().enumerate().skip(1) {
        let holder = &g.ents[e.parent];
        let local = cents(e.investment);
        let fx = if holder.usd { round2(local / r1) - round2(local / r0) } else { Decimal::ZERO };
        investment_fx[c] = fx;
        equity_post[e.parent] -= fx;
        oci[e.parent] -= fx;
    }
    // Investments against the equity at acquisition (share capital), goodwill at the
    // closing rate, NCI at its share of the net assets at the historical rate.
    let mut nci = Decimal::ZERO;
    let mut profit_nci = Decimal::ZERO;
    let mut oci_nci = Decimal::ZERO;
    for (c, e) in g.ents.iter().enumerate().skip(1) {
        let at = |x: Decimal, rate: Decimal| if e.usd { round2(x / rate) } else { x };
        let capital_presentation = -translated[c][&("3000".to_string(), None)];
        let capital = Decimal::from(e.capital);
        let outside = Decimal::ONE - Decimal::new(e.share as i64, 2);
        // Under full goodwill the NCI's premium over its share of the net assets is its
        // part of goodwill (IFRS 3.19); at the historical rate of the net assets.
        let premium = e.nci_fair_value.map(cents).unwrap_or_default();
        let at_acquisition = |x: Decimal| round2(x * capital_presentation / capital);
        let nci_acquisition = if e.nci_fair_value.is_none() {
            round2(outside * capital_presentation)
        } else {
            at_acquisition(outside * capital + premium)
        };
        let investment = translated[e.parent][&("1400".to_string(), Some(c))];
        let goodwill_local = cents(e.goodwill) + premium;
        let goodwill_now = at(goodwill_local, r1);
        let goodwill_fx_year = goodwill_now - at(goodwill_local, r0);
        // The exchange difference on the NCI's part of goodwill is the NCI's (IAS 21.41).
        let nci_goodwill_fx = at(premium, r1) - at_acquisition(premium);
        let nci_goodwill_fx_year = at(premium, r1) - at(premium, r0);
        add(&mut tb, "3900", -nci_goodwill_fx);
        add(&mut tb, "3200", nci_goodwill_fx);
        nci += nci_goodwill_fx;
        let mut entry = vec![
            ("1400", -investment),
            ("3000", capital_presentation),
            ("1100", goodwill_now),
            ("3900", -nci_acquisition),
            ("8100", -goodwill_fx_year),
            // The holder's gain on the investment (a credit in its OCI) reversed.
            ("8100", investment_fx[c]),
        ];
        let rest: Decimal = entry.iter().map(|x| x.1).sum();
        entry.push(("3300", -rest));
        for (a, x) in entry {
            add(&mut tb, a, x);
        }
        let share_nci = Decimal::ONE - eff[c];
        let post = equity_post[c] - capital_presentation;
        let nci_post = round2(post * share_nci);
        add(&mut tb, "3900", -nci_post);
        add(&mut tb, "3200", nci_post);
        nci += nci_acquisition + nci_post;
        if !share_nci.is_zero() {
            profit_nci += round2(profit[c] * share_nci);
            oci_nci += round2(oci[c] * share_nci) + nci_goodwill_fx_year;
        }
    }
    tb.retain(|_, v| !v.is_zero());
    Expected { tb, nci, profit_nci, oci_nci }
}

proptest! {
    #![proptest_config(ProptestConfig { cases: 24, ..ProptestConfig::default() })]

    #[test]
    fn close_agrees_with_a_naive_consolidation(g in group()) {
        let f = write(&g);
        let out = f.path().join("out");
        let (code, v) = run_json(f.path(), &["close", "--period", "2026-01", "--out", out.to_str().unwrap()]);
        prop_assert_eq!(code, 0, "{:#}", v);
        prop_assert_eq!(&v["proof"]["tied"], &serde_json::Value::Bool(true), "{:#}", v["proof"]);
        let want = oracle(&g);
        let mut got: BTreeMap<String, Decimal> = v["group_trial_balance"]
            .as_array()
            .unwrap()
            .iter()
            .map(|r| (r["account"].as_str().unwrap().to_string(), r["amount"].as_str().unwrap().parse().unwrap()))
            .collect();
        got.retain(|_, v| !v.is_zero());
        prop_assert_eq!(&got, &want.tb, "{:?}", g);
        let nci_tb = -got.get("3900").copied().unwrap_or_default();
        prop_assert_eq!(nci_tb, want.nci);
        let nci_rows: Decimal = v["nci"].as_array().unwrap().iter().map(|r| r["equity"].as_str().unwrap().parse::<Decimal>().unwrap()).sum();
        prop_assert_eq!(nci_rows, want.nci);
        let profit_nci: Decimal = v["attribution"]["profit_nci"].as_str().unwrap().parse().unwrap();
        prop_assert_eq!(profit_nci, want.profit_nci);
        let oci_nci: Decimal = v["attribution"]["oci_nci"].as_str().unwrap().parse().unwrap();
        prop_assert_eq!(oci_nci, want.oci_nci);
    }
}

//! The translation against a naive oracle on random groups (property test).
//!
//! The oracle below is a plain rust_decimal loop over (entity, account, month), written
//! from the rules in docs/formats.md and IAS 21.39-42, not from the polars plan in
//! src/translate.rs: closing-basis balances at the month's closing rate, income and
//! expense at the month's average (periodic) or the year-to-date amount at the
//! year-to-date average, equity brought forward plus each movement at its historical
//! rate, everything at closing from the first hyperinflationary month (IAS 21.42), after
//! a restatement by a flat price index (IAS 29 with a factor of 1, so that the oracle
//! needs no restatement of its own and the engine's restatement path still runs), each
//! translated balance rounded once to the presentation currency's minor unit. From the
//! oracle's own lines it computes the translation difference of every entity and month
//! and checks the formula identity (IAS 21.39c, 21.41; docs/domain, Translation):
//!
//!   difference = opening net assets x (closing - closing before)
//!              + profit x (closing - the rate it was translated at)
//!              + equity movements x (closing - their rate)
//!              + rounding,
//!
//! where the rounding is bounded by half a minor unit per translated balance, so the
//! identity cannot hold by construction. Rates are drawn coarse (eighths) as well as
//! fine, so that translated amounts fall exactly on half a minor unit often and both
//! rounding modes are exercised on ties.

use std::collections::BTreeMap;
use std::str::FromStr;

use proptest::prelude::*;
use rust_decimal::{Decimal, RoundingStrategy};

use crate::support::{Folder, LAYOUT, ias29_chart, ias29_settings, identity_mapping, settings};
use tessera::model::Period;

#[derive(Clone, Copy, Debug, PartialEq)]
enum Basis {
    Closing,
    Average,
    Historical,
}

const ACCOUNTS: [(&str, Basis); 6] = [
    ("1000", Basis::Closing),
    ("1500", Basis::Closing),
    ("3000", Basis::Historical),
    ("3200", Basis::Historical),
    ("4000", Basis::Average),
    ("5000", Basis::Average),
];

const MONTHS: [&str; 4] = ["2025-12", "2026-01", "2026-02", "2026-03"];

/// A rate as written in the files: value and direction.
#[derive(Clone, Copy, Debug)]
struct R {
    value: Decimal,
    per_unit: bool,
}

impl R {
    /// Presentation value of `x`, exact (rust_decimal's 28 digits for the quotient).
    fn apply(&self, x: Decimal) -> Decimal {
        if self.per_unit { x * self.value } else { x / self.value }
    }
    fn quote(&self) -> &'static str {
        if self.per_unit { "presentation_per_unit" } else { "units_per_presentation" }
    }
}

#[derive(Clone, Debug)]
struct MonthRates {
    closing: R,
    average: R,
    average_ytd: R,
}

#[derive(Clone, Debug)]
struct Sub {
    currency: &'static str,
    minor: u32,
    /// Opening: cash, inventory, share capital (credit, positive here), and the
    /// presentation amounts brought forward of share capital and retained earnings.
    opening: [i64; 3],
    opening_presentation: [i64; 2],
    /// Per month: cash change is the balancing figure; inventory change, revenue,
    /// expenses, dividend (a debit to retained earnings) in minor units.
    months: Vec<[i64; 4]>,
    dividend_rate: Vec<R>,
    rates: Vec<MonthRates>,
    /// Index into MONTHS of the first hyperinflationary month.
    hyper_from: Option<usize>,
}

fn minor_of(c: &str) -> u32 {
    match c {
        "JPY" => 0,
        "BHD" => 3,
        _ => 2,
    }
}

/// A rate around `scale` (units per EUR), drawn coarse or fine, in either direction.
fn rate(scale: Decimal) -> impl Strategy<Value = R> {
    (
        prop_oneof![
            (4i64..=24).prop_map(|n| Decimal::new(n * 125, 3)),
            (5000i64..=20000).prop_map(|n| Decimal::new(n, 4))
        ],
        any::<bool>(),
    )
        .prop_map(move |(v, per_unit)| {
            let units = v * scale;
            if per_unit {
                // The inverse quote of a coarse value keeps it coarse: 1 / (n/8).
                let inv = (Decimal::ONE / units).round_dp(10);
                R { value: if inv.is_zero() { Decimal::new(1, 10) } else { inv }, per_unit }
            } else {
                R { value: units, per_unit }
            }
        })
}

fn sub(currency: &'static str, hyper: bool) -> impl Strategy<Value = Sub> {
    let minor = minor_of(currency);
    let scale = if currency == "JPY" { Decimal::from(100) } else { Decimal::ONE };
    let month_rates = (rate(scale), rate(scale), rate(scale)).prop_map(|(closing, average, average_ytd)| MonthRates {
        closing,
        average,
        average_ytd,
    });
    let span = 10i64.pow(minor) * 100_000;
    (
        [(-span..span), (-span..span), (-span..span)],
        [(-10_000_000i64..10_000_000), (-10_000_000i64..10_000_000)],
        proptest::collection::vec([(-span..span), (0..span), (0..span), (0i64..span / 10)], 3),
        proptest::collection::vec(rate(scale), 3),
        proptest::collection::vec(month_rates, 4),
        if hyper { proptest::option::of(1usize..=3).boxed() } else { Just(None).boxed() },
        proptest::collection::vec(any::<bool>(), 3),
    )
        .prop_map(move |(opening, opening_presentation, mut months, dividend_rate, rates, hyper_from, divs)| {
            for (m, d) in months.iter_mut().zip(divs) {
                if !d {
                    m[3] = 0;
                }
            }
            Sub { currency, minor, opening, opening_presentation, months, dividend_rate, rates, hyper_from }
        })
}

fn amt(n: i64, minor: u32) -> Decimal {
    Decimal::new(n, minor)
}

fn round(d: Decimal, dp: u32, even: bool) -> Decimal {
    let s = if even { RoundingStrategy::MidpointNearestEven } else { RoundingStrategy::MidpointAwayFromZero };
    let mut r = d.round_dp_with_strategy(dp, s);
    r.rescale(dp);
    r
}

impl Sub {
    /// Local movement of `account` in month `m` (1..=3), or the opening balance (m = 0).
    fn local(&self, account: &str, m: usize) -> Decimal {
        let n = self.minor;
        if m == 0 {
            let [cash, inv, cap] = self.opening;
            return match account {
                "1000" => amt(cash, n),
                "1500" => amt(inv, n),
                "3000" => -amt(cap, n),
                "3200" => -(amt(cash, n) + amt(inv, n) - amt(cap, n)),
                _ => Decimal::ZERO,
            };
        }
        let [inv, rev, exp, div] = self.months[m - 1];
        match account {
            "1000" => amt(rev, n) - amt(exp, n) - amt(div, n) - amt(inv, n),
            "1500" => amt(inv, n),
            "3200" => amt(div, n),
            "4000" => -amt(rev, n),
            "5000" => amt(exp, n),
            _ => Decimal::ZERO,
        }
    }

    fn write(&self, f: &Folder, id: &str) {
        f.write(&format!("entities/{id}/mapping.csv"), &identity_mapping());
        let n = self.minor;
        let [p_cap, p_re] = self.opening_presentation;
        let mut o = String::from("account,amount,amount_presentation\n");
        for a in ["1000", "1500", "3000", "3200"] {
            let pres = match a {
                "3000" => amt(p_cap, 2).to_string(),
                "3200" => amt(p_re, 2).to_string(),
                _ => String::new(),
            };
            o.push_str(&format!("{a},{},{pres}\n", self.local(a, 0).round_dp(n)));
        }
        f.write(&format!("entities/{id}/opening.csv"), &o);
        let mut tb = String::from("period,account,amount\n");
        for (m, month) in MONTHS.iter().enumerate().skip(1) {
            for (a, _) in ACCOUNTS {
                tb.push_str(&format!("{month},{a},{}\n", self.local(a, m)));
            }
        }
        f.write(&format!("entities/{id}/tb-2026-q1.movements.csv"), &tb);
    }
}

#[derive(Clone, Debug)]
struct Case {
    subs: Vec<Sub>,
    even: bool,
    ytd: bool,
}

fn case() -> impl Strategy<Value = Case> {
    let ccys = prop_oneof![Just(["USD", "JPY"]), Just(["JPY", "BHD"]), Just(["BHD", "USD"]), Just(["USD", "BHD"])];
    (ccys, any::<bool>(), any::<bool>()).prop_flat_map(|([a, b], even, ytd)| {
        (sub(a, false), sub(b, true)).prop_map(move |(s, h)| Case { subs: vec![s, h], even, ytd })
    })
}

const IDS: [&str; 2] = ["S", "H"];

fn build(c: &Case) -> Folder {
    let f = Folder::empty();
    let rounding = if c.even { "half_even" } else { "half_away_from_zero" };
    let income = if c.ytd { "year_to_date" } else { "periodic" };
    f.write("entities/group.toml", &ias29_settings(&settings("EUR", "P", rounding, income)));
    let mut ents = String::from("entity,name,country,currency,hyperinflationary_from\nP,Parent,NL,EUR,\n");
    let mut hold = String::from("owner,owned,capital_share,voting_share,valid_from\n");
    let mut rates = String::from("period,currency,closing,average,average_ytd,quote\n");
    let mut hist = String::from("entity,account,period,rate,quote\n");
    let mut index = String::from("currency,period,index\n");
    for (s, id) in c.subs.iter().zip(IDS) {
        let hyper = s.hyper_from.map(|m| MONTHS[m]).unwrap_or("");
        ents.push_str(&format!("{id},Sub {id},US,{},{hyper}\n", s.currency));
        hold.push_str(&format!("P,{id},1,1,2020-01-01\n"));
        if s.hyper_from.is_some() {
            for m in MONTHS {
                index.push_str(&format!("{},{m},100\n", s.currency));
            }
        }
        for (m, r) in s.rates.iter().enumerate() {
            // One direction per currency and month: the closing rate's.
            let q = r.closing.quote();
            let conv =
                |x: &R| if x.per_unit == r.closing.per_unit { x.value } else { (Decimal::ONE / x.value).round_dp(10) };
            rates.push_str(&format!(
                "{},{},{},{},{},{q}\n",
                MONTHS[m],
                s.currency,
                r.closing.value,
                conv(&r.average),
                conv(&r.average_ytd)
            ));
        }
        for (m, month) in MONTHS.iter().enumerate().skip(1) {
            if !s.local("3200", m).is_zero() {
                let r = s.dividend_rate[m - 1];
                hist.push_str(&format!("{id},3200,{month},{},{}\n", r.value, r.quote()));
            }
        }
        s.write(&f, id);
    }
    f.write("entities/entities.csv", &ents);
    f.write("entities/holdings.csv", &hold);
    f.write("entities/accounts.csv", &ias29_chart());
    f.write("entities/layouts.csv", LAYOUT);
    f.write("entities/P/mapping.csv", &identity_mapping());
    f.write("entities/P/opening.csv", "account,amount,amount_presentation\n1000,100.00,\n3000,-100.00,-100.00\n");
    let mut tb = String::from("period,account,amount\n");
    for month in &MONTHS[1..] {
        tb.push_str(&format!("{month},1000,0.00\n"));
    }
    f.write("entities/P/tb-2026-q1.movements.csv", &tb);
    f.write("rates/monthly.csv", &rates);
    f.write("rates/historical.csv", &hist);
    f.write("rates/price_index.csv", &index);
    f
}

impl Case {
    /// The rates as the files hold them (averages turned into the closing's direction
    /// and rounded to 10 decimals, as written).
    fn rates_as_written(&self, s: &Sub, m: usize) -> MonthRates {
        let r = &s.rates[m];
        let conv = |x: &R| {
            if x.per_unit == r.closing.per_unit {
                *x
            } else {
                R { value: (Decimal::ONE / x.value).round_dp(10), per_unit: r.closing.per_unit }
            }
        };
        MonthRates { closing: r.closing, average: conv(&r.average), average_ytd: conv(&r.average_ytd) }
    }
}

/// The oracle's translated balances: (account, month) -> balance in EUR.
fn oracle_balances(c: &Case, s: &Sub) -> BTreeMap<(&'static str, usize), Decimal> {
    let mut out = BTreeMap::new();
    for (a, basis) in ACCOUNTS {
        let mut local_balance = Decimal::ZERO;
        let mut pres = Decimal::ZERO;
        for m in 0..=3 {
            let mv = s.local(a, m);
            local_balance += mv;
            let r = c.rates_as_written(s, m);
            let hyper = s.hyper_from.is_some_and(|h| m >= h);
            pres = if m == 0 && basis == Basis::Historical {
                let [cap, re] = s.opening_presentation;
                if a == "3000" { amt(cap, 2) } else { amt(re, 2) }
            } else if hyper || basis == Basis::Closing {
                round(r.closing.apply(local_balance), 2, c.even)
            } else if basis == Basis::Average && c.ytd {
                round(r.average_ytd.apply(local_balance), 2, c.even)
            } else if basis == Basis::Average {
                pres + round(r.average.apply(mv), 2, c.even)
            } else if mv.is_zero() {
                pres
            } else {
                pres + round(s.dividend_rate[m - 1].apply(mv), 2, c.even)
            };
            out.insert((a, m), pres);
        }
    }
    out
}

struct Engine {
    /// (entity, account, month) -> (balance, movement) in EUR.
    lines: BTreeMap<(String, String, usize), (Decimal, Decimal)>,
    /// (entity, month) -> (on opening net assets, on profit, on equity, rounding, total,
    /// on hyperinflation).
    explained: BTreeMap<(String, usize), [Decimal; 6]>,
    differences: BTreeMap<(String, usize), Decimal>,
    tied: bool,
}

fn engine(f: &Folder) -> Engine {
    let last = Period::from_str("2026-03").expect("period");
    let (checked, findings) = tessera::commands::load_checked(f.path(), Some(last)).expect("loads");
    assert!(!findings.has_blocking(), "{:#?}", findings.items());
    let c = checked.expect("checked");
    let t = tessera::translate::translate(&c.ds, &c.mapped, c.scope.fiscal_start, last).expect("translates");
    let checks = tessera::translate::prove(&t).expect("proves");
    let month = |i: i32| {
        MONTHS
            .iter()
            .position(|m| tessera::map_accounts::period_index(Period::from_str(m).unwrap()) == i)
            .expect("month")
    };
    let df = &t.lines;
    let e = tessera::money::column_strings(df, "entity").unwrap();
    let a = tessera::money::column_strings(df, "group_account").unwrap();
    let p: Vec<i32> = df.column("period_index").unwrap().i32().unwrap().iter().map(|x| x.unwrap()).collect();
    let bp = tessera::money::column_decimals(df.column("balance_presentation").unwrap()).unwrap();
    let ap = tessera::money::column_decimals(df.column("amount_presentation").unwrap()).unwrap();
    let mut lines = BTreeMap::new();
    for i in 0..df.height() {
        let key = (e[i].clone().unwrap(), a[i].clone().unwrap(), month(p[i]));
        lines.insert(key, (bp[i].expect("translated"), ap[i].expect("translated")));
    }
    let d = &t.differences;
    let de = tessera::money::column_strings(d, "entity").unwrap();
    let dp: Vec<i32> = d.column("period_index").unwrap().i32().unwrap().iter().map(|x| x.unwrap()).collect();
    let dv = tessera::money::column_decimals(d.column("translation_difference").unwrap()).unwrap();
    let differences = (0..d.height()).map(|i| ((de[i].clone().unwrap(), month(dp[i])), dv[i].unwrap())).collect();
    let explained = t
        .explanations
        .iter()
        .map(|x| {
            let m = MONTHS.iter().position(|m| *m == x.period.to_string()).expect("month");
            (
                (x.entity.to_string(), m),
                [x.on_opening_net_assets, x.on_profit, x.on_equity_movements, x.rounding, x.total, x.on_hyperinflation],
            )
        })
        .collect();
    Engine { lines, explained, differences, tied: tessera::proof::tied(&checks) }
}

fn check_case(c: &Case) -> Result<(), TestCaseError> {
    let f = build(c);
    let got = engine(&f);
    prop_assert!(got.tied, "the translation's own proof failed");
    for (s, id) in c.subs.iter().zip(IDS) {
        let want = oracle_balances(c, s);
        for m in 0..=3 {
            let mut movement_sum = Decimal::ZERO;
            for (a, _) in ACCOUNTS {
                let bal = want[&(a, m)];
                let before = if m == 0 { Decimal::ZERO } else { want[&(a, m - 1)] };
                let key = (id.to_string(), a.to_string(), m);
                let (gb, gm) = got.lines.get(&key).copied().unwrap_or_else(|| panic!("no line {key:?}"));
                prop_assert_eq!(gb, bal, "balance {:?}", key);
                prop_assert_eq!(gm, bal - before, "movement {:?}", key);
                movement_sum += bal - before;
            }
            // The translation difference is the balancing figure (debit positive).
            let td = -movement_sum;
            prop_assert_eq!(got.differences[&(id.to_string(), m)], td, "difference {} {}", id, MONTHS[m]);
            if m == 0 {
                continue;
            }
            // The formula identity, gains positive, from the oracle's own arithmetic.
            let total = -td;
            let x = got.explained[&(id.to_string(), m)];
            prop_assert_eq!(x[4], total);
            prop_assert_eq!(x[0] + x[1] + x[2] + x[3] + x[5], total);
            if s.hyper_from.is_some_and(|h| m >= h) {
                // IAS 21.42: every item at closing. The restated balances sum to zero, so
                // the difference is the translated balances of the month before, released,
                // and the rounding of this month's.
                let before: Decimal = ACCOUNTS.iter().map(|(a, _)| want[&(*a, m - 1)]).sum();
                let now: Decimal = ACCOUNTS.iter().map(|(a, _)| want[&(*a, m)]).sum();
                prop_assert_eq!(x[5], -before, "on hyperinflation {} {}", id, MONTHS[m]);
                prop_assert_eq!(x[3], now, "rounding {} {}", id, MONTHS[m]);
                continue;
            }
            prop_assert_eq!(x[5], Decimal::ZERO);
            let r = c.rates_as_written(s, m);
            let rb = c.rates_as_written(s, m - 1);
            let na_before: Decimal = (0..m).map(|q| s.local("1000", q) + s.local("1500", q)).sum();
            let profit = -(s.local("4000", m) + s.local("5000", m));
            let profit_translated = if c.ytd {
                let ytd = |q: usize| -> Decimal { (1..=q).map(|k| -(s.local("4000", k) + s.local("5000", k))).sum() };
                let before = if m == 1 { Decimal::ZERO } else { rb.average_ytd.apply(ytd(m - 1)) };
                r.average_ytd.apply(ytd(m)) - before
            } else {
                r.average.apply(profit)
            };
            let equity = -s.local("3200", m);
            let equity_translated = if equity.is_zero() { Decimal::ZERO } else { s.dividend_rate[m - 1].apply(equity) };
            let on_na = r.closing.apply(na_before) - rb.closing.apply(na_before);
            let on_profit = r.closing.apply(profit) - profit_translated;
            let on_equity = r.closing.apply(equity) - equity_translated;
            prop_assert_eq!(x[0], round(on_na, 2, c.even), "on opening net assets {} {}", id, MONTHS[m]);
            prop_assert_eq!(x[1], round(on_profit, 2, c.even), "on profit {} {}", id, MONTHS[m]);
            prop_assert_eq!(x[2], round(on_equity, 2, c.even), "on equity {} {}", id, MONTHS[m]);
            // Each of the translated balances that moved (two closing, up to two income
            // (ytd) or two movements, one equity, each also the one before) rounds by at
            // most half a cent: the unrounded formula misses the balancing figure by less
            // than that. 20 half cents is a generous bound that a wrong rate or basis
            // would still break by far.
            let residue = total - (on_na + on_profit + on_equity);
            prop_assert!(residue.abs() <= Decimal::new(10, 2), "residue {} {} {}", residue, id, MONTHS[m]);
        }
        // The parent in the presentation currency has nothing to translate.
        for m in 1..=3 {
            prop_assert_eq!(got.differences[&("P".to_string(), m)], Decimal::ZERO);
        }
    }
    Ok(())
}

proptest! {
    #![proptest_config(ProptestConfig { cases: 48, ..ProptestConfig::default() })]

    #[test]
    fn translation_matches_a_naive_oracle_and_the_formula_identity(c in case()) {
        check_case(&c)?;
    }
}

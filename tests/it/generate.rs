//! `tessera generate`: the synthetic group is valid input (`check` finds nothing), closes
//! with its proof tied from CSV and from Parquet alike, is byte-identical for a seed, and
//! `match` finds in it exactly the intercompany differences each pair was given.

use std::collections::BTreeMap;
use std::path::Path;

use tessera::generate::{Options, PairDifference, Plan};

use crate::support::{Folder, run, run_json};

fn options(seed: u64, parquet: bool) -> Options {
    Options { entities: 36, accounts: 160, used: 70, months: 3, seed, documents: 3000, parquet }
}

fn generate(o: &Options) -> Folder {
    let f = Folder::empty();
    let out = f.path().to_str().expect("utf-8 path").to_string();
    let args = [
        "generate".to_string(),
        format!("--entities={}", o.entities),
        format!("--accounts={}", o.accounts),
        format!("--used={}", o.used),
        format!("--months={}", o.months),
        format!("--seed={}", o.seed),
        format!("--documents={}", o.documents),
        format!("--out={out}"),
    ];
    let mut args: Vec<&str> = args.iter().map(|s| s.as_str()).collect();
    if o.parquet {
        args.push("--parquet");
    }
    let (code, text) = run(&args);
    assert_eq!(code, 0, "{text}");
    f
}

/// Every file under `dir`, relative path -> bytes.
fn files(dir: &Path) -> BTreeMap<String, Vec<u8>> {
    let mut out = BTreeMap::new();
    let mut stack = vec![dir.to_path_buf()];
    while let Some(d) = stack.pop() {
        for e in std::fs::read_dir(&d).expect("read dir") {
            let p = e.expect("entry").path();
            if p.is_dir() {
                stack.push(p);
            } else {
                let rel = p.strip_prefix(dir).expect("under dir").to_string_lossy().to_string();
                out.insert(rel, std::fs::read(&p).expect("read"));
            }
        }
    }
    out
}

/// Accepts, in `entities/accepted_differences.csv`, every pair `match` reports open: the
/// generator plants open differences on purpose, and a final close (and `check`) blocks
/// on them until they are accepted, as a group team would after looking at them.
pub fn accept_planted(dir: &std::path::Path) {
    let (_, m) = run_json(dir, &["match"]);
    std::fs::write(dir.join("entities/accepted_differences.csv"), tessera::report::bench::acceptances(&m))
        .expect("write acceptances");
}

#[test]
fn generated_group_passes_check_once_its_planted_open_pairs_are_accepted() {
    for parquet in [false, true] {
        let f = generate(&options(3, parquet));
        let (code, v) = run_json(f.path(), &["check"]);
        let rules: Vec<&str> =
            v["findings"].as_array().expect("findings").iter().filter_map(|x| x["rule"].as_str()).collect();
        assert!(code == 0 || rules.iter().all(|r| *r == "IntercompanyOpen"), "parquet {parquet}: {v:#}");
        accept_planted(f.path());
        let (code, v) = run_json(f.path(), &["check"]);
        assert_eq!(code, 0, "parquet {parquet}: {v:#}");
        assert_eq!(v["findings"].as_array().map(|a| a.len()), Some(0), "parquet {parquet}: {v:#}");
    }
}

#[test]
fn generated_group_closes_tied_and_parquet_gives_the_same_close() {
    let mut tbs = Vec::new();
    for parquet in [false, true] {
        let f = generate(&options(5, parquet));
        let out = f.path().join("out");
        // The generated open pairs block a final close until they are accepted, as a
        // group team would after looking at them (issue 14).
        let (code, before) = run_json(f.path(), &["close", "--out", out.to_str().expect("utf-8")]);
        assert_eq!(code, 1, "the open pairs must block: {before:#}");
        let (_, m) = run_json(f.path(), &["match"]);
        let accepted = tessera::report::bench::acceptances(&m);
        f.write("entities/accepted_differences.csv", &accepted);
        let (code, v) = run_json(f.path(), &["close", "--out", out.to_str().expect("utf-8")]);
        assert_eq!(code, 0, "parquet {parquet}: {:#}", v["proof"]);
        assert_eq!(v["proof"]["tied"], true, "parquet {parquet}: {:#}", v["proof"]);
        // The group has the parts it was built with: intercompany, investments and NCI,
        // and an acquisition during the year.
        let rules: Vec<&str> =
            v["eliminations"].as_array().expect("journal").iter().filter_map(|e| e["rule"].as_str()).collect();
        for rule in ["intercompany", "investment_and_goodwill", "non_controlling_interest", "equity_method"] {
            assert!(rules.contains(&rule), "no {rule} entry in {rules:?}");
        }
        tbs.push(v["group_trial_balance"].clone());
    }
    assert_eq!(tbs[0], tbs[1], "the same group from CSV and from Parquet closes to the same figures");
}

#[test]
fn the_same_seed_gives_byte_identical_files_and_another_seed_does_not() {
    for parquet in [false, true] {
        let a = files(generate(&options(11, parquet)).path());
        let b = files(generate(&options(11, parquet)).path());
        assert!(a.len() > 100, "{} files", a.len());
        assert_eq!(a.keys().collect::<Vec<_>>(), b.keys().collect::<Vec<_>>());
        for (k, v) in &a {
            assert!(v == &b[k], "{k} differs between two runs with seed 11");
        }
        let c = files(generate(&options(12, parquet)).path());
        let differing = a.iter().filter(|(k, v)| c.get(*k) != Some(*v)).count();
        assert!(differing > a.len() / 2, "seed 12 changes only {differing} of {} files", a.len());
    }
}

/// The status `match` must give each kind of a pair, from the difference the generator
/// put in (docs/formats.md, `tessera match`: tolerance EUR 50 and 0.001 both must hold;
/// timing when the unpaired documents in the window equal the difference).
fn expected(d: PairDifference) -> &'static [(&'static str, Option<&'static str>)] {
    match d {
        PairDifference::Matched => &[("matched", None)],
        PairDifference::WithinTolerance => &[("within_tolerance", Some("unexplained"))],
        PairDifference::Timing => &[("explained", Some("timing"))],
        PairDifference::Open => &[("open", Some("unexplained"))],
        // Sides in two currencies agree in the transaction currency; translated, they
        // differ (the buyer converted at the month's rate, each side is translated at its
        // own), by little or, for flows at the average rate, not at all after rounding.
        PairDifference::Fx => &[("explained", Some("fx")), ("within_tolerance", Some("fx")), ("matched", None)],
    }
}

#[test]
fn match_finds_the_difference_each_pair_was_given() {
    let o = Options { entities: 80, ..options(21, false) };
    let f = generate(&o);
    let plan = Plan::new(o).expect("valid options");
    accept_planted(f.path());
    let (code, v) = run_json(f.path(), &["check"]);
    assert_eq!((code, v["findings"].as_array().map(|a| a.len())), (0, Some(0)), "{v:#}");
    let (code, v) = run_json(f.path(), &["match"]);
    assert_eq!(code, 0, "{v:#}");
    let mut found: BTreeMap<(String, String, String), (String, Option<String>)> = BTreeMap::new();
    for p in v["pairs"].as_array().expect("pairs") {
        let (e, c) = (p["entity"].as_str().unwrap_or_default(), p["counterparty"].as_str().unwrap_or_default());
        let (a, b) = if e < c { (e, c) } else { (c, e) };
        found.insert(
            (a.to_string(), b.to_string(), p["kind"].as_str().unwrap_or_default().to_string()),
            (p["status"].as_str().unwrap_or_default().to_string(), p["reason"].as_str().map(String::from)),
        );
    }
    let mut seen: BTreeMap<PairDifference, usize> = BTreeMap::new();
    for p in &plan.pairs {
        let (s, b) = (&plan.entities[p.seller].id, &plan.entities[p.buyer].id);
        let (x, y) = if s < b { (s.clone(), b.clone()) } else { (b.clone(), s.clone()) };
        for kind in ["trade", "sales"] {
            let got = found
                .get(&(x.clone(), y.clone(), kind.to_string()))
                .unwrap_or_else(|| panic!("{x}/{y} {kind} missing"));
            let ok = expected(p.difference).iter().any(|(st, r)| got.0 == *st && got.1.as_deref() == *r);
            assert!(ok, "{x}/{y} {kind} was given {:?} but match says {got:?}", p.difference);
        }
        *seen.entry(p.difference).or_default() += 1;
    }
    // Every kind of difference is present in a group of this size.
    for d in [
        PairDifference::Matched,
        PairDifference::WithinTolerance,
        PairDifference::Timing,
        PairDifference::Open,
        PairDifference::Fx,
    ] {
        assert!(seen.get(&d).copied().unwrap_or(0) > 0, "no pair with {d:?}: {seen:?}");
    }
}

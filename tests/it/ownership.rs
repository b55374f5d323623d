//! Changes in ownership (`ownership_changes.csv`): what the close expresses (control
//! obtained in stages, tests/cases/step-acquisition-investment) and what it refuses with
//! a blocking finding rather than a wrong figure: a holding that ends without a row, a
//! row holdings.csv contradicts, a loss of control, a change in stake.

use std::path::Path;

use serde_json::Value;

use crate::support::{Folder, repo, run_json};

const HOLDINGS: &str = "entities/holdings.csv";
const CHANGES: &str = "entities/ownership_changes.csv";
const HEADER: &str = "date,holder,owned,share,consideration,fair_value_held,costs,gain_account,note";

fn check(f: &Folder, period: &str) -> (i32, Vec<Value>) {
    let (code, v) = run_json(f.path(), &["check", "--period", period]);
    (code, v["findings"].as_array().expect("findings").clone())
}

fn of_rule<'a>(findings: &'a [Value], rule: &str) -> Vec<&'a Value> {
    findings.iter().filter(|f| f["rule"] == rule).collect()
}

fn copy_tree(from: &Path, to: &Path) {
    std::fs::create_dir_all(to).expect("mkdir");
    for e in std::fs::read_dir(from).expect("read dir") {
        let p = e.expect("entry").path();
        let target = to.join(p.file_name().expect("name"));
        if p.is_dir() {
            copy_tree(&p, &target);
        } else {
            std::fs::copy(&p, &target).expect("copy");
        }
    }
}

/// A copy of the step acquisition case folder.
fn step_case() -> Folder {
    let f = Folder::empty();
    for sub in ["entities", "rates"] {
        copy_tree(&repo().join("tests/cases/step-acquisition-investment").join(sub), &f.path().join(sub));
    }
    f
}

/// The demo sells NRD-SE on 1 July 2026 (the holding ends on 30 June). Without a row
/// the close would drop NRD-SE for the whole year: blocking, at the holding's line.
/// With the row, the loss of control is refused as not expressed yet, never closed.
#[test]
fn a_holding_that_ends_in_the_year_needs_a_row_and_a_loss_of_control_blocks() {
    let f = Folder::demo();
    f.replace(HOLDINGS, "ALD-NL,NRD-SE,1.00,1.00,2014-05-01,,", "ALD-NL,NRD-SE,1.00,1.00,2014-05-01,2026-06-30,");
    let line = f.line_of(HOLDINGS, "ALD-NL,NRD-SE");
    let (code, fs) = check(&f, "2026-12");
    assert_eq!(code, 1);
    let missing = of_rule(&fs, "OwnershipChangeMissing");
    assert_eq!(missing.len(), 1, "{fs:#?}");
    assert_eq!((missing[0]["file"].as_str(), missing[0]["line"].as_u64()), (Some(HOLDINGS), Some(line)));
    assert_eq!(missing[0]["severity"], "blocking");
    assert!(missing[0]["message"].as_str().unwrap().contains("2026-07-01"), "{:#}", missing[0]);
    // Before the sale (June) nothing has ended yet.
    let (_, june) = check(&f, "2026-06");
    assert!(of_rule(&june, "OwnershipChangeMissing").is_empty(), "{june:#?}");

    f.write(CHANGES, &format!("{HEADER}\n2026-07-01,ALD-NL,NRD-SE,-1.00,5000000,,,,sold\n"));
    let (code, fs) = check(&f, "2026-12");
    assert_eq!(code, 1);
    assert!(of_rule(&fs, "OwnershipChangeMissing").is_empty(), "{fs:#?}");
    let unsupported = of_rule(&fs, "OwnershipChangeUnsupported");
    assert_eq!(unsupported.len(), 1, "{fs:#?}");
    assert_eq!((unsupported[0]["file"].as_str(), unsupported[0]["line"].as_u64()), (Some(CHANGES), Some(2)));
    assert!(
        unsupported[0]["message"].as_str().unwrap().contains("loss of control (IFRS 10.25"),
        "{:#}",
        unsupported[0]
    );
    // The close refuses it too.
    let out = tempfile::tempdir().unwrap();
    let (code, _) = run_json(f.path(), &["close", "--period", "2026-12", "--out", out.path().to_str().unwrap()]);
    assert_eq!(code, 1);
}

/// ALD-NL buys 10% more of ALD-US (80% to 90%) on 1 July 2026: control kept, an equity
/// transaction (IFRS 10.23) the close does not post yet, so it blocks. A `share` that
/// holdings.csv does not give is inconsistent, with both shares.
#[test]
fn a_change_in_stake_blocks_and_a_share_holdings_contradict_is_inconsistent() {
    let f = Folder::demo();
    f.replace(
        HOLDINGS,
        "ALD-NL,ALD-US,0.80,0.80,2015-01-01,,,,",
        "ALD-NL,ALD-US,0.80,0.80,2015-01-01,2026-06-30,,,\nALD-NL,ALD-US,0.90,0.90,2026-07-01,,,,",
    );
    f.write(CHANGES, &format!("{HEADER}\n2026-07-01,ALD-NL,ALD-US,0.10,2500000,,,,\n"));
    let (code, fs) = check(&f, "2026-12");
    assert_eq!(code, 1);
    let unsupported = of_rule(&fs, "OwnershipChangeUnsupported");
    assert_eq!(unsupported.len(), 1, "{fs:#?}");
    assert!(unsupported[0]["message"].as_str().unwrap().contains("without loss of control"), "{:#}", unsupported[0]);
    assert!(of_rule(&fs, "OwnershipChangeInconsistent").is_empty(), "{fs:#?}");

    f.write(CHANGES, &format!("{HEADER}\n2026-07-01,ALD-NL,ALD-US,0.15,2500000,,,,\n"));
    let (_, fs) = check(&f, "2026-12");
    let x = of_rule(&fs, "OwnershipChangeInconsistent");
    assert_eq!(x.len(), 1, "{fs:#?}");
    assert!(x[0]["message"].as_str().unwrap().contains("0.9 - 0.8 = 0.1"), "{:#}", x[0]);
}

/// Control obtained in stages closes with the remeasurement gain in profit or loss
/// (the case folder's figures are checked by `close::case_folders_...`). Without the
/// row, the gain would sit in the translation reserve: blocking. With an associate
/// held before (30%), IAS 28.22 is not posted: blocking.
#[test]
fn control_in_stages_needs_the_fair_value_held_and_an_investment_before() {
    let f = step_case();
    let (code, fs) = check(&f, "2026-01");
    assert_eq!(code, 0, "{fs:#?}");
    let out = tempfile::tempdir().unwrap();
    let (code, v) = run_json(f.path(), &["close", "--period", "2026-01", "--out", out.path().to_str().unwrap()]);
    assert_eq!(code, 0, "{:#}", v["findings"]);
    let entries: Vec<&Value> =
        v["eliminations"].as_array().unwrap().iter().filter(|e| e["rule"] == "step_acquisition").collect();
    assert_eq!(entries.len(), 1, "{:#}", v["eliminations"]);

    f.remove(CHANGES);
    let (code, fs) = check(&f, "2026-01");
    assert_eq!(code, 1);
    // Both the 10% holding that ended and the control obtained over a held entity.
    let mut missing: Vec<(&str, u64)> = of_rule(&fs, "OwnershipChangeMissing")
        .iter()
        .map(|x| (x["file"].as_str().unwrap(), x["line"].as_u64().unwrap()))
        .collect();
    missing.sort();
    assert_eq!(missing, [("entities/acquisitions.csv", 2), (HOLDINGS, 2)], "{fs:#?}");

    let f = step_case();
    f.replace(HOLDINGS, "P,S,0.1,0.1,2020-01-01,2025-12-31", "P,S,0.3,0.3,2020-01-01,2025-12-31");
    f.replace(CHANGES, "2026-01-01,P,S,0.6,", "2026-01-01,P,S,0.4,");
    let (code, fs) = check(&f, "2026-01");
    assert_eq!(code, 1);
    let unsupported = of_rule(&fs, "OwnershipChangeUnsupported");
    assert_eq!(unsupported.len(), 1, "{fs:#?}");
    assert!(unsupported[0]["message"].as_str().unwrap().contains("IAS 28.22"), "{:#}", unsupported[0]);
}

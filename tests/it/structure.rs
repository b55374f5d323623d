//! `tessera structure` on the demo group: every entity with its method and percentages.
//! The structure module's own unit tests hold the published cases (vertical and D-shaped
//! groups, control dates, reciprocal holdings, property tests).

use crate::support::{Folder, repo, run_json};

#[test]
fn demo_structure_has_every_method_and_interest() {
    let (code, v) = run_json(&repo(), &["structure", "--period", "2026-12"]);
    assert_eq!(code, 0, "{v}");
    let get = |id: &str| v["entities"].as_array().unwrap().iter().find(|e| e["id"] == id).cloned().expect(id);
    // (entity, immediate parent, effective interest, nci, method); the D-shaped KIS-JP:
    // 10% + 80% x 70% = 66% (the D-shaped rule of docs/demo.md), three tiers to BRW-MX:
    // 80% x 75% x 70% = 42%, still controlled through the chain of votes.
    let expect = [
        ("ALD-NL", None, "1", "0", "full"),
        ("ALD-US", Some("ALD-NL"), "0.8", "0.2", "full"),
        ("BRW-US", Some("ALD-US"), "0.6", "0.4", "full"),
        ("BRW-MX", Some("BRW-US"), "0.42", "0.58", "full"),
        ("KIS-JP", Some("ALD-US"), "0.66", "0.34", "full"),
        ("GLF-BH", Some("ALD-NL"), "0.6", "0.4", "full"),
        ("HEL-CH", None, "0.3", "0", "equity"),
    ];
    for (id, parent, eff, nci, method) in expect {
        let e = get(id);
        assert_eq!(e["parent"].as_str(), parent, "{id}");
        let d = |k: &str| e[k].as_str().unwrap().parse::<rust_decimal::Decimal>().unwrap().normalize().to_string();
        assert_eq!(d("effective_interest"), eff, "{id}");
        assert_eq!(d("nci"), nci, "{id}");
        assert_eq!(e["method"], method, "{id}");
    }
    // The acquisition during the year: control from the holding's start.
    assert_eq!(get("GLF-BH")["controlled_from"], "2026-04-01");
    // Before the acquisition GLF-BH is outside the group.
    let (_, v) = run_json(&repo(), &["structure", "--period", "2026-03"]);
    let glf = v["entities"].as_array().unwrap().iter().find(|e| e["id"] == "GLF-BH").unwrap().clone();
    assert_eq!(glf["method"], "none");
}

#[test]
fn over_held_structure_blocks_with_a_named_finding() {
    let f = Folder::demo();
    f.append("entities/holdings.csv", "ALD-NL,BRW-MX,0.40,0.40,2020-01-01,,,,");
    let (code, v) = run_json(f.path(), &["check", "--period", "2026-12"]);
    assert_eq!(code, 1);
    assert!(
        v["findings"].as_array().unwrap().iter().any(|x| x["rule"] == "EntityOverHeld" && x["entity"] == "BRW-MX"),
        "{v}"
    );
}

//! ISO 4217 minor units: the `iso_currency` crate tessera takes them from, checked
//! against the ISO 4217 List One table published 2026-01-01, as shipped in the PyPI
//! package iso4217==1.16.20260101 (see tests/fixtures/iso4217/README.md).

use tessera::model::Currency;

fn table() -> Vec<(String, Option<u32>)> {
    let text = include_str!("../fixtures/iso4217/list_one.csv");
    text.lines()
        .filter(|l| !l.starts_with('#') && !l.starts_with("code,"))
        .map(|l| {
            let (code, minor) = l.split_once(',').expect("code,minor_unit");
            (code.to_string(), minor.parse().ok())
        })
        .collect()
}

#[test]
fn named_currencies_have_the_published_minor_unit() {
    // ISO 4217 List One (2026-01-01): JPY 0, EUR 2, BHD 3, KWD 3, CLF 4.
    let t = table();
    for (code, minor) in [("JPY", 0), ("EUR", 2), ("BHD", 3), ("KWD", 3), ("CLF", 4)] {
        let published = t.iter().find(|(c, _)| c == code).and_then(|(_, m)| *m);
        assert_eq!(published, Some(minor), "{code} in the published table");
        let crate_minor = Currency::parse(code).and_then(|c| c.minor_unit_checked());
        assert_eq!(crate_minor, Some(minor), "{code} in iso_currency");
    }
}

#[test]
fn crate_agrees_with_every_row_of_the_table() {
    let mut disagreements = Vec::new();
    for (code, published) in table() {
        let Some(c) = Currency::parse(&code) else {
            disagreements.push(format!("{code}: unknown to iso_currency"));
            continue;
        };
        if c.minor_unit_checked() != published {
            disagreements.push(format!("{code}: table {published:?}, crate {:?}", c.minor_unit_checked()));
        }
    }
    assert!(disagreements.is_empty(), "iso_currency differs from ISO 4217 List One:\n{}", disagreements.join("\n"));
}

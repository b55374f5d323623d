//! `entities/ownership_changes.csv` (optional): shares of an entity bought or sold on a
//! date, with what was paid or received and the fair value of the interest held before
//! or retained after. Only the shape is read here (dates, a signed share, amounts that
//! are plain non-negative decimals); `ownership` checks the rows against holdings.csv
//! and says which changes the close can express.

use std::path::Path;
use std::str::FromStr;

use rust_decimal::Decimal;

use super::{InputFile, Spec, invalid, open_table, parse_amount_cell, parse_date, required};
use crate::findings::Finding;
use crate::model::{EntityId, GroupAccount, OwnershipChange, Source};

/// The file's name under `entities/`.
pub const OWNERSHIP_CHANGES_FILE: &str = "ownership_changes.csv";

/// The rows (none when the file does not exist: nothing changed hands).
pub(super) fn load_ownership_changes(
    root: &Path,
    path: &Path,
    f: &mut Vec<Finding>,
    inputs: &mut Vec<InputFile>,
) -> Vec<OwnershipChange> {
    if !path.is_file() {
        return Vec::new();
    }
    let spec = Spec {
        required: &["date", "holder", "owned", "share", "consideration"],
        optional: &["fair_value_held", "costs", "gain_account", "note"],
        prefixes: &[],
    };
    let Some(t) = open_table(root, path, &spec, f, inputs) else { return Vec::new() };
    let mut out = Vec::new();
    for row in 0..t.height() {
        let date = required(&t, "date", row, f).and_then(|v| parse_date(&t, row, "date", &v, f));
        let holder = required(&t, "holder", row, f);
        let owned = required(&t, "owned", row, f);
        let share = required(&t, "share", row, f).and_then(|v| match Decimal::from_str(&v) {
            // A change of nothing, or of more than the whole capital, is no change.
            Ok(d) if !d.is_zero() && d.abs() <= Decimal::ONE => Some(d),
            _ => {
                f.push(invalid(&t, row, "share", &v, "a signed share: 0.20 bought, -0.30 sold, at most 1 either way"));
                None
            }
        });
        let non_negative = |col: &str, f: &mut Vec<Finding>| -> Option<Option<Decimal>> {
            let v = parse_amount_cell(&t, row, col, f);
            match v {
                Some(x) if x.is_sign_negative() && !x.is_zero() => {
                    f.push(invalid(&t, row, col, &x.to_string(), "an amount of 0 or more"));
                    None
                }
                _ if t.get(col, row).is_some() && v.is_none() => None,
                _ => Some(v),
            }
        };
        let consideration =
            required(&t, "consideration", row, f).and_then(|_| non_negative("consideration", f)).flatten();
        let fair_value_held = non_negative("fair_value_held", f);
        let costs = non_negative("costs", f);
        let (
            Some(date),
            Some(holder),
            Some(owned),
            Some(share),
            Some(consideration),
            Some(fair_value_held),
            Some(costs),
        ) = (date, holder, owned, share, consideration, fair_value_held, costs)
        else {
            continue;
        };
        out.push(OwnershipChange {
            date,
            holder: EntityId::new(holder),
            owned: EntityId::new(owned),
            share,
            consideration,
            fair_value_held,
            costs: costs.unwrap_or_default(),
            gain_account: t.get("gain_account", row).map(GroupAccount::new),
            note: t.get("note", row).unwrap_or_default(),
            source: Source::line(&t.file, t.line(row)),
        });
    }
    out
}

//! `entities/group_adjustments.csv` (optional): top-side entries, one row per line, the
//! rows of one entry sharing its `entry` id. Only the shape is read here (the required
//! cells, a period, an amount); `close::topside` checks each entry against the chart,
//! the structure and the fiscal year, for `validate` and for the close alike.

use std::collections::BTreeSet;
use std::path::Path;
use std::str::FromStr;

use super::{InputFile, Spec, invalid, open_table, parse_amount_cell, required};
use crate::findings::Finding;
use crate::model::{EntityId, GroupAccount, GroupAdjustment, Period, Source};

/// The file's name under `entities/`.
pub const GROUP_ADJUSTMENTS_FILE: &str = "group_adjustments.csv";

/// The lines read, and the ids of the entries a row of which could not be read (its
/// finding is raised here): such an entry is never posted, since a line is missing.
#[derive(Debug, Clone, Default)]
pub struct GroupAdjustments {
    pub lines: Vec<GroupAdjustment>,
    pub incomplete: BTreeSet<String>,
    /// The rows of entries of earlier fiscal years the folder holds (`years.rs`): their
    /// year closed them, so a later year carries what they left in the balance sheet
    /// (`close::topside::post_carried`).
    pub carried: Vec<GroupAdjustment>,
}

pub(super) fn load_group_adjustments(
    root: &Path,
    path: &Path,
    f: &mut Vec<Finding>,
    inputs: &mut Vec<InputFile>,
) -> GroupAdjustments {
    let mut out = GroupAdjustments::default();
    if !path.is_file() {
        return out;
    }
    let spec = Spec {
        required: &["entry", "period", "scope", "account", "amount", "reason", "prepared_by"],
        optional: &["entity", "counterparty"],
        prefixes: &[],
    };
    let Some(t) = open_table(root, path, &spec, f, inputs) else { return out };
    for row in 0..t.height() {
        let Some(entry) = required(&t, "entry", row, f) else { continue };
        let period = required(&t, "period", row, f).and_then(|p| match Period::from_str(&p) {
            Ok(p) => Some(p),
            Err(_) => {
                f.push(invalid(&t, row, "period", &p, "a period YYYY-MM"));
                None
            }
        });
        let cells = (
            period,
            required(&t, "scope", row, f),
            required(&t, "account", row, f),
            required(&t, "amount", row, f).and(parse_amount_cell(&t, row, "amount", f)),
            required(&t, "reason", row, f),
            required(&t, "prepared_by", row, f),
        );
        let (Some(period), Some(scope), Some(account), Some(amount), Some(reason), Some(prepared_by)) = cells else {
            out.incomplete.insert(entry);
            continue;
        };
        out.lines.push(GroupAdjustment {
            entry,
            period,
            scope: EntityId::new(scope),
            account: GroupAccount::new(account),
            amount,
            entity: t.get("entity", row).map(EntityId::new),
            counterparty: t.get("counterparty", row).map(EntityId::new),
            reason,
            prepared_by,
            source: Source::line(&t.file, t.line(row)),
        });
    }
    out
}

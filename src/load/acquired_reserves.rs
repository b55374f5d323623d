//! `entities/reserves_at_acquisition.csv` (optional): the balance a subsidiary's named
//! reserve (an equity account that the chart's `reserve` column names, such as a
//! revaluation surplus) had at the acquisition date. The investment entry eliminates
//! that amount as equity acquired; the rest of the reserve is post-acquisition OCI, the
//! group's (IFRS 10.B94). Needed when the first opening a folder holds comes after the
//! acquisition and the reserve has moved since. Only the shape is read here; the close
//! checks the entity and the account (`close::investment::reserve_findings`).

use std::path::Path;

use super::{InputFile, Spec, open_table, parse_amount_cell, required};
use crate::findings::Finding;
use crate::model::{EntityId, GroupAccount, ReserveAtAcquisition, Source};

/// The file's name under `entities/`.
pub const RESERVES_AT_ACQUISITION_FILE: &str = "reserves_at_acquisition.csv";

pub(super) fn load_reserves_at_acquisition(
    root: &Path,
    path: &Path,
    f: &mut Vec<Finding>,
    inputs: &mut Vec<InputFile>,
) -> Vec<ReserveAtAcquisition> {
    if !path.is_file() {
        return Vec::new();
    }
    let spec = Spec { required: &["owned", "account", "amount"], optional: &["note"], prefixes: &[] };
    let Some(t) = open_table(root, path, &spec, f, inputs) else { return Vec::new() };
    let mut out = Vec::new();
    for row in 0..t.height() {
        let owned = required(&t, "owned", row, f);
        let account = required(&t, "account", row, f);
        let amount = required(&t, "amount", row, f).and(parse_amount_cell(&t, row, "amount", f));
        let (Some(owned), Some(account), Some(amount)) = (owned, account, amount) else { continue };
        out.push(ReserveAtAcquisition {
            owned: EntityId::new(owned),
            account: GroupAccount::new(account),
            amount,
            source: Source::line(&t.file, t.line(row)),
        });
    }
    out
}

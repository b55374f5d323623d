//! `entities/cash_flow_lines.csv` (optional): the line of the statement of cash flows
//! each group account's movement belongs to. Only the shape is read here (a known
//! section, the required cells); `validate` checks the accounts against the chart and
//! that every account that moves has a line.

use std::path::Path;

use super::{InputFile, Spec, invalid, open_table, required};
use crate::cash_flows::{LineDef, Section};
use crate::findings::Finding;
use crate::model::{GroupAccount, Source};

/// The rows, or `None` when the file does not exist (the group has no statement of
/// cash flows).
pub(super) fn load_cash_flow_lines(
    root: &Path,
    path: &Path,
    f: &mut Vec<Finding>,
    inputs: &mut Vec<InputFile>,
) -> Option<Vec<LineDef>> {
    if !path.is_file() {
        return None;
    }
    let spec =
        Spec { required: &["account", "section", "line", "label"], optional: &["against", "note"], prefixes: &[] };
    let t = open_table(root, path, &spec, f, inputs)?;
    let mut out = Vec::new();
    for row in 0..t.height() {
        let cells = (
            required(&t, "account", row, f),
            required(&t, "section", row, f),
            required(&t, "line", row, f),
            required(&t, "label", row, f),
        );
        let (Some(account), Some(section), Some(line), Some(label)) = cells else { continue };
        let Some(section) = Section::parse(&section) else {
            f.push(invalid(&t, row, "section", &section, "operating, investing, financing, cash or exchange"));
            continue;
        };
        out.push(LineDef {
            account: GroupAccount::new(account),
            section,
            line,
            label,
            against: t.get("against", row),
            source: Source::line(&t.file, t.line(row)),
        });
    }
    Some(out)
}

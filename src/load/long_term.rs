//! `entities/long_term_interests.csv` (optional): a holder's long-term interests in an
//! equity-accounted investee that in substance form part of its net investment in it
//! (IAS 28.38: a loan or long-term receivable whose settlement is neither planned nor
//! likely in the foreseeable future), which absorb the investee's losses once the
//! investment in its ordinary shares is at zero. Only the shape is read here; the
//! close's `equity_method` rule checks the holder, the investee and the account
//! (`close::equity_method::long_term_findings`).

use std::path::Path;

use super::{InputFile, Spec, open_table, required};
use crate::findings::Finding;
use crate::model::{EntityId, GroupAccount, LongTermInterest, Source};

/// The file's name under `entities/`.
pub const LONG_TERM_INTERESTS_FILE: &str = "long_term_interests.csv";

pub(super) fn load_long_term_interests(
    root: &Path,
    path: &Path,
    f: &mut Vec<Finding>,
    inputs: &mut Vec<InputFile>,
) -> Vec<LongTermInterest> {
    if !path.is_file() {
        return Vec::new();
    }
    let spec = Spec { required: &["holder", "investee", "account"], optional: &["note"], prefixes: &[] };
    let Some(t) = open_table(root, path, &spec, f, inputs) else { return Vec::new() };
    let mut out = Vec::new();
    for row in 0..t.height() {
        let cells = (required(&t, "holder", row, f), required(&t, "investee", row, f), required(&t, "account", row, f));
        let (Some(holder), Some(investee), Some(account)) = cells else { continue };
        out.push(LongTermInterest {
            holder: EntityId::new(holder),
            investee: EntityId::new(investee),
            account: GroupAccount::new(account),
            source: Source::line(&t.file, t.line(row)),
        });
    }
    out
}

//! `entities/goodwill_impairments.csv` (optional): goodwill impairments, each with the
//! month it is recognised in (IAS 36.59-60), so that its presentation amount is fixed at
//! that month's rate. Only the shape is read here; the close's investment rule checks
//! the entity, the month and the rate (`close::impairment::findings`).

use std::path::Path;
use std::str::FromStr;

use rust_decimal::Decimal;

use super::{InputFile, Spec, invalid, open_table, parse_amount_cell, required};
use crate::findings::Finding;
use crate::model::{EntityId, GoodwillImpairment, Period, Source};

pub(super) fn load_impairments(
    root: &Path,
    path: &Path,
    f: &mut Vec<Finding>,
    inputs: &mut Vec<InputFile>,
) -> Vec<GoodwillImpairment> {
    if !path.is_file() {
        return Vec::new();
    }
    let spec = Spec { required: &["owned", "period", "amount"], optional: &["note"], prefixes: &[] };
    let Some(t) = open_table(root, path, &spec, f, inputs) else { return Vec::new() };
    let mut out = Vec::new();
    for row in 0..t.height() {
        let owned = required(&t, "owned", row, f);
        let period = required(&t, "period", row, f).and_then(|p| match Period::from_str(&p) {
            Ok(x) => Some(x),
            Err(_) => {
                f.push(invalid(&t, row, "period", &p, "a period YYYY-MM"));
                None
            }
        });
        let amount = required(&t, "amount", row, f).and(parse_amount_cell(&t, row, "amount", f));
        let amount = match amount {
            Some(x) if x <= Decimal::ZERO => {
                f.push(invalid(
                    &t,
                    row,
                    "amount",
                    &x.to_string(),
                    "a positive amount (the impairment loss, never reversed: IAS 36.124)",
                ));
                None
            }
            other => other,
        };
        let (Some(owned), Some(period), Some(amount)) = (owned, period, amount) else { continue };
        out.push(GoodwillImpairment {
            owned: EntityId::new(owned),
            period,
            amount,
            source: Source::line(&t.file, t.line(row)),
        });
    }
    out
}

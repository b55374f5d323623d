//! `entities/fair_value_adjustments.csv` (optional): the fair value adjustments of each
//! acquired subsidiary's identifiable assets and liabilities (IFRS 3.18), several per
//! acquisition, each with its remaining useful life (empty for land, which is not
//! depreciated). Only the shape is read here; that the entity was acquired, consolidated
//! in full, and that the accounts are of the right statement is checked by the close's
//! rule `fair_value` (and by `check`, through the same function).

use std::path::Path;

use super::{InputFile, Spec, invalid, open_table, parse_amount_cell, required};
use crate::findings::{Finding, Rule};
use std::str::FromStr;

use rust_decimal::Decimal;

use crate::model::{EntityId, GroupAccount, Source, TaxRate, Uplift};

/// The longest useful life accepted, in months (100 years): a longer one is almost
/// certainly a unit error (days or years pasted as months).
pub const MAX_LIFE_MONTHS: u32 = 1200;

pub(super) fn load_uplifts(root: &Path, path: &Path, f: &mut Vec<Finding>, inputs: &mut Vec<InputFile>) -> Vec<Uplift> {
    if !path.is_file() {
        return Vec::new();
    }
    let spec = Spec {
        required: &["owned", "account", "amount"],
        optional: &["useful_life_months", "expense_account", "note"],
        prefixes: &[],
    };
    let Some(t) = open_table(root, path, &spec, f, inputs) else { return Vec::new() };
    let mut out = Vec::new();
    for row in 0..t.height() {
        let owned = required(&t, "owned", row, f);
        let account = required(&t, "account", row, f);
        let amount = required(&t, "amount", row, f).and(parse_amount_cell(&t, row, "amount", f));
        let life = match t.get("useful_life_months", row) {
            None => Some(None),
            Some(v) => match v.parse::<u32>() {
                Ok(n) if (1..=MAX_LIFE_MONTHS).contains(&n) => Some(Some(n)),
                _ => {
                    f.push(invalid(
                        &t,
                        row,
                        "useful_life_months",
                        &v,
                        "a whole number of months from 1 to 1200, or empty for an asset not depreciated (land)",
                    ));
                    None
                }
            },
        };
        let expense_account = t.get("expense_account", row).map(GroupAccount::new);
        if matches!(life, Some(Some(_))) && expense_account.is_none() {
            f.push(
                Finding::new(
                    Rule::ValueMissing,
                    "`useful_life_months` is given but `expense_account` is empty",
                    "name the profit or loss group account the depreciation of the adjustment is charged to",
                )
                .in_file(&t.file)
                .line(t.line(row)),
            );
            continue;
        }
        let (Some(owned), Some(account), Some(amount), Some(life_months)) = (owned, account, amount, life) else {
            continue;
        };
        out.push(Uplift {
            owned: EntityId::new(owned),
            account: GroupAccount::new(account),
            amount,
            life_months,
            expense_account: if life_months.is_some() { expense_account } else { None },
            deferred_tax: false,
            source: Source::line(&t.file, t.line(row)),
        });
    }
    out
}

/// `entities/tax_rates.csv` (optional): each entity's income tax rate, for the deferred
/// tax on its consolidation adjustments. A share in [0, 1); an entity twice is
/// `RowDuplicated`.
pub(super) fn load_tax_rates(
    root: &Path,
    path: &Path,
    f: &mut Vec<Finding>,
    inputs: &mut Vec<InputFile>,
) -> Vec<TaxRate> {
    if !path.is_file() {
        return Vec::new();
    }
    let spec = Spec { required: &["entity", "rate"], optional: &["note"], prefixes: &[] };
    let Some(t) = open_table(root, path, &spec, f, inputs) else { return Vec::new() };
    let mut out: Vec<TaxRate> = Vec::new();
    for row in 0..t.height() {
        let (Some(entity), Some(v)) = (required(&t, "entity", row, f), required(&t, "rate", row, f)) else { continue };
        let rate = match Decimal::from_str(&v) {
            Ok(x) if x >= Decimal::ZERO && x < Decimal::ONE => x,
            _ => {
                f.push(invalid(&t, row, "rate", &v, "a share in [0, 1), e.g. 0.25 for 25%"));
                continue;
            }
        };
        if out.iter().any(|x| x.entity.as_str() == entity) {
            f.push(
                Finding::new(Rule::RowDuplicated, format!("{entity} has a second tax rate"), "keep one row per entity")
                    .in_file(&t.file)
                    .line(t.line(row)),
            );
            continue;
        }
        out.push(TaxRate { entity: EntityId::new(entity), rate, source: Source::line(&t.file, t.line(row)) });
    }
    out
}

//! `roll_up`: the group trial balance, contributions plus eliminations per group account,
//! summed by polars.

use std::collections::BTreeMap;

use polars::prelude::*;
use rust_decimal::Decimal;

use super::journal::Entry;
use crate::model::GroupAccount;
use crate::money::column_decimals;

/// Contributions plus eliminations, per group account (columnar).
pub fn roll_up(contributions: &DataFrame, journal: &[Entry]) -> PolarsResult<BTreeMap<GroupAccount, Decimal>> {
    let scale = match contributions.column("amount")?.dtype() {
        DataType::Decimal(_, s) => *s,
        _ => 2,
    };
    let accounts: Vec<String> = journal.iter().flat_map(|e| e.lines.iter().map(|l| l.account.to_string())).collect();
    let amounts: Vec<String> = journal.iter().flat_map(|e| e.lines.iter().map(|l| l.amount.to_string())).collect();
    let elim = DataFrame::new(
        accounts.len(),
        vec![
            Column::new("group_account".into(), accounts),
            Column::new("amount".into(), amounts).strict_cast(&DataType::Decimal(38, scale))?,
        ],
    )?;
    let df = concat(
        [
            contributions
                .clone()
                .lazy()
                .select([col("group_account"), col("amount").strict_cast(DataType::Decimal(38, scale))]),
            elim.lazy(),
        ],
        UnionArgs::default(),
    )?
    .group_by([col("group_account")])
    .agg([col("amount").sum()])
    .sort(["group_account"], SortMultipleOptions::default())
    .collect()?;
    let a = crate::money::column_strings(&df, "group_account")?;
    let v = column_decimals(df.column("amount")?)?;
    Ok(a.into_iter().zip(v).filter_map(|(a, v)| Some((GroupAccount::new(a?), v.unwrap_or_default()))).collect())
}

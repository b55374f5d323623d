//! `prove`: the invariants of a close, each with its figures: every elimination entry
//! sums to zero, the group equals the entities plus the eliminations (recomputed line by
//! line, independently of `roll_up`), the group trial balance and the contributions sum
//! to zero.

use std::collections::BTreeMap;

use polars::prelude::*;
use rust_decimal::Decimal;

use super::Close;
use crate::model::GroupAccount;
use crate::money::{self, column_decimals};
use crate::proof::Check;

/// The invariants of a close, each with its figures.
pub fn prove(c: &Close) -> PolarsResult<Vec<Check>> {
    let mut checks = Vec::new();
    let unbalanced: Vec<String> =
        c.journal.iter().filter(|e| !e.total().is_zero()).map(|e| format!("{} {}", e.id, e.total())).collect();
    checks.push(Check::new(
        "eliminations_balance",
        unbalanced.is_empty(),
        if unbalanced.is_empty() {
            format!("{} entries, each summing to 0", c.journal.len())
        } else {
            unbalanced.join("; ")
        },
    ));
    // Group = entities + eliminations, recomputed row by row, independently of roll_up.
    let mut naive: BTreeMap<GroupAccount, Decimal> = BTreeMap::new();
    let a = crate::money::column_strings(&c.contributions, "group_account")?;
    let v = column_decimals(c.contributions.column("amount")?)?;
    for (a, v) in a.iter().zip(v.iter()) {
        if let Some(a) = a {
            *naive.entry(GroupAccount::new(a)).or_default() += v.unwrap_or_default();
        }
    }
    for e in &c.journal {
        for l in &e.lines {
            *naive.entry(l.account.clone()).or_default() += l.amount;
        }
    }
    naive.retain(|_, v| !v.is_zero());
    let mut group = c.group.clone();
    group.retain(|_, v| !v.is_zero());
    checks.push(Check::new(
        "group_equals_entities_plus_eliminations",
        naive == group,
        format!("{} group accounts recomputed line by line", group.len()),
    ));
    let total: Decimal = c.group.values().copied().sum();
    checks.push(Check::new(
        "group_trial_balance_sums_to_zero",
        total.is_zero(),
        format!("sum of the group trial balance = {}", money::plain(total)),
    ));
    let contrib_total: Decimal = v.iter().flatten().copied().sum();
    checks.push(Check::new(
        "contributions_sum_to_zero",
        contrib_total.is_zero(),
        format!("sum of the entities' translated contributions = {}", money::plain(contrib_total)),
    ));
    Ok(checks)
}

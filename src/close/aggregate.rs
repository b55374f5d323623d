//! `aggregate`: each entity's translated year-to-date balances at one period end, plus its
//! translation difference (OCI for the year, the reserve for what was brought forward,
//! IAS 21.39c, 21.41), taken by consolidation method: full 100%, proportionate at the
//! group's share (IFRS 11.20), equity and none not at all.
//!
//! Also the reads the rules need of other period ends (balances before control, before a
//! designation, an associate's own figures): all of them columnar over the translated
//! lines; only the aggregated balances come back as Rust maps.

use std::collections::BTreeMap;

use polars::prelude::*;
use rust_decimal::Decimal;

use crate::load::Dataset;
use crate::map_accounts::period_index;
use crate::model::*;
use crate::money::{self, column_decimals};
use crate::structure::GroupStructure;
use crate::translate::Translated;

/// Per entity: balances by group account and counterparty (the contribution frame).
pub type Balances = BTreeMap<EntityId, EntityBalances>;
/// One entity's balances by group account and counterparty.
pub type EntityBalances = BTreeMap<(GroupAccount, Option<EntityId>), Decimal>;

/// Each entity's translated year-to-date balances at `period`, translation difference
/// included, taken by its consolidation method.
pub fn aggregate(ds: &Dataset, t: &Translated, s: &GroupStructure, period: Period) -> PolarsResult<DataFrame> {
    let _span = tracing::info_span!("aggregate", period = %period).entered();
    let fiscal_start = year_start(ds, t, period);
    let p = period_index(period);
    let p0 = period_index(fiscal_start.prev());
    let minor = t.minor as usize;
    // Shares by method: full 1, proportionate the group's share, others excluded.
    let mut ids = Vec::new();
    let mut shares = Vec::new();
    for e in s.entities() {
        if matches!(e.method, Method::Full | Method::Proportionate) {
            ids.push(e.id.to_string());
            shares.push(s.share_for_proportionate(&e.id).to_string());
        }
    }
    let share_df = DataFrame::new(
        ids.len(),
        vec![
            Column::new("entity".into(), ids),
            Column::new("share".into(), shares)
                .strict_cast(&DataType::Decimal(38, crate::structure::INTEREST_DECIMALS as usize))?,
        ],
    )?;
    let lines = t.lines.clone().lazy().filter(col("period_index").eq(lit(p))).select([
        col("entity"),
        col("group_account"),
        col("counterparty"),
        col("balance_presentation").alias("amount"),
    ]);
    let roles = &ds.settings.accounts;
    // The translation difference of the year goes to OCI, what was brought forward to
    // the reserve (IAS 21.39c, 21.41).
    let td = t.differences.clone().lazy().filter(col("period_index").lt_eq(lit(p))).select([
        col("entity"),
        when(col("period_index").eq(lit(p0)))
            .then(lit(roles.translation_reserve.as_str()))
            .otherwise(lit(roles.translation_difference.as_str()))
            .alias("group_account"),
        lit(NULL).cast(DataType::String).alias("counterparty"),
        col("translation_difference").alias("amount"),
    ]);
    let all = concat([lines, td], UnionArgs::default())?
        .join(share_df.lazy(), [col("entity")], [col("entity")], JoinArgs::new(JoinType::Inner))
        .with_column(
            (col("amount").strict_cast(DataType::Decimal(38, minor + crate::structure::INTEREST_DECIMALS as usize))
                * col("share"))
            .round(minor as u32, money::polars_round_mode(ds.settings.policies.rounding))
            .strict_cast(DataType::Decimal(38, minor))
            .alias("amount"),
        )
        .group_by([col("entity"), col("group_account"), col("counterparty")])
        .agg([col("amount").sum()])
        .sort(["entity", "group_account", "counterparty"], SortMultipleOptions::default().with_nulls_last(false))
        .collect()?;
    Ok(all)
}

/// The start of the fiscal year a close at `period` belongs to. A close at the month
/// before the translated year (the opening, for the statement of changes in equity) is
/// a close of the opening balances: its brought-forward translation difference is the
/// reserve, not OCI, and nothing of the year has happened yet.
pub fn year_start(ds: &Dataset, t: &Translated, period: Period) -> Period {
    period.fiscal_year_start(ds.settings.fiscal_year_start).max(t.fiscal_start)
}

/// The contribution frame as maps, entity by entity.
pub fn balances(contrib: &DataFrame) -> PolarsResult<Balances> {
    let e = crate::money::column_strings(contrib, "entity")?;
    let a = crate::money::column_strings(contrib, "group_account")?;
    let c = crate::money::column_strings(contrib, "counterparty")?;
    let v = column_decimals(contrib.column("amount")?)?;
    let mut out: Balances = BTreeMap::new();
    for i in 0..contrib.height() {
        let (Some(e), Some(a)) = (&e[i], &a[i]) else { continue };
        *out.entry(EntityId::new(e))
            .or_default()
            .entry((GroupAccount::new(a), c[i].clone().map(EntityId::new)))
            .or_default() += v[i].unwrap_or_default();
    }
    Ok(out)
}

/// The balances of every consolidated entity at each of `periods` (one aggregate per
/// period, shared by every rule that reads it).
pub fn balances_at(
    ds: &Dataset,
    t: &Translated,
    s: &GroupStructure,
    periods: impl IntoIterator<Item = Period>,
) -> PolarsResult<BTreeMap<Period, Balances>> {
    let mut out = BTreeMap::new();
    for p in periods {
        if let std::collections::btree_map::Entry::Vacant(slot) = out.entry(p) {
            slot.insert(aggregate(ds, t, s, p).and_then(|c| balances(&c))?);
        }
    }
    Ok(out)
}

/// One entity's translated balances by group account at `period`, translation
/// difference included, at 100%.
pub fn aggregate_one(
    ds: &Dataset,
    t: &Translated,
    entity: &EntityId,
    period: Period,
) -> PolarsResult<BTreeMap<GroupAccount, Decimal>> {
    let p = period_index(period);
    let fiscal_start = year_start(ds, t, period);
    let p0 = period_index(fiscal_start.prev());
    let roles = &ds.settings.accounts;
    let df = t
        .lines
        .clone()
        .lazy()
        .filter(col("entity").eq(lit(entity.as_str())).and(col("period_index").eq(lit(p))))
        .group_by([col("group_account")])
        .agg([col("balance_presentation").sum().alias("amount")])
        .collect()?;
    let mut out: BTreeMap<GroupAccount, Decimal> = BTreeMap::new();
    let a = crate::money::column_strings(&df, "group_account")?;
    let v = column_decimals(df.column("amount")?)?;
    for i in 0..df.height() {
        if let Some(a) = &a[i] {
            *out.entry(GroupAccount::new(a)).or_default() += v[i].unwrap_or_default();
        }
    }
    let td = t
        .differences
        .clone()
        .lazy()
        .filter(col("entity").eq(lit(entity.as_str())).and(col("period_index").lt_eq(lit(p))))
        .collect()?;
    let idx: Vec<Option<i32>> = td.column("period_index")?.i32()?.iter().collect();
    let v = column_decimals(td.column("translation_difference")?)?;
    for i in 0..td.height() {
        let acct = if idx[i] == Some(p0) { &roles.translation_reserve } else { &roles.translation_difference };
        *out.entry(acct.clone()).or_default() += v[i].unwrap_or_default();
    }
    Ok(out)
}

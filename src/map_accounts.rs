//! Mapping: puts every delivery on one footing. Local accounts become group accounts
//! through each entity's mapping; balance deliveries (month-end balances) become
//! movements by differencing consecutive months, with the opening balance as the month
//! before the fiscal year. The result, the *movement frame*, has one row per entity,
//! group account, counterparty, transaction currency and period; every later stage
//! starts from it. Rows that cannot be mapped are returned beside it, never dropped.

use polars::prelude::*;

use crate::load::Dataset;
use crate::model::Period;

/// Grain of the movement frame (besides `period_index`).
pub const GRAIN: &[&str] = &["entity", "group_account", "counterparty", "txn_currency"];

/// An integer for a period, so that months can be shifted with arithmetic:
/// year * 12 + month - 1.
pub fn period_index(p: Period) -> i32 {
    p.year() * 12 + p.month() as i32 - 1
}

pub fn period_of_index(i: i32) -> Period {
    Period::new(i.div_euclid(12), (i.rem_euclid(12) + 1) as u32).expect("index of a valid period")
}

/// Period text `YYYY-MM` as its index.
pub fn period_index_expr(c: &str) -> Expr {
    col(c).str().slice(lit(0), lit(4)).strict_cast(DataType::Int32) * lit(12)
        + col(c).str().slice(lit(5), lit(2)).strict_cast(DataType::Int32)
        - lit(1)
}

/// The ledger mapped to group accounts, with the chart's attributes per row.
pub struct Mapped {
    /// Ledger rows (opening included, `kind` = opening, `period_index` = the month
    /// before the fiscal year) with group_account, basis, ic_kind, statement, class.
    pub lines: DataFrame,
    /// Ledger rows whose local account has no single mapping.
    pub unmapped: DataFrame,
    /// Mapping rows that map one local account to more than one group account.
    pub mapped_twice: DataFrame,
    /// The movement frame, computed once for the first (fiscal start, last period) asked
    /// for: validate and translate both start from it.
    movement_cache: std::sync::OnceLock<(Period, Period, DataFrame)>,
}

impl Mapped {
    pub fn new(lines: DataFrame, unmapped: DataFrame, mapped_twice: DataFrame) -> Self {
        Self { lines, unmapped, mapped_twice, movement_cache: std::sync::OnceLock::new() }
    }

    /// `movements(&self.lines, fiscal_start, last)`, collected, computed once per run.
    pub fn movements(&self, fiscal_start: Period, last: Period) -> PolarsResult<DataFrame> {
        if let Some((f, l, df)) = self.movement_cache.get()
            && (*f, *l) == (fiscal_start, last)
        {
            return Ok(df.clone());
        }
        let df = {
            let _span = tracing::debug_span!("movements").entered();
            movements(&self.lines, fiscal_start, last)?.collect()?
        };
        let _ = self.movement_cache.set((fiscal_start, last, df.clone()));
        Ok(df)
    }
}

/// The chart as a frame: group_account, basis, ic_kind, statement, class, known.
pub fn chart_frame(ds: &Dataset) -> PolarsResult<DataFrame> {
    let n = ds.accounts.len();
    let acct: Vec<&str> = ds.accounts.iter().map(|a| a.account.as_str()).collect();
    let basis: Vec<&str> = ds.accounts.iter().map(|a| a.basis.as_str()).collect();
    let ic: Vec<Option<&str>> = ds.accounts.iter().map(|a| a.ic_kind.as_deref()).collect();
    let statement: Vec<String> = ds
        .accounts
        .iter()
        .map(|a| serde_json::to_value(a.statement).ok().and_then(|v| v.as_str().map(String::from)).unwrap_or_default())
        .collect();
    let class: Vec<String> = ds
        .accounts
        .iter()
        .map(|a| serde_json::to_value(a.class).ok().and_then(|v| v.as_str().map(String::from)).unwrap_or_default())
        .collect();
    DataFrame::new(
        n,
        vec![
            Column::new("group_account".into(), acct),
            Column::new("basis".into(), basis),
            Column::new("ic_kind".into(), ic),
            Column::new("statement".into(), statement),
            Column::new("class".into(), class),
        ],
    )
}

/// Maps the ledger and the opening balances to group accounts.
pub fn map_accounts(ds: &Dataset, fiscal_start: Period) -> PolarsResult<Mapped> {
    let _span = tracing::info_span!("map_accounts").entered();
    let maps = ds.mappings.clone().lazy();
    let distinct = maps
        .clone()
        .group_by([col("entity"), col("local_account")])
        .agg([col("group_account").n_unique().alias("targets"), col("group_account").first()]);
    let single = distinct.clone().filter(col("targets").eq(lit(1u32))).select([
        col("entity"),
        col("local_account").alias("account"),
        col("group_account"),
    ]);
    let twice_keys = distinct.filter(col("targets").gt(lit(1u32))).select([col("entity"), col("local_account")]);
    let mapped_twice = maps
        .join(
            twice_keys,
            [col("entity"), col("local_account")],
            [col("entity"), col("local_account")],
            JoinArgs::new(JoinType::Semi),
        )
        .sort(["entity", "local_account", "line"], SortMultipleOptions::default())
        .collect()?;

    let opening_index = period_index(fiscal_start.prev());
    let ledger = ds.ledger.clone().lazy().with_column(period_index_expr("period").alias("period_index"));
    let opening = ds
        .opening
        .clone()
        .lazy()
        .drop(Selector::ByName { names: ["amount_presentation".into()].into(), strict: true })
        .with_column(lit(opening_index).alias("period_index"));
    let all = concat([ledger, opening], UnionArgs::default())?;
    // The join is collected once and split in two: two lazy plans from it would each
    // run it.
    let joined = all
        .join(single, [col("entity"), col("account")], [col("entity"), col("account")], JoinArgs::new(JoinType::Left))
        .collect()?;
    let no_mapping = joined.column("group_account")?.is_null();
    let unmapped = joined.filter(&no_mapping)?;
    let chart = chart_frame(ds)?.lazy();
    // Filtering copies every row: none is made when every row is mapped.
    let mapped = if no_mapping.any() { joined.filter(&!&no_mapping)? } else { joined };
    let lines = mapped
        .lazy()
        .join(chart, [col("group_account")], [col("group_account")], JoinArgs::new(JoinType::Left))
        .collect()?;
    Ok(Mapped::new(lines, unmapped, mapped_twice))
}

/// The opening presentation-currency amounts of historical-basis accounts, per grain.
pub fn opening_presentation(ds: &Dataset) -> PolarsResult<LazyFrame> {
    let maps =
        ds.mappings.clone().lazy().select([col("entity"), col("local_account").alias("account"), col("group_account")]);
    Ok(ds
        .opening
        .clone()
        .lazy()
        .join(maps, [col("entity"), col("account")], [col("entity"), col("account")], JoinArgs::new(JoinType::Inner))
        .group_by(GRAIN.iter().map(|c| col(*c)).collect::<Vec<_>>())
        .agg([col("amount_presentation").sum()]))
}

/// For every entity and month with delivered rows (the opening included), the next
/// month the entity delivered as balances: `entity`, `period_index`, `next_index`. Rows
/// of months with no later balance delivery have no row here.
///
/// Each month is read as what its file says it is, whatever the other months are. A
/// balance month's movement is its balance less the cumulative balance of the month
/// before, and that cumulative balance is the last balance delivered (the opening being
/// the first) plus the movement months since. So every delivered row counts once in its
/// own month and once, negated, in the next balance month after it.
pub fn next_balances(lines: LazyFrame) -> PolarsResult<DataFrame> {
    let months = lines
        .select([col("entity"), col("period_index"), col("kind")])
        .unique(None, UniqueKeepStrategy::Any)
        .sort(["entity", "period_index"], SortMultipleOptions::default())
        .collect()?;
    let entity = months.column("entity")?.str()?;
    let index = months.column("period_index")?.i32()?;
    let kind = months.column("kind")?.str()?;
    let mut per_entity: std::collections::BTreeMap<&str, (Vec<i32>, Vec<i32>)> = std::collections::BTreeMap::new();
    for i in 0..months.height() {
        let (Some(e), Some(p)) = (entity.get(i), index.get(i)) else { continue };
        let slot = per_entity.entry(e).or_default();
        slot.0.push(p);
        if kind.get(i) == Some("balances") {
            slot.1.push(p);
        }
    }
    let (mut es, mut ps, mut ns) = (Vec::new(), Vec::new(), Vec::new());
    for (e, (mut all, balances)) in per_entity {
        all.dedup();
        for p in all {
            if let Some(n) = balances.iter().copied().find(|b| *b > p) {
                es.push(e.to_string());
                ps.push(p);
                ns.push(n);
            }
        }
    }
    DataFrame::new(
        es.len(),
        vec![
            Column::new("entity".into(), es),
            Column::new("period_index".into(), ps),
            Column::new("next_index".into(), ns),
        ],
    )
}

/// The delivered rows that make up an entity's cumulative balance at period index `p`:
/// rows of months up to `p` that no balance delivery up to `p` has superseded.
pub fn rows_behind(lines: &DataFrame, p: i32) -> PolarsResult<LazyFrame> {
    let next = next_balances(lines.clone().lazy())?;
    Ok(lines
        .clone()
        .lazy()
        .join(
            next.lazy(),
            [col("entity"), col("period_index")],
            [col("entity"), col("period_index")],
            JoinArgs::new(JoinType::Left),
        )
        .filter(col("period_index").lt_eq(lit(p)).and(col("next_index").is_null().or(col("next_index").gt(lit(p)))))
        .drop(Selector::ByName { names: ["next_index".into()].into(), strict: true }))
}

/// Movements per grain and period from the mapped lines, for periods from the opening
/// (the month before `fiscal_start`) through `last`. A month delivered as balances is
/// differenced against the cumulative balance before it (see [`next_balances`]).
pub fn movements(mapped: &DataFrame, fiscal_start: Period, last: Period) -> PolarsResult<LazyFrame> {
    let first = period_index(fiscal_start.prev());
    let last = period_index(last);
    let grain: Vec<Expr> = GRAIN.iter().map(|c| col(*c)).collect();
    let mut keys = grain.clone();
    keys.push(col("period_index"));
    let base =
        mapped.clone().lazy().filter(col("period_index").gt_eq(lit(first)).and(col("period_index").lt_eq(lit(last))));
    let next = next_balances(base.clone())?;
    let mut columns = keys.clone();
    columns.extend([col("amount"), col("txn_amount")]);
    let delivered = base.select(columns.clone());
    // Each delivered row counts again, negated, in the next balance month after it. The
    // rows are summed once, with those negations: summing the delivered rows per grain
    // first would be a second group-by over every row for the same sums.
    let superseded = delivered
        .clone()
        .join(
            next.lazy(),
            [col("entity"), col("period_index")],
            [col("entity"), col("period_index")],
            JoinArgs::new(JoinType::Inner),
        )
        .with_columns([
            col("next_index").alias("period_index"),
            (lit(0).strict_cast(crate::money::amount_dtype()) - col("amount")).alias("amount"),
            (lit(0).strict_cast(crate::money::amount_dtype()) - col("txn_amount")).alias("txn_amount"),
        ])
        .select(columns);
    // In no particular order: every user joins or sorts it.
    Ok(concat([delivered, superseded], UnionArgs::default())?
        .group_by(keys)
        .agg([col("amount").sum(), col("txn_amount").sum()]))
}

//! Translation (IAS 21.38-49): every entity's movement frame from its functional
//! currency into the presentation currency, month by month, and the translation
//! difference that makes each translated trial balance sum to zero, explained.
//!
//! One rule per basis, all expressed as a *translated balance* per grain and month, from
//! which the translated movement is the month-on-month difference:
//! - closing (assets, liabilities): balance x closing rate of the month (21.39a);
//! - average (income, expenses): periodic policy: each month's movement x that month's
//!   average, cumulated; year-to-date policy: year-to-date amount x year-to-date average
//!   (21.39b, 21.40);
//! - historical (equity): the amount brought forward, plus each movement x the rate of
//!   its date from rates/historical.csv (dividends at the rate of their date);
//! - hyperinflationary entities, from the period declared: every balance x closing
//!   (21.42).
//!
//! Each translated balance is rounded once, to the presentation currency's minor unit,
//! with the group's rounding mode; the residue lands in the translation difference
//! (21.39c), never dropped. Translate knows nothing about files.

use std::collections::BTreeMap;

use polars::prelude::*;
use rust_decimal::Decimal;

use crate::load::{Dataset, Quote, Rate};
use crate::map_accounts::{GRAIN, Mapped, opening_presentation, period_index, period_of_index};
use crate::model::*;
use crate::money::{self, AMOUNT_SCALE, RATE_SCALE, column_decimals, decimal_lit};

/// Join arguments that treat null keys as equal: the grain has null counterparties and
/// null transaction currencies, which must still find their own rows.
pub fn join_args(how: JoinType) -> JoinArgs {
    let mut a = JoinArgs::new(how);
    a.nulls_equal = true;
    a
}

/// The translated movement frame and the translation difference per entity and month.
pub struct Translated {
    /// One row per grain and period (opening month included): entity, group_account,
    /// counterparty, txn_currency, period_index, basis, amount_local, balance_local,
    /// txn_amount, rate, quote, rate_kind, balance_presentation, amount_presentation.
    pub lines: DataFrame,
    /// entity, period_index, translation_difference (presentation currency, debit
    /// positive): minus the sum of the entity's translated movements of the month. For
    /// the opening month it is the translation reserve brought forward.
    pub differences: DataFrame,
    pub explanations: Vec<Explanation>,
    pub minor: u32,
}

/// Why an entity's translation difference of a month is what it is (IAS 21.41 split).
/// Amounts are gains positive (credit to OCI) and sum exactly to `total`.
#[derive(Debug, Clone, PartialEq, Eq, serde::Serialize)]
pub struct Explanation {
    pub entity: EntityId,
    pub period: Period,
    pub currency: Currency,
    pub opening_net_assets_local: Decimal,
    pub profit_local: Decimal,
    pub equity_movements_local: Decimal,
    pub rate_closing: Option<Rate>,
    pub rate_closing_before: Option<Rate>,
    pub rate_average: Option<Rate>,
    /// Opening net assets x (closing now - closing before).
    pub on_opening_net_assets: Decimal,
    /// Profit x (closing - the rate it was translated at).
    pub on_profit: Decimal,
    /// Other equity movements x (closing - their rate).
    pub on_equity_movements: Decimal,
    /// All at closing for a hyperinflationary entity (IAS 21.42).
    pub on_hyperinflation: Decimal,
    /// Rounding of the translated lines, and of the components above to the minor unit.
    pub rounding: Decimal,
    pub total: Decimal,
    /// The components before rounding to the minor unit (10 decimals).
    pub unrounded: [Decimal; 4],
}

fn rate_frame(ds: &Dataset) -> PolarsResult<DataFrame> {
    let mut cur = Vec::new();
    let mut idx = Vec::new();
    let mut quote = Vec::new();
    let mut close = Vec::new();
    let mut avg = Vec::new();
    let mut ytd = Vec::new();
    for r in &ds.rates {
        cur.push(r.currency.code().to_string());
        idx.push(period_index(r.period));
        quote.push(r.closing.quote.as_str());
        close.push(r.closing.value.to_string());
        avg.push(r.average.value.to_string());
        ytd.push(r.average_ytd.map(|x| x.value.to_string()));
    }
    let dt = DataType::Decimal(38, RATE_SCALE);
    DataFrame::new(
        cur.len(),
        vec![
            Column::new("currency".into(), cur),
            Column::new("period_index".into(), idx),
            Column::new("quote".into(), quote),
            Column::new("rate_closing".into(), close).strict_cast(&dt)?,
            Column::new("rate_average".into(), avg).strict_cast(&dt)?,
            Column::new("rate_average_ytd".into(), ytd).strict_cast(&dt)?,
        ],
    )
}

fn historical_frame(ds: &Dataset) -> PolarsResult<DataFrame> {
    let h = &ds.historical_rates;
    DataFrame::new(
        h.len(),
        vec![
            Column::new("entity".into(), h.iter().map(|x| x.entity.to_string()).collect::<Vec<_>>()),
            Column::new("group_account".into(), h.iter().map(|x| x.account.to_string()).collect::<Vec<_>>()),
            Column::new("period_index".into(), h.iter().map(|x| period_index(x.period)).collect::<Vec<_>>()),
            Column::new("rate_historical".into(), h.iter().map(|x| x.rate.value.to_string()).collect::<Vec<_>>())
                .strict_cast(&DataType::Decimal(38, RATE_SCALE))?,
            Column::new("quote_historical".into(), h.iter().map(|x| x.rate.quote.as_str()).collect::<Vec<_>>()),
        ],
    )
}

fn entity_frame(ds: &Dataset) -> PolarsResult<DataFrame> {
    let e = &ds.entities;
    DataFrame::new(
        e.len(),
        vec![
            Column::new("entity".into(), e.iter().map(|x| x.id.to_string()).collect::<Vec<_>>()),
            Column::new("currency".into(), e.iter().map(|x| x.currency.code().to_string()).collect::<Vec<_>>()),
            Column::new(
                "hyper_index".into(),
                e.iter().map(|x| x.hyperinflationary_from.map(period_index)).collect::<Vec<_>>(),
            ),
        ],
    )
}

/// `x` translated at `rate` quoted `quote`, rounded once: split by quote direction so
/// that neither branch is evaluated on rows of the other (a product and a quotient
/// overflow at different magnitudes).
fn translate_rows(lf: LazyFrame, minor: usize, mode: RoundingMode) -> PolarsResult<LazyFrame> {
    let mul = lf
        .clone()
        .filter(col("quote_used").eq(lit(Quote::PresentationPerUnit.as_str())))
        .with_column(money::translate_multiply(col("x"), col("rate"), minor, mode).alias("translated"));
    let div = lf
        .clone()
        .filter(col("quote_used").eq(lit(Quote::UnitsPerPresentation.as_str())))
        .with_column(money::translate_divide(col("x"), col("rate"), minor, mode).alias("translated"));
    let none = lf
        .filter(col("quote_used").is_null())
        .with_column(lit(NULL).cast(DataType::Decimal(38, minor)).alias("translated"));
    concat([mul, div, none], UnionArgs::default())
}

/// Translates every entity for the fiscal year through `scope_period`.
pub fn translate(ds: &Dataset, mapped: &Mapped, fiscal_start: Period, last: Period) -> PolarsResult<Translated> {
    let _span = tracing::info_span!("translate", period = %last).entered();
    let pres = ds.settings.presentation_currency;
    let minor = pres.minor_unit() as usize;
    let mode = ds.settings.policies.rounding;
    let ytd_policy = ds.settings.policies.income_translation == IncomeTranslation::YearToDate;
    let p0 = period_index(fiscal_start.prev());
    let pn = period_index(last);
    let grain: Vec<Expr> = GRAIN.iter().map(|c| col(*c)).collect();
    let mut keys = grain.clone();
    keys.push(col("period_index"));

    let mov = mapped.movements(fiscal_start, last)?.lazy();
    let periods = DataFrame::new(
        (pn - p0 + 1) as usize,
        vec![Column::new("period_index".into(), (p0..=pn).collect::<Vec<i32>>())],
    )?;
    // Each grain gets an integer id in grain order, so that sorting and the running sums
    // per grain work on one integer column instead of four text columns with nulls.
    let grains = mov
        .clone()
        .select(grain.clone())
        .unique(None, UniqueKeepStrategy::Any)
        .sort(GRAIN.to_vec(), SortMultipleOptions::default().with_nulls_last(true))
        .with_row_index("gid", None);
    let grid = grains.cross_join(periods.lazy(), None);
    let by_gid = || ["gid", "period_index"];
    let chart = crate::map_accounts::chart_frame(ds)?.lazy().select([col("group_account"), col("basis")]);
    let zero = decimal_lit(Decimal::ZERO, AMOUNT_SCALE);
    let pres_code = pres.code();
    let one = decimal_lit(Decimal::ONE, RATE_SCALE);

    let g = grid
        .join(mov, keys.clone(), keys.clone(), join_args(JoinType::Left))
        .with_columns([col("amount").fill_null(zero.clone()).alias("amount_local")])
        .join(chart, [col("group_account")], [col("group_account")], JoinArgs::new(JoinType::Left))
        .join(entity_frame(ds)?.lazy(), [col("entity")], [col("entity")], JoinArgs::new(JoinType::Left))
        .join(
            rate_frame(ds)?.lazy(),
            [col("currency"), col("period_index")],
            [col("currency"), col("period_index")],
            JoinArgs::new(JoinType::Left),
        )
        .join(
            historical_frame(ds)?.lazy(),
            [col("entity"), col("group_account"), col("period_index")],
            [col("entity"), col("group_account"), col("period_index")],
            JoinArgs::new(JoinType::Left),
        )
        .join(opening_presentation(ds)?, grain.clone(), grain.clone(), join_args(JoinType::Left))
        .sort(by_gid(), SortMultipleOptions::default())
        .with_column(col("amount_local").cum_sum(false).over([col("gid")])?.alias("balance_local"));

    // Which amount is translated at which rate, row by row.
    let is_pres = col("currency").eq(lit(pres_code));
    let hyper = col("hyper_index").is_not_null().and(col("period_index").gt_eq(col("hyper_index")));
    let is_open = col("period_index").eq(lit(p0));
    let basis = |b: Basis| col("basis").eq(lit(b.as_str()));
    // By balance: closing basis, hyperinflation, and income under the year-to-date policy.
    let by_balance = basis(Basis::Closing).or(hyper.clone()).or(basis(Basis::Average).and(lit(ytd_policy)));
    let rate_kind = when(is_pres.clone())
        .then(lit("unit"))
        .when(is_open.clone().and(basis(Basis::Historical)))
        .then(lit("brought_forward"))
        .when(hyper.clone().or(basis(Basis::Closing)))
        .then(lit("closing"))
        .when(basis(Basis::Average).and(lit(ytd_policy)))
        .then(lit("average_ytd"))
        .when(basis(Basis::Average))
        .then(lit("average"))
        .otherwise(lit("historical"));
    let g = g.with_columns([rate_kind.alias("rate_kind"), by_balance.alias("by_balance")]);
    let kind = |k: &str| col("rate_kind").eq(lit(k));
    let rate = when(kind("unit").or(kind("brought_forward")))
        .then(one.clone())
        .when(kind("closing"))
        .then(col("rate_closing"))
        .when(kind("average_ytd"))
        .then(col("rate_average_ytd"))
        .when(kind("average"))
        .then(col("rate_average"))
        .otherwise(col("rate_historical"));
    let quote_used = when(kind("unit").or(kind("brought_forward")))
        .then(lit(Quote::PresentationPerUnit.as_str()))
        .when(kind("historical"))
        .then(col("quote_historical"))
        .otherwise(col("quote"));
    let x = when(kind("brought_forward"))
        .then(col("amount_presentation").fill_null(zero.clone()))
        .when(col("by_balance").or(kind("unit")))
        .then(col("balance_local"))
        .otherwise(col("amount_local"));
    let g = g.with_column(x.alias("x"));
    // Nothing to translate needs no rate (a month without an equity movement, the
    // opening month's income accounts).
    let nothing = col("x").eq(zero.clone());
    let g = g.with_columns([
        when(nothing.clone()).then(one.clone()).otherwise(rate).alias("rate"),
        when(nothing).then(lit(Quote::PresentationPerUnit.as_str())).otherwise(quote_used).alias("quote_used"),
    ]);
    // The plan so far feeds three branches (by quote direction): computed once.
    let g = translate_rows(g.cache(), minor, mode)?;
    // The presentation currency, brought-forward amounts and balance-translated rows
    // give the balance directly; movement-translated rows cumulate.
    let pzero = decimal_lit(Decimal::ZERO, minor);
    let cumulated = when(col("by_balance").or(kind("unit")))
        .then(pzero.clone())
        .otherwise(col("translated"))
        .cum_sum(false)
        .over([col("gid")])?;
    let g = g
        .sort(by_gid(), SortMultipleOptions::default())
        .with_column(
            when(col("by_balance").or(kind("unit")))
                .then(col("translated"))
                .otherwise(cumulated)
                .alias("balance_presentation"),
        )
        .with_column(
            (col("balance_presentation")
                - col("balance_presentation").shift(lit(1)).over([col("gid")])?.fill_null(pzero.clone()))
            .alias("amount_presentation"),
        );
    let lines = g
        .select([
            col("entity"),
            col("group_account"),
            col("counterparty"),
            col("txn_currency"),
            col("period_index"),
            col("basis"),
            col("currency"),
            col("amount_local"),
            col("balance_local"),
            col("txn_amount"),
            col("rate"),
            col("quote_used").alias("quote"),
            col("rate_kind"),
            col("balance_presentation").strict_cast(DataType::Decimal(38, minor)),
            col("amount_presentation").strict_cast(DataType::Decimal(38, minor)),
        ])
        .collect()?;
    let differences = lines
        .clone()
        .lazy()
        .group_by([col("entity"), col("period_index")])
        .agg([(pzero.clone() - col("amount_presentation").sum()).alias("translation_difference")])
        .sort(["entity", "period_index"], SortMultipleOptions::default())
        .collect()?;
    let explanations = explain(ds, &lines, &differences, fiscal_start, last, minor as u32)?;
    Ok(Translated { lines, differences, explanations, minor: minor as u32 })
}

/// Splits each translation difference of a month into its causes (IAS 21.41):
/// opening net assets x (closing - closing before) + profit x (closing - its rate) +
/// other equity movements x (closing - their rate) + rounding, where the rounding is
/// whatever makes the rounded components add up to the translation difference exactly.
fn explain(
    ds: &Dataset,
    lines: &DataFrame,
    differences: &DataFrame,
    fiscal_start: Period,
    last: Period,
    minor: u32,
) -> PolarsResult<Vec<Explanation>> {
    let agg = lines
        .clone()
        .lazy()
        .group_by([col("entity"), col("period_index"), col("basis"), col("rate_kind")])
        .agg([col("amount_local").sum(), col("balance_local").sum(), col("amount_presentation").sum()])
        .sort(["entity", "period_index", "basis", "rate_kind"], SortMultipleOptions::default())
        .collect()?;
    let ents: Vec<Option<String>> = agg.column("entity")?.str()?.iter().map(|s| s.map(String::from)).collect();
    let per: Vec<Option<i32>> = agg.column("period_index")?.i32()?.iter().collect();
    let bas: Vec<Option<String>> = agg.column("basis")?.str()?.iter().map(|s| s.map(String::from)).collect();
    let kinds: Vec<Option<String>> = agg.column("rate_kind")?.str()?.iter().map(|s| s.map(String::from)).collect();
    let mov = column_decimals(agg.column("amount_local")?)?;
    let bal = column_decimals(agg.column("balance_local")?)?;
    let movp = column_decimals(agg.column("amount_presentation")?)?;
    // (entity, period) -> (basis, rate_kind) -> (movement local, balance local, movement presentation)
    type Cell = (Decimal, Decimal, Decimal);
    let mut by: BTreeMap<(String, i32), BTreeMap<(String, String), Cell>> = BTreeMap::new();
    for i in 0..agg.height() {
        let (Some(e), Some(p), Some(b), Some(k)) = (&ents[i], per[i], &bas[i], &kinds[i]) else { continue };
        by.entry((e.clone(), p)).or_default().insert(
            (b.clone(), k.clone()),
            (mov[i].unwrap_or_default(), bal[i].unwrap_or_default(), movp[i].unwrap_or_default()),
        );
    }
    let td_ent: Vec<Option<String>> =
        differences.column("entity")?.str()?.iter().map(|s| s.map(String::from)).collect();
    let td_per: Vec<Option<i32>> = differences.column("period_index")?.i32()?.iter().collect();
    let td = column_decimals(differences.column("translation_difference")?)?;
    let rates: BTreeMap<(Currency, Period), &crate::load::MonthlyRate> =
        ds.rates.iter().map(|r| ((r.currency, r.period), r)).collect();
    let hist: BTreeMap<(&str, &str, Period), Rate> =
        ds.historical_rates.iter().map(|h| ((h.entity.as_str(), h.account.as_str(), h.period), h.rate)).collect();
    let hist_moves = historical_moves(lines)?;
    let pres = ds.settings.presentation_currency;
    let mode = ds.settings.policies.rounding;
    let entities: std::collections::HashMap<&str, &Entity> = ds.entities.iter().map(|x| (x.id.as_str(), x)).collect();
    let mut out = Vec::new();
    for i in 0..differences.height() {
        let (Some(e), Some(p)) = (&td_ent[i], td_per[i]) else { continue };
        let period = period_of_index(p);
        if period < fiscal_start || period > last {
            continue;
        }
        let Some(entity) = entities.get(e.as_str()) else { continue };
        let total_debit = td[i].unwrap_or_default();
        let total = -total_debit;
        let empty = BTreeMap::new();
        let now = by.get(&(e.clone(), p)).unwrap_or(&empty);
        let before = by.get(&(e.clone(), p - 1)).unwrap_or(&empty);
        let sum = |m: &BTreeMap<(String, String), Cell>, basis: &str, f: fn(&Cell) -> Decimal| -> Decimal {
            m.iter().filter(|((b, _), _)| b == basis).map(|(_, c)| f(c)).sum()
        };
        let na_before = sum(before, "closing", |c| c.1);
        let profit = -sum(now, "average", |c| c.0);
        let profit_pres = -sum(now, "average", |c| c.2);
        let equity = -sum(now, "historical", |c| c.0);
        let c_now = rates.get(&(entity.currency, period)).map(|r| r.closing);
        let c_before = rates.get(&(entity.currency, period.prev())).map(|r| r.closing);
        let avg = rates.get(&(entity.currency, period)).map(|r| r.average);
        let hyper = entity.hyperinflationary_from.is_some_and(|h| h <= period);
        let mut comps = [Decimal::ZERO; 4];
        if entity.currency != pres {
            if hyper {
                comps[3] = total;
            } else if let (Some(cn), Some(cb)) = (c_now, c_before) {
                comps[0] = cn.apply(na_before) - cb.apply(na_before);
                // Profit at closing minus profit as translated, the latter unrounded:
                // periodic: movement x average; year-to-date: the change of ytd x ytd average.
                let translated_unrounded =
                    profit_unrounded(ds, &rates, now, before, entity.currency, period, fiscal_start);
                comps[1] = cn.apply(profit) - translated_unrounded.unwrap_or(profit_pres);
                let mut eq_translated = Decimal::ZERO;
                for (acct, m) in hist_moves.get(&(e.clone(), p)).into_iter().flatten() {
                    let r = hist.get(&(e.as_str(), acct.as_str(), period));
                    eq_translated += r.map(|r| r.apply(-*m)).unwrap_or_default();
                }
                comps[2] = cn.apply(equity) - eq_translated;
            }
        }
        let rounded: Vec<Decimal> = comps.iter().map(|c| money::round(*c, minor, mode)).collect();
        let rounding = total - rounded.iter().copied().sum::<Decimal>();
        out.push(Explanation {
            entity: entity.id.clone(),
            period,
            currency: entity.currency,
            opening_net_assets_local: na_before,
            profit_local: profit,
            equity_movements_local: equity,
            rate_closing: c_now,
            rate_closing_before: c_before,
            rate_average: avg,
            on_opening_net_assets: rounded[0],
            on_profit: rounded[1],
            on_equity_movements: rounded[2],
            on_hyperinflation: rounded[3],
            rounding,
            total,
            unrounded: comps.map(|c| c.round_dp(10)),
        });
    }
    Ok(out)
}

/// Profit of the month as translated, before rounding, under the income policy.
fn profit_unrounded(
    ds: &Dataset,
    rates: &BTreeMap<(Currency, Period), &crate::load::MonthlyRate>,
    now: &BTreeMap<(String, String), (Decimal, Decimal, Decimal)>,
    before: &BTreeMap<(String, String), (Decimal, Decimal, Decimal)>,
    currency: Currency,
    period: Period,
    fiscal_start: Period,
) -> Option<Decimal> {
    let r_now = rates.get(&(currency, period))?;
    match ds.settings.policies.income_translation {
        IncomeTranslation::Periodic => {
            let m: Decimal = now.iter().filter(|((b, _), _)| b == "average").map(|(_, c)| c.0).sum();
            Some(r_now.average.apply(-m))
        }
        IncomeTranslation::YearToDate => {
            let ytd_now: Decimal = now.iter().filter(|((b, _), _)| b == "average").map(|(_, c)| c.1).sum();
            let ytd_before: Decimal = before.iter().filter(|((b, _), _)| b == "average").map(|(_, c)| c.1).sum();
            let t_now = r_now.average_ytd?.apply(-ytd_now);
            let t_before = if period == fiscal_start {
                Decimal::ZERO
            } else {
                let r_before = rates.get(&(currency, period.prev()))?;
                r_before.average_ytd?.apply(-ytd_before)
            };
            Some(t_now - t_before)
        }
    }
}

/// Historical-basis movements per entity and period, by group account.
/// Movements by group account, per (entity, period index).
type MovesByAccount = BTreeMap<(String, i32), Vec<(String, Decimal)>>;

fn historical_moves(lines: &DataFrame) -> PolarsResult<MovesByAccount> {
    let zero = decimal_lit(Decimal::ZERO, AMOUNT_SCALE);
    let h = lines
        .clone()
        .lazy()
        .filter(col("rate_kind").eq(lit("historical")).and(col("amount_local").neq(zero)))
        .group_by([col("entity"), col("period_index"), col("group_account")])
        .agg([col("amount_local").sum()])
        .sort(["entity", "period_index", "group_account"], SortMultipleOptions::default())
        .collect()?;
    let mut out: MovesByAccount = BTreeMap::new();
    let amounts = column_decimals(h.column("amount_local")?)?;
    let e = h.column("entity")?.str()?;
    let p = h.column("period_index")?.i32()?;
    let a = h.column("group_account")?.str()?;
    for (i, amount) in amounts.iter().enumerate() {
        if let (Some(e), Some(p), Some(a)) = (e.get(i), p.get(i), a.get(i)) {
            out.entry((e.to_string(), p)).or_default().push((a.to_string(), amount.unwrap_or_default()));
        }
    }
    Ok(out)
}

/// Tie-out of the translation, the invariants checked on every run: for every entity
/// and month, translated balances plus the cumulative translation difference sum to
/// zero, and the explanation adds up to the translation difference exactly.
pub fn prove(t: &Translated) -> PolarsResult<Vec<crate::proof::Check>> {
    let _span = tracing::info_span!("prove_translation").entered();
    let cum_td = t
        .differences
        .clone()
        .lazy()
        .sort(["entity", "period_index"], SortMultipleOptions::default())
        .with_column(col("translation_difference").cum_sum(false).over([col("entity")])?.alias("cumulative"));
    let sums = t
        .lines
        .clone()
        .lazy()
        .group_by([col("entity"), col("period_index")])
        .agg([
            col("balance_presentation").sum().alias("balances"),
            col("amount_presentation").null_count().alias("untranslated"),
        ])
        .join(
            cum_td,
            [col("entity"), col("period_index")],
            [col("entity"), col("period_index")],
            JoinArgs::new(JoinType::Left),
        )
        .with_column((col("balances") + col("cumulative")).alias("residual"))
        .collect()?;
    let residual = column_decimals(sums.column("residual")?)?;
    let untranslated: u64 = sums.column("untranslated")?.as_materialized_series().sum::<u64>()?;
    let bad: Vec<String> = (0..sums.height())
        .filter(|i| residual[*i] != Some(Decimal::ZERO))
        .take(5)
        .map(|i| {
            let e = sums
                .column("entity")
                .ok()
                .and_then(|c| c.str().ok().and_then(|s| s.get(i).map(String::from)))
                .unwrap_or_default();
            format!("{e}: {}", residual[i].map(|d| d.to_string()).unwrap_or("null".into()))
        })
        .collect();
    let explained_bad: Vec<String> = t
        .explanations
        .iter()
        .filter(|x| {
            x.on_opening_net_assets + x.on_profit + x.on_equity_movements + x.on_hyperinflation + x.rounding != x.total
        })
        .take(5)
        .map(|x| format!("{} {}", x.entity, x.period))
        .collect();
    Ok(vec![
        crate::proof::Check::new(
            "translated_lines_complete",
            untranslated == 0,
            format!("{untranslated} translated line(s) without a rate"),
        ),
        crate::proof::Check::new(
            "translated_balances_plus_translation_difference_zero",
            bad.is_empty(),
            if bad.is_empty() {
                format!("{} entity-months sum to 0.00", sums.height())
            } else {
                format!("residuals: {}", bad.join("; "))
            },
        ),
        crate::proof::Check::new(
            "translation_difference_explained",
            explained_bad.is_empty(),
            if explained_bad.is_empty() {
                format!("{} explanations add up exactly", t.explanations.len())
            } else {
                format!("not adding up: {}", explained_bad.join("; "))
            },
        ),
    ])
}

//! Comparison of a close with a plan (the budget or a named forecast) or the prior
//! year: the comparison's own close, the actuals at the comparison's rates (constant
//! currency), and the checks of a plan's rows.
//!
//! A plan is closed through the same pipeline as the actuals, not by arithmetic of its
//! own: its movements are a trial balance delivery (local accounts, mapped by each
//! entity's mapping.csv), translated by `translate` at the plan's rates and consolidated
//! by `close::close_at`, so its intercompany lines are eliminated by the same rule as
//! the actuals'. A plan holds profit or loss lines; to make each entity's month a
//! balanced trial balance, the pipeline adds one internal balancing line per entity and
//! month on the balance-sheet account [`PLAN_BALANCE`] (an asset at the closing rate),
//! which no statement of the comparison shows. The plan starts from the actual opening
//! balances (the acquisitions, investments and equity at acquisition are the actual
//! ones, so the eliminations of investments and the NCI run on the same structure).
//! Actual inventory profits, net investment designations, accepted intercompany
//! differences and top-side entries (`group_adjustments.csv`) are facts of the actuals,
//! not of a plan, and are left out of its close; what follows from the acquisitions
//! (fair value adjustments and their depreciation, goodwill impairments, deferred tax)
//! applies to the plan as to the actuals.
//!
//! Constant currency: the actual movement frame translated by `translate` at the
//! comparison's rates for the months it gives rates for (every month of the year to the
//! period end must have one), closed by `close_at` like the actuals. Income and expense
//! are then at the comparison's average rates, balance-sheet lines at its closing rate
//! of the period end, equity at the same historical rates as the actuals (IAS 21.39
//! applied with the comparison's rates). The currency effect of any figure is the
//! actual figure less the same figure at constant currency.

pub mod walk;

use std::collections::{BTreeMap, BTreeSet};

use polars::prelude::*;

use crate::close::Close;
use crate::findings::{Finding, Rule, Severity};
use crate::load::plans::PlanInput;
use crate::load::{Dataset, MonthlyRate};
use crate::model::*;
use crate::structure::GroupStructure;

/// The internal group account that balances a plan's trial balance (see the module
/// header). Its name cannot collide with a chart account: those are checked to be
/// plain identifiers.
pub const PLAN_BALANCE: &str = "~plan-balance";

/// What a close is compared with (`--compare`).
#[derive(Debug, Clone, PartialEq, Eq)]
pub enum Source {
    /// `budget` or `forecast-<label>`: a plan folder under `entities/plans/`.
    Plan(String),
    /// The close of the same period of the prior fiscal year.
    PriorYear,
}

impl Source {
    pub fn parse(s: &str) -> Result<Source, String> {
        if s == "prior-year" {
            Ok(Source::PriorYear)
        } else if crate::load::plans::is_plan_name(s) {
            Ok(Source::Plan(s.to_string()))
        } else {
            Err(format!("{s:?} is not budget, forecast-NAME or prior-year"))
        }
    }

    pub fn name(&self) -> String {
        match self {
            Source::Plan(n) => n.clone(),
            Source::PriorYear => "prior-year".into(),
        }
    }
}

/// The prior year as a comparison is a blocking finding while the folder holds no
/// trial balance of the prior fiscal year.
pub fn prior_year_findings(ds: &Dataset, fiscal_start: Period) -> Vec<Finding> {
    let prior_start = fiscal_start.plus_months(-12);
    if crate::years::holds_prior_year(ds, fiscal_start) {
        return Vec::new();
    }
    vec![
        Finding::new(
            Rule::ComparisonUnavailable,
            format!("the folder holds no prior year: no trial balance of the fiscal year from {prior_start}"),
            "compare with budget or forecast-NAME, or add the prior year's deliveries to the data folder",
        )
        .severity(Severity::Blocking),
    ]
}

/// The prior year's rates moved a year on: each month of the prior fiscal year's
/// closing, average and year-to-date average rates, as the rates of the same month of
/// the year closed. The month before the year (the opening's closing rate) keeps its
/// actual rate, as a plan's does.
pub fn prior_year_rates(full: &Dataset, fiscal_start: Period) -> Vec<MonthlyRate> {
    let prior_start = fiscal_start.plus_months(-12);
    full.rates
        .iter()
        .filter(|r| r.period >= prior_start && r.period < fiscal_start)
        .map(|r| MonthlyRate { period: r.period.plus_months(12), ..r.clone() })
        .collect()
}

/// The prior year as the comparison of the actuals `a` (IAS 1.38): the same view a year
/// earlier (`years::prior_year_close`, on the prior year's own data), and the actuals
/// closed at the prior year's rates of the same months (constant currency). Every
/// entity of the folder is "planned": an entity in one year and not the other is
/// scope. `None` when the folder holds no prior year (see [`prior_year_findings`]).
pub fn compare_prior_year(
    a: &Actuals<'_>,
    full: &Dataset,
    view: crate::cli::View,
    root: &EntityId,
) -> PolarsResult<Option<Compared>> {
    let _span = tracing::info_span!("compare", plan = "prior-year").entered();
    let Some(prior) = crate::years::prior_year_close(full, a.period, view, root)? else { return Ok(None) };
    let (at_rates, at_rates_base) = close_at_rates(a, &prior_year_rates(full, a.fiscal_start))?;
    Ok(Some(Compared {
        name: "prior-year".into(),
        close: prior.close,
        base: prior.base,
        at_rates,
        at_rates_base,
        planned: full.entities.iter().map(|e| e.id.clone()).collect(),
    }))
}

/// The actuals of `a` closed at `rates` in place of the actual ones (constant
/// currency), with the base close of a month or quarter view.
fn close_at_rates(a: &Actuals<'_>, rates: &[MonthlyRate]) -> PolarsResult<(Close, Option<Close>)> {
    let ds = with_rates(a.ds, rates);
    let t = crate::translate::translate(&ds, a.mapped, a.fiscal_start, a.period)?;
    let c = crate::close::close_at(&ds, &t, a.structure, a.period)?;
    let b = match a.base_period {
        Some(p) => Some(crate::close::close_at(&ds, &t, &structure_at(&ds, a.structure, p), p)?),
        None => None,
    };
    Ok((c, b))
}

/// A comparison closed: its close (and base close for a month or quarter view), the
/// actuals at its rates, and the entities it plans.
pub struct Compared {
    pub name: String,
    pub close: Close,
    pub base: Option<Close>,
    /// The actuals closed at the comparison's rates.
    pub at_rates: Close,
    pub at_rates_base: Option<Close>,
    /// The entities with a plan file.
    pub planned: BTreeSet<EntityId>,
}

/// The actuals of a close: what a comparison is run beside.
pub struct Actuals<'a> {
    pub ds: &'a Dataset,
    pub mapped: &'a crate::map_accounts::Mapped,
    pub structure: &'a GroupStructure,
    pub fiscal_start: Period,
    pub period: Period,
    pub base_period: Option<Period>,
}

/// The rates of `ds` with the comparison's rates in place of the actual ones for every
/// month and currency the comparison gives.
pub fn with_rates(ds: &Dataset, rates: &[MonthlyRate]) -> Dataset {
    let given: BTreeSet<(Period, Currency)> = rates.iter().map(|r| (r.period, r.currency)).collect();
    let mut out = ds.clone();
    out.rates =
        ds.rates.iter().filter(|r| !given.contains(&(r.period, r.currency))).chain(rates.iter()).cloned().collect();
    out
}

/// The findings of a plan's rows beside the actuals `a`, without closing it (for
/// `tessera check`).
pub fn check_plan(a: &Actuals<'_>, plan: &PlanInput) -> PolarsResult<Vec<Finding>> {
    let mut f = plan_findings(a, plan)?;
    let mapped = crate::map_accounts::map_accounts(&plan_dataset(a.ds, plan, a.fiscal_start)?, a.fiscal_start)?;
    f.extend(unmapped_findings(&mapped.unmapped)?);
    Ok(f)
}

/// Closes the plan `plan` beside the actuals `a`. `None` with the findings when the plan
/// has blocking ones.
pub fn compare_plan(a: &Actuals<'_>, plan: &PlanInput) -> PolarsResult<(Option<Compared>, Vec<Finding>)> {
    let _span = tracing::info_span!("compare", plan = %plan.name).entered();
    let mut f = plan_findings(a, plan)?;
    let pds = plan_dataset(a.ds, plan, a.fiscal_start)?;
    let mapped = crate::map_accounts::map_accounts(&pds, a.fiscal_start)?;
    f.extend(unmapped_findings(&mapped.unmapped)?);
    if f.iter().any(|x| x.severity >= Severity::Blocking) {
        return Ok((None, f));
    }
    let close_of = |ds: &Dataset, m: &crate::map_accounts::Mapped| -> PolarsResult<(Close, Option<Close>)> {
        let t = crate::translate::translate(ds, m, a.fiscal_start, a.period)?;
        // The plan's own structure: the actual one but for a subsidiary sold in the year,
        // which the plan keeps (`keep_sold`).
        let c = crate::close::close_at(ds, &t, &structure_at(ds, a.structure, a.period), a.period)?;
        let b = match a.base_period {
            Some(p) => Some(crate::close::close_at(ds, &t, &structure_at(ds, a.structure, p), p)?),
            None => None,
        };
        Ok((c, b))
    };
    let (close, base) = close_of(&pds, &mapped)?;
    // What the plan's close finds (a bargain purchase to reassess, say) is shown, as a
    // warning: the comparison's figures are not a close of record.
    f.extend(close.findings.iter().map(|x| {
        let mut x = x.clone();
        x.message = format!("in the close of the plan {}: {}", plan.name, x.message);
        x.severity = Severity::Warning;
        x
    }));
    let (at_rates, at_rates_base) = close_at_rates(a, &plan.rates)?;
    Ok((
        Some(Compared {
            name: plan.name.clone(),
            close,
            base,
            at_rates,
            at_rates_base,
            planned: plan.entities.clone(),
        }),
        f,
    ))
}

/// The group structure below the same root at the end of `p`.
fn structure_at(ds: &Dataset, s: &GroupStructure, p: Period) -> GroupStructure {
    let ids: Vec<EntityId> = ds.entities.iter().map(|e| e.id.clone()).collect();
    crate::structure::build(&ids, &ds.holdings, s.parent(), p.last_day(), ds.settings.policies.significant_influence).0
}

/// The plan as a data folder: the actual one with the plan's movements (and their
/// balancing lines) for the trial balances and the plan's rates (see the module header),
/// and the subsidiaries the actuals sell in the fiscal year from `fiscal_start` kept.
pub fn plan_dataset(ds: &Dataset, plan: &PlanInput, fiscal_start: Period) -> PolarsResult<Dataset> {
    let mut out = with_rates(ds, &plan.rates);
    keep_sold(&mut out, plan, fiscal_start);
    let balancing = balancing_rows(&plan.ledger)?;
    out.ledger = concat([plan.ledger.clone().lazy(), balancing.lazy()], UnionArgs::default())?.collect()?;
    let planned: Vec<String> = plan.entities.iter().map(|e| e.to_string()).collect();
    let n = planned.len();
    let mapping_rows = DataFrame::new(
        n,
        ds.mappings
            .columns()
            .iter()
            .map(|c| {
                Ok(match c.name().as_str() {
                    "entity" => Column::new("entity".into(), planned.clone()),
                    "local_account" | "group_account" => Column::new(c.name().clone(), vec![PLAN_BALANCE; n]),
                    "line" => Column::new("line".into(), vec![0u64; n]).strict_cast(c.dtype())?,
                    _ => Column::full_null(c.name().clone(), n, c.dtype()),
                })
            })
            .collect::<PolarsResult<Vec<_>>>()?,
    )?;
    out.mappings = concat([ds.mappings.clone().lazy(), mapping_rows.lazy()], UnionArgs::default())?.collect()?;
    out.accounts.push(AccountDef {
        account: GroupAccount::new(PLAN_BALANCE),
        name: "Plan balancing line".into(),
        statement: Statement::BalanceSheet,
        class: AccountClass::Asset,
        basis: Basis::Closing,
        ic_kind: None,
        non_current: false,
        reserve: None,
        monetary: None,
        source: crate::model::Source::file("(plan balancing line)"),
    });
    out.inventory_profits.clear();
    out.net_investments.clear();
    out.accepted_differences.clear();
    out.group_adjustments = Default::default();
    Ok(out)
}

/// A plan made before a sale of a subsidiary it plans keeps the subsidiary for the whole
/// year, so the plan's close does not sell it (it would derecognise the planned net
/// assets with no proceeds): the holder's holding runs on as it was the day before the
/// sale, a holding from the date is left out, and so is the sale's row. The comparison
/// then shows the sale as a scope effect (`comparison`). Control obtained in stages is
/// left out of the plan's close as well (below).
fn keep_sold(out: &mut Dataset, plan: &PlanInput, fiscal_start: Period) {
    let year_first = fiscal_start.first_day();
    let sold: Vec<OwnershipChange> = out
        .ownership_changes
        .iter()
        .filter(|c| c.date >= year_first && plan.entities.contains(&c.owned))
        .filter(|c| crate::ownership::classify(out, c).kind == crate::ownership::ChangeKind::LossOfControl)
        .cloned()
        .collect();
    for c in &sold {
        let before = c.date.pred_opt().unwrap_or(c.date);
        let of = |h: &Holding| h.owner == c.holder && h.owned == c.owned;
        out.holdings.retain(|h| !(of(h) && h.valid_from == c.date));
        for h in out.holdings.iter_mut().filter(|h| of(h) && h.valid_to == Some(before)) {
            h.valid_to = None;
        }
    }
    out.ownership_changes.retain(|c| !sold.contains(c));
    // A plan holds income and expense only, not the holder's purchase: the
    // remeasurement of an interest held before control (IFRS 3.42) would be measured
    // against an investment the plan never paid for. It is a fact of the actuals, and the
    // walk shows it as the step `step_acquisition`.
    let steps: Vec<OwnershipChange> = out
        .ownership_changes
        .iter()
        .filter(|c| crate::ownership::classify(out, c).kind == crate::ownership::ChangeKind::StepAcquisition)
        .cloned()
        .collect();
    out.ownership_changes.retain(|c| !steps.contains(c));
}

/// The subsidiaries the actuals sell in the fiscal year to the period.
fn sold_in_year(a: &Actuals<'_>) -> BTreeSet<EntityId> {
    let scope = crate::validate::Scope { period: a.period, fiscal_start: a.fiscal_start };
    crate::ownership::losses_of_control(a.ds, scope).into_iter().map(|c| c.owned.clone()).collect()
}

/// One row per entity and month of a plan: minus the sum of its rows, on
/// [`PLAN_BALANCE`], so that every month of the plan balances.
fn balancing_rows(ledger: &DataFrame) -> PolarsResult<DataFrame> {
    let sums = ledger
        .clone()
        .lazy()
        .group_by([col("entity"), col("period")])
        .agg([col("amount").sum().alias("total")])
        .sort(["entity", "period"], SortMultipleOptions::default())
        .collect()?;
    let n = sums.height();
    let totals = crate::money::column_decimals(sums.column("total")?)?;
    let negated: Vec<String> = totals.iter().map(|v| (-v.unwrap_or_default()).to_string()).collect();
    let amount = Column::new("amount".into(), negated).strict_cast(&crate::money::amount_dtype())?;
    let cols = ledger
        .columns()
        .iter()
        .map(|c| {
            Ok(match c.name().as_str() {
                "entity" | "period" => sums.column(c.name().as_str())?.clone(),
                "kind" => Column::new("kind".into(), vec!["movements"; n]),
                "account" => Column::new("account".into(), vec![PLAN_BALANCE; n]),
                "amount" => amount.clone(),
                "file" => Column::new("file".into(), vec!["(plan balancing line)"; n]),
                _ => Column::full_null(c.name().clone(), n, c.dtype()),
            })
        })
        .collect::<PolarsResult<Vec<_>>>()?;
    DataFrame::new(n, cols)
}

/// A plan row's place: entity, period, account, file, line.
type RowAt = (String, String, String, String, u64);

/// The rows of `df` (ledger columns) as [`RowAt`], for findings.
fn located(df: &DataFrame) -> PolarsResult<Vec<RowAt>> {
    let s = |c: &str| crate::money::column_strings(df, c);
    let (e, p, acc, file) = (s("entity")?, s("period")?, s("account")?, s("file")?);
    let line = df.column("line")?.strict_cast(&DataType::UInt64)?;
    let line: Vec<u64> = line.u64()?.iter().map(|v| v.unwrap_or_default()).collect();
    Ok((0..df.height())
        .map(|i| {
            let get = |v: &Vec<Option<String>>| v[i].clone().unwrap_or_default();
            (get(&e), get(&p), get(&acc), get(&file), line[i])
        })
        .collect())
}

/// A finding located on a plan row.
fn on_row(rule: Rule, row: &RowAt, message: String, action: &str) -> Finding {
    let (e, p, acc, file, line) = row;
    let mut x = Finding::new(rule, message, action).in_file(file).line(*line).entity(&EntityId::new(e)).account(acc);
    if let Ok(p) = p.parse::<Period>() {
        x = x.period(p);
    }
    x
}

/// Whether `plan` has a row in the fiscal year starting `fiscal_start` (or no rows at
/// all, whose emptiness its own checks name).
pub fn plans_the_year(plan: &PlanInput, fiscal_start: Period) -> PolarsResult<bool> {
    if plan.ledger.height() == 0 {
        return Ok(true);
    }
    let (first, last) = (fiscal_start.to_string(), fiscal_start.plus_months(11).to_string());
    let inside = plan
        .ledger
        .clone()
        .lazy()
        .filter(col("period").gt_eq(lit(first)).and(col("period").lt_eq(lit(last))))
        .collect()?;
    Ok(inside.height() > 0)
}

/// The checks of a plan's rows beside the close: months outside the fiscal year, rows
/// given twice, counterparties, entities outside the scope and missing plan rates.
fn plan_findings(a: &Actuals<'_>, plan: &PlanInput) -> PolarsResult<Vec<Finding>> {
    let mut f = Vec::new();
    let first = a.fiscal_start.to_string();
    let last = a.fiscal_start.plus_months(11).to_string();
    let lf = plan.ledger.clone().lazy();
    let outside =
        lf.clone().filter(col("period").lt(lit(first.clone())).or(col("period").gt(lit(last.clone())))).collect()?;
    for row in located(&outside)? {
        let message = format!("the plan's month {} is outside the fiscal year {first} to {last}", row.1);
        f.push(on_row(Rule::PeriodOutsideYear, &row, message, "plan only the months of the fiscal year closed"));
    }
    // One amount per entity, month, account and counterparty: a second row would be
    // added silently, which a plan's author rarely means.
    let keys = [col("entity"), col("period"), col("account"), col("counterparty")];
    let twice = lf
        .clone()
        .with_column(col("line").count().over(keys)?.alias("n"))
        .filter(col("n").gt(lit(1u32)))
        .sort(["entity", "file", "line"], SortMultipleOptions::default())
        .collect()?;
    for row in located(&twice)? {
        let message = format!("{} {} account {} is planned on more than one row", row.0, row.1, row.2);
        f.push(on_row(Rule::RowDuplicated, &row, message, "keep one row per entity, month, account and counterparty"));
    }
    let known: BTreeSet<String> = a.ds.entities.iter().map(|e| e.id.to_string()).collect();
    let with_cp = lf.filter(col("counterparty").is_not_null()).collect()?;
    let cps = crate::money::column_strings(&with_cp, "counterparty")?;
    for (row, cp) in located(&with_cp)?.iter().zip(cps) {
        let cp = cp.unwrap_or_default();
        if !known.contains(&cp) {
            let message = format!("counterparty {cp:?} is not in entities.csv");
            f.push(on_row(Rule::CounterpartyUnknown, row, message, "name an entity of entities.csv as counterparty"));
        } else if cp == row.0 {
            let message = format!("{cp} is its own counterparty");
            f.push(on_row(Rule::CounterpartySelf, row, message, "name the other entity of the transaction"));
        }
    }
    f.extend(scope_findings(a, plan));
    f.extend(rate_findings(a, plan));
    Ok(f)
}

/// A planned entity the close neither consolidates nor equity-accounts at the period
/// end, and does not sell in the year: its plan is left out (the comparison is on the
/// actual structure).
fn scope_findings(a: &Actuals<'_>, plan: &PlanInput) -> Vec<Finding> {
    let sold = sold_in_year(a);
    let in_scope: BTreeSet<&EntityId> = a
        .structure
        .entities()
        .iter()
        .filter(|e| matches!(e.method, Method::Full | Method::Proportionate | Method::Equity))
        .map(|e| &e.id)
        .chain(sold.iter())
        .collect();
    plan.entities
        .iter()
        .filter(|e| !in_scope.contains(e))
        .map(|e| {
            Finding::new(
                Rule::DeliveryOutsideScope,
                format!("{e} is planned but the close at {} does not include it; its plan is left out", a.period),
                "remove its plan file, or check the holdings",
            )
            .entity(e)
            .in_file(format!("{}/{}/{e}.csv", crate::load::plans::PLANS_DIR, plan.name))
            .severity(Severity::Warning)
        })
        .collect()
}

/// Every currency of an entity the close consolidates or equity-accounts needs a plan
/// rate for every month of the year to the period end: the plan and the actuals at
/// constant currency are translated at them.
fn rate_findings(a: &Actuals<'_>, plan: &PlanInput) -> Vec<Finding> {
    let given: BTreeSet<(Period, Currency)> = plan.rates.iter().map(|r| (r.period, r.currency)).collect();
    let presentation = a.ds.settings.presentation_currency;
    let sold = sold_in_year(a);
    let currencies: BTreeMap<Currency, &EntityId> = a
        .structure
        .entities()
        .iter()
        .filter(|e| matches!(e.method, Method::Full | Method::Proportionate | Method::Equity))
        .map(|e| &e.id)
        .chain(sold.iter())
        .filter_map(|e| a.ds.entity(e).map(|x| (x.currency, e)))
        .filter(|(c, _)| *c != presentation)
        .collect();
    let mut f = Vec::new();
    for (c, e) in currencies {
        for p in a.fiscal_start.through(&a.period) {
            if !given.contains(&(p, c)) {
                f.push(
                    Finding::new(
                        Rule::RateMissing,
                        format!("the plan {} has no {c} rate for {p} ({e} reports in {c})", plan.name),
                        "add the month's closing and average plan rate to the plan's rates.csv",
                    )
                    .in_file(&plan.rates_file)
                    .period(p),
                );
            }
        }
    }
    f
}

/// A plan row whose local account the entity's mapping.csv does not map.
fn unmapped_findings(unmapped: &DataFrame) -> PolarsResult<Vec<Finding>> {
    Ok(located(unmapped)?
        .iter()
        .map(|row| {
            let message = format!("{} plans local account {} that its mapping.csv does not map", row.0, row.2);
            on_row(
                Rule::AccountUnmapped,
                row,
                message,
                "map the account in the entity's mapping.csv, or correct the plan",
            )
        })
        .collect())
}

/// Everything a close shows of its comparison.
#[derive(Debug, Clone, serde::Serialize)]
pub struct Comparison {
    /// `budget`, `forecast-<label>` or `prior-year`.
    pub comparison: String,
    /// The compared statements' lines by statement (income statement and OCI: a plan
    /// has no balance sheet of its own).
    pub statements: BTreeMap<String, Vec<walk::LineComparison>>,
    /// The compared statements' ratio lines, in percent.
    pub ratios: BTreeMap<String, Vec<walk::RatioComparison>>,
    pub walks: Vec<walk::Walk>,
    pub currency_effect: Vec<walk::CurrencyRow>,
    /// The comparison's input files and their SHA-256.
    pub inputs: Vec<crate::load::InputFile>,
}

/// The segment of an entity under the `[segments]` key, its id without segments (or
/// without a segment under the key).
pub fn segment_of(ds: &Dataset) -> impl Fn(&EntityId) -> String + '_ {
    let key = ds.settings.segments.as_ref().map(|s| s.key.clone());
    move |e: &EntityId| {
        key.as_ref()
            .and_then(|k| {
                let x = ds.entity(e)?;
                x.segments.iter().find(|(kk, _)| kk == k).map(|(_, v)| v.clone())
            })
            .unwrap_or_else(|| e.to_string())
    }
}

/// The comparison of the actual view (`close` less `base`) with `c`: its statements'
/// lines, walks and currency effect.
pub fn comparison(
    ds: &Dataset,
    statements: &[crate::layout::ResolvedStatement],
    actual: (&Close, Option<&Close>),
    c: &Compared,
) -> PolarsResult<Comparison> {
    let chart = crate::close::view::Chart::new(&ds.accounts);
    let roles = &ds.settings.accounts;
    let figures = |close: &Close, base: Option<&Close>| crate::close::view::view_figures(close, base, &chart, roles);
    let (fa, fc, fr) = (
        figures(actual.0, actual.1),
        figures(&c.close, c.base.as_ref()),
        figures(&c.at_rates, c.at_rates_base.as_ref()),
    );
    let mut out_statements = BTreeMap::new();
    let mut ratios = BTreeMap::new();
    for st in statements.iter().filter(|s| s.statement == "profit_or_loss" || s.statement == "oci") {
        out_statements.insert(st.statement.clone(), walk::compare_statement(st, &fa.flows, &fc.flows, &fr.flows, true));
        if !st.ratios.is_empty() {
            ratios.insert(st.statement.clone(), walk::compare_ratios(st, &fa.flows, &fc.flows, &fr.flows));
        }
    }
    let parts_a = walk::Parts::of(actual.0, actual.1)?;
    let parts_c = walk::Parts::of(&c.close, c.base.as_ref())?;
    let parts_r = walk::Parts::of(&c.at_rates, c.at_rates_base.as_ref())?;
    // A subsidiary sold in the year is consolidated to its sale and compared whole
    // (the months it was consolidated and those after) as a scope effect: the
    // comparison has it for the whole year.
    let sold: BTreeSet<&EntityId> = actual.0.disposals.iter().map(|d| &d.entity).collect();
    let planned: BTreeSet<EntityId> = c.planned.iter().filter(|e| !sold.contains(e)).cloned().collect();
    let sides = walk::Sides { actual: &parts_a, at_rates: &parts_r, comparison: &parts_c, planned: &planned };
    let seg = segment_of(ds);
    let measures = walk::walk_measures(statements, ds.settings.segments.as_ref(), &ds.accounts);
    let walks = measures.iter().map(|m| walk::walk(m, &sides, &seg)).collect();
    let mut currency_effect: Vec<walk::CurrencyRow> =
        measures.iter().flat_map(|m| walk::currency_effect(m, &parts_a, &parts_r, &seg)).collect();
    // The balance sheet, which a plan does not have, still has a currency effect: its
    // lines at the comparison's closing rate of the period end.
    for st in statements.iter().filter(|s| s.statement == "balance_sheet") {
        currency_effect.extend(walk::line_currency_effect(st, &fa.balance_sheet, &fr.balance_sheet));
    }
    Ok(Comparison {
        comparison: c.name.clone(),
        statements: out_statements,
        ratios,
        walks,
        currency_effect,
        inputs: Vec::new(),
    })
}

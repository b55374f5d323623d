//! Validation: every rule a month's deliveries must satisfy before a close, checked in
//! one pass so that `tessera check` lists all of them together. Runs on the loaded
//! dataset and on the mapped ledger (most rules are about group accounts). It never
//! changes data; it only reports.

use std::collections::{BTreeMap, BTreeSet};

use polars::prelude::*;
use rust_decimal::Decimal;

use crate::findings::{Finding, Findings, Rule, Severity};
use crate::load::Dataset;
use crate::map_accounts::{Mapped, period_index, period_of_index};
use crate::model::*;
use crate::money::{column_decimals, format_amount};

/// What a check is about: the period to close and its fiscal year.
#[derive(Debug, Clone, Copy)]
pub struct Scope {
    pub period: Period,
    pub fiscal_start: Period,
}

impl Scope {
    pub fn new(period: Period, fiscal_year_start: u32) -> Self {
        Self { period, fiscal_start: period.fiscal_year_start(fiscal_year_start) }
    }
    /// The months of the fiscal year up to and including the period.
    pub fn months(&self) -> Vec<Period> {
        self.fiscal_start.through(&self.period)
    }
}

fn s(df: &DataFrame, c: &str, i: usize) -> Option<String> {
    df.column(c).ok()?.str().ok()?.get(i).map(String::from)
}
fn u(df: &DataFrame, c: &str, i: usize) -> Option<u64> {
    df.column(c).ok()?.u64().ok()?.get(i)
}
fn idx(df: &DataFrame, c: &str, i: usize) -> Option<i32> {
    df.column(c).ok()?.i32().ok()?.get(i)
}

/// What validation builds on its way, handed on so that no later stage builds it again:
/// the group structure at the period end and the resolved statement layouts.
pub struct Validated {
    pub structure: crate::structure::GroupStructure,
    pub statements: Vec<crate::layout::ResolvedStatement>,
}

/// Runs every rule. `findings` already holds what loading found.
pub fn validate(ds: &Dataset, mapped: &Mapped, scope: Scope, findings: &mut Findings) -> PolarsResult<Validated> {
    let _span = tracing::info_span!("validate", period = %scope.period).entered();
    let mut f: Vec<Finding> = Vec::new();
    check_reference_data(ds, &mut f);
    let structure = check_holdings(ds, scope, &mut f);
    check_dates(ds, &structure, scope, &mut f);
    check_mappings(ds, mapped, &mut f)?;
    let deliveries = delivery_summary(mapped)?;
    check_periods(ds, &deliveries, &structure, scope, &mut f)?;
    check_balanced(&deliveries, scope, &mut f)?;
    drop(deliveries);
    check_duplicates(mapped, &mut f)?;
    check_counterparties(ds, mapped, &mut f)?;
    check_opening(ds, &mut f)?;
    check_rates(ds, mapped, scope, &mut f)?;
    let method_of = |e: &EntityId| structure.entities().iter().find(|x| &x.id == e).map(|x| x.method);
    f.extend(crate::restate::findings(ds, mapped, scope.fiscal_start, scope.period, &method_of)?);
    check_documents(ds, &mut f)?;
    check_net_investments(ds, &mut f);
    check_group_adjustments(ds, &structure, scope, &mut f);
    check_reserves(ds, &mut f);
    check_cash_flow_lines(ds, mapped, scope, &mut f)?;
    check_plausibility(ds, mapped, scope, &mut f)?;
    f.extend(crate::ownership::findings(ds, scope));
    let mut layout_findings = Vec::new();
    let statements = crate::layout::resolve(&ds.layouts, &ds.accounts, &mut layout_findings);
    f.extend(layout_findings);
    findings.extend(f);
    findings.sort();
    Ok(Validated { structure, statements })
}

fn check_reference_data(ds: &Dataset, f: &mut Vec<Finding>) {
    let st = &ds.settings;
    if ds.entity(&st.parent).is_none() {
        f.push(
            Finding::new(
                Rule::EntityUnknown,
                format!("the parent {} named in group.toml is not in entities.csv", st.parent),
                "add the parent to entities/entities.csv or correct `parent`",
            )
            .in_file("entities/group.toml"),
        );
    }
    let roles = &st.accounts;
    let mut want: Vec<(&str, &GroupAccount, &[AccountClass], Option<Statement>)> = vec![
        ("retained_earnings", &roles.retained_earnings, &[AccountClass::Equity], None),
        ("translation_reserve", &roles.translation_reserve, &[AccountClass::Equity], None),
        (
            "translation_difference",
            &roles.translation_difference,
            &[AccountClass::Income, AccountClass::Expense],
            Some(Statement::Oci),
        ),
        ("non_controlling_interest", &roles.non_controlling_interest, &[AccountClass::Equity], None),
        ("goodwill", &roles.goodwill, &[AccountClass::Asset], None),
        ("equity_investments", &roles.equity_investments, &[AccountClass::Asset], None),
        (
            "equity_result",
            &roles.equity_result,
            &[AccountClass::Income, AccountClass::Expense],
            Some(Statement::ProfitOrLoss),
        ),
        (
            "intercompany_difference",
            &roles.intercompany_difference,
            &[AccountClass::Income, AccountClass::Expense],
            Some(Statement::ProfitOrLoss),
        ),
    ];
    // Optional roles, checked when named.
    if let Some(acct) = &roles.bargain_purchase_gain {
        want.push(("bargain_purchase_gain", acct, &[AccountClass::Income], Some(Statement::ProfitOrLoss)));
    }
    for (role, acct, classes, statement) in want {
        match ds.account(acct) {
            None => f.push(
                Finding::new(
                    Rule::AccountUnknown,
                    format!("`accounts.{role}` names {acct}, which is not in accounts.csv"),
                    "add the account to the group chart or name another one",
                )
                .in_file("entities/group.toml")
                .account(acct.as_str()),
            ),
            Some(a) if !classes.contains(&a.class) || statement.is_some_and(|s| s != a.statement) => f.push(
                Finding::new(
                    Rule::AccountInvalid,
                    format!("`accounts.{role}` names {acct}, whose class or statement does not fit the role"),
                    "name an account of the right kind (docs/formats.md, group.toml)",
                )
                .in_file("entities/group.toml")
                .account(acct.as_str()),
            ),
            _ => {}
        }
    }
}

fn check_holdings(ds: &Dataset, scope: Scope, f: &mut Vec<Finding>) -> crate::structure::GroupStructure {
    let known: BTreeSet<&EntityId> = ds.entities.iter().map(|e| &e.id).collect();
    for h in &ds.holdings {
        for e in [&h.owner, &h.owned] {
            if !known.contains(e) {
                f.push(
                    Finding::new(
                        Rule::EntityUnknown,
                        format!("holding names {e}, which is not in entities.csv"),
                        "add the entity or correct the holding",
                    )
                    .at(&h.source)
                    .entity(e),
                );
            }
        }
    }
    // Control, interests and methods: the structure module's own findings, less
    // those loading and the checks above already report.
    let ids: Vec<EntityId> = ds.entities.iter().map(|e| e.id.clone()).collect();
    let (structure, found) = crate::structure::build(
        &ids,
        &ds.holdings,
        &ds.settings.parent,
        scope.period.last_day(),
        ds.settings.policies.significant_influence,
    );
    f.extend(found.into_iter().filter_map(structure_finding));
    structure
}

/// Whether the close of the group needs the entity's figures at the period end: it is
/// consolidated in full or proportionately, or equity-accounted.
pub fn in_scope(structure: &crate::structure::GroupStructure, e: &EntityId) -> bool {
    structure.entity(e).is_some_and(|x| x.method != Method::None)
}

/// Dates that must agree: an acquisition's date is the date the holdings say control
/// (or significant influence) began, or the start of one of the entity's holdings, no date lies beyond the fiscal year closed, and an
/// entity outside the group at the period end that delivers is said to be left out.
fn check_dates(ds: &Dataset, structure: &crate::structure::GroupStructure, scope: Scope, f: &mut Vec<Finding>) {
    let year_end = scope.fiscal_start.plus_months(11).last_day();
    for h in &ds.holdings {
        if h.valid_from > year_end {
            f.push(
                Finding::new(
                    Rule::DateInFuture,
                    format!(
                        "the holding of {} in {} starts on {}, after the fiscal year closed here ends ({year_end})",
                        h.owner, h.owned, h.valid_from
                    ),
                    "correct `valid_from` (the acquisition date); a holding of a later year belongs in that year's data folder",
                )
                .at(&h.source)
                .entity(&h.owned),
            );
        }
    }
    for a in &ds.acquisitions {
        if a.date > year_end {
            f.push(
                Finding::new(
                    Rule::DateInFuture,
                    format!(
                        "the acquisition of {} is dated {}, after the fiscal year closed here ends ({year_end})",
                        a.owned, a.date
                    ),
                    "correct the acquisition date: it is the date control or significant influence was obtained",
                )
                .at(&a.source)
                .entity(&a.owned),
            );
            continue;
        }
        let starts: BTreeSet<chrono::NaiveDate> =
            ds.holdings.iter().filter(|h| h.owned == a.owned).map(|h| h.valid_from).collect();
        let control = structure.entity(&a.owned).and_then(|x| x.controlled_from);
        // The date is the group's control date, or the start of a holding in the entity
        // (a sub-subsidiary held before the group bought its holder keeps its own date).
        let agrees = control == Some(a.date) || starts.contains(&a.date);
        if !agrees {
            let held = match control {
                Some(c) => format!("holdings.csv gives control from {c}"),
                None if starts.is_empty() => "holdings.csv has no holding in it".to_string(),
                None => format!(
                    "holdings.csv has holdings from {}",
                    starts.iter().map(|d| d.to_string()).collect::<Vec<_>>().join(", ")
                ),
            };
            f.push(
                Finding::new(
                    Rule::DateInconsistent,
                    format!("the acquisition of {} is dated {}, but {held}", a.owned, a.date),
                    "make acquisitions.csv `date` and holdings.csv `valid_from` the same day: the day control (or significant influence) was obtained",
                )
                .at(&a.source)
                .entity(&a.owned),
            );
        }
    }
}

/// A structure finding as a finding of the run, or `None` where another check already
/// reports the same problem in the data.
pub fn structure_finding(s: crate::structure::StructureFinding) -> Option<Finding> {
    // Reported by loading (HoldingInvalid, EntityDuplicated) or by the reference data
    // checks (EntityUnknown).
    let reported_elsewhere = matches!(
        s.rule,
        Rule::ParentUnknown
            | Rule::EntityDuplicated
            | Rule::HoldingUnknownEntity
            | Rule::HoldingShareOutOfRange
            | Rule::HoldingOfItself
            | Rule::HoldingPeriodInverted
    );
    if reported_elsewhere {
        return None;
    }
    let mut x = Finding::new(s.rule, s.message, s.action);
    if let Some(src) = &s.source {
        x = x.at(src);
    }
    if let Some(e) = &s.entity {
        x = x.entity(e);
    }
    Some(x)
}

fn check_mappings(ds: &Dataset, mapped: &Mapped, f: &mut Vec<Finding>) -> PolarsResult<()> {
    let known: BTreeSet<&str> = ds.accounts.iter().map(|a| a.account.as_str()).collect();
    let m = &ds.mappings;
    for i in 0..m.height() {
        let ga = s(m, "group_account", i).unwrap_or_default();
        if !known.contains(ga.as_str()) {
            f.push(
                Finding::new(
                    Rule::AccountUnknown,
                    format!(
                        "local account {} maps to group account {ga}, which is not in accounts.csv",
                        s(m, "local_account", i).unwrap_or_default()
                    ),
                    "map it to an account of the group chart, or add the account to entities/accounts.csv",
                )
                .in_file(s(m, "file", i).unwrap_or_default())
                .line(u(m, "line", i).unwrap_or(0))
                .entity(&EntityId::new(s(m, "entity", i).unwrap_or_default()))
                .account(ga),
            );
        }
    }
    let t = &mapped.mapped_twice;
    for i in 0..t.height() {
        f.push(
            Finding::new(
                Rule::AccountMappedTwice,
                format!(
                    "local account {} is mapped more than once; this row maps it to {}",
                    s(t, "local_account", i).unwrap_or_default(),
                    s(t, "group_account", i).unwrap_or_default()
                ),
                "keep exactly one mapping row per local account",
            )
            .in_file(s(t, "file", i).unwrap_or_default())
            .line(u(t, "line", i).unwrap_or(0))
            .entity(&EntityId::new(s(t, "entity", i).unwrap_or_default()))
            .account(s(t, "local_account", i).unwrap_or_default()),
        );
    }
    // Unmapped: one finding per entity and local account, at its first line.
    let twice: BTreeSet<(String, String)> = (0..t.height())
        .map(|i| (s(t, "entity", i).unwrap_or_default(), s(t, "local_account", i).unwrap_or_default()))
        .collect();
    let un = mapped
        .unmapped
        .clone()
        .lazy()
        .group_by([col("entity"), col("account")])
        .agg([col("file").first(), col("line").min(), col("line").count().alias("rows"), col("period").min()])
        .sort(["entity", "account"], SortMultipleOptions::default())
        .collect()?;
    for i in 0..un.height() {
        let e = s(&un, "entity", i).unwrap_or_default();
        let a = s(&un, "account", i).unwrap_or_default();
        if twice.contains(&(e.clone(), a.clone())) {
            continue;
        }
        let rows = un.column("rows")?.u32()?.get(i).unwrap_or(0);
        let mut x = Finding::new(
            Rule::AccountUnmapped,
            format!("local account {a} is used on {rows} row(s) but is not in entities/{e}/mapping.csv"),
            format!("add `{a},<name>,<group account>` to entities/{e}/mapping.csv"),
        )
        .in_file(s(&un, "file", i).unwrap_or_default())
        .line(u(&un, "line", i).unwrap_or(0))
        .entity(&EntityId::new(&e))
        .account(a);
        if let Some(p) = s(&un, "period", i).and_then(|p| p.parse().ok()) {
            x = x.period(p);
        }
        f.push(x);
    }
    Ok(())
}

/// One row per delivered file and month: `entity`, `kind`, `period_index`, `file`, the
/// sums `debits`, `credits` and `total` of its amounts, its first `line` and `mapped`,
/// its number of mapped rows. Built in one pass over the mapped and unmapped rows (every
/// ledger and opening row) for the checks that are about whole deliveries, which would
/// otherwise each group every row again.
fn delivery_summary(mapped: &Mapped) -> PolarsResult<DataFrame> {
    // Balance is checked on the delivered amounts, mapped or not: unmapped rows still
    // belong to the delivery.
    let cols = |m: bool| {
        [
            col("entity"),
            col("kind"),
            col("period_index"),
            col("file"),
            col("amount"),
            col("line"),
            lit(i64::from(m)).alias("mapped"),
        ]
    };
    let all = concat(
        [mapped.lines.clone().lazy().select(cols(true)), mapped.unmapped.clone().lazy().select(cols(false))],
        UnionArgs::default(),
    )?;
    let zero = crate::money::decimal_lit(Decimal::ZERO, crate::money::AMOUNT_SCALE);
    all.group_by([col("entity"), col("kind"), col("period_index"), col("file")])
        .agg([
            col("amount").filter(col("amount").gt(zero.clone())).sum().alias("debits"),
            col("amount").filter(col("amount").lt(zero)).sum().alias("credits"),
            col("amount").sum().alias("total"),
            col("line").min(),
            col("mapped").sum(),
        ])
        .collect()
}

fn check_periods(
    ds: &Dataset,
    deliveries: &DataFrame,
    structure: &crate::structure::GroupStructure,
    scope: Scope,
    f: &mut Vec<Finding>,
) -> PolarsResult<()> {
    check_months_outside_year(deliveries, scope, f)?;
    // The month's deliveries as the close reads them: files with a mapped row.
    let months = deliveries.clone().lazy().filter(col("kind").neq(lit("opening")).and(col("mapped").gt(lit(0i64))));
    check_duplicate_deliveries(months.clone(), f)?;
    check_missing_deliveries(ds, months, structure, scope, f)
}

/// Finds ledger periods outside the fiscal year being closed, one finding per file and period.
fn check_months_outside_year(deliveries: &DataFrame, scope: Scope, f: &mut Vec<Finding>) -> PolarsResult<()> {
    let start = period_index(scope.fiscal_start);
    let end = period_index(scope.fiscal_start.plus_months(11));
    // A file holds one entity's rows; its period is checked YYYY-MM when loaded, so the
    // period index orders and tells periods apart as the text does.
    let outside = deliveries
        .clone()
        .lazy()
        .filter(col("kind").neq(lit("opening")))
        .filter(col("period_index").lt(lit(start)).or(col("period_index").gt(lit(end))))
        .group_by([col("file"), col("period_index")])
        .agg([col("line").min(), col("entity").first()])
        .sort(["file", "period_index"], SortMultipleOptions::default())
        .collect()?;
    for i in 0..outside.height() {
        let p = period_of_index(idx(&outside, "period_index", i).unwrap_or(0));
        f.push(
            Finding::new(
                Rule::PeriodOutsideYear,
                format!(
                    "period {p} is outside the fiscal year {} to {} being closed",
                    scope.fiscal_start,
                    scope.fiscal_start.plus_months(11)
                ),
                "keep one fiscal year per data folder, or pass --period for the year you mean",
            )
            .in_file(s(&outside, "file", i).unwrap_or_default())
            .line(u(&outside, "line", i).unwrap_or(0))
            .entity(&EntityId::new(s(&outside, "entity", i).unwrap_or_default())),
        );
    }
    Ok(())
}

/// Finds an entity's month delivered in more than one file.
fn check_duplicate_deliveries(months: LazyFrame, f: &mut Vec<Finding>) -> PolarsResult<()> {
    // Each entity and period comes from one file, and of one kind.
    let deliveries = months
        .group_by([col("entity"), col("period_index")])
        .agg([col("file").unique().sort(Default::default()).alias("files")])
        .filter(col("files").list().len().gt(lit(1)))
        .sort(["entity", "period_index"], SortMultipleOptions::default())
        .collect()?;
    for i in 0..deliveries.height() {
        let e = EntityId::new(s(&deliveries, "entity", i).unwrap_or_default());
        let p = period_of_index(idx(&deliveries, "period_index", i).unwrap_or(0));
        let files = deliveries.column("files")?.list()?.get_as_series(i).map(|s| {
            s.str().map(|c| c.iter().flatten().map(String::from).collect::<Vec<_>>().join(", ")).unwrap_or_default()
        });
        f.push(
            Finding::new(
                Rule::DeliveryDuplicated,
                format!("{e} {p} is delivered in more than one file: {}", files.unwrap_or_default()),
                "deliver each entity and month once; remove or merge the extra file",
            )
            .entity(&e)
            .period(p),
        );
    }
    Ok(())
}

/// Finds the months and entities not delivered, blocking where the close needs them.
fn check_missing_deliveries(
    ds: &Dataset,
    months: LazyFrame,
    structure: &crate::structure::GroupStructure,
    scope: Scope,
    f: &mut Vec<Finding>,
) -> PolarsResult<()> {
    // Who has not delivered which month yet.
    let have: BTreeSet<(String, i32)> = {
        let d = months.select([col("entity"), col("period_index")]).unique(None, UniqueKeepStrategy::Any).collect()?;
        (0..d.height()).filter_map(|i| Some((s(&d, "entity", i)?, idx(&d, "period_index", i)?))).collect()
    };
    // The close is complete only with every month of every entity it consolidates or
    // equity-accounts: a missing one is blocking. An entity outside the group at the
    // period end is only said to be missing.
    // A subsidiary (or an associate) sold in the year has its months to the sale
    // checked by `ownership`; its figures to then are in the close, so it is neither
    // missing nor outside.
    let sold: BTreeSet<&EntityId> = crate::ownership::losses_of_control(ds, scope)
        .iter()
        .chain(crate::ownership::associate_sales(ds, scope).iter())
        .map(|c| &c.owned)
        .collect();
    for e in ds.entities.iter().filter(|e| !sold.contains(&e.id)) {
        let needed = in_scope(structure, &e.id);
        let sev = if needed { Severity::Blocking } else { Severity::Warning };
        let why = if needed {
            format!("the close needs it: {} is {} in the group", e.id, method_words(structure, &e.id))
        } else {
            "it is not part of the group at the period end, so the close does not need it".to_string()
        };
        if !ds.delivered_entities.contains(&e.id) {
            f.push(
                Finding::new(
                    Rule::DeliveryMissing,
                    format!("{} has not delivered: there is no folder entities/{}/ ({why})", e.id, e.id),
                    format!(
                        "deliver entities/{}/ (mapping.csv, opening.csv and one trial balance per month), or run `tessera close --draft` to see a draft without it",
                        e.id
                    ),
                )
                .in_file(format!("entities/{}", e.id))
                .entity(&e.id)
                .period(scope.period)
                .severity(sev),
            );
            continue;
        }
        for p in scope.months() {
            if !have.contains(&(e.id.to_string(), period_index(p))) {
                f.push(
                    Finding::new(
                        Rule::DeliveryMissing,
                        format!("{} has no trial balance for {p} ({why})", e.id),
                        format!(
                            "deliver entities/{}/tb-{p}.movements.csv (or .balances.csv) with the month's rows; a file that is there but unread has its own finding",
                            e.id
                        ),
                    )
                    .in_file(format!("entities/{}/tb-{p}.movements.csv", e.id))
                    .entity(&e.id)
                    .period(p)
                    .severity(sev),
                );
            }
        }
        if !needed && !have.iter().any(|(x, _)| x == e.id.as_str()) {
            continue;
        }
        if !needed {
            f.push(
                Finding::new(
                    Rule::DeliveryOutsideScope,
                    format!(
                        "{} delivers trial balances but is not part of the group at {} (holdings.csv), so its figures are not in the close",
                        e.id,
                        scope.period.last_day()
                    ),
                    "check the holding's dates in holdings.csv and acquisitions.csv if the entity should be in the close",
                )
                .entity(&e.id)
                .period(scope.period)
                .severity(Severity::Warning),
            );
        }
    }
    Ok(())
}

fn method_words(structure: &crate::structure::GroupStructure, e: &EntityId) -> &'static str {
    match structure.entity(e).map(|x| x.method) {
        Some(Method::Full) => "consolidated in full",
        Some(Method::Proportionate) => "consolidated proportionately",
        Some(Method::Equity) => "equity-accounted",
        _ => "not consolidated",
    }
}

fn check_balanced(deliveries: &DataFrame, scope: Scope, f: &mut Vec<Finding>) -> PolarsResult<()> {
    let zero = crate::money::decimal_lit(Decimal::ZERO, crate::money::AMOUNT_SCALE);
    let sums = deliveries
        .clone()
        .lazy()
        .filter(col("total").neq(zero))
        .sort(["entity", "period_index", "file"], SortMultipleOptions::default())
        .collect()?;
    let debits = column_decimals(sums.column("debits")?)?;
    let credits = column_decimals(sums.column("credits")?)?;
    let totals = column_decimals(sums.column("total")?)?;
    for i in 0..sums.height() {
        let e = EntityId::new(s(&sums, "entity", i).unwrap_or_default());
        let kind = s(&sums, "kind", i).unwrap_or_default();
        let p = period_of_index(idx(&sums, "period_index", i).unwrap_or(0));
        let (d, c, t) = (debits[i].unwrap_or_default(), credits[i].unwrap_or_default(), totals[i].unwrap_or_default());
        let what = if kind == "opening" {
            format!("the opening balance at {}", scope.fiscal_start.first_day())
        } else {
            format!("the {kind} of {p}")
        };
        let mut x = Finding::new(
            Rule::TrialBalanceUnbalanced,
            format!(
                "{what} does not sum to zero: debits {} - credits {} = {}",
                format_amount(d, 3),
                format_amount(-c, 3),
                format_amount(t, 3)
            ),
            "correct the delivery so that debits equal credits; tessera posts no balancing line",
        )
        .in_file(s(&sums, "file", i).unwrap_or_default())
        .entity(&e);
        if kind != "opening" {
            x = x.period(p);
        }
        f.push(x);
    }
    Ok(())
}

fn check_duplicates(mapped: &Mapped, f: &mut Vec<Finding>) -> PolarsResult<()> {
    let cols = || {
        ["entity", "kind", "period_index", "account", "counterparty", "txn_currency", "file", "line"].map(col).to_vec()
    };
    let all = concat(
        [mapped.lines.clone().lazy().select(cols()), mapped.unmapped.clone().lazy().select(cols())],
        UnionArgs::default(),
    )?;
    let keys = || ["entity", "kind", "period_index", "account", "counterparty", "txn_currency"].map(col).to_vec();
    // Counting first keeps the lists of lines to the few repeated keys: building a list
    // for every row's key costs more than the count.
    let repeated = all
        .clone()
        .group_by(keys())
        .agg([col("line").count().alias("n")])
        .filter(col("n").gt(lit(1u32)))
        .select(keys())
        .collect()?;
    // With no key repeated (a clean delivery) there is nothing to list: joining every
    // row to the empty set of keys would still encode every row's keys once more.
    if repeated.height() == 0 {
        return Ok(());
    }
    let mut semi = JoinArgs::new(JoinType::Semi);
    semi.nulls_equal = true;
    let dups = all
        .join(repeated.lazy(), keys(), keys(), semi)
        .group_by(keys())
        .agg([col("line").sort(Default::default()).alias("lines"), col("file").first(), col("line").count().alias("n")])
        .filter(col("n").gt(lit(1u32)))
        .sort(["entity", "period_index", "account"], SortMultipleOptions::default())
        .collect()?;
    for i in 0..dups.height() {
        let lines = dups.column("lines")?.list()?.get_as_series(i);
        let lines: Vec<u64> =
            lines.map(|s| s.u64().map(|c| c.iter().flatten().collect()).unwrap_or_default()).unwrap_or_default();
        let e = EntityId::new(s(&dups, "entity", i).unwrap_or_default());
        let a = s(&dups, "account", i).unwrap_or_default();
        let cp = s(&dups, "counterparty", i).map(|c| format!(" with counterparty {c}")).unwrap_or_default();
        let mut x = Finding::new(
            Rule::RowDuplicated,
            format!(
                "account {a}{cp} appears on {} lines ({}) of one delivery",
                lines.len(),
                lines.iter().map(|l| l.to_string()).collect::<Vec<_>>().join(", ")
            ),
            "a trial balance has one row per account (and counterparty); merge or remove the repeated rows",
        )
        .in_file(s(&dups, "file", i).unwrap_or_default())
        .line(lines.get(1).copied().unwrap_or(0))
        .entity(&e)
        .account(a);
        if s(&dups, "kind", i).as_deref() != Some("opening") {
            x = x.period(period_of_index(idx(&dups, "period_index", i).unwrap_or(0)));
        }
        f.push(x);
    }
    Ok(())
}

fn check_counterparties(ds: &Dataset, mapped: &Mapped, f: &mut Vec<Finding>) -> PolarsResult<()> {
    let known: BTreeSet<&str> = ds.entities.iter().map(|e| e.id.as_str()).collect();
    let known_frame = DataFrame::new(
        known.len(),
        vec![
            Column::new("counterparty".into(), known.iter().copied().collect::<Vec<_>>()),
            Column::new("counterparty_known".into(), vec![true; known.len()]),
        ],
    )?;
    // Only the offending rows reach the Rust loop: a missing, own or unknown counterparty.
    let ic = mapped
        .lines
        .clone()
        .lazy()
        .filter(col("ic_kind").is_not_null().or(col("counterparty").is_not_null()))
        .join(known_frame.lazy(), [col("counterparty")], [col("counterparty")], JoinArgs::new(JoinType::Left))
        .filter(
            (col("ic_kind").is_not_null().and(col("counterparty").is_null()))
                .or(col("counterparty").eq(col("entity")))
                .or(col("counterparty").is_not_null().and(col("counterparty_known").is_null())),
        )
        .select([
            col("entity"),
            col("kind"),
            col("period_index"),
            col("account"),
            col("group_account"),
            col("ic_kind"),
            col("counterparty"),
            col("file"),
            col("line"),
        ])
        .sort(["file", "line"], SortMultipleOptions::default())
        .collect()?;
    for i in 0..ic.height() {
        let e = EntityId::new(s(&ic, "entity", i).unwrap_or_default());
        let a = s(&ic, "account", i).unwrap_or_default();
        let ga = s(&ic, "group_account", i).unwrap_or_default();
        let kind = s(&ic, "ic_kind", i);
        let cp = s(&ic, "counterparty", i);
        let mk = |rule: Rule, msg: String, action: &str| {
            let mut x = Finding::new(rule, msg, action)
                .in_file(s(&ic, "file", i).unwrap_or_default())
                .line(u(&ic, "line", i).unwrap_or(0))
                .entity(&e)
                .account(&a);
            if s(&ic, "kind", i).as_deref() != Some("opening") {
                x = x.period(period_of_index(idx(&ic, "period_index", i).unwrap_or(0)));
            }
            x
        };
        match (&kind, &cp) {
            (Some(k), None) => f.push(mk(
                Rule::CounterpartyMissing,
                format!("local account {a} maps to intercompany account {ga} ({k}) but the row names no counterparty"),
                "fill in `counterparty` with the group entity on the other side",
            )),
            (_, Some(c)) if c == e.as_str() => f.push(mk(
                Rule::CounterpartySelf,
                format!("the counterparty of {e} on account {a} is {e} itself"),
                "name the other group entity, or book it on a non-intercompany account",
            )),
            (_, Some(c)) if !known.contains(c.as_str()) => f.push(mk(
                Rule::CounterpartyUnknown,
                format!("counterparty {c} is not an entity of entities.csv"),
                "correct the counterparty id, or add the entity to entities/entities.csv",
            )),
            _ => {}
        }
    }
    Ok(())
}

fn check_opening(ds: &Dataset, f: &mut Vec<Finding>) -> PolarsResult<()> {
    let with_opening: BTreeSet<String> = {
        let c = ds.opening.column("entity")?.str()?;
        c.iter().flatten().map(String::from).collect()
    };
    for e in &ds.delivered_entities {
        if !with_opening.contains(e.as_str()) {
            f.push(
                Finding::new(
                    Rule::OpeningMissing,
                    format!("{e} has no opening balance (entities/{e}/opening.csv)"),
                    "deliver the balance sheet at the start of the fiscal year: the previous year's locked closing balances",
                )
                .in_file(format!("entities/{e}/opening.csv"))
                .entity(e),
            );
        }
    }
    // Historical-basis rows need their brought-forward presentation amount, and the
    // opening holds no income or expense (they were closed into retained earnings).
    let maps =
        ds.mappings.clone().lazy().select([col("entity"), col("local_account").alias("account"), col("group_account")]);
    let chart = crate::map_accounts::chart_frame(ds)?.lazy();
    let rows = ds
        .opening
        .clone()
        .lazy()
        .join(maps, [col("entity"), col("account")], [col("entity"), col("account")], JoinArgs::new(JoinType::Inner))
        .join(chart, [col("group_account")], [col("group_account")], JoinArgs::new(JoinType::Inner))
        .filter(
            (col("basis").eq(lit("historical")).and(col("amount_presentation").is_null()))
                .or(col("statement").neq(lit("balance_sheet"))),
        )
        .select([col("entity"), col("account"), col("group_account"), col("statement"), col("file"), col("line")])
        .collect()?;
    for i in 0..rows.height() {
        let e = EntityId::new(s(&rows, "entity", i).unwrap_or_default());
        let a = s(&rows, "account", i).unwrap_or_default();
        let ga = s(&rows, "group_account", i).unwrap_or_default();
        let x = if s(&rows, "statement", i).as_deref() != Some("balance_sheet") {
            Finding::new(
                Rule::ValueInvalid,
                format!("the opening balance holds account {a} (group {ga}), which is not a balance-sheet account"),
                "close last year's income and expenses into retained earnings before delivering the opening balance",
            )
        } else {
            Finding::new(
                Rule::OpeningHistoricalAmountMissing,
                format!(
                    "equity account {a} (group {ga}) is translated at historical rates but has no `amount_presentation`"
                ),
                "fill in the translated carrying amount brought forward from last year's close",
            )
        };
        f.push(
            x.in_file(s(&rows, "file", i).unwrap_or_default())
                .line(u(&rows, "line", i).unwrap_or(0))
                .entity(&e)
                .account(a),
        );
    }
    Ok(())
}

fn check_rates(ds: &Dataset, mapped: &Mapped, scope: Scope, f: &mut Vec<Finding>) -> PolarsResult<()> {
    let pres = ds.settings.presentation_currency;
    let have: BTreeMap<(Period, Currency), &crate::load::MonthlyRate> =
        ds.rates.iter().map(|r| ((r.period, r.currency), r)).collect();
    let ytd = ds.settings.policies.income_translation == IncomeTranslation::YearToDate;
    // Needed: every functional currency of a delivered entity, for the opening month
    // and every month through the period.
    let mut needed: BTreeMap<Currency, Vec<&EntityId>> = BTreeMap::new();
    for e in ds.entities.iter().filter(|e| ds.delivered_entities.contains(&e.id) && e.currency != pres) {
        needed.entry(e.currency).or_default().push(&e.id);
    }
    let mut months = vec![scope.fiscal_start.prev()];
    months.extend(scope.months());
    for (ccy, users) in &needed {
        for p in &months {
            let who = users.iter().map(|e| e.to_string()).collect::<Vec<_>>().join(", ");
            match have.get(&(*p, *ccy)) {
                None => f.push(
                    Finding::new(
                        Rule::RateMissing,
                        format!("no closing and average rate for {ccy} in {p} (needed by {who})"),
                        format!(
                            "add a row `{p},{ccy},<closing>,<average>,units_per_presentation` to rates/monthly.csv"
                        ),
                    )
                    .in_file("rates/monthly.csv")
                    .period(*p),
                ),
                Some(r) if ytd && r.average_ytd.is_none() && *p != scope.fiscal_start.prev() => f.push(
                    Finding::new(
                        Rule::RateMissing,
                        format!("{ccy} {p} has no `average_ytd`, which the year_to_date income policy needs"),
                        "fill in average_ytd, or set policies.income_translation = \"periodic\"",
                    )
                    .at(&r.source)
                    .period(*p),
                ),
                _ => {}
            }
        }
    }
    // Movements on historical-basis accounts need the rate of their date.
    let hist: BTreeSet<(&str, &str, Period)> =
        ds.historical_rates.iter().map(|h| (h.entity.as_str(), h.account.as_str(), h.period)).collect();
    let currencies: BTreeMap<&str, Currency> = ds.entities.iter().map(|e| (e.id.as_str(), e.currency)).collect();
    let movements = mapped.movements(scope.fiscal_start, scope.period)?.lazy();
    let zero = crate::money::decimal_lit(Decimal::ZERO, crate::money::AMOUNT_SCALE);
    let chart = crate::map_accounts::chart_frame(ds)?.lazy().select([col("group_account"), col("basis")]);
    let moved = movements
        .filter(col("period_index").gt_eq(lit(period_index(scope.fiscal_start))))
        .join(chart, [col("group_account")], [col("group_account")], JoinArgs::new(JoinType::Inner))
        .filter(col("basis").eq(lit("historical")))
        .group_by([col("entity"), col("group_account"), col("period_index")])
        .agg([col("amount").sum()])
        .filter(col("amount").neq(zero))
        .sort(["entity", "group_account", "period_index"], SortMultipleOptions::default())
        .collect()?;
    let amounts = column_decimals(moved.column("amount")?)?;
    for (i, amount) in amounts.iter().enumerate() {
        let e = s(&moved, "entity", i).unwrap_or_default();
        let a = s(&moved, "group_account", i).unwrap_or_default();
        let p = period_of_index(idx(&moved, "period_index", i).unwrap_or(0));
        if currencies.get(e.as_str()) == Some(&pres) || hist.contains(&(e.as_str(), a.as_str(), p)) {
            continue;
        }
        let hyper = ds.entity(&EntityId::new(&e)).and_then(|x| x.hyperinflationary_from).is_some_and(|h| h <= p);
        if hyper {
            continue;
        }
        f.push(
            Finding::new(
                Rule::RateMissing,
                format!(
                    "{e} moves equity account {a} by {} in {p}, which needs the rate of the transaction's date (basis historical)",
                    format_amount(amount.unwrap_or_default(), 3)
                ),
                format!("add `{e},{a},{p},<rate>,units_per_presentation,<note>` to rates/historical.csv"),
            )
            .in_file("rates/historical.csv")
            .entity(&EntityId::new(&e))
            .account(a)
            .period(p),
        );
    }
    Ok(())
}

/// Document detail names a group entity other than its own and a kind of the chart.
/// Findings here are warnings: the row only explains differences and is not used.
fn check_documents(ds: &Dataset, f: &mut Vec<Finding>) -> PolarsResult<()> {
    let d = &ds.documents;
    if d.height() == 0 {
        return Ok(());
    }
    let known = DataFrame::new(
        ds.entities.len(),
        vec![Column::new("counterparty".into(), ds.entities.iter().map(|e| e.id.to_string()).collect::<Vec<_>>())],
    )?;
    let kinds: BTreeSet<&str> = ds.accounts.iter().filter_map(|a| a.ic_kind.as_deref()).collect();
    let kinds =
        DataFrame::new(kinds.len(), vec![Column::new("ic_kind".into(), kinds.into_iter().collect::<Vec<_>>())])?;
    let unknown_cp = d
        .clone()
        .lazy()
        .join(known.lazy(), [col("counterparty")], [col("counterparty")], JoinArgs::new(JoinType::Anti))
        .with_column(lit("counterparty").alias("what"));
    let own = d.clone().lazy().filter(col("counterparty").eq(col("entity"))).with_column(lit("self").alias("what"));
    let unknown_kind = d
        .clone()
        .lazy()
        .join(kinds.lazy(), [col("ic_kind")], [col("ic_kind")], JoinArgs::new(JoinType::Anti))
        .with_column(lit("kind").alias("what"));
    let bad = concat([unknown_cp, own, unknown_kind], UnionArgs::default())?
        .sort(["file", "line", "what"], SortMultipleOptions::default())
        .collect()?;
    let unused = "the row is not used to explain intercompany differences";
    for i in 0..bad.height() {
        let e = EntityId::new(s(&bad, "entity", i).unwrap_or_default());
        let cp = s(&bad, "counterparty", i).unwrap_or_default();
        let kind = s(&bad, "ic_kind", i).unwrap_or_default();
        let x = match s(&bad, "what", i).as_deref() {
            Some("counterparty") => Finding::new(
                Rule::CounterpartyUnknown,
                format!("document counterparty {cp} is not an entity of entities.csv; {unused}"),
                "correct the counterparty id",
            ),
            Some("self") => Finding::new(
                Rule::CounterpartySelf,
                format!("the document's counterparty is {e} itself; {unused}"),
                "name the other group entity",
            ),
            _ => Finding::new(
                Rule::ValueInvalid,
                format!("document kind {kind:?} is not an ic_kind of accounts.csv; {unused}"),
                "use one of the chart's ic_kind words",
            ),
        };
        f.push(
            x.in_file(s(&bad, "file", i).unwrap_or_default())
                .line(u(&bad, "line", i).unwrap_or(0))
                .entity(&e)
                .severity(Severity::Warning),
        );
    }
    Ok(())
}

/// The rows of `entities/net_investment.csv` (IAS 21.32): known, distinct entities; the
/// item a balance-sheet account; its exchange difference a profit or loss account that
/// is not itself eliminated as intercompany (IAS 21.45: the difference survives
/// elimination); each item designated once.
fn check_net_investments(ds: &Dataset, f: &mut Vec<Finding>) {
    let mut seen: BTreeMap<(&EntityId, &EntityId, &GroupAccount), u64> = BTreeMap::new();
    for n in &ds.net_investments {
        let at =
            |rule: Rule, msg: String, action: &str| Finding::new(rule, msg, action).at(&n.source).entity(&n.entity);
        for e in [&n.entity, &n.counterparty] {
            if ds.entity(e).is_none() {
                f.push(at(
                    Rule::EntityUnknown,
                    format!("net investment item names {e}, which is not in entities.csv"),
                    "correct the entity id, or add the entity to entities/entities.csv",
                ));
            }
        }
        if n.entity == n.counterparty {
            f.push(at(
                Rule::CounterpartySelf,
                format!("the net investment item of {} names {} as its own counterparty", n.entity, n.entity),
                "name the foreign operation on the other side of the loan",
            ));
        }
        match ds.account(&n.account) {
            None => f.push(
                at(
                    Rule::AccountUnknown,
                    format!("net investment item account {} is not in accounts.csv", n.account),
                    "name the group account of the loan",
                )
                .account(n.account.as_str()),
            ),
            Some(a)
                if a.statement != Statement::BalanceSheet
                    || !matches!(a.class, AccountClass::Asset | AccountClass::Liability) =>
            {
                f.push(
                    at(
                        Rule::AccountInvalid,
                        format!(
                            "net investment item account {} is not an asset or liability of the balance sheet",
                            n.account
                        ),
                        "name the monetary item itself: the loan receivable or payable (IAS 21.15)",
                    )
                    .account(n.account.as_str()),
                )
            }
            _ => {}
        }
        match ds.account(&n.fx_account) {
            None => f.push(
                at(
                    Rule::AccountUnknown,
                    format!("fx_account {} is not in accounts.csv", n.fx_account),
                    "name the profit or loss group account of the item's exchange difference",
                )
                .account(n.fx_account.as_str()),
            ),
            Some(a) if a.statement != Statement::ProfitOrLoss || a.ic_kind.is_some() => f.push(
                at(
                    Rule::AccountInvalid,
                    format!(
                        "fx_account {} must be a profit or loss account without an intercompany kind, to hold the item's exchange difference",
                        n.fx_account
                    ),
                    "name the account where the entity books the exchange difference on the loan, e.g. exchange differences",
                )
                .account(n.fx_account.as_str()),
            ),
            _ => {}
        }
        if let Some(first) = seen.insert((&n.entity, &n.counterparty, &n.account), n.source.line.unwrap_or(0)) {
            f.push(at(
                Rule::RowDuplicated,
                format!(
                    "{} -> {} on {} is designated twice (first on line {first})",
                    n.entity, n.counterparty, n.account
                ),
                "keep one row per item",
            ));
        }
    }
}

/// The `reserve` of each OCI account of the chart (IAS 1.106(d), 1.108): an equity
/// account of the balance sheet other than the NCI (the close attributes the NCI's
/// share itself), named only on OCI accounts.
fn check_reserves(ds: &Dataset, f: &mut Vec<Finding>) {
    let nci = &ds.settings.accounts.non_controlling_interest;
    for a in &ds.accounts {
        let Some(r) = &a.reserve else { continue };
        let at = |rule: Rule, msg: String, action: &str| {
            Finding::new(rule, msg, action).at(&a.source).account(a.account.as_str())
        };
        if a.statement != Statement::Oci {
            f.push(at(
                Rule::AccountInvalid,
                format!(
                    "account {} names reserve {r} but is not an OCI account: only OCI accumulates in a reserve",
                    a.account
                ),
                "leave `reserve` empty on accounts of the balance sheet and of profit or loss",
            ));
            continue;
        }
        match ds.account(r) {
            None => f.push(at(
                Rule::AccountUnknown,
                format!("account {} accumulates into reserve {r}, which is not in accounts.csv", a.account),
                "name an equity account of the group chart, e.g. the revaluation surplus",
            )),
            Some(d) if d.statement != Statement::BalanceSheet || d.class != AccountClass::Equity || r == nci => {
                f.push(at(
                    Rule::AccountInvalid,
                    format!(
                        "account {} accumulates into reserve {r}, which is not an equity account of the balance sheet other than the NCI",
                        a.account
                    ),
                    "name a reserve of equity (balance_sheet, equity); the NCI's share is attributed by the close",
                ))
            }
            _ => {}
        }
    }
}

/// The top-side entries of `entities/group_adjustments.csv`, by the close's own checks
/// (`close::topside::check`) on the group's structure at the period end.
fn check_group_adjustments(
    ds: &Dataset,
    structure: &crate::structure::GroupStructure,
    scope: Scope,
    f: &mut Vec<Finding>,
) {
    use crate::close::topside::{Frame, findings};
    let fr = Frame {
        chart: ds.accounts.iter().map(|a| (&a.account, a)).collect(),
        roles: &ds.settings.accounts,
        known: ds.entities.iter().map(|e| &e.id).collect(),
        structure,
        fiscal_start: scope.fiscal_start,
        period: scope.period,
        minor: ds.settings.presentation_currency.minor_unit(),
    };
    f.extend(findings(&ds.group_adjustments, &fr));
}

/// The rows of `entities/cash_flow_lines.csv` (IAS 7), when the file exists: accounts of
/// the chart, once each, each line id with one section and label, `against` only on
/// profit or loss and naming a line of the file; and every account that moves in the
/// fiscal year, in the deliveries or through the close's role accounts, has a line.
fn check_cash_flow_lines(ds: &Dataset, mapped: &Mapped, scope: Scope, f: &mut Vec<Finding>) -> PolarsResult<()> {
    use crate::cash_flows::Section;
    let Some(lines) = &ds.cash_flow_lines else { return Ok(()) };
    let file = "entities/cash_flow_lines.csv";
    let mut seen: BTreeMap<&GroupAccount, &Source> = BTreeMap::new();
    let mut first_of: BTreeMap<&str, &crate::cash_flows::LineDef> = BTreeMap::new();
    let ids: BTreeSet<&str> = lines.iter().map(|l| l.line.as_str()).collect();
    for l in lines {
        let at = |rule: Rule, msg: String, action: &str| {
            Finding::new(rule, msg, action).at(&l.source).account(l.account.as_str())
        };
        let def = ds.account(&l.account);
        if def.is_none() {
            f.push(at(
                Rule::AccountUnknown,
                format!("cash flow line {} names account {}, which is not in accounts.csv", l.line, l.account),
                "correct the account, or remove the row",
            ));
        }
        if let Some(earlier) = seen.insert(&l.account, &l.source) {
            f.push(at(
                Rule::RowDuplicated,
                format!("account {} has a cash flow line already at line {}", l.account, earlier.line.unwrap_or(0)),
                "keep one row per account",
            ));
        }
        match first_of.get(l.line.as_str()) {
            Some(x) if x.section != l.section || x.label != l.label => f.push(at(
                Rule::ValueInvalid,
                format!(
                    "line {} is {} {:?} at line {} but {} {:?} here",
                    l.line,
                    x.section.as_str(),
                    x.label,
                    x.source.line.unwrap_or(0),
                    l.section.as_str(),
                    l.label
                ),
                "give every row of one line the same section and label",
            )),
            Some(_) => {}
            None => {
                first_of.insert(&l.line, l);
            }
        }
        let pl = def.is_some_and(|d| d.statement == Statement::ProfitOrLoss);
        if let Some(against) = &l.against {
            if !pl {
                f.push(at(
                    Rule::ValueInvalid,
                    format!("`against` is {against} on {}, which is not a profit or loss account", l.account),
                    "use `against` only for a non-cash item of profit or loss (depreciation, say)",
                ));
            } else if !ids.contains(against.as_str()) {
                f.push(at(
                    Rule::ValueInvalid,
                    format!("`against` names line {against}, which no row of the file defines"),
                    "name the line of the balance-sheet account that holds the item's other side",
                ));
            }
        }
        if l.section == Section::Cash
            && def.is_some_and(|d| d.statement != Statement::BalanceSheet || d.class != AccountClass::Asset)
        {
            f.push(at(
                Rule::AccountInvalid,
                format!("account {} is in section cash but is not a balance-sheet asset", l.account),
                "put only cash and cash equivalents in section cash",
            ));
        }
    }
    if !lines.iter().any(|l| l.section == Section::Cash) {
        f.push(
            Finding::new(
                Rule::CashFlowLineMissing,
                "no account is in section cash, so there is no change in cash to explain",
                "put the cash and cash equivalents accounts in section cash",
            )
            .in_file(file),
        );
    }
    check_cash_flow_coverage(ds, mapped, scope, &seen, f)
}

/// Every account that moves in the deliveries of the fiscal year, and every role account
/// the close posts to, has a row of `cash_flow_lines.csv` (`seen`).
fn check_cash_flow_coverage(
    ds: &Dataset,
    mapped: &Mapped,
    scope: Scope,
    seen: &BTreeMap<&GroupAccount, &Source>,
    f: &mut Vec<Finding>,
) -> PolarsResult<()> {
    let file = "entities/cash_flow_lines.csv";
    // Accounts that move: in the deliveries of the fiscal year, and the role accounts
    // the close posts to.
    let mov = mapped
        .movements(scope.fiscal_start, scope.period)?
        .lazy()
        .group_by([col("group_account")])
        .agg([col("amount").abs().sum().alias("moved")])
        .collect()?;
    let acct = crate::money::column_strings(&mov, "group_account")?;
    let moved = column_decimals(mov.column("moved")?)?;
    let mut moving: BTreeMap<GroupAccount, Decimal> = BTreeMap::new();
    for (a, m) in acct.into_iter().zip(moved) {
        if let (Some(a), Some(m)) = (a, m)
            && !m.is_zero()
        {
            moving.insert(GroupAccount::new(a), m);
        }
    }
    let r = &ds.settings.accounts;
    let roles = [
        Some(&r.retained_earnings),
        Some(&r.translation_reserve),
        Some(&r.translation_difference),
        Some(&r.non_controlling_interest),
        Some(&r.goodwill),
        Some(&r.equity_investments),
        Some(&r.equity_result),
        Some(&r.intercompany_difference),
        r.inventory.as_ref(),
        r.cost_of_sales.as_ref(),
        r.goodwill_impairment.as_ref(),
        r.bargain_purchase_gain.as_ref(),
    ];
    let posted: BTreeSet<&GroupAccount> = roles.into_iter().flatten().collect();
    let mut missing: BTreeSet<&GroupAccount> = moving.keys().collect();
    missing.extend(posted.iter().copied().filter(|a| ds.account(a).is_some()));
    // The accounts of the top-side entries the close counts move too.
    let topside: BTreeSet<&GroupAccount> = ds
        .group_adjustments
        .lines
        .iter()
        .filter(|r| r.period >= scope.fiscal_start && r.period <= scope.period && ds.account(&r.account).is_some())
        .map(|r| &r.account)
        .collect();
    missing.extend(topside.iter().copied());
    for a in missing.into_iter().filter(|a| !seen.contains_key(a)) {
        let how = match moving.get(a) {
            Some(m) => format!(
                "moves in the deliveries of {}..{} (absolute movements {})",
                scope.fiscal_start,
                scope.period,
                format_amount(*m, 3)
            ),
            None if !posted.contains(a) => "is booked by a top-side entry of group_adjustments.csv".to_string(),
            None => "is posted by the close (a role account of group.toml)".to_string(),
        };
        f.push(
            Finding::new(
                Rule::CashFlowLineMissing,
                format!("account {a} {how} but has no line in the statement of cash flows"),
                "add a row for it to entities/cash_flow_lines.csv: its section and line (docs/formats.md)",
            )
            .in_file(file)
            .account(a.as_str()),
        );
    }
    Ok(())
}

/// Plausibility: figures that can be right but usually are not, as warnings the close
/// shows (thresholds in `[plausibility]` of group.toml). A closing rate that jumps from
/// the month before (a rate of the wrong quote or a shifted decimal point); a month
/// whose income has the opposite sign of the entity's earlier months (an export with
/// debit and credit swapped); a counterparty on an account that is not intercompany
/// (the pair is then never matched or eliminated).
fn check_plausibility(ds: &Dataset, mapped: &Mapped, scope: Scope, f: &mut Vec<Finding>) -> PolarsResult<()> {
    check_rate_moves(ds, scope, f);
    check_income_signs(ds, mapped, scope, f)?;
    check_plain_counterparties(ds, mapped, f)
}

/// Warns of a closing rate that moves more than `plausibility.rate_move` from the month before.
fn check_rate_moves(ds: &Dataset, scope: Scope, f: &mut Vec<Finding>) {
    let limits = &ds.settings.plausibility;
    // Rates, as presentation-currency units per unit so that quotes compare.
    let mut by_month: BTreeMap<(Currency, Period), &crate::load::MonthlyRate> = BTreeMap::new();
    for r in &ds.rates {
        by_month.insert((r.currency, r.period), r);
    }
    for ((ccy, p), r) in &by_month {
        if *p <= scope.fiscal_start.prev() || *p > scope.period {
            continue;
        }
        let Some(before) = by_month.get(&(*ccy, p.prev())) else { continue };
        let per_unit = |x: &crate::load::Rate| match x.quote {
            crate::load::Quote::PresentationPerUnit => Some(x.value),
            crate::load::Quote::UnitsPerPresentation => Decimal::ONE.checked_div(x.value),
        };
        let (Some(now), Some(then)) = (per_unit(&r.closing), per_unit(&before.closing)) else { continue };
        let Some(ratio) = now.checked_div(then) else { continue };
        let moved = (ratio - Decimal::ONE).abs();
        if moved > limits.rate_move {
            f.push(
                Finding::new(
                    Rule::RateMoveImplausible,
                    format!(
                        "the {ccy} closing rate moves from {} in {} to {} in {p}: {}% against a threshold of {}%",
                        before.closing.value,
                        p.prev(),
                        r.closing.value,
                        (moved * Decimal::from(100)).round_dp(1),
                        (limits.rate_move * Decimal::from(100)).normalize()
                    ),
                    "check the rate and its quote at the source (a rate of the other quote, or a shifted decimal point); raise plausibility.rate_move in group.toml if the move is real",
                )
                .at(&r.source)
                .period(*p)
                .severity(Severity::Warning),
            );
        }
    }
}

/// Warns of an entity's monthly income whose sign flips against its earlier months of the year.
fn check_income_signs(ds: &Dataset, mapped: &Mapped, scope: Scope, f: &mut Vec<Finding>) -> PolarsResult<()> {
    let limits = &ds.settings.plausibility;
    // Income by entity and month: the sign of the months before.
    if limits.sign_months > 0 {
        let chart = crate::map_accounts::chart_frame(ds)?.lazy().select([col("group_account"), col("class")]);
        let income = mapped
            .movements(scope.fiscal_start, scope.period)?
            .lazy()
            .filter(col("period_index").gt_eq(lit(period_index(scope.fiscal_start))))
            .join(chart, [col("group_account")], [col("group_account")], JoinArgs::new(JoinType::Inner))
            .filter(col("class").eq(lit("income")))
            .group_by([col("entity"), col("period_index")])
            .agg([col("amount").sum()])
            .sort(["entity", "period_index"], SortMultipleOptions::default())
            .collect()?;
        let amounts = column_decimals(income.column("amount")?)?;
        let mut seen: BTreeMap<String, Vec<bool>> = BTreeMap::new();
        for (i, amount) in amounts.iter().enumerate() {
            let Some(a) = amount.filter(|a| !a.is_zero()) else { continue };
            let e = s(&income, "entity", i).unwrap_or_default();
            let p = period_of_index(idx(&income, "period_index", i).unwrap_or(0));
            let credit = a.is_sign_negative();
            let before = seen.entry(e.clone()).or_default();
            let n = limits.sign_months as usize;
            if before.len() >= n && before.iter().all(|c| *c != credit) {
                let (was, is) = if credit { ("debit", "credit") } else { ("credit", "debit") };
                f.push(
                    Finding::new(
                        Rule::SignsFlipped,
                        format!(
                            "{e}'s income of {p} is a {is} of {} while its {} earlier month(s) of the year were {was}s: the delivery may have debit and credit swapped",
                            format_amount(a.abs(), 3),
                            before.len()
                        ),
                        format!(
                            "check entities/{e}'s trial balance of {p}: debit is positive, credit negative; set plausibility.sign_months = 0 in group.toml to turn the check off"
                        ),
                    )
                    .in_file(format!("entities/{e}"))
                    .entity(&EntityId::new(&e))
                    .period(p)
                    .severity(Severity::Warning),
                );
                // The month is not counted, so that a flipped month does not hide the next.
                continue;
            }
            before.push(credit);
        }
    }
    Ok(())
}

/// Warns of a counterparty named on an account that is neither intercompany nor named by design.
fn check_plain_counterparties(ds: &Dataset, mapped: &Mapped, f: &mut Vec<Finding>) -> PolarsResult<()> {
    // A counterparty named on an account that is not intercompany, outside the exchange
    // difference accounts of net investment items and the investments in associates
    // (which name it by design: the investee).
    let fx: BTreeSet<(String, String)> =
        ds.net_investments.iter().map(|n| (n.entity.to_string(), n.fx_account.to_string())).collect();
    let investments = ds.settings.accounts.equity_investments.to_string();
    let plain = mapped
        .lines
        .clone()
        .lazy()
        .filter(col("counterparty").is_not_null().and(col("ic_kind").is_null()))
        .group_by([col("entity"), col("account"), col("group_account")])
        .agg([col("file").first(), col("line").first(), col("line").count().alias("rows"), col("counterparty").first()])
        .sort(["entity", "account"], SortMultipleOptions::default())
        .collect()?;
    for i in 0..plain.height() {
        let e = s(&plain, "entity", i).unwrap_or_default();
        let ga = s(&plain, "group_account", i).unwrap_or_default();
        if fx.contains(&(e.clone(), ga.clone())) || ga == investments {
            continue;
        }
        let a = s(&plain, "account", i).unwrap_or_default();
        let cp = s(&plain, "counterparty", i).unwrap_or_default();
        let rows = plain.column("rows")?.u32()?.get(i).unwrap_or(0);
        f.push(
            Finding::new(
                Rule::CounterpartyOnPlainAccount,
                format!(
                    "local account {a} (group {ga}) names counterparty {cp} on {rows} row(s), but {ga} has no ic_kind: the amount is neither matched nor eliminated"
                ),
                format!(
                    "map {a} to an intercompany account of the chart if it is a balance with {cp}; otherwise clear the counterparty"
                ),
            )
            .in_file(s(&plain, "file", i).unwrap_or_default())
            .line(u(&plain, "line", i).unwrap_or(0))
            .entity(&EntityId::new(&e))
            .account(a)
            .severity(Severity::Warning),
        );
    }
    Ok(())
}

//! Several fiscal years in one data folder: which rows belong to the year closed, each
//! entity's opening of a year carried from its close of the year before, and the close
//! of the prior year that the statements show as their comparative (IAS 1.38).
//!
//! A data folder may hold the trial balances of several fiscal years side by side; the
//! year closed is the one `--period` falls in. `opening.csv` is an entity's opening of
//! the first year it delivers. For a later year the opening is its prior-year closing,
//! derived here rather than typed again: every balance-sheet balance carried, profit or
//! loss and OCI of the year closed into retained earnings (the locked closing balance of
//! the year, common practice), and the translated carrying amount of every
//! historical-basis account carried from the prior year's translation (share capital as
//! it was, retained earnings plus the translated result of the year), so that the
//! translation reserve brought forward is the prior year's reserve to the cent (IAS
//! 21.39c, 21.41: the balancing figure of the translated opening). A delivered
//! `opening-<YYYY-MM>.csv` is checked against the derivation: where they differ it is
//! the finding `OpeningDiffersFromPriorClose`, with the arithmetic.
//!
//! Goodwill and fair-value adjustments are recomputed by the close from
//! `acquisitions.csv` at each period end's closing rate (IAS 21.47), so they need no
//! carried input. `years` knows nothing about files beyond the names the rows carry.

use std::collections::{BTreeMap, BTreeSet};

use polars::prelude::*;
use rust_decimal::Decimal;

use crate::close::Close;
use crate::close::view::{Amounts, Chart, balance_sheet_amounts};
use crate::findings::{Finding, Rule, Severity};
use crate::load::Dataset;
use crate::map_accounts::{map_accounts, period_index, period_index_expr};
use crate::model::*;
use crate::money::{amount_dtype, column_decimals, column_strings, format_amount, plain};
use crate::proof::Check;

/// The fiscal years whose trial balances the folder holds, by their first month.
pub fn fiscal_years(ds: &Dataset) -> Vec<Period> {
    let start = ds.settings.fiscal_year_start;
    ds.periods().iter().map(|p| p.fiscal_year_start(start)).collect::<BTreeSet<_>>().into_iter().collect()
}

/// Whether the folder holds trial balances of the fiscal year before the one starting
/// `start`.
pub fn holds_prior_year(ds: &Dataset, start: Period) -> bool {
    fiscal_years(ds).contains(&start.plus_months(-12))
}

/// The data of the fiscal year starting `start`: the trial balances of its months, and
/// each entity's opening of the year. The opening is derived from the entity's close of
/// the year before when the folder holds trial balances of that year for it; else it is
/// the one delivered for the year (`opening-<YYYY-MM>.csv`, or `opening.csv` for the
/// entity's first year). A folder of one year is returned as it is.
pub fn year_dataset(full: &Dataset, start: Period, findings: &mut Vec<Finding>) -> PolarsResult<Dataset> {
    let years = fiscal_years(full);
    let dated_openings = full.opening.column("period")?.null_count() < full.opening.height();
    if years.len() <= 1 && !dated_openings {
        return Ok(full.clone());
    }
    let end = start.plus_months(11);
    let prior = start.plus_months(-12);
    let first_year = first_years(full)?;
    let with_index = |df: &DataFrame| df.clone().lazy().with_column(period_index_expr("period").alias("pi"));
    let in_months =
        |a: Period, b: Period| col("pi").gt_eq(lit(period_index(a))).and(col("pi").lt_eq(lit(period_index(b))));
    let mut ds = full.clone();
    // A holding or an acquisition of a later year the folder holds is that year's: it
    // does not exist yet at this year's end (dated beyond every year held, it stays and
    // validation names it).
    let fys = full.settings.fiscal_year_start;
    let later = |d: chrono::NaiveDate| {
        let y = Period::of_date(d).fiscal_year_start(fys);
        y > start && years.contains(&y)
    };
    ds.holdings.retain(|h| !later(h.valid_from));
    ds.acquisitions.retain(|a| !later(a.date));
    ds.ownership_changes.retain(|c| !later(c.date));
    ds.impairments.retain(|i| !later(i.period.first_day()));
    // The fair value adjustments of an acquisition of a later year go with it.
    let acquired_later: BTreeSet<&EntityId> = full
        .acquisitions
        .iter()
        .filter(|a| later(a.date) && !ds.acquisitions.iter().any(|b| b.owned == a.owned))
        .map(|a| &a.owned)
        .collect();
    ds.uplifts.retain(|u| !acquired_later.contains(&u.owned));
    ds.reserves_at_acquisition.retain(|r| !acquired_later.contains(&r.owned));
    // A top-side entry belongs to the year of its month (its first row's, so that an
    // entry whose rows disagree stays whole for validation to name): entries of another
    // year the folder holds are that year's.
    let mut entry_year: BTreeMap<String, Period> = BTreeMap::new();
    for r in &full.group_adjustments.lines {
        entry_year.entry(r.entry.clone()).or_insert_with(|| r.period.fiscal_year_start(fys));
    }
    // Those of an earlier year the folder holds are carried: that year's close posted
    // them, and what they left in the balance sheet stays (topside.rs).
    let year_of = |r: &crate::model::GroupAdjustment| entry_year.get(&r.entry).copied().unwrap_or(start);
    ds.group_adjustments.carried = full
        .group_adjustments
        .lines
        .iter()
        .filter(|r| {
            let y = year_of(r);
            y < start && years.contains(&y) && !full.group_adjustments.incomplete.contains(&r.entry)
        })
        .cloned()
        .collect();
    ds.group_adjustments.lines.retain(|r| {
        let y = year_of(r);
        y == start || !years.contains(&y)
    });
    // An entity whose first year is later has not delivered for this one.
    ds.delivered_entities.retain(|e| first_year.get(e).is_none_or(|y| *y <= start));
    // The year's rows, and the other rows of the files that deliver them: a month of
    // another year inside a file of this year is a slip that validation names
    // (`PeriodOutsideYear`), not a month of that year.
    let files: Vec<String> =
        column_strings(&with_index(&full.ledger).filter(in_months(start, end)).collect()?, "file")?
            .into_iter()
            .flatten()
            .collect::<BTreeSet<_>>()
            .into_iter()
            .collect();
    let its_files = col("file").is_in(lit(Series::new("files".into(), files)).implode(false), false);
    ds.ledger =
        with_index(&full.ledger).filter(in_months(start, end).or(its_files)).drop(by_name(&["pi"])).collect()?;
    let delivered_prior: BTreeSet<EntityId> =
        entities_of(&with_index(&full.ledger).filter(in_months(prior, start.prev())).collect()?)?;
    let derived = if delivered_prior.is_empty() {
        None
    } else {
        let prior_ds = year_dataset(full, prior, &mut Vec::new())?;
        let mapped = map_accounts(&prior_ds, prior)?;
        findings.extend(prior_year_blocked(&prior_ds, &mapped, prior, start, &delivered_prior)?);
        let t = crate::translate::translate(&prior_ds, &mapped, prior, start.prev())?;
        ds.brought_forward = brought_forward(&prior_ds, &t, start.prev())?;
        Some(derive_opening(&prior_ds, &t, prior, &delivered_prior, findings)?)
    };
    let derived_entities: BTreeSet<EntityId> = derived.as_ref().map(|d| d.entities.clone()).unwrap_or_default();
    // The delivered opening of each entity for this year: its dated file, else
    // `opening.csv` where this is the entity's first year.
    let this_year = lit(start.to_string());
    let firsts: Vec<String> = full
        .entities
        .iter()
        .filter(|e| first_year.get(&e.id).is_none_or(|y| *y == start))
        .map(|e| e.id.to_string())
        .collect();
    let first_here = col("entity").is_in(entity_list(firsts), false);
    let delivered = full
        .opening
        .clone()
        .lazy()
        .filter(col("period").eq(this_year).or(col("period").is_null().and(first_here)))
        .collect()?;
    let dated = entities_of(&delivered.clone().lazy().filter(col("period").is_not_null()).collect()?)?;
    // An undated opening.csv gives way to the year's dated one; a carried opening to both.
    let keep_delivered = delivered.clone().lazy().filter(
        col("entity").is_in(entity_list(derived_entities.iter().map(|e| e.to_string())), false).not().and(
            col("period")
                .is_not_null()
                .or(col("entity").is_in(entity_list(dated.iter().map(|e| e.to_string())), false).not()),
        ),
    );
    let mut parts = vec![keep_delivered];
    if let Some(d) = &derived {
        findings.extend(compare_delivered(full, d, &delivered, start)?);
        parts.push(d.rows.clone().lazy());
    }
    ds.opening =
        concat(parts, UnionArgs::default())?.with_column(lit(NULL).cast(DataType::String).alias("period")).collect()?;
    Ok(ds)
}

/// A list literal of entity ids, for `is_in`.
fn entity_list(ids: impl IntoIterator<Item = String>) -> Expr {
    lit(Series::new("entities".into(), ids.into_iter().collect::<Vec<_>>())).implode(false)
}

/// A finding when the prior year (a one-year dataset starting `prior`) has blocking
/// findings of its own: its close, and so the opening carried from it, cannot be relied
/// on (a rate missing, say, leaves the translated result short).
fn prior_year_blocked(
    prior_ds: &Dataset,
    mapped: &crate::map_accounts::Mapped,
    prior: Period,
    start: Period,
    carried: &BTreeSet<EntityId>,
) -> PolarsResult<Option<Finding>> {
    let mut found = crate::findings::Findings::default();
    let scope = crate::validate::Scope::new(start.prev(), prior_ds.settings.fiscal_year_start);
    crate::validate::validate(prior_ds, mapped, scope, &mut found)?;
    // Only what touches the carried entities (or no entity in particular) counts: an
    // entity that did not deliver the prior year has nothing carried from it.
    let blocking = found
        .items()
        .iter()
        .filter(|f| f.severity >= Severity::Blocking && f.entity.as_ref().is_none_or(|e| carried.contains(e)))
        .count();
    Ok((blocking > 0).then(|| {
        Finding::new(
            Rule::OpeningNotDerivable,
            format!(
                "the fiscal year starting {prior} has {blocking} blocking finding(s) of its own, so the openings of {start} carried from its close cannot be relied on"
            ),
            format!("run `tessera check --period {}` and fix them", start.prev()),
        )
        .period(start)
        .severity(Severity::Blocking)
    }))
}

fn by_name(names: &[&str]) -> Selector {
    Selector::ByName { names: names.iter().map(|n| PlSmallStr::from(*n)).collect(), strict: true }
}

/// The entities with rows in `df`.
fn entities_of(df: &DataFrame) -> PolarsResult<BTreeSet<EntityId>> {
    Ok(column_strings(df, "entity")?.into_iter().flatten().map(|e| EntityId::new(&e)).collect())
}

/// Each entity's first fiscal year with trial balances.
fn first_years(ds: &Dataset) -> PolarsResult<BTreeMap<EntityId, Period>> {
    let df = ds.ledger.clone().lazy().group_by([col("entity")]).agg([col("period").min()]).collect()?;
    let e = column_strings(&df, "entity")?;
    let p = column_strings(&df, "period")?;
    Ok(e.into_iter()
        .zip(p)
        .filter_map(|(e, p)| {
            let p: Period = p?.parse().ok()?;
            Some((EntityId::new(&e?), p.fiscal_year_start(ds.settings.fiscal_year_start)))
        })
        .collect())
}

/// An entity's opening derived from its prior-year close, and how each figure is made.
pub struct Derived {
    /// The opening rows (the columns of `Dataset::opening`).
    pub rows: DataFrame,
    /// The entities whose opening is derived.
    pub entities: BTreeSet<EntityId>,
    /// entity, local account, counterparty -> closing balance, of which profit or loss
    /// and OCI closed into it (retained earnings and the named reserves only).
    pub local: BTreeMap<(EntityId, String, Option<String>), (Decimal, Decimal)>,
    /// entity, group account, counterparty -> translated carrying amount, of which the
    /// translated result of the year (retained earnings and the named reserves only):
    /// historical basis only.
    pub presentation: BTreeMap<(EntityId, GroupAccount, Option<String>), (Decimal, Decimal)>,
    /// The year the opening is derived from (its first month).
    pub from_year: Period,
}

/// One closing balance of the prior year, by local account, counterparty and
/// transaction currency.
struct Closing {
    entity: EntityId,
    account: String,
    counterparty: Option<String>,
    txn_currency: Option<String>,
    group_account: GroupAccount,
    flow: bool,
    amount: Decimal,
    txn_amount: Decimal,
}

/// The local closing balances of the year of `prior` (already a one-year dataset): per
/// entity, the rows of its last month delivered as balances (the opening when none)
/// plus the movements delivered after it.
fn local_closing(prior: &Dataset, start: Period, entities: &BTreeSet<EntityId>) -> PolarsResult<Vec<Closing>> {
    let mapped = map_accounts(prior, start)?;
    let ids = Series::new("e".into(), entities.iter().map(|e| e.to_string()).collect::<Vec<_>>());
    let p0 = period_index(start.prev());
    let lines = mapped.lines.clone().lazy().filter(col("entity").is_in(lit(ids).implode(false), false));
    let last_balances =
        lines
            .clone()
            .filter(col("kind").eq(lit("balances")))
            .group_by([col("entity")])
            .agg([col("period_index").max().alias("last_balances")]);
    let df = lines
        .join(last_balances, [col("entity")], [col("entity")], JoinArgs::new(JoinType::Left))
        .with_column(col("last_balances").fill_null(lit(p0)).alias("last_balances"))
        .filter(
            col("period_index")
                .eq(col("last_balances"))
                .or(col("kind").eq(lit("movements")).and(col("period_index").gt(col("last_balances")))),
        )
        .group_by([
            col("entity"),
            col("account"),
            col("counterparty"),
            col("txn_currency"),
            col("group_account"),
            col("statement"),
        ])
        .agg([col("amount").sum(), col("txn_amount").sum()])
        .sort(
            ["entity", "account", "counterparty", "txn_currency"],
            SortMultipleOptions::default().with_nulls_last(false),
        )
        .collect()?;
    let s = |c: &str| column_strings(&df, c);
    let (e, a, cp, txn, ga, st) =
        (s("entity")?, s("account")?, s("counterparty")?, s("txn_currency")?, s("group_account")?, s("statement")?);
    let amount = column_decimals(df.column("amount")?)?;
    let txn_amount = column_decimals(df.column("txn_amount")?)?;
    Ok((0..df.height())
        .filter_map(|i| {
            Some(Closing {
                entity: EntityId::new(e[i].as_deref()?),
                account: a[i].clone()?,
                counterparty: cp[i].clone(),
                txn_currency: txn[i].clone(),
                group_account: GroupAccount::new(ga[i].as_deref()?),
                flow: st[i].as_deref() != Some("balance_sheet"),
                amount: amount[i].unwrap_or_default(),
                txn_amount: txn_amount[i].unwrap_or_default(),
            })
        })
        .collect())
}

/// The translated carrying amounts at the prior year's end: per historical-basis grain
/// (entity, group account, counterparty, transaction currency), and per entity and group
/// account the translated result of the year (every average-basis account: income,
/// expense, OCI).
type Carried = (
    BTreeMap<(EntityId, GroupAccount, Option<String>, Option<String>), Decimal>,
    BTreeMap<(EntityId, GroupAccount), Decimal>,
);

fn translated_carried(t: &crate::translate::Translated, end: Period) -> PolarsResult<Carried> {
    let df = t.lines.clone().lazy().filter(col("period_index").eq(lit(period_index(end)))).collect()?;
    let s = |c: &str| column_strings(&df, c);
    let (e, ga, cp, txn, basis) =
        (s("entity")?, s("group_account")?, s("counterparty")?, s("txn_currency")?, s("basis")?);
    let v = column_decimals(df.column("balance_presentation")?)?;
    let mut grains = BTreeMap::new();
    let mut result: BTreeMap<(EntityId, GroupAccount), Decimal> = BTreeMap::new();
    for i in 0..df.height() {
        let (Some(entity), Some(account)) = (&e[i], &ga[i]) else { continue };
        let value = v[i].unwrap_or_default();
        match basis[i].as_deref() {
            Some("historical") => {
                *grains
                    .entry((EntityId::new(entity), GroupAccount::new(account), cp[i].clone(), txn[i].clone()))
                    .or_default() += value;
            }
            Some("average") => *result.entry((EntityId::new(entity), GroupAccount::new(account))).or_default() += value,
            _ => {}
        }
    }
    Ok((grains, result))
}

/// Each entity's opening of the year after `prior` (a one-year dataset starting
/// `start`): the closing balances, the result closed into retained earnings (the OCI of
/// an account whose `reserve` names an equity account other than the translation
/// reserve into that reserve: `close_targets`), the historical carrying amounts carried.
pub fn derive_opening(
    prior: &Dataset,
    t: &crate::translate::Translated,
    start: Period,
    entities: &BTreeSet<EntityId>,
    findings: &mut Vec<Finding>,
) -> PolarsResult<Derived> {
    let _span = tracing::info_span!("carry_forward", year = %start).entered();
    let roles = &prior.settings.accounts;
    let historical: BTreeSet<&GroupAccount> =
        prior.accounts.iter().filter(|a| a.basis == Basis::Historical).map(|a| &a.account).collect();
    let retained_local = retained_earnings_accounts(prior, &roles.retained_earnings)?;
    let named = named_reserve_accounts(prior)?;
    let next = start.plus_months(12);
    let closing = local_closing(prior, start, entities)?;
    let with_opening = entities_of(&prior.opening)?;
    for e in entities.iter().filter(|e| !with_opening.contains(*e)) {
        findings.push(
            Finding::new(
                Rule::OpeningMissing,
                format!(
                    "{e} has no opening balance of the fiscal year starting {start} (entities/{e}/opening.csv), so its opening of {next} cannot be carried from that year's close"
                ),
                "deliver the balance sheet at the start of the entity's first fiscal year in the folder: the previous year's locked closing balances",
            )
            .in_file(format!("entities/{e}/opening.csv"))
            .entity(e)
            .severity(Severity::Blocking),
        );
    }
    let (grains, result) = translated_carried(t, start.plus_months(11))?;
    let mut d = Derived {
        rows: DataFrame::default(),
        entities: BTreeSet::new(),
        local: BTreeMap::new(),
        presentation: BTreeMap::new(),
        from_year: start,
    };
    let mut rows: Vec<(Closing, Option<Decimal>)> = Vec::new();
    for e in entities {
        let Some(re_local) = retained_local.get(e) else {
            findings.push(
                Finding::new(
                    Rule::OpeningNotDerivable,
                    format!(
                        "{e}'s opening of {next} cannot be carried from its close of the year starting {start}: no local account of {e} maps to retained earnings ({}), where the year's profit or loss is closed",
                        roles.retained_earnings
                    ),
                    format!("map a local account of {e} to {} in entities/{e}/mapping.csv", roles.retained_earnings),
                )
                .entity(e)
                .period(next)
                .severity(Severity::Blocking),
            );
            continue;
        };
        d.entities.insert(e.clone());
        let mine: Vec<&Closing> = closing.iter().filter(|c| &c.entity == e).collect();
        let (targets, unmapped) = close_targets(&named, e, (re_local, &roles.retained_earnings), &mine, &result);
        findings.extend(unmapped.into_iter().map(|r| reserve_not_derivable(e, &r, next)));
        let mut own: Vec<Closing> = mine
            .iter()
            .filter(|c| !c.flow)
            .map(|c| Closing {
                entity: e.clone(),
                account: c.account.clone(),
                counterparty: c.counterparty.clone(),
                txn_currency: c.txn_currency.clone(),
                group_account: c.group_account.clone(),
                flow: false,
                amount: c.amount,
                txn_amount: c.txn_amount,
            })
            .collect();
        // The flows closed into a target (local, translated), on its plain grain.
        let closed_into = |c: &Closing| -> Option<(Decimal, Decimal)> {
            let (group, x, pres) = targets.get(&c.account)?;
            (c.counterparty.is_none() && c.txn_currency.is_none() && *group == c.group_account).then_some((*x, *pres))
        };
        for (local, (group, _, _)) in &targets {
            if !own.iter().any(|c| &c.account == local && c.counterparty.is_none() && c.txn_currency.is_none()) {
                own.push(Closing {
                    entity: e.clone(),
                    account: local.clone(),
                    counterparty: None,
                    txn_currency: None,
                    group_account: group.clone(),
                    flow: false,
                    amount: Decimal::ZERO,
                    txn_amount: Decimal::ZERO,
                });
            }
        }
        own.sort_by(|a, b| {
            (&a.account, &a.counterparty, &a.txn_currency).cmp(&(&b.account, &b.counterparty, &b.txn_currency))
        });
        let mut carried_grains: BTreeSet<(GroupAccount, Option<String>, Option<String>)> = BTreeSet::new();
        for mut c in own {
            let (closed, year) = closed_into(&c).unwrap_or_default();
            c.amount += closed;
            let local = d.local.entry((e.clone(), c.account.clone(), c.counterparty.clone())).or_default();
            local.0 += c.amount;
            local.1 += closed;
            // The grain's whole carrying amount goes on its first local account (in
            // account order): translation works per grain, so the split between local
            // accounts of one grain is immaterial.
            let pres = if historical.contains(&c.group_account)
                && carried_grains.insert((c.group_account.clone(), c.counterparty.clone(), c.txn_currency.clone()))
            {
                let grain = (e.clone(), c.group_account.clone(), c.counterparty.clone(), c.txn_currency.clone());
                let own = grains.get(&grain).copied().unwrap_or_default();
                let p = d.presentation.entry((e.clone(), c.group_account.clone(), c.counterparty.clone())).or_default();
                p.0 += own + year;
                p.1 += year;
                Some(own + year)
            } else if historical.contains(&c.group_account) {
                Some(Decimal::ZERO)
            } else {
                None
            };
            rows.push((c, pres));
        }
    }
    d.rows = opening_frame(&rows, start)?;
    Ok(d)
}

/// What the close of the year ending `prior_end` (on `prior`, a one-year dataset, with
/// its translation `t`) brings forward into the next: what the prior year brought
/// forward, plus the year's exchange differences on each holder's eliminated investments
/// and each holder's share of its associates' OCI, from the year-end close's journal.
fn brought_forward(
    prior: &Dataset,
    t: &crate::translate::Translated,
    prior_end: Period,
) -> PolarsResult<BroughtForward> {
    let structure = structure_at(prior, &prior.settings.parent, prior_end);
    let close = crate::close::close_at(prior, t, &structure, prior_end)?;
    let roles = &prior.settings.accounts;
    let mut out = prior.brought_forward.clone();
    // The reserve per operation is cumulative: the year end's replaces what came before.
    out.operation_reserves = close.reserves.iter().map(|r| (r.operation.clone(), r.reserve)).collect();
    // The named reserves' balances at acquisition, as the year end's investment entries
    // eliminated them (investment.rs): the part of each reserve that is not the group's.
    // A subsidiary acquired in that year also had OCI of the year before control on the
    // accounts accumulating into the reserve, moved to equity at acquisition
    // (pre_acquisition.rs, IFRS 10.B88); its books close it into the reserve, so it is
    // part of the reserve at acquisition too.
    let reserve_of: BTreeMap<&GroupAccount, &GroupAccount> = prior
        .accounts
        .iter()
        .filter_map(|a| Some((&a.account, a.reserve.as_ref().filter(|r| **r != roles.translation_reserve)?)))
        .collect();
    let named: BTreeSet<&GroupAccount> = reserve_of.values().copied().collect();
    let mut at_acquisition: BTreeMap<(EntityId, GroupAccount), Decimal> = BTreeMap::new();
    for e in &close.journal {
        for l in e.lines.iter().filter(|l| l.counterparty.is_none()) {
            let reserve = match e.rule {
                crate::close::EliminationRule::InvestmentAndGoodwill if named.contains(&l.account) => &l.account,
                crate::close::EliminationRule::PreAcquisitionResults => match reserve_of.get(&l.account) {
                    Some(r) => *r,
                    None => continue,
                },
                _ => continue,
            };
            // Both entries debit a credit balance to take it out of the group's.
            *at_acquisition.entry((l.entity.clone(), reserve.clone())).or_default() -= l.amount;
        }
    }
    // A subsidiary the year end's investment entries eliminated had, at acquisition,
    // nothing in a named reserve the entries did not take: zero, known, so that a later
    // year does not take the OCI since closed into that reserve for equity acquired.
    let subsidiaries: BTreeSet<&EntityId> = close
        .journal
        .iter()
        .filter(|e| e.rule == crate::close::EliminationRule::InvestmentAndGoodwill)
        .flat_map(|e| e.lines.iter().filter(|l| l.counterparty.is_none()).map(|l| &l.entity))
        .collect();
    for e in subsidiaries {
        for r in &named {
            at_acquisition.entry((e.clone(), (*r).clone())).or_default();
        }
    }
    out.reserves_at_acquisition.extend(at_acquisition);
    out.equity_method_share = close.equity_shares.iter().map(|(k, v)| (k.clone(), v.to_date)).collect();
    // Each holder's share of its associates' OCI of the year (IAS 28.10), the share's
    // own: an exchange difference on unrealised profit with the associate is carried by
    // its own entry.
    for (k, v) in &close.equity_shares {
        *out.equity_method_oci.entry(k.clone()).or_default() += v.oci_of_year;
    }
    out.translation_reserve_at_acquisition.extend(translation_reserves_at_acquisition(prior, &close, prior_end)?);
    // The holder's line of the investment entry reverses the year's exchange difference
    // on its investment in the counterparty (investment.rs).
    for e in close.journal.iter().filter(|e| e.rule == crate::close::EliminationRule::InvestmentAndGoodwill) {
        for l in e.lines.iter().filter(|l| l.account == roles.translation_difference && l.counterparty.is_some()) {
            *out.investment_fx.entry(l.entity.clone()).or_default() += l.amount;
        }
    }
    Ok(out)
}

/// The own translation reserve at acquisition (a credit negative) of each subsidiary
/// acquired in the year ending `prior_end`: the reserve of its opening, which the
/// investment entry eliminated (investment.rs), plus its exchange differences of the year
/// before control, which the pre-acquisition entry moved to equity at acquisition
/// (pre_acquisition.rs, IFRS 10.B88). Its books close both into the reserve the next
/// opening carries, so the next years' investment entries eliminate this amount again
/// (IFRS 3.32; IAS 21.48: the group's reserve starts at control).
fn translation_reserves_at_acquisition(
    prior: &Dataset,
    close: &Close,
    prior_end: Period,
) -> PolarsResult<BTreeMap<EntityId, Decimal>> {
    let roles = &prior.settings.accounts;
    let start = prior_end.fiscal_year_start(prior.settings.fiscal_year_start);
    let acquired: BTreeSet<&EntityId> = prior
        .acquisitions
        .iter()
        .filter(|a| (start..=prior_end).contains(&Period::of_date(a.date)))
        .map(|a| &a.owned)
        .collect();
    let balances = crate::close::aggregate::balances(&close.contributions)?;
    let mut out: BTreeMap<EntityId, Decimal> = BTreeMap::new();
    for e in acquired {
        let own = balances.get(e).and_then(|b| b.get(&(roles.translation_reserve.clone(), None)));
        let before_control: Decimal = close
            .journal
            .iter()
            .filter(|x| x.rule == crate::close::EliminationRule::PreAcquisitionResults)
            .flat_map(|x| x.lines.iter())
            .filter(|l| &l.entity == e && l.counterparty.is_none() && l.account == roles.translation_difference)
            .map(|l| l.amount)
            .sum();
        // The pre-acquisition entry reverses the difference: its line is minus it.
        let at_acquisition = own.copied().unwrap_or_default() - before_control;
        if !at_acquisition.is_zero() {
            out.insert(e.clone(), at_acquisition);
        }
    }
    Ok(out)
}

/// Where one entity's flows of the year close, by local account: the group account,
/// the local amount and the translated amount. The OCI of an account with a named
/// reserve closes into it (IAS 16.41: a revaluation surplus stays in equity as such
/// until it is realised; IAS 1.106(d): each component of equity carries its own
/// balance), the rest into retained earnings. Reserves the entity has OCI for but no
/// local account mapped to are returned apart (their OCI stays with retained earnings,
/// and a finding blocks).
type Targets = BTreeMap<String, (GroupAccount, Decimal, Decimal)>;

/// The reserve each OCI account accumulates into (named in the chart, other than the
/// translation reserve), and per entity and such reserve the first local account
/// mapped to it.
type NamedReserves = (BTreeMap<GroupAccount, GroupAccount>, BTreeMap<(EntityId, GroupAccount), String>);

fn named_reserve_accounts(prior: &Dataset) -> PolarsResult<NamedReserves> {
    let tr = &prior.settings.accounts.translation_reserve;
    let reserve_of: BTreeMap<GroupAccount, GroupAccount> = prior
        .accounts
        .iter()
        .filter_map(|a| Some((a.account.clone(), a.reserve.clone().filter(|r| r != tr)?)))
        .collect();
    let mut reserve_local = BTreeMap::new();
    for r in reserve_of.values().collect::<BTreeSet<_>>() {
        for (e, local) in retained_earnings_accounts(prior, r)? {
            reserve_local.insert((e, r.clone()), local);
        }
    }
    Ok((reserve_of, reserve_local))
}

fn close_targets(
    (reserve_of, reserve_local): &NamedReserves,
    e: &EntityId,
    (re_local, re): (&str, &GroupAccount),
    mine: &[&Closing],
    result: &BTreeMap<(EntityId, GroupAccount), Decimal>,
) -> (Targets, BTreeSet<GroupAccount>) {
    let mut targets = Targets::new();
    let mut unmapped = BTreeSet::new();
    let target = |acct: &GroupAccount| -> (String, GroupAccount) {
        match reserve_of.get(acct).and_then(|r| Some((reserve_local.get(&(e.clone(), r.clone()))?, r))) {
            Some((local, r)) => (local.clone(), r.clone()),
            None => (re_local.to_string(), re.clone()),
        }
    };
    targets.insert(re_local.to_string(), (re.clone(), Decimal::ZERO, Decimal::ZERO));
    for c in mine.iter().filter(|c| c.flow) {
        if let Some(r) = reserve_of.get(&c.group_account)
            && !reserve_local.contains_key(&(e.clone(), r.clone()))
            && !c.amount.is_zero()
        {
            unmapped.insert(r.clone());
        }
        let (local, group) = target(&c.group_account);
        targets.entry(local).or_insert((group, Decimal::ZERO, Decimal::ZERO)).1 += c.amount;
    }
    for ((_, acct), v) in result.iter().filter(|((x, _), _)| x == e) {
        let (local, group) = target(acct);
        targets.entry(local).or_insert((group, Decimal::ZERO, Decimal::ZERO)).2 += *v;
    }
    (targets, unmapped)
}

/// The finding for OCI of a named reserve with no local account to close into.
fn reserve_not_derivable(e: &EntityId, reserve: &GroupAccount, next: Period) -> Finding {
    Finding::new(
        Rule::OpeningNotDerivable,
        format!(
            "{e}'s opening of {next} cannot be carried: its OCI of the year accumulates in the reserve {reserve} (the `reserve` column of entities/accounts.csv), but no local account of {e} maps to {reserve}"
        ),
        format!("map a local account of {e} to {reserve} in entities/{e}/mapping.csv, so that the reserve keeps its OCI (IAS 1.106(d))"),
    )
    .entity(e)
    .period(next)
    .severity(Severity::Blocking)
}

/// Per entity, the first local account (in account order) its mapping maps to
/// retained earnings (or to another equity account `re`): where the year's result is
/// closed.
fn retained_earnings_accounts(ds: &Dataset, re: &GroupAccount) -> PolarsResult<BTreeMap<EntityId, String>> {
    let m = &ds.mappings;
    let e = column_strings(m, "entity")?;
    let l = column_strings(m, "local_account")?;
    let g = column_strings(m, "group_account")?;
    let mut out: BTreeMap<EntityId, String> = BTreeMap::new();
    for i in 0..m.height() {
        if let (Some(e), Some(l), Some(g)) = (&e[i], &l[i], &g[i])
            && g == re.as_str()
        {
            let slot = out.entry(EntityId::new(e)).or_insert_with(|| l.clone());
            if l < slot {
                *slot = l.clone();
            }
        }
    }
    Ok(out)
}

/// The derived rows as an opening frame (the columns of `Dataset::opening`).
fn opening_frame(rows: &[(Closing, Option<Decimal>)], start: Period) -> PolarsResult<DataFrame> {
    let n = rows.len();
    let text = |f: &dyn Fn(&Closing) -> Option<String>| rows.iter().map(|(c, _)| f(c)).collect::<Vec<_>>();
    let file = format!("closing of the fiscal year starting {start}");
    let dec = |v: Vec<Option<String>>, name: &str| Column::new(name.into(), v).strict_cast(&amount_dtype());
    DataFrame::new(
        n,
        vec![
            Column::new("entity".into(), text(&|c| Some(c.entity.to_string()))),
            Column::new("kind".into(), vec!["opening"; n]),
            Column::new("period".into(), vec![None::<String>; n]),
            Column::new("account".into(), text(&|c| Some(c.account.clone()))),
            dec(text(&|c| Some(plain(c.amount))), "amount")?,
            Column::new("counterparty".into(), text(&|c| c.counterparty.clone())),
            Column::new("txn_currency".into(), text(&|c| c.txn_currency.clone())),
            dec(text(&|c| c.txn_currency.as_ref().map(|_| plain(c.txn_amount))), "txn_amount")?,
            Column::new("file".into(), vec![file.as_str(); n]),
            Column::new("line".into(), vec![0u64; n]),
            dec(rows.iter().map(|(_, p)| p.map(plain)).collect(), "amount_presentation")?,
        ],
    )
}

/// Findings where a delivered opening of the year differs from the one carried from the
/// prior year: each local balance (account and counterparty), and each translated
/// carrying amount the file gives (historical-basis accounts).
fn compare_delivered(full: &Dataset, d: &Derived, delivered: &DataFrame, start: Period) -> PolarsResult<Vec<Finding>> {
    let maps: BTreeMap<(String, String), String> = {
        let m = &full.mappings;
        let (e, l, g) =
            (column_strings(m, "entity")?, column_strings(m, "local_account")?, column_strings(m, "group_account")?);
        (0..m.height()).filter_map(|i| Some(((e[i].clone()?, l[i].clone()?), g[i].clone()?))).collect()
    };
    let historical: BTreeSet<&str> =
        full.accounts.iter().filter(|a| a.basis == Basis::Historical).map(|a| a.account.as_str()).collect();
    let s = |c: &str| column_strings(delivered, c);
    let (e, a, cp, file) = (s("entity")?, s("account")?, s("counterparty")?, s("file")?);
    let amount = column_decimals(delivered.column("amount")?)?;
    let pres = column_decimals(delivered.column("amount_presentation")?)?;
    let line: Vec<Option<u64>> = delivered.column("line")?.u64()?.iter().collect();
    type Where = (String, u64);
    let mut local: BTreeMap<(EntityId, String, Option<String>), (Decimal, Where)> = BTreeMap::new();
    let mut given: BTreeMap<(EntityId, GroupAccount, Option<String>), (Decimal, Where)> = BTreeMap::new();
    let mut files: BTreeMap<EntityId, String> = BTreeMap::new();
    for i in 0..delivered.height() {
        let (Some(ent), Some(acct)) = (&e[i], &a[i]) else { continue };
        let ent = EntityId::new(ent);
        if !d.entities.contains(&ent) || delivered.column("period")?.str()?.get(i).is_none() {
            continue;
        }
        let at = (file[i].clone().unwrap_or_default(), line[i].unwrap_or(0));
        files.entry(ent.clone()).or_insert_with(|| at.0.clone());
        let slot = local.entry((ent.clone(), acct.clone(), cp[i].clone())).or_insert((Decimal::ZERO, at.clone()));
        slot.0 += amount[i].unwrap_or_default();
        if let (Some(p), Some(ga)) = (pres[i], maps.get(&(ent.to_string(), acct.clone())))
            && historical.contains(ga.as_str())
        {
            let slot = given.entry((ent.clone(), GroupAccount::new(ga), cp[i].clone())).or_insert((Decimal::ZERO, at));
            slot.0 += p;
        }
    }
    let prior_year = d.from_year;
    // Amounts in the findings' text at the entity's and the presentation currency's minor
    // unit.
    let local_minor = |e: &EntityId| full.entity(e).map(|x| x.currency.minor_unit()).unwrap_or(2);
    let pres_minor = full.settings.presentation_currency.minor_unit();
    let mut out = Vec::new();
    let keys: BTreeSet<_> =
        local.keys().chain(d.local.keys().filter(|(e, _, _)| files.contains_key(e))).cloned().collect();
    for key in keys {
        let (ent, acct, cp) = &key;
        let fmt = |x: Decimal| format_amount(x, local_minor(ent));
        let (closing, closed) = d.local.get(&key).copied().unwrap_or_default();
        let (delivered, at) = local.get(&key).cloned().unwrap_or((Decimal::ZERO, (files[ent].clone(), 0)));
        if delivered == closing {
            continue;
        }
        let with = cp.as_ref().map(|c| format!(" with {c}")).unwrap_or_default();
        let made = if closed.is_zero() {
            format!("its closing balance of the fiscal year starting {prior_year} is {}", fmt(closing))
        } else {
            format!(
                "its closing balance of the fiscal year starting {prior_year} is {}: the balance {} plus the year's profit or loss and OCI closed into it {}",
                fmt(closing),
                fmt(closing - closed),
                fmt(closed)
            )
        };
        out.push(differs(ent, &at, start).account(acct).message_with(format!(
            "{ent}'s opening of {start} gives account {acct}{with} {}, but {made}: difference {} - {} = {}",
            fmt(delivered),
            fmt(delivered),
            fmt(closing),
            fmt(delivered - closing)
        )));
    }
    for (key, (value, at)) in &given {
        let (ent, ga, cp) = key;
        let fmt = |x: Decimal| format_amount(x, pres_minor);
        let (carried, year) = d.presentation.get(key).copied().unwrap_or_default();
        if *value == carried {
            continue;
        }
        let with = cp.as_ref().map(|c| format!(" with {c}")).unwrap_or_default();
        out.push(differs(ent, at, start).account(ga.as_str()).message_with(format!(
            "{ent}'s opening of {start} gives amount_presentation {} on group account {ga}{with}, but the carrying amount translated at the close of the fiscal year starting {prior_year} is {} (of which the year's translated profit or loss and OCI {}): difference {} - {} = {}",
            fmt(*value),
            fmt(carried),
            fmt(year),
            fmt(*value),
            fmt(carried),
            fmt(*value - carried)
        )));
    }
    Ok(out)
}

/// The finding of a delivered opening that differs from the prior-year close, before
/// its message.
fn differs(entity: &EntityId, at: &(String, u64), start: Period) -> Finding {
    let mut f = Finding::new(
        Rule::OpeningDiffersFromPriorClose,
        String::new(),
        "the opening of a year is the prior year's closing: correct the opening file or the prior year's trial balances (the close uses the balances carried from the prior year)",
    )
    .in_file(&at.0)
    .entity(entity)
    .period(start)
    .severity(Severity::Blocking);
    if at.1 > 0 {
        f = f.line(at.1);
    }
    f
}

trait MessageWith {
    fn message_with(self, m: String) -> Self;
}

impl MessageWith for Finding {
    fn message_with(mut self, m: String) -> Self {
        self.message = m;
        self
    }
}

/// The prior-year comparison of a close: the close of the same view a year earlier
/// (year to date against the prior year to date, a month against the same month, the
/// balance sheet against the prior year's same period end), run on the prior year's
/// data on its own.
pub struct PriorYear {
    pub ds: Dataset,
    pub translated: crate::translate::Translated,
    pub structure: crate::structure::GroupStructure,
    /// The close at the period a year earlier.
    pub close: Close,
    /// The base close of a month or quarter view a year earlier.
    pub base: Option<Close>,
}

impl PriorYear {
    /// The period of the comparison.
    pub fn period(&self) -> Period {
        self.close.period
    }

    /// The statements' figures of the comparison.
    pub fn figures(&self) -> crate::close::view::ViewFigures {
        let chart = Chart::new(&self.ds.accounts);
        crate::close::view::view_figures(&self.close, self.base.as_ref(), &chart, &self.ds.settings.accounts)
    }

    /// The close at the start of the comparison's view: the base, else the close of the
    /// prior year's opening balances.
    pub fn opening(&self) -> PolarsResult<Close> {
        let p0 = self.translated.fiscal_start.prev();
        match &self.base {
            Some(b) => crate::close::close_at(&self.ds, &self.translated, &self.structure_at(b.period), b.period),
            None => crate::close::close_at(&self.ds, &self.translated, &self.structure_at(p0), p0),
        }
    }

    fn structure_at(&self, p: Period) -> crate::structure::GroupStructure {
        structure_at(&self.ds, self.structure.parent(), p)
    }
}

fn structure_at(ds: &Dataset, root: &EntityId, p: Period) -> crate::structure::GroupStructure {
    let ids: Vec<EntityId> = ds.entities.iter().map(|e| e.id.clone()).collect();
    crate::structure::build(&ids, &ds.holdings, root, p.last_day(), ds.settings.policies.significant_influence).0
}

/// The close of the prior year that the statements of a close at `period` compare with
/// (IAS 1.38): the same view (`view`) a year earlier, below `root`, run on the prior
/// year's own data. `None` when the folder holds no trial balances of that year. This is
/// the prior-year comparison source for any report that compares with the prior year.
pub fn prior_year_close(
    full: &Dataset,
    period: Period,
    view: crate::cli::View,
    root: &EntityId,
) -> PolarsResult<Option<PriorYear>> {
    let fys = full.settings.fiscal_year_start;
    let prior_period = period.plus_months(-12);
    let start = prior_period.fiscal_year_start(fys);
    if !fiscal_years(full).contains(&start) {
        return Ok(None);
    }
    let _span = tracing::info_span!("prior_year_close", period = %prior_period).entered();
    let ds = year_dataset(full, start, &mut Vec::new())?;
    let mapped = map_accounts(&ds, start)?;
    let translated = crate::translate::translate(&ds, &mapped, start, prior_period)?;
    let structure = structure_at(&ds, root, prior_period);
    let close = crate::close::close_at(&ds, &translated, &structure, prior_period)?;
    let base = match crate::close::view::base_period(view, prior_period, fys, start) {
        Some(p) => Some(crate::close::close_at(&ds, &translated, &structure_at(&ds, root, p), p)?),
        None => None,
    };
    Ok(Some(PriorYear { ds, translated, structure, close, base }))
}

/// The proof that the group's closing balances of the prior year are the opening of
/// this one: the balance sheet of `prior_end` (the prior year's close at its last month,
/// profit or loss in retained earnings, OCI in the translation reserve) against the close
/// of this year's opening balances, account by account.
pub fn opening_is_prior_closing(
    prior_end: &Close,
    opening: &Close,
    accounts: &[AccountDef],
    roles: &RoleAccounts,
) -> Check {
    let chart = Chart::new(accounts);
    let bs = |c: &Close| -> Amounts {
        balance_sheet_amounts(&c.group, &chart, roles)
            .into_iter()
            .filter(|(a, v)| chart.statement(a) == Some(Statement::BalanceSheet) && !v.is_zero())
            .collect()
    };
    let (before, after) = (bs(prior_end), bs(opening));
    let accounts: BTreeSet<&GroupAccount> = before.keys().chain(after.keys()).collect();
    let differing: Vec<String> = accounts
        .into_iter()
        .filter_map(|a| {
            let (x, y) = (before.get(a).copied().unwrap_or_default(), after.get(a).copied().unwrap_or_default());
            (x != y).then(|| format!("{a}: closing {} opening {} difference {}", plain(x), plain(y), plain(y - x)))
        })
        .collect();
    let detail = if differing.is_empty() {
        format!(
            "the balance sheet at {} (result of the year closed into equity) equals the opening of {} on all {} accounts",
            prior_end.period,
            opening.period.next(),
            before.len()
        )
    } else {
        differing.join("; ")
    };
    Check::new("opening_is_prior_year_closing", differing.is_empty(), detail)
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::close::context::fixture::{acct, chart, d, p, roles};

    fn close(period: &str, group: &[(&str, &str)]) -> Close {
        Close {
            period: p(period),
            contributions: DataFrame::default(),
            journal: Vec::new(),
            group: group.iter().map(|(a, v)| (acct(a), d(v))).collect(),
            nci: Vec::new(),
            reserves: Vec::new(),
            findings: Vec::new(),
            disposals: Vec::new(),
            stake_changes: Vec::new(),
            nci_at_acquisition: BTreeMap::new(),
            differences: BTreeMap::new(),
            equity_shares: BTreeMap::new(),
        }
    }

    /// The year-end close: cash 100 against capital 40, retained earnings 10, a profit of
    /// 30 (revenue 4000) and an OCI gain of 20 (9000), credits negative. Closed into
    /// equity: retained earnings 10 + 30 = 40, translation reserve 20: the next opening.
    #[test]
    fn the_year_end_balance_sheet_is_the_next_opening() {
        let end =
            close("2025-12", &[("1500", "100"), ("3000", "-40"), ("3200", "-10"), ("4000", "-30"), ("9000", "-20")]);
        let opening = close("2025-12", &[("1500", "100"), ("3000", "-40"), ("3200", "-40"), ("3300", "-20")]);
        let c = opening_is_prior_closing(&end, &opening, &chart(), &roles());
        assert!(c.ok, "{}", c.detail);
        // The OCI closed into retained earnings instead: both accounts named, with the
        // difference.
        let wrong = close("2025-12", &[("1500", "100"), ("3000", "-40"), ("3200", "-60")]);
        let c = opening_is_prior_closing(&end, &wrong, &chart(), &roles());
        assert!(!c.ok);
        assert_eq!(c.detail, "3200: closing -40 opening -60 difference -20; 3300: closing -20 opening 0 difference 20");
    }
}

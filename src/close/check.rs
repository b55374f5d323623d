//! The findings the close's rules raise about the user's data, computed from the data
//! without closing, so that `tessera check` lists every one of them: the acquisition a
//! consolidated or equity-accounted entity lacks (`AcquisitionMissing`), what an
//! acquisition record says that cannot be posted (`ValueInvalid`, `AccountUnknown`,
//! `GoodwillNegative`) and the role accounts a rule needs (`SettingInvalid`). The rules
//! raise them through the same functions (`investment::findings`,
//! `equity_method::acquisition_missing`, `unrealised_profit::missing_accounts`,
//! `fair_value::findings` for the fair value adjustments, `equity_method::findings` for
//! what the equity method cannot express).

use std::collections::BTreeSet;

use polars::prelude::*;

use super::{equity_method, fair_value, impairment, investment, unrealised_profit};
use crate::findings::Finding;
use crate::load::Dataset;
use crate::map_accounts::{Mapped, period_index};
use crate::model::*;
use crate::structure::GroupStructure;

/// The close's data findings for a close of `s` at `period` in the fiscal year from
/// `fiscal_start`, in the order the close raises them.
pub fn data_findings(
    ds: &Dataset,
    s: &GroupStructure,
    mapped: &Mapped,
    period: Period,
    fiscal_start: Period,
) -> PolarsResult<Vec<Finding>> {
    let roles = &ds.settings.accounts;
    let mut out: Vec<Finding> =
        unrealised_profit::missing_accounts(roles, &ds.inventory_profits, period).into_iter().collect();
    let held = held_as_investment(ds, s, mapped, period)?;
    let acq = acquisition_records(&ds.acquisitions, period.last_day());
    let statement_of = |a: &GroupAccount| ds.account(a).map(|d| d.statement);
    for e in s.entities().iter().filter(|e| e.method == Method::Full && &e.id != s.parent()) {
        let Some(currency) = ds.entity(&e.id).map(|x| x.currency) else { continue };
        let a = acq.get(&e.id).copied();
        out.extend(investment::findings(e, a, held.contains(&e.id), currency, fiscal_start, roles, &statement_of));
    }
    for e in s.entities().iter().filter(|e| e.method == Method::Proportionate && held.contains(&e.id)) {
        out.push(investment::joint_operation_held(&e.id));
    }
    for e in s.entities().iter().filter(|e| e.method == Method::Equity && !acq.contains_key(&e.id)) {
        out.push(equity_method::acquisition_missing(&e.id));
    }
    let method_of = |e: &EntityId| s.entities().iter().find(|x| &x.id == e).map(|x| x.method);
    out.extend(fair_value::findings(&ds.uplifts, &ds.acquisitions, &method_of, &statement_of));
    let has_rate = |e: &EntityId, p: Period| super::impairment_rate_known(ds, e, p);
    let when = (period, fiscal_start);
    out.extend(impairment::findings(&ds.impairments, &ds.acquisitions, when, roles, &has_rate, &method_of));
    out.extend(fair_value::deferred_tax_findings(ds, period));
    out.extend(equity_method::findings(ds, &method_of, period));
    out.extend(equity_method::long_term_findings(ds, &method_of));
    Ok(out)
}

/// The entities an entity consolidated in full or proportionately holds as an
/// investment (a line on an account of kind `investment` naming them) up to `period`.
fn held_as_investment(
    ds: &Dataset,
    s: &GroupStructure,
    mapped: &Mapped,
    period: Period,
) -> PolarsResult<BTreeSet<EntityId>> {
    let accounts: Vec<String> = ds
        .accounts
        .iter()
        .filter(|a| a.ic_kind.as_deref() == Some("investment"))
        .map(|a| a.account.to_string())
        .collect();
    let holders: Vec<String> = s
        .entities()
        .iter()
        .filter(|e| matches!(e.method, Method::Full | Method::Proportionate))
        .map(|e| e.id.to_string())
        .collect();
    if accounts.is_empty() || holders.is_empty() {
        return Ok(BTreeSet::new());
    }
    let df = mapped
        .lines
        .clone()
        .lazy()
        .filter(
            col("group_account")
                .is_in(lit(Series::new("a".into(), accounts)).implode(false), false)
                .and(col("entity").is_in(lit(Series::new("h".into(), holders)).implode(false), false))
                .and(col("counterparty").is_not_null())
                .and(col("period_index").lt_eq(lit(period_index(period)))),
        )
        .select([col("counterparty")])
        .unique(None, UniqueKeepStrategy::Any)
        .collect()?;
    Ok(crate::money::column_strings(&df, "counterparty")?.into_iter().flatten().map(EntityId::new).collect())
}

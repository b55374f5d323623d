//! Rule `equity_method`: an associate or joint venture is not aggregated; its holder
//! carries it at cost plus its share of the post-acquisition results (IAS 28.10). The
//! entry brings the investment up by the share of profit of the year (to the share of
//! result), of OCI (to the holder's OCI) and of earlier years' movements (to retained
//! earnings).

use std::collections::BTreeMap;

use polars::prelude::PolarsResult;
use rust_decimal::Decimal;

use super::aggregate::aggregate_one;
use super::context::Context;
use super::journal::{EliminationRule, Journal, line};
use crate::findings::{Finding, Rule};
use crate::load::Dataset;
use crate::model::*;
use crate::money;
use crate::translate::Translated;

/// An investee's own translated balances by group account, at the period and at the
/// opening (it is not aggregated, so they are read one by one).
pub type Investees = BTreeMap<EntityId, (BTreeMap<GroupAccount, Decimal>, BTreeMap<GroupAccount, Decimal>)>;

/// The balances of every equity-accounted investee with an acquisition record.
pub fn investees(ds: &Dataset, t: &Translated, cx: &Context, acquisitions: &[Acquisition]) -> PolarsResult<Investees> {
    let mut out = Investees::new();
    for e in cx.of_method(Method::Equity).filter(|e| acquisitions.iter().any(|a| a.owned == e.id)) {
        let own = aggregate_one(ds, t, &e.id, cx.period)?;
        let opening = aggregate_one(ds, t, &e.id, cx.fiscal_start.prev())?;
        out.insert(e.id.clone(), (own, opening));
    }
    Ok(out)
}

/// The finding for an equity-accounted investee without an acquisition record; `check`
/// raises it too.
pub fn acquisition_missing(e: &EntityId) -> Finding {
    Finding::new(
        Rule::AcquisitionMissing,
        format!("{e} is accounted for by the equity method but entities/acquisitions.csv has no row for it"),
        "add its acquisition date and net assets at acquisition, so that the share of post-acquisition results can be computed",
    )
    .entity(e)
}

/// Posts one entry per equity-accounted investee.
pub fn post(
    j: &mut Journal,
    cx: &Context,
    acquisitions: &[Acquisition],
    investees: &Investees,
    findings: &mut Vec<Finding>,
) {
    let roles = cx.roles;
    let none = (BTreeMap::new(), BTreeMap::new());
    // The last record of an investee wins, as in the investment rule.
    let acq: BTreeMap<&EntityId, &Acquisition> = acquisitions.iter().map(|a| (&a.owned, a)).collect();
    for e in cx.of_method(Method::Equity) {
        let Some(a) = acq.get(&e.id) else {
            findings.push(acquisition_missing(&e.id));
            continue;
        };
        let share = e.effective_interest;
        let (own, opening) = investees.get(&e.id).unwrap_or(&none);
        let sum_where = |m: &BTreeMap<GroupAccount, Decimal>, f: &dyn Fn(&AccountDef) -> bool| -> Decimal {
            m.iter().filter(|(a, _)| cx.chart.get(a).is_some_and(|d| f(d))).map(|(_, v)| *v).sum()
        };
        let profit = -sum_where(own, &|d| d.statement == Statement::ProfitOrLoss);
        let oci = -sum_where(own, &|d| d.statement == Statement::Oci);
        let equity_open = -sum_where(opening, &|d| d.class == AccountClass::Equity);
        let prior = equity_open - a.net_assets_presentation;
        let r = |x: Decimal| cx.round(x * share);
        let (sp, so, spr) = (r(profit), r(oci), r(prior));
        let holder = e.direct_holders.first().map(|h| h.owner.clone()).unwrap_or_else(|| cx.structure.parent().clone());
        j.post(
            EliminationRule::EquityMethod,
            holder.clone(),
            vec![holder.clone(), e.id.clone()],
            format!(
                "share {} of {}: profit {}, OCI {}, prior years {}",
                share.normalize(),
                e.id,
                money::format_amount(sp, cx.minor),
                money::format_amount(so, cx.minor),
                money::format_amount(spr, cx.minor)
            ),
            vec![
                line(&roles.equity_investments, &holder, Some(&e.id), sp + so + spr),
                line(&roles.equity_result, &holder, Some(&e.id), -sp),
                line(&roles.translation_difference, &holder, Some(&e.id), -so),
                line(&roles.retained_earnings, &holder, Some(&e.id), -spr),
            ],
        );
    }
}

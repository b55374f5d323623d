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
        // The share of OCI of the earlier years the folder holds stays in the
        // translation reserve where the year-end close put it (IAS 28.10).
        let oci_before =
            cx.brought_forward.equity_method_oci.get(&(holder.clone(), e.id.clone())).copied().unwrap_or_default();
        let mut lines = vec![
            line(&roles.equity_investments, &holder, Some(&e.id), sp + so + spr),
            line(&roles.equity_result, &holder, Some(&e.id), -sp),
            line(&roles.translation_difference, &holder, Some(&e.id), -so),
            line(&roles.retained_earnings, &holder, Some(&e.id), -(spr - oci_before)),
        ];
        if !oci_before.is_zero() {
            lines.push(line(&roles.translation_reserve, &holder, Some(&e.id), -oci_before));
        }
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
            lines,
        );
    }
}

#[cfg(test)]
mod tests {
    use super::super::context::fixture::*;
    use super::*;

    /// P holds 30% of associate A since 2020 (IAS 28.5: significant influence). Net
    /// assets at acquisition EUR 400. At the opening A's equity was 300 capital + 200
    /// retained earnings = 500: 100 earned since acquisition, 30 of it P's (prior
    /// years). This year A made a profit of 100 (revenue 100) and an OCI gain of 20:
    /// P's shares 30 and 6. The investment goes up by 30 + 6 + 30 = 66 (IAS 28.10).
    #[test]
    fn cost_plus_the_share_of_post_acquisition_results() {
        let w = World::new(&["P", "A"], &[holding("P", "A", "0.3", "2020-01-01")], p("2026-06"));
        let cx = w.context(p("2026-06"), p("2026-01"), Default::default());
        let a = Acquisition {
            owned: id("A"),
            date: chrono::NaiveDate::from_ymd_opt(2020, 1, 1).unwrap_or_default(),
            consideration: d("120"),
            nci_measurement: NciMeasurement::ShareOfNetAssets,
            nci_fair_value: None,
            net_assets: d("400"),
            net_assets_presentation: d("400"),
            impairment: Decimal::ZERO,
            impairment_year: Decimal::ZERO,
            fair_value_adjustment: Decimal::ZERO,
            fair_value_account: None,
            source: Source::file("entities/acquisitions.csv"),
        };
        let own = BTreeMap::from([(acct("4000"), d("-100")), (acct("9000"), d("-20"))]);
        let opening = BTreeMap::from([(acct("3000"), d("-300")), (acct("3200"), d("-200"))]);
        let investees = Investees::from([(id("A"), (own, opening))]);
        let mut j = Journal::default();
        let mut found = Vec::new();
        post(&mut j, &cx, std::slice::from_ref(&a), &investees, &mut found);
        assert!(found.is_empty());
        assert_eq!(
            lines(&j.entries[0]),
            [
                ("1300".into(), "P".into(), "66".into()),
                ("4900".into(), "P".into(), "-30".into()),
                ("9000".into(), "P".into(), "-6".into()),
                ("3200".into(), "P".into(), "-30".into())
            ]
        );
        let mut j = Journal::default();
        post(&mut j, &cx, &[], &investees, &mut found);
        assert!(j.entries.is_empty());
        assert_eq!(found.iter().map(|f| f.rule).collect::<Vec<_>>(), [Rule::AcquisitionMissing]);
    }
}

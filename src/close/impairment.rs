//! Goodwill impairments by month (`goodwill_impairments.csv`), read by the rule
//! `investment_and_goodwill`. An impairment is recognised in one month (IAS 36.59-60)
//! and translated once, at that month's rate (`policies.goodwill_impairment_rate`:
//! the closing rate by default, or the average): its presentation amount is then fixed,
//! in the year's expense or, from the next fiscal year, in retained earnings, and later
//! months do not retranslate it. Goodwill itself, net of the impairments to date, stays
//! at the closing rate (IAS 21.47); the rest of its movement is exchange difference in
//! OCI. The older `impairment` and `impairment_year` columns of `acquisitions.csv`
//! (undated, at the closing rate of every close) still work for an acquisition without
//! rows here. The rows of an equity-accounted investee are the impairment of the
//! investment as a whole (IAS 28.40-43), posted by `equity_method.rs` at the same fixed
//! rate.

use std::collections::BTreeMap;

use rust_decimal::Decimal;

use super::context::Context;
use super::fair_value::ExpenseRates;
use crate::findings::{Finding, Rule};
use crate::load::Rate;
use crate::model::*;

/// One impairment recognised to the close's period.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct Dated {
    pub period: Period,
    /// In the acquired entity's currency.
    pub amount: Decimal,
    /// The rate of its month under the policy; `None` in the presentation currency.
    pub rate: Option<Rate>,
    /// Recognised in the fiscal year closed (an expense), not earlier (retained earnings).
    pub in_year: bool,
}

impl Dated {
    /// `x` (the impairment or a share of it) at the impairment's fixed rate, rounded.
    pub fn at_rate(&self, cx: &Context, x: Decimal) -> Decimal {
        match &self.rate {
            Some(r) => cx.round(r.apply(x)),
            None => cx.round(x),
        }
    }
}

/// The rate of month `p` under `policy`.
fn rate_of(cx: &Context, rates: &ExpenseRates, policy: ImpairmentRate, c: Currency, p: Period) -> Option<Rate> {
    match policy {
        ImpairmentRate::Closing => cx.closing.get(&(c, p)).copied(),
        ImpairmentRate::Average => rates.average.get(&(c, p)).copied(),
    }
}

/// Per acquired entity, its impairments recognised to the close's period, in month
/// order, each with the rate of its month. A row without a rate is left out: its
/// finding ([`findings`]) blocks the close.
pub fn dated(cx: &Context, rows: &[GoodwillImpairment], rates: &ExpenseRates) -> BTreeMap<EntityId, Vec<Dated>> {
    let mut out: BTreeMap<EntityId, Vec<Dated>> = BTreeMap::new();
    let policy = rates.impairment_rate;
    for r in rows.iter().filter(|r| r.period <= cx.period) {
        let Some(c) = cx.currencies.get(&r.owned).copied() else { continue };
        let rate = if c == cx.presentation {
            None
        } else {
            match rate_of(cx, rates, policy, c, r.period) {
                Some(x) => Some(x),
                None => continue,
            }
        };
        let in_year = r.period >= cx.fiscal_start && cx.period >= cx.translated_from;
        out.entry(r.owned.clone()).or_default().push(Dated { period: r.period, amount: r.amount, rate, in_year });
    }
    for v in out.values_mut() {
        v.sort_by_key(|d| d.period);
    }
    out
}

/// What the dated impairments lack, for a close at `period` of the fiscal year from
/// `fiscal_start`: no acquisition row; an acquisition that also gives the undated
/// `impairment` column (one place only); a month before the acquisition; an impairment
/// of the year without `accounts.goodwill_impairment`; no rate for the month under the
/// policy (`has_rate`); an entity that is not a subsidiary consolidated in full
/// (`method_of`: an equity-accounted investee's impairment by month is not supported).
pub fn findings(
    rows: &[GoodwillImpairment],
    acquisitions: &[Acquisition],
    (period, fiscal_start): (Period, Period),
    roles: &RoleAccounts,
    has_rate: &dyn Fn(&EntityId, Period) -> bool,
    method_of: &dyn Fn(&EntityId) -> Option<Method>,
) -> Vec<Finding> {
    let acq = acquisition_records(acquisitions, period.last_day());
    let mut out = Vec::new();
    for r in rows {
        let at = |rule: Rule, message: String, action: &str| {
            Finding::new(rule, message, action).at(&r.source).entity(&r.owned).period(r.period)
        };
        let Some(a) = acq.get(&r.owned) else {
            out.push(at(
                Rule::AcquisitionMissing,
                format!(
                    "{}: a goodwill impairment in {} but entities/acquisitions.csv has no row for it",
                    r.owned, r.period
                ),
                "add the acquisition of the entity, or remove the impairment",
            ));
            continue;
        };
        let investee = method_of(&r.owned) == Some(Method::Equity);
        if let Some(m @ Method::Proportionate) = method_of(&r.owned) {
            out.push(at(
                Rule::ValueInvalid,
                format!("{}: a goodwill impairment by month of an entity consolidated by the {} method: only subsidiaries consolidated in full and equity-accounted investees are supported", r.owned, m.as_str()),
                "post the impairment of a joint operation's share as a top-side entry",
            ));
        }
        if !a.impairment.is_zero() {
            out.push(at(
                Rule::ValueInvalid,
                format!("{}: impairments by month and the acquisition's `impairment` {} are both given", r.owned, a.impairment),
                "give the impairments in goodwill_impairments.csv only, one row per month recognised, and leave `impairment` and `impairment_year` empty",
            ));
        }
        if r.period < Period::of_date(a.date) {
            out.push(at(
                Rule::ValueInvalid,
                format!("{}: an impairment in {} before the acquisition on {}", r.owned, r.period, a.date),
                "correct the month the impairment was recognised in",
            ));
        }
        if r.period > period {
            continue;
        }
        // An investee's impairment is in the share of its result (`equity_method.rs`).
        if r.period >= fiscal_start && roles.goodwill_impairment.is_none() && !investee {
            out.push(at(
                Rule::SettingInvalid,
                format!(
                    "{}: a goodwill impairment of {} in {} but group.toml names no `accounts.goodwill_impairment`",
                    r.owned, r.amount, r.period
                ),
                "name the expense account for goodwill impairment in [accounts]",
            ));
        }
        if !has_rate(&r.owned, r.period) {
            out.push(at(
                Rule::RateMissing,
                format!("{}: no rate for {} to translate its goodwill impairment of {} at (`policies.goodwill_impairment_rate`)", r.owned, r.period, r.amount),
                "add the month's closing and average rates to rates/monthly.csv",
            ));
        }
    }
    out
}

#[cfg(test)]
mod tests {
    use super::super::context::fixture::*;
    use super::*;

    fn row(period: &str) -> GoodwillImpairment {
        GoodwillImpairment {
            owned: id("S"),
            period: p(period),
            amount: d("100"),
            source: Source::file("entities/goodwill_impairments.csv"),
        }
    }

    fn acquired(impairment: &str) -> Acquisition {
        Acquisition {
            owned: id("S"),
            date: chrono::NaiveDate::from_ymd_opt(2025, 6, 1).unwrap_or_default(),
            consideration: d("1000"),
            nci_measurement: NciMeasurement::ShareOfNetAssets,
            nci_fair_value: None,
            net_assets: d("800"),
            net_assets_presentation: d("400"),
            impairment: d(impairment),
            impairment_year: Decimal::ZERO,
            fair_value_adjustment: Decimal::ZERO,
            fair_value_account: None,
            source: Source::file("entities/acquisitions.csv"),
        }
    }

    /// Each row says what it lacks: no acquisition; the undated column given too; a
    /// month before the acquisition (2025-06); the year's impairment without its
    /// account; no rate for the month. A row after the close's period is not checked
    /// beyond its acquisition (a later close uses it).
    #[test]
    fn findings_name_what_an_impairment_lacks() {
        let mut roles = roles();
        let when = (p("2026-03"), p("2026-01"));
        let rate = |_: &EntityId, _: Period| true;
        let no_rate = |_: &EntityId, _: Period| false;
        let full = |_: &EntityId| Some(Method::Full);
        let rules = |rows: &[GoodwillImpairment],
                     a: &[Acquisition],
                     roles: &RoleAccounts,
                     r: &dyn Fn(&EntityId, Period) -> bool| {
            findings(rows, a, when, roles, r, &full).iter().map(|f| f.rule).collect::<Vec<_>>()
        };
        assert_eq!(rules(&[row("2026-02")], &[], &roles, &rate), [Rule::AcquisitionMissing]);
        assert_eq!(rules(&[row("2026-02")], &[acquired("0")], &roles, &rate), [Rule::SettingInvalid]);
        roles.goodwill_impairment = Some(acct("5000"));
        assert!(rules(&[row("2026-02"), row("2025-12"), row("2026-09")], &[acquired("0")], &roles, &rate).is_empty());
        assert_eq!(rules(&[row("2026-02")], &[acquired("50")], &roles, &rate), [Rule::ValueInvalid]);
        assert_eq!(rules(&[row("2025-05")], &[acquired("0")], &roles, &rate), [Rule::ValueInvalid]);
        assert_eq!(rules(&[row("2026-02")], &[acquired("0")], &roles, &no_rate), [Rule::RateMissing]);
        let proportionate = |_: &EntityId| Some(Method::Proportionate);
        let found = findings(&[row("2026-02")], &[acquired("0")], when, &roles, &rate, &proportionate);
        assert_eq!(found.iter().map(|f| f.rule).collect::<Vec<_>>(), [Rule::ValueInvalid]);
        // An investee's impairment of the investment needs no goodwill account.
        roles.goodwill_impairment = None;
        let equity = |_: &EntityId| Some(Method::Equity);
        assert!(findings(&[row("2026-02")], &[acquired("0")], when, &roles, &rate, &equity).is_empty());
    }
}

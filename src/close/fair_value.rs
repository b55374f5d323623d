//! Rules `fair_value_depreciation` and `fair_value_deferred_tax`: the fair value adjustments of an acquired
//! subsidiary's identifiable assets (IFRS 3.18) are the foreign operation's assets, in
//! its functional currency (IAS 21.47), and those with a useful life are depreciated
//! after the acquisition (IFRS 3.54, IAS 16.50), land not at all (IAS 16.58). The
//! investment entry (`investment.rs`) adds each adjustment at its full amount at the
//! closing rate; this rule posts, per depreciating adjustment, the depreciation to date
//! against its account:
//!
//! - the month's charge is `amount x months elapsed / life` to date, rounded in the
//!   functional currency, less the same to the month before, so that the charges add up
//!   to the amount exactly; the acquisition month is a whole month, whatever the day
//!   (the close consolidates whole months from the control month, `pre_acquisition.rs`);
//! - this fiscal year's charges are an expense, translated like the subsidiary's own
//!   expenses (IAS 21.39b, 21.40: each month at its average rate, or the year to date at
//!   the year-to-date average under that policy);
//! - earlier years' depreciation is in retained earnings at the closing rate of the month
//!   before the fiscal year (the opening): the rates of earlier years' months are not in
//!   the data folder, and a depreciation carried at the opening rate leaves no
//!   exchange difference brought forward on it (the reserve brought forward holds the one
//!   on the gross adjustment, posted by the investment entry);
//! - the depreciation to date is taken off the account at the closing rate; the rest of
//!   the entry is this year's exchange difference on the depreciation, in OCI (IAS
//!   21.39c).
//!
//! A hyperinflationary subsidiary's adjustment is restated by the index since the
//! acquisition month and depreciated on the restated amount, the year's charge and the
//! depreciation to date at the closing rate (IAS 29.15, 29.26, IAS 21.42(a);
//! [`post_restated`]).
//!
//! The entry is the subsidiary's own: the NCI bears its share of the expense and of the
//! exchange difference (`nci.rs`, IAS 21.41). [`findings`] lists what the adjustments
//! lack; `check` raises the same.

use std::collections::{BTreeMap, BTreeSet};

use rust_decimal::Decimal;

use super::context::Context;
use super::journal::{EliminationRule, Journal, line};
use crate::findings::{Finding, Rule};
use crate::load::{Dataset, Rate};
use crate::map_accounts::period_index;
use crate::model::*;
use crate::money;
use crate::restate::AcquisitionUnit;

/// The deferred tax the close recognises on its consolidation adjustments (IAS 12.19,
/// 12.66), when `policies.deferred_tax` asks for it and both accounts are named (the
/// findings of [`deferred_tax_findings`] block the close otherwise).
#[derive(Debug, Clone)]
pub struct DeferredTax {
    pub rates: BTreeMap<EntityId, Decimal>,
    /// Balance sheet: the deferred tax liability (credit) or asset (debit).
    pub account: GroupAccount,
    /// Profit or loss: the deferred tax expense or income.
    pub expense: GroupAccount,
}

impl DeferredTax {
    pub fn of(ds: &Dataset) -> Option<Self> {
        let roles = &ds.settings.accounts;
        let (Some(account), Some(expense)) = (&roles.deferred_tax, &roles.deferred_tax_expense) else { return None };
        ds.settings.policies.deferred_tax.then(|| DeferredTax {
            rates: ds.tax_rates.iter().map(|t| (t.entity.clone(), t.rate)).collect(),
            account: account.clone(),
            expense: expense.clone(),
        })
    }

    /// `e`'s rate, when it has one other than 0.
    pub fn rate(&self, e: &EntityId) -> Option<Decimal> {
        self.rates.get(e).copied().filter(|t| !t.is_zero())
    }
}

/// Every fair value adjustment of the acquisitions: the single `fair_value_adjustment`
/// of each acquisitions.csv row (never depreciated), the rows of
/// `fair_value_adjustments.csv`, and, with deferred tax, each one's deferred tax (IAS
/// 12.19): the entity's rate times the adjustment, on the deferred tax account, with the
/// same life, released through the tax expense account as the adjustment is depreciated.
pub fn all_uplifts(acquisitions: &[Acquisition], file: &[Uplift], tax: Option<&DeferredTax>) -> Vec<Uplift> {
    let mut out: Vec<Uplift> = Vec::new();
    for a in acquisitions {
        if let Some(account) = &a.fair_value_account
            && !a.fair_value_adjustment.is_zero()
        {
            out.push(Uplift {
                owned: a.owned.clone(),
                account: account.clone(),
                amount: a.fair_value_adjustment,
                life_months: None,
                expense_account: None,
                deferred_tax: false,
                source: a.source.clone(),
            });
        }
    }
    out.extend(file.iter().cloned());
    let Some(tax) = tax else { return out };
    let companions: Vec<Uplift> = out
        .iter()
        .filter_map(|u| {
            let t = tax.rate(&u.owned)?;
            Some(Uplift {
                owned: u.owned.clone(),
                account: tax.account.clone(),
                amount: -(u.amount * t),
                life_months: u.life_months,
                expense_account: u.life_months.map(|_| tax.expense.clone()),
                deferred_tax: true,
                source: u.source.clone(),
            })
        })
        .collect();
    out.extend(companions);
    out
}

/// The adjustments of one acquisition (of [`all_uplifts`]).
pub fn uplifts_of(a: &Acquisition, all: &[Uplift]) -> Vec<Uplift> {
    all.iter().filter(|u| u.owned == a.owned).cloned().collect()
}

/// What deferred tax on the consolidation adjustments needs, under
/// `policies.deferred_tax = "recognise"`: both accounts, of the right statements, and a
/// rate in `tax_rates.csv` for every entity with a fair value adjustment and every buyer
/// holding goods with unrealised profit to `period` (0 is a rate: no tax). `check`
/// raises the same.
pub fn deferred_tax_findings(ds: &Dataset, period: Period) -> Vec<Finding> {
    let mut out = Vec::new();
    for t in ds.tax_rates.iter().filter(|t| ds.entity(&t.entity).is_none()) {
        out.push(
            Finding::new(
                Rule::EntityUnknown,
                format!("entities/tax_rates.csv names {}, which is not in entities/entities.csv", t.entity),
                "correct the entity id or remove the row",
            )
            .at(&t.source),
        );
    }
    if !ds.settings.policies.deferred_tax {
        // The rates are read but not used: say so rather than ignore them silently.
        if let Some(t) = ds.tax_rates.first() {
            out.push(
                Finding::new(
                    Rule::ValueInvalid,
                    "entities/tax_rates.csv has rates but `policies.deferred_tax` is off: no deferred tax is recognised on the consolidation adjustments",
                    "set `deferred_tax = \"recognise\"` in [policies] to use them, or remove the file",
                )
                .at(&Source::file(&t.source.file))
                .severity(crate::findings::Severity::Warning),
            );
        }
        return out;
    }
    let roles = &ds.settings.accounts;
    let statement_of = |a: &GroupAccount| ds.account(a).map(|d| d.statement);
    for (key, acct, st, word) in [
        ("deferred_tax", &roles.deferred_tax, Statement::BalanceSheet, "balance-sheet"),
        ("deferred_tax_expense", &roles.deferred_tax_expense, Statement::ProfitOrLoss, "profit or loss"),
    ] {
        match acct {
            None => out.push(Finding::new(
                Rule::SettingInvalid,
                format!("`policies.deferred_tax` is \"recognise\" but group.toml names no `accounts.{key}`"),
                format!("name the {word} account of deferred tax in [accounts], or set the policy to \"off\""),
            )),
            Some(a) if statement_of(a) != Some(st) => out.push(Finding::new(
                Rule::AccountUnknown,
                format!("`accounts.{key}` {a} is not a {word} account of entities/accounts.csv"),
                "name an account of the chart with that statement",
            )),
            Some(_) => {}
        }
    }
    let has_rate = |e: &EntityId| ds.tax_rates.iter().any(|t| &t.entity == e);
    let mut needed: BTreeMap<EntityId, Source> = BTreeMap::new();
    for a in ds.acquisitions.iter().filter(|a| !a.fair_value_adjustment.is_zero()) {
        needed.entry(a.owned.clone()).or_insert_with(|| a.source.clone());
    }
    for u in &ds.uplifts {
        needed.entry(u.owned.clone()).or_insert_with(|| u.source.clone());
    }
    for ip in ds.inventory_profits.iter().filter(|x| x.period <= period) {
        needed.entry(ip.buyer.clone()).or_insert_with(|| ip.source.clone());
    }
    for (e, source) in needed.iter().filter(|(e, _)| !has_rate(e)) {
        out.push(
            Finding::new(
                Rule::ValueMissing,
                format!("{e} has consolidation adjustments with deferred tax (`policies.deferred_tax`) but no rate in entities/tax_rates.csv"),
                "add the entity's income tax rate (0 where it pays none)",
            )
            .at(source)
            .entity(e),
        );
    }
    out
}

/// The depreciation of `u` to the end of `month`, in the functional currency (minor
/// unit `minor`): `amount x months / life`, the months counted from the acquisition
/// month (a whole month) and at most the life. 0 for an adjustment without a life.
pub fn depreciated_to(u: &Uplift, acquired: Period, month: Period, minor: u32, mode: RoundingMode) -> Decimal {
    let Some(life) = u.life_months else { return Decimal::ZERO };
    let life = i64::from(life);
    let months = i64::from(period_index(month) - period_index(acquired) + 1).clamp(0, life);
    money::round(u.amount * Decimal::from(months) / Decimal::from(life), minor, mode)
}

/// The rates an expense of the year is translated at, as the subsidiary's own.
#[derive(Debug, Default)]
pub struct ExpenseRates {
    pub average: BTreeMap<(Currency, Period), Rate>,
    pub average_ytd: BTreeMap<(Currency, Period), Rate>,
    pub policy: Option<IncomeTranslation>,
    /// Entities whose functional currency is hyperinflationary, from the month given.
    pub hyperinflationary: BTreeMap<EntityId, Period>,
    /// The rate of a goodwill impairment in its month (`impairment.rs`).
    pub impairment_rate: ImpairmentRate,
}

impl ExpenseRates {
    pub fn of(ds: &Dataset) -> Self {
        ExpenseRates {
            average: ds.rates.iter().map(|r| ((r.currency, r.period), r.average)).collect(),
            average_ytd: ds.rates.iter().filter_map(|r| Some(((r.currency, r.period), r.average_ytd?))).collect(),
            policy: Some(ds.settings.policies.income_translation),
            hyperinflationary: ds
                .entities
                .iter()
                .filter_map(|e| Some((e.id.clone(), e.hyperinflationary_from?)))
                .collect(),
            impairment_rate: ds.settings.policies.goodwill_impairment_rate,
        }
    }

    /// `x` of `currency` at a rate of `rates`, rounded; 0 without the rate (the rate
    /// check of `validate` blocks such a close).
    fn at(
        cx: &Context,
        rates: &BTreeMap<(Currency, Period), Rate>,
        currency: Currency,
        x: Decimal,
        p: Period,
    ) -> Decimal {
        if currency == cx.presentation {
            return cx.round(x);
        }
        rates.get(&(currency, p)).map(|r| cx.round(r.apply(x))).unwrap_or_default()
    }

    /// This fiscal year's depreciation of `u` in the presentation currency, from
    /// `first` (the later of the fiscal year's start and the acquisition month).
    pub(crate) fn expense_of_year(
        &self,
        cx: &Context,
        fc: Currency,
        u: &Uplift,
        acquired: Period,
        first: Period,
    ) -> Decimal {
        let minor = fc.minor_unit();
        let to = |m: Period| depreciated_to(u, acquired, m, minor, cx.mode);
        if self.policy == Some(IncomeTranslation::YearToDate) {
            return Self::at(cx, &self.average_ytd, fc, to(cx.period) - to(first.prev()), cx.period);
        }
        first.through(&cx.period).into_iter().map(|m| Self::at(cx, &self.average, fc, to(m) - to(m.prev()), m)).sum()
    }

    /// The depreciation of `u` of the fiscal years before the one starting after `p0`,
    /// in the presentation currency as each year's close expensed it (each month at its
    /// average, or each year at its year-to-date average, under the income translation
    /// policy): what those years closed into retained earnings. `None` when a rate of
    /// those months is not in the rates table (a folder that does not hold them).
    fn earlier_years(&self, cx: &Context, fc: Currency, u: &Uplift, acquired: Period, p0: Period) -> Option<Decimal> {
        let minor = fc.minor_unit();
        let to = |m: Period| depreciated_to(u, acquired, m, minor, cx.mode);
        if acquired > p0 {
            return Some(Decimal::ZERO);
        }
        let known = |rates: &BTreeMap<(Currency, Period), Rate>, m: Period| {
            fc == cx.presentation || rates.contains_key(&(fc, m))
        };
        if self.policy == Some(IncomeTranslation::YearToDate) {
            // Year by year, each ending 12 months apart before the fiscal year.
            let mut total = Decimal::ZERO;
            let mut end = p0;
            while end >= acquired {
                let start = end.plus_months(-11).max(acquired);
                if !known(&self.average_ytd, end) {
                    return None;
                }
                total += Self::at(cx, &self.average_ytd, fc, to(end) - to(start.prev()), end);
                end = end.plus_months(-12);
            }
            return Some(total);
        }
        let months = acquired.through(&p0);
        if !months.iter().all(|m| known(&self.average, *m)) {
            return None;
        }
        Some(months.into_iter().map(|m| Self::at(cx, &self.average, fc, to(m) - to(m.prev()), m)).sum())
    }
}

/// What the adjustments of `fair_value_adjustments.csv` lack or say that the close
/// cannot post, for a close at `period`: no acquisition row, an entity that is not
/// consolidated in full (an equity-accounted investee's adjustments are not supported),
/// accounts of the wrong statement, an amount beyond exact arithmetic at the acquisition
/// date's rate. A hyperinflationary entity's adjustments are restated (`post`); what the
/// close cannot restate of its acquisition, `restate::acquisition_findings` blocks.
pub fn findings(
    uplifts: &[Uplift],
    acquisitions: &[Acquisition],
    method_of: &dyn Fn(&EntityId) -> Option<Method>,
    statement_of: &dyn Fn(&GroupAccount) -> Option<Statement>,
) -> Vec<Finding> {
    let acq: BTreeMap<&EntityId, &Acquisition> = acquisitions.iter().map(|a| (&a.owned, a)).collect();
    let mut out = Vec::new();
    for u in uplifts {
        let at = |rule: Rule, message: String, action: &str| {
            Finding::new(rule, message, action).at(&u.source).entity(&u.owned)
        };
        let Some(a) = acq.get(&u.owned) else {
            out.push(at(
                Rule::AcquisitionMissing,
                format!(
                    "{}: a fair value adjustment on {} but entities/acquisitions.csv has no row for it",
                    u.owned, u.account
                ),
                "add the acquisition of the entity, or remove its adjustments",
            ));
            continue;
        };
        match method_of(&u.owned) {
            // Not consolidated (or outside the scope closed): nothing to post.
            // An equity-accounted investee's adjustments reduce the share of its result
            // (IAS 28.32(b), `equity_method.rs`).
            Some(Method::Full | Method::Equity | Method::None) | None => {}
            Some(m) => out.push(at(
                Rule::ValueInvalid,
                format!("{}: a fair value adjustment on {} of an entity consolidated by the {} method: only subsidiaries consolidated in full are supported", u.owned, u.account, m.as_str()),
                "remove the row; fair value adjustments of a joint operation's share are not supported: the close has no entry for the acquisition of a share in a joint operation (IFRS 11.21A) for them to belong to; post the adjustment and its depreciation in group_adjustments.csv",
            )),
        }
        if statement_of(&u.account) != Some(Statement::BalanceSheet) {
            out.push(at(
                Rule::AccountUnknown,
                format!("{}: `account` {} is not a balance-sheet account of entities/accounts.csv", u.owned, u.account),
                "name the group account of the asset or liability the fair value adjustment belongs to",
            ));
        }
        if let Some(x) = &u.expense_account
            && statement_of(x) != Some(Statement::ProfitOrLoss)
        {
            out.push(at(
                Rule::AccountUnknown,
                format!("{}: `expense_account` {x} is not a profit or loss account of entities/accounts.csv", u.owned),
                "name the profit or loss group account the depreciation is charged to",
            ));
        }
        // The close takes the adjustment at the acquisition date's rate as
        // amount x net_assets_presentation / net_assets, inside 28 digits.
        if u.amount
            .checked_mul(a.net_assets_presentation)
            .is_none_or(|p| p.abs() >= Decimal::from_i128_with_scale(10i128.pow(27), 0))
        {
            out.push(at(
                Rule::AmountTooLarge,
                format!("{}: `amount` {} times the acquisition's `net_assets_presentation` {} is not below 10^27, beyond exact arithmetic", u.owned, u.amount, a.net_assets_presentation),
                "check the amounts and their units; one of them is almost certainly a pasting or unit error",
            ));
        }
    }
    out
}

/// The depreciating adjustments the close posts for: of acquisitions of subsidiaries
/// consolidated in full, on a balance-sheet account, with a profit or loss expense
/// account, and not of a hyperinflationary entity unless its acquisition is restated
/// (`units`; without it `restate::acquisition_findings` or a missing index blocks).
fn postable<'u>(
    cx: &Context,
    (rates, units): (&ExpenseRates, &Units),
    a: &Acquisition,
    uplifts: &'u [Uplift],
) -> Vec<&'u Uplift> {
    uplifts
        .iter()
        .filter(|u| {
            u.owned == a.owned
                && u.life_months.is_some()
                && cx.in_statement(&u.account, Statement::BalanceSheet)
                && u.expense_account.as_ref().is_some_and(|x| cx.in_statement(x, Statement::ProfitOrLoss))
                && (rates.hyperinflationary.get(&u.owned).is_none_or(|from| *from > cx.period)
                    || units.contains_key(&u.owned))
        })
        .collect()
}

/// The IAS 29 restatement of each acquired hyperinflationary subsidiary
/// (`restate::acquisition_units`).
pub type Units = BTreeMap<EntityId, AcquisitionUnit>;

/// Posts one entry per depreciating adjustment of each subsidiary consolidated in full
/// with an acquisition record (the findings of [`findings`] are raised by the caller);
/// a hyperinflationary subsidiary's with its restatement (`units`, [`post_restated`]).
pub fn post(
    j: &mut Journal,
    cx: &Context,
    acquisitions: &[Acquisition],
    uplifts: &[Uplift],
    (rates, units): (&ExpenseRates, &Units),
) {
    let full: BTreeSet<&EntityId> =
        cx.of_method(Method::Full).filter(|e| &e.id != cx.structure.parent()).map(|e| &e.id).collect();
    for a in acquisitions.iter().filter(|a| full.contains(&a.owned)) {
        let Some(e) = cx.structure.entities().iter().find(|e| e.id == a.owned) else { continue };
        let Some(fc) = cx.currencies.get(&a.owned).copied() else { continue };
        for u in postable(cx, (rates, units), a, uplifts) {
            match units.get(&a.owned) {
                Some(unit) => post_restated(j, cx, unit, (e, a, fc), u),
                None => post_one(j, cx, rates, (e, a, fc), u),
            }
        }
    }
}

fn post_one(
    j: &mut Journal,
    cx: &Context,
    rates: &ExpenseRates,
    (e, a, fc): (&crate::structure::EntityStructure, &Acquisition, Currency),
    u: &Uplift,
) {
    let (Some(expense_account), Some(life)) = (&u.expense_account, u.life_months) else { return };
    let acquired = Period::of_date(a.date);
    let minor = fc.minor_unit();
    let to = |m: Period| depreciated_to(u, acquired, m, minor, cx.mode);
    let closing = |x: Decimal, p: Period| cx.at_closing(fc, x, p).unwrap_or_default();
    let now_fc = to(cx.period);
    let now = closing(now_fc, cx.period);
    // The opening close (before the translated year) has no year of its own: all of
    // the depreciation to date is earlier years'.
    let (opening, expense, earlier) = if cx.period < cx.translated_from {
        (now, Decimal::ZERO, rates.earlier_years(cx, fc, u, acquired, cx.period))
    } else {
        let p0 = cx.fiscal_start.prev();
        let first = if acquired > cx.fiscal_start { acquired } else { cx.fiscal_start };
        let expense = if first > cx.period { Decimal::ZERO } else { rates.expense_of_year(cx, fc, u, acquired, first) };
        (closing(to(p0), p0), expense, rates.earlier_years(cx, fc, u, acquired, p0))
    };
    // The earlier years' depreciation at the opening: in retained earnings as those
    // years expensed it, the rest (its retranslation since) in the translation reserve
    // where those years' OCI closed it (IAS 21.39-41), so that the opening is the prior
    // year's closing. Without the earlier months' rates, all of it at the opening's
    // closing rate in retained earnings.
    let (retained, reserve) = match earlier {
        Some(h) => (h, opening - h),
        None => (opening, Decimal::ZERO),
    };
    // Depreciation reduces the asset: a credit, and the exchange difference balances
    // the entry (a weaker currency shrinks the credit: a gain in OCI).
    let fx = now - opening - expense;
    let rule =
        if u.deferred_tax { EliminationRule::FairValueDeferredTax } else { EliminationRule::FairValueDepreciation };
    j.post(
        rule,
        cx.parent_of(e),
        vec![e.id.clone()],
        format!(
            "{} of {} on {}: {fc} {} over {life} months from {acquired}, {fc} {} to date",
            if u.deferred_tax {
                "release of the deferred tax on the fair value adjustment (IAS 12.19)"
            } else {
                "depreciation of the fair value adjustment"
            },
            e.id,
            u.account,
            money::format_amount(u.amount, minor),
            money::format_amount(now_fc, minor)
        ),
        [
            line(&u.account, &e.id, None, -now),
            line(&cx.roles.retained_earnings, &e.id, None, retained),
            line(&cx.roles.translation_reserve, &e.id, None, reserve),
            line(expense_account, &e.id, None, expense),
            line(&cx.roles.translation_difference, &e.id, None, fx),
        ]
        .into_iter()
        .filter(|l| !(l.amount.is_zero() && l.account == cx.roles.translation_reserve))
        .collect(),
    );
}

/// The depreciation of a hyperinflationary subsidiary's adjustment (IAS 29.15: the
/// adjustment is a non-monetary item of the operation, IAS 21.47), restated by the index
/// change since the acquisition month and depreciated on the restated amount:
/// - to date: `restated amount x months elapsed / life`, at the closing rate (IAS
///   21.42(a));
/// - the year's expense: the year's months of the restated amount, all in the unit of
///   the period end (IAS 29.26: expenses in the current unit; a charge on a restated
///   cost is the restated charge), also at the closing rate;
/// - earlier years', in retained earnings, as the opening carried them: on the amount
///   restated to the opening's unit, at the opening's closing rate;
/// - the rest, the restatement and translation of the earlier years' depreciation in
///   the year, is OCI, as the gross adjustment's is in the investment entry (the policy
///   applied: the combined effect is an exchange difference, IAS 21.41; from memory,
///   the IFRS Interpretations Committee's March 2020 agenda decision reads the same).
fn post_restated(
    j: &mut Journal,
    cx: &Context,
    unit: &AcquisitionUnit,
    (e, a, fc): (&crate::structure::EntityStructure, &Acquisition, Currency),
    u: &Uplift,
) {
    let (Some(expense_account), Some(life)) = (&u.expense_account, u.life_months) else { return };
    let acquired = Period::of_date(a.date);
    let minor = fc.minor_unit();
    let now_u = Uplift { amount: unit.now(u.amount, minor, cx.mode), ..u.clone() };
    let to = |x: &Uplift, m: Period| depreciated_to(x, acquired, m, minor, cx.mode);
    let closing = |x: Decimal, p: Period| cx.at_closing(fc, x, p).unwrap_or_default();
    let now_fc = to(&now_u, cx.period);
    let now = closing(now_fc, cx.period);
    let p0 = cx.fiscal_start.prev();
    let (opening, expense) = if cx.period < cx.translated_from {
        (now, Decimal::ZERO)
    } else {
        let opening_u = Uplift { amount: unit.opening(u.amount, minor, cx.mode), ..u.clone() };
        (closing(to(&opening_u, p0), p0), closing(now_fc - to(&now_u, p0), cx.period))
    };
    let fx = now - opening - expense;
    let rule =
        if u.deferred_tax { EliminationRule::FairValueDeferredTax } else { EliminationRule::FairValueDepreciation };
    j.post(
        rule,
        cx.parent_of(e),
        vec![e.id.clone()],
        format!(
            "{} of {} on {}, restated (IAS 29): {fc} {} over {life} months from {acquired}, {fc} {} in the unit of {} ({} / {}), {fc} {} to date",
            if u.deferred_tax {
                "release of the deferred tax on the fair value adjustment (IAS 12.19)"
            } else {
                "depreciation of the fair value adjustment"
            },
            e.id,
            u.account,
            money::format_amount(u.amount, minor),
            money::format_amount(now_u.amount, minor),
            cx.period,
            unit.now.normalize(),
            unit.then.normalize(),
            money::format_amount(now_fc, minor)
        ),
        vec![
            line(&u.account, &e.id, None, -now),
            line(&cx.roles.retained_earnings, &e.id, None, opening),
            line(expense_account, &e.id, None, expense),
            line(&cx.roles.translation_difference, &e.id, None, fx),
        ],
    );
}

#[cfg(test)]
mod tests {
    use super::super::context::fixture::*;
    use super::*;
    use crate::load::Quote;

    fn usd() -> Currency {
        Currency::parse("USD").unwrap_or_else(|| panic!("USD"))
    }

    fn rate(x: &str) -> Rate {
        Rate { value: d(x), quote: Quote::UnitsPerPresentation }
    }

    fn plant(amount: &str, life: Option<u32>) -> Uplift {
        Uplift {
            owned: id("S"),
            account: acct("1600"),
            amount: d(amount),
            life_months: life,
            expense_account: life.map(|_| acct("5000")),
            deferred_tax: false,
            source: Source::file("entities/fair_value_adjustments.csv"),
        }
    }

    fn acquired(date: &str) -> Acquisition {
        Acquisition {
            owned: id("S"),
            date: chrono::NaiveDate::parse_from_str(date, "%Y-%m-%d").unwrap_or_default(),
            consideration: d("1000"),
            nci_measurement: NciMeasurement::ShareOfNetAssets,
            nci_fair_value: None,
            net_assets: d("1000"),
            net_assets_presentation: d("500"),
            impairment: Decimal::ZERO,
            impairment_year: Decimal::ZERO,
            fair_value_adjustment: Decimal::ZERO,
            fair_value_account: None,
            source: Source::file("entities/acquisitions.csv"),
        }
    }

    /// The fixture's world with a plant account 1600 in the chart.
    fn world(from: &str, period: &str) -> World {
        let mut w = World::new(&["P", "S"], &[holding("P", "S", "0.8", from)], p(period));
        w.chart.push(AccountDef {
            account: acct("1600"),
            name: "Plant".into(),
            statement: Statement::BalanceSheet,
            class: AccountClass::Asset,
            basis: Basis::Closing,
            ic_kind: None,
            non_current: true,
            reserve: None,
            monetary: None,
            source: Source::file("entities/accounts.csv"),
        });
        w
    }

    fn rates(averages: &[(&str, &str)]) -> ExpenseRates {
        ExpenseRates {
            average: averages.iter().map(|(m, r)| ((usd(), p(m)), rate(r))).collect(),
            policy: Some(IncomeTranslation::Periodic),
            ..ExpenseRates::default()
        }
    }

    /// Straight line in whole months of the functional currency, the acquisition month
    /// counted whole, capped at the life: USD 1,200 over 12 months from 2025-10 is 100
    /// a month, 300 to 2025-12, 1,200 from 2026-09 on. A charge that does not divide is
    /// rounded on the total to date, so the charges add up to the amount: USD 1,000
    /// over 3 months is 333.33, 666.67, 1,000 (charges 333.33, 333.34, 333.33).
    #[test]
    fn depreciation_to_date_is_straight_line_from_the_acquisition_month() {
        let (oct, mode) = (p("2025-10"), RoundingMode::HalfAwayFromZero);
        let u = plant("1200", Some(12));
        let to = |m: &str| depreciated_to(&u, oct, p(m), 2, mode);
        assert_eq!((to("2025-09"), to("2025-10"), to("2025-12")), (d("0"), d("100"), d("300")));
        assert_eq!((to("2026-09"), to("2026-12")), (d("1200"), d("1200")));
        let v = plant("1000", Some(3));
        let to = |m: &str| depreciated_to(&v, oct, p(m), 2, mode);
        assert_eq!((to("2025-10"), to("2025-11"), to("2025-12")), (d("333.33"), d("666.67"), d("1000")));
        assert_eq!(depreciated_to(&plant("1000", None), oct, p("2026-06"), 2, mode), d("0"));
    }

    /// Acquired 2026-04-15 (a whole month: April counts), plant uplift USD 1,200 over
    /// 60 months: USD 20 a month. Closing at 2026-06 (rate 2.5 USD per EUR): April 20 at
    /// the average 2.0 = 10, May 20 / 2.5 = 8, June 20 / 4.0 = 5: expense EUR 23.
    /// Depreciation to date USD 60 / 2.5 = EUR 24 off the plant. No earlier years. The
    /// exchange difference 24 - 23 = 1 is a loss in OCI (the accumulated depreciation,
    /// a credit, is worth more at the closing rate than it was charged at).
    /// Lines: 1600 S -24, 5000 S +23, 9000 S +1; -24 + 23 + 1 = 0.
    #[test]
    fn the_year_of_acquisition_at_the_months_averages() {
        let w = world("2026-04-15", "2026-06");
        let mut cx = w.context(p("2026-06"), p("2026-01"), Default::default());
        cx.closing.insert((usd(), p("2026-06")), rate("2.5"));
        let r = rates(&[("2026-04", "2"), ("2026-05", "2.5"), ("2026-06", "4")]);
        let mut j = Journal::default();
        post(&mut j, &cx, &[acquired("2026-04-15")], &[plant("1200", Some(60))], (&r, &Units::new()));
        assert_eq!(j.entries.len(), 1);
        assert_eq!(j.entries[0].rule, EliminationRule::FairValueDepreciation);
        assert_eq!(
            lines(&j.entries[0]),
            [
                ("1600".into(), "S".into(), "-24".into()),
                ("5000".into(), "S".into(), "23".into()),
                ("9000".into(), "S".into(), "1".into())
            ]
        );
    }

    /// Acquired 2025-10-01, USD 1,200 over 12 months: USD 100 a month. Closing 2026-03
    /// (2.5). Earlier years: Oct-Dec 2025, USD 300 at the opening rate 2.0 = EUR 150 in
    /// retained earnings. The year: January 100 / 2 = 50, February 100 / 2 = 50, March
    /// 100 / 2.5 = 40: EUR 140. To date USD 600 / 2.5 = EUR 240 off the plant. OCI
    /// 240 - 150 - 140 = -50, a gain: the dollar fell, the credit shrank.
    /// Lines: 1600 -240, 3200 +150, 5000 +140, 9000 -50. Under the year-to-date policy
    /// the year's USD 300 is at the year-to-date average 2.4: EUR 125, OCI -35.
    #[test]
    fn earlier_years_at_the_opening_rate_and_the_year_at_its_averages() {
        let w = world("2025-10-01", "2026-03");
        let mut cx = w.context(p("2026-03"), p("2026-01"), Default::default());
        cx.closing.insert((usd(), p("2026-03")), rate("2.5"));
        let mut r = rates(&[("2026-01", "2"), ("2026-02", "2"), ("2026-03", "2.5")]);
        let post_lines = |r: &ExpenseRates| {
            let mut j = Journal::default();
            let units = Units::new();
            post(&mut j, &cx, &[acquired("2025-10-01")], &[plant("1200", Some(12)), plant("700", None)], (r, &units));
            assert_eq!(j.entries.len(), 1, "land is not depreciated");
            lines(&j.entries[0])
        };
        assert_eq!(
            post_lines(&r),
            [
                ("1600".into(), "S".into(), "-240".into()),
                ("3200".into(), "S".into(), "150".into()),
                ("5000".into(), "S".into(), "140".into()),
                ("9000".into(), "S".into(), "-50".into())
            ]
        );
        r.policy = Some(IncomeTranslation::YearToDate);
        r.average_ytd.insert((usd(), p("2026-03")), rate("2.4"));
        assert_eq!(
            post_lines(&r)[2..],
            [("5000".into(), "S".into(), "125".into()), ("9000".into(), "S".into(), "-35".into())]
        );
    }

    /// What the file's rows lack: no acquisition, an equity-accounted investee, a
    /// plant account that is profit or loss, an expense account on the balance sheet,
    /// A clean row has none, a hyperinflationary entity's too (its adjustments are
    /// restated, `post_restated`).
    #[test]
    fn findings_name_what_an_adjustment_lacks() {
        let statement = |a: &GroupAccount| match a.as_str() {
            "1600" => Some(Statement::BalanceSheet),
            "5000" => Some(Statement::ProfitOrLoss),
            _ => None,
        };
        let full = |_: &EntityId| Some(Method::Full);
        let equity = |_: &EntityId| Some(Method::Equity);
        let a = [acquired("2026-04-01")];
        let rules = |u: Uplift, acq: &[Acquisition], m: &dyn Fn(&EntityId) -> Option<Method>| {
            findings(&[u], acq, m, &statement).iter().map(|f| f.rule).collect::<Vec<_>>()
        };
        assert!(rules(plant("1200", Some(60)), &a, &full).is_empty());
        assert_eq!(rules(plant("1200", Some(60)), &[], &full), [Rule::AcquisitionMissing]);
        // An investee's adjustments reduce the share of its result (`equity_method.rs`);
        // a joint operation's are not supported.
        assert!(rules(plant("1200", Some(60)), &a, &equity).is_empty());
        let proportionate = |_: &EntityId| Some(Method::Proportionate);
        assert_eq!(rules(plant("1200", Some(60)), &a, &proportionate), [Rule::ValueInvalid]);
        let mut u = plant("1200", Some(60));
        (u.account, u.expense_account) = (acct("5000"), Some(acct("1600")));
        assert_eq!(rules(u, &a, &full), [Rule::AccountUnknown, Rule::AccountUnknown]);
    }

    /// Deferred tax at 25% on the plant uplift of `the_year_of_acquisition...`: a
    /// companion adjustment of USD -300 on the deferred tax account (2500), released
    /// through the tax expense account (8000) with the same 60 months: USD -5 a month.
    /// April -5 / 2.0 = -2.50, May -5 / 2.5 = -2.00, June -5 / 4.0 = -1.25: tax income
    /// 5.75; to date USD -15 / 2.5 = -6 off the liability (a debit of 6); OCI
    /// -6 + 5.75 = -0.25, a quarter of the depreciation's 1 with the opposite sign.
    /// Lines: 2500 S +6, 8000 S -5.75, 9000 S -0.25. Without a rate there is none.
    #[test]
    fn the_deferred_tax_on_an_uplift_is_released_with_its_depreciation() {
        let w = world("2026-04-15", "2026-06");
        let mut cx = w.context(p("2026-06"), p("2026-01"), Default::default());
        cx.closing.insert((usd(), p("2026-06")), rate("2.5"));
        let mut chart = w.chart.clone();
        for (a, statement, class) in [
            ("2500", Statement::BalanceSheet, AccountClass::Liability),
            ("8000", Statement::ProfitOrLoss, AccountClass::Expense),
        ] {
            chart.push(AccountDef {
                account: acct(a),
                name: a.into(),
                statement,
                class,
                basis: Basis::Closing,
                ic_kind: None,
                non_current: false,
                reserve: None,
                monetary: None,
                source: Source::file("entities/accounts.csv"),
            });
        }
        cx.chart = chart.iter().map(|a| (&a.account, a)).collect();
        let r = rates(&[("2026-04", "2"), ("2026-05", "2.5"), ("2026-06", "4")]);
        let tax =
            DeferredTax { rates: BTreeMap::from([(id("S"), d("0.25"))]), account: acct("2500"), expense: acct("8000") };
        let a = [acquired("2026-04-15")];
        let all = all_uplifts(&a, &[plant("1200", Some(60))], Some(&tax));
        assert_eq!(all.len(), 2);
        assert_eq!((all[1].amount, all[1].deferred_tax, all[1].life_months), (d("-300"), true, Some(60)));
        let mut j = Journal::default();
        post(&mut j, &cx, &a, &all, (&r, &Units::new()));
        assert_eq!(j.entries.len(), 2);
        assert_eq!(j.entries[1].rule, EliminationRule::FairValueDeferredTax);
        assert_eq!(
            lines(&j.entries[1]),
            [
                ("2500".into(), "S".into(), "6".into()),
                ("8000".into(), "S".into(), "-5.75".into()),
                ("9000".into(), "S".into(), "-0.25".into())
            ]
        );
        let no_rate = DeferredTax { rates: BTreeMap::new(), ..tax };
        assert_eq!(all_uplifts(&a, &[plant("1200", Some(60))], Some(&no_rate)).len(), 1);
    }

    /// A hyperinflationary subsidiary's plant uplift of 160, 20 months' life from
    /// 2025-07, restated from the acquisition month's index 80 (IAS 29.15): 200 at the
    /// opening (index 100), 240 at 2026-02 (index 120); EUR per unit 0.10 at the
    /// opening, 0.05 now (IAS 21.42(a)). To date 240 x 8/20 = 96 x 0.05 = 4.80 off the
    /// asset; earlier years' as the opening carried them, 200 x 6/20 = 60 x 0.10 = 6.00;
    /// the year's expense on the restated amount, 240 x 2/20 = 24 x 0.05 = 1.20; OCI
    /// 4.80 - 6.00 - 1.20 = -2.40. Worked by hand (tests/cases/
    /// hyperinflationary-subsidiary-acquired-ias29 has the same figures). Without the
    /// restatement the entity's depreciation is not posted (its finding blocks).
    #[test]
    fn a_restated_uplift_is_depreciated_on_its_restated_amount() {
        let w = world("2025-07-01", "2026-02");
        let mut cx = w.context(p("2026-02"), p("2026-01"), Default::default());
        let per_unit = |x: &str| Rate { value: d(x), quote: Quote::PresentationPerUnit };
        cx.closing.insert((usd(), p("2025-12")), per_unit("0.10"));
        cx.closing.insert((usd(), p("2026-02")), per_unit("0.05"));
        let unit = AcquisitionUnit { then: d("80"), now: d("120"), opening: Some(d("100")) };
        let mut r = ExpenseRates::default();
        r.hyperinflationary.insert(id("S"), p("2025-01"));
        let a = [acquired("2025-07-01")];
        let uplift = [plant("160", Some(20))];
        let mut j = Journal::default();
        post(&mut j, &cx, &a, &uplift, (&r, &Units::from([(id("S"), unit)])));
        assert_eq!(j.entries.len(), 1);
        assert_eq!(
            lines(&j.entries[0]),
            [
                ("1600".into(), "S".into(), "-4.8".into()),
                ("3200".into(), "S".into(), "6".into()),
                ("5000".into(), "S".into(), "1.2".into()),
                ("9000".into(), "S".into(), "-2.4".into())
            ]
        );
        let mut j = Journal::default();
        post(&mut j, &cx, &a, &uplift, (&r, &Units::new()));
        assert!(j.entries.is_empty());
    }
}

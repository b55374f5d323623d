//! Rule `investment_and_goodwill`: for every subsidiary consolidated in full with an
//! acquisition record, the holders' investment is eliminated against the equity at
//! acquisition, and goodwill recognised (IFRS 3.32), held in the subsidiary's currency
//! at the closing rate (IAS 21.47), with its impairment to date (IAS 36.124), a bargain
//! purchase gain (IFRS 3.34), the fair value adjustments (IFRS 3.18) and the NCI at
//! acquisition (IFRS 3.19) in the same entry. The exchange differences (on goodwill, on
//! the fair value adjustment, on the holders' translated investments) close the entry:
//! this year's part to OCI, the part brought forward to the reserve. A hyperinflationary
//! subsidiary's acquisition amounts are first restated from the acquisition month
//! ([`restated`], IAS 29.24-25) and so are at the closing rate (IAS 21.42(a)).
//!
//! The entry is built in named steps: [`measure`] (goodwill and bargain in the
//! subsidiary's currency), [`findings`] (what the acquisition record lacks, raised by
//! `check` too), then the lines: investments, equity acquired, goodwill and NCI,
//! impairment, exchange differences, and the NCI's part of full goodwill.

use std::collections::{BTreeMap, BTreeSet};

use polars::prelude::*;
use rust_decimal::Decimal;

use super::context::Context;
use super::impairment::Dated;
use super::journal::{EliminationRule, EntryLine, Journal, line};
use crate::findings::{Finding, Rule, Severity};
use crate::map_accounts::period_index;
use crate::model::*;
use crate::money::{self, column_decimals};
use crate::restate::AcquisitionUnit;
use crate::structure::EntityStructure;
use crate::translate::Translated;

/// Investment lines in the balances: owned subsidiary -> (holder, account, carrying
/// amount).
pub type Investments = BTreeMap<EntityId, Vec<(EntityId, GroupAccount, Decimal)>>;

/// Per month: (movement, balance) in the local currency and balance in the presentation
/// currency of one investment line.
pub type LineMonths = BTreeMap<i32, (Decimal, Decimal, Decimal)>;

/// The translated investment lines (holder, account, owned) of the fiscal year, by month.
pub type InvestmentMonths = BTreeMap<(EntityId, GroupAccount, EntityId), LineMonths>;

/// What other files add to the acquisition records.
#[derive(Debug, Default)]
pub struct Records<'r> {
    /// The fair value adjustments of `fair_value_adjustments.csv`.
    pub uplifts: &'r [Uplift],
    /// The goodwill impairments by month, per entity (`impairment::dated`).
    pub impairments: BTreeMap<EntityId, Vec<Dated>>,
    /// The named reserves' balances at acquisition of `reserves_at_acquisition.csv`.
    pub reserves: &'r [ReserveAtAcquisition],
    /// The IAS 29 restatement of each acquired hyperinflationary subsidiary
    /// (`restate::acquisition_units`).
    pub units: BTreeMap<EntityId, AcquisitionUnit>,
}

/// What the NCI rule (`nci.rs`) reads of this one, per subsidiary (or per holder).
#[derive(Debug, Default)]
pub struct ForNci {
    /// The equity at acquisition the entry removed, in the presentation currency.
    pub pre_acquisition: BTreeMap<EntityId, Decimal>,
    /// The NCI's exchange difference of the year on its part of full goodwill.
    pub nci_goodwill_oci: BTreeMap<EntityId, Decimal>,
    /// Fair value adjustments at the closing rate.
    pub fair_value_now: BTreeMap<EntityId, Decimal>,
    /// Their exchange difference of the year.
    pub fair_value_oci: BTreeMap<EntityId, Decimal>,
    /// The NCI's share of this fiscal year's goodwill impairment, under full goodwill.
    pub nci_impairment_year: BTreeMap<EntityId, Decimal>,
    /// This fiscal year's exchange difference on each holder's eliminated investments in
    /// subsidiaries, per holder.
    pub investment_fx: BTreeMap<EntityId, Decimal>,
    /// The NCI at acquisition in the presentation currency, credit positive: what the
    /// statement of changes in equity shows on acquisition, before the later movements
    /// the same entry carries (the NCI's part of full goodwill's exchange difference and
    /// impairment, which are its OCI and profit).
    pub nci_at_acquisition: BTreeMap<EntityId, Decimal>,
    /// What the entry posts to the translation reserve (debit positive) that is the
    /// subsidiary's own and so shared with the NCI (IAS 21.41): its reserve at
    /// acquisition removed as equity acquired, and the exchange differences to date on
    /// the fair value adjustments (`nci.rs` adds its books and later rules' lines).
    pub reserve_shared: BTreeMap<EntityId, Decimal>,
    /// Under full goodwill, the NCI's exchange difference to date on its part of
    /// goodwill (credit positive), which the entry takes from retained earnings and the
    /// NCI rule moves to the translation reserve, where the difference is.
    pub nci_goodwill_fx: BTreeMap<EntityId, Decimal>,
}

/// The investment lines of the balances: accounts of kind `investment` naming the
/// subsidiary as counterparty.
pub fn investments(cx: &Context) -> Investments {
    let mut invest = Investments::new();
    for (ent, accts) in &cx.balances {
        for ((acct, cp), amount) in accts {
            if let Some(cp) = cp
                && cx.kind_of(acct) == Some("investment")
            {
                invest.entry(cp.clone()).or_default().push((ent.clone(), acct.clone(), *amount));
            }
        }
    }
    invest
}

/// The translated investment lines of the fiscal year to the period, by month, read in
/// one pass over the translated lines.
pub fn investment_months(t: &Translated, cx: &Context, invest: &Investments) -> PolarsResult<InvestmentMonths> {
    let accounts: BTreeSet<&GroupAccount> = invest.values().flatten().map(|(_, a, _)| a).collect();
    let mut out = InvestmentMonths::new();
    let Some(is_investment) = accounts.iter().map(|a| col("group_account").eq(lit(a.as_str()))).reduce(|x, y| x.or(y))
    else {
        return Ok(out);
    };
    let p = period_index(cx.period);
    let p0 = period_index(cx.fiscal_start.prev());
    let df = t
        .lines
        .clone()
        .lazy()
        .filter(
            is_investment
                .and(col("counterparty").is_not_null())
                .and(col("period_index").gt_eq(lit(p0)))
                .and(col("period_index").lt_eq(lit(p))),
        )
        .group_by([col("entity"), col("group_account"), col("counterparty"), col("period_index")])
        .agg([col("amount_local").sum(), col("balance_local").sum(), col("balance_presentation").sum()])
        .collect()?;
    let ent = money::column_strings(&df, "entity")?;
    let acct = money::column_strings(&df, "group_account")?;
    let cp = money::column_strings(&df, "counterparty")?;
    let idx: Vec<Option<i32>> = df.column("period_index")?.i32()?.iter().collect();
    let al = column_decimals(df.column("amount_local")?)?;
    let bl = column_decimals(df.column("balance_local")?)?;
    let bp = column_decimals(df.column("balance_presentation")?)?;
    for i in 0..df.height() {
        let (Some(e), Some(a), Some(c), Some(m)) = (&ent[i], &acct[i], &cp[i], idx[i]) else { continue };
        out.entry((EntityId::new(e), GroupAccount::new(a), EntityId::new(c)))
            .or_default()
            .insert(m, (al[i].unwrap_or_default(), bl[i].unwrap_or_default(), bp[i].unwrap_or_default()));
    }
    Ok(out)
}

/// This fiscal year's exchange difference on one holder's translated investment in one
/// subsidiary: month by month, the change in the translated balance less the month's
/// local movement at the month's rate (the translated balance over the local balance,
/// the closing rate of a closing-basis account). One held at the opening starts from its
/// translation at the opening. One acquired this year enters at its translation at
/// acquisition: `acquired` names the month and translates at the acquisition date's
/// rate, given where the holder's currency is the subsidiary's; otherwise it enters at
/// the month's closing rate. In the presentation currency the difference is 0. A month
/// that takes the balance to zero (a disposal) adds no difference; the rest is the
/// holder's own. The holder's translation difference of the year holds exactly this
/// amount for the investment, which the subsidiary's own translation difference
/// replaces in the group.
pub fn investment_fx_year(
    cx: &Context,
    by_month: Option<&LineMonths>,
    acquired: Option<(Period, &dyn Fn(Decimal) -> Decimal)>,
) -> Decimal {
    let p = period_index(cx.period);
    let p0 = period_index(cx.fiscal_start.prev());
    let empty = LineMonths::new();
    let by_month = by_month.unwrap_or(&empty);
    let mut fx = Decimal::ZERO;
    let mut before = by_month.get(&p0).map(|x| x.2).unwrap_or_default();
    for m in (p0 + 1)..=p {
        let (amount_local, balance_local, balance_pres) = by_month.get(&m).copied().unwrap_or_default();
        if !balance_local.is_zero() {
            let movement = match acquired {
                Some((month, at_acquisition)) if period_index(month) == m => at_acquisition(amount_local),
                _ => money::round(amount_local * balance_pres / balance_local, cx.minor, cx.mode),
            };
            fx += balance_pres - before - movement;
        }
        before = balance_pres;
    }
    fx
}

/// Goodwill and the NCI at acquisition in the subsidiary's currency.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct Measured {
    /// The direct outside share of the capital.
    pub outside: Decimal,
    pub nci_fc: Decimal,
    /// Consideration + NCI - net assets - impairment, before a bargain purchase gain.
    pub goodwill_fc: Decimal,
    /// The bargain purchase gain recognised (0 when there is none, or no account to
    /// recognise it on).
    pub bargain_fc: Decimal,
    pub bargain_account: Option<GroupAccount>,
    /// A bargain purchase in the acquisition year with no account for the gain.
    pub bargain_account_missing: bool,
    /// An NCI fair value given for a subsidiary without outside shareholders.
    pub fair_value_without_nci: bool,
}

/// Goodwill (IFRS 3.32), the NCI at acquisition (IFRS 3.19) and a bargain purchase
/// (IFRS 3.34) of one acquisition, in the subsidiary's currency.
pub fn measure(e: &EntityStructure, a: &Acquisition, fiscal_start: Period, roles: &RoleAccounts) -> Measured {
    // NCI at acquisition: the direct outside share of net assets, or fair value.
    let outside = Decimal::ONE - e.group_capital;
    // A fair value for an NCI that does not exist would put an NCI in the trial
    // balance that no NCI row explains: it blocks, and nothing is posted for it.
    let fair_value_without_nci = outside.is_zero() && a.nci_fair_value.is_some_and(|x| !x.is_zero());
    let nci_fc = match a.nci_measurement {
        _ if outside.is_zero() => Decimal::ZERO,
        NciMeasurement::FairValue => a.nci_fair_value.unwrap_or_default(),
        NciMeasurement::ShareOfNetAssets => a.net_assets * outside,
    };
    let goodwill_fc = a.consideration + nci_fc - a.net_assets - a.impairment;
    // A bargain purchase (IFRS 3.34): the excess of the net assets over consideration
    // and NCI is a gain of the acquirer at the acquisition date, not negative goodwill.
    // It is measured once, at the acquisition date's rate, and belongs to the owners of
    // the parent (the NCI is measured by its own basis, IFRS 3.19).
    let gross_goodwill_fc = goodwill_fc + a.impairment;
    let bargain_fc = if gross_goodwill_fc.is_sign_negative() { -gross_goodwill_fc } else { Decimal::ZERO };
    let in_acquisition_year = Period::of_date(a.date) >= fiscal_start;
    let (bargain_account, bargain_account_missing) = if bargain_fc.is_zero() {
        (None, false)
    } else if in_acquisition_year {
        // In the acquisition year the gain is profit of the year; later it is part of
        // retained earnings.
        (roles.bargain_purchase_gain.clone(), roles.bargain_purchase_gain.is_none())
    } else {
        (Some(roles.retained_earnings.clone()), false)
    };
    let bargain_fc = if bargain_account.is_some() { bargain_fc } else { Decimal::ZERO };
    Measured {
        outside,
        nci_fc,
        goodwill_fc,
        bargain_fc,
        bargain_account,
        bargain_account_missing,
        fair_value_without_nci,
    }
}

/// What one subsidiary's acquisition record lacks or says that needs a look, in the
/// order the close has always listed them. `held`: some entity carries an investment in
/// it. `check` raises the same findings.
pub fn findings(
    e: &EntityStructure,
    a: Option<&Acquisition>,
    held: bool,
    currency: Currency,
    fiscal_start: Period,
    roles: &RoleAccounts,
    chart: &dyn Fn(&GroupAccount) -> Option<Statement>,
) -> Vec<Finding> {
    let Some(a) = a else {
        return if held { vec![acquisition_missing(&e.id)] } else { Vec::new() };
    };
    let m = measure(e, a, fiscal_start, roles);
    let fc = currency;
    let mut out = Vec::new();
    if m.fair_value_without_nci {
        out.push(
            Finding::new(
                Rule::ValueInvalid,
                format!(
                    "{}: `nci_fair_value` is {} {} but the parent and its subsidiaries hold a capital share of {} in {}: there is no non-controlling interest",
                    e.id,
                    fc,
                    a.nci_fair_value.unwrap_or_default(),
                    e.group_capital.normalize(),
                    e.id
                ),
                "leave `nci_fair_value` empty and measure `share_of_net_assets` for a wholly owned subsidiary, or correct the holding in entities/holdings.csv if outside shareholders exist",
            )
            .at(&a.source)
            .entity(&e.id),
        );
    }
    if m.bargain_account_missing {
        out.push(
            Finding::new(
                Rule::SettingInvalid,
                format!(
                    "{}: the acquisition on {} is a bargain purchase but group.toml names no `accounts.bargain_purchase_gain`",
                    e.id, a.date
                ),
                "name the profit or loss account for the gain on a bargain purchase as `bargain_purchase_gain` in [accounts] (IFRS 3.34)",
            )
            .at(&a.source)
            .entity(&e.id),
        );
    }
    if m.goodwill_fc.is_sign_negative() {
        out.push(goodwill_negative(e, a, &m, fc));
    }
    if let Some(acct) = &a.fair_value_account
        && !a.fair_value_adjustment.is_zero()
        && chart(acct) != Some(Statement::BalanceSheet)
    {
        out.push(
            Finding::new(
                Rule::AccountUnknown,
                format!(
                    "{}: `fair_value_account` {acct} is not a balance-sheet account of entities/accounts.csv",
                    e.id
                ),
                "name the group account of the asset or liability the fair value adjustment belongs to",
            )
            .at(&a.source)
            .entity(&e.id),
        );
    }
    if roles.goodwill_impairment.is_none() && !a.impairment_year.is_zero() {
        out.push(
            Finding::new(
                Rule::SettingInvalid,
                format!(
                    "{}: `impairment_year` is {} but group.toml names no `accounts.goodwill_impairment`",
                    e.id, a.impairment_year
                ),
                "name the expense account for goodwill impairment in [accounts]",
            )
            .at(&a.source)
            .entity(&e.id),
        );
    }
    out
}

/// A proportionately consolidated entity (a joint operation, IFRS 11.20) that a
/// consolidated entity holds on an investment account: the close takes the group's share
/// of its lines but has no entry eliminating the holder's investment against that share
/// of its equity at acquisition (IFRS 11.21A applies IFRS 3 to the share acquired), so
/// both would count. Blocking; `check` raises it too.
pub fn joint_operation_held(e: &EntityId) -> Finding {
    Finding::new(
        Rule::ValueInvalid,
        format!(
            "{e} is consolidated proportionately (a joint operation, IFRS 11.20) and held on an investment account, but the close does not eliminate an investment in a joint operation against its share of the equity: the two would both be counted"
        ),
        "book the holder's interest in the joint operation on an account that is not of kind `investment` and post its elimination against the share of the equity at acquisition (with any goodwill or fair value adjustment of the share, IFRS 11.21A) in group_adjustments.csv, or declare the arrangement as it is (a joint venture is equity-accounted, IFRS 11.24)",
    )
    .entity(e)
}

fn acquisition_missing(e: &EntityId) -> Finding {
    Finding::new(
        Rule::AcquisitionMissing,
        format!("{e} is consolidated and held as an investment, but entities/acquisitions.csv has no row for it"),
        "add its acquisition: date, consideration, NCI measurement and net assets at acquisition",
    )
    .entity(e)
}

fn goodwill_negative(e: &EntityStructure, a: &Acquisition, m: &Measured, fc: Currency) -> Finding {
    Finding::new(
        Rule::GoodwillNegative,
        format!(
            "{}: consideration {} + NCI {} - net assets {} = {} {} is negative: a bargain purchase{}",
            e.id,
            a.consideration,
            m.nci_fc.round_dp(fc.minor_unit()),
            a.net_assets,
            fc,
            m.goodwill_fc.round_dp(fc.minor_unit()),
            match &m.bargain_account {
                Some(acct) => format!(
                    ", recognised as a gain of {} {} on {acct} at {} (IFRS 3.34)",
                    fc,
                    m.bargain_fc.round_dp(fc.minor_unit()),
                    a.date
                ),
                None => String::new(),
            }
        ),
        "before keeping the gain, reassess whether every asset acquired and liability assumed is identified, and review the measurement of the net assets, the NCI and the consideration (IFRS 3.36)",
    )
    .at(&a.source)
    .entity(&e.id)
    .severity(Severity::Warning)
}

/// One subsidiary's acquisition as the entry is built: the record (at the opening,
/// without this year's impairment), its currency and measurement.
struct Acquired<'c, 'a> {
    cx: &'c Context<'a>,
    e: &'c EntityStructure,
    a: Acquisition,
    fc: Currency,
    m: Measured,
    /// Its fair value adjustments (`fair_value::uplifts_of`).
    uplifts: Vec<Uplift>,
    /// Its goodwill impairments by month; empty when the record's undated columns hold
    /// them.
    dated: Vec<Dated>,
    /// Its named reserves' balances at acquisition given in `reserves_at_acquisition.csv`.
    reserves: Vec<ReserveAtAcquisition>,
    /// A hyperinflationary subsidiary's restatement: `a` and `uplifts` are then in the
    /// unit of the period end ([`restated`]), and `recorded` holds the record's net
    /// assets in its currency and in the presentation currency (the acquisition date's
    /// rate).
    unit: Option<AcquisitionUnit>,
    recorded: Option<(Decimal, Decimal)>,
}

/// One fair value adjustment in the entry: account, amount in the subsidiary's
/// currency, at the acquisition rate, at the closing rate.
type FairValueLine = (GroupAccount, Decimal, Decimal, Decimal);

impl Acquired<'_, '_> {
    /// In the presentation currency at the closing rate of `p` (0 without a rate: the
    /// rate check of `validate` has already blocked such a close).
    fn to_pres(&self, x: Decimal, p: Period) -> Decimal {
        self.cx.at_closing(self.fc, x, p).unwrap_or_default()
    }

    /// At the acquisition date's rate, the ratio of the net assets in the two
    /// currencies. Multiplied before dividing, so that a share of the net assets is
    /// exact and rounds once (the ratio alone need not terminate in 28 digits).
    fn at_hist(&self, x: Decimal) -> Decimal {
        if self.a.net_assets.is_zero() {
            self.cx.round(x)
        } else {
            self.cx.round(x * self.a.net_assets_presentation / self.a.net_assets)
        }
    }

    /// Goodwill after a bargain purchase gain: with the gain recognised there is none.
    fn goodwill_fc(&self) -> Decimal {
        self.m.goodwill_fc + self.m.bargain_fc
    }

    /// The fair value adjustments on balance-sheet accounts, each at its full amount
    /// (its depreciation is the rule `fair_value_depreciation`'s).
    fn fair_values(&self) -> Vec<FairValueLine> {
        self.uplifts
            .iter()
            .filter(|u| !u.amount.is_zero() && self.cx.in_statement(&u.account, Statement::BalanceSheet))
            .map(|u| (u.account.clone(), u.amount, self.at_hist(u.amount), self.to_pres(u.amount, self.cx.period)))
            .collect()
    }

    /// `share` of the goodwill impairment to date (or of this fiscal year's only) in the
    /// presentation currency: each dated impairment at the rate of its month, fixed
    /// once recognised; the record's undated columns at the closing rate.
    fn impairment_pres(&self, share: Decimal, year_only: bool) -> Decimal {
        if self.dated.is_empty() {
            let x = if year_only { self.a.impairment_year } else { self.a.impairment };
            return self.to_pres(share * x, self.cx.period);
        }
        self.dated.iter().filter(|d| d.in_year || !year_only).map(|d| d.at_rate(self.cx, share * d.amount)).sum()
    }

    /// This fiscal year's exchange difference on `share` of goodwill (`gross_fc`,
    /// before impairment), and the difference to date: the change of its carrying
    /// amount at the closing rate, from the opening (or the acquisition) to now, less
    /// what the impairments took out of it at their own rates. Undated impairments are
    /// at the closing rate, so the difference is that of the gross goodwill.
    fn goodwill_fx(&self, gross_fc: Decimal, share: Decimal) -> (Decimal, Decimal) {
        let (cx, a) = (self.cx, &self.a);
        let hist = self.at_hist(gross_fc);
        if self.dated.is_empty() {
            let now = self.to_pres(gross_fc, cx.period);
            let year = self
                .opening_period()
                .map(|p0| now - self.to_pres(self.at_opening(gross_fc), p0))
                .unwrap_or_else(|| now - self.at_acquisition(gross_fc));
            // Restated goodwill is carried at the restated amount at the closing rate, as
            // the NCI at acquisition is: nothing of it is left at an earlier rate.
            let to_date = if self.unit.is_some() { Decimal::ZERO } else { now - hist };
            return (year, to_date);
        }
        let now = self.to_pres(gross_fc - share * a.impairment, cx.period);
        let to_date = now - hist + self.impairment_pres(share, false);
        let year = match self.opening_period() {
            Some(p0) => {
                now - self.to_pres(gross_fc - share * (a.impairment - a.impairment_year), p0)
                    + self.impairment_pres(share, true)
            }
            None => to_date,
        };
        (year, to_date)
    }

    /// An amount of the acquisition at the acquisition date's rate: for a restated
    /// subsidiary taken back from the period end's unit to the acquisition's first (the
    /// amount the group recognised on that date); otherwise [`Self::at_hist`].
    fn at_acquisition(&self, x: Decimal) -> Decimal {
        match (self.unit, self.recorded) {
            (Some(u), Some((na, na_pres))) if !na.is_zero() => self.cx.round(x * u.then * na_pres / (u.now * na)),
            _ => self.at_hist(x),
        }
    }

    /// An amount of the acquisition as the opening carried it: for a restated
    /// subsidiary, taken back from the period end's unit to the opening's (IAS 29.24-25
    /// restates it anew at every period end); otherwise unchanged.
    fn at_opening(&self, x: Decimal) -> Decimal {
        self.unit.map_or(x, |u| u.back_to_opening(x))
    }

    /// The month before the fiscal year, when the subsidiary was held then.
    fn opening_period(&self) -> Option<Period> {
        let p0 = self.cx.fiscal_start.prev();
        if Period::of_date(self.a.date) > p0 { None } else { Some(p0) }
    }
}

/// Posts one entry per subsidiary consolidated in full with an acquisition record;
/// raises the findings of [`findings`].
pub fn post(
    j: &mut Journal,
    cx: &Context,
    acquisitions: &[Acquisition],
    invest: &Investments,
    months: &InvestmentMonths,
    records: &Records,
    found: &mut Vec<Finding>,
) -> ForNci {
    let acq = acquisition_records(acquisitions, cx.period.last_day());
    let mut nci = ForNci::default();
    let statement_of = |a: &GroupAccount| cx.chart.get(a).map(|d| d.statement);
    for e in cx.of_method(Method::Full).filter(|e| &e.id != cx.structure.parent()) {
        let held = invest.contains_key(&e.id);
        let Some(record) = acq.get(&e.id).copied() else {
            if held {
                found.push(acquisition_missing(&e.id));
            }
            continue;
        };
        // At the opening, this year's impairment has not been recognised yet.
        let a = if cx.period < cx.translated_from {
            Acquisition {
                impairment: record.impairment - record.impairment_year,
                impairment_year: Decimal::ZERO,
                ..record.clone()
            }
        } else {
            record.clone()
        };
        let Some(fc) = cx.currencies.get(&e.id).copied() else { continue };
        let uplifts = super::fair_value::uplifts_of(&a, records.uplifts);
        let a = net_of_deferred_tax(a, &uplifts);
        found.extend(findings(e, Some(&a), held, fc, cx.fiscal_start, cx.roles, &statement_of));
        // Impairments by month replace the record's undated columns.
        let dated = records.impairments.get(&e.id).cloned().unwrap_or_default();
        let a = if dated.is_empty() {
            a
        } else {
            Acquisition {
                impairment: dated.iter().map(|d| d.amount).sum(),
                impairment_year: dated.iter().filter(|d| d.in_year).map(|d| d.amount).sum(),
                ..a
            }
        };
        let unit = records.units.get(&e.id).copied();
        let recorded = unit.map(|_| (a.net_assets, a.net_assets_presentation));
        let (a, uplifts) = match &unit {
            Some(u) => restated(cx, u, fc, a, uplifts),
            None => (a, uplifts),
        };
        let m = measure(e, &a, cx.fiscal_start, cx.roles);
        let reserves = records.reserves.iter().filter(|r| r.owned == e.id).cloned().collect();
        let sub = Acquired { cx, e, a, fc, m, uplifts, dated, reserves, unit, recorded };
        post_one(j, &sub, invest, months, &mut nci);
    }
    found.extend(
        cx.of_method(Method::Proportionate).filter(|e| invest.contains_key(&e.id)).map(|e| joint_operation_held(&e.id)),
    );
    nci
}

/// The acquisition with its net assets less the deferred tax on its fair value
/// adjustments (IAS 12.19): `net_assets` of acquisitions.csv includes the adjustments but
/// not their tax. The deferred tax is part of the identifiable net assets, so it moves
/// goodwill (IAS 12.66): a liability on an asset's uplift increases it. The
/// presentation amount keeps the acquisition date's rate (the ratio of the two).
fn net_of_deferred_tax(a: Acquisition, uplifts: &[Uplift]) -> Acquisition {
    let tax_fc: Decimal = uplifts.iter().filter(|u| u.deferred_tax).map(|u| u.amount).sum();
    if tax_fc.is_zero() || a.net_assets.is_zero() {
        return a;
    }
    Acquisition {
        net_assets: a.net_assets + tax_fc,
        net_assets_presentation: a.net_assets_presentation + tax_fc * a.net_assets_presentation / a.net_assets,
        ..a
    }
}

/// A hyperinflationary subsidiary's acquisition and fair value adjustments in the unit of
/// the period end: every amount of the acquisition date is non-monetary (equity at
/// acquisition, IAS 29.24-25; goodwill, which IAS 21.47 makes an asset of the foreign
/// operation and which is restated like its other non-monetary assets, the policy
/// applied here and common practice; the NCI at acquisition, a share of those net
/// assets or their fair value; the fair value adjustments, IAS 29.15) and is restated by
/// the index change since the acquisition month, each rounded once in the functional
/// currency. The equity at acquisition the entry removes is then the restated amount at
/// the closing rate (IAS 21.42(a)), not the acquisition date's translation.
fn restated(
    cx: &Context,
    unit: &AcquisitionUnit,
    fc: Currency,
    a: Acquisition,
    uplifts: Vec<Uplift>,
) -> (Acquisition, Vec<Uplift>) {
    let minor = fc.minor_unit();
    let r = |x: Decimal| unit.now(x, minor, cx.mode);
    let net_assets = r(a.net_assets);
    let restated = Acquisition {
        consideration: r(a.consideration),
        nci_fair_value: a.nci_fair_value.map(r),
        net_assets,
        net_assets_presentation: cx.at_closing(fc, net_assets, cx.period).unwrap_or_default(),
        impairment: r(a.impairment),
        impairment_year: r(a.impairment_year),
        fair_value_adjustment: r(a.fair_value_adjustment),
        ..a
    };
    (restated, uplifts.into_iter().map(|u| Uplift { amount: r(u.amount), ..u }).collect())
}

/// The entry of one subsidiary.
fn post_one(j: &mut Journal, sub: &Acquired, invest: &Investments, months: &InvestmentMonths, nci: &mut ForNci) {
    let (cx, e, a) = (sub.cx, sub.e, &sub.a);
    let roles = cx.roles;
    let goodwill_fc = sub.goodwill_fc();
    let nci_pres = sub.at_hist(sub.m.nci_fc);
    let impairment_pres = sub.impairment_pres(Decimal::ONE, false);
    nci.pre_acquisition.insert(e.id.clone(), a.net_assets_presentation);
    let fva = sub.fair_values();
    let mut lines = Vec::new();
    let (investment_total, holders_fx_year) = investment_lines(sub, invest, months, &mut lines);
    equity_acquired_lines(sub, &fva, &mut lines, nci);
    if !fva.is_empty() {
        nci.fair_value_now.insert(e.id.clone(), fva.iter().map(|x| x.3).sum());
    }
    lines.push(line(&roles.goodwill, &e.id, None, sub.to_pres(goodwill_fc, cx.period)));
    if let Some(acct) = &sub.m.bargain_account {
        lines.push(line(acct, &e.id, None, -sub.at_hist(sub.m.bargain_fc)));
    }
    lines.push(line(&roles.non_controlling_interest, &e.id, None, -nci_pres));
    nci.nci_at_acquisition.insert(e.id.clone(), nci_pres);
    let impairment_year_pres = impairment_lines(sub, impairment_pres, &mut lines);
    exchange_difference_lines(sub, &fva, &holders_fx_year, &mut lines, nci);
    if a.nci_measurement == NciMeasurement::FairValue {
        full_goodwill_lines(sub, impairment_year_pres, &mut lines, nci);
    }
    let mut involved: Vec<EntityId> = invest.get(&e.id).into_iter().flatten().map(|(h, _, _)| h.clone()).collect();
    involved.push(e.id.clone());
    j.post(
        EliminationRule::InvestmentAndGoodwill,
        cx.parent_of(e),
        involved,
        format!(
            "investment in {} ({}) against equity at acquisition {}, goodwill {} {} (IFRS 3.32), NCI at acquisition {}{}",
            e.id,
            money::format_amount(investment_total, cx.minor),
            money::format_amount(a.net_assets_presentation, cx.minor),
            sub.fc,
            money::format_amount(goodwill_fc, sub.fc.minor_unit()),
            money::format_amount(nci_pres, cx.minor),
            if impairment_pres.is_zero() {
                String::new()
            } else {
                format!(", impairment to date {}", money::format_amount(impairment_pres, cx.minor))
            }
        ),
        lines,
    );
}

/// The consolidated holders' investment lines, reversed; returns their total and this
/// year's exchange difference on each.
fn investment_lines(
    sub: &Acquired,
    invest: &Investments,
    months: &InvestmentMonths,
    lines: &mut Vec<EntryLine>,
) -> (Decimal, Vec<(EntityId, Decimal)>) {
    let (cx, e, a) = (sub.cx, sub.e, &sub.a);
    let mut total = Decimal::ZERO;
    let mut holders_fx_year = Vec::new();
    let at_hist = |x: Decimal| sub.at_hist(x);
    for (holder, acct, amount) in invest.get(&e.id).into_iter().flatten() {
        if !cx.consolidated.contains(holder) {
            continue;
        }
        lines.push(line(acct, holder, Some(&e.id), -*amount));
        total += *amount;
        let acquired_this_year =
            Period::of_date(a.date) >= cx.fiscal_start && cx.currencies.get(holder).is_some_and(|c| *c == sub.fc);
        let acquired: Option<(Period, &dyn Fn(Decimal) -> Decimal)> =
            if acquired_this_year { Some((Period::of_date(a.date), &at_hist)) } else { None };
        let fx = investment_fx_year(cx, months.get(&(holder.clone(), acct.clone(), e.id.clone())), acquired);
        if !fx.is_zero() {
            holders_fx_year.push((holder.clone(), fx));
        }
    }
    (total, holders_fx_year)
}

/// The equity acquired: the subsidiary's contributed capital (share capital, premium
/// and other equity accounts that are not reserves of the group) in full, and the rest
/// of the net assets acquired from its retained earnings. The books hold the net assets
/// acquired less the fair value adjustments: only that part of the retained earnings is
/// pre-acquisition in the books, and each adjustment itself is added to its account.
fn equity_acquired_lines(sub: &Acquired, fva: &[FairValueLine], lines: &mut Vec<EntryLine>, nci: &mut ForNci) {
    let (cx, e) = (sub.cx, sub.e);
    let roles = cx.roles;
    let reserves = [&roles.retained_earnings, &roles.translation_reserve, &roles.non_controlling_interest];
    let mut capital = Decimal::ZERO;
    // A restated subsidiary (IAS 29) carries its equity at acquisition in the unit of
    // each period end, which neither a historical amount nor one brought forward is:
    // its reserves stay at their balances (a row for it is `reserve_findings`').
    let none = BTreeMap::new();
    let (given, carried): (Vec<(GroupAccount, Decimal)>, _) = match sub.unit {
        Some(_) => (Vec::new(), &none),
        None => (
            sub.reserves.iter().map(|r| (r.account.clone(), sub.at_hist(r.amount))).collect(),
            &cx.brought_forward.reserves_at_acquisition,
        ),
    };
    for (acct, cp, amount) in at_acquisition_balances(cx, &e.id, &given, carried) {
        if !reserves.contains(&&acct) && !amount.is_zero() {
            lines.push(line(&acct, &e.id, cp.as_ref(), -amount));
            capital += -amount;
        }
    }
    // The subsidiary's own translation reserve at acquisition is equity acquired like
    // its capital (IFRS 3.32, IFRS 10.B86(b)): the group's reserve for the operation
    // starts at control (IAS 21.48).
    let reserve = translation_reserve_at_acquisition(sub);
    if !reserve.is_zero() {
        *nci.reserve_shared.entry(e.id.clone()).or_default() -= reserve;
        lines.push(line(&roles.translation_reserve, &e.id, None, -reserve));
        capital += -reserve;
    }
    let fva_hist: Decimal = fva.iter().map(|x| x.2).sum();
    lines.push(line(&roles.retained_earnings, &e.id, None, sub.a.net_assets_presentation - fva_hist - capital));
    for (acct, _, _, now) in fva {
        lines.push(line(acct, &e.id, None, *now));
    }
}

/// The subsidiary's own translation reserve at acquisition (a credit negative). Acquired
/// in this fiscal year, its opening is before control, and its translation reserve then
/// is all of it: within the year the reserve account holds only the difference brought
/// forward (the year's differences are OCI, and those before control the
/// pre-acquisition entry moves into equity at acquisition, IFRS 10.B88). Acquired
/// before, the amount the prior year's close carried (`years.rs`); a single-year folder
/// delivers the opening of a subsidiary held at the opening with its reserve as the
/// group's.
fn translation_reserve_at_acquisition(sub: &Acquired) -> Decimal {
    let (cx, e) = (sub.cx, &sub.e.id);
    if sub.opening_period().is_none() {
        cx.balances_of(e)
            .filter(|((a, cp), _)| *a == cx.roles.translation_reserve && cp.is_none())
            .map(|(_, v)| *v)
            .sum()
    } else {
        cx.brought_forward.translation_reserve_at_acquisition.get(e).copied().unwrap_or_default()
    }
}

/// The subsidiary's equity balances other than its results that the entry takes as
/// equity at acquisition (account, counterparty, balance, a credit negative): each at its
/// balance, except a named reserve (an equity account the chart's `reserve` column
/// names, other than the translation reserve) whose balance at acquisition is known:
/// `given` by `reserves_at_acquisition.csv` (in the presentation currency at the
/// acquisition date's rate), else brought forward from a prior year-end close. Such a
/// reserve has since taken the subsidiary's OCI closed into it year by year
/// (`years.rs`), which is post-acquisition: the group's, shared with the NCI (IFRS
/// 10.B94, IAS 1.106(d)), not equity acquired. Otherwise the reserve's balance is taken
/// as it was at acquisition, as for share capital.
fn at_acquisition_balances(
    cx: &Context,
    e: &EntityId,
    given: &[(GroupAccount, Decimal)],
    carried: &BTreeMap<(EntityId, GroupAccount), Decimal>,
) -> Vec<(GroupAccount, Option<EntityId>, Decimal)> {
    let known = |acct: &GroupAccount| {
        given.iter().find(|(a, _)| a == acct).map(|x| x.1).or_else(|| carried.get(&(e.clone(), acct.clone())).copied())
    };
    let mut out: Vec<(GroupAccount, Option<EntityId>, Decimal)> = cx
        .balances_of(e)
        .filter(|((acct, _), _)| cx.is_equity(acct))
        .map(|((acct, cp), amount)| {
            let at_acquisition = match cp {
                None => known(acct).unwrap_or(*amount),
                Some(_) => *amount,
            };
            (acct.clone(), cp.clone(), at_acquisition)
        })
        .collect();
    // A reserve known at acquisition that the subsidiary no longer shows a balance on.
    let named = given.iter().map(|(a, _)| a).chain(carried.keys().filter(|(owned, _)| owned == e).map(|(_, a)| a));
    for acct in named.collect::<BTreeSet<_>>() {
        if !out.iter().any(|(a, cp, _)| a == acct && cp.is_none()) {
            out.push((acct.clone(), None, known(acct).unwrap_or_default()));
        }
    }
    out
}

/// What `reserves_at_acquisition.csv` gives that the close cannot use (blocking): a row
/// for an entity without an acquisition record, on an account that is not a named
/// reserve (an equity account an OCI account's `reserve` names, other than the
/// translation reserve), given twice, or of a hyperinflationary entity. `check` raises
/// the same.
pub fn reserve_findings(ds: &crate::load::Dataset) -> Vec<Finding> {
    let tr = &ds.settings.accounts.translation_reserve;
    let named: BTreeSet<&GroupAccount> =
        ds.accounts.iter().filter_map(|a| a.reserve.as_ref()).filter(|r| *r != tr).collect();
    let mut seen = BTreeSet::new();
    let mut out = Vec::new();
    for r in &ds.reserves_at_acquisition {
        let problem = if !ds.acquisitions.iter().any(|a| a.owned == r.owned) {
            Some((Rule::AcquisitionMissing, format!("{} has no row in entities/acquisitions.csv", r.owned)))
        } else if !named.contains(&r.account) {
            Some((
                Rule::AccountInvalid,
                format!("{} is not a reserve that the `reserve` column of entities/accounts.csv names", r.account),
            ))
        } else if !seen.insert((&r.owned, &r.account)) {
            Some((Rule::ValueInvalid, "the row is given twice".to_string()))
        } else if ds.entity(&r.owned).is_some_and(|x| x.hyperinflationary_from.is_some()) {
            Some((
                Rule::ValueInvalid,
                format!(
                    "{} has a hyperinflationary functional currency: its equity at acquisition is restated (IAS 29), and a reserve's balance given at acquisition is not supported for it",
                    r.owned
                ),
            ))
        } else {
            None
        };
        if let Some((rule, problem)) = problem {
            out.push(
                Finding::new(
                    rule,
                    format!("reserve {} of {} at acquisition: {problem}", r.account, r.owned),
                    "give one row per acquired subsidiary and named reserve (a revaluation surplus, say), with the reserve's balance at the acquisition date as in its books",
                )
                .at(&r.source)
                .entity(&r.owned),
            );
        }
    }
    out
}

/// Goodwill impairment to date (IAS 36.124: never reversed), at the rate goodwill is
/// carried at: the part of this fiscal year is an expense of the year (IAS 36.60), the
/// part of earlier years sits in retained earnings. Returns the year's part.
fn impairment_lines(sub: &Acquired, impairment_pres: Decimal, lines: &mut Vec<EntryLine>) -> Decimal {
    let (cx, e, a) = (sub.cx, sub.e, &sub.a);
    let impairment_year_pres = match (&cx.roles.goodwill_impairment, a.impairment_year.is_zero()) {
        (Some(acct), false) => {
            let x = sub.impairment_pres(Decimal::ONE, true);
            lines.push(line(acct, &e.id, None, x));
            x
        }
        // Without the account the finding blocks the close.
        _ => Decimal::ZERO,
    };
    if !(impairment_pres - impairment_year_pres).is_zero() {
        lines.push(line(&cx.roles.retained_earnings, &e.id, None, impairment_pres - impairment_year_pres));
    }
    impairment_year_pres
}

/// The residual of the entry so far is exchange difference: goodwill at the closing
/// rate against equity at historical rates (IAS 21.47). This year's part goes to OCI,
/// the part brought forward to the reserve.
fn exchange_difference_lines(
    sub: &Acquired,
    fva: &[FairValueLine],
    holders_fx_year: &[(EntityId, Decimal)],
    lines: &mut Vec<EntryLine>,
    nci: &mut ForNci,
) {
    let (cx, e, a) = (sub.cx, sub.e, &sub.a);
    let roles = cx.roles;
    let residual: Decimal = lines.iter().map(|l| l.amount).sum();
    let opening_period = sub.opening_period();
    // The exchange difference is the change of goodwill's carrying amount that the
    // impairments do not explain: with undated impairments, charged at the closing
    // rate, that of the goodwill before impairment; with dated ones, at their own rates.
    let gross_fc = sub.goodwill_fc() + a.impairment;
    let (goodwill_fx_year, _) = sub.goodwill_fx(gross_fc, Decimal::ONE);
    // The fair value adjustment's exchange difference, like goodwill's, is OCI of the
    // year for the part since the opening; it is shared with the NCI as the
    // subsidiary's other net assets are (`nci.rs`).
    let fva_fx_year: Decimal = fva
        .iter()
        .map(|(_, fc, _, now)| match opening_period {
            Some(p0) => *now - sub.to_pres(sub.at_opening(*fc), p0),
            None => *now - sub.at_acquisition(*fc),
        })
        .sum();
    if !fva_fx_year.is_zero() {
        nci.fair_value_oci.insert(e.id.clone(), fva_fx_year);
    }
    // The adjustments at the closing rate against their historical amount: the
    // exchange difference to date in the reserve, a credit for a gain. A restated
    // subsidiary's adjustments are carried at the restated amount at the closing rate,
    // as its goodwill (`goodwill_fx`): its difference in the reserve is the year's.
    let fva_fx_to_date: Decimal =
        if sub.unit.is_some() { fva_fx_year } else { fva.iter().map(|(_, _, hist, now)| *now - *hist).sum() };
    if !fva_fx_to_date.is_zero() {
        *nci.reserve_shared.entry(e.id.clone()).or_default() -= fva_fx_to_date;
    }
    let goodwill_fx_year = goodwill_fx_year + fva_fx_year;
    // A fall in goodwill's value in the presentation currency is a loss (a debit).
    lines.push(line(&roles.translation_difference, &e.id, None, -goodwill_fx_year));
    // The holder's translation difference of the year includes the exchange difference
    // on its investment, retranslated at the closing rate; in the group the investment
    // is replaced by the subsidiary's net assets, whose exchange difference is the
    // subsidiary's own translation difference (IAS 21.39c). The investment's part of
    // the year is reversed against the holder's OCI of the year (a gain on the
    // investment was a credit: the reversal is a debit); only the part brought forward
    // goes to the reserve.
    let mut investment_fx_total = Decimal::ZERO;
    for (holder, fx) in holders_fx_year {
        lines.push(line(&roles.translation_difference, holder, Some(&e.id), *fx));
        *nci.investment_fx.entry(holder.clone()).or_default() += *fx;
        investment_fx_total += *fx;
    }
    lines.push(line(&roles.translation_reserve, &e.id, None, -residual + goodwill_fx_year - investment_fx_total));
}

/// Under full goodwill (IFRS 3.19) part of the goodwill is the NCI's: its fair value
/// less its share of the net assets. The exchange difference on that part is the NCI's
/// (IAS 21.41), and so is its share of the impairment, allocated on the same basis as
/// profit (IAS 36.C6): both are moved from the owners' equity to the NCI.
fn full_goodwill_lines(sub: &Acquired, impairment_year_pres: Decimal, lines: &mut Vec<EntryLine>, nci: &mut ForNci) {
    let (cx, e, a) = (sub.cx, sub.e, &sub.a);
    let roles = cx.roles;
    let outside = sub.m.outside;
    let nci_goodwill_fc = sub.m.nci_fc - outside * a.net_assets;
    let nci_impairment = sub.impairment_pres(outside, false);
    if !impairment_year_pres.is_zero() {
        // The NCI's share of the year's impairment is part of its share of profit.
        nci.nci_impairment_year.insert(e.id.clone(), sub.impairment_pres(outside, true));
    }
    // The impairment is the NCI's only as far as its part of goodwill bears it: the
    // exchange difference on that part, net of it, is the NCI's.
    let (fx_year, fx_to_date) = sub.goodwill_fx(nci_goodwill_fc, outside);
    lines.push(line(&roles.non_controlling_interest, &e.id, None, nci_impairment - fx_to_date));
    lines.push(line(&roles.retained_earnings, &e.id, None, fx_to_date - nci_impairment));
    nci.nci_goodwill_oci.insert(e.id.clone(), fx_year);
    nci.nci_goodwill_fx.insert(e.id.clone(), fx_to_date);
}

#[cfg(test)]
mod tests {
    use super::super::context::fixture::*;
    use super::*;
    use crate::load::{Quote, Rate};

    fn acquisition(consideration: &str, net_assets: &str, net_assets_presentation: &str) -> Acquisition {
        Acquisition {
            owned: id("S"),
            date: chrono::NaiveDate::from_ymd_opt(2020, 1, 1).unwrap_or_default(),
            consideration: d(consideration),
            nci_measurement: NciMeasurement::ShareOfNetAssets,
            nci_fair_value: None,
            net_assets: d(net_assets),
            net_assets_presentation: d(net_assets_presentation),
            impairment: Decimal::ZERO,
            impairment_year: Decimal::ZERO,
            fair_value_adjustment: Decimal::ZERO,
            fair_value_account: None,
            source: Source::file("entities/acquisitions.csv"),
        }
    }

    /// P (EUR) bought 80% of S (USD) in 2020 for USD 1,000, net assets USD 1,000 (EUR
    /// 500 at 2 USD per EUR then). NCI at its share of net assets: 20% x 1,000 = USD
    /// 200, EUR 100 at the acquisition rate. Goodwill 1,000 + 200 - 1,000 = USD 200
    /// (IFRS 3.32). P carries the investment at EUR 500; S's capital is EUR 600 as
    /// booked, so the rest of the equity acquired, 500 - 600 = -100, comes from its
    /// retained earnings. The dollar falls from 2 (opening) to 2.5 per EUR (June):
    /// goodwill is USD 200 / 2.5 = EUR 80 (IAS 21.47), a loss of 100 - 80 = 20 in
    /// this year's OCI; nothing goes to the reserve brought forward.
    /// Lines: 1200 P -500, 3000 S +600, 3200 S -100, 1100 S +80, 3900 S -100,
    /// 9000 S +20; -500 + 600 - 100 + 80 - 100 + 20 = 0.
    #[test]
    fn investment_against_equity_at_acquisition_with_goodwill_at_the_closing_rate() {
        let w = World::new(&["P", "S"], &[holding("P", "S", "0.8", "2020-01-01")], p("2026-06"));
        let bal =
            balances(&[("P", "1200", Some("S"), "500"), ("S", "3000", None, "-600"), ("S", "3200", None, "-300")]);
        let mut cx = w.context(p("2026-06"), p("2026-01"), bal);
        let usd = Currency::parse("USD").unwrap_or_else(|| panic!("USD"));
        cx.closing.insert((usd, p("2026-06")), Rate { value: d("2.5"), quote: Quote::UnitsPerPresentation });
        let invest = investments(&cx);
        let mut j = Journal::default();
        let mut found = Vec::new();
        let records = Records::default();
        let nci = post(
            &mut j,
            &cx,
            &[acquisition("1000", "1000", "500")],
            &invest,
            &Default::default(),
            &records,
            &mut found,
        );
        assert!(found.is_empty(), "{found:?}");
        assert_eq!(j.entries.len(), 1);
        assert_eq!(
            lines(&j.entries[0]),
            [
                ("1200".into(), "P".into(), "-500".into()),
                ("3000".into(), "S".into(), "600".into()),
                ("3200".into(), "S".into(), "-100".into()),
                ("1100".into(), "S".into(), "80".into()),
                ("3900".into(), "S".into(), "-100".into()),
                ("9000".into(), "S".into(), "20".into())
            ]
        );
        assert_eq!(nci.pre_acquisition.get(&id("S")), Some(&d("500")));
    }

    /// A named reserve (3400, the revaluation surplus an OCI account accumulates into)
    /// holds USD-translated EUR 150 in S's books: 100 at acquisition, as the prior year
    /// end's investment entry eliminated it (brought forward), and 50 of OCI since,
    /// closed into it by S's books. Only the 100 is equity at acquisition (IFRS 3.32,
    /// IFRS 10.B94): of the net assets 500, capital 300 + reserve 100 leave 100 from
    /// retained earnings. Without the brought-forward amount (the folder's first year)
    /// the reserve's whole balance is taken as at acquisition: 150, and 50 from
    /// retained earnings; `reserves_at_acquisition.csv` can give the 100 instead.
    #[test]
    fn a_named_reserve_is_eliminated_at_its_balance_at_acquisition() {
        let mut w = World::new(&["P", "S"], &[holding("P", "S", "0.8", "2020-01-01")], p("2026-06"));
        let mut surplus = w.chart[0].clone();
        surplus.account = acct("3400");
        surplus.statement = Statement::BalanceSheet;
        surplus.class = AccountClass::Equity;
        w.chart.push(surplus);
        let bal =
            balances(&[("P", "1200", Some("S"), "500"), ("S", "3000", None, "-300"), ("S", "3400", None, "-150")]);
        let cx = w.context(p("2026-06"), p("2026-01"), bal);
        let equity_lines_given = |cx: &Context, given: &[ReserveAtAcquisition]| {
            let mut j = Journal::default();
            let records = Records { reserves: given, ..Records::default() };
            let a = [acquisition("1000", "1000", "500")];
            post(&mut j, cx, &a, &investments(cx), &Default::default(), &records, &mut Vec::new());
            lines(&j.entries[0]).into_iter().filter(|l| l.0.starts_with('3') && l.0 != "3900").collect::<Vec<_>>()
        };
        let equity_lines = |cx: &Context| equity_lines_given(cx, &[]);
        let s = |a: &str, x: &str| (a.to_string(), "S".to_string(), x.to_string());
        assert_eq!(equity_lines(&cx), [s("3000", "300"), s("3400", "150"), s("3200", "50")]);
        // Given in reserves_at_acquisition.csv as USD -200 in S's books: EUR 100 at the
        // acquisition date's 2 USD per EUR (net assets 1,000 for 500).
        let given = [ReserveAtAcquisition {
            owned: id("S"),
            account: acct("3400"),
            amount: d("-200"),
            source: Source::file("entities/reserves_at_acquisition.csv"),
        }];
        assert_eq!(equity_lines_given(&cx, &given), [s("3000", "300"), s("3400", "100"), s("3200", "100")]);
        let carried = BroughtForward {
            reserves_at_acquisition: BTreeMap::from([((id("S"), acct("3400")), d("-100"))]),
            ..BroughtForward::default()
        };
        let cx = Context { brought_forward: &carried, ..cx };
        assert_eq!(equity_lines(&cx), [s("3000", "300"), s("3400", "100"), s("3200", "100")]);
    }

    /// Consideration 700 + NCI 200 - net assets 1,000 = -100: a bargain purchase
    /// (IFRS 3.34). In the acquisition year its gain needs an account: without one a
    /// blocking finding, and the warning that the goodwill is negative (IFRS 3.36).
    /// With one, the gain is recognised and goodwill is 0.
    #[test]
    fn a_bargain_purchase_is_a_gain_with_its_account_and_a_finding_without() {
        let w = World::new(&["P", "S"], &[holding("P", "S", "0.8", "2026-02-01")], p("2026-06"));
        let e = &w.structure.entities()[1];
        assert_eq!(e.id.as_str(), "S");
        let mut a = acquisition("700", "1000", "500");
        a.date = chrono::NaiveDate::from_ymd_opt(2026, 2, 1).unwrap_or_default();
        let usd = Currency::parse("USD").unwrap_or_else(|| panic!("USD"));
        let statement = |_: &GroupAccount| Some(Statement::BalanceSheet);
        let rules = |roles: &RoleAccounts| -> Vec<Rule> {
            findings(e, Some(&a), true, usd, p("2026-01"), roles, &statement).iter().map(|f| f.rule).collect()
        };
        let mut roles = roles();
        assert_eq!(rules(&roles), [Rule::SettingInvalid, Rule::GoodwillNegative]);
        assert_eq!(measure(e, &a, p("2026-01"), &roles).bargain_fc, Decimal::ZERO);
        roles.bargain_purchase_gain = Some(acct("4000"));
        assert_eq!(rules(&roles), [Rule::GoodwillNegative]);
        let m = measure(e, &a, p("2026-01"), &roles);
        assert_eq!((m.goodwill_fc, m.bargain_fc, m.goodwill_fc + m.bargain_fc), (d("-100"), d("100"), d("0")));
        assert_eq!(
            findings(e, None, true, usd, p("2026-01"), &roles, &statement).iter().map(|f| f.rule).collect::<Vec<_>>(),
            [Rule::AcquisitionMissing]
        );
        assert!(findings(e, None, false, usd, p("2026-01"), &roles, &statement).is_empty());
    }

    /// Full goodwill with an impairment recognised in February (IAS 36.C6). P (EUR)
    /// holds 80% of S (USD) since 2020: consideration USD 1,000, NCI at fair value USD
    /// 300, net assets USD 1,000 (EUR 500: 2 USD per EUR then). Goodwill 1,000 + 300 -
    /// 1,000 = USD 300, of which the NCI's 300 - 20% x 1,000 = USD 100. February's
    /// test impairs USD 100, at February's closing rate 2.5: EUR 40, an expense of the
    /// year, fixed. At June's closing rate 4.0 goodwill is USD 200 / 4 = EUR 50 (a
    /// retranslated impairment would be 25). Exchange difference of the year:
    /// 50 - 300 / 2 (the opening) + 40 = -60, a loss (a debit of 60).
    /// The NCI's part: USD 100 at 2 = EUR 50 at acquisition, now USD 80 / 4 = 20; its
    /// impairment 20% x 100 / 2.5 = 8; its exchange difference 20 - 50 + 8 = -22 (all
    /// this year: the opening rate is the acquisition's). Lines: 1200 P -500, 3000 S
    /// +600, 3200 S -100, 1100 S +50, 3900 S -150 (NCI USD 300 at 2), 5000 S +40,
    /// 9000 S +60, then the NCI's part of goodwill: 3900 S +30 (8 + 22), 3200 S -30.
    /// Under the average policy, February's average 2.0 gives an impairment of 50.
    #[test]
    fn a_dated_impairment_is_fixed_at_its_months_rate_and_shared_under_full_goodwill() {
        let w = World::new(&["P", "S"], &[holding("P", "S", "0.8", "2020-01-01")], p("2026-06"));
        let bal =
            balances(&[("P", "1200", Some("S"), "500"), ("S", "3000", None, "-600"), ("S", "3200", None, "-300")]);
        let mut cx = w.context(p("2026-06"), p("2026-01"), bal);
        let mut roles = roles();
        roles.goodwill_impairment = Some(acct("5000"));
        cx.roles = &roles;
        let usd = Currency::parse("USD").unwrap_or_else(|| panic!("USD"));
        let rate = |x: &str| Rate { value: d(x), quote: Quote::UnitsPerPresentation };
        cx.closing.insert((usd, p("2026-02")), rate("2.5"));
        cx.closing.insert((usd, p("2026-06")), rate("4"));
        let mut a = acquisition("1000", "1000", "500");
        a.nci_measurement = NciMeasurement::FairValue;
        a.nci_fair_value = Some(d("300"));
        let rows = [GoodwillImpairment {
            owned: id("S"),
            period: p("2026-02"),
            amount: d("100"),
            source: Source::file("entities/goodwill_impairments.csv"),
        }];
        let mut rates = super::super::fair_value::ExpenseRates::default();
        let invest = investments(&cx);
        let close = |rates: &super::super::fair_value::ExpenseRates| {
            let records = Records {
                uplifts: &[],
                impairments: super::super::impairment::dated(&cx, &rows, rates),
                reserves: &[],
                units: BTreeMap::new(),
            };
            let mut j = Journal::default();
            let mut found = Vec::new();
            let nci = post(&mut j, &cx, std::slice::from_ref(&a), &invest, &Default::default(), &records, &mut found);
            assert!(found.is_empty(), "{found:?}");
            (lines(&j.entries[0]), nci)
        };
        let (got, nci) = close(&rates);
        let want: Vec<(String, String, String)> = [
            ("1200", "P", "-500"),
            ("3000", "S", "600"),
            ("3200", "S", "-100"),
            ("1100", "S", "50"),
            ("3900", "S", "-150"),
            ("5000", "S", "40"),
            ("9000", "S", "60"),
            ("3900", "S", "30"),
            ("3200", "S", "-30"),
        ]
        .iter()
        .map(|(x, y, z)| (x.to_string(), y.to_string(), z.to_string()))
        .collect();
        assert_eq!(got, want);
        assert_eq!(nci.nci_impairment_year.get(&id("S")), Some(&d("8")));
        assert_eq!(nci.nci_goodwill_oci.get(&id("S")), Some(&d("-22")));
        rates.impairment_rate = ImpairmentRate::Average;
        rates.average.insert((usd, p("2026-02")), rate("2"));
        let (got, _) = close(&rates);
        assert!(got.contains(&("5000".into(), "S".into(), "50".into())), "{got:?}");
    }

    /// Deferred tax on a fair value adjustment moves goodwill (IAS 12.66). P holds 80%
    /// of S: consideration USD 1,000, net assets USD 1,000 (EUR 500) including a plant
    /// uplift of USD 200 (on 1600); tax at 25%: a liability of USD 50, so the
    /// identifiable net assets are USD 950 (EUR 475 at the same 2 USD per EUR). NCI 20%
    /// x 950 = USD 190 (EUR 95); goodwill 1,000 + 190 - 950 = USD 240 (200 without the
    /// tax: the liability raises goodwill by the parent's 80% x 50 = 40). At 2 USD per
    /// EUR throughout: 1200 P -500, 3000 S +600, 3200 S 475 - (100 - 25) - 600 = -200,
    /// 1600 S +100, 2500 S -25, 1100 S +120, 3900 S -95; no exchange difference.
    #[test]
    fn deferred_tax_on_an_uplift_is_part_of_the_net_assets_acquired() {
        let mut w = World::new(&["P", "S"], &[holding("P", "S", "0.8", "2020-01-01")], p("2026-06"));
        for (a, class) in [("1600", AccountClass::Asset), ("2500", AccountClass::Liability)] {
            w.chart.push(AccountDef {
                account: acct(a),
                name: a.into(),
                statement: Statement::BalanceSheet,
                class,
                basis: Basis::Closing,
                ic_kind: None,
                non_current: true,
                reserve: None,
                monetary: None,
                source: Source::file("entities/accounts.csv"),
            });
        }
        let bal =
            balances(&[("P", "1200", Some("S"), "500"), ("S", "3000", None, "-600"), ("S", "3200", None, "-200")]);
        let cx = w.context(p("2026-06"), p("2026-01"), bal);
        let a = acquisition("1000", "1000", "500");
        let plant = Uplift {
            owned: id("S"),
            account: acct("1600"),
            amount: d("200"),
            life_months: None,
            expense_account: None,
            deferred_tax: false,
            source: Source::file("entities/fair_value_adjustments.csv"),
        };
        let tax = super::super::fair_value::DeferredTax {
            rates: BTreeMap::from([(id("S"), d("0.25"))]),
            account: acct("2500"),
            expense: acct("8000"),
        };
        let all = super::super::fair_value::all_uplifts(std::slice::from_ref(&a), &[plant], Some(&tax));
        let records = Records { uplifts: &all, impairments: BTreeMap::new(), reserves: &[], units: BTreeMap::new() };
        let mut j = Journal::default();
        let mut found = Vec::new();
        let nci = post(&mut j, &cx, &[a], &investments(&cx), &Default::default(), &records, &mut found);
        assert!(found.is_empty(), "{found:?}");
        let want: Vec<(String, String, String)> = [
            ("1200", "P", "-500"),
            ("3000", "S", "600"),
            ("3200", "S", "-200"),
            ("1600", "S", "100"),
            ("2500", "S", "-25"),
            ("1100", "S", "120"),
            ("3900", "S", "-95"),
        ]
        .iter()
        .map(|(x, y, z)| (x.to_string(), y.to_string(), z.to_string()))
        .collect();
        assert_eq!(lines(&j.entries[0]), want);
        assert_eq!(nci.fair_value_now.get(&id("S")), Some(&d("75")));
    }

    /// The same acquisition of S, hyperinflationary, with the NCI at its fair value USD
    /// 300 (full goodwill, IFRS 3.19), restated from the acquisition month's index 100
    /// to 150 now (IAS 29.24-25; 120 at the opening). Restated: consideration 1,500, net
    /// assets 1,500, NCI 450, goodwill 1,500 + 450 - 1,500 = 450; the NCI's part of
    /// goodwill 450 - 20% x 1,500 = 150. At 3 USD per EUR now (2 at the opening), all at
    /// the closing rate (IAS 21.42(a)): equity at acquisition 500, goodwill 150, NCI 150.
    /// The year's exchange difference on goodwill: 150 less the opening's 450 x 120/150 =
    /// 360 at 2 = 180: a loss of 30 (9000 +30); the NCI's part 50 - 120 / 2 = -10. The
    /// residual of the entry before it, -500 + 600 - 100 + 150 - 150 = 0, so the reserve
    /// takes -30. Lines: 1200 P -500, 3000 S +600, 3200 S -100, 1100 S +150, 3900 S -150,
    /// 9000 S +30, 3300 S -30. Worked by hand.
    #[test]
    fn a_hyperinflationary_subsidiary_is_eliminated_on_its_restated_acquisition() {
        let w = World::new(&["P", "S"], &[holding("P", "S", "0.8", "2020-01-01")], p("2026-06"));
        let bal =
            balances(&[("P", "1200", Some("S"), "500"), ("S", "3000", None, "-600"), ("S", "3200", None, "-300")]);
        let mut cx = w.context(p("2026-06"), p("2026-01"), bal);
        let usd = Currency::parse("USD").unwrap_or_else(|| panic!("USD"));
        cx.closing.insert((usd, p("2026-06")), Rate { value: d("3"), quote: Quote::UnitsPerPresentation });
        let invest = investments(&cx);
        let unit = AcquisitionUnit { then: d("100"), now: d("150"), opening: Some(d("120")) };
        let records = Records { units: BTreeMap::from([(id("S"), unit)]), ..Records::default() };
        let a = Acquisition {
            nci_measurement: NciMeasurement::FairValue,
            nci_fair_value: Some(d("300")),
            ..acquisition("1000", "1000", "500")
        };
        let mut j = Journal::default();
        let mut found = Vec::new();
        let nci = post(&mut j, &cx, &[a], &invest, &Default::default(), &records, &mut found);
        assert!(found.is_empty(), "{found:?}");
        assert_eq!(
            lines(&j.entries[0]),
            [
                ("1200".into(), "P".into(), "-500".into()),
                ("3000".into(), "S".into(), "600".into()),
                ("3200".into(), "S".into(), "-100".into()),
                ("1100".into(), "S".into(), "150".into()),
                ("3900".into(), "S".into(), "-150".into()),
                ("9000".into(), "S".into(), "30".into()),
                ("3300".into(), "S".into(), "-30".into())
            ]
        );
        assert_eq!(nci.pre_acquisition.get(&id("S")), Some(&d("500")));
        assert_eq!(nci.nci_goodwill_oci.get(&id("S")), Some(&d("-10")));
    }
}

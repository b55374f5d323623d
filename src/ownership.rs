//! Changes in ownership: what `entities/ownership_changes.csv` says was bought or sold,
//! checked against holdings.csv (which still gives the shares and dates) and
//! acquisitions.csv, and classified by what happened to control on the date (IFRS 3.41-42,
//! IFRS 10.23, 10.25). The close expresses some kinds and refuses the others: a change it
//! cannot express is a blocking finding, never a silent figure. The same findings are
//! listed by `tessera check` (they are raised by `validate`).
//!
//! How the two files agree: a row on `date` says the holder's capital share in the owned
//! entity changes by `share` on that day. holdings.csv must say the same: the holder's
//! capital share on `date` (every holding valid that day) less its share on the day
//! before is `share`. A disposal is therefore a holding whose `valid_to` is the day
//! before `date` (and, for a retained interest, a new holding from `date`); a purchase
//! is a new holding from `date`. A holding that ends during the fiscal year without a
//! row on the next day, and an acquisition of control over an entity the group already
//! held a stake in without a row saying what that stake was worth, are findings.

use std::collections::{BTreeMap, BTreeSet};

use chrono::{Datelike, NaiveDate};
use polars::prelude::*;
use rust_decimal::Decimal;

use crate::findings::{Finding, Rule};
use crate::load::Dataset;
use crate::model::*;
use crate::structure::GroupStructure;
use crate::validate::Scope;

/// What a change did to control of the owned entity (the group's, through every holder).
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum ChangeKind {
    /// Control obtained over an entity the group held nothing of: acquisitions.csv
    /// describes it (IFRS 3.32); the row adds nothing the close needs.
    Acquisition,
    /// Control obtained over an entity the group already held a stake in (IFRS 3.41-42).
    StepAcquisition,
    /// More or less of a subsidiary, control kept (IFRS 10.23, B96).
    ChangeInStake,
    /// Control lost (IFRS 10.25, B97-B99).
    LossOfControl,
    /// Neither before nor after a subsidiary: a change in an associate, a joint
    /// arrangement or an investment.
    NotControlled,
}

impl ChangeKind {
    pub fn as_str(self) -> &'static str {
        match self {
            ChangeKind::Acquisition => "acquisition",
            ChangeKind::StepAcquisition => "step acquisition (IFRS 3.41-42)",
            ChangeKind::ChangeInStake => "change in stake without loss of control (IFRS 10.23, B96)",
            ChangeKind::LossOfControl => "loss of control (IFRS 10.25, B97-B99)",
            ChangeKind::NotControlled => "change in an interest the group does not control",
        }
    }
}

/// One row with what holdings.csv says about the day before and the day.
#[derive(Debug, Clone)]
pub struct Classified<'a> {
    pub change: &'a OwnershipChange,
    pub kind: ChangeKind,
    /// The owned entity's method in the group on the day before and on the date.
    pub method_before: Method,
    pub method_after: Method,
    /// The group's effective interest in the owned entity on the day before.
    pub interest_before: Decimal,
    /// Entities of the group (the parent and what it controls) holding a stake in the
    /// owned entity on the day before.
    pub group_holders_before: BTreeSet<EntityId>,
    /// The holder's own NCI on the date (a partly owned holder shares its gains).
    pub holder_nci: Decimal,
}

/// The structure on one day (findings about the structure are `validate`'s).
fn structure_on(ds: &Dataset, day: NaiveDate) -> GroupStructure {
    let ids: Vec<EntityId> = ds.entities.iter().map(|e| e.id.clone()).collect();
    crate::structure::build(&ids, &ds.holdings, &ds.settings.parent, day, ds.settings.policies.significant_influence).0
}

/// A holder's capital share in an entity on a day: every holding valid that day.
pub fn capital_share_on(holdings: &[Holding], holder: &EntityId, owned: &EntityId, day: NaiveDate) -> Decimal {
    holdings
        .iter()
        .filter(|h| &h.owner == holder && &h.owned == owned && h.is_valid_on(day))
        .map(|h| h.capital_share)
        .sum()
}

/// What a row did to control, from the structures of the day before and of the day.
pub fn classify<'a>(ds: &Dataset, change: &'a OwnershipChange) -> Classified<'a> {
    let before_day = change.date.pred_opt().unwrap_or(change.date);
    let (before, after) = (structure_on(ds, before_day), structure_on(ds, change.date));
    let of = |s: &GroupStructure| s.entity(&change.owned).map(|e| (e.controlled, e.method, e.effective_interest));
    let (was, method_before, interest_before) = of(&before).unwrap_or((false, Method::None, Decimal::ZERO));
    let (is, method_after, _) = of(&after).unwrap_or((false, Method::None, Decimal::ZERO));
    let group_holders_before: BTreeSet<EntityId> = ds
        .holdings
        .iter()
        .filter(|h| h.owned == change.owned && h.is_valid_on(before_day) && !h.capital_share.is_zero())
        .filter(|h| &h.owner == before.parent() || before.entity(&h.owner).is_some_and(|x| x.controlled))
        .map(|h| h.owner.clone())
        .collect();
    let kind = match (was, is) {
        (false, true) if group_holders_before.is_empty() => ChangeKind::Acquisition,
        (false, true) => ChangeKind::StepAcquisition,
        (true, true) => ChangeKind::ChangeInStake,
        (true, false) => ChangeKind::LossOfControl,
        (false, false) => ChangeKind::NotControlled,
    };
    let holder_nci = after.entity(&change.holder).map(|e| e.nci).unwrap_or_default();
    Classified { change, kind, method_before, method_after, interest_before, group_holders_before, holder_nci }
}

/// Every finding about ownership changes for a close at `scope`.
pub fn findings(ds: &Dataset, scope: Scope) -> Vec<Finding> {
    let mut out = Vec::new();
    let year_first = scope.fiscal_start.first_day();
    let period_last = scope.period.last_day();
    let year_end = scope.fiscal_start.plus_months(11).last_day();
    let known: BTreeSet<&EntityId> = ds.entities.iter().map(|e| &e.id).collect();
    let mut seen: BTreeMap<(NaiveDate, &EntityId, &EntityId), &Source> = BTreeMap::new();
    for c in &ds.ownership_changes {
        if let Some(first) = seen.insert((c.date, &c.holder, &c.owned), &c.source) {
            out.push(
                Finding::new(
                    Rule::RowDuplicated,
                    format!("{} and {} on {} are already a row at {}", c.holder, c.owned, c.date, first),
                    "give one row per holder, entity and date, with the share changed that day in total",
                )
                .at(&c.source)
                .entity(&c.owned),
            );
            continue;
        }
        if let Some(f) = row_shape(c, &known, year_end) {
            out.push(f);
            continue;
        }
        out.extend(agreement(ds, c));
        if c.date <= period_last {
            let x = classify(ds, c);
            out.extend(supported(ds, &x, c.date >= year_first));
        }
    }
    out.extend(missing_rows(ds, year_first, period_last));
    out
}

/// An unknown entity, a row about itself, or a date after the fiscal year.
fn row_shape(c: &OwnershipChange, known: &BTreeSet<&EntityId>, year_end: NaiveDate) -> Option<Finding> {
    let f =
        |rule, message: String, action: &str| Some(Finding::new(rule, message, action).at(&c.source).entity(&c.owned));
    if let Some(e) = [&c.holder, &c.owned].into_iter().find(|e| !known.contains(e)) {
        return f(Rule::EntityUnknown, format!("{e} is not in entities.csv"), "add the entity or correct the row");
    }
    if c.holder == c.owned {
        return f(
            Rule::OwnershipChangeInconsistent,
            format!("{} buys or sells shares of itself", c.holder),
            "treasury shares are not an ownership change of the group; remove the row",
        );
    }
    if c.date > year_end {
        return f(
            Rule::DateInFuture,
            format!(
                "the change in {} is dated {}, after the fiscal year closed here ends ({year_end})",
                c.owned, c.date
            ),
            "a change of a later year belongs in that year's data folder",
        );
    }
    None
}

/// holdings.csv must give the same change of share on the date, and acquisitions.csv
/// the same consideration for control obtained in stages (IFRS 3.32).
fn agreement(ds: &Dataset, c: &OwnershipChange) -> Vec<Finding> {
    let mut out = Vec::new();
    let before_day = c.date.pred_opt().unwrap_or(c.date);
    let before = capital_share_on(&ds.holdings, &c.holder, &c.owned, before_day);
    let after = capital_share_on(&ds.holdings, &c.holder, &c.owned, c.date);
    if after - before != c.share {
        out.push(
            Finding::new(
                Rule::OwnershipChangeInconsistent,
                format!(
                    "{} changes its share of {} by {} on {}, but holdings.csv gives it {} on {} and {} on {}: a change of {} - {} = {}",
                    c.holder,
                    c.owned,
                    c.share.normalize(),
                    c.date,
                    before.normalize(),
                    before_day,
                    after.normalize(),
                    c.date,
                    after.normalize(),
                    before.normalize(),
                    (after - before).normalize()
                ),
                "make the two files agree: end the old holding the day before the change (`valid_to`) and start the new one on its date (`valid_from`), or correct `share`",
            )
            .at(&c.source)
            .entity(&c.owned),
        );
    }
    if let Some(a) = ds.acquisitions.iter().rfind(|a| a.owned == c.owned && a.date == c.date)
        && c.share.is_sign_positive()
    {
        let held = c.fair_value_held.unwrap_or_default();
        if c.consideration + held != a.consideration {
            out.push(
                Finding::new(
                    Rule::OwnershipChangeInconsistent,
                    format!(
                        "control of {} on {}: consideration {} + fair value of the interest held before {} = {}, but acquisitions.csv gives {} at {}",
                        c.owned,
                        c.date,
                        c.consideration,
                        held,
                        c.consideration + held,
                        a.consideration,
                        a.source
                    ),
                    "acquisitions.csv `consideration` is the consideration transferred plus the fair value of the previously held interest (IFRS 3.32): correct one of the two files",
                )
                .at(&c.source)
                .entity(&c.owned),
            );
        }
    }
    out
}

/// The kinds the close expresses, and what each needs; every other kind blocks.
/// `this_year`: the change falls in the fiscal year closed.
fn supported(ds: &Dataset, x: &Classified, this_year: bool) -> Vec<Finding> {
    let c = x.change;
    let unsupported = |why: String| {
        Finding::new(
            Rule::OwnershipChangeUnsupported,
            format!("{} of {} by {} on {}: {why}", x.kind.as_str(), c.owned, c.holder, c.date),
            "the close cannot express this change yet and does not guess its figures: close without it only as a draft, and account for it outside tessera",
        )
        .at(&c.source)
        .entity(&c.owned)
    };
    match x.kind {
        ChangeKind::Acquisition => Vec::new(),
        ChangeKind::StepAcquisition => step_acquisition_needs(ds, x, this_year, &unsupported),
        ChangeKind::ChangeInStake if !this_year => vec![unsupported(
            "the NCI is measured on the effective interest at the period end over all the equity earned since acquisition, so a change of an earlier year would misstate it".into(),
        )],
        ChangeKind::ChangeInStake => change_in_stake_needs(ds, x, &unsupported),
        ChangeKind::LossOfControl if !this_year && x.method_after == Method::Equity => vec![unsupported(
            "an associate retained after a loss of control of an earlier year: its cost, the fair value at that date (IFRS 10.25(b)), is not carried into later years yet (the holder's books keep its remaining cost)".into(),
        )],
        ChangeKind::LossOfControl if !this_year => Vec::new(),
        ChangeKind::LossOfControl => loss_of_control_needs(ds, x, &unsupported),
        ChangeKind::NotControlled if is_associate_sale(x) => associate_sale_needs(ds, x, this_year, &unsupported),
        ChangeKind::NotControlled if !this_year => Vec::new(),
        ChangeKind::NotControlled => vec![unsupported(format!(
            "the entity is {} before and {} after; the equity method and the investments take the share at the period end for the whole year",
            x.method_before.as_str(),
            x.method_after.as_str()
        ))],
    }
}

/// A step acquisition is expressed when the interest held before was an investment or
/// an associate (or joint venture) meeting [`associate_needs`] (not a joint operation),
/// held by the row's holder alone, in the presentation currency (its carrying amount is
/// then the holder's translated investment exactly), with its fair value given and, in
/// the fiscal year of the acquisition, a profit or loss account for the gain.
fn step_acquisition_needs(
    ds: &Dataset,
    x: &Classified,
    this_year: bool,
    unsupported: &dyn Fn(String) -> Finding,
) -> Vec<Finding> {
    let c = x.change;
    let mut out = Vec::new();
    match x.method_before {
        Method::None => {}
        Method::Equity if this_year => out.extend(associate_needs(ds, x).into_iter().map(unsupported)),
        Method::Equity => {}
        m => out.push(unsupported(format!(
            "the interest held before was accounted for by the method {}; derecognising its share of each line is not posted yet",
            m.as_str()
        ))),
    }
    if x.group_holders_before.iter().any(|h| h != &c.holder) {
        out.push(unsupported(format!(
            "the interest held before was held by {}, not by {} alone",
            x.group_holders_before.iter().map(EntityId::as_str).collect::<Vec<_>>().join(", "),
            c.holder
        )));
    }
    if !x.holder_nci.is_zero() {
        out.push(unsupported(format!(
            "the holder {} has a non-controlling interest of {} itself, which would share the remeasurement gain",
            c.holder,
            x.holder_nci.normalize()
        )));
    }
    if ds.entity(&c.holder).is_some_and(|e| e.currency != ds.settings.presentation_currency) {
        out.push(unsupported(format!(
            "the holder's functional currency is not the presentation currency {}, so the carrying amount of the interest held before is not known at the acquisition date's rate",
            ds.settings.presentation_currency
        )));
    }
    if !ds.acquisitions.iter().any(|a| a.owned == c.owned && a.date == c.date) {
        out.push(
            Finding::new(
                Rule::OwnershipChangeInconsistent,
                format!("control of {} is obtained on {} but acquisitions.csv has no row of that date", c.owned, c.date),
                "add the acquisition: consideration (with the fair value of the interest held before), NCI and net assets at the date",
            )
            .at(&c.source)
            .entity(&c.owned),
        );
    }
    if c.fair_value_held.is_none() {
        out.push(
            Finding::new(
                Rule::ValueMissing,
                format!("control of {} is obtained in stages on {} but `fair_value_held` is empty", c.owned, c.date),
                "give the fair value at the acquisition date of the interest held before (IFRS 3.42)",
            )
            .at(&c.source)
            .entity(&c.owned),
        );
    }
    if this_year {
        out.extend(gain_account_findings(ds, c));
    }
    out
}

/// What a change that ends the equity method needs in its fiscal year (a step
/// acquisition from an associate or joint venture, or its sale), besides what the kind
/// of change needs: the close runs the equity method to the month end before the date
/// (`close::step_acquisition::associate_before`) and reclassifies the investor's share
/// of the associate's OCI, the translation reserve to profit or loss (IAS 28.22(c)).
/// Each reason it cannot is returned.
fn associate_needs(ds: &Dataset, x: &Classified) -> Vec<String> {
    let c = x.change;
    let mut why = Vec::new();
    let year_first = Period::of_date(c.date).fiscal_year_start(ds.settings.fiscal_year_start).first_day();
    match ds.acquisitions.iter().filter(|a| a.owned == c.owned && a.date < c.date).max_by_key(|a| a.date) {
        None => why.push(format!(
            "acquisitions.csv has no row for the acquisition of the associate before {}: its cost and net assets then are where the equity method to the date starts (IAS 28.32)",
            c.date
        )),
        Some(a) => {
            let foreign = ds.entity(&c.owned).is_some_and(|e| e.currency != ds.settings.presentation_currency);
            if foreign && a.date < year_first {
                why.push(format!(
                    "the associate is a foreign operation held since {}, before the fiscal year of the change: the close keeps the investor's share of its exchange differences of earlier years in retained earnings, so the amount to reclassify to profit or loss (IAS 28.22(c), IAS 21.48) is not known",
                    a.date
                ));
            }
            if !a.fair_value_adjustment.is_zero() || ds.uplifts.iter().any(|u| u.owned == c.owned) {
                why.push("fair value adjustments inside the associate and those of the business combination are not told apart yet (fair_value_adjustments.csv names the entity, not the acquisition)".into());
            }
        }
    }
    if ds.impairments.iter().any(|i| i.owned == c.owned) {
        why.push("goodwill_impairments.csv names it: an impairment of the associate and one of the subsidiary's goodwill are not told apart yet".into());
    }
    // A revaluation surplus of the year is transferred to retained earnings, not
    // reclassified; the earlier years' share is in retained earnings already, unless the
    // prior year's close in the folder brought it forward in the reserve, in one amount
    // with the exchange differences.
    let brought = ds.brought_forward.equity_method_oci.get(&(c.holder.clone(), c.owned.clone()));
    if brought.is_some_and(|v| !v.is_zero()) && uses_other_reserves(ds, &c.owned) {
        why.push("it has OCI in a reserve other than the translation reserve (a revaluation surplus), and the prior year's close brings forward the investor's share of its OCI in one amount: the part to retained earnings and the part to profit or loss (IAS 28.22(c)) are not told apart".into());
    }
    if has_counterparty_lines(ds, &c.owned)
        || is_named_by_others(ds, &c.owned)
        || ds.inventory_profits.iter().any(|n| n.seller == c.owned || n.buyer == c.owned)
        || ds.net_investments.iter().any(|n| n.entity == c.owned || n.counterparty == c.owned)
    {
        why.push(format!("dividends, unrealised profit or other items between the group and the associate are not split at {} between the equity method and what follows yet", c.date));
    }
    why
}

/// A sale of (part of) an associate or joint venture that ends significant influence
/// (IAS 28.22): equity-accounted the day before, at most an investment after.
fn is_associate_sale(x: &Classified) -> bool {
    x.method_before == Method::Equity && x.method_after == Method::None && x.change.share.is_sign_negative()
}

/// A sale of an associate ending significant influence is expressed (IAS 28.22(a)-(c),
/// `equity_method::post_disposal`) when it meets [`associate_needs`], is held by the
/// row's holder alone, in the presentation currency, without NCI of its own, the
/// associate delivered every month to the last month end before the date, and the group
/// has no statement of cash flows. In a later fiscal year nothing is left to post, but
/// an investment retained (its fair value at the date is not carried into later years:
/// the holder's books keep its remaining cost).
fn associate_sale_needs(
    ds: &Dataset,
    x: &Classified,
    this_year: bool,
    unsupported: &dyn Fn(String) -> Finding,
) -> Vec<Finding> {
    let c = x.change;
    let retained = capital_share_on(&ds.holdings, &c.holder, &c.owned, c.date);
    if !this_year {
        return if retained.is_zero() {
            Vec::new()
        } else {
            vec![unsupported("an investment retained after the sale of an associate in an earlier year: its fair value at that date (IAS 28.22(b)) is not carried into later years yet".into())]
        };
    }
    let mut why = associate_needs(ds, x);
    if x.group_holders_before.iter().any(|h| h != &c.holder) {
        why.push(format!("it was held by {}, not by {} alone", join(&x.group_holders_before), c.holder));
    }
    if !x.holder_nci.is_zero() {
        why.push(format!("the holder {} has a non-controlling interest of its own", c.holder));
    }
    if ds.entity(&c.holder).is_some_and(|e| e.currency != ds.settings.presentation_currency) {
        why.push("the holder's functional currency is not the presentation currency".into());
    }
    if ds.cash_flow_lines.is_some() {
        why.push("the group has a statement of cash flows, which does not present the sale of an associate yet".into());
    }
    let mut out: Vec<Finding> = why.into_iter().map(unsupported).collect();
    out.extend(gain_account_findings(ds, c));
    out.extend(retained_value_findings(ds, c));
    out.extend(months_missing(ds, c));
    out
}

/// Entity ids for a message: `A, B`.
fn join(ids: &BTreeSet<EntityId>) -> String {
    ids.iter().map(EntityId::as_str).collect::<Vec<_>>().join(", ")
}

/// The rows the close posts as sales of an associate ending significant influence, in
/// the fiscal year of `scope` up to its period.
pub fn associate_sales(ds: &Dataset, scope: Scope) -> Vec<&OwnershipChange> {
    posted(ds, scope, Dated::InTheYear, |c, x, blocks| {
        c.share.is_sign_negative()
            && x.kind == ChangeKind::NotControlled
            && is_associate_sale(x)
            && associate_sale_needs(ds, x, true, blocks).is_empty()
            && agreement(ds, c).is_empty()
    })
}

/// What a loss of control with an associate (or joint venture) retained needs: the
/// retained interest at fair value is the associate's cost on initial recognition (IFRS
/// 10.25(b), B98(b)(iii), IAS 28.32), equity-accounted from the month of `date`. So
/// acquisitions.csv has the associate's row on `date`, its `consideration` the fair
/// value retained and its net assets those of the day (where the equity method
/// starts); `date` is the first day of a month (the month rule consolidates to the
/// last month end controlled and the equity method counts its first month whole: a
/// date within a month would count that month in both); and the group has no statement
/// of cash flows (the non-cash interest retained is not presented yet).
fn retained_associate_needs(ds: &Dataset, c: &OwnershipChange) -> Vec<String> {
    let mut why = Vec::new();
    match ds.acquisitions.iter().rfind(|a| a.owned == c.owned && a.date == c.date) {
        None => why.push(format!(
            "the interest retained is an associate but acquisitions.csv has no row for {} on {}: its cost (the fair value retained, IFRS 10.25(b)) and net assets that day are where the equity method starts (IAS 28.32)",
            c.owned, c.date
        )),
        Some(a) if Some(a.consideration) != c.fair_value_held => why.push(format!(
            "the associate retained has `consideration` {} in acquisitions.csv but `fair_value_held` {}: its cost on initial recognition is the fair value retained (IFRS 10.25(b), B98(b)(iii))",
            a.consideration,
            c.fair_value_held.map(|v| v.to_string()).unwrap_or_else(|| "empty".into())
        )),
        Some(_) => {}
    }
    if c.date.day() != 1 {
        why.push(format!(
            "control is lost on {} with an associate retained, within a month: the month would be both part of what is sold and equity-accounted (give the first day of a month)",
            c.date
        ));
    }
    if ds.cash_flow_lines.is_some() {
        why.push("the interest retained is an associate and the group has a statement of cash flows, which does not present a disposal with a non-cash interest retained yet".into());
    }
    why
}

/// The last month end consolidated for a subsidiary whose control ends on `date` (the
/// first day without it): the last month end on or before the day before. A month's
/// results belong to the group when it controls the entity at that month's end, as for
/// an acquisition: sold on 1 May, April is consolidated; sold on 15 April or on 30 April,
/// the results to 31 March are, and April's are part of what is sold.
pub fn last_controlled_month(date: NaiveDate) -> Period {
    let last_day = date.pred_opt().unwrap_or(date);
    let month = Period::of_date(last_day);
    if month.last_day() == last_day { month } else { month.prev() }
}

/// A loss of control is expressed when the subsidiary was consolidated in full, held by
/// the row's holder alone (in the presentation currency, without NCI of its own), holds
/// no entity itself, has no net investment item and no inventory count inside the
/// group (its intercompany balances and transactions are, `loss_of_control::pairs`),
/// has an acquisition (NCI at fair value and fair value adjustments included, but for
/// the latter with a statement of cash flows: [`sale_acquisition_obstacles`]), keeps at
/// most an investment or an associate meeting [`retained_associate_needs`] (not a
/// joint operation), delivered every month it is consolidated for, and was not acquired
/// in the fiscal year of the sale where the group has a statement of cash flows.
fn loss_of_control_needs(ds: &Dataset, x: &Classified, unsupported: &dyn Fn(String) -> Finding) -> Vec<Finding> {
    let c = x.change;
    let before_day = c.date.pred_opt().unwrap_or(c.date);
    let mut why: Vec<String> = Vec::new();
    if x.method_before != Method::Full {
        why.push(format!("it was consolidated by the method {} the day before", x.method_before.as_str()));
    }
    if x.group_holders_before.iter().any(|h| h != &c.holder) {
        why.push(format!(
            "it was held by {}, not by {} alone",
            x.group_holders_before.iter().map(EntityId::as_str).collect::<Vec<_>>().join(", "),
            c.holder
        ));
    }
    if !x.holder_nci.is_zero() {
        why.push(format!("the holder {} has a non-controlling interest of its own", c.holder));
    }
    if ds.entity(&c.holder).is_some_and(|e| e.currency != ds.settings.presentation_currency) {
        why.push("the holder's functional currency is not the presentation currency".into());
    }
    match x.method_after {
        Method::Equity => why.extend(retained_associate_needs(ds, c)),
        Method::Proportionate => why.push(
            "the interest retained is a joint operation (the group's share of each line from the date is not posted yet)"
                .into(),
        ),
        _ => {}
    }
    if ds.holdings.iter().any(|h| h.owner == c.owned && h.is_valid_on(before_day) && !h.capital_share.is_zero()) {
        why.push(format!("{} holds shares of other entities (a sub-group disposal)", c.owned));
    }
    why.extend(sale_acquisition_obstacles(ds, c, before_day));
    if ds.net_investments.iter().any(|n| n.entity == c.owned || n.counterparty == c.owned)
        || ds.inventory_profits.iter().any(|n| n.seller == c.owned || n.buyer == c.owned)
    {
        why.push("net_investment.csv or inventory_profit.csv names it".into());
    }
    if uses_other_reserves(ds, &c.owned) {
        why.push(
            "it has OCI in a reserve other than the translation reserve (IFRS 10.B99 transfer not posted yet)".into(),
        );
    }
    if ds.cash_flow_lines.is_some() && acquired_in_year_of(ds, c) {
        why.push("it was acquired in the fiscal year of the sale: the statement of cash flows does not present both (IAS 7.39-42)".into());
    }
    let mut out: Vec<Finding> = why.into_iter().map(unsupported).collect();
    out.extend(gain_account_findings(ds, c));
    out.extend(retained_value_findings(ds, c));
    out.extend(months_missing(ds, c));
    out
}

/// A change in stake with control kept is expressed when the holder keeps its books in
/// the presentation currency (a foreign subsidiary's translation reserve is
/// reattributed, IAS 21.48C, by `change_in_stake`), the holder holds it alone before and after
/// and has no NCI of its own, it holds no other entity, names no counterparty and is
/// named by no other entity but for the investment in it, its acquisition measured the
/// NCI at its share of net assets without a fair value adjustment, and no other change
/// of it in the year has the same last month end before it (each change is posted at
/// its own; the statement of cash flows shows it in financing, IAS 7.42A).
fn change_in_stake_needs(ds: &Dataset, x: &Classified, unsupported: &dyn Fn(String) -> Finding) -> Vec<Finding> {
    let c = x.change;
    let before_day = c.date.pred_opt().unwrap_or(c.date);
    let pres = ds.settings.presentation_currency;
    let mut why: Vec<String> = Vec::new();
    if ds.entity(&c.holder).is_some_and(|x| x.currency != pres) {
        why.push(format!(
            "the holder keeps its books in another currency than {pres}: the exchange difference on its investment in the subsidiary across the change is not split yet (IAS 21.48C is posted for a holder in {pres})"
        ));
    }
    let holders_after: BTreeSet<&EntityId> = ds
        .holdings
        .iter()
        .filter(|h| h.owned == c.owned && h.is_valid_on(c.date) && !h.capital_share.is_zero())
        .map(|h| &h.owner)
        .collect();
    if x.group_holders_before.iter().any(|h| h != &c.holder) || holders_after.iter().any(|h| *h != &c.holder) {
        why.push(format!("{} is held by others than {} too", c.owned, c.holder));
    }
    if !x.holder_nci.is_zero() {
        why.push(format!("the holder {} has a non-controlling interest of its own", c.holder));
    }
    if ds.holdings.iter().any(|h| h.owner == c.owned && h.is_valid_on(before_day) && !h.capital_share.is_zero()) {
        why.push(format!("{} holds shares of other entities (multi-tier NCI)", c.owned));
    }
    why.extend(acquisition_obstacles(ds, c, before_day));
    // The investment entry measures the NCI at acquisition at the period end's outside
    // share, which this rule corrects; a bargain purchase at that share it does not.
    let outside_after = Decimal::ONE - capital_share_on(&ds.holdings, &c.holder, &c.owned, c.date);
    if let Some(a) = ds.acquisitions.iter().rfind(|a| a.owned == c.owned && a.date <= before_day)
        && a.consideration + outside_after * a.net_assets < a.net_assets
    {
        why.push("at the new share the acquisition's goodwill would be negative (a bargain purchase), which is not corrected yet".into());
    }
    if has_counterparty_lines(ds, &c.owned) || is_named_by_others(ds, &c.owned) {
        why.push(format!("intercompany items of {} are not split between the two shares yet", c.owned));
    }
    let year = Period::of_date(c.date).fiscal_year_start(ds.settings.fiscal_year_start);
    let in_year = |d: NaiveDate| Period::of_date(d).fiscal_year_start(ds.settings.fiscal_year_start) == year;
    // Several changes in the year are posted one by one, each at the close of the last
    // month end before it: two in the same month would share that close.
    let month = last_controlled_month(c.date);
    if ds
        .ownership_changes
        .iter()
        .any(|o| o.owned == c.owned && o.date != c.date && in_year(o.date) && last_controlled_month(o.date) == month)
    {
        why.push(format!(
            "{} changes hands more than once with the same last month end before the change ({month})",
            c.owned
        ));
    }
    if uses_other_reserves(ds, &c.owned) {
        why.push(
            "it has OCI in a reserve other than the translation reserve (its reattribution is not posted yet)".into(),
        );
    }
    let mut out: Vec<Finding> = why.into_iter().map(unsupported).collect();
    if c.share.is_sign_negative() {
        // The holder's own gain on the shares sold is reversed to equity.
        out.extend(gain_account_findings(ds, c));
    }
    out.extend(months_missing(ds, c));
    out
}

/// What of the subsidiary's acquisition a sale does not handle yet. Its NCI at fair
/// value is handled: the goodwill the investment entry recognised is all of it, the
/// NCI's part included, and leaves whole; the NCI leaves at its carrying amount (IFRS
/// 10.B98(a)). Its fair value adjustments are too: their carrying amount at the last
/// month end (less their deferred tax) leaves with the net assets (B98(a)(i)), and
/// their depreciation of the year to then stays in profit or loss; but not where the
/// group has a statement of cash flows, whose disposal line does not yet take out the
/// depreciation carried with the sale.
fn sale_acquisition_obstacles(ds: &Dataset, c: &OwnershipChange, before_day: NaiveDate) -> Vec<String> {
    let mut why = Vec::new();
    match ds.acquisitions.iter().rfind(|a| a.owned == c.owned && a.date <= before_day) {
        None => why.push("acquisitions.csv has no acquisition of it before the date".into()),
        Some(a) => {
            let uplifted = !a.fair_value_adjustment.is_zero() || ds.uplifts.iter().any(|u| u.owned == c.owned);
            if uplifted && ds.cash_flow_lines.is_some() {
                why.push("its acquisition has a fair value adjustment and the group has a statement of cash flows, whose disposal line does not take out the adjustment's depreciation carried with the sale yet".into());
            }
        }
    }
    why
}

/// What of the subsidiary's acquisition a change in stake does not handle yet.
fn acquisition_obstacles(ds: &Dataset, c: &OwnershipChange, before_day: NaiveDate) -> Vec<String> {
    let mut why = Vec::new();
    match ds.acquisitions.iter().rfind(|a| a.owned == c.owned && a.date <= before_day) {
        None => why.push("acquisitions.csv has no acquisition of it before the date".into()),
        Some(a) => {
            if a.nci_measurement == NciMeasurement::FairValue && a.nci_fair_value.is_some_and(|v| !v.is_zero()) {
                why.push("its NCI was measured at fair value (the NCI's part of goodwill is not handled yet)".into());
            }
            if !a.fair_value_adjustment.is_zero() || ds.uplifts.iter().any(|u| u.owned == c.owned) {
                why.push("its acquisition has a fair value adjustment (not handled yet)".into());
            }
        }
    }
    why
}

/// Whether an entity's trial balances or opening balances name a counterparty.
fn has_counterparty_lines(ds: &Dataset, e: &EntityId) -> bool {
    [&ds.ledger, &ds.opening].into_iter().any(|df| {
        df.clone()
            .lazy()
            .filter(col("entity").eq(lit(e.as_str())).and(col("counterparty").is_not_null()))
            .collect()
            .map(|d| d.height() > 0)
            .unwrap_or(true)
    })
}

/// Whether an entity's deliveries use an OCI account that accumulates in a reserve other
/// than the translation reserve, or such a reserve (a revaluation surplus, a hedging
/// reserve): on a sale it is transferred within equity or reclassified by its own
/// standard (IFRS 10.B99), and a change in stake reattributes it; neither is posted yet.
fn uses_other_reserves(ds: &Dataset, e: &EntityId) -> bool {
    let tr = &ds.settings.accounts.translation_reserve;
    let mut other: BTreeSet<&GroupAccount> = BTreeSet::new();
    for a in &ds.accounts {
        if let Some(r) = a.reserve.as_ref().filter(|r| *r != tr) {
            other.insert(r);
            other.insert(&a.account);
        }
    }
    if other.is_empty() {
        return false;
    }
    let locals = |df: &DataFrame| -> Option<BTreeSet<String>> {
        let d = df.clone().lazy().filter(col("entity").eq(lit(e.as_str()))).select([col("account")]).collect().ok()?;
        Some(d.column("account").ok()?.str().ok()?.iter().flatten().map(String::from).collect())
    };
    let mapped = || -> Option<BTreeSet<String>> {
        let d = ds.mappings.clone().lazy().filter(col("entity").eq(lit(e.as_str()))).collect().ok()?;
        let (l, g) = (d.column("local_account").ok()?.str().ok()?, d.column("group_account").ok()?.str().ok()?);
        let used: BTreeSet<String> = [&ds.ledger, &ds.opening].into_iter().filter_map(locals).flatten().collect();
        Some(l.iter().zip(g.iter()).filter_map(|(l, g)| used.contains(l?).then(|| g.map(String::from))?).collect())
    };
    match mapped() {
        None => true,
        Some(groups) => groups.iter().any(|g| other.contains(&GroupAccount::new(g))),
    }
}

/// Whether another entity's trial balances or opening balances name `e` on an account
/// other than an investment (an intragroup dividend, a sale, a loan with the sold
/// subsidiary): those items are not eliminated up to the date yet.
fn is_named_by_others(ds: &Dataset, e: &EntityId) -> bool {
    let pairs = |df: &DataFrame| -> Option<Vec<(String, String)>> {
        let d = df
            .clone()
            .lazy()
            .filter(col("counterparty").eq(lit(e.as_str())).and(col("entity").neq(lit(e.as_str()))))
            .select([col("entity"), col("account")])
            .collect()
            .ok()?;
        let (a, b) = (d.column("entity").ok()?.str().ok()?, d.column("account").ok()?.str().ok()?);
        Some(a.iter().zip(b.iter()).filter_map(|(x, y)| Some((x?.to_string(), y?.to_string()))).collect())
    };
    let Some(m) = (|| {
        let d = &ds.mappings;
        let (e, l, g) = (
            d.column("entity").ok()?.str().ok()?,
            d.column("local_account").ok()?.str().ok()?,
            d.column("group_account").ok()?.str().ok()?,
        );
        Some(
            e.iter()
                .zip(l.iter())
                .zip(g.iter())
                .filter_map(|((e, l), g)| Some(((e?.to_string(), l?.to_string()), g?.to_string())))
                .collect::<BTreeMap<(String, String), String>>(),
        )
    })() else {
        return true;
    };
    [&ds.ledger, &ds.opening].into_iter().any(|df| match pairs(df) {
        None => true,
        Some(rows) => rows.iter().any(|k| {
            let kind = m.get(k).and_then(|g| ds.account(&GroupAccount::new(g))).and_then(|d| d.ic_kind.as_deref());
            kind != Some("investment")
        }),
    })
}

/// A retained interest needs its fair value (IFRS 10.25(b)); none is retained when the
/// holder's share after the sale is 0.
fn retained_value_findings(ds: &Dataset, c: &OwnershipChange) -> Option<Finding> {
    let retained = capital_share_on(&ds.holdings, &c.holder, &c.owned, c.date);
    let f =
        |rule, message: String, action: &str| Some(Finding::new(rule, message, action).at(&c.source).entity(&c.owned));
    match c.fair_value_held {
        None if !retained.is_zero() => f(
            Rule::ValueMissing,
            format!(
                "{} keeps {} of {} after the sale on {} but `fair_value_held` is empty",
                c.holder,
                retained.normalize(),
                c.owned,
                c.date
            ),
            "give the fair value of the interest retained at the date control is lost (IFRS 10.25(b))",
        ),
        Some(v) if retained.is_zero() && !v.is_zero() => f(
            Rule::OwnershipChangeInconsistent,
            format!("{} keeps nothing of {} after {}, but `fair_value_held` is {v}", c.holder, c.owned, c.date),
            "leave `fair_value_held` empty when no interest is retained, or correct holdings.csv",
        ),
        _ => None,
    }
}

/// The months from the fiscal year's start to the last month end consolidated that the
/// sold subsidiary has not delivered: blocking, its results to the date are needed.
fn months_missing(ds: &Dataset, c: &OwnershipChange) -> Vec<Finding> {
    let last = last_controlled_month(c.date);
    let first = Period::of_date(c.date).fiscal_year_start(ds.settings.fiscal_year_start);
    if last < first {
        return Vec::new();
    }
    let have: BTreeSet<String> = ds
        .ledger
        .clone()
        .lazy()
        .filter(col("entity").eq(lit(c.owned.as_str())))
        .select([col("period")])
        .collect()
        .ok()
        .and_then(|d| Some(d.column("period").ok()?.str().ok()?.iter().flatten().map(String::from).collect()))
        .unwrap_or_default();
    first
        .through(&last)
        .into_iter()
        .filter(|p| !have.contains(&p.to_string()))
        .map(|p| {
            Finding::new(
                Rule::DeliveryMissing,
                format!(
                    "{} has no trial balance for {p}: it is sold on {} and consolidated to the end of {last}",
                    c.owned, c.date
                ),
                format!("deliver entities/{}/tb-{p}.movements.csv (or .balances.csv)", c.owned),
            )
            .in_file(format!("entities/{}/tb-{p}.movements.csv", c.owned))
            .entity(&c.owned)
            .period(p)
        })
        .collect()
}

/// The row's `gain_account` must be a profit or loss account of the chart.
fn gain_account_findings(ds: &Dataset, c: &OwnershipChange) -> Option<Finding> {
    let f = |rule, message: String| {
        Some(
            Finding::new(rule, message, "name the profit or loss group account for the gain or loss in `gain_account`")
                .at(&c.source)
                .entity(&c.owned),
        )
    };
    match &c.gain_account {
        None => f(
            Rule::ValueMissing,
            format!("the change in {} on {} gives a gain or loss but `gain_account` is empty", c.owned, c.date),
        ),
        Some(a) => match ds.account(a) {
            None => f(Rule::AccountUnknown, format!("`gain_account` {a} is not in entities/accounts.csv")),
            Some(d) if d.statement != Statement::ProfitOrLoss => {
                f(Rule::AccountInvalid, format!("`gain_account` {a} is not a profit or loss account"))
            }
            Some(_) => None,
        },
    }
}

/// Holdings that end in the year to the period without a row on the next day, and
/// control obtained over an entity already held in part without a row for it.
fn missing_rows(ds: &Dataset, year_first: NaiveDate, period_last: NaiveDate) -> Vec<Finding> {
    let mut out = Vec::new();
    let has_row = |holder: &EntityId, owned: &EntityId, date: NaiveDate| {
        ds.ownership_changes.iter().any(|c| &c.holder == holder && &c.owned == owned && c.date == date)
    };
    for h in &ds.holdings {
        let Some(next) = h.valid_to.and_then(|to| to.succ_opt()) else { continue };
        if next < year_first
            || next > period_last
            || h.valid_to < Some(h.valid_from)
            || has_row(&h.owner, &h.owned, next)
        {
            continue;
        }
        out.push(
            Finding::new(
                Rule::OwnershipChangeMissing,
                format!(
                    "the holding of {} in {} ({}) ends on {}, in the fiscal year closed, but ownership_changes.csv has no row for {} and {} on {next}",
                    h.owner,
                    h.owned,
                    h.capital_share.normalize(),
                    h.valid_to.unwrap_or(next),
                    h.owner,
                    h.owned
                ),
                "add the sale (or purchase) to entities/ownership_changes.csv: date, share, proceeds and the fair value of any interest retained; without it the close would drop the entity for the whole year",
            )
            .at(&h.source)
            .entity(&h.owned),
        );
    }
    // Structures are built only for an entity someone held the day before: the demo's
    // and a generated group's plain acquisitions cost one look-up each.
    let mut by_owned: BTreeMap<&EntityId, Vec<&Holding>> = BTreeMap::new();
    for h in &ds.holdings {
        by_owned.entry(&h.owned).or_default().push(h);
    }
    for a in ds.acquisitions.iter().filter(|a| a.date <= period_last) {
        let before_day = a.date.pred_opt().unwrap_or(a.date);
        if !by_owned.get(&a.owned).is_some_and(|hs| hs.iter().any(|h| h.is_valid_on(before_day))) {
            continue;
        }
        let before = structure_on(ds, before_day);
        let held = before.entity(&a.owned).is_some_and(|e| !e.effective_interest.is_zero() && !e.controlled);
        let after = structure_on(ds, a.date);
        let controlled = after.entity(&a.owned).is_some_and(|e| e.controlled);
        let row =
            ds.ownership_changes.iter().any(|c| c.owned == a.owned && c.date == a.date && c.fair_value_held.is_some());
        if held && controlled && !row {
            out.push(
                Finding::new(
                    Rule::OwnershipChangeMissing,
                    format!(
                        "control of {} is obtained on {} but the group already held {} of it the day before, and ownership_changes.csv gives no fair value for that interest",
                        a.owned,
                        a.date,
                        before.entity(&a.owned).map(|e| e.effective_interest.normalize()).unwrap_or_default()
                    ),
                    "add the purchase to entities/ownership_changes.csv with `fair_value_held`: the interest held before is remeasured to fair value and the gain or loss goes to profit or loss (IFRS 3.42)",
                )
                .at(&a.source)
                .entity(&a.owned),
            );
        }
    }
    out
}

/// Which rows of `ownership_changes.csv` a selection of [`posted`] looks at: those dated
/// up to the period of the scope, or only those of its fiscal year.
enum Dated {
    ToThePeriod,
    InTheYear,
}

/// The rows dated as `dated` says that `posts` accepts, given the row, its
/// classification and a maker of findings (which only count here: the close's findings
/// come from [`findings`], and a draft posts nothing for a row that blocks).
fn posted(
    ds: &Dataset,
    scope: Scope,
    dated: Dated,
    posts: impl Fn(&OwnershipChange, &Classified, &dyn Fn(String) -> Finding) -> bool,
) -> Vec<&OwnershipChange> {
    let (year_first, period_last) = (scope.fiscal_start.first_day(), scope.period.last_day());
    let blocks = |why: String| Finding::new(Rule::OwnershipChangeUnsupported, why, String::new());
    ds.ownership_changes
        .iter()
        .filter(|c| c.date <= period_last && (matches!(dated, Dated::ToThePeriod) || c.date >= year_first))
        .filter(|c| posts(c, &classify(ds, c), &blocks))
        .collect()
}

/// The rows the close posts as step acquisitions: control obtained in stages up to the
/// period of `scope`, each meeting what [`step_acquisition_needs`] asks (the others
/// block the close, and a draft posts nothing for them).
pub fn step_acquisitions(ds: &Dataset, scope: Scope) -> Vec<&OwnershipChange> {
    let year_first = scope.fiscal_start.first_day();
    posted(ds, scope, Dated::ToThePeriod, |c, x, blocks| {
        c.share.is_sign_positive()
            && x.kind == ChangeKind::StepAcquisition
            && step_acquisition_needs(ds, x, c.date >= year_first, blocks).is_empty()
            && agreement(ds, c).is_empty()
    })
}

/// The rows the close posts as losses of control: control lost in the fiscal year of
/// `scope` up to its period, each meeting what `loss_of_control_needs` asks.
pub fn losses_of_control(ds: &Dataset, scope: Scope) -> Vec<&OwnershipChange> {
    posted(ds, scope, Dated::InTheYear, |c, x, blocks| {
        c.share.is_sign_negative()
            && x.kind == ChangeKind::LossOfControl
            && loss_of_control_needs(ds, x, blocks).is_empty()
            && agreement(ds, c).is_empty()
    })
}

/// The rows the close posts as changes in stake with control kept, in the fiscal year
/// of `scope` up to its period.
pub fn changes_in_stake(ds: &Dataset, scope: Scope) -> Vec<&OwnershipChange> {
    posted(ds, scope, Dated::InTheYear, |c, x, blocks| {
        x.kind == ChangeKind::ChangeInStake
            && change_in_stake_needs(ds, x, blocks).is_empty()
            && agreement(ds, c).is_empty()
    })
}

/// Whether the subsidiary sold in `c` was acquired in the fiscal year of the sale: the
/// statement of cash flows presents an acquisition or a disposal in a view, not both.
fn acquired_in_year_of(ds: &Dataset, c: &OwnershipChange) -> bool {
    let year = Period::of_date(c.date).fiscal_year_start(ds.settings.fiscal_year_start);
    ds.acquisitions.iter().any(|a| a.owned == c.owned && a.date < c.date && Period::of_date(a.date) >= year)
}

#[cfg(test)]
mod tests {
    use super::*;

    fn date(s: &str) -> NaiveDate {
        NaiveDate::parse_from_str(s, "%Y-%m-%d").unwrap_or_else(|_| panic!("bad date {s}"))
    }

    /// The month rule: a month's results are the group's when it controls the entity at
    /// that month's end. Sold on 1 May: 30 April was controlled. Sold on 15 April or on
    /// 30 April: 30 April was not, the last month end controlled is 31 March. Sold on
    /// 1 January: the year's opening balances are the last consolidated.
    #[test]
    fn the_last_month_end_controlled() {
        let month = |s: &str| last_controlled_month(date(s)).to_string();
        assert_eq!(month("2026-05-01"), "2026-04");
        assert_eq!(month("2026-04-15"), "2026-03");
        assert_eq!(month("2026-04-30"), "2026-03");
        assert_eq!(month("2026-01-01"), "2025-12");
    }
}

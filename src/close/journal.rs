//! The elimination journal: entries named after the rule that posts them (IFRS 10.B86),
//! each balanced, numbered in the order they are posted.
//!
//! A rule is an [`EliminationRule`], never a string: the stages that read the journal
//! (the NCI, the statement of changes in equity, segments) match on the variant, so
//! renaming a rule cannot silently break them. The written name (`as_str`) is the one
//! the outputs show.

use rust_decimal::Decimal;
use serde::Serialize;

use crate::model::{EntityId, GroupAccount};

/// The rule behind an elimination entry; each has its own file in `src/close/`.
#[derive(Debug, Clone, Copy, PartialEq, Eq, PartialOrd, Ord, Hash)]
pub enum EliminationRule {
    /// `pre_acquisition.rs`: results before control into equity at acquisition.
    PreAcquisitionResults,
    /// `intercompany.rs`: intercompany balances and transactions, loans and interest
    /// included, pair by pair and kind by kind.
    Intercompany,
    /// `dividends.rs`: dividends paid inside the group.
    IntragroupDividend,
    /// `ifric16.rs`: translation differences between operations, step by step.
    Ifric16StepByStep,
    /// `net_investment.rs`: the exchange difference on a net investment loan into OCI.
    NetInvestmentFx,
    /// `unrealised_profit.rs`: profit on goods still held inside the group.
    UnrealisedProfit,
    /// `investment.rs`: investment against equity at acquisition, goodwill.
    InvestmentAndGoodwill,
    /// `fair_value.rs`: depreciation of the fair value adjustments at acquisition.
    FairValueDepreciation,
    /// `fair_value.rs`: release of the deferred tax on those adjustments (IAS 12.19).
    FairValueDeferredTax,
    /// `equity_method.rs`: the share of an associate's or joint venture's results.
    EquityMethod,
    /// `nci.rs`: the non-controlling interests' share of post-acquisition equity.
    NonControllingInterest,
    /// `step_acquisition.rs`: the interest held before control remeasured to fair value.
    StepAcquisition,
    /// `loss_of_control.rs`: a subsidiary sold: derecognition, gain, recycling.
    LossOfControl,
    /// `change_in_stake.rs`: more or less of a subsidiary, control kept.
    ChangeInStake,
    /// `topside.rs`: a top-side entry of `group_adjustments.csv`, booked by the group.
    GroupAdjustment,
}

impl EliminationRule {
    /// The name the outputs show (journal, CSV, trace).
    pub fn as_str(self) -> &'static str {
        match self {
            EliminationRule::PreAcquisitionResults => "pre_acquisition_results",
            EliminationRule::Intercompany => "intercompany",
            EliminationRule::IntragroupDividend => "intragroup_dividend",
            EliminationRule::Ifric16StepByStep => "ifric16_step_by_step",
            EliminationRule::NetInvestmentFx => "net_investment_fx",
            EliminationRule::UnrealisedProfit => "unrealised_profit",
            EliminationRule::InvestmentAndGoodwill => "investment_and_goodwill",
            EliminationRule::FairValueDepreciation => "fair_value_depreciation",
            EliminationRule::FairValueDeferredTax => "fair_value_deferred_tax",
            EliminationRule::EquityMethod => "equity_method",
            EliminationRule::NonControllingInterest => "non_controlling_interest",
            EliminationRule::StepAcquisition => "step_acquisition",
            EliminationRule::LossOfControl => "loss_of_control",
            EliminationRule::ChangeInStake => "change_in_stake",
            EliminationRule::GroupAdjustment => "group_adjustment",
        }
    }
}

impl std::fmt::Display for EliminationRule {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        f.write_str(self.as_str())
    }
}

impl Serialize for EliminationRule {
    fn serialize<S: serde::Serializer>(&self, serializer: S) -> Result<S::Ok, S::Error> {
        serializer.serialize_str(self.as_str())
    }
}

/// One line of an elimination entry.
#[derive(Debug, Clone, PartialEq, Eq, Serialize)]
pub struct EntryLine {
    pub account: GroupAccount,
    /// The entity whose figure the line corrects.
    pub entity: EntityId,
    pub counterparty: Option<EntityId>,
    /// Presentation currency, debit positive.
    pub amount: Decimal,
}

/// An elimination entry: balanced, named after its rule, posted at the lowest common
/// parent of the entities it concerns.
#[derive(Debug, Clone, PartialEq, Eq, Serialize)]
pub struct Entry {
    pub id: String,
    pub rule: EliminationRule,
    pub posted_at: EntityId,
    pub entities: Vec<EntityId>,
    pub description: String,
    pub lines: Vec<EntryLine>,
}

impl Entry {
    pub fn total(&self) -> Decimal {
        self.lines.iter().map(|l| l.amount).sum()
    }
}

/// Builds a journal; ids are assigned in order.
#[derive(Debug, Default)]
pub struct Journal {
    pub entries: Vec<Entry>,
    /// What the equity method measured per holder and investee
    /// (`equity_method::post_share`), which the next year brings forward.
    pub equity_shares: std::collections::BTreeMap<(EntityId, EntityId), EquityShare>,
}

/// The equity method's measure of one holder's interest in one investee at the period
/// end, as the close rounded it: what a later year's opening carries.
#[derive(Debug, Clone, Copy, Default, PartialEq, Eq)]
pub struct EquityShare {
    /// The share since acquisition to the period end, less dividends received
    /// (`BroughtForward::equity_method_share`).
    pub to_date: Decimal,
    /// The share of the investee's OCI of the fiscal year, which the year end closes
    /// into the translation reserve (`BroughtForward::equity_method_oci`). Only the share's
    /// own: the exchange difference on unrealised profit with the investee is carried by
    /// its own entry (`unrealised_profit::earlier_years`).
    pub oci_of_year: Decimal,
}

impl Journal {
    /// Posts an entry without its zero lines; an entry with no line left is not posted.
    pub fn post(
        &mut self,
        rule: EliminationRule,
        posted_at: EntityId,
        entities: Vec<EntityId>,
        description: String,
        lines: Vec<EntryLine>,
    ) {
        let lines: Vec<EntryLine> = lines.into_iter().filter(|l| !l.amount.is_zero()).collect();
        if lines.is_empty() {
            return;
        }
        let id = format!("E{:04}", self.entries.len() + 1);
        let entry = Entry { id, rule, posted_at, entities, description, lines };
        // A broken entry is a bug in a rule, never a data problem.
        assert!(
            entry.total().is_zero(),
            "elimination {} ({}) does not balance: {}",
            entry.id,
            entry.rule,
            entry.total()
        );
        self.entries.push(entry);
    }

    /// The entries of one rule.
    pub fn of(&self, rule: EliminationRule) -> impl Iterator<Item = &Entry> {
        self.entries.iter().filter(move |e| e.rule == rule)
    }
}

/// A journal line.
pub fn line(account: &GroupAccount, entity: &EntityId, counterparty: Option<&EntityId>, amount: Decimal) -> EntryLine {
    EntryLine { account: account.clone(), entity: entity.clone(), counterparty: counterparty.cloned(), amount }
}

#[cfg(test)]
mod tests {
    use super::*;

    /// The written names are the outputs' contract: a rename would move every journal.
    #[test]
    fn rule_names_are_the_written_ones() {
        let names: Vec<&str> = [
            EliminationRule::PreAcquisitionResults,
            EliminationRule::Intercompany,
            EliminationRule::IntragroupDividend,
            EliminationRule::Ifric16StepByStep,
            EliminationRule::NetInvestmentFx,
            EliminationRule::UnrealisedProfit,
            EliminationRule::InvestmentAndGoodwill,
            EliminationRule::FairValueDepreciation,
            EliminationRule::FairValueDeferredTax,
            EliminationRule::EquityMethod,
            EliminationRule::NonControllingInterest,
            EliminationRule::StepAcquisition,
            EliminationRule::LossOfControl,
            EliminationRule::ChangeInStake,
            EliminationRule::GroupAdjustment,
        ]
        .into_iter()
        .map(EliminationRule::as_str)
        .collect();
        assert_eq!(
            names,
            [
                "pre_acquisition_results",
                "intercompany",
                "intragroup_dividend",
                "ifric16_step_by_step",
                "net_investment_fx",
                "unrealised_profit",
                "investment_and_goodwill",
                "fair_value_depreciation",
                "fair_value_deferred_tax",
                "equity_method",
                "non_controlling_interest",
                "step_acquisition",
                "loss_of_control",
                "change_in_stake",
                "group_adjustment"
            ]
        );
        assert_eq!(serde_json::to_string(&EliminationRule::EquityMethod).ok().as_deref(), Some("\"equity_method\""));
    }

    /// Zero lines are dropped and ids follow the posting order.
    #[test]
    fn zero_lines_are_dropped_and_ids_count_up() {
        let (a, e) = (GroupAccount::new("1000"), EntityId::new("P"));
        let mut j = Journal::default();
        j.post(
            EliminationRule::Intercompany,
            e.clone(),
            vec![],
            "nothing".into(),
            vec![line(&a, &e, None, Decimal::ZERO)],
        );
        j.post(
            EliminationRule::Intercompany,
            e.clone(),
            vec![],
            "x".into(),
            vec![
                line(&a, &e, None, Decimal::ONE),
                line(&a, &e, None, -Decimal::ONE),
                line(&a, &e, None, Decimal::ZERO),
            ],
        );
        assert_eq!(j.entries.len(), 1);
        assert_eq!(j.entries[0].id, "E0001");
        assert_eq!(j.entries[0].lines.len(), 2);
    }

    #[test]
    #[should_panic(expected = "does not balance")]
    fn an_unbalanced_entry_is_a_bug() {
        let (a, e) = (GroupAccount::new("1000"), EntityId::new("P"));
        Journal::default().post(
            EliminationRule::Intercompany,
            e.clone(),
            vec![],
            "x".into(),
            vec![line(&a, &e, None, Decimal::ONE)],
        );
    }
}

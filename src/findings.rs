//! Findings: problems in the user's data, collected across a whole run and reported
//! together. Each finding is named after the rule it breaks, says where (file, line,
//! entity, account, period), shows the arithmetic and says what to do. A broken internal
//! invariant is not a finding but a bug, and panics instead.

use std::fmt;

use serde::Serialize;

use crate::model::{EntityId, Period, Source};

/// How a finding affects the run.
#[derive(Debug, Clone, Copy, PartialEq, Eq, PartialOrd, Ord, Hash, Serialize)]
#[serde(rename_all = "snake_case")]
pub enum Severity {
    /// Worth knowing; the close can go on.
    Warning,
    /// The close cannot be trusted until this is fixed.
    Blocking,
    /// An input could not be read at all (exit code 2).
    Unreadable,
}

/// The rules a delivery can break. The variant name is the finding's name in every
/// output, so it is part of the interface: rename only with a changelog entry.
#[derive(Debug, Clone, Copy, PartialEq, Eq, PartialOrd, Ord, Hash)]
pub enum Rule {
    /// A rule of the daily reference rates (`tessera rates`), named by that module.
    Rate(crate::rates::RateRule),
    FileMissing,
    FileUnreadable,
    ColumnMissing,
    ColumnUnknown,
    /// A header names the same column twice: which one holds the values is unknown.
    ColumnDuplicated,
    /// A CSV row of the wrong shape (more or fewer fields than the header, a comment).
    RowMalformed,
    /// A file or folder under entities/ or rates/ that is no part of the formats.
    FileUnknown,
    /// A trial balance file whose name does not declare movements or balances exactly.
    DeliveryNameInvalid,
    /// A table that holds no row where at least one is needed.
    TableEmpty,
    /// A rate outside the bounds that keep every translated amount exact.
    RateOutOfRange,
    ValueMissing,
    ValueInvalid,
    SettingInvalid,
    AmountMalformed,
    AmountSurplusDecimals,
    AmountTooLarge,
    RowDuplicated,
    EntityUnknown,
    EntityDuplicated,
    EntityFolderUnknown,
    CurrencyUnknown,
    CountryUnknown,
    AccountInvalid,
    AccountDuplicated,
    AccountUnknown,
    AccountUnmapped,
    AccountMappedTwice,
    CounterpartyMissing,
    CounterpartyUnknown,
    CounterpartySelf,
    TransactionCurrencyIncomplete,
    PeriodOutsideYear,
    DeliveryDuplicated,
    DeliveryMissing,
    /// An entity outside the group at the period end delivers figures the close leaves out.
    DeliveryOutsideScope,
    /// A draft close left an entity's delivery out (missing, unread or with findings).
    DeliverySetAside,
    /// Two dates that must be the same day are not (acquisition and holding).
    DateInconsistent,
    /// A date after the end of the fiscal year being closed.
    DateInFuture,
    /// A closing rate that moves more than `plausibility.rate_move` from the month before.
    RateMoveImplausible,
    /// A month whose income has the opposite sign of the entity's earlier months.
    SignsFlipped,
    /// A counterparty on an account that is not intercompany.
    CounterpartyOnPlainAccount,
    /// An open intercompany difference above tolerance that no acceptance covers.
    IntercompanyOpen,
    /// A row of accepted_differences.csv that fits no difference the close posts.
    AcceptanceUnused,
    OpeningMissing,
    OpeningHistoricalAmountMissing,
    TrialBalanceUnbalanced,
    RateMissing,
    RateNotPositive,
    RateDuplicated,
    HoldingInvalid,
    /// The parent named in the settings is not among the entities.
    ParentUnknown,
    /// A holding names an owner or an owned entity that is not among the entities.
    HoldingUnknownEntity,
    /// A capital or voting share is outside 0 to 1.
    HoldingShareOutOfRange,
    /// A holding's owner and owned entity are the same (its own treasury shares).
    HoldingOfItself,
    /// A holding ends before it starts, so it is never valid.
    HoldingPeriodInverted,
    /// The capital (or voting) shares held in one entity add up to more than 1.
    EntityOverHeld,
    StructureUnsolvable,
    OverrideConflict,
    OverrideOutsideGroup,
    ArrangementConflict,
    /// Shares of the parent are held by an entity of the structure (treasury shares,
    /// IAS 32.33). This states the policy applied; it is not an error in itself.
    ParentHeld,
    /// A limit is exceeded (see the `MAX_*` constants of the module that raises it).
    LimitExceeded,
    AcquisitionMissing,
    GoodwillNegative,
    LayoutInvalid,
    LayoutAccountUncovered,
    LayoutAccountTwice,
    /// An entity has no segment under the key reported (its figures are unallocated).
    SegmentMissing,
    /// A row of segment_accounts.csv that cannot be applied.
    SegmentAccountInvalid,
    /// An operating segment reported separately meets none of the IFRS 8.13 thresholds.
    SegmentBelowThresholds,
    /// A segment reported among all other segments meets an IFRS 8.13 threshold.
    SegmentReportable,
    /// Reportable segments' external revenue is below 75% of the group's (IFRS 8.15).
    SegmentsExternalRevenueShort,
    /// An account that moves has no line in cash_flow_lines.csv (IAS 7).
    CashFlowLineMissing,
    /// An entity's delivered opening of a fiscal year differs from its closing of the
    /// year before, with profit or loss closed into retained earnings.
    OpeningDiffersFromPriorClose,
    /// An entity's opening cannot be derived from its prior-year close (no local
    /// account maps to retained earnings, or the prior year cannot be translated).
    OpeningNotDerivable,
    /// A holding ends or a previously held entity comes under control during the year
    /// without a row of ownership_changes.csv to say what was paid, received or held.
    OwnershipChangeMissing,
    /// A row of ownership_changes.csv that holdings.csv or acquisitions.csv contradict.
    OwnershipChangeInconsistent,
    /// A change in ownership the close cannot express yet (it never guesses a figure).
    OwnershipChangeUnsupported,
    /// A top-side entry of group_adjustments.csv whose lines do not sum to zero.
    GroupAdjustmentUnbalanced,
    /// A top-side entry's scope is not the parent or the holding entity of a sub-group,
    /// or a line names an entity outside that sub-group.
    GroupAdjustmentScopeInvalid,
    /// The rows of one top-side entry disagree on its period, scope, reason or preparer.
    GroupAdjustmentInconsistent,
    /// A month the IAS 29 restatement of a hyperinflationary entity needs has no price
    /// index in `rates/price_index.csv`.
    PriceIndexMissing,
    /// A price index of zero or below: no restatement factor can come from it.
    PriceIndexNotPositive,
    /// Price indices of a currency no hyperinflationary entity reports in.
    PriceIndexUnused,
    /// An asset or liability account of a hyperinflationary entity that the chart does not
    /// classify as monetary or non-monetary (IAS 29.12-14).
    MonetaryClassMissing,
    /// A hyperinflationary entity the close cannot restate: in the presentation
    /// currency, or acquired in a way `restate::acquisition_findings` names (in the
    /// year, equity-accounted, impaired, its ownership changing).
    RestatementUnsupported,
    /// A comparison (`--compare`) the folder cannot provide: the prior year absent, say.
    ComparisonUnavailable,
    /// The share of an equity-accounted investee's losses beyond the carrying amount is
    /// not recognised (IAS 28.38-39): a warning that shows the amount.
    AssociateLossesUnrecognised,
    /// An intercompany account of a hyperinflationary entity that the chart makes
    /// non-monetary: its restatement shows as an intercompany difference (a warning).
    IntercompanyItemRestated,
}

impl Rule {
    /// The severity a finding of this rule has unless a stage says otherwise.
    pub fn default_severity(self) -> Severity {
        match self {
            Rule::FileMissing | Rule::FileUnreadable | Rule::ColumnMissing | Rule::ColumnDuplicated => {
                Severity::Unreadable
            }
            Rule::ColumnUnknown
            | Rule::DeliveryOutsideScope
            | Rule::RateMoveImplausible
            | Rule::SignsFlipped
            | Rule::CounterpartyOnPlainAccount
            | Rule::AcceptanceUnused
            | Rule::PriceIndexUnused
            | Rule::AssociateLossesUnrecognised
            | Rule::IntercompanyItemRestated => Severity::Warning,
            Rule::SegmentMissing
            | Rule::SegmentBelowThresholds
            | Rule::SegmentReportable
            | Rule::SegmentsExternalRevenueShort => Severity::Warning,
            Rule::Rate(r) => r.severity(),
            _ => Severity::Blocking,
        }
    }
}

impl fmt::Display for Rule {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        match self {
            Rule::Rate(r) => f.write_str(r.as_str()),
            other => fmt::Debug::fmt(other, f),
        }
    }
}

impl Serialize for Rule {
    fn serialize<S: serde::Serializer>(&self, s: S) -> Result<S::Ok, S::Error> {
        s.collect_str(self)
    }
}

/// One problem found in the data.
#[derive(Debug, Clone, PartialEq, Eq, Serialize)]
pub struct Finding {
    pub rule: Rule,
    pub severity: Severity,
    pub file: Option<String>,
    pub line: Option<u64>,
    pub entity: Option<EntityId>,
    pub account: Option<String>,
    pub period: Option<Period>,
    /// What is wrong, with the arithmetic where there is some.
    pub message: String,
    /// What the user should do about it.
    pub action: String,
}

impl Finding {
    pub fn new(rule: Rule, message: impl Into<String>, action: impl Into<String>) -> Self {
        Self {
            rule,
            severity: rule.default_severity(),
            file: None,
            line: None,
            entity: None,
            account: None,
            period: None,
            message: message.into(),
            action: action.into(),
        }
    }
    pub fn at(mut self, source: &Source) -> Self {
        self.file = Some(source.file.clone());
        self.line = source.line;
        self
    }
    pub fn in_file(mut self, file: impl Into<String>) -> Self {
        self.file = Some(file.into());
        self
    }
    pub fn line(mut self, line: u64) -> Self {
        self.line = Some(line);
        self
    }
    pub fn entity(mut self, entity: &EntityId) -> Self {
        self.entity = Some(entity.clone());
        self
    }
    pub fn account(mut self, account: impl Into<String>) -> Self {
        self.account = Some(account.into());
        self
    }
    pub fn period(mut self, period: Period) -> Self {
        self.period = Some(period);
        self
    }
    pub fn severity(mut self, severity: Severity) -> Self {
        self.severity = severity;
        self
    }
    /// Where, as one short string: `file:line`.
    pub fn location(&self) -> String {
        match (&self.file, self.line) {
            (Some(f), Some(l)) => format!("{f}:{l}"),
            (Some(f), None) => f.clone(),
            _ => String::new(),
        }
    }
}

/// Every finding of a run, in a stable order for reproducible reports.
#[derive(Debug, Default, Clone, Serialize)]
pub struct Findings {
    items: Vec<Finding>,
}

impl Findings {
    pub fn push(&mut self, f: Finding) {
        self.items.push(f);
    }
    pub fn extend(&mut self, fs: impl IntoIterator<Item = Finding>) {
        self.items.extend(fs);
    }
    pub fn items(&self) -> &[Finding] {
        &self.items
    }
    pub fn is_empty(&self) -> bool {
        self.items.is_empty()
    }
    pub fn len(&self) -> usize {
        self.items.len()
    }
    pub fn worst(&self) -> Option<Severity> {
        self.items.iter().map(|f| f.severity).max()
    }
    pub fn has_blocking(&self) -> bool {
        self.worst().is_some_and(|s| s >= Severity::Blocking)
    }
    pub fn has_unreadable(&self) -> bool {
        self.worst() == Some(Severity::Unreadable)
    }
    pub fn count(&self, rule: Rule) -> usize {
        self.items.iter().filter(|f| f.rule == rule).count()
    }
    /// Sorts by file, line, entity, period, account, rule: the order reports print in.
    pub fn sort(&mut self) {
        self.items.sort_by(|a, b| {
            b.severity.cmp(&a.severity).then_with(|| {
                (&a.file, a.line, &a.entity, a.period, &a.account, a.rule, &a.message)
                    .cmp(&(&b.file, b.line, &b.entity, b.period, &b.account, b.rule, &b.message))
            })
        });
    }
}

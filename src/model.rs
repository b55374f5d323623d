//! The plain data model every stage shares: identifiers as newtypes, periods, the group's
//! settings, entities, holdings and the chart of accounts. Nothing here reads files or
//! knows about polars; loading builds these values and the stages consume them.

use std::fmt;
use std::str::FromStr;

use chrono::{Datelike, NaiveDate};
use rust_decimal::Decimal;

macro_rules! id_newtype {
    ($(#[$doc:meta])* $name:ident) => {
        $(#[$doc])*
        #[derive(Debug, Clone, PartialEq, Eq, PartialOrd, Ord, Hash)]
        pub struct $name(pub String);

        impl $name {
            pub fn new(s: impl Into<String>) -> Self {
                Self(s.into())
            }
            pub fn as_str(&self) -> &str {
                &self.0
            }
        }

        impl fmt::Display for $name {
            fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
                f.write_str(&self.0)
            }
        }

        impl serde::Serialize for $name {
            fn serialize<S: serde::Serializer>(&self, s: S) -> Result<S::Ok, S::Error> {
                s.serialize_str(&self.0)
            }
        }

        impl From<&str> for $name {
            fn from(s: &str) -> Self {
                Self(s.to_string())
            }
        }
    };
}

id_newtype!(
    /// An entity of the group (a legal entity or a reporting unit), e.g. `ALD-NL`.
    EntityId
);
id_newtype!(
    /// An account of the group chart, e.g. `1550`.
    GroupAccount
);
id_newtype!(
    /// An account of one entity's own chart, e.g. `140900`.
    LocalAccount
);

/// An ISO 4217 currency, with its minor unit taken from the `iso_currency` crate.
#[derive(Debug, Clone, Copy, PartialEq, Eq, PartialOrd, Ord, Hash)]
pub struct Currency(iso_currency::Currency);

impl Currency {
    /// Parses an alphabetic ISO 4217 code; `None` for an unknown code.
    pub fn parse(code: &str) -> Option<Self> {
        iso_currency::Currency::from_code(code).map(Self)
    }

    pub fn code(&self) -> &'static str {
        self.0.code()
    }

    /// Digits after the decimal point (ISO 4217 "minor unit"). Currencies without a
    /// defined minor unit (e.g. XAU) count as 0 decimals is not assumed: they are refused
    /// by `minor_unit_checked`.
    pub fn minor_unit(&self) -> u32 {
        self.0.exponent().map(u32::from).unwrap_or(0)
    }

    /// The minor unit when ISO 4217 defines one.
    pub fn minor_unit_checked(&self) -> Option<u32> {
        self.0.exponent().map(u32::from)
    }
}

impl serde::Serialize for Currency {
    fn serialize<S: serde::Serializer>(&self, s: S) -> Result<S::Ok, S::Error> {
        s.serialize_str(self.code())
    }
}

impl serde::Serialize for Period {
    fn serialize<S: serde::Serializer>(&self, s: S) -> Result<S::Ok, S::Error> {
        s.collect_str(self)
    }
}

impl fmt::Display for Currency {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        f.write_str(self.code())
    }
}

/// A calendar month, the unit of every delivery and rate.
#[derive(Debug, Clone, Copy, PartialEq, Eq, PartialOrd, Ord, Hash)]
pub struct Period {
    year: i32,
    month: u32,
}

impl Period {
    pub fn new(year: i32, month: u32) -> Option<Self> {
        ((1..=12).contains(&month) && (1000..=9999).contains(&year)).then_some(Self { year, month })
    }
    pub fn year(&self) -> i32 {
        self.year
    }
    pub fn month(&self) -> u32 {
        self.month
    }
    pub fn next(&self) -> Self {
        if self.month == 12 {
            Self { year: self.year + 1, month: 1 }
        } else {
            Self { year: self.year, month: self.month + 1 }
        }
    }
    pub fn prev(&self) -> Self {
        if self.month == 1 {
            Self { year: self.year - 1, month: 12 }
        } else {
            Self { year: self.year, month: self.month - 1 }
        }
    }
    pub fn first_day(&self) -> NaiveDate {
        NaiveDate::from_ymd_opt(self.year, self.month, 1).expect("valid period")
    }
    pub fn last_day(&self) -> NaiveDate {
        self.next().first_day().pred_opt().expect("valid period")
    }
    pub fn of_date(d: NaiveDate) -> Self {
        Self { year: d.year(), month: d.month() }
    }
    /// First month of the fiscal year this period belongs to.
    pub fn fiscal_year_start(&self, start_month: u32) -> Self {
        let year = if self.month >= start_month { self.year } else { self.year - 1 };
        Self { year, month: start_month }
    }
    /// First month of the fiscal quarter this period belongs to.
    pub fn fiscal_quarter_start(&self, start_month: u32) -> Self {
        let mut p = self.fiscal_year_start(start_month);
        while p.months_until(self) >= 3 {
            p = p.plus_months(3);
        }
        p
    }
    /// Months from `self` to `other` (negative when `other` is earlier).
    pub fn months_until(&self, other: &Self) -> i32 {
        (other.year - self.year) * 12 + other.month as i32 - self.month as i32
    }
    pub fn plus_months(&self, n: i32) -> Self {
        let idx = self.year * 12 + self.month as i32 - 1 + n;
        Self { year: idx.div_euclid(12), month: (idx.rem_euclid(12) + 1) as u32 }
    }
    /// Periods from `self` to `last`, both included.
    pub fn through(&self, last: &Self) -> Vec<Self> {
        let mut out = Vec::new();
        let mut p = *self;
        while p <= *last {
            out.push(p);
            p = p.next();
        }
        out
    }
}

impl fmt::Display for Period {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        write!(f, "{:04}-{:02}", self.year, self.month)
    }
}

impl FromStr for Period {
    type Err = String;
    fn from_str(s: &str) -> Result<Self, Self::Err> {
        let bad = || format!("period {s:?} is not a month written YYYY-MM");
        let (y, m) = s.split_once('-').ok_or_else(bad)?;
        if y.len() != 4 || m.len() != 2 {
            return Err(bad());
        }
        let year = y.parse().map_err(|_| bad())?;
        let month = m.parse().map_err(|_| bad())?;
        Period::new(year, month).ok_or_else(bad)
    }
}

/// How a translated line is rounded to the presentation currency's minor unit.
#[derive(Debug, Clone, Copy, PartialEq, Eq, serde::Serialize, serde::Deserialize)]
#[serde(rename_all = "snake_case")]
pub enum RoundingMode {
    HalfAwayFromZero,
    HalfEven,
}

/// How income and expenses are translated (IAS 21.39b, 21.40).
#[derive(Debug, Clone, Copy, PartialEq, Eq, serde::Serialize, serde::Deserialize)]
#[serde(rename_all = "snake_case")]
pub enum IncomeTranslation {
    /// Each month's movement at that month's average rate; year to date is their sum.
    Periodic,
    /// The year-to-date amount at the year-to-date average rate.
    YearToDate,
}

/// IFRIC 16 method for indirect foreign operations.
#[derive(Debug, Clone, Copy, PartialEq, Eq, serde::Serialize, serde::Deserialize)]
#[serde(rename_all = "snake_case")]
pub enum Ifric16Method {
    Direct,
    StepByStep,
}

/// Group accounts with a role in the close, named in the settings.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct RoleAccounts {
    pub retained_earnings: GroupAccount,
    pub translation_reserve: GroupAccount,
    /// OCI account receiving each period's translation difference (IAS 21.39c).
    pub translation_difference: GroupAccount,
    pub non_controlling_interest: GroupAccount,
    pub goodwill: GroupAccount,
    pub equity_investments: GroupAccount,
    pub equity_result: GroupAccount,
    pub intercompany_difference: GroupAccount,
    /// Inventory and cost of sales, for the elimination of unrealised profit; needed
    /// only when `inventory_profit.csv` has rows.
    pub inventory: Option<GroupAccount>,
    pub cost_of_sales: Option<GroupAccount>,
    /// Expense account for goodwill impairment of the fiscal year; needed only when an
    /// acquisition has `impairment_year`.
    pub goodwill_impairment: Option<GroupAccount>,
    /// Income account for the gain on a bargain purchase (IFRS 3.34); needed only when
    /// an acquisition's goodwill would be negative.
    pub bargain_purchase_gain: Option<GroupAccount>,
    /// Deferred tax (balance sheet) and tax expense (profit or loss) of the
    /// consolidation adjustments; needed only under `policies.deferred_tax`.
    pub deferred_tax: Option<GroupAccount>,
    pub deferred_tax_expense: Option<GroupAccount>,
    /// Profit or loss account for the gain or loss on the net monetary position of a
    /// hyperinflationary entity (IAS 29.27-28); needed only when an entity has
    /// `hyperinflationary_from`.
    pub net_monetary_position: Option<GroupAccount>,
}

#[derive(Debug, Clone, PartialEq, Eq)]
pub struct Policies {
    pub rounding: RoundingMode,
    pub income_translation: IncomeTranslation,
    pub ifric16: Ifric16Method,
    /// Voting share from which an investee is presumed an associate (IAS 28.5).
    pub significant_influence: Decimal,
    /// The rate of a goodwill impairment in the month it is recognised.
    pub goodwill_impairment_rate: ImpairmentRate,
    /// Deferred tax on the consolidation adjustments (IAS 12.19, 12.66): fair value
    /// adjustments and unrealised profit in inventory. Off unless asked for.
    pub deferred_tax: bool,
    /// Where the statement of cash flows shows dividends received from equity-accounted
    /// investees (IAS 7.31, 7.33).
    pub associate_dividends: DividendsReceived,
}

#[derive(Debug, Clone, PartialEq, Eq)]
pub struct IntercompanySettings {
    pub tolerance_absolute: Decimal,
    pub tolerance_relative: Decimal,
    pub timing_window_days: u32,
}

/// Thresholds of the plausibility warnings (`[plausibility]` of group.toml): figures
/// that are possible but should be looked at before a close is trusted.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct PlausibilitySettings {
    /// A closing rate that moves by more than this share from the month before.
    pub rate_move: Decimal,
    /// How many earlier months of the year must agree on the sign of an entity's income
    /// before a month with the opposite sign is flagged; 0 turns the check off.
    pub sign_months: u32,
}

impl Default for PlausibilitySettings {
    fn default() -> Self {
        Self { rate_move: Decimal::new(25, 2), sign_months: 2 }
    }
}

/// The group settings file, validated.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct Settings {
    pub name: String,
    pub parent: EntityId,
    pub presentation_currency: Currency,
    pub fiscal_year_start: u32,
    pub policies: Policies,
    pub accounts: RoleAccounts,
    pub intercompany: IntercompanySettings,
    pub plausibility: PlausibilitySettings,
    /// The `[segments]` table (IFRS 8), when the group reports segments.
    pub segments: Option<SegmentSettings>,
}

/// What the segment report shows (IFRS 8.23) and how it groups segments, from the
/// `[segments]` table of `group.toml`. Each measure is a list of tokens, each a layout
/// line id (of `profit_or_loss` or `balance_sheet`) or a group account or range
/// `from..to`; `segments` resolves them against the layout and the chart.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct SegmentSettings {
    /// The segment key shown when `--by` is not given (`geography`, `business`, ...).
    pub key: String,
    pub revenue: String,
    /// The profit measure management reviews (IFRS 8.23), e.g. operating profit.
    pub profit: String,
    pub depreciation: Option<String>,
    pub interest_income: Option<String>,
    pub interest_expense: Option<String>,
    pub tax: Option<String>,
    pub equity_result: Option<String>,
    pub assets: Option<String>,
    pub liabilities: Option<String>,
    /// Operating segments not reported separately: shown together as all other
    /// segments, a reconciling item (IFRS 8.16).
    pub other: Vec<String>,
    /// Segment values that are not operating segments (a head office): unallocated
    /// items of the reconciliation (IFRS 8.28).
    pub unallocated: Vec<String>,
    /// Share of the group's external revenue or non-current assets from which a foreign
    /// country is shown on its own in the entity-wide view (IFRS 8.33).
    pub country_materiality: Decimal,
}

/// One row of the optional `entities/segment_accounts.csv`: group accounts of an entity
/// that belong to another segment than the entity's own, under one segment key.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct SegmentAccount {
    pub entity: EntityId,
    pub key: String,
    pub segment: String,
    /// Group accounts and ranges `from..to`, space separated (as in layouts.csv).
    pub accounts: String,
    pub source: Source,
}

/// Where a value came from: a file relative to the data folder and a line (header = 1).
#[derive(Debug, Clone, PartialEq, Eq, PartialOrd, Ord, Hash, serde::Serialize)]
pub struct Source {
    pub file: String,
    pub line: Option<u64>,
}

impl Source {
    pub fn file(file: impl Into<String>) -> Self {
        Self { file: file.into(), line: None }
    }
    pub fn line(file: impl Into<String>, line: u64) -> Self {
        Self { file: file.into(), line: Some(line) }
    }
}

impl fmt::Display for Source {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        match self.line {
            Some(l) => write!(f, "{}:{}", self.file, l),
            None => f.write_str(&self.file),
        }
    }
}

#[derive(Debug, Clone, PartialEq, Eq)]
pub struct Entity {
    pub id: EntityId,
    pub name: String,
    /// ISO 3166-1 alpha-2.
    pub country: String,
    pub currency: Currency,
    /// Segment key -> segment, e.g. ("geography", "Europe").
    pub segments: Vec<(String, String)>,
    pub hyperinflationary_from: Option<Period>,
    pub source: Source,
}

/// IFRS 11 joint arrangement type declared on a holding.
#[derive(Debug, Clone, Copy, PartialEq, Eq, serde::Serialize)]
#[serde(rename_all = "snake_case")]
pub enum Arrangement {
    JointOperation,
    JointVenture,
}

/// Consolidation method of an entity in a period.
#[derive(Debug, Clone, Copy, PartialEq, Eq, PartialOrd, Ord, Hash, serde::Serialize)]
#[serde(rename_all = "snake_case")]
pub enum Method {
    /// Controlled: 100% of every line, NCI for the outside share (IFRS 10).
    Full,
    /// Joint operation: the group's share of each line (IFRS 11.20).
    Proportionate,
    /// Joint venture or associate: one investment line (IAS 28).
    Equity,
    /// Not consolidated: an investment at cost or fair value.
    None,
}

impl Method {
    pub fn as_str(&self) -> &'static str {
        match self {
            Method::Full => "full",
            Method::Proportionate => "proportionate",
            Method::Equity => "equity",
            Method::None => "none",
        }
    }
    pub fn parse(s: &str) -> Option<Self> {
        match s {
            "full" => Some(Method::Full),
            "proportionate" => Some(Method::Proportionate),
            "equity" => Some(Method::Equity),
            "none" => Some(Method::None),
            _ => None,
        }
    }
}

#[derive(Debug, Clone, PartialEq, Eq)]
pub struct Holding {
    pub owner: EntityId,
    pub owned: EntityId,
    pub capital_share: Decimal,
    pub voting_share: Decimal,
    pub valid_from: NaiveDate,
    pub valid_to: Option<NaiveDate>,
    pub arrangement: Option<Arrangement>,
    pub method_override: Option<(Method, String)>,
    pub source: Source,
}

impl Holding {
    /// Whether the holding exists on `date` (both ends included).
    pub fn is_valid_on(&self, date: NaiveDate) -> bool {
        self.valid_from <= date && self.valid_to.is_none_or(|to| date <= to)
    }
}

#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash, serde::Serialize)]
#[serde(rename_all = "snake_case")]
pub enum Statement {
    BalanceSheet,
    ProfitOrLoss,
    Oci,
}

#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash, serde::Serialize)]
#[serde(rename_all = "snake_case")]
pub enum AccountClass {
    Asset,
    Liability,
    Equity,
    Income,
    Expense,
}

/// Which rate translates an account (IAS 21.39).
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash, PartialOrd, Ord, serde::Serialize)]
#[serde(rename_all = "snake_case")]
pub enum Basis {
    Closing,
    Average,
    Historical,
}

impl Basis {
    pub fn as_str(&self) -> &'static str {
        match self {
            Basis::Closing => "closing",
            Basis::Average => "average",
            Basis::Historical => "historical",
        }
    }
}

#[derive(Debug, Clone, PartialEq, Eq)]
pub struct AccountDef {
    pub account: GroupAccount,
    pub name: String,
    pub statement: Statement,
    pub class: AccountClass,
    pub basis: Basis,
    pub ic_kind: Option<String>,
    pub non_current: bool,
    /// For an OCI account, the equity reserve its amounts accumulate into (revaluation,
    /// hedging, ...); `None` is the translation reserve (`accounts.translation_reserve`).
    pub reserve: Option<GroupAccount>,
    /// For an asset or liability, whether it is a monetary item (IAS 29.12: money held
    /// and items to be received or paid in money); `None` when the chart does not say.
    /// Needed for the IAS 29 restatement of a hyperinflationary entity (`restate`).
    pub monetary: Option<bool>,
    pub source: Source,
}

/// How the non-controlling interest is measured at acquisition (IFRS 3.19).
#[derive(Debug, Clone, Copy, PartialEq, Eq, serde::Serialize)]
#[serde(rename_all = "snake_case")]
pub enum NciMeasurement {
    /// At fair value: goodwill includes the NCI's share ("full goodwill").
    FairValue,
    /// At the NCI's share of the identifiable net assets ("partial goodwill").
    ShareOfNetAssets,
}

/// An acquisition of a subsidiary or an associate, from `entities/acquisitions.csv`.
/// Amounts are in the acquired entity's functional currency: goodwill of a foreign
/// operation is its asset (IAS 21.47).
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct Acquisition {
    pub owned: EntityId,
    pub date: NaiveDate,
    /// Consideration transferred plus the fair value of any previously held interest.
    pub consideration: Decimal,
    pub nci_measurement: NciMeasurement,
    /// Fair value of the NCI, when measured at fair value.
    pub nci_fair_value: Option<Decimal>,
    /// Fair value of the identifiable net assets at the acquisition date.
    pub net_assets: Decimal,
    /// The same net assets as carried in the presentation currency (translated at the
    /// acquisition date's rate): the equity the elimination removes.
    pub net_assets_presentation: Decimal,
    /// Goodwill impairment recognised to date, in the functional currency.
    pub impairment: Decimal,
    /// The part of `impairment` recognised in the current fiscal year: an expense of the
    /// year (IAS 36.60); the rest was charged in earlier years.
    pub impairment_year: Decimal,
    /// Fair value less carrying amount of the identifiable net assets at acquisition
    /// (IFRS 3.18), in the functional currency, not booked by the subsidiary: the group
    /// adds it to `fair_value_account` and carries it at the closing rate (IAS 21.47).
    /// Held constant (as for land: no depreciation of the uplift).
    pub fair_value_adjustment: Decimal,
    pub fair_value_account: Option<GroupAccount>,
    pub source: Source,
}

/// Goods bought inside the group still held by the buyer, from
/// `entities/inventory_profit.csv`: the profit the seller made on them is unrealised.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct InventoryProfit {
    pub seller: EntityId,
    pub buyer: EntityId,
    /// The count date's period.
    pub period: Period,
    /// The buyer's carrying amount, in the buyer's functional currency.
    pub inventory_amount: Decimal,
    /// The seller's margin as a share of the transfer price (a 25% mark-up is 0.20).
    pub margin_rate: Decimal,
    pub source: Source,
}

/// An intragroup monetary item designated part of the net investment in a foreign
/// operation (IAS 21.15, 21.32), from `entities/net_investment.csv`: one side of it, in
/// the books of `entity`, whose exchange difference is booked in profit or loss on
/// `fx_account` (with the counterparty on the line) and belongs in OCI in the group.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct NetInvestment {
    pub entity: EntityId,
    pub counterparty: EntityId,
    /// The group account of the item (a loan to or from the counterparty).
    pub account: GroupAccount,
    /// The profit or loss group account holding the item's exchange difference.
    pub fx_account: GroupAccount,
    /// The date from which settlement is neither planned nor likely.
    pub from: NaiveDate,
    pub note: String,
    pub source: Source,
}

/// A holder's long-term interest in an equity-accounted investee that in substance forms
/// part of its net investment (IAS 28.38), from `entities/long_term_interests.csv`: the
/// holder's balance on `account` naming the investee as counterparty (a long-term loan,
/// say). Losses beyond the investment reduce it, in the order of the file's rows.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct LongTermInterest {
    pub holder: EntityId,
    pub investee: EntityId,
    pub account: GroupAccount,
    pub source: Source,
}

/// A subsidiary's named reserve at the acquisition date, from
/// `entities/reserves_at_acquisition.csv`: the reserve's balance then, in the
/// subsidiary's functional currency, as in its books (a credit negative).
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct ReserveAtAcquisition {
    pub owned: EntityId,
    pub account: GroupAccount,
    pub amount: Decimal,
    pub source: Source,
}

/// What a fiscal year's close brings forward from the prior year's close in the same
/// data folder, besides the balances (`years`): amounts that a rule counts from the
/// opening of the first year the folder holds, so that the close at a year end and the
/// close of the next year's opening agree. Empty for the first year.
#[derive(Debug, Clone, Default, PartialEq, Eq)]
pub struct BroughtForward {
    /// Per holder: the exchange differences of the earlier years held on its eliminated
    /// investments in subsidiaries. The NCI rule takes them out of the holder's
    /// post-acquisition equity, as it takes out the year's.
    pub investment_fx: std::collections::BTreeMap<EntityId, Decimal>,
    /// Per holder and investee: the holder's share of the investee's OCI of the earlier
    /// years held (equity method, IAS 28.10): in the translation reserve, where it
    /// accumulated, not in retained earnings.
    pub equity_method_oci: std::collections::BTreeMap<(EntityId, EntityId), Decimal>,
    /// Per foreign operation: its translation reserve at the prior year end (IFRIC 16.17,
    /// gains positive), brought forward as the operation's own rather than as each
    /// entity's translated opening has it (the two differ under the step-by-step method).
    pub operation_reserves: std::collections::BTreeMap<EntityId, Decimal>,
    /// Per subsidiary and named reserve (an equity account that the `reserve` column of
    /// the chart names, other than the translation reserve): the reserve's balance at
    /// acquisition that the investment entry of the prior year end eliminated, with the
    /// OCI before control that the pre-acquisition entry moved out of the year's results
    /// (an acquisition in that year), in the presentation currency (a credit negative).
    /// The reserve carried into a later year
    /// also holds the OCI since acquisition, which is the group's (IFRS 10.B94).
    pub reserves_at_acquisition: std::collections::BTreeMap<(EntityId, GroupAccount), Decimal>,
    /// Per subsidiary: its own translation reserve at acquisition (a credit negative),
    /// the part of the reserve in its books that is equity acquired (IFRS 3.32, IFRS
    /// 10.B86(b)), not the group's (IAS 21.48: only the exchange differences since
    /// control are the operation's reserve): the reserve in its opening of the
    /// acquisition year plus its exchange differences of that year before control. Its
    /// books carry it on in their reserve year after year, so the investment entry of
    /// every later year eliminates it again.
    pub translation_reserve_at_acquisition: std::collections::BTreeMap<EntityId, Decimal>,
    /// Per holder and investee: the holder's share of the investee's equity since
    /// acquisition at the prior year end (earlier years', the year's profit and OCI, less
    /// the dividends received; before the floor of IAS 28.38-39), as that close rounded
    /// it: the earlier years' share of the next year, so that its opening is the year
    /// end to the cent.
    pub equity_method_share: std::collections::BTreeMap<(EntityId, EntityId), Decimal>,
}

/// A change in a holder's share of an entity on one date, from
/// `entities/ownership_changes.csv`: shares bought or sold, what was paid or received,
/// and the fair value of the interest held before (a step acquisition, IFRS 3.42) or
/// retained after (a loss of control, IFRS 10.25). Amounts are in the owned entity's
/// functional currency, like `acquisitions.csv`. holdings.csv still gives the shares and
/// dates: the holder's capital share on `date` less its share the day before must be
/// `share`.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct OwnershipChange {
    /// The first day of the new share (the old holding's `valid_to` is the day before).
    pub date: NaiveDate,
    pub holder: EntityId,
    pub owned: EntityId,
    /// Capital share bought (positive) or sold (negative).
    pub share: Decimal,
    /// Consideration paid for the shares bought, or proceeds of the shares sold.
    pub consideration: Decimal,
    /// Fair value at `date` of the interest held before (bought) or retained (sold).
    pub fair_value_held: Option<Decimal>,
    /// Transaction costs (IFRS 3.53: an expense of an acquisition).
    pub costs: Decimal,
    /// The profit or loss group account of a gain or loss the change gives rise to.
    pub gain_account: Option<GroupAccount>,
    pub note: String,
    pub source: Source,
}

/// One line of a top-side entry, from `entities/group_adjustments.csv`: an entry the
/// group books on the group chart in the presentation currency, above the entities'
/// ledgers (a late audit adjustment, a remeasurement only the group makes). The rows
/// sharing `entry` are one entry; `close::topside` checks and posts it.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct GroupAdjustment {
    /// The entry id the rows of one entry share.
    pub entry: String,
    /// The month the entry is booked in.
    pub period: Period,
    /// The group's parent, or the holding entity of the sub-group the entry belongs to.
    pub scope: EntityId,
    pub account: GroupAccount,
    /// Presentation currency, debit positive.
    pub amount: Decimal,
    /// The consolidated entity whose figure the line corrects, when there is one.
    pub entity: Option<EntityId>,
    pub counterparty: Option<EntityId>,
    pub reason: String,
    pub prepared_by: String,
    pub source: Source,
}

/// One fair value adjustment of an acquired subsidiary's identifiable asset or
/// liability (IFRS 3.18), from `entities/fair_value_adjustments.csv` (or the single
/// `fair_value_adjustment` of `acquisitions.csv`, which is never depreciated). In the
/// subsidiary's functional currency: it is the foreign operation's asset (IAS 21.47).
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct Uplift {
    pub owned: EntityId,
    /// The balance-sheet group account the adjustment belongs to.
    pub account: GroupAccount,
    /// Fair value less carrying amount at the acquisition date, functional currency.
    pub amount: Decimal,
    /// Remaining useful life in months from the acquisition month; `None` for an asset
    /// that is not depreciated (land, IAS 16.58).
    pub life_months: Option<u32>,
    /// The profit or loss group account of the depreciation, with a useful life.
    pub expense_account: Option<GroupAccount>,
    /// The deferred tax on another adjustment that the close derives (IAS 12.19), not
    /// a row of a file: on the deferred tax account, released with the depreciation.
    pub deferred_tax: bool,
    pub source: Source,
}

/// A goodwill impairment recognised in one month, from
/// `entities/goodwill_impairments.csv`: in the acquired entity's functional currency,
/// like its goodwill (IAS 21.47).
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct GoodwillImpairment {
    pub owned: EntityId,
    /// The month the impairment is recognised in (IAS 36.59-60).
    pub period: Period,
    pub amount: Decimal,
    pub source: Source,
}

/// The rate a goodwill impairment is translated at, once, in the month it is recognised
/// (`policies.goodwill_impairment_rate`).
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default)]
pub enum ImpairmentRate {
    /// The closing rate of the month: the spot rate at the date of the impairment test
    /// when the test is made at the month end (IAS 21.21-22).
    #[default]
    Closing,
    /// The average rate of the month, the approximation used for the month's other
    /// expenses (IAS 21.40).
    Average,
}

/// An entity's income tax rate, from `entities/tax_rates.csv`: the rate the deferred tax
/// on its consolidation adjustments is measured at (IAS 12.47).
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct TaxRate {
    pub entity: EntityId,
    /// A share: 0.25 for 25%.
    pub rate: Decimal,
    pub source: Source,
}

/// A general price index of a hyperinflationary currency at the end of a month, from
/// `rates/price_index.csv` (IAS 29.11, 29.37: the same index for every entity reporting
/// in that currency).
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct PriceIndex {
    pub currency: Currency,
    pub period: Period,
    pub index: rust_decimal::Decimal,
    pub source: Source,
}

/// The section of dividends received from associates and joint ventures in the
/// statement of cash flows (`policies.associate_dividends`): IAS 7.31 asks for a
/// classification applied consistently, IAS 7.33 allows operating or investing.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default)]
pub enum DividendsReceived {
    /// In operating activities, with the profit they come from (the default: they stay
    /// in profit before tax as the holder books them).
    #[default]
    Operating,
    /// In investing activities, as a return on the investment.
    Investing,
}

/// Each entity's acquisition record for a close at `until`: the latest dated on or
/// before it (of one date, the last in the file), else its last (a record of a later
/// date still names the entity for the findings), whatever the order of the file.
/// An entity has two records when an associate becomes a subsidiary (IFRS 3.41-42) or a
/// subsidiary sold becomes an associate (IFRS 10.25(b)): each close uses the one of its
/// time.
pub fn acquisition_records(
    acquisitions: &[Acquisition],
    until: NaiveDate,
) -> std::collections::BTreeMap<&EntityId, &Acquisition> {
    let mut out: std::collections::BTreeMap<&EntityId, &Acquisition> =
        acquisitions.iter().map(|a| (&a.owned, a)).collect();
    let mut dated: std::collections::BTreeMap<&EntityId, &Acquisition> = std::collections::BTreeMap::new();
    for a in acquisitions.iter().filter(|a| a.date <= until) {
        if dated.get(&a.owned).is_none_or(|b| b.date <= a.date) {
            dated.insert(&a.owned, a);
        }
    }
    out.extend(dated);
    out
}

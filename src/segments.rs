//! Segment reporting (IFRS 8): the close's figures split by operating segment under one
//! segment key (`geography`, `business` or any `segment_<key>` column of the entity
//! file), then reconciled to the group (IFRS 8.28), plus the entity-wide geographic
//! view (IFRS 8.33) and the quantitative thresholds (IFRS 8.13, 8.15).
//!
//! Nothing here eliminates anything: every amount comes from the close, either an
//! entity's contribution or a line of the elimination journal, and is attributed to
//! exactly one column. A contribution goes to the segment of its entity (or of the
//! entity and account, where `segment_accounts.csv` refines it). A journal entry whose
//! entities all fall in one segment was eliminated inside that segment and goes there;
//! an entry between different segments goes to the inter-segment elimination column,
//! and its lines on revenue accounts are the inter-segment revenue of the segments they
//! reverse (IFRS 8.23). Consolidation entries that belong to no segment (investment and
//! goodwill, NCI) are unallocated items, each named. Because the columns partition the
//! group's amounts, every line shown sums over the columns to the group figure; `prove`
//! checks that against the close's own roll-up.
//!
//! Segments knows nothing about files and formats no number.

use std::collections::{BTreeMap, BTreeSet};

use polars::prelude::*;
use rust_decimal::Decimal;
use serde::Serialize;

use crate::close::{Close, EliminationRule, Entry};
use crate::findings::{Finding, Rule, Severity};
use crate::layout::{LineBody, Presentation, ResolvedStatement, matches};
use crate::model::*;
use crate::proof::Check;

/// Amounts by group account, debit positive.
pub type Amounts = BTreeMap<GroupAccount, Decimal>;

/// Where an amount is reported.
#[derive(Debug, Clone, PartialEq, Eq, PartialOrd, Ord, Hash)]
pub enum Column {
    /// An operating segment.
    Segment(String),
    /// Eliminations between different segments (or a segment and an unallocated part).
    InterSegment,
    /// A reconciling item that belongs to no operating segment, by item id.
    Unallocated(String),
}

/// The figures a segment report can show (IFRS 8.23).
#[derive(Debug, Clone, Copy, PartialEq, Eq, PartialOrd, Ord, Hash, Serialize)]
#[serde(rename_all = "snake_case")]
pub enum MeasureKind {
    Revenue,
    Profit,
    Depreciation,
    InterestIncome,
    InterestExpense,
    Tax,
    EquityResult,
    Assets,
    Liabilities,
}

impl MeasureKind {
    pub fn id(&self) -> &'static str {
        match self {
            MeasureKind::Revenue => "revenue",
            MeasureKind::Profit => "profit",
            MeasureKind::Depreciation => "depreciation",
            MeasureKind::InterestIncome => "interest_income",
            MeasureKind::InterestExpense => "interest_expense",
            MeasureKind::Tax => "tax",
            MeasureKind::EquityResult => "equity_result",
            MeasureKind::Assets => "assets",
            MeasureKind::Liabilities => "liabilities",
        }
    }
    fn label(&self) -> &'static str {
        match self {
            MeasureKind::Revenue => "Total segment revenue",
            MeasureKind::Profit => "Segment profit",
            MeasureKind::Depreciation => "Depreciation and amortisation",
            MeasureKind::InterestIncome => "Interest income",
            MeasureKind::InterestExpense => "Interest expense",
            MeasureKind::Tax => "Income tax",
            MeasureKind::EquityResult => "Share of result of equity-accounted investees",
            MeasureKind::Assets => "Segment assets",
            MeasureKind::Liabilities => "Segment liabilities",
        }
    }
    /// Balance-sheet figures are balances at the period end; the others cover the view.
    pub fn is_balance(&self) -> bool {
        matches!(self, MeasureKind::Assets | MeasureKind::Liabilities)
    }
    /// Assets are shown debit positive; income and liabilities credit positive, so that
    /// expenses appear in parentheses as in the statements (common practice).
    fn presentation(&self) -> Presentation {
        match self {
            MeasureKind::Assets => Presentation::DebitPositive,
            _ => Presentation::CreditPositive,
        }
    }
}

/// Segment keys derived from each entity's country (ISO 3166-1 alpha-2) through the UN
/// M49 classification of the United Nations Statistics Division, as packaged by the
/// `keshvar` crate: `region` (Africa, Americas, Asia, Europe, Oceania) and `subregion`
/// (e.g. Western Europe, Northern America). A `segment_region` or `segment_subregion`
/// column of the entity file wins over the derived value.
pub const DERIVED_KEYS: &[&str] = &["region", "subregion"];

/// The UN M49 region or sub-region of a country, as a label ("Northern Europe"); `None`
/// for a key that is not derived or a code the classification does not place.
pub fn m49_segment(key: &str, country: &str) -> Option<String> {
    let c = keshvar::Alpha2::try_from(country).ok()?.to_country();
    let slug = match key {
        "region" => c.maybe_region()?.to_string(),
        "subregion" => c.maybe_subregion()?.to_string(),
        _ => return None,
    };
    // The crate names areas by slug ("australia-and-new-zealand"); shown as words.
    let words: Vec<String> = slug
        .split('-')
        .map(|w| match w {
            "and" | "of" | "the" => w.to_string(),
            _ => w[..1].to_uppercase() + &w[1..],
        })
        .collect();
    Some(words.join(" "))
}

/// The entities with a derived key (see [`DERIVED_KEYS`]) filled in from their country
/// wherever the entity file does not give it; `None` when `key` is not derived.
pub fn with_derived_key(entities: &[Entity], key: &str) -> Option<Vec<Entity>> {
    if !DERIVED_KEYS.contains(&key) {
        return None;
    }
    let mut out = entities.to_vec();
    for e in &mut out {
        if e.segments.iter().all(|(k, _)| k != key)
            && let Some(s) = m49_segment(key, &e.country)
        {
            e.segments.push((key.to_string(), s));
        }
    }
    Some(out)
}

/// A measure resolved to a weight per group account (layout totals flattened).
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct Measure {
    pub kind: MeasureKind,
    pub spec: String,
    pub weights: BTreeMap<GroupAccount, Decimal>,
}

impl Measure {
    /// The presented value of the measure on debit-positive amounts.
    pub fn value(&self, amounts: &Amounts) -> Decimal {
        let debit: Decimal = self.weights.iter().map(|(a, w)| amounts.get(a).copied().unwrap_or_default() * *w).sum();
        // No negative zero in any output.
        crate::money::unsigned_zero(self.kind.presentation().show(debit))
    }
}

fn flatten(st: &ResolvedStatement, line: &str, sign: Decimal, out: &mut BTreeMap<GroupAccount, Decimal>, depth: u32) {
    // Layout totals may only add lines above them, so the recursion ends; the depth
    // bound guards against a malformed layout that `layout::resolve` already reported.
    if depth > 64 {
        return;
    }
    let Some(l) = st.lines.iter().find(|l| l.line == line) else { return };
    match &l.body {
        LineBody::Accounts(accts) => {
            for a in accts {
                *out.entry(a.clone()).or_default() += sign;
            }
        }
        LineBody::Total(parts) => {
            for (id, s) in parts {
                flatten(st, id, sign * Decimal::from(*s), out, depth + 1);
            }
        }
    }
}

/// Resolves the configured measures against the layout and the chart. Each token is a
/// line id of `profit_or_loss` (or `balance_sheet` for assets and liabilities), else a
/// group account or range of that statement; a token that is neither is a finding.
pub fn resolve_measures(
    settings: &SegmentSettings,
    statements: &[ResolvedStatement],
    chart: &[AccountDef],
    file: &str,
    findings: &mut Vec<Finding>,
) -> Vec<Measure> {
    let specs = [
        (MeasureKind::Revenue, Some(&settings.revenue)),
        (MeasureKind::Profit, Some(&settings.profit)),
        (MeasureKind::Depreciation, settings.depreciation.as_ref()),
        (MeasureKind::InterestIncome, settings.interest_income.as_ref()),
        (MeasureKind::InterestExpense, settings.interest_expense.as_ref()),
        (MeasureKind::Tax, settings.tax.as_ref()),
        (MeasureKind::EquityResult, settings.equity_result.as_ref()),
        (MeasureKind::Assets, settings.assets.as_ref()),
        (MeasureKind::Liabilities, settings.liabilities.as_ref()),
    ];
    let mut out = Vec::new();
    for (kind, spec) in specs {
        let Some(spec) = spec else { continue };
        let (statement, st_kind) = if kind.is_balance() {
            ("balance_sheet", Statement::BalanceSheet)
        } else {
            ("profit_or_loss", Statement::ProfitOrLoss)
        };
        let st = statements.iter().find(|s| s.statement == statement);
        let mut weights = BTreeMap::new();
        for token in spec.split_whitespace() {
            if let Some(st) = st.filter(|st| st.lines.iter().any(|l| l.line == token)) {
                flatten(st, token, Decimal::ONE, &mut weights, 0);
                continue;
            }
            let accts: Vec<&AccountDef> =
                chart.iter().filter(|a| a.statement == st_kind && matches(token, a.account.as_str())).collect();
            if accts.is_empty() {
                findings.push(
                    Finding::new(
                        Rule::SettingInvalid,
                        format!(
                            "`segments.{}`: {token:?} is neither a line of {statement} in layouts.csv nor a group account of that statement",
                            kind.id()
                        ),
                        format!("name a line id of {statement} or a group account such as 6100 or a range 6100..6199"),
                    )
                    .in_file(file),
                );
            }
            for a in accts {
                *weights.entry(a.account.clone()).or_default() += Decimal::ONE;
            }
        }
        weights.retain(|_, w: &mut Decimal| !w.is_zero());
        out.push(Measure { kind, spec: spec.clone(), weights });
    }
    out
}

/// Which segment each entity (and, where refined, each of its accounts) belongs to
/// under one segment key.
#[derive(Debug, Clone)]
pub struct Membership {
    pub key: String,
    entity: BTreeMap<EntityId, String>,
    /// Per entity: (account specs, segment) in file order.
    refined: BTreeMap<EntityId, Vec<(Vec<String>, String)>>,
    other: BTreeSet<String>,
    unallocated: BTreeSet<String>,
}

impl Membership {
    /// Membership under `key`. Entities without a segment under the key and
    /// refinements that cannot be applied are findings.
    pub fn build(
        key: &str,
        entities: &[Entity],
        refinements: &[SegmentAccount],
        chart: &[AccountDef],
        settings: Option<&SegmentSettings>,
        findings: &mut Vec<Finding>,
    ) -> Self {
        let mut entity = BTreeMap::new();
        for e in entities {
            match e.segments.iter().find(|(k, _)| k == key) {
                Some((_, s)) => {
                    entity.insert(e.id.clone(), s.clone());
                }
                None => findings.push(
                    Finding::new(
                        Rule::SegmentMissing,
                        format!(
                            "entity {} has no segment under key {key}; its figures are reported as unallocated",
                            e.id
                        ),
                        format!("fill in `segment_{key}` for {} in entities.csv", e.id),
                    )
                    .at(&e.source)
                    .entity(&e.id),
                ),
            }
        }
        let mut refined: BTreeMap<EntityId, Vec<(Vec<String>, String)>> = BTreeMap::new();
        let mut claimed: BTreeMap<(EntityId, GroupAccount), &SegmentAccount> = BTreeMap::new();
        for r in refinements.iter().filter(|r| r.key == key) {
            if !entities.iter().any(|e| e.id == r.entity) {
                findings.push(
                    Finding::new(
                        Rule::SegmentAccountInvalid,
                        format!("segment_accounts.csv names entity {}, which is not in entities.csv", r.entity),
                        "correct the entity id or remove the row",
                    )
                    .at(&r.source)
                    .entity(&r.entity),
                );
                continue;
            }
            let specs: Vec<String> = r.accounts.split_whitespace().map(String::from).collect();
            let hit: Vec<&AccountDef> =
                chart.iter().filter(|a| specs.iter().any(|s| matches(s, a.account.as_str()))).collect();
            if hit.is_empty() {
                findings.push(
                    Finding::new(
                        Rule::SegmentAccountInvalid,
                        format!(
                            "accounts {:?} of entity {} match no group account of accounts.csv",
                            r.accounts, r.entity
                        ),
                        "name group accounts or ranges from..to of the group chart",
                    )
                    .at(&r.source)
                    .entity(&r.entity),
                );
                continue;
            }
            let mut twice = false;
            for a in hit {
                if let Some(prev) = claimed.insert((r.entity.clone(), a.account.clone()), r) {
                    twice = true;
                    findings.push(
                        Finding::new(
                            Rule::SegmentAccountInvalid,
                            format!(
                                "account {} of entity {} is assigned to segment {} on line {} and to segment {} here",
                                a.account,
                                r.entity,
                                prev.segment,
                                prev.source.line.unwrap_or_default(),
                                r.segment
                            ),
                            "assign each account of an entity to one segment per key",
                        )
                        .at(&r.source)
                        .entity(&r.entity)
                        .account(a.account.as_str()),
                    );
                }
            }
            if !twice {
                refined.entry(r.entity.clone()).or_default().push((specs, r.segment.clone()));
            }
        }
        let (other, unallocated) = match settings {
            Some(s) => (s.other.iter().cloned().collect(), s.unallocated.iter().cloned().collect()),
            None => (BTreeSet::new(), BTreeSet::new()),
        };
        Self { key: key.to_string(), entity, refined, other, unallocated }
    }

    /// The entity's own segment under the key.
    pub fn of_entity(&self, e: &EntityId) -> Option<&str> {
        self.entity.get(e).map(String::as_str)
    }

    /// The segment of an entity's account: the refinement, else the entity's own.
    pub fn of(&self, e: &EntityId, a: &GroupAccount) -> Option<&str> {
        if let Some(list) = self.refined.get(e)
            && let Some((_, s)) = list.iter().find(|(specs, _)| specs.iter().any(|sp| matches(sp, a.as_str())))
        {
            return Some(s);
        }
        self.of_entity(e)
    }

    /// The column a segment's figures are reported in.
    pub fn column(&self, segment: Option<&str>) -> Column {
        match segment {
            None => Column::Unallocated("no_segment".into()),
            Some(s) if self.unallocated.contains(s) => Column::Unallocated(format!("unallocated:{s}")),
            Some(s) => Column::Segment(s.to_string()),
        }
    }

    pub fn is_other(&self, segment: &str) -> bool {
        self.other.contains(segment)
    }
}

/// Every amount of a close, attributed.
#[derive(Debug, Clone, Default, PartialEq, Eq)]
pub struct Attribution {
    pub columns: BTreeMap<Column, Amounts>,
    /// Lines of inter-segment entries (debit positive) by the column their own entity
    /// and account belong to: reversed, they are that column's inter-segment figures.
    pub inter_segment: BTreeMap<Column, Amounts>,
    /// Every contribution and journal line by the country of its entity (IFRS 8.33).
    pub countries: BTreeMap<String, Amounts>,
}

fn add(m: &mut BTreeMap<Column, Amounts>, c: Column, a: &GroupAccount, v: Decimal) {
    *m.entry(c).or_default().entry(a.clone()).or_default() += v;
}

/// Entries of these rules belong to no segment: the investment and goodwill entry and
/// the NCI entry are the group's, not any segment's (IFRS 8.28 unallocated items).
fn unallocated_rule(rule: EliminationRule) -> Option<&'static str> {
    match rule {
        EliminationRule::InvestmentAndGoodwill
        | EliminationRule::StepAcquisition
        | EliminationRule::LossOfControl
        | EliminationRule::ChangeInStake => Some("consolidation:investment_and_goodwill"),
        EliminationRule::NonControllingInterest => Some("consolidation:non_controlling_interest"),
        _ => None,
    }
}

/// The column of a line of a `loss_of_control` entry on the subsidiary sold: its
/// segment's, as its contribution is. Its contribution (carried to its last month end)
/// still holds its balances and the entry takes them out, so its segment holds none of
/// them at the period end; the entry's other lines (the holder's gain and investment)
/// stay unallocated. `None` for every other line.
fn disposal_column(e: &Entry, l: &crate::close::EntryLine, m: &Membership) -> Option<Column> {
    (e.rule == EliminationRule::LossOfControl && e.entities.get(1) == Some(&l.entity))
        .then(|| m.column(m.of(&l.entity, &l.account)))
}

/// The column of an entry, or `None` when its entities fall in different segments.
fn entry_column(e: &Entry, m: &Membership) -> Option<Column> {
    if let Some(id) = unallocated_rule(e.rule) {
        return Some(Column::Unallocated(id.into()));
    }
    if e.rule == EliminationRule::EquityMethod {
        // The share of an investee's result is the segment's where the investee has a
        // segment, else the holder's (IFRS 8.23(g)).
        let holder = e.entities.first();
        let investee = e.entities.get(1);
        let seg = investee.and_then(|i| m.of_entity(i)).or_else(|| holder.and_then(|h| m.of_entity(h)));
        return Some(m.column(seg));
    }
    let own: Vec<_> = e.lines.iter().filter(|l| e.entities.contains(&l.entity)).collect();
    let lines: Vec<_> = if own.is_empty() { e.lines.iter().collect() } else { own };
    let segs: BTreeSet<Option<&str>> = lines.iter().map(|l| m.of(&l.entity, &l.account)).collect();
    if segs.len() == 1 { segs.into_iter().next().map(|s| m.column(s)) } else { None }
}

/// The column of a top-side line (close/topside.rs): an entry that names no entity is
/// the group's, an unallocated item (IFRS 8.28); a line of one that names entities is
/// the segment of its entity, as the entity's own figure would be. `None` for every
/// other rule.
fn adjustment_column(e: &Entry, l: &crate::close::EntryLine, m: &Membership) -> Option<Column> {
    if e.rule != EliminationRule::GroupAdjustment {
        return None;
    }
    if e.entities.is_empty() {
        return Some(Column::Unallocated("consolidation:group_adjustment".into()));
    }
    Some(m.column(m.of(&l.entity, &l.account)))
}

/// Attributes each contribution `(entity, account, amount)` and each journal line.
pub fn attribute(
    contributions: &[(EntityId, GroupAccount, Decimal)],
    journal: &[Entry],
    m: &Membership,
    country: &BTreeMap<EntityId, String>,
) -> Attribution {
    let mut out = Attribution::default();
    let country_of = |e: &EntityId| country.get(e).cloned().unwrap_or_else(|| "unknown".into());
    for (e, a, v) in contributions {
        add(&mut out.columns, m.column(m.of(e, a)), a, *v);
        *out.countries.entry(country_of(e)).or_default().entry(a.clone()).or_default() += *v;
    }
    for entry in journal {
        let col = entry_column(entry, m);
        for l in &entry.lines {
            if let Some(c) = adjustment_column(entry, l, m).or_else(|| disposal_column(entry, l, m)) {
                add(&mut out.columns, c, &l.account, l.amount);
                *out.countries.entry(country_of(&l.entity)).or_default().entry(l.account.clone()).or_default() +=
                    l.amount;
                continue;
            }
            match &col {
                Some(c) => add(&mut out.columns, c.clone(), &l.account, l.amount),
                None => {
                    add(&mut out.columns, Column::InterSegment, &l.account, l.amount);
                    add(&mut out.inter_segment, m.column(m.of(&l.entity, &l.account)), &l.account, l.amount);
                }
            }
            *out.countries.entry(country_of(&l.entity)).or_default().entry(l.account.clone()).or_default() += l.amount;
        }
    }
    out
}

impl Attribution {
    /// The view: flows (income, expense, OCI) as the year to date less the base close,
    /// balances as at the period end.
    pub fn view(&self, base: Option<&Attribution>, is_flow: &dyn Fn(&GroupAccount) -> bool) -> Attribution {
        let Some(base) = base else { return self.clone() };
        // The subtraction of `close::view`, column by column.
        fn sub<K: Ord + Clone>(
            a: &BTreeMap<K, Amounts>,
            b: &BTreeMap<K, Amounts>,
            is_flow: &dyn Fn(&GroupAccount) -> bool,
        ) -> BTreeMap<K, Amounts> {
            let mut out = a.clone();
            for (c, m) in b {
                let slot = out.entry(c.clone()).or_default();
                *slot = crate::close::view::flows_of_view(slot, Some(m), is_flow);
            }
            out
        }
        Attribution {
            columns: sub(&self.columns, &base.columns, is_flow),
            inter_segment: sub(&self.inter_segment, &base.inter_segment, is_flow),
            countries: sub(&self.countries, &base.countries, is_flow),
        }
    }
}

/// A close's contribution frame as rows (one per entity, account and counterparty: an
/// aggregate, not ledger lines).
pub fn contribution_rows(c: &Close) -> PolarsResult<Vec<(EntityId, GroupAccount, Decimal)>> {
    let e = crate::money::column_strings(&c.contributions, "entity")?;
    let a = crate::money::column_strings(&c.contributions, "group_account")?;
    let v = crate::money::column_decimals(c.contributions.column("amount")?)?;
    Ok(e.into_iter()
        .zip(a)
        .zip(v)
        .filter_map(|((e, a), v)| Some((EntityId::new(e?), GroupAccount::new(a?), v.unwrap_or_default())))
        .collect())
}

/// One line the report shows.
#[derive(Debug, Clone, PartialEq, Eq, Serialize)]
pub struct LineDef {
    pub line: String,
    pub label: String,
}

/// One operating segment's figures, by line id.
#[derive(Debug, Clone, PartialEq, Eq, Serialize)]
pub struct SegmentFigures {
    pub segment: String,
    /// Reported among all other segments (IFRS 8.16).
    pub other: bool,
    pub values: BTreeMap<String, Decimal>,
}

/// A reconciling item of one line.
#[derive(Debug, Clone, PartialEq, Eq, Serialize)]
pub struct Item {
    pub item: String,
    pub label: String,
    pub amount: Decimal,
}

/// IFRS 8.28: reportable segments' total + reconciling items = group.
#[derive(Debug, Clone, PartialEq, Eq, Serialize)]
pub struct ReconciliationLine {
    pub line: String,
    pub label: String,
    pub reportable_segments: Decimal,
    pub items: Vec<Item>,
    pub group: Decimal,
}

/// One operating segment against the IFRS 8.13 thresholds.
#[derive(Debug, Clone, PartialEq, Eq, Serialize)]
pub struct ThresholdRow {
    pub segment: String,
    pub revenue: Decimal,
    pub revenue_test: bool,
    pub profit: Decimal,
    pub profit_test: bool,
    pub assets: Option<Decimal>,
    pub assets_test: Option<bool>,
    /// Meets at least one threshold.
    pub meets_threshold: bool,
    pub reported_separately: bool,
}

#[derive(Debug, Clone, PartialEq, Eq, Serialize)]
pub struct Thresholds {
    /// Revenue of all operating segments, external and inter-segment.
    pub combined_revenue: Decimal,
    pub revenue_threshold: Decimal,
    pub combined_profit: Decimal,
    pub combined_loss: Decimal,
    pub profit_threshold: Decimal,
    pub combined_assets: Option<Decimal>,
    pub assets_threshold: Option<Decimal>,
    pub rows: Vec<ThresholdRow>,
    /// External revenue of the segments reported separately, against the group's.
    pub external_revenue_reported: Decimal,
    pub external_revenue_group: Decimal,
    pub external_test: bool,
}

/// One row of the entity-wide view.
#[derive(Debug, Clone, PartialEq, Eq, Serialize)]
pub struct CountryRow {
    /// ISO 3166-1 alpha-2, or `other` for the foreign countries below materiality.
    pub country: String,
    pub home: bool,
    pub countries: Vec<String>,
    pub revenue_external: Decimal,
    pub non_current_assets: Decimal,
}

#[derive(Debug, Clone, PartialEq, Eq, Serialize)]
pub struct EntityWide {
    pub home_country: String,
    pub materiality: Decimal,
    pub rows: Vec<CountryRow>,
    pub revenue_external: Decimal,
    pub non_current_assets: Decimal,
}

/// The segment report of one close and view.
#[derive(Debug, Clone, PartialEq, Eq, Serialize)]
pub struct SegmentReport {
    pub key: String,
    pub lines: Vec<LineDef>,
    pub segments: Vec<SegmentFigures>,
    pub reconciliation: Vec<ReconciliationLine>,
    pub thresholds: Thresholds,
    pub entity_wide: EntityWide,
    #[serde(skip)]
    pub checks: Vec<Check>,
    #[serde(skip)]
    pub findings: Vec<Finding>,
}

/// The label of a reconciling item.
pub fn item_label(id: &str, key: &str) -> String {
    match id {
        "other_segments" => "all other segments".into(),
        "inter_segment" => "inter-segment eliminations".into(),
        "no_segment" => format!("no {key} segment"),
        "consolidation:investment_and_goodwill" => "goodwill and investments".into(),
        "consolidation:non_controlling_interest" => "non-controlling interests".into(),
        other => match other.strip_prefix("unallocated:") {
            Some(s) => format!("{s} (unallocated)"),
            None => other.to_string(),
        },
    }
}

const EXTERNAL: &str = "revenue_external";
const INTER: &str = "revenue_inter_segment";

/// The figures of one column on every line: external and inter-segment revenue first.
fn figures(
    measures: &[Measure],
    amounts: &Amounts,
    inter: Option<&Amounts>,
    is_elimination: bool,
) -> BTreeMap<String, Decimal> {
    let mut out = BTreeMap::new();
    let empty = Amounts::new();
    for m in measures {
        let v = m.value(amounts);
        if m.kind == MeasureKind::Revenue {
            // An inter-segment elimination column eliminates inter-segment revenue and
            // holds no external revenue; a segment's inter-segment revenue is what the
            // inter-segment entries reversed of it.
            let inter_v = if is_elimination {
                v
            } else {
                let reversed: Amounts = inter.unwrap_or(&empty).iter().map(|(a, x)| (a.clone(), -*x)).collect();
                m.value(&reversed)
            };
            out.insert(EXTERNAL.to_string(), v - inter_v);
            out.insert(INTER.to_string(), inter_v);
        }
        out.insert(m.kind.id().to_string(), v);
    }
    out
}

fn share_threshold(combined: Decimal) -> Decimal {
    combined / Decimal::TEN
}

/// Whether `x` reaches 10% of `combined` (IFRS 8.13); a zero base is no test.
fn reaches_tenth(x: Decimal, combined: Decimal) -> bool {
    combined > Decimal::ZERO && x.abs() * Decimal::TEN >= combined
}

/// Builds the report from the attributed view and the group's amounts for the same
/// view; `home` is the parent's country.
#[allow(clippy::too_many_arguments)]
pub fn report(
    measures: &[Measure],
    m: &Membership,
    attr: &Attribution,
    group: &Amounts,
    chart: &[AccountDef],
    home: &str,
    materiality: Decimal,
    period: Period,
) -> SegmentReport {
    let _span = tracing::info_span!("segments", key = %m.key, period = %period).entered();
    let (lines, segments, reconciliation, group_f) = reconcile(measures, m, attr, group);
    let thresholds = thresholds(measures, &segments, &group_f);
    let mut findings = threshold_findings(&thresholds, &m.key, period);
    let entity_wide = entity_wide(measures, attr, group, chart, home, materiality);
    let checks = prove(&reconciliation, attr, group, &entity_wide, &m.key);
    findings.sort_by(|a, b| a.message.cmp(&b.message));
    SegmentReport { key: m.key.clone(), lines, segments, reconciliation, thresholds, entity_wide, checks, findings }
}

/// The reconciliation lines (IFRS 8.28): per measure, the reportable segments' total,
/// each reconciling item and the group's amount; also the segments' own figures and the
/// group's figures per line.
fn reconcile(
    measures: &[Measure],
    m: &Membership,
    attr: &Attribution,
    group: &Amounts,
) -> (Vec<LineDef>, Vec<SegmentFigures>, Vec<ReconciliationLine>, BTreeMap<String, Decimal>) {
    let mut lines = Vec::new();
    for me in measures {
        if me.kind == MeasureKind::Revenue {
            lines.push(LineDef { line: EXTERNAL.into(), label: "Revenue from external customers".into() });
            lines.push(LineDef { line: INTER.into(), label: "Inter-segment revenue".into() });
        }
        lines.push(LineDef { line: me.kind.id().into(), label: format!("{} ({})", me.kind.label(), me.spec) });
    }
    let empty = Amounts::new();
    let mut segments = Vec::new();
    let mut items: BTreeMap<String, BTreeMap<String, Decimal>> = BTreeMap::new();
    let mut reportable: BTreeMap<String, Decimal> = BTreeMap::new();
    for (col, amounts) in &attr.columns {
        let f = figures(measures, amounts, attr.inter_segment.get(col), *col == Column::InterSegment);
        let item = match col {
            Column::Segment(s) => {
                let other = m.is_other(s);
                segments.push(SegmentFigures { segment: s.clone(), other, values: f.clone() });
                if other {
                    Some("other_segments".to_string())
                } else {
                    for (k, v) in &f {
                        *reportable.entry(k.clone()).or_default() += *v;
                    }
                    None
                }
            }
            Column::InterSegment => Some("inter_segment".to_string()),
            Column::Unallocated(id) => Some(id.clone()),
        };
        if let Some(id) = item {
            let slot = items.entry(id).or_default();
            for (k, v) in &f {
                *slot.entry(k.clone()).or_default() += *v;
            }
        }
    }
    let group_f = figures(measures, group, Some(&empty), false);
    let reconciliation: Vec<ReconciliationLine> = lines
        .iter()
        .map(|l| ReconciliationLine {
            line: l.line.clone(),
            label: l.label.clone(),
            reportable_segments: reportable.get(&l.line).copied().unwrap_or_default(),
            items: items
                .iter()
                .map(|(id, f)| Item {
                    item: id.clone(),
                    label: item_label(id, &m.key),
                    amount: f.get(&l.line).copied().unwrap_or_default(),
                })
                .collect(),
            group: group_f.get(&l.line).copied().unwrap_or_default(),
        })
        .collect();
    (lines, segments, reconciliation, group_f)
}

/// IFRS 8.13 and 8.15 over every operating segment, reported separately or not.
fn thresholds(measures: &[Measure], segments: &[SegmentFigures], group_f: &BTreeMap<String, Decimal>) -> Thresholds {
    let get = |s: &SegmentFigures, k: &str| s.values.get(k).copied().unwrap_or_default();
    let has_assets = measures.iter().any(|x| x.kind == MeasureKind::Assets);
    let combined_revenue: Decimal = segments.iter().map(|s| get(s, "revenue")).sum();
    let combined_profit: Decimal = segments.iter().map(|s| get(s, "profit")).filter(|p| p.is_sign_positive()).sum();
    let combined_loss: Decimal =
        segments.iter().map(|s| get(s, "profit")).filter(|p| p.is_sign_negative()).map(|p| p.abs()).sum();
    let profit_base = combined_profit.max(combined_loss);
    let combined_assets: Option<Decimal> = has_assets.then(|| segments.iter().map(|s| get(s, "assets")).sum());
    let rows: Vec<ThresholdRow> = segments
        .iter()
        .map(|s| {
            let (revenue, profit) = (get(s, "revenue"), get(s, "profit"));
            let revenue_test = reaches_tenth(revenue, combined_revenue);
            let profit_test = reaches_tenth(profit, profit_base);
            let assets = has_assets.then(|| get(s, "assets"));
            let assets_test = assets.zip(combined_assets).map(|(a, c)| reaches_tenth(a, c));
            ThresholdRow {
                segment: s.segment.clone(),
                revenue,
                revenue_test,
                profit,
                profit_test,
                assets,
                assets_test,
                meets_threshold: revenue_test || profit_test || assets_test == Some(true),
                reported_separately: !s.other,
            }
        })
        .collect();
    let external_revenue_reported: Decimal = segments.iter().filter(|s| !s.other).map(|s| get(s, EXTERNAL)).sum();
    let external_revenue_group = group_f.get(EXTERNAL).copied().unwrap_or_default();
    let external_test = external_revenue_group <= Decimal::ZERO
        || external_revenue_reported * Decimal::from(4) >= external_revenue_group * Decimal::from(3);
    Thresholds {
        combined_revenue,
        revenue_threshold: share_threshold(combined_revenue),
        combined_profit,
        combined_loss,
        profit_threshold: share_threshold(profit_base),
        combined_assets,
        assets_threshold: combined_assets.map(share_threshold),
        rows,
        external_revenue_reported,
        external_revenue_group,
        external_test,
    }
}

/// IFRS 8.33: external revenue and non-current assets by the entities' countries, the
/// home country first, each material country on its own, the rest together.
fn entity_wide(
    measures: &[Measure],
    attr: &Attribution,
    group: &Amounts,
    chart: &[AccountDef],
    home: &str,
    materiality: Decimal,
) -> EntityWide {
    let revenue = measures.iter().find(|x| x.kind == MeasureKind::Revenue);
    let non_current: BTreeSet<&GroupAccount> =
        chart.iter().filter(|a| a.non_current && a.statement == Statement::BalanceSheet).map(|a| &a.account).collect();
    let nca = |a: &Amounts| -> Decimal { a.iter().filter(|(k, _)| non_current.contains(k)).map(|(_, v)| *v).sum() };
    let by_country: Vec<(String, Decimal, Decimal)> = attr
        .countries
        .iter()
        .map(|(c, a)| (c.clone(), revenue.map(|r| r.value(a)).unwrap_or_default(), nca(a)))
        .collect();
    let total_rev = revenue.map(|r| r.value(group)).unwrap_or_default();
    let total_nca = nca(group);
    let material = |rev: Decimal, n: Decimal| {
        (total_rev > Decimal::ZERO && rev >= total_rev * materiality)
            || (total_nca > Decimal::ZERO && n >= total_nca * materiality)
    };
    let mut rows = Vec::new();
    let mut rest = CountryRow {
        country: "other".into(),
        home: false,
        countries: Vec::new(),
        revenue_external: Decimal::ZERO,
        non_current_assets: Decimal::ZERO,
    };
    let home_row = by_country.iter().find(|(c, _, _)| c == home).cloned().unwrap_or((
        home.to_string(),
        Decimal::ZERO,
        Decimal::ZERO,
    ));
    rows.push(CountryRow {
        country: home_row.0.clone(),
        home: true,
        countries: vec![home_row.0.clone()],
        revenue_external: home_row.1,
        non_current_assets: home_row.2,
    });
    for (c, rev, n) in by_country.iter().filter(|(c, _, _)| c != home) {
        if material(*rev, *n) {
            rows.push(CountryRow {
                country: c.clone(),
                home: false,
                countries: vec![c.clone()],
                revenue_external: *rev,
                non_current_assets: *n,
            });
        } else {
            rest.countries.push(c.clone());
            rest.revenue_external += *rev;
            rest.non_current_assets += *n;
        }
    }
    if !rest.countries.is_empty() {
        rows.push(rest);
    }
    EntityWide {
        home_country: home.to_string(),
        materiality,
        revenue_external: total_rev,
        non_current_assets: total_nca,
        rows,
    }
}

fn threshold_findings(t: &Thresholds, key: &str, period: Period) -> Vec<Finding> {
    let mut out = Vec::new();
    for r in &t.rows {
        let figures = format!(
            "revenue {} against 10% of combined revenue {} = {}; profit or loss {} against 10% of {} = {}{}",
            r.revenue,
            t.combined_revenue,
            t.revenue_threshold,
            r.profit,
            t.combined_profit.max(t.combined_loss),
            t.profit_threshold,
            match (r.assets, t.combined_assets, t.assets_threshold) {
                (Some(a), Some(c), Some(th)) => format!("; assets {a} against 10% of combined assets {c} = {th}"),
                _ => String::new(),
            }
        );
        if r.reported_separately && !r.meets_threshold {
            out.push(
                Finding::new(
                    Rule::SegmentBelowThresholds,
                    format!("{key} segment {} meets none of the IFRS 8.13 thresholds: {figures}", r.segment),
                    "it may still be reported separately if management finds the information useful; otherwise combine it with others (IFRS 8.14) or list it under `segments.other` (IFRS 8.16)",
                )
                .period(period)
                .severity(Severity::Warning),
            );
        }
        if !r.reported_separately && r.meets_threshold {
            out.push(
                Finding::new(
                    Rule::SegmentReportable,
                    format!("{key} segment {} is listed among all other segments but meets an IFRS 8.13 threshold: {figures}", r.segment),
                    "report it separately: remove it from `segments.other` in group.toml",
                )
                .period(period)
                .severity(Severity::Warning),
            );
        }
    }
    if !t.external_test {
        let separately: Vec<&str> =
            t.rows.iter().filter(|r| r.reported_separately).map(|r| r.segment.as_str()).collect();
        out.push(
            Finding::new(
                Rule::SegmentsExternalRevenueShort,
                format!(
                    "external revenue of the {key} segments reported separately ({}) is {}, below 75% of the group's external revenue {} = {}",
                    separately.join(", "),
                    t.external_revenue_reported,
                    t.external_revenue_group,
                    t.external_revenue_group * Decimal::new(75, 2)
                ),
                "report further segments separately until they cover 75% of external revenue (IFRS 8.15): take them out of `segments.other`",
            )
            .period(period)
            .severity(Severity::Warning),
        );
    }
    out
}

/// The proof: every line shown sums over reportable segments and reconciling items to
/// the group, every account over all columns to the group's roll-up, and the
/// entity-wide rows to the group's revenue and non-current assets.
fn prove(rec: &[ReconciliationLine], attr: &Attribution, group: &Amounts, ew: &EntityWide, key: &str) -> Vec<Check> {
    let mut bad = Vec::new();
    for l in rec {
        let sum = l.reportable_segments + l.items.iter().map(|i| i.amount).sum::<Decimal>();
        if sum != l.group {
            bad.push(format!("{}: segments and items {sum} != group {}", l.line, l.group));
        }
    }
    let mut by_account: Amounts = Amounts::new();
    for a in attr.columns.values() {
        for (k, v) in a {
            *by_account.entry(k.clone()).or_default() += *v;
        }
    }
    let accounts: BTreeSet<&GroupAccount> = by_account.keys().chain(group.keys()).collect();
    let off: Vec<String> = accounts
        .into_iter()
        .filter_map(|a| {
            let (x, g) = (by_account.get(a).copied().unwrap_or_default(), group.get(a).copied().unwrap_or_default());
            (x != g).then(|| format!("{a}: columns {x} != group {g}"))
        })
        .collect();
    let rev: Decimal = ew.rows.iter().map(|r| r.revenue_external).sum();
    let nca: Decimal = ew.rows.iter().map(|r| r.non_current_assets).sum();
    vec![
        Check::new(
            "segments_reconcile_to_group",
            bad.is_empty(),
            if bad.is_empty() {
                format!("{} lines by {key}: reportable segments + reconciling items = group on each", rec.len())
            } else {
                bad.join("; ")
            },
        ),
        Check::new(
            "segment_columns_cover_group",
            off.is_empty(),
            if off.is_empty() {
                format!(
                    "{} group accounts: the sum over all segment and reconciling columns equals the group roll-up",
                    group.len()
                )
            } else {
                off.join("; ")
            },
        ),
        Check::new(
            "entity_wide_reconciles_to_group",
            rev == ew.revenue_external && nca == ew.non_current_assets,
            format!(
                "countries: revenue {rev} against group {}, non-current assets {nca} against group {}",
                ew.revenue_external, ew.non_current_assets
            ),
        ),
    ]
}

#[cfg(test)]
mod tests {
    use super::*;

    /// Regions and sub-regions of the UN M49 classification (United Nations Statistics
    /// Division, "Standard country or area codes for statistical use", series M no. 49;
    /// the placements below are from memory), as the keshvar 0.7.0 crate packages them.
    #[test]
    fn m49_regions_of_countries() {
        let cases = [
            ("NL", "Europe", "Western Europe"),
            ("CH", "Europe", "Western Europe"),
            ("GB", "Europe", "Northern Europe"),
            ("SE", "Europe", "Northern Europe"),
            ("PL", "Europe", "Eastern Europe"),
            ("US", "Americas", "Northern America"),
            ("MX", "Americas", "Central America"),
            ("BR", "Americas", "South America"),
            ("JP", "Asia", "Eastern Asia"),
            ("BH", "Asia", "Western Asia"),
            ("IN", "Asia", "Southern Asia"),
            ("ZA", "Africa", "Southern Africa"),
            ("AU", "Oceania", "Australia and New Zealand"),
        ];
        for (country, region, subregion) in cases {
            assert_eq!(m49_segment("region", country).as_deref(), Some(region), "{country}");
            assert_eq!(m49_segment("subregion", country).as_deref(), Some(subregion), "{country}");
        }
        assert_eq!(m49_segment("region", "XX"), None, "not an ISO 3166-1 code");
        assert_eq!(m49_segment("business", "NL"), None, "not a derived key");
    }

    #[test]
    fn a_segment_column_wins_over_the_derived_region() {
        let e = |id: &str, country: &str, segments: Vec<(String, String)>| Entity {
            id: EntityId::new(id),
            name: id.to_string(),
            country: country.to_string(),
            currency: Currency::parse("EUR").unwrap(),
            segments,
            hyperinflationary_from: None,
            source: Source::line("entities/entities.csv", 2),
        };
        let entities = vec![e("A", "NL", vec![("region".into(), "Benelux".into())]), e("B", "JP", vec![])];
        let out = with_derived_key(&entities, "region").expect("derived key");
        assert_eq!(out[0].segments, vec![("region".to_string(), "Benelux".to_string())]);
        assert_eq!(out[1].segments, vec![("region".to_string(), "Asia".to_string())]);
        assert!(with_derived_key(&entities, "business").is_none());
    }
    use crate::close::EntryLine;

    fn d(x: i64) -> Decimal {
        Decimal::from(x)
    }

    fn acct(id: &str, statement: Statement, class: AccountClass, non_current: bool) -> AccountDef {
        AccountDef {
            account: GroupAccount::new(id),
            name: id.into(),
            statement,
            class,
            basis: Basis::Average,
            ic_kind: None,
            non_current,
            reserve: None,
            monetary: None,
            source: Source::file("accounts.csv"),
        }
    }

    fn chart() -> Vec<AccountDef> {
        use AccountClass::*;
        use Statement::*;
        vec![
            acct("1000", BalanceSheet, Asset, true),
            acct("1650", BalanceSheet, Asset, false),
            acct("2000", BalanceSheet, Liability, false),
            acct("2450", BalanceSheet, Liability, false),
            acct("4000", ProfitOrLoss, Income, false),
            acct("4100", ProfitOrLoss, Income, false),
            acct("5000", ProfitOrLoss, Expense, false),
            acct("5100", ProfitOrLoss, Expense, false),
            acct("7000", ProfitOrLoss, Income, false),
            acct("7100", ProfitOrLoss, Expense, false),
        ]
    }

    fn entity(id: &str, country: &str, business: &str) -> Entity {
        Entity {
            id: EntityId::new(id),
            name: id.into(),
            country: country.into(),
            currency: Currency::parse("EUR").expect("EUR"),
            segments: vec![("business".into(), business.into())],
            hyperinflationary_from: None,
            source: Source::file("entities.csv"),
        }
    }

    fn measure(kind: MeasureKind, accounts: &[&str]) -> Measure {
        Measure {
            kind,
            spec: accounts.join(" "),
            weights: accounts.iter().map(|a| (GroupAccount::new(*a), Decimal::ONE)).collect(),
        }
    }

    fn line(account: &str, entity: &str, cp: &str, amount: i64) -> EntryLine {
        EntryLine {
            account: GroupAccount::new(account),
            entity: EntityId::new(entity),
            counterparty: Some(EntityId::new(cp)),
            amount: d(amount),
        }
    }

    fn entry(rule: EliminationRule, entities: &[&str], lines: Vec<EntryLine>) -> Entry {
        Entry {
            id: "E1".into(),
            rule,
            posted_at: EntityId::new("HQ"),
            entities: entities.iter().map(|e| EntityId::new(*e)).collect(),
            description: String::new(),
            lines,
        }
    }

    fn settings(other: &[&str], unallocated: &[&str]) -> SegmentSettings {
        SegmentSettings {
            key: "business".into(),
            revenue: String::new(),
            profit: String::new(),
            depreciation: None,
            interest_income: None,
            interest_expense: None,
            tax: None,
            equity_result: None,
            assets: None,
            liabilities: None,
            other: other.iter().map(|s| s.to_string()).collect(),
            unallocated: unallocated.iter().map(|s| s.to_string()).collect(),
            country_materiality: Decimal::new(10, 2),
        }
    }

    fn rec<'a>(r: &'a SegmentReport, line: &str) -> &'a ReconciliationLine {
        r.reconciliation.iter().find(|l| l.line == line).expect("line shown")
    }

    fn item(l: &ReconciliationLine, id: &str) -> Decimal {
        l.items.iter().find(|i| i.item == id).map(|i| i.amount).unwrap_or_default()
    }

    fn seg(r: &SegmentReport, s: &str, line: &str) -> Decimal {
        r.segments.iter().find(|x| x.segment == s).and_then(|x| x.values.get(line).copied()).expect("segment figure")
    }

    /// The IFRS 8 implementation guidance's illustrative segment information and
    /// reconciliations (IFRS 8 IG2-IG4: car parts, motor vessels, software, electronics,
    /// finance and all other). FIGURES FROM MEMORY, not checked against the text:
    /// external revenue 3,000 / 5,000 / 9,500 / 12,000 / 5,000 / all other 1,000;
    /// inter-segment revenue software 3,000, electronics 1,500; segment profit 200 / 70 /
    /// 900 / 2,300 / 500 / 100; assets 2,000 / 5,000 / 3,000 / 12,000 / 57,000 / 2,000.
    /// Reconciliations: revenue 39,000 + 1,000 - 4,500 = 35,500; profit 3,970 + 100 -
    /// 500 (inter-segment profit) + 500 - 750 - 250 (unallocated) = 3,070; assets
    /// 79,000 + 2,000 - 1,000 (receivable from head office) + 1,500 = 81,500.
    /// The guidance lists three unallocated profit items (litigation 500, corporate
    /// expenses (750), pension adjustment (250)); here they are all the head office's
    /// figures and so appear as one item, Corporate (500). Which balance the inter-segment
    /// profit elimination reduces the guidance does not show in the assets
    /// reconciliation; here its other side is a liability so assets match it.
    #[test]
    fn ifrs8_implementation_guidance_reconciliation() {
        let ents = [
            entity("CP", "US", "Car parts"),
            entity("MV", "US", "Motor vessels"),
            entity("SW", "US", "Software"),
            entity("EL", "US", "Electronics"),
            entity("FI", "US", "Finance"),
            entity("AO", "CA", "All other"),
            entity("HQ", "US", "Corporate"),
        ];
        let set = settings(&["All other"], &["Corporate"]);
        let mut findings = Vec::new();
        let m = Membership::build("business", &ents, &[], &chart(), Some(&set), &mut findings);
        assert!(findings.is_empty(), "{findings:?}");
        let c = |e: &str, a: &str, v: i64| (EntityId::new(e), GroupAccount::new(a), d(v));
        // Debit positive: revenue and income credits, expenses and assets debits.
        let contributions = vec![
            c("CP", "4000", -3000),
            c("CP", "5000", 2800),
            c("CP", "1000", 2000),
            c("MV", "4000", -5000),
            c("MV", "5000", 4930),
            c("MV", "1000", 5000),
            c("SW", "4000", -9500),
            c("SW", "4100", -3000),
            c("SW", "5100", 1500),
            c("SW", "5000", 10100),
            c("SW", "1000", 3000),
            c("EL", "4000", -12000),
            c("EL", "4100", -1500),
            c("EL", "5100", 3000),
            c("EL", "5000", 8200),
            c("EL", "1000", 12000),
            c("FI", "4000", -5000),
            c("FI", "5000", 4500),
            c("FI", "1000", 56000),
            c("FI", "1650", 1000),
            c("AO", "4000", -1000),
            c("AO", "5000", 900),
            c("AO", "1000", 2000),
            c("HQ", "7000", -500),
            c("HQ", "7100", 1000),
            c("HQ", "1000", 1500),
            c("HQ", "2450", -1000),
        ];
        let journal = vec![
            // Software sold 3,000 to electronics, electronics 1,500 to software.
            entry(
                EliminationRule::Intercompany,
                &["EL", "SW"],
                vec![
                    line("4100", "SW", "EL", 3000),
                    line("5100", "EL", "SW", -3000),
                    line("4100", "EL", "SW", 1500),
                    line("5100", "SW", "EL", -1500),
                ],
            ),
            entry(
                EliminationRule::UnrealisedProfit,
                &["SW", "EL"],
                vec![line("5000", "SW", "EL", 500), line("2000", "EL", "SW", -500)],
            ),
            // Finance's receivable from the head office.
            entry(
                EliminationRule::Intercompany,
                &["FI", "HQ"],
                vec![line("1650", "FI", "HQ", -1000), line("2450", "HQ", "FI", 1000)],
            ),
        ];
        let country = ents.iter().map(|e| (e.id.clone(), e.country.clone())).collect();
        let attr = attribute(&contributions, &journal, &m, &country);
        // The group: contributions plus eliminations, as the close's roll-up makes it.
        let mut group = Amounts::new();
        for (_, a, v) in &contributions {
            *group.entry(a.clone()).or_default() += *v;
        }
        for l in journal.iter().flat_map(|e| &e.lines) {
            *group.entry(l.account.clone()).or_default() += l.amount;
        }
        let measures = vec![
            measure(MeasureKind::Revenue, &["4000", "4100"]),
            measure(MeasureKind::Profit, &["4000", "4100", "5000", "5100", "7000", "7100"]),
            measure(MeasureKind::Assets, &["1000", "1650"]),
        ];
        let period = Period::new(2026, 12).expect("period");
        let r = report(&measures, &m, &attr, &group, &chart(), "US", Decimal::new(10, 2), period);
        assert!(crate::proof::tied(&r.checks), "{:#?}", r.checks);
        // IFRS 8.23: inter-segment revenue shown separately.
        assert_eq!(seg(&r, "Software", INTER), d(3000));
        assert_eq!(seg(&r, "Electronics", INTER), d(1500));
        assert_eq!(seg(&r, "Software", EXTERNAL), d(9500));
        assert_eq!(seg(&r, "Car parts", "profit"), d(200));
        assert_eq!(seg(&r, "Electronics", "profit"), d(2300));
        // IFRS 8.28 reconciliations (IG4, figures from memory).
        let rev = rec(&r, "revenue");
        assert_eq!(
            (rev.reportable_segments, item(rev, "other_segments"), item(rev, "inter_segment"), rev.group),
            (d(39000), d(1000), d(-4500), d(35500))
        );
        let profit = rec(&r, "profit");
        assert_eq!(
            (
                profit.reportable_segments,
                item(profit, "other_segments"),
                item(profit, "inter_segment"),
                item(profit, "unallocated:Corporate"),
                profit.group
            ),
            (d(3970), d(100), d(-500), d(-500), d(3070))
        );
        let assets = rec(&r, "assets");
        assert_eq!(
            (
                assets.reportable_segments,
                item(assets, "other_segments"),
                item(assets, "inter_segment"),
                item(assets, "unallocated:Corporate"),
                assets.group
            ),
            (d(79000), d(2000), d(-1000), d(1500), d(81500))
        );
        // IFRS 8.33: the home country and one foreign country (all other, in CA).
        let ca = r.entity_wide.rows.iter().find(|x| x.countries.contains(&"CA".to_string())).expect("CA");
        assert_eq!(ca.revenue_external, d(1000));
    }

    /// An entry inside one segment stays in it; the same entry across segments moves to
    /// the inter-segment column and becomes inter-segment revenue (IFRS 8.23).
    #[test]
    fn intercompany_inside_a_segment_is_eliminated_there() {
        let ents = [entity("A", "NL", "X"), entity("B", "NL", "X"), entity("C", "NL", "Y")];
        let mut f = Vec::new();
        let m = Membership::build("business", &ents, &[], &chart(), None, &mut f);
        let sale = |seller: &str, buyer: &str| {
            entry(
                EliminationRule::Intercompany,
                &[seller, buyer],
                vec![line("4100", seller, buyer, 100), line("5100", buyer, seller, -100)],
            )
        };
        let country = BTreeMap::new();
        let inside = attribute(&[], &[sale("A", "B")], &m, &country);
        assert_eq!(inside.columns.keys().collect::<Vec<_>>(), vec![&Column::Segment("X".into())]);
        assert!(inside.inter_segment.is_empty());
        let across = attribute(&[], &[sale("A", "C")], &m, &country);
        assert_eq!(across.columns.keys().collect::<Vec<_>>(), vec![&Column::InterSegment]);
        assert_eq!(across.inter_segment[&Column::Segment("X".into())][&GroupAccount::new("4100")], d(100));
    }

    /// A top-side entry naming no entity is an unallocated item (IFRS 8.28); one naming
    /// entities in two segments puts each line in its entity's segment, not in the
    /// inter-segment column: it is no transaction between them. A provision of 70 at A
    /// (segment X) and 30 at C (segment Y) against one liability line each.
    #[test]
    fn a_top_side_entry_is_unallocated_or_its_entities_segments() {
        let ents = [entity("A", "NL", "X"), entity("C", "NL", "Y")];
        let mut f = Vec::new();
        let m = Membership::build("business", &ents, &[], &chart(), None, &mut f);
        let country = BTreeMap::new();
        let plain =
            |account: &str, e: &str, amount: i64| EntryLine { counterparty: None, ..line(account, e, "A", amount) };
        let group =
            entry(EliminationRule::GroupAdjustment, &[], vec![plain("5000", "HQ", 50), plain("2450", "HQ", -50)]);
        let attr = attribute(&[], &[group], &m, &country);
        let unallocated = Column::Unallocated("consolidation:group_adjustment".into());
        assert_eq!(attr.columns.keys().collect::<Vec<_>>(), vec![&unallocated]);
        let named = entry(
            EliminationRule::GroupAdjustment,
            &["A", "C"],
            vec![plain("5000", "A", 70), plain("2450", "A", -70), plain("5000", "C", 30), plain("2450", "C", -30)],
        );
        let attr = attribute(&[], &[named], &m, &country);
        let x = &attr.columns[&Column::Segment("X".into())];
        let y = &attr.columns[&Column::Segment("Y".into())];
        assert_eq!((x[&GroupAccount::new("5000")], y[&GroupAccount::new("5000")]), (d(70), d(30)));
        assert!(!attr.columns.contains_key(&Column::InterSegment) && attr.inter_segment.is_empty());
    }

    /// A refinement moves an entity's account to another segment, and an account claimed
    /// twice is a finding.
    #[test]
    fn account_refinement_and_its_findings() {
        let ents = [entity("A", "NL", "X")];
        let row = |seg: &str, accounts: &str, line: u64| SegmentAccount {
            entity: EntityId::new("A"),
            key: "business".into(),
            segment: seg.into(),
            accounts: accounts.into(),
            source: Source::line("entities/segment_accounts.csv", line),
        };
        let mut f = Vec::new();
        let m = Membership::build("business", &ents, &[row("Y", "4000..4099", 2)], &chart(), None, &mut f);
        assert!(f.is_empty());
        assert_eq!(m.of(&EntityId::new("A"), &GroupAccount::new("4000")), Some("Y"));
        assert_eq!(m.of(&EntityId::new("A"), &GroupAccount::new("5000")), Some("X"));
        let mut f = Vec::new();
        Membership::build(
            "business",
            &ents,
            &[row("Y", "4000", 2), row("Z", "4000", 3), row("Z", "9999", 4)],
            &chart(),
            None,
            &mut f,
        );
        let rules: Vec<Rule> = f.iter().map(|x| x.rule).collect();
        assert_eq!(rules, vec![Rule::SegmentAccountInvalid, Rule::SegmentAccountInvalid]);
        assert_eq!(f[0].line, Some(3));
        assert_eq!(f[1].line, Some(4));
    }

    /// IFRS 8.13(b) compares the absolute amount of a segment's profit or loss; a base
    /// of zero (no segment has revenue, profit or assets) is no test.
    #[test]
    fn tenth_test_takes_absolute_values_and_ignores_a_zero_base() {
        assert!(reaches_tenth(d(-100), d(1000)));
        assert!(!reaches_tenth(d(99), d(1000)));
        assert!(!reaches_tenth(d(0), d(0)), "a zero base is no test");
    }
}

//! Intercompany matching (IFRS 10.B86): before the close, the two sides of every
//! intercompany position are agreed, pair by pair and kind by kind, and every difference
//! is classified so that the group team knows what to chase and what the close may post.
//!
//! A *pair* is an unordered couple of entities and an intercompany kind (the chart's
//! `ic_kind`) on one statement: side A is A's lines naming B as counterparty, side B is
//! B's lines naming A. Debit is positive, so the sides agree when A + B = 0.
//! - Balance-sheet kinds (`trade`, `loan`, ...) are compared on the closing balance of the
//!   period; profit-or-loss kinds (`sales`, `fees`, `interest`, ...) on the year to date.
//! - A side's transaction currency is the `txn_currency` of its lines, or the entity's
//!   functional currency for lines that give none (an amount booked in the functional
//!   currency is its own transaction amount). When both sides are in one and the same
//!   currency the pair is compared in it as well; the presentation-currency comparison,
//!   at the rates the close uses (the translated balances), is always made.
//! - A kind the chart declares on one side only has no counterpart line: `investment`
//!   (asset only; the investee's side is its equity, eliminated by the consolidation of
//!   investments) is listed as not matched; a profit-or-loss kind with only income
//!   accounts (`dividend`: the payer debits retained earnings) is matched against the
//!   payer's year-to-date credits to the balance-sheet accounts of the same kind
//!   (dividends declared), translated at the rate of the dividend (rates/historical.csv
//!   for retained earnings), else at the month's average.
//!
//! Classification, in this order: `awaiting` (the counterparty's figures are not there:
//! no folder, a month not delivered, a delivery set aside for blocking findings or a
//! missing rate; not a mismatch); `matched` (no difference in either currency);
//! `within_tolerance` (the presentation-currency difference is within the absolute
//! tolerance **and** within the relative tolerance of the larger side: both limits must
//! hold); `explained` with reason `fx` (the sides agree in the transaction currency and
//! differ only once translated) or `timing` (documents, or the movement heuristic, show
//! one side missing an amount the other booked near the period end); else `open`.
//! Every non-matched pair carries its reason, also when it is within tolerance.
//!
//! Timing evidence: when either entity of a pair delivered `documents.csv`, the two
//! sides' documents dated on or before the period end are paired, exact reference first
//! (offsetting amounts preferred), then offsetting amount and currency with dates at most
//! `timing_window_days` apart, each step a maximum bipartite matching (petgraph); the
//! difference is timing when it equals the sum of the documents left on one side only
//! and dated within `timing_window_days` of the period end. Without documents, the
//! heuristic: the difference equals one side's movement of the period while the other
//! side did not move at all (an amount booked this month that the other side has not
//! booked yet).
//!
//! Columnar: lines become side aggregates with one group-by; Rust loops run over the
//! aggregates (pairs), over declared-dividend months and over the documents of pairs.

use std::collections::{BTreeMap, BTreeSet};

use chrono::NaiveDate;
use petgraph::graph::{NodeIndex, UnGraph};
use polars::prelude::*;
use rust_decimal::Decimal;

use crate::findings::{Finding, Findings, Severity};
use crate::load::Dataset;
use crate::map_accounts::{GRAIN, Mapped, chart_frame, period_index, period_of_index};
use crate::model::*;
use crate::money::{AMOUNT_SCALE, column_decimals, decimal_lit};
use crate::proof::Check;
use crate::translate::Translated;
use crate::validate::Scope;

/// Documents paired in one step of one group (same reference, or same currency and
/// amount) beyond this number are paired greedily instead of by maximum matching, which
/// is cubic in the number of documents. The evidence says so.
pub const MAX_DOCUMENT_GROUP: usize = 1_000;

/// The file of accepted intercompany differences, under `entities/`.
pub const ACCEPTED_FILE: &str = "accepted_differences.csv";

/// Tolerances and the view asked for.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct Options {
    /// In the presentation currency.
    pub tolerance_absolute: Decimal,
    /// A share of the larger side (in the presentation currency).
    pub tolerance_relative: Decimal,
    pub timing_window_days: u32,
    /// Show only the pairs of this entity (the proof still covers every pair).
    pub only: Option<EntityId>,
    /// The entities the close consolidates (in full or proportionately): only their pairs
    /// are eliminated and post a difference. `None`: every entity.
    pub consolidated: Option<BTreeSet<EntityId>>,
}

impl Options {
    pub fn from_settings(s: &IntercompanySettings) -> Self {
        Self {
            tolerance_absolute: s.tolerance_absolute,
            tolerance_relative: s.tolerance_relative,
            timing_window_days: s.timing_window_days,
            only: None,
            consolidated: None,
        }
    }
}

/// What a pair compares: the closing balance or the year-to-date amount.
#[derive(Debug, Clone, Copy, PartialEq, Eq, PartialOrd, Ord, Hash)]
pub enum Measure {
    Balance,
    YearToDate,
}

impl Measure {
    pub fn as_str(&self) -> &'static str {
        match self {
            Measure::Balance => "balance",
            Measure::YearToDate => "year_to_date",
        }
    }
    fn parse(s: &str) -> Option<Self> {
        match s {
            "balance" => Some(Measure::Balance),
            "year_to_date" => Some(Measure::YearToDate),
            _ => None,
        }
    }
}

#[derive(Debug, Clone, Copy, PartialEq, Eq, PartialOrd, Ord, Hash)]
pub enum Status {
    Matched,
    WithinTolerance,
    Explained,
    Open,
    Awaiting,
}

impl Status {
    pub fn as_str(&self) -> &'static str {
        match self {
            Status::Matched => "matched",
            Status::WithinTolerance => "within_tolerance",
            Status::Explained => "explained",
            Status::Open => "open",
            Status::Awaiting => "awaiting",
        }
    }
}

/// Why the sides differ.
#[derive(Debug, Clone, Copy, PartialEq, Eq, PartialOrd, Ord, Hash)]
pub enum Reason {
    /// Agree in the transaction currency, differ once translated.
    Fx,
    /// One side is missing an amount the other booked near the period end.
    Timing,
    /// Neither FX nor timing: a true difference to chase.
    Unexplained,
    /// The counterparty's figures are not there yet.
    NotDelivered,
}

impl Reason {
    pub fn as_str(&self) -> &'static str {
        match self {
            Reason::Fx => "fx",
            Reason::Timing => "timing",
            Reason::Unexplained => "unexplained",
            Reason::NotDelivered => "not_delivered",
        }
    }
}

/// Why an entity's figures are not used for the period.
#[derive(Debug, Clone, PartialEq, Eq)]
pub enum Absence {
    /// No folder entities/<ENTITY>/.
    NoFolder,
    /// Months of the fiscal year through the period without a trial balance.
    MissingMonths(Vec<Period>),
    /// The delivery has this many blocking findings (`tessera check` lists them).
    BlockingFindings(usize),
    /// The functional currency has no closing and average rate for a month needed.
    RateMissing { currency: Currency, period: Period },
}

/// Which entities' figures matching uses, and why the others are set aside.
#[derive(Debug, Clone, Default)]
pub struct Deliveries {
    pub used: BTreeSet<EntityId>,
    pub set_aside: BTreeMap<EntityId, Absence>,
}

/// The entity whose delivery a finding is about: its file lies in the entity's folder,
/// or it names an entity and no file.
fn delivery_of(f: &Finding) -> Option<EntityId> {
    match &f.file {
        Some(file) => {
            let rest = file.strip_prefix("entities/")?;
            let (e, _) = rest.split_once('/')?;
            Some(EntityId::new(e))
        }
        None => f.entity.clone(),
    }
}

/// Whether a finding makes matching meaningless for every entity: a blocking problem in
/// the settings, the entity list or the chart (the kinds and statements matching relies
/// on), or one that names neither a file nor an entity. Problems of one delivery only set
/// that delivery aside; problems in holdings, layouts and historical rates do not touch
/// intercompany balances; missing monthly rates set aside the entities that need them.
pub fn blocks_matching(f: &Finding) -> bool {
    if f.severity < Severity::Blocking || delivery_of(f).is_some() {
        return false;
    }
    match f.file.as_deref() {
        None => true,
        Some(file) => ["entities/group.toml", "entities/entities.csv", "entities/accounts.csv"].contains(&file),
    }
}

impl Deliveries {
    /// Decides, entity by entity, whether its figures for `scope` can be matched.
    pub fn assess(ds: &Dataset, findings: &Findings, scope: Scope) -> PolarsResult<Self> {
        let delivered = ds
            .ledger
            .clone()
            .lazy()
            .select([col("entity"), col("period")])
            .unique(None, UniqueKeepStrategy::Any)
            .collect()?;
        let mut months_of: BTreeMap<String, BTreeSet<Period>> = BTreeMap::new();
        let ents = delivered.column("entity")?.str()?;
        let pers = delivered.column("period")?.str()?;
        for i in 0..delivered.height() {
            if let (Some(e), Some(p)) = (ents.get(i), pers.get(i).and_then(|p| p.parse().ok())) {
                months_of.entry(e.to_string()).or_default().insert(p);
            }
        }
        let mut blocking: BTreeMap<EntityId, usize> = BTreeMap::new();
        for f in findings.items().iter().filter(|f| f.severity >= Severity::Blocking) {
            if let Some(e) = delivery_of(f) {
                *blocking.entry(e).or_default() += 1;
            }
        }
        let rates: BTreeSet<(Period, Currency)> = ds.rates.iter().map(|r| (r.period, r.currency)).collect();
        let mut needed_months = vec![scope.fiscal_start.prev()];
        needed_months.extend(scope.months());
        let pres = ds.settings.presentation_currency;
        let mut out = Deliveries::default();
        let empty = BTreeSet::new();
        // A subsidiary sold in the year is neither used nor awaited: its figures to the
        // sale are in the close (`loss_of_control`), and it is a third party after.
        let sold = sold_in_year(ds, scope);
        for e in ds.entities.iter().filter(|e| !sold.contains(e.id.as_str())) {
            let have = months_of.get(e.id.as_str()).unwrap_or(&empty);
            let missing: Vec<Period> = scope.months().into_iter().filter(|p| !have.contains(p)).collect();
            let absence = if !ds.delivered_entities.contains(&e.id) {
                Some(Absence::NoFolder)
            } else if !missing.is_empty() {
                Some(Absence::MissingMonths(missing))
            } else if let Some(n) = blocking.get(&e.id) {
                Some(Absence::BlockingFindings(*n))
            } else if e.currency != pres {
                needed_months
                    .iter()
                    .find(|p| !rates.contains(&(**p, e.currency)))
                    .map(|p| Absence::RateMissing { currency: e.currency, period: *p })
            } else {
                None
            };
            match absence {
                Some(a) => {
                    out.set_aside.insert(e.id.clone(), a);
                }
                None => {
                    out.used.insert(e.id.clone());
                }
            }
        }
        Ok(out)
    }

    pub fn is_used(&self, e: &str) -> bool {
        self.used.contains(&EntityId::new(e))
    }

    /// The mapped ledger of the entities whose figures are used.
    pub fn restrict(&self, mapped: &Mapped) -> PolarsResult<Mapped> {
        let used = DataFrame::new(
            self.used.len(),
            vec![Column::new("entity".into(), self.used.iter().map(|e| e.to_string()).collect::<Vec<_>>())],
        )?;
        let lines = mapped
            .lines
            .clone()
            .lazy()
            .join(used.lazy(), [col("entity")], [col("entity")], JoinArgs::new(JoinType::Semi))
            .collect()?;
        Ok(Mapped::new(lines, mapped.unmapped.clone(), mapped.mapped_twice.clone()))
    }
}

/// One side of a pair: an entity's lines on the kind with the other entity.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct Side {
    /// The one transaction currency of its lines; `None` when they are in several.
    pub currency: Option<Currency>,
    /// Amount in `currency` (meaningless when `currency` is `None`).
    pub amount_txn: Decimal,
    /// The period's movement in `currency`.
    pub movement_txn: Decimal,
    /// Amount in the presentation currency.
    pub amount: Decimal,
    /// The period's movement in the presentation currency.
    pub movement: Decimal,
    /// Ledger lines (grain rows) behind the side; months for a derived side.
    pub lines: u32,
    /// Measured from the counterparty's balance-sheet credits of the kind (dividends
    /// declared) rather than from profit-or-loss lines: not an intercompany TB line of
    /// this kind, so not part of the ledger reconciliation.
    pub derived: bool,
}

/// A document as used for matching.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct DocumentRef {
    pub entity: EntityId,
    pub reference: String,
    pub date: NaiveDate,
    pub amount: Decimal,
    pub currency: String,
    pub days_before_end: i64,
    pub in_window: bool,
}

/// What supports a pair's classification.
#[derive(Debug, Clone, PartialEq, Eq)]
pub enum Evidence {
    None,
    /// Documents of the two sides, after pairing.
    Documents {
        /// On one side only.
        unpaired: Vec<DocumentRef>,
        /// Paired by reference but with amounts that do not offset.
        differing: Vec<(DocumentRef, DocumentRef)>,
        /// Some groups were paired greedily (beyond `MAX_DOCUMENT_GROUP`).
        greedy: bool,
    },
    /// Heuristic timing: this entity moved by the difference; the other did not move.
    Movement {
        entity: EntityId,
    },
    /// The entity whose figures are not there, and why.
    Awaiting {
        entity: EntityId,
        absence: Absence,
    },
}

/// One pair, compared and classified.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct Pair {
    pub entity: EntityId,
    pub counterparty: EntityId,
    pub kind: String,
    pub measure: Measure,
    pub entity_side: Option<Side>,
    pub counterparty_side: Option<Side>,
    /// The currency both sides are in, when they agree on one.
    pub txn_currency: Option<Currency>,
    /// entity + counterparty in `txn_currency`.
    pub difference_txn: Option<Decimal>,
    /// entity + counterparty in the presentation currency; `None` while awaiting.
    pub difference: Option<Decimal>,
    pub status: Status,
    pub reason: Option<Reason>,
    pub evidence: Evidence,
    /// The sort key: |difference|, or the delivered side's amount while awaiting.
    pub materiality: Decimal,
}

impl Pair {
    pub fn amount_entity(&self) -> Decimal {
        self.entity_side.as_ref().map(|s| s.amount).unwrap_or_default()
    }
    pub fn amount_counterparty(&self) -> Decimal {
        self.counterparty_side.as_ref().map(|s| s.amount).unwrap_or_default()
    }
    /// The entity whose figures the pair waits for.
    pub fn awaiting(&self) -> Option<&EntityId> {
        match &self.evidence {
            Evidence::Awaiting { entity, .. } => Some(entity),
            _ => None,
        }
    }
}

/// What the close posts to the intercompany difference account for one pair: pairs
/// within tolerance and pairs explained by FX (IAS 21.45: the exchange difference on an
/// intragroup monetary item does not disappear on elimination). Presentation currency.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct DifferencePosting {
    pub entity: EntityId,
    pub counterparty: EntityId,
    pub kind: String,
    pub measure: Measure,
    /// `settings.accounts.intercompany_difference`.
    pub account: GroupAccount,
    pub amount_entity: Decimal,
    pub amount_counterparty: Decimal,
    /// amount_entity + amount_counterparty: what is left once both sides are eliminated.
    pub difference: Decimal,
    pub status: Status,
    pub reason: Option<Reason>,
}

/// Pairs counted by status, per entity or for the whole matching.
#[derive(Debug, Clone, Default, PartialEq, Eq)]
pub struct Counts {
    pub pairs: usize,
    pub matched: usize,
    pub within_tolerance: usize,
    pub explained: usize,
    pub open: usize,
    /// Sum of |difference| over the open pairs (presentation currency).
    pub open_difference: Decimal,
}

impl Counts {
    /// Counts one pair; a pair awaiting figures counts in `pairs` and in no status.
    fn add(&mut self, p: &Pair) {
        self.pairs += 1;
        match p.status {
            Status::Matched => self.matched += 1,
            Status::WithinTolerance => self.within_tolerance += 1,
            Status::Explained => self.explained += 1,
            Status::Open => {
                self.open += 1;
                self.open_difference += p.materiality;
            }
            Status::Awaiting => {}
        }
    }
}

/// Who must act: per entity, its pairs by status.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct EntitySummary {
    pub entity: EntityId,
    pub counts: Counts,
    /// Pairs that wait for this entity's figures.
    pub awaited: usize,
    /// Why its figures are not used, if they are not.
    pub absence: Option<Absence>,
}

impl EntitySummary {
    pub fn must_act(&self) -> bool {
        self.counts.open > 0 || self.awaited > 0
    }
}

#[derive(Debug, Clone, Default, PartialEq, Eq)]
pub struct Totals {
    pub counts: Counts,
    pub awaiting: usize,
    /// Sum of the differences the close posts to the intercompany difference account.
    pub to_difference_account: Decimal,
}

/// Intercompany lines of a kind that has no counterpart account in the chart.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct NotMatched {
    pub kind: String,
    pub measure: Measure,
    pub lines: u32,
    pub amount: Decimal,
}

/// The result of matching one period.
#[derive(Debug, Clone)]
pub struct Matching {
    pub period: Period,
    pub currency: Currency,
    pub minor: u32,
    pub options: Options,
    pub difference_account: GroupAccount,
    /// Sorted by materiality, largest first.
    pub pairs: Vec<Pair>,
    pub summary: Vec<EntitySummary>,
    pub totals: Totals,
    pub not_matched: Vec<NotMatched>,
    pub proof: Vec<Check>,
}

impl Matching {
    /// Whether any pair shown is open.
    pub fn has_open(&self) -> bool {
        self.pairs.iter().any(|p| p.status == Status::Open)
    }

    /// The differences the close posts to the intercompany difference account.
    pub fn postings(&self) -> Vec<DifferencePosting> {
        self.pairs
            .iter()
            .filter(|p| posts_difference(p, self.options.consolidated.as_ref()))
            .map(|p| DifferencePosting {
                entity: p.entity.clone(),
                counterparty: p.counterparty.clone(),
                kind: p.kind.clone(),
                measure: p.measure,
                account: self.difference_account.clone(),
                amount_entity: p.amount_entity(),
                amount_counterparty: p.amount_counterparty(),
                difference: p.difference.unwrap_or_default(),
                status: p.status,
                reason: p.reason,
            })
            .collect()
    }
}

/// Whether the close posts the pair's difference to the intercompany difference account:
/// it eliminates both sides of every pair of two consolidated entities and posts what is
/// left there, whatever the pair's status (within tolerance, FX, timing, or open, which
/// only an acceptance lets into a final close). Dividend income is eliminated against
/// the payer's retained earnings instead, with nothing left; a pair awaiting figures has
/// no difference yet.
pub fn posts_difference(p: &Pair, consolidated: Option<&BTreeSet<EntityId>>) -> bool {
    let inside = consolidated.is_none_or(|c| c.contains(&p.entity) && c.contains(&p.counterparty));
    inside
        && p.status != Status::Awaiting
        && !(p.kind == "dividend" && p.measure == Measure::YearToDate)
        && !p.difference.unwrap_or_default().is_zero()
}

/// What the close's gate found in the matching: blocking findings for open differences
/// not accepted, warnings for acceptances that fit no open pair, and the text each
/// accepted pair adds to its elimination entry, by (entity, counterparty, kind) in the
/// entry's order.
#[derive(Debug, Default)]
pub struct Gate {
    pub findings: Vec<Finding>,
    pub accepted: BTreeMap<(EntityId, EntityId, String), String>,
}

/// The intercompany gate of a close: every open difference the close would post must be
/// accepted in `accepted_differences.csv` for `period`, by pair, kind and amount (to the
/// cent, either sign, since the pair can be named in either order).
pub fn gate(m: &Matching, accepted: &[crate::load::AcceptedDifference], period: Period) -> Gate {
    use crate::findings::Rule;
    let mut out = Gate::default();
    let mut used = vec![false; accepted.len()];
    let pres = m.currency.code();
    for p in m.pairs.iter().filter(|p| posts_difference(p, m.options.consolidated.as_ref())) {
        let d = p.difference.unwrap_or_default();
        let same_pair = |a: &crate::load::AcceptedDifference| {
            a.period == period
                && a.kind == p.kind
                && ((a.entity == p.entity && a.counterparty == p.counterparty)
                    || (a.entity == p.counterparty && a.counterparty == p.entity))
        };
        let key = if p.entity <= p.counterparty {
            (p.entity.clone(), p.counterparty.clone(), p.kind.clone())
        } else {
            (p.counterparty.clone(), p.entity.clone(), p.kind.clone())
        };
        let hit = accepted.iter().position(|a| same_pair(a) && a.amount.abs() == d.abs());
        if let Some(i) = hit {
            used[i] = true;
            let a = &accepted[i];
            out.accepted.insert(key, format!("accepted by {}: {}", a.accepted_by, a.reason));
            continue;
        }
        if p.status != Status::Open {
            continue;
        }
        let near = accepted.iter().find(|a| same_pair(a)).map(|a| {
            format!(
                " ({}:{} accepts {} {}, not this difference)",
                a.source.file,
                a.source.line.unwrap_or(0),
                pres,
                a.amount
            )
        });
        out.findings.push(
            Finding::new(
                Rule::IntercompanyOpen,
                format!(
                    "{} and {} disagree on {} ({}) by {pres} {}: entity side {}, counterparty side {}, unexplained and above tolerance{}",
                    p.entity,
                    p.counterparty,
                    p.kind,
                    p.measure.as_str(),
                    crate::money::format_amount(d, m.minor),
                    crate::money::format_amount(p.amount_entity(), m.minor),
                    crate::money::format_amount(p.amount_counterparty(), m.minor),
                    near.unwrap_or_default()
                ),
                format!(
                    "chase the difference (tessera match shows the pair); to close with it, add `{},{},{},{period},{},<reason>,<who>` to entities/{ACCEPTED_FILE}",
                    p.entity,
                    p.counterparty,
                    p.kind,
                    crate::money::plain(d)
                ),
            )
            .entity(&p.entity)
            .period(period),
        );
    }
    for (a, u) in accepted.iter().zip(used) {
        if !u && a.period == period {
            out.findings.push(
                Finding::new(
                    Rule::AcceptanceUnused,
                    format!(
                        "the acceptance of {} {} between {} and {} ({}) fits no difference the close posts",
                        pres, a.amount, a.entity, a.counterparty, a.kind
                    ),
                    "correct the pair, kind or amount to what tessera match shows, or remove the row",
                )
                .at(&a.source)
                .entity(&a.entity)
                .severity(Severity::Warning),
            );
        }
    }
    out
}

/// How the chart lets a kind be matched on one statement.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
enum Sidedness {
    /// Accounts on both the debit and the credit side: line against line.
    TwoSided,
    /// Profit or loss on one side only: the other side is measured from its
    /// balance-sheet accounts of the kind of `class`, their credits (`credits`) or debits.
    Derived { class: &'static str, credits: bool },
    /// No counterpart at all.
    NotMatched,
}

fn sidedness(ds: &Dataset) -> BTreeMap<(String, Measure), Sidedness> {
    let mut classes: BTreeMap<(String, Measure), Vec<AccountClass>> = BTreeMap::new();
    for a in &ds.accounts {
        if let Some(k) = &a.ic_kind {
            let m = if a.statement == Statement::BalanceSheet { Measure::Balance } else { Measure::YearToDate };
            classes.entry((k.clone(), m)).or_default().push(a.class);
        }
    }
    let has = |k: &str, m: Measure, c: AccountClass| classes.get(&(k.to_string(), m)).is_some_and(|s| s.contains(&c));
    let mut out = BTreeMap::new();
    for ((k, m), cs) in &classes {
        let debit = cs.iter().any(|c| matches!(c, AccountClass::Asset | AccountClass::Expense));
        let credit =
            cs.iter().any(|c| matches!(c, AccountClass::Liability | AccountClass::Equity | AccountClass::Income));
        let s = if debit && credit {
            Sidedness::TwoSided
        } else if *m == Measure::YearToDate && credit && has(k, Measure::Balance, AccountClass::Liability) {
            Sidedness::Derived { class: "liability", credits: true }
        } else if *m == Measure::YearToDate && debit && has(k, Measure::Balance, AccountClass::Asset) {
            Sidedness::Derived { class: "asset", credits: false }
        } else {
            Sidedness::NotMatched
        };
        out.insert((k.clone(), *m), s);
    }
    out
}

fn dec(v: &[Option<Decimal>], i: usize) -> Decimal {
    v[i].unwrap_or_default()
}

/// The subsidiaries sold in the fiscal year to the period end.
fn sold_in_year(ds: &Dataset, scope: Scope) -> BTreeSet<String> {
    crate::ownership::losses_of_control(ds, scope).into_iter().map(|c| c.owned.to_string()).collect()
}

/// Whether a translated line is of, or names, a subsidiary sold in the year.
fn names_sold(ds: &Dataset, scope: Scope) -> Expr {
    sold_in_year(ds, scope).into_iter().fold(lit(false), |acc, x| {
        acc.or(col("entity").eq(lit(x.clone())).or(col("counterparty").eq(lit(x)).fill_null(lit(false))))
    })
}

/// Side aggregates of the period: one row per entity, counterparty, kind and measure.
/// Lines naming a subsidiary sold in the year are left out: after the sale it is a
/// third party (IFRS 10.B98), and its pairs to the sale are the close's business.
fn side_frame(ds: &Dataset, translated: &Translated, scope: Scope) -> PolarsResult<DataFrame> {
    let p = period_index(scope.period);
    let zero = decimal_lit(Decimal::ZERO, AMOUNT_SCALE);
    let pzero = decimal_lit(Decimal::ZERO, translated.minor as usize);
    let grain: Vec<Expr> = GRAIN.iter().map(|c| col(*c)).collect();
    let chart = chart_frame(ds)?.lazy().filter(col("ic_kind").is_not_null()).select([
        col("group_account"),
        col("ic_kind"),
        col("statement"),
    ]);
    let foreign = col("txn_currency").is_not_null();
    translated
        .lines
        .clone()
        .lazy()
        .filter(names_sold(ds, scope).not())
        .filter(col("period_index").lt_eq(lit(p)))
        .join(chart, [col("group_account")], [col("group_account")], JoinArgs::new(JoinType::Inner))
        .sort(
            ["entity", "group_account", "counterparty", "txn_currency", "period_index"],
            SortMultipleOptions::default().with_nulls_last(true),
        )
        .with_column(col("txn_amount").fill_null(zero.clone()).cum_sum(false).over(grain)?.alias("txn_balance"))
        .filter(col("period_index").eq(lit(p)).and(col("counterparty").is_not_null()))
        .with_columns([
            when(col("statement").eq(lit("balance_sheet")))
                .then(lit(Measure::Balance.as_str()))
                .otherwise(lit(Measure::YearToDate.as_str()))
                .alias("measure"),
            when(foreign.clone()).then(col("txn_currency")).otherwise(col("currency")).alias("side_currency"),
            when(foreign.clone()).then(col("txn_balance")).otherwise(col("balance_local")).alias("amount_txn"),
            when(foreign)
                .then(col("txn_amount").fill_null(zero.clone()))
                .otherwise(col("amount_local"))
                .alias("movement_txn"),
        ])
        // Grain rows with nothing in the period (an item settled earlier in the year)
        // say nothing about either side.
        .filter(
            col("amount_txn")
                .neq(zero.clone())
                .or(col("movement_txn").neq(zero.clone()))
                .or(col("balance_local").neq(zero))
                .or(col("balance_presentation").neq(pzero.clone()))
                .or(col("amount_presentation").neq(pzero)),
        )
        .group_by([col("entity"), col("counterparty"), col("ic_kind"), col("measure")])
        .agg([
            col("side_currency").n_unique().alias("currencies"),
            col("side_currency").min().alias("side_currency"),
            col("amount_txn").sum(),
            col("movement_txn").sum(),
            col("balance_presentation").sum().alias("amount"),
            col("amount_presentation").sum().alias("movement"),
            len().alias("lines"),
        ])
        .sort(["entity", "counterparty", "ic_kind", "measure"], SortMultipleOptions::default())
        .collect()
}

/// Year-to-date credits (or debits) per month to the balance-sheet accounts of each
/// derived kind: the payer's side of a dividend.
fn declared_frame(
    ds: &Dataset,
    translated: &Translated,
    scope: Scope,
    derived: &[(String, &'static str, bool)],
) -> PolarsResult<DataFrame> {
    let p0 = period_index(scope.fiscal_start);
    let p = period_index(scope.period);
    let zero = decimal_lit(Decimal::ZERO, AMOUNT_SCALE);
    let foreign = col("txn_currency").is_not_null();
    let mut frames = Vec::new();
    for (kind, class, credits) in derived {
        let chart = chart_frame(ds)?.lazy().filter(
            col("ic_kind")
                .eq(lit(kind.as_str()))
                .and(col("statement").eq(lit("balance_sheet")))
                .and(col("class").eq(lit(*class))),
        );
        // A month counts when the transaction amount is credited (debited): a
        // revaluation moves the local amount only and is no declaration.
        let txn_move =
            when(foreign.clone()).then(col("txn_amount").fill_null(zero.clone())).otherwise(col("amount_local"));
        let counts = if *credits { txn_move.clone().lt(zero.clone()) } else { txn_move.clone().gt(zero.clone()) };
        let part = |e: Expr| when(counts.clone()).then(e).otherwise(zero.clone());
        frames.push(
            translated
                .lines
                .clone()
                .lazy()
                .filter(names_sold(ds, scope).not())
                .filter(col("period_index").gt_eq(lit(p0)).and(col("period_index").lt_eq(lit(p))))
                .join(
                    chart.select([col("group_account")]),
                    [col("group_account")],
                    [col("group_account")],
                    JoinArgs::new(JoinType::Semi),
                )
                .filter(col("counterparty").is_not_null())
                .with_columns([
                    when(foreign.clone()).then(col("txn_currency")).otherwise(col("currency")).alias("side_currency"),
                    part(col("amount_local")).alias("part_local"),
                    part(txn_move.clone()).alias("part_txn"),
                ])
                .group_by([
                    col("entity"),
                    col("counterparty"),
                    col("period_index"),
                    col("currency"),
                    col("side_currency"),
                ])
                .agg([col("part_local").sum(), col("part_txn").sum()])
                .filter(col("part_local").neq(zero.clone()).or(col("part_txn").neq(zero.clone())))
                .with_column(lit(kind.as_str()).alias("ic_kind")),
        );
    }
    if frames.is_empty() {
        return Ok(DataFrame::empty());
    }
    concat(frames, UnionArgs::default())?
        .sort(["entity", "counterparty", "ic_kind", "period_index"], SortMultipleOptions::default())
        .collect()
}

/// The derived sides from the declared frame, translated at the rate of the equity
/// movement they mirror (rates/historical.csv on retained earnings), else the month's
/// average. Keyed (payer, receiver, kind).
fn derived_sides(
    ds: &Dataset,
    declared: &DataFrame,
    period: Period,
    minor: u32,
) -> PolarsResult<BTreeMap<(String, String, String), Side>> {
    let mut out: BTreeMap<(String, String, String), Side> = BTreeMap::new();
    if declared.height() == 0 {
        return Ok(out);
    }
    let pres = ds.settings.presentation_currency;
    let mode = ds.settings.policies.rounding;
    let re = &ds.settings.accounts.retained_earnings;
    let ent = crate::money::column_strings(declared, "entity")?;
    let cp = crate::money::column_strings(declared, "counterparty")?;
    let kind = crate::money::column_strings(declared, "ic_kind")?;
    let ccy = crate::money::column_strings(declared, "currency")?;
    let side_ccy = crate::money::column_strings(declared, "side_currency")?;
    let per: Vec<Option<i32>> = declared.column("period_index")?.i32()?.iter().collect();
    let local = column_decimals(declared.column("part_local")?)?;
    let txn = column_decimals(declared.column("part_txn")?)?;
    let mut currencies: BTreeMap<(String, String, String), BTreeSet<String>> = BTreeMap::new();
    for i in 0..declared.height() {
        let (Some(e), Some(c), Some(k), Some(pi)) = (&ent[i], &cp[i], &kind[i], per[i]) else { continue };
        let month = period_of_index(pi);
        // The payer's side mirrors the receiver's profit or loss: minus the credits.
        let amount_local = -dec(&local, i);
        let amount_txn = -dec(&txn, i);
        let functional = ccy[i].as_deref().and_then(Currency::parse);
        let presentation = if functional == Some(pres) {
            crate::money::round(amount_local, minor, mode)
        } else {
            let hist =
                ds.historical_rates.iter().find(|h| h.entity.as_str() == e && &h.account == re && h.period == month);
            let avg = ds.rates.iter().find(|r| Some(r.currency) == functional && r.period == month);
            let rate = hist.map(|h| h.rate).or(avg.map(|r| r.average));
            // An entity whose rates are missing is set aside before matching
            // (Deliveries::assess), so a missing rate here is a bug.
            let rate = rate.unwrap_or_else(|| panic!("no rate for {e} ({:?}) in {month}, which matching uses", ccy[i]));
            crate::money::round(rate.apply(amount_local), minor, mode)
        };
        let key = (e.clone(), c.clone(), k.clone());
        currencies.entry(key.clone()).or_default().insert(side_ccy[i].clone().unwrap_or_default());
        let s = out.entry(key).or_insert(Side {
            currency: None,
            amount_txn: Decimal::ZERO,
            movement_txn: Decimal::ZERO,
            amount: Decimal::ZERO,
            movement: Decimal::ZERO,
            lines: 0,
            derived: true,
        });
        s.amount_txn += amount_txn;
        s.amount += presentation;
        s.lines += 1;
        if month == period {
            s.movement_txn += amount_txn;
            s.movement += presentation;
        }
    }
    for (key, cs) in currencies {
        if let Some(s) = out.get_mut(&key)
            && cs.len() == 1
        {
            s.currency = cs.iter().next().and_then(|c| Currency::parse(c));
        }
    }
    Ok(out)
}

/// A document as loaded, for the pairing.
#[derive(Debug, Clone)]
struct Doc {
    reference: String,
    date: NaiveDate,
    amount: Decimal,
    currency: String,
}

type DocKey = (String, String, String);

/// Documents dated on or before the period end, by (entity, counterparty, kind).
fn documents_until(ds: &Dataset, deliveries: &Deliveries, end: NaiveDate) -> PolarsResult<BTreeMap<DocKey, Vec<Doc>>> {
    let epoch = NaiveDate::from_ymd_opt(1970, 1, 1).expect("valid date");
    let end_days = (end - epoch).num_days() as i32;
    let d = ds
        .documents
        .clone()
        .lazy()
        .with_column(col("date").strict_cast(DataType::Int32).alias("days"))
        .filter(col("days").lt_eq(lit(end_days)))
        .sort(["entity", "counterparty", "ic_kind", "days", "reference"], SortMultipleOptions::default())
        .collect()?;
    let ent = crate::money::column_strings(&d, "entity")?;
    let cp = crate::money::column_strings(&d, "counterparty")?;
    let kind = crate::money::column_strings(&d, "ic_kind")?;
    let refs = crate::money::column_strings(&d, "reference")?;
    let ccy = crate::money::column_strings(&d, "currency")?;
    let days: Vec<Option<i32>> = d.column("days")?.i32()?.iter().collect();
    let amount = column_decimals(d.column("amount")?)?;
    let mut out: BTreeMap<DocKey, Vec<Doc>> = BTreeMap::new();
    for i in 0..d.height() {
        let (Some(e), Some(c), Some(k), Some(r), Some(cur), Some(day)) =
            (&ent[i], &cp[i], &kind[i], &refs[i], &ccy[i], days[i])
        else {
            continue;
        };
        if !deliveries.is_used(e) {
            continue;
        }
        let date = epoch + chrono::Duration::days(i64::from(day));
        out.entry((e.clone(), c.clone(), k.clone())).or_default().push(Doc {
            reference: r.clone(),
            date,
            amount: dec(&amount, i),
            currency: cur.clone(),
        });
    }
    Ok(out)
}

/// Maximum matching between `left` and `right` (indices into the two sides' documents)
/// on the edges `edge` allows; greedy beyond `MAX_DOCUMENT_GROUP`. Returns the pairs and
/// whether it had to be greedy.
fn assign(left: &[usize], right: &[usize], edge: impl Fn(usize, usize) -> bool) -> (Vec<(usize, usize)>, bool) {
    if left.is_empty() || right.is_empty() {
        return (Vec::new(), false);
    }
    let mut g: UnGraph<(), ()> = UnGraph::new_undirected();
    let l: Vec<NodeIndex> = left.iter().map(|_| g.add_node(())).collect();
    let r: Vec<NodeIndex> = right.iter().map(|_| g.add_node(())).collect();
    for (i, a) in left.iter().enumerate() {
        for (j, b) in right.iter().enumerate() {
            if edge(*a, *b) {
                g.add_edge(l[i], r[j], ());
            }
        }
    }
    let greedy = left.len() + right.len() > MAX_DOCUMENT_GROUP;
    let m = if greedy { petgraph::algo::greedy_matching(&g) } else { petgraph::algo::maximum_matching(&g) };
    let mut out = Vec::new();
    for (i, a) in left.iter().enumerate() {
        if let Some(mate) = m.mate(l[i]) {
            let j = mate.index() - left.len();
            out.push((*a, right[j]));
        }
    }
    (out, greedy)
}

/// Documents grouped for one pairing step: the entity's and the counterparty's indices.
type Groups<K> = BTreeMap<K, (Vec<usize>, Vec<usize>)>;

struct DocumentPairing {
    unpaired_entity: Vec<usize>,
    unpaired_counterparty: Vec<usize>,
    differing: Vec<(usize, usize)>,
    greedy: bool,
}

/// Pairs the two sides' documents: exact reference with offsetting amounts, then exact
/// reference with any amount (a disputed document), then offsetting amount and currency
/// with dates at most `window` days apart.
fn pair_documents(e: &[Doc], c: &[Doc], window: i64) -> DocumentPairing {
    let mut used_e = vec![false; e.len()];
    let mut used_c = vec![false; c.len()];
    let mut differing = Vec::new();
    let mut greedy = false;
    let offsets = |i: usize, j: usize| e[i].currency == c[j].currency && e[i].amount + c[j].amount == Decimal::ZERO;
    // 1. Same reference.
    let mut by_ref: Groups<&str> = BTreeMap::new();
    for (i, d) in e.iter().enumerate() {
        by_ref.entry(d.reference.as_str()).or_default().0.push(i);
    }
    for (j, d) in c.iter().enumerate() {
        by_ref.entry(d.reference.as_str()).or_default().1.push(j);
    }
    for (l, r) in by_ref.values() {
        let (pairs, g) = assign(l, r, offsets);
        greedy |= g;
        for (i, j) in pairs {
            used_e[i] = true;
            used_c[j] = true;
        }
        let l2: Vec<usize> = l.iter().copied().filter(|i| !used_e[*i]).collect();
        let r2: Vec<usize> = r.iter().copied().filter(|j| !used_c[*j]).collect();
        for (i, j) in l2.into_iter().zip(r2) {
            used_e[i] = true;
            used_c[j] = true;
            differing.push((i, j));
        }
    }
    // 2. Same currency and offsetting amount, dates within the window.
    let mut by_amount: Groups<(&str, Decimal)> = BTreeMap::new();
    for (i, d) in e.iter().enumerate().filter(|(i, _)| !used_e[*i]) {
        by_amount.entry((d.currency.as_str(), d.amount.abs().normalize())).or_default().0.push(i);
    }
    for (j, d) in c.iter().enumerate().filter(|(j, _)| !used_c[*j]) {
        by_amount.entry((d.currency.as_str(), d.amount.abs().normalize())).or_default().1.push(j);
    }
    for (l, r) in by_amount.values() {
        let (pairs, g) = assign(l, r, |i, j| offsets(i, j) && (e[i].date - c[j].date).num_days().abs() <= window);
        greedy |= g;
        for (i, j) in pairs {
            used_e[i] = true;
            used_c[j] = true;
        }
    }
    DocumentPairing {
        unpaired_entity: (0..e.len()).filter(|i| !used_e[*i]).collect(),
        unpaired_counterparty: (0..c.len()).filter(|j| !used_c[*j]).collect(),
        differing,
        greedy,
    }
}

fn doc_ref(entity: &str, d: &Doc, end: NaiveDate, window: i64) -> DocumentRef {
    let days = (end - d.date).num_days();
    DocumentRef {
        entity: EntityId::new(entity),
        reference: d.reference.clone(),
        date: d.date,
        amount: d.amount,
        currency: d.currency.clone(),
        days_before_end: days,
        in_window: days <= window,
    }
}

/// Under which measure a document of `kind` explains a pair: the balance sheet when the
/// chart has balance-sheet accounts of the kind (so a dividend document explains the
/// receivable and payable), else profit or loss.
fn document_measure(sided: &BTreeMap<(String, Measure), Sidedness>, kind: &str) -> Measure {
    if sided.contains_key(&(kind.to_string(), Measure::Balance)) { Measure::Balance } else { Measure::YearToDate }
}

/// The columns of the side frame, read once.
struct SideColumns {
    currency: Vec<Option<String>>,
    currencies: Vec<Option<u32>>,
    amount_txn: Vec<Option<Decimal>>,
    movement_txn: Vec<Option<Decimal>>,
    amount: Vec<Option<Decimal>>,
    movement: Vec<Option<Decimal>>,
    lines: Vec<Option<u32>>,
}

impl SideColumns {
    fn read(sides: &DataFrame) -> PolarsResult<Self> {
        let count = |c: &str| -> PolarsResult<Vec<Option<u32>>> {
            Ok(sides.column(c)?.cast(&DataType::UInt32)?.u32()?.iter().collect())
        };
        Ok(Self {
            currency: crate::money::column_strings(sides, "side_currency")?,
            currencies: count("currencies")?,
            amount_txn: column_decimals(sides.column("amount_txn")?)?,
            movement_txn: column_decimals(sides.column("movement_txn")?)?,
            amount: column_decimals(sides.column("amount")?)?,
            movement: column_decimals(sides.column("movement")?)?,
            lines: count("lines")?,
        })
    }

    fn side(&self, i: usize) -> Side {
        let one = self.currencies[i] == Some(1);
        Side {
            currency: if one { self.currency[i].as_deref().and_then(Currency::parse) } else { None },
            amount_txn: dec(&self.amount_txn, i),
            movement_txn: dec(&self.movement_txn, i),
            amount: dec(&self.amount, i),
            movement: dec(&self.movement, i),
            lines: self.lines[i].unwrap_or(0),
            derived: false,
        }
    }
}

#[derive(Default)]
struct Slot {
    entity_side: Option<Side>,
    counterparty_side: Option<Side>,
}

/// Slots of pairs by (entity, counterparty, kind, measure) and the kinds that are not
/// matched, from the side aggregates (a Rust loop over aggregates, not lines); a
/// derived side (`derived`, by payer, receiver and kind) is the receiver's counterparty
/// side of the year to date.
#[allow(clippy::type_complexity)]
fn slots_of(
    sides: &DataFrame,
    sided: &BTreeMap<(String, Measure), Sidedness>,
    derived: BTreeMap<(String, String, String), Side>,
) -> PolarsResult<(BTreeMap<(String, String, String, Measure), Slot>, BTreeMap<(String, Measure), NotMatched>)> {
    let ent = crate::money::column_strings(sides, "entity")?;
    let cp = crate::money::column_strings(sides, "counterparty")?;
    let kind = crate::money::column_strings(sides, "ic_kind")?;
    let measure = crate::money::column_strings(sides, "measure")?;
    let columns = SideColumns::read(sides)?;
    let mut slots: BTreeMap<(String, String, String, Measure), Slot> = BTreeMap::new();
    let mut not_matched: BTreeMap<(String, Measure), NotMatched> = BTreeMap::new();
    for i in 0..sides.height() {
        let (Some(e), Some(c), Some(k), Some(m)) =
            (&ent[i], &cp[i], &kind[i], measure[i].as_deref().and_then(Measure::parse))
        else {
            continue;
        };
        let side = columns.side(i);
        match sided.get(&(k.clone(), m)).copied().unwrap_or(Sidedness::NotMatched) {
            Sidedness::NotMatched => {
                let x = not_matched.entry((k.clone(), m)).or_insert(NotMatched {
                    kind: k.clone(),
                    measure: m,
                    lines: 0,
                    amount: Decimal::ZERO,
                });
                x.lines += side.lines;
                x.amount += side.amount;
            }
            Sidedness::Derived { .. } => {
                slots.entry((e.clone(), c.clone(), k.clone(), m)).or_default().entity_side = Some(side);
            }
            Sidedness::TwoSided => {
                let (a, b) = if e <= c { (e, c) } else { (c, e) };
                let slot = slots.entry((a.clone(), b.clone(), k.clone(), m)).or_default();
                if e == a {
                    slot.entity_side = Some(side);
                } else {
                    slot.counterparty_side = Some(side);
                }
            }
        }
    }
    for ((payer, receiver, k), side) in derived {
        slots.entry((receiver, payer, k, Measure::YearToDate)).or_default().counterparty_side = Some(side);
    }
    Ok((slots, not_matched))
}

/// The reason of a documented pair's difference: timing when the unpaired documents
/// inside the window, in the currency compared (`cmp`), make up the difference `diff`
/// exactly; with the documents as evidence.
fn documented_reason(
    docs: &BTreeMap<DocKey, Vec<Doc>>,
    (e, c, k): (&str, &str, &str),
    end: NaiveDate,
    window: i64,
    cmp: Currency,
    diff: Decimal,
) -> (Evidence, Reason) {
    let no_docs: Vec<Doc> = Vec::new();
    let de = docs.get(&(e.to_string(), c.to_string(), k.to_string())).unwrap_or(&no_docs);
    let dc = docs.get(&(c.to_string(), e.to_string(), k.to_string())).unwrap_or(&no_docs);
    let dp = pair_documents(de, dc, window);
    let mut unpaired: Vec<DocumentRef> = dp.unpaired_entity.iter().map(|i| doc_ref(e, &de[*i], end, window)).collect();
    unpaired.extend(dp.unpaired_counterparty.iter().map(|j| doc_ref(c, &dc[*j], end, window)));
    let in_window: Decimal =
        unpaired.iter().filter(|d| d.in_window && d.currency == cmp.code()).map(|d| d.amount).sum();
    let differing = dp
        .differing
        .iter()
        .map(|(i, j)| (doc_ref(e, &de[*i], end, window), doc_ref(c, &dc[*j], end, window)))
        .collect();
    let evidence = Evidence::Documents { unpaired, differing, greedy: dp.greedy };
    let reason = if !in_window.is_zero() && in_window == diff { Reason::Timing } else { Reason::Unexplained };
    (evidence, reason)
}

/// The largest differences first, then by entity, counterparty, kind and measure.
fn sort_by_materiality(pairs: &mut [Pair]) {
    pairs.sort_by(|x, y| {
        y.materiality.cmp(&x.materiality).then_with(|| {
            (&x.entity, &x.counterparty, &x.kind, x.measure).cmp(&(&y.entity, &y.counterparty, &y.kind, y.measure))
        })
    });
}

/// A pair whose counterparty's figures are not used this period: it awaits them.
fn awaiting(eid: EntityId, cid: EntityId, k: String, m: Measure, se: Option<Side>, deliveries: &Deliveries) -> Pair {
    let absence = deliveries.set_aside.get(&cid).cloned().unwrap_or(Absence::NoFolder);
    let materiality = se.as_ref().map(|s| s.amount.abs()).unwrap_or_default();
    Pair {
        entity: eid,
        counterparty: cid.clone(),
        kind: k,
        measure: m,
        entity_side: se,
        counterparty_side: None,
        txn_currency: None,
        difference_txn: None,
        difference: None,
        status: Status::Awaiting,
        reason: Some(Reason::NotDelivered),
        evidence: Evidence::Awaiting { entity: cid, absence },
        materiality,
    }
}

/// The transaction currency a pair is compared in: the one both sides share, or the
/// only side's.
fn shared_currency(se: Option<&Side>, sc: Option<&Side>) -> Option<Currency> {
    match (se.map(|s| s.currency), sc.map(|s| s.currency)) {
        (Some(Some(x)), Some(Some(y))) if x == y => Some(x),
        (Some(Some(x)), None) | (None, Some(Some(x))) => Some(x),
        _ => None,
    }
}

impl Side {
    /// A side with nothing on it, for a pair where one side has no line.
    fn zero() -> Side {
        Side {
            currency: None,
            amount_txn: Decimal::ZERO,
            movement_txn: Decimal::ZERO,
            amount: Decimal::ZERO,
            movement: Decimal::ZERO,
            lines: 0,
            derived: false,
        }
    }
}

/// Matches the intercompany positions of `scope.period` between the entities whose
/// figures `deliveries` uses.
pub fn match_intercompany(
    ds: &Dataset,
    translated: &Translated,
    scope: Scope,
    deliveries: &Deliveries,
    options: &Options,
) -> PolarsResult<Matching> {
    let _span = tracing::info_span!("match_intercompany", period = %scope.period).entered();
    let minor = translated.minor;
    let sided = sidedness(ds);
    let sides = side_frame(ds, translated, scope)?;
    let derived_kinds: Vec<(String, &'static str, bool)> = sided
        .iter()
        .filter_map(|((k, _), s)| match s {
            Sidedness::Derived { class, credits } => Some((k.clone(), *class, *credits)),
            _ => None,
        })
        .collect();
    let declared = declared_frame(ds, translated, scope, &derived_kinds)?;
    let derived = derived_sides(ds, &declared, scope.period, minor)?;

    let (slots, not_matched) = slots_of(&sides, &sided, derived)?;

    let end = scope.period.last_day();
    let window = i64::from(options.timing_window_days);
    let docs = documents_until(ds, deliveries, end)?;
    let mut pairs = Vec::new();
    for ((a, b, k, m), slot) in slots {
        let (mut e, mut c, mut se, mut sc) = (a, b, slot.entity_side, slot.counterparty_side);
        // While one side's figures are missing, the delivered side is the entity.
        if !deliveries.is_used(&e) && deliveries.is_used(&c) {
            std::mem::swap(&mut e, &mut c);
            std::mem::swap(&mut se, &mut sc);
        }
        let eid = EntityId::new(&e);
        let cid = EntityId::new(&c);
        if !deliveries.is_used(&c) {
            pairs.push(awaiting(eid, cid, k, m, se, deliveries));
            continue;
        }
        let txn_currency = shared_currency(se.as_ref(), sc.as_ref());
        let zero = Side::zero();
        let (ve, vc) = (se.as_ref().unwrap_or(&zero), sc.as_ref().unwrap_or(&zero));
        let difference = ve.amount + vc.amount;
        let difference_txn = txn_currency.map(|_| ve.amount_txn + vc.amount_txn);
        let larger = ve.amount.abs().max(vc.amount.abs());
        let within =
            difference.abs() <= options.tolerance_absolute && difference.abs() <= options.tolerance_relative * larger;
        let mut evidence = Evidence::None;
        let (status, reason) = if difference.is_zero() && difference_txn.is_none_or(|d| d.is_zero()) {
            (Status::Matched, None)
        } else {
            let reason = if difference_txn.is_some_and(|d| d.is_zero()) {
                Reason::Fx
            } else {
                // The difference and the movements in the currency the pair is compared in.
                let (diff, me, mc, cmp) = match (difference_txn, txn_currency) {
                    (Some(d), Some(t)) => (d, ve.movement_txn, vc.movement_txn, t),
                    _ => (difference, ve.movement, vc.movement, ds.settings.presentation_currency),
                };
                let documented = document_measure(&sided, &k) == m
                    && (ds.documented_entities.contains(&eid) || ds.documented_entities.contains(&cid));
                if documented {
                    let (found, reason) = documented_reason(&docs, (&e, &c, &k), end, window, cmp, diff);
                    evidence = found;
                    reason
                } else if !diff.is_zero() && ((me == diff && mc.is_zero()) || (mc == diff && me.is_zero())) {
                    evidence = Evidence::Movement { entity: if me == diff { eid.clone() } else { cid.clone() } };
                    Reason::Timing
                } else {
                    Reason::Unexplained
                }
            };
            let status = if within {
                Status::WithinTolerance
            } else if reason == Reason::Unexplained {
                Status::Open
            } else {
                Status::Explained
            };
            (status, Some(reason))
        };
        pairs.push(Pair {
            entity: eid,
            counterparty: cid,
            kind: k,
            measure: m,
            entity_side: se,
            counterparty_side: sc,
            txn_currency,
            difference_txn,
            difference: Some(difference),
            status,
            reason,
            evidence,
            materiality: difference.abs(),
        });
    }
    sort_by_materiality(&mut pairs);
    let not_matched: Vec<NotMatched> = not_matched.into_values().collect();
    let proof = prove(ds, translated, scope, &pairs, &not_matched)?;
    if let Some(only) = &options.only {
        pairs.retain(|p| &p.entity == only || &p.counterparty == only);
    }
    let (summary, totals) = summarize(&pairs, deliveries, options.consolidated.as_ref());
    Ok(Matching {
        period: scope.period,
        currency: ds.settings.presentation_currency,
        minor,
        options: options.clone(),
        difference_account: ds.settings.accounts.intercompany_difference.clone(),
        pairs,
        summary,
        totals,
        not_matched,
        proof,
    })
}

fn summarize(
    pairs: &[Pair],
    deliveries: &Deliveries,
    consolidated: Option<&BTreeSet<EntityId>>,
) -> (Vec<EntitySummary>, Totals) {
    let mut by: BTreeMap<EntityId, EntitySummary> = BTreeMap::new();
    let mut t = Totals::default();
    for p in pairs {
        t.counts.add(p);
        if p.status == Status::Awaiting {
            t.awaiting += 1;
        }
        if posts_difference(p, consolidated) {
            t.to_difference_account += p.difference.unwrap_or_default();
        }
        for e in [&p.entity, &p.counterparty] {
            let s = by.entry(e.clone()).or_insert_with(|| EntitySummary {
                entity: e.clone(),
                counts: Counts::default(),
                awaited: 0,
                absence: deliveries.set_aside.get(e).cloned(),
            });
            if p.awaiting() == Some(e) {
                s.awaited += 1;
            } else {
                s.counts.add(p);
            }
        }
    }
    (by.into_values().collect(), t)
}

/// The reconciliation of the pairs to the ledger: the sides of every pair plus the lines
/// of kinds without a counterpart equal all intercompany lines of the trial balances of
/// the period, in the presentation currency (nothing lost, nothing counted twice).
fn prove(
    ds: &Dataset,
    translated: &Translated,
    scope: Scope,
    pairs: &[Pair],
    not_matched: &[NotMatched],
) -> PolarsResult<Vec<Check>> {
    let ic_accounts = chart_frame(ds)?.lazy().filter(col("ic_kind").is_not_null()).select([col("group_account")]);
    let of_period = translated
        .lines
        .clone()
        .lazy()
        .filter(col("period_index").eq(lit(period_index(scope.period))))
        .join(ic_accounts, [col("group_account")], [col("group_account")], JoinArgs::new(JoinType::Semi));
    let ledger =
        of_period.clone().select([col("balance_presentation").sum().alias("total"), len().alias("lines")]).collect()?;
    let sold = of_period.filter(names_sold(ds, scope)).select([col("balance_presentation").sum()]).collect()?;
    let sold = column_decimals(sold.column("balance_presentation")?)?.first().copied().flatten().unwrap_or_default();
    let ledger_total = column_decimals(ledger.column("total")?)?.first().copied().flatten().unwrap_or_default();
    let ledger_lines = ledger.column("lines")?.cast(&DataType::UInt64)?.u64()?.get(0).unwrap_or(0);
    let sum_side = |f: fn(&Pair) -> Option<&Side>| -> Decimal {
        pairs.iter().filter_map(f).filter(|s| !s.derived).map(|s| s.amount).sum()
    };
    let entities = sum_side(|p| p.entity_side.as_ref());
    let counterparties = sum_side(|p| p.counterparty_side.as_ref());
    let others: Decimal = not_matched.iter().map(|x| x.amount).sum();
    let total = entities + counterparties + others + sold;
    Ok(vec![Check::new(
        "intercompany_pairs_reconcile_to_ledger",
        total == ledger_total,
        format!(
            "{} pairs: entity sides {entities} + counterparty sides {counterparties} + kinds without a counterpart account {others} + lines of or naming a subsidiary sold in the year {sold} = {total}; intercompany lines of the trial balances ({ledger_lines} grain rows) = {ledger_total}",
            pairs.len()
        ),
    )])
}

#[cfg(test)]
mod tests {
    use super::*;
    use std::str::FromStr;

    fn doc(r: &str, date: &str, amount: &str) -> Doc {
        Doc {
            reference: r.into(),
            date: NaiveDate::parse_from_str(date, "%Y-%m-%d").unwrap(),
            amount: Decimal::from_str(amount).unwrap(),
            currency: "USD".into(),
        }
    }

    #[test]
    fn reference_pairs_first_and_a_disputed_document_differs() {
        let e = [doc("INV-1", "2026-12-10", "100.00"), doc("INV-2", "2026-12-30", "50.00")];
        let c = [doc("INV-1", "2026-12-11", "-90.00")];
        let p = pair_documents(&e, &c, 5);
        assert_eq!(p.differing, vec![(0, 0)]);
        assert_eq!(p.unpaired_entity, vec![1]);
        assert!(p.unpaired_counterparty.is_empty());
    }

    /// Greedy first-fit would pair e0 with c0 (both within the window) and leave e1 and
    /// c1 unpaired; the maximum matching pairs all four.
    #[test]
    fn assignment_beats_first_fit() {
        let e = [doc("A", "2026-12-20", "10.00"), doc("B", "2026-12-26", "10.00")];
        let c = [doc("X", "2026-12-24", "-10.00"), doc("Y", "2026-12-16", "-10.00")];
        let p = pair_documents(&e, &c, 5);
        assert!(p.unpaired_entity.is_empty() && p.unpaired_counterparty.is_empty(), "{:?}", p.unpaired_entity);
    }

    #[test]
    fn amounts_must_offset_exactly_and_dates_fall_in_the_window() {
        let e = [doc("A", "2026-12-01", "10.00"), doc("B", "2026-12-20", "10.00")];
        let c = [doc("X", "2026-12-10", "-10.00"), doc("Y", "2026-12-20", "-10.01")];
        let p = pair_documents(&e, &c, 5);
        assert_eq!(p.unpaired_entity, vec![0, 1]);
        assert_eq!(p.unpaired_counterparty, vec![0, 1]);
    }

    #[test]
    fn findings_of_one_delivery_do_not_block_matching() {
        use crate::findings::Rule;
        let tb =
            Finding::new(Rule::TrialBalanceUnbalanced, "x", "y").in_file("entities/ALD-UK/tb-2026-12.movements.csv");
        assert!(!blocks_matching(&tb));
        assert_eq!(delivery_of(&tb), Some(EntityId::new("ALD-UK")));
        let chart = Finding::new(Rule::AccountInvalid, "x", "y").in_file("entities/accounts.csv");
        assert!(blocks_matching(&chart));
        let rate = Finding::new(Rule::RateMissing, "x", "y").in_file("rates/monthly.csv");
        assert!(!blocks_matching(&rate));
        let missing = Finding::new(Rule::DeliveryMissing, "x", "y").entity(&EntityId::new("ALD-UK"));
        assert!(!blocks_matching(&missing));
    }
}

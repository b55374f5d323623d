//! The consolidated statement of cash flows (IAS 7) of one view, by the indirect method,
//! from what the close already computed: the opening and the closing close of the view
//! and the translated lines.
//!
//! Every group account's movement between the two closes is split into parts, and each
//! part goes to exactly one line of the statement:
//!
//! - the *flow*: each consolidated entity's local movement of a month translated at that
//!   month's average rate (IAS 7.25-27: the rate of the flows, the average as the usual
//!   approximation; for a hyperinflationary entity the closing rate, IAS 21.42). Income,
//!   expenses and equity movements are flows as translated (average or the rate of their
//!   date). A flow goes to the line its account has in `entities/cash_flow_lines.csv`;
//! - the *exchange difference*: the translated movement less the flow. It is never a cash
//!   flow: on cash it is the effect of exchange rate changes on cash held (IAS 7.28), on
//!   every other account it is offset by the entities' translation differences, and the
//!   statement's exchange line is what is left of them: the effect on cash plus the
//!   translation residue (rounding of the translated lines, equity movements at the rate
//!   of their date rather than the average);
//! - for a subsidiary first consolidated in the view, its balances at the end of the
//!   month before control, the investment its holders paid for it and the close's
//!   acquisition entries (`investment_and_goodwill`, `pre_acquisition_results`): one
//!   investing line, the consideration paid in cash net of the cash acquired (IAS
//!   7.39-42), so that its assets and liabilities are not working-capital movements;
//! - the elimination journal's movement: line by line by account (intragroup flows are
//!   eliminated because both sides and the elimination land on the same lines), except
//!   the entries that restate a non-cash item: goodwill (`investment_and_goodwill`: its
//!   profit or loss part, an impairment, is added back), the depreciation of fair value
//!   adjustments (`fair_value_depreciation`: added back; the release of their deferred
//!   tax, `fair_value_deferred_tax`, nets to zero there) and the equity method (the share of the result is reversed), each on
//!   a line of its own.
//!
//! Equity movements in the books of a subsidiary (its dividends, after the intragroup part
//! is eliminated, and the close's NCI entries against them) belong to the line of the NCI
//! account: what a subsidiary pays outside the group goes to its non-controlling
//! shareholders (IAS 7.31, 7.34: dividends paid to NCI in financing).
//!
//! A change in stake with control kept (`change_in_stake`) in the view is a transaction
//! with the NCI, in financing at the consideration paid or received (IAS 7.42A): the
//! holder's flows on its investment in the subsidiary and the non-cash movements of the
//! entries the change moves (the subsidiary's `investment_and_goodwill` and
//! `change_in_stake`, but their profit or loss part, which stays in profit before tax: the
//! holder's own gain on shares sold and its reversal) go to one line of their own; that
//! line must equal the consideration of the changes in the view, or the proof names the
//! difference.
//!
//! A subsidiary sold in the view (`loss_of_control`, in the closing's year to date and not
//! the opening's) is consolidated to its last month end: its flows count to then (its
//! results in operating activities, its working capital), and from then on it is one
//! investing line, the proceeds net of the cash and cash equivalents it held (IAS
//! 7.39-42): the holder's flows on its investment in it, and the movement of every entry
//! about it (the opening's, the `loss_of_control` entry that derecognises its balances)
//! but their profit or loss part and its cash. Its cash derecognised is part of the change
//! in cash; the gain on disposal stays in profit before tax and is taken out on a line of
//! its own (a non-cash item, IAS 7.18(b)), against the disposal line. The disposal line
//! must be the proceeds less the cash disposed, or the proof names the difference (a
//! profit or loss elimination about the subsidiary other than the gain, say).
//!
//! Dividends from equity-accounted investees (the holder's income on a `dividend`
//! account naming one) stay in operating activities, or, under
//! `policies.associate_dividends = "investing"`, are taken out of operating and shown in
//! investing (IAS 7.31-33, 7.38); the share of their results is reversed as non-cash.
//!
//! Not supported: a subsidiary acquired and sold in the same view, an entity consolidated
//! at the opening but not at the closing other than by a sale (each fails the proof, never
//! a guess), and the direct method.
//!
//! The proof `cash_flows_reconcile` checks that opening cash plus the statement's net
//! change plus the exchange line equals closing cash, to the cent, with the cash
//! balances taken from the two closes' roll-ups and the lines built from contributions,
//! translated lines and journal; `cash_flow_lines_cover_movements` that every moving
//! account has a line and that each entity's translated movement is exactly its flow,
//! exchange difference and balance acquired. Cash flows knows nothing about files and
//! formats no number.

use std::collections::{BTreeMap, BTreeSet};

use polars::prelude::*;
use rust_decimal::Decimal;

use crate::close::loss_of_control::Disposal;
use crate::close::{Close, EliminationRule};
use crate::load::{Dataset, Quote};
use crate::map_accounts::period_index;
use crate::model::*;
use crate::money::{self, RATE_SCALE, column_decimals, column_strings, decimal_lit};
use crate::proof::Check;
use crate::structure::GroupStructure;
use crate::translate::Translated;

/// The section of the statement an account's movement belongs to.
#[derive(Debug, Clone, Copy, PartialEq, Eq, PartialOrd, Ord, Hash, serde::Serialize)]
#[serde(rename_all = "snake_case")]
pub enum Section {
    Operating,
    Investing,
    Financing,
    /// Cash and cash equivalents: the accounts whose change the statement explains.
    Cash,
    /// Movements that are translation, never cash: the translation difference and
    /// reserve, goodwill. They are part of the exchange line.
    Exchange,
}

impl Section {
    pub fn parse(s: &str) -> Option<Section> {
        Some(match s {
            "operating" => Section::Operating,
            "investing" => Section::Investing,
            "financing" => Section::Financing,
            "cash" => Section::Cash,
            "exchange" => Section::Exchange,
            _ => return None,
        })
    }
    pub fn as_str(self) -> &'static str {
        match self {
            Section::Operating => "operating",
            Section::Investing => "investing",
            Section::Financing => "financing",
            Section::Cash => "cash",
            Section::Exchange => "exchange",
        }
    }
    fn label(self) -> &'static str {
        match self {
            Section::Operating => "Cash flows from operating activities",
            Section::Investing => "Cash flows from investing activities",
            Section::Financing => "Cash flows from financing activities",
            Section::Cash => "Cash and cash equivalents",
            Section::Exchange => "Effect of exchange rate changes",
        }
    }
}

/// One row of `entities/cash_flow_lines.csv`: the line a group account's movement
/// belongs to. `against` is for a non-cash item of profit or loss (depreciation, say):
/// its amount stays in profit before tax, is added back on `line` and taken from
/// `against`, the line of the balance-sheet account that holds its other side.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct LineDef {
    pub account: GroupAccount,
    pub section: Section,
    pub line: String,
    pub label: String,
    pub against: Option<String>,
    pub source: Source,
}

/// The line every profit or loss account of the indirect method starts from.
pub const PROFIT_BEFORE_TAX: &str = "profit_before_tax";
/// The fixed lines this module adds.
pub const ACQUISITIONS: &str = "acquisition_of_subsidiaries";
pub const GOODWILL_IMPAIRMENT: &str = "goodwill_impairment";
pub const FAIR_VALUE_DEPRECIATION: &str = "fair_value_depreciation";
const FAIR_VALUE_DEPRECIATION_LABEL: &str = "Depreciation of fair value adjustments";
pub const SHARE_OF_ASSOCIATES: &str = "share_of_associates";
pub const UNCLASSIFIED: &str = "unclassified";
/// Dividends received from equity-accounted investees under the policy `investing`
/// (IAS 7.31-33): taken out of profit before tax in operating, shown in investing.
pub const ASSOCIATE_DIVIDEND_INCOME: &str = "associate_dividend_income";
const ASSOCIATE_DIVIDEND_INCOME_LABEL: &str = "Dividends from associates and joint ventures (in investing)";
pub const ASSOCIATE_DIVIDENDS: &str = "dividends_from_associates";
const ASSOCIATE_DIVIDENDS_LABEL: &str = "Dividends received from associates and joint ventures";
/// Not a line: the journal's movement on the cash of a subsidiary sold.
const CASH_DISPOSED: &str = "cash_disposed";
/// The lines of the NCI entry (`Treatment::NciShare`), put on the NCI account's line.
const NCI_ENTRY: &str = "nci_entry";
/// Changes in ownership interests in subsidiaries that do not result in a loss of control
/// (IAS 7.42A), in financing.
pub const NCI_TRANSACTIONS: &str = "transactions_with_nci";
const NCI_TRANSACTIONS_LABEL: &str = "Changes in ownership interests in subsidiaries without loss of control";
/// Disposals of subsidiaries, net of the cash disposed of (IAS 7.39-42), in investing.
pub const DISPOSALS: &str = "disposal_of_subsidiaries";
const DISPOSALS_LABEL: &str = "Disposal of subsidiaries net of cash disposed of";
/// The gain or loss on disposal, taken out of profit before tax (non-cash).
pub const GAIN_ON_DISPOSAL: &str = "gain_on_disposal";
const GAIN_ON_DISPOSAL_LABEL: &str = "Gain or loss on disposal of subsidiaries";
/// The remeasurement of an interest held before control (IFRS 3.42): in profit before
/// tax, non-cash, taken out here; the acquisition line keeps what was paid.
pub const REMEASUREMENT: &str = "remeasurement_gain";
const REMEASUREMENT_LABEL: &str = "Gain or loss on remeasuring an interest held before control";
const ACQUISITIONS_LABEL: &str = "Acquisition of subsidiaries net of cash acquired";

/// One line of the statement, cash in positive.
#[derive(Debug, Clone, PartialEq, Eq, serde::Serialize)]
pub struct Line {
    pub line: String,
    pub label: String,
    pub amount: Decimal,
}

/// One section: its lines and their total.
#[derive(Debug, Clone, PartialEq, Eq, serde::Serialize)]
pub struct SectionFlows {
    pub section: Section,
    pub label: &'static str,
    pub lines: Vec<Line>,
    pub total: Decimal,
}

/// The exchange line (IAS 7.28), explained: the exchange difference on the cash held
/// (opening cash and the flows, from their rates to the closing rate) and the residue of
/// the translation (rounding, equity movements at the rate of their date).
#[derive(Debug, Clone, PartialEq, Eq, serde::Serialize)]
pub struct ExchangeEffect {
    pub total: Decimal,
    pub on_cash: Decimal,
    pub residue: Decimal,
}

/// A subsidiary first consolidated in the view (IAS 7.40).
#[derive(Debug, Clone, PartialEq, Eq, serde::Serialize)]
pub struct Acquisition {
    pub entity: EntityId,
    pub period: Period,
    /// What its holders paid, as their flows on investment accounts (cash out positive).
    pub consideration: Decimal,
    pub cash_acquired: Decimal,
}

/// The statement of cash flows of one view.
#[derive(Debug, Clone, PartialEq, Eq, serde::Serialize)]
pub struct CashFlows {
    /// The period whose end is the opening, and the period closed.
    pub opening_period: Period,
    pub period: Period,
    pub sections: Vec<SectionFlows>,
    /// Operating + investing + financing.
    pub net_change: Decimal,
    pub exchange: ExchangeEffect,
    pub cash_opening: Decimal,
    pub cash_closing: Decimal,
    pub acquisitions: Vec<Acquisition>,
    #[serde(skip_serializing_if = "Vec::is_empty")]
    pub disposals: Vec<DisposalFlow>,
}

/// A subsidiary sold in the view (IAS 7.40).
#[derive(Debug, Clone, PartialEq, Eq, serde::Serialize)]
pub struct DisposalFlow {
    pub entity: EntityId,
    pub date: chrono::NaiveDate,
    /// The last month end consolidated.
    pub last_month: Period,
    /// The proceeds, at the closing rate of the last month end consolidated.
    pub proceeds: Decimal,
    /// Its cash and cash equivalents then, derecognised.
    pub cash_disposed: Decimal,
    /// The gain (positive) or loss on disposal, the reclassified reserve included.
    pub gain: Decimal,
}

/// Parts of one (entity, account, counterparty) movement in the view.
#[derive(Debug, Clone, Copy, Default)]
struct Parts {
    /// Translated movement of the view's months (translation difference rows included).
    translated: Decimal,
    /// The flows at the rates of the flows.
    flow: Decimal,
    /// Balance at the end of the month before control, for a subsidiary acquired in the view.
    acquired: Decimal,
}

type Key = (EntityId, GroupAccount, Option<EntityId>);

/// How an elimination entry's movement is presented.
#[derive(Debug, Clone, Copy, PartialEq, Eq, PartialOrd, Ord)]
enum Treatment {
    ByAccount,
    Acquisition,
    Goodwill,
    EquityMethod,
    /// The depreciation of fair value adjustments: non-cash, added back on its own line.
    FairValue,
    /// The release of their deferred tax: non-cash and no part of profit before tax, so
    /// the whole entry (tax income against the liability) nets to zero on that line.
    FairValueTax,
    /// The entries a change in stake in the view moves (IAS 7.42A).
    NciTransaction,
    /// The NCI entry: the NCI's share of a subsidiary's post-acquisition equity moved
    /// from the owners' components (retained earnings, the translation reserve and the
    /// reserves the chart names) to the NCI. Non-cash: all of it on the NCI's line,
    /// where it nets with the NCI's own movement, not its reserve part on exchange.
    NciShare,
    /// The entries about a subsidiary sold in the view (IAS 7.39-42).
    Disposal,
    /// The remeasurement of an interest held before control of a subsidiary acquired in
    /// the view (IFRS 3.42): its gain is in profit before tax and taken out as non-cash;
    /// with the acquisition entry it nets to nothing on the acquisition line.
    StepGain,
}

/// The statement of cash flows between `opening` (the close at the end of the month
/// before the view) and `closing`, for the group or sub-group below `root` as `s`
/// structures it, with its proof.
pub fn cash_flows(
    ds: &Dataset,
    lines: &[LineDef],
    s: &GroupStructure,
    t: &Translated,
    opening: &Close,
    closing: &Close,
) -> PolarsResult<(CashFlows, Vec<Check>)> {
    let _span = tracing::info_span!("cash_flows", period = %closing.period).entered();
    let root = s.parent();
    let roles = &ds.settings.accounts;
    let minor = t.minor;
    let mode = ds.settings.policies.rounding;
    let chart: BTreeMap<&GroupAccount, &AccountDef> = ds.accounts.iter().map(|a| (&a.account, a)).collect();
    let class: BTreeMap<&GroupAccount, &LineDef> = lines.iter().map(|l| (&l.account, l)).collect();
    let first = opening.period.next();
    let mut problems: Vec<String> = Vec::new();

    // Who is consolidated at each end, and from which month each entity's flows count.
    let members_of = members(s, opening, closing, &mut problems)?;
    let Members { start, share, acquired, end } = &members_of;

    // The translated movement, flow and balance acquired per (entity, account, counterparty).
    let mut parts = translated_parts(ds, t, (start, end), acquired, closing.period)?;
    add_translation_differences(ds, t, &members_of, closing.period, &mut parts)?;

    // The consolidated movement of each contribution, and its split.
    let delta = contribution_movements(opening, closing)?;
    let stakes = stake_changes_in_view(opening, closing);
    let sold = disposals_in_view(opening, closing);
    let r = Routing {
        ds,
        s,
        chart: &chart,
        class: &class,
        nci_line: class.get(&roles.non_controlling_interest).map(|d| d.line.clone()),
        root,
        acquired,
        stakes: &stakes,
        sold: &sold,
    };
    let mut tally = Tally::default();
    let keys: BTreeSet<&Key> = delta.keys().chain(parts.keys()).collect();
    for key in keys {
        let d = delta.get(key).copied().unwrap_or_default();
        let p = parts.get(key).copied().unwrap_or_default();
        let k = share.get(&key.0).copied().unwrap_or(Decimal::ONE);
        let (fx, acq) = split_movement(key, d, p, k, (minor, mode), &mut problems);
        r.contribution(key, d - fx - acq, fx, acq, &mut tally);
    }
    let Tally { mut on_line, fx_cash, acq_by, mut unclassified, mut cash_disposed } = tally;
    let mut add = |line: &str, x: Decimal| *on_line.entry(line.to_string()).or_default() += x;
    let nci_line = r.nci_line.clone();

    // The elimination journal's movement between the two closes.
    for (own, e, a, x) in journal_lines(opening, closing, (acquired, &stakes, &sold), &chart, &class, &mut problems) {
        match own {
            // The cash of a subsidiary sold, derecognised: part of the change in cash.
            Some(CASH_DISPOSED) => *cash_disposed.entry(e).or_default() -= x,
            Some(NCI_ENTRY) if nci_line.is_some() => add(nci_line.as_deref().unwrap_or(NCI_ENTRY), x),
            Some(NCI_ENTRY) => route(&chart, &class, None, root, &e, &a, x, &mut add, &mut unclassified),
            Some(line) => add(line, x),
            None => route(&chart, &class, nci_line.as_deref(), root, &e, &a, x, &mut add, &mut unclassified),
        }
    }
    for d in sold.values() {
        // The gain stays in profit before tax and is taken out as non-cash; the proceeds
        // are in the disposal line (IAS 7.18(b), 7.39).
        add(GAIN_ON_DISPOSAL, d.gain + d.reserve_recycled);
        add(DISPOSALS, -(d.gain + d.reserve_recycled));
    }
    problems.extend(
        unclassified
            .iter()
            .filter(|(_, x)| !x.is_zero())
            .map(|(a, x)| format!("{a} moved {} but has no line in cash_flow_lines.csv", money::plain(*x))),
    );

    // The statement: the lines of the classification in file order, the fixed ones
    // where they belong.
    let exchange_total = -exchange_components(&on_line, lines);
    let sections = sections(lines, &on_line, minor);
    check_nci_transactions(&stakes, &on_line, minor, &mut problems);
    let disposals = disposal_flows(&sold, &cash_disposed, minor);
    check_disposals(&disposals, &on_line, minor, &mut problems);
    let net_change: Decimal = sections.iter().map(|s| s.total).sum();

    // The cash balances from the two roll-ups, the second path of the proof.
    let cash_of = |c: &Close| -> Decimal {
        c.group.iter().filter(|(a, _)| class.get(a).is_some_and(|d| d.section == Section::Cash)).map(|(_, v)| *v).sum()
    };
    let (cash_opening, cash_closing) = (cash_of(opening), cash_of(closing));
    // The exchange line explained: on cash held, and the translation residue.
    let (on_cash, residue) = (shown(minor, fx_cash), shown(minor, exchange_total - fx_cash));
    let exchange = ExchangeEffect { total: shown(minor, exchange_total), on_cash, residue };
    let acquisitions = acquisitions(acq_by, start, first, minor);
    let checks = prove(
        opening.period,
        closing.period,
        [cash_opening, net_change, exchange_total, cash_closing],
        lines.len(),
        &problems,
    );
    let cf = CashFlows {
        opening_period: opening.period,
        period: closing.period,
        sections,
        net_change: shown(minor, net_change),
        exchange,
        cash_opening: shown(minor, cash_opening),
        cash_closing: shown(minor, cash_closing),
        acquisitions,
        disposals,
    };
    Ok((cf, checks))
}

/// What the statement's components add up to: each line's movement (debit positive: a
/// line shows minus the sum of its components), the exchange difference on cash held,
/// each acquisition's consideration and cash acquired, the movements no line
/// classifies, and the cash of each subsidiary sold.
#[derive(Default)]
struct Tally {
    on_line: BTreeMap<String, Decimal>,
    fx_cash: Decimal,
    acq_by: BTreeMap<EntityId, (Decimal, Decimal)>,
    unclassified: BTreeMap<GroupAccount, Decimal>,
    cash_disposed: BTreeMap<EntityId, Decimal>,
}

impl Tally {
    fn add(&mut self, line: &str, x: Decimal) {
        *self.on_line.entry(line.to_string()).or_default() += x;
    }
}

/// What routing a movement to its line reads: the chart and the classification, the
/// NCI's line, the group's root, and the group events of the view.
struct Routing<'a> {
    ds: &'a Dataset,
    s: &'a GroupStructure,
    chart: &'a BTreeMap<&'a GroupAccount, &'a AccountDef>,
    class: &'a BTreeMap<&'a GroupAccount, &'a LineDef>,
    nci_line: Option<String>,
    root: &'a EntityId,
    acquired: &'a BTreeSet<EntityId>,
    stakes: &'a BTreeMap<EntityId, Decimal>,
    sold: &'a BTreeMap<EntityId, Disposal>,
}

impl Routing<'_> {
    fn investment_kind(&self, a: &GroupAccount) -> bool {
        self.chart.get(a).and_then(|d| d.ic_kind.as_deref()) == Some("investment")
    }

    /// One contribution's movement, split into its flow, its exchange difference `fx`
    /// and the balance acquired `acq`, onto the lines.
    fn contribution(&self, key: &Key, flow: Decimal, fx: Decimal, acq: Decimal, t: &mut Tally) {
        let (e, a, cp) = key;
        let is_cash = self.class.get(a).is_some_and(|x| x.section == Section::Cash);
        if self.acquired.contains(e) {
            // The cash acquired is part of the change in cash; the other balances
            // acquired are the acquisition line (IAS 7.40-42).
            if is_cash {
                t.acq_by.entry(e.clone()).or_default().1 += acq;
            } else {
                t.acq_by.entry(e.clone()).or_default();
                t.add(ACQUISITIONS, acq);
            }
        }
        if is_cash {
            t.fx_cash += fx;
            return;
        }
        t.add(Section::Exchange.as_str(), fx);
        if let Some(c) = cp
            && self.acquired.contains(c)
            && self.investment_kind(a)
        {
            // The consideration a holder paid for a subsidiary acquired in the view.
            t.acq_by.entry(c.clone()).or_default().0 += flow;
            t.add(ACQUISITIONS, flow);
            return;
        }
        // What the holder paid or received for shares with control kept (IAS 7.42A), the
        // carrying amount of an investment sold (with the disposal, IAS 7.40).
        if let Some(line) = cp.as_ref().and_then(|c| changed_line(c, self.stakes, self.sold))
            && self.investment_kind(a)
        {
            t.add(line, flow);
            return;
        }
        let Tally { on_line, unclassified, .. } = t;
        let mut add = |line: &str, x: Decimal| *on_line.entry(line.to_string()).or_default() += x;
        route(self.chart, self.class, self.nci_line.as_deref(), self.root, e, a, flow, &mut add, unclassified);
        if cp.as_ref().is_some_and(|c| dividend_in_investing(self.ds, self.s, self.chart, c, a)) {
            t.add(ASSOCIATE_DIVIDEND_INCOME, -flow);
            t.add(ASSOCIATE_DIVIDENDS, flow);
        }
    }
}

/// The entities consolidated at the closing: the first month their flows count from,
/// their share (proportionate consolidation), which are first consolidated in the view,
/// and, for the subsidiaries sold in the year, the last month end consolidated. An entity
/// consolidated only at the opening and not sold is not supported.
struct Members {
    start: BTreeMap<EntityId, Period>,
    share: BTreeMap<EntityId, Decimal>,
    acquired: BTreeSet<EntityId>,
    end: BTreeMap<EntityId, Period>,
}

fn members(s: &GroupStructure, opening: &Close, closing: &Close, problems: &mut Vec<String>) -> PolarsResult<Members> {
    let first = opening.period.next();
    let before = contributing(opening)?;
    let after = contributing(closing)?;
    for e in before.difference(&after) {
        problems.push(format!(
            "{e} is consolidated at {} but not at {} without a sale in the year: the statement of cash flows does not present it (IAS 7.39-42)",
            opening.period, closing.period
        ));
    }
    let end: BTreeMap<EntityId, Period> = closing.disposals.iter().map(|d| (d.entity.clone(), d.last_month)).collect();
    let mut m = Members { start: BTreeMap::new(), share: BTreeMap::new(), acquired: BTreeSet::new(), end };
    for e in &after {
        if m.end.contains_key(e) && !before.contains(e) {
            problems.push(format!(
                "{e} is first consolidated and sold in the view {}..{}: the statement of cash flows does not present both (IAS 7.39-42)",
                first, closing.period
            ));
        }
        let info = s.entity(e);
        let from = if before.contains(e) {
            first
        } else {
            m.acquired.insert(e.clone());
            info.and_then(|x| x.controlled_from).map(Period::of_date).filter(|p| *p > first).unwrap_or(first)
        };
        m.start.insert(e.clone(), from);
        let proportionate = info.is_some_and(|x| x.method == Method::Proportionate);
        m.share.insert(e.clone(), if proportionate { s.share_for_proportionate(e) } else { Decimal::ONE });
    }
    Ok(m)
}

/// Adds each entity's translation differences (OCI of the view, reserve brought forward
/// for the opening month) to the parts: of the view's months as translated movement,
/// of the months before control of an acquired entity as balance acquired.
fn add_translation_differences(
    ds: &Dataset,
    t: &Translated,
    m: &Members,
    last: Period,
    parts: &mut BTreeMap<Key, Parts>,
) -> PolarsResult<()> {
    let roles = &ds.settings.accounts;
    let p0 = period_index(t.fiscal_start.prev());
    let ent = column_strings(&t.differences, "entity")?;
    let idx: Vec<Option<i32>> = t.differences.column("period_index")?.i32()?.iter().collect();
    let td = column_decimals(t.differences.column("translation_difference")?)?;
    for i in 0..t.differences.height() {
        let (Some(e), Some(month)) = (&ent[i], idx[i]) else { continue };
        let e = EntityId::new(e);
        let Some(from) = m.start.get(&e) else { continue };
        if month > period_index(last) || m.end.get(&e).is_some_and(|p| month > period_index(*p)) {
            continue;
        }
        let account = if month == p0 { &roles.translation_reserve } else { &roles.translation_difference };
        let slot = parts.entry((e.clone(), account.clone(), None)).or_default();
        let x = td[i].unwrap_or_default();
        if month >= period_index(*from) {
            slot.translated += x;
        } else if m.acquired.contains(&e) {
            slot.acquired += x;
        }
    }
    Ok(())
}
/// The lines of the statement in order: the classification's in file order, the fixed
/// adjustments after profit before tax, the acquisition line opening investing.
fn line_order(lines: &[LineDef]) -> Vec<(Section, String, String)> {
    let mut order: Vec<(Section, String, String)> = Vec::new();
    let mut seen: BTreeSet<String> = BTreeSet::new();
    let mut push = |section: Section, line: &str, label: &str, order: &mut Vec<(Section, String, String)>| {
        if seen.insert(line.to_string()) {
            order.push((section, line.to_string(), label.to_string()));
        }
    };
    let classified: BTreeSet<&str> = lines.iter().map(|l| l.line.as_str()).collect();
    for l in lines.iter().filter(|l| l.section != Section::Cash && l.section != Section::Exchange) {
        // The fixed acquisition line opens the investing section unless a row names it.
        if l.section == Section::Investing && !classified.contains(ACQUISITIONS) {
            push(Section::Investing, ACQUISITIONS, ACQUISITIONS_LABEL, &mut order);
        }
        push(l.section, &l.line, &l.label, &mut order);
        // The fixed adjustments follow profit before tax.
        if l.line == PROFIT_BEFORE_TAX {
            push(Section::Operating, GOODWILL_IMPAIRMENT, "Impairment of goodwill", &mut order);
            push(Section::Operating, FAIR_VALUE_DEPRECIATION, FAIR_VALUE_DEPRECIATION_LABEL, &mut order);
            push(Section::Operating, SHARE_OF_ASSOCIATES, "Share of result of equity-accounted investees", &mut order);
            push(Section::Operating, GAIN_ON_DISPOSAL, GAIN_ON_DISPOSAL_LABEL, &mut order);
            push(Section::Operating, REMEASUREMENT, REMEASUREMENT_LABEL, &mut order);
            push(Section::Operating, ASSOCIATE_DIVIDEND_INCOME, ASSOCIATE_DIVIDEND_INCOME_LABEL, &mut order);
        }
    }
    push(Section::Operating, PROFIT_BEFORE_TAX, "Profit before tax", &mut order);
    push(Section::Operating, GOODWILL_IMPAIRMENT, "Impairment of goodwill", &mut order);
    push(Section::Operating, FAIR_VALUE_DEPRECIATION, FAIR_VALUE_DEPRECIATION_LABEL, &mut order);
    push(Section::Operating, SHARE_OF_ASSOCIATES, "Share of result of equity-accounted investees", &mut order);
    push(Section::Operating, GAIN_ON_DISPOSAL, GAIN_ON_DISPOSAL_LABEL, &mut order);
    push(Section::Operating, REMEASUREMENT, REMEASUREMENT_LABEL, &mut order);
    push(Section::Operating, ASSOCIATE_DIVIDEND_INCOME, ASSOCIATE_DIVIDEND_INCOME_LABEL, &mut order);
    push(Section::Investing, ACQUISITIONS, ACQUISITIONS_LABEL, &mut order);
    push(Section::Investing, DISPOSALS, DISPOSALS_LABEL, &mut order);
    push(Section::Investing, ASSOCIATE_DIVIDENDS, ASSOCIATE_DIVIDENDS_LABEL, &mut order);
    push(Section::Financing, NCI_TRANSACTIONS, NCI_TRANSACTIONS_LABEL, &mut order);
    push(Section::Operating, UNCLASSIFIED, "Accounts without a cash flow line", &mut order);
    order
}

/// The operating, investing and financing sections with their lines (minus the sum of
/// each line's components) and totals.
fn sections(lines: &[LineDef], on_line: &BTreeMap<String, Decimal>, minor: u32) -> Vec<SectionFlows> {
    let order = line_order(lines);
    let fixed = [
        GOODWILL_IMPAIRMENT,
        FAIR_VALUE_DEPRECIATION,
        SHARE_OF_ASSOCIATES,
        GAIN_ON_DISPOSAL,
        REMEASUREMENT,
        ASSOCIATE_DIVIDEND_INCOME,
        ACQUISITIONS,
        DISPOSALS,
        ASSOCIATE_DIVIDENDS,
        NCI_TRANSACTIONS,
        UNCLASSIFIED,
    ];
    let mut sections = Vec::new();
    for section in [Section::Operating, Section::Investing, Section::Financing] {
        let mut out = Vec::new();
        for (_, line, label) in order.iter().filter(|(s, _, _)| *s == section) {
            let amount = shown(minor, -on_line.get(line).copied().unwrap_or_default());
            // A fixed line is shown only when something is on it.
            if fixed.contains(&line.as_str()) && amount.is_zero() {
                continue;
            }
            out.push(Line { line: line.clone(), label: label.clone(), amount });
        }
        let total = shown(minor, out.iter().map(|l| l.amount).sum());
        sections.push(SectionFlows { section, label: section.label(), lines: out, total });
    }
    sections
}

/// The two checks of the statement: opening cash, net change, exchange line and closing
/// cash (`figures` in that order) tie exactly; no problem was found on the way.
fn prove(
    opening: Period,
    closing: Period,
    figures: [Decimal; 4],
    classified: usize,
    problems: &[String],
) -> Vec<Check> {
    let [cash_opening, net_change, exchange_total, cash_closing] = figures;
    let ties = cash_opening + net_change + exchange_total == cash_closing;
    let reconcile = Check::new(
        "cash_flows_reconcile",
        ties,
        format!(
            "cash at {opening} {} + net change {} + exchange {} {} cash at {closing} {}",
            money::plain(cash_opening),
            money::plain(net_change),
            money::plain(exchange_total),
            if ties { "=" } else { "!=" },
            money::plain(cash_closing)
        ),
    );
    let covered = Check::new(
        "cash_flow_lines_cover_movements",
        problems.is_empty(),
        if problems.is_empty() {
            format!(
                "{classified} accounts classified; every movement split into flow, exchange difference and balance acquired"
            )
        } else {
            problems.join("; ")
        },
    );
    vec![reconcile, covered]
}

/// The subsidiaries whose stake changed with control kept in the view (in the closing's
/// year to date, not in the opening's), each with its consideration (received positive).
fn stake_changes_in_view(opening: &Close, closing: &Close) -> BTreeMap<EntityId, Decimal> {
    let mut out: BTreeMap<EntityId, Decimal> = BTreeMap::new();
    for x in closing.stake_changes.iter().filter(|x| !opening.stake_changes.contains(x)) {
        *out.entry(x.entity.clone()).or_default() += x.cash;
    }
    out
}

/// Whether a flow on `a` naming `c` is a dividend from an equity-accounted investee to be
/// shown in investing (`policies.associate_dividends`, IAS 7.31-33): the holder's income
/// on a `dividend` account. Under `operating` it stays in profit before tax, where the
/// share of the investee's result is reversed on its own line.
fn dividend_in_investing(
    ds: &Dataset,
    s: &GroupStructure,
    chart: &BTreeMap<&GroupAccount, &AccountDef>,
    c: &EntityId,
    a: &GroupAccount,
) -> bool {
    ds.settings.policies.associate_dividends == DividendsReceived::Investing
        && chart
            .get(a)
            .is_some_and(|d| d.statement == Statement::ProfitOrLoss && d.ic_kind.as_deref() == Some("dividend"))
        && s.entity(c).is_some_and(|x| x.method == Method::Equity)
}

/// The line of a holder's flows on its investment in `c` when its ownership changed in
/// the view: a change in stake (IAS 7.42A) or a sale (IAS 7.39-42).
fn changed_line(
    c: &EntityId,
    stakes: &BTreeMap<EntityId, Decimal>,
    sold: &BTreeMap<EntityId, Disposal>,
) -> Option<&'static str> {
    if stakes.contains_key(c) {
        Some(NCI_TRANSACTIONS)
    } else if sold.contains_key(c) {
        Some(DISPOSALS)
    } else {
        None
    }
}

/// The subsidiaries sold in the view (in the closing's year to date, not the opening's).
fn disposals_in_view(opening: &Close, closing: &Close) -> BTreeMap<EntityId, Disposal> {
    closing.disposals.iter().filter(|d| !opening.disposals.contains(d)).map(|d| (d.entity.clone(), d.clone())).collect()
}

/// The subsidiaries sold in the view as the statement shows them.
fn disposal_flows(
    sold: &BTreeMap<EntityId, Disposal>,
    cash_disposed: &BTreeMap<EntityId, Decimal>,
    minor: u32,
) -> Vec<DisposalFlow> {
    sold.values()
        .map(|d| DisposalFlow {
            entity: d.entity.clone(),
            date: d.date,
            last_month: d.last_month,
            proceeds: shown(minor, d.proceeds),
            cash_disposed: shown(minor, cash_disposed.get(&d.entity).copied().unwrap_or_default()),
            gain: shown(minor, d.gain + d.reserve_recycled),
        })
        .collect()
}

/// The disposal line must be the proceeds less the cash disposed of (IAS 7.40-42):
/// anything else on it (a profit or loss elimination about the subsidiary other than the
/// gain, proceeds booked at another figure than the sale's row) is named.
fn check_disposals(
    disposals: &[DisposalFlow],
    on_line: &BTreeMap<String, Decimal>,
    minor: u32,
    problems: &mut Vec<String>,
) {
    let shown_line = shown(minor, -on_line.get(DISPOSALS).copied().unwrap_or_default());
    let expected = shown(minor, disposals.iter().map(|d| d.proceeds - d.cash_disposed).sum());
    if shown_line != expected {
        let each: Vec<String> = disposals
            .iter()
            .map(|d| format!("{} {} - {}", d.entity, money::plain(d.proceeds), money::plain(d.cash_disposed)))
            .collect();
        problems.push(format!(
            "the disposals of subsidiaries come to {} but the proceeds less the cash disposed of are {} ({})",
            money::plain(shown_line),
            money::plain(expected),
            if each.is_empty() { "none in the view".to_string() } else { each.join(", ") }
        ));
    }
}

/// The line of the transactions with the NCI must be the consideration of the changes in
/// the view (IAS 7.42A): anything else on it (another flow on the investment, an
/// impairment of the subsidiary's goodwill in the view) is named, never shown as cash.
fn check_nci_transactions(
    stakes: &BTreeMap<EntityId, Decimal>,
    on_line: &BTreeMap<String, Decimal>,
    minor: u32,
    problems: &mut Vec<String>,
) {
    let shown_line = shown(minor, -on_line.get(NCI_TRANSACTIONS).copied().unwrap_or_default());
    let consideration = shown(minor, stakes.values().copied().sum());
    if shown_line != consideration {
        let who: Vec<String> = stakes.keys().map(|e| e.to_string()).collect();
        problems.push(format!(
            "the transactions with the NCI come to {} but the consideration of the changes in stake in the view ({}) is {}",
            money::plain(shown_line),
            if who.is_empty() { "none".to_string() } else { who.join(", ") },
            money::plain(consideration)
        ));
    }
}

/// The subsidiaries acquired in the view: (consideration paid, cash acquired) each.
fn acquisitions(
    by: BTreeMap<EntityId, (Decimal, Decimal)>,
    start: &BTreeMap<EntityId, Period>,
    first: Period,
    minor: u32,
) -> Vec<Acquisition> {
    by.into_iter()
        .map(|(entity, (paid, cash))| Acquisition {
            period: start.get(&entity).copied().unwrap_or(first),
            entity,
            consideration: shown(minor, paid),
            cash_acquired: shown(minor, cash),
        })
        .collect()
}

/// An amount as the statement shows it: at the presentation currency's minor unit,
/// without a signed zero.
fn shown(minor: u32, x: Decimal) -> Decimal {
    let mut y = money::unsigned_zero(x);
    y.rescale(minor);
    y
}

/// The sum of the components on lines of the exchange section (and the exchange
/// differences themselves).
fn exchange_components(on_line: &BTreeMap<String, Decimal>, lines: &[LineDef]) -> Decimal {
    let mut ids: BTreeSet<&str> =
        lines.iter().filter(|l| l.section == Section::Exchange).map(|l| l.line.as_str()).collect();
    ids.insert(Section::Exchange.as_str());
    ids.iter().filter_map(|l| on_line.get(*l)).copied().sum()
}

/// Puts a flow on the line of its account.
#[allow(clippy::too_many_arguments)]
fn route(
    chart: &BTreeMap<&GroupAccount, &AccountDef>,
    class: &BTreeMap<&GroupAccount, &LineDef>,
    nci_line: Option<&str>,
    root: &EntityId,
    e: &EntityId,
    a: &GroupAccount,
    x: Decimal,
    add: &mut impl FnMut(&str, Decimal),
    unclassified: &mut BTreeMap<GroupAccount, Decimal>,
) {
    if x.is_zero() {
        return;
    }
    let Some(def) = class.get(a) else {
        *unclassified.entry(a.clone()).or_default() += x;
        add(UNCLASSIFIED, x);
        return;
    };
    let acct = chart.get(a);
    let pl = acct.is_some_and(|d| d.statement == Statement::ProfitOrLoss);
    let equity = acct.is_some_and(|d| d.class == AccountClass::Equity);
    match (&def.against, def.section) {
        (Some(against), _) if pl => {
            // A non-cash item: in profit before tax, added back, taken from its other side.
            add(PROFIT_BEFORE_TAX, x);
            add(&def.line, -x);
            add(against, x);
        }
        (_, Section::Exchange) => add(Section::Exchange.as_str(), x),
        _ if equity && e != root && nci_line.is_some() => add(nci_line.unwrap_or(&def.line), x),
        _ => add(&def.line, x),
    }
}

/// Entities with a contribution in a close.
fn contributing(c: &Close) -> PolarsResult<BTreeSet<EntityId>> {
    Ok(column_strings(&c.contributions, "entity")?.into_iter().flatten().map(EntityId::new).collect())
}

/// Closing minus opening contribution per (entity, account, counterparty).
fn contribution_movements(opening: &Close, closing: &Close) -> PolarsResult<BTreeMap<Key, Decimal>> {
    let mut out: BTreeMap<Key, Decimal> = BTreeMap::new();
    for (c, sign) in [(closing, Decimal::ONE), (opening, Decimal::NEGATIVE_ONE)] {
        let e = column_strings(&c.contributions, "entity")?;
        let a = column_strings(&c.contributions, "group_account")?;
        let cp = column_strings(&c.contributions, "counterparty")?;
        let v = column_decimals(c.contributions.column("amount")?)?;
        for i in 0..c.contributions.height() {
            let (Some(e), Some(a)) = (&e[i], &a[i]) else { continue };
            *out.entry((EntityId::new(e), GroupAccount::new(a), cp[i].clone().map(EntityId::new))).or_default() +=
                sign * v[i].unwrap_or_default();
        }
    }
    Ok(out)
}

/// The fx and acquired parts of a contribution's movement `d` whose translated parts are
/// `p`, at the entity's share `k`; a full contribution that does not equal its parts is a
/// problem of this module, named in the proof.
fn split_movement(
    key: &Key,
    d: Decimal,
    p: Parts,
    k: Decimal,
    (minor, mode): (u32, RoundingMode),
    problems: &mut Vec<String>,
) -> (Decimal, Decimal) {
    let (e, a, _) = key;
    if k == Decimal::ONE {
        // A full contribution is the entity's translated balance: its movement must be
        // exactly the parts, or this module has missed something.
        if d != p.translated + p.acquired {
            problems.push(format!(
                "{e} {a}: contribution moved {} but translated movement {} + balance acquired {} = {}",
                money::plain(d),
                money::plain(p.translated),
                money::plain(p.acquired),
                money::plain(p.translated + p.acquired)
            ));
        }
        (p.translated - p.flow, p.acquired)
    } else {
        // Proportionate (IFRS 11.20): the share of each part, the flow taking the
        // rounding so that the parts still add up to the contribution's movement.
        (money::round((p.translated - p.flow) * k, minor, mode), money::round(p.acquired * k, minor, mode))
    }
}

/// The journal's movements between the closes, each with the fixed line it belongs on
/// (`None`: the line of its account).
fn journal_lines(
    opening: &Close,
    closing: &Close,
    (acquired, stakes, sold): (&BTreeSet<EntityId>, &BTreeMap<EntityId, Decimal>, &BTreeMap<EntityId, Disposal>),
    chart: &BTreeMap<&GroupAccount, &AccountDef>,
    class: &BTreeMap<&GroupAccount, &LineDef>,
    problems: &mut Vec<String>,
) -> Vec<(Option<&'static str>, EntityId, GroupAccount, Decimal)> {
    let mut out = Vec::new();
    for ((treatment, e, a), x) in journal_movements(opening, closing, acquired, stakes, sold, chart) {
        let pl = chart.get(&a).is_some_and(|d| d.statement == Statement::ProfitOrLoss);
        let cash = class.get(&a).is_some_and(|d| d.section == Section::Cash);
        let own = match treatment {
            // A sold subsidiary's profit or loss (the gain included) stays in profit
            // before tax by account; its cash derecognised is the cash disposed of.
            Treatment::Disposal if pl => None,
            Treatment::Disposal if cash => Some(CASH_DISPOSED),
            Treatment::Disposal => Some(DISPOSALS),
            Treatment::Acquisition => Some(ACQUISITIONS),
            Treatment::StepGain if pl => {
                out.push((Some(REMEASUREMENT), e.clone(), a.clone(), -x));
                out.push((Some(ACQUISITIONS), e.clone(), a.clone(), x));
                Some(PROFIT_BEFORE_TAX)
            }
            Treatment::StepGain => Some(ACQUISITIONS),
            // The profit or loss part stays in profit before tax; the rest of the entry,
            // which is its non-cash other side, is added back on a line of its own.
            Treatment::Goodwill | Treatment::EquityMethod | Treatment::FairValue | Treatment::NciTransaction if pl => {
                Some(PROFIT_BEFORE_TAX)
            }
            Treatment::Goodwill => Some(GOODWILL_IMPAIRMENT),
            Treatment::FairValue | Treatment::FairValueTax => Some(FAIR_VALUE_DEPRECIATION),
            Treatment::EquityMethod => Some(SHARE_OF_ASSOCIATES),
            Treatment::NciTransaction => Some(NCI_TRANSACTIONS),
            Treatment::NciShare => Some(NCI_ENTRY),
            Treatment::ByAccount => None,
        };
        if own.is_none() && cash {
            problems.push(format!("an elimination entry moves cash account {a} of {e}: {}", money::plain(x)));
        }
        out.push((own, e, a, x));
    }
    out
}

/// The journal's movement between the closes by treatment, entity and account.
fn journal_movements(
    opening: &Close,
    closing: &Close,
    acquired: &BTreeSet<EntityId>,
    stakes: &BTreeMap<EntityId, Decimal>,
    sold: &BTreeMap<EntityId, Disposal>,
    chart: &BTreeMap<&GroupAccount, &AccountDef>,
) -> BTreeMap<(Treatment, EntityId, GroupAccount), Decimal> {
    let flow = |a: &GroupAccount| chart.get(a).is_some_and(|d| d.statement != Statement::BalanceSheet);
    let mut out: BTreeMap<(Treatment, EntityId, GroupAccount), Decimal> = BTreeMap::new();
    for (c, sign) in [(closing, Decimal::ONE), (opening, Decimal::NEGATIVE_ONE)] {
        for entry in &c.journal {
            let new_subsidiary = entry.entities.iter().any(|e| acquired.contains(e));
            let stake_changed = entry.entities.iter().any(|e| stakes.contains_key(e));
            let treatment = match entry.rule {
                EliminationRule::StepAcquisition if new_subsidiary => Treatment::StepGain,
                EliminationRule::InvestmentAndGoodwill | EliminationRule::PreAcquisitionResults if new_subsidiary => {
                    Treatment::Acquisition
                }
                // The change moves the investment, the NCI at acquisition and the
                // goodwill the investment entry measures; `change_in_stake` puts them
                // right: together they are the transaction with the NCI.
                EliminationRule::InvestmentAndGoodwill | EliminationRule::ChangeInStake if stake_changed => {
                    Treatment::NciTransaction
                }
                EliminationRule::InvestmentAndGoodwill => Treatment::Goodwill,
                EliminationRule::FairValueDepreciation => Treatment::FairValue,
                EliminationRule::FairValueDeferredTax => Treatment::FairValueTax,
                EliminationRule::EquityMethod => Treatment::EquityMethod,
                EliminationRule::NonControllingInterest => Treatment::NciShare,
                _ => Treatment::ByAccount,
            };
            // A pair of balances with a subsidiary sold in the view, eliminated before the
            // sale and not after (`loss_of_control::pairs`): its lines and difference
            // move by account, as they did in the months before, so that the months add
            // up to the year (the subsidiary's side of it leaves in the sale's entry).
            let balances_with_sold = entry.rule == EliminationRule::Intercompany
                && entry.entities.iter().any(|e| sold.contains_key(e))
                && entry.lines.iter().all(|l| l.counterparty.is_none() || !flow(&l.account));
            for l in &entry.lines {
                // A line about a subsidiary sold in the view (its own, or its holder's
                // naming it) is part of the disposal, whatever the entry; but for its
                // pairs of balances (above) and its intragroup dividends of the months
                // consolidated, which stay eliminated by account like any other (the
                // payer's retained earnings, where its own movement is, and the
                // receiver's income).
                let about_sold = entry.rule != EliminationRule::IntragroupDividend
                    && !balances_with_sold
                    && (sold.contains_key(&l.entity) || l.counterparty.as_ref().is_some_and(|c| sold.contains_key(c)));
                let treatment = if about_sold { Treatment::Disposal } else { treatment };
                *out.entry((treatment, l.entity.clone(), l.account.clone())).or_default() += sign * l.amount;
            }
        }
    }
    out.retain(|_, v| !v.is_zero());
    out
}

/// Per (entity, account, counterparty) of the entities consolidated at the closing: the
/// translated movement and the flows of the months from `start` to `last`, and, for the
/// entities in `acquired`, the translated balance at the end of the month before `start`.
fn translated_parts(
    ds: &Dataset,
    t: &Translated,
    (start, end): (&BTreeMap<EntityId, Period>, &BTreeMap<EntityId, Period>),
    acquired: &BTreeSet<EntityId>,
    last: Period,
) -> PolarsResult<BTreeMap<Key, Parts>> {
    let minor = t.minor as usize;
    let mode = ds.settings.policies.rounding;
    let members = DataFrame::new(
        start.len(),
        vec![
            Column::new("entity".into(), start.keys().map(|e| e.to_string()).collect::<Vec<_>>()),
            Column::new("start_index".into(), start.values().map(|p| period_index(*p)).collect::<Vec<_>>()),
            Column::new("acquired".into(), start.keys().map(|e| acquired.contains(e)).collect::<Vec<_>>()),
            // A subsidiary sold counts to its last month end consolidated.
            Column::new(
                "end_index".into(),
                start.keys().map(|e| period_index(end.get(e).copied().unwrap_or(last))).collect::<Vec<_>>(),
            ),
            Column::new(
                "hyper_index".into(),
                start
                    .keys()
                    .map(|e| ds.entity(e).and_then(|x| x.hyperinflationary_from).map(period_index))
                    .collect::<Vec<_>>(),
            ),
        ],
    )?;
    let rates = {
        let r = &ds.rates;
        DataFrame::new(
            r.len(),
            vec![
                Column::new("currency".into(), r.iter().map(|x| x.currency.code().to_string()).collect::<Vec<_>>()),
                Column::new("period_index".into(), r.iter().map(|x| period_index(x.period)).collect::<Vec<_>>()),
                Column::new("rate_average".into(), r.iter().map(|x| x.average.value.to_string()).collect::<Vec<_>>())
                    .strict_cast(&DataType::Decimal(38, RATE_SCALE))?,
                Column::new("quote_average".into(), r.iter().map(|x| x.average.quote.as_str()).collect::<Vec<_>>()),
            ],
        )?
    };
    let zero = decimal_lit(Decimal::ZERO, crate::money::AMOUNT_SCALE);
    let p_last = period_index(last);
    let base = t
        .lines
        .clone()
        .lazy()
        .join(members.lazy(), [col("entity")], [col("entity")], JoinArgs::new(JoinType::Inner))
        .filter(col("period_index").lt_eq(lit(p_last)).and(col("period_index").lt_eq(col("end_index"))));
    // The view's months: the flow of a closing-basis row is its local movement at the
    // month's average (IAS 7.25-27), of a hyperinflationary entity's row at the closing
    // rate (IAS 21.42); every other row is a flow as translated.
    let hyper = col("hyper_index").is_not_null().and(col("period_index").gt_eq(col("hyper_index")));
    let view = base
        .clone()
        .filter(col("period_index").gt_eq(col("start_index")))
        .join(
            rates.lazy(),
            [col("currency"), col("period_index")],
            [col("currency"), col("period_index")],
            JoinArgs::new(JoinType::Left),
        )
        .with_columns([
            when(hyper.clone()).then(col("rate")).otherwise(col("rate_average")).alias("rate_flow"),
            when(hyper).then(col("quote")).otherwise(col("quote_average")).alias("quote_flow"),
            col("rate_kind").eq(lit("closing")).and(col("amount_local").neq(zero)).alias("at_flow_rate"),
        ]);
    let multiply = view
        .clone()
        .filter(col("at_flow_rate").and(col("quote_flow").eq(lit(Quote::PresentationPerUnit.as_str()))))
        .with_column(money::translate_multiply(col("amount_local"), col("rate_flow"), minor, mode).alias("flow"));
    let divide = view
        .clone()
        .filter(col("at_flow_rate").and(col("quote_flow").eq(lit(Quote::UnitsPerPresentation.as_str()))))
        .with_column(money::translate_divide(col("amount_local"), col("rate_flow"), minor, mode).alias("flow"));
    let as_translated = view.filter(col("at_flow_rate").not().or(col("quote_flow").is_null())).with_column(
        // A closing-rate row without a local movement has no flow: its whole
        // translated movement is exchange difference.
        when(col("rate_kind").eq(lit("closing")))
            .then(decimal_lit(Decimal::ZERO, minor))
            .otherwise(col("amount_presentation"))
            .strict_cast(DataType::Decimal(38, minor))
            .alias("flow"),
    );
    let key = [col("entity"), col("group_account"), col("counterparty")];
    let view = concat([multiply, divide, as_translated], UnionArgs::default())?
        .group_by(key.clone())
        .agg([col("amount_presentation").sum(), col("flow").sum()])
        .collect()?;
    let before = base
        .filter(col("acquired").and(col("period_index").eq(col("start_index") - lit(1))))
        .group_by(key)
        .agg([col("balance_presentation").sum()])
        .collect()?;
    let mut out: BTreeMap<Key, Parts> = BTreeMap::new();
    let keys = |df: &DataFrame| -> PolarsResult<Vec<Option<Key>>> {
        let e = column_strings(df, "entity")?;
        let a = column_strings(df, "group_account")?;
        let c = column_strings(df, "counterparty")?;
        Ok((0..df.height())
            .map(|i| match (&e[i], &a[i]) {
                (Some(e), Some(a)) => Some((EntityId::new(e), GroupAccount::new(a), c[i].clone().map(EntityId::new))),
                _ => None,
            })
            .collect())
    };
    let tp = column_decimals(view.column("amount_presentation")?)?;
    let fl = column_decimals(view.column("flow")?)?;
    for (i, k) in keys(&view)?.into_iter().enumerate() {
        let Some(k) = k else { continue };
        let slot = out.entry(k).or_default();
        slot.translated += tp[i].unwrap_or_default();
        slot.flow += fl[i].unwrap_or_default();
    }
    let bp = column_decimals(before.column("balance_presentation")?)?;
    for (i, k) in keys(&before)?.into_iter().enumerate() {
        let Some(k) = k else { continue };
        out.entry(k).or_default().acquired += bp[i].unwrap_or_default();
    }
    Ok(out)
}

#[cfg(test)]
mod tests {
    use super::*;

    fn account(id: &str, statement: Statement, class: AccountClass) -> AccountDef {
        AccountDef {
            account: GroupAccount::new(id),
            name: id.into(),
            statement,
            class,
            basis: Basis::Closing,
            ic_kind: None,
            non_current: false,
            reserve: None,
            monetary: None,
            source: Source::file("entities/accounts.csv"),
        }
    }

    fn def(id: &str, section: Section, line: &str, against: Option<&str>) -> LineDef {
        LineDef {
            account: GroupAccount::new(id),
            section,
            line: line.into(),
            label: line.into(),
            against: against.map(String::from),
            source: Source::file("entities/cash_flow_lines.csv"),
        }
    }

    /// Where `route` puts a movement of 10 (debit) by `entity` on `account`.
    fn routed(entity: &str, moved: &str) -> (BTreeMap<String, Decimal>, BTreeMap<GroupAccount, Decimal>) {
        let chart_defs = [
            account("1000", Statement::BalanceSheet, AccountClass::Asset),
            account("3200", Statement::BalanceSheet, AccountClass::Equity),
            account("3900", Statement::BalanceSheet, AccountClass::Equity),
            account("6100", Statement::ProfitOrLoss, AccountClass::Expense),
            account("9000", Statement::Oci, AccountClass::Income),
            account("4000", Statement::ProfitOrLoss, AccountClass::Income),
        ];
        let lines = [
            def("1000", Section::Investing, "ppe", None),
            def("3200", Section::Financing, "dividends", None),
            def("3900", Section::Financing, "dividends_nci", None),
            def("6100", Section::Operating, "depreciation", Some("ppe")),
            def("9000", Section::Exchange, "translation", None),
        ];
        let chart: BTreeMap<&GroupAccount, &AccountDef> = chart_defs.iter().map(|a| (&a.account, a)).collect();
        let class: BTreeMap<&GroupAccount, &LineDef> = lines.iter().map(|l| (&l.account, l)).collect();
        let mut on_line: BTreeMap<String, Decimal> = BTreeMap::new();
        let mut unclassified = BTreeMap::new();
        route(
            &chart,
            &class,
            Some("dividends_nci"),
            &EntityId::new("P"),
            &EntityId::new(entity),
            &GroupAccount::new(moved),
            Decimal::TEN,
            &mut |l: &str, x: Decimal| *on_line.entry(l.to_string()).or_default() += x,
            &mut unclassified,
        );
        on_line.retain(|_, v| !v.is_zero());
        (on_line, unclassified)
    }

    fn m(pairs: &[(&str, i64)]) -> BTreeMap<String, Decimal> {
        pairs.iter().map(|(k, v)| (k.to_string(), Decimal::from(*v))).collect()
    }

    /// A non-cash expense stays in profit before tax, is added back on its line and taken
    /// from the line of its other side: the three components sum to the movement.
    #[test]
    fn a_non_cash_item_is_added_back_and_taken_from_its_other_side() {
        let (on_line, _) = routed("P", "6100");
        assert_eq!(on_line, m(&[(PROFIT_BEFORE_TAX, 10), ("depreciation", -10), ("ppe", 10)]));
    }

    /// Equity of a subsidiary goes to the NCI line, of the parent to its own line; the
    /// translation difference to the exchange line; an account without a row is reported.
    #[test]
    fn equity_of_subsidiaries_to_the_nci_line_translation_to_exchange() {
        assert_eq!(routed("S", "3200").0, m(&[("dividends_nci", 10)]));
        assert_eq!(routed("P", "3200").0, m(&[("dividends", 10)]));
        assert_eq!(routed("S", "9000").0, m(&[("exchange", 10)]));
        let (on_line, unclassified) = routed("P", "4000");
        assert_eq!(on_line, m(&[(UNCLASSIFIED, 10)]));
        assert_eq!(unclassified.get(&GroupAccount::new("4000")), Some(&Decimal::TEN));
    }
}

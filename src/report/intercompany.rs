//! Rendering of intercompany matching: every pair with both sides, the difference, its
//! status and the reason in words; who must act; the totals and the proof that the pairs
//! reconcile to the intercompany lines of the trial balances. Table, JSON or CSV.

use rust_decimal::Decimal;
use serde::Serialize;

use crate::findings::{Findings, Severity};
use crate::intercompany::{Absence, DocumentRef, Evidence, Matching, Pair, Reason, Side, Status};
use crate::model::Currency;
use crate::money::format_amount;
use crate::proof::Check;

use super::{CAUTION, CsvOut, Format, text_table, to_json};

#[derive(Serialize)]
struct Tolerance {
    absolute: Decimal,
    relative: Decimal,
    both_must_hold: bool,
    timing_window_days: u32,
}

#[derive(Serialize)]
struct DocumentOut {
    entity: String,
    reference: String,
    date: String,
    amount: Decimal,
    currency: String,
    days_before_end: i64,
    in_window: bool,
}

#[derive(Serialize)]
struct PairOut {
    entity: String,
    counterparty: String,
    kind: String,
    measure: &'static str,
    status: &'static str,
    reason: Option<&'static str>,
    /// Presentation currency.
    amount_entity: Option<Decimal>,
    amount_counterparty: Option<Decimal>,
    difference: Option<Decimal>,
    /// The transaction currency both sides are in, when they agree on one.
    txn_currency: Option<String>,
    amount_entity_txn: Option<Decimal>,
    amount_counterparty_txn: Option<Decimal>,
    difference_txn: Option<Decimal>,
    /// The entity whose figures the pair waits for.
    awaiting: Option<String>,
    /// The account the close posts the difference to (any pair of consolidated entities
    /// with a difference).
    posted_to: Option<String>,
    /// The entity whose side is measured from its dividends declared (balance-sheet
    /// credits of the kind) rather than from profit-or-loss lines.
    derived_side: Option<String>,
    explanation: String,
    unpaired_documents: Vec<DocumentOut>,
}

#[derive(Serialize)]
struct EntityOut {
    entity: String,
    figures_used: bool,
    absence: Option<String>,
    must_act: bool,
    pairs: usize,
    matched: usize,
    within_tolerance: usize,
    explained: usize,
    open: usize,
    open_difference: Decimal,
    awaited: usize,
}

#[derive(Serialize)]
struct TotalsOut {
    pairs: usize,
    matched: usize,
    within_tolerance: usize,
    explained: usize,
    open: usize,
    awaiting: usize,
    open_difference: Decimal,
    to_difference_account: Decimal,
    difference_account: String,
}

#[derive(Serialize)]
struct NotMatchedOut {
    kind: String,
    measure: &'static str,
    lines: u32,
    amount: Decimal,
    why: &'static str,
}

#[derive(Serialize)]
struct Summary {
    entities: Vec<EntityOut>,
    totals: TotalsOut,
    not_matched: Vec<NotMatchedOut>,
}

#[derive(Serialize)]
struct Proof<'a> {
    tied: bool,
    checks: &'a [Check],
}

#[derive(Serialize)]
struct Report<'a> {
    period: String,
    currency: &'static str,
    tolerance: Tolerance,
    pairs: Vec<PairOut>,
    summary: Summary,
    proof: Proof<'a>,
    blocking_findings: usize,
    caution: &'static str,
}

const NOT_MATCHED_WHY: &str =
    "the chart has no counterpart account of this kind (an investment is eliminated against the investee's equity)";

/// An amount at its currency's minor unit (exact: amounts are sums of amounts that have
/// at most that many decimals).
fn at_minor(d: Decimal, c: Option<Currency>) -> Decimal {
    let mut d = d;
    if let Some(c) = c {
        d.rescale(c.minor_unit());
    }
    d
}

pub fn absence_text(entity: &str, a: &Absence) -> String {
    match a {
        Absence::NoFolder => format!("{entity} has not delivered: there is no folder entities/{entity}/"),
        Absence::MissingMonths(ps) => {
            let list: Vec<String> = ps.iter().map(|p| p.to_string()).collect();
            format!("{entity} has no trial balance yet for {}", list.join(", "))
        }
        Absence::BlockingFindings(n) => {
            format!("{entity}'s delivery has {n} blocking finding(s) and is set aside (tessera check lists them)")
        }
        Absence::RateMissing { currency, period } => {
            format!("no {currency} rate for {period} in rates/monthly.csv, so {entity} cannot be translated")
        }
    }
}

fn doc_text(d: &DocumentRef, minor: u32) -> String {
    format!(
        "{} dated {} ({} day(s) before the period end, {} {}) is on {}'s side only",
        d.reference,
        d.date,
        d.days_before_end,
        d.currency,
        format_amount(d.amount, minor),
        d.entity
    )
}

fn explanation(p: &Pair, m: &Matching) -> String {
    let minor = m.minor;
    let pres = m.currency.code();
    let txn_minor = p.txn_currency.map(|c| c.minor_unit()).unwrap_or(minor);
    let txn = p.txn_currency.map(|c| c.code()).unwrap_or(pres);
    let mut text = match (p.status, p.reason) {
        (Status::Matched, _) => "agree".to_string(),
        (Status::Awaiting, _) => match &p.evidence {
            Evidence::Awaiting { entity, absence } => absence_text(entity.as_str(), absence),
            _ => "awaiting the counterparty's figures".to_string(),
        },
        (_, Some(Reason::Fx)) => format!(
            "agree in {txn} ({} against {}); differ by {} {pres} once translated: booked or translated at different rates",
            format_amount(p.entity_side.as_ref().map(|s| s.amount_txn).unwrap_or_default(), txn_minor),
            format_amount(p.counterparty_side.as_ref().map(|s| s.amount_txn).unwrap_or_default(), txn_minor),
            format_amount(p.difference.unwrap_or_default(), minor)
        ),
        (_, Some(Reason::Timing)) => match &p.evidence {
            Evidence::Documents { unpaired, .. } => {
                let docs: Vec<String> =
                    unpaired.iter().filter(|d| d.in_window).map(|d| doc_text(d, txn_minor)).collect();
                format!("timing: {}", docs.join("; "))
            }
            Evidence::Movement { entity } => format!(
                "timing (heuristic, no document detail): the difference equals {entity}'s movement of {}, while the other side did not move",
                m.period
            ),
            _ => "timing".to_string(),
        },
        _ => {
            let chase = if p.status == Status::Open { ": to chase" } else { "" };
            let mut t = match p.difference_txn {
                Some(d) => {
                    format!("difference of {txn} {} not explained by FX or timing{chase}", format_amount(d, txn_minor))
                }
                None => format!(
                    "the sides are in different transaction currencies; difference of {pres} {} not explained{chase}",
                    format_amount(p.difference.unwrap_or_default(), minor)
                ),
            };
            if let Evidence::Documents { unpaired, differing, .. } = &p.evidence {
                for (a, b) in differing {
                    t.push_str(&format!(
                        "; document {}: {} {} at {} against {} at {}",
                        a.reference,
                        a.currency,
                        format_amount(a.amount, txn_minor),
                        a.entity,
                        format_amount(b.amount, txn_minor),
                        b.entity
                    ));
                }
                for d in unpaired {
                    t.push_str(&format!("; {}", doc_text(d, txn_minor)));
                }
            }
            t
        }
    };
    if p.status == Status::WithinTolerance {
        text = format!("within tolerance, posted to {}: {text}", m.difference_account);
    } else if p.status == Status::Explained && p.reason == Some(Reason::Fx) {
        text = format!("{text}; posted to {} (IAS 21.45)", m.difference_account);
    } else if p.status == Status::Explained {
        text = format!("{text}; posted to {} by the close", m.difference_account);
    } else if p.status == Status::Open {
        text = format!(
            "{text}; the close posts it to {} and a final close needs it accepted in entities/{}",
            m.difference_account,
            crate::intercompany::ACCEPTED_FILE
        );
    }
    if let Evidence::Documents { greedy: true, .. } = &p.evidence {
        text.push_str(" (documents beyond the matching limit were paired greedily)");
    }
    text
}

fn pres(d: Decimal, m: &Matching) -> Decimal {
    at_minor(d, Some(m.currency))
}

fn txn_of(s: &Option<Side>, p: &Pair) -> Option<Decimal> {
    p.txn_currency.map(|c| at_minor(s.as_ref().map(|x| x.amount_txn).unwrap_or_default(), Some(c)))
}

fn pair_out(p: &Pair, m: &Matching) -> PairOut {
    let awaiting = p.awaiting().map(|e| e.to_string());
    let posted = crate::intercompany::posts_difference(p, m.options.consolidated.as_ref());
    let unpaired = match &p.evidence {
        Evidence::Documents { unpaired, .. } => unpaired
            .iter()
            .map(|d| DocumentOut {
                entity: d.entity.to_string(),
                reference: d.reference.clone(),
                date: d.date.to_string(),
                amount: at_minor(d.amount, Currency::parse(&d.currency)),
                currency: d.currency.clone(),
                days_before_end: d.days_before_end,
                in_window: d.in_window,
            })
            .collect(),
        _ => Vec::new(),
    };
    PairOut {
        entity: p.entity.to_string(),
        counterparty: p.counterparty.to_string(),
        kind: p.kind.clone(),
        measure: p.measure.as_str(),
        status: p.status.as_str(),
        reason: p.reason.map(|r| r.as_str()),
        amount_entity: Some(pres(p.amount_entity(), m)),
        amount_counterparty: if awaiting.is_some() { None } else { Some(pres(p.amount_counterparty(), m)) },
        difference: p.difference.map(|d| pres(d, m)),
        txn_currency: p.txn_currency.map(|c| c.code().to_string()),
        amount_entity_txn: txn_of(&p.entity_side, p),
        amount_counterparty_txn: txn_of(&p.counterparty_side, p),
        difference_txn: p.difference_txn.map(|d| at_minor(d, p.txn_currency)),
        awaiting,
        posted_to: posted.then(|| m.difference_account.to_string()),
        derived_side: if p.counterparty_side.as_ref().is_some_and(|s| s.derived) {
            Some(p.counterparty.to_string())
        } else if p.entity_side.as_ref().is_some_and(|s| s.derived) {
            Some(p.entity.to_string())
        } else {
            None
        },
        explanation: explanation(p, m),
        unpaired_documents: unpaired,
    }
}

fn summary(m: &Matching) -> Summary {
    let entities = m
        .summary
        .iter()
        .map(|s| EntityOut {
            entity: s.entity.to_string(),
            figures_used: s.absence.is_none(),
            absence: s.absence.as_ref().map(|a| absence_text(s.entity.as_str(), a)),
            must_act: s.must_act(),
            pairs: s.counts.pairs,
            matched: s.counts.matched,
            within_tolerance: s.counts.within_tolerance,
            explained: s.counts.explained,
            open: s.counts.open,
            open_difference: pres(s.counts.open_difference, m),
            awaited: s.awaited,
        })
        .collect();
    let t = &m.totals;
    Summary {
        entities,
        totals: TotalsOut {
            pairs: t.counts.pairs,
            matched: t.counts.matched,
            within_tolerance: t.counts.within_tolerance,
            explained: t.counts.explained,
            open: t.counts.open,
            awaiting: t.awaiting,
            open_difference: pres(t.counts.open_difference, m),
            to_difference_account: pres(t.to_difference_account, m),
            difference_account: m.difference_account.to_string(),
        },
        not_matched: m
            .not_matched
            .iter()
            .map(|x| NotMatchedOut {
                kind: x.kind.clone(),
                measure: x.measure.as_str(),
                lines: x.lines,
                amount: pres(x.amount, m),
                why: NOT_MATCHED_WHY,
            })
            .collect(),
    }
}

pub fn render(m: &Matching, findings: &Findings, format: Format) -> String {
    let pairs: Vec<PairOut> = m.pairs.iter().map(|p| pair_out(p, m)).collect();
    let report = Report {
        period: m.period.to_string(),
        currency: m.currency.code(),
        tolerance: Tolerance {
            absolute: m.options.tolerance_absolute,
            relative: m.options.tolerance_relative,
            both_must_hold: true,
            timing_window_days: m.options.timing_window_days,
        },
        pairs,
        summary: summary(m),
        proof: Proof { tied: crate::proof::tied(&m.proof), checks: &m.proof },
        blocking_findings: findings.items().iter().filter(|f| f.severity >= Severity::Blocking).count(),
        caution: CAUTION,
    };
    match format {
        Format::Json => to_json(&report),
        Format::Csv => csv(&report),
        Format::Table => table(&report, m),
    }
}

fn opt(d: Option<Decimal>) -> String {
    d.map(crate::money::plain).unwrap_or_default()
}

fn csv(r: &Report<'_>) -> String {
    let mut out = CsvOut::new(&[
        "entity",
        "counterparty",
        "kind",
        "measure",
        "status",
        "reason",
        "amount_entity",
        "amount_counterparty",
        "difference",
        "txn_currency",
        "amount_entity_txn",
        "amount_counterparty_txn",
        "difference_txn",
        "awaiting",
        "posted_to",
        "explanation",
    ]);
    for p in &r.pairs {
        out.row(&[
            p.entity.clone(),
            p.counterparty.clone(),
            p.kind.clone(),
            p.measure.to_string(),
            p.status.to_string(),
            p.reason.unwrap_or_default().to_string(),
            opt(p.amount_entity),
            opt(p.amount_counterparty),
            opt(p.difference),
            p.txn_currency.clone().unwrap_or_default(),
            opt(p.amount_entity_txn),
            opt(p.amount_counterparty_txn),
            opt(p.difference_txn),
            p.awaiting.clone().unwrap_or_default(),
            p.posted_to.clone().unwrap_or_default(),
            p.explanation.clone(),
        ]);
    }
    out.finish()
}

fn table(r: &Report<'_>, m: &Matching) -> String {
    let minor = m.minor;
    let amt = |d: Option<Decimal>| d.map(|d| format_amount(d, minor)).unwrap_or_else(|| "-".to_string());
    let mut out = format!("intercompany matching for {}, amounts in {}\n", r.period, r.currency);
    out.push_str(&format!(
        "tolerance {} {} and {} of the larger side (both must hold); timing window {} days\n\n",
        r.currency,
        format_amount(r.tolerance.absolute, minor),
        r.tolerance.relative.normalize(),
        r.tolerance.timing_window_days
    ));
    let head = [
        "#",
        "entity",
        "counterparty",
        "kind",
        "measure",
        "status",
        "reason",
        "txn",
        "difference txn",
        "entity amount",
        "counterparty amount",
        "difference",
    ];
    let mut rows = Vec::new();
    for (i, (p, pair)) in r.pairs.iter().zip(&m.pairs).enumerate() {
        let txn_minor = pair.txn_currency.map(|c| c.minor_unit()).unwrap_or(minor);
        rows.push(vec![
            (i + 1).to_string(),
            p.entity.clone(),
            p.counterparty.clone(),
            p.kind.clone(),
            if pair.measure == crate::intercompany::Measure::Balance { "balance" } else { "ytd" }.to_string(),
            p.status.to_string(),
            p.reason.unwrap_or("").to_string(),
            p.txn_currency.clone().unwrap_or_else(|| "-".into()),
            p.difference_txn.map(|d| format_amount(d, txn_minor)).unwrap_or_else(|| "-".into()),
            amt(p.amount_entity),
            amt(p.amount_counterparty),
            amt(p.difference),
        ]);
    }
    out.push_str(&text_table(
        &head,
        &rows,
        &[true, false, false, false, false, false, false, false, true, true, true, true],
    ));
    let explained: Vec<String> = r
        .pairs
        .iter()
        .enumerate()
        .filter(|(_, p)| p.status != Status::Matched.as_str())
        .map(|(i, p)| format!("{:>3}. {}/{} {}: {}", i + 1, p.entity, p.counterparty, p.kind, p.explanation))
        .collect();
    if !explained.is_empty() {
        out.push_str("\nwhy\n");
        for l in explained {
            out.push_str(&l);
            out.push('\n');
        }
    }
    let head = ["entity", "open", "open difference", "awaited", "within tol.", "explained", "matched", "figures"];
    let mut rows = Vec::new();
    for e in &r.summary.entities {
        rows.push(vec![
            format!("{}{}", e.entity, if e.must_act { " *" } else { "" }),
            e.open.to_string(),
            format_amount(e.open_difference, minor),
            e.awaited.to_string(),
            e.within_tolerance.to_string(),
            e.explained.to_string(),
            e.matched.to_string(),
            e.absence.clone().unwrap_or_else(|| "used".into()),
        ]);
    }
    out.push_str("\nwho must act (* = open pairs to chase, or figures awaited)\n");
    out.push_str(&text_table(&head, &rows, &[false, true, true, true, true, true, true, false]));
    let t = &r.summary.totals;
    out.push_str(&format!(
        "\n{} pairs: {} matched, {} within tolerance, {} explained, {} open ({} {}), {} awaiting\n",
        t.pairs,
        t.matched,
        t.within_tolerance,
        t.explained,
        t.open,
        r.currency,
        format_amount(t.open_difference, minor),
        t.awaiting
    ));
    out.push_str(&format!(
        "net difference the close posts to {} (every pair of consolidated entities: within tolerance, FX, timing, open): {} {}\n",
        t.difference_account,
        r.currency,
        format_amount(t.to_difference_account, minor)
    ));
    for x in &r.summary.not_matched {
        out.push_str(&format!(
            "not matched: {} ({}), {} line(s), {} {}: {}\n",
            x.kind,
            x.measure,
            x.lines,
            r.currency,
            format_amount(x.amount, minor),
            x.why
        ));
    }
    if r.blocking_findings > 0 {
        out.push_str(&format!(
            "the deliveries have {} blocking finding(s): tessera check lists them\n",
            r.blocking_findings
        ));
    }
    out.push_str(&format!("\nproof: {}\n", if r.proof.tied { "tied" } else { "NOT TIED" }));
    for c in r.proof.checks {
        out.push_str(&format!("  {} {}: {}\n", if c.ok { "ok  " } else { "FAIL" }, c.name, c.detail));
    }
    out.push('\n');
    out.push_str(&super::caution_text());
    out
}

/// The matching as two workbook sheets: every pair with its status, both sides and the
/// difference; then who must act, per entity, with its pairs by status.
pub fn sheets(m: &Matching) -> (super::xlsx::Sheet, super::xlsx::Sheet) {
    use super::xlsx::{Cell, Sheet};
    let amount = |d: Option<Decimal>| d.map(Cell::Amount).unwrap_or(Cell::Empty);
    let mut pairs = Sheet::new("Intercompany");
    pairs.header(&[
        "entity",
        "counterparty",
        "kind",
        "measure",
        "status",
        "reason",
        "amount entity",
        "amount counterparty",
        "difference",
        "awaiting",
        "posted to",
        "explanation",
    ]);
    for p in m.pairs.iter().map(|p| pair_out(p, m)) {
        pairs.row(vec![
            Cell::Text(p.entity),
            Cell::Text(p.counterparty),
            Cell::Text(p.kind),
            Cell::from(p.measure),
            Cell::from(p.status),
            Cell::from(p.reason.unwrap_or_default()),
            amount(p.amount_entity),
            amount(p.amount_counterparty),
            amount(p.difference),
            Cell::Text(p.awaiting.unwrap_or_default()),
            Cell::Text(p.posted_to.unwrap_or_default()),
            Cell::Text(p.explanation),
        ]);
    }
    let mut act = Sheet::new("Who must act");
    act.header(&[
        "entity",
        "must act",
        "pairs",
        "matched",
        "within tolerance",
        "explained",
        "open",
        "open difference",
        "awaited",
        "why its figures are not used",
    ]);
    for e in summary(m).entities {
        let count = |n: usize| Cell::Number(Decimal::from(n));
        act.row(vec![
            Cell::Text(e.entity),
            Cell::from(if e.must_act { "yes" } else { "no" }),
            count(e.pairs),
            count(e.matched),
            count(e.within_tolerance),
            count(e.explained),
            count(e.open),
            Cell::Amount(e.open_difference),
            count(e.awaited),
            Cell::Text(e.absence.unwrap_or_default()),
        ]);
    }
    (pairs, act)
}

/// The pairs by status, in the order a reader acts on them, for the report's summary.
pub fn status_counts(m: &Matching) -> Vec<(&'static str, usize)> {
    let t = summary(m).totals;
    vec![
        ("matched", t.matched),
        ("within tolerance", t.within_tolerance),
        ("explained", t.explained),
        ("open", t.open),
        ("awaiting", t.awaiting),
    ]
}

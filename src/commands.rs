//! The commands as pipelines of named stages. Each function here reads as the chain
//! `load -> map_accounts -> validate -> ...` for its command and decides its exit code:
//! 0 clean, 1 blocking findings (or a failed proof), 3 unreadable input (2, a usage
//! error, is decided by clap and `cli::error_exit_code`).

use std::io::Write;
use std::path::Path;

use crate::Error;
use crate::findings::Findings;
use crate::load::{self, Dataset};
use crate::map_accounts::{Mapped, map_accounts};
use crate::model::Period;
use crate::report::{self, Format};
use crate::validate::{Scope, validate};

/// Exit code for a set of findings.
pub fn exit_code(findings: &Findings) -> i32 {
    if findings.has_unreadable() {
        3
    } else if findings.has_blocking() {
        1
    } else {
        0
    }
}

/// The period to work on: the one asked for, else the latest delivered.
fn pick_period(ds: &Dataset, asked: Option<Period>) -> Result<Period, Error> {
    match asked {
        Some(p) => Ok(p),
        None => ds.periods().last().copied().ok_or_else(|| {
            Error::Usage(
                "no trial balance is delivered yet, so there is no period to default to: pass --period YYYY-MM".into(),
            )
        }),
    }
}

/// A loaded, mapped and validated data folder, with what validation built on its way:
/// the group structure at the period end and the resolved layouts.
pub struct Checked {
    /// The fiscal year of the period: its trial balances and its opening balances.
    pub ds: Dataset,
    /// The whole data folder, every fiscal year it holds (for the prior-year close).
    pub full: Dataset,
    pub scope: Scope,
    pub mapped: Mapped,
    pub structure: crate::structure::GroupStructure,
    pub statements: Vec<crate::layout::ResolvedStatement>,
}

/// Loads, maps and validates: the common front of every command.
pub fn load_checked(data: &Path, period: Option<Period>) -> Result<(Option<Checked>, Findings), Error> {
    let (ds, mut findings) = load::load(data);
    let Some(ds) = ds else {
        findings.sort();
        return Ok((None, findings));
    };
    // With no trial balance to default the period to, a blocking finding (an unreadable
    // entity list, say) is the real problem: it is reported, not replaced by the
    // request for --period.
    let period = match pick_period(&ds, period) {
        Ok(p) => p,
        Err(_) if findings.has_blocking() => {
            findings.sort();
            return Ok((None, findings));
        }
        Err(e) => return Err(e),
    };
    let scope = Scope::new(period, ds.settings.fiscal_year_start);
    // The year closed: its months, and each entity's opening carried from the year
    // before where the folder holds it.
    let full = ds;
    let mut carried = Vec::new();
    let ds = crate::years::year_dataset(&full, scope.fiscal_start, &mut carried)?;
    findings.extend(carried);
    let mapped = map_accounts(&ds, scope.fiscal_start)?;
    let crate::validate::Validated { structure, statements } = validate(&ds, &mapped, scope, &mut findings)?;
    Ok((Some(Checked { ds, full, scope, mapped, structure, statements }), findings))
}

pub fn check(data: &Path, period: Option<Period>, format: Format, out: &mut dyn Write) -> Result<i32, Error> {
    let (loaded, mut findings) = load_checked(data, period)?;
    // What the close's rules would find in the data, listed here too. Not part of
    // `validate`, so that a close still runs past them and shows them with its figures.
    if let Some(c) = &loaded {
        let scope = c.scope;
        findings.extend(crate::close::check::data_findings(
            &c.ds,
            &c.structure,
            &c.mapped,
            scope.period,
            scope.fiscal_start,
        )?);
        findings.extend(plan_findings(c)?);
        // The close's intercompany gate: an open difference that is not accepted blocks
        // the close, so check lists it too (when nothing else stops the translation).
        if !findings.has_blocking() {
            let translated = crate::translate::translate(&c.ds, &c.mapped, scope.fiscal_start, scope.period)?;
            let (gate, _) = intercompany_gate(&c.ds, &translated, &c.structure, scope, &findings)?;
            findings.extend(gate.findings);
        }
        findings.sort();
    }
    let period = loaded.as_ref().map(|c| c.scope.period);
    out.write_all(report::findings::render_check(&findings, period, format).as_bytes())?;
    Ok(exit_code(&findings))
}

/// The findings of every plan of the data folder (`entities/plans/`), as `close --compare` would
/// raise them, so that `check` lists them without closing.
fn plan_findings(c: &Checked) -> Result<Vec<crate::findings::Finding>, Error> {
    let mut f = Vec::new();
    for name in crate::load::plans::plan_names(&c.ds.root, &mut f) {
        let Some(plan) = crate::load::plans::load_plan(&c.ds, &name, &mut f) else { continue };
        // A plan with no month in the fiscal year checked is another year's plan (last
        // year's budget kept in the folder): not this year's to check. `close --compare`
        // with it names every month outside the year.
        if !crate::compare::plans_the_year(&plan, c.scope.fiscal_start)? {
            continue;
        }
        let a = crate::compare::Actuals {
            ds: &c.ds,
            mapped: &c.mapped,
            structure: &c.structure,
            fiscal_start: c.scope.fiscal_start,
            period: c.scope.period,
            base_period: None,
        };
        f.extend(crate::compare::check_plan(&a, &plan)?);
    }
    Ok(f)
}

/// The intercompany gate of a close: matching on the translated deliveries, and which
/// open differences are accepted (their reasons) or block (their findings).
fn intercompany_gate(
    ds: &Dataset,
    translated: &crate::translate::Translated,
    structure: &crate::structure::GroupStructure,
    scope: crate::validate::Scope,
    findings: &Findings,
) -> Result<(crate::intercompany::Gate, crate::intercompany::Matching), Error> {
    let _span = tracing::info_span!("intercompany_gate").entered();
    let deliveries = crate::intercompany::Deliveries::assess(ds, findings, scope)?;
    let mut options = crate::intercompany::Options::from_settings(&ds.settings.intercompany);
    options.consolidated = Some(consolidated(structure));
    let m = crate::intercompany::match_intercompany(ds, translated, scope, &deliveries, &options)?;
    Ok((crate::intercompany::gate(&m, &ds.accepted_differences, scope.period), m))
}

/// Refuses to go on past blocking findings: prints them and returns the exit code.
fn stop_on_findings(
    findings: &Findings,
    out: &mut dyn Write,
    period: Option<Period>,
    format: Format,
) -> Result<Option<i32>, Error> {
    if findings.has_blocking() {
        out.write_all(report::findings::render_check(findings, period, format).as_bytes())?;
        if format == Format::Table {
            out.write_all(b"\nthe deliveries have blocking findings: fix them first (tessera check lists them)\n")?;
        }
        return Ok(Some(exit_code(findings)));
    }
    Ok(None)
}

pub fn translate(
    data: &Path,
    period: Option<Period>,
    entity: Option<crate::model::EntityId>,
    format: Format,
    out: &mut dyn Write,
) -> Result<i32, Error> {
    let (loaded, findings) = load_checked(data, period)?;
    let period = loaded.as_ref().map(|c| c.scope.period);
    if let Some(code) = stop_on_findings(&findings, out, period, format)? {
        return Ok(code);
    }
    let Some(Checked { ds, scope, mapped, structure, .. }) = loaded else { return Ok(exit_code(&findings)) };
    if let Some(e) = &entity
        && ds.entity(e).is_none()
    {
        return Err(Error::Usage(format!("entity {e} is not in entities.csv")));
    }
    // The report reads only the translation: the mapped lines go once it has its
    // movement frame.
    let movements = mapped.movements(scope.fiscal_start, scope.period)?;
    drop(mapped);
    let translated = crate::translate::translate_movements(&ds, movements, scope.fiscal_start, scope.period)?;
    let checks = crate::translate::prove(&translated)?;
    let reserves = crate::translate::reserves_by_operation(&ds, &translated, &structure.immediate_parents())?;
    let text = report::translation::render(
        &translated,
        &reserves,
        ds.settings.policies.ifric16,
        scope.period,
        scope.fiscal_start,
        ds.settings.presentation_currency.code(),
        entity.as_ref(),
        &checks,
        format,
    )?;
    out.write_all(text.as_bytes())?;
    Ok(if crate::proof::tied(&checks) { 0 } else { 1 })
}

pub fn structure(data: &Path, period: Option<Period>, format: Format, out: &mut dyn Write) -> Result<i32, Error> {
    let (loaded, findings) = load_checked(data, period)?;
    let Some(c) = loaded else {
        out.write_all(report::findings::render_check(&findings, None, Format::Table).as_bytes())?;
        return Ok(exit_code(&findings));
    };
    // The structure needs only entities and holdings: findings about them block it,
    // findings about ledgers do not.
    let structural = [
        crate::findings::Rule::EntityOverHeld,
        crate::findings::Rule::StructureUnsolvable,
        crate::findings::Rule::OverrideConflict,
        crate::findings::Rule::OverrideOutsideGroup,
        crate::findings::Rule::ArrangementConflict,
        crate::findings::Rule::LimitExceeded,
        crate::findings::Rule::HoldingInvalid,
    ];
    let blocking: Vec<_> = findings
        .items()
        .iter()
        .filter(|f| structural.contains(&f.rule) && f.severity >= crate::findings::Severity::Blocking)
        .cloned()
        .collect();
    if !blocking.is_empty() {
        let mut only = Findings::default();
        only.extend(blocking);
        out.write_all(report::findings::render_check(&only, Some(c.scope.period), Format::Table).as_bytes())?;
        return Ok(1);
    }
    out.write_all(report::structure::render(&c.structure, &c.ds.entities, c.scope.period, format).as_bytes())?;
    Ok(0)
}

/// Arguments of `tessera rates`.
pub struct RatesArgs {
    pub daily: Vec<std::path::PathBuf>,
    pub base: String,
    pub months: Option<String>,
    pub overrides: Option<std::path::PathBuf>,
    pub currencies: Option<Vec<String>>,
    pub presentation: Option<String>,
    pub out_file: Option<std::path::PathBuf>,
}

fn currency_arg(code: &str, what: &str) -> Result<crate::model::Currency, Error> {
    crate::model::Currency::parse(code.trim())
        .ok_or_else(|| Error::Usage(format!("{what} {code:?} is not an ISO 4217 currency code")))
}

fn months_arg(s: &str) -> Result<Vec<Period>, Error> {
    let bad = || Error::Usage(format!("--months {s:?} is not FIRST..LAST, e.g. 2025-12..2026-12"));
    let (a, b) = s.split_once("..").ok_or_else(bad)?;
    let (a, b): (Period, Period) = (a.parse().map_err(|_| bad())?, b.parse().map_err(|_| bad())?);
    if b < a {
        return Err(bad());
    }
    Ok(a.through(&b))
}

pub fn rates(data: &Path, args: RatesArgs, format: Format, out: &mut dyn Write) -> Result<i32, Error> {
    use crate::load::daily::{DailyOptions, parse_daily, parse_overrides};
    use crate::rates::{DailyInput, RateRequest, derive_rates};
    let _span = tracing::info_span!("rates").entered();
    // The group's settings and entities give the defaults, when the data folder has them.
    let (ds, _) = if data.join("entities").is_dir() { load::load(data) } else { (None, Findings::default()) };
    let base = currency_arg(&args.base, "--base")?;
    let presentation = match (&args.presentation, &ds) {
        (Some(p), _) => currency_arg(p, "--presentation")?,
        (None, Some(ds)) => ds.settings.presentation_currency,
        (None, None) => return Err(Error::Usage("no group settings found: pass --presentation CCY".into())),
    };
    let currencies: Vec<crate::model::Currency> = match (&args.currencies, &ds) {
        (Some(list), _) => list.iter().map(|c| currency_arg(c, "--currencies")).collect::<Result<_, _>>()?,
        (None, Some(ds)) => {
            let mut v: Vec<_> = ds.entities.iter().map(|e| e.currency).collect();
            v.sort();
            v.dedup();
            v
        }
        (None, None) => return Err(Error::Usage("no entities found: pass --currencies USD,JPY,...".into())),
    };
    let fiscal_year_start = ds.as_ref().map(|d| d.settings.fiscal_year_start).unwrap_or(1);
    let months = match (&args.months, &ds) {
        (Some(m), _) => months_arg(m)?,
        (None, Some(ds)) => match ds.periods().last() {
            Some(last) => last.fiscal_year_start(fiscal_year_start).prev().through(last),
            None => return Err(Error::Usage("no trial balance delivered yet: pass --months FIRST..LAST".into())),
        },
        (None, None) => return Err(Error::Usage("pass --months FIRST..LAST".into())),
    };
    let mut findings = Findings::default();
    let mut series = Vec::new();
    for path in &args.daily {
        match load::read_rate_source(path) {
            Ok((text, sha)) => {
                let parsed = parse_daily(&text, &path.to_string_lossy(), &DailyOptions::default());
                findings.extend(parsed.findings.into_iter().map(|f| f.into_finding()));
                series.push((parsed.series, sha));
            }
            Err(f) => findings.push(*f),
        }
    }
    let mut overrides = Vec::new();
    if let Some(path) = &args.overrides {
        match load::read_rate_source(path) {
            Ok((text, _)) => {
                let parsed = parse_overrides(&text, &path.to_string_lossy());
                findings.extend(parsed.findings.into_iter().map(|f| f.into_finding()));
                overrides = parsed.overrides;
            }
            Err(f) => findings.push(*f),
        }
    }
    let inputs: Vec<DailyInput<'_>> = series.iter().map(|(s, sha)| DailyInput { series: s, sha256: sha }).collect();
    let request = RateRequest { base, presentation, currencies: &currencies, months: &months, fiscal_year_start };
    let derived = derive_rates(&inputs, &overrides, &request).map_err(|e| Error::Usage(e.to_string()))?;
    findings.extend(derived.findings.into_iter().map(|f| f.into_finding()));
    findings.sort();
    if let Some(path) = &args.out_file
        && !findings.has_blocking()
    {
        report::write_file(path, crate::rates::render_csv(&derived.records).as_bytes())?;
    }
    out.write_all(report::rates::render(&derived.records, &findings, args.out_file.as_deref(), format).as_bytes())?;
    Ok(exit_code(&findings))
}

/// Everything a close computes, for the close and trace commands.
pub struct ClosedPeriod {
    /// What was loaded and validated; its mapped lines are empty unless the command
    /// asked to keep them ([`CloseRun::keep_mapped`]).
    pub checked: Checked,
    pub translated: crate::translate::Translated,
    /// The sub-group's structure at the period end; `None` for the group, whose
    /// structure validation built (`checked.structure`).
    pub sub_group: Option<crate::structure::GroupStructure>,
    pub close: crate::close::Close,
    /// The close at the end of the month before the view starts (for month and quarter
    /// views), or `None` when the view starts with the fiscal year.
    pub base: Option<crate::close::Close>,
    pub checks: Vec<crate::proof::Check>,
    pub root: crate::model::EntityId,
    /// Every finding of loading and validation (warnings included: the close shows them).
    pub findings: Findings,
    /// A draft: run despite blocking findings, with the deliveries they concern set aside.
    pub draft: bool,
    /// In a draft, the entities whose figures were left out, and why.
    pub set_aside: std::collections::BTreeMap<crate::model::EntityId, crate::intercompany::Absence>,
    /// The intercompany matching the close's gate ran on (what `match` reports and the
    /// close posts), shown again in the workbook and the page.
    pub matching: crate::intercompany::Matching,
    /// The close of the opening balances, once computed (see `opening_balances`).
    opening: std::sync::OnceLock<crate::close::Close>,
}

/// How a command runs its close.
#[derive(Debug, Clone, Copy, Default)]
pub struct CloseRun {
    /// A draft: run despite blocking findings (see [`run_close`]).
    pub draft: bool,
    /// Keep the mapped lines (`checked.mapped.lines`) after translation, for a command
    /// that reads them later (`trace`, a comparison); otherwise they are let go before
    /// translating, as the largest frame then alive that nothing after needs.
    pub keep_mapped: bool,
}

/// [`run_close`] for a command: when findings stop the close they are written to `out`
/// and the exit code (at least 1) comes back as `Err`.
fn run_close_or_stop(
    data: &Path,
    period: Option<Period>,
    view: crate::cli::View,
    entity: Option<crate::model::EntityId>,
    run: CloseRun,
    format: Format,
    out: &mut dyn Write,
) -> Result<Result<ClosedPeriod, i32>, Error> {
    Ok(match run_close(data, period, view, entity, run)? {
        Ok(c) => Ok(c),
        Err(findings) => {
            let code = stop_on_findings(&findings, out, None, format)?.unwrap_or_else(|| exit_code(&findings));
            Err(code.max(1))
        }
    })
}

impl ClosedPeriod {
    /// The structure of the scope at the period end.
    pub fn structure(&self) -> &crate::structure::GroupStructure {
        self.sub_group.as_ref().unwrap_or(&self.checked.structure)
    }

    /// The close of the opening balances (the month before the fiscal year), for a view
    /// from the fiscal year's start: computed on demand (only the statement of changes
    /// in equity, the cash flows and the comparatives' proof need it), and once per
    /// command, as all three start from the same close.
    pub fn opening_balances(&self) -> Result<&crate::close::Close, Error> {
        if let Some(c) = self.opening.get() {
            return Ok(c);
        }
        let ds = &self.checked.ds;
        let p0 = self.checked.scope.fiscal_start.prev();
        let close = crate::close::close_at(ds, &self.translated, &structure_at(ds, &self.root, p0), p0)?;
        Ok(self.opening.get_or_init(|| close))
    }
}

/// The group structure below `root` at the end of period `p`.
fn structure_at(
    ds: &crate::load::Dataset,
    root: &crate::model::EntityId,
    p: Period,
) -> crate::structure::GroupStructure {
    let _span = tracing::info_span!("structure", period = %p).entered();
    let ids: Vec<crate::model::EntityId> = ds.entities.iter().map(|e| e.id.clone()).collect();
    crate::structure::build(&ids, &ds.holdings, root, p.last_day(), ds.settings.policies.significant_influence).0
}

/// Runs the close chain: load -> map_accounts -> validate -> structure -> translate ->
/// eliminate -> roll_up. Returns the findings instead when they block, unless `draft`:
/// then the deliveries the blocking findings concern (or that are missing, or lack a
/// rate) are set aside and the close runs on the rest, to be marked a draft.
pub fn run_close(
    data: &Path,
    period: Option<Period>,
    view: crate::cli::View,
    entity: Option<crate::model::EntityId>,
    run: CloseRun,
) -> Result<Result<ClosedPeriod, Findings>, Error> {
    let draft = run.draft;
    let (loaded, findings) = load_checked(data, period)?;
    if findings.has_unreadable() || (findings.has_blocking() && !draft) {
        return Ok(Err(findings));
    }
    let Some(mut checked) = loaded else { return Ok(Err(findings)) };
    let mut set_aside = std::collections::BTreeMap::new();
    if draft && findings.has_blocking() {
        let deliveries = crate::intercompany::Deliveries::assess(&checked.ds, &findings, checked.scope)?;
        checked.mapped = deliveries.restrict(&checked.mapped)?;
        checked.ds.ledger = only_used(&checked.ds.ledger, &deliveries)?;
        checked.ds.opening = only_used(&checked.ds.opening, &deliveries)?;
        set_aside = deliveries.set_aside;
    }
    let root = entity.unwrap_or_else(|| checked.ds.settings.parent.clone());
    if checked.ds.entity(&root).is_none() {
        return Err(Error::Usage(format!("entity {root} is not in entities.csv")));
    }
    let (mut checks, translated) = prove_and_translate(&mut checked, run.keep_mapped)?;
    let ds = &checked.ds;
    let scope = checked.scope;
    checks.extend(crate::translate::prove(&translated)?);
    let structure_at = |p: Period| structure_at(ds, &root, p);
    // The group's structure at the period is validation's; a sub-group has its own.
    let sub_group = (root != ds.settings.parent).then(|| structure_at(scope.period));
    let structure = sub_group.as_ref().unwrap_or(&checked.structure);
    let mut close = crate::close::close_at(ds, &translated, structure, scope.period)?;
    // The intercompany gate: the close posts every pair's difference, so an open one
    // must be accepted (with its reason, which the elimination entry then carries).
    let mut findings = findings;
    let (gate, matching) = intercompany_gate(ds, &translated, structure, scope, &findings)?;
    for e in close.journal.iter_mut().filter(|e| e.rule == crate::close::EliminationRule::Intercompany) {
        if let [a, b] = e.entities.as_slice()
            && let Some((_, text)) = gate.accepted.iter().find(|((x, y, kind), _)| {
                x == a && y == b && e.description.starts_with(&format!("{kind} between {a} and {b};"))
            })
        {
            e.description = format!("{}; {text}", e.description);
        }
    }
    findings.extend(gate.findings);
    findings.sort();
    if findings.has_blocking() && !draft {
        return Ok(Err(findings));
    }
    let base_period =
        crate::close::view::base_period(view, scope.period, ds.settings.fiscal_year_start, scope.fiscal_start);
    let base = match base_period {
        Some(p) => Some(crate::close::close_at(ds, &translated, &structure_at(p), p)?),
        None => None,
    };
    checks.extend({
        let _span = tracing::info_span!("prove_close").entered();
        crate::close::prove(&close)?
    });
    Ok(Ok(ClosedPeriod {
        checked,
        translated,
        sub_group,
        close,
        base,
        checks,
        root,
        findings,
        draft,
        set_aside,
        matching,
        opening: std::sync::OnceLock::new(),
    }))
}

/// The inputs' proof, then the translation. Translation needs only the movement frame,
/// so unless `keep_mapped` the mapped lines (a copy of every ledger row with its chart
/// columns, the largest frame then alive) are let go before it runs: they are emptied,
/// their columns kept.
fn prove_and_translate(
    checked: &mut Checked,
    keep_mapped: bool,
) -> Result<(Vec<crate::proof::Check>, crate::translate::Translated), Error> {
    let scope = checked.scope;
    let checks = {
        let _span = tracing::info_span!("prove_inputs").entered();
        prove_inputs(&checked.ds, &checked.mapped)?
    };
    let movements = checked.mapped.movements(scope.fiscal_start, scope.period)?;
    if !keep_mapped {
        checked.mapped.lines = checked.mapped.lines.clear();
    }
    let translated = crate::translate::translate_movements(&checked.ds, movements, scope.fiscal_start, scope.period)?;
    Ok((checks, translated))
}

/// The entities a close consolidates line by line (in full or proportionately).
pub fn consolidated(s: &crate::structure::GroupStructure) -> std::collections::BTreeSet<crate::model::EntityId> {
    s.entities()
        .iter()
        .filter(|e| matches!(e.method, crate::model::Method::Full | crate::model::Method::Proportionate))
        .map(|e| e.id.clone())
        .collect()
}

/// The rows of `df` of the entities whose deliveries are used.
fn only_used(
    df: &polars::prelude::DataFrame,
    d: &crate::intercompany::Deliveries,
) -> Result<polars::prelude::DataFrame, Error> {
    use polars::prelude::*;
    let used = DataFrame::new(
        d.used.len(),
        vec![Column::new("entity".into(), d.used.iter().map(|e| e.to_string()).collect::<Vec<_>>())],
    )?;
    Ok(df
        .clone()
        .lazy()
        .join(used.lazy(), [col("entity")], [col("entity")], JoinArgs::new(JoinType::Semi))
        .collect()?)
}

/// The exceptions of a close: every blocking finding of the run, and in a draft one
/// finding per delivery set aside. A final close has none; a draft lists them all.
fn exceptions(c: &ClosedPeriod) -> Vec<crate::findings::Finding> {
    use crate::findings::{Finding, Rule, Severity};
    let mut out: Vec<Finding> = c
        .findings
        .items()
        .iter()
        .chain(c.close.findings.iter())
        .filter(|f| f.severity >= Severity::Blocking)
        .cloned()
        .collect();
    for (e, why) in &c.set_aside {
        out.push(
            Finding::new(
                Rule::DeliverySetAside,
                format!(
                    "{}; its figures are left out of this draft",
                    report::intercompany::absence_text(e.as_str(), why)
                ),
                "deliver or correct it, then close again without --draft",
            )
            .entity(e)
            .period(c.checked.scope.period),
        );
    }
    out
}

/// The statement of cash flows (IAS 7) over the view's two closes, its proof added to
/// `checks`; `None` without `cash_flow_lines.csv`.
fn cash_flow_statement(
    c: &ClosedPeriod,
    opening: &crate::close::Close,
    checks: &mut Vec<crate::proof::Check>,
) -> Result<Option<crate::cash_flows::CashFlows>, Error> {
    let ds = &c.checked.ds;
    let Some(lines) = &ds.cash_flow_lines else { return Ok(None) };
    let (cf, cf_checks) = crate::cash_flows::cash_flows(ds, lines, c.structure(), &c.translated, opening, &c.close)?;
    checks.extend(cf_checks);
    Ok(Some(cf))
}

/// What `tessera close` was asked for.
pub struct CloseRequest<'a> {
    pub period: Option<Period>,
    pub view: crate::cli::View,
    pub entity: Option<crate::model::EntityId>,
    pub draft: bool,
    /// The output folder; a sub-folder per period, scope and view is written in it.
    pub out_dir: &'a Path,
    /// Parquet twins of the CSV tables, only when asked.
    pub parquet: bool,
    /// The translated lines (the translation's audit trail), written only when asked,
    /// in the one format asked.
    pub translated_lines: Option<crate::cli::TableFormat>,
    /// What to compare the close with (`--compare`), if anything.
    pub compare: Option<crate::compare::Source>,
}

pub fn close(data: &Path, ask: CloseRequest<'_>, format: Format, out: &mut dyn Write) -> Result<i32, Error> {
    use std::collections::BTreeMap;
    let CloseRequest { period, view, entity, draft, out_dir, parquet, translated_lines, compare } = ask;
    let run = CloseRun { draft, keep_mapped: compare.is_some() };
    let c = match run_close_or_stop(data, period, view, entity, run, format, out)? {
        Ok(c) => c,
        Err(code) => return Ok(code),
    };
    let (comparison, compare_findings) = match &compare {
        Some(source) => match compare_close(&c, source, view, format, out)? {
            Ok((x, f)) => (Some(x), f),
            Err(code) => return Ok(code),
        },
        None => (None, Vec::new()),
    };
    let ds = &c.checked.ds;
    let scope = c.checked.scope;
    let minor = c.translated.minor;
    let statements = &c.checked.statements;
    let chart = crate::close::view::Chart::new(&ds.accounts);
    let figures = crate::close::view::view_figures(&c.close, c.base.as_ref(), &chart, &ds.settings.accounts);
    let mut out_statements = BTreeMap::new();
    for st in statements {
        let flows = st.statement == "profit_or_loss" || st.statement == "oci";
        let amounts = if flows { &figures.flows } else { &figures.balance_sheet };
        out_statements.insert(st.statement.clone(), report::close::lay_out(st, amounts));
    }
    let mut checks = c.checks.clone();
    checks.push(figures.check.clone());
    // The statement of changes in equity (IAS 1.106): from the opening close of the
    // view to its closing one, with its own proof.
    let view_start = c.base.as_ref().map(|b| b.period.next()).unwrap_or(scope.fiscal_start);
    let opening = match &c.base {
        Some(b) => b,
        None => c.opening_balances()?,
    };
    let (equity_changes, equity_check) = crate::equity::changes_in_equity(
        ds,
        &crate::equity::components(statements, &ds.accounts),
        opening,
        &c.close,
        &figures.attribution,
        minor,
        (format!("Balance at {}", view_start.first_day()), format!("Balance at {}", scope.period.last_day())),
    )?;
    checks.push(equity_check);
    let cash_flows = cash_flow_statement(&c, opening, &mut checks)?;
    let prior_year = comparatives(&c, view, &mut out_statements, &mut checks)?;
    let exceptions = exceptions(&c);
    let tied = crate::proof::tied(&checks) && exceptions.is_empty();
    let mut shown = shown_findings(&c, &exceptions);
    shown.extend(compare_findings);
    let names: BTreeMap<crate::model::GroupAccount, String> =
        ds.accounts.iter().map(|a| (a.account.clone(), a.name.clone())).collect();
    let policies = applied_policies(ds);
    let scope_label = if c.root == ds.settings.parent { "group".to_string() } else { format!("sub-group {}", c.root) };
    let scope_key = if c.root == ds.settings.parent { "group".to_string() } else { c.root.to_string() };
    let status = if c.draft { "draft" } else { "final" };
    let r = report::close::CloseReport {
        period: scope.period.to_string(),
        currency: ds.settings.presentation_currency.code().to_string(),
        view: view.as_str(),
        scope: scope_label,
        proof: report::close::Proof {
            status,
            period: scope.period.to_string(),
            scope: scope_key.clone(),
            view: view.as_str(),
            exceptions: &exceptions,
            tied,
            checks: &checks,
            inputs: &ds.inputs,
            tessera_version: env!("CARGO_PKG_VERSION"),
            policies,
        },
        group_trial_balance: report::close::tb_json(&c.close.group, &names),
        statements: report::close::Statements {
            laid_out: out_statements,
            changes_in_equity: report::close::equity_changes_out(&equity_changes),
            cash_flows,
            prior_year,
            comparison,
        },
        attribution: attribution_out(&figures.attribution),
        eliminations: &c.close.journal,
        nci: &c.close.nci,
        translation_reserves: &c.close.reserves,
        findings: &shown,
        caution: report::CAUTION,
    };
    let _span = tracing::info_span!("report").entered();
    let dir = report::close::output_dir(out_dir, scope.period, &scope_key, view.as_str(), c.draft);
    let entity_minor: BTreeMap<String, u32> =
        ds.entities.iter().map(|e| (e.id.to_string(), e.currency.minor_unit())).collect();
    let tables = report::close::Tables {
        names: &names,
        entity_minor: &entity_minor,
        minor,
        contributions: &c.close.contributions,
        translated: translated_lines.map(|f| (&c.translated.lines, f)),
        explanations: &c.translated.explanations,
        parquet,
    };
    report::close::write_outputs(&dir, &r, &tables)?;
    write_pack(&c, &r, &dir, &names)?;
    out.write_all(report::close::render(&r, minor, format).as_bytes())?;
    Ok(if tied { 0 } else { 1 })
}

/// The report's attribution from the view's.
fn attribution_out(a: &crate::close::view::Attribution) -> report::close::Attribution {
    report::close::Attribution {
        profit: a.profit,
        profit_owners: a.profit_owners(),
        profit_nci: a.profit_nci,
        oci: a.oci,
        oci_owners: a.oci_owners(),
        oci_nci: a.oci_nci,
        result_in_equity: a.result_in_equity,
    }
}

/// The prior year's comparatives (IAS 1.38), when the data folder holds that year: each
/// statement line's `prior_year` from the close of the same view a year earlier
/// (`years::prior_year_close`), its attribution and statement of changes in equity; and
/// the proof that the group's closing balances of the prior year are this year's
/// opening (`opening_is_prior_year_closing`).
fn comparatives(
    c: &ClosedPeriod,
    view: crate::cli::View,
    laid_out: &mut std::collections::BTreeMap<String, report::close::StatementOut>,
    checks: &mut Vec<crate::proof::Check>,
) -> Result<Option<report::close::PriorYearOut>, Error> {
    let _span = tracing::info_span!("comparatives").entered();
    let scope = c.checked.scope;
    let full = &c.checked.full;
    if !crate::years::holds_prior_year(full, scope.fiscal_start) {
        return Ok(None);
    }
    let year_end = scope.fiscal_start.plus_months(11);
    let Some(prior) = crate::years::prior_year_close(full, scope.period, view, &c.root)? else { return Ok(None) };
    // The carried balances: the prior year's close at its last month against this
    // year's opening.
    let computed;
    let prior_end = if prior.period() == scope.fiscal_start.prev() {
        &prior.close
    } else {
        match crate::years::prior_year_close(full, year_end, crate::cli::View::Ytd, &c.root)? {
            Some(p) => {
                computed = p;
                &computed.close
            }
            None => return Ok(None),
        }
    };
    let ob = c.opening_balances()?;
    let ds = &c.checked.ds;
    checks.push(crate::years::opening_is_prior_closing(prior_end, ob, &ds.accounts, &ds.settings.accounts));
    // The comparatives are only as good as the prior year's close: a blocking finding of
    // its rules (an acquisition missing, say) fails the proof rather than passing unseen.
    let blocking: Vec<String> = prior
        .close
        .findings
        .iter()
        .filter(|f| f.severity >= crate::findings::Severity::Blocking)
        .map(|f| format!("{}: {}", f.rule, f.message))
        .collect();
    checks.push(crate::proof::Check::new(
        "prior_year_close_has_no_blocking_findings",
        blocking.is_empty(),
        if blocking.is_empty() {
            format!("the close of {} that the comparatives come from raises no blocking finding", prior.period())
        } else {
            blocking.join("; ")
        },
    ));
    let figures = prior.figures();
    for st in &c.checked.statements {
        let flows = st.statement == "profit_or_loss" || st.statement == "oci";
        let amounts = if flows { &figures.flows } else { &figures.balance_sheet };
        if let Some(out) = laid_out.get_mut(&st.statement) {
            report::close::with_prior_year(out, &report::close::lay_out(st, amounts));
        }
    }
    let opening = prior.opening()?;
    let view_start = prior.base.as_ref().map(|b| b.period.next()).unwrap_or(prior.translated.fiscal_start);
    let (equity_changes, _) = crate::equity::changes_in_equity(
        &prior.ds,
        &crate::equity::components(&c.checked.statements, &prior.ds.accounts),
        &opening,
        &prior.close,
        &figures.attribution,
        c.translated.minor,
        (format!("Balance at {}", view_start.first_day()), format!("Balance at {}", prior.period().last_day())),
    )?;
    Ok(Some(report::close::PriorYearOut {
        period: prior.period().to_string(),
        attribution: attribution_out(&figures.attribution),
        changes_in_equity: report::close::equity_changes_out(&equity_changes),
    }))
}

/// A close's comparison closed (`--compare`), with the comparison's input files and the
/// warnings of its inputs; when its findings block, they are written to `out` and the
/// exit code (at least 1) comes back as `Err`.
type ComparedClose = (crate::compare::Compared, Vec<crate::load::InputFile>, Vec<crate::findings::Finding>);

fn compared(
    c: &ClosedPeriod,
    source: &crate::compare::Source,
    view: crate::cli::View,
    format: Format,
    out: &mut dyn Write,
) -> Result<Result<ComparedClose, i32>, Error> {
    use crate::compare::{Actuals, Source};
    let ds = &c.checked.ds;
    let scope = c.checked.scope;
    let mut f = Vec::new();
    // The actuals the comparison is run beside.
    let a = Actuals {
        ds,
        mapped: &c.checked.mapped,
        structure: c.structure(),
        fiscal_start: scope.fiscal_start,
        period: scope.period,
        base_period: c.base.as_ref().map(|b| b.period),
    };
    let closed = match source {
        Source::PriorYear => {
            // The whole folder: the year closed's own dataset holds no other year.
            let full = &c.checked.full;
            f.extend(crate::compare::prior_year_findings(full, scope.fiscal_start));
            match f.is_empty() {
                true => crate::compare::compare_prior_year(&a, full, view, &c.root)?.map(|x| (x, Vec::new())),
                false => None,
            }
        }
        Source::Plan(name) => match crate::load::plans::load_plan(ds, name, &mut f) {
            None => None,
            Some(plan) => {
                let (x, more) = crate::compare::compare_plan(&a, &plan)?;
                f.extend(more);
                x.map(|x| (x, plan.inputs))
            }
        },
    };
    let mut findings = Findings::default();
    findings.extend(f.clone());
    findings.sort();
    match closed {
        Some((x, inputs)) if !findings.has_blocking() => Ok(Ok((x, inputs, f))),
        _ => {
            let code =
                stop_on_findings(&findings, out, Some(scope.period), format)?.unwrap_or_else(|| exit_code(&findings));
            Ok(Err(code.max(1)))
        }
    }
}

/// The comparison a close shows (`--compare`), or the exit code when it cannot be made.
fn compare_close(
    c: &ClosedPeriod,
    source: &crate::compare::Source,
    view: crate::cli::View,
    format: Format,
    out: &mut dyn Write,
) -> Result<Result<(crate::compare::Comparison, Vec<crate::findings::Finding>), i32>, Error> {
    Ok(match compared(c, source, view, format, out)? {
        Ok((x, inputs, f)) => {
            let mut cmp =
                crate::compare::comparison(&c.checked.ds, &c.checked.statements, (&c.close, c.base.as_ref()), &x)?;
            cmp.inputs = inputs;
            Ok((cmp, f))
        }
        Err(code) => Err(code),
    })
}

/// The policies a close applied, as `proof.json` records them.
fn applied_policies(ds: &Dataset) -> serde_json::Value {
    serde_json::json!({
        "rounding": ds.settings.policies.rounding,
        "income_translation": ds.settings.policies.income_translation,
        "ifric16": ds.settings.policies.ifric16,
        "significant_influence": ds.settings.policies.significant_influence.to_string(),
        "intercompany": {
            "tolerance_absolute": ds.settings.intercompany.tolerance_absolute.to_string(),
            "tolerance_relative": ds.settings.intercompany.tolerance_relative.to_string(),
            "timing_window_days": ds.settings.intercompany.timing_window_days,
            "differences_posted_to": ds.settings.accounts.intercompany_difference.as_str(),
            "accepted_differences": ds.accepted_differences.len(),
        },
        "plausibility": {
            "rate_move": ds.settings.plausibility.rate_move.to_string(),
            "sign_months": ds.settings.plausibility.sign_months,
        },
    })
}

/// What a close shows with its figures: the exceptions first, then every warning of the
/// run.
fn shown_findings(c: &ClosedPeriod, exceptions: &[crate::findings::Finding]) -> Vec<crate::findings::Finding> {
    exceptions
        .iter()
        .cloned()
        .chain(
            c.findings
                .items()
                .iter()
                .chain(c.close.findings.iter())
                .filter(|f| f.severity < crate::findings::Severity::Blocking)
                .cloned(),
        )
        .collect()
}

/// The close's workbook and HTML page beside its tables.
fn write_pack(
    c: &ClosedPeriod,
    r: &report::close::CloseReport<'_>,
    dir: &Path,
    names: &std::collections::BTreeMap<crate::model::GroupAccount, String>,
) -> Result<(), Error> {
    let ds = &c.checked.ds;
    let scope = c.checked.scope;
    let minor = c.translated.minor;
    // The workbook and the page: for the group itself, its intercompany matching and its
    // segments by the default key.
    // Matching is the group's: a sub-group's workbook and page leave it out rather than
    // show pairs outside the sub-group.
    let matching = (c.root == ds.settings.parent).then_some(&c.matching);
    let segments = match &ds.settings.segments {
        Some(settings) if c.root == ds.settings.parent => {
            let derived = crate::segments::with_derived_key(&ds.entities, &settings.key);
            let entities = derived.as_deref().unwrap_or(&ds.entities);
            Some((settings.key.clone(), segment_report(c, settings, &settings.key, entities)?.0))
        }
        _ => None,
    };
    let consolidated: std::collections::BTreeSet<String> =
        c.close.contributions.column("entity")?.str()?.iter().flatten().map(String::from).collect();
    let extras = report::html::Extras {
        segments: segments.as_ref().map(|(k, rep)| (k.as_str(), rep.segments.as_slice())),
        causes: report::html::causes(&c.translated.explanations, scope.fiscal_start, scope.period, &consolidated),
        statuses: matching.map(report::intercompany::status_counts),
    };
    let name = |n: &str| if c.draft { format!("draft-{n}") } else { n.to_string() };
    report::write_file(
        &dir.join(name("close.xlsx")),
        &report::workbook::close_workbook(r, names, matching, segments.as_ref().map(|(_, rep)| rep), minor)?,
    )?;
    report::write_file(&dir.join(name("close.html")), report::html::close_page(r, &extras, minor).as_bytes())?;
    Ok(())
}

/// `tessera segments`: the close's figures by segment, reconciled to the group. Built on
/// `run_close` and its elimination journal; exit 1 when the proof fails or a finding
/// blocks.
/// What `tessera segments` was asked for.
pub struct SegmentsRequest<'a> {
    pub period: Option<Period>,
    pub view: crate::cli::View,
    pub by: Option<String>,
    pub out_dir: Option<&'a Path>,
    /// What to compare the segments with (`--compare`), if anything.
    pub compare: Option<crate::compare::Source>,
}

pub fn segments(data: &Path, ask: SegmentsRequest<'_>, format: Format, out: &mut dyn Write) -> Result<i32, Error> {
    let SegmentsRequest { period, view, by, out_dir, compare } = ask;
    let run = CloseRun { draft: false, keep_mapped: compare.is_some() };
    let c = match run_close_or_stop(data, period, view, None, run, format, out)? {
        Ok(c) => c,
        Err(code) => return Ok(code),
    };
    let ds = &c.checked.ds;
    let scope = c.checked.scope;
    let Some(settings) = &ds.settings.segments else {
        let mut f = Findings::default();
        f.push(
            crate::findings::Finding::new(
                crate::findings::Rule::SettingInvalid,
                "group.toml has no [segments] table, so there is no segment profit measure to report",
                "add a [segments] table naming at least `revenue` and `profit` (docs/formats.md shows one)",
            )
            .in_file("entities/group.toml"),
        );
        out.write_all(report::findings::render_check(&f, Some(scope.period), format).as_bytes())?;
        return Ok(1);
    };
    let key = by.unwrap_or_else(|| settings.key.clone());
    let derived = crate::segments::with_derived_key(&ds.entities, &key);
    let entities = derived.as_deref().unwrap_or(&ds.entities);
    let mut keys: Vec<&str> = entities.iter().flat_map(|e| e.segments.iter().map(|(k, _)| k.as_str())).collect();
    keys.sort();
    keys.dedup();
    if !keys.contains(&key.as_str()) {
        return Err(Error::Usage(format!(
            "no entity has a segment under key {key:?} (a filled-in column segment_{key} of entities.csv, or region / subregion from the country); keys in use: {}",
            if keys.is_empty() { "none".to_string() } else { keys.join(", ") }
        )));
    }
    let (rep, mut findings) = segment_report(&c, settings, &key, entities)?;
    let comparison = match &compare {
        Some(source) => match compared(&c, source, view, format, out)? {
            Ok((x, _, f)) => {
                findings.extend(f);
                let (cr, _) = segment_report_of(&c, (&x.close, x.base.as_ref()), settings, &key, entities)?;
                let (rr, _) = segment_report_of(&c, (&x.at_rates, x.at_rates_base.as_ref()), settings, &key, entities)?;
                Some((x.name.clone(), crate::compare::walk::compare_segments(&rep, &cr, &rr)))
            }
            Err(code) => return Ok(code),
        },
        None => None,
    };
    let mut checks = c.checks.clone();
    checks.extend(rep.checks.iter().cloned());
    findings.extend(rep.findings.iter().cloned());
    findings.extend(c.close.findings.iter().cloned());
    let blocking = findings.iter().any(|f| f.severity >= crate::findings::Severity::Blocking);
    let tied = crate::proof::tied(&checks);
    let scope_label = if c.root == ds.settings.parent { "group".to_string() } else { format!("sub-group {}", c.root) };
    let r = report::segments::SegmentsOut {
        period: scope.period.to_string(),
        currency: ds.settings.presentation_currency.code().to_string(),
        view: view.as_str(),
        scope: scope_label,
        report: &rep,
        comparison: comparison.as_ref().map(|(name, rows)| report::segments::ComparisonOut { comparison: name, rows }),
        findings: &findings,
        proof: report::segments::SegmentsProof {
            tied,
            checks: &checks,
            inputs: &ds.inputs,
            tessera_version: env!("CARGO_PKG_VERSION"),
        },
        caution: report::CAUTION,
    };
    if let Some(dir) = out_dir {
        report::segments::write_outputs(
            &report::close::output_dir(dir, scope.period, "group", view.as_str(), false),
            &r,
        )?;
    }
    out.write_all(report::segments::render(&r, c.translated.minor, format).as_bytes())?;
    Ok(if tied && !blocking { 0 } else { 1 })
}

/// The segment report of a closed period by `key`, with the findings of its settings
/// (shared by `tessera segments` and the close's HTML report).
fn segment_report(
    c: &ClosedPeriod,
    settings: &crate::model::SegmentSettings,
    key: &str,
    entities: &[crate::model::Entity],
) -> Result<(crate::segments::SegmentReport, Vec<crate::findings::Finding>), Error> {
    segment_report_of(c, (&c.close, c.base.as_ref()), settings, key, entities)
}

/// [`segment_report`] of another close of the same period and scope (a comparison's):
/// `closes` is the close and its base.
fn segment_report_of(
    c: &ClosedPeriod,
    closes: (&crate::close::Close, Option<&crate::close::Close>),
    settings: &crate::model::SegmentSettings,
    key: &str,
    entities: &[crate::model::Entity],
) -> Result<(crate::segments::SegmentReport, Vec<crate::findings::Finding>), Error> {
    use crate::segments::{Membership, attribute, contribution_rows, resolve_measures};
    use std::collections::BTreeMap;
    let (close, base) = closes;
    let ds = &c.checked.ds;
    let scope = c.checked.scope;
    let mut findings = Vec::new();
    let measures =
        resolve_measures(settings, &c.checked.statements, &ds.accounts, "entities/group.toml", &mut findings);
    let m = Membership::build(key, entities, &ds.segment_accounts, &ds.accounts, Some(settings), &mut findings);
    let country: BTreeMap<crate::model::EntityId, String> =
        ds.entities.iter().map(|e| (e.id.clone(), e.country.clone())).collect();
    let ytd = attribute(&contribution_rows(close)?, &close.journal, &m, &country);
    let base_attr = match base {
        Some(b) => Some(attribute(&contribution_rows(b)?, &b.journal, &m, &country)),
        None => None,
    };
    let chart = crate::close::view::Chart::new(&ds.accounts);
    let is_flow = |a: &crate::model::GroupAccount| chart.is_flow(a);
    let attr = ytd.view(base_attr.as_ref(), &is_flow);
    let group = crate::close::view::flows_of_view(&close.group, base.map(|b| &b.group), &is_flow);
    let home = ds.entity(&c.root).map(|e| e.country.clone()).unwrap_or_default();
    let rep = crate::segments::report(
        &measures,
        &m,
        &attr,
        &group,
        &ds.accounts,
        &home,
        settings.country_materiality,
        scope.period,
    );
    Ok((rep, findings))
}

pub fn trace(
    data: &Path,
    account: &crate::model::GroupAccount,
    period: Option<Period>,
    entity: Option<crate::model::EntityId>,
    format: Format,
    out: &mut dyn Write,
) -> Result<i32, Error> {
    let run = CloseRun { draft: false, keep_mapped: true };
    let c = match run_close_or_stop(data, period, crate::cli::View::Ytd, entity, run, format, out)? {
        Ok(c) => c,
        Err(code) => return Ok(code),
    };
    let ds = &c.checked.ds;
    if ds.account(account).is_none() {
        return Err(Error::Usage(format!("group account {account} is not in accounts.csv")));
    }
    let t = crate::trace::trace(account, ds, &c.close, &c.checked.mapped, c.checked.scope.period)?;
    let text = report::trace::render(&t, c.translated.minor, format);
    out.write_all(text.as_bytes())?;
    Ok(0)
}

/// Input totals and mapping: every delivered trial balance sums to zero, and mapping
/// keeps every amount (the mapped ledger holds exactly the delivered rows and totals).
fn prove_inputs(ds: &Dataset, mapped: &Mapped) -> Result<Vec<crate::proof::Check>, Error> {
    use polars::prelude::*;
    use rust_decimal::Decimal;
    let sums = |df: &DataFrame| -> PolarsResult<(usize, usize, Decimal)> {
        let g = df
            .clone()
            .lazy()
            .group_by([col("entity"), col("kind"), col("period")])
            .agg([col("amount").sum()])
            .collect()?;
        let v = crate::money::column_decimals(g.column("amount")?)?;
        let nonzero = v.iter().filter(|x| !x.unwrap_or_default().is_zero()).count();
        Ok((g.height(), nonzero, v.iter().flatten().copied().sum()))
    };
    let (deliveries, unbalanced, _) = sums(&ds.ledger)?;
    let (_, _, opening_total) = sums(&ds.opening)?;
    let delivered_rows = ds.ledger.height() + ds.opening.height();
    let mapped_rows = mapped.lines.height() + mapped.unmapped.height();
    // Debits, so that the comparison is not trivially 0 = 0.
    // Summed by polars: amounts are below 10^15 (load bounds them), so even 10^7 rows
    // stay far inside the 38 digits of the sum.
    let debits = |df: &DataFrame| -> PolarsResult<Decimal> {
        let zero = crate::money::decimal_lit(Decimal::ZERO, crate::money::AMOUNT_SCALE);
        let total = df.clone().lazy().select([col("amount").filter(col("amount").gt(zero)).sum()]).collect()?;
        Ok(crate::money::column_decimals(total.column("amount")?)?.first().copied().flatten().unwrap_or_default())
    };
    let total_in = debits(&ds.ledger)? + debits(&ds.opening)? + opening_total;
    let total_mapped = debits(&mapped.lines)?;
    Ok(vec![
        crate::proof::Check::new(
            "input_trial_balances_sum_to_zero",
            unbalanced == 0,
            format!("{deliveries} entity-period deliveries, {unbalanced} not summing to zero"),
        ),
        crate::proof::Check::new(
            "mapping_preserves_rows_and_totals",
            delivered_rows == mapped_rows && mapped.unmapped.height() == 0 && total_in == total_mapped,
            format!(
                "{delivered_rows} rows delivered, {} mapped, {} unmapped; debits {total_in} delivered, {total_mapped} mapped",
                mapped.lines.height(),
                mapped.unmapped.height()
            ),
        ),
    ])
}

/// What `tessera match` was asked for.
#[derive(Debug, Clone, Default)]
pub struct MatchRequest {
    pub period: Option<Period>,
    pub entity: Option<crate::model::EntityId>,
    pub tolerance_absolute: Option<rust_decimal::Decimal>,
    pub tolerance_relative: Option<rust_decimal::Decimal>,
    pub fail_on_open: bool,
}

/// Runs on whatever has been delivered. Refuses only when the settings, the entity list
/// or the chart are broken (`intercompany::blocks_matching`); a delivery that is missing,
/// incomplete, has blocking findings or lacks a rate is set aside and its pairs await it.
/// Exit 0, or 1 when the proof fails or `--fail-on-open` meets an open pair.
pub fn match_intercompany(data: &Path, ask: &MatchRequest, format: Format, out: &mut dyn Write) -> Result<i32, Error> {
    use crate::intercompany::{self, Deliveries, Options};
    let (loaded, findings) = load_checked(data, ask.period)?;
    let period = loaded.as_ref().map(|c| c.scope.period);
    let Some(Checked { ds, scope, mapped, structure, .. }) = loaded else {
        out.write_all(report::findings::render_check(&findings, period, Format::Table).as_bytes())?;
        return Ok(exit_code(&findings));
    };
    let mut refusing = Findings::default();
    refusing.extend(findings.items().iter().filter(|f| intercompany::blocks_matching(f)).cloned());
    if !refusing.is_empty() {
        out.write_all(report::findings::render_check(&refusing, period, Format::Table).as_bytes())?;
        out.write_all(
            b"\nthe settings, entities or chart have blocking findings, so no pair can be matched: fix them first\n",
        )?;
        return Ok(exit_code(&refusing));
    }
    if let Some(e) = &ask.entity
        && ds.entity(e).is_none()
    {
        return Err(Error::Usage(format!("entity {e} is not in entities.csv")));
    }
    let deliveries = Deliveries::assess(&ds, &findings, scope)?;
    let used = deliveries.restrict(&mapped)?;
    // Matching reads only the translation: neither mapping is needed once it has its
    // movement frame.
    drop(mapped);
    let movements = used.movements(scope.fiscal_start, scope.period)?;
    drop(used);
    let translated = crate::translate::translate_movements(&ds, movements, scope.fiscal_start, scope.period)?;
    let mut options = Options::from_settings(&ds.settings.intercompany);
    if let Some(x) = ask.tolerance_absolute {
        options.tolerance_absolute = x;
    }
    if let Some(x) = ask.tolerance_relative {
        options.tolerance_relative = x;
    }
    options.only = ask.entity.clone();
    options.consolidated = Some(consolidated(&structure));
    let mut matching = intercompany::match_intercompany(&ds, &translated, scope, &deliveries, &options)?;
    matching.proof.extend(crate::translate::prove(&translated)?);
    out.write_all(report::intercompany::render(&matching, &findings, format).as_bytes())?;
    let tied = crate::proof::tied(&matching.proof);
    Ok(if !tied || (ask.fail_on_open && matching.has_open()) { 1 } else { 0 })
}

/// Writes a synthetic group: the plan is drawn once, then each entity is drawn and
/// written in turn.
pub fn generate(options: crate::generate::Options, out_dir: &Path, out: &mut dyn Write) -> Result<i32, Error> {
    let _span = tracing::info_span!("generate", entities = options.entities, months = options.months).entered();
    let plan = crate::generate::Plan::new(options).map_err(Error::Usage)?;
    let bar = crate::progress::bar(plan.entities.len() as u64, "generate");
    let written = report::generate::write(&plan, out_dir, &|n| bar.set_position(n as u64))?;
    bar.finish_and_clear();
    out.write_all(report::generate::render(&written, out_dir).as_bytes())?;
    Ok(0)
}

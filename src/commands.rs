//! The commands as pipelines of named stages. Each function here reads as the chain
//! `load -> map_accounts -> validate -> ...` for its command and decides its exit code:
//! 0 clean, 1 blocking findings (or a failed proof), 2 unreadable input.

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
        2
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

/// A loaded, mapped and validated data folder.
pub struct Checked {
    pub ds: Dataset,
    pub scope: Scope,
    pub mapped: Mapped,
}

/// Loads, maps and validates: the common front of every command.
pub fn load_checked(data: &Path, period: Option<Period>) -> Result<(Option<Checked>, Findings), Error> {
    let (ds, mut findings) = load::load(data);
    let Some(ds) = ds else {
        findings.sort();
        return Ok((None, findings));
    };
    let period = pick_period(&ds, period)?;
    let scope = Scope::new(period, ds.settings.fiscal_year_start);
    let mapped = map_accounts(&ds, scope.fiscal_start)?;
    validate(&ds, &mapped, scope, &mut findings)?;
    Ok((Some(Checked { ds, scope, mapped }), findings))
}

pub fn check(data: &Path, period: Option<Period>, format: Format, out: &mut dyn Write) -> Result<i32, Error> {
    let (loaded, findings) = load_checked(data, period)?;
    let period = loaded.as_ref().map(|c| c.scope.period);
    out.write_all(report::findings::render_check(&findings, period, format).as_bytes())?;
    Ok(exit_code(&findings))
}

/// Refuses to go on past blocking findings: prints them and returns the exit code.
fn stop_on_findings(findings: &Findings, out: &mut dyn Write, period: Option<Period>) -> Result<Option<i32>, Error> {
    if findings.has_blocking() {
        out.write_all(report::findings::render_check(findings, period, Format::Table).as_bytes())?;
        out.write_all(b"\nthe deliveries have blocking findings: fix them first (tessera check lists them)\n")?;
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
    if let Some(code) = stop_on_findings(&findings, out, period)? {
        return Ok(code);
    }
    let Some(Checked { ds, scope, mapped }) = loaded else { return Ok(exit_code(&findings)) };
    if let Some(e) = &entity
        && ds.entity(e).is_none()
    {
        return Err(Error::Usage(format!("entity {e} is not in entities.csv")));
    }
    let translated = crate::translate::translate(&ds, &mapped, scope.fiscal_start, scope.period)?;
    let checks = crate::translate::prove(&translated)?;
    let text = report::translation::render(
        &translated,
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
    let Some(Checked { ds, scope, mapped }) = loaded else {
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
    let translated = crate::translate::translate(&ds, &used, scope.fiscal_start, scope.period)?;
    let mut options = Options::from_settings(&ds.settings.intercompany);
    if let Some(x) = ask.tolerance_absolute {
        options.tolerance_absolute = x;
    }
    if let Some(x) = ask.tolerance_relative {
        options.tolerance_relative = x;
    }
    options.only = ask.entity.clone();
    let mut matching = intercompany::match_intercompany(&ds, &translated, scope, &deliveries, &options)?;
    matching.proof.extend(crate::translate::prove(&translated)?);
    out.write_all(report::intercompany::render(&matching, &findings, format).as_bytes())?;
    let tied = crate::proof::tied(&matching.proof);
    Ok(if !tied || (ask.fail_on_open && matching.has_open()) { 1 } else { 0 })
}

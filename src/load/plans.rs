//! Reads one plan (the budget or a named forecast) from `entities/plans/<name>/`: one file of
//! monthly movements per entity (`<ENTITY>.csv`, the trial balance's columns, local
//! accounts) and the plan's own rates (`rates.csv`, the shape of `rates/monthly.csv`).
//! The movements are parsed by the trial balance's own parser, so an amount in a plan
//! obeys every rule an amount in a delivery does. What the rows mean (mapping, periods,
//! duplicates, scope) is checked by `compare`, which knows the close's year.

use std::collections::{BTreeMap, BTreeSet};
use std::path::Path;

use polars::prelude::*;

use super::table::{self, TextTable};
use super::{Dataset, InputFile, MonthlyRate, hash_into, ledger, load_rates, rel};
use crate::findings::{Finding, Rule, Severity};
use crate::model::{Currency, EntityId};

/// The folder under the data folder that holds the plans.
pub const PLANS_DIR: &str = "entities/plans";
/// The folder's name inside `entities/`, which no entity may take.
pub const PLANS_FOLDER: &str = "plans";
/// The plan's rates inside its folder.
pub const PLAN_RATES_FILE: &str = "rates.csv";

/// One plan as read: its movements in the ledger's columns (kind `movements`, local
/// accounts) and its rates.
#[derive(Debug, Clone)]
pub struct PlanInput {
    pub name: String,
    /// The ledger's columns (`ledger::LEDGER_COLUMNS`).
    pub ledger: DataFrame,
    pub rates: Vec<MonthlyRate>,
    /// The rates file, for findings about a missing rate.
    pub rates_file: String,
    /// Entities with a plan file.
    pub entities: BTreeSet<EntityId>,
    pub inputs: Vec<InputFile>,
}

/// Whether `name` names a plan: `budget` or `forecast-<label>` (letters, digits, `-`).
pub fn is_plan_name(name: &str) -> bool {
    name == "budget"
        || name
            .strip_prefix("forecast-")
            .is_some_and(|l| !l.is_empty() && l.chars().all(|c| c.is_ascii_alphanumeric() || c == '-' || c == '_'))
}

/// The plans of the data folder (`entities/plans/<name>/` with a plan's name), sorted; a folder
/// under `entities/plans/` that names no plan is a warning.
pub fn plan_names(root: &Path, f: &mut Vec<Finding>) -> Vec<String> {
    let dir = root.join(PLANS_DIR);
    let mut names: Vec<String> = std::fs::read_dir(&dir)
        .map(|rd| {
            rd.filter_map(|e| e.ok())
                .filter(|e| e.path().is_dir())
                .map(|e| e.file_name().to_string_lossy().to_string())
                .collect()
        })
        .unwrap_or_default();
    names.sort();
    names.retain(|n| {
        let ok = is_plan_name(n);
        if !ok && !n.starts_with('.') {
            f.push(
                Finding::new(
                    Rule::FileUnknown,
                    format!(
                        "folder `{n}` under entities/plans/ is neither budget nor forecast-<label>, and is not read"
                    ),
                    "rename it budget or forecast-<label>, or move it out of entities/plans/",
                )
                .in_file(rel(root, &dir.join(n)))
                .severity(Severity::Warning),
            );
        }
        ok
    });
    names
}

/// Reads `entities/plans/<name>/` of the data folder `ds.root`. `None` (with a finding) when the
/// folder or its rates are missing.
pub fn load_plan(ds: &Dataset, name: &str, f: &mut Vec<Finding>) -> Option<PlanInput> {
    let _span = tracing::info_span!("load_plan", plan = name).entered();
    let root = ds.root.as_path();
    let dir = root.join(PLANS_DIR).join(name);
    if !dir.is_dir() {
        f.push(
            Finding::new(
                Rule::FileMissing,
                format!("the comparison {name} has no folder `{}`", rel(root, &dir)),
                "create the plan's folder with its rates.csv and one movements file per entity (docs/formats.md, Plans)",
            )
            .in_file(rel(root, &dir)),
        );
        return None;
    }
    let mut inputs = Vec::new();
    let rates_path = dir.join(PLAN_RATES_FILE);
    let rates = load_rates(root, &rates_path, Some(ds.settings.presentation_currency), f, &mut inputs);
    let known: BTreeMap<EntityId, Currency> = ds.entities.iter().map(|e| (e.id.clone(), e.currency)).collect();
    let mut tables: Vec<(EntityId, &'static str, TextTable)> = Vec::new();
    let mut entities = BTreeSet::new();
    for path in plan_files(&dir) {
        let fname = path.file_name().map(|n| n.to_string_lossy().to_string()).unwrap_or_default();
        if fname == PLAN_RATES_FILE || fname.starts_with('.') {
            continue;
        }
        let display = rel(root, &path);
        let Some(stem) = fname.strip_suffix(".csv").filter(|s| known.contains_key(&EntityId::new(*s))) else {
            f.push(
                Finding::new(
                    Rule::EntityUnknown,
                    format!("`{fname}` names no entity of entities.csv: a plan file is `<ENTITY>.csv`"),
                    "name the file after the entity it plans, or remove it",
                )
                .in_file(display),
            );
            continue;
        };
        hash_into(root, &path, &mut inputs);
        if let Some(t) = table::read(&path, &display, &ledger::LEDGER_SPEC, f) {
            let e = EntityId::new(stem);
            entities.insert(e.clone());
            tables.push((e, "movements", t));
        }
    }
    if entities.is_empty() {
        f.push(
            Finding::new(
                Rule::TableEmpty,
                format!("the plan {name} holds no entity's movements"),
                "add one file `<ENTITY>.csv` per entity planned",
            )
            .in_file(rel(root, &dir))
            .severity(Severity::Blocking),
        );
    }
    let ledger = ledger::build_ledger(tables, &known, f);
    inputs.sort_by(|a, b| a.file.cmp(&b.file));
    Some(PlanInput { name: name.to_string(), ledger, rates, rates_file: rel(root, &rates_path), entities, inputs })
}

/// The files of a plan's folder, sorted by name.
fn plan_files(dir: &Path) -> Vec<std::path::PathBuf> {
    let mut out: Vec<std::path::PathBuf> = std::fs::read_dir(dir)
        .map(|rd| rd.filter_map(|e| e.ok()).map(|e| e.path()).filter(|p| p.is_file()).collect())
        .unwrap_or_default();
    out.sort();
    out
}

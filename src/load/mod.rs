//! Loading: the only module that reads input files. It turns a data folder into a
//! `Dataset` (plain Rust values for the small tables, polars frames of exact decimals for
//! everything that grows) and reports every problem it meets as a finding, so that one
//! run shows everything wrong with a delivery. It knows nothing about accounting rules
//! beyond the shape of each file; `validate` checks the rules.

mod acquired_reserves;
pub mod adjustments;
mod cash_flow_lines;
pub mod daily;
mod documents;
mod fair_values;
mod impairments;
mod ledger;
mod long_term;
pub mod machine;
mod ownership;
pub mod plans;
mod price_index;
mod settings;
pub mod table;

use std::collections::{BTreeMap, BTreeSet};
use std::path::{Path, PathBuf};
use std::str::FromStr;

use chrono::NaiveDate;
use polars::prelude::*;
use rust_decimal::Decimal;
use sha2::{Digest, Sha256};

use crate::findings::{Finding, Findings, Rule, Severity};
use crate::layout::{LayoutLine, Presentation};
use crate::model::*;
use table::{Spec, TextTable};

pub use documents::{DOCUMENT_COLUMNS, DOCUMENTS_FILE};
pub use ledger::LEDGER_COLUMNS;

/// Limits on what grows, and what happens at them: a data folder beyond a limit is
/// refused with a finding rather than processed slowly or partly.
pub const MAX_ENTITIES: usize = 100_000;
pub const MAX_ACCOUNTS: usize = 100_000;

/// How a rate is quoted against the presentation currency.
#[derive(Debug, Clone, Copy, PartialEq, Eq, PartialOrd, Ord, Hash, serde::Serialize)]
#[serde(rename_all = "snake_case")]
pub enum Quote {
    /// Units of the currency for one unit of the presentation currency (1.10 USD per EUR).
    UnitsPerPresentation,
    /// Presentation-currency units for one unit of the currency (0.909 EUR per USD).
    PresentationPerUnit,
}

impl Quote {
    pub fn parse(s: &str) -> Option<Self> {
        match s {
            "units_per_presentation" => Some(Quote::UnitsPerPresentation),
            "presentation_per_unit" => Some(Quote::PresentationPerUnit),
            _ => None,
        }
    }
    pub fn as_str(&self) -> &'static str {
        match self {
            Quote::UnitsPerPresentation => "units_per_presentation",
            Quote::PresentationPerUnit => "presentation_per_unit",
        }
    }
}

/// A rate as written, with its direction.
#[derive(Debug, Clone, Copy, PartialEq, Eq, serde::Serialize)]
pub struct Rate {
    pub value: Decimal,
    pub quote: Quote,
}

impl Rate {
    /// Presentation-currency value of `amount`, unrounded (rust_decimal's 28 digits when
    /// the quote divides). Used for explanations, never for the translated lines.
    pub fn apply(&self, amount: Decimal) -> Decimal {
        match self.quote {
            Quote::PresentationPerUnit => amount * self.value,
            Quote::UnitsPerPresentation => amount / self.value,
        }
    }
}

#[derive(Debug, Clone, PartialEq, Eq)]
pub struct MonthlyRate {
    pub period: Period,
    pub currency: Currency,
    pub closing: Rate,
    pub average: Rate,
    pub average_ytd: Option<Rate>,
    pub source: Source,
}

#[derive(Debug, Clone, PartialEq, Eq)]
pub struct HistoricalRate {
    pub entity: EntityId,
    pub account: GroupAccount,
    pub period: Period,
    pub rate: Rate,
    pub note: String,
    pub source: Source,
}

/// One input file and its SHA-256, recorded in every proof.
#[derive(Debug, Clone, PartialEq, Eq, serde::Serialize)]
pub struct InputFile {
    pub file: String,
    pub sha256: String,
}

/// Everything read from a data folder.
#[derive(Debug, Clone)]
pub struct Dataset {
    pub root: PathBuf,
    pub settings: Settings,
    pub entities: Vec<Entity>,
    pub holdings: Vec<Holding>,
    pub accounts: Vec<AccountDef>,
    pub layouts: Vec<LayoutLine>,
    /// entity, local_account, local_name, group_account, file, line.
    pub mappings: DataFrame,
    /// Trial balance rows: see `ledger::LEDGER_COLUMNS`.
    pub ledger: DataFrame,
    /// Opening balances: the ledger columns (kind "opening") plus amount_presentation;
    /// `period` is null for `opening.csv` and the first month of the fiscal year for a
    /// later year's `opening-<YYYY-MM>.csv` (`years` picks each year's rows).
    pub opening: DataFrame,
    pub rates: Vec<MonthlyRate>,
    pub historical_rates: Vec<HistoricalRate>,
    /// General price indices of hyperinflationary currencies (optional
    /// `rates/price_index.csv`, IAS 29), checked against the close by `restate::findings`.
    pub price_indices: Vec<PriceIndex>,
    pub acquisitions: Vec<Acquisition>,
    pub inventory_profits: Vec<InventoryProfit>,
    /// Fair value adjustments of acquired subsidiaries (optional
    /// `fair_value_adjustments.csv`).
    pub uplifts: Vec<Uplift>,
    /// Goodwill impairments by month (optional `goodwill_impairments.csv`).
    pub impairments: Vec<GoodwillImpairment>,
    /// Income tax rates per entity (optional `tax_rates.csv`).
    pub tax_rates: Vec<TaxRate>,
    /// Per-account segment refinements (optional `segment_accounts.csv`).
    pub segment_accounts: Vec<SegmentAccount>,
    pub net_investments: Vec<NetInvestment>,
    /// Long-term interests in equity-accounted investees (optional
    /// `long_term_interests.csv`, IAS 28.38), in the order they absorb losses.
    pub long_term_interests: Vec<LongTermInterest>,
    /// Named reserves' balances at acquisition (optional `reserves_at_acquisition.csv`).
    pub reserves_at_acquisition: Vec<ReserveAtAcquisition>,
    /// Shares bought and sold (optional `ownership_changes.csv`).
    pub ownership_changes: Vec<OwnershipChange>,
    /// Top-side entries (optional `group_adjustments.csv`), checked and posted by
    /// `close::topside`.
    pub group_adjustments: adjustments::GroupAdjustments,
    /// The statement of cash flows' line per group account (optional
    /// `cash_flow_lines.csv`; `None` when the file does not exist).
    pub cash_flow_lines: Option<Vec<crate::cash_flows::LineDef>>,
    /// Intercompany differences accepted for the close (optional file).
    pub accepted_differences: Vec<AcceptedDifference>,
    /// Entities with a folder (a delivery in progress or complete).
    pub delivered_entities: BTreeSet<EntityId>,
    /// Intercompany documents (optional detail): see `documents::DOCUMENT_COLUMNS`.
    pub documents: DataFrame,
    /// Entities that delivered a documents.csv (possibly empty): only their side of a
    /// pair has document detail.
    pub documented_entities: BTreeSet<EntityId>,
    pub inputs: Vec<InputFile>,
    /// What the close brings forward from the prior year's close in the same folder
    /// (`years::year_dataset` fills it; empty as loaded).
    pub brought_forward: BroughtForward,
}

impl Dataset {
    pub fn entity(&self, id: &EntityId) -> Option<&Entity> {
        self.entities.iter().find(|e| &e.id == id)
    }
    pub fn account(&self, a: &GroupAccount) -> Option<&AccountDef> {
        self.accounts.iter().find(|x| &x.account == a)
    }
    /// Periods present in the trial balances, sorted.
    pub fn periods(&self) -> Vec<Period> {
        let mut out = BTreeSet::new();
        if let Ok(c) = self.ledger.column("period")
            && let Ok(c) = c.unique()
            && let Ok(ca) = c.str()
        {
            for p in ca.iter().flatten() {
                if let Ok(p) = Period::from_str(p) {
                    out.insert(p);
                }
            }
        }
        out.into_iter().collect()
    }
}

/// Relative display name of a path under the data folder.
fn rel(root: &Path, p: &Path) -> String {
    p.strip_prefix(root).unwrap_or(p).to_string_lossy().replace('\\', "/")
}

/// Reads the data folder. Returns the dataset when the settings, entities and chart
/// could be read; every problem met on the way is in the findings either way.
pub fn load(root: &Path) -> (Option<Dataset>, Findings) {
    let _span = tracing::info_span!("load", root = %root.display()).entered();
    let mut f: Vec<Finding> = Vec::new();
    let mut inputs: Vec<InputFile> = Vec::new();
    let ent_dir = root.join("entities");
    let rates_dir = root.join("rates");
    for d in [&ent_dir, &rates_dir] {
        if !d.is_dir() {
            f.push(
                Finding::new(
                    Rule::FileMissing,
                    format!("folder `{}` does not exist", rel(root, d)),
                    "run tessera from the data folder or pass --data DIR (the folder holding entities/ and rates/)",
                )
                .in_file(rel(root, d)),
            );
        }
    }
    if !ent_dir.is_dir() {
        return (None, into_findings(f));
    }

    let settings_path = ent_dir.join("group.toml");
    let settings = match read_text(root, &settings_path, &mut f, &mut inputs) {
        Some(text) => settings::parse(&text, &rel(root, &settings_path), &mut f),
        None => None,
    };

    let entities = load_entities(root, &ent_dir.join("entities.csv"), &mut f, &mut inputs);
    let holdings = load_holdings(root, &ent_dir.join("holdings.csv"), &mut f, &mut inputs);
    let accounts = load_accounts(root, &ent_dir.join("accounts.csv"), &mut f, &mut inputs);
    let layouts = load_layouts(root, &ent_dir.join("layouts.csv"), &mut f, &mut inputs);

    f.extend(unknown_files(root, &ent_dir, ENTITY_FILES));
    f.extend(unknown_files(root, &rates_dir, RATE_FILES));

    let known: BTreeMap<EntityId, Currency> = entities.iter().map(|e| (e.id.clone(), e.currency)).collect();
    let Deliveries { delivered, documented, mapping_tables, ledger_tables, opening_tables, document_tables } =
        read_deliveries(root, &ent_dir, &known, &mut f, &mut inputs);

    let parse_span = tracing::debug_span!("parse_tables").entered();
    let mappings = ledger::build_mappings(mapping_tables, &mut f);
    let ledger_df = ledger::build_ledger(ledger_tables, &known, &mut f);
    let opening = ledger::build_opening(opening_tables, &known, &mut f);
    let documents = documents::build_documents(document_tables, &mut f);
    drop(parse_span);

    let pres = settings.as_ref().map(|s| s.presentation_currency);
    let rates = load_rates(root, &rates_dir.join("monthly.csv"), pres, &mut f, &mut inputs);
    let historical_rates = load_historical(root, &rates_dir.join("historical.csv"), &mut f, &mut inputs);
    let price_indices =
        price_index::load_price_indices(root, &rates_dir.join(price_index::PRICE_INDEX_FILE), &mut f, &mut inputs);
    let acquisitions = load_acquisitions(root, &ent_dir.join("acquisitions.csv"), &mut f, &mut inputs);
    let inventory_profits = load_inventory_profits(root, &ent_dir.join("inventory_profit.csv"), &mut f, &mut inputs);
    let uplifts = fair_values::load_uplifts(root, &ent_dir.join(FAIR_VALUES_FILE), &mut f, &mut inputs);
    let impairments = impairments::load_impairments(root, &ent_dir.join(IMPAIRMENTS_FILE), &mut f, &mut inputs);
    let tax_rates = fair_values::load_tax_rates(root, &ent_dir.join(TAX_RATES_FILE), &mut f, &mut inputs);
    let segment_accounts = load_segment_accounts(root, &ent_dir.join("segment_accounts.csv"), &mut f, &mut inputs);
    let net_investments = load_net_investments(root, &ent_dir.join("net_investment.csv"), &mut f, &mut inputs);
    let reserves_at_acquisition = acquired_reserves::load_reserves_at_acquisition(
        root,
        &ent_dir.join(acquired_reserves::RESERVES_AT_ACQUISITION_FILE),
        &mut f,
        &mut inputs,
    );
    let long_term_interests = long_term::load_long_term_interests(
        root,
        &ent_dir.join(long_term::LONG_TERM_INTERESTS_FILE),
        &mut f,
        &mut inputs,
    );
    let ownership_changes =
        ownership::load_ownership_changes(root, &ent_dir.join(ownership::OWNERSHIP_CHANGES_FILE), &mut f, &mut inputs);
    let group_adjustments = adjustments::load_group_adjustments(
        root,
        &ent_dir.join(adjustments::GROUP_ADJUSTMENTS_FILE),
        &mut f,
        &mut inputs,
    );
    let cash_flow_lines =
        cash_flow_lines::load_cash_flow_lines(root, &ent_dir.join("cash_flow_lines.csv"), &mut f, &mut inputs);
    let accepted_differences =
        load_accepted(root, &ent_dir.join(crate::intercompany::ACCEPTED_FILE), &mut f, &mut inputs);

    inputs.sort_by(|a, b| a.file.cmp(&b.file));
    let findings = into_findings(f);
    let Some(settings) = settings else {
        return (None, findings);
    };
    (
        Some(Dataset {
            root: root.to_path_buf(),
            settings,
            entities,
            holdings,
            accounts,
            layouts,
            mappings,
            ledger: ledger_df,
            opening,
            rates,
            historical_rates,
            price_indices,
            acquisitions,
            inventory_profits,
            uplifts,
            impairments,
            tax_rates,
            segment_accounts,
            net_investments,
            long_term_interests,
            reserves_at_acquisition,
            ownership_changes,
            group_adjustments,
            cash_flow_lines,
            accepted_differences,
            delivered_entities: delivered,
            documents,
            documented_entities: documented,
            inputs,
            brought_forward: BroughtForward::default(),
        }),
        findings,
    )
}

/// The tables of the entity folders by kind, with the entities that delivered a folder
/// and those that delivered document detail.
struct Deliveries {
    delivered: BTreeSet<EntityId>,
    documented: BTreeSet<EntityId>,
    mapping_tables: Vec<(EntityId, TextTable)>,
    ledger_tables: Vec<(EntityId, &'static str, TextTable)>,
    opening_tables: Vec<(EntityId, TextTable)>,
    document_tables: Vec<(EntityId, TextTable)>,
}

/// Reads every entity folder under `ent_dir` into its tables, with a finding for a folder
/// of no known entity, a file tessera does not read and a missing mapping.
fn read_deliveries(
    root: &Path,
    ent_dir: &Path,
    known: &BTreeMap<EntityId, Currency>,
    f: &mut Vec<Finding>,
    inputs: &mut Vec<InputFile>,
) -> Deliveries {
    let mut d = Deliveries {
        delivered: BTreeSet::new(),
        documented: BTreeSet::new(),
        mapping_tables: Vec::new(),
        ledger_tables: Vec::new(),
        opening_tables: Vec::new(),
        document_tables: Vec::new(),
    };
    let listed = list_entity_folders(ent_dir);
    let jobs = plan_reads(root, &listed, known);
    // The files of every entity folder are read (and hashed) in parallel up front; the
    // loop below then takes them in folder and file order, so findings and inputs come
    // out in the same order as a file-by-file read.
    let mut fetched = {
        let _span = tracing::debug_span!("read_files", files = jobs.len()).entered();
        prefetch(jobs)
    };
    let mut take = |file: &PathBuf, inputs: &mut Vec<InputFile>, f: &mut Vec<Finding>| -> Option<TextTable> {
        let got = fetched.remove(file)?;
        if let Some(sha) = got.sha256 {
            inputs.push(InputFile { file: rel(root, file), sha256: sha });
        }
        f.extend(got.findings);
        got.table
    };
    for (dir, files) in listed {
        let name = dir.file_name().map(|s| s.to_string_lossy().to_string()).unwrap_or_default();
        let id = EntityId::new(&name);
        if !known.contains_key(&id) {
            // `plans/` holds the budget and forecasts (load/plans.rs), not an entity.
            if name.starts_with('.') || name == plans::PLANS_FOLDER {
                continue;
            }
            f.push(unknown_folder_finding(&name, known).in_file(rel(root, &dir)));
            continue;
        }
        d.delivered.insert(id.clone());
        let mut has_mapping = false;
        for file in files {
            let fname = file.file_name().map(|s| s.to_string_lossy().to_string()).unwrap_or_default();
            let display = rel(root, &file);
            let kind = ledger::delivery_kind(&fname);
            if fname == "mapping.csv" {
                has_mapping = true;
                if let Some(t) = take(&file, inputs, f) {
                    d.mapping_tables.push((id.clone(), t));
                }
            } else if fname == "opening.csv" || ledger::opening_year(&fname).is_some() {
                if let Some(t) = take(&file, inputs, f) {
                    d.opening_tables.push((id.clone(), t));
                }
            } else if let Some(kind) = kind {
                if let Some(t) = take(&file, inputs, f) {
                    d.ledger_tables.push((id.clone(), kind, t));
                }
            } else if fname == DOCUMENTS_FILE {
                d.documented.insert(id.clone());
                // Document detail is optional: a file that cannot be used is a warning,
                // never a reason to set the entity's delivery aside.
                let before = f.len();
                let read = take(&file, inputs, f);
                for x in &mut f[before..] {
                    x.severity = Severity::Warning;
                }
                if let Some(t) = read {
                    d.document_tables.push((id.clone(), t));
                }
            } else if !fname.starts_with('.') {
                f.push(unknown_entity_file(&fname, &display).entity(&id));
            }
        }
        if !has_mapping {
            f.push(
                Finding::new(
                    Rule::FileMissing,
                    format!("entity {id} has no mapping.csv, so none of its accounts can be mapped"),
                    "deliver entities/<entity>/mapping.csv with the entity's local accounts",
                )
                .in_file(format!("entities/{name}/mapping.csv"))
                .entity(&id)
                .severity(Severity::Blocking),
            );
        }
    }
    d
}

/// Lists the folders under `ent_dir` with their files, both sorted by name.
fn list_entity_folders(ent_dir: &Path) -> Vec<(PathBuf, Vec<PathBuf>)> {
    let mut dirs: Vec<PathBuf> = std::fs::read_dir(ent_dir)
        .map(|rd| rd.filter_map(|e| e.ok()).map(|e| e.path()).filter(|p| p.is_dir()).collect())
        .unwrap_or_default();
    dirs.sort();
    dirs.into_iter()
        .map(|dir| {
            let mut files: Vec<PathBuf> = std::fs::read_dir(&dir)
                .map(|rd| rd.filter_map(|e| e.ok()).map(|e| e.path()).filter(|p| p.is_file()).collect())
                .unwrap_or_default();
            files.sort();
            (dir, files)
        })
        .collect()
}

/// Plans the reads of the entity folders: each file of a known entity that tessera
/// reads, with its display name and the table spec it is read by.
fn plan_reads(
    root: &Path,
    listed: &[(PathBuf, Vec<PathBuf>)],
    known: &BTreeMap<EntityId, Currency>,
) -> Vec<(PathBuf, String, &'static Spec<'static>)> {
    let mut jobs = Vec::new();
    for (dir, files) in listed {
        let name = dir.file_name().map(|s| s.to_string_lossy().to_string()).unwrap_or_default();
        if !known.contains_key(&EntityId::new(&name)) {
            continue;
        }
        for file in files {
            let fname = file.file_name().map(|s| s.to_string_lossy().to_string()).unwrap_or_default();
            let spec = if fname == "mapping.csv" {
                &ledger::MAPPING_SPEC
            } else if fname == "opening.csv" || ledger::opening_year(&fname).is_some() {
                &ledger::OPENING_SPEC
            } else if ledger::delivery_kind(&fname).is_some() {
                &ledger::LEDGER_SPEC
            } else if fname == DOCUMENTS_FILE {
                &documents::DOCUMENT_SPEC
            } else {
                continue;
            };
            jobs.push((file.clone(), rel(root, file), spec));
        }
    }
    jobs
}

/// Builds the finding for an entity folder `name` of no entity in `known`, naming the
/// nearest entity id when there is one.
fn unknown_folder_finding(name: &str, known: &BTreeMap<EntityId, Currency>) -> Finding {
    // Entity ids are case-sensitive and a folder must be named exactly as its
    // entity: a near miss is blocking, because the entity's whole delivery would
    // otherwise be lost without a word.
    let ids: Vec<&str> = known.keys().map(|e| e.as_str()).collect();
    match nearest(name, &ids) {
        Some(near) => Finding::new(
            Rule::EntityFolderUnknown,
            format!(
                "folder `{name}` is not an entity of entities.csv (the nearest is {near}; entity ids are case-sensitive); its files are not read"
            ),
            format!("rename the folder to `{near}` exactly as the entity is written in entities.csv"),
        )
        .entity(&EntityId::new(near))
        .severity(Severity::Blocking),
        None => Finding::new(
            Rule::EntityFolderUnknown,
            format!("folder `{name}` is not an entity of entities.csv; its files are not read"),
            "add the entity to entities/entities.csv or move the folder out of entities/",
        ),
    }
}

/// The fair value adjustments of acquired subsidiaries, with their useful lives.
pub const FAIR_VALUES_FILE: &str = "fair_value_adjustments.csv";
/// Goodwill impairments with the month each is recognised in.
pub const IMPAIRMENTS_FILE: &str = "goodwill_impairments.csv";
/// Income tax rates per entity, for deferred tax on consolidation adjustments.
pub const TAX_RATES_FILE: &str = "tax_rates.csv";

/// The files tessera reads directly under `entities/` (besides the entity folders).
pub const ENTITY_FILES: &[&str] = &[
    "group.toml",
    "entities.csv",
    "holdings.csv",
    "accounts.csv",
    "layouts.csv",
    "acquisitions.csv",
    "inventory_profit.csv",
    FAIR_VALUES_FILE,
    IMPAIRMENTS_FILE,
    TAX_RATES_FILE,
    "segment_accounts.csv",
    "net_investment.csv",
    "cash_flow_lines.csv",
    crate::intercompany::ACCEPTED_FILE,
    ownership::OWNERSHIP_CHANGES_FILE,
    adjustments::GROUP_ADJUSTMENTS_FILE,
    long_term::LONG_TERM_INTERESTS_FILE,
    acquired_reserves::RESERVES_AT_ACQUISITION_FILE,
];

/// The files tessera reads under `rates/`.
pub const RATE_FILES: &[&str] = &["monthly.csv", "historical.csv", price_index::PRICE_INDEX_FILE];

/// The fixed file names of an entity folder (trial balances are named by pattern).
const DELIVERY_FILES: &[&str] = &["mapping.csv", "opening.csv", DOCUMENTS_FILE];

/// Edit distance (Levenshtein) between two names, by characters.
fn distance(a: &str, b: &str) -> usize {
    let b: Vec<char> = b.chars().collect();
    let mut row: Vec<usize> = (0..=b.len()).collect();
    for (i, ca) in a.chars().enumerate() {
        let mut prev = row[0];
        row[0] = i + 1;
        for (j, cb) in b.iter().enumerate() {
            let cur = row[j + 1];
            row[j + 1] = (prev + usize::from(ca != *cb)).min(row[j] + 1).min(cur + 1);
            prev = cur;
        }
    }
    row[b.len()]
}

/// The expected name `name` most likely stands for: equal but for letter case, else
/// within an edit distance of 3 (and less than half the name); `None` when nothing is
/// that near.
pub fn nearest<'a>(name: &str, expected: &[&'a str]) -> Option<&'a str> {
    if let Some(same) = expected.iter().find(|e| e.eq_ignore_ascii_case(name)) {
        return Some(same);
    }
    let lower = name.to_lowercase();
    expected
        .iter()
        .map(|e| (distance(&lower, &e.to_lowercase()), *e))
        .filter(|(d, e)| *d <= 3 && *d * 2 < e.chars().count().max(1))
        .min()
        .map(|(_, e)| e)
}

/// Findings for the files of `dir` that are not among `expected` (folders are the
/// entity folders, checked apart). A name near an expected one is blocking, because the
/// file it was meant to be is then missing; any other is a warning.
fn unknown_files(root: &Path, dir: &Path, expected: &[&str]) -> Vec<Finding> {
    let mut names: Vec<String> = std::fs::read_dir(dir)
        .map(|rd| {
            rd.filter_map(|e| e.ok())
                .filter(|e| e.path().is_file())
                .map(|e| e.file_name().to_string_lossy().to_string())
                .collect()
        })
        .unwrap_or_default();
    names.sort();
    names
        .into_iter()
        .filter(|n| !n.starts_with('.') && !expected.contains(&n.as_str()))
        .map(|n| {
            let display = rel(root, &dir.join(&n));
            match nearest(&n, expected) {
                Some(near) => misnamed(&n, near, &display),
                None => Finding::new(
                    Rule::FileUnknown,
                    format!("file `{n}` is no part of the data folder's formats and is not read"),
                    "move it out of the data folder, or see docs/formats.md for the files tessera reads",
                )
                .in_file(display)
                .severity(Severity::Warning),
            }
        })
        .collect()
}

/// The finding for a file that is not read but is a near miss of a name tessera reads:
/// blocking, since what it holds would be lost.
fn misnamed(name: &str, near: &str, display: &str) -> Finding {
    Finding::new(
        Rule::FileUnknown,
        format!("file `{name}` is not read; it looks like `{near}`, which tessera reads"),
        format!("rename it to `{near}` (names are exact, in lower case)"),
    )
    .in_file(display)
    .severity(Severity::Blocking)
}

/// The finding for a file of an entity folder that is not read: a misnamed trial
/// balance (blocking: its months would be lost), a near miss of a fixed name
/// (blocking), or anything else (a warning).
fn unknown_entity_file(fname: &str, display: &str) -> Finding {
    let lower = fname.to_lowercase();
    if lower.starts_with("tb") || lower.contains("movement") || lower.contains("balance") {
        // The label is what comes before the first dot, with the `tb-` prefix restored.
        let stem = fname.split('.').next().unwrap_or(fname);
        let label = stem.get(2..).unwrap_or("").trim_start_matches(['-', '_', ' ']);
        let label = if lower.starts_with("tb") { label } else { stem };
        let candidates: Vec<String> = ["movements", "balances"]
            .iter()
            .flat_map(|k| ["csv", "parquet"].map(|e| format!("tb-{label}.{k}.{e}")))
            .collect();
        let refs: Vec<&str> = candidates.iter().map(|c| c.as_str()).collect();
        let near = refs
            .iter()
            .map(|c| (distance(&lower, &c.to_lowercase()) * 2 + distance(fname, c), *c))
            .min()
            .map(|(_, c)| c)
            .unwrap_or("tb-<label>.movements.csv");
        return Finding::new(
            Rule::DeliveryNameInvalid,
            format!(
                "file `{fname}` looks like a trial balance but its name does not declare its kind exactly; it is not read (the nearest valid name is `{near}`)"
            ),
            format!(
                "rename it to `{near}`: trial balances are tb-<label>.movements.csv or tb-<label>.balances.csv (or .parquet), in lower case"
            ),
        )
        .in_file(display)
        .severity(Severity::Blocking);
    }
    match nearest(fname, DELIVERY_FILES) {
        Some(near) => misnamed(fname, near, display),
        None => Finding::new(
            Rule::FileUnknown,
            format!("file `{fname}` is not part of an entity delivery and is not read"),
            "name trial balances tb-<label>.movements.csv or tb-<label>.balances.csv (or .parquet); move other files out of the folder",
        )
        .in_file(display)
        .severity(Severity::Warning),
    }
}

/// One entity file read ahead: its hash (when it could be read), table and findings.
struct Fetched {
    sha256: Option<String>,
    table: Option<TextTable>,
    findings: Vec<Finding>,
}

/// Reads and hashes `jobs` on as many threads as the machine has cores.
fn prefetch(jobs: Vec<(PathBuf, String, &'static Spec<'static>)>) -> std::collections::HashMap<PathBuf, Fetched> {
    let workers = std::thread::available_parallelism().map(|n| n.get()).unwrap_or(1).clamp(1, 8);
    let next = std::sync::atomic::AtomicUsize::new(0);
    let jobs = &jobs;
    let mut out = std::collections::HashMap::with_capacity(jobs.len());
    std::thread::scope(|scope| {
        let handles: Vec<_> = (0..workers)
            .map(|_| {
                scope.spawn(|| {
                    let mut done = Vec::new();
                    loop {
                        let k = next.fetch_add(1, std::sync::atomic::Ordering::Relaxed);
                        let Some((path, display, spec)) = jobs.get(k) else { break };
                        // One read serves both the hash and the table.
                        let mut findings = Vec::new();
                        let (sha256, table) = match std::fs::read(path) {
                            Ok(bytes) => (
                                Some(sha256_hex(&bytes)),
                                table::read_bytes(path, &bytes, display, spec, &mut findings),
                            ),
                            Err(_) => (None, table::read(path, display, spec, &mut findings)),
                        };
                        done.push((path.clone(), Fetched { sha256, table, findings }));
                    }
                    done
                })
            })
            .collect();
        for h in handles {
            // A worker panics only on a bug; re-raise it here.
            out.extend(h.join().unwrap_or_else(|e| std::panic::resume_unwind(e)));
        }
    });
    out
}

fn into_findings(f: Vec<Finding>) -> Findings {
    let mut out = Findings::default();
    out.extend(f);
    out
}

fn hash_into(root: &Path, path: &Path, inputs: &mut Vec<InputFile>) {
    if let Ok(bytes) = std::fs::read(path) {
        inputs.push(InputFile { file: rel(root, path), sha256: sha256_hex(&bytes) });
    }
}

pub fn sha256_hex(bytes: &[u8]) -> String {
    let digest = Sha256::digest(bytes);
    digest.iter().map(|b| format!("{b:02x}")).collect()
}

fn read_text(root: &Path, path: &Path, f: &mut Vec<Finding>, inputs: &mut Vec<InputFile>) -> Option<String> {
    match std::fs::read(path) {
        Ok(bytes) => {
            inputs.push(InputFile { file: rel(root, path), sha256: sha256_hex(&bytes) });
            match String::from_utf8(bytes) {
                Ok(s) => Some(s),
                Err(_) => {
                    f.push(
                        Finding::new(Rule::FileUnreadable, "the file is not UTF-8 text", "save it as UTF-8")
                            .in_file(rel(root, path)),
                    );
                    None
                }
            }
        }
        Err(e) => {
            f.push(
                Finding::new(
                    Rule::FileMissing,
                    format!("cannot read the file: {e}"),
                    "create it; docs/formats.md has an example of every file",
                )
                .in_file(rel(root, path)),
            );
            None
        }
    }
}

/// Opens a required small table, recording its hash.
fn open_table(
    root: &Path,
    path: &Path,
    spec: &Spec<'_>,
    f: &mut Vec<Finding>,
    inputs: &mut Vec<InputFile>,
) -> Option<TextTable> {
    if !path.is_file() {
        f.push(
            Finding::new(
                Rule::FileMissing,
                "the file does not exist",
                "create it; docs/formats.md has an example of every file",
            )
            .in_file(rel(root, path)),
        );
        return None;
    }
    let display = rel(root, path);
    match std::fs::read(path) {
        Ok(bytes) => {
            inputs.push(InputFile { file: display.clone(), sha256: sha256_hex(&bytes) });
            table::read_bytes(path, &bytes, &display, spec, f)
        }
        Err(_) => table::read(path, &display, spec, f),
    }
}

/// A required text cell, or a `ValueMissing` finding.
fn required(t: &TextTable, col: &str, row: usize, f: &mut Vec<Finding>) -> Option<String> {
    let v = t.get(col, row);
    if v.is_none() {
        f.push(
            Finding::new(Rule::ValueMissing, format!("`{col}` is empty"), format!("fill in `{col}`"))
                .in_file(&t.file)
                .line(t.line(row)),
        );
    }
    v
}

fn invalid(t: &TextTable, row: usize, col: &str, value: &str, expected: &str) -> Finding {
    Finding::new(
        Rule::ValueInvalid,
        format!("`{col}` is {value:?}, not {expected}"),
        format!("write `{col}` as {expected}"),
    )
    .in_file(&t.file)
    .line(t.line(row))
}

fn parse_share(t: &TextTable, row: usize, col: &str, f: &mut Vec<Finding>) -> Option<Decimal> {
    let v = required(t, col, row, f)?;
    match Decimal::from_str(&v) {
        Ok(d) if d >= Decimal::ZERO && d <= Decimal::ONE => Some(d),
        _ => {
            f.push(invalid(t, row, col, &v, "a share between 0 and 1 (0.60 for 60%)"));
            None
        }
    }
}

fn parse_date(t: &TextTable, row: usize, col: &str, v: &str, f: &mut Vec<Finding>) -> Option<NaiveDate> {
    match NaiveDate::parse_from_str(v, "%Y-%m-%d") {
        Ok(d) => Some(d),
        Err(_) => {
            f.push(invalid(t, row, col, v, "a date YYYY-MM-DD"));
            None
        }
    }
}

fn load_entities(root: &Path, path: &Path, f: &mut Vec<Finding>, inputs: &mut Vec<InputFile>) -> Vec<Entity> {
    let spec = Spec {
        required: &["entity", "name", "country", "currency"],
        optional: &["hyperinflationary_from"],
        prefixes: &["segment_"],
    };
    let Some(t) = open_table(root, path, &spec, f, inputs) else { return Vec::new() };
    if t.height() > MAX_ENTITIES {
        f.push(
            Finding::new(
                Rule::ValueInvalid,
                format!("{} entities exceed the limit of {MAX_ENTITIES}", t.height()),
                "split the group into sub-groups closed separately",
            )
            .in_file(&t.file),
        );
        return Vec::new();
    }
    if t.height() == 0 {
        f.push(
            Finding::new(
                Rule::TableEmpty,
                "entities.csv lists no entity (it has a header and no rows)",
                "list every entity of the group, one per row, the parent included",
            )
            .in_file(&t.file),
        );
        return Vec::new();
    }
    let seg_cols = t.prefixed("segment_");
    let mut seen: BTreeMap<String, u64> = BTreeMap::new();
    let mut out = Vec::new();
    for row in 0..t.height() {
        let line = t.line(row);
        let (Some(id), Some(name), Some(country), Some(ccy)) = (
            required(&t, "entity", row, f),
            required(&t, "name", row, f),
            required(&t, "country", row, f),
            required(&t, "currency", row, f),
        ) else {
            continue;
        };
        if let Some(first) = seen.insert(id.clone(), line) {
            f.push(
                Finding::new(
                    Rule::EntityDuplicated,
                    format!("entity {id} is listed twice (first on line {first})"),
                    "keep one row per entity",
                )
                .in_file(&t.file)
                .line(line)
                .entity(&EntityId::new(&id)),
            );
            continue;
        }
        let eid = EntityId::new(&id);
        if isocountry::CountryCode::for_alpha2(&country).is_err() {
            f.push(
                Finding::new(
                    Rule::CountryUnknown,
                    format!("country {country:?} of entity {id} is not an ISO 3166-1 alpha-2 code"),
                    "use a two-letter code such as NL, JP or BH",
                )
                .in_file(&t.file)
                .line(line)
                .entity(&eid),
            );
        }
        let Some(currency) = parse_functional_currency(&t, line, &id, &ccy, &eid, f) else { continue };
        let hyper = match t.get("hyperinflationary_from", row) {
            None => None,
            Some(v) => match Period::from_str(&v) {
                Ok(p) => Some(p),
                Err(_) => {
                    f.push(invalid(&t, row, "hyperinflationary_from", &v, "a period YYYY-MM"));
                    None
                }
            },
        };
        let segments = seg_cols
            .iter()
            .filter_map(|c| t.get(c, row).map(|v| (c.trim_start_matches("segment_").to_string(), v)))
            .collect();
        out.push(Entity {
            id: eid,
            name,
            country,
            currency,
            segments,
            hyperinflationary_from: hyper,
            source: Source::line(&t.file, line),
        });
    }
    out
}

/// Parses an entity's functional currency, which must be an ISO 4217 national currency
/// with a minor unit of 0 to 3 decimals; otherwise a finding on its line and `None`.
fn parse_functional_currency(
    t: &TextTable,
    line: u64,
    id: &str,
    ccy: &str,
    eid: &EntityId,
    f: &mut Vec<Finding>,
) -> Option<Currency> {
    match Currency::parse(ccy) {
        Some(c) if c.minor_unit_checked().is_some_and(|m| m <= 3) => Some(c),
        Some(c) => {
            f.push(
                Finding::new(
                    Rule::CurrencyUnknown,
                    format!("currency {c} of entity {id} has no ISO 4217 minor unit of 0 to 3 decimals"),
                    "a functional currency must be a national currency (ISO 4217)",
                )
                .in_file(&t.file)
                .line(line)
                .entity(eid),
            );
            None
        }
        None => {
            f.push(
                Finding::new(
                    Rule::CurrencyUnknown,
                    format!("currency {ccy:?} of entity {id} is not an ISO 4217 code"),
                    "use a three-letter code such as EUR, JPY or BHD",
                )
                .in_file(&t.file)
                .line(line)
                .entity(eid),
            );
            None
        }
    }
}

fn load_holdings(root: &Path, path: &Path, f: &mut Vec<Finding>, inputs: &mut Vec<InputFile>) -> Vec<Holding> {
    let spec = Spec {
        required: &["owner", "owned", "capital_share", "voting_share", "valid_from"],
        optional: &["valid_to", "arrangement", "method_override", "override_reason"],
        prefixes: &[],
    };
    let Some(t) = open_table(root, path, &spec, f, inputs) else { return Vec::new() };
    let mut out = Vec::new();
    for row in 0..t.height() {
        let line = t.line(row);
        let owner = required(&t, "owner", row, f);
        let owned = required(&t, "owned", row, f);
        let cap = parse_share(&t, row, "capital_share", f);
        let votes = parse_share(&t, row, "voting_share", f);
        let from = required(&t, "valid_from", row, f).and_then(|v| parse_date(&t, row, "valid_from", &v, f));
        let to = t.get("valid_to", row).map(|v| parse_date(&t, row, "valid_to", &v, f));
        let arrangement = match t.get("arrangement", row).as_deref() {
            None => Some(None),
            Some("joint_operation") => Some(Some(Arrangement::JointOperation)),
            Some("joint_venture") => Some(Some(Arrangement::JointVenture)),
            Some(v) => {
                f.push(invalid(&t, row, "arrangement", v, "joint_operation, joint_venture or empty"));
                None
            }
        };
        let method_override = match (t.get("method_override", row), t.get("override_reason", row)) {
            (None, None) => Some(None),
            (None, Some(_)) => {
                f.push(
                    Finding::new(
                        Rule::HoldingInvalid,
                        "`override_reason` is given without a `method_override`",
                        "name the method or drop the reason",
                    )
                    .in_file(&t.file)
                    .line(line),
                );
                None
            }
            (Some(m), reason) => match (Method::parse(&m), reason) {
                (Some(m), Some(r)) => Some(Some((m, r))),
                (Some(_), None) => {
                    f.push(
                        Finding::new(
                            Rule::HoldingInvalid,
                            "a method override needs a reason",
                            "fill in `override_reason`: overriding the method is a judgement that must be documented",
                        )
                        .in_file(&t.file)
                        .line(line),
                    );
                    None
                }
                (None, _) => {
                    f.push(invalid(&t, row, "method_override", &m, "full, proportionate, equity or none"));
                    None
                }
            },
        };
        let (Some(owner), Some(owned), Some(cap), Some(votes), Some(from), Some(arrangement), Some(method_override)) =
            (owner, owned, cap, votes, from, arrangement, method_override)
        else {
            continue;
        };
        let valid_to = match to {
            None => None,
            Some(Some(d)) => Some(d),
            Some(None) => continue,
        };
        if owner == owned {
            f.push(
                Finding::new(
                    Rule::HoldingInvalid,
                    format!("{owner} is shown holding itself"),
                    "remove the row; treasury shares are not holdings",
                )
                .in_file(&t.file)
                .line(line)
                .entity(&EntityId::new(&owner)),
            );
            continue;
        }
        if valid_to.is_some_and(|to| to < from) {
            f.push(
                Finding::new(Rule::HoldingInvalid, "`valid_to` is before `valid_from`", "correct the dates")
                    .in_file(&t.file)
                    .line(line),
            );
            continue;
        }
        out.push(Holding {
            owner: EntityId::new(owner),
            owned: EntityId::new(owned),
            capital_share: cap,
            voting_share: votes,
            valid_from: from,
            valid_to,
            arrangement,
            method_override,
            source: Source::line(&t.file, line),
        });
    }
    out
}

fn load_accounts(root: &Path, path: &Path, f: &mut Vec<Finding>, inputs: &mut Vec<InputFile>) -> Vec<AccountDef> {
    let spec = Spec {
        required: &["account", "name", "statement", "class", "basis"],
        optional: &["ic_kind", "non_current", "reserve", "monetary"],
        prefixes: &[],
    };
    let Some(t) = open_table(root, path, &spec, f, inputs) else { return Vec::new() };
    let mut seen: BTreeMap<String, u64> = BTreeMap::new();
    let mut out = Vec::new();
    for row in 0..t.height().min(MAX_ACCOUNTS) {
        let line = t.line(row);
        let (Some(account), Some(name), Some(st), Some(cl), Some(ba)) = (
            required(&t, "account", row, f),
            required(&t, "name", row, f),
            required(&t, "statement", row, f),
            required(&t, "class", row, f),
            required(&t, "basis", row, f),
        ) else {
            continue;
        };
        if let Some(first) = seen.insert(account.clone(), line) {
            f.push(
                Finding::new(
                    Rule::AccountDuplicated,
                    format!("group account {account} is defined twice (first on line {first})"),
                    "keep one row per account",
                )
                .in_file(&t.file)
                .line(line)
                .account(&account),
            );
            continue;
        }
        let statement = match st.as_str() {
            "balance_sheet" => Statement::BalanceSheet,
            "profit_or_loss" => Statement::ProfitOrLoss,
            "oci" => Statement::Oci,
            v => {
                f.push(invalid(&t, row, "statement", v, "balance_sheet, profit_or_loss or oci"));
                continue;
            }
        };
        let class = match cl.as_str() {
            "asset" => AccountClass::Asset,
            "liability" => AccountClass::Liability,
            "equity" => AccountClass::Equity,
            "income" => AccountClass::Income,
            "expense" => AccountClass::Expense,
            v => {
                f.push(invalid(&t, row, "class", v, "asset, liability, equity, income or expense"));
                continue;
            }
        };
        let basis = match ba.as_str() {
            "closing" => Basis::Closing,
            "average" => Basis::Average,
            "historical" => Basis::Historical,
            v => {
                f.push(invalid(&t, row, "basis", v, "closing, average or historical"));
                continue;
            }
        };
        let coherent = matches!(
            (statement, class, basis),
            (Statement::BalanceSheet, AccountClass::Asset | AccountClass::Liability, Basis::Closing)
                | (Statement::BalanceSheet, AccountClass::Equity, Basis::Historical)
                | (
                    Statement::ProfitOrLoss | Statement::Oci,
                    AccountClass::Income | AccountClass::Expense,
                    Basis::Average
                )
        );
        if !coherent {
            f.push(
                Finding::new(
                    Rule::AccountInvalid,
                    format!("group account {account}: statement {st}, class {cl} and basis {ba} do not go together"),
                    "assets and liabilities are balance_sheet/closing, equity balance_sheet/historical, income and expenses profit_or_loss or oci/average (IAS 21.39)",
                )
                .in_file(&t.file)
                .line(line)
                .account(&account),
            );
            continue;
        }
        let non_current = match t.get("non_current", row).as_deref() {
            None | Some("false") => false,
            Some("true") => true,
            Some(v) => {
                f.push(invalid(&t, row, "non_current", v, "true, false or empty"));
                false
            }
        };
        out.push(AccountDef {
            account: GroupAccount::new(account),
            name,
            statement,
            class,
            basis,
            ic_kind: t.get("ic_kind", row),
            non_current,
            reserve: t.get("reserve", row).map(GroupAccount::new),
            monetary: price_index::parse_monetary(&t, row, class, f),
            source: Source::line(&t.file, line),
        });
    }
    out
}

fn load_layouts(root: &Path, path: &Path, f: &mut Vec<Finding>, inputs: &mut Vec<InputFile>) -> Vec<LayoutLine> {
    let spec = Spec {
        required: &["statement", "line", "label"],
        optional: &["accounts", "total_of", "presentation"],
        prefixes: &[],
    };
    let Some(t) = open_table(root, path, &spec, f, inputs) else { return Vec::new() };
    let mut out = Vec::new();
    for row in 0..t.height() {
        let (Some(statement), Some(line_id), Some(label)) =
            (required(&t, "statement", row, f), required(&t, "line", row, f), required(&t, "label", row, f))
        else {
            continue;
        };
        let presentation = match t.get("presentation", row).as_deref() {
            None | Some("debit_positive") => Presentation::DebitPositive,
            Some("credit_positive") => Presentation::CreditPositive,
            Some(v) => {
                f.push(invalid(&t, row, "presentation", v, "debit_positive or credit_positive"));
                continue;
            }
        };
        out.push(LayoutLine {
            statement,
            line: line_id,
            label,
            accounts: t.get("accounts", row),
            total_of: t.get("total_of", row),
            presentation,
            source: Source::line(&t.file, t.line(row)),
        });
    }
    out
}

/// The bounds of a rate, by quote: a quote that divides (units per presentation unit)
/// must be at least 10^-3, so that an amount below 10^15 divided by it stays below
/// 10^18 at the 20 decimals of the quotient (38 digits); a rate of either quote is at
/// most 10^6, so that a product stays below 10^21 (see `money`).
pub fn rate_bounds(quote: Quote) -> (Decimal, Decimal) {
    let max = Decimal::from(1_000_000);
    match quote {
        Quote::UnitsPerPresentation => (Decimal::new(1, 3), max),
        Quote::PresentationPerUnit => (Decimal::new(1, crate::money::RATE_SCALE as u32), max),
    }
}

fn parse_rate(t: &TextTable, row: usize, col: &str, quote: Quote, f: &mut Vec<Finding>) -> Option<Rate> {
    let v = t.get(col, row)?;
    let (low, high) = rate_bounds(quote);
    match Decimal::from_str(&v) {
        Ok(d) if d.scale() as usize <= crate::money::RATE_SCALE && d > Decimal::ZERO && (d < low || d > high) => {
            f.push(
                Finding::new(
                    Rule::RateOutOfRange,
                    format!("`{col}` rate {v} ({}) is outside {low} to {high}", quote.as_str()),
                    "check the rate and its quote: a rate this far out is almost always a unit or quote error; tessera keeps every translated amount exact only inside these bounds",
                )
                .in_file(&t.file)
                .line(t.line(row)),
            );
            None
        }
        Ok(d) if d.scale() as usize <= crate::money::RATE_SCALE && d > Decimal::ZERO => Some(Rate { value: d, quote }),
        Ok(d) if d <= Decimal::ZERO => {
            f.push(
                Finding::new(
                    Rule::RateNotPositive,
                    format!("`{col}` rate is {v}"),
                    "a rate must be positive; correct it at the source",
                )
                .in_file(&t.file)
                .line(t.line(row)),
            );
            None
        }
        _ => {
            f.push(invalid(t, row, col, &v, "a positive decimal with at most 10 decimals"));
            None
        }
    }
}

fn load_rates(
    root: &Path,
    path: &Path,
    presentation: Option<Currency>,
    f: &mut Vec<Finding>,
    inputs: &mut Vec<InputFile>,
) -> Vec<MonthlyRate> {
    let spec = Spec {
        required: &["period", "currency", "closing", "average", "quote"],
        optional: &["average_ytd", "source"],
        prefixes: &[],
    };
    let Some(t) = open_table(root, path, &spec, f, inputs) else { return Vec::new() };
    let mut seen: BTreeMap<(Period, Currency), u64> = BTreeMap::new();
    let mut out = Vec::new();
    for row in 0..t.height() {
        let line = t.line(row);
        let (Some(p), Some(c), Some(q)) =
            (required(&t, "period", row, f), required(&t, "currency", row, f), required(&t, "quote", row, f))
        else {
            continue;
        };
        let Ok(period) = Period::from_str(&p) else {
            f.push(invalid(&t, row, "period", &p, "a period YYYY-MM"));
            continue;
        };
        let Some(currency) = Currency::parse(&c) else {
            f.push(
                Finding::new(
                    Rule::CurrencyUnknown,
                    format!("currency {c:?} is not an ISO 4217 code"),
                    "use a three-letter ISO 4217 code",
                )
                .in_file(&t.file)
                .line(line)
                .period(period),
            );
            continue;
        };
        if Some(currency) == presentation {
            f.push(
                Finding::new(
                    Rule::ValueInvalid,
                    format!("a rate is given for the presentation currency {currency} itself"),
                    "remove the row: the presentation currency translates at 1",
                )
                .in_file(&t.file)
                .line(line)
                .period(period)
                .severity(Severity::Warning),
            );
            continue;
        }
        let Some(quote) = Quote::parse(&q) else {
            f.push(invalid(&t, row, "quote", &q, "units_per_presentation or presentation_per_unit"));
            continue;
        };
        if t.get("closing", row).is_none() || t.get("average", row).is_none() {
            f.push(
                Finding::new(
                    Rule::RateMissing,
                    format!("{currency} {period}: closing or average rate is empty"),
                    "fill in both rates",
                )
                .in_file(&t.file)
                .line(line)
                .period(period),
            );
        }
        let closing = parse_rate(&t, row, "closing", quote, f);
        let average = parse_rate(&t, row, "average", quote, f);
        let average_ytd = parse_rate(&t, row, "average_ytd", quote, f);
        if let Some(first) = seen.insert((period, currency), line) {
            f.push(
                Finding::new(
                    Rule::RateDuplicated,
                    format!("{currency} {period} is given twice (first on line {first})"),
                    "keep one row per currency and month",
                )
                .in_file(&t.file)
                .line(line)
                .period(period),
            );
            continue;
        }
        let (Some(closing), Some(average)) = (closing, average) else { continue };
        out.push(MonthlyRate { period, currency, closing, average, average_ytd, source: Source::line(&t.file, line) });
    }
    out
}

fn load_historical(root: &Path, path: &Path, f: &mut Vec<Finding>, inputs: &mut Vec<InputFile>) -> Vec<HistoricalRate> {
    if !path.is_file() {
        return Vec::new();
    }
    let spec = Spec { required: &["entity", "account", "period", "rate", "quote"], optional: &["note"], prefixes: &[] };
    let Some(t) = open_table(root, path, &spec, f, inputs) else { return Vec::new() };
    let mut out = Vec::new();
    for row in 0..t.height() {
        let (Some(e), Some(a), Some(p), Some(q)) = (
            required(&t, "entity", row, f),
            required(&t, "account", row, f),
            required(&t, "period", row, f),
            required(&t, "quote", row, f),
        ) else {
            continue;
        };
        let Ok(period) = Period::from_str(&p) else {
            f.push(invalid(&t, row, "period", &p, "a period YYYY-MM"));
            continue;
        };
        let Some(quote) = Quote::parse(&q) else {
            f.push(invalid(&t, row, "quote", &q, "units_per_presentation or presentation_per_unit"));
            continue;
        };
        let Some(rate) = parse_rate(&t, row, "rate", quote, f) else {
            if t.get("rate", row).is_none() {
                f.push(
                    Finding::new(Rule::RateMissing, "`rate` is empty", "fill in the rate of the transaction's date")
                        .in_file(&t.file)
                        .line(t.line(row)),
                );
            }
            continue;
        };
        out.push(HistoricalRate {
            entity: EntityId::new(e),
            account: GroupAccount::new(a),
            period,
            rate,
            note: t.get("note", row).unwrap_or_default(),
            source: Source::line(&t.file, t.line(row)),
        });
    }
    out
}

/// Reads one daily reference-rate file (or an override file) as text, with its hash.
pub fn read_rate_source(path: &Path) -> Result<(String, String), Box<Finding>> {
    let display = path.to_string_lossy().to_string();
    let bytes = std::fs::read(path).map_err(|e| {
        Finding::new(
            Rule::FileMissing,
            format!("cannot read the file: {e}"),
            "check the path given on the command line",
        )
        .in_file(&display)
    })?;
    let sha = sha256_hex(&bytes);
    let text = String::from_utf8(bytes).map_err(|_| {
        Finding::new(Rule::FileUnreadable, "the file is not UTF-8 text", "save it as UTF-8").in_file(&display)
    })?;
    Ok((text, sha))
}

fn parse_amount_cell(t: &TextTable, row: usize, col: &str, f: &mut Vec<Finding>) -> Option<Decimal> {
    let v = t.get(col, row)?;
    match Decimal::from_str(&v) {
        Ok(d)
            if d.scale() <= 3 && d.abs() < Decimal::from(10i64.pow(crate::money::AMOUNT_MAX_INTEGER_DIGITS as u32)) =>
        {
            Some(d)
        }
        _ => {
            f.push(
                Finding::new(
                    Rule::AmountMalformed,
                    format!("`{col}` is {v:?}, not a plain decimal with at most 3 decimals below 10^15"),
                    "write it as -1234.56",
                )
                .in_file(&t.file)
                .line(t.line(row)),
            );
            None
        }
    }
}

fn load_acquisitions(root: &Path, path: &Path, f: &mut Vec<Finding>, inputs: &mut Vec<InputFile>) -> Vec<Acquisition> {
    if !path.is_file() {
        return Vec::new();
    }
    let spec = Spec {
        required: &["owned", "date", "consideration", "nci_measurement", "net_assets", "net_assets_presentation"],
        optional: &[
            "nci_fair_value",
            "impairment",
            "impairment_year",
            "fair_value_adjustment",
            "fair_value_account",
            "note",
        ],
        prefixes: &[],
    };
    let Some(t) = open_table(root, path, &spec, f, inputs) else { return Vec::new() };
    let mut out = Vec::new();
    for row in 0..t.height() {
        let owned = required(&t, "owned", row, f);
        let date = required(&t, "date", row, f).and_then(|v| parse_date(&t, row, "date", &v, f));
        let measurement = match required(&t, "nci_measurement", row, f).as_deref() {
            Some("fair_value") => Some(NciMeasurement::FairValue),
            Some("share_of_net_assets") => Some(NciMeasurement::ShareOfNetAssets),
            Some(v) => {
                f.push(invalid(&t, row, "nci_measurement", v, "fair_value or share_of_net_assets"));
                None
            }
            None => None,
        };
        let consideration = required(&t, "consideration", row, f).and(parse_amount_cell(&t, row, "consideration", f));
        let net_assets = required(&t, "net_assets", row, f).and(parse_amount_cell(&t, row, "net_assets", f));
        let nap = required(&t, "net_assets_presentation", row, f).and(parse_amount_cell(
            &t,
            row,
            "net_assets_presentation",
            f,
        ));
        let nci_fv = parse_amount_cell(&t, row, "nci_fair_value", f);
        let impairment = parse_amount_cell(&t, row, "impairment", f).unwrap_or_default();
        let impairment_year = parse_amount_cell(&t, row, "impairment_year", f).unwrap_or_default();
        if impairment_year.is_sign_negative() || impairment_year > impairment {
            f.push(
                Finding::new(
                    Rule::ValueInvalid,
                    format!("`impairment_year` {impairment_year} is not between 0 and `impairment` {impairment}"),
                    "give the impairment to date in `impairment` and the part of it recognised this fiscal year in `impairment_year`",
                )
                .in_file(&t.file)
                .line(t.line(row)),
            );
            continue;
        }
        let fva = parse_amount_cell(&t, row, "fair_value_adjustment", f).unwrap_or_default();
        let fva_account = t.get("fair_value_account", row).map(GroupAccount::new);
        if !fva.is_zero() && fva_account.is_none() {
            f.push(
                Finding::new(
                    Rule::ValueMissing,
                    format!("`fair_value_adjustment` is {fva} but `fair_value_account` is empty"),
                    "name the group account of the asset or liability whose fair value differs from its carrying amount (IFRS 3.18)",
                )
                .in_file(&t.file)
                .line(t.line(row)),
            );
            continue;
        }
        let (Some(owned), Some(date), Some(m), Some(c), Some(na), Some(nap)) =
            (owned, date, measurement, consideration, net_assets, nap)
        else {
            continue;
        };
        // The close takes shares of the net assets at the acquisition date's rate as
        // amount x net_assets_presentation / net_assets (exact, one rounding), which must
        // stay inside rust_decimal's 28 digits: the product is bounded here, where the
        // row is known, rather than overflowing in the close.
        let widest = [nci_fv.unwrap_or_default(), na, fva].into_iter().map(|x| x.abs()).max().unwrap_or_default();
        if widest.checked_mul(nap.abs()).is_none_or(|p| p >= Decimal::from_i128_with_scale(10i128.pow(27), 0)) {
            f.push(
                Finding::new(
                    Rule::AmountTooLarge,
                    format!(
                        "`net_assets_presentation` {nap} times the largest of `net_assets`, `nci_fair_value` and `fair_value_adjustment` ({widest}) is not below 10^27, beyond exact arithmetic"
                    ),
                    "check the amounts and their units; one of them is almost certainly a pasting or unit error",
                )
                .in_file(&t.file)
                .line(t.line(row)),
            );
            continue;
        }
        if m == NciMeasurement::FairValue && nci_fv.is_none() {
            f.push(
                Finding::new(
                    Rule::ValueMissing,
                    "NCI measured at fair value needs `nci_fair_value`",
                    "fill in the NCI's fair value at the acquisition date (IFRS 3.19)",
                )
                .in_file(&t.file)
                .line(t.line(row)),
            );
            continue;
        }
        out.push(Acquisition {
            owned: EntityId::new(owned),
            date,
            consideration: c,
            nci_measurement: m,
            nci_fair_value: nci_fv,
            net_assets: na,
            net_assets_presentation: nap,
            impairment,
            impairment_year,
            fair_value_adjustment: fva,
            fair_value_account: fva_account,
            source: Source::line(&t.file, t.line(row)),
        });
    }
    out
}

fn load_inventory_profits(
    root: &Path,
    path: &Path,
    f: &mut Vec<Finding>,
    inputs: &mut Vec<InputFile>,
) -> Vec<InventoryProfit> {
    if !path.is_file() {
        return Vec::new();
    }
    let spec = Spec {
        required: &["seller", "buyer", "period", "inventory_amount", "margin_rate"],
        optional: &["currency", "note"],
        prefixes: &[],
    };
    let Some(t) = open_table(root, path, &spec, f, inputs) else { return Vec::new() };
    let mut out = Vec::new();
    for row in 0..t.height() {
        let (Some(seller), Some(buyer), Some(p)) =
            (required(&t, "seller", row, f), required(&t, "buyer", row, f), required(&t, "period", row, f))
        else {
            continue;
        };
        let Ok(period) = Period::from_str(&p) else {
            f.push(invalid(&t, row, "period", &p, "a period YYYY-MM"));
            continue;
        };
        let amount = required(&t, "inventory_amount", row, f).and(parse_amount_cell(&t, row, "inventory_amount", f));
        let margin = match required(&t, "margin_rate", row, f) {
            Some(v) => match Decimal::from_str(&v) {
                Ok(d) if d >= Decimal::ZERO && d < Decimal::ONE => Some(d),
                _ => {
                    f.push(invalid(
                        &t,
                        row,
                        "margin_rate",
                        &v,
                        "a share of the transfer price in [0, 1), e.g. 0.20 for a 25% mark-up",
                    ));
                    None
                }
            },
            None => None,
        };
        let (Some(amount), Some(margin)) = (amount, margin) else { continue };
        out.push(InventoryProfit {
            seller: EntityId::new(seller),
            buyer: EntityId::new(buyer),
            period,
            inventory_amount: amount,
            margin_rate: margin,
            source: Source::line(&t.file, t.line(row)),
        });
    }
    out
}

/// The optional per-account segment refinements. Only the shape is checked here; that
/// the entity exists and that no account is claimed twice is checked by `segments`.
fn load_segment_accounts(
    root: &Path,
    path: &Path,
    f: &mut Vec<Finding>,
    inputs: &mut Vec<InputFile>,
) -> Vec<SegmentAccount> {
    if !path.is_file() {
        return Vec::new();
    }
    let spec = Spec { required: &["entity", "key", "segment", "accounts"], optional: &["note"], prefixes: &[] };
    let Some(t) = open_table(root, path, &spec, f, inputs) else { return Vec::new() };
    let mut out = Vec::new();
    for row in 0..t.height() {
        let (Some(entity), Some(key), Some(segment), Some(accounts)) = (
            required(&t, "entity", row, f),
            required(&t, "key", row, f),
            required(&t, "segment", row, f),
            required(&t, "accounts", row, f),
        ) else {
            continue;
        };
        out.push(SegmentAccount {
            entity: EntityId::new(entity),
            key: key.trim_start_matches("segment_").to_string(),
            segment,
            accounts,
            source: Source::line(&t.file, t.line(row)),
        });
    }
    out
}

/// `entities/net_investment.csv` (optional): intragroup monetary items designated part of
/// a net investment. Only the shape is checked here; `validate` checks the entities and
/// accounts named.
fn load_net_investments(
    root: &Path,
    path: &Path,
    f: &mut Vec<Finding>,
    inputs: &mut Vec<InputFile>,
) -> Vec<NetInvestment> {
    if !path.is_file() {
        return Vec::new();
    }
    let spec = Spec {
        required: &["entity", "counterparty", "account", "fx_account", "from"],
        optional: &["note"],
        prefixes: &[],
    };
    let Some(t) = open_table(root, path, &spec, f, inputs) else { return Vec::new() };
    let mut out = Vec::new();
    for row in 0..t.height() {
        let cells = (
            required(&t, "entity", row, f),
            required(&t, "counterparty", row, f),
            required(&t, "account", row, f),
            required(&t, "fx_account", row, f),
            required(&t, "from", row, f),
        );
        let (Some(entity), Some(counterparty), Some(account), Some(fx_account), Some(from)) = cells else { continue };
        let Some(from) = parse_date(&t, row, "from", &from, f) else { continue };
        out.push(NetInvestment {
            entity: EntityId::new(entity),
            counterparty: EntityId::new(counterparty),
            account: GroupAccount::new(account),
            fx_account: GroupAccount::new(fx_account),
            from,
            note: t.get("note", row).unwrap_or_default(),
            source: Source::line(&t.file, t.line(row)),
        });
    }
    out
}

/// An intercompany difference that the group has looked at and accepts for one period's
/// close, with the reason and who accepted it (`entities/accepted_differences.csv`).
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct AcceptedDifference {
    pub entity: EntityId,
    pub counterparty: EntityId,
    pub kind: String,
    pub period: Period,
    /// The pair's difference in the presentation currency, as `tessera match` shows it.
    pub amount: Decimal,
    pub reason: String,
    pub accepted_by: String,
    pub source: Source,
}

fn load_accepted(
    root: &Path,
    path: &Path,
    f: &mut Vec<Finding>,
    inputs: &mut Vec<InputFile>,
) -> Vec<AcceptedDifference> {
    if !path.is_file() {
        return Vec::new();
    }
    let spec = Spec {
        required: &["entity", "counterparty", "kind", "period", "amount", "reason", "accepted_by"],
        optional: &[],
        prefixes: &[],
    };
    let Some(t) = open_table(root, path, &spec, f, inputs) else { return Vec::new() };
    let mut out = Vec::new();
    for row in 0..t.height() {
        let cells = (
            required(&t, "entity", row, f),
            required(&t, "counterparty", row, f),
            required(&t, "kind", row, f),
            required(&t, "period", row, f),
            required(&t, "amount", row, f).and(parse_amount_cell(&t, row, "amount", f)),
            required(&t, "reason", row, f),
            required(&t, "accepted_by", row, f),
        );
        let (Some(entity), Some(counterparty), Some(kind), Some(p), Some(amount), Some(reason), Some(accepted_by)) =
            cells
        else {
            continue;
        };
        let Ok(period) = Period::from_str(&p) else {
            f.push(invalid(&t, row, "period", &p, "a period YYYY-MM"));
            continue;
        };
        out.push(AcceptedDifference {
            entity: EntityId::new(entity),
            counterparty: EntityId::new(counterparty),
            kind,
            period,
            amount,
            reason,
            accepted_by,
            source: Source::line(&t.file, t.line(row)),
        });
    }
    out
}

/// The stage figures a child run wrote with `--stages FILE` (for `tessera bench`).
pub fn read_stages(path: &Path) -> std::io::Result<Vec<crate::stages::StageRecord>> {
    let text = std::fs::read_to_string(path)?;
    serde_json::from_str(&text).map_err(|e| std::io::Error::other(format!("{}: {e}", path.display())))
}

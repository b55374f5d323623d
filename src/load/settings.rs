//! The group settings file `entities/group.toml`: read, then validated key by key so that
//! every wrong setting is reported in the same run.

use std::collections::BTreeMap;
use std::str::FromStr;

use rust_decimal::Decimal;
use serde::Deserialize;

use crate::findings::{Finding, Rule};
use crate::model::*;

#[derive(Deserialize)]
#[serde(deny_unknown_fields)]
struct RawSettings {
    name: Option<String>,
    parent: Option<String>,
    presentation_currency: Option<String>,
    fiscal_year_start: Option<i64>,
    #[serde(default)]
    policies: BTreeMap<String, String>,
    #[serde(default)]
    accounts: BTreeMap<String, String>,
    #[serde(default)]
    intercompany: BTreeMap<String, toml::Value>,
    #[serde(default)]
    plausibility: BTreeMap<String, toml::Value>,
    segments: Option<BTreeMap<String, toml::Value>>,
}

const PLAUSIBILITY_KEYS: &[&str] = &["rate_move", "sign_months"];

const POLICY_KEYS: &[&str] = &[
    "rounding",
    "income_translation",
    "ifric16",
    "significant_influence",
    "goodwill_impairment_rate",
    "deferred_tax",
    "associate_dividends",
];
const ROLE_KEYS: &[&str] = &[
    "retained_earnings",
    "translation_reserve",
    "translation_difference",
    "non_controlling_interest",
    "goodwill",
    "equity_investments",
    "equity_result",
    "intercompany_difference",
    "inventory",
    "cost_of_sales",
    "goodwill_impairment",
    "bargain_purchase_gain",
    "net_monetary_position",
    "deferred_tax",
    "deferred_tax_expense",
];
const IC_KEYS: &[&str] = &["tolerance_absolute", "tolerance_relative", "timing_window_days", "timing"];
const SEGMENT_KEYS: &[&str] = &[
    "key",
    "revenue",
    "profit",
    "depreciation",
    "interest_income",
    "interest_expense",
    "tax",
    "equity_result",
    "assets",
    "liabilities",
    "other",
    "unallocated",
    "country_materiality",
];

/// The `[segments]` table: every key checked, every problem a finding.
fn parse_segments(
    raw: &BTreeMap<String, toml::Value>,
    file: &str,
    findings: &mut Vec<Finding>,
) -> Option<SegmentSettings> {
    let before = findings.len();
    let mut bad = |key: &str, msg: String, action: &str| {
        findings.push(Finding::new(Rule::SettingInvalid, format!("`segments.{key}`: {msg}"), action).in_file(file));
    };
    for k in raw.keys() {
        if !SEGMENT_KEYS.contains(&k.as_str()) {
            bad(k, "unknown setting".into(), &format!("known settings: {}", SEGMENT_KEYS.join(", ")));
        }
    }
    let mut text = |k: &str, required: bool| -> Option<String> {
        match raw.get(k) {
            Some(toml::Value::String(s)) if !s.trim().is_empty() => Some(s.trim().to_string()),
            None if !required => None,
            None => {
                bad(k, "missing".into(), "name the layout lines or group accounts, e.g. \"REV\"");
                None
            }
            Some(v) => {
                bad(
                    k,
                    format!("{v} is not a text of layout line ids or accounts"),
                    "write e.g. \"OP\" or \"6100 6150\"",
                );
                None
            }
        }
    };
    let key = text("key", false).unwrap_or_else(|| "geography".to_string());
    let revenue = text("revenue", true);
    let profit = text("profit", true);
    let depreciation = text("depreciation", false);
    let interest_income = text("interest_income", false);
    let interest_expense = text("interest_expense", false);
    let tax = text("tax", false);
    let equity_result = text("equity_result", false);
    let assets = text("assets", false);
    let liabilities = text("liabilities", false);
    let mut list = |k: &str| -> Vec<String> {
        match raw.get(k) {
            None => Vec::new(),
            Some(toml::Value::Array(a)) if a.iter().all(|x| x.is_str()) => {
                a.iter().filter_map(|x| x.as_str()).map(|x| x.trim().to_string()).collect()
            }
            Some(v) => {
                findings.push(
                    Finding::new(
                        Rule::SettingInvalid,
                        format!("`segments.{k}`: {v} is not a list of segment names"),
                        "write a list such as [\"Corporate\"]",
                    )
                    .in_file(file),
                );
                Vec::new()
            }
        }
    };
    let other = list("other");
    let unallocated = list("unallocated");
    let country_materiality = match raw.get("country_materiality") {
        None => Some(Decimal::new(10, 2)),
        Some(toml::Value::String(s)) => match Decimal::from_str(s.trim()) {
            Ok(d) if d > Decimal::ZERO && d <= Decimal::ONE => Some(d),
            _ => None,
        },
        Some(_) => None,
    };
    if country_materiality.is_none() {
        findings.push(
            Finding::new(
                Rule::SettingInvalid,
                "`segments.country_materiality` is not a quoted share in (0, 1]",
                "write a quoted decimal such as \"0.10\"",
            )
            .in_file(file),
        );
    }
    if findings.len() > before {
        return None;
    }
    Some(SegmentSettings {
        key,
        revenue: revenue?,
        profit: profit?,
        depreciation,
        interest_income,
        interest_expense,
        tax,
        equity_result,
        assets,
        liabilities,
        other,
        unallocated,
        country_materiality: country_materiality?,
    })
}

/// Parses and validates the settings text. Returns `None` when any required setting is
/// missing or wrong; every problem is in `findings`.
pub fn parse(text: &str, file: &str, findings: &mut Vec<Finding>) -> Option<Settings> {
    let raw = read_raw(text, file, findings)?;
    let before = findings.len();
    let mut bad = |key: &str, msg: String, action: &str| {
        findings.push(Finding::new(Rule::SettingInvalid, format!("`{key}`: {msg}"), action).in_file(file));
    };
    let name = raw.name.clone().unwrap_or_default();
    if name.trim().is_empty() {
        bad("name", "the group needs a name".into(), "set name = \"...\"");
    }
    let parent = match &raw.parent {
        Some(p) if !p.trim().is_empty() => Some(EntityId::new(p.trim())),
        _ => {
            bad("parent", "the ultimate parent entity is not named".into(), "set parent = \"<entity id>\"");
            None
        }
    };
    let currency = match raw.presentation_currency.as_deref().map(str::trim) {
        Some(c) => match Currency::parse(c) {
            Some(c) => Some(c),
            None => {
                bad("presentation_currency", format!("{c:?} is not an ISO 4217 code"), "use a code such as EUR");
                None
            }
        },
        None => {
            bad(
                "presentation_currency",
                "missing".into(),
                "set presentation_currency = \"EUR\" (or another ISO 4217 code)",
            );
            None
        }
    };
    let fys = match raw.fiscal_year_start {
        Some(m) if (1..=12).contains(&m) => Some(m as u32),
        Some(m) => {
            bad("fiscal_year_start", format!("{m} is not a month 1..12"), "set the month the fiscal year starts in");
            None
        }
        None => {
            bad("fiscal_year_start", "missing".into(), "set fiscal_year_start = 1 for a calendar year");
            None
        }
    };
    let policies = parse_policies(&raw, file, findings);
    let accounts = parse_role_accounts(&raw, file, findings);
    let intercompany = parse_intercompany(&raw, file, findings);
    let plausibility = parse_plausibility(&raw.plausibility, file, findings);
    let segments = raw.segments.as_ref().map(|t| parse_segments(t, file, findings));
    if findings.len() > before {
        return None;
    }
    let (Some(parent), Some(presentation_currency), Some(fiscal_year_start)) = (parent, currency, fys) else {
        return None;
    };
    Some(Settings {
        name,
        parent,
        presentation_currency,
        fiscal_year_start,
        policies: policies?,
        accounts: accounts?,
        intercompany: intercompany?,
        plausibility: plausibility?,
        segments: segments.flatten(),
    })
}

/// Reads the settings text as TOML into its raw keys; a syntax error or an unknown key
/// is a finding and `None`.
fn read_raw(text: &str, file: &str, findings: &mut Vec<Finding>) -> Option<RawSettings> {
    match toml::from_str(text) {
        Ok(r) => Some(r),
        Err(e) => {
            findings.push(
                Finding::new(
                    Rule::SettingInvalid,
                    format!("the settings file does not parse: {}", e.message()),
                    "fix the TOML syntax or the key named; docs/formats.md shows a complete example",
                )
                .in_file(file),
            );
            None
        }
    }
}

/// Parses the `[policies]` table: rounding, income translation, the IFRIC 16 method and
/// the significant-influence threshold, reporting every key that is unknown or wrong.
fn parse_policies(raw: &RawSettings, file: &str, findings: &mut Vec<Finding>) -> Option<Policies> {
    let mut bad = |key: &str, msg: String, action: &str| {
        findings.push(Finding::new(Rule::SettingInvalid, format!("`{key}`: {msg}"), action).in_file(file));
    };
    for k in raw.policies.keys() {
        if !POLICY_KEYS.contains(&k.as_str()) {
            bad(
                &format!("policies.{k}"),
                "unknown policy".into(),
                &format!("known policies: {}", POLICY_KEYS.join(", ")),
            );
        }
    }
    let pol = |k: &str| raw.policies.get(k).map(|s| s.trim().to_string());
    // The value as the user wrote it, for a message (never a debug form such as Some("x")).
    let given = |v: Option<&str>| v.map(|v| format!("\"{v}\"")).unwrap_or_else(|| "no value".to_string());
    let rounding = match pol("rounding").as_deref() {
        Some("half_away_from_zero") => Some(RoundingMode::HalfAwayFromZero),
        Some("half_even") => Some(RoundingMode::HalfEven),
        other => {
            bad(
                "policies.rounding",
                format!("{} is not a rounding mode", given(other)),
                "use \"half_away_from_zero\" or \"half_even\"",
            );
            None
        }
    };
    let income = match pol("income_translation").as_deref() {
        Some("periodic") => Some(IncomeTranslation::Periodic),
        Some("year_to_date") => Some(IncomeTranslation::YearToDate),
        other => {
            bad(
                "policies.income_translation",
                format!("{} is not a method", given(other)),
                "use \"periodic\" or \"year_to_date\"",
            );
            None
        }
    };
    let ifric16 = match pol("ifric16").as_deref() {
        Some("direct") => Some(Ifric16Method::Direct),
        Some("step_by_step") => Some(Ifric16Method::StepByStep),
        other => {
            bad("policies.ifric16", format!("{} is not a method", given(other)), "use \"direct\" or \"step_by_step\"");
            None
        }
    };
    let significant_influence = match pol("significant_influence") {
        None => Some(Decimal::new(20, 2)),
        Some(s) => match Decimal::from_str(&s) {
            Ok(d) if d > Decimal::ZERO && d <= Decimal::ONE => Some(d),
            _ => {
                bad(
                    "policies.significant_influence",
                    format!("{s:?} is not a share in (0, 1]"),
                    "write a decimal such as \"0.20\"",
                );
                None
            }
        },
    };
    let goodwill_impairment_rate = match pol("goodwill_impairment_rate").as_deref() {
        None | Some("closing") => Some(ImpairmentRate::Closing),
        Some("average") => Some(ImpairmentRate::Average),
        Some(other) => {
            bad(
                "policies.goodwill_impairment_rate",
                format!("\"{other}\" is not a rate"),
                "use \"closing\" or \"average\" (the rate of the month the impairment is recognised in)",
            );
            None
        }
    };
    let deferred_tax = match pol("deferred_tax").as_deref() {
        None | Some("off") => Some(false),
        Some("recognise") => Some(true),
        Some(other) => {
            bad(
                "policies.deferred_tax",
                format!("\"{other}\" is not a choice"),
                "use \"recognise\" (deferred tax on the consolidation adjustments) or \"off\"",
            );
            None
        }
    };
    let associate_dividends = match pol("associate_dividends").as_deref() {
        None | Some("operating") => Some(DividendsReceived::Operating),
        Some("investing") => Some(DividendsReceived::Investing),
        Some(other) => {
            bad(
                "policies.associate_dividends",
                format!("\"{other}\" is not a section"),
                "use \"operating\" or \"investing\" (IAS 7.31-33)",
            );
            None
        }
    };
    Some(Policies {
        rounding: rounding?,
        income_translation: income?,
        ifric16: ifric16?,
        significant_influence: significant_influence?,
        goodwill_impairment_rate: goodwill_impairment_rate?,
        deferred_tax: deferred_tax?,
        associate_dividends: associate_dividends?,
    })
}

/// Parses the `[accounts]` table: the group account of every role, the required ones
/// reported when missing.
fn parse_role_accounts(raw: &RawSettings, file: &str, findings: &mut Vec<Finding>) -> Option<RoleAccounts> {
    let mut bad = |key: &str, msg: String, action: &str| {
        findings.push(Finding::new(Rule::SettingInvalid, format!("`{key}`: {msg}"), action).in_file(file));
    };
    for k in raw.accounts.keys() {
        if !ROLE_KEYS.contains(&k.as_str()) {
            bad(
                &format!("accounts.{k}"),
                "unknown account role".into(),
                &format!("known roles: {}", ROLE_KEYS.join(", ")),
            );
        }
    }
    let mut role = |k: &str| match raw.accounts.get(k).map(|s| s.trim()) {
        Some(a) if !a.is_empty() => Some(GroupAccount::new(a)),
        _ => {
            bad(&format!("accounts.{k}"), "missing".into(), "name the group account that has this role");
            None
        }
    };
    let roles = (
        role("retained_earnings"),
        role("translation_reserve"),
        role("translation_difference"),
        role("non_controlling_interest"),
        role("goodwill"),
        role("equity_investments"),
        role("equity_result"),
        role("intercompany_difference"),
    );
    let (Some(re), Some(tr), Some(td), Some(nci), Some(gw), Some(ei), Some(er), Some(icd)) = roles else {
        return None;
    };
    Some(RoleAccounts {
        retained_earnings: re,
        translation_reserve: tr,
        translation_difference: td,
        non_controlling_interest: nci,
        goodwill: gw,
        equity_investments: ei,
        equity_result: er,
        intercompany_difference: icd,
        inventory: raw.accounts.get("inventory").map(|a| GroupAccount::new(a.trim())),
        cost_of_sales: raw.accounts.get("cost_of_sales").map(|a| GroupAccount::new(a.trim())),
        goodwill_impairment: raw.accounts.get("goodwill_impairment").map(|a| GroupAccount::new(a.trim())),
        bargain_purchase_gain: raw.accounts.get("bargain_purchase_gain").map(|a| GroupAccount::new(a.trim())),
        deferred_tax: raw.accounts.get("deferred_tax").map(|a| GroupAccount::new(a.trim())),
        deferred_tax_expense: raw.accounts.get("deferred_tax_expense").map(|a| GroupAccount::new(a.trim())),
        net_monetary_position: raw.accounts.get("net_monetary_position").map(|a| GroupAccount::new(a.trim())),
    })
}

/// Parses the `[intercompany]` table: the matching tolerances, the timing window and how
/// a timing difference is posted.
fn parse_intercompany(raw: &RawSettings, file: &str, findings: &mut Vec<Finding>) -> Option<IntercompanySettings> {
    let mut bad = |key: &str, msg: String, action: &str| {
        findings.push(Finding::new(Rule::SettingInvalid, format!("`{key}`: {msg}"), action).in_file(file));
    };
    for k in raw.intercompany.keys() {
        if !IC_KEYS.contains(&k.as_str()) {
            bad(
                &format!("intercompany.{k}"),
                "unknown setting".into(),
                &format!("known settings: {}", IC_KEYS.join(", ")),
            );
        }
    }
    // How the close posts a timing difference. Only to the difference account for now:
    // posting it as an in-transit item is a policy the close does not support yet, so
    // asking for it is refused rather than ignored.
    match raw.intercompany.get("timing") {
        None => {}
        Some(toml::Value::String(s)) if s == "difference" => {}
        Some(toml::Value::String(s)) if s == "in_transit" => bad(
            "intercompany.timing",
            "posting timing differences as in-transit items is not supported yet; the close posts them to the intercompany difference account".into(),
            "set timing = \"difference\" (or leave it out) until the close supports in-transit items",
        ),
        Some(v) => bad("intercompany.timing", format!("{v} is not a known policy"), "write timing = \"difference\""),
    }
    let mut dec = |k: &str| -> Option<Decimal> {
        match raw.intercompany.get(k) {
            None => Some(Decimal::ZERO),
            Some(toml::Value::String(s)) => match Decimal::from_str(s.trim()) {
                Ok(d) if d >= Decimal::ZERO => Some(d),
                _ => {
                    bad(
                        &format!("intercompany.{k}"),
                        format!("{s:?} is not a non-negative decimal"),
                        "write it as a quoted decimal, e.g. \"50.00\"",
                    );
                    None
                }
            },
            Some(v) => {
                bad(
                    &format!("intercompany.{k}"),
                    format!("{v} is not a quoted decimal"),
                    "quote decimals so they stay exact, e.g. \"50.00\"",
                );
                None
            }
        }
    };
    let tol_abs = dec("tolerance_absolute");
    let tol_rel = dec("tolerance_relative");
    let window = match raw.intercompany.get("timing_window_days") {
        None => Some(5),
        Some(toml::Value::Integer(n)) if (0..=366).contains(n) => Some(*n as u32),
        Some(v) => {
            bad(
                "intercompany.timing_window_days",
                format!("{v} is not a number of days 0..366"),
                "write a whole number",
            );
            None
        }
    };
    Some(IntercompanySettings {
        tolerance_absolute: tol_abs?,
        tolerance_relative: tol_rel?,
        timing_window_days: window?,
    })
}

/// The `[plausibility]` table: every key optional, defaults in `PlausibilitySettings`.
fn parse_plausibility(
    raw: &BTreeMap<String, toml::Value>,
    file: &str,
    findings: &mut Vec<Finding>,
) -> Option<PlausibilitySettings> {
    let mut out = PlausibilitySettings::default();
    let mut ok = true;
    let mut bad = |key: &str, msg: String, action: &str| {
        findings.push(Finding::new(Rule::SettingInvalid, format!("`plausibility.{key}`: {msg}"), action).in_file(file));
    };
    for (k, v) in raw {
        match (k.as_str(), v) {
            ("rate_move", toml::Value::String(s)) => match Decimal::from_str(s.trim()) {
                Ok(d) if d > Decimal::ZERO && d <= Decimal::from(1000) => out.rate_move = d,
                _ => {
                    ok = false;
                    bad(k, format!("{s:?} is not a share above 0"), "write a quoted share, e.g. \"0.25\" for 25%");
                }
            },
            ("sign_months", toml::Value::Integer(n)) if (0..=11).contains(n) => out.sign_months = *n as u32,
            (k, v) if PLAUSIBILITY_KEYS.contains(&k) => {
                ok = false;
                bad(
                    k,
                    format!("{v} is not a valid value"),
                    "rate_move is a quoted share (\"0.25\"), sign_months a whole number 0..11",
                );
            }
            (k, _) => {
                ok = false;
                bad(k, "unknown setting".into(), &format!("known settings: {}", PLAUSIBILITY_KEYS.join(", ")));
            }
        }
    }
    ok.then_some(out)
}

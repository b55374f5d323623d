//! Trial balances, opening balances and account mappings: read file by file as text,
//! stacked into one frame, then parsed column-wise into exact decimals. Every row that
//! cannot be parsed becomes a finding with its file and line; the frame keeps only rows
//! whose amount, period and account are sound, so nothing is dropped without a word.

use std::collections::BTreeMap;

use polars::prelude::*;

use crate::findings::{Finding, Rule};
use crate::model::{Currency, EntityId};
use crate::money::{AMOUNT_MAX_INTEGER_DIGITS, amount_dtype};

use super::table::{Spec, TextTable};

/// Columns of the loaded ledger frame, in order. `kind` is `movements`, `balances` or
/// `opening`; `line` is the line in `file`.
pub const LEDGER_COLUMNS: &[&str] =
    &["entity", "kind", "period", "account", "amount", "counterparty", "txn_currency", "txn_amount", "file", "line"];

pub const LEDGER_SPEC: Spec<'static> = Spec {
    required: &["period", "account", "amount"],
    optional: &["counterparty", "txn_currency", "txn_amount"],
    prefixes: &[],
};

pub const OPENING_SPEC: Spec<'static> = Spec {
    required: &["account", "amount"],
    optional: &["counterparty", "txn_currency", "txn_amount", "amount_presentation"],
    prefixes: &[],
};

pub const MAPPING_SPEC: Spec<'static> =
    Spec { required: &["local_account", "group_account"], optional: &["local_name"], prefixes: &[] };

/// The delivery kind declared by a trial balance file name, if it is one.
pub fn delivery_kind(name: &str) -> Option<&'static str> {
    if !name.starts_with("tb-") {
        return None;
    }
    for kind in ["movements", "balances"] {
        for ext in ["csv", "parquet"] {
            if name.ends_with(&format!(".{kind}.{ext}")) {
                return Some(kind);
            }
        }
    }
    None
}

/// The first month of the fiscal year a later year's opening balance file is for:
/// `opening-2026-01.csv` is the opening of the fiscal year starting 2026-01.
pub fn opening_year(name: &str) -> Option<crate::model::Period> {
    name.strip_prefix("opening-")?.strip_suffix(".csv")?.parse().ok()
}

pub(super) const NUMBER: &str = r"^-?[0-9]+(\.[0-9]+)?$";
const PERIOD: &str = r"^[0-9]{4}-(0[1-9]|1[0-2])$";

pub(super) fn stack(tables: Vec<(String, String, TextTable)>, cols: &[&str]) -> PolarsResult<DataFrame> {
    // Each table gets its entity, kind, file and line numbers as plain columns and is
    // stacked eagerly: thousands of small lazy plans cost more to plan than to run.
    let mut stacked: Option<DataFrame> = None;
    for (entity, kind, t) in tables {
        let n = t.df.height();
        let mut columns: Vec<Column> = Vec::with_capacity(cols.len() + 4);
        for c in cols {
            columns.push(t.df.column(c)?.clone());
        }
        columns.push(Column::new_scalar("entity".into(), Scalar::from(PlSmallStr::from(entity)), n));
        columns.push(Column::new_scalar("kind".into(), Scalar::from(PlSmallStr::from(kind)), n));
        columns.push(Column::new_scalar("file".into(), Scalar::from(PlSmallStr::from(t.file.as_str())), n));
        columns.push(Column::new("line".into(), t.lines.clone()));
        let df = DataFrame::new(n, columns)?;
        match &mut stacked {
            None => stacked = Some(df),
            Some(s) => {
                s.vstack_mut(&df)?;
            }
        }
    }
    if let Some(mut df) = stacked {
        df.rechunk_mut_par();
        return Ok(df);
    }
    {
        let mut schema = Schema::default();
        for c in cols.iter().chain(["entity", "kind", "file"].iter()) {
            schema.insert((*c).into(), DataType::String);
        }
        schema.insert("line".into(), DataType::UInt64);
        Ok(DataFrame::empty_with_schema(&schema))
    }
}

/// A frame code -> minor unit for the codes in `codes` that ISO 4217 knows.
pub(super) fn minor_units(name: &str, codes: impl IntoIterator<Item = String>) -> DataFrame {
    let mut c = Vec::new();
    let mut m = Vec::new();
    for code in codes {
        if let Some(cur) = Currency::parse(&code)
            && let Some(minor) = cur.minor_unit_checked()
        {
            c.push(code);
            m.push(minor);
        }
    }
    let n = c.len();
    DataFrame::new(n, vec![Column::new(name.into(), c), Column::new(format!("{name}_minor").into(), m)])
        .expect("columns of equal length")
}

/// Row-level flags for an amount column: malformed, too large, surplus decimals.
pub(super) fn amount_flags(c: &str, minor: &str) -> [Expr; 3] {
    let text = col(c);
    let malformed = text.clone().is_not_null().and(text.clone().str().contains(lit(NUMBER), true).not());
    let int_digits = text.clone().str().extract(lit(r"^-?0*([0-9]+)"), 1).str().len_chars();
    let frac_digits = text.str().extract(lit(r"\.([0-9]*[1-9])0*$"), 1).str().len_chars().fill_null(lit(0u32));
    let too_large = malformed.clone().not().and(int_digits.gt(lit(AMOUNT_MAX_INTEGER_DIGITS as u32)));
    let surplus = malformed.clone().not().and(frac_digits.gt(col(minor).fill_null(lit(3u32))));
    [
        malformed.fill_null(lit(false)).alias(format!("{c}_malformed")),
        too_large.fill_null(lit(false)).alias(format!("{c}_too_large")),
        surplus.fill_null(lit(false)).alias(format!("{c}_surplus")),
    ]
}

fn str_at(df: &DataFrame, c: &str, i: usize) -> Option<String> {
    df.column(c).ok()?.str().ok()?.get(i).map(|s| s.to_string())
}

fn bool_at(df: &DataFrame, c: &str, i: usize) -> bool {
    df.column(c).ok().and_then(|x| x.bool().ok().and_then(|b| b.get(i))).unwrap_or(false)
}

fn u64_at(df: &DataFrame, c: &str, i: usize) -> Option<u64> {
    df.column(c).ok()?.u64().ok()?.get(i)
}

fn u32_at(df: &DataFrame, c: &str, i: usize) -> Option<u32> {
    df.column(c).ok()?.u32().ok()?.get(i)
}

/// Each entity's minor unit and currency code, to join to its rows.
fn entity_minor_units(currencies: &BTreeMap<EntityId, Currency>) -> PolarsResult<DataFrame> {
    let ids: Vec<String> = currencies.keys().map(|e| e.to_string()).collect();
    let minors: Vec<u32> = currencies.values().map(|c| c.minor_unit()).collect();
    let codes: Vec<String> = currencies.values().map(|c| c.code().to_string()).collect();
    DataFrame::new(
        ids.len(),
        vec![
            Column::new("entity".into(), ids),
            Column::new("amount_minor".into(), minors),
            Column::new("currency".into(), codes),
        ],
    )
}

/// The names of the flag columns `parse_rows` sets, extra amounts' included.
fn flag_names(extra_amounts: &[&str]) -> Vec<String> {
    let mut v = vec![
        "amount_malformed",
        "amount_too_large",
        "amount_surplus",
        "txn_amount_malformed",
        "txn_amount_too_large",
        "txn_amount_surplus",
        "amount_missing",
        "account_missing",
        "period_bad",
        "txn_incomplete",
        "txn_unknown",
    ]
    .into_iter()
    .map(String::from)
    .collect::<Vec<_>>();
    for e in extra_amounts {
        v.push(format!("{e}_malformed"));
        v.push(format!("{e}_too_large"));
    }
    v
}

/// Parses stacked ledger-like rows: returns the sound rows with exact decimals.
fn parse_rows(
    raw: DataFrame,
    has_period: bool,
    extra_amounts: &[&str],
    currencies: &BTreeMap<EntityId, Currency>,
    f: &mut Vec<Finding>,
) -> PolarsResult<DataFrame> {
    let ent_minor = entity_minor_units(currencies)?;
    let unique_codes = raw.column("txn_currency")?.str()?.unique()?;
    let txn_codes: Vec<String> = unique_codes.iter().flatten().map(|s| s.trim().to_string()).collect();
    let txn_minor = minor_units("txn_currency", txn_codes);
    let mut lf = raw
        .lazy()
        .with_columns([
            col("txn_currency").str().strip_chars(lit(NULL)),
            col("counterparty").str().strip_chars(lit(NULL)),
        ])
        .join(ent_minor.lazy(), [col("entity")], [col("entity")], JoinArgs::new(JoinType::Left))
        .join(txn_minor.lazy(), [col("txn_currency")], [col("txn_currency")], JoinArgs::new(JoinType::Left))
        .with_column(col("txn_currency_minor").alias("txn_amount_minor"));
    let mut flags: Vec<Expr> = Vec::new();
    flags.extend(amount_flags("amount", "amount_minor"));
    flags.extend(amount_flags("txn_amount", "txn_amount_minor"));
    // The presentation amount's minor unit is checked by validate, which knows the
    // presentation currency; here only its form.
    for extra in extra_amounts {
        let [m, t, _] = amount_flags(extra, "amount_minor");
        flags.push(m);
        flags.push(t);
    }
    flags.push(col("amount").is_null().alias("amount_missing"));
    flags.push(col("account").is_null().alias("account_missing"));
    if has_period {
        flags.push(
            col("period")
                .is_null()
                .or(col("period").str().contains(lit(PERIOD), true).not())
                .fill_null(lit(true))
                .alias("period_bad"),
        );
    } else {
        flags.push(lit(false).alias("period_bad"));
    }
    flags.push(col("txn_currency").is_null().neq(col("txn_amount").is_null()).alias("txn_incomplete"));
    flags.push(col("txn_currency").is_not_null().and(col("txn_currency_minor").is_null()).alias("txn_unknown"));
    lf = lf.with_columns(flags);
    let flag_names = flag_names(extra_amounts);
    let any_flag = flag_names.iter().fold(lit(false), |acc, n| acc.or(col(n.as_str())));
    let df = lf.with_column(any_flag.alias("flagged")).collect()?;
    let bad = df.clone().lazy().filter(col("flagged")).collect()?;
    report_rows(&bad, f);
    // Rows whose own amount, account and period are sound stay; transaction-currency
    // detail that is unsound is cleared (the row's finding says so).
    let fatal =
        ["amount_malformed", "amount_too_large", "amount_surplus", "amount_missing", "account_missing", "period_bad"];
    let keep = fatal.iter().fold(lit(true), |acc, n| acc.and(col(*n).not()));
    let txn_bad =
        ["txn_amount_malformed", "txn_amount_too_large", "txn_amount_surplus", "txn_incomplete", "txn_unknown"]
            .iter()
            .fold(lit(false), |acc, n| acc.or(col(*n)));
    let mut out_cols: Vec<Expr> = vec![
        col("entity"),
        col("kind"),
        if has_period { col("period") } else { lit(NULL).cast(DataType::String).alias("period") },
        col("account").str().strip_chars(lit(NULL)),
        col("amount").strict_cast(amount_dtype()),
        col("counterparty"),
        when(txn_bad.clone())
            .then(lit(NULL).cast(DataType::String))
            .otherwise(col("txn_currency"))
            .alias("txn_currency"),
        when(txn_bad)
            .then(lit(NULL).cast(amount_dtype()))
            .otherwise(col("txn_amount").strict_cast(amount_dtype()))
            .alias("txn_amount"),
        col("file"),
        col("line"),
    ];
    for extra in extra_amounts {
        let bad = col(format!("{extra}_malformed").as_str()).or(col(format!("{extra}_too_large").as_str()));
        out_cols.push(
            when(bad)
                .then(lit(NULL).cast(amount_dtype()))
                .otherwise(col(*extra).strict_cast(amount_dtype()))
                .alias(*extra),
        );
    }
    df.lazy().filter(keep).select(out_cols).collect()
}

fn report_rows(bad: &DataFrame, f: &mut Vec<Finding>) {
    for i in 0..bad.height() {
        let file = str_at(bad, "file", i).unwrap_or_default();
        let line = u64_at(bad, "line", i).unwrap_or(0);
        let entity = EntityId::new(str_at(bad, "entity", i).unwrap_or_default());
        let account = str_at(bad, "account", i);
        let period = str_at(bad, "period", i).and_then(|p| p.parse().ok());
        let currency = str_at(bad, "currency", i).unwrap_or_default();
        let amount = str_at(bad, "amount", i).unwrap_or_default();
        let txn_amount = str_at(bad, "txn_amount", i).unwrap_or_default();
        let txn_ccy = str_at(bad, "txn_currency", i).unwrap_or_default();
        let mk = |rule: Rule, msg: String, action: &str| {
            let mut x = Finding::new(rule, msg, action).in_file(&file).line(line).entity(&entity);
            if let Some(a) = &account {
                x = x.account(a);
            }
            if let Some(p) = period {
                x = x.period(p);
            }
            x
        };
        if bool_at(bad, "amount_missing", i) {
            f.push(mk(Rule::ValueMissing, "`amount` is empty".into(), "fill in the amount (0 for a zero balance)"));
        }
        if bool_at(bad, "account_missing", i) {
            f.push(mk(Rule::ValueMissing, "`account` is empty".into(), "fill in the local account"));
        }
        if bool_at(bad, "period_bad", i) {
            let p = str_at(bad, "period", i).unwrap_or_default();
            f.push(mk(
                Rule::ValueInvalid,
                format!("`period` is {p:?}, not a month YYYY-MM"),
                "write the period as YYYY-MM",
            ));
        }
        for (c, minor_col, ccy) in
            [("amount", "amount_minor", currency.as_str()), ("txn_amount", "txn_amount_minor", txn_ccy.as_str())]
        {
            let v = if c == "amount" { &amount } else { &txn_amount };
            if bool_at(bad, &format!("{c}_malformed"), i) {
                f.push(mk(
                    Rule::AmountMalformed,
                    format!("`{c}` is {v:?}, not a plain decimal"),
                    "write amounts as -1234.56: no thousands separators, no currency sign, no exponent",
                ));
            }
            if bool_at(bad, &format!("{c}_too_large"), i) {
                f.push(mk(
                    Rule::AmountTooLarge,
                    format!("`{c}` {v} is not below 10^{AMOUNT_MAX_INTEGER_DIGITS} in absolute value"),
                    "check the amount; amounts this large are almost always a unit or pasting error",
                ));
            }
            if bool_at(bad, &format!("{c}_surplus"), i) {
                let minor = u32_at(bad, minor_col, i).unwrap_or(0);
                f.push(mk(
                    Rule::AmountSurplusDecimals,
                    format!("`{c}` {v} has more decimals than {ccy}'s minor unit of {minor} (ISO 4217)"),
                    "deliver amounts rounded to the currency's minor unit in the ledger; tessera never rounds input",
                ));
            }
        }
        if bool_at(bad, "txn_incomplete", i) {
            f.push(mk(
                Rule::TransactionCurrencyIncomplete,
                "only one of `txn_currency` and `txn_amount` is given".into(),
                "give both the transaction currency and the amount in it, or neither",
            ));
        }
        if bool_at(bad, "txn_unknown", i) {
            f.push(mk(
                Rule::CurrencyUnknown,
                format!("transaction currency {txn_ccy:?} is not an ISO 4217 code with a minor unit"),
                "use a three-letter ISO 4217 code",
            ));
        }
        for extra in ["amount_presentation"] {
            if bool_at(bad, &format!("{extra}_malformed"), i) || bool_at(bad, &format!("{extra}_too_large"), i) {
                let v = str_at(bad, extra, i).unwrap_or_default();
                f.push(mk(
                    Rule::AmountMalformed,
                    format!("`{extra}` is {v:?}, not a plain decimal below 10^15"),
                    "write it as -1234.56",
                ));
            }
        }
    }
}

fn frame_error(f: &mut Vec<Finding>, what: &str, e: PolarsError) {
    f.push(Finding::new(
        Rule::FileUnreadable,
        format!("{what} could not be assembled: {e}"),
        "check the files named in the other findings",
    ));
}

pub fn build_ledger(
    tables: Vec<(EntityId, &'static str, TextTable)>,
    currencies: &BTreeMap<EntityId, Currency>,
    f: &mut Vec<Finding>,
) -> DataFrame {
    let tables = tables.into_iter().map(|(e, k, t)| (e.to_string(), k.to_string(), t)).collect();
    let cols = ["period", "account", "amount", "counterparty", "txn_currency", "txn_amount"];
    let raw = {
        let _span = tracing::debug_span!("stack_ledger").entered();
        stack(tables, &cols)
    };
    let _span = tracing::debug_span!("parse_ledger").entered();
    let result = raw.and_then(|raw| parse_rows(raw, true, &[], currencies, f));
    match result {
        Ok(df) => df,
        Err(e) => {
            frame_error(f, "the trial balances", e);
            empty_ledger(&[])
        }
    }
}

pub fn build_opening(
    tables: Vec<(EntityId, TextTable)>,
    currencies: &BTreeMap<EntityId, Currency>,
    f: &mut Vec<Finding>,
) -> DataFrame {
    let tables = tables.into_iter().map(|(e, t)| (e.to_string(), "opening".to_string(), t)).collect();
    let cols = ["account", "amount", "counterparty", "txn_currency", "txn_amount", "amount_presentation"];
    let result = stack(tables, &cols)
        .and_then(|raw| parse_rows(raw, false, &["amount_presentation"], currencies, f))
        .and_then(|df| {
            // A later year's opening carries its year in the file name (`opening_year`).
            df.lazy()
                .with_column(col("file").str().extract(lit(r"/opening-([0-9]{4}-[0-9]{2})\.csv$"), 1).alias("period"))
                .collect()
        });
    match result {
        Ok(df) => df,
        Err(e) => {
            frame_error(f, "the opening balances", e);
            empty_ledger(&["amount_presentation"])
        }
    }
}

/// An empty frame with the ledger schema (plus extra amount columns).
pub fn empty_ledger(extra_amounts: &[&str]) -> DataFrame {
    let mut schema = Schema::default();
    for c in LEDGER_COLUMNS {
        let dt = match *c {
            "amount" | "txn_amount" => amount_dtype(),
            "line" => DataType::UInt64,
            _ => DataType::String,
        };
        schema.insert((*c).into(), dt);
    }
    for e in extra_amounts {
        schema.insert((*e).into(), amount_dtype());
    }
    DataFrame::empty_with_schema(&schema)
}

pub fn build_mappings(tables: Vec<(EntityId, TextTable)>, f: &mut Vec<Finding>) -> DataFrame {
    let tables = tables.into_iter().map(|(e, t)| (e.to_string(), String::new(), t)).collect();
    let cols = ["local_account", "local_name", "group_account"];
    let result = stack(tables, &cols).and_then(|df| {
        df.lazy()
            .select([
                col("entity"),
                col("local_account").str().strip_chars(lit(NULL)),
                col("local_name"),
                col("group_account").str().strip_chars(lit(NULL)),
                col("file"),
                col("line"),
            ])
            .collect()
    });
    match result {
        Ok(df) => {
            let missing =
                df.clone().lazy().filter(col("local_account").is_null().or(col("group_account").is_null())).collect();
            if let Ok(m) = missing {
                for i in 0..m.height() {
                    let which =
                        if str_at(&m, "local_account", i).is_none() { "local_account" } else { "group_account" };
                    f.push(
                        Finding::new(Rule::ValueMissing, format!("`{which}` is empty"), format!("fill in `{which}`"))
                            .in_file(str_at(&m, "file", i).unwrap_or_default())
                            .line(u64_at(&m, "line", i).unwrap_or(0))
                            .entity(&EntityId::new(str_at(&m, "entity", i).unwrap_or_default())),
                    );
                }
            }
            df.lazy()
                .filter(col("local_account").is_not_null().and(col("group_account").is_not_null()))
                .collect()
                .unwrap_or_default()
        }
        Err(e) => {
            frame_error(f, "the account mappings", e);
            DataFrame::default()
        }
    }
}

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
        // Column by column, so that only one column is held twice at a time.
        df.rechunk_mut();
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

/// The shape of an amount's text when it is a plain decimal (`-1234.56`): its integer
/// digits, leading zeros aside (at least one), and its decimals up to the last that is
/// not zero; `None` when it is not a plain decimal (`^-?[0-9]+(\.[0-9]+)?$`).
pub(super) fn amount_shape(text: &str) -> Option<(usize, usize)> {
    let body = text.as_bytes();
    let body = body.strip_prefix(b"-").unwrap_or(body);
    let (int, frac) = match body.iter().position(|c| *c == b'.') {
        Some(k) => (&body[..k], Some(&body[k + 1..])),
        None => (body, None),
    };
    let digits = |d: &[u8]| !d.is_empty() && d.iter().all(u8::is_ascii_digit);
    if !digits(int) || frac.is_some_and(|f| !digits(f)) {
        return None;
    }
    let int_digits = int.iter().position(|c| *c != b'0').map_or(1, |k| int.len() - k);
    let frac_digits = frac.and_then(|f| f.iter().rposition(|c| *c != b'0')).map_or(0, |k| k + 1);
    Some((int_digits, frac_digits))
}

/// The flags of one amount cell: malformed, too large, more decimals than `minor`. An
/// empty cell has none (a missing amount is flagged apart).
fn amount_cell(text: Option<&str>, minor: u32) -> [bool; 3] {
    let Some(t) = text else { return [false; 3] };
    match amount_shape(t) {
        None => [true, false, false],
        Some((int, frac)) => [false, int > AMOUNT_MAX_INTEGER_DIGITS, frac > minor as usize],
    }
}

/// Whether `p` is a month `YYYY-MM` (`^[0-9]{4}-(0[1-9]|1[0-2])$`).
fn is_month(p: &str) -> bool {
    let b = p.as_bytes();
    b.len() == 7
        && b[..4].iter().all(u8::is_ascii_digit)
        && b[4] == b'-'
        && matches!((b[5], b[6]), (b'0', b'1'..=b'9') | (b'1', b'0'..=b'2'))
}

/// The minor unit of each row's entity (`None` for an entity with no currency), found
/// once per run of rows of one entity, as the rows of a file come together.
fn entity_minors<'a>(
    entity: &'a StringChunked,
    currencies: &BTreeMap<EntityId, Currency>,
) -> impl Iterator<Item = Option<(u32, &'static str)>> + 'a {
    let known: std::collections::HashMap<String, (u32, &'static str)> =
        currencies.iter().map(|(e, c)| (e.to_string(), (c.minor_unit(), c.code()))).collect();
    let mut last: Option<(&'a str, Option<(u32, &'static str)>)> = None;
    entity.iter().map(move |e| {
        let e = e?;
        match last {
            Some((l, m)) if l == e => m,
            _ => {
                let m = known.get(e).copied();
                last = Some((e, m));
                m
            }
        }
    })
}

/// The minor unit of a transaction currency code, when ISO 4217 defines one.
fn code_minor(code: &str) -> Option<u32> {
    Currency::parse(code).and_then(|c| c.minor_unit_checked())
}

/// Every row's flags (named by `flag_names`), each amount column read once.
fn row_flags(
    raw: &DataFrame,
    has_period: bool,
    extra_amounts: &[&str],
    currencies: &BTreeMap<EntityId, Currency>,
) -> PolarsResult<Vec<Column>> {
    let text = |c: &str| -> PolarsResult<&StringChunked> { raw.column(c)?.str() };
    let n = raw.height();
    let mut out: Vec<(String, Vec<bool>)> = flag_names(extra_amounts).into_iter().map(|x| (x, Vec::new())).collect();
    let push3 = |out: &mut Vec<(String, Vec<bool>)>, at: usize, v: [bool; 3], k: usize| {
        for (j, b) in v.into_iter().take(k).enumerate() {
            out[at + j].1.push(b);
        }
    };
    // The surplus test falls back to 3 decimals where the minor unit is unknown (the
    // entity's or the code's own finding says why).
    for (m, a) in entity_minors(text("entity")?, currencies).zip(text("amount")?.iter()) {
        push3(&mut out, 0, amount_cell(a, m.map_or(3, |x| x.0)), 3);
    }
    let mut codes: std::collections::HashMap<&str, Option<u32>> = std::collections::HashMap::new();
    for (c, a) in text("txn_currency")?.iter().zip(text("txn_amount")?.iter()) {
        let minor = c.and_then(|c| *codes.entry(c).or_insert_with(|| code_minor(c)));
        push3(&mut out, 3, amount_cell(a, minor.unwrap_or(3)), 3);
        out[9].1.push(c.is_none() != a.is_none());
        out[10].1.push(c.is_some() && minor.is_none());
    }
    out[6].1 = text("amount")?.iter().map(|a| a.is_none()).collect();
    out[7].1 = text("account")?.iter().map(|a| a.is_none()).collect();
    out[8].1 =
        if has_period { text("period")?.iter().map(|p| !p.is_some_and(is_month)).collect() } else { vec![false; n] };
    // The presentation amount's minor unit is checked by validate, which knows the
    // presentation currency; here only its form.
    for (k, extra) in extra_amounts.iter().enumerate() {
        for a in text(extra)?.iter() {
            push3(&mut out, 11 + 2 * k, amount_cell(a, u32::MAX), 2);
        }
    }
    Ok(out.into_iter().map(|(name, v)| BooleanChunked::from_slice(name.into(), &v).into_column()).collect())
}

/// The names of the flag columns `row_flags` sets, extra amounts' included.
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

/// Whether any of the flag columns `names` is set, row by row.
fn any_of(flags: &[Column], names: &[&str]) -> PolarsResult<BooleanChunked> {
    let n = flags.first().map_or(0, |c| c.len());
    let mut acc = BooleanChunked::full("any".into(), false, n);
    for c in flags.iter().filter(|c| names.contains(&c.name().as_str())) {
        acc = &acc | c.bool()?;
    }
    Ok(acc)
}

/// The flagged rows with their flags and, for the findings' wording, each row's
/// currency and the minor units the amounts were held to.
fn flagged_rows(
    raw: &DataFrame,
    flags: &[Column],
    flagged: &BooleanChunked,
    currencies: &BTreeMap<EntityId, Currency>,
) -> PolarsResult<DataFrame> {
    let mut bad = raw.filter(flagged)?;
    for c in flags {
        bad.with_column(c.filter(flagged)?)?;
    }
    let ent: Vec<Option<(u32, &str)>> = entity_minors(bad.column("entity")?.str()?, currencies).collect();
    let txn: Vec<Option<u32>> = bad.column("txn_currency")?.str()?.iter().map(|c| c.and_then(code_minor)).collect();
    let currency: Vec<Option<&str>> = ent.iter().map(|m| m.map(|x| x.1)).collect();
    let minor: Vec<Option<u32>> = ent.iter().map(|m| m.map(|x| x.0)).collect();
    bad.with_column(Column::new("currency".into(), currency))?;
    bad.with_column(Column::new("amount_minor".into(), minor))?;
    bad.with_column(Column::new("txn_amount_minor".into(), txn))?;
    Ok(bad)
}

/// Parses stacked ledger-like rows: returns the sound rows with exact decimals.
fn parse_rows(
    raw: DataFrame,
    has_period: bool,
    extra_amounts: &[&str],
    currencies: &BTreeMap<EntityId, Currency>,
    f: &mut Vec<Finding>,
) -> PolarsResult<DataFrame> {
    let flags = row_flags(&raw, has_period, extra_amounts, currencies)?;
    let names = flag_names(extra_amounts);
    let flagged = any_of(&flags, &names.iter().map(String::as_str).collect::<Vec<_>>())?;
    if flagged.any() {
        report_rows(&flagged_rows(&raw, &flags, &flagged, currencies)?, f);
    }
    // Rows whose own amount, account and period are sound stay; transaction-currency
    // detail that is unsound is cleared (the row's finding says so).
    let fatal =
        ["amount_malformed", "amount_too_large", "amount_surplus", "amount_missing", "account_missing", "period_bad"];
    let keep = !&any_of(&flags, &fatal)?;
    let txn_bad = any_of(
        &flags,
        &["txn_amount_malformed", "txn_amount_too_large", "txn_amount_surplus", "txn_incomplete", "txn_unknown"],
    )?;
    let mut df = raw;
    let any_txn_bad = txn_bad.any();
    df.with_column(txn_bad.with_name("txn_bad".into()).into_column())?;
    for extra in extra_amounts {
        let bad = any_of(&flags, &[format!("{extra}_malformed").as_str(), format!("{extra}_too_large").as_str()])?;
        df.with_column(bad.with_name(format!("{extra}_bad").into()).into_column())?;
    }
    // Every copy of the frame is a copy of every row: none is made when nothing changes.
    if !keep.all() {
        df = df.filter(&keep)?;
    }
    // The cells are trimmed already (`table::read`), so the text columns are taken as
    // they are.
    let (txn_currency, txn_amount) = if any_txn_bad {
        (
            when(col("txn_bad")).then(lit(NULL).cast(DataType::String)).otherwise(col("txn_currency")),
            when(col("txn_bad"))
                .then(lit(NULL).cast(amount_dtype()))
                .otherwise(col("txn_amount").strict_cast(amount_dtype())),
        )
    } else {
        (col("txn_currency"), col("txn_amount").strict_cast(amount_dtype()))
    };
    let mut out_cols: Vec<Expr> = vec![
        col("entity"),
        col("kind"),
        if has_period { col("period") } else { lit(NULL).cast(DataType::String).alias("period") },
        col("account"),
        col("amount").strict_cast(amount_dtype()),
        col("counterparty"),
        txn_currency.alias("txn_currency"),
        txn_amount.alias("txn_amount"),
        col("file"),
        col("line"),
    ];
    for extra in extra_amounts {
        out_cols.push(
            when(col(format!("{extra}_bad").as_str()))
                .then(lit(NULL).cast(amount_dtype()))
                .otherwise(col(*extra).strict_cast(amount_dtype()))
                .alias(*extra),
        );
    }
    df.lazy().select(out_cols).collect()
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

#[cfg(test)]
mod tests {
    use super::*;

    /// Cells that probe the edges of a plain decimal: signs, dots, zeros, digits that are
    /// not ASCII, the 15-digit limit and decimals beyond a minor unit.
    const CELLS: &[&str] = &[
        "0",
        "-0",
        "000",
        "12",
        "-0012.50",
        "1.",
        ".5",
        "-.5",
        "+5",
        "-",
        "--1",
        "5-",
        "1e5",
        "1,000.00",
        "1.2.3",
        "1.000",
        "1.005",
        "1.0050",
        "0.1234",
        "12.34567",
        "999999999999999",
        "1000000000000000",
        "-123456789012345.999",
        "0001234567890123456",
        "000000000000000000001",
        "1234567890123456.00",
        "\u{0661}\u{0662}",
        "1 2",
        "12\n",
    ];

    /// The one-pass reading of an amount agrees, cell by cell and for every minor unit,
    /// with the three patterns it replaced (which still check document amounts).
    #[test]
    fn amount_cells_agree_with_the_patterns() {
        for minor in [0u32, 2, 3] {
            let df = DataFrame::new(
                CELLS.len() + 1,
                vec![
                    Column::new("a".into(), CELLS.iter().map(|c| Some(*c)).chain([None]).collect::<Vec<_>>()),
                    Column::new("m".into(), vec![minor; CELLS.len() + 1]),
                ],
            );
            let df = df.and_then(|d| d.lazy().select(amount_flags("a", "m")).collect()).expect("frame");
            let cells = CELLS.iter().map(|c| Some(*c)).chain([None]);
            for (i, cell) in cells.enumerate() {
                let by_pattern = ["a_malformed", "a_too_large", "a_surplus"].map(|c| bool_at(&df, c, i));
                assert_eq!(amount_cell(cell, minor), by_pattern, "cell {cell:?}, minor unit {minor}");
            }
        }
    }

    /// The month test agrees with the pattern `YYYY-MM` it replaced.
    #[test]
    fn months_agree_with_the_pattern() {
        let cells = [
            "2026-01",
            "2026-12",
            "2026-13",
            "2026-00",
            "2026-1",
            "202601",
            "2026/01",
            "12026-01",
            "2026-01-01",
            "0000-10",
            "2026-10 ",
            "\u{0662}026-01",
            "2026-\u{0661}0",
            "",
        ];
        let df = DataFrame::new(cells.len(), vec![Column::new("p".into(), cells.to_vec())])
            .and_then(|d| {
                d.lazy()
                    .select([col("p").str().contains(lit(r"^[0-9]{4}-(0[1-9]|1[0-2])$"), true).alias("ok")])
                    .collect()
            })
            .expect("frame");
        for (i, p) in cells.iter().enumerate() {
            assert_eq!(is_month(p), bool_at(&df, "ok", i), "period {p:?}");
        }
    }
}

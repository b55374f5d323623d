//! Document detail: the optional `entities/<ENTITY>/documents.csv`, one row per
//! intercompany document (invoice, credit note, transfer) and intercompany kind, with its
//! reference, date and amount. Matching pairs the documents of the two sides of a pair to
//! explain a residual difference (a document on one side only, dated near the period end,
//! is a timing difference). Read as text, stacked and parsed column-wise like the trial
//! balances; a row that cannot be parsed is a warning and is not used, because document
//! detail only explains differences and never changes a figure.

use polars::prelude::*;

use crate::findings::{Finding, Rule, Severity};
use crate::model::EntityId;
use crate::money::amount_dtype;

use super::ledger::{amount_flags, minor_units, stack};
use super::table::{Spec, TextTable};

/// The file name of an entity's document detail.
pub const DOCUMENTS_FILE: &str = "documents.csv";

pub const DOCUMENT_SPEC: Spec<'static> = Spec {
    required: &["reference", "date", "counterparty", "ic_kind", "amount", "currency"],
    optional: &["description"],
    prefixes: &[],
};

/// Columns of the loaded document frame, in order. `date` is a polars Date, `amount` an
/// exact decimal in `currency`, debit positive from `entity`'s point of view.
pub const DOCUMENT_COLUMNS: &[&str] =
    &["entity", "reference", "date", "counterparty", "ic_kind", "amount", "currency", "description", "file", "line"];

/// An empty frame with the document schema.
pub fn empty_documents() -> DataFrame {
    let mut schema = Schema::default();
    for c in DOCUMENT_COLUMNS {
        let dt = match *c {
            "amount" => amount_dtype(),
            "date" => DataType::Date,
            "line" => DataType::UInt64,
            _ => DataType::String,
        };
        schema.insert((*c).into(), dt);
    }
    DataFrame::empty_with_schema(&schema)
}

/// Stacks and parses every entity's document rows.
pub fn build_documents(tables: Vec<(EntityId, TextTable)>, f: &mut Vec<Finding>) -> DataFrame {
    if tables.is_empty() {
        return empty_documents();
    }
    let tables = tables.into_iter().map(|(e, t)| (e.to_string(), "documents".to_string(), t)).collect();
    let cols = ["reference", "date", "counterparty", "ic_kind", "amount", "currency", "description"];
    match stack(tables, &cols).and_then(|raw| parse(raw, f)) {
        Ok(df) => df,
        Err(e) => {
            f.push(
                Finding::new(
                    Rule::FileUnreadable,
                    format!("the document detail could not be assembled: {e}"),
                    "check the documents.csv files named in the other findings",
                )
                .severity(Severity::Warning),
            );
            empty_documents()
        }
    }
}

fn parse(raw: DataFrame, f: &mut Vec<Finding>) -> PolarsResult<DataFrame> {
    let codes: Vec<String> =
        raw.column("currency")?.str()?.unique()?.iter().flatten().map(|s| s.trim().to_string()).collect();
    let minor = minor_units("currency", codes);
    let trimmed: Vec<Expr> = ["reference", "date", "counterparty", "ic_kind", "amount", "currency", "description"]
        .iter()
        .map(|c| col(*c).str().strip_chars(lit(NULL)))
        .collect();
    let date_format = StrptimeOptions { format: Some("%Y-%m-%d".into()), strict: false, exact: true, cache: false };
    let mut lf = raw
        .lazy()
        .with_columns(trimmed)
        .join(minor.lazy(), [col("currency")], [col("currency")], JoinArgs::new(JoinType::Left))
        .with_column(col("date").str().to_date(date_format).alias("date_parsed"));
    let mut flags: Vec<Expr> = amount_flags("amount", "currency_minor").into();
    let missing =
        DOCUMENT_SPEC.required.iter().fold(lit(false), |acc, c| acc.or(col(*c).is_null().or(col(*c).eq(lit("")))));
    flags.push(missing.alias("missing"));
    flags.push(col("date").is_not_null().and(col("date_parsed").is_null()).alias("date_bad"));
    flags.push(col("currency").is_not_null().and(col("currency_minor").is_null()).alias("currency_unknown"));
    lf = lf.with_columns(flags);
    let names = ["amount_malformed", "amount_too_large", "amount_surplus", "missing", "date_bad", "currency_unknown"];
    let any = names.iter().fold(lit(false), |acc, n| acc.or(col(*n)));
    let df = lf.with_column(any.fill_null(lit(true)).alias("flagged")).collect()?;
    let bad = df.clone().lazy().filter(col("flagged")).collect()?;
    report(&bad, f);
    df.lazy()
        .filter(col("flagged").not())
        .select([
            col("entity"),
            col("reference"),
            col("date_parsed").alias("date"),
            col("counterparty"),
            col("ic_kind"),
            col("amount").strict_cast(amount_dtype()),
            col("currency"),
            col("description"),
            col("file"),
            col("line"),
        ])
        .sort(["entity", "file", "line"], SortMultipleOptions::default())
        .collect()
}

fn text(df: &DataFrame, c: &str, i: usize) -> String {
    df.column(c).ok().and_then(|x| x.str().ok().and_then(|s| s.get(i).map(String::from))).unwrap_or_default()
}

fn flag(df: &DataFrame, c: &str, i: usize) -> bool {
    df.column(c).ok().and_then(|x| x.bool().ok().and_then(|b| b.get(i))).unwrap_or(false)
}

fn report(bad: &DataFrame, f: &mut Vec<Finding>) {
    let unused = "the row is not used to explain intercompany differences";
    for i in 0..bad.height() {
        let file = text(bad, "file", i);
        let line = bad.column("line").ok().and_then(|c| c.u64().ok().and_then(|x| x.get(i))).unwrap_or(0);
        let entity = EntityId::new(text(bad, "entity", i));
        let mk = |rule: Rule, msg: String, action: String| {
            Finding::new(rule, msg, action).in_file(&file).line(line).entity(&entity).severity(Severity::Warning)
        };
        if flag(bad, "missing", i) {
            let empty: Vec<&str> =
                DOCUMENT_SPEC.required.iter().copied().filter(|c| text(bad, c, i).is_empty()).collect();
            f.push(mk(
                Rule::ValueMissing,
                format!("document row has no {}; {unused}", empty.join(", ")),
                "fill in every required column of documents.csv (docs/formats.md)".into(),
            ));
            continue;
        }
        let amount = text(bad, "amount", i);
        let ccy = text(bad, "currency", i);
        if flag(bad, "date_bad", i) {
            f.push(mk(
                Rule::ValueInvalid,
                format!("`date` is {:?}, not a date YYYY-MM-DD; {unused}", text(bad, "date", i)),
                "write the document date as YYYY-MM-DD".into(),
            ));
        }
        if flag(bad, "currency_unknown", i) {
            f.push(mk(
                Rule::CurrencyUnknown,
                format!("currency {ccy:?} is not an ISO 4217 code with a minor unit; {unused}"),
                "use a three-letter ISO 4217 code".into(),
            ));
        }
        if flag(bad, "amount_malformed", i) {
            f.push(mk(
                Rule::AmountMalformed,
                format!("`amount` is {amount:?}, not a plain decimal; {unused}"),
                "write amounts as -1234.56: no thousands separators, no currency sign, no exponent".into(),
            ));
        }
        if flag(bad, "amount_too_large", i) {
            f.push(mk(
                Rule::AmountTooLarge,
                format!("`amount` {amount} is not below 10^15 in absolute value; {unused}"),
                "check the amount".into(),
            ));
        }
        if flag(bad, "amount_surplus", i) {
            f.push(mk(
                Rule::AmountSurplusDecimals,
                format!("`amount` {amount} has more decimals than {ccy}'s minor unit (ISO 4217); {unused}"),
                "write the amount as booked, rounded to the currency's minor unit".into(),
            ));
        }
    }
}

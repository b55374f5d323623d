//! Rendering of the translation: per entity, the translated trial balance of the period
//! and the translation difference explained (IAS 21.41), as a table or JSON.

use std::collections::BTreeMap;

use polars::prelude::*;
use rust_decimal::Decimal;
use serde::Serialize;

use crate::map_accounts::period_index;
use crate::model::{EntityId, Period};
use crate::money::{column_decimals, format_amount};
use crate::proof::Check;
use crate::translate::{Explanation, Translated};

use super::{CAUTION, Format, csv_line, to_json};

#[derive(Serialize)]
struct Line {
    account: String,
    counterparty: Option<String>,
    txn_currency: Option<String>,
    basis: String,
    amount_local: Decimal,
    balance_local: Decimal,
    rate: Decimal,
    quote: String,
    rate_kind: String,
    amount_presentation: Decimal,
    balance_presentation: Decimal,
}

#[derive(Serialize, Default, Clone)]
struct Split {
    on_opening_net_assets: Decimal,
    on_profit: Decimal,
    on_equity_movements: Decimal,
    on_hyperinflation: Decimal,
    rounding: Decimal,
    total: Decimal,
}

impl Split {
    fn of(x: &Explanation) -> Self {
        Self {
            on_opening_net_assets: x.on_opening_net_assets,
            on_profit: x.on_profit,
            on_equity_movements: x.on_equity_movements,
            on_hyperinflation: x.on_hyperinflation,
            rounding: x.rounding,
            total: x.total,
        }
    }
    fn add(&mut self, o: &Split) {
        self.on_opening_net_assets += o.on_opening_net_assets;
        self.on_profit += o.on_profit;
        self.on_equity_movements += o.on_equity_movements;
        self.on_hyperinflation += o.on_hyperinflation;
        self.rounding += o.rounding;
        self.total += o.total;
    }
}

#[derive(Serialize)]
struct EntityReport<'a> {
    entity: String,
    currency: String,
    month: Option<&'a Explanation>,
    year_to_date: Split,
    lines: Vec<Line>,
}

#[derive(Serialize)]
struct Proof<'a> {
    tied: bool,
    checks: &'a [Check],
}

#[derive(Serialize)]
struct Report<'a> {
    period: String,
    currency: String,
    gains_positive: &'static str,
    proof: Proof<'a>,
    entities: Vec<EntityReport<'a>>,
    caution: &'static str,
}

pub fn render(
    t: &Translated,
    period: Period,
    fiscal_start: Period,
    currency: &str,
    only: Option<&EntityId>,
    checks: &[Check],
    format: Format,
) -> PolarsResult<String> {
    let p = period_index(period);
    let mut lf = t.lines.clone().lazy().filter(col("period_index").eq(lit(p)));
    if let Some(e) = only {
        lf = lf.filter(col("entity").eq(lit(e.as_str())));
    }
    let df = lf
        .sort(
            ["entity", "group_account", "counterparty", "txn_currency"],
            SortMultipleOptions::default().with_nulls_last(false),
        )
        .collect()?;
    let ent = crate::money::column_strings(&df, "entity")?;
    let acc = crate::money::column_strings(&df, "group_account")?;
    let cp = crate::money::column_strings(&df, "counterparty")?;
    let txc = crate::money::column_strings(&df, "txn_currency")?;
    let basis = crate::money::column_strings(&df, "basis")?;
    let quote = crate::money::column_strings(&df, "quote")?;
    let kind = crate::money::column_strings(&df, "rate_kind")?;
    let ccy = crate::money::column_strings(&df, "currency")?;
    let al = column_decimals(df.column("amount_local")?)?;
    let bl = column_decimals(df.column("balance_local")?)?;
    let rate = column_decimals(df.column("rate")?)?;
    let ap = column_decimals(df.column("amount_presentation")?)?;
    let bp = column_decimals(df.column("balance_presentation")?)?;
    let mut by: BTreeMap<String, (String, Vec<Line>)> = BTreeMap::new();
    for i in 0..df.height() {
        // Lines with nothing to show in the period are left out of the report.
        if bl[i] == Some(Decimal::ZERO)
            && al[i] == Some(Decimal::ZERO)
            && bp[i] == Some(Decimal::ZERO)
            && ap[i] == Some(Decimal::ZERO)
        {
            continue;
        }
        let e = ent[i].clone().unwrap_or_default();
        let entry = by.entry(e).or_insert_with(|| (ccy[i].clone().unwrap_or_default(), Vec::new()));
        entry.1.push(Line {
            account: acc[i].clone().unwrap_or_default(),
            counterparty: cp[i].clone(),
            txn_currency: txc[i].clone(),
            basis: basis[i].clone().unwrap_or_default(),
            amount_local: al[i].unwrap_or_default(),
            balance_local: bl[i].unwrap_or_default(),
            rate: rate[i].unwrap_or_default().normalize(),
            quote: quote[i].clone().unwrap_or_default(),
            rate_kind: kind[i].clone().unwrap_or_default(),
            amount_presentation: ap[i].unwrap_or_default(),
            balance_presentation: bp[i].unwrap_or_default(),
        });
    }
    let mut entities = Vec::new();
    for (e, (ccy, lines)) in by {
        let month = t.explanations.iter().find(|x| x.entity.as_str() == e && x.period == period);
        let mut ytd = Split::default();
        for x in
            t.explanations.iter().filter(|x| x.entity.as_str() == e && x.period >= fiscal_start && x.period <= period)
        {
            ytd.add(&Split::of(x));
        }
        entities.push(EntityReport { entity: e, currency: ccy, month, year_to_date: ytd, lines });
    }
    let tied = crate::proof::tied(checks);
    let report = Report {
        period: period.to_string(),
        currency: currency.to_string(),
        gains_positive: "translation differences are shown gains positive (a credit to OCI)",
        proof: Proof { tied, checks },
        entities,
        caution: CAUTION,
    };
    Ok(match format {
        Format::Json => to_json(&report),
        Format::Csv => {
            let mut out = csv_line(
                &[
                    "entity",
                    "account",
                    "counterparty",
                    "txn_currency",
                    "basis",
                    "amount_local",
                    "balance_local",
                    "rate",
                    "quote",
                    "rate_kind",
                    "amount_presentation",
                    "balance_presentation",
                ]
                .map(String::from),
            );
            for er in &report.entities {
                for l in &er.lines {
                    out.push_str(&csv_line(&[
                        er.entity.clone(),
                        l.account.clone(),
                        l.counterparty.clone().unwrap_or_default(),
                        l.txn_currency.clone().unwrap_or_default(),
                        l.basis.clone(),
                        l.amount_local.to_string(),
                        l.balance_local.to_string(),
                        l.rate.to_string(),
                        l.quote.clone(),
                        l.rate_kind.clone(),
                        l.amount_presentation.to_string(),
                        l.balance_presentation.to_string(),
                    ]));
                }
            }
            out
        }
        Format::Table => table(&report, t.minor),
    })
}

fn table(r: &Report<'_>, minor: u32) -> String {
    let mut out = format!("translation into {} for {}\n\n", r.currency, r.period);
    let head = [
        "entity",
        "ccy",
        "opening net assets",
        "profit",
        "equity moves",
        "hyperinfl.",
        "rounding",
        "translation diff.",
    ];
    let row = |e: &EntityReport<'_>, x: &Split| -> Vec<String> {
        let mut v = vec![e.entity.clone(), e.currency.clone()];
        v.extend(
            [x.on_opening_net_assets, x.on_profit, x.on_equity_movements, x.on_hyperinflation, x.rounding, x.total]
                .map(|d| format_amount(d, minor)),
        );
        v
    };
    let right = [false, false, true, true, true, true, true, true];
    let month: Vec<Vec<String>> = r.entities.iter().filter_map(|e| e.month.map(|m| row(e, &Split::of(m)))).collect();
    out.push_str("translation difference of the month, explained (gains positive, IAS 21.41)\n");
    out.push_str(&super::text_table(&head, &month, &right));
    let ytd: Vec<Vec<String>> = r.entities.iter().map(|e| row(e, &e.year_to_date)).collect();
    out.push_str("\nyear to date\n");
    out.push_str(&super::text_table(&head, &ytd, &right));
    out.push_str(&super::proof_lines(r.proof.tied, r.proof.checks));
    out.push_str(&format!("\n{CAUTION}\n"));
    out
}

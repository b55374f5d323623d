//! Rendering of the translation: per entity, the translated trial balance of the period
//! and the translation difference explained (IAS 21.41), as a table or JSON.

use std::collections::BTreeMap;

use polars::prelude::*;
use rust_decimal::Decimal;
use serde::Serialize;

use crate::map_accounts::period_index;
use crate::model::Ifric16Method;
use crate::model::{EntityId, Period};
use crate::money::{column_decimals, format_amount};
use crate::proof::Check;
use crate::translate::{Explanation, OperationReserve, Translated};

use super::{CAUTION, CsvOut, Format, to_json};

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
struct EntityReport {
    entity: String,
    currency: String,
    month: Option<Explanation>,
    year_to_date: Split,
    /// Which foreign operation each part of the difference belongs to.
    reserves: Vec<ReserveLine>,
    lines: Vec<Line>,
}

/// One foreign operation's part of an entity's translation difference (IFRIC 16.17).
#[derive(Serialize)]
struct ReserveLine {
    operation: String,
    method: &'static str,
    month: Decimal,
    year_to_date: Decimal,
    intermediate_currency: Option<String>,
    /// The month's part in the intermediate currency (step by step only).
    month_intermediate: Option<Decimal>,
}

/// The translation reserve of one foreign operation: what was brought forward (as
/// delivered in the opening balances), the year's differences that belong to it and the
/// reserve at the period end, gains (credits) positive. Under IAS 21.48 this reserve is
/// what a disposal of the operation would reclassify to profit or loss.
#[derive(Serialize)]
struct OperationLine {
    operation: String,
    brought_forward: Decimal,
    month: Decimal,
    year_to_date: Decimal,
    reserve: Decimal,
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
    ifric16: Ifric16Method,
    entities: Vec<EntityReport>,
    reserves_by_operation: Vec<OperationLine>,
    caution: &'static str,
}

/// The translated lines of the period with something to show, by entity (with its
/// currency), for `only` entity when one is asked for.
fn lines_by_entity(
    t: &Translated,
    period: Period,
    only: Option<&EntityId>,
) -> PolarsResult<BTreeMap<String, (String, Vec<Line>)>> {
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
        // Local amounts at their currency's minor unit (ISO 4217: JPY 0, BHD 3); they are
        // exact at it, so this only drops the scale's surplus zeros.
        let minor = ccy[i].as_deref().and_then(crate::model::Currency::parse).map(|c| c.minor_unit());
        let local = |d: Option<Decimal>| {
            let mut d = d.unwrap_or_default();
            if let Some(m) = minor {
                d = d.round_dp(m);
                d.rescale(m);
            }
            d
        };
        let (amount_local, balance_local) = (local(al[i]), local(bl[i]));
        let entry = by.entry(e).or_insert_with(|| (ccy[i].clone().unwrap_or_default(), Vec::new()));
        entry.1.push(Line {
            account: acc[i].clone().unwrap_or_default(),
            counterparty: cp[i].clone(),
            txn_currency: txc[i].clone(),
            basis: basis[i].clone().unwrap_or_default(),
            amount_local,
            balance_local,
            rate: rate[i].unwrap_or_default().normalize(),
            quote: quote[i].clone().unwrap_or_default(),
            rate_kind: kind[i].clone().unwrap_or_default(),
            amount_presentation: ap[i].unwrap_or_default(),
            balance_presentation: bp[i].unwrap_or_default(),
        });
    }
    Ok(by)
}

#[allow(clippy::too_many_arguments)]
pub fn render(
    t: &Translated,
    reserves: &[OperationReserve],
    method: Ifric16Method,
    period: Period,
    fiscal_start: Period,
    currency: &str,
    only: Option<&EntityId>,
    checks: &[Check],
    format: Format,
) -> PolarsResult<String> {
    let by = lines_by_entity(t, period, only)?;
    let mut entities = Vec::new();
    for (e, (ccy, lines)) in by {
        let month = t.explanations.iter().find(|x| x.entity.as_str() == e && x.period == period).map(|x| {
            // The local figures at the currency's minor unit, as the lines.
            let m = x.currency.minor_unit();
            let at = |d: Decimal| {
                let mut d = d.round_dp(m);
                d.rescale(m);
                d
            };
            Explanation {
                opening_net_assets_local: at(x.opening_net_assets_local),
                profit_local: at(x.profit_local),
                equity_movements_local: at(x.equity_movements_local),
                ..x.clone()
            }
        });
        let mut ytd = Split::default();
        for x in
            t.explanations.iter().filter(|x| x.entity.as_str() == e && x.period >= fiscal_start && x.period <= period)
        {
            ytd.add(&Split::of(x));
        }
        let mut parts: BTreeMap<String, ReserveLine> = BTreeMap::new();
        for r in reserves.iter().filter(|r| r.entity.as_str() == e && r.period >= fiscal_start && r.period <= period) {
            let part = parts.entry(r.operation.to_string()).or_insert_with(|| ReserveLine {
                operation: r.operation.to_string(),
                method: r.method,
                month: Decimal::ZERO,
                year_to_date: Decimal::ZERO,
                intermediate_currency: None,
                month_intermediate: None,
            });
            part.year_to_date += r.amount;
            if r.period == period {
                part.month += r.amount;
                part.method = r.method;
                part.intermediate_currency = r.intermediate_currency.map(|c| c.code().to_string());
                part.month_intermediate = r.amount_intermediate;
            }
        }
        entities.push(EntityReport {
            entity: e,
            currency: ccy,
            month,
            year_to_date: ytd,
            reserves: parts.into_values().collect(),
            lines,
        });
    }
    let reserves_by_operation =
        operation_lines(crate::translate::operations_year(t, reserves, period, fiscal_start)?, only);
    let tied = crate::proof::tied(checks);
    let report = Report {
        period: period.to_string(),
        currency: currency.to_string(),
        gains_positive: "translation differences are shown gains positive (a credit to OCI)",
        proof: Proof { tied, checks },
        ifric16: method,
        entities,
        reserves_by_operation,
        caution: CAUTION,
    };
    Ok(match format {
        Format::Json => to_json(&report),
        Format::Csv => {
            let mut out = CsvOut::new(&[
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
            ]);
            for er in &report.entities {
                for l in &er.lines {
                    out.row(&[
                        er.entity.clone(),
                        l.account.clone(),
                        l.counterparty.clone().unwrap_or_default(),
                        l.txn_currency.clone().unwrap_or_default(),
                        l.basis.clone(),
                        crate::money::plain(l.amount_local),
                        crate::money::plain(l.balance_local),
                        l.rate.to_string(),
                        l.quote.clone(),
                        l.rate_kind.clone(),
                        crate::money::plain(l.amount_presentation),
                        crate::money::plain(l.balance_presentation),
                    ]);
                }
            }
            out.finish()
        }
        Format::Table => table(&report, t.minor),
    })
}

/// The operations' reserves as computed by `translate::operations_year`, for `only`
/// operation when one is asked for.
fn operation_lines(operations: Vec<crate::translate::OperationYear>, only: Option<&EntityId>) -> Vec<OperationLine> {
    operations
        .into_iter()
        .filter(|l| only.is_none_or(|e| *e == l.operation))
        .map(|l| OperationLine {
            operation: l.operation.to_string(),
            brought_forward: l.brought_forward,
            month: l.month,
            year_to_date: l.year_to_date,
            reserve: l.reserve,
        })
        .collect()
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
    let row = |e: &EntityReport, x: &Split| -> Vec<String> {
        let mut v = vec![e.entity.clone(), e.currency.clone()];
        v.extend(
            [x.on_opening_net_assets, x.on_profit, x.on_equity_movements, x.on_hyperinflation, x.rounding, x.total]
                .map(|d| format_amount(d, minor)),
        );
        v
    };
    let right = [false, false, true, true, true, true, true, true];
    let month: Vec<Vec<String>> =
        r.entities.iter().filter_map(|e| e.month.as_ref().map(|m| row(e, &Split::of(m)))).collect();
    out.push_str("translation difference of the month, explained (gains positive, IAS 21.41)\n");
    out.push_str(&super::text_table(&head, &month, &right));
    let ytd: Vec<Vec<String>> = r.entities.iter().map(|e| row(e, &e.year_to_date)).collect();
    out.push_str("\nyear to date\n");
    out.push_str(&super::text_table(&head, &ytd, &right));
    let method = match r.ifric16 {
        Ifric16Method::Direct => "direct",
        Ifric16Method::StepByStep => "step by step",
    };
    out.push_str(&format!("\ntranslation reserve by foreign operation (IFRIC 16, {method} method; gains positive)\n"));
    let ops: Vec<Vec<String>> = r
        .reserves_by_operation
        .iter()
        .map(|l| {
            let mut v = vec![l.operation.clone()];
            v.extend([l.brought_forward, l.month, l.year_to_date, l.reserve].map(|d| format_amount(d, minor)));
            v
        })
        .collect();
    out.push_str(&super::text_table(
        &["operation", "brought forward", "month", "year to date", "reserve"],
        &ops,
        &[false, true, true, true, true],
    ));
    out.push_str(&super::proof_lines(r.proof.tied, r.proof.checks));
    out.push('\n');
    out.push_str(&super::caution_text());
    out
}

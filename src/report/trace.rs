//! Rendering of a trace: how one group figure is made, from the ledger lines through
//! each entity's translated contribution and each elimination, summing to the figure.

use polars::prelude::*;
use rust_decimal::Decimal;
use serde::Serialize;

use crate::close::Entry;
use crate::load::Dataset;
use crate::model::{GroupAccount, Period};
use crate::money::{column_decimals, format_amount};

use super::{CsvOut, Format, to_json};

#[derive(Serialize)]
struct LedgerLine {
    file: String,
    line: u64,
    period: Option<String>,
    local_account: String,
    counterparty: Option<String>,
    amount_local: Decimal,
}

#[derive(Serialize)]
struct Contribution {
    entity: String,
    currency: String,
    counterparty: Option<String>,
    amount: Decimal,
}

#[derive(Serialize)]
struct EntityPart {
    entity: String,
    currency: String,
    balance_local: Decimal,
    contribution: Decimal,
    by_counterparty: Vec<Contribution>,
    ledger_lines: Vec<LedgerLine>,
}

#[derive(Serialize)]
struct Elim {
    entry: String,
    rule: &'static str,
    entity: String,
    counterparty: Option<String>,
    amount: Decimal,
    description: String,
}

#[derive(Serialize)]
struct Trace {
    account: String,
    name: String,
    period: String,
    group_amount: Decimal,
    contributions_total: Decimal,
    eliminations_total: Decimal,
    reconciles: bool,
    entities: Vec<EntityPart>,
    eliminations: Vec<Elim>,
}

#[allow(clippy::too_many_arguments)]
pub fn render(
    account: &GroupAccount,
    ds: &Dataset,
    contributions: &DataFrame,
    ledger: &DataFrame,
    journal: &[Entry],
    group_amount: Decimal,
    period: Period,
    minor: u32,
    format: Format,
) -> PolarsResult<String> {
    let ce = crate::money::column_strings(contributions, "entity")?;
    let cc = crate::money::column_strings(contributions, "counterparty")?;
    let ca = column_decimals(contributions.column("amount")?)?;
    let le = crate::money::column_strings(ledger, "entity")?;
    let lf = crate::money::column_strings(ledger, "file")?;
    let ll: Vec<Option<u64>> = ledger.column("line")?.u64()?.iter().collect();
    let lp = crate::money::column_strings(ledger, "period")?;
    let la = crate::money::column_strings(ledger, "account")?;
    let lc = crate::money::column_strings(ledger, "counterparty")?;
    let lv = column_decimals(ledger.column("amount")?)?;
    let mut parts: Vec<EntityPart> = Vec::new();
    for i in 0..contributions.height() {
        let e = ce[i].clone().unwrap_or_default();
        let currency = ds.entity(&crate::model::EntityId::new(&e)).map(|x| x.currency.to_string()).unwrap_or_default();
        if parts.last().is_none_or(|p| p.entity != e) {
            parts.push(EntityPart {
                entity: e.clone(),
                currency: currency.clone(),
                balance_local: Decimal::ZERO,
                contribution: Decimal::ZERO,
                by_counterparty: Vec::new(),
                ledger_lines: Vec::new(),
            });
        }
        let part = parts.last_mut().expect("pushed above");
        part.contribution += ca[i].unwrap_or_default();
        part.by_counterparty.push(Contribution {
            entity: e,
            currency,
            counterparty: cc[i].clone(),
            amount: ca[i].unwrap_or_default(),
        });
    }
    for i in 0..ledger.height() {
        let e = le[i].clone().unwrap_or_default();
        if let Some(part) = parts.iter_mut().find(|p| p.entity == e) {
            let amount = lv[i].unwrap_or_default();
            part.balance_local += amount;
            part.ledger_lines.push(LedgerLine {
                file: lf[i].clone().unwrap_or_default(),
                line: ll[i].unwrap_or(0),
                period: lp[i].clone(),
                local_account: la[i].clone().unwrap_or_default(),
                counterparty: lc[i].clone(),
                amount_local: amount,
            });
        }
    }
    let elims: Vec<Elim> = journal
        .iter()
        .flat_map(|e| {
            e.lines.iter().filter(|l| &l.account == account).map(|l| Elim {
                entry: e.id.clone(),
                rule: e.rule,
                entity: l.entity.to_string(),
                counterparty: l.counterparty.as_ref().map(|c| c.to_string()),
                amount: l.amount,
                description: e.description.clone(),
            })
        })
        .collect();
    let contributions_total: Decimal = parts.iter().map(|p| p.contribution).sum();
    let eliminations_total: Decimal = elims.iter().map(|e| e.amount).sum();
    let t = Trace {
        account: account.to_string(),
        name: ds.account(account).map(|a| a.name.clone()).unwrap_or_default(),
        period: period.to_string(),
        group_amount,
        contributions_total,
        eliminations_total,
        reconciles: contributions_total + eliminations_total == group_amount,
        entities: parts,
        eliminations: elims,
    };
    Ok(match format {
        Format::Json => to_json(&t),
        Format::Csv => {
            let mut out = CsvOut::new(&["source", "entity", "reference", "counterparty", "amount"]);
            for p in &t.entities {
                for c in &p.by_counterparty {
                    out.row(&[
                        "contribution".into(),
                        p.entity.clone(),
                        String::new(),
                        c.counterparty.clone().unwrap_or_default(),
                        crate::money::plain(c.amount),
                    ]);
                }
            }
            for e in &t.eliminations {
                out.row(&[
                    format!("elimination {}", e.rule),
                    e.entity.clone(),
                    e.entry.clone(),
                    e.counterparty.clone().unwrap_or_default(),
                    crate::money::plain(e.amount),
                ]);
            }
            out.finish()
        }
        Format::Table => {
            let mut out =
                format!("trace of {} {} at {} (year to date, debit positive)\n\n", t.account, t.name, t.period);
            for p in &t.entities {
                out.push_str(&format!(
                    "{} ({}): local {} -> contribution {}\n",
                    p.entity,
                    p.currency,
                    format_amount(p.balance_local, 3),
                    format_amount(p.contribution, minor)
                ));
                for l in &p.ledger_lines {
                    out.push_str(&format!(
                        "    {}:{}  {}  {}{}  {}\n",
                        l.file,
                        l.line,
                        l.period.clone().unwrap_or_else(|| "opening".into()),
                        l.local_account,
                        l.counterparty.as_ref().map(|c| format!(" [{c}]")).unwrap_or_default(),
                        format_amount(l.amount_local, 3)
                    ));
                }
            }
            out.push_str("\neliminations\n");
            for e in &t.eliminations {
                out.push_str(&format!(
                    "    {} {} {}  {}  {}\n",
                    e.entry,
                    e.rule,
                    e.entity,
                    format_amount(e.amount, minor),
                    e.description
                ));
            }
            out.push_str(&format!(
                "\ncontributions {} + eliminations {} = {} (group figure {}): {}\n",
                format_amount(t.contributions_total, minor),
                format_amount(t.eliminations_total, minor),
                format_amount(t.contributions_total + t.eliminations_total, minor),
                format_amount(t.group_amount, minor),
                if t.reconciles { "reconciles" } else { "DOES NOT RECONCILE" }
            ));
            out
        }
    })
}

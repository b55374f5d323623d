//! `trace`: how one group figure is made, from the ledger lines through each entity's
//! translated contribution and each elimination entry, summing to the figure. A read of
//! a finished close; it knows nothing about files and formats no number.

use polars::prelude::*;
use rust_decimal::Decimal;
use serde::Serialize;

use crate::close::{Close, EliminationRule};
use crate::load::Dataset;
use crate::map_accounts::Mapped;
use crate::model::{GroupAccount, Period};
use crate::money::column_decimals;

#[derive(Debug, Serialize)]
pub struct LedgerLine {
    pub file: String,
    pub line: u64,
    pub period: Option<String>,
    pub local_account: String,
    pub counterparty: Option<String>,
    pub amount_local: Decimal,
}

#[derive(Debug, Serialize)]
pub struct Contribution {
    pub entity: String,
    pub currency: String,
    pub counterparty: Option<String>,
    pub amount: Decimal,
}

#[derive(Debug, Serialize)]
pub struct EntityPart {
    pub entity: String,
    pub currency: String,
    pub balance_local: Decimal,
    pub contribution: Decimal,
    pub by_counterparty: Vec<Contribution>,
    pub ledger_lines: Vec<LedgerLine>,
}

#[derive(Debug, Serialize)]
pub struct Elim {
    pub entry: String,
    pub rule: EliminationRule,
    pub entity: String,
    pub counterparty: Option<String>,
    pub amount: Decimal,
    pub description: String,
}

#[derive(Debug, Serialize)]
pub struct Trace {
    pub account: String,
    pub name: String,
    pub period: String,
    pub group_amount: Decimal,
    pub contributions_total: Decimal,
    pub eliminations_total: Decimal,
    pub reconciles: bool,
    pub entities: Vec<EntityPart>,
    pub eliminations: Vec<Elim>,
}

/// The trace of `account` in `close` at `period` (year to date).
pub fn trace(
    account: &GroupAccount,
    ds: &Dataset,
    close: &Close,
    mapped: &Mapped,
    period: Period,
) -> PolarsResult<Trace> {
    let _span = tracing::info_span!("trace", account = %account).entered();
    let contributions =
        close.contributions.clone().lazy().filter(col("group_account").eq(lit(account.as_str()))).collect()?;
    let entities: Vec<String> = contributions
        .column("entity")?
        .str()?
        .iter()
        .flatten()
        .map(String::from)
        .collect::<std::collections::BTreeSet<_>>()
        .into_iter()
        .collect();
    let ledger = ledger_lines(account, mapped, &entities, period)?;
    let group_amount = close.group.get(account).copied().unwrap_or_default();
    let journal = &close.journal;
    let ce = crate::money::column_strings(&contributions, "entity")?;
    let cc = crate::money::column_strings(&contributions, "counterparty")?;
    let ca = column_decimals(contributions.column("amount")?)?;
    let le = crate::money::column_strings(&ledger, "entity")?;
    let lf = crate::money::column_strings(&ledger, "file")?;
    let ll: Vec<Option<u64>> = ledger.column("line")?.u64()?.iter().collect();
    let lp = crate::money::column_strings(&ledger, "period")?;
    let la = crate::money::column_strings(&ledger, "account")?;
    let lc = crate::money::column_strings(&ledger, "counterparty")?;
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
    Ok(t)
}

/// The ledger lines of `entities` behind their contributions on `account`: the rows of
/// every month up to the period that no later balance delivery has superseded (each month
/// is read as what it was delivered as).
fn ledger_lines(
    account: &GroupAccount,
    mapped: &Mapped,
    entities: &[String],
    period: Period,
) -> PolarsResult<DataFrame> {
    let p = crate::map_accounts::period_index(period);
    let ents = Series::new("e".into(), entities.to_vec());
    crate::map_accounts::rows_behind(&mapped.lines, p)?
        .filter(
            col("group_account").eq(lit(account.as_str())).and(col("entity").is_in(lit(ents).implode(false), false)),
        )
        .sort(["entity", "file", "line"], SortMultipleOptions::default())
        .collect()
}

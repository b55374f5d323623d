//! Writing a synthetic group (`generate::Plan`) as a data folder in the input format of
//! docs/formats.md: the group files first, then each entity's folder, one entity at a
//! time, so that memory stays at one entity's delivery whatever the group's size. Trial
//! balances are CSV, or Parquet with the same text columns.

use std::io::{BufWriter, Write};
use std::path::Path;

use polars::prelude::*;
use rust_decimal::Decimal;

use crate::generate::{
    ASSOCIATES, COST_OF_SALES, EQUITY_RESULT, GOODWILL, IC_DIFFERENCE, INVENTORY, LedgerRow, NCI, Plan,
    RETAINED_EARNINGS, TRANSLATION_DIFFERENCE, TRANSLATION_RESERVE,
};

/// What was written.
#[derive(Debug, Clone, Default, serde::Serialize)]
pub struct Written {
    pub entities: usize,
    pub files: usize,
    pub bytes: u64,
    pub trial_balance_rows: usize,
    pub document_rows: usize,
    pub pairs: usize,
    /// Pairs by the difference they were given.
    pub differences: Vec<(String, usize)>,
}

fn file(path: &Path) -> std::io::Result<BufWriter<std::fs::File>> {
    if let Some(d) = path.parent() {
        std::fs::create_dir_all(d)?;
    }
    Ok(BufWriter::with_capacity(1 << 16, std::fs::File::create(path)?))
}

fn text(path: &Path, body: &str, w: &mut Written) -> std::io::Result<()> {
    let mut f = file(path)?;
    f.write_all(body.as_bytes())?;
    f.flush()?;
    w.files += 1;
    w.bytes += body.len() as u64;
    Ok(())
}

fn amount(d: Decimal) -> String {
    d.to_string()
}

/// Writes the synthetic group into `out` (which must not hold an `entities/` folder
/// already); `progress` is told each entity written.
pub fn write(plan: &Plan, out: &Path, progress: &dyn Fn(usize)) -> Result<Written, crate::Error> {
    let ent = out.join("entities");
    if ent.exists() {
        return Err(crate::Error::Usage(format!("{} already exists: generate into an empty folder", ent.display())));
    }
    let mut w = Written { entities: plan.entities.len(), pairs: plan.pairs.len(), ..Default::default() };
    w.differences = plan.difference_counts().into_iter().map(|(k, v)| (k.as_str().to_string(), v)).collect();
    let parent = &plan.entities[0].id;
    let o = &plan.options;
    text(
        &ent.join("group.toml"),
        &format!(
            "# A synthetic group: tessera generate --entities {} --accounts {} --used {} --months {} --seed {} --documents {}\n\
name = \"Synthetic group {}\"\nparent = \"{parent}\"\npresentation_currency = \"EUR\"\nfiscal_year_start = 1\n\n\
[policies]\nrounding = \"half_away_from_zero\"\nincome_translation = \"periodic\"\nifric16 = \"direct\"\nsignificant_influence = \"0.20\"\n\n\
[accounts]\nretained_earnings = \"{RETAINED_EARNINGS}\"\ntranslation_reserve = \"{TRANSLATION_RESERVE}\"\n\
translation_difference = \"{TRANSLATION_DIFFERENCE}\"\nnon_controlling_interest = \"{NCI}\"\ngoodwill = \"{GOODWILL}\"\n\
equity_investments = \"{ASSOCIATES}\"\nequity_result = \"{EQUITY_RESULT}\"\nintercompany_difference = \"{IC_DIFFERENCE}\"\n\
inventory = \"{INVENTORY}\"\ncost_of_sales = \"{COST_OF_SALES}\"\n\n\
[intercompany]\ntolerance_absolute = \"50.00\"\ntolerance_relative = \"0.001\"\ntiming_window_days = 5\n",
            o.entities, o.accounts, o.used, o.months, o.seed, o.documents, o.seed
        ),
        &mut w,
    )?;
    let mut s = String::from("entity,name,country,currency,segment_geography,segment_business\n");
    for e in &plan.entities {
        s.push_str(&format!(
            "{},Synthetic entity {} ({}),{},{},{},{}\n",
            e.id, e.id, e.currency, e.country, e.currency, e.region, e.business
        ));
    }
    text(&ent.join("entities.csv"), &s, &mut w)?;
    let mut s = String::from(
        "owner,owned,capital_share,voting_share,valid_from,valid_to,arrangement,method_override,override_reason\n",
    );
    for e in &plan.entities {
        if let Some(o) = e.owner {
            s.push_str(&format!("{},{},{},{},{},,,,\n", plan.entities[o].id, e.id, e.share, e.share, e.valid_from));
        }
    }
    text(&ent.join("holdings.csv"), &s, &mut w)?;
    let mut s = String::from("account,name,statement,class,basis,ic_kind,non_current\n");
    for a in &plan.chart {
        s.push_str(&format!(
            "{},{},{},{},{},{},{}\n",
            a.code,
            a.name,
            a.statement,
            a.class,
            a.basis,
            a.ic_kind.unwrap_or(""),
            if a.non_current { "true" } else { "" }
        ));
    }
    text(&ent.join("accounts.csv"), &s, &mut w)?;
    text(&ent.join("layouts.csv"), LAYOUTS, &mut w)?;
    let mut s = String::from(
        "owned,date,consideration,nci_measurement,nci_fair_value,net_assets,net_assets_presentation,impairment,note\n",
    );
    for a in plan.acquisitions() {
        s.push_str(&format!(
            "{},{},{},share_of_net_assets,,{},{},0,synthetic\n",
            a.owned,
            a.date,
            amount(a.consideration),
            amount(a.net_assets),
            amount(a.net_assets_presentation)
        ));
    }
    text(&ent.join("acquisitions.csv"), &s, &mut w)?;
    let mut s = String::from("period,currency,closing,average,quote,source\n");
    let used: std::collections::BTreeSet<_> = plan.entities.iter().map(|e| e.currency).collect();
    for (c, list) in &plan.rates {
        if !used.contains(c) {
            continue;
        }
        for r in list {
            s.push_str(&format!("{},{},{},{},units_per_presentation,synthetic\n", r.period, c, r.closing, r.average));
        }
    }
    text(&out.join("rates").join("monthly.csv"), &s, &mut w)?;
    text(&out.join("rates").join("historical.csv"), "entity,account,period,rate,quote,note\n", &mut w)?;

    for i in 0..plan.entities.len() {
        write_entity(plan, i, &ent, &mut w)?;
        progress(i + 1);
    }
    Ok(w)
}

fn ledger_line(s: &mut String, period: Option<&str>, l: &LedgerRow, with_presentation: bool) {
    if let Some(p) = period {
        s.push_str(p);
        s.push(',');
    }
    s.push_str(&l.account);
    s.push(',');
    s.push_str(&amount(l.amount));
    s.push(',');
    if let Some(c) = &l.counterparty {
        s.push_str(c);
    }
    s.push(',');
    if let Some((c, x)) = &l.txn {
        s.push_str(c.code());
        s.push(',');
        s.push_str(&amount(*x));
    } else {
        s.push(',');
    }
    if with_presentation {
        s.push(',');
        if let Some(x) = l.amount_presentation {
            s.push_str(&amount(x));
        }
    }
    s.push('\n');
}

fn write_entity(plan: &Plan, i: usize, ent: &Path, w: &mut Written) -> Result<(), crate::Error> {
    let d = plan.entity(i);
    let dir = ent.join(&d.id);
    let mut s = String::from("local_account,local_name,group_account\n");
    for m in &d.mapping {
        s.push_str(&format!("{},{},{}\n", m.local_account, m.local_name, m.group_account));
    }
    text(&dir.join("mapping.csv"), &s, w)?;
    let mut s = String::from("account,amount,counterparty,txn_currency,txn_amount,amount_presentation\n");
    for l in &d.opening {
        ledger_line(&mut s, None, l, true);
    }
    text(&dir.join("opening.csv"), &s, w)?;
    for (p, rows) in &d.months {
        w.trial_balance_rows += rows.len();
        if plan.options.parquet {
            let path = dir.join(format!("tb-{p}.movements.parquet"));
            let strings =
                |f: &dyn Fn(&LedgerRow) -> Option<String>| -> Vec<Option<String>> { rows.iter().map(f).collect() };
            let mut df = DataFrame::new(
                rows.len(),
                vec![
                    Column::new("period".into(), vec![p.to_string(); rows.len()]),
                    Column::new("account".into(), strings(&|l| Some(l.account.clone()))),
                    Column::new("amount".into(), strings(&|l| Some(amount(l.amount)))),
                    Column::new("counterparty".into(), strings(&|l| l.counterparty.clone())),
                    Column::new("txn_currency".into(), strings(&|l| l.txn.map(|(c, _)| c.code().to_string()))),
                    Column::new("txn_amount".into(), strings(&|l| l.txn.map(|(_, x)| amount(x)))),
                ],
            )?;
            let f = std::fs::File::create(&path)?;
            ParquetWriter::new(f).finish(&mut df)?;
            w.files += 1;
            w.bytes += std::fs::metadata(&path)?.len();
        } else {
            let mut s = String::with_capacity(rows.len() * 48);
            s.push_str("period,account,amount,counterparty,txn_currency,txn_amount\n");
            let period = p.to_string();
            for l in rows {
                ledger_line(&mut s, Some(&period), l, false);
            }
            text(&dir.join(format!("tb-{p}.movements.csv")), &s, w)?;
        }
    }
    if !d.documents.is_empty() {
        let mut s = String::with_capacity(d.documents.len() * 64);
        s.push_str("reference,date,counterparty,ic_kind,amount,currency,description\n");
        for x in &d.documents {
            s.push_str(&format!(
                "{},{},{},{},{},{},synthetic invoice\n",
                x.reference,
                x.date,
                x.counterparty,
                x.ic_kind,
                amount(x.amount),
                x.currency
            ));
        }
        w.document_rows += d.documents.len();
        text(&dir.join(crate::load::DOCUMENTS_FILE), &s, w)?;
    }
    Ok(())
}

/// The synthetic chart's statement layouts: 6-digit ranges, one line per account group.
const LAYOUTS: &str = "statement,line,label,accounts,total_of,presentation
profit_or_loss,REV,Revenue,400000..489999,,credit_positive
profit_or_loss,COS,Cost of sales,500000..599999,,credit_positive
profit_or_loss,GP,Gross profit,,REV COS,credit_positive
profit_or_loss,OPEX,Operating expenses,600000..699999,,credit_positive
profit_or_loss,OP,Operating profit,,GP OPEX,credit_positive
profit_or_loss,FIN,Finance result,700000..799999,,credit_positive
profit_or_loss,ASSOC,Share of result of associates,490000..499999,,credit_positive
profit_or_loss,PBT,Profit before tax,,OP FIN ASSOC,credit_positive
profit_or_loss,TAX,Income tax,800000..899999,,credit_positive
profit_or_loss,PROFIT,Profit for the period,,PBT TAX,credit_positive
oci,TRD,Exchange differences on translating foreign operations,900000..999999,,credit_positive
oci,OCI,Total other comprehensive income,,TRD,credit_positive
balance_sheet,NCA,Non-current assets,100000..149999,,debit_positive
balance_sheet,CA,Current assets,150000..199999,,debit_positive
balance_sheet,TA,Total assets,,NCA CA,debit_positive
balance_sheet,EQP,Equity attributable to owners of the parent,300000..389999,,credit_positive
balance_sheet,NCI,Non-controlling interests,390000..399999,,credit_positive
balance_sheet,EQ,Equity,,EQP NCI,credit_positive
balance_sheet,NCL,Non-current liabilities,200000..239999,,credit_positive
balance_sheet,CL,Current liabilities,240000..299999,,credit_positive
balance_sheet,TEL,Total equity and liabilities,,EQ NCL CL,credit_positive
equity_changes,SC,Share capital,300000..309999,,credit_positive
equity_changes,SP,Share premium,310000..319999,,credit_positive
equity_changes,RE,Retained earnings,320000..329999,,credit_positive
equity_changes,TR,Translation reserve,330000..389999,,credit_positive
equity_changes,NCI,Non-controlling interests,390000..399999,,credit_positive
equity_changes,TOTAL,Total equity,,SC SP RE TR NCI,credit_positive
";

/// What `tessera generate` prints.
pub fn render(w: &Written, out: &Path) -> String {
    let mut s = format!(
        "wrote {} entities into {}: {} files, {} bytes, {} trial balance rows, {} document rows\n",
        w.entities,
        out.display(),
        w.files,
        w.bytes,
        w.trial_balance_rows,
        w.document_rows
    );
    s.push_str(&format!("intercompany pairs: {}", w.pairs));
    for (k, n) in &w.differences {
        s.push_str(&format!(", {k} {n}"));
    }
    s.push('\n');
    s
}

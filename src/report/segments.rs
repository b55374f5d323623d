//! Rendering and writing of a segment report (IFRS 8): the segments' figures line by
//! line, the reconciliation to the group with each reconciling item named (IFRS 8.28),
//! the thresholds (IFRS 8.13, 8.15), the entity-wide view by country (IFRS 8.33), the
//! findings and the proof; as a table, JSON (amounts as decimal strings) or CSV.

use std::path::Path;

use serde::Serialize;

use crate::findings::Finding;
use crate::load::InputFile;
use crate::money::format_amount;
use crate::proof::Check;
use crate::segments::SegmentReport;

use super::{CsvOut, Format, proof_lines, text_table, to_json, write_file};

#[derive(Serialize)]
pub struct SegmentsProof<'a> {
    pub tied: bool,
    pub checks: &'a [Check],
    pub inputs: &'a [InputFile],
    pub tessera_version: &'static str,
}

#[derive(Serialize)]
pub struct SegmentsOut<'a> {
    pub period: String,
    pub currency: String,
    pub view: &'a str,
    pub scope: String,
    #[serde(flatten)]
    pub report: &'a SegmentReport,
    /// The segments beside a comparison (`--compare`).
    #[serde(skip_serializing_if = "Option::is_none")]
    pub comparison: Option<ComparisonOut<'a>>,
    pub findings: &'a [Finding],
    pub proof: SegmentsProof<'a>,
    pub caution: &'static str,
}

/// The segments' flow figures beside a comparison.
#[derive(Serialize)]
pub struct ComparisonOut<'a> {
    pub comparison: &'a str,
    pub rows: &'a [crate::compare::walk::SegmentComparison],
}

/// The terminal table of a segment comparison.
fn comparison_table(c: &ComparisonOut<'_>, minor: u32) -> String {
    let rows: Vec<Vec<String>> = c
        .rows
        .iter()
        .map(|r| {
            vec![
                r.segment.clone(),
                r.line.clone(),
                format_amount(r.actual, minor),
                format_amount(r.comparison, minor),
                format_amount(r.variance, minor),
                r.variance_percent.map(|p| format!("{p:.1}%")).unwrap_or_default(),
                match r.direction {
                    Some("favourable") => "F".into(),
                    Some(_) => "U".into(),
                    None => String::new(),
                },
                format_amount(r.currency_effect, minor),
            ]
        })
        .collect();
    let mut out = format!("\nsegments against {}\n", c.comparison);
    out.push_str(&super::text_table(
        &["Segment", "Figure", "Actual", c.comparison, "Variance", "%", "F/U", "Currency effect"],
        &rows,
        &[false, false, true, true, true, true, false, true],
    ));
    out
}

/// One figure per row: section, line, column, amount (a plain decimal string).
fn csv(r: &SegmentsOut<'_>) -> String {
    let mut out = CsvOut::new(&["section", "line", "column", "amount"]);
    let rep = r.report;
    for l in &rep.lines {
        for s in &rep.segments {
            let v = s.values.get(&l.line).copied().unwrap_or_default();
            out.row(&["segment".into(), l.line.clone(), s.segment.clone(), v.to_string()]);
        }
    }
    for l in &rep.reconciliation {
        out.row(&[
            "reconciliation".into(),
            l.line.clone(),
            "reportable_segments".into(),
            crate::money::plain(l.reportable_segments),
        ]);
        for i in &l.items {
            out.row(&["reconciliation".into(), l.line.clone(), i.item.clone(), crate::money::plain(i.amount)]);
        }
        out.row(&["reconciliation".into(), l.line.clone(), "group".into(), crate::money::plain(l.group)]);
    }
    for c in &rep.entity_wide.rows {
        out.row(&[
            "entity_wide".into(),
            "revenue_external".into(),
            c.country.clone(),
            crate::money::plain(c.revenue_external),
        ]);
        out.row(&[
            "entity_wide".into(),
            "non_current_assets".into(),
            c.country.clone(),
            crate::money::plain(c.non_current_assets),
        ]);
    }
    // A comparison: one row per segment, figure and column (`<segment> actual`, ...).
    for c in r.comparison.iter().flat_map(|c| c.rows.iter().map(move |x| (c.comparison, x))) {
        let (name, x) = c;
        for (col, v) in [
            ("actual", Some(x.actual)),
            (name, Some(x.comparison)),
            ("variance", Some(x.variance)),
            ("variance_percent", x.variance_percent),
            ("currency_effect", Some(x.currency_effect)),
        ] {
            let v = v.map(crate::money::plain).unwrap_or_default();
            out.row(&["comparison".into(), x.line.clone(), format!("{} {col}", x.segment), v]);
        }
    }
    out.finish()
}

/// The entity-wide table by country (IFRS 8.33).
fn entity_wide_table(ew: &crate::segments::EntityWide, amt: &dyn Fn(rust_decimal::Decimal) -> String) -> String {
    let mut out = format!(
        "\nEntity-wide by country (IFRS 8.33; home {}, foreign countries from {} of the group shown on their own)\n",
        ew.home_country, ew.materiality
    );
    let mut rows: Vec<Vec<String>> = ew
        .rows
        .iter()
        .map(|c| {
            let name = if c.home {
                format!("{} (home)", c.country)
            } else if c.country == "other" {
                format!("other countries ({})", c.countries.join(", "))
            } else {
                c.country.clone()
            };
            vec![name, amt(c.revenue_external), amt(c.non_current_assets)]
        })
        .collect();
    rows.push(vec!["group".into(), amt(ew.revenue_external), amt(ew.non_current_assets)]);
    out.push_str(&text_table(
        &["country", "revenue from external customers", "non-current assets"],
        &rows,
        &[false, true, true],
    ));
    out
}

fn table(r: &SegmentsOut<'_>, minor: u32) -> String {
    let rep = r.report;
    let amt = |d: rust_decimal::Decimal| format_amount(d, minor);
    let mut out =
        format!("Segments by {} for {}, {} view, {} ({})\n\n", rep.key, r.period, r.view, r.currency, r.scope);
    // Segment figures: one column per operating segment.
    let mut header: Vec<String> = vec!["line".into()];
    for s in &rep.segments {
        header.push(if s.other { format!("{}*", s.segment) } else { s.segment.clone() });
    }
    let rows: Vec<Vec<String>> = rep
        .lines
        .iter()
        .map(|l| {
            let mut row = vec![l.label.clone()];
            row.extend(rep.segments.iter().map(|s| amt(s.values.get(&l.line).copied().unwrap_or_default())));
            row
        })
        .collect();
    let h: Vec<&str> = header.iter().map(String::as_str).collect();
    let right: Vec<bool> = (0..h.len()).map(|i| i > 0).collect();
    out.push_str(&text_table(&h, &rows, &right));
    if rep.segments.iter().any(|s| s.other) {
        out.push_str("* reported among all other segments (IFRS 8.16)\n");
    }
    // Reconciliation (IFRS 8.28).
    out.push_str("\nReconciliation to the group (IFRS 8.28)\n");
    let item_labels: Vec<String> =
        rep.reconciliation.first().map(|l| l.items.iter().map(|i| i.label.clone()).collect()).unwrap_or_default();
    let mut header: Vec<String> = vec!["line".into(), "reportable segments".into()];
    header.extend(item_labels);
    header.push("group".into());
    let rows: Vec<Vec<String>> = rep
        .reconciliation
        .iter()
        .map(|l| {
            let mut row = vec![l.label.clone(), amt(l.reportable_segments)];
            row.extend(l.items.iter().map(|i| amt(i.amount)));
            row.push(amt(l.group));
            row
        })
        .collect();
    let h: Vec<&str> = header.iter().map(String::as_str).collect();
    let right: Vec<bool> = (0..h.len()).map(|i| i > 0).collect();
    out.push_str(&text_table(&h, &rows, &right));
    // Thresholds (IFRS 8.13, 8.15).
    let t = &rep.thresholds;
    out.push_str(&format!(
        "\nThresholds (IFRS 8.13): 10% of combined revenue {} = {}; of the larger of combined profit {} and loss {} = {}{}\n",
        amt(t.combined_revenue),
        amt(t.revenue_threshold),
        amt(t.combined_profit),
        amt(t.combined_loss),
        amt(t.profit_threshold),
        match (t.combined_assets, t.assets_threshold) {
            (Some(c), Some(th)) => format!("; of combined assets {} = {}", amt(c), amt(th)),
            _ => String::new(),
        }
    ));
    let yes = |b: bool| if b { "yes" } else { "no" }.to_string();
    let rows: Vec<Vec<String>> = t
        .rows
        .iter()
        .map(|x| {
            vec![
                x.segment.clone(),
                amt(x.revenue),
                yes(x.revenue_test),
                amt(x.profit),
                yes(x.profit_test),
                x.assets.map(amt).unwrap_or_default(),
                x.assets_test.map(yes).unwrap_or_default(),
                yes(x.meets_threshold),
                yes(x.reported_separately),
            ]
        })
        .collect();
    out.push_str(&text_table(
        &["segment", "revenue", "10%", "profit", "10%", "assets", "10%", "meets a test", "reported"],
        &rows,
        &[false, true, true, true, true, true, true, true, true],
    ));
    out.push_str(&format!(
        "external revenue reported separately {} of group {} ({}): {}\n",
        amt(t.external_revenue_reported),
        amt(t.external_revenue_group),
        "IFRS 8.15 asks for at least 75%",
        if t.external_test { "met" } else { "NOT met" }
    ));
    out.push_str(&entity_wide_table(&rep.entity_wide, &amt));
    if !r.findings.is_empty() {
        out.push_str("\nfindings:\n");
        for f in r.findings {
            out.push_str(&format!(
                "  {} {}: {} ({})\n",
                super::findings::severity_word(f.severity),
                f.rule,
                f.message,
                f.action
            ));
        }
    }
    out.push_str(&proof_lines(r.proof.tied, r.proof.checks));
    out.push('\n');
    out.push_str(&super::caution_text());
    out
}

pub fn render(r: &SegmentsOut<'_>, minor: u32, format: Format) -> String {
    match format {
        Format::Json => to_json(r),
        Format::Csv => csv(r),
        Format::Table => {
            let mut text = table(r, minor);
            if let Some(c) = &r.comparison {
                text.push_str(&comparison_table(c, minor));
            }
            text
        }
    }
}

/// Writes `segments-<key>.json` and `segments-<key>.csv` into `dir`, each read back.
pub fn write_outputs(dir: &Path, r: &SegmentsOut<'_>) -> Result<(), crate::Error> {
    let key = &r.report.key;
    write_file(&dir.join(format!("segments-{key}.json")), to_json(r).as_bytes())?;
    write_file(&dir.join(format!("segments-{key}.csv")), csv(r).as_bytes())?;
    Ok(())
}

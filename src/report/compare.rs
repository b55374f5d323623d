//! The comparison of a close (`tessera close --compare`) as text and files: the
//! statements beside the comparison, the walks from the comparison's figures to the
//! actual ones, and the currency effect. It lays out what `compare` computed.

use std::path::Path;

use rust_decimal::Decimal;

use super::{CsvOut, write_file};
use crate::compare::Comparison;
use crate::compare::walk::{LineComparison, Walk};
use crate::money::{format_amount, plain};

/// The words of a walk step.
pub fn step_words(step: &str, item: &str) -> String {
    match step {
        "currency" => "Currency effect (actuals at the comparison's rates)".into(),
        "scope" => format!("Scope: {item}"),
        "operating" => format!("Operating variance at constant currency: {item}"),
        "elimination" => format!("Eliminations: {item}"),
        "nci" => "Attribution to non-controlling interests".into(),
        _ => format!("{step}: {item}"),
    }
}

fn percent(p: Option<Decimal>) -> String {
    p.map(|p| format!("{p:.1}%")).unwrap_or_default()
}

fn direction(d: Option<&str>) -> &str {
    match d {
        Some("favourable") => "F",
        Some("unfavourable") => "U",
        _ => "",
    }
}

/// The terminal tables of a comparison.
pub fn table(c: &Comparison, currency: &str, minor: u32) -> String {
    let mut out = String::new();
    for (key, title) in super::close::TITLES {
        let Some(lines) = c.statements.get(key) else { continue };
        let rows: Vec<Vec<String>> = lines
            .iter()
            .map(|l| {
                vec![
                    l.label.clone(),
                    format_amount(l.actual, minor),
                    format_amount(l.comparison, minor),
                    format_amount(l.variance, minor),
                    percent(l.variance_percent),
                    direction(l.direction).to_string(),
                    format_amount(l.currency_effect, minor),
                ]
            })
            .collect();
        let mut rows = rows;
        for r in c.ratios.get(key).map(Vec::as_slice).unwrap_or_default() {
            let pct = |p: Option<Decimal>| p.map(|p| format!("{p:.1}%")).unwrap_or_else(|| "n/a".into());
            let pts = |p: Option<Decimal>| p.map(|p| format!("{p:.1} pt")).unwrap_or_default();
            rows.push(vec![
                r.label.clone(),
                pct(r.actual),
                pct(r.comparison),
                pts(r.variance_points),
                String::new(),
                direction(r.direction).to_string(),
                pts(r.currency_effect_points),
            ]);
        }
        out.push('\n');
        out.push_str(&super::text_table(
            &[
                &format!("{title} against {}", c.comparison),
                "Actual",
                &c.comparison,
                "Variance",
                "%",
                "F/U",
                "Currency effect",
            ],
            &rows,
            &[false, true, true, true, true, false, true],
        ));
    }
    out.push_str("F favourable, U unfavourable: more income or less expense than the comparison\n");
    for w in &c.walks {
        out.push('\n');
        out.push_str(&super::text_table(
            &[&format!("Walk: {}", w.label), currency],
            &walk_rows(w, &c.comparison, minor),
            &[false, true],
        ));
    }
    out
}

fn walk_rows(w: &Walk, name: &str, minor: u32) -> Vec<Vec<String>> {
    let mut rows = vec![vec![format!("{} ({name})", w.label), format_amount(w.comparison, minor)]];
    rows.extend(
        w.steps.iter().map(|s| vec![format!("  {}", step_words(s.step, &s.item)), format_amount(s.amount, minor)]),
    );
    rows.push(vec![format!("{} (actual)", w.label), format_amount(w.actual, minor)]);
    rows
}

/// The columns a compared line adds to `statements.csv`.
pub const STATEMENT_COLUMNS: [&str; 4] = ["comparison", "variance", "variance_percent", "direction"];

/// The values of [`STATEMENT_COLUMNS`] for one line, empty when not compared.
pub fn statement_cells(l: Option<&LineComparison>) -> Vec<String> {
    match l {
        Some(l) => vec![
            plain(l.comparison),
            plain(l.variance),
            l.variance_percent.map(plain).unwrap_or_default(),
            l.direction.unwrap_or_default().to_string(),
        ],
        None => vec![String::new(); 4],
    }
}

/// `comparison.csv`, `comparison_ratios.csv` (with ratio lines), `walk.csv` and
/// `currency_effect.csv`, named through `name` (a
/// draft's files say so).
pub fn write_files(dir: &Path, c: &Comparison, name: &dyn Fn(&str) -> String) -> Result<(), crate::Error> {
    let mut lines = CsvOut::new(&[
        "comparison",
        "statement",
        "line",
        "label",
        "actual",
        "compared",
        "variance",
        "variance_percent",
        "direction",
        "at_comparison_rates",
        "currency_effect",
    ]);
    for (st, ls) in &c.statements {
        for l in ls {
            lines.row(&[
                c.comparison.clone(),
                st.clone(),
                l.line.clone(),
                l.label.clone(),
                plain(l.actual),
                plain(l.comparison),
                plain(l.variance),
                l.variance_percent.map(plain).unwrap_or_default(),
                l.direction.unwrap_or_default().to_string(),
                plain(l.at_comparison_rates),
                plain(l.currency_effect),
            ]);
        }
    }
    write_file(&dir.join(name("comparison.csv")), lines.finish().as_bytes())?;
    if !c.ratios.is_empty() {
        write_file(&dir.join(name("comparison_ratios.csv")), ratios_csv(c).as_bytes())?;
    }
    let mut walk = CsvOut::new(&["comparison", "measure", "label", "step", "item", "amount"]);
    for w in &c.walks {
        let row = |step: &str, item: &str, v: Decimal| {
            [c.comparison.clone(), w.measure.clone(), w.label.clone(), step.to_string(), item.to_string(), plain(v)]
        };
        walk.row(&row("comparison", &c.comparison, w.comparison));
        for s in &w.steps {
            walk.row(&row(s.step, &s.item, s.amount));
        }
        walk.row(&row("actual", "actual", w.actual));
    }
    write_file(&dir.join(name("walk.csv")), walk.finish().as_bytes())?;
    let mut fx = CsvOut::new(&["comparison", "measure", "level", "item", "actual", "at_comparison_rates", "effect"]);
    for r in &c.currency_effect {
        fx.row(&[
            c.comparison.clone(),
            r.measure.clone(),
            r.level.to_string(),
            r.item.clone(),
            plain(r.actual),
            plain(r.at_comparison_rates),
            plain(r.effect),
        ]);
    }
    write_file(&dir.join(name("currency_effect.csv")), fx.finish().as_bytes())?;
    Ok(())
}

/// `comparison_ratios.csv`: the ratio lines beside the comparison, in percent.
fn ratios_csv(c: &Comparison) -> String {
    let mut ratios = CsvOut::new(&[
        "comparison",
        "statement",
        "line",
        "label",
        "actual_percent",
        "compared_percent",
        "variance_points",
        "direction",
        "at_comparison_rates_percent",
        "currency_effect_points",
    ]);
    let p = |x: Option<Decimal>| x.map(plain).unwrap_or_default();
    for (st, rs) in &c.ratios {
        for r in rs {
            ratios.row(&[
                c.comparison.clone(),
                st.clone(),
                r.line.clone(),
                r.label.clone(),
                p(r.actual),
                p(r.comparison),
                p(r.variance_points),
                r.direction.unwrap_or_default().to_string(),
                p(r.at_comparison_rates),
                p(r.currency_effect_points),
            ]);
        }
    }
    ratios.finish()
}

/// The workbook's sheets of a comparison: the statements beside it (ratio lines in
/// percent) and the walks.
pub fn sheets(c: &Comparison) -> Vec<super::xlsx::Sheet> {
    use super::xlsx::{Cell, Sheet};
    let opt = |x: Option<Decimal>| x.map(Cell::Number).unwrap_or(Cell::Empty);
    let mut s = Sheet::new(&format!("Against {}", c.comparison).chars().take(31).collect::<String>());
    s.header(&[
        "statement",
        "line",
        "actual",
        &c.comparison,
        "variance",
        "variance %",
        "F/U",
        "at comparison rates",
        "currency effect",
    ]);
    for (st, lines) in &c.statements {
        for l in lines {
            s.row(vec![
                Cell::Text(st.clone()),
                Cell::Text(l.label.clone()),
                Cell::Amount(l.actual),
                Cell::Amount(l.comparison),
                Cell::Amount(l.variance),
                opt(l.variance_percent),
                Cell::Text(direction(l.direction).into()),
                Cell::Amount(l.at_comparison_rates),
                Cell::Amount(l.currency_effect),
            ]);
        }
        for r in c.ratios.get(st).map(Vec::as_slice).unwrap_or_default() {
            s.row(vec![
                Cell::Text(st.clone()),
                Cell::Text(format!("{} (%; variance in points)", r.label)),
                opt(r.actual),
                opt(r.comparison),
                opt(r.variance_points),
                Cell::Empty,
                Cell::Text(direction(r.direction).into()),
                opt(r.at_comparison_rates),
                opt(r.currency_effect_points),
            ]);
        }
    }
    let mut w = Sheet::new("Walks");
    w.header(&["walk", "step", "amount"]);
    for x in &c.walks {
        w.bold_row(vec![Cell::Text(x.label.clone()), Cell::Text(c.comparison.clone()), Cell::Amount(x.comparison)]);
        for st in &x.steps {
            w.row(vec![
                Cell::Text(x.label.clone()),
                Cell::Text(step_words(st.step, &st.item)),
                Cell::Amount(st.amount),
            ]);
        }
        w.bold_row(vec![Cell::Text(x.label.clone()), Cell::Text("actual".into()), Cell::Amount(x.actual)]);
    }
    vec![s, w]
}

/// The page's section of a comparison: the statements beside it and the walks.
/// The walk as a waterfall chart: one bar per kind of step (the table below it has
/// every step by entity, segment and rule), in the order the walk takes them.
fn waterfall(w: &Walk, name: &str, minor: u32) -> String {
    let mut kinds: Vec<(String, Decimal)> = Vec::new();
    for s in &w.steps {
        let label = match s.step {
            "currency" => "currency effect",
            "scope" => "scope",
            "operating" => "operating, constant currency",
            "elimination" => "eliminations",
            "nci" => "non-controlling interests",
            other => other,
        };
        match kinds.iter_mut().find(|(l, _)| l == label) {
            Some((_, v)) => *v += s.amount,
            None => kinds.push((label.to_string(), s.amount)),
        }
    }
    super::html::waterfall_chart(
        &format!("Walk of {} from {name} to actual", w.label),
        (name, w.comparison),
        &kinds,
        ("actual", w.actual),
        minor,
    )
}

pub fn html(c: &Comparison, minor: u32) -> String {
    use super::html::escape;
    let name = escape(&c.comparison);
    let mut h = format!("<section><h2>Against {name}</h2>");
    for (key, title) in super::close::TITLES {
        let Some(lines) = c.statements.get(key) else { continue };
        h.push_str(&format!(
            r#"<table class="statement" id="compare-{key}"><thead><tr><th>{}</th><th class="amount">actual</th><th class="amount">{name}</th><th class="amount">variance</th><th class="amount">%</th><th>F/U</th><th class="amount">currency effect</th></tr></thead><tbody>"#,
            escape(title)
        ));
        for l in lines {
            h.push_str(&format!(
                r#"<tr><td>{}</td><td class="amount">{}</td><td class="amount">{}</td><td class="amount">{}</td><td class="amount">{}</td><td>{}</td><td class="amount">{}</td></tr>"#,
                escape(&l.label),
                format_amount(l.actual, minor),
                format_amount(l.comparison, minor),
                format_amount(l.variance, minor),
                percent(l.variance_percent),
                direction(l.direction),
                format_amount(l.currency_effect, minor)
            ));
        }
        for r in c.ratios.get(key).map(Vec::as_slice).unwrap_or_default() {
            let pct = |p: Option<Decimal>| p.map(|p| format!("{p:.1}%")).unwrap_or_else(|| "n/a".into());
            let pts = |p: Option<Decimal>| p.map(|p| format!("{p:.1} pt")).unwrap_or_default();
            h.push_str(&format!(
                r#"<tr><td>{}</td><td class="amount">{}</td><td class="amount">{}</td><td class="amount">{}</td><td></td><td>{}</td><td class="amount">{}</td></tr>"#,
                escape(&r.label),
                pct(r.actual),
                pct(r.comparison),
                pts(r.variance_points),
                direction(r.direction),
                pts(r.currency_effect_points)
            ));
        }
        h.push_str("</tbody></table>");
    }
    for w in &c.walks {
        h.push_str(&format!("<h3>Walk of {} from {name} to actual</h3>", escape(&w.label)));
        h.push_str(&waterfall(w, &c.comparison, minor));
        h.push_str(&format!(
            r#"<table class="statement walk"><thead><tr><th>Walk: {}</th><th class="amount"></th></tr></thead><tbody>"#,
            escape(&w.label)
        ));
        for row in walk_rows(w, &c.comparison, minor) {
            h.push_str(&format!(
                r#"<tr><td>{}</td><td class="amount">{}</td></tr>"#,
                escape(row[0].trim()),
                escape(&row[1])
            ));
        }
        h.push_str("</tbody></table>");
    }
    h.push_str("</section>");
    h
}

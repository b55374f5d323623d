//! The close report as one self-contained HTML page (`close.html`): the statements, the
//! revenue and profit by segment, the translation difference by cause and by foreign
//! operation, the intercompany status summary, the proof in words and the caution.
//! No script, no network, no file beside it: the styles are inline and the charts are
//! inline SVG drawn here, so the page opens anywhere and prints to PDF as shown.

use rust_decimal::Decimal;
use rust_decimal::prelude::ToPrimitive;

use super::close::{CloseReport, TITLES, amount_heading, statement_prior_rows, statement_rows};
use crate::money::format_amount;

/// What the page shows besides the close's own report.
pub struct Extras<'a> {
    /// Segment key and the segments' figures by line id (`revenue`, `profit`), when the
    /// group has a `[segments]` table.
    pub segments: Option<(&'a str, &'a [crate::segments::SegmentFigures])>,
    /// The year's translation difference by cause, gains positive, in cause order.
    pub causes: Vec<(&'static str, Decimal)>,
    /// The intercompany pairs by status.
    pub statuses: Option<Vec<(&'static str, usize)>>,
}

/// The translation difference from `from` to `to` by cause (IAS 21.41), gains
/// positive, summed over the consolidated entities: the sums of the figures the
/// translation explained, for the chart.
pub fn causes(
    explanations: &[crate::translate::Explanation],
    from: crate::model::Period,
    to: crate::model::Period,
    entities: &std::collections::BTreeSet<String>,
) -> Vec<(&'static str, Decimal)> {
    let mut sums = [Decimal::ZERO; 5];
    for x in explanations.iter().filter(|x| x.period >= from && x.period <= to && entities.contains(x.entity.as_str()))
    {
        for (s, v) in sums.iter_mut().zip([
            x.on_opening_net_assets,
            x.on_profit,
            x.on_equity_movements,
            x.on_hyperinflation,
            x.rounding,
        ]) {
            *s += v;
        }
    }
    ["opening net assets", "profit of the year", "equity movements", "hyperinflation", "rounding"]
        .into_iter()
        .zip(sums)
        .collect()
}

/// One series of a bar chart.
pub struct Series<'a> {
    pub name: &'a str,
    /// CSS class giving the colour (see the page's styles).
    pub class: &'a str,
    pub values: Vec<Decimal>,
}

/// Text escaped for HTML.
pub fn escape(s: &str) -> String {
    s.replace('&', "&amp;").replace('<', "&lt;").replace('>', "&gt;").replace('"', "&quot;")
}

const LABEL_WIDTH: i64 = 190;
const PLOT_WIDTH: i64 = 330;
const VALUE_WIDTH: i64 = 120;
const BAR_HEIGHT: i64 = 16;
const GROUP_GAP: i64 = 10;

/// Pixels for `v` on a scale where `span` fills `width` (rounded to whole pixels; the
/// figure itself is printed beside the bar, so the drawing needs no more precision).
fn pixels(v: Decimal, span: Decimal, width: i64) -> i64 {
    if span.is_zero() {
        return 0;
    }
    (v.abs() * Decimal::from(width) / span)
        .round_dp_with_strategy(0, rust_decimal::RoundingStrategy::MidpointAwayFromZero)
        .to_i64()
        .unwrap_or(0)
}

/// A horizontal bar chart: per category one bar per series, a zero line, and each
/// figure printed beside its bar. Negative values extend left of the zero line.
pub fn bar_chart(title: &str, categories: &[String], series: &[Series<'_>], minor: u32) -> String {
    let all = series.iter().flat_map(|s| s.values.iter().copied());
    let (mut most, mut least) = (Decimal::ZERO, Decimal::ZERO);
    for v in all {
        most = most.max(v);
        least = least.min(v);
    }
    let span = most - least;
    let zero = LABEL_WIDTH + pixels(least, span, PLOT_WIDTH);
    let legend = 22;
    let group = series.len() as i64 * BAR_HEIGHT + GROUP_GAP;
    let height = legend + categories.len() as i64 * group + 4;
    let width = LABEL_WIDTH + PLOT_WIDTH + VALUE_WIDTH;
    let mut svg = format!(
        r#"<svg class="chart" role="img" viewBox="0 0 {width} {height}" width="{width}" height="{height}"><title>{}</title>"#,
        escape(title)
    );
    let mut x = LABEL_WIDTH;
    for s in series {
        svg.push_str(&format!(
            r#"<rect class="{}" x="{x}" y="4" width="10" height="10"/><text x="{}" y="13">{}</text>"#,
            s.class,
            x + 14,
            escape(s.name)
        ));
        x += 24 + 8 * s.name.chars().count() as i64;
    }
    for (i, c) in categories.iter().enumerate() {
        let top = legend + i as i64 * group;
        svg.push_str(&format!(
            r#"<text class="category" x="{}" y="{}" text-anchor="end">{}</text>"#,
            LABEL_WIDTH - 8,
            top + BAR_HEIGHT - 3,
            escape(c)
        ));
        for (k, s) in series.iter().enumerate() {
            let v = s.values.get(i).copied().unwrap_or_default();
            let y = top + k as i64 * BAR_HEIGHT;
            let w = pixels(v, span, PLOT_WIDTH);
            let (bar_x, text_x, anchor) = if v.is_sign_negative() && !v.is_zero() {
                (zero - w, zero - w - 4, "end")
            } else {
                (zero, zero + w + 4, "start")
            };
            svg.push_str(&format!(
                r#"<rect class="{}" x="{bar_x}" y="{}" width="{w}" height="{}"><title>{}: {}</title></rect>"#,
                s.class,
                y + 1,
                BAR_HEIGHT - 2,
                escape(s.name),
                format_amount(v, minor)
            ));
            // A value that would run into the labels on the left is printed inside
            // the plot instead.
            let (text_x, anchor) =
                if anchor == "end" && text_x < LABEL_WIDTH + 60 { (zero + 4, "start") } else { (text_x, anchor) };
            svg.push_str(&format!(
                r#"<text class="value" x="{text_x}" y="{}" text-anchor="{anchor}">{}</text>"#,
                y + BAR_HEIGHT - 4,
                format_amount(v, minor)
            ));
        }
    }
    svg.push_str(&format!(r#"<line class="zero" x1="{zero}" y1="{legend}" x2="{zero}" y2="{}"/></svg>"#, height - 2));
    svg
}

/// A walk drawn as a horizontal waterfall: the starting figure as a bar from zero, each
/// step as a bar floating from the running total before it to the one after it (up
/// steps and down steps in their own colours), and the end figure as a bar from zero.
/// Each bar's figure is printed beside it. The steps must add up to the end figure.
pub fn waterfall_chart(
    title: &str,
    start: (&str, Decimal),
    steps: &[(String, Decimal)],
    end: (&str, Decimal),
    minor: u32,
) -> String {
    let total: Decimal = start.1 + steps.iter().map(|(_, v)| *v).sum::<Decimal>();
    assert_eq!(total, end.1, "the waterfall's steps add up to its end figure ({title})");
    // Each row: label, bar from, bar to, class, printed figure.
    let mut rows = vec![(start.0.to_string(), Decimal::ZERO, start.1, "total", start.1)];
    let mut running = start.1;
    for (label, v) in steps {
        let class = if v.is_sign_negative() && !v.is_zero() { "down" } else { "up" };
        rows.push((label.clone(), running, running + v, class, *v));
        running += v;
    }
    rows.push((end.0.to_string(), Decimal::ZERO, end.1, "total", end.1));
    let (mut most, mut least) = (Decimal::ZERO, Decimal::ZERO);
    for (_, a, b, _, _) in &rows {
        most = most.max(*a).max(*b);
        least = least.min(*a).min(*b);
    }
    let span = most - least;
    let at = |v: Decimal| LABEL_WIDTH + pixels(v - least, span, PLOT_WIDTH);
    let height = rows.len() as i64 * (BAR_HEIGHT + 4) + 8;
    let width = LABEL_WIDTH + PLOT_WIDTH + VALUE_WIDTH;
    let mut svg = format!(
        r#"<svg class="chart waterfall" role="img" viewBox="0 0 {width} {height}" width="{width}" height="{height}"><title>{}</title>"#,
        escape(title)
    );
    for (i, (label, from, to, class, figure)) in rows.iter().enumerate() {
        let y = 4 + i as i64 * (BAR_HEIGHT + 4);
        let (left, right) = (at(*from.min(to)), at(*from.max(to)));
        svg.push_str(&format!(
            r#"<text class="category" x="{}" y="{}" text-anchor="end">{}</text><rect class="{class}" x="{left}" y="{y}" width="{}" height="{BAR_HEIGHT}"><title>{}: {}</title></rect><text class="value" x="{}" y="{}">{}</text>"#,
            LABEL_WIDTH - 8,
            y + BAR_HEIGHT - 4,
            escape(label),
            right - left,
            escape(label),
            format_amount(*figure, minor),
            right + 4,
            y + BAR_HEIGHT - 4,
            format_amount(*figure, minor)
        ));
        // A connector from this bar's end to the next bar's start.
        if i + 1 < rows.len() {
            let x = at(*to);
            svg.push_str(&format!(
                r#"<line class="step" x1="{x}" y1="{}" x2="{x}" y2="{}"/>"#,
                y + BAR_HEIGHT,
                y + BAR_HEIGHT + 4
            ));
        }
    }
    let zero = at(Decimal::ZERO);
    svg.push_str(&format!(r#"<line class="zero" x1="{zero}" y1="2" x2="{zero}" y2="{}"/></svg>"#, height - 2));
    svg
}

const STYLE: &str = r#"
body { font-family: "DejaVu Sans", "Liberation Sans", Arial, sans-serif; color: #1d232a; margin: 2em auto; max-width: 66em; padding: 0 1em; font-size: 14px; }
h1 { font-size: 1.5em; margin-bottom: 0.2em; }
h2 { font-size: 1.15em; border-bottom: 1px solid #c5ccd3; padding-bottom: 0.2em; margin-top: 1.8em; }
p.meta { color: #4a5561; margin-top: 0; }
table { border-collapse: collapse; margin: 0.6em 0 1em; }
th, td { padding: 0.15em 0.8em; text-align: left; vertical-align: top; }
th { border-bottom: 1px solid #1d232a; font-weight: 600; }
td.amount, th.amount { text-align: right; font-variant-numeric: tabular-nums; white-space: nowrap; }
tr.total td { font-weight: 700; border-top: 1px solid #c5ccd3; }
table#equity_changes { font-size: 0.85em; }
table#equity_changes th { vertical-align: bottom; }
td.item { padding-left: 1.8em; }
td.note { padding-left: 3em; color: #4a5561; font-style: italic; }
.tied { color: #1b6e3a; font-weight: 700; }
.failed { color: #a0201c; font-weight: 700; }
ul.proof { list-style: none; padding-left: 0; }
ul.proof li { margin: 0.25em 0; }
svg.chart { display: block; margin: 0.6em 0 1.2em; font-size: 12px; }
svg.chart text { fill: #1d232a; }
svg .revenue { fill: #3b6ea5; }
svg .profit { fill: #d08a2c; }
svg .difference { fill: #6a8f4e; }
svg line.zero { stroke: #1d232a; stroke-width: 1; }
svg .total { fill: #3b6ea5; }
svg .up { fill: #1b6e3a; }
svg .down { fill: #a0201c; }
svg line.step { stroke: #4a5561; stroke-width: 1; stroke-dasharray: 2 2; }
.caution { margin-top: 2em; padding: 0.8em 1em; border-left: 4px solid #d08a2c; background: #faf5ec; }
.statements { display: block; }
@media print {
  body { margin: 0; max-width: none; font-size: 11px; }
  h2 { break-after: avoid; }
  table, svg.chart { break-inside: avoid; }
  .caution { background: none; }
}
"#;

fn statement_table(r: &CloseReport<'_>, key: &str, title: &str, minor: u32) -> String {
    // The prior year's column (IAS 1.38), when the close has one.
    let prior = statement_prior_rows(r, key).zip(r.statements.prior_year.as_ref());
    let prior_heading = prior
        .as_ref()
        .map(|(_, p)| {
            format!(r#"<th class="amount">{}</th>"#, escape(&amount_heading(key, r.view, &p.period, &r.currency)))
        })
        .unwrap_or_default();
    let mut t = format!(
        r#"<table class="statement" id="{key}"><thead><tr><th>{}</th><th class="amount">{}</th>{prior_heading}</tr></thead><tbody>"#,
        escape(title),
        escape(&amount_heading(key, r.view, &r.period, &r.currency))
    );
    let lines = r.statements.laid_out.get(key).map(|s| s.lines.len()).unwrap_or(0);
    for (i, (label, amount, total)) in statement_rows(r, key).into_iter().enumerate() {
        let class = if total {
            "total"
        } else if i >= lines {
            "note"
        } else {
            "item"
        };
        let row_class = if total { r#" class="total""# } else { "" };
        let before = prior
            .as_ref()
            .map(|(rows, _)| format!(r#"<td class="amount">{}</td>"#, format_amount(rows[i], minor)))
            .unwrap_or_default();
        t.push_str(&format!(
            r#"<tr{row_class}><td class="{class}">{}</td><td class="amount">{}</td>{before}</tr>"#,
            escape(label.trim()),
            format_amount(amount, minor)
        ));
    }
    // The layout's ratio lines (margins), in percent of the statement's own lines.
    let blank = if prior.is_some() { "<td></td>" } else { "" };
    for x in r.statements.laid_out.get(key).map(|s| s.ratios.as_slice()).unwrap_or_default() {
        let p = x.percent.map(|p| format!("{p:.1}%")).unwrap_or_else(|| "n/a".into());
        t.push_str(&format!(
            r#"<tr class="ratio"><td class="note">{}</td><td class="amount">{p}</td>{blank}</tr>"#,
            escape(&x.label)
        ));
    }
    t.push_str("</tbody></table>");
    t
}

fn equity_table(r: &CloseReport<'_>, minor: u32) -> String {
    let eq = &r.statements.changes_in_equity;
    let mut t = String::from(r#"<table class="statement" id="equity_changes"><thead><tr><th></th>"#);
    for c in &eq.columns {
        t.push_str(&format!(r#"<th class="amount">{}</th>"#, escape(&c.label)));
    }
    t.push_str("</tr></thead><tbody>");
    for row in &eq.rows {
        let total = row.row == "opening" || row.row == "closing";
        t.push_str(if total { r#"<tr class="total">"# } else { "<tr>" });
        t.push_str(&format!("<td>{}</td>", escape(&row.label)));
        for c in &eq.columns {
            t.push_str(&format!(
                r#"<td class="amount">{}</td>"#,
                format_amount(row.amounts.get(&c.column).copied().unwrap_or_default(), minor)
            ));
        }
        t.push_str("</tr>");
    }
    t.push_str("</tbody></table>");
    t
}

/// The statement of cash flows (IAS 7) under its own heading, totals in bold.
fn cash_flow_table(cf: &crate::cash_flows::CashFlows, minor: u32) -> String {
    let mut t = format!(
        r#"<h2>Statement of cash flows</h2><table class="statement" id="cash_flows"><thead><tr><th>Indirect method (IAS 7.18(b))</th><th class="amount">{} to {}</th></tr></thead><tbody>"#,
        cf.opening_period.next(),
        cf.period
    );
    for (section, line, label, amount) in super::cash_flows::rows(cf) {
        let total = super::cash_flows::is_total(&section, &line);
        t.push_str(&format!(
            r#"<tr{}><td class="{}">{}</td><td class="amount">{}</td></tr>"#,
            if total { r#" class="total""# } else { "" },
            if total { "total" } else { "item" },
            escape(&label),
            format_amount(amount, minor)
        ));
    }
    t.push_str("</tbody></table>");
    t
}

/// The page for a close.
pub fn close_page(r: &CloseReport<'_>, extras: &Extras<'_>, minor: u32) -> String {
    let title = format!("{} close {} ({} view)", capitalised(&r.scope), r.period, r.view);
    let mut h = format!(
        r#"<!DOCTYPE html><html lang="en"><head><meta charset="utf-8"><meta name="viewport" content="width=device-width, initial-scale=1"><title>{}</title><style>{STYLE}</style></head><body>"#,
        escape(&title)
    );
    h.push_str(&format!("<h1>{}</h1>", escape(&title)));
    let verdict = if r.proof.tied {
        r#"<span class="tied">tied: every check of the proof holds</span>"#
    } else {
        r#"<span class="failed">NOT TIED: a check of the proof fails</span>"#
    };
    h.push_str(&format!(
        r#"<p class="meta">Amounts in {}, credits shown positive where the layout says so, negatives in parentheses. Proof: {verdict}.</p>"#,
        escape(&r.currency)
    ));

    h.push_str(r#"<section class="statements"><h2>Statements</h2>"#);
    for (key, title) in TITLES {
        if r.statements.laid_out.contains_key(key) {
            h.push_str(&statement_table(r, key, title, minor));
        }
    }
    h.push_str("<h2>Statement of changes in equity</h2>");
    h.push_str(&equity_table(r, minor));
    if let Some(cf) = &r.statements.cash_flows {
        h.push_str(&cash_flow_table(cf, minor));
    }
    h.push_str("</section>");
    if let Some(c) = &r.statements.comparison {
        h.push_str(&super::compare::html(c, minor));
    }

    if let Some((key, segments)) = extras.segments {
        h.push_str(&format!("<section><h2>Revenue and profit by {} segment</h2>", escape(key)));
        let names: Vec<String> = segments.iter().map(|s| s.segment.clone()).collect();
        let get = |line: &str| segments.iter().map(|s| s.values.get(line).copied().unwrap_or_default()).collect();
        h.push_str(&bar_chart(
            &format!("Revenue and profit by {key} segment"),
            &names,
            &[
                Series { name: "revenue", class: "revenue", values: get("revenue") },
                Series { name: "segment profit", class: "profit", values: get("profit") },
            ],
            minor,
        ));
        h.push_str(
            "<p class=\"meta\">Revenue includes inter-segment revenue; the reconciliation to the group is in \
             <code>tessera segments</code>.</p></section>",
        );
    }

    h.push_str("<section><h2>Translation difference of the year</h2>");
    let causes: Vec<String> = extras.causes.iter().map(|(c, _)| c.to_string()).collect();
    h.push_str(&bar_chart(
        "Translation difference by cause",
        &causes,
        &[Series { name: "by cause", class: "difference", values: extras.causes.iter().map(|(_, v)| *v).collect() }],
        minor,
    ));
    let operations: Vec<String> = r.translation_reserves.iter().map(|x| x.operation.to_string()).collect();
    h.push_str(&bar_chart(
        "Translation difference by foreign operation",
        &operations,
        &[Series {
            name: "by foreign operation",
            class: "difference",
            values: r.translation_reserves.iter().map(|x| x.year).collect(),
        }],
        minor,
    ));
    h.push_str(
        "<p class=\"meta\">Gains positive, before the non-controlling interests' share (IAS 21.41; IFRIC 16.17 for \
         the operations).</p></section>",
    );

    if let Some(statuses) = &extras.statuses {
        h.push_str(r#"<section><h2>Intercompany matching</h2><table id="intercompany"><thead><tr><th>status</th><th class="amount">pairs</th></tr></thead><tbody>"#);
        for (status, n) in statuses {
            h.push_str(&format!(r#"<tr><td>{status}</td><td class="amount">{n}</td></tr>"#));
        }
        h.push_str("</tbody></table><p class=\"meta\">Every pair, and who must act, in the workbook and in <code>tessera match</code>.</p></section>");
    }

    h.push_str(r#"<section><h2>Proof</h2><ul class="proof">"#);
    for (ok, words) in super::close::proof_items(r, minor) {
        let mark = if ok { r#"<span class="tied">holds</span>"# } else { r#"<span class="failed">FAILS</span>"# };
        h.push_str(&format!("<li>{mark} {}</li>", escape(&words)));
    }
    h.push_str("</ul></section>");
    if !r.findings.is_empty() {
        h.push_str("<section><h2>Findings of the close</h2><ul>");
        for f in r.findings {
            h.push_str(&format!(
                "<li><strong>{} {}</strong>: {} <em>What to do:</em> {}</li>",
                super::findings::severity_word(f.severity),
                escape(&f.rule.to_string()),
                escape(&f.message),
                escape(&f.action)
            ));
        }
        h.push_str("</ul></section>");
    }
    h.push_str(&format!(r#"<p class="caution">{}</p>"#, escape(super::CAUTION)));
    h.push_str("</body></html>\n");
    h
}

fn capitalised(s: &str) -> String {
    let mut c = s.chars();
    match c.next() {
        Some(f) => f.to_uppercase().collect::<String>() + c.as_str(),
        None => String::new(),
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn d(s: &str) -> Decimal {
        s.parse().unwrap()
    }

    /// The `width` of every `<rect class="...">` bar, in order.
    fn bars(svg: &str, class: &str) -> Vec<(i64, i64)> {
        let mut out = Vec::new();
        let needle = format!(r#"<rect class="{class}" x=""#);
        let mut rest = svg;
        while let Some(i) = rest.find(&needle) {
            rest = &rest[i + needle.len()..];
            let x: i64 = rest[..rest.find('"').unwrap()].parse().unwrap();
            let w_at = rest.find("width=\"").unwrap() + 7;
            let w: i64 = rest[w_at..w_at + rest[w_at..].find('"').unwrap()].parse().unwrap();
            if w != 10 || x != LABEL_WIDTH {
                out.push((x, w));
            }
        }
        out
    }

    #[test]
    fn bars_are_proportional_and_negatives_go_left_of_zero() {
        let svg = bar_chart(
            "t",
            &["a".into(), "b".into(), "c".into()],
            &[Series { name: "s", class: "profit", values: vec![d("300"), d("-100"), d("0")] }],
            2,
        );
        let b = bars(&svg, "profit");
        // Span 400 over 330 pixels: zero at 190 + 100/400*330 = 272.5 -> 273 (rounded half away).
        let zero = LABEL_WIDTH + 83;
        assert_eq!(b[0], (zero, 248), "300 of 400 is 247.5 -> 248 pixels, from zero rightwards");
        assert_eq!(b[1], (zero - 83, 83), "-100 extends left of zero");
        assert_eq!(b[2], (zero, 0));
        assert!(svg.contains("(100.00)") && svg.contains("300.00"));
        assert!(svg.contains(&format!(r#"x1="{zero}""#)));
    }

    #[test]
    fn all_zero_draws_no_bar_and_no_division() {
        let svg = bar_chart("t", &["a".into()], &[Series { name: "s", class: "profit", values: vec![d("0")] }], 0);
        assert!(svg.starts_with("<svg") && svg.ends_with("</svg>"));
    }

    /// Budget 100, currency -30, scope +50, actual 120: the scale runs from 0 to 120
    /// (each of 330 pixels is 4/11 of a unit), each step starts where the bar before it
    /// ended, and down steps are drawn leftwards.
    #[test]
    fn a_waterfall_steps_from_bar_to_bar() {
        let svg = waterfall_chart(
            "walk",
            ("budget", d("100")),
            &[("currency".into(), d("-30")), ("scope".into(), d("50"))],
            ("actual", d("120")),
            2,
        );
        let spans =
            |class: &str| -> Vec<(i64, i64)> { bars(&svg, class).into_iter().map(|(x, w)| (x, x + w)).collect() };
        // 100 of 120 over 330 pixels = 275; 70 = 192.5 -> 193; 120 = 330.
        assert_eq!(spans("total"), [(190, 465), (190, 520)]);
        assert_eq!(spans("down"), [(383, 465)]);
        assert_eq!(spans("up"), [(383, 520)]);
        assert!(svg.contains(">(30.00)<") && svg.contains(">50.00<"), "{svg}");
    }

    #[test]
    #[should_panic(expected = "add up")]
    fn a_waterfall_that_does_not_add_up_is_a_bug() {
        waterfall_chart("walk", ("budget", d("1")), &[], ("actual", d("2")), 2);
    }

    #[test]
    fn text_is_escaped() {
        assert_eq!(escape(r#"R&D <x> "y""#), "R&amp;D &lt;x&gt; &quot;y&quot;");
    }
}

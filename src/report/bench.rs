//! The benchmark's files and table: the stage figures of one run (`--stages FILE`), the
//! stamp beside a generated group, and the results file with its summary.

use std::path::Path;

use crate::bench::Results;
use crate::stages::StageRecord;

/// The accepted-differences file (docs/formats.md) accepting every pair a `match` JSON
/// report shows open, at the difference it reports, for a generated group.
pub fn acceptances(matching: &serde_json::Value) -> String {
    let mut out = super::CsvOut::new(&["entity", "counterparty", "kind", "period", "amount", "reason", "accepted_by"]);
    let period = matching["period"].as_str().unwrap_or_default();
    let pairs = matching["pairs"].as_array().map(Vec::as_slice).unwrap_or_default();
    for p in pairs.iter().filter(|p| p["status"] == "open") {
        let text = |k: &str| p[k].as_str().unwrap_or_default().to_string();
        out.row(&[
            text("entity"),
            text("counterparty"),
            text("kind"),
            period.to_string(),
            text("difference"),
            "open difference planted by the generator".to_string(),
            "tessera bench".to_string(),
        ]);
    }
    out.finish()
}

pub fn write_stages(path: &Path, records: &[StageRecord]) -> std::io::Result<()> {
    super::write_file(path, super::to_json(&records).as_bytes())
}

/// Beside a generated group: the options it was generated with and what was written.
pub fn write_stamp(path: &Path, options: &str, w: &super::generate::Written) -> std::io::Result<()> {
    let v = serde_json::json!({
        "options": options,
        "trial_balance_rows": w.trial_balance_rows,
        "document_rows": w.document_rows,
        "files": w.files,
        "bytes": w.bytes,
    });
    super::write_file(path, super::to_json(&v).as_bytes())
}

pub fn write_results(path: &Path, r: &Results) -> std::io::Result<()> {
    super::write_file(path, super::to_json(r).as_bytes())
}

fn mib(b: u64) -> String {
    format!("{:.0}", b as f64 / (1024.0 * 1024.0))
}

pub fn render(r: &Results, path: &Path) -> String {
    let mut s = format!(
        "benchmark ({} build) on {} ({} cpus); figures in {}\n\n",
        r.build,
        r.machine.cpu.as_deref().unwrap_or("unknown cpu"),
        r.machine.cpus,
        path.display()
    );
    let rows: Vec<Vec<String>> = r
        .runs
        .iter()
        .map(|x| {
            vec![
                x.size.clone(),
                x.format.clone(),
                x.trial_balance_rows.to_string(),
                mib(x.input_bytes),
                format!("{:.2}", x.close_seconds),
                format!("{:.0}", x.close_rows_per_second),
                mib(x.peak_bytes),
                format!("{:.1}", x.peak_over_input),
                x.close_exit_code.to_string(),
            ]
        })
        .collect();
    s.push_str(&super::text_table(
        &["size", "format", "tb rows", "input MiB", "close s", "rows/s", "peak MiB", "peak/input", "exit"],
        &rows,
        &[false, false, true, true, true, true, true, true, true],
    ));
    for x in &r.runs {
        s.push_str(&format!("\n{} {} by stage:\n", x.size, x.format));
        let rows: Vec<Vec<String>> = x
            .stages
            .iter()
            .map(|st| {
                vec![
                    st.stage.clone(),
                    format!("{:.3}", st.seconds),
                    format!("{:.0}", st.rows_per_second),
                    mib(st.peak_bytes),
                ]
            })
            .collect();
        s.push_str(&super::text_table(&["stage", "s", "rows/s", "peak MiB"], &rows, &[false, true, true, true]));
    }
    s.push_str("\ntargets:\n");
    for t in &r.targets {
        let verdict = match t.met {
            Some(true) => "met    ",
            Some(false) => "MISSED ",
            None => "not run",
        };
        s.push_str(&format!("  {verdict} {}: {}\n", t.target, t.detail));
    }
    s
}

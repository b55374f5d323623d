//! The reporting pack and the command line: help text on every option, exit codes, a
//! closed pipe, `TESSERA_DATA`, completions, output folders relative to the data
//! folder; the close's files (periods, names, minor units, statements CSV, Parquet only
//! when asked); the workbook read back by an independent reader (openpyxl) and compared
//! figure by figure with the close's JSON; the HTML report opened in headless Chromium.

use std::collections::BTreeMap;
use std::path::{Path, PathBuf};
use std::process::{Command, Stdio};
use std::str::FromStr;

use clap::CommandFactory;
use rust_decimal::Decimal;
use serde_json::Value;

use crate::support::{Folder, repo, run, run_json};

fn d(s: &str) -> Decimal {
    Decimal::from_str(s).unwrap_or_else(|_| panic!("{s:?} is not a decimal"))
}

/// The first file named `name` at or below `dir`.
fn find_file(dir: &Path, name: &str) -> Option<PathBuf> {
    let mut entries: Vec<PathBuf> = std::fs::read_dir(dir).ok()?.filter_map(|e| e.ok().map(|e| e.path())).collect();
    entries.sort();
    for p in &entries {
        if p.file_name().is_some_and(|n| n == name) {
            return Some(p.clone());
        }
    }
    entries.iter().filter(|p| p.is_dir()).find_map(|p| find_file(p, name))
}

fn exe() -> Command {
    Command::new(env!("CARGO_BIN_EXE_tessera"))
}

#[test]
fn every_option_and_command_has_help_and_commands_follow_the_workflow() {
    let cli = tessera::Cli::command();
    let mut missing = Vec::new();
    for a in cli.get_arguments() {
        if a.get_help().is_none() && !["help", "version"].contains(&a.get_id().as_str()) {
            missing.push(format!("--{}", a.get_id()));
        }
    }
    let names: Vec<&str> = cli.get_subcommands().map(|c| c.get_name()).collect();
    for sub in cli.get_subcommands() {
        assert!(sub.get_about().is_some(), "{} has no description", sub.get_name());
        for a in sub.get_arguments() {
            if a.get_help().is_none() && a.get_id() != "help" {
                missing.push(format!("{} --{}", sub.get_name(), a.get_id()));
            }
        }
    }
    assert!(missing.is_empty(), "options without help: {missing:?}");
    assert_eq!(
        names,
        [
            "check",
            "match",
            "close",
            "segments",
            "trace",
            "translate",
            "structure",
            "rates",
            "generate",
            "bench",
            "completions"
        ]
    );
    let help = cli.clone().render_help().to_string();
    for words in ["Exit codes:", "2  usage error", "3  unreadable input", "TESSERA_DATA", "Examples"] {
        assert!(help.contains(words), "--help lacks {words:?}:\n{help}");
    }
}

#[test]
fn usage_errors_exit_2_and_unreadable_input_exits_3() {
    let out = exe().args(["close", "--view", "fortnight"]).output().unwrap();
    assert_eq!(out.status.code(), Some(2), "clap's usage error");
    let out = exe().args(["--data", repo().to_str().unwrap(), "trace", "9999"]).output().unwrap();
    assert_eq!(out.status.code(), Some(2), "an account not in the chart is a usage error");
    let stderr = String::from_utf8_lossy(&out.stderr);
    assert!(stderr.contains("9999") && !stderr.contains("Some("), "{stderr}");
    // A setting's value is quoted as written, never as a debug form.
    let g = Folder::demo();
    g.replace("entities/group.toml", "ifric16 = \"direct\"", "ifric16 = \"Direct\"");
    let (code, text) = run(&["check", "--data", g.path().to_str().unwrap()]);
    assert_eq!(code, 1, "{text}");
    assert!(text.contains("\"Direct\" is not a method") && !text.contains("Some("), "{text}");
    let f = Folder::demo();
    f.remove("rates/monthly.csv");
    let out = exe().args(["--data", f.path().to_str().unwrap(), "check"]).output().unwrap();
    assert_eq!(out.status.code(), Some(3), "{}", String::from_utf8_lossy(&out.stdout));
}

#[test]
fn a_closed_pipe_ends_the_run_quietly() {
    let mut child = exe()
        .args(["--data", repo().to_str().unwrap(), "structure"])
        .stdout(Stdio::piped())
        .stderr(Stdio::piped())
        .spawn()
        .unwrap();
    // The reader goes away before the command writes anything (as `| head -0` would).
    drop(child.stdout.take());
    let out = child.wait_with_output().unwrap();
    assert_eq!(out.status.code(), Some(0));
    assert_eq!(String::from_utf8_lossy(&out.stderr), "", "nothing printed on a closed pipe");
}

#[test]
fn the_data_folder_comes_from_tessera_data_and_completions_are_printed() {
    let cwd = tempfile::tempdir().unwrap();
    let out = exe()
        .current_dir(cwd.path())
        .env("TESSERA_DATA", repo())
        .args(["structure", "--format", "json"])
        .output()
        .unwrap();
    assert_eq!(out.status.code(), Some(0), "{}", String::from_utf8_lossy(&out.stderr));
    let v: Value = serde_json::from_slice(&out.stdout).unwrap();
    assert_eq!(v["entities"].as_array().unwrap().len(), 10);
    let (code, text) = run(&["completions", "bash"]);
    assert_eq!(code, 0);
    assert!(text.contains("tessera") && text.contains("--period") && text.contains("segments"), "{text}");
}

/// Reads the workbook with openpyxl (Debian's python3-openpyxl): per sheet, the rows of
/// cells as `[kind, value, number format, bold]`, numbers as Python's shortest repr
/// of the stored double, and the frozen cell.
fn read_workbook(path: &Path) -> Option<Value> {
    let python = Path::new("/usr/bin/python3");
    let script = r#"
import json, sys
import openpyxl
wb = openpyxl.load_workbook(sys.argv[1])
out = {}
for ws in wb.worksheets:
    rows = []
    for row in ws.iter_rows():
        cells = []
        for c in row:
            v = c.value
            if v is None:
                cells.append(["empty", "", c.number_format, bool(c.font.b)])
            elif isinstance(v, (int, float)) and not isinstance(v, bool):
                cells.append(["number", repr(v), c.number_format, bool(c.font.b)])
            else:
                cells.append(["text", str(v), c.number_format, bool(c.font.b)])
        rows.append(cells)
    out[ws.title] = {"rows": rows, "frozen": ws.freeze_panes}
print(json.dumps(out))
"#;
    let probe = Command::new(python).args(["-c", "import openpyxl"]).output();
    if !matches!(probe, Ok(ref o) if o.status.success()) {
        return None;
    }
    let out = Command::new(python).args(["-c", script]).arg(path).output().unwrap();
    assert!(out.status.success(), "openpyxl failed: {}", String::from_utf8_lossy(&out.stderr));
    Some(serde_json::from_slice(&out.stdout).unwrap())
}

/// A sheet's rows below the header as (cells), each cell (kind, value, format, bold).
fn sheet_rows(wb: &Value, name: &str) -> Vec<Vec<(String, String, String, bool)>> {
    let rows = wb[name]["rows"].as_array().unwrap_or_else(|| panic!("no sheet {name}"));
    rows.iter()
        .skip(1)
        .map(|r| {
            r.as_array()
                .unwrap()
                .iter()
                .map(|c| {
                    (
                        c[0].as_str().unwrap().to_string(),
                        c[1].as_str().unwrap().to_string(),
                        c[2].as_str().unwrap().to_string(),
                        c[3].as_bool().unwrap(),
                    )
                })
                .collect()
        })
        .collect()
}

/// The number in a cell, exactly as stored; panics on text (numbers must be numbers).
fn number(cell: &(String, String, String, bool)) -> Decimal {
    assert_eq!(cell.0, "number", "{cell:?} is not a number cell");
    d(&cell.1)
}

fn json_amount(v: &Value) -> Decimal {
    d(v.as_str().unwrap_or_else(|| panic!("{v} is not an amount string")))
}

fn check_workbook(wb: &Value, close: &Value, matching: &Value, segments: &Value) {
    let amount_format = "#,##0.00_);(#,##0.00)";
    // Statements: every line, in layout order, with its amount, totals bold.
    for (key, sheet) in [("profit_or_loss", "Profit or loss"), ("oci", "OCI"), ("balance_sheet", "Financial position")]
    {
        assert_eq!(wb[sheet]["frozen"], "A2", "{sheet}: header frozen");
        let rows = sheet_rows(wb, sheet);
        let lines = close["statements"][key]["lines"].as_array().unwrap();
        assert!(rows.len() >= lines.len(), "{sheet}");
        for (row, line) in rows.iter().zip(lines) {
            assert_eq!(row[0].1.trim(), line["label"].as_str().unwrap(), "{sheet}");
            assert_eq!(number(&row[1]), json_amount(&line["amount"]), "{sheet} {}", line["label"]);
            assert_eq!(row[1].2, amount_format, "{sheet}: thousands separators, negatives in parentheses");
            assert_eq!(row[1].3, line["total"].as_bool().unwrap(), "{sheet} {}: bold = subtotal", line["label"]);
            // The prior year's comparative (IAS 1.38) in the third column, when there is one.
            if let Some(prior) = line.get("prior_year") {
                assert_eq!(number(&row[2]), json_amount(prior), "{sheet} {} prior year", line["label"]);
            }
        }
    }
    // Ratio lines (margins) below the statement: numbers in percent format, the
    // fraction of the close's percent.
    let ratios = close["statements"]["profit_or_loss"]["ratios"].as_array().expect("the demo's margins");
    let pl = sheet_rows(wb, "Profit or loss");
    for x in ratios {
        let row = pl.iter().find(|r| r[0].1 == x["label"].as_str().unwrap()).expect("ratio row");
        assert_eq!(row[1].2, "0.0%", "{}", x["label"]);
        let want = (json_amount(&x["percent"]) / Decimal::ONE_HUNDRED).round_dp(6).normalize();
        assert_eq!(number(&row[1]), want, "{}", x["label"]);
    }
    let a = &close["attribution"];
    let n = close["statements"]["profit_or_loss"]["lines"].as_array().unwrap().len();
    assert_eq!(number(&pl[n][1]), json_amount(&a["profit_owners"]));
    assert_eq!(number(&pl[n + 1][1]), json_amount(&a["profit_nci"]));

    // Changes in equity: every cell.
    let eq = &close["statements"]["changes_in_equity"];
    let rows = sheet_rows(wb, "Changes in equity");
    let columns: Vec<&str> = eq["columns"].as_array().unwrap().iter().map(|c| c["column"].as_str().unwrap()).collect();
    for (row, r) in rows.iter().zip(eq["rows"].as_array().unwrap()) {
        assert_eq!(row[0].1, r["label"].as_str().unwrap());
        for (k, c) in columns.iter().enumerate() {
            assert_eq!(number(&row[k + 1]), json_amount(&r["amounts"][*c]), "{} {c}", r["label"]);
        }
    }

    // The statement of cash flows: each section's lines and total, then the cash
    // reconciliation, in the order of `cash_flows.csv`.
    let cf = &close["statements"]["cash_flows"];
    let mut want = Vec::new();
    for s in cf["sections"].as_array().unwrap() {
        for l in s["lines"].as_array().unwrap() {
            want.push((l["label"].as_str().unwrap().to_string(), json_amount(&l["amount"]), false));
        }
        want.push((String::new(), json_amount(&s["total"]), true));
    }
    let ex = &cf["exchange"];
    for (k, bold) in [
        (&cf["net_change"], true),
        (&cf["cash_opening"], false),
        (&ex["total"], false),
        (&ex["on_cash"], false),
        (&ex["residue"], false),
        (&cf["cash_closing"], true),
    ] {
        want.push((String::new(), json_amount(k), bold));
    }
    let rows = sheet_rows(wb, "Cash flows");
    assert_eq!(rows.len(), want.len(), "cash flows: every line, total and reconciling figure");
    for (row, (label, amount, bold)) in rows.iter().zip(&want) {
        if !label.is_empty() {
            assert_eq!(&row[0].1, label);
        }
        assert_eq!(number(&row[1]), *amount, "cash flows: {}", row[0].1);
        assert_eq!(row[1].3, *bold, "cash flows {}: bold = total", row[0].1);
    }

    // Group trial balance.
    let rows = sheet_rows(wb, "Trial balance");
    let tb = close["group_trial_balance"].as_array().unwrap();
    assert_eq!(rows.len(), tb.len());
    for (row, t) in rows.iter().zip(tb) {
        assert_eq!(row[0].1, t["account"].as_str().unwrap());
        assert_eq!(row[1].1, t["name"].as_str().unwrap());
        assert_eq!(number(&row[2]), json_amount(&t["amount"]));
    }

    // Elimination journal: every line, with the account's name and the rule.
    let rows = sheet_rows(wb, "Eliminations");
    let mut lines = Vec::new();
    for e in close["eliminations"].as_array().unwrap() {
        for l in e["lines"].as_array().unwrap() {
            lines.push((e, l));
        }
    }
    assert_eq!(rows.len(), lines.len());
    let names: BTreeMap<&str, &str> =
        tb.iter().map(|t| (t["account"].as_str().unwrap(), t["name"].as_str().unwrap())).collect();
    for (row, (e, l)) in rows.iter().zip(&lines) {
        assert_eq!(row[0].1, e["id"].as_str().unwrap());
        assert_eq!(row[1].1, e["rule"].as_str().unwrap());
        assert_eq!(row[3].1, l["account"].as_str().unwrap());
        if let Some(name) = names.get(l["account"].as_str().unwrap()) {
            assert_eq!(row[4].1, *name);
        }
        assert!(!row[4].1.is_empty(), "account {} has a name", row[3].1);
        assert_eq!(number(&row[7]), json_amount(&l["amount"]));
    }

    // NCI schedule and translation reserve.
    let rows = sheet_rows(wb, "NCI");
    let nci = close["nci"].as_array().unwrap();
    assert_eq!(rows.len(), nci.len());
    for (row, x) in rows.iter().zip(nci) {
        assert_eq!(row[0].1, x["entity"].as_str().unwrap());
        assert_eq!(number(&row[1]), json_amount(&x["nci_share"]));
        for (k, f) in ["profit", "oci", "equity"].iter().enumerate() {
            assert_eq!(number(&row[k + 2]), json_amount(&x[*f]), "{} {f}", x["entity"]);
        }
    }
    let rows = sheet_rows(wb, "Translation reserve");
    let rs = close["translation_reserves"].as_array().unwrap();
    assert_eq!(rows.len(), rs.len());
    for (row, x) in rows.iter().zip(rs) {
        assert_eq!(row[0].1, x["operation"].as_str().unwrap());
        for (k, f) in ["brought_forward", "year", "reserve"].iter().enumerate() {
            assert_eq!(number(&row[k + 2]), json_amount(&x[*f]), "{} {f}", x["operation"]);
        }
    }

    // Intercompany: every pair as `tessera match` gives it.
    let rows = sheet_rows(wb, "Intercompany");
    let pairs = matching["pairs"].as_array().unwrap();
    assert_eq!(rows.len(), pairs.len());
    for (row, p) in rows.iter().zip(pairs) {
        assert_eq!(
            (row[0].1.as_str(), row[1].1.as_str()),
            (p["entity"].as_str().unwrap(), p["counterparty"].as_str().unwrap())
        );
        assert_eq!(row[4].1, p["status"].as_str().unwrap());
        for (k, f) in [(6, "amount_entity"), (7, "amount_counterparty"), (8, "difference")] {
            match p[f].as_str() {
                Some(x) => assert_eq!(number(&row[k]), d(x), "{f}"),
                None => assert_eq!(row[k].0, "empty", "{f}"),
            }
        }
    }
    let act = sheet_rows(wb, "Who must act");
    let must: Vec<&str> = matching["summary"]["entities"]
        .as_array()
        .unwrap()
        .iter()
        .filter(|e| e["must_act"] == true)
        .map(|e| e["entity"].as_str().unwrap())
        .collect();
    let marked: Vec<&str> = act.iter().filter(|r| r[1].1 == "yes").map(|r| r[0].1.as_str()).collect();
    assert_eq!(marked, must);

    // The segment report, every line of every segment, then each reconciliation.
    let rows = sheet_rows(wb, "Segments by business");
    let lines = segments["lines"].as_array().unwrap();
    let segs = segments["segments"].as_array().unwrap();
    for (row, l) in rows.iter().zip(lines) {
        assert_eq!(row[0].1, l["label"].as_str().unwrap());
        for (k, s) in segs.iter().enumerate() {
            let want = s["values"][l["line"].as_str().unwrap()].as_str().map(d).unwrap_or_default();
            assert_eq!(number(&row[k + 1]), want, "{} {}", s["segment"], l["line"]);
        }
    }
    let groups: Vec<Decimal> = rows.iter().filter(|r| r[0].1.trim() == "group").map(|r| number(&r[1])).collect();
    let want: Vec<Decimal> =
        segments["reconciliation"].as_array().unwrap().iter().map(|l| json_amount(&l["group"])).collect();
    assert_eq!(groups, want);

    // The proof, in words.
    let rows = sheet_rows(wb, "Proof");
    assert!(rows.iter().any(|r| r[0].1 == "the balance sheet balances" && r[1].1 == "yes"), "{rows:?}");
}

/// Opens the page in headless Chromium: the DOM after rendering, a screenshot, a print
/// to PDF, and the browser's log, where every console message shows as `CONSOLE`.
fn render_in_chromium(page: &Path, shot: &Path) -> Option<(String, String)> {
    let chromium = Path::new("/usr/bin/chromium");
    if !chromium.exists() {
        return None;
    }
    let profile = tempfile::tempdir().unwrap();
    let url = format!("file://{}", page.display());
    let common = [
        "--headless",
        "--no-sandbox",
        "--disable-gpu",
        "--disable-background-networking",
        "--disable-component-update",
        "--disable-sync",
        "--no-first-run",
        "--enable-logging=stderr",
        "--v=0",
    ];
    let user = format!("--user-data-dir={}", profile.path().display());
    let dom = Command::new(chromium).args(common).arg(&user).arg("--dump-dom").arg(&url).output().unwrap();
    assert!(dom.status.success(), "{}", String::from_utf8_lossy(&dom.stderr));
    let shot_arg = format!("--screenshot={}", shot.display());
    let s = Command::new(chromium)
        .args(common)
        .arg(&user)
        .args([shot_arg.as_str(), "--window-size=1100,2600", "--hide-scrollbars"])
        .arg(&url)
        .output()
        .unwrap();
    assert!(s.status.success(), "{}", String::from_utf8_lossy(&s.stderr));
    // Printed to PDF as a reader would print it.
    let pdf = shot.with_extension("pdf");
    let pdf_arg = format!("--print-to-pdf={}", pdf.display());
    let p = Command::new(chromium)
        .args(common)
        .arg(&user)
        .args([pdf_arg.as_str(), "--no-pdf-header-footer"])
        .arg(&url)
        .output()
        .unwrap();
    assert!(p.status.success(), "{}", String::from_utf8_lossy(&p.stderr));
    let printed = std::fs::read(&pdf).unwrap();
    assert!(printed.starts_with(b"%PDF") && printed.len() > 20_000, "printed to {}", pdf.display());
    let log = format!(
        "{}{}{}",
        String::from_utf8_lossy(&dom.stderr),
        String::from_utf8_lossy(&s.stderr),
        String::from_utf8_lossy(&p.stderr)
    );
    Some((String::from_utf8_lossy(&dom.stdout).into_owned(), log))
}

#[test]
fn a_close_writes_its_files_workbook_and_report() {
    let f = Folder::demo();
    let data = f.path().to_str().unwrap();
    // --out is taken relative to the data folder.
    let (code, close) =
        run_json(f.path(), &["close", "--period", "2026-12", "--out", "pack", "--translated-lines", "csv"]);
    assert_eq!(code, 0, "{close:#}");
    // The close's folder below the period's (its layout may add scope and view).
    let dir: PathBuf = find_file(&f.path().join("pack/2026-12"), "close.xlsx")
        .and_then(|p| p.parent().map(Path::to_path_buf))
        .expect("close.xlsx written under pack/2026-12");
    assert!(dir.join("close.xlsx").is_file() && dir.join("close.html").is_file(), "{}", dir.display());
    assert!(!dir.join("translated.parquet").exists(), "Parquet only when asked");

    // translated.csv: periods as YYYY-MM, account names, local amounts at the minor unit.
    let mut r = csv::Reader::from_path(dir.join("translated.csv")).unwrap();
    let head: Vec<String> = r.headers().unwrap().iter().map(String::from).collect();
    let col = |n: &str| head.iter().position(|h| h == n).unwrap_or_else(|| panic!("no column {n} in {head:?}"));
    let (entity, period, name, local, pres) =
        (col("entity"), col("period"), col("account_name"), col("balance_local"), col("balance_presentation"));
    let mut seen = BTreeMap::new();
    for row in r.records() {
        let row = row.unwrap();
        assert!(row[period].len() == 7 && row[period].as_bytes()[4] == b'-', "{:?}", &row[period]);
        assert!(!row[name].is_empty());
        let decimals = row[local].split_once('.').map(|(_, f)| f.len()).unwrap_or(0);
        // ISO 4217: JPY has no minor unit, BHD three decimals, EUR and USD two.
        let want = match &row[entity] {
            "KIS-JP" => 0,
            "GLF-BH" => 3,
            _ => 2,
        };
        assert_eq!(decimals, want, "{} local amount {}", &row[entity], &row[local]);
        assert_eq!(row[pres].split_once('.').map(|(_, f)| f.len()), Some(2));
        seen.insert(row[period].to_string(), ());
    }
    assert!(seen.contains_key("2025-12") && seen.contains_key("2026-12"), "{seen:?}");
    let text = std::fs::read_to_string(dir.join("eliminations.csv")).unwrap();
    assert!(text.lines().next().unwrap().contains("account,account_name,entity"), "{text}");

    // statements.csv says what statements.json says.
    let mut r = csv::Reader::from_path(dir.join("statements.csv")).unwrap();
    let mut rows = 0;
    for row in r.records() {
        let row = row.unwrap();
        let lines = close["statements"][&row[0]]["lines"].as_array().unwrap();
        let line = lines.iter().find(|l| l["line"] == row[1]).unwrap();
        assert_eq!(d(&row[4]), json_amount(&line["amount"]), "{} {}", &row[0], &row[1]);
        rows += 1;
    }
    assert!(rows > 40, "{rows} statement lines");

    // Parquet when asked; the translated lines once, in the one format asked, and not
    // at all unless asked.
    let (code, _) =
        run(&["close", "--period", "2026-12", "--out", "pq", "--parquet", "--data", data, "--format", "json"]);
    assert_eq!(code, 0);
    let pq = find_file(&f.path().join("pq/2026-12"), "contributions.parquet").expect("Parquet twins when asked");
    let pq = pq.parent().expect("a folder");
    assert!(!pq.join("translated.parquet").exists() && !pq.join("translated.csv").exists());
    let (code, _) = run(&[
        "close",
        "--period",
        "2026-12",
        "--out",
        "pq-lines",
        "--translated-lines",
        "parquet",
        "--data",
        data,
        "--format",
        "json",
    ]);
    assert_eq!(code, 0);
    let lines = find_file(&f.path().join("pq-lines/2026-12"), "translated.parquet").expect("translated.parquet");
    assert!(!lines.with_file_name("translated.csv").exists(), "the translated lines in one format");
    assert!(!lines.with_file_name("contributions.parquet").exists(), "no Parquet twins unless asked");

    // The workbook, read back by openpyxl, figure by figure.
    let (code, matching) = run_json(f.path(), &["match", "--period", "2026-12"]);
    assert_eq!(code, 0);
    let (code, segments) = run_json(f.path(), &["segments", "--period", "2026-12", "--by", "business"]);
    assert_eq!(code, 0);
    match read_workbook(&dir.join("close.xlsx")) {
        Some(wb) => check_workbook(&wb, &close, &matching, &segments),
        None => eprintln!(
            "SKIPPED the workbook read-back: /usr/bin/python3 with openpyxl is absent (apt-get install python3-openpyxl)"
        ),
    }

    // The page: self-contained, rendered by Chromium with its charts, no console error.
    let html = std::fs::read_to_string(dir.join("close.html")).unwrap();
    for external in ["src=\"http", "href=\"http", "<script", "<link", "@import", "url("] {
        assert!(!html.contains(external), "the page refers outside itself: {external}");
    }
    for x in close["statements"]["profit_or_loss"]["ratios"].as_array().unwrap() {
        let p: Decimal = json_amount(&x["percent"]);
        let row = format!(r#"<td class="note">{}</td><td class="amount">{p:.1}%</td>"#, x["label"].as_str().unwrap());
        assert!(html.contains(&row), "the page shows the ratio line {row}");
    }
    let shot = PathBuf::from(env!("CARGO_TARGET_TMPDIR")).join("close-report.png");
    let Some((dom, log)) = render_in_chromium(&dir.join("close.html"), &shot) else {
        eprintln!("SKIPPED the browser check: /usr/bin/chromium is absent (apt-get install chromium)");
        return;
    };
    for id in ["profit_or_loss", "oci", "balance_sheet", "equity_changes", "cash_flows", "intercompany"] {
        assert!(dom.contains(&format!("id=\"{id}\"")), "the rendered page lacks {id}");
    }
    assert_eq!(dom.matches("<svg class=\"chart\"").count(), 3, "segments, causes, operations");
    let bs = close["statements"]["balance_sheet"]["lines"].as_array().unwrap();
    let total_assets = bs.iter().find(|l| l["line"] == "TA").unwrap();
    let shown = tessera::money::format_amount(json_amount(&total_assets["amount"]), 2);
    assert!(dom.contains(&shown), "total assets {shown} shown");
    let console: Vec<&str> = log.lines().filter(|l| l.contains("CONSOLE")).collect();
    assert!(console.is_empty(), "console messages: {console:?}");
    let png = std::fs::read(&shot).unwrap();
    assert!(png.starts_with(b"\x89PNG") && png.len() > 20_000, "screenshot at {}", shot.display());
}

/// An amount as docs/demo.md writes it: thousands separators, negatives in parentheses
/// or with a minus sign.
fn doc_amount(text: &str) -> Decimal {
    let t = text.trim().replace(',', "");
    match t.strip_prefix('(').and_then(|x| x.strip_suffix(')')) {
        Some(inner) => -d(inner),
        None => d(&t),
    }
}

/// Every amount with two decimals in `text` (`1,418,597.18`, `-49,308,366.45`).
fn amounts_in(text: &str) -> Vec<Decimal> {
    let mut out = Vec::new();
    for word in text.split(|c: char| c.is_whitespace() || c == '(' || c == ')' || c == ';') {
        let w = word.trim_end_matches([',', '.']);
        let digits = w.trim_start_matches('-');
        // A paragraph number such as IFRS 8.13 is not an amount: amounts have a
        // thousands separator or at least three digits before the point.
        let is_amount = digits.len() > 5
            && digits.as_bytes()[digits.len() - 3] == b'.'
            && digits.chars().all(|c| c.is_ascii_digit() || c == ',' || c == '.')
            && digits.chars().next().is_some_and(|c| c.is_ascii_digit());
        if is_amount {
            out.push(doc_amount(w));
        }
    }
    out
}

#[test]
fn the_figures_quoted_in_docs_demo_are_the_demo_close() {
    let doc = std::fs::read_to_string(repo().join("docs/demo.md")).unwrap();
    let out = tempfile::tempdir().unwrap();
    let (code, close) = run_json(&repo(), &["close", "--period", "2026-12", "--out", out.path().to_str().unwrap()]);
    assert_eq!(code, 0);
    let (_, business) = run_json(&repo(), &["segments", "--period", "2026-12", "--by", "business"]);
    let (_, geography) = run_json(&repo(), &["segments", "--period", "2026-12", "--by", "geography"]);
    let section = doc.split("## The figures of the close").nth(1).expect("the figures section");
    let mut table = Vec::new();
    for row in section.lines().filter(|l| l.starts_with("| ") && l.contains('`')) {
        let cells: Vec<&str> = row.trim_matches('|').split('|').map(str::trim).collect();
        let from: Vec<&str> = cells[1].trim_matches('`').split_whitespace().collect();
        let quoted = doc_amount(cells[2]);
        let actual = match from.as_slice() {
            ["close", "attribution", field] => json_amount(&close["attribution"][*field]),
            ["close", statement, line] => {
                let lines = close["statements"][*statement]["lines"].as_array().unwrap();
                json_amount(&lines.iter().find(|l| l["line"] == *line).unwrap_or_else(|| panic!("{row}"))["amount"])
            }
            [key, "segment", segment, value] => {
                let v = if *key == "business" { &business } else { &geography };
                let s = v["segments"].as_array().unwrap().iter().find(|s| s["segment"] == *segment).unwrap();
                json_amount(&s["values"][*value])
            }
            [key, "reconciliation", line, item] => {
                let v = if *key == "business" { &business } else { &geography };
                let l = v["reconciliation"].as_array().unwrap().iter().find(|l| l["line"] == *line).unwrap();
                match *item {
                    "reportable_segments" | "group" => json_amount(&l[*item]),
                    _ => json_amount(
                        &l["items"].as_array().unwrap().iter().find(|i| i["item"] == *item).unwrap()["amount"],
                    ),
                }
            }
            _ => panic!("docs/demo.md names a figure the test cannot find: {row}"),
        };
        assert_eq!(quoted, actual, "docs/demo.md: {row}");
        table.push(quoted);
    }
    assert!(table.len() >= 20, "{} figures checked", table.len());
    // The segment paragraphs quote only figures of the table.
    let paragraphs = doc.split("At 2026-12, year to date:").nth(1).unwrap().split("## ").next().unwrap();
    let quoted = amounts_in(paragraphs);
    assert!(quoted.len() >= 10, "{quoted:?}");
    for a in quoted {
        assert!(
            table.contains(&a) || table.contains(&-a),
            "docs/demo.md quotes {a}, which is not a figure of the close"
        );
    }
}

#[test]
fn translate_shows_local_amounts_at_their_minor_unit() {
    // ISO 4217: JPY has no minor unit, BHD three decimals.
    for (entity, decimals) in [("KIS-JP", 0), ("GLF-BH", 3), ("ALD-UK", 2)] {
        let (code, v) = run_json(&repo(), &["translate", "--period", "2026-12", "--entity", entity]);
        assert_eq!(code, 0);
        let e = &v["entities"][0];
        let mut texts: Vec<&str> = e["lines"]
            .as_array()
            .unwrap()
            .iter()
            .flat_map(|l| [l["amount_local"].as_str().unwrap(), l["balance_local"].as_str().unwrap()])
            .collect();
        texts.push(e["month"]["opening_net_assets_local"].as_str().unwrap());
        assert!(texts.len() > 10);
        for t in texts {
            assert_eq!(t.split_once('.').map(|(_, f)| f.len()).unwrap_or(0), decimals, "{entity} {t}");
        }
    }
}

/// `close --compare budget`: the page draws each walk as a waterfall whose bars are the
/// walk's comparison figure, one bar per kind of step and the actual figure, and it
/// renders in Chromium without a console message.
#[test]
fn a_compared_close_draws_each_walk_as_a_waterfall() {
    let f = Folder::demo();
    let (code, close) = run_json(f.path(), &["close", "--period", "2026-12", "--out", "pack", "--compare", "budget"]);
    assert_eq!(code, 0, "{close:#}");
    let page = find_file(&f.path().join("pack/2026-12"), "close.html").expect("close.html");
    let html = std::fs::read_to_string(&page).unwrap();
    let walks = close["statements"]["comparison"]["walks"].as_array().unwrap();
    assert!(walks.len() >= 2, "{walks:?}");
    let charts: Vec<&str> = html.split("<svg class=\"chart waterfall\"").skip(1).collect();
    assert_eq!(charts.len(), walks.len(), "one waterfall per walk");
    for (svg, w) in charts.iter().zip(walks) {
        let svg = &svg[..svg.find("</svg>").unwrap()];
        let mut kinds: Vec<&str> = Vec::new();
        for s in w["steps"].as_array().unwrap() {
            let k = s["step"].as_str().unwrap();
            if !kinds.contains(&k) {
                kinds.push(k);
            }
        }
        assert_eq!(
            svg.matches("<rect ").count(),
            kinds.len() + 2,
            "{}: comparison, each kind of step, actual",
            w["measure"]
        );
        for figure in [&w["comparison"], &w["actual"]] {
            let shown = tessera::money::format_amount(json_amount(figure), 2);
            assert!(svg.contains(&format!(">{shown}<")), "{} shows {shown}", w["measure"]);
        }
    }
    let shot = PathBuf::from(env!("CARGO_TARGET_TMPDIR")).join("close-compare-report.png");
    let Some((dom, log)) = render_in_chromium(&page, &shot) else {
        eprintln!("SKIPPED the browser check: /usr/bin/chromium is absent (apt-get install chromium)");
        return;
    };
    assert_eq!(dom.matches("<svg class=\"chart waterfall\"").count(), walks.len());
    let console: Vec<&str> = log.lines().filter(|l| l.contains("CONSOLE")).collect();
    assert!(console.is_empty(), "console messages: {console:?}");
}

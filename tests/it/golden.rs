//! Golden outputs: every file the demo's main commands write, and what they print, compared
//! byte for byte with the copies committed under `tests/golden/`.
//!
//! A change that moves a figure, a column or a line of any output shows here as a diff, so
//! it is reviewed like code: rerun with `TESSERA_GOLDEN=write cargo test golden` to write
//! the new outputs, read `git diff tests/golden`, and say in the commit why each figure
//! moved. A pure refactor leaves every file unchanged.
//!
//! The cases are fixed to one period (the demo's fiscal year end), so that a new month
//! added to the demo does not move them unnoticed.

use std::collections::BTreeMap;
use std::path::{Path, PathBuf};

use crate::support::{repo, run};

/// The demo's period every case closes.
const PERIOD: &str = "2026-12";

/// One case: a name (its folder under `tests/golden/`), the command's arguments, and the
/// written files it leaves to another case (by the end of their names: the translated
/// lines are the same for every close of the period, so only `close-ytd` keeps them). The
/// data folder is the repository root; `OUT` stands for a fresh output folder.
type Case = (&'static str, &'static [&'static str], &'static [&'static str]);

const TRANSLATED: &[&str] = &["translated.csv", "translated.parquet"];

const CASES: &[Case] = &[
    // The translated lines are written on request only; this case asks, so that they are kept.
    ("close-ytd", &["close", "--period", PERIOD, "--out", "OUT", "--translated-lines", "csv"], &[]),
    ("close-ytd-json", &["close", "--period", PERIOD, "--out", "OUT", "--format", "json"], &["/"]),
    ("close-month", &["close", "--period", PERIOD, "--view", "month", "--out", "OUT"], TRANSLATED),
    ("close-quarter", &["close", "--period", PERIOD, "--view", "qtd", "--out", "OUT"], TRANSLATED),
    ("close-compare-budget", &["close", "--period", PERIOD, "--out", "OUT", "--compare", "budget"], TRANSLATED),
    ("close-subgroup", &["close", "--period", PERIOD, "--entity", "ALD-US", "--out", "OUT"], TRANSLATED),
    ("segments-business", &["segments", "--period", PERIOD, "--by", "business", "--out", "OUT"], &[]),
    ("segments-geography", &["segments", "--period", PERIOD, "--by", "geography", "--format", "json"], &[]),
    ("match", &["match", "--period", PERIOD], &[]),
    ("match-json", &["match", "--period", PERIOD, "--format", "json"], &[]),
    ("translate", &["translate", "--period", PERIOD], &[]),
    ("translate-json", &["translate", "--period", PERIOD, "--format", "json"], &[]),
    ("check", &["check", "--period", PERIOD], &[]),
    ("structure", &["structure", "--period", PERIOD], &[]),
    ("trace", &["trace", "4100", "--period", PERIOD], &[]),
];

/// What one run produced: the printed text (with its exit code) and every written file,
/// by path relative to the output folder.
fn produce(args: &[&str], skip: &[&str]) -> BTreeMap<String, Vec<u8>> {
    let out = tempfile::tempdir().expect("temp dir");
    let out_path = out.path().to_str().expect("utf-8 path").to_string();
    let root = repo();
    let data = root.to_str().expect("utf-8 path");
    let mut argv: Vec<&str> = args.iter().map(|a| if *a == "OUT" { out_path.as_str() } else { a }).collect();
    argv.extend_from_slice(&["--data", data]);
    let (code, printed) = run(&argv);
    let mut files = BTreeMap::new();
    files.insert("printed.txt".to_string(), format!("exit code {code}\n{printed}").into_bytes());
    collect(out.path(), out.path(), &mut files);
    // `/` skips every written file: the case checks only what is printed.
    files.retain(|name, _| !name.starts_with("out/") || !skip.iter().any(|s| *s == "/" || name.ends_with(s)));
    files
}

fn collect(base: &Path, dir: &Path, files: &mut BTreeMap<String, Vec<u8>>) {
    let Ok(entries) = std::fs::read_dir(dir) else { return };
    let mut paths: Vec<PathBuf> = entries.map(|e| e.expect("directory entry").path()).collect();
    paths.sort();
    for p in paths {
        if p.is_dir() {
            collect(base, &p, files);
        } else {
            let rel = p.strip_prefix(base).expect("inside the output folder");
            let rel = rel.components().map(|c| c.as_os_str().to_string_lossy()).collect::<Vec<_>>().join("/");
            files.insert(format!("out/{rel}"), std::fs::read(&p).expect("read output"));
        }
    }
}

/// The committed files of one case.
fn committed(dir: &Path) -> BTreeMap<String, Vec<u8>> {
    let mut files = BTreeMap::new();
    if let Ok(text) = std::fs::read(dir.join("printed.txt")) {
        files.insert("printed.txt".to_string(), text);
    }
    collect(&dir.join("out"), &dir.join("out"), &mut files);
    files
}

/// A readable account of how two versions of a file differ: the first differing lines
/// with their line numbers, or the sizes for a binary file.
fn diff(name: &str, want: &[u8], got: &[u8]) -> String {
    let (Ok(want), Ok(got)) = (std::str::from_utf8(want), std::str::from_utf8(got)) else {
        return format!("{name}: binary file differs ({} bytes committed, {} produced)\n", want.len(), got.len());
    };
    let (w, g): (Vec<&str>, Vec<&str>) = (want.lines().collect(), got.lines().collect());
    let mut text = format!("{name}: {} lines committed, {} produced\n", w.len(), g.len());
    let mut shown = 0;
    for i in 0..w.len().max(g.len()) {
        let (a, b) = (w.get(i), g.get(i));
        if a != b {
            let (a, b) = excerpts(a.unwrap_or(&"(none)"), b.unwrap_or(&"(none)"));
            text.push_str(&format!("  line {}:\n  - {a}\n  + {b}\n", i + 1));
            shown += 1;
            if shown == 12 {
                text.push_str("  ...\n");
                break;
            }
        }
    }
    text
}

/// Two differing lines, cut to a window around their first difference when long (an
/// HTML page is one line of many kilobytes).
fn excerpts(a: &str, b: &str) -> (String, String) {
    const WIDTH: usize = 160;
    let (ca, cb): (Vec<char>, Vec<char>) = (a.chars().collect(), b.chars().collect());
    if ca.len() <= 2 * WIDTH && cb.len() <= 2 * WIDTH {
        return (a.to_string(), b.to_string());
    }
    let first = ca.iter().zip(&cb).take_while(|(x, y)| x == y).count();
    let start = first.saturating_sub(WIDTH / 2);
    let cut = |c: &[char]| {
        let end = (start + WIDTH).min(c.len());
        let text: String = c[start.min(end)..end].iter().collect();
        format!("[char {}] ...{text}...", start + 1)
    };
    (cut(&ca), cut(&cb))
}

fn write_case(dir: &Path, files: &BTreeMap<String, Vec<u8>>) {
    if dir.exists() {
        std::fs::remove_dir_all(dir).expect("clear the case folder");
    }
    for (name, bytes) in files {
        let p = dir.join(name);
        std::fs::create_dir_all(p.parent().expect("parent")).expect("mkdir");
        std::fs::write(p, bytes).expect("write golden file");
    }
}

#[test]
fn golden_outputs_are_unchanged() {
    let write = std::env::var("TESSERA_GOLDEN").is_ok_and(|v| v == "write");
    let mut report = String::new();
    for (case, args, skip) in CASES {
        let dir = repo().join("tests/golden").join(case);
        let got = produce(args, skip);
        if write {
            write_case(&dir, &got);
            continue;
        }
        let want = committed(&dir);
        for name in want.keys().chain(got.keys()).collect::<std::collections::BTreeSet<_>>() {
            match (want.get(name), got.get(name)) {
                (Some(w), Some(g)) if w == g => {}
                (Some(w), Some(g)) => report.push_str(&format!("{case}/{}", diff(name, w, g))),
                (Some(_), None) => report.push_str(&format!("{case}/{name}: committed but no longer written\n")),
                (None, Some(_)) => report.push_str(&format!("{case}/{name}: written but not committed\n")),
                (None, None) => unreachable!("name comes from one of the two maps"),
            }
        }
    }
    assert!(
        report.is_empty(),
        "golden outputs differ (if the change is intended: TESSERA_GOLDEN=write cargo test golden, \
         review git diff tests/golden, say why in the commit):\n{report}"
    );
}

//! Test support: small data folders written into temporary directories, the bundled
//! demo copied for breaking, and commands run in-process.

use std::path::{Path, PathBuf};

use clap::Parser;

/// The repository root (holds the demo group).
pub fn repo() -> PathBuf {
    PathBuf::from(env!("CARGO_MANIFEST_DIR"))
}

/// Runs `tessera ARGS` in-process; returns the exit code and what it printed.
pub fn run(args: &[&str]) -> (i32, String) {
    let mut argv = vec!["tessera"];
    argv.extend_from_slice(args);
    let cli = tessera::Cli::try_parse_from(argv).expect("arguments parse");
    let mut out = Vec::new();
    let code = match tessera::run(cli, &mut out) {
        Ok(c) => c,
        Err(e) => {
            out.extend_from_slice(format!("error: {e}\n").as_bytes());
            tessera::cli::error_exit_code(&e)
        }
    };
    (code, String::from_utf8(out).expect("utf-8 output"))
}

/// Runs a command on a data folder with `--format json` and parses the output.
pub fn run_json(dir: &Path, args: &[&str]) -> (i32, serde_json::Value) {
    let mut a: Vec<&str> = args.to_vec();
    let d = dir.to_str().expect("utf-8 path");
    a.extend_from_slice(&["--data", d, "--format", "json"]);
    let (code, text) = run(&a);
    let v = serde_json::from_str(&text).unwrap_or_else(|e| panic!("not JSON ({e}):\n{text}"));
    (code, v)
}

/// A data folder in a temporary directory.
pub struct Folder {
    pub dir: tempfile::TempDir,
}

impl Folder {
    pub fn empty() -> Self {
        Self { dir: tempfile::tempdir().expect("temp dir") }
    }

    /// A copy of the bundled demo group (its plans included).
    pub fn demo() -> Self {
        let f = Self::empty();
        for sub in ["entities", "rates"] {
            copy_dir(&repo().join(sub), &f.path().join(sub));
        }
        f
    }

    /// A copy of the inputs of the case folder `tests/cases/<name>`.
    pub fn case(name: &str) -> Self {
        let f = Self::empty();
        for sub in ["entities", "rates"] {
            copy_dir(&repo().join("tests/cases").join(name).join(sub), &f.path().join(sub));
        }
        f
    }

    pub fn path(&self) -> &Path {
        self.dir.path()
    }

    pub fn write(&self, rel: &str, text: &str) {
        let p = self.path().join(rel);
        std::fs::create_dir_all(p.parent().expect("parent")).expect("mkdir");
        std::fs::write(p, text).expect("write");
    }

    pub fn read(&self, rel: &str) -> String {
        std::fs::read_to_string(self.path().join(rel)).expect("read")
    }

    /// Replaces the first occurrence of `from` in a file; panics if absent.
    pub fn replace(&self, rel: &str, from: &str, to: &str) {
        let text = self.read(rel);
        assert!(text.contains(from), "{rel} does not contain {from:?}");
        self.write(rel, &text.replacen(from, to, 1));
    }

    /// Appends a line to a file.
    pub fn append(&self, rel: &str, line: &str) {
        let mut text = self.read(rel);
        if !text.ends_with('\n') {
            text.push('\n');
        }
        text.push_str(line);
        text.push('\n');
        self.write(rel, &text);
    }

    pub fn remove(&self, rel: &str) {
        let p = self.path().join(rel);
        if p.is_dir() {
            std::fs::remove_dir_all(p).expect("remove dir");
        } else {
            std::fs::remove_file(p).expect("remove file");
        }
    }

    /// 1-based line number of the first line containing `needle`.
    pub fn line_of(&self, rel: &str, needle: &str) -> u64 {
        self.read(rel)
            .lines()
            .position(|l| l.contains(needle))
            .map(|i| i as u64 + 1)
            .unwrap_or_else(|| panic!("{needle:?} not in {rel}"))
    }
}

fn copy_dir(from: &Path, to: &Path) {
    std::fs::create_dir_all(to).expect("mkdir");
    for e in std::fs::read_dir(from).expect("read dir") {
        let e = e.expect("entry");
        let p = e.path();
        if p.is_dir() {
            copy_dir(&p, &to.join(e.file_name()));
        } else {
            std::fs::copy(&p, to.join(e.file_name())).expect("copy");
        }
    }
}

/// A minimal chart and layout used by the small groups built in tests.
pub const CHART: &str = "account,name,statement,class,basis,ic_kind,non_current
1000,Cash,balance_sheet,asset,closing,,
1100,Goodwill,balance_sheet,asset,closing,,true
1300,Investments in associates,balance_sheet,asset,closing,,true
1400,Investments in subsidiaries,balance_sheet,asset,closing,investment,true
1500,Inventory,balance_sheet,asset,closing,,
1550,Receivables from group entities,balance_sheet,asset,closing,trade,
2550,Payables to group entities,balance_sheet,liability,closing,trade,
2600,Loans from group entities,balance_sheet,liability,closing,loan,
1600,Loans to group entities,balance_sheet,asset,closing,loan,
3000,Share capital,balance_sheet,equity,historical,,
3200,Retained earnings,balance_sheet,equity,historical,,
3300,Translation reserve,balance_sheet,equity,historical,,
3900,Non-controlling interests,balance_sheet,equity,historical,,
4000,Revenue,profit_or_loss,income,average,,
4100,Revenue from group entities,profit_or_loss,income,average,sales,
4200,Dividends from group entities,profit_or_loss,income,average,dividend,
4900,Share of profit of associates,profit_or_loss,income,average,,
5000,Expenses,profit_or_loss,expense,average,,
5100,Purchases from group entities,profit_or_loss,expense,average,sales,
6950,Intercompany differences,profit_or_loss,expense,average,,
8100,Exchange differences on translation,oci,income,average,,
";

pub const LAYOUT: &str = "statement,line,label,accounts,total_of,presentation
profit_or_loss,REV,Revenue,4000..4299,,credit_positive
profit_or_loss,EXP,Expenses,5000..5199 6950,,credit_positive
profit_or_loss,ASSOC,Share of profit of associates,4900,,credit_positive
profit_or_loss,PROFIT,Profit for the period,,REV EXP ASSOC,credit_positive
oci,FX,Exchange differences on translation,8100,,credit_positive
oci,OCI,Other comprehensive income,,FX,credit_positive
balance_sheet,NCA,Non-current assets,1100..1499,,
balance_sheet,CA,Current assets,1000 1500 1550 1600,,
balance_sheet,TA,Total assets,,NCA CA,
balance_sheet,EQ,Equity,3000..3999,,credit_positive
balance_sheet,LIAB,Liabilities,2000..2999,,credit_positive
balance_sheet,TEL,Total equity and liabilities,,EQ LIAB,credit_positive
equity_changes,SC,Share capital,3000,,credit_positive
equity_changes,RE,Retained earnings,3200,,credit_positive
equity_changes,TR,Translation reserve,3300,,credit_positive
equity_changes,NCI,Non-controlling interests,3900,,credit_positive
equity_changes,TOT,Total equity,,SC RE TR NCI,credit_positive
";

/// `CHART` ready for an IAS 29 restatement: a `monetary` column (cash, receivables,
/// payables and loans monetary; goodwill, investments and inventory not: IAS 29.12-14)
/// and account 5150 for the gain or loss on the net monetary position, inside the
/// layout's expenses.
pub fn ias29_chart() -> String {
    let mut out = String::new();
    for (i, l) in CHART.lines().enumerate() {
        let monetary = match l.split(',').next().unwrap_or_default() {
            _ if i == 0 => "monetary",
            "1000" | "1550" | "2550" | "2600" | "1600" => "true",
            "1100" | "1300" | "1400" | "1500" => "false",
            _ => "",
        };
        out.push_str(&format!("{l},{monetary}\n"));
    }
    out.push_str("5150,Gain or loss on the net monetary position,profit_or_loss,expense,average,,,\n");
    out
}

/// `settings` naming account 5150 for the net monetary position (IAS 29.28).
pub fn ias29_settings(settings: &str) -> String {
    settings.replacen("[accounts]\n", "[accounts]\nnet_monetary_position = \"5150\"\n", 1)
}

pub fn settings(presentation: &str, parent: &str, rounding: &str, income: &str) -> String {
    format!(
        "name = \"Test group\"
parent = \"{parent}\"
presentation_currency = \"{presentation}\"
fiscal_year_start = 1

[policies]
rounding = \"{rounding}\"
income_translation = \"{income}\"
ifric16 = \"direct\"

[accounts]
retained_earnings = \"3200\"
translation_reserve = \"3300\"
translation_difference = \"8100\"
non_controlling_interest = \"3900\"
goodwill = \"1100\"
equity_investments = \"1300\"
equity_result = \"4900\"
intercompany_difference = \"6950\"
inventory = \"1500\"
cost_of_sales = \"5000\"

[intercompany]
tolerance_absolute = \"1.00\"
tolerance_relative = \"0\"
timing_window_days = 5
"
    )
}

/// A mapping that maps each chart account to itself (local = group ids).
pub fn identity_mapping() -> String {
    let mut s = String::from("local_account,local_name,group_account\n");
    for line in CHART.lines().skip(1) {
        let acct = line.split(',').next().expect("account");
        s.push_str(&format!("{acct},,{acct}\n"));
    }
    s
}

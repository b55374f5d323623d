//! Bad input, table-driven: each row breaks a copy of the demo in one way and names the
//! finding `tessera check` must give and its exit code (0 clean or warnings only, 1
//! blocking, 3 unreadable). A row whose check exits 0 must also show its warning in the
//! close's own output; a row whose check blocks must stop the final close (exit 1 or
//! 3). Then a bounded random test: demo files mutated byte by byte, cell by cell and row
//! by row never make a run panic, and never let a close exit 0 with figures that differ
//! from the demo's unless the mutation is a legitimate delivery.

use std::collections::BTreeMap;

use proptest::prelude::*;
use serde_json::Value;

use crate::support::{Folder, run_json};

const UK_DEC: &str = "entities/ALD-UK/tb-2026-12.movements.csv";
const UK_MAP: &str = "entities/ALD-UK/mapping.csv";
const JP_DEC: &str = "entities/KIS-JP/tb-2026-12.balances.csv";
const TOPSIDE: &str = "entities/group_adjustments.csv";

/// One bad input: how to break the demo, the rule it must raise, the exit code of check.
struct Case {
    name: &'static str,
    mutate: fn(&Folder),
    /// The rule of a finding that must be there (`None`: the input is legitimate and
    /// check must be clean).
    rule: Option<&'static str>,
    code: i32,
}

fn rename(f: &Folder, from: &str, to: &str) {
    std::fs::rename(f.path().join(from), f.path().join(to)).expect("rename");
}

fn write_bytes(f: &Folder, rel: &str, bytes: &[u8]) {
    std::fs::write(f.path().join(rel), bytes).expect("write");
}

/// The file with every line mapped by `g` (the header included).
fn map_lines(f: &Folder, rel: &str, g: impl Fn(usize, &str) -> String) {
    let text = f.read(rel);
    let out: Vec<String> = text.lines().enumerate().map(|(i, l)| g(i, l)).collect();
    f.write(rel, &(out.join("\n") + "\n"));
}

/// Negates every amount of a trial balance (debit and credit swapped).
fn flip_signs(f: &Folder, rel: &str) {
    map_lines(f, rel, |i, l| {
        if i == 0 {
            return l.to_string();
        }
        let mut cells: Vec<String> = l.split(',').map(String::from).collect();
        for k in [2usize, 5] {
            if let Some(c) = cells.get_mut(k)
                && !c.is_empty()
            {
                *c = match c.strip_prefix('-') {
                    Some(rest) => rest.to_string(),
                    None if c.chars().all(|x| x == '0' || x == '.') => c.clone(),
                    None => format!("-{c}"),
                };
            }
        }
        cells.join(",")
    });
}

/// The chart with `reserve` (its last column) set on `account`'s row.
fn with_reserve(f: &Folder, account: &str, reserve: &str) {
    assert!(
        f.read("entities/accounts.csv").starts_with("account,name,statement,class,basis,ic_kind,non_current,reserve\n")
    );
    map_lines(f, "entities/accounts.csv", |_, l| match l.rsplit_once(',') {
        Some((rest, _)) if l.starts_with(&format!("{account},")) => format!("{rest},{reserve}"),
        _ => l.to_string(),
    });
}

/// BRW-MX made hyperinflationary from 2026-01 (IAS 29), with the index of every month
/// from the year start in `rates/price_index.csv` but `skip`.
fn hyperinflationary_mx(f: &Folder, skip: Option<&str>) {
    f.replace("entities/entities.csv", "MX,MXN,Americas,Instruments,\n", "MX,MXN,Americas,Instruments,2026-01\n");
    let mut text = String::from("currency,period,index\n");
    for (i, m) in ["2025-12", "2026-01", "2026-02", "2026-03", "2026-04", "2026-05", "2026-06"]
        .into_iter()
        .chain(["2026-07", "2026-08", "2026-09", "2026-10", "2026-11", "2026-12"])
        .enumerate()
    {
        if Some(m) != skip {
            text.push_str(&format!("MXN,{m},{}\n", 100 + 5 * i));
        }
    }
    f.write("rates/price_index.csv", &text);
}

fn cases() -> Vec<Case> {
    vec![
        // --- the shape of a file ---------------------------------------------------
        Case {
            name: "every field quoted, empty ones too",
            mutate: |f| {
                map_lines(f, UK_DEC, |_, l| l.split(',').map(|c| format!("\"{c}\"")).collect::<Vec<_>>().join(","))
            },
            rule: None,
            code: 0,
        },
        Case {
            name: "byte order mark and CRLF line ends",
            mutate: |f| {
                let text = f.read(UK_DEC).replace('\n', "\r\n");
                write_bytes(f, UK_DEC, &[b"\xEF\xBB\xBF".as_slice(), text.as_bytes()].concat());
            },
            rule: None,
            code: 0,
        },
        Case {
            name: "entities.csv in Latin-1",
            mutate: |f| {
                let text = f.read("entities/entities.csv");
                let bytes: Vec<u8> = text.chars().map(|c| if c == 'ä' { 0xE4 } else { c as u8 }).collect();
                write_bytes(f, "entities/entities.csv", &bytes);
            },
            rule: Some("FileUnreadable"),
            code: 3,
        },
        Case {
            name: "mapping label in Windows-1252",
            mutate: |f| {
                let text = f.read(UK_MAP).replacen("Stock", "Stock\u{0}", 1);
                let bytes: Vec<u8> = text.bytes().map(|b| if b == 0 { 0x92 } else { b }).collect();
                write_bytes(f, UK_MAP, &bytes);
            },
            rule: Some("FileUnreadable"),
            code: 3,
        },
        Case {
            name: "entities.csv with only its header",
            mutate: |f| {
                let text = f.read("entities/entities.csv");
                f.write("entities/entities.csv", &format!("{}\n", text.lines().next().unwrap_or_default()));
            },
            rule: Some("TableEmpty"),
            code: 1,
        },
        Case {
            name: "a ragged row with one field too many",
            mutate: |f| f.replace(UK_DEC, "2026-12,1021,-14000.00,,,", "2026-12,1021,-14000.00,,,,"),
            rule: Some("RowMalformed"),
            code: 1,
        },
        Case {
            name: "a short row in holdings.csv",
            mutate: |f| {
                f.replace("entities/holdings.csv", "ALD-NL,HEL-CH,0.30,0.30,2019-07-01,,,,", "ALD-NL,HEL-CH,0.30")
            },
            rule: Some("RowMalformed"),
            code: 1,
        },
        Case {
            name: "a comment line in a trial balance",
            mutate: |f| f.replace(UK_DEC, "2026-12,1001,", "# exported by the ledger\n2026-12,1001,"),
            rule: Some("RowMalformed"),
            code: 1,
        },
        Case {
            name: "a comment line in accounts.csv",
            mutate: |f| f.append("entities/accounts.csv", "# end of chart"),
            rule: Some("RowMalformed"),
            code: 1,
        },
        Case {
            name: "an unterminated quote",
            mutate: |f| f.replace(UK_DEC, "2026-12,1031,-3000.00,,,", "2026-12,\"1031,-3000.00,,,"),
            rule: Some("RowMalformed"),
            code: 1,
        },
        Case {
            name: "the amount column twice, the first one empty",
            mutate: |f| {
                map_lines(f, UK_DEC, |i, l| {
                    let (p, rest) = l.split_once(',').unwrap_or((l, ""));
                    if i == 0 { format!("{p},amount,{rest}") } else { format!("{p},,{rest}") }
                })
            },
            rule: Some("ColumnDuplicated"),
            code: 3,
        },
        Case {
            name: "a column named twice in mapping.csv",
            mutate: |f| {
                f.replace(UK_MAP, "local_account,local_name,group_account", "local_account,local_account,group_account")
            },
            rule: Some("ColumnDuplicated"),
            code: 3,
        },
        Case {
            name: "an empty trial balance file",
            mutate: |f| f.write(UK_DEC, ""),
            rule: Some("FileUnreadable"),
            code: 3,
        },
        Case {
            name: "a trial balance with only its header",
            mutate: |f| f.write(UK_DEC, "period,account,amount,counterparty,txn_currency,txn_amount\n"),
            rule: Some("DeliveryMissing"),
            code: 1,
        },
        Case {
            name: "a required column missing",
            mutate: |f| {
                map_lines(f, UK_DEC, |i, l| if i == 0 { l.replace("amount,", "value,") } else { l.to_string() })
            },
            rule: Some("ColumnMissing"),
            code: 3,
        },
        Case {
            name: "an unknown column",
            mutate: |f| map_lines(f, UK_DEC, |i, l| if i == 0 { format!("{l},memo") } else { format!("{l},x") }),
            rule: Some("ColumnUnknown"),
            code: 0,
        },
        // --- names of files and folders --------------------------------------------
        Case {
            name: "an entity folder in lower case",
            mutate: |f| rename(f, "entities/ALD-UK", "entities/ald-uk"),
            rule: Some("EntityFolderUnknown"),
            code: 1,
        },
        Case {
            name: "a folder that is no entity",
            mutate: |f| f.write("entities/ZZZ-99/mapping.csv", "local_account,local_name,group_account\n"),
            rule: Some("EntityFolderUnknown"),
            code: 1,
        },
        Case {
            name: "a trial balance suffix misspelt",
            mutate: |f| rename(f, UK_DEC, "entities/ALD-UK/tb-2026-12.movement.csv"),
            rule: Some("DeliveryNameInvalid"),
            code: 1,
        },
        Case {
            name: "a trial balance suffix in upper case",
            mutate: |f| rename(f, UK_DEC, "entities/ALD-UK/tb-2026-12.movements.CSV"),
            rule: Some("DeliveryNameInvalid"),
            code: 1,
        },
        Case {
            name: "a trial balance prefix in upper case",
            mutate: |f| rename(f, UK_DEC, "entities/ALD-UK/TB-2026-12.movements.csv"),
            rule: Some("DeliveryNameInvalid"),
            code: 1,
        },
        Case {
            name: "a trial balance as a spreadsheet",
            mutate: |f| rename(f, UK_DEC, "entities/ALD-UK/tb-2026-12.movements.xlsx"),
            rule: Some("DeliveryNameInvalid"),
            code: 1,
        },
        Case {
            name: "mapping.csv with a capital",
            mutate: |f| rename(f, UK_MAP, "entities/ALD-UK/Mapping.csv"),
            rule: Some("FileUnknown"),
            code: 1,
        },
        Case {
            name: "opening.csv misspelt",
            mutate: |f| rename(f, "entities/ALD-UK/opening.csv", "entities/ALD-UK/openning.csv"),
            rule: Some("FileUnknown"),
            code: 1,
        },
        Case {
            name: "acquisitions.csv misspelt",
            mutate: |f| rename(f, "entities/acquisitions.csv", "entities/acquisition.csv"),
            rule: Some("FileUnknown"),
            code: 1,
        },
        Case {
            name: "a note beside the entity files",
            mutate: |f| f.write("entities/notes.txt", "call ALD-UK on Monday\n"),
            rule: Some("FileUnknown"),
            code: 0,
        },
        Case {
            name: "monthly.csv with a capital",
            mutate: |f| rename(f, "rates/monthly.csv", "rates/Monthly.csv"),
            rule: Some("FileUnknown"),
            code: 3,
        },
        // --- completeness -----------------------------------------------------------
        Case {
            name: "a subsidiary's folder missing",
            mutate: |f| f.remove("entities/ALD-UK"),
            rule: Some("DeliveryMissing"),
            code: 1,
        },
        Case {
            name: "a subsidiary's December missing",
            mutate: |f| f.remove(UK_DEC),
            rule: Some("DeliveryMissing"),
            code: 1,
        },
        Case {
            name: "an associate's month missing",
            mutate: |f| f.remove("entities/HEL-CH/tb-2026-06.movements.csv"),
            rule: Some("DeliveryMissing"),
            code: 1,
        },
        Case {
            name: "a subsidiary acquired in the year misses a month before control",
            mutate: |f| f.remove("entities/GLF-BH/tb-2026-02.movements.csv"),
            rule: Some("DeliveryMissing"),
            code: 1,
        },
        Case {
            name: "an opening balance missing",
            mutate: |f| f.remove("entities/ALD-US/opening.csv"),
            rule: Some("OpeningMissing"),
            code: 1,
        },
        Case { name: "a mapping missing", mutate: |f| f.remove(UK_MAP), rule: Some("FileMissing"), code: 1 },
        Case {
            name: "an entity outside the group that has not delivered",
            mutate: |f| f.append("entities/entities.csv", "ZZZ-01,Zed B.V.,NL,EUR,Europe,Corporate,"),
            rule: Some("DeliveryMissing"),
            code: 0,
        },
        Case {
            name: "two files for one month",
            mutate: |f| {
                let text = f.read(UK_DEC);
                f.write("entities/ALD-UK/tb-2026-12-bis.movements.csv", &text);
            },
            rule: Some("DeliveryDuplicated"),
            code: 1,
        },
        // --- dates -----------------------------------------------------------------
        Case {
            name: "an acquisition dated in the future",
            mutate: |f| {
                f.replace("entities/acquisitions.csv", "GLF-BH,2026-04-01", "GLF-BH,2027-03-01");
                f.replace(
                    "entities/holdings.csv",
                    "ALD-NL,GLF-BH,0.60,0.60,2026-04-01",
                    "ALD-NL,GLF-BH,0.60,0.60,2027-03-01",
                );
            },
            rule: Some("DateInFuture"),
            code: 1,
        },
        Case {
            name: "an acquisition date that disagrees with the holding",
            mutate: |f| f.replace("entities/acquisitions.csv", "GLF-BH,2026-04-01", "GLF-BH,2026-05-01"),
            rule: Some("DateInconsistent"),
            code: 1,
        },
        Case {
            name: "a holding starting after the fiscal year",
            mutate: |f| {
                f.replace(
                    "entities/holdings.csv",
                    "ALD-NL,ALD-UK,1.00,1.00,2012-03-01",
                    "ALD-NL,ALD-UK,1.00,1.00,2027-01-01",
                )
            },
            rule: Some("DateInFuture"),
            code: 1,
        },
        Case {
            name: "a holding ending before it starts",
            mutate: |f| {
                f.replace(
                    "entities/holdings.csv",
                    "ALD-UK,WSL-PL,1.00,1.00,2021-09-01,",
                    "ALD-UK,WSL-PL,1.00,1.00,2021-09-01,2013-01-01",
                )
            },
            rule: Some("HoldingInvalid"),
            code: 1,
        },
        Case {
            name: "a date that is no date",
            mutate: |f| f.replace("entities/holdings.csv", "2014-05-01", "2014-05-32"),
            rule: Some("ValueInvalid"),
            code: 1,
        },
        // --- rates ------------------------------------------------------------------
        Case {
            name: "a closing rate of 10^27",
            mutate: |f| {
                f.replace("rates/monthly.csv", "2026-12,USD,1.1035,", "2026-12,USD,1000000000000000000000000000,")
            },
            rule: Some("RateOutOfRange"),
            code: 1,
        },
        Case {
            name: "a closing rate of 10^20",
            mutate: |f| f.replace("rates/monthly.csv", "2026-12,USD,1.1035,", "2026-12,USD,100000000000000000000,"),
            rule: Some("RateOutOfRange"),
            code: 1,
        },
        Case {
            name: "a rate of 10^-10 that divides",
            mutate: |f| f.replace("rates/monthly.csv", "2026-12,USD,1.1035,", "2026-12,USD,0.0000000001,"),
            rule: Some("RateOutOfRange"),
            code: 1,
        },
        Case {
            name: "a historical rate of 10^27",
            mutate: |f| f.replace("rates/historical.csv", "2026-09,1.1102,", "2026-09,1000000000000000000000000000,"),
            rule: Some("RateOutOfRange"),
            code: 1,
        },
        Case {
            name: "a negative rate",
            mutate: |f| f.replace("rates/monthly.csv", "2026-12,USD,1.1035,", "2026-12,USD,-1.1035,"),
            rule: Some("RateNotPositive"),
            code: 1,
        },
        Case {
            name: "a rate with eleven decimals",
            mutate: |f| f.replace("rates/monthly.csv", "2026-12,USD,1.1035,", "2026-12,USD,1.10350000001,"),
            rule: Some("ValueInvalid"),
            code: 1,
        },
        Case {
            name: "a rate that is not a number",
            mutate: |f| f.replace("rates/monthly.csv", "2026-12,USD,1.1035,", "2026-12,USD,1.10x,"),
            rule: Some("ValueInvalid"),
            code: 1,
        },
        Case {
            name: "a month's rate missing",
            mutate: |f| {
                map_lines(f, "rates/monthly.csv", |_, l| {
                    if l.starts_with("2026-12,USD") { String::new() } else { l.to_string() }
                })
            },
            rule: Some("RateMissing"),
            code: 1,
        },
        Case {
            name: "a rate given twice",
            mutate: |f| {
                let line = f
                    .read("rates/monthly.csv")
                    .lines()
                    .find(|l| l.starts_with("2026-12,USD"))
                    .unwrap_or_default()
                    .to_string();
                f.append("rates/monthly.csv", &line);
            },
            rule: Some("RateDuplicated"),
            code: 1,
        },
        Case {
            name: "a closing rate shifted by a factor of 100",
            mutate: |f| f.replace("rates/monthly.csv", "2026-12,USD,1.1035,", "2026-12,USD,110.35,"),
            rule: Some("RateMoveImplausible"),
            code: 1,
        },
        // --- amounts ----------------------------------------------------------------
        Case {
            name: "an amount with an exponent",
            mutate: |f| f.replace(UK_DEC, "-14000.00", "-1.4e4"),
            rule: Some("AmountMalformed"),
            code: 1,
        },
        Case {
            name: "an amount with a thousands separator",
            mutate: |f| f.replace(UK_DEC, "2026-12,1021,-14000.00,", "2026-12,1021,\"-14,000.00\","),
            rule: Some("AmountMalformed"),
            code: 1,
        },
        Case {
            name: "an amount of 10^15",
            mutate: |f| f.replace(UK_DEC, "2026-12,1021,-14000.00,", "2026-12,1021,-1000000000000000.00,"),
            rule: Some("AmountTooLarge"),
            code: 1,
        },
        Case {
            name: "yen with decimals",
            mutate: |f| f.replace(JP_DEC, "2026-12,J-1120,300000000,", "2026-12,J-1120,300000000.5,"),
            rule: Some("AmountSurplusDecimals"),
            code: 1,
        },
        Case {
            name: "an amount missing",
            mutate: |f| f.replace(UK_DEC, "2026-12,1021,-14000.00,", "2026-12,1021,,"),
            rule: Some("ValueMissing"),
            code: 1,
        },
        Case {
            name: "acquisition amounts whose product leaves exact arithmetic",
            mutate: |f| {
                f.replace(
                    "entities/acquisitions.csv",
                    "GLF-BH,2026-04-01,1474070.400,fair_value,523047.134,1245350.320,3041415.90",
                    "GLF-BH,2026-04-01,999999999999999.999,fair_value,999999999999999.999,-999999999999999.999,999999999999999.99",
                )
            },
            rule: Some("AmountTooLarge"),
            code: 1,
        },
        Case {
            name: "an acquisition amount that is no number",
            mutate: |f| f.replace("entities/acquisitions.csv", "4500000.00,share", "4.5m,share"),
            rule: Some("AmountMalformed"),
            code: 1,
        },
        // --- trial balance rules ----------------------------------------------------
        Case {
            name: "a trial balance that does not sum to zero",
            mutate: |f| f.replace(UK_DEC, "-14000.00", "-14000.50"),
            rule: Some("TrialBalanceUnbalanced"),
            code: 1,
        },
        Case {
            name: "a row deleted",
            mutate: |f| f.replace(UK_DEC, "2026-12,1031,-3000.00,,,\n", ""),
            rule: Some("TrialBalanceUnbalanced"),
            code: 1,
        },
        Case {
            name: "a local account not mapped",
            mutate: |f| f.replace(UK_DEC, "2026-12,1031,", "2026-12,1039,"),
            rule: Some("AccountUnmapped"),
            code: 1,
        },
        Case {
            name: "a row repeated",
            mutate: |f| f.append(UK_DEC, "2026-12,1031,-3000.00,,,"),
            rule: Some("RowDuplicated"),
            code: 1,
        },
        Case {
            name: "a counterparty that is no entity",
            mutate: |f| f.replace(UK_DEC, ",BRW-US,USD,-62162.10", ",BRW-UX,USD,-62162.10"),
            rule: Some("CounterpartyUnknown"),
            code: 1,
        },
        Case {
            name: "an intercompany row without its counterparty",
            mutate: |f| f.replace(UK_DEC, ",BRW-US,USD,-62162.10", ",,USD,-62162.10"),
            rule: Some("CounterpartyMissing"),
            code: 1,
        },
        Case {
            name: "a counterparty on an account that is not intercompany",
            mutate: |f| f.replace(UK_DEC, "2026-12,2100,-7522.00,,,", "2026-12,2100,-7522.00,BRW-US,,"),
            rule: Some("CounterpartyOnPlainAccount"),
            code: 0,
        },
        Case {
            name: "a month delivered with debit and credit swapped",
            mutate: |f| flip_signs(f, UK_DEC),
            rule: Some("SignsFlipped"),
            code: 1,
        },
        Case {
            name: "a period outside the fiscal year",
            mutate: |f| f.replace(UK_DEC, "2026-12,1001,", "2025-12,1001,"),
            rule: Some("PeriodOutsideYear"),
            code: 1,
        },
        Case {
            name: "a period that is no month",
            mutate: |f| f.replace(UK_DEC, "2026-12,1001,", "2026-13,1001,"),
            rule: Some("ValueInvalid"),
            code: 1,
        },
        Case {
            name: "a transaction currency without its amount",
            mutate: |f| f.replace(UK_DEC, ",BRW-US,USD,-62162.10", ",BRW-US,USD,"),
            rule: Some("TransactionCurrencyIncomplete"),
            code: 1,
        },
        Case {
            name: "a local account mapped twice",
            mutate: |f| f.append(UK_MAP, "1001,Stock again,1000"),
            rule: Some("AccountMappedTwice"),
            code: 1,
        },
        // --- reference data and settings ---------------------------------------------
        Case {
            name: "an entity listed twice",
            mutate: |f| {
                f.append("entities/entities.csv", "ALD-UK,Aldermoor Instruments Ltd,GB,GBP,Europe,Instruments,")
            },
            rule: Some("EntityDuplicated"),
            code: 1,
        },
        Case {
            name: "a currency that is no ISO code",
            mutate: |f| f.replace("entities/entities.csv", ",GB,GBP,", ",GB,GBX,"),
            rule: Some("CurrencyUnknown"),
            code: 1,
        },
        Case {
            name: "a country that is no ISO code",
            mutate: |f| f.replace("entities/entities.csv", ",GB,GBP,", ",QQ,GBP,"),
            rule: Some("CountryUnknown"),
            code: 1,
        },
        Case {
            name: "a plausibility threshold that is no share",
            mutate: |f| f.replace("entities/group.toml", "rate_move = \"0.25\"", "rate_move = \"a lot\""),
            rule: Some("SettingInvalid"),
            code: 1,
        },
        Case {
            name: "timing differences asked for as in-transit items",
            mutate: |f| {
                f.replace(
                    "entities/group.toml",
                    "timing_window_days = 5",
                    "timing_window_days = 5\ntiming = \"in_transit\"",
                )
            },
            rule: Some("SettingInvalid"),
            code: 1,
        },
        Case {
            name: "an unknown plausibility setting",
            mutate: |f| f.replace("entities/group.toml", "sign_months = 2", "sign_months = 2\nsigns = 3"),
            rule: Some("SettingInvalid"),
            code: 1,
        },
        Case {
            name: "an account of an impossible class",
            mutate: |f| {
                f.replace(
                    "entities/accounts.csv",
                    "1000,Property plant and equipment,balance_sheet,asset,closing",
                    "1000,Property plant and equipment,balance_sheet,asset,average",
                )
            },
            rule: Some("AccountInvalid"),
            code: 1,
        },
        // --- the reserve an OCI account accumulates into (accounts.csv) ------------------
        Case {
            name: "an OCI account accumulating into an account not in the chart",
            mutate: |f| with_reserve(f, "9000", "3999"),
            rule: Some("AccountUnknown"),
            code: 1,
        },
        Case {
            name: "an OCI account accumulating into a liability",
            mutate: |f| with_reserve(f, "9000", "2600"),
            rule: Some("AccountInvalid"),
            code: 1,
        },
        Case {
            name: "an OCI account accumulating into the NCI",
            mutate: |f| with_reserve(f, "9000", "3900"),
            rule: Some("AccountInvalid"),
            code: 1,
        },
        Case {
            name: "a reserve named on a profit or loss account",
            mutate: |f| with_reserve(f, "4000", "3300"),
            rule: Some("AccountInvalid"),
            code: 1,
        },
        Case {
            name: "the translation difference accumulating into the translation reserve, said aloud",
            mutate: |f| with_reserve(f, "9000", "3300"),
            rule: None,
            code: 0,
        },
        // --- top-side entries (group_adjustments.csv) ----------------------------------
        Case {
            name: "a top-side entry that does not balance",
            mutate: |f| f.replace(TOPSIDE, "2600,-85000.00", "2600,-84000.00"),
            rule: Some("GroupAdjustmentUnbalanced"),
            code: 1,
        },
        Case {
            name: "a top-side line on an account not in the chart",
            mutate: |f| f.replace(TOPSIDE, "ALD-US,6200,", "ALD-US,6299,"),
            rule: Some("AccountUnknown"),
            code: 1,
        },
        Case {
            name: "a top-side line on the NCI account the close computes",
            mutate: |f| f.replace(TOPSIDE, "ALD-US,2600,", "ALD-US,3900,"),
            rule: Some("AccountInvalid"),
            code: 1,
        },
        Case {
            name: "a top-side entry scoped to an entity that holds no sub-group",
            mutate: |f| map_lines(f, TOPSIDE, |_, l| l.replace(",ALD-US,", ",BRW-MX,")),
            rule: Some("GroupAdjustmentScopeInvalid"),
            code: 1,
        },
        Case {
            name: "a top-side line naming an entity outside its sub-group",
            mutate: |f| f.replace(TOPSIDE, "85000.00,BRW-US,", "85000.00,ALD-UK,"),
            rule: Some("GroupAdjustmentScopeInvalid"),
            code: 1,
        },
        Case {
            name: "an undated impairment of the associate's acquisition",
            mutate: |f| {
                f.replace(
                    "entities/acquisitions.csv",
                    "2678571.43,0,equity acquired",
                    "2678571.43,50000,equity acquired",
                )
            },
            rule: Some("ValueInvalid"),
            code: 1,
        },
        Case {
            name: "unrealised profit on goods the parent sold to its associate",
            mutate: |f| {
                let text = f.read("entities/inventory_profit.csv")
                    + "ALD-NL,HEL-CH,2026-12,100000.00,CHF,0.20,sold to the associate\n";
                f.write("entities/inventory_profit.csv", &text);
            },
            rule: None,
            code: 0,
        },
        Case {
            name: "unrealised profit with the associate under the deferred tax policy",
            mutate: |f| {
                let text = f.read("entities/inventory_profit.csv")
                    + "ALD-NL,HEL-CH,2026-12,100000.00,CHF,0.20,sold to the associate\n";
                f.write("entities/inventory_profit.csv", &text);
                let toml =
                    f.read("entities/group.toml").replace("[policies]\n", "[policies]\ndeferred_tax = \"recognise\"\n");
                f.write("entities/group.toml", &toml);
            },
            rule: Some("ValueInvalid"),
            code: 1,
        },
        Case {
            name: "a top-side entry booked outside the fiscal year",
            mutate: |f| map_lines(f, TOPSIDE, |_, l| l.replace(",2026-11,", ",2027-01,")),
            rule: Some("PeriodOutsideYear"),
            code: 1,
        },
        Case {
            name: "two rows of one top-side entry with different reasons",
            mutate: |f| f.replace(TOPSIDE, "-85000.00,BRW-US,,warranty", "-85000.00,BRW-US,,a warranty"),
            rule: Some("GroupAdjustmentInconsistent"),
            code: 1,
        },
        Case {
            name: "a top-side amount with more decimals than the presentation currency",
            mutate: |f| map_lines(f, TOPSIDE, |_, l| l.replace("85000.00,", "85000.005,")),
            rule: Some("AmountSurplusDecimals"),
            code: 1,
        },
        Case {
            name: "a top-side row without its preparer",
            mutate: |f| f.replace(TOPSIDE, ",group reporting (M. Okafor)\n", ",\n"),
            rule: Some("ValueMissing"),
            code: 1,
        },
        // --- IAS 29: price indices and the monetary classification ---------------------
        Case {
            name: "a price index of zero",
            mutate: |f| f.write("rates/price_index.csv", "currency,period,index\nMXN,2026-12,0\n"),
            rule: Some("PriceIndexNotPositive"),
            code: 1,
        },
        Case {
            name: "a price index that is not a number",
            mutate: |f| f.write("rates/price_index.csv", "currency,period,index\nMXN,2026-12,12O.5\n"),
            rule: Some("ValueInvalid"),
            code: 1,
        },
        Case {
            name: "the same month's price index twice",
            mutate: |f| f.write("rates/price_index.csv", "currency,period,index\nARS,2026-12,120\nARS,2026-12,121\n"),
            rule: Some("RowDuplicated"),
            code: 1,
        },
        Case {
            name: "price indices of a currency no entity restates",
            mutate: |f| f.write("rates/price_index.csv", "currency,period,index\nARS,2026-11,110\nARS,2026-12,121\n"),
            rule: Some("PriceIndexUnused"),
            code: 0,
        },
        Case {
            name: "a hyperinflationary entity's price index lacks a month",
            mutate: |f| hyperinflationary_mx(f, Some("2026-07")),
            rule: Some("PriceIndexMissing"),
            code: 1,
        },
        Case {
            name: "a hyperinflationary entity without the index of the year start",
            mutate: |f| hyperinflationary_mx(f, Some("2025-12")),
            rule: Some("PriceIndexMissing"),
            code: 1,
        },
        Case {
            name: "a hyperinflationary entity and a chart that says nothing of monetary items",
            mutate: |f| hyperinflationary_mx(f, None),
            rule: Some("MonetaryClassMissing"),
            code: 1,
        },
        Case {
            name: "a hyperinflationary entity and no account for the net monetary position",
            mutate: |f| hyperinflationary_mx(f, None),
            rule: Some("SettingInvalid"),
            code: 1,
        },
        Case {
            name: "an acquired hyperinflationary entity without the index of its acquisition month",
            mutate: |f| hyperinflationary_mx(f, None),
            rule: Some("PriceIndexMissing"),
            code: 1,
        },
        Case {
            name: "an acquired entity hyperinflationary from after the start of the year",
            mutate: |f| {
                f.replace(
                    "entities/entities.csv",
                    "BH,BHD,Middle East,Sensors,\n",
                    "BH,BHD,Middle East,Sensors,2026-02\n",
                );
                // Every index the restatement needs is there (the acquisition month
                // 2026-03 included): only hyperinflation beginning after the year's
                // first month blocks.
                let rows: String = (1..=12).map(|m| format!("BHD,2026-{m:02},100\n")).collect();
                f.write("rates/price_index.csv", &format!("currency,period,index\nBHD,2025-12,100\n{rows}"));
            },
            rule: Some("RestatementUnsupported"),
            code: 1,
        },
        Case {
            name: "a hyperinflationary entity in a group with a statement of cash flows",
            mutate: |f| {
                // Every index, the monetary classes and the account for the net monetary
                // position are there: only the statement of cash flows blocks.
                hyperinflationary_mx(f, None);
            },
            rule: Some("RestatementUnsupported"),
            code: 1,
        },
        Case {
            name: "a hyperinflationary entity in the presentation currency",
            mutate: |f| {
                f.replace("entities/entities.csv", "NL,EUR,Europe,Corporate,\n", "NL,EUR,Europe,Corporate,2026-01\n")
            },
            rule: Some("RestatementUnsupported"),
            code: 1,
        },
        Case {
            name: "a monetary flag on an equity account",
            mutate: |f| {
                map_lines(f, "entities/accounts.csv", |i, l| match i {
                    0 => format!("{l},monetary"),
                    _ if l.starts_with("3200,") => format!("{l},true"),
                    _ => format!("{l},"),
                })
            },
            rule: Some("ValueInvalid"),
            code: 1,
        },
    ]
}

/// The check of the table: every case gives its finding and exit code; one that only
/// warns shows the warning in the close's own output; one that blocks stops the close.
#[test]
fn each_bad_input_gives_its_finding() {
    let cases = cases();
    assert!(cases.len() >= 60, "{} cases", cases.len());
    let mut failures = Vec::new();
    for c in &cases {
        let f = Folder::demo();
        (c.mutate)(&f);
        let (code, v) = run_json(f.path(), &["check", "--period", "2026-12"]);
        let findings = v["findings"].as_array().cloned().unwrap_or_default();
        let rules: Vec<&str> = findings.iter().filter_map(|x| x["rule"].as_str()).collect();
        let found = match c.rule {
            Some(r) => rules.contains(&r),
            None => findings.is_empty(),
        };
        if code != c.code || !found {
            failures.push(format!("{}: exit {code} (want {}), rules {rules:?} (want {:?})", c.name, c.code, c.rule));
            continue;
        }
        // Located: a finding of the rule names a file or an entity.
        if let Some(r) = c.rule {
            let located =
                findings.iter().filter(|x| x["rule"] == r).all(|x| !x["file"].is_null() || !x["entity"].is_null());
            if !located {
                failures.push(format!("{}: a {r} finding names neither file nor entity", c.name));
            }
        }
        let out = tempfile::tempdir().expect("temp dir");
        let o = out.path().to_str().expect("utf-8");
        let (close_code, close) = run_json(f.path(), &["close", "--period", "2026-12", "--out", o]);
        if c.code == 0 {
            // The close shows the warning, whether it closes (a flipped month of
            // intercompany lines also opens differences, which then stop it).
            let shown: Vec<&str> = close["findings"]
                .as_array()
                .map(|a| a.iter().filter_map(|x| x["rule"].as_str()).collect())
                .unwrap_or_default();
            if let Some(r) = c.rule
                && !shown.contains(&r)
            {
                failures.push(format!("{}: the close does not show {r} (exit {close_code}, shows {shown:?})", c.name));
            }
        } else if close_code == 0 {
            failures.push(format!("{}: check blocks but the close exits 0", c.name));
        }
    }
    assert!(failures.is_empty(), "{} of {} cases failed:\n{}", failures.len(), cases.len(), failures.join("\n"));
}

/// Amounts and rates at the edges of what the formats allow: the close runs (here a
/// draft, past the acceptances that no longer fit) without a panic.
#[test]
fn extreme_values_within_the_limits_do_not_panic() {
    let f = Folder::demo();
    f.replace(
        "entities/acquisitions.csv",
        "GLF-BH,2026-04-01,1474070.400,fair_value,523047.134,1245350.320,3041415.90",
        "GLF-BH,2026-04-01,9999999999999.999,fair_value,9999999999999.999,-9999999999999.999,9999999999999.99",
    );
    map_lines(&f, "rates/monthly.csv", |_, l| {
        let c: Vec<&str> = l.split(',').collect();
        match c.get(1) {
            Some(&"BHD") if c[0].starts_with("2026") => format!("{},BHD,0.001,0.001,{}", c[0], c[4..].join(",")),
            Some(&"JPY") if c[0].starts_with("2026") => format!("{},JPY,1000000,1000000,{}", c[0], c[4..].join(",")),
            _ => l.to_string(),
        }
    });
    let out = tempfile::tempdir().expect("temp dir");
    let (o, d) = (out.path().to_str().expect("utf-8").to_string(), f.path().to_str().expect("utf-8").to_string());
    for draft in [false, true] {
        let (o, d) = (o.clone(), d.clone());
        let got = std::panic::catch_unwind(move || {
            let mut args = vec!["close", "--period", "2026-12", "--out", &o, "--data", &d];
            if draft {
                args.push("--draft");
            }
            crate::support::run(&args)
        });
        let (code, text) = got.expect("no panic");
        assert!((0..=3).contains(&code), "exit {code}: {text}");
        assert!(!text.contains("overflow"), "{text}");
    }
}

/// A final close refuses a missing month; a draft closes without the entity, and every
/// output says it is a draft: the heading, the folder, each file name, proof.json.
#[test]
fn a_draft_closes_despite_exceptions_and_says_so() {
    let f = Folder::demo();
    f.remove(UK_DEC);
    let out = tempfile::tempdir().expect("temp dir");
    let o = out.path().to_str().expect("utf-8");
    let (code, v) = run_json(f.path(), &["close", "--period", "2026-12", "--out", o]);
    assert_eq!(code, 1, "{v:#}");
    assert!(!out.path().join("2026-12").exists(), "a refused close writes nothing");
    let d = f.path().to_str().expect("utf-8");
    let (code, text) = crate::support::run(&["close", "--period", "2026-12", "--out", o, "--data", d, "--draft"]);
    assert_eq!(code, 1, "a draft with exceptions exits 1");
    assert!(text.starts_with("DRAFT, NOT A FINAL CLOSE"), "{text}");
    let dir = out.path().join("2026-12/group/ytd-draft");
    let names: Vec<String> = std::fs::read_dir(&dir)
        .expect("draft folder")
        .map(|e| e.expect("entry").file_name().to_string_lossy().to_string())
        .collect();
    assert!(names.len() >= 10, "{names:?}");
    assert!(names.iter().all(|n| n.starts_with("draft-")), "{names:?}");
    let proof: Value =
        serde_json::from_str(&std::fs::read_to_string(dir.join("draft-proof.json")).expect("proof")).expect("json");
    assert_eq!(proof["status"], "draft");
    assert_eq!(proof["tied"], false);
    let rules: Vec<&str> =
        proof["exceptions"].as_array().expect("exceptions").iter().filter_map(|x| x["rule"].as_str()).collect();
    assert!(rules.contains(&"DeliveryMissing") && rules.contains(&"DeliverySetAside"), "{rules:?}");
    // The draft leaves ALD-UK out: its revenue is not in the group's.
    let demo_out = tempfile::tempdir().expect("temp dir");
    let (_, full) = run_json(
        &crate::support::repo(),
        &["close", "--period", "2026-12", "--out", demo_out.path().to_str().expect("utf-8")],
    );
    let (_, draft) = run_json(f.path(), &["close", "--period", "2026-12", "--out", o, "--draft"]);
    assert_eq!(full["proof"]["status"], "final");
    assert_eq!(draft["proof"]["status"], "draft");
    assert_ne!(figures(&full).get("4000"), figures(&draft).get("4000"));
}

/// Each close has its own folder: a month view and a sub-group close leave the group's
/// year-to-date files as they were.
#[test]
fn views_and_scopes_write_their_own_folders() {
    let out = tempfile::tempdir().expect("temp dir");
    let o = out.path().to_str().expect("utf-8");
    let repo = crate::support::repo();
    let (code, _) = run_json(&repo, &["close", "--period", "2026-12", "--out", o]);
    assert_eq!(code, 0);
    let ytd = out.path().join("2026-12/group/ytd/group_trial_balance.csv");
    let before = std::fs::read(&ytd).expect("ytd written");
    for args in [vec!["--view", "month"], vec!["--entity", "ALD-US"]] {
        let mut a = vec!["close", "--period", "2026-12", "--out", o];
        a.extend(args);
        let (code, v) = run_json(&repo, &a);
        assert_eq!(code, 0, "{v:#}");
    }
    assert_eq!(std::fs::read(&ytd).expect("ytd still there"), before);
    for sub in ["group/month", "ALD-US/ytd"] {
        let proof: Value = serde_json::from_str(
            &std::fs::read_to_string(out.path().join("2026-12").join(sub).join("proof.json")).expect("proof"),
        )
        .expect("json");
        assert_eq!(proof["status"], "final");
        assert_eq!(
            format!("{}/{}", proof["scope"].as_str().unwrap_or_default(), proof["view"].as_str().unwrap_or_default()),
            sub
        );
    }
}

/// Without --period the period defaults to the latest delivered; when nothing can be
/// read for want of an entity list, the entity list's own finding is what the close
/// says, not a request for --period.
#[test]
fn the_real_finding_is_not_replaced_by_a_request_for_the_period() {
    let header_only: fn(&Folder) = |f| {
        let text = f.read("entities/entities.csv");
        f.write("entities/entities.csv", &format!("{}\n", text.lines().next().unwrap_or_default()));
    };
    let latin1: fn(&Folder) = |f| {
        let text = f.read("entities/entities.csv");
        let bytes: Vec<u8> = text.chars().map(|c| if c == 'ä' { 0xE4 } else { c as u8 }).collect();
        write_bytes(f, "entities/entities.csv", &bytes);
    };
    for (mutate, rule, code) in [(header_only, "TableEmpty", 1), (latin1, "FileUnreadable", 3)] {
        let f = Folder::demo();
        mutate(&f);
        let out = tempfile::tempdir().expect("temp dir");
        let d = f.path().to_str().expect("utf-8");
        let (got, text) = crate::support::run(&["close", "--data", d, "--out", out.path().to_str().expect("utf-8")]);
        assert_eq!(got, code, "{text}");
        assert!(text.contains(rule) && !text.contains("--period"), "{text}");
    }
}

/// The group trial balance of a close, by account.
fn figures(v: &Value) -> BTreeMap<String, String> {
    v["group_trial_balance"]
        .as_array()
        .map(|a| {
            a.iter()
                .map(|r| {
                    (
                        r["account"].as_str().unwrap_or_default().to_string(),
                        r["amount"].as_str().unwrap_or_default().to_string(),
                    )
                })
                .collect()
        })
        .unwrap_or_default()
}

/// Runs `close` in-process, catching a panic: `Err` with its message if one happened.
fn close_caught(f: &Folder) -> Result<(i32, Value), String> {
    let out = tempfile::tempdir().expect("temp dir");
    let o = out.path().to_str().expect("utf-8").to_string();
    let path = f.path().to_path_buf();
    std::panic::catch_unwind(move || {
        let d = path.to_str().expect("utf-8");
        let (code, text) =
            crate::support::run(&["close", "--period", "2026-12", "--out", &o, "--data", d, "--format", "json"]);
        (code, serde_json::from_str(&text).unwrap_or(Value::Null))
    })
    .map_err(|e| {
        e.downcast_ref::<String>()
            .cloned()
            .or_else(|| e.downcast_ref::<&str>().map(|s| s.to_string()))
            .unwrap_or_default()
    })
}

/// The demo's trial balance files, for the mutations to pick from.
fn ledger_files() -> Vec<String> {
    let mut out = Vec::new();
    let root = crate::support::repo().join("entities");
    for e in std::fs::read_dir(&root).expect("entities").flatten() {
        if !e.path().is_dir() {
            continue;
        }
        for x in std::fs::read_dir(e.path()).expect("entity").flatten() {
            let name = x.file_name().to_string_lossy().to_string();
            if name.starts_with("tb-") {
                out.push(format!("entities/{}/{name}", e.file_name().to_string_lossy()));
            }
        }
    }
    out.sort();
    out
}

/// How a demo file is broken in the random test.
#[derive(Debug, Clone)]
enum Mutation {
    /// One character of one amount cell replaced: the trial balance no longer sums to
    /// zero or the amount no longer parses, so figures may not change silently.
    AmountChar { file: usize, row: usize, at: usize, with: u8 },
    /// A row with a non-zero amount deleted: unbalanced.
    DeleteRow { file: usize, row: usize },
    /// A row repeated: a duplicated row.
    RepeatRow { file: usize, row: usize },
    /// Any byte of any input file replaced by any byte: only "no panic" is asserted.
    AnyByte { file: usize, at: usize, with: u8 },
    /// An amount moved between two rows of one trial balance: a legitimate delivery.
    Legitimate { file: usize, from: usize, to: usize },
}

fn mutation() -> impl Strategy<Value = Mutation> {
    let bytes = prop::sample::select(vec![b'0', b'7', b'-', b'.', b'x', b',', b' ', b'"', b'\n', 0xE9, b'#']);
    prop_oneof![
        (any::<usize>(), any::<usize>(), any::<usize>(), bytes.clone())
            .prop_map(|(file, row, at, with)| Mutation::AmountChar { file, row, at, with }),
        (any::<usize>(), any::<usize>()).prop_map(|(file, row)| Mutation::DeleteRow { file, row }),
        (any::<usize>(), any::<usize>()).prop_map(|(file, row)| Mutation::RepeatRow { file, row }),
        (any::<usize>(), any::<usize>(), any::<u8>()).prop_map(|(file, at, with)| Mutation::AnyByte { file, at, with }),
        (any::<usize>(), any::<usize>(), any::<usize>()).prop_map(|(file, from, to)| Mutation::Legitimate {
            file,
            from,
            to
        }),
    ]
}

/// Applies `m`; returns whether figures may legitimately change.
fn apply(f: &Folder, files: &[String], m: &Mutation) -> bool {
    let pick = |i: usize| files[i % files.len()].clone();
    let rows = |rel: &str| -> Vec<String> { f.read(rel).lines().map(String::from).collect() };
    let save = |rel: &str, rows: &[String]| f.write(rel, &(rows.join("\n") + "\n"));
    match m {
        Mutation::AmountChar { file, row, at, with } => {
            let rel = pick(*file);
            let mut r = rows(&rel);
            let i = 1 + row % (r.len() - 1);
            let mut cells: Vec<String> = r[i].split(',').map(String::from).collect();
            let amount = cells[2].clone().into_bytes();
            let k = at % amount.len();
            if amount[k] == *with {
                return true; // no change at all
            }
            let mut bytes = amount;
            bytes[k] = *with;
            cells[2] = String::from_utf8_lossy(&bytes).to_string();
            r[i] = cells.join(",");
            save(&rel, &r);
            false
        }
        Mutation::DeleteRow { file, row } => {
            let rel = pick(*file);
            let mut r = rows(&rel);
            let i = 1 + row % (r.len() - 1);
            let zero =
                r[i].split(',').nth(2).is_some_and(|a| a.trim_start_matches('-').chars().all(|c| c == '0' || c == '.'));
            r.remove(i);
            save(&rel, &r);
            zero
        }
        Mutation::RepeatRow { file, row } => {
            let rel = pick(*file);
            let mut r = rows(&rel);
            let i = 1 + row % (r.len() - 1);
            let copy = r[i].clone();
            r.push(copy);
            save(&rel, &r);
            false
        }
        Mutation::AnyByte { file, at, with } => {
            let rel = pick(*file);
            let mut bytes = std::fs::read(f.path().join(&rel)).expect("read");
            let k = at % bytes.len();
            bytes[k] = *with;
            write_bytes(f, &rel, &bytes);
            true
        }
        Mutation::Legitimate { file, from, to } => {
            let rel = pick(*file);
            let mut r = rows(&rel);
            let n = r.len() - 1;
            let (a, b) = (1 + from % n, 1 + to % n);
            if a == b {
                return true;
            }
            for (i, delta) in [(a, "1"), (b, "-1")] {
                let mut cells: Vec<String> = r[i].split(',').map(String::from).collect();
                let v: rust_decimal::Decimal = cells[2].parse().expect("demo amount");
                cells[2] = (v + delta.parse::<rust_decimal::Decimal>().expect("delta")).to_string();
                r[i] = cells.join(",");
            }
            save(&rel, &r);
            true
        }
    }
}

proptest! {
    #![proptest_config(ProptestConfig { cases: 24, failure_persistence: None, ..ProptestConfig::default() })]

    #[test]
    fn mutated_demo_never_panics_nor_closes_silently(m in mutation()) {
        static BASE: std::sync::OnceLock<(i32, BTreeMap<String, String>)> = std::sync::OnceLock::new();
        let (code, base) = BASE.get_or_init(|| {
            let (code, v) = close_caught(&Folder::demo()).expect("the demo closes");
            (code, figures(&v))
        });
        prop_assert_eq!(*code, 0);
        let files = ledger_files();
        let f = Folder::demo();
        let legitimate = apply(&f, &files, &m);
        let got = close_caught(&f);
        prop_assert!(got.is_ok(), "{:?} panicked: {:?}", m, got.err());
        let (code, v) = got.unwrap_or_default();
        prop_assert!((0..=3).contains(&code), "{:?}: exit {}", m, code);
        if code == 0 && !legitimate {
            prop_assert_eq!(&figures(&v), base, "{:?} closed with exit 0 and changed figures", m);
        }
    }
}

//! A small writer of Office Open XML workbooks (`.xlsx`, ECMA-376 / ISO/IEC 29500): the
//! sheets, cell styles (bold, number formats with thousands separators and negatives in
//! parentheses), column widths and frozen header rows a close workbook needs, packed in
//! a stored (uncompressed) zip archive.
//!
//! Why our own rather than a crate: the maintained writers pull in a zip crate whose
//! features differ from those polars is built with, which would rebuild polars for
//! every developer and CI run; what the close needs is a few hundred lines. Amounts are
//! written from their exact decimal text: the cell holds the number the decimal names
//! (the format stores IEEE doubles, which hold every amount below 10^13 to the cent).

use rust_decimal::Decimal;

/// One cell of a sheet.
#[derive(Debug, Clone, PartialEq)]
pub enum Cell {
    Empty,
    Text(String),
    /// An amount, shown at the workbook's decimals with separators and parentheses.
    Amount(Decimal),
    /// Any other number (a rate, a share, a count), shown as it is.
    Number(Decimal),
}

impl From<&str> for Cell {
    fn from(s: &str) -> Self {
        Cell::Text(s.to_string())
    }
}

impl From<String> for Cell {
    fn from(s: String) -> Self {
        Cell::Text(s)
    }
}

/// One row: its cells and whether it is printed bold (a header or a subtotal).
#[derive(Debug, Clone, PartialEq)]
pub struct Row {
    pub cells: Vec<Cell>,
    pub bold: bool,
}

/// A sheet: rows from the top; the first `frozen` rows stay in view when scrolling.
#[derive(Debug, Clone, PartialEq)]
pub struct Sheet {
    pub name: String,
    pub rows: Vec<Row>,
    pub frozen: usize,
}

impl Sheet {
    pub fn new(name: &str) -> Self {
        Self { name: sheet_name(name), rows: Vec::new(), frozen: 0 }
    }

    pub fn row(&mut self, cells: Vec<Cell>) {
        self.rows.push(Row { cells, bold: false });
    }

    pub fn bold_row(&mut self, cells: Vec<Cell>) {
        self.rows.push(Row { cells, bold: true });
    }

    /// A bold header row that stays in view.
    pub fn header(&mut self, names: &[&str]) {
        self.bold_row(names.iter().map(|n| Cell::from(*n)).collect());
        self.frozen = self.rows.len();
    }
}

/// A sheet name as the format allows it: at most 31 characters, none of `[]:*?/\`.
fn sheet_name(name: &str) -> String {
    name.chars().filter(|c| !"[]:*?/\\".contains(*c)).take(31).collect()
}

/// The style indices of `styles.xml` below.
const TEXT: usize = 0;
const TEXT_BOLD: usize = 1;
const AMOUNT: usize = 2;
const AMOUNT_BOLD: usize = 3;
const NUMBER: usize = 4;
const NUMBER_BOLD: usize = 5;

/// The workbook's bytes: `sheets` in order, amounts at `decimals` places.
pub fn workbook(sheets: &[Sheet], decimals: u32) -> Vec<u8> {
    let mut files: Vec<(String, Vec<u8>)> = Vec::new();
    let mut types = String::from(
        r#"<?xml version="1.0" encoding="UTF-8" standalone="yes"?>
<Types xmlns="http://schemas.openxmlformats.org/package/2006/content-types"><Default Extension="rels" ContentType="application/vnd.openxmlformats-package.relationships+xml"/><Default Extension="xml" ContentType="application/xml"/><Override PartName="/xl/workbook.xml" ContentType="application/vnd.openxmlformats-officedocument.spreadsheetml.sheet.main+xml"/><Override PartName="/xl/styles.xml" ContentType="application/vnd.openxmlformats-officedocument.spreadsheetml.styles+xml"/>"#,
    );
    let mut book = String::from(
        r#"<?xml version="1.0" encoding="UTF-8" standalone="yes"?>
<workbook xmlns="http://schemas.openxmlformats.org/spreadsheetml/2006/main" xmlns:r="http://schemas.openxmlformats.org/officeDocument/2006/relationships"><sheets>"#,
    );
    let mut rels = String::from(
        r#"<?xml version="1.0" encoding="UTF-8" standalone="yes"?>
<Relationships xmlns="http://schemas.openxmlformats.org/package/2006/relationships">"#,
    );
    for (i, sheet) in sheets.iter().enumerate() {
        let n = i + 1;
        types.push_str(&format!(
            r#"<Override PartName="/xl/worksheets/sheet{n}.xml" ContentType="application/vnd.openxmlformats-officedocument.spreadsheetml.worksheet+xml"/>"#
        ));
        book.push_str(&format!(r#"<sheet name="{}" sheetId="{n}" r:id="rId{n}"/>"#, escape(&sheet.name)));
        rels.push_str(&format!(
            r#"<Relationship Id="rId{n}" Type="http://schemas.openxmlformats.org/officeDocument/2006/relationships/worksheet" Target="worksheets/sheet{n}.xml"/>"#
        ));
        files.push((format!("xl/worksheets/sheet{n}.xml"), sheet_xml(sheet, decimals).into_bytes()));
    }
    let styles_id = sheets.len() + 1;
    rels.push_str(&format!(
        r#"<Relationship Id="rId{styles_id}" Type="http://schemas.openxmlformats.org/officeDocument/2006/relationships/styles" Target="styles.xml"/></Relationships>"#
    ));
    types.push_str("</Types>");
    book.push_str("</sheets></workbook>");
    let root = r#"<?xml version="1.0" encoding="UTF-8" standalone="yes"?>
<Relationships xmlns="http://schemas.openxmlformats.org/package/2006/relationships"><Relationship Id="rId1" Type="http://schemas.openxmlformats.org/officeDocument/2006/relationships/officeDocument" Target="xl/workbook.xml"/></Relationships>"#;
    let mut all = vec![
        ("[Content_Types].xml".to_string(), types.into_bytes()),
        ("_rels/.rels".to_string(), root.as_bytes().to_vec()),
        ("xl/workbook.xml".to_string(), book.into_bytes()),
        ("xl/_rels/workbook.xml.rels".to_string(), rels.into_bytes()),
        ("xl/styles.xml".to_string(), styles(decimals).into_bytes()),
    ];
    all.extend(files);
    zip_stored(&all)
}

/// Number formats: amounts with thousands separators, negatives in parentheses (the
/// positive section padded by the width of a parenthesis so that digits align).
fn styles(decimals: u32) -> String {
    let fraction = if decimals == 0 { String::new() } else { format!(".{}", "0".repeat(decimals as usize)) };
    let amount = format!("#,##0{fraction}_);(#,##0{fraction})");
    format!(
        r#"<?xml version="1.0" encoding="UTF-8" standalone="yes"?>
<styleSheet xmlns="http://schemas.openxmlformats.org/spreadsheetml/2006/main"><numFmts count="1"><numFmt numFmtId="164" formatCode="{}"/></numFmts><fonts count="2"><font><sz val="11"/><name val="Calibri"/></font><font><b/><sz val="11"/><name val="Calibri"/></font></fonts><fills count="2"><fill><patternFill patternType="none"/></fill><fill><patternFill patternType="gray125"/></fill></fills><borders count="1"><border><left/><right/><top/><bottom/><diagonal/></border></borders><cellStyleXfs count="1"><xf numFmtId="0" fontId="0" fillId="0" borderId="0"/></cellStyleXfs><cellXfs count="6"><xf numFmtId="0" fontId="0" fillId="0" borderId="0" xfId="0"/><xf numFmtId="0" fontId="1" fillId="0" borderId="0" xfId="0" applyFont="1"/><xf numFmtId="164" fontId="0" fillId="0" borderId="0" xfId="0" applyNumberFormat="1"/><xf numFmtId="164" fontId="1" fillId="0" borderId="0" xfId="0" applyNumberFormat="1" applyFont="1"/><xf numFmtId="0" fontId="0" fillId="0" borderId="0" xfId="0"/><xf numFmtId="0" fontId="1" fillId="0" borderId="0" xfId="0" applyFont="1"/></cellXfs><cellStyles count="1"><cellStyle name="Normal" xfId="0" builtinId="0"/></cellStyles></styleSheet>"#,
        escape(&amount)
    )
}

/// The column letters of a 0-based column index (0 -> A, 26 -> AA).
pub fn column_letters(mut i: usize) -> String {
    let mut s = Vec::new();
    loop {
        s.push(b'A' + (i % 26) as u8);
        if i < 26 {
            break;
        }
        i = i / 26 - 1;
    }
    s.reverse();
    String::from_utf8(s).unwrap_or_default()
}

/// How wide a cell shows, in characters, for fitting the column.
fn shown_width(c: &Cell, decimals: u32) -> usize {
    match c {
        Cell::Empty => 0,
        Cell::Text(t) => t.chars().count(),
        Cell::Amount(d) => crate::money::format_amount(*d, decimals).chars().count() + 1,
        Cell::Number(d) => d.normalize().to_string().len(),
    }
}

fn sheet_xml(sheet: &Sheet, decimals: u32) -> String {
    let columns = sheet.rows.iter().map(|r| r.cells.len()).max().unwrap_or(0);
    let mut widths = vec![8usize; columns];
    for r in &sheet.rows {
        for (i, c) in r.cells.iter().enumerate() {
            widths[i] = widths[i].max(shown_width(c, decimals) + 2).min(80);
        }
    }
    let mut x = String::from(
        r#"<?xml version="1.0" encoding="UTF-8" standalone="yes"?>
<worksheet xmlns="http://schemas.openxmlformats.org/spreadsheetml/2006/main">"#,
    );
    x.push_str("<sheetViews><sheetView workbookViewId=\"0\">");
    if sheet.frozen > 0 {
        x.push_str(&format!(
            r#"<pane ySplit="{}" topLeftCell="A{}" activePane="bottomLeft" state="frozen"/>"#,
            sheet.frozen,
            sheet.frozen + 1
        ));
    }
    x.push_str("</sheetView></sheetViews>");
    if columns > 0 {
        x.push_str("<cols>");
        for (i, w) in widths.iter().enumerate() {
            x.push_str(&format!(r#"<col min="{n}" max="{n}" width="{w}" customWidth="1"/>"#, n = i + 1));
        }
        x.push_str("</cols>");
    }
    x.push_str("<sheetData>");
    for (r, row) in sheet.rows.iter().enumerate() {
        let n = r + 1;
        x.push_str(&format!(r#"<row r="{n}">"#));
        for (c, cell) in row.cells.iter().enumerate() {
            let at = format!("{}{n}", column_letters(c));
            match cell {
                Cell::Empty => {}
                Cell::Text(t) => {
                    let s = if row.bold { TEXT_BOLD } else { TEXT };
                    x.push_str(&format!(
                        r#"<c r="{at}" s="{s}" t="inlineStr"><is><t xml:space="preserve">{}</t></is></c>"#,
                        escape(t)
                    ));
                }
                Cell::Amount(d) => {
                    let s = if row.bold { AMOUNT_BOLD } else { AMOUNT };
                    x.push_str(&format!(r#"<c r="{at}" s="{s}"><v>{}</v></c>"#, crate::money::plain(*d)));
                }
                Cell::Number(d) => {
                    let s = if row.bold { NUMBER_BOLD } else { NUMBER };
                    x.push_str(&format!(r#"<c r="{at}" s="{s}"><v>{}</v></c>"#, crate::money::plain(*d)));
                }
            }
        }
        x.push_str("</row>");
    }
    x.push_str("</sheetData>");
    x.push_str(r#"<pageMargins left="0.7" right="0.7" top="0.75" bottom="0.75" header="0.3" footer="0.3"/>"#);
    x.push_str("</worksheet>");
    x
}

/// Text escaped for XML; characters XML 1.0 cannot hold are dropped.
fn escape(s: &str) -> String {
    let mut out = String::with_capacity(s.len());
    for ch in s.chars() {
        match ch {
            '&' => out.push_str("&amp;"),
            '<' => out.push_str("&lt;"),
            '>' => out.push_str("&gt;"),
            '"' => out.push_str("&quot;"),
            '\t' | '\n' | '\r' => out.push(ch),
            c if (c as u32) < 0x20 => {}
            c => out.push(c),
        }
    }
    out
}

/// CRC-32 (ISO 3309, the zip format's checksum), bit by bit from its table.
fn crc32(bytes: &[u8]) -> u32 {
    let mut table = [0u32; 256];
    for (i, slot) in table.iter_mut().enumerate() {
        let mut c = i as u32;
        for _ in 0..8 {
            c = if c & 1 != 0 { 0xEDB8_8320 ^ (c >> 1) } else { c >> 1 };
        }
        *slot = c;
    }
    let mut crc = 0xFFFF_FFFFu32;
    for b in bytes {
        crc = table[((crc ^ u32::from(*b)) & 0xFF) as usize] ^ (crc >> 8);
    }
    crc ^ 0xFFFF_FFFF
}

/// A zip archive of stored (uncompressed) entries, with a fixed date so that the same
/// close gives the same bytes (APPNOTE 4.3: local headers, central directory, end).
fn zip_stored(files: &[(String, Vec<u8>)]) -> Vec<u8> {
    fn u16le(v: &mut Vec<u8>, x: u16) {
        v.extend_from_slice(&x.to_le_bytes());
    }
    fn u32le(v: &mut Vec<u8>, x: u32) {
        v.extend_from_slice(&x.to_le_bytes());
    }
    // 1980-01-01 00:00, the format's earliest date.
    let (time, date) = (0u16, (1 << 5) | 1);
    let mut out = Vec::new();
    let mut central = Vec::new();
    for (name, data) in files {
        let offset = out.len() as u32;
        let crc = crc32(data);
        let size = data.len() as u32;
        u32le(&mut out, 0x0403_4b50);
        u16le(&mut out, 20);
        u16le(&mut out, 0x0800);
        u16le(&mut out, 0);
        u16le(&mut out, time);
        u16le(&mut out, date);
        u32le(&mut out, crc);
        u32le(&mut out, size);
        u32le(&mut out, size);
        u16le(&mut out, name.len() as u16);
        u16le(&mut out, 0);
        out.extend_from_slice(name.as_bytes());
        out.extend_from_slice(data);
        u32le(&mut central, 0x0201_4b50);
        u16le(&mut central, 20);
        u16le(&mut central, 20);
        u16le(&mut central, 0x0800);
        u16le(&mut central, 0);
        u16le(&mut central, time);
        u16le(&mut central, date);
        u32le(&mut central, crc);
        u32le(&mut central, size);
        u32le(&mut central, size);
        u16le(&mut central, name.len() as u16);
        u16le(&mut central, 0);
        u16le(&mut central, 0);
        u16le(&mut central, 0);
        u16le(&mut central, 0);
        u32le(&mut central, 0);
        u32le(&mut central, offset);
        central.extend_from_slice(name.as_bytes());
    }
    let cd_offset = out.len() as u32;
    let cd_size = central.len() as u32;
    out.extend_from_slice(&central);
    u32le(&mut out, 0x0605_4b50);
    u16le(&mut out, 0);
    u16le(&mut out, 0);
    u16le(&mut out, files.len() as u16);
    u16le(&mut out, files.len() as u16);
    u32le(&mut out, cd_size);
    u32le(&mut out, cd_offset);
    u16le(&mut out, 0);
    out
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn crc32_of_the_standard_check_string() {
        // The check value of CRC-32 for "123456789" (the catalogue of parametrised CRC
        // algorithms, CRC-32/ISO-HDLC): 0xCBF43926.
        assert_eq!(crc32(b"123456789"), 0xCBF4_3926);
    }

    #[test]
    fn column_letters_roll_over_like_a_spreadsheet() {
        assert_eq!(column_letters(0), "A");
        assert_eq!(column_letters(25), "Z");
        assert_eq!(column_letters(26), "AA");
        assert_eq!(column_letters(701), "ZZ");
        assert_eq!(column_letters(702), "AAA");
    }

    #[test]
    fn amounts_are_numbers_and_text_is_escaped() {
        let mut s = Sheet::new("a/b [test]");
        s.header(&["label", "amount"]);
        s.row(vec![Cell::from("R&D <costs>"), Cell::Amount(Decimal::new(-123456, 2))]);
        assert_eq!(s.name, "ab test");
        let x = sheet_xml(&s, 2);
        assert!(x.contains(r#"<c r="B2" s="2"><v>-1234.56</v></c>"#), "{x}");
        assert!(x.contains("R&amp;D &lt;costs&gt;"), "{x}");
        assert!(x.contains(r#"state="frozen""#));
        assert!(styles(2).contains("#,##0.00_);(#,##0.00)"));
        assert!(styles(0).contains("#,##0_);(#,##0)"));
    }

    #[test]
    fn the_archive_ends_with_a_directory_of_every_entry() {
        let z = zip_stored(&[("a.txt".into(), b"hello".to_vec()), ("b/c.xml".into(), b"<x/>".to_vec())]);
        assert_eq!(&z[..4], &[0x50, 0x4b, 0x03, 0x04]);
        let end = &z[z.len() - 22..];
        assert_eq!(&end[..4], &[0x50, 0x4b, 0x05, 0x06]);
        assert_eq!(u16::from_le_bytes([end[10], end[11]]), 2);
    }
}

//! The close workbook's sheets as plain rows of cells, written as an Office Open XML
//! workbook (`.xlsx`) by the maintained `rust_xlsxwriter` crate: bold headers and
//! subtotals, amounts with thousands separators and negatives in parentheses, fitted
//! column widths and frozen header rows.
//!
//! Amounts cross into the file format here and only here. A workbook number cell is an
//! IEEE double (ECMA-376 Part 1, 18.3.1.96: `v` of a numeric cell is `xsd:double`), so an
//! amount is converted at this boundary and written as a number only when the double's
//! shortest decimal text names exactly the same decimal as the amount (every amount
//! below about 10^13 to the cent does); any other amount is written as text, exact.
//! Nothing before this point holds money in binary floating point.

use rust_decimal::Decimal;
use rust_xlsxwriter::{DocProperties, ExcelDateTime, Format, Workbook, Worksheet, XlsxError};

/// One cell of a sheet.
#[derive(Debug, Clone, PartialEq)]
pub enum Cell {
    Empty,
    Text(String),
    /// An amount, shown at the workbook's decimals with separators and parentheses.
    Amount(Decimal),
    /// Any other number (a rate, a share, a count), shown as it is.
    Number(Decimal),
    /// A percentage given in percent (`44.6` for 44.6%): stored as the fraction
    /// (0.446) and shown with one decimal and the percent sign.
    Percent(Decimal),
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

/// A fixed creation time, so that the same close writes the same bytes (the crate
/// stamps the current time otherwise).
fn reproducible_properties() -> Result<DocProperties, XlsxError> {
    Ok(DocProperties::new().set_creation_datetime(&ExcelDateTime::from_ymd(2000, 1, 1)?))
}

/// The workbook's bytes: `sheets` in order, amounts at `decimals` places.
pub fn workbook(sheets: &[Sheet], decimals: u32) -> Result<Vec<u8>, crate::Error> {
    build(sheets, decimals).map_err(|e| crate::Error::Workbook(e.to_string()))
}

fn build(sheets: &[Sheet], decimals: u32) -> Result<Vec<u8>, XlsxError> {
    let fraction = if decimals == 0 { String::new() } else { format!(".{}", "0".repeat(decimals as usize)) };
    let amount = Format::new().set_num_format(format!("#,##0{fraction}_);(#,##0{fraction})"));
    let formats = Formats {
        text: Format::new(),
        text_bold: Format::new().set_bold(),
        amount_bold: amount.clone().set_bold(),
        amount,
        number: Format::new(),
        number_bold: Format::new().set_bold(),
        percent: Format::new().set_num_format("0.0%"),
    };
    let mut book = Workbook::new();
    book.set_properties(&reproducible_properties()?);
    for sheet in sheets {
        let ws = book.add_worksheet();
        ws.set_name(&sheet.name)?;
        write_sheet(ws, sheet, decimals, &formats)?;
    }
    book.save_to_buffer()
}

/// The cell formats of a sheet: plain and bold for text, amounts and other numbers.
struct Formats {
    text: Format,
    text_bold: Format,
    amount: Format,
    amount_bold: Format,
    number: Format,
    number_bold: Format,
    percent: Format,
}

fn write_sheet(ws: &mut Worksheet, sheet: &Sheet, decimals: u32, f: &Formats) -> Result<(), XlsxError> {
    let columns = sheet.rows.iter().map(|r| r.cells.len()).max().unwrap_or(0);
    let mut widths = vec![8usize; columns];
    for r in &sheet.rows {
        for (i, c) in r.cells.iter().enumerate() {
            widths[i] = widths[i].max(shown_width(c, decimals) + 2).min(80);
        }
    }
    for (i, w) in widths.iter().enumerate() {
        ws.set_column_width(col_num(i)?, *w as f64)?;
    }
    if sheet.frozen > 0 {
        ws.set_freeze_panes(row_num(sheet.frozen)?, 0)?;
    }
    for (r, row) in sheet.rows.iter().enumerate() {
        let rn = row_num(r)?;
        for (c, cell) in row.cells.iter().enumerate() {
            let cn = col_num(c)?;
            let (text_format, amount_format, number_format) =
                if row.bold { (&f.text_bold, &f.amount_bold, &f.number_bold) } else { (&f.text, &f.amount, &f.number) };
            match cell {
                Cell::Empty => {}
                Cell::Text(t) => {
                    ws.write_string_with_format(rn, cn, t, text_format)?;
                }
                Cell::Percent(p) => {
                    let fraction = (*p / Decimal::ONE_HUNDRED).round_dp(6).normalize();
                    match exact_double(fraction) {
                        Some(x) => ws.write_number_with_format(rn, cn, x, &f.percent)?,
                        None => ws.write_string_with_format(rn, cn, format!("{p:.1}%"), text_format)?,
                    };
                }
                Cell::Amount(d) | Cell::Number(d) => {
                    let format = if matches!(cell, Cell::Amount(_)) { amount_format } else { number_format };
                    match exact_double(*d) {
                        Some(x) => ws.write_number_with_format(rn, cn, x, format)?,
                        None => ws.write_string_with_format(rn, cn, crate::money::plain(*d), text_format)?,
                    };
                }
            }
        }
    }
    Ok(())
}

/// The double a workbook cell holds for `d`, when its shortest decimal text is exactly
/// `d` (so that any reader gets the amount back to the last digit); `None` otherwise.
fn exact_double(d: Decimal) -> Option<f64> {
    let x: f64 = crate::money::plain(d).parse().ok()?;
    let back: Decimal = format!("{x}").parse().ok()?;
    (back == d).then_some(x)
}

fn row_num(i: usize) -> Result<u32, XlsxError> {
    u32::try_from(i).map_err(|_| XlsxError::RowColumnLimitError)
}

fn col_num(i: usize) -> Result<u16, XlsxError> {
    u16::try_from(i).map_err(|_| XlsxError::RowColumnLimitError)
}

/// How wide a cell shows, in characters, for fitting the column.
fn shown_width(c: &Cell, decimals: u32) -> usize {
    match c {
        Cell::Empty => 0,
        Cell::Text(t) => t.chars().count(),
        Cell::Amount(d) => crate::money::format_amount(*d, decimals).chars().count() + 1,
        Cell::Number(d) => d.normalize().to_string().len(),
        Cell::Percent(p) => format!("{p:.1}%").len(),
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn sheet_names_drop_what_the_format_forbids() {
        let s = Sheet::new("a/b [test]: a name longer than thirty-one characters");
        assert_eq!(s.name, "ab test a name longer than thir");
        assert!(s.name.chars().count() <= 31);
    }

    #[test]
    fn amounts_cross_as_doubles_only_when_exact() {
        assert_eq!(exact_double(Decimal::new(-123456, 2)), Some(-1234.56));
        assert_eq!(exact_double(Decimal::new(1, 2)), Some(0.01));
        // 12345678901234567.89 has more significant digits than a double holds.
        assert_eq!(exact_double("12345678901234567.89".parse().expect("decimal")), None);
    }

    #[test]
    fn the_same_sheets_give_the_same_bytes() {
        let mut s = Sheet::new("Balance sheet");
        s.header(&["label", "amount"]);
        s.row(vec![Cell::from("R&D <costs>"), Cell::Amount(Decimal::new(-123456, 2))]);
        s.bold_row(vec![Cell::from("Total"), Cell::Amount(Decimal::new(-123456, 2))]);
        let a = workbook(std::slice::from_ref(&s), 2).expect("workbook");
        let b = workbook(&[s], 2).expect("workbook");
        assert_eq!(a, b);
        // A zip archive (local file header signature, APPNOTE 4.3.7).
        assert_eq!(&a[..4], &[0x50, 0x4b, 0x03, 0x04]);
    }
}

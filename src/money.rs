//! Exact money: the one place that knows how decimals cross between rust_decimal (at the
//! edges) and polars Decimal columns (inside frames), how amounts are bounded and how a
//! translated amount is rounded. No `f64` ever holds money; see `docs/architecture.md`.

use polars::prelude::*;
use rust_decimal::{Decimal, RoundingStrategy};

use crate::model::RoundingMode;

/// Scale of every local-currency amount column. The largest ISO 4217 minor unit in use
/// is 3 (BHD, KWD, OMR, ...); amounts with fewer decimals are stored exactly at scale 3.
pub const AMOUNT_SCALE: usize = 3;

/// Local amounts must be below 10^15 in absolute value. With rates of at most 10
/// decimals and below 10^6, the exact product amount x rate then needs at most
/// 15 + 6 + 3 + 10 = 34 digits, and a sum of a million such products stays inside the 38
/// digits of polars' Decimal128 (polars 0.55.2 does not check sum overflow).
pub const AMOUNT_MAX_INTEGER_DIGITS: usize = 15;

/// Rates carry at most this many decimals.
pub const RATE_SCALE: usize = 10;

/// Scale at which an amount is divided by a rate quoted as units per presentation unit.
/// At 20 decimals no rounded quotient can be mistaken for a tie at the minor unit: a
/// true quotient that is not a tie is at least 10^-13 / 10^6 = 10^-19 away from one.
pub const QUOTIENT_SCALE: usize = 20;

/// Polars dtype of stored amounts.
pub fn amount_dtype() -> DataType {
    DataType::Decimal(38, AMOUNT_SCALE)
}

/// A polars literal holding `d` exactly at `scale` (which must not drop digits).
pub fn decimal_lit(d: Decimal, scale: usize) -> Expr {
    let mut d = d;
    d.rescale(scale as u32);
    lit(Scalar::new_decimal(d.mantissa(), 38, scale))
}

/// The value of a polars Decimal cell, exactly.
pub fn from_any(v: &AnyValue<'_>) -> Option<Decimal> {
    match v {
        AnyValue::Decimal(m, _, s) => Some(Decimal::from_i128_with_scale(*m, *s as u32)),
        _ => None,
    }
}

/// All values of a Decimal column, exactly (nulls as `None`).
pub fn column_decimals(c: &Column) -> PolarsResult<Vec<Option<Decimal>>> {
    let s = c.as_materialized_series();
    let DataType::Decimal(_, scale) = s.dtype() else {
        polars_bail!(SchemaMismatch: "column {} is {:?}, not Decimal", s.name(), s.dtype());
    };
    let scale = *scale as u32;
    let ca = s.decimal()?;
    Ok(ca.physical().iter().map(|m| m.map(|m| Decimal::from_i128_with_scale(m, scale))).collect())
}

/// All values of a text column (nulls as `None`).
pub fn column_strings(df: &DataFrame, c: &str) -> PolarsResult<Vec<Option<String>>> {
    Ok(df.column(c)?.str()?.iter().map(|s| s.map(String::from)).collect())
}

/// Rounds to `decimals` places with the group's rounding mode.
pub fn round(d: Decimal, decimals: u32, mode: RoundingMode) -> Decimal {
    let strategy = match mode {
        RoundingMode::HalfAwayFromZero => RoundingStrategy::MidpointAwayFromZero,
        RoundingMode::HalfEven => RoundingStrategy::MidpointNearestEven,
    };
    let mut r = d.round_dp_with_strategy(decimals, strategy);
    r.rescale(decimals);
    r
}

/// `d`, with a zero always unsigned: rust_decimal keeps the sign of a negated zero, which
/// would print as "-0.00".
pub fn unsigned_zero(d: Decimal) -> Decimal {
    if d.is_zero() { d.abs() } else { d }
}

/// An amount as machine text (JSON, CSV): plain digits, a zero never signed.
pub fn plain(d: Decimal) -> String {
    unsigned_zero(d).to_string()
}

/// `text` without its sign when it is a decimal zero written with one ("-0", "-0.00"),
/// else unchanged.
pub fn unsigned_zero_text(text: &str) -> &str {
    match text.strip_prefix('-') {
        Some(rest)
            if rest.starts_with('0')
                && rest.chars().all(|c| c == '0' || c == '.')
                && rest.matches('.').count() <= 1
                && !rest.ends_with('.') =>
        {
            rest
        }
        _ => text,
    }
}

/// The polars rounding mode matching a group rounding mode.
pub fn polars_round_mode(mode: RoundingMode) -> RoundMode {
    match mode {
        RoundingMode::HalfAwayFromZero => RoundMode::HalfAwayFromZero,
        RoundingMode::HalfEven => RoundMode::HalfToEven,
    }
}

/// `amount x rate`, exact, then rounded once to `minor` decimals (see
/// `../shared/polars-money.md`: widen one operand to the sum of the scales first).
pub fn translate_multiply(amount: Expr, rate: Expr, minor: usize, mode: RoundingMode) -> Expr {
    (amount.strict_cast(DataType::Decimal(38, AMOUNT_SCALE + RATE_SCALE))
        * rate.strict_cast(DataType::Decimal(38, RATE_SCALE)))
    .round(minor as u32, polars_round_mode(mode))
    .strict_cast(DataType::Decimal(38, minor))
}

/// `amount / rate` at `QUOTIENT_SCALE` decimals, then rounded once to `minor` decimals.
pub fn translate_divide(amount: Expr, rate: Expr, minor: usize, mode: RoundingMode) -> Expr {
    (amount.strict_cast(DataType::Decimal(38, QUOTIENT_SCALE))
        / rate.strict_cast(DataType::Decimal(38, QUOTIENT_SCALE)))
    .round(minor as u32, polars_round_mode(mode))
    .strict_cast(DataType::Decimal(38, minor))
}

/// Formats with thousands separators and negatives in parentheses, at `decimals`.
/// This is the only number formatting for people; machine outputs use plain strings.
pub fn format_amount(d: Decimal, decimals: u32) -> String {
    let mut r = d.round_dp_with_strategy(decimals, RoundingStrategy::MidpointAwayFromZero);
    r.rescale(decimals);
    let neg = r.is_sign_negative() && !r.is_zero();
    let text = r.abs().to_string();
    let (int, frac) = match text.split_once('.') {
        Some((i, f)) => (i.to_string(), Some(f.to_string())),
        None => (text, None),
    };
    let mut grouped = String::new();
    for (i, ch) in int.chars().enumerate() {
        if i > 0 && (int.len() - i).is_multiple_of(3) {
            grouped.push(',');
        }
        grouped.push(ch);
    }
    if let Some(f) = frac {
        grouped.push('.');
        grouped.push_str(&f);
    }
    if neg { format!("({grouped})") } else { grouped }
}

#[cfg(test)]
mod tests {
    use super::*;
    use std::str::FromStr;

    fn d(s: &str) -> Decimal {
        Decimal::from_str(s).unwrap()
    }

    #[test]
    fn formats_like_a_group_pack() {
        assert_eq!(format_amount(d("1234567.891"), 2), "1,234,567.89");
        assert_eq!(format_amount(d("-1204.5"), 2), "(1,204.50)");
        assert_eq!(format_amount(d("-0.001"), 2), "0.00");
        assert_eq!(format_amount(d("999"), 0), "999");
        assert_eq!(format_amount(d("-1000"), 0), "(1,000)");
    }

    /// No signed zero reaches machine text: a negated zero decimal, in JSON (through the
    /// one JSON writer) and as CSV text.
    #[test]
    fn a_negative_zero_is_written_unsigned() {
        let minus_zero = -d("0.00");
        assert!(minus_zero.is_sign_negative() && minus_zero.to_string() == "-0.00", "the trap exists");
        assert_eq!(plain(minus_zero), "0.00");
        assert_eq!(plain(-d("0")), "0");
        assert_eq!(plain(d("-0.50")), "-0.50");
        for (text, want) in [("-0", "0"), ("-0.00", "0.00"), ("-0.001", "-0.001"), ("-10", "-10"), ("-0.", "-0.")] {
            assert_eq!(unsigned_zero_text(text), want, "{text}");
        }
        let json = crate::report::to_json(
            &serde_json::json!({"a": minus_zero, "b": [d("-0.0"), d("-1.20")], "c": "-0 \"x\""}),
        );
        assert!(!json.contains("\"-0\"") && !json.contains("\"-0.0"), "{json}");
        assert!(json.contains("\"a\": \"0.00\"") && json.contains("\"-1.20\"") && json.contains("\"0.0\""), "{json}");
        assert!(json.contains("\"-0 \\\"x\\\"\""), "text that is not an amount is kept: {json}");
    }

    // Oracle: Python 3.11 `decimal` module, quantize with ROUND_HALF_UP (which rounds
    // half away from zero) and ROUND_HALF_EVEN, e.g.
    // `Decimal('2.665').quantize(Decimal('0.01'), ROUND_HALF_UP)` -> 2.67. The expected
    // values below were produced with that module (python3 -c, CPython 3.11.7).
    #[test]
    fn rounding_matches_python_decimal() {
        let cases = [
            ("2.665", 2, "2.67", "2.66"),
            ("-2.665", 2, "-2.67", "-2.66"),
            ("2.5", 0, "3", "2"),
            ("3.5", 0, "4", "4"),
            ("-2.5", 0, "-3", "-2"),
            ("1.0005", 3, "1.001", "1.000"),
            ("1.0015", 3, "1.002", "1.002"),
            ("0.004999999", 2, "0.00", "0.00"),
        ];
        for (x, dp, away, even) in cases {
            assert_eq!(round(d(x), dp, RoundingMode::HalfAwayFromZero).to_string(), away, "{x}");
            assert_eq!(round(d(x), dp, RoundingMode::HalfEven).to_string(), even, "{x}");
        }
    }
}

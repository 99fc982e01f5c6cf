//! Numbers as widthwise writes them, in every format and message: at most ten significant digits,
//! trailing zeros dropped, so that binary noise (`3.769999999999996`, `4.00000000000001`) never
//! reaches a reader, and the same text for one value in a table, a CSV cell, a JSON value, a SPICE
//! netlist and a deck.
//!
//! The rule, written once: round to [`SIGNIFICANT_DIGITS`] significant digits, then write the
//! shortest decimal that reads back as the rounded value; plain from 1e-5 up to 1e10, with an
//! exponent (`1.234e-11`, `2.5e10`) outside, `0` for zero of either sign. What is written reads back
//! within half a unit of the tenth digit: [`READ_BACK_RELATIVE`] of the value at most. A leaf module
//! (it imports nothing of the crate), so every stage's messages and every writer use it.

/// Most significant digits a written number has.
pub const SIGNIFICANT_DIGITS: usize = 10;

/// How far a written number may be from the value, relative: half a unit of the tenth significant
/// digit, at its largest when the first digit is 1 (1.0000000005 is written 1).
pub const READ_BACK_RELATIVE: f64 = 5e-10;

/// Smallest magnitude written without an exponent.
const PLAIN_FROM: f64 = 1e-5;
/// Magnitude from which a number is written with an exponent.
const PLAIN_BELOW: f64 = 1e10;

/// `value` rounded to [`SIGNIFICANT_DIGITS`] significant digits (non-finite values and zero as
/// they are).
pub fn rounded(value: f64) -> f64 {
    if !value.is_finite() || value == 0.0 {
        return value;
    }
    // `{:.9e}` rounds the exact binary value to ten significant digits; parsing gives the nearest
    // double to that decimal, which writes back as it (or shorter).
    format!("{value:.*e}", SIGNIFICANT_DIGITS - 1).parse().unwrap_or(value)
}

/// Significant digits of a decimal as Rust writes a double without an exponent (`-0.00125` has 3,
/// `1200` has 2: trailing zeros of a whole number are not counted, as it is written exactly).
fn significant_digits(plain: &str) -> usize {
    let digits: String = plain.chars().filter(char::is_ascii_digit).collect();
    digits.trim_start_matches('0').trim_end_matches('0').len()
}

/// The text of `value`: see the module's rule. Non-finite values are written `inf`, `-inf`, `NaN`
/// (JSON writes them `null`).
pub fn format(value: f64) -> String {
    if !value.is_finite() {
        return value.to_string();
    }
    if value == 0.0 {
        return "0".to_string();
    }
    let plain = (PLAIN_FROM..PLAIN_BELOW).contains(&value.abs());
    if plain {
        // Most values (2, 1.25, 0.5) are short already: their shortest text is the rounded one.
        let text = value.to_string();
        if significant_digits(&text) <= SIGNIFICANT_DIGITS {
            return text;
        }
    }
    let value = rounded(value);
    // Rounding may carry into the next power of ten (9999999999.7 -> 1e10).
    if (PLAIN_FROM..PLAIN_BELOW).contains(&value.abs()) { value.to_string() } else { format!("{value:e}") }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn ten_significant_digits_and_no_trailing_zeros() {
        // The noise the issue quotes, and the rule's edges (IEEE 754 doubles; common practice, no source).
        for (value, text) in [
            (3.769999999999996, "3.77"),
            (4.00000000000001, "4"),
            (25.999999999999996, "26"),
            (3.0240000000000005, "3.024"),
            (2.0, "2"),
            (-0.0, "0"),
            (0.0, "0"),
            (4.0 / 3.0, "1.333333333"),
            (-2.0 / 3.0, "-0.6666666667"),
            (1.0 + 2f64.sqrt(), "2.414213562"),
            (1e-5, "0.00001"),
            (1.234e-11, "1.234e-11"),
            (9999999999.7, "1e10"),
            (12345678901.0, "1.23456789e10"),
            (1200.0, "1200"),
            (123456789.12345, "123456789.1"),
            (-2.220446049250313e-14, "-2.220446049e-14"),
            (f64::INFINITY, "inf"),
        ] {
            assert_eq!(format(value), text, "{value:?}");
        }
    }

    #[test]
    fn written_numbers_read_back_within_half_a_unit_of_the_tenth_digit() {
        let mut state = 0x2545_f491_4f6c_dd1du64;
        for _ in 0..20_000 {
            state ^= state << 13;
            state ^= state >> 7;
            state ^= state << 17;
            // Magnitudes from 1e-20 to 1e20, both signs.
            let mantissa = (state >> 11) as f64 / (1u64 << 53) as f64 + 1.0;
            let exponent = (state % 41) as i32 - 20;
            let value = if state & 1 == 1 { -mantissa } else { mantissa } * 10f64.powi(exponent);
            let text = format(value);
            let back: f64 = text.parse().unwrap();
            assert!((back - value).abs() <= READ_BACK_RELATIVE * value.abs() * (1.0 + 1e-15), "{value:e} -> {text}");
            let mantissa_text = text.split('e').next().unwrap();
            assert!(significant_digits(mantissa_text) <= SIGNIFICANT_DIGITS, "{value:e} -> {text}");
            assert_eq!(format(back), text, "a written number writes back the same");
        }
    }
}

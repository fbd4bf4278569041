//! Numbers of CSV cells read fast and exactly.
//!
//! Route and drive-log cells are nearly always plain decimals such as `1234.567` or `-0.05`.
//! Such a number is an integer `m` divided by `10^k`. When `m < 2^53` and `k <= 22`, both are
//! exact as f64, and one IEEE division, correctly rounded, gives the correctly rounded value of
//! the decimal. This is the fast path of Clinger 1990, "How to Read Floating Point Numbers
//! Accurately" (PLDI '90). It is the same f64, to the bit, as the standard library's parser
//! gives, which is itself correctly rounded. Every other text (exponents, long mantissas,
//! `inf`, `nan`, malformed cells) goes to the standard parser, so values and errors are exactly
//! the standard parser's.

use std::num::ParseFloatError;

/// Powers of ten exact as f64 (10^22 = 2^22 5^22 with 5^22 < 2^53).
const POW10: [f64; 23] = [
    1e0, 1e1, 1e2, 1e3, 1e4, 1e5, 1e6, 1e7, 1e8, 1e9, 1e10, 1e11, 1e12, 1e13, 1e14, 1e15, 1e16, 1e17, 1e18, 1e19, 1e20,
    1e21, 1e22,
];

/// Largest mantissa taken by the fast path: every integer up to it is exact as f64.
const MAX_EXACT_MANTISSA: u64 = 1 << 53;

/// `text.parse::<f64>()`, faster for plain decimals (see the module documentation).
#[inline]
pub fn parse_f64(text: &str) -> Result<f64, ParseFloatError> {
    match plain_decimal(text.as_bytes()) {
        Some(value) => Ok(value),
        None => text.parse::<f64>(),
    }
}

/// The value of `[+-]digits[.digits]` (at least one digit, as the standard parser wants) when
/// the fast path is exact; `None` for anything else.
#[inline]
fn plain_decimal(bytes: &[u8]) -> Option<f64> {
    let (negative, body) = match bytes.first()? {
        b'-' => (true, &bytes[1..]),
        b'+' => (false, &bytes[1..]),
        _ => (false, bytes),
    };
    let (mut mantissa, mut fraction_digits, mut digits, mut seen_point) = (0u64, 0usize, 0usize, false);
    for &b in body {
        match b {
            b'0'..=b'9' => {
                mantissa = mantissa * 10 + u64::from(b - b'0');
                if mantissa > MAX_EXACT_MANTISSA {
                    return None;
                }
                digits += 1;
                fraction_digits += usize::from(seen_point);
            }
            b'.' if !seen_point => seen_point = true,
            _ => return None,
        }
    }
    if digits == 0 {
        return None;
    }
    let magnitude = (mantissa as f64) / *POW10.get(fraction_digits)?;
    Some(if negative { -magnitude } else { magnitude })
}

#[cfg(test)]
mod tests {
    use super::*;
    use proptest::prelude::*;

    /// The standard library's parser is the reference: the same value to the bit, or an error
    /// for both.
    fn assert_as_std(text: &str) {
        match (parse_f64(text), text.parse::<f64>()) {
            (Ok(a), Ok(b)) => assert_eq!(a.to_bits(), b.to_bits(), "{text:?}: {a} against {b}"),
            (Err(_), Err(_)) => {}
            (a, b) => panic!("{text:?}: {a:?} against {b:?}"),
        }
    }

    #[test]
    fn edge_cases_read_as_the_standard_parser_reads_them() {
        for text in [
            "0",
            "-0",
            "+0",
            "-0.000",
            "0.1",
            "0.3",
            "1.",
            ".5",
            "-.5",
            ".",
            "-",
            "+",
            "",
            "1..2",
            "1.2.3",
            "12a",
            " 1",
            "1 ",
            "1e3",
            "1E-3",
            "inf",
            "-inf",
            "NaN",
            "nan",
            "infinity",
            "0x10",
            "9007199254740992",
            "9007199254740993",
            "-9007199254740993.5",
            "123456789012345678901234567890",
            "0.0000000000000000000001",
            "0.00000000000000000000001",
            "1234567.8901234567",
            "2.2250738585072014e-308",
            "20000.000",
            "-19999.999",
            "\u{661}",
            "1_000",
        ] {
            assert_as_std(text);
        }
    }

    proptest! {
        #![proptest_config(ProptestConfig::with_cases(20_000))]
        /// Random plain decimals of up to 20 digits, and random strings of number characters.
        #[test]
        fn plain_decimals_and_near_misses_read_as_the_standard_parser_reads_them(
            sign in prop::sample::select(vec!["", "-", "+"]),
            int in "[0-9]{0,12}",
            frac in prop::option::of("[0-9]{0,12}"),
            junk in "[0-9.+eE-]{0,8}",
        ) {
            let text = format!("{sign}{int}{}", frac.map(|f| format!(".{f}")).unwrap_or_default());
            assert_as_std(&text);
            assert_as_std(&junk);
            assert_as_std(&format!("{text}{junk}"));
        }
    }
}

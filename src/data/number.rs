//! Fast reading of plain decimals ("1234.56789") straight from CSV bytes.
//!
//! Times in the data files are nearly always unsigned decimals with a few digits. For those,
//! Clinger's fast path (W. D. Clinger, "How to read floating point numbers accurately",
//! PLDI 1990) is exact: when the digits form an integer m < 2^53 and there are k ≤ 22
//! fractional digits, m and 10^k are both exact f64s and one IEEE division rounds correctly,
//! so m / 10^k equals what `str::parse::<f64>` returns. Anything else (signs, exponents,
//! more digits, NaN, junk) returns `None` and the caller uses the standard parser.

const POW10: [f64; 23] = [
    1e0, 1e1, 1e2, 1e3, 1e4, 1e5, 1e6, 1e7, 1e8, 1e9, 1e10, 1e11, 1e12, 1e13, 1e14, 1e15, 1e16,
    1e17, 1e18, 1e19, 1e20, 1e21, 1e22,
];

/// Digits and at most one '.', at least one digit, value exact by the fast path; else `None`.
pub fn parse_plain_decimal(bytes: &[u8]) -> Option<f64> {
    let mut mantissa: u64 = 0;
    let mut digits = 0u32;
    let mut frac_digits: Option<usize> = None;
    for &b in bytes {
        match b {
            b'0'..=b'9' => {
                mantissa = mantissa * 10 + u64::from(b - b'0');
                digits += 1;
                if digits > 15 {
                    return None; // 10^15 < 2^53: at most 15 digits keep m exact
                }
                if let Some(k) = frac_digits.as_mut() {
                    *k += 1;
                }
            }
            b'.' if frac_digits.is_none() => frac_digits = Some(0),
            _ => return None,
        }
    }
    if digits == 0 {
        return None;
    }
    let k = frac_digits.unwrap_or(0);
    Some(mantissa as f64 / *POW10.get(k)?)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn agrees_with_the_standard_parser() {
        for s in [
            "0",
            "0.0",
            "1",
            "1.5",
            "10.05",
            "123.456789",
            "0.1",
            "0.3",
            "9999.99999",
            "123456789012345",
            "1.23456789012345",
            ".5",
            "5.",
            "00012.500",
        ] {
            assert_eq!(
                parse_plain_decimal(s.as_bytes()),
                s.parse::<f64>().ok(),
                "{s}"
            );
        }
    }

    #[test]
    fn leaves_everything_else_to_the_standard_parser() {
        for s in [
            "",
            ".",
            "-1",
            "+1",
            "1e3",
            "NaN",
            "inf",
            "1.2.3",
            "1 2",
            "1234567890123456",
        ] {
            assert_eq!(parse_plain_decimal(s.as_bytes()), None, "{s}");
        }
    }
}

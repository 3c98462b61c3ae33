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
    lead_decimal(bytes)
        .filter(|&(_, used)| used == bytes.len())
        .map(|(v, _)| v)
}

/// The plain decimal at the start of `bytes` and how many bytes it takes: digits with at most
/// one '.', ending at the first other byte, which the caller checks is its delimiter. Equals
/// [`parse_plain_decimal`] of that prefix, so a reader that parses while it splits lines gets
/// the same numbers.
#[inline(always)]
pub fn lead_decimal(bytes: &[u8]) -> Option<(f64, usize)> {
    // Wrapping: a long run of digits is refused below; it must not overflow on the way. (Eight
    // bytes at a time measured no faster: the runs are short.)
    let (mut mantissa, mut i) = digit_run(bytes, 0, 0);
    let mut digits = i;
    let mut frac = 0;
    if bytes.get(i) == Some(&b'.') {
        let start = i + 1;
        (mantissa, i) = digit_run(bytes, start, mantissa);
        frac = i - start;
        digits += frac;
    }
    // 10^15 < 2^53: at most 15 digits keep the mantissa exact.
    if digits == 0 || digits > 15 {
        return None;
    }
    // Below 2^53 the signed conversion is exact and one instruction (the unsigned one is a
    // sequence).
    Some((mantissa as i64 as f64 / POW10[frac], i))
}

/// The digits from `i` on appended to `acc` (wrapping), and where they stop.
#[inline(always)]
fn digit_run(bytes: &[u8], mut i: usize, mut acc: u64) -> (u64, usize) {
    while let Some(d) = bytes
        .get(i)
        .map(|b| b.wrapping_sub(b'0'))
        .filter(|&d| d < 10)
    {
        acc = acc.wrapping_mul(10).wrapping_add(u64::from(d));
        i += 1;
    }
    (acc, i)
}

#[cfg(test)]
mod tests {
    use super::*;

    /// Every length of digit run, with and without a fraction, before every kind of delimiter:
    /// the leading decimal equals the standard parser.
    #[test]
    fn digit_runs_of_every_length_agree_with_the_standard_parser() {
        let digits = b"90817263540918273645546372810192";
        for int_len in 0..=16 {
            for frac_len in [None, Some(0), Some(1), Some(5), Some(9), Some(14)] {
                let mut text = digits[..int_len].to_vec();
                if let Some(f) = frac_len {
                    text.push(b'.');
                    text.extend_from_slice(&digits[int_len..int_len + f]);
                }
                let want = std::str::from_utf8(&text).unwrap().parse::<f64>().ok();
                let total = int_len + frac_len.unwrap_or(0);
                for tail in [
                    &b""[..],
                    b"\n",
                    b",u12,more bytes here\n",
                    b"\xff\xff\xff\xff",
                ] {
                    let mut line = text.clone();
                    line.extend_from_slice(tail);
                    let got = lead_decimal(&line);
                    if total == 0 || total > 15 {
                        assert_eq!(got, None, "{line:?}");
                    } else {
                        assert_eq!(got, want.map(|v| (v, text.len())), "{line:?}");
                    }
                }
            }
        }
    }

    #[test]
    fn a_leading_decimal_stops_at_its_delimiter() {
        assert_eq!(lead_decimal(b"12.5,u3"), Some((12.5, 4)));
        assert_eq!(lead_decimal(b"7\n"), Some((7.0, 1)));
        assert_eq!(lead_decimal(b"1.2.3"), Some((1.2, 3)));
        assert_eq!(lead_decimal(b",1"), None);
        assert_eq!(lead_decimal(b".\n"), None);
    }

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
            "00000000000000000000000001",
            "99999999999999999999999999999",
        ] {
            assert_eq!(parse_plain_decimal(s.as_bytes()), None, "{s}");
        }
    }
}

//! Small helpers shared by the core and the shells.

/// Format an f64 so that it reads back to the same value (Rust's `Display` is the shortest
/// round-trip form).
pub fn fmt_f64(x: f64) -> String {
    format!("{x}")
}

/// Decimals that show about three significant digits of the largest of `values` (at least
/// 2, at most 6): photometry responses of 0.03 and firing rates of 12.5 both stay readable.
/// Every table and screen formats its numbers with it.
pub fn decimals_for(values: impl Iterator<Item = f64>) -> usize {
    let max = values.map(f64::abs).fold(0.0, f64::max);
    if max <= 0.0 || !max.is_finite() {
        return 2;
    }
    (2.0 - max.log10().floor()).clamp(2.0, 6.0) as usize
}

/// One number at the decimals its magnitude needs ([`decimals_for`]).
pub fn fmt_by_magnitude(x: f64) -> String {
    let d = decimals_for(std::iter::once(x));
    format!("{x:.d$}")
}

/// `x` to `n` significant digits without trailing zeros (0.019234567 → "0.01923", 0.2 → "0.2"):
/// fitted parameters on a screen, where 17 digits say nothing.
pub fn fmt_sig(x: f64, n: usize) -> String {
    if x == 0.0 || !x.is_finite() {
        return format!("{x}");
    }
    let d = (n as i32 - 1 - x.abs().log10().floor() as i32).max(0) as usize;
    let s = format!("{x:.d$}");
    if s.contains('.') {
        s.trim_end_matches('0').trim_end_matches('.').to_string()
    } else {
        s
    }
}

/// Text for a terminal or a text file: control characters from data strings (C0 except
/// newline, DEL, C1; ESC starts terminal escape sequences) are shown escaped, as `\u{1b}`,
/// instead of being acted on. Text without them is returned as is.
pub fn printable(s: &str) -> std::borrow::Cow<'_, str> {
    let bad = |c: char| c != '\n' && c.is_control();
    if !s.chars().any(bad) {
        return std::borrow::Cow::Borrowed(s);
    }
    let mut out = String::with_capacity(s.len() + 16);
    for c in s.chars() {
        if bad(c) {
            out.extend(c.escape_default());
        } else {
            out.push(c);
        }
    }
    std::borrow::Cow::Owned(out)
}

/// Settings files (keymap, config, suggestion rules) are a few kilobytes.
pub const MAX_SETTINGS_BYTES: u64 = 1 << 20;

/// Read a settings file whole, refusing one that is not a regular file (a FIFO would block)
/// or is larger than [`MAX_SETTINGS_BYTES`] before holding it in memory. A missing file keeps
/// its `NotFound` error.
pub fn read_settings(path: &std::path::Path) -> std::io::Result<String> {
    use std::io::Read;
    let meta = std::fs::metadata(path)?;
    if !meta.is_file() {
        return Err(std::io::Error::other("not a regular file"));
    }
    let mut text = String::new();
    std::fs::File::open(path)?
        .take(MAX_SETTINGS_BYTES + 1)
        .read_to_string(&mut text)?;
    if text.len() as u64 > MAX_SETTINGS_BYTES {
        return Err(std::io::Error::other(format!(
            "file too large for a settings file (over {MAX_SETTINGS_BYTES} bytes)"
        )));
    }
    Ok(text)
}

/// Neutralise a text cell for CSV exports that people open in a spreadsheet: a cell starting
/// with `=`, `+`, `-`, `@`, a tab or a carriage return could run as a formula, so it gets a
/// leading apostrophe and keeps its text (the OWASP "CSV injection" advice, common practice).
/// A cell that is just a number (`-3`, `+0.5`, `-1e-3`) is left alone: a spreadsheet reads it
/// as that number, which is harmless and what the user wants.
pub fn csv_safe_cell(cell: &str) -> std::borrow::Cow<'_, str> {
    let risky = matches!(
        cell.as_bytes().first(),
        Some(b'=' | b'+' | b'-' | b'@' | b'\t' | b'\r')
    );
    if risky && !is_plain_number(cell) {
        std::borrow::Cow::Owned(format!("'{cell}"))
    } else {
        std::borrow::Cow::Borrowed(cell)
    }
}

/// `[+-]digits[.digits][e[+-]digits]`, nothing else (no spaces, no `inf`/`nan`).
fn is_plain_number(s: &str) -> bool {
    let b = s.as_bytes();
    let mut i = usize::from(matches!(b.first(), Some(b'+' | b'-')));
    let digits = |i: &mut usize| {
        let start = *i;
        while b.get(*i).is_some_and(u8::is_ascii_digit) {
            *i += 1;
        }
        *i - start
    };
    let mut mantissa = digits(&mut i);
    if b.get(i) == Some(&b'.') {
        i += 1;
        mantissa += digits(&mut i);
    }
    if mantissa == 0 {
        return false;
    }
    if matches!(b.get(i), Some(b'e' | b'E')) {
        i += 1;
        if matches!(b.get(i), Some(b'+' | b'-')) {
            i += 1;
        }
        if digits(&mut i) == 0 {
            return false;
        }
    }
    i == b.len()
}

#[cfg(test)]
mod csv_safe_tests {
    use super::csv_safe_cell;

    #[test]
    fn formula_starts_get_an_apostrophe_and_keep_their_text() {
        for cell in [
            "=1+1",
            "+cmd|' /C calc'!A0",
            "-2+3",
            "@SUM(A1)",
            "\t=1",
            "\r=1",
            "-",
            "+",
            "- lick bout",
            "-1e",
            "--1",
        ] {
            assert_eq!(csv_safe_cell(cell), format!("'{cell}"), "{cell:?}");
        }
    }

    #[test]
    fn plain_text_and_plain_numbers_pass_unchanged() {
        for cell in [
            "", "artifact", "a=b", "-3", "+0.5", "-1e-3", "-.5", "12", "'=x",
        ] {
            assert_eq!(csv_safe_cell(cell), cell, "{cell:?}");
        }
    }
}

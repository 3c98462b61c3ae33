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

/// 1-based line of byte offset `pos` in `text`.
pub fn line_at(text: &[u8], pos: usize) -> usize {
    let end = pos.min(text.len());
    1 + text[..end].iter().filter(|&&b| b == b'\n').count()
}

/// A problem in a settings file (config.toml, suggest.toml): the file, the line when known,
/// and what is wrong. Shown as `FILE:LINE: message`.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
#[error("{}{}: {message}", file.display(), line.map(|l| format!(":{l}")).unwrap_or_default())]
pub struct SettingsError {
    pub file: std::path::PathBuf,
    pub line: Option<usize>,
    pub message: String,
}

impl SettingsError {
    pub fn new(file: &std::path::Path, line: Option<usize>, message: impl Into<String>) -> Self {
        SettingsError {
            file: file.to_path_buf(),
            line,
            message: message.into(),
        }
    }
}

/// A TOML parse error of a settings file, as every settings reader reports it.
pub fn toml_error(file: &std::path::Path, text: &str, e: &toml::de::Error) -> SettingsError {
    let message = e.message().trim().replace('\n', " ");
    let line = e.span().map(|s| line_at(text.as_bytes(), s.start));
    SettingsError::new(file, line, message)
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

#[cfg(test)]
mod csv_safe_tests {
    use crate::text::for_csv as csv_safe_cell;

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

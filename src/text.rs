//! Strings from the data (notes, unit ids, cue and session names, reviewer names, file names)
//! made safe for where they are written, one policy per output and one definition of what is
//! dangerous: control characters (C0, DEL, C1 — ESC starts terminal escape sequences) and the
//! invisible characters that make text read differently from what it is (bidirectional
//! overrides and isolates, zero-width characters, soft hyphen, byte-order mark).
//!
//! | output | policy | function |
//! |---|---|---|
//! | the reviewer's screen | each dangerous character becomes `?` (ASCII mode: every non-ASCII one too) | [`for_screen`] |
//! | stdout/stderr text, reports, messages | shown escaped (`\u{1b}`, `\u{202e}`); newlines kept | [`for_text`] |
//! | one-line listings | as [`for_text`], and `\n`, `\r`, `\t` escaped too | [`for_line`] |
//! | CSV cells | formula starts neutralised (`'=…`); the CSV writer quotes the rest | [`for_csv`] |
//! | SVG text | dangerous characters become spaces, XML-escaped, cut at 60 characters | [`for_svg`] |

use std::borrow::Cow;

/// Bidirectional overrides, embeddings and isolates, zero-width characters, word joiner and
/// invisible operators, soft hyphen, byte-order mark.
pub fn is_invisible(c: char) -> bool {
    matches!(c,
        '\u{200B}'..='\u{200F}' | '\u{202A}'..='\u{202E}' | '\u{2060}'..='\u{2069}'
        | '\u{FEFF}' | '\u{00AD}')
}

/// Control or invisible: never written as is.
pub fn is_dangerous(c: char) -> bool {
    c.is_control() || is_invisible(c)
}

/// For the reviewer's cells: dangerous characters (newlines too) become `?`; with `ascii`
/// every other non-ASCII character is written in its ASCII spelling
/// ([`crate::ascii::spelling`]: `Δ` → `d`, `α` → `alpha`, `é` → `e`), or `?` without one.
pub fn for_screen(s: &str, ascii: bool) -> String {
    let mut out = String::with_capacity(s.len());
    for c in s.chars() {
        if is_dangerous(c) {
            out.push('?');
        } else if ascii && !c.is_ascii() {
            out.push_str(crate::ascii::spelling(c).unwrap_or("?"));
        } else {
            out.push(c);
        }
    }
    out
}

fn escaped(s: &str, keep_newline: bool) -> Cow<'_, str> {
    let bad = |c: char| !(keep_newline && c == '\n') && is_dangerous(c);
    if !s.chars().any(bad) {
        return Cow::Borrowed(s);
    }
    let mut out = String::with_capacity(s.len() + 16);
    for c in s.chars() {
        match c {
            c if !bad(c) => out.push(c),
            '\n' => out.push_str("\\n"),
            '\r' => out.push_str("\\r"),
            '\t' => out.push_str("\\t"),
            c => out.push_str(&format!("\\u{{{:x}}}", c as u32)),
        }
    }
    Cow::Owned(out)
}

/// For text on stdout or stderr (reports, messages, diagnostics): dangerous characters shown
/// escaped instead of acting; newlines kept. Text without them is returned as is.
pub fn for_text(s: &str) -> Cow<'_, str> {
    escaped(s, true)
}

/// For one line of a listing: as [`for_text`], newlines escaped too.
pub fn for_line(s: &str) -> Cow<'_, str> {
    escaped(s, false)
}

/// For a CSV cell people open in a spreadsheet: a cell starting with `=`, `+`, `-`, `@`, a
/// tab or a carriage return could run as a formula, so it gets a leading apostrophe and keeps
/// its text (the OWASP "CSV injection" advice, common practice). A plain number (`-3`,
/// `+0.5`, `-1e-3`) is left alone: a spreadsheet reads it as that number.
pub fn for_csv(cell: &str) -> Cow<'_, str> {
    let risky = matches!(
        cell.as_bytes().first(),
        Some(b'=' | b'+' | b'-' | b'@' | b'\t' | b'\r')
    );
    if risky && !is_plain_number(cell) {
        Cow::Owned(format!("'{cell}"))
    } else {
        Cow::Borrowed(cell)
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
    let mut n = digits(&mut i);
    if b.get(i) == Some(&b'.') {
        i += 1;
        n += digits(&mut i);
    }
    if n == 0 {
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

/// A label as it may appear in SVG text: dangerous characters (control characters are
/// forbidden in XML 1.0) become spaces; long labels are cut to 60 characters.
pub fn svg_label(text: &str) -> String {
    let cleaned: String = text
        .chars()
        .map(|c| if is_dangerous(c) { ' ' } else { c })
        .collect();
    match cleaned.char_indices().nth(60) {
        Some((i, _)) => format!("{}…", &cleaned[..i]),
        None => cleaned,
    }
}

/// For SVG character data and attribute values: [`svg_label`], then XML-escaped.
pub fn for_svg(text: &str) -> String {
    let mut out = String::with_capacity(text.len());
    for c in svg_label(text).chars() {
        match c {
            '<' => out.push_str("&lt;"),
            '>' => out.push_str("&gt;"),
            '&' => out.push_str("&amp;"),
            '"' => out.push_str("&quot;"),
            '\'' => out.push_str("&apos;"),
            c => out.push(c),
        }
    }
    out
}

#[cfg(test)]
mod tests {
    use super::*;

    /// One hostile string through every policy: nothing dangerous survives anywhere.
    #[test]
    fn every_output_neutralises_controls_and_direction_overrides() {
        let hostile = "u\u{202E}1\x1b[2J\u{9b}\u{200B}x";
        assert_eq!(for_screen(hostile, false), "u?1?[2J??x");
        assert_eq!(for_text(hostile), "u\\u{202e}1\\u{1b}[2J\\u{9b}\\u{200b}x");
        assert_eq!(for_line("a\nb\tc"), "a\\nb\\tc");
        assert_eq!(for_text("a\nb"), "a\nb");
        assert_eq!(for_svg("a<\u{202E}b"), "a&lt; b");
        for out in [
            for_screen(hostile, false),
            for_text(hostile).into_owned(),
            for_svg(hostile),
        ] {
            assert!(!out.chars().any(is_dangerous), "{out:?}");
        }
        assert_eq!(for_screen("tône", true), "tone");
        assert_eq!(for_screen("ΔF/F", true), "dF/F");
        assert_eq!(for_csv("=SUM(A1)"), "'=SUM(A1)");
        assert_eq!(for_csv("-0.5"), "-0.5");
        assert_eq!(for_csv("-x"), "'-x");
    }
}

//! The fast path for the large tables: spikes.csv, licks.csv and photometry.csv.
//!
//! A clean file — the exact header, plain unsigned decimals, no quotes, no spaces around
//! fields, no blank or over-long lines, UTF-8, times in order per unit and inside the
//! session span — is read in large blocks (block ends found with a vectorised search), each
//! line in one pass that takes the fields by position and parses the numbers as it meets
//! their digits, times gathered per unit. Such a file gives the
//! standard reader nothing to report. Anything else returns `None` and the caller reads the
//! file again with the standard reader ([`super::tables`]), which reports what it finds, so
//! every diagnostic stays exactly as it was (the property test in `tests/prop_fast_path.rs`
//! feeds both readers the same files).

use super::diag::Diagnostic;
use super::guard::MAX_LINE_BYTES;
use super::number::lead_decimal;
use super::tables::{sort_times, Span, SPIKES_UNSORTED};
use super::units::UnitIndex;
use super::{Photometry, Spikes};
use std::io::Read;

/// Bytes read per block.
const BLOCK: usize = 1 << 22;

/// Calls `block` with the data lines of a clean file whose first line is `header`, a block of
/// whole lines at a time, every line ending in '\n' (one is added after a last line that lacks
/// it); `false` as soon as the file is not clean (or `block` says so).
///
/// No file-wide check is needed: every byte of a line is checked by the parser that reads it
/// (numbers take only digits, '.', '-'; a unit id is checked for quotes, NUL, CR and UTF-8).
fn each_block(mut src: impl Read, header: &[u8], mut block: impl FnMut(&[u8]) -> bool) -> bool {
    let mut buf: Vec<u8> = Vec::with_capacity(BLOCK + MAX_LINE_BYTES + 1);
    let mut start = 0usize;
    let mut header_seen = false;
    let mut first_block = true;
    loop {
        // Keep the unfinished line, then fill up to one block more.
        buf.drain(..start);
        start = 0;
        // Appended straight after the kept bytes: nothing is zeroed first.
        let n = match src.by_ref().take(BLOCK as u64).read_to_end(&mut buf) {
            Ok(n) => n,
            Err(_) => return false,
        };
        let at_end = n == 0;
        if first_block {
            first_block = false;
            if buf.starts_with(&[0xEF, 0xBB, 0xBF]) {
                start = 3;
            }
        }
        // The complete lines of this block (all of it at the end of the file).
        let end = if at_end {
            if buf.len() > start && buf.last() != Some(&b'\n') {
                buf.push(b'\n');
            }
            buf.len()
        } else {
            match memchr::memrchr(b'\n', &buf[start..]) {
                Some(i) => start + i + 1,
                None if buf.len() - start > MAX_LINE_BYTES => return false,
                None => continue,
            }
        };
        let mut chunk = &buf[start..end];
        if !header_seen && !chunk.is_empty() {
            let stop = memchr::memchr(b'\n', chunk).unwrap_or(chunk.len() - 1);
            if &chunk[..stop] != header {
                return false;
            }
            header_seen = true;
            chunk = &chunk[stop + 1..];
        }
        if !chunk.is_empty() && !block(chunk) {
            return false;
        }
        start = end;
        if at_end {
            return header_seen;
        }
    }
}

/// Reads until `buf` is full or the file ends.
fn read_full(src: &mut impl Read, buf: &mut [u8]) -> std::io::Result<usize> {
    let mut n = 0;
    while n < buf.len() {
        match src.read(&mut buf[n..]) {
            Ok(0) => break,
            Ok(k) => n += k,
            Err(e) if e.kind() == std::io::ErrorKind::Interrupted => {}
            Err(e) => return Err(e),
        }
    }
    Ok(n)
}

/// The number at the start of `line` followed by `delim`, and the bytes both take; `signed`
/// also takes a leading '-' (negation is exact, so this equals the standard parse).
#[inline(always)]
fn field(line: &[u8], delim: u8, signed: bool) -> Option<(f64, usize)> {
    let (neg, skip) = match line.first() {
        Some(b'-') if signed => (true, 1),
        _ => (false, 0),
    };
    let (v, used) = lead_decimal(&line[skip..])?;
    let used = skip + used;
    (line.get(used) == Some(&delim)).then_some((if neg { -v } else { v }, used + 1))
}

/// A time the standard reader takes without a word: a plain decimal inside the span.
#[inline(always)]
fn in_span(t: f64, span: Option<Span>) -> bool {
    !matches!(span, Some(s) if t > s.end_s)
}

/// The unit id at the start of a spikes line, up to its comma, if the standard reader would
/// take it as it stands: not empty, no space at either end, no quote, NUL or CR, UTF-8.
#[inline(always)]
fn unit_field(line: &[u8]) -> Option<&[u8]> {
    let mut i = 0;
    let mut non_ascii = false;
    loop {
        let b = *line.get(i)?;
        match b {
            b',' => break,
            b'\n' | b'"' | 0 | b'\r' => return None,
            _ => non_ascii |= b >= 0x80,
        }
        i += 1;
    }
    let unit = &line[..i];
    let (first, last) = (*unit.first()?, unit[i - 1]);
    if first.is_ascii_whitespace() || last.is_ascii_whitespace() {
        return None;
    }
    if non_ascii && std::str::from_utf8(unit).is_err() {
        return None;
    }
    Some(unit)
}

/// spikes.csv of a clean file (see the module), `None` otherwise. Trains out of order are the
/// one thing it reads anyway, as sorters export them: sorted, with the standard reader's
/// warning at the first such line (in `out`).
pub fn spikes(
    path: &std::path::Path,
    src: impl Read,
    span: Option<Span>,
    out: &mut Vec<Diagnostic>,
) -> Option<Spikes> {
    let mut units = UnitIndex::default();
    let mut times: Vec<Vec<f64>> = Vec::new();
    let mut rows = 0usize;
    let mut first_unsorted: Option<u64> = None;
    let clean = each_block(src, b"unit,time_s", |mut lines| {
        // One pass over each line: the unit up to its comma, then the time's digits up to
        // the newline (a second comma or any odd byte stops the number and fails the line).
        while !lines.is_empty() {
            let Some(unit) = unit_field(lines) else {
                return false;
            };
            let Some((t, used)) = field(&lines[unit.len() + 1..], b'\n', false) else {
                return false;
            };
            let len = unit.len() + 1 + used;
            if len > MAX_LINE_BYTES + 1 || !in_span(t, span) {
                return false;
            }
            let u = units.index(unit);
            lines = &lines[len..];
            if u == times.len() {
                times.push(Vec::new());
            }
            let train = &mut times[u];
            rows += 1;
            if train.last().is_some_and(|&p| t < p) {
                // The header is line 1 and the fast path takes no blank lines.
                first_unsorted.get_or_insert(rows as u64 + 1);
            }
            train.push(t);
        }
        true
    });
    if !clean || rows == 0 {
        return None;
    }
    if let Some(line) = first_unsorted {
        sort_times(&mut times);
        let d = Diagnostic::warning(path, SPIKES_UNSORTED)
            .at_line(line)
            .column("time_s");
        out.push(d);
    }
    Some(units.into_spikes(times))
}

/// licks.csv of a clean file (see the module), `None` otherwise.
pub fn licks(src: impl Read, span: Option<Span>) -> Option<Vec<f64>> {
    let mut times: Vec<f64> = Vec::new();
    let clean = each_block(src, b"time_s", |mut lines| {
        while !lines.is_empty() {
            let Some((t, used)) = field(lines, b'\n', false) else {
                return false;
            };
            if !in_span(t, span) || times.last().is_some_and(|&p| t < p) {
                return false;
            }
            times.push(t);
            lines = &lines[used..];
        }
        true
    });
    (clean && !times.is_empty()).then(|| {
        times.shrink_to_fit();
        times
    })
}

/// photometry.csv of a clean file (see the module; sample times strictly increasing), `None`
/// otherwise.
pub fn photometry(mut src: impl Read) -> Option<Photometry> {
    // The header decides whether there is a control column; peek at it through a small read.
    let mut head = [0u8; 64];
    let n = read_full(&mut src, &mut head).ok()?;
    let text = head[..n]
        .strip_prefix(&[0xEF, 0xBB, 0xBF])
        .unwrap_or(&head[..n]);
    let has_control = if text.starts_with(b"time_s,signal,control\n") {
        true
    } else if text.starts_with(b"time_s,signal\n") {
        false
    } else {
        return None;
    };
    let header: &[u8] = if has_control {
        b"time_s,signal,control"
    } else {
        b"time_s,signal"
    };
    let mut p = Photometry {
        control: has_control.then(Vec::new),
        ..Photometry::default()
    };
    let signal_end = if has_control { b',' } else { b'\n' };
    let clean = each_block(
        std::io::Cursor::new(head[..n].to_vec()).chain(src),
        header,
        |mut lines| {
            while !lines.is_empty() {
                let Some((t, a)) = field(lines, b',', false) else {
                    return false;
                };
                let Some((s, b)) = field(&lines[a..], signal_end, true) else {
                    return false;
                };
                let mut used = a + b;
                if p.time_s.last().is_some_and(|&prev| t <= prev) {
                    return false;
                }
                if let Some(control) = p.control.as_mut() {
                    let Some((c, k)) = field(&lines[used..], b'\n', true) else {
                        return false;
                    };
                    control.push(c);
                    used += k;
                }
                p.time_s.push(t);
                p.signal.push(s);
                lines = &lines[used..];
            }
            true
        },
    );
    (clean && !p.time_s.is_empty()).then_some(p)
}

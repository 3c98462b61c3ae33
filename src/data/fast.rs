//! The fast path for the large tables: spikes.csv, licks.csv and photometry.csv.
//!
//! A clean file — the exact header, plain unsigned decimals, no quotes, no spaces around
//! fields, no blank or over-long lines, UTF-8, times in order per unit and inside the
//! session span — is read in large blocks: lines split with a vectorised search, fields by
//! position, numbers parsed in the same pass, times gathered per unit. Such a file gives the
//! standard reader nothing to report. Anything else returns `None` and the caller reads the
//! file again with the standard reader ([`super::tables`]), which reports what it finds, so
//! every diagnostic stays exactly as it was (the property test in `tests/prop_fast_path.rs`
//! feeds both readers the same files).

use super::diag::Diagnostic;
use super::guard::MAX_LINE_BYTES;
use super::number::parse_plain_decimal;
use super::tables::{Span, SPIKES_UNSORTED};
use super::units::UnitIndex;
use super::{Photometry, Spikes};
use std::io::Read;

/// Bytes read per block.
const BLOCK: usize = 1 << 22;

/// Calls `row` with every data line of a clean file whose header is `header`; `false` as soon
/// as the file is not clean (or `row` says so).
fn each_line(mut src: impl Read, header: &[u8], mut row: impl FnMut(&[u8]) -> bool) -> bool {
    let mut buf: Vec<u8> = Vec::with_capacity(BLOCK + MAX_LINE_BYTES);
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
            buf.len()
        } else {
            match memchr::memrchr(b'\n', &buf[start..]) {
                Some(i) => start + i + 1,
                None if buf.len() - start > MAX_LINE_BYTES => return false,
                None => continue,
            }
        };
        let chunk = &buf[start..end];
        // File-wide checks once per block: no quotes, no NUL, no carriage returns, UTF-8.
        if memchr::memchr3(b'"', 0, b'\r', chunk).is_some() || std::str::from_utf8(chunk).is_err() {
            return false;
        }
        let mut pos = 0;
        // One vectorised sweep finds every line end of the block; the last line of a file
        // without a final newline ends at the end of the block.
        let ends = memchr::memchr_iter(b'\n', chunk).chain(
            (at_end && !chunk.is_empty() && chunk[chunk.len() - 1] != b'\n').then_some(chunk.len()),
        );
        for stop in ends {
            let line = &chunk[pos..stop];
            pos = stop + 1;
            if line.len() > MAX_LINE_BYTES || line.is_empty() {
                return false;
            }
            if !header_seen {
                if line != header {
                    return false;
                }
                header_seen = true;
                continue;
            }
            if !row(line) {
                return false;
            }
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

/// A time the standard reader takes without a word: a plain decimal inside the span.
fn clean_time(field: &[u8], span: Option<Span>) -> Option<f64> {
    let t = parse_plain_decimal(field)?;
    match span {
        Some(s) if t > s.end_s => None,
        _ => Some(t),
    }
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
    let clean = each_line(src, b"unit,time_s", |line| {
        let Some(comma) = memchr::memchr(b',', line) else {
            return false;
        };
        let (unit, rest) = (&line[..comma], &line[comma + 1..]);
        if unit.is_empty()
            || unit[0].is_ascii_whitespace()
            || unit[unit.len() - 1].is_ascii_whitespace()
        {
            return false;
        }
        // `clean_time` refuses a second comma (a ragged row) with every other odd byte.
        let Some(t) = clean_time(rest, span) else {
            return false;
        };
        let u = units.index(unit);
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
        true
    });
    if !clean || rows == 0 {
        return None;
    }
    if let Some(line) = first_unsorted {
        for v in &mut times {
            v.sort_unstable_by(f64::total_cmp);
        }
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
    let clean = each_line(src, b"time_s", |line| {
        let Some(t) = clean_time(line, span) else {
            return false;
        };
        if times.last().is_some_and(|&p| t < p) {
            return false;
        }
        times.push(t);
        true
    });
    (clean && !times.is_empty()).then(|| {
        times.shrink_to_fit();
        times
    })
}

/// A signed plain decimal ("-0.0123"): negation is exact, so this equals the standard parse.
fn signed(field: &[u8]) -> Option<f64> {
    match field.split_first() {
        Some((b'-', rest)) => parse_plain_decimal(rest).map(|v| -v),
        _ => parse_plain_decimal(field),
    }
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
    let clean = each_line(
        std::io::Cursor::new(head[..n].to_vec()).chain(src),
        header,
        |line| {
            let mut fields = line.split(|&b| b == b',');
            let (Some(t), Some(s)) = (fields.next(), fields.next()) else {
                return false;
            };
            let c = if has_control { fields.next() } else { None };
            if fields.next().is_some() || (has_control && c.is_none()) {
                return false;
            }
            let (Some(t), Some(s)) = (parse_plain_decimal(t), signed(s)) else {
                return false;
            };
            if p.time_s.last().is_some_and(|&prev| t <= prev) {
                return false;
            }
            if let Some(c) = c {
                let Some(c) = signed(c) else {
                    return false;
                };
                if let Some(v) = p.control.as_mut() {
                    v.push(c);
                }
            }
            p.time_s.push(t);
            p.signal.push(s);
            true
        },
    );
    (clean && !p.time_s.is_empty()).then_some(p)
}

//! The byte stream under every CSV table: a [`LineGuard`] strips a UTF-8 BOM and stops at a NUL
//! byte (a binary file) or at a line longer than [`MAX_LINE_BYTES`] before that line is ever
//! held in memory; [`read_error`] turns what stopped the reader into a diagnostic.

use super::diag::Diagnostic;
use std::fmt;
use std::io::{self, BufRead, Read};
use std::path::Path;

/// Longest accepted physical line. Real rows are tens of bytes; a longer line is a wrong file.
pub const MAX_LINE_BYTES: usize = 1 << 20;

/// Why the guard stopped reading.
#[derive(Debug, Clone, PartialEq)]
pub enum GuardError {
    Nul { line: u64 },
    LongLine { line: u64 },
}

impl fmt::Display for GuardError {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        match self {
            GuardError::Nul { line } => write!(f, "NUL byte on line {line}"),
            GuardError::LongLine { line } => write!(f, "line {line} too long"),
        }
    }
}

impl std::error::Error for GuardError {}

/// Passes bytes through, skipping a leading UTF-8 BOM, counting lines, and failing on a NUL
/// byte or an over-long line.
pub struct LineGuard<R> {
    inner: R,
    started: bool,
    line: u64,
    run: usize,
    cap: usize,
    /// Inside a quoted field, where a newline does not end the record.
    in_quote: bool,
    /// Line where the current record began (the line an over-long record is reported at).
    record_line: u64,
}

impl<R: BufRead> LineGuard<R> {
    pub fn new(inner: R) -> Self {
        Self::with_cap(inner, MAX_LINE_BYTES)
    }
    pub fn with_cap(inner: R, cap: usize) -> Self {
        LineGuard {
            inner,
            started: false,
            line: 1,
            run: 0,
            cap,
            in_quote: false,
            record_line: 1,
        }
    }
}

impl<R: BufRead> Read for LineGuard<R> {
    fn read(&mut self, buf: &mut [u8]) -> io::Result<usize> {
        if !self.started {
            self.started = true;
            let head = self.inner.fill_buf()?;
            if head.starts_with(&[0xEF, 0xBB, 0xBF]) {
                self.inner.consume(3);
            }
        }
        // Chunks no longer than the cap: a line that fits inside one chunk is short enough,
        // so only lines crossing chunk boundaries need counting. No per-byte branch here.
        let limit = buf.len().min(self.cap.max(1));
        let n = self.inner.read(&mut buf[..limit])?;
        let chunk = &buf[..n];
        if chunk.contains(&0) {
            let pos = chunk.iter().position(|&b| b == 0).unwrap_or(0);
            let line = self.line + count_newlines(&chunk[..pos]);
            return Err(io::Error::other(GuardError::Nul { line }));
        }
        // The CSV parser holds a whole record, and a quoted field may span lines: an unclosed
        // quote would swallow the rest of the file. Quotes are rare, so only their chunks pay
        // for a per-byte scan.
        if self.in_quote || chunk.contains(&b'"') {
            self.scan_quoted(chunk)?;
            return Ok(n);
        }
        match chunk.iter().position(|&b| b == b'\n') {
            None => {
                self.run += n;
                if self.run > self.cap {
                    let line = self.line;
                    return Err(io::Error::other(GuardError::LongLine { line }));
                }
            }
            Some(first) => {
                if self.run + first > self.cap {
                    let line = self.line;
                    return Err(io::Error::other(GuardError::LongLine { line }));
                }
                let last = chunk.iter().rposition(|&b| b == b'\n').unwrap_or(first);
                self.line += count_newlines(chunk);
                self.run = n - last - 1;
            }
        }
        Ok(n)
    }
}

impl<R> LineGuard<R> {
    /// Like the fast path, counting record bytes: newlines inside quotes do not reset them.
    fn scan_quoted(&mut self, chunk: &[u8]) -> io::Result<()> {
        if !self.in_quote {
            self.record_line = self.line;
        }
        for &b in chunk {
            match b {
                b'"' => self.in_quote = !self.in_quote,
                b'\n' => {
                    self.line += 1;
                    if !self.in_quote {
                        self.run = 0;
                        self.record_line = self.line;
                        continue;
                    }
                }
                _ => {}
            }
            self.run += 1;
            if self.run > self.cap {
                let line = self.record_line;
                return Err(io::Error::other(GuardError::LongLine { line }));
            }
        }
        Ok(())
    }
}

fn count_newlines(bytes: &[u8]) -> u64 {
    bytes.iter().filter(|&&b| b == b'\n').count() as u64
}

pub(super) fn read_error(path: &Path, e: &csv::Error) -> Diagnostic {
    let guard = match e.kind() {
        csv::ErrorKind::Io(io) => io.get_ref().and_then(|x| x.downcast_ref::<GuardError>()),
        _ => None,
    };
    match guard {
        Some(GuardError::Nul { line }) => {
            Diagnostic::error(path, "binary data (NUL byte); reading stopped here")
                .at_line(*line)
                .expected("a UTF-8 text CSV file")
        }
        Some(GuardError::LongLine { line }) => Diagnostic::error(
            path,
            format!("line longer than {MAX_LINE_BYTES} bytes; reading stopped here"),
        )
        .at_line(*line)
        .expected("one short row per line; a `\"` never closed makes the rest one row"),
        None => {
            let line = e.position().map(|p| p.line());
            let d = Diagnostic::error(path, format!("cannot read: {e}"));
            match line {
                Some(l) => d.at_line(l),
                None => d,
            }
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn read(bytes: &[u8], cap: usize) -> Result<Vec<u8>, GuardError> {
        let mut g = LineGuard::with_cap(bytes, cap);
        let mut out = Vec::new();
        match g.read_to_end(&mut out) {
            Ok(_) => Ok(out),
            Err(e) => Err(e
                .get_ref()
                .and_then(|x| x.downcast_ref::<GuardError>())
                .cloned()
                .expect("guard error")),
        }
    }

    #[test]
    fn guard_strips_bom_and_stops_on_nul_and_long_lines() {
        assert_eq!(read(b"\xEF\xBB\xBFa,b\n", 10).unwrap(), b"a,b\n");
        assert_eq!(read(b"a\nb\0c", 10), Err(GuardError::Nul { line: 2 }));
        assert_eq!(
            read(b"a\n\nxxxxxxxxxxxx\n", 10),
            Err(GuardError::LongLine { line: 3 })
        );
        assert_eq!(read(b"xxxxxxxxxx\nxxxxxxxxxx", 10).unwrap().len(), 21);
    }

    #[test]
    fn guard_bounds_a_quoted_record_across_lines() {
        assert_eq!(
            read(b"a\n\"b\nc\nd\ne\nf\ng\n", 6),
            Err(GuardError::LongLine { line: 2 })
        );
        // Closed quotes, even spanning a line, within the cap pass; counting resumes after.
        let ok = b"a\n\"b\nc\"\nxxxxx\n\"\"\n";
        assert_eq!(read(ok, 6).unwrap(), ok.to_vec());
    }
}

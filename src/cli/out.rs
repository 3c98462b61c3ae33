//! What the commands print, in one place for `--ascii`: the `println!`/`eprintln!` every command
//! uses (defined in `cli/mod.rs`, shadowing std's) pass their text through [`text`], and
//! [`stdout`] wraps the standard output that tables, reports and scripts are streamed to. With
//! `--ascii` every non-ASCII character is written in its ASCII spelling (`ΔF/F` → `dF/F`,
//! `α` → `alpha`; see [`crate::ascii`]); without it, bytes pass through untouched.

use std::borrow::Cow;
use std::io::{self, Write};
use std::sync::atomic::{AtomicBool, Ordering};

/// Set once per command line by `run_args` from the global `--ascii` flag.
static ASCII: AtomicBool = AtomicBool::new(false);

pub fn set_ascii(on: bool) {
    ASCII.store(on, Ordering::Relaxed);
}

pub fn ascii() -> bool {
    ASCII.load(Ordering::Relaxed)
}

/// `s` as it should be printed: in ASCII spelling under `--ascii`, else as it is.
pub fn text(s: &str) -> Cow<'_, str> {
    if ascii() {
        crate::ascii::transliterate(s)
    } else {
        Cow::Borrowed(s)
    }
}

/// Standard output for a command's results (reports, tables, scripts), ASCII under `--ascii`.
pub fn stdout() -> Box<dyn Write> {
    let lock = io::stdout().lock();
    if ascii() {
        Box::new(AsciiWriter::new(lock))
    } else {
        Box::new(lock)
    }
}

/// A writer that passes text on in ASCII spelling, a line at a time (so a table cell's padding
/// is there when its character is spelled out: [`crate::ascii::transliterate`]). A line is
/// written when its newline arrives or on `flush`; a UTF-8 sequence split between two writes
/// is held until its last byte arrives; bytes that are not UTF-8 at all become `?`.
pub struct AsciiWriter<W: Write> {
    inner: W,
    pending: Vec<u8>,
}

impl<W: Write> AsciiWriter<W> {
    pub fn new(inner: W) -> Self {
        AsciiWriter {
            inner,
            pending: Vec::new(),
        }
    }

    /// Write out the complete lines held (`all`: everything held, an unfinished character
    /// at the very end excepted unless `at_end`).
    fn drain(&mut self, all: bool, at_end: bool) -> io::Result<()> {
        let cut = if all {
            self.pending.len()
        } else {
            match self.pending.iter().rposition(|&b| b == b'\n') {
                Some(i) => i + 1,
                None => return Ok(()),
            }
        };
        let mut out = String::new();
        let mut rest: &[u8] = &self.pending[..cut];
        let mut keep: Vec<u8> = Vec::new();
        while !rest.is_empty() {
            match std::str::from_utf8(rest) {
                Ok(s) => {
                    out.push_str(s);
                    rest = &[];
                }
                Err(e) => {
                    let (good, bad) = rest.split_at(e.valid_up_to());
                    out.push_str(std::str::from_utf8(good).unwrap_or(""));
                    match e.error_len() {
                        Some(n) => {
                            out.push('\u{FFFD}');
                            rest = &bad[n..];
                        }
                        None if at_end => {
                            out.push('\u{FFFD}');
                            rest = &[];
                        }
                        None => {
                            keep = bad.to_vec();
                            rest = &[];
                        }
                    }
                }
            }
        }
        keep.extend_from_slice(&self.pending[cut..]);
        self.pending = keep;
        self.inner
            .write_all(crate::ascii::transliterate(&out).as_bytes())
    }
}

impl<W: Write> Write for AsciiWriter<W> {
    fn write(&mut self, buf: &[u8]) -> io::Result<usize> {
        self.pending.extend_from_slice(buf);
        self.drain(false, false)?;
        Ok(buf.len())
    }

    fn flush(&mut self) -> io::Result<()> {
        self.drain(true, false)?;
        self.inner.flush()
    }
}

impl<W: Write> Drop for AsciiWriter<W> {
    fn drop(&mut self) {
        let _ = self.drain(true, true);
        let _ = self.inner.flush();
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn split_characters_are_joined_before_spelling() {
        let mut buf = Vec::new();
        {
            let mut w = AsciiWriter::new(&mut buf);
            let bytes = "ΔF/F α\n".as_bytes();
            // Every split point, one byte at a time.
            for b in bytes {
                w.write_all(std::slice::from_ref(b)).unwrap();
            }
            w.write_all(b"\xff ok").unwrap();
            w.flush().unwrap();
            w.write_all(b"\nx      ").unwrap();
            // The padding before it arrived in another write: the column is kept.
            w.write_all("λ|".as_bytes()).unwrap();
            w.write_all(&"γ".as_bytes()[..1]).unwrap();
        }
        assert_eq!(
            String::from_utf8(buf).unwrap(),
            "dF/F alpha\n? ok\nx lambda|?"
        );
    }
}

//! The one CSV reader behind every data table: named columns, UTF-8 with or without BOM, LF or
//! CRLF, and every problem reported as a [`Diagnostic`] instead of a panic.
//!
//! [`Table`] streams rows through a reused `csv::ByteRecord`; numbers are parsed from the field
//! bytes without allocating. A [`LineGuard`] under the CSV parser stops at a NUL byte (a binary
//! file) or at a line longer than [`MAX_LINE_BYTES`] before that line is ever held in memory.

use super::diag::{Diagnostic, Severity};
use super::guard::read_error;
pub use super::guard::{LineGuard, MAX_LINE_BYTES};
use super::number::parse_plain_decimal;

use std::io::BufRead;
use std::path::{Path, PathBuf};

/// Diagnostics shown per file before the rest are only counted (a file of 2 million bad rows
/// must not print 2 million lines).
pub const MAX_SHOWN_PER_FILE: usize = 50;

/// Diagnostics of one file, capped at [`MAX_SHOWN_PER_FILE`] shown.
#[derive(Debug)]
pub struct FileDiags {
    pub file: PathBuf,
    pub shown: Vec<Diagnostic>,
    hidden_errors: usize,
    hidden_warnings: usize,
    pub errors: usize,
}

impl FileDiags {
    pub fn new(file: &Path) -> Self {
        FileDiags {
            file: file.to_path_buf(),
            shown: Vec::new(),
            hidden_errors: 0,
            hidden_warnings: 0,
            errors: 0,
        }
    }
    pub fn push(&mut self, d: Diagnostic) {
        if d.is_error() {
            self.errors += 1;
        }
        if self.shown.len() < MAX_SHOWN_PER_FILE {
            self.shown.push(d);
        } else if d.is_error() {
            self.hidden_errors += 1;
        } else {
            self.hidden_warnings += 1;
        }
    }
    /// An error at a line and column of this file.
    pub fn error_at(&mut self, line: u64, column: &str, message: String, expected: &str) {
        let d = Diagnostic::error(&self.file, message)
            .at_line(line)
            .column(column)
            .expected(expected);
        self.push(d);
    }
    pub fn warning_at(&mut self, line: u64, column: &str, message: String) {
        let d = Diagnostic::warning(&self.file, message)
            .at_line(line)
            .column(column);
        self.push(d);
    }
    /// Move everything into `out`, with one summary line for what was not shown.
    pub fn drain_into(self, out: &mut Vec<Diagnostic>) {
        out.extend(self.shown);
        for (n, severity, what) in [
            (self.hidden_errors, Severity::Error, "errors"),
            (self.hidden_warnings, Severity::Warning, "warnings"),
        ] {
            if n > 0 {
                let mut d = Diagnostic::error(&self.file, format!("{n} more {what} not shown"));
                d.severity = severity;
                out.push(d);
            }
        }
    }
}

/// A bad value that has already been reported as a diagnostic.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct Reported;

/// A CSV table being read row by row.
pub struct Table<R: BufRead> {
    rdr: csv::Reader<LineGuard<R>>,
    record: csv::ByteRecord,
    header_len: usize,
    header_line: u64,
    /// Field index of each requested column (`None`: optional column absent).
    columns: Vec<Option<usize>>,
    line: u64,
    pub diags: FileDiags,
}

/// How a requested column is found.
pub struct ColumnSpec<'a> {
    pub name: &'a str,
    pub required: bool,
}

pub const fn required(name: &str) -> ColumnSpec<'_> {
    ColumnSpec {
        name,
        required: true,
    }
}

pub const fn optional(name: &str) -> ColumnSpec<'_> {
    ColumnSpec {
        name,
        required: false,
    }
}

impl<R: BufRead> Table<R> {
    /// Read the header and find the requested columns. Problems go to `out`; `None` when the
    /// table cannot be read (empty, binary, required column missing).
    pub fn new(
        path: &Path,
        reader: R,
        specs: &[ColumnSpec],
        out: &mut Vec<Diagnostic>,
    ) -> Option<Self> {
        let mut rdr = csv::ReaderBuilder::new()
            .buffer_capacity(1 << 16)
            .has_headers(false)
            .flexible(true)
            .from_reader(LineGuard::new(reader));
        let mut diags = FileDiags::new(path);
        let mut header = csv::ByteRecord::new();
        let expected_header = header_text(specs);
        let got = match rdr.read_byte_record(&mut header) {
            Ok(got) => got,
            Err(e) => {
                diags.push(read_error(path, &e));
                diags.drain_into(out);
                return None;
            }
        };
        // The parser skips blank lines before the header but still positions it at line 1.
        let header_line = header.position().map_or(1, |p| p.line());
        if !got || header.iter().all(|f| f.iter().all(u8::is_ascii_whitespace)) {
            diags.push(
                Diagnostic::error(path, "empty file: no header row")
                    .at_line(header_line)
                    .expected(format!("a header row naming the columns {expected_header}")),
            );
            diags.drain_into(out);
            return None;
        }
        let names: Vec<String> = match std::str::from_utf8(header.as_slice()) {
            Ok(_) => header
                .iter()
                .map(|f| String::from_utf8_lossy(f).trim().to_string())
                .collect(),
            Err(_) => {
                diags.push(
                    Diagnostic::error(path, "header is not valid UTF-8 text")
                        .at_line(header_line)
                        .expected("a UTF-8 text file"),
                );
                diags.drain_into(out);
                return None;
            }
        };
        let mut columns = Vec::with_capacity(specs.len());
        let mut missing = false;
        for spec in specs {
            let mut found = names.iter().enumerate().filter(|(_, n)| *n == spec.name);
            let first = found.next().map(|(i, _)| i);
            if found.next().is_some() {
                diags.push(
                    Diagnostic::error(path, "column appears more than once in the header")
                        .at_line(header_line)
                        .column(spec.name)
                        .expected("each column named once"),
                );
                missing = true;
            }
            if first.is_none() && spec.required {
                let hint = match names.iter().find(|n| n.eq_ignore_ascii_case(spec.name)) {
                    Some(n) => format!(" (found `{n}`; names are case-sensitive)"),
                    None => String::new(),
                };
                diags.push(
                    Diagnostic::error(path, format!("required column is missing{hint}"))
                        .at_line(header_line)
                        .column(spec.name)
                        .expected(format!("a header with the columns {expected_header}")),
                );
                missing = true;
            }
            columns.push(first);
        }
        if missing {
            diags.drain_into(out);
            return None;
        }
        warn_lookalike_columns(path, header_line, &names, specs, &mut diags);
        Some(Table {
            rdr,
            record: csv::ByteRecord::new(),
            header_len: header.len(),
            header_line,
            columns,
            line: 1,
            diags,
        })
    }

    /// Advance to the next well-formed row; `false` at the end or when reading must stop.
    /// Malformed rows (wrong field count, invalid UTF-8) are reported and skipped.
    pub fn next_row(&mut self) -> bool {
        loop {
            match self.rdr.read_byte_record(&mut self.record) {
                Ok(false) => return false,
                Ok(true) => {}
                Err(e) => {
                    let d = read_error(&self.diags.file, &e);
                    self.diags.push(d);
                    return false;
                }
            }
            self.line = self.record.position().map_or(self.line + 1, |p| p.line());
            if self.record.len() == 1 && self.record[0].iter().all(u8::is_ascii_whitespace) {
                continue; // a blank line (spaces only)
            }
            if self.record.len() != self.header_len {
                let (line, n, h) = (self.line, self.record.len(), self.header_len);
                self.diags.push(
                    Diagnostic::error(&self.diags.file, format!("row has {n} fields"))
                        .at_line(line)
                        .expected(format!("{h} fields, as in the header")),
                );
                continue;
            }
            if let Err(e) = std::str::from_utf8(self.record.as_slice()) {
                let column = self.column_at_byte(e.valid_up_to());
                let line = self.line;
                self.diags.push(
                    Diagnostic::error(&self.diags.file, "not valid UTF-8 text")
                        .at_line(line)
                        .column(column)
                        .expected("UTF-8 text"),
                );
                continue;
            }
            return true;
        }
    }

    fn column_at_byte(&self, byte: usize) -> String {
        let mut end = 0;
        for i in 0..self.record.len() {
            end += self.record[i].len();
            if byte < end {
                return format!("field {}", i + 1);
            }
        }
        "row".to_string()
    }

    /// Line of the header as the parser positions it.
    pub fn header_line(&self) -> u64 {
        self.header_line
    }

    /// Line of the current row (the header is line 1).
    pub fn line(&self) -> u64 {
        self.line
    }

    pub fn has_column(&self, col: usize) -> bool {
        self.columns.get(col).copied().flatten().is_some()
    }

    /// The bytes of requested column `col` in the current row, ASCII whitespace trimmed
    /// (empty if the column is absent).
    pub fn bytes(&self, col: usize) -> &[u8] {
        match self.columns.get(col).copied().flatten() {
            Some(i) => self.record.get(i).unwrap_or(b"").trim_ascii(),
            None => b"",
        }
    }

    /// The trimmed text of requested column `col` in the current row ("" if the column is absent).
    pub fn text(&self, col: usize) -> &str {
        match self.columns.get(col).copied().flatten() {
            Some(i) => {
                let bytes = self.record.get(i).unwrap_or(b"").trim_ascii();
                // Rows reaching callers were validated as UTF-8 in `next_row`.
                std::str::from_utf8(bytes).unwrap_or("").trim()
            }
            None => "",
        }
    }

    /// A time or quantity in seconds (or µl): empty → `Ok(None)`; must be a finite number ≥ 0.
    /// Reports it and returns `Err(Reported)` otherwise.
    pub fn non_negative(
        &mut self,
        col: usize,
        name: &str,
        what: &str,
    ) -> Result<Option<f64>, Reported> {
        if let Some(x) = parse_plain_decimal(self.bytes(col)) {
            return Ok(Some(x));
        }
        let text = self.text(col);
        if text.is_empty() {
            return Ok(None);
        }
        let problem = match text.parse::<f64>() {
            Ok(x) if x.is_nan() => "NaN".to_string(),
            Ok(x) if x.is_infinite() => "infinite value".to_string(),
            Ok(x) if x < 0.0 => format!("negative value {text}"),
            Ok(x) => return Ok(Some(x)),
            Err(_) => format!("not a number: `{}`", shorten(text)),
        };
        let line = self.line;
        self.diags
            .error_at(line, name, problem, &format!("{what} ≥ 0"));
        Err(Reported)
    }

    /// A finite number (any sign): empty → `Ok(None)`.
    pub fn finite(&mut self, col: usize, name: &str) -> Result<Option<f64>, Reported> {
        let text = self.text(col);
        if text.is_empty() {
            return Ok(None);
        }
        let problem = match text.parse::<f64>() {
            Ok(x) if x.is_nan() => "NaN".to_string(),
            Ok(x) if x.is_infinite() => "infinite value".to_string(),
            Ok(x) => return Ok(Some(x)),
            Err(_) => format!("not a number: `{}`", shorten(text)),
        };
        let line = self.line;
        self.diags.error_at(line, name, problem, "a finite number");
        Err(Reported)
    }

    /// A required value: reports an empty field.
    pub fn require<T>(
        &mut self,
        v: Result<Option<T>, Reported>,
        name: &str,
        what: &str,
    ) -> Option<T> {
        match v {
            Ok(Some(x)) => Some(x),
            Ok(None) => {
                let line = self.line;
                self.diags
                    .error_at(line, name, "empty value".to_string(), what);
                None
            }
            Err(Reported) => None,
        }
    }

    pub fn finish(self, out: &mut Vec<Diagnostic>) -> usize {
        let errors = self.diags.errors;
        self.diags.drain_into(out);
        errors
    }
}

/// A column that is not read but looks like a misspelling of one that is (it would otherwise
/// be ignored without a word, as extra columns are).
fn warn_lookalike_columns(
    path: &Path,
    line: u64,
    names: &[String],
    specs: &[ColumnSpec],
    diags: &mut FileDiags,
) {
    let known: Vec<&str> = specs.iter().map(|s| s.name).collect();
    for n in names {
        if let Some(k) = super::lookalike::lookalike(n, &known) {
            let msg = format!("column `{}` is not read: did you mean `{k}`?", shorten(n));
            diags.push(
                Diagnostic::warning(path, msg)
                    .at_line(line)
                    .column(n.as_str()),
            );
        }
    }
}

/// At most 40 characters of a bad value, for messages, on one line: control characters
/// (a newline inside quotes, ESC) are shown escaped.
pub fn shorten(text: &str) -> String {
    let mut s = String::new();
    for c in text.chars().take(40) {
        if c.is_control() {
            s.extend(c.escape_default());
        } else {
            s.push(c);
        }
    }
    if text.chars().nth(40).is_some() {
        s.push('…');
    }
    s
}

fn header_text(specs: &[ColumnSpec]) -> String {
    let names: Vec<String> = specs
        .iter()
        .map(|s| {
            if s.required {
                s.name.to_string()
            } else {
                format!("[{}]", s.name)
            }
        })
        .collect();
    names.join(",")
}

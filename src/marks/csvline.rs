//! The journal's CSV at the byte level: records split by quote parity, strict RFC 4180 fields,
//! and the writer's quoting.
//!
//! Splitting and parsing are separate on purpose. A record ends at a newline outside quotes;
//! [`Split`] tracks just enough state to know where that is (a quote opens a quoted field only
//! at the start of a field, as in RFC 4180, so a stray quote in a hand-edited row stays local
//! to that row). The reader and the appender use the same splitter, so they always agree on
//! where the last record starts; field errors are found afterwards by [`parse_fields`].

/// Longest record (one journal row, all lines of a multi-line note) the journal accepts.
/// Memory per row stays bounded however hostile the file.
pub const MAX_RECORD_BYTES: usize = 64 * 1024;

/// One record as found in the buffer: `bytes[start..end]` without its terminating newline.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct RawRecord {
    pub start: usize,
    pub end: usize,
    /// 1-based line number of the record's first line.
    pub line: u64,
    /// Followed by a newline outside quotes (false only for the last record of a buffer).
    pub terminated: bool,
    /// The buffer ended inside a quoted field (only possible when not terminated).
    pub open_quote: bool,
}

/// Where the splitter is inside a record.
#[derive(Debug, Clone, Copy, Default, PartialEq, Eq)]
pub enum Split {
    /// At the start of a field (also the start of a record).
    #[default]
    FieldStart,
    /// Inside an unquoted field (or after a quoted one closed: an error, but not a quote).
    Unquoted,
    /// Inside a quoted field.
    Quoted,
    /// Just after a quote inside a quoted field: a closing quote, or the first half of `""`.
    QuoteInQuoted,
}

impl Split {
    /// The state after `b`, and whether `b` ended the record.
    pub fn step(self, b: u8) -> (Split, bool) {
        use Split::*;
        match (self, b) {
            (Quoted, b'"') => (QuoteInQuoted, false),
            (Quoted, _) => (Quoted, false),
            (QuoteInQuoted, b'"') => (Quoted, false),
            (FieldStart, b'"') => (Quoted, false),
            (_, b'\n') => (FieldStart, true),
            (_, b',') => (FieldStart, false),
            _ => (Unquoted, false),
        }
    }

    /// The input ended inside a quoted field (the record cannot be complete).
    pub fn open_quote(self) -> bool {
        self == Split::Quoted
    }
}

/// Iterator over the records of a buffer, from `pos`, numbering lines from `line`.
pub struct Records<'a> {
    buf: &'a [u8],
    pos: usize,
    line: u64,
}

impl<'a> Records<'a> {
    pub fn new(buf: &'a [u8], pos: usize, line: u64) -> Self {
        Records { buf, pos, line }
    }
}

impl Iterator for Records<'_> {
    type Item = RawRecord;

    fn next(&mut self) -> Option<RawRecord> {
        if self.pos >= self.buf.len() {
            return None;
        }
        let start = self.pos;
        let line = self.line;
        let mut state = Split::FieldStart;
        for i in start..self.buf.len() {
            let b = self.buf[i];
            let (next, ends) = state.step(b);
            state = next;
            if b == b'\n' {
                self.line += 1;
            }
            if ends {
                self.pos = i + 1;
                return Some(RawRecord {
                    start,
                    end: i,
                    line,
                    terminated: true,
                    open_quote: false,
                });
            }
        }
        self.pos = self.buf.len();
        Some(RawRecord {
            start,
            end: self.buf.len(),
            line,
            terminated: false,
            open_quote: state.open_quote(),
        })
    }
}

/// Splitter state carried across chunks of a file read piece by piece (the appender's scan
/// for the start of the last record).
#[derive(Debug, Clone, Copy)]
pub struct BoundaryScan {
    pub state: Split,
    /// Offset where the current (last) record starts.
    pub record_start: u64,
}

impl BoundaryScan {
    /// Start at a known record boundary.
    pub fn at(record_start: u64) -> Self {
        BoundaryScan {
            state: Split::FieldStart,
            record_start,
        }
    }

    /// Feed the bytes found at file offset `offset`.
    pub fn feed(&mut self, offset: u64, chunk: &[u8]) {
        for (i, &b) in chunk.iter().enumerate() {
            let (next, ends) = self.state.step(b);
            self.state = next;
            if ends {
                self.record_start = offset + i as u64 + 1;
            }
        }
    }
}

/// Why a record's fields could not be read.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct FieldError {
    /// 0-based index of the field where it went wrong.
    pub field: usize,
    pub message: String,
}

/// The record's bytes without a trailing `\r` (CRLF files).
pub fn trim_cr(rec: &[u8]) -> &[u8] {
    rec.strip_suffix(b"\r").unwrap_or(rec)
}

/// True for a record with nothing in it (a blank line, which the reader skips).
pub fn is_blank(rec: &[u8]) -> bool {
    trim_cr(rec).is_empty()
}

/// Split one record (without its newline) into fields, strictly: a quote may only open a
/// field, `""` inside quotes is one quote, a closing quote must end the field.
pub fn parse_fields(rec: &[u8]) -> Result<Vec<String>, FieldError> {
    let rec = trim_cr(rec);
    let mut fields = Vec::new();
    let mut i = 0;
    loop {
        let index = fields.len();
        let mut value = Vec::new();
        if rec.get(i) == Some(&b'"') {
            i += 1;
            loop {
                match rec.get(i) {
                    None => {
                        return Err(FieldError {
                            field: index,
                            message: "quoted field never closed".into(),
                        })
                    }
                    Some(b'"') if rec.get(i + 1) == Some(&b'"') => {
                        value.push(b'"');
                        i += 2;
                    }
                    Some(b'"') => {
                        i += 1;
                        break;
                    }
                    Some(&b) => {
                        value.push(b);
                        i += 1;
                    }
                }
            }
            match rec.get(i) {
                None | Some(b',') => {}
                Some(_) => {
                    return Err(FieldError {
                        field: index,
                        message:
                            "text after a closing quote; expected a comma or the end of the row"
                                .into(),
                    })
                }
            }
        } else {
            while let Some(&b) = rec.get(i) {
                match b {
                    b',' => break,
                    b'"' => {
                        return Err(FieldError {
                            field: index,
                            message: "a quote inside an unquoted field; expected the whole field in quotes with inner quotes doubled".into(),
                        })
                    }
                    _ => value.push(b),
                }
                i += 1;
            }
        }
        let text = String::from_utf8(value).map_err(|_| FieldError {
            field: index,
            message: "not valid UTF-8".into(),
        })?;
        fields.push(text);
        if rec.get(i) == Some(&b',') {
            i += 1;
        } else {
            return Ok(fields);
        }
    }
}

/// Append `s` to `out` as one CSV field, quoted only when it must be.
pub fn push_field(out: &mut String, s: &str) {
    if s.contains([',', '"', '\n', '\r']) {
        out.push('"');
        for c in s.chars() {
            if c == '"' {
                out.push('"');
            }
            out.push(c);
        }
        out.push('"');
    } else {
        out.push_str(s);
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn records(s: &str) -> Vec<RawRecord> {
        Records::new(s.as_bytes(), 0, 1).collect()
    }

    #[test]
    fn newline_inside_quotes_does_not_end_the_record() {
        let r = records("a,\"x\ny\"\nb\n");
        assert_eq!(r.len(), 2);
        assert_eq!((r[0].line, r[0].terminated), (1, true));
        assert_eq!(r[1].line, 3);
    }

    #[test]
    fn a_stray_quote_inside_a_field_stays_in_its_row() {
        let r = records("1,a\"b,c\n2,d\n");
        assert_eq!(r.len(), 2);
        let r = records("1,\"a\"b\n2,d\n");
        assert_eq!(r.len(), 2);
    }

    #[test]
    fn unterminated_last_record_and_open_quote_are_flagged() {
        let r = records("a\nb,\"c");
        assert!(!r[1].terminated && r[1].open_quote);
        let r = records("a\nb,c");
        assert!(!r[1].terminated && !r[1].open_quote);
    }

    #[test]
    fn fields_follow_rfc4180() {
        assert_eq!(
            parse_fields(b"1,\"a,\"\"b\"\"\",,x\r").unwrap(),
            vec!["1", "a,\"b\"", "", "x"]
        );
        assert_eq!(parse_fields(b"").unwrap(), vec![""]);
        assert_eq!(parse_fields(b"a,").unwrap(), vec!["a", ""]);
        assert_eq!(parse_fields(b"a\"b").unwrap_err().field, 0);
        assert_eq!(parse_fields(b"x,\"a\"b").unwrap_err().field, 1);
        assert_eq!(parse_fields(b"x,\"ab").unwrap_err().field, 1);
    }

    #[test]
    fn boundary_scan_matches_the_record_splitter_across_chunks() {
        let text = b"h\n1,\"a\n\"\"b\",c\n2,\"open";
        let mut scan = BoundaryScan::at(0);
        for (k, chunk) in text.chunks(3).enumerate() {
            scan.feed((k * 3) as u64, chunk);
        }
        let last = Records::new(text, 0, 1).last().unwrap();
        assert_eq!(scan.record_start, last.start as u64);
        assert_eq!(scan.state.open_quote(), last.open_quote);
    }

    #[test]
    fn written_fields_read_back() {
        for s in [
            "",
            "plain",
            "a,b",
            "say \"hi\"",
            "two\nlines",
            "cr\r",
            "\"",
            ",",
        ] {
            let mut line = String::new();
            push_field(&mut line, s);
            line.push(',');
            push_field(&mut line, "z");
            assert_eq!(
                parse_fields(line.as_bytes()).unwrap(),
                vec![s, "z"],
                "{s:?}"
            );
        }
    }
}

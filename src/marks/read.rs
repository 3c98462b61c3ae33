//! Reading the journal: the whole file ([`read_journal`]) or only the bytes appended since the
//! last read ([`Journal::refresh`]), under a shared lock so a reader never sees half an append.

use super::csvline::{is_blank, parse_fields, RawRecord, Records, MAX_RECORD_BYTES};
use super::{Journal, MarkKind, MarkRow, MarksError, MARKS_FILE};
use std::fs::{File, TryLockError};
use std::io::{Read, Seek, SeekFrom};
use std::os::unix::fs::OpenOptionsExt;
use std::path::Path;
use std::time::Duration;

/// Largest journal read. A reviewer writes a few hundred bytes per action; a file this size is
/// the wrong file, and refusing it keeps memory bounded.
pub const MAX_JOURNAL_BYTES: u64 = 64 << 20;

/// The contract's columns, in the order the appender writes them.
pub(crate) const COLUMNS: [&str; 6] = ["trial", "mark", "reason", "note", "reviewer", "at"];

/// Torn text kept for a report is cut to this many bytes.
const MAX_REPORTED_TEXT: usize = 1024;

/// Where each contract column sits in a file's header, and how many columns it has.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub(crate) struct Columns {
    idx: [usize; 6],
    count: usize,
}

impl Columns {
    /// The layout the appender writes.
    pub(crate) const CANONICAL: Columns = Columns {
        idx: [0, 1, 2, 3, 4, 5],
        count: 6,
    };
}

/// Resume point of [`Journal::refresh`]: just after the last row read (never inside a torn
/// tail, which a later append may seal).
#[derive(Debug, Clone, Default)]
pub(crate) struct Cursor {
    offset: u64,
    line: u64,
    columns: Option<Columns>,
    identity: Option<(u64, u64)>,
    /// The bytes just before `offset`: a file replaced by another that reuses the inode and is
    /// at least as long is caught by these no longer matching.
    fingerprint: Vec<u8>,
}

/// Bytes kept before a resume offset to recognise the same file.
pub(crate) const FINGERPRINT_BYTES: usize = 64;

/// The last [`FINGERPRINT_BYTES`] of `prev` followed by `next`.
pub(crate) fn fingerprint(prev: &[u8], next: &[u8]) -> Vec<u8> {
    let next = &next[next.len().saturating_sub(FINGERPRINT_BYTES)..];
    let keep = FINGERPRINT_BYTES - next.len();
    let mut v = prev[prev.len().saturating_sub(keep)..].to_vec();
    v.extend_from_slice(next);
    v
}

/// Read `marks.csv` of a session folder (an absent file is an empty journal).
pub fn read_journal(session_dir: &Path) -> Result<Journal, MarksError> {
    let mut journal = Journal {
        path: session_dir.join(MARKS_FILE),
        ..Journal::default()
    };
    journal.refresh()?;
    Ok(journal)
}

impl Journal {
    /// Read what was appended since the last read (by this or any other process) and return
    /// how many rows were added. If the file was replaced or shortened it is read again from
    /// the start and the count is of all its rows. On error the journal is left as it was.
    pub fn refresh(&mut self) -> Result<usize, MarksError> {
        self.refresh_within(READ_LOCK_WAIT)
    }

    /// [`Journal::refresh`], waiting at most `wait` for a writer's lock (best effort either way).
    pub fn refresh_within(&mut self, wait: Duration) -> Result<usize, MarksError> {
        let path = self.path.clone();
        if super::safety::check_entry(&path)?.is_none() {
            *self = Journal {
                path,
                ..Journal::default()
            };
            return Ok(0);
        }
        let mut file = std::fs::OpenOptions::new()
            .read(true)
            .custom_flags(super::safety::OPEN_FLAGS | libc::O_NONBLOCK)
            .open(&path)
            .map_err(|e| super::safety::open_error(&path, e))?;
        // Best effort: without the lock (a file system without locks, or a writer stuck
        // holding it) the read may see a write in progress, reported as a torn tail and
        // picked up whole by the next refresh. Waiting forever would freeze the reviewer.
        let _ = lock_within(&file, &path, wait, true);
        let meta = file.metadata().map_err(|e| MarksError::io(&path, e))?;
        super::safety::check_meta(&path, &meta)?;
        let len = meta.len();
        if len > MAX_JOURNAL_BYTES {
            return Err(MarksError::invalid(
                &path,
                format!(
                    "{len} bytes; a marks journal is never near {MAX_JOURNAL_BYTES} bytes (is this the right file?)"
                ),
            ));
        }
        let identity = identity(&meta);
        let c = &self.cursor;
        let mut restart = c.columns.is_none() || c.identity != identity || len < c.offset;
        let mut buf = Vec::new();
        let mut read_from = |from: u64, buf: &mut Vec<u8>| {
            buf.clear();
            file.seek(SeekFrom::Start(from))
                .and_then(|_| (&mut file).take(len - from).read_to_end(buf))
                .map_err(|e| MarksError::io(&path, e))
        };
        if !restart {
            let fp = c.fingerprint.len();
            read_from(c.offset - fp as u64, &mut buf)?;
            if buf.starts_with(&c.fingerprint) {
                buf.drain(..fp);
            } else {
                restart = true;
            }
        }
        if restart {
            read_from(0, &mut buf)?;
        }
        let _ = file.unlock();
        let (offset, line, columns, prev_fp) = if restart {
            (0, 1, None, &[][..])
        } else {
            (c.offset, c.line, c.columns, &c.fingerprint[..])
        };
        let parsed = ingest(&path, &buf, offset == 0, line, columns)?;
        let added = parsed.rows.len();
        if restart {
            self.rows = parsed.rows;
            self.sealed_torn = parsed.sealed;
        } else {
            self.rows.extend(parsed.rows);
            self.sealed_torn.extend(parsed.sealed);
        }
        let fingerprint = fingerprint(prev_fp, &buf[..parsed.resume]);
        self.torn_tail = parsed.torn_tail;
        self.cursor = Cursor {
            offset: offset + parsed.resume as u64,
            line: parsed.resume_line,
            columns: parsed.columns,
            identity,
            fingerprint,
        };
        Ok(added)
    }
}

/// How long a read waits for appenders to finish before reading anyway.
const READ_LOCK_WAIT: Duration = Duration::from_secs(2);

/// Take the file lock (shared or exclusive), waiting at most `wait`.
///
/// Uncontended, this is one non-blocking call. Otherwise a helper thread waits in the kernel's
/// queue on a second handle to the same open file (the lock belongs to the open file, so it
/// serves this handle too), which keeps writers in arrival order. If the wait runs out the
/// helper is left to take and at once drop the lock when the stuck holder lets go.
pub(crate) fn lock_within(
    file: &File,
    path: &Path,
    wait: Duration,
    shared: bool,
) -> Result<(), MarksError> {
    let attempt = if shared {
        file.try_lock_shared()
    } else {
        file.try_lock()
    };
    match attempt {
        Ok(()) => return Ok(()),
        Err(TryLockError::Error(e)) => return Err(MarksError::io(path, e)),
        Err(TryLockError::WouldBlock) => {}
    }
    let handle = file.try_clone().map_err(|e| MarksError::io(path, e))?;
    let (tx, rx) = std::sync::mpsc::channel();
    std::thread::spawn(move || {
        let got = if shared {
            handle.lock_shared()
        } else {
            handle.lock()
        };
        let _ = tx.send(got);
    });
    match rx.recv_timeout(wait) {
        Ok(Ok(())) => Ok(()),
        Ok(Err(e)) => Err(MarksError::io(path, e)),
        Err(_) => Err(MarksError::invalid(
            path,
            format!(
                "locked by another process for over {} s (a reviewer stuck mid-save?)",
                wait.as_secs_f64()
            ),
        )),
    }
}

#[cfg(unix)]
pub(crate) fn identity(meta: &std::fs::Metadata) -> Option<(u64, u64)> {
    use std::os::unix::fs::MetadataExt;
    Some((meta.dev(), meta.ino()))
}

#[cfg(not(unix))]
pub(crate) fn identity(_meta: &std::fs::Metadata) -> Option<(u64, u64)> {
    None
}

/// What one pass over a buffer found.
struct Parsed {
    rows: Vec<MarkRow>,
    sealed: Vec<(u64, String)>,
    torn_tail: Option<(u64, String)>,
    /// Buffer offset and line number where the next read should start.
    resume: usize,
    resume_line: u64,
    columns: Option<Columns>,
}

/// A bad record waiting to learn whether a sealing note follows it.
struct Pending {
    rec: RawRecord,
    column: String,
    message: String,
}

fn ingest(
    path: &Path,
    buf: &[u8],
    at_file_start: bool,
    line: u64,
    mut columns: Option<Columns>,
) -> Result<Parsed, MarksError> {
    let parse_error = |line: u64, column: &str, message: String| MarksError::Parse {
        path: path.to_path_buf(),
        line,
        column: column.to_string(),
        message,
    };
    let start = if at_file_start && buf.starts_with(b"\xEF\xBB\xBF") {
        3
    } else {
        0
    };
    let mut out = Parsed {
        rows: Vec::new(),
        sealed: Vec::new(),
        torn_tail: None,
        resume: 0,
        resume_line: line,
        columns,
    };
    let mut records = Records::new(buf, start, line);
    if columns.is_none() {
        let Some(rec) = records.by_ref().find(|r| !is_blank(&buf[r.start..r.end])) else {
            return Ok(out);
        };
        let bytes = &buf[rec.start..rec.end];
        if !rec.terminated && is_header_prefix(bytes) && parse_header(bytes).is_err() {
            // The file's first write was cut short: nothing but part of the header.
            out.torn_tail = Some((rec.line, reported_text(bytes)));
            return Ok(out);
        }
        let cols = parse_header(bytes).map_err(|(c, m)| parse_error(rec.line, &c, m))?;
        columns = Some(cols);
        out.columns = columns;
        (out.resume, out.resume_line) = after(&rec, bytes);
    }
    let cols = columns.expect("header read above");
    let mut pending: Vec<Pending> = Vec::new();
    for rec in records {
        let bytes = &buf[rec.start..rec.end];
        if is_blank(bytes) {
            if pending.is_empty() && rec.terminated {
                (out.resume, out.resume_line) = after(&rec, bytes);
            }
            continue;
        }
        match parse_row(bytes, &cols) {
            Ok(row) => {
                if !pending.is_empty() {
                    if !row.is_torn_line_seal() {
                        let first = &pending[0];
                        return Err(parse_error(
                            first.rec.line,
                            &first.column,
                            first.message.clone(),
                        ));
                    }
                    out.sealed.push(run_report(buf, &pending));
                    pending.clear();
                }
                out.rows.push(row);
                (out.resume, out.resume_line) = after(&rec, bytes);
            }
            Err((column, message)) => pending.push(Pending {
                rec,
                column,
                message,
            }),
        }
    }
    if let Some(last) = pending.last() {
        if last.rec.terminated {
            let first = &pending[0];
            return Err(parse_error(
                first.rec.line,
                &first.column,
                first.message.clone(),
            ));
        }
        out.torn_tail = Some(run_report(buf, &pending));
    }
    Ok(out)
}

/// Offset and line just after a record (after its newline when it has one).
fn after(rec: &RawRecord, bytes: &[u8]) -> (usize, u64) {
    let inner = bytes.iter().filter(|&&b| b == b'\n').count() as u64;
    if rec.terminated {
        (rec.end + 1, rec.line + inner + 1)
    } else {
        (rec.end, rec.line + inner)
    }
}

fn run_report(buf: &[u8], run: &[Pending]) -> (u64, String) {
    let first = &run[0].rec;
    let last = &run[run.len() - 1].rec;
    (first.line, reported_text(&buf[first.start..last.end]))
}

fn reported_text(bytes: &[u8]) -> String {
    let cut = &bytes[..bytes.len().min(MAX_REPORTED_TEXT)];
    let mut text = String::from_utf8_lossy(cut).into_owned();
    if cut.len() < bytes.len() {
        text.push_str("...");
    }
    text
}

/// The header line the appender writes.
pub(crate) const HEADER_LINE: &str = "trial,mark,reason,note,reviewer,at\n";

/// True if `bytes` could be the start of a header cut short (a torn first write).
pub(crate) fn is_header_prefix(bytes: &[u8]) -> bool {
    let head = HEADER_LINE.trim_end().as_bytes();
    head.starts_with(bytes) || bytes.strip_suffix(b"\r") == Some(head)
}

pub(crate) fn parse_header(rec: &[u8]) -> Result<Columns, (String, String)> {
    let expected = "expected the header trial,mark,reason,note,reviewer,at (any order)";
    let names = parse_fields(rec)
        .map_err(|e| ("header".to_string(), format!("{}; {expected}", e.message)))?;
    let mut idx = [usize::MAX; 6];
    for (i, name) in names.iter().enumerate() {
        if let Some(k) = COLUMNS.iter().position(|c| *c == name.trim()) {
            if idx[k] != usize::MAX {
                return Err((
                    COLUMNS[k].into(),
                    "column appears twice in the header".into(),
                ));
            }
            idx[k] = i;
        }
    }
    if let Some(k) = idx.iter().position(|&i| i == usize::MAX) {
        return Err((
            COLUMNS[k].into(),
            format!("missing from the header; {expected}"),
        ));
    }
    Ok(Columns {
        idx,
        count: names.len(),
    })
}

/// Validate one record against the header; errors name the column.
pub(crate) fn parse_row(rec: &[u8], cols: &Columns) -> Result<MarkRow, (String, String)> {
    let column_name = |field: usize| {
        cols.idx
            .iter()
            .position(|&i| i == field)
            .map(|k| COLUMNS[k].to_string())
            .unwrap_or_else(|| format!("column {}", field + 1))
    };
    if rec.len() > MAX_RECORD_BYTES {
        return Err((
            "row".into(),
            format!(
                "{} bytes long; expected at most {MAX_RECORD_BYTES} bytes per row",
                rec.len()
            ),
        ));
    }
    let fields = parse_fields(rec).map_err(|e| (column_name(e.field), e.message))?;
    if fields.len() != cols.count {
        let column = if fields.len() < cols.count {
            column_name(fields.len())
        } else {
            "row".into()
        };
        return Err((
            column,
            format!(
                "expected {} fields as in the header, found {}",
                cols.count,
                fields.len()
            ),
        ));
    }
    let get = |k: usize| &fields[cols.idx[k]];
    let trial_text = get(0).trim();
    let trial = if trial_text.is_empty() {
        None
    } else {
        Some(trial_text.parse::<i64>().map_err(|_| {
            (
                "trial".to_string(),
                format!(
                    "expected an integer trial number (or empty for a session note), found {}",
                    shown(trial_text)
                ),
            )
        })?)
    };
    let mark_text = get(1).trim();
    let mark = MarkKind::parse(mark_text).ok_or_else(|| {
        (
            "mark".to_string(),
            format!(
                "expected exclude, suspect, clear or note, found {}",
                shown(mark_text)
            ),
        )
    })?;
    if trial.is_none() && mark != MarkKind::Note {
        return Err((
            "trial".into(),
            format!("empty, but only a note may leave trial empty; expected the trial number this {} applies to", mark.as_str()),
        ));
    }
    let at = get(5).trim();
    if !valid_at(at) {
        return Err((
            "at".into(),
            format!(
                "expected an RFC 3339 UTC time like 2026-03-02T09:30:00Z, found {}",
                shown(at)
            ),
        ));
    }
    Ok(MarkRow {
        trial,
        mark,
        reason: get(2).clone(),
        note: get(3).clone(),
        reviewer: get(4).clone(),
        at: at.to_string(),
    })
}

/// An RFC 3339 UTC timestamp (`Z` or `+00:00`). A timestamp cut short never passes, which is
/// what lets the reader tell a torn last row from a whole one.
pub(crate) fn valid_at(s: &str) -> bool {
    s.is_ascii() && humantime::parse_rfc3339(s).is_ok()
}

/// A value quoted for an error message: escaped (no control characters reach the terminal)
/// and cut to a readable length.
fn shown(s: &str) -> String {
    let cut: String = s.chars().take(40).collect();
    if cut.len() < s.len() {
        format!("{cut:?}...")
    } else {
        format!("{cut:?}")
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn row(line: &str) -> Result<MarkRow, (String, String)> {
        parse_row(line.as_bytes(), &Columns::CANONICAL)
    }

    #[test]
    fn header_in_any_order_with_extra_columns() {
        let c = parse_header(b"at,extra,mark,trial,note,reason,reviewer").unwrap();
        assert_eq!(c.count, 7);
        let r = parse_row(b"2026-03-02T09:30:00Z,x,exclude,4,n,artifact,ana", &c).unwrap();
        assert_eq!((r.trial, r.mark), (Some(4), MarkKind::Exclude));
        assert_eq!(
            (r.reason.as_str(), r.reviewer.as_str()),
            ("artifact", "ana")
        );
    }

    #[test]
    fn header_problems_name_the_column() {
        assert_eq!(
            parse_header(b"trial,mark,reason,note,reviewer")
                .unwrap_err()
                .0,
            "at"
        );
        assert_eq!(
            parse_header(b"trial,mark,mark,reason,note,reviewer,at")
                .unwrap_err()
                .0,
            "mark"
        );
    }

    #[test]
    fn row_errors_say_what_was_expected() {
        let e = row("x,exclude,,,ana,2026-03-02T09:30:00Z").unwrap_err();
        assert_eq!(e.0, "trial");
        assert!(e.1.contains("integer"), "{}", e.1);
        let e = row("3,excluded,,,ana,2026-03-02T09:30:00Z").unwrap_err();
        assert_eq!(e.0, "mark");
        assert!(e.1.contains("exclude, suspect, clear or note"), "{}", e.1);
        let e = row(",exclude,,,ana,2026-03-02T09:30:00Z").unwrap_err();
        assert_eq!(e.0, "trial");
        let e = row("3,note,,,ana,2026-03-02 09:30").unwrap_err();
        assert_eq!(e.0, "at");
        let e = row("3,note,,").unwrap_err();
        assert_eq!(e.0, "reviewer");
        assert!(row(",note,,hello,ana,2026-03-02T09:30:00.5Z").is_ok());
    }

    #[test]
    fn a_timestamp_cut_anywhere_is_invalid() {
        let at = "2026-03-02T09:30:00.123Z";
        assert!(valid_at(at));
        for cut in 0..at.len() {
            assert!(!valid_at(&at[..cut]), "{}", &at[..cut]);
        }
    }

    #[test]
    fn header_prefixes() {
        assert!(is_header_prefix(b"trial,ma"));
        assert!(is_header_prefix(b"trial,mark,reason,note,reviewer,at\r"));
        assert!(!is_header_prefix(b"trial,mark,x"));
    }
}

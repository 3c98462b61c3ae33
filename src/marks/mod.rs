//! The marks sidecar (`marks.csv`): an append-only journal of reviewer actions.
//!
//! Header `trial,mark,reason,note,reviewer,at`. For each trial the last exclude/suspect/clear
//! row in file order wins; note rows accumulate; an empty `trial` is a session-level note.
//! Start at [`read_journal`] and [`append`]; [`Journal::refresh`] picks up rows other reviewers
//! appended since.
//!
//! # Torn lines (an interrupted write)
//!
//! Every row goes to disk in one write under an exclusive lock and is synced before `append`
//! returns, so a killed process almost always leaves whole rows. A power cut, a full disk, or
//! (rarely) a kill that lands while a row straddles a page boundary (Linux stops a write between
//! pages once a fatal signal is pending) can still leave an incomplete last record. The rules:
//!
//! * The reader keeps an incomplete or invalid *last* record that is not followed by a newline
//!   (or ends inside quotes) out of the rows and reports it in [`Journal::torn_tail`]. A complete
//!   valid last row that only lacks its newline is an ordinary row.
//! * The next [`append`] seals the torn record instead of writing after it blindly (which could
//!   glue the new row onto it, or, after an open quote, swallow it into a note): it closes an
//!   open quote, ends the line, and writes a session note with reason [`TORN_LINE_REASON`]
//!   before the new row. The torn text stays in the file, untouched (the journal is never
//!   rewritten in place); the note tells anyone reading the CSV elsewhere why a junk line is there.
//! * The reader skips invalid records directly followed by such a note and lists them in
//!   [`Journal::sealed_torn`]. Invalid records directly before a torn tail belong to that tail
//!   (a sealing write that was itself cut). Any other invalid record is a [`MarksError::Parse`].
//!
//! Known limit: if the sealing write is cut exactly after its first newline, the journal ends
//! with a terminated junk line that no note follows; the reader then names that line as a
//! parse error for a person to delete.
//!
//! # Other decisions
//!
//! * The reader takes columns by name (any order, extra columns ignored, BOM and CRLF fine);
//!   the appender only appends to a file in its own column order, so no row lands in the wrong
//!   column.
//! * Lock waits are bounded: a reader reads anyway after 2 s (what it may see is a torn tail,
//!   fixed by the next refresh), an append fails after 10 s with "not saved" rather than
//!   freezing the reviewer behind a stuck process.
//! * Memory is bounded: a journal over [`MAX_JOURNAL_BYTES`] is refused before it is read,
//!   and a row over [`MAX_RECORD_BYTES`] is an error.

mod append;
mod csvline;
mod read;
mod safety;

pub use append::{append, append_within, encode_row, journal_text, now_rfc3339, reviewer_name};
pub use csvline::MAX_RECORD_BYTES;
pub use read::{read_journal, MAX_JOURNAL_BYTES};

use std::collections::BTreeMap;
use std::path::{Path, PathBuf};

/// File name of the sidecar inside a session folder.
pub const MARKS_FILE: &str = "marks.csv";

#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash)]
pub enum MarkKind {
    Exclude,
    Suspect,
    Clear,
    Note,
}

impl MarkKind {
    pub fn as_str(&self) -> &'static str {
        match self {
            MarkKind::Exclude => "exclude",
            MarkKind::Suspect => "suspect",
            MarkKind::Clear => "clear",
            MarkKind::Note => "note",
        }
    }
    pub fn parse(s: &str) -> Option<MarkKind> {
        match s {
            "exclude" => Some(MarkKind::Exclude),
            "suspect" => Some(MarkKind::Suspect),
            "clear" => Some(MarkKind::Clear),
            "note" => Some(MarkKind::Note),
            _ => None,
        }
    }
}

/// One journal row.
#[derive(Debug, Clone, PartialEq)]
pub struct MarkRow {
    /// `None` for a session-level note.
    pub trial: Option<i64>,
    pub mark: MarkKind,
    pub reason: String,
    pub note: String,
    pub reviewer: String,
    /// RFC 3339 UTC timestamp.
    pub at: String,
}

/// The standing mark of one trial (the last exclude/suspect/clear row for it).
#[derive(Debug, Clone, PartialEq)]
pub struct TrialMark {
    pub kind: MarkKind,
    pub reason: String,
    pub note: String,
    pub reviewer: String,
    pub at: String,
}

/// What a journal means now.
#[derive(Debug, Clone, Default, PartialEq)]
pub struct MarkState {
    /// Standing exclude/suspect marks by trial number (a trial whose last mark is `clear` is absent).
    pub marks: BTreeMap<i64, TrialMark>,
    /// Note rows in file order (trial notes and session notes).
    pub notes: Vec<MarkRow>,
}

impl MarkState {
    pub fn is_excluded(&self, trial: i64) -> bool {
        matches!(self.marks.get(&trial), Some(m) if m.kind == MarkKind::Exclude)
    }
}

/// A parsed journal: its rows, and a torn last line if the file ended mid-row.
#[derive(Debug, Clone, Default)]
pub struct Journal {
    pub path: PathBuf,
    pub rows: Vec<MarkRow>,
    /// 1-based line number and text of a torn (incomplete) last line, ignored with a warning.
    /// The text is raw file content: neutralise control characters before showing it.
    pub torn_tail: Option<(u64, String)>,
    /// Earlier torn lines that a later append sealed off (see the module notes): line and text.
    pub sealed_torn: Vec<(u64, String)>,
    /// Where [`Journal::refresh`] resumes.
    cursor: read::Cursor,
}

impl Journal {
    /// Fold the rows into the standing marks and notes.
    pub fn state(&self) -> MarkState {
        fold(&self.rows)
    }
}

/// Fold rows in file order: the last exclude/suspect/clear of a trial wins, notes accumulate.
pub fn fold(rows: &[MarkRow]) -> MarkState {
    let mut state = MarkState::default();
    for row in rows {
        match (row.mark, row.trial) {
            (MarkKind::Note, _) => state.notes.push(row.clone()),
            (MarkKind::Clear, Some(trial)) => {
                state.marks.remove(&trial);
            }
            (kind, Some(trial)) => {
                state.marks.insert(
                    trial,
                    TrialMark {
                        kind,
                        reason: row.reason.clone(),
                        note: row.note.clone(),
                        reviewer: row.reviewer.clone(),
                        at: row.at.clone(),
                    },
                );
            }
            // A trial mark without a trial cannot come from the reader; ignore a hand-made one.
            (_, None) => {}
        }
    }
    state
}

/// `reason` of the session note that seals a torn line (see the module notes).
pub const TORN_LINE_REASON: &str = "torn-line";

impl MarkRow {
    /// True for the note an append writes after sealing a torn line.
    pub fn is_torn_line_seal(&self) -> bool {
        self.trial.is_none() && self.mark == MarkKind::Note && self.reason == TORN_LINE_REASON
    }
}

#[derive(Debug, thiserror::Error)]
pub enum MarksError {
    #[error("{path}: {source}")]
    Io {
        path: PathBuf,
        source: std::io::Error,
    },
    #[error("{path}:{line}: {column}: {message}")]
    Parse {
        path: PathBuf,
        line: u64,
        column: String,
        message: String,
    },
    /// A request the journal refuses (a row that is not valid, a file that is too large or not
    /// in the layout the appender writes).
    #[error("{path}: {message}")]
    Invalid { path: PathBuf, message: String },
}

impl MarksError {
    pub(crate) fn io(path: &Path, source: std::io::Error) -> Self {
        MarksError::Io {
            path: path.to_path_buf(),
            source,
        }
    }
    pub(crate) fn invalid(path: &Path, message: impl Into<String>) -> Self {
        MarksError::Invalid {
            path: path.to_path_buf(),
            message: message.into(),
        }
    }
}

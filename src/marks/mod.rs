//! The marks sidecar (`marks.csv`): an append-only journal of reviewer actions.
//!
//! Header `trial,mark,reason,note,reviewer,at`. For each trial the last exclude/suspect/clear
//! row in file order wins; note rows accumulate; an empty `trial` is a session-level note.
//! Start at [`read_journal`] and [`append`].

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
    pub torn_tail: Option<(u64, String)>,
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
}

/// Read `marks.csv` of a session folder (an absent file is an empty journal).
pub fn read_journal(_session_dir: &Path) -> Result<Journal, MarksError> {
    todo!("marks journal reader")
}

impl Journal {
    /// Fold the rows into the standing marks and notes.
    pub fn state(&self) -> MarkState {
        todo!("fold journal")
    }
}

/// Append one row to the session's journal, durably (written and synced to disk before
/// returning), under an exclusive file lock so concurrent reviewers lose nothing.
pub fn append(_session_dir: &Path, _row: &MarkRow) -> Result<(), MarksError> {
    todo!("durable append")
}

//! `check`: every problem in a subject or session folder, as file:line diagnostics.
//!
//! Start at [`check`]. It runs the same walk and readers as [`crate::data::load`] (there is
//! one parser), then adds what loading does not need: the marks journal of each session
//! (a torn last line, rows that do not parse, marks of trials that do not exist).
//! [`check_with_suggestions`] also counts the pending suggested marks of each session that
//! loaded ([`crate::suggest`]); they are information, never diagnostics.

use crate::data::{self, Diagnostic, Session};
use crate::marks;
use crate::suggest::{counts_by_rule, pending_for_session, RuleSet};
use std::collections::HashSet;
use std::path::{Path, PathBuf};

/// What `check` found, with the number of sessions looked at.
#[derive(Debug)]
pub struct Report {
    pub diagnostics: Vec<Diagnostic>,
    pub sessions_found: usize,
    pub sessions_loaded: usize,
    /// Pending suggested marks of each loaded session whose marks could be read (empty
    /// without rules).
    pub suggested: Vec<SessionSuggested>,
}

/// Pending suggestions of one session, per rule in catalogue order (rules without any left
/// out; empty when nothing is suggested).
#[derive(Debug, Clone, PartialEq)]
pub struct SessionSuggested {
    pub dir: PathBuf,
    pub counts: Vec<(String, usize)>,
}

impl Report {
    pub fn errors(&self) -> usize {
        self.diagnostics.iter().filter(|d| d.is_error()).count()
    }
    pub fn warnings(&self) -> usize {
        self.diagnostics.len() - self.errors()
    }
}

/// Every problem found under `path`, errors and warnings, grouped by file in line order.
pub fn check(path: &Path) -> Vec<Diagnostic> {
    check_report(path).diagnostics
}

/// [`check`] with session counts, for the command's summary line.
pub fn check_report(path: &Path) -> Report {
    check_with_suggestions(path, None)
}

/// [`check_report`] plus, with `rules`, the pending suggestions of every loaded session.
/// A session whose marks cannot be read is left out (its marks.csv problem is a diagnostic).
pub fn check_with_suggestions(path: &Path, rules: Option<&RuleSet>) -> Report {
    let scan = data::scan(path);
    let mut out = scan.diagnostics;
    for dir in &scan.session_dirs {
        let session = scan.subject.sessions.iter().find(|s| &s.dir == dir);
        check_marks(dir, session, &mut out);
    }
    // Stable: diagnostics of one file keep their order; whole-file problems come first.
    out.sort_by(|a, b| a.file.cmp(&b.file).then(a.line.cmp(&b.line)));
    let suggested = match rules {
        None => Vec::new(),
        Some(rules) => scan
            .subject
            .sessions
            .iter()
            .filter_map(|s| {
                let pending = pending_for_session(s, rules).ok()?;
                Some(SessionSuggested {
                    dir: s.dir.clone(),
                    counts: counts_by_rule(&pending),
                })
            })
            .collect(),
    };
    Report {
        diagnostics: out,
        sessions_found: scan.session_dirs.len(),
        sessions_loaded: scan.subject.sessions.len(),
        suggested,
    }
}

/// A rule-file error from [`RuleSet::load_from`] as a warning on its file: the suggestions
/// are left out, the data are not at fault.
pub fn rules_diagnostic(error: &crate::util::SettingsError) -> Diagnostic {
    let d = Diagnostic::warning(
        &error.file,
        format!("{}; suggested marks left out", error.message.trim()),
    );
    match error.line {
        Some(l) => d.at_line(l as u64),
        None => d,
    }
}

/// Marks journal problems; `session` (when it loaded) lets marks be matched to trials.
fn check_marks(dir: &Path, session: Option<&Session>, out: &mut Vec<Diagnostic>) {
    let path = dir.join(marks::MARKS_FILE);
    // Not `exists()`: that follows links, and a dangling marks.csv link must be reported.
    if std::fs::symlink_metadata(&path).is_err() {
        return;
    }
    let journal = match marks::read_journal(dir) {
        Ok(j) => j,
        Err(marks::MarksError::Parse {
            line,
            column,
            message,
            ..
        }) => {
            out.push(
                Diagnostic::error(&path, message)
                    .at_line(line)
                    .column(column)
                    .expected(
                        "rows trial,mark,reason,note,reviewer,at as the reviewer writes them",
                    ),
            );
            return;
        }
        Err(marks::MarksError::Io { source, .. }) => {
            out.push(Diagnostic::error(&path, format!("cannot read: {source}")));
            return;
        }
        Err(marks::MarksError::Invalid { message, .. }) => {
            out.push(Diagnostic::error(&path, message));
            return;
        }
    };
    if let Some((line, text)) = &journal.torn_tail {
        out.push(
            Diagnostic::warning(
                &path,
                format!(
                    "torn last line `{}` (an interrupted write?): ignored, the rows before it are kept",
                    data::csvio::shorten(text)
                ),
            )
            .at_line(*line),
        );
    }
    let Some(session) = session else {
        return;
    };
    let numbers: HashSet<i64> = session.trials.iter().map(|t| t.number).collect();
    let mut unknown: Vec<i64> = journal
        .rows
        .iter()
        .filter_map(|r| r.trial)
        .filter(|n| !numbers.contains(n))
        .collect();
    unknown.sort_unstable();
    unknown.dedup();
    if !unknown.is_empty() {
        let list: Vec<String> = unknown.iter().take(10).map(i64::to_string).collect();
        out.push(Diagnostic::warning(
            &path,
            format!(
                "marks for trial(s) not in trials.csv: {}{}",
                list.join(", "),
                if unknown.len() > 10 { ", …" } else { "" }
            ),
        ));
    }
}

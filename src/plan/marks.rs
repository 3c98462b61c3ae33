//! The standing marks of every session, under one policy for a journal that cannot be read.

use super::PlanError;
use crate::data::Subject;
use crate::marks::{read_journal, MarkState};

/// What an unreadable `marks.csv` means.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum MarksPolicy {
    /// Exclusions must be honoured: an unreadable journal stops the command, naming the file
    /// (an analysis that silently kept excluded trials would look the same as a correct one).
    Honour,
    /// The user asked to ignore marks (`--ignore-marks`): an unreadable journal is a warning
    /// and reads as no marks.
    Ignore,
}

impl MarksPolicy {
    /// The policy a command's `--ignore-marks` flag asks for.
    pub fn asked(ignore_marks: bool) -> Self {
        if ignore_marks {
            MarksPolicy::Ignore
        } else {
            MarksPolicy::Honour
        }
    }
}

/// Marks per session (same order as the subject's sessions) and warnings for stderr.
#[derive(Debug, Clone, Default)]
pub struct StandingMarks {
    pub per_session: Vec<MarkState>,
    pub warnings: Vec<String>,
}

/// The hint every command gives after an unreadable journal.
pub const UNREADABLE_HINT: &str = "the marks could not be read, so exclusions cannot be \
honoured; fix the file or rerun with --ignore-marks";

impl StandingMarks {
    /// The marks that decide exclusions under `policy`: the journal's, or none when marks are
    /// ignored (the journal itself stays in `per_session` for notes and suggestions).
    pub fn in_force(&self, policy: MarksPolicy) -> Vec<MarkState> {
        match policy {
            MarksPolicy::Honour => self.per_session.clone(),
            MarksPolicy::Ignore => vec![MarkState::default(); self.per_session.len()],
        }
    }
}

pub fn standing_marks(subject: &Subject, policy: MarksPolicy) -> Result<StandingMarks, PlanError> {
    let mut out = StandingMarks {
        per_session: Vec::with_capacity(subject.sessions.len()),
        warnings: Vec::new(),
    };
    for s in &subject.sessions {
        match read_journal(&s.dir) {
            Ok(j) => {
                if let Some((line, _)) = &j.torn_tail {
                    out.warnings.push(format!(
                        "{}:{line}: warning: incomplete last line ignored",
                        j.path.display()
                    ));
                }
                out.per_session.push(j.state());
            }
            Err(e) if policy == MarksPolicy::Ignore => {
                out.warnings
                    .push(format!("warning: {e} (marks are ignored, as asked)"));
                out.per_session.push(MarkState::default());
            }
            Err(e) => return Err(PlanError::Marks(format!("{e}\n{UNREADABLE_HINT}"))),
        }
    }
    Ok(out)
}

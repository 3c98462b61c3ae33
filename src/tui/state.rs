//! Everything the reviewer shows, in one plain struct. Only [`crate::tui::update::update`]
//! changes it; screens and widgets borrow it.
//!
//! Heavy things are computed when their inputs change, never per frame: the model run once at
//! start ([`ModelView`]), the session's per-trial activity traces when the session, unit or
//! signal changes ([`SessionView`]), the days table once at start.

use super::derived::{ModelView, SessionSuggestions, SessionView};
use super::keymap::Keymap;
use crate::data::{Session, Subject, Trial};
use crate::marks::{Journal, MarkKind, MarkRow, MarkState, TrialMark};
use crate::obs::TrialObs;
use crate::suggest::{RuleSet, Suggestion};
use crate::summary::DayRow;

/// Which screen fills the window.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Screen {
    Trial,
    Session,
    Days,
    Fit,
}

impl Screen {
    pub const ALL: [Screen; 4] = [Screen::Trial, Screen::Session, Screen::Days, Screen::Fit];

    pub fn title(self) -> &'static str {
        match self {
            Screen::Trial => "trial",
            Screen::Session => "session",
            Screen::Days => "days",
            Screen::Fit => "fit",
        }
    }
}

/// What the note editor is writing.
#[derive(Debug, Clone, PartialEq)]
pub enum NoteTarget {
    /// A note row on one trial (by trial number).
    Trial(i64),
    /// A session-level note row (empty `trial`).
    Session,
    /// The free-text note of a mark whose reason is "other".
    MarkNote { kind: MarkKind, reason: String },
    /// Not a note: the number of the trial to go to in the current session.
    TrialNumber,
}

/// A modal box over the screen.
#[derive(Debug, Clone, PartialEq)]
pub enum Overlay {
    None,
    Help,
    /// Picking a reason for an exclude or suspect mark.
    Picker {
        kind: MarkKind,
        selected: usize,
    },
    /// A one-line text editor; `cursor` counts characters.
    Editor {
        target: NoteTarget,
        text: String,
        cursor: usize,
    },
    /// Asking (y/n) before accepting every pending suggestion of one rule in the session.
    ConfirmAcceptAll {
        rule: &'static str,
        count: usize,
    },
}

/// Which recorded activity the traces and heat rows show.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum SignalKind {
    Spikes,
    Photometry,
    Licks,
}

impl SignalKind {
    pub fn name(self) -> &'static str {
        match self {
            SignalKind::Spikes => "spikes",
            SignalKind::Photometry => "photometry",
            SignalKind::Licks => "licks",
        }
    }
}

/// How the status line should read.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Tone {
    Info,
    Saved,
    Warn,
    Error,
}

#[derive(Debug, Clone, PartialEq)]
pub struct Status {
    pub text: String,
    pub tone: Tone,
}

/// Settings fixed for the run.
#[derive(Debug, Clone, PartialEq)]
pub struct Options {
    /// Plain ASCII: no box drawing, no block characters.
    pub ascii: bool,
    /// Colour allowed (false under NO_COLOR).
    pub color: bool,
    /// Name written in the `reviewer` column.
    pub reviewer: String,
    /// The reasons offered by the picker, in order.
    pub reasons: Vec<String>,
}

/// Reasons offered when none are configured (design brief and methods §7 exclusion reasons).
pub const DEFAULT_REASONS: &[&str] = &[
    "artifact",
    "lost unit",
    "valve failure",
    "lick contamination",
    "other",
];

/// One session's journal as this reviewer sees it.
#[derive(Debug, Clone, Default)]
pub struct SessionMarks {
    /// The journal as read from disk (ours that were saved, and other reviewers' rows),
    /// refreshed incrementally.
    pub journal: Journal,
    /// Rows whose append failed: shown as if standing, retried on every refresh.
    pub unsaved: Vec<MarkRow>,
    /// The journal's rows then `unsaved`, folded.
    pub state: MarkState,
    /// A problem reading the journal (torn last line, unreadable row), shown on the status line.
    pub problem: Option<String>,
}

/// What undo restores: the standing mark a trial had before one of our marks.
#[derive(Debug, Clone, PartialEq)]
pub struct UndoEntry {
    pub session: usize,
    pub trial: i64,
    pub before: Option<TrialMark>,
}

/// What the reviewer keeps for one session.
#[derive(Debug, Clone, Default)]
pub struct SessionState {
    /// The trial last looked at (sessions reopen where they were left).
    pub last_trial: usize,
    pub marks: SessionMarks,
    /// Its suggested marks; `None` until the session is first opened.
    pub suggested: Option<SessionSuggestions>,
    /// Its photometry traces once built: preprocessing a long recording is the costly part of
    /// a view and does not depend on the unit, so it is done once per session.
    pub photometry_view: Option<SessionView>,
}

#[derive(Debug)]
pub struct State {
    pub subject: Subject,
    pub opts: Options,
    pub keymap: Keymap,
    pub screen: Screen,
    pub overlay: Overlay,
    /// Index into `subject.sessions`.
    pub session: usize,
    /// Index into the session's `trials`.
    pub trial: usize,
    /// Chosen unit of the current session; `None` = all units.
    pub unit: Option<usize>,
    pub signal: SignalKind,
    /// The cue the days screen follows; `None`: the first cue with a reward delay.
    pub days_cue: Option<String>,
    /// The reviewer's own state of each session, same order as `subject.sessions`.
    pub sessions: Vec<SessionState>,
    pub undo: Vec<UndoEntry>,
    pub status: Status,
    pub model: ModelView,
    pub view: SessionView,
    /// Per model span (same order as `model.spans`), the observations.
    pub obs: Vec<Option<TrialObs>>,
    /// The days table (`summary::day_rows`), rebuilt when marks change.
    pub days: Vec<DayRow>,
    /// The suggestion rules in force (shipped defaults with the user's suggest.toml over them).
    pub rules: RuleSet,
    /// The first frame's state is not complete yet (see `update::finish_startup`).
    pub startup_pending: bool,
    pub quit: bool,
}

impl State {
    pub fn current_session(&self) -> &Session {
        &self.subject.sessions[self.session]
    }

    pub fn current_trial(&self) -> Option<&Trial> {
        self.current_session().trials.get(self.trial)
    }

    /// The standing mark of a trial of the current session.
    pub fn mark_of(&self, trial_number: i64) -> Option<&TrialMark> {
        self.sessions
            .get(self.session)
            .and_then(|s| s.marks.state.marks.get(&trial_number))
    }

    /// Trial notes (and session notes with `None`) of the current session, in file order.
    pub fn notes_of(&self, trial_number: Option<i64>) -> impl Iterator<Item = &MarkRow> {
        self.sessions
            .get(self.session)
            .into_iter()
            .flat_map(|s| s.marks.state.notes.iter())
            .filter(move |r| r.trial == trial_number)
    }

    /// The pending suggestions on a trial of the current session (by trial number).
    pub fn suggestions_of(&self, trial_number: i64) -> &[Suggestion] {
        self.sessions
            .get(self.session)
            .and_then(|s| s.suggested.as_ref())
            .map_or(&[], |s| s.for_trial(trial_number))
    }

    /// All pending suggestions of the current session.
    pub fn pending_suggestions(&self) -> &[Suggestion] {
        self.sessions
            .get(self.session)
            .and_then(|s| s.suggested.as_ref())
            .map_or(&[], |s| s.pending.as_slice())
    }

    /// The chosen unit's id, if one is chosen and the session has spikes.
    pub fn unit_name(&self) -> Option<&str> {
        let spikes = self.current_session().spikes.as_ref()?;
        self.unit
            .and_then(|u| spikes.units.get(u))
            .map(|s| s.as_str())
    }

    /// Model span index of a trial of the current session.
    pub fn span_of(&self, trial: usize) -> Option<usize> {
        self.model
            .span_of
            .get(self.session)
            .and_then(|v| v.get(trial))
            .copied()
            .flatten()
    }
}

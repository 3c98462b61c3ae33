//! `update(&mut State, Action)`: the one place the reviewer's state changes.
//!
//! Marks go to disk here, synchronously, through `marks::append` (durable when it returns):
//! the status line says "saved" only after that, and a failed append keeps the row in memory
//! (shown, flagged, retried on every refresh) instead of pretending.

use super::action::Action;
use super::derived::{self, SessionSuggestions, SessionView};
use super::editor::{editor, open_editor};
use super::state::{NoteTarget, Overlay, Screen, SignalKind, State, Status, Tone, UndoEntry};
use super::suggestions;
use crate::marks::{self, MarkKind, MarkRow};

/// Trials skipped by `jump_forward` / `jump_back`.
const JUMP: usize = 10;

pub fn update(state: &mut State, action: Action) {
    // No action ever sees the first frame's partial state.
    finish_startup(state);
    // Quit wins in every mode (ctrl-c reaches here from the picker and the editor too);
    // everything acknowledged is already on disk.
    if action == Action::Quit {
        state.quit = true;
        return;
    }
    // The once-a-second refresh arrives whatever box is open.
    if action == Action::RefreshMarks {
        refresh(state);
        return;
    }
    match state.overlay.clone() {
        Overlay::Picker { kind, selected } => return picker(state, kind, selected, action),
        Overlay::Editor { .. } => return editor(state, action),
        Overlay::ConfirmAcceptAll { rule, count } => {
            return suggestions::answer(state, rule, count, action)
        }
        Overlay::Help => {
            if matches!(
                action,
                Action::ToggleHelp | Action::Cancel | Action::Confirm
            ) {
                state.overlay = Overlay::None;
            }
            return;
        }
        Overlay::None => {}
    }
    let n = state.current_session().trials.len();
    let last = n.saturating_sub(1);
    match action {
        Action::NextTrial => state.trial = (state.trial + 1).min(last),
        Action::PrevTrial => state.trial = state.trial.saturating_sub(1),
        Action::JumpForward => state.trial = (state.trial + JUMP).min(last),
        Action::JumpBack => state.trial = state.trial.saturating_sub(JUMP),
        Action::FirstTrial => state.trial = 0,
        Action::LastTrial => state.trial = last,
        Action::NextUnmarked => next_unmarked(state),
        Action::NextSameType => next_same_type(state),
        Action::NextSession => open_session(state, state.session + 1),
        Action::PrevSession => {
            if state.session > 0 {
                open_session(state, state.session - 1)
            } else {
                info(state, "this is the first session");
            }
        }
        Action::ShowTrial => state.screen = Screen::Trial,
        Action::ShowSession => state.screen = Screen::Session,
        Action::ShowDays => state.screen = Screen::Days,
        Action::ShowFit => state.screen = Screen::Fit,
        Action::CycleScreen => {
            let i = Screen::ALL
                .iter()
                .position(|s| *s == state.screen)
                .unwrap_or(0);
            state.screen = Screen::ALL[(i + 1) % Screen::ALL.len()];
        }
        Action::NextUnit | Action::PrevUnit => step_unit(state, action == Action::NextUnit),
        Action::CycleSignal => cycle_signal(state),
        Action::NextCue => next_cue(state),
        Action::MarkExclude | Action::MarkSuspect if state.current_trial().is_some() => {
            let kind = if action == Action::MarkExclude {
                MarkKind::Exclude
            } else {
                MarkKind::Suspect
            };
            state.overlay = Overlay::Picker { kind, selected: 0 };
        }
        Action::MarkClear => {
            if let Some(t) = state.current_trial().map(|t| t.number) {
                if state.mark_of(t).is_some() {
                    commit_mark(state, MarkKind::Clear, String::new(), String::new());
                } else {
                    info(state, &format!("trial {t} has no mark to clear"));
                }
            }
        }
        Action::NoteTrial => {
            if let Some(t) = state.current_trial().map(|t| t.number) {
                open_editor(state, NoteTarget::Trial(t));
            }
        }
        Action::NoteSession => open_editor(state, NoteTarget::Session),
        Action::UndoMark => undo(state),
        Action::AcceptSuggestion => suggestions::accept(state),
        Action::RejectSuggestion => suggestions::reject(state),
        Action::AcceptRuleSuggestions => suggestions::ask_accept_all(state),
        Action::NextSuggestion => suggestions::next(state),
        Action::GoToTrial => open_editor(state, NoteTarget::TrialNumber),
        Action::ToggleHelp => state.overlay = Overlay::Help,
        Action::Quit => state.quit = true,
        // Picker and editor keys mean nothing outside them.
        _ => {}
    }
}

pub(super) fn info(state: &mut State, text: &str) {
    state.status = Status {
        text: text.to_string(),
        tone: Tone::Info,
    };
}

fn next_unmarked(state: &mut State) {
    let session = state.current_session();
    let found = (state.trial + 1..session.trials.len())
        .find(|&i| state.mark_of(session.trials[i].number).is_none());
    match found {
        Some(i) => state.trial = i,
        None => info(state, "no unmarked trial after this one"),
    }
}

/// The next trial (wrapping past the last) with the current trial's cues and outcome.
fn next_same_type(state: &mut State) {
    let session = state.current_session();
    let n = session.trials.len();
    let ty = |i: usize| crate::obs::TrialType::of(session, &session.trials[i]);
    let Some(want) = state.current_trial().and_then(|_| ty(state.trial)) else {
        return info(state, "this trial has no type (no cue and no reward)");
    };
    let found = (1..n)
        .map(|k| (state.trial + k) % n)
        .find(|&i| ty(i).as_ref() == Some(&want));
    match found {
        Some(i) => {
            let wrapped = i < state.trial;
            state.trial = i;
            if wrapped {
                info(state, "wrapped to the first trial of this type");
            }
        }
        None => info(state, "no other trial of this type in the session"),
    }
}

/// Switch to another session: rebuild its traces, re-read its journal.
pub fn open_session(state: &mut State, index: usize) {
    if index >= state.subject.sessions.len() {
        info(state, "this is the last session");
        return;
    }
    state.sessions[state.session].last_trial = state.trial;
    state.session = index;
    state.trial = state.sessions[index].last_trial;
    let units = state
        .current_session()
        .spikes
        .as_ref()
        .map_or(0, |s| s.units.len());
    if state.unit.is_some_and(|u| u >= units) {
        state.unit = None;
    }
    if !signal_available(state, state.signal) {
        if let Some(s) = [
            SignalKind::Spikes,
            SignalKind::Photometry,
            SignalKind::Licks,
        ]
        .into_iter()
        .find(|s| signal_available(state, *s))
        {
            state.signal = s;
        }
    }
    rebuild_view(state);
    reread_journal(state, index);
    if !state.startup_pending {
        ensure_suggestions(state, index);
    }
}

/// Run the suggestion rules over a session the first time it is opened.
pub fn ensure_suggestions(state: &mut State, session: usize) {
    if state.sessions[session].suggested.is_none() {
        let built = SessionSuggestions::build(
            &state.subject.sessions[session],
            &state.rules,
            &state.sessions[session].marks.state,
        );
        state.sessions[session].suggested = Some(built);
    }
}

/// Complete what the first frame left out: every trial's trace, the observations (fit and
/// days screens), the session's suggestions. The loop calls it right after the first draw, and
/// every action first, so no key meets a partial state. True if there was something to do.
pub fn finish_startup(state: &mut State) -> bool {
    if !state.startup_pending {
        return false;
    }
    state.startup_pending = false;
    let m = state.model.measurement.clone();
    state.obs = derived::observe_spans(&state.subject, &state.model, &m.obs);
    rebuild_days(state);
    rebuild_view(state);
    ensure_suggestions(state, state.session);
    true
}

fn rebuild_view(state: &mut State) {
    let si = state.session;
    if state.startup_pending {
        let unit = state.unit_name().map(str::to_string);
        let (session, trial) = (state.current_session(), Some(state.trial));
        state.view = SessionView::build_for(session, state.signal, unit.as_deref(), trial);
        return;
    }
    if state.signal == SignalKind::Photometry {
        let cached = &mut state.sessions[si].photometry_view;
        let view = cached.get_or_insert_with(|| {
            SessionView::build(&state.subject.sessions[si], SignalKind::Photometry, None)
        });
        state.view = view.clone();
        return;
    }
    let unit = state.unit_name().map(str::to_string);
    state.view = SessionView::build(state.current_session(), state.signal, unit.as_deref());
}

pub fn signal_available(state: &State, signal: SignalKind) -> bool {
    let s = state.current_session();
    match signal {
        SignalKind::Spikes => s.spikes.as_ref().is_some_and(|x| !x.units.is_empty()),
        SignalKind::Photometry => s.photometry.as_ref().is_some_and(|p| !p.time_s.is_empty()),
        SignalKind::Licks => s.licks.is_some(),
    }
}

fn step_unit(state: &mut State, forward: bool) {
    let n = state
        .current_session()
        .spikes
        .as_ref()
        .map_or(0, |s| s.units.len());
    if n == 0 {
        info(state, "this session has no sorted units");
        return;
    }
    // The cycle is all, 0, 1, ..., n-1, all.
    let pos = state.unit.map_or(0, |u| u + 1);
    let pos = if forward {
        (pos + 1) % (n + 1)
    } else {
        (pos + n) % (n + 1)
    };
    state.unit = pos.checked_sub(1);
    // Photometry and lick traces do not depend on the unit: only the raster changes.
    if state.signal == SignalKind::Spikes {
        rebuild_view(state);
    }
}

/// The days screen follows the next of the subject's cues (in first-seen order, wrapping).
fn next_cue(state: &mut State) {
    let cues = state.subject.cue_names();
    if cues.len() < 2 {
        return info(state, "this subject has one cue only");
    }
    let now = crate::tui::screens::days::followed_cue(state);
    let i = cues.iter().position(|c| Some(c) == now.as_ref());
    let next = cues[i.map_or(0, |i| (i + 1) % cues.len())].clone();
    info(state, &format!("days screen follows {next}"));
    state.days_cue = Some(next);
}

fn cycle_signal(state: &mut State) {
    let order = [
        SignalKind::Spikes,
        SignalKind::Photometry,
        SignalKind::Licks,
    ];
    let i = order.iter().position(|s| *s == state.signal).unwrap_or(0);
    let next = (1..=order.len())
        .map(|k| order[(i + k) % order.len()])
        .find(|s| signal_available(state, *s));
    match next {
        Some(s) if s != state.signal => {
            state.signal = s;
            rebuild_view(state);
            info(state, &format!("showing {}", s.name()));
        }
        _ => info(state, "no other signal recorded in this session"),
    }
}

fn picker(state: &mut State, kind: MarkKind, selected: usize, action: Action) {
    let n = state.opts.reasons.len();
    match action {
        Action::PickerUp => {
            state.overlay = Overlay::Picker {
                kind,
                selected: selected.saturating_sub(1),
            }
        }
        Action::PickerDown => {
            state.overlay = Overlay::Picker {
                kind,
                selected: (selected + 1).min(n.saturating_sub(1)),
            }
        }
        Action::PickReason(i) if i < n => choose_reason(state, kind, i),
        Action::Confirm if selected < n => choose_reason(state, kind, selected),
        Action::Cancel => {
            state.overlay = Overlay::None;
            info(state, "not marked");
        }
        _ => {}
    }
}

fn choose_reason(state: &mut State, kind: MarkKind, i: usize) {
    let reason = state.opts.reasons[i].clone();
    if reason == "other" {
        open_editor(state, NoteTarget::MarkNote { kind, reason });
    } else {
        state.overlay = Overlay::None;
        commit_mark(state, kind, reason, String::new());
    }
}

pub(super) fn new_row(
    state: &State,
    trial: Option<i64>,
    mark: MarkKind,
    reason: String,
    note: String,
) -> MarkRow {
    MarkRow {
        trial,
        mark,
        reason,
        note,
        reviewer: state.opts.reviewer.clone(),
        at: marks::now_rfc3339(),
    }
}

pub(super) fn commit_mark(state: &mut State, kind: MarkKind, reason: String, note: String) {
    let Some(trial) = state.current_trial().map(|t| t.number) else {
        return;
    };
    let before = state.mark_of(trial).cloned();
    let what = match kind {
        MarkKind::Clear => format!("trial {trial} cleared"),
        _ => format!("trial {trial} {} ({reason})", past(kind)),
    };
    let row = new_row(state, Some(trial), kind, reason, note);
    state.undo.push(UndoEntry {
        session: state.session,
        trial,
        before,
    });
    save_row(state, state.session, row, &what);
}

pub(super) fn past(kind: MarkKind) -> &'static str {
    match kind {
        MarkKind::Exclude => "excluded",
        MarkKind::Suspect => "suspect",
        MarkKind::Clear => "cleared",
        MarkKind::Note => "noted",
    }
}

fn undo(state: &mut State) {
    let Some(entry) = state.undo.pop() else {
        info(
            state,
            "nothing of yours to undo (notes stay; add another note to correct one)",
        );
        return;
    };
    let (kind, reason, note, what) = match &entry.before {
        Some(m) => (
            m.kind,
            m.reason.clone(),
            m.note.clone(),
            format!(
                "undo: trial {} {} ({}) again",
                entry.trial,
                past(m.kind),
                m.reason
            ),
        ),
        None => (
            MarkKind::Clear,
            "undo".to_string(),
            String::new(),
            format!("undo: trial {} unmarked again", entry.trial),
        ),
    };
    let row = new_row(state, Some(entry.trial), kind, reason, note);
    save_row(state, entry.session, row, &what);
}

/// Append one row durably; say "saved" only once `marks::append` has returned Ok.
pub(super) fn save_row(state: &mut State, session: usize, row: MarkRow, what: &str) {
    let dir = state.subject.sessions[session].dir.clone();
    match marks::append_within(&dir, &row, super::app::LOCK_WAIT) {
        Ok(()) => {
            state.status = Status {
                text: format!("saved: {what}"),
                tone: Tone::Saved,
            };
            reread_journal(state, session);
        }
        Err(e) => {
            state.sessions[session].marks.unsaved.push(row);
            state.status = Status {
                text: format!(
                    "NOT SAVED: {what}: {e}. Kept in memory only; retrying every second."
                ),
                tone: Tone::Error,
            };
            refold(state, session);
        }
    }
}

fn refold(state: &mut State, session: usize) {
    let sm = &mut state.sessions[session].marks;
    let folded = if sm.unsaved.is_empty() {
        sm.journal.state()
    } else {
        let rows: Vec<MarkRow> = sm.journal.rows.iter().chain(&sm.unsaved).cloned().collect();
        marks::fold(&rows)
    };
    if folded != sm.state {
        sm.state = folded;
        let ss = &mut state.sessions[session];
        if let Some(sugg) = ss.suggested.as_mut() {
            sugg.settle(&ss.marks.state);
        }
        // The days table is empty until start-up has read every journal.
        if !state.days.is_empty() {
            rebuild_days(state);
        }
    }
}

/// Recompute the days table (its means leave out excluded trials).
pub fn rebuild_days(state: &mut State) {
    let marks: Vec<_> = state
        .sessions
        .iter()
        .map(|s| s.marks.state.clone())
        .collect();
    state.days = derived::day_table(&state.subject, &state.model, &state.obs, &marks);
}

/// Read what was appended to one session's journal since the last read (all of it the first
/// time); returns how many rows arrived.
pub fn reread_journal(state: &mut State, session: usize) -> usize {
    let sm = &mut state.sessions[session].marks;
    if sm.journal.path.as_os_str().is_empty() {
        sm.journal.path = state.subject.sessions[session].dir.join(marks::MARKS_FILE);
    }
    let added = match sm.journal.refresh_within(super::app::LOCK_WAIT) {
        Ok(n) => {
            sm.problem = sm.journal.torn_tail.as_ref().map(|(line, _)| {
                format!("marks.csv line {line} is incomplete (torn write?); ignored")
            });
            n
        }
        Err(e) => {
            sm.problem = Some(e.to_string());
            0
        }
    };
    refold(state, session);
    added
}

/// Retry unsaved rows everywhere, then look for rows other reviewers appended to any
/// session's journal.
fn refresh(state: &mut State) {
    let mut retried = 0;
    for si in 0..state.sessions.len() {
        if state.sessions[si].marks.unsaved.is_empty() {
            continue;
        }
        let dir = state.subject.sessions[si].dir.clone();
        let pending = std::mem::take(&mut state.sessions[si].marks.unsaved);
        let mut left = Vec::new();
        for row in pending {
            if left.is_empty() && marks::append_within(&dir, &row, super::app::LOCK_WAIT).is_ok() {
                retried += 1;
            } else {
                left.push(row);
            }
        }
        state.sessions[si].marks.unsaved = left;
        reread_journal(state, si);
    }
    // A stat per session when nothing changed, so every journal is watched (the days screen
    // counts them all).
    let added: usize = (0..state.sessions.len())
        .map(|si| reread_journal(state, si))
        .sum();
    let unsaved: usize = state.sessions.iter().map(|s| s.marks.unsaved.len()).sum();
    if retried > 0 && unsaved == 0 {
        state.status = Status {
            text: format!("saved: {retried} earlier unsaved row(s) now on disk"),
            tone: Tone::Saved,
        };
    } else if unsaved > 0 && state.status.tone != Tone::Error {
        state.status = Status {
            text: format!("{unsaved} row(s) NOT SAVED yet, kept in memory; retrying"),
            tone: Tone::Error,
        };
    } else if added > 0 {
        info(
            state,
            &format!("{added} new row(s) in marks.csv from another reviewer"),
        );
    }
}

/// A message for the status line from outside the key loop (start-up, the follower).
pub fn notice(state: &mut State, text: String, tone: Tone) {
    state.status = Status { text, tone };
}

/// Rows the rig appended to a session being followed (`--follow`): the one message that is
/// not a key. Appends them, then rebuilds what depends on them: that session's traces and
/// suggestions when a trial's window is touched; the model pass, observations and days table
/// only when trials arrived.
pub fn append_recorded(
    state: &mut State,
    session: usize,
    rows: crate::data::follow::NewRows,
    settings: &derived::ModelSettings,
) -> Vec<crate::data::events::RawEvent> {
    let s = &mut state.subject.sessions[session];
    let new_trials = rows.trials.len();
    let arrived_events = rows.events.len();
    // Traces and suggestions look at windows around trials: rows after the last trial's window
    // change neither until the next trial arrives, which rebuilds both.
    let reach = s
        .trials
        .last()
        .and_then(|t| t.cue_s.or(t.reward_s))
        .map_or(f64::INFINITY, |at| at + state.view.to_s);
    let touches =
        rows.licks.iter().any(|&t| t <= reach) || rows.spikes.iter().any(|&(_, t)| t <= reach);
    let waiting = rows.merge_into(s);
    // Events that reached a trial change its layout in the model.
    let attached = arrived_events - waiting.len();
    if new_trials > 0 || attached > 0 {
        let m = state.model.measurement.clone();
        state.model = derived::ModelView::build(&state.subject, settings, &m);
        state.obs = derived::observe_spans(&state.subject, &state.model, &m.obs);
        state.sessions[session].photometry_view = None;
        rebuild_days(state);
    }
    if new_trials == 0 && attached == 0 && !touches {
        return waiting;
    }
    state.sessions[session].suggested = None;
    if session == state.session {
        rebuild_view(state);
        ensure_suggestions(state, session);
    }
    waiting
}

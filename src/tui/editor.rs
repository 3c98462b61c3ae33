//! The one-line editor overlay: notes on a trial or the session, the "other" reason's note,
//! and the trial number to go to. Part of `update`: the only place state changes.

use super::action::Action;
use super::state::{NoteTarget, Overlay, State};
use super::update::{commit_mark, info, new_row, save_row};
use crate::marks::MarkKind;

pub(super) fn open_editor(state: &mut State, target: NoteTarget) {
    state.overlay = Overlay::Editor {
        target,
        text: String::new(),
        cursor: 0,
    };
}

pub(super) fn editor(state: &mut State, action: Action) {
    let Overlay::Editor {
        target,
        text,
        cursor,
    } = &mut state.overlay
    else {
        return;
    };
    let byte_at = |s: &str, c: usize| s.char_indices().nth(c).map_or(s.len(), |(b, _)| b);
    let len = text.chars().count();
    match action {
        Action::TypeChar(c) if !c.is_control() => {
            let b = byte_at(text, *cursor);
            text.insert(b, c);
            *cursor += 1;
        }
        Action::DeleteBack if *cursor > 0 => {
            let b = byte_at(text, *cursor - 1);
            text.remove(b);
            *cursor -= 1;
        }
        Action::CursorLeft => *cursor = cursor.saturating_sub(1),
        Action::CursorRight => *cursor = (*cursor + 1).min(len),
        Action::CursorHome => *cursor = 0,
        Action::CursorEnd => *cursor = len,
        Action::Cancel => {
            let what = match target {
                NoteTarget::TrialNumber => "no trial chosen",
                _ => "note discarded",
            };
            state.overlay = Overlay::None;
            info(state, what);
        }
        Action::Confirm => {
            let target = target.clone();
            let note = text.trim().to_string();
            state.overlay = Overlay::None;
            match target {
                NoteTarget::MarkNote { kind, reason } => commit_mark(state, kind, reason, note),
                NoteTarget::TrialNumber => go_to_trial(state, &note),
                _ if note.is_empty() => info(state, "empty note, nothing written"),
                NoteTarget::Trial(t) => write_note(state, Some(t), note),
                NoteTarget::Session => write_note(state, None, note),
            }
        }
        _ => {}
    }
}

/// Go to the trial of the current session with this number (as trials.csv numbers it).
fn go_to_trial(state: &mut State, text: &str) {
    let Ok(number) = text.parse::<i64>() else {
        return info(state, &format!("`{text}` is not a trial number"));
    };
    let session = state.current_session();
    match session.trials.iter().position(|t| t.number == number) {
        Some(i) => {
            state.trial = i;
            info(state, &format!("trial {number}"));
        }
        None => {
            let (lo, hi) = (
                session.trials.first().map_or(0, |t| t.number),
                session.trials.last().map_or(0, |t| t.number),
            );
            info(
                state,
                &format!("no trial {number} in this session (trials {lo} to {hi})"),
            )
        }
    }
}

fn write_note(state: &mut State, trial: Option<i64>, note: String) {
    let what = match trial {
        Some(t) => format!("note on trial {t}"),
        None => "session note".to_string(),
    };
    let row = new_row(state, trial, MarkKind::Note, String::new(), note);
    save_row(state, state.session, row, &what);
}

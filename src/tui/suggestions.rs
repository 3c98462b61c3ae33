//! What the suggestion keys do: accept or reject the current trial's suggested mark, accept
//! every pending suggestion of one rule after a y/n question, jump to the next suggested trial.
//!
//! The rows come from the core (`suggest::accept_row`, `reject_row`, `accept_all_rows`) and go
//! to disk through the same durable append as every other mark (`update::save_row`), so
//! "saved" still means on disk. The pending list is refolded from the journal after each
//! write (see `update::refold`), never edited by hand.

use super::action::Action;
use super::state::{Overlay, State, Status, Tone, UndoEntry};
use super::update::{info, past, save_row};
use crate::marks;
use crate::suggest::{self, Suggestion};

/// The first pending suggestion on the current trial, if any.
fn current(state: &State) -> Option<Suggestion> {
    let trial = state.current_trial()?.number;
    state.suggestions_of(trial).first().cloned()
}

fn none_here(state: &mut State) {
    let trial = state.current_trial().map_or(0, |t| t.number);
    info(state, &format!("trial {trial} has no pending suggestion"));
}

/// Accept: an ordinary mark (kind from the rules' `accept_as`) whose reason is the rule id.
pub fn accept(state: &mut State) {
    let Some(s) = current(state) else {
        return none_here(state);
    };
    let kind = state.rules.accept_as;
    let row = suggest::accept_row(&s, kind, &state.opts.reviewer);
    state.undo.push(UndoEntry {
        session: state.session,
        trial: s.trial,
        before: state.mark_of(s.trial).cloned(),
    });
    let what = format!("trial {} {} ({})", s.trial, past(kind), s.rule);
    save_row(state, state.session, row, &what);
}

/// Reject: a `reject:<rule>` note on the trial, so the rule does not point at it again.
pub fn reject(state: &mut State) {
    let Some(s) = current(state) else {
        return none_here(state);
    };
    let row = suggest::reject_row(&s, &state.opts.reviewer);
    let what = format!("trial {}: {} suggestion rejected", s.trial, s.rule);
    save_row(state, state.session, row, &what);
}

/// Ask before accepting every pending suggestion of the current trial's rule.
pub fn ask_accept_all(state: &mut State) {
    let Some(s) = current(state) else {
        return none_here(state);
    };
    let count = state
        .pending_suggestions()
        .iter()
        .filter(|p| p.rule == s.rule)
        .count();
    state.overlay = Overlay::ConfirmAcceptAll {
        rule: s.rule,
        count,
    };
}

/// The answer to the accept-all question.
pub fn answer(state: &mut State, rule: &'static str, asked: usize, action: Action) {
    match action {
        Action::Confirm => {
            state.overlay = Overlay::None;
            accept_all(state, rule, asked);
        }
        Action::Cancel => {
            state.overlay = Overlay::None;
            info(state, &format!("nothing accepted ({rule})"));
        }
        _ => {}
    }
}

/// Write one accept row per pending suggestion of `rule`, each durably. After the first failed
/// append the rest are not tried: all of them wait in memory and are retried with the others.
fn accept_all(state: &mut State, rule: &'static str, asked: usize) {
    let kind = state.rules.accept_as;
    let si = state.session;
    let rows = suggest::accept_all_rows(
        state.pending_suggestions(),
        rule,
        kind,
        &state.opts.reviewer,
    );
    let total = rows.len();
    let dir = state.subject.sessions[si].dir.clone();
    let mut saved = 0;
    let mut failure = None;
    for row in rows {
        if failure.is_none() {
            let trial = row.trial.unwrap_or_default();
            let before = state.mark_of(trial).cloned();
            match marks::append_within(&dir, &row, super::app::LOCK_WAIT) {
                Ok(()) => {
                    saved += 1;
                    state.undo.push(UndoEntry {
                        session: si,
                        trial,
                        before,
                    });
                    continue;
                }
                Err(e) => failure = Some(e.to_string()),
            }
        }
        state.sessions[si].marks.unsaved.push(row);
    }
    // Fold what is on disk and what waits in memory; the pending list follows.
    super::update::reread_journal(state, si);
    let changed = if total == asked {
        String::new()
    } else {
        format!(" (asked about {asked}; the journal changed meanwhile)")
    };
    state.status = match failure {
        None => Status {
            text: format!("saved: {saved} trial(s) {} ({rule}){changed}", past(kind)),
            tone: Tone::Saved,
        },
        Some(e) => Status {
            text: format!(
                "NOT SAVED: {} of {total} {rule} mark(s): {e}. Kept in memory only; retrying \
                 every second.",
                total - saved
            ),
            tone: Tone::Error,
        },
    };
}

/// Go to the next trial (after the current one, wrapping once) with a pending suggestion.
pub fn next(state: &mut State) {
    let trials = &state.current_session().trials;
    let n = trials.len();
    let found = (1..=n).map(|k| (state.trial + k) % n).find_map(|i| {
        let s = state.suggestions_of(trials[i].number).first()?;
        Some((i, format!("trial {}: suggested {}", s.trial, s.rule)))
    });
    match found {
        Some((i, text)) => {
            state.trial = i;
            info(state, &text);
        }
        None => info(state, "no pending suggestion in this session"),
    }
}

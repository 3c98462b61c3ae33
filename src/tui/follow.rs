//! `review --follow`: watch one session's table files while the rig records, and hand what
//! arrives to [`update::append_recorded`] — the loop polls, `update` changes the state.

use super::derived::ModelSettings;
use super::state::{State, Tone};
use super::update;
use crate::data::events::RawEvent;
use crate::data::follow::{Polled, TableKind, Tail};
use crate::data::Session;

/// Said wherever following is shown: a fit is heavy and the rig's machine is recording.
pub const FIT_CAUTION: &str = "do not run fits on this rig while it records";

/// The tails of the session being followed, and what has arrived so far.
#[derive(Debug)]
pub struct Follower {
    /// Index of the followed session in `State::subject.sessions`.
    pub session: usize,
    tails: Vec<Tail>,
    settings: ModelSettings,
    /// Trials appended since following began.
    pub new_trials: usize,
    /// Set once a file shrank or was replaced: following stops, the reviewer must reopen.
    pub stopped: Option<String>,
    /// events.csv rows whose trial has not reached trials.csv yet.
    waiting: Vec<RawEvent>,
}

impl Follower {
    /// Follow `session` (index `index`) from the current end of its events, trials, spikes and
    /// licks files. A file missing now is not picked up later (the rig writes them from the
    /// start); a header that cannot be read is an error. events.csv is polled first so that a
    /// trial given only by its events is known when its trials.csv row arrives.
    pub fn start(
        index: usize,
        session: &Session,
        settings: ModelSettings,
    ) -> Result<Self, crate::data::Diagnostic> {
        let mut tails = Vec::new();
        let kinds = [
            TableKind::Events,
            TableKind::Trials,
            TableKind::Spikes,
            TableKind::Licks,
        ];
        for kind in kinds {
            match Tail::at_end(&session.dir, kind, &session.meta) {
                Ok(Some(t)) => tails.push(t),
                Ok(None) => {}
                Err(d) => return Err(d),
            }
        }
        Ok(Follower {
            session: index,
            tails,
            settings,
            new_trials: 0,
            stopped: None,
            waiting: Vec::new(),
        })
    }

    /// Poll every tail once and apply what arrived. Returns whether anything changed.
    pub fn poll_into(&mut self, state: &mut State) -> bool {
        if self.stopped.is_some() {
            return false;
        }
        let mut arrived = crate::data::follow::NewRows::default();
        for tail in &mut self.tails {
            if tail.kind() == TableKind::Trials {
                let waiting = self.waiting.iter().chain(&arrived.events);
                tail.note_event_trials(waiting.map(|e| e.trial));
            }
            match tail.poll() {
                Polled::Unchanged => {}
                Polled::Rows(r) => {
                    arrived.trials.extend(r.trials);
                    arrived.spikes.extend(r.spikes);
                    arrived.licks.extend(r.licks);
                    arrived.events.extend(r.events);
                    arrived.diagnostics.extend(r.diagnostics);
                }
                Polled::Reload(why) => {
                    let text = format!("following stopped: {why}; reopen the session to reload");
                    update::notice(state, text.clone(), Tone::Error);
                    self.stopped = Some(text);
                    return true;
                }
            }
        }
        if arrived.is_empty() {
            return false;
        }
        // Events still waiting for their trial go in again; they attach once it arrives.
        let mut events = std::mem::take(&mut self.waiting);
        events.append(&mut arrived.events);
        arrived.events = events;
        self.new_trials += arrived.trials.len();
        let problems = arrived.diagnostics.len();
        let first_problem = arrived.diagnostics.first().map(|d| d.to_string());
        self.waiting = update::append_recorded(state, self.session, arrived, &self.settings);
        match first_problem {
            Some(p) => update::notice(
                state,
                format!("following: {problems} bad row(s) left out, first: {p}"),
                Tone::Warn,
            ),
            None => update::notice(state, self.status_text(), Tone::Info),
        }
        true
    }

    /// "following: N new trials — caution".
    pub fn status_text(&self) -> String {
        format!("following: {} new trials — {FIT_CAUTION}", self.new_trials)
    }
}

//! Typed session data: what a subject, a session and a trial are, as loaded from the folder
//! layout fixed in the design brief.
//!
//! Start at [`load`] (a subject or session folder → [`Subject`]); `check` reuses the same
//! readers to list every problem. All times are seconds on the session clock.

mod consistency;
pub mod csvio;
pub mod diag;
pub mod events;
pub mod fast;
pub mod follow;
pub(crate) mod guard;
pub mod load;
mod lookalike;
pub mod meta;
pub mod number;
pub mod tables;
mod units;

pub use diag::{Diagnostic, Severity};
pub use load::{load, load_partial, scan, LoadFailure, Loaded, Partial, Scan};

use std::path::PathBuf;

/// All sessions of one animal, in training order (date, start_time, folder name; a session
/// without start_time comes first on its date).
#[derive(Debug, Clone, Default)]
pub struct Subject {
    /// The folder that was opened (a subject folder, or one session folder).
    pub root: PathBuf,
    pub sessions: Vec<Session>,
}

#[derive(Debug, Clone)]
pub struct Session {
    /// The session folder.
    pub dir: PathBuf,
    /// The session folder's name: the `session` column of every output table.
    pub name: String,
    pub meta: SessionMeta,
    /// In `trial` order.
    pub trials: Vec<Trial>,
    pub spikes: Option<Spikes>,
    /// Lick times, sorted.
    pub licks: Option<Vec<f64>>,
    pub photometry: Option<Photometry>,
}

/// The contents of `session.toml`.
#[derive(Debug, Clone, PartialEq)]
pub struct SessionMeta {
    pub subject: String,
    /// ISO date `YYYY-MM-DD` (validated on load, kept as text; it sorts correctly).
    pub date: String,
    /// `HH:MM:SS` when given.
    pub start_time: Option<String>,
    pub rig: Option<String>,
    pub cues: Vec<CueDef>,
}

/// One `[[cue]]` table.
#[derive(Debug, Clone, PartialEq)]
pub struct CueDef {
    pub name: String,
    /// Cue onset → reward on rewarded trials; `None` when the cue is never rewarded.
    pub reward_delay_s: Option<f64>,
}

#[derive(Debug, Clone, PartialEq, Default)]
pub struct Trial {
    /// The `trial` column (unique, increasing).
    pub number: i64,
    /// Index into `SessionMeta::cues`; `None` for an uncued reward.
    pub cue: Option<usize>,
    pub cue_s: Option<f64>,
    pub reward_s: Option<f64>,
    /// 0 when no reward.
    pub reward_ul: f64,
    /// The optional `cue_off_s` column: when the trials.csv cue goes off (`None`: on to the
    /// end of the trial's span).
    pub cue_off_s: Option<f64>,
    /// The trial's rows of the optional `events.csv`, in time order (empty without one).
    pub events: Vec<TrialEvent>,
}

/// One cue or reward event of a trial (a row of `events.csv`, or the trials.csv cue and
/// reward seen as events by [`Trial::all_events`]).
#[derive(Debug, Clone, PartialEq)]
pub struct TrialEvent {
    pub kind: EventKind,
    /// For a cue: index into `SessionMeta::cues`.
    pub cue: Option<usize>,
    pub onset_s: f64,
    /// Cue offset; `None`: on to the end of the trial's span (and always for rewards).
    pub offset_s: Option<f64>,
    /// Reward size (same unit as `reward_ul`); 0 for cues.
    pub size: f64,
}

#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum EventKind {
    Cue,
    Reward,
}

impl Trial {
    /// True when the trial is more than the one cue and one reward of trials.csv (rows in
    /// events.csv or a cue offset): the model then lays it out from its event list.
    pub fn has_events(&self) -> bool {
        !self.events.is_empty() || self.cue_off_s.is_some()
    }

    /// Every event of the trial in time order (stable: trials.csv's own cue and reward first
    /// among equal times): its trials.csv cue and reward, if any, plus its events.csv rows.
    pub fn all_events(&self) -> Vec<TrialEvent> {
        let mut all = Vec::with_capacity(self.events.len() + 2);
        if let (Some(c), Some(t)) = (self.cue, self.cue_s) {
            all.push(TrialEvent {
                kind: EventKind::Cue,
                cue: Some(c),
                onset_s: t,
                offset_s: self.cue_off_s,
                size: 0.0,
            });
        }
        if let Some(t) = self.reward_s {
            all.push(TrialEvent {
                kind: EventKind::Reward,
                cue: None,
                onset_s: t,
                offset_s: None,
                size: self.reward_ul,
            });
        }
        all.extend(self.events.iter().cloned());
        all.sort_by(|a, b| a.onset_s.total_cmp(&b.onset_s));
        all
    }
}

/// Sorted single units: spike times per unit, each list sorted.
#[derive(Debug, Clone, Default, PartialEq)]
pub struct Spikes {
    pub units: Vec<String>,
    pub times: Vec<Vec<f64>>,
}

/// Continuous dopamine-sensor trace (and optional isosbestic control), on one time base.
#[derive(Debug, Clone, Default, PartialEq)]
pub struct Photometry {
    pub time_s: Vec<f64>,
    pub signal: Vec<f64>,
    pub control: Option<Vec<f64>>,
}

impl Session {
    /// The session sort key of the brief: (date, start_time with "none" first, folder name).
    pub fn order_key(&self) -> (String, bool, String, String) {
        (
            self.meta.date.clone(),
            self.meta.start_time.is_some(),
            self.meta.start_time.clone().unwrap_or_default(),
            self.name.clone(),
        )
    }

    pub fn cue_name(&self, trial: &Trial) -> Option<&str> {
        trial.cue.map(|c| self.meta.cues[c].name.as_str())
    }

    /// Cue onset → expected reward for this trial's cue (0 for uncued trials or unrewarded cues).
    pub fn reward_delay(&self, trial: &Trial) -> f64 {
        trial
            .cue
            .and_then(|c| self.meta.cues[c].reward_delay_s)
            .unwrap_or(0.0)
    }
}

impl Subject {
    /// Cue names across all sessions, in first-seen order; the model gives each its own features.
    pub fn cue_names(&self) -> Vec<String> {
        let mut names: Vec<String> = Vec::new();
        for s in &self.sessions {
            for c in &s.meta.cues {
                if !names.contains(&c.name) {
                    names.push(c.name.clone());
                }
            }
        }
        names
    }
}

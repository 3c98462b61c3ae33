//! Observations of trials with an event list (the "Trial events" extension): one cue
//! observation per cue event (window after its onset), one reward observation per delivered
//! reward event, and on an omission trial one window at each expected reward time. Each is
//! named so that tables can tell them apart: `cue:<name>`, `reward:<n>` (n-th delivered
//! reward of the trial, from 1), `omission:<name>` (the expected reward of that cue).
//!
//! Plain single-cue trials never come here: their observations are the cue and reward pair
//! of [`super::TrialObs`], unchanged.

use super::{ObsOptions, TrialKind};
use crate::data::{EventKind, Session, Trial, TrialEvent};

/// Which kind of event a window follows.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash, PartialOrd, Ord)]
pub enum EventWindow {
    Cue,
    Reward,
    /// At an expected reward time of a trial without any reward.
    Omission,
}

/// One observed response of a trial with an event list.
#[derive(Debug, Clone, PartialEq)]
pub struct EventObs {
    pub window: EventWindow,
    /// `cue:<name>`, `reward:<n>` or `omission:<name>` (a repeated cue: `cue:<name>:<k>`).
    pub label: String,
    /// The event (or expected reward) time on the session clock.
    pub time_s: f64,
    /// Window mean − baseline; `None` where nothing was measured.
    pub value: Option<f64>,
}

/// Cue events with a declared cue, in time order.
fn cue_events(events: &[TrialEvent]) -> impl Iterator<Item = (&TrialEvent, usize)> {
    events
        .iter()
        .filter(|e| e.kind == EventKind::Cue)
        .filter_map(|e| Some((e, e.cue?)))
}

/// Expected reward times: onset + `reward_delay_s` of every cue event whose cue declares one.
pub fn expected_times(session: &Session, events: &[TrialEvent]) -> Vec<(usize, f64)> {
    cue_events(events)
        .filter_map(|(e, c)| Some((c, e.onset_s + session.meta.cues[c].reward_delay_s?)))
        .collect()
}

/// The kind of a trial with an event list: any cue and any reward → rewarded; cues with an
/// expected time and no reward → omission; cues never rewarded → unrewarded cue.
pub fn kind_of(session: &Session, trial: &Trial) -> Option<TrialKind> {
    let events = trial.all_events();
    let cued = cue_events(&events).next().is_some();
    let rewarded = events.iter().any(|e| e.kind == EventKind::Reward);
    match (cued, rewarded) {
        (true, true) => Some(TrialKind::Rewarded),
        (true, false) if !expected_times(session, &events).is_empty() => Some(TrialKind::Omission),
        (true, false) => Some(TrialKind::UnrewardedCue),
        (false, true) => Some(TrialKind::UncuedReward),
        (false, false) => None,
    }
}

/// The alignment time of the model: the earliest cue onset, or the earliest reward.
pub fn alignment(trial: &Trial) -> Option<f64> {
    let events = trial.all_events();
    let first_cue = cue_events(&events).map(|(e, _)| e.onset_s).next();
    first_cue.or_else(|| events.first().map(|e| e.onset_s))
}

/// Every event observation of the trial, in order (cues, rewards, omissions), not yet measured.
pub fn plan(session: &Session, trial: &Trial) -> Vec<EventObs> {
    let events = trial.all_events();
    let mut out = Vec::new();
    let mut seen: Vec<usize> = Vec::new();
    for (e, c) in cue_events(&events) {
        let name = &session.meta.cues[c].name;
        let k = seen.iter().filter(|&&s| s == c).count();
        seen.push(c);
        let label = match k {
            0 => format!("cue:{name}"),
            k => format!("cue:{name}:{}", k + 1),
        };
        out.push(EventObs {
            window: EventWindow::Cue,
            label,
            time_s: e.onset_s,
            value: None,
        });
    }
    let rewards: Vec<&TrialEvent> = events
        .iter()
        .filter(|e| e.kind == EventKind::Reward)
        .collect();
    for (i, e) in rewards.iter().enumerate() {
        out.push(EventObs {
            window: EventWindow::Reward,
            label: format!("reward:{}", i + 1),
            time_s: e.onset_s,
            value: None,
        });
    }
    if rewards.is_empty() {
        for (c, t) in expected_times(session, &events) {
            out.push(EventObs {
                window: EventWindow::Omission,
                label: format!("omission:{}", session.meta.cues[c].name),
                time_s: t,
                value: None,
            });
        }
    }
    out
}

/// The measuring window of an event observation on the session clock.
pub fn window_of(e: &EventObs, opts: &ObsOptions) -> (f64, f64) {
    let w = match e.window {
        EventWindow::Cue => opts.cue_window,
        EventWindow::Reward | EventWindow::Omission => opts.reward_window,
    };
    (e.time_s + w.0, e.time_s + w.1)
}

//! What a trial was, for grouping: the set of cues presented and what happened
//! ([`TrialKind`]). A blocking design then reads as "tone-a rewarded", "tone-a + light-b
//! rewarded", "light-b omission"; a plain one-cue trial is its cue and outcome as before.

use super::{TrialKind, TrialObs};
use crate::data::{EventKind, Session, Trial};

/// The cues of a trial (indices into `SessionMeta::cues`, each once, in `session.toml` order)
/// and its outcome.
#[derive(Debug, Clone, PartialEq, Eq, Hash)]
pub struct TrialType {
    pub cues: Vec<usize>,
    pub kind: TrialKind,
}

impl TrialType {
    /// `None` for a trial with neither cue nor reward (the model skips it too).
    pub fn of(session: &Session, trial: &Trial) -> Option<TrialType> {
        let kind = TrialKind::of(session, trial)?;
        Some(TrialType {
            cues: cues_presented(trial),
            kind,
        })
    }

    /// Grouping order within a session: by cue (`session.toml` order; a compound after its
    /// first cue alone), then outcome; uncued rewards last.
    pub fn order_key(&self) -> (Vec<usize>, TrialKind) {
        let cues = if self.cues.is_empty() {
            vec![usize::MAX]
        } else {
            self.cues.clone()
        };
        (cues, self.kind)
    }

    /// The cue names joined with " + " (empty for an uncued reward).
    pub fn cue_label(&self, session: &Session) -> String {
        self.cues
            .iter()
            .filter_map(|&c| session.meta.cues.get(c))
            .map(|c| c.name.as_str())
            .collect::<Vec<_>>()
            .join(" + ")
    }

    /// "tone-a + light-b rewarded"; an uncued reward is its outcome alone.
    pub fn label(&self, session: &Session) -> String {
        match self.cues.is_empty() {
            true => self.kind.name().to_string(),
            false => format!("{} {}", self.cue_label(session), self.kind.name()),
        }
    }
}

/// Every declared cue the trial presents (its trials.csv cue and its events.csv cues), each
/// once, in `session.toml` order.
pub fn cues_presented(trial: &Trial) -> Vec<usize> {
    let mut cues: Vec<usize> = trial.cue.into_iter().collect();
    cues.extend(
        trial
            .events
            .iter()
            .filter(|e| e.kind == EventKind::Cue)
            .filter_map(|e| e.cue),
    );
    cues.sort_unstable();
    cues.dedup();
    cues
}

/// The session's trials grouped by type in [`TrialType::order_key`] order, trial order kept
/// within a group; trials with no type are left out.
pub fn group_by_type(session: &Session) -> Vec<(TrialType, Vec<usize>)> {
    let mut groups: Vec<(TrialType, Vec<usize>)> = Vec::new();
    for (i, t) in session.trials.iter().enumerate() {
        let Some(ty) = TrialType::of(session, t) else {
            continue;
        };
        match groups.iter_mut().find(|(g, _)| *g == ty) {
            Some((_, trials)) => trials.push(i),
            None => groups.push((ty, vec![i])),
        }
    }
    groups.sort_by_key(|g| g.0.order_key());
    groups
}

/// The latest reward, delivered or expected, of any trial of the session, in seconds from the
/// trial's alignment time: what a per-trial picture must show. A cue declared but never
/// presented does not count; a jittered or second reward does.
pub fn latest_reward_s(session: &Session) -> f64 {
    let mut latest = 0.0_f64;
    for trial in &session.trials {
        let Some(t0) = super::alignment_time(trial) else {
            continue;
        };
        let events = trial.all_events();
        let expected = super::events::expected_times(session, &events);
        let delivered = events.iter().filter(|e| e.kind == EventKind::Reward);
        let times = expected
            .iter()
            .map(|(_, t)| *t)
            .chain(delivered.map(|e| e.onset_s));
        for t in times {
            // To the microsecond: clock arithmetic must not add a bin to a picture.
            let d = ((t - t0) * 1e6).round() / 1e6;
            if d.is_finite() {
                latest = latest.max(d);
            }
        }
    }
    latest
}

/// How a trial presented a cue: its window's response, and whether it was the trial's first
/// cue (the model's cue-window δ is the first cue's).
pub struct CuePresentation {
    pub response: Option<f64>,
    pub first: bool,
}

/// `None` when the trial did not present the cue `name`. A plain trial presents its
/// trials.csv cue; a trial with an event list every cue it lists (the first onset of each).
pub fn cue_presentation(session: &Session, o: &TrialObs, name: &str) -> Option<CuePresentation> {
    let trial = &session.trials[o.trial];
    if o.events.is_empty() {
        return (session.cue_name(trial) == Some(name)).then_some(CuePresentation {
            response: o.cue,
            first: true,
        });
    }
    // No allocation and one scan: this runs per trial on every frame of the days screen.
    let (at, e) = o
        .events
        .iter()
        .filter(|e| e.label.starts_with("cue:"))
        .enumerate()
        .find(|(_, e)| e.label.strip_prefix("cue:") == Some(name))?;
    Some(CuePresentation {
        response: e.value,
        first: at == 0,
    })
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::data::{CueDef, SessionMeta, TrialEvent};

    fn session(trials: Vec<Trial>) -> Session {
        let cue = |name: &str| CueDef {
            name: name.into(),
            reward_delay_s: Some(1.5),
        };
        Session {
            dir: "s".into(),
            name: "s".into(),
            meta: SessionMeta {
                subject: "m".into(),
                date: "2026-03-02".into(),
                start_time: None,
                rig: None,
                cues: vec![cue("tone-a"), cue("light-b")],
            },
            trials,
            spikes: None,
            licks: None,
            photometry: None,
        }
    }

    fn trial(number: i64, cue: Option<usize>, reward: bool, extra: Option<usize>) -> Trial {
        Trial {
            number,
            cue,
            cue_s: cue.map(|_| 10.0),
            reward_s: reward.then_some(11.5),
            reward_ul: if reward { 3.0 } else { 0.0 },
            cue_off_s: None,
            events: extra
                .map(|c| TrialEvent {
                    kind: EventKind::Cue,
                    cue: Some(c),
                    onset_s: 10.0,
                    offset_s: None,
                    size: 0.0,
                })
                .into_iter()
                .collect(),
        }
    }

    #[test]
    fn a_blocking_session_groups_into_its_designed_types() {
        let s = session(vec![
            trial(1, Some(0), true, Some(1)),
            trial(2, Some(1), false, None),
            trial(3, Some(0), true, None),
            trial(4, None, true, None),
            trial(5, Some(0), true, Some(1)),
            trial(6, Some(1), true, Some(0)),
        ]);
        let groups: Vec<(String, Vec<usize>)> = group_by_type(&s)
            .into_iter()
            .map(|(t, v)| (t.label(&s), v))
            .collect();
        assert_eq!(
            groups,
            vec![
                ("tone-a rewarded".to_string(), vec![2]),
                ("tone-a + light-b rewarded".to_string(), vec![0, 4, 5]),
                ("light-b omission".to_string(), vec![1]),
                ("uncued_reward".to_string(), vec![3]),
            ]
        );
    }
}

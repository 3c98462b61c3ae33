//! Trials as spans of model time bins, aligned on cue onset (uncued trials: on the reward).

use super::{BIN_EPS, POST_S};
use crate::data::{Session, Subject, Trial};

/// One trial as the model sees it.
#[derive(Debug, Clone, PartialEq)]
pub struct TrialSpan {
    /// Index into `Subject::sessions`.
    pub session: usize,
    /// Index into that session's `trials`.
    pub trial: usize,
    /// Alignment time on the session clock: cue onset, or the reward for uncued trials.
    pub t0: f64,
    /// Bins k = 0..n_bins-1 (the terminal step k = n_bins is not a bin).
    pub n_bins: usize,
    /// Subject-level cue index (position in `Subject::cue_names`).
    pub cue: Option<usize>,
    /// Bin the delivered reward falls in.
    pub reward_bin: Option<usize>,
    /// Reward size (`reward_ul`), 0 when none.
    pub reward: f64,
    /// Bin of the expected reward (cue's delay), also on omission trials; `None` if never rewarded.
    pub expected_reward_bin: Option<usize>,
}

/// The bin an event at `t` falls in, for a span starting at `t0`.
pub fn bin_of(t: f64, t0: f64, dt: f64) -> i64 {
    ((t - t0) / dt + BIN_EPS).floor() as i64
}

/// K = ceil((D + post)/dt − 1e-9).
pub fn base_bins(delay: f64, dt: f64) -> usize {
    ((delay + POST_S) / dt - BIN_EPS).ceil().max(1.0) as usize
}

/// Spans for every trial of every session, in training order. Trials with neither cue nor
/// reward (which `check` rejects) and rewards before the cue are skipped rather than guessed at.
pub fn layout_subject(subject: &Subject, dt: f64) -> Vec<TrialSpan> {
    let names = subject.cue_names();
    let mut out = Vec::new();
    for (si, session) in subject.sessions.iter().enumerate() {
        let cue_map: Vec<usize> = session
            .meta
            .cues
            .iter()
            .map(|c| names.iter().position(|n| n == &c.name).unwrap_or(0))
            .collect();
        for (ti, trial) in session.trials.iter().enumerate() {
            if let Some(span) = layout_trial(session, trial, &cue_map, dt) {
                out.push(TrialSpan {
                    session: si,
                    trial: ti,
                    ..span
                });
            }
        }
    }
    out
}

fn layout_trial(session: &Session, trial: &Trial, cue_map: &[usize], dt: f64) -> Option<TrialSpan> {
    let (t0, cue) = match (trial.cue, trial.cue_s, trial.reward_s) {
        (Some(c), Some(cs), _) => (cs, Some(cue_map[c])),
        (None, _, Some(rs)) => (rs, None),
        _ => return None,
    };
    let delay = session.reward_delay(trial);
    let mut n_bins = base_bins(delay, dt);
    let reward_bin = match trial.reward_s {
        Some(rs) => {
            let b = bin_of(rs, t0, dt);
            if b < 0 {
                return None;
            }
            let b = b as usize;
            n_bins = n_bins.max(b + 1);
            Some(b)
        }
        None => None,
    };
    let expected_reward_bin = trial
        .cue
        .and_then(|c| session.meta.cues[c].reward_delay_s)
        .map(|d| bin_of(t0 + d, t0, dt).max(0) as usize)
        .or(if trial.cue.is_none() {
            reward_bin
        } else {
            None
        });
    Some(TrialSpan {
        session: 0,
        trial: 0,
        t0,
        n_bins,
        cue,
        reward_bin,
        reward: if reward_bin.is_some() {
            trial.reward_ul
        } else {
            0.0
        },
        expected_reward_bin,
    })
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn edge_event_lands_in_later_bin() {
        // 1.5 / 0.05 is 29.999999999999996 in f64; the tolerance keeps it in bin 30.
        assert_eq!(bin_of(1.5, 0.0, 0.05), 30);
        assert_eq!(base_bins(1.5, 0.05), 50);
        assert_eq!(base_bins(0.0, 0.05), 20);
    }
}

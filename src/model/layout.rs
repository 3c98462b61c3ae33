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
    /// The trial's event list, for a trial with more than one cue and one reward (events.csv
    /// rows or a cue offset). `None` for the plain single-cue trial, which the fields above
    /// describe completely. When present, the fields above summarise it: `cue` is the first
    /// cue, `reward_bin` the first reward, `reward` the total, `expected_reward_bin` the first
    /// expected time.
    pub events: Option<Box<SpanEvents>>,
}

/// The events of one trial in model bins (the "Trial events" section of the brief).
#[derive(Debug, Clone, PartialEq, Default)]
pub struct SpanEvents {
    /// Cue events in time order.
    pub cues: Vec<SpanCue>,
    /// Delivered rewards as (bin, size), in time order.
    pub rewards: Vec<(usize, f64)>,
    /// Expected reward bins: onset + `reward_delay_s` of every cue event whose cue declares
    /// one, in time order.
    pub expected: Vec<usize>,
}

/// One cue event in model bins.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct SpanCue {
    /// Subject-level cue index (position in `Subject::cue_names`).
    pub cue: usize,
    /// Index into the session's `[[cue]]` tables.
    pub session_cue: usize,
    pub onset: usize,
    /// First bin the cue is off (its offset's bin), or the span's length.
    pub offset: usize,
}

impl TrialSpan {
    /// r_k: the reward delivered in bin `k` (the sum over reward events in that bin).
    #[inline]
    pub fn reward_at(&self, k: usize) -> f64 {
        match &self.events {
            None => {
                if self.reward_bin == Some(k) {
                    self.reward
                } else {
                    0.0
                }
            }
            Some(ev) => ev
                .rewards
                .iter()
                .filter(|&&(b, _)| b == k)
                .map(|&(_, r)| r)
                .sum(),
        }
    }

    /// Subject-level indices of the cues present on the trial, each once, in time order.
    pub fn cues_present(&self) -> Vec<usize> {
        match &self.events {
            None => self.cue.into_iter().collect(),
            Some(ev) => {
                let mut present: Vec<usize> = Vec::new();
                for c in &ev.cues {
                    if !present.contains(&c.cue) {
                        present.push(c.cue);
                    }
                }
                present
            }
        }
    }

    /// Bins of every delivered reward (one for a plain trial with a reward).
    pub fn reward_bins(&self) -> Vec<usize> {
        match &self.events {
            None => self.reward_bin.into_iter().collect(),
            Some(ev) => ev.rewards.iter().map(|&(b, _)| b).collect(),
        }
    }

    /// Bins of every expected reward (one for a plain trial whose cue declares a delay).
    pub fn expected_bins(&self) -> Vec<usize> {
        match &self.events {
            None => self.expected_reward_bin.into_iter().collect(),
            Some(ev) => ev.expected.clone(),
        }
    }
}

/// The bin an event at `t` falls in, for a span starting at `t0`.
pub fn bin_of(t: f64, t0: f64, dt: f64) -> i64 {
    ((t - t0) / dt + BIN_EPS).floor() as i64
}

/// K = ceil((D + post)/dt − 1e-9).
pub fn base_bins(delay: f64, dt: f64) -> usize {
    ((delay + POST_S) / dt - BIN_EPS).ceil().max(1.0) as usize
}

/// Longest trial span the model lays out (5000 s at the default 50 ms bins). Real trials are
/// seconds long; more means a reward_delay_s or reward time far from its cue (a typo, a unit
/// mix-up) or a tiny --dt, and laying it out would take gigabytes.
pub const MAX_TRIAL_BINS: usize = 100_000;

/// A trial the model cannot place on a time line (which `check` rejects): left out of the
/// spans and reported so the shell can say so.
#[derive(Debug, Clone, PartialEq)]
pub struct SkippedTrial {
    /// Index into `Subject::sessions`.
    pub session: usize,
    /// Index into that session's `trials`.
    pub trial: usize,
    pub reason: &'static str,
}

/// Spans for every trial of every session, in training order. Trials with neither cue nor
/// reward (which `check` rejects) and rewards before the cue are skipped rather than guessed at.
pub fn layout_subject(subject: &Subject, dt: f64) -> Vec<TrialSpan> {
    layout_subject_with_skips(subject, dt).0
}

/// As [`layout_subject`], also listing the trials it left out and why.
///
/// Training order is imposed here, not trusted to the caller: sessions by
/// [`Session::order_key`] (date, start_time with none first, folder name), trials by number.
/// Both sorts are stable and cost nothing when the loader already ordered them.
pub fn layout_subject_with_skips(
    subject: &Subject,
    dt: f64,
) -> (Vec<TrialSpan>, Vec<SkippedTrial>) {
    let names = subject.cue_names();
    let mut out = Vec::new();
    let mut skipped = Vec::new();
    let mut session_order: Vec<usize> = (0..subject.sessions.len()).collect();
    session_order.sort_by_cached_key(|&i| subject.sessions[i].order_key());
    for si in session_order {
        let session = &subject.sessions[si];
        let cue_map: Vec<usize> = session
            .meta
            .cues
            .iter()
            .map(|c| names.iter().position(|n| n == &c.name).unwrap_or(0))
            .collect();
        let mut trial_order: Vec<usize> = (0..session.trials.len()).collect();
        trial_order.sort_by_key(|&i| session.trials[i].number);
        for ti in trial_order {
            match layout_trial(session, &session.trials[ti], &cue_map, dt) {
                Ok(span) => out.push(TrialSpan {
                    session: si,
                    trial: ti,
                    ..span
                }),
                Err(reason) => skipped.push(SkippedTrial {
                    session: si,
                    trial: ti,
                    reason,
                }),
            }
        }
    }
    (out, skipped)
}

fn layout_trial(
    session: &Session,
    trial: &Trial,
    cue_map: &[usize],
    dt: f64,
) -> Result<TrialSpan, &'static str> {
    if trial.has_events() {
        return super::layout_events::layout_events(session, trial, cue_map, dt);
    }
    let (t0, cue) = match (trial.cue, trial.cue_s, trial.reward_s) {
        (Some(c), Some(cs), _) => (cs, Some(cue_map[c])),
        (Some(_), None, _) => return Err("cue named but no cue_s"),
        (None, _, Some(rs)) => (rs, None),
        (None, _, None) => return Err("neither cue nor reward"),
    };
    let delay = session.reward_delay(trial);
    let mut n_bins = base_bins(delay, dt);
    let reward_bin = match trial.reward_s {
        Some(rs) => {
            let b = bin_of(rs, t0, dt);
            if b < 0 {
                return Err("reward before the cue");
            }
            let b = b as usize;
            n_bins = n_bins.max(b + 1);
            Some(b)
        }
        None => None,
    };
    if n_bins > MAX_TRIAL_BINS {
        return Err("spans over 100000 model bins (reward_delay_s or reward time far from the cue, or a tiny --dt)");
    }
    let expected_reward_bin = trial
        .cue
        .and_then(|c| session.meta.cues[c].reward_delay_s)
        // From the delay itself: (t0 + d) − t0 need not equal d in f64.
        .map(|d| bin_of(d, 0.0, dt).max(0) as usize)
        .or(if trial.cue.is_none() {
            reward_bin
        } else {
            None
        });
    Ok(TrialSpan {
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
        events: None,
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

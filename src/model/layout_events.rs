//! Laying out a trial from its event list (the "Trial events" extension of the model
//! contract): t0 = the earliest cue onset (no cue: the earliest reward), the span covers
//! every cue's onset + delay + post and every reward and cue offset, rewards are summed per
//! bin, and every cue whose cue declares `reward_delay_s` gives an expected reward time.

use super::layout::{base_bins, bin_of, SpanCue, SpanEvents, TrialSpan, MAX_TRIAL_BINS};
use crate::data::{EventKind, Session, Trial};

pub(super) fn layout_events(
    session: &Session,
    trial: &Trial,
    cue_map: &[usize],
    dt: f64,
) -> Result<TrialSpan, &'static str> {
    if trial.cue.is_some() && trial.cue_s.is_none() {
        return Err("cue named but no cue_s");
    }
    let events = trial.all_events();
    let first_cue = events
        .iter()
        .find(|e| e.kind == EventKind::Cue && e.cue.is_some());
    let t0 = match (first_cue, events.first()) {
        (Some(c), _) => c.onset_s,
        (None, Some(e)) => e.onset_s,
        (None, None) => return Err("neither cue nor reward"),
    };
    let bin = |t: f64| -> Result<usize, &'static str> {
        let b = bin_of(t, t0, dt);
        if b < 0 {
            Err("reward before the cue")
        } else {
            Ok(b as usize)
        }
    };
    let mut ev = SpanEvents::default();
    let mut n_bins = 0usize;
    let mut offsets: Vec<Option<usize>> = Vec::new();
    for e in &events {
        match (e.kind, e.cue) {
            (EventKind::Cue, Some(c)) => {
                let onset = bin(e.onset_s)?;
                let delay = session.meta.cues[c].reward_delay_s;
                n_bins = n_bins.max(onset + base_bins(delay.unwrap_or(0.0), dt));
                if let Some(d) = delay {
                    // From the delay itself, as for a plain trial: (t0 + d) − t0 need not be d.
                    let at = bin_of((e.onset_s - t0) + d, 0.0, dt).max(0) as usize;
                    ev.expected.push(at);
                }
                let off = e.offset_s.map(bin).transpose()?;
                offsets.push(off);
                ev.cues.push(SpanCue {
                    cue: cue_map[c],
                    session_cue: c,
                    onset,
                    offset: 0,
                });
            }
            (EventKind::Cue, None) => {}
            (EventKind::Reward, _) => ev.rewards.push((bin(e.onset_s)?, e.size)),
        }
    }
    if ev.cues.is_empty() {
        n_bins = base_bins(0.0, dt);
    }
    for &b in ev
        .rewards
        .iter()
        .map(|(b, _)| b)
        .chain(offsets.iter().flatten())
    {
        if b >= n_bins {
            n_bins = b + 1;
        }
    }
    if n_bins > MAX_TRIAL_BINS {
        return Err("spans over 100000 model bins (reward_delay_s or reward time far from the cue, or a tiny --dt)");
    }
    for (c, off) in ev.cues.iter_mut().zip(&offsets) {
        c.offset = off.unwrap_or(n_bins);
    }
    ev.expected.sort_unstable();
    let reward_bin = ev.rewards.first().map(|&(b, _)| b);
    let expected_reward_bin = match ev.cues.is_empty() {
        true => reward_bin,
        false => ev.expected.first().copied(),
    };
    Ok(TrialSpan {
        session: 0,
        trial: 0,
        t0,
        n_bins,
        cue: ev.cues.first().map(|c| c.cue),
        reward_bin,
        reward: ev.rewards.iter().map(|&(_, r)| r).sum(),
        expected_reward_bin,
        events: Some(Box::new(ev)),
    })
}

//! Observation windows mapped onto model bins.
//!
//! Neurons answer an event some tens of ms after it, while the model puts δ in the event's own
//! bin. So an observation window [a, b] seconds after an event sums δ over the bins covering
//! [a − latency, b − latency] after the event's bin (design brief, "Fitting"); without the
//! shift the default window (50–350 ms) would skip the event bin and see nothing. The fitter and
//! the summary both call [`window_bins`], so they can never disagree.

use super::ObsOptions;
use crate::model::{TrialSpan, BIN_EPS};
use std::ops::Range;

/// Bins of `span` covering [a − latency, b − latency] seconds after the start of `event_bin`,
/// clipped to the span: from floor((a − latency)/dt) to ceil((b − latency)/dt) bins after the
/// event bin (the same 1e-9 tolerance as the model's bin rule keeps exact edges exact). Empty
/// (start..start) when nothing of the window lies inside the span.
pub fn window_bins(
    span: &TrialSpan,
    event_bin: usize,
    window: (f64, f64),
    latency: f64,
    dt: f64,
) -> Range<usize> {
    let first = ((window.0 - latency) / dt + BIN_EPS).floor();
    let end = ((window.1 - latency) / dt - BIN_EPS).ceil();
    let n = span.n_bins as f64;
    let clip = |off: f64| (event_bin as f64 + off).clamp(0.0, n) as usize;
    let (s, e) = (clip(first), clip(end));
    s..e.max(s)
}

/// Event bins of a span: (cue onset, reward) — the reward bin is the delivered reward's, or the
/// expected reward's on omission trials; `None` where the trial has no such event.
pub fn event_bins(span: &TrialSpan) -> (Option<usize>, Option<usize>) {
    let cue = span.cue.map(|_| 0);
    let reward = span.reward_bin.or(span.expected_reward_bin);
    (cue, reward)
}

/// Model δ summed over the cue and reward windows of one trial.
#[derive(Debug, Clone, Copy, PartialEq, Default)]
pub struct WindowDeltas {
    pub cue: Option<f64>,
    pub reward: Option<f64>,
}

/// The bins of `delta` inside each observation window of `opts` (cue, reward), mapped with
/// [`window_bins`] and clipped to the span; `None` where the trial lacks the event or the
/// window falls outside the span. Shared by the plain sums and the reviewer's count readout.
pub fn window_slices<'a>(
    span: &TrialSpan,
    delta: &'a [f64],
    opts: &ObsOptions,
    dt: f64,
) -> (Option<&'a [f64]>, Option<&'a [f64]>) {
    let slice = |event: Option<usize>, w: (f64, f64)| -> Option<&'a [f64]> {
        let r = window_bins(span, event?, w, opts.latency, dt);
        let r = r.start.min(delta.len())..r.end.min(delta.len());
        (!r.is_empty()).then(|| &delta[r])
    };
    let (cue, reward) = event_bins(span);
    (
        slice(cue, opts.cue_window),
        slice(reward, opts.reward_window),
    )
}

/// δ summed over each observation window of `opts`, mapped with [`window_bins`]. `delta` is
/// this span's per-bin δ (`TdRun::trial_delta`). `None` where the trial lacks the event or the
/// window falls outside the span.
pub fn window_delta_sums(
    span: &TrialSpan,
    delta: &[f64],
    opts: &ObsOptions,
    dt: f64,
) -> WindowDeltas {
    let (cue, reward) = window_slices(span, delta, opts, dt);
    WindowDeltas {
        cue: cue.map(|d| d.iter().sum()),
        reward: reward.map(|d| d.iter().sum()),
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn span(n_bins: usize) -> TrialSpan {
        TrialSpan {
            session: 0,
            trial: 0,
            t0: 0.0,
            n_bins,
            cue: Some(0),
            reward_bin: Some(30),
            reward: 1.0,
            expected_reward_bin: Some(30),
            events: None,
        }
    }

    #[test]
    fn default_window_shifted_by_latency_starts_at_event_bin() {
        // [0.05, 0.35] − 0.05 = [0, 0.30] → bins 30..36 after a reward in bin 30.
        assert_eq!(window_bins(&span(50), 30, (0.05, 0.35), 0.05, 0.05), 30..36);
        // Without the shift the event bin itself is missed (brief: "fits nothing").
        assert_eq!(window_bins(&span(50), 30, (0.05, 0.35), 0.0, 0.05), 31..37);
    }

    #[test]
    fn window_is_clipped_to_span() {
        assert_eq!(window_bins(&span(50), 48, (0.05, 0.35), 0.05, 0.05), 48..50);
        assert_eq!(window_bins(&span(50), 0, (-0.5, -0.1), 0.0, 0.05), 0..0);
        // A window starting before the event reaches back into earlier bins.
        assert_eq!(window_bins(&span(50), 30, (0.0, 0.1), 0.05, 0.05), 29..31);
    }
}

//! Semi-gradient linear TD(λ) over trial spans, weights carried across trials and sessions.
//!
//! Per trial: e = 0, x₋₁ = 0, x_K = 0, r_K = 0; for k = 0..K with w as it stands:
//! δ_k = r_k + γ·w·x_k − w·x_{k−1}; e ← γλ·e + x_{k−1}; w ← w + α·δ_k·e
//! (Sutton & Barto 2018 convention, as fixed in the design brief).
//!
//! The per-step rule lives in [`Learner`], which knows nothing about trials: [`run_in`] drives
//! it over the bins of each span, and the tests drive the very same code through textbook
//! tabular tasks (S&B Example 6.2).

use super::features::{FeatureSpace, Representation};
use super::layout::TrialSpan;
use super::DEFAULT_DT;

#[derive(Debug, Clone, Copy, PartialEq)]
pub struct TdParams {
    /// Learning rate.
    pub alpha: f64,
    /// Discount per model bin.
    pub gamma: f64,
    /// Eligibility-trace decay per bin.
    pub lambda: f64,
    /// Bin width, seconds.
    pub dt: f64,
    pub representation: Representation,
}

impl Default for TdParams {
    fn default() -> Self {
        TdParams {
            alpha: 0.1,
            gamma: 0.98,
            lambda: 0.0,
            dt: DEFAULT_DT,
            representation: Representation::Csc,
        }
    }
}

/// A sparse feature vector: (feature index, value) pairs, indices distinct.
pub type Sparse = [(u32, f64)];

/// What one learner step saw: `value` = w·x_cur before the update, `delta` = the TD error.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Step {
    pub value: f64,
    pub delta: f64,
}

/// Linear TD(λ) with accumulating traces over sparse features (semi-gradient TD(λ), Sutton &
/// Barto 2018, ch. 12; the equation numbers 12.5–12.7 that methods.md §1.1 gives are from
/// memory).
///
/// The trace is kept sparse too: `trace` holds the features with a (possibly decayed) non-zero
/// trace since the last [`Learner::reset_trace`], contiguous so the per-step loops stream
/// through memory; `slot` finds a feature's entry. A step costs O(active), not O(features).
#[derive(Debug, Clone)]
pub struct Learner {
    w: Vec<f64>,
    trace: Vec<(u32, f64)>,
    /// Position of each feature in `trace`, or `NO_SLOT`.
    slot: Vec<u32>,
    alpha: f64,
    gamma: f64,
    /// γλ, the per-step trace decay.
    decay: f64,
}

const NO_SLOT: u32 = u32::MAX;

impl Learner {
    /// A learner with `n` weights, all zero.
    pub fn new(n: usize, alpha: f64, gamma: f64, lambda: f64) -> Self {
        Learner::with_weights(vec![0.0; n], alpha, gamma, lambda)
    }

    /// A learner starting from the given weights (e.g. tabular values initialised to 0.5).
    pub fn with_weights(w: Vec<f64>, alpha: f64, gamma: f64, lambda: f64) -> Self {
        let n = w.len();
        Learner {
            w,
            trace: Vec::new(),
            slot: vec![NO_SLOT; n],
            alpha,
            gamma,
            decay: gamma * lambda,
        }
    }

    pub fn weights(&self) -> &[f64] {
        &self.w
    }

    pub fn into_weights(self) -> Vec<f64> {
        self.w
    }

    /// w·x with the weights as they stand.
    #[inline]
    pub fn value(&self, x: &Sparse) -> f64 {
        // Four partial sums: one serial chain of adds was the bottleneck with microstimuli
        // (40 features per bin). Summation order differs from a plain loop by rounding only.
        let w = &self.w;
        let mut acc = [0.0f64; 4];
        let chunks = x.chunks_exact(4);
        let rest = chunks.remainder();
        for c in chunks {
            for (a, &(i, v)) in acc.iter_mut().zip(c) {
                *a += w[i as usize] * v;
            }
        }
        let mut sum = (acc[0] + acc[1]) + (acc[2] + acc[3]);
        for &(i, v) in rest {
            sum += w[i as usize] * v;
        }
        sum
    }

    /// e ← 0 (start of an episode / trial).
    pub fn reset_trace(&mut self) {
        for &(i, _) in &self.trace {
            self.slot[i as usize] = NO_SLOT;
        }
        self.trace.clear();
    }

    /// One transition x_prev → x_cur with reward `r` on entering x_cur (empty `x_cur` is the
    /// terminal state, empty `x_prev` the inter-trial state):
    /// δ = r + γ·w·x_cur − w·x_prev; e ← γλ·e + x_prev; w ← w + α·δ·e.
    #[inline]
    pub fn step(&mut self, x_prev: &Sparse, x_cur: &Sparse, r: f64) -> Step {
        let value = self.value(x_cur);
        let delta = r + self.gamma * value - self.value(x_prev);
        let step = self.alpha * delta;
        if self.decay == 0.0 {
            // γλ = 0: the trace is exactly x_prev, so there is nothing to keep between steps.
            if step != 0.0 {
                for &(i, v) in x_prev {
                    self.w[i as usize] += step * v;
                }
            }
            return Step { value, delta };
        }
        // e ← γλ·e + x_prev and w ← w + αδ·e in one pass over the old entries, then x_prev's
        // share: w + αδ·(γλ·e) + αδ·x_prev equals the contract's update up to rounding, and
        // the trace is streamed once instead of twice (the O(K²) part of csc with λ > 0).
        if step != 0.0 {
            for entry in &mut self.trace {
                entry.1 *= self.decay;
                self.w[entry.0 as usize] += step * entry.1;
            }
        } else {
            for entry in &mut self.trace {
                entry.1 *= self.decay;
            }
        }
        for &(i, v) in x_prev {
            let s = &mut self.slot[i as usize];
            if *s == NO_SLOT {
                *s = self.trace.len() as u32;
                self.trace.push((i, v));
            } else {
                self.trace[*s as usize].1 += v;
            }
            self.w[i as usize] += step * v;
        }
        Step { value, delta }
    }
}

/// Per-bin traces of one pass, flat over all trials: bins of span i are
/// `offsets[i]..offsets[i + 1]`.
#[derive(Debug, Clone, Default)]
pub struct TdRun {
    pub offsets: Vec<usize>,
    /// w·x_k before δ_k's update.
    pub value: Vec<f64>,
    pub delta: Vec<f64>,
    /// Weights after the last trial.
    pub weights: Vec<f64>,
}

impl TdRun {
    pub fn trial_value(&self, i: usize) -> &[f64] {
        &self.value[self.offsets[i]..self.offsets[i + 1]]
    }
    pub fn trial_delta(&self, i: usize) -> &[f64] {
        &self.delta[self.offsets[i]..self.offsets[i + 1]]
    }
}

/// One pass of the learner over `spans` in order, from zero weights.
pub fn run(spans: &[TrialSpan], n_cues: usize, params: &TdParams) -> TdRun {
    let space = FeatureSpace::new(spans, n_cues, params.representation, params.dt);
    run_in(&space, spans, params)
}

/// As [`run`], with a feature space built once (the fitter calls this many times).
pub fn run_in(space: &FeatureSpace, spans: &[TrialSpan], params: &TdParams) -> TdRun {
    let total: usize = spans.iter().map(|s| s.n_bins).sum();
    let mut offsets = Vec::with_capacity(spans.len() + 1);
    let mut value = Vec::with_capacity(total);
    let mut delta = Vec::with_capacity(total);
    let mut learner = Learner::new(space.size(), params.alpha, params.gamma, params.lambda);
    let mut prev: Vec<(u32, f64)> = Vec::new();
    let mut cur: Vec<(u32, f64)> = Vec::new();

    offsets.push(0);
    for span in spans {
        learner.reset_trace();
        prev.clear();
        // k = K is the terminal step: x_K = 0, r_K = 0, its δ updates w but is not a bin.
        for k in 0..=span.n_bins {
            cur.clear();
            if k < span.n_bins {
                space.active(span, k, &mut cur);
            }
            let r = span.reward_at(k);
            let s = learner.step(&prev, &cur, r);
            if k < span.n_bins {
                value.push(s.value);
                delta.push(s.delta);
            }
            std::mem::swap(&mut prev, &mut cur);
        }
        offsets.push(value.len());
    }
    TdRun {
        offsets,
        value,
        delta,
        weights: learner.into_weights(),
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn span(n_bins: usize, cue: Option<usize>, reward_bin: Option<usize>) -> TrialSpan {
        TrialSpan {
            session: 0,
            trial: 0,
            t0: 0.0,
            n_bins,
            cue,
            reward_bin,
            reward: if reward_bin.is_some() { 1.0 } else { 0.0 },
            expected_reward_bin: reward_bin,
            events: None,
        }
    }

    /// First trial, reward in bin 3: δ is the reward at bin 3 only; after it, with λ > 0 the
    /// weight j bins before the reward bin is α(γλ)^j (methods.md §3.3, computed check).
    #[test]
    fn first_trial_trace_weights() {
        let spans = vec![span(5, Some(0), Some(3))];
        let p = TdParams {
            alpha: 0.1,
            gamma: 0.98,
            lambda: 0.9,
            ..Default::default()
        };
        let r = run(&spans, 1, &p);
        assert_eq!(r.delta, vec![0.0, 0.0, 0.0, 1.0, 0.0]);
        // Reward enters the δ of the transition into bin 3, credited to x_2 (weight index 2).
        let gl: f64 = 0.98 * 0.9;
        for j in 0..3 {
            let want = 0.1 * gl.powi(j as i32);
            assert!((r.weights[2 - j] - want).abs() < 1e-12, "j={j}");
        }
        // Same numbers as methods.md §3.3 lists: 0.1, 0.0882, 0.0778 (rounded).
        assert!((r.weights[1] - 0.0882).abs() < 5e-5);
        assert!((r.weights[0] - 0.0778).abs() < 5e-5);
    }

    /// The terminal step (x_K = 0) updates w: with `presence` (one weight for every bin) a
    /// two-bin trial rewarded in bin 1 gives δ_1 = 1 → w = 0.5, then δ_K = 0 − w·x_1 = −0.5
    /// → w = 0.25. Without the terminal step the next trial would start from 0.5.
    #[test]
    fn terminal_step_updates_weights() {
        let spans = vec![span(2, Some(0), Some(1)); 2];
        let p = TdParams {
            alpha: 0.5,
            gamma: 1.0,
            representation: Representation::Presence,
            ..Default::default()
        };
        let r = run(&spans, 1, &p);
        assert_eq!(r.trial_delta(0), &[0.0, 1.0]);
        assert_eq!(r.trial_value(1), &[0.25, 0.25]);
        // Trial 2: δ_0 = γ·0.25 − 0 (x₋₁ = 0); δ_1 = 1 + 0.25 − 0.25.
        assert_eq!(r.trial_delta(1), &[0.25, 1.0]);
    }

    /// A λ > 0 trace must not leak from one trial into the next.
    #[test]
    fn trace_resets_between_trials() {
        let p = TdParams {
            alpha: 0.1,
            gamma: 0.9,
            lambda: 0.9,
            ..Default::default()
        };
        // Trial 1 builds a trace on cue 0; trial 2 (uncued reward, all-zero csc features)
        // must leave cue 0's weights untouched.
        let a = run(&[span(4, Some(0), Some(2))], 1, &p);
        let b = run(&[span(4, Some(0), Some(2)), span(4, None, Some(0))], 1, &p);
        assert_eq!(a.weights, b.weights);
        assert_eq!(b.trial_delta(1), &[1.0, 0.0, 0.0, 0.0]);
    }
}

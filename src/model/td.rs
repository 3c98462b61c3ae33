//! Semi-gradient linear TD(λ) over trial spans, weights carried across trials and sessions.
//!
//! Per trial: e = 0, x₋₁ = 0, x_K = 0, r_K = 0; for k = 0..K with w as it stands:
//! δ_k = r_k + γ·w·x_k − w·x_{k−1}; e ← γλ·e + x_{k−1}; w ← w + α·δ_k·e
//! (Sutton & Barto 2018 convention, as fixed in the design brief).

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
    let mut out = TdRun {
        offsets: Vec::with_capacity(spans.len() + 1),
        value: Vec::with_capacity(total),
        delta: Vec::with_capacity(total),
        weights: vec![0.0; space.size()],
    };
    let w = &mut out.weights;
    let mut e = vec![0.0; space.size()];
    let mut in_trace = vec![false; space.size()];
    let mut active_e: Vec<u32> = Vec::new();
    let mut prev: Vec<(u32, f64)> = Vec::new();
    let mut cur: Vec<(u32, f64)> = Vec::new();
    let decay = params.gamma * params.lambda;
    let dot = |w: &[f64], x: &[(u32, f64)]| x.iter().map(|&(i, v)| w[i as usize] * v).sum::<f64>();

    out.offsets.push(0);
    for span in spans {
        for &i in &active_e {
            e[i as usize] = 0.0;
            in_trace[i as usize] = false;
        }
        active_e.clear();
        prev.clear();
        for k in 0..=span.n_bins {
            cur.clear();
            if k < span.n_bins {
                space.active(span, k, &mut cur);
            }
            let r = if span.reward_bin == Some(k) {
                span.reward
            } else {
                0.0
            };
            let v_cur = dot(w, &cur);
            let v_prev = dot(w, &prev);
            let delta = r + params.gamma * v_cur - v_prev;
            if k < span.n_bins {
                out.value.push(v_cur);
                out.delta.push(delta);
            }
            // e ← γλ·e + x_{k−1}
            if decay == 0.0 {
                for &i in &active_e {
                    e[i as usize] = 0.0;
                    in_trace[i as usize] = false;
                }
                active_e.clear();
            } else {
                for &i in &active_e {
                    e[i as usize] *= decay;
                }
            }
            for &(i, v) in &prev {
                e[i as usize] += v;
                if !in_trace[i as usize] {
                    in_trace[i as usize] = true;
                    active_e.push(i);
                }
            }
            let step = params.alpha * delta;
            if step != 0.0 {
                for &i in &active_e {
                    w[i as usize] += step * e[i as usize];
                }
            }
            std::mem::swap(&mut prev, &mut cur);
        }
        out.offsets.push(out.value.len());
    }
    out
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
    }
}

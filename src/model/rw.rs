//! Trial-level Rescorla–Wagner baseline (Rescorla & Wagner 1972).
//!
//! ΔV_X = αβ·(λ_US − Σ_present V) for every cue X present on the trial, with λ_US the reward
//! size (`reward_ul`) and 0 on omissions and unrewarded cues. One learning rate αβ is shared by
//! all cues (no per-cue salience: the data give no reason to tell cues apart a priori).
//!
//! Trial-level, so it has no time within the trial; to stand beside TD as a model of dopamine
//! responses each trial gives two prediction errors:
//! - at the cue: δ_cue = Σ_present V − 0 (the inter-trial expectation is 0, as TD's x₋₁ = 0);
//! - at the reward (or the expected reward time on omission): δ_reward = λ_US − Σ_present V.
//!
//! A trial with an event list (the "Trial events" extension): the cues present are the set
//! of cue names among its cue events, λ_US its total reward.
//!
//! Uncued trials (a free reward): no cue is present, so the prediction is 0, δ_reward is the
//! whole reward, δ_cue is 0 (there is no cue event), and no V changes — RW only updates the
//! cues present. We do not add a context cue: it would be a free extra parameter the TD model
//! does not have, and the comparison between the two should be on equal terms.

use super::layout::TrialSpan;

/// The per-cue associative strengths and the update rule, independent of trials or files.
#[derive(Debug, Clone)]
pub struct RwLearner {
    v: Vec<f64>,
    /// αβ.
    rate: f64,
}

/// One RW trial: the summed prediction before the update and the error λ_US − prediction.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct RwStep {
    pub prediction: f64,
    pub error: f64,
}

impl RwLearner {
    pub fn new(n_cues: usize, rate: f64) -> Self {
        RwLearner {
            v: vec![0.0; n_cues],
            rate,
        }
    }

    /// Start from given strengths (e.g. after acquisition, to test extinction).
    pub fn with_values(v: Vec<f64>, rate: f64) -> Self {
        RwLearner { v, rate }
    }

    pub fn values(&self) -> &[f64] {
        &self.v
    }

    /// One trial with the cues in `present` (a compound is several) and outcome `lambda_us`.
    pub fn trial(&mut self, present: &[usize], lambda_us: f64) -> RwStep {
        let prediction: f64 = present.iter().map(|&c| self.v[c]).sum();
        let error = lambda_us - prediction;
        for &c in present {
            self.v[c] += self.rate * error;
        }
        RwStep { prediction, error }
    }
}

/// Per-trial output of a Rescorla–Wagner pass, in span order.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct RwTrial {
    /// Σ V of the cues present, before this trial's update.
    pub value: f64,
    pub delta_cue: f64,
    pub delta_reward: f64,
}

/// One pass over the same ordered spans the TD model walks (so the two line up trial for
/// trial), from V = 0. `rate` is αβ.
pub fn run(spans: &[TrialSpan], n_cues: usize, rate: f64) -> Vec<RwTrial> {
    let mut learner = RwLearner::new(n_cues, rate);
    spans
        .iter()
        .map(|span| match span.cue {
            Some(_) if span.events.is_some() => {
                // The cues present (each once) and the trial's total reward.
                let s = learner.trial(&span.cues_present(), span.reward);
                RwTrial {
                    value: s.prediction,
                    delta_cue: s.prediction,
                    delta_reward: s.error,
                }
            }
            Some(c) => {
                let s = learner.trial(&[c], span.reward);
                RwTrial {
                    value: s.prediction,
                    delta_cue: s.prediction,
                    delta_reward: s.error,
                }
            }
            None => RwTrial {
                value: 0.0,
                delta_cue: 0.0,
                delta_reward: span.reward,
            },
        })
        .collect()
}

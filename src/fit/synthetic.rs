//! Synthetic fitting data with known parameters, built in memory: for recovery checks,
//! benchmarks and planning ("how many days pin γ down?").
//!
//! The schedule is a plain Pavlovian one (one cue, fixed delay, some omissions, some uncued
//! rewards); the observations are drawn directly from the fitter's own observation model,
//! y = b_e + g·(δ summed over the window) + N(0, σ²), so a recovery failure points at the
//! search, not at the measurement layer. (The full simulator, with spikes, is `simulate`.)

use super::dataset::{build, FitData};
use crate::data::{CueDef, Session, SessionMeta, Subject, Trial};
use crate::marks::MarkState;
use crate::model::{layout_subject, run, Representation, TdParams};
use crate::obs::{event_bins, window_bins, ObsOptions, TrialKind, TrialObs};
use rand::{Rng, SeedableRng};
use rand_chacha::ChaCha8Rng;
use rand_distr::{Distribution, Normal};
use std::path::PathBuf;

/// What to build.
#[derive(Debug, Clone, PartialEq)]
pub struct SyntheticSpec {
    pub sessions: usize,
    pub trials_per_session: usize,
    /// Cue onset → reward, seconds.
    pub delay_s: f64,
    /// Probability a cued trial is rewarded (the rest are omissions).
    pub p_reward: f64,
    /// Fraction of trials that are uncued rewards.
    pub p_uncued: f64,
    pub reward_ul: f64,
    pub alpha: f64,
    pub gamma: f64,
    pub lambda: f64,
    pub representation: Representation,
    pub dt: f64,
    pub gain: f64,
    /// Baselines of the cue and reward windows.
    pub baselines: [f64; 2],
    pub noise_sd: f64,
    pub seed: u64,
}

impl Default for SyntheticSpec {
    fn default() -> Self {
        SyntheticSpec {
            sessions: 5,
            trials_per_session: 100,
            delay_s: 1.5,
            p_reward: 0.8,
            p_uncued: 0.1,
            reward_ul: 1.0,
            alpha: 0.1,
            gamma: 0.98,
            lambda: 0.0,
            representation: Representation::Csc,
            dt: 0.05,
            gain: 5.0,
            baselines: [0.5, -0.2],
            noise_sd: 1.0,
            seed: 7,
        }
    }
}

/// An in-memory subject with the spec's schedule (no spikes, licks or photometry).
pub fn subject(spec: &SyntheticSpec) -> Subject {
    let mut rng = ChaCha8Rng::seed_from_u64(spec.seed);
    let sessions = (0..spec.sessions)
        .map(|d| {
            let mut t = 10.0;
            let trials = (0..spec.trials_per_session)
                .map(|i| {
                    t += 15.0 + rng.random::<f64>() * 10.0;
                    let uncued = rng.random::<f64>() < spec.p_uncued;
                    let rewarded = uncued || rng.random::<f64>() < spec.p_reward;
                    Trial {
                        number: i as i64 + 1,
                        cue: (!uncued).then_some(0),
                        cue_s: (!uncued).then_some(t),
                        reward_s: rewarded.then_some(if uncued { t } else { t + spec.delay_s }),
                        reward_ul: if rewarded { spec.reward_ul } else { 0.0 },
                        ..Default::default()
                    }
                })
                .collect();
            let name = format!("2026-03-{:02}", d + 1);
            Session {
                dir: PathBuf::from(format!("synthetic/{name}")),
                name: name.clone(),
                meta: SessionMeta {
                    subject: "m-syn".into(),
                    date: name,
                    start_time: None,
                    rig: Some("box-2".into()),
                    cues: vec![CueDef {
                        name: "tone-hi".into(),
                        reward_delay_s: Some(spec.delay_s),
                    }],
                },
                trials,
                spikes: None,
                licks: None,
                photometry: None,
            }
        })
        .collect();
    Subject {
        root: PathBuf::from("synthetic"),
        sessions,
    }
}

/// Observations drawn from the observation model at the spec's true parameters, windows
/// mapped with `obs_opts` exactly as the fitter maps them.
pub fn observations(spec: &SyntheticSpec, subj: &Subject, obs_opts: &ObsOptions) -> Vec<TrialObs> {
    let spans = layout_subject(subj, spec.dt);
    let td = TdParams {
        alpha: spec.alpha,
        gamma: spec.gamma,
        lambda: spec.lambda,
        dt: spec.dt,
        representation: spec.representation,
    };
    let run = run(&spans, subj.cue_names().len(), &td);
    let mut rng = ChaCha8Rng::seed_from_u64(spec.seed ^ 0x5eed_0b5e);
    let noise = Normal::new(0.0, spec.noise_sd.max(0.0)).expect("finite sd");
    spans
        .iter()
        .enumerate()
        .map(|(i, span)| {
            let delta = run.trial_delta(i);
            let (cue_bin, reward_bin) = event_bins(span);
            let mut draw = |event: Option<usize>, window: (f64, f64), base: f64| {
                let bins = window_bins(span, event?, window, obs_opts.latency, spec.dt);
                let x: f64 = delta[bins].iter().sum();
                Some(base + spec.gain * x + noise.sample(&mut rng))
            };
            let cue = draw(cue_bin, obs_opts.cue_window, spec.baselines[0]);
            let reward = draw(reward_bin, obs_opts.reward_window, spec.baselines[1]);
            span_obs(subj, span, cue, reward)
        })
        .collect()
}

/// A synthetic trial's observation: its measured cue and reward responses, no licks.
fn span_obs(
    subj: &Subject,
    span: &crate::model::TrialSpan,
    cue: Option<f64>,
    reward: Option<f64>,
) -> TrialObs {
    let session = &subj.sessions[span.session];
    let kind = TrialKind::of(session, &session.trials[span.trial]).expect("cue or reward");
    TrialObs {
        session: span.session,
        trial: span.trial,
        cue,
        reward,
        omission: kind == TrialKind::Omission,
        anticipatory_lick_rate: None,
        kind,
        events: Vec::new(),
    }
}

/// Subject, observations and fitting data in one go (no marks).
pub fn fit_data(spec: &SyntheticSpec) -> (Subject, FitData) {
    let subj = subject(spec);
    let opts = ObsOptions::default();
    let obs = observations(spec, &subj, &opts);
    let data = build(&subj, &obs, &opts, spec.dt, &[] as &[MarkState], false);
    (subj, data)
}

/// Spiking units for [`spike_fit_data`]: the population's per-unit rate in model bin k is
/// max(0, baseline + gain·δ_k) (the rectified rate `simulate` draws spikes from).
#[derive(Debug, Clone, PartialEq)]
pub struct SpikeSpec {
    pub units: usize,
    pub baseline_hz: f64,
    /// Extra spikes/s per unit δ in a bin.
    pub gain_hz: f64,
}

impl Default for SpikeSpec {
    fn default() -> Self {
        SpikeSpec {
            units: 6,
            baseline_hz: 4.5,
            gain_hz: 15.0,
        }
    }
}

/// Fitting data from spike counts: each window's count is Poisson with mean units × window
/// length × the mean rectified rate over its bins, the pre-cue baseline count Poisson at the
/// resting rate; `observed` is the rate difference (what `obs` measures) and
/// [`FitData::counts`] holds the counts. The schedule and δ come from `spec` (its gain,
/// baselines and noise are not used).
pub fn spike_fit_data(spec: &SyntheticSpec, spikes: &SpikeSpec) -> (Subject, FitData) {
    use super::likelihood::WindowCount;
    use crate::fit::WindowKind;
    use rand_distr::Poisson;
    use std::collections::HashMap;
    let subj = subject(spec);
    let obs_opts = ObsOptions::default();
    let spans = layout_subject(&subj, spec.dt);
    let td = TdParams {
        alpha: spec.alpha,
        gamma: spec.gamma,
        lambda: spec.lambda,
        dt: spec.dt,
        representation: spec.representation,
    };
    let run = run(&spans, subj.cue_names().len(), &td);
    let mut rng = ChaCha8Rng::seed_from_u64(spec.seed ^ 0x5b1c_e5ed);
    let units = spikes.units as f64;
    let draw_count = |mean: f64, rng: &mut ChaCha8Rng| -> f64 {
        if mean <= 0.0 {
            0.0
        } else {
            Poisson::new(mean).expect("finite mean").sample(rng)
        }
    };
    let mut counts: HashMap<(usize, WindowKind), WindowCount> = HashMap::new();
    let base_exposure = units * (obs_opts.baseline.1 - obs_opts.baseline.0);
    let obs: Vec<TrialObs> = spans
        .iter()
        .enumerate()
        .map(|(i, span)| {
            let delta = run.trial_delta(i);
            let (cue_bin, reward_bin) = event_bins(span);
            let base = draw_count(base_exposure * spikes.baseline_hz, &mut rng) / base_exposure;
            let mut window = |kind: WindowKind, event: Option<usize>, w: (f64, f64)| {
                let bins = window_bins(span, event?, w, obs_opts.latency, spec.dt);
                if bins.is_empty() {
                    return None;
                }
                let rate = delta[bins.clone()]
                    .iter()
                    .map(|d| (spikes.baseline_hz + spikes.gain_hz * d).max(0.0))
                    .sum::<f64>()
                    / bins.len() as f64;
                let exposure = units * (w.1 - w.0);
                let count = draw_count(exposure * rate, &mut rng);
                counts.insert((i, kind), WindowCount { count, exposure });
                Some(count / exposure - base)
            };
            let cue = window(WindowKind::Cue, cue_bin, obs_opts.cue_window);
            let reward = window(WindowKind::Reward, reward_bin, obs_opts.reward_window);
            span_obs(&subj, span, cue, reward)
        })
        .collect();
    let mut data = build(&subj, &obs, &obs_opts, spec.dt, &[] as &[MarkState], false);
    data.counts = Some(
        data.points
            .iter()
            .map(|p| counts[&(p.span, p.kind)])
            .collect(),
    );
    (subj, data)
}

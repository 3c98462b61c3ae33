//! An independent simulator for recovery tests: written from the design brief's model contract
//! (spans, bin rounding, CSC features, TD(λ) with per-trial trace reset and a terminal step)
//! and the spiking observation model (rate max(0, b + g·δ_k) on the bin's interval shifted by
//! the latency L, baseline elsewhere). It shares no code with `src/` beyond the plain data types it
//! fills in (`Subject`, `Session`, `Trial`, `Spikes`), so an error in the fitter's window
//! mapping, feature layout or learner cannot hide behind the same error in the generator.
#![allow(dead_code)]

use rand::{Rng, SeedableRng};
use rand_chacha::ChaCha8Rng;
use std::path::PathBuf;
use trialdesk::data::{CueDef, Session, SessionMeta, Spikes, Subject, Trial};

/// What to simulate.
#[derive(Debug, Clone)]
pub struct Spec {
    pub sessions: usize,
    pub trials: usize,
    pub delay_s: f64,
    pub p_reward: f64,
    pub p_uncued: f64,
    pub reward_ul: f64,
    pub alpha: f64,
    pub gamma: f64,
    pub lambda: f64,
    pub dt: f64,
    pub units: usize,
    pub baseline_hz: f64,
    pub gain_hz: f64,
    /// The gain of negative δ, when it differs from `gain_hz` (an asymmetric unit).
    pub gain_neg_hz: Option<f64>,
    pub latency_s: f64,
    pub seed: u64,
    /// Each unit its own (baseline, gain of δ ≥ 0, gain of δ < 0), overriding the three
    /// above (`units` must equal its length); empty: every unit alike.
    pub unit_params: Vec<(f64, f64, f64)>,
    /// Acute recordings: every session records new neurons, still named u1, u2, …, each with
    /// a gain drawn uniformly from this range (baseline `baseline_hz`, symmetric).
    pub acute_gains: Option<(f64, f64)>,
    /// (session, unit) pairs (0-based) not recorded: the unit is missing from that day.
    pub missing: Vec<(usize, usize)>,
    /// Licking, when simulated: the response rule of Ludvig, Sutton & Kehoe 2012.
    pub licks: Option<LickSpec>,
}

/// Licks: a_k = υ·a_{k−1} + [V_{k−1} − θ]₊ from cue onset (a_{−1} = V_{−1} = 0), licking at
/// base_hz + hz_per_ul·(1 − υ)·a_k in bin k until the reward is delivered (to the span's end on
/// omissions), base_hz everywhere else, and a consummatory bout at 7 Hz for 2 s after each
/// delivery.
#[derive(Debug, Clone, Copy)]
pub struct LickSpec {
    pub theta: f64,
    pub upsilon: f64,
    pub hz_per_ul: f64,
    pub base_hz: f64,
}

impl Default for Spec {
    fn default() -> Self {
        Spec {
            sessions: 6,
            trials: 150,
            delay_s: 1.5,
            p_reward: 0.8,
            p_uncued: 0.1,
            reward_ul: 3.0,
            alpha: 0.1,
            gamma: 0.98,
            lambda: 0.0,
            dt: 0.05,
            units: 6,
            baseline_hz: 4.5,
            gain_hz: 15.0,
            gain_neg_hz: None,
            latency_s: 0.05,
            seed: 1,
            unit_params: Vec::new(),
            acute_gains: None,
            missing: Vec::new(),
            licks: None,
        }
    }
}

/// One trial of the schedule, session clock.
struct Planned {
    cue_s: Option<f64>,
    reward_s: Option<f64>,
}

/// Span of a trial (brief: t0 = cue onset, or the reward for an uncued trial; K =
/// ceil((D + 1)/dt − 1e-9) with D the cue's reward delay; reward bin floor((t − t0)/dt + 1e-9),
/// a later reward lengthening the span).
struct Span {
    t0: f64,
    /// The delivery time on the session clock.
    reward_s: Option<f64>,
    cued: bool,
    n_bins: usize,
    reward_bin: Option<usize>,
    reward: f64,
}

fn span(p: &Planned, spec: &Spec) -> Span {
    let (t0, d) = match p.cue_s {
        Some(c) => (c, spec.delay_s),
        None => (p.reward_s.expect("uncued trials are rewarded"), 0.0),
    };
    let mut k = ((d + 1.0) / spec.dt - 1e-9).ceil() as usize;
    let reward_bin = p
        .reward_s
        .map(|r| ((r - t0) / spec.dt + 1e-9).floor() as usize);
    if let Some(rb) = reward_bin {
        k = k.max(rb + 1);
    }
    Span {
        t0,
        reward_s: p.reward_s,
        cued: p.cue_s.is_some(),
        n_bins: k,
        reward_bin,
        reward: if reward_bin.is_some() {
            spec.reward_ul
        } else {
            0.0
        },
    }
}

/// TD(λ) over CSC features (one weight per bin since cue onset; uncued trials have no
/// features), weights carried across trials and sessions: δ_k = r_k + γ·V(x_k) − V(x_{k−1}),
/// e ← γλe + x_{k−1}, w ← w + αδe, k = 0..K with x_K = 0 and x_{−1} = 0. Returns δ per bin
/// and the value V(x_k) of every bin before its update.
fn td_csc(spans: &[Span], spec: &Spec) -> (Vec<Vec<f64>>, Vec<Vec<f64>>) {
    let n = spans
        .iter()
        .filter(|s| s.cued)
        .map(|s| s.n_bins)
        .max()
        .unwrap_or(0);
    let mut w = vec![0.0; n];
    let mut out = Vec::with_capacity(spans.len());
    let mut values = Vec::with_capacity(spans.len());
    for s in spans {
        let mut vs = Vec::with_capacity(s.n_bins);
        let mut e = vec![0.0; n];
        let mut deltas = Vec::with_capacity(s.n_bins);
        let mut prev: Option<usize> = None;
        for k in 0..=s.n_bins {
            let cur = (s.cued && k < s.n_bins).then_some(k);
            let r = if s.reward_bin == Some(k) {
                s.reward
            } else {
                0.0
            };
            let v = cur.map_or(0.0, |i| w[i]);
            let v_prev = prev.map_or(0.0, |i| w[i]);
            let delta = r + spec.gamma * v - v_prev;
            for x in e.iter_mut() {
                *x *= spec.gamma * spec.lambda;
            }
            if let Some(i) = prev {
                e[i] += 1.0;
            }
            for (wi, ei) in w.iter_mut().zip(&e) {
                *wi += spec.alpha * delta * ei;
            }
            if k < s.n_bins {
                deltas.push(delta);
                vs.push(v);
            }
            prev = cur;
        }
        out.push(deltas);
        values.push(vs);
    }
    (out, values)
}

/// Poisson events at `rate` on [a, b), appended.
fn poisson(rate: f64, a: f64, b: f64, rng: &mut ChaCha8Rng, out: &mut Vec<f64>) {
    if rate <= 0.0 || b <= a {
        return;
    }
    let mut t = a;
    loop {
        t += -(1.0 - rng.random::<f64>()).ln() / rate;
        if t >= b {
            return;
        }
        out.push(t);
    }
}

/// The simulated subject (spikes on every session) and the true per-bin δ of every trial.
pub fn subject(spec: &Spec) -> Subject {
    let mut rng = ChaCha8Rng::seed_from_u64(spec.seed);
    let mut plans: Vec<Vec<Planned>> = Vec::new();
    for _ in 0..spec.sessions {
        let mut t = 5.0;
        let mut day = Vec::new();
        for _ in 0..spec.trials {
            t += 12.0 + 8.0 * rng.random::<f64>();
            let uncued = rng.random::<f64>() < spec.p_uncued;
            let rewarded = uncued || rng.random::<f64>() < spec.p_reward;
            day.push(Planned {
                cue_s: (!uncued).then_some(t),
                reward_s: rewarded.then_some(if uncued { t } else { t + spec.delay_s }),
            });
        }
        plans.push(day);
    }
    let spans: Vec<Span> = plans.iter().flatten().map(|p| span(p, spec)).collect();
    let (deltas, values) = td_csc(&spans, spec);
    // Per-unit parameters come from their own generator, so subjects without them are drawn
    // exactly as before.
    let mut unit_rng = ChaCha8Rng::seed_from_u64(spec.seed ^ 0x005e_ed0f);
    let unit_of = |u: usize, unit_rng: &mut ChaCha8Rng| -> (f64, f64, Option<f64>) {
        if let Some((lo, hi)) = spec.acute_gains {
            let g = lo + (hi - lo) * unit_rng.random::<f64>();
            return (spec.baseline_hz, g, None);
        }
        match spec.unit_params.get(u) {
            Some(&(b, gp, gn)) => (b, gp, Some(gn)),
            None => (spec.baseline_hz, spec.gain_hz, spec.gain_neg_hz),
        }
    };
    let mut lick_rng = ChaCha8Rng::seed_from_u64(spec.seed ^ 0x00c0_ffee);
    let mut next = 0;
    let sessions = plans
        .iter()
        .enumerate()
        .map(|(d, day)| {
            let first = next;
            next += day.len();
            let end_s = day
                .last()
                .map_or(10.0, |p| p.cue_s.or(p.reward_s).unwrap() + 10.0);
            let recorded: Vec<usize> = (0..spec.units)
                .filter(|u| !spec.missing.contains(&(d, *u)))
                .collect();
            let times: Vec<Vec<f64>> = recorded
                .iter()
                .map(|&u| {
                    let (baseline_hz, gain_hz, gain_neg_hz) = unit_of(u, &mut unit_rng);
                    let mut out = Vec::new();
                    let mut cursor = 0.0;
                    for i in first..next {
                        let s = &spans[i];
                        for (k, &dk) in deltas[i].iter().enumerate() {
                            let a = s.t0 + k as f64 * spec.dt + spec.latency_s;
                            let b = a + spec.dt;
                            poisson(baseline_hz, cursor, a, &mut rng, &mut out);
                            let g = match (dk < 0.0, gain_neg_hz) {
                                (true, Some(neg)) => neg,
                                _ => gain_hz,
                            };
                            let rate = (baseline_hz + g * dk).max(0.0);
                            poisson(rate, a.max(cursor), b, &mut rng, &mut out);
                            cursor = b;
                        }
                    }
                    poisson(baseline_hz, cursor, end_s, &mut rng, &mut out);
                    out
                })
                .collect();
            let name = format!("2026-05-{:02}", d + 1);
            Session {
                dir: PathBuf::from(format!("independent/{name}")),
                name: name.clone(),
                meta: SessionMeta {
                    subject: "m-ind".into(),
                    date: name,
                    start_time: None,
                    rig: Some("box-3".into()),
                    cues: vec![CueDef {
                        name: "tone-lo".into(),
                        reward_delay_s: Some(spec.delay_s),
                    }],
                },
                trials: day
                    .iter()
                    .enumerate()
                    .map(|(i, p)| Trial {
                        number: i as i64 + 1,
                        cue: p.cue_s.map(|_| 0),
                        cue_s: p.cue_s,
                        reward_s: p.reward_s,
                        reward_ul: if p.reward_s.is_some() {
                            spec.reward_ul
                        } else {
                            0.0
                        },
                        cue_off_s: None,
                        events: Vec::new(),
                    })
                    .collect(),
                spikes: Some(Spikes {
                    units: recorded.iter().map(|u| format!("u{}", u + 1)).collect(),
                    times,
                }),
                licks: spec.licks.map(|l| {
                    session_licks(
                        &l,
                        &spans[first..next],
                        &values[first..next],
                        spec.dt,
                        end_s,
                        &mut lick_rng,
                    )
                }),
                photometry: None,
            }
        })
        .collect();
    Subject {
        root: PathBuf::from("independent"),
        sessions,
    }
}

/// One session's sorted lick times (see [`LickSpec`]).
fn session_licks(
    l: &LickSpec,
    spans: &[Span],
    values: &[Vec<f64>],
    dt: f64,
    end_s: f64,
    rng: &mut ChaCha8Rng,
) -> Vec<f64> {
    let mut out = Vec::new();
    poisson(l.base_hz, 0.0, end_s, rng, &mut out);
    for (s, v) in spans.iter().zip(values) {
        if s.cued {
            let stop = s.reward_s.unwrap_or(f64::INFINITY);
            let (mut a, mut v_prev) = (0.0, 0.0);
            for (k, &vk) in v.iter().enumerate() {
                a = l.upsilon * a + (v_prev - l.theta).max(0.0);
                v_prev = vk;
                let lo = s.t0 + k as f64 * dt;
                let hi = (lo + dt).min(stop);
                poisson(l.hz_per_ul * (1.0 - l.upsilon) * a, lo, hi, rng, &mut out);
            }
        }
        if let Some(r) = s.reward_s {
            poisson(7.0, r + 0.05, r + 2.0, rng, &mut out);
        }
    }
    out.sort_by(f64::total_cmp);
    out
}

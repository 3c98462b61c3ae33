//! Fault injection: the doubtful trials a reviewer has to find, put in on purpose so the
//! suggestion rules ([`crate::suggest`]) can be scored against a known answer.
//!
//! Every fault is off by default, and each kind draws from its own generator stream, so a
//! subject simulated without faults is byte-for-byte the one simulated before faults existed,
//! and turning one kind on leaves the others' draws unchanged. Faults are applied after the
//! clean recording is made (the schedule shift before), and each injected fault is recorded
//! in [`Injected`] rows that the writer puts in `faults.csv`.
//!
//! What each kind does (rates are per trial unless marked per session):
//! * `baseline_licks`: a ~7 Hz lick burst starting 0.5–1 s before the trial's alignment time.
//! * `valve_failure`: the reward stays in trials.csv but the consumption bout is removed
//!   (only spontaneous licking remains). The model and the dopamine traces still saw a reward.
//! * `late_first_lick`: every lick in the first 0.4–1.2 s after the reward is removed.
//! * `reward_too_soon`: a rewarded trial that follows a rewarded trial is moved earlier (with
//!   all later trials) so its reward comes 1.6–2.8 s after the previous one.
//! * `unit_lost` (per session): one unit keeps only 5–30 % of its spikes from shortly after
//!   a trial 60–85 % of the way through the session.
//! * `trial_motion`: a raised-cosine dip (depth 3–20 %, 0.5–1 s) in both photometry channels
//!   between the alignment time and 0.5 s after the trial's last event.
//! * `control_decoupled` (per session): the control channel loses everything it shared with
//!   the signal (bleaching, motion) and wanders on its own instead.
//! * `saturation`: 0.3–1 s of the signal pinned at one rail value above the session maximum.
//! * `dropout`: 0.3–1.5 s of both channels lost; half the time the samples read 0, half the
//!   time they are missing (a gap in `time_s`).

use super::photometry::Injected as PhotometryInjected;
use super::schedule::SessionPlan;
use super::{rng_for, round_time, stream};
use crate::data::{Photometry, Session, Spikes, Trial};
use rand::Rng;
use rand_chacha::ChaCha8Rng;

/// The fault kinds, in `--fault` spelling order.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash, PartialOrd, Ord)]
pub enum FaultKind {
    BaselineLicks,
    ValveFailure,
    LateFirstLick,
    RewardTooSoon,
    UnitLost,
    TrialMotion,
    ControlDecoupled,
    Saturation,
    Dropout,
}

impl FaultKind {
    pub const ALL: [FaultKind; 9] = [
        FaultKind::BaselineLicks,
        FaultKind::ValveFailure,
        FaultKind::LateFirstLick,
        FaultKind::RewardTooSoon,
        FaultKind::UnitLost,
        FaultKind::TrialMotion,
        FaultKind::ControlDecoupled,
        FaultKind::Saturation,
        FaultKind::Dropout,
    ];

    /// The snake_case name used in `faults.csv` and `truth.toml`.
    pub fn name(self) -> &'static str {
        match self {
            FaultKind::BaselineLicks => "baseline_licks",
            FaultKind::ValveFailure => "valve_failure",
            FaultKind::LateFirstLick => "late_first_lick",
            FaultKind::RewardTooSoon => "reward_too_soon",
            FaultKind::UnitLost => "unit_lost",
            FaultKind::TrialMotion => "trial_motion",
            FaultKind::ControlDecoupled => "control_decoupled",
            FaultKind::Saturation => "saturation",
            FaultKind::Dropout => "dropout",
        }
    }

    /// Accepts `valve_failure` and `valve-failure`.
    pub fn parse(text: &str) -> Option<FaultKind> {
        let t = text.trim().replace('-', "_");
        FaultKind::ALL.into_iter().find(|k| k.name() == t)
    }

    /// True for kinds drawn once per session rather than per trial.
    pub fn per_session(self) -> bool {
        matches!(self, FaultKind::UnitLost | FaultKind::ControlDecoupled)
    }

    pub fn needs_photometry(self) -> bool {
        matches!(
            self,
            FaultKind::TrialMotion
                | FaultKind::ControlDecoupled
                | FaultKind::Saturation
                | FaultKind::Dropout
        )
    }

    fn stream(self) -> u64 {
        stream::FAULTS + 10_000 * (self as u64 + 1)
    }
}

/// Injection rates by kind (probability per trial, or per session for the per-session kinds).
#[derive(Debug, Clone, Default, PartialEq)]
pub struct FaultParams {
    pub rates: Vec<(FaultKind, f64)>,
}

impl FaultParams {
    pub fn rate(&self, kind: FaultKind) -> f64 {
        self.rates
            .iter()
            .rev()
            .find(|(k, _)| *k == kind)
            .map_or(0.0, |(_, r)| *r)
    }

    pub fn any(&self) -> bool {
        self.rates.iter().any(|(_, r)| *r > 0.0)
    }

    /// `KIND:RATE`, e.g. `valve-failure:0.1`.
    pub fn parse_one(text: &str) -> Result<(FaultKind, f64), String> {
        let names: Vec<&str> = FaultKind::ALL.iter().map(|k| k.name()).collect();
        let bad = || {
            format!(
                "--fault {text:?}: expected KIND:RATE with KIND one of {} and RATE in [0, 1]",
                names.join(", ")
            )
        };
        let (kind, rate) = text.split_once(':').ok_or_else(bad)?;
        let kind = FaultKind::parse(kind).ok_or_else(bad)?;
        let rate: f64 = rate.trim().parse().map_err(|_| bad())?;
        if !(0.0..=1.0).contains(&rate) {
            return Err(bad());
        }
        Ok((kind, rate))
    }

    pub fn validate(&self, photometry_on: bool) -> Result<(), String> {
        for &(kind, rate) in &self.rates {
            if !(0.0..=1.0).contains(&rate) {
                return Err(format!("--fault {}: rate must be in [0, 1]", kind.name()));
            }
            if rate > 0.0 && kind.needs_photometry() && !photometry_on {
                return Err(format!(
                    "--fault {}: needs --photometry on",
                    kind.name().replace('_', "-")
                ));
            }
        }
        Ok(())
    }
}

/// One injected fault: which trial (`None`: the whole session) and what exactly was done.
#[derive(Debug, Clone, PartialEq)]
pub struct Injected {
    /// Index into the subject's sessions.
    pub session: usize,
    pub trial: Option<i64>,
    pub kind: FaultKind,
    pub detail: String,
}

fn rng(seed: u64, kind: FaultKind, session: usize) -> ChaCha8Rng {
    rng_for(seed, kind.stream() + session as u64)
}

/// Where faults are being injected: one session of a subject.
#[derive(Debug, Clone, Copy)]
pub struct At<'a> {
    pub session: &'a Session,
    /// Index into the subject's sessions.
    pub index: usize,
    pub faults: &'a FaultParams,
    pub seed: u64,
}

fn index_of(time: &[f64], t: f64) -> usize {
    time.partition_point(|&x| x < t)
}

/// Alignment time: cue onset, or the reward on uncued trials.
fn t0(trial: &Trial) -> f64 {
    trial.cue_s.or(trial.reward_s).unwrap_or(0.0)
}

/// The trial's last scheduled event: reward, expected reward, or cue onset.
fn last_event(trial: &Trial, delay_s: f64) -> f64 {
    let start = t0(trial);
    trial.reward_s.unwrap_or(start).max(start + delay_s)
}

/// `reward_too_soon`: move trials earlier in the drawn schedule (before anything is simulated).
pub fn shift_rewards(
    plans: &mut [SessionPlan],
    delays: &[f64],
    p: &FaultParams,
    seed: u64,
    out: &mut Vec<Injected>,
) {
    let rate = p.rate(FaultKind::RewardTooSoon);
    if rate <= 0.0 {
        return;
    }
    for (si, plan) in plans.iter_mut().enumerate() {
        let mut g = rng(seed, FaultKind::RewardTooSoon, si);
        for j in 1..plan.trials.len() {
            let hit = g.random::<f64>() < rate;
            let (Some(prev), Some(r)) = (plan.trials[j - 1].reward_s, plan.trials[j].reward_s)
            else {
                continue;
            };
            // The cue must still come after the previous reward.
            let delay = plan.trials[j].cue.map_or(0.0, |c| delays[c]);
            let lowest = (delay + 0.1).max(1.0);
            let gap = lowest + (2.8 - lowest).max(0.0) * g.random::<f64>();
            if !hit || gap >= 3.0 {
                continue;
            }
            let shift = r - (prev + gap);
            if shift <= 0.0 {
                continue;
            }
            for t in &mut plan.trials[j..] {
                t.cue_s = t.cue_s.map(|c| round_time(c - shift));
                t.reward_s = t.reward_s.map(|c| round_time(c - shift));
            }
            plan.end_s = round_time(plan.end_s - shift);
            out.push(Injected {
                session: si,
                trial: Some(plan.trials[j].number),
                kind: FaultKind::RewardTooSoon,
                detail: format!(
                    "reward {:.3} s after the previous one",
                    plan.trials[j].reward_s.unwrap_or(r) - prev
                ),
            });
        }
    }
}

/// `unit_lost`: thin one unit's spikes from a point late in the session.
pub fn lose_unit(at: At<'_>, spikes: &mut Spikes, out: &mut Vec<Injected>) {
    let At {
        session,
        index: si,
        faults: p,
        seed,
    } = at;
    let rate = p.rate(FaultKind::UnitLost);
    let n = session.trials.len();
    if rate <= 0.0 || spikes.units.is_empty() || n < 4 {
        return;
    }
    let mut g = rng(seed, FaultKind::UnitLost, si);
    if g.random::<f64>() >= rate {
        return;
    }
    let u = g.random_range(0..spikes.units.len());
    let from = ((0.6 * n as f64) as usize).max(1);
    let to = ((0.85 * n as f64) as usize).max(from + 1).min(n);
    let j = g.random_range(from..to);
    let keep = 0.05 + 0.25 * g.random::<f64>();
    let prev = &session.trials[j - 1];
    let delay = prev
        .cue
        .and_then(|c| session.meta.cues[c].reward_delay_s)
        .unwrap_or(0.0);
    let lost_from = last_event(prev, delay) + 0.5;
    spikes.times[u].retain(|&t| t < lost_from || g.random::<f64>() < keep);
    for t in &session.trials[j..] {
        out.push(Injected {
            session: si,
            trial: Some(t.number),
            kind: FaultKind::UnitLost,
            detail: format!(
                "unit {} keeps {:.0} % of its spikes from {} s",
                spikes.units[u],
                keep * 100.0,
                crate::util::fmt_f64(round_time(lost_from))
            ),
        });
    }
}

/// The lick faults of one session.
pub fn lick_faults(
    at: At<'_>,
    licks: &mut Vec<f64>,
    lick_params: &super::LickParams,
    out: &mut Vec<Injected>,
) {
    let At {
        session,
        index: si,
        faults: p,
        seed,
    } = at;
    let mut changed = false;
    let rate = p.rate(FaultKind::BaselineLicks);
    if rate > 0.0 {
        let mut g = rng(seed, FaultKind::BaselineLicks, si);
        for t in &session.trials {
            let hit = g.random::<f64>() < rate;
            let lead = 0.5 + 0.5 * g.random::<f64>();
            if !hit {
                continue;
            }
            let onset = t0(t);
            let mut x = onset - lead;
            let mut n = 0;
            while x < onset - 0.02 {
                licks.push(round_time(x));
                n += 1;
                x += 1.0 / 7.0 + 0.015 * (g.random::<f64>() - 0.5);
            }
            changed = true;
            out.push(Injected {
                session: si,
                trial: Some(t.number),
                kind: FaultKind::BaselineLicks,
                detail: format!("{n} licks from {lead:.3} s before onset"),
            });
        }
    }
    let rate = p.rate(FaultKind::ValveFailure);
    if rate > 0.0 {
        let mut g = rng(seed, FaultKind::ValveFailure, si);
        for t in &session.trials {
            let hit = g.random::<f64>() < rate;
            let Some(r) = t.reward_s.filter(|_| hit) else {
                continue;
            };
            let end = r + lick_params.bout_max_s + 0.5;
            licks.retain(|&x| x < r || x >= end);
            let mut spont = Vec::new();
            super::spikes::poisson(lick_params.spontaneous_hz, r, end, &mut g, &mut spont);
            licks.extend(spont);
            changed = true;
            out.push(Injected {
                session: si,
                trial: Some(t.number),
                kind: FaultKind::ValveFailure,
                detail: "reward logged, not consumed".into(),
            });
        }
    }
    let rate = p.rate(FaultKind::LateFirstLick);
    if rate > 0.0 {
        let mut g = rng(seed, FaultKind::LateFirstLick, si);
        for t in &session.trials {
            let hit = g.random::<f64>() < rate;
            let quiet = 0.4 + 0.8 * g.random::<f64>();
            let Some(r) = t.reward_s.filter(|_| hit) else {
                continue;
            };
            licks.retain(|&x| x < r || x >= r + quiet);
            changed = true;
            out.push(Injected {
                session: si,
                trial: Some(t.number),
                kind: FaultKind::LateFirstLick,
                detail: format!("no lick in the first {quiet:.3} s after the reward"),
            });
        }
    }
    if changed {
        licks.sort_by(f64::total_cmp);
        let mut kept: Vec<f64> = Vec::with_capacity(licks.len());
        for &t in licks.iter() {
            if kept
                .last()
                .is_none_or(|&last| t - last >= lick_params.refractory_s)
            {
                kept.push(t);
            }
        }
        *licks = kept;
    }
}

/// The photometry faults of one session (`params` is the clean trace's configuration).
pub fn photometry_faults(
    at: At<'_>,
    rec: &mut Photometry,
    truth: &mut PhotometryInjected,
    params: &super::PhotometryParams,
    out: &mut Vec<Injected>,
) {
    let At {
        session,
        index: si,
        faults: p,
        seed,
    } = at;
    let round5 = |x: f64| (x * 1e5).round() / 1e5;
    let rate_hz = params.rate_hz;
    let delay = |t: &Trial| {
        t.cue
            .and_then(|c| session.meta.cues[c].reward_delay_s)
            .unwrap_or(0.0)
    };

    let rate = p.rate(FaultKind::ControlDecoupled);
    if rate > 0.0 {
        let mut g = rng(seed, FaultKind::ControlDecoupled, si);
        if g.random::<f64>() < rate {
            if let Some(control) = rec.control.as_mut() {
                let phase = std::f64::consts::TAU * g.random::<f64>();
                let period = 200.0 + 400.0 * g.random::<f64>();
                let noise = rand_distr::Normal::new(0.0, params.noise_frac.max(0.0))
                    .unwrap_or(rand_distr::Normal::new(0.0, 0.0).expect("sd 0"));
                for (c, &t) in control.iter_mut().zip(&rec.time_s) {
                    let wander = 0.03 * (std::f64::consts::TAU * t / period + phase).sin();
                    let e: f64 = rand_distr::Distribution::sample(&noise, &mut g);
                    *c = round5(params.f0_control * (1.0 + wander + e));
                }
                out.push(Injected {
                    session: si,
                    trial: None,
                    kind: FaultKind::ControlDecoupled,
                    detail: format!("control wanders on its own (3 %, period {period:.0} s)"),
                });
            }
        }
    }

    let rate = p.rate(FaultKind::TrialMotion);
    if rate > 0.0 {
        let mut g = rng(seed, FaultKind::TrialMotion, si);
        for t in &session.trials {
            let hit = g.random::<f64>() < rate;
            let start = t0(t);
            let span = last_event(t, delay(t)) + 0.5 - start;
            let on = start + span * g.random::<f64>();
            let depth = 0.03 + 0.17 * g.random::<f64>();
            let dur = 0.5 + 0.5 * g.random::<f64>();
            if !hit {
                continue;
            }
            let (a, b) = (index_of(&rec.time_s, on), index_of(&rec.time_s, on + dur));
            for j in a..b {
                let phase = (rec.time_s[j] - on) / dur;
                let m = 1.0 - depth * 0.5 * (1.0 - (std::f64::consts::TAU * phase).cos());
                rec.signal[j] = round5(rec.signal[j] * m);
                if let Some(c) = rec.control.as_mut() {
                    c[j] = round5(c[j] * m);
                }
                truth.motion[j] *= m;
            }
            out.push(Injected {
                session: si,
                trial: Some(t.number),
                kind: FaultKind::TrialMotion,
                detail: format!(
                    "dip of {:.1} % for {dur:.2} s from {:.3} s after onset",
                    depth * 100.0,
                    on - start
                ),
            });
        }
    }

    let rate = p.rate(FaultKind::Saturation);
    if rate > 0.0 {
        let mut g = rng(seed, FaultKind::Saturation, si);
        let rail = round5(rec.signal.iter().cloned().fold(f64::MIN, f64::max) * 1.05);
        for t in &session.trials {
            let hit = g.random::<f64>() < rate;
            let start = t0(t);
            let on = start + (last_event(t, delay(t)) + 0.5 - start) * g.random::<f64>();
            let dur = 0.3 + 0.7 * g.random::<f64>();
            if !hit {
                continue;
            }
            let (a, b) = (index_of(&rec.time_s, on), index_of(&rec.time_s, on + dur));
            rec.signal[a..b].iter_mut().for_each(|s| *s = rail);
            out.push(Injected {
                session: si,
                trial: Some(t.number),
                kind: FaultKind::Saturation,
                detail: format!("signal pinned at {rail} for {} samples", b - a),
            });
        }
    }

    let rate = p.rate(FaultKind::Dropout);
    if rate > 0.0 {
        let mut g = rng(seed, FaultKind::Dropout, si);
        let mut drop = vec![false; rec.time_s.len()];
        for t in &session.trials {
            let hit = g.random::<f64>() < rate;
            let start = t0(t);
            let on = start + (last_event(t, delay(t)) + 0.5 - start) * g.random::<f64>();
            let dur = 0.3 + 1.2 * g.random::<f64>();
            let missing = g.random::<f64>() < 0.5;
            if !hit {
                continue;
            }
            let (a, b) = (
                index_of(&rec.time_s, on),
                index_of(&rec.time_s, on + dur).max(index_of(&rec.time_s, on) + 1),
            );
            let b = b.min(rec.time_s.len());
            if missing {
                drop[a..b].iter_mut().for_each(|d| *d = true);
            } else {
                rec.signal[a..b].iter_mut().for_each(|s| *s = 0.0);
                if let Some(c) = rec.control.as_mut() {
                    c[a..b].iter_mut().for_each(|s| *s = 0.0);
                }
            }
            out.push(Injected {
                session: si,
                trial: Some(t.number),
                kind: FaultKind::Dropout,
                detail: format!(
                    "{} samples {} ({:.2} s at {rate_hz} Hz)",
                    b - a,
                    if missing { "missing" } else { "read 0" },
                    (b - a) as f64 / rate_hz
                ),
            });
        }
        if drop.iter().any(|&d| d) {
            let keep = |v: &mut Vec<f64>| {
                let mut i = 0;
                v.retain(|_| {
                    i += 1;
                    !drop[i - 1]
                });
            };
            keep(&mut rec.time_s);
            keep(&mut rec.signal);
            if let Some(c) = rec.control.as_mut() {
                keep(c);
            }
            keep(&mut truth.dff);
            keep(&mut truth.bleaching);
            keep(&mut truth.motion);
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn kinds_parse_in_both_spellings_and_rates_are_checked() {
        assert_eq!(
            FaultParams::parse_one("valve-failure:0.1"),
            Ok((FaultKind::ValveFailure, 0.1))
        );
        assert_eq!(
            FaultParams::parse_one("unit_lost:1"),
            Ok((FaultKind::UnitLost, 1.0))
        );
        assert!(FaultParams::parse_one("valve:0.1").is_err());
        assert!(FaultParams::parse_one("dropout:1.5").is_err());
        assert!(FaultParams::parse_one("dropout").is_err());
        for k in FaultKind::ALL {
            assert_eq!(FaultKind::parse(k.name()), Some(k));
        }
    }
}

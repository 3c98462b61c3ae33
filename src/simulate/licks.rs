//! Licking: anticipatory licks that follow learned value, consummatory bouts after each
//! delivered reward, and sparse spontaneous licks.
//!
//! Anticipation uses the response rule of Ludvig, Sutton & Kehoe 2012 (methods.md §1.3):
//! a_k = υ·a_{k−1} + [V_{k−1} − θ]₊ per model bin, turned into a lick rate
//! `hz_per_ul·(1 − υ)·a_k` (so a steady value V gives `hz_per_ul·[V − θ]₊`), capped, from cue
//! onset until the reward arrives. A bout is a first lick after a short latency, then licks at
//! a jittered ~7 Hz for a few seconds (mouse bouts 6–11 Hz, methods.md §6). A refractory
//! gap between licks keeps overlapping sources physically possible.

use super::round_time;
use super::spikes::{poisson, SpanTrace};
use rand::Rng;
use rand_distr::{Distribution, Exp, Normal};

#[derive(Debug, Clone, PartialEq)]
pub struct LickParams {
    /// Value threshold θ of the response rule, in µL of predicted reward.
    pub theta_ul: f64,
    /// Leak υ of the response rule per 50 ms model bin.
    pub upsilon: f64,
    /// Anticipatory lick rate per µL of value above θ, licks/s.
    pub hz_per_ul: f64,
    pub max_anticipatory_hz: f64,
    /// First consummatory lick: `min + exponential(mean − min)` after delivery.
    pub first_lick_min_s: f64,
    pub first_lick_mean_s: f64,
    /// Bout rate and its inter-lick jitter (sd of the interval).
    pub bout_hz: f64,
    pub bout_interval_sd_s: f64,
    /// Bout length, drawn uniformly.
    pub bout_min_s: f64,
    pub bout_max_s: f64,
    pub spontaneous_hz: f64,
    /// Shortest interval between two licks.
    pub refractory_s: f64,
}

impl Default for LickParams {
    fn default() -> Self {
        LickParams {
            // With 3 µL rewards a learned p = 1 cue (V ≈ 1.6 at onset, 3 before the reward)
            // gives ~2.5 licks/s averaged over the delay, rising to ~5 just before the
            // reward; cf. "rises 0 → 4 Hz" (methods.md §6, from memory there).
            theta_ul: 0.5,
            upsilon: 0.9,
            hz_per_ul: 3.0,
            max_anticipatory_hz: 8.0,
            first_lick_min_s: 0.05,
            first_lick_mean_s: 0.15,
            bout_hz: 7.0,
            bout_interval_sd_s: 0.015,
            bout_min_s: 2.5,
            bout_max_s: 4.0,
            spontaneous_hz: 0.05,
            refractory_s: 0.08,
        }
    }
}

/// Sorted lick times of one session at 0.1 ms resolution.
pub fn session_licks(
    p: &LickParams,
    spans: &[SpanTrace<'_>],
    dt: f64,
    end_s: f64,
    rng: &mut impl Rng,
) -> Vec<f64> {
    let mut raw = Vec::new();
    poisson(p.spontaneous_hz, 0.0, end_s, rng, &mut raw);
    let leak = p.upsilon.powf(dt / 0.05);
    let first = Exp::new(1.0 / (p.first_lick_mean_s - p.first_lick_min_s).max(1e-6)).ok();
    let interval = Normal::new(1.0 / p.bout_hz, p.bout_interval_sd_s).ok();
    for span in spans {
        // Anticipation: from onset until the reward (or the span's end on omissions).
        let stop = span.reward_s.unwrap_or(f64::INFINITY);
        let mut a = 0.0;
        let mut v_prev = 0.0;
        for (k, &v) in span.value.iter().enumerate() {
            a = leak * a + (v_prev - p.theta_ul).max(0.0);
            v_prev = v;
            let start = span.t0 + k as f64 * dt;
            let end = (start + dt).min(stop).min(end_s);
            let rate = (p.hz_per_ul * (1.0 - leak) * a).min(p.max_anticipatory_hz);
            poisson(rate, start, end, rng, &mut raw);
        }
        // Consummation.
        if let (Some(r), Some(first), Some(interval)) = (span.reward_s, &first, &interval) {
            let mut t = r + p.first_lick_min_s + first.sample(rng);
            let bout_end = r + rng.random_range(p.bout_min_s..=p.bout_max_s.max(p.bout_min_s));
            while t < bout_end.min(end_s) {
                raw.push(round_time(t));
                t += interval.sample(rng).max(p.refractory_s);
            }
        }
    }
    raw.sort_by(f64::total_cmp);
    let mut out: Vec<f64> = Vec::with_capacity(raw.len());
    for t in raw {
        if out.last().is_none_or(|&last| t - last >= p.refractory_s) {
            out.push(t);
        }
    }
    out
}

#[cfg(test)]
mod tests {
    use super::*;
    use rand::SeedableRng;
    use rand_chacha::ChaCha8Rng;

    #[test]
    fn bout_rate_latency_and_refractory() {
        let p = LickParams {
            spontaneous_hz: 0.0,
            ..Default::default()
        };
        let value = [0.0; 50];
        let delta = [0.0; 50];
        let spans: Vec<SpanTrace<'_>> = (0..200)
            .map(|i| SpanTrace {
                t0: 20.0 * i as f64,
                delta: &delta,
                value: &value,
                reward_s: Some(20.0 * i as f64 + 1.5),
            })
            .collect();
        let mut rng = ChaCha8Rng::seed_from_u64(2);
        let licks = session_licks(&p, &spans, 0.05, 4000.0, &mut rng);
        assert!(licks
            .windows(2)
            .all(|w| w[1] - w[0] >= p.refractory_s - 1e-9));
        // Zero value: no anticipatory licks before any reward.
        assert!(licks.iter().all(|t| t % 20.0 >= 1.5));
        let in_bout = licks.iter().filter(|t| *t % 20.0 < 1.5 + 2.5).count() as f64;
        let hz = in_bout / (200.0 * 2.5);
        assert!((hz - 7.0).abs() < 0.5, "bout rate {hz}");
        let first_mean = spans
            .iter()
            .map(|s| {
                let r = s.reward_s.unwrap();
                licks.iter().find(|&&t| t >= r).unwrap() - r
            })
            .sum::<f64>()
            / 200.0;
        assert!((first_mean - 0.15).abs() < 0.03, "latency {first_mean}");
    }
}

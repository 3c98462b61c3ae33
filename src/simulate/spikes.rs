//! Dopamine-like units: Poisson spikes at a baseline rate plus gain × δ.
//!
//! Within a trial span, the δ of model bin k sets the rate over that bin shifted by the
//! response latency: rate = max(0, baseline + gain·δ_k) on [t0 + k·dt + L, t0 + (k+1)·dt + L).
//! Elsewhere the unit fires at its baseline. This is the observation model the fitter inverts
//! (design brief, "Fitting"); clipping at zero makes dips smaller than bursts, as recorded
//! (Bayer & Glimcher 2005).

use super::{rng_for, round_time, stream};
use rand::Rng;
use rand_distr::{Distribution, Exp1};

/// How units are drawn; defaults are the demo's.
#[derive(Debug, Clone, PartialEq)]
pub struct UnitParams {
    pub count: usize,
    /// Baseline rate drawn uniformly per unit, spikes/s (4–5 Hz: methods.md §6).
    pub baseline_min_hz: f64,
    pub baseline_max_hz: f64,
    /// Gain drawn uniformly per unit, extra spikes/s per unit of δ (δ is in µL).
    pub gain_min: f64,
    pub gain_max: f64,
    /// Response latency after the model's bin, seconds (dopamine responses start within
    /// 100 ms of the event: Schultz 2007, methods.md §6; 50 ms is our default).
    pub latency_s: f64,
}

impl Default for UnitParams {
    fn default() -> Self {
        UnitParams {
            // Six keeps the 8-day demo subject under 5 MB (eight would be ~6 MB).
            count: 6,
            baseline_min_hz: 4.0,
            baseline_max_hz: 5.0,
            // An unpredicted 3 µL reward (δ = 3) adds 30–60 spikes/s for one 50 ms bin,
            // i.e. 1.5–3 extra spikes: a short burst.
            gain_min: 10.0,
            gain_max: 20.0,
            latency_s: 0.05,
        }
    }
}

/// One drawn unit.
#[derive(Debug, Clone, PartialEq)]
pub struct Unit {
    pub id: String,
    pub baseline_hz: f64,
    pub gain: f64,
}

/// The model traces of one trial, on the session clock.
#[derive(Debug, Clone, Copy)]
pub struct SpanTrace<'a> {
    pub t0: f64,
    pub delta: &'a [f64],
    pub value: &'a [f64],
    /// Delivered reward, session clock.
    pub reward_s: Option<f64>,
}

/// Draw every unit's baseline and gain (the same units on every day).
pub fn draw_units(p: &UnitParams, seed: u64) -> Vec<Unit> {
    let mut rng = rng_for(seed, stream::UNITS);
    let width = p.count.to_string().len();
    (0..p.count)
        .map(|i| {
            let b =
                p.baseline_min_hz + (p.baseline_max_hz - p.baseline_min_hz) * rng.random::<f64>();
            let g = p.gain_min + (p.gain_max - p.gain_min) * rng.random::<f64>();
            Unit {
                id: format!("u{:0width$}", i + 1),
                // Rounded so truth.toml states exactly the rate that was used.
                baseline_hz: (b * 1000.0).round() / 1000.0,
                gain: (g * 1000.0).round() / 1000.0,
            }
        })
        .collect()
}

/// A unit's spike times in one session, sorted, at 0.1 ms resolution.
pub fn unit_spikes(
    unit: &Unit,
    p: &UnitParams,
    spans: &[SpanTrace<'_>],
    dt: f64,
    end_s: f64,
    rng: &mut impl Rng,
) -> Vec<f64> {
    let mut out = Vec::new();
    let mut cursor = 0.0;
    for span in spans {
        for (k, &d) in span.delta.iter().enumerate() {
            let start = (span.t0 + k as f64 * dt + p.latency_s).max(cursor);
            let end = (span.t0 + (k + 1) as f64 * dt + p.latency_s).min(end_s);
            if end <= start {
                continue;
            }
            poisson(unit.baseline_hz, cursor, start, rng, &mut out);
            poisson(
                (unit.baseline_hz + unit.gain * d).max(0.0),
                start,
                end,
                rng,
                &mut out,
            );
            cursor = end;
        }
    }
    poisson(unit.baseline_hz, cursor, end_s, rng, &mut out);
    out
}

/// Homogeneous Poisson events on [start, end), appended in order; exponential gaps restart
/// at `start` (the process is memoryless, so piecewise generation is exact).
pub(crate) fn poisson(rate: f64, start: f64, end: f64, rng: &mut impl Rng, out: &mut Vec<f64>) {
    if rate <= 0.0 || end <= start {
        return;
    }
    let mut t = start;
    loop {
        let gap: f64 = Exp1.sample(rng);
        t += gap / rate;
        if t >= end {
            break;
        }
        out.push(round_time(t));
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use rand::SeedableRng;
    use rand_chacha::ChaCha8Rng;

    #[test]
    fn baseline_rate_is_recovered() {
        let p = UnitParams::default();
        let u = Unit {
            id: "u1".into(),
            baseline_hz: 4.5,
            gain: 10.0,
        };
        let mut rng = ChaCha8Rng::seed_from_u64(5);
        let s = unit_spikes(&u, &p, &[], 0.05, 10_000.0, &mut rng);
        let rate = s.len() as f64 / 10_000.0;
        // Poisson count 45000 has sd ≈ 212 (0.02 Hz); 0.1 Hz is a 5-sd band.
        assert!((rate - 4.5).abs() < 0.1, "rate {rate}");
        assert!(s.windows(2).all(|w| w[0] <= w[1]));
    }

    #[test]
    fn delta_bins_shift_rate_after_latency() {
        let p = UnitParams::default();
        let u = Unit {
            id: "u1".into(),
            baseline_hz: 4.0,
            gain: 100.0,
        };
        let delta = [0.0, 2.0, -1.0, 0.0];
        let value = [0.0; 4];
        let spans: Vec<SpanTrace<'_>> = (0..2000)
            .map(|i| SpanTrace {
                t0: 10.0 * i as f64,
                delta: &delta,
                value: &value,
                reward_s: None,
            })
            .collect();
        let mut rng = ChaCha8Rng::seed_from_u64(9);
        let s = unit_spikes(&u, &p, &spans, 0.05, 20_000.0, &mut rng);
        let count_in = |a: f64, b: f64| {
            s.iter()
                .filter(|&&t| {
                    let x = t % 10.0;
                    x >= a && x < b
                })
                .count() as f64
                / (2000.0 * (b - a))
        };
        // Bin 1 (δ = 2) lands on [0.10, 0.15); bin 2 (δ = −1, clipped to 0) on [0.15, 0.20).
        assert!((count_in(0.1001, 0.1499) - 204.0).abs() < 15.0);
        assert!(count_in(0.1501, 0.1999) == 0.0);
        assert!((count_in(1.0, 9.0) - 4.0).abs() < 0.2);
    }
}

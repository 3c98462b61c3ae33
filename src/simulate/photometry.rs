//! A dopamine-sensor trace: δ convolved with the sensor's rise/decay kernel, on a fluorescence
//! baseline, plus an isosbestic control channel.
//!
//! signal(t)  = F0_s·B(t)·M(t)·(1 + ΔF/F(t)) + noise,  ΔF/F = amp·Σ_k δ_k·h(t − t_k − latency)
//! control(t) = F0_c·B(t)·M(t) + noise
//! h is a difference of exponentials scaled to peak 1, so one bin's δ gives a peak ΔF/F of
//! amp·δ. B (slow photobleaching) and M (motion artifacts) are shared by both channels, which
//! is what lets an isosbestic fit remove them; both are off unless asked for.

use super::round_time;
use super::spikes::{poisson, SpanTrace};
use crate::data::Photometry;
use rand::Rng;
use rand_distr::{Distribution, Normal};

#[derive(Debug, Clone, PartialEq)]
pub struct PhotometryParams {
    /// Samples per second after demodulation (20 Hz: methods.md §6).
    pub rate_hz: f64,
    /// Baseline fluorescence of each channel, arbitrary units.
    pub f0_signal: f64,
    pub f0_control: f64,
    /// Peak ΔF/F per µL of δ.
    pub amp_per_ul: f64,
    /// Rise and decay time constants of the sensor kernel, seconds. A decay of hundreds of ms
    /// is what methods.md §4 notes for dopamine sensors (tagged from memory there); 0.1 s and
    /// 0.6 s are our demo values, not a published sensor's.
    pub tau_rise_s: f64,
    pub tau_decay_s: f64,
    /// Sensor onset after the model's bin, seconds (as the spike units' latency).
    pub latency_s: f64,
    /// Gaussian noise sd of each sample, as a fraction of that channel's F0.
    pub noise_frac: f64,
    pub bleaching: Option<Bleaching>,
    pub motion: Option<Motion>,
}

impl Default for PhotometryParams {
    fn default() -> Self {
        PhotometryParams {
            rate_hz: 20.0,
            f0_signal: 1.5,
            f0_control: 1.2,
            // An unpredicted 3 µL reward peaks near 6 % ΔF/F.
            amp_per_ul: 0.02,
            tau_rise_s: 0.1,
            tau_decay_s: 0.6,
            latency_s: 0.05,
            noise_frac: 0.004,
            bleaching: None,
            motion: None,
        }
    }
}

impl PhotometryParams {
    pub fn validate(&self) -> Result<(), String> {
        let ok = |x: f64| x.is_finite() && x > 0.0;
        if !(ok(self.rate_hz) && self.rate_hz <= 10_000.0) {
            return Err("photometry rate must be in (0, 10000] Hz".into());
        }
        if !(ok(self.tau_rise_s) && ok(self.tau_decay_s) && self.tau_rise_s < self.tau_decay_s) {
            return Err("sensor kernel needs 0 < rise < decay time constant".into());
        }
        if !(ok(self.f0_signal) && ok(self.f0_control) && self.noise_frac.is_finite()) {
            return Err("photometry baselines must be positive and noise finite".into());
        }
        if let Some(b) = &self.bleaching {
            if !((0.0..1.0).contains(&b.fraction) && ok(b.tau_s)) {
                return Err("--bleaching: FRACTION in [0, 1), TAU_S > 0".into());
            }
        }
        if let Some(m) = &self.motion {
            if !(m.per_minute.is_finite()
                && (0.0..=60.0).contains(&m.per_minute)
                && (0.0..1.0).contains(&m.max_depth)
                && ok(m.duration_s)
                && m.duration_s <= 60.0)
            {
                return Err(
                    "--motion: PER_MIN in [0, 60], MAX_DEPTH in [0, 1), DURATION_S in (0, 60]"
                        .into(),
                );
            }
        }
        Ok(())
    }
}

/// Photobleaching: both channels decay as 1 − f + f·exp(−t/τ). One exponential is our
/// simplification; published bleaching models use two (Keevers et al. 2025, methods.md §5).
#[derive(Debug, Clone, PartialEq)]
pub struct Bleaching {
    pub fraction: f64,
    pub tau_s: f64,
}

/// Motion artifacts: Poisson events, each a raised-cosine dip in both channels.
#[derive(Debug, Clone, PartialEq)]
pub struct Motion {
    pub per_minute: f64,
    /// Largest fractional drop; each event draws its depth uniformly up to this.
    pub max_depth: f64,
    pub duration_s: f64,
}

/// The sensor kernel sampled at `rate_hz`, peak 1, cut where it has decayed below 0.1 %.
pub fn kernel(tau_rise: f64, tau_decay: f64, rate_hz: f64) -> Vec<f64> {
    let h = |s: f64| (-s / tau_decay).exp() - (-s / tau_rise).exp();
    let peak_t = (tau_decay / tau_rise).ln() * tau_rise * tau_decay / (tau_decay - tau_rise);
    let peak = h(peak_t);
    let n = ((tau_decay * 8.0) * rate_hz).ceil() as usize + 1;
    (0..n).map(|i| h(i as f64 / rate_hz) / peak).collect()
}

/// What went into one session's trace, sample by sample: the ground truth an artifact-removal
/// check compares against.
#[derive(Debug, Clone, Default, PartialEq)]
pub struct Injected {
    /// The true ΔF/F (sensor response to δ).
    pub dff: Vec<f64>,
    /// Bleaching factor B(t) (1 when off).
    pub bleaching: Vec<f64>,
    /// Motion factor M(t) (1 when off).
    pub motion: Vec<f64>,
}

/// One session's trace from t = 0 to `end_s`, and what was injected into it.
pub fn session_trace(
    p: &PhotometryParams,
    spans: &[SpanTrace<'_>],
    dt: f64,
    end_s: f64,
    rng: &mut impl Rng,
) -> (Photometry, Injected) {
    let n = (end_s * p.rate_hz).floor() as usize + 1;
    let time_s: Vec<f64> = (0..n).map(|i| round_time(i as f64 / p.rate_hz)).collect();

    let mut impulses = vec![0.0; n];
    for span in spans {
        for (k, &d) in span.delta.iter().enumerate() {
            let j = ((span.t0 + k as f64 * dt + p.latency_s) * p.rate_hz).round() as usize;
            if d != 0.0 && j < n {
                impulses[j] += d;
            }
        }
    }
    let h = kernel(p.tau_rise_s, p.tau_decay_s, p.rate_hz);
    let mut dff = vec![0.0; n];
    for (j, &d) in impulses.iter().enumerate() {
        if d != 0.0 {
            for (i, &hv) in h.iter().enumerate().take(n - j) {
                dff[j + i] += p.amp_per_ul * d * hv;
            }
        }
    }

    let mut bleaching = vec![1.0; n];
    if let Some(b) = &p.bleaching {
        for (s, t) in bleaching.iter_mut().zip(&time_s) {
            *s *= 1.0 - b.fraction + b.fraction * (-t / b.tau_s).exp();
        }
    }
    let mut motion = vec![1.0; n];
    if let Some(m) = &p.motion {
        let mut onsets = Vec::new();
        poisson(m.per_minute / 60.0, 0.0, end_s, rng, &mut onsets);
        for t_on in onsets {
            let depth = m.max_depth * rng.random::<f64>();
            let first = (t_on * p.rate_hz).ceil() as usize;
            let last = (((t_on + m.duration_s) * p.rate_hz).floor() as usize).min(n - 1);
            for (j, s) in motion.iter_mut().enumerate().take(last + 1).skip(first) {
                let phase = (j as f64 / p.rate_hz - t_on) / m.duration_s;
                *s *= 1.0 - depth * 0.5 * (1.0 - (2.0 * std::f64::consts::PI * phase).cos());
            }
        }
    }

    let noise = Normal::new(0.0, p.noise_frac).unwrap_or(Normal::new(0.0, 0.0).expect("sd 0"));
    let round5 = |x: f64| (x * 1e5).round() / 1e5;
    let mut signal = Vec::with_capacity(n);
    let mut control = Vec::with_capacity(n);
    for j in 0..n {
        let shared = bleaching[j] * motion[j];
        let s = p.f0_signal * (shared * (1.0 + dff[j]) + noise.sample(rng));
        let c = p.f0_control * (shared + noise.sample(rng));
        signal.push(round5(s));
        control.push(round5(c));
    }
    let recording = Photometry {
        time_s,
        signal,
        control: Some(control),
    };
    (
        recording,
        Injected {
            dff,
            bleaching,
            motion,
        },
    )
}

#[cfg(test)]
mod tests {
    use super::*;
    use rand::SeedableRng;
    use rand_chacha::ChaCha8Rng;

    #[test]
    fn kernel_peaks_at_one_and_decays() {
        let h = kernel(0.1, 0.6, 1000.0);
        let max = h.iter().cloned().fold(0.0, f64::max);
        assert!((max - 1.0).abs() < 1e-4);
        // Closed form peak time: ln(τd/τr)·τr·τd/(τd − τr) = 0.215 s.
        let arg = h.iter().position(|&v| v == max).unwrap();
        assert!((arg as f64 / 1000.0 - 0.215).abs() < 0.002);
        assert!(*h.last().unwrap() < 0.001 && h[0] == 0.0);
    }

    #[test]
    fn one_delta_gives_its_peak_dff() {
        let p = PhotometryParams {
            noise_frac: 0.0,
            ..Default::default()
        };
        let delta = [3.0];
        let value = [0.0];
        let spans = [SpanTrace {
            t0: 10.0,
            delta: &delta,
            value: &value,
            reward_s: None,
        }];
        let mut rng = ChaCha8Rng::seed_from_u64(1);
        let (tr, injected) = session_trace(&p, &spans, 0.05, 20.0, &mut rng);
        assert!(injected.motion.iter().all(|&m| m == 1.0));
        let peak = tr.signal.iter().cloned().fold(0.0, f64::max) / p.f0_signal - 1.0;
        // Sampled at 20 Hz, the 0.215 s peak is hit to within 1 % of its height.
        assert!((peak - 0.06).abs() < 0.001, "peak {peak}");
        assert!(tr.control.unwrap().iter().all(|&c| c == 1.2));
    }
}

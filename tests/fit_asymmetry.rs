//! `--asymmetric`: separate gains of positive and negative prediction errors. Subjects come
//! from the independent simulator (`tests/independent_sim`, no code shared with `src/`), whose
//! units fire at max(0, b + g+·δ) for δ ≥ 0 and max(0, b + g−·δ) for δ < 0 per model bin
//! (Bayer & Glimcher 2005 report such an asymmetry; Dabney et al. 2020 read the asymmetry
//! τ = g+/(g+ + g−) per unit). Recovery in the sense of Wilson & Collins 2019 (eLife
//! 8:e49547): known parameters in, fitted ones compared.

mod independent_sim;

use independent_sim::{subject, Spec};
use trialdesk::fit::{dataset, run_fit, FitOptions, NoProgress};
use trialdesk::marks::MarkState;
use trialdesk::obs::{observe, ObsOptions};

/// Fitted asymmetry τ of a subject simulated with τ = `tau` (g+ fixed at 5 spikes/s per unit δ,
/// resting rate 30 spikes/s so that even the steepest dips, g− = 20, stay above zero: where a
/// rate is cut at zero its gain cannot be told from any larger one).
fn fitted_tau(tau: f64, seed: u64) -> (f64, f64, f64) {
    let g_pos = 5.0;
    let spec = Spec {
        baseline_hz: 30.0,
        gain_hz: g_pos,
        gain_neg_hz: Some(g_pos * (1.0 - tau) / tau),
        p_reward: 0.6,
        units: 20,
        sessions: 10,
        seed,
        ..Spec::default()
    };
    let subj = subject(&spec);
    let obs_opts = ObsOptions::default();
    let obs = observe(&subj, &obs_opts).unwrap();
    let mut data = dataset::build(&subj, &obs, &obs_opts, spec.dt, &[] as &[MarkState], false);
    data.counts = dataset::spike_counts(&data, &subj, &obs_opts);
    let opts = FitOptions {
        lambda: Some(spec.lambda),
        bootstrap: 0,
        compare: false,
        asymmetric: true,
        ..Default::default()
    };
    let out = run_fit(&data, &opts, &NoProgress).unwrap();
    let lin = &out.best.linear;
    let neg = lin.gain_neg.expect("asymmetric fit");
    (lin.gain / (lin.gain + neg), lin.gain, neg)
}

/// Measured (2026-12-03; 20 units, 10 sessions × 150 trials, λ fixed at its true 0):
/// true τ 0.2, 0.4, 0.6, 0.8 → fitted 0.211, 0.392, 0.646, 0.945. The fitted τ must order the
/// subjects as the truth does (rank correlation 1, what the distributional account predicts of
/// units); each must lie within 0.2 of the truth: a small g− (τ = 0.8: g− = 1.25) is estimated
/// with a spread that moves τ by about that much.
#[test]
fn asymmetry_is_recovered_and_orders_the_subjects() {
    let truths = [0.2, 0.4, 0.6, 0.8];
    let mut fitted = Vec::new();
    for (i, &t) in truths.iter().enumerate() {
        let (tau, gp, gn) = fitted_tau(t, 40 + i as u64);
        println!("true tau {t:.2}: fitted tau {tau:.3} (g+ {gp:.2}, g- {gn:.2})");
        fitted.push(tau);
    }
    for (t, f) in truths.iter().zip(&fitted) {
        assert!((t - f).abs() < 0.2, "true {t}, fitted {f}");
    }
    assert!(fitted.windows(2).all(|w| w[0] < w[1]), "{fitted:?}");
}

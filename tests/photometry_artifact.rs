//! Isosbestic correction on a simulated recording: shared motion artifacts and bleaching must
//! leave ΔF/F, the dopamine transients must stay, and a robust fit must keep the transients from
//! biasing the baseline.
//!
//! The recording is generated here (random seed 7) so the check does not depend on the
//! simulator's internals: both channels share bleaching B(t) and motion M(t) multiplicatively,
//! signal = F0_s·B·M·(1 + dff) + noise, control = F0_c·B·M + noise, so the exact answer is
//! F̂ = (F0_s/F0_c)·control and ΔF/F = dff (up to noise).

use rand::{Rng, SeedableRng};
use rand_chacha::ChaCha8Rng;
use rand_distr::{Distribution, Normal};
use trialdesk::data::Photometry;
use trialdesk::photometry::{
    preprocess, BaselineFit, ControlFit, FitScope, PreprocessOptions, Processed,
};

const RATE_HZ: f64 = 20.0;
const F0_SIGNAL: f64 = 2.0;
const F0_CONTROL: f64 = 1.25;

struct Simulated {
    rec: Photometry,
    /// M(t) − 1: the injected motion artifact.
    motion: Vec<f64>,
    /// The true ΔF/F.
    dff: Vec<f64>,
}

fn simulate() -> Simulated {
    let mut rng = ChaCha8Rng::seed_from_u64(7);
    let n = (600.0 * RATE_HZ) as usize; // 10 minutes
    let time: Vec<f64> = (0..n).map(|i| i as f64 / RATE_HZ).collect();
    let mut motion = vec![0.0; n];
    for _ in 0..25 {
        // Raised-cosine dips of up to 30 %, 0.5–2 s long.
        let (centre, depth, width) = (
            rng.random_range(5.0..595.0),
            rng.random_range(0.05..0.3),
            rng.random_range(0.5..2.0),
        );
        for (m, &t) in motion.iter_mut().zip(&time) {
            let u = (t - centre) / (0.5 * width);
            if u.abs() < 1.0 {
                *m -= depth * 0.5 * (1.0 + (std::f64::consts::PI * u).cos());
            }
        }
    }
    // Transients of 5–15 % every 8–20 s (rise 0.1 s, decay 0.6 s).
    let mut dff = vec![0.0; n];
    let mut onset = 3.0;
    while onset < 595.0 {
        let amp = rng.random_range(0.05..0.15);
        for (d, &t) in dff.iter_mut().zip(&time) {
            let s = t - onset;
            if (0.0..6.0).contains(&s) {
                *d += amp * 1.6 * ((-s / 0.6).exp() - (-s / 0.1).exp());
            }
        }
        onset += rng.random_range(8.0..20.0);
    }
    let noise = Normal::new(0.0, 0.003).unwrap();
    let (mut signal, mut control) = (Vec::with_capacity(n), Vec::with_capacity(n));
    for i in 0..n {
        let bleach = 0.8 + 0.2 * (-time[i] / 150.0).exp();
        let shared = bleach * (1.0 + motion[i]);
        signal.push(F0_SIGNAL * shared * (1.0 + dff[i]) + F0_SIGNAL * noise.sample(&mut rng));
        control.push(F0_CONTROL * shared + F0_CONTROL * noise.sample(&mut rng));
    }
    Simulated {
        rec: Photometry {
            time_s: time,
            signal,
            control: Some(control),
        },
        motion,
        dff,
    }
}

fn pearson(a: &[f64], b: &[f64]) -> f64 {
    let n = a.len() as f64;
    let (ma, mb) = (a.iter().sum::<f64>() / n, b.iter().sum::<f64>() / n);
    let (mut sab, mut saa, mut sbb) = (0.0, 0.0, 0.0);
    for (x, y) in a.iter().zip(b) {
        sab += (x - ma) * (y - mb);
        saa += (x - ma) * (x - ma);
        sbb += (y - mb) * (y - mb);
    }
    sab / (saa * sbb).sqrt()
}

fn run(rec: &Photometry, fit: ControlFit, scope: FitScope, use_control: bool) -> Processed {
    let opts = PreprocessOptions {
        fit,
        scope,
        use_control,
        ..PreprocessOptions::default()
    };
    preprocess(rec, &opts).unwrap()
}

#[test]
fn control_fit_removes_motion_and_keeps_transients() {
    let sim = simulate();
    let raw = pearson(&sim.rec.signal, &sim.motion);
    // Bleaching and transients also move the raw signal, so r is moderate here; once
    // bleaching alone is removed it is above 0.8 (next test).
    assert!(
        raw > 0.3,
        "the artifact should show in the raw signal: r = {raw}"
    );
    for (fit, scope) in [
        (ControlFit::Ols, FitScope::WholeSession),
        (ControlFit::default(), FitScope::WholeSession),
        (ControlFit::Ols, FitScope::Sliding { window_s: 60.0 }),
        (ControlFit::default(), FitScope::Sliding { window_s: 60.0 }),
    ] {
        let out = run(&sim.rec, fit, scope, true);
        let after = pearson(&out.dff, &sim.motion);
        let kept = pearson(&out.dff, &sim.dff);
        assert!(
            after.abs() < 0.05 && kept > 0.95,
            "{}: corr with motion {raw:.3} → {after:.3}, with true ΔF/F {kept:.3}",
            out.method
        );
    }
}

#[test]
fn bleaching_detrend_alone_cannot_remove_motion() {
    // The contrast that motivates the control channel: without it the dips stay in ΔF/F.
    let sim = simulate();
    let out = run(
        &sim.rec,
        ControlFit::default(),
        FitScope::WholeSession,
        false,
    );
    assert!(matches!(out.baseline, BaselineFit::Bleaching(_)));
    let after = pearson(&out.dff, &sim.motion);
    assert!(
        after > 0.8,
        "motion should remain without a control: r = {after}"
    );
}

#[test]
fn robust_fit_is_not_pulled_by_transients() {
    // The transients sit in the signal only, so least squares raises F̂ to meet them and the
    // quiet stretches come out below zero; IRLS leaves them near zero (Keevers et al. 2025).
    let sim = simulate();
    let quiet: Vec<usize> = (0..sim.dff.len()).filter(|&i| sim.dff[i] < 1e-3).collect();
    let quiet_mean =
        |p: &Processed| quiet.iter().map(|&i| p.dff[i]).sum::<f64>() / quiet.len() as f64;
    let ols = run(&sim.rec, ControlFit::Ols, FitScope::WholeSession, true);
    let irls = run(
        &sim.rec,
        ControlFit::default(),
        FitScope::WholeSession,
        true,
    );
    let (bias_ols, bias_irls) = (quiet_mean(&ols).abs(), quiet_mean(&irls).abs());
    assert!(
        bias_irls < bias_ols / 3.0,
        "quiet-stretch ΔF/F: OLS {bias_ols:.5}, IRLS {bias_irls:.5}"
    );
    let BaselineFit::Control(l) = irls.baseline else {
        panic!()
    };
    // Exact coupling F0_s/F0_c = 1.6 with zero intercept, to within the noise.
    assert!((l.slope - F0_SIGNAL / F0_CONTROL).abs() < 0.02, "{l:?}");
}

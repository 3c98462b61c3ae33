//! Parameter recovery from subjects made by an independent simulator (`tests/independent_sim`,
//! no code shared with `src/`): spike trains from rectified rates max(0, b + g·δ) per model
//! bin, through the whole path a user's data take — `obs::observe` (window means), spike
//! counts per window, `fit::dataset::build`, `fit::run_fit` (Wilson & Collins 2019, eLife
//! 8:e49547: simulate with known parameters, refit, compare).
//!
//! The Poisson likelihood on counts is the spike default; the Gaussian on rate differences is
//! fitted beside it, and the test requires the default to recover γ at least as well (the
//! Gaussian's upward γ bias on rectified rates is why Poisson became the default; no test
//! pins that bias). Tolerances: see each assertion.

mod independent_sim;

use independent_sim::{subject, Spec};
use trialdesk::fit::bootstrap::tau_s;
use trialdesk::fit::{dataset, run_fit, FitOptions, Likelihood, NoProgress};
use trialdesk::marks::MarkState;
use trialdesk::obs::{observe, ObsOptions};

struct Fitted {
    alpha: f64,
    tau: f64,
    likelihood: Likelihood,
}

fn fit(spec: &Spec, likelihood: Option<Likelihood>) -> Fitted {
    let subj = subject(spec);
    let obs_opts = ObsOptions::default();
    let obs = observe(&subj, &obs_opts).expect("observations");
    let mut data = dataset::build(&subj, &obs, &obs_opts, spec.dt, &[] as &[MarkState], false);
    data.counts = dataset::spike_counts(&data, &subj, &obs_opts);
    assert!(data.counts.is_some(), "spike counts attached");
    let opts = FitOptions {
        lambda: Some(spec.lambda),
        bootstrap: 0,
        compare: false,
        likelihood,
        ..Default::default()
    };
    let out = run_fit(&data, &opts, &NoProgress).expect("fit");
    Fitted {
        alpha: out.best.params.alpha,
        tau: tau_s(out.best.params.gamma, spec.dt),
        likelihood: out.best.linear.likelihood,
    }
}

#[test]
fn poisson_default_recovers_alpha_and_tau_from_independent_spikes() {
    let mut err_poisson = 0.0;
    let mut err_gauss = 0.0;
    let seeds = [21, 22, 23];
    for seed in seeds {
        let spec = Spec {
            seed,
            ..Default::default()
        };
        let t_true = tau_s(spec.gamma, spec.dt);
        let p = fit(&spec, None);
        assert_eq!(p.likelihood, Likelihood::Poisson, "spike default");
        let g = fit(&spec, Some(Likelihood::Gaussian));
        assert_eq!(g.likelihood, Likelihood::Gaussian);
        eprintln!(
            "seed {seed}: poisson alpha {:.4} tau {:.3} s | gaussian alpha {:.4} tau {:.3} s | true alpha {} tau {:.3} s",
            p.alpha, p.tau, g.alpha, g.tau, spec.alpha, t_true
        );
        // Measured on these seeds (6 days × 150 trials, 6 units): Poisson α −7 to +0.4 %,
        // τ −10 to +26 %; the Gaussian on rate differences ran γ to its bound (τ 25 s and
        // 8138 s for a true 2.5 s) on all three. α is held within 25 %, τ within 35 %: what
        // this size honestly supports.
        assert!(
            (p.alpha / spec.alpha - 1.0).abs() < 0.25,
            "alpha {} vs {}",
            p.alpha,
            spec.alpha
        );
        assert!(
            (p.tau / t_true - 1.0).abs() < 0.35,
            "tau {} vs {}",
            p.tau,
            t_true
        );
        err_poisson += (p.tau / t_true - 1.0).abs();
        err_gauss += (g.tau / t_true - 1.0).abs();
    }
    assert!(
        err_poisson <= err_gauss,
        "poisson τ error {err_poisson} vs gaussian {err_gauss} (sum over seeds)"
    );
}

//! Coverage study: how often the fit's 95 % intervals contain the truth, and how biased the
//! estimates are, over simulated subjects with known parameters.
//!
//! Spikes: counts drawn from the rectified rate max(0, b + g·δ) per model bin
//! ([`synthetic::spike_fit_data`]), fitted with the Gaussian likelihood on rate differences
//! (the old default) and with the Poisson likelihood on counts (the new default).
//! Photometry-like: responses drawn from the Gaussian observation model ([`synthetic::fit_data`]).
//! Each setting runs `run_fit` with the default options (multi-start search, λ fitted,
//! bootstrap with the default replicates and resampling unit; the comparison is skipped, it
//! does not touch the intervals). Coverage is of the intervals as reported (`report::param_rows`):
//! bootstrap percentile intervals, or γ's profile-likelihood interval where its profile is flat
//! (the "γ flat" column counts those).
//!
//! Measured (2026-12-03; 20 subjects per row over the four parameter sets, 6 days × 150
//! trials, 50 replicates resampling trials; coverage of 95 % intervals, mean bias of the
//! estimates):
//!
//! | setting | α | γ | λ | α bias | γ bias | λ bias |
//! |---|---|---|---|---|---|---|
//! | spikes, before (Gaussian on rate differences; flat γ: interval withheld, 20 of 20) | 95 % | 0 % | 75 % | +0.019 | +0.0116 | −0.096 |
//! | spikes, after (Poisson on counts; profile-likelihood γ where flat, 13 of 20) | 90 % | 95 % | 90 % | +0.015 | +0.0019 | −0.028 |
//! | photometry-like, before (bootstrap only) | 90 % | 80 % | 95 % | +0.0005 | −0.0003 | −0.020 |
//! | photometry-like, after (γ: envelope of bootstrap and profile likelihood) | 90 % | 95 % | 95 % | +0.0005 | −0.0003 | −0.020 |
//!
//! Block resampling (`--bootstrap-by blocks`) exists but did not become the default: trial
//! resampling covered α and λ at ≥ 90 %, and γ's shortfall was the bootstrap's, mended by the
//! profile likelihood.
//!
//! The full study is ignored by default (minutes on 2 cores):
//! `cargo test --test fit_coverage -- --ignored --nocapture` prints the table.
//! Size: `COVERAGE_SUBJECTS` (per setting, default 20: 4 parameter sets × 5 seeds),
//! `COVERAGE_DAYS` (default 6), `COVERAGE_TRIALS` (per day, default 150); `COVERAGE_ONLY`
//! picks rows (spikes-before, spikes-poisson-trials, spikes-after, photometry-before,
//! photometry-after). A small version ([`coverage_small`]) runs in CI.

use trialdesk::fit::synthetic::{fit_data, spike_fit_data, SpikeSpec, SyntheticSpec};
use trialdesk::fit::{
    profile, report, run_fit, FitData, FitOptions, Likelihood, NoProgress, ResampleUnit,
};

const SETS: [(f64, f64, f64); 4] = [
    (0.1, 0.98, 0.5),
    (0.05, 0.97, 0.9),
    (0.2, 0.985, 0.2),
    (0.1, 0.95, 0.7),
];

fn env(name: &str, default: usize) -> usize {
    std::env::var(name)
        .ok()
        .and_then(|v| v.parse().ok())
        .unwrap_or(default)
}

#[derive(Default)]
struct Tally {
    n: usize,
    cover: [usize; 3],
    withheld_gamma: usize,
    /// γ covered by a bootstrap interval (the report before profile intervals: a flat
    /// profile withheld it, a miss).
    cover_gamma_bootstrap: usize,
    /// γ covered by its profile-likelihood interval (computed here for every subject).
    cover_gamma_profile: usize,
    /// γ covered by the envelope of the bootstrap and profile-likelihood intervals.
    cover_gamma_envelope: usize,
    bias: [f64; 3],
    failed: usize,
}

fn run(label: &str, subjects: &[(SyntheticSpec, FitData)], opts: &FitOptions) -> Tally {
    let mut t = Tally::default();
    for (spec, data) in subjects {
        let Ok(out) = run_fit(data, opts, &NoProgress) else {
            t.failed += 1;
            continue;
        };
        t.n += 1;
        let p = out.best.params;
        let truth = [spec.alpha, spec.gamma, spec.lambda];
        let est = [p.alpha, p.gamma, p.lambda];
        for k in 0..3 {
            t.bias[k] += est[k] - truth[k];
        }
        let flat = out.gamma_profile.as_ref().is_some_and(|g| g.flat);
        if flat {
            t.withheld_gamma += 1;
        }
        if let Some(iv) = out.intervals.as_ref() {
            if !flat
                && iv
                    .interval(|r| Some(r.params.gamma))
                    .is_some_and(|(lo, hi)| lo <= spec.gamma && spec.gamma <= hi)
            {
                t.cover_gamma_bootstrap += 1;
            }
        }
        if std::env::var("COVERAGE_PROFILE").is_ok() {
            let problem = opts.problem(data, out.model);
            let pi =
                profile::profile_interval(&problem, &data.included(), &out.best, 1, &opts.search);
            let (plo, phi) = (pi.lower.unwrap_or(0.0), pi.upper.unwrap_or(1.0));
            let covers = |lo: f64, hi: f64| lo <= spec.gamma && spec.gamma <= hi;
            if covers(plo, phi) {
                t.cover_gamma_profile += 1;
            }
            let boot = out
                .intervals
                .as_ref()
                .and_then(|iv| iv.interval(|r| Some(r.params.gamma)));
            let (elo, ehi) = boot.map_or((plo, phi), |(a, b)| (a.min(plo), b.max(phi)));
            if covers(elo, ehi) {
                t.cover_gamma_envelope += 1;
            }
        }
        // The intervals as reported (params.csv), whatever method made them.
        let rows = report::param_rows(&out, data, opts.lambda_fitted());
        for (k, name) in ["alpha", "gamma", "lambda"].iter().enumerate() {
            let iv = rows
                .iter()
                .find(|r| r.name == *name)
                .and_then(|r| r.interval);
            if iv.is_some_and(|(lo, hi)| lo <= truth[k] && truth[k] <= hi) {
                t.cover[k] += 1;
            }
        }
    }
    let n = t.n.max(1) as f64;
    println!(
        "| {label:<44} | {:>3} | {:>5.0}% | {:>5.0}% | {:>5.0}% | {:>5.0}% | {:>+8.4} | {:>+8.5} | {:>+7.3} | {:>3} | {:>2} |",
        t.n,
        100.0 * t.cover[0] as f64 / n,
        100.0 * t.cover[1] as f64 / n,
        100.0 * t.cover_gamma_bootstrap as f64 / n,
        100.0 * t.cover[2] as f64 / n,
        t.bias[0] / n,
        t.bias[1] / n,
        t.bias[2] / n,
        t.withheld_gamma,
        t.failed,
    );
    if std::env::var("COVERAGE_PROFILE").is_ok() {
        println!(
            "  γ profile-likelihood interval covers {:.0}%, envelope of bootstrap and profile {:.0}%",
            100.0 * t.cover_gamma_profile as f64 / n,
            100.0 * t.cover_gamma_envelope as f64 / n
        );
    }
    t
}

#[test]
#[ignore = "the full coverage study takes minutes; run it with --ignored"]
fn coverage_study() {
    let per = env("COVERAGE_SUBJECTS", 20);
    let days = env("COVERAGE_DAYS", 6);
    let trials = env("COVERAGE_TRIALS", 150);
    study(
        per,
        days,
        trials,
        &std::env::var("COVERAGE_ONLY").unwrap_or_default(),
    );
}

/// The small version CI runs: eight spike subjects (two per parameter set), 4 days × 100
/// trials, the default fit. With true 95 % intervals two or more misses in eight happen about
/// 6 % of the time, so at least six of eight must cover, for α, γ and λ each; the old default
/// (Gaussian on rate differences, γ withheld where flat) covered γ in none.
#[test]
fn coverage_small() {
    let tallies = study(8, 4, 100, "spikes-after");
    let t = &tallies[0];
    assert_eq!((t.n, t.failed), (8, 0));
    for (k, name) in ["α", "γ", "λ"].iter().enumerate() {
        assert!(t.cover[k] >= 6, "{name} covered in {} of 8", t.cover[k]);
    }
}

fn study(per: usize, days: usize, trials: usize, only: &str) -> Vec<Tally> {
    let mut tallies = Vec::new();
    let specs: Vec<SyntheticSpec> = (0..per)
        .map(|i| {
            let (alpha, gamma, lambda) = SETS[i % SETS.len()];
            SyntheticSpec {
                sessions: days,
                trials_per_session: trials,
                alpha,
                gamma,
                lambda,
                seed: 1000 + i as u64,
                ..Default::default()
            }
        })
        .collect();
    println!(
        "coverage of 95% intervals: {per} subjects per row ({} parameter sets), {days} days × {trials} trials",
        SETS.len()
    );
    println!(
        "| setting                                      |   n |  α cov |  γ cov | γ cov (bootstrap only) |  λ cov |   α bias |   γ bias |  λ bias | γ flat | fail |"
    );
    println!("|---|---|---|---|---|---|---|---|---|---|---|");
    let spikes: Vec<(SyntheticSpec, FitData)> = specs
        .iter()
        .map(|s| (s.clone(), spike_fit_data(s, &SpikeSpec::default()).1))
        .collect();
    let photometry: Vec<(SyntheticSpec, FitData)> =
        specs.iter().map(|s| (s.clone(), fit_data(s).1)).collect();
    let base = FitOptions {
        compare: false,
        ..FitOptions::default()
    };
    let old = FitOptions {
        likelihood: Some(Likelihood::Gaussian),
        resample: ResampleUnit::Trials,
        ..base.clone()
    };
    let want = |k: &str| only.is_empty() || only.split(',').any(|o| o == k);
    if want("spikes-before") {
        tallies.push(run("spikes, before: gaussian, trials", &spikes, &old));
    }
    if want("spikes-poisson-trials") {
        let o = FitOptions {
            likelihood: Some(Likelihood::Poisson),
            resample: ResampleUnit::Trials,
            ..base.clone()
        };
        tallies.push(run("spikes: poisson, trials", &spikes, &o));
    }
    if want("spikes-after") {
        tallies.push(run(
            &format!("spikes, after: default ({})", base.resample.name()),
            &spikes,
            &base,
        ));
    }
    if want("photometry-before") {
        tallies.push(run(
            "photometry-like, before: gaussian, trials",
            &photometry,
            &old,
        ));
    }
    if want("photometry-after") {
        tallies.push(run(
            &format!("photometry-like, after: default ({})", base.resample.name()),
            &photometry,
            &base,
        ));
    }
    tallies
}

//! Fit benchmark: a 20-day × 300-trial subject built in memory (csc, dt = 0.05 s, λ = 0.9),
//! full fit of α, γ and λ as `trialdesk fit` runs it by default (grid + multi-start
//! Nelder–Mead). Targets (issue 3): < 2 s on 2 cores, peak memory < 200 MB. Also times one
//! model pass, a 50-replicate bootstrap and the four-model comparison, which `trialdesk fit`
//! runs by default, and last the whole default fit (`run_fit` with `FitOptions::default()`) of
//! the shipped demo subject `demo_data/m-041`: observations, fit, γ profile, bootstrap,
//! comparison — everything `trialdesk fit demo_data/m-041` computes except the sensitivity
//! refit and the printing.
//!
//! Run: `cargo bench --bench fit` (prints figures; no statistics harness).

#[path = "support/mod.rs"]
mod support;
use support::{cpu_s, vm_hwm_mb};

use std::path::Path;
use std::time::Instant;
use trialdesk::fit::synthetic::{fit_data, SyntheticSpec};
use trialdesk::fit::{
    bootstrap, compare, dataset, optimise, run_fit, FitOptions, ModelSpec, NoProgress,
};
use trialdesk::model::Representation;
use trialdesk::obs::{observe, ObsOptions};

fn load_average() -> String {
    std::fs::read_to_string("/proc/loadavg")
        .map(|s| s.split_whitespace().take(3).collect::<Vec<_>>().join(" "))
        .unwrap_or_default()
}

fn main() {
    println!("load average at start: {}", load_average());
    let spec = SyntheticSpec {
        sessions: 20,
        trials_per_session: 300,
        alpha: 0.05,
        gamma: 0.98,
        lambda: 0.9,
        ..Default::default()
    };
    let t = Instant::now();
    let (_, data) = fit_data(&spec);
    let bins: usize = data.spans.iter().map(|s| s.n_bins).sum();
    println!(
        "subject: {} trials, {} bins, {} observations (built in {:.0} ms); threads: {}",
        data.spans.len(),
        bins,
        data.points.len(),
        t.elapsed().as_secs_f64() * 1e3,
        rayon::current_num_threads()
    );
    let opts = FitOptions::default();
    let idx = data.included();
    let problem = opts.problem(&data, ModelSpec::Td(Representation::Csc));

    let params = trialdesk::fit::LearnParams {
        alpha: 0.05,
        gamma: 0.98,
        lambda: 0.9,
        lick: None,
    };
    let reps = 20;
    let t = Instant::now();
    let c = cpu_s();
    for _ in 0..reps {
        std::hint::black_box(problem.cost(&problem.to_z(&params), &idx));
    }
    println!(
        "one objective evaluation (model pass + window sums + least squares): {:.2} ms wall, {:.2} ms CPU",
        t.elapsed().as_secs_f64() * 1e3 / reps as f64,
        (cpu_s() - c) * 1e3 / reps as f64
    );

    let t = Instant::now();
    let c = cpu_s();
    let best = optimise::fit_multistart(&problem, &idx, &opts.search, &NoProgress).unwrap();
    let fit_s = t.elapsed().as_secs_f64();
    println!(
        "full fit of alpha, gamma and lambda: {:.3} s wall, {:.2} s CPU ({} evaluations) -> alpha {:.4} gamma {:.5} lambda {:.3} (true {} {} {}) [target < 2 s]",
        fit_s, cpu_s() - c, best.evaluations, best.params.alpha, best.params.gamma, best.params.lambda, spec.alpha, spec.gamma, spec.lambda
    );
    println!(
        "peak memory after fit (VmHWM): {:.1} MB [target < 200 MB]",
        vm_hwm_mb().unwrap_or(f64::NAN)
    );

    let t = Instant::now();
    let c = cpu_s();
    let prof = bootstrap::gamma_profile(&problem, &idx, &best, &opts.search, &NoProgress, false);
    println!(
        "gamma profile (4 points): {:.3} s wall, {:.2} s CPU, flat = {}",
        t.elapsed().as_secs_f64(),
        cpu_s() - c,
        prof.flat
    );

    let t = Instant::now();
    let c = cpu_s();
    let iv = bootstrap::bootstrap(
        &problem,
        &idx,
        &best,
        opts.bootstrap,
        opts.resample,
        opts.seed,
        &opts.search,
        &NoProgress,
    );
    println!(
        "bootstrap, {} replicates: {:.3} s wall, {:.2} s CPU ({} evaluations)",
        iv.n_ok,
        t.elapsed().as_secs_f64(),
        cpu_s() - c,
        iv.evaluations
    );

    let t = Instant::now();
    let c = cpu_s();
    let rows = compare::compare(&data, &idx, &opts, (problem.model, &best), &NoProgress);
    println!(
        "model comparison ({} models, held-out refits): {:.3} s wall, {:.2} s CPU",
        rows.len(),
        t.elapsed().as_secs_f64(),
        cpu_s() - c
    );
    println!(
        "peak memory overall (VmHWM): {:.1} MB",
        vm_hwm_mb().unwrap_or(f64::NAN)
    );
    demo_default_fit();
}

/// The default `trialdesk fit` of the shipped demo, minus the sensitivity refit and printing.
fn demo_default_fit() {
    let root = Path::new(env!("CARGO_MANIFEST_DIR")).join("demo_data/m-041");
    let t = Instant::now();
    let c = cpu_s();
    let subject = trialdesk::data::load(&root).expect("demo loads").subject;
    let obs_opts = ObsOptions::default();
    let obs = observe(&subject, &obs_opts).expect("demo observations");
    let marks = vec![Default::default(); subject.sessions.len()];
    let data = dataset::build(&subject, &obs, &obs_opts, 0.05, &marks, true);
    let load_s = t.elapsed().as_secs_f64();
    let out = run_fit(&data, &FitOptions::default(), &NoProgress).expect("demo fit");
    let p = out.best.params;
    println!(
        "default fit of demo_data/m-041 ({} windows; load + observations {:.2} s): {:.2} s wall, {:.2} s CPU -> alpha {:.4} gamma {:.4} lambda {:.3}",
        data.points.len(),
        load_s,
        t.elapsed().as_secs_f64(),
        cpu_s() - c,
        p.alpha,
        p.gamma,
        p.lambda
    );
}

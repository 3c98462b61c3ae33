//! Cohort benchmark: simulated subjects (the demo scenario's schedule, shortened) written to a
//! temporary folder, then fitted per subject through `cohort::run_cohort` on a 2-thread rayon
//! pool — load, observations, marks, `fit::run_fit` — for cohorts of 1, 2, 4, 8 and 40
//! subjects. Prints wall time, time per subject, speed-up over fitting the subjects one after
//! another at the 1-subject rate, CPU time and peak memory.
//!
//! Run: `cargo bench --bench cohort`. Environment: `COHORT_SIZES=1,2,4` to choose sizes;
//! `COHORT_FULL=1` for the fit `trialdesk fit` runs by default (50-replicate bootstrap and the
//! four-model comparison) instead of the point fit.
//!
//! Measured 2026-12-02 on the shared 2-core machine (load average 8–12 from other builds, so
//! wall times are contention-bound; CPU time is the steadier figure), 600 trials per subject:
//! point fit 1/2/4/8/40 subjects: 0.11/0.18/0.39/1.02/3.99 s wall, ≈ 0.05 s CPU per subject.
//! Default fit (COHORT_FULL=1): 1/2/4/8 subjects 1.56/2.47/5.90/10.80 s wall (speed-up over
//! one at a time 1.00/1.26/1.06/1.15); 40 subjects 41.3 s wall, 18.7 s CPU (0.47 s CPU per
//! subject), peak 15 MB. One subject's fit already runs its starts and bootstrap replicates
//! in parallel, so spreading subjects over the same 2 threads gains little beyond that.

#[path = "support/mod.rs"]
mod support;
use support::{cpu_s, vm_hwm_mb};

use std::path::Path;
use std::time::Instant;
use trialdesk::cohort::{run_cohort, Shard};
use trialdesk::fit::{dataset, run_fit, FitOptions, NoProgress};
use trialdesk::obs::{observe, ObsOptions};
use trialdesk::simulate::{simulate, write_subject, SimConfig};

/// What `trialdesk fit` does for one subject folder, minus printing and saving.
fn fit_subject(path: &Path, opts: &FitOptions) -> Result<f64, String> {
    let loaded = trialdesk::data::load(path).map_err(|e| e.to_string())?;
    let subject = loaded.subject;
    let obs_opts = ObsOptions::default();
    let obs = observe(&subject, &obs_opts).map_err(|e| e.to_string())?;
    let marks: Vec<_> = subject
        .sessions
        .iter()
        .map(|s| trialdesk::marks::read_journal(&s.dir).map(|j| j.state()))
        .collect::<Result<_, _>>()
        .map_err(|e| e.to_string())?;
    let data = dataset::build(&subject, &obs, &obs_opts, 0.05, &marks, false);
    let out = run_fit(&data, opts, &NoProgress).map_err(|e| e.to_string())?;
    Ok(out.best.params.alpha)
}

fn main() {
    let sizes: Vec<usize> = std::env::var("COHORT_SIZES")
        .ok()
        .map(|s| s.split(',').filter_map(|x| x.trim().parse().ok()).collect())
        .unwrap_or_else(|| vec![1, 2, 4, 8, 40]);
    let full = std::env::var("COHORT_FULL").is_ok_and(|v| v == "1");
    let opts = if full {
        FitOptions::default()
    } else {
        FitOptions {
            bootstrap: 0,
            compare: false,
            ..FitOptions::default()
        }
    };
    let max = sizes.iter().copied().max().unwrap_or(1);
    let tmp = tempfile::tempdir().expect("temporary folder");
    let pool_dir = tmp.path().join("subjects");

    let t = Instant::now();
    for i in 0..max {
        let mut config = SimConfig {
            seed: 100 + i as u64,
            ..SimConfig::default()
        };
        config.schedule.days = 5;
        config.schedule.subject = format!("m-{i:03}");
        let sim = simulate(&config).expect("simulation");
        write_subject(&sim, &pool_dir.join(format!("m-{i:03}")), false).expect("write");
    }
    let trials = {
        let l = trialdesk::data::load(&pool_dir.join("m-000")).expect("load");
        l.subject
            .sessions
            .iter()
            .map(|s| s.trials.len())
            .sum::<usize>()
    };
    println!(
        "{max} simulated subjects of 5 days, {trials} trials each (spikes, licks), written in {:.1} s",
        t.elapsed().as_secs_f64()
    );
    println!(
        "fit per subject: {} (csc, λ fixed at 0)",
        if full {
            "default trialdesk fit: 50-replicate bootstrap + four-model comparison"
        } else {
            "point fit: grid + multi-start Nelder–Mead, no bootstrap, no comparison"
        }
    );

    let pool = rayon::ThreadPoolBuilder::new()
        .num_threads(2)
        .build()
        .expect("thread pool");
    println!("threads: 2; load average at start: {}", load_average());
    println!("subjects  wall_s  s_per_subject  speed_up  cpu_s  peak_MB");
    let mut one_subject_s = None;
    for &n in &sizes {
        // A cohort folder of n subjects: symbolic links to the simulated ones.
        let root = tmp.path().join(format!("cohort-{n}"));
        std::fs::create_dir_all(&root).expect("cohort folder");
        for i in 0..n {
            let name = format!("m-{i:03}");
            std::os::unix::fs::symlink(pool_dir.join(&name), root.join(&name)).expect("link");
        }
        let cpu0 = cpu_s();
        let t = Instant::now();
        let run = pool
            .install(|| run_cohort(&root, Shard::ALL, &NoProgress, |p| fit_subject(p, &opts)))
            .expect("cohort");
        let wall = t.elapsed().as_secs_f64();
        let failed: Vec<_> = run.failures().collect();
        assert!(failed.is_empty(), "failed fits: {failed:?}");
        assert_eq!(run.results.len(), n);
        let per = wall / n as f64;
        let base = *one_subject_s.get_or_insert(per);
        println!(
            "{n:>8}  {wall:>6.2}  {per:>13.2}  {:>8.2}  {:>5.1}  {:>7.0}",
            base * n as f64 / wall,
            cpu_s() - cpu0,
            vm_hwm_mb().unwrap_or(f64::NAN)
        );
    }
}

fn load_average() -> String {
    std::fs::read_to_string("/proc/loadavg")
        .map(|s| s.split_whitespace().take(3).collect::<Vec<_>>().join(" "))
        .unwrap_or_default()
}

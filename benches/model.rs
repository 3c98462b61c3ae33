//! Benchmark of one TD model pass over a large subject: 20 days × 300 trials at dt = 0.05 s.
//!
//! Run: `cargo bench --bench model`. Prints ms per pass (best and median wall time, mean
//! on-CPU time of repeated passes, which stays honest on a busy machine)
//! for csc λ = 0 (target < 5 ms), csc λ = 0.9 and microstimulus, the Rescorla–Wagner pass, and
//! peak memory (VmHWM from /proc/self/status).

use std::hint::black_box;
use std::path::PathBuf;
use std::time::Instant;
use trialdesk::data::{CueDef, Session, SessionMeta, Subject, Trial};
use trialdesk::model::{
    layout_subject, run, run_in, rw, FeatureSpace, MicrostimulusParams, Representation, TdParams,
};

/// 20 sessions × 300 trials: tone-hi (1.5 s, 10 % omissions), light (0.75 s), tone-lo
/// (never rewarded), and a free reward every 25th trial. Deterministic, no random seed needed.
fn big_subject() -> Subject {
    let cues = vec![
        CueDef {
            name: "tone-hi".into(),
            reward_delay_s: Some(1.5),
        },
        CueDef {
            name: "light".into(),
            reward_delay_s: Some(0.75),
        },
        CueDef {
            name: "tone-lo".into(),
            reward_delay_s: None,
        },
    ];
    let sessions = (0..20)
        .map(|day| {
            let trials = (0..300)
                .map(|i| {
                    let t = 10.0 + 15.0 * i as f64 + 0.013 * (i % 7) as f64;
                    let number = i as i64 + 1;
                    if i % 25 == 24 {
                        return Trial {
                            number,
                            cue: None,
                            cue_s: None,
                            reward_s: Some(t),
                            reward_ul: 3.0,
                            ..Default::default()
                        };
                    }
                    let cue = [0, 0, 1, 2][i % 4];
                    let delay = [Some(1.5), Some(0.75), None][cue];
                    let reward_s = delay.filter(|_| i % 10 != 3).map(|d| t + d);
                    Trial {
                        number,
                        cue: Some(cue),
                        cue_s: Some(t),
                        reward_s,
                        reward_ul: if reward_s.is_some() { 3.0 } else { 0.0 },
                        ..Default::default()
                    }
                })
                .collect();
            Session {
                dir: PathBuf::from(format!("day-{day:02}")),
                name: format!("day-{day:02}"),
                meta: SessionMeta {
                    subject: "m-bench".into(),
                    date: format!("2026-03-{:02}", day + 1),
                    start_time: Some("09:30:00".into()),
                    rig: Some("rig-north".into()),
                    cues: cues.clone(),
                },
                trials,
                spikes: None,
                licks: None,
                photometry: None,
            }
        })
        .collect();
    Subject {
        root: PathBuf::from("m-bench"),
        sessions,
    }
}

fn peak_mib() -> f64 {
    let status = std::fs::read_to_string("/proc/self/status").unwrap_or_default();
    status
        .lines()
        .find(|l| l.starts_with("VmHWM:"))
        .and_then(|l| l.split_whitespace().nth(1))
        .and_then(|kb| kb.parse::<f64>().ok())
        .map_or(f64::NAN, |kb| kb / 1024.0)
}

/// On-CPU time of this thread, ns (first field of /proc/thread-self/schedstat): unlike wall
/// time it does not grow while other processes hold the CPU. The kernel updates it at
/// scheduler ticks, so it is only meaningful over many passes (hundreds of ms in total).
fn thread_cpu_ns() -> Option<u64> {
    std::fs::read_to_string("/proc/thread-self/schedstat")
        .ok()?
        .split_whitespace()
        .next()?
        .parse()
        .ok()
}

/// Milliseconds per call over `passes` calls: (best wall, median wall, mean on-CPU).
fn time_ms(passes: usize, mut f: impl FnMut()) -> (f64, f64, f64) {
    f(); // warm-up
    let cpu0 = thread_cpu_ns();
    let mut ms: Vec<f64> = (0..passes)
        .map(|_| {
            let t = Instant::now();
            f();
            t.elapsed().as_secs_f64() * 1e3
        })
        .collect();
    let cpu = match (cpu0, thread_cpu_ns()) {
        (Some(a), Some(b)) => (b - a) as f64 / 1e6 / passes as f64,
        _ => f64::NAN,
    };
    ms.sort_by(f64::total_cmp);
    (ms[0], ms[ms.len() / 2], cpu)
}

fn main() {
    let subject = big_subject();
    let dt = 0.05;
    let spans = layout_subject(&subject, dt);
    let n_cues = subject.cue_names().len();
    let bins: usize = spans.iter().map(|s| s.n_bins).sum();
    println!(
        "subject: {} sessions, {} trials, {} bins at dt = {dt} s",
        subject.sessions.len(),
        spans.len(),
        bins
    );
    let (best, median, cpu) = time_ms(20, || {
        black_box(layout_subject(black_box(&subject), dt));
    });
    println!("{:<36} {best:8.3} {median:8.3} {cpu:8.3}", "layout_subject");

    println!(
        "{:<36} {:>8} {:>8} {:>8} {:>8}",
        "ms per pass (run_in: features prebuilt)", "best", "median", "cpu", "run"
    );
    println!(
        "{:<36} {:>8} {:>8} {:>8} {:>8}",
        "", "wall", "wall", "mean", "best"
    );
    let ms = Representation::Microstimulus(MicrostimulusParams::default());
    let cases = [
        ("csc, λ = 0 (target < 5)", Representation::Csc, 0.0),
        ("csc, λ = 0.9", Representation::Csc, 0.9),
        ("presence, λ = 0.9", Representation::Presence, 0.9),
        ("microstimulus m = 20, λ = 0", ms, 0.0),
        ("microstimulus m = 20, λ = 0.9", ms, 0.9),
    ];
    for (label, representation, lambda) in cases {
        let p = TdParams {
            alpha: 0.1,
            gamma: 0.98,
            lambda,
            dt,
            representation,
        };
        let space = FeatureSpace::new(&spans, n_cues, representation, dt);
        let (best, median, cpu) = time_ms(30, || {
            black_box(run_in(black_box(&space), black_box(&spans), &p));
        });
        let (full_best, _, _) = time_ms(10, || {
            black_box(run(black_box(&spans), n_cues, &p));
        });
        println!("{label:<36} {best:8.3} {median:8.3} {cpu:8.3} {full_best:8.3}");
    }
    let (best, median, cpu) = time_ms(20_000, || {
        black_box(rw::run(black_box(&spans), n_cues, 0.1));
    });
    println!(
        "{:<36} {best:8.3} {median:8.3} {cpu:8.3}",
        "rescorla-wagner pass"
    );
    println!("peak memory (VmHWM): {:.1} MiB", peak_mib());
}

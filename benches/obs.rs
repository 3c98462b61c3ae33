//! Observation speed: `observe` on 1,000 trials × 64 units (population and one unit), and
//! 300 reviewer trace rows. Prints figures; peak memory from /proc/self/status (VmHWM).
//! Run: `cargo bench --bench obs`.

#[path = "support/mod.rs"]
mod support;
use support::vm_hwm_mb;

use rand::{Rng, SeedableRng};
use rand_chacha::ChaCha8Rng;
use std::time::Instant;
use trialdesk::data::{CueDef, Session, SessionMeta, Spikes, Subject, Trial};
use trialdesk::obs::{observe, ObsOptions, SessionActivity, Signal};

fn subject(trials: usize, units: usize) -> Subject {
    let mut rng = ChaCha8Rng::seed_from_u64(7);
    let trial_s = 15.0;
    let end = trials as f64 * trial_s + 10.0;
    let times: Vec<Vec<f64>> = (0..units)
        .map(|_| {
            // ~5 spikes/s Poisson: exponential gaps.
            let mut t = 0.0;
            let mut v = Vec::new();
            while t < end {
                t += -(1.0 - rng.random::<f64>()).ln() / 5.0;
                v.push(t);
            }
            v
        })
        .collect();
    let trials = (0..trials)
        .map(|i| {
            let cue_s = 5.0 + i as f64 * trial_s;
            Trial {
                number: i as i64 + 1,
                cue: Some(0),
                cue_s: Some(cue_s),
                reward_s: (i % 10 != 0).then_some(cue_s + 1.5),
                reward_ul: 3.0,
                ..Default::default()
            }
        })
        .collect();
    Subject {
        root: "bench".into(),
        sessions: vec![Session {
            dir: "bench/d1".into(),
            name: "d1".into(),
            meta: SessionMeta {
                subject: "m-000".into(),
                date: "2026-01-01".into(),
                start_time: None,
                rig: None,
                cues: vec![CueDef {
                    name: "tone-hi".into(),
                    reward_delay_s: Some(1.5),
                }],
            },
            trials,
            spikes: Some(Spikes {
                units: (0..units).map(|u| format!("u{u}")).collect(),
                times,
            }),
            licks: None,
            photometry: None,
        }],
    }
}

fn best_of<T>(reps: usize, mut f: impl FnMut() -> T) -> (f64, T) {
    let mut best = f64::INFINITY;
    let mut out = None;
    for _ in 0..reps {
        let t = Instant::now();
        let v = f();
        best = best.min(t.elapsed().as_secs_f64());
        out = Some(v);
    }
    (best * 1e3, out.unwrap())
}

fn main() {
    let sub = subject(1000, 64);
    let spikes: usize = sub.sessions[0]
        .spikes
        .as_ref()
        .unwrap()
        .times
        .iter()
        .map(Vec::len)
        .sum();
    println!("subject: 1000 trials, 64 units, {spikes} spikes");
    let pop = ObsOptions::default();
    let (ms, obs) = best_of(10, || observe(&sub, &pop).unwrap());
    println!(
        "observe, population of 64 units: {ms:.2} ms ({} trials)",
        obs.len()
    );
    let one = ObsOptions {
        signal: Signal::Spikes {
            unit: Some("u17".into()),
        },
        ..ObsOptions::default()
    };
    let (ms, _) = best_of(10, || observe(&sub, &one).unwrap());
    println!("observe, one unit: {ms:.2} ms");
    let s = &sub.sessions[0];
    let t0s: Vec<f64> = s.trials[..300].iter().map(|t| t.cue_s.unwrap()).collect();
    let (ms, rows) = best_of(10, || {
        let act = SessionActivity::new(s, &pop.signal).unwrap();
        act.traces(&t0s, -1.0, 3.0, 0.05)
    });
    println!(
        "heat rows: 300 trials × {} bins of 50 ms, 64 units: {ms:.2} ms",
        rows[0].len()
    );
    // The floor for a population sweep on this machine: reading every spike time once.
    let trains = &s.spikes.as_ref().unwrap().times;
    let (ms, total) = best_of(10, || {
        std::hint::black_box(trains.iter().map(|t| t.iter().sum::<f64>()).sum::<f64>())
    });
    println!("reference, one pass over all spike times: {ms:.2} ms (sum {total:.0})");
    if let Some(mb) = vm_hwm_mb() {
        println!("peak memory (VmHWM): {mb:.1} MB");
    }
}

//! Spike counts per window for a subject with event lists (the Poisson likelihood's data):
//! every window of the blocking demo's probe day is counted again here from the raw files
//! (trials.csv, events.csv, spikes.csv read with the csv crate, the cue's reward delay
//! 1.5 s from its session.toml), by window label, and must match the fitter's count exactly.

use std::collections::HashMap;
use std::path::Path;
use trialdesk::fit::dataset;
use trialdesk::marks::MarkState;
use trialdesk::obs::{observe, ObsOptions};

fn rows(path: &Path) -> Vec<HashMap<String, String>> {
    let mut r = csv::Reader::from_path(path).unwrap();
    let headers = r.headers().unwrap().clone();
    r.records()
        .map(|rec| {
            let rec = rec.unwrap();
            headers
                .iter()
                .zip(rec.iter())
                .map(|(h, v)| (h.to_string(), v.to_string()))
                .collect()
        })
        .collect()
}

#[test]
fn window_counts_of_compound_and_probe_trials_match_a_count_from_the_raw_files() {
    let dir = Path::new(env!("CARGO_MANIFEST_DIR")).join("demo_data/m-052/2026-03-07");
    let subject = trialdesk::data::load(&dir).unwrap().subject;
    let opts = ObsOptions::default();
    let obs = observe(&subject, &opts).unwrap();
    let data = dataset::build(&subject, &obs, &opts, 0.05, &[] as &[MarkState], false);
    let counts = dataset::spike_counts(&data, &subject, &opts).expect("counts for events");
    assert_eq!(counts.len(), data.points.len());

    // Raw files: each trial's cue onsets by name and its reward times.
    let mut cues: HashMap<(i64, String), f64> = HashMap::new();
    let mut rewards: HashMap<i64, Vec<f64>> = HashMap::new();
    for r in rows(&dir.join("trials.csv")) {
        let n: i64 = r["trial"].parse().unwrap();
        if !r["cue"].is_empty() {
            cues.insert((n, r["cue"].clone()), r["cue_s"].parse().unwrap());
        }
        if !r["reward_s"].is_empty() {
            rewards
                .entry(n)
                .or_default()
                .push(r["reward_s"].parse().unwrap());
        }
    }
    for r in rows(&dir.join("events.csv")) {
        let n: i64 = r["trial"].parse().unwrap();
        let t: f64 = r["onset_s"].parse().unwrap();
        match r["kind"].as_str() {
            "cue" => {
                cues.insert((n, r["name"].clone()), t);
            }
            _ => rewards.entry(n).or_default().push(t),
        }
    }
    for v in rewards.values_mut() {
        v.sort_by(f64::total_cmp);
    }
    let spikes: Vec<f64> = rows(&dir.join("spikes.csv"))
        .iter()
        .map(|r| r["time_s"].parse().unwrap())
        .collect();
    let count = |at: f64, w: (f64, f64)| {
        spikes
            .iter()
            .filter(|&&s| s >= at + w.0 && s < at + w.1)
            .count() as f64
    };

    let mut by_label: HashMap<String, usize> = HashMap::new();
    for (p, c) in data.points.iter().zip(&counts) {
        let n = data.trial_numbers[p.span];
        let label = p
            .label
            .as_deref()
            .expect("windows of an events subject are named");
        let (at, w) = if let Some(cue) = label.strip_prefix("cue:") {
            (cues[&(n, cue.to_string())], opts.cue_window)
        } else if let Some(cue) = label.strip_prefix("omission:") {
            (cues[&(n, cue.to_string())] + 1.5, opts.reward_window)
        } else {
            let k: usize = label.strip_prefix("reward:").unwrap().parse().unwrap();
            (rewards[&n][k - 1], opts.reward_window)
        };
        assert_eq!(c.count, count(at, w), "trial {n} {label}");
        *by_label
            .entry(label.split(':').next().unwrap().to_string())
            .or_default() += 1;
    }
    // The probe day has compound cues, rewards and omission probes.
    assert!(
        by_label["cue"] > 80 && by_label["reward"] > 50 && by_label["omission"] >= 10,
        "{by_label:?}"
    );
}

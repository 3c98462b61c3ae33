//! `trialdesk model` on trials with several events (the "Trial events" extension of the
//! brief) against an independent numpy implementation of that contract, to 1e-9.
//!
//! Fixtures: tests/fixtures/events/subject (written by make_subject.py: a compound cue, a
//! trace cue with cue_off_s, two drops of reward, two rewards in one bin, a serial cue, an
//! inhibitor, a free reward with a second drop, a late reward, a bin edge, a trial given only
//! in events.csv) and tests/fixtures/events/expected/*.csv, written by
//! tests/fixtures/events/reference_events.py (numpy, dense vectors, from the brief's text).
//! Regenerate: `python3 reference_events.py subject expected` in that folder.

use std::path::{Path, PathBuf};
use std::process::Command;

fn fixtures() -> PathBuf {
    Path::new(env!("CARGO_MANIFEST_DIR")).join("tests/fixtures/events")
}

type Row = (String, i64, usize, f64, f64, f64);

fn read_rows(text: &str) -> Vec<Row> {
    let mut rdr = csv::Reader::from_reader(text.as_bytes());
    let header: Vec<String> = rdr.headers().unwrap().iter().map(String::from).collect();
    assert_eq!(
        header[..6],
        ["session", "trial", "bin", "time_s", "value", "delta"]
    );
    rdr.records()
        .map(|r| {
            let r = r.unwrap();
            let f = |i: usize| r[i].parse::<f64>().unwrap();
            let n = r[1].parse().unwrap();
            (r[0].to_string(), n, r[2].parse().unwrap(), f(3), f(4), f(5))
        })
        .collect()
}

/// The same cases as CASES in reference_events.py: (file, representation, α, γ, λ, dt).
const CASES: [(&str, &str, &str, &str, &str, &str); 7] = [
    ("csc_l0", "csc", "0.3", "0.95", "0", "0.05"),
    ("csc_l09", "csc", "0.3", "0.95", "0.9", "0.05"),
    ("presence_l0", "presence", "0.3", "0.95", "0", "0.05"),
    ("presence_l09", "presence", "0.3", "0.95", "0.9", "0.05"),
    (
        "microstimulus_l0",
        "microstimulus",
        "0.3",
        "0.95",
        "0",
        "0.05",
    ),
    (
        "microstimulus_l07",
        "microstimulus",
        "0.3",
        "0.95",
        "0.7",
        "0.05",
    ),
    ("csc_dt01_l05", "csc", "0.5", "0.9", "0.5", "0.1"),
];

#[test]
fn compound_and_multi_reward_traces_match_numpy_reference() {
    let subject = fixtures().join("subject");
    let dir = tempfile::tempdir().unwrap();
    for (name, repr, alpha, gamma, lambda, dt) in CASES {
        let out = dir.path().join(format!("{name}.csv"));
        let o = Command::new(env!("CARGO_BIN_EXE_trialdesk"))
            .args(["model", subject.to_str().unwrap(), "--alpha", alpha])
            .args([
                "--gamma",
                gamma,
                "--lambda",
                lambda,
                "--representation",
                repr,
            ])
            .args(["--dt", dt, "--out", out.to_str().unwrap()])
            .output()
            .unwrap();
        assert!(
            o.status.success(),
            "{name}: {}",
            String::from_utf8_lossy(&o.stderr)
        );
        let ours = read_rows(&std::fs::read_to_string(&out).unwrap());
        let expected = fixtures().join("expected").join(format!("{name}.csv"));
        let theirs = read_rows(&std::fs::read_to_string(expected).unwrap());
        assert_eq!(ours.len(), theirs.len(), "{name}: row count");
        for (i, (a, b)) in ours.iter().zip(&theirs).enumerate() {
            assert_eq!((&a.0, a.1, a.2), (&b.0, b.1, b.2), "{name} row {i}");
            for (x, y, col) in [
                (a.3, b.3, "time_s"),
                (a.4, b.4, "value"),
                (a.5, b.5, "delta"),
            ] {
                assert!(
                    (x - y).abs() <= 1e-9,
                    "{name} row {i} ({} trial {} bin {}): {col} {x} vs {y}",
                    a.0,
                    a.1,
                    a.2
                );
            }
        }
    }
}

#[test]
fn the_fixture_has_the_cases_it_claims() {
    // Guards the comparison against a fixture that silently lost its hard cases.
    let text = std::fs::read_to_string(fixtures().join("expected/csc_l0.csv")).unwrap();
    let rows = read_rows(&text);
    let bins = |s: &str, t: i64| rows.iter().filter(|r| r.0 == s && r.1 == t).count();
    // Serial cue: B at 0, A at 0.5 s (bin 10) with a 1 s delay → 10 + 40 bins.
    assert_eq!(bins("day1", 8), 50);
    // Late reward 3.2 s after the cue lengthens the span to bin 64 + 1.
    assert_eq!(bins("day1", 9), 65);
    // Free reward with a second drop: ceil(post/dt) = 20 bins.
    assert_eq!(bins("day1", 6), 20);
    let d = |t: i64, k: usize| {
        rows.iter()
            .find(|r| r.0 == "day1" && r.1 == t && r.2 == k)
            .unwrap()
            .5
    };
    // Two drops on trial 4 (bins 20 and 30): no weight has learned anything about bin 30 yet,
    // so its δ is the second drop's size exactly.
    assert_eq!(d(4, 30), 1.5);
    // A free reward (2) and its second drop (1) 0.3 s later, with all-zero csc features.
    assert_eq!((d(6, 0), d(6, 6)), (2.0, 1.0));
    let events = std::fs::read_to_string(fixtures().join("subject/day1/events.csv")).unwrap();
    assert!(events.lines().filter(|l| l.contains(",reward,")).count() >= 4);
}

//! `trialdesk model` end to end: its traces against an independent numpy implementation of the
//! brief's model contract, and its handling of bad arguments.
//!
//! Fixtures: tests/fixtures/model/subject (three sessions: folder names that sort against
//! their dates, a session without start_time, cues listed in different orders, an unrewarded
//! cue, omissions, uncued rewards, rewards late enough to lengthen a span, rewards exactly on
//! a bin edge, CRLF and extra columns) and tests/fixtures/model/expected/*.csv, written by
//! tests/fixtures/model/reference_td.py (numpy, dense vectors, written from the brief's text).
//! Regenerate: `python3 reference_td.py subject expected` in that folder.

use std::path::{Path, PathBuf};
use std::process::Command;

fn fixtures() -> PathBuf {
    Path::new(env!("CARGO_MANIFEST_DIR")).join("tests/fixtures/model")
}

fn trialdesk(args: &[&str]) -> std::process::Output {
    Command::new(env!("CARGO_BIN_EXE_trialdesk"))
        .args(args)
        .output()
        .expect("run trialdesk")
}

type Row = (String, i64, usize, f64, f64, f64);

fn read_rows(text: &str) -> Vec<Row> {
    let mut rdr = csv::Reader::from_reader(text.as_bytes());
    let header: Vec<String> = rdr.headers().unwrap().iter().map(String::from).collect();
    // The brief's six columns first; `trialdesk model` adds the trial description after them
    // (the numpy reference writes only the six).
    assert_eq!(
        header[..6],
        ["session", "trial", "bin", "time_s", "value", "delta"]
    );
    assert!(
        header.len() == 6 || header[6..] == ["cue", "trial_type", "outcome", "aligned_to"],
        "{header:?}"
    );
    rdr.records()
        .map(|r| {
            let r = r.unwrap();
            let f = |i: usize| r[i].parse::<f64>().unwrap();
            (
                r[0].to_string(),
                r[1].parse().unwrap(),
                r[2].parse().unwrap(),
                f(3),
                f(4),
                f(5),
            )
        })
        .collect()
}

/// The same cases as CASES in reference_td.py: (file, representation, α, γ, λ, dt).
const CASES: [(&str, &str, &str, &str, &str, &str); 8] = [
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
        "microstimulus_l09",
        "microstimulus",
        "0.3",
        "0.95",
        "0.9",
        "0.05",
    ),
    (
        "microstimulus_dt01_l05",
        "microstimulus",
        "0.5",
        "0.9",
        "0.5",
        "0.1",
    ),
    ("csc_dt002_l07", "csc", "1", "1", "0.7", "0.02"),
];

#[test]
fn traces_match_independent_numpy_reference() {
    let subject = fixtures().join("subject");
    let dir = tempfile::tempdir().unwrap();
    for (name, repr, alpha, gamma, lambda, dt) in CASES {
        let out = dir.path().join(format!("{name}.csv"));
        let o = trialdesk(&[
            "model",
            subject.to_str().unwrap(),
            "--alpha",
            alpha,
            "--gamma",
            gamma,
            "--lambda",
            lambda,
            "--representation",
            repr,
            "--dt",
            dt,
            "--out",
            out.to_str().unwrap(),
        ]);
        assert!(
            o.status.success(),
            "{name}: {}",
            String::from_utf8_lossy(&o.stderr)
        );
        let ours = read_rows(&std::fs::read_to_string(&out).unwrap());
        let expected_path = fixtures().join("expected").join(format!("{name}.csv"));
        let theirs = read_rows(&std::fs::read_to_string(expected_path).unwrap());
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
fn fixture_covers_the_edge_cases_it_claims() {
    // Guards the reference comparison against a fixture that silently lost its hard cases.
    let text = std::fs::read_to_string(fixtures().join("expected/csc_l0.csv")).unwrap();
    let rows = read_rows(&text);
    let sessions: Vec<&str> = rows.iter().map(|r| r.0.as_str()).fold(vec![], |mut v, s| {
        if v.last() != Some(&s) {
            v.push(s);
        }
        v
    });
    assert_eq!(sessions, ["z-first", "a-second", "0-third"]);
    let bins = |s: &str, t: i64| rows.iter().filter(|r| r.0 == s && r.1 == t).count();
    assert_eq!(bins("z-first", 1), 50); // 1.5 s delay + 1 s post at 0.05 s
    assert_eq!(bins("z-first", 11), 65); // reward 3.2 s after the cue lengthens the span
    assert_eq!(bins("a-second", 9), 25); // reward on a cue without a delay
    assert_eq!(bins("z-first", 4), 20); // uncued reward
                                        // Reward exactly 1.5 s after the cue lands in bin 30 (δ = the reward on the first trial).
    let r = rows
        .iter()
        .find(|r| r.0 == "z-first" && r.1 == 1 && r.5 != 0.0)
        .unwrap();
    assert_eq!((r.2, r.5), (30, 3.0));
}

#[test]
fn stdout_output_equals_file_output() {
    let subject = fixtures().join("subject");
    let dir = tempfile::tempdir().unwrap();
    let file = dir.path().join("t.csv");
    let base = [
        "model",
        subject.to_str().unwrap(),
        "--alpha",
        "0.2",
        "--gamma",
        "0.9",
    ];
    let to_file = trialdesk(&[&base[..], &["--out", file.to_str().unwrap()]].concat());
    let to_stdout = trialdesk(&[&base[..], &["--out", "-"]].concat());
    assert!(to_file.status.success() && to_stdout.status.success());
    assert_eq!(std::fs::read(&file).unwrap(), to_stdout.stdout);
}

#[test]
fn bad_arguments_exit_2_with_a_clear_message() {
    let subject = fixtures().join("subject");
    let s = subject.to_str().unwrap();
    let cases: [(&[&str], &str); 7] = [
        (
            &["--alpha", "0", "--gamma", "0.9"],
            "--alpha 0 is out of range",
        ),
        (
            &["--alpha", "1.5", "--gamma", "0.9"],
            "--alpha 1.5 is out of range",
        ),
        (
            &["--alpha", "0.1", "--gamma", "-0.1"],
            "--gamma -0.1 is out of range",
        ),
        (
            &["--alpha", "0.1", "--gamma", "0.9", "--lambda", "2"],
            "--lambda 2 is out of range",
        ),
        (
            &["--alpha", "0.1", "--gamma", "0.9", "--dt", "0"],
            "--dt 0 is out of range",
        ),
        (
            &["--alpha", "NaN", "--gamma", "0.9"],
            "--alpha NaN is out of range",
        ),
        (
            &[
                "--alpha",
                "0.1",
                "--gamma",
                "0.9",
                "--representation",
                "tapped",
            ],
            "--representation 'tapped' is not known",
        ),
    ];
    for (args, message) in cases {
        let o = trialdesk(&[&["model", s][..], args, &["--out", "-"]].concat());
        let err = String::from_utf8_lossy(&o.stderr);
        assert_eq!(o.status.code(), Some(2), "{args:?}: {err}");
        assert!(err.contains(message), "{args:?}: {err}");
        assert!(o.stdout.is_empty());
    }
    // Neither --alpha/--gamma nor a saved fit: a usage error that says both ways out.
    let o = trialdesk(&["model", s, "--out", "-"]);
    let err = String::from_utf8_lossy(&o.stderr);
    assert_eq!(o.status.code(), Some(2), "{err}");
    assert!(err.contains("no saved fit at"), "{err}");
    assert!(err.contains("trialdesk-fit.toml"), "{err}");
    // Only one of the pair: clap's usage error.
    let o = trialdesk(&["model", s, "--alpha", "0.1", "--out", "-"]);
    assert_eq!(o.status.code(), Some(2));
}

#[test]
fn data_that_does_not_load_exits_1() {
    let dir = tempfile::tempdir().unwrap();
    let missing = dir.path().join("no-such-subject");
    let out = dir.path().join("t.csv");
    let o = trialdesk(&[
        "model",
        missing.to_str().unwrap(),
        "--alpha",
        "0.1",
        "--gamma",
        "0.9",
        "--out",
        out.to_str().unwrap(),
    ]);
    let err = String::from_utf8_lossy(&o.stderr);
    assert_eq!(o.status.code(), Some(1), "{err}");
    assert!(err.contains("no-such-subject"), "{err}");
    assert!(!out.exists(), "nothing written on failure");
}

/// Copy of the fixture subject in a temporary folder (so a saved fit can be put beside it).
fn fixture_copy(dir: &Path) -> PathBuf {
    fn copy(from: &Path, to: &Path) {
        std::fs::create_dir_all(to).unwrap();
        for e in std::fs::read_dir(from).unwrap() {
            let p = e.unwrap().path();
            let target = to.join(p.file_name().unwrap());
            if p.is_dir() {
                copy(&p, &target);
            } else {
                std::fs::copy(&p, &target).unwrap();
            }
        }
    }
    let to = dir.join("subject");
    copy(&fixtures().join("subject"), &to);
    to
}

fn saved_fit(alpha: f64) -> trialdesk::fit::saved::SavedFit {
    use trialdesk::fit::saved::{Baselines, SavedFit};
    SavedFit {
        alpha,
        gamma: 0.95,
        lambda: 0.9,
        dt: 0.05,
        representation: "microstimulus".into(),
        gain: 2.0,
        baselines: Baselines::default(),
        fitted_at: "2026-03-10T08:00:00Z".into(),
        n_excluded: 0,
        ignore_marks: false,
        lambda_fitted: true,
        log_likelihood: None,
        n_observations: None,
        signal: None,
        unit: None,
        latency_s: None,
        cue_window_s: None,
        reward_window_s: None,
        baseline_window_s: None,
        sensor_rise_s: None,
        sensor_decay_s: None,
        likelihood: None,
        gain_neg: None,
        zscore: None,
        control_fit: None,
        scale_by: None,
        lick: None,
        groups: Vec::new(),
    }
}

/// Without --alpha/--gamma the saved fit gives every parameter, stderr says so, and the traces
/// are the ones the same parameters give on the command line (the numpy-checked path).
#[test]
fn saved_fit_supplies_the_parameters() {
    let dir = tempfile::tempdir().unwrap();
    let subject = fixture_copy(dir.path());
    trialdesk::fit::saved::save(&subject, &saved_fit(0.3)).unwrap();
    let s = subject.to_str().unwrap();
    let from_saved = trialdesk(&["model", s, "--out", "-"]);
    let err = String::from_utf8_lossy(&from_saved.stderr);
    assert!(from_saved.status.success(), "{err}");
    assert!(err.contains("parameters from the saved fit"), "{err}");
    assert!(err.contains("trialdesk-fit.toml"), "{err}");
    assert!(
        err.contains("microstimulus alpha=0.3 gamma=0.95 lambda=0.9"),
        "{err}"
    );
    let given = trialdesk(&[
        "model",
        s,
        "--alpha",
        "0.3",
        "--gamma",
        "0.95",
        "--lambda",
        "0.9",
        "--representation",
        "microstimulus",
        "--out",
        "-",
    ]);
    assert!(given.status.success());
    assert_eq!(from_saved.stdout, given.stdout);
    // A session folder finds its subject's saved fit.
    let one = trialdesk(&[
        "model",
        subject.join("z-first").to_str().unwrap(),
        "--out",
        "-",
    ]);
    assert!(
        one.status.success(),
        "{}",
        String::from_utf8_lossy(&one.stderr)
    );
    // Options that belong to --alpha/--gamma are refused with a saved fit.
    let mixed = trialdesk(&["model", s, "--lambda", "0", "--out", "-"]);
    assert_eq!(mixed.status.code(), Some(2));
}

/// A saved fit outside the model's ranges is refused, naming the file and the field.
#[test]
fn invalid_saved_fit_is_refused_with_file_and_field() {
    let dir = tempfile::tempdir().unwrap();
    let subject = fixture_copy(dir.path());
    trialdesk::fit::saved::save(&subject, &saved_fit(1.5)).unwrap();
    let o = trialdesk(&["model", subject.to_str().unwrap(), "--out", "-"]);
    let err = String::from_utf8_lossy(&o.stderr);
    assert_eq!(o.status.code(), Some(1), "{err}");
    assert!(
        err.contains("trialdesk-fit.toml: field `alpha`: 1.5 is out of range"),
        "{err}"
    );
    assert!(o.stdout.is_empty());
}

/// Each bin row says what trial it belongs to and what bin 0 is aligned to; time_s is exact.
#[test]
fn rows_describe_their_trial_and_alignment() {
    let subject = fixtures().join("subject");
    let o = trialdesk(&[
        "model",
        subject.to_str().unwrap(),
        "--alpha",
        "0.1",
        "--gamma",
        "0.9",
        "--out",
        "-",
    ]);
    assert!(o.status.success());
    let text = String::from_utf8(o.stdout).unwrap();
    let mut rdr = csv::Reader::from_reader(text.as_bytes());
    let rows: Vec<csv::StringRecord> = rdr.records().map(|r| r.unwrap()).collect();
    let first = |session: &str, trial: &str| {
        rows.iter()
            .find(|r| &r[0] == session && &r[1] == trial)
            .unwrap_or_else(|| panic!("{session} {trial}"))
    };
    // Fixture z-first/trials.csv: 1 tone-hi rewarded, 2 tone-lo (no reward_delay_s),
    // 4 uncued reward, 5 tone-hi without its reward.
    let desc = |r: &csv::StringRecord| {
        (
            r[6].to_string(),
            r[7].to_string(),
            r[8].to_string(),
            r[9].to_string(),
        )
    };
    let s = |a: &str, b: &str, c: &str, d: &str| {
        (a.to_string(), b.to_string(), c.to_string(), d.to_string())
    };
    assert_eq!(
        desc(first("z-first", "1")),
        s("tone-hi", "cs_plus", "reward", "cue_onset")
    );
    assert_eq!(
        desc(first("z-first", "2")),
        s("tone-lo", "cs_minus", "none", "cue_onset")
    );
    assert_eq!(
        desc(first("z-first", "4")),
        s("", "uncued", "reward", "reward")
    );
    assert_eq!(
        desc(first("z-first", "5")),
        s("tone-hi", "cs_plus", "omission", "cue_onset")
    );
    // time_s = bin × 0.05 written exactly (3 × 0.05 is 0.15000000000000002 in binary).
    for r in &rows {
        let bin: u64 = r[2].parse().unwrap();
        let want = format!("{}.{:02}", bin * 5 / 100, bin * 5 % 100);
        let want = want.trim_end_matches('0').trim_end_matches('.');
        assert_eq!(&r[3], want, "bin {bin}");
    }
}

//! `trialdesk fit COHORT_DIR`: a simulated 3-subject cohort (2 days × 40 trials each) fitted
//! as two shards, the way two array tasks would run it.

use std::collections::BTreeSet;
use std::path::{Path, PathBuf};
use std::process::{Command, Output};

const SUBJECTS: [&str; 3] = ["m-001", "m-002", "m-003"];

fn bin() -> Command {
    Command::new(env!("CARGO_BIN_EXE_trialdesk"))
}

fn cohort(dir: &Path) -> PathBuf {
    let root = dir.join("cohort");
    for (i, name) in SUBJECTS.iter().enumerate() {
        let out = bin()
            .arg("simulate")
            .arg(root.join(name))
            .args(["--days", "2", "--trials-per-day", "40"])
            .args(["--seed", &(i + 1).to_string()])
            .output()
            .unwrap();
        assert!(
            out.status.success(),
            "{}",
            String::from_utf8_lossy(&out.stderr)
        );
    }
    root
}

const QUICK: [&str; 4] = ["--bootstrap", "0", "--no-compare", "--no-save"];

fn fit(path: &Path, extra: &[&str]) -> Output {
    bin()
        .env("XDG_CONFIG_HOME", path.join("no-such-config"))
        .arg("fit")
        .arg(path)
        .args(QUICK)
        .args(extra)
        .output()
        .unwrap()
}

/// Subject names of the table rows that say `ok`.
fn fitted_rows(out: &Output) -> Vec<String> {
    let text = String::from_utf8_lossy(&out.stdout);
    text.lines()
        .filter(|l| l.ends_with("  ok"))
        .map(|l| l.split_whitespace().next().unwrap().to_string())
        .collect()
}

#[test]
fn two_shards_fit_every_subject_exactly_once() {
    let dir = tempfile::tempdir().unwrap();
    let root = cohort(dir.path());
    let results = dir.path().join("results");
    let results_arg = results.to_str().unwrap();

    let mut seen = Vec::new();
    for k in ["1/2", "2/2"] {
        let out = fit(&root, &["--shard", k, "--out", results_arg]);
        assert_eq!(
            out.status.code(),
            Some(0),
            "{}",
            String::from_utf8_lossy(&out.stderr)
        );
        let rows = fitted_rows(&out);
        assert!(!rows.is_empty(), "shard {k} fitted nothing");
        seen.extend(rows);
    }
    seen.sort();
    assert_eq!(seen, SUBJECTS, "each subject once across the shards");

    for name in SUBJECTS {
        for table in ["params.csv", "trials.csv", "report.txt"] {
            assert!(results.join(name).join(table).is_file(), "{name}/{table}");
        }
    }
    let params = std::fs::read_to_string(results.join("m-002/params.csv")).unwrap();
    let names: BTreeSet<&str> = params
        .lines()
        .skip(1)
        .filter_map(|l| l.split(',').next())
        .collect();
    for row in ["alpha", "gamma", "gain"] {
        assert!(names.contains(row), "{params}");
    }

    // A subject in the cohort gets the same fit as the subject alone.
    let alone = dir.path().join("alone");
    let out = fit(&root.join("m-002"), &["--out", alone.to_str().unwrap()]);
    assert!(out.status.success());
    assert_eq!(
        std::fs::read_to_string(alone.join("params.csv")).unwrap(),
        params
    );
}

#[test]
fn bad_shards_are_usage_errors() {
    let dir = tempfile::tempdir().unwrap();
    let root = cohort(dir.path());
    for bad in ["0/2", "3/2", "1/0", "two/3", "1"] {
        let out = fit(&root, &["--shard", bad]);
        assert_eq!(out.status.code(), Some(2), "--shard {bad}");
        let err = String::from_utf8_lossy(&out.stderr);
        assert!(err.contains("K/N") || err.contains("K <= N"), "{err}");
    }
    // A subject folder is not a cohort: sharding it makes no sense.
    let out = fit(&root.join("m-001"), &["--shard", "1/2"]);
    assert_eq!(out.status.code(), Some(2));
    assert!(String::from_utf8_lossy(&out.stderr).contains("cohort folder"));
}

#[test]
fn a_broken_subject_fails_alone() {
    let dir = tempfile::tempdir().unwrap();
    let root = cohort(dir.path());
    let session = std::fs::read_dir(root.join("m-003"))
        .unwrap()
        .map(|e| e.unwrap().path())
        .find(|p| p.join("session.toml").is_file())
        .unwrap();
    std::fs::write(
        session.join("trials.csv"),
        "trial,cue\nnot-a-number,tone-hi\n",
    )
    .unwrap();
    let results = dir.path().join("results");
    let out = fit(&root, &["--out", results.to_str().unwrap()]);
    assert_eq!(out.status.code(), Some(1));
    assert_eq!(fitted_rows(&out), ["m-001", "m-002"]);
    let table = String::from_utf8_lossy(&out.stdout);
    assert!(
        table
            .lines()
            .any(|l| l.starts_with("m-003") && l.ends_with("failed")),
        "{table}"
    );
    assert!(String::from_utf8_lossy(&out.stderr).contains("m-003"));
    assert!(!results.join("m-003/params.csv").exists());
}

//! Cohort discovery and sharding on real folders: every subject is taken by exactly one shard
//! for every N, non-subject folders are skipped, and a bad K/N is a usage error.

use std::collections::BTreeMap;
use std::path::Path;
use trialdesk::cohort::{discover_subjects, run_cohort, shard, CohortError, Shard, SubjectDir};
use trialdesk::fit::NoProgress;

/// A subject folder with one session holding only session.toml (enough to be discovered).
fn make_subject(root: &Path, name: &str) {
    let session = root.join(name).join("2026-03-02");
    std::fs::create_dir_all(&session).unwrap();
    std::fs::write(
        session.join("session.toml"),
        format!("subject = \"{name}\"\ndate = \"2026-03-02\"\n"),
    )
    .unwrap();
}

fn cohort(n: usize) -> tempfile::TempDir {
    let dir = tempfile::tempdir().unwrap();
    // Created out of order: discovery must sort.
    for i in (0..n).rev() {
        make_subject(dir.path(), &format!("m-{i:02}"));
    }
    dir
}

#[test]
fn discovery_sorts_and_skips_other_folders() {
    let dir = cohort(3);
    std::fs::create_dir_all(dir.path().join("results/m-00")).unwrap();
    std::fs::create_dir_all(dir.path().join(".cache/x")).unwrap();
    std::fs::write(dir.path().join("notes.txt"), "cohort spring").unwrap();
    let found = discover_subjects(dir.path()).unwrap();
    let names: Vec<&str> = found.iter().map(|s| s.name.as_str()).collect();
    assert_eq!(names, ["m-00", "m-01", "m-02"]);
}

#[test]
fn discovery_refuses_session_and_empty_folders() {
    let dir = cohort(1);
    let session = dir.path().join("m-00/2026-03-02");
    assert!(matches!(
        discover_subjects(&session),
        Err(CohortError::IsSession { .. })
    ));
    let empty = tempfile::tempdir().unwrap();
    let err = discover_subjects(empty.path()).unwrap_err();
    assert!(err.to_string().contains("no subject folders"), "{err}");
}

#[test]
fn every_subject_in_exactly_one_shard_for_every_n() {
    let dir = cohort(13);
    let subjects = discover_subjects(dir.path()).unwrap();
    assert_eq!(subjects.len(), 13);
    for n in 1..=16 {
        let mut seen: BTreeMap<String, usize> = BTreeMap::new();
        let mut sizes = Vec::new();
        for k in 1..=n {
            let part = shard(&subjects, Shard::new(k, n).unwrap());
            sizes.push(part.len());
            for s in part {
                *seen.entry(s.name).or_default() += 1;
            }
        }
        assert_eq!(seen.len(), 13, "N = {n}: some subject in no shard");
        assert!(seen.values().all(|&c| c == 1), "N = {n}: {seen:?}");
        let (lo, hi) = (sizes.iter().min().unwrap(), sizes.iter().max().unwrap());
        assert!(hi - lo <= 1, "N = {n}: unbalanced {sizes:?}");
    }
}

#[test]
fn shard_of_one_is_everything_in_name_order() {
    let subjects: Vec<SubjectDir> = ["b", "a", "c"]
        .iter()
        .map(|n| SubjectDir {
            name: n.to_string(),
            path: n.into(),
        })
        .collect();
    let all = shard(&subjects, Shard::ALL);
    let names: Vec<&str> = all.iter().map(|s| s.name.as_str()).collect();
    assert_eq!(names, ["a", "b", "c"]);
}

#[test]
fn run_cohort_runs_each_subject_of_the_shard_and_keeps_failures_apart() {
    let dir = cohort(5);
    let run = run_cohort(dir.path(), Shard::new(1, 2).unwrap(), &NoProgress, |p| {
        let name = p.file_name().unwrap().to_string_lossy().into_owned();
        if name == "m-02" {
            Err(format!("{name}: broken"))
        } else {
            Ok(name.len())
        }
    })
    .unwrap();
    assert_eq!(run.cohort_size, 5);
    let names: Vec<&str> = run
        .results
        .iter()
        .map(|r| r.subject.name.as_str())
        .collect();
    assert_eq!(names, ["m-00", "m-02", "m-04"]);
    let failures: Vec<_> = run.failures().collect();
    assert_eq!(failures.len(), 1);
    assert_eq!(failures[0].0.name, "m-02");
    assert_eq!(run.results[0].result, Ok(4));
}

#[test]
fn bad_shard_text_is_rejected_with_the_rule() {
    for bad in ["0/4", "5/4", "2/0", "two/4", "3", "1/2/3"] {
        let err = Shard::parse(bad).unwrap_err();
        assert!(matches!(err, CohortError::BadShard(_)), "{bad}");
        assert!(err.to_string().contains("1 <= K <= N"), "{bad}: {err}");
    }
}

//! A session folder inside a subject folder is read with its subject's history: the model
//! learns across sessions, so a session modelled alone starts untrained (value 0, the full
//! reward as δ on day 4). `model` and `review` use the history and say so; a lone session gets
//! a plain warning; `fit` on a session says it starts untrained.

use std::path::{Path, PathBuf};
use std::process::{Command, Output};

fn run(args: &[&str]) -> Output {
    Command::new(env!("CARGO_BIN_EXE_trialdesk"))
        .args(args)
        .output()
        .unwrap()
}

fn demo() -> PathBuf {
    Path::new(env!("CARGO_MANIFEST_DIR")).join("demo_data/m-041")
}

fn last_session(subject: &Path) -> PathBuf {
    let mut v: Vec<PathBuf> = std::fs::read_dir(subject)
        .unwrap()
        .map(|e| e.unwrap().path())
        .filter(|p| p.join("session.toml").is_file())
        .collect();
    v.sort();
    v.pop().unwrap()
}

const PARAMS: [&str; 6] = ["--alpha", "0.02", "--gamma", "0.98", "--lambda", "0.9"];

#[test]
fn a_session_in_its_subject_is_modelled_with_the_history() {
    let session = last_session(&demo());
    let name = session.file_name().unwrap().to_str().unwrap().to_string();
    let sc = trialdesk::plan::scope(&session);
    assert_eq!(sc.root, demo());
    assert_eq!(sc.session.as_deref(), Some(name.as_str()));

    let mut args = vec!["model", session.to_str().unwrap(), "--out", "-"];
    args.extend(PARAMS);
    let one = run(&args);
    assert!(
        one.status.success(),
        "{}",
        String::from_utf8_lossy(&one.stderr)
    );
    assert!(String::from_utf8_lossy(&one.stderr).contains("read with its subject's history"));

    let demo_path = demo();
    let mut args = vec!["model", demo_path.to_str().unwrap(), "--out", "-"];
    args.extend(PARAMS);
    let all = run(&args);
    assert!(all.status.success());
    let all = String::from_utf8_lossy(&all.stdout);
    let mut lines = all.lines();
    let header = lines.next().unwrap();
    let expected: Vec<&str> = std::iter::once(header)
        .chain(lines.filter(|l| l.starts_with(&format!("{name},"))))
        .collect();
    let got: Vec<&str> = std::str::from_utf8(&one.stdout).unwrap().lines().collect();
    assert!(expected.len() > 1);
    assert_eq!(
        got, expected,
        "the session's rows differ from the subject's"
    );
}

#[test]
fn a_lone_session_is_modelled_untrained_with_a_warning() {
    let tmp = tempfile::tempdir().unwrap();
    let from = last_session(&demo());
    let lone = tmp.path().join("day");
    std::fs::create_dir(&lone).unwrap();
    for f in ["session.toml", "trials.csv", "licks.csv", "spikes.csv"] {
        if from.join(f).is_file() {
            std::fs::copy(from.join(f), lone.join(f)).unwrap();
        }
    }
    let sc = trialdesk::plan::scope(&lone);
    assert_eq!(sc.root, lone);
    assert_eq!(sc.session, None);
    let mut args = vec!["model", lone.to_str().unwrap(), "--out", "-"];
    args.extend(PARAMS);
    let o = run(&args);
    assert!(o.status.success());
    let err = String::from_utf8_lossy(&o.stderr);
    assert!(err.contains("the model starts untrained"), "{err}");

    let fit = run(&[
        "fit",
        from.to_str().unwrap(),
        "--no-save",
        "--bootstrap",
        "0",
        "--no-compare",
        "--no-sensitivity",
    ]);
    let err = String::from_utf8_lossy(&fit.stderr);
    assert!(err.contains("starts from an untrained model"), "{err}");
}

/// A day whose trials.csv is broken is left out of a review, named with its first error;
/// the other days load. A problem outside any one session still fails the subject.
#[test]
fn a_bad_day_leaves_the_other_days_reviewable() {
    let tmp = tempfile::tempdir().unwrap();
    let subject = tmp.path().join("m-041");
    let o = run(&[
        "simulate",
        subject.to_str().unwrap(),
        "--days",
        "3",
        "--trials-per-day",
        "20",
    ]);
    assert!(o.status.success());
    let bad = last_session(&subject);
    let trials = bad.join("trials.csv");
    let mut text = std::fs::read_to_string(&trials).unwrap();
    text.push_str("not,a,trial,row\n");
    std::fs::write(&trials, text).unwrap();

    assert!(trialdesk::data::load(&subject).is_err());
    let partial = trialdesk::data::load_partial(&subject).unwrap();
    assert_eq!(partial.loaded.subject.sessions.len(), 2);
    assert_eq!(partial.left_out.len(), 1);
    assert_eq!(partial.left_out[0].0, bad);
    assert!(partial.left_out[0].1.file.starts_with(&bad));

    // Every day broken: nothing to review, the failure lists the problems.
    for s in std::fs::read_dir(&subject).unwrap() {
        let p = s.unwrap().path().join("trials.csv");
        if p.is_file() {
            std::fs::write(&p, "nonsense\n").unwrap();
        }
    }
    assert!(trialdesk::data::load_partial(&subject).is_err());
}

//! Filesystem behaviour of the whole tool (issue 6, item 5): the commands write only the
//! sidecar and the outputs asked for; odd folders (FIFOs where files should be, symlink loops,
//! a journal that cannot be written) give a clear error instead of a hang or a crash.
//!
//! Every command runs as a child process (the real binary) with a deadline, so a hang fails
//! the test instead of freezing the suite.
//!
//! Limitation: the suite runs as root, and root ignores file permissions, so a truly
//! read-only folder cannot be made here (no chmod, and a read-only bind mount needs
//! privileges a CI container rarely has). Unwritable journals are stood in for by a
//! `marks.csv` that is a folder and by a session path whose parent is a regular file; both
//! fail in `open`, the same call a read-only folder fails in.

mod tui_support;

use std::collections::BTreeMap;
use std::path::{Path, PathBuf};
use std::process::{Command, Output, Stdio};
use std::time::{Duration, Instant};
use trialdesk::marks::{self, MarkKind, MarkRow};

const BIN: &str = env!("CARGO_BIN_EXE_trialdesk");

/// Run the binary with `args`, killing it after `limit`. `None` means it hung.
fn run_with_deadline(args: &[&str], limit: Duration) -> Option<Output> {
    let mut child = Command::new(BIN)
        .args(args)
        .env("NO_COLOR", "1")
        .stdin(Stdio::null())
        .stdout(Stdio::piped())
        .stderr(Stdio::piped())
        .spawn()
        .expect("start trialdesk");
    let start = Instant::now();
    loop {
        if child.try_wait().expect("wait").is_some() {
            return Some(child.wait_with_output().expect("output"));
        }
        if start.elapsed() > limit {
            let _ = child.kill();
            let _ = child.wait();
            return None;
        }
        std::thread::sleep(Duration::from_millis(20));
    }
}

fn run(args: &[&str]) -> Output {
    run_with_deadline(args, Duration::from_secs(60))
        .unwrap_or_else(|| panic!("trialdesk {args:?} did not finish in 60 s"))
}

/// Everything the command printed: `check` lists problems on stdout, the others on stderr.
fn stderr(o: &Output) -> String {
    format!(
        "{}{}",
        String::from_utf8_lossy(&o.stdout),
        String::from_utf8_lossy(&o.stderr)
    )
}

/// A small simulated subject (2 days × 40 trials) in a fresh temp folder.
fn simulated_subject() -> (tempfile::TempDir, PathBuf) {
    let tmp = tempfile::tempdir().unwrap();
    let subject = tmp.path().join("m-fs");
    let o = run(&[
        "simulate",
        subject.to_str().unwrap(),
        "--seed",
        "3",
        "--days",
        "2",
        "--trials-per-day",
        "40",
    ]);
    assert!(o.status.success(), "simulate failed: {}", stderr(&o));
    (tmp, subject)
}

fn session_dirs(subject: &Path) -> Vec<PathBuf> {
    let mut dirs: Vec<PathBuf> = std::fs::read_dir(subject)
        .unwrap()
        .map(|e| e.unwrap().path())
        .filter(|p| p.join("session.toml").is_file())
        .collect();
    dirs.sort();
    dirs
}

/// Every file under `root` (symlinks not followed) with its bytes.
fn snapshot(root: &Path) -> BTreeMap<PathBuf, Vec<u8>> {
    let mut out = BTreeMap::new();
    let mut stack = vec![root.to_path_buf()];
    while let Some(dir) = stack.pop() {
        for e in std::fs::read_dir(&dir).unwrap() {
            let e = e.unwrap();
            let ty = e.file_type().unwrap();
            let rel = e.path().strip_prefix(root).unwrap().to_path_buf();
            if ty.is_dir() {
                stack.push(e.path());
                out.insert(rel, b"<dir>".to_vec());
            } else {
                out.insert(rel, std::fs::read(e.path()).unwrap_or_default());
            }
        }
    }
    out
}

fn note_row(note: &str) -> MarkRow {
    MarkRow {
        trial: Some(3),
        mark: MarkKind::Exclude,
        reason: "artifact".into(),
        note: note.into(),
        reviewer: "fs-test".into(),
        at: "2026-03-02T10:00:00Z".into(),
    }
}

#[test]
fn commands_write_only_the_sidecar_the_saved_fit_and_the_asked_for_outputs() {
    let (tmp, subject) = simulated_subject();
    let outside = tmp.path().join("results");
    std::fs::create_dir(&outside).unwrap();
    let s = subject.to_str().unwrap();
    let first = session_dirs(&subject)[0].clone();
    let first_s = first.to_str().unwrap();

    // The reviewer's only write: the sidecar of the session it marks.
    marks::append(&first, &note_row("valve clicked twice")).unwrap();
    let before = snapshot(&subject);

    let model_out = outside.join("model.csv");
    let summary_out = outside.join("summary.csv");
    let marks_out = outside.join("marks.csv");
    let fit_out = outside.join("fit");
    let runs: Vec<Vec<&str>> = vec![
        vec!["check", s],
        vec!["check", first_s],
        vec![
            "model",
            s,
            "--alpha",
            "0.1",
            "--gamma",
            "0.95",
            "--out",
            model_out.to_str().unwrap(),
        ],
        vec!["summary", s],
        vec![
            "summary",
            s,
            "--format",
            "csv",
            "--out",
            summary_out.to_str().unwrap(),
        ],
        vec!["marks", s],
        vec!["marks", first_s, "--csv", marks_out.to_str().unwrap()],
        vec![
            "fit",
            s,
            "--no-compare",
            "--bootstrap",
            "0",
            "--out",
            fit_out.to_str().unwrap(),
        ],
    ];
    for args in &runs {
        let o = run(args);
        assert!(
            o.status.success(),
            "trialdesk {args:?} failed: {}",
            stderr(&o)
        );
    }

    let after = snapshot(&subject);
    let added: Vec<&PathBuf> = after.keys().filter(|k| !before.contains_key(*k)).collect();
    let removed: Vec<&PathBuf> = before.keys().filter(|k| !after.contains_key(*k)).collect();
    // `fit` keeps its result beside the data on purpose (issue 3): that one file and nothing else.
    assert_eq!(
        added,
        vec![&PathBuf::from("trialdesk-fit.toml")],
        "new files"
    );
    assert!(removed.is_empty(), "files removed: {removed:?}");
    for (path, bytes) in &before {
        assert!(after[path] == *bytes, "{} changed", path.display());
    }
    for f in [&model_out, &summary_out, &marks_out] {
        assert!(f.is_file(), "{} not written", f.display());
    }
    assert!(fit_out.join("params.csv").is_file() && fit_out.join("trials.csv").is_file());
}

/// Each data file in turn replaced by a FIFO nobody writes to: opening one blocks forever,
/// so the loader must see it is not a regular file before opening it.
#[test]
fn a_fifo_in_place_of_a_data_file_is_refused_without_hanging() {
    let (_tmp, subject) = simulated_subject();
    let dir = session_dirs(&subject)[0].clone();
    let mut failures = Vec::new();
    for file in [
        "session.toml",
        "trials.csv",
        "spikes.csv",
        "licks.csv",
        "photometry.csv",
        "marks.csv",
    ] {
        let path = dir.join(file);
        let saved = std::fs::read(&path).ok();
        let _ = std::fs::remove_file(&path);
        let made = Command::new("mkfifo").arg(&path).status().unwrap();
        assert!(made.success());
        for cmd in ["check", "summary", "marks"] {
            match run_with_deadline(&[cmd, dir.to_str().unwrap()], Duration::from_secs(10)) {
                None => failures.push(format!("{cmd} hung on a FIFO {file}")),
                Some(o) => {
                    let err = stderr(&o);
                    let named = err.contains(file);
                    let ok_exit = o.status.code() == Some(1);
                    // `marks` does not read the data files; it may succeed.
                    let marks_untouched = cmd == "marks" && file != "marks.csv";
                    let refused = named && ok_exit;
                    if !(marks_untouched || refused) {
                        failures.push(format!(
                            "{cmd} with a FIFO {file}: exit {:?}, stderr {err}",
                            o.status.code()
                        ));
                    }
                }
            }
        }
        std::fs::remove_file(&path).unwrap();
        if let Some(bytes) = saved {
            std::fs::write(&path, bytes).unwrap();
        }
    }
    assert!(failures.is_empty(), "{failures:#?}");
}

#[test]
fn symlink_loops_in_a_subject_folder_end() {
    let (_tmp, subject) = simulated_subject();
    // a → b → a, a self loop, and a link back up to the subject folder.
    std::os::unix::fs::symlink(subject.join("b"), subject.join("a")).unwrap();
    std::os::unix::fs::symlink(subject.join("a"), subject.join("b")).unwrap();
    std::os::unix::fs::symlink(subject.join("self"), subject.join("self")).unwrap();
    std::os::unix::fs::symlink(&subject, subject.join("up")).unwrap();
    let s = subject.to_str().unwrap();
    for cmd in ["check", "summary", "marks"] {
        let o = run_with_deadline(&[cmd, s], Duration::from_secs(20))
            .unwrap_or_else(|| panic!("{cmd} hung on symlink loops"));
        assert!(o.status.success(), "{cmd}: {}", stderr(&o));
    }
    let loaded = trialdesk::data::load(&subject).unwrap_or_else(|f| panic!("{f}"));
    assert_eq!(loaded.subject.sessions.len(), 2, "each session once");
}

#[test]
fn a_data_file_that_is_a_symlink_loop_is_an_error_naming_it() {
    let (_tmp, subject) = simulated_subject();
    let dir = session_dirs(&subject)[0].clone();
    for file in ["trials.csv", "licks.csv", "session.toml"] {
        let path = dir.join(file);
        let saved = std::fs::read(&path).unwrap();
        std::fs::remove_file(&path).unwrap();
        std::os::unix::fs::symlink(&path, &path).unwrap();
        let o = run_with_deadline(&["check", dir.to_str().unwrap()], Duration::from_secs(10))
            .unwrap_or_else(|| panic!("check hung on a looping {file}"));
        let err = stderr(&o);
        assert_eq!(o.status.code(), Some(1), "{file}: {err}");
        assert!(err.contains(file), "{file} not named: {err}");
        std::fs::remove_file(&path).unwrap();
        std::fs::write(&path, saved).unwrap();
    }
}

#[test]
fn a_journal_that_cannot_be_written_is_a_clear_error_and_nothing_is_half_done() {
    let (_tmp, subject) = simulated_subject();
    let dir = session_dirs(&subject)[0].clone();

    // marks.csv is a folder.
    std::fs::create_dir(dir.join("marks.csv")).unwrap();
    let err = marks::append(&dir, &note_row("kept"))
        .unwrap_err()
        .to_string();
    assert!(err.contains("marks.csv"), "{err}");
    assert!(err.contains("not a regular file"), "{err}");
    let o = run(&["marks", dir.to_str().unwrap()]);
    assert_eq!(o.status.code(), Some(1));
    assert!(stderr(&o).contains("marks.csv"), "{}", stderr(&o));

    // The session "folder" sits under a regular file: open fails with an OS error.
    let blocker = subject.join("not-a-folder");
    std::fs::write(&blocker, "x").unwrap();
    let err = marks::append(&blocker.join("day"), &note_row("kept"))
        .unwrap_err()
        .to_string();
    assert!(err.contains("not-a-folder/day/marks.csv"), "{err}");
    assert!(err.to_lowercase().contains("not a directory"), "{err}");
}

#[test]
fn a_fit_that_cannot_save_beside_the_data_says_so() {
    let (_tmp, subject) = simulated_subject();
    // The saved-fit path is taken by a folder: the save must fail by name, not panic.
    std::fs::create_dir(subject.join("trialdesk-fit.toml")).unwrap();
    let o = run(&[
        "fit",
        subject.to_str().unwrap(),
        "--no-compare",
        "--bootstrap",
        "0",
    ]);
    let err = stderr(&o);
    assert!(!err.contains("panicked"), "{err}");
    assert!(err.contains("trialdesk-fit.toml"), "{err}");
    // The fit itself ran and was reported; only the save failed.
    assert_eq!(o.status.code(), Some(1), "{err}");
    let report = String::from_utf8_lossy(&o.stdout);
    assert!(report.contains("alpha"), "no report printed: {report}");
}

/// The reviewer with a journal it cannot write: the mark stays in memory, the screen says
/// NOT SAVED, and on the way out the rows go to a journal elsewhere that reads back whole.
#[test]
fn the_reviewer_keeps_unwritable_marks_and_saves_them_elsewhere() {
    let (tmp, dir) = tui_support::fixture_copy();
    let session = dir.join("2026-03-02");
    std::fs::create_dir(session.join("marks.csv")).unwrap();
    let mut st = tui_support::state(&dir);
    tui_support::press(&mut st, "jjx3");
    assert!(st.status.text.contains("NOT SAVED"), "{}", st.status.text);
    assert_eq!(st.mark_of(3).map(|m| m.kind), Some(MarkKind::Exclude));

    let fallback = tmp.path().join("elsewhere");
    let saved = trialdesk::cli::review::save_unsaved_elsewhere(&st, &fallback);
    assert_eq!(saved.len(), 1);
    let (from, result) = &saved[0];
    assert_eq!(from, &session);
    let file = result.as_ref().unwrap();
    assert!(file.starts_with(&fallback));
    let journal = marks::read_journal(file.parent().unwrap()).unwrap();
    assert_eq!(journal.rows.len(), 1);
    assert_eq!(journal.rows[0].trial, Some(3));
    assert_eq!(journal.rows[0].mark, MarkKind::Exclude);
    assert!(session.join("marks.csv").is_dir(), "data folder untouched");
}

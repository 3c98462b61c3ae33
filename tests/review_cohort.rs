//! A cohort of subjects recorded on the same dates in the reviewer: `review COHORT` names the
//! command that opens each subject (exit 2, before any terminal is needed), and each subject
//! opened that way reviews and marks its own sessions although their folder names are the
//! other subject's too.

mod tui_support;

use std::path::{Path, PathBuf};
use std::process::Command;
use trialdesk::simulate::{self, SimConfig};
use tui_support::*;

/// Two simulated subjects, same start date and day count, so same session folder names.
fn cohort() -> (tempfile::TempDir, PathBuf) {
    let tmp = tempfile::tempdir().unwrap();
    let root = tmp.path().join("cohort");
    for (name, seed) in [("m-071", 11), ("m-072", 12)] {
        let mut c = SimConfig {
            seed,
            ..SimConfig::default()
        };
        c.schedule.subject = name.to_string();
        c.schedule.days = 2;
        c.schedule.trials_per_day = 20;
        c.units.count = 2;
        let sim = simulate::simulate(&c).unwrap();
        simulate::write_subject(&sim, &root.join(name), false).unwrap();
    }
    (tmp, root)
}

fn review(path: &Path) -> (i32, String) {
    let out = Command::new(env!("CARGO_BIN_EXE_trialdesk"))
        .arg("review")
        .arg(path)
        .output()
        .unwrap();
    (
        out.status.code().unwrap_or(-1),
        String::from_utf8_lossy(&out.stderr).into_owned(),
    )
}

#[test]
fn review_of_a_cohort_folder_names_how_to_open_each_subject() {
    let (_tmp, root) = cohort();
    let (code, err) = review(&root);
    assert_eq!(code, 2, "{err}");
    assert!(err.contains("cohort folder of 2 subject(s)"), "{err}");
    for name in ["m-071", "m-072"] {
        let line = format!("trialdesk review {}", root.join(name).display());
        assert!(err.contains(&line), "`{line}` missing from:\n{err}");
    }
    assert!(!err.contains("interactive terminal"), "{err}");
    // One subject of it is not refused as a cohort (here it stops at the missing terminal).
    let (code, err) = review(&root.join("m-071"));
    assert_eq!(code, 2, "{err}");
    assert!(err.contains("interactive terminal"), "{err}");
    assert!(!err.contains("cohort"), "{err}");
}

#[test]
fn each_subject_of_a_cohort_reviews_and_marks_its_own_sessions() {
    let (_tmp, root) = cohort();
    let a = root.join("m-071");
    let b = root.join("m-072");
    let la = trialdesk::data::load(&a).unwrap_or_else(|f| panic!("{:?}", f.diagnostics));
    let lb = trialdesk::data::load(&b).unwrap_or_else(|f| panic!("{:?}", f.diagnostics));
    let names = |l: &trialdesk::data::Loaded| -> Vec<String> {
        l.subject.sessions.iter().map(|s| s.name.clone()).collect()
    };
    assert_eq!(names(&la), names(&lb), "same dates, same session names");

    let mut st = state(&a);
    // Every screen of both sessions draws, headed by this subject.
    for keys in ["", "2", "3", "4", "1]", "2", "3", "4"] {
        press(&mut st, keys);
        let text = frame_text(80, 24, &st);
        assert!(text.lines().next().unwrap().contains("m-071"), "{text}");
    }
    // A mark on the second session lands in m-071's folder only.
    press(&mut st, "1x1");
    let session = &names(&la)[1];
    let rows = marks_rows(&a, session);
    assert_eq!(rows.len(), 2, "{rows:?}");
    assert!(rows[1].starts_with("1,exclude,"), "{rows:?}");
    assert_eq!(marks_csv(&b, session), "", "the other subject is untouched");
}

#[test]
fn a_subject_whose_sessions_are_grouped_by_month_is_not_a_cohort() {
    let (_tmp, root) = cohort();
    let a = root.join("m-071");
    let month = a.join("2026-03");
    std::fs::create_dir(&month).unwrap();
    for e in std::fs::read_dir(&a).unwrap().filter_map(Result::ok) {
        if e.path().join("session.toml").is_file() {
            std::fs::rename(e.path(), month.join(e.file_name())).unwrap();
        }
    }
    let (code, err) = review(&a);
    assert_eq!(code, 2, "{err}");
    assert!(err.contains("interactive terminal"), "{err}");
    assert!(!err.contains("cohort"), "{err}");
}

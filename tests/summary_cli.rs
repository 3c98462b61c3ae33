//! `trialdesk summary` end to end on the obs fixture subject (tests/fixtures/obs, built and
//! checked by numpy in make_fixture.py): day means against numpy, marks, formats, exit codes,
//! saved-fit model columns and cohorts.

use std::collections::HashMap;
use std::path::{Path, PathBuf};
use std::process::{Command, Output};

fn fixture() -> PathBuf {
    Path::new(env!("CARGO_MANIFEST_DIR")).join("tests/fixtures/obs")
}

fn subject() -> String {
    fixture().join("m-007").display().to_string()
}

fn trialdesk(args: &[&str]) -> Output {
    Command::new(env!("CARGO_BIN_EXE_trialdesk"))
        .arg("summary")
        .args(args)
        .output()
        .expect("run trialdesk")
}

fn stdout(o: &Output) -> String {
    String::from_utf8(o.stdout.clone()).unwrap()
}

fn stderr(o: &Output) -> String {
    String::from_utf8(o.stderr.clone()).unwrap()
}

/// (session, measure, cue) → (value, n) from a summary CSV.
fn read_long(text: &str) -> HashMap<(String, String, String), (String, String)> {
    let mut r = csv::Reader::from_reader(text.as_bytes());
    assert_eq!(
        r.headers().unwrap().iter().collect::<Vec<_>>(),
        ["subject", "session", "date", "day", "measure", "cue", "value", "n"]
    );
    r.records()
        .map(|rec| {
            let rec = rec.unwrap();
            (
                (rec[1].into(), rec[4].into(), rec[5].into()),
                (rec[6].into(), rec[7].into()),
            )
        })
        .collect()
}

fn copy_dir(from: &Path, to: &Path) {
    std::fs::create_dir_all(to).unwrap();
    for e in std::fs::read_dir(from).unwrap() {
        let e = e.unwrap();
        let dest = to.join(e.file_name());
        if e.file_type().unwrap().is_dir() {
            copy_dir(&e.path(), &dest);
        } else {
            std::fs::copy(e.path(), dest).unwrap();
        }
    }
}

#[test]
fn csv_day_means_match_numpy_with_exclusions_left_out() {
    let out = trialdesk(&[&subject(), "--format", "csv", "--signal", "spikes"]);
    assert_eq!(out.status.code(), Some(0), "{}", stderr(&out));
    let got = read_long(&stdout(&out));
    let mut r = csv::Reader::from_path(fixture().join("expected_days.csv")).unwrap();
    let mut checked = 0;
    for rec in r.records() {
        let rec = rec.unwrap();
        if &rec[1] != "spikes" {
            continue;
        }
        let key = (rec[0].to_string(), rec[2].to_string(), rec[3].to_string());
        let (value, n) = got.get(&key).unwrap_or_else(|| panic!("missing {key:?}"));
        if rec[4].is_empty() {
            assert!(value.is_empty(), "{key:?}: {value}");
        } else {
            let (a, b): (f64, f64) = (value.parse().unwrap(), rec[4].parse().unwrap());
            assert!(
                (a - b).abs() <= 1e-9 * (1.0 + b.abs()),
                "{key:?}: {a} vs {b}"
            );
        }
        assert_eq!(n, &rec[5], "{key:?} n");
        checked += 1;
    }
    assert_eq!(checked, 2 * 9);
    // Counts include the excluded trials.
    assert_eq!(
        got[&("2026-04-02".into(), "trials".into(), "".into())].0,
        "24"
    );
}

#[test]
fn text_states_signal_exclusions_and_missing_fit() {
    let out = trialdesk(&[&subject()]);
    assert_eq!(out.status.code(), Some(0), "{}", stderr(&out));
    let text = stdout(&out);
    assert!(
        text.starts_with("Subject m-007: 2 sessions, 48 trials\n"),
        "{text}"
    );
    assert!(text.contains("population rate (spikes/s)"), "{text}");
    assert!(
        text.contains("2 trial(s) marked exclude (artifact 1, lick contamination 1)"),
        "{text}"
    );
    assert!(text.contains("left out of every mean"), "{text}");
    assert!(text.contains("model δ: left out, no saved fit"), "{text}");
    assert!(!text.contains("Model delta"), "{text}");
    // The trials table: day 2 has 2 excluded and 1 suspect.
    let day2 = text
        .lines()
        .find(|l| l.trim_start().starts_with("2  2026-04-02"))
        .unwrap();
    let cells: Vec<&str> = day2.split_whitespace().collect();
    assert_eq!(&cells[cells.len() - 2..], ["2", "1"], "{day2}");
}

#[test]
fn markdown_tables_for_a_notebook() {
    let out = trialdesk(&[&subject(), "--format", "markdown"]);
    assert_eq!(out.status.code(), Some(0));
    let md = stdout(&out);
    assert!(md.starts_with("## Subject m-007"), "{md}");
    assert!(md.contains("| day | session | trials |"), "{md}");
    assert!(md.contains("|---:|:---|---:|"), "{md}");
}

/// Uncued trials have all-zero features (model contract), so the model δ over the reward
/// window of an uncued reward is exactly the reward size (3 µL here) on every day.
#[test]
fn model_columns_at_given_parameters() {
    let out = trialdesk(&[
        &subject(),
        "--alpha",
        "0.2",
        "--gamma",
        "0.98",
        "--format",
        "csv",
    ]);
    assert_eq!(out.status.code(), Some(0), "{}", stderr(&out));
    let got = read_long(&stdout(&out));
    for day in ["2026-04-01", "2026-04-02"] {
        let (v, _) = &got[&(day.into(), "model_delta_uncued_reward".into(), "".into())];
        assert_eq!(v, "3", "{day}");
    }
    // The cued reward is learned: its δ falls from day 1 to day 2, the cue's rises.
    let val = |d: &str, m: &str, c: &str| -> f64 {
        got[&(d.into(), m.into(), c.into())].0.parse().unwrap()
    };
    assert!(
        val("2026-04-02", "model_delta_reward", "") < val("2026-04-01", "model_delta_reward", "")
    );
    assert!(
        val("2026-04-02", "model_delta_cue", "tone-hi")
            > val("2026-04-01", "model_delta_cue", "tone-hi")
    );
    assert_eq!(val("2026-04-01", "model_delta_cue", "tone-lo"), 0.0);
}

#[test]
fn saved_fit_supplies_model_parameters_and_windows() {
    let dir = tempfile::tempdir().unwrap();
    let subj = dir.path().join("m-007");
    copy_dir(&fixture().join("m-007"), &subj);
    std::fs::write(
        subj.join("trialdesk-fit.toml"),
        "alpha = 0.2\ngamma = 0.97\nlambda = 0.0\ndt = 0.05\nrepresentation = \"csc\"\n\
         gain = 2.0\nfitted_at = \"2026-04-03T09:00:00Z\"\nn_excluded = 2\nignore_marks = false\n\
         latency_s = 0.05\ncue_window_s = [0.1, 0.3]\n\n[baselines]\ncue = 0.1\n",
    )
    .unwrap();
    let out = trialdesk(&[subj.to_str().unwrap()]);
    assert_eq!(out.status.code(), Some(0), "{}", stderr(&out));
    let text = stdout(&out);
    assert!(
        text.contains("model δ: csc alpha=0.2 gamma=0.97 lambda=0 dt=0.05 s from"),
        "{text}"
    );
    assert!(text.contains("cue window 0.1-0.3 s"), "{text}");
    assert!(text.contains("Model delta"), "{text}");
    // --no-model leaves them out and says so.
    let out = trialdesk(&[subj.to_str().unwrap(), "--no-model"]);
    assert!(stdout(&out).contains("model δ: left out (--no-model)"));
}

#[test]
fn cohort_folder_gives_per_subject_tables_and_a_day_table() {
    let dir = tempfile::tempdir().unwrap();
    copy_dir(&fixture().join("m-007"), &dir.path().join("m-007"));
    let other = dir.path().join("m-008");
    copy_dir(&fixture().join("m-007"), &other);
    for s in ["2026-04-01", "2026-04-02"] {
        let p = other.join(s).join("session.toml");
        let t = std::fs::read_to_string(&p).unwrap();
        std::fs::write(&p, t.replace("m-007", "m-008")).unwrap();
    }
    let out = trialdesk(&[dir.path().to_str().unwrap()]);
    assert_eq!(out.status.code(), Some(0), "{}", stderr(&out));
    let text = stdout(&out);
    assert!(text.contains("Subject m-007:") && text.contains("Subject m-008:"));
    assert!(text.contains("Cohort: mean over subjects"), "{text}");
    let out = trialdesk(&[dir.path().to_str().unwrap(), "--format", "csv"]);
    let csv = stdout(&out);
    assert!(csv.lines().any(|l| l.starts_with("m-008,2026-04-02,")));
    assert!(csv.lines().any(|l| l.starts_with("m-007,2026-04-01,")));
}

#[test]
fn out_file_and_exit_codes() {
    let dir = tempfile::tempdir().unwrap();
    let file = dir.path().join("days.csv");
    let out = trialdesk(&[
        &subject(),
        "--format",
        "csv",
        "--out",
        file.to_str().unwrap(),
    ]);
    assert_eq!(out.status.code(), Some(0));
    assert!(out.stdout.is_empty());
    assert!(std::fs::read_to_string(&file)
        .unwrap()
        .starts_with("subject,session,date,day,measure,cue,value,n\n"));

    // Usage errors: 2.
    let out = trialdesk(&[&subject(), "--cue-window", "0.3,0.1"]);
    assert_eq!(out.status.code(), Some(2), "{}", stderr(&out));
    assert!(stderr(&out).contains("START must be before END"));
    let out = trialdesk(&[&subject(), "--format", "xml"]);
    assert_eq!(out.status.code(), Some(2));
    let out = trialdesk(&[&subject(), "--alpha", "0.1"]);
    assert_eq!(out.status.code(), Some(2));
    // A negative baseline parses.
    let out = trialdesk(&[&subject(), "--baseline", "-0.5,0"]);
    assert_eq!(out.status.code(), Some(0), "{}", stderr(&out));

    // Invalid data or a failed job: 1, with the reason.
    let out = trialdesk(&[dir.path().join("nothing").to_str().unwrap()]);
    assert_eq!(out.status.code(), Some(1));
    assert!(stderr(&out).contains("cannot open"), "{}", stderr(&out));
    let out = trialdesk(&[&subject(), "--unit", "u9"]);
    assert_eq!(out.status.code(), Some(1));
    assert!(
        stderr(&out)
            .contains("unit \"u9\" not found in session 2026-04-01; available units: u1, u2, u3"),
        "{}",
        stderr(&out)
    );
}

#[test]
fn a_session_without_the_signal_is_blank_with_a_warning() {
    let dir = tempfile::tempdir().unwrap();
    let subj = dir.path().join("m-007");
    copy_dir(&fixture().join("m-007"), &subj);
    std::fs::remove_file(subj.join("2026-04-02/spikes.csv")).unwrap();
    let out = trialdesk(&[
        subj.to_str().unwrap(),
        "--signal",
        "spikes",
        "--format",
        "csv",
    ]);
    assert_eq!(out.status.code(), Some(0), "{}", stderr(&out));
    assert!(
        stderr(&out).contains("session 2026-04-02 has no spike data"),
        "{}",
        stderr(&out)
    );
    let got = read_long(&stdout(&out));
    let day2 = &got[&("2026-04-02".into(), "cue_response".into(), "tone-hi".into())];
    assert_eq!(day2, &(String::new(), "0".to_string()));
    // Licks are still measured that day, and day 1 is untouched.
    assert_ne!(
        got[&(
            "2026-04-02".into(),
            "anticipatory_lick_rate".into(),
            "tone-hi".into()
        )]
            .0,
        ""
    );
    assert_ne!(
        got[&("2026-04-01".into(), "cue_response".into(), "tone-hi".into())].0,
        ""
    );
}

#[test]
fn single_session_folder_has_no_model_columns() {
    let s = fixture().join("m-007/2026-04-02");
    let out = trialdesk(&[s.to_str().unwrap(), "--alpha", "0.1", "--gamma", "0.9"]);
    assert_eq!(out.status.code(), Some(0), "{}", stderr(&out));
    let text = stdout(&out);
    assert!(text.contains("1 session, 24 trials"), "{text}");
    assert!(text.contains("left out for a single session"), "{text}");
}

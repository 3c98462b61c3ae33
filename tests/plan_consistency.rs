//! One odd subject through every command and the reviewer. The core plan (`trialdesk::plan`)
//! alone chooses the signal, checks the saved fit and reads the marks, so `fit`, `summary`,
//! `plot`, `model` and the reviewer make the same choice and say it in the same words.

use std::path::{Path, PathBuf};
use std::process::{Command, Output};
use trialdesk::fit::saved::{save, Baselines, SavedFit};
use trialdesk::obs::Signal;
use trialdesk::plan::{self, SignalRequest, UNREADABLE_HINT};
use trialdesk::tui::derived::ModelSettings;
use trialdesk::tui::keymap::Keymap;
use trialdesk::tui::state::{Options, Tone};

fn run(args: &[&str]) -> Output {
    Command::new(env!("CARGO_BIN_EXE_trialdesk"))
        .args(args)
        .env("XDG_CONFIG_HOME", "/nonexistent-trialdesk-test")
        .output()
        .unwrap()
}

fn stderr(o: &Output) -> String {
    String::from_utf8_lossy(&o.stderr).into_owned()
}

/// Three days of 30 trials with spikes and photometry in every session.
fn simulated(dir: &Path) -> PathBuf {
    let subject = dir.join("m-mixed");
    let o = run(&[
        "simulate",
        subject.to_str().unwrap(),
        "--days",
        "3",
        "--trials-per-day",
        "30",
        "--photometry",
        "on",
        "--seed",
        "3",
    ]);
    assert!(o.status.success(), "{}", stderr(&o));
    subject
}

fn sessions(subject: &Path) -> Vec<PathBuf> {
    let mut v: Vec<PathBuf> = std::fs::read_dir(subject)
        .unwrap()
        .map(|e| e.unwrap().path())
        .filter(|p| p.join("session.toml").is_file())
        .collect();
    v.sort();
    v
}

fn options() -> Options {
    Options {
        ascii: false,
        color: false,
        reviewer: "test".into(),
        reasons: vec!["artifact".into()],
    }
}

fn reviewer_state(subject: &Path) -> trialdesk::tui::state::State {
    let loaded = trialdesk::data::load(subject).unwrap();
    let settings = ModelSettings::from_subject(&loaded.subject.root).unwrap();
    trialdesk::tui::app::build_state(
        loaded.subject,
        options(),
        Keymap::build(&[]).unwrap(),
        &settings,
    )
}

/// First session without spikes.csv, the later two without photometry.csv: before the plan,
/// `summary` measured spikes while `fit` and the reviewer chose photometry from the first
/// session. Now every one of them chooses spikes (2 of 3 sessions) and names the session
/// that lacks it.
#[test]
fn mixed_signals_give_one_choice_and_one_message() {
    let tmp = tempfile::tempdir().unwrap();
    let subject = simulated(tmp.path());
    let days = sessions(&subject);
    std::fs::remove_file(days[0].join("spikes.csv")).unwrap();
    for d in &days[1..] {
        std::fs::remove_file(d.join("photometry.csv")).unwrap();
    }
    let first = days[0].file_name().unwrap().to_str().unwrap();
    let note = format!("1 session(s) have no spikes.csv with units: {first}");
    let s = subject.to_str().unwrap();

    let loaded = trialdesk::data::load(&subject).unwrap();
    let choice = plan::choose_signal(&loaded.subject, SignalRequest::Auto, None, None).unwrap();
    assert_eq!(choice.signal, Signal::Spikes { unit: None });
    assert_eq!(choice.missing_note().as_deref(), Some(note.as_str()));

    let summary = run(&["summary", s]);
    assert!(summary.status.success(), "{}", stderr(&summary));
    assert!(stderr(&summary).contains(&note), "{}", stderr(&summary));
    let table = String::from_utf8_lossy(&summary.stdout);
    assert!(
        table.contains("activity: population rate (spikes/s)"),
        "{table}"
    );

    let out = tmp.path().join("plots");
    let plot = run(&["plot", s, "--out", out.to_str().unwrap()]);
    assert!(plot.status.success(), "{}", stderr(&plot));
    assert!(stderr(&plot).contains(&note), "{}", stderr(&plot));

    let fit = run(&[
        "fit",
        s,
        "--no-save",
        "--bootstrap",
        "0",
        "--no-compare",
        "--no-sensitivity",
    ]);
    assert_eq!(fit.status.code(), Some(1), "{}", stderr(&fit));
    assert!(stderr(&fit).contains(&note), "{}", stderr(&fit));
    assert!(
        stderr(&fit).contains("population rate (spikes/s) chosen"),
        "{}",
        stderr(&fit)
    );

    let st = reviewer_state(&subject);
    assert_eq!(st.model.measurement.choice, choice);
    assert!(st.status.text.contains(&note), "{}", st.status.text);
    assert_eq!(st.status.tone, Tone::Warn);

    // An explicit choice is honoured everywhere; the fit then refuses the sessions without it.
    let photometry = run(&["summary", s, "--signal", "photometry"]);
    assert!(photometry.status.success(), "{}", stderr(&photometry));
    assert!(stderr(&photometry).contains("2 session(s) have no photometry.csv"));
}

fn saved_with_dt_zero() -> SavedFit {
    SavedFit {
        alpha: 0.1,
        gamma: 0.98,
        lambda: 0.5,
        dt: 0.0,
        representation: "csc".into(),
        gain: 2.0,
        baselines: Baselines {
            cue: Some(0.0),
            reward: Some(0.0),
        },
        fitted_at: "2026-03-10T12:00:00Z".into(),
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

/// A saved fit with `dt = 0`: before, `summary` silently used 0.05 s, the reviewer showed
/// blank predictions and `plot` exited 0. Now each refuses it, naming the file and the field.
#[test]
fn a_bad_saved_fit_is_the_same_error_everywhere() {
    let tmp = tempfile::tempdir().unwrap();
    let subject = simulated(tmp.path());
    save(&subject, &saved_with_dt_zero()).unwrap();
    let expected = "trialdesk-fit.toml: field `dt`: 0 is out of range";
    let s = subject.to_str().unwrap();
    let out = tmp.path().join("plots");
    for args in [
        vec!["summary", s],
        vec!["plot", s, "--out", out.to_str().unwrap()],
        vec!["model", s, "--out", "-"],
    ] {
        let o = run(&args);
        assert_eq!(o.status.code(), Some(1), "{args:?}: {}", stderr(&o));
        assert!(stderr(&o).contains(expected), "{args:?}: {}", stderr(&o));
        assert!(stderr(&o).contains("rerun `trialdesk fit`"), "{args:?}");
    }
    let err = ModelSettings::from_subject(&subject)
        .unwrap_err()
        .to_string();
    assert!(err.contains(expected), "{err}");
    // Asked to leave the model out, `summary` and `plot` do not read the saved fit at all.
    let o = run(&["summary", s, "--no-model"]);
    assert!(o.status.success(), "{}", stderr(&o));
}

/// An unreadable marks.csv: one policy. `fit`, `summary` and `plot` stop, naming the file and
/// the line, with the same hint; with `--ignore-marks` each goes on and says so. The reviewer
/// shows the same reader's message for that session.
#[test]
fn an_unreadable_journal_follows_one_policy() {
    let tmp = tempfile::tempdir().unwrap();
    let subject = simulated(tmp.path());
    let days = sessions(&subject);
    std::fs::write(days[0].join("marks.csv"), "nonsense,header\n1,2\n").unwrap();
    let line = format!(
        "{}:1: trial: missing from the header",
        days[0].join("marks.csv").display()
    );
    let s = subject.to_str().unwrap();
    let out = tmp.path().join("plots");
    let fit_args = [
        "fit",
        s,
        "--no-save",
        "--bootstrap",
        "0",
        "--no-compare",
        "--no-sensitivity",
    ];
    let commands: Vec<Vec<&str>> = vec![
        fit_args.to_vec(),
        vec!["summary", s],
        vec!["plot", s, "--out", out.to_str().unwrap()],
    ];
    for args in &commands {
        let o = run(args);
        assert_eq!(o.status.code(), Some(1), "{args:?}: {}", stderr(&o));
        assert!(stderr(&o).contains(&line), "{args:?}: {}", stderr(&o));
        assert!(
            stderr(&o).contains(UNREADABLE_HINT),
            "{args:?}: {}",
            stderr(&o)
        );
    }
    for args in &commands {
        let mut args = args.clone();
        args.push("--ignore-marks");
        let o = run(&args);
        assert!(o.status.success(), "{args:?}: {}", stderr(&o));
        assert!(stderr(&o).contains(&line), "{args:?}: {}", stderr(&o));
        assert!(
            stderr(&o).contains("marks are ignored, as asked"),
            "{args:?}: {}",
            stderr(&o)
        );
    }
    let st = reviewer_state(&subject);
    let problem = st.sessions[0].marks.problem.clone().unwrap_or_default();
    assert!(problem.contains(&line), "{problem}");
}

//! `trialdesk fit` end to end: a small subject written by `trialdesk simulate`, marks written
//! in the sidecar format of the design brief, then the real binary.

use std::path::{Path, PathBuf};
use std::process::{Command, Output};
use trialdesk::fit::saved::load_saved;

fn bin() -> Command {
    Command::new(env!("CARGO_BIN_EXE_trialdesk"))
}

fn simulate(dir: &Path) -> PathBuf {
    let subject = dir.join("m-test");
    let out = bin()
        .args(["simulate", subject.to_str().unwrap()])
        .args(["--days", "3", "--trials-per-day", "40", "--seed", "3"])
        .args(["--lambda", "0", "--alpha", "0.1"])
        .args(["--cue", "tone-hi:1:1.5", "--cue", "tone-mid:0.5:1.5"])
        .output()
        .unwrap();
    assert!(
        out.status.success(),
        "{}",
        String::from_utf8_lossy(&out.stderr)
    );
    subject
}

fn sessions(subject: &Path) -> Vec<PathBuf> {
    let mut v: Vec<PathBuf> = std::fs::read_dir(subject)
        .unwrap()
        .map(|e| e.unwrap().path())
        .filter(|p| p.join("session.toml").exists())
        .collect();
    v.sort();
    v
}

fn fit(subject: &Path, extra: &[&str]) -> Output {
    bin().arg("fit").arg(subject).args(extra).output().unwrap()
}

fn text(b: &[u8]) -> String {
    String::from_utf8_lossy(b).into_owned()
}

/// Trials 3 and 4 excluded (two reasons), trial 5 excluded then cleared, trial 6 suspect.
const MARKS: &str = "trial,mark,reason,note,reviewer,at\n\
3,exclude,reward valve failed,no drop seen,ana,2026-03-02T10:00:00Z\n\
4,exclude,lick contamination,,ana,2026-03-02T10:00:05Z\n\
5,exclude,artifact,,ana,2026-03-02T10:00:09Z\n\
5,clear,,,ana,2026-03-02T10:01:00Z\n\
6,suspect,odd baseline,,ana,2026-03-02T10:01:30Z\n\
,note,,patch cord replaced after trial 30,ana,2026-03-02T10:02:00Z\n";

fn read_csv(path: &Path) -> (Vec<String>, Vec<Vec<String>>) {
    let mut r = csv::Reader::from_path(path).unwrap();
    let header = r.headers().unwrap().iter().map(String::from).collect();
    let rows = r
        .records()
        .map(|x| x.unwrap().iter().map(String::from).collect())
        .collect();
    (header, rows)
}

#[test]
fn fit_writes_tables_report_and_saved_fit() {
    let tmp = tempfile::tempdir().unwrap();
    let subject = simulate(tmp.path());
    let first = &sessions(&subject)[0];
    std::fs::write(first.join("marks.csv"), MARKS).unwrap();
    let out_dir = tmp.path().join("out");
    let out = fit(
        &subject,
        &["--bootstrap", "4", "--out", out_dir.to_str().unwrap()],
    );
    let stdout = text(&out.stdout);
    assert!(out.status.success(), "{}\n{}", stdout, text(&out.stderr));

    // params.csv: the brief's header and rows.
    let (header, rows) = read_csv(&out_dir.join("params.csv"));
    assert_eq!(header, ["parameter", "estimate", "lower", "upper"]);
    let names: Vec<&str> = rows.iter().map(|r| r[0].as_str()).collect();
    assert_eq!(
        names,
        [
            "alpha",
            "gamma",
            "tau_s",
            "lambda",
            "gain",
            "baseline_cue",
            "baseline_reward"
        ]
    );
    for r in &rows {
        let est: f64 = r[1].parse().unwrap();
        assert!(est.is_finite(), "{r:?}");
        // Every row has an interval: where γ's profile is flat its bootstrap interval is
        // withheld and the profile-likelihood one (an open end at γ's range end: 1, τ inf)
        // stands in, and the report says so.
        let (lo, hi): (f64, f64) = (r[2].parse().unwrap(), r[3].parse().unwrap());
        assert!(lo <= hi, "{r:?}");
        if (r[0] == "gamma" || r[0] == "tau_s") && stdout.contains("interval withheld") {
            assert!(stdout.contains("profile-likelihood"), "{stdout}");
        }
    }

    // trials.csv: one row per window, the excluded trials flagged.
    let (header, rows) = read_csv(&out_dir.join("trials.csv"));
    assert_eq!(
        header,
        [
            "session",
            "trial",
            "window",
            "observed",
            "predicted",
            "excluded"
        ]
    );
    let first_name = first.file_name().unwrap().to_str().unwrap();
    for r in &rows {
        let marked = r[0] == first_name && (r[1] == "3" || r[1] == "4");
        assert_eq!(r[5] == "true", marked, "{r:?}");
        assert!(r[2] == "cue" || r[2] == "reward");
        let _: f64 = r[3].parse().unwrap();
        let _: f64 = r[4].parse().unwrap();
    }
    assert!(rows.iter().filter(|r| r[5] == "true").count() >= 2);

    // The report: counts and reasons, the cautions.
    assert!(stdout.contains("Excluded trials: 2"), "{stdout}");
    assert!(stdout.contains("reward valve failed") && stdout.contains("lick contamination"));
    assert!(
        !stdout.contains("artifact"),
        "a cleared mark is not an exclusion"
    );
    assert!(stdout.contains("--ignore-marks"));
    assert!(stdout.contains("nice -n 19 trialdesk fit"));
    assert!(stdout.contains("rescorla-wagner") && stdout.contains("microstimulus"));
    assert!(!stdout.contains("NaN"));

    let saved = load_saved(&subject).expect("saved").expect("readable");
    assert_eq!(saved.n_excluded, 2);
    assert!(!saved.ignore_marks);
    assert_eq!(saved.representation, "csc");
    assert!(saved.alpha > 0.0 && saved.alpha <= 1.0 && saved.gamma < 1.0);
    let p_alpha: f64 = read_csv(&out_dir.join("params.csv")).1[0][1]
        .parse()
        .unwrap();
    assert_eq!(saved.alpha, p_alpha);
}

#[test]
fn ignore_marks_fits_everything_and_says_so() {
    let tmp = tempfile::tempdir().unwrap();
    let subject = simulate(tmp.path());
    std::fs::write(sessions(&subject)[0].join("marks.csv"), MARKS).unwrap();
    let a_dir = tmp.path().join("a");
    let b_dir = tmp.path().join("b");
    let quick = ["--bootstrap", "0", "--no-compare"];
    let a = fit(
        &subject,
        &[&quick[..], &["--out", a_dir.to_str().unwrap()]].concat(),
    );
    assert!(a.status.success(), "{}", text(&a.stderr));
    let b = fit(
        &subject,
        &[
            &quick[..],
            &["--ignore-marks", "--out", b_dir.to_str().unwrap()],
        ]
        .concat(),
    );
    assert!(b.status.success(), "{}", text(&b.stderr));
    let stdout = text(&b.stdout);
    assert!(stdout.contains("--ignore-marks: 2 trial(s) marked exclude were fitted anyway"));
    let (_, rows) = read_csv(&b_dir.join("trials.csv"));
    assert!(rows.iter().all(|r| r[5] == "false"));
    let (_, pa) = read_csv(&a_dir.join("params.csv"));
    let (_, pb) = read_csv(&b_dir.join("params.csv"));
    assert_ne!(pa, pb, "fits with and without the marks differ");
    let saved = load_saved(&subject).unwrap().unwrap();
    assert!(saved.ignore_marks);
    assert_eq!(saved.n_excluded, 0);
}

#[test]
fn bad_or_insufficient_data_is_a_clear_exit_1() {
    let tmp = tempfile::tempdir().unwrap();
    let subject = simulate(tmp.path());

    // Every trial excluded.
    let mut all = String::from("trial,mark,reason,note,reviewer,at\n");
    for t in 1..=40 {
        all.push_str(&format!("{t},exclude,artifact,,ana,2026-03-02T10:00:00Z\n"));
    }
    for s in sessions(&subject) {
        std::fs::write(s.join("marks.csv"), &all).unwrap();
    }
    let out = fit(&subject, &["--bootstrap", "0", "--no-save"]);
    assert_eq!(out.status.code(), Some(1));
    let err = text(&out.stderr);
    assert!(
        err.contains("excluded") && err.contains("--ignore-marks"),
        "{err}"
    );
    assert!(out.stdout.is_empty());
    for s in sessions(&subject) {
        std::fs::remove_file(s.join("marks.csv")).unwrap();
    }

    // A silent unit: every response is 0, nothing to explain.
    for s in sessions(&subject) {
        std::fs::write(s.join("spikes.csv"), "unit,time_s\nu1,0.001\n").unwrap();
    }
    let out = fit(&subject, &["--bootstrap", "0", "--no-save"]);
    assert_eq!(out.status.code(), Some(1));
    assert!(
        text(&out.stderr).contains("zero variance"),
        "{}",
        text(&out.stderr)
    );

    // No spikes at all.
    for s in sessions(&subject) {
        std::fs::remove_file(s.join("spikes.csv")).unwrap();
    }
    let out = fit(
        &subject,
        &["--bootstrap", "0", "--no-save", "--signal", "spikes"],
    );
    assert_eq!(out.status.code(), Some(1));
    assert!(text(&out.stderr).contains("spike"), "{}", text(&out.stderr));
    assert!(
        load_saved(&subject).is_none(),
        "nothing saved by failed fits"
    );
}

#[test]
fn usage_errors_exit_2_and_help_shows_defaults() {
    let tmp = tempfile::tempdir().unwrap();
    let subject = simulate(tmp.path());
    for args in [
        &["--cue-window", "0.3,0.1"][..],
        &["--representation", "wavelet"],
        &["--bootstrap-by", "mice"],
        &["--lambda", "2"],
    ] {
        let out = fit(&subject, args);
        assert_eq!(
            out.status.code(),
            Some(2),
            "{args:?}: {}",
            text(&out.stderr)
        );
    }
    let help = text(&bin().args(["fit", "--help"]).output().unwrap().stdout);
    for want in [
        "0.05,0.35",
        "[default: 50]",
        "[default: csc]",
        "[default: 0.05]",
        "nice -n 19",
    ] {
        assert!(help.contains(want), "help lacks {want}: {help}");
    }
}

/// Recovery through the whole pipeline (Wilson & Collins 2019): spikes from `trialdesk
/// simulate` (8 days × 120 trials, α = 0.02, γ = 0.98, λ = 0.9, CSC), observations measured
/// from the spikes, fit with λ free. Seen here: α 0.0192, λ 0.896, γ 0.9956. We hold α within
/// 25 % and λ within 0.1; γ is not checked: with spikes and one fixed delay its profile is
/// nearly flat (the fit says so), which is the honest finding, not a failure.
#[test]
fn spike_simulation_recovers_alpha_and_lambda() {
    let tmp = tempfile::tempdir().unwrap();
    let subject = tmp.path().join("m-sim");
    let out = bin()
        .args(["simulate", subject.to_str().unwrap(), "--seed", "41"])
        .output()
        .unwrap();
    assert!(out.status.success(), "{}", text(&out.stderr));
    let dir = tmp.path().join("fit");
    let out = fit(
        &subject,
        &[
            "--fit-lambda",
            "--bootstrap",
            "0",
            "--no-compare",
            "--no-save",
            "--out",
            dir.to_str().unwrap(),
        ],
    );
    assert!(out.status.success(), "{}", text(&out.stderr));
    let (_, rows) = read_csv(&dir.join("params.csv"));
    let get = |n: &str| -> f64 { rows.iter().find(|r| r[0] == n).unwrap()[1].parse().unwrap() };
    let (alpha, lambda) = (get("alpha"), get("lambda"));
    assert!((alpha / 0.02 - 1.0).abs() < 0.25, "alpha {alpha}");
    assert!((lambda - 0.9).abs() < 0.1, "lambda {lambda}");
}

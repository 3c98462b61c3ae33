//! The sensitivity line of `trialdesk fit`: a simulated subject with injected valve failures
//! (seed 5, 3 days × 60 trials, 20 % of rewards lost), its pending suggested marks, and the
//! real binary. The line must appear, come from a real refit, and write nothing.

use std::path::{Path, PathBuf};
use std::process::{Command, Output};

fn bin() -> Command {
    Command::new(env!("CARGO_BIN_EXE_trialdesk"))
}

fn simulate(dir: &Path) -> PathBuf {
    let subject = dir.join("m-valve");
    let out = bin()
        .args(["simulate", subject.to_str().unwrap()])
        .args(["--seed", "5", "--days", "3", "--trials-per-day", "60"])
        .args(["--fault", "valve-failure:0.2"])
        .output()
        .unwrap();
    assert!(
        out.status.success(),
        "{}",
        String::from_utf8_lossy(&out.stderr)
    );
    subject
}

/// `fit` with the user's rule file pointed at an empty folder (shipped default rules).
fn fit(subject: &Path, config: &Path, extra: &[&str]) -> Output {
    bin()
        .env("XDG_CONFIG_HOME", config)
        .arg("fit")
        .arg(subject)
        .args(["--bootstrap", "0", "--no-compare", "--no-save"])
        .args(extra)
        .output()
        .unwrap()
}

fn stdout(o: &Output) -> String {
    assert!(
        o.status.success(),
        "fit failed: {}",
        String::from_utf8_lossy(&o.stderr)
    );
    String::from_utf8_lossy(&o.stdout).into_owned()
}

/// The number after `name` in a line such as `alpha  0.0181  -  -`.
fn param(report: &str, name: &str) -> f64 {
    let line = report
        .lines()
        .find(|l| l.split_whitespace().next() == Some(name))
        .unwrap_or_else(|| panic!("no {name} row in:\n{report}"));
    line.split_whitespace().nth(1).unwrap().parse().unwrap()
}

/// (before, after) of `symbol a→b` in the sensitivity line.
fn moved(line: &str, symbol: &str) -> (f64, f64) {
    let at = line
        .find(&format!("{symbol} "))
        .unwrap_or_else(|| panic!("no {symbol} in {line}"));
    let rest = &line[at + symbol.len() + 1..];
    let pair = rest.split([',', ' ']).next().unwrap();
    let (a, b) = pair.split_once('→').unwrap();
    (a.parse().unwrap(), b.parse().unwrap())
}

fn marks_files(subject: &Path) -> Vec<PathBuf> {
    std::fs::read_dir(subject)
        .unwrap()
        .map(|e| e.unwrap().path().join("marks.csv"))
        .filter(|p| p.exists())
        .collect()
}

#[test]
fn sensitivity_line_is_a_real_refit_and_writes_nothing() {
    let dir = tempfile::tempdir().unwrap();
    let config = tempfile::tempdir().unwrap();
    let subject = simulate(dir.path());
    assert!(marks_files(&subject).is_empty());

    let report = stdout(&fit(&subject, config.path(), &[]));
    let line = report
        .lines()
        .find(|l| l.starts_with("Sensitivity: if the "))
        .unwrap_or_else(|| panic!("no sensitivity line in:\n{report}"));
    assert!(line.contains("no_consumption: "), "{line}");
    assert!(marks_files(&subject).is_empty(), "the fit wrote marks.csv");

    // The "before" numbers are the main fit's, the "after" ones differ: a refit happened.
    let (a0, a1) = moved(line, "α");
    let (g0, g1) = moved(line, "γ");
    let (k0, k1) = moved(line, "gain");
    assert_eq!(a0, param(&report, "alpha"));
    assert_eq!(g0, param(&report, "gamma"));
    assert_eq!(k0, param(&report, "gain"));
    assert!(
        a0 != a1 || g0 != g1 || k0 != k1,
        "the refit reproduced the main fit exactly: {line}"
    );

    // Accepting every suggestion for real (ordinary exclude rows) must give the refit's
    // numbers as the main fit, and leave nothing pending.
    let loaded = trialdesk::data::load(&subject).unwrap();
    let rules = trialdesk::suggest::RuleSet::default();
    for s in &loaded.subject.sessions {
        let pending = trialdesk::suggest::pending_for_session(s, &rules).unwrap();
        let mut text = String::from("trial,mark,reason,note,reviewer,at\n");
        for p in &pending {
            text.push_str(&format!(
                "{},exclude,{},,test,2026-03-02T10:00:00Z\n",
                p.trial, p.rule
            ));
        }
        std::fs::write(s.dir.join("marks.csv"), text).unwrap();
    }
    let accepted = stdout(&fit(&subject, config.path(), &[]));
    let close = |x: f64, y: f64| (x - y).abs() <= 2e-3 * x.abs().max(y.abs());
    assert!(close(param(&accepted, "alpha"), a1), "{accepted}\n{line}");
    assert!(close(param(&accepted, "gamma"), g1), "{accepted}\n{line}");
    assert!(close(param(&accepted, "gain"), k1), "{accepted}\n{line}");
    assert!(
        accepted.contains("Sensitivity to suggested marks: none pending"),
        "{accepted}"
    );

    let skipped = stdout(&fit(&subject, config.path(), &["--no-sensitivity"]));
    assert!(!skipped.contains("Sensitivity"), "{skipped}");
}

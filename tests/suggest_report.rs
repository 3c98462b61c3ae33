//! `check` and `summary` report the pending suggested marks per session and rule, and the
//! figures are the suggestion library's own (`suggest::pending_for_session` +
//! `counts_by_rule`), on simulated subjects with injected faults and on a clean one.
//!
//! Every run sets XDG_CONFIG_HOME to a folder of the test's own, so a `suggest.toml` on the
//! machine cannot change the counts.

use std::collections::BTreeMap;
use std::path::{Path, PathBuf};
use std::process::{Command, Output};
use trialdesk::suggest::{counts_by_rule, pending_for_session, RuleSet, CATALOG};

/// session folder name → (rule id → pending count), zeros left out.
type Counts = BTreeMap<String, BTreeMap<String, usize>>;

struct Fixture {
    _tmp: tempfile::TempDir,
    subject: PathBuf,
    config_home: PathBuf,
}

fn trialdesk(config_home: &Path, args: &[&str]) -> Output {
    Command::new(env!("CARGO_BIN_EXE_trialdesk"))
        .args(args)
        .env("XDG_CONFIG_HOME", config_home)
        .output()
        .expect("run trialdesk")
}

fn stdout(out: &Output) -> String {
    String::from_utf8_lossy(&out.stdout).into_owned()
}

fn stderr(out: &Output) -> String {
    String::from_utf8_lossy(&out.stderr).into_owned()
}

/// Two days of 40 trials, random seed 5, with `faults` (`KIND:RATE`) injected.
fn simulated(faults: &[&str]) -> Fixture {
    let tmp = tempfile::tempdir().unwrap();
    let subject = tmp.path().join("m-041");
    let config_home = tmp.path().join("config");
    std::fs::create_dir_all(&config_home).unwrap();
    let mut args = vec![
        "simulate",
        subject.to_str().unwrap(),
        "--seed",
        "5",
        "--days",
        "2",
        "--trials-per-day",
        "40",
    ];
    for f in faults {
        args.extend(["--fault", f]);
    }
    let out = trialdesk(&config_home, &args);
    assert_eq!(out.status.code(), Some(0), "{}", stderr(&out));
    Fixture {
        _tmp: tmp,
        subject,
        config_home,
    }
}

fn with_faults() -> Fixture {
    simulated(&["valve-failure:0.2", "baseline-licks:0.1"])
}

/// What the library says, under `rules`.
fn library_counts(subject: &Path, rules: &RuleSet) -> Counts {
    let loaded = trialdesk::data::load(subject).unwrap();
    loaded
        .subject
        .sessions
        .iter()
        .map(|s| {
            let pending = pending_for_session(s, rules).unwrap();
            (
                s.name.clone(),
                counts_by_rule(&pending).into_iter().collect(),
            )
        })
        .collect()
}

/// The `suggested marks` section of `check`'s output.
fn check_counts(text: &str, subject: &Path) -> Counts {
    let mut counts = Counts::new();
    let mut current: Option<String> = None;
    let prefix = format!("  {}/", subject.display());
    for line in text.lines() {
        if let Some(rest) = line.strip_prefix(&prefix) {
            let (name, _) = rest.split_once(':').unwrap();
            counts.insert(name.to_string(), BTreeMap::new());
            current = Some(name.to_string());
        } else if let (Some(rule_line), Some(name)) = (line.strip_prefix("    "), &current) {
            let cells: Vec<&str> = rule_line.split_whitespace().collect();
            let n: usize = cells[1].parse().unwrap();
            counts
                .get_mut(name)
                .unwrap()
                .insert(cells[0].to_string(), n);
        } else {
            current = None;
        }
    }
    counts
}

/// `suggested:<rule>` rows of the summary CSV, zeros kept.
fn csv_counts(text: &str) -> Counts {
    let mut r = csv::Reader::from_reader(text.as_bytes());
    let mut counts = Counts::new();
    for rec in r.records() {
        let rec = rec.unwrap();
        if let Some(rule) = rec[4].strip_prefix("suggested:") {
            assert!(rec[5].is_empty() && rec[7].is_empty(), "{rec:?}");
            counts
                .entry(rec[1].to_string())
                .or_default()
                .insert(rule.to_string(), rec[6].parse().unwrap());
        }
    }
    counts
}

fn without_zeros(c: &Counts) -> Counts {
    c.iter()
        .map(|(s, m)| {
            let m = m.iter().filter(|(_, n)| **n > 0);
            (s.clone(), m.map(|(r, n)| (r.clone(), *n)).collect())
        })
        .collect()
}

#[test]
fn check_lists_the_library_counts_and_still_exits_0() {
    let f = with_faults();
    let expected = library_counts(&f.subject, &RuleSet::default());
    // The injected faults are found on both days: the figures below are not vacuous.
    for (session, rules) in &expected {
        assert!(
            rules.get("no_consumption").is_some_and(|n| *n > 0),
            "{session}"
        );
        assert!(
            rules.get("baseline_licks").is_some_and(|n| *n > 0),
            "{session}"
        );
    }
    let out = trialdesk(&f.config_home, &["check", f.subject.to_str().unwrap()]);
    let text = stdout(&out);
    assert_eq!(out.status.code(), Some(0), "{text}{}", stderr(&out));
    assert!(text.contains("suggested marks (pending"), "{text}");
    assert_eq!(check_counts(&text, &f.subject), expected, "{text}");
    // Each rule line says what the rule is about.
    assert!(
        text.contains("no_consumption")
            && text.contains("no consumption licks after a delivered reward"),
        "{text}"
    );
    // The total line still closes the report, and suggestions are not warnings.
    let last = text.lines().last().unwrap();
    assert!(
        last.ends_with("0 errors, 0 warnings (2 of 2 sessions loaded)"),
        "{last}"
    );
}

#[test]
fn summary_csv_and_text_carry_the_library_counts() {
    let f = with_faults();
    let expected = library_counts(&f.subject, &RuleSet::default());
    let subject = f.subject.to_str().unwrap();
    let out = trialdesk(&f.config_home, &["summary", subject, "--format", "csv"]);
    assert_eq!(out.status.code(), Some(0), "{}", stderr(&out));
    let got = csv_counts(&stdout(&out));
    // One row per catalogue rule and session, zero included.
    assert_eq!(got.len(), expected.len());
    for rules in got.values() {
        assert_eq!(rules.len(), CATALOG.len());
    }
    assert_eq!(without_zeros(&got), expected);

    let out = trialdesk(&f.config_home, &["summary", subject]);
    assert_eq!(out.status.code(), Some(0), "{}", stderr(&out));
    let text = stdout(&out);
    assert!(text.contains("Suggested marks (pending"), "{text}");
    assert!(text.contains("shipped default rules"), "{text}");
    for (session, rules) in &expected {
        let total: usize = rules.values().sum();
        let by_rule: Vec<String> = CATALOG
            .iter()
            .filter_map(|r| rules.get(r.id).map(|n| format!("{} {n}", r.id)))
            .collect();
        let row = format!("{session}  {total:>9}  {}", by_rule.join(", "));
        assert!(
            text.lines().any(|l| l.ends_with(&row)),
            "no `{row}` in\n{text}"
        );
    }
    assert!(
        text.contains("  baseline_licks: licks in the pre-cue baseline window"),
        "{text}"
    );

    let out = trialdesk(
        &f.config_home,
        &["summary", subject, "--format", "markdown"],
    );
    assert_eq!(out.status.code(), Some(0), "{}", stderr(&out));
    assert!(stdout(&out).contains("| day | session | suggested | by rule |"));
}

#[test]
fn a_clean_subject_shows_none_for_the_fault_rules() {
    let f = simulated(&[]);
    let subject = f.subject.to_str().unwrap();
    let out = trialdesk(&f.config_home, &["check", subject]);
    let text = stdout(&out);
    assert_eq!(out.status.code(), Some(0), "{text}");
    let from_check = check_counts(&text, &f.subject);
    assert_eq!(from_check.len(), 2, "{text}");
    assert_eq!(from_check, library_counts(&f.subject, &RuleSet::default()));
    for rules in from_check.values() {
        assert!(!rules.contains_key("no_consumption"), "{text}");
        assert!(!rules.contains_key("baseline_licks"), "{text}");
    }
    let out = trialdesk(&f.config_home, &["summary", subject, "--format", "csv"]);
    let got = csv_counts(&stdout(&out));
    assert_eq!(got.len(), 2);
    for rules in got.values() {
        assert_eq!(rules["no_consumption"], 0);
        assert_eq!(rules["baseline_licks"], 0);
    }
}

#[test]
fn accepted_and_rejected_suggestions_are_no_longer_counted() {
    let f = with_faults();
    let rules = RuleSet::default();
    let loaded = trialdesk::data::load(&f.subject).unwrap();
    let session = &loaded.subject.sessions[0];
    let all = pending_for_session(session, &rules).unwrap();
    let valve: Vec<_> = all.iter().filter(|s| s.rule == "no_consumption").collect();
    let accepted = valve[0];
    // A rejection on another trial, so the two effects are told apart.
    let licks = all
        .iter()
        .find(|s| s.rule == "baseline_licks" && s.trial != accepted.trial)
        .unwrap();
    use trialdesk::marks::{append, MarkKind};
    use trialdesk::suggest::{accept_row, reject_row};
    append(
        &session.dir,
        &accept_row(accepted, MarkKind::Exclude, "wire"),
    )
    .unwrap();
    append(&session.dir, &reject_row(licks, "wire")).unwrap();

    let before = library_counts(&f.subject, &rules);
    let name = &session.name;
    let counted = |rule: &str| before[name].get(rule).copied().unwrap_or(0);
    let all_counts: BTreeMap<String, usize> = counts_by_rule(&all).into_iter().collect();
    // Excluding a trial settles every suggestion on it; a rejection settles only its own.
    let on_accepted = |rule: &str| {
        all.iter()
            .filter(|s| s.trial == accepted.trial && s.rule == rule)
            .count()
    };
    assert_eq!(on_accepted("no_consumption"), 1);
    assert_eq!(counted("no_consumption"), all_counts["no_consumption"] - 1);
    assert_eq!(
        counted("baseline_licks"),
        all_counts["baseline_licks"] - 1 - on_accepted("baseline_licks")
    );

    let out = trialdesk(&f.config_home, &["check", f.subject.to_str().unwrap()]);
    assert_eq!(out.status.code(), Some(0), "{}", stdout(&out));
    assert_eq!(check_counts(&stdout(&out), &f.subject), before);
    let out = trialdesk(
        &f.config_home,
        &["summary", f.subject.to_str().unwrap(), "--format", "csv"],
    );
    assert_eq!(without_zeros(&csv_counts(&stdout(&out))), before);
}

#[test]
fn the_user_rule_file_is_used_and_its_errors_name_file_and_line() {
    let f = with_faults();
    let subject = f.subject.to_str().unwrap();
    let dir = f.config_home.join("trialdesk");
    std::fs::create_dir_all(&dir).unwrap();
    let file = dir.join("suggest.toml");

    std::fs::write(&file, "[baseline_licks]\nenabled = false\n").unwrap();
    let (rules, _) = RuleSet::load_from(&dir).unwrap();
    let expected = library_counts(&f.subject, &rules);
    let out = trialdesk(&f.config_home, &["check", subject]);
    let from_check = check_counts(&stdout(&out), &f.subject);
    assert_eq!(from_check, expected);
    assert!(from_check
        .values()
        .all(|r| !r.contains_key("baseline_licks")));
    let out = trialdesk(&f.config_home, &["summary", subject]);
    assert!(stdout(&out).contains("over the shipped defaults"));

    std::fs::write(&file, "# mine\n[unit_drift]\nk = -2\n").unwrap();
    let out = trialdesk(&f.config_home, &["check", subject]);
    let text = stdout(&out);
    // Information only: the data are fine, so the exit code stays 0.
    assert_eq!(out.status.code(), Some(0), "{text}");
    let needle = format!("{}:3: warning: ", file.display());
    assert!(
        text.lines()
            .any(|l| l.starts_with(&needle) && l.contains("positive")),
        "{text}"
    );
    assert!(!text.contains("suggested marks (pending"), "{text}");
    assert!(
        text.ends_with("0 errors, 1 warning (2 of 2 sessions loaded)\n"),
        "{text}"
    );

    let out = trialdesk(&f.config_home, &["summary", subject, "--format", "csv"]);
    assert_eq!(out.status.code(), Some(0), "{}", stderr(&out));
    assert!(stderr(&out).contains(&needle), "{}", stderr(&out));
    assert!(csv_counts(&stdout(&out)).is_empty());
}

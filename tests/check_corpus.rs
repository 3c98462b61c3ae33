//! `trialdesk check` on the malformed corpus (tests/fixtures/malformed, written by its
//! make_corpus.py): each case must exit 1 and name the right file and line, never panic.
//! The valid fixtures must exit 0, warnings included.

use std::path::{Path, PathBuf};
use std::process::{Command, Output};

/// (case folder, text the report must contain: `file:line: column:` or `file: ` when the
/// problem is about the whole file).
const CASES: &[(&str, &str)] = &[
    (
        "missing_session_toml",
        "missing_session_toml/session.toml: missing",
    ),
    (
        "missing_trials_csv",
        "missing_trials_csv/trials.csv: missing",
    ),
    (
        "missing_trials_column",
        "missing_trials_column/trials.csv:1: reward_s: required column is missing",
    ),
    (
        "missing_spikes_column",
        "missing_spikes_column/spikes.csv:1: time_s: required column is missing",
    ),
    (
        "empty_trials_csv",
        "empty_trials_csv/trials.csv:1: empty file",
    ),
    (
        "header_only_trials",
        "header_only_trials/trials.csv:1: no trials",
    ),
    (
        "wrong_field_count",
        "wrong_field_count/trials.csv:3: row has 4 fields",
    ),
    (
        "non_utf8_cue",
        "non_utf8_cue/trials.csv:4: field 2: not valid UTF-8",
    ),
    ("binary_spikes", "binary_spikes/spikes.csv:3: binary data"),
    (
        "photometry_binary_header",
        "photometry_binary_header/photometry.csv:1: binary data",
    ),
    (
        "non_numeric_cue_s",
        "non_numeric_cue_s/trials.csv:3: cue_s: not a number: `twenty`",
    ),
    (
        "comma_decimal_spike",
        "comma_decimal_spike/spikes.csv:3: row has 3 fields",
    ),
    ("nan_reward_s", "nan_reward_s/trials.csv:2: reward_s: NaN"),
    (
        "infinite_cue_s",
        "infinite_cue_s/trials.csv:5: cue_s: infinite value",
    ),
    (
        "negative_cue_s",
        "negative_cue_s/trials.csv:3: cue_s: negative value -20.0",
    ),
    (
        "negative_lick",
        "negative_lick/licks.csv:3: time_s: negative value",
    ),
    (
        "nan_photometry_signal",
        "nan_photometry_signal/photometry.csv:3: signal: NaN",
    ),
    (
        "negative_reward_ul",
        "negative_reward_ul/trials.csv:2: reward_ul: negative value",
    ),
    (
        "empty_spike_unit",
        "empty_spike_unit/spikes.csv:3: unit: empty unit id",
    ),
    (
        "trial_not_integer",
        "trial_not_integer/trials.csv:3: trial: not an integer",
    ),
    (
        "duplicate_trial",
        "duplicate_trial/trials.csv:4: trial: trial 2 appears twice",
    ),
    (
        "decreasing_trial",
        "decreasing_trial/trials.csv:5: trial: trial 0 comes after trial 3",
    ),
    (
        "undeclared_cue",
        "undeclared_cue/trials.csv:3: cue: cue `tone-mid` is not declared",
    ),
    (
        "reward_before_cue",
        "reward_before_cue/trials.csv:5: reward_s: reward at 39 s comes before",
    ),
    (
        "cue_without_onset",
        "cue_without_onset/trials.csv:3: cue_s: cue `tone-lo` without an onset",
    ),
    (
        "onset_without_cue",
        "onset_without_cue/trials.csv:3: cue: cue onset given but no cue name",
    ),
    (
        "neither_cue_nor_reward",
        "neither_cue_nor_reward/trials.csv:3: trial: trial has neither",
    ),
    (
        "missing_subject",
        "missing_subject/session.toml: subject: `subject` is missing",
    ),
    (
        "missing_date",
        "missing_date/session.toml: date: `date` is missing",
    ),
    (
        "bad_date",
        "bad_date/session.toml:2: date: bad date \"2026-02-30\"",
    ),
    (
        "bad_start_time",
        "bad_start_time/session.toml:3: start_time: bad start_time",
    ),
    (
        "negative_reward_delay",
        "negative_reward_delay/session.toml:7: cue.reward_delay_s: bad",
    ),
    (
        "text_reward_delay",
        "text_reward_delay/session.toml:7: cue.reward_delay_s: bad",
    ),
    (
        "duplicate_cue_name",
        "duplicate_cue_name/session.toml:9: cue.name: cue `tone-hi` is declared twice",
    ),
    ("toml_syntax", "toml_syntax/session.toml:4: not valid TOML"),
    (
        "events_unknown_trial",
        "events_unknown_trial/events.csv:4: trial: trial 7 is not in trials.csv",
    ),
    (
        "events_undeclared_cue",
        "events_undeclared_cue/events.csv:4: name: cue `tone-mid` is not declared",
    ),
    (
        "events_unknown_kind",
        "events_unknown_kind/events.csv:4: kind: unknown kind `light`",
    ),
    (
        "events_offset_before_onset",
        "events_offset_before_onset/events.csv:4: offset_s: cue offset at 9.5 s comes before",
    ),
    (
        "events_reward_without_size",
        "events_reward_without_size/events.csv:4: size: reward event without a size",
    ),
    (
        "events_reward_size_zero",
        "events_reward_size_zero/events.csv:4: size: reward size 0 is not > 0",
    ),
    (
        "events_identical_rows",
        "events_identical_rows/events.csv:4: onset_s: the same event as line 2",
    ),
    (
        "events_far_from_trial",
        "events_far_from_trial/events.csv:4: onset_s: event at 200 s is 180.000 s from",
    ),
    (
        "events_reward_before_cue",
        "events_reward_before_cue/events.csv:4: onset_s: reward at 39 s comes before the \
         trial's first cue at 40 s",
    ),
    (
        "cue_off_before_onset",
        "cue_off_before_onset/trials.csv:2: cue_off_s: cue offset at 9 s comes before its onset",
    ),
    (
        "mixed_subjects",
        "mixed_subjects/day2/session.toml: subject: subject `m-042` differs",
    ),
];

fn fixtures() -> PathBuf {
    Path::new(env!("CARGO_MANIFEST_DIR")).join("tests/fixtures")
}

fn check(path: &Path) -> Output {
    Command::new(env!("CARGO_BIN_EXE_trialdesk"))
        .arg("check")
        .arg(path)
        .output()
        .expect("run trialdesk")
}

fn text(out: &Output) -> (String, String) {
    (
        String::from_utf8_lossy(&out.stdout).into_owned(),
        String::from_utf8_lossy(&out.stderr).into_owned(),
    )
}

fn assert_fails_with(path: &Path, needle: &str) {
    let out = check(path);
    let (stdout, stderr) = text(&out);
    assert!(
        !stderr.contains("panicked"),
        "{}: panic:\n{stderr}",
        path.display()
    );
    assert_eq!(
        out.status.code(),
        Some(1),
        "{}:\n{stdout}{stderr}",
        path.display()
    );
    assert!(
        stdout
            .lines()
            .any(|l| l.contains(needle) && !l.contains(": warning: ")),
        "{}: no error line containing\n  {needle}\nin\n{stdout}",
        path.display()
    );
    // The one-line total closes the report.
    let last = stdout.lines().last().unwrap_or("");
    assert!(
        last.contains(" error") && last.contains(" warning"),
        "{last}"
    );
}

#[test]
fn every_malformed_case_exits_1_naming_file_and_line() {
    let root = fixtures().join("malformed");
    for (case, needle) in CASES {
        assert_fails_with(&root.join(case), needle);
    }
}

#[test]
fn the_corpus_has_no_case_without_an_expectation() {
    let root = fixtures().join("malformed");
    let mut on_disk: Vec<String> = std::fs::read_dir(&root)
        .unwrap()
        .filter_map(Result::ok)
        .filter(|e| e.path().is_dir())
        .map(|e| e.file_name().to_string_lossy().into_owned())
        .collect();
    on_disk.sort();
    let mut listed: Vec<String> = CASES.iter().map(|(c, _)| c.to_string()).collect();
    listed.sort();
    assert_eq!(on_disk, listed);
    assert!(listed.len() >= 22);
}

#[test]
fn an_absurdly_long_line_is_reported_without_reading_it_whole() {
    let tmp = tempfile::tempdir().unwrap();
    let session = tmp.path().join("s");
    copy_dir(&fixtures().join("valid_session"), &session);
    let mut licks = b"time_s\n11.2\n".to_vec();
    licks.extend(std::iter::repeat_n(b'1', 3 << 20));
    licks.extend(b"\n11.7\n");
    std::fs::write(session.join("licks.csv"), licks).unwrap();
    assert_fails_with(&session, "s/licks.csv:3: line longer than");
}

#[test]
fn a_missing_folder_and_a_file_instead_of_a_folder_exit_1() {
    let tmp = tempfile::tempdir().unwrap();
    assert_fails_with(&tmp.path().join("nowhere"), "nowhere: cannot open");
    let file = tmp.path().join("trials.csv");
    std::fs::write(&file, "trial\n").unwrap();
    assert_fails_with(&file, "trials.csv: is a file, not a folder");
    let empty = tmp.path().join("empty");
    std::fs::create_dir(&empty).unwrap();
    assert_fails_with(&empty, "empty: no session found");
}

#[test]
fn valid_fixtures_exit_0() {
    let out = check(&fixtures().join("valid_session"));
    let (stdout, stderr) = text(&out);
    assert_eq!(out.status.code(), Some(0), "{stdout}{stderr}");
    assert!(
        stdout.contains("0 errors, 0 warnings (1 of 1 session loaded)"),
        "{stdout}"
    );
}

#[test]
fn warnings_alone_exit_0_and_are_marked() {
    let out = check(&fixtures().join("valid_with_warnings"));
    let (stdout, stderr) = text(&out);
    assert_eq!(out.status.code(), Some(0), "{stdout}{stderr}");
    for needle in [
        "day1/licks.csv:3: warning: time_s: lick times are not in increasing order",
        "day1/marks.csv:3: warning: torn last line `2,susp`",
        "day1/session.toml: warning: cue.name: cue `light` is declared but no trial uses it",
        "day1/spikes.csv:3: warning: time_s: 1 spike time(s) after the end of the session span",
        "day1/trials.csv:2: warning: reward_s: reward 4.000 s after the cue",
        "day1/trials.csv:4: warning: reward_ul: reward delivered but reward_ul is empty or 0",
        "day2/marks.csv: warning: marks for trial(s) not in trials.csv: 99",
    ] {
        assert!(stdout.contains(needle), "missing\n  {needle}\nin\n{stdout}");
    }
    assert!(
        stdout.contains("0 errors, 7 warnings (2 of 2 sessions loaded)"),
        "{stdout}"
    );
}

#[test]
fn usage_errors_exit_2() {
    let out = Command::new(env!("CARGO_BIN_EXE_trialdesk"))
        .args(["check"])
        .output()
        .unwrap();
    assert_eq!(out.status.code(), Some(2));
}

fn copy_dir(from: &Path, to: &Path) {
    std::fs::create_dir_all(to).unwrap();
    for e in std::fs::read_dir(from).unwrap() {
        let e = e.unwrap();
        std::fs::copy(e.path(), to.join(e.file_name())).unwrap();
    }
}

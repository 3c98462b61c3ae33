//! `check` on sessions with events.csv and on names that look like misspellings: the events
//! fixture loads cleanly, and an unread column or session.toml key that resembles a known one
//! is a warning naming file, line and the name it probably meant (errors of events.csv are in
//! the malformed corpus, tests/check_corpus.rs).

use std::path::Path;
use std::process::{Command, Output};

fn check(path: &Path) -> Output {
    Command::new(env!("CARGO_BIN_EXE_trialdesk"))
        .arg("check")
        .arg(path)
        .output()
        .unwrap()
}

#[test]
fn the_events_fixture_loads_without_errors_and_counts_event_cues_as_used() {
    let subject = Path::new(env!("CARGO_MANIFEST_DIR")).join("tests/fixtures/events/subject");
    let out = check(&subject);
    let stdout = String::from_utf8_lossy(&out.stdout);
    assert_eq!(out.status.code(), Some(0), "{stdout}");
    // light-b and noise-x appear only in events.csv: not "declared but unused".
    assert!(!stdout.contains("session.toml: warning"), "{stdout}");
    // The one late reward (3.2 s after a 1 s cue) is the only warning.
    assert!(stdout.contains("day1/trials.csv:10: warning: reward_s: reward 3.200 s"));
    assert!(
        stdout.contains("0 errors, 1 warning (2 of 2 sessions loaded)"),
        "{stdout}"
    );
}

#[test]
fn lookalike_columns_and_keys_are_warned_about() {
    let dir = tempfile::tempdir().unwrap();
    let s = dir.path();
    std::fs::write(
        s.join("session.toml"),
        "subject = \"m-041\"\ndate = \"2026-03-02\"\n[[cue]]\nname = \"tone-hi\"\n\
         reward_delay = 1.5\ncue_duration_s = 0.5\n",
    )
    .unwrap();
    std::fs::write(
        s.join("trials.csv"),
        "trial,cue,cue_s,reward_s,reward_ul,cue_offset_s,notes\n1,tone-hi,10,11.5,4,10.5,ok\n",
    )
    .unwrap();
    let out = check(s);
    let stdout = String::from_utf8_lossy(&out.stdout);
    assert_eq!(out.status.code(), Some(0), "{stdout}");
    for needle in [
        "session.toml:5: warning: reward_delay: unknown key `reward_delay` in [[cue]] is \
         ignored: did you mean `reward_delay_s`?",
        "session.toml:6: warning: cue_duration_s: unknown key `cue_duration_s` in [[cue]]",
        "trials.csv:1: warning: cue_offset_s: column `cue_offset_s` is not read: did you mean \
         `cue_off_s`?",
    ] {
        assert!(stdout.contains(needle), "missing\n  {needle}\nin\n{stdout}");
    }
    // An extra column that resembles nothing stays silent, as before.
    assert!(!stdout.contains("`notes`"), "{stdout}");
}

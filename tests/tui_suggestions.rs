//! Scenario tests of suggested marks in the reviewer: a simulated session with injected faults
//! + a key string → the pending suggestions, the frame, and the marks.csv rows on disk.
//!
//! The suggestions themselves are the core's (`suggest::suggest_session`, tested against the
//! injected faults in src/suggest/tests.rs); here they are the expected input, and what is
//! under test is what the reviewer's keys write and how the pending list follows the journal.

mod tui_support;

use std::path::{Path, PathBuf};
use trialdesk::marks::{self, MarkKind, MarkRow};
use trialdesk::suggest::{self, RuleSet, Suggestion, REJECT_PREFIX};
use trialdesk::tui::state::{Overlay, State, Tone};
use tui_support::*;

const DAY: &str = "2026-03-02";

fn session_dir(dir: &Path) -> PathBuf {
    dir.join(DAY)
}

/// What the rules find on the fixture, straight from the core.
fn expected_suggestions(dir: &Path) -> Vec<Suggestion> {
    let loaded = trialdesk::data::load(dir).unwrap();
    suggest::suggest_session(&loaded.subject.sessions[0], &RuleSet::default())
}

/// The journal's rows, without the clock.
fn journal(dir: &Path) -> Vec<(Option<i64>, MarkKind, String, String, String)> {
    marks::read_journal(&session_dir(dir))
        .map(|j| j.rows)
        .unwrap_or_default()
        .into_iter()
        .map(|r: MarkRow| (r.trial, r.mark, r.reason, r.note, r.reviewer))
        .collect()
}

fn index_of(st: &State, trial: i64) -> usize {
    st.current_session()
        .trials
        .iter()
        .position(|t| t.number == trial)
        .unwrap()
}

#[test]
fn fixture_has_suggestions_of_two_rules() {
    let (_tmp, dir) = faulty_subject();
    let all = expected_suggestions(&dir);
    let rules: std::collections::BTreeSet<_> = all.iter().map(|s| s.rule).collect();
    // Guards the scenarios below: they need at least two trials of one rule and a second rule.
    assert!(rules.len() >= 2, "{all:?}");
    assert!(all.iter().filter(|s| s.rule == all[0].rule).count() >= 2);
}

#[test]
fn suggestions_are_computed_when_the_session_opens_and_drawn() {
    let (_tmp, dir) = faulty_subject();
    let st = state(&dir);
    let all = expected_suggestions(&dir);
    assert_eq!(st.pending_suggestions(), all.as_slice());
    let first = &all[0];
    let mut st = st;
    press(&mut st, "f");
    assert_eq!(st.current_trial().unwrap().number, first.trial);
    assert!(st.status.text.contains(first.rule), "{}", st.status.text);
    let frame = frame_text(80, 24, &st);
    // The marker in the list, and the rule with its reason under the trial's header.
    assert!(frame.contains('◇'), "{frame}");
    assert!(frame.contains(&format!("◇ {}:", first.rule)), "{frame}");
    // Plain ASCII has its own glyph, distinct from the mark glyphs X and ?.
    let mut opts = options();
    opts.ascii = true;
    let mut st = state_with(
        &dir,
        opts,
        trialdesk::tui::keymap::Keymap::build(&[]).unwrap(),
    );
    press(&mut st, "f");
    let frame = frame_text(80, 24, &st);
    assert!(frame.contains(&format!("! {}:", first.rule)), "{frame}");
    assert!(!frame.contains('◇'));
}

#[test]
fn accept_writes_an_ordinary_mark_whose_reason_is_the_rule() {
    let (_tmp, dir) = faulty_subject();
    let all = expected_suggestions(&dir);
    let s = &all[0];
    let mut st = state(&dir);
    press(&mut st, "fy");
    assert_eq!(st.status.tone, Tone::Saved, "{}", st.status.text);
    assert_eq!(
        st.status.text,
        format!("saved: trial {} suspect ({})", s.trial, s.rule)
    );
    assert_eq!(
        journal(&dir),
        [(
            Some(s.trial),
            MarkKind::Suspect,
            s.rule.to_string(),
            s.reason.clone(),
            "tester".to_string()
        )]
    );
    assert!(std::fs::read_to_string(session_dir(&dir).join("marks.csv"))
        .unwrap()
        .contains(&format!("{},suspect,{},", s.trial, s.rule)));
    // Settled: no longer pending; every other suggestion still is.
    assert!(st.suggestions_of(s.trial).is_empty());
    let rest: Vec<_> = all.iter().filter(|x| x.trial != s.trial).cloned().collect();
    assert_eq!(st.pending_suggestions(), rest.as_slice());
    // Undo restores the trial's earlier state, and with it the suggestion.
    press(&mut st, "u");
    assert_eq!(st.suggestions_of(s.trial).first(), Some(s));
}

#[test]
fn rejected_suggestions_are_recorded_and_not_suggested_again() {
    let (_tmp, dir) = faulty_subject();
    let all = expected_suggestions(&dir);
    let s = &all[0];
    let mut st = state(&dir);
    press(&mut st, "fr");
    assert_eq!(st.status.tone, Tone::Saved, "{}", st.status.text);
    assert_eq!(
        journal(&dir),
        [(
            Some(s.trial),
            MarkKind::Note,
            format!("{REJECT_PREFIX}{}", s.rule),
            s.reason.clone(),
            "tester".to_string()
        )]
    );
    assert!(st.mark_of(s.trial).is_none(), "a rejection is not a mark");
    assert!(!st.pending_suggestions().contains(s));
    // Not again, in a fresh reviewer reading the journal from disk either.
    let st2 = state(&dir);
    assert!(!st2.pending_suggestions().contains(s));
    assert_eq!(st2.pending_suggestions().len(), all.len() - 1);
    // The jump skips it now.
    let mut st2 = st2;
    press(&mut st2, "f");
    assert_ne!(st2.current_trial().unwrap().number, s.trial);
}

#[test]
fn accept_all_asks_with_the_count_then_writes_each() {
    let (_tmp, dir) = faulty_subject();
    let all = expected_suggestions(&dir);
    let rule = all[0].rule;
    let of_rule: Vec<&Suggestion> = all.iter().filter(|s| s.rule == rule).collect();
    let mut st = state(&dir);
    press(&mut st, "fY");
    assert_eq!(
        st.overlay,
        Overlay::ConfirmAcceptAll {
            rule,
            count: of_rule.len()
        }
    );
    let frame = frame_text(80, 24, &st);
    assert!(
        frame.contains(&format!("{} pending {rule} suggestion(s)", of_rule.len())),
        "{frame}"
    );
    // n keeps them pending and writes nothing; other keys do nothing while asking.
    press(&mut st, "jn");
    assert_eq!(st.overlay, Overlay::None);
    assert!(journal(&dir).is_empty());
    assert_eq!(st.pending_suggestions().len(), all.len());
    press(&mut st, "Yy");
    assert_eq!(st.status.tone, Tone::Saved, "{}", st.status.text);
    assert_eq!(
        st.status.text,
        format!("saved: {} trial(s) suspect ({rule})", of_rule.len())
    );
    let expected: Vec<_> = of_rule
        .iter()
        .map(|s| {
            (
                Some(s.trial),
                MarkKind::Suspect,
                rule.to_string(),
                s.reason.clone(),
                "tester".to_string(),
            )
        })
        .collect();
    assert_eq!(journal(&dir), expected);
    assert!(st.pending_suggestions().iter().all(|s| s.rule != rule));
    for s in &of_rule {
        assert_eq!(st.mark_of(s.trial).unwrap().kind, MarkKind::Suspect);
    }
}

#[test]
fn accept_on_a_trial_without_suggestion_writes_nothing() {
    let (_tmp, dir) = faulty_subject();
    let all = expected_suggestions(&dir);
    let mut st = state(&dir);
    let clean = st
        .current_session()
        .trials
        .iter()
        .map(|t| t.number)
        .find(|n| all.iter().all(|s| s.trial != *n))
        .unwrap();
    st.trial = index_of(&st, clean);
    press(&mut st, "yrY");
    assert_eq!(st.overlay, Overlay::None);
    assert!(st.status.text.contains("no pending suggestion"));
    assert!(journal(&dir).is_empty());
}

#[test]
fn unwritable_journal_keeps_the_accept_in_memory_and_says_so() {
    let (_tmp, dir) = faulty_subject();
    let all = expected_suggestions(&dir);
    let s = &all[0];
    // A folder where the journal should be: every append fails, as on a read-only share.
    std::fs::create_dir(session_dir(&dir).join("marks.csv")).unwrap();
    let mut st = state(&dir);
    press(&mut st, "fy");
    assert_eq!(st.status.tone, Tone::Error);
    assert!(
        st.status.text.starts_with("NOT SAVED"),
        "{}",
        st.status.text
    );
    assert_eq!(st.sessions[0].marks.unsaved.len(), 1);
    assert_eq!(st.mark_of(s.trial).unwrap().reason, s.rule);
    assert!(st.suggestions_of(s.trial).is_empty());
}

#[test]
fn one_handed_layout_has_the_suggestion_keys() {
    let (_tmp, dir) = faulty_subject();
    let all = expected_suggestions(&dir);
    let keymap = trialdesk::tui::keymap::Keymap::shipped("one_handed").unwrap();
    let mut st = state_with(&dir, options(), keymap);
    press(&mut st, "Sv");
    assert_eq!(st.mark_of(all[0].trial).unwrap().reason, all[0].rule);
    press(&mut st, "SX");
    assert_eq!(journal(&dir).len(), 2);
    assert_eq!(
        journal(&dir)[1].2,
        format!("{REJECT_PREFIX}{}", all[1].rule)
    );
}

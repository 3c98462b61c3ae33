//! Scenario tests: the fixture subject + a key string → the state and the marks.csv rows
//! expected on disk (the `at` column is left out: the clock is not under test).

mod tui_support;

use trialdesk::marks::{self, MarkKind, MarkRow};
use trialdesk::tui::action::Action;
use trialdesk::tui::keymap::Keymap;
use trialdesk::tui::state::{Overlay, Screen, Tone};
use trialdesk::tui::update::update;
use tui_support::*;

const DAY1: &str = "2026-03-02";
const DAY2: &str = "2026-03-03";
const HEADER: &str = "trial,mark,reason,note,reviewer";

#[test]
fn step_and_exclude_with_a_reason() {
    let (_tmp, dir) = fixture_copy();
    let mut st = state(&dir);
    press(&mut st, "jjx3");
    assert_eq!(st.trial, 2);
    assert_eq!(st.mark_of(3).unwrap().kind, MarkKind::Exclude);
    assert_eq!(st.status.tone, Tone::Saved);
    assert_eq!(st.status.text, "saved: trial 3 excluded (valve failure)");
    assert_eq!(
        marks_rows(&dir, DAY1),
        [HEADER, "3,exclude,valve failure,,tester"]
    );
}

#[test]
fn picker_moves_and_cancels() {
    let (_tmp, dir) = fixture_copy();
    let mut st = state(&dir);
    press(&mut st, "x<down><down><up>");
    assert!(matches!(st.overlay, Overlay::Picker { selected: 1, .. }));
    press(&mut st, "<esc>");
    assert_eq!(st.overlay, Overlay::None);
    assert!(!dir.join(DAY1).join("marks.csv").exists());
    press(&mut st, "s<down><enter>");
    assert_eq!(
        marks_rows(&dir, DAY1),
        [HEADER, "1,suspect,lost unit,,tester"]
    );
}

#[test]
fn other_reason_asks_for_words() {
    let (_tmp, dir) = fixture_copy();
    let mut st = state(&dir);
    press(&mut st, "js5baseline drifts, see rig log<enter>");
    assert_eq!(
        marks_rows(&dir, DAY1),
        [
            HEADER,
            "2,suspect,other,\"baseline drifts, see rig log\",tester"
        ]
    );
}

#[test]
fn undo_appends_compensating_rows() {
    let (_tmp, dir) = fixture_copy();
    let mut st = state(&dir);
    press(&mut st, "x1s2");
    assert_eq!(st.mark_of(1).unwrap().kind, MarkKind::Suspect);
    press(&mut st, "u");
    let m = st.mark_of(1).unwrap();
    assert_eq!((m.kind, m.reason.as_str()), (MarkKind::Exclude, "artifact"));
    press(&mut st, "<ctrl-z>");
    assert!(st.mark_of(1).is_none());
    press(&mut st, "u");
    assert!(st.status.text.starts_with("nothing of yours to undo"));
    assert_eq!(
        marks_rows(&dir, DAY1),
        [
            HEADER,
            "1,exclude,artifact,,tester",
            "1,suspect,lost unit,,tester",
            "1,exclude,artifact,,tester",
            "1,clear,undo,,tester",
        ]
    );
}

#[test]
fn trial_and_session_notes() {
    let (_tmp, dir) = fixture_copy();
    let mut st = state(&dir);
    press(&mut st, "jnvalve clicked twicee<backspace><enter>");
    press(&mut st, "Npatch cord replaced after trial 8<enter>");
    press(&mut st, "n   <enter>");
    assert!(st.status.text.contains("empty note"));
    assert_eq!(
        marks_rows(&dir, DAY1),
        [
            HEADER,
            "2,note,,valve clicked twice,tester",
            ",note,,patch cord replaced after trial 8,tester",
        ]
    );
    assert_eq!(st.notes_of(Some(2)).count(), 1);
    assert_eq!(st.notes_of(None).count(), 1);
    let text = frame_text(80, 24, &st);
    assert!(
        text.contains("notes: tester: valve clicked twice"),
        "{text}"
    );
}

#[test]
fn editor_cursor_edits_in_place() {
    let (_tmp, dir) = fixture_copy();
    let mut st = state(&dir);
    press(&mut st, "nlik<left>c<home>C<end>s<esc>");
    assert!(st.status.text.contains("discarded"));
    press(&mut st, "nac<left>b<enter>");
    assert_eq!(marks_rows(&dir, DAY1)[1], "1,note,,abc,tester");
}

#[test]
fn clear_only_when_marked() {
    let (_tmp, dir) = fixture_copy();
    let mut st = state(&dir);
    press(&mut st, "c");
    assert_eq!(st.status.text, "trial 1 has no mark to clear");
    press(&mut st, "x4c");
    assert!(st.mark_of(1).is_none());
    assert_eq!(
        marks_rows(&dir, DAY1),
        [
            HEADER,
            "1,exclude,lick contamination,,tester",
            "1,clear,,,tester"
        ]
    );
}

#[test]
fn sessions_keep_their_own_marks() {
    let (_tmp, dir) = fixture_copy();
    let mut st = state(&dir);
    press(&mut st, "jx1]");
    assert_eq!((st.session, st.trial), (1, 0));
    assert!(st.mark_of(2).is_none());
    press(&mut st, "Gs1");
    assert_eq!(
        marks_rows(&dir, DAY2),
        [HEADER, "12,suspect,artifact,,tester"]
    );
    press(&mut st, "]");
    assert_eq!(st.session, 1);
    assert!(st.status.text.contains("last session"));
    press(&mut st, "[");
    assert_eq!(st.mark_of(2).unwrap().kind, MarkKind::Exclude);
    // Sessions reopen at the trial last looked at.
    assert_eq!(st.trial, 1);
    press(&mut st, "]");
    assert_eq!(st.trial, 11);
}

#[test]
fn screens_units_and_signals() {
    let (_tmp, dir) = fixture_copy();
    let mut st = state(&dir);
    press(&mut st, "2");
    assert_eq!(st.screen, Screen::Session);
    press(&mut st, "<tab><tab>");
    assert_eq!(st.screen, Screen::Fit);
    press(&mut st, "1...");
    assert_eq!(st.unit_name(), Some("u3"));
    assert!(st.view.label.contains("u3"));
    press(&mut st, ".");
    assert_eq!(st.unit, None);
    press(&mut st, ",");
    assert_eq!(st.unit_name(), Some("u3"));
    press(&mut st, "a");
    assert_eq!(st.view.label, "lick rate (licks/s)");
    // Day 1 has no photometry: the cycle skips it.
    press(&mut st, "a");
    assert!(st.view.label.contains("unit u3"));
}

#[test]
fn next_unmarked_skips_marked_trials() {
    let (_tmp, dir) = fixture_copy();
    let mut st = state(&dir);
    press(&mut st, "jx1jx1gg<space>");
    assert_eq!(st.trial, 3);
    press(&mut st, "G<space>");
    assert!(st.status.text.contains("no unmarked trial"));
}

#[test]
fn rows_from_another_reviewer_show_up() {
    let (_tmp, dir) = fixture_copy();
    let mut st = state(&dir);
    press(&mut st, "x1");
    let row = MarkRow {
        trial: Some(5),
        mark: MarkKind::Suspect,
        reason: "lost unit".into(),
        note: String::new(),
        reviewer: "ana".into(),
        at: marks::now_rfc3339(),
    };
    marks::append(&dir.join(DAY1), &row).unwrap();
    assert!(st.mark_of(5).is_none());
    update(&mut st, Action::RefreshMarks);
    assert_eq!(st.mark_of(5).unwrap().reviewer, "ana");
    assert!(st.status.text.contains("1 new row"), "{}", st.status.text);
    assert_eq!(st.mark_of(1).unwrap().kind, MarkKind::Exclude);
}

#[test]
fn failed_append_is_kept_flagged_and_retried() {
    let (_tmp, dir) = fixture_copy();
    let marks_path = dir.join(DAY1).join("marks.csv");
    // A directory where the journal should be: every append fails.
    std::fs::create_dir(&marks_path).unwrap();
    let mut st = state(&dir);
    press(&mut st, "x2");
    assert_eq!(st.status.tone, Tone::Error);
    assert!(
        st.status
            .text
            .starts_with("NOT SAVED: trial 1 excluded (lost unit)"),
        "{}",
        st.status.text
    );
    assert_eq!(st.mark_of(1).unwrap().kind, MarkKind::Exclude);
    assert_eq!(st.sessions[0].marks.unsaved.len(), 1);
    let text = frame_text(80, 24, &st);
    assert!(text.contains("1 UNSAVED"), "{text}");
    std::fs::remove_dir(&marks_path).unwrap();
    update(&mut st, Action::RefreshMarks);
    assert!(st.sessions[0].marks.unsaved.is_empty());
    assert_eq!(st.status.tone, Tone::Saved);
    assert_eq!(
        marks_rows(&dir, DAY1),
        [HEADER, "1,exclude,lost unit,,tester"]
    );
}

#[test]
fn one_handed_layout() {
    let (_tmp, dir) = fixture_copy();
    let map = Keymap::build(&[("user".into(), "layout = \"one_handed\"\n".into())]).unwrap();
    let mut st = state_with(&dir, options(), map);
    press(&mut st, "ffdx1");
    assert_eq!(
        marks_rows(&dir, DAY1),
        [HEADER, "2,exclude,artifact,,tester"]
    );
    press(&mut st, "Q");
    assert!(st.quit);
}

#[test]
fn help_lists_the_keymap_in_force() {
    let (_tmp, dir) = fixture_copy();
    let user = std::fs::read_to_string(fixture_root().join("../keymaps/good_user.toml")).unwrap();
    let map = Keymap::build(&[("good_user.toml".into(), user)]).unwrap();
    let mut st = state_with(&dir, options(), map);
    press(&mut st, "?");
    let text = frame_text(100, 30, &st);
    assert!(
        text.contains("e            exclude (pick a reason)"),
        "{text}"
    );
    assert!(text.contains("default + good_user.toml"), "{text}");
    press(&mut st, "<esc>e1");
    assert_eq!(
        marks_rows(&dir, DAY1),
        [HEADER, "1,exclude,artifact,,tester"]
    );
}

#[test]
fn control_characters_never_reach_the_screen() {
    let (_tmp, dir) = fixture_copy();
    std::fs::write(
        dir.join(DAY1).join("marks.csv"),
        "trial,mark,reason,note,reviewer,at\n1,note,,\"\x1b[2Jgone\x07\",\"ev\x1b]0;il\",2026-03-02T10:00:00Z\n",
    )
    .unwrap();
    let st = state(&dir);
    let text = frame_text(80, 24, &st);
    assert!(
        !text.chars().any(|c| c.is_control() && c != '\n'),
        "{text:?}"
    );
    assert!(text.contains("?[2Jgone?"), "{text}");
}

#[test]
fn quit_from_anywhere() {
    let (_tmp, dir) = fixture_copy();
    let mut st = state(&dir);
    press(&mut st, "nhalf a note<ctrl-c>");
    assert!(st.quit);
}

#[test]
fn days_table_follows_marks() {
    let (_tmp, dir) = fixture_copy();
    let mut st = state(&dir);
    let before = st.days[0].reward_response;
    assert_eq!((st.days[0].excluded, before.n), (0, 6));
    press(&mut st, "x1s1");
    assert_eq!((st.days[0].excluded, st.days[0].suspect), (0, 1));
    press(&mut st, "jx1");
    // The excluded rewarded trial leaves the mean; the suspect one stays.
    assert_eq!(st.days[0].excluded, 1);
    assert_eq!(st.days[0].reward_response.n, 5);
    press(&mut st, "3");
    let text = frame_text(80, 24, &st);
    let row = text
        .lines()
        .find(|l| l.starts_with(" 2026-03-02"))
        .unwrap()
        .to_string();
    assert!(row.contains("    12    1    1"), "{row}");
}

#[test]
fn session_notes_show_on_the_session_screen() {
    let (_tmp, dir) = fixture_copy();
    let mut st = state(&dir);
    press(&mut st, "Npatch cord replaced<enter>2");
    let text = frame_text(80, 24, &st);
    assert!(
        text.contains("session notes: tester: patch cord replaced"),
        "{text}"
    );
}

#[test]
fn saved_fit_parameters_are_used_and_labelled() {
    use trialdesk::fit::saved::{save, Baselines, SavedFit};
    use trialdesk::tui::derived::{ModelSettings, ParamSource};
    let (_tmp, dir) = fixture_copy();
    let fit = SavedFit {
        alpha: 0.2,
        gamma: 0.95,
        lambda: 0.5,
        dt: 0.05,
        representation: "csc".into(),
        gain: 2.0,
        baselines: Baselines {
            cue: Some(1.0),
            reward: Some(0.5),
        },
        fitted_at: "2026-03-04T10:00:00Z".into(),
        n_excluded: 1,
        ignore_marks: false,
        lambda_fitted: true,
        log_likelihood: Some(-12.5),
        n_observations: Some(40),
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
    };
    save(&dir, &fit).unwrap();
    let settings = ModelSettings::from_subject(&dir).unwrap();
    assert_eq!(settings.params.alpha, 0.2);
    assert!(matches!(settings.source, ParamSource::SavedFit { .. }));
    let loaded = trialdesk::data::load(&dir).unwrap();
    let mut st = trialdesk::tui::app::build_state(
        loaded.subject,
        options(),
        Keymap::build(&[]).unwrap(),
        &settings,
    );
    let trial = frame_text(100, 30, &st);
    assert!(
        trial.contains("model value, saved fit (trialdesk-fit.toml"),
        "{trial}"
    );
    press(&mut st, "4");
    let fit_screen = frame_text(100, 30, &st);
    assert!(fit_screen.contains("alpha 0.2  gamma 0.95"), "{fit_screen}");
    assert!(fit_screen.contains("cue pred"), "{fit_screen}");
    assert!(
        fit_screen.contains("R² ") && fit_screen.contains("response windows"),
        "{fit_screen}"
    );
    assert!(
        fit_screen.contains("log-likelihood -12.5 over 40 observations"),
        "{fit_screen}"
    );
    // Trial 1: reward prediction = 0.5 + 2·Σδ; Σδ on the first trial is the whole reward (4).
    let row = fit_screen
        .lines()
        .find(|l| l.trim_start().starts_with("▸   1") || l.contains("    1 rew"))
        .unwrap();
    assert!(row.contains("8.50"), "{row}");

    std::fs::write(dir.join("trialdesk-fit.toml"), "alpha = \"fast\"\n").unwrap();
    // A saved fit that cannot be read is refused, naming the file, as in every command.
    let err = ModelSettings::from_subject(&dir).unwrap_err().to_string();
    assert!(
        err.contains("trialdesk-fit.toml") && err.contains("rerun `trialdesk fit`"),
        "{err}"
    );
}

#[test]
fn configured_reasons_are_offered() {
    let (_tmp, dir) = fixture_copy();
    let mut opts = options();
    opts.reasons = vec!["bubble in line".into(), "other".into()];
    let mut st = state_with(&dir, opts, Keymap::build(&[]).unwrap());
    press(&mut st, "x");
    let text = frame_text(80, 24, &st);
    assert!(text.contains("1  bubble in line"), "{text}");
    // Only two reasons: 3 picks nothing, the picker stays open.
    press(&mut st, "3");
    assert!(matches!(st.overlay, Overlay::Picker { .. }));
    press(&mut st, "<down><down><enter>fiber slipped<enter>");
    assert_eq!(
        marks_rows(&dir, DAY1),
        [HEADER, "1,exclude,other,fiber slipped,tester"]
    );
}

#[test]
fn other_sessions_journals_are_watched_too() {
    let (_tmp, dir) = fixture_copy();
    let mut st = state(&dir);
    let row = MarkRow {
        trial: Some(4),
        mark: MarkKind::Exclude,
        reason: "artifact".into(),
        note: String::new(),
        reviewer: "ana".into(),
        at: marks::now_rfc3339(),
    };
    marks::append(&dir.join(DAY2), &row).unwrap();
    update(&mut st, Action::RefreshMarks);
    assert_eq!(st.session, 0);
    assert_eq!(st.days[1].excluded, 1);
}

#[test]
fn refresh_reaches_through_open_boxes() {
    let (_tmp, dir) = fixture_copy();
    let mut st = state(&dir);
    press(&mut st, "nhalf typed");
    let row = MarkRow {
        trial: Some(2),
        mark: MarkKind::Suspect,
        reason: "artifact".into(),
        note: String::new(),
        reviewer: "ana".into(),
        at: marks::now_rfc3339(),
    };
    marks::append(&dir.join(DAY1), &row).unwrap();
    update(&mut st, Action::RefreshMarks);
    assert_eq!(st.mark_of(2).unwrap().reviewer, "ana");
    // The note being typed is untouched.
    assert!(matches!(&st.overlay, Overlay::Editor { text, .. } if text == "half typed"));
}

#[test]
fn photometry_traces_are_built_once_per_session() {
    let (_tmp, dir) = fixture_copy();
    let mut st = state(&dir);
    press(&mut st, "]a");
    assert_eq!(st.signal, trialdesk::tui::state::SignalKind::Photometry);
    assert!(st.sessions[1].photometry_view.is_some());
    // A marker in the cache: seen again only if the view comes from the cache, not a rebuild.
    st.sessions[1].photometry_view.as_mut().unwrap().label = "cached".to_string();
    // A unit step changes the raster's unit and keeps photometry on screen.
    press(&mut st, ".");
    assert_eq!(st.signal, trialdesk::tui::state::SignalKind::Photometry);
    assert!(st.unit.is_some());
    // Away to licks and spikes, to the other session and back: still the cached traces.
    press(&mut st, "aa[]a");
    assert_eq!(st.signal, trialdesk::tui::state::SignalKind::Photometry);
    assert_eq!(st.view.label, "cached");
}

/// A journal locked by a stuck process: the mark is kept in memory with a NOT SAVED line that
/// names the lock (never a stale "saved:"), and it is written on the first refresh after the
/// lock is released.
#[test]
fn a_stuck_lock_is_reported_and_the_mark_kept_until_it_is_released() {
    let (_tmp, dir) = fixture_copy();
    let path = dir.join(DAY1).join("marks.csv");
    let mut st = state(&dir);
    let holder = std::fs::OpenOptions::new()
        .read(true)
        .append(true)
        .create(true)
        .open(&path)
        .unwrap();
    holder.lock().unwrap();
    press(&mut st, "x2");
    assert_eq!(st.status.tone, Tone::Error, "{}", st.status.text);
    assert!(
        st.status.text.starts_with("NOT SAVED"),
        "{}",
        st.status.text
    );
    assert!(
        st.status.text.contains("locked by another process"),
        "{}",
        st.status.text
    );
    assert_eq!(st.sessions[0].marks.unsaved.len(), 1);
    holder.unlock().unwrap();
    update(&mut st, Action::RefreshMarks);
    assert!(st.sessions[0].marks.unsaved.is_empty());
    assert_eq!(st.status.tone, Tone::Saved, "{}", st.status.text);
    assert!(std::fs::read_to_string(&path)
        .unwrap()
        .contains(",exclude,"));
}

/// `:` then a trial number goes straight to that trial (trials.csv numbering); a number the
/// session does not have says which numbers it has, and escape stays where it was.
#[test]
fn go_to_trial_by_number() {
    let (_tmp, dir) = fixture_copy();
    let mut st = state(&dir);
    press(&mut st, ":9<enter>");
    assert_eq!(st.current_trial().unwrap().number, 9);
    assert_eq!(st.overlay, Overlay::None);
    press(&mut st, ":999<enter>");
    assert_eq!(st.current_trial().unwrap().number, 9);
    assert!(
        st.status
            .text
            .starts_with("no trial 999 in this session (trials 1 to"),
        "{}",
        st.status.text
    );
    press(&mut st, ":x<enter>");
    assert!(
        st.status.text.contains("is not a trial number"),
        "{}",
        st.status.text
    );
    press(&mut st, ":3<esc>");
    assert_eq!(st.current_trial().unwrap().number, 9);
}

//! `review --follow` through the reviewer's own API: rows the rig appends reach the trial
//! list, the traces and the model, once, and a replaced file stops following.

mod tui_support;

use std::fs::OpenOptions;
use std::io::Write;
use std::path::Path;
use trialdesk::tui::derived::ModelSettings;
use trialdesk::tui::follow::{Follower, FIT_CAUTION};
use trialdesk::tui::{update, Action};

fn append(path: &Path, text: &str) {
    let mut f = OpenOptions::new().append(true).open(path).unwrap();
    f.write_all(text.as_bytes()).unwrap();
}

#[test]
fn appended_trials_show_up_in_the_trial_list() {
    let (_tmp, dir) = tui_support::fixture_copy();
    let mut st = tui_support::state(&dir);
    let last = st.subject.sessions.len() - 1;
    update::open_session(&mut st, last);
    let session_dir = st.subject.sessions[last].dir.clone();
    let before = st.subject.sessions[last].trials.len();
    let licks_before = st.subject.sessions[last].licks.as_ref().map_or(0, Vec::len);
    let mut f =
        Follower::start(last, &st.subject.sessions[last], ModelSettings::defaults()).unwrap();
    assert!(!f.poll_into(&mut st), "nothing appended yet");

    append(
        &session_dir.join("trials.csv"),
        "13,tone-hi,81.000,82.500,4\n14,light,9",
    );
    append(&session_dir.join("licks.csv"), "82.6\n82.7\n");
    assert!(f.poll_into(&mut st));
    let numbers: Vec<i64> = st.subject.sessions[last]
        .trials
        .iter()
        .map(|t| t.number)
        .collect();
    assert_eq!(numbers.len(), before + 1);
    assert_eq!(*numbers.last().unwrap(), 13, "the torn trial 14 waits");
    assert_eq!(
        st.subject.sessions[last].licks.as_ref().map_or(0, Vec::len),
        licks_before + 2
    );
    assert!(
        st.status.text.contains("following: 1 new trials"),
        "{}",
        st.status.text
    );
    assert!(st.status.text.contains(FIT_CAUTION));

    append(&session_dir.join("trials.csv"), "1.000,,\n");
    assert!(f.poll_into(&mut st));
    assert!(!f.poll_into(&mut st), "rows arrive once");
    assert_eq!(st.subject.sessions[last].trials.len(), before + 2);
    assert!(
        st.status.text.contains("following: 2 new trials"),
        "{}",
        st.status.text
    );

    // The new trials are reachable like any other: traces, model span, last-trial key.
    update::update(&mut st, Action::LastTrial);
    assert_eq!(st.current_trial().map(|t| t.number), Some(14));
    assert_eq!(st.view.traces.len(), before + 2);
    assert!(st.span_of(before).is_some(), "trial 13 has a model span");
}

#[test]
fn a_replaced_file_stops_following_with_a_message() {
    let (_tmp, dir) = tui_support::fixture_copy();
    let mut st = tui_support::state(&dir);
    let last = st.subject.sessions.len() - 1;
    let session_dir = st.subject.sessions[last].dir.clone();
    let mut f =
        Follower::start(last, &st.subject.sessions[last], ModelSettings::defaults()).unwrap();
    let trials = session_dir.join("trials.csv");
    let copy = session_dir.join("trials.new");
    std::fs::copy(&trials, &copy).unwrap();
    std::fs::rename(&copy, &trials).unwrap();
    assert!(f.poll_into(&mut st));
    assert!(
        st.status.text.contains("following stopped"),
        "{}",
        st.status.text
    );
    assert!(f.stopped.is_some());
    assert!(!f.poll_into(&mut st));
}

#[test]
fn spikes_in_the_last_trial_window_redraw_its_trace_and_later_ones_wait() {
    let (_tmp, dir) = tui_support::fixture_copy();
    let mut st = tui_support::state(&dir);
    // The first session has spikes; follow it as if it were still recording.
    let session_dir = st.subject.sessions[0].dir.clone();
    let mut f = Follower::start(0, &st.subject.sessions[0], ModelSettings::defaults()).unwrap();
    let last = st.subject.sessions[0].trials.len() - 1;
    let cue = st.subject.sessions[0].trials[last].cue_s.unwrap();
    let spikes_before = |st: &trialdesk::tui::State| {
        st.subject.sessions[0]
            .spikes
            .as_ref()
            .map_or(0, |s| s.times.iter().map(Vec::len).sum::<usize>())
    };
    let n0 = spikes_before(&st);

    // Far after the last trial's window: stored, trace unchanged until the next trial.
    let trace = st.view.traces[last].clone();
    append(
        &session_dir.join("spikes.csv"),
        &format!("u1,{}\n", cue + 500.0),
    );
    assert!(f.poll_into(&mut st));
    assert_eq!(spikes_before(&st), n0 + 1);
    assert_eq!(st.view.traces[last], trace);

    // Inside it: the trace is rebuilt with the new spikes.
    let burst: String = (0..20)
        .map(|i| format!("u1,{}\n", cue + 0.2 + i as f64 * 0.001))
        .collect();
    append(&session_dir.join("spikes.csv"), &burst);
    assert!(f.poll_into(&mut st));
    assert_eq!(spikes_before(&st), n0 + 21);
    assert_ne!(st.view.traces[last], trace);
}

/// events.csv is followed too: a compound trial whose events row comes before its trials.csv
/// row waits, then attaches when the trial arrives; a trial given only by its events (no cue
/// and no reward of its own in trials.csv) is accepted in the same poll. Both reach the model
/// as compounds. Data: the probe day of the shipped blocking demo.
#[test]
fn appended_events_attach_to_their_trials_even_when_they_come_first() {
    let tmp = tempfile::tempdir().unwrap();
    let src = Path::new(env!("CARGO_MANIFEST_DIR")).join("demo_data/m-052/2026-03-07");
    let dir = tmp.path().join("2026-03-07");
    std::fs::create_dir_all(&dir).unwrap();
    for e in std::fs::read_dir(&src).unwrap() {
        let p = e.unwrap().path();
        std::fs::copy(&p, dir.join(p.file_name().unwrap())).unwrap();
    }
    let mut st = tui_support::state(&dir);
    let mut f = Follower::start(0, &st.subject.sessions[0], ModelSettings::defaults()).unwrap();
    let label = |st: &trialdesk::tui::state::State, number: i64| {
        let s = &st.subject.sessions[0];
        let t = s.trials.iter().find(|t| t.number == number)?;
        Some(trialdesk::obs::TrialType::of(s, t)?.label(s))
    };

    append(&dir.join("events.csv"), "81,cue,light-b,1075,,\n");
    assert!(f.poll_into(&mut st));
    assert_eq!(st.subject.sessions[0].trials.len(), 80, "no trial 81 yet");

    append(
        &dir.join("trials.csv"),
        "81,tone-a,1075,1076.5,3\n82,,,,0\n",
    );
    append(&dir.join("events.csv"), "82,cue,light-d,1090,,\n");
    assert!(f.poll_into(&mut st));
    assert_eq!(
        st.subject.sessions[0].trials.len(),
        82,
        "{}",
        st.status.text
    );
    assert_eq!(label(&st, 81).as_deref(), Some("tone-a + light-b rewarded"));
    assert_eq!(label(&st, 82).as_deref(), Some("light-d omission"));
    let groups: Vec<(&str, usize)> = st
        .view
        .groups
        .iter()
        .map(|g| (g.label.as_str(), g.trials.len()))
        .collect();
    assert!(groups.contains(&("light-d omission", 7)), "{groups:?}");
    assert!(st.span_of(80).is_some() && st.span_of(81).is_some());
    assert!(!f.poll_into(&mut st), "rows arrive once");
}

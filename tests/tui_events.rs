//! The reviewer on a trial with an event list: the info line names every cue of the compound,
//! the event row draws each cue's onset and offset and each reward, and the session screen
//! groups trials by type (cues presented and outcome), so a blocking probe reads at a glance.
//! The data: the probe day of the shipped blocking demo (demo_data/m-052), with a cue offset
//! and a second drop of reward added to trial 1 in its events.csv.

mod tui_support;

use std::path::Path;
use tui_support::*;

fn probe_day(tmp: &Path) -> std::path::PathBuf {
    let src = Path::new(env!("CARGO_MANIFEST_DIR")).join("demo_data/m-052/2026-03-07");
    let dir = tmp.join("2026-03-07");
    std::fs::create_dir_all(&dir).unwrap();
    for e in std::fs::read_dir(&src).unwrap() {
        let p = e.unwrap().path();
        std::fs::copy(&p, dir.join(p.file_name().unwrap())).unwrap();
    }
    let events = dir.join("events.csv");
    let text = std::fs::read_to_string(&events).unwrap();
    // Trial 1: tone-a at 10 s (trials.csv), light-b 10–10.8 s, reward at 11.5 s, second drop
    // at 12.3 s.
    let text =
        text.replacen("1,cue,light-b,10,,", "1,cue,light-b,10,10.8,", 1) + "1,reward,,12.3,,2\n";
    std::fs::write(&events, text).unwrap();
    dir
}

/// The frame line of the event row (its gutter reads "events").
fn event_row(frame: &str) -> String {
    frame
        .lines()
        .find(|l| l.contains("│events") || l.contains("|events"))
        .unwrap_or_else(|| panic!("no events row in\n{frame}"))
        .to_string()
}

#[test]
fn a_compound_trial_shows_every_event_and_its_cues() {
    let tmp = tempfile::tempdir().unwrap();
    let dir = probe_day(tmp.path());
    let st = state(&dir);
    let frame = frame_text(120, 40, &st);
    assert!(frame.contains("trial 1 "), "{frame}");
    assert!(frame.contains("tone-a + light-b rewarded"), "{frame}");
    let row = event_row(&frame);
    let at = |g: char| -> Vec<usize> {
        row.chars()
            .enumerate()
            .filter(|(_, c)| *c == g)
            .map(|(i, _)| i)
            .collect()
    };
    // One onset column (both cues start together), the light's offset after it, then two
    // rewards, in time order.
    let (c, off, r) = (at('C'), at(']'), at('R'));
    assert_eq!((c.len(), off.len(), r.len()), (1, 1, 2), "{row}");
    assert!(c[0] < off[0] && off[0] < r[0] && r[0] < r[1], "{row}");
}

#[test]
fn the_session_screen_groups_the_probe_day_by_trial_type() {
    let tmp = tempfile::tempdir().unwrap();
    let dir = probe_day(tmp.path());
    let st = state(&dir);
    let labels: Vec<&str> = st.view.groups.iter().map(|g| g.label.as_str()).collect();
    assert_eq!(
        labels,
        [
            "tone-a + light-b rewarded",
            "light-b omission",
            "tone-c + light-d rewarded",
            "light-d omission",
        ]
    );
}

#[test]
fn the_trial_list_marks_a_compound_with_its_cues() {
    let tmp = tempfile::tempdir().unwrap();
    let dir = probe_day(tmp.path());
    let frame = frame_text(120, 40, &state(&dir));
    let first = frame.lines().nth(1).unwrap();
    assert!(first.contains("tone-a+l"), "{first}");
    // A probe (a light alone, no event list) keeps its one cue name.
    assert!(frame.lines().any(|l| l.contains("  light-d ")), "{frame}");
}

/// The days screen follows one cue; next_cue (A) moves it on to the next cue of the subject,
/// wrapping, so each light of a blocking design can be followed day by day.
#[test]
fn the_days_screen_follows_each_cue_in_turn() {
    let tmp = tempfile::tempdir().unwrap();
    let src = Path::new(env!("CARGO_MANIFEST_DIR")).join("demo_data/m-052");
    let dir = tmp.path().join("m-052");
    for day in std::fs::read_dir(&src).unwrap() {
        let day = day.unwrap().path();
        if day.is_dir() {
            let to = dir.join(day.file_name().unwrap());
            std::fs::create_dir_all(&to).unwrap();
            for f in std::fs::read_dir(&day).unwrap() {
                let f = f.unwrap().path();
                std::fs::copy(&f, to.join(f.file_name().unwrap())).unwrap();
            }
        }
    }
    let mut st = state(&dir);
    press(&mut st, "3");
    // The current session by trial type: on the probe day, each light alone beside the
    // compounds.
    press(&mut st, "]]]]]");
    let frame = frame_text(100, 30, &st);
    assert!(frame.contains("2026-03-07 by trial type"), "{frame}");
    for t in [
        "tone-a + light-b rewarded",
        "light-b omission",
        "light-d omission",
    ] {
        assert!(frame.contains(t), "{t}\n{frame}");
    }
    let caption = |st: &trialdesk::tui::state::State| {
        let frame = frame_text(100, 30, st);
        let line = frame.lines().find(|l| l.contains("| responses:"));
        line.unwrap_or_else(|| panic!("{frame}")).to_string()
    };
    assert!(caption(&st).contains("cue tone-a |"), "{}", caption(&st));
    for next in ["light-b", "tone-c", "light-d", "tone-a"] {
        press(&mut st, "A");
        let frame = frame_text(100, 30, &st);
        assert!(caption(&st).contains(&format!("cue {next} |")), "{frame}");
    }
}

/// next_same_type (t) walks the trials of the current trial's type: on the probe day, from the
/// first blocked-light probe to the next, skipping compounds and the other light's probes.
#[test]
fn next_same_type_steps_through_one_trial_type() {
    let tmp = tempfile::tempdir().unwrap();
    let dir = probe_day(tmp.path());
    let mut st = state(&dir);
    let session = st.current_session().clone();
    let probes: Vec<usize> = session
        .trials
        .iter()
        .enumerate()
        .filter(|(_, t)| session.cue_name(t) == Some("light-b") && !t.has_events())
        .map(|(i, _)| i)
        .collect();
    assert!(probes.len() >= 3, "{probes:?}");
    st.trial = probes[0];
    for &next in &probes[1..] {
        press(&mut st, "t");
        assert_eq!(st.trial, next);
    }
    press(&mut st, "t");
    assert_eq!(st.trial, probes[0], "wraps to the first");
    assert!(st.status.text.contains("wrapped"), "{}", st.status.text);
}

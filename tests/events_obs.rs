//! Observations and fitting data of trials with an event list: one cue observation per cue
//! event, one reward observation per delivered reward, omission windows at each expected time,
//! each named; excluded trials drop every one of their points. Plain trials keep their one cue
//! and one reward window.

mod model_support;

use model_support::*;
use trialdesk::data::{EventKind, Spikes, Trial, TrialEvent};
use trialdesk::fit::dataset::build;
use trialdesk::fit::WindowKind;
use trialdesk::marks::{MarkKind, MarkState, TrialMark};
use trialdesk::obs::{observe, EventWindow, ObsOptions};

fn ev(kind: EventKind, cue: Option<usize>, at: f64, size: f64) -> TrialEvent {
    TrialEvent {
        kind,
        cue,
        onset_s: at,
        offset_s: None,
        size,
    }
}

/// Trial 1: tone A with light B at 10 s, drops of 1 at 11.0 s and 2 at 11.5 s. Trial 2: the
/// same compound at 30 s, nothing delivered (omission). Trial 3: plain A+ at 50 s. One unit
/// fires twice in trial 1's first reward window and never in any baseline.
fn events_subject() -> trialdesk::data::Subject {
    let t1 = Trial {
        number: 1,
        cue: Some(0),
        cue_s: Some(10.0),
        events: vec![
            ev(EventKind::Cue, Some(1), 10.0, 0.0),
            ev(EventKind::Reward, None, 11.0, 1.0),
            ev(EventKind::Reward, None, 11.5, 2.0),
        ],
        ..Default::default()
    };
    let t2 = Trial {
        number: 2,
        events: vec![
            ev(EventKind::Cue, Some(0), 30.0, 0.0),
            ev(EventKind::Cue, Some(1), 30.0, 0.0),
        ],
        ..Default::default()
    };
    let t3 = cued(3, 0, 50.0, Some((51.0, 2.0)));
    let cues = vec![cue("tone-a", Some(1.0)), cue("light-b", Some(1.0))];
    let mut s = session("2026-06-01", "2026-06-01", cues, vec![t1, t2, t3]);
    s.spikes = Some(Spikes {
        units: vec!["u1".into()],
        times: vec![vec![11.1, 11.2]],
    });
    subject(vec![s])
}

#[test]
fn every_event_gets_its_own_named_observation() {
    let s = events_subject();
    let obs = observe(&s, &ObsOptions::default()).unwrap();
    assert_eq!(obs.len(), 3);
    let labels =
        |i: usize| -> Vec<&str> { obs[i].events.iter().map(|e| e.label.as_str()).collect() };
    assert_eq!(
        labels(0),
        ["cue:tone-a", "cue:light-b", "reward:1", "reward:2"]
    );
    assert_eq!(
        labels(1),
        [
            "cue:tone-a",
            "cue:light-b",
            "omission:tone-a",
            "omission:light-b"
        ]
    );
    assert!(obs[1].omission);
    assert_eq!(obs[1].events[2].window, EventWindow::Omission);
    assert_eq!(obs[1].events[2].time_s, 31.0);
    // Plain trial: the cue and reward pair only.
    assert!(obs[2].events.is_empty());
    assert!(obs[2].cue.is_some() && obs[2].reward.is_some());
    // Two spikes in [11.05, 11.35): 2 / 0.3 s above a silent baseline; the second drop's
    // window [11.55, 11.85) is silent.
    let r1 = obs[0].events[2].value.unwrap();
    assert!((r1 - 2.0 / 0.3).abs() < 1e-9, "{r1}");
    assert_eq!(obs[0].events[3].value, Some(0.0));
    // The per-trial summary keeps the first reward's value.
    assert_eq!(obs[0].reward, Some(r1));
}

#[test]
fn fit_points_follow_their_events_and_marks_drop_all_of_a_trial() {
    let s = events_subject();
    let opts = ObsOptions::default();
    let obs = observe(&s, &opts).unwrap();
    let mut marks = MarkState::default();
    marks.marks.insert(
        1,
        TrialMark {
            kind: MarkKind::Exclude,
            reason: "valve".into(),
            note: String::new(),
            reviewer: "tester".into(),
            at: "2026-06-01T10:00:00Z".into(),
        },
    );
    let data = build(&s, &obs, &opts, 0.05, &[marks], false);
    let of_trial = |n: i64| -> Vec<_> {
        data.points
            .iter()
            .filter(|p| data.label(p.span).1 == n)
            .collect()
    };
    let t1 = of_trial(1);
    assert_eq!(t1.len(), 4);
    assert!(t1.iter().all(|p| p.excluded));
    // The second drop's window sits at its own bin (1.5 s after t0 = bin 30), shifted back
    // by the 50 ms latency: [0.05, 0.35] − 0.05 → bins 30..36.
    let r2 = t1
        .iter()
        .find(|p| p.label.as_deref() == Some("reward:2"))
        .unwrap();
    assert_eq!(
        (r2.kind, r2.event_bin, r2.first_bin, r2.end_bin),
        (WindowKind::Reward, 30, 30, 36)
    );
    let t2 = of_trial(2);
    assert_eq!(t2.len(), 4);
    assert!(t2.iter().all(|p| !p.excluded));
    let om = t2
        .iter()
        .find(|p| p.label.as_deref() == Some("omission:tone-a"))
        .unwrap();
    assert_eq!((om.kind, om.event_bin), (WindowKind::Reward, 20));
    // The plain trial: its cue and reward pair, named like the others in this subject.
    let t3 = of_trial(3);
    let names: Vec<_> = t3.iter().map(|p| p.label.as_deref().unwrap()).collect();
    assert_eq!(names, ["cue:tone-a", "reward:1"]);
}

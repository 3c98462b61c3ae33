//! Observation windows on hand-built sessions: known spikes give known rates.

use trialdesk::data::{CueDef, Session, SessionMeta, Spikes, Subject, Trial};
use trialdesk::model::{layout_subject, run, TdParams};
use trialdesk::obs::{
    activity_trace, observe, observe_trial, window_delta_sums, ObsError, ObsOptions,
    SessionActivity, Signal, TrialKind,
};

fn trial(number: i64, cue: Option<usize>, cue_s: Option<f64>, reward_s: Option<f64>) -> Trial {
    Trial {
        number,
        cue,
        cue_s,
        reward_s,
        reward_ul: if reward_s.is_some() { 1.0 } else { 0.0 },
        ..Default::default()
    }
}

fn session(name: &str, trials: Vec<Trial>) -> Session {
    Session {
        dir: name.into(),
        name: name.into(),
        meta: SessionMeta {
            subject: "m-007".into(),
            date: "2026-03-02".into(),
            start_time: None,
            rig: Some("rig-north".into()),
            cues: vec![
                CueDef {
                    name: "tone-hi".into(),
                    reward_delay_s: Some(1.5),
                },
                CueDef {
                    name: "tone-lo".into(),
                    reward_delay_s: None,
                },
            ],
        },
        trials,
        spikes: None,
        licks: None,
        photometry: None,
    }
}

fn subject(sessions: Vec<Session>) -> Subject {
    Subject {
        root: "m-007".into(),
        sessions,
    }
}

fn close(a: Option<f64>, b: f64) -> bool {
    matches!(a, Some(x) if (x - b).abs() < 1e-9)
}

/// Trial 1: rewarded tone-hi at 10 s (reward 11.5 s). Trial 2: omission at 20 s (expected
/// 21.5 s). Trial 3: tone-lo at 30 s, never rewarded. Trial 4: uncued reward at 40 s.
fn four_kinds() -> Session {
    session(
        "d1",
        vec![
            trial(1, Some(0), Some(10.0), Some(11.5)),
            trial(2, Some(0), Some(20.0), None),
            trial(3, Some(1), Some(30.0), None),
            trial(4, None, None, Some(40.0)),
        ],
    )
}

#[test]
fn known_spikes_give_known_rates_with_baseline_subtracted() {
    let mut s = four_kinds();
    // Baseline [9, 10): 4 spikes → 4/s. Cue window [10.05, 10.35): 3 spikes → 10/s.
    // Reward window [11.55, 11.85): 6 spikes → 20/s. A spike at 10.35 is outside (half-open).
    let times = vec![
        9.1, 9.3, 9.5, 9.7, 10.06, 10.2, 10.34, 10.35, 11.56, 11.6, 11.65, 11.7, 11.75, 11.8,
    ];
    s.spikes = Some(Spikes {
        units: vec!["u1".into()],
        times: vec![times],
    });
    let obs = observe(&subject(vec![s]), &ObsOptions::default()).unwrap();
    assert_eq!(obs.len(), 4);
    let t1 = &obs[0];
    assert_eq!(t1.kind, TrialKind::Rewarded);
    assert!(close(t1.cue, 10.0 - 4.0), "{:?}", t1.cue);
    assert!(close(t1.reward, 20.0 - 4.0), "{:?}", t1.reward);
    assert!(!t1.omission);
}

#[test]
fn omission_is_measured_after_the_expected_reward_time() {
    let mut s = four_kinds();
    // Nothing in the baseline [19, 20); 3 spikes in [21.55, 21.85) → 10/s; spikes at the
    // cue window are ignored by the reward response.
    s.spikes = Some(Spikes {
        units: vec!["u1".into()],
        times: vec![vec![20.1, 21.6, 21.7, 21.8]],
    });
    let obs = observe(&subject(vec![s]), &ObsOptions::default()).unwrap();
    let t2 = &obs[1];
    assert_eq!(t2.kind, TrialKind::Omission);
    assert!(t2.omission);
    assert!(close(t2.reward, 10.0), "{:?}", t2.reward);
    assert!(close(t2.cue, 1.0 / 0.3), "{:?}", t2.cue);
    // Unrewarded cue: no expectation, no reward response. Uncued reward: no cue response,
    // baseline taken before the reward.
    assert_eq!(obs[2].kind, TrialKind::UnrewardedCue);
    assert_eq!(obs[2].reward, None);
    assert!(obs[2].cue.is_some());
    assert_eq!(obs[3].kind, TrialKind::UncuedReward);
    assert_eq!(obs[3].cue, None);
    assert!(close(obs[3].reward, 0.0));
}

#[test]
fn population_is_the_mean_rate_across_units() {
    let mut s = four_kinds();
    // Cue window of trial 1 [10.05, 10.35): u1 has 3 spikes (10/s), u2 has none, u3 has 6
    // (20/s). No baseline spikes. Population = (10 + 0 + 20)/3 = 10/s.
    s.spikes = Some(Spikes {
        units: vec!["u1".into(), "u2".into(), "u3".into()],
        times: vec![
            vec![10.1, 10.2, 10.3],
            vec![],
            vec![10.06, 10.1, 10.15, 10.2, 10.25, 10.3],
        ],
    });
    let sub = subject(vec![s]);
    let pop = observe(&sub, &ObsOptions::default()).unwrap();
    assert!(close(pop[0].cue, 10.0));
    let one = |u: &str| ObsOptions {
        signal: Signal::Spikes {
            unit: Some(u.into()),
        },
        ..ObsOptions::default()
    };
    assert!(close(observe(&sub, &one("u3")).unwrap()[0].cue, 20.0));
    assert!(close(observe(&sub, &one("u2")).unwrap()[0].cue, 0.0));
}

#[test]
fn unknown_unit_lists_the_available_ones() {
    let mut s = four_kinds();
    s.spikes = Some(Spikes {
        units: vec!["u1".into(), "u2".into()],
        times: vec![vec![], vec![]],
    });
    let opts = ObsOptions {
        signal: Signal::Spikes {
            unit: Some("u9".into()),
        },
        ..ObsOptions::default()
    };
    let err = observe(&subject(vec![s]), &opts).unwrap_err();
    assert!(matches!(err, ObsError::UnitNotFound { .. }));
    let msg = err.to_string();
    assert!(
        msg.contains("\"u9\"") && msg.contains("d1") && msg.contains("u1, u2"),
        "{msg}"
    );
}

#[test]
fn absent_signal_and_bad_windows_are_clear_errors() {
    let err = observe(&subject(vec![four_kinds()]), &ObsOptions::default()).unwrap_err();
    assert_eq!(
        err.to_string(),
        "session d1 has no spike data (no spikes.csv or no units in it)"
    );
    let opts = ObsOptions {
        signal: Signal::Photometry,
        ..ObsOptions::default()
    };
    let err = observe(&subject(vec![four_kinds()]), &opts).unwrap_err();
    assert!(err.to_string().contains("no photometry data"), "{err}");
    let opts = ObsOptions {
        cue_window: (0.3, 0.1),
        ..ObsOptions::default()
    };
    let err = observe(&subject(vec![four_kinds()]), &opts).unwrap_err();
    assert_eq!(
        err.to_string(),
        "invalid cue window (0.3, 0.1): start must be before end"
    );
}

#[test]
fn photometry_window_mean_minus_baseline_on_a_ramp() {
    // The window arithmetic on raw samples (SessionActivity::from_samples), independent of the
    // ΔF/F preprocessing that Signal::Photometry applies.
    // 20 Hz samples of value = t: the mean over the samples in [a, b) of a ramp is the mean of
    // those sample times (closed form). Baseline [9, 10): samples 9.00..9.95 → mean 9.475.
    // Cue window [10, 11): 10.00..10.95 → 10.475. Response = 1.0 exactly.
    let s = four_kinds();
    let time: Vec<f64> = (0..1000).map(|i| i as f64 * 0.05).collect();
    let act = SessionActivity::from_samples(&time, time.clone());
    let opts = ObsOptions::photometry();
    let o = observe_trial(&s, &s.trials[0], &act, &opts).unwrap();
    assert!(close(o.cue, 1.0), "{:?}", o.cue);
    // Reward at 11.5: window [11.5, 12.5) mean 11.975; minus 9.475 → 2.5.
    assert!(close(o.reward, 2.5), "{:?}", o.reward);
    // The batch sweep gives the same.
    let m = act.means(&[(9.0, 10.0), (10.0, 11.0), (11.5, 12.5)]);
    assert!(close(m[0], 9.475) && close(m[1], 10.475) && close(m[2], 11.975));
}

#[test]
fn photometry_past_the_recording_is_no_observation() {
    let s = four_kinds();
    let time: Vec<f64> = (0..300).map(|i| i as f64 * 0.05).collect(); // ends at 14.95 s
    let act = SessionActivity::from_samples(&time, vec![1.0; 300]);
    let opts = ObsOptions::photometry();
    let first = observe_trial(&s, &s.trials[0], &act, &opts).unwrap();
    assert!(close(first.cue, 0.0));
    let second = observe_trial(&s, &s.trials[1], &act, &opts).unwrap();
    assert_eq!(second.cue, None);
    assert_eq!(second.reward, None);
}

#[test]
fn anticipatory_licks_between_cue_and_expected_reward() {
    let mut s = four_kinds();
    // Trial 1: 3 licks in [10, 11.5) → 2/s; the licks after the reward are consummatory.
    // Trial 2 (omission): 6 licks in [20, 21.5) → 4/s.
    // Trial 3 (a cue never rewarded): over the session's longest reward delay, [30, 31.5):
    // 3 licks → 2/s (the one at 31.6 is past it).
    s.licks = Some(vec![
        9.9, 10.5, 11.0, 11.4, 11.6, 11.7, 20.1, 20.3, 20.5, 20.7, 20.9, 21.1, 30.2, 30.9, 31.4,
        31.6,
    ]);
    s.spikes = Some(Spikes {
        units: vec!["u1".into()],
        times: vec![vec![]],
    });
    let obs = observe(&subject(vec![s]), &ObsOptions::default()).unwrap();
    assert!(close(obs[0].anticipatory_lick_rate, 2.0));
    assert!(close(obs[1].anticipatory_lick_rate, 4.0));
    assert!(close(obs[2].anticipatory_lick_rate, 2.0));
    assert_eq!(
        obs[3].anticipatory_lick_rate, None,
        "no cue, no anticipation"
    );
}

#[test]
fn trace_bins_spikes_on_the_alignment_time() {
    let mut s = four_kinds();
    s.spikes = Some(Spikes {
        units: vec!["u1".into(), "u2".into()],
        times: vec![vec![9.95, 10.01, 10.02, 10.15], vec![10.12, 39.95]],
    });
    let sig = Signal::Spikes { unit: None };
    // Bins of 0.1 s from −0.1 s: [9.9,10), [10,10.1), [10.1,10.2); rate = count/(2 units·0.1 s).
    let tr = activity_trace(&s, &s.trials[0], &sig, -0.1, 0.2, 0.1);
    assert_eq!(tr.len(), 3);
    let want = [1.0 / 0.2, 2.0 / 0.2, 2.0 / 0.2];
    for (a, b) in tr.iter().zip(want) {
        assert!((a - b).abs() < 1e-9, "{tr:?}");
    }
    // Uncued trial 4 aligns on its reward at 40 s.
    let tr = activity_trace(&s, &s.trials[3], &sig, -0.1, 0.0, 0.1);
    assert!((tr[0] - 5.0).abs() < 1e-9, "{tr:?}");
    // Unknown unit → empty.
    let u = Signal::Spikes {
        unit: Some("u7".into()),
    };
    assert!(activity_trace(&s, &s.trials[0], &u, 0.0, 1.0, 0.1).is_empty());
}

#[test]
fn observations_follow_the_model_layout_order() {
    let mut a = four_kinds();
    a.spikes = Some(Spikes {
        units: vec!["u1".into()],
        times: vec![vec![]],
    });
    let mut b = a.clone();
    b.name = "d2".into();
    let sub = subject(vec![a, b]);
    let obs = observe(&sub, &ObsOptions::default()).unwrap();
    let spans = layout_subject(&sub, 0.05);
    assert_eq!(obs.len(), spans.len());
    for (o, sp) in obs.iter().zip(&spans) {
        assert_eq!((o.session, o.trial), (sp.session, sp.trial));
    }
}

/// Schultz, Dayan & Montague (1997): before learning, δ is at the reward, not the cue. On the
/// first trial with zero weights the model δ is exactly the reward in its bin, so the reward
/// window (shifted by the latency onto the reward bin) sums to 1 and the cue window to 0.
#[test]
fn window_delta_sums_see_the_naive_reward_delta() {
    let sub = subject(vec![four_kinds()]);
    let spans = layout_subject(&sub, 0.05);
    let r = run(&spans, 2, &TdParams::default());
    let opts = ObsOptions::default();
    let first = window_delta_sums(&spans[0], r.trial_delta(0), &opts, 0.05);
    assert_eq!(first.cue, Some(0.0));
    assert_eq!(first.reward, Some(1.0));
    // Without the latency shift the reward bin is missed.
    let literal = ObsOptions {
        latency: 0.0,
        ..opts.clone()
    };
    let lit = window_delta_sums(&spans[0], r.trial_delta(0), &literal, 0.05);
    assert_eq!(lit.reward, Some(0.0));
    // Unrewarded cue: no reward event to sum over.
    assert_eq!(
        window_delta_sums(&spans[2], r.trial_delta(2), &opts, 0.05).reward,
        None
    );
}

//! Each rule on small hand-built sessions: the edges of its windows and limits, missing data,
//! and the journal flow (pending, accept, reject).

use super::*;
use crate::data::{CueDef, Photometry, SessionMeta, Spikes};
use crate::marks::{fold, TrialMark};
use std::path::PathBuf;

/// Cued trials every 20 s from 10 s (cue at 10 + 20i, reward 1.5 s later when `rewarded`).
fn session(n: usize, rewarded: impl Fn(usize) -> bool) -> Session {
    let trials = (0..n)
        .map(|i| {
            let cue = 10.0 + 20.0 * i as f64;
            let r = rewarded(i);
            Trial {
                number: i as i64 + 1,
                cue: Some(0),
                cue_s: Some(cue),
                reward_s: r.then_some(cue + 1.5),
                reward_ul: if r { 3.0 } else { 0.0 },
                ..Default::default()
            }
        })
        .collect();
    Session {
        dir: PathBuf::from("s"),
        name: "s".into(),
        meta: SessionMeta {
            subject: "m-1".into(),
            date: "2026-03-02".into(),
            start_time: None,
            rig: None,
            cues: vec![CueDef {
                name: "tone-hi".into(),
                reward_delay_s: Some(1.5),
            }],
        },
        trials,
        spikes: None,
        licks: None,
        photometry: None,
    }
}

/// A healthy consumption bout after every reward: first lick 0.1 s after it, then 7 Hz.
fn bouts(s: &Session) -> Vec<f64> {
    let mut licks = Vec::new();
    for t in &s.trials {
        if let Some(r) = t.reward_s {
            licks.extend((0..15).map(|k| r + 0.1 + k as f64 / 7.0));
        }
    }
    licks
}

fn only(s: &Session, rules: &RuleSet, rule: &str) -> Vec<(i64, String)> {
    suggest_session(s, rules)
        .into_iter()
        .filter(|x| x.rule == rule)
        .map(|x| (x.trial, x.reason))
        .collect()
}

fn trials(v: &[(i64, String)]) -> Vec<i64> {
    v.iter().map(|x| x.0).collect()
}

#[test]
fn baseline_licks_window_edges() {
    let mut s = session(4, |_| true);
    let mut licks = bouts(&s);
    // Trial 1: two licks at −1.0 (in: the window is [−1, 0)) and −0.5 s.
    licks.extend([9.0, 9.5]);
    // Trial 2: one lick only.
    licks.push(29.5);
    // Trial 3: two licks, one exactly at the cue (out of the window).
    licks.extend([49.5, 50.0]);
    // Trial 4: two licks just before the window.
    licks.extend([68.9, 68.95]);
    licks.sort_by(f64::total_cmp);
    s.licks = Some(licks);
    let got = only(&s, &RuleSet::default(), "baseline_licks");
    assert_eq!(trials(&got), [1]);
    assert!(
        got[0]
            .1
            .starts_with("2 licks in the baseline window (-1 to 0 s"),
        "{}",
        got[0].1
    );
}

#[test]
fn uncued_trials_use_the_reward_as_baseline_anchor() {
    let mut s = session(1, |_| true);
    s.trials[0].cue = None;
    s.trials[0].cue_s = None;
    s.trials[0].reward_s = Some(10.0);
    let mut licks = vec![9.2, 9.6];
    licks.extend((0..15).map(|k| 10.1 + k as f64 / 7.0));
    s.licks = Some(licks);
    assert_eq!(
        trials(&only(&s, &RuleSet::default(), "baseline_licks")),
        [1]
    );
}

#[test]
fn no_consumption_counts_licks_after_delivery_only() {
    let mut s = session(4, |i| i != 3);
    // Trial 1 fine; trial 2: anticipatory licks before the reward, then two after;
    // trial 3: three licks after (enough); trial 4 unrewarded (not judged).
    let mut licks: Vec<f64> = (0..15).map(|k| 11.6 + k as f64 / 7.0).collect();
    licks.extend([30.8, 31.0, 31.3, 31.6, 32.0]);
    licks.extend([51.6, 52.0, 53.4]);
    s.licks = Some(licks);
    let got = only(&s, &RuleSet::default(), "no_consumption");
    assert_eq!(trials(&got), [2]);
    assert!(
        got[0].1.starts_with("2 licks within 2 s of the reward"),
        "{}",
        got[0].1
    );
}

#[test]
fn zero_volume_rewards_are_not_judged() {
    let mut s = session(1, |_| true);
    s.trials[0].reward_ul = 0.0;
    s.licks = Some(vec![]);
    assert!(suggest_session(&s, &RuleSet::default()).is_empty());
}

#[test]
fn late_first_lick_judges_each_trial_type_by_its_own_latencies() {
    // Trials 1-11 cued; 12-22 uncued rewards (no cue, reward at the same clock times).
    let mut s = session(22, |_| true);
    for t in &mut s.trials[11..] {
        t.cue = None;
        t.cue_s = None;
    }
    let cued = [
        0.08, 0.09, 0.10, 0.11, 0.12, 0.13, 0.14, 0.15, 0.3, 0.9, 2.5,
    ];
    let uncued = [
        0.40, 0.42, 0.44, 0.46, 0.48, 0.50, 0.52, 0.54, 0.56, 0.58, 1.5,
    ];
    let mut licks = Vec::new();
    for (t, latency) in s.trials.iter().zip(cued.iter().chain(&uncued)) {
        let r = t.reward_s.unwrap();
        licks.extend((0..15).map(|k| r + latency + k as f64 / 7.0));
    }
    s.licks = Some(licks);
    let got = only(&s, &RuleSet::default(), "late_first_lick");
    // Cued: median 0.125 s, MAD 0.025 s, limit 0.125 + 5·1.4826·0.025 = 0.310 s, so 0.3 s
    // (above the 250 ms floor) is within its type's spread and 0.9 s is late; 2.5 s is past
    // give_up_s (no_consumption's). Uncued: median 0.5 s, MAD 0.06 s, limit 0.945 s: the
    // naturally slower collection of unpredicted rewards (0.40-0.58 s) is not flagged, 1.5 s is.
    assert_eq!(trials(&got), [10, 22]);
    assert_eq!(
        got[0].1,
        "first lick 0.9 s after the reward; tone-hi trials' median 0.125 s (limit 0.31 s)"
    );
    assert_eq!(
        got[1].1,
        "first lick 1.5 s after the reward; uncued trials' median 0.5 s (limit 0.945 s)"
    );
    assert_eq!(
        trials(&only(&s, &RuleSet::default(), "no_consumption")),
        [11]
    );
    // Too few trials of a type to know its latencies: not judged.
    let mut few = session(4, |_| true);
    few.licks = Some(
        few.trials
            .iter()
            .flat_map(|t| (0..15).map(move |k| t.reward_s.unwrap() + 1.0 + k as f64 / 7.0))
            .collect(),
    );
    assert!(only(&few, &RuleSet::default(), "late_first_lick").is_empty());
}

#[test]
fn reward_too_soon_measures_from_the_previous_delivered_reward() {
    let mut s = session(5, |i| i != 2);
    // Trial 2's reward 2.99 s after trial 1's; trial 4's 3.0 s after trial 3's onset... but
    // trial 3 is an omission, so trial 4 is measured from trial 2's reward (far).
    s.trials[1].cue_s = Some(13.49 - 1.5);
    s.trials[1].reward_s = Some(11.5 + 2.99);
    s.trials[4].cue_s = Some(72.0);
    s.trials[4].reward_s = Some(71.5 + 3.0);
    s.trials[3].cue_s = Some(68.0);
    s.trials[3].reward_s = Some(71.5);
    let got = only(&s, &RuleSet::default(), "reward_too_soon");
    assert_eq!(trials(&got), [2]);
    assert_eq!(
        got[0].1,
        "reward 2.99 s after the previous one (trial 1; limit 3 s)"
    );
}

#[test]
fn without_licks_only_the_schedule_rule_runs() {
    let mut s = session(3, |_| true);
    s.trials[1].reward_s = Some(12.5);
    s.trials[1].cue_s = Some(11.0);
    let got = suggest_session(&s, &RuleSet::default());
    assert_eq!(got.len(), 1);
    assert_eq!((got[0].trial, got[0].rule), (2, "reward_too_soon"));
}

/// Regular spikes at `hz` (no Poisson noise) until `stop_s`, then at `after_hz`.
fn unit(hz: f64, stop_s: f64, after_hz: f64, end_s: f64) -> Vec<f64> {
    let mut v = Vec::new();
    let mut t = 0.0;
    while t < end_s {
        v.push(t);
        t += 1.0 / if t < stop_s { hz } else { after_hz };
    }
    v
}

#[test]
fn unit_drift_flags_the_lost_stretch_and_names_the_unit() {
    let mut s = session(40, |_| true);
    s.spikes = Some(Spikes {
        units: vec!["u1".into(), "u2".into(), "u3".into()],
        times: vec![
            unit(5.0, f64::INFINITY, 5.0, 820.0),
            // Lost after trial 30's end (cue at 590 s): rate 0.5 Hz from 600 s.
            unit(5.0, 600.0, 0.5, 820.0),
            // A quiet unit: one spike every 10 s; a zero MAD must not flag anything.
            unit(0.1, f64::INFINITY, 0.1, 820.0),
        ],
    });
    let got = only(&s, &RuleSet::default(), "unit_drift");
    let flagged = trials(&got);
    // Trials 31..40 (cues from 610 s) see the lost unit in their window; smoothing over
    // 5 trials lets trial 30 through or not, never earlier ones.
    assert!(flagged.iter().all(|&t| t >= 30), "{flagged:?}");
    assert!((32..=40).all(|t| flagged.contains(&t)), "{flagged:?}");
    assert!(
        got.iter()
            .all(|(_, r)| r.starts_with("unit u2 pre-cue rate")),
        "{got:?}"
    );
}

#[test]
fn unit_drift_needs_three_trials() {
    let mut s = session(2, |_| true);
    s.spikes = Some(Spikes {
        units: vec!["u1".into()],
        times: vec![unit(5.0, 15.0, 0.1, 60.0)],
    });
    assert!(only(&s, &RuleSet::default(), "unit_drift").is_empty());
}

/// 20 Hz photometry over `end_s` with small deterministic jitter (no two samples equal).
fn trace(end_s: f64, level: impl Fn(f64) -> f64) -> Vec<(f64, f64)> {
    (0..(end_s * 20.0) as usize)
        .map(|j| {
            let t = j as f64 / 20.0;
            let jitter = 0.004 * ((j as f64 * 12.9898).sin() * 43758.5453).fract();
            (t, level(t) * (1.0 + jitter))
        })
        .collect()
}

fn photometry(signal: Vec<(f64, f64)>, control: Option<Vec<(f64, f64)>>) -> Photometry {
    Photometry {
        time_s: signal.iter().map(|x| x.0).collect(),
        signal: signal.iter().map(|x| x.1).collect(),
        control: control.map(|c| c.iter().map(|x| x.1).collect()),
    }
}

#[test]
fn control_motion_flags_only_the_trial_with_a_dip() {
    let mut s = session(5, |_| true);
    // A 10 % dip in both channels 1 s after trial 3's cue (50 s), 0.5 s long.
    let dip = |t: f64| if (51.0..51.5).contains(&t) { 0.9 } else { 1.0 };
    s.photometry = Some(photometry(
        trace(110.0, |t| 1.5 * dip(t)),
        Some(trace(110.0, |t| 1.2 * dip(t))),
    ));
    let got = only(&s, &RuleSet::default(), "control_motion");
    assert_eq!(trials(&got), [3]);
    assert!(got[0].1.starts_with("control dips by 10"), "{}", got[0].1);
    // No control channel: nothing to judge.
    s.photometry.as_mut().unwrap().control = None;
    assert!(only(&s, &RuleSet::default(), "control_motion").is_empty());
}

#[test]
fn control_fit_poor_needs_drift_and_a_control_that_misses_it() {
    let bleach = |t: f64| 1.0 - 0.3 + 0.3 * (-t / 300.0).exp();
    let mut s = session(20, |_| true);
    // No drift: R² means nothing, no suggestion even with an unrelated control.
    s.photometry = Some(photometry(
        trace(420.0, |_| 1.5),
        Some(trace(420.0, |_| 1.2)),
    ));
    assert!(only(&s, &RuleSet::default(), "control_fit_poor").is_empty());
    // Drift the control follows: a good fit.
    s.photometry = Some(photometry(
        trace(420.0, |t| 1.5 * bleach(t)),
        Some(trace(420.0, |t| 1.2 * bleach(t))),
    ));
    assert!(only(&s, &RuleSet::default(), "control_fit_poor").is_empty());
    // Drift the control misses: every trial, one shared reason.
    s.photometry = Some(photometry(
        trace(420.0, |t| 1.5 * bleach(t)),
        Some(trace(420.0, |_| 1.2)),
    ));
    let got = only(&s, &RuleSet::default(), "control_fit_poor");
    assert_eq!(got.len(), 20);
    assert!(
        got[0].1.starts_with("session: the control explains"),
        "{}",
        got[0].1
    );
}

#[test]
fn signal_clipped_flat_runs_gaps_and_empty_windows() {
    let mut s = session(5, |_| true);
    let mut p = photometry(trace(90.0, |_| 1.5), Some(trace(90.0, |_| 1.2)));
    let rail = 2.0;
    // Trial 1: 4 samples at the rail (flagged); trial 2: 3 samples (not); trial 3: control
    // stuck at 0 for 6 samples; trial 4: 1 s without samples. Trial 5 (cue 90 s) has none.
    p.signal[220..224].iter_mut().for_each(|v| *v = rail);
    p.signal[620..623].iter_mut().for_each(|v| *v = rail);
    p.control.as_mut().unwrap()[1020..1026]
        .iter_mut()
        .for_each(|v| *v = 0.0);
    let keep: Vec<bool> = p
        .time_s
        .iter()
        .map(|&t| !(71.0..72.0).contains(&t))
        .collect();
    let filter =
        |v: &Vec<f64>| -> Vec<f64> { v.iter().zip(&keep).filter(|x| *x.1).map(|x| *x.0).collect() };
    p = Photometry {
        time_s: filter(&p.time_s),
        signal: filter(&p.signal),
        control: p.control.as_ref().map(filter),
    };
    s.photometry = Some(p);
    let got = only(&s, &RuleSet::default(), "signal_clipped");
    assert_eq!(trials(&got), [1, 3, 4, 5], "{got:?}");
    assert_eq!(
        got[0].1,
        "signal stuck at 2 (its session maximum) for 4 samples from 1 s after onset"
    );
    assert!(
        got[1].1.starts_with("control stuck at 0 for 6 samples"),
        "{}",
        got[1].1
    );
    assert!(
        got[2].1.starts_with("1.05 s without samples"),
        "{}",
        got[2].1
    );
    assert_eq!(
        got[3].1,
        "recording stops 0.05 s before onset, before the trial window ends"
    );
    // A trial wholly after the recording.
    s.trials[4].cue_s = Some(200.0);
    s.trials[4].reward_s = Some(201.5);
    let got = only(&s, &RuleSet::default(), "signal_clipped");
    assert_eq!(got[3].1, "no photometry samples in the trial window");
}

#[test]
fn disabled_rules_suggest_nothing() {
    let mut s = session(3, |_| true);
    s.licks = Some(vec![]);
    let mut rules = RuleSet::default();
    assert_eq!(suggest_session(&s, &rules).len(), 3);
    rules.no_consumption.enabled = false;
    assert!(suggest_session(&s, &rules).is_empty());
}

fn sug(trial: i64, rule: &'static str) -> Suggestion {
    Suggestion {
        trial,
        rule,
        reason: format!("measured on {trial}"),
    }
}

#[test]
fn pending_drops_settled_trials_only() {
    let all = vec![
        sug(1, "baseline_licks"),
        sug(2, "baseline_licks"),
        sug(3, "baseline_licks"),
        sug(3, "late_first_lick"),
        sug(4, "late_first_lick"),
        sug(5, "no_consumption"),
    ];
    let rows = vec![
        // Trial 1 excluded for another reason: settled for every rule.
        MarkRow {
            trial: Some(1),
            mark: MarkKind::Exclude,
            reason: "artifact".into(),
            note: String::new(),
            reviewer: "ana".into(),
            at: "2026-03-02T10:00:00Z".into(),
        },
        // Trial 2 suspect for another reason: still pending.
        MarkRow {
            trial: Some(2),
            mark: MarkKind::Suspect,
            reason: "other".into(),
            ..accept_row(&all[1], MarkKind::Suspect, "ana")
        },
        // Trial 3: baseline_licks rejected; late_first_lick stays.
        reject_row(&all[2], "ana"),
        // Trial 4 accepted as suspect: settled.
        accept_row(&all[4], MarkKind::Suspect, "ana"),
        // Trial 5 accepted, then cleared (an undo): pending again.
        accept_row(&all[5], MarkKind::Exclude, "ana"),
        MarkRow {
            mark: MarkKind::Clear,
            ..accept_row(&all[5], MarkKind::Exclude, "ana")
        },
    ];
    let left = pending(&all, &fold(&rows));
    let keys: Vec<(i64, &str)> = left.iter().map(|s| (s.trial, s.rule)).collect();
    assert_eq!(
        keys,
        [
            (2, "baseline_licks"),
            (3, "late_first_lick"),
            (5, "no_consumption")
        ]
    );
}

#[test]
fn accept_and_reject_rows_fit_the_sidecar() {
    let s = sug(7, "late_first_lick");
    let a = accept_row(&s, MarkKind::Exclude, "ana");
    assert_eq!(
        (a.trial, a.mark, a.reason.as_str(), a.note.as_str()),
        (
            Some(7),
            MarkKind::Exclude,
            "late_first_lick",
            "measured on 7"
        )
    );
    let r = reject_row(&s, "ana");
    assert_eq!(
        (r.mark, r.reason.as_str()),
        (MarkKind::Note, "reject:late_first_lick")
    );
    for row in [&a, &r] {
        let line = crate::marks::encode_row(row).unwrap();
        assert!(line.starts_with("7,"), "{line}");
    }
    // The fold keeps the accept as the trial's standing mark and the reject as a note.
    let state = fold(&[a.clone(), r.clone()]);
    assert!(
        matches!(state.marks.get(&7), Some(TrialMark { reason, .. }) if reason == "late_first_lick")
    );
    assert_eq!(state.notes.len(), 1);
}

#[test]
fn accept_all_and_counts_follow_the_catalog() {
    let all = vec![
        sug(1, "late_first_lick"),
        sug(2, "baseline_licks"),
        sug(3, "late_first_lick"),
    ];
    let rows = accept_all_rows(&all, "late_first_lick", MarkKind::Suspect, "ana");
    assert_eq!(
        rows.iter().map(|r| r.trial).collect::<Vec<_>>(),
        [Some(1), Some(3)]
    );
    assert!(rows.iter().all(|r| r.mark == MarkKind::Suspect));
    assert_eq!(
        counts_by_rule(&all),
        [
            ("baseline_licks".to_string(), 1),
            ("late_first_lick".to_string(), 2)
        ]
    );
    assert!(counts_by_rule(&[]).is_empty());
    assert_eq!(
        rule_info("reward_too_soon").map(|r| r.source.starts_with("Jeong")),
        Some(true)
    );
    assert!(rule_info("nope").is_none());
    // Every catalogued rule has a section in the shipped defaults.
    for r in CATALOG {
        assert!(
            config::DEFAULT_RULES.contains(&format!("[{}]", r.id)),
            "{}",
            r.id
        );
    }
}

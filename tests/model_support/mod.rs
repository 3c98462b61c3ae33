//! In-memory subjects for the model tests: build `Subject`s without touching the disk.
#![allow(dead_code)]

use std::path::PathBuf;
use trialdesk::data::{CueDef, Session, SessionMeta, Subject, Trial};

/// A cue table entry: name and reward delay (None = never rewarded).
pub fn cue(name: &str, delay: Option<f64>) -> CueDef {
    CueDef {
        name: name.to_string(),
        reward_delay_s: delay,
    }
}

/// A cued trial; `reward` is Some((time, size)) when delivered.
pub fn cued(number: i64, cue: usize, cue_s: f64, reward: Option<(f64, f64)>) -> Trial {
    Trial {
        number,
        cue: Some(cue),
        cue_s: Some(cue_s),
        reward_s: reward.map(|r| r.0),
        reward_ul: reward.map_or(0.0, |r| r.1),
        ..Default::default()
    }
}

/// A free (uncued) reward.
pub fn uncued(number: i64, reward_s: f64, size: f64) -> Trial {
    Trial {
        number,
        cue: None,
        cue_s: None,
        reward_s: Some(reward_s),
        reward_ul: size,
        ..Default::default()
    }
}

pub fn session(name: &str, date: &str, cues: Vec<CueDef>, trials: Vec<Trial>) -> Session {
    Session {
        dir: PathBuf::from(name),
        name: name.to_string(),
        meta: SessionMeta {
            subject: "m-007".to_string(),
            date: date.to_string(),
            start_time: None,
            rig: Some("rig-north".to_string()),
            cues,
        },
        trials,
        spikes: None,
        licks: None,
        photometry: None,
    }
}

pub fn subject(sessions: Vec<Session>) -> Subject {
    Subject {
        root: PathBuf::from("m-007"),
        sessions,
    }
}

/// One session of `n` trials of cue 0 at 10 s spacing, `rewarded(i)` deciding delivery.
pub fn one_cue_session(
    delay: f64,
    size: f64,
    n: usize,
    rewarded: impl Fn(usize) -> bool,
) -> Subject {
    let trials = (0..n)
        .map(|i| {
            let t = 5.0 + 10.0 * i as f64;
            cued(i as i64 + 1, 0, t, rewarded(i).then_some((t + delay, size)))
        })
        .collect();
    subject(vec![session(
        "2026-03-02",
        "2026-03-02",
        vec![cue("tone-hi", Some(delay))],
        trials,
    )])
}

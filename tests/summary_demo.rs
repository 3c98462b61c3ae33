//! The learning table of the shipped demo subject (demo_data/m-041, simulated: tone-hi p = 1,
//! tone-mid p = 0.5, tone-lo p = 0) shows the published learning pattern:
//! - the response moves from the reward to the predictive cue across days (Schultz, Dayan &
//!   Montague 1997, Science 275:1593);
//! - a dip at the expected reward time on omission trials once the reward is predicted (same);
//! - cue responses graded by reward probability (Fiorillo, Tobler & Schultz 2003, Science
//!   299:1898);
//! - anticipatory licking rises with training (Cohen et al. 2012, Nature).
//!
//! Early = days 1–2, late = days 7–8, each pooled over trials (n-weighted day means).

use std::path::Path;
use trialdesk::data::load;
use trialdesk::marks::read_journal;
use trialdesk::obs::{observe, ObsOptions, TrialKind};
use trialdesk::summary::{day_rows, DayRow, Mean};

fn demo_rows() -> (Vec<DayRow>, Vec<trialdesk::obs::TrialObs>) {
    let path = Path::new(env!("CARGO_MANIFEST_DIR")).join("demo_data/m-041");
    let subject = load(&path).expect("demo data loads").subject;
    assert_eq!(subject.sessions.len(), 8);
    let marks: Vec<_> = subject
        .sessions
        .iter()
        .map(|s| read_journal(&s.dir).unwrap().state())
        .collect();
    let obs = observe(&subject, &ObsOptions::default()).unwrap();
    (day_rows(&subject, &obs, &marks, None), obs)
}

/// n-weighted mean of a per-day mean over some days.
fn pooled(rows: &[DayRow], days: &[usize], pick: impl Fn(&DayRow) -> Mean) -> f64 {
    let (mut sum, mut n) = (0.0, 0usize);
    for r in rows.iter().filter(|r| days.contains(&r.day)) {
        let m = pick(r);
        if let Some(v) = m.value {
            sum += v * m.n as f64;
            n += m.n;
        }
    }
    assert!(n > 0);
    sum / n as f64
}

fn cue(name: &'static str) -> impl Fn(&DayRow) -> Mean {
    move |r| r.cues.iter().find(|c| c.cue == name).unwrap().response
}

const EARLY: [usize; 2] = [1, 2];
const LATE: [usize; 2] = [7, 8];

#[test]
fn response_moves_from_reward_to_cue() {
    let (rows, _) = demo_rows();
    let cue_early = pooled(&rows, &EARLY, cue("tone-hi"));
    let cue_late = pooled(&rows, &LATE, cue("tone-hi"));
    let rew_early = pooled(&rows, &EARLY, |r| r.reward_response);
    let rew_late = pooled(&rows, &LATE, |r| r.reward_response);
    assert!(cue_late > cue_early + 1.0, "cue {cue_early} -> {cue_late}");
    assert!(
        rew_late < rew_early - 1.0,
        "reward {rew_early} -> {rew_late}"
    );
    // Early the reward dominates; late the p = 1 cue does.
    assert!(rew_early > cue_early && cue_late > rew_late);
    // The unpredicted (uncued) reward keeps a large response throughout.
    assert!(pooled(&rows, &LATE, |r| r.uncued_reward_response) > cue_late);
}

#[test]
fn omission_dip_after_learning() {
    let (rows, obs) = demo_rows();
    // Pooled over the second half of training, with its standard error from the trials.
    let late: Vec<f64> = obs
        .iter()
        .filter(|o| o.kind == TrialKind::Omission && o.session >= 4)
        .filter_map(|o| o.reward)
        .collect();
    let n = late.len() as f64;
    let mean = late.iter().sum::<f64>() / n;
    let var = late.iter().map(|x| (x - mean).powi(2)).sum::<f64>() / (n - 1.0);
    let se = (var / n).sqrt();
    assert!(mean + 2.0 * se < 0.0, "omission {mean} ± {se} (n = {n})");
    assert!(pooled(&rows, &LATE, |r| r.omission_dip) < 0.0);
}

#[test]
fn cue_responses_graded_by_reward_probability() {
    let (rows, _) = demo_rows();
    let hi = pooled(&rows, &LATE, cue("tone-hi"));
    let mid = pooled(&rows, &LATE, cue("tone-mid"));
    let lo = pooled(&rows, &LATE, cue("tone-lo"));
    assert!(hi > mid && mid > lo, "hi {hi}, mid {mid}, lo {lo}");
}

#[test]
fn anticipatory_licking_rises() {
    let (rows, _) = demo_rows();
    let early = pooled(&rows, &EARLY, |r| r.lick_rate);
    let late = pooled(&rows, &LATE, |r| r.lick_rate);
    assert!(late > early + 0.5, "licks/s {early} -> {late}");
    // Rising on average from day to day: the late half beats the early half.
    let first = pooled(&rows, &[1, 2, 3, 4], |r| r.lick_rate);
    let second = pooled(&rows, &[5, 6, 7, 8], |r| r.lick_rate);
    assert!(second > first);
}

/// Anticipatory licking per cue follows the cue's reward probability once learned (tone-hi >
/// tone-mid > tone-lo), and the never-rewarded tone-lo gets its own figure over the same span
/// as the rewarded cues: low, and not rising (anticipatory licking graded by the cue's reward
/// probability is common practice in these tasks; our simulator licks by the Ludvig, Sutton &
/// Kehoe 2012 rule, so this checks the measurement, not the animal).
#[test]
fn anticipatory_licking_per_cue_follows_probability() {
    let (rows, _) = demo_rows();
    let licks = |name: &'static str| {
        move |r: &DayRow| r.cues.iter().find(|c| c.cue == name).unwrap().lick_rate
    };
    let hi = pooled(&rows, &LATE, licks("tone-hi"));
    let mid = pooled(&rows, &LATE, licks("tone-mid"));
    let lo = pooled(&rows, &LATE, licks("tone-lo"));
    assert!(hi > mid && mid > lo, "hi {hi}, mid {mid}, lo {lo}");
    let lo_early = pooled(&rows, &EARLY, licks("tone-lo"));
    assert!(lo < 0.3 && lo_early < 0.3, "tone-lo {lo_early} -> {lo}");
}

//! The lick rules: baseline licks, no consumption, late first lick (relative to the trial
//! type's own latencies), reward too soon.
//!
//! All work on the sorted lick times with binary searches, so a session costs
//! O(trials · log licks).

use super::config::LateFirstLick;
use super::{align, num, RuleSet, Suggestion};
use crate::data::Session;
use crate::obs::activity::count_in;
use std::collections::BTreeMap;

/// `licks` is `None` when the session has no licks.csv: only `reward_too_soon` applies then.
pub(super) fn suggest(
    session: &Session,
    licks: Option<&[f64]>,
    rules: &RuleSet,
    out: &mut Vec<Suggestion>,
) {
    let bl = &rules.baseline_licks;
    let nc = &rules.no_consumption;
    let soon = &rules.reward_too_soon;
    let mut previous_reward: Option<(i64, f64)> = None;
    for trial in &session.trials {
        if let (true, Some(t0), Some(licks)) = (bl.enabled, align(trial), licks) {
            let n = count_in(licks, t0 + bl.from_s, t0 + bl.to_s);
            if n >= bl.min_licks as usize {
                out.push(Suggestion {
                    trial: trial.number,
                    rule: "baseline_licks",
                    reason: format!(
                        "{n} licks in the baseline window ({} to {} s; limit {} or more)",
                        num(bl.from_s, 3),
                        num(bl.to_s, 3),
                        bl.min_licks
                    ),
                });
            }
        }
        let Some(r) = trial.reward_s.filter(|_| trial.reward_ul > 0.0) else {
            continue;
        };
        if let (true, Some(licks)) = (nc.enabled, licks) {
            let n = count_in(licks, r, r + nc.window_s);
            if n < nc.min_licks as usize {
                out.push(Suggestion {
                    trial: trial.number,
                    rule: "no_consumption",
                    reason: format!(
                        "{n} lick{} within {} s of the reward (expected {} or more); valve failure?",
                        if n == 1 { "" } else { "s" },
                        num(nc.window_s, 3),
                        nc.min_licks
                    ),
                });
            }
        }
        if let (true, Some((prev_trial, prev))) = (soon.enabled, previous_reward) {
            let gap = r - prev;
            if gap < soon.min_interval_s {
                out.push(Suggestion {
                    trial: trial.number,
                    rule: "reward_too_soon",
                    reason: format!(
                        "reward {} s after the previous one (trial {prev_trial}; limit {} s)",
                        num(gap, 3),
                        num(soon.min_interval_s, 3)
                    ),
                });
            }
        }
        previous_reward = Some((trial.number, r));
    }
    if let (true, Some(licks)) = (rules.late_first_lick.enabled, licks) {
        late_first_lick(session, licks, &rules.late_first_lick, out);
    }
}

/// First-lick latency after each delivered reward (within `give_up_s`), judged against the
/// latencies of the session's other rewarded trials of the same type.
fn late_first_lick(
    session: &Session,
    licks: &[f64],
    late: &LateFirstLick,
    out: &mut Vec<Suggestion>,
) {
    // (trial number, latency) per trial type: the cue index, None for uncued rewards.
    let mut by_type: BTreeMap<Option<usize>, Vec<(i64, f64)>> = BTreeMap::new();
    for trial in &session.trials {
        let Some(r) = trial.reward_s.filter(|_| trial.reward_ul > 0.0) else {
            continue;
        };
        let first = licks.partition_point(|&t| t < r);
        if let Some(&t) = licks.get(first).filter(|&&t| t - r <= late.give_up_s) {
            by_type
                .entry(trial.cue)
                .or_default()
                .push((trial.number, t - r));
        }
    }
    for (cue, rows) in by_type {
        if rows.len() < late.min_trials as usize {
            continue;
        }
        let mut lat: Vec<f64> = rows.iter().map(|&(_, l)| l).collect();
        let median = median_of(&mut lat);
        let mut dev: Vec<f64> = lat.iter().map(|l| (l - median).abs()).collect();
        // 1.4826·MAD estimates a normal SD (common practice); floored so identical latencies
        // do not make every other trial an outlier.
        let spread = (1.4826 * median_of(&mut dev)).max(0.01);
        let limit = late.max_latency_s.max(median + late.k * spread);
        let kind = match cue.and_then(|c| session.meta.cues.get(c)) {
            Some(c) => c.name.as_str(),
            None => "uncued",
        };
        for (trial, latency) in rows {
            if latency > limit {
                out.push(Suggestion {
                    trial,
                    rule: "late_first_lick",
                    reason: format!(
                        "first lick {} s after the reward; {kind} trials' median {} s (limit {} s)",
                        num(latency, 3),
                        num(median, 3),
                        num(limit, 3)
                    ),
                });
            }
        }
    }
}

fn median_of(v: &mut [f64]) -> f64 {
    v.sort_by(f64::total_cmp);
    let n = v.len();
    if n % 2 == 1 {
        v[n / 2]
    } else {
        0.5 * (v[n / 2 - 1] + v[n / 2])
    }
}

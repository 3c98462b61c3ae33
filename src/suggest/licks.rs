//! The lick rules: baseline licks, no consumption, late first lick, reward too soon.
//!
//! All work on the sorted lick times with binary searches, so a session costs
//! O(trials · log licks).

use super::{align, num, RuleSet, Suggestion};
use crate::data::Session;
use crate::obs::activity::count_in;

/// `licks` is `None` when the session has no licks.csv: only `reward_too_soon` applies then.
pub(super) fn suggest(
    session: &Session,
    licks: Option<&[f64]>,
    rules: &RuleSet,
    out: &mut Vec<Suggestion>,
) {
    let bl = &rules.baseline_licks;
    let nc = &rules.no_consumption;
    let late = &rules.late_first_lick;
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
        if let (true, Some(licks)) = (late.enabled, licks) {
            let first = licks.partition_point(|&t| t < r);
            if let Some(&t) = licks.get(first) {
                let latency = t - r;
                if latency > late.max_latency_s && latency <= late.give_up_s {
                    out.push(Suggestion {
                        trial: trial.number,
                        rule: "late_first_lick",
                        reason: format!(
                            "first lick {} s after the reward (limit {} s)",
                            num(latency, 3),
                            num(late.max_latency_s, 3)
                        ),
                    });
                }
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
}

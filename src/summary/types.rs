//! Responses by trial type: per session, one row per set of cues presented and outcome
//! ([`TrialType`]), so that designs with compound cues (blocking, overexpectation,
//! conditioned inhibition) read at a glance: the blocked cue's probe next to its control's.
//! Printed for subjects with event lists (events.csv or cue offsets); a plain one-cue subject
//! is already read by the per-cue and per-outcome columns.

use super::table::{Cell, Table};
use super::{DayRow, Mean};
use crate::data::Session;
use crate::obs::{TrialObs, TrialType, WindowDeltas};

/// One trial type in one session.
#[derive(Debug, Clone, PartialEq)]
pub struct TypeDay {
    /// "tone-a + light-b rewarded" ([`TrialType::label`]).
    pub label: String,
    /// Trials of this type (excluded ones included).
    pub trials: usize,
    /// The first cue's window (the compound's, when its cues start together).
    pub cue_response: Mean,
    /// The first reward's window, or the window after the expected time on omissions.
    pub reward_response: Mean,
    pub lick_rate: Mean,
    /// Model δ summed over the same windows (same trials); `None` without a model run.
    pub model_cue: Option<Mean>,
    pub model_reward: Option<Mean>,
}

/// The session's trial types in grouping order. `rows` are all the session's observations,
/// `included` those of trials not excluded, `deltas[i]` the model's window sums of
/// `included[i]` (`None` without a model).
pub fn type_days(
    session: &Session,
    rows: &[&TrialObs],
    included: &[&TrialObs],
    deltas: &[Option<WindowDeltas>],
    with_model: bool,
) -> Vec<TypeDay> {
    // Each trial's type once; every mean below filters on it.
    let type_of = |o: &TrialObs| TrialType::of(session, session.trials.get(o.trial)?);
    let row_types: Vec<Option<TrialType>> = rows.iter().map(|o| type_of(o)).collect();
    let included_types: Vec<Option<TrialType>> = included.iter().map(|o| type_of(o)).collect();
    let mut types: Vec<TrialType> = Vec::new();
    for ty in row_types.iter().flatten() {
        if !types.contains(ty) {
            types.push(ty.clone());
        }
    }
    types.sort_by_key(TrialType::order_key);
    types
        .into_iter()
        .map(|ty| {
            let mine = || {
                included
                    .iter()
                    .zip(deltas)
                    .zip(&included_types)
                    .filter(|(_, t)| t.as_ref() == Some(&ty))
                    .map(|(pair, _)| pair)
            };
            TypeDay {
                label: ty.label(session),
                trials: row_types.iter().filter(|t| t.as_ref() == Some(&ty)).count(),
                cue_response: Mean::of(mine().filter_map(|(o, _)| o.cue)),
                reward_response: Mean::of(mine().filter_map(|(o, _)| o.reward)),
                lick_rate: Mean::of(mine().filter_map(|(o, _)| o.anticipatory_lick_rate)),
                model_cue: with_model
                    .then(|| Mean::of(mine().filter_map(|(_, d)| d.and_then(|d| d.cue)))),
                model_reward: with_model
                    .then(|| Mean::of(mine().filter_map(|(_, d)| d.and_then(|d| d.reward)))),
            }
        })
        .collect()
}

/// The by-type table of one subject, or `None` when no trial has an event list.
pub(super) fn table(rows: &[DayRow], show_date: bool) -> Option<Table> {
    if rows.iter().all(|r| r.event_trials == 0) {
        return None;
    }
    let with_model = rows.iter().any(|r| r.model.is_some());
    let mut headers = vec!["day".to_string(), "session".into()];
    if show_date {
        headers.push("date".into());
    }
    let lead = headers.len();
    headers.extend(["trial type", "trials", "cue", "reward"].map(String::from));
    if with_model {
        headers.extend(["d:cue", "d:reward"].map(String::from));
    }
    headers.push("licks/s".into());
    let num = |m: Option<Mean>| Cell::Num(m.and_then(|m| m.value));
    let mut cells = Vec::new();
    for r in rows {
        for t in &r.types {
            let mut v: Vec<Cell> = vec![r.day.to_string().into(), r.session.clone().into()];
            if show_date {
                v.push(r.date.clone().into());
            }
            v.push(t.label.clone().into());
            v.push(t.trials.to_string().into());
            v.extend([num(Some(t.cue_response)), num(Some(t.reward_response))]);
            if with_model {
                v.extend([num(t.model_cue), num(t.model_reward)]);
            }
            v.push(num(Some(t.lick_rate)));
            cells.push(v);
        }
    }
    Some(Table {
        title: "Responses by trial type (cues presented and outcome; excluded trials left out)"
            .into(),
        headers,
        rows: cells,
        left: 1..lead + 1,
        left_last: false,
        footer: vec![
            "cue: the first cue's window (a compound's, when its cues start together); \
             reward: the first reward's, or the expected time's on omissions"
                .into(),
        ],
        licks: 1,
    })
}

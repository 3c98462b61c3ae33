//! The per-day learning table: one row per session in training order, built from the shared
//! observations ([`crate::obs`]), the marks and, optionally, a model run.
//!
//! Start at [`day_rows`]. Trial counts include every trial; the response means leave out the
//! observations of trials whose standing mark is `exclude` (the marks contract), so every mean
//! carries its own n. [`render`] writes the rows as text, tidy CSV or Markdown; [`cohort`]
//! averages subjects by training day. [`suggested_counts`] adds the pending suggested marks
//! ([`crate::suggest`]) per session and rule.

pub mod cohort;
pub mod render;
pub mod suggested;
mod table;
pub mod types;

pub use suggested::suggested_counts;

use crate::data::Subject;
use crate::fit::dataset::SensorKernel;
use crate::fit::saved::fitted_window_deltas;
use crate::marks::{MarkKind, MarkState};
use crate::model::{TdRun, TrialSpan};
use crate::obs::trial_type::cue_presentation;
use crate::obs::{ObsOptions, TrialKind, TrialObs};
use std::collections::HashMap;

/// A mean and the number of trials it is over (`value` is `None` when n = 0).
#[derive(Debug, Clone, Copy, PartialEq, Default)]
pub struct Mean {
    pub value: Option<f64>,
    pub n: usize,
}

impl Mean {
    pub fn of(values: impl IntoIterator<Item = f64>) -> Mean {
        let (mut sum, mut n) = (0.0, 0usize);
        for v in values {
            sum += v;
            n += 1;
        }
        Mean {
            value: (n > 0).then(|| sum / n as f64),
            n,
        }
    }
}

/// Trials of a session by what happened on them (all trials, excluded ones included).
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default)]
pub struct KindCounts {
    pub rewarded: usize,
    pub omission: usize,
    pub unrewarded_cue: usize,
    pub uncued_reward: usize,
}

/// Per-cue figures of one session.
#[derive(Debug, Clone, PartialEq)]
pub struct CueDay {
    pub cue: String,
    /// Trials with this cue (excluded ones included).
    pub trials: usize,
    pub response: Mean,
    pub lick_rate: Mean,
    /// Mean model δ summed over the cue window; `None` without a model run.
    pub model_delta: Option<Mean>,
}

/// Mean model δ over the reward window, by trial kind (same trials as the observed means).
#[derive(Debug, Clone, Copy, PartialEq, Default)]
pub struct ModelDay {
    pub reward: Mean,
    pub uncued_reward: Mean,
    pub omission: Mean,
}

/// One session of the learning table.
#[derive(Debug, Clone, PartialEq)]
pub struct DayRow {
    /// Session folder name.
    pub session: String,
    pub date: String,
    /// 1-based position in training order.
    pub day: usize,
    /// Rows of trials.csv.
    pub trials: usize,
    pub counts: KindCounts,
    /// Trials whose standing mark is exclude / suspect.
    pub excluded: usize,
    pub suspect: usize,
    /// Cues that occur in this session, in the subject's cue order.
    pub cues: Vec<CueDay>,
    /// Reward-window response on cued, rewarded trials.
    pub reward_response: Mean,
    /// Reward-window response on uncued rewards (the unpredicted-reward reference).
    pub uncued_reward_response: Mean,
    /// Reward-window response after the expected reward time on omission trials.
    pub omission_dip: Mean,
    /// Anticipatory licks/s over all cued trials with an expected reward.
    pub lick_rate: Mean,
    pub model: Option<ModelDay>,
    /// Trials with an event list (events.csv rows or a cue offset).
    pub event_trials: usize,
    /// Per trial type (cues presented and outcome), in grouping order.
    pub types: Vec<types::TypeDay>,
}

/// A model pass to put beside the observations: the spans it ran over (any order), its traces,
/// and the observation options whose windows map onto its bins.
#[derive(Debug, Clone, Copy)]
pub struct ModelTraces<'a> {
    pub spans: &'a [TrialSpan],
    pub run: &'a TdRun,
    pub dt: f64,
    pub opts: &'a ObsOptions,
    /// The saved fit's sensor kernel: window δ weighted as the fit weighted it.
    pub kernel: Option<SensorKernel>,
}

/// One row per session in training order. `marks[i]` is the mark state of
/// `subject.sessions[i]` (missing entries mean no marks). `obs` comes from
/// [`crate::obs::observe`].
pub fn day_rows(
    subject: &Subject,
    obs: &[TrialObs],
    marks: &[MarkState],
    model: Option<ModelTraces>,
) -> Vec<DayRow> {
    let cue_order = subject.cue_names();
    let span_index: HashMap<(usize, usize), usize> = model
        .map(|m| {
            m.spans
                .iter()
                .enumerate()
                .map(|(i, s)| ((s.session, s.trial), i))
                .collect()
        })
        .unwrap_or_default();
    let empty = MarkState::default();
    let mut by_session: Vec<Vec<&TrialObs>> = vec![Vec::new(); subject.sessions.len()];
    for o in obs {
        if let Some(v) = by_session.get_mut(o.session) {
            v.push(o);
        }
    }

    subject
        .sessions
        .iter()
        .enumerate()
        .map(|(si, session)| {
            let marks = marks.get(si).unwrap_or(&empty);
            let numbers: std::collections::HashSet<i64> =
                session.trials.iter().map(|t| t.number).collect();
            let standing = |kind: MarkKind| {
                marks
                    .marks
                    .iter()
                    .filter(|(n, m)| m.kind == kind && numbers.contains(n))
                    .count()
            };
            let rows = &by_session[si];
            let mut counts = KindCounts::default();
            for o in rows {
                match o.kind {
                    TrialKind::Rewarded => counts.rewarded += 1,
                    TrialKind::Omission => counts.omission += 1,
                    TrialKind::UnrewardedCue => counts.unrewarded_cue += 1,
                    TrialKind::UncuedReward => counts.uncued_reward += 1,
                }
            }
            let included: Vec<&TrialObs> = rows
                .iter()
                .copied()
                .filter(|o| !marks.is_excluded(session.trials[o.trial].number))
                .collect();
            // Model δ window sums of the included trials, keyed like `included`.
            let deltas: Vec<Option<crate::obs::WindowDeltas>> = included
                .iter()
                .map(|o| {
                    let m = model?;
                    let &i = span_index.get(&(o.session, o.trial))?;
                    Some(fitted_window_deltas(
                        m.kernel,
                        &m.spans[i],
                        m.run.trial_delta(i),
                        m.opts,
                        m.dt,
                    ))
                })
                .collect();
            let of_kind = |kind: TrialKind| {
                let obs = Mean::of(
                    included
                        .iter()
                        .filter(|o| o.kind == kind)
                        .filter_map(|o| o.reward),
                );
                let model = Mean::of(
                    included
                        .iter()
                        .zip(&deltas)
                        .filter(|(o, _)| o.kind == kind)
                        .filter_map(|(_, d)| d.and_then(|d| d.reward)),
                );
                (obs, model)
            };
            let (reward_response, model_reward) = of_kind(TrialKind::Rewarded);
            let (uncued_reward_response, model_uncued) = of_kind(TrialKind::UncuedReward);
            let (omission_dip, model_omission) = of_kind(TrialKind::Omission);

            let cues = cue_order
                .iter()
                .filter_map(|name| {
                    let trials = rows
                        .iter()
                        .filter(|o| cue_presentation(session, o, name).is_some())
                        .count();
                    if trials == 0 {
                        return None;
                    }
                    let mine = || {
                        included.iter().zip(&deltas).filter_map(|(o, d)| {
                            cue_presentation(session, o, name).map(|p| (o, d, p))
                        })
                    };
                    Some(CueDay {
                        cue: name.clone(),
                        trials,
                        response: Mean::of(mine().filter_map(|(_, _, p)| p.response)),
                        lick_rate: Mean::of(
                            mine().filter_map(|(o, _, _)| o.anticipatory_lick_rate),
                        ),
                        model_delta: model.map(|_| {
                            Mean::of(
                                mine()
                                    .filter(|(_, _, p)| p.first)
                                    .filter_map(|(_, d, _)| d.and_then(|d| d.cue)),
                            )
                        }),
                    })
                })
                .collect();
            let event_trials = rows
                .iter()
                .filter(|o| session.trials[o.trial].has_events())
                .count();
            let types = types::type_days(session, rows, &included, &deltas, model.is_some());

            DayRow {
                session: session.name.clone(),
                date: session.meta.date.clone(),
                day: si + 1,
                trials: session.trials.len(),
                counts,
                excluded: standing(MarkKind::Exclude),
                suspect: standing(MarkKind::Suspect),
                cues,
                reward_response,
                uncued_reward_response,
                omission_dip,
                // Trials that expect a reward, as the column has always meant (a never-rewarded
                // cue's licking is in its own cue's column).
                lick_rate: Mean::of(
                    included
                        .iter()
                        .filter(|o| o.kind != TrialKind::UnrewardedCue)
                        .filter_map(|o| o.anticipatory_lick_rate),
                ),
                model: model.map(|_| ModelDay {
                    reward: model_reward,
                    uncued_reward: model_uncued,
                    omission: model_omission,
                }),
                event_trials,
                types,
            }
        })
        .collect()
}

/// The rigs the sessions were recorded on, when there is more than one: "rigs: box-2 (days
/// 1-4), box-7 (days 5-6); ...". A signal's amplitude differs between rigs, so the note points
/// at `fit --scale-by rig`. `None` for one rig (or none named).
pub fn rig_note(subject: &Subject) -> Option<String> {
    let mut rigs: Vec<(String, Vec<usize>)> = Vec::new();
    for (i, s) in subject.sessions.iter().enumerate() {
        let rig = s.meta.rig.clone().unwrap_or_else(|| "(no rig)".to_string());
        match rigs.iter_mut().find(|(r, _)| *r == rig) {
            Some((_, days)) => days.push(i + 1),
            None => rigs.push((rig, vec![i + 1])),
        }
    }
    if rigs.len() < 2 {
        return None;
    }
    let list: Vec<String> = rigs
        .iter()
        .map(|(rig, days)| format!("{rig} (day {})", day_ranges(days)))
        .collect();
    Some(format!(
        "rigs: {}; a response's size can differ between rigs: `trialdesk fit --scale-by rig` \
         gives each rig its own gain and baselines",
        list.join(", ")
    ))
}

/// "1-4, 6" from sorted day numbers.
fn day_ranges(days: &[usize]) -> String {
    let mut parts: Vec<String> = Vec::new();
    let mut i = 0;
    while i < days.len() {
        let mut j = i;
        while j + 1 < days.len() && days[j + 1] == days[j] + 1 {
            j += 1;
        }
        parts.push(match j > i {
            true => format!("{}-{}", days[i], days[j]),
            false => days[i].to_string(),
        });
        i = j + 1;
    }
    parts.join(", ")
}

#[cfg(test)]
mod tests {
    use super::day_ranges;

    #[test]
    fn day_ranges_join_runs() {
        assert_eq!(day_ranges(&[1, 2, 3, 4, 6, 8, 9]), "1-4, 6, 8-9");
        assert_eq!(day_ranges(&[5]), "5");
    }
}

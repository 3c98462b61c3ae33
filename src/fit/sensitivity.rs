//! The sensitivity line: how the estimates would move if every pending suggested mark were
//! accepted as an exclusion.
//!
//! Nothing is written: the suggested trials' observations are flagged `excluded` in a copy of
//! the [`FitData`] and the model is fitted again. Like a real exclusion, the model still learns
//! from those trials; only their responses leave the likelihood. The refit is the main fit's
//! own multi-start search on the reduced data (no warm start from the main optimum), so that
//! accepting the suggestions and fitting again gives the same numbers. When the suggested
//! trials crowd into one trial type, the line says so.

use super::optimise::{self, FitResult};
use super::report::num;
use super::{validate, FitData, FitError, FitOptions, FitOutcome, Progress};
use crate::suggest::{counts_by_rule, Suggestion};
use std::collections::BTreeSet;

/// The trials pending suggestions point at, mapped onto the fit's spans.
#[derive(Debug, Clone, Default, PartialEq)]
pub struct SuggestedTrials {
    /// Span indices (into [`FitData::spans`]) of the suggested trials.
    pub spans: BTreeSet<usize>,
    /// Suggestions per rule (a trial flagged by two rules counts under both).
    pub by_rule: Vec<(String, usize)>,
    /// Set when the suggested trials crowd into one trial type (see [`concentration`]).
    pub concentrated: Option<Concentration>,
}

/// Most suggested trials are of one trial type, far beyond that type's share of all trials:
/// dropping them would take that type's responses out of the fit unevenly.
#[derive(Debug, Clone, PartialEq)]
pub struct Concentration {
    /// "uncued reward", "tone-hi rewarded", "tone-mid omission", "tone-lo unrewarded".
    pub kind: String,
    /// Suggested trials of that type, and all suggested trials.
    pub suggested: usize,
    pub of_suggested: usize,
    /// That type's share of all fitted trials.
    pub share_of_all: f64,
}

/// A trial type: the cue (None: uncued) and the outcome.
type TrialType = (Option<usize>, &'static str);

fn trial_type(span: &crate::model::TrialSpan) -> TrialType {
    let outcome = match (
        span.reward_bin.is_some(),
        span.expected_reward_bin.is_some(),
    ) {
        (true, _) => "rewarded",
        (false, true) => "omission",
        (false, false) => "unrewarded",
    };
    (span.cue, outcome)
}

/// The trial type holding at least 60 % of the suggested trials (5 or more) and over twice its
/// share of all trials, if there is one (thresholds are our defaults).
pub fn concentration(
    data: &FitData,
    spans: &BTreeSet<usize>,
    cue_names: &[String],
) -> Option<Concentration> {
    if spans.len() < 5 {
        return None;
    }
    let mut suggested: std::collections::BTreeMap<TrialType, usize> = Default::default();
    for &si in spans {
        *suggested.entry(trial_type(&data.spans[si])).or_default() += 1;
    }
    let (&ty, &n) = suggested.iter().max_by_key(|(_, &n)| n)?;
    let all = data.spans.iter().filter(|s| trial_type(s) == ty).count();
    let share_of_all = all as f64 / data.spans.len().max(1) as f64;
    let share = n as f64 / spans.len() as f64;
    if share < 0.6 || share < 2.0 * share_of_all {
        return None;
    }
    let kind = match ty {
        (None, _) => "uncued reward".to_string(),
        (Some(c), outcome) => {
            let name = cue_names.get(c).map_or("cue", |s| s.as_str());
            format!("{name} {outcome}")
        }
    };
    Some(Concentration {
        kind,
        suggested: n,
        of_suggested: spans.len(),
        share_of_all,
    })
}

impl SuggestedTrials {
    /// `per_session[i]` are the pending suggestions of session `i` of the subject the data
    /// were built from (the index `TrialSpan::session` uses).
    /// `cue_names` are the subject's (`Subject::cue_names`), to name a trial type.
    pub fn new(
        data: &FitData,
        per_session: &[Vec<Suggestion>],
        cue_names: &[String],
    ) -> SuggestedTrials {
        let mut spans = BTreeSet::new();
        let mut all = Vec::new();
        for (si, span) in data.spans.iter().enumerate() {
            let Some(sugg) = per_session.get(span.session) else {
                continue;
            };
            let number = data.trial_numbers.get(si).copied();
            if sugg.iter().any(|s| Some(s.trial) == number) {
                spans.insert(si);
            }
        }
        for s in per_session {
            all.extend(s.iter().cloned());
        }
        SuggestedTrials {
            concentrated: concentration(data, &spans, cue_names),
            spans,
            by_rule: counts_by_rule(&all),
        }
    }

    pub fn is_empty(&self) -> bool {
        self.spans.is_empty()
    }
}

/// What the sensitivity check found.
#[derive(Debug)]
pub enum Sensitivity {
    /// No pending suggestion on any fitted trial.
    NoSuggestions,
    /// Suggested trials exist but none of them has an included response window.
    NothingToDrop { n_trials: usize },
    /// The refit could not be done (too few windows left, ...).
    Failed { n_trials: usize, error: FitError },
    Refit {
        n_trials: usize,
        /// Included windows that the suggestions drop.
        n_windows: usize,
        fit: Box<FitResult>,
    },
}

/// `data` with the observations of `trials` excluded as well.
pub fn excluding(data: &FitData, trials: &SuggestedTrials) -> (FitData, usize) {
    let mut d = data.clone();
    let mut dropped = 0;
    for p in &mut d.points {
        if !p.excluded && trials.spans.contains(&p.span) {
            p.excluded = true;
            dropped += 1;
        }
    }
    (d, dropped)
}

/// Refit the main model with the suggested trials' observations excluded too.
pub fn sensitivity(
    data: &FitData,
    outcome: &FitOutcome,
    opts: &FitOptions,
    trials: &SuggestedTrials,
    progress: &dyn Progress,
) -> Sensitivity {
    if trials.is_empty() {
        return Sensitivity::NoSuggestions;
    }
    let n_trials = trials.spans.len();
    let (reduced, n_windows) = excluding(data, trials);
    if n_windows == 0 {
        return Sensitivity::NothingToDrop { n_trials };
    }
    let included = match validate(&reduced) {
        Ok(i) => i,
        Err(error) => return Sensitivity::Failed { n_trials, error },
    };
    let problem = opts.problem(&reduced, outcome.model);
    progress.phase("sensitivity refit", opts.search.budget(&problem) as u64);
    // The same search as the main fit (grid and starts, no warm start from the main optimum),
    // so that accepting the suggestions for real and refitting gives these very numbers.
    let best = optimise::fit_multistart(&problem, &included, &opts.search, progress);
    match best {
        Some(fit) => Sensitivity::Refit {
            n_trials,
            n_windows,
            fit: Box::new(fit),
        },
        None => Sensitivity::Failed {
            n_trials,
            error: FitError::NoFiniteFit {
                model: outcome.model.name().to_string(),
            },
        },
    }
}

/// The one-line summary for the report.
pub fn line(
    s: &Sensitivity,
    trials: &SuggestedTrials,
    outcome: &FitOutcome,
    lambda_fitted: bool,
) -> String {
    let rules = trials
        .by_rule
        .iter()
        .map(|(r, n)| format!("{r}: {n}"))
        .collect::<Vec<_>>()
        .join(", ");
    match s {
        Sensitivity::NoSuggestions => {
            "Sensitivity to suggested marks: none pending on the fitted trials, nothing to check."
                .to_string()
        }
        Sensitivity::NothingToDrop { n_trials } => format!(
            "Sensitivity to suggested marks: the {n_trials} suggested trial(s) ({rules}) have no \
             fitted response window; the estimates would not move."
        ),
        Sensitivity::Failed { n_trials, error } => format!(
            "Sensitivity to suggested marks: if the {n_trials} suggested trial(s) ({rules}) were \
             excluded, no refit is possible: {error}"
        ),
        Sensitivity::Refit {
            n_trials,
            n_windows,
            fit,
        } => {
            let a = &outcome.best;
            let mut text = format!(
                "Sensitivity: if the {n_trials} suggested trial(s) ({rules}) were excluded \
                 ({n_windows} more windows out): α {}→{}, γ {}→{}",
                num(a.params.alpha),
                num(fit.params.alpha),
                num(a.params.gamma),
                num(fit.params.gamma),
            );
            if lambda_fitted {
                text.push_str(&format!(
                    ", λ {}→{}",
                    num(a.params.lambda),
                    num(fit.params.lambda)
                ));
            }
            text.push_str(&format!(
                ", gain {}→{} (refit in memory; nothing written to marks.csv)",
                num(a.linear.gain),
                num(fit.linear.gain)
            ));
            if let Some(c) = &trials.concentrated {
                text.push_str(&format!(
                    ". Caution: {} of the {} suggested trials are {} trials ({:.0} % of all \
                     trials): accepting them would remove that type's responses unevenly",
                    c.suggested,
                    c.of_suggested,
                    c.kind,
                    100.0 * c.share_of_all
                ));
            }
            text
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::fit::synthetic;

    #[test]
    fn suggested_windows_leave_the_likelihood_only_in_the_copy() {
        let (_, data) = synthetic::fit_data(&synthetic::SyntheticSpec {
            sessions: 2,
            trials_per_session: 20,
            ..Default::default()
        });
        let trials = SuggestedTrials {
            spans: [0usize, 1, 2].into_iter().collect(),
            by_rule: vec![("no_consumption".into(), 3)],
            concentrated: None,
        };
        let (reduced, dropped) = excluding(&data, &trials);
        let expected = data.points.iter().filter(|p| p.span < 3).count();
        assert!(expected > 0);
        assert_eq!(dropped, expected);
        assert!(data.points.iter().all(|p| !p.excluded));
        assert_eq!(reduced.included().len(), data.points.len() - expected);
        // Every trial stays in the spans: the model still learns from it.
        assert_eq!(reduced.spans.len(), data.spans.len());
    }

    #[test]
    fn suggestions_crowded_into_one_trial_type_are_named() {
        let (_, data) = synthetic::fit_data(&synthetic::SyntheticSpec {
            sessions: 2,
            trials_per_session: 40,
            ..Default::default()
        });
        let names = vec!["tone-a".to_string(), "tone-b".to_string()];
        let of_type = |ty: TrialType| -> Vec<usize> {
            (0..data.spans.len())
                .filter(|&i| trial_type(&data.spans[i]) == ty)
                .collect()
        };
        // Every type present, with its share of all trials.
        let mut types: Vec<TrialType> = data.spans.iter().map(trial_type).collect();
        types.sort();
        types.dedup();
        let rare = types
            .iter()
            .copied()
            .min_by_key(|&t| of_type(t).len())
            .unwrap();
        let rare_spans = of_type(rare);
        assert!(
            rare_spans.len() >= 5,
            "synthetic data lack a type with 5 trials"
        );
        let picked: BTreeSet<usize> = rare_spans.iter().copied().take(5).collect();
        let c = concentration(&data, &picked, &names).expect("5 of 5 in one rare type");
        assert_eq!((c.suggested, c.of_suggested), (5, 5));
        assert!(c.share_of_all < 0.5);
        // One trial of each type in turn, repeated: no single type dominates.
        let spread: BTreeSet<usize> = types
            .iter()
            .flat_map(|&t| of_type(t).into_iter().take(3))
            .collect();
        assert!(types.len() >= 2, "synthetic data hold one trial type only");
        assert_eq!(concentration(&data, &spread, &names), None);
        // Fewer than 5 suggested trials: too few to speak of a pattern.
        let few: BTreeSet<usize> = rare_spans.iter().copied().take(4).collect();
        assert_eq!(concentration(&data, &few, &names), None);
    }
}

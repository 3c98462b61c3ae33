//! The sensitivity line: how the estimates would move if every pending suggested mark were
//! accepted as an exclusion.
//!
//! Nothing is written: the suggested trials' observations are flagged `excluded` in a copy of
//! the [`FitData`] and the model is fitted again. Like a real exclusion, the model still learns
//! from those trials; only their responses leave the likelihood. The refit is a full
//! multi-start search plus a warm start from the main fit, the better of the two kept, so a
//! basin change shows instead of being hidden by a local polish.

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
}

impl SuggestedTrials {
    /// `per_session[i]` are the pending suggestions of session `i` of the subject the data
    /// were built from (the index `TrialSpan::session` uses).
    pub fn new(data: &FitData, per_session: &[Vec<Suggestion>]) -> SuggestedTrials {
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
        fit: FitResult,
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
    let fresh = optimise::fit_multistart(&problem, &included, &opts.search, progress);
    let warm = optimise::refine(
        &problem,
        &included,
        &outcome.best.z,
        &opts.search,
        opts.search.max_iters,
    );
    let best = [fresh, warm]
        .into_iter()
        .flatten()
        .max_by(|a, b| a.log_likelihood.total_cmp(&b.log_likelihood));
    match best {
        Some(fit) => Sensitivity::Refit {
            n_trials,
            n_windows,
            fit,
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
}

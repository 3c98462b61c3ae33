//! Model comparison: csc, microstimulus and presence TD and trial-level Rescorla–Wagner, each
//! fitted to the same included observations, scored by lnL, AIC, BIC and held-out error.
//!
//! Held-out error uses the last sessions (forward validation, not random trials: learning makes
//! trials dependent, methods.md §4). Learning parameters, gain and baselines are fitted on the
//! earlier sessions' observations; the model pass still runs over every trial, held-out ones
//! included, and the held-out observations are predicted with the training gain and baselines.

use super::objective::{aic, bic, LearnParams, ModelSpec, Problem};
use super::optimise::{fit_multistart, refine, FitResult};
use super::{FitData, FitOptions, Progress};
use crate::model::{MicrostimulusParams, Representation};

/// One row of the comparison table.
#[derive(Debug, Clone, PartialEq)]
pub struct ModelRow {
    pub model: ModelSpec,
    pub params: LearnParams,
    pub log_likelihood: f64,
    /// Parameters counted: learning parameters, gain, baselines, σ.
    pub k: usize,
    pub n: usize,
    pub aic: f64,
    pub bic: f64,
    /// RMSE on the held-out sessions' included observations; `None` when there is no earlier
    /// session to train on or nothing to predict.
    pub heldout_rmse: Option<f64>,
    pub heldout_n: usize,
}

/// The models of the comparison, in table order.
pub fn models() -> [ModelSpec; 4] {
    [
        ModelSpec::Td(Representation::Csc),
        ModelSpec::Td(Representation::Microstimulus(MicrostimulusParams::default())),
        ModelSpec::Td(Representation::Presence),
        ModelSpec::RescorlaWagner,
    ]
}

/// Number of trailing sessions held out: `requested`, or the last fifth (at least one); never
/// all of them. 0 when the subject has a single session.
pub fn holdout_count(n_sessions: usize, requested: Option<usize>) -> usize {
    if n_sessions < 2 {
        return 0;
    }
    let want = requested.unwrap_or_else(|| (n_sessions as f64 / 5.0).round().max(1.0) as usize);
    want.min(n_sessions - 1)
}

/// Split included points into (training, held-out) by session.
pub fn split(data: &FitData, idx: &[usize], n_holdout: usize) -> (Vec<usize>, Vec<usize>) {
    let first_held = data.n_sessions().saturating_sub(n_holdout);
    idx.iter()
        .partition(|&&i| n_holdout == 0 || data.session_of(i) < first_held)
}

/// Fit every model of [`models`]; `chosen` reuses the main fit for its model.
pub fn compare(
    data: &FitData,
    idx: &[usize],
    opts: &FitOptions,
    chosen: (ModelSpec, &FitResult),
    progress: &dyn Progress,
) -> Vec<ModelRow> {
    let n_holdout = holdout_count(data.n_sessions(), opts.holdout_sessions);
    let (train, test) = split(data, idx, n_holdout);
    progress.phase("comparing models", 0);
    let mut rows = Vec::new();
    for model in models() {
        let problem = opts.problem(data, model);
        let full = if same_model(model, chosen.0) {
            Some(chosen.1.clone())
        } else {
            fit_multistart(&problem, idx, &opts.search, progress)
        };
        let Some(full) = full else { continue };
        let heldout = heldout_error(&problem, &full, &train, &test, opts, progress);
        let k = problem.n_params(&full.linear);
        rows.push(ModelRow {
            model,
            params: full.params,
            log_likelihood: full.log_likelihood,
            k,
            n: idx.len(),
            aic: aic(full.log_likelihood, k),
            bic: bic(full.log_likelihood, k, idx.len()),
            heldout_rmse: heldout.map(|h| h.0),
            heldout_n: heldout.map(|h| h.1).unwrap_or(0),
        });
    }
    rows
}

/// AIC differences below this do not separate two models: both have substantial support
/// (Burnham & Anderson 2002, *Model Selection and Multimodel Inference*, §2.6; the threshold is
/// quoted from memory and is common practice).
pub const TIE_DELTA_AIC: f64 = 2.0;

/// What the comparison says about which model describes the data best.
#[derive(Debug, Clone, PartialEq)]
pub enum Verdict {
    /// `best` (row index) leads the runner-up by `delta_aic` ≥ [`TIE_DELTA_AIC`].
    Clear {
        best: usize,
        runner_up: Option<usize>,
        delta_aic: f64,
    },
    /// These rows (best first) lie within [`TIE_DELTA_AIC`] of the lowest AIC.
    Tie { rows: Vec<usize> },
}

/// The comparison's verdict by AIC; `None` without rows.
pub fn verdict(rows: &[ModelRow]) -> Option<Verdict> {
    let mut order: Vec<usize> = (0..rows.len())
        .filter(|&i| rows[i].aic.is_finite())
        .collect();
    order.sort_by(|&a, &b| rows[a].aic.total_cmp(&rows[b].aic));
    let &best = order.first()?;
    let close: Vec<usize> = order
        .iter()
        .copied()
        .filter(|&i| rows[i].aic - rows[best].aic < TIE_DELTA_AIC)
        .collect();
    if close.len() > 1 {
        return Some(Verdict::Tie { rows: close });
    }
    let runner_up = order.get(1).copied();
    Some(Verdict::Clear {
        best,
        runner_up,
        delta_aic: runner_up.map_or(f64::INFINITY, |r| rows[r].aic - rows[best].aic),
    })
}

/// Warnings about the comparison for the report: the reported model is not the best by AIC
/// (naming the best), and AIC, BIC and held-out error do not pick the same model.
pub fn warnings(rows: &[ModelRow], reported: ModelSpec) -> Vec<String> {
    let mut out = Vec::new();
    if let Some(Verdict::Clear {
        best, delta_aic, ..
    }) = verdict(rows)
    {
        if !same_model(rows[best].model, reported) {
            let gap = rows
                .iter()
                .find(|r| same_model(r.model, reported))
                .map(|r| r.aic - rows[best].aic)
                .unwrap_or(delta_aic);
            out.push(format!(
                "the reported representation ({}) is not the best by the comparison: {} has the \
                 lowest AIC, {} lower; its parameters are the ones to read (rerun with \
                 --representation {}), or say why {} is kept",
                reported.name(),
                rows[best].model.name(),
                super::report::num(gap),
                rows[best].model.name(),
                reported.name()
            ));
        }
    }
    let pick = |score: &dyn Fn(&ModelRow) -> Option<f64>| {
        rows.iter()
            .filter_map(|r| Some((score(r)?, r.model.name())))
            .filter(|(v, _)| v.is_finite())
            .min_by(|a, b| a.0.total_cmp(&b.0))
            .map(|(_, n)| n)
    };
    let by_aic = pick(&|r| Some(r.aic));
    let by_bic = pick(&|r| Some(r.bic));
    let by_heldout = pick(&|r| r.heldout_rmse);
    let picks: Vec<(&str, &str)> = [
        ("AIC", by_aic),
        ("BIC", by_bic),
        ("held-out RMSE", by_heldout),
    ]
    .into_iter()
    .filter_map(|(k, v)| Some((k, v?)))
    .collect();
    if picks.windows(2).any(|w| w[0].1 != w[1].1) {
        let list: Vec<String> = picks
            .iter()
            .map(|(k, v)| format!("{k} prefers {v}"))
            .collect();
        out.push(format!(
            "the comparison's criteria disagree: {}; no single model is best on every count",
            list.join(", ")
        ));
    }
    out
}

fn same_model(a: ModelSpec, b: ModelSpec) -> bool {
    a.name() == b.name()
}

/// (RMSE, n) of predicting `test` from a fit on `train`. The training search starts from the
/// all-data optimum `full` (only its starting point: the estimate is the training optimum),
/// which saves a multi-start search per model.
pub fn heldout_error(
    problem: &Problem,
    full: &FitResult,
    train: &[usize],
    test: &[usize],
    opts: &FitOptions,
    progress: &dyn Progress,
) -> Option<(f64, usize)> {
    if test.is_empty() || train.len() < super::MIN_OBSERVATIONS {
        return None;
    }
    let fit = refine(problem, train, &full.z, &opts.search, opts.search.max_iters)?;
    progress.tick();
    let predicted = problem.predict_responses(&fit.params, &fit.linear);
    let data = problem.data;
    let test = super::linear::scored(data, test);
    let sse: f64 = test
        .iter()
        .map(|&i| (data.points[i].observed - predicted[i]).powi(2))
        .sum();
    let rmse = (sse / test.len() as f64).sqrt();
    rmse.is_finite().then_some((rmse, test.len()))
}

#[cfg(test)]
mod tests {
    use super::*;

    fn row(name: ModelSpec, aic: f64) -> ModelRow {
        ModelRow {
            model: name,
            params: LearnParams {
                alpha: 0.1,
                gamma: 0.9,
                lambda: 0.0,
                lick: None,
            },
            log_likelihood: -aic / 2.0,
            k: 0,
            n: 10,
            aic,
            bic: aic,
            heldout_rmse: None,
            heldout_n: 0,
        }
    }

    #[test]
    fn verdict_names_a_clear_winner_or_the_tie() {
        let m = models();
        let rows = vec![row(m[0], 100.0), row(m[1], 103.5), row(m[3], 90.0)];
        assert_eq!(
            verdict(&rows),
            Some(Verdict::Clear {
                best: 2,
                runner_up: Some(0),
                delta_aic: 10.0
            })
        );
        let rows = vec![row(m[0], 100.0), row(m[1], 101.5), row(m[2], 110.0)];
        assert_eq!(verdict(&rows), Some(Verdict::Tie { rows: vec![0, 1] }));
        assert_eq!(verdict(&[]), None);
    }

    #[test]
    fn warns_when_the_reported_model_loses_or_criteria_disagree() {
        let m = models();
        let mut rows = vec![row(m[0], 300.0), row(m[1], 100.0), row(m[2], 310.0)];
        let w = warnings(&rows, m[0]);
        assert_eq!(w.len(), 1, "{w:?}");
        assert!(w[0].contains("(csc) is not the best"), "{}", w[0]);
        assert!(
            w[0].contains("microstimulus has the lowest AIC, 200.0 lower"),
            "{}",
            w[0]
        );
        assert!(warnings(&rows, m[1]).is_empty());
        // Held-out error prefers presence, AIC and BIC microstimulus.
        rows[2].heldout_rmse = Some(0.5);
        rows[1].heldout_rmse = Some(0.9);
        let w = warnings(&rows, m[1]);
        assert_eq!(w.len(), 1, "{w:?}");
        assert!(
            w[0].contains("AIC prefers microstimulus, BIC prefers microstimulus, held-out RMSE prefers presence"),
            "{}",
            w[0]
        );
        // BIC disagreeing with AIC alone is reported too.
        rows[2].heldout_rmse = None;
        rows[1].heldout_rmse = None;
        rows[0].bic = 50.0;
        let w = warnings(&rows, m[1]);
        assert!(w.iter().any(|x| x.contains("BIC prefers csc")), "{w:?}");
    }

    #[test]
    fn holdout_is_the_last_fifth_never_all() {
        assert_eq!(holdout_count(1, None), 0);
        assert_eq!(holdout_count(2, None), 1);
        assert_eq!(holdout_count(8, None), 2);
        assert_eq!(holdout_count(20, None), 4);
        assert_eq!(holdout_count(3, Some(5)), 2);
        assert_eq!(holdout_count(10, Some(0)), 0);
    }
}

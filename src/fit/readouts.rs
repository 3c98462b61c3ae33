//! Comparing readouts (`fit --compare-readouts`): the reported representation refitted with
//! each way of mapping δ onto activity — one gain for the subject, separate gains of positive
//! and negative δ, a gain per session, a gain per rig — on the same observations, scored like
//! the model comparison (lnL, AIC, BIC, held-out error), so a user can see whether per-group
//! scaling or asymmetry is warranted before reporting it.

use super::compare::{heldout_error, holdout_count, split};
use super::dataset::{FitData, Groups, ScaleBy};
use super::objective::{aic, bic, ModelSpec};
use super::optimise::fit_multistart;
use super::{FitOptions, Progress};
use std::fmt::Write as _;

/// One readout to try.
#[derive(Debug, Clone, PartialEq)]
pub struct Readout {
    pub label: String,
    pub groups: Option<Groups>,
    pub asymmetric: bool,
}

/// One row of the readout table.
#[derive(Debug, Clone, PartialEq)]
pub struct ReadoutRow {
    pub label: String,
    pub log_likelihood: f64,
    pub k: usize,
    pub n: usize,
    pub aic: f64,
    pub bic: f64,
    /// (RMSE, n) on the held-out sessions; `None` per session (a held-out session has no gain
    /// of its own) or without a session to train on.
    pub heldout: Option<(f64, usize)>,
    /// This readout is the one the report's parameters come from.
    pub reported: bool,
}

/// Fit `model` with every readout of `variants` on `data`'s included points (a multi-start
/// search each); `reported` marks the readout of the main fit.
pub fn compare_readouts(
    data: &FitData,
    opts: &FitOptions,
    model: ModelSpec,
    variants: &[Readout],
    progress: &dyn Progress,
) -> Vec<ReadoutRow> {
    let idx = data.included();
    let n_holdout = holdout_count(data.n_sessions(), opts.holdout_sessions);
    let (train, test) = split(data, &idx, n_holdout);
    progress.phase("comparing readouts", 0);
    let mut rows = Vec::new();
    for v in variants {
        let mut d = data.clone();
        d.groups = v.groups.clone();
        let o = FitOptions {
            asymmetric: v.asymmetric,
            ..opts.clone()
        };
        let problem = o.problem(&d, model);
        let Some(full) = fit_multistart(&problem, &idx, &o.search, progress) else {
            continue;
        };
        let per_session = v
            .groups
            .as_ref()
            .is_some_and(|g| matches!(g.by, ScaleBy::Session | ScaleBy::SessionUnit));
        let heldout = match per_session {
            true => None,
            false => heldout_error(&problem, &full, &train, &test, &o, progress),
        };
        let k = problem.n_params(&full.linear);
        rows.push(ReadoutRow {
            label: v.label.clone(),
            log_likelihood: full.log_likelihood,
            k,
            n: idx.len(),
            aic: aic(full.log_likelihood, k),
            bic: bic(full.log_likelihood, k, idx.len()),
            heldout,
            reported: v.asymmetric == opts.asymmetric
                && v.groups.as_ref().map(|g| g.by) == data.groups.as_ref().map(|g| g.by),
        });
    }
    rows
}

/// The table for the report.
pub fn table(rows: &[ReadoutRow], model: ModelSpec) -> String {
    let best = rows.iter().map(|r| r.aic).fold(f64::INFINITY, f64::min);
    let mut s = format!(
        "Readouts of {} (same {} observations; k counts learning parameters, gains, baselines \
         and noise levels of every group):\n",
        model.name(),
        rows.first().map_or(0, |r| r.n)
    );
    let _ = writeln!(
        s,
        "  {:<28} {:>10} {:>4} {:>10} {:>8} {:>10}  held-out RMSE",
        "readout", "lnL", "k", "AIC", "ΔAIC", "BIC"
    );
    for r in rows {
        let held = match r.heldout {
            Some((rmse, n)) => format!("{} (n={n})", super::report::num(rmse)),
            None => "n/a".to_string(),
        };
        let _ = writeln!(
            s,
            "  {:<28} {:>10} {:>4} {:>10} {:>8} {:>10}  {held}{}",
            r.label,
            super::report::num(r.log_likelihood),
            r.k,
            super::report::num(r.aic),
            super::report::num(r.aic - best),
            super::report::num(r.bic),
            if r.reported { " *" } else { "" }
        );
    }
    s.push_str(
        "  (* the readout of the parameters above; ΔAIC below 2 does not separate readouts; a \
         gain per session has no held-out error: a held-out session has no gain of its own)\n",
    );
    s
}

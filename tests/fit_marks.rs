//! Exclusions: observations of `exclude` trials leave the likelihood, the trials still drive
//! learning (design brief, "The sidecar"; methods.md §8: score on included trials, run the
//! learning model over all trials). `--ignore-marks` lifts the exclusions.

use trialdesk::fit::dataset::{build, NO_REASON};
use trialdesk::fit::synthetic::{observations, subject, SyntheticSpec};
use trialdesk::fit::{run_fit, FitOptions, LearnParams, ModelSpec, NoProgress, Problem};
use trialdesk::marks::{MarkKind, MarkState, TrialMark};
use trialdesk::model::Representation;
use trialdesk::obs::ObsOptions;

fn mark(kind: MarkKind, reason: &str) -> TrialMark {
    TrialMark {
        kind,
        reason: reason.into(),
        note: String::new(),
        reviewer: "tester".into(),
        at: "2026-03-02T10:00:00Z".into(),
    }
}

/// Session 0: trials 5..=14 excluded for a valve failure, 20 for licking, 21 without reason,
/// 30 only `suspect` (not excluded).
fn marks() -> Vec<MarkState> {
    let mut s = MarkState::default();
    for t in 5..=14 {
        s.marks
            .insert(t, mark(MarkKind::Exclude, "reward valve failed"));
    }
    s.marks
        .insert(20, mark(MarkKind::Exclude, "lick contamination"));
    s.marks.insert(21, mark(MarkKind::Exclude, ""));
    s.marks.insert(30, mark(MarkKind::Suspect, "odd baseline"));
    vec![s]
}

fn spec() -> SyntheticSpec {
    SyntheticSpec {
        sessions: 3,
        trials_per_session: 60,
        ..Default::default()
    }
}

#[test]
fn exclusions_flag_points_and_count_reasons() {
    let spec = spec();
    let subj = subject(&spec);
    let opts = ObsOptions::default();
    let obs = observations(&spec, &subj, &opts);
    let data = build(&subj, &obs, &opts, spec.dt, &marks(), false);
    assert_eq!(
        data.spans.len(),
        180,
        "every trial stays in the model's spans"
    );
    assert_eq!(data.exclusions.n_trials, 12);
    assert_eq!(data.exclusions.by_reason["reward valve failed"], 10);
    assert_eq!(data.exclusions.by_reason["lick contamination"], 1);
    assert_eq!(data.exclusions.by_reason[NO_REASON], 1);
    for p in &data.points {
        let (session, trial) = data.label(p.span);
        let marked =
            session == "2026-03-01" && ((5..=14).contains(&trial) || trial == 20 || trial == 21);
        assert_eq!(p.excluded, marked, "session {session} trial {trial}");
    }
    // Suspect is not exclude.
    assert!(data
        .points
        .iter()
        .filter(|p| data.label(p.span) == ("2026-03-01", 30))
        .all(|p| !p.excluded));
}

#[test]
fn excluded_trials_change_the_likelihood_but_not_the_model_pass() {
    let spec = spec();
    let subj = subject(&spec);
    let opts = ObsOptions::default();
    let obs = observations(&spec, &subj, &opts);
    let marked = build(&subj, &obs, &opts, spec.dt, &marks(), false);
    let unmarked = build(&subj, &obs, &opts, spec.dt, &[], false);
    let params = LearnParams {
        alpha: 0.1,
        gamma: 0.98,
        lambda: 0.0,
        lick: None,
    };
    let model = ModelSpec::Td(Representation::Csc);
    let pm = Problem::new(&marked, model, false, 0.0);
    let pu = Problem::new(&unmarked, model, false, 0.0);
    let xm = pm.predictors(&params);
    let xu = pu.predictors(&params);
    assert_eq!(xm, xu, "the model pass is the same with and without marks");

    let im = marked.included();
    let iu = unmarked.included();
    assert!(im.len() < iu.len());
    let lm = pm.linear(&xm, &im).unwrap();
    let lu = pu.linear(&xu, &iu).unwrap();
    assert_ne!(lm.log_likelihood(), lu.log_likelihood());

    // Dropping the excluded trials from the model instead (what the brief forbids) would change
    // what the model predicts for the trials after them: the learning on trials 5..14 matters.
    let mut dropped = unmarked.clone();
    let keep: Vec<usize> = (0..dropped.spans.len())
        .filter(|&i| {
            let (s, t) = unmarked.label(i);
            !(s == "2026-03-01" && ((5..=14).contains(&t) || t == 20 || t == 21))
        })
        .collect();
    let remap: std::collections::HashMap<usize, usize> = keep
        .iter()
        .enumerate()
        .map(|(new, &old)| (old, new))
        .collect();
    dropped.spans = keep.iter().map(|&i| unmarked.spans[i].clone()).collect();
    dropped.trial_numbers = keep.iter().map(|&i| unmarked.trial_numbers[i]).collect();
    dropped.points = unmarked
        .points
        .iter()
        .filter_map(|p| {
            let mut p = p.clone();
            p.span = *remap.get(&p.span)?;
            Some(p)
        })
        .collect();
    let xd = Problem::new(&dropped, model, false, 0.0).predictors(&params);
    // (The reward window: with λ = 0 the CSC value reaches the cue only after ~30 trials.)
    let reward_delta = |d: &trialdesk::fit::FitData, x: &[f64], trial: i64| {
        d.points
            .iter()
            .zip(x)
            .filter(|(p, _)| d.label(p.span) == ("2026-03-01", trial) && p.kind.name() == "reward")
            .map(|(_, &v)| v)
            .next()
    };
    let differs = (22..40).any(|t| {
        match (
            reward_delta(&marked, &xm, t),
            reward_delta(&dropped, &xd, t),
        ) {
            (Some(a), Some(b)) => (a - b).abs() > 1e-3,
            _ => false,
        }
    });
    assert!(
        differs,
        "the excluded trials' learning must show in later predictions"
    );
}

#[test]
fn ignore_marks_fits_every_window_and_differs() {
    let spec = spec();
    let subj = subject(&spec);
    let opts = ObsOptions::default();
    let mut obs = observations(&spec, &subj, &opts);
    // Make the marked trials look like artifacts, so the two fits must differ.
    for o in obs
        .iter_mut()
        .filter(|o| o.session == 0 && (4..14).contains(&o.trial))
    {
        o.cue = o.cue.map(|v| v + 40.0);
    }
    let marked = build(&subj, &obs, &opts, spec.dt, &marks(), false);
    let ignoring = build(&subj, &obs, &opts, spec.dt, &marks(), true);
    assert!(ignoring.points.iter().all(|p| !p.excluded));
    assert!(ignoring.exclusions.ignore_marks);
    assert_eq!(
        ignoring.exclusions.n_trials, 12,
        "the count is still reported"
    );
    assert_eq!(marked.ignoring_marks().points, ignoring.points);

    let fo = FitOptions {
        bootstrap: 0,
        compare: false,
        ..Default::default()
    };
    let a = run_fit(&marked, &fo, &NoProgress).unwrap();
    let b = run_fit(&ignoring, &fo, &NoProgress).unwrap();
    let n_excluded_windows = marked.points.iter().filter(|p| p.excluded).count();
    assert!(n_excluded_windows >= 12);
    assert_eq!(a.n_included + n_excluded_windows, b.n_included);
    assert!(
        b.rmse > a.rmse * 1.5,
        "artifacts inflate the error: {} vs {}",
        b.rmse,
        a.rmse
    );
    let w = a
        .without_exclusions
        .as_ref()
        .expect("marked fit also reports the fit without exclusions");
    assert!((w.log_likelihood - b.best.log_likelihood).abs() < 1.0);
    assert!(b.without_exclusions.is_none());
}

/// The report's "all windows" fit and a separate `--ignore-marks` run see the same data and
/// make the same multi-start search, so they land on the same optimum (a warm start from the
/// marked fit could stop in another mode of a multimodal likelihood).
#[test]
fn all_windows_fit_in_the_report_equals_a_separate_ignore_marks_fit() {
    let spec = spec();
    let subj = subject(&spec);
    let opts = ObsOptions::default();
    let obs = observations(&spec, &subj, &opts);
    let data = build(&subj, &obs, &opts, spec.dt, &marks(), false);
    let fit_opts = FitOptions {
        lambda: Some(0.0),
        bootstrap: 0,
        compare: false,
        ..Default::default()
    };
    let marked = run_fit(&data, &fit_opts, &NoProgress).unwrap();
    let inside = marked.without_exclusions.expect("the all-windows fit");
    let separate = run_fit(&data.ignoring_marks(), &fit_opts, &NoProgress).unwrap();
    assert_eq!(inside.params, separate.best.params);
    assert_eq!(inside.log_likelihood, separate.best.log_likelihood);
    assert_ne!(
        marked.best.params, separate.best.params,
        "the marks matter here"
    );
}

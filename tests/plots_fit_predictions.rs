//! `trialdesk plot` recomputes the per-trial predictions from a saved fit (parameters, gain,
//! baselines) instead of reading the fitter's trials.csv. That recomputation must give what
//! the fitter itself predicted for every window, excluded ones included.

use trialdesk::fit::synthetic::{fit_data, SyntheticSpec};
use trialdesk::fit::{run_fit, FitOptions, NoProgress};
use trialdesk::model::{self, TdParams};
use trialdesk::plots::fit_trials::{predictions, rows_from};

#[test]
fn predictions_from_saved_parameters_match_the_fitters_own() {
    let spec = SyntheticSpec {
        sessions: 3,
        trials_per_session: 60,
        alpha: 0.08,
        ..Default::default()
    };
    let (_, mut data) = fit_data(&spec);
    // Exclude a few windows: they are still predicted (the model ran over them).
    for p in data.points.iter_mut().step_by(17) {
        p.excluded = true;
    }
    let opts = FitOptions {
        bootstrap: 0,
        compare: false,
        ..FitOptions::default()
    };
    let out = run_fit(&data, &opts, &NoProgress).unwrap();
    let p = out.best.params;
    let run = model::run(
        &data.spans,
        data.n_cues,
        &TdParams {
            alpha: p.alpha,
            gamma: p.gamma,
            lambda: p.lambda,
            dt: data.dt,
            representation: spec.representation,
        },
    );
    let lin = out.best.linear;
    let ours = predictions(&data, &run, lin.gain, lin.baselines);
    assert_eq!(ours.len(), out.predicted.len());
    for (i, (a, b)) in ours.iter().zip(&out.predicted).enumerate() {
        assert!(
            (a - b).abs() <= 1e-9 * b.abs().max(1.0),
            "point {i}: {a} vs {b}"
        );
    }
    let rows = rows_from(&data, &ours);
    assert_eq!(
        rows.iter().filter(|r| r.excluded).count(),
        data.points.len().div_ceil(17)
    );
    // A window whose baseline was not fitted has no prediction (NaN, drawn as a gap).
    let none = predictions(&data, &run, lin.gain, [None, lin.baselines[1]]);
    assert!(data
        .points
        .iter()
        .zip(&none)
        .all(|(pt, v)| v.is_nan() == (pt.kind == trialdesk::fit::WindowKind::Cue)));
}

//! The saved fit (`trialdesk-fit.toml`): round trip, absent file, unreadable file, and the
//! sensor kernel of photometry fits carried through to rebuilt predictions.

use trialdesk::fit::dataset::{self, SensorKernel};
use trialdesk::fit::saved::{
    fitted_window_deltas, load_saved, save, Baselines, SavedFit, SAVED_FIT_FILE,
};
use trialdesk::fit::synthetic::{fit_data, SyntheticSpec};
use trialdesk::fit::{run_fit, FitOptions, NoProgress, WindowKind};
use trialdesk::model::{self, TdParams};
use trialdesk::obs::{ObsOptions, Signal};

fn example() -> SavedFit {
    SavedFit {
        alpha: 0.0731,
        gamma: 0.9801,
        lambda: 0.0,
        dt: 0.05,
        representation: "csc".into(),
        gain: 3.25,
        baselines: Baselines {
            cue: Some(0.4),
            reward: Some(-0.1),
        },
        fitted_at: "2026-03-10T08:00:00Z".into(),
        n_excluded: 3,
        ignore_marks: false,
        lambda_fitted: false,
        log_likelihood: Some(-1234.5),
        n_observations: Some(800),
        signal: None,
        unit: Some("u2".into()),
        latency_s: Some(0.05),
        cue_window_s: Some([0.05, 0.35]),
        reward_window_s: Some([0.05, 0.35]),
        baseline_window_s: Some([-1.0, 0.0]),
        sensor_rise_s: None,
        sensor_decay_s: None,
        likelihood: None,
        gain_neg: None,
        zscore: None,
        control_fit: None,
        scale_by: None,
        lick: None,
        groups: Vec::new(),
    }
}

#[test]
fn round_trip_and_absent() {
    let dir = tempfile::tempdir().unwrap();
    assert!(load_saved(dir.path()).is_none());
    let path = save(dir.path(), &example()).unwrap();
    assert_eq!(path, dir.path().join(SAVED_FIT_FILE));
    assert_eq!(load_saved(dir.path()).unwrap().unwrap(), example());
    // No temporary file left behind.
    let names: Vec<_> = std::fs::read_dir(dir.path()).unwrap().collect();
    assert_eq!(names.len(), 1);
}

#[test]
fn minimal_file_from_an_older_version_loads() {
    let dir = tempfile::tempdir().unwrap();
    std::fs::write(
        dir.path().join(SAVED_FIT_FILE),
        "alpha = 0.1\ngamma = 0.98\nlambda = 0.0\ndt = 0.05\nrepresentation = \"csc\"\n\
         gain = 2.0\nfitted_at = \"2026-03-10T08:00:00Z\"\nn_excluded = 0\nignore_marks = true\n\
         [baselines]\ncue = 0.5\n",
    )
    .unwrap();
    let f = load_saved(dir.path()).unwrap().unwrap();
    assert_eq!(f.baselines.reward, None);
    assert!(f.ignore_marks);
}

#[test]
fn broken_file_is_an_error_naming_the_file() {
    let dir = tempfile::tempdir().unwrap();
    std::fs::write(dir.path().join(SAVED_FIT_FILE), "alpha = \"fast\"\n").unwrap();
    let err = load_saved(dir.path()).unwrap().unwrap_err().to_string();
    assert!(err.contains(SAVED_FIT_FILE), "{err}");
}

#[test]
fn sensor_kernel_round_trips_and_older_files_have_none() {
    let dir = tempfile::tempdir().unwrap();
    let with_kernel = SavedFit {
        sensor_rise_s: Some(0.1),
        sensor_decay_s: Some(0.6),
        likelihood: None,
        ..example()
    };
    save(dir.path(), &with_kernel).unwrap();
    let text = std::fs::read_to_string(dir.path().join(SAVED_FIT_FILE)).unwrap();
    assert!(text.contains("sensor_decay_s = 0.6"), "{text}");
    assert_eq!(load_saved(dir.path()).unwrap().unwrap(), with_kernel);
    // A plain-sum fit writes no kernel lines, and a file without them reads as no kernel.
    save(dir.path(), &example()).unwrap();
    let text = std::fs::read_to_string(dir.path().join(SAVED_FIT_FILE)).unwrap();
    assert!(!text.contains("sensor_"), "{text}");
    let f = load_saved(dir.path()).unwrap().unwrap();
    assert_eq!((f.sensor_rise_s, f.sensor_decay_s), (None, None));
    assert_eq!(f.sensor_kernel(&ObsOptions::photometry()), None);
}

/// A kernel fit's predictions, rebuilt from the saved numbers the way `plot`, `summary` and
/// the reviewer rebuild them, equal what `run_fit` predicted.
#[test]
fn predictions_rebuilt_from_a_kernel_fit_match_the_fitters_own() {
    let spec = SyntheticSpec {
        sessions: 2,
        trials_per_session: 50,
        alpha: 0.08,
        ..Default::default()
    };
    let (_, plain) = fit_data(&spec);
    // The synthetic points use the default windows; only the signal differs for photometry.
    let obs = ObsOptions {
        signal: Signal::Photometry,
        ..ObsOptions::default()
    };
    let kernel = SensorKernel {
        rise_s: 0.1,
        decay_s: 0.6,
        latency_s: obs.latency,
    };
    let data = dataset::with_sensor_kernel(plain.clone(), kernel, &obs);
    let opts = FitOptions {
        bootstrap: 0,
        compare: false,
        ..FitOptions::default()
    };
    let out = run_fit(&data, &opts, &NoProgress).unwrap();
    let (p, lin) = (out.best.params, out.best.linear);
    let fit = SavedFit {
        alpha: p.alpha,
        gamma: p.gamma,
        lambda: p.lambda,
        dt: data.dt,
        representation: out.model.name().to_string(),
        gain: lin.gain,
        baselines: Baselines {
            cue: lin.baselines[0],
            reward: lin.baselines[1],
        },
        sensor_rise_s: Some(kernel.rise_s),
        sensor_decay_s: Some(kernel.decay_s),
        likelihood: None,
        ..example()
    };
    assert_eq!(fit.sensor_kernel(&obs), Some(kernel));
    // The kernel applies to photometry only.
    assert_eq!(fit.sensor_kernel(&ObsOptions::default()), None);

    let close = |a: f64, b: f64| (a - b).abs() <= 1e-9 * b.abs().max(1.0);
    let rebuilt = fit.predictions(&fit.fit_data(plain.clone(), &obs)).unwrap();
    assert_eq!(rebuilt.len(), out.predicted.len());
    for (i, (a, b)) in rebuilt.iter().zip(&out.predicted).enumerate() {
        assert!(close(*a, *b), "point {i}: {a} vs {b}");
    }
    // Without the kernel the rebuild is the plain sum, which differs: the test can fail.
    let plain_fit = SavedFit {
        sensor_rise_s: None,
        sensor_decay_s: None,
        likelihood: None,
        ..fit.clone()
    };
    let unweighted = plain_fit
        .predictions(&plain_fit.fit_data(plain.clone(), &obs))
        .unwrap();
    assert!(unweighted
        .iter()
        .zip(&out.predicted)
        .any(|(a, b)| !close(*a, *b)));

    // Per-trial window δ (reviewer, summary, learning curves) give the same predictions.
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
    for (i, pt) in data.points.iter().enumerate() {
        let w = fitted_window_deltas(
            fit.sensor_kernel(&obs),
            &data.spans[pt.span],
            run.trial_delta(pt.span),
            &obs,
            data.dt,
        );
        let x = match pt.kind {
            WindowKind::Cue => w.cue,
            WindowKind::Reward => w.reward,
            WindowKind::Licks => unreachable!("no lick windows in this fit"),
        }
        .expect("the point's event is in its span");
        let predicted = lin.predict(pt.kind, x);
        assert!(
            close(predicted, out.predicted[i]),
            "point {i}: {predicted} vs {}",
            out.predicted[i]
        );
    }
}

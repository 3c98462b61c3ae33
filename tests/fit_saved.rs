//! The saved fit (`trialdesk-fit.toml`): round trip, absent file, unreadable file.

use trialdesk::fit::saved::{load_saved, save, Baselines, SavedFit, SAVED_FIT_FILE};

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
        unit: Some("u2".into()),
        latency_s: Some(0.05),
        cue_window_s: Some([0.05, 0.35]),
        reward_window_s: Some([0.05, 0.35]),
        baseline_window_s: Some([-1.0, 0.0]),
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

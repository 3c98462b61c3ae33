//! Observations of a file-loaded subject against values computed independently by numpy
//! (tests/fixtures/obs/make_fixture.py, numpy searchsorted counts and boolean-mask means).

use std::collections::HashMap;
use std::path::Path;
use trialdesk::data::load;
use trialdesk::model::layout_subject;
use trialdesk::obs::{
    observe, observe_trial, photometry_activity, ObsOptions, SessionActivity, TrialKind,
};

const FIXTURE: &str = "tests/fixtures/obs";

/// (session, trial number, signal) → (kind, cue, reward, lick rate).
type Expected = HashMap<(String, i64, String), (String, Option<f64>, Option<f64>, Option<f64>)>;

fn expected() -> Expected {
    let mut r = csv::Reader::from_path(Path::new(FIXTURE).join("expected_trials.csv")).unwrap();
    let num = |s: &str| (!s.is_empty()).then(|| s.parse::<f64>().unwrap());
    r.records()
        .map(|rec| {
            let rec = rec.unwrap();
            (
                (
                    rec[0].to_string(),
                    rec[1].parse().unwrap(),
                    rec[3].to_string(),
                ),
                (rec[2].to_string(), num(&rec[4]), num(&rec[5]), num(&rec[6])),
            )
        })
        .collect()
}

fn same(a: Option<f64>, b: Option<f64>) -> bool {
    match (a, b) {
        (None, None) => true,
        // Spike rates are exact ratios of counts; photometry means differ only by summation order.
        (Some(x), Some(y)) => (x - y).abs() <= 1e-9 * (1.0 + y.abs()),
        _ => false,
    }
}

#[test]
fn spike_observations_match_numpy() {
    let subject = load(&Path::new(FIXTURE).join("m-007")).unwrap().subject;
    let want = expected();
    let obs = observe(&subject, &ObsOptions::default()).unwrap();
    assert_eq!(obs.len(), 48);
    for o in &obs {
        let s = &subject.sessions[o.session];
        let key = (
            s.name.clone(),
            s.trials[o.trial].number,
            "spikes".to_string(),
        );
        let (kind, cue, reward, lick) = want.get(&key).expect("trial in expected table");
        assert_eq!(o.kind.name(), kind, "{key:?}");
        assert!(same(o.cue, *cue), "{key:?} cue {:?} vs {cue:?}", o.cue);
        assert!(
            same(o.reward, *reward),
            "{key:?} reward {:?} vs {reward:?}",
            o.reward
        );
        assert!(
            same(o.anticipatory_lick_rate, *lick),
            "{key:?} licks {:?} vs {lick:?}",
            o.anticipatory_lick_rate
        );
        assert_eq!(o.omission, o.kind == TrialKind::Omission);
    }
}

/// The raw `signal` column, built directly so this check of the window arithmetic does not
/// depend on which preprocessing `Signal::Photometry` applies.
#[test]
fn photometry_window_means_match_numpy_on_the_raw_signal() {
    let subject = load(&Path::new(FIXTURE).join("m-007")).unwrap().subject;
    let want = expected();
    let opts = ObsOptions::photometry();
    let mut checked = 0;
    for span in layout_subject(&subject, 0.05) {
        let s = &subject.sessions[span.session];
        let ph = s.photometry.as_ref().unwrap();
        let act = SessionActivity::from_samples(&ph.time_s, ph.signal.clone());
        let o = observe_trial(s, &s.trials[span.trial], &act, &opts).unwrap();
        let key = (
            s.name.clone(),
            s.trials[span.trial].number,
            "photometry".into(),
        );
        let (_, cue, reward, _) = &want[&key];
        assert!(same(o.cue, *cue), "{key:?} cue {:?} vs {cue:?}", o.cue);
        assert!(
            same(o.reward, *reward),
            "{key:?} reward {:?} vs {reward:?}",
            o.reward
        );
        checked += 1;
    }
    assert_eq!(checked, 48);
}

/// `Signal::Photometry` goes through the seam: `observe` equals the window rules applied to
/// whatever `photometry_activity` returns (ΔF/F once preprocessing is in place).
#[test]
fn photometry_signal_goes_through_photometry_activity() {
    let subject = load(&Path::new(FIXTURE).join("m-007")).unwrap().subject;
    let opts = ObsOptions::photometry();
    let obs = observe(&subject, &opts).unwrap();
    assert_eq!(obs.len(), 48);
    for (si, s) in subject.sessions.iter().enumerate() {
        let ph = s.photometry.as_ref().unwrap();
        let act = SessionActivity::from_samples(&ph.time_s, photometry_activity(s).unwrap());
        for o in obs.iter().filter(|o| o.session == si) {
            let want = observe_trial(s, &s.trials[o.trial], &act, &opts).unwrap();
            assert!(
                same(o.cue, want.cue) && same(o.reward, want.reward),
                "{o:?} vs {want:?}"
            );
        }
    }
}

//! Unit checks on closed forms and on the errors users see. Fixture comparisons against
//! numpy/scipy/statsmodels live in tests/photometry_fixtures.rs.

use super::*;

fn rec(time: Vec<f64>, signal: Vec<f64>, control: Option<Vec<f64>>) -> Photometry {
    Photometry {
        time_s: time,
        signal,
        control,
    }
}

fn ols_opts() -> PreprocessOptions {
    PreprocessOptions {
        fit: ControlFit::Ols,
        ..PreprocessOptions::default()
    }
}

#[test]
fn exact_line_gives_zero_dff_and_unit_r_squared() {
    // Closed form: signal = 0.5 + 2·control exactly → a = 0.5, b = 2, ΔF/F = 0, R² = 1.
    let t: Vec<f64> = (0..50).map(|i| i as f64 * 0.05).collect();
    let x: Vec<f64> = (0..50)
        .map(|i| 1.0 + (i as f64 * 0.7).sin() * 0.1)
        .collect();
    let y: Vec<f64> = x.iter().map(|x| 0.5 + 2.0 * x).collect();
    for opts in [ols_opts(), PreprocessOptions::default()] {
        let p = preprocess(&rec(t.clone(), y.clone(), Some(x.clone())), &opts).unwrap();
        let BaselineFit::Control(l) = p.baseline else {
            panic!("expected a control fit")
        };
        assert!((l.intercept - 0.5).abs() < 1e-12, "{l:?}");
        assert!((l.slope - 2.0).abs() < 1e-12, "{l:?}");
        assert!((p.r_squared - 1.0).abs() < 1e-12);
        assert!(p.dff.iter().all(|d| d.abs() < 1e-12));
    }
}

#[test]
fn dff_is_relative_to_fitted_control() {
    // Closed form: two-point control values {1, 3}, signal {2, 6} on them except one sample
    // raised by 10 %: OLS still maps the others near the line and the raised sample is positive.
    let t: Vec<f64> = (0..40).map(f64::from).collect();
    let x: Vec<f64> = (0..40)
        .map(|i| if i % 2 == 0 { 1.0 } else { 3.0 })
        .collect();
    let mut y: Vec<f64> = x.iter().map(|x| 2.0 * x).collect();
    y[10] *= 1.1;
    let p = preprocess(&rec(t, y, Some(x)), &PreprocessOptions::default()).unwrap();
    // The robust fit ignores the single raised sample: F̂ = 2·x, ΔF/F[10] = 0.1 exactly-ish.
    assert!((p.dff[10] - 0.1).abs() < 1e-9, "{}", p.dff[10]);
    assert!(p.dff[11].abs() < 1e-9);
}

#[test]
fn baseline_near_zero_is_a_clear_error_not_inf() {
    // A mean-centred signal: F̂ crosses zero.
    let t: Vec<f64> = (0..20).map(f64::from).collect();
    let x: Vec<f64> = (0..20).map(|i| (i as f64 * 0.9).sin()).collect();
    let y: Vec<f64> = x.iter().map(|x| 0.8 * x + 0.01).collect();
    let e = preprocess(&rec(t, y, Some(x)), &ols_opts()).unwrap_err();
    assert!(matches!(e, PhotometryError::BaselineNearZero { .. }), "{e}");
    let msg = e.to_string();
    assert!(
        msg.contains("sample") && msg.contains("baseline-subtracted"),
        "{msg}"
    );
}

#[test]
fn bad_input_names_channel_sample_and_time() {
    let t = vec![0.0, 0.1, 0.2, 0.3];
    let e = preprocess(
        &rec(t.clone(), vec![1.0, 2.0, f64::NAN, 1.0], Some(vec![1.0; 4])),
        &ols_opts(),
    )
    .unwrap_err();
    assert_eq!(
        e.to_string(),
        "photometry: signal at sample 2 (time 0.2 s) is NaN, expected a finite number"
    );
    let e = preprocess(&rec(t.clone(), vec![1.0; 3], None), &ols_opts()).unwrap_err();
    assert_eq!(
        e.to_string(),
        "photometry: the signal column has 3 samples but time_s has 4"
    );
    let e = preprocess(
        &rec(vec![0.0, 0.2, 0.1, 0.3], vec![1.0, 2.0, 1.0, 2.0], None),
        &ols_opts(),
    )
    .unwrap_err();
    assert!(
        matches!(e, PhotometryError::TimeBackwards { index: 2, .. }),
        "{e}"
    );
    let e = preprocess(
        &rec(t.clone(), vec![1.0, 2.0, 1.5, 1.0], Some(vec![2.0; 4])),
        &ols_opts(),
    )
    .unwrap_err();
    assert!(e.to_string().contains("control channel is constant"), "{e}");
    let e = preprocess(
        &rec(t, vec![3.0; 4], Some(vec![2.0, 1.0, 2.0, 1.0])),
        &ols_opts(),
    )
    .unwrap_err();
    assert!(e.to_string().contains("signal channel is constant"), "{e}");
}

#[test]
fn sliding_window_longer_than_session_equals_whole_session_ols() {
    let t: Vec<f64> = (0..300).map(|i| i as f64 * 0.1).collect();
    let x: Vec<f64> = (0..300)
        .map(|i| 2.0 + (i as f64 * 0.37).sin() * 0.2 + (i as f64 * 0.011).cos() * 0.1)
        .collect();
    let y: Vec<f64> = x
        .iter()
        .enumerate()
        .map(|(i, x)| 1.0 + 1.3 * x + 0.05 * (i as f64 * 1.7).sin())
        .collect();
    let r = rec(t, y, Some(x));
    let whole = preprocess(&r, &ols_opts()).unwrap();
    let opts = PreprocessOptions {
        scope: FitScope::Sliding { window_s: 1000.0 },
        ..ols_opts()
    };
    let slid = preprocess(&r, &opts).unwrap();
    for (a, b) in whole.dff.iter().zip(&slid.dff) {
        assert!((a - b).abs() < 1e-12, "{a} vs {b}");
    }
    assert!((whole.r_squared - slid.r_squared).abs() < 1e-12);
}

#[test]
fn sliding_window_follows_a_drifting_coupling() {
    // The slope drifts from 1 to 2 across the session: a whole-session line leaves a large
    // residual, a 20 s window a small one (largest at the session edges, where the window is
    // one-sided and its mean slope lags the local one).
    let n = 6000;
    let t: Vec<f64> = (0..n).map(|i| i as f64 * 0.05).collect();
    let x: Vec<f64> = (0..n)
        .map(|i| 2.0 + 0.3 * (i as f64 * 0.21).sin())
        .collect();
    let y: Vec<f64> = (0..n)
        .map(|i| 0.5 + (1.0 + i as f64 / n as f64) * x[i])
        .collect();
    let r = rec(t, y, Some(x));
    let whole = preprocess(&r, &ols_opts()).unwrap();
    let opts = PreprocessOptions {
        scope: FitScope::Sliding { window_s: 20.0 },
        ..ols_opts()
    };
    let slid = preprocess(&r, &opts).unwrap();
    let worst = |d: &[f64]| d.iter().fold(0.0f64, |m, v| m.max(v.abs()));
    let (w, s) = (worst(&whole.dff), worst(&slid.dff));
    assert!(
        w > 0.1 && s < 0.02 && s < w / 10.0,
        "whole {w}, sliding {s}"
    );
    let BaselineFit::SlidingControl(s) = slid.baseline else {
        panic!()
    };
    assert!(s.slope_min < 1.1 && s.slope_max > 1.9, "{s:?}");
}

#[test]
fn bleaching_detrend_recovers_a_noise_free_double_exponential() {
    // Closed form: the generating curve itself, sampled at 10 Hz for 20 min.
    let t: Vec<f64> = (0..12_000).map(|i| i as f64 * 0.1).collect();
    let curve = |t: f64| 1.5 + 0.4 * (-t / 30.0).exp() + 0.3 * (-t / 400.0).exp();
    let y: Vec<f64> = t.iter().map(|&t| curve(t)).collect();
    let p = preprocess(&rec(t.clone(), y, None), &PreprocessOptions::default()).unwrap();
    let BaselineFit::Bleaching(b) = &p.baseline else {
        panic!()
    };
    assert_eq!(b.terms.len(), 2);
    // Binned fit (2000 means of 6 samples): the baseline matches the curve closely.
    let worst = t
        .iter()
        .map(|&t| (b.at(t) - curve(t)).abs())
        .fold(0.0f64, f64::max);
    assert!(worst < 2e-4, "worst baseline error {worst}");
    assert!(p.method.contains("double-exponential"), "{}", p.method);
}

#[test]
fn method_string_names_fit_scope_and_zscore() {
    let t: Vec<f64> = (0..30).map(f64::from).collect();
    let x: Vec<f64> = (0..30).map(|i| 1.0 + 0.1 * (i as f64).sin()).collect();
    let y: Vec<f64> = x.iter().map(|x| 1.0 + x).collect();
    let p = preprocess(&rec(t, y, Some(x)), &PreprocessOptions::default()).unwrap();
    assert!(
        p.method.contains("IRLS (Tukey bisquare, c = 4.685)"),
        "{}",
        p.method
    );
    assert!(p.method.contains("whole session"), "{}", p.method);
    assert!(p.method.contains("baseline [-1, 0) s"), "{}", p.method);
    let names: Vec<String> = p.coefficients().into_iter().map(|(n, _)| n).collect();
    assert_eq!(names, ["intercept", "slope", "robust_scale", "r_squared"]);
}

#[test]
fn bracketed_median_equals_full_select() {
    // Closed form reference: the full sort's middle (mean of the two middles for even n).
    let mut state: u64 = 12;
    let mut next = move || {
        state ^= state << 13;
        state ^= state >> 7;
        state ^= state << 17;
        (state >> 11) as f64 / (1u64 << 53) as f64
    };
    for n in [1usize, 2, 3, 4, 5, 10, 11, 100, 101, 1000] {
        let values: Vec<f64> = (0..n).map(|_| next()).collect();
        let mut sorted = values.clone();
        sorted.sort_by(f64::total_cmp);
        let want = if n % 2 == 1 {
            sorted[n / 2]
        } else {
            0.5 * (sorted[n / 2 - 1] + sorted[n / 2])
        };
        for hint in [
            None,
            Some(want),
            Some(want * 1.03),
            Some(want * 0.5),
            Some(10.0),
        ] {
            let mut scratch = vec![0.0; n];
            let got = median::median_abs(n, |i| values[i], &mut scratch, hint);
            assert_eq!(got, want, "n = {n}, hint = {hint:?}");
        }
    }
}

//! Photometry preprocessing against independent reference implementations.
//!
//! Inputs and expected values come from tests/fixtures/photometry/make_fixtures.py (numpy,
//! scipy, statsmodels; random seed 12); `expected.csv` names the source of every value, and each
//! check below repeats it with its tolerance.

use std::collections::HashMap;
use std::path::PathBuf;

use trialdesk::data::Photometry;
use trialdesk::photometry::{
    bleach::{fit_bleaching, BleachModel, BleachOptions},
    median, preprocess, zscore_session, zscore_to_baseline, BaselineFit, ControlFit, FitScope,
    PreprocessOptions, Processed, RobustWeight, ZScoreMode,
};

fn fixture(name: &str) -> PathBuf {
    PathBuf::from(env!("CARGO_MANIFEST_DIR"))
        .join("tests/fixtures/photometry")
        .join(name)
}

/// A numeric CSV with a header row, as columns by name.
fn columns(name: &str) -> HashMap<String, Vec<f64>> {
    let text = std::fs::read_to_string(fixture(name)).unwrap();
    let mut lines = text.lines();
    let header: Vec<String> = lines
        .next()
        .unwrap()
        .split(',')
        .map(str::to_string)
        .collect();
    let mut cols = vec![Vec::new(); header.len()];
    for line in lines {
        for (c, v) in cols.iter_mut().zip(line.split(',')) {
            c.push(v.parse::<f64>().unwrap());
        }
    }
    header.into_iter().zip(cols).collect()
}

/// expected.csv: name → value.
fn expected() -> HashMap<String, f64> {
    let text = std::fs::read_to_string(fixture("expected.csv")).unwrap();
    text.lines()
        .skip(1)
        .filter_map(|l| {
            let mut it = l.splitn(3, ',');
            let name = it.next()?.to_string();
            let value = it.next()?.parse::<f64>().ok()?;
            Some((name, value))
        })
        .collect()
}

fn recording() -> (Photometry, Vec<f64>) {
    let mut c = columns("recording.csv");
    let p = Photometry {
        time_s: c.remove("time_s").unwrap(),
        signal: c.remove("signal").unwrap(),
        control: c.remove("control"),
    };
    (p, c.remove("artifact").unwrap())
}

fn close(what: &str, got: f64, want: f64, tol: f64) {
    assert!(
        (got - want).abs() <= tol,
        "{what}: got {got}, expected {want} (tolerance {tol}, diff {})",
        (got - want).abs()
    );
}

fn close_all(what: &str, got: &[f64], want: &[f64], tol: f64) {
    assert_eq!(got.len(), want.len(), "{what}: length");
    for (i, (g, w)) in got.iter().zip(want).enumerate() {
        close(&format!("{what}[{i}]"), *g, *w, tol);
    }
}

fn pearson(a: &[f64], b: &[f64]) -> f64 {
    let n = a.len() as f64;
    let (ma, mb) = (a.iter().sum::<f64>() / n, b.iter().sum::<f64>() / n);
    let (mut sab, mut saa, mut sbb) = (0.0, 0.0, 0.0);
    for (x, y) in a.iter().zip(b) {
        sab += (x - ma) * (y - mb);
        saa += (x - ma) * (x - ma);
        sbb += (y - mb) * (y - mb);
    }
    sab / (saa * sbb).sqrt()
}

fn run(p: &Photometry, fit: ControlFit, scope: FitScope) -> Processed {
    let opts = PreprocessOptions {
        fit,
        scope,
        ..PreprocessOptions::default()
    };
    preprocess(p, &opts).unwrap()
}

fn line(p: &Processed) -> trialdesk::photometry::LineFit {
    match p.baseline {
        BaselineFit::Control(l) => l,
        ref other => panic!("expected a whole-session control fit, got {other:?}"),
    }
}

#[test]
fn ols_matches_numpy_lstsq_and_scipy_linregress() {
    let (p, _) = recording();
    let e = expected();
    let out = run(&p, ControlFit::Ols, FitScope::WholeSession);
    let l = line(&out);
    // Source: numpy.linalg.lstsq (QR/SVD) vs our one-pass shifted sums. Tolerance 1e-10: the
    // two differ only by rounding on a well-conditioned 3000-sample problem.
    close("intercept vs lstsq", l.intercept, e["ols_intercept"], 1e-10);
    close("slope vs lstsq", l.slope, e["ols_slope"], 1e-10);
    // Source: scipy.stats.linregress (independent formula), same tolerance.
    close(
        "intercept vs linregress",
        l.intercept,
        e["linregress_intercept"],
        1e-10,
    );
    close("slope vs linregress", l.slope, e["linregress_slope"], 1e-10);
    // Source: scipy.stats.linregress rvalue², tolerance 1e-10.
    close("R²", out.r_squared, e["ols_r_squared"], 1e-10);
    // Source: numpy ΔF/F from the lstsq line, per sample, tolerance 1e-10.
    close_all(
        "ΔF/F (OLS)",
        &out.dff,
        &columns("expected_dff.csv")["dff_ols"],
        1e-10,
    );
}

#[test]
fn irls_matches_statsmodels_rlm_tukey_and_huber() {
    let (p, _) = recording();
    let e = expected();
    let dff = columns("expected_dff.csv");
    for (weight, key, col) in [
        (RobustWeight::TUKEY_DEFAULT, "tukey", "dff_tukey"),
        (RobustWeight::HUBER_DEFAULT, "huber", "dff_huber"),
    ] {
        let out = run(&p, ControlFit::Irls(weight), FitScope::WholeSession);
        let l = line(&out);
        assert!(l.converged, "{key}: IRLS did not converge: {l:?}");
        // Source: statsmodels RLM (same IRLS fixed point, MAD scale about 0), iterated to
        // tol=1e-14. Tolerance 1e-9: both stop at a converged fixed point; the difference is
        // the stopping rule.
        close(
            &format!("{key} intercept"),
            l.intercept,
            e[&format!("{key}_intercept")],
            1e-9,
        );
        close(
            &format!("{key} slope"),
            l.slope,
            e[&format!("{key}_slope")],
            1e-9,
        );
        close(
            &format!("{key} scale"),
            l.robust_scale.unwrap(),
            e[&format!("{key}_scale")],
            1e-9,
        );
        // Source: numpy ΔF/F from the RLM line, per sample, tolerance 1e-9.
        close_all(&format!("ΔF/F ({key})"), &out.dff, &dff[col], 1e-9);
    }
    // The robust line is not the OLS line here (the transients pull OLS): the check above
    // would fail for a fit that silently fell back to OLS.
    assert!((e["tukey_slope"] - e["ols_slope"]).abs() > 1e-3);
    let tukey = run(&p, ControlFit::default(), FitScope::WholeSession);
    // Source: numpy R² of the RLM line, tolerance 1e-9.
    close("tukey R²", tukey.r_squared, e["tukey_r_squared"], 1e-9);
}

#[test]
fn sliding_window_matches_brute_force_polyfit() {
    let (p, _) = recording();
    let e = expected();
    let out = run(&p, ControlFit::Ols, FitScope::Sliding { window_s: 20.0 });
    // Source: numpy.polyfit per sample over [t − 10, t + 10] s. Tolerance 1e-9: the running
    // sums add and remove 3000 samples, so rounding accumulates a little.
    let want = &columns("expected_dff.csv")["dff_sliding_ols_20s"];
    close_all("ΔF/F (sliding 20 s)", &out.dff, want, 1e-9);
    close(
        "sliding R²",
        out.r_squared,
        e["sliding_ols_20s_r_squared"],
        1e-9,
    );
}

#[test]
fn isosbestic_correction_removes_the_shared_motion_artifact() {
    let (p, artifact) = recording();
    let e = expected();
    let before = pearson(&p.signal, &artifact);
    // Source: numpy.corrcoef of the raw signal with the injected artifact, tolerance 1e-12.
    close(
        "corr(signal, artifact)",
        before,
        e["corr_artifact_signal"],
        1e-12,
    );
    for (fit, key) in [
        (ControlFit::Ols, "corr_artifact_dff_ols"),
        (ControlFit::default(), "corr_artifact_dff_tukey"),
    ] {
        let after = pearson(&run(&p, fit, FitScope::WholeSession).dff, &artifact);
        // Source: numpy.corrcoef of the reference ΔF/F with the artifact, tolerance 1e-8.
        close(key, after, e[key], 1e-8);
        // The demonstration itself: the artifact explains about half of the raw signal's
        // variance (r ≈ 0.74) and almost none of the corrected trace's.
        assert!(
            before > 0.7 && after.abs() < 0.1,
            "{key}: {before} → {after}"
        );
    }
}

#[test]
fn zscores_match_numpy() {
    let (p, _) = recording();
    let e = expected();
    let out = run(&p, ControlFit::default(), FitScope::WholeSession);
    for t0 in ["20.0", "50.0", "80.03"] {
        let z = zscore_to_baseline(&out.dff, &p.time_s, t0.parse().unwrap(), (-1.0, 0.0)).unwrap();
        let key = |k: &str| e[&format!("zscore_t0_{t0}_{k}")];
        // Source: numpy mean and std(ddof=1) over [t0 − 1, t0), tolerance 1e-9 (inherits the
        // ΔF/F tolerance of the Tukey fit).
        assert_eq!(z.samples as f64, key("samples"), "samples at t0 = {t0}");
        close(&format!("baseline mean at {t0}"), z.mean, key("mean"), 1e-9);
        close(&format!("baseline sd at {t0}"), z.sd, key("sd"), 1e-9);
    }
    let s = zscore_session(&out.dff).unwrap();
    // Source: numpy mean and std(ddof=1) of the whole trace, tolerance 1e-9.
    close("session mean", s.mean, e["zscore_session_mean"], 1e-9);
    close("session sd", s.sd, e["zscore_session_sd"], 1e-9);
    assert_eq!(
        ZScoreMode::default(),
        ZScoreMode::TrialBaseline {
            from: -1.0,
            to: 0.0
        }
    );
}

#[test]
fn bleaching_fits_match_scipy_curve_fit() {
    let mut c = columns("bleach.csv");
    let (t, y) = (c.remove("time_s").unwrap(), c.remove("signal").unwrap());
    let e = expected();
    // No binning (4000 samples ≤ max_points), so both minimise the same sum of squares.
    let opts = |model| BleachOptions {
        model,
        max_points: 5000,
    };
    let single = fit_bleaching(&t, &y, &opts(BleachModel::SingleExponential)).unwrap();
    let double = fit_bleaching(&t, &y, &opts(BleachModel::DoubleExponential)).unwrap();
    assert_eq!((single.terms.len(), double.terms.len()), (1, 2));
    // Source: scipy.optimize.curve_fit (Levenberg–Marquardt, tolerances 1e-15) vs our variable
    // projection + golden section on log τ. Tolerance: 1e-6 relative on each parameter — the
    // sum of squares is flat near its minimum, so the τ that minimises it is known only to
    // about √ε relative in either method.
    let rel = |what: &str, got: f64, key: &str| {
        let want = e[key];
        close(what, got, want, 1e-6 * want.abs());
    };
    rel("single offset", single.offset, "bleach1_offset");
    rel(
        "single amplitude",
        single.terms[0].amplitude,
        "bleach1_amplitude",
    );
    rel("single tau", single.terms[0].tau_s, "bleach1_tau_s");
    rel("double offset", double.offset, "bleach2_offset");
    rel(
        "double amplitude 1",
        double.terms[0].amplitude,
        "bleach2_amplitude_1",
    );
    rel("double tau 1", double.terms[0].tau_s, "bleach2_tau_s_1");
    rel(
        "double amplitude 2",
        double.terms[1].amplitude,
        "bleach2_amplitude_2",
    );
    rel("double tau 2", double.terms[1].tau_s, "bleach2_tau_s_2");

    // Through the entry point (default options, binned to 2000 points): the baseline stays
    // within 1e-3 of the curve_fit baseline everywhere (bin means of 2 samples of a smooth
    // curve lose almost nothing).
    let p = Photometry {
        time_s: t.clone(),
        signal: y.clone(),
        control: None,
    };
    let out = preprocess(&p, &PreprocessOptions::default()).unwrap();
    let BaselineFit::Bleaching(b) = &out.baseline else {
        panic!("expected a bleaching baseline")
    };
    for (i, &ti) in t.iter().enumerate() {
        let reference = e["bleach2_offset"]
            + e["bleach2_amplitude_1"] * (-ti / e["bleach2_tau_s_1"]).exp()
            + e["bleach2_amplitude_2"] * (-ti / e["bleach2_tau_s_2"]).exp();
        close(
            &format!("binned baseline at sample {i}"),
            b.at(ti),
            reference,
            1e-3,
        );
        close(
            &format!("ΔF/F at sample {i}"),
            out.dff[i],
            (y[i] - reference) / reference,
            1e-3,
        );
    }
}

#[test]
fn median_helper_matches_numpy_convention() {
    // Closed form: numpy.median averages the two middle values of an even count.
    let mut odd = [5.0, 1.0, 3.0];
    let mut even = [4.0, 1.0, 3.0, 2.0];
    assert_eq!(median::median_of(&mut odd), 3.0);
    assert_eq!(median::median_of(&mut even), 2.5);
}

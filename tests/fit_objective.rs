//! The fitter's closed-form parts against numpy/statsmodels values committed as fixtures with
//! the script that made them (tests/fixtures/fit/make_fixtures.py).

use std::collections::HashMap;
use std::path::PathBuf;
use trialdesk::fit::bootstrap::percentile_sorted;
use trialdesk::fit::objective::{aic, bic, gaussian_loglik, least_squares};
use trialdesk::fit::WindowKind;

fn fixture(name: &str) -> PathBuf {
    PathBuf::from(env!("CARGO_MANIFEST_DIR"))
        .join("tests/fixtures/fit")
        .join(name)
}

fn points() -> (Vec<f64>, Vec<f64>, Vec<WindowKind>) {
    let mut r = csv::Reader::from_path(fixture("ols_points.csv")).unwrap();
    let (mut x, mut y, mut k) = (vec![], vec![], vec![]);
    for row in r.records() {
        let row = row.unwrap();
        x.push(row[0].parse().unwrap());
        y.push(row[1].parse().unwrap());
        k.push(if &row[2] == "cue" {
            WindowKind::Cue
        } else {
            WindowKind::Reward
        });
    }
    (x, y, k)
}

fn expected() -> HashMap<String, f64> {
    let mut r = csv::Reader::from_path(fixture("ols_expected.csv")).unwrap();
    r.records()
        .map(|row| {
            let row = row.unwrap();
            (row[0].to_string(), row[1].parse().unwrap())
        })
        .collect()
}

fn close(a: f64, b: f64, what: &str) {
    assert!(
        (a - b).abs() <= 1e-9 * b.abs().max(1.0),
        "{what}: got {a}, statsmodels {b}"
    );
}

/// statsmodels OLS on all 57 points: coefficients, residual sum of squares, log-likelihood,
/// and AIC/BIC both with statsmodels' own k and with ours (k = 6).
#[test]
fn least_squares_and_likelihood_match_statsmodels() {
    let (x, y, k) = points();
    let e = expected();
    let idx: Vec<usize> = (0..x.len()).collect();
    let fit = least_squares(&x, &y, &k, &idx).unwrap();
    close(fit.gain, e["all_gain"], "gain");
    close(
        fit.baselines[0].unwrap(),
        e["all_baseline_cue"],
        "cue baseline",
    );
    close(
        fit.baselines[1].unwrap(),
        e["all_baseline_reward"],
        "reward baseline",
    );
    close(fit.rss, e["all_rss"], "rss");
    let ll = gaussian_loglik(fit.rss, fit.n);
    close(ll, e["all_llf"], "log-likelihood");
    close(
        fit.log_likelihood(),
        e["all_llf"],
        "log-likelihood via LinearFit",
    );
    close(
        aic(ll, e["all_sm_k"] as usize),
        e["all_sm_aic"],
        "AIC, statsmodels k",
    );
    close(
        bic(ll, e["all_sm_k"] as usize, fit.n),
        e["all_sm_bic"],
        "BIC, statsmodels k",
    );
    close(aic(ll, 6), e["all_aic_k6"], "AIC, k = 6");
    close(bic(ll, 6, fit.n), e["all_bic_k6"], "BIC, k = 6");
}

/// A bootstrap sample (indices with repeats) equals statsmodels on the duplicated rows.
#[test]
fn sample_with_repeats_matches_statsmodels_on_duplicated_rows() {
    let (x, y, k) = points();
    let e = expected();
    let mut r = csv::Reader::from_path(fixture("ols_sample.csv")).unwrap();
    let idx: Vec<usize> = r
        .records()
        .map(|row| row.unwrap()[0].parse().unwrap())
        .collect();
    let fit = least_squares(&x, &y, &k, &idx).unwrap();
    close(fit.gain, e["sample_gain"], "gain");
    close(
        fit.baselines[0].unwrap(),
        e["sample_baseline_cue"],
        "cue baseline",
    );
    close(
        fit.baselines[1].unwrap(),
        e["sample_baseline_reward"],
        "reward baseline",
    );
    close(fit.log_likelihood(), e["sample_llf"], "log-likelihood");
    close(
        bic(fit.log_likelihood(), 6, fit.n),
        e["sample_bic_k6"],
        "BIC, k = 6",
    );
}

/// Only cue windows: one baseline (statsmodels with a constant), the reward baseline absent.
#[test]
fn single_window_kind_has_one_baseline() {
    let (x, y, k) = points();
    let e = expected();
    let idx: Vec<usize> = (0..x.len()).filter(|&i| k[i] == WindowKind::Cue).collect();
    let fit = least_squares(&x, &y, &k, &idx).unwrap();
    assert_eq!(fit.n_baselines(), 1);
    assert!(fit.baselines[1].is_none());
    close(fit.gain, e["cueonly_gain"], "gain");
    close(fit.baselines[0].unwrap(), e["cueonly_baseline"], "baseline");
    close(fit.rss, e["cueonly_rss"], "rss");
    close(fit.log_likelihood(), e["cueonly_llf"], "log-likelihood");
}

/// A predictor with no spread gets gain 0 and the group means as baselines (closed form), not
/// a division by zero.
#[test]
fn flat_predictor_gives_zero_gain_not_nan() {
    let x = vec![0.0; 6];
    let y = vec![1.0, 2.0, 3.0, 10.0, 11.0, 12.0];
    let k = [WindowKind::Cue; 3]
        .into_iter()
        .chain([WindowKind::Reward; 3])
        .collect::<Vec<_>>();
    let fit = least_squares(&x, &y, &k, &(0..6).collect::<Vec<_>>()).unwrap();
    assert_eq!(fit.gain, 0.0);
    assert_eq!(fit.baselines, [Some(2.0), Some(11.0)]);
    assert!((fit.rss - 4.0).abs() < 1e-12);
    assert!(least_squares(&x, &y, &k, &[]).is_none());
}

/// numpy.percentile(values, [2.5, 97.5]) with its default linear interpolation.
#[test]
fn percentiles_match_numpy() {
    let mut r = csv::Reader::from_path(fixture("percentiles.csv")).unwrap();
    let mut v = vec![];
    let (mut lo, mut hi) = (0.0, 0.0);
    for row in r.records() {
        let row = row.unwrap();
        v.push(row[0].parse::<f64>().unwrap());
        lo = row[1].parse().unwrap();
        hi = row[2].parse().unwrap();
    }
    v.sort_by(f64::total_cmp);
    close(percentile_sorted(&v, 0.025), lo, "2.5th percentile");
    close(percentile_sorted(&v, 0.975), hi, "97.5th percentile");
}

/// The asymmetric readout's least squares (gains of positive and negative δ, one baseline per
/// window kind) against statsmodels OLS on the same design
/// (tests/fixtures/fit/make_split_fixture.py).
#[test]
fn split_least_squares_matches_statsmodels() {
    use trialdesk::fit::linear::least_squares_split;
    let mut r = csv::Reader::from_path(fixture("ols_split_points.csv")).unwrap();
    let (mut xp, mut xn, mut y, mut k) = (vec![], vec![], vec![], vec![]);
    for row in r.records() {
        let row = row.unwrap();
        xp.push(row[0].parse().unwrap());
        xn.push(row[1].parse().unwrap());
        y.push(row[2].parse().unwrap());
        k.push(if &row[3] == "cue" {
            WindowKind::Cue
        } else {
            WindowKind::Reward
        });
    }
    let mut r = csv::Reader::from_path(fixture("ols_split_expected.csv")).unwrap();
    let want: HashMap<String, f64> = r
        .records()
        .map(|row| {
            let row = row.unwrap();
            (row[0].to_string(), row[1].parse().unwrap())
        })
        .collect();
    let idx: Vec<usize> = (0..y.len()).collect();
    let fit = least_squares_split(&xp, &xn, &y, &k, &idx).unwrap();
    let close = |a: f64, b: f64| (a - b).abs() <= 1e-9 * b.abs().max(1.0);
    assert!(close(fit.gain, want["gain_pos"]), "{}", fit.gain);
    assert!(close(fit.gain_neg.unwrap(), want["gain_neg"]));
    assert!(close(fit.baselines[0].unwrap(), want["baseline_cue"]));
    assert!(close(fit.baselines[1].unwrap(), want["baseline_reward"]));
    assert!(close(fit.rss, want["rss"]));
    assert!(close(fit.loglik, want["llf"]));
}

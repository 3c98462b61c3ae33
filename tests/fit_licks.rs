//! `fit --licks with|only`: anticipatory licking as a readout of value by the response rule of
//! Ludvig, Sutton & Kehoe 2012 (a_k = υ·a_{k−1} + [V_{k−1} − θ]₊, licks/s b + c·(1 − υ)·a_k).
//! Subjects come from the independent simulator (`tests/independent_sim`, no code shared with
//! `src/`), which licks by that rule from its own TD values. Recovery in the sense of Wilson &
//! Collins 2019 (eLife 8:e49547): known parameters in, fitted ones compared.

mod independent_sim;

use independent_sim::{subject, LickSpec, Spec};
use trialdesk::fit::{dataset, licks, report, run_fit, FitData, FitOptions, NoProgress};
use trialdesk::marks::MarkState;
use trialdesk::obs::{observe, ObsOptions};

const RULE: LickSpec = LickSpec {
    theta: 0.5,
    upsilon: 0.9,
    hz_per_ul: 3.0,
    base_hz: 0.2,
};

fn spec(seed: u64) -> Spec {
    Spec {
        sessions: 6,
        trials: 150,
        alpha: 0.05,
        units: 4,
        licks: Some(RULE),
        seed,
        ..Spec::default()
    }
}

fn row<'a>(rows: &'a [report::ParamRow], name: &str) -> &'a report::ParamRow {
    rows.iter()
        .find(|r| r.name == name)
        .unwrap_or_else(|| panic!("no row {name}"))
}

fn show_and_check(rows: &[report::ParamRow], truths: &[(&str, f64)]) -> Vec<String> {
    let mut missed = Vec::new();
    for &(name, truth) in truths {
        let r = row(rows, name);
        let ok = r
            .interval
            .is_some_and(|(lo, hi)| lo <= truth && truth <= hi);
        println!(
            "{name}: {:.4} {:?} (truth {truth}){}",
            r.estimate,
            r.interval,
            if ok { "" } else { "  MISSED" }
        );
        if !ok {
            missed.push(name.to_string());
        }
    }
    missed
}

fn fit_opts(spec: &Spec) -> FitOptions {
    FitOptions {
        lambda: Some(spec.lambda),
        bootstrap: 20,
        compare: false,
        ..Default::default()
    }
}

/// Licking alone (a lab with behaviour only): α, γ and the rule's θ and υ from lick counts.
#[test]
fn licks_only_recover_the_rule_and_the_learning() {
    let spec = spec(3);
    let subj = subject(&spec);
    let mut data: FitData = dataset::build(
        &subj,
        &[],
        &ObsOptions::default(),
        spec.dt,
        &[] as &[MarkState],
        false,
    );
    let n = licks::add_lick_points(&mut data, &subj, &[], false);
    assert!(n > 0);
    let out = run_fit(&data, &fit_opts(&spec), &NoProgress).unwrap();
    let rows = report::param_rows(&out, &data, false);
    assert!(rows.iter().all(|r| !r.name.starts_with("gain")));
    let missed = show_and_check(
        &rows,
        &[
            ("alpha", spec.alpha),
            ("gamma", spec.gamma),
            ("lick_theta", RULE.theta),
            ("lick_upsilon", RULE.upsilon),
            ("lick_hz_per_ul", RULE.hz_per_ul),
            ("lick_base_hz", RULE.base_hz),
        ],
    );
    assert!(missed.is_empty(), "missed {missed:?}");
}

/// Spikes and licks together, sharing α and γ.
#[test]
fn licks_with_spikes_share_the_learning_parameters() {
    let spec = spec(4);
    let subj = subject(&spec);
    let obs_opts = ObsOptions::default();
    let obs = observe(&subj, &obs_opts).unwrap();
    let mut data = dataset::build(&subj, &obs, &obs_opts, spec.dt, &[] as &[MarkState], false);
    data.counts = dataset::spike_counts(&data, &subj, &obs_opts);
    licks::add_lick_points(&mut data, &subj, &[], false);
    let out = run_fit(&data, &fit_opts(&spec), &NoProgress).unwrap();
    let rows = report::param_rows(&out, &data, false);
    let missed = show_and_check(
        &rows,
        &[
            ("alpha", spec.alpha),
            ("gamma", spec.gamma),
            ("lick_theta", RULE.theta),
            ("lick_upsilon", RULE.upsilon),
            ("gain", spec.gain_hz),
        ],
    );
    assert!(missed.is_empty(), "missed {missed:?}");
}

/// The rate fit (Poisson, identity link, counts on [exposure, predictor]) against statsmodels'
/// GLM on the same rows (tests/fixtures/fit/make_lick_fixture.py).
#[test]
fn rate_fit_matches_statsmodels() {
    let dir = std::path::Path::new(env!("CARGO_MANIFEST_DIR")).join("tests/fixtures/fit");
    let rows: Vec<(f64, f64, f64)> = std::fs::read_to_string(dir.join("lick_rate_rows.csv"))
        .unwrap()
        .lines()
        .skip(1)
        .map(|l| {
            let v: Vec<f64> = l.split(',').map(|x| x.parse().unwrap()).collect();
            (v[0], v[1], v[2])
        })
        .collect();
    let expected: std::collections::HashMap<String, f64> =
        std::fs::read_to_string(dir.join("lick_rate_expected.csv"))
            .unwrap()
            .lines()
            .skip(1)
            .map(|l| {
                let (k, v) = l.split_once(',').unwrap();
                (k.to_string(), v.parse().unwrap())
            })
            .collect();
    let f = licks::fit_rate_rows(&rows).unwrap();
    let close = |a: f64, b: f64| (a - b).abs() <= 1e-6 * b.abs().max(1.0);
    assert!(close(f.base_hz, expected["base_hz"]), "{f:?} {expected:?}");
    assert!(
        close(f.hz_per_ul, expected["hz_per_ul"]),
        "{f:?} {expected:?}"
    );
    assert!(close(f.loglik, expected["llf"]), "{f:?} {expected:?}");
}

/// `--licks only` on a behaviour-only subject (no spikes, no photometry) end to end, and
/// `--licks with` on a subject without licks.csv refused with a reason.
#[test]
fn licks_on_the_command_line() {
    use std::process::Command;
    let tmp = tempfile::tempdir().unwrap();
    let dir = tmp.path().join("m-930");
    let mut config = trialdesk::simulate::SimConfig {
        seed: 31,
        ..Default::default()
    };
    config.schedule.days = 3;
    config.schedule.trials_per_day = 60;
    config.schedule.subject = "m-930".into();
    let sim = trialdesk::simulate::simulate(&config).unwrap();
    trialdesk::simulate::write_subject(&sim, &dir, false).unwrap();
    for day in std::fs::read_dir(&dir).unwrap() {
        let day = day.unwrap().path();
        for f in ["spikes.csv", "photometry.csv"] {
            let _ = std::fs::remove_file(day.join(f));
        }
    }
    let fit = |extra: &[&str], subject: &std::path::Path| {
        Command::new(env!("CARGO_BIN_EXE_trialdesk"))
            .arg("fit")
            .arg(subject)
            .args(["--bootstrap", "0", "--no-compare", "--no-sensitivity"])
            .args(extra)
            .output()
            .unwrap()
    };
    let out = fit(&["--licks", "only"], &dir);
    assert!(out.status.success(), "{out:?}");
    let text = String::from_utf8_lossy(&out.stdout);
    for want in [
        "lick_theta",
        "lick_upsilon",
        "likelihood: lick counts Poisson",
    ] {
        assert!(text.contains(want), "{want} missing:\n{text}");
    }
    let saved = std::fs::read_to_string(dir.join("trialdesk-fit.toml")).unwrap();
    assert!(
        saved.contains("[lick]") && saved.contains("used = \"only\""),
        "{saved}"
    );
    let settings = trialdesk::tui::derived::ModelSettings::from_subject(&dir).unwrap();
    assert!(
        settings.readout.is_none(),
        "no activity readout from licks alone"
    );
    assert!(settings
        .lines
        .iter()
        .any(|l| l.starts_with("licking alone")));

    // Without licks.csv there is nothing to read licking from.
    for day in std::fs::read_dir(&dir).unwrap() {
        let _ = std::fs::remove_file(day.unwrap().path().join("licks.csv"));
    }
    let out = fit(&["--licks", "only", "--no-save"], &dir);
    assert!(!out.status.success());
    assert!(
        String::from_utf8_lossy(&out.stderr).contains("--licks needs licks.csv"),
        "{out:?}"
    );
    let out = fit(&["--licks", "sometimes", "--no-save"], &dir);
    assert_eq!(out.status.code(), Some(2));
}

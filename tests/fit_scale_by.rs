//! `--scale-by`: shared learning parameters, each group of points with its own gain and
//! baselines. Recovery (Wilson & Collins 2019, eLife 8:e49547: simulate with known parameters,
//! refit, compare) on a photometry-like subject recorded on two rigs, the second at 0.35× the
//! amplitude of the first (its responses, baselines and noise all scaled, as a dimmer fibre or
//! a weaker patch cord scales the whole ΔF/F), and the command line end to end.

use std::path::Path;
use std::process::Command;
use trialdesk::fit::dataset::{self, ScaleBy};
use trialdesk::fit::synthetic::{fit_data, SyntheticSpec};
use trialdesk::fit::{report, run_fit, FitData, FitOptions, NoProgress};

const RIG_B_AMPLITUDE: f64 = 0.35;

fn two_rigs_seed(seed: u64) -> (SyntheticSpec, FitData, trialdesk::data::Subject) {
    let spec = SyntheticSpec {
        sessions: 6,
        trials_per_session: 150,
        alpha: 0.1,
        gamma: 0.98,
        lambda: 0.5,
        seed,
        ..Default::default()
    };
    let (mut subject, mut data) = fit_data(&spec);
    for (i, s) in subject.sessions.iter_mut().enumerate() {
        s.meta.rig = Some(if i % 2 == 0 { "rig-a" } else { "rig-b" }.to_string());
    }
    for i in 0..data.points.len() {
        if data.session_of(i) % 2 == 1 {
            data.points[i].observed *= RIG_B_AMPLITUDE;
        }
    }
    (spec, data, subject)
}

fn covers(rows: &[report::ParamRow], name: &str, truth: f64) -> (f64, Option<(f64, f64)>, bool) {
    let r = rows.iter().find(|r| r.name == name).unwrap();
    let ok = r
        .interval
        .is_some_and(|(lo, hi)| lo <= truth && truth <= hi);
    (r.estimate, r.interval, ok)
}

/// Measured over seeds 1–8 (`scan` below, 2026-12-03): one gain for both rigs covered the
/// true γ in 1 of 8 subjects (γ 0.963–0.971 against 0.98) and α in 5 of 8; a gain, baselines
/// and noise level per rig covered α 8/8 and γ 8/8. CI checks three of those subjects.
#[test]
fn two_rigs_at_different_gains_recover_alpha_and_gamma_with_a_gain_per_rig() {
    for seed in [1, 2, 3] {
        let (spec, plain, subject) = two_rigs_seed(seed);
        let opts = FitOptions {
            compare: false,
            ..FitOptions::default()
        };
        let mut data = plain.clone();
        data.groups = dataset::groups(&data, &subject, ScaleBy::Rig);
        let groups = data.groups.as_ref().unwrap();
        assert_eq!(groups.names, ["rig-a", "rig-b"]);
        let per_rig = run_fit(&data, &opts, &NoProgress).unwrap();
        let rows = report::param_rows(&per_rig, &data, true);
        let a = covers(&rows, "alpha", spec.alpha);
        let g = covers(&rows, "gamma", spec.gamma);
        assert!(a.2, "seed {seed}: alpha {a:?} (truth {})", spec.alpha);
        assert!(g.2, "seed {seed}: gamma {g:?} (truth {})", spec.gamma);
        // Each rig's gain: the simulated gain, and 0.35 of it on rig b (±15 %).
        let gain = |n: &str| rows.iter().find(|r| r.name == n).unwrap().estimate;
        let (ga, gb) = (gain("gain[rig-a]"), gain("gain[rig-b]"));
        assert!((ga / spec.gain - 1.0).abs() < 0.15, "rig a gain {ga}");
        let ratio = gb / ga;
        assert!(
            (ratio / RIG_B_AMPLITUDE - 1.0).abs() < 0.15,
            "gain ratio {ratio}"
        );
        if seed == 1 {
            // The likelihood counts each rig's own gain and baselines; one gain fits worse.
            let one = run_fit(&plain, &opts, &NoProgress).unwrap();
            let k = |f: &trialdesk::fit::FitOutcome| {
                f.best.linear.n_gains() + f.best.linear.n_baselines()
            };
            assert_eq!((k(&one), k(&per_rig)), (3, 6));
            assert!(per_rig.best.log_likelihood > one.best.log_likelihood);
        }
    }
}

fn small_subject(dir: &Path) {
    let mut config = trialdesk::simulate::SimConfig {
        seed: 21,
        ..Default::default()
    };
    config.schedule.days = 4;
    config.schedule.trials_per_day = 40;
    config.schedule.subject = "m-910".into();
    let sim = trialdesk::simulate::simulate(&config).unwrap();
    trialdesk::simulate::write_subject(&sim, dir, false).unwrap();
    // Days 3 and 4 on a second rig.
    let mut days: Vec<_> = std::fs::read_dir(dir)
        .unwrap()
        .map(|e| e.unwrap().path())
        .filter(|p| p.is_dir())
        .collect();
    days.sort();
    for d in &days[2..] {
        let meta = d.join("session.toml");
        let text = std::fs::read_to_string(&meta).unwrap();
        let text = text.replace("rig = \"box-2\"", "rig = \"box-7\"");
        assert!(text.contains("box-7"), "{text}");
        std::fs::write(&meta, text).unwrap();
    }
}

fn fit(subject: &Path, extra: &[&str]) -> std::process::Output {
    Command::new(env!("CARGO_BIN_EXE_trialdesk"))
        .arg("fit")
        .arg(subject)
        .args(["--bootstrap", "0", "--no-compare", "--no-sensitivity"])
        .args(extra)
        .output()
        .unwrap()
}

/// `plot` of a subject with a saved grouped fit: fit_trials.svg has a prediction for every
/// window (a group the fit did not know would draw NaN).
fn plot_predicts_every_window(tmp: &Path, subject: &Path) {
    let pictures = tmp.join("pictures");
    let out = Command::new(env!("CARGO_BIN_EXE_trialdesk"))
        .arg("plot")
        .arg(subject)
        .arg("--out")
        .arg(&pictures)
        .output()
        .unwrap();
    assert!(out.status.success(), "{out:?}");
    let svg = std::fs::read_to_string(pictures.join("fit_trials.svg")).unwrap();
    assert!(!svg.contains("NaN"), "a window without a prediction");
}

#[test]
fn scale_by_rig_on_the_command_line_reports_saves_and_plots_each_rig() {
    let tmp = tempfile::tempdir().unwrap();
    let subject = tmp.path().join("m-910");
    small_subject(&subject);
    let out = fit(&subject, &["--scale-by", "rig"]);
    assert!(out.status.success(), "{out:?}");
    let text = String::from_utf8_lossy(&out.stdout);
    assert!(text.contains("per rig (2 groups: box-2, box-7;"), "{text}");
    for name in ["gain[box-2]", "gain[box-7]", "baseline_cue[box-7]"] {
        assert!(text.contains(name), "{name} missing:\n{text}");
    }
    let saved = std::fs::read_to_string(subject.join("trialdesk-fit.toml")).unwrap();
    assert!(saved.contains("scale_by = \"rig\""), "{saved}");
    assert_eq!(saved.matches("[[group]]").count(), 2, "{saved}");
    // The saved groups drive the fit picture's predictions: every window gets a number.
    plot_predicts_every_window(tmp.path(), &subject);

    // The summary names the rigs and points at the option.
    let out = Command::new(env!("CARGO_BIN_EXE_trialdesk"))
        .arg("summary")
        .arg(&subject)
        .output()
        .unwrap();
    let text = String::from_utf8_lossy(&out.stdout);
    assert!(
        text.contains("rigs: box-2 (day 1-2), box-7 (day 3-4);"),
        "{text}"
    );
    // The reviewer's fit screen lists each rig's gain.
    let settings = trialdesk::tui::derived::ModelSettings::from_subject(&subject).unwrap();
    assert!(
        settings
            .lines
            .iter()
            .any(|l| l.starts_with("gain per rig: box-2 ")),
        "{:?}",
        settings.lines
    );

    // An unknown group is a usage error naming the choices.
    let out = fit(&subject, &["--scale-by", "cage", "--no-save"]);
    assert_eq!(out.status.code(), Some(2));
    assert!(String::from_utf8_lossy(&out.stderr)
        .contains("expected subject, session, rig, unit or session-unit"));
}

/// The default (`subject`) is today's single-gain fit, to the byte.
#[test]
fn scale_by_subject_is_the_single_gain_fit() {
    let tmp = tempfile::tempdir().unwrap();
    let subject = tmp.path().join("m-910");
    small_subject(&subject);
    let (dir_a, dir_b) = (tmp.path().join("a"), tmp.path().join("b"));
    let a = fit(&subject, &["--no-save", "--out", dir_a.to_str().unwrap()]);
    let b = fit(
        &subject,
        &[
            "--no-save",
            "--scale-by",
            "subject",
            "--out",
            dir_b.to_str().unwrap(),
        ],
    );
    assert!(a.status.success() && b.status.success(), "{a:?}");
    let strip = |o: &std::process::Output| {
        String::from_utf8_lossy(&o.stdout)
            .lines()
            .filter(|l| !l.contains("--out") && !l.contains("written"))
            .map(str::to_string)
            .collect::<Vec<_>>()
    };
    assert_eq!(strip(&a), strip(&b));
}

#[test]
#[ignore = "a scan over seeds; run with --ignored --nocapture"]
fn scan() {
    for seed in 1..=8 {
        let (spec, plain, subject) = two_rigs_seed(seed);
        let opts = FitOptions {
            compare: false,
            ..FitOptions::default()
        };
        let one = run_fit(&plain, &opts, &NoProgress).unwrap();
        let one_rows = report::param_rows(&one, &plain, true);
        let mut data = plain.clone();
        data.groups = dataset::groups(&data, &subject, ScaleBy::Rig);
        let per = run_fit(&data, &opts, &NoProgress).unwrap();
        let rows = report::param_rows(&per, &data, true);
        println!(
            "seed {seed} one: a {:?} g {:?} | rig: a {:?} g {:?}",
            covers(&one_rows, "alpha", spec.alpha),
            covers(&one_rows, "gamma", spec.gamma),
            covers(&rows, "alpha", spec.alpha),
            covers(&rows, "gamma", spec.gamma)
        );
    }
}

/// `--compare-readouts` refits with each readout and prints them side by side: one gain,
/// asymmetric gains, a gain per session (no held-out error) and, with two rigs, per rig; the
/// readout of the reported parameters is starred.
#[test]
fn compare_readouts_lists_each_readout_with_its_criteria() {
    let tmp = tempfile::tempdir().unwrap();
    let subject = tmp.path().join("m-910");
    small_subject(&subject);
    let out = fit(
        &subject,
        &["--compare-readouts", "--scale-by", "rig", "--no-save"],
    );
    assert!(out.status.success(), "{out:?}");
    let text = String::from_utf8_lossy(&out.stdout);
    let table: Vec<&str> = text
        .lines()
        .skip_while(|l| !l.starts_with("Readouts of csc"))
        .take(6)
        .collect();
    let row = |label: &str| {
        table
            .iter()
            .find(|l| l.trim_start().starts_with(label))
            .unwrap_or_else(|| panic!("{label} missing:\n{text}"))
            .to_string()
    };
    assert!(!row("one gain ").ends_with('*'), "{text}");
    assert!(row("one gain, asymmetric").contains("(n="), "{text}");
    assert!(row("gain per session").contains("n/a"), "{text}");
    assert!(row("gain per rig").ends_with(" *"), "{text}");
}

/// `--scale-by unit` end to end: each unit's gain reported, its responses in trials.csv with
/// a `unit` column, the fit saved per unit and plotted with each unit's own prediction.
#[test]
fn scale_by_unit_on_the_command_line() {
    let tmp = tempfile::tempdir().unwrap();
    let subject = tmp.path().join("m-910");
    small_subject(&subject);
    let tables = tmp.path().join("tables");
    let out = fit(
        &subject,
        &["--scale-by", "unit", "--out", tables.to_str().unwrap()],
    );
    assert!(out.status.success(), "{out:?}");
    let text = String::from_utf8_lossy(&out.stdout);
    assert!(text.contains(" per unit ("), "{text}");
    assert!(text.contains("gain[u1]"), "{text}");
    let trials = std::fs::read_to_string(tables.join("trials.csv")).unwrap();
    assert!(
        trials.starts_with("session,trial,window,unit,observed,predicted,excluded\n"),
        "{}",
        &trials[..200]
    );
    assert!(trials.contains(",u1,") && trials.contains(",u2,"));
    let saved = std::fs::read_to_string(subject.join("trialdesk-fit.toml")).unwrap();
    assert!(saved.contains("scale_by = \"unit\""), "{saved}");
    plot_predicts_every_window(tmp.path(), &subject);
    let settings = trialdesk::tui::derived::ModelSettings::from_subject(&subject).unwrap();
    assert!(
        settings
            .lines
            .iter()
            .any(|l| l.starts_with("gain per unit: u1 ")),
        "{:?}",
        settings.lines
    );
    // The summary names each unit's gain under the saved fit's model line.
    let out = Command::new(env!("CARGO_BIN_EXE_trialdesk"))
        .arg("summary")
        .arg(&subject)
        .output()
        .unwrap();
    let text = String::from_utf8_lossy(&out.stdout);
    assert!(text.contains("readout: gain per unit: u1 "), "{text}");
    // One unit and a gain per unit contradict each other; photometry has no units.
    let out = fit(
        &subject,
        &["--scale-by", "unit", "--unit", "u1", "--no-save"],
    );
    assert!(!out.status.success());
    assert!(String::from_utf8_lossy(&out.stderr).contains("--unit u1 picks one"));
}

//! `--zscore` (photometry): each trial's responses divided by the sample standard deviation of
//! its own baseline window. A hand-made trace with a known baseline (alternating 0 and 2:
//! mean 1, SD sqrt(20/19) over 20 samples, closed form) checks the arithmetic; a simulated
//! photometry subject checks the command line: the report says so, the saved fit records it,
//! `summary` then measures the same way, and spikes refuse the flag. `--control-fit ols` is
//! checked the same way (named in the report, recorded, followed by `summary`).

use std::process::Command;
use trialdesk::data::{CueDef, Photometry, Session, SessionMeta, Trial};
use trialdesk::obs::{observe_trial, ObsOptions, SessionActivity, Signal};
use trialdesk::simulate::{simulate, write_subject, PhotometryParams, SimConfig};

fn session() -> Session {
    // 20 Hz from 0 to 20 s; baseline [-1, 0) before the cue at 10 s alternates 0 and 2, the
    // cue window [0, 1) s after it is 5, the rest 1.
    let time: Vec<f64> = (0..400).map(|i| i as f64 * 0.05).collect();
    let signal: Vec<f64> = time
        .iter()
        .enumerate()
        .map(|(i, &t)| match t {
            t if (9.0 - 1e-9..10.0 - 1e-9).contains(&t) => (i % 2) as f64 * 2.0,
            t if (10.0 - 1e-9..11.0 - 1e-9).contains(&t) => 5.0,
            _ => 1.0,
        })
        .collect();
    Session {
        dir: "s".into(),
        name: "s".into(),
        meta: SessionMeta {
            subject: "m".into(),
            date: "2026-03-02".into(),
            start_time: None,
            rig: None,
            cues: vec![CueDef {
                name: "tone".into(),
                reward_delay_s: None,
            }],
        },
        trials: vec![Trial {
            number: 1,
            cue: Some(0),
            cue_s: Some(10.0),
            reward_s: None,
            reward_ul: 0.0,
            cue_off_s: None,
            events: Vec::new(),
        }],
        spikes: None,
        licks: None,
        photometry: Some(Photometry {
            time_s: time,
            signal,
            control: None,
        }),
    }
}

/// A simulated photometry subject written under `dir`.
fn photometry_subject(
    dir: &std::path::Path,
    name: &str,
    seed: u64,
    days: usize,
    trials: usize,
) -> std::path::PathBuf {
    let subject = dir.join(name);
    let mut c = SimConfig {
        seed,
        ..Default::default()
    };
    c.schedule.days = days;
    c.schedule.trials_per_day = trials;
    c.schedule.subject = name.into();
    c.photometry = Some(PhotometryParams::default());
    let sim = simulate(&c).unwrap();
    write_subject(&sim, &subject, false).unwrap();
    subject
}

/// `trialdesk <args> <subject>`.
fn trialdesk(args: &[&str], subject: &std::path::Path) -> std::process::Output {
    Command::new(env!("CARGO_BIN_EXE_trialdesk"))
        .args(args)
        .arg(subject)
        .output()
        .unwrap()
}

#[test]
fn a_response_is_divided_by_its_baselines_sample_sd() {
    let s = session();
    // The activity here is the raw trace (the values given), so the arithmetic is checkable.
    let time = s.photometry.as_ref().unwrap().time_s.clone();
    let values = s.photometry.as_ref().unwrap().signal.clone();
    let mut prefix = vec![0.0];
    for v in &values {
        prefix.push(prefix.last().unwrap() + v);
    }
    let act = SessionActivity::Photometry {
        time: &time,
        values,
        prefix,
    };
    let plain = ObsOptions::photometry();
    let z = ObsOptions {
        zscore: true,
        ..plain.clone()
    };
    assert_eq!(plain.signal, Signal::Photometry);
    let o = observe_trial(&s, &s.trials[0], &act, &plain).unwrap();
    let oz = observe_trial(&s, &s.trials[0], &act, &z).unwrap();
    let sd = (20.0f64 / 19.0).sqrt();
    assert!((o.cue.unwrap() - 4.0).abs() < 1e-12, "{:?}", o.cue);
    assert!((oz.cue.unwrap() - 4.0 / sd).abs() < 1e-12, "{:?}", oz.cue);
}

#[test]
fn fit_zscore_is_reported_saved_and_followed_by_summary() {
    let tmp = tempfile::tempdir().unwrap();
    let subject = photometry_subject(tmp.path(), "m-930", 5, 3, 40);
    let run = |args: &[&str]| trialdesk(args, &subject);
    let out = run(&[
        "fit",
        "--signal",
        "photometry",
        "--zscore",
        "--bootstrap",
        "0",
        "--no-compare",
        "--no-sensitivity",
    ]);
    assert!(out.status.success(), "{out:?}");
    let text = String::from_utf8_lossy(&out.stdout);
    assert!(
        text.contains("divided by the SD of its trial's baseline (z-score)"),
        "{text}"
    );
    let saved = std::fs::read_to_string(subject.join("trialdesk-fit.toml")).unwrap();
    assert!(saved.contains("zscore = true"), "{saved}");
    let out = run(&["summary"]);
    let text = String::from_utf8_lossy(&out.stdout);
    assert!(text.contains("z-score: each response divided"), "{text}");

    let out = run(&["fit", "--signal", "spikes", "--zscore", "--no-save"]);
    assert_eq!(out.status.code(), Some(2), "{out:?}");
    assert!(String::from_utf8_lossy(&out.stderr).contains("--zscore applies to"));
}

#[test]
fn control_fit_ols_is_reported_saved_and_followed() {
    let tmp = tempfile::tempdir().unwrap();
    let subject = photometry_subject(tmp.path(), "m-931", 6, 2, 30);
    let run = |args: &[&str]| trialdesk(args, &subject);
    let fit = |extra: &[&str]| {
        let mut args = vec![
            "fit",
            "--signal",
            "photometry",
            "--bootstrap",
            "0",
            "--no-compare",
            "--no-sensitivity",
        ];
        args.extend_from_slice(extra);
        run(&args)
    };
    let out = fit(&["--control-fit", "ols"]);
    assert!(out.status.success(), "{out:?}");
    let text = String::from_utf8_lossy(&out.stdout);
    assert!(text.contains("by ordinary least squares"), "{text}");
    let saved = std::fs::read_to_string(subject.join("trialdesk-fit.toml")).unwrap();
    assert!(saved.contains("control_fit = \"ols\""), "{saved}");
    let text = String::from_utf8_lossy(&run(&["summary"]).stdout).to_string();
    assert!(text.contains("by ordinary least squares"), "{text}");
    // The default is IRLS, and an unknown name is a usage error.
    let out = fit(&["--no-save"]);
    assert!(String::from_utf8_lossy(&out.stdout).contains("by IRLS"));
    let out = fit(&["--control-fit", "median", "--no-save"]);
    assert_eq!(out.status.code(), Some(2), "{out:?}");
    assert!(String::from_utf8_lossy(&out.stderr).contains("expected irls or ols"));
}

//! `trialdesk plot` end to end on a small simulated subject: which files it writes (only into
//! --out), that they parse as XML, the fit picture once a fit is saved, hostile session
//! folder names, and the exit codes of the brief (0 ok, 1 failed, 2 usage).

use std::collections::BTreeSet;
use std::path::Path;
use std::process::{Command, Output};
use trialdesk::simulate::{simulate, write_subject, SimConfig};

fn small_subject(dir: &Path) {
    let mut config = SimConfig {
        seed: 11,
        ..SimConfig::default()
    };
    config.schedule.days = 3;
    config.schedule.trials_per_day = 30;
    config.schedule.subject = "m-900".into();
    let sim = simulate(&config).unwrap();
    write_subject(&sim, dir, false).unwrap();
}

fn plot(args: &[&std::ffi::OsStr]) -> Output {
    Command::new(env!("CARGO_BIN_EXE_trialdesk"))
        .arg("plot")
        .args(args)
        .output()
        .unwrap()
}

/// Every file under `dir`, relative.
fn tree(dir: &Path) -> BTreeSet<String> {
    let mut out = BTreeSet::new();
    let mut stack = vec![dir.to_path_buf()];
    while let Some(d) = stack.pop() {
        for e in std::fs::read_dir(&d).unwrap() {
            let p = e.unwrap().path();
            if p.is_dir() {
                stack.push(p);
            } else {
                out.insert(p.strip_prefix(dir).unwrap().display().to_string());
            }
        }
    }
    out
}

fn svg_files(dir: &Path) -> Vec<String> {
    let mut names: Vec<String> = tree(dir).into_iter().collect();
    names.sort();
    for n in &names {
        let text = std::fs::read_to_string(dir.join(n)).unwrap();
        roxmltree::Document::parse(&text).unwrap_or_else(|e| panic!("{n}: {e}"));
    }
    names
}

#[test]
fn writes_curves_and_heatmaps_into_out_only_then_the_fit_picture_once_saved() {
    let tmp = tempfile::tempdir().unwrap();
    let subject = tmp.path().join("m-900");
    small_subject(&subject);
    let before = tree(&subject);
    let sessions: Vec<String> = std::fs::read_dir(&subject)
        .unwrap()
        .map(|e| e.unwrap().path())
        .filter(|p| p.is_dir())
        .map(|p| p.file_name().unwrap().to_string_lossy().into_owned())
        .collect();
    assert_eq!(sessions.len(), 3);

    let out_dir = tmp.path().join("pictures");
    let out = plot(&[subject.as_os_str(), "--out".as_ref(), out_dir.as_os_str()]);
    assert_eq!(out.status.code(), Some(0), "{out:?}");
    let stderr = String::from_utf8_lossy(&out.stderr);
    assert!(stderr.contains("fit_trials.svg not written"), "{stderr}");
    let mut expected: Vec<String> = sessions
        .iter()
        .map(|s| format!("heatmap_{s}.svg"))
        .chain(["learning_curves.svg".to_string()])
        .collect();
    expected.sort();
    assert_eq!(svg_files(&out_dir), expected);
    assert_eq!(tree(&subject), before, "the data folder was written to");

    // A saved fit (written by hand, the fields `trialdesk fit` saves) adds fit_trials.svg.
    std::fs::write(
        subject.join("trialdesk-fit.toml"),
        "alpha = 0.05\ngamma = 0.98\nlambda = 0.0\ndt = 0.05\nrepresentation = \"csc\"\n\
         gain = 1.2\nfitted_at = \"2026-03-10T08:00:00Z\"\nn_excluded = 0\n\
         ignore_marks = false\n[baselines]\ncue = 0.3\nreward = 1.0\n",
    )
    .unwrap();
    let out_dir = tmp.path().join("pictures2");
    let out = plot(&[
        subject.as_os_str(),
        "--out".as_ref(),
        out_dir.as_os_str(),
        "--session".as_ref(),
        sessions[0].as_ref(),
    ]);
    assert_eq!(out.status.code(), Some(0), "{out:?}");
    assert_eq!(
        svg_files(&out_dir),
        [
            "fit_trials.svg".to_string(),
            format!("heatmap_{}.svg", sessions[0]),
            "learning_curves.svg".to_string()
        ]
    );
    let fit = std::fs::read_to_string(out_dir.join("fit_trials.svg")).unwrap();
    assert!(fit.contains("α=0.0500"), "title names the saved parameters");
}

#[test]
fn hostile_session_folder_name_gives_a_safe_file_name_and_escaped_text() {
    let tmp = tempfile::tempdir().unwrap();
    let subject = tmp.path().join("m-900");
    small_subject(&subject);
    let first = std::fs::read_dir(&subject)
        .unwrap()
        .map(|e| e.unwrap().path())
        .find(|p| p.is_dir())
        .unwrap();
    let hostile = "day<1>&\"x\"";
    std::fs::rename(&first, subject.join(hostile)).unwrap();
    let out_dir = tmp.path().join("pictures");
    let out = plot(&[subject.as_os_str(), "--out".as_ref(), out_dir.as_os_str()]);
    assert_eq!(out.status.code(), Some(0), "{out:?}");
    let names = svg_files(&out_dir);
    assert!(
        names.contains(&"heatmap_day_1___x_.svg".to_string()),
        "{names:?}"
    );
    let text = std::fs::read_to_string(out_dir.join("heatmap_day_1___x_.svg")).unwrap();
    let doc = roxmltree::Document::parse(&text).unwrap();
    let title = doc
        .descendants()
        .find(|n| n.tag_name().name() == "title")
        .and_then(|n| n.text())
        .unwrap();
    assert!(title.starts_with(hostile), "{title}");
}

#[test]
fn exit_codes_follow_the_brief() {
    let tmp = tempfile::tempdir().unwrap();
    let subject = tmp.path().join("m-900");
    small_subject(&subject);
    let out_dir = tmp.path().join("p");
    let usage = [
        vec![subject.as_os_str()],
        vec![
            subject.as_os_str(),
            "--out".as_ref(),
            out_dir.as_os_str(),
            "--heat-bin".as_ref(),
            "0".as_ref(),
        ],
        vec![
            subject.as_os_str(),
            "--out".as_ref(),
            out_dir.as_os_str(),
            "--session".as_ref(),
            "no-such-day".as_ref(),
        ],
    ];
    for args in usage {
        let out = plot(&args);
        assert_eq!(out.status.code(), Some(2), "{args:?}: {out:?}");
    }
    assert!(!out_dir.exists(), "a usage error wrote files");
    let missing = tmp.path().join("nothing-here");
    let out = plot(&[missing.as_os_str(), "--out".as_ref(), out_dir.as_os_str()]);
    assert_eq!(out.status.code(), Some(1), "{out:?}");
}

/// A cue declared in session.toml but presented on no trial draws nothing: the heat map with
/// it declared is the same picture as without (its long reward delay used to stretch the time
/// axis and leave an empty band after every row).
#[test]
fn a_declared_cue_no_trial_uses_leaves_the_heatmap_unchanged() {
    let tmp = tempfile::tempdir().unwrap();
    let subject = tmp.path().join("m-900");
    small_subject(&subject);
    let before = tmp.path().join("before");
    let out = plot(&[subject.as_os_str(), "--out".as_ref(), before.as_os_str()]);
    assert_eq!(out.status.code(), Some(0), "{out:?}");
    for e in std::fs::read_dir(&subject).unwrap() {
        let meta = e.unwrap().path().join("session.toml");
        if meta.is_file() {
            let mut text = std::fs::read_to_string(&meta).unwrap();
            text.push_str("\n[[cue]]\nname = \"tone-unused\"\nreward_delay_s = 6.0\n");
            std::fs::write(&meta, text).unwrap();
        }
    }
    let after = tmp.path().join("after");
    let out = plot(&[subject.as_os_str(), "--out".as_ref(), after.as_os_str()]);
    assert_eq!(out.status.code(), Some(0), "{out:?}");
    let maps: Vec<String> = svg_files(&before)
        .into_iter()
        .filter(|n| n.starts_with("heatmap_"))
        .collect();
    assert!(!maps.is_empty());
    for n in maps {
        let a = std::fs::read_to_string(before.join(&n)).unwrap();
        let b = std::fs::read_to_string(after.join(&n)).unwrap();
        assert!(a == b, "{n} changed when an unused cue was declared");
    }
}

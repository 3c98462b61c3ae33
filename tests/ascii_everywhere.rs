//! `--ascii` output is ASCII everywhere: every reviewer screen (all four screens, the help,
//! the reason picker, the note editor and the confirmation, on spikes, photometry, suggested
//! marks and a saved fit) at 80×24 and 120×40, and the standard output and error of every
//! command (help texts, usage errors, check, simulate, fit, summary in each format, plot,
//! model, marks, merge, completions, man). A failure names the screen or the command and the
//! offending character.
//!
//! Each command also runs without `--ascii`: every non-ASCII character it prints there must have
//! an ASCII spelling of its own (`trialdesk::ascii::spelling`), so `--ascii` never reads `?` where
//! a letter was meant; and both runs end with the same exit code.

mod tui_support;

use std::path::{Path, PathBuf};
use std::process::Command;
use trialdesk::tui::derived::ModelSettings;
use trialdesk::tui::keymap::Keymap;
use tui_support::*;

/// The first non-ASCII character of `text` with its line, for a failure message.
fn first_non_ascii(text: &str) -> Option<(char, String)> {
    for line in text.lines() {
        if let Some(c) = line.chars().find(|c| !c.is_ascii()) {
            return Some((c, line.to_string()));
        }
    }
    None
}

// ---------------------------------------------------------------------------------------------
// The reviewer

/// Key sequences that reach every screen and overlay, each from a fresh state.
const WALKS: &[(&str, &str)] = &[
    ("trial screen", ""),
    ("trial screen, next trial", "j"),
    ("trial screen, one unit across trials", "jjj."),
    ("trial screen, signal cycled", "a"),
    ("trial screen, trial marked exclude", "jjx1"),
    ("session screen", "2"),
    ("session screen, marks", "jjjjx3j2"),
    ("session screen, signal cycled", "2a"),
    ("days screen", "3"),
    ("fit screen", "4"),
    ("help overlay", "?"),
    ("help overlay on the days screen", "3?"),
    ("reason picker", "js<down>"),
    ("note editor", "nvalve clicked twice"),
    ("session note editor", "Npatch cord replaced"),
    ("second session", "]"),
    ("second session, session screen", "]2"),
    ("second session, days screen", "]3"),
    ("second session, fit screen", "]4"),
    ("second session, signal cycled", "]a"),
    ("second session, signal cycled, session screen", "]a2"),
    ("next suggestion", "f"),
    ("accept-all confirmation", "fY"),
];

/// Every walk of [`WALKS`] on `dir` in ASCII mode at both sizes: one line per frame with a
/// non-ASCII character (screen, keys, size, character, the line it is in).
fn check_frames(subject: &str, dir: &Path, settings: &ModelSettings) -> Vec<String> {
    let loaded = trialdesk::data::load(dir).unwrap_or_else(|f| panic!("{:?}", f.diagnostics));
    let mut failures = Vec::new();
    for (screen, keys) in WALKS {
        let mut opts = options();
        opts.ascii = true;
        let mut st = trialdesk::tui::app::build_state(
            loaded.subject.clone(),
            opts,
            Keymap::build(&[]).unwrap(),
            settings,
        );
        press(&mut st, keys);
        for (w, h) in [(80u16, 24u16), (120, 40)] {
            let text = frame_text(w, h, &st);
            if let Some((c, line)) = first_non_ascii(&text) {
                failures.push(format!(
                    "{subject}, {screen} (keys {keys:?}) at {w}x{h}: non-ASCII {c:?} (U+{:04X}) in: {}",
                    c as u32,
                    line.trim_end()
                ));
            }
        }
    }
    failures
}

fn assert_none(failures: Vec<String>) {
    assert!(
        failures.is_empty(),
        "{} frame(s) not ASCII:\n{}",
        failures.len(),
        failures.join("\n")
    );
}

#[test]
fn every_reviewer_screen_is_ascii() {
    // Spikes on the first day, photometry on the second; no saved fit.
    let (_tmp, dir) = fixture_copy();
    let mut failures = check_frames("fixture m-007", &dir, &ModelSettings::defaults());
    // Suggested marks pending, and the confirmation of accepting a rule's suggestions.
    let (_tmp2, faulty) = faulty_subject();
    failures.extend(check_frames(
        "simulated subject with faults",
        &faulty,
        &ModelSettings::defaults(),
    ));
    assert_none(failures);
}

#[test]
fn reviewer_with_a_saved_fit_is_ascii() {
    // The fit screen and days screen with a saved fit: its report lines name α, γ, λ.
    let tmp = tempfile::tempdir().unwrap();
    let subject = tmp.path().join("m-051");
    run(&[
        "simulate",
        s(&subject),
        "--days",
        "2",
        "--trials-per-day",
        "30",
        "--units",
        "2",
        "--seed",
        "5",
    ]);
    let fit = run(&[
        "fit",
        s(&subject),
        "--bootstrap",
        "4",
        "--no-compare",
        "--no-sensitivity",
    ]);
    assert_eq!(fit.code, 0, "{}", fit.stderr);
    let settings = ModelSettings::from_subject(&subject).expect("the saved fit is valid");
    assert_none(check_frames(
        "simulated subject with a saved fit",
        &subject,
        &settings,
    ));
}

// ---------------------------------------------------------------------------------------------
// The commands

struct Ran {
    code: i32,
    stdout: String,
    stderr: String,
}

fn s(p: &Path) -> &str {
    p.to_str().unwrap()
}

fn run(args: &[&str]) -> Ran {
    let out = Command::new(env!("CARGO_BIN_EXE_trialdesk"))
        .args(args)
        .env_remove("NO_COLOR")
        .env("COLUMNS", "100")
        .output()
        .expect("run trialdesk");
    Ran {
        code: out.status.code().unwrap_or(-1),
        // Lossy on purpose: a byte that is not UTF-8 shows as U+FFFD and fails below.
        stdout: String::from_utf8_lossy(&out.stdout).into_owned(),
        stderr: String::from_utf8_lossy(&out.stderr).into_owned(),
    }
}

/// Run `args` with and without `--ascii` and check both as the module doc says, and that both
/// end with exit code `expect` (so a mistyped command line cannot pass as a usage error).
/// Returns the plain run, for the callers that look further at it.
fn both(failures: &mut Vec<String>, expect: i32, args: &[&str]) -> Ran {
    let name = format!("trialdesk {}", args.join(" "));
    let plain = run(args);
    let mut with: Vec<&str> = args.to_vec();
    with.push("--ascii");
    // Usage errors and help stop at parsing: put the flag first, where it is read then too.
    if args.iter().any(|a| *a == "--help" || *a == "-h") || args.len() <= 1 {
        with = std::iter::once("--ascii")
            .chain(args.iter().copied())
            .collect();
    }
    let ascii = run(&with);
    for (stream, text) in [("stdout", &ascii.stdout), ("stderr", &ascii.stderr)] {
        if let Some((c, line)) = first_non_ascii(text) {
            failures.push(format!(
                "{name} --ascii: {stream} has non-ASCII {c:?} (U+{:04X}) in: {line}",
                c as u32
            ));
        }
    }
    for text in [&plain.stdout, &plain.stderr] {
        for c in text.chars().filter(|c| !c.is_ascii()) {
            if trialdesk::ascii::spelling(c).is_none() {
                let line = text.lines().find(|l| l.contains(c)).unwrap_or("");
                failures.push(format!(
                    "{name}: {c:?} (U+{:04X}) has no ASCII spelling (it would print as `?`): {line}",
                    c as u32
                ));
                break;
            }
        }
    }
    if plain.code != expect || ascii.code != expect {
        failures.push(format!(
            "{name}: exit {} without --ascii, {} with it, expected {expect}\n{}",
            plain.code, ascii.code, ascii.stderr
        ));
    }
    plain
}

fn demo() -> PathBuf {
    Path::new(env!("CARGO_MANIFEST_DIR")).join("demo_data/m-041")
}

#[test]
fn every_command_prints_ascii() {
    let mut failures = Vec::new();
    let f = &mut failures;
    // Help and version of the program and of every command, and usage errors.
    both(f, 0, &["--help"]);
    both(f, 0, &["--version"]);
    for cmd in [
        "review",
        "fit",
        "model",
        "check",
        "simulate",
        "marks",
        "summary",
        "plot",
        "merge",
        "completions",
        "man",
    ] {
        both(f, 0, &[cmd, "--help"]);
        both(f, 0, &[cmd, "-h"]);
    }
    both(f, 2, &["fit"]);
    both(f, 2, &["summary", "--format", "nonsense", "x"]);
    both(f, 2, &["model", "/nonexistent/subject"]);

    let tmp = tempfile::tempdir().unwrap();
    let cohort = tmp.path().join("cohort");
    let spikes = cohort.join("m-061");
    let photo = cohort.join("m-062");
    // simulate: its own stdout/stderr (the second subject with photometry).
    // Faults, so the rules suggest marks and the fit report has its sensitivity line.
    both(
        f,
        0,
        &[
            "simulate",
            s(&spikes),
            "--days",
            "2",
            "--trials-per-day",
            "30",
            "--units",
            "2",
            "--seed",
            "3",
            "--fault",
            "valve-failure:0.2",
            "--fault",
            "baseline-licks:0.1",
            "--force",
        ],
    );
    both(
        f,
        0,
        &[
            "simulate",
            s(&photo),
            "--days",
            "2",
            "--trials-per-day",
            "30",
            "--units",
            "0",
            "--photometry",
            "on",
            "--seed",
            "4",
            "--force",
        ],
    );
    // A mark with a note, so `marks` has rows to print.
    let first_session = std::fs::read_dir(&photo)
        .unwrap()
        .filter_map(Result::ok)
        .map(|e| e.path())
        .filter(|p| p.join("session.toml").is_file())
        .min()
        .unwrap();
    std::fs::write(
        first_session.join("marks.csv"),
        "trial,mark,reason,note,reviewer,at\n\
         3,exclude,artifact,cord knocked,tester,2026-03-02T10:00:00Z\n\
         ,note,,patch cord replaced after trial 80,tester,2026-03-02T10:05:00Z\n",
    )
    .unwrap();

    for subject in [&spikes, &photo] {
        let p = s(subject);
        both(f, 0, &["check", p]);
        both(f, 0, &["summary", p]);
        both(f, 0, &["summary", p, "--format", "csv"]);
        both(f, 0, &["summary", p, "--format", "markdown"]);
        both(f, 0, &["summary", p, "--no-model"]);
        // The few-replicate bootstrap warning and its flag are part of the report.
        let fitted = both(f, 0, &["fit", p, "--bootstrap", "4"]);
        assert_eq!(fitted.code, 0, "fit {p}: {}", fitted.stderr);
        both(f, 0, &["summary", p]);
        both(f, 0, &["model", p, "--out", "-"]);
        both(
            f,
            0,
            &["model", p, "--alpha", "0.1", "--gamma", "0.9", "--out", "-"],
        );
        both(f, 0, &["plot", p, "--out", s(&tmp.path().join("plots"))]);
        both(f, 0, &["marks", p]);
        both(f, 0, &["marks", p, "--all"]);
        both(f, 0, &["marks", p, "--format", "csv"]);
    }
    both(f, 0, &["check", s(&demo())]);
    both(f, 0, &["check", s(&first_session)]);
    // The cohort of two subjects recorded on the same dates.
    let c = s(&cohort);
    both(f, 0, &["summary", c]);
    both(f, 0, &["summary", c, "--format", "csv"]);
    both(
        f,
        0,
        &[
            "fit",
            c,
            "--bootstrap",
            "2",
            "--no-compare",
            "--no-sensitivity",
            "--no-save",
        ],
    );
    both(
        f,
        0,
        &["plot", c, "--out", s(&tmp.path().join("cohort-plots"))],
    );
    both(f, 2, &["review", c]);
    both(f, 0, &["merge", "--batch-example"]);
    for shell in ["bash", "zsh", "fish", "powershell", "elvish"] {
        both(f, 0, &["completions", shell]);
    }
    both(f, 0, &["man"]);
    assert!(
        failures.is_empty(),
        "{} problem(s):\n{}",
        failures.len(),
        failures.join("\n")
    );
}

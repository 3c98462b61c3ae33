//! End to end: the real `trialdesk` binary in a tmux pane. Steps trials, excludes one with a
//! reason, writes a note, quits, and checks marks.csv on disk and that the terminal came back
//! (alternate screen left, shell prompt shown, line discipline restored). Also ends the
//! reviewer with SIGTERM and SIGHUP and checks the terminal again.
//!
//! A second run on a subject simulated with faults (by the binary's own `simulate`) accepts,
//! rejects and accepts-all suggested marks, and checks the rows on disk and that `check` no
//! longer counts them as pending.
//!
//! Needs tmux. Without it the test prints a notice and passes, unless CI is set (then it fails:
//! .ci/run installs tmux).

use std::path::{Path, PathBuf};
use std::process::Command;
use std::time::{Duration, Instant};

mod tmux_support;
use tmux_support::{copy_dir, tmux_present};

const PROMPT: &str = "E2E-READY$";

struct Pane {
    socket: String,
    _tmp: tempfile::TempDir,
    subject: PathBuf,
    config: PathBuf,
}

impl Pane {
    fn start(name: &str) -> Option<Pane> {
        Pane::start_with(name, |subject| {
            copy_dir(
                &Path::new(env!("CARGO_MANIFEST_DIR")).join("tests/fixtures/tui/m-007"),
                subject,
            )
        })
    }

    /// A pane with a subject folder made by `make` (given the folder's path).
    fn start_with(name: &str, make: impl FnOnce(&Path)) -> Option<Pane> {
        if !tmux_present() {
            if std::env::var_os("CI").is_some() {
                panic!(
                    "tmux is required in CI for the end-to-end reviewer test (.ci/run installs it)"
                );
            }
            eprintln!("NOTICE: tmux not found; skipping the end-to-end reviewer test {name}");
            return None;
        }
        let tmp = tempfile::tempdir().unwrap();
        let subject = tmp.path().join("m-007");
        make(&subject);
        let config = tmp.path().join("config");
        std::fs::create_dir_all(config.join("trialdesk")).unwrap();
        std::fs::write(
            config.join("trialdesk/config.toml"),
            "reviewer = \"e2e-reviewer\"\n",
        )
        .unwrap();
        let socket = format!("trialdesk-e2e-{}-{name}", std::process::id());
        let pane = Pane {
            socket,
            _tmp: tmp,
            subject,
            config,
        };
        let ok = Command::new("tmux")
            .args([
                "-L",
                &pane.socket,
                "-f",
                "/dev/null",
                "new-session",
                "-d",
                "-x",
                "100",
                "-y",
                "30",
                "-s",
                "e2e",
            ])
            .args([
                "env",
                "-i",
                "PATH=/usr/bin:/bin",
                "TERM=xterm-256color",
                &format!("PS1={PROMPT} "),
                "HOME=/tmp",
            ])
            .args(["bash", "--norc", "--noprofile"])
            .status()
            .unwrap()
            .success();
        assert!(ok, "tmux new-session failed");
        pane.wait_for("shell prompt", |s| s.contains(PROMPT));
        Some(pane)
    }

    fn tmux(&self, args: &[&str]) -> String {
        let out = Command::new("tmux")
            .arg("-L")
            .arg(&self.socket)
            .args(args)
            .output()
            .unwrap();
        String::from_utf8_lossy(&out.stdout).into_owned()
    }

    fn screen(&self) -> String {
        self.tmux(&["capture-pane", "-p", "-t", "e2e"])
    }

    fn send(&self, keys: &[&str]) {
        let mut args = vec!["send-keys", "-t", "e2e"];
        args.extend_from_slice(keys);
        self.tmux(&args);
    }

    /// Type text literally (no key-name lookup).
    fn type_text(&self, text: &str) {
        self.tmux(&["send-keys", "-t", "e2e", "-l", text]);
    }

    fn wait_for(&self, what: &str, cond: impl Fn(&str) -> bool) -> String {
        let start = Instant::now();
        loop {
            let s = self.screen();
            if cond(&s) {
                return s;
            }
            if start.elapsed() > Duration::from_secs(20) {
                panic!("timed out waiting for {what}; screen:\n{s}");
            }
            std::thread::sleep(Duration::from_millis(100));
        }
    }

    fn alternate_on(&self) -> bool {
        self.tmux(&["display-message", "-p", "-t", "e2e", "#{alternate_on}"])
            .trim()
            == "1"
    }

    fn launch_reviewer(&self) {
        let cmd = format!(
            "clear; XDG_CONFIG_HOME={} {} review {}; echo EXIT=$?",
            self.config.display(),
            env!("CARGO_BIN_EXE_trialdesk"),
            self.subject.display()
        );
        self.type_text(&cmd);
        self.send(&["Enter"]);
        self.wait_for("the reviewer's first frame", |s| {
            s.contains("1 trial") && s.contains("e2e-reviewer")
        });
        assert!(
            self.alternate_on(),
            "reviewer should draw on the alternate screen"
        );
    }

    /// The reviewer has exited: the alternate screen is gone, the shell printed the exit code,
    /// and the line discipline is back to canonical mode with echo.
    fn assert_terminal_back(&self, exit_code: &str) {
        self.wait_for("the shell after exit", |s| {
            s.contains(&format!("EXIT={exit_code}"))
        });
        assert!(!self.alternate_on(), "alternate screen still on");
        // The typed line holds "MODE:%s"; only the output line starts with "MODE:" + a mode.
        self.type_text(
            "printf 'MODE:%s\\n' \"$(stty -a | tr ' ;' '\\n\\n' | grep -xE -- '-?(icanon|echo)' | tr '\\n' ' ')\"",
        );
        self.send(&["Enter"]);
        let s = self.wait_for("stty output", |s| {
            s.lines()
                .any(|l| l.starts_with("MODE:") && !l.contains("%s"))
        });
        let line = s
            .lines()
            .find(|l| l.starts_with("MODE:") && !l.contains("%s"))
            .unwrap();
        let modes: Vec<&str> = line["MODE:".len()..].split_whitespace().collect();
        assert!(modes.contains(&"icanon"), "raw mode left on: {line}");
        assert!(modes.contains(&"echo"), "echo left off: {line}");
        self.type_text("clear");
        self.send(&["Enter"]);
    }

    fn reviewer_pid(&self) -> String {
        let shell = self.tmux(&["display-message", "-p", "-t", "e2e", "#{pane_pid}"]);
        let out = Command::new("pgrep")
            .args(["-P", shell.trim(), "-f", "trialdesk"])
            .output()
            .unwrap();
        let pid = String::from_utf8_lossy(&out.stdout)
            .lines()
            .next()
            .unwrap_or("")
            .to_string();
        assert!(
            !pid.is_empty(),
            "reviewer process not found under shell {shell}"
        );
        pid
    }
}

impl Drop for Pane {
    fn drop(&mut self) {
        let _ = Command::new("tmux")
            .args(["-L", &self.socket, "kill-server"])
            .status();
    }
}

#[test]
fn mark_note_quit_and_terminal_restored() {
    let Some(pane) = Pane::start("mark") else {
        return;
    };
    pane.launch_reviewer();
    pane.send(&["j"]);
    pane.send(&["Down"]);
    pane.wait_for("trial 3", |s| s.contains("trial 3"));
    pane.send(&["x"]);
    pane.wait_for("the reason picker", |s| s.contains("why?"));
    pane.send(&["3"]);
    pane.wait_for("saved exclusion", |s| {
        s.contains("saved: trial 3 excluded (valve failure)")
    });
    pane.send(&["n"]);
    pane.wait_for("the note editor", |s| s.contains("note on trial 3"));
    pane.type_text("reward line refilled");
    pane.send(&["Enter"]);
    pane.wait_for("saved note", |s| s.contains("saved: note on trial 3"));
    pane.send(&["q"]);
    pane.assert_terminal_back("0");
    let csv = std::fs::read_to_string(pane.subject.join("2026-03-02/marks.csv")).unwrap();
    let rows: Vec<Vec<&str>> = csv.lines().map(|l| l.split(',').collect()).collect();
    assert_eq!(
        rows[0],
        ["trial", "mark", "reason", "note", "reviewer", "at"]
    );
    assert_eq!(
        rows[1][..5],
        ["3", "exclude", "valve failure", "", "e2e-reviewer"]
    );
    assert_eq!(
        rows[2][..5],
        ["3", "note", "", "reward line refilled", "e2e-reviewer"]
    );
    assert_eq!(rows.len(), 3, "{csv}");
}

#[test]
fn sigterm_and_sighup_restore_the_terminal() {
    let Some(pane) = Pane::start("signals") else {
        return;
    };
    for (signal, code) in [("-TERM", "0"), ("-HUP", "0")] {
        pane.launch_reviewer();
        pane.send(&["x"]);
        pane.send(&["1"]);
        pane.wait_for("saved exclusion", |s| s.contains("saved: trial 1 excluded"));
        let pid = pane.reviewer_pid();
        assert!(Command::new("kill")
            .args([signal, &pid])
            .status()
            .unwrap()
            .success());
        pane.assert_terminal_back(code);
    }
    let csv = std::fs::read_to_string(pane.subject.join("2026-03-02/marks.csv")).unwrap();
    assert_eq!(csv.lines().count(), 3, "{csv}");
}

/// `trialdesk check`'s pending-suggestion count for the subject's one session.
fn pending_count(subject: &Path) -> usize {
    let out = Command::new(env!("CARGO_BIN_EXE_trialdesk"))
        .arg("check")
        .arg(subject)
        .output()
        .unwrap();
    let text =
        String::from_utf8_lossy(&out.stdout).into_owned() + &String::from_utf8_lossy(&out.stderr);
    text.lines()
        .find_map(|l| {
            let l = l.trim();
            l.strip_suffix(" suggestions")
                .or_else(|| l.strip_suffix(" suggestion"))?
                .rsplit(' ')
                .next()?
                .parse()
                .ok()
        })
        .unwrap_or_else(|| {
            if text.contains(": none") {
                0
            } else {
                panic!("{text}")
            }
        })
}

/// The trial and rule named by the status line after `next_suggestion`.
fn suggested_on_screen(screen: &str) -> (i64, String) {
    let line = screen
        .lines()
        .find(|l| l.contains(": suggested "))
        .unwrap_or_else(|| panic!("no suggestion on screen:\n{screen}"));
    let (head, rule) = line.split_once(": suggested ").unwrap();
    let trial = head.trim().trim_start_matches("trial ").parse().unwrap();
    (trial, rule.split_whitespace().next().unwrap().to_string())
}

#[test]
fn accept_reject_and_accept_all_suggestions() {
    let Some(pane) = Pane::start_with("suggest", |subject| {
        let ok = Command::new(env!("CARGO_BIN_EXE_trialdesk"))
            .args([
                "simulate",
                "--seed",
                "7",
                "--days",
                "1",
                "--trials-per-day",
                "30",
            ])
            .args(["--units", "2", "--fault", "valve-failure:0.2"])
            .args(["--fault", "baseline-licks:0.1"])
            .arg(subject)
            .output()
            .unwrap();
        assert!(ok.status.success(), "{ok:?}");
    }) else {
        return;
    };
    let before = pending_count(&pane.subject);
    assert!(
        before >= 4,
        "the faulty fixture should have suggestions: {before}"
    );
    pane.launch_reviewer();

    pane.send(&["f"]);
    let (accepted, rule_a) =
        suggested_on_screen(&pane.wait_for("a suggestion", |s| s.contains(": suggested ")));
    pane.send(&["y"]);
    pane.wait_for("saved accept", |s| {
        s.contains(&format!("saved: trial {accepted} suspect ({rule_a})"))
    });

    pane.send(&["f"]);
    let (rejected, rule_r) = suggested_on_screen(&pane.wait_for("the next suggestion", |s| {
        s.contains(": suggested ") && !s.contains(&format!("trial {accepted}: suggested"))
    }));
    pane.send(&["r"]);
    pane.wait_for("saved reject", |s| s.contains("suggestion rejected"));

    pane.send(&["f"]);
    let (_, rule_all) =
        suggested_on_screen(&pane.wait_for("a third suggestion", |s| s.contains(": suggested ")));
    pane.send(&["Y"]);
    pane.wait_for("the accept-all question", |s| s.contains("accept all?"));
    pane.send(&["y"]);
    let s = pane.wait_for("saved accept-all", |s| s.contains("trial(s) suspect ("));
    let n_all: usize = s
        .lines()
        .find_map(|l| l.split("saved: ").nth(1)?.split(' ').next()?.parse().ok())
        .unwrap();
    pane.send(&["q"]);
    pane.assert_terminal_back("0");

    let journal = trialdesk::marks::read_journal(&pane.subject.join("2026-03-02")).unwrap();
    let rows: Vec<_> = journal
        .rows
        .iter()
        .map(|r| {
            (
                r.trial.unwrap(),
                r.mark.as_str(),
                r.reason.as_str(),
                r.reviewer.as_str(),
            )
        })
        .collect();
    assert_eq!(rows.len(), 2 + n_all, "{rows:?}");
    assert_eq!(
        rows[0],
        (accepted, "suspect", rule_a.as_str(), "e2e-reviewer")
    );
    let reject_reason = format!("reject:{rule_r}");
    assert_eq!(
        rows[1],
        (rejected, "note", reject_reason.as_str(), "e2e-reviewer")
    );
    for r in &rows[2..] {
        assert_eq!(
            (r.1, r.2, r.3),
            ("suspect", rule_all.as_str(), "e2e-reviewer")
        );
    }
    // Accepted, rejected and accepted-all ones are no longer pending (a suspect accept settles
    // its own rule's suggestion), so `check` counts at least that many fewer.
    let loaded = trialdesk::data::load(&pane.subject).unwrap();
    let pending = trialdesk::suggest::pending_for_session(
        &loaded.subject.sessions[0],
        &trialdesk::suggest::RuleSet::default(),
    )
    .unwrap();
    let settled = |p: &trialdesk::suggest::Suggestion| {
        (p.trial == accepted && p.rule == rule_a)
            || (p.trial == rejected && p.rule == rule_r)
            || p.rule == rule_all
    };
    assert!(!pending.iter().any(settled));
    let after = pending_count(&pane.subject);
    assert_eq!(after, pending.len());
    assert!(after <= before - 2 - n_all, "{before} -> {after}");
}

//! A private tmux server for tests that drive the real reviewer: one window per reviewer,
//! each running the binary directly (no shell), screens read with `capture-pane`.
//!
//! `tests/e2e_tmux.rs` keeps its own shell-based pane (it checks the shell's terminal after
//! exit); this one is for tests that start, kill and restart many reviewers quickly.

#![allow(dead_code)]

use std::path::{Path, PathBuf};
use std::process::Command;
use std::time::{Duration, Instant};

pub const BIN: &str = env!("CARGO_BIN_EXE_trialdesk");

pub fn tmux_present() -> bool {
    Command::new("tmux")
        .arg("-V")
        .output()
        .is_ok_and(|o| o.status.success())
}

/// Copy a folder tree (regular files and folders).
pub fn copy_dir(from: &Path, to: &Path) {
    std::fs::create_dir_all(to).unwrap();
    for e in std::fs::read_dir(from).unwrap() {
        let e = e.unwrap();
        if e.file_type().unwrap().is_dir() {
            copy_dir(&e.path(), &to.join(e.file_name()));
        } else {
            std::fs::copy(e.path(), to.join(e.file_name())).unwrap();
        }
    }
}

/// The reviewer fixture subject (two short sessions).
pub fn fixture_subject() -> PathBuf {
    Path::new(env!("CARGO_MANIFEST_DIR")).join("tests/fixtures/tui/m-007")
}

/// A copy of the fixture subject in `tmp` (as `m-007`) and an empty config folder beside it
/// (`config/trialdesk/` made); returns (subject, config). Point XDG_CONFIG_HOME at config.
pub fn scratch_subject(tmp: &Path) -> (PathBuf, PathBuf) {
    let subject = tmp.join("m-007");
    copy_dir(&fixture_subject(), &subject);
    let config = tmp.join("config");
    std::fs::create_dir_all(config.join("trialdesk")).unwrap();
    (subject, config)
}

/// A tmux server of its own (killed on drop) with windows 200×30 (wide enough for a status
/// line with a long path and the system's reason) that stay after their program ends, so a
/// killed reviewer's window can be restarted in place.
pub struct Server {
    socket: String,
    /// Environment given to every reviewer (`KEY=value`).
    pub env: Vec<String>,
}

impl Server {
    pub fn start(name: &str, env: Vec<String>) -> Server {
        let socket = format!("trialdesk-rel-{}-{name}", std::process::id());
        let server = Server { socket, env };
        let out = Command::new("tmux")
            .args(["-L", &server.socket, "-f", "/dev/null"])
            .args(["new-session", "-d", "-x", "200", "-y", "30", "-s", "rel"])
            .args(["sleep", "100000"])
            .output()
            .unwrap();
        assert!(out.status.success(), "tmux: {out:?}");
        server.tmux(&["set-option", "-g", "remain-on-exit", "on"]);
        server
    }

    pub fn tmux(&self, args: &[&str]) -> String {
        let out = Command::new("tmux")
            .arg("-L")
            .arg(&self.socket)
            .args(args)
            .output()
            .unwrap();
        String::from_utf8_lossy(&out.stdout).into_owned()
    }

    /// The shell line that runs `trialdesk ARGS` with this server's environment.
    fn command(&self, args: &[&str]) -> String {
        let mut cmd = String::from("exec env TERM=xterm-256color NO_COLOR=1");
        for e in &self.env {
            cmd.push(' ');
            cmd.push_str(&shell_quote(e));
        }
        cmd.push(' ');
        cmd.push_str(&shell_quote(BIN));
        for a in args {
            cmd.push(' ');
            cmd.push_str(&shell_quote(a));
        }
        cmd
    }

    /// Open window `name` running `trialdesk ARGS`.
    pub fn open(&self, name: &str, args: &[&str]) {
        self.tmux(&["new-window", "-d", "-n", name, &self.command(args)]);
    }

    /// Restart window `name` (dead or alive) with `trialdesk ARGS`.
    pub fn respawn(&self, name: &str, args: &[&str]) {
        let target = format!("rel:{name}");
        self.tmux(&["respawn-pane", "-k", "-t", &target, &self.command(args)]);
    }

    pub fn screen(&self, name: &str) -> String {
        // -J: a line the terminal wrapped comes back whole.
        self.tmux(&["capture-pane", "-p", "-J", "-t", &format!("rel:{name}")])
    }

    /// The screen with up to 200 lines scrolled off above it (an exit message printed at the
    /// bottom of the main screen may have scrolled).
    pub fn screen_and_history(&self, name: &str) -> String {
        let target = format!("rel:{name}");
        self.tmux(&["capture-pane", "-p", "-J", "-S", "-200", "-t", &target])
    }

    pub fn send(&self, name: &str, keys: &[&str]) {
        let target = format!("rel:{name}");
        let mut args = vec!["send-keys", "-t", &target];
        args.extend_from_slice(keys);
        self.tmux(&args);
    }

    /// Process id of the program in window `name`, and whether it has ended.
    pub fn pid(&self, name: &str) -> (i32, bool) {
        let out = self.tmux(&[
            "display-message",
            "-p",
            "-t",
            &format!("rel:{name}"),
            "#{pane_pid} #{pane_dead}",
        ]);
        let mut it = out.split_whitespace();
        let pid = it.next().and_then(|p| p.parse().ok()).unwrap_or(0);
        (pid, it.next() == Some("1"))
    }

    /// Poll window `name` every few milliseconds until `cond` holds; panics after `limit`.
    pub fn wait_for(
        &self,
        name: &str,
        what: &str,
        limit: Duration,
        cond: impl Fn(&str) -> bool,
    ) -> String {
        let start = Instant::now();
        loop {
            let s = self.screen(name);
            if cond(&s) {
                return s;
            }
            if start.elapsed() > limit {
                panic!("{name}: timed out waiting for {what}; screen:\n{s}");
            }
            std::thread::sleep(Duration::from_millis(5));
        }
    }
}

impl Drop for Server {
    fn drop(&mut self) {
        let _ = Command::new("tmux")
            .args(["-L", &self.socket, "kill-server"])
            .status();
    }
}

fn shell_quote(s: &str) -> String {
    format!("'{}'", s.replace('\'', "'\\''"))
}

/// The mark glyph (`X` exclude, `?` suspect, ` ` none) the trial list of `screen` shows for
/// `trial` (reviewer started with `--ascii`), or `None` when the trial is not listed.
pub fn listed_glyph(screen: &str, trial: i64) -> Option<char> {
    screen.lines().skip(1).find_map(|line| {
        let list = line.split('|').next()?;
        let chars: Vec<char> = list.chars().collect();
        if chars.len() < 7 {
            return None;
        }
        let number: String = chars[2..7].iter().collect();
        (number.trim().parse::<i64>().ok()? == trial).then_some(chars[0])
    })
}

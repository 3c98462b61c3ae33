//! The reliability suite (issue 19): writes that cannot be redirected and marks that are never
//! lost, tried on the real binary. Parts, each bounded in time:
//!
//! * `links` — symbolic and hard links where trialdesk writes: every output replaced, never
//!   written through; journals that are links, hard links or planted are refused and reported.
//! * `kill` — the real reviewer in tmux, SIGKILLed over and over while marking: every mark the
//!   screen called saved is on disk.
//! * `reviewers` — four reviewers in tmux marking one session at once: rows expected = rows
//!   found, every row whole, each reviewer sees the others' marks within 2 s.
//! * `disk` — a full tmpfs and a read-only bind mount under the reviewer: a clear message, the
//!   marks kept in memory and saved elsewhere, nothing lost once space returns.
//! * `fuzz` — seeded mutations of every table and settings file through the command line:
//!   no panic, no hang, exit codes 0/1/2 only.
//!
//! A plain program (`harness = false`) so that its figures are printed at the end of every
//! run, captured or not. `cargo test --test reliability -- kill fuzz` runs only those parts.
//! `disk` and the planted-link cases of `links` need root (mounts, `chown`); without it they
//! print a notice and are skipped, except in CI (`CI` set), where that is a failure.

mod disk;
mod fuzz;
mod kill;
mod links;
mod reviewers;
#[path = "../tmux_support/mod.rs"]
mod tmux_support;

use std::panic::{catch_unwind, AssertUnwindSafe};
use std::path::Path;
use std::process::{Command, Output, Stdio};
use std::time::{Duration, Instant};

/// What a part reports: one line of figures per finding.
pub type Figures = Vec<String>;

/// A part of the suite: its name and body.
type Part = (&'static str, fn(&mut Figures));

fn main() {
    let wanted: Vec<String> = std::env::args()
        .skip(1)
        .filter(|a| !a.starts_with('-'))
        .collect();
    let parts: [Part; 5] = [
        ("links", links::run),
        ("kill", kill::run),
        ("reviewers", reviewers::run),
        ("disk", disk::run),
        ("fuzz", fuzz::run),
    ];
    let started = Instant::now();
    let mut figures = Vec::new();
    let mut failed = Vec::new();
    for (name, part) in parts {
        if !wanted.is_empty() && !wanted.iter().any(|w| name.contains(w.as_str())) {
            continue;
        }
        let t = Instant::now();
        let mut mine = Figures::new();
        let outcome = catch_unwind(AssertUnwindSafe(|| part(&mut mine)));
        let secs = t.elapsed().as_secs_f64();
        let verdict = if outcome.is_ok() {
            "ok"
        } else {
            failed.push(name);
            "FAILED"
        };
        figures.push(format!("{name}: {verdict} in {secs:.1} s"));
        figures.extend(mine.into_iter().map(|f| format!("  {f}")));
    }
    println!(
        "\nreliability suite figures ({:.1} s):",
        started.elapsed().as_secs_f64()
    );
    for f in &figures {
        println!("  {f}");
    }
    if !failed.is_empty() {
        println!("reliability suite FAILED: {}", failed.join(", "));
        std::process::exit(1);
    }
    println!("reliability suite: all parts passed");
}

/// Run `trialdesk ARGS` with `env`, killing it after `limit`; `None` if it did not end.
pub fn trialdesk_within(args: &[&str], env: &[(&str, &Path)], limit: Duration) -> Option<Output> {
    let mut cmd = Command::new(tmux_support::BIN);
    cmd.args(args)
        .env("NO_COLOR", "1")
        .stdin(Stdio::null())
        .stdout(Stdio::piped())
        .stderr(Stdio::piped());
    for (k, v) in env {
        cmd.env(k, v);
    }
    let mut child = cmd.spawn().expect("start trialdesk");
    let start = Instant::now();
    loop {
        if child.try_wait().expect("wait").is_some() {
            return Some(child.wait_with_output().expect("output"));
        }
        if start.elapsed() > limit {
            let _ = child.kill();
            let _ = child.wait();
            return None;
        }
        std::thread::sleep(Duration::from_millis(5));
    }
}

/// Run `trialdesk ARGS` (60 s at most).
pub fn trialdesk(args: &[&str]) -> Output {
    trialdesk_within(args, &[], Duration::from_secs(60))
        .unwrap_or_else(|| panic!("trialdesk {args:?} did not finish in 60 s"))
}

/// Everything a command printed.
pub fn printed(o: &Output) -> String {
    format!(
        "{}{}",
        String::from_utf8_lossy(&o.stdout),
        String::from_utf8_lossy(&o.stderr)
    )
}

/// Whether a part that needs root (mounts, chown) may run. Without root it is skipped with
/// a notice, except in CI, where CI runs as root and a skip would hide a regression.
pub fn privileged(what: &str) -> bool {
    // SAFETY: geteuid has no preconditions.
    if unsafe { libc::geteuid() } == 0 {
        return true;
    }
    if std::env::var_os("CI").is_some() {
        panic!("{what} needs root, and CI runs as root: refusing to skip it in CI");
    }
    eprintln!("NOTICE: not root; skipping {what} (it runs in CI)");
    false
}

/// tmux is needed for the reviewer parts; CI installs it (.ci/run).
pub fn tmux_or_skip(what: &str) -> bool {
    if tmux_support::tmux_present() {
        return true;
    }
    if std::env::var_os("CI").is_some() {
        panic!("{what} needs tmux in CI (.ci/run installs it)");
    }
    eprintln!("NOTICE: tmux not found; skipping {what}");
    false
}

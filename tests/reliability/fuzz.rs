//! A seeded mutation fuzzer over every table and settings file trialdesk reads: a valid subject
//! (both sessions of the reviewer fixture, plus events.csv, marks.csv and a saved fit) and
//! valid settings (config.toml, keymap.toml, suggest.toml); each case damages one file with
//! 1–3 byte- and line-level mutations and runs a command that reads it. No case may panic,
//! hang (20 s), or end with an exit code other than 0, 1 or 2.
//!
//! Cases run in this process through `trialdesk::cli::run_args` (the binary's own entry
//! point), with output sent to /dev/null, so that thousands fit in a CI minute; every 25th
//! case also runs through the real binary, so the process exit code is checked too.
//! `tests/prop_parsers.rs` and `tests/check_props.rs` generate damaged tables from grammars at
//! the parser level; this part mutates real files end to end, settings files included.

use super::tmux_support::{copy_dir, fixture_subject, BIN};
use super::Figures;
use rand::{Rng, SeedableRng};
use rand_chacha::ChaCha8Rng;
use std::collections::BTreeMap;
use std::path::{Path, PathBuf};
use std::sync::mpsc;
use std::sync::Mutex;
use std::time::{Duration, Instant};

const CASES: usize = 2100;
const SEED: u64 = 2019;
const BINARY_EVERY: usize = 25;
const HANG_LIMIT: Duration = Duration::from_secs(20);

/// Tokens that break parsers: separators, quotes, line ends, BOM, NUL, invalid UTF-8, numbers
/// at the edges, TOML syntax.
const NASTY: &[&[u8]] = &[
    b",",
    b"\"",
    b"\n",
    b"\r\n",
    b"\r",
    b"\0",
    b"\xEF\xBB\xBF",
    b"\xFF\xFE",
    b"NaN",
    b"inf",
    b"-inf",
    b"-1",
    b"1e308",
    b"-0",
    b"99999999999999999999",
    b"0.0000000000000000001",
    b"=",
    b"[",
    b"]",
    b"[[cue]]",
    b"#",
    b"\xC3\xA9",
    b"\t",
    b"\x1b[2J",
    b"=SUM(A1)",
];

fn mutate(rng: &mut ChaCha8Rng, bytes: &mut Vec<u8>) {
    for _ in 0..rng.random_range(1..=3) {
        let len = bytes.len();
        let at = if len == 0 {
            0
        } else {
            rng.random_range(0..len)
        };
        let lines: Vec<usize> = std::iter::once(0)
            .chain(
                bytes
                    .iter()
                    .enumerate()
                    .filter(|(_, &b)| b == b'\n')
                    .map(|(i, _)| i + 1),
            )
            .filter(|&i| i < len)
            .collect();
        let line_span = |rng: &mut ChaCha8Rng| -> (usize, usize) {
            let i = rng.random_range(0..lines.len().max(1));
            let start = lines.get(i).copied().unwrap_or(0);
            let end = lines.get(i + 1).copied().unwrap_or(len);
            (start, end)
        };
        match rng.random_range(0..8) {
            0 if len > 0 => bytes[at] ^= 1 << rng.random_range(0..8),
            1 => {
                let tok = NASTY[rng.random_range(0..NASTY.len())];
                bytes.splice(at..at, tok.iter().copied());
            }
            2 if len > 0 => {
                let end = (at + rng.random_range(1..64)).min(len);
                bytes.drain(at..end);
            }
            3 => {
                let (s, e) = line_span(rng);
                let line = bytes[s..e].to_vec();
                bytes.splice(e..e, line);
            }
            4 if lines.len() > 1 => {
                let (s1, e1) = line_span(rng);
                let (s2, e2) = line_span(rng);
                if e1 <= s2 {
                    let (a, b) = (bytes[s1..e1].to_vec(), bytes[s2..e2].to_vec());
                    bytes.splice(s2..e2, a);
                    bytes.splice(s1..e1, b);
                }
            }
            5 => bytes.truncate(at),
            6 => {
                // A number replaced by an extreme one.
                if let Some(start) = (at..len).find(|&i| bytes[i].is_ascii_digit()) {
                    let end = (start..len)
                        .find(|&i| !(bytes[i].is_ascii_digit() || bytes[i] == b'.'))
                        .unwrap_or(len);
                    let tok = NASTY[rng.random_range(8..16)];
                    bytes.splice(start..end, tok.iter().copied());
                }
            }
            _ => {
                let (s, e) = line_span(rng);
                bytes.drain(s..e);
            }
        }
    }
}

/// One file under test and the commands that read it.
struct Target {
    path: PathBuf,
    commands: Vec<Vec<String>>,
}

fn strings(args: &[&str]) -> Vec<String> {
    args.iter().map(|s| s.to_string()).collect()
}

/// The valid starting point: subject, settings, and the files to damage.
fn corpus(root: &Path) -> (PathBuf, PathBuf, Vec<Target>) {
    let subject = root.join("m-fuzz");
    copy_dir(&fixture_subject(), &subject);
    let day1 = subject.join("2026-03-02");
    let day2 = subject.join("2026-03-03");
    std::fs::write(
        day2.join("events.csv"),
        "trial,kind,name,onset_s,offset_s,size\n2,cue,light,11.5,12.0,\n2,reward,,13.0,,2\n",
    )
    .unwrap();
    std::fs::write(
        day1.join("marks.csv"),
        "trial,mark,reason,note,reviewer,at\n3,exclude,artifact,\"a, b\",ana,2026-03-02T10:00:00Z\n\
         ,note,,patch cord replaced,ana,2026-03-02T10:01:00.5Z\n4,suspect,lost unit,,bo,2026-03-02T10:02:00Z\n",
    )
    .unwrap();
    std::fs::write(
        subject.join("trialdesk-fit.toml"),
        "alpha = 0.1\ngamma = 0.98\nlambda = 0.0\ndt = 0.05\nrepresentation = \"csc\"\ngain = 2.0\n\
         fitted_at = \"2026-03-04T10:00:00Z\"\nn_excluded = 1\nignore_marks = false\n\
         latency_s = 0.05\n\n[baselines]\ncue = 1.0\nreward = 0.5\n",
    )
    .unwrap();
    let config = root.join("config");
    let cfg = config.join("trialdesk");
    std::fs::create_dir_all(&cfg).unwrap();
    std::fs::write(
        cfg.join("config.toml"),
        "reviewer = \"fuzz\"\nreasons = [\"artifact\", \"lost unit\", \"other\"]\n",
    )
    .unwrap();
    std::fs::write(
        cfg.join("keymap.toml"),
        "[keys]\nnext_trial = [\"j\", \"down\"]\nmark_exclude = \"x\"\nquit = \"q\"\n",
    )
    .unwrap();
    let rules = Path::new(env!("CARGO_MANIFEST_DIR")).join("src/suggest/default_rules.toml");
    std::fs::copy(rules, cfg.join("suggest.toml")).unwrap();

    let s = subject.to_str().unwrap();
    let check = strings(&["trialdesk", "check", s]);
    let summary = strings(&["trialdesk", "summary", s]);
    let marks = strings(&["trialdesk", "marks", s]);
    let model = strings(&[
        "trialdesk",
        "model",
        s,
        "--alpha",
        "0.1",
        "--gamma",
        "0.95",
        "--out",
        "-",
    ]);
    let review = strings(&["trialdesk", "review", s]);
    let data = vec![check.clone(), summary.clone(), model];
    let mut targets = Vec::new();
    for day in [&day1, &day2] {
        for f in ["session.toml", "trials.csv", "spikes.csv", "licks.csv"] {
            targets.push(Target {
                path: day.join(f),
                commands: data.clone(),
            });
        }
    }
    for path in [day2.join("photometry.csv"), day2.join("events.csv")] {
        targets.push(Target {
            path,
            commands: data.clone(),
        });
    }
    let targets_more = [
        (
            day1.join("marks.csv"),
            vec![marks, check.clone(), summary.clone()],
        ),
        (subject.join("trialdesk-fit.toml"), vec![summary.clone()]),
        (cfg.join("config.toml"), vec![review.clone()]),
        (cfg.join("keymap.toml"), vec![review]),
        (cfg.join("suggest.toml"), vec![check, summary]),
    ];
    for (path, commands) in targets_more {
        targets.push(Target { path, commands });
    }
    (subject, config, targets)
}

/// Panic messages from cases (the default hook would print them into /dev/null).
static PANICS: Mutex<Vec<String>> = Mutex::new(Vec::new());

/// stdout and stderr sent to /dev/null while cases run in this process; restored on drop.
struct Silenced([i32; 2]);

impl Silenced {
    fn new() -> Silenced {
        use std::io::Write;
        let _ = std::io::stdout().flush();
        let null = std::fs::OpenOptions::new()
            .write(true)
            .open("/dev/null")
            .unwrap();
        use std::os::fd::AsRawFd;
        // SAFETY: plain fd duplication on this process's own descriptors.
        unsafe {
            let saved = [libc::dup(1), libc::dup(2)];
            libc::dup2(null.as_raw_fd(), 1);
            libc::dup2(null.as_raw_fd(), 2);
            Silenced(saved)
        }
    }
}

impl Drop for Silenced {
    fn drop(&mut self) {
        use std::io::Write;
        let _ = std::io::stdout().flush();
        // SAFETY: restores the descriptors saved in `new`.
        unsafe {
            libc::dup2(self.0[0], 1);
            libc::dup2(self.0[1], 2);
            libc::close(self.0[0]);
            libc::close(self.0[1]);
        }
    }
}

#[derive(Default)]
struct Tally {
    cases: usize,
    binary_runs: usize,
    codes: BTreeMap<i32, usize>,
    panics: Vec<String>,
    hangs: Vec<String>,
    bad_codes: Vec<String>,
}

pub fn run(figures: &mut Figures) {
    let tmp = tempfile::tempdir().unwrap();
    let (_subject, config, targets) = corpus(tmp.path());
    // The settings files are found through the config folder, as a user's are.
    std::env::set_var("XDG_CONFIG_HOME", &config);
    // The corpus itself must be valid, or the mutations prove little.
    for t in &targets {
        for cmd in &t.commands {
            let o = std::process::Command::new(BIN)
                .args(&cmd[1..])
                .env("XDG_CONFIG_HOME", &config)
                .stdin(std::process::Stdio::null())
                .output()
                .unwrap();
            let code = o.status.code();
            let expected = if cmd[1] == "review" { 2 } else { 0 };
            assert_eq!(
                code,
                Some(expected),
                "clean corpus: {cmd:?}: {}",
                String::from_utf8_lossy(&o.stderr)
            );
        }
    }
    let originals: Vec<Vec<u8>> = targets
        .iter()
        .map(|t| std::fs::read(&t.path).unwrap())
        .collect();
    let previous_hook = std::panic::take_hook();
    std::panic::set_hook(Box::new(|info| {
        PANICS.lock().unwrap().push(info.to_string());
    }));
    let started = Instant::now();
    let mut rng = ChaCha8Rng::seed_from_u64(SEED);
    let mut tally = Tally::default();
    {
        let _quiet = Silenced::new();
        for case in 0..CASES {
            let ti = case % targets.len();
            let target = &targets[ti];
            let mut bytes = originals[ti].clone();
            mutate(&mut rng, &mut bytes);
            std::fs::write(&target.path, &bytes).unwrap();
            let cmd = target.commands[(case / targets.len()) % target.commands.len()].clone();
            let what = format!(
                "case {case}: {} mutated, {}",
                target.path.display(),
                cmd[1..].join(" ")
            );
            let (tx, rx) = mpsc::channel();
            let args = cmd.clone();
            std::thread::spawn(move || {
                let r = std::panic::catch_unwind(|| trialdesk::cli::run_args(args));
                let _ = tx.send(r);
            });
            match rx.recv_timeout(HANG_LIMIT) {
                Ok(Ok(code)) => {
                    *tally.codes.entry(code).or_default() += 1;
                    if !(0..=2).contains(&code) {
                        tally.bad_codes.push(format!("{what}: exit {code}"));
                    }
                }
                Ok(Err(_)) => {
                    let msg = PANICS.lock().unwrap().pop().unwrap_or_default();
                    tally.panics.push(format!("{what}: {msg}"));
                }
                Err(_) => {
                    tally.hangs.push(what);
                    // The stuck thread may still use the files: stop here.
                    break;
                }
            }
            if case % BINARY_EVERY == 0 {
                tally.binary_runs += 1;
                check_binary(&cmd, &config, &what, &mut tally);
            }
            tally.cases += 1;
            std::fs::write(&target.path, &originals[ti]).unwrap();
        }
    }
    std::panic::set_hook(previous_hook);
    let codes: Vec<String> = tally
        .codes
        .iter()
        .map(|(c, n)| format!("exit {c}: {n}"))
        .collect();
    figures.push(format!(
        "{} mutated cases (seed {SEED}) over {} files ({} through the real binary): {} panics, \
         {} hangs, {} other exit codes; {}; {:.1} s",
        tally.cases,
        targets.len(),
        tally.binary_runs,
        tally.panics.len(),
        tally.hangs.len(),
        tally.bad_codes.len(),
        codes.join(", "),
        started.elapsed().as_secs_f64()
    ));
    let problems: Vec<&String> = tally
        .panics
        .iter()
        .chain(&tally.hangs)
        .chain(&tally.bad_codes)
        .collect();
    assert!(problems.is_empty(), "{problems:#?}");
    assert!(tally.cases >= 2000, "only {} cases", tally.cases);
}

/// The same case through the real binary: an exit code of 0, 1 or 2 and no panic message.
fn check_binary(cmd: &[String], config: &Path, what: &str, tally: &mut Tally) {
    let args: Vec<&str> = cmd[1..].iter().map(|s| s.as_str()).collect();
    match super::trialdesk_within(&args, &[("XDG_CONFIG_HOME", config)], HANG_LIMIT) {
        None => tally.hangs.push(format!("{what} (binary)")),
        Some(o) => {
            let text = super::printed(&o);
            match o.status.code() {
                Some(0..=2) if !text.contains("panicked") => {}
                Some(0..=2) => tally.panics.push(format!("{what} (binary): {text}")),
                other => tally.bad_codes.push(format!("{what} (binary): {other:?}")),
            }
        }
    }
}

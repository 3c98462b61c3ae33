//! Huge input (issue 6, item 3): a single enormous line, multi-GB files and millions of bad
//! rows must not exhaust memory. `trialdesk check` runs as a child under an address-space
//! limit (`prlimit --as`), so a reader that slurps a file dies instead of passing; each case
//! must end with exit 1 and a message naming the file and line.
//!
//! Multi-GB files are sparse (`File::set_len`): they read as NUL bytes, so the reader must
//! stop at the first one. A reader that went on to read the gigabytes would also miss the
//! time limit below.

use std::fs::File;
use std::io::Write;
use std::path::Path;
use std::process::{Command, Output, Stdio};
use std::time::{Duration, Instant};

const BIN: &str = env!("CARGO_BIN_EXE_trialdesk");

/// Address space the child may use: ample for a debug build reading small sessions (it
/// peaks near 30 MB), far below any file written here.
const MEMORY_LIMIT: u64 = 512 << 20;

/// Per run; a reader that stops early needs well under a second.
const TIME_LIMIT: Duration = Duration::from_secs(10);

const META: &str = "subject = \"m-big\"\ndate = \"2026-03-02\"\n\
                    [[cue]]\nname = \"tone-hi\"\nreward_delay_s = 1.5\n";
const TRIALS: &str = "trial,cue,cue_s,reward_s,reward_ul\n1,tone-hi,1,2.5,3\n2,tone-hi,9,10.5,3\n";

fn session(dir: &Path) {
    std::fs::create_dir_all(dir).unwrap();
    std::fs::write(dir.join("session.toml"), META).unwrap();
    std::fs::write(dir.join("trials.csv"), TRIALS).unwrap();
}

/// `trialdesk check DIR` under the memory limit, killed after the time limit.
fn check_limited(dir: &Path) -> (Output, Duration) {
    let start = Instant::now();
    let mut child = Command::new("prlimit")
        .arg(format!("--as={MEMORY_LIMIT}"))
        .arg("--")
        .arg(BIN)
        .arg("check")
        .arg(dir)
        .stdin(Stdio::null())
        .stdout(Stdio::piped())
        .stderr(Stdio::piped())
        .spawn()
        .expect("run prlimit (util-linux)");
    loop {
        if child.try_wait().unwrap().is_some() {
            return (child.wait_with_output().unwrap(), start.elapsed());
        }
        if start.elapsed() > TIME_LIMIT {
            let _ = child.kill();
            let _ = child.wait();
            panic!("check {} ran over {TIME_LIMIT:?}", dir.display());
        }
        std::thread::sleep(Duration::from_millis(20));
    }
}

/// Exit 1 (invalid data, not a crash or a signal) and a `file:line:` message containing `what`.
fn assert_refused(dir: &Path, file: &str, line: u64, what: &str) {
    let (o, took) = check_limited(dir);
    let text = format!(
        "{}{}",
        String::from_utf8_lossy(&o.stdout),
        String::from_utf8_lossy(&o.stderr)
    );
    assert_eq!(
        o.status.code(),
        Some(1),
        "{file}: status {:?}: {text}",
        o.status
    );
    assert!(!text.contains("panicked"), "{text}");
    let at = format!("{file}:{line}:");
    assert!(
        text.lines().any(|l| l.contains(&at) && l.contains(what)),
        "expected `{at} … {what}` in:\n{text}"
    );
    eprintln!("{file}: refused in {took:?}");
}

/// `header` then `len` bytes of `fill` with no newline, written in 1 MB chunks.
fn write_one_line(path: &Path, header: &str, len: usize, fill: u8) {
    let mut f = File::create(path).unwrap();
    f.write_all(header.as_bytes()).unwrap();
    let chunk = vec![fill; 1 << 20];
    let mut left = len;
    while left > 0 {
        let n = left.min(chunk.len());
        f.write_all(&chunk[..n]).unwrap();
        left -= n;
    }
}

/// `header` then a hole up to `len` bytes (reads as NUL, takes no disk).
fn write_sparse(path: &Path, header: &str, len: u64) {
    let f = File::create(path).unwrap();
    (&f).write_all(header.as_bytes()).unwrap();
    f.set_len(len).unwrap();
}

#[test]
fn a_200_mb_line_without_newline_is_refused_at_its_line() {
    let tmp = tempfile::tempdir().unwrap();
    let dir = tmp.path().join("s");
    session(&dir);
    write_one_line(&dir.join("spikes.csv"), "unit,time_s\n", 200 << 20, b'7');
    assert_refused(&dir, "spikes.csv", 2, "longer than");
    std::fs::remove_file(dir.join("spikes.csv")).unwrap();

    // No header line at all: the first line is the enormous one.
    write_one_line(&dir.join("trials.csv"), "", 200 << 20, b',');
    assert_refused(&dir, "trials.csv", 1, "longer than");
}

#[test]
fn a_long_quoted_field_spanning_lines_is_bounded_too() {
    // An opened quote never closed swallows every following line into one field: the CSV
    // parser would buffer it all. Lines are short, so only a record-size bound stops it.
    let tmp = tempfile::tempdir().unwrap();
    let dir = tmp.path().join("s");
    session(&dir);
    let mut f = File::create(dir.join("licks.csv")).unwrap();
    f.write_all(b"time_s\n\"1.0\n").unwrap();
    let lines = b"2.0\n".repeat(1 << 18);
    for _ in 0..200 {
        f.write_all(&lines).unwrap(); // 200 MB of short lines inside one quoted field
    }
    drop(f);
    let (o, took) = check_limited(&dir);
    let text = format!(
        "{}{}",
        String::from_utf8_lossy(&o.stdout),
        String::from_utf8_lossy(&o.stderr)
    );
    assert_eq!(o.status.code(), Some(1), "status {:?}: {text}", o.status);
    assert!(text.contains("licks.csv:2:"), "{text}");
    assert!(text.contains("longer than"), "{text}");
    eprintln!("quoted field: refused in {took:?}");
}

#[test]
fn multi_gb_sparse_files_stop_at_the_first_nul() {
    let tmp = tempfile::tempdir().unwrap();
    let cases: [(&str, &str, u64); 5] = [
        ("licks.csv", "", 1),
        ("photometry.csv", "time_s,signal\n0,1\n", 3),
        ("spikes.csv", "unit,time_s\n", 2),
        ("trials.csv", TRIALS, 4),
        ("session.toml", "", 1),
    ];
    for (file, header, line) in cases {
        let dir = tmp.path().join(file.replace('.', "-"));
        session(&dir);
        write_sparse(&dir.join(file), header, 4 << 30);
        let what = if file == "session.toml" {
            "too large"
        } else {
            "NUL"
        };
        if file == "session.toml" {
            // A whole-file problem: no line to name.
            let (o, _) = check_limited(&dir);
            let text = String::from_utf8_lossy(&o.stdout).into_owned()
                + &String::from_utf8_lossy(&o.stderr);
            assert_eq!(o.status.code(), Some(1), "{text}");
            assert!(
                text.contains("session.toml: ") && text.contains(what),
                "{text}"
            );
        } else {
            assert_refused(&dir, file, line, what);
        }
    }
}

#[test]
fn a_multi_gb_marks_journal_is_refused_unread() {
    let tmp = tempfile::tempdir().unwrap();
    let dir = tmp.path().join("s");
    session(&dir);
    write_sparse(
        &dir.join("marks.csv"),
        "trial,mark,reason,note,reviewer,at\n",
        3 << 30,
    );
    let (o, took) = check_limited(&dir);
    let text =
        String::from_utf8_lossy(&o.stdout).into_owned() + &String::from_utf8_lossy(&o.stderr);
    assert_eq!(o.status.code(), Some(1), "{text}");
    assert!(text.contains("marks.csv"), "{text}");
    eprintln!("marks: refused in {took:?}");
}

#[test]
fn millions_of_bad_rows_print_a_bounded_report() {
    // Half a million rows, each an error: the diagnostics kept must not grow with them.
    let tmp = tempfile::tempdir().unwrap();
    let dir = tmp.path().join("s");
    session(&dir);
    let mut f = File::create(dir.join("licks.csv")).unwrap();
    f.write_all(b"time_s\n").unwrap();
    let block = b"abc\n".repeat(1 << 16);
    for _ in 0..8 {
        f.write_all(&block).unwrap();
    }
    drop(f);
    let (o, took) = check_limited(&dir);
    let out = String::from_utf8_lossy(&o.stdout).into_owned();
    assert_eq!(o.status.code(), Some(1), "{out}");
    assert!(
        out.contains("licks.csv:2: "),
        "{}",
        &out[..out.len().min(2000)]
    );
    assert!(
        out.lines().count() < 200,
        "{} lines printed",
        out.lines().count()
    );
    eprintln!("bad rows: {took:?}");
}

#[test]
fn a_header_of_hundreds_of_thousands_of_columns_is_handled() {
    let tmp = tempfile::tempdir().unwrap();
    let dir = tmp.path().join("s");
    session(&dir);
    // 300,000 extra columns (under the 1 MB line cap), then rows as wide.
    let mut header = String::from("time_s");
    let mut row = String::from("1.0");
    for i in 0..300_000 {
        header.push_str(&format!(",c{}", i % 10));
        row.push(',');
    }
    let text = format!("{header}\n{row}\n{row}\n");
    std::fs::write(dir.join("licks.csv"), text).unwrap();
    let (o, _) = check_limited(&dir);
    assert!(
        matches!(o.status.code(), Some(0 | 1)),
        "status {:?}: {}",
        o.status,
        String::from_utf8_lossy(&o.stderr)
    );
}

/// Set in the child run of [`huge_config_files_are_refused_within_memory`].
const CHILD_DIR: &str = "TRIALDESK_HOSTILE_CONFIG_DIR";

/// The user's keymap, config and suggestion-rule files, each a 256 MB sparse file: read with
/// the library's own functions inside this test binary, re-run as a child under the memory
/// limit. A reader that slurps the file gets it in, then the TOML parser's allocation
/// aborts the process (without a limit a 4 GB file did the same, after 30 s and 4 GB).
#[test]
fn huge_config_files_are_refused_within_memory() {
    if let Some(dir) = std::env::var_os(CHILD_DIR) {
        let dir = Path::new(&dir);
        let keymap = trialdesk::cli::review::keymap_for(Some(dir), None);
        let e = keymap
            .expect_err("a huge keymap must be refused")
            .to_string();
        assert!(e.contains("keymap.toml") && e.contains("too large"), "{e}");
        let e = trialdesk::tui::config::load(dir)
            .expect_err("huge config.toml")
            .to_string();
        assert!(e.contains("config.toml") && e.contains("too large"), "{e}");
        let e = trialdesk::suggest::config::RuleSet::load_from(dir)
            .expect_err("huge suggest.toml")
            .to_string();
        assert!(e.contains("suggest.toml") && e.contains("too large"), "{e}");
        println!("child: all refused: {e}");
        return;
    }
    let tmp = tempfile::tempdir().unwrap();
    for file in ["keymap.toml", "config.toml", "suggest.toml"] {
        write_sparse(&tmp.path().join(file), "", 256 << 20);
    }
    let o = Command::new("prlimit")
        .arg(format!("--as={MEMORY_LIMIT}"))
        .arg("--")
        .arg(std::env::current_exe().unwrap())
        .args(["--exact", "huge_config_files_are_refused_within_memory"])
        .args(["--nocapture", "--include-ignored"])
        .env(CHILD_DIR, tmp.path())
        .output()
        .unwrap();
    let text =
        String::from_utf8_lossy(&o.stdout).into_owned() + &String::from_utf8_lossy(&o.stderr);
    assert!(o.status.success(), "child: {:?}\n{text}", o.status);
    assert!(text.contains("child: all refused"), "{text}");
}

/// `binary args…` under the memory and time limits, from `dir`'s parent.
fn run_limited(args: &[&str]) -> Output {
    let start = Instant::now();
    let mut child = Command::new("prlimit")
        .arg(format!("--as={MEMORY_LIMIT}"))
        .arg("--")
        .arg(BIN)
        .args(args)
        .stdin(Stdio::null())
        .stdout(Stdio::piped())
        .stderr(Stdio::piped())
        .spawn()
        .unwrap();
    loop {
        if child.try_wait().unwrap().is_some() {
            return child.wait_with_output().unwrap();
        }
        if start.elapsed() > TIME_LIMIT {
            let _ = child.kill();
            let _ = child.wait();
            panic!("{args:?} ran over {TIME_LIMIT:?}");
        }
        std::thread::sleep(Duration::from_millis(20));
    }
}

/// Valid data whose trials would span hundreds of millions of model bins: a reward delay
/// typed in ms instead of s (and then some), and a reward logged a day after its cue.
#[test]
fn absurd_trial_spans_do_not_exhaust_memory_in_the_model() {
    let tmp = tempfile::tempdir().unwrap();
    let dir = tmp.path().join("s");
    session(&dir);
    std::fs::write(
        dir.join("session.toml"),
        META.replace("reward_delay_s = 1.5", "reward_delay_s = 1.5e7"),
    )
    .unwrap();
    std::fs::write(
        dir.join("trials.csv"),
        "trial,cue,cue_s,reward_s,reward_ul\n1,tone-hi,1,2.5,3\n2,,,90000,3\n3,,,90100,3\n\
         4,tone-hi,90200,,\n5,tone-hi,90300,2e6,3\n",
    )
    .unwrap();
    std::fs::write(dir.join("licks.csv"), "time_s\n2.6\n90000.1\n").unwrap();
    std::fs::write(
        dir.join("spikes.csv"),
        "unit,time_s\nu1,1.1\nu1,2.6\nu1,90000.2\n",
    )
    .unwrap();
    let d = dir.to_str().unwrap();
    let runs: [&[&str]; 4] = [
        &[
            "model",
            d,
            "--alpha",
            "0.1",
            "--gamma",
            "0.9",
            "--out",
            "/dev/null",
        ],
        &[
            "model",
            d,
            "--alpha",
            "0.1",
            "--gamma",
            "0.9",
            "--dt",
            "1e-9",
            "--out",
            "/dev/null",
        ],
        &["summary", d],
        &["fit", d, "--no-compare", "--bootstrap", "0", "--no-save"],
    ];
    for args in runs {
        let o = run_limited(args);
        let text =
            String::from_utf8_lossy(&o.stdout).into_owned() + &String::from_utf8_lossy(&o.stderr);
        assert!(
            matches!(o.status.code(), Some(0 | 1)),
            "{args:?}: {:?}\n{}",
            o.status,
            &text[..text.len().min(3000)]
        );
        assert!(!text.contains("panicked"), "{args:?}: {text}");
    }
}

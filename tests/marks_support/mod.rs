//! Shared by the crash and concurrency tests: a writer process that appends journal rows and
//! says "ACK <n>" on stdout after each append returns.
//!
//! The writer is this same test executable, started again with one ignored test selected and
//! an environment variable naming its job (no extra binary ships for it).

use std::io::{BufRead, BufReader, Write};
use std::path::Path;
use std::process::{Child, Command, Stdio};
use std::sync::mpsc::{channel, Receiver};
use std::thread::JoinHandle;
use trialdesk::marks::{append, now_rfc3339, MarkKind, MarkRow};

pub const HELPER_ENV: &str = "TRIALDESK_TEST_MARKS_WRITER";

/// The row writer `writer` appends as its `n`th: recognisable field by field, and hostile
/// (quotes, commas, newlines, non-ASCII) so a torn or interleaved write cannot pass unnoticed.
pub fn row_for(writer: u64, n: u64) -> MarkRow {
    let mark = [
        MarkKind::Exclude,
        MarkKind::Suspect,
        MarkKind::Clear,
        MarkKind::Note,
    ][(n % 4) as usize];
    MarkRow {
        trial: Some(n as i64),
        mark,
        reason: format!("w{writer}"),
        note: format!(
            "id {writer}:{n}; \"quoted\", comma\nsecond line ΔF/F 🐭 {}",
            "x".repeat((n % 7) as usize)
        ),
        reviewer: format!("writer-{writer}"),
        at: now_rfc3339(),
    }
}

/// Body of the helper process: append `count` rows (0 = until killed), acknowledging each.
pub fn helper_main() {
    let Ok(spec) = std::env::var(HELPER_ENV) else {
        return;
    };
    let mut parts = spec.splitn(3, '|');
    let dir = parts.next().unwrap().to_string();
    let writer: u64 = parts.next().unwrap().parse().unwrap();
    let count: u64 = parts.next().unwrap().parse().unwrap();
    let stdout = std::io::stdout();
    let mut n = 0;
    while count == 0 || n < count {
        append(Path::new(&dir), &row_for(writer, n)).expect("append");
        let mut out = stdout.lock();
        writeln!(out, "ACK {n}").unwrap();
        out.flush().unwrap();
        n += 1;
    }
}

/// A running writer and the acknowledgements it has printed.
pub struct Writer {
    pub child: Child,
    pub acks: Receiver<u64>,
    reader: JoinHandle<()>,
}

/// Start writer `writer` appending `count` rows (0 = forever) to `dir`, by re-running this test
/// executable's helper test named `helper_test`.
pub fn spawn_writer(helper_test: &str, dir: &Path, writer: u64, count: u64) -> Writer {
    let mut child = Command::new(std::env::current_exe().unwrap())
        .args([
            helper_test,
            "--exact",
            "--ignored",
            "--nocapture",
            "--test-threads=1",
            "-q",
        ])
        .env(HELPER_ENV, format!("{}|{writer}|{count}", dir.display()))
        .stdout(Stdio::piped())
        .stderr(Stdio::inherit())
        .spawn()
        .expect("start writer");
    let stdout = child.stdout.take().unwrap();
    let (tx, acks) = channel();
    let reader = std::thread::spawn(move || {
        for line in BufReader::new(stdout).lines() {
            let Ok(line) = line else { break };
            if let Some(n) = line.strip_prefix("ACK ") {
                if tx.send(n.trim().parse().unwrap()).is_err() {
                    break;
                }
            }
        }
    });
    Writer {
        child,
        acks,
        reader,
    }
}

impl Writer {
    /// Wait for the reader to see the end of stdout and return every acknowledgement left.
    pub fn drain(self) -> Vec<u64> {
        let Writer { acks, reader, .. } = self;
        reader.join().unwrap();
        acks.try_iter().collect()
    }
}

//! The real reviewer, SIGKILLed over and over while marking. Each round restarts it in the
//! same tmux window under a reviewer name of its own, marks trials 1, 2, 3, ... (one mark per
//! trial, so every "saved: trial N ..." line on screen is a distinct acknowledgement), and
//! kills it: before the first frame, just after an acknowledgement, or just after the keys
//! of the next mark were sent (so some kills land inside an append). After every kill the
//! journal must parse and hold every acknowledged row of that round, whole and in order, plus
//! at most the one row in flight.
//!
//! `tests/marks_crash.rs` kills a bare appender process at random points, including torn
//! tails; this part kills the whole program the user runs.

use super::tmux_support::{scratch_subject, Server};
use super::{tmux_or_skip, Figures};
use rand::{Rng, SeedableRng};
use std::time::{Duration, Instant};
use trialdesk::marks::{read_journal, MarkKind};

const MIN_KILLS: usize = 200;
/// Rounds stop after this long even on a slow machine (the kill count is then checked).
const TIME_BUDGET: Duration = Duration::from_secs(150);
/// The session has 12 trials; a round marks at most this many.
const MAX_MARKS: usize = 6;
const REASONS: [&str; 3] = ["artifact", "lost unit", "valve failure"];

pub fn run(figures: &mut Figures) {
    if !tmux_or_skip("the reviewer kill test") {
        return;
    }
    let tmp = tempfile::tempdir().unwrap();
    let (subject, config) = scratch_subject(tmp.path());
    let session = subject.join("2026-03-02");
    let server = Server::start(
        "kill",
        vec![format!("XDG_CONFIG_HOME={}", config.display())],
    );
    // Seed 19: the same kill schedule on every run.
    let mut rng = rand_chacha::ChaCha8Rng::seed_from_u64(19);
    let started = Instant::now();
    let (mut kills, mut acked_total, mut on_disk_total, mut in_flight_kept) = (0, 0, 0, 0);
    let mut round = 0usize;
    let session_s = session.to_str().unwrap().to_string();
    while kills < MIN_KILLS + 10 && started.elapsed() < TIME_BUDGET {
        round += 1;
        let reviewer = format!("k{round}");
        let args = [
            "review",
            session_s.as_str(),
            "--ascii",
            "--reviewer",
            &reviewer,
        ];
        if round == 1 {
            server.open("r", &args);
        } else {
            server.respawn("r", &args);
        }
        let style = rng.random_range(0..10);
        let mut acked = 0usize;
        if style == 0 {
            // Killed while starting.
            std::thread::sleep(Duration::from_micros(rng.random_range(0..40_000)));
        } else {
            server.wait_for("r", "the first frame", Duration::from_secs(20), |s| {
                s.contains(&format!("{reviewer} |"))
            });
            let wanted = rng.random_range(0..MAX_MARKS);
            for i in 0..=wanted {
                let trial = i + 1;
                let reason = rng.random_range(0..REASONS.len());
                let key = (reason + 1).to_string();
                server.send("r", &["x"]);
                server.send("r", &[&key]);
                if i == wanted {
                    // The last mark's keys are sent; kill somewhere in its append.
                    std::thread::sleep(Duration::from_micros(rng.random_range(0..15_000)));
                    break;
                }
                let ack = format!("saved: trial {trial} excluded ({})", REASONS[reason]);
                server.wait_for("r", &ack, Duration::from_secs(20), |s| s.contains(&ack));
                acked += 1;
                server.send("r", &["j"]);
            }
        }
        let (pid, dead) = server.pid("r");
        assert!(
            pid > 0 && !dead,
            "round {round}: the reviewer is not running"
        );
        // SAFETY: kill(2) on the pid of the reviewer this test started in its own tmux pane.
        assert_eq!(unsafe { libc::kill(pid, libc::SIGKILL) }, 0);
        let gone = Instant::now();
        while !server.pid("r").1 {
            assert!(
                gone.elapsed() < Duration::from_secs(10),
                "round {round}: still alive 10 s after SIGKILL"
            );
            std::thread::sleep(Duration::from_millis(2));
        }
        kills += 1;

        let journal = read_journal(&session).unwrap_or_else(|e| panic!("after kill {kills}: {e}"));
        assert!(journal.torn_tail.is_none(), "kill {kills}: a torn row");
        let mine: Vec<_> = journal
            .rows
            .iter()
            .filter(|r| r.reviewer == reviewer)
            .collect();
        for (n, r) in mine.iter().enumerate() {
            assert_eq!(
                (r.trial, r.mark),
                (Some(n as i64 + 1), MarkKind::Exclude),
                "round {round}: rows out of order"
            );
        }
        assert!(
            mine.len() >= acked,
            "round {round}: {acked} acknowledged, {} on disk",
            mine.len()
        );
        assert!(
            mine.len() <= acked + 1,
            "round {round}: more than the one row in flight"
        );
        acked_total += acked;
        on_disk_total += mine.len();
        in_flight_kept += mine.len() - acked;
    }
    let total = read_journal(&session).unwrap().rows.len();
    assert_eq!(total, on_disk_total, "rows from outside the rounds");
    figures.push(format!(
        "{kills} SIGKILLs of the reviewer in {round} rounds: {acked_total} acknowledged rows, \
         {acked_total} found (0 lost), {in_flight_kept} unacknowledged in-flight rows also on \
         disk, {:.1} s",
        started.elapsed().as_secs_f64()
    ));
    assert!(kills >= MIN_KILLS, "only {kills} kills in the time budget");
    assert!(
        acked_total > MIN_KILLS,
        "too few acknowledged rows to mean much"
    );
}

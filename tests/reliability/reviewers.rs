//! Four reviewers on one session at once, each in its own tmux window. In every round each
//! reviewer marks one of its own three trials (exclude and suspect in turn, so each mark
//! changes what the trial list shows), with the four keystrokes sent back to back so the
//! appends race. Then every reviewer must show all four new marks within 2 s (the reviewer
//! re-reads journals every second). At the end: rows expected = rows found, every row whole
//! (the strict reader parses the file), each reviewer's rows in its own order.
//!
//! `tests/marks_concurrency.rs` races bare appender processes at high rate; this part races
//! the program the user runs and checks what each user sees.

use super::tmux_support::{listed_glyph, scratch_subject, Server};
use super::{tmux_or_skip, Figures};
use std::time::{Duration, Instant};
use trialdesk::marks::{read_journal, MarkKind};

const REVIEWERS: usize = 4;
const ROUNDS: usize = 12;
/// Each reviewer sees the others' marks within this long (a liveness bound).
const VISIBLE_WITHIN: Duration = Duration::from_secs(2);

/// Reviewer `r`'s trial in round `round`: trials r+1, r+5, r+9 in turn (12 trials).
fn trial_of(r: usize, round: usize) -> i64 {
    (r + 1 + REVIEWERS * (round % 3)) as i64
}

/// Exclude in even rounds, suspect in odd ones: a trial's glyph changes every time it is marked.
fn kind_of(round: usize) -> (MarkKind, &'static str, char, &'static str) {
    if round.is_multiple_of(2) {
        (MarkKind::Exclude, "x", 'X', "excluded")
    } else {
        (MarkKind::Suspect, "s", '?', "suspect")
    }
}

pub fn run(figures: &mut Figures) {
    if !tmux_or_skip("the concurrent reviewers test") {
        return;
    }
    let tmp = tempfile::tempdir().unwrap();
    let (subject, config) = scratch_subject(tmp.path());
    let session = subject.join("2026-03-02");
    let server = Server::start(
        "reviewers",
        vec![format!("XDG_CONFIG_HOME={}", config.display())],
    );
    let names: Vec<String> = (0..REVIEWERS).map(|r| format!("rev{r}")).collect();
    for name in &names {
        let s = session.to_str().unwrap();
        server.open(name, &["review", s, "--ascii", "--reviewer", name]);
    }
    for name in &names {
        server.wait_for(name, "the first frame", Duration::from_secs(20), |s| {
            s.contains(&format!("{name} |"))
        });
    }
    let started = Instant::now();
    let mut worst = Duration::ZERO;
    let mut latencies = Vec::new();
    for round in 0..ROUNDS {
        let (_, key, glyph, past) = kind_of(round);
        // Move each reviewer to its trial: first trial, then down.
        for (r, name) in names.iter().enumerate() {
            server.send(name, &["g"]);
            for _ in 1..trial_of(r, round) {
                server.send(name, &["j"]);
            }
        }
        for (r, name) in names.iter().enumerate() {
            let t = trial_of(r, round);
            server.wait_for(name, "its trial", Duration::from_secs(20), |s| {
                s.contains(&format!("| trial {t} |"))
            });
        }
        // The four marks, keystrokes back to back.
        for name in &names {
            server.send(name, &[key]);
            server.send(name, &["1"]);
        }
        let mut saved_at = Vec::new();
        for (r, name) in names.iter().enumerate() {
            let ack = format!("saved: trial {} {past}", trial_of(r, round));
            server.wait_for(name, &ack, Duration::from_secs(20), |s| s.contains(&ack));
            saved_at.push(Instant::now());
        }
        let last_saved = *saved_at.iter().max().unwrap();
        // Every reviewer shows every new mark.
        for name in &names {
            let seen = server.wait_for(
                name,
                "the others' marks",
                VISIBLE_WITHIN + Duration::from_secs(5),
                |s| (0..REVIEWERS).all(|r| listed_glyph(s, trial_of(r, round)) == Some(glyph)),
            );
            let _ = seen;
            let lag = last_saved.elapsed();
            latencies.push(lag);
            worst = worst.max(lag);
        }
        assert!(
            worst <= VISIBLE_WITHIN,
            "round {round}: a reviewer showed the others' marks only after {worst:?}"
        );
    }
    for name in &names {
        server.send(name, &["q"]);
    }
    for name in &names {
        let t = Instant::now();
        while !server.pid(name).1 {
            assert!(t.elapsed() < Duration::from_secs(10), "{name} did not quit");
            std::thread::sleep(Duration::from_millis(10));
        }
    }
    let journal = read_journal(&session).unwrap();
    assert!(journal.torn_tail.is_none() && journal.sealed_torn.is_empty());
    let expected = REVIEWERS * ROUNDS;
    assert_eq!(journal.rows.len(), expected, "rows expected = rows found");
    for (r, name) in names.iter().enumerate() {
        let mine: Vec<_> = journal
            .rows
            .iter()
            .filter(|x| &x.reviewer == name)
            .collect();
        assert_eq!(mine.len(), ROUNDS, "{name}");
        for (round, row) in mine.iter().enumerate() {
            assert_eq!(
                (row.trial, row.mark),
                (Some(trial_of(r, round)), kind_of(round).0),
                "{name} round {round}"
            );
        }
    }
    let switches = journal
        .rows
        .windows(2)
        .filter(|p| p[0].reviewer != p[1].reviewer)
        .count();
    latencies.sort();
    let median = latencies[latencies.len() / 2];
    figures.push(format!(
        "{REVIEWERS} reviewers x {ROUNDS} rounds: {expected} rows expected, {} found, \
         0 torn, {switches} reviewer switches in the file; others' marks shown after \
         median {:.2} s, worst {:.2} s (bound 2 s); {:.1} s",
        journal.rows.len(),
        median.as_secs_f64(),
        worst.as_secs_f64(),
        started.elapsed().as_secs_f64()
    ));
}

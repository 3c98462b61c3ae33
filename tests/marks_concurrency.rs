//! Concurrent writers (issue 6, item 2): several processes append 1,000 rows each to one
//! journal at the same time while a reader refreshes. Nothing may be lost, no row may be
//! interleaved with another, and the reader must pick up the others' rows as they land.

#[path = "marks_support/mod.rs"]
mod support;

use std::time::Instant;
use support::{row_for, spawn_writer};
use trialdesk::marks::{read_journal, MarkRow};

const HELPER: &str = "marks_writer_process";
const WRITERS: u64 = 4;
const ROWS_EACH: u64 = 1000;

#[test]
#[ignore = "the writer process of the concurrency test; started by it, not a test of its own"]
fn marks_writer_process() {
    support::helper_main();
}

#[test]
fn concurrent_writers_lose_nothing_and_the_reader_keeps_up() {
    let dir = tempfile::tempdir().unwrap();
    let started = Instant::now();
    let mut writers: Vec<_> = (1..=WRITERS)
        .map(|w| spawn_writer(HELPER, dir.path(), w, ROWS_EACH))
        .collect();
    // The reviewer's side: one journal kept fresh by incremental refreshes.
    let mut journal = read_journal(dir.path()).unwrap();
    let (mut refreshes, mut growing_refreshes) = (0usize, 0usize);
    loop {
        let mut running = 0;
        for w in writers.iter_mut() {
            if w.child.try_wait().unwrap().is_none() {
                running += 1;
            }
        }
        let before = journal.rows.len();
        let added = journal.refresh().unwrap();
        refreshes += 1;
        assert_eq!(journal.rows.len(), before + added, "refresh only ever adds");
        assert!(
            journal.torn_tail.is_none(),
            "a reader under the shared lock never sees half a row"
        );
        if added > 0 && running > 0 {
            growing_refreshes += 1;
        }
        if running == 0 {
            break;
        }
        std::thread::sleep(std::time::Duration::from_millis(20));
    }
    for mut w in writers {
        assert!(w.child.wait().unwrap().success());
        let acks = w.drain();
        assert_eq!(acks.len() as u64, ROWS_EACH);
    }
    journal.refresh().unwrap();
    let fresh = read_journal(dir.path()).unwrap();
    assert_eq!(
        journal.rows, fresh.rows,
        "incremental reads match a full read"
    );
    assert!(fresh.torn_tail.is_none() && fresh.sealed_torn.is_empty());
    assert_eq!(fresh.rows.len() as u64, WRITERS * ROWS_EACH);
    for w in 1..=WRITERS {
        let reason = format!("w{w}");
        let mine: Vec<&MarkRow> = fresh.rows.iter().filter(|r| r.reason == reason).collect();
        assert_eq!(mine.len() as u64, ROWS_EACH, "writer {w}");
        for (n, r) in mine.iter().enumerate() {
            let want = row_for(w, n as u64);
            assert_eq!(
                (r.trial, r.mark, &r.note, &r.reviewer),
                (want.trial, want.mark, &want.note, &want.reviewer),
                "writer {w} row {n}"
            );
        }
    }
    // Interleaving really happened (otherwise this test proves little).
    let switches = fresh
        .rows
        .windows(2)
        .filter(|p| p[0].reason != p[1].reason)
        .count();
    eprintln!(
        "concurrency test: {WRITERS} writers x {ROWS_EACH} rows, {switches} writer switches in the \
         file, {refreshes} refreshes ({growing_refreshes} picked up rows mid-run), {:.1} s",
        started.elapsed().as_secs_f64()
    );
    assert!(switches > WRITERS as usize, "writers never overlapped");
    assert!(
        growing_refreshes > 1,
        "the reader never saw rows arrive while writers ran"
    );
}

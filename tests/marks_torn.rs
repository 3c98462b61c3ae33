//! Torn tails: a journal cut at every byte of its last row (what an interrupted write can
//! leave) reads without error, reports the torn text, and the next append seals it so that
//! every earlier and later row reads back.

use std::fs;
use std::io::Write;
use std::path::Path;
use trialdesk::marks::{
    append, encode_row, read_journal, MarkKind, MarkRow, MarksError, MARKS_FILE, TORN_LINE_REASON,
};

fn row(trial: i64, mark: MarkKind, note: &str) -> MarkRow {
    MarkRow {
        trial: Some(trial),
        mark,
        reason: "lick, contamination".into(),
        note: note.into(),
        reviewer: "ana".into(),
        at: "2026-03-02T09:30:00.125Z".into(),
    }
}

fn raw_append(dir: &Path, bytes: &[u8]) {
    let mut f = fs::OpenOptions::new()
        .append(true)
        .create(true)
        .open(dir.join(MARKS_FILE))
        .unwrap();
    f.write_all(bytes).unwrap();
}

fn lines_in(bytes: &[u8]) -> u64 {
    bytes.iter().filter(|&&b| b == b'\n').count() as u64
}

#[test]
fn a_last_row_cut_at_any_byte_is_reported_then_sealed() {
    let base_rows = vec![
        row(1, MarkKind::Exclude, "first"),
        row(2, MarkKind::Note, "says \"two\",\nlines"),
    ];
    // The row that gets cut: quotes, commas and newlines inside its note, non-ASCII too.
    let victim = row(
        3,
        MarkKind::Suspect,
        "a \"quoted\", note\nover ΔF/F\nthree lines",
    );
    let victim_line = encode_row(&victim).unwrap();
    let after = row(4, MarkKind::Clear, "after the crash");
    let mut cases = 0;
    for cut in 1..victim_line.len() {
        let dir = tempfile::tempdir().unwrap();
        let d = dir.path();
        for r in &base_rows {
            append(d, r).unwrap();
        }
        let base = fs::read(d.join(MARKS_FILE)).unwrap();
        let torn_bytes = &victim_line.as_bytes()[..cut];
        raw_append(d, torn_bytes);
        // A reviewer who had the journal open before the crash refreshes across it.
        let mut open_before = read_journal(d).unwrap();
        let only_newline_missing = cut == victim_line.len() - 1;

        let j = read_journal(d).unwrap();
        let torn_line = lines_in(&base) + 1;
        if only_newline_missing {
            assert_eq!(j.rows.len(), 3, "a whole row without its newline is a row");
            assert!(j.torn_tail.is_none());
        } else {
            assert_eq!(j.rows, base_rows, "cut {cut}");
            let text = String::from_utf8_lossy(torn_bytes).into_owned();
            assert_eq!(j.torn_tail, Some((torn_line, text)), "cut {cut}");
        }

        append(d, &after).unwrap();
        let j = read_journal(d).unwrap();
        assert!(j.torn_tail.is_none(), "cut {cut}");
        let mut expected = base_rows.clone();
        if only_newline_missing {
            expected.push(victim.clone());
            assert!(j.sealed_torn.is_empty());
        } else {
            assert_eq!(j.sealed_torn.len(), 1, "cut {cut}");
            assert_eq!(j.sealed_torn[0].0, torn_line);
            let seal = &j.rows[2];
            assert!(seal.is_torn_line_seal() && seal.reason == TORN_LINE_REASON);
            expected.push(seal.clone());
        }
        expected.push(after.clone());
        assert_eq!(j.rows, expected, "cut {cut}");
        open_before.refresh().unwrap();
        assert_eq!(
            open_before.rows, j.rows,
            "cut {cut}: refresh across the seal"
        );
        assert_eq!(open_before.sealed_torn, j.sealed_torn);
        assert!(open_before.torn_tail.is_none());
        cases += 1;
    }
    assert_eq!(cases, victim_line.len() - 1);
}

#[test]
fn a_header_cut_at_any_byte_reads_empty_and_is_completed() {
    let header = b"trial,mark,reason,note,reviewer,at\n";
    for cut in 0..header.len() {
        let dir = tempfile::tempdir().unwrap();
        let d = dir.path();
        raw_append(d, &header[..cut]);
        let j = read_journal(d).unwrap();
        assert!(j.rows.is_empty());
        assert_eq!(
            j.torn_tail.is_some(),
            cut > 0 && cut < header.len() - 1,
            "cut {cut}"
        );
        append(d, &row(1, MarkKind::Exclude, "")).unwrap();
        let j = read_journal(d).unwrap();
        assert_eq!(j.rows.len(), 1, "cut {cut}");
        assert!(j.torn_tail.is_none() && j.sealed_torn.is_empty());
        assert_eq!(
            &fs::read(d.join(MARKS_FILE)).unwrap()[..header.len()],
            header
        );
    }
}

#[test]
fn repeated_crashes_each_leave_one_sealed_line() {
    let dir = tempfile::tempdir().unwrap();
    let d = dir.path();
    for k in 0..5 {
        append(d, &row(k, MarkKind::Exclude, "ok")).unwrap();
        let line = encode_row(&row(100 + k, MarkKind::Note, "never \"finished")).unwrap();
        raw_append(d, &line.as_bytes()[..line.len() / 2 + k as usize]);
    }
    append(d, &row(9, MarkKind::Suspect, "")).unwrap();
    let j = read_journal(d).unwrap();
    assert_eq!(
        j.sealed_torn.len(),
        5,
        "each append sealed the tail before it"
    );
    assert!(j.torn_tail.is_none());
    let trials: Vec<_> = j
        .rows
        .iter()
        .filter(|r| !r.is_torn_line_seal())
        .map(|r| r.trial.unwrap())
        .collect();
    assert_eq!(trials, [0, 1, 2, 3, 4, 9]);
}

#[test]
fn a_junk_line_that_no_seal_follows_is_an_error_not_a_torn_line() {
    let dir = tempfile::tempdir().unwrap();
    let d = dir.path();
    append(d, &row(1, MarkKind::Exclude, "")).unwrap();
    raw_append(d, b"2,exclu\n");
    append(d, &row(3, MarkKind::Exclude, "")).unwrap();
    match read_journal(d) {
        Err(MarksError::Parse { line, column, .. }) => {
            assert_eq!((line, column.as_str()), (3, "reason"))
        }
        other => panic!("{other:?}"),
    }
}

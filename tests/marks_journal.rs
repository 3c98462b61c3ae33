//! The marks journal: reading, appending, folding, refreshing, and the errors a person sees.

use proptest::prelude::*;
use std::fs;
use std::path::Path;
use trialdesk::marks::{
    append, encode_row, now_rfc3339, read_journal, reviewer_name, MarkKind, MarkRow, MarksError,
    MARKS_FILE,
};

fn row(trial: Option<i64>, mark: MarkKind, reason: &str, note: &str) -> MarkRow {
    MarkRow {
        trial,
        mark,
        reason: reason.into(),
        note: note.into(),
        reviewer: "ana".into(),
        at: "2026-03-02T09:30:00.250Z".into(),
    }
}

fn write(dir: &Path, text: &[u8]) {
    fs::write(dir.join(MARKS_FILE), text).unwrap();
}

fn parse_error(dir: &Path) -> (u64, String, String, String) {
    match read_journal(dir) {
        Err(e @ MarksError::Parse { .. }) => {
            let shown = e.to_string();
            let MarksError::Parse {
                line,
                column,
                message,
                ..
            } = e
            else {
                unreachable!()
            };
            (line, column, message, shown)
        }
        other => panic!("expected a parse error, got {other:?}"),
    }
}

const HOSTILE: &[&str] = &[
    "",
    "plain",
    "comma, inside",
    "say \"hi\"",
    "\"",
    "\"\"",
    "two\nlines",
    "crlf\r\ninside",
    "trailing newline\n",
    "\nleading newline",
    "ends in cr\r",
    "ΔF/F dip — 鼠 🐭",
    "escape \u{1b}[2J and bell \u{7}",
    "nul \0 byte and del \u{7f}",
    "=HYPERLINK(\"http://x\")",
    " padded ",
    ",,,",
    "\u{feff}bom inside",
    "\u{202e}reversed",
];

#[test]
fn absent_file_is_an_empty_journal() {
    let dir = tempfile::tempdir().unwrap();
    let j = read_journal(dir.path()).unwrap();
    assert!(j.rows.is_empty() && j.torn_tail.is_none());
    assert!(
        !dir.path().join(MARKS_FILE).exists(),
        "reading never creates the file"
    );
}

#[test]
fn hostile_text_round_trips_in_every_text_column() {
    let dir = tempfile::tempdir().unwrap();
    let mut expected = Vec::new();
    for (i, s) in HOSTILE.iter().enumerate() {
        let mut r = row(Some(i as i64), MarkKind::Suspect, s, s);
        r.reviewer = s.to_string();
        append(dir.path(), &r).unwrap();
        expected.push(r);
    }
    let session_note = row(None, MarkKind::Note, "", "cord, \"replaced\"\nafter 80");
    append(dir.path(), &session_note).unwrap();
    expected.push(session_note);
    let j = read_journal(dir.path()).unwrap();
    assert_eq!(j.rows, expected);
    assert!(j.torn_tail.is_none() && j.sealed_torn.is_empty());
    let text = fs::read_to_string(dir.path().join(MARKS_FILE)).unwrap();
    assert!(text.starts_with("trial,mark,reason,note,reviewer,at\n"));
}

#[test]
fn the_written_file_reads_with_a_standard_csv_reader() {
    // The csv crate stands in for pandas/R: the sidecar must be ordinary RFC 4180.
    let dir = tempfile::tempdir().unwrap();
    for (i, s) in HOSTILE.iter().enumerate() {
        append(dir.path(), &row(Some(i as i64), MarkKind::Exclude, "r", s)).unwrap();
    }
    let mut rdr = csv::Reader::from_path(dir.path().join(MARKS_FILE)).unwrap();
    let notes: Vec<String> = rdr
        .records()
        .map(|r| r.unwrap().get(3).unwrap().to_string())
        .collect();
    assert_eq!(notes, HOSTILE);
}

proptest! {
    #![proptest_config(ProptestConfig::with_cases(96))]
    #[test]
    fn any_row_round_trips(
        trial in proptest::option::of(any::<i64>()),
        kind in 0usize..4,
        reason in any::<String>(),
        note in any::<String>(),
        reviewer in "\\PC{0,12}",
    ) {
        let mark = [MarkKind::Exclude, MarkKind::Suspect, MarkKind::Clear, MarkKind::Note][kind];
        let trial = if mark == MarkKind::Note { trial } else { Some(trial.unwrap_or(1)) };
        let r = MarkRow { trial, mark, reason, note, reviewer, at: now_rfc3339() };
        let dir = tempfile::tempdir().unwrap();
        append(dir.path(), &r).unwrap();
        append(dir.path(), &r).unwrap();
        let j = read_journal(dir.path()).unwrap();
        prop_assert_eq!(&j.rows, &vec![r.clone(), r]);
        prop_assert!(j.torn_tail.is_none());
    }
}

#[test]
fn last_trial_mark_wins_and_notes_accumulate() {
    let dir = tempfile::tempdir().unwrap();
    let d = dir.path();
    append(
        d,
        &row(Some(3), MarkKind::Exclude, "artifact", "first look"),
    )
    .unwrap();
    append(d, &row(Some(3), MarkKind::Note, "", "unit drifts")).unwrap();
    append(
        d,
        &row(Some(3), MarkKind::Suspect, "lick contamination", ""),
    )
    .unwrap();
    append(d, &row(Some(5), MarkKind::Exclude, "valve failed", "")).unwrap();
    append(d, &row(Some(5), MarkKind::Clear, "", "valve was fine")).unwrap();
    append(d, &row(Some(7), MarkKind::Clear, "", "")).unwrap();
    append(d, &row(Some(8), MarkKind::Suspect, "", "")).unwrap();
    append(d, &row(Some(8), MarkKind::Exclude, "lost unit", "")).unwrap();
    append(
        d,
        &row(
            None,
            MarkKind::Note,
            "",
            "patch cord replaced after trial 80",
        ),
    )
    .unwrap();
    let state = read_journal(d).unwrap().state();
    assert_eq!(state.marks.keys().copied().collect::<Vec<_>>(), vec![3, 8]);
    assert_eq!(state.marks[&3].kind, MarkKind::Suspect);
    assert_eq!(state.marks[&3].reason, "lick contamination");
    assert!(state.is_excluded(8) && !state.is_excluded(3) && !state.is_excluded(5));
    let notes: Vec<&str> = state.notes.iter().map(|n| n.note.as_str()).collect();
    assert_eq!(notes, ["unit drifts", "patch cord replaced after trial 80"]);
    assert_eq!(state.notes[1].trial, None);
}

#[test]
fn bom_crlf_any_column_order_and_extra_columns_read() {
    let dir = tempfile::tempdir().unwrap();
    write(
        dir.path(),
        b"\xEF\xBB\xBFat,reviewer,extra,note,trial,mark,reason\r\n\
          2026-03-02T09:30:00Z,bo,x,\"a,\r\nb\",4,exclude,artifact\r\n\
          \r\n\
          2026-03-02T09:31:00Z,bo,,,,note,\r\n",
    );
    let j = read_journal(dir.path()).unwrap();
    assert_eq!(j.rows.len(), 2);
    assert_eq!(j.rows[0].trial, Some(4));
    assert_eq!(j.rows[0].note, "a,\r\nb");
    assert_eq!(j.rows[0].reviewer, "bo");
    assert_eq!(j.rows[1].mark, MarkKind::Note);
}

#[test]
fn a_file_without_final_newline_keeps_its_last_row() {
    let dir = tempfile::tempdir().unwrap();
    write(
        dir.path(),
        b"trial,mark,reason,note,reviewer,at\n4,exclude,,,ana,2026-03-02T09:30:00Z",
    );
    let j = read_journal(dir.path()).unwrap();
    assert_eq!(j.rows.len(), 1);
    assert!(j.torn_tail.is_none());
    // And an append ends that line instead of gluing onto it.
    append(dir.path(), &row(Some(5), MarkKind::Suspect, "", "")).unwrap();
    let j = read_journal(dir.path()).unwrap();
    assert_eq!(j.rows.len(), 2);
    assert!(j.sealed_torn.is_empty());
}

#[test]
fn bad_rows_name_file_line_column_and_what_was_expected() {
    let dir = tempfile::tempdir().unwrap();
    let head = "trial,mark,reason,note,reviewer,at\n\
                1,note,,\"two\nline note\",ana,2026-03-02T09:30:00Z\n";
    let cases: &[(&str, &str, &str)] = &[
        (
            "2,excluded,,,ana,2026-03-02T09:30:00Z\n",
            "mark",
            "expected exclude, suspect, clear or note",
        ),
        (
            "two,exclude,,,ana,2026-03-02T09:30:00Z\n",
            "trial",
            "expected an integer trial number",
        ),
        (
            ",exclude,,,ana,2026-03-02T09:30:00Z\n",
            "trial",
            "only a note may leave trial empty",
        ),
        (
            "2,exclude,,,ana,yesterday\n",
            "at",
            "expected an RFC 3339 UTC time",
        ),
        (
            "2,exclude,,,ana,2026-03-02T09:30:00+02:00\n",
            "at",
            "RFC 3339 UTC",
        ),
        ("2,exclude,,\n", "reviewer", "expected 6 fields"),
        (
            "2,exclude,,,ana,2026-03-02T09:30:00Z,x\n",
            "row",
            "expected 6 fields",
        ),
        (
            "2,exclude,a\"b,,ana,2026-03-02T09:30:00Z\n",
            "reason",
            "quote inside an unquoted field",
        ),
        (
            "2,exclude,\"a\"b,,ana,2026-03-02T09:30:00Z\n",
            "reason",
            "text after a closing quote",
        ),
    ];
    for (bad, column, expected) in cases {
        let text = format!("{head}{bad}3,clear,,,ana,2026-03-02T09:30:00Z\n");
        write(dir.path(), text.as_bytes());
        let (line, col, message, shown) = parse_error(dir.path());
        assert_eq!(line, 4, "{bad:?}: the two-line note counts as two lines");
        assert_eq!(col, *column, "{bad:?}");
        assert!(message.contains(expected), "{bad:?}: {message}");
        assert!(shown.contains("marks.csv:4: "), "{shown}");
    }
}

#[test]
fn header_problems_are_parse_errors() {
    let dir = tempfile::tempdir().unwrap();
    write(dir.path(), b"trial,mark,reason,note,who,at\n");
    let (line, column, message, _) = parse_error(dir.path());
    assert_eq!((line, column.as_str()), (1, "reviewer"));
    assert!(message.contains("missing from the header"), "{message}");
}

#[test]
fn control_characters_in_error_messages_are_escaped() {
    let dir = tempfile::tempdir().unwrap();
    write(
        dir.path(),
        b"trial,mark,reason,note,reviewer,at\n1,\x1b[2Jexclude,,,a,2026-03-02T09:30:00Z\n2,clear,,,a,2026-03-02T09:30:00Z\n",
    );
    let (_, _, message, _) = parse_error(dir.path());
    assert!(!message.contains('\u{1b}'), "{message:?}");
    assert!(message.contains("\\u{1b}"), "{message:?}");
}

#[test]
fn over_long_rows_are_refused_on_both_sides() {
    let dir = tempfile::tempdir().unwrap();
    let long = "x".repeat(70_000);
    let err = append(dir.path(), &row(Some(1), MarkKind::Note, "", &long)).unwrap_err();
    assert!(err.to_string().contains("shorten the note"), "{err}");
    write(
        dir.path(),
        format!("trial,mark,reason,note,reviewer,at\n1,note,,{long},a,2026-03-02T09:30:00Z\n2,clear,,,a,2026-03-02T09:30:00Z\n").as_bytes(),
    );
    let (line, column, message, _) = parse_error(dir.path());
    assert_eq!((line, column.as_str()), (2, "row"));
    assert!(message.contains("at most 65536 bytes"), "{message}");
}

#[test]
fn append_refuses_rows_the_reader_would_reject() {
    let dir = tempfile::tempdir().unwrap();
    assert!(append(dir.path(), &row(None, MarkKind::Exclude, "", "")).is_err());
    let mut r = row(Some(1), MarkKind::Exclude, "", "");
    r.at = "2026-03-02 09:30".into();
    assert!(append(dir.path(), &r).is_err());
    assert!(
        !dir.path().join(MARKS_FILE).exists(),
        "a refused row creates nothing"
    );
}

#[test]
fn append_refuses_a_journal_in_another_column_order() {
    let dir = tempfile::tempdir().unwrap();
    let text = b"at,trial,mark,reason,note,reviewer\n2026-03-02T09:30:00Z,1,clear,,,a\n";
    write(dir.path(), text);
    let err = append(dir.path(), &row(Some(2), MarkKind::Exclude, "", "")).unwrap_err();
    assert!(err.to_string().contains("in that order"), "{err}");
    assert_eq!(fs::read(dir.path().join(MARKS_FILE)).unwrap(), text);
}

#[test]
fn append_continues_a_bom_crlf_journal() {
    let dir = tempfile::tempdir().unwrap();
    write(
        dir.path(),
        b"\xEF\xBB\xBFtrial,mark,reason,note,reviewer,at\r\n1,exclude,,,a,2026-03-02T09:30:00Z\r\n",
    );
    append(dir.path(), &row(Some(2), MarkKind::Suspect, "", "")).unwrap();
    let j = read_journal(dir.path()).unwrap();
    assert_eq!(j.rows.len(), 2);
}

#[test]
fn refresh_reads_only_what_others_appended() {
    let dir = tempfile::tempdir().unwrap();
    let d = dir.path();
    let mut mine = read_journal(d).unwrap();
    assert_eq!(mine.refresh().unwrap(), 0);
    append(
        d,
        &row(Some(1), MarkKind::Exclude, "artifact", "multi\nline"),
    )
    .unwrap();
    assert_eq!(mine.refresh().unwrap(), 1);
    append(d, &row(Some(2), MarkKind::Exclude, "", "")).unwrap();
    append(d, &row(Some(3), MarkKind::Exclude, "", "")).unwrap();
    assert_eq!(mine.refresh().unwrap(), 2);
    assert_eq!(mine.refresh().unwrap(), 0);
    assert_eq!(mine.rows, read_journal(d).unwrap().rows);
    // A replaced file is read again from the start.
    write(
        d,
        b"trial,mark,reason,note,reviewer,at\n9,suspect,,,b,2026-03-02T09:30:00Z\n",
    );
    assert_eq!(mine.refresh().unwrap(), 1);
    assert_eq!(mine.rows.len(), 1);
    assert_eq!(mine.rows[0].trial, Some(9));
}

#[test]
fn refresh_error_leaves_the_journal_as_it_was() {
    let dir = tempfile::tempdir().unwrap();
    let d = dir.path();
    append(d, &row(Some(1), MarkKind::Exclude, "", "")).unwrap();
    let mut j = read_journal(d).unwrap();
    let mut f = fs::OpenOptions::new()
        .append(true)
        .open(d.join(MARKS_FILE))
        .unwrap();
    std::io::Write::write_all(
        &mut f,
        b"2,bogus,,,a,2026-03-02T09:30:00Z\n3,clear,,,a,2026-03-02T09:30:00Z\n",
    )
    .unwrap();
    assert!(matches!(
        j.refresh(),
        Err(MarksError::Parse { line: 3, .. })
    ));
    assert_eq!(j.rows.len(), 1);
}

#[test]
fn a_folder_named_marks_csv_is_a_clear_error() {
    let dir = tempfile::tempdir().unwrap();
    fs::create_dir(dir.path().join(MARKS_FILE)).unwrap();
    let err = read_journal(dir.path()).unwrap_err();
    assert!(err.to_string().contains("not a regular file"), "{err}");
    assert!(append(dir.path(), &row(Some(1), MarkKind::Exclude, "", "")).is_err());
}

#[test]
fn helpers_give_a_name_and_a_valid_utc_time() {
    assert!(!reviewer_name().is_empty());
    let at = now_rfc3339();
    assert!(at.ends_with('Z') && at.contains('T'), "{at}");
    assert!(encode_row(&MarkRow {
        at,
        ..row(Some(1), MarkKind::Clear, "", "")
    })
    .is_ok());
}

#[test]
fn threads_of_one_process_appending_at_once_lose_nothing() {
    // Each append opens its own file handle, so the file lock orders threads as it orders
    // processes; the in-process cache of the file's end must not let them overlap either.
    let dir = tempfile::tempdir().unwrap();
    let threads: Vec<_> = (0..4)
        .map(|t| {
            let d = dir.path().to_path_buf();
            std::thread::spawn(move || {
                for n in 0..150 {
                    let note = format!("thread {t}, row {n}\n\"second line\"");
                    append(&d, &row(Some(n), MarkKind::Note, &format!("t{t}"), &note)).unwrap();
                }
            })
        })
        .collect();
    for t in threads {
        t.join().unwrap();
    }
    let j = read_journal(dir.path()).unwrap();
    assert_eq!(j.rows.len(), 600);
    for t in 0..4 {
        let mine: Vec<i64> = j
            .rows
            .iter()
            .filter(|r| r.reason == format!("t{t}"))
            .map(|r| r.trial.unwrap())
            .collect();
        assert_eq!(mine, (0..150).collect::<Vec<_>>());
    }
}

#[test]
fn a_reader_does_not_hang_on_a_writer_stuck_holding_the_lock() {
    let dir = tempfile::tempdir().unwrap();
    append(dir.path(), &row(Some(1), MarkKind::Exclude, "", "")).unwrap();
    let stuck = fs::OpenOptions::new()
        .append(true)
        .open(dir.path().join(MARKS_FILE))
        .unwrap();
    stuck.lock().unwrap();
    let started = std::time::Instant::now();
    let j = read_journal(dir.path()).unwrap();
    assert_eq!(j.rows.len(), 1);
    let waited = started.elapsed().as_secs_f64();
    assert!((1.5..10.0).contains(&waited), "waited {waited} s");
    stuck.unlock().unwrap();
}

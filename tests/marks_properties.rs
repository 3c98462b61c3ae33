//! Property tests of the journal parser on hostile bytes (issue 6, item 3, for `marks.csv`):
//! never a panic, a bounded read, and — the invariant the appender lives by — whenever the
//! reader accepts a journal, an append after it keeps every row the reader saw.

use proptest::prelude::*;
use std::fs;
use trialdesk::marks::{append, read_journal, MarkKind, MarkRow, MARKS_FILE, MAX_JOURNAL_BYTES};

const HEADER: &str = "trial,mark,reason,note,reviewer,at\n";
const ROW: &str = "3,exclude,\"a, \"\"b\"\"\nc\",,ana,2026-03-02T09:30:00Z\n";

/// Pieces that matter to a CSV splitter and to the row checks, in any order.
fn token() -> impl Strategy<Value = String> {
    prop_oneof![
        Just("\"".to_string()),
        Just(",".to_string()),
        Just("\n".to_string()),
        Just("\r".to_string()),
        Just("\r\n".to_string()),
        Just("7".to_string()),
        Just("exclude".to_string()),
        Just("note".to_string()),
        Just("2026-03-02T09:30:00Z".to_string()),
        Just(ROW.to_string()),
        Just(",note,,n,ana,2026-03-02T09:30:00Z\n".to_string()),
        Just(",note,torn-line,,x,2026-03-02T09:30:00Z\n".to_string()),
        "\\PC{1,3}",
        "[\\x00-\\x1f]",
    ]
}

fn new_row() -> MarkRow {
    MarkRow {
        trial: Some(42),
        mark: MarkKind::Suspect,
        reason: "after".into(),
        note: "q\"uote, line\nbreak".into(),
        reviewer: "bo".into(),
        at: "2026-03-02T10:00:00Z".into(),
    }
}

proptest! {
    #![proptest_config(ProptestConfig::with_cases(400))]

    #[test]
    fn arbitrary_bytes_never_panic(bytes in proptest::collection::vec(any::<u8>(), 0..400)) {
        let dir = tempfile::tempdir().unwrap();
        fs::write(dir.path().join(MARKS_FILE), &bytes).unwrap();
        let _ = read_journal(dir.path());
        let mut with_header = HEADER.as_bytes().to_vec();
        with_header.extend(&bytes);
        fs::write(dir.path().join(MARKS_FILE), &with_header).unwrap();
        let _ = read_journal(dir.path());
    }

    #[test]
    fn an_append_after_any_accepted_journal_keeps_every_row(
        tokens in proptest::collection::vec(token(), 0..24)
    ) {
        let dir = tempfile::tempdir().unwrap();
        let d = dir.path();
        let text = format!("{HEADER}{ROW}{}", tokens.concat());
        fs::write(d.join(MARKS_FILE), &text).unwrap();
        let Ok(before) = read_journal(d) else {
            return Ok(()); // a journal the reader rejects is not appended to by the reviewer
        };
        append(d, &new_row()).unwrap();
        let after = read_journal(d).unwrap_or_else(|e| panic!("{e}\n{text:?}"));
        prop_assert!(after.torn_tail.is_none());
        let mut expected = before.rows.clone();
        if before.torn_tail.is_some() {
            let seal = &after.rows[expected.len()];
            prop_assert!(seal.is_torn_line_seal(), "{text:?}");
            expected.push(seal.clone());
            prop_assert_eq!(after.sealed_torn.len(), before.sealed_torn.len() + 1);
        }
        expected.push(new_row());
        prop_assert_eq!(&after.rows, &expected, "{:?}", text);
    }
}

#[test]
fn a_huge_journal_is_refused_before_it_is_read() {
    let dir = tempfile::tempdir().unwrap();
    let f = fs::File::create(dir.path().join(MARKS_FILE)).unwrap();
    // Sparse: takes no disk, but a reader that trusted it would allocate it all.
    f.set_len(MAX_JOURNAL_BYTES + 1).unwrap();
    let err = read_journal(dir.path()).unwrap_err();
    assert!(err.to_string().contains("is this the right file"), "{err}");
    // One enormous line (8 MB, no comma): rejected by the row cap, not swallowed.
    let mut bytes = HEADER.as_bytes().to_vec();
    bytes.resize(8 << 20, b'a');
    bytes.extend(b"\n3,clear,,,a,2026-03-02T09:30:00Z\n");
    fs::write(dir.path().join(MARKS_FILE), &bytes).unwrap();
    let err = read_journal(dir.path()).unwrap_err().to_string();
    assert!(
        err.contains("marks.csv:2: row: ") && err.contains("at most 65536"),
        "{err}"
    );
}

//! Following appended table files: each row arrives once, a torn last line waits, a shrunk or
//! replaced file asks for a reload, bad rows are reported at their line in the file.

use std::fs::{self, OpenOptions};
use std::io::Write;
use std::path::Path;
use trialdesk::data::follow::{Polled, TableKind, Tail};
use trialdesk::data::{CueDef, SessionMeta};

fn meta() -> SessionMeta {
    SessionMeta {
        subject: "m1".into(),
        date: "2026-03-01".into(),
        start_time: None,
        rig: Some("rig-north".into()),
        cues: vec![CueDef {
            name: "tone-hi".into(),
            reward_delay_s: Some(1.5),
        }],
    }
}

fn append(path: &Path, text: &str) {
    let mut f = OpenOptions::new().append(true).open(path).unwrap();
    f.write_all(text.as_bytes()).unwrap();
}

fn rows(p: Polled) -> trialdesk::data::follow::NewRows {
    match p {
        Polled::Rows(r) => r,
        other => panic!("expected rows, got {other:?}"),
    }
}

#[test]
fn trials_arrive_once_and_a_torn_line_waits() {
    let dir = tempfile::tempdir().unwrap();
    let path = dir.path().join("trials.csv");
    fs::write(
        &path,
        "trial,cue,cue_s,reward_s,reward_ul\n1,tone-hi,1,2.5,3\n2,tone-hi,16,17.5,3\n",
    )
    .unwrap();
    let mut tail = Tail::at_end(dir.path(), TableKind::Trials, &meta())
        .unwrap()
        .unwrap();
    assert_eq!(tail.poll(), Polled::Unchanged);

    append(&path, "3,tone-hi,31,3");
    assert_eq!(tail.poll(), Polled::Unchanged, "a torn line must wait");
    append(&path, "2.5,3\n4,tone-");
    let r = rows(tail.poll());
    assert_eq!(r.trials.len(), 1);
    assert_eq!(r.trials[0].number, 3);
    assert_eq!(r.trials[0].reward_s, Some(32.5));
    assert!(r.diagnostics.is_empty(), "{:?}", r.diagnostics);
    assert_eq!(
        tail.poll(),
        Polled::Unchanged,
        "trial 3 must not arrive twice"
    );

    append(&path, "hi,46,,0\n5,,,61,4\n");
    let r = rows(tail.poll());
    let numbers: Vec<i64> = r.trials.iter().map(|t| t.number).collect();
    assert_eq!(numbers, [4, 5]);
    assert_eq!(r.trials[0].cue, Some(0));
    assert_eq!(r.trials[1].cue, None);
    assert_eq!(tail.poll(), Polled::Unchanged);
}

#[test]
fn bad_rows_are_reported_at_their_file_line_and_left_out() {
    let dir = tempfile::tempdir().unwrap();
    let path = dir.path().join("trials.csv");
    fs::write(
        &path,
        "trial,cue,cue_s,reward_s,reward_ul\n1,tone-hi,1,2.5,3\n2,tone-hi,16,17.5,3\n",
    )
    .unwrap();
    let mut tail = Tail::at_end(dir.path(), TableKind::Trials, &meta())
        .unwrap()
        .unwrap();
    // Line 4: fine. Line 5: bad time. Line 6: trial number goes back. Line 7: unknown cue.
    append(
        &path,
        "3,tone-hi,31,32.5,3\n4,tone-hi,abc,,\n2,tone-hi,50,51.5,3\n6,tone-zz,60,,\n",
    );
    let r = rows(tail.poll());
    assert_eq!(r.trials.iter().map(|t| t.number).collect::<Vec<_>>(), [3]);
    let lines: Vec<Option<u64>> = r.diagnostics.iter().map(|d| d.line).collect();
    assert!(lines.contains(&Some(5)), "{:?}", r.diagnostics);
    assert!(lines.contains(&Some(6)), "{:?}", r.diagnostics);
    assert!(lines.contains(&Some(7)), "{:?}", r.diagnostics);
    assert!(r.diagnostics.iter().all(|d| d.file == path));
}

#[test]
fn spikes_and_licks_arrive_once() {
    let dir = tempfile::tempdir().unwrap();
    let spikes = dir.path().join("spikes.csv");
    let licks = dir.path().join("licks.csv");
    fs::write(&spikes, "unit,time_s\nu1,0.5\n").unwrap();
    fs::write(&licks, "time_s\r\n0.7\r\n").unwrap();
    let mut ts = Tail::at_end(dir.path(), TableKind::Spikes, &meta())
        .unwrap()
        .unwrap();
    let mut tl = Tail::at_end(dir.path(), TableKind::Licks, &meta())
        .unwrap()
        .unwrap();
    append(&spikes, "u2,1.0\nu1,1.25\nu1,1.");
    append(&licks, "1.5\r\n1.6");
    let mut got = rows(ts.poll()).spikes;
    got.sort_by(|a, b| a.1.total_cmp(&b.1));
    assert_eq!(got, [("u2".to_string(), 1.0), ("u1".to_string(), 1.25)]);
    assert_eq!(rows(tl.poll()).licks, [1.5]);
    append(&spikes, "5\n");
    append(&licks, "\r\n");
    assert_eq!(rows(ts.poll()).spikes, [("u1".to_string(), 1.5)]);
    assert_eq!(rows(tl.poll()).licks, [1.6]);
    assert_eq!(ts.poll(), Polled::Unchanged);
    assert_eq!(tl.poll(), Polled::Unchanged);
}

#[test]
fn a_shrunk_or_replaced_file_asks_for_a_reload() {
    let dir = tempfile::tempdir().unwrap();
    let licks = dir.path().join("licks.csv");
    fs::write(&licks, "time_s\n0.7\n0.9\n").unwrap();
    let mut tail = Tail::at_end(dir.path(), TableKind::Licks, &meta())
        .unwrap()
        .unwrap();
    // Truncate in place (same inode).
    OpenOptions::new()
        .write(true)
        .open(&licks)
        .unwrap()
        .set_len(7)
        .unwrap();
    assert!(matches!(tail.poll(), Polled::Reload(m) if m.contains("shrank")));

    fs::write(&licks, "time_s\n0.7\n").unwrap();
    let mut tail = Tail::at_end(dir.path(), TableKind::Licks, &meta())
        .unwrap()
        .unwrap();
    let other = dir.path().join("licks.new");
    fs::write(&other, "time_s\n0.7\n0.8\n").unwrap();
    fs::rename(&other, &licks).unwrap();
    assert!(matches!(tail.poll(), Polled::Reload(m) if m.contains("replaced")));
}

#[test]
fn a_missing_file_is_not_followed_and_a_headerless_one_is_an_error() {
    let dir = tempfile::tempdir().unwrap();
    assert!(Tail::at_end(dir.path(), TableKind::Spikes, &meta())
        .unwrap()
        .is_none());
    fs::write(dir.path().join("licks.csv"), "time_").unwrap();
    let e = Tail::at_end(dir.path(), TableKind::Licks, &meta()).unwrap_err();
    assert_eq!(e.line, Some(1));
}

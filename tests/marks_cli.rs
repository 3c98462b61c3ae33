//! `trialdesk marks` end to end: the real binary on a small subject folder.

use std::fs;
use std::path::Path;
use std::process::{Command, Output};
use trialdesk::marks::{append, MarkKind, MarkRow, MARKS_FILE};

fn session(root: &Path, name: &str, date: &str) -> std::path::PathBuf {
    let dir = root.join(name);
    fs::create_dir_all(&dir).unwrap();
    fs::write(
        dir.join("session.toml"),
        format!("subject = \"m-041\"\ndate = \"{date}\"\nrig = \"box-2\"\n"),
    )
    .unwrap();
    dir
}

fn mark(dir: &Path, trial: Option<i64>, mark: MarkKind, reason: &str, note: &str) {
    append(
        dir,
        &MarkRow {
            trial,
            mark,
            reason: reason.into(),
            note: note.into(),
            reviewer: "ana".into(),
            at: "2026-03-02T09:30:00.000Z".into(),
        },
    )
    .unwrap();
}

fn trialdesk(args: &[&str]) -> Output {
    Command::new(env!("CARGO_BIN_EXE_trialdesk"))
        .arg("marks")
        .args(args)
        .output()
        .unwrap()
}

/// A subject with two sessions whose folder names sort against their dates.
fn subject() -> tempfile::TempDir {
    let root = tempfile::tempdir().unwrap();
    let later = session(root.path(), "a-day2", "2026-03-03");
    let earlier = session(root.path(), "z-day1", "2026-03-02");
    mark(
        &earlier,
        Some(4),
        MarkKind::Exclude,
        "artifact",
        "=HYPERLINK(\"x\")",
    );
    mark(
        &earlier,
        Some(2),
        MarkKind::Suspect,
        "-3",
        "cable \u{1b}[31mred\u{1b}[0m",
    );
    mark(&earlier, Some(4), MarkKind::Note, "", "@later look, again");
    mark(
        &earlier,
        None,
        MarkKind::Note,
        "",
        "patch cord replaced\nafter trial 80",
    );
    mark(&later, Some(7), MarkKind::Exclude, "valve failed", "");
    mark(&later, Some(7), MarkKind::Clear, "", "valve was fine");
    mark(&later, Some(9), MarkKind::Exclude, "lost unit", "+ drift");
    root
}

fn csv_rows(text: &[u8]) -> Vec<Vec<String>> {
    csv::Reader::from_reader(text)
        .records()
        .map(|r| r.unwrap().iter().map(String::from).collect())
        .collect()
}

#[test]
fn table_shows_standing_marks_in_session_order_without_control_characters() {
    let root = subject();
    let out = trialdesk(&[root.path().to_str().unwrap()]);
    assert!(
        out.status.success(),
        "{}",
        String::from_utf8_lossy(&out.stderr)
    );
    let text = String::from_utf8(out.stdout).unwrap();
    assert!(
        !text.contains('\u{1b}'),
        "escape codes reached the terminal:\n{text}"
    );
    assert!(text.contains("\\u{1b}[31mred"), "{text}");
    let lines: Vec<&str> = text.lines().collect();
    assert!(lines[0].starts_with("session") && lines[0].contains("reviewer"));
    let order: Vec<String> = lines[1..5]
        .iter()
        .map(|l| l.split_whitespace().take(3).collect::<Vec<_>>().join(" "))
        .collect();
    assert_eq!(
        order,
        [
            "z-day1 2 suspect",
            "z-day1 4 exclude",
            "z-day1 4 note",
            "a-day2 9 exclude"
        ]
    );
    assert!(
        !text.contains("valve failed"),
        "a cleared mark is not standing"
    );
    assert!(text.contains("session notes:"));
    assert!(
        text.contains("patch cord replaced\\nafter trial 80"),
        "{text}"
    );
    assert!(
        text.contains("2 session(s), standing: 2 exclude, 1 suspect, 0 clear, 2 note(s)"),
        "{text}"
    );
}

#[test]
fn csv_export_is_tidy_and_neutralises_formulas() {
    let root = subject();
    let file = root.path().join("marks-export.csv");
    let out = trialdesk(&[
        root.path().to_str().unwrap(),
        "--csv",
        file.to_str().unwrap(),
        "--format",
        "csv",
    ]);
    assert!(
        out.status.success(),
        "{}",
        String::from_utf8_lossy(&out.stderr)
    );
    assert_eq!(
        fs::read(&file).unwrap(),
        out.stdout,
        "--csv FILE and --format csv agree"
    );
    let text = String::from_utf8(out.stdout.clone()).unwrap();
    assert!(text.starts_with("session,trial,mark,reason,note,reviewer,at\n"));
    let rows = csv_rows(&out.stdout);
    assert_eq!(rows.len(), 5);
    assert_eq!(
        rows[0][..4],
        ["z-day1", "2", "suspect", "-3"],
        "a plain number stays a number"
    );
    assert_eq!(
        rows[1][4], "'=HYPERLINK(\"x\")",
        "text kept behind an apostrophe"
    );
    assert_eq!(rows[2][4], "'@later look, again");
    assert_eq!(
        rows[3][..3],
        ["z-day1", "", "note"],
        "session note: empty trial"
    );
    assert_eq!(rows[3][4], "patch cord replaced\nafter trial 80");
    assert_eq!(rows[4][4], "'+ drift");
}

#[test]
fn all_lists_the_whole_history() {
    let root = subject();
    let out = trialdesk(&[root.path().to_str().unwrap(), "--all", "--format", "csv"]);
    assert!(out.status.success());
    let rows = csv_rows(&out.stdout);
    assert_eq!(rows.len(), 7);
    let marks: Vec<&str> = rows.iter().map(|r| r[2].as_str()).collect();
    assert_eq!(
        marks,
        ["exclude", "suspect", "note", "note", "exclude", "clear", "exclude"]
    );
}

#[test]
fn one_session_folder_works_and_a_torn_tail_is_a_warning() {
    let root = subject();
    let dir = root.path().join("a-day2");
    let mut f = fs::OpenOptions::new()
        .append(true)
        .open(dir.join(MARKS_FILE))
        .unwrap();
    std::io::Write::write_all(&mut f, b"11,exclude,\"half a no").unwrap();
    let out = trialdesk(&[dir.to_str().unwrap()]);
    assert!(out.status.success());
    let err = String::from_utf8_lossy(&out.stderr);
    assert!(err.contains("marks.csv:5: incomplete last line"), "{err}");
    let text = String::from_utf8_lossy(&out.stdout);
    assert!(text.contains("1 session(s), standing: 1 exclude"), "{text}");
}

#[test]
fn a_bad_journal_exits_1_naming_file_line_and_column() {
    let root = subject();
    let path = root.path().join("z-day1").join(MARKS_FILE);
    let mut text = fs::read_to_string(&path).unwrap();
    text.push_str("5,excluded,,,bo,2026-03-02T10:00:00Z\n");
    fs::write(&path, text).unwrap();
    let out = trialdesk(&[root.path().to_str().unwrap()]);
    assert_eq!(out.status.code(), Some(1));
    let err = String::from_utf8_lossy(&out.stderr);
    assert!(
        err.contains("marks.csv:7: mark: expected exclude, suspect, clear or note"),
        "{err}"
    );
    assert!(out.stdout.is_empty(), "no partial table on failure");
}

#[test]
fn a_folder_without_sessions_exits_1() {
    let root = tempfile::tempdir().unwrap();
    let out = trialdesk(&[root.path().to_str().unwrap()]);
    assert_eq!(out.status.code(), Some(1));
    assert!(String::from_utf8_lossy(&out.stderr).contains("no session found"));
    let out = trialdesk(&["--bogus-flag", root.path().to_str().unwrap()]);
    assert_eq!(out.status.code(), Some(2), "usage error");
}

//! Merging per-subject params.csv files (the layout `trialdesk fit --out DIR/<subject>` writes)
//! into one tidy table, through the library and the `trialdesk merge` command.

use std::path::Path;
use std::process::Command;
use trialdesk::cohort::merge::{merge_tables, to_csv, MergeError};

fn write(dir: &Path, rel: &str, text: &str) {
    let p = dir.join(rel);
    std::fs::create_dir_all(p.parent().unwrap()).unwrap();
    std::fs::write(p, text).unwrap();
}

/// Two subjects as the fitter writes them, the second with a BOM, CRLF and another column
/// order; one subject folder without a table (a shard that has not run).
fn results() -> tempfile::TempDir {
    let dir = tempfile::tempdir().unwrap();
    write(
        dir.path(),
        "m-041/params.csv",
        "parameter,estimate,lower,upper\nalpha,0.0213,0.0171,0.0262\ngamma,0.98,,\ngain,1.5e-1,0.12,0.18\n",
    );
    write(
        dir.path(),
        "m-007/params.csv",
        "\u{feff}parameter,lower,upper,estimate\r\nalpha,0.01,0.03,0.02\r\ngamma,0.95,0.99,0.97\r\n",
    );
    std::fs::create_dir_all(dir.path().join("m-050")).unwrap();
    dir
}

#[test]
fn merged_table_has_subject_column_in_folder_order_with_cells_verbatim() {
    let dir = results();
    let m = merge_tables(dir.path(), "params.csv").unwrap();
    assert_eq!(
        m.header,
        ["subject", "parameter", "lower", "upper", "estimate"]
    );
    assert_eq!(m.subjects, ["m-007", "m-041"]);
    assert_eq!(m.missing, ["m-050"]);
    assert_eq!(m.rows.len(), 5);
    assert_eq!(m.rows[0], ["m-007", "alpha", "0.01", "0.03", "0.02"]);
    // Reordered to the first table's columns; "1.5e-1" kept as written, empty bounds kept.
    assert_eq!(m.rows[3], ["m-041", "gamma", "", "", "0.98"]);
    assert_eq!(m.rows[4], ["m-041", "gain", "0.12", "0.18", "1.5e-1"]);
    let csv = to_csv(&m).unwrap();
    assert!(csv.starts_with("subject,parameter,lower,upper,estimate\nm-007,alpha,"));
    assert_eq!(csv.lines().count(), 6);
}

#[test]
fn mismatched_columns_and_short_rows_name_file_and_line() {
    let dir = results();
    write(
        dir.path(),
        "m-099/params.csv",
        "parameter,estimate\nalpha,0.1\n",
    );
    let err = merge_tables(dir.path(), "params.csv").unwrap_err();
    let msg = err.to_string();
    assert!(
        msg.contains("m-099") && msg.contains(":1:") && msg.contains("differ"),
        "{msg}"
    );

    let dir = results();
    write(
        dir.path(),
        "m-100/params.csv",
        "parameter,estimate,lower,upper\nalpha,0.1,0.05\n",
    );
    let msg = merge_tables(dir.path(), "params.csv")
        .unwrap_err()
        .to_string();
    assert!(
        msg.contains("m-100") && msg.contains(":2:") && msg.contains("3 fields, expected 4"),
        "{msg}"
    );
}

#[test]
fn no_tables_at_all_is_an_error_saying_what_was_expected() {
    let dir = tempfile::tempdir().unwrap();
    std::fs::create_dir_all(dir.path().join("m-1")).unwrap();
    let err = merge_tables(dir.path(), "params.csv").unwrap_err();
    assert!(matches!(err, MergeError::NoTables { .. }));
    assert!(err.to_string().contains("<subject>/params.csv"), "{err}");
}

#[test]
fn merge_command_writes_the_file_and_exit_codes_follow_the_brief() {
    let bin = env!("CARGO_BIN_EXE_trialdesk");
    let dir = results();
    let out_file = dir.path().join("cohort.csv");
    let out = Command::new(bin)
        .arg("merge")
        .arg(dir.path())
        .arg("--out")
        .arg(&out_file)
        .output()
        .unwrap();
    assert_eq!(out.status.code(), Some(0), "{out:?}");
    let stderr = String::from_utf8_lossy(&out.stderr);
    assert!(
        stderr.contains("m-050"),
        "missing subject not reported: {stderr}"
    );
    let text = std::fs::read_to_string(&out_file).unwrap();
    assert_eq!(text.lines().count(), 6);

    // Missing DIR: usage error. A folder of nothing: failed job.
    let out = Command::new(bin).arg("merge").output().unwrap();
    assert_eq!(out.status.code(), Some(2));
    let empty = tempfile::tempdir().unwrap();
    let out = Command::new(bin)
        .arg("merge")
        .arg(empty.path())
        .output()
        .unwrap();
    assert_eq!(out.status.code(), Some(1));

    let out = Command::new(bin)
        .args(["merge", "--batch-example"])
        .output()
        .unwrap();
    assert_eq!(out.status.code(), Some(0));
    let script = String::from_utf8(out.stdout).unwrap();
    assert!(script.starts_with("#!/bin/bash"));
    assert!(script.contains("#SBATCH --array=") && script.contains("--shard"));
}

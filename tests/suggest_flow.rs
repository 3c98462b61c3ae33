//! The accept / reject / accept-all flow on disk: a simulated subject with faults is written
//! by `trialdesk simulate --fault`, loaded like a user's data, and its suggestions are settled
//! through marks.csv; what was settled is not suggested again, and the journal holds plain
//! sidecar rows.

use std::path::Path;
use std::process::Command;
use trialdesk::data::load;
use trialdesk::marks::{append, read_journal, MarkKind};
use trialdesk::suggest::{
    accept_all_rows, accept_row, counts_by_rule, pending, pending_for_session, reject_row,
    suggest_session, RuleSet,
};

fn simulate(out: &Path, extra: &[&str]) -> std::process::Output {
    Command::new(env!("CARGO_BIN_EXE_trialdesk"))
        .arg("simulate")
        .arg(out)
        .args(["--days", "1", "--seed", "3"])
        .args(extra)
        .output()
        .expect("binary runs")
}

#[test]
fn accept_reject_and_accept_all_settle_suggestions() {
    let tmp = tempfile::tempdir().unwrap();
    let subject = tmp.path().join("m-9");
    let o = simulate(
        &subject,
        &[
            "--fault",
            "valve-failure:0.15",
            "--fault",
            "late-first-lick:0.15",
        ],
    );
    assert!(o.status.success(), "{}", String::from_utf8_lossy(&o.stderr));
    let faults = std::fs::read_to_string(subject.join("faults.csv")).unwrap();
    assert!(faults.starts_with("session,trial,fault,detail\n"));
    assert!(faults.contains(",valve_failure,") && faults.contains(",late_first_lick,"));

    let loaded = load(&subject).unwrap();
    let session = &loaded.subject.sessions[0];
    let rules = RuleSet::default();
    let all = suggest_session(session, &rules);
    let counts = counts_by_rule(&all);
    let count = |id: &str| counts.iter().find(|(r, _)| r == id).map_or(0, |c| c.1);
    assert!(
        count("no_consumption") >= 3 && count("late_first_lick") >= 3,
        "{counts:?}"
    );

    // Accept the first late-lick suggestion, reject the second, accept all valve failures.
    let late: Vec<_> = all.iter().filter(|s| s.rule == "late_first_lick").collect();
    append(&session.dir, &accept_row(late[0], rules.accept_as, "ana")).unwrap();
    append(&session.dir, &reject_row(late[1], "ana")).unwrap();
    let valve = accept_all_rows(&all, "no_consumption", MarkKind::Suspect, "ana");
    for row in &valve {
        append(&session.dir, row).unwrap();
    }

    let left = pending_for_session(session, &rules).unwrap();
    assert_eq!(left.len(), all.len() - 2 - valve.len());
    assert!(!left.iter().any(|s| s.rule == "no_consumption"));
    assert!(!left.iter().any(
        |s| s.trial == late[0].trial || s.trial == late[1].trial && s.rule == "late_first_lick"
    ));

    // The sidecar holds ordinary rows: the accept is a mark of the rules' kind (suspect by
    // default) with the rule id as reason.
    let journal = read_journal(&session.dir).unwrap();
    let state = journal.state();
    let m = &state.marks[&late[0].trial];
    assert_eq!(
        (m.kind, m.reason.as_str()),
        (MarkKind::Suspect, "late_first_lick")
    );
    assert!(m.note.starts_with("first lick "), "{}", m.note);
    assert!(state
        .notes
        .iter()
        .any(|n| n.trial == Some(late[1].trial) && n.reason == "reject:late_first_lick"));
    let text = std::fs::read_to_string(session.dir.join("marks.csv")).unwrap();
    assert!(text.starts_with("trial,mark,reason,note,reviewer,at"));
    assert_eq!(pending(&all, &state), left);
}

#[test]
fn fault_options_are_checked() {
    let tmp = tempfile::tempdir().unwrap();
    for (args, says) in [
        (vec!["--fault", "valve:0.1"], "expected KIND:RATE"),
        (vec!["--fault", "dropout:2"], "expected KIND:RATE"),
        (vec!["--fault", "saturation:0.1"], "needs --photometry on"),
    ] {
        let o = simulate(&tmp.path().join("x"), &args);
        assert_eq!(o.status.code(), Some(2), "{args:?}");
        let err = String::from_utf8_lossy(&o.stderr);
        assert!(err.contains(says), "{args:?}: {err}");
    }
    // Without --fault no faults.csv and no [faults] in truth.toml.
    let out = tmp.path().join("clean");
    assert!(simulate(&out, &[]).status.success());
    assert!(!out.join("faults.csv").exists());
    let truth = std::fs::read_to_string(out.join("truth.toml")).unwrap();
    assert!(!truth.contains("[faults"));
}

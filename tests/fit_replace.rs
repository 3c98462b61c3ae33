//! A fit that replaces a saved fit made another way says so (a fit run with other windows, or
//! on the wrong folder, must not silently change what the reviewer, `summary` and `plot` show);
//! a cohort run lists the files it replaced that way.

use std::process::{Command, Output};

fn run(args: &[&str]) -> Output {
    Command::new(env!("CARGO_BIN_EXE_trialdesk"))
        .args(args)
        .env("XDG_CONFIG_HOME", "/nonexistent-trialdesk-test")
        .output()
        .unwrap()
}

const QUICK: [&str; 5] = [
    "--bootstrap",
    "0",
    "--no-compare",
    "--no-sensitivity",
    "--lambda=0.9",
];

#[test]
fn replacing_a_fit_made_another_way_is_said() {
    let tmp = tempfile::tempdir().unwrap();
    let cohort = tmp.path().join("cohort");
    let subject = cohort.join("m-a");
    let o = run(&[
        "simulate",
        subject.to_str().unwrap(),
        "--days",
        "3",
        "--trials-per-day",
        "40",
    ]);
    assert!(o.status.success());
    let s = subject.to_str().unwrap();
    let fit = |extra: &[&str]| {
        let mut args = vec!["fit", s];
        args.extend(QUICK);
        args.extend(extra);
        let o = run(&args);
        assert!(o.status.success(), "{}", String::from_utf8_lossy(&o.stderr));
        String::from_utf8_lossy(&o.stdout).into_owned()
    };
    let first = fit(&[]);
    assert!(!first.contains("replaced a fit"), "{first}");
    let same = fit(&[]);
    assert!(!same.contains("replaced a fit"), "{same}");
    let other = fit(&["--cue-window", "0.05,0.3"]);
    assert!(other.contains("replaced a fit of"), "{other}");
    assert!(
        other.contains("cue window [0.05, 0.35] -> [0.05, 0.3]"),
        "{other}"
    );

    // The cohort run lists it too.
    let mut args = vec!["fit", cohort.to_str().unwrap()];
    args.extend(QUICK);
    let o = run(&args);
    assert!(o.status.success(), "{}", String::from_utf8_lossy(&o.stderr));
    let table = String::from_utf8_lossy(&o.stdout);
    assert!(
        table.contains("Saved fits replaced that were made with other options (1):"),
        "{table}"
    );
}

//! Completion scripts and manual pages come from the one command definition: each shell's
//! script and the man page mention every command, through the real binary.

use clap::CommandFactory;
use std::process::Command;

fn bin() -> Command {
    Command::new(env!("CARGO_BIN_EXE_trialdesk"))
}

/// Every visible command of the definition (the list the outputs must cover).
fn commands() -> Vec<String> {
    let cmd = trialdesk::cli::Cli::command();
    let names: Vec<String> = cmd
        .get_subcommands()
        .filter(|c| !c.is_hide_set())
        .map(|c| c.get_name().to_string())
        .collect();
    // Guard against an empty list making the checks below vacuous.
    for expected in ["review", "fit", "summary", "merge", "completions", "man"] {
        assert!(names.iter().any(|n| n == expected), "{expected} missing");
    }
    names
}

#[test]
fn each_shell_script_mentions_every_command() {
    let names = commands();
    for shell in ["bash", "zsh", "fish", "powershell", "elvish"] {
        let out = bin().args(["completions", shell]).output().unwrap();
        assert!(out.status.success(), "{shell}: {out:?}");
        let text = String::from_utf8(out.stdout).unwrap();
        assert!(
            text.len() > 500,
            "{shell}: script only {} bytes",
            text.len()
        );
        for n in &names {
            assert!(text.contains(n.as_str()), "{shell} script lacks `{n}`");
        }
    }
}

#[test]
fn unknown_shell_is_a_usage_error() {
    let out = bin().args(["completions", "tcsh"]).output().unwrap();
    assert_eq!(out.status.code(), Some(2));
    assert!(out.stdout.is_empty());
}

#[test]
fn man_page_on_stdout_lists_every_command() {
    let out = bin().arg("man").output().unwrap();
    assert!(out.status.success(), "{out:?}");
    let text = String::from_utf8(out.stdout).unwrap();
    assert!(text.starts_with(".ie") || text.contains(".TH trialdesk 1"));
    // roff escapes '-' as '\-' in the cross references trialdesk\-fit(1).
    for n in commands() {
        let reference = format!("trialdesk\\-{}(1)", n.replace('-', "\\-"));
        assert!(text.contains(&reference), "man page lacks {reference}");
    }
}

#[test]
fn man_out_writes_a_page_per_command() {
    let dir = tempfile::tempdir().unwrap();
    let target = dir.path().join("man1");
    let out = bin().args(["man", "--out"]).arg(&target).output().unwrap();
    assert!(out.status.success(), "{out:?}");
    assert!(out.stdout.is_empty(), "pages go to files, not stdout");
    let main = std::fs::read_to_string(target.join("trialdesk.1")).unwrap();
    assert!(main.contains(".SH SUBCOMMANDS"));
    for n in commands() {
        let page = std::fs::read_to_string(target.join(format!("trialdesk-{n}.1")))
            .unwrap_or_else(|e| panic!("trialdesk-{n}.1: {e}"));
        assert!(
            page.contains(".SH NAME"),
            "trialdesk-{n}.1 has no NAME section"
        );
    }
}

//! Invalid keymap files as fixtures, each with the message the user sees (file and line).

use std::path::{Path, PathBuf};
use trialdesk::cli::review::keymap_for;

fn fixture(name: &str) -> PathBuf {
    Path::new(env!("CARGO_MANIFEST_DIR"))
        .join("tests/fixtures/tui/keymaps")
        .join(name)
}

fn error_for(name: &str) -> String {
    let path = fixture(name);
    keymap_for(None, Some(path.to_str().unwrap()))
        .map(|_| ())
        .unwrap_err()
        .message
}

#[test]
fn unknown_action() {
    let e = error_for("unknown_action.toml");
    assert!(
        e.contains("unknown_action.toml:4: unknown action \"next_trail\""),
        "{e}"
    );
}

#[test]
fn unknown_key_name() {
    let e = error_for("unknown_key.toml");
    assert!(
        e.contains("unknown_key.toml:4: unknown key name \"escape\" for mark_exclude"),
        "{e}"
    );
}

#[test]
fn key_bound_twice() {
    let e = error_for("bound_twice.toml");
    assert!(
        e.contains("bound_twice.toml:4: key j is bound twice: to mark_suspect here and to next_trial on line 2"),
        "{e}"
    );
}

#[test]
fn broken_toml() {
    let e = error_for("bad_toml.toml");
    assert!(e.contains("bad_toml.toml:2:"), "{e}");
}

#[test]
fn missing_file_is_a_usage_error() {
    let err = keymap_for(None, Some("/nonexistent/keys.toml"))
        .map(|_| ())
        .unwrap_err();
    assert_eq!(err.code, 2);
    assert!(
        err.message.contains("not a shipped layout"),
        "{}",
        err.message
    );
}

#[test]
fn user_file_in_config_dir_then_flag() {
    let dir = tempfile::tempdir().unwrap();
    std::fs::copy(fixture("good_user.toml"), dir.path().join("keymap.toml")).unwrap();
    let map = keymap_for(Some(dir.path()), None).unwrap();
    assert_eq!(map.keys_for(trialdesk::tui::Action::MarkExclude), "e");
    let map = keymap_for(Some(dir.path()), Some("one_handed")).unwrap();
    assert_eq!(map.keys_for(trialdesk::tui::Action::NextTrial), "f");
    assert_eq!(map.keys_for(trialdesk::tui::Action::MarkExclude), "x");
}

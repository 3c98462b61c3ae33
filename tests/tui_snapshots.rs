//! Every screen drawn on a TestBackend at 80×24 and 120×40, compared with the snapshots in
//! tests/snapshots/ (insta). Review changes with `cargo insta review`.

mod tui_support;

use tui_support::*;

fn snap(name: &str, keys: &str) {
    let (_tmp, dir) = fixture_copy();
    let mut st = state(&dir);
    press(&mut st, keys);
    for (w, h) in [(80, 24), (120, 40)] {
        let t = terminal(w, h, &st);
        insta::assert_snapshot!(format!("{name}_{w}x{h}"), t.backend());
    }
}

#[test]
fn trial_screen_all_units() {
    snap("trial_all_units", "j");
}

#[test]
fn trial_screen_one_unit_raster() {
    snap("trial_one_unit", "jjj.");
}

#[test]
fn trial_screen_omission_marked() {
    snap("trial_omission_marked", "jjx1");
}

#[test]
fn session_screen() {
    snap("session", "jjjjx3j2");
}

#[test]
fn days_screen() {
    snap("days", "3");
}

#[test]
fn fit_screen() {
    snap("fit", "4");
}

#[test]
fn help_overlay() {
    snap("help", "?");
}

#[test]
fn reason_picker() {
    snap("picker", "js<down>");
}

#[test]
fn note_editor() {
    snap("editor", "nvalve clicked twice");
}

#[test]
fn second_session_photometry() {
    snap("session2_photometry", "]a");
}

#[test]
fn ascii_mode_has_only_ascii() {
    let (_tmp, dir) = fixture_copy();
    let mut opts = options();
    opts.ascii = true;
    let mut st = state_with(
        &dir,
        opts,
        trialdesk::tui::keymap::Keymap::build(&[]).unwrap(),
    );
    for keys in ["", "2", "3", "4", "?", "<esc>1x"] {
        press(&mut st, keys);
        let text = frame_text(80, 24, &st);
        assert!(text.is_ascii(), "non-ASCII after {keys:?}:\n{text}");
    }
    let t = terminal(80, 24, &st);
    insta::assert_snapshot!("ascii_picker_80x24", t.backend());
}

#[test]
fn every_size_draws_without_panic() {
    let (_tmp, dir) = fixture_copy();
    let mut st = state(&dir);
    for keys in ["", "2", "3", "4", "1?", "<esc>x", "<esc>n"] {
        press(&mut st, keys);
        for w in 0..=90u16 {
            for h in (0..=30u16).step_by(3) {
                let _ = frame_text(w, h, &st);
            }
        }
    }
    let small = frame_text(30, 8, &st);
    assert!(small.contains("terminal too"), "{small}");
}

#[test]
fn no_color_draws_without_colours() {
    use ratatui::style::Color;
    let (_tmp, dir) = fixture_copy();
    for color in [false, true] {
        let mut opts = options();
        opts.color = color;
        let mut st = state_with(
            &dir,
            opts,
            trialdesk::tui::keymap::Keymap::build(&[]).unwrap(),
        );
        press(&mut st, "x1j");
        let mut coloured = 0;
        for keys in ["1", "2", "3", "4"] {
            press(&mut st, keys);
            let t = terminal(80, 24, &st);
            coloured += t
                .backend()
                .buffer()
                .content()
                .iter()
                .filter(|c| c.fg != Color::Reset || c.bg != Color::Reset)
                .count();
        }
        assert_eq!(
            coloured > 0,
            color,
            "colour {color}: {coloured} coloured cells"
        );
    }
}

/// Like [`snap`], on the simulated session with faults, where the rules suggest marks.
fn snap_faulty(name: &str, keys: &str) {
    let (_tmp, dir) = faulty_subject();
    let mut st = state(&dir);
    press(&mut st, keys);
    for (w, h) in [(80, 24), (120, 40)] {
        let t = terminal(w, h, &st);
        insta::assert_snapshot!(format!("{name}_{w}x{h}"), t.backend());
    }
}

#[test]
fn trial_screen_suggested() {
    snap_faulty("trial_suggested", "f");
}

#[test]
fn session_screen_suggested() {
    snap_faulty("session_suggested", "ff2");
}

#[test]
fn accept_all_question() {
    snap_faulty("accept_all_question", "fY");
}

#[test]
fn suggestions_draw_in_ascii_and_at_every_size() {
    let (_tmp, dir) = faulty_subject();
    let mut opts = options();
    opts.ascii = true;
    let mut st = state_with(
        &dir,
        opts,
        trialdesk::tui::keymap::Keymap::build(&[]).unwrap(),
    );
    for keys in ["f", "2", "Y", "n1"] {
        press(&mut st, keys);
        assert!(frame_text(80, 24, &st).is_ascii(), "after {keys:?}");
        for w in (0..=90u16).step_by(7) {
            for h in (0..=30u16).step_by(5) {
                let _ = frame_text(w, h, &st);
            }
        }
    }
}

//! Shared by the reviewer's tests: a fresh copy of the fixture subject, a state built the way
//! `trialdesk review` builds it, keys from a readable string, and frames drawn on a TestBackend.
#![allow(dead_code)]

use crossterm::event::{KeyCode, KeyEvent, KeyModifiers};
use ratatui::backend::TestBackend;
use ratatui::Terminal;
use std::path::{Path, PathBuf};
use trialdesk::tui::app;
use trialdesk::tui::derived::ModelSettings;
use trialdesk::tui::keymap::{KeyChord, Keymap};
use trialdesk::tui::state::{Options, State, DEFAULT_REASONS};

pub fn fixture_root() -> PathBuf {
    Path::new(env!("CARGO_MANIFEST_DIR")).join("tests/fixtures/tui/m-007")
}

fn copy_dir(from: &Path, to: &Path) {
    std::fs::create_dir_all(to).unwrap();
    for e in std::fs::read_dir(from).unwrap() {
        let e = e.unwrap();
        let target = to.join(e.file_name());
        if e.file_type().unwrap().is_dir() {
            copy_dir(&e.path(), &target);
        } else {
            std::fs::copy(e.path(), target).unwrap();
        }
    }
}

/// A writable copy of the fixture subject (marks get appended during tests).
pub fn fixture_copy() -> (tempfile::TempDir, PathBuf) {
    let tmp = tempfile::tempdir().unwrap();
    let dir = tmp.path().join("m-007");
    copy_dir(&fixture_root(), &dir);
    (tmp, dir)
}

pub fn options() -> Options {
    Options {
        ascii: false,
        color: false,
        reviewer: "tester".to_string(),
        reasons: DEFAULT_REASONS.iter().map(|s| s.to_string()).collect(),
    }
}

pub fn state_with(dir: &Path, opts: Options, keymap: Keymap) -> State {
    let loaded = trialdesk::data::load(dir).unwrap_or_else(|f| panic!("{:?}", f.diagnostics));
    app::build_state(loaded.subject, opts, keymap, &ModelSettings::defaults())
}

pub fn state(dir: &Path) -> State {
    state_with(dir, options(), Keymap::build(&[]).unwrap())
}

/// Keys from a string: each character is a key; `<name>` is a named key as in keymap files
/// (`<enter>`, `<esc>`, `<down>`, `<ctrl-z>`, `<space>`).
pub fn keys(s: &str) -> Vec<KeyEvent> {
    let mut out = Vec::new();
    let mut chars = s.chars();
    while let Some(c) = chars.next() {
        let chord = if c == '<' {
            let name: String = chars.by_ref().take_while(|&c| c != '>').collect();
            KeyChord::parse(&name).unwrap_or_else(|| panic!("bad key <{name}>"))
        } else {
            KeyChord::parse(&c.to_string()).unwrap_or(KeyChord {
                code: KeyCode::Char(c),
                mods: KeyModifiers::NONE,
            })
        };
        let mut mods = chord.mods;
        if let KeyCode::Char(c) = chord.code {
            if c.is_uppercase() {
                mods |= KeyModifiers::SHIFT;
            }
        }
        out.push(KeyEvent::new(chord.code, mods));
    }
    out
}

pub fn press(state: &mut State, s: &str) {
    for k in keys(s) {
        app::handle_key(state, &k);
    }
}

pub fn terminal(w: u16, h: u16, state: &State) -> Terminal<TestBackend> {
    let mut t = Terminal::new(TestBackend::new(w, h)).unwrap();
    app::draw(&mut t, state).unwrap();
    t
}

/// The frame as plain text lines.
pub fn frame_text(w: u16, h: u16, state: &State) -> String {
    let t = terminal(w, h, state);
    let buf = t.backend().buffer();
    let mut out = String::new();
    for y in 0..h {
        for x in 0..w {
            out.push_str(buf[(x, y)].symbol());
        }
        out.push('\n');
    }
    out
}

pub fn marks_csv(dir: &Path, session: &str) -> String {
    std::fs::read_to_string(dir.join(session).join("marks.csv")).unwrap_or_default()
}

/// marks.csv rows without the `at` column (the clock is not under test).
pub fn marks_rows(dir: &Path, session: &str) -> Vec<String> {
    marks_csv(dir, session)
        .lines()
        .map(|l| l.rsplit_once(',').map_or(l, |(a, _)| a).to_string())
        .collect()
}

/// A simulated subject with injected faults (random seed 7, one day of 30 trials, 2 units;
/// valve failures at 0.2 and baseline licks at 0.1 per trial), written to a temporary folder,
/// so the suggestion rules have real trials to point at.
pub fn faulty_subject() -> (tempfile::TempDir, PathBuf) {
    use trialdesk::simulate::{self, faults::FaultKind, SimConfig};
    let mut c = SimConfig {
        seed: 7,
        ..SimConfig::default()
    };
    c.schedule.days = 1;
    c.schedule.trials_per_day = 30;
    c.units.count = 2;
    c.faults.rates = vec![
        (FaultKind::ValveFailure, 0.2),
        (FaultKind::BaselineLicks, 0.1),
    ];
    let sim = simulate::simulate(&c).unwrap();
    let tmp = tempfile::tempdir().unwrap();
    let dir = tmp.path().join("m-041");
    simulate::write_subject(&sim, &dir, false).unwrap();
    (tmp, dir)
}

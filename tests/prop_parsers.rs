//! Property tests over every parser (issue 6, item 3): whole session folders through
//! `data::load` and `check::check`, marks journals, keymap files and suggestion-rule files.
//! Inputs are valid-looking files with a few cells replaced by hostile values (NaN, inf,
//! 1e400, -1, empty, quotes, a BOM or CR in the middle, NUL, invalid UTF-8, escape sequences,
//! thousands of columns, a long cell), sometimes truncated or spliced with raw bytes.
//!
//! Properties: nothing panics; a clean folder loads; a folder that fails to load has an
//! error naming one of its files, at a line that exists; `check` and `load` agree on whether
//! the data files have errors. Case counts are fixed below (1,964 cases per run: 564 session
//! folders, 600 rule files, 800 keymap files; about 4 s of CPU in a debug build); byte-level
//! fuzzing of the single readers lives in check_props.rs and marks_properties.rs.

use proptest::prelude::*;
use std::path::Path;
use std::sync::OnceLock;
use trialdesk::data::{self, Session};
use trialdesk::marks;
use trialdesk::suggest::config::{RuleSet, DEFAULT_RULES};
use trialdesk::tui::keymap::{self, Keymap};

/// Hostile replacements for one cell (bytes: some are not UTF-8).
fn hostile_cell() -> impl Strategy<Value = Vec<u8>> {
    let fixed: Vec<&'static [u8]> = vec![
        b"NaN",
        b"nan",
        b"inf",
        b"-inf",
        b"-1",
        b"1e400",
        b"-1e400",
        b"1e-400",
        b"",
        b" ",
        b"\"",
        b"\"\"",
        b"\"a,b\"",
        b"a\"b",
        "\u{feff}1".as_bytes(),
        b"1\r2",
        b"\r",
        b"\0",
        b"\xff\xfe",
        b"\xc3",
        b"\xed\xa0\x80",
        b"\x1b[2J",
        b"\xc2\x9b31m",
        b"0x10",
        b"1_000",
        b"+5",
        b"00000000000000000000000000001",
        b"99999999999999999999999999999999",
        b"-0",
        b"1.5.5",
        b"tone-hi",
        b"u1",
        b"exclude",
        b"2026-02-30T25:61:61Z",
    ];
    prop_oneof![
        6 => prop::sample::select(fixed).prop_map(|b| b.to_vec()),
        1 => "[0-9]{300,400}".prop_map(String::into_bytes),
        1 => Just(",".repeat(5000).into_bytes()),
        1 => Just("x".repeat(70_000).into_bytes()),
        1 => prop::collection::vec(any::<u8>(), 0..12),
    ]
}

/// Rows of cells; cell (0, _) is the header.
type Table = Vec<Vec<Vec<u8>>>;

fn render(table: &Table, crlf: bool) -> Vec<u8> {
    let mut out = Vec::new();
    for row in table {
        out.extend(row.join(&b","[..]));
        out.extend_from_slice(if crlf { b"\r\n" } else { b"\n" });
    }
    out
}

fn cells(fields: &[String]) -> Vec<Vec<u8>> {
    fields.iter().map(|f| f.clone().into_bytes()).collect()
}

/// A valid session of `n` trials: (file name, table).
fn valid_session(n: usize) -> Vec<(&'static str, Table)> {
    let mut trials = vec![cells(&[
        "trial".into(),
        "cue".into(),
        "cue_s".into(),
        "reward_s".into(),
        "reward_ul".into(),
    ])];
    let mut licks = vec![cells(&["time_s".into()])];
    let mut spikes = vec![cells(&["unit".into(), "time_s".into()])];
    for i in 1..=n {
        let t = 10.0 * i as f64;
        let row: [String; 5] = match i % 4 {
            0 => [
                i.to_string(),
                String::new(),
                String::new(),
                t.to_string(),
                "3".into(),
            ],
            1 => [
                i.to_string(),
                "tone-lo".into(),
                t.to_string(),
                String::new(),
                String::new(),
            ],
            _ => [
                i.to_string(),
                "tone-hi".into(),
                t.to_string(),
                (t + 1.5).to_string(),
                "3".into(),
            ],
        };
        trials.push(cells(&row));
        licks.push(cells(&[(t + 1.6).to_string()]));
        spikes.push(cells(&["u1".into(), (t + 0.1).to_string()]));
        spikes.push(cells(&["u2".into(), (t + 1.55).to_string()]));
    }
    let mut photometry = vec![cells(&["time_s".into(), "signal".into(), "control".into()])];
    for k in 0..(n * 20) {
        let t = k as f64 * 0.5;
        photometry.push(cells(&[
            t.to_string(),
            (1.0 + 0.01 * k as f64).to_string(),
            "0.5".into(),
        ]));
    }
    let mut marks = vec![cells(&[
        "trial".into(),
        "mark".into(),
        "reason".into(),
        "note".into(),
        "reviewer".into(),
        "at".into(),
    ])];
    marks.push(cells(&[
        "1".into(),
        "exclude".into(),
        "artifact".into(),
        "\"cable, loose\"".into(),
        "ana".into(),
        "2026-03-02T10:00:00Z".into(),
    ]));
    marks.push(cells(&[
        String::new(),
        "note".into(),
        String::new(),
        "patch cord replaced".into(),
        "ana".into(),
        "2026-03-02T10:01:00Z".into(),
    ]));
    vec![
        ("trials.csv", trials),
        ("licks.csv", licks),
        ("spikes.csv", spikes),
        ("photometry.csv", photometry),
        ("marks.csv", marks),
    ]
}

const META: &str = "subject = \"m-041\"\ndate = \"2026-03-02\"\nstart_time = \"09:30:00\"\n\
                    rig = \"box-2\"\n[[cue]]\nname = \"tone-hi\"\nreward_delay_s = 1.5\n\
                    [[cue]]\nname = \"tone-lo\"\n";

/// Hostile fragments for session.toml values.
fn hostile_toml_value() -> impl Strategy<Value = String> {
    prop::sample::select(vec![
        "nan",
        "inf",
        "-inf",
        "-1",
        "1e400",
        "\"\"",
        "\"2026-02-30\"",
        "\"\\u001b[2J\"",
        "\"\\u0000\"",
        "[]",
        "{}",
        "1979-05-27T07:32:00Z",
        "\"tone-hi\"",
        "true",
        "9223372036854775808",
        "\"",
        "'''",
    ])
    .prop_map(str::to_string)
}

/// One change to a session: a cell of a table, a session.toml value, or raw damage.
#[derive(Debug, Clone)]
enum Change {
    Cell {
        file: usize,
        row: usize,
        col: usize,
        value: Vec<u8>,
    },
    Meta {
        key: usize,
        value: String,
    },
    Splice {
        file: usize,
        at: usize,
        bytes: Vec<u8>,
    },
    Truncate {
        file: usize,
        at: usize,
    },
    ExtraColumns {
        file: usize,
        count: usize,
    },
}

fn change() -> impl Strategy<Value = Change> {
    prop_oneof![
        6 => (0..5usize, 0..40usize, 0..6usize, hostile_cell())
            .prop_map(|(file, row, col, value)| Change::Cell { file, row, col, value }),
        2 => (0..7usize, hostile_toml_value()).prop_map(|(key, value)| Change::Meta { key, value }),
        1 => (0..6usize, any::<usize>(), prop::collection::vec(any::<u8>(), 1..16))
            .prop_map(|(file, at, bytes)| Change::Splice { file, at, bytes }),
        1 => (0..6usize, any::<usize>()).prop_map(|(file, at)| Change::Truncate { file, at }),
        1 => (0..5usize, 1..20_000usize).prop_map(|(file, count)| Change::ExtraColumns { file, count }),
    ]
}

/// Apply `changes` to a valid session and write it into `dir`.
fn write_session(dir: &Path, n: usize, changes: &[Change], crlf: bool) {
    let mut tables = valid_session(n);
    let mut meta: Vec<String> = META.lines().map(str::to_string).collect();
    for c in changes {
        match c {
            Change::Cell {
                file,
                row,
                col,
                value,
            } => {
                let t = &mut tables[*file].1;
                let r = row % t.len();
                let k = col % t[r].len();
                t[r][k] = value.clone();
            }
            Change::Meta { key, value } => {
                // The value of the key-th `key = value` line.
                let keyed: Vec<usize> = (0..meta.len())
                    .filter(|&i| meta[i].contains(" = "))
                    .collect();
                let i = keyed[key % keyed.len()];
                let name = meta[i].split(" = ").next().unwrap_or_default().to_string();
                meta[i] = format!("{name} = {value}");
            }
            Change::ExtraColumns { file, count } => {
                // The header and two rows: wide enough to matter, small enough to be quick.
                for row in tables[*file].1.iter_mut().take(3) {
                    row.extend(std::iter::repeat_n(b"7".to_vec(), *count));
                }
            }
            Change::Splice { .. } | Change::Truncate { .. } => {}
        }
    }
    let mut files: Vec<(&str, Vec<u8>)> = tables
        .iter()
        .map(|(name, t)| (*name, render(t, crlf)))
        .collect();
    files.push(("session.toml", (meta.join("\n") + "\n").into_bytes()));
    for c in changes {
        match c {
            Change::Splice { file, at, bytes } => {
                let f = &mut files[*file].1;
                let at = at % (f.len() + 1);
                f.splice(at..at, bytes.iter().copied());
            }
            Change::Truncate { file, at } => {
                let f = &mut files[*file].1;
                let at = at % (f.len() + 1);
                f.truncate(at);
            }
            _ => {}
        }
    }
    std::fs::create_dir_all(dir).unwrap();
    for (name, bytes) in files {
        std::fs::write(dir.join(name), bytes).unwrap();
    }
}

fn lines_of(path: &Path) -> u64 {
    let bytes = std::fs::read(path).unwrap_or_default();
    1 + bytes.iter().filter(|&&b| b == b'\n').count() as u64
}

/// The folder through `load` and `check`, with the properties of the module notes.
fn load_and_check(dir: &Path) -> Result<(), TestCaseError> {
    let loaded = data::load(dir);
    let checked = trialdesk::check::check(dir);
    for d in &checked {
        let shown = d.to_string();
        prop_assert!(
            d.file.starts_with(dir),
            "diagnostic outside the folder: {}",
            shown
        );
        prop_assert!(
            !shown.chars().any(|c| c != '\n' && c.is_control()),
            "control character printed: {:?}",
            shown
        );
        if let Some(line) = d.line {
            prop_assert!(line >= 1 && line <= lines_of(&d.file) + 1, "{}", shown);
        }
    }
    let data_errors = checked
        .iter()
        .filter(|d| d.is_error() && !d.file.ends_with("marks.csv"))
        .count();
    match &loaded {
        Ok(l) => {
            prop_assert_eq!(
                data_errors,
                0,
                "check found errors load did not: {:?}",
                checked
            );
            prop_assert_eq!(l.subject.sessions.len(), 1);
        }
        Err(f) => {
            prop_assert!(f.diagnostics.iter().any(|d| d.is_error()));
            prop_assert!(data_errors > 0, "load failed, check clean: {}", f);
        }
    }
    // The journal on its own: parsed or refused with its line, never a panic.
    match marks::read_journal(dir) {
        Ok(j) => {
            let _ = j.state();
        }
        Err(marks::MarksError::Parse { line, .. }) => {
            prop_assert!(line >= 1 && line <= lines_of(&dir.join("marks.csv")) + 1);
        }
        Err(_) => {}
    }
    Ok(())
}

proptest! {
    #![proptest_config(ProptestConfig::with_cases(64))]

    /// Guards the generator: unchanged sessions load (and the journal reads) cleanly.
    #[test]
    fn a_clean_session_loads(n in 1..30usize, crlf in any::<bool>()) {
        let tmp = tempfile::tempdir().unwrap();
        write_session(tmp.path(), n, &[], crlf);
        let loaded = data::load(tmp.path());
        prop_assert!(loaded.is_ok(), "{}", loaded.unwrap_err());
        let j = marks::read_journal(tmp.path()).unwrap();
        prop_assert_eq!(j.rows.len(), 2);
        load_and_check(tmp.path())?;
    }
}

proptest! {
    #![proptest_config(ProptestConfig::with_cases(500))]

    #[test]
    fn damaged_sessions_never_panic_and_errors_point_at_real_lines(
        n in 1..30usize,
        crlf in any::<bool>(),
        changes in prop::collection::vec(change(), 1..4),
    ) {
        let tmp = tempfile::tempdir().unwrap();
        write_session(tmp.path(), n, &changes, crlf);
        load_and_check(tmp.path())?;
    }
}

/// The reviewer fixture, loaded once, for running suggestion rules.
fn fixture_session() -> &'static Session {
    static S: OnceLock<Session> = OnceLock::new();
    S.get_or_init(|| {
        let dir = Path::new(env!("CARGO_MANIFEST_DIR")).join("tests/fixtures/tui/m-007/2026-03-03");
        data::load(&dir).unwrap().subject.sessions.remove(0)
    })
}

fn hostile_number() -> impl Strategy<Value = String> {
    prop_oneof![
        prop::sample::select(vec![
            "nan",
            "inf",
            "-inf",
            "-1",
            "0",
            "1e300",
            "1e-300",
            "-1e300",
            "3600",
            "-3600",
            "3600.0001",
            "4294967296",
            "100000",
            "1",
            "0.5",
            "\"2\"",
            "true",
            "[]",
        ])
        .prop_map(str::to_string),
        (-1e6..1e6f64).prop_map(|v| format!("{v:?}")),
    ]
}

proptest! {
    #![proptest_config(ProptestConfig::with_cases(300))]

    /// A user's suggest.toml: a shipped value replaced by a hostile one. It parses or names
    /// the file and line; a set that parses runs on a real session without panicking.
    #[test]
    fn suggestion_rule_files_are_checked_and_run(
        line in any::<prop::sample::Index>(),
        value in hostile_number(),
        over_base in any::<bool>(),
    ) {
        let lines: Vec<&str> = DEFAULT_RULES.lines().collect();
        let numeric: Vec<usize> = (0..lines.len())
            .filter(|&i| !lines[i].starts_with('#') && lines[i].contains(" = "))
            .collect();
        let i = numeric[line.index(numeric.len())];
        let key = lines[i].split(" = ").next().unwrap();
        let mut edited: Vec<String> = lines.iter().map(|l| l.to_string()).collect();
        edited[i] = format!("{key} = {value}");
        let text = edited.join("\n");
        let base = RuleSet::default();
        let file = Path::new("suggest.toml");
        match RuleSet::parse(file, &text, over_base.then_some(&base)) {
            Ok(rules) => {
                let s = trialdesk::suggest::suggest_session(fixture_session(), &rules);
                prop_assert!(s.len() <= 10_000);
            }
            Err(e) => {
                let e = e.to_string();
                prop_assert!(e.starts_with("suggest.toml"), "{}", e);
                prop_assert!(!e.chars().any(char::is_control), "{:?}", e);
            }
        }
    }

    #[test]
    fn suggestion_rule_parser_takes_any_text(text in "\\PC{0,300}") {
        let _ = RuleSet::parse(Path::new("suggest.toml"), &text, Some(&RuleSet::default()));
        let _ = RuleSet::parse(Path::new("suggest.toml"), &text, None);
    }
}

/// Key names, good and bad.
fn key_name() -> impl Strategy<Value = String> {
    prop_oneof![
        prop::sample::select(vec![
            "j",
            "k",
            "x",
            "enter",
            "esc",
            "ctrl-z",
            "alt-x",
            "f1",
            "f99",
            "f0",
            "ctrl-",
            "ctrl-ctrl-a",
            "shift-tab",
            "space",
            "",
            " ",
            "\\u001b",
            "\\u0000",
            "é",
            "ctrl-c",
            "pageup",
            "ALT-X",
            "ctrl-alt-shift-x",
            "tab",
            "1",
            "?",
        ])
        .prop_map(str::to_string),
        "[a-z\\-]{0,12}",
        "\\PC{0,4}",
    ]
}

fn action_name() -> impl Strategy<Value = String> {
    prop_oneof![
        4 => prop::sample::select(
            trialdesk::tui::action::BINDABLE.iter().map(|(_, n)| n.to_string()).collect::<Vec<_>>()
        ),
        1 => "[a-z_]{0,16}",
    ]
}

proptest! {
    #![proptest_config(ProptestConfig::with_cases(400))]

    /// Keymap files built from real action names and mixed key names: parsed, or refused with
    /// an error on a line of the file; a parsed file always builds a keymap or says why.
    #[test]
    fn keymap_files_parse_or_name_the_line(
        layout in prop::option::of(prop::sample::select(vec!["default", "one_handed", "qwerty", ""])),
        bindings in prop::collection::vec((action_name(), prop::collection::vec(key_name(), 0..3)), 0..12),
        junk in prop::option::of("\\PC{0,40}"),
    ) {
        let mut text = String::new();
        if let Some(l) = layout {
            text.push_str(&format!("layout = \"{l}\"\n"));
        }
        text.push_str("[keys]\n");
        for (action, keys) in &bindings {
            let list: Vec<String> = keys.iter().map(|k| format!("\"{k}\"")).collect();
            text.push_str(&format!("{action} = [{}]\n", list.join(", ")));
        }
        if let Some(j) = junk {
            text.push_str(&j);
        }
        let n_lines = text.lines().count() + 1;
        match keymap::parse_file("keymap.toml", &text) {
            Ok(_) => {
                let built = Keymap::build(&[("keymap.toml".to_string(), text.clone())]);
                if let Err(e) = built {
                    prop_assert!(!e.message.is_empty());
                }
            }
            Err(e) => {
                prop_assert_eq!(&e.file, "keymap.toml");
                prop_assert!(!e.message.is_empty());
                if let Some(l) = e.line {
                    prop_assert!(l >= 1 && l <= n_lines, "line {} of {}: {}", l, n_lines, e);
                }
            }
        }
    }

    #[test]
    fn keymap_parser_takes_any_text(text in "\\PC{0,300}") {
        if let Err(e) = keymap::parse_file("k.toml", &text) {
            if let Some(l) = e.line {
                prop_assert!(l <= text.lines().count() + 1);
            }
        }
        let _ = Keymap::build(&[("k.toml".to_string(), text)]);
    }
}

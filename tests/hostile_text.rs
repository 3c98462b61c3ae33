//! Hostile text in the data (issue 6, item 4): escape and control sequences in cue names,
//! subject and rig ids, unit ids, session folder names and marks notes never reach the
//! terminal — not through the reviewer's frames, not through the commands' printed output —
//! and CSV exports protect cells a spreadsheet would run as a formula while keeping the text.

mod tui_support;

use ratatui::backend::TestBackend;
use ratatui::Terminal;
use std::path::{Path, PathBuf};
use std::process::{Command, Output};
use trialdesk::marks::{self, MarkKind, MarkRow};
use trialdesk::tui::app;
use trialdesk::tui::derived::ModelSettings;
use trialdesk::tui::keymap::Keymap;

const BIN: &str = env!("CARGO_BIN_EXE_trialdesk");

/// Cue, as typed in trials.csv: a formula start, a clear-screen sequence and a bell.
const CUE: &str = "=tone\u{1b}[2J\u{7}hi";
/// The same as a TOML basic string body.
const CUE_TOML: &str = "=tone\\u001b[2J\\u0007hi";
const SUBJECT_TOML: &str = "@m\\u001b]0;owned\\u0007-041";
const RIG_TOML: &str = "+box\\u009b31m-2";
/// Unit id: colour sequence plus a C1 CSI.
const UNIT: &str = "-u\u{1b}[31m\u{9b}1";
/// Session folder names: a formula, and a leading minus with an escape sequence in it.
const DAY1: &str = "=SUM(1+1)";
const DAY2: &str = "-2+3\u{1b}[2J";
const NOTE: &str = "=HYPERLINK(\"http:x\",\"see\")\u{1b}[?1049l\r\n\u{8}";
const REASON: &str = "@reason\u{7}";
const REVIEWER: &str = "+rev\u{1b}]0;t\u{7}";

/// A simulated subject rewritten with hostile strings everywhere the data holds text.
fn hostile_subject() -> (tempfile::TempDir, PathBuf) {
    let tmp = tempfile::tempdir().unwrap();
    let subject = tmp.path().join("m-x");
    let o = Command::new(BIN)
        .args(["simulate", subject.to_str().unwrap()])
        .args(["--seed", "3", "--days", "2", "--trials-per-day", "40"])
        .args(["--subject", "m-041"])
        .output()
        .unwrap();
    assert!(o.status.success(), "{}", String::from_utf8_lossy(&o.stderr));
    let mut days: Vec<PathBuf> = std::fs::read_dir(&subject)
        .unwrap()
        .map(|e| e.unwrap().path())
        .filter(|p| p.join("session.toml").is_file())
        .collect();
    days.sort();
    assert_eq!(days.len(), 2);
    for (day, name) in days.iter().zip([DAY1, DAY2]) {
        let edit = |file: &str, f: &dyn Fn(String) -> String| {
            let path = day.join(file);
            let text = std::fs::read_to_string(&path).unwrap();
            std::fs::write(&path, f(text)).unwrap();
        };
        edit("session.toml", &|t| {
            t.replace("\"tone-hi\"", &format!("\"{CUE_TOML}\""))
                .replace("\"m-041\"", &format!("\"{SUBJECT_TOML}\""))
                .replace("\"box-2\"", &format!("\"{RIG_TOML}\""))
        });
        edit("trials.csv", &|t| {
            t.replace(",tone-hi,", &format!(",{CUE},"))
        });
        edit("spikes.csv", &|t| {
            t.lines()
                .map(|l| match l.strip_prefix("u1,") {
                    Some(rest) => format!("{UNIT},{rest}\n"),
                    None => format!("{l}\n"),
                })
                .collect()
        });
        let row = |trial: Option<i64>, mark: MarkKind| MarkRow {
            trial,
            mark,
            reason: REASON.into(),
            note: NOTE.into(),
            reviewer: REVIEWER.into(),
            at: "2026-03-02T10:00:00Z".into(),
        };
        marks::append(day, &row(Some(2), MarkKind::Exclude)).unwrap();
        marks::append(day, &row(Some(3), MarkKind::Note)).unwrap();
        marks::append(day, &row(None, MarkKind::Note)).unwrap();
        std::fs::rename(day, subject.join(name)).unwrap();
    }
    (tmp, subject)
}

/// C0 (except newline), DEL and C1 characters: what a terminal would act on.
fn controls(text: &str) -> Vec<char> {
    text.chars()
        .filter(|&c| c != '\n' && c.is_control())
        .collect()
}

fn printed(o: &Output) -> String {
    format!(
        "{}{}",
        String::from_utf8_lossy(&o.stdout),
        String::from_utf8_lossy(&o.stderr)
    )
}

#[test]
fn the_reviewer_draws_no_control_characters_from_the_data() {
    let (_tmp, subject) = hostile_subject();
    let loaded = trialdesk::data::load(&subject).unwrap_or_else(|f| panic!("{f}"));
    let s = &loaded.subject.sessions[0];
    assert!(
        s.meta.cues.iter().any(|c| c.name == CUE),
        "hostile cue loaded"
    );
    assert!(s.spikes.as_ref().unwrap().units.iter().any(|u| u == UNIT));
    for ascii in [false, true] {
        let mut opts = tui_support::options();
        opts.ascii = ascii;
        let mut st = app::build_state(
            loaded.subject.clone(),
            opts,
            Keymap::build(&[]).unwrap(),
            &ModelSettings::defaults(),
        );
        // Every screen, the hostile unit chosen, the marked trial and its note shown, the
        // second session (hostile folder name), the help overlay.
        let mut bad = Vec::new();
        for keys in [
            "", ".", "j", "j", "2", "3", "4", "1", "]", "j", "2", "?", "?", "n",
        ] {
            tui_support::press(&mut st, keys);
            for (w, h) in [(80, 24), (132, 40)] {
                let mut t = Terminal::new(TestBackend::new(w, h)).unwrap();
                app::draw(&mut t, &st).unwrap();
                let buf = t.backend().buffer();
                for y in 0..h {
                    for x in 0..w {
                        let sym = buf[(x, y)].symbol();
                        if !controls(sym).is_empty() || sym.contains('\n') {
                            bad.push(format!("after {keys:?} at {w}x{h} ({x},{y}): {sym:?}"));
                        }
                    }
                }
            }
        }
        assert!(
            bad.is_empty(),
            "ascii={ascii}: {:#?}",
            &bad[..bad.len().min(20)]
        );
    }
}

/// Human-readable output only: CSV (`marks --format csv`) keeps the text exactly, as the
/// exports must, and is checked for formula cells below instead.
#[test]
fn printed_reports_carry_no_control_characters() {
    let (_tmp, subject) = hostile_subject();
    let s = subject.to_str().unwrap();
    let day2 = subject.join(DAY2);
    let day2 = day2.to_str().unwrap();
    // An undeclared hostile cue and unit make `check` quote bad values back.
    let broken = subject.join("zz-broken");
    std::fs::create_dir(&broken).unwrap();
    std::fs::copy(
        subject.join(DAY1).join("session.toml"),
        broken.join("session.toml"),
    )
    .unwrap();
    std::fs::write(
        broken.join("trials.csv"),
        "trial,cue,cue_s,reward_s,reward_ul\n1,\u{1b}[2Jx,1,2.5,3\n2,ok,\u{1b}]0;t\u{7},,\n",
    )
    .unwrap();
    let mut found = Vec::new();
    let runs: Vec<Vec<&str>> = vec![
        vec!["check", s],
        vec!["check", day2],
        vec!["summary", day2],
        vec!["summary", day2, "--format", "markdown"],
        vec!["marks", s],
        vec!["marks", day2, "--all"],
        vec![
            "model",
            s,
            "--alpha",
            "0.1",
            "--gamma",
            "0.9",
            "--out",
            "/dev/null",
        ],
        vec!["fit", s, "--no-compare", "--bootstrap", "0", "--no-save"],
        vec!["review", day2],
        vec![
            "fit",
            day2,
            "--no-compare",
            "--bootstrap",
            "0",
            "--no-save",
            "--unit",
            UNIT,
        ],
    ];
    for args in &runs {
        let o = Command::new(BIN)
            .args(args)
            .env("NO_COLOR", "1")
            .output()
            .unwrap();
        let text = printed(&o);
        assert!(!text.contains("panicked"), "{args:?}: {text}");
        let c = controls(&text);
        if !c.is_empty() {
            found.push(format!("{args:?}: {c:?}\n{text}"));
        }
    }
    assert!(found.is_empty(), "{}", found.join("\n----\n"));
}

/// Cells a spreadsheet would run: starting with = + - @ (or tab/CR) and not a plain number.
fn formula_cells(csv_text: &str) -> Vec<String> {
    let mut rdr = csv::ReaderBuilder::new()
        .has_headers(false)
        .flexible(true)
        .from_reader(csv_text.as_bytes());
    let mut bad = Vec::new();
    for rec in rdr.records() {
        for cell in rec.unwrap().iter() {
            let risky = cell.starts_with(['=', '+', '-', '@', '\t', '\r']);
            let number = cell.parse::<f64>().is_ok_and(f64::is_finite)
                && !cell.to_ascii_lowercase().contains(['i', 'n']);
            if risky && !number {
                bad.push(cell.to_string());
            }
        }
    }
    bad
}

fn read(path: &Path) -> String {
    std::fs::read_to_string(path).unwrap_or_else(|e| panic!("{}: {e}", path.display()))
}

#[test]
fn csv_exports_protect_formula_cells_and_keep_their_text() {
    let (tmp, subject) = hostile_subject();
    let out = tmp.path().join("out");
    std::fs::create_dir(&out).unwrap();
    let s = subject.to_str().unwrap();
    let p = |name: &str| out.join(name).to_str().unwrap().to_string();
    let runs: Vec<Vec<String>> = vec![
        vec!["marks".into(), s.into(), "--csv".into(), p("marks.csv")],
        vec![
            "marks".into(),
            s.into(),
            "--all".into(),
            "--csv".into(),
            p("marks-all.csv"),
        ],
        vec![
            "summary".into(),
            s.into(),
            "--format".into(),
            "csv".into(),
            "--out".into(),
            p("summary.csv"),
        ],
        vec![
            "model".into(),
            s.into(),
            "--alpha".into(),
            "0.1".into(),
            "--gamma".into(),
            "0.9".into(),
            "--out".into(),
            p("model.csv"),
        ],
        vec![
            "fit".into(),
            s.into(),
            "--no-compare".into(),
            "--bootstrap".into(),
            "0".into(),
            "--no-save".into(),
            "--out".into(),
            p("fit"),
        ],
    ];
    for args in &runs {
        let o = Command::new(BIN).args(args).output().unwrap();
        assert!(o.status.success(), "{args:?}: {}", printed(&o));
    }
    let mut problems = Vec::new();
    for file in [
        "marks.csv",
        "marks-all.csv",
        "summary.csv",
        "model.csv",
        "fit/params.csv",
        "fit/trials.csv",
    ] {
        let text = read(&out.join(file));
        let bad = formula_cells(&text);
        if !bad.is_empty() {
            problems.push(format!("{file}: {:?}", &bad[..bad.len().min(5)]));
        }
    }
    assert!(problems.is_empty(), "{problems:#?}");

    // The text is kept behind the apostrophe.
    let marks = read(&out.join("marks.csv"));
    for text in [DAY1, NOTE, REASON, REVIEWER] {
        let quoted = format!("'{text}");
        let mut rdr = csv::Reader::from_reader(marks.as_bytes());
        let hit = rdr
            .records()
            .any(|r| r.unwrap().iter().any(|c| c == quoted));
        assert!(hit, "{quoted:?} not in marks export:\n{marks}");
    }
    let summary = read(&out.join("summary.csv"));
    assert!(summary.contains(&format!("'{CUE}")), "{summary}");
    assert!(summary.contains(&format!("'{DAY1}")), "{summary}");
    let trials = read(&out.join("fit/trials.csv"));
    assert!(trials.contains(&format!("'{DAY1}")), "{trials}");
    let model = read(&out.join("model.csv"));
    assert!(model.contains(&format!("'{DAY2}")), "{model}");
}

/// An error on the status line quotes a path from the data (here a session folder name with
/// an escape sequence whose journal cannot be written): drawn clean too.
#[test]
fn the_reviewer_status_line_shows_hostile_paths_clean() {
    let (_tmp, subject) = hostile_subject();
    let loaded = trialdesk::data::load(&subject).unwrap_or_else(|f| panic!("{f}"));
    let mut st = app::build_state(
        loaded.subject,
        tui_support::options(),
        Keymap::build(&[]).unwrap(),
        &ModelSettings::defaults(),
    );
    let journal = subject.join(DAY2).join("marks.csv");
    std::fs::remove_file(&journal).unwrap();
    std::fs::create_dir(&journal).unwrap();
    tui_support::press(&mut st, "]jx1");
    assert!(st.status.text.contains("NOT SAVED"), "{}", st.status.text);
    assert!(
        st.status.text.contains('\u{1b}'),
        "the raw path is in the state"
    );
    let frame = tui_support::frame_text(132, 40, &st);
    assert!(frame.contains("NOT SAVED"), "{frame}");
    assert!(controls(&frame).is_empty(), "{:?}", controls(&frame));
}

/// Valid but extreme numbers: a day-long gap between trials, a reward logged far after its
/// cue, a huge reward size, a session clock near 1e9 s, 300 units. Every screen draws
/// without panicking. (3,000 units with a 3,000 s reward delay took 20 s to open in a debug
/// build: the session view costs units × view bins, and the view spans the longest delay.)
#[test]
fn the_reviewer_draws_extreme_but_valid_numbers() {
    let tmp = tempfile::tempdir().unwrap();
    let dir = tmp.path().join("m-extreme/2026-03-02");
    std::fs::create_dir_all(&dir).unwrap();
    std::fs::write(
        dir.join("session.toml"),
        "subject = \"m\"\ndate = \"2026-03-02\"\n[[cue]]\nname = \"a\"\nreward_delay_s = 1.5\n\
         [[cue]]\nname = \"b\"\nreward_delay_s = 300\n",
    )
    .unwrap();
    std::fs::write(
        dir.join("trials.csv"),
        "trial,cue,cue_s,reward_s,reward_ul\n1,a,0,1.5,1e300\n2,a,86400,,\n\
         3,b,86500,86800,3\n4,,,999999999,3\n5,a,1000000000,1000000000.0000001,0.000001\n",
    )
    .unwrap();
    let mut spikes = String::from("unit,time_s\n");
    for u in 0..300 {
        spikes.push_str(&format!("unit-{u},{}\n", 0.1 + u as f64 * 1e-3));
    }
    spikes.push_str("unit-0,999999999.5\n");
    std::fs::write(dir.join("spikes.csv"), spikes).unwrap();
    std::fs::write(
        dir.join("licks.csv"),
        "time_s\n0\n1.6\n86400.2\n1000000000\n",
    )
    .unwrap();
    std::fs::write(
        dir.join("photometry.csv"),
        "time_s,signal,control\n0,1e300,-1e300\n0.05,-1e300,1e-300\n1000000000,0,0\n",
    )
    .unwrap();
    let loaded = trialdesk::data::load(&dir).unwrap_or_else(|f| panic!("{f}"));
    let mut st = app::build_state(
        loaded.subject,
        tui_support::options(),
        Keymap::build(&[]).unwrap(),
        &ModelSettings::defaults(),
    );
    for keys in [
        "", "j", "j", "j", "j", ".", ",", "a", "a", "a", "2", "3", "4", "1", "G",
    ] {
        tui_support::press(&mut st, keys);
        for (w, h) in [(80, 24), (200, 60), (20, 5)] {
            let _ = tui_support::frame_text(w, h, &st);
        }
    }
}

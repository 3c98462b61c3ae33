//! Reading a subject or session folder into typed data.
//!
//! [`load`] finds the session folders, reads each one's files with the table readers (which
//! report every problem, not just the first), matches trials to the cues of `session.toml`,
//! runs the cross-file checks of [`super::consistency`] and sorts sessions into training order.
//! [`scan`] is the same walk for `check`: it keeps going and returns whatever loaded.

use super::consistency;
use super::events::{self, EVENTS_FILE};
use super::meta::{read_meta_partial, SESSION_FILE};
use super::tables::{self, RawTrial, Span, LICKS_FILE, PHOTOMETRY_FILE, SPIKES_FILE, TRIALS_FILE};
use super::{Diagnostic, Session, SessionMeta, Subject, Trial};
use std::collections::HashSet;
use std::fs::File;
use std::io::BufReader;
use std::path::{Path, PathBuf};

/// A folder that loaded, with any warnings found on the way.
#[derive(Debug)]
pub struct Loaded {
    pub subject: Subject,
    pub warnings: Vec<Diagnostic>,
}

/// A folder that did not load: every problem found (at least one error).
#[derive(Debug)]
pub struct LoadFailure {
    pub diagnostics: Vec<Diagnostic>,
}

impl std::fmt::Display for LoadFailure {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        let errors = self.diagnostics.iter().filter(|d| d.is_error()).count();
        writeln!(f, "{errors} problem(s) in the data:")?;
        for d in &self.diagnostics {
            writeln!(f, "{d}")?;
        }
        Ok(())
    }
}

impl std::error::Error for LoadFailure {}

/// Sub-folder depth searched for sessions below a subject folder.
const MAX_DEPTH: usize = 6;

/// After the last trial event, how long a recording may plausibly go on before spike or lick
/// times count as outside the session: 60 s or 10 % of the session, whichever is longer.
fn span_end(trials: &[RawTrial]) -> Option<Span> {
    let last = trials
        .iter()
        .flat_map(|t| [t.cue_s, t.reward_s])
        .flatten()
        .fold(f64::NEG_INFINITY, f64::max);
    last.is_finite().then(|| Span {
        end_s: last + (0.1 * last).max(60.0),
    })
}

/// Load a subject folder (every sub-folder holding `session.toml`) or one session folder.
pub fn load(path: &Path) -> Result<Loaded, LoadFailure> {
    let scanned = scan(path);
    if scanned.diagnostics.iter().any(Diagnostic::is_error) {
        return Err(LoadFailure {
            diagnostics: scanned.diagnostics,
        });
    }
    Ok(Loaded {
        subject: scanned.subject,
        warnings: scanned.diagnostics,
    })
}

/// A subject read for reviewing: the sessions that loaded, and the ones left out because of
/// errors in their own files (each with its first error), so one bad day does not keep the
/// others from being reviewed.
#[derive(Debug)]
pub struct Partial {
    pub loaded: Loaded,
    pub left_out: Vec<(PathBuf, Diagnostic)>,
}

/// As [`load`], but sessions whose own files have errors are left out instead of failing the
/// whole subject. Fails when no session loads, or when an error is not inside a session that
/// was left out (a problem across sessions concerns the ones that loaded too).
pub fn load_partial(path: &Path) -> Result<Partial, LoadFailure> {
    let scanned = scan(path);
    let loaded_dirs: Vec<&Path> = scanned
        .subject
        .sessions
        .iter()
        .map(|s| s.dir.as_path())
        .collect();
    let failed: Vec<&PathBuf> = scanned
        .session_dirs
        .iter()
        .filter(|d| !loaded_dirs.contains(&d.as_path()))
        .collect();
    let in_failed = |d: &Diagnostic| failed.iter().any(|f| d.file.starts_with(f));
    let stray = scanned
        .diagnostics
        .iter()
        .any(|d| d.is_error() && !in_failed(d));
    if stray || scanned.subject.sessions.is_empty() {
        return Err(LoadFailure {
            diagnostics: scanned.diagnostics,
        });
    }
    let left_out = failed
        .iter()
        .filter_map(|f| {
            let first = scanned
                .diagnostics
                .iter()
                .find(|d| d.is_error() && d.file.starts_with(f))?;
            Some(((*f).clone(), first.clone()))
        })
        .collect();
    let warnings = scanned
        .diagnostics
        .into_iter()
        .filter(|d| !d.is_error())
        .collect();
    Ok(Partial {
        loaded: Loaded {
            subject: scanned.subject,
            warnings,
        },
        left_out,
    })
}

/// What a full walk found: the sessions that loaded cleanly (in training order) and every
/// diagnostic, errors and warnings, in folder order.
#[derive(Debug)]
pub struct Scan {
    pub subject: Subject,
    /// Every session folder found, loaded or not (for checks of other files such as marks).
    pub session_dirs: Vec<PathBuf>,
    pub diagnostics: Vec<Diagnostic>,
}

/// Walk `path` like [`load`], never stopping at the first problem.
pub fn scan(path: &Path) -> Scan {
    let mut out = Vec::new();
    let mut subject = Subject {
        root: path.to_path_buf(),
        sessions: Vec::new(),
    };
    match std::fs::metadata(path) {
        Err(e) => {
            out.push(
                Diagnostic::error(path, format!("cannot open: {e}"))
                    .expected("a subject folder or a session folder"),
            );
            return Scan {
                subject,
                session_dirs: Vec::new(),
                diagnostics: out,
            };
        }
        Ok(m) if !m.is_dir() => {
            out.push(Diagnostic::error(path, "is a file, not a folder").expected(
                match path.parent().filter(|p| !p.as_os_str().is_empty()) {
                    Some(dir) => format!("a subject or session folder, such as {}", dir.display()),
                    None => "a subject folder or a session folder".to_string(),
                },
            ));
            return Scan {
                subject,
                session_dirs: Vec::new(),
                diagnostics: out,
            };
        }
        Ok(_) => {}
    }
    let dirs = session_dirs(path, &mut out);
    if dirs.is_empty() && !out.iter().any(Diagnostic::is_error) {
        out.push(
            Diagnostic::error(
                path,
                format!("no session found: no {SESSION_FILE} here or in any sub-folder"),
            )
            .expected(format!(
                "a session folder holding {SESSION_FILE}, or a subject folder of them"
            )),
        );
    }
    for dir in &dirs {
        if let Some(s) = read_session(dir, &mut out) {
            subject.sessions.push(s);
        }
    }
    subject.sessions.sort_by_key(Session::order_key);
    consistency::check_subject(&subject, &mut out);
    Scan {
        subject,
        session_dirs: dirs,
        diagnostics: out,
    }
}

/// The session folders under `root` (or `root` itself), in path order: the one walk every
/// reader of a subject uses (the loader, `check`, `marks`). Folders with trials.csv but no
/// session.toml and unlistable folders are reported in `out`.
pub fn session_dirs(root: &Path, out: &mut Vec<Diagnostic>) -> Vec<PathBuf> {
    if root.join(SESSION_FILE).exists() {
        return vec![root.to_path_buf()];
    }
    if root.join(TRIALS_FILE).exists() {
        out.push(missing_meta(root));
        return Vec::new();
    }
    let mut found = Vec::new();
    let mut seen = HashSet::new();
    walk(root, 0, &mut seen, &mut found, out);
    found.sort();
    found
}

fn walk(
    dir: &Path,
    depth: usize,
    seen: &mut HashSet<PathBuf>,
    found: &mut Vec<PathBuf>,
    out: &mut Vec<Diagnostic>,
) {
    // Canonical paths: a symlink back up the tree is visited once, not forever.
    let Ok(canon) = dir.canonicalize() else {
        return;
    };
    if !seen.insert(canon) || depth > MAX_DEPTH {
        return;
    }
    let entries = match std::fs::read_dir(dir) {
        Ok(e) => e,
        Err(e) => {
            out.push(Diagnostic::error(dir, format!("cannot list folder: {e}")));
            return;
        }
    };
    let mut subdirs: Vec<PathBuf> = entries
        .filter_map(Result::ok)
        .filter(|e| !e.file_name().to_string_lossy().starts_with('.'))
        .map(|e| e.path())
        .filter(|p| p.is_dir())
        .collect();
    subdirs.sort();
    for sub in subdirs {
        if sub.join(SESSION_FILE).exists() {
            // A session reached twice through a symlink is one session.
            if sub.canonicalize().is_ok_and(|c| seen.insert(c)) {
                found.push(sub);
            }
        } else if sub.join(TRIALS_FILE).exists() {
            out.push(missing_meta(&sub));
        } else {
            walk(&sub, depth + 1, seen, found, out);
        }
    }
}

fn missing_meta(dir: &Path) -> Diagnostic {
    Diagnostic::error(
        dir.join(SESSION_FILE),
        "missing: the folder has trials.csv but no session.toml",
    )
    .expected("session.toml with subject and date in every session folder")
}

/// Only regular files: opening a FIFO (or a device) would block or never end.
fn open(path: &Path) -> Result<BufReader<File>, String> {
    let meta = std::fs::metadata(path).map_err(|e| format!("cannot open: {e}"))?;
    if !meta.is_file() {
        return Err("cannot open: not a regular file".to_string());
    }
    let f = File::open(path).map_err(|e| format!("cannot open: {e}"))?;
    Ok(BufReader::with_capacity(1 << 16, f))
}

/// Read one session folder; `None` if it has errors (all reported in `out`).
pub fn read_session(dir: &Path, out: &mut Vec<Diagnostic>) -> Option<Session> {
    let errors_before = out.iter().filter(|d| d.is_error()).count();
    let name = dir
        .file_name()
        .map(|n| n.to_string_lossy().into_owned())
        .unwrap_or_else(|| dir.display().to_string());
    let meta_path = dir.join(SESSION_FILE);
    let meta = read_meta_partial(&meta_path, out);
    let declared: Option<Vec<&str>> = meta
        .as_ref()
        .map(|m| m.meta.cues.iter().map(|c| c.name.as_str()).collect());

    let events_path = dir.join(EVENTS_FILE);
    let raw_events = optional_file(dir, EVENTS_FILE, out, |p, r, out| {
        events::read_events(p, r, declared.as_deref(), out)
    });
    let with_events = raw_events
        .as_deref()
        .map(events::trials_with_events)
        .unwrap_or_default();

    let trials_path = dir.join(TRIALS_FILE);
    let raw_trials = if trials_path.exists() {
        match open(&trials_path) {
            Ok(r) => {
                tables::read_trials_with(&trials_path, r, declared.as_deref(), &with_events, out)
            }
            Err(e) => {
                out.push(Diagnostic::error(&trials_path, e));
                None
            }
        }
    } else {
        out.push(
            Diagnostic::error(&trials_path, "missing")
                .expected("trials.csv with columns trial,cue,cue_s,reward_s,reward_ul"),
        );
        None
    };
    let span = raw_trials.as_ref().and_then(|t| span_end(&t.value));

    // The large tables try the fast path first; a file it does not take is read again by the
    // standard reader, which reports whatever made it unusual.
    let spikes = optional_file(
        dir,
        SPIKES_FILE,
        out,
        |p, r, out| match super::fast::spikes(p, r, span, out) {
            Some(value) => Some(tables::Parsed { value, errors: 0 }),
            None => reopened(p, out, |r, out| tables::read_spikes(p, r, span, out)),
        },
    );
    let licks = optional_file(dir, LICKS_FILE, out, |p, r, out| {
        match super::fast::licks(r, span) {
            Some(value) => Some(tables::Parsed { value, errors: 0 }),
            None => reopened(p, out, |r, out| tables::read_licks(p, r, span, out)),
        }
    });
    let photometry =
        optional_file(
            dir,
            PHOTOMETRY_FILE,
            out,
            |p, r, out| match super::fast::photometry(r) {
                Some(value) => Some(tables::Parsed { value, errors: 0 }),
                None => reopened(p, out, |r, out| tables::read_photometry(p, r, out)),
            },
        );

    // Warnings built on a file with errors would mostly echo those errors.
    if let (Some(m), Some(raw)) = (&meta, &raw_trials) {
        if m.ok && raw.errors == 0 {
            // A cue used only in events.csv is used.
            let event_cues: Vec<&str> = raw_events
                .iter()
                .flatten()
                .filter_map(|e| e.name.as_deref())
                .collect();
            let paths = (meta_path.as_path(), trials_path.as_path());
            consistency::check_trials(&m.meta, paths, &raw.value, &event_cues, out);
        }
    }
    if let (Some(raw), Some(ev)) = (&raw_trials, &raw_events) {
        events::check_events(&trials_path, &events_path, &raw.value, ev, out);
    }
    let errors_after = out.iter().filter(|d| d.is_error()).count();
    let (Some(meta), Some(raw)) = (meta, raw_trials) else {
        return None;
    };
    if errors_after > errors_before || !meta.ok {
        return None;
    }
    let mut trials = match_cues(&meta.meta, &raw.value);
    if let Some(ev) = &raw_events {
        events::attach(&meta.meta, &mut trials, ev);
    }
    Some(Session {
        dir: dir.to_path_buf(),
        name,
        meta: meta.meta,
        trials,
        spikes,
        licks,
        photometry,
    })
}

type Reader = BufReader<File>;

/// `read` on a fresh reader of `path` (after the fast path gave up on it).
fn reopened<T>(
    path: &Path,
    out: &mut Vec<Diagnostic>,
    read: impl FnOnce(Reader, &mut Vec<Diagnostic>) -> Option<tables::Parsed<T>>,
) -> Option<tables::Parsed<T>> {
    match open(path) {
        Ok(r) => read(r, out),
        Err(e) => {
            out.push(Diagnostic::error(path, e));
            None
        }
    }
}

fn optional_file<T>(
    dir: &Path,
    file: &str,
    out: &mut Vec<Diagnostic>,
    read: impl FnOnce(&Path, Reader, &mut Vec<Diagnostic>) -> Option<tables::Parsed<T>>,
) -> Option<T> {
    let path = dir.join(file);
    // `symlink_metadata`: a dangling or looping link is reported, not taken for "no file".
    if std::fs::symlink_metadata(&path).is_err() {
        return None;
    }
    if path.is_dir() {
        out.push(Diagnostic::error(&path, "is a folder").expected("a CSV file"));
        return None;
    }
    let r = match open(&path) {
        Ok(r) => r,
        Err(e) => {
            out.push(Diagnostic::error(&path, e));
            return None;
        }
    };
    read(&path, r, out).map(|r| r.value)
}

/// Turn cue names into indices into `meta.cues` (the reader has already reported, and left
/// out, rows naming an undeclared cue).
pub(crate) fn match_cues(meta: &SessionMeta, raw: &[RawTrial]) -> Vec<Trial> {
    raw.iter()
        .filter_map(|r| {
            let cue = match &r.cue {
                None => None,
                Some(name) => Some(meta.cues.iter().position(|c| &c.name == name)?),
            };
            Some(Trial {
                number: r.number,
                cue,
                cue_s: r.cue_s,
                reward_s: r.reward_s,
                // A size without a delivery time is warned about and counts as no reward.
                reward_ul: match r.reward_s {
                    Some(_) => r.reward_ul.unwrap_or(0.0),
                    None => 0.0,
                },
                cue_off_s: r.cue_off_s,
                events: Vec::new(),
            })
        })
        .collect()
}

#[cfg(test)]
mod tests {
    use super::*;
    use std::fs;

    pub(crate) fn write_session(dir: &Path, files: &[(&str, &str)]) {
        fs::create_dir_all(dir).unwrap();
        for (name, text) in files {
            fs::write(dir.join(name), text).unwrap();
        }
    }

    const META: &str = "subject = \"m-041\"\ndate = \"2026-03-02\"\nstart_time = \"09:30:00\"\n\
                        [[cue]]\nname = \"tone-hi\"\nreward_delay_s = 1.5\n[[cue]]\nname = \"tone-lo\"\n";

    #[test]
    fn loads_a_tiny_subject_in_training_order() {
        let tmp = tempfile::tempdir().unwrap();
        let day2 = tmp.path().join("b-day2");
        let day1 = tmp.path().join("z-day1");
        write_session(
            &day2,
            &[
                ("session.toml", &META.replace("03-02", "03-03")),
                // BOM, CRLF, columns reordered, an extra column.
                (
                    "trials.csv",
                    "\u{feff}cue,trial,extra,cue_s,reward_s,reward_ul\r\ntone-hi,1,x,10,11.5,4\r\n,2,y,,20,4\r\ntone-lo,3,z,30,,\r\n",
                ),
                ("spikes.csv", "time_s,unit\n10.2,u10\n10.1,u2\n9.0,u10\n12,u2\n"),
                ("licks.csv", "time_s\n11.6\n11.7\n"),
                ("photometry.csv", "time_s,signal,control\n0,1.0,0.5\n0.05,1.1,0.5\n"),
            ],
        );
        write_session(
            &day1,
            &[
                ("session.toml", META),
                (
                    "trials.csv",
                    "trial,cue,cue_s,reward_s,reward_ul\n5,tone-hi,1,2.5,3\n6,tone-lo,9,,0\n",
                ),
            ],
        );
        let loaded = load(tmp.path()).unwrap_or_else(|f| panic!("{f}"));
        let s = &loaded.subject.sessions;
        assert_eq!(s.len(), 2);
        assert_eq!(s[0].name, "z-day1");
        assert_eq!(s[1].name, "b-day2");
        let t = &s[1].trials;
        assert_eq!(t.len(), 3);
        assert_eq!(t[0].cue, Some(0));
        assert_eq!(t[0].reward_s, Some(11.5));
        assert_eq!(t[0].reward_ul, 4.0);
        assert_eq!(t[1].cue, None);
        assert_eq!(t[2].cue, Some(1));
        assert_eq!(t[2].reward_ul, 0.0);
        let spikes = s[1].spikes.as_ref().unwrap();
        assert_eq!(spikes.units, vec!["u2", "u10"]);
        assert_eq!(spikes.times, vec![vec![10.1, 12.0], vec![9.0, 10.2]]);
        assert_eq!(s[1].licks.as_deref(), Some(&[11.6, 11.7][..]));
        let p = s[1].photometry.as_ref().unwrap();
        assert_eq!(p.control.as_deref(), Some(&[0.5, 0.5][..]));
        // u10's times were out of order: a warning, not an error.
        assert!(loaded.warnings.iter().any(|w| w.message.contains("sorted")));
        assert!(s[0].spikes.is_none() && s[0].licks.is_none());
    }

    #[test]
    fn a_single_session_folder_loads_alone() {
        let tmp = tempfile::tempdir().unwrap();
        write_session(
            tmp.path(),
            &[
                ("session.toml", META),
                (
                    "trials.csv",
                    "trial,cue,cue_s,reward_s,reward_ul\n1,tone-hi,1,2.5,3\n2,tone-lo,9,,\n",
                ),
            ],
        );
        let loaded = load(tmp.path()).unwrap_or_else(|f| panic!("{f}"));
        assert_eq!(loaded.subject.sessions.len(), 1);
        assert!(loaded.warnings.is_empty(), "{:?}", loaded.warnings);
    }

    #[test]
    fn a_bad_file_fails_with_file_and_line() {
        let tmp = tempfile::tempdir().unwrap();
        write_session(
            tmp.path(),
            &[
                ("session.toml", META),
                (
                    "trials.csv",
                    "trial,cue,cue_s,reward_s,reward_ul\n1,tone-hi,1,2.5,3\n2,tone-x,abc,,\n",
                ),
            ],
        );
        let f = load(tmp.path()).unwrap_err();
        let lines: Vec<String> = f.diagnostics.iter().map(|d| d.to_string()).collect();
        assert!(
            lines.iter().any(|l| l.ends_with(
                "trials.csv:3: cue_s: not a number: `abc` (expected a time in seconds ≥ 0)"
            )),
            "{lines:?}"
        );
    }

    #[test]
    fn nested_folders_are_searched_and_symlink_loops_end() {
        let tmp = tempfile::tempdir().unwrap();
        let trials = "trial,cue,cue_s,reward_s,reward_ul\n1,tone-hi,1,2.5,3\n2,tone-lo,9,,\n";
        write_session(
            &tmp.path().join("week1/d1"),
            &[("session.toml", META), ("trials.csv", trials)],
        );
        write_session(
            &tmp.path().join(".trash/d0"),
            &[("session.toml", META), ("trials.csv", "junk")],
        );
        std::os::unix::fs::symlink(tmp.path(), tmp.path().join("week1/loop")).unwrap();
        std::os::unix::fs::symlink(
            tmp.path().join("week1/d1"),
            tmp.path().join("week1/d1-again"),
        )
        .unwrap();
        let loaded = load(tmp.path()).unwrap_or_else(|f| panic!("{f}"));
        assert_eq!(loaded.subject.sessions.len(), 1);
        assert_eq!(loaded.subject.sessions[0].name, "d1");
    }
}

//! `trialdesk marks`: the standing marks (or the whole journal) of a session or a subject, as a
//! table for people or a tidy CSV for pandas/R.
//!
//! Only reads: it finds session folders itself (any folder with `session.toml`) and reads each
//! `marks.csv`, so a subject whose recordings do not load can still show its marks.

use super::{CliError, CmdResult};
use crate::data::meta::{read_meta, SESSION_FILE};
use crate::marks::{read_journal, Journal, MarkKind, MarkRow};
use crate::text::{for_csv, for_line};
use std::io::Write;
use std::path::{Path, PathBuf};

#[derive(clap::Args, Debug)]
pub struct Args {
    /// A subject folder or one session folder
    pub path: PathBuf,
    /// Also write the rows as tidy CSV (session,trial,mark,reason,note,reviewer,at) to FILE.
    /// Text a spreadsheet would run as a formula (starting with = + - @) gets a leading
    /// apostrophe, text kept; plain numbers such as -3 are left as they are
    #[arg(long, value_name = "FILE")]
    pub csv: Option<PathBuf>,
    /// What to print: a table for reading, or CSV (same columns as --csv)
    #[arg(long, value_enum, default_value_t = Format::Table)]
    pub format: Format,
    /// Every journal row in file order (including clears and replaced marks), not only the
    /// marks standing now
    #[arg(long)]
    pub all: bool,
}

#[derive(clap::ValueEnum, Clone, Copy, Debug, PartialEq, Eq)]
pub enum Format {
    Table,
    Csv,
}

/// Longest note shown in the table; `--csv` carries the whole text.
const NOTE_WIDTH: usize = 48;

struct SessionMarks {
    name: String,
    journal: Journal,
}

/// One output line: a session name and a journal row.
struct Line<'a> {
    session: &'a str,
    row: &'a MarkRow,
}

pub fn run(args: Args) -> CmdResult {
    let dirs = session_dirs(&args.path)?;
    let mut sessions = Vec::new();
    let mut errors = Vec::new();
    for (dir, name) in dirs {
        match read_journal(&dir) {
            Ok(journal) => sessions.push(SessionMarks { name, journal }),
            Err(e) => errors.push(e.to_string()),
        }
    }
    if !errors.is_empty() {
        return Err(CliError::failed(format!(
            "cannot read the marks journal:\n  {}\n(the journal is only appended to by trialdesk; \
             fix or remove the line named, then run again)",
            errors.join("\n  ")
        )));
    }
    for s in &sessions {
        warn_torn(&s.journal);
    }
    let rows_per_session: Vec<Vec<MarkRow>> = sessions
        .iter()
        .map(|s| {
            if args.all {
                s.journal.rows.clone()
            } else {
                standing_rows(&s.journal)
            }
        })
        .collect();
    let lines: Vec<Line> = sessions
        .iter()
        .zip(&rows_per_session)
        .flat_map(|(s, rows)| {
            rows.iter().map(|row| Line {
                session: &s.name,
                row,
            })
        })
        .collect();
    if let Some(file) = &args.csv {
        crate::safe_write::replace_with(file, |w| write_csv(w, &lines))
            .map_err(|e| CliError::failed(e.to_string()))?;
        eprintln!("wrote {} row(s) to {}", lines.len(), file.display());
    }
    let mut out = std::io::BufWriter::new(super::out::stdout());
    let written = match args.format {
        Format::Csv => write_csv(&mut out, &lines),
        Format::Table => write_table(&mut out, &lines, sessions.len(), args.all),
    }
    .and_then(|_| out.flush());
    match written {
        // A closed pipe (`| head`) is the reader's choice, not a failure.
        Err(e) if e.kind() == std::io::ErrorKind::BrokenPipe => Ok(0),
        Err(e) => Err(e.into()),
        Ok(()) => Ok(0),
    }
}

/// The marks standing now, by trial (each trial's mark, then its notes in file order), then
/// the session notes.
fn standing_rows(journal: &Journal) -> Vec<MarkRow> {
    let state = journal.state();
    let mut trial_rows: Vec<(i64, usize, MarkRow)> = Vec::new();
    for (&trial, m) in &state.marks {
        trial_rows.push((
            trial,
            0,
            MarkRow {
                trial: Some(trial),
                mark: m.kind,
                reason: m.reason.clone(),
                note: m.note.clone(),
                reviewer: m.reviewer.clone(),
                at: m.at.clone(),
            },
        ));
    }
    let mut session_notes = Vec::new();
    for (i, note) in state.notes.iter().enumerate() {
        match note.trial {
            Some(t) => trial_rows.push((t, i + 1, note.clone())),
            None => session_notes.push(note.clone()),
        }
    }
    trial_rows.sort_by_key(|(t, order, _)| (*t, *order));
    trial_rows
        .into_iter()
        .map(|(_, _, r)| r)
        .chain(session_notes)
        .collect()
}

fn warn_torn(journal: &Journal) {
    let path = journal.path.display();
    if let Some((line, text)) = &journal.torn_tail {
        eprintln!(
            "warning: {path}:{line}: incomplete last line (an interrupted write), ignored: {}",
            for_line(text)
        );
    }
    // Sealed torn lines are not repeated on every run: the sealing note already shows among
    // the session notes.
}

fn write_csv(out: &mut dyn Write, lines: &[Line]) -> std::io::Result<()> {
    let mut w = csv::Writer::from_writer(out);
    w.write_record([
        "session", "trial", "mark", "reason", "note", "reviewer", "at",
    ])?;
    for l in lines {
        let trial = l.row.trial.map(|t| t.to_string()).unwrap_or_default();
        w.write_record([
            for_csv(l.session).as_ref(),
            &trial,
            l.row.mark.as_str(),
            &for_csv(&l.row.reason),
            &for_csv(&l.row.note),
            &for_csv(&l.row.reviewer),
            &for_csv(&l.row.at),
        ])?;
    }
    w.flush()
}

fn write_table(
    out: &mut dyn Write,
    lines: &[Line],
    session_count: usize,
    all: bool,
) -> std::io::Result<()> {
    let (table, notes): (Vec<&Line>, Vec<&Line>) = if all {
        (lines.iter().collect(), Vec::new())
    } else {
        lines.iter().partition(|l| l.row.trial.is_some())
    };
    let header = [
        "session", "trial", "mark", "reason", "note", "reviewer", "at",
    ];
    let cells: Vec<[String; 7]> = table
        .iter()
        .map(|l| {
            [
                for_line(l.session).into_owned(),
                l.row.trial.map(|t| t.to_string()).unwrap_or_default(),
                l.row.mark.as_str().to_string(),
                for_line(&l.row.reason).into_owned(),
                clip(&for_line(&l.row.note), NOTE_WIDTH),
                for_line(&l.row.reviewer).into_owned(),
                for_line(&l.row.at).into_owned(),
            ]
        })
        .collect();
    if !cells.is_empty() {
        let mut width = header.map(|h| h.chars().count());
        for row in &cells {
            for (w, c) in width.iter_mut().zip(row) {
                *w = (*w).max(c.chars().count());
            }
        }
        write_row(out, &header.map(String::from), &width)?;
        for row in &cells {
            write_row(out, row, &width)?;
        }
    }
    if !notes.is_empty() {
        if !cells.is_empty() {
            writeln!(out)?;
        }
        writeln!(out, "session notes:")?;
        for l in notes {
            writeln!(
                out,
                "  {}  {}  {}  {}",
                for_line(l.session),
                for_line(&l.row.at),
                for_line(&l.row.reviewer),
                for_line(&l.row.note)
            )?;
        }
    }
    let count = |k: MarkKind| lines.iter().filter(|l| l.row.mark == k).count();
    let what = if all { "journal rows" } else { "standing" };
    writeln!(
        out,
        "{} session(s), {what}: {} exclude, {} suspect, {} clear, {} note(s)",
        session_count,
        count(MarkKind::Exclude),
        count(MarkKind::Suspect),
        count(MarkKind::Clear),
        count(MarkKind::Note),
    )
}

fn write_row(out: &mut dyn Write, row: &[String; 7], width: &[usize; 7]) -> std::io::Result<()> {
    let mut line = String::new();
    for (i, (cell, w)) in row.iter().zip(width).enumerate() {
        let pad = w - cell.chars().count();
        if i == 1 {
            // Trial numbers right-aligned.
            line.push_str(&" ".repeat(pad));
            line.push_str(cell);
        } else {
            line.push_str(cell);
            if i + 1 < row.len() {
                line.push_str(&" ".repeat(pad));
            }
        }
        if i + 1 < row.len() {
            line.push_str("  ");
        }
    }
    writeln!(out, "{}", line.trim_end())
}

fn clip(s: &str, max: usize) -> String {
    if s.chars().count() <= max {
        s.to_string()
    } else {
        let mut t: String = s.chars().take(max - 3).collect();
        t.push_str("...");
        t
    }
}

/// Session folders under `root` (or `root` itself) with their names, in training order
/// (date, start time, folder name); a session whose `session.toml` does not read sorts last.
fn session_dirs(root: &Path) -> Result<Vec<(PathBuf, String)>, CliError> {
    let meta = std::fs::metadata(root)
        .map_err(|e| CliError::failed(format!("{}: cannot open: {e}", root.display())))?;
    if !meta.is_dir() {
        return Err(CliError::failed(format!(
            "{}: not a folder; expected a subject folder or a session folder",
            root.display()
        )));
    }
    // The loader's walk; its complaints about session data are `check`'s business, not ours.
    let found = crate::data::load::session_dirs(root, &mut Vec::new());
    if found.is_empty() {
        return Err(CliError::failed(format!(
            "{}: no session found (no {SESSION_FILE} here or in any sub-folder)",
            root.display()
        )));
    }
    let mut keyed: Vec<(SortKey, PathBuf, String)> = found
        .into_iter()
        .map(|dir| {
            let name = dir
                .file_name()
                .map(|n| n.to_string_lossy().into_owned())
                .unwrap_or_else(|| dir.display().to_string());
            let mut ignored = Vec::new();
            let key = match read_meta(&dir.join(SESSION_FILE), &mut ignored) {
                Some(m) => (
                    false,
                    m.date,
                    m.start_time.is_some(),
                    m.start_time.unwrap_or_default(),
                    name.clone(),
                ),
                None => (true, String::new(), false, String::new(), name.clone()),
            };
            (key, dir, name)
        })
        .collect();
    keyed.sort();
    Ok(keyed.into_iter().map(|(_, d, n)| (d, n)).collect())
}

/// (session.toml unreadable, date, has start time, start time, folder name).
type SortKey = (bool, String, bool, String, String);

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn printable_neutralises_escapes_and_bidi_overrides() {
        assert_eq!(for_line("a\x1b[31mb\n"), "a\\u{1b}[31mb\\n");
        assert_eq!(for_line("x\u{202e}y\u{9b}"), "x\\u{202e}y\\u{9b}");
        assert_eq!(for_line("ΔF/F ok"), "ΔF/F ok");
    }

    #[test]
    fn clip_keeps_short_text() {
        assert_eq!(clip("abc", 5), "abc");
        assert_eq!(clip("abcdefgh", 6), "abc...");
    }
}

//! Following a session that is still being recorded: a [`Tail`] per table file reads only the
//! bytes the rig appended since the last poll.
//!
//! New complete lines are put behind the file's own header and fed to the same readers the
//! loader uses ([`tables`]), so a followed row is checked exactly like a loaded one; line
//! numbers in diagnostics are shifted back to the file's. A partial last line is left for the
//! next poll. A file that shrank or was replaced cannot be followed: the caller reloads.

use super::diag::Diagnostic;
use super::events::{self, RawEvent, EVENTS_FILE};
use super::load::match_cues;
use super::tables::{self, LICKS_FILE, SPIKES_FILE, TRIALS_FILE};
use super::{SessionMeta, Trial};
use std::collections::HashSet;
use std::fs::File;
use std::io::{BufReader, Read, Seek, SeekFrom};
use std::path::{Path, PathBuf};

/// Which table a [`Tail`] follows.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum TableKind {
    Trials,
    Spikes,
    Licks,
    Events,
}

impl TableKind {
    pub fn file_name(self) -> &'static str {
        match self {
            TableKind::Trials => TRIALS_FILE,
            TableKind::Spikes => SPIKES_FILE,
            TableKind::Licks => LICKS_FILE,
            TableKind::Events => EVENTS_FILE,
        }
    }
}

/// Rows that arrived since the last poll (each good row exactly once).
#[derive(Debug, Default, Clone, PartialEq)]
pub struct NewRows {
    pub trials: Vec<Trial>,
    /// (unit id, spike time).
    pub spikes: Vec<(String, f64)>,
    pub licks: Vec<f64>,
    /// events.csv rows; those of trials not yet in trials.csv wait ([`NewRows::merge_into`]).
    pub events: Vec<RawEvent>,
    /// Bad rows (file:line) and warnings; bad rows are left out.
    pub diagnostics: Vec<Diagnostic>,
}

impl NewRows {
    /// Add the rows to the session they were read from: trials at the end, spikes and licks in
    /// time order (a unit not seen before is added after the others, so unit indices held
    /// elsewhere stay valid), events to their trials. Returns the events whose trial has not
    /// arrived yet (the rig may write a trial's events before its trials.csv row): hand them
    /// back with the next rows.
    pub fn merge_into(self, session: &mut crate::data::Session) -> Vec<RawEvent> {
        session.trials.extend(self.trials);
        let known: HashSet<i64> = session.trials.iter().map(|t| t.number).collect();
        let (ready, waiting): (Vec<RawEvent>, Vec<RawEvent>) = self
            .events
            .into_iter()
            .partition(|e| known.contains(&e.trial));
        if !ready.is_empty() {
            events::attach(&session.meta, &mut session.trials, &ready);
        }
        if !self.spikes.is_empty() {
            let spikes = session.spikes.get_or_insert_with(Default::default);
            for (unit, t) in self.spikes {
                let u = match spikes.units.iter().position(|n| *n == unit) {
                    Some(u) => u,
                    None => {
                        spikes.units.push(unit);
                        spikes.times.push(Vec::new());
                        spikes.units.len() - 1
                    }
                };
                insert_sorted(&mut spikes.times[u], t);
            }
        }
        if !self.licks.is_empty() {
            let licks = session.licks.get_or_insert_with(Vec::new);
            for t in self.licks {
                insert_sorted(licks, t);
            }
        }
        waiting
    }

    pub fn is_empty(&self) -> bool {
        self.trials.is_empty()
            && self.spikes.is_empty()
            && self.licks.is_empty()
            && self.events.is_empty()
            && self.diagnostics.is_empty()
    }
}

/// What one poll found.
#[derive(Debug, Clone, PartialEq)]
pub enum Polled {
    /// Nothing new, or only a line still being written.
    Unchanged,
    Rows(NewRows),
    /// Shrank, was replaced or vanished: reload the session fully. The text says which.
    Reload(String),
}

/// One table file being followed.
#[derive(Debug)]
pub struct Tail {
    path: PathBuf,
    kind: TableKind,
    /// The header line as in the file (with its newline); it maps column names to positions.
    header: Vec<u8>,
    /// Byte offset just past the last complete line read.
    offset: u64,
    /// Complete lines read so far, header included.
    lines: u64,
    file_id: Option<u64>,
    last_trial: Option<i64>,
    meta: SessionMeta,
    /// Trials with events.csv rows (trials.csv may then give them neither cue nor reward).
    event_trials: HashSet<i64>,
}

impl Tail {
    /// Start following `dir`'s table at its current end (rows already there were loaded).
    /// `Ok(None)` when the file does not exist (yet); an error when its header cannot be read.
    pub fn at_end(
        dir: &Path,
        kind: TableKind,
        meta: &SessionMeta,
    ) -> Result<Option<Tail>, Diagnostic> {
        let path = dir.join(kind.file_name());
        let Ok(md) = std::fs::metadata(&path) else {
            return Ok(None);
        };
        let cannot = |e: std::io::Error| Diagnostic::error(&path, format!("cannot read: {e}"));
        let mut bytes = Vec::new();
        File::open(&path)
            .and_then(|f| f.take(md.len()).read_to_end(&mut bytes))
            .map_err(cannot)?;
        let Some(header_end) = bytes.iter().position(|&b| b == b'\n') else {
            return Err(Diagnostic::error(&path, "no complete header line")
                .at_line(1)
                .expected("a header line ending in a newline"));
        };
        let complete = bytes.iter().rposition(|&b| b == b'\n').map_or(0, |i| i + 1);
        let mut tail = Tail {
            path,
            kind,
            header: bytes[..=header_end].to_vec(),
            offset: complete as u64,
            lines: bytes[..complete].iter().filter(|&&b| b == b'\n').count() as u64,
            file_id: file_id(&md),
            last_trial: None,
            meta: meta.clone(),
            event_trials: HashSet::new(),
        };
        if kind == TableKind::Trials {
            // Later trial numbers must exceed every loaded one; the file is small.
            let mut ignored = Vec::new();
            let raw = tables::read_trials(&tail.path, &bytes[..complete], None, &mut ignored);
            tail.last_trial = raw.and_then(|p| p.value.last().map(|t| t.number));
        }
        Ok(Some(tail))
    }

    pub fn path(&self) -> &Path {
        &self.path
    }

    pub fn kind(&self) -> TableKind {
        self.kind
    }

    /// Bytes read so far (past the last complete line).
    pub fn offset(&self) -> u64 {
        self.offset
    }

    /// Trials that have events.csv rows, so that their trials.csv rows may carry neither cue nor
    /// reward (poll events.csv before trials.csv and pass its trial numbers here).
    pub fn note_event_trials(&mut self, trials: impl IntoIterator<Item = i64>) {
        self.event_trials.extend(trials);
    }

    /// Look for appended rows. Costs one `stat` when nothing changed.
    pub fn poll(&mut self) -> Polled {
        let md = match std::fs::metadata(&self.path) {
            Ok(md) => md,
            Err(e) => return Polled::Reload(format!("{}: {e}", self.path.display())),
        };
        if file_id(&md) != self.file_id {
            return Polled::Reload(format!("{}: file was replaced", self.path.display()));
        }
        if md.len() < self.offset {
            return Polled::Reload(format!("{}: file shrank", self.path.display()));
        }
        if md.len() == self.offset {
            return Polled::Unchanged;
        }
        let mut fresh = Vec::new();
        let read = File::open(&self.path).and_then(|f| {
            let mut r = BufReader::new(f);
            r.seek(SeekFrom::Start(self.offset))?;
            r.take(md.len() - self.offset).read_to_end(&mut fresh)
        });
        if let Err(e) = read {
            return Polled::Reload(format!("{}: cannot read: {e}", self.path.display()));
        }
        let Some(last_newline) = fresh.iter().rposition(|&b| b == b'\n') else {
            return Polled::Unchanged;
        };
        let complete = &fresh[..=last_newline];
        let rows = self.parse(complete);
        self.offset += complete.len() as u64;
        self.lines += complete.iter().filter(|&&b| b == b'\n').count() as u64;
        Polled::Rows(rows)
    }

    /// Parse complete new lines through the loader's readers, behind the remembered header.
    fn parse(&mut self, complete: &[u8]) -> NewRows {
        let mut rows = NewRows::default();
        if complete.iter().all(|b| b.is_ascii_whitespace()) {
            return rows;
        }
        let mut chunk = Vec::with_capacity(self.header.len() + complete.len());
        chunk.extend_from_slice(&self.header);
        chunk.extend_from_slice(complete);
        let mut diags = Vec::new();
        match self.kind {
            TableKind::Trials => {
                let declared: Vec<&str> = self.meta.cues.iter().map(|c| c.name.as_str()).collect();
                if let Some(p) = tables::read_trials_with(
                    &self.path,
                    &chunk[..],
                    Some(&declared),
                    &self.event_trials,
                    &mut diags,
                ) {
                    let mut raw = p.value;
                    raw.retain(|t| match self.last_trial {
                        Some(prev) if t.number <= prev => {
                            let line = self.file_line(t.line);
                            let msg = format!("trial {} comes after trial {prev}", t.number);
                            diags.push(
                                Diagnostic::error(&self.path, msg)
                                    .at_line(line)
                                    .column("trial")
                                    .expected("increasing trial numbers"),
                            );
                            false
                        }
                        _ => true,
                    });
                    if let Some(last) = raw.last() {
                        self.last_trial = Some(last.number);
                    }
                    rows.trials = match_cues(&self.meta, &raw);
                }
            }
            TableKind::Spikes => {
                if let Some(p) = tables::read_spikes(&self.path, &chunk[..], None, &mut diags) {
                    let s = p.value;
                    for (unit, times) in s.units.into_iter().zip(s.times) {
                        rows.spikes
                            .extend(times.into_iter().map(|t| (unit.clone(), t)));
                    }
                }
            }
            TableKind::Licks => {
                if let Some(p) = tables::read_licks(&self.path, &chunk[..], None, &mut diags) {
                    rows.licks = p.value;
                }
            }
            TableKind::Events => {
                let declared: Vec<&str> = self.meta.cues.iter().map(|c| c.name.as_str()).collect();
                if let Some(p) =
                    events::read_events(&self.path, &chunk[..], Some(&declared), &mut diags)
                {
                    rows.events = p.value;
                }
            }
        }
        // Line 1 of the chunk is the header, already checked when following began.
        rows.diagnostics = diags
            .into_iter()
            .filter(|d| d.line != Some(1))
            .map(|mut d| {
                d.line = d.line.map(|l| self.file_line(l));
                d
            })
            .collect();
        rows
    }

    /// A chunk line (header = 1) as a line of the whole file.
    fn file_line(&self, chunk_line: u64) -> u64 {
        self.lines + chunk_line - 1
    }
}

#[cfg(unix)]
fn file_id(md: &std::fs::Metadata) -> Option<u64> {
    use std::os::unix::fs::MetadataExt;
    Some(md.ino())
}

#[cfg(not(unix))]
fn file_id(_md: &std::fs::Metadata) -> Option<u64> {
    None
}

/// Rows arrive nearly in order: a push, or an insert near the end.
fn insert_sorted(v: &mut Vec<f64>, t: f64) {
    if v.last().is_none_or(|&l| l <= t) {
        v.push(t);
    } else {
        let at = v.partition_point(|&x| x <= t);
        v.insert(at, t);
    }
}

//! The optional `events.csv`: extra cue and reward events of trials (compound cues, serial
//! cues, rewards in several drops), `trial,kind,name,onset_s,offset_s,size`.
//!
//! [`read_events`] does the per-row checks (kind, declared cue, onset, offset after onset,
//! reward size > 0, the same event twice); [`check_events`] the checks against trials.csv
//! (unknown trial, an event far from its trial, a reward before the trial's first cue);
//! [`attach`] hands each trial its events in time order.

use super::csvio::{required, shorten, Table};
use super::diag::Diagnostic;
use super::tables::{Parsed, RawTrial};
use super::{EventKind, SessionMeta, Trial, TrialEvent};
use std::collections::{HashMap, HashSet};
use std::io::BufRead;
use std::path::Path;

pub const EVENTS_FILE: &str = "events.csv";

const EVENT_COLS: [&str; 6] = ["trial", "kind", "name", "onset_s", "offset_s", "size"];

/// An event farther than this from its trial's own cue or reward (trials.csv) is an error:
/// trials are seconds long, so it is a typo or an event filed under the wrong trial.
pub const FAR_S: f64 = 60.0;

/// One row of events.csv before cue names are matched to `session.toml`.
#[derive(Debug, Clone, PartialEq)]
pub struct RawEvent {
    pub line: u64,
    pub trial: i64,
    pub kind: EventKind,
    /// Cue name (cue rows only).
    pub name: Option<String>,
    pub onset_s: f64,
    pub offset_s: Option<f64>,
    /// Reward size (reward rows), 0 for cues.
    pub size: f64,
}

/// (trial, is a cue, name, onset, offset, size), numbers as bits: two rows with the same key
/// are the same event.
type EventKey = (i64, bool, String, u64, Option<u64>, u64);

/// Read events.csv with every per-row check; only rows without any problem are kept.
pub fn read_events<R: BufRead>(
    path: &Path,
    reader: R,
    declared: Option<&[&str]>,
    out: &mut Vec<Diagnostic>,
) -> Option<Parsed<Vec<RawEvent>>> {
    let specs = EVENT_COLS.map(required);
    let mut t = Table::new(path, reader, &specs, out)?;
    let mut events = Vec::new();
    let mut seen: HashMap<EventKey, u64> = HashMap::new();
    while t.next_row() {
        let line = t.line();
        let errors_before = t.diags.errors;
        let trial = match t.text(0).parse::<i64>() {
            Ok(n) => Some(n),
            Err(_) => {
                let msg = if t.text(0).is_empty() {
                    "empty value".to_string()
                } else {
                    format!("not an integer: `{}`", shorten(t.text(0)))
                };
                t.diags
                    .error_at(line, "trial", msg, "a trial number from trials.csv");
                None
            }
        };
        let kind = match t.text(1) {
            "cue" => Some(EventKind::Cue),
            "reward" => Some(EventKind::Reward),
            other => {
                let msg = format!("unknown kind `{}`", shorten(other));
                t.diags.error_at(line, "kind", msg, "cue or reward");
                None
            }
        };
        let name = Some(t.text(2).to_string()).filter(|s| !s.is_empty());
        let onset = t.non_negative(3, "onset_s", "the event time in seconds");
        let onset = t.require(onset, "onset_s", "the event time in seconds");
        let offset = t
            .non_negative(4, "offset_s", "the cue offset in seconds")
            .ok();
        let size = t.finite(5, "size").ok();
        let (Some(trial), Some(kind), Some(onset), Some(offset), Some(size)) =
            (trial, kind, onset, offset, size)
        else {
            continue;
        };
        match kind {
            EventKind::Cue => {
                match (&name, declared) {
                    (None, _) => t.diags.error_at(
                        line,
                        "name",
                        "cue event without a cue name".into(),
                        "a cue declared with [[cue]] in session.toml",
                    ),
                    (Some(n), Some(declared)) if !declared.contains(&n.as_str()) => {
                        let msg = format!("cue `{}` is not declared", shorten(n));
                        let expected = if declared.is_empty() {
                            "a cue declared with [[cue]] in session.toml (none are)".to_string()
                        } else {
                            format!("one of the cues in session.toml: {}", declared.join(", "))
                        };
                        t.diags.error_at(line, "name", msg, &expected);
                    }
                    _ => {}
                }
                if let Some(off) = offset.filter(|&off| off < onset) {
                    let msg = format!("cue offset at {off} s comes before its onset at {onset} s");
                    t.diags
                        .error_at(line, "offset_s", msg, "offset_s ≥ onset_s, or empty");
                }
                if size.is_some() {
                    t.diags.error_at(
                        line,
                        "size",
                        "a cue event has no size".into(),
                        "an empty size on cue rows",
                    );
                }
            }
            EventKind::Reward => {
                if let Some(n) = &name {
                    let msg = format!("a reward event has no name (found `{}`)", shorten(n));
                    t.diags
                        .error_at(line, "name", msg, "an empty name on reward rows");
                }
                if offset.is_some() {
                    t.diags.error_at(
                        line,
                        "offset_s",
                        "a reward event has no offset".into(),
                        "an empty offset_s on reward rows",
                    );
                }
                match size {
                    None => t.diags.error_at(
                        line,
                        "size",
                        "reward event without a size".into(),
                        "the reward size (> 0, same unit as reward_ul)",
                    ),
                    Some(s) if s <= 0.0 => t.diags.error_at(
                        line,
                        "size",
                        format!("reward size {s} is not > 0"),
                        "the reward size (> 0, same unit as reward_ul)",
                    ),
                    _ => {}
                }
            }
        }
        if t.diags.errors != errors_before {
            continue;
        }
        let size = size.unwrap_or(0.0);
        let key = (
            trial,
            kind == EventKind::Cue,
            name.clone().unwrap_or_default(),
            onset.to_bits(),
            offset.map(f64::to_bits),
            size.to_bits(),
        );
        if let Some(first) = seen.get(&key) {
            let msg = format!("the same event as line {first} (trial {trial}, at {onset} s)");
            t.diags.error_at(
                line,
                "onset_s",
                msg,
                "each event once (two drops at one time: one row with their summed size)",
            );
            continue;
        }
        seen.insert(key, line);
        events.push(RawEvent {
            line,
            trial,
            kind,
            name,
            onset_s: onset,
            offset_s: offset,
            size,
        });
    }
    let errors = t.finish(out);
    Some(Parsed {
        value: events,
        errors,
    })
}

/// The trial numbers that have rows in events.csv (trials.csv lets those rows have neither
/// cue nor reward of their own).
pub fn trials_with_events(events: &[RawEvent]) -> HashSet<i64> {
    events.iter().map(|e| e.trial).collect()
}

/// Events against trials.csv: unknown trial, an event more than [`FAR_S`] from its trial's
/// own cue or reward (from its first event, for a trial given only in events.csv), and a reward (in either file) before the trial's first cue.
pub fn check_events(
    trials_path: &Path,
    events_path: &Path,
    trials: &[RawTrial],
    events: &[RawEvent],
    out: &mut Vec<Diagnostic>,
) {
    let by_number: HashMap<i64, &RawTrial> = trials.iter().map(|t| (t.number, t)).collect();
    let mut first_cue: HashMap<i64, f64> = HashMap::new();
    for t in trials {
        if let Some(c) = t.cue_s {
            first_cue.insert(t.number, c);
        }
    }
    let mut first_event: HashMap<i64, f64> = HashMap::new();
    for e in events {
        let f = first_event.entry(e.trial).or_insert(e.onset_s);
        *f = f.min(e.onset_s);
    }
    for e in events.iter().filter(|e| e.kind == EventKind::Cue) {
        let c = first_cue.entry(e.trial).or_insert(e.onset_s);
        *c = c.min(e.onset_s);
    }
    for e in events {
        let Some(t) = by_number.get(&e.trial) else {
            out.push(
                Diagnostic::error(
                    events_path,
                    format!("trial {} is not in trials.csv", e.trial),
                )
                .at_line(e.line)
                .column("trial")
                .expected("the number of a trial listed in trials.csv"),
            );
            continue;
        };
        // A trial given only in events.csv is anchored on its first event.
        let (what, at) = match (t.cue_s, t.reward_s) {
            (Some(c), _) => ("cue", c),
            (None, Some(r)) => ("reward", r),
            (None, None) => ("first event", first_event[&e.trial]),
        };
        let gap = (e.onset_s - at).abs();
        if gap > FAR_S {
            out.push(
                Diagnostic::error(
                    events_path,
                    format!(
                        "event at {} s is {gap:.3} s from its trial's {what} at {at} s",
                        e.onset_s
                    ),
                )
                .at_line(e.line)
                .column("onset_s")
                .expected(format!(
                    "events within {FAR_S} s of their trial's own cue or reward (trial {})",
                    e.trial
                )),
            );
            continue;
        }
        if let (EventKind::Reward, Some(&cue)) = (e.kind, first_cue.get(&e.trial)) {
            if e.onset_s < cue {
                out.push(reward_before_cue(
                    events_path,
                    e.line,
                    "onset_s",
                    e.onset_s,
                    cue,
                ));
            }
        }
    }
    for t in trials {
        if let (Some(r), Some(&cue)) = (t.reward_s, first_cue.get(&t.number)) {
            // trials.csv's own cue is checked by its reader; this is a cue from events.csv.
            if r < cue && t.cue_s.is_none_or(|c| r >= c) {
                out.push(reward_before_cue(trials_path, t.line, "reward_s", r, cue));
            }
        }
    }
}

fn reward_before_cue(path: &Path, line: u64, column: &str, r: f64, cue: f64) -> Diagnostic {
    Diagnostic::error(
        path,
        format!("reward at {r} s comes before the trial's first cue at {cue} s"),
    )
    .at_line(line)
    .column(column)
    .expected("rewards at or after the trial's first cue onset")
}

/// Give each trial its events.csv rows in time order (rows of unknown trials were reported
/// by [`check_events`]; a session with errors does not load).
pub fn attach(meta: &SessionMeta, trials: &mut [Trial], events: &[RawEvent]) {
    let index: HashMap<i64, usize> = trials
        .iter()
        .enumerate()
        .map(|(i, t)| (t.number, i))
        .collect();
    for e in events {
        let Some(&i) = index.get(&e.trial) else {
            continue;
        };
        let cue = e
            .name
            .as_ref()
            .and_then(|n| meta.cues.iter().position(|c| &c.name == n));
        if e.kind == EventKind::Cue && cue.is_none() {
            continue;
        }
        trials[i].events.push(TrialEvent {
            kind: e.kind,
            cue,
            onset_s: e.onset_s,
            offset_s: e.offset_s,
            size: e.size,
        });
    }
    for t in trials.iter_mut() {
        t.events.sort_by(|a, b| a.onset_s.total_cmp(&b.onset_s));
    }
}

//! Readers for the four session tables: trials, spikes, licks, photometry.
//!
//! Each reader streams its file through [`Table`], keeps every good row, reports every bad one,
//! and sorts what can be sorted (with a warning). Generic over `BufRead` so tests and property
//! tests can feed bytes directly.

use super::csvio::{optional, required, shorten, ColumnSpec, Table};
use super::diag::Diagnostic;
use super::units::UnitIndex;
use super::{Photometry, Spikes};
use std::collections::HashSet;
use std::io::BufRead;
use std::path::Path;

pub const TRIALS_FILE: &str = "trials.csv";
pub const SPIKES_FILE: &str = "spikes.csv";
pub const LICKS_FILE: &str = "licks.csv";
pub const PHOTOMETRY_FILE: &str = "photometry.csv";

/// One row of trials.csv before cue names are matched to `session.toml`.
#[derive(Debug, Clone, PartialEq)]
pub struct RawTrial {
    pub line: u64,
    pub number: i64,
    /// Cue name, `None` when the field is empty.
    pub cue: Option<String>,
    pub cue_s: Option<f64>,
    pub reward_s: Option<f64>,
    /// `None` when the field is empty.
    pub reward_ul: Option<f64>,
    /// The optional `cue_off_s` column.
    pub cue_off_s: Option<f64>,
}

/// A table that read, and how many errors it had (its good rows are kept either way).
#[derive(Debug)]
pub struct Parsed<T> {
    pub value: T,
    pub errors: usize,
}

/// Times past this are "outside the session span" (warning), with the first offending line.
#[derive(Debug, Clone, Copy)]
pub struct Span {
    pub end_s: f64,
}

const TRIAL_COLS: [&str; 5] = ["trial", "cue", "cue_s", "reward_s", "reward_ul"];

/// Read trials.csv with every per-row check. `declared` (the cue names of session.toml, when
/// it could be read) lets undeclared cue names be reported. Only rows without any problem are
/// kept.
pub fn read_trials<R: BufRead>(
    path: &Path,
    reader: R,
    declared: Option<&[&str]>,
    out: &mut Vec<Diagnostic>,
) -> Option<Parsed<Vec<RawTrial>>> {
    read_trials_with(path, reader, declared, &HashSet::new(), out)
}

/// [`read_trials`] for a session with an `events.csv`: the trials in `with_events` have rows
/// there, so a row with neither cue nor reward of its own is fine for them.
pub fn read_trials_with<R: BufRead>(
    path: &Path,
    reader: R,
    declared: Option<&[&str]>,
    with_events: &HashSet<i64>,
    out: &mut Vec<Diagnostic>,
) -> Option<Parsed<Vec<RawTrial>>> {
    let mut specs: Vec<ColumnSpec> = TRIAL_COLS.map(required).into();
    specs.push(optional("cue_off_s"));
    let mut t = Table::new(path, reader, &specs, out)?;
    let mut trials: Vec<RawTrial> = Vec::new();
    let mut last_number: Option<(i64, u64)> = None;
    let mut rows_seen = 0usize;
    while t.next_row() {
        rows_seen += 1;
        let line = t.line();
        let errors_before = t.diags.errors;
        let number = trial_number(&mut t, &mut last_number);
        let cue = Some(t.text(1).to_string()).filter(|s| !s.is_empty());
        if let (Some(name), Some(declared)) = (&cue, declared) {
            if !declared.contains(&name.as_str()) {
                let expected = if declared.is_empty() {
                    "a cue declared with [[cue]] in session.toml (none are)".to_string()
                } else {
                    format!("one of the cues in session.toml: {}", declared.join(", "))
                };
                let msg = format!("cue `{}` is not declared", shorten(name));
                t.diags.error_at(line, "cue", msg, &expected);
            }
        }
        let cue_s = t.non_negative(2, "cue_s", "a time in seconds");
        let reward_s = t.non_negative(3, "reward_s", "a time in seconds");
        let reward_ul = t.non_negative(4, "reward_ul", "a reward size in µl");
        let cue_off_s = t.non_negative(5, "cue_off_s", "the cue offset in seconds");
        let (Ok(cue_s), Ok(reward_s), Ok(reward_ul), Ok(cue_off_s)) =
            (cue_s, reward_s, reward_ul, cue_off_s)
        else {
            continue;
        };
        match (cue_s, cue_off_s) {
            (Some(on), Some(off)) if off < on => {
                let msg = format!("cue offset at {off} s comes before its onset at {on} s");
                t.diags
                    .error_at(line, "cue_off_s", msg, "cue_off_s ≥ cue_s, or empty");
            }
            (None, Some(_)) => t.diags.error_at(
                line,
                "cue_off_s",
                "cue offset given but no cue onset".into(),
                "empty cue_off_s on a trial without a cue",
            ),
            _ => {}
        }
        match (&cue, cue_s) {
            (Some(name), None) => {
                let msg = format!("cue `{}` without an onset time", shorten(name));
                t.diags
                    .error_at(line, "cue_s", msg, "the cue onset in seconds");
            }
            (None, Some(_)) => t.diags.error_at(
                line,
                "cue",
                "cue onset given but no cue name".into(),
                "a cue name from session.toml, or empty cue_s",
            ),
            _ => {}
        }
        let has_events = number.is_some_and(|n| with_events.contains(&n));
        if cue.is_none() && cue_s.is_none() && reward_s.is_none() && !has_events {
            t.diags.error_at(
                line,
                "trial",
                "trial has neither a cue nor a reward".into(),
                "a cue (cue, cue_s), a reward (reward_s), or both",
            );
        }
        if let (Some(c), Some(r)) = (cue_s, reward_s) {
            if r < c {
                let msg = format!("reward at {r} s comes before the cue at {c} s");
                t.diags.error_at(line, "reward_s", msg, "reward_s ≥ cue_s");
            }
        }
        if let (Some(number), true) = (number, t.diags.errors == errors_before) {
            trials.push(RawTrial {
                line,
                number,
                cue,
                cue_s,
                reward_s,
                reward_ul,
                cue_off_s,
            });
        }
    }
    if rows_seen == 0 && t.diags.errors == 0 {
        let d = Diagnostic::error(path, "no trials: the table has a header but no rows")
            .at_line(t.header_line())
            .expected("one row per trial under the header");
        t.diags.push(d);
    }
    let errors = t.finish(out);
    Some(Parsed {
        value: trials,
        errors,
    })
}

/// The `trial` column: an integer greater than every trial number before it.
fn trial_number<R: BufRead>(t: &mut Table<R>, last: &mut Option<(i64, u64)>) -> Option<i64> {
    let line = t.line();
    let text = t.text(0);
    if text.is_empty() {
        t.diags.error_at(
            line,
            "trial",
            "empty value".into(),
            "an integer trial number",
        );
        return None;
    }
    let Ok(n) = text.parse::<i64>() else {
        let msg = format!("not an integer: `{}`", shorten(text));
        t.diags
            .error_at(line, "trial", msg, "an integer trial number");
        return None;
    };
    match *last {
        Some((prev, prev_line)) if n == prev => {
            let msg = format!("trial {n} appears twice (first on line {prev_line})");
            t.diags.error_at(line, "trial", msg, "unique trial numbers");
        }
        Some((prev, prev_line)) if n < prev => {
            let msg = format!("trial {n} comes after trial {prev} (line {prev_line})");
            t.diags
                .error_at(line, "trial", msg, "increasing trial numbers");
        }
        _ => {
            *last = Some((n, line));
            return Some(n);
        }
    }
    None
}

/// The warning for spike trains out of order (the fast path gives the same one).
pub(super) const SPIKES_UNSORTED: &str =
    "spike times of a unit are not in increasing order; sorted on load";

/// Read spikes.csv into per-unit sorted spike trains (units in natural name order).
pub fn read_spikes<R: BufRead>(
    path: &Path,
    reader: R,
    span: Option<Span>,
    out: &mut Vec<Diagnostic>,
) -> Option<Parsed<Spikes>> {
    let mut t = Table::new(path, reader, &[required("unit"), required("time_s")], out)?;
    let mut units = UnitIndex::default();
    let mut times: Vec<Vec<f64>> = Vec::new();
    let mut last: Vec<f64> = Vec::new();
    let mut first_unsorted: Option<u64> = None;
    let mut late = LateTimes::default();
    while t.next_row() {
        let line = t.line();
        let v = t.non_negative(1, "time_s", "a spike time in seconds");
        let Some(time) = t.require(v, "time_s", "a spike time in seconds") else {
            continue;
        };
        let unit = t.bytes(0);
        if unit.is_empty() {
            t.diags
                .error_at(line, "unit", "empty unit id".into(), "a unit id such as u3");
            continue;
        }
        let u = units.index(unit);
        if u == times.len() {
            // Plain doubling: measured within 10 % of pre-sizing from the file size (large
            // vectors grow in place by mremap), shrunk at the end.
            times.push(Vec::new());
            last.push(f64::NEG_INFINITY);
        }
        if time < last[u] {
            first_unsorted.get_or_insert(line);
        }
        last[u] = time;
        late.see(time, line, span);
        times[u].push(time);
    }
    if let Some(line) = first_unsorted {
        t.diags.warning_at(line, "time_s", SPIKES_UNSORTED.into());
    }
    late.report(&mut t, "spike");
    let errors = t.finish(out);
    if first_unsorted.is_some() {
        sort_times(&mut times);
    }
    Some(Parsed {
        value: units.into_spikes(times),
        errors,
    })
}

/// Read licks.csv into sorted lick times.
pub fn read_licks<R: BufRead>(
    path: &Path,
    reader: R,
    span: Option<Span>,
    out: &mut Vec<Diagnostic>,
) -> Option<Parsed<Vec<f64>>> {
    let mut t = Table::new(path, reader, &[required("time_s")], out)?;
    let mut times = Vec::new();
    let mut first_unsorted = None;
    let mut late = LateTimes::default();
    while t.next_row() {
        let line = t.line();
        let v = t.non_negative(0, "time_s", "a lick time in seconds");
        let Some(time) = t.require(v, "time_s", "a lick time in seconds") else {
            continue;
        };
        if times.last().is_some_and(|&p| time < p) {
            first_unsorted.get_or_insert(line);
        }
        late.see(time, line, span);
        times.push(time);
    }
    if let Some(line) = first_unsorted {
        t.diags.warning_at(
            line,
            "time_s",
            "lick times are not in increasing order; sorted on load".into(),
        );
        sort_times(std::slice::from_mut(&mut times));
    }
    late.report(&mut t, "lick");
    let errors = t.finish(out);
    Some(Parsed {
        value: times,
        errors,
    })
}

/// Read photometry.csv (`time_s`, `signal`, optional `control`), rows sorted by time.
pub fn read_photometry<R: BufRead>(
    path: &Path,
    reader: R,
    out: &mut Vec<Diagnostic>,
) -> Option<Parsed<Photometry>> {
    let specs = [required("time_s"), required("signal"), optional("control")];
    let mut t = Table::new(path, reader, &specs, out)?;
    let has_control = t.has_column(2);
    let mut p = Photometry {
        control: has_control.then(Vec::new),
        ..Photometry::default()
    };
    let mut first_unsorted = None;
    let mut first_repeat = None;
    while t.next_row() {
        let line = t.line();
        let time = t.non_negative(0, "time_s", "a sample time in seconds");
        let time = t.require(time, "time_s", "a sample time in seconds");
        let signal = t.finite(1, "signal");
        let signal = t.require(signal, "signal", "a finite number");
        let control = if has_control {
            let c = t.finite(2, "control");
            t.require(c, "control", "a finite number")
        } else {
            Some(0.0)
        };
        let (Some(time), Some(signal), Some(control)) = (time, signal, control) else {
            continue;
        };
        match p.time_s.last() {
            Some(&prev) if time < prev => {
                first_unsorted.get_or_insert(line);
            }
            Some(&prev) if time == prev => {
                first_repeat.get_or_insert(line);
            }
            _ => {}
        }
        p.time_s.push(time);
        p.signal.push(signal);
        if let Some(c) = p.control.as_mut() {
            c.push(control);
        }
    }
    if let Some(line) = first_repeat {
        t.diags
            .warning_at(line, "time_s", "two samples at the same time".into());
    }
    if let Some(line) = first_unsorted {
        t.diags.warning_at(
            line,
            "time_s",
            "sample times are not in increasing order; rows sorted on load".into(),
        );
        sort_photometry(&mut p);
    }
    if p.time_s.is_empty() && t.diags.errors == 0 {
        let d = Diagnostic::warning(path, "no samples: the table has a header but no rows");
        t.diags.push(d);
    }
    let errors = t.finish(out);
    Some(Parsed { value: p, errors })
}

fn sort_photometry(p: &mut Photometry) {
    let mut order: Vec<usize> = (0..p.time_s.len()).collect();
    order.sort_by(|&a, &b| p.time_s[a].total_cmp(&p.time_s[b]));
    let pick = |v: &Vec<f64>| order.iter().map(|&i| v[i]).collect::<Vec<f64>>();
    p.time_s = pick(&p.time_s);
    p.signal = pick(&p.signal);
    if let Some(c) = &p.control {
        p.control = Some(pick(c));
    }
}

/// Counts times past the session span for one summary warning.
#[derive(Default)]
struct LateTimes {
    count: u64,
    first_line: u64,
    max: f64,
    end: f64,
}

impl LateTimes {
    fn see(&mut self, time: f64, line: u64, span: Option<Span>) {
        if let Some(span) = span {
            if time > span.end_s {
                if self.count == 0 {
                    self.first_line = line;
                    self.end = span.end_s;
                }
                self.count += 1;
                self.max = self.max.max(time);
            }
        }
    }
    fn report<R: BufRead>(&self, t: &mut Table<R>, what: &str) {
        if self.count > 0 {
            let msg = format!(
                "{} {what} time(s) after the end of the session span ({} s; latest {} s) — \
                 milliseconds instead of seconds, or another session's file?",
                self.count, self.end, self.max
            );
            t.diags.warning_at(self.first_line, "time_s", msg);
        }
    }
}

/// Name order where digit runs compare as numbers ("u2" before "u10").
pub fn natural_cmp(a: &str, b: &str) -> std::cmp::Ordering {
    fn chunks(s: &str) -> Vec<(bool, &str)> {
        let mut out = Vec::new();
        let mut start = 0;
        let bytes = s.as_bytes();
        for i in 1..=bytes.len() {
            if i == bytes.len() || bytes[i].is_ascii_digit() != bytes[start].is_ascii_digit() {
                out.push((bytes[start].is_ascii_digit(), &s[start..i]));
                start = i;
            }
        }
        out
    }
    let (ca, cb) = (chunks(a), chunks(b));
    for ((da, sa), (db, sb)) in ca.iter().zip(cb.iter()) {
        let ord = if *da && *db {
            let (ta, tb) = (sa.trim_start_matches('0'), sb.trim_start_matches('0'));
            ta.len().cmp(&tb.len()).then(ta.cmp(tb))
        } else {
            sa.cmp(sb)
        };
        if ord.is_ne() {
            return ord;
        }
    }
    ca.len().cmp(&cb.len()).then(a.cmp(b))
}

/// Sort each series that is out of order. Sorters and rigs write a few sorted runs (a unit's
/// train, then its extra spikes); the stable sort merges runs in linear time where the
/// unstable one costs n log n (60 ms on 2 M spikes). Times compare by total order, so the
/// result is the same either way.
pub(super) fn sort_times(series: &mut [Vec<f64>]) {
    for v in series {
        if !v.is_sorted_by(|a, b| a.total_cmp(b).is_le()) {
            v.sort_by(f64::total_cmp);
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn spikes_group_by_unit_for_short_and_long_ids() {
        let csv = "unit,time_s\nshank2-unit10,1\nu1,2\nshank2-unit9,3\nu1,4\nshank2-unit10,5\n u1 ,6\nu10,7\n";
        let mut out = Vec::new();
        let s = read_spikes(Path::new("spikes.csv"), csv.as_bytes(), None, &mut out)
            .unwrap()
            .value;
        assert!(out.is_empty(), "{out:?}");
        assert_eq!(s.units, ["shank2-unit9", "shank2-unit10", "u1", "u10"]);
        assert_eq!(
            s.times,
            [vec![3.0], vec![1.0, 5.0], vec![2.0, 4.0, 6.0], vec![7.0]]
        );
    }

    #[test]
    fn natural_order_compares_digit_runs_as_numbers() {
        let mut v = ["u10", "u2", "u1", "a", "u02", ""];
        v.sort_by(|a, b| natural_cmp(a, b));
        assert_eq!(v, ["", "a", "u1", "u02", "u2", "u10"]);
    }
}

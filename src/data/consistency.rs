//! Checks that need more than one row or more than one file: trials against the cues of
//! `session.toml`, and sessions against each other. Row-level checks live in the readers.

use super::tables::RawTrial;
use super::{Diagnostic, Session, SessionMeta, Subject};
use std::collections::HashMap;
use std::path::Path;

/// A reward this much later than the cue's `reward_delay_s` is worth a look (the model's span
/// after the expected reward is 1 s; a later reward lengthens the trial).
pub const LATE_REWARD_S: f64 = 1.0;

/// Warnings of one kind shown per file before the rest are counted.
const SHOWN_PER_KIND: usize = 5;

/// Trials against the cues of `session.toml`: warnings only (the errors are the readers').
/// Works on the rows as read, so it runs even when other files of the session have errors.
/// `event_cues`: cue names used by events.csv rows (they count as used).
pub fn check_trials(
    meta: &SessionMeta,
    (meta_path, path): (&Path, &Path),
    raw: &[RawTrial],
    event_cues: &[&str],
    out: &mut Vec<Diagnostic>,
) {
    let cue_of = |t: &RawTrial| {
        t.cue
            .as_ref()
            .and_then(|n| meta.cues.iter().position(|c| &c.name == n))
    };
    let mut used = vec![false; meta.cues.len()];
    // One list per kind of warning, so a column that is wrong on every row says so a few
    // times and then counts, instead of printing 1,000 lines.
    let mut found: [Vec<Diagnostic>; 4] = Default::default();
    let mut prev_align: Option<(f64, i64)> = None;
    for row in raw {
        let line = row.line;
        let cue = cue_of(row);
        if let Some(c) = cue {
            used[c] = true;
        }
        if let (Some(c), Some(cue_s), Some(reward_s)) = (cue, row.cue_s, row.reward_s) {
            let declared = meta.cues[c].reward_delay_s;
            let after = reward_s - cue_s;
            if after > declared.unwrap_or(0.0) + LATE_REWARD_S {
                let name = &meta.cues[c].name;
                let why = match declared {
                    Some(d) => format!("cue `{name}` declares reward_delay_s = {d}"),
                    None => format!("cue `{name}` declares no reward_delay_s"),
                };
                found[0].push(
                    Diagnostic::warning(
                        path,
                        format!(
                            "reward {after:.3} s after the cue, more than {LATE_REWARD_S} s \
                             later than expected ({why})"
                        ),
                    )
                    .at_line(line)
                    .column("reward_s"),
                );
            }
        }
        if row.reward_s.is_some() && row.reward_ul.unwrap_or(0.0) == 0.0 {
            found[1].push(
                Diagnostic::warning(
                    path,
                    "reward delivered but reward_ul is empty or 0: the model sees no reward",
                )
                .at_line(line)
                .column("reward_ul"),
            );
        }
        if row.reward_s.is_none() && row.reward_ul.is_some_and(|u| u > 0.0) {
            found[2].push(
                Diagnostic::warning(path, "reward_ul given but no reward_s: read as no reward")
                    .at_line(line)
                    .column("reward_ul"),
            );
        }
        let align = row.cue_s.or(row.reward_s);
        if let (Some(a), Some((pa, pn))) = (align, prev_align) {
            if a < pa {
                found[3].push(
                    Diagnostic::warning(
                        path,
                        format!(
                            "trial {} starts at {a} s, before trial {pn} at {pa} s",
                            row.number
                        ),
                    )
                    .at_line(line)
                    .column(if row.cue_s.is_some() {
                        "cue_s"
                    } else {
                        "reward_s"
                    }),
                );
            }
        }
        if let Some(a) = align {
            prev_align = Some((a, row.number));
        }
    }
    for kind in found {
        let more = kind.len().saturating_sub(SHOWN_PER_KIND);
        let first_hidden = kind.get(SHOWN_PER_KIND).cloned();
        out.extend(kind.into_iter().take(SHOWN_PER_KIND));
        if let Some(first) = first_hidden {
            out.push(Diagnostic {
                message: format!("{more} more trial(s) from this line on with the same warning"),
                expected: None,
                ..first
            });
        }
    }
    for (cue, used) in meta.cues.iter().zip(used) {
        if !used && !event_cues.contains(&cue.name.as_str()) {
            out.push(
                Diagnostic::warning(
                    meta_path,
                    format!("cue `{}` is declared but no trial uses it", cue.name),
                )
                .column("cue.name"),
            );
        }
    }
}

/// Subject-level problems: sessions of different animals, ambiguous names or order.
pub fn check_subject(subject: &Subject, out: &mut Vec<Diagnostic>) {
    let Some(first) = subject.sessions.first() else {
        return;
    };
    for s in &subject.sessions[1..] {
        if s.meta.subject != first.meta.subject {
            out.push(
                Diagnostic::error(
                    s.dir.join(super::meta::SESSION_FILE),
                    format!(
                        "subject `{}` differs from `{}` in {}",
                        s.meta.subject, first.meta.subject, first.name
                    ),
                )
                .column("subject")
                .expected("one animal per subject folder"),
            );
        }
    }
    // Session names need only be unique within one animal: a cohort of subjects recorded on
    // the same dates has the same date-named folders in every subject.
    let mut names: HashMap<(&str, &str), &Session> = HashMap::new();
    for s in &subject.sessions {
        if let Some(other) = names.insert((&s.meta.subject, &s.name), s) {
            out.push(
                Diagnostic::error(
                    &s.dir,
                    format!(
                        "session name `{}` is also used by {}",
                        s.name,
                        other.dir.display()
                    ),
                )
                .expected("distinct session folder names (outputs name sessions by folder)"),
            );
        }
    }
    for pair in subject.sessions.windows(2) {
        let (a, b) = (&pair[0].meta, &pair[1].meta);
        if a.date == b.date && a.start_time == b.start_time {
            out.push(Diagnostic::warning(
                pair[1].dir.join(super::meta::SESSION_FILE),
                format!(
                    "same date and start_time as session {}: ordered by folder name; add start_time to make the order explicit",
                    pair[0].name
                ),
            ).column("start_time"));
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::data::CueDef;

    #[test]
    fn a_warning_on_every_row_is_shown_five_times_then_counted() {
        let meta = SessionMeta {
            subject: "m".into(),
            date: "2026-01-01".into(),
            start_time: None,
            rig: None,
            cues: vec![CueDef {
                name: "x".into(),
                reward_delay_s: Some(1.0),
            }],
        };
        let raw: Vec<RawTrial> = (1..=20)
            .map(|i| RawTrial {
                line: i as u64 + 1,
                number: i,
                cue: Some("x".into()),
                cue_s: Some(i as f64 * 10.0),
                reward_s: Some(i as f64 * 10.0 + 1.0),
                reward_ul: None,
                cue_off_s: None,
            })
            .collect();
        let mut out = Vec::new();
        let paths = (Path::new("s.toml"), Path::new("t.csv"));
        check_trials(&meta, paths, &raw, &[], &mut out);
        let lines: Vec<Option<u64>> = out.iter().map(|d| d.line).collect();
        assert_eq!(
            lines,
            vec![Some(2), Some(3), Some(4), Some(5), Some(6), Some(7)]
        );
        assert!(out[5].message.starts_with("15 more trial(s)"));
        assert!(out.iter().all(|d| !d.is_error()));
    }
}

//! Suggested marks: rules that point out doubtful trials so a reviewer confirms them in seconds.
//!
//! Start at [`suggest_session`] (a session and a [`RuleSet`] → [`Suggestion`]s), then
//! [`pending`] (drop what the marks journal already settled), [`accept_row`] / [`reject_row`]
//! (the journal rows one key writes). [`CATALOG`] lists every rule with its description and
//! source; the parameters live in `default_rules.toml` ([`config`]).
//!
//! Suggestions are computed, never stored. The marks sidecar stays as the brief fixes it:
//! * accepting writes an ordinary `exclude` (or `suspect`, per `accept_as`) row whose `reason`
//!   is the rule id and whose `note` is the suggestion's measured reason;
//! * rejecting writes a `note` row for the trial with reason `reject:<rule id>`
//!   ([`REJECT_PREFIX`]), so the suggestion is not made again; a person reading marks.csv
//!   elsewhere sees a plain note.
//!
//! A suggestion is pending unless its trial already stands excluded (for any reason), stands
//! suspect with the rule id as reason, or has a `reject:<rule id>` note. A `clear` is not a
//! rejection: undoing an accept brings the suggestion back.

pub mod config;
mod licks;
mod signal;
mod units;

pub use config::RuleSet;

use crate::data::{Session, Trial};
use crate::marks::{MarkKind, MarkRow, MarkState};

/// One doubtful trial: which rule points at it and why, with the measured value.
#[derive(Debug, Clone, PartialEq, Eq, Hash)]
pub struct Suggestion {
    /// The `trial` number (not an index).
    pub trial: i64,
    /// The rule id, e.g. `late_first_lick`.
    pub rule: &'static str,
    /// Human-readable, with the measured value and the limit.
    pub reason: String,
}

/// A rule's id, plain description and source (the parameters are in the config).
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct RuleInfo {
    pub id: &'static str,
    pub description: &'static str,
    pub source: &'static str,
}

/// Every rule, in the order suggestions and counts are listed.
pub const CATALOG: [RuleInfo; 8] = [
    RuleInfo {
        id: "baseline_licks",
        description: "licks in the pre-cue baseline window",
        source: "common practice (lick contamination of the baseline)",
    },
    RuleInfo {
        id: "no_consumption",
        description: "no consumption licks after a delivered reward (possible valve failure)",
        source: "common practice (missed delivery: no lick within N s); N is our default",
    },
    RuleInfo {
        id: "late_first_lick",
        description: "first lick after the reward late for its trial type (cue or uncued)",
        source: "Qian et al. 2025 kept only trials whose first lick came < 250 ms after reward; \
                 judged per trial type against its median + k robust SDs (our default)",
    },
    RuleInfo {
        id: "reward_too_soon",
        description: "reward soon after the previous one (that one still being consumed)",
        source: "Jeong et al. 2022 dropped rewards < 3 s after the previous one",
    },
    RuleInfo {
        id: "unit_drift",
        description: "a unit's baseline rate far from its session median (possible lost unit)",
        source: "common practice (lost or unstable unit); MAD-based robust spread",
    },
    RuleInfo {
        id: "control_motion",
        description: "control-channel deflection within the trial (motion or licking)",
        source:
            "event-locked control deflections as a QC check (Simpson et al. 2024, Neuron 112:718)",
    },
    RuleInfo {
        id: "control_fit_poor",
        description: "the isosbestic control explains little of a drifting signal (session)",
        source: "common practice (a low R² of the control fit as a QC check)",
    },
    RuleInfo {
        id: "signal_clipped",
        description: "photometry saturated, stuck or missing samples within the trial",
        source: "common practice (signal artifacts: saturation, disconnects)",
    },
];

/// The catalogue entry of a rule id (for a reviewer's legend or a report's footnote).
pub fn rule_info(id: &str) -> Option<&'static RuleInfo> {
    CATALOG.iter().find(|r| r.id == id)
}

/// Reason prefix of the note row that records a rejected suggestion.
pub const REJECT_PREFIX: &str = "reject:";

/// Every suggestion for one session, ordered by trial then by [`CATALOG`] order. Rules whose
/// data the session lacks (no licks, no spikes, no photometry or no control) suggest nothing.
pub fn suggest_session(session: &Session, rules: &RuleSet) -> Vec<Suggestion> {
    let mut out = Vec::new();
    licks::suggest(session, session.licks.as_deref(), rules, &mut out);
    if let Some(spikes) = &session.spikes {
        if rules.unit_drift.enabled {
            units::unit_drift(session, spikes, &rules.unit_drift, &mut out);
        }
    }
    if let Some(p) = &session.photometry {
        signal::suggest(session, p, rules, &mut out);
    }
    let rank = |id: &str| {
        CATALOG
            .iter()
            .position(|r| r.id == id)
            .unwrap_or(usize::MAX)
    };
    out.sort_by_key(|s| (s.trial, rank(s.rule)));
    out
}

/// The suggestions the journal has not settled (see the module notes).
pub fn pending(suggestions: &[Suggestion], marks: &MarkState) -> Vec<Suggestion> {
    suggestions
        .iter()
        .filter(|s| {
            let settled = match marks.marks.get(&s.trial) {
                Some(m) if m.kind == MarkKind::Exclude => true,
                Some(m) => m.reason == s.rule,
                None => false,
            };
            !settled && !is_rejected(marks, s.trial, s.rule)
        })
        .cloned()
        .collect()
}

fn is_rejected(marks: &MarkState, trial: i64, rule: &str) -> bool {
    marks.notes.iter().any(|n| {
        n.trial == Some(trial)
            && n.reason
                .strip_prefix(REJECT_PREFIX)
                .is_some_and(|r| r == rule)
    })
}

/// The row that accepts a suggestion: an ordinary `kind` mark (normally
/// [`RuleSet::accept_as`]) with the rule id as reason and the measured reason as note.
pub fn accept_row(s: &Suggestion, kind: MarkKind, reviewer: &str) -> MarkRow {
    MarkRow {
        trial: Some(s.trial),
        mark: kind,
        reason: s.rule.to_string(),
        note: s.reason.clone(),
        reviewer: reviewer.to_string(),
        at: crate::marks::now_rfc3339(),
    }
}

/// The row that rejects a suggestion: a note on the trial with reason `reject:<rule id>`.
pub fn reject_row(s: &Suggestion, reviewer: &str) -> MarkRow {
    MarkRow {
        trial: Some(s.trial),
        mark: MarkKind::Note,
        reason: format!("{REJECT_PREFIX}{}", s.rule),
        note: s.reason.clone(),
        reviewer: reviewer.to_string(),
        at: crate::marks::now_rfc3339(),
    }
}

/// The rows that accept every suggestion of `rule` among `suggestions` (pass the pending ones).
pub fn accept_all_rows(
    suggestions: &[Suggestion],
    rule: &str,
    kind: MarkKind,
    reviewer: &str,
) -> Vec<MarkRow> {
    suggestions
        .iter()
        .filter(|s| s.rule == rule)
        .map(|s| accept_row(s, kind, reviewer))
        .collect()
}

/// Suggestion counts per rule, in [`CATALOG`] order, rules without suggestions left out.
pub fn counts_by_rule(suggestions: &[Suggestion]) -> Vec<(String, usize)> {
    CATALOG
        .iter()
        .map(|r| {
            let n = suggestions.iter().filter(|s| s.rule == r.id).count();
            (r.id.to_string(), n)
        })
        .filter(|(_, n)| *n > 0)
        .collect()
}

/// [`suggest_session`] then [`pending`] against the session's marks.csv (absent: no marks).
pub fn pending_for_session(
    session: &Session,
    rules: &RuleSet,
) -> Result<Vec<Suggestion>, crate::marks::MarksError> {
    let all = suggest_session(session, rules);
    if !session.dir.join(crate::marks::MARKS_FILE).exists() {
        return Ok(all);
    }
    let journal = crate::marks::read_journal(&session.dir)?;
    Ok(pending(&all, &journal.state()))
}

/// Alignment time: cue onset, or the reward on uncued trials (as the model aligns).
fn align(trial: &Trial) -> Option<f64> {
    crate::obs::alignment_time(trial)
}

/// The trial's last scheduled event: delivered or expected reward, else the alignment time.
fn last_event(session: &Session, trial: &Trial) -> Option<f64> {
    let t0 = align(trial)?;
    let expected = crate::obs::expected_reward_time(session, trial).unwrap_or(t0);
    Some(t0.max(expected).max(trial.reward_s.unwrap_or(t0)))
}

/// Median of a non-empty buffer, reordering it (mean of the middle two for an even count).
fn median_of(v: &mut [f64]) -> f64 {
    let mid = v.len() / 2;
    let upper = *v.select_nth_unstable_by(mid, f64::total_cmp).1;
    if v.len() % 2 == 1 {
        upper
    } else {
        0.5 * (v[..mid].iter().copied().fold(f64::NEG_INFINITY, f64::max) + upper)
    }
}

/// A number for a reason text: at most `digits` decimals, trailing zeros dropped.
fn num(x: f64, digits: usize) -> String {
    let s = format!("{x:.digits$}");
    if s.contains('.') {
        s.trim_end_matches('0').trim_end_matches('.').to_string()
    } else {
        s
    }
}

#[cfg(test)]
mod tests;

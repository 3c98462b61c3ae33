//! Pending suggested marks ([`crate::suggest`]) of each session for the learning table: the
//! counts per rule, and the words the table shows for them.

use super::render::SuggestedCounts;
use crate::data::Subject;
use crate::marks::MarkState;
use crate::suggest::{counts_by_rule, pending, suggest_session, RuleSet, CATALOG};

/// Pending suggested marks of each session of `subject` (same order), per rule in catalogue
/// order with rules that suggest nothing left out. `marks[i]` is the mark state of
/// `subject.sessions[i]` (missing entries mean no marks), as for [`super::day_rows`].
pub fn suggested_counts(
    subject: &Subject,
    marks: &[MarkState],
    rules: &RuleSet,
) -> Vec<Vec<(String, usize)>> {
    let empty = MarkState::default();
    subject
        .sessions
        .iter()
        .enumerate()
        .map(|(i, s)| {
            let marks = marks.get(i).unwrap_or(&empty);
            counts_by_rule(&pending(&suggest_session(s, rules), marks))
        })
        .collect()
}

/// `rule n, rule n` or `none`.
pub(super) fn by_rule(counts: &[(String, usize)]) -> String {
    if counts.is_empty() {
        return "none".into();
    }
    let parts: Vec<String> = counts.iter().map(|(r, n)| format!("{r} {n}")).collect();
    parts.join(", ")
}

/// One line per rule that suggested anything: its id and description.
pub(super) fn legend(counts: &SuggestedCounts) -> Vec<String> {
    let lines: Vec<String> = CATALOG
        .iter()
        .filter(|r| counts.iter().flatten().any(|(id, _)| id == r.id))
        .map(|r| format!("{}: {}", r.id, r.description))
        .collect();
    if lines.is_empty() {
        vec!["no rule suggests any trial".into()]
    } else {
        lines
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn words_follow_catalogue_order_and_say_none() {
        let counts = vec![
            vec![],
            vec![("baseline_licks".into(), 2), ("no_consumption".into(), 5)],
            vec![("signal_clipped".into(), 1)],
        ];
        assert_eq!(by_rule(&counts[0]), "none");
        assert_eq!(by_rule(&counts[1]), "baseline_licks 2, no_consumption 5");
        let l = legend(&counts);
        assert_eq!(l.len(), 3);
        assert!(l[0].starts_with("baseline_licks: ") && l[2].starts_with("signal_clipped: "));
        assert_eq!(legend(&vec![vec![]]), ["no rule suggests any trial"]);
    }
}

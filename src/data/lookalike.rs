//! Names that look like a misspelling of a known one (`cue_offset_s` for `cue_off_s`, a
//! `reward_delay` key for `reward_delay_s`): unread columns and unknown keys that would
//! otherwise pass without a word.

use super::diag::Diagnostic;
use std::path::Path;

/// Edit distance (insertions, deletions, substitutions), on characters.
fn distance(a: &str, b: &str) -> usize {
    let b: Vec<char> = b.chars().collect();
    let mut row: Vec<usize> = (0..=b.len()).collect();
    for (i, ca) in a.chars().enumerate() {
        let mut diag = row[0];
        row[0] = i + 1;
        for (j, &cb) in b.iter().enumerate() {
            let next = (diag + usize::from(ca != cb))
                .min(row[j] + 1)
                .min(row[j + 1] + 1);
            diag = row[j + 1];
            row[j + 1] = next;
        }
    }
    row[b.len()]
}

/// The known name `name` most likely stands for, if any: the same name in another case or
/// with `-`/space for `_`, within two edits, or one containing the other once a trailing
/// `_s` is dropped (at least four characters in common).
pub fn lookalike<'a>(name: &str, known: &[&'a str]) -> Option<&'a str> {
    let norm = |s: &str| s.trim().to_ascii_lowercase().replace(['-', ' '], "_");
    let n = norm(name);
    if n.is_empty() || known.contains(&name) {
        return None;
    }
    let stem = |s: &str| s.strip_suffix("_s").unwrap_or(s).to_string();
    // The closest candidate wins (a case change is distance 0).
    known
        .iter()
        .copied()
        .filter_map(|k| {
            let k_norm = norm(k);
            let (a, b) = (stem(&n), stem(&k_norm));
            let d = distance(&n, &k_norm);
            let close = n == k_norm
                || (k_norm.len() >= 4 && d <= 2)
                || (a.len().min(b.len()) >= 4 && a != b && (a.contains(&b) || b.contains(&a)));
            close.then_some((d, k))
        })
        .min_by_key(|&(d, _)| d)
        .map(|(_, k)| k)
}

const TOP_KEYS: [&str; 5] = ["subject", "date", "start_time", "rig", "cue"];
const CUE_KEYS: [&str; 2] = ["name", "reward_delay_s"];

/// Warnings for keys of `session.toml` that trialdesk does not read (a cue duration, a
/// `reward_delay` for `reward_delay_s`): today they would be ignored silently. `text` already
/// parsed as TOML; the line is the first one that starts with the key.
pub fn unknown_meta_keys(path: &Path, text: &str, out: &mut Vec<Diagnostic>) {
    let Ok(table) = text.parse::<toml::Table>() else {
        return;
    };
    let mut unknown: Vec<(String, &[&str], &str)> = Vec::new();
    for (key, value) in &table {
        if !TOP_KEYS.contains(&key.as_str()) {
            unknown.push((key.clone(), &TOP_KEYS, ""));
        } else if key == "cue" {
            let cues = value.as_array().map(Vec::as_slice).unwrap_or(&[]);
            for cue in cues.iter().filter_map(toml::Value::as_table) {
                for k in cue.keys().filter(|k| !CUE_KEYS.contains(&k.as_str())) {
                    if !unknown.iter().any(|(u, _, _)| u == k) {
                        unknown.push((k.clone(), &CUE_KEYS, " in [[cue]]"));
                    }
                }
            }
        }
    }
    let mut found = Vec::new();
    for (key, known, place) in unknown {
        let hint = match lookalike(&key, known) {
            Some(k) => format!(": did you mean `{k}`?"),
            None => String::new(),
        };
        let mut d =
            Diagnostic::warning(path, format!("unknown key `{key}`{place} is ignored{hint}"))
                .column(key.as_str())
                .expected(format!("only the keys {}", known.join(", ")));
        if let Some(line) = line_of_key(text, &key) {
            d = d.at_line(line);
        }
        found.push(d);
    }
    found.sort_by_key(|d| d.line);
    out.extend(found);
}

fn line_of_key(text: &str, key: &str) -> Option<u64> {
    let quoted = format!("\"{key}\"");
    text.lines()
        .position(|l| {
            let l = l.trim_start();
            [key, quoted.as_str()].iter().any(|k| {
                l.strip_prefix(k)
                    .is_some_and(|rest| rest.starts_with([' ', '\t', '=', '.']))
            })
        })
        .map(|i| i as u64 + 1)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn finds_plausible_misspellings_only() {
        let k = [
            "trial",
            "cue",
            "cue_s",
            "reward_s",
            "reward_ul",
            "cue_off_s",
        ];
        assert_eq!(lookalike("cue_offset_s", &k), Some("cue_off_s"));
        assert_eq!(lookalike("Reward_UL", &k), Some("reward_ul"));
        assert_eq!(lookalike("rewrd_s", &k), Some("reward_s"));
        assert_eq!(lookalike("extra", &k), None);
        assert_eq!(lookalike("notes", &k), None);
        assert_eq!(lookalike("cue", &k), None);
        assert_eq!(
            lookalike("reward_delay", &["name", "reward_delay_s"]),
            Some("reward_delay_s")
        );
        assert_eq!(distance("kitten", "sitting"), 3);
    }

    #[test]
    fn unknown_session_keys_are_warned_with_their_line() {
        let text = "subject = \"m-041\"\ndate = \"2026-03-02\"\nlight = 2\n[[cue]]\n\
                    name = \"tone-hi\"\nreward_delay = 1.5\nduration_s = 0.5\n";
        let mut out = Vec::new();
        unknown_meta_keys(Path::new("session.toml"), text, &mut out);
        let lines: Vec<String> = out.iter().map(|d| d.to_string()).collect();
        assert_eq!(lines.len(), 3, "{lines:?}");
        assert!(lines[0].starts_with("session.toml:3: warning: light: unknown key `light`"));
        assert!(lines[1].contains(
            "session.toml:6: warning: reward_delay: unknown key `reward_delay` in [[cue]] is \
             ignored: did you mean `reward_delay_s`?"
        ));
        assert!(lines[2].starts_with("session.toml:7: warning: duration_s:"));
        assert!(out.iter().all(|d| !d.is_error()));
    }
}

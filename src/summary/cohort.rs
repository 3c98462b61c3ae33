//! A cohort's learning table: subjects averaged by training day (day 1 = each animal's first
//! session), each subject weighted equally whatever its trial count.

use super::{DayRow, Mean};
use crate::data::meta::SESSION_FILE;
use std::collections::BTreeMap;
use std::path::{Path, PathBuf};

/// One training day across subjects; each `Mean` is over subjects (`n` = subjects with a value).
#[derive(Debug, Clone, PartialEq)]
pub struct CohortRow {
    pub day: usize,
    /// Subjects that had a session on this day.
    pub subjects: usize,
    /// Per cue name, in first-seen order.
    pub cues: Vec<(String, Mean)>,
    pub reward: Mean,
    pub uncued_reward: Mean,
    pub omission: Mean,
    pub lick_rate: Mean,
}

/// Rows for days 1..=max over all subjects' day rows.
pub fn cohort_rows(subjects: &[&[DayRow]]) -> Vec<CohortRow> {
    let mut by_day: BTreeMap<usize, Vec<&DayRow>> = BTreeMap::new();
    for rows in subjects {
        for r in rows.iter() {
            by_day.entry(r.day).or_default().push(r);
        }
    }
    by_day
        .into_iter()
        .map(|(day, rows)| {
            let mut names: Vec<String> = Vec::new();
            for r in &rows {
                for c in &r.cues {
                    if !names.contains(&c.cue) {
                        names.push(c.cue.clone());
                    }
                }
            }
            let over =
                |f: &dyn Fn(&DayRow) -> Option<f64>| Mean::of(rows.iter().filter_map(|r| f(r)));
            CohortRow {
                day,
                subjects: rows.len(),
                cues: names
                    .iter()
                    .map(|n| {
                        let m = over(&|r: &DayRow| {
                            r.cues
                                .iter()
                                .find(|c| &c.cue == n)
                                .and_then(|c| c.response.value)
                        });
                        (n.clone(), m)
                    })
                    .collect(),
                reward: over(&|r| r.reward_response.value),
                uncued_reward: over(&|r| r.uncued_reward_response.value),
                omission: over(&|r| r.omission_dip.value),
                lick_rate: over(&|r| r.lick_rate.value),
            }
        })
        .collect()
}

/// The subject folders of a cohort folder, or `None` when `path` is a subject or session
/// folder. A cohort folder holds no `session.toml` itself, none of its direct sub-folders is a
/// session, and the first sessions found under its sub-folders name at least two different
/// animals (so a subject folder that groups sessions by month is not mistaken for a cohort).
pub fn cohort_subject_dirs(path: &Path) -> Option<Vec<PathBuf>> {
    if path.join(SESSION_FILE).exists() {
        return None;
    }
    let mut children: Vec<PathBuf> = std::fs::read_dir(path)
        .ok()?
        .filter_map(Result::ok)
        .filter(|e| !e.file_name().to_string_lossy().starts_with('.'))
        .map(|e| e.path())
        .filter(|p| p.is_dir())
        .collect();
    children.sort();
    if children.iter().any(|c| c.join(SESSION_FILE).exists()) {
        return None;
    }
    let mut subjects: Vec<(PathBuf, String)> = Vec::new();
    for c in children {
        if let Some(name) = first_subject_name(&c, 0) {
            subjects.push((c, name));
        }
    }
    let mut names: Vec<&str> = subjects.iter().map(|(_, n)| n.as_str()).collect();
    names.sort();
    names.dedup();
    (names.len() >= 2).then(|| subjects.into_iter().map(|(p, _)| p).collect())
}

/// `subject` of the first session.toml under `dir` (folder order, a few levels deep).
fn first_subject_name(dir: &Path, depth: usize) -> Option<String> {
    let file = dir.join(SESSION_FILE);
    if file.exists() {
        let table: toml::Table = std::fs::read_to_string(file).ok()?.parse().ok()?;
        return table.get("subject")?.as_str().map(str::to_string);
    }
    if depth >= 4 {
        return None;
    }
    let mut subs: Vec<PathBuf> = std::fs::read_dir(dir)
        .ok()?
        .filter_map(Result::ok)
        .map(|e| e.path())
        .filter(|p| p.is_dir())
        .collect();
    subs.sort();
    subs.into_iter()
        .find_map(|s| first_subject_name(&s, depth + 1))
}

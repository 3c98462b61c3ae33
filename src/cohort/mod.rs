//! Cohorts: many animals fitted in one go, on one machine or one shard per cluster task.
//!
//! Start at [`discover_subjects`] (a cohort folder → its subject folders, sorted by folder
//! name), then [`Shard`] / [`shard`] (which of them one array task takes) and [`run_cohort`]
//! (the job for every subject of a shard, in parallel across subjects, one subject's failure
//! never stopping the others). [`merge`] joins the per-subject result tables written under
//! `DIR/<subject>/` into one tidy table with a `subject` column.
//!
//! Sharding is a pure function of the sorted folder names and (K, N), so every task of an
//! array job computes the same split without talking to the others, and K = 1..N together
//! cover every subject exactly once. Subjects are dealt round-robin (subject i goes to shard
//! i mod N + 1) so shard sizes differ by at most one.

pub mod merge;

use crate::data::meta::SESSION_FILE;
use crate::fit::Progress;
use rayon::prelude::*;
use std::fmt;
use std::path::{Path, PathBuf};
use std::time::{Duration, Instant};

/// An example Slurm job-array script for a sharded cohort fit (printed by
/// `trialdesk merge --batch-example`).
pub const SLURM_EXAMPLE: &str = include_str!("slurm_example.sh");

/// One subject folder of a cohort.
#[derive(Debug, Clone, PartialEq, Eq, PartialOrd, Ord)]
pub struct SubjectDir {
    /// The folder name: the `subject` column of merged tables and the output sub-folder name.
    pub name: String,
    pub path: PathBuf,
}

#[derive(Debug, thiserror::Error)]
pub enum CohortError {
    #[error("{}: cannot read folder: {source}", path.display())]
    Io {
        path: PathBuf,
        source: std::io::Error,
    },
    #[error(
        "{}: is a session folder (it holds {SESSION_FILE}), not a cohort folder of subject folders",
        path.display()
    )]
    IsSession { path: PathBuf },
    #[error(
        "{}: no subject folders found (a subject folder holds session folders, each with {SESSION_FILE})",
        path.display()
    )]
    NoSubjects { path: PathBuf },
    #[error("{0}")]
    BadShard(String),
}

/// Sub-folders of `dir`, hidden ones skipped, sorted by name.
fn child_dirs(dir: &Path) -> Result<Vec<(String, PathBuf)>, CohortError> {
    let io = |source| CohortError::Io {
        path: dir.to_path_buf(),
        source,
    };
    let mut out = Vec::new();
    for entry in std::fs::read_dir(dir).map_err(io)? {
        let entry = entry.map_err(io)?;
        let name = entry.file_name().to_string_lossy().into_owned();
        if name.starts_with('.') {
            continue;
        }
        let path = entry.path();
        if path.is_dir() {
            out.push((name, path));
        }
    }
    out.sort();
    Ok(out)
}

/// True when some direct child of `dir` is a session folder.
pub fn is_subject_dir(dir: &Path) -> bool {
    child_dirs(dir)
        .map(|c| c.iter().any(|(_, p)| p.join(SESSION_FILE).is_file()))
        .unwrap_or(false)
}

/// The subject folders of a cohort folder: direct sub-folders whose own sub-folders hold a
/// `session.toml`, sorted by folder name (byte order, so every machine agrees). Other
/// sub-folders (results, notes) are skipped.
pub fn discover_subjects(root: &Path) -> Result<Vec<SubjectDir>, CohortError> {
    if root.join(SESSION_FILE).is_file() {
        return Err(CohortError::IsSession {
            path: root.to_path_buf(),
        });
    }
    let subjects: Vec<SubjectDir> = child_dirs(root)?
        .into_iter()
        .filter(|(_, p)| is_subject_dir(p))
        .map(|(name, path)| SubjectDir { name, path })
        .collect();
    if subjects.is_empty() {
        return Err(CohortError::NoSubjects {
            path: root.to_path_buf(),
        });
    }
    Ok(subjects)
}

/// Shard K of N (1-based), as an array task numbers itself.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct Shard {
    pub k: usize,
    pub n: usize,
}

impl Shard {
    /// The whole cohort.
    pub const ALL: Shard = Shard { k: 1, n: 1 };

    /// A checked shard: N ≥ 1 and 1 ≤ K ≤ N.
    pub fn new(k: usize, n: usize) -> Result<Shard, CohortError> {
        if n == 0 {
            return Err(CohortError::BadShard(format!(
                "shard {k}/{n}: N must be at least 1 (expected K/N with 1 <= K <= N)"
            )));
        }
        if k == 0 || k > n {
            return Err(CohortError::BadShard(format!(
                "shard {k}/{n}: expected K/N with 1 <= K <= N ({n}); array tasks count from 1"
            )));
        }
        Ok(Shard { k, n })
    }

    /// `K/N`, e.g. `3/10` (a Slurm array `--array=1-10` passes `$SLURM_ARRAY_TASK_ID/10`).
    pub fn parse(text: &str) -> Result<Shard, CohortError> {
        let bad = || {
            CohortError::BadShard(format!(
                "--shard '{text}' is not K/N (expected two whole numbers like 3/10, 1 <= K <= N)"
            ))
        };
        let (k, n) = text.trim().split_once('/').ok_or_else(bad)?;
        let k: usize = k.trim().parse().map_err(|_| bad())?;
        let n: usize = n.trim().parse().map_err(|_| bad())?;
        Shard::new(k, n)
    }

    /// Whether the subject at `index` (in sorted order) belongs to this shard.
    pub fn takes(&self, index: usize) -> bool {
        index % self.n == self.k - 1
    }
}

impl fmt::Display for Shard {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        write!(f, "{}/{}", self.k, self.n)
    }
}

/// The subjects of shard K/N: sorted by folder name first (whatever order they came in), then
/// dealt round-robin.
pub fn shard(subjects: &[SubjectDir], which: Shard) -> Vec<SubjectDir> {
    let mut sorted = subjects.to_vec();
    sorted.sort();
    sorted
        .into_iter()
        .enumerate()
        .filter(|(i, _)| which.takes(*i))
        .map(|(_, s)| s)
        .collect()
}

/// What the job did for one subject.
#[derive(Debug)]
pub struct SubjectResult<T, E> {
    pub subject: SubjectDir,
    pub result: Result<T, E>,
    /// Wall time of this subject's job.
    pub elapsed: Duration,
}

/// A cohort run: the shard's subjects in sorted order with their outcomes.
#[derive(Debug)]
pub struct CohortRun<T, E> {
    pub shard: Shard,
    /// Subjects in the whole cohort (all shards).
    pub cohort_size: usize,
    pub results: Vec<SubjectResult<T, E>>,
    pub elapsed: Duration,
}

impl<T, E> CohortRun<T, E> {
    pub fn failures(&self) -> impl Iterator<Item = (&SubjectDir, &E)> {
        self.results
            .iter()
            .filter_map(|r| r.result.as_ref().err().map(|e| (&r.subject, e)))
    }
}

/// Run `job` on every subject folder of shard `which` of the cohort at `root`, in parallel
/// across subjects (rayon's pool; the fitter parallelises inside a subject too, and rayon
/// shares the cores between both levels). `progress` gets one phase ("subjects", count) and
/// a tick per finished subject. Results come back in sorted subject order, whatever order
/// they finished in. Fails only when the cohort cannot be listed.
pub fn run_cohort<T, E, F>(
    root: &Path,
    which: Shard,
    progress: &dyn Progress,
    job: F,
) -> Result<CohortRun<T, E>, CohortError>
where
    T: Send,
    E: Send,
    F: Fn(&Path) -> Result<T, E> + Sync,
{
    let all = discover_subjects(root)?;
    let mine = shard(&all, which);
    let start = Instant::now();
    progress.phase("subjects", mine.len() as u64);
    let results = mine
        .into_par_iter()
        .map(|subject| {
            let t = Instant::now();
            let result = job(&subject.path);
            progress.tick();
            SubjectResult {
                subject,
                result,
                elapsed: t.elapsed(),
            }
        })
        .collect();
    Ok(CohortRun {
        shard: which,
        cohort_size: all.len(),
        results,
        elapsed: start.elapsed(),
    })
}

#[cfg(test)]
mod tests {
    use super::*;

    fn names(n: usize) -> Vec<SubjectDir> {
        (0..n)
            .map(|i| SubjectDir {
                name: format!("m-{i:03}"),
                path: PathBuf::from(format!("/c/m-{i:03}")),
            })
            .collect()
    }

    #[test]
    fn shard_sizes_differ_by_at_most_one() {
        let subjects = names(10);
        let sizes: Vec<usize> = (1..=3)
            .map(|k| shard(&subjects, Shard::new(k, 3).unwrap()).len())
            .collect();
        assert_eq!(sizes, vec![4, 3, 3]);
    }

    #[test]
    fn shard_ignores_input_order() {
        let mut subjects = names(7);
        let a = shard(&subjects, Shard::new(2, 3).unwrap());
        subjects.reverse();
        assert_eq!(shard(&subjects, Shard::new(2, 3).unwrap()), a);
        assert_eq!(
            a.iter().map(|s| s.name.as_str()).collect::<Vec<_>>(),
            ["m-001", "m-004"]
        );
    }

    #[test]
    fn parse_rejects_bad_k_and_n() {
        assert_eq!(Shard::parse("3/10").unwrap(), Shard { k: 3, n: 10 });
        assert_eq!(Shard::parse(" 1 / 1 ").unwrap(), Shard::ALL);
        for bad in ["0/3", "4/3", "1/0", "3", "a/b", "-1/3", "1/3/4", ""] {
            assert!(Shard::parse(bad).is_err(), "{bad} accepted");
        }
    }
}

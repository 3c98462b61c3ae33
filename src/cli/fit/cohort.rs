//! `trialdesk fit COHORT_DIR`: every subject folder of a cohort (or one shard of it), fitted in
//! parallel, one table row per subject.
//!
//! Subjects run on rayon's global pool and each fit's own parallel parts (grid, starts,
//! bootstrap replicates) run on the same pool, so two cores stay two busy threads whatever
//! the nesting; `RAYON_NUM_THREADS` caps both. One subject's failure never stops the others;
//! the exit code is 1 when any failed.

use super::{fit_subject, print, Args, Bar, CliError, CmdResult, SubjectFit};
use crate::cohort::{self as core, Shard};
use crate::data::meta::SESSION_FILE;
use crate::fit::{report::num, FitOptions, NoProgress};
use std::fmt::Write as _;
use std::path::Path;

/// A folder of subject folders: not a session, not a subject, and subjects are found in it.
pub(super) fn is_cohort(path: &Path) -> bool {
    path.is_dir()
        && !path.join(SESSION_FILE).is_file()
        && !core::is_subject_dir(path)
        && core::discover_subjects(path).is_ok()
}

pub(super) fn run(args: &Args, opts: &FitOptions, which: Shard) -> CmdResult {
    if which.n > 1 && args.out.is_none() {
        eprintln!(
            "warning: --shard {which} without --out: the tables are not written, so there is \
             nothing for `trialdesk merge` to join"
        );
    }
    let bar = Bar::new();
    if bar.terminal {
        eprintln!(
            "fitting the subjects of {} (shard {which}) in parallel; on a rig computer that is \
             acquiring, stop and rerun at low priority: nice -n 19 {}",
            args.path.display(),
            super::command_line()
        );
    }
    bar.show_now();
    let run = core::run_cohort(&args.path, which, &bar, |subject: &Path| {
        let name = subject
            .file_name()
            .map(|n| n.to_string_lossy().into_owned())
            .unwrap_or_default();
        let out_dir = args.out.as_ref().map(|d| d.join(&name));
        let fitted = fit_subject(args, opts, subject, out_dir.as_deref(), &NoProgress, false)?;
        if let Some(dir) = &out_dir {
            // The full report beside the tables: the table below is only the headline.
            let path = dir.join("report.txt");
            crate::safe_write::replace_file(&path, fitted.text.as_bytes())
                .map_err(|e| CliError::failed(e.to_string()))?;
        }
        Ok::<SubjectFit, CliError>(fitted)
    });
    bar.finish();
    let run = run.map_err(|e| CliError::failed(e.to_string()))?;

    let mut s = String::new();
    let _ = writeln!(
        s,
        "trialdesk fit: cohort {} — shard {}: {} of {} subjects, {:.1} s wall time",
        args.path.display(),
        run.shard,
        run.results.len(),
        run.cohort_size,
        run.elapsed.as_secs_f64()
    );
    let _ = writeln!(
        s,
        "{:<16} {:>8} {:>6} {:>8} {:>8} {:>10} {:>10} {:>10} {:>7} {:>7}  status",
        "subject",
        "sessions",
        "trials",
        "windows",
        "excluded",
        "alpha",
        "gamma",
        "gain",
        "R²",
        "time_s"
    );
    let mut failed = 0;
    for r in &run.results {
        let name = crate::text::for_text(&r.subject.name);
        let secs = r.elapsed.as_secs_f64();
        match &r.result {
            Ok(f) => {
                let p = f.outcome.best.params;
                let status = match &f.save_error {
                    Some(_) => "ok (parameters not saved beside the data)",
                    None => "ok",
                };
                let _ = writeln!(
                    s,
                    "{:<16} {:>8} {:>6} {:>8} {:>8} {:>10} {:>10} {:>10} {:>7} {:>7.1}  {status}",
                    name,
                    f.n_sessions,
                    f.n_trials,
                    f.outcome.n_included,
                    f.n_excluded,
                    num(p.alpha),
                    num(p.gamma),
                    num(f.outcome.best.linear.gain),
                    num(f.outcome.r_squared),
                    secs
                );
            }
            Err(e) => {
                failed += 1;
                let _ = writeln!(
                    s,
                    "{name:<16} {:>8} {:>6} {:>8} {:>8} {:>10} {:>10} {:>10} {:>7} {secs:>7.1}  failed",
                    "-", "-", "-", "-", "-", "-", "-", "-"
                );
                eprintln!("trialdesk: {}: {}", name, crate::text::for_text(&e.message));
            }
        }
    }
    let _ = writeln!(
        s,
        "gamma per {} s bin; excluded = trials marked exclude; full reports{}",
        args.dt,
        match &args.out {
            Some(d) => format!(" in {}/<subject>/report.txt", d.display()),
            None => ": fit one subject folder, or add --out DIR".to_string(),
        }
    );
    let replaced: Vec<&String> = run
        .results
        .iter()
        .filter_map(|r| r.result.as_ref().ok()?.replaced.as_ref())
        .collect();
    if !replaced.is_empty() {
        let _ = writeln!(
            s,
            "Saved fits replaced that were made with other options ({}):",
            replaced.len()
        );
        for r in replaced {
            let _ = writeln!(s, "  {r}");
        }
    }
    if let Some(dir) = &args.out {
        let _ = writeln!(
            s,
            "Tables written to {}/<subject>/params.csv and trials.csv; once every shard is done, \
             join them: trialdesk merge {}",
            dir.display(),
            dir.display()
        );
    }
    if failed > 0 {
        let _ = writeln!(
            s,
            "{failed} of {} subject(s) failed (messages on stderr); the others are complete",
            run.results.len()
        );
    }
    print(&s)?;
    Ok(if failed > 0 { 1 } else { 0 })
}

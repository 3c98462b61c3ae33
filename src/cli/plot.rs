//! `trialdesk plot PATH --out DIR`: SVG pictures for a lab meeting — learning curves,
//! observed vs predicted per trial (from the saved fit) and one heat map per session.
//!
//! Thin shell: load → observations → marks → day rows (and a model pass at the saved fit's
//! parameters) → `crate::plots` → files in `--out` only.

use super::obs_args::ObsArgs;
use super::{CliError, CmdResult};
use crate::data::{self, Session};
use crate::fit::dataset;
use crate::fit::saved::fitted_window_deltas;
use crate::marks::{MarkKind, MarkState};
use crate::model::{self, layout_subject};
use crate::obs::{
    alignment_time, group_by_type, latest_reward_s, observe_lenient, ObsOptions, SessionActivity,
    Signal, TrialObs, TrialType,
};
use crate::plan::{measurement, standing_marks, CheckedFit, MarksPolicy};
use crate::plots::{self, fit_trials, HeatMap, TrialCurves};
use crate::summary::{day_rows, ModelTraces};
use std::collections::HashMap;
use std::path::{Path, PathBuf};

#[derive(clap::Args, Debug, Clone)]
#[command(after_help = "Writes, into --out only:\n  \
learning_curves.svg   cue and reward responses and model δ by day and by trial\n  \
fit_trials.svg        observed vs predicted per trial (needs a saved fit: trialdesk fit PATH)\n  \
heatmap_<session>.svg trial × time activity of each session\n\
Model δ and predictions are recomputed from the saved fit (trialdesk-fit.toml) with today's \
marks; without one the model panels say so. Trials marked exclude are left out of the curves \
and drawn hollow in fit_trials.svg. A cohort folder (a folder of subject folders) gets one \
sub-folder of --out per subject.")]
pub struct Args {
    /// A subject folder, one session folder (heat map and curves of that session only), or a
    /// cohort folder of subject folders (one sub-folder of --out per subject)
    pub path: PathBuf,
    /// Folder to write the SVG files into (created if needed)
    #[arg(long, value_name = "DIR")]
    pub out: PathBuf,
    #[command(flatten)]
    pub obs: ObsArgs,
    /// Draw excluded trials like the others; an unreadable marks.csv is then a warning instead
    /// of an error
    #[arg(long)]
    pub ignore_marks: bool,
    /// Heat map bin width, seconds
    #[arg(long, default_value_t = 0.05, value_name = "SECONDS")]
    pub heat_bin: f64,
    /// Only the heat maps of these sessions (folder names; repeat the option for more)
    #[arg(long, value_name = "NAME")]
    pub session: Vec<String>,
    /// Leave the model out even when a saved fit exists
    #[arg(long)]
    pub no_model: bool,
}

fn warn(msg: impl std::fmt::Display) {
    eprintln!("trialdesk: warning: {msg}");
}

fn unit_label(signal: &Signal) -> &'static str {
    match signal {
        Signal::Photometry => "ΔF/F",
        Signal::Spikes { .. } => "spikes/s",
    }
}

/// A session folder name as a file-name part: anything but letters, digits, '-', '_' and '.'
/// becomes '_' (folder names come from data and may hold anything).
pub fn file_part(name: &str) -> String {
    let s: String = name
        .chars()
        .map(|c| {
            if c.is_ascii_alphanumeric() || matches!(c, '-' | '_' | '.') {
                c
            } else {
                '_'
            }
        })
        .collect();
    match s.trim_matches('.') {
        "" => "session".to_string(),
        t => t.to_string(),
    }
}

/// One session's heat map: rows grouped by trial type (cue and what happened; uncued rewards
/// last), trials in order within a group, from the baseline start to the longest reward
/// delay + 1 s; each row carries its own cue and reward times.
fn session_heatmap(
    session: &Session,
    opts: &ObsOptions,
    marks: &MarkState,
    bin_s: f64,
) -> Result<HeatMap, String> {
    let act = SessionActivity::new(session, &opts.signal).map_err(|e| e.to_string())?;
    let mut trials: Vec<(&data::Trial, f64, TrialType)> = Vec::new();
    let mut groups: Vec<(String, usize)> = Vec::new();
    for (ty, members) in group_by_type(session) {
        let before = trials.len();
        trials.extend(members.iter().filter_map(|&i| {
            let t = &session.trials[i];
            Some((t, alignment_time(t)?, ty.clone()))
        }));
        if trials.len() > before {
            groups.push((ty.label(session), trials.len() - before));
        }
    }
    let from = opts.baseline.0.min(0.0);
    let to = latest_reward_s(session) + model::POST_S;
    let t0s: Vec<f64> = trials.iter().map(|(_, t0, _)| *t0).collect();
    let rows = act.traces(&t0s, from, to, bin_s);
    let row_labels = trials
        .iter()
        .map(|(t, _, _)| {
            let mark = match marks.marks.get(&t.number).map(|m| m.kind) {
                Some(MarkKind::Exclude) => " ✗",
                Some(MarkKind::Suspect) => " ?",
                _ => "",
            };
            format!("{}{mark}", t.number)
        })
        .collect();
    let row_events = trials
        .iter()
        .map(|(t, t0, _)| {
            // Every cue onset and every reward of the trial (events.csv rows included).
            t.all_events()
                .iter()
                .map(|e| {
                    let name = match e.kind {
                        data::EventKind::Cue => "cue",
                        data::EventKind::Reward => "reward",
                    };
                    (e.onset_s - t0, name.to_string())
                })
                .collect()
        })
        .collect();
    Ok(HeatMap {
        title: format!("{} — {}", session.name, opts.signal.label()),
        row_labels,
        rows,
        groups,
        from_s: from,
        bin_s,
        row_events,
        unit: unit_label(&opts.signal).to_string(),
    })
}

fn write_svg(
    dir: &Path,
    name: &str,
    svg: &str,
    written: &mut Vec<PathBuf>,
) -> Result<(), CliError> {
    let path = dir.join(name);
    crate::safe_write::replace_file(&path, svg.as_bytes())
        .map_err(|e| CliError::failed(e.to_string()))?;
    written.push(path);
    Ok(())
}

pub fn run(args: Args) -> CmdResult {
    let is_cohort = args.path.is_dir()
        && !args.path.join(data::meta::SESSION_FILE).is_file()
        && !crate::cohort::is_subject_dir(&args.path);
    if !is_cohort {
        return run_subject(args);
    }
    let subjects = crate::cohort::discover_subjects(&args.path)
        .map_err(|e| CliError::failed(e.to_string()))?;
    for s in subjects {
        run_subject(Args {
            path: s.path.clone(),
            out: args.out.join(&s.name),
            ..args.clone()
        })?;
    }
    Ok(0)
}

/// The pictures of one subject (or session) folder.
fn run_subject(args: Args) -> CmdResult {
    if !(args.heat_bin > 0.0 && args.heat_bin.is_finite()) {
        return Err(CliError::usage(format!(
            "--heat-bin {} must be a bin width in seconds > 0",
            args.heat_bin
        )));
    }
    let loaded = data::load(&args.path).map_err(|f| {
        CliError::failed(format!(
            "{}\n{}: data did not load; nothing drawn",
            f.to_string().trim_end(),
            args.path.display()
        ))
    })?;
    for w in &loaded.warnings {
        eprintln!("{w}");
    }
    let subject = loaded.subject;
    let single_session = args.path.join(data::meta::SESSION_FILE).is_file();
    let saved = if single_session || args.no_model {
        None
    } else {
        CheckedFit::load(&subject.root)?
    };
    let params = saved.as_ref().map(|f| f.params);
    let m = measurement(&subject, &args.obs.request(), saved.as_ref())?;
    if let Some(note) = m.choice.missing_note() {
        warn(format!("{note}; their responses are left blank"));
    }
    let opts = m.obs.clone();
    let (obs, problems) =
        observe_lenient(&subject, &opts).map_err(|e| CliError::usage(e.to_string()))?;
    if !problems.is_empty() && obs.iter().all(|o| o.cue.is_none() && o.reward.is_none()) {
        return Err(CliError::failed(problems[0].to_string()));
    }
    for p in &problems {
        warn(format!("{p}; its responses are left out"));
    }
    let policy = MarksPolicy::asked(args.ignore_marks);
    let standing = standing_marks(&subject, policy)?;
    for w in &standing.warnings {
        eprintln!("{w}");
    }
    let marks = standing.in_force(policy);
    for s in &args.session {
        if !subject.sessions.iter().any(|x| &x.name == s) {
            return Err(CliError::usage(format!(
                "--session '{s}': no such session folder in {}",
                subject.root.display()
            )));
        }
    }

    crate::safe_write::create_dirs(&args.out).map_err(|e| CliError::failed(e.to_string()))?;
    let name = subject
        .sessions
        .first()
        .map(|s| s.meta.subject.clone())
        .unwrap_or_else(|| args.path.display().to_string());
    let unit = unit_label(&opts.signal);
    let mut written = Vec::new();

    // One model pass at the saved parameters serves the curves and the predictions.
    let model_run = params.map(|p| {
        let spans = layout_subject(&subject, p.dt);
        let run = model::run(&spans, subject.cue_names().len(), &p);
        (spans, run, p)
    });
    let kernel = m.kernel;
    let traces = model_run.as_ref().map(|(spans, run, p)| ModelTraces {
        spans,
        run,
        dt: p.dt,
        opts: &opts,
        kernel,
    });
    let days = day_rows(&subject, &obs, &marks, traces);
    let excluded = |o: &TrialObs| {
        marks
            .get(o.session)
            .is_some_and(|m| m.is_excluded(subject.sessions[o.session].trials[o.trial].number))
    };
    let kept: Vec<TrialObs> = obs.iter().filter(|o| !excluded(o)).cloned().collect();
    let deltas = model_run.as_ref().map(|(spans, run, p)| {
        let index: HashMap<(usize, usize), usize> = spans
            .iter()
            .enumerate()
            .map(|(i, s)| ((s.session, s.trial), i))
            .collect();
        kept.iter()
            .map(|o| {
                let &i = index.get(&(o.session, o.trial))?;
                Some(fitted_window_deltas(
                    kernel,
                    &spans[i],
                    run.trial_delta(i),
                    &opts,
                    p.dt,
                ))
            })
            .collect::<Vec<_>>()
    });
    let curves = TrialCurves {
        obs: &kept,
        deltas: deltas.as_deref(),
        unit,
    };
    let svg = plots::learning_curves(&name, &days, &curves)
        .map_err(|e| CliError::failed(e.to_string()))?;
    write_svg(&args.out, "learning_curves.svg", &svg, &mut written)?;

    match (&saved, &model_run) {
        (Some(fit), Some((_, _, p))) => {
            let by = fit.fit.scale_by.as_deref().and_then(dataset::ScaleBy::parse);
            let data = match by.filter(|b| b.per_unit()) {
                // A per-unit fit predicts each unit's own responses.
                Some(by) => crate::fit::units::per_unit(&subject, &opts, p.dt, &marks, false, by)
                    .map_err(|e| CliError::failed(format!("fit_trials.svg: {e}")))?,
                None => {
                    let data = dataset::build(&subject, &obs, &opts, p.dt, &marks, false);
                    let data = match kernel {
                        Some(k) => dataset::with_sensor_kernel(data, k, &opts),
                        None => data,
                    };
                    fit.fit.with_groups(data, &subject)
                }
            };
            // The representation was checked with the saved fit.
            let predicted = fit.fit.predictions(&data).unwrap_or_default();
            let rows = fit_trials::rows_from(&data, &predicted);
            let title = format!(
                "{name}, {} α={:.4} γ={:.4} λ={:.3} (saved {})",
                fit.fit.representation, fit.fit.alpha, fit.fit.gamma, fit.fit.lambda, fit.fit.fitted_at
            );
            let svg = plots::fit_trials(&title, &rows, unit)
                .map_err(|e| CliError::failed(e.to_string()))?;
            write_svg(&args.out, "fit_trials.svg", &svg, &mut written)?;
        }
        _ if !single_session && !args.no_model => eprintln!(
            "trialdesk: fit_trials.svg not written: no usable saved fit in {} (run trialdesk fit {})",
            subject.root.display(),
            args.path.display()
        ),
        _ => {}
    }

    let mut used: HashMap<String, usize> = HashMap::new();
    for (si, session) in subject.sessions.iter().enumerate() {
        if !args.session.is_empty() && !args.session.contains(&session.name) {
            continue;
        }
        let empty = MarkState::default();
        match session_heatmap(
            session,
            &opts,
            marks.get(si).unwrap_or(&empty),
            args.heat_bin,
        ) {
            Ok(map) => {
                let svg = plots::heatmap(&map).map_err(|e| CliError::failed(e.to_string()))?;
                // Two folder names can map to one file name: number the later ones.
                let part = file_part(&session.name);
                let n = used.entry(part.clone()).or_insert(0);
                *n += 1;
                let file = match *n {
                    1 => format!("heatmap_{part}.svg"),
                    k => format!("heatmap_{part}_{k}.svg"),
                };
                write_svg(&args.out, &file, &svg, &mut written)?;
            }
            Err(e) => warn(format!("{}: no heat map: {e}", session.name)),
        }
    }
    for p in &written {
        println!("{}", p.display());
    }
    Ok(0)
}

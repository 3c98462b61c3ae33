//! `trialdesk summary`: the per-day learning table of a subject (or of every subject of a
//! cohort folder) as text, tidy CSV or Markdown.

use super::{CliError, CmdResult};
use crate::data::{load, Subject};
use crate::fit::saved::{load_saved, saved_path, SavedFit};
use crate::marks::{read_journal, MarkKind, MarkState};
use crate::model::{layout_subject, Representation, TdParams, DEFAULT_DT};
use crate::obs::{observe_lenient, ObsOptions, Signal};
use crate::suggest::RuleSet;
use crate::summary::cohort::{cohort_rows, cohort_subject_dirs};
use crate::summary::render::{self, Format, SubjectSummary, SuggestedCounts};
use crate::summary::{day_rows, suggested_counts, DayRow, ModelTraces};
use std::collections::BTreeMap;
use std::io::Write;
use std::path::{Path, PathBuf};

#[derive(clap::ValueEnum, Clone, Copy, Debug, PartialEq, Eq)]
pub enum FormatArg {
    /// Aligned tables for a terminal
    Text,
    /// Long-form tidy CSV: subject,session,date,day,measure,cue,value,n
    Csv,
    /// Markdown tables for a lab notebook
    Markdown,
}

#[derive(clap::ValueEnum, Clone, Copy, Debug, PartialEq, Eq)]
pub enum SignalArg {
    /// Spikes if the sessions have spikes.csv, else photometry
    Auto,
    Spikes,
    Photometry,
}

/// Observation settings, shared in spirit with `trialdesk fit` (same names and defaults).
#[derive(clap::Args, Debug, Clone)]
pub struct ObsArgs {
    /// Activity to measure responses on
    #[arg(long, value_enum, default_value = "auto")]
    pub signal: SignalArg,
    /// One sorted unit instead of the population mean rate (spikes only)
    #[arg(long)]
    pub unit: Option<String>,
    /// Cue window START,END in seconds after cue onset [default: 0.05,0.35; photometry 0,1;
    /// or the saved fit's]
    #[arg(long, value_name = "START,END", value_parser = parse_window, allow_hyphen_values = true)]
    pub cue_window: Option<(f64, f64)>,
    /// Reward window START,END in seconds after the (expected) reward [default: 0.05,0.35;
    /// photometry 0,1; or the saved fit's]
    #[arg(long, value_name = "START,END", value_parser = parse_window, allow_hyphen_values = true)]
    pub reward_window: Option<(f64, f64)>,
    /// Baseline START,END in seconds relative to cue onset (uncued trials: the reward)
    /// [default: -1,0]
    #[arg(long, value_name = "START,END", value_parser = parse_window, allow_hyphen_values = true)]
    pub baseline: Option<(f64, f64)>,
    /// Response latency in seconds: windows map onto model bins shifted back by it
    /// [default: 0.05; photometry 0; or the saved fit's]
    #[arg(long, value_name = "SECONDS")]
    pub latency: Option<f64>,
}

#[derive(clap::Args, Debug)]
#[command(
    after_long_help = "Per-day learning table: one row per session in training order with trial \
counts by kind, standing exclude/suspect marks, mean cue response per cue, reward response \
(cued rewards), uncued-reward response, omission dip (after the expected reward time) and \
anticipatory licks/s; with a saved fit (trialdesk-fit.toml) or --alpha/--gamma, the model's \
δ summed over the same windows.\n\nA response is the mean activity in a window after the \
event minus the mean in the baseline before cue onset. Trials marked exclude are counted but \
their observations are left out of every mean; CSV rows carry the n of each mean. A cohort \
folder (sub-folders are different animals) adds a table averaged by training day.\n\nA \
last table counts each session's pending suggested marks per rule (the rules of suggest.toml \
in the trialdesk config folder over the shipped defaults); CSV gives one row per rule, \
measure suggested:<rule id>, value the count."
)]
pub struct Args {
    /// A subject folder, one session folder, or a cohort folder of subject folders
    pub path: PathBuf,
    /// Output format
    #[arg(long, value_enum, default_value = "text")]
    pub format: FormatArg,
    /// Write to FILE instead of standard output
    #[arg(long, value_name = "FILE")]
    pub out: Option<PathBuf>,
    #[command(flatten)]
    pub obs: ObsArgs,
    /// Leave out the model δ columns even when a saved fit exists
    #[arg(long)]
    pub no_model: bool,
    /// Model δ at these parameters instead of the saved fit's (needs --gamma too)
    #[arg(long, requires = "gamma")]
    pub alpha: Option<f64>,
    /// Discount per model bin (with --alpha)
    #[arg(long, requires = "alpha")]
    pub gamma: Option<f64>,
    /// Eligibility-trace decay per bin (with --alpha) [default: 0]
    #[arg(long, requires = "alpha")]
    pub lambda: Option<f64>,
    /// Stimulus representation (with --alpha): csc, presence or microstimulus [default: csc]
    #[arg(long, requires = "alpha")]
    pub representation: Option<String>,
}

/// `START,END` seconds.
pub fn parse_window(s: &str) -> Result<(f64, f64), String> {
    let (a, b) = s
        .split_once(',')
        .ok_or_else(|| format!("`{s}`: expected START,END in seconds, e.g. 0.05,0.35"))?;
    let num = |x: &str| {
        x.trim()
            .parse::<f64>()
            .ok()
            .filter(|v| v.is_finite())
            .ok_or_else(|| format!("`{x}` is not a number of seconds"))
    };
    let (a, b) = (num(a)?, num(b)?);
    if a >= b {
        return Err(format!("`{s}`: START must be before END"));
    }
    Ok((a, b))
}

pub fn run(args: Args) -> CmdResult {
    if let Some(r) = &args.representation {
        if Representation::parse(r).is_none() {
            return Err(CliError::usage(format!(
                "--representation `{r}`: expected csc, presence or microstimulus"
            )));
        }
    }
    if let (Some(a), Some(g)) = (args.alpha, args.gamma) {
        let l = args.lambda.unwrap_or(0.0);
        if !(a > 0.0 && a <= 1.0 && (0.0..=1.0).contains(&g) && (0.0..=1.0).contains(&l)) {
            return Err(CliError::usage(
                "--alpha must be in (0, 1], --gamma and --lambda in [0, 1]",
            ));
        }
    }
    let rules = match super::check::user_rules() {
        Ok(r) => Some(r),
        Err(d) => {
            eprintln!("{d}");
            None
        }
    };
    let dirs = cohort_subject_dirs(&args.path).unwrap_or_else(|| vec![args.path.clone()]);
    let mut summaries = Vec::new();
    let mut suggested: Vec<SuggestedCounts> = Vec::new();
    for dir in &dirs {
        let (summary, counts) = summarise(dir, &args, rules.as_ref())?;
        summaries.push(summary);
        suggested.extend(counts);
    }
    let cohort = (summaries.len() > 1).then(|| {
        let rows: Vec<&[DayRow]> = summaries.iter().map(|s| s.rows.as_slice()).collect();
        cohort_rows(&rows)
    });
    let format = match args.format {
        FormatArg::Text => Format::Text,
        FormatArg::Csv => Format::Csv,
        FormatArg::Markdown => Format::Markdown,
    };
    let text = render::render_with(format, &summaries, &suggested, cohort.as_deref())
        .map_err(|e| CliError::failed(format!("writing CSV: {e}")))?;
    // Names in the tables come from the data; CSV keeps them as they are.
    let text = match format {
        Format::Csv => text,
        _ => crate::util::printable(&text).into_owned(),
    };
    match &args.out {
        Some(path) => crate::safe_write::replace_file(path, text.as_bytes())
            .map_err(|e| CliError::failed(e.to_string()))?,
        None => {
            let mut out = super::out::stdout();
            match out.write_all(text.as_bytes()).and_then(|_| out.flush()) {
                Err(e) if e.kind() == std::io::ErrorKind::BrokenPipe => {}
                r => r?,
            }
        }
    }
    Ok(0)
}

fn warn(msg: impl std::fmt::Display) {
    eprintln!("trialdesk: warning: {msg}");
}

/// Load, observe and tabulate one subject (or one session folder); with `rules` (and the
/// file they were read from), also its pending suggested marks.
fn summarise(
    dir: &Path,
    args: &Args,
    rules: Option<&(RuleSet, Option<PathBuf>)>,
) -> Result<(SubjectSummary, Option<SuggestedCounts>), CliError> {
    let loaded = load(dir).map_err(|f| CliError::failed(f.to_string().trim_end().to_string()))?;
    for w in &loaded.warnings {
        eprintln!("{w}");
    }
    let subject = loaded.subject;
    let single_session = dir.join("session.toml").exists();
    let saved = if single_session || args.no_model || args.alpha.is_some() {
        None
    } else {
        match load_saved(&subject.root) {
            None => None,
            Some(Ok(fit)) => Some(fit),
            Some(Err(e)) => {
                warn(format!("{e}; model δ columns left out"));
                None
            }
        }
    };
    let opts = obs_options(&subject, &args.obs, saved.as_ref())?;
    let (obs, problems) =
        observe_lenient(&subject, &opts).map_err(|e| CliError::usage(e.to_string()))?;
    if !problems.is_empty() && obs.iter().all(|o| o.cue.is_none() && o.reward.is_none()) {
        // Nothing measured anywhere: that is a failed job, not a table of blanks.
        return Err(CliError::failed(problems[0].to_string()));
    }
    for p in &problems {
        warn(format!("{p}; its responses are left blank"));
    }
    let marks = read_marks(&subject)?;

    let mut notes = vec![format!(
        "activity: {}; cue window {}-{} s after cue onset, reward window {}-{} s after the \
         (expected) reward, each minus the mean in {} to {} s around cue onset (uncued: reward)",
        opts.signal.label(),
        opts.cue_window.0,
        opts.cue_window.1,
        opts.reward_window.0,
        opts.reward_window.1,
        opts.baseline.0,
        opts.baseline.1
    )];
    if opts.signal == Signal::Photometry {
        if let Some(methods) = crate::obs::photometry::photometry_methods(&subject) {
            notes.extend(methods.lines().map(|m| format!("photometry: {m}")));
        }
    }
    notes.push(exclusion_note(&marks));
    let suggested = rules.map(|(rules, _)| suggested_counts(&subject, &marks, rules));
    notes.push(match rules {
        Some((_, Some(file))) => format!(
            "suggested marks: pending ones per rule, rules from {} over the shipped defaults",
            file.display()
        ),
        Some((_, None)) => "suggested marks: pending ones per rule, shipped default rules".into(),
        None => "suggested marks: left out (the rule file has an error, see above)".into(),
    });

    let params = model_params(&subject, args, saved.as_ref(), single_session, &mut notes)?;
    let model_run = params.map(|p| {
        let spans = layout_subject(&subject, p.dt);
        let r = crate::model::run(&spans, subject.cue_names().len(), &p);
        (spans, r, p.dt)
    });
    let traces = model_run.as_ref().map(|(spans, r, dt)| ModelTraces {
        spans,
        run: r,
        dt: *dt,
        opts: &opts,
        kernel: saved.as_ref().and_then(|f| f.sensor_kernel(&opts)),
    });
    let rows = day_rows(&subject, &obs, &marks, traces);
    let name = subject
        .sessions
        .first()
        .map(|s| s.meta.subject.clone())
        .unwrap_or_else(|| dir.display().to_string());
    Ok((
        SubjectSummary {
            subject: name,
            rows,
            notes,
        },
        suggested,
    ))
}

/// The observation options in force: command-line windows, else the saved fit's, else the
/// signal's defaults (shared by `summary` and `plot` so both measure the same responses).
pub(super) fn obs_options(
    subject: &Subject,
    a: &ObsArgs,
    saved: Option<&SavedFit>,
) -> Result<ObsOptions, CliError> {
    let signal = match a.signal {
        SignalArg::Spikes => Signal::Spikes {
            unit: a.unit.clone(),
        },
        SignalArg::Photometry => Signal::Photometry,
        SignalArg::Auto => {
            if subject.sessions.iter().any(|s| s.spikes.is_some()) || a.unit.is_some() {
                Signal::Spikes {
                    unit: a.unit.clone(),
                }
            } else if subject.sessions.iter().any(|s| s.photometry.is_some()) {
                Signal::Photometry
            } else {
                return Err(CliError::failed(format!(
                    "{}: no activity to measure: no session has spikes.csv or photometry.csv",
                    subject.root.display()
                )));
            }
        }
    };
    if a.unit.is_some() && signal == Signal::Photometry {
        return Err(CliError::usage("--unit applies to spikes, not photometry"));
    }
    let base = match signal {
        Signal::Photometry => ObsOptions::photometry(),
        _ => ObsOptions::default(),
    };
    let from_fit = |f: fn(&SavedFit) -> Option<[f64; 2]>| saved.and_then(f).map(|[a, b]| (a, b));
    let opts = ObsOptions {
        cue_window: a
            .cue_window
            .or(from_fit(|s| s.cue_window_s))
            .unwrap_or(base.cue_window),
        reward_window: a
            .reward_window
            .or(from_fit(|s| s.reward_window_s))
            .unwrap_or(base.reward_window),
        baseline: a
            .baseline
            .or(from_fit(|s| s.baseline_window_s))
            .unwrap_or(base.baseline),
        latency: a
            .latency
            .or(saved.and_then(|s| s.latency_s))
            .unwrap_or(base.latency),
        signal,
    };
    opts.validate()
        .map_err(|e| CliError::usage(e.to_string()))?;
    Ok(opts)
}

fn read_marks(subject: &Subject) -> Result<Vec<MarkState>, CliError> {
    subject
        .sessions
        .iter()
        .map(|s| {
            let j = read_journal(&s.dir).map_err(|e| CliError::failed(e.to_string()))?;
            if let Some((line, _)) = &j.torn_tail {
                warn(format!(
                    "{}:{line}: incomplete last line ignored",
                    j.path.display()
                ));
            }
            Ok(j.state())
        })
        .collect()
}

/// "N trials excluded (reason ×k, ...)" and what that means for the means.
fn exclusion_note(marks: &[MarkState]) -> String {
    let mut reasons: BTreeMap<String, usize> = BTreeMap::new();
    let mut suspect = 0;
    for m in marks.iter().flat_map(|s| s.marks.values()) {
        match m.kind {
            MarkKind::Exclude => {
                let r = if m.reason.trim().is_empty() {
                    "no reason given".to_string()
                } else {
                    m.reason.clone()
                };
                *reasons.entry(r).or_default() += 1;
            }
            MarkKind::Suspect => suspect += 1,
            _ => {}
        }
    }
    let excluded: usize = reasons.values().sum();
    if excluded == 0 {
        return format!(
            "exclusions: none (no exclude marks); {suspect} suspect trial(s), kept in the means"
        );
    }
    let list: Vec<String> = reasons.iter().map(|(r, n)| format!("{r} {n}")).collect();
    format!(
        "exclusions: {excluded} trial(s) marked exclude ({}); their observations are left out \
         of every mean, trial counts include them; {suspect} suspect trial(s), kept in the means",
        list.join(", ")
    )
}

/// The parameters for the model δ columns, and a note saying where they came from.
fn model_params(
    subject: &Subject,
    args: &Args,
    saved: Option<&SavedFit>,
    single_session: bool,
    notes: &mut Vec<String>,
) -> Result<Option<TdParams>, CliError> {
    if args.no_model {
        notes.push("model δ: left out (--no-model)".into());
        return Ok(None);
    }
    if single_session {
        notes.push(
            "model δ: left out for a single session (the model needs the whole training \
             history; summarise the subject folder)"
                .into(),
        );
        return Ok(None);
    }
    if let (Some(alpha), Some(gamma)) = (args.alpha, args.gamma) {
        let representation = args
            .representation
            .as_deref()
            .and_then(Representation::parse)
            .unwrap_or(Representation::Csc);
        let p = TdParams {
            alpha,
            gamma,
            lambda: args.lambda.unwrap_or(0.0),
            dt: DEFAULT_DT,
            representation,
        };
        notes.push(format!(
            "model δ: {} (given on the command line)",
            describe(&p)
        ));
        return Ok(Some(p));
    }
    let Some(fit) = saved else {
        notes.push(format!(
            "model δ: left out, no saved fit at {} (run `trialdesk fit`, or give --alpha and --gamma)",
            saved_path(&subject.root).display()
        ));
        return Ok(None);
    };
    let Some(representation) = Representation::parse(&fit.representation) else {
        warn(format!(
            "{}: unknown representation `{}`; model δ columns left out",
            saved_path(&subject.root).display(),
            fit.representation
        ));
        return Ok(None);
    };
    let p = TdParams {
        alpha: fit.alpha,
        gamma: fit.gamma,
        lambda: fit.lambda,
        dt: if fit.dt > 0.0 { fit.dt } else { DEFAULT_DT },
        representation,
    };
    notes.push(format!(
        "model δ: {} from {} (fitted {}{})",
        describe(&p),
        saved_path(&subject.root).display(),
        fit.fitted_at,
        if fit.ignore_marks {
            ", marks ignored"
        } else {
            ""
        }
    ));
    Ok(Some(p))
}

fn describe(p: &TdParams) -> String {
    format!(
        "{} alpha={} gamma={} lambda={} dt={} s",
        p.representation.name(),
        p.alpha,
        p.gamma,
        p.lambda,
        p.dt
    )
}

//! `trialdesk summary`: the per-day learning table of a subject (or of every subject of a
//! cohort folder) as text, tidy CSV or Markdown.

use super::obs_args::ObsArgs;
use super::{CliError, CmdResult};
use crate::data::{load, Subject};
use crate::fit::saved::saved_path;
use crate::marks::{MarkKind, MarkState};
use crate::model::{layout_subject, Representation, TdParams, DEFAULT_DT};
use crate::obs::{observe_lenient, Signal};
use crate::plan::{measurement, standing_marks, CheckedFit, MarksPolicy};
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
    /// Count excluded trials' observations in the means too; an unreadable marks.csv is then
    /// a warning instead of an error
    #[arg(long)]
    pub ignore_marks: bool,
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
        _ => crate::text::for_text(&text).into_owned(),
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
        CheckedFit::load(&subject.root)?
    };
    let m = measurement(&subject, &args.obs.request(), saved.as_ref())?;
    if let Some(note) = m.choice.missing_note() {
        warn(format!("{note}; their responses are left blank"));
    }
    let opts = m.obs.clone();
    let (obs, problems) =
        observe_lenient(&subject, &opts).map_err(|e| CliError::usage(e.to_string()))?;
    if !problems.is_empty() && obs.iter().all(|o| o.cue.is_none() && o.reward.is_none()) {
        // Nothing measured anywhere: that is a failed job, not a table of blanks.
        return Err(CliError::failed(problems[0].to_string()));
    }
    for p in &problems {
        warn(format!("{p}; its responses are left blank"));
    }
    let policy = MarksPolicy::asked(args.ignore_marks);
    let standing = standing_marks(&subject, policy)?;
    for w in &standing.warnings {
        eprintln!("{w}");
    }
    let exclusions = match args.ignore_marks {
        false => exclusion_note(&standing.per_session),
        true => format!(
            "exclusions: ignored (--ignore-marks); every trial's observations are in the means \
             [{}]",
            exclusion_note(&standing.per_session)
        ),
    };
    let marks = standing.in_force(policy);
    let journal = standing.per_session;

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
    if opts.zscore {
        notes
            .push("z-score: each response divided by the SD of its trial's baseline window".into());
    }
    if opts.signal == Signal::Photometry {
        if let Some(methods) =
            crate::obs::photometry::photometry_methods_with(&subject, opts.control_fit)
        {
            notes.extend(methods.lines().map(|m| format!("photometry: {m}")));
        }
    }
    notes.extend(crate::summary::rig_note(&subject));
    notes.push(exclusions);
    let suggested = rules.map(|(rules, _)| suggested_counts(&subject, &journal, rules));
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
        kernel: m.kernel,
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
    saved: Option<&CheckedFit>,
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
    notes.push(format!("model δ: {}", fit.describe()));
    notes.extend(
        crate::fit::saved::readout_lines(&fit.fit)
            .into_iter()
            .map(|l| format!("readout: {l}")),
    );
    Ok(Some(fit.params))
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

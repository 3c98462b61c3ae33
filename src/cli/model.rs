//! `trialdesk model`: evaluate the TD model at given parameters (or at the subject's saved fit)
//! and write per-bin traces.
//!
//! One row per trial bin k = 0..K-1 (the terminal step is not a bin):
//! `session,trial,bin,time_s,value,delta,cue,trial_type,outcome,aligned_to`; the numbers in
//! shortest round-trip form, `time_s` exactly k × dt at dt's decimals.

use super::{CliError, CmdResult};
use crate::data;
use crate::fit::saved::saved_path;
use crate::model::labels::{bin_time_text, trial_labels};
use crate::model::{self, defaults, layout_subject_with_skips, Representation, TdParams};
use crate::plan::CheckedFit;
use crate::util::fmt_f64;
use std::io::Write;
use std::path::{Path, PathBuf};

#[derive(clap::Args, Debug)]
#[command(
    after_help = "Without --alpha and --gamma the subject's saved fit (trialdesk-fit.toml, written \
by `trialdesk fit`) gives every parameter; stderr says which file was used.\n\
Columns: session, trial, bin, time_s, value, delta, cue, trial_type, outcome, aligned_to. \
Bin 0 of a trial starts at its cue onset, or at the reward on uncued trials (aligned_to: \
cue_onset or reward); time_s = bin x dt seconds after that moment. trial_type is cs_plus (the \
cue declares a reward delay), cs_minus (never rewarded) or uncued; outcome is reward, \
omission or none."
)]
pub struct Args {
    /// A subject folder or one session folder
    pub path: PathBuf,
    /// Learning rate α, in (0, 1] [default: the saved fit's]
    #[arg(long, allow_negative_numbers = true, requires = "gamma")]
    pub alpha: Option<f64>,
    /// Discount γ per model bin, in [0, 1] [default: the saved fit's]
    #[arg(long, allow_negative_numbers = true, requires = "alpha")]
    pub gamma: Option<f64>,
    /// Eligibility-trace decay λ per model bin, in [0, 1] [default: 0 with --alpha/--gamma,
    /// else the saved fit's]
    #[arg(long, allow_negative_numbers = true)]
    pub lambda: Option<f64>,
    /// Stimulus representation: csc, presence or microstimulus [default: csc with
    /// --alpha/--gamma, else the saved fit's]
    #[arg(long)]
    pub representation: Option<String>,
    /// Model bin width, seconds [default: 0.05 with --alpha/--gamma, else the saved fit's]
    #[arg(long, allow_negative_numbers = true)]
    pub dt: Option<f64>,
    /// Output CSV file, or - for standard output
    #[arg(long)]
    pub out: PathBuf,
}

/// Checks the ranges of the brief; a NaN fails every one of them.
fn params(args: &Args, alpha: f64, gamma: f64) -> Result<TdParams, CliError> {
    let in_closed = |x: f64| (0.0..=1.0).contains(&x);
    let lambda = args.lambda.unwrap_or(defaults::MODEL_LAMBDA);
    let dt = args.dt.unwrap_or(defaults::DT);
    if !(alpha > 0.0 && alpha <= 1.0) {
        return Err(CliError::usage(format!(
            "--alpha {alpha} is out of range (expected 0 < alpha <= 1)"
        )));
    }
    if !in_closed(gamma) {
        return Err(CliError::usage(format!(
            "--gamma {gamma} is out of range (expected 0 <= gamma <= 1)"
        )));
    }
    if !in_closed(lambda) {
        return Err(CliError::usage(format!(
            "--lambda {lambda} is out of range (expected 0 <= lambda <= 1)"
        )));
    }
    if !(dt > 0.0 && dt.is_finite()) {
        return Err(CliError::usage(format!(
            "--dt {dt} is out of range (expected a bin width in seconds > 0)"
        )));
    }
    let name = args
        .representation
        .as_deref()
        .unwrap_or(defaults::REPRESENTATION_NAME);
    let representation = Representation::parse(name).ok_or_else(|| {
        CliError::usage(format!(
            "--representation '{name}' is not known (expected csc, presence or microstimulus)"
        ))
    })?;
    Ok(TdParams {
        alpha,
        gamma,
        lambda,
        dt,
        representation,
    })
}

/// The saved fit beside the data: in the folder itself, or, for a session folder, in its
/// subject folder.
fn saved_fit_params(path: &Path, args: &Args) -> Result<TdParams, CliError> {
    if args.lambda.is_some() || args.representation.is_some() || args.dt.is_some() {
        return Err(CliError::usage(
            "--lambda, --representation and --dt go with --alpha and --gamma; without them \
             every parameter comes from the saved fit",
        ));
    }
    match CheckedFit::find(path)? {
        Some(c) => {
            eprintln!("model: parameters from the saved fit: {}", c.describe());
            Ok(c.params)
        }
        None => Err(CliError::usage(format!(
            "no --alpha/--gamma given and no saved fit at {}; run `trialdesk fit {}` first, or \
             give --alpha and --gamma",
            saved_path(path).display(),
            path.display()
        ))),
    }
}

pub fn run(args: Args) -> CmdResult {
    let params = match (args.alpha, args.gamma) {
        (Some(alpha), Some(gamma)) => params(&args, alpha, gamma)?,
        _ => saved_fit_params(&args.path, &args)?,
    };
    let sc = crate::plan::scope(&args.path);
    let mut only = sc.session.clone();
    let loaded = match data::load(&sc.root) {
        Ok(l) => {
            if let Some(n) = &sc.note {
                eprintln!("model: {n}");
            }
            l
        }
        Err(failure) if only.is_some() => {
            only = None;
            let why = format!(
                "{} problem(s); `trialdesk check {}` lists them",
                failure.diagnostics.iter().filter(|d| d.is_error()).count(),
                sc.root.display()
            );
            eprintln!("model: {}", crate::plan::fallback_note(&args.path, &why));
            load_or_report(&args.path)?
        }
        Err(failure) => return Err(report_failure(&args.path, &failure)),
    };
    let subject = &loaded.subject;
    let (spans, skipped) = layout_subject_with_skips(subject, params.dt);
    for s in &skipped {
        let session = &subject.sessions[s.session];
        eprintln!(
            "{}: warning: trial {} left out of the model: {}",
            session.dir.join("trials.csv").display(),
            session.trials[s.trial].number,
            s.reason
        );
    }
    if spans.is_empty() {
        return Err(CliError::failed(format!(
            "{}: no trials to model",
            args.path.display()
        )));
    }
    let traces = model::run(&spans, subject.cue_names().len(), &params);
    // A session read with its history: every session is modelled, only it is written.
    let wanted = |name: &str| only.as_deref().is_none_or(|o| o == name);

    if args.out.as_os_str() != "-" {
        crate::safe_write::replace_with(&args.out, |w| {
            write_traces(Box::new(w), subject, &spans, &traces, params.dt, &wanted)
        })
        .map_err(|e| CliError::failed(e.to_string()))?;
        return Ok(0);
    }
    let sink: Box<dyn Write> = super::out::stdout();
    match write_traces(sink, subject, &spans, &traces, params.dt, &wanted) {
        Ok(()) => Ok(0),
        // `trialdesk model ... --out - | head` is not a failure.
        Err(e) if e.kind() == std::io::ErrorKind::BrokenPipe => Ok(0),
        Err(e) => Err(CliError::failed(format!("{}: {e}", args.out.display()))),
    }
}

fn report_failure(path: &Path, failure: &data::LoadFailure) -> CliError {
    for d in &failure.diagnostics {
        eprintln!("{d}");
    }
    CliError::failed(format!(
        "{}: data did not load ({} problem(s) above); nothing written",
        path.display(),
        failure.diagnostics.iter().filter(|d| d.is_error()).count()
    ))
}

fn load_or_report(path: &Path) -> Result<data::Loaded, CliError> {
    data::load(path).map_err(|f| report_failure(path, &f))
}

fn write_traces(
    sink: Box<dyn Write + '_>,
    subject: &data::Subject,
    spans: &[model::TrialSpan],
    traces: &model::TdRun,
    dt: f64,
    wanted: &dyn Fn(&str) -> bool,
) -> std::io::Result<()> {
    let mut out = csv::Writer::from_writer(std::io::BufWriter::new(sink));
    out.write_record([
        "session",
        "trial",
        "bin",
        "time_s",
        "value",
        "delta",
        "cue",
        "trial_type",
        "outcome",
        "aligned_to",
    ])?;
    for (i, span) in spans.iter().enumerate() {
        let session = &subject.sessions[span.session];
        if !wanted(&session.name) {
            continue;
        }
        let number = session.trials[span.trial].number.to_string();
        let labels = trial_labels(subject, span);
        let cue = crate::text::for_csv(&labels.cue);
        let (values, deltas) = (traces.trial_value(i), traces.trial_delta(i));
        for k in 0..span.n_bins {
            out.write_record([
                crate::text::for_csv(&session.name).as_ref(),
                number.as_str(),
                &k.to_string(),
                &bin_time_text(k, dt),
                &fmt_f64(values[k]),
                &fmt_f64(deltas[k]),
                cue.as_ref(),
                labels.trial_type,
                labels.outcome,
                labels.aligned_to,
            ])?;
        }
    }
    out.flush()
}

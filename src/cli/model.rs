//! `trialdesk model`: evaluate the TD model at given parameters and write per-bin traces.
//!
//! One row per trial bin k = 0..K-1 (the terminal step is not a bin):
//! `session,trial,bin,time_s,value,delta`, numbers in shortest round-trip form.

use super::{CliError, CmdResult};
use crate::data;
use crate::model::{self, layout_subject_with_skips, Representation, TdParams};
use crate::util::fmt_f64;
use std::io::Write;
use std::path::PathBuf;

#[derive(clap::Args, Debug)]
pub struct Args {
    /// A subject folder or one session folder
    pub path: PathBuf,
    /// Learning rate α, in (0, 1]
    #[arg(long, allow_negative_numbers = true)]
    pub alpha: f64,
    /// Discount γ per model bin, in [0, 1]
    #[arg(long, allow_negative_numbers = true)]
    pub gamma: f64,
    /// Eligibility-trace decay λ per model bin, in [0, 1]
    #[arg(long, default_value_t = 0.0, allow_negative_numbers = true)]
    pub lambda: f64,
    /// Stimulus representation: csc, presence or microstimulus
    #[arg(long, default_value = "csc")]
    pub representation: String,
    /// Model bin width, seconds
    #[arg(long, default_value_t = model::DEFAULT_DT, allow_negative_numbers = true)]
    pub dt: f64,
    /// Output CSV file, or - for standard output
    #[arg(long)]
    pub out: PathBuf,
}

/// Checks the ranges of the brief; a NaN fails every one of them.
fn params(args: &Args) -> Result<TdParams, CliError> {
    let in_closed = |x: f64| (0.0..=1.0).contains(&x);
    if !(args.alpha > 0.0 && args.alpha <= 1.0) {
        return Err(CliError::usage(format!(
            "--alpha {} is out of range (expected 0 < alpha <= 1)",
            args.alpha
        )));
    }
    if !in_closed(args.gamma) {
        return Err(CliError::usage(format!(
            "--gamma {} is out of range (expected 0 <= gamma <= 1)",
            args.gamma
        )));
    }
    if !in_closed(args.lambda) {
        return Err(CliError::usage(format!(
            "--lambda {} is out of range (expected 0 <= lambda <= 1)",
            args.lambda
        )));
    }
    if !(args.dt > 0.0 && args.dt.is_finite()) {
        return Err(CliError::usage(format!(
            "--dt {} is out of range (expected a bin width in seconds > 0)",
            args.dt
        )));
    }
    let representation = Representation::parse(&args.representation).ok_or_else(|| {
        CliError::usage(format!(
            "--representation '{}' is not known (expected csc, presence or microstimulus)",
            args.representation
        ))
    })?;
    Ok(TdParams {
        alpha: args.alpha,
        gamma: args.gamma,
        lambda: args.lambda,
        dt: args.dt,
        representation,
    })
}

pub fn run(args: Args) -> CmdResult {
    let params = params(&args)?;
    let loaded = match data::load(&args.path) {
        Ok(l) => l,
        Err(failure) => {
            for d in &failure.diagnostics {
                eprintln!("{d}");
            }
            return Err(CliError::failed(format!(
                "{}: data did not load ({} problem(s) above); nothing written",
                args.path.display(),
                failure.diagnostics.iter().filter(|d| d.is_error()).count()
            )));
        }
    };
    for w in &loaded.warnings {
        eprintln!("{w}");
    }
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

    if args.out.as_os_str() != "-" {
        crate::safe_write::replace_with(&args.out, |w| {
            write_traces(Box::new(w), subject, &spans, &traces, params.dt)
        })
        .map_err(|e| CliError::failed(e.to_string()))?;
        return Ok(0);
    }
    let sink: Box<dyn Write> = Box::new(std::io::stdout().lock());
    match write_traces(sink, subject, &spans, &traces, params.dt) {
        Ok(()) => Ok(0),
        // `trialdesk model ... --out - | head` is not a failure.
        Err(e) if e.kind() == std::io::ErrorKind::BrokenPipe => Ok(0),
        Err(e) => Err(CliError::failed(format!("{}: {e}", args.out.display()))),
    }
}

fn write_traces(
    sink: Box<dyn Write + '_>,
    subject: &data::Subject,
    spans: &[model::TrialSpan],
    traces: &model::TdRun,
    dt: f64,
) -> std::io::Result<()> {
    let mut out = csv::Writer::from_writer(std::io::BufWriter::new(sink));
    out.write_record(["session", "trial", "bin", "time_s", "value", "delta"])?;
    for (i, span) in spans.iter().enumerate() {
        let session = &subject.sessions[span.session];
        let number = session.trials[span.trial].number.to_string();
        let (values, deltas) = (traces.trial_value(i), traces.trial_delta(i));
        for k in 0..span.n_bins {
            out.write_record([
                crate::util::csv_safe_cell(&session.name).as_ref(),
                number.as_str(),
                &k.to_string(),
                &fmt_f64(k as f64 * dt),
                &fmt_f64(values[k]),
                &fmt_f64(deltas[k]),
            ])?;
        }
    }
    out.flush()
}

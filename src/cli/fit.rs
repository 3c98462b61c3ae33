//! `trialdesk fit`: fit the TD model to a subject's whole training history, honouring marks.
//!
//! Thin shell: load → observations (`obs`) → marks → `fit::dataset::build` → `fit::run_fit`
//! → report on stdout, tables in `--out`, parameters saved in the subject folder. The progress
//! bar goes to stderr, only on a terminal, and only once the fit has taken more than a second.

use super::obs_args::ObsArgs;
use super::{CliError, CmdResult};
use crate::cohort::Shard;
use crate::data;
use crate::fit::{self, dataset, report, saved, FitOptions, Progress, ResampleUnit};
use crate::model::{self, Representation};
use crate::plan::{self, fit::FitError, fit::FitJob};
use std::io::Write;
use std::path::{Path, PathBuf};

mod bar;
mod cohort;

use bar::Bar;

#[derive(clap::Args, Debug)]
#[command(
    after_help = "A fit runs the model hundreds of times and uses every core. Do not run it on a rig \
computer while it is acquiring; run it at low priority instead: nice -n 19 trialdesk fit PATH\n\
Observations of trials marked `exclude` leave the fit, but the model still learns from those \
trials. Excluding trials after seeing a fit can bias it: compare with --ignore-marks."
)]
pub struct Args {
    /// A subject folder (all its sessions, in date order), one session folder, or a cohort
    /// folder of subject folders (each subject fitted in parallel; tables in --out DIR/<subject>/)
    pub path: PathBuf,
    /// Representation whose parameters are reported and saved: csc, presence or microstimulus
    /// (the comparison table fits all of them and Rescorla–Wagner)
    #[arg(long, default_value = model::defaults::REPRESENTATION_NAME)]
    pub representation: String,
    /// Model bin width, seconds
    #[arg(long, default_value_t = model::DEFAULT_DT)]
    pub dt: f64,
    /// Fix the eligibility-trace decay λ per bin at L instead of fitting it [default: λ is
    /// fitted, in (0, 1), for the reported model and for every model of the comparison]
    #[arg(long, value_name = "L")]
    pub lambda: Option<f64>,
    /// Accepted for compatibility and ignored: λ is fitted by default (--lambda L fixes it)
    #[arg(long, conflicts_with = "lambda")]
    pub fit_lambda: bool,
    #[command(flatten)]
    pub obs: ObsArgs,
    /// Bootstrap replicates for the confidence intervals (0: none)
    #[arg(long, default_value_t = 50)]
    pub bootstrap: usize,
    /// Observation model: gaussian or poisson (spike counts) [default: poisson for spikes,
    /// gaussian for photometry]
    #[arg(long)]
    pub likelihood: Option<String>,
    /// Give each session, rig (`rig` in session.toml) or unit its own gain and baselines, the
    /// learning parameters shared: subject (one gain, the default), session, rig, unit (an id
    /// is one neuron on every day) or session-unit (acute: each session's units their own)
    #[arg(long, default_value = "subject", value_name = "GROUP")]
    pub scale_by: String,
    /// Give positive and negative prediction errors separate gains and report their asymmetry
    /// g+/(g+ + g−) (0.5: symmetric)
    #[arg(long)]
    pub asymmetric: bool,
    /// Also refit the reported model with each readout (one gain, asymmetric gains, a gain per
    /// session, per rig) and print their AIC, BIC and held-out error side by side
    #[arg(long)]
    pub compare_readouts: bool,
    /// Anticipatory licking as a readout of value (Ludvig, Sutton & Kehoe 2012): off, with
    /// (fitted with the recorded activity, sharing α, γ and λ) or only (behaviour alone)
    #[arg(long, default_value = "off", value_name = "USE")]
    pub licks: String,
    /// What the bootstrap resamples: trials, blocks (20 neighbouring trials) or sessions
    #[arg(long, default_value = "trials")]
    pub bootstrap_by: String,
    /// Random seed of the bootstrap
    #[arg(long, default_value_t = 7)]
    pub seed: u64,
    /// Trailing sessions held out for the comparison's held-out error [default: the last
    /// fifth, at least one]
    #[arg(long)]
    pub holdout_sessions: Option<usize>,
    /// Skip the model comparison table (faster)
    #[arg(long)]
    pub no_compare: bool,
    /// Fit every trial's responses, excluded ones too (to compare with the marked fit)
    #[arg(long)]
    pub ignore_marks: bool,
    /// Write params.csv and trials.csv into this folder (created if needed)
    #[arg(long)]
    pub out: Option<PathBuf>,
    /// Do not write the fitted parameters to <subject folder>/trialdesk-fit.toml
    #[arg(long)]
    pub no_save: bool,
    /// Cohort folders only: fit shard K of N (1 <= K <= N) of the subjects sorted by folder
    /// name, e.g. --shard $SLURM_ARRAY_TASK_ID/10 (see `trialdesk merge --batch-example`)
    #[arg(long, value_name = "K/N")]
    pub shard: Option<String>,
    /// Skip the sensitivity line (a refit with the trials of pending suggested marks excluded
    /// too, in memory; nothing is written to marks.csv)
    #[arg(long)]
    pub no_sensitivity: bool,
}

fn fit_options(args: &Args) -> Result<FitOptions, CliError> {
    let representation = Representation::parse(&args.representation).ok_or_else(|| {
        CliError::usage(format!(
            "--representation '{}' is not known (expected csc, presence or microstimulus)",
            args.representation
        ))
    })?;
    if !(args.dt > 0.0 && args.dt.is_finite()) {
        return Err(CliError::usage(format!(
            "--dt {} is out of range (expected a bin width in seconds > 0)",
            args.dt
        )));
    }
    if let Some(l) = args.lambda.filter(|l| !(0.0..=1.0).contains(l)) {
        return Err(CliError::usage(format!(
            "--lambda {l} is out of range (expected 0 <= lambda <= 1)"
        )));
    }
    let resample = ResampleUnit::parse(&args.bootstrap_by).ok_or_else(|| {
        CliError::usage(format!(
            "--bootstrap-by '{}' is not known (expected trials, blocks or sessions)",
            args.bootstrap_by
        ))
    })?;
    let likelihood = match args.likelihood.as_deref() {
        None => None,
        Some(l) => Some(fit::Likelihood::parse(l).ok_or_else(|| {
            CliError::usage(format!(
                "--likelihood '{l}' is not known (expected gaussian or poisson)"
            ))
        })?),
    };
    Ok(FitOptions {
        likelihood,
        representation,
        lambda: args.lambda,
        bootstrap: args.bootstrap,
        resample,
        seed: args.seed,
        holdout_sessions: args.holdout_sessions,
        compare: !args.no_compare,
        asymmetric: args.asymmetric,
        ..FitOptions::default()
    })
}

fn write_out(
    dir: &Path,
    out: &fit::FitOutcome,
    data: &fit::FitData,
    lambda_fitted: bool,
) -> Result<(), CliError> {
    crate::safe_write::create_dirs(dir).map_err(|e| CliError::failed(e.to_string()))?;
    let params_path = dir.join("params.csv");
    let mut buf = Vec::new();
    report::write_params_csv(&mut buf, &report::param_rows(out, data, lambda_fitted))?;
    crate::safe_write::replace_file(&params_path, &buf)
        .map_err(|e| CliError::failed(e.to_string()))?;
    let trials_path = dir.join("trials.csv");
    let mut buf = Vec::new();
    report::write_trials_csv(&mut buf, data, &out.predicted)
        .map_err(|e| CliError::failed(format!("{}: cannot write: {e}", trials_path.display())))?;
    crate::safe_write::replace_file(&trials_path, &buf)
        .map_err(|e| CliError::failed(e.to_string()))?;
    Ok(())
}

/// This invocation as the user would retype it (program name without its folder).
fn command_line() -> String {
    let mut words: Vec<String> = std::env::args().skip(1).collect();
    words.insert(0, "trialdesk".into());
    words.join(" ")
}

/// One subject fitted: the full text report, and what a cohort table shows.
pub(crate) struct SubjectFit {
    pub text: String,
    pub outcome: fit::FitOutcome,
    pub n_sessions: usize,
    pub n_trials: usize,
    pub n_excluded: usize,
    /// The fit is done but `trialdesk-fit.toml` could not be written beside the data.
    pub save_error: Option<String>,
    /// The saved fit this one replaced was made with other options (what differed).
    pub replaced: Option<String>,
}

/// Load, observe, fit and report one subject (or session) folder; writes the tables into
/// `out_dir` and saves the parameters unless `--no-save`. `announce` prints the low-priority
/// advice on a terminal (single-subject runs; a cohort run prints it once).
pub(crate) fn fit_subject(
    args: &Args,
    opts: &FitOptions,
    path: &Path,
    out_dir: Option<&Path>,
    progress: &dyn Progress,
    announce: bool,
) -> Result<SubjectFit, CliError> {
    let loaded = match data::load(path) {
        Ok(l) => l,
        Err(failure) => {
            for d in &failure.diagnostics {
                eprintln!("{d}");
            }
            return Err(CliError::failed(format!(
                "{}: data did not load ({} problem(s) above); nothing fitted",
                path.display(),
                failure.diagnostics.iter().filter(|d| d.is_error()).count()
            )));
        }
    };
    for w in &loaded.warnings {
        eprintln!("{w}");
    }
    let subject = &loaded.subject;
    let sc = plan::scope(path);
    match (&sc.session, &sc.note) {
        (Some(_), _) => eprintln!(
            "warning: {}: a session fitted on its own starts from an untrained model; fit its \
             subject folder {} to learn across every session",
            path.display(),
            sc.root.display()
        ),
        (None, Some(note)) => eprintln!("warning: {note}"),
        _ => {}
    }
    let scale_by = dataset::ScaleBy::parse(&args.scale_by).ok_or_else(|| {
        CliError::usage(format!(
            "--scale-by '{}' is not known (expected subject, session, rig, unit or session-unit)",
            args.scale_by
        ))
    })?;
    let licks = fit::licks::LickUse::parse(&args.licks).ok_or_else(|| {
        CliError::usage(format!(
            "--licks '{}' is not known (expected off, with or only)",
            args.licks
        ))
    })?;
    let request = plan::fit::FitRequest {
        licks,
        obs: args.obs.request(),
        dt: args.dt,
        scale_by,
        compare_readouts: args.compare_readouts,
        ignore_marks: args.ignore_marks,
        sensitivity: !args.no_sensitivity,
        command: command_line(),
    };
    let job = FitJob::prepare(subject, &request).map_err(|e| fit_error(path, e))?;
    for w in &job.warnings {
        eprintln!("{w}");
    }
    if announce {
        eprintln!(
            "fitting {} response windows over {} trials; on a rig computer that is acquiring, \
             stop and rerun at low priority: nice -n 19 {}",
            job.data.points.len(),
            job.data.spans.len(),
            request.command
        );
    }
    let run = job.run(opts, progress).map_err(|e| fit_error(path, e))?;
    for w in &run.warnings {
        eprintln!("{w}");
    }
    let mut text = run.text;
    if let Some(dir) = out_dir {
        write_out(dir, &run.outcome, &run.data, opts.lambda_fitted())?;
        text.push_str(&format!(
            "Tables written: {} and {}\n",
            dir.join("params.csv").display(),
            dir.join("trials.csv").display()
        ));
    }
    let mut save_error = None;
    let mut replaced = None;
    if !args.no_save {
        // A saved fit made another way (other signal, windows, likelihood...) is replaced
        // knowingly: say what differed, so a fit run one folder off is noticed.
        let before = saved::load_saved(&subject.root).and_then(Result::ok);
        match saved::save(&subject.root, &run.saved) {
            Ok(path) => {
                text.push_str(&format!("Fitted parameters saved to {}\n", path.display()));
                if let Some(old) = before {
                    let changes = saved::option_changes(&old, &run.saved);
                    if !changes.is_empty() {
                        let line = format!(
                            "{} replaced a fit of {} made with other options: {}",
                            path.display(),
                            crate::text::for_text(&old.fitted_at),
                            changes.join(", ")
                        );
                        text.push_str(&format!("Note: {line}\n"));
                        replaced = Some(line);
                    }
                }
            }
            Err(e) => {
                save_error = Some(format!(
                    "fit done, but not saved: {e} (the report is complete; \
                     --no-save skips saving beside the data)"
                ))
            }
        }
    }
    Ok(SubjectFit {
        text,
        n_sessions: run.data.n_sessions(),
        n_trials: run.data.spans.len(),
        n_excluded: run.n_excluded,
        outcome: run.outcome,
        save_error,
        replaced,
    })
}

/// A fit that did not run: bad flags exit 2, bad data or a failed fit exit 1.
fn fit_error(path: &Path, e: FitError) -> CliError {
    match e {
        FitError::Plan(p) => p.into(),
        FitError::Data(m) => CliError::failed(m),
        FitError::Fit(m) => CliError::failed(format!("{}: {m}", path.display())),
    }
}

/// Write `text` to stdout; a closed pipe (`| head`) is not an error.
fn print(text: &str) -> Result<(), CliError> {
    let mut stdout = super::out::stdout();
    match stdout
        .write_all(text.as_bytes())
        .and_then(|_| stdout.flush())
    {
        Err(e) if e.kind() != std::io::ErrorKind::BrokenPipe => Err(e.into()),
        _ => Ok(()),
    }
}

pub fn run(args: Args) -> CmdResult {
    let opts = fit_options(&args)?;
    let shard = match &args.shard {
        Some(text) => Some(Shard::parse(text).map_err(|e| CliError::usage(e.to_string()))?),
        None => None,
    };
    if cohort::is_cohort(&args.path) {
        return cohort::run(&args, &opts, shard.unwrap_or(Shard::ALL));
    }
    if shard.is_some() {
        return Err(CliError::usage(format!(
            "--shard applies to a cohort folder (a folder of subject folders); {} is a subject \
             or session folder",
            args.path.display()
        )));
    }
    let bar = Bar::new();
    let result = fit_subject(
        &args,
        &opts,
        &args.path,
        args.out.as_deref(),
        &bar,
        bar.terminal,
    );
    bar.finish();
    let fitted = result?;
    print(&fitted.text)?;
    match fitted.save_error {
        Some(e) => Err(CliError::failed(e)),
        None => Ok(0),
    }
}

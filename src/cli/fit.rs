//! `trialdesk fit`: fit the TD model to a subject's whole training history, honouring marks.
//!
//! Thin shell: load → observations (`obs`) → marks → `fit::dataset::build` → `fit::run_fit`
//! → report on stdout, tables in `--out`, parameters saved in the subject folder. The progress
//! bar goes to stderr, only on a terminal, and only once the fit has taken more than a second.

use super::{CliError, CmdResult};
use crate::cohort::Shard;
use crate::data;
use crate::fit::{self, dataset, report, saved, sensitivity, FitOptions, Progress, ResampleUnit};
use crate::marks::{self, MarkState};
use crate::model::{self, Representation};
use crate::obs::{self, ObsOptions, Signal};
use crate::suggest::{pending_for_session, RuleSet, Suggestion};
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
    /// Activity to fit: spikes or photometry [default: spikes when the first session has
    /// spikes.csv, otherwise photometry]
    #[arg(long)]
    pub signal: Option<String>,
    /// Fit one sorted unit's rate instead of the population mean rate
    #[arg(long)]
    pub unit: Option<String>,
    /// Cue response window after cue onset, "start,end" seconds
    /// [default: 0.05,0.35 for spikes; 0,1 for photometry]
    #[arg(long, value_name = "START,END", allow_hyphen_values = true)]
    pub cue_window: Option<String>,
    /// Reward response window after the reward (or the expected reward time on omissions),
    /// "start,end" seconds [default: 0.05,0.35 for spikes; 0,1 for photometry]
    #[arg(long, value_name = "START,END", allow_hyphen_values = true)]
    pub reward_window: Option<String>,
    /// Pre-cue baseline window relative to cue onset, "start,end" seconds [default: -1,0]
    #[arg(long, value_name = "START,END", allow_hyphen_values = true)]
    pub baseline_window: Option<String>,
    /// Response latency: windows are mapped onto model bins shifted back by it, seconds
    /// [default: 0.05, as the simulated sensor's onset]
    #[arg(long)]
    pub latency: Option<f64>,
    /// Photometry: decay time constant of the sensor kernel, seconds; δ of every bin is weighted
    /// by the kernel's mean over each window instead of summing the window's bins (0: plain
    /// sum) [default: 0.6 for photometry, as simulate's sensor; set it to your sensor's]
    #[arg(long, value_name = "S")]
    pub sensor_decay: Option<f64>,
    /// Photometry: rise time constant of the sensor kernel, seconds [default: 0.1]
    #[arg(long, value_name = "S")]
    pub sensor_rise: Option<f64>,
    /// Bootstrap replicates for the confidence intervals (0: none)
    #[arg(long, default_value_t = 50)]
    pub bootstrap: usize,
    /// Observation model: gaussian or poisson (spike counts) [default: poisson for spikes,
    /// gaussian for photometry]
    #[arg(long)]
    pub likelihood: Option<String>,
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

fn parse_window(name: &str, text: &str) -> Result<(f64, f64), CliError> {
    let bad = || {
        CliError::usage(format!(
            "--{name} '{text}' is not a window (expected START,END in seconds, start < end, e.g. 0.05,0.35)"
        ))
    };
    let (a, b) = text.split_once(',').ok_or_else(bad)?;
    let a: f64 = a.trim().parse().map_err(|_| bad())?;
    let b: f64 = b.trim().parse().map_err(|_| bad())?;
    if !(a.is_finite() && b.is_finite() && a < b) {
        return Err(bad());
    }
    Ok((a, b))
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
        ..FitOptions::default()
    })
}

fn obs_options(args: &Args, subject: &data::Subject) -> Result<ObsOptions, CliError> {
    let photometry = match args.signal.as_deref() {
        Some("spikes") => false,
        Some("photometry") => true,
        Some(other) => {
            return Err(CliError::usage(format!(
                "--signal '{other}' is not known (expected spikes or photometry)"
            )))
        }
        None => subject
            .sessions
            .first()
            .is_some_and(|s| s.spikes.is_none() && s.photometry.is_some()),
    };
    if photometry && args.unit.is_some() {
        return Err(CliError::usage(
            "--unit applies to spikes, not to photometry",
        ));
    }
    let mut o = if photometry {
        ObsOptions::photometry()
    } else {
        ObsOptions {
            signal: Signal::Spikes {
                unit: args.unit.clone(),
            },
            ..ObsOptions::default()
        }
    };
    if let Some(w) = &args.cue_window {
        o.cue_window = parse_window("cue-window", w)?;
    }
    if let Some(w) = &args.reward_window {
        o.reward_window = parse_window("reward-window", w)?;
    }
    if let Some(w) = &args.baseline_window {
        o.baseline = parse_window("baseline-window", w)?;
    }
    if let Some(l) = args.latency {
        if !l.is_finite() {
            return Err(CliError::usage(format!(
                "--latency {l} is not a number of seconds"
            )));
        }
        o.latency = l;
    }
    Ok(o)
}

/// Default sensor kernel for photometry fits: simulate's sensor (rise 0.1 s, decay 0.6 s).
pub const DEFAULT_SENSOR: (f64, f64) = (0.1, 0.6);

/// The sensor kernel of a photometry fit (`None`: plain window sums).
fn sensor_kernel(args: &Args, obs: &ObsOptions) -> Result<Option<dataset::SensorKernel>, CliError> {
    if obs.signal != Signal::Photometry {
        if args.sensor_decay.is_some() || args.sensor_rise.is_some() {
            return Err(CliError::usage(
                "--sensor-decay and --sensor-rise apply to --signal photometry",
            ));
        }
        return Ok(None);
    }
    let decay = args.sensor_decay.unwrap_or(DEFAULT_SENSOR.1);
    if decay == 0.0 {
        return Ok(None);
    }
    let k = dataset::SensorKernel {
        rise_s: args.sensor_rise.unwrap_or(DEFAULT_SENSOR.0),
        decay_s: decay,
        latency_s: obs.latency,
    };
    if !k.is_valid() {
        return Err(CliError::usage(format!(
            "--sensor-rise {} / --sensor-decay {}: expected 0 < rise < decay seconds (decay 0 turns the kernel off)",
            k.rise_s, k.decay_s
        )));
    }
    Ok(Some(k))
}

/// Standing marks of every session; unreadable journals stop the fit unless marks are ignored.
fn read_marks(subject: &data::Subject, ignore_marks: bool) -> Result<Vec<MarkState>, CliError> {
    let mut out = Vec::with_capacity(subject.sessions.len());
    for s in &subject.sessions {
        match marks::read_journal(&s.dir) {
            Ok(j) => {
                if let Some((line, _)) = &j.torn_tail {
                    eprintln!(
                        "{}:{line}: warning: incomplete last line ignored",
                        j.path.display()
                    );
                }
                out.push(j.state());
            }
            Err(e) if ignore_marks => {
                eprintln!("warning: {e} (marks are ignored for this fit)");
                out.push(MarkState::default());
            }
            Err(e) => {
                return Err(CliError::failed(format!(
                    "{e}\nthe marks could not be read, so exclusions cannot be honoured; fix the \
                     file or rerun with --ignore-marks"
                )))
            }
        }
    }
    Ok(out)
}

/// The observation options in words; for photometry also how ΔF/F was made per session.
fn describe_obs(o: &ObsOptions, subject: &data::Subject) -> String {
    let method = match o.signal {
        Signal::Photometry => crate::obs::photometry::photometry_methods(subject)
            .map(|m| format!("; ΔF/F: {m}"))
            .unwrap_or_default(),
        _ => String::new(),
    };
    format!(
        "{}; cue window [{}, {}] s, reward window [{}, {}] s after the event (the expected \
         time on omissions), baseline [{}, {}] s from cue onset; windows mapped onto model bins \
         {} s earlier (latency){method}",
        o.signal.label(),
        o.cue_window.0,
        o.cue_window.1,
        o.reward_window.0,
        o.reward_window.1,
        o.baseline.0,
        o.baseline.1,
        o.latency
    )
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

/// Pending suggested marks of every session (user rules over the shipped defaults), then the
/// refit with their trials excluded too. Reads marks.csv, never writes it.
fn sensitivity_line(
    subject: &data::Subject,
    data: &fit::FitData,
    outcome: &fit::FitOutcome,
    opts: &FitOptions,
    progress: &dyn Progress,
) -> String {
    let rules = match RuleSet::load_user() {
        Ok((rules, _)) => rules,
        Err(e) => {
            return format!(
                "Sensitivity to suggested marks: skipped, the rule file has an error: {e}"
            )
        }
    };
    let per_session: Vec<Vec<Suggestion>> = subject
        .sessions
        .iter()
        .map(|s| {
            pending_for_session(s, &rules).unwrap_or_else(|e| {
                eprintln!("warning: {e} (suggested marks of this session left out of the sensitivity line)");
                Vec::new()
            })
        })
        .collect();
    let trials = sensitivity::SuggestedTrials::new(data, &per_session, &subject.cue_names());
    let result = sensitivity::sensitivity(data, outcome, opts, &trials, progress);
    sensitivity::line(&result, &trials, outcome, opts.lambda_fitted())
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
    let obs_opts = obs_options(args, subject)?;
    let observations =
        obs::observe(subject, &obs_opts).map_err(|e| CliError::failed(e.to_string()))?;
    let marks = read_marks(subject, args.ignore_marks)?;
    let kernel = sensor_kernel(args, &obs_opts)?;
    let mut data = dataset::build(
        subject,
        &observations,
        &obs_opts,
        args.dt,
        &marks,
        args.ignore_marks,
    );
    if let Some(k) = kernel {
        data = dataset::with_sensor_kernel(data, k, &obs_opts);
    }
    data.counts = dataset::spike_counts(&data, subject, &obs_opts);

    if announce {
        eprintln!(
            "fitting {} response windows over {} trials; on a rig computer that is acquiring, \
             stop and rerun at low priority: nice -n 19 {}",
            data.points.len(),
            data.spans.len(),
            command_line()
        );
    }
    let outcome = fit::run_fit(&data, opts, progress)
        .map_err(|e| CliError::failed(format!("{}: {e}", path.display())))?;

    let sensitivity = if args.no_sensitivity {
        None
    } else {
        Some(sensitivity_line(subject, &data, &outcome, opts, progress))
    };
    let ctx = report::ReportContext {
        subject: subject
            .sessions
            .first()
            .map(|s| s.meta.subject.clone())
            .unwrap_or_else(|| subject.root.display().to_string()),
        observations: match kernel {
            Some(k) => format!(
                "{}; δ weighted by a sensor kernel (rise {} s, decay {} s) averaged over each \
                 window, so the gain is the peak response per unit δ",
                describe_obs(&obs_opts, subject),
                k.rise_s,
                k.decay_s
            ),
            None => describe_obs(&obs_opts, subject),
        },
        command: command_line(),
        sensitivity,
    };
    let mut text = report::text_report(&outcome, &data, &ctx, opts.lambda_fitted());

    if let Some(dir) = out_dir {
        write_out(dir, &outcome, &data, opts.lambda_fitted())?;
        text.push_str(&format!(
            "Tables written: {} and {}\n",
            dir.join("params.csv").display(),
            dir.join("trials.csv").display()
        ));
    }
    let n_excluded = if args.ignore_marks {
        0
    } else {
        data.exclusions.n_trials
    };
    let mut save_error = None;
    if !args.no_save {
        let lin = &outcome.best.linear;
        let p = outcome.best.params;
        let savedfit = saved::SavedFit {
            alpha: p.alpha,
            gamma: p.gamma,
            lambda: p.lambda,
            dt: data.dt,
            representation: outcome.model.name().to_string(),
            gain: lin.gain,
            baselines: saved::Baselines {
                cue: lin.baselines[0],
                reward: lin.baselines[1],
            },
            fitted_at: saved::now_rfc3339(),
            n_excluded,
            ignore_marks: args.ignore_marks,
            lambda_fitted: opts.lambda_fitted(),
            log_likelihood: Some(outcome.best.log_likelihood),
            n_observations: Some(outcome.n_included),
            unit: args.unit.clone(),
            latency_s: Some(obs_opts.latency),
            cue_window_s: Some([obs_opts.cue_window.0, obs_opts.cue_window.1]),
            reward_window_s: Some([obs_opts.reward_window.0, obs_opts.reward_window.1]),
            baseline_window_s: Some([obs_opts.baseline.0, obs_opts.baseline.1]),
            sensor_rise_s: kernel.map(|k| k.rise_s),
            sensor_decay_s: kernel.map(|k| k.decay_s),
            likelihood: Some(outcome.best.linear.likelihood.name().to_string()),
        };
        match saved::save(&subject.root, &savedfit) {
            Ok(path) => text.push_str(&format!("Fitted parameters saved to {}\n", path.display())),
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
        n_sessions: data.n_sessions(),
        n_trials: data.spans.len(),
        n_excluded,
        outcome,
        save_error,
    })
}

/// Write `text` to stdout; a closed pipe (`| head`) is not an error.
fn print(text: &str) -> Result<(), CliError> {
    let mut stdout = std::io::stdout().lock();
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

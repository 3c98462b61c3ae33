//! `trialdesk simulate`: write a synthetic subject from a known TD model.

use super::{CliError, CmdResult};
use crate::model::{defaults, Representation};
use crate::simulate::photometry::{Bleaching, Motion};
use crate::simulate::{self, CueSpec, FaultParams, PhotometryParams, SimConfig};
use std::path::PathBuf;

/// Defaults reproduce the demo scenario (demo_data/README.md): 8 days x 120 trials, tones
/// "tone-hi" (always rewarded), "tone-mid" (half) and "tone-lo" (never), 1.5 s cue-reward
/// delay, 5 % uncued rewards of 3 uL sweet water, 6 dopamine-like units, CSC TD with
/// alpha 0.02, gamma 0.98, lambda 0.9 per 50 ms bin.
#[derive(clap::Args, Debug)]
#[command(
    after_help = "The same --seed and options always give the same bytes. \
    OUT becomes a subject folder (one folder per day, named by date) with truth.toml \
    recording every parameter."
)]
pub struct Args {
    /// Subject folder to create (must be absent or empty unless --force)
    pub out: PathBuf,
    /// Random seed
    #[arg(long, default_value_t = 1)]
    pub seed: u64,
    /// Number of daily sessions
    #[arg(long, default_value_t = 8)]
    pub days: usize,
    /// Trials per session, uncued rewards included
    #[arg(long, default_value_t = 120)]
    pub trials_per_day: usize,
    /// A cue type NAME:P:DELAY (reward probability, cue->reward seconds); repeatable.
    /// Default: tone-hi:1:1.5, tone-mid:0.5:1.5, tone-lo:0:1.5
    #[arg(long = "cue", value_name = "NAME:P:DELAY")]
    pub cues: Vec<String>,
    /// Share of each day's trials that are uncued rewards
    #[arg(long, default_value_t = 0.05)]
    pub uncued_fraction: f64,
    /// Reward size in uL (also the model's reward magnitude)
    #[arg(long, default_value_t = 3.0)]
    pub reward_ul: f64,
    /// Mean inter-trial interval, s (end of trial to next onset)
    #[arg(long, default_value_t = 12.0)]
    pub iti_mean: f64,
    /// Minimum inter-trial interval, s
    #[arg(long, default_value_t = 6.0)]
    pub iti_min: f64,
    /// TD learning rate
    #[arg(long, default_value_t = defaults::ALPHA)]
    pub alpha: f64,
    /// TD discount per model bin
    #[arg(long, default_value_t = defaults::GAMMA)]
    pub gamma: f64,
    /// Eligibility-trace decay per model bin
    #[arg(long, default_value_t = defaults::LAMBDA)]
    pub lambda: f64,
    /// Model bin width, s
    #[arg(long, default_value_t = defaults::DT)]
    pub dt: f64,
    /// Stimulus representation: csc, presence or microstimulus
    #[arg(long, default_value = defaults::REPRESENTATION_NAME)]
    pub representation: String,
    /// Number of dopamine-like units (0: no spikes.csv)
    #[arg(long, default_value_t = 6)]
    pub units: usize,
    /// Write photometry.csv (20 Hz sensor trace with isosbestic control): on or off
    #[arg(long, default_value = "off", value_parser = ["on", "off"])]
    pub photometry: String,
    /// Photobleaching in both photometry channels: FRACTION:TAU_S, e.g. 0.3:900
    /// (F falls as 1 - f + f*exp(-t/tau))
    #[arg(long, value_name = "FRACTION:TAU_S")]
    pub bleaching: Option<String>,
    /// Motion artifacts shared by both photometry channels: PER_MIN:MAX_DEPTH:DURATION_S,
    /// e.g. 1:0.2:1 (dips of up to 20 % lasting 1 s, once a minute on average)
    #[arg(long, value_name = "PER_MIN:MAX_DEPTH:DURATION_S")]
    pub motion: Option<String>,
    /// Inject a fault KIND at RATE (per trial; per session for unit-lost and
    /// control-decoupled); repeatable. Kinds: baseline-licks, valve-failure, late-first-lick,
    /// reward-too-soon, unit-lost, trial-motion, control-decoupled, saturation, dropout (the
    /// last four need --photometry on). Every injected fault is listed in OUT/faults.csv.
    #[arg(long = "fault", value_name = "KIND:RATE")]
    pub faults: Vec<String>,
    /// Subject id written to every session.toml [default: the name of OUT's folder, so
    /// subjects simulated side by side in one cohort folder are told apart]
    #[arg(long)]
    pub subject: Option<String>,
    /// Rig name written to every session.toml
    #[arg(long, default_value = "box-2")]
    pub rig: String,
    /// Date of the first session (YYYY-MM-DD); one session a day after it
    #[arg(long, default_value = "2026-03-02")]
    pub start_date: String,
    /// Replace an earlier simulated subject in OUT (its session folders and truth.toml)
    #[arg(long)]
    pub force: bool,
    /// A design file (TOML: [[cue]] tables, then [[phase]] tables with days, trials_per_day
    /// and [[phase.trial]] types listing cue and reward events with probabilities; see
    /// README). Replaces --cue, --days, --trials-per-day and --uncued-fraction; writes
    /// events.csv for trials with more than one cue or reward.
    #[arg(long, value_name = "FILE")]
    pub design: Option<PathBuf>,
}

/// The subject id a folder implies: its own name (`demo_data/m-041` → `m-041`).
fn subject_from_folder(out: &std::path::Path) -> Result<String, CliError> {
    out.file_name()
        .and_then(|n| n.to_str())
        .filter(|n| !n.is_empty() && *n != "." && *n != "..")
        .map(String::from)
        .ok_or_else(|| {
            CliError::usage(format!(
                "{}: cannot name the subject after this folder; give --subject ID",
                out.display()
            ))
        })
}

/// The configuration the arguments describe.
pub fn config(args: &Args) -> Result<SimConfig, CliError> {
    let mut c = SimConfig {
        seed: args.seed,
        ..Default::default()
    };
    let s = &mut c.schedule;
    s.days = args.days;
    s.trials_per_day = args.trials_per_day;
    if !args.cues.is_empty() {
        s.cues = args
            .cues
            .iter()
            .map(|t| CueSpec::parse(t))
            .collect::<Result<_, _>>()
            .map_err(CliError::usage)?;
    }
    s.uncued_fraction = args.uncued_fraction;
    s.reward_ul = args.reward_ul;
    s.iti_mean_s = args.iti_mean;
    s.iti_min_s = args.iti_min;
    s.subject = match &args.subject {
        Some(id) => id.clone(),
        None => subject_from_folder(&args.out)?,
    };
    s.rig = args.rig.clone();
    s.start_date = args.start_date.clone();
    c.td.alpha = args.alpha;
    c.td.gamma = args.gamma;
    c.td.lambda = args.lambda;
    c.td.dt = args.dt;
    c.td.representation = Representation::parse(&args.representation).ok_or_else(|| {
        CliError::usage(format!(
            "--representation {:?}: expected csc, presence or microstimulus",
            args.representation
        ))
    })?;
    c.units.count = args.units;
    c.photometry = (args.photometry == "on").then(PhotometryParams::default);
    if let Some(text) = &args.bleaching {
        let v = numbers(text, 2, "--bleaching FRACTION:TAU_S")?;
        photometry_on(&mut c, "--bleaching")?.bleaching = Some(Bleaching {
            fraction: v[0],
            tau_s: v[1],
        });
    }
    if let Some(text) = &args.motion {
        let v = numbers(text, 3, "--motion PER_MIN:MAX_DEPTH:DURATION_S")?;
        photometry_on(&mut c, "--motion")?.motion = Some(Motion {
            per_minute: v[0],
            max_depth: v[1],
            duration_s: v[2],
        });
    }
    for text in &args.faults {
        let (kind, rate) = FaultParams::parse_one(text).map_err(CliError::usage)?;
        c.faults.rates.push((kind, rate));
    }
    if let Some(path) = &args.design {
        let text = std::fs::read_to_string(path)
            .map_err(|e| CliError::usage(format!("--design {}: {e}", path.display())))?;
        let d = simulate::design::Design::parse(&text)
            .map_err(|e| CliError::usage(format!("--design {}: {e}", path.display())))?;
        c.schedule.days = d.days();
        c.schedule.trials_per_day = d.phases.iter().map(|p| p.trials_per_day).max().unwrap_or(1);
        c.design = Some(d);
    }
    c.validate().map_err(|e| CliError::usage(e.to_string()))?;
    Ok(c)
}

/// `n` colon-separated numbers.
fn numbers(text: &str, n: usize, form: &str) -> Result<Vec<f64>, CliError> {
    let v: Vec<f64> = text
        .split(':')
        .map(|p| p.trim().parse::<f64>())
        .collect::<Result<_, _>>()
        .map_err(|_| CliError::usage(format!("{text:?}: expected {form}")))?;
    if v.len() != n {
        return Err(CliError::usage(format!("{text:?}: expected {form}")));
    }
    Ok(v)
}

fn photometry_on<'a>(
    c: &'a mut SimConfig,
    opt: &str,
) -> Result<&'a mut PhotometryParams, CliError> {
    c.photometry
        .as_mut()
        .ok_or_else(|| CliError::usage(format!("{opt} needs --photometry on")))
}

pub fn run(args: Args) -> CmdResult {
    let config = config(&args)?;
    let sim = simulate::simulate(&config).map_err(|e| CliError::failed(e.to_string()))?;
    simulate::write_subject(&sim, &args.out, args.force)
        .map_err(|e| CliError::failed(e.to_string()))?;
    let trials: usize = sim.subject.sessions.iter().map(|s| s.trials.len()).sum();
    eprintln!(
        "wrote {} sessions, {} trials, {} units to {} (truth.toml records every parameter)",
        sim.subject.sessions.len(),
        trials,
        sim.units.len(),
        args.out.display()
    );
    if config.faults.any() {
        eprintln!(
            "injected {} faults (listed in {})",
            sim.faults.len(),
            args.out.join(simulate::writer::FAULTS_FILE).display()
        );
    }
    Ok(0)
}

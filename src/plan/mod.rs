//! One place decides what is measured for a subject, for every command and the reviewer:
//! the signal ([`choose_signal`]), the observation options (flags over the saved fit over the
//! signal's defaults, [`measurement`]), the checked saved fit as model parameters plus its
//! sensor kernel ([`CheckedFit`]), and the standing marks under one policy for an unreadable
//! journal ([`standing_marks`]). [`fit`] is the core fit entry that `trialdesk fit` (one
//! subject or a cohort) calls.
//!
//! `fit` measures with flags over defaults and never reads the fit it is about to replace, so
//! the same command gives the same fit; the readers of a fit (`summary`, `plot`, `model`, the
//! reviewer) lay the saved fit's choices under their flags so they measure what was fitted.

pub mod fit;
mod marks;
mod saved;
mod scope;
mod signal;

pub use marks::{standing_marks, MarksPolicy, StandingMarks, UNREADABLE_HINT};
pub use saved::CheckedFit;
pub use scope::{fallback_note, scope, Scope};
pub use signal::{choose_signal, signal_name, SignalChoice, SignalRequest};

use crate::data::Subject;
use crate::fit::dataset::SensorKernel;
use crate::obs::{ObsOptions, Signal};
use std::path::PathBuf;

/// Sensor kernel of photometry fits when neither a flag nor the saved fit gives one:
/// `simulate`'s sensor (rise 0.1 s, decay 0.6 s).
pub const DEFAULT_SENSOR: (f64, f64) = (0.1, 0.6);

/// The observation flags, as the shared command-line group gives them (`None`: not given).
#[derive(Debug, Clone, Default, PartialEq)]
pub struct ObsRequest {
    pub signal: SignalRequest,
    pub unit: Option<String>,
    pub cue_window: Option<(f64, f64)>,
    pub reward_window: Option<(f64, f64)>,
    pub baseline_window: Option<(f64, f64)>,
    pub latency: Option<f64>,
    pub sensor_rise: Option<f64>,
    /// 0 turns the kernel off (plain window sums).
    pub sensor_decay: Option<f64>,
    /// `--zscore` (photometry): responses in units of each trial's baseline SD.
    pub zscore: bool,
    /// `--control-fit irls|ols` (photometry).
    pub control_fit: Option<String>,
}

/// The control fit named `irls` or `ols`.
pub fn control_fit_named(name: &str) -> Option<crate::photometry::ControlFit> {
    match name {
        "irls" => Some(crate::photometry::ControlFit::default()),
        "ols" => Some(crate::photometry::ControlFit::Ols),
        _ => None,
    }
}

/// The name of a control fit as `--control-fit` takes it.
pub fn control_fit_name(fit: crate::photometry::ControlFit) -> &'static str {
    match fit {
        crate::photometry::ControlFit::Ols => "ols",
        crate::photometry::ControlFit::Irls(_) => "irls",
    }
}

/// What will be measured and how: the outcome of the plan.
#[derive(Debug, Clone, PartialEq)]
pub struct Measurement {
    pub choice: SignalChoice,
    pub obs: ObsOptions,
    /// Photometry only: the sensor kernel δ is weighted by (`None`: plain window sums).
    pub kernel: Option<SensorKernel>,
}

/// Why a plan cannot be made. `is_usage` tells a bad flag from bad data.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
pub enum PlanError {
    #[error("{0}")]
    Usage(String),
    #[error("{}: no activity to measure: no session has spikes.csv or photometry.csv", .0.display())]
    NoActivity(PathBuf),
    #[error("{}: field `{field}`: {message}\nthe saved fit is not used; rerun `trialdesk fit` (it replaces the file) or move the file aside", path.display())]
    SavedFit {
        path: PathBuf,
        field: &'static str,
        message: String,
    },
    #[error("{0}\nrerun `trialdesk fit` (it replaces the file) or move the file aside")]
    SavedFitRead(String),
    #[error("{0}")]
    Marks(String),
}

impl PlanError {
    pub fn is_usage(&self) -> bool {
        matches!(self, PlanError::Usage(_))
    }
}

/// The measurement for `subject`: flags over the saved fit (when the command reads one) over
/// the signal's defaults.
pub fn measurement(
    subject: &Subject,
    req: &ObsRequest,
    saved: Option<&CheckedFit>,
) -> Result<Measurement, PlanError> {
    let fit = saved.map(|c| &c.fit);
    let saved_unit = fit.and_then(|f| f.unit.as_deref());
    let unit = req.unit.as_deref();
    let saved_signal = fit.and_then(|f| f.signal.as_deref());
    let mut choice = choose_signal(subject, req.signal, unit, saved_signal)
        .ok_or_else(|| PlanError::NoActivity(subject.root.clone()))?;
    if choice.signal == Signal::Photometry && unit.is_some() {
        return Err(PlanError::Usage(
            "--unit applies to spikes, not to photometry".into(),
        ));
    }
    // A fit of one unit keeps measuring that unit unless the flags say otherwise.
    if let (Signal::Spikes { unit: None }, Some(u)) = (&choice.signal, saved_unit) {
        choice.signal = Signal::Spikes {
            unit: Some(u.to_string()),
        };
    }
    let base = match choice.signal {
        Signal::Photometry => ObsOptions::photometry(),
        _ => ObsOptions::default(),
    };
    let from_fit = |f: fn(&crate::fit::saved::SavedFit) -> Option<[f64; 2]>| {
        fit.and_then(f).map(|[a, b]| (a, b))
    };
    if let Some(l) = req.latency.filter(|l| !l.is_finite()) {
        return Err(PlanError::Usage(format!(
            "--latency {l} is not a number of seconds"
        )));
    }
    let obs = ObsOptions {
        cue_window: req
            .cue_window
            .or(from_fit(|s| s.cue_window_s))
            .unwrap_or(base.cue_window),
        reward_window: req
            .reward_window
            .or(from_fit(|s| s.reward_window_s))
            .unwrap_or(base.reward_window),
        baseline: req
            .baseline_window
            .or(from_fit(|s| s.baseline_window_s))
            .unwrap_or(base.baseline),
        latency: req
            .latency
            .or(fit.and_then(|s| s.latency_s))
            .unwrap_or(base.latency),
        // Asked for, or the saved fit was made so: readers measure as the fit measured.
        zscore: req.zscore || fit.and_then(|s| s.zscore).unwrap_or(false),
        control_fit: control_fit_of(req, fit)?,
        signal: choice.signal.clone(),
    };
    if req.control_fit.is_some() && obs.signal != Signal::Photometry {
        return Err(PlanError::Usage(
            "--control-fit applies to --signal photometry".into(),
        ));
    }
    if obs.zscore && obs.signal != Signal::Photometry {
        return Err(PlanError::Usage(
            "--zscore applies to --signal photometry (spike responses are rates)".into(),
        ));
    }
    obs.validate()
        .map_err(|e| PlanError::Usage(e.to_string()))?;
    let kernel = sensor_kernel(req, fit, &obs)?;
    Ok(Measurement {
        choice,
        obs,
        kernel,
    })
}

/// The control fit: the flag, else the saved fit's, else IRLS.
fn control_fit_of(
    req: &ObsRequest,
    fit: Option<&crate::fit::saved::SavedFit>,
) -> Result<crate::photometry::ControlFit, PlanError> {
    let name = req
        .control_fit
        .clone()
        .or_else(|| fit.and_then(|f| f.control_fit.clone()));
    match name {
        None => Ok(crate::photometry::ControlFit::default()),
        Some(n) => control_fit_named(&n).ok_or_else(|| {
            PlanError::Usage(format!(
                "--control-fit '{n}' is not known (expected irls or ols)"
            ))
        }),
    }
}

/// The kernel: flags, else the saved fit's (a saved plain-sum fit keeps plain sums), else the
/// default sensor for photometry.
fn sensor_kernel(
    req: &ObsRequest,
    fit: Option<&crate::fit::saved::SavedFit>,
    obs: &ObsOptions,
) -> Result<Option<SensorKernel>, PlanError> {
    let flagged = req.sensor_decay.is_some() || req.sensor_rise.is_some();
    if obs.signal != Signal::Photometry {
        if flagged {
            return Err(PlanError::Usage(
                "--sensor-decay and --sensor-rise apply to --signal photometry".into(),
            ));
        }
        return Ok(None);
    }
    let (rise, decay) = match fit {
        Some(f) if !flagged => match (f.sensor_rise_s, f.sensor_decay_s) {
            (Some(r), Some(d)) => (r, d),
            _ => return Ok(None),
        },
        _ => (
            req.sensor_rise.unwrap_or(DEFAULT_SENSOR.0),
            req.sensor_decay.unwrap_or(DEFAULT_SENSOR.1),
        ),
    };
    if decay == 0.0 {
        return Ok(None);
    }
    let k = SensorKernel {
        rise_s: rise,
        decay_s: decay,
        latency_s: obs.latency,
    };
    if !k.is_valid() {
        return Err(PlanError::Usage(format!(
            "--sensor-rise {rise} / --sensor-decay {decay}: expected 0 < rise < decay seconds \
             (decay 0 turns the kernel off)"
        )));
    }
    Ok(Some(k))
}

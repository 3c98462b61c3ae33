//! The observation flags, one clap group with the same names in `fit`, `summary`, `plot` and
//! `review`; what they mean is decided in `crate::plan`.

use crate::plan::{ObsRequest, SignalRequest};

#[derive(clap::ValueEnum, Clone, Copy, Debug, PartialEq, Eq, Default)]
pub enum SignalArg {
    /// The saved fit's signal (commands that read one), else the signal every session has
    /// (spikes first), else the one most sessions have
    #[default]
    Auto,
    Spikes,
    Photometry,
}

#[derive(clap::Args, Debug, Clone, Default)]
pub struct ObsArgs {
    /// Activity to measure responses on
    #[arg(long, value_enum, default_value = "auto")]
    pub signal: SignalArg,
    /// One sorted unit's rate instead of the population mean rate (spikes only)
    #[arg(long)]
    pub unit: Option<String>,
    /// Cue response window START,END in seconds after cue onset [default: 0.05,0.35 for
    /// spikes; 0,1 for photometry; readers of a fit: the saved fit's]
    #[arg(long, value_name = "START,END", value_parser = parse_window, allow_hyphen_values = true)]
    pub cue_window: Option<(f64, f64)>,
    /// Reward response window START,END in seconds after the reward (the expected time on
    /// omissions) [default: as the cue window]
    #[arg(long, value_name = "START,END", value_parser = parse_window, allow_hyphen_values = true)]
    pub reward_window: Option<(f64, f64)>,
    /// Baseline window START,END in seconds relative to cue onset (uncued trials: the reward)
    /// [default: -1,0]
    #[arg(long, alias = "baseline", value_name = "START,END", value_parser = parse_window, allow_hyphen_values = true)]
    pub baseline_window: Option<(f64, f64)>,
    /// Response latency in seconds: windows map onto model bins shifted back by it
    /// [default: 0.05, as the simulated sensor's onset; readers of a fit: the saved fit's]
    #[arg(long, value_name = "SECONDS", allow_negative_numbers = true)]
    pub latency: Option<f64>,
    /// Photometry: decay time constant of the sensor kernel, seconds; δ of every bin is weighted
    /// by the kernel's mean over each window instead of summing the window's bins (0: plain
    /// sum) [default: 0.6, as simulate's sensor; readers of a fit: the saved fit's]
    #[arg(long, value_name = "S", allow_negative_numbers = true)]
    pub sensor_decay: Option<f64>,
    /// Photometry: rise time constant of the sensor kernel, seconds [default: 0.1]
    #[arg(long, value_name = "S", allow_negative_numbers = true)]
    pub sensor_rise: Option<f64>,
    /// Photometry: divide each trial's responses by the standard deviation of its own baseline
    /// window (a z-score against the pre-cue baseline) [default: off; readers of a fit: as the
    /// fit was made]
    #[arg(long)]
    pub zscore: bool,
    /// Photometry: how the isosbestic control is fitted to the signal: irls (robust, the
    /// default) or ols (ordinary least squares, faster on long 1 kHz recordings) [readers of a
    /// fit: as the fit was made]
    #[arg(long, value_name = "FIT")]
    pub control_fit: Option<String>,
}

impl ObsArgs {
    pub fn request(&self) -> ObsRequest {
        ObsRequest {
            signal: match self.signal {
                SignalArg::Auto => SignalRequest::Auto,
                SignalArg::Spikes => SignalRequest::Spikes,
                SignalArg::Photometry => SignalRequest::Photometry,
            },
            unit: self.unit.clone(),
            cue_window: self.cue_window,
            reward_window: self.reward_window,
            baseline_window: self.baseline_window,
            latency: self.latency,
            sensor_rise: self.sensor_rise,
            sensor_decay: self.sensor_decay,
            zscore: self.zscore,
            control_fit: self.control_fit.clone(),
        }
    }
}

/// `START,END` seconds, finite, start before end.
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

/// A plan error as a command error: a bad flag is a usage error (exit 2), bad data exit 1.
impl From<crate::plan::PlanError> for super::CliError {
    fn from(e: crate::plan::PlanError) -> Self {
        if e.is_usage() {
            super::CliError::usage(e.to_string())
        } else {
            super::CliError::failed(e.to_string())
        }
    }
}

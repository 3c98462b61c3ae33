//! Fiber-photometry preprocessing: raw sensor trace (+ optional isosbestic control) → ΔF/F.
//!
//! Start at [`preprocess`]; [`PreprocessOptions::default`] holds the defaults named below.
//!
//! **With a control channel** the control is fitted to the signal, F̂ = a + b·control, and
//! ΔF/F = (signal − F̂)/F̂: the isosbestic correction of Lerner et al. 2015 (Cell 162:635), who
//! fitted the control by least squares over the session (that detail is from the team's methods
//! notes, marked there as from memory). Deviation: our **default fit is IRLS** with Tukey's
//! bisquare weight (c = 4.685, MAD scale; [`regress::irls`]) rather than OLS, because Keevers et
//! al. 2025 (Neurophotonics 12:025003) found IRLS beat OLS — dopamine transients live in the
//! signal only and pull a least-squares line up. OLS ([`ControlFit::Ols`]) and Huber weights
//! are options. The default fits **one line for the whole session**; [`FitScope::Sliding`] fits
//! a running regression over a window (e.g. 60 s) for long sessions whose coupling drifts.
//! `r_squared` (unweighted, signal vs F̂) is reported as a QC figure.
//!
//! **Without a control** (or `use_control = false`, for sensors that are not isosbestic near
//! 405 nm), the baseline is a photobleaching curve: a constant plus two decaying exponentials
//! (Keevers' bleaching model), fitted by variable projection ([`bleach`]); ΔF/F against it.
//! This cannot remove motion artifacts — only a control channel can.
//!
//! **z-score** ([`zscore`]): by default each trial against its own pre-cue baseline, −1 s to
//! 0 s before the cue, with the sample SD; session-wide or none are options. `preprocess` does
//! not apply it (it has no trial times); [`Processed::normaliser`] does, per trial.
//!
//! Not done here, deliberately: demodulation and low-pass filtering (`photometry.csv` is taken
//! as already demodulated and downsampled); the Martianova et al. 2019 (JoVE) recipe — airPLS
//! baseline, z-scoring each channel before a Lasso fit, z_signal − fitted z_reference — is not
//! implemented; its robust-fit idea is covered by IRLS.
//!
//! F̂ must stay above `min_baseline_fraction` (default 1e-3) of the mean signal, else ΔF/F is
//! refused with an error naming the sample, never returned as ±inf. Bad input (length
//! mismatch, NaN, time going backwards, a constant channel) is an error naming channel, sample
//! index and time. Pure computation on [`Photometry`]; no terminal code.

pub mod bleach;
pub mod median;
pub mod regress;
pub mod sliding;
pub mod zscore;

pub use bleach::{BleachFit, BleachModel, BleachOptions, ExpTerm};
pub use regress::{IrlsLimits, LineFit, RobustWeight};
pub use sliding::SlidingFit;
pub use zscore::{zscore_session, zscore_to_baseline, Normaliser, ZScale, ZScoreMode};

use crate::data::Photometry;

#[derive(Debug, Clone, PartialEq, thiserror::Error)]
pub enum PhotometryError {
    #[error("photometry: the {channel} column has {got} samples but time_s has {expected}")]
    LengthMismatch {
        channel: &'static str,
        got: usize,
        expected: usize,
    },
    #[error("photometry: {got} samples is too few; this preprocessing needs at least {need}")]
    TooFewSamples { got: usize, need: usize },
    #[error("photometry: {channel} at sample {index} (time {time_s} s) is {value}, expected a finite number")]
    NotFinite {
        channel: &'static str,
        index: usize,
        time_s: f64,
        value: f64,
    },
    #[error("photometry: time_s goes backwards at sample {index}: {previous} s, then {time_s} s")]
    TimeBackwards {
        index: usize,
        previous: f64,
        time_s: f64,
    },
    #[error("photometry: the {channel} channel is constant; {hint}")]
    FlatChannel {
        channel: &'static str,
        hint: &'static str,
    },
    #[error(
        "photometry: the fitted baseline F̂ is {value} at sample {index} (time {time_s} s), at or \
         below {floor} (a {fraction} fraction of the mean signal); ΔF/F would divide by nearly \
         zero. Is the signal already baseline-subtracted, or is the fit wrong for this recording?"
    )]
    BaselineNearZero {
        index: usize,
        time_s: f64,
        value: f64,
        floor: f64,
        fraction: f64,
    },
    #[error(
        "photometry: in the {window_s} s {kind} window around {time_s} s the control channel is \
         flat, so no line can be fitted; use a longer window",
        kind = if *robust { "robust sliding" } else { "sliding" }
    )]
    FlatWindow {
        window_s: f64,
        time_s: f64,
        robust: bool,
    },
    #[error("photometry: robust fit failed: {0}")]
    RobustFitFailed(String),
    #[error("photometry: bleaching fit failed: {0}")]
    BleachFitFailed(String),
    #[error(
        "photometry: baseline window [{from}, {to}) s around {t0} s holds {samples} samples; \
         a z-score needs at least 2 that are not all equal"
    )]
    BaselineUnusable {
        t0: f64,
        from: f64,
        to: f64,
        samples: usize,
    },
    #[error("photometry: invalid option: {0}")]
    InvalidOption(String),
}

/// How the control is fitted to the signal.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum ControlFit {
    /// Ordinary least squares (Lerner et al. 2015).
    Ols,
    /// Iteratively reweighted least squares with a robust weight (Keevers et al. 2025).
    Irls(RobustWeight),
}

impl Default for ControlFit {
    fn default() -> Self {
        ControlFit::Irls(RobustWeight::TUKEY_DEFAULT)
    }
}

/// Over which samples the control line is fitted.
#[derive(Debug, Clone, Copy, PartialEq, Default)]
pub enum FitScope {
    /// One line for the whole session.
    #[default]
    WholeSession,
    /// A line per sample from the samples within ±window_s/2 of it (a running regression).
    Sliding { window_s: f64 },
}

/// Options of [`preprocess`]; `Default` gives the documented defaults.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct PreprocessOptions {
    /// Default: IRLS, Tukey bisquare c = 4.685.
    pub fit: ControlFit,
    /// Default: the whole session.
    pub scope: FitScope,
    pub irls: IrlsLimits,
    /// Use the control channel when the recording has one (default true); false forces the
    /// bleaching detrend.
    pub use_control: bool,
    /// The bleaching baseline used without a control. Default: double exponential.
    pub bleach: BleachOptions,
    /// F̂ must stay above this fraction of the mean signal (default 1e-3), else ΔF/F is refused.
    pub min_baseline_fraction: f64,
    /// How observations are z-scored downstream. Default: per trial, baseline −1 s to 0 s.
    pub zscore: ZScoreMode,
}

impl Default for PreprocessOptions {
    fn default() -> Self {
        PreprocessOptions {
            fit: ControlFit::default(),
            scope: FitScope::default(),
            irls: IrlsLimits::default(),
            use_control: true,
            bleach: BleachOptions::default(),
            min_baseline_fraction: 1e-3,
            zscore: ZScoreMode::default(),
        }
    }
}

/// What F̂ was and how well it fitted.
#[derive(Debug, Clone, PartialEq)]
pub enum BaselineFit {
    Control(LineFit),
    SlidingControl(SlidingFit),
    Bleaching(BleachFit),
}

/// A preprocessed trace.
#[derive(Debug, Clone)]
pub struct Processed {
    /// ΔF/F as a fraction (0.05 = 5 %), one value per input sample.
    pub dff: Vec<f64>,
    /// Human-readable description of the method, for reports and fit outputs.
    pub method: String,
    pub baseline: BaselineFit,
    /// 1 − Σ(signal − F̂)²/Σ(signal − mean)²: for a control fit, how much of the signal the
    /// control explains (a QC input; low values suggest a poor control).
    pub r_squared: f64,
    /// The z-scoring to apply per trial (see [`PreprocessOptions::zscore`]).
    pub normaliser: Normaliser,
}

impl Processed {
    /// The fit's coefficients as (name, value) rows for tables and reports.
    pub fn coefficients(&self) -> Vec<(String, f64)> {
        let mut rows = Vec::new();
        match &self.baseline {
            BaselineFit::Control(l) => {
                rows.push(("intercept".to_string(), l.intercept));
                rows.push(("slope".to_string(), l.slope));
                if let Some(s) = l.robust_scale {
                    rows.push(("robust_scale".to_string(), s));
                }
            }
            BaselineFit::SlidingControl(s) => {
                rows.push(("intercept_mean".to_string(), s.intercept_mean));
                rows.push(("slope_mean".to_string(), s.slope_mean));
                rows.push(("slope_min".to_string(), s.slope_min));
                rows.push(("slope_max".to_string(), s.slope_max));
                rows.push(("window_s".to_string(), s.window_s));
            }
            BaselineFit::Bleaching(b) => {
                rows.push(("offset".to_string(), b.offset));
                for (k, e) in b.terms.iter().enumerate() {
                    rows.push((format!("amplitude_{}", k + 1), e.amplitude));
                    rows.push((format!("tau_s_{}", k + 1), e.tau_s));
                }
            }
        }
        rows.push(("r_squared".to_string(), self.r_squared));
        rows
    }
}

/// Check lengths, finiteness and time order; return the mean signal.
fn validate(p: &Photometry, control: Option<&[f64]>, need: usize) -> Result<f64, PhotometryError> {
    let n = p.time_s.len();
    let mismatch = |channel, got| PhotometryError::LengthMismatch {
        channel,
        got,
        expected: n,
    };
    if p.signal.len() != n {
        return Err(mismatch("signal", p.signal.len()));
    }
    if let Some(c) = control {
        if c.len() != n {
            return Err(mismatch("control", c.len()));
        }
    }
    if n < need {
        return Err(PhotometryError::TooFewSamples { got: n, need });
    }
    let not_finite = |channel, index: usize, value| PhotometryError::NotFinite {
        channel,
        index,
        time_s: p.time_s[index],
        value,
    };
    let mut previous = f64::NEG_INFINITY;
    let mut sum = 0.0;
    for (i, (&t, &y)) in p.time_s.iter().zip(&p.signal).enumerate() {
        if !t.is_finite() {
            return Err(not_finite("time_s", i, t));
        }
        if t < previous {
            return Err(PhotometryError::TimeBackwards {
                index: i,
                previous,
                time_s: t,
            });
        }
        previous = t;
        if !y.is_finite() {
            return Err(not_finite("signal", i, y));
        }
        sum += y;
    }
    if let Some(c) = control {
        if let Some(i) = c.iter().position(|x| !x.is_finite()) {
            return Err(not_finite("control", i, c[i]));
        }
    }
    let first = p.signal[0];
    if p.signal.iter().all(|&y| y == first) {
        return Err(PhotometryError::FlatChannel {
            channel: "signal",
            hint: "the sensor trace carries no information (fiber disconnected?)",
        });
    }
    Ok(sum / n as f64)
}

/// Where F̂ comes from in the ΔF/F pass: a whole-session line on the control (computed on the
/// fly, saving a pass), or values already written into the output buffer.
enum Fhat<'a> {
    Line { a: f64, b: f64, control: &'a [f64] },
    InOutput,
}

/// Write ΔF/F = (signal − F̂)/F̂ into `out`, refusing F̂ ≤ floor. Returns Σ(signal − F̂)².
fn dff_pass(
    signal: &[f64],
    time: &[f64],
    fhat: Fhat,
    out: &mut [f64],
    floor: f64,
    fraction: f64,
) -> Result<f64, PhotometryError> {
    let mut ss_res = 0.0;
    let mut bad = None;
    match fhat {
        Fhat::Line { a, b, control } => {
            for (i, ((o, &y), &x)) in out.iter_mut().zip(signal).zip(control).enumerate() {
                let f = a + b * x;
                let usable = f > floor; // false for NaN too
                if !usable {
                    bad = Some((i, f));
                    break;
                }
                let d = y - f;
                ss_res += d * d;
                *o = d / f;
            }
        }
        Fhat::InOutput => {
            for (i, (o, &y)) in out.iter_mut().zip(signal).enumerate() {
                let f = *o;
                let usable = f > floor; // false for NaN too
                if !usable {
                    bad = Some((i, f));
                    break;
                }
                let d = y - f;
                ss_res += d * d;
                *o = d / f;
            }
        }
    }
    match bad {
        None => Ok(ss_res),
        Some((index, value)) => Err(PhotometryError::BaselineNearZero {
            index,
            time_s: time[index],
            value,
            floor,
            fraction,
        }),
    }
}

/// Preprocess a recording into ΔF/F (see the module overview for the methods and defaults).
pub fn preprocess(p: &Photometry, opts: &PreprocessOptions) -> Result<Processed, PhotometryError> {
    let fraction = opts.min_baseline_fraction;
    if !(fraction.is_finite() && fraction >= 0.0) {
        return Err(PhotometryError::InvalidOption(format!(
            "min_baseline_fraction must be a number ≥ 0, got {fraction}"
        )));
    }
    let control = p.control.as_deref().filter(|_| opts.use_control);
    let mean_signal = validate(p, control, if control.is_some() { 3 } else { 4 })?;
    let floor = fraction * mean_signal.abs();
    let n = p.signal.len();
    let mut out = vec![0.0; n];
    let (baseline, r_squared, method) = match control {
        Some(x) => {
            let (fit, r2, method) = control_baseline(p, x, opts, &mut out)?;
            (fit, Some(r2), method)
        }
        None => {
            let (fit, method) = bleach_baseline(p, opts, &mut out)?;
            (fit, None, method)
        }
    };
    let fhat = match (&baseline, control) {
        (BaselineFit::Control(l), Some(x)) => Fhat::Line {
            a: l.intercept,
            b: l.slope,
            control: x,
        },
        _ => Fhat::InOutput,
    };
    let ss_res = dff_pass(&p.signal, &p.time_s, fhat, &mut out, floor, fraction)?;
    let r_squared = r_squared.unwrap_or_else(|| {
        let ss_tot: f64 = p
            .signal
            .iter()
            .map(|y| (y - mean_signal) * (y - mean_signal))
            .sum();
        1.0 - ss_res / ss_tot
    });
    let normaliser = Normaliser::new(opts.zscore, &out)?;
    let method = format!("{method}; {}", opts.zscore.name());
    Ok(Processed {
        dff: out,
        method,
        baseline,
        r_squared,
        normaliser,
    })
}

/// Fit the photobleaching baseline, writing F̂ into `out`.
fn bleach_baseline(
    p: &Photometry,
    opts: &PreprocessOptions,
    out: &mut [f64],
) -> Result<(BaselineFit, String), PhotometryError> {
    let fit = bleach::fit_bleaching(&p.time_s, &p.signal, &opts.bleach)?;
    for (o, &t) in out.iter_mut().zip(&p.time_s) {
        *o = fit.at(t);
    }
    let why = if p.control.is_some() {
        "control channel ignored"
    } else {
        "no control channel"
    };
    let shape = if fit.terms.len() == 2 {
        "double"
    } else {
        "single"
    };
    let method = format!(
        "ΔF/F against a {shape}-exponential photobleaching baseline fitted to the signal \
         ({why}; Keevers et al. 2025 bleaching model)"
    );
    Ok((BaselineFit::Bleaching(fit), method))
}

/// Fit the control to the signal. A sliding fit writes F̂ into `out`; a whole-session fit only
/// borrows `out` as IRLS scratch (F̂ is recomputed in the ΔF/F pass).
fn control_baseline(
    p: &Photometry,
    control: &[f64],
    opts: &PreprocessOptions,
    out: &mut [f64],
) -> Result<(BaselineFit, f64, String), PhotometryError> {
    let fit_name = match opts.fit {
        ControlFit::Ols => "ordinary least squares".to_string(),
        ControlFit::Irls(w) => format!("IRLS ({})", w.name()),
    };
    let robust = match opts.fit {
        ControlFit::Ols => None,
        ControlFit::Irls(w) => Some(w),
    };
    match opts.scope {
        FitScope::WholeSession => {
            let line = match robust {
                None => regress::ols(control, &p.signal)?,
                Some(w) => regress::irls(control, &p.signal, w, opts.irls, out)?,
            };
            let method =
                format!(
                "ΔF/F against the isosbestic control fitted to the signal by {fit_name} over the \
                 whole session (Lerner et al. 2015{})",
                if robust.is_some() { "; robust fit after Keevers et al. 2025" } else { "" }
            );
            Ok((BaselineFit::Control(line), line.r_squared, method))
        }
        FitScope::Sliding { window_s } => {
            let mut weights = Vec::new();
            let robust = robust.map(|w| (w, opts.irls, &mut weights));
            let fit = sliding::sliding(&p.time_s, control, &p.signal, window_s, robust, out)?;
            let method = format!(
                "ΔF/F against the isosbestic control fitted to the signal by {fit_name} in a \
                 running {window_s} s window (Lerner et al. 2015, fitted locally)"
            );
            Ok((BaselineFit::SlidingControl(fit), fit.r_squared, method))
        }
    }
}

#[cfg(test)]
mod tests;

//! The fitted parameters kept in the subject folder (`trialdesk-fit.toml`), where the reviewer
//! and `summary` find them.

use super::dataset::{self, FitData, SensorKernel};
use super::{LearnParams, Likelihood, ModelSpec, Problem};
use crate::model::{Representation, TrialSpan};
use crate::obs::{event_bins, window_delta_sums, ObsOptions, Signal, WindowDeltas};
use serde::{Deserialize, Serialize};
use std::path::{Path, PathBuf};

/// File name inside the subject folder.
pub const SAVED_FIT_FILE: &str = "trialdesk-fit.toml";

/// Baseline per window kind (absent when that window was not fitted).
#[derive(Debug, Clone, Copy, PartialEq, Default, Serialize, Deserialize)]
pub struct Baselines {
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub cue: Option<f64>,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub reward: Option<f64>,
}

/// A saved fit of one representation.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct SavedFit {
    pub alpha: f64,
    /// Per model bin.
    pub gamma: f64,
    pub lambda: f64,
    /// Model bin width, seconds.
    pub dt: f64,
    /// `csc`, `presence` or `microstimulus`.
    pub representation: String,
    pub gain: f64,
    pub baselines: Baselines,
    /// RFC 3339 UTC.
    pub fitted_at: String,
    /// Trials whose observations were left out (0 with `ignore_marks`).
    pub n_excluded: usize,
    pub ignore_marks: bool,
    /// Whether λ was fitted or fixed.
    #[serde(default)]
    pub lambda_fitted: bool,
    #[serde(default)]
    pub log_likelihood: Option<f64>,
    #[serde(default)]
    pub n_observations: Option<usize>,
    /// Observation settings the fit used, so a reader can rebuild the same observations:
    /// `spikes` or `photometry` (absent in files written before it was recorded).
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub signal: Option<String>,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub unit: Option<String>,
    #[serde(default)]
    pub latency_s: Option<f64>,
    #[serde(default)]
    pub cue_window_s: Option<[f64; 2]>,
    #[serde(default)]
    pub reward_window_s: Option<[f64; 2]>,
    #[serde(default)]
    pub baseline_window_s: Option<[f64; 2]>,
    /// Photometry sensor kernel the fit weighted δ by (absent: plain window sums, as in files
    /// written before kernels existed).
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub sensor_rise_s: Option<f64>,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub sensor_decay_s: Option<f64>,
    /// `gaussian` or `poisson` (absent: gaussian, as in files written before Poisson fits).
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub likelihood: Option<String>,
    /// `--control-fit`: `ols` when the photometry control was fitted by OLS (absent: IRLS).
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub control_fit: Option<String>,
    /// `--zscore`: the responses were z-scored against each trial's baseline (absent: not).
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub zscore: Option<bool>,
    /// `--asymmetric`: the gain of negative δ (`gain` is then the gain of positive δ).
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub gain_neg: Option<f64>,
    /// `--scale-by` of the fit: `session` or `rig` (absent: one gain for the subject).
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub scale_by: Option<String>,
    /// `fit --licks`: the lick readout (absent: licking was not fitted).
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub lick: Option<SavedLick>,
    /// With `scale_by`: each group's own gain and baselines (`gain` and `baselines` above are
    /// the first group's).
    #[serde(default, rename = "group", skip_serializing_if = "Vec::is_empty")]
    pub groups: Vec<SavedGroup>,
}

/// The lick readout of a fit made with `--licks` ([`super::licks`]).
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
pub struct SavedLick {
    /// `with` (beside the activity) or `only` (licking alone: `gain` is then 0 and unused).
    pub used: LickUseName,
    pub theta: f64,
    pub upsilon: f64,
    pub hz_per_ul: f64,
    pub base_hz: f64,
}

/// How the saved fit used licking.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Deserialize)]
#[serde(rename_all = "lowercase")]
pub enum LickUseName {
    With,
    Only,
}

/// One group's readout in a fit made with `--scale-by`.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct SavedGroup {
    /// The session folder name, or the rig name ("(no rig)" for sessions without one).
    pub name: String,
    pub gain: f64,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub gain_neg: Option<f64>,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub baseline_cue: Option<f64>,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub baseline_reward: Option<f64>,
}

impl SavedGroup {
    /// [gain of positive δ, gain of negative δ]; equal for a symmetric readout.
    pub fn gains(&self) -> [f64; 2] {
        [self.gain, self.gain_neg.unwrap_or(self.gain)]
    }
}

/// The saved group called `name` (`None` when the fit never saw it: a new rig or session).
pub fn group_named<'a>(groups: &'a [SavedGroup], name: Option<&str>) -> Option<&'a SavedGroup> {
    groups.iter().find(|g| Some(g.name.as_str()) == name)
}

/// The group names that make up what is shown of a session under a fit's `scale_by`: its
/// session or rig; for a per-unit fit the unit `unit` (when the session has it) or every
/// unit of the session (their mean is what a screen of all units shows). Empty: not grouped.
pub fn group_keys(
    scale_by: Option<&str>,
    session: &crate::data::Session,
    unit: Option<&str>,
) -> Vec<String> {
    let Some(by) = scale_by.and_then(dataset::ScaleBy::parse) else {
        return Vec::new();
    };
    match by {
        dataset::ScaleBy::Subject => Vec::new(),
        dataset::ScaleBy::Session => vec![session.name.clone()],
        dataset::ScaleBy::Rig => vec![session
            .meta
            .rig
            .clone()
            .unwrap_or_else(|| "(no rig)".to_string())],
        dataset::ScaleBy::Unit | dataset::ScaleBy::SessionUnit => session
            .spikes
            .iter()
            .flat_map(|s| &s.units)
            .filter(|u| unit.is_none_or(|want| want == u.as_str()))
            .map(|u| super::units::group_name(by, &session.name, u))
            .collect(),
    }
}

/// The readout's own parameters in words, one line each, for the reviewer's fit screen and the
/// summary: each group's gain (`--scale-by`), the gains' asymmetry, the lick rule. Empty for a
/// fit with one symmetric gain and no licking.
pub fn readout_lines(f: &SavedFit) -> Vec<String> {
    use crate::util::fmt_by_magnitude;
    let mut lines = Vec::new();
    if let (Some(by), false) = (&f.scale_by, f.groups.is_empty()) {
        let gains: Vec<String> = f
            .groups
            .iter()
            .map(|g| format!("{} {}", g.name, fmt_by_magnitude(g.gain)))
            .collect();
        lines.push(format!("gain per {by}: {}", gains.join(", ")));
        let taus: Vec<String> = f
            .groups
            .iter()
            .filter_map(|g| {
                let neg = g.gain_neg?;
                Some(format!(
                    "{} {}",
                    g.name,
                    fmt_by_magnitude(g.gain / (g.gain + neg))
                ))
            })
            .collect();
        if !taus.is_empty() {
            lines.push(format!(
                "asymmetry g+/(g+ + g-) per {by}: {}",
                taus.join(", ")
            ));
        }
    } else if let Some(neg) = f.gain_neg {
        lines.push(format!(
            "gains: positive δ {}, negative δ {} (asymmetry g+/(g+ + g-) {})",
            fmt_by_magnitude(f.gain),
            fmt_by_magnitude(neg),
            fmt_by_magnitude(f.gain / (f.gain + neg))
        ));
    }
    if let Some(l) = &f.lick {
        lines.push(format!(
            "licking{}: θ {} µL, υ {} per bin, {} licks/s per µL above θ, {} licks/s without",
            if l.used == LickUseName::Only {
                " alone (no activity readout)"
            } else {
                ""
            },
            fmt_by_magnitude(l.theta),
            fmt_by_magnitude(l.upsilon),
            fmt_by_magnitude(l.hz_per_ul),
            fmt_by_magnitude(l.base_hz)
        ));
    }
    lines
}

impl SavedFit {
    /// The sensor kernel of this fit, starting `obs.latency` after the δ as in the fit; `None`
    /// for a plain-sum fit or an unusable pair of time constants.
    pub fn sensor_kernel(&self, obs: &ObsOptions) -> Option<SensorKernel> {
        if obs.signal != Signal::Photometry {
            return None;
        }
        let k = SensorKernel {
            rise_s: self.sensor_rise_s?,
            decay_s: self.sensor_decay_s?,
            latency_s: obs.latency,
        };
        k.is_valid().then_some(k)
    }

    /// `data` (built at this fit's `dt`) weighted the way the fit weighted it.
    pub fn fit_data(&self, data: FitData, obs: &ObsOptions) -> FitData {
        match self.sensor_kernel(obs) {
            Some(k) => dataset::with_sensor_kernel(data, k, obs),
            None => data,
        }
    }

    /// `data` grouped the way this fit grouped its points (`scale_by`), so that
    /// [`SavedFit::predictions`] finds each point's own gain and baselines.
    pub fn with_groups(&self, mut data: FitData, subject: &crate::data::Subject) -> FitData {
        let by = self
            .scale_by
            .as_deref()
            .and_then(dataset::ScaleBy::parse)
            .unwrap_or_default();
        data.groups = dataset::groups(&data, subject, by);
        data
    }

    /// Prediction of every point of `data` (already passed through [`SavedFit::fit_data`]
    /// and, for a fit with `scale_by`, [`SavedFit::with_groups`]): window baseline + gain ×
    /// predictor (Gaussian) or the window's mean softplus rate minus the resting rate
    /// (Poisson), with each point's own group's gain and baselines, the predictor from the
    /// fitter's own [`Problem`]; NaN where the window's baseline was not fitted or the group
    /// is unknown. `None` for an unknown representation.
    pub fn predictions(&self, data: &FitData) -> Option<Vec<f64>> {
        let model = match self.representation.as_str() {
            "rescorla-wagner" => ModelSpec::RescorlaWagner,
            r => ModelSpec::Td(Representation::parse(r)?),
        };
        let params = LearnParams {
            alpha: self.alpha,
            gamma: self.gamma,
            lambda: self.lambda,
            lick: None,
        };
        let likelihood = match self.likelihood.as_deref() {
            None => Likelihood::Gaussian,
            Some(l) => Likelihood::parse(l)?,
        };
        let problem = Problem::new(data, model, false, self.lambda).with_likelihood(likelihood);
        let scale = |i: usize| {
            if self.groups.is_empty() {
                let gains = [self.gain, self.gain_neg.unwrap_or(self.gain)];
                return (gains, [self.baselines.cue, self.baselines.reward]);
            }
            let name = data
                .groups
                .as_ref()
                .map(|g| &g.names[g.of_point[i] as usize]);
            match group_named(&self.groups, name.map(String::as_str)) {
                Some(g) => (g.gains(), [g.baseline_cue, g.baseline_reward]),
                None => ([f64::NAN; 2], [None, None]),
            }
        };
        if likelihood == Likelihood::Poisson {
            let d = problem.window_deltas(&params);
            return Some(
                data.points
                    .iter()
                    .enumerate()
                    .map(|(i, p)| {
                        let (g, b) = scale(i);
                        b[p.kind.index()].map_or(f64::NAN, |b| {
                            super::likelihood::predicted_response_asym(d.of(i), b, g[0], g[1])
                        })
                    })
                    .collect(),
            );
        }
        if self.gain_neg.is_some() || self.groups.iter().any(|g| g.gain_neg.is_some()) {
            let (pos, neg) = problem.split_predictors(&params);
            return Some(
                data.points
                    .iter()
                    .enumerate()
                    .map(|(i, p)| {
                        let (g, b) = scale(i);
                        b[p.kind.index()].map_or(f64::NAN, |b| b + g[0] * pos[i] + g[1] * neg[i])
                    })
                    .collect(),
            );
        }
        let x = problem.predictors(&params);
        Some(
            data.points
                .iter()
                .zip(x)
                .enumerate()
                .map(|(i, (p, x))| {
                    let (g, b) = scale(i);
                    b[p.kind.index()].map_or(f64::NAN, |b| b + g[0] * x)
                })
                .collect(),
        )
    }
}

/// A field of a saved fit that cannot be used to run the model.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
#[error("field `{field}`: {message}")]
pub struct InvalidField {
    pub field: &'static str,
    pub message: String,
}

impl SavedFit {
    /// The TD parameters of this fit, each checked against the ranges `trialdesk model`
    /// accepts on its command line; the first bad field is named.
    pub fn td_params(&self) -> Result<crate::model::TdParams, InvalidField> {
        let bad = |field: &'static str, value: f64, expected: &str| InvalidField {
            field,
            message: format!("{value} is out of range (expected {expected})"),
        };
        let in_closed = |x: f64| (0.0..=1.0).contains(&x);
        if !(self.alpha > 0.0 && self.alpha <= 1.0) {
            return Err(bad("alpha", self.alpha, "0 < alpha <= 1"));
        }
        if !in_closed(self.gamma) {
            return Err(bad("gamma", self.gamma, "0 <= gamma <= 1"));
        }
        if !in_closed(self.lambda) {
            return Err(bad("lambda", self.lambda, "0 <= lambda <= 1"));
        }
        if !(self.dt > 0.0 && self.dt.is_finite()) {
            return Err(bad("dt", self.dt, "a bin width in seconds > 0"));
        }
        let representation =
            Representation::parse(&self.representation).ok_or_else(|| InvalidField {
                field: "representation",
                message: format!(
                    "`{}` is not a TD representation (expected csc, presence or microstimulus)",
                    self.representation
                ),
            })?;
        Ok(crate::model::TdParams {
            alpha: self.alpha,
            gamma: self.gamma,
            lambda: self.lambda,
            dt: self.dt,
            representation,
        })
    }
}

/// The model δ of one trial's cue and reward windows as a fit with `kernel` saw them: plain
/// sums ([`window_delta_sums`]) without one, else Σ w_k·δ_k with the weights of
/// [`SensorKernel::window_weight`] placed as [`dataset::with_sensor_kernel`] places them (δ of
/// bin k at k·dt after the event bin).
pub fn fitted_window_deltas(
    kernel: Option<SensorKernel>,
    span: &TrialSpan,
    delta: &[f64],
    obs: &ObsOptions,
    dt: f64,
) -> WindowDeltas {
    let Some(k) = kernel else {
        return window_delta_sums(span, delta, obs, dt);
    };
    let weighted = |event: Option<usize>, window: (f64, f64)| -> Option<f64> {
        let w = dataset::kernel_weights(k, span, event?, window, dt);
        Some(w.iter().zip(delta).map(|(w, d)| w * d).sum())
    };
    let (cue, reward) = event_bins(span);
    WindowDeltas {
        cue: weighted(cue, obs.cue_window),
        reward: weighted(reward, obs.reward_window),
    }
}

#[derive(Debug, thiserror::Error)]
pub enum SavedFitError {
    #[error("{path}: {source}")]
    Io {
        path: PathBuf,
        source: std::io::Error,
    },
    #[error("{path}: not a valid saved fit: {message}")]
    Parse { path: PathBuf, message: String },
    #[error(transparent)]
    Write(#[from] crate::safe_write::WriteError),
}

pub fn saved_path(subject_root: &Path) -> PathBuf {
    subject_root.join(SAVED_FIT_FILE)
}

/// The saved fit of a subject: `None` when there is none, an error when it cannot be read.
pub fn load_saved(subject_root: &Path) -> Option<Result<SavedFit, SavedFitError>> {
    let path = saved_path(subject_root);
    let text = match std::fs::read_to_string(&path) {
        Ok(t) => t,
        Err(e) if e.kind() == std::io::ErrorKind::NotFound => return None,
        Err(source) => return Some(Err(SavedFitError::Io { path, source })),
    };
    Some(
        toml::from_str::<SavedFit>(&text).map_err(|e| SavedFitError::Parse {
            path,
            message: e.to_string(),
        }),
    )
}

/// Write the fit next to the sessions, replacing the previous one atomically
/// ([`crate::safe_write::replace_file`]) so a reader never sees half a file.
pub fn save(subject_root: &Path, fit: &SavedFit) -> Result<PathBuf, SavedFitError> {
    let path = saved_path(subject_root);
    let text = toml::to_string(fit).map_err(|e| SavedFitError::Parse {
        path: path.clone(),
        message: e.to_string(),
    })?;
    let body = format!(
        "# Written by `trialdesk fit`; rerunning the fit replaces it. gamma and lambda are per\n\
         # model bin of width dt seconds.\n{text}"
    );
    crate::safe_write::replace_file(&path, body.as_bytes())?;
    Ok(path)
}

/// What makes `new` a different analysis from `old` (besides the fitted values): signal,
/// unit, windows, latency, sensor kernel, likelihood, representation, bin width, whether marks
/// were honoured. Each as "field old -> new"; empty when they were made the same way.
pub fn option_changes(old: &SavedFit, new: &SavedFit) -> Vec<String> {
    fn show<T: std::fmt::Debug>(v: &Option<T>) -> String {
        match v {
            Some(x) => format!("{x:?}").replace('"', ""),
            None => "unset".to_string(),
        }
    }
    let mut out = Vec::new();
    let mut field = |name: &str, a: String, b: String| {
        if a != b {
            out.push(format!("{name} {a} -> {b}"));
        }
    };
    field("signal", show(&old.signal), show(&new.signal));
    field("unit", show(&old.unit), show(&new.unit));
    field(
        "cue window",
        show(&old.cue_window_s),
        show(&new.cue_window_s),
    );
    field(
        "reward window",
        show(&old.reward_window_s),
        show(&new.reward_window_s),
    );
    field(
        "baseline window",
        show(&old.baseline_window_s),
        show(&new.baseline_window_s),
    );
    field("latency", show(&old.latency_s), show(&new.latency_s));
    field(
        "sensor decay",
        show(&old.sensor_decay_s),
        show(&new.sensor_decay_s),
    );
    field("likelihood", show(&old.likelihood), show(&new.likelihood));
    field("scale by", show(&old.scale_by), show(&new.scale_by));
    field("z-score", show(&old.zscore), show(&new.zscore));
    field(
        "control fit",
        show(&old.control_fit),
        show(&new.control_fit),
    );
    field(
        "asymmetric gains",
        old.gain_neg.is_some().to_string(),
        new.gain_neg.is_some().to_string(),
    );
    field(
        "representation",
        old.representation.clone(),
        new.representation.clone(),
    );
    field("dt", old.dt.to_string(), new.dt.to_string());
    field(
        "ignore marks",
        old.ignore_marks.to_string(),
        new.ignore_marks.to_string(),
    );
    out
}

/// Now as RFC 3339 UTC, seconds precision.
pub fn now_rfc3339() -> String {
    humantime::format_rfc3339_seconds(std::time::SystemTime::now()).to_string()
}

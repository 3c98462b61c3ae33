//! Values the screens draw that take real work, computed when their inputs change (never per
//! frame): the model run, one session's per-trial activity traces, the days table, and each
//! session's suggested marks (the rules run once, when the session is first opened; which of
//! them are still pending is refolded after every mark, a cheap filter).
//!
//! The work itself is the core's (`model::run`, `obs::SessionActivity`, `obs::observe`); this
//! file only decides what to ask for and keeps the answers.

use super::state::SignalKind;
use crate::data::{Session, Subject};
use crate::fit;
use crate::fit::saved::{fitted_window_deltas, SAVED_FIT_FILE};
use crate::marks::MarkState;
use crate::model::{self, layout_subject, TdParams, TdRun, TrialSpan, POST_S};
use crate::obs::{
    self, group_by_type, ObsOptions, SessionActivity, Signal, TrialObs, WindowDeltas,
};
use crate::plan::{self, CheckedFit, Measurement, ObsRequest, PlanError};
use crate::suggest::{self, RuleSet, Suggestion};
use crate::summary::{self, DayRow, ModelTraces};
use std::path::Path;

/// Where the model's parameters came from; the trial and fit screens say it beside the traces.
#[derive(Debug, Clone, PartialEq)]
pub enum ParamSource {
    /// The subject's saved fit (from `trialdesk fit`), with what it said about itself.
    SavedFit { label: String },
    /// No saved fit: the stated defaults.
    Defaults,
}

impl ParamSource {
    pub fn label(&self) -> String {
        match self {
            ParamSource::SavedFit { label } => format!("saved fit ({label})"),
            ParamSource::Defaults => "defaults (no saved fit)".to_string(),
        }
    }
}

/// The saved fit's readout mapping, when there is one: prediction = baseline + gain·Σδ
/// (Gaussian), or the window's mean softplus rate minus the resting rate (Poisson counts).
#[derive(Debug, Clone, PartialEq)]
pub struct Readout {
    pub cue_baseline: f64,
    pub reward_baseline: f64,
    pub gain: f64,
    /// `--asymmetric`: the gain of negative δ (`gain` is then positive δ's).
    pub gain_neg: Option<f64>,
    pub poisson: bool,
    /// A fit made with `--scale-by`: its `scale_by` and groups, so that each trial is
    /// predicted with its own session's or rig's gain and baselines.
    pub scale_by: Option<String>,
    pub groups: Vec<fit::saved::SavedGroup>,
}

impl Readout {
    /// ([gain of positive δ, of negative δ], cue baseline, reward baseline) for a trial of
    /// `session` showing `unit` (or all units); NaN for a group the fit never saw (a new rig or
    /// session: no prediction rather than a wrong one). A per-unit fit shown for several units
    /// maps with their mean gains and baselines: exactly the mean of their predictions for a
    /// Gaussian readout, close to it for Poisson counts, whose rates bend at zero.
    fn scale(&self, session: &Session, unit: Option<&str>) -> ([f64; 2], f64, f64) {
        if self.groups.is_empty() {
            let gains = [self.gain, self.gain_neg.unwrap_or(self.gain)];
            return (gains, self.cue_baseline, self.reward_baseline);
        }
        let keys = fit::saved::group_keys(self.scale_by.as_deref(), session, unit);
        let found: Vec<&fit::saved::SavedGroup> = keys
            .iter()
            .filter_map(|k| fit::saved::group_named(&self.groups, Some(k)))
            .collect();
        // Every shown unit must be known, or the mean would silently leave some out.
        if found.is_empty() || found.len() < keys.len() {
            return ([f64::NAN; 2], f64::NAN, f64::NAN);
        }
        let n = found.len() as f64;
        let mean = |f: &dyn Fn(&fit::saved::SavedGroup) -> f64| {
            found.iter().map(|g| f(g)).sum::<f64>() / n
        };
        (
            [mean(&|g| g.gains()[0]), mean(&|g| g.gains()[1])],
            mean(&|g| g.baseline_cue.unwrap_or(0.0)),
            mean(&|g| g.baseline_reward.unwrap_or(0.0)),
        )
    }

    fn asymmetric(&self) -> bool {
        self.gain_neg.is_some() || self.groups.iter().any(|g| g.gain_neg.is_some())
    }

    /// Predicted responses of one span's windows, in the units of the observed responses.
    #[allow(clippy::too_many_arguments)]
    fn predict(
        &self,
        session: &Session,
        span: &TrialSpan,
        delta: &[f64],
        sums: WindowDeltas,
        obs: &ObsOptions,
        dt: f64,
        kernel: Option<fit::dataset::SensorKernel>,
    ) -> WindowDeltas {
        let unit = match &obs.signal {
            crate::obs::Signal::Spikes { unit } => unit.as_deref(),
            crate::obs::Signal::Photometry => None,
        };
        let (gain, cue_baseline, reward_baseline) = self.scale(session, unit);
        if !self.poisson {
            if self.asymmetric() {
                // Σ w·(g+·δ⁺ + g−·δ⁻): the window sums of the scaled δ, with unit gain.
                let scaled: Vec<f64> = delta
                    .iter()
                    .map(|&d| gain[0] * d.max(0.0) + gain[1] * d.min(0.0))
                    .collect();
                let s = fitted_window_deltas(kernel, span, &scaled, obs, dt);
                return WindowDeltas {
                    cue: s.cue.map(|d| cue_baseline + d),
                    reward: s.reward.map(|d| reward_baseline + d),
                };
            }
            return WindowDeltas {
                cue: sums.cue.map(|d| cue_baseline + gain[0] * d),
                reward: sums.reward.map(|d| reward_baseline + gain[0] * d),
            };
        }
        let (cue, reward) = obs::window::window_slices(span, delta, obs, dt);
        let predict =
            |d: &[f64], b: f64| fit::likelihood::predicted_response_asym(d, b, gain[0], gain[1]);
        WindowDeltas {
            cue: cue.map(|d| predict(d, cue_baseline)),
            reward: reward.map(|d| predict(d, reward_baseline)),
        }
    }
}

/// The parameters in force and what goes with them.
#[derive(Debug, Clone, PartialEq)]
pub struct ModelSettings {
    pub params: TdParams,
    pub source: ParamSource,
    pub readout: Option<Readout>,
    /// What the saved fit says about itself, for the fit screen.
    pub lines: Vec<String>,
    /// The checked saved fit, whose observation settings are laid under the flags.
    pub saved: Option<CheckedFit>,
    /// The observation flags given to `review`.
    pub request: ObsRequest,
}

impl ModelSettings {
    /// The stated defaults (α 0.1, γ 0.98 per bin, λ 0, csc, dt 0.05 s).
    pub fn defaults() -> Self {
        ModelSettings {
            params: TdParams::default(),
            source: ParamSource::Defaults,
            readout: None,
            lines: vec!["no saved fit: run `trialdesk fit PATH` to fit this subject".to_string()],
            saved: None,
            request: ObsRequest::default(),
        }
    }

    /// The subject's saved fit (`trialdesk-fit.toml`) checked by the core plan, or the
    /// defaults when there is none; a saved fit that fails the check is an error naming the
    /// file and the field, as in every command.
    pub fn from_subject(root: &Path) -> Result<Self, PlanError> {
        let Some(c) = CheckedFit::load(root)? else {
            return Ok(Self::defaults());
        };
        let f = &c.fit;
        let mut lines = vec![format!(
            "fitted {}{}; gain {}",
            f.fitted_at,
            if f.ignore_marks {
                ", ignoring marks"
            } else {
                ""
            },
            crate::util::fmt_by_magnitude(f.gain)
        )];
        let mut quality = format!("{} trial(s) excluded at fit time", f.n_excluded);
        if let (Some(ll), Some(n)) = (f.log_likelihood, f.n_observations) {
            quality = format!("log-likelihood {ll:.1} over {n} observations; {quality}");
        }
        lines.push(quality);
        lines.extend(fit::saved::readout_lines(f));
        let licks_only = f
            .lick
            .is_some_and(|l| l.used == fit::saved::LickUseName::Only);
        let readout = Readout {
            cue_baseline: f.baselines.cue.unwrap_or(0.0),
            reward_baseline: f.baselines.reward.unwrap_or(0.0),
            gain: f.gain,
            gain_neg: f.gain_neg,
            poisson: f.likelihood.as_deref() == Some("poisson"),
            scale_by: f.scale_by.clone(),
            groups: f.groups.clone(),
        };
        Ok(ModelSettings {
            params: c.params,
            source: ParamSource::SavedFit {
                label: format!("{}, {}", SAVED_FIT_FILE, f.fitted_at),
            },
            // Fitted on licking alone: there is no mapping of δ onto the recorded activity.
            readout: (!licks_only).then_some(readout),
            lines,
            saved: Some(c),
            request: ObsRequest::default(),
        })
    }

    /// What is measured, decided by the core plan (flags over the saved fit over defaults). A
    /// subject with no activity at all (licks only) is still reviewed: photometry options, and
    /// every response blank.
    pub fn measurement(&self, subject: &Subject) -> Measurement {
        plan::measurement(subject, &self.request, self.saved.as_ref()).unwrap_or_else(|_| {
            Measurement {
                choice: plan::SignalChoice {
                    signal: Signal::Photometry,
                    reason: "no activity recorded".into(),
                    missing: subject.sessions.iter().map(|s| s.name.clone()).collect(),
                },
                obs: ObsOptions::photometry(),
                kernel: None,
            }
        })
    }
}

/// One pass of the TD model over the whole subject, at the parameters in force.
#[derive(Debug, Clone)]
pub struct ModelView {
    pub params: TdParams,
    pub source: ParamSource,
    pub readout: Option<Readout>,
    /// Extra lines from the saved fit (quality, exclusions) for the fit screen.
    pub fit_lines: Vec<String>,
    pub spans: Vec<TrialSpan>,
    pub run: TdRun,
    /// `[session][trial]` → index into `spans` (trials the model skips have none).
    pub span_of: Vec<Vec<Option<usize>>>,
    /// Per span, δ summed over the cue and reward observation windows.
    pub window_deltas: Vec<WindowDeltas>,
    /// Per span, the saved fit's predicted cue and reward responses; Σδ without a fit.
    pub predicted: Vec<WindowDeltas>,
    /// The observation windows those sums use.
    /// What is measured (signal, windows, sensor kernel), as the core plan decided it.
    pub measurement: Measurement,
}

impl ModelView {
    pub fn build(subject: &Subject, settings: &ModelSettings, m: &Measurement) -> Self {
        let obs = &m.obs;
        let params = settings.params;
        let spans = layout_subject(subject, params.dt);
        let run = model::run(&spans, subject.cue_names().len(), &params);
        let mut span_of: Vec<Vec<Option<usize>>> = subject
            .sessions
            .iter()
            .map(|s| vec![None; s.trials.len()])
            .collect();
        for (i, s) in spans.iter().enumerate() {
            span_of[s.session][s.trial] = Some(i);
        }
        let kernel = m.kernel;
        let window_deltas = spans
            .iter()
            .enumerate()
            .map(|(i, s)| fitted_window_deltas(kernel, s, run.trial_delta(i), obs, params.dt))
            .collect::<Vec<_>>();
        let predicted = spans
            .iter()
            .enumerate()
            .map(|(i, s)| match &settings.readout {
                Some(r) => {
                    let session = &subject.sessions[s.session];
                    r.predict(
                        session,
                        s,
                        run.trial_delta(i),
                        window_deltas[i],
                        obs,
                        params.dt,
                        kernel,
                    )
                }
                None => window_deltas[i],
            })
            .collect();
        ModelView {
            params,
            source: settings.source.clone(),
            readout: settings.readout.clone(),
            fit_lines: settings.lines.clone(),
            spans,
            run,
            span_of,
            window_deltas,
            predicted,
            measurement: m.clone(),
        }
    }
}

/// Per model span, its observations (`None` where the trial gave none or its session lacks the
/// signal).
pub fn observe_spans(
    subject: &Subject,
    model: &ModelView,
    opts: &ObsOptions,
) -> Vec<Option<TrialObs>> {
    let mut out = vec![None; model.spans.len()];
    // Lenient: a session without the signal leaves its trials blank instead of blanking all.
    if let Ok((all, _problems)) = obs::observe_lenient(subject, opts) {
        for o in all {
            if let Some(Some(i)) = model.span_of.get(o.session).and_then(|v| v.get(o.trial)) {
                out[*i] = Some(o);
            }
        }
    }
    out
}

/// One session's suggested marks.
#[derive(Debug, Clone, Default, PartialEq)]
pub struct SessionSuggestions {
    /// Everything the rules found, by trial number then rule (as `suggest_session` orders them).
    pub all: Vec<Suggestion>,
    /// Those the journal has not settled (accepted, rejected or excluded anyway); same order.
    pub pending: Vec<Suggestion>,
}

impl SessionSuggestions {
    /// Run the rules over a session and settle them against its marks.
    pub fn build(session: &Session, rules: &RuleSet, marks: &MarkState) -> Self {
        let all = suggest::suggest_session(session, rules);
        let pending = suggest::pending(&all, marks);
        SessionSuggestions { all, pending }
    }

    /// Recompute what is pending after the marks changed (no rule is re-run).
    pub fn settle(&mut self, marks: &MarkState) {
        self.pending = suggest::pending(&self.all, marks);
    }

    /// The pending suggestions on one trial (by trial number), in rule order.
    pub fn for_trial(&self, trial: i64) -> &[Suggestion] {
        let a = self.pending.partition_point(|s| s.trial < trial);
        let b = a + self.pending[a..].partition_point(|s| s.trial == trial);
        &self.pending[a..b]
    }
}

/// A run of trials sharing cue and outcome, for the session screen's grouping.
#[derive(Debug, Clone, PartialEq)]
pub struct Group {
    pub label: String,
    /// Trial indices in trial order.
    pub trials: Vec<usize>,
}

/// One session's activity, binned per trial on a common window around alignment.
#[derive(Debug, Clone, PartialEq)]
pub struct SessionView {
    /// What the rows measure ("population rate (spikes/s)", "licks/s", ...).
    pub label: String,
    /// Why there is nothing to show, when there is nothing.
    pub missing: Option<String>,
    /// Window start relative to alignment, seconds (negative: before the cue).
    pub from_s: f64,
    pub to_s: f64,
    pub bin_s: f64,
    /// Per trial (index in the session), the binned activity; empty for unaligned trials.
    pub traces: Vec<Vec<f64>>,
    pub groups: Vec<Group>,
    /// Robust range of the values (2nd and 98th percentiles) for shading.
    pub range: (f64, f64),
    /// Only one trial's trace is built (what a first frame draws; see [`SessionView::build_for`]).
    pub partial: bool,
}

/// Bin width of the precomputed traces; the screens resample them to their width.
pub const VIEW_BIN_S: f64 = 0.05;
/// Time shown before alignment.
pub const VIEW_PRE_S: f64 = 1.0;

impl SessionView {
    pub fn build(session: &Session, signal: SignalKind, unit: Option<&str>) -> SessionView {
        Self::build_for(session, signal, unit, None)
    }

    /// [`SessionView::build`], or with `only` one trial's trace (the others left empty, the
    /// shading range from that trace alone): the first frame draws one trial, and binning
    /// every trial of a large session would delay it.
    pub fn build_for(
        session: &Session,
        signal: SignalKind,
        unit: Option<&str>,
        only: Option<usize>,
    ) -> SessionView {
        let latest = obs::latest_reward_s(session);
        let (from_s, to_s, bin_s) = (-VIEW_PRE_S, latest + POST_S, VIEW_BIN_S);
        let licks;
        let (label, act) = match signal {
            SignalKind::Spikes => {
                let sig = Signal::Spikes {
                    unit: unit.map(str::to_string),
                };
                (
                    sig.label(),
                    SessionActivity::new(session, &sig).map_err(|e| e.to_string()),
                )
            }
            SignalKind::Photometry => (
                Signal::Photometry.label(),
                SessionActivity::new(session, &Signal::Photometry).map_err(|e| e.to_string()),
            ),
            SignalKind::Licks => {
                licks = session.licks.as_deref();
                (
                    "lick rate (licks/s)".to_string(),
                    licks
                        .map(|l| SessionActivity::Spikes { units: vec![l] })
                        .ok_or_else(|| format!("session {} has no licks.csv", session.name)),
                )
            }
        };
        let (traces, missing) = match &act {
            Ok(a) => {
                // One sweep per spike train for all trials (the core's batch form).
                let aligned: Vec<(usize, f64)> = session
                    .trials
                    .iter()
                    .enumerate()
                    .filter(|(i, _)| only.is_none_or(|o| o == *i))
                    .filter_map(|(i, t)| obs::alignment_time(t).map(|t0| (i, t0)))
                    .collect();
                let t0s: Vec<f64> = aligned.iter().map(|(_, t0)| *t0).collect();
                let mut traces = vec![Vec::new(); session.trials.len()];
                for ((i, _), row) in aligned.iter().zip(a.traces(&t0s, from_s, to_s, bin_s)) {
                    traces[*i] = row;
                }
                (traces, None)
            }
            Err(e) => (vec![Vec::new(); session.trials.len()], Some(e.clone())),
        };
        let range = robust_range(traces.iter().flatten().copied());
        SessionView {
            label,
            missing,
            from_s,
            to_s,
            bin_s,
            traces,
            groups: group_trials(session),
            range,
            partial: only.is_some(),
        }
    }
}

/// Trials grouped by trial type: cues presented (in `session.toml` order, a compound after
/// its first cue alone), then outcome; uncued rewards last.
pub fn group_trials(session: &Session) -> Vec<Group> {
    group_by_type(session)
        .into_iter()
        .map(|(ty, trials)| {
            let kind = ty.kind.name().replace('_', " ");
            let label = match ty.cues.is_empty() {
                true => kind,
                false => format!("{} {kind}", ty.cue_label(session)),
            };
            Group { label, trials }
        })
        .collect()
}

/// 2nd and 98th percentile of the finite values, so one huge artifact doesn't wash out the rest.
pub fn robust_range(values: impl Iterator<Item = f64>) -> (f64, f64) {
    let mut v: Vec<f64> = values.filter(|x| x.is_finite()).collect();
    if v.is_empty() {
        return (0.0, 1.0);
    }
    v.sort_by(f64::total_cmp);
    let at = |q: f64| v[((v.len() - 1) as f64 * q).round() as usize];
    let (lo, hi) = (at(0.02), at(0.98));
    if hi > lo {
        (lo, hi)
    } else {
        (lo, lo + 1.0)
    }
}

/// The days table from the core's `summary::day_rows`: means leave out excluded trials, so it
/// is rebuilt whenever marks change (cheap: window sums over the precomputed model run).
pub fn day_table(
    subject: &Subject,
    model: &ModelView,
    obs: &[Option<TrialObs>],
    marks: &[MarkState],
) -> Vec<DayRow> {
    let flat: Vec<TrialObs> = obs.iter().flatten().cloned().collect();
    summary::day_rows(
        subject,
        &flat,
        marks,
        Some(ModelTraces {
            spans: &model.spans,
            run: &model.run,
            dt: model.params.dt,
            opts: &model.measurement.obs,
            kernel: model.measurement.kernel,
        }),
    )
}

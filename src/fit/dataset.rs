//! What a fit sees: trial spans in training order and one observation per response window.
//!
//! [`FitData`] is built by [`build`] from a loaded subject, its observations (`obs`) and its
//! marks, or directly from parts (tests, benchmarks, the simulator's recovery checks).

use crate::data::Subject;
use crate::marks::MarkState;
use crate::model::layout::bin_of;
use crate::model::{layout_subject, TrialSpan};
use crate::obs::{event_bins, window_bins, EventWindow, ObsOptions, TrialObs};
use std::collections::{BTreeMap, HashMap};

/// Which event a response window follows.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash, PartialOrd, Ord)]
pub enum WindowKind {
    /// After cue onset.
    Cue,
    /// After the delivered reward, or after the expected reward time on omission trials.
    Reward,
    /// A window of the anticipation period whose lick count is observed (`fit --licks`,
    /// [`super::licks`]); never among the activity windows of [`WindowKind::ALL`].
    Licks,
}

impl WindowKind {
    pub const ALL: [WindowKind; 2] = [WindowKind::Cue, WindowKind::Reward];

    pub fn name(self) -> &'static str {
        match self {
            WindowKind::Cue => "cue",
            WindowKind::Reward => "reward",
            WindowKind::Licks => "licks",
        }
    }

    /// Index into per-kind arrays of the activity readout (baselines); lick windows have
    /// their own readout and index past them.
    pub fn index(self) -> usize {
        match self {
            WindowKind::Cue => 0,
            WindowKind::Reward => 1,
            WindowKind::Licks => 2,
        }
    }

    /// A window of recorded activity (not of licks).
    pub fn is_activity(self) -> bool {
        self != WindowKind::Licks
    }
}

/// One observed response and where the model's δ for it lies.
#[derive(Debug, Clone, PartialEq)]
pub struct ObsPoint {
    /// Index into [`FitData::spans`].
    pub span: usize,
    pub kind: WindowKind,
    /// The model bins (within the span) whose δ is summed: `first_bin..end_bin`, already shifted
    /// back by the response latency and clipped to the span.
    pub first_bin: u32,
    pub end_bin: u32,
    /// The bin (within the span) of the event the window follows.
    pub event_bin: u32,
    /// The time of that event on the session clock (cue onset, delivered or expected reward):
    /// where the spike count of the window is taken.
    pub event_s: f64,
    /// For a trial with an event list, which event the window follows (`cue:<name>`,
    /// `reward:<n>`, `omission:<name>`, see [`crate::obs::events`]; plain trials of such a
    /// subject get the same form); `None` in a subject without event lists, whose windows are
    /// named by `kind` alone, as before.
    pub label: Option<String>,
    /// Observed response (window mean minus pre-cue baseline).
    pub observed: f64,
    /// The trial is marked `exclude` (and marks are honoured): out of the likelihood.
    pub excluded: bool,
}

/// The excluded-trial count the report must show, with reasons.
#[derive(Debug, Clone, Default, PartialEq)]
pub struct Exclusions {
    /// `--ignore-marks`: marks were read but not applied.
    pub ignore_marks: bool,
    /// Trials whose standing mark is `exclude` (applied or, with `ignore_marks`, not).
    pub n_trials: usize,
    /// Those trials counted per reason ("(no reason given)" for an empty one).
    pub by_reason: BTreeMap<String, usize>,
}

/// The fitting data of one subject.
#[derive(Debug, Clone)]
pub struct FitData {
    /// Every trial the model can place, in training order; the model runs over all of them.
    pub spans: Vec<TrialSpan>,
    pub n_cues: usize,
    /// Model bin width, seconds.
    pub dt: f64,
    /// Session folder names, indexed by `TrialSpan::session`.
    pub session_names: Vec<String>,
    /// The `trial` number of each span.
    pub trial_numbers: Vec<i64>,
    pub points: Vec<ObsPoint>,
    pub exclusions: Exclusions,
    /// Photometry: per point, δ weights under the sensor kernel ([`with_sensor_kernel`]); the
    /// predictor is then Σ w_k·δ_k instead of the plain sum over the window's bins.
    pub weighted: Option<Vec<WeightedWindow>>,
    /// Spikes: per point, the spike count in its window ([`spike_counts`]), for the
    /// Poisson likelihood.
    pub counts: Option<Vec<super::likelihood::WindowCount>>,
    /// `--scale-by`: groups of points with their own gain and baselines ([`groups`]); `None`
    /// for one gain and one pair of baselines over the whole subject.
    pub groups: Option<Groups>,
}

/// What gets its own gain and baselines (the learning parameters stay shared).
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default)]
pub enum ScaleBy {
    /// One gain for the whole subject (the default, as before).
    #[default]
    Subject,
    /// Each session (acute recordings, a patch cord replaced between days).
    Session,
    /// Each rig (`rig` in session.toml; sessions without one form the group "(no rig)").
    Rig,
    /// Each unit, one id the same neuron on every day it appears (chronic recordings): every
    /// unit's own responses are points ([`super::units`]), a unit contributes the sessions
    /// it was recorded in.
    Unit,
    /// Each unit of each session (acute recordings: `u1` on two days is two neurons).
    SessionUnit,
}

impl ScaleBy {
    pub const ALL: [ScaleBy; 5] = [
        ScaleBy::Subject,
        ScaleBy::Session,
        ScaleBy::Rig,
        ScaleBy::Unit,
        ScaleBy::SessionUnit,
    ];

    pub fn name(self) -> &'static str {
        match self {
            ScaleBy::Subject => "subject",
            ScaleBy::Session => "session",
            ScaleBy::Rig => "rig",
            ScaleBy::Unit => "unit",
            ScaleBy::SessionUnit => "session-unit",
        }
    }

    /// Each unit's own responses are the points (built by [`super::units::per_unit`]).
    pub fn per_unit(self) -> bool {
        matches!(self, ScaleBy::Unit | ScaleBy::SessionUnit)
    }

    pub fn parse(s: &str) -> Option<Self> {
        Self::ALL.into_iter().find(|b| b.name() == s)
    }
}

/// Points grouped for their own gain and baselines.
#[derive(Debug, Clone, PartialEq)]
pub struct Groups {
    pub by: ScaleBy,
    /// Group names (session folder names, or rig names), in first-seen training order.
    pub names: Vec<String>,
    /// Per point, its index into `names`.
    pub of_point: Vec<u32>,
}

/// The points' groups under `by`; `None` for [`ScaleBy::Subject`], and for the per-unit
/// groupings, whose points carry no unit: [`super::units::per_unit`] groups those itself.
pub fn groups(data: &FitData, subject: &Subject, by: ScaleBy) -> Option<Groups> {
    let key = |point: usize| -> String {
        let session = data.session_of(point);
        match by {
            ScaleBy::Subject | ScaleBy::Unit | ScaleBy::SessionUnit => String::new(),
            ScaleBy::Session => data.session_names[session].clone(),
            ScaleBy::Rig => subject.sessions[session]
                .meta
                .rig
                .clone()
                .unwrap_or_else(|| "(no rig)".to_string()),
        }
    };
    if by == ScaleBy::Subject || by.per_unit() {
        return None;
    }
    let mut names: Vec<String> = Vec::new();
    let mut of_point = Vec::with_capacity(data.points.len());
    for i in 0..data.points.len() {
        let k = key(i);
        let g = match names.iter().position(|n| *n == k) {
            Some(g) => g,
            None => {
                names.push(k);
                names.len() - 1
            }
        };
        of_point.push(g as u32);
    }
    Some(Groups {
        by,
        names,
        of_point,
    })
}

impl FitData {
    /// Indices of the points that enter the likelihood.
    pub fn included(&self) -> Vec<usize> {
        (0..self.points.len())
            .filter(|&i| !self.points[i].excluded)
            .collect()
    }

    /// (session name, trial number) of a span.
    pub fn label(&self, span: usize) -> (&str, i64) {
        let s = &self.spans[span];
        (
            self.session_names
                .get(s.session)
                .map(String::as_str)
                .unwrap_or("?"),
            self.trial_numbers.get(span).copied().unwrap_or(-1),
        )
    }

    /// Session index of a point.
    pub fn session_of(&self, point: usize) -> usize {
        self.spans[self.points[point].span].session
    }

    /// Number of sessions that have at least one span.
    pub fn n_sessions(&self) -> usize {
        self.spans.iter().map(|s| s.session + 1).max().unwrap_or(0)
    }

    /// The same data with every exclusion lifted (`--ignore-marks`), keeping the counts.
    pub fn ignoring_marks(&self) -> FitData {
        let mut d = self.clone();
        for p in &mut d.points {
            p.excluded = false;
        }
        d.exclusions.ignore_marks = true;
        d
    }
}

/// Reason shown for an exclusion without one.
pub const NO_REASON: &str = "(no reason given)";

/// The fitting data of a loaded subject: spans at bin width `dt`, one point per observed
/// response window (mapped onto bins by [`crate::obs::window_bins`]), flagged by the standing
/// marks (`marks[i]` belongs to `subject.sessions[i]`; missing entries mean no marks).
pub fn build(
    subject: &Subject,
    observations: &[TrialObs],
    obs_opts: &ObsOptions,
    dt: f64,
    marks: &[MarkState],
    ignore_marks: bool,
) -> FitData {
    let spans = layout_subject(subject, dt);
    let index: HashMap<(usize, usize), usize> = spans
        .iter()
        .enumerate()
        .map(|(i, s)| ((s.session, s.trial), i))
        .collect();
    let excluded_mark = |session: usize, trial: usize| -> Option<&str> {
        let number = subject.sessions[session].trials[trial].number;
        let state = marks.get(session)?;
        state.is_excluded(number).then(|| {
            state
                .marks
                .get(&number)
                .map(|m| m.reason.as_str())
                .unwrap_or("")
        })
    };

    let mut exclusions = Exclusions {
        ignore_marks,
        ..Default::default()
    };
    for s in &spans {
        if let Some(reason) = excluded_mark(s.session, s.trial) {
            exclusions.n_trials += 1;
            let reason = if reason.trim().is_empty() {
                NO_REASON
            } else {
                reason.trim()
            };
            *exclusions.by_reason.entry(reason.to_string()).or_default() += 1;
        }
    }

    // In a subject with event lists, plain trials' windows are named the same way, so that a
    // probe of one cue alone can be told from another (a subject without any keeps the bare
    // `cue` and `reward`, as before).
    let any_events = spans.iter().any(|s| s.events.is_some());
    let mut points = Vec::with_capacity(observations.len() * 2);
    for o in observations {
        let Some(&si) = index.get(&(o.session, o.trial)) else {
            continue;
        };
        let span = &spans[si];
        let excluded = !ignore_marks && excluded_mark(o.session, o.trial).is_some();
        if !o.events.is_empty() || span.events.is_some() {
            event_points(&mut points, o, si, span, obs_opts, dt, excluded);
            continue;
        }
        let (cue_bin, reward_bin) = event_bins(span);
        let session = &subject.sessions[o.session];
        let trial = &session.trials[o.trial];
        let reward_s = trial
            .reward_s
            .or_else(|| crate::obs::expected_reward_time(session, trial));
        for (kind, value, event, event_s, window) in [
            (
                WindowKind::Cue,
                o.cue,
                cue_bin,
                trial.cue_s,
                obs_opts.cue_window,
            ),
            (
                WindowKind::Reward,
                o.reward,
                reward_bin,
                reward_s,
                obs_opts.reward_window,
            ),
        ] {
            let (Some(value), Some(event), Some(event_s)) = (value, event, event_s) else {
                continue;
            };
            let bins = window_bins(span, event, window, obs_opts.latency, dt);
            if bins.is_empty() {
                continue;
            }
            points.push(ObsPoint {
                span: si,
                kind,
                first_bin: bins.start as u32,
                end_bin: bins.end as u32,
                event_bin: event as u32,
                event_s,
                label: any_events.then(|| plain_label(subject, o, kind)),
                observed: value,
                excluded,
            });
        }
    }

    FitData {
        trial_numbers: spans
            .iter()
            .map(|s| subject.sessions[s.session].trials[s.trial].number)
            .collect(),
        session_names: subject.sessions.iter().map(|s| s.name.clone()).collect(),
        n_cues: subject.cue_names().len(),
        spans,
        dt,
        points,
        exclusions,
        weighted: None,
        counts: None,
        groups: None,
    }
}

/// The label a plain trial's window gets beside trials with event lists: `cue:<name>`,
/// `reward:1`, or `omission:<name>`.
fn plain_label(subject: &Subject, o: &TrialObs, kind: WindowKind) -> String {
    let session = &subject.sessions[o.session];
    let name = session.cue_name(&session.trials[o.trial]).unwrap_or("");
    match (kind, o.omission) {
        (WindowKind::Cue, _) => format!("cue:{name}"),
        (WindowKind::Reward, true) => format!("omission:{name}"),
        (WindowKind::Reward, false) => "reward:1".to_string(),
        (WindowKind::Licks, _) => "licks".to_string(),
    }
}

/// One point per event observation of a trial with an event list, each at its own event's
/// bin (from its time: `dt` may differ from the bins the observations were planned with).
fn event_points(
    points: &mut Vec<ObsPoint>,
    o: &TrialObs,
    si: usize,
    span: &TrialSpan,
    obs_opts: &ObsOptions,
    dt: f64,
    excluded: bool,
) {
    for e in &o.events {
        let Some(value) = e.value else {
            continue;
        };
        let (kind, window) = match e.window {
            EventWindow::Cue => (WindowKind::Cue, obs_opts.cue_window),
            EventWindow::Reward | EventWindow::Omission => {
                (WindowKind::Reward, obs_opts.reward_window)
            }
        };
        let event = bin_of(e.time_s, span.t0, dt);
        if event < 0 {
            continue;
        }
        let bins = window_bins(span, event as usize, window, obs_opts.latency, dt);
        if bins.is_empty() {
            continue;
        }
        points.push(ObsPoint {
            span: si,
            kind,
            first_bin: bins.start as u32,
            end_bin: bins.end as u32,
            event_bin: event as u32,
            event_s: e.time_s,
            label: Some(e.label.clone()),
            observed: value,
            excluded,
        });
    }
}

/// Every point's spike count: the spikes of the observed units (all, or
/// `--unit`'s) in the point's window, measured exactly where `obs` measures the response
/// (cue onset or the delivered/expected reward, plus the window). `None` when the signal is
/// not spikes or a session has no spikes. Assign to [`FitData::counts`].
pub fn spike_counts(
    data: &FitData,
    subject: &Subject,
    obs: &ObsOptions,
) -> Option<Vec<super::likelihood::WindowCount>> {
    use crate::obs::{activity::count_in, SessionActivity, Signal};
    if !matches!(obs.signal, Signal::Spikes { .. }) {
        return None;
    }
    let mut acts: HashMap<usize, SessionActivity> = HashMap::new();
    let mut counts = Vec::with_capacity(data.points.len());
    for p in &data.points {
        let span = &data.spans[p.span];
        let session = subject.sessions.get(span.session)?;
        let event = p.event_s;
        let window = match p.kind {
            WindowKind::Cue => obs.cue_window,
            WindowKind::Reward => obs.reward_window,
            WindowKind::Licks => {
                let (exposure, count) = super::licks::window_count(p, data.dt);
                counts.push(super::likelihood::WindowCount { count, exposure });
                continue;
            }
        };
        let act = match acts.entry(span.session) {
            std::collections::hash_map::Entry::Occupied(e) => e.into_mut(),
            std::collections::hash_map::Entry::Vacant(e) => {
                e.insert(SessionActivity::new(session, &obs.signal).ok()?)
            }
        };
        let SessionActivity::Spikes { units } = &*act else {
            return None;
        };
        let (lo, hi) = (event + window.0, event + window.1);
        let n: usize = units.iter().map(|u| count_in(u, lo, hi)).sum();
        counts.push(super::likelihood::WindowCount {
            count: n as f64,
            exposure: units.len() as f64 * (hi - lo),
        });
    }
    Some(counts)
}

/// A sensor's impulse response h(u) = exp(−u/decay) − exp(−u/rise) for u ≥ 0 (scaled to peak
/// 1), starting `latency_s` after the δ — the difference-of-exponentials shape that
/// `simulate` convolves δ with (methods.md §6 sensor kinetics).
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct SensorKernel {
    pub rise_s: f64,
    pub decay_s: f64,
    pub latency_s: f64,
}

impl SensorKernel {
    /// ∫₀ᵘ h, unscaled (closed form).
    fn integral(&self, u: f64) -> f64 {
        if u <= 0.0 {
            return 0.0;
        }
        let (r, d) = (self.rise_s, self.decay_s);
        d * (1.0 - (-u / d).exp()) - r * (1.0 - (-u / r).exp())
    }

    fn peak(&self) -> f64 {
        let (r, d) = (self.rise_s, self.decay_s);
        let t = (d / r).ln() * r * d / (d - r);
        (-t / d).exp() - (-t / r).exp()
    }

    /// Mean over the window [a, b] (seconds after the event) of the response, peak 1, to a
    /// unit δ at `s` seconds after the event.
    pub fn window_weight(&self, s: f64, (a, b): (f64, f64)) -> f64 {
        let lag = s + self.latency_s;
        (self.integral(b - lag) - self.integral(a - lag)) / ((b - a) * self.peak())
    }

    /// `rise < decay`, both positive and finite.
    pub fn is_valid(&self) -> bool {
        self.rise_s > 0.0
            && self.decay_s.is_finite()
            && self.rise_s < self.decay_s
            && self.latency_s.is_finite()
    }
}

/// δ weights of one point: bins `first_bin..first_bin + weights.len()` of its span.
#[derive(Debug, Clone, PartialEq)]
pub struct WeightedWindow {
    pub first_bin: u32,
    pub weights: Vec<f64>,
}

/// Weight of each bin's δ in a window after `event_bin`: the sensor kernel's mean over the
/// window for an impulse in that bin. The fitter and every rebuild from a saved fit use this.
pub fn kernel_weights(
    kernel: SensorKernel,
    span: &TrialSpan,
    event_bin: usize,
    window: (f64, f64),
    dt: f64,
) -> Vec<f64> {
    let event = event_bin as f64;
    (0..span.n_bins)
        .map(|k| kernel.window_weight((k as f64 - event) * dt, window))
        .collect()
}

/// `data` with every point's predictor weighted by `kernel`: δ of bin k (at k·dt after the
/// alignment time, as `simulate` places it) counts with the kernel's mean over the point's
/// window, so δ just before an event that the sensor carries into the window is counted, and
/// δ late in the window counts less. The event is taken at the start of its bin. The gain
/// then means peak response per unit δ. Trial spans end 1 s after the reward, so responses
/// carried over into the next trial's baseline are not modelled.
pub fn with_sensor_kernel(mut data: FitData, kernel: SensorKernel, obs: &ObsOptions) -> FitData {
    let weighted = data
        .points
        .iter()
        .map(|p| {
            let span = &data.spans[p.span];
            let window = match p.kind {
                WindowKind::Cue => obs.cue_window,
                WindowKind::Reward => obs.reward_window,
                WindowKind::Licks => {
                    return WeightedWindow {
                        first_bin: 0,
                        weights: Vec::new(),
                    }
                }
            };
            let w = kernel_weights(kernel, span, p.event_bin as usize, window, data.dt);
            // Bins whose response has died out or not yet begun add nothing.
            let first = w.iter().position(|&x| x > 1e-9).unwrap_or(w.len());
            let end = w.iter().rposition(|&x| x > 1e-9).map_or(first, |i| i + 1);
            WeightedWindow {
                first_bin: first as u32,
                weights: w[first..end].to_vec(),
            }
        })
        .collect();
    data.weighted = Some(weighted);
    data
}

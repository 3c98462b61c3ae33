//! Per-trial observations: the measurement layer shared by the fitter, the summary and the
//! reviewer.
//!
//! Start at [`observe`]: one [`TrialObs`] per model trial span (same order as
//! [`crate::model::layout_subject`]) holding the cue response, the reward response (after the
//! delivered reward, or after the *expected* reward time on omission trials) and the
//! anticipatory lick rate. A response is mean activity in a window after the event minus mean
//! activity in a baseline window before the trial's alignment time (cue onset; the reward for
//! uncued trials). [`activity`] counts spikes and averages photometry; [`photometry`] is the
//! seam where ΔF/F preprocessing plugs in; [`window`] maps observation windows onto model bins
//! (the fitter and the summary must use the very same mapping).
//!
//! [`observe_lenient`] keeps going past sessions that lack the signal (for tables that show
//! what there is). Many windows are measured in one sweep per spike train
//! ([`SessionActivity::means`], [`SessionActivity::traces`]): 64 cold binary searches per
//! window were cache misses, a cursor sweep streams each train once.

pub mod activity;
pub mod events;
pub mod photometry;
pub mod trial_type;
pub mod window;

pub use activity::{activity_trace, SessionActivity};
pub use events::{EventObs, EventWindow};
pub use photometry::photometry_activity;
pub use trial_type::{group_by_type, latest_reward_s, TrialType};
pub use window::{event_bins, window_bins, window_delta_sums, WindowDeltas};

use crate::data::{Session, Subject, Trial};
use crate::model::{layout_subject, DEFAULT_DT};

/// Which recorded activity a response is measured on.
#[derive(Debug, Clone, PartialEq, Eq)]
pub enum Signal {
    /// Sorted single units. `unit: None` = population mean rate across all units of a session.
    Spikes { unit: Option<String> },
    /// The photometry trace as given by [`photometry_activity`].
    Photometry,
}

impl Signal {
    /// Short label for headers and messages ("population rate (spikes/s)", "unit u3 rate
    /// (spikes/s)", "photometry ΔF/F"); [`photometry::photometry_methods`] says how ΔF/F was made.
    pub fn label(&self) -> String {
        match self {
            Signal::Spikes { unit: None } => "population rate (spikes/s)".to_string(),
            Signal::Spikes { unit: Some(u) } => format!("unit {u} rate (spikes/s)"),
            Signal::Photometry => "photometry ΔF/F".to_string(),
        }
    }
}

/// Windows in seconds relative to their event; `baseline` is relative to the alignment time
/// (cue onset; the reward on uncued trials). `latency` only shifts the mapping onto model
/// bins ([`window_bins`]): responses themselves are measured in the windows as given.
#[derive(Debug, Clone, PartialEq)]
pub struct ObsOptions {
    pub signal: Signal,
    pub cue_window: (f64, f64),
    pub reward_window: (f64, f64),
    pub baseline: (f64, f64),
    pub latency: f64,
    /// Photometry: each trial's responses divided by the standard deviation of its own
    /// baseline window (a z-score against the pre-cue baseline); off by default.
    pub zscore: bool,
    /// Photometry: how the isosbestic control is fitted to the signal (`--control-fit`);
    /// default IRLS with Tukey's bisquare, OLS an option (faster on long 1 kHz recordings).
    pub control_fit: crate::photometry::ControlFit,
}

impl Default for ObsOptions {
    /// Spiking population; cue and reward windows 50–350 ms after the event, baseline the
    /// second before cue onset, latency 50 ms. Dopamine neurons answer within < 100 ms and for
    /// < 200 ms, measured in a 0–300 ms window (Schultz 2007, Scholarpedia 2:2184; methods.md
    /// §6); starting at the 50 ms latency keeps the pre-response bins out.
    fn default() -> Self {
        ObsOptions {
            signal: Signal::Spikes { unit: None },
            cue_window: (0.05, 0.35),
            reward_window: (0.05, 0.35),
            baseline: (-1.0, 0.0),
            latency: 0.05,
            zscore: false,
            control_fit: crate::photometry::ControlFit::default(),
        }
    }
}

impl ObsOptions {
    /// Defaults for a photometry sensor, whose transients are slower than spikes: windows
    /// 0–1 s after the event, baseline the second before cue onset (window lengths from
    /// memory, marked so in our methods notes), latency 50 ms — the same as the spikes' and as
    /// `simulate`'s sensor, whose response starts 50 ms after δ. With latency 0 the fitted
    /// sensor kernel starts 50 ms early against that sensor and α came out about 5 % low.
    pub fn photometry() -> Self {
        ObsOptions {
            signal: Signal::Photometry,
            cue_window: (0.0, 1.0),
            reward_window: (0.0, 1.0),
            baseline: (-1.0, 0.0),
            latency: 0.05,
            zscore: false,
            control_fit: crate::photometry::ControlFit::default(),
        }
    }

    /// Every window must be finite with start < end; the latency finite.
    pub fn validate(&self) -> Result<(), ObsError> {
        for (name, w) in [
            ("cue window", self.cue_window),
            ("reward window", self.reward_window),
            ("baseline", self.baseline),
        ] {
            if !(w.0.is_finite() && w.1.is_finite()) {
                return Err(ObsError::InvalidWindow {
                    name,
                    window: w,
                    reason: "bounds must be finite numbers of seconds".into(),
                });
            }
            if w.0 >= w.1 {
                return Err(ObsError::InvalidWindow {
                    name,
                    window: w,
                    reason: "start must be before end".into(),
                });
            }
        }
        if !self.latency.is_finite() {
            return Err(ObsError::InvalidWindow {
                name: "latency",
                window: (self.latency, self.latency),
                reason: "latency must be a finite number of seconds".into(),
            });
        }
        Ok(())
    }
}

/// What happened on a trial, from the trial table and the cue definitions.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash, PartialOrd, Ord)]
pub enum TrialKind {
    /// Cue, then the reward was delivered.
    Rewarded,
    /// Cue with a reward delay, but no reward this time.
    Omission,
    /// Cue that is never rewarded (no `reward_delay_s`) and no reward.
    UnrewardedCue,
    /// Reward without a cue.
    UncuedReward,
}

impl TrialKind {
    pub fn of(session: &Session, trial: &Trial) -> Option<TrialKind> {
        if trial.has_events() {
            return events::kind_of(session, trial);
        }
        match (trial.cue.is_some(), trial.reward_s.is_some()) {
            (true, true) => Some(TrialKind::Rewarded),
            (true, false) if expected_reward_time(session, trial).is_some() => {
                Some(TrialKind::Omission)
            }
            (true, false) => Some(TrialKind::UnrewardedCue),
            (false, true) => Some(TrialKind::UncuedReward),
            (false, false) => None,
        }
    }

    pub fn name(&self) -> &'static str {
        match self {
            TrialKind::Rewarded => "rewarded",
            TrialKind::Omission => "omission",
            TrialKind::UnrewardedCue => "unrewarded_cue",
            TrialKind::UncuedReward => "uncued_reward",
        }
    }
}

/// One trial's observations. `session`/`trial` index `Subject::sessions` and that session's
/// `trials`, exactly as in [`crate::model::TrialSpan`].
#[derive(Debug, Clone, PartialEq)]
pub struct TrialObs {
    pub session: usize,
    pub trial: usize,
    /// Cue-window mean − baseline; `None` for uncued trials (or no photometry samples there).
    pub cue: Option<f64>,
    /// Reward-window mean − baseline, after the delivered reward or, on omission trials, after
    /// the expected reward time; `None` for unrewarded cues (no expectation).
    pub reward: Option<f64>,
    pub omission: bool,
    /// Licks/s from cue onset to the expected reward (or the delivery, if earlier; for a cue
    /// never rewarded, over the session's longest reward delay); `None` without licks.csv or
    /// without a cue ([`anticipatory_lick_rate`]).
    pub anticipatory_lick_rate: Option<f64>,
    pub kind: TrialKind,
    /// A trial with an event list (events.csv, cue_off_s): one observation per cue event,
    /// per delivered reward and per expected time of an omission ([`events::plan`]); `cue`
    /// and `reward` above then hold the first cue's and the first reward's (or omission's).
    /// Empty for plain trials.
    pub events: Vec<EventObs>,
}

#[derive(Debug, Clone, PartialEq, thiserror::Error)]
pub enum ObsError {
    #[error("unit \"{unit}\" not found in session {session}; available units: {}", list_units(.available))]
    UnitNotFound {
        unit: String,
        session: String,
        available: Vec<String>,
    },
    #[error("session {session} has no {signal} data{}", paren_hint(.hint))]
    SignalAbsent {
        signal: &'static str,
        session: String,
        hint: String,
    },
    #[error("invalid {name} ({}, {}): {reason}", .window.0, .window.1)]
    InvalidWindow {
        name: &'static str,
        window: (f64, f64),
        reason: String,
    },
}

fn list_units(units: &[String]) -> String {
    if units.is_empty() {
        "none".to_string()
    } else {
        units.join(", ")
    }
}

fn paren_hint(h: &str) -> String {
    if h.is_empty() {
        String::new()
    } else {
        format!(" ({h})")
    }
}

/// Cue onset + the cue's reward delay; `None` for uncued trials and never-rewarded cues.
pub fn expected_reward_time(session: &Session, trial: &Trial) -> Option<f64> {
    if trial.has_events() {
        let events = trial.all_events();
        let times = events::expected_times(session, &events);
        return times.iter().map(|&(_, t)| t).reduce(f64::min);
    }
    let cue = trial.cue?;
    Some(trial.cue_s? + session.meta.cues[cue].reward_delay_s?)
}

/// The time a trial is aligned on: cue onset, or the reward for uncued trials (as the model).
pub fn alignment_time(trial: &Trial) -> Option<f64> {
    if trial.has_events() {
        return events::alignment(trial);
    }
    match trial.cue {
        Some(_) => trial.cue_s,
        None => trial.reward_s,
    }
}

/// Observations of every trial the model lays out (see [`crate::model::layout_subject`];
/// trials it skips are skipped here too), in training order. Fails if any session with
/// trials lacks the signal (or the chosen unit).
pub fn observe(subject: &Subject, opts: &ObsOptions) -> Result<Vec<TrialObs>, ObsError> {
    let (obs, mut problems) = observe_lenient(subject, opts)?;
    match problems.is_empty() {
        true => Ok(obs),
        false => Err(problems.swap_remove(0)),
    }
}

/// As [`observe`], but a session without the signal (or unit) still gives its trials, with
/// `cue` and `reward` at `None` (kinds and lick rates stay), and its error is returned beside
/// them — for tables that should show what there is. Invalid windows still fail.
pub fn observe_lenient(
    subject: &Subject,
    opts: &ObsOptions,
) -> Result<(Vec<TrialObs>, Vec<ObsError>), ObsError> {
    opts.validate()?;
    let spans = layout_subject(subject, DEFAULT_DT);
    let mut out = Vec::with_capacity(spans.len());
    let mut problems = Vec::new();
    // Spans come session by session: plan every window of a session, then measure them all
    // in one sweep per spike train (SessionActivity::means).
    for chunk in spans.chunk_by(|a, b| a.session == b.session) {
        let session = &subject.sessions[chunk[0].session];
        let plans: Vec<(usize, Plan)> = chunk
            .iter()
            .filter_map(|span| {
                let p = plan(session, &session.trials[span.trial], opts)?;
                Some((span.trial, p))
            })
            .collect();
        let windows: Vec<(f64, f64)> = plans
            .iter()
            .flat_map(|(_, p)| p.windows().into_iter().chain(p.extra_windows(opts)))
            .collect();
        let act = SessionActivity::measuring(session, opts);
        let means = match &act {
            Ok(act) => act.means(&windows),
            Err(e) => {
                problems.push(e.clone());
                vec![None; windows.len()]
            }
        };
        let mut at = 0;
        for (ti, p) in &plans {
            let m = &means[at..at + 3 + p.extra.len()];
            at += m.len();
            let mut o = p.finish(session, &session.trials[*ti], m[0], m[1], m[2]);
            p.finish_events(&mut o, m[0], &m[3..]);
            if opts.zscore {
                zscore(&mut o, act.as_ref().ok(), p.baseline);
            }
            out.push(TrialObs {
                session: chunk[0].session,
                trial: *ti,
                ..o
            });
        }
    }
    Ok((out, problems))
}

/// Observations of one trial (`session`/`trial` left at 0 for the caller to fill).
pub fn observe_trial(
    session: &Session,
    trial: &Trial,
    act: &SessionActivity,
    opts: &ObsOptions,
) -> Option<TrialObs> {
    let p = plan(session, trial, opts)?;
    let [b, c, r] = p.windows().map(|(lo, hi)| act.mean(lo, hi));
    let mut o = p.finish(session, trial, b, c, r);
    let extra: Vec<Option<f64>> = p
        .extra_windows(opts)
        .map(|(lo, hi)| act.mean(lo, hi))
        .collect();
    p.finish_events(&mut o, b, &extra);
    if opts.zscore {
        zscore(&mut o, Some(act), p.baseline);
    }
    Some(o)
}

/// Divide a trial's responses by the standard deviation of its baseline window (photometry
/// `--zscore`); a baseline without spread (or without two samples) leaves no response.
fn zscore(o: &mut TrialObs, act: Option<&SessionActivity>, baseline: (f64, f64)) {
    let sd = act
        .and_then(|a| a.sd(baseline.0, baseline.1))
        .filter(|sd| *sd > 0.0 && sd.is_finite());
    let scale = |v: Option<f64>| Some(v? / sd?);
    o.cue = scale(o.cue);
    o.reward = scale(o.reward);
    for e in &mut o.events {
        e.value = scale(e.value);
    }
}

/// The windows one trial is measured in.
struct Plan {
    kind: TrialKind,
    baseline: (f64, f64),
    cue: Option<(f64, f64)>,
    reward: Option<(f64, f64)>,
    /// Event observations of a trial with an event list (empty otherwise).
    extra: Vec<EventObs>,
}

/// Stands in for an absent event's window; measures nothing.
const NO_WINDOW: (f64, f64) = (0.0, 0.0);

impl Plan {
    /// Baseline, cue, reward: always three, in time order, so a session's windows sweep forward.
    fn windows(&self) -> [(f64, f64); 3] {
        [
            self.baseline,
            self.cue.unwrap_or(NO_WINDOW),
            self.reward.unwrap_or(NO_WINDOW),
        ]
    }

    fn finish(
        &self,
        session: &Session,
        trial: &Trial,
        base: Option<f64>,
        cue: Option<f64>,
        reward: Option<f64>,
    ) -> TrialObs {
        let minus_base = |m: Option<f64>| Some(m? - base?);
        TrialObs {
            session: 0,
            trial: 0,
            cue: self.cue.and(minus_base(cue)),
            reward: self.reward.and(minus_base(reward)),
            omission: self.kind == TrialKind::Omission,
            anticipatory_lick_rate: anticipatory_lick_rate(session, trial),
            kind: self.kind,
            events: Vec::new(),
        }
    }

    fn extra_windows<'a>(&'a self, opts: &'a ObsOptions) -> impl Iterator<Item = (f64, f64)> + 'a {
        self.extra.iter().map(|e| events::window_of(e, opts))
    }

    /// The event observations, measured: window mean − baseline.
    fn finish_events(&self, o: &mut TrialObs, base: Option<f64>, means: &[Option<f64>]) {
        o.events = self
            .extra
            .iter()
            .zip(means)
            .map(|(e, m)| EventObs {
                value: (|| Some((*m)? - base?))(),
                ..e.clone()
            })
            .collect();
    }
}

fn plan(session: &Session, trial: &Trial, opts: &ObsOptions) -> Option<Plan> {
    let kind = TrialKind::of(session, trial)?;
    let t0 = alignment_time(trial)?;
    let after = |event: f64, w: (f64, f64)| (event + w.0, event + w.1);
    if trial.has_events() {
        // The first cue (at t0) and the first reward or expected time stand for the trial in
        // per-trial tables; the fitter uses every event observation.
        let extra = events::plan(session, trial);
        let first = |w: EventWindow| extra.iter().find(|e| e.window == w).map(|e| e.time_s);
        let cue = first(EventWindow::Cue).map(|t| after(t, opts.cue_window));
        let reward = first(EventWindow::Reward)
            .or_else(|| first(EventWindow::Omission))
            .map(|t| after(t, opts.reward_window));
        return Some(Plan {
            kind,
            baseline: after(t0, opts.baseline),
            cue,
            reward,
            extra,
        });
    }
    let cue = match (trial.cue, trial.cue_s) {
        (Some(_), Some(cs)) => Some(after(cs, opts.cue_window)),
        _ => None,
    };
    // After the delivered reward, or after the expected time on omission trials.
    let reward = trial
        .reward_s
        .or_else(|| expected_reward_time(session, trial))
        .map(|t| after(t, opts.reward_window));
    Some(Plan {
        kind,
        baseline: after(t0, opts.baseline),
        cue,
        reward,
        extra: Vec::new(),
    })
}

/// The longest reward delay of the session's cues: how long a never-rewarded cue's
/// anticipation is measured, so CS+ and CS− cover the same span (common practice); `None`
/// when no cue has a delay.
pub fn longest_reward_delay(session: &Session) -> Option<f64> {
    let longest = session
        .meta
        .cues
        .iter()
        .filter_map(|c| c.reward_delay_s)
        .fold(f64::NAN, f64::max);
    longest.is_finite().then_some(longest)
}

/// Licks/s from cue onset to the expected reward time, cut at the delivery if the reward came
/// earlier, so consummatory licks never count (common practice). A cue that is never rewarded
/// is measured over the longest reward delay of its session's cues, so CS+ and CS− licking
/// cover the same span (common practice); `None` when no cue of the session has a delay.
pub fn anticipatory_lick_rate(session: &Session, trial: &Trial) -> Option<f64> {
    let licks = session.licks.as_deref()?;
    let start = trial.cue_s.filter(|_| trial.cue.is_some())?;
    let expected = expected_reward_time(session, trial);
    let end = match (expected, trial.reward_s) {
        (Some(e), Some(r)) => e.min(r),
        (Some(e), None) => e,
        (None, Some(r)) => r,
        (None, None) => start + longest_reward_delay(session)?,
    };
    if end <= start {
        return None;
    }
    Some(activity::count_in(licks, start, end) as f64 / (end - start))
}

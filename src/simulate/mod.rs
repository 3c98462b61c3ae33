//! A synthetic subject from a known model: demo data, parameter recovery, experiment planning.
//!
//! Flow: [`schedule`] draws the Pavlovian trial schedule (it never depends on learning), the
//! in-memory [`Subject`] is built from it, the TD learner of [`crate::model`] runs over it with
//! the true α, γ, λ and representation, and the learner's per-bin δ and value drive the
//! dopamine-like units ([`spikes`]), licking ([`licks`]) and the sensor trace ([`photometry`]).
//! [`writer`] lays the result out in the brief's folder layout plus a `truth.toml`
//! ([`truth`]) that records every parameter.
//!
//! Determinism: one ChaCha8 generator per component, all seeded from the user's random seed
//! and told apart by stream number, so the same seed gives the same bytes and turning one
//! output (say photometry) on or off leaves the others unchanged.

pub mod design;
pub mod faults;
pub mod licks;
pub mod photometry;
pub mod schedule;
pub mod spikes;
pub mod truth;
pub mod writer;

use crate::data::{Spikes, Subject};
use crate::model::{layout_subject, run, TdParams, TdRun, TrialSpan};
use rand::SeedableRng;
use rand_chacha::ChaCha8Rng;

pub use faults::{FaultKind, FaultParams};
pub use licks::LickParams;
pub use photometry::PhotometryParams;
pub use schedule::{CueSpec, ScheduleParams};
pub use spikes::UnitParams;
pub use writer::{write_subject, WriteError};

/// Everything the simulator needs; [`SimConfig::default`] is the shipped demo scenario.
#[derive(Debug, Clone)]
pub struct SimConfig {
    pub seed: u64,
    pub schedule: ScheduleParams,
    pub td: TdParams,
    pub units: UnitParams,
    pub licks: LickParams,
    /// `None`: no `photometry.csv`.
    pub photometry: Option<PhotometryParams>,
    /// Injected faults (all off by default; see [`faults`]).
    pub faults: FaultParams,
    /// A design file's phases and trial types (`--design`): replaces the cue list, days and
    /// trials per day of `schedule` (its subject, dates, ITI and margins still apply).
    pub design: Option<design::Design>,
}

impl Default for SimConfig {
    fn default() -> Self {
        SimConfig {
            seed: 1,
            schedule: ScheduleParams::default(),
            td: default_td(),
            units: UnitParams::default(),
            licks: LickParams::default(),
            photometry: None,
            faults: FaultParams::default(),
            design: None,
        }
    }
}

/// The demo learner: [`crate::model::defaults::simulated_learner`].
pub fn default_td() -> TdParams {
    crate::model::defaults::simulated_learner()
}

/// The simulated subject and the model traces that produced it.
#[derive(Debug, Clone)]
pub struct Simulated {
    pub config: SimConfig,
    /// Sessions named by date, with trials, spikes, licks and (optionally) photometry.
    pub subject: Subject,
    /// Per-unit baseline rate and gain actually drawn.
    pub units: Vec<spikes::Unit>,
    pub spans: Vec<TrialSpan>,
    pub td: TdRun,
    /// Per session: the true ΔF/F, bleaching and motion behind `photometry.csv` (when on).
    pub photometry_truth: Vec<Option<photometry::Injected>>,
    /// Every injected fault, in session and trial order per kind (empty without `--fault`).
    pub faults: Vec<faults::Injected>,
}

/// Stream numbers of the per-component generators (see the module overview).
pub(crate) mod stream {
    pub const SCHEDULE: u64 = 1;
    pub const UNITS: u64 = 2;
    /// Plus 1000 × session + unit.
    pub const SPIKES: u64 = 1_000_000;
    /// Plus session.
    pub const LICKS: u64 = 2_000_000;
    /// Plus session.
    pub const PHOTOMETRY: u64 = 3_000_000;
    /// Plus 10000 × (fault kind + 1) + session.
    pub const FAULTS: u64 = 4_000_000;
}

/// A generator for one component; different streams never overlap.
pub(crate) fn rng_for(seed: u64, stream: u64) -> ChaCha8Rng {
    let mut rng = ChaCha8Rng::seed_from_u64(seed);
    rng.set_stream(stream);
    rng
}

/// Round a time to 0.1 ms, the resolution written to disk, so the in-memory subject and the
/// one read back from the files put every event in the same model bin.
pub fn round_time(t: f64) -> f64 {
    (t * 1e4).round() / 1e4
}

/// Why a simulation cannot run. Settings are checked before anything is drawn, so every
/// error is about what was asked, never a half-written subject.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
pub enum SimError {
    /// An option or setting out of range or malformed (the message names it).
    #[error("{0}")]
    Setting(String),
    /// The design file: its line when the TOML parser gives one, and what is wrong.
    #[error("{}{message}", line.map(|l| format!("line {l}: ")).unwrap_or_default())]
    Design {
        line: Option<usize>,
        message: String,
    },
}

/// The checks inside the simulator word their findings; each becomes a setting error.
impl From<String> for SimError {
    fn from(message: String) -> Self {
        SimError::Setting(message)
    }
}

/// Run the whole simulation in memory.
pub fn simulate(config: &SimConfig) -> Result<Simulated, SimError> {
    config.validate()?;
    let mut injected = Vec::new();
    let (plan, mut subject) = match &config.design {
        Some(d) => {
            let plan = design::draw(d, &config.schedule, config.seed)?;
            let subject = design::to_subject(d, &config.schedule, &plan);
            (plan, subject)
        }
        None => {
            let mut plan = schedule::draw(&config.schedule, config.seed)?;
            let delays: Vec<f64> = config.schedule.cues.iter().map(|c| c.delay_s).collect();
            faults::shift_rewards(
                &mut plan,
                &delays,
                &config.faults,
                config.seed,
                &mut injected,
            );
            let subject = schedule::to_subject(&config.schedule, &plan);
            (plan, subject)
        }
    };
    let spans = layout_subject(&subject, config.td.dt);
    let n_cues = subject.cue_names().len();
    let td = run(&spans, n_cues, &config.td);
    let units = spikes::draw_units(&config.units, config.seed);
    let mut photometry_truth = Vec::with_capacity(subject.sessions.len());

    for (si, session) in subject.sessions.iter_mut().enumerate() {
        let session_spans: Vec<(usize, &TrialSpan)> = spans
            .iter()
            .enumerate()
            .filter(|(_, s)| s.session == si)
            .collect();
        let end_s = plan[si].end_s;
        let traces: Vec<spikes::SpanTrace<'_>> = session_spans
            .iter()
            .map(|&(i, s)| spikes::SpanTrace {
                t0: s.t0,
                delta: td.trial_delta(i),
                value: td.trial_value(i),
                reward_s: session.trials[s.trial].reward_s,
            })
            .collect();
        let times: Vec<Vec<f64>> = units
            .iter()
            .enumerate()
            .map(|(ui, u)| {
                let mut rng = rng_for(config.seed, stream::SPIKES + 1000 * si as u64 + ui as u64);
                spikes::unit_spikes(u, &config.units, &traces, config.td.dt, end_s, &mut rng)
            })
            .collect();
        let mut spikes = (!units.is_empty()).then(|| Spikes {
            units: units.iter().map(|u| u.id.clone()).collect(),
            times,
        });
        let mut rng = rng_for(config.seed, stream::LICKS + si as u64);
        let mut licks = licks::session_licks(&config.licks, &traces, config.td.dt, end_s, &mut rng);
        let mut recording = config.photometry.as_ref().map(|p| {
            let mut rng = rng_for(config.seed, stream::PHOTOMETRY + si as u64);
            photometry::session_trace(p, &traces, config.td.dt, end_s, &mut rng)
        });
        if config.faults.any() {
            let at = faults::At {
                session: &*session,
                index: si,
                faults: &config.faults,
                seed: config.seed,
            };
            if let Some(s) = spikes.as_mut() {
                faults::lose_unit(at, s, &mut injected);
            }
            faults::lick_faults(at, &mut licks, &config.licks, &mut injected);
            if let (Some((rec, truth)), Some(p)) = (recording.as_mut(), &config.photometry) {
                faults::photometry_faults(at, rec, truth, p, &mut injected);
            }
        }
        session.spikes = spikes;
        session.licks = Some(licks);
        photometry_truth.push(recording.map(|(rec, truth)| {
            session.photometry = Some(rec);
            truth
        }));
    }
    injected.sort_by_key(|f| (f.session, f.kind, f.trial));
    Ok(Simulated {
        config: config.clone(),
        subject,
        units,
        spans,
        td,
        photometry_truth,
        faults: injected,
    })
}

impl SimConfig {
    /// Reject parameters that would make a meaningless or endless simulation.
    pub fn validate(&self) -> Result<(), SimError> {
        let s = &self.schedule;
        let t = &self.td;
        let check = |ok: bool, what: &str| if ok { Ok(()) } else { Err(what.to_string()) };
        if let Some(d) = &self.design {
            check(
                !self.faults.any(),
                "--fault cannot be combined with --design",
            )?;
            let trials: usize = d.phases.iter().map(|p| p.days * p.trials_per_day).sum();
            check(d.days() <= 3650, "a design may run at most 3650 days")?;
            check(
                trials <= 1_000_000,
                "a design may have at most 1000000 trials",
            )?;
        }
        check(s.days >= 1, "--days must be at least 1")?;
        check(s.trials_per_day >= 1, "--trials-per-day must be at least 1")?;
        check(
            s.trials_per_day <= 100_000,
            "--trials-per-day must be at most 100000",
        )?;
        check(s.days <= 3650, "--days must be at most 3650")?;
        check(
            s.days * s.trials_per_day <= 1_000_000,
            "--days × --trials-per-day must be at most 1000000",
        )?;
        check(
            (0.0..=1.0).contains(&s.uncued_fraction),
            "--uncued-fraction must be in [0, 1]",
        )?;
        check(
            !s.cues.is_empty() || s.uncued_fraction > 0.0,
            "at least one --cue is needed unless --uncued-fraction is 1",
        )?;
        check(
            s.reward_ul.is_finite() && s.reward_ul > 0.0,
            "--reward-ul must be a positive number",
        )?;
        for c in &s.cues {
            check(
                (0.0..=1.0).contains(&c.reward_prob),
                "a cue's reward probability must be in [0, 1]",
            )?;
            check(
                c.delay_s.is_finite() && c.delay_s > 0.0 && c.delay_s <= 60.0,
                "a cue's delay must be in (0, 60] seconds",
            )?;
            check(
                !c.name.is_empty() && !c.name.contains([',', '"', '\n', '\r']),
                "a cue name must be non-empty and free of commas, quotes and line breaks",
            )?;
        }
        for (i, c) in s.cues.iter().enumerate() {
            check(
                !s.cues[..i].iter().any(|o| o.name == c.name),
                "cue names must be distinct",
            )?;
        }
        check(
            s.iti_min_s >= 0.0 && s.iti_mean_s >= s.iti_min_s && s.iti_mean_s.is_finite(),
            "ITI mean must be at least the ITI minimum",
        )?;
        check(s.iti_mean_s <= 3600.0, "ITI mean must be at most 3600 s")?;
        check(
            t.alpha.is_finite() && t.alpha > 0.0 && t.alpha <= 1.0,
            "--alpha must be in (0, 1]",
        )?;
        check(
            t.gamma.is_finite() && t.gamma > 0.0 && t.gamma <= 1.0,
            "--gamma must be in (0, 1]",
        )?;
        check(
            t.lambda.is_finite() && (0.0..=1.0).contains(&t.lambda),
            "--lambda must be in [0, 1]",
        )?;
        check(
            t.dt.is_finite() && t.dt >= 0.001 && t.dt <= 1.0,
            "--dt must be in [0.001, 1] seconds",
        )?;
        check(self.units.count <= 1000, "--units must be at most 1000")?;
        let first = schedule::parse_date(&s.start_date).ok_or_else(|| {
            format!(
                "--start-date {:?} is not an ISO date (YYYY-MM-DD)",
                s.start_date
            )
        })?;
        check(
            first >= 0
                && first + s.days as i64 - 1 <= schedule::parse_date("9999-12-31").unwrap_or(0),
            "sessions must fall between 1970-01-01 and 9999-12-31",
        )?;
        if let Some(p) = &self.photometry {
            p.validate()?;
        }
        self.faults.validate(self.photometry.is_some())?;
        check(
            !s.subject.is_empty() && !s.subject.contains(['"', '\\', '\n', '\r', '/']),
            "--subject must be non-empty and free of quotes, slashes and line breaks",
        )?;
        Ok(())
    }
}

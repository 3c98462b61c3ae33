//! The core fit entry: a loaded subject and the user's request in, the report text and the
//! record to save out. `trialdesk fit` (one subject, or each subject of a cohort) only loads,
//! prints and writes files around it.

use super::{measurement, standing_marks, MarksPolicy, Measurement, ObsRequest, PlanError};
use crate::data::Subject;
use crate::fit::{self, dataset, report, saved, sensitivity, FitData, FitOptions, Progress};
use crate::obs::{self, Signal};
use crate::suggest::{pending_for_session, RuleSet, Suggestion};

/// What the user asked of one fit beyond the [`FitOptions`].
#[derive(Debug, Clone, Default)]
pub struct FitRequest {
    pub obs: ObsRequest,
    /// Model bin width, seconds.
    pub dt: f64,
    pub ignore_marks: bool,
    /// What gets its own gain and baselines.
    pub scale_by: dataset::ScaleBy,
    /// Refit the reported representation with every readout and report the table.
    pub compare_readouts: bool,
    /// Anticipatory licking as a readout too (`with`), or alone (`only`).
    pub licks: fit::licks::LickUse,
    /// Refit with pending suggested marks excluded too (the report's sensitivity line).
    pub sensitivity: bool,
    /// The command line as the user would retype it (the report suggests it with `nice`).
    pub command: String,
}

/// A subject ready to fit: what will be measured and the data the fitter sees.
pub struct FitJob<'a> {
    subject: &'a Subject,
    request: &'a FitRequest,
    pub measurement: Measurement,
    pub data: FitData,
    /// Warnings for stderr (torn journal tails, unreadable journals under --ignore-marks).
    pub warnings: Vec<String>,
}

/// A finished fit.
pub struct FitRun {
    pub outcome: fit::FitOutcome,
    pub data: FitData,
    /// The plain-text report (without lines about files written).
    pub text: String,
    /// The record for `trialdesk-fit.toml`.
    pub saved: saved::SavedFit,
    pub n_excluded: usize,
    pub warnings: Vec<String>,
}

impl<'a> FitJob<'a> {
    /// Measure, read the marks (an unreadable journal stops the fit unless marks are ignored)
    /// and build the fitter's data.
    pub fn prepare(subject: &'a Subject, request: &'a FitRequest) -> Result<Self, FitError> {
        use fit::licks::LickUse;
        if request.licks == LickUse::Only {
            return Self::prepare_licks_only(subject, request);
        }
        let (mut job, marks) = Self::prepare_activity(subject, request)?;
        if request.licks == LickUse::With {
            let n =
                fit::licks::add_lick_points(&mut job.data, subject, &marks, request.ignore_marks);
            if n == 0 {
                return Err(no_lick_windows(subject));
            }
        }
        Ok(job)
    }

    /// `--licks only`: the lick windows alone; no recorded activity is needed or measured.
    fn prepare_licks_only(subject: &'a Subject, request: &'a FitRequest) -> Result<Self, FitError> {
        let marks = standing_marks(subject, MarksPolicy::asked(request.ignore_marks))?;
        let obs = obs::ObsOptions::default();
        let mut data = dataset::build(
            subject,
            &[],
            &obs,
            request.dt,
            &marks.per_session,
            request.ignore_marks,
        );
        let n = fit::licks::add_lick_points(
            &mut data,
            subject,
            &marks.per_session,
            request.ignore_marks,
        );
        if n == 0 {
            return Err(no_lick_windows(subject));
        }
        let measurement = Measurement {
            choice: super::SignalChoice {
                signal: Signal::Spikes { unit: None },
                reason: "--licks only".into(),
                missing: Vec::new(),
            },
            obs,
            kernel: None,
        };
        Ok(FitJob {
            subject,
            request,
            measurement,
            data,
            warnings: marks.warnings,
        })
    }

    /// The recorded activity's fitting data (one gain, per group, or per unit), and the marks
    /// in force per session it was built with.
    fn prepare_activity(
        subject: &'a Subject,
        request: &'a FitRequest,
    ) -> Result<(Self, Vec<crate::marks::MarkState>), FitError> {
        let m = measurement(subject, &request.obs, None)?;
        if let Some(note) = m.choice.missing_note() {
            return Err(FitError::Data(format!(
                "{}: {} chosen ({}), but {note}; a fit needs the signal in every session: \
                 choose it with --signal, or fit a folder without those sessions",
                subject.root.display(),
                m.choice.signal.label(),
                m.choice.reason
            )));
        }
        let policy = MarksPolicy::asked(request.ignore_marks);
        if request.scale_by.per_unit() {
            let marks = standing_marks(subject, policy)?;
            let data = per_unit_data(subject, &m, request, &marks.per_session)?;
            let job = FitJob {
                subject,
                request,
                measurement: m,
                data,
                warnings: marks.warnings,
            };
            return Ok((job, marks.per_session));
        }
        let observations =
            obs::observe(subject, &m.obs).map_err(|e| FitError::Data(e.to_string()))?;
        let marks = standing_marks(subject, policy)?;
        let mut data = dataset::build(
            subject,
            &observations,
            &m.obs,
            request.dt,
            &marks.per_session,
            request.ignore_marks,
        );
        if let Some(k) = m.kernel {
            data = dataset::with_sensor_kernel(data, k, &m.obs);
        }
        // Spike counts per window, for the count likelihood (none for photometry).
        data.counts = dataset::spike_counts(&data, subject, &m.obs);
        data.groups = dataset::groups(&data, subject, request.scale_by);
        let job = FitJob {
            subject,
            request,
            measurement: m,
            data,
            warnings: marks.warnings,
        };
        Ok((job, marks.per_session))
    }

    /// Fit, compare, refit for the sensitivity line, write the report and the saved record.
    pub fn run(self, opts: &FitOptions, progress: &dyn Progress) -> Result<FitRun, FitError> {
        let FitJob {
            subject,
            request,
            measurement: m,
            data,
            mut warnings,
        } = self;
        let outcome =
            fit::run_fit(&data, opts, progress).map_err(|e| FitError::Fit(e.to_string()))?;
        let sensitivity = request
            .sensitivity
            .then(|| sensitivity_line(subject, &data, &outcome, opts, progress, &mut warnings));
        let observations = match m.kernel {
            Some(k) => format!(
                "{}; δ weighted by a sensor kernel (rise {} s, decay {} s) averaged over each \
                 window, so the gain is the peak response per unit δ",
                describe_obs(&m, subject),
                k.rise_s,
                k.decay_s
            ),
            None => describe_obs(&m, subject),
        };
        let observations = match request.licks {
            fit::licks::LickUse::Off => observations,
            fit::licks::LickUse::With => format!("{observations}; {}", fit::licks::DESCRIPTION),
            fit::licks::LickUse::Only => fit::licks::DESCRIPTION.to_string(),
        };
        let ctx = report::ReportContext {
            subject: subject
                .sessions
                .first()
                .map(|s| s.meta.subject.clone())
                .unwrap_or_else(|| subject.root.display().to_string()),
            observations,
            command: request.command.clone(),
            sensitivity,
            readouts: request
                .compare_readouts
                .then(|| readout_table(subject, &data, &outcome, opts, progress)),
        };
        let text = report::text_report(&outcome, &data, &ctx, opts.lambda_fitted());
        let n_excluded = if request.ignore_marks {
            0
        } else {
            data.exclusions.n_trials
        };
        let saved = saved_record(&outcome, &data, &m, request, opts, n_excluded);
        Ok(FitRun {
            outcome,
            data,
            text,
            saved,
            n_excluded,
            warnings,
        })
    }
}

fn no_lick_windows(subject: &Subject) -> FitError {
    FitError::Data(format!(
        "{}: --licks needs licks.csv and cued trials with a reward delay (or a cue of a \
         session that has one), but no session gave a lick window",
        subject.root.display()
    ))
}

/// `--scale-by unit|session-unit`: every unit's own responses, for spikes of all units.
fn per_unit_data(
    subject: &Subject,
    m: &Measurement,
    request: &FitRequest,
    marks: &[crate::marks::MarkState],
) -> Result<FitData, FitError> {
    let by = request.scale_by;
    match &m.obs.signal {
        Signal::Spikes { unit: None } => {}
        Signal::Spikes { unit: Some(u) } => {
            return Err(FitError::Data(format!(
                "--scale-by {} fits every unit with its own gain; --unit {u} picks one: drop \
                 one of the two",
                by.name()
            )))
        }
        Signal::Photometry => {
            return Err(FitError::Data(format!(
                "{}: --scale-by {} needs spikes (a gain per unit), but the signal is \
                 photometry; choose --signal spikes, or --scale-by session or rig",
                subject.root.display(),
                by.name()
            )))
        }
    }
    fit::units::per_unit(subject, &m.obs, request.dt, marks, request.ignore_marks, by)
        .map_err(|e| FitError::Data(e.to_string()))
}

/// The readouts of `--compare-readouts`: one gain, asymmetric gains, a gain per session, and a
/// gain per rig when the sessions name more than one rig.
fn readout_table(
    subject: &Subject,
    data: &FitData,
    outcome: &fit::FitOutcome,
    opts: &FitOptions,
    progress: &dyn Progress,
) -> String {
    use fit::readouts::{compare_readouts, table, Readout};
    let grouped = |by| dataset::groups(data, subject, by);
    let mut variants = vec![
        Readout {
            label: "one gain".into(),
            groups: None,
            asymmetric: false,
        },
        Readout {
            label: "one gain, asymmetric".into(),
            groups: None,
            asymmetric: true,
        },
        Readout {
            label: "gain per session".into(),
            groups: grouped(dataset::ScaleBy::Session),
            asymmetric: false,
        },
    ];
    if let Some(rigs) = grouped(dataset::ScaleBy::Rig).filter(|g| g.names.len() > 1) {
        variants.push(Readout {
            label: "gain per rig".into(),
            groups: Some(rigs),
            asymmetric: false,
        });
    }
    // Per-unit data: one gain per unit, with and without asymmetry (each unit's τ).
    if let Some(units) = data.groups.as_ref().filter(|g| g.by.per_unit()) {
        for asymmetric in [false, true] {
            variants.push(Readout {
                label: format!(
                    "gain per {}{}",
                    units.by.name(),
                    if asymmetric { ", asymmetric" } else { "" }
                ),
                groups: Some(units.clone()),
                asymmetric,
            });
        }
    }
    // The fit's own readout, when it is none of the above (asymmetric per group).
    let own = Readout {
        label: "as fitted".into(),
        groups: data.groups.clone(),
        asymmetric: opts.asymmetric,
    };
    if !variants.iter().any(|v| {
        v.asymmetric == own.asymmetric
            && v.groups.as_ref().map(|g| g.by) == own.groups.as_ref().map(|g| g.by)
    }) {
        variants.push(own);
    }
    let rows = compare_readouts(data, opts, outcome.model, &variants, progress);
    table(&rows, outcome.model)
}

/// Why a fit did not run.
#[derive(Debug, thiserror::Error)]
pub enum FitError {
    #[error(transparent)]
    Plan(#[from] PlanError),
    /// The data cannot be measured (a session lacks the signal, a unit is missing).
    #[error("{0}")]
    Data(String),
    #[error("{0}")]
    Fit(String),
}

fn saved_record(
    outcome: &fit::FitOutcome,
    data: &FitData,
    m: &Measurement,
    request: &FitRequest,
    opts: &FitOptions,
    n_excluded: usize,
) -> saved::SavedFit {
    let lin = &outcome.best.linear;
    let p = outcome.best.params;
    let o = &m.obs;
    saved::SavedFit {
        alpha: p.alpha,
        gamma: p.gamma,
        lambda: p.lambda,
        dt: data.dt,
        representation: outcome.model.name().to_string(),
        // A fit of licking alone has no activity gain; 0 keeps the file's gain a number.
        gain: if lin.has_activity() { lin.gain } else { 0.0 },
        baselines: saved::Baselines {
            cue: lin.baselines[0],
            reward: lin.baselines[1],
        },
        fitted_at: saved::now_rfc3339(),
        n_excluded,
        ignore_marks: request.ignore_marks,
        lambda_fitted: opts.lambda_fitted(),
        log_likelihood: Some(outcome.best.log_likelihood),
        n_observations: Some(outcome.n_included),
        signal: Some(match request.licks {
            fit::licks::LickUse::Only => "licks".to_string(),
            _ => super::signal_name(&o.signal).to_string(),
        }),
        lick: match (outcome.best.params.lick, lin.lick) {
            (Some(rule), Some(l)) => Some(saved::SavedLick {
                used: match request.licks {
                    fit::licks::LickUse::Only => saved::LickUseName::Only,
                    _ => saved::LickUseName::With,
                },
                theta: rule.theta,
                upsilon: rule.upsilon,
                hz_per_ul: l.hz_per_ul,
                base_hz: l.base_hz,
            }),
            _ => None,
        },
        unit: match &o.signal {
            Signal::Spikes { unit } => unit.clone(),
            Signal::Photometry => None,
        },
        latency_s: Some(o.latency),
        cue_window_s: Some([o.cue_window.0, o.cue_window.1]),
        reward_window_s: Some([o.reward_window.0, o.reward_window.1]),
        baseline_window_s: Some([o.baseline.0, o.baseline.1]),
        sensor_rise_s: m.kernel.map(|k| k.rise_s),
        sensor_decay_s: m.kernel.map(|k| k.decay_s),
        likelihood: Some(outcome.best.linear.likelihood.name().to_string()),
        gain_neg: lin.gain_neg,
        zscore: o.zscore.then_some(true),
        // Only a choice away from the default is written, so default fits' files stay as before.
        control_fit: (o.signal == Signal::Photometry
            && o.control_fit != crate::photometry::ControlFit::default())
        .then(|| super::control_fit_name(o.control_fit).to_string()),
        scale_by: data.groups.as_ref().map(|g| g.by.name().to_string()),
        groups: match &data.groups {
            Some(g) => lin
                .groups
                .iter()
                .map(|x| saved::SavedGroup {
                    name: g.names[x.group].clone(),
                    gain: x.gain,
                    gain_neg: x.gain_neg,
                    baseline_cue: x.baselines[0],
                    baseline_reward: x.baselines[1],
                })
                .collect(),
            None => Vec::new(),
        },
    }
}

/// The observation options in words; for photometry also how ΔF/F was made per session.
pub fn describe_obs(m: &Measurement, subject: &Subject) -> String {
    let o = &m.obs;
    let mut method = match o.signal {
        Signal::Photometry => {
            crate::obs::photometry::photometry_methods_with(subject, o.control_fit)
                .map(|m| format!("; ΔF/F: {m}"))
                .unwrap_or_default()
        }
        _ => String::new(),
    };
    if o.zscore {
        method.push_str("; each response divided by the SD of its trial's baseline (z-score)");
    }
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

/// Pending suggested marks of every session (user rules over the shipped defaults), then the
/// refit with their trials excluded too. Reads marks.csv, never writes it.
fn sensitivity_line(
    subject: &Subject,
    data: &FitData,
    outcome: &fit::FitOutcome,
    opts: &FitOptions,
    progress: &dyn Progress,
    warnings: &mut Vec<String>,
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
                warnings.push(format!(
                    "warning: {e} (suggested marks of this session left out of the sensitivity line)"
                ));
                Vec::new()
            })
        })
        .collect();
    let trials = sensitivity::SuggestedTrials::new(data, &per_session, &subject.cue_names());
    let result = sensitivity::sensitivity(data, outcome, opts, &trials, progress);
    sensitivity::line(&result, &trials, outcome, opts.lambda_fitted())
}

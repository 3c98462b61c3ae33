//! Fitting the TD model (and the Rescorla–Wagner baseline) to recorded dopamine responses.
//!
//! Where to start: [`dataset::FitData`] is what a fit sees — the subject's trial spans in
//! training order and one [`dataset::ObsPoint`] per observed response window, each flagged
//! `excluded` or not. [`objective::Problem`] turns learning parameters into per-window δ sums
//! and scores them under the chosen [`likelihood`] (Gaussian: gain and baselines in closed
//! form, σ² profiled out; Poisson on spike counts: gain and baselines by Fisher scoring);
//! [`optimise::fit_multistart`] searches the learning parameters; [`bootstrap`] gives
//! percentile intervals and the γ profile check, [`profile`] profile-likelihood intervals
//! where the bootstrap fails (flat γ); [`compare`] fits every model, scores it on held-out
//! sessions and warns when its criteria disagree; [`report`] writes the text report and CSV tables; [`saved`] keeps the
//! chosen fit in the subject folder. [`run_fit`] runs the whole job.
//!
//! Excluded trials: their observations leave the likelihood, but every trial stays in the spans,
//! so the model learns from all of them (the animal lived through them).

pub mod bootstrap;
pub mod compare;
pub mod dataset;
pub mod licks;
pub mod likelihood;
pub mod linear;
pub mod objective;
pub mod optimise;
pub mod params;
pub mod profile;
pub mod readouts;
pub mod report;
pub mod saved;
pub mod sensitivity;
pub mod synthetic;
pub mod units;

pub use bootstrap::{GammaProfile, Intervals, ResampleUnit};
pub use compare::ModelRow;
pub use dataset::{Exclusions, FitData, ObsPoint, WindowKind};
pub use likelihood::{Likelihood, WindowCount};
pub use objective::{LearnParams, LinearFit, ModelSpec, Problem};
pub use optimise::{FitResult, SearchOptions};

use crate::model::Representation;

/// Fewest included observations a fit accepts: below this the closed-form part alone
/// (gain, two baselines, σ) nearly saturates the data.
pub const MIN_OBSERVATIONS: usize = 10;

/// What can stop a fit. Each message says what was found and what to try.
#[derive(Debug, thiserror::Error, PartialEq)]
pub enum FitError {
    #[error("no observations to fit: {0}")]
    NoObservations(String),
    #[error(
        "all {n} observations belong to excluded trials; nothing is left to fit \
         (rerun with --ignore-marks to fit them anyway)"
    )]
    AllExcluded { n: usize },
    #[error("only {n} observations remain after exclusions; at least {min} are needed for a fit")]
    TooFew { n: usize, min: usize },
    #[error("the observed responses have zero variance ({n} observations, all equal to {value}); there is nothing for the model to explain")]
    ZeroVariance { n: usize, value: f64 },
    #[error("observation {index} (session {session}, trial {trial}, {window} window) is not a finite number")]
    NotFinite {
        index: usize,
        session: String,
        trial: i64,
        window: &'static str,
    },
    #[error(
        "the poisson likelihood needs spike counts per window, and these observations have \
         none (photometry?); use --likelihood gaussian"
    )]
    NoCounts,
    #[error("the optimiser found no parameters with a finite likelihood for {model}")]
    NoFiniteFit { model: String },
}

/// How the fit runs. Defaults are the ones `trialdesk fit --help` states.
#[derive(Debug, Clone, PartialEq)]
pub struct FitOptions {
    /// The representation whose parameters are reported and saved.
    pub representation: Representation,
    /// λ held fixed at this value; `None`: λ is fitted, in the main fit and for every model of
    /// the comparison (each at its own best λ).
    pub lambda: Option<f64>,
    /// Bootstrap replicates; 0 disables intervals.
    pub bootstrap: usize,
    pub resample: ResampleUnit,
    pub seed: u64,
    /// Sessions held out at the end for the comparison's held-out error (`None`: the last fifth,
    /// at least one).
    pub holdout_sessions: Option<usize>,
    /// Fit the other models for the comparison table.
    pub compare: bool,
    pub search: SearchOptions,
    /// Observation model; `None`: [`likelihood::SPIKE_DEFAULT`] where the data carry spike
    /// counts, Gaussian otherwise (photometry).
    pub likelihood: Option<Likelihood>,
    /// Separate gains of positive and negative δ (`--asymmetric`).
    pub asymmetric: bool,
}

impl Default for FitOptions {
    fn default() -> Self {
        FitOptions {
            representation: crate::model::defaults::REPRESENTATION,
            lambda: if crate::model::defaults::FIT_LAMBDA_FREE {
                None
            } else {
                Some(crate::model::defaults::MODEL_LAMBDA)
            },
            bootstrap: 50,
            resample: ResampleUnit::Trials,
            seed: 7,
            holdout_sessions: None,
            compare: true,
            search: SearchOptions::default(),
            likelihood: None,
            asymmetric: false,
        }
    }
}

impl FitOptions {
    /// λ is estimated (not fixed with `--lambda`).
    pub fn lambda_fitted(&self) -> bool {
        self.lambda.is_none()
    }

    /// The likelihood a fit of `data` uses: the one asked for, else Poisson for spike counts
    /// ([`likelihood::SPIKE_DEFAULT`]) and Gaussian for everything else. Poisson without
    /// counts falls back to Gaussian ([`run_fit`] refuses that combination first).
    pub fn likelihood_for(&self, data: &FitData) -> Likelihood {
        match (self.likelihood, data.counts.is_some()) {
            (Some(Likelihood::Poisson), false) => Likelihood::Gaussian,
            (Some(l), _) => l,
            (None, true) => likelihood::SPIKE_DEFAULT,
            (None, false) => Likelihood::Gaussian,
        }
    }

    /// The search problem of `model` on `data` under these options.
    pub fn problem<'a>(&self, data: &'a FitData, model: ModelSpec) -> Problem<'a> {
        Problem::new(
            data,
            model,
            self.lambda.is_none(),
            self.lambda.unwrap_or(0.0),
        )
        .with_likelihood(self.likelihood_for(data))
        .with_asymmetry(self.asymmetric)
    }
}

/// Progress reporting for long phases; the library never draws anything itself.
pub trait Progress: Sync {
    /// A new phase with `total` steps.
    fn phase(&self, _name: &str, _total: u64) {}
    /// One step done.
    fn tick(&self) {}
}

/// Progress that goes nowhere.
pub struct NoProgress;
impl Progress for NoProgress {}

/// Everything one `trialdesk fit` computes.
#[derive(Debug, Clone)]
pub struct FitOutcome {
    pub model: ModelSpec,
    pub best: FitResult,
    /// Predicted response for every point (excluded ones too), from the best fit.
    pub predicted: Vec<f64>,
    pub n_included: usize,
    pub r_squared: f64,
    pub rmse: f64,
    pub intervals: Option<Intervals>,
    pub gamma_profile: Option<GammaProfile>,
    pub comparison: Vec<ModelRow>,
    /// The same model fitted to every window, excluded ones too (only when some windows were
    /// excluded): the with/without comparison methods.md §8 asks for.
    pub without_exclusions: Option<FitResult>,
    /// Trailing sessions held out for the comparison's held-out error.
    pub holdout_sessions: usize,
    /// Plain-language warnings for the report (poorly constrained γ, negative gain, ...).
    pub warnings: Vec<String>,
}

/// Check that `data` can be fitted; returns the indices of the included points.
pub fn validate(data: &FitData) -> Result<Vec<usize>, FitError> {
    if data.points.is_empty() {
        return Err(FitError::NoObservations(
            "no trial gave a cue or reward response window".into(),
        ));
    }
    for (i, p) in data.points.iter().enumerate() {
        if !p.observed.is_finite() {
            let (session, trial) = data.label(p.span);
            return Err(FitError::NotFinite {
                index: i,
                session: session.to_string(),
                trial,
                window: p.kind.name(),
            });
        }
    }
    let included = data.included();
    if included.is_empty() {
        return Err(FitError::AllExcluded {
            n: data.points.len(),
        });
    }
    if included.len() < MIN_OBSERVATIONS {
        return Err(FitError::TooFew {
            n: included.len(),
            min: MIN_OBSERVATIONS,
        });
    }
    let first = data.points[included[0]].observed;
    let (spread, max_abs) = included.iter().fold((0.0f64, 0.0f64), |(s, m), &i| {
        let y = data.points[i].observed;
        (s.max((y - first).abs()), m.max(y.abs()))
    });
    // Relative test: a spread at rounding level of the values is no spread.
    if spread <= 1e-12 * max_abs || spread == 0.0 {
        return Err(FitError::ZeroVariance {
            n: included.len(),
            value: first,
        });
    }
    Ok(included)
}

/// Fit the chosen representation, its intervals and γ check, and (optionally) the comparison.
pub fn run_fit(
    data: &FitData,
    opts: &FitOptions,
    progress: &dyn Progress,
) -> Result<FitOutcome, FitError> {
    let included = validate(data)?;
    if opts.likelihood == Some(Likelihood::Poisson) && data.counts.is_none() {
        return Err(FitError::NoCounts);
    }
    let model = ModelSpec::Td(opts.representation);
    let problem = opts.problem(data, model);

    progress.phase("fitting", opts.search.budget(&problem) as u64);
    let best =
        optimise::fit_multistart(&problem, &included, &opts.search, progress).ok_or_else(|| {
            FitError::NoFiniteFit {
                model: model.name().to_string(),
            }
        })?;
    let predicted = problem.predict_responses(&best.params, &best.linear);
    let (r_squared, rmse) = objective::goodness(data, &included, &predicted);

    let mut warnings = Vec::new();
    if best.linear.gain <= 0.0 && best.linear.groups.is_empty() {
        warnings.push(format!(
            "the fitted gain is {} (not positive): the responses do not rise with the model's \
             prediction error, so the learning parameters mean little",
            report::num(best.linear.gain)
        ));
    }
    if let Some(groups) = &data.groups {
        for g in best.linear.groups.iter().filter(|g| g.gain <= 0.0) {
            warnings.push(format!(
                "the gain of {} {} is {} (not positive): its responses do not rise with the \
                 model's prediction error",
                groups.by.name(),
                groups.names[g.group],
                report::num(g.gain)
            ));
        }
    }

    let p = best.params;
    if p.alpha > 0.999 || p.alpha < 1e-4 {
        warnings.push(format!(
            "α = {} sits at the edge of its range: the data may not inform the learning rate",
            report::num(p.alpha)
        ));
    }
    if problem.has_gamma() && (p.gamma > 0.9999 || p.gamma < 1e-4) {
        warnings.push(format!(
            "γ = {} sits at the edge of its range [0, 1)",
            report::num(p.gamma)
        ));
    }

    let gamma_profile = if problem.has_gamma() {
        progress.phase("checking γ", 4 * opts.search.max_iters_refine);
        // With intervals requested, γ's profile-likelihood interval joins the bootstrap's: on
        // simulated photometry-like subjects the bootstrap's γ interval covered the truth
        // 80 % of the time, the profile-likelihood one 95 % (tests/fit_coverage.rs).
        let prof = bootstrap::gamma_profile(
            &problem,
            &included,
            &best,
            &opts.search,
            progress,
            opts.bootstrap > 0,
        );
        if prof.flat {
            warnings.push(prof.warning(data.dt));
        }
        Some(prof)
    } else {
        None
    };

    if opts.bootstrap > 0 && opts.resample == ResampleUnit::Sessions && data.n_sessions() < 8 {
        warnings.push(format!(
            "the bootstrap resamples whole sessions but there are only {}: the intervals are \
             coarse (resampling trials gives finer ones, ignoring day-to-day drift)",
            data.n_sessions()
        ));
    }

    let intervals = if opts.bootstrap > 0 {
        progress.phase("bootstrap", opts.bootstrap as u64);
        let iv = bootstrap::bootstrap(
            &problem,
            &included,
            &best,
            opts.bootstrap,
            opts.resample,
            opts.seed,
            &opts.search,
            progress,
        );
        if iv.n_ok < opts.bootstrap {
            warnings.push(format!(
                "{} of {} bootstrap replicates could not be fitted and were left out",
                opts.bootstrap - iv.n_ok,
                opts.bootstrap
            ));
        }
        warnings.extend(bootstrap::too_few_warning(iv.n_ok, bootstrap::LEVEL));
        Some(iv)
    } else {
        None
    };

    let without_exclusions = if included.len() < data.points.len() {
        progress.phase(
            "fit without exclusions",
            opts.search.budget(&problem) as u64,
        );
        let all: Vec<usize> = (0..data.points.len()).collect();
        // The same multi-start search a separate `--ignore-marks` run makes, so the same data
        // give the same optimum (a warm start from the marked fit could stop in another mode).
        optimise::fit_multistart(&problem, &all, &opts.search, progress)
    } else {
        None
    };

    let comparison = if opts.compare {
        compare::compare(data, &included, opts, (model, &best), progress)
    } else {
        Vec::new()
    };
    warnings.extend(compare::warnings(&comparison, model));

    Ok(FitOutcome {
        model,
        best,
        predicted,
        n_included: included.len(),
        r_squared,
        rmse,
        intervals,
        gamma_profile,
        comparison,
        without_exclusions,
        holdout_sessions: compare::holdout_count(data.n_sessions(), opts.holdout_sessions),
        warnings,
    })
}

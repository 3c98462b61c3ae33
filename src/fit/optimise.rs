//! The search over learning parameters: a coarse grid picks starts, Nelder–Mead (argmin's
//! implementation) refines each on the logit scale, starts run in parallel (rayon).
//!
//! Nelder–Mead is the downhill simplex method of Nelder & Mead 1965 (*Comput J* 7:308,
//! citation from memory). Grid plus bounded multi-start search is methods.md §4's plan [C];
//! the grid's size and the number of starts are our defaults, not published values.

use super::objective::{LearnParams, LinearFit, Problem};
use super::Progress;
use argmin::core::{CostFunction, Error, Executor, State};
use argmin::solver::neldermead::NelderMead;
use rayon::prelude::*;
use std::sync::atomic::{AtomicUsize, Ordering};

/// Knobs of the search.
#[derive(Debug, Clone, PartialEq)]
pub struct SearchOptions {
    /// Grid points refined by Nelder–Mead.
    pub n_starts: usize,
    /// Iteration cap of a refinement from a grid start.
    pub max_iters: u64,
    /// Iteration cap of a warm-started refinement (bootstrap, profile).
    pub max_iters_refine: u64,
    /// Stop when the spread of −lnL over the simplex falls below this.
    pub tolerance: f64,
    /// Initial simplex edge on the logit scale.
    pub step: f64,
    /// Initial simplex edge of a warm start (its optimum is near the start).
    pub refine_step: f64,
    /// Stopping spread of a warm-started refinement: 1e-3 in lnL moves a bootstrap replicate's
    /// estimate by a small fraction of the interval (intervals matched the 1e-4 runs to three
    /// digits on synthetic subjects) for about 30 % fewer model passes.
    pub refine_tolerance: f64,
}

impl Default for SearchOptions {
    fn default() -> Self {
        SearchOptions {
            n_starts: 3,
            max_iters: 120,
            max_iters_refine: 60,
            tolerance: 1e-4,
            step: 0.6,
            refine_step: 0.15,
            refine_tolerance: 1e-3,
        }
    }
}

impl SearchOptions {
    /// Rough number of progress ticks a multi-start fit takes (grid points + iterations).
    pub fn budget(&self, problem: &Problem) -> usize {
        grid(problem).len() + self.n_starts * self.max_iters as usize
    }
}

/// A fitted model on some set of points.
#[derive(Debug, Clone, PartialEq)]
pub struct FitResult {
    pub params: LearnParams,
    /// Search coordinates of `params`.
    pub z: Vec<f64>,
    pub linear: LinearFit,
    pub log_likelihood: f64,
    /// Objective evaluations (each one model pass).
    pub evaluations: usize,
    /// Search coordinates of the other distinct end points a multi-start search reached, best
    /// first (empty after a warm start): the modes a bootstrap replicate also starts from.
    pub other_optima: Vec<Vec<f64>>,
}

/// End points closer than this in every search coordinate (logit scale) are one optimum.
pub const SAME_OPTIMUM: f64 = 0.05;

/// Time constants (seconds) the γ grid is built from, γ = exp(−dt/τ), so the grid means the
/// same thing at any bin width.
pub const GRID_TAU_S: [f64; 7] = [0.25, 0.5, 1.0, 2.0, 4.0, 8.0, 16.0];
pub const GRID_ALPHA: [f64; 6] = [0.003, 0.01, 0.03, 0.1, 0.3, 0.7];
pub const GRID_LAMBDA: [f64; 3] = [0.1, 0.5, 0.9];

/// Starting grid of the problem's free parameters.
pub fn grid(problem: &Problem) -> Vec<LearnParams> {
    let dt = problem.data.dt;
    let gammas: Vec<f64> = if problem.has_gamma() {
        GRID_TAU_S.iter().map(|tau| (-dt / tau).exp()).collect()
    } else {
        vec![0.0]
    };
    let lambdas: Vec<f64> = if problem.fit_lambda {
        GRID_LAMBDA.to_vec()
    } else {
        vec![problem.lambda]
    };
    let mut out = Vec::new();
    for &alpha in &GRID_ALPHA {
        for &gamma in &gammas {
            for &lambda in &lambdas {
                out.push(LearnParams {
                    alpha,
                    gamma,
                    lambda,
                    lick: problem.licks.then_some(super::licks::START_RULE),
                });
            }
        }
    }
    out
}

struct Objective<'f, F> {
    f: &'f F,
    evals: &'f AtomicUsize,
}

impl<F: Fn(&[f64]) -> f64> CostFunction for Objective<'_, F> {
    type Param = Vec<f64>;
    type Output = f64;
    fn cost(&self, z: &Vec<f64>) -> Result<f64, Error> {
        self.evals.fetch_add(1, Ordering::Relaxed);
        let c = (self.f)(z);
        // A NaN would break the simplex ordering; treat it as very bad instead.
        Ok(if c.is_nan() { f64::MAX / 4.0 } else { c })
    }
}

/// Minimise `f` by Nelder–Mead from `start` (a regular-ish simplex of edge `step`). Returns the
/// best point, its cost and the number of evaluations. `on_iter` is called once per iteration.
pub fn nelder_mead<F: Fn(&[f64]) -> f64>(
    f: &F,
    start: &[f64],
    step: f64,
    max_iters: u64,
    tolerance: f64,
) -> Option<(Vec<f64>, f64, usize)> {
    let mut simplex = vec![start.to_vec()];
    for i in 0..start.len() {
        let mut v = start.to_vec();
        // Step towards the middle of the logit range so the vertex is not clamped.
        v[i] += if v[i] > 0.0 { -step } else { step };
        simplex.push(v);
    }
    let evals = AtomicUsize::new(0);
    let solver = NelderMead::new(simplex).with_sd_tolerance(tolerance).ok()?;
    let res = Executor::new(Objective { f, evals: &evals }, solver)
        .configure(|s| s.max_iters(max_iters))
        .run()
        .ok()?;
    let state = res.state();
    let best = state.get_best_param()?.clone();
    let cost = state.get_best_cost();
    Some((best, cost, evals.load(Ordering::Relaxed)))
}

/// Finish a search point: closed-form part and likelihood at `z` on `idx`.
pub fn evaluate(
    problem: &Problem,
    z: &[f64],
    idx: &[usize],
    evaluations: usize,
) -> Option<FitResult> {
    let params = problem.to_params(z);
    let linear = problem.fit_linear(&params, idx)?;
    let log_likelihood = linear.log_likelihood();
    if !log_likelihood.is_finite() || (linear.has_activity() && !linear.gain.is_finite()) {
        return None;
    }
    Some(FitResult {
        params,
        z: problem.to_z(&params),
        linear,
        log_likelihood,
        evaluations,
        other_optima: Vec::new(),
    })
}

/// Refine from one starting point (warm starts: bootstrap replicates, profiles).
pub fn refine(
    problem: &Problem,
    idx: &[usize],
    start: &[f64],
    opts: &SearchOptions,
    max_iters: u64,
) -> Option<FitResult> {
    let f = |z: &[f64]| problem.cost(z, idx);
    let (z, _, evals) = nelder_mead(
        &f,
        start,
        opts.refine_step,
        max_iters,
        opts.refine_tolerance,
    )?;
    evaluate(problem, &z, idx, evals)
}

/// Grid, then Nelder–Mead from the `n_starts` best distinct grid points in parallel; the best
/// refined point wins.
pub fn fit_multistart(
    problem: &Problem,
    idx: &[usize],
    opts: &SearchOptions,
    progress: &dyn Progress,
) -> Option<FitResult> {
    let grid = grid(problem);
    let mut scored: Vec<(f64, Vec<f64>)> = grid
        .par_iter()
        .map(|p| {
            let z = problem.to_z(p);
            let c = problem.cost(&z, idx);
            progress.tick();
            (c, z)
        })
        .collect();
    scored.sort_by(|a, b| a.0.total_cmp(&b.0));
    // Distinct starts: skip grid points within one grid step of an already chosen start in
    // every coordinate, so the starts are not all in one basin.
    let mut starts: Vec<Vec<f64>> = Vec::new();
    for (_, z) in &scored {
        if starts.len() >= opts.n_starts.max(1) {
            break;
        }
        let near = starts
            .iter()
            .any(|s| s.iter().zip(z).all(|(a, b)| (a - b).abs() < 1.2));
        if !near {
            starts.push(z.clone());
        }
    }
    let grid_evals = grid.len();
    let results: Vec<FitResult> = starts
        .par_iter()
        .filter_map(|s| {
            let f = |z: &[f64]| {
                let c = problem.cost(z, idx);
                progress.tick();
                c
            };
            let (z, _, evals) = nelder_mead(&f, s, opts.step, opts.max_iters, opts.tolerance)?;
            evaluate(problem, &z, idx, evals)
        })
        .collect();
    let total: usize = grid_evals + results.iter().map(|r| r.evaluations).sum::<usize>();
    let mut results = results;
    results.sort_by(|a, b| b.log_likelihood.total_cmp(&a.log_likelihood));
    let mut ends = results.into_iter();
    let mut best = ends.next()?;
    for r in ends {
        let same = |z: &[f64]| {
            z.iter()
                .zip(&r.z)
                .all(|(a, b)| (a - b).abs() < SAME_OPTIMUM)
        };
        if !same(&best.z) && !best.other_optima.iter().any(|o| same(o)) {
            best.other_optima.push(r.z);
        }
    }
    best.evaluations = total;
    Some(best)
}

/// Refine from the optimum and from every other end point of the search, keep the best: a
/// resample can move the likelihood's best mode, and a warm start from one mode alone would
/// never see it (intervals too narrow where the likelihood has several modes).
pub fn refine_from_optima(
    problem: &Problem,
    idx: &[usize],
    best: &FitResult,
    opts: &SearchOptions,
) -> Option<FitResult> {
    let mut evaluations = 0;
    let mut winner: Option<FitResult> = None;
    for start in std::iter::once(&best.z).chain(&best.other_optima) {
        if let Some(r) = refine(problem, idx, start, opts, opts.max_iters_refine) {
            evaluations += r.evaluations;
            if winner
                .as_ref()
                .is_none_or(|w| r.log_likelihood > w.log_likelihood)
            {
                winner = Some(r);
            }
        }
    }
    winner.map(|mut w| {
        w.evaluations = evaluations;
        w
    })
}

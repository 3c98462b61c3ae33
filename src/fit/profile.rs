//! Profile-likelihood intervals: for one learning parameter, the values where the log-likelihood
//! maximised over the other learning parameters (gain and baselines profiled as always) falls
//! [`super::bootstrap::FLAT_DROP`] (χ²₁ 95 % / 2 = 1.92) below the optimum (Wilks' theorem;
//! Venzon & Moolgavkar 1988). A side on which the profile never falls that far within the
//! search range has no bound there: the interval is one-sided. Used where the bootstrap fails
//! (γ with a flat profile, whose percentile interval is withheld).

use super::bootstrap::FLAT_DROP;
use super::objective::{expit, Problem, Z_BOUND};
use super::optimise::{nelder_mead, FitResult, SearchOptions};

/// Bounds of a profile-likelihood interval in natural units; `None`: unbounded on that side
/// within the search range (the parameter's own range end).
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct ProfileInterval {
    pub lower: Option<f64>,
    pub upper: Option<f64>,
}

/// lnL_best − (lnL maximised with coordinate `c` pinned at `zc`).
fn drop_at(
    problem: &Problem,
    idx: &[usize],
    best: &FitResult,
    c: usize,
    zc: f64,
    opts: &SearchOptions,
) -> f64 {
    let others: Vec<f64> = best
        .z
        .iter()
        .enumerate()
        .filter(|&(i, _)| i != c)
        .map(|(_, &v)| v)
        .collect();
    let full = |o: &[f64]| {
        let mut z = o.to_vec();
        z.insert(c, zc);
        z
    };
    if others.is_empty() {
        return best.log_likelihood + problem.cost(&full(&[]), idx);
    }
    let cost = |o: &[f64]| problem.cost(&full(o), idx);
    nelder_mead(
        &cost,
        &others,
        opts.refine_step,
        opts.max_iters_refine,
        opts.tolerance,
    )
    .map_or(f64::INFINITY, |(_, c, _)| best.log_likelihood + c)
}

/// The 95 % profile-likelihood interval of search coordinate `c` (0 α, 1 γ, 2 λ).
pub fn profile_interval(
    problem: &Problem,
    idx: &[usize],
    best: &FitResult,
    c: usize,
    opts: &SearchOptions,
) -> ProfileInterval {
    let z0 = best.z[c];
    let side = |dir: f64| -> Option<f64> {
        // Outward in doubling steps on the logit scale until the drop exceeds the threshold
        // or the search bound is reached, then bisect.
        let mut inside = z0;
        let mut step = 0.25;
        let outside = loop {
            let z = (z0 + dir * step).clamp(-Z_BOUND, Z_BOUND);
            if drop_at(problem, idx, best, c, z, opts) >= FLAT_DROP {
                break z;
            }
            inside = z;
            if z.abs() >= Z_BOUND {
                return None;
            }
            step *= 2.0;
        };
        let (mut a, mut b) = (inside, outside);
        for _ in 0..6 {
            let m = 0.5 * (a + b);
            if drop_at(problem, idx, best, c, m, opts) >= FLAT_DROP {
                b = m;
            } else {
                a = m;
            }
        }
        Some(expit(0.5 * (a + b)))
    };
    ProfileInterval {
        lower: side(-1.0),
        upper: side(1.0),
    }
}

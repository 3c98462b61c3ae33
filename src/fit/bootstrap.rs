//! Uncertainty: bootstrap percentile intervals and a profile check on γ.
//!
//! The bootstrap resamples observations (whole trials or whole sessions, with replacement) and
//! refits from the full-data optimum; the model pass still runs over every trial, because the
//! animal learned from all of them whichever observations a replicate draws.

use super::objective::{LearnParams, Problem};
use super::optimise::{refine_from_optima, FitResult, SearchOptions};
use super::Progress;
use rand::{Rng, SeedableRng};
use rand_chacha::ChaCha8Rng;
use rayon::prelude::*;
use std::collections::BTreeMap;

/// What the bootstrap draws with replacement.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum ResampleUnit {
    /// Trials (a trial's cue and reward windows stay together).
    Trials,
    /// Whole sessions: honest about day-to-day drift, coarse with few sessions.
    Sessions,
    /// Contiguous blocks of [`BLOCK_TRIALS`] trials within a session (the last block of a
    /// session may be shorter): keeps the serial dependence of neighbouring trials.
    Blocks,
}

/// Trials per block of [`ResampleUnit::Blocks`].
pub const BLOCK_TRIALS: usize = 20;

impl ResampleUnit {
    pub fn name(self) -> &'static str {
        match self {
            ResampleUnit::Trials => "trials",
            ResampleUnit::Sessions => "sessions",
            ResampleUnit::Blocks => "blocks",
        }
    }
    pub fn parse(s: &str) -> Option<Self> {
        match s {
            "trials" => Some(ResampleUnit::Trials),
            "sessions" => Some(ResampleUnit::Sessions),
            "blocks" => Some(ResampleUnit::Blocks),
            _ => None,
        }
    }
}

/// One replicate's estimates.
#[derive(Debug, Clone, PartialEq)]
pub struct Replicate {
    pub params: LearnParams,
    pub gain: f64,
    pub gain_neg: Option<f64>,
    pub baselines: [Option<f64>; 2],
    /// `--scale-by`: each group's gain and baselines in this replicate.
    pub groups: Vec<super::objective::GroupLinear>,
    /// `fit --licks`: the lick readout's rates in this replicate.
    pub lick: Option<super::licks::LickLinear>,
}

/// Percentile intervals (2.5 %, 97.5 %) from the replicates that could be fitted.
#[derive(Debug, Clone, PartialEq)]
pub struct Intervals {
    pub n_requested: usize,
    pub n_ok: usize,
    pub unit: ResampleUnit,
    pub replicates: Vec<Replicate>,
    /// Objective evaluations (model passes) over all replicates.
    pub evaluations: usize,
}

/// Level of the reported intervals.
pub const LEVEL: f64 = 0.95;

/// Replicates wanted beyond each end of a percentile interval. An end is an order statistic
/// of the replicates; with less than one replicate in its tail the end is the most extreme
/// replicate or an interpolation towards it, and an interval can even miss its own estimate.
/// One per tail is the floor below which the report says the count is too small (40 at 95 %);
/// Efron & Tibshirani (1993, *An Introduction to the Bootstrap*, ch. 19) ask for about 1000
/// for percentile ends worth publishing (quoted from memory), which the warning repeats.
pub const MIN_TAIL_REPLICATES: f64 = 1.0;

/// Fewest replicates for intervals at `level` to have [`MIN_TAIL_REPLICATES`] in each tail.
pub fn min_replicates(level: f64) -> usize {
    // The small tolerance keeps 1/0.05 at 20 (not 21) despite 1 − 0.9 rounding low.
    (MIN_TAIL_REPLICATES / ((1.0 - level) / 2.0) - 1e-9).ceil() as usize
}

/// The report's warning when `n_ok` replicates are too few for intervals at `level`.
pub fn too_few_warning(n_ok: usize, level: f64) -> Option<String> {
    let need = min_replicates(level);
    (n_ok < need).then(|| {
        format!(
            "{n_ok} bootstrap replicates are too few for {}% intervals: each end rests on about \
             {} replicate(s) in its tail; rerun with --bootstrap {need} at the very least (about \
             1000 for ends worth publishing)",
            (level * 100.0).round(),
            super::report::num(n_ok as f64 * (1.0 - level) / 2.0)
        )
    })
}

impl Intervals {
    /// (lower, upper) of a statistic of the replicates; `None` with fewer than 2 replicates.
    pub fn interval(&self, stat: impl Fn(&Replicate) -> Option<f64>) -> Option<(f64, f64)> {
        let mut v: Vec<f64> = self.replicates.iter().filter_map(&stat).collect();
        if v.len() < 2 {
            return None;
        }
        v.sort_by(f64::total_cmp);
        let tail = (1.0 - LEVEL) / 2.0;
        Some((
            percentile_sorted(&v, tail),
            percentile_sorted(&v, 1.0 - tail),
        ))
    }
}

/// Percentile with linear interpolation between order statistics (numpy's default "linear"
/// method): position q·(n−1) in the sorted values.
pub fn percentile_sorted(sorted: &[f64], q: f64) -> f64 {
    let n = sorted.len();
    if n == 1 {
        return sorted[0];
    }
    let pos = q.clamp(0.0, 1.0) * (n - 1) as f64;
    let lo = pos.floor() as usize;
    let hi = (lo + 1).min(n - 1);
    let frac = pos - lo as f64;
    sorted[lo] + (sorted[hi] - sorted[lo]) * frac
}

/// Groups of included point indices that are drawn together.
pub fn resampling_groups(problem: &Problem, idx: &[usize], unit: ResampleUnit) -> Vec<Vec<usize>> {
    let data = problem.data;
    let mut groups: BTreeMap<(usize, usize), Vec<usize>> = BTreeMap::new();
    for &i in idx {
        let span = &data.spans[data.points[i].span];
        let key = match unit {
            ResampleUnit::Trials => (data.points[i].span, 0),
            ResampleUnit::Sessions => (data.session_of(i), 0),
            ResampleUnit::Blocks => (span.session, span.trial / BLOCK_TRIALS),
        };
        groups.entry(key).or_default().push(i);
    }
    groups.into_values().collect()
}

/// `n` replicates, in parallel, each with its own random stream derived from `seed` (so the
/// result does not depend on thread scheduling).
#[allow(clippy::too_many_arguments)]
pub fn bootstrap(
    problem: &Problem,
    idx: &[usize],
    best: &FitResult,
    n: usize,
    unit: ResampleUnit,
    seed: u64,
    opts: &SearchOptions,
    progress: &dyn Progress,
) -> Intervals {
    let groups = resampling_groups(problem, idx, unit);
    let replicates: Vec<Option<(Replicate, usize)>> = (0..n)
        .into_par_iter()
        .map(|b| {
            let mut rng = ChaCha8Rng::seed_from_u64(seed);
            rng.set_stream(b as u64 + 1);
            let mut sample = Vec::with_capacity(idx.len());
            for _ in 0..groups.len() {
                sample.extend_from_slice(&groups[rng.random_range(0..groups.len())]);
            }
            let r = refine_from_optima(problem, &sample, best, opts);
            progress.tick();
            r.map(|f| {
                let rep = Replicate {
                    params: f.params,
                    gain: f.linear.gain,
                    gain_neg: f.linear.gain_neg,
                    baselines: f.linear.baselines,
                    groups: f.linear.groups,
                    lick: f.linear.lick,
                };
                (rep, f.evaluations)
            })
        })
        .collect();
    let ok: Vec<(Replicate, usize)> = replicates.into_iter().flatten().collect();
    Intervals {
        n_requested: n,
        n_ok: ok.len(),
        unit,
        evaluations: ok.iter().map(|r| r.1).sum(),
        replicates: ok.into_iter().map(|r| r.0).collect(),
    }
}

/// The profile likelihood of γ at a few time constants around the optimum.
#[derive(Debug, Clone, PartialEq)]
pub struct GammaProfile {
    /// (γ per bin, lnL_best − lnL profiled over the other learning parameters).
    pub points: Vec<(f64, f64)>,
    /// The profile drops by less than [`FLAT_DROP`] at both τ/2 and 2τ.
    pub flat: bool,
    pub gamma_best: f64,
    /// 95 % profile-likelihood interval of γ, computed when the profile is flat (the
    /// bootstrap's interval is then withheld) or when asked for (intervals are reported); a
    /// missing end is unbounded (one-sided).
    pub interval: Option<super::profile::ProfileInterval>,
}

/// Half the 95 % χ²₁ quantile (3.84/2): a likelihood-ratio drop below it is not significant
/// (the likelihood-ratio test's χ² approximation, Wilks 1938, *Ann Math Stat* 9:60, citation
/// from memory; 3.841 is the χ²₁ quantile, a closed-form value).
pub const FLAT_DROP: f64 = 1.92;
/// Multipliers of the fitted time constant τ = −dt/ln γ at which the profile is evaluated.
pub const PROFILE_TAU_FACTORS: [f64; 4] = [0.5, 0.75, 1.5, 2.0];

impl GammaProfile {
    pub fn warning(&self, dt: f64) -> String {
        let tau = tau_s(self.gamma_best, dt);
        format!(
            "γ is poorly constrained: halving or doubling its time constant (τ = {} s) lowers \
             the log-likelihood by less than {FLAT_DROP}; read γ as a rough value. With a fixed \
             cue–reward delay, γ is pinned mainly by the ratio of the learned cue response to \
             the unpredicted-reward response",
            super::report::num(tau)
        )
    }
}

/// Time constant in seconds of a per-bin discount.
pub fn tau_s(gamma: f64, dt: f64) -> f64 {
    if gamma <= 0.0 {
        0.0
    } else if gamma >= 1.0 {
        f64::INFINITY
    } else {
        -dt / gamma.ln()
    }
}

/// Profile γ: fix it at τ multiples of the optimum, re-optimise α (and λ if free); with
/// `with_interval` (or a flat profile) also γ's profile-likelihood interval.
pub fn gamma_profile(
    problem: &Problem,
    idx: &[usize],
    best: &FitResult,
    opts: &SearchOptions,
    progress: &dyn Progress,
    with_interval: bool,
) -> GammaProfile {
    let dt = problem.data.dt;
    let tau = tau_s(best.params.gamma, dt);
    let points: Vec<(f64, f64)> = PROFILE_TAU_FACTORS
        .par_iter()
        .map(|&f| {
            let gamma = (-dt / (tau * f)).exp();
            let zg = super::objective::logit(gamma);
            // Search over the other coordinates with γ's coordinate pinned.
            let others: Vec<f64> = best
                .z
                .iter()
                .enumerate()
                .filter(|&(i, _)| i != 1)
                .map(|(_, &v)| v)
                .collect();
            let full = |o: &[f64]| {
                let mut z = Vec::with_capacity(o.len() + 1);
                z.push(o[0]);
                z.push(zg);
                z.extend_from_slice(&o[1..]);
                z
            };
            let cost = |o: &[f64]| {
                progress.tick();
                problem.cost(&full(o), idx)
            };
            let ll = super::optimise::nelder_mead(
                &cost,
                &others,
                opts.step,
                opts.max_iters_refine,
                opts.tolerance,
            )
            .map(|(_, c, _)| -c)
            .unwrap_or(f64::NEG_INFINITY);
            (gamma, best.log_likelihood - ll)
        })
        .collect();
    let drop_at = |f: f64| {
        PROFILE_TAU_FACTORS
            .iter()
            .position(|&x| x == f)
            .map(|i| points[i].1)
            .unwrap_or(f64::INFINITY)
    };
    let flat = drop_at(0.5) < FLAT_DROP && drop_at(2.0) < FLAT_DROP;
    let interval = (flat || with_interval)
        .then(|| super::profile::profile_interval(problem, idx, best, 1, opts));
    GammaProfile {
        points,
        flat,
        gamma_best: best.params.gamma,
        interval,
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    /// One replicate per tail: 40 for a 95 % interval (2.5 % tails), 20 for 90 %.
    #[test]
    fn replicate_floor_follows_the_level() {
        assert_eq!(min_replicates(0.95), 40);
        assert_eq!(min_replicates(0.90), 20);
        assert!(too_few_warning(39, 0.95).is_some());
        assert!(too_few_warning(40, 0.95).is_none());
        let w = too_few_warning(10, 0.95).unwrap();
        assert!(
            w.contains("10 bootstrap replicates are too few for 95% intervals"),
            "{w}"
        );
        assert!(w.contains("about 0.2500 replicate(s)"), "{w}");
        assert!(w.contains("--bootstrap 40"), "{w}");
    }
}

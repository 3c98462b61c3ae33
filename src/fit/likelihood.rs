//! Which observation model scores a fit: Gaussian on responses, or Poisson on spike counts.
//!
//! Gaussian (methods.md §4): y_j = b_e + g·x_j + ε, closed form (see [`super::objective`]).
//!
//! Poisson (spike data): the count c_j of spikes in window j (all units of the population, or
//! the one unit) is Poisson with mean
//!
//! μ_j = E_j · (1/n_j) Σ_k f(b_e + g·δ_k),
//!
//! summed over the n_j model bins k of the window, with E_j the exposure (units × window
//! seconds), b_e the resting rate of window kind e (spikes/s), g the extra rate per unit δ and
//! f a softplus with a sharp knee ([`LINK_SCALE_HZ`]): a firing rate cannot go below zero, so
//! dips are compressed against bursts, as `simulate` draws them (max(0, b + g·δ) per bin) and
//! as recorded (Bayer & Glimcher 2005). The softplus instead of the hard rectifier keeps μ > 0
//! and the likelihood smooth. For fixed learning parameters b and g have no closed form: they
//! are profiled out by Fisher scoring (a few Newton-type steps, each with step halving) from a
//! least-squares start, at every evaluation of the objective.

use super::dataset::WindowKind;

/// The observation model.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Likelihood {
    /// Responses (rate or ΔF/F minus the pre-cue baseline), Gaussian noise, σ profiled out.
    Gaussian,
    /// Spike counts per window, Poisson with a non-negative (softplus) rate.
    Poisson,
}

impl Likelihood {
    pub fn name(self) -> &'static str {
        match self {
            Likelihood::Gaussian => "gaussian",
            Likelihood::Poisson => "poisson",
        }
    }

    pub fn parse(s: &str) -> Option<Self> {
        match s {
            "gaussian" => Some(Likelihood::Gaussian),
            "poisson" => Some(Likelihood::Poisson),
            _ => None,
        }
    }

    /// One line for the report.
    pub fn describe(self) -> &'static str {
        match self {
            Likelihood::Gaussian => {
                "gaussian (response = baseline + gain × δ + normal noise, σ profiled out)"
            }
            Likelihood::Poisson => {
                "poisson (spike count per window, rate = softplus(baseline + gain × δ) per model \
                 bin, baseline and gain profiled by Fisher scoring)"
            }
        }
    }
}

/// The likelihood spike fits use when none is asked for: Poisson recovered γ without the
/// upward bias the Gaussian shows on rectified rates (coverage bench, `benches/coverage.rs`).
pub const SPIKE_DEFAULT: Likelihood = Likelihood::Poisson;

/// Spikes counted in one response window.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct WindowCount {
    pub count: f64,
    /// Units × window length, seconds: the mean count is exposure × mean rate.
    pub exposure: f64,
}

/// Width of the softplus knee, spikes/s: f(u) = s·ln(1 + e^{u/s}) differs from max(0, u) by at
/// most s·ln 2 ≈ 0.35 spikes/s (at u = 0) and by < 10⁻³ spikes/s beyond |u| = 2.5 spikes/s.
pub const LINK_SCALE_HZ: f64 = 0.5;

/// softplus and its derivative (the logistic function), numerically stable.
pub fn softplus(u: f64) -> (f64, f64) {
    let z = u / LINK_SCALE_HZ;
    if z > 30.0 {
        (u, 1.0)
    } else if z < -30.0 {
        let e = z.exp();
        (LINK_SCALE_HZ * e, e)
    } else {
        let e = z.exp();
        (LINK_SCALE_HZ * e.ln_1p(), e / (1.0 + e))
    }
}

/// The u with softplus(u) = r (r > 0); a small negative number for r ≤ 0.
fn inverse_softplus(r: f64) -> f64 {
    let z = r / LINK_SCALE_HZ;
    if z > 30.0 {
        r
    } else if z <= 1e-6 {
        LINK_SCALE_HZ * (1e-6f64).ln()
    } else {
        LINK_SCALE_HZ * z.exp_m1().ln()
    }
}

/// ln(y!) for a non-negative whole count (exact sum up to 30, Stirling's series beyond).
pub fn ln_factorial(y: f64) -> f64 {
    let y = y.max(0.0).round();
    if y < 30.0 {
        (2..=y as u64).map(|k| (k as f64).ln()).sum()
    } else {
        let n = y + 1.0;
        (n - 0.5) * n.ln() - n + 0.5 * (2.0 * std::f64::consts::PI).ln() + 1.0 / (12.0 * n)
            - 1.0 / (360.0 * n.powi(3))
    }
}

/// Per-bin δ of every point's window, flattened: point i owns `values[offsets[i]..offsets[i+1]]`.
#[derive(Debug, Clone, PartialEq, Default)]
pub struct WindowDeltas {
    pub values: Vec<f64>,
    pub offsets: Vec<usize>,
}

impl WindowDeltas {
    pub fn of(&self, i: usize) -> &[f64] {
        &self.values[self.offsets[i]..self.offsets[i + 1]]
    }
}

/// Profiled Poisson fit of one set of learning parameters.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct PoissonFit {
    /// The gain (of positive δ, when asymmetric).
    pub gain: f64,
    /// Asymmetric fits: the gain of negative δ.
    pub gain_neg: Option<f64>,
    pub baselines: [Option<f64>; 2],
    pub log_likelihood: f64,
    /// Sum of squared rate residuals (count/exposure − μ/exposure), for RMSE-type summaries.
    pub rss: f64,
}

/// Mean rate of window `d` under (b, g+, g−): (1/n) Σ f(b + g+·δ⁺_k + g−·δ⁻_k) with δ⁺ =
/// max(δ, 0), δ⁻ = min(δ, 0) (g+ = g− for a symmetric readout), and its derivatives in b,
/// g+, g− and (symmetric readout) in the one gain, summed as before so that symmetric fits
/// are unchanged to the last bit.
fn window_rate(d: &[f64], b: f64, g: [f64; 2]) -> (f64, f64, [f64; 3]) {
    if d.is_empty() {
        return (softplus(b).0, softplus(b).1, [0.0; 3]);
    }
    let (mut r, mut rb, mut rg) = (0.0, 0.0, [0.0; 3]);
    for &x in d {
        let (pos, neg) = (x.max(0.0), x.min(0.0));
        let (f, df) = softplus(b + g[0] * pos + g[1] * neg);
        r += f;
        rb += df;
        rg[0] += df * pos;
        rg[1] += df * neg;
        rg[2] += df * x;
    }
    let n = d.len() as f64;
    (r / n, rb / n, [rg[0] / n, rg[1] / n, rg[2] / n])
}

fn loglik(
    deltas: &WindowDeltas,
    counts: &[WindowCount],
    kinds: &[WindowKind],
    idx: &[usize],
    b: [f64; 2],
    g: [f64; 2],
) -> f64 {
    let mut ll = 0.0;
    for &i in idx {
        let c = counts[i];
        let (r, _, _) = window_rate(deltas.of(i), b[kinds[i].index()], g);
        let mu = (c.exposure * r).max(1e-300);
        ll += c.count * mu.ln() - mu;
    }
    ll
}

#[allow(clippy::needless_range_loop)]
/// Solve the symmetric system `a·x = r` (n ≤ 4) by Gaussian elimination with pivoting; `None`
/// when singular.
pub fn solve(mut a: [[f64; 4]; 4], mut r: [f64; 4], n: usize) -> Option<[f64; 4]> {
    for c in 0..n {
        let p = (c..n).max_by(|&i, &j| a[i][c].abs().total_cmp(&a[j][c].abs()))?;
        if a[p][c].abs() < 1e-300 {
            return None;
        }
        a.swap(c, p);
        r.swap(c, p);
        for i in c + 1..n {
            let f = a[i][c] / a[c][c];
            for j in c..n {
                a[i][j] -= f * a[c][j];
            }
            r[i] -= f * r[c];
        }
    }
    let mut x = [0.0; 4];
    for c in (0..n).rev() {
        let s: f64 = (c + 1..n).map(|j| a[c][j] * x[j]).sum();
        x[c] = (r[c] - s) / a[c][c];
    }
    x.iter().all(|v| v.is_finite()).then_some(x)
}

/// Fisher-scoring iterations per profile; each is one pass over the windows' bins.
pub const MAX_SCORING_STEPS: usize = 40;

/// Maximise the Poisson likelihood over baselines and gain (two gains, of positive and of
/// negative δ, when `asymmetric`) for fixed per-bin δ, on the points `idx` (repeats allowed).
/// `None` when `idx` is empty or no finite likelihood is found.
pub fn poisson_fit(
    deltas: &WindowDeltas,
    counts: &[WindowCount],
    kinds: &[WindowKind],
    idx: &[usize],
    asymmetric: bool,
) -> Option<PoissonFit> {
    if idx.is_empty() {
        return None;
    }
    // Start: per-kind mean rates and a least-squares slope of rate on the window's mean δ.
    let mut present = [false; 2];
    let (mut n, mut sr, mut sx) = ([0.0f64; 2], [0.0f64; 2], [0.0f64; 2]);
    let mean_delta = |i: usize| {
        let d = deltas.of(i);
        if d.is_empty() {
            0.0
        } else {
            d.iter().sum::<f64>() / d.len() as f64
        }
    };
    for &i in idx {
        let e = kinds[i].index();
        present[e] = true;
        n[e] += 1.0;
        sr[e] += counts[i].count / counts[i].exposure.max(1e-12);
        sx[e] += mean_delta(i);
    }
    let (mut sxx, mut sxy) = (0.0, 0.0);
    for &i in idx {
        let e = kinds[i].index();
        let dx = mean_delta(i) - sx[e] / n[e];
        sxx += dx * dx;
        sxy += dx * (counts[i].count / counts[i].exposure.max(1e-12) - sr[e] / n[e]);
    }
    let g0 = if sxx > 1e-12 { sxy / sxx } else { 0.0 };
    let mut g = [g0, g0];
    let mut b = [0.0; 2];
    for e in 0..2 {
        if present[e] {
            b[e] = inverse_softplus((sr[e] - g0 * sx[e]) / n[e]);
        }
    }
    let active: Vec<usize> = (0..2).filter(|&e| present[e]).collect();
    let n_gains = 1 + usize::from(asymmetric);
    let np = active.len() + n_gains;
    let mut ll = loglik(deltas, counts, kinds, idx, b, g);
    for _ in 0..MAX_SCORING_STEPS {
        let mut score = [0.0; 4];
        let mut info = [[0.0; 4]; 4];
        for &i in idx {
            let c = counts[i];
            let e = kinds[i].index();
            let (r, rb, rg) = window_rate(deltas.of(i), b[e], g);
            let mu = (c.exposure * r).max(1e-300);
            let mut grad = [0.0; 4];
            grad[active.iter().position(|&a| a == e).unwrap_or(0)] = c.exposure * rb;
            if asymmetric {
                grad[np - 2] = c.exposure * rg[0];
                grad[np - 1] = c.exposure * rg[1];
            } else {
                grad[np - 1] = c.exposure * rg[2];
            }
            let w = c.count / mu - 1.0;
            for a in 0..np {
                score[a] += w * grad[a];
                for bb in 0..np {
                    info[a][bb] += grad[a] * grad[bb] / mu;
                }
            }
        }
        // A direction the data do not inform (e.g. no spread in δ) makes the information
        // singular; a tiny ridge keeps the step finite along the others.
        let ridge = 1e-9 * (0..np).map(|a| info[a][a]).sum::<f64>().max(1e-12);
        let mut damped = info;
        for (a, row) in damped.iter_mut().enumerate().take(np) {
            row[a] += ridge;
        }
        let Some(step) = solve(info, score, np).or_else(|| solve(damped, score, np)) else {
            break;
        };
        let mut t = 1.0;
        let mut improved = false;
        for _ in 0..30 {
            let mut nb = b;
            for (a, &e) in active.iter().enumerate() {
                nb[e] = b[e] + t * step[a];
            }
            let ng = if asymmetric {
                [g[0] + t * step[np - 2], g[1] + t * step[np - 1]]
            } else {
                [g[0] + t * step[np - 1]; 2]
            };
            let nll = loglik(deltas, counts, kinds, idx, nb, ng);
            if nll.is_finite() && nll >= ll {
                let gained = nll - ll;
                b = nb;
                g = ng;
                ll = nll;
                improved = gained > 1e-10 * ll.abs().max(1.0);
                break;
            }
            t *= 0.5;
        }
        if !improved {
            break;
        }
    }
    let constant: f64 = idx.iter().map(|&i| ln_factorial(counts[i].count)).sum();
    let rss: f64 = idx
        .iter()
        .map(|&i| {
            let c = counts[i];
            let (r, _, _) = window_rate(deltas.of(i), b[kinds[i].index()], g);
            (c.count / c.exposure.max(1e-12) - r).powi(2)
        })
        .sum();
    let log_likelihood = ll - constant;
    (log_likelihood.is_finite() && g[0].is_finite() && g[1].is_finite()).then_some(PoissonFit {
        gain: g[0],
        gain_neg: asymmetric.then_some(g[1]),
        baselines: [present[0].then_some(b[0]), present[1].then_some(b[1])],
        log_likelihood,
        rss,
    })
}

/// Predicted response of a window in the units of the observed one (mean rate in the window
/// minus the resting rate): (1/n) Σ f(b + g·δ_k) − f(b).
pub fn predicted_response(d: &[f64], baseline: f64, gain: f64) -> f64 {
    predicted_response_asym(d, baseline, gain, gain)
}

/// [`predicted_response`] with separate gains of positive and negative δ.
pub fn predicted_response_asym(d: &[f64], baseline: f64, gain: f64, gain_neg: f64) -> f64 {
    window_rate(d, baseline, [gain, gain_neg]).0 - softplus(baseline).0
}

#[cfg(test)]
mod tests {
    use super::*;

    /// ln(y!) exact for small y and within 1e-10 of the exact sum past the switch to Stirling.
    #[test]
    fn ln_factorial_matches_the_sum() {
        assert_eq!(ln_factorial(0.0), 0.0);
        assert!((ln_factorial(5.0) - 120f64.ln()).abs() < 1e-12);
        let exact: f64 = (2..=40).map(|k| (k as f64).ln()).sum();
        assert!((ln_factorial(40.0) - exact).abs() < 1e-10);
    }

    /// With one bin per window and δ = 0 everywhere the maximum-likelihood rate of a kind is
    /// its total count over its total exposure (closed form of the Poisson MLE), whatever g is.
    #[test]
    fn constant_rate_mle_is_count_over_exposure() {
        let deltas = WindowDeltas {
            values: vec![0.0; 4],
            offsets: vec![0, 1, 2, 3, 4],
        };
        let counts: Vec<WindowCount> = [3.0, 5.0, 1.0, 2.0]
            .iter()
            .map(|&c| WindowCount {
                count: c,
                exposure: 1.5,
            })
            .collect();
        let kinds = [
            WindowKind::Cue,
            WindowKind::Cue,
            WindowKind::Reward,
            WindowKind::Reward,
        ];
        let fit = poisson_fit(&deltas, &counts, &kinds, &[0, 1, 2, 3], false).unwrap();
        let rate = |b: f64| softplus(b).0;
        assert!((rate(fit.baselines[0].unwrap()) - 8.0 / 3.0).abs() < 1e-6);
        assert!((rate(fit.baselines[1].unwrap()) - 1.0).abs() < 1e-6);
    }

    /// Large simulated windows: the profiled gain and baseline come back near the truth.
    #[test]
    fn recovers_gain_and_baseline_of_rectified_rates() {
        use rand::SeedableRng;
        use rand_distr::{Distribution, Poisson};
        let mut rng = rand_chacha::ChaCha8Rng::seed_from_u64(3);
        let (b, g) = (4.5, 15.0);
        let mut values = Vec::new();
        let mut offsets = vec![0];
        let mut counts = Vec::new();
        for i in 0..3000 {
            let d: Vec<f64> = (0..6)
                .map(|k| ((i * 7 + k * 3) % 11) as f64 / 5.0 - 1.0)
                .collect();
            let rate: f64 = d.iter().map(|x| (b + g * x).max(0.0)).sum::<f64>() / 6.0;
            let exposure = 6.0 * 0.3;
            let c: f64 = Poisson::new((exposure * rate).max(1e-9))
                .unwrap()
                .sample(&mut rng);
            values.extend(d);
            offsets.push(values.len());
            counts.push(WindowCount { count: c, exposure });
        }
        let deltas = WindowDeltas { values, offsets };
        let kinds = vec![WindowKind::Cue; counts.len()];
        let idx: Vec<usize> = (0..counts.len()).collect();
        let fit = poisson_fit(&deltas, &counts, &kinds, &idx, false).unwrap();
        assert!((fit.gain - g).abs() < 1.0, "gain {}", fit.gain);
        assert!(
            (fit.baselines[0].unwrap() - b).abs() < 0.5,
            "{:?}",
            fit.baselines
        );
    }
}

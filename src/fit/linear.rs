//! The closed-form parts of the Gaussian observation model: least squares of responses on
//! the model's δ sums with one baseline per window kind, the profiled log-likelihood, the
//! information criteria and goodness of fit (see [`super::objective`] for the model).

use super::dataset::{FitData, WindowKind};
use super::licks::LickLinear;
use super::likelihood::Likelihood;

/// The closed-form part of a fit.
#[derive(Debug, Clone, PartialEq)]
pub struct LinearFit {
    /// The gain (with `--scale-by`: the first fitted group's; every group's in `groups`); with
    /// `--asymmetric`, the gain of positive δ.
    pub gain: f64,
    /// `--asymmetric`: the gain of negative δ (`None`: one gain for both signs).
    pub gain_neg: Option<f64>,
    /// Baseline per window kind (`WindowKind::index`); `None` when no such window was fitted.
    pub baselines: [Option<f64>; 2],
    pub rss: f64,
    pub n: usize,
    /// The observation model that scored this fit.
    pub likelihood: Likelihood,
    /// Maximised log-likelihood (σ² profiled out for the Gaussian).
    pub loglik: f64,
    /// `--scale-by`: each group's own gain and baselines (groups without points in the fitted
    /// set are absent); empty for one gain over the subject.
    pub groups: Vec<GroupLinear>,
    /// `fit --licks`: the lick readout's rates; its log-likelihood and windows are included
    /// in `loglik` and `n`.
    pub lick: Option<LickLinear>,
}

/// Gain and baselines of one group of points ([`super::dataset::Groups`]).
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct GroupLinear {
    /// Index into `Groups::names`.
    pub group: usize,
    pub gain: f64,
    pub gain_neg: Option<f64>,
    pub baselines: [Option<f64>; 2],
    /// Points of the group in the fit.
    pub n: usize,
}

impl LinearFit {
    pub fn predict(&self, kind: WindowKind, x: f64) -> f64 {
        self.baselines[kind.index()].unwrap_or(0.0) + self.gain * x
    }

    /// ([gain of positive δ, gain of negative δ], baselines) that map δ onto responses for a
    /// point of `group` (`None`: ungrouped data); both gains equal for a symmetric readout. A
    /// group the fit never saw gets NaN: no prediction is better than a wrong one.
    pub fn scale_of(&self, group: Option<usize>) -> ([f64; 2], [Option<f64>; 2]) {
        let gains = |g: f64, n: Option<f64>| [g, n.unwrap_or(g)];
        match (group, self.groups.is_empty()) {
            (None, _) | (_, true) => (gains(self.gain, self.gain_neg), self.baselines),
            (Some(g), false) => self
                .groups
                .iter()
                .find(|x| x.group == g)
                .map_or(([f64::NAN; 2], [None; 2]), |x| {
                    (gains(x.gain, x.gain_neg), x.baselines)
                }),
        }
    }

    /// A readout of recorded activity was fitted (not so for `fit --licks only`, whose gain is
    /// NaN).
    pub fn has_activity(&self) -> bool {
        !self.gain.is_nan()
    }

    /// A fit of lick windows alone: no activity gain or baselines.
    pub fn licks_only(likelihood: Likelihood) -> Self {
        LinearFit {
            gain: f64::NAN,
            gain_neg: None,
            baselines: [None; 2],
            rss: 0.0,
            n: 0,
            likelihood,
            loglik: 0.0,
            groups: Vec::new(),
            lick: None,
        }
    }

    /// Number of baselines estimated (over every group).
    pub fn n_baselines(&self) -> usize {
        let count = |b: &[Option<f64>; 2]| b.iter().filter(|b| b.is_some()).count();
        if self.groups.is_empty() {
            count(&self.baselines)
        } else {
            self.groups.iter().map(|g| count(&g.baselines)).sum()
        }
    }

    /// Number of gains estimated (one per group, two when asymmetric).
    pub fn n_gains(&self) -> usize {
        if !self.has_activity() {
            return 0;
        }
        self.groups.len().max(1) * (1 + usize::from(self.gain_neg.is_some()))
    }

    /// Number of groups (1 without `--scale-by`).
    pub fn n_groups(&self) -> usize {
        self.groups.len().max(1)
    }

    /// Maximised log-likelihood under [`LinearFit::likelihood`].
    pub fn log_likelihood(&self) -> f64 {
        self.loglik
    }
}

/// lnL of n residuals with sum of squares `rss` at the maximum-likelihood σ² = rss/n.
pub fn gaussian_loglik(rss: f64, n: usize) -> f64 {
    let n = n as f64;
    -0.5 * n * ((2.0 * std::f64::consts::PI * rss / n).ln() + 1.0)
}

/// Akaike information criterion, 2k − 2lnL (Akaike 1974, *IEEE Trans Autom Control*
/// 19:716, citation from memory; the formula as methods.md §4 states it).
pub fn aic(loglik: f64, k: usize) -> f64 {
    2.0 * k as f64 - 2.0 * loglik
}

/// Schwarz's Bayesian information criterion, k·ln n − 2lnL (Schwarz 1978, *Ann Stat* 6:461;
/// methods.md §4).
pub fn bic(loglik: f64, k: usize, n: usize) -> f64 {
    k as f64 * (n as f64).ln() - 2.0 * loglik
}

/// Least squares of y on [one indicator per window kind, x] over the points `idx` (repeats
/// allowed: bootstrap samples). Two passes (group means, then centred sums) for accuracy.
/// `None` when `idx` is empty. A predictor without spread within groups gets gain 0.
pub fn least_squares(
    x: &[f64],
    y: &[f64],
    kind: &[WindowKind],
    idx: &[usize],
) -> Option<LinearFit> {
    if idx.is_empty() {
        return None;
    }
    let mut n = [0usize; 2];
    let mut sx = [0.0; 2];
    let mut sy = [0.0; 2];
    for &i in idx {
        let g = kind[i].index();
        n[g] += 1;
        sx[g] += x[i];
        sy[g] += y[i];
    }
    let mut mx = [0.0; 2];
    let mut my = [0.0; 2];
    for g in 0..2 {
        if n[g] > 0 {
            mx[g] = sx[g] / n[g] as f64;
            my[g] = sy[g] / n[g] as f64;
        }
    }
    let (mut sxx, mut sxy, mut syy) = (0.0, 0.0, 0.0);
    for &i in idx {
        let g = kind[i].index();
        let dx = x[i] - mx[g];
        let dy = y[i] - my[g];
        sxx += dx * dx;
        sxy += dx * dy;
        syy += dy * dy;
    }
    let scale: f64 = idx.iter().map(|&i| x[i] * x[i]).sum::<f64>().max(1e-300);
    let gain = if sxx > 1e-14 * scale { sxy / sxx } else { 0.0 };
    let mut baselines = [None; 2];
    for g in 0..2 {
        if n[g] > 0 {
            baselines[g] = Some(my[g] - gain * mx[g]);
        }
    }
    // Direct residual sum: RSS = Syy − g·Sxy loses digits when the fit is good.
    let rss: f64 = idx
        .iter()
        .map(|&i| {
            let g = kind[i].index();
            let r = y[i] - my[g] - gain * (x[i] - mx[g]);
            r * r
        })
        .sum::<f64>()
        .max(syy * 1e-30);
    Some(LinearFit {
        gain,
        baselines,
        rss,
        n: idx.len(),
        likelihood: Likelihood::Gaussian,
        loglik: gaussian_loglik(rss, idx.len()),
        groups: Vec::new(),
        gain_neg: None,
        lick: None,
    })
}

/// Least squares of y on [one indicator per window kind, x⁺, x⁻] over the points `idx`: the
/// asymmetric readout, x⁺ and x⁻ the window sums of the positive and the negative parts of δ,
/// each with its own gain (Bayer & Glimcher 2005 found firing rates scale negative errors
/// less). The gains are the solution of the 2×2 normal equations of the within-kind centred
/// predictors; `None` when `idx` is empty, gains 0 where the predictors have no spread.
pub fn least_squares_split(
    xp: &[f64],
    xn: &[f64],
    y: &[f64],
    kind: &[WindowKind],
    idx: &[usize],
) -> Option<LinearFit> {
    if idx.is_empty() {
        return None;
    }
    let mut n = [0usize; 2];
    let mut s = [[0.0; 3]; 2];
    for &i in idx {
        let g = kind[i].index();
        n[g] += 1;
        s[g][0] += xp[i];
        s[g][1] += xn[i];
        s[g][2] += y[i];
    }
    let mean = |g: usize, k: usize| if n[g] > 0 { s[g][k] / n[g] as f64 } else { 0.0 };
    let (mut a, mut r) = ([[0.0; 2]; 2], [0.0; 2]);
    let mut syy = 0.0;
    for &i in idx {
        let g = kind[i].index();
        let d = [xp[i] - mean(g, 0), xn[i] - mean(g, 1)];
        let dy = y[i] - mean(g, 2);
        for j in 0..2 {
            r[j] += d[j] * dy;
            for k in 0..2 {
                a[j][k] += d[j] * d[k];
            }
        }
        syy += dy * dy;
    }
    let det = a[0][0] * a[1][1] - a[0][1] * a[1][0];
    let scale = (a[0][0] * a[1][1]).max(1e-300);
    let (gp, gn) = if det.abs() > 1e-12 * scale {
        (
            (r[0] * a[1][1] - r[1] * a[0][1]) / det,
            (a[0][0] * r[1] - a[1][0] * r[0]) / det,
        )
    } else {
        // One part never varies (δ never negative, say): the symmetric fit on their sum.
        let sum: Vec<f64> = xp.iter().zip(xn).map(|(p, q)| p + q).collect();
        let f = least_squares(&sum, y, kind, idx)?;
        (f.gain, f.gain)
    };
    let mut baselines = [None; 2];
    for g in 0..2 {
        if n[g] > 0 {
            baselines[g] = Some(mean(g, 2) - gp * mean(g, 0) - gn * mean(g, 1));
        }
    }
    let rss: f64 = idx
        .iter()
        .map(|&i| {
            let g = kind[i].index();
            let r = y[i] - mean(g, 2) - gp * (xp[i] - mean(g, 0)) - gn * (xn[i] - mean(g, 1));
            r * r
        })
        .sum::<f64>()
        .max(syy * 1e-30);
    Some(LinearFit {
        gain: gp,
        gain_neg: Some(gn),
        baselines,
        rss,
        n: idx.len(),
        likelihood: Likelihood::Gaussian,
        loglik: gaussian_loglik(rss, idx.len()),
        groups: Vec::new(),
        lick: None,
    })
}

/// The points of `idx` that goodness of fit and held-out error are scored on: the activity
/// windows, or with none (`fit --licks only`) the lick windows; lick rates and activity have
/// different units and are never mixed in one R² or RMSE.
pub fn scored(data: &FitData, idx: &[usize]) -> Vec<usize> {
    let activity: Vec<usize> = idx
        .iter()
        .copied()
        .filter(|&i| data.points[i].kind.is_activity())
        .collect();
    match activity.is_empty() {
        true => idx.to_vec(),
        false => activity,
    }
}

/// (R², RMSE) of `predicted` against the observed values of the points `idx`.
pub fn goodness(data: &FitData, idx: &[usize], predicted: &[f64]) -> (f64, f64) {
    let scored = scored(data, idx);
    let idx = &scored[..];
    let n = idx.len().max(1) as f64;
    let mean = idx.iter().map(|&i| data.points[i].observed).sum::<f64>() / n;
    let (mut ss_res, mut ss_tot) = (0.0, 0.0);
    for &i in idx {
        let y = data.points[i].observed;
        ss_res += (y - predicted[i]).powi(2);
        ss_tot += (y - mean).powi(2);
    }
    let r2 = if ss_tot > 0.0 {
        1.0 - ss_res / ss_tot
    } else {
        0.0
    };
    (r2, (ss_res / n).sqrt())
}

#[cfg(test)]
mod tests {
    use super::*;

    /// lnL of n residuals at σ̂² = RSS/n (closed form): n = 2, RSS = 2 gives −(ln 2π + 1).
    #[test]
    fn gaussian_loglik_closed_form() {
        let want = -((2.0 * std::f64::consts::PI).ln() + 1.0);
        assert!((gaussian_loglik(2.0, 2) - want).abs() < 1e-14);
    }
}

//! Photobleaching baseline for recordings without a usable control channel: a constant plus one
//! or two decaying exponentials, F̂(t) = c + Σ A_j·exp(−(t − t_start)/τ_j).
//!
//! Fitted by variable projection: for given time constants the offset and amplitudes are a
//! linear least-squares problem (solved by modified Gram–Schmidt, stable when an exponential is
//! nearly flat), so only τ is searched — a log-spaced grid, then golden-section refinement
//! (coordinate-wise for two τ). Long recordings are first averaged into equal-count bins; bleaching
//! is slow, so the bin means lose nothing the baseline could follow.

use super::PhotometryError;

/// Which bleaching curve to fit.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default)]
pub enum BleachModel {
    /// One exponential plus a constant.
    SingleExponential,
    /// Two exponentials (a fast and a slow bleaching component) plus a constant, the bleaching
    /// model of Keevers et al. 2025. Falls back to one exponential when the second adds nothing.
    #[default]
    DoubleExponential,
}

/// Options of the bleaching fit.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct BleachOptions {
    pub model: BleachModel,
    /// Recordings longer than this are averaged into this many equal-count bins before fitting.
    pub max_points: usize,
}

impl Default for BleachOptions {
    fn default() -> Self {
        BleachOptions {
            model: BleachModel::default(),
            max_points: 2000,
        }
    }
}

#[derive(Debug, Clone, Copy, PartialEq)]
pub struct ExpTerm {
    pub amplitude: f64,
    pub tau_s: f64,
}

/// A fitted bleaching baseline.
#[derive(Debug, Clone, PartialEq)]
pub struct BleachFit {
    pub offset: f64,
    /// Fastest first.
    pub terms: Vec<ExpTerm>,
    /// Time origin of the exponentials (the first sample).
    pub t_start: f64,
    /// Points the search ran on (the samples, or the bin means of a long recording).
    pub points_fitted: usize,
}

impl BleachFit {
    /// The baseline at time `t` (seconds on the session clock).
    #[inline]
    pub fn at(&self, t: f64) -> f64 {
        let dt = t - self.t_start;
        self.offset
            + self
                .terms
                .iter()
                .map(|e| e.amplitude * (-dt / e.tau_s).exp())
                .sum::<f64>()
    }
}

/// Data the search runs on: times relative to t_start, values, and weights (sample counts).
struct Points {
    t: Vec<f64>,
    y: Vec<f64>,
    w: Vec<f64>,
}

impl Points {
    fn new(time: &[f64], signal: &[f64], max_points: usize) -> Points {
        let n = signal.len();
        let t0 = time[0];
        if n <= max_points {
            return Points {
                t: time.iter().map(|t| t - t0).collect(),
                y: signal.to_vec(),
                w: vec![1.0; n],
            };
        }
        let m = max_points;
        let (mut t, mut y, mut w) = (Vec::with_capacity(m), Vec::with_capacity(m), Vec::new());
        for k in 0..m {
            let (a, b) = (k * n / m, (k + 1) * n / m);
            let c = (b - a) as f64;
            t.push(time[a..b].iter().map(|t| t - t0).sum::<f64>() / c);
            y.push(signal[a..b].iter().sum::<f64>() / c);
            w.push(c);
        }
        Points { t, y, w }
    }
}

/// Weighted least squares of y on [1, exp(−t/τ_1), …] by modified Gram–Schmidt.
/// Returns the coefficients [c, A_1, …] and the residual sum of squares, or `None` when the
/// columns are (numerically) dependent.
fn linear_part(p: &Points, taus: &[f64]) -> Option<(Vec<f64>, f64)> {
    let k = 1 + taus.len();
    let sw: Vec<f64> = p.w.iter().map(|w| w.sqrt()).collect();
    let mut cols: Vec<Vec<f64>> = Vec::with_capacity(k);
    cols.push(sw.clone());
    for &tau in taus {
        cols.push(
            p.t.iter()
                .zip(&sw)
                .map(|(t, s)| s * (-t / tau).exp())
                .collect(),
        );
    }
    let mut r = vec![vec![0.0; k]; k];
    for j in 0..k {
        let norm0 = dot(&cols[j], &cols[j]).sqrt();
        for i in 0..j {
            let rij = dot(&cols[i], &cols[j]);
            r[i][j] = rij;
            let (qi, vj) = split_pair(&mut cols, i, j);
            vj.iter_mut()
                .zip(qi.iter())
                .for_each(|(v, q)| *v -= rij * q);
        }
        let rjj = dot(&cols[j], &cols[j]).sqrt();
        // NaN counts as dependent too.
        let independent = rjj > 1e-9 * norm0;
        if !independent {
            return None;
        }
        r[j][j] = rjj;
        cols[j].iter_mut().for_each(|v| *v /= rjj);
    }
    let mut rhs: Vec<f64> = p.y.iter().zip(&sw).map(|(y, s)| y * s).collect();
    let mut z = vec![0.0; k];
    for j in 0..k {
        z[j] = dot(&cols[j], &rhs);
        rhs.iter_mut()
            .zip(&cols[j])
            .for_each(|(v, q)| *v -= z[j] * q);
    }
    let sse = dot(&rhs, &rhs);
    let mut coef = vec![0.0; k];
    for j in (0..k).rev() {
        let tail: f64 = (j + 1..k).map(|i| r[j][i] * coef[i]).sum();
        coef[j] = (z[j] - tail) / r[j][j];
    }
    Some((coef, sse))
}

fn dot(a: &[f64], b: &[f64]) -> f64 {
    a.iter().zip(b).map(|(x, y)| x * y).sum()
}

/// Borrow column i immutably and column j (> i) mutably.
fn split_pair(cols: &mut [Vec<f64>], i: usize, j: usize) -> (&[f64], &mut [f64]) {
    let (left, right) = cols.split_at_mut(j);
    (&left[i], &mut right[0])
}

/// Residual sum of squares for log time constants; +∞ where the fit is degenerate.
fn sse(p: &Points, log_taus: &[f64]) -> f64 {
    let taus: Vec<f64> = log_taus.iter().map(|l| l.exp()).collect();
    linear_part(p, &taus).map_or(f64::INFINITY, |(_, s)| s)
}

/// Golden-section minimum of `f` on [lo, hi] (unimodal near the grid minimum).
fn golden(mut lo: f64, mut hi: f64, f: impl Fn(f64) -> f64) -> f64 {
    let g = 0.5 * (5f64.sqrt() - 1.0);
    let mut c = hi - g * (hi - lo);
    let mut d = lo + g * (hi - lo);
    let (mut fc, mut fd) = (f(c), f(d));
    for _ in 0..200 {
        if (hi - lo).abs() <= 1e-12 * (1.0 + lo.abs()) {
            break;
        }
        if fc <= fd {
            hi = d;
            d = c;
            fd = fc;
            c = hi - g * (hi - lo);
            fc = f(c);
        } else {
            lo = c;
            c = d;
            fc = fd;
            d = lo + g * (hi - lo);
            fd = f(d);
        }
    }
    if fc <= fd {
        c
    } else {
        d
    }
}

/// Minimise `f` over two variables by Nelder–Mead (standard coefficients), from `start` with
/// initial steps `step`, until the simplex is smaller than 1e-11 in every coordinate.
fn nelder_mead_2d(f: impl Fn([f64; 2]) -> f64, start: [f64; 2], step: f64) -> [f64; 2] {
    let mut pts = [
        start,
        [start[0] + step, start[1]],
        [start[0], start[1] + step],
    ];
    let mut val = pts.map(&f);
    for _ in 0..2000 {
        let mut order = [0, 1, 2];
        order.sort_by(|&i, &j| val[i].total_cmp(&val[j]));
        let [best, mid, worst] = order;
        let size = (0..2)
            .map(|k| {
                let c = [pts[0][k], pts[1][k], pts[2][k]];
                c.iter().copied().fold(f64::NEG_INFINITY, f64::max)
                    - c.iter().copied().fold(f64::INFINITY, f64::min)
            })
            .fold(0.0, f64::max);
        if size < 1e-11 {
            return pts[best];
        }
        let centroid = [
            0.5 * (pts[best][0] + pts[mid][0]),
            0.5 * (pts[best][1] + pts[mid][1]),
        ];
        let along = |t: f64| {
            [
                centroid[0] + t * (pts[worst][0] - centroid[0]),
                centroid[1] + t * (pts[worst][1] - centroid[1]),
            ]
        };
        let reflected = along(-1.0);
        let fr = f(reflected);
        if fr < val[best] {
            let expanded = along(-2.0);
            let fe = f(expanded);
            (pts[worst], val[worst]) = if fe < fr {
                (expanded, fe)
            } else {
                (reflected, fr)
            };
        } else if fr < val[mid] {
            (pts[worst], val[worst]) = (reflected, fr);
        } else {
            let contracted = if fr < val[worst] {
                along(-0.5)
            } else {
                along(0.5)
            };
            let fc = f(contracted);
            if fc < val[worst].min(fr) {
                (pts[worst], val[worst]) = (contracted, fc);
            } else {
                // Shrink towards the best point.
                for i in [mid, worst] {
                    pts[i] = [
                        pts[best][0] + 0.5 * (pts[i][0] - pts[best][0]),
                        pts[best][1] + 0.5 * (pts[i][1] - pts[best][1]),
                    ];
                    val[i] = f(pts[i]);
                }
            }
        }
    }
    let best = (0..3)
        .min_by(|&i, &j| val[i].total_cmp(&val[j]))
        .unwrap_or(0);
    pts[best]
}

fn log_grid(lo: f64, hi: f64, count: usize) -> Vec<f64> {
    (0..count)
        .map(|i| lo + (hi - lo) * i as f64 / (count - 1) as f64)
        .collect()
}

/// Fit the bleaching baseline of `signal` sampled at `time` (sorted, validated by the caller).
pub fn fit_bleaching(
    time: &[f64],
    signal: &[f64],
    opts: &BleachOptions,
) -> Result<BleachFit, PhotometryError> {
    let n = signal.len();
    let span = time[n - 1] - time[0];
    if span <= 0.0 || n < 4 {
        return Err(PhotometryError::BleachFitFailed(format!(
            "need at least 4 samples over a positive time span, got {n} samples over {span} s"
        )));
    }
    if opts.max_points < 4 {
        return Err(PhotometryError::InvalidOption(format!(
            "bleaching fit needs max_points ≥ 4, got {}",
            opts.max_points
        )));
    }
    let p = Points::new(time, signal, opts.max_points);
    // τ from 1/500 of the session (fast bleaching) to 20 sessions (nearly linear drift).
    let (lo, hi) = ((span / 500.0).ln(), (span * 20.0).ln());
    let grid = log_grid(lo, hi, 60);
    let step = grid[1] - grid[0];

    let best = grid
        .iter()
        .copied()
        .min_by(|a, b| sse(&p, &[*a]).total_cmp(&sse(&p, &[*b])))
        .expect("grid is not empty");
    let l1 = golden((best - step).max(lo), (best + step).min(hi), |l| {
        sse(&p, &[l])
    });
    let single = sse(&p, &[l1]);
    let mut log_taus = vec![l1];

    if opts.model == BleachModel::DoubleExponential {
        // τ_2 at least 1.5 × τ_1 keeps the two components apart (and the columns independent).
        let gap = 1.5f64.ln();
        let coarse = log_grid(lo, hi, 30);
        let mut best2 = (f64::INFINITY, 0.0, 0.0);
        for (i, &a) in coarse.iter().enumerate() {
            for &b in &coarse[i + 1..] {
                if b - a < gap {
                    continue;
                }
                let s = sse(&p, &[a, b]);
                if s < best2.0 {
                    best2 = (s, a, b);
                }
            }
        }
        let (_, a0, b0) = best2;
        let cstep = coarse[1] - coarse[0];
        // Nelder–Mead polish: the two τ are correlated, so a joint search follows the valley
        // that coordinate-wise searches crawl along. The gap is kept by a penalty (+∞).
        let objective = |v: [f64; 2]| {
            if v[1] - v[0] < gap || v[0] < lo || v[1] > hi {
                f64::INFINITY
            } else {
                sse(&p, &v)
            }
        };
        let [a, b] = nelder_mead_2d(objective, [a0, b0], 0.5 * cstep);
        let s2 = objective([a, b]);
        // Keep the second component only when it explains something the first does not.
        if s2.is_finite() && s2 < single * (1.0 - 1e-9) {
            log_taus = vec![a, b];
        }
    }

    let taus: Vec<f64> = log_taus.iter().map(|l| l.exp()).collect();
    let (coef, _) = linear_part(&p, &taus).ok_or_else(|| {
        PhotometryError::BleachFitFailed("the exponential terms are indistinguishable".into())
    })?;
    let terms = taus
        .iter()
        .zip(&coef[1..])
        .map(|(&tau_s, &amplitude)| ExpTerm { amplitude, tau_s })
        .collect();
    Ok(BleachFit {
        offset: coef[0],
        terms,
        t_start: time[0],
        points_fitted: p.t.len(),
    })
}

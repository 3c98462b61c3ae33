//! Straight-line fits of the control channel to the signal, F̂ = a + b·control: ordinary least
//! squares, iteratively reweighted least squares (IRLS) with a robust weight, and a running
//! (sliding-window) regression for long sessions whose coupling drifts.
//!
//! Every fit is a handful of linear passes over the samples and allocates nothing of size n
//! except a caller-provided scratch buffer (the robust scale needs a median).

use super::PhotometryError;

/// Normal-distribution quantile Φ⁻¹(3/4): MAD / 0.6745 estimates σ for Gaussian residuals
/// (common practice; the same constant statsmodels' `mad` uses).
pub const MAD_TO_SIGMA: f64 = 0.674_489_750_196_081_7;

/// Robust weight function for IRLS.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum RobustWeight {
    /// Tukey's bisquare: w = (1 − (u/c)²)² for |u| < c, else 0. c = 4.685 gives 95 % efficiency
    /// for Gaussian residuals (common practice; statsmodels' `TukeyBiweight` default).
    TukeyBisquare { c: f64 },
    /// Huber: w = 1 for |u| ≤ t, else t/|u|. t = 1.345 gives 95 % efficiency (common practice;
    /// statsmodels' `HuberT` default).
    Huber { t: f64 },
}

impl RobustWeight {
    pub const TUKEY_DEFAULT: RobustWeight = RobustWeight::TukeyBisquare { c: 4.685 };
    pub const HUBER_DEFAULT: RobustWeight = RobustWeight::Huber { t: 1.345 };

    /// Weight of a residual already divided by the robust scale.
    #[inline]
    pub fn weight(self, u: f64) -> f64 {
        match self {
            RobustWeight::TukeyBisquare { c } => {
                let q = u / c;
                if q.abs() < 1.0 {
                    let s = 1.0 - q * q;
                    s * s
                } else {
                    0.0
                }
            }
            RobustWeight::Huber { t } => {
                let a = u.abs();
                if a <= t {
                    1.0
                } else {
                    t / a
                }
            }
        }
    }

    pub fn name(self) -> String {
        match self {
            RobustWeight::TukeyBisquare { c } => format!("Tukey bisquare, c = {c}"),
            RobustWeight::Huber { t } => format!("Huber, t = {t}"),
        }
    }

    pub(crate) fn check(self) -> Result<(), PhotometryError> {
        let k = match self {
            RobustWeight::TukeyBisquare { c } => c,
            RobustWeight::Huber { t } => t,
        };
        if k.is_finite() && k > 0.0 {
            Ok(())
        } else {
            Err(PhotometryError::InvalidOption(format!(
                "robust tuning constant must be a positive number, got {k}"
            )))
        }
    }
}

/// Result of a whole-session straight-line fit.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct LineFit {
    pub intercept: f64,
    pub slope: f64,
    /// 1 − Σ(signal − F̂)² / Σ(signal − mean)², unweighted, also for IRLS (a QC figure: how
    /// much of the signal's variance the control explains).
    pub r_squared: f64,
    /// Reweighting rounds (0 for OLS).
    pub iterations: usize,
    /// False when IRLS stopped at its iteration cap before the fit settled.
    pub converged: bool,
    /// Final robust scale (MAD/0.6745 of the residuals); `None` for OLS.
    pub robust_scale: Option<f64>,
}

/// Weighted regression sums on data shifted by a reference point, so one pass suffices without
/// the cancellation of raw sums (photometry sits on a large offset).
#[derive(Debug, Clone, Copy, Default)]
pub(crate) struct Sums {
    w: f64,
    x: f64,
    y: f64,
    xx: f64,
    xy: f64,
    yy: f64,
}

/// Centred moments of a [`Sums`]: weight, means, and centred sums of squares and products.
#[derive(Debug, Clone, Copy)]
pub(crate) struct Moments {
    pub w: f64,
    pub mx: f64,
    pub my: f64,
    pub sxx: f64,
    pub sxy: f64,
    pub syy: f64,
}

impl Sums {
    #[inline]
    pub fn add(&mut self, w: f64, x: f64, y: f64) {
        let wx = w * x;
        let wy = w * y;
        self.w += w;
        self.x += wx;
        self.y += wy;
        self.xx += wx * x;
        self.xy += wx * y;
        self.yy += wy * y;
    }

    #[inline]
    pub fn remove(&mut self, w: f64, x: f64, y: f64) {
        self.add(-w, x, y);
    }

    #[inline]
    pub fn moments(&self) -> Moments {
        let mx = self.x / self.w;
        let my = self.y / self.w;
        Moments {
            w: self.w,
            mx,
            my,
            sxx: (self.xx - self.x * mx).max(0.0),
            sxy: self.xy - self.x * my,
            syy: (self.yy - self.y * my).max(0.0),
        }
    }
}

impl Moments {
    /// Least-squares (intercept, slope) in the shifted frame; `None` when x has no spread
    /// relative to `x_scale` (the slope would be noise divided by rounding error).
    #[inline]
    pub fn line(&self, x_scale: f64) -> Option<(f64, f64)> {
        let var = self.sxx / self.w;
        if !(self.w > 0.0) || !(var > (1e-12 * x_scale) * (1e-12 * x_scale)) {
            return None;
        }
        let b = self.sxy / self.sxx;
        Some((self.my - b * self.mx, b))
    }

    /// Σ(y − a − b·x)² over the (unweighted) data these moments summarise, for any line.
    pub fn ss_res(&self, a: f64, b: f64) -> f64 {
        let off = self.my - a - b * self.mx;
        (self.syy - 2.0 * b * self.sxy + b * b * self.sxx + self.w * off * off).max(0.0)
    }
}

/// The shift used for the one-pass sums: the first sample of each channel.
#[derive(Debug, Clone, Copy)]
pub(crate) struct Frame {
    pub x0: f64,
    pub y0: f64,
    /// Typical size of the control values, for the flatness test.
    pub x_scale: f64,
}

impl Frame {
    pub fn new(control: &[f64], signal: &[f64]) -> Frame {
        let x0 = control[0];
        Frame {
            x0,
            y0: signal[0],
            x_scale: x0.abs().max(f64::MIN_POSITIVE),
        }
    }

    /// Convert a shifted-frame line back to raw units.
    #[inline]
    pub fn unshift(&self, a: f64, b: f64) -> (f64, f64) {
        (self.y0 + a - b * self.x0, b)
    }
}

fn flat_control() -> PhotometryError {
    PhotometryError::FlatChannel {
        channel: "control",
        hint: "a constant control explains nothing; preprocess without the control \
               (bleaching detrend) instead",
    }
}

/// Unweighted moments of the whole session, the base of OLS and of every R².
pub(crate) fn session_moments(control: &[f64], signal: &[f64], f: &Frame) -> Moments {
    let mut s = Sums::default();
    for (&x, &y) in control.iter().zip(signal) {
        s.add(1.0, x - f.x0, y - f.y0);
    }
    s.moments()
}

/// Ordinary least squares of signal on control over the whole session (one pass).
pub fn ols(control: &[f64], signal: &[f64]) -> Result<LineFit, PhotometryError> {
    let f = Frame::new(control, signal);
    let m = session_moments(control, signal, &f);
    let (a, b) = m.line(f.x_scale).ok_or_else(flat_control)?;
    let (intercept, slope) = f.unshift(a, b);
    Ok(LineFit {
        intercept,
        slope,
        r_squared: 1.0 - m.ss_res(a, b) / m.syy,
        iterations: 0,
        converged: true,
        robust_scale: None,
    })
}

/// Median of a buffer, reordering it (mean of the two middle values for an even count, as
/// numpy does).
pub fn median_of(v: &mut [f64]) -> f64 {
    let n = v.len();
    let mid = n / 2;
    let (lower, m, _) = v.select_nth_unstable_by(mid, f64::total_cmp);
    let upper = *m;
    if n % 2 == 1 {
        upper
    } else {
        let below = lower.iter().copied().fold(f64::NEG_INFINITY, f64::max);
        0.5 * (below + upper)
    }
}

/// Iteration limits for IRLS.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct IrlsLimits {
    pub max_iter: usize,
    /// Stop when the fitted line moves by less than `tol` robust scales anywhere on the
    /// observed control range.
    pub tol: f64,
}

impl Default for IrlsLimits {
    fn default() -> Self {
        IrlsLimits {
            max_iter: 50,
            tol: 1e-10,
        }
    }
}

/// IRLS fit of signal on control: start from OLS; each round takes the robust scale
/// s = median|r|/0.6745 of the current residuals, weights w = ψ(r/s)/(r/s), and solves the
/// weighted least squares. This is the iteration of statsmodels' `RLM.fit` with `scale_est =
/// "mad"` (Huber 1981; Holland & Welsch 1977), so the fixed points agree. `scratch` must
/// hold as many values as the signal (the median needs a reorderable copy); the caller can
/// lend the output buffer.
pub fn irls(
    control: &[f64],
    signal: &[f64],
    weight: RobustWeight,
    limits: IrlsLimits,
    scratch: &mut [f64],
) -> Result<LineFit, PhotometryError> {
    weight.check()?;
    let f = Frame::new(control, signal);
    let base = session_moments(control, signal, &f);
    let (mut a, mut b) = base.line(f.x_scale).ok_or_else(flat_control)?;
    let (x_lo, x_hi) = control
        .iter()
        .fold((f64::INFINITY, f64::NEG_INFINITY), |(lo, hi), &x| {
            (lo.min(x), hi.max(x))
        });
    let (x_lo, x_hi) = (x_lo - f.x0, x_hi - f.x0);
    let scratch = &mut scratch[..signal.len()];
    let mut scale = 0.0;
    let mut iterations = 0;
    let mut converged = false;
    while iterations < limits.max_iter {
        for ((r, &x), &y) in scratch.iter_mut().zip(control).zip(signal) {
            *r = ((y - f.y0) - a - b * (x - f.x0)).abs();
        }
        scale = median_of(scratch) / MAD_TO_SIGMA;
        if !(scale > 0.0) {
            // Over half the samples sit exactly on the line: nothing left to reweight.
            converged = true;
            break;
        }
        let inv = 1.0 / scale;
        let mut s = Sums::default();
        for (&x, &y) in control.iter().zip(signal) {
            let (xs, ys) = (x - f.x0, y - f.y0);
            let w = weight.weight((ys - a - b * xs) * inv);
            s.add(w, xs, ys);
        }
        let (a_new, b_new) = s.moments().line(f.x_scale).ok_or_else(|| {
            PhotometryError::RobustFitFailed(
                "every sample was weighted out (the control does not follow the signal)".into(),
            )
        })?;
        iterations += 1;
        let moved = ((a_new - a) + (b_new - b) * x_lo)
            .abs()
            .max(((a_new - a) + (b_new - b) * x_hi).abs());
        a = a_new;
        b = b_new;
        if moved <= limits.tol * scale {
            converged = true;
            break;
        }
    }
    let (intercept, slope) = f.unshift(a, b);
    Ok(LineFit {
        intercept,
        slope,
        r_squared: 1.0 - base.ss_res(a, b) / base.syy,
        iterations,
        converged,
        robust_scale: Some(scale),
    })
}

/// Summary of a sliding-window fit: the coefficients vary along the session.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct SlidingFit {
    pub window_s: f64,
    pub slope_min: f64,
    pub slope_max: f64,
    /// Sample-weighted mean slope and intercept over the session.
    pub slope_mean: f64,
    pub intercept_mean: f64,
    /// Unweighted R² of the fitted control against the signal over the whole session.
    pub r_squared: f64,
    pub iterations: usize,
    pub converged: bool,
    pub robust_scale: Option<f64>,
}

/// Running regression: for each sample i, the line fitted to the samples whose time lies within
/// ±window_s/2 of time[i] (shorter at the session edges), evaluated at control[i] and written to
/// `fitted[i]`. Two pointers keep the window sums, so the cost is O(n) whatever the window and
/// irregular sampling is handled. With `weights`, a weighted fit (one IRLS round).
/// Returns (slope min, slope max, slope sum, intercept sum).
fn running_fit(
    time: &[f64],
    control: &[f64],
    signal: &[f64],
    window_s: f64,
    weights: Option<&[f64]>,
    f: &Frame,
    fitted: &mut [f64],
) -> Result<(f64, f64, f64, f64), PhotometryError> {
    let n = signal.len();
    let half = 0.5 * window_s;
    let w_at = |k: usize| weights.map_or(1.0, |w| w[k]);
    let mut s = Sums::default();
    let (mut lo, mut hi) = (0usize, 0usize);
    let (mut b_min, mut b_max, mut b_sum, mut a_sum) = (f64::INFINITY, f64::NEG_INFINITY, 0.0, 0.0);
    for i in 0..n {
        let t = time[i];
        while hi < n && time[hi] <= t + half {
            s.add(w_at(hi), control[hi] - f.x0, signal[hi] - f.y0);
            hi += 1;
        }
        while time[lo] < t - half {
            s.remove(w_at(lo), control[lo] - f.x0, signal[lo] - f.y0);
            lo += 1;
        }
        let (a, b) = s
            .moments()
            .line(f.x_scale)
            .ok_or(PhotometryError::FlatWindow {
                window_s,
                time_s: t,
                robust: weights.is_some(),
            })?;
        b_min = b_min.min(b);
        b_max = b_max.max(b);
        b_sum += b;
        a_sum += a;
        fitted[i] = f.y0 + a + b * (control[i] - f.x0);
    }
    Ok((b_min, b_max, b_sum, a_sum))
}

/// Sliding-window fit of the control to the signal; F̂ is written to `fitted`. With `robust`,
/// IRLS rounds as in [`irls`], the robust scale taken over the whole session and `weights`
/// (n values) holding the current weights.
pub fn sliding(
    time: &[f64],
    control: &[f64],
    signal: &[f64],
    window_s: f64,
    robust: Option<(RobustWeight, IrlsLimits, &mut Vec<f64>)>,
    fitted: &mut [f64],
) -> Result<SlidingFit, PhotometryError> {
    if !(window_s.is_finite() && window_s > 0.0) {
        return Err(PhotometryError::InvalidOption(format!(
            "sliding window must be a positive number of seconds, got {window_s}"
        )));
    }
    let n = signal.len();
    let f = Frame::new(control, signal);
    let fitted = &mut fitted[..n];
    let mut sums = running_fit(time, control, signal, window_s, None, &f, fitted)?;
    let mut iterations = 0;
    let mut converged = true;
    let mut robust_scale = None;
    if let Some((weight, limits, weights)) = robust {
        weight.check()?;
        converged = false;
        weights.clear();
        weights.resize(n, 0.0);
        // The weights must stay fixed during a pass (the window reads them ahead and behind),
        // so the convergence test keeps the previous F̂ in its own buffer.
        let mut previous = vec![0.0; n];
        while iterations < limits.max_iter {
            for ((w, &y), &fh) in weights.iter_mut().zip(signal).zip(fitted.iter()) {
                *w = (y - fh).abs();
            }
            let scale = median_of(weights) / MAD_TO_SIGMA;
            robust_scale = Some(scale);
            if !(scale > 0.0) {
                converged = true;
                break;
            }
            let inv = 1.0 / scale;
            for ((w, &y), &fh) in weights.iter_mut().zip(signal).zip(fitted.iter()) {
                *w = weight.weight((y - fh) * inv);
            }
            previous.copy_from_slice(fitted);
            sums = running_fit(time, control, signal, window_s, Some(weights), &f, fitted)?;
            iterations += 1;
            let moved = fitted
                .iter()
                .zip(&previous)
                .fold(0.0f64, |m, (new, old)| m.max((new - old).abs()));
            if moved <= limits.tol * scale {
                converged = true;
                break;
            }
        }
    }
    let base = session_moments(control, signal, &f);
    let ss_res: f64 = signal
        .iter()
        .zip(fitted.iter())
        .map(|(y, fh)| (y - fh) * (y - fh))
        .sum();
    let (b_min, b_max, b_sum, a_sum) = sums;
    let (intercept_mean, slope_mean) = f.unshift(a_sum / n as f64, b_sum / n as f64);
    Ok(SlidingFit {
        window_s,
        slope_min: b_min,
        slope_max: b_max,
        slope_mean,
        intercept_mean,
        r_squared: 1.0 - ss_res / base.syy,
        iterations,
        converged,
        robust_scale,
    })
}

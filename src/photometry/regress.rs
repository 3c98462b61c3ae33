//! Whole-session straight-line fits of the control channel to the signal, F̂ = a + b·control:
//! ordinary least squares and iteratively reweighted least squares (IRLS) with a robust weight;
//! also the one-pass regression sums that `sliding` reuses.
//!
//! Every fit is a handful of linear passes over the samples and allocates nothing of size n
//! except a caller-provided scratch buffer (the robust scale needs a median).

use super::median::{median_abs, Bracket};
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

    fn merged(self, o: Sums) -> Sums {
        Sums {
            w: self.w + o.w,
            x: self.x + o.x,
            y: self.y + o.y,
            xx: self.xx + o.xx,
            xy: self.xy + o.xy,
            yy: self.yy + o.yy,
        }
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
        // Written so that NaN sums also count as "no spread".
        let spread = self.w > 0.0 && var > (1e-12 * x_scale) * (1e-12 * x_scale);
        if !spread {
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

/// Weighted sums over the whole session in the shifted frame; `weight(xs, ys)` sees shifted
/// values. Four interleaved partial sums break the add-latency chain (about 2× faster on long
/// sessions) at the cost of a slightly different rounding order.
#[inline(always)]
fn accumulate(
    control: &[f64],
    signal: &[f64],
    f: &Frame,
    weight: impl Fn(f64, f64) -> f64,
) -> Sums {
    let mut lanes = [Sums::default(); 4];
    let mut xc = control.chunks_exact(4);
    let mut yc = signal.chunks_exact(4);
    for (xs, ys) in (&mut xc).zip(&mut yc) {
        for k in 0..4 {
            let (x, y) = (xs[k] - f.x0, ys[k] - f.y0);
            lanes[k].add(weight(x, y), x, y);
        }
    }
    for (&x, &y) in xc.remainder().iter().zip(yc.remainder()) {
        let (x, y) = (x - f.x0, y - f.y0);
        lanes[0].add(weight(x, y), x, y);
    }
    let [a, b, c, d] = lanes;
    a.merged(b).merged(c.merged(d))
}

/// Unweighted moments of the whole session, the base of OLS and of every R².
pub(crate) fn session_moments(control: &[f64], signal: &[f64], f: &Frame) -> Moments {
    accumulate(control, signal, f, |_, _| 1.0).moments()
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

/// One IRLS round over the samples: weighted sums for the next line, and the bracketed median
/// of |r| for the next scale. `line` is (a, b, 1/scale) in the shifted frame. Generic over the
/// weight so each weight function gets its own loop with the choice made outside it.
#[inline(never)]
fn fused_pass(
    control: &[f64],
    signal: &[f64],
    f: &Frame,
    (a, b, inv): (f64, f64, f64),
    weight: impl Fn(f64) -> f64,
    br: &mut Bracket,
    scratch: &mut [f64],
) -> Sums {
    // Locals and two interleaved partial sums: the loop is bound by the latency of its
    // accumulators, not by arithmetic.
    let mut local = *br;
    let mut lanes = [Sums::default(); 2];
    let mut xc = control.chunks_exact(2);
    let mut yc = signal.chunks_exact(2);
    for (xs, ys) in (&mut xc).zip(&mut yc) {
        for k in 0..2 {
            let (xs, ys) = (xs[k] - f.x0, ys[k] - f.y0);
            let r = ys - a - b * xs;
            lanes[k].add(weight(r * inv), xs, ys);
            local.push(r.abs(), scratch);
        }
    }
    for (&x, &y) in xc.remainder().iter().zip(yc.remainder()) {
        let (xs, ys) = (x - f.x0, y - f.y0);
        let r = ys - a - b * xs;
        lanes[0].add(weight(r * inv), xs, ys);
        local.push(r.abs(), scratch);
    }
    *br = local;
    lanes[0].merged(lanes[1])
}

/// IRLS fit of signal on control: start from OLS; each round weights the samples by
/// w = ψ(r/s)/(r/s) with s = median|r|/0.6745 the robust scale, and solves the weighted least
/// squares. Its fixed point is that of statsmodels' `RLM.fit` with `scale_est = "mad"` (Huber
/// 1981; Holland & Welsch 1977), which the fixtures check. To read the samples once per round
/// rather than twice, the scale used in a round is that of the previous round's line (the
/// first round's from a subsample); at the fixed point the two coincide, and convergence
/// requires both line and scale to settle.
/// `scratch` must hold as many values as the signal; the caller can lend the output buffer.
pub fn irls(
    control: &[f64],
    signal: &[f64],
    weight: RobustWeight,
    limits: IrlsLimits,
    scratch: &mut [f64],
) -> Result<LineFit, PhotometryError> {
    weight.check()?;
    let n = signal.len();
    let f = Frame::new(control, signal);
    let base = session_moments(control, signal, &f);
    let (mut a, mut b) = base.line(f.x_scale).ok_or_else(flat_control)?;
    let (x_lo, x_hi) = control
        .iter()
        .fold((f64::INFINITY, f64::NEG_INFINITY), |(lo, hi), &x| {
            (lo.min(x), hi.max(x))
        });
    let (x_lo, x_hi) = (x_lo - f.x0, x_hi - f.x0);
    let scratch = &mut scratch[..n];
    let abs_residual =
        |a: f64, b: f64| move |i: usize| ((signal[i] - f.y0) - a - b * (control[i] - f.x0)).abs();
    // The first round only needs a rough scale (its own pass yields the exact one): take the
    // median over at most ~4096 evenly spaced samples.
    let stride = (n / 4096).max(1);
    let rough = n.div_ceil(stride);
    let mut scale =
        median_abs(rough, |k| abs_residual(a, b)(k * stride), scratch, None) / MAD_TO_SIGMA;
    let mut iterations = 0;
    let mut converged = false;
    // Bracket half-width for the first exact median: the rough scale is within a few %.
    let mut width = 0.1;
    while iterations < limits.max_iter {
        if scale <= 0.0 {
            // Over half the samples sit exactly on the line: nothing left to reweight.
            converged = true;
            break;
        }
        let mut br = Bracket::around(scale * MAD_TO_SIGMA, width);
        let line = (a, b, 1.0 / scale);
        let sums = match weight {
            RobustWeight::TukeyBisquare { .. } => fused_pass(
                control,
                signal,
                &f,
                line,
                |u| weight.weight(u),
                &mut br,
                scratch,
            ),
            RobustWeight::Huber { .. } => fused_pass(
                control,
                signal,
                &f,
                line,
                |u| weight.weight(u),
                &mut br,
                scratch,
            ),
        };
        let here = match br.median(n, scratch) {
            Some(m) => m,
            None => median_abs(n, abs_residual(a, b), scratch, None),
        } / MAD_TO_SIGMA;
        let (a_new, b_new) = sums.moments().line(f.x_scale).ok_or_else(|| {
            PhotometryError::RobustFitFailed(
                "every sample was weighted out (the control does not follow the signal)".into(),
            )
        })?;
        iterations += 1;
        let moved = ((a_new - a) + (b_new - b) * x_lo)
            .abs()
            .max(((a_new - a) + (b_new - b) * x_hi).abs());
        let scale_moved = (here - scale).abs();
        // Each |r| moves by at most `moved` when the line moves, so the next median lies
        // within ±moved of this one: a bracket that cannot miss (up to rounding).
        width = (1.01 * moved / (here * MAD_TO_SIGMA) + 1e-6).min(1.0);
        (a, b, scale) = (a_new, b_new, here);
        if moved <= limits.tol * scale && scale_moved <= limits.tol * scale {
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

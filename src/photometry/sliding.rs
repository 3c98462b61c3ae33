//! Sliding-window (running) regression of the control on the signal, for long sessions whose
//! coupling drifts: each sample gets its own line, fitted to the samples within ±window/2.

use super::median::median_abs;
use super::regress::{session_moments, Frame, IrlsLimits, RobustWeight, Sums, MAD_TO_SIGMA};
use super::PhotometryError;

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
            let hint = robust_scale.map(|s| s * MAD_TO_SIGMA);
            let abs_residual = |i: usize| (signal[i] - fitted[i]).abs();
            let scale = median_abs(n, abs_residual, weights, hint) / MAD_TO_SIGMA;
            robust_scale = Some(scale);
            if scale <= 0.0 {
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

//! The photometry rules: control deflections within a trial (`control_motion`), a poor
//! session-level control fit (`control_fit_poor`), and saturated, stuck or missing samples
//! (`signal_clipped`).
//!
//! Trial windows run from `from_s` after the alignment time to `to_s` after the trial's last
//! event, found by binary search on `time_s`, so a session costs one pass for its noise and
//! drift estimates plus O(window) per trial. `control_fit_poor` judges the least-squares R²
//! of the control line, the upper bound of what any straight-line control fit (the fitter's
//! robust one included) explains: if even that is low, the control does not track the signal.

use super::config::{ControlFitPoor, ControlMotion, SignalClipped};
use super::{align, last_event, median_of, num, RuleSet, Suggestion};
use crate::data::{Photometry, Session, Trial};

pub(super) fn suggest(
    session: &Session,
    p: &Photometry,
    rules: &RuleSet,
    out: &mut Vec<Suggestion>,
) {
    let n = p.time_s.len().min(p.signal.len());
    if n < 3
        || p.control
            .as_ref()
            .is_some_and(|c| c.len() != p.time_s.len())
    {
        return; // `check` reports malformed recordings
    }
    if rules.control_fit_poor.enabled {
        control_fit_poor(session, p, &rules.control_fit_poor, out);
    }
    if let (true, Some(control)) = (rules.control_motion.enabled, p.control.as_deref()) {
        control_motion(session, &p.time_s, control, &rules.control_motion, out);
    }
    if rules.signal_clipped.enabled {
        signal_clipped(session, p, &rules.signal_clipped, out);
    }
}

/// Sample indices of the trial window [t0 + from_s, last event + to_s).
fn window(
    session: &Session,
    trial: &Trial,
    time: &[f64],
    from_s: f64,
    to_s: f64,
) -> Option<(f64, usize, usize)> {
    let t0 = align(trial)?;
    let end = last_event(session, trial)? + to_s;
    let a = time.partition_point(|&t| t < t0 + from_s);
    let b = a + time[a..].partition_point(|&t| t < end);
    Some((t0, a, b))
}

/// Robust SD of sample-to-sample noise: 1.4826·MAD of first differences / √2.
fn noise_sd(x: &[f64]) -> f64 {
    let mut d: Vec<f64> = x.windows(2).map(|w| w[1] - w[0]).collect();
    if d.is_empty() {
        return 0.0;
    }
    let m = median_of(&mut d);
    d.iter_mut().for_each(|v| *v = (*v - m).abs());
    1.4826 * median_of(&mut d) / std::f64::consts::SQRT_2
}

fn control_motion(
    session: &Session,
    time: &[f64],
    control: &[f64],
    p: &ControlMotion,
    out: &mut Vec<Suggestion>,
) {
    let sd = noise_sd(control);
    let mut scratch = Vec::new();
    for trial in &session.trials {
        let Some((t0, a, b)) = window(session, trial, time, p.from_s, p.to_s) else {
            continue;
        };
        if b - a < 3 {
            continue;
        }
        scratch.clear();
        scratch.extend_from_slice(&control[a..b]);
        let level = median_of(&mut scratch);
        let (at, dev) = (a..b)
            .map(|j| (j, control[j] - level))
            .max_by(|x, y| x.1.abs().total_cmp(&y.1.abs()))
            .expect("window not empty");
        let limit = (p.min_deflection * level.abs()).max(p.k * sd);
        if dev.abs() > limit {
            let pct = 100.0 * dev / level.abs().max(f64::MIN_POSITIVE);
            out.push(Suggestion {
                trial: trial.number,
                rule: "control_motion",
                reason: format!(
                    "control {} by {} % of its level at {} s after onset (limit {} %, {} noise SDs)",
                    if dev < 0.0 { "dips" } else { "jumps" },
                    num(pct.abs(), 1),
                    num(time[at] - t0, 2),
                    num(100.0 * limit / level.abs().max(f64::MIN_POSITIVE), 1),
                    num(dev.abs() / sd.max(f64::MIN_POSITIVE), 0)
                ),
            });
        }
    }
}

/// Range of 60 s block medians of the signal, as a fraction of the overall median.
fn drift(time: &[f64], signal: &[f64]) -> f64 {
    let mut medians = Vec::new();
    let mut scratch = Vec::new();
    let mut a = 0;
    while a < signal.len() {
        let end_t = time[a] + 60.0;
        let b = a + time[a..].partition_point(|&t| t < end_t).max(1);
        scratch.clear();
        scratch.extend_from_slice(&signal[a..b]);
        medians.push(median_of(&mut scratch));
        a = b;
    }
    let (lo, hi) = medians
        .iter()
        .fold((f64::INFINITY, f64::NEG_INFINITY), |(lo, hi), &m| {
            (lo.min(m), hi.max(m))
        });
    let mid = median_of(&mut medians);
    (hi - lo) / mid.abs().max(f64::MIN_POSITIVE)
}

/// R² of the least-squares line signal ≈ a + b·control: the most of the signal any control
/// fit can explain (the fitter's robust IRLS line explains at most this much). Two passes
/// over centred data, so photometry's large offset costs no precision.
fn line_r_squared(x: &[f64], y: &[f64]) -> Option<f64> {
    let n = x.len() as f64;
    let mx = x.iter().sum::<f64>() / n;
    let my = y.iter().sum::<f64>() / n;
    let (mut sxx, mut sxy, mut syy) = (0.0, 0.0, 0.0);
    for (&a, &b) in x.iter().zip(y) {
        let (dx, dy) = (a - mx, b - my);
        sxx += dx * dx;
        sxy += dx * dy;
        syy += dy * dy;
    }
    (sxx > 0.0 && syy > 0.0).then(|| sxy * sxy / (sxx * syy))
}

fn control_fit_poor(
    session: &Session,
    p: &Photometry,
    c: &ControlFitPoor,
    out: &mut Vec<Suggestion>,
) {
    let Some(control) = p.control.as_deref() else {
        return;
    };
    let drift = drift(&p.time_s, &p.signal);
    if drift < c.min_drift {
        return; // nothing for the control to explain: R² says nothing about it
    }
    let Some(r_squared) = line_r_squared(control, &p.signal) else {
        return; // a constant control is `check`'s and the fitter's to report
    };
    if r_squared >= c.min_r_squared {
        return;
    }
    let reason = format!(
        "session: the control explains {} % of a signal that drifts by {} % (limit {} %)",
        num(100.0 * r_squared, 1),
        num(100.0 * drift, 1),
        num(100.0 * c.min_r_squared, 1)
    );
    for trial in session.trials.iter().filter(|t| align(t).is_some()) {
        out.push(Suggestion {
            trial: trial.number,
            rule: "control_fit_poor",
            reason: reason.clone(),
        });
    }
}

/// Longest run of identical consecutive values in `x[a..b]`: (start, length).
fn longest_flat(x: &[f64], a: usize, b: usize) -> (usize, usize) {
    let (mut best, mut start) = ((a, 0), a);
    for j in a..b {
        if x[j] != x[start] {
            start = j;
        }
        if j + 1 - start > best.1 {
            best = (start, j + 1 - start);
        }
    }
    best
}

fn signal_clipped(session: &Session, p: &Photometry, c: &SignalClipped, out: &mut Vec<Suggestion>) {
    let time = &p.time_s;
    let mut steps: Vec<f64> = time.windows(2).map(|w| w[1] - w[0]).collect();
    let step = median_of(&mut steps);
    let max_gap = c.max_gap_factor * step;
    let (lo, hi) = p
        .signal
        .iter()
        .fold((f64::INFINITY, f64::NEG_INFINITY), |(lo, hi), &v| {
            (lo.min(v), hi.max(v))
        });
    let mut channels: Vec<(&str, &[f64])> = vec![("signal", &p.signal)];
    if let Some(ctrl) = p.control.as_deref() {
        channels.push(("control", ctrl));
    }
    for trial in &session.trials {
        let Some((t0, a, b)) = window(session, trial, time, c.from_s, c.to_s) else {
            continue;
        };
        let reason = if b == a {
            Some("no photometry samples in the trial window".to_string())
        } else {
            let flat = channels.iter().find_map(|&(name, x)| {
                let (s, len) = longest_flat(x, a, b);
                (len >= c.min_flat_samples as usize).then(|| {
                    let v = x[s];
                    let at = if name == "signal" && v == hi {
                        " (its session maximum)"
                    } else if name == "signal" && v == lo {
                        " (its session minimum)"
                    } else {
                        ""
                    };
                    format!(
                        "{name} stuck at {}{at} for {len} samples from {} s after onset",
                        num(v, 5),
                        num(time[s] - t0, 2)
                    )
                })
            });
            let end = last_event(session, trial).unwrap_or(t0) + c.to_s;
            flat.or_else(|| {
                // Include the step into the window's first sample.
                (a.max(1)..b)
                    .find(|&j| time[j] - time[j - 1] > max_gap)
                    .map(|j| {
                        format!(
                            "{} s without samples at {} s after onset (usual interval {} s)",
                            num(time[j] - time[j - 1], 3),
                            num(time[j - 1] - t0, 2),
                            num(step, 4)
                        )
                    })
            })
            .or_else(|| {
                let (first, last) = (time[a], time[b - 1]);
                if first - (t0 + c.from_s) > max_gap {
                    Some(format!(
                        "recording starts {} s after onset",
                        num(first - t0, 2)
                    ))
                } else if end - last > max_gap {
                    let when = match last - t0 {
                        d if d < 0.0 => format!("{} s before onset", num(-d, 2)),
                        d => format!("{} s after onset", num(d, 2)),
                    };
                    Some(format!(
                        "recording stops {when}, before the trial window ends"
                    ))
                } else {
                    None
                }
            })
        };
        if let Some(reason) = reason {
            out.push(Suggestion {
                trial: trial.number,
                rule: "signal_clipped",
                reason,
            });
        }
    }
}

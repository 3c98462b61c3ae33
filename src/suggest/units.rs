//! `unit_drift`: a unit whose pre-cue firing rate wanders far from its session median.
//!
//! Per unit and trial, the rate in the pre-cue window; a centred running mean over
//! `smooth_trials` trials tames Poisson noise. The spread is robust: σ = 1.4826·MAD/√2 of the
//! differences between successive trials' rates (1.4826·MAD is the consistent estimator of a
//! normal SD; differences keep a level shift from inflating it), floored at the Poisson SD of
//! the median rate so a quiet unit with a zero MAD does not flag every spike. A trial is flagged
//! when its smoothed rate is more than k standard errors (σ/√n) from the median and differs
//! by at least `min_change` of the median. A unit lost for most of a session moves the median
//! itself; the flags then land on the part where it was still there, which still shows the drift.

use super::config::UnitDrift;
use super::{align, median_of, num, Suggestion};
use crate::data::{Session, Spikes};
use crate::obs::activity::lower_bound_from;

/// One unit's finding on one trial.
struct Drift<'a> {
    unit: &'a str,
    smoothed: f64,
    median: f64,
    z: f64,
}

pub(super) fn unit_drift(
    session: &Session,
    spikes: &Spikes,
    p: &UnitDrift,
    out: &mut Vec<Suggestion>,
) {
    let trials: Vec<(i64, f64)> = session
        .trials
        .iter()
        .filter_map(|t| Some((t.number, align(t)?)))
        .collect();
    if trials.len() < 3 {
        return;
    }
    let width = p.to_s - p.from_s;
    let half = (p.smooth_trials as usize).saturating_sub(1) / 2;
    let mut per_trial: Vec<Vec<Drift<'_>>> = (0..trials.len()).map(|_| Vec::new()).collect();
    let mut rates = vec![0.0; trials.len()];
    let mut scratch = Vec::with_capacity(trials.len());
    for (unit, times) in spikes.units.iter().zip(&spikes.times) {
        // Trials run forward in time, so gallop from the previous window (a cold binary
        // search per window misses the cache on long spike trains).
        let mut hint = 0;
        for (r, &(_, t0)) in rates.iter_mut().zip(&trials) {
            let a = lower_bound_from(times, t0 + p.from_s, hint);
            let b = lower_bound_from(times, t0 + p.to_s, a);
            hint = a;
            *r = (b - a) as f64 / width;
        }
        scratch.clear();
        scratch.extend_from_slice(&rates);
        let median = median_of(&mut scratch);
        // Spread from successive differences: a lost unit is a level shift, which moves one
        // difference, while it would inflate the MAD around the median itself.
        scratch.clear();
        scratch.extend(rates.windows(2).map(|w| w[1] - w[0]));
        let centre = median_of(&mut scratch);
        scratch.iter_mut().for_each(|x| *x = (*x - centre).abs());
        let mad = median_of(&mut scratch);
        let poisson_sd = (median.max(1.0 / width) / width).sqrt();
        let sigma = (1.4826 * mad / std::f64::consts::SQRT_2).max(poisson_sd);
        // Running sum over the centred window [j − half, j + half], cut at the ends.
        let mut prefix = Vec::with_capacity(rates.len() + 1);
        prefix.push(0.0);
        for r in &rates {
            prefix.push(prefix.last().copied().unwrap_or(0.0) + r);
        }
        for (j, flags) in per_trial.iter_mut().enumerate() {
            let lo = j.saturating_sub(half);
            let hi = (j + half + 1).min(trials.len());
            let n = (hi - lo) as f64;
            let smoothed = (prefix[hi] - prefix[lo]) / n;
            let z = (smoothed - median) / (sigma / n.sqrt());
            let change = (smoothed - median).abs();
            if z.abs() > p.k && change >= p.min_change * median && change > 0.0 {
                flags.push(Drift {
                    unit,
                    smoothed,
                    median,
                    z,
                });
            }
        }
    }
    for (drifts, &(number, _)) in per_trial.iter_mut().zip(&trials) {
        if drifts.is_empty() {
            continue;
        }
        drifts.sort_by(|a, b| b.z.abs().total_cmp(&a.z.abs()));
        let mut parts: Vec<String> = drifts
            .iter()
            .take(3)
            .map(|d| {
                format!(
                    "unit {} pre-cue rate {} Hz vs session median {} Hz ({}{} robust SE)",
                    d.unit,
                    num(d.smoothed, 2),
                    num(d.median, 2),
                    if d.z > 0.0 { "+" } else { "" },
                    num(d.z, 1)
                )
            })
            .collect();
        if drifts.len() > 3 {
            parts.push(format!("and {} more units", drifts.len() - 3));
        }
        out.push(Suggestion {
            trial: number,
            rule: "unit_drift",
            reason: format!("{}; lost unit?", parts.join("; ")),
        });
    }
}

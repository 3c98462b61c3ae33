//! Activity of one session in a time window: spike rates by binary search on sorted spike
//! times, photometry means by prefix sums. Built once per session, queried per trial.

use super::{alignment_time, photometry_activity, ObsError, Signal};
use crate::data::{Session, Trial};

/// Spikes (or licks) in [lo, hi) of a sorted list, by two binary searches.
pub fn count_in(sorted: &[f64], lo: f64, hi: f64) -> usize {
    if hi <= lo {
        return 0;
    }
    let a = sorted.partition_point(|&t| t < lo);
    let b = a + sorted[a..].partition_point(|&t| t < hi);
    b - a
}

/// One session's chosen signal, ready for window queries.
#[derive(Debug, Clone)]
pub enum SessionActivity<'a> {
    /// Spike-time lists of the units averaged over (one unit, or all of them).
    Spikes { units: Vec<&'a [f64]> },
    /// Photometry sample times, activity values and their prefix sums (`prefix[i]` = sum of the
    /// first i values), so a window mean costs two binary searches.
    Photometry {
        time: &'a [f64],
        values: Vec<f64>,
        prefix: Vec<f64>,
    },
}

impl<'a> SessionActivity<'a> {
    pub fn new(session: &'a Session, signal: &Signal) -> Result<Self, ObsError> {
        match signal {
            Signal::Spikes { unit } => {
                let spikes = session
                    .spikes
                    .as_ref()
                    .filter(|s| !s.units.is_empty())
                    .ok_or_else(|| ObsError::SignalAbsent {
                        signal: "spike",
                        session: session.name.clone(),
                        hint: "no spikes.csv or no units in it".into(),
                    })?;
                let units: Vec<&[f64]> = match unit {
                    None => spikes.times.iter().map(|t| t.as_slice()).collect(),
                    Some(u) => {
                        let i = spikes.units.iter().position(|x| x == u).ok_or_else(|| {
                            ObsError::UnitNotFound {
                                unit: u.clone(),
                                session: session.name.clone(),
                                available: spikes.units.clone(),
                            }
                        })?;
                        vec![spikes.times[i].as_slice()]
                    }
                };
                Ok(SessionActivity::Spikes { units })
            }
            Signal::Photometry => {
                let ph = session
                    .photometry
                    .as_ref()
                    .filter(|p| !p.time_s.is_empty())
                    .ok_or_else(|| ObsError::SignalAbsent {
                        signal: "photometry",
                        session: session.name.clone(),
                        hint: "no photometry.csv or no samples in it".into(),
                    })?;
                let values = photometry_activity(session)?;
                Ok(SessionActivity::from_samples(&ph.time_s, values))
            }
        }
    }

    /// A continuous trace given as samples (sorted times, one value each), e.g. the raw
    /// photometry signal or any preprocessed version of it.
    pub fn from_samples(time: &'a [f64], mut values: Vec<f64>) -> Self {
        // A preprocessing step that returned a different length must not index out of bounds.
        let n = time.len().min(values.len());
        let time = &time[..n];
        values.truncate(n);
        let mut prefix = Vec::with_capacity(values.len() + 1);
        let mut acc = 0.0;
        prefix.push(acc);
        for v in &values {
            acc += v;
            prefix.push(acc);
        }
        SessionActivity::Photometry {
            time,
            values,
            prefix,
        }
    }

    /// Mean activity in [lo, hi): spikes/s averaged over the units, or the mean photometry
    /// value of the samples in the window (`None` when no sample falls in it).
    pub fn mean(&self, lo: f64, hi: f64) -> Option<f64> {
        if hi <= lo {
            return None;
        }
        match self {
            SessionActivity::Spikes { units } => {
                let n: usize = units.iter().map(|u| count_in(u, lo, hi)).sum();
                Some(n as f64 / (units.len() as f64 * (hi - lo)))
            }
            SessionActivity::Photometry { time, prefix, .. } => {
                let a = time.partition_point(|&t| t < lo);
                let b = a + time[a..].partition_point(|&t| t < hi);
                (b > a).then(|| (prefix[b] - prefix[a]) / (b - a) as f64)
            }
        }
    }

    /// Binned activity over [t0 + from_s, t0 + to_s): spikes/s per bin (mean over units), or
    /// the mean photometry value per bin — a bin holding no sample gets the value interpolated
    /// at its centre, NaN outside the recording.
    pub fn trace(&self, t0: f64, from_s: f64, to_s: f64, bin_s: f64) -> Vec<f64> {
        if !(bin_s > 0.0 && to_s > from_s && bin_s.is_finite() && t0.is_finite()) {
            return Vec::new();
        }
        let n = ((to_s - from_s) / bin_s - 1e-9).ceil().max(0.0) as usize;
        if n == 0 {
            return Vec::new();
        }
        let start = t0 + from_s;
        let end = t0 + from_s + n as f64 * bin_s;
        let bin_index = |t: f64| (((t - start) / bin_s) as usize).min(n - 1);
        match self {
            SessionActivity::Spikes { units } => {
                let mut counts = vec![0usize; n];
                for u in units {
                    let a = u.partition_point(|&t| t < start);
                    for &t in u[a..].iter().take_while(|&&t| t < end) {
                        counts[bin_index(t)] += 1;
                    }
                }
                let scale = 1.0 / (units.len() as f64 * bin_s);
                counts.into_iter().map(|c| c as f64 * scale).collect()
            }
            SessionActivity::Photometry { time, values, .. } => {
                let mut sums = vec![0.0; n];
                let mut counts = vec![0usize; n];
                let a = time.partition_point(|&t| t < start);
                for (i, &t) in time[a..].iter().enumerate().take_while(|(_, &t)| t < end) {
                    let b = bin_index(t);
                    sums[b] += values[a + i];
                    counts[b] += 1;
                }
                (0..n)
                    .map(|b| {
                        if counts[b] > 0 {
                            sums[b] / counts[b] as f64
                        } else {
                            interpolate(time, values, start + (b as f64 + 0.5) * bin_s)
                        }
                    })
                    .collect()
            }
        }
    }
}

/// Linear interpolation of (time, values) at t; NaN outside the sampled range.
fn interpolate(time: &[f64], values: &[f64], t: f64) -> f64 {
    let i = time.partition_point(|&x| x < t);
    if i == 0 || i >= time.len() {
        return if time.get(i) == Some(&t) {
            values[i]
        } else {
            f64::NAN
        };
    }
    let (t1, t2) = (time[i - 1], time[i]);
    if t2 <= t1 {
        return values[i];
    }
    values[i - 1] + (values[i] - values[i - 1]) * (t - t1) / (t2 - t1)
}

/// Binned activity aligned on the trial's alignment time (cue onset; the reward if uncued),
/// for the reviewer's trace and heat rows. Empty when the session lacks the signal or unit,
/// the trial has no alignment time, or the bins are invalid. For many trials of one session
/// build a [`SessionActivity`] once and call [`SessionActivity::trace`].
pub fn activity_trace(
    session: &Session,
    trial: &Trial,
    signal: &Signal,
    from_s: f64,
    to_s: f64,
    bin_s: f64,
) -> Vec<f64> {
    let (Ok(act), Some(t0)) = (SessionActivity::new(session, signal), alignment_time(trial)) else {
        return Vec::new();
    };
    act.trace(t0, from_s, to_s, bin_s)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn count_is_half_open() {
        let t = [0.0, 0.1, 0.2, 0.3];
        assert_eq!(count_in(&t, 0.1, 0.3), 2);
        assert_eq!(count_in(&t, 0.3, 0.1), 0);
        assert_eq!(count_in(&t, -1.0, 1.0), 4);
    }

    #[test]
    fn interpolation_inside_and_outside() {
        let t = [0.0, 1.0];
        let v = [0.0, 2.0];
        assert!((interpolate(&t, &v, 0.25) - 0.5).abs() < 1e-12);
        assert!(interpolate(&t, &v, 1.5).is_nan());
        assert_eq!(interpolate(&t, &v, 0.0), 0.0);
    }
}

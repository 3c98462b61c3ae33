//! Activity of one session in a time window: spike rates by binary search on sorted spike
//! times, photometry means by prefix sums. Built once per session, queried per trial.

use super::{alignment_time, ObsError, Signal};
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

/// First index i with `sorted[i] >= x`, galloping out from `hint` (doubling steps, then a
/// binary search in the bracket). Queries near the previous answer touch a few cache lines
/// instead of a cold binary search over a long spike train; any hint gives the right answer.
pub fn lower_bound_from(sorted: &[f64], x: f64, hint: usize) -> usize {
    let n = sorted.len();
    let h = hint.min(n);
    if h > 0 && sorted[h - 1] >= x {
        // Answer ≤ h − 1: gallop backwards, keeping sorted[hi] >= x.
        let (mut hi, mut step) = (h - 1, 1);
        loop {
            if hi < step {
                return sorted[..hi].partition_point(|&t| t < x);
            }
            let p = hi - step;
            if sorted[p] < x {
                return p + 1 + sorted[p + 1..hi].partition_point(|&t| t < x);
            }
            hi = p;
            step *= 2;
        }
    }
    // Answer ≥ h. Sweeps mostly move a few elements: look at those first (predictable
    // branches), then gallop forwards, keeping everything before lo < x.
    let near = (h + 8).min(n);
    if let Some(i) = sorted[h..near].iter().position(|&t| t >= x) {
        return h + i;
    }
    let (mut lo, mut step) = (near, 1);
    loop {
        let p = lo + step;
        if p >= n {
            return lo + sorted[lo..].partition_point(|&t| t < x);
        }
        if sorted[p] >= x {
            return lo + sorted[lo..p].partition_point(|&t| t < x);
        }
        lo = p + 1;
        step *= 2;
    }
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
    /// The activity `opts` measure (photometry preprocessed with `opts.control_fit`).
    pub fn measuring(session: &'a Session, opts: &super::ObsOptions) -> Result<Self, ObsError> {
        Self::with_control_fit(session, &opts.signal, opts.control_fit)
    }

    /// The activity of `signal`, photometry preprocessed with the default control fit.
    pub fn new(session: &'a Session, signal: &Signal) -> Result<Self, ObsError> {
        Self::with_control_fit(session, signal, crate::photometry::ControlFit::default())
    }

    fn with_control_fit(
        session: &'a Session,
        signal: &Signal,
        control_fit: crate::photometry::ControlFit,
    ) -> Result<Self, ObsError> {
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
                let values =
                    super::photometry::photometry_processed_with(session, control_fit)?.dff;
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

    /// Sample standard deviation of the photometry activity in [lo, hi) (n − 1 in the
    /// denominator); `None` for spikes or fewer than two samples.
    pub fn sd(&self, lo: f64, hi: f64) -> Option<f64> {
        let SessionActivity::Photometry { time, values, .. } = self else {
            return None;
        };
        let a = time.partition_point(|&t| t < lo);
        let b = a + time[a..].partition_point(|&t| t < hi);
        let v = values.get(a..b)?;
        if v.len() < 2 {
            return None;
        }
        let mean = v.iter().sum::<f64>() / v.len() as f64;
        let ss: f64 = v.iter().map(|x| (x - mean).powi(2)).sum();
        Some((ss / (v.len() - 1) as f64).sqrt())
    }

    /// [`SessionActivity::mean`] of many windows at once. Spike trains are swept one unit at a
    /// time with a cursor, so each long train streams through the cache once instead of taking
    /// a cold binary search per window (64 units × 1,000 trials: benches/obs.rs). Fastest when
    /// the windows are in time order; any order gives the same values.
    pub fn means(&self, windows: &[(f64, f64)]) -> Vec<Option<f64>> {
        match self {
            SessionActivity::Spikes { units } => {
                let mut counts = vec![0usize; windows.len()];
                for u in units {
                    let mut cursor = 0;
                    for (&(lo, hi), n) in windows.iter().zip(counts.iter_mut()) {
                        if hi > lo {
                            let a = lower_bound_from(u, lo, cursor);
                            let b = lower_bound_from(u, hi, a);
                            *n += b - a;
                            cursor = b;
                        }
                    }
                }
                let k = units.len() as f64;
                windows
                    .iter()
                    .zip(counts)
                    .map(|(&(lo, hi), n)| (hi > lo).then(|| n as f64 / (k * (hi - lo))))
                    .collect()
            }
            SessionActivity::Photometry { .. } => {
                windows.iter().map(|&(lo, hi)| self.mean(lo, hi)).collect()
            }
        }
    }

    /// Binned activity over [t0 + from_s, t0 + to_s): spikes/s per bin (mean over units), or
    /// the mean photometry value per bin — a bin holding no sample gets the value interpolated
    /// at its centre, NaN outside the recording.
    pub fn trace(&self, t0: f64, from_s: f64, to_s: f64, bin_s: f64) -> Vec<f64> {
        let mut cursors = Vec::new();
        self.trace_from(t0, from_s, to_s, bin_s, &mut cursors)
    }

    /// [`SessionActivity::trace`] for many alignment times at once (heat rows); spike trains
    /// are swept one unit at a time like [`SessionActivity::means`].
    pub fn traces(&self, t0s: &[f64], from_s: f64, to_s: f64, bin_s: f64) -> Vec<Vec<f64>> {
        match self {
            SessionActivity::Spikes { units } if units.len() > 1 => {
                let mut rows: Vec<Vec<f64>> = t0s.iter().map(|_| Vec::new()).collect();
                for u in units {
                    let one = SessionActivity::Spikes { units: vec![u] };
                    let mut cursors = Vec::new();
                    for (row, &t0) in rows.iter_mut().zip(t0s) {
                        let r = one.trace_from(t0, from_s, to_s, bin_s, &mut cursors);
                        if row.is_empty() {
                            *row = r;
                        } else {
                            row.iter_mut().zip(r).for_each(|(a, b)| *a += b);
                        }
                    }
                }
                // Each unit's trace is its rate; the population is their mean.
                let k = units.len() as f64;
                rows.iter_mut().flatten().for_each(|v| *v /= k);
                rows
            }
            _ => {
                let mut cursors = Vec::new();
                t0s.iter()
                    .map(|&t0| self.trace_from(t0, from_s, to_s, bin_s, &mut cursors))
                    .collect()
            }
        }
    }

    fn trace_from(
        &self,
        t0: f64,
        from_s: f64,
        to_s: f64,
        bin_s: f64,
        cursors: &mut Vec<usize>,
    ) -> Vec<f64> {
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
                cursors.resize(units.len(), 0);
                let mut counts = vec![0usize; n];
                for (u, c) in units.iter().zip(cursors.iter_mut()) {
                    let a = lower_bound_from(u, start, *c);
                    *c = a;
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
                cursors.resize(1, 0);
                let a = lower_bound_from(time, start, cursors[0]);
                cursors[0] = a;
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

    proptest::proptest! {
        /// Galloping from any hint finds what a plain binary search finds.
        #[test]
        fn gallop_matches_partition_point(
            mut v in proptest::collection::vec(0.0f64..100.0, 0..200),
            x in -1.0f64..101.0,
            hint in 0usize..250,
        ) {
            v.sort_by(f64::total_cmp);
            // Duplicates and exact hits matter: probe an existing value too.
            let probe = v.get(hint % (v.len() + 1)).copied().unwrap_or(x);
            for q in [x, probe] {
                proptest::prop_assert_eq!(
                    lower_bound_from(&v, q, hint),
                    v.partition_point(|&t| t < q)
                );
            }
        }
    }

    /// The batch sweeps give what one query at a time gives, in any window order.
    #[test]
    fn batch_means_and_traces_match_single_queries() {
        let trains: Vec<Vec<f64>> = (1..4)
            .map(|u| {
                (0..400)
                    .map(|i| (i * 37 % 1000) as f64 * 0.1 / u as f64)
                    .collect()
            })
            .map(|mut v: Vec<f64>| {
                v.sort_by(f64::total_cmp);
                v
            })
            .collect();
        let act = SessionActivity::Spikes {
            units: trains.iter().map(Vec::as_slice).collect(),
        };
        let windows: Vec<(f64, f64)> = (0..50)
            .map(|i| {
                (
                    (i * 13 % 50) as f64,
                    (i * 13 % 50) as f64 + 0.3 + i as f64 * 0.01,
                )
            })
            .chain([(5.0, 5.0), (7.0, 6.0)])
            .collect();
        let batch = act.means(&windows);
        for (w, b) in windows.iter().zip(&batch) {
            assert_eq!(*b, act.mean(w.0, w.1), "{w:?}");
        }
        let t0s = [3.0, 1.0, 20.5, 20.5, 40.0];
        let rows = act.traces(&t0s, -1.0, 2.0, 0.1);
        for (t0, row) in t0s.iter().zip(&rows) {
            let single = act.trace(*t0, -1.0, 2.0, 0.1);
            assert_eq!(row.len(), single.len());
            for (a, b) in row.iter().zip(&single) {
                assert!((a - b).abs() < 1e-9, "t0 {t0}: {a} vs {b}");
            }
        }
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

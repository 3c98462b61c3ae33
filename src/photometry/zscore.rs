//! z-scoring a preprocessed trace: against each trial's own pre-cue baseline (the default), or
//! against the whole session.
//!
//! Per-trial baselines follow slow drifts the preprocessing left behind, and put every trial's
//! response in units of that trial's baseline noise (methods notes §5 step 6). The SD is the
//! sample SD (n − 1), as numpy's `std(ddof=1)`.

use super::PhotometryError;

/// Location and spread to z-score with: z = (x − mean)/sd.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct ZScale {
    pub mean: f64,
    pub sd: f64,
    /// Samples the figures came from.
    pub samples: usize,
}

impl ZScale {
    /// The identity scale (no z-scoring).
    pub const IDENTITY: ZScale = ZScale {
        mean: 0.0,
        sd: 1.0,
        samples: 0,
    };

    #[inline]
    pub fn z(&self, x: f64) -> f64 {
        (x - self.mean) / self.sd
    }
}

/// How a trace is z-scored before observations are taken from it.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum ZScoreMode {
    /// Leave the trace in its own units (ΔF/F).
    None,
    /// One mean and SD for the whole session.
    Session,
    /// Each trial against its own baseline window, `(from, to)` seconds relative to the
    /// alignment time (cue onset).
    TrialBaseline { from: f64, to: f64 },
}

impl Default for ZScoreMode {
    /// Per-trial baseline −1 s to 0 s before the cue (methods notes §5 and §6, 1 s pre-cue).
    fn default() -> Self {
        ZScoreMode::TrialBaseline {
            from: -1.0,
            to: 0.0,
        }
    }
}

impl ZScoreMode {
    pub fn name(&self) -> String {
        match self {
            ZScoreMode::None => "no z-score".into(),
            ZScoreMode::Session => "session-wide z-score".into(),
            ZScoreMode::TrialBaseline { from, to } => {
                format!("z-score to each trial's baseline [{from}, {to}) s from the cue")
            }
        }
    }
}

/// Mean and SD of `values`; needs two or more values with some spread.
fn scale_of(values: &[f64]) -> Option<ZScale> {
    let n = values.len();
    if n < 2 {
        return None;
    }
    let mean = values.iter().sum::<f64>() / n as f64;
    let ss: f64 = values.iter().map(|v| (v - mean) * (v - mean)).sum();
    let sd = (ss / (n - 1) as f64).sqrt();
    (sd > 0.0 && sd.is_finite()).then_some(ZScale {
        mean,
        sd,
        samples: n,
    })
}

/// Index range of the samples with time in [t0 + from, t0 + to) (`time` sorted).
pub fn window_indices(time: &[f64], t0: f64, from: f64, to: f64) -> std::ops::Range<usize> {
    let a = time.partition_point(|&t| t < t0 + from);
    let b = time.partition_point(|&t| t < t0 + to);
    a..b.max(a)
}

/// The z-scale of one trial: mean and SD of `trace` over the baseline window
/// [t0 + baseline.0, t0 + baseline.1) (defaults in [`ZScoreMode::default`]: (−1.0, 0.0)).
/// Apply it to the trial's samples with [`ZScale::z`].
pub fn zscore_to_baseline(
    trace: &[f64],
    time: &[f64],
    t0: f64,
    baseline: (f64, f64),
) -> Result<ZScale, PhotometryError> {
    let (from, to) = baseline;
    let forwards = from < to; // false for NaN too
    if !forwards {
        return Err(PhotometryError::InvalidOption(format!(
            "baseline window must run forwards, got ({from}, {to}) s"
        )));
    }
    let r = window_indices(time, t0, from, to);
    let samples = r.len();
    scale_of(&trace[r]).ok_or(PhotometryError::BaselineUnusable {
        t0,
        from,
        to,
        samples,
    })
}

/// The session-wide z-scale of `trace`.
pub fn zscore_session(trace: &[f64]) -> Result<ZScale, PhotometryError> {
    scale_of(trace).ok_or(PhotometryError::FlatChannel {
        channel: "preprocessed",
        hint: "a session-wide z-score needs a trace that varies",
    })
}

/// z-scales per trial under a [`ZScoreMode`], computing the session figures once.
#[derive(Debug, Clone)]
pub struct Normaliser {
    mode: ZScoreMode,
    session: Option<ZScale>,
}

impl Normaliser {
    pub fn new(mode: ZScoreMode, trace: &[f64]) -> Result<Normaliser, PhotometryError> {
        let session = match mode {
            ZScoreMode::Session => Some(zscore_session(trace)?),
            _ => None,
        };
        Ok(Normaliser { mode, session })
    }

    pub fn mode(&self) -> ZScoreMode {
        self.mode
    }

    /// The scale for the trial aligned at `t0`.
    pub fn for_trial(
        &self,
        trace: &[f64],
        time: &[f64],
        t0: f64,
    ) -> Result<ZScale, PhotometryError> {
        match self.mode {
            ZScoreMode::None => Ok(ZScale::IDENTITY),
            ZScoreMode::Session => Ok(self.session.expect("computed in new")),
            ZScoreMode::TrialBaseline { from, to } => {
                zscore_to_baseline(trace, time, t0, (from, to))
            }
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn baseline_window_is_half_open_and_uses_sample_sd() {
        // Closed form: values 1, 2, 3 → mean 2, sample SD 1.
        let time = [-1.5, -1.0, -0.5, 0.0, 0.5];
        let trace = [100.0, 1.0, 2.0, 3.0, 50.0];
        let s = zscore_to_baseline(&trace, &time, 0.5, (-1.5, 0.0)).unwrap();
        assert_eq!(s.samples, 3);
        assert!((s.mean - 2.0).abs() < 1e-15);
        assert!((s.sd - 1.0).abs() < 1e-15);
        assert!((s.z(4.0) - 2.0).abs() < 1e-15);
    }

    #[test]
    fn empty_or_flat_baseline_is_an_error_naming_the_window() {
        let time = [0.0, 1.0, 2.0, 3.0];
        let trace = [1.0, 1.0, 1.0, 5.0];
        let e = zscore_to_baseline(&trace, &time, 10.0, (-1.0, 0.0)).unwrap_err();
        assert!(e.to_string().contains("0 samples"), "{e}");
        let e = zscore_to_baseline(&trace, &time, 3.0, (-3.0, 0.0)).unwrap_err();
        assert!(e.to_string().contains("3 samples"), "{e}");
        assert!(zscore_to_baseline(&trace, &time, 3.0, (0.0, -1.0)).is_err());
    }

    #[test]
    fn session_mode_uses_one_scale_for_every_trial() {
        let time: Vec<f64> = (0..10).map(f64::from).collect();
        let trace: Vec<f64> = (0..10).map(|i| f64::from(i * i)).collect();
        let n = Normaliser::new(ZScoreMode::Session, &trace).unwrap();
        let a = n.for_trial(&trace, &time, 2.0).unwrap();
        let b = n.for_trial(&trace, &time, 8.0).unwrap();
        assert_eq!(a, b);
        assert!((a.mean - 28.5).abs() < 1e-12);
        let none = Normaliser::new(ZScoreMode::None, &trace).unwrap();
        assert_eq!(
            none.for_trial(&trace, &time, 2.0).unwrap(),
            ZScale::IDENTITY
        );
    }
}

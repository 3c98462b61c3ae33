//! The photometry activity a response is measured on: ΔF/F from [`crate::photometry`].
//!
//! Every caller (observations, traces, heat rows, the fitter) goes through
//! [`photometry_activity`] or [`photometry_processed`], so they all see the same trace. With an
//! isosbestic control the control is fitted to the signal (IRLS, Tukey bisquare, whole
//! session: the library defaults) and ΔF/F = (signal − F̂)/F̂; without one, ΔF/F is taken
//! against a fitted photobleaching curve, which cannot remove motion artifacts.
//!
//! One deviation from [`PreprocessOptions::default`]: the z-score is off
//! ([`ZScoreMode::None`]). An observation is already a window mean minus the trial's own
//! pre-cue baseline mean, in ΔF/F units; dividing by the SD of a 1 s baseline (20 samples at
//! 20 Hz) would add heavy-tailed noise to a Gaussian likelihood. The method string says so.
//!
//! Cost: one preprocessing pass per session (benches/photometry.rs: an hour at 1 kHz, 3.6 M
//! samples, targets < 200 ms; an hour at 20 Hz is 72 k samples). Build a
//! [`super::SessionActivity`] once per session — or keep the [`Processed`] from
//! [`photometry_processed`] — never per trial.

use super::ObsError;
use crate::data::{Session, Subject};
use crate::photometry::{preprocess, ControlFit, PreprocessOptions, Processed, ZScoreMode};

/// The preprocessing options the observation layer uses: the library defaults, no z-score.
pub fn obs_preprocess_options() -> PreprocessOptions {
    PreprocessOptions {
        zscore: ZScoreMode::None,
        ..PreprocessOptions::default()
    }
}

/// The session's photometry preprocessed into ΔF/F, with its method, fit and QC figures. Keep
/// it for as long as the session is shown: it costs a full pass over the recording.
pub fn photometry_processed(session: &Session) -> Result<Processed, ObsError> {
    photometry_processed_with(session, ControlFit::default())
}

/// [`photometry_processed`] with the control fitted by `fit` (`--control-fit`).
pub fn photometry_processed_with(
    session: &Session,
    fit: ControlFit,
) -> Result<Processed, ObsError> {
    let ph = session
        .photometry
        .as_ref()
        .ok_or_else(|| ObsError::SignalAbsent {
            signal: "photometry",
            session: session.name.clone(),
            hint: "no photometry.csv".into(),
        })?;
    let options = PreprocessOptions {
        fit,
        ..obs_preprocess_options()
    };
    preprocess(ph, &options).map_err(|e| {
        let what = match ph.control {
            Some(_) => "the isosbestic correction",
            None => "the photobleaching detrend (no control channel)",
        };
        // "session X has no usable photometry data (ΔF/F failed in ...: <reason>)"
        ObsError::SignalAbsent {
            signal: "usable photometry",
            session: session.name.clone(),
            hint: format!("ΔF/F could not be computed by {what}: {e}"),
        }
    })
}

/// One ΔF/F value (a fraction: 0.05 = 5 %) per photometry sample, same length and time base
/// as `time_s`.
pub fn photometry_activity(session: &Session) -> Result<Vec<f64>, ObsError> {
    photometry_processed(session).map(|p| p.dff)
}

/// How the session's photometry was turned into activity, for reports ("ΔF/F against the
/// isosbestic control fitted ... ; no z-score"), or why it could not be. Runs the
/// preprocessing: if the trace is needed too, call [`photometry_processed`] once instead.
pub fn photometry_method(session: &Session) -> String {
    photometry_method_with(session, ControlFit::default())
}

/// [`photometry_method`] with the control fitted by `fit`.
pub fn photometry_method_with(session: &Session, fit: ControlFit) -> String {
    match photometry_processed_with(session, fit) {
        Ok(p) => p.method,
        Err(e) => e.to_string(),
    }
}

/// The preprocessing of a whole subject in one line per distinct method, with the sessions
/// that used it counted: "ΔF/F against ... (8 sessions)". Sessions without photometry are
/// left out; `None` when no session has any. One preprocessing pass per session.
pub fn photometry_methods(subject: &Subject) -> Option<String> {
    photometry_methods_with(subject, ControlFit::default())
}

/// [`photometry_methods`] with the control fitted by `fit`.
pub fn photometry_methods_with(subject: &Subject, fit: ControlFit) -> Option<String> {
    let mut methods: Vec<(String, usize)> = Vec::new();
    for s in subject.sessions.iter().filter(|s| s.photometry.is_some()) {
        let m = photometry_method_with(s, fit);
        match methods.iter_mut().find(|(x, _)| *x == m) {
            Some((_, n)) => *n += 1,
            None => methods.push((m, 1)),
        }
    }
    if methods.is_empty() {
        return None;
    }
    let lines: Vec<String> = methods
        .into_iter()
        .map(|(m, n)| format!("{m} ({n} session{})", if n == 1 { "" } else { "s" }))
        .collect();
    Some(lines.join("\n"))
}

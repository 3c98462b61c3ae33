//! The photometry activity a response is measured on — the seam for preprocessing.
//!
//! Today: the raw `signal` column. The photometry work (ΔF/F with the isosbestic control fitted
//! to the signal, methods.md §5) replaces the body of [`photometry_activity`]; every caller
//! (observations, traces, heat rows, the fitter) goes through it, so nothing else changes.

use super::ObsError;
use crate::data::Session;

/// One activity value per photometry sample (same length and time base as `time_s`).
pub fn photometry_activity(session: &Session) -> Result<Vec<f64>, ObsError> {
    let ph = session
        .photometry
        .as_ref()
        .ok_or_else(|| ObsError::SignalAbsent {
            signal: "photometry",
            session: session.name.clone(),
            hint: "no photometry.csv".into(),
        })?;
    Ok(ph.signal.clone())
}

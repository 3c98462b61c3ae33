//! The saved fit, checked before anything runs on it: every field a reader uses is in range,
//! or the file and the field are named.

use super::PlanError;
use crate::fit::dataset::SensorKernel;
use crate::fit::saved::{load_saved, saved_path, SavedFit, SavedFitError};
use crate::model::TdParams;
use crate::util::fmt_f64;
use std::path::{Path, PathBuf};

/// A saved fit that passed [`CheckedFit::check`]: its model parameters ready to run.
#[derive(Debug, Clone, PartialEq)]
pub struct CheckedFit {
    pub path: PathBuf,
    pub fit: SavedFit,
    pub params: TdParams,
}

fn bad(path: &Path, field: &'static str, message: String) -> PlanError {
    PlanError::SavedFit {
        path: path.to_path_buf(),
        field,
        message,
    }
}

fn check_window(path: &Path, field: &'static str, w: Option<[f64; 2]>) -> Result<(), PlanError> {
    match w {
        Some([a, b]) if !(a.is_finite() && b.is_finite() && a < b) => Err(bad(
            path,
            field,
            format!("[{a}, {b}] is not a window (expected [start, end] seconds, start < end)"),
        )),
        _ => Ok(()),
    }
}

impl CheckedFit {
    /// The saved fit in `subject_root`: `Ok(None)` when there is none, an error naming the
    /// file (and the field) when it cannot be read or used.
    pub fn load(subject_root: &Path) -> Result<Option<CheckedFit>, PlanError> {
        match load_saved(subject_root) {
            None => Ok(None),
            Some(Err(SavedFitError::Parse { path, message })) => Err(PlanError::SavedFit {
                path,
                field: "",
                message,
            }),
            Some(Err(e)) => Err(PlanError::SavedFitRead(e.to_string())),
            Some(Ok(fit)) => Self::check(saved_path(subject_root), fit).map(Some),
        }
    }

    /// The saved fit beside `path`: in the folder itself or, for a session folder, in its
    /// subject folder.
    pub fn find(path: &Path) -> Result<Option<CheckedFit>, PlanError> {
        if let Some(f) = Self::load(path)? {
            return Ok(Some(f));
        }
        if path.join(crate::data::meta::SESSION_FILE).is_file() {
            if let Some(parent) = path.parent() {
                return Self::load(parent);
            }
        }
        Ok(None)
    }

    /// Every field a reader uses, checked: the model parameters (the ranges `trialdesk model`
    /// accepts), gain and baselines finite, windows with start < end, latency finite, a sensor
    /// kernel with 0 < rise < decay, a known signal.
    pub fn check(path: PathBuf, fit: SavedFit) -> Result<CheckedFit, PlanError> {
        let params = fit
            .td_params()
            .map_err(|e| bad(&path, e.field, e.message))?;
        if !fit.gain.is_finite() {
            return Err(bad(&path, "gain", format!("{} is not a number", fit.gain)));
        }
        if let Some(v) = fit.gain_neg.filter(|v| !v.is_finite()) {
            return Err(bad(&path, "gain_neg", format!("{v} is not a number")));
        }
        for (field, b) in [
            ("baselines.cue", fit.baselines.cue),
            ("baselines.reward", fit.baselines.reward),
        ] {
            if let Some(v) = b.filter(|v| !v.is_finite()) {
                return Err(bad(&path, field, format!("{v} is not a number")));
            }
        }
        if let Some(s) = fit
            .scale_by
            .as_deref()
            .filter(|s| crate::fit::dataset::ScaleBy::parse(s).is_none())
        {
            let msg = format!(
                "`{s}` is not known (expected subject, session, rig, unit or session-unit)"
            );
            return Err(bad(&path, "scale_by", msg));
        }
        for g in &fit.groups {
            let values = [Some(g.gain), g.gain_neg, g.baseline_cue, g.baseline_reward];
            if let Some(v) = values.into_iter().flatten().find(|v| !v.is_finite()) {
                let msg = format!("{v} is not a number (group {})", g.name);
                return Err(bad(&path, "group", msg));
            }
        }
        check_window(&path, "cue_window_s", fit.cue_window_s)?;
        check_window(&path, "reward_window_s", fit.reward_window_s)?;
        check_window(&path, "baseline_window_s", fit.baseline_window_s)?;
        if let Some(l) = fit.latency_s.filter(|l| !l.is_finite()) {
            return Err(bad(
                &path,
                "latency_s",
                format!("{l} is not a number of seconds"),
            ));
        }
        match (fit.sensor_rise_s, fit.sensor_decay_s) {
            (None, None) => {}
            (Some(rise_s), Some(decay_s)) => {
                let k = SensorKernel {
                    rise_s,
                    decay_s,
                    latency_s: 0.0,
                };
                if !k.is_valid() {
                    return Err(bad(
                        &path,
                        "sensor_rise_s",
                        format!(
                            "rise {rise_s} s / decay {decay_s} s (expected 0 < rise < decay seconds)"
                        ),
                    ));
                }
            }
            (rise, _) => {
                let field = if rise.is_some() {
                    "sensor_decay_s"
                } else {
                    "sensor_rise_s"
                };
                return Err(bad(
                    &path,
                    field,
                    "missing (a sensor kernel needs both rise and decay)".into(),
                ));
            }
        }
        if let Some(s) = fit.signal.as_deref() {
            // `licks`: fitted on anticipatory licking alone (`fit --licks only`).
            if s != "spikes" && s != "photometry" && s != "licks" {
                return Err(bad(
                    &path,
                    "signal",
                    format!("`{s}` is not known (expected spikes, photometry or licks)"),
                ));
            }
            if s == "photometry" && fit.unit.is_some() {
                return Err(bad(
                    &path,
                    "unit",
                    "a unit goes with spikes, not photometry".into(),
                ));
            }
        }
        Ok(CheckedFit { path, fit, params })
    }

    /// "csc alpha=… gamma=… lambda=… dt=… s from FILE (fitted …)" for notes and stderr.
    pub fn describe(&self) -> String {
        let p = &self.params;
        format!(
            "{} alpha={} gamma={} lambda={} dt={} s from {} (fitted {}{})",
            p.representation.name(),
            fmt_f64(p.alpha),
            fmt_f64(p.gamma),
            fmt_f64(p.lambda),
            fmt_f64(p.dt),
            self.path.display(),
            crate::text::for_text(&self.fit.fitted_at),
            if self.fit.ignore_marks {
                ", marks ignored"
            } else {
                ""
            }
        )
    }
}

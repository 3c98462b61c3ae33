//! Per-unit fitting data (`--scale-by unit` and `session-unit`): each recorded unit's own
//! responses are points, grouped by unit so that each unit gets its own gain and baselines
//! while the learning parameters stay shared. A unit contributes only the sessions it was
//! recorded in, so acute recordings (new units every day) can be fitted.

use super::dataset::{self, FitData, Groups, ScaleBy};
use crate::data::Subject;
use crate::marks::MarkState;
use crate::obs::{observe_lenient, ObsError, ObsOptions, Signal};

/// Unit ids of the subject in first-seen order (session by session, file order within).
pub fn unit_ids(subject: &Subject) -> Vec<String> {
    let mut ids: Vec<String> = Vec::new();
    let mut seen = std::collections::HashSet::new();
    for s in &subject.sessions {
        for u in s.spikes.iter().flat_map(|sp| &sp.units) {
            if seen.insert(u.as_str()) {
                ids.push(u.clone());
            }
        }
    }
    ids
}

/// The group name of unit `unit` in session `session` under `by`: the unit id (chronic), or
/// `<session>/<unit>` (acute).
pub fn group_name(by: ScaleBy, session: &str, unit: &str) -> String {
    match by {
        ScaleBy::SessionUnit => format!("{session}/{unit}"),
        _ => unit.to_string(),
    }
}

/// The unit id of a group name made by [`group_name`] (session folder names hold no `/`).
pub fn unit_of_group(by: ScaleBy, name: &str) -> &str {
    match by {
        ScaleBy::SessionUnit => name.split_once('/').map_or(name, |(_, u)| u),
        _ => name,
    }
}

/// The fitting data with one point per unit and response window, grouped per `by` (a
/// per-unit grouping), spike counts filled in for the count likelihood. Sessions without a
/// unit simply give it no points; the observation options must name spikes of every unit.
pub fn per_unit(
    subject: &Subject,
    obs: &ObsOptions,
    dt: f64,
    marks: &[MarkState],
    ignore_marks: bool,
    by: ScaleBy,
) -> Result<FitData, ObsError> {
    debug_assert!(by.per_unit());
    let ids = unit_ids(subject);
    let mut merged: Option<FitData> = None;
    let mut names: Vec<String> = Vec::new();
    let mut of_point: Vec<u32> = Vec::new();
    for id in &ids {
        let opts = ObsOptions {
            signal: Signal::Spikes {
                unit: Some(id.clone()),
            },
            ..obs.clone()
        };
        // Sessions without this unit come back unmeasured (no points); that is the design.
        let (observations, _missing) = observe_lenient(subject, &opts)?;
        let mut data = dataset::build(subject, &observations, &opts, dt, marks, ignore_marks);
        data.counts = dataset::spike_counts(&data, subject, &opts);
        let counts = data.counts.take();
        for i in 0..data.points.len() {
            let name = group_name(by, &data.session_names[data.session_of(i)], id);
            let g = match names.iter().rposition(|n| *n == name) {
                Some(g) => g,
                None => {
                    names.push(name);
                    names.len() - 1
                }
            };
            of_point.push(g as u32);
        }
        match &mut merged {
            None => {
                data.counts = counts;
                merged = Some(data);
            }
            Some(m) => {
                m.points.append(&mut data.points);
                match (&mut m.counts, counts) {
                    (Some(all), Some(mut c)) => all.append(&mut c),
                    _ => m.counts = None,
                }
            }
        }
    }
    let mut data = merged.ok_or_else(|| ObsError::SignalAbsent {
        signal: "spikes",
        session: subject.root.display().to_string(),
        hint: "no units in any spikes.csv: a fit per unit needs units".into(),
    })?;
    data.groups = Some(Groups {
        by,
        names,
        of_point,
    });
    Ok(data)
}

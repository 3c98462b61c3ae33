//! Observed vs predicted, trial by trial: one panel per response window (cue, reward), the
//! observed responses as dots (excluded trials hollow and grey: the model still ran over
//! them, they just left the likelihood) and the fitted prediction as small black dots (a
//! line would zig-zag: one window mixes rewarded, omission and uncued trials).

use super::panel::{self, Panel, Series, GUIDE, PALETTE};
use super::{with_title, PlotError};
use crate::fit::{FitData, WindowKind};
use plotters::prelude::*;
use std::collections::HashMap;

/// Colour of the prediction dots (tests find them by it).
pub const PREDICTED: RGBColor = RGBColor(0, 0, 0);
/// Colour of included observations.
pub const OBSERVED: RGBColor = PALETTE[0];

/// One row of the fitter's `trials.csv`.
#[derive(Debug, Clone, PartialEq)]
pub struct FitTrialRow {
    pub session: String,
    pub trial: i64,
    pub window: WindowKind,
    pub observed: f64,
    pub predicted: f64,
    pub excluded: bool,
}

/// The rows `trials.csv` would hold for these fitting data and predictions.
pub fn rows_from(data: &FitData, predicted: &[f64]) -> Vec<FitTrialRow> {
    data.points
        .iter()
        .zip(predicted)
        .map(|(p, &pred)| {
            let (session, trial) = data.label(p.span);
            FitTrialRow {
                session: session.to_string(),
                trial,
                window: p.kind,
                observed: p.observed,
                predicted: pred,
                excluded: p.excluded,
            }
        })
        .collect()
}

/// x position of every row: 1-based position of its (session, trial) in first-seen order, so
/// the cue and reward panels share one trial axis; and the session boundaries.
fn positions(rows: &[FitTrialRow]) -> (Vec<f64>, Vec<f64>) {
    let mut index: HashMap<(&str, i64), usize> = HashMap::new();
    let mut boundaries = Vec::new();
    let mut last_session: Option<&str> = None;
    let xs = rows
        .iter()
        .map(|r| {
            let next = index.len() + 1;
            let x = *index
                .entry((r.session.as_str(), r.trial))
                .or_insert_with(|| {
                    if last_session.is_some_and(|s| s != r.session) {
                        boundaries.push(next as f64 - 0.5);
                    }
                    last_session = Some(r.session.as_str());
                    next
                });
            x as f64
        })
        .collect();
    (xs, boundaries)
}

/// The picture for these rows; `title` names the subject and the model.
pub fn fit_trials(title: &str, rows: &[FitTrialRow], unit: &str) -> Result<String, PlotError> {
    let (xs, boundaries) = positions(rows);
    let mut svg = String::new();
    {
        let root = SVGBackend::with_string(&mut svg, (1200, 840)).into_drawing_area();
        root.fill(&WHITE)?;
        let areas = root.split_evenly((2, 1));
        for (area, kind) in areas.iter().zip(WindowKind::ALL) {
            let mine: Vec<usize> = (0..rows.len())
                .filter(|&i| rows[i].window == kind)
                .collect();
            let pick = |excluded: bool| -> Vec<(f64, Option<f64>)> {
                mine.iter()
                    .filter(|&&i| rows[i].excluded == excluded)
                    .map(|&i| (xs[i], Some(rows[i].observed)))
                    .collect()
            };
            let dots = |mut s: Series, hollow: bool| {
                s.line = false;
                s.marker = 2;
                s.hollow = hollow;
                s
            };
            let mut predicted = Series::new(
                "predicted",
                PREDICTED,
                mine.iter()
                    .map(|&i| (xs[i], Some(rows[i].predicted)))
                    .collect(),
            );
            predicted.line = false;
            predicted.marker = 1;
            let series = [
                dots(Series::new("observed", OBSERVED, pick(false)), false),
                dots(Series::new("observed, excluded", GUIDE, pick(true)), true),
                predicted,
            ];
            panel::draw(
                area,
                &Panel {
                    title: &format!("{} window: observed and predicted", kind.name()),
                    x_desc: "trial (training order; grey lines: new session)",
                    y_desc: &format!("response ({unit}, minus baseline)"),
                    series: &series,
                    vlines: &boundaries,
                    empty_note: &format!("no {} responses were fitted", kind.name()),
                    integer_x: true,
                },
            )?;
        }
        root.present()?;
    }
    Ok(with_title(svg, &format!("Fit per trial: {title}")))
}

/// Predictions of every point at fitted parameters: its window's baseline plus gain × (model
/// δ summed over the point's bins), δ from `run`, one model pass over `data.spans` (the same
/// closed form the fitter reports; NaN where the window's baseline was not fitted).
pub fn predictions(
    data: &FitData,
    run: &crate::model::TdRun,
    gain: f64,
    baselines: [Option<f64>; 2],
) -> Vec<f64> {
    data.points
        .iter()
        .map(|p| {
            let delta = run.trial_delta(p.span);
            let end = (p.end_bin as usize).min(delta.len());
            let start = (p.first_bin as usize).min(end);
            let x: f64 = delta[start..end].iter().sum();
            baselines[p.kind.index()].map_or(f64::NAN, |b| b + gain * x)
        })
        .collect()
}

//! Learning curves: cue and reward responses and model δ, per training day (the summary's day
//! rows) and across every trial in training order.
//!
//! Per day: one series per cue (cue response), cued reward, uncued reward and omission dip,
//! beside the model δ summed over the same windows. Per trial: the same measures trial by
//! trial, with grey lines at session boundaries. Excluded trials are left out of the day
//! means by [`crate::summary::day_rows`]; per trial, the caller passes only the observations
//! it wants drawn.

use super::panel::{self, Panel, Series, PALETTE};
use super::{with_title, PlotError};
use crate::obs::{TrialKind, TrialObs, WindowDeltas};
use crate::summary::DayRow;
use plotters::prelude::*;

const WIDTH: u32 = 1200;
const PANEL_HEIGHT: u32 = 420;

/// Per-trial input: observations in training order, optionally the model's window δ sums for
/// each (same order and length; `None` for a trial the model did not place).
#[derive(Debug, Clone, Copy)]
pub struct TrialCurves<'a> {
    pub obs: &'a [TrialObs],
    pub deltas: Option<&'a [Option<WindowDeltas>]>,
    /// Unit of the responses, for the axis ("spikes/s", "ΔF/F").
    pub unit: &'a str,
}

/// Colour of the i-th cue; the reward measures follow the cues in the palette.
fn color(i: usize) -> RGBColor {
    PALETTE[i % (PALETTE.len() - 1)]
}

/// One figure of a day row.
type Measure = fn(&DayRow) -> Option<f64>;

/// Series of the day rows: observed (left panel) and model δ (right panel).
fn day_series(rows: &[DayRow]) -> (Vec<Series>, Vec<Series>) {
    let mut cue_names: Vec<&str> = Vec::new();
    for r in rows {
        for c in &r.cues {
            if !cue_names.contains(&c.cue.as_str()) {
                cue_names.push(&c.cue);
            }
        }
    }
    let day = |r: &DayRow| r.day as f64;
    let mut observed = Vec::new();
    let mut model = Vec::new();
    for (i, name) in cue_names.iter().enumerate() {
        let cue_of = |r: &DayRow| r.cues.iter().find(|c| c.cue == *name).cloned();
        observed.push(Series::new(
            format!("cue {name}"),
            color(i),
            rows.iter()
                .map(|r| (day(r), cue_of(r).and_then(|c| c.response.value)))
                .collect(),
        ));
        model.push(Series::new(
            format!("δ cue {name}"),
            color(i),
            rows.iter()
                .map(|r| {
                    let m = cue_of(r).and_then(|c| c.model_delta);
                    (day(r), m.and_then(|m| m.value))
                })
                .collect(),
        ));
    }
    let n = cue_names.len();
    let measures: [(&str, Measure, Measure); 3] = [
        (
            "reward (cued)",
            |r| r.reward_response.value,
            |r| r.model.and_then(|m| m.reward.value),
        ),
        (
            "reward (uncued)",
            |r| r.uncued_reward_response.value,
            |r| r.model.and_then(|m| m.uncued_reward.value),
        ),
        (
            "omission dip",
            |r| r.omission_dip.value,
            |r| r.model.and_then(|m| m.omission.value),
        ),
    ];
    for (j, (name, obs_of, model_of)) in measures.into_iter().enumerate() {
        observed.push(Series::new(
            name,
            color(n + j),
            rows.iter().map(|r| (day(r), obs_of(r))).collect(),
        ));
        model.push(Series::new(
            format!("δ {name}"),
            color(n + j),
            rows.iter().map(|r| (day(r), model_of(r))).collect(),
        ));
    }
    (observed, model)
}

/// Series of the per-trial observations (x = 1-based position in training order) and the
/// session boundaries (x between the last trial of a session and the first of the next).
fn trial_series(t: &TrialCurves) -> (Vec<Series>, Vec<Series>, Vec<f64>) {
    let x = |i: usize| (i + 1) as f64;
    let by_kind = |kind: TrialKind, f: &dyn Fn(usize) -> Option<f64>| -> Vec<(f64, Option<f64>)> {
        (0..t.obs.len())
            .filter(|&i| t.obs[i].kind == kind)
            .map(|i| (x(i), f(i)))
            .collect()
    };
    let delta = |i: usize| t.deltas.and_then(|d| d.get(i).copied().flatten());
    let dots = |mut s: Series| {
        // Hundreds of trials: markers alone read better than a zig-zag line.
        s.line = false;
        s.marker = 2;
        s
    };
    let observed = vec![
        dots(Series::new(
            "cue response",
            color(0),
            (0..t.obs.len())
                .filter(|&i| t.obs[i].cue.is_some())
                .map(|i| (x(i), t.obs[i].cue))
                .collect(),
        )),
        dots(Series::new(
            "reward (cued)",
            color(1),
            by_kind(TrialKind::Rewarded, &|i| t.obs[i].reward),
        )),
        dots(Series::new(
            "reward (uncued)",
            color(2),
            by_kind(TrialKind::UncuedReward, &|i| t.obs[i].reward),
        )),
        dots(Series::new(
            "omission dip",
            color(3),
            by_kind(TrialKind::Omission, &|i| t.obs[i].reward),
        )),
    ];
    let model = match t.deltas {
        None => Vec::new(),
        Some(_) => vec![
            dots(Series::new(
                "δ cue",
                color(0),
                (0..t.obs.len())
                    .filter(|&i| t.obs[i].cue.is_some())
                    .map(|i| (x(i), delta(i).and_then(|d| d.cue)))
                    .collect(),
            )),
            dots(Series::new(
                "δ reward (cued)",
                color(1),
                by_kind(TrialKind::Rewarded, &|i| delta(i).and_then(|d| d.reward)),
            )),
            dots(Series::new(
                "δ reward (uncued)",
                color(2),
                by_kind(TrialKind::UncuedReward, &|i| {
                    delta(i).and_then(|d| d.reward)
                }),
            )),
            dots(Series::new(
                "δ omission",
                color(3),
                by_kind(TrialKind::Omission, &|i| delta(i).and_then(|d| d.reward)),
            )),
        ],
    };
    let boundaries = t
        .obs
        .windows(2)
        .enumerate()
        .filter(|(_, w)| w[0].session != w[1].session)
        .map(|(i, _)| x(i) + 0.5)
        .collect();
    (observed, model, boundaries)
}

fn draw_day_row(areas: &[panel::Area], rows: &[DayRow], unit: &str) -> Result<(), PlotError> {
    let (observed, model) = day_series(rows);
    panel::draw(
        &areas[0],
        &Panel {
            title: "Responses by training day",
            x_desc: "training day",
            y_desc: &format!("response ({unit}, minus baseline)"),
            series: &observed,
            vlines: &[],
            empty_note: "no responses measured",
            integer_x: true,
        },
    )?;
    panel::draw(
        &areas[1],
        &Panel {
            title: "Model δ by training day",
            x_desc: "training day",
            y_desc: "δ summed over the window",
            series: &model,
            vlines: &[],
            empty_note: "no model δ (no saved fit: run trialdesk fit)",
            integer_x: true,
        },
    )
}

fn draw_trial_row(areas: &[panel::Area], t: &TrialCurves) -> Result<(), PlotError> {
    let (observed, model, boundaries) = trial_series(t);
    panel::draw(
        &areas[0],
        &Panel {
            title: "Responses trial by trial",
            x_desc: "trial (training order; grey lines: new session)",
            y_desc: &format!("response ({}, minus baseline)", t.unit),
            series: &observed,
            vlines: &boundaries,
            empty_note: "no responses measured",
            integer_x: true,
        },
    )?;
    panel::draw(
        &areas[1],
        &Panel {
            title: "Model δ trial by trial",
            x_desc: "trial (training order; grey lines: new session)",
            y_desc: "δ summed over the window",
            series: &model,
            vlines: &boundaries,
            empty_note: "no model δ (no saved fit: run trialdesk fit)",
            integer_x: true,
        },
    )
}

/// Both rows in one picture: per day on top, per trial below. `title` names the subject.
pub fn learning_curves(
    title: &str,
    days: &[DayRow],
    trials: &TrialCurves,
) -> Result<String, PlotError> {
    let mut svg = String::new();
    {
        let root = SVGBackend::with_string(&mut svg, (WIDTH, 2 * PANEL_HEIGHT)).into_drawing_area();
        root.fill(&WHITE)?;
        let areas = root.split_evenly((2, 2));
        draw_day_row(&areas[0..2], days, trials.unit)?;
        draw_trial_row(&areas[2..4], trials)?;
        root.present()?;
    }
    Ok(with_title(svg, &format!("Learning curves: {title}")))
}

/// The per-day row alone.
pub fn day_curves(title: &str, days: &[DayRow], unit: &str) -> Result<String, PlotError> {
    let mut svg = String::new();
    {
        let root = SVGBackend::with_string(&mut svg, (WIDTH, PANEL_HEIGHT)).into_drawing_area();
        root.fill(&WHITE)?;
        let areas = root.split_evenly((1, 2));
        draw_day_row(&areas, days, unit)?;
        root.present()?;
    }
    Ok(with_title(svg, &format!("Learning by day: {title}")))
}

/// The per-trial row alone.
pub fn trial_curves(title: &str, trials: &TrialCurves) -> Result<String, PlotError> {
    let mut svg = String::new();
    {
        let root = SVGBackend::with_string(&mut svg, (WIDTH, PANEL_HEIGHT)).into_drawing_area();
        root.fill(&WHITE)?;
        let areas = root.split_evenly((1, 2));
        draw_trial_row(&areas, trials)?;
        root.present()?;
    }
    Ok(with_title(svg, &format!("Learning by trial: {title}")))
}

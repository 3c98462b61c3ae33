//! Anticipatory licking as a readout of learned value (`fit --licks with|only`).
//!
//! The response rule of Ludvig, Sutton & Kehoe 2012 (methods.md §1.3): per model bin
//! a_k = υ·a_{k−1} + [V_{k−1} − θ]₊ from cue onset (a_{−1} = 0, V_{−1} = 0), and the lick rate
//! in bin k is b + c·(1 − υ)·a_k (so a steady value V gives b + c·[V − θ]₊): b the licking
//! that owes nothing to the cue, c licks/s per µL of value above the threshold θ. The leak υ
//! and θ are searched with the learning parameters; b and c are fitted by Poisson maximum
//! likelihood on the lick counts (identity link: the expected count of a window is
//! b·T + c·Σ(1 − υ)·a_k·dt, linear in b and c).
//!
//! The anticipation period runs from cue onset to the reward, delivered or expected (for a
//! cue that is never rewarded, as long as the longest reward delay of its session, so that
//! CS+ and CS− are compared over the same span: common practice), in whole model bins that end
//! before the delivery, so consummatory licks never count; it is cut into windows of
//! [`LICK_WINDOW_S`] whose counts follow the rise of licking through the delay.

use super::dataset::{FitData, ObsPoint, WindowKind};
use super::likelihood::WindowCount;
use super::objective::{LearnParams, Pass};
use crate::data::Subject;
use crate::marks::MarkState;
use crate::obs::activity::count_in;

/// How a fit uses licking.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default)]
pub enum LickUse {
    /// Recorded activity only (the default, as before).
    #[default]
    Off,
    /// Activity and anticipatory licking, sharing the learning parameters.
    With,
    /// Anticipatory licking alone (behaviour without recordings).
    Only,
}

impl LickUse {
    pub const ALL: [LickUse; 3] = [LickUse::Off, LickUse::With, LickUse::Only];

    pub fn name(self) -> &'static str {
        match self {
            LickUse::Off => "off",
            LickUse::With => "with",
            LickUse::Only => "only",
        }
    }

    pub fn parse(s: &str) -> Option<Self> {
        Self::ALL.into_iter().find(|u| u.name() == s)
    }
}

/// The lick observations in words, for reports.
pub const DESCRIPTION: &str = "anticipatory licks counted in 0.25 s windows from cue onset to \
     the reward (delivered or expected; for a cue never rewarded, the longest reward delay of \
     its session), read out by the rule a_k = υ·a_{k-1} + [V_{k-1} - θ]+ (Ludvig, Sutton & \
     Kehoe 2012) as b + c·(1 - υ)·a_k licks/s, Poisson counts";

/// Width of one lick window, seconds (rounded to whole model bins).
pub const LICK_WINDOW_S: f64 = 0.25;

/// The response rule's two parameters.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct LickRule {
    /// Value threshold θ, in µL of predicted reward (≥ 0).
    pub theta: f64,
    /// Leak υ per model bin, in (0, 1).
    pub upsilon: f64,
}

/// Poisson fit of the lick rate given the rule: b, c and the fit's log-likelihood.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct LickLinear {
    /// Licks/s without value (b).
    pub base_hz: f64,
    /// Licks/s per µL of value above θ (c).
    pub hz_per_ul: f64,
    pub loglik: f64,
    pub n: usize,
}

impl LickLinear {
    /// Predicted lick rate (licks/s) of a window of `exposure_s` whose predictor is `x`.
    pub fn rate(&self, x: f64, exposure_s: f64) -> f64 {
        self.base_hz + self.hz_per_ul * x / exposure_s
    }
}

/// The bins of a span's anticipation period: `0..end` (end exclusive), or `None` when the
/// trial has no cue or no licks can be anticipatory.
fn anticipation_bins(subject: &Subject, data: &FitData, span: usize) -> Option<usize> {
    let s = &data.spans[span];
    s.cue?;
    let dt = data.dt;
    let end = match (s.reward_bin, s.expected_reward_bin) {
        (Some(r), Some(e)) => r.min(e),
        (Some(r), None) => r,
        (None, Some(e)) => e,
        (None, None) => {
            let longest = crate::obs::longest_reward_delay(&subject.sessions[s.session])?;
            ((longest / dt) + 1e-9).floor() as usize
        }
    };
    (end > 0).then_some(end.min(s.n_bins))
}

/// Appends one point per lick window of every cued trial of a session with licks (observed:
/// licks/s; kind [`WindowKind::Licks`]), flagged excluded like the trial's other windows.
/// Keeps the per-point side tables (counts, kernel weights, groups) the same length. Returns
/// the number of points added.
pub fn add_lick_points(
    data: &mut FitData,
    subject: &Subject,
    marks: &[MarkState],
    ignore_marks: bool,
) -> usize {
    let per_window = ((LICK_WINDOW_S / data.dt) + 1e-9).round().max(1.0) as usize;
    let before = data.points.len();
    for si in 0..data.spans.len() {
        let s = &data.spans[si];
        let session = &subject.sessions[s.session];
        let Some(licks) = session.licks.as_deref() else {
            continue;
        };
        let Some(end) = anticipation_bins(subject, data, si) else {
            continue;
        };
        let number = session.trials[s.trial].number;
        let excluded = !ignore_marks && marks.get(s.session).is_some_and(|m| m.is_excluded(number));
        let t0 = s.t0;
        let mut first = 0;
        while first < end {
            let last = (first + per_window).min(end);
            let (lo, hi) = (t0 + first as f64 * data.dt, t0 + last as f64 * data.dt);
            let n = count_in(licks, lo, hi) as f64;
            data.points.push(ObsPoint {
                span: si,
                kind: WindowKind::Licks,
                first_bin: first as u32,
                end_bin: last as u32,
                event_bin: 0,
                event_s: t0,
                label: Some(format!(
                    "licks:{:.2}-{:.2}",
                    first as f64 * data.dt,
                    last as f64 * data.dt
                )),
                observed: n / (hi - lo),
                excluded,
            });
            if let Some(c) = data.counts.as_mut() {
                c.push(WindowCount {
                    count: n,
                    exposure: hi - lo,
                });
            }
            if let Some(w) = data.weighted.as_mut() {
                w.push(super::dataset::WeightedWindow {
                    first_bin: 0,
                    weights: Vec::new(),
                });
            }
            if let Some(g) = data.groups.as_mut() {
                g.of_point.push(0);
            }
            first = last;
        }
    }
    data.points.len() - before
}

/// A lick window's exposure (seconds) and count.
pub fn window_count(p: &ObsPoint, dt: f64) -> (f64, f64) {
    let exposure = (p.end_bin - p.first_bin) as f64 * dt;
    (exposure, (p.observed * exposure).round())
}

/// Σ_{k in window} (1 − υ)·a_k·dt for every point in `idx` that is a lick window (0 for the
/// others), indexed like `data.points`. Each span's response trace is run once.
/// The value of each bin comes from the TD pass, or for Rescorla–Wagner the trial's one value
/// in every bin.
pub fn predictors(data: &FitData, values: &Pass, rule: LickRule, idx: &[usize]) -> Vec<f64> {
    let mut out = vec![0.0; data.points.len()];
    let mut trace: Vec<f64> = Vec::new();
    let mut traced: Option<usize> = None;
    for &i in idx {
        let p = &data.points[i];
        if p.kind != WindowKind::Licks {
            continue;
        }
        if traced != Some(p.span) {
            response_trace(data, values, rule, p.span, &mut trace);
            traced = Some(p.span);
        }
        let w = &trace[p.first_bin as usize..(p.end_bin as usize).min(trace.len())];
        out[i] = w.iter().sum::<f64>() * (1.0 - rule.upsilon) * data.dt;
    }
    out
}

/// a_k of one span over its bins.
fn response_trace(data: &FitData, values: &Pass, rule: LickRule, span: usize, out: &mut Vec<f64>) {
    let n = data.spans[span].n_bins;
    out.clear();
    let mut a = 0.0;
    let mut v_prev = 0.0;
    for k in 0..n {
        a = rule.upsilon * a + (v_prev - rule.theta).max(0.0);
        out.push(a);
        v_prev = match values {
            Pass::Td(run) => run.trial_value(span).get(k).copied().unwrap_or(0.0),
            Pass::Rw(t) => t[span].value,
        };
    }
}

/// Poisson maximum likelihood of the expected counts b·T + c·x (identity link) over the lick
/// windows in `idx`, with b > 0 and c ≥ 0, by Fisher scoring (iteratively reweighted least
/// squares with weights 1/μ). `None` without lick windows.
pub fn fit_rate(data: &FitData, x: &[f64], idx: &[usize]) -> Option<LickLinear> {
    let rows: Vec<(f64, f64, f64)> = idx
        .iter()
        .filter(|&&i| data.points[i].kind == WindowKind::Licks)
        .map(|&i| {
            let (t, y) = window_count(&data.points[i], data.dt);
            (t, x[i], y)
        })
        .collect();
    fit_rate_rows(&rows)
}

/// [`fit_rate`] on (exposure, predictor, count) rows.
pub fn fit_rate_rows(rows: &[(f64, f64, f64)]) -> Option<LickLinear> {
    if rows.is_empty() {
        return None;
    }
    let total_t: f64 = rows.iter().map(|r| r.0).sum();
    let total_y: f64 = rows.iter().map(|r| r.2).sum();
    let mut b = (total_y / total_t).max(1e-6);
    let mut c = 0.0;
    for _ in 0..100 {
        let (mut a11, mut a12, mut a22, mut r1, mut r2) = (0.0, 0.0, 0.0, 0.0, 0.0);
        for &(t, x, y) in rows {
            let mu = (b * t + c * x).max(1e-12);
            let w = 1.0 / mu;
            a11 += w * t * t;
            a12 += w * t * x;
            a22 += w * x * x;
            r1 += w * t * y;
            r2 += w * x * y;
        }
        let det = a11 * a22 - a12 * a12;
        let (nb, nc) = if det.abs() > 1e-300 * a11.max(1.0) && a22 > 0.0 {
            ((a22 * r1 - a12 * r2) / det, (a11 * r2 - a12 * r1) / det)
        } else {
            (r1 / a11, 0.0)
        };
        // The boundary: no negative rate gain (value cannot suppress licking below b here).
        let (nb, nc) = if nc < 0.0 { (r1 / a11, 0.0) } else { (nb, nc) };
        let nb = nb.max(1e-9);
        let moved = (nb - b).abs() + (nc - c).abs();
        b = nb;
        c = nc;
        if moved <= 1e-12 * (b.abs() + c.abs() + 1e-12) {
            break;
        }
    }
    let loglik = rows
        .iter()
        .map(|&(t, x, y)| {
            let mu = (b * t + c * x).max(1e-300);
            y * mu.ln() - mu - ln_factorial(y)
        })
        .sum();
    loglik_finite(LickLinear {
        base_hz: b,
        hz_per_ul: c,
        loglik,
        n: rows.len(),
    })
}

fn loglik_finite(f: LickLinear) -> Option<LickLinear> {
    (f.loglik.is_finite() && f.base_hz.is_finite() && f.hz_per_ul.is_finite()).then_some(f)
}

/// ln(y!) of a count.
fn ln_factorial(y: f64) -> f64 {
    (2..=(y as u64)).map(|k| (k as f64).ln()).sum()
}

/// Where the search starts θ and υ: a low threshold and a leak of 0.5 per bin.
pub const START_RULE: LickRule = LickRule {
    theta: 0.1,
    upsilon: 0.5,
};

impl super::objective::Problem<'_> {
    /// The lick readout of the learner's `pass` under `rule` on the lick windows `idx`.
    pub(super) fn fit_licks(
        &self,
        pass: &Pass,
        rule: LickRule,
        idx: &[usize],
    ) -> Option<LickLinear> {
        fit_rate(self.data, &predictors(self.data, pass, rule, idx), idx)
    }

    /// Fill in the predicted lick rate (licks/s) of every lick window of `out`.
    pub(super) fn predict_licks(
        &self,
        p: &LearnParams,
        rule: LickRule,
        lick: &LickLinear,
        out: &mut [f64],
    ) {
        let all: Vec<usize> = (0..self.data.points.len()).collect();
        let x = predictors(self.data, &self.pass(p), rule, &all);
        for (i, pt) in self.data.points.iter().enumerate() {
            if pt.kind == WindowKind::Licks {
                let (exposure, _) = window_count(pt, self.data.dt);
                out[i] = lick.rate(x[i], exposure);
            }
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn rate_fit_recovers_a_known_rate_without_noise() {
        // Counts exactly at their means: b = 0.5/s, c = 3.
        let rows: Vec<(f64, f64, f64)> = (0..40)
            .map(|i| {
                let t = 0.25;
                let x = 0.01 * i as f64;
                (t, x, 0.5 * t + 3.0 * x)
            })
            .collect();
        let f = fit_rate_rows(&rows).unwrap();
        assert!((f.base_hz - 0.5).abs() < 1e-6, "{f:?}");
        assert!((f.hz_per_ul - 3.0).abs() < 1e-6, "{f:?}");
    }

    #[test]
    fn ln_factorial_of_small_counts() {
        assert_eq!(ln_factorial(0.0), 0.0);
        assert!((ln_factorial(5.0) - 120f64.ln()).abs() < 1e-12);
    }
}

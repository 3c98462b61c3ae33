//! The fitting objective: model δ summed per window → closed-form gain and baselines →
//! Gaussian log-likelihood with σ² profiled out.
//!
//! Observation model (methods.md §4, after Montague, Dayan & Sejnowski 1996): for window j of
//! kind e (cue or reward), y_j = b_e + g·x_j + ε, ε ~ N(0, σ²), with x_j the model δ summed over
//! the window's bins. One gain for both windows (one response function up to scale, Eshel et
//! al. 2016) and one baseline per window kind, since cue and reward windows sit at different
//! points of the trial and their pre-event levels need not match. For fixed learning parameters
//! this is ordinary least squares; σ̂² = RSS/n, and the profiled log-likelihood is
//! lnL = −n/2·(ln(2π·RSS/n) + 1).

use super::dataset::{FitData, WindowKind};
use super::licks::LickRule;
use super::likelihood::{self, Likelihood, WindowDeltas};
pub use super::linear::{
    aic, bic, gaussian_loglik, goodness, least_squares, GroupLinear, LinearFit,
};
use crate::model::{rw, td, FeatureSpace, Representation, TdParams};

/// A model the fitter can score.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum ModelSpec {
    Td(Representation),
    /// Trial-level Rescorla–Wagner: x = δ_cue or δ_reward of the trial.
    RescorlaWagner,
}

impl ModelSpec {
    pub fn name(&self) -> &'static str {
        match self {
            ModelSpec::Td(r) => r.name(),
            ModelSpec::RescorlaWagner => "rescorla-wagner",
        }
    }
}

/// Learning parameters in natural units (γ and λ per model bin).
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct LearnParams {
    pub alpha: f64,
    pub gamma: f64,
    pub lambda: f64,
    /// `fit --licks`: the lick response rule's threshold and leak, searched with the rest.
    pub lick: Option<LickRule>,
}

/// Bounds of the search on the logit scale: keeps α in about [6e-6, 0.99999] and γ, λ likewise,
/// where the likelihood is flat anyway, so the simplex cannot run off to infinity. (Searching
/// (0, 1) parameters on the logit scale is our choice, methods.md §4 [C], not a published
/// recipe.)
pub const Z_BOUND: f64 = 12.0;

pub fn expit(z: f64) -> f64 {
    let z = z.clamp(-Z_BOUND, Z_BOUND);
    1.0 / (1.0 + (-z).exp())
}

pub fn logit(p: f64) -> f64 {
    let p = p.clamp(1e-12, 1.0 - 1e-12);
    (p / (1.0 - p)).ln().clamp(-Z_BOUND, Z_BOUND)
}

/// What the closed-form part regresses on: window sums (Gaussian) or per-bin δ (Poisson).
enum Predictors {
    Sums(Vec<f64>),
    /// Window sums of the positive and of the negative parts of δ (asymmetric Gaussian).
    Split(Vec<f64>, Vec<f64>),
    Deltas(WindowDeltas),
}

/// One pass of the learner over every trial: TD's per-bin δ and value, or Rescorla–Wagner's
/// per-trial δ and value.
pub enum Pass {
    Td(crate::model::TdRun),
    Rw(Vec<rw::RwTrial>),
}

/// One model on one data set: maps search coordinates to δ sums and scores them.
pub struct Problem<'a> {
    pub data: &'a FitData,
    pub model: ModelSpec,
    pub fit_lambda: bool,
    /// λ when not fitted.
    pub lambda: f64,
    /// Observation model; Poisson needs `data.counts`.
    pub likelihood: Likelihood,
    /// `--asymmetric`: positive and negative δ each with its own gain.
    pub asymmetric: bool,
    /// The data hold lick windows: the lick rule's θ and υ are searched too.
    pub licks: bool,
    /// Built once per representation; every evaluation reuses it.
    space: Option<FeatureSpace>,
    observed: Vec<f64>,
    kinds: Vec<WindowKind>,
}

impl<'a> Problem<'a> {
    pub fn new(data: &'a FitData, model: ModelSpec, fit_lambda: bool, lambda: f64) -> Self {
        let space = match model {
            ModelSpec::Td(repr) => Some(FeatureSpace::new(&data.spans, data.n_cues, repr, data.dt)),
            ModelSpec::RescorlaWagner => None,
        };
        Problem {
            data,
            model,
            fit_lambda: fit_lambda && matches!(model, ModelSpec::Td(_)),
            lambda,
            likelihood: Likelihood::Gaussian,
            asymmetric: false,
            licks: data.points.iter().any(|p| p.kind == WindowKind::Licks),
            space,
            observed: data.points.iter().map(|p| p.observed).collect(),
            kinds: data.points.iter().map(|p| p.kind).collect(),
        }
    }

    /// The same problem scored by `likelihood` (Poisson only where the data carry counts).
    pub fn with_likelihood(mut self, likelihood: Likelihood) -> Self {
        self.likelihood = likelihood;
        self
    }

    /// The same problem with separate gains of positive and negative δ.
    pub fn with_asymmetry(mut self, asymmetric: bool) -> Self {
        self.asymmetric = asymmetric;
        self
    }

    pub fn has_gamma(&self) -> bool {
        matches!(self.model, ModelSpec::Td(_))
    }

    /// Number of searched coordinates: α, then γ, then λ; then the lick rule's ln θ and
    /// logit υ.
    pub fn n_free(&self) -> usize {
        self.n_learning() + 2 * usize::from(self.licks)
    }

    /// Number of learning parameters searched (α, γ, λ).
    fn n_learning(&self) -> usize {
        match self.model {
            ModelSpec::Td(_) => 2 + usize::from(self.fit_lambda),
            ModelSpec::RescorlaWagner => 1,
        }
    }

    /// Parameters counted by AIC/BIC: learning parameters, gains and baselines, σ (Gaussian),
    /// each group's own under `--scale-by`.
    pub fn n_params(&self, linear: &LinearFit) -> usize {
        self.n_free()
            + linear.n_gains()
            + linear.n_baselines()
            + usize::from(linear.likelihood == Likelihood::Gaussian && linear.has_activity())
                * linear.n_groups()
            + 2 * usize::from(linear.lick.is_some())
    }

    pub fn to_params(&self, z: &[f64]) -> LearnParams {
        LearnParams {
            alpha: expit(z[0]),
            gamma: if self.has_gamma() { expit(z[1]) } else { 0.0 },
            lambda: if self.fit_lambda {
                expit(z[2])
            } else {
                self.lambda
            },
            lick: self.licks.then(|| {
                let at = self.n_learning();
                LickRule {
                    theta: z[at].clamp(-Z_BOUND, Z_BOUND).exp(),
                    upsilon: expit(z[at + 1]),
                }
            }),
        }
    }

    pub fn to_z(&self, p: &LearnParams) -> Vec<f64> {
        let mut z = vec![logit(p.alpha)];
        if self.has_gamma() {
            z.push(logit(p.gamma));
        }
        if self.fit_lambda {
            z.push(logit(p.lambda));
        }
        if self.licks {
            let rule = p.lick.unwrap_or(super::licks::START_RULE);
            z.push(rule.theta.max(1e-12).ln().clamp(-Z_BOUND, Z_BOUND));
            z.push(logit(rule.upsilon));
        }
        z
    }

    /// The learner's pass over every trial at learning parameters `p`: one per evaluation,
    /// shared by the activity and the lick readouts.
    pub fn pass(&self, p: &LearnParams) -> Pass {
        let (ModelSpec::Td(representation), Some(space)) = (self.model, &self.space) else {
            return Pass::Rw(rw::run(&self.data.spans, self.data.n_cues, p.alpha));
        };
        let params = TdParams {
            alpha: p.alpha,
            gamma: p.gamma,
            lambda: p.lambda,
            dt: self.data.dt,
            representation,
        };
        Pass::Td(td::run_in(space, &self.data.spans, &params))
    }

    /// The model's δ summed over each point's window (excluded points too: one pass over all
    /// trials serves every point).
    pub fn predictors(&self, p: &LearnParams) -> Vec<f64> {
        self.predictors_in(&self.pass(p))
    }

    fn predictors_in(&self, pass: &Pass) -> Vec<f64> {
        let data = self.data;
        match pass {
            Pass::Td(run) => {
                if let Some(weighted) = &data.weighted {
                    return data
                        .points
                        .iter()
                        .zip(weighted)
                        .map(|(pt, w)| {
                            let d = run.trial_delta(pt.span);
                            let d = d.get(w.first_bin as usize..).unwrap_or(&[]);
                            w.weights.iter().zip(d).map(|(a, b)| a * b).sum()
                        })
                        .collect();
                }
                data.points
                    .iter()
                    .map(|pt| {
                        let d = run.trial_delta(pt.span);
                        d[pt.first_bin as usize..pt.end_bin as usize].iter().sum()
                    })
                    .collect()
            }
            Pass::Rw(trials) => data
                .points
                .iter()
                .map(|pt| match pt.kind {
                    WindowKind::Cue => trials[pt.span].delta_cue,
                    WindowKind::Reward => trials[pt.span].delta_reward,
                    WindowKind::Licks => 0.0,
                })
                .collect(),
        }
    }

    /// The window sums of the positive and of the negative parts of δ (each weighted by the
    /// sensor kernel when the data carry one); they add up to [`Problem::predictors`].
    pub fn split_predictors(&self, p: &LearnParams) -> (Vec<f64>, Vec<f64>) {
        self.split_predictors_in(&self.pass(p))
    }

    fn split_predictors_in(&self, pass: &Pass) -> (Vec<f64>, Vec<f64>) {
        let data = self.data;
        let split = |w: &mut dyn Iterator<Item = (f64, f64)>| {
            w.fold((0.0, 0.0), |(a, b), (wt, d)| {
                (a + wt * d.max(0.0), b + wt * d.min(0.0))
            })
        };
        let parts: Vec<(f64, f64)> = match pass {
            Pass::Td(run) => data
                .points
                .iter()
                .enumerate()
                .map(|(i, pt)| {
                    let d = run.trial_delta(pt.span);
                    match &data.weighted {
                        Some(weighted) => {
                            let w = &weighted[i];
                            let d = d.get(w.first_bin as usize..).unwrap_or(&[]);
                            split(&mut w.weights.iter().copied().zip(d.iter().copied()))
                        }
                        None => {
                            let d = &d[pt.first_bin as usize..pt.end_bin as usize];
                            split(&mut d.iter().map(|&x| (1.0, x)))
                        }
                    }
                })
                .collect(),
            Pass::Rw(_) => self
                .predictors_in(pass)
                .into_iter()
                .map(|x| (x.max(0.0), x.min(0.0)))
                .collect(),
        };
        parts.into_iter().unzip()
    }

    /// The model's δ in every bin of each point's window (Poisson likelihood); RW has one δ
    /// per window. Sensor weights are ignored (counts are spikes, not a sensor).
    pub fn window_deltas(&self, p: &LearnParams) -> WindowDeltas {
        self.window_deltas_in(&self.pass(p))
    }

    fn window_deltas_in(&self, pass: &Pass) -> WindowDeltas {
        let data = self.data;
        let mut out = WindowDeltas {
            values: Vec::with_capacity(data.points.len() * 6),
            offsets: Vec::with_capacity(data.points.len() + 1),
        };
        out.offsets.push(0);
        match pass {
            Pass::Td(run) => {
                for pt in &data.points {
                    let d = run.trial_delta(pt.span);
                    out.values
                        .extend_from_slice(&d[pt.first_bin as usize..pt.end_bin as usize]);
                    out.offsets.push(out.values.len());
                }
            }
            Pass::Rw(_) => {
                let x = self.predictors_in(pass);
                for xi in x {
                    out.values.push(xi);
                    out.offsets.push(out.values.len());
                }
            }
        }
        out
    }

    /// Profile gain and baselines (closed form for the Gaussian, Fisher scoring for Poisson)
    /// at learning parameters `p` on the points `idx`; with `--scale-by` groups, each group's
    /// on its own points (the likelihood separates over groups, each with its own σ).
    pub fn fit_linear(&self, p: &LearnParams, idx: &[usize]) -> Option<LinearFit> {
        let pass = self.pass(p);
        if !self.licks {
            return self.fit_activity(&pass, idx);
        }
        let (activity, lick): (Vec<usize>, Vec<usize>) =
            idx.iter().partition(|&&i| self.kinds[i].is_activity());
        let lick_fit = self.fit_licks(&pass, p.lick?, &lick)?;
        let mut lin = match activity.is_empty() {
            true => LinearFit::licks_only(self.likelihood),
            false => self.fit_activity(&pass, &activity)?,
        };
        lin.loglik += lick_fit.loglik;
        lin.n += lick_fit.n;
        lin.lick = Some(lick_fit);
        Some(lin)
    }

    /// The activity readout of [`Problem::fit_linear`] on activity windows only.
    fn fit_activity(&self, pass: &Pass, idx: &[usize]) -> Option<LinearFit> {
        let pred = match (self.likelihood, &self.data.counts) {
            (Likelihood::Poisson, Some(_)) => Predictors::Deltas(self.window_deltas_in(pass)),
            _ if self.asymmetric => {
                let (pos, neg) = self.split_predictors_in(pass);
                Predictors::Split(pos, neg)
            }
            _ => Predictors::Sums(self.predictors_in(pass)),
        };
        let Some(groups) = &self.data.groups else {
            return self.fit_scale(&pred, idx);
        };
        let mut parts: Vec<Vec<usize>> = vec![Vec::new(); groups.names.len()];
        for &i in idx {
            parts[groups.of_point[i] as usize].push(i);
        }
        let mut fits = Vec::new();
        for (g, part) in parts.iter().enumerate().filter(|(_, p)| !p.is_empty()) {
            fits.push((g, self.fit_scale(&pred, part)?));
        }
        let (_, first) = fits.first()?;
        let n: usize = fits.iter().map(|(_, f)| f.n).sum();
        let rss: f64 = fits.iter().map(|(_, f)| f.rss).sum();
        // Each group its own noise level too (a dimmer rig scales its noise with its signal):
        // the likelihood is the sum over groups, σ_g² = RSS_g/n_g profiled out per group.
        let loglik = fits.iter().map(|(_, f)| f.loglik).sum();
        Some(LinearFit {
            gain: first.gain,
            gain_neg: first.gain_neg,
            baselines: first.baselines,
            rss,
            n,
            likelihood: first.likelihood,
            loglik,
            lick: None,
            groups: fits
                .iter()
                .map(|(g, f)| GroupLinear {
                    group: *g,
                    gain: f.gain,
                    gain_neg: f.gain_neg,
                    baselines: f.baselines,
                    n: f.n,
                })
                .collect(),
        })
    }

    /// One gain and one pair of baselines over the points `idx`.
    fn fit_scale(&self, pred: &Predictors, idx: &[usize]) -> Option<LinearFit> {
        match (pred, &self.data.counts) {
            (Predictors::Deltas(deltas), Some(counts)) => {
                let f = likelihood::poisson_fit(deltas, counts, &self.kinds, idx, self.asymmetric)?;
                Some(LinearFit {
                    gain: f.gain,
                    gain_neg: f.gain_neg,
                    baselines: f.baselines,
                    rss: f.rss,
                    n: idx.len(),
                    likelihood: Likelihood::Poisson,
                    loglik: f.log_likelihood,
                    groups: Vec::new(),
                    lick: None,
                })
            }
            (Predictors::Sums(x), _) => self.linear(x, idx),
            (Predictors::Split(pos, neg), _) => {
                super::linear::least_squares_split(pos, neg, &self.observed, &self.kinds, idx)
            }
            (Predictors::Deltas(_), None) => None,
        }
    }

    /// The group of point `i` (`None` without `--scale-by` groups).
    pub fn group_of(&self, i: usize) -> Option<usize> {
        self.data.groups.as_ref().map(|g| g.of_point[i] as usize)
    }

    /// Predicted response of every point, in the units of `ObsPoint::observed`: baseline +
    /// gain × predictor (Gaussian); mean softplus rate in the window minus the resting rate
    /// (Poisson).
    pub fn predict_responses(&self, p: &LearnParams, fit: &LinearFit) -> Vec<f64> {
        let mut out = self.predict_activity(p, fit);
        if let (Some(rule), Some(lick)) = (p.lick, fit.lick) {
            self.predict_licks(p, rule, &lick, &mut out);
        }
        out
    }

    /// [`Problem::predict_responses`] of the activity windows (NaN for lick windows).
    fn predict_activity(&self, p: &LearnParams, fit: &LinearFit) -> Vec<f64> {
        let n = self.data.points.len();
        if !fit.has_activity() {
            return vec![f64::NAN; n];
        }
        // Point i's gains (of δ⁺, δ⁻) and its window's baseline; `None` for a lick window.
        let readout = |i: usize| {
            let kind = self.kinds[i];
            kind.is_activity().then(|| {
                let (g, baselines) = fit.scale_of(self.group_of(i));
                (g, baselines[kind.index()])
            })
        };
        let pass = self.pass(p);
        match fit.likelihood {
            Likelihood::Gaussian if fit.gain_neg.is_none() => {
                let x = self.predictors_in(&pass);
                (0..n)
                    .map(|i| readout(i).map_or(f64::NAN, |(g, b)| b.unwrap_or(0.0) + g[0] * x[i]))
                    .collect()
            }
            Likelihood::Gaussian => {
                let (pos, neg) = self.split_predictors_in(&pass);
                (0..n)
                    .map(|i| {
                        readout(i).map_or(f64::NAN, |(g, b)| {
                            b.unwrap_or(0.0) + g[0] * pos[i] + g[1] * neg[i]
                        })
                    })
                    .collect()
            }
            Likelihood::Poisson => {
                let d = self.window_deltas_in(&pass);
                (0..n)
                    .map(|i| match readout(i) {
                        Some((g, Some(b))) => {
                            likelihood::predicted_response_asym(d.of(i), b, g[0], g[1])
                        }
                        _ => f64::NAN,
                    })
                    .collect()
            }
        }
    }

    /// Closed-form fit on the points `idx` given precomputed predictors.
    pub fn linear(&self, x: &[f64], idx: &[usize]) -> Option<LinearFit> {
        least_squares(x, &self.observed, &self.kinds, idx)
    }

    /// −lnL at search coordinates `z` on the points `idx`; a huge finite number when the
    /// likelihood is not finite, so the simplex moves away instead of failing.
    pub fn cost(&self, z: &[f64], idx: &[usize]) -> f64 {
        match self.fit_linear(&self.to_params(z), idx) {
            Some(lin) => {
                let nll = -lin.log_likelihood();
                if nll.is_finite() {
                    nll
                } else {
                    f64::MAX / 4.0
                }
            }
            None => f64::MAX / 4.0,
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn logit_and_expit_are_inverse_inside_the_bounds() {
        for p in [1e-4, 0.05, 0.5, 0.98, 0.9999] {
            assert!((expit(logit(p)) - p).abs() < 1e-12, "{p}");
        }
        // Outside the search bounds both saturate instead of reaching 0, 1 or infinity.
        assert!(expit(1e6) < 1.0 && expit(-1e6) > 0.0);
        assert_eq!(logit(1.0), Z_BOUND);
    }

    /// Weights of one on exactly the window's bins reproduce the plain window sum, and a
    /// weight on a bin outside the window brings that bin's δ in.
    #[test]
    fn weighted_predictor_generalises_the_window_sum() {
        use crate::fit::dataset::WeightedWindow;
        use crate::fit::synthetic::{fit_data, SyntheticSpec};
        let (_, data) = fit_data(&SyntheticSpec {
            sessions: 2,
            trials_per_session: 30,
            ..Default::default()
        });
        let p = LearnParams {
            alpha: 0.1,
            gamma: 0.98,
            lambda: 0.0,
            lick: None,
        };
        let model = ModelSpec::Td(Representation::Csc);
        let plain = Problem::new(&data, model, false, 0.0).predictors(&p);
        let mut ones = data.clone();
        ones.weighted = Some(
            data.points
                .iter()
                .map(|pt| WeightedWindow {
                    first_bin: pt.first_bin,
                    weights: vec![1.0; (pt.end_bin - pt.first_bin) as usize],
                })
                .collect(),
        );
        let same = Problem::new(&ones, model, false, 0.0).predictors(&p);
        for (a, b) in plain.iter().zip(&same) {
            assert!((a - b).abs() <= 1e-12 * a.abs().max(1.0), "{a} vs {b}");
        }
        // One bin earlier: the reward window of a rewarded trial now includes the bin before.
        let mut wider = ones.clone();
        for (w, pt) in wider
            .weighted
            .as_mut()
            .unwrap()
            .iter_mut()
            .zip(&data.points)
        {
            if pt.first_bin > 0 {
                w.first_bin -= 1;
                w.weights.push(1.0);
            }
        }
        let moved = Problem::new(&wider, model, false, 0.0).predictors(&p);
        assert!(plain.iter().zip(&moved).any(|(a, b)| (a - b).abs() > 1e-9));
    }
}

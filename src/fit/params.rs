//! The reported parameters (`params.csv` and the report's table): the learning parameters,
//! γ's time constant, the readout's gains and baselines (per group with `--scale-by`, per sign
//! of δ with `--asymmetric`), each with its interval.

use super::bootstrap::{tau_s, Intervals, Replicate};
use super::dataset::{FitData, WindowKind};
use super::objective::ModelSpec;
use super::FitOutcome;

/// One reported parameter: name, estimate, interval.
#[derive(Debug, Clone, PartialEq)]
pub struct ParamRow {
    /// `alpha`, `gamma`, …; with `--scale-by`, `gain[<group>]` and `baseline_cue[<group>]`.
    pub name: std::borrow::Cow<'static, str>,
    pub estimate: f64,
    pub interval: Option<(f64, f64)>,
}

/// The rows of `params.csv`, in order: alpha, gamma (per bin), tau_s (seconds, −dt/ln γ),
/// lambda (only when fitted), gain, baseline_cue, baseline_reward (when fitted).
///
/// When γ's profile is flat the bootstrap interval of γ and τ is withheld: warm-started
/// replicates barely move along a flat direction, so their spread would understate the
/// uncertainty. The profile-likelihood interval stands in for it; an end the profile never
/// reaches is the range end (γ 0 or 1, τ 0 or infinity): a one-sided bound.
pub fn param_rows(out: &FitOutcome, data: &FitData, lambda_fitted: bool) -> Vec<ParamRow> {
    let gamma_flat = gamma_interval_withheld(out);
    let p = out.best.params;
    let lin = &out.best.linear;
    let dt = data.dt;
    let iv = |f: &dyn Fn(&Replicate) -> Option<f64>| -> Option<(f64, f64)> {
        out.intervals
            .as_ref()
            .and_then(|i: &Intervals| i.interval(f))
    };
    let mut rows = vec![ParamRow {
        name: "alpha".into(),
        estimate: p.alpha,
        interval: iv(&|r| Some(r.params.alpha)),
    }];
    if matches!(out.model, ModelSpec::Td(_)) {
        rows.push(ParamRow {
            name: "gamma".into(),
            estimate: p.gamma,
            interval: gamma_interval(out, gamma_flat, iv(&|r| Some(r.params.gamma))),
        });
        // τ is monotone in γ, so its interval is γ's mapped through.
        rows.push(ParamRow {
            name: "tau_s".into(),
            estimate: tau_s(p.gamma, dt),
            interval: gamma_interval(out, gamma_flat, iv(&|r| Some(r.params.gamma)))
                .map(|(a, b)| (tau_s(a, dt), tau_s(b, dt))),
        });
        if lambda_fitted {
            rows.push(ParamRow {
                name: "lambda".into(),
                estimate: p.lambda,
                interval: iv(&|r| Some(r.params.lambda)),
            });
        }
    }
    lick_rows(&mut rows, out, &iv);
    if !lin.has_activity() {
        return rows;
    }
    let baseline_name = |kind: WindowKind| match kind {
        WindowKind::Cue => "baseline_cue",
        WindowKind::Reward => "baseline_reward",
        WindowKind::Licks => "baseline_licks",
    };
    let Some(groups) = data.groups.as_ref().filter(|_| !lin.groups.is_empty()) else {
        gain_rows(
            &mut rows,
            "",
            (lin.gain, lin.gain_neg),
            &|r: &Replicate| Some((r.gain, r.gain_neg)),
            &iv,
        );
        for kind in WindowKind::ALL {
            if let Some(b) = lin.baselines[kind.index()] {
                rows.push(ParamRow {
                    name: baseline_name(kind).into(),
                    estimate: b,
                    interval: iv(&|r| r.baselines[kind.index()]),
                });
            }
        }
        return rows;
    };
    // `--scale-by`: each group's gain and baselines, named by the group.
    for g in &lin.groups {
        let name = &groups.names[g.group];
        let of = |r: &Replicate| r.groups.iter().find(|x| x.group == g.group).copied();
        gain_rows(
            &mut rows,
            &format!("[{name}]"),
            (g.gain, g.gain_neg),
            &|r: &Replicate| of(r).map(|x| (x.gain, x.gain_neg)),
            &iv,
        );
        for kind in WindowKind::ALL {
            if let Some(b) = g.baselines[kind.index()] {
                rows.push(ParamRow {
                    name: format!("{}[{name}]", baseline_name(kind)).into(),
                    estimate: b,
                    interval: iv(&|r| of(r).and_then(|x| x.baselines[kind.index()])),
                });
            }
        }
    }
    rows
}

/// `fit --licks`: the lick rule's θ (µL) and υ (per bin), then the rate per µL of value above
/// θ and the rate without value (licks/s).
fn lick_rows(rows: &mut Vec<ParamRow>, out: &FitOutcome, iv: IntervalOf) {
    let (Some(rule), Some(lick)) = (out.best.params.lick, out.best.linear.lick) else {
        return;
    };
    type Of<'a> = &'a dyn Fn(&Replicate) -> Option<f64>;
    let values: [(&'static str, f64, Of); 4] = [
        ("lick_theta", rule.theta, &|r| {
            r.params.lick.map(|l| l.theta)
        }),
        ("lick_upsilon", rule.upsilon, &|r| {
            r.params.lick.map(|l| l.upsilon)
        }),
        ("lick_hz_per_ul", lick.hz_per_ul, &|r| {
            r.lick.map(|l| l.hz_per_ul)
        }),
        ("lick_base_hz", lick.base_hz, &|r| r.lick.map(|l| l.base_hz)),
    ];
    for (name, estimate, of) in values {
        rows.push(ParamRow {
            name: name.into(),
            estimate,
            interval: iv(of),
        });
    }
}

/// A replicate's (gain, gain of negative δ) for one group, or the subject's.
type GainsOf<'a> = &'a dyn Fn(&Replicate) -> Option<(f64, Option<f64>)>;
/// The bootstrap interval of a statistic of the replicates.
type IntervalOf<'a> = &'a dyn Fn(&dyn Fn(&Replicate) -> Option<f64>) -> Option<(f64, f64)>;

/// The gain row (`gain`), or with an asymmetric readout `gain_pos`, `gain_neg` and
/// `asymmetry` = g+/(g+ + g−) (0.5 symmetric; the per-unit figure of Dabney et al. 2020),
/// each named with `suffix` (a group: `[box-2]`).
fn gain_rows(
    rows: &mut Vec<ParamRow>,
    suffix: &str,
    (gain, gain_neg): (f64, Option<f64>),
    of: GainsOf,
    iv: IntervalOf,
) {
    let Some(neg) = gain_neg else {
        rows.push(ParamRow {
            name: format!("gain{suffix}").into(),
            estimate: gain,
            interval: iv(&|r| of(r).map(|x| x.0)),
        });
        return;
    };
    let tau = |p: f64, n: f64| p / (p + n);
    rows.push(ParamRow {
        name: format!("gain_pos{suffix}").into(),
        estimate: gain,
        interval: iv(&|r| of(r).map(|x| x.0)),
    });
    rows.push(ParamRow {
        name: format!("gain_neg{suffix}").into(),
        estimate: neg,
        interval: iv(&|r| of(r).and_then(|x| x.1)),
    });
    rows.push(ParamRow {
        name: format!("asymmetry{suffix}").into(),
        estimate: tau(gain, neg),
        interval: iv(&|r| of(r).and_then(|(p, n)| Some(tau(p, n?)))),
    });
}

impl ParamRow {
    /// The interval leaves out the row's own estimate: the replicates are lopsided (too few,
    /// or a skewed sampling distribution), so the percentile ends cannot be read as a range
    /// around the estimate.
    pub fn excludes_estimate(&self) -> bool {
        self.interval
            .is_some_and(|(lo, hi)| !(lo <= self.estimate && self.estimate <= hi))
    }
}

/// γ's profile-likelihood interval, an unbounded end at γ's range end (0 or 1).
pub fn gamma_profile_bounds(out: &FitOutcome) -> Option<(f64, f64)> {
    let pi = out.gamma_profile.as_ref()?.interval?;
    Some((pi.lower.unwrap_or(0.0), pi.upper.unwrap_or(1.0)))
}

/// γ's reported interval: the profile-likelihood one when the profile is flat (the bootstrap's
/// is withheld), else the envelope of the bootstrap percentile and profile-likelihood
/// intervals (either alone when the other is missing). The bootstrap's alone undercovered γ
/// (80 % of 95 % intervals on simulated subjects; the profile's 95 %: tests/fit_coverage.rs).
pub fn gamma_interval(
    out: &FitOutcome,
    flat: bool,
    bootstrap: Option<(f64, f64)>,
) -> Option<(f64, f64)> {
    let profile = gamma_profile_bounds(out);
    if flat {
        return profile;
    }
    match (bootstrap, profile) {
        (Some((a, b)), Some((c, d))) => Some((a.min(c), b.max(d))),
        (x, None) | (None, x) => x,
    }
}

/// γ's profile-likelihood interval lacks an end.
pub fn gamma_one_sided(out: &FitOutcome) -> bool {
    out.gamma_profile
        .as_ref()
        .and_then(|g| g.interval)
        .is_some_and(|pi| pi.lower.is_none() || pi.upper.is_none())
}

/// γ's profile is flat and a bootstrap ran: its bootstrap interval is not reported.
pub fn gamma_interval_withheld(out: &FitOutcome) -> bool {
    out.intervals.is_some() && out.gamma_profile.as_ref().is_some_and(|g| g.flat)
}

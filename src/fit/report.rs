//! The fit's outputs: the plain-text report for the lab notebook, `params.csv` and
//! `trials.csv` (tidy tables: one row per parameter, one row per observation window).

use super::compare::{verdict, Verdict, TIE_DELTA_AIC};
use super::dataset::FitData;
use super::objective::ModelSpec;
use super::FitOutcome;
use crate::util::fmt_f64;
use std::fmt::Write as _;
use std::io::Write;

/// A number for people: 4 significant digits, no exponent for everyday magnitudes.
pub fn num(x: f64) -> String {
    if !x.is_finite() {
        return if x.is_nan() {
            "n/a".into()
        } else {
            format!("{x}")
        };
    }
    let a = x.abs();
    if a != 0.0 && !(1e-3..1e5).contains(&a) {
        format!("{x:.3e}")
    } else {
        let digits = if a == 0.0 {
            0
        } else {
            (3 - a.log10().floor() as i32).max(0) as usize
        };
        format!("{x:.digits$}")
    }
}

pub use super::params::{
    gamma_interval, gamma_interval_withheld, gamma_one_sided, gamma_profile_bounds, param_rows,
    ParamRow,
};

/// `params.csv`: `parameter,estimate,lower,upper` (bounds empty without a bootstrap).
pub fn write_params_csv(w: &mut dyn Write, rows: &[ParamRow]) -> std::io::Result<()> {
    writeln!(w, "parameter,estimate,lower,upper")?;
    for r in rows {
        let (lo, hi) = match r.interval {
            Some((l, h)) => (fmt_f64(l), fmt_f64(h)),
            None => (String::new(), String::new()),
        };
        writeln!(w, "{},{},{},{}", r.name, fmt_f64(r.estimate), lo, hi)?;
    }
    Ok(())
}

/// `trials.csv`: `session,trial,window,observed,predicted,excluded`, one row per window, in
/// training order; excluded windows are predicted too (the model ran over them).
pub fn write_trials_csv(
    w: &mut dyn Write,
    data: &FitData,
    predicted: &[f64],
) -> Result<(), csv::Error> {
    let mut out = csv::Writer::from_writer(w);
    // A per-unit fit has a row per unit and window: a `unit` column after `window`.
    let units = data.groups.as_ref().filter(|g| g.by.per_unit());
    let mut header = vec!["session", "trial", "window"];
    header.extend(units.map(|_| "unit"));
    header.extend(["observed", "predicted", "excluded"]);
    out.write_record(&header)?;
    for (i, (p, &pred)) in data.points.iter().zip(predicted).enumerate() {
        let (session, trial) = data.label(p.span);
        let mut row = vec![
            crate::text::for_csv(session).into_owned(),
            trial.to_string(),
            // Data text (cue names): neutralised like the session name.
            crate::text::for_csv(p.label.as_deref().unwrap_or(p.kind.name())).into_owned(),
        ];
        if let Some(g) = units {
            let name = &g.names[g.of_point[i] as usize];
            row.push(crate::text::for_csv(super::units::unit_of_group(g.by, name)).into_owned());
        }
        row.extend([
            fmt_f64(p.observed),
            fmt_f64(pred),
            (if p.excluded { "true" } else { "false" }).to_string(),
        ]);
        out.write_record(&row)?;
    }
    out.flush()?;
    Ok(())
}

/// Context for the text report that the library does not know by itself.
#[derive(Debug, Clone, Default)]
pub struct ReportContext {
    /// Subject id or folder.
    pub subject: String,
    /// One line describing the observations (activity, windows, latency).
    pub observations: String,
    /// The command line to suggest with `nice`.
    pub command: String,
    /// The sensitivity-to-suggested-marks line ([`super::sensitivity::line`]), if computed.
    pub sensitivity: Option<String>,
    /// `--compare-readouts`: the readout table ([`super::readouts::table`]).
    pub readouts: Option<String>,
}

/// The plain-text report.
pub fn text_report(
    out: &FitOutcome,
    data: &FitData,
    ctx: &ReportContext,
    lambda_fitted: bool,
) -> String {
    let mut s = String::new();
    let n_trials = data.spans.len();
    let _ = writeln!(
        s,
        "trialdesk fit: {} ({} sessions, {} trials, {} response windows, {} fitted)",
        ctx.subject,
        data.n_sessions(),
        n_trials,
        data.points.len(),
        out.n_included
    );
    let _ = writeln!(
        s,
        "model: TD(λ), {} representation, {} s bins",
        out.model.name(),
        data.dt
    );
    let _ = writeln!(s, "{}", fitted_and_fixed(out, data, lambda_fitted));
    let lin = &out.best.linear;
    match (lin.has_activity(), lin.lick.is_some()) {
        (true, false) => {
            let _ = writeln!(s, "likelihood: {}", lin.likelihood.describe());
        }
        (true, true) => {
            let _ = writeln!(
                s,
                "likelihood: activity {}; lick counts Poisson (the two log-likelihoods added)",
                lin.likelihood.describe()
            );
        }
        (false, _) => {
            let _ = writeln!(s, "likelihood: lick counts Poisson");
        }
    }
    if !ctx.observations.is_empty() {
        let _ = writeln!(s, "observations: {}", ctx.observations);
    }
    let _ = writeln!(s);

    let rows = param_rows(out, data, lambda_fitted);
    match &out.intervals {
        Some(iv) => {
            let _ = writeln!(
                s,
                "Parameters (95% bootstrap percentile intervals, {} of {} replicates resampling {}):",
                iv.n_ok,
                iv.n_requested,
                iv.unit.name()
            );
        }
        None => {
            let _ = writeln!(s, "Parameters (no bootstrap: intervals not computed):");
        }
    }
    // Group rows (`gain[<rig>]`) may be longer than the usual names.
    let w = rows
        .iter()
        .map(|r| r.name.chars().count())
        .max()
        .unwrap_or(0)
        .max(16);
    let _ = writeln!(
        s,
        "  {:<w$} {:>12} {:>12} {:>12}",
        "parameter", "estimate", "lower", "upper"
    );
    for r in &rows {
        let (lo, hi) = r
            .interval
            .map(|(l, h)| (num(l), num(h)))
            .unwrap_or_else(|| ("-".into(), "-".into()));
        let mut unit = match r.name.as_ref() {
            "gamma" | "lambda" => format!("  per {} s bin", data.dt),
            "tau_s" => "  seconds".to_string(),
            _ => String::new(),
        };
        if matches!(r.name.as_ref(), "gamma" | "tau_s") && gamma_interval_withheld(out) {
            unit.push_str(if gamma_one_sided(out) {
                " (one-sided profile-likelihood bound: flat profile, bootstrap interval \
                 withheld, see the warning)"
            } else {
                " (profile-likelihood interval: flat profile, bootstrap interval withheld, \
                 see the warning)"
            });
        }
        if r.excludes_estimate() {
            unit.push_str(" (! interval excludes the estimate: see the note below)");
        }
        let _ = writeln!(
            s,
            "  {:<w$} {:>12} {:>12} {:>12}{unit}",
            r.name,
            num(r.estimate),
            lo,
            hi
        );
    }
    if out
        .gamma_profile
        .as_ref()
        .is_some_and(|g| g.interval.is_some())
        && !gamma_interval_withheld(out)
        && out.intervals.is_some()
    {
        let _ = writeln!(
            s,
            "  γ and tau_s: the envelope of the bootstrap percentile and the profile-likelihood \
             intervals (the bootstrap's alone undercovers γ)."
        );
    }
    if rows.iter().any(ParamRow::excludes_estimate) {
        let _ = writeln!(
            s,
            "  Note: a percentile interval marked ! does not contain its own estimate: the \
             bootstrap replicates fall lopsidedly on one side (too few replicates, or a skewed \
             sampling distribution); do not quote it as the estimate's range."
        );
    }
    let _ = writeln!(s);
    let _ = writeln!(
        s,
        "Goodness of fit: R² = {}, RMSE = {} (response units), log-likelihood = {}, n = {}",
        num(out.r_squared),
        num(out.rmse),
        num(out.best.log_likelihood),
        out.n_included
    );
    let _ = writeln!(s);

    if !out.comparison.is_empty() {
        write_comparison(&mut s, out, data, lambda_fitted);
        let _ = writeln!(s);
    }
    if let Some(table) = &ctx.readouts {
        let _ = writeln!(s, "{table}");
    }

    write_exclusions(&mut s, out, data);
    if let Some(line) = &ctx.sensitivity {
        let _ = writeln!(s, "{line}");
    }
    let _ = writeln!(s);

    for w in &out.warnings {
        let _ = writeln!(s, "Warning: {w}");
    }
    let _ = writeln!(
        s,
        "Present the fit as a hypothesis: some dopamine data deviate from a TD prediction error."
    );
    let _ = writeln!(
        s,
        "Heavy fits slow the machine: do not run them on a rig computer while it is acquiring; \
         run at low priority: nice -n 19 {}",
        if ctx.command.is_empty() {
            "trialdesk fit ..."
        } else {
            &ctx.command
        }
    );
    s
}

/// Which parameters the fit estimated and which it held fixed, with their values.
pub fn fitted_and_fixed(out: &FitOutcome, data: &FitData, lambda_fitted: bool) -> String {
    let mut fixed = Vec::new();
    let learning = if lambda_fitted {
        "α, γ, λ"
    } else {
        fixed.push(format!(
            "λ = {} (--lambda)",
            crate::util::fmt_f64(out.best.params.lambda)
        ));
        "α, γ"
    };
    fixed.push(format!(
        "bin width dt = {} s",
        crate::util::fmt_f64(data.dt)
    ));
    fixed.push(format!("representation {}", out.model.name()));
    let profiled = match out.best.linear.likelihood {
        super::Likelihood::Gaussian => "least squares",
        super::Likelihood::Poisson => "Poisson maximum likelihood",
    };
    let scaled = match &data.groups {
        Some(g) => format!(
            " per {} ({} groups: {}; the learning parameters shared)",
            g.by.name(),
            g.names.len(),
            short_list(&g.names)
        ),
        None => String::new(),
    };
    let gains = match out.best.linear.gain_neg {
        Some(_) => "gains of positive and negative δ",
        None => "gain",
    };
    let lin = &out.best.linear;
    let readout = match (lin.has_activity(), lin.lick.is_some()) {
        (true, false) => format!("{gains} and baselines{scaled} ({profiled})"),
        (true, true) => format!(
            "{gains} and baselines{scaled} ({profiled}); the lick rule's θ and υ searched with \
             them, its licks/s per µL and licks/s without value by Poisson maximum likelihood"
        ),
        (false, _) => "the lick rule's θ and υ searched with them, its licks/s per µL and \
             licks/s without value by Poisson maximum likelihood"
            .to_string(),
    };
    format!(
        "fitted: {learning} (multi-start Nelder–Mead), {readout}; fixed: {}",
        fixed.join(", ")
    )
}

fn write_comparison(s: &mut String, out: &FitOutcome, data: &FitData, lambda_fitted: bool) {
    let best_aic = out
        .comparison
        .iter()
        .map(|r| r.aic)
        .fold(f64::INFINITY, f64::min);
    let held = out.comparison.iter().any(|r| r.heldout_n > 0);
    let holdout_note = if held {
        format!(
            "held-out RMSE: fitted on the first {} session(s), predicting the last {}",
            data.n_sessions() - out.holdout_sessions,
            out.holdout_sessions
        )
    } else {
        match data.groups.as_ref().map(|g| g.by) {
            Some(super::dataset::ScaleBy::Session) => "held-out RMSE: n/a (with a gain per \
                 session, a held-out session has no gain of its own to predict with)"
                .to_string(),
            Some(by) if by.per_unit() => "held-out RMSE: n/a (units first seen in a held-out \
                 session have no gain of their own to predict with)"
                .to_string(),
            _ => "held-out RMSE: n/a (needs at least two sessions with observations)".to_string(),
        }
    };
    let _ = writeln!(
        s,
        "Model comparison (same {} observations; k counts learning parameters, gain, baselines{}; {holdout_note}):",
        out.n_included,
        if out.best.linear.likelihood == super::Likelihood::Gaussian { ", σ" } else { "" }
    );
    let _ = writeln!(
        s,
        "  {:<16} {:>8} {:>12} {:>3} {:>12} {:>8} {:>12} {:>14}",
        "model", "λ", "lnL", "k", "AIC", "ΔAIC", "BIC", "held-out RMSE"
    );
    for r in &out.comparison {
        let held = match r.heldout_rmse {
            Some(e) => format!("{} (n={})", num(e), r.heldout_n),
            None => "n/a".into(),
        };
        let mark = if r.model.name() == out.model.name() {
            " *"
        } else {
            ""
        };
        let _ = writeln!(
            s,
            "  {:<16} {:>8} {:>12} {:>3} {:>12} {:>8} {:>12} {:>14}{mark}",
            r.model.name(),
            match r.model {
                ModelSpec::Td(_) => num(r.params.lambda),
                ModelSpec::RescorlaWagner => "-".into(),
            },
            num(r.log_likelihood),
            r.k,
            num(r.aic),
            num(r.aic - best_aic),
            num(r.bic),
            held
        );
    }
    let _ = writeln!(
        s,
        "  (* the representation whose parameters are reported above and saved; λ: {})",
        if lambda_fitted {
            "each TD model at its own best λ"
        } else {
            "fixed for every TD model"
        }
    );
    let rows = &out.comparison;
    match verdict(rows) {
        Some(Verdict::Clear {
            best, runner_up, ..
        }) => {
            let next = runner_up.map_or(String::new(), |r| {
                format!(
                    "; next {} at ΔAIC {}",
                    rows[r].model.name(),
                    num(rows[r].aic - rows[best].aic)
                )
            });
            let _ = writeln!(
                s,
                "Best by AIC: {}{next} (differences below {TIE_DELTA_AIC} do not separate models).",
                rows[best].model.name()
            );
        }
        Some(Verdict::Tie { rows: close }) => {
            let names: Vec<&str> = close.iter().map(|&i| rows[i].model.name()).collect();
            let _ = writeln!(
                s,
                "The comparison cannot tell {} apart (ΔAIC below {TIE_DELTA_AIC}); lowest AIC: {}.",
                names.join(", "),
                names[0]
            );
        }
        None => {}
    }
}

fn write_exclusions(s: &mut String, out: &FitOutcome, data: &FitData) {
    let ex = &data.exclusions;
    if ex.ignore_marks {
        let _ = writeln!(
            s,
            "Excluded trials: none (--ignore-marks: {} trial(s) marked exclude were fitted anyway).",
            ex.n_trials
        );
    } else if ex.n_trials == 0 {
        let _ = writeln!(s, "Excluded trials: none (no trial is marked exclude).");
    } else {
        let _ = writeln!(
            s,
            "Excluded trials: {} — their responses are left out of the fit; the model still learns from them.",
            ex.n_trials
        );
    }
    for (reason, n) in &ex.by_reason {
        let _ = writeln!(s, "  {reason:<32} {n:>5}");
    }
    if let Some(f) = &out.without_exclusions {
        let _ = writeln!(
            s,
            "Same model fitted to all {} windows, excluded ones too: alpha = {}, gamma = {}, gain = {} \
             (marked fit: alpha = {}, gamma = {}, gain = {}).",
            data.points.len(),
            num(f.params.alpha),
            num(f.params.gamma),
            num(f.linear.gain),
            num(out.best.params.alpha),
            num(out.best.params.gamma),
            num(out.best.linear.gain)
        );
    }
    if ex.n_trials > 0 {
        let _ = writeln!(
            s,
            "Caution: excluding trials after seeing a fit can bias it; rerun with --ignore-marks to compare."
        );
    }
}

/// Names joined with commas; past eight, the first six and how many more (params.csv has all).
fn short_list(names: &[String]) -> String {
    if names.len() <= 8 {
        return names.join(", ");
    }
    format!(
        "{}, … {} more in params.csv",
        names[..6].join(", "),
        names.len() - 6
    )
}

#[cfg(test)]
mod tests {
    use super::num;

    #[test]
    fn numbers_for_people() {
        assert_eq!(num(0.98765), "0.9877");
        assert_eq!(num(1234.5), "1234");
        assert_eq!(num(-3458.77), "-3459");
        assert_eq!(num(0.0), "0");
        assert_eq!(num(1.5e-5), "1.500e-5");
        assert_eq!(num(f64::NAN), "n/a");
    }
}

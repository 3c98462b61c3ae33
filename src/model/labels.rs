//! What each trial of a model trace is, for the columns `trialdesk model` adds after the
//! numbers: the cue, the trial type (what the schedule promised), the outcome (what happened),
//! what bin 0 is aligned to, and the exact start time of a bin.

use super::TrialSpan;
use crate::data::Subject;

/// Description of one trial span.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct TrialLabels {
    /// The trial's cue name (a trial with several: the names joined by `+`); empty for an
    /// uncued reward.
    pub cue: String,
    /// `cs_plus` (the cue declares a reward delay), `cs_minus` (a cue never rewarded) or
    /// `uncued`.
    pub trial_type: &'static str,
    /// `reward` (delivered), `omission` (a CS+ without its reward) or `none` (nothing
    /// delivered, nothing expected).
    pub outcome: &'static str,
    /// What bin 0 starts at: `cue_onset`, or `reward` for uncued trials.
    pub aligned_to: &'static str,
}

/// Labels of `span` in `subject`.
pub fn trial_labels(subject: &Subject, span: &TrialSpan) -> TrialLabels {
    let session = &subject.sessions[span.session];
    let trial = &session.trials[span.trial];
    if let Some(ev) = &span.events {
        // A trial with an event list: its cues present joined by `+` (a compound reads
        // `tone-a+light-b`), CS+ when any of them declares a reward delay.
        let mut names: Vec<&str> = Vec::new();
        for c in &ev.cues {
            let name = session.meta.cues[c.session_cue].name.as_str();
            if !names.contains(&name) {
                names.push(name);
            }
        }
        let cs_plus = ev
            .cues
            .iter()
            .any(|c| session.meta.cues[c.session_cue].reward_delay_s.is_some());
        let trial_type = match (names.is_empty(), cs_plus) {
            (true, _) => "uncued",
            (false, true) => "cs_plus",
            (false, false) => "cs_minus",
        };
        let outcome = match (ev.rewards.is_empty(), trial_type) {
            (false, _) => "reward",
            (true, "cs_plus") => "omission",
            (true, _) => "none",
        };
        return TrialLabels {
            cue: names.join("+"),
            trial_type,
            outcome,
            aligned_to: if names.is_empty() {
                "reward"
            } else {
                "cue_onset"
            },
        };
    }
    let cue = trial.cue.map(|c| &session.meta.cues[c]);
    let trial_type = match cue {
        Some(c) if c.reward_delay_s.is_some() => "cs_plus",
        Some(_) => "cs_minus",
        None => "uncued",
    };
    let outcome = match (trial.reward_s.is_some(), trial_type) {
        (true, _) => "reward",
        (false, "cs_plus") => "omission",
        (false, _) => "none",
    };
    TrialLabels {
        cue: cue.map(|c| c.name.clone()).unwrap_or_default(),
        trial_type,
        outcome,
        aligned_to: if cue.is_some() { "cue_onset" } else { "reward" },
    }
}

/// Start of bin `k` (k·dt seconds after the alignment time) written exactly: the bin width's
/// own decimal digits times the integer k, so 3 × 0.05 prints `0.15`, not the binary product
/// `0.15000000000000002`. Trailing zeros are dropped (`0.1`, `1`) as the shortest round-trip
/// form would drop them.
pub fn bin_time_text(k: usize, dt: f64) -> String {
    let shortest = format!("{dt}");
    let decimals = shortest.split_once('.').map_or(0, |(_, f)| f.len());
    // The decimal form of dt as an integer count of 10^-decimals (exact up to 18 digits).
    let digits: String = shortest.chars().filter(|c| c.is_ascii_digit()).collect();
    let Ok(units) = digits.parse::<u128>() else {
        return format!("{}", k as f64 * dt);
    };
    let total = units * k as u128;
    if decimals == 0 {
        return total.to_string();
    }
    let text = format!("{total:0>width$}", width = decimals + 1);
    let (int, frac) = text.split_at(text.len() - decimals);
    let frac = frac.trim_end_matches('0');
    if frac.is_empty() {
        int.to_string()
    } else {
        format!("{int}.{frac}")
    }
}

#[cfg(test)]
mod tests {
    use super::bin_time_text;

    /// Exact decimal products (checked by hand): k × dt with dt's digits.
    #[test]
    fn bin_times_are_exact_decimals() {
        assert_eq!(bin_time_text(0, 0.05), "0");
        assert_eq!(bin_time_text(3, 0.05), "0.15");
        assert_eq!(bin_time_text(2, 0.05), "0.1");
        assert_eq!(bin_time_text(20, 0.05), "1");
        assert_eq!(bin_time_text(7, 0.1), "0.7");
        assert_eq!(bin_time_text(3, 0.02), "0.06");
        assert_eq!(bin_time_text(41, 0.025), "1.025");
        assert_eq!(bin_time_text(5, 2.0), "10");
        assert_eq!(bin_time_text(3, 1.5), "4.5");
        // The binary product is not exact, the text is.
        assert_ne!(format!("{}", 3.0 * 0.05), "0.15");
    }

    /// Every value reads back to the nearest f64 of the exact decimal, as the shortest form
    /// of a correctly rounded product would when it is exact.
    #[test]
    fn bin_times_read_back_close_to_the_product() {
        for dt in [0.05, 0.1, 0.02, 0.001, 0.0333] {
            for k in 0..500 {
                let t: f64 = bin_time_text(k, dt).parse().unwrap();
                assert!((t - k as f64 * dt).abs() <= 1e-12 * (1.0 + t), "{k} {dt}");
            }
        }
    }
}

//! The Pavlovian trial schedule: which cue on which trial, which trials are rewarded, when.
//!
//! Pavlovian means the schedule never depends on what the animal has learned, so it is drawn
//! first and on its own generator. Per day: a fixed share of uncued rewards, the other trials
//! split evenly among the cues, all shuffled; each cued trial is rewarded with its cue's
//! probability. Times: the ITI runs from the end of one trial (its reward or expected reward
//! time, or the cue's offset if that is later) to the next onset, min + exponential.

use super::{rng_for, round_time, stream};
use crate::data::{CueDef, Session, SessionMeta, Subject, Trial};
use rand::Rng;
use rand_distr::{Distribution, Exp};
use std::path::PathBuf;

/// One cue type: name, reward probability, cue onset → reward delay.
#[derive(Debug, Clone, PartialEq)]
pub struct CueSpec {
    pub name: String,
    pub reward_prob: f64,
    pub delay_s: f64,
}

impl CueSpec {
    /// `NAME:P:DELAY` (DELAY may be left out when P is 0; it then defaults to 1.5 s).
    pub fn parse(text: &str) -> Result<CueSpec, String> {
        let parts: Vec<&str> = text.split(':').collect();
        let bad = || format!("cue {text:?}: expected NAME:P:DELAY, e.g. tone-hi:1:1.5");
        if parts.len() < 2 || parts.len() > 3 || parts[0].is_empty() {
            return Err(bad());
        }
        let reward_prob: f64 = parts[1].trim().parse().map_err(|_| bad())?;
        let delay_s: f64 = match parts.get(2) {
            Some(d) => d.trim().parse().map_err(|_| bad())?,
            None if reward_prob == 0.0 => 1.5,
            None => return Err(bad()),
        };
        Ok(CueSpec {
            name: parts[0].to_string(),
            reward_prob,
            delay_s,
        })
    }
}

/// The design of the experiment; defaults are the demo scenario.
#[derive(Debug, Clone, PartialEq)]
pub struct ScheduleParams {
    pub subject: String,
    pub rig: String,
    /// First session's date, ISO; one session a day after it.
    pub start_date: String,
    pub start_time: String,
    pub days: usize,
    pub trials_per_day: usize,
    pub cues: Vec<CueSpec>,
    /// Cue duration (recorded in truth.toml; the data layout has no column for it).
    pub cue_duration_s: f64,
    /// Share of each day's trials that are uncued rewards.
    pub uncued_fraction: f64,
    /// Reward size in µL (sweet water); also the model's reward magnitude.
    pub reward_ul: f64,
    /// ITI: minimum plus an exponential with this mean. methods.md §6 takes an exponential ITI
    /// as its default (mean 15 s, range 8–60 s from Jeong et al. 2022 and Floeder et al. 2024);
    /// the demo's 6 s + exponential(12 s) is our choice within that range.
    pub iti_mean_s: f64,
    pub iti_min_s: f64,
    /// Quiet time before the first and after the last trial.
    pub margin_s: f64,
}

impl Default for ScheduleParams {
    fn default() -> Self {
        let cue = |name: &str, p: f64| CueSpec {
            name: name.to_string(),
            reward_prob: p,
            delay_s: 1.5,
        };
        ScheduleParams {
            subject: "m-041".to_string(),
            rig: "box-2".to_string(),
            start_date: "2026-03-02".to_string(),
            start_time: "09:30:00".to_string(),
            days: 8,
            trials_per_day: 120,
            cues: vec![
                cue("tone-hi", 1.0),
                cue("tone-mid", 0.5),
                cue("tone-lo", 0.0),
            ],
            cue_duration_s: 1.0,
            uncued_fraction: 0.05,
            reward_ul: 3.0,
            iti_mean_s: 12.0,
            iti_min_s: 6.0,
            margin_s: 10.0,
        }
    }
}

/// One day's drawn trials.
#[derive(Debug, Clone)]
pub struct SessionPlan {
    pub date: String,
    pub trials: Vec<Trial>,
    /// Session clock at the end of recording.
    pub end_s: f64,
}

/// Draw every day's schedule.
pub fn draw(p: &ScheduleParams, seed: u64) -> Result<Vec<SessionPlan>, String> {
    let mut rng = rng_for(seed, stream::SCHEDULE);
    let first = parse_date(&p.start_date).ok_or("bad start date")?;
    let gap = Exp::new(1.0 / (p.iti_mean_s - p.iti_min_s).max(1e-9)).map_err(|e| e.to_string())?;
    let mut plans = Vec::with_capacity(p.days);
    for day in 0..p.days {
        let n = p.trials_per_day;
        let n_uncued = if p.cues.is_empty() {
            n
        } else {
            (p.uncued_fraction * n as f64).round() as usize
        };
        let mut kinds: Vec<Option<usize>> =
            (0..n - n_uncued).map(|i| Some(i % p.cues.len())).collect();
        kinds.extend(std::iter::repeat_n(None, n_uncued));
        shuffle(&mut kinds, &mut rng);

        let mut t = p.margin_s;
        let mut trials = Vec::with_capacity(n);
        for (i, kind) in kinds.into_iter().enumerate() {
            let onset = round_time(t);
            let (trial, end) = match kind {
                Some(c) => {
                    let cue = &p.cues[c];
                    let rewarded = rng.random::<f64>() < cue.reward_prob;
                    let reward_s = rewarded.then(|| round_time(onset + cue.delay_s));
                    let end = onset
                        + p.cue_duration_s.max(if cue.reward_prob > 0.0 {
                            cue.delay_s
                        } else {
                            0.0
                        });
                    let trial = Trial {
                        number: i as i64 + 1,
                        cue: Some(c),
                        cue_s: Some(onset),
                        reward_s,
                        reward_ul: if rewarded { p.reward_ul } else { 0.0 },
                        ..Default::default()
                    };
                    (trial, end)
                }
                None => (
                    Trial {
                        number: i as i64 + 1,
                        cue: None,
                        cue_s: None,
                        reward_s: Some(onset),
                        reward_ul: p.reward_ul,
                        ..Default::default()
                    },
                    onset,
                ),
            };
            trials.push(trial);
            t = end + p.iti_min_s + gap.sample(&mut rng);
        }
        let last_end = t - p.iti_min_s; // drop the last ITI's minimum, keep its tail
        plans.push(SessionPlan {
            date: format_date(first + day as i64),
            trials,
            end_s: round_time(last_end + p.margin_s),
        });
    }
    Ok(plans)
}

/// The in-memory subject (no recordings yet), sessions named by date.
pub fn to_subject(p: &ScheduleParams, plans: &[SessionPlan]) -> Subject {
    let root = PathBuf::from(&p.subject);
    let cues: Vec<CueDef> = p
        .cues
        .iter()
        .map(|c| CueDef {
            name: c.name.clone(),
            // The brief: omit the delay of a cue that is never rewarded.
            reward_delay_s: (c.reward_prob > 0.0).then_some(c.delay_s),
        })
        .collect();
    let sessions = plans
        .iter()
        .map(|plan| Session {
            dir: root.join(&plan.date),
            name: plan.date.clone(),
            meta: SessionMeta {
                subject: p.subject.clone(),
                date: plan.date.clone(),
                start_time: Some(p.start_time.clone()),
                rig: Some(p.rig.clone()),
                cues: cues.clone(),
            },
            trials: plan.trials.clone(),
            spikes: None,
            licks: None,
            photometry: None,
        })
        .collect();
    Subject { root, sessions }
}

/// Fisher–Yates, written out so the order depends only on the generator's output.
fn shuffle<T>(items: &mut [T], rng: &mut impl Rng) {
    for i in (1..items.len()).rev() {
        let j = rng.random_range(0..=i);
        items.swap(i, j);
    }
}

/// `YYYY-MM-DD` → days since 1970-01-01 (proleptic Gregorian).
pub fn parse_date(text: &str) -> Option<i64> {
    let b = text.as_bytes();
    if b.len() != 10 || b[4] != b'-' || b[7] != b'-' {
        return None;
    }
    let y: i64 = text[0..4].parse().ok()?;
    let m: i64 = text[5..7].parse().ok()?;
    let d: i64 = text[8..10].parse().ok()?;
    if !(1..=12).contains(&m) || d < 1 || d > days_in_month(y, m) {
        return None;
    }
    Some(days_from_civil(y, m, d))
}

pub fn format_date(days: i64) -> String {
    let (y, m, d) = civil_from_days(days);
    format!("{y:04}-{m:02}-{d:02}")
}

fn days_in_month(y: i64, m: i64) -> i64 {
    match m {
        2 if (y % 4 == 0 && y % 100 != 0) || y % 400 == 0 => 29,
        2 => 28,
        4 | 6 | 9 | 11 => 30,
        _ => 31,
    }
}

// Days ↔ civil date: the well-known era-based algorithm (H. Hinnant, "chrono-compatible
// low-level date algorithms"), from memory; round trips are tested below.
fn days_from_civil(y: i64, m: i64, d: i64) -> i64 {
    let y = if m <= 2 { y - 1 } else { y };
    let era = y.div_euclid(400);
    let yoe = y - era * 400;
    let mp = (m + 9) % 12;
    let doy = (153 * mp + 2) / 5 + d - 1;
    let doe = yoe * 365 + yoe / 4 - yoe / 100 + doy;
    era * 146_097 + doe - 719_468
}

fn civil_from_days(z: i64) -> (i64, i64, i64) {
    let z = z + 719_468;
    let era = z.div_euclid(146_097);
    let doe = z - era * 146_097;
    let yoe = (doe - doe / 1460 + doe / 36_524 - doe / 146_096) / 365;
    let doy = doe - (365 * yoe + yoe / 4 - yoe / 100);
    let mp = (5 * doy + 2) / 153;
    let d = doy - (153 * mp + 2) / 5 + 1;
    let m = if mp < 10 { mp + 3 } else { mp - 9 };
    let y = yoe + era * 400 + if m <= 2 { 1 } else { 0 };
    (y, m, d)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn dates_round_trip_and_cross_month_ends() {
        assert_eq!(parse_date("1970-01-01"), Some(0));
        assert_eq!(format_date(parse_date("2026-03-02").unwrap()), "2026-03-02");
        assert_eq!(
            format_date(parse_date("2024-02-28").unwrap() + 1),
            "2024-02-29"
        );
        assert_eq!(
            format_date(parse_date("2026-02-28").unwrap() + 1),
            "2026-03-01"
        );
        assert_eq!(
            format_date(parse_date("2026-12-31").unwrap() + 1),
            "2027-01-01"
        );
        assert_eq!(parse_date("2026-02-29"), None);
        assert_eq!(parse_date("2026-3-2"), None);
        for z in -1000..100_000 {
            assert_eq!(parse_date(&format_date(z)), Some(z));
        }
    }

    #[test]
    fn cue_spec_parses_and_rejects() {
        let c = CueSpec::parse("tone-hi:1:1.5").unwrap();
        assert_eq!(
            (c.name.as_str(), c.reward_prob, c.delay_s),
            ("tone-hi", 1.0, 1.5)
        );
        assert_eq!(CueSpec::parse("tone-lo:0").unwrap().delay_s, 1.5);
        assert!(CueSpec::parse("tone-mid:0.5").is_err());
        assert!(CueSpec::parse("x:a:1").is_err());
        assert!(CueSpec::parse(":1:1").is_err());
    }

    #[test]
    fn schedule_counts_and_spacing() {
        let p = ScheduleParams::default();
        let plans = draw(&p, 3).unwrap();
        assert_eq!(plans.len(), 8);
        assert_eq!(plans[7].date, "2026-03-09");
        for plan in &plans {
            assert_eq!(plan.trials.len(), 120);
            assert_eq!(plan.trials.iter().filter(|t| t.cue.is_none()).count(), 6);
            for c in 0..3 {
                assert_eq!(plan.trials.iter().filter(|t| t.cue == Some(c)).count(), 38);
            }
            // Never-rewarded cue is never rewarded, always-rewarded cue always is.
            assert!(plan
                .trials
                .iter()
                .all(|t| t.cue != Some(2) || t.reward_s.is_none()));
            assert!(plan
                .trials
                .iter()
                .all(|t| t.cue != Some(0) || t.reward_s.is_some()));
            let onsets: Vec<f64> = plan
                .trials
                .iter()
                .map(|t| t.cue_s.or(t.reward_s).unwrap())
                .collect();
            for w in onsets.windows(2) {
                assert!(w[1] - w[0] >= p.iti_min_s, "ITI below minimum");
            }
            assert!(plan.end_s > *onsets.last().unwrap());
        }
    }
}

//! Designs with several cues and rewards per trial (blocking, overexpectation, conditioned
//! inhibition, second-order conditioning, trace cues, several drops), read from a small TOML
//! file of our own format and drawn into trials with events:
//!
//! ```toml
//! [[cue]]
//! name = "tone-a"
//! reward_delay_s = 1.5          # omit for a cue never rewarded
//! [[cue]]
//! name = "light-b"
//! reward_delay_s = 1.5
//!
//! [[phase]]                     # phases run in order, day after day
//! name = "A+"
//! days = 2
//! trials_per_day = 40
//! [[phase.trial]]               # trial types, drawn by weight (default 1)
//! name = "A+"
//! cues = [{ name = "tone-a", at_s = 0.0 }]            # off_s: optional cue offset
//! rewards = [{ at_s = 1.5, size = 3.0, p = 1.0 }]     # p: delivery probability (default 1)
//! ```
//!
//! Times are seconds from the trial's start. A drawn trial keeps its first cue and its first
//! delivered reward in trials.csv and the rest in events.csv; a trial left with no event at
//! all (an uncued reward not delivered) is not written. The schedule never depends on
//! learning; it uses the same ITI rule as [`super::schedule`].

use super::schedule::{format_date, parse_date, ScheduleParams, SessionPlan};
use super::{rng_for, round_time, stream};
use crate::data::{CueDef, EventKind, Session, SessionMeta, Subject, Trial, TrialEvent};
use rand::Rng;
use rand_distr::{Distribution, Exp};
use serde::{Deserialize, Serialize};
use std::path::PathBuf;

#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct Design {
    #[serde(rename = "cue", default)]
    pub cues: Vec<DesignCue>,
    #[serde(rename = "phase")]
    pub phases: Vec<Phase>,
}

#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct DesignCue {
    pub name: String,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub reward_delay_s: Option<f64>,
}

#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct Phase {
    #[serde(default)]
    pub name: String,
    pub days: usize,
    pub trials_per_day: usize,
    #[serde(rename = "trial")]
    pub trial_types: Vec<TrialType>,
}

#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct TrialType {
    pub name: String,
    #[serde(default = "one")]
    pub weight: f64,
    #[serde(default)]
    pub cues: Vec<CueAt>,
    #[serde(default)]
    pub rewards: Vec<RewardAt>,
}

#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct CueAt {
    pub name: String,
    #[serde(default)]
    pub at_s: f64,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub off_s: Option<f64>,
}

#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct RewardAt {
    pub at_s: f64,
    pub size: f64,
    #[serde(default = "one")]
    pub p: f64,
}

fn one() -> f64 {
    1.0
}

impl Design {
    /// Parse and validate a design file's text; errors name the phase and trial type.
    pub fn parse(text: &str) -> Result<Design, super::SimError> {
        let d: Design = toml::from_str(text).map_err(|e| super::SimError::Design {
            line: e
                .span()
                .map(|s| crate::util::line_at(text.as_bytes(), s.start)),
            message: e.message().trim().replace('\n', " "),
        })?;
        d.validate().map_err(|message| super::SimError::Design {
            line: None,
            message,
        })?;
        Ok(d)
    }

    pub fn days(&self) -> usize {
        self.phases.iter().map(|p| p.days).sum()
    }

    fn validate(&self) -> Result<(), String> {
        if self.phases.is_empty() {
            return Err("no [[phase]]".into());
        }
        for (i, c) in self.cues.iter().enumerate() {
            if c.name.trim().is_empty() || self.cues[..i].iter().any(|k| k.name == c.name) {
                return Err(format!(
                    "cue {:?}: names must be non-empty and unique",
                    c.name
                ));
            }
            if c.reward_delay_s
                .is_some_and(|d| !(d.is_finite() && d >= 0.0))
            {
                return Err(format!("cue {:?}: reward_delay_s must be ≥ 0", c.name));
            }
        }
        for p in &self.phases {
            let at = |t: &TrialType| format!("phase {:?}, trial type {:?}", p.name, t.name);
            if p.days == 0 || p.trials_per_day == 0 || p.trial_types.is_empty() {
                return Err(format!(
                    "phase {:?}: needs days ≥ 1, trials_per_day ≥ 1 and a [[phase.trial]]",
                    p.name
                ));
            }
            for t in &p.trial_types {
                if !(t.weight.is_finite() && t.weight > 0.0) {
                    return Err(format!("{}: weight must be > 0", at(t)));
                }
                if t.cues.is_empty() && t.rewards.is_empty() {
                    return Err(format!("{}: no cue and no reward", at(t)));
                }
                for c in &t.cues {
                    if !self.cues.iter().any(|k| k.name == c.name) {
                        return Err(format!("{}: cue {:?} is not declared", at(t), c.name));
                    }
                    let bad_off = c.off_s.is_some_and(|o| !(o.is_finite() && o >= c.at_s));
                    if !(c.at_s.is_finite() && c.at_s >= 0.0) || bad_off {
                        return Err(format!("{}: cue times must be ≥ 0, off_s ≥ at_s", at(t)));
                    }
                }
                let first_cue = t.cues.iter().map(|c| c.at_s).reduce(f64::min);
                for r in &t.rewards {
                    let ok = r.at_s.is_finite()
                        && r.at_s >= first_cue.unwrap_or(0.0)
                        && r.size.is_finite()
                        && r.size > 0.0
                        && (0.0..=1.0).contains(&r.p);
                    if !ok {
                        return Err(format!(
                            "{}: rewards need at_s at or after the first cue, size > 0, p in [0, 1]",
                            at(t)
                        ));
                    }
                }
            }
        }
        Ok(())
    }
}

/// One drawn trial: `None` when nothing at all happened.
fn draw_trial(
    d: &Design,
    t: &TrialType,
    number: i64,
    start: f64,
    rng: &mut impl Rng,
) -> (Option<Trial>, f64) {
    let mut events: Vec<TrialEvent> = Vec::new();
    let mut end = start;
    for c in &t.cues {
        let cue = d.cues.iter().position(|k| k.name == c.name);
        let onset = round_time(start + c.at_s);
        let offset = c.off_s.map(|o| round_time(start + o));
        let delay = cue.and_then(|i| d.cues[i].reward_delay_s).unwrap_or(0.0);
        end = end.max(start + c.at_s + delay).max(offset.unwrap_or(end));
        events.push(TrialEvent {
            kind: EventKind::Cue,
            cue,
            onset_s: onset,
            offset_s: offset,
            size: 0.0,
        });
    }
    for r in &t.rewards {
        // One draw per reward event, delivered or not, so the stream does not depend on p.
        let delivered = rng.random::<f64>() < r.p;
        end = end.max(start + r.at_s);
        if delivered {
            events.push(TrialEvent {
                kind: EventKind::Reward,
                cue: None,
                onset_s: round_time(start + r.at_s),
                offset_s: None,
                size: r.size,
            });
        }
    }
    if events.is_empty() {
        return (None, end);
    }
    let mut trial = Trial {
        number,
        ..Default::default()
    };
    // trials.csv keeps the first cue and the first delivered reward.
    if let Some(i) = events.iter().position(|e| e.kind == EventKind::Cue) {
        let c = events.remove(i);
        trial.cue = c.cue;
        trial.cue_s = Some(c.onset_s);
        trial.cue_off_s = c.offset_s;
    }
    if let Some(i) = events.iter().position(|e| e.kind == EventKind::Reward) {
        let r = events.remove(i);
        trial.reward_s = Some(r.onset_s);
        trial.reward_ul = r.size;
    }
    events.sort_by(|a, b| a.onset_s.total_cmp(&b.onset_s));
    trial.events = events;
    (Some(trial), end)
}

/// Draw every day of every phase. `p` gives the subject, dates, ITI and margins.
pub fn draw(d: &Design, p: &ScheduleParams, seed: u64) -> Result<Vec<SessionPlan>, String> {
    let mut rng = rng_for(seed, stream::SCHEDULE);
    let first = parse_date(&p.start_date).ok_or("bad start date")?;
    let gap = Exp::new(1.0 / (p.iti_mean_s - p.iti_min_s).max(1e-9)).map_err(|e| e.to_string())?;
    let mut plans = Vec::new();
    for phase in &d.phases {
        let total: f64 = phase.trial_types.iter().map(|t| t.weight).sum();
        for _ in 0..phase.days {
            let mut t = p.margin_s;
            let mut trials = Vec::with_capacity(phase.trials_per_day);
            for i in 0..phase.trials_per_day {
                let mut u = rng.random::<f64>() * total;
                let kind = phase
                    .trial_types
                    .iter()
                    .find(|k| {
                        u -= k.weight;
                        u < 0.0
                    })
                    .unwrap_or(&phase.trial_types[phase.trial_types.len() - 1]);
                let (trial, end) = draw_trial(d, kind, i as i64 + 1, round_time(t), &mut rng);
                trials.extend(trial);
                t = end + p.iti_min_s + gap.sample(&mut rng);
            }
            let day = plans.len() as i64;
            plans.push(SessionPlan {
                date: format_date(first + day),
                trials,
                end_s: round_time(t - p.iti_min_s + p.margin_s),
            });
        }
    }
    Ok(plans)
}

/// The in-memory subject of a design (no recordings yet), sessions named by date. Each session
/// declares the cues its trials use (in the design's order), as a lab's own files would.
pub fn to_subject(d: &Design, p: &ScheduleParams, plans: &[SessionPlan]) -> Subject {
    let root = PathBuf::from(&p.subject);
    let sessions = plans
        .iter()
        .map(|plan| {
            let mut used = vec![false; d.cues.len()];
            for t in &plan.trials {
                for c in t
                    .cue
                    .iter()
                    .chain(t.events.iter().filter_map(|e| e.cue.as_ref()))
                {
                    used[*c] = true;
                }
            }
            // Design cue index → this session's cue index.
            let mut map = vec![0; d.cues.len()];
            let mut cues = Vec::new();
            for (i, c) in d.cues.iter().enumerate().filter(|&(i, _)| used[i]) {
                map[i] = cues.len();
                cues.push(CueDef {
                    name: c.name.clone(),
                    reward_delay_s: c.reward_delay_s,
                });
            }
            let mut trials = plan.trials.clone();
            for t in &mut trials {
                t.cue = t.cue.map(|c| map[c]);
                for e in &mut t.events {
                    e.cue = e.cue.map(|c| map[c]);
                }
            }
            Session {
                dir: root.join(&plan.date),
                name: plan.date.clone(),
                meta: SessionMeta {
                    subject: p.subject.clone(),
                    date: plan.date.clone(),
                    start_time: Some(p.start_time.clone()),
                    rig: Some(p.rig.clone()),
                    cues,
                },
                trials,
                spikes: None,
                licks: None,
                photometry: None,
            }
        })
        .collect();
    Subject { root, sessions }
}

#[cfg(test)]
mod tests {
    use super::*;

    const BLOCKING: &str = r#"
[[cue]]
name = "tone-a"
reward_delay_s = 1.5
[[cue]]
name = "light-b"
reward_delay_s = 1.5
[[phase]]
name = "A+"
days = 1
trials_per_day = 10
[[phase.trial]]
name = "A+"
cues = [{ name = "tone-a" }]
rewards = [{ at_s = 1.5, size = 3.0 }]
[[phase]]
name = "AB+"
days = 1
trials_per_day = 10
[[phase.trial]]
name = "AB+"
cues = [{ name = "tone-a" }, { name = "light-b", off_s = 1.0 }]
rewards = [{ at_s = 1.5, size = 2.0 }, { at_s = 2.0, size = 1.0, p = 0.0 }]
"#;

    #[test]
    fn a_blocking_design_draws_compound_trials_with_events() {
        let d = Design::parse(BLOCKING).unwrap();
        let p = ScheduleParams::default();
        let plans = draw(&d, &p, 7).unwrap();
        assert_eq!(plans.len(), 2);
        assert_eq!(plans[1].date, "2026-03-03");
        let t = &plans[1].trials[0];
        assert_eq!(t.cue, Some(0));
        assert_eq!(t.reward_ul, 2.0);
        // light-b rides along in events.csv with its offset; the p = 0 drop never comes.
        assert_eq!(t.events.len(), 1);
        assert_eq!(t.events[0].cue, Some(1));
        let off = t.events[0].offset_s.unwrap();
        assert!((off - t.cue_s.unwrap() - 1.0).abs() < 1e-9, "{off}");
        assert!(plans[0].trials.iter().all(|t| t.events.is_empty()));
        // Same seed, same schedule.
        assert_eq!(draw(&d, &p, 7).unwrap()[1].trials, plans[1].trials);
    }

    #[test]
    fn bad_designs_are_refused_with_their_place() {
        let undeclared = BLOCKING.replace(
            "{ name = \"light-b\", off_s = 1.0 }",
            "{ name = \"odour\" }",
        );
        let e = Design::parse(&undeclared).unwrap_err().to_string();
        assert!(
            e.contains("trial type \"AB+\": cue \"odour\" is not declared"),
            "{e}"
        );
        assert!(Design::parse(&BLOCKING.replace("size = 3.0", "size = 0.0")).is_err());
        assert!(Design::parse(&BLOCKING.replace("days = 1", "dayz = 1")).is_err());
    }
}

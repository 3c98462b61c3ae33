//! `truth.toml`: every parameter that made a simulated subject, so a fit can be scored against
//! it and the subject re-made from it.

use super::{SimConfig, Simulated};
use crate::model::Representation;
use serde::{Deserialize, Serialize};

#[derive(Debug, Clone, Serialize, Deserialize, PartialEq)]
pub struct Truth {
    pub generator: String,
    pub seed: u64,
    pub schedule: ScheduleTruth,
    pub model: ModelTruth,
    pub units: UnitsTruth,
    pub licks: LicksTruth,
    pub photometry: PhotometryTruth,
    /// Present only when faults were injected (`--fault`); the faults themselves are listed
    /// per trial in `faults.csv`.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub faults: Option<FaultsTruth>,
    /// Present only for `--design`: the design file's cues, phases and trial types as read
    /// (the schedule's days then count the design's days, trials_per_day is the largest of
    /// its phases', and its cue list is empty).
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub design: Option<super::design::Design>,
}

#[derive(Debug, Clone, Serialize, Deserialize, PartialEq)]
pub struct FaultsTruth {
    pub file: String,
    /// Injection rate by fault kind: per trial, or per session for unit_lost and
    /// control_decoupled.
    pub rates: std::collections::BTreeMap<String, f64>,
}

#[derive(Debug, Clone, Serialize, Deserialize, PartialEq)]
pub struct ScheduleTruth {
    pub subject: String,
    pub rig: String,
    pub start_date: String,
    pub start_time: String,
    pub days: usize,
    pub trials_per_day: usize,
    pub cue_duration_s: f64,
    pub uncued_fraction: f64,
    pub reward_ul: f64,
    pub iti_mean_s: f64,
    pub iti_min_s: f64,
    pub iti_definition: String,
    pub margin_s: f64,
    pub cue: Vec<CueTruth>,
}

#[derive(Debug, Clone, Serialize, Deserialize, PartialEq)]
pub struct CueTruth {
    pub name: String,
    pub reward_prob: f64,
    pub delay_s: f64,
}

#[derive(Debug, Clone, Serialize, Deserialize, PartialEq)]
pub struct ModelTruth {
    pub alpha: f64,
    /// Per model bin, as `--gamma` takes it.
    pub gamma: f64,
    pub lambda: f64,
    pub dt: f64,
    pub representation: String,
    pub post_s: f64,
    pub reward_magnitude: String,
    #[serde(skip_serializing_if = "Option::is_none")]
    pub microstimulus_m: Option<usize>,
    #[serde(skip_serializing_if = "Option::is_none")]
    pub microstimulus_sigma: Option<f64>,
    #[serde(skip_serializing_if = "Option::is_none")]
    pub microstimulus_decay_per_50ms: Option<f64>,
}

#[derive(Debug, Clone, Serialize, Deserialize, PartialEq)]
pub struct UnitsTruth {
    pub count: usize,
    pub rate_rule: String,
    pub baseline_min_hz: f64,
    pub baseline_max_hz: f64,
    pub gain_min: f64,
    pub gain_max: f64,
    pub latency_s: f64,
    pub unit: Vec<UnitTruth>,
}

#[derive(Debug, Clone, Serialize, Deserialize, PartialEq)]
pub struct UnitTruth {
    pub id: String,
    pub baseline_hz: f64,
    /// Extra spikes/s per µL of δ.
    pub gain: f64,
}

#[derive(Debug, Clone, Serialize, Deserialize, PartialEq)]
pub struct LicksTruth {
    pub rule: String,
    pub theta_ul: f64,
    pub upsilon: f64,
    pub hz_per_ul: f64,
    pub max_anticipatory_hz: f64,
    pub first_lick_min_s: f64,
    pub first_lick_mean_s: f64,
    pub bout_hz: f64,
    pub bout_interval_sd_s: f64,
    pub bout_min_s: f64,
    pub bout_max_s: f64,
    pub spontaneous_hz: f64,
    pub refractory_s: f64,
}

#[derive(Debug, Clone, Serialize, Deserialize, PartialEq)]
pub struct PhotometryTruth {
    pub enabled: bool,
    #[serde(skip_serializing_if = "Option::is_none")]
    pub rate_hz: Option<f64>,
    #[serde(skip_serializing_if = "Option::is_none")]
    pub f0_signal: Option<f64>,
    #[serde(skip_serializing_if = "Option::is_none")]
    pub f0_control: Option<f64>,
    #[serde(skip_serializing_if = "Option::is_none")]
    pub amp_per_ul: Option<f64>,
    #[serde(skip_serializing_if = "Option::is_none")]
    pub tau_rise_s: Option<f64>,
    #[serde(skip_serializing_if = "Option::is_none")]
    pub tau_decay_s: Option<f64>,
    #[serde(skip_serializing_if = "Option::is_none")]
    pub latency_s: Option<f64>,
    #[serde(skip_serializing_if = "Option::is_none")]
    pub noise_frac: Option<f64>,
    #[serde(skip_serializing_if = "Option::is_none")]
    pub bleaching_fraction: Option<f64>,
    #[serde(skip_serializing_if = "Option::is_none")]
    pub bleaching_tau_s: Option<f64>,
    #[serde(skip_serializing_if = "Option::is_none")]
    pub motion_per_minute: Option<f64>,
    #[serde(skip_serializing_if = "Option::is_none")]
    pub motion_max_depth: Option<f64>,
    #[serde(skip_serializing_if = "Option::is_none")]
    pub motion_duration_s: Option<f64>,
}

impl Truth {
    pub fn of(sim: &Simulated) -> Truth {
        let c: &SimConfig = &sim.config;
        let s = &c.schedule;
        let ms = match c.td.representation {
            Representation::Microstimulus(p) => Some(p),
            _ => None,
        };
        let l = &c.licks;
        let ph = c.photometry.as_ref();
        Truth {
            generator: format!("trialdesk simulate {}", env!("CARGO_PKG_VERSION")),
            seed: c.seed,
            schedule: ScheduleTruth {
                subject: s.subject.clone(),
                rig: s.rig.clone(),
                start_date: s.start_date.clone(),
                start_time: s.start_time.clone(),
                days: c.design.as_ref().map_or(s.days, |d| d.days()),
                trials_per_day: s.trials_per_day,
                cue_duration_s: s.cue_duration_s,
                uncued_fraction: s.uncued_fraction,
                reward_ul: s.reward_ul,
                iti_mean_s: s.iti_mean_s,
                iti_min_s: s.iti_min_s,
                iti_definition: "end of trial (reward, expected reward or cue offset) to next \
                                 onset: min + exponential(mean - min)"
                    .into(),
                margin_s: s.margin_s,
                cue: s
                    .cues
                    .iter()
                    .filter(|_| c.design.is_none())
                    .map(|q| CueTruth {
                        name: q.name.clone(),
                        reward_prob: q.reward_prob,
                        delay_s: q.delay_s,
                    })
                    .collect(),
            },
            model: ModelTruth {
                alpha: c.td.alpha,
                gamma: c.td.gamma,
                lambda: c.td.lambda,
                dt: c.td.dt,
                representation: c.td.representation.name().into(),
                post_s: crate::model::POST_S,
                reward_magnitude: "reward_ul (µL)".into(),
                microstimulus_m: ms.map(|p| p.m),
                microstimulus_sigma: ms.map(|p| p.sigma),
                microstimulus_decay_per_50ms: ms.map(|p| p.decay_per_50ms),
            },
            units: UnitsTruth {
                count: c.units.count,
                rate_rule: "Poisson; rate = max(0, baseline_hz + gain * delta_k) over model bin k \
                            shifted by latency_s, baseline_hz elsewhere"
                    .into(),
                baseline_min_hz: c.units.baseline_min_hz,
                baseline_max_hz: c.units.baseline_max_hz,
                gain_min: c.units.gain_min,
                gain_max: c.units.gain_max,
                latency_s: c.units.latency_s,
                unit: sim
                    .units
                    .iter()
                    .map(|u| UnitTruth {
                        id: u.id.clone(),
                        baseline_hz: u.baseline_hz,
                        gain: u.gain,
                    })
                    .collect(),
            },
            licks: LicksTruth {
                rule: "anticipatory: a_k = upsilon*a_(k-1) + max(0, V_(k-1) - theta_ul), rate = \
                       min(max_anticipatory_hz, hz_per_ul*(1 - upsilon)*a_k) from cue onset to \
                       reward; consummatory bout after each reward; spontaneous Poisson"
                    .into(),
                theta_ul: l.theta_ul,
                upsilon: l.upsilon,
                hz_per_ul: l.hz_per_ul,
                max_anticipatory_hz: l.max_anticipatory_hz,
                first_lick_min_s: l.first_lick_min_s,
                first_lick_mean_s: l.first_lick_mean_s,
                bout_hz: l.bout_hz,
                bout_interval_sd_s: l.bout_interval_sd_s,
                bout_min_s: l.bout_min_s,
                bout_max_s: l.bout_max_s,
                spontaneous_hz: l.spontaneous_hz,
                refractory_s: l.refractory_s,
            },
            photometry: PhotometryTruth {
                enabled: ph.is_some(),
                rate_hz: ph.map(|p| p.rate_hz),
                f0_signal: ph.map(|p| p.f0_signal),
                f0_control: ph.map(|p| p.f0_control),
                amp_per_ul: ph.map(|p| p.amp_per_ul),
                tau_rise_s: ph.map(|p| p.tau_rise_s),
                tau_decay_s: ph.map(|p| p.tau_decay_s),
                latency_s: ph.map(|p| p.latency_s),
                noise_frac: ph.map(|p| p.noise_frac),
                bleaching_fraction: ph.and_then(|p| p.bleaching.as_ref().map(|b| b.fraction)),
                bleaching_tau_s: ph.and_then(|p| p.bleaching.as_ref().map(|b| b.tau_s)),
                motion_per_minute: ph.and_then(|p| p.motion.as_ref().map(|m| m.per_minute)),
                motion_max_depth: ph.and_then(|p| p.motion.as_ref().map(|m| m.max_depth)),
                motion_duration_s: ph.and_then(|p| p.motion.as_ref().map(|m| m.duration_s)),
            },
            faults: c.faults.any().then(|| FaultsTruth {
                file: super::writer::FAULTS_FILE.into(),
                rates: super::FaultKind::ALL
                    .iter()
                    .map(|&k| (k.name().to_string(), c.faults.rate(k)))
                    .filter(|(_, r)| *r > 0.0)
                    .collect(),
            }),
            design: c.design.clone(),
        }
    }

    pub fn to_toml(&self) -> String {
        let body = toml::to_string(self).expect("plain tables serialise");
        format!(
            "# Every parameter of this simulated subject (trialdesk simulate).\n\
             # gamma and lambda are per model bin of dt seconds; rewards and delta are in uL.\n\n{body}"
        )
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::simulate::photometry::{Bleaching, Motion};
    use crate::simulate::{simulate, PhotometryParams};

    #[test]
    fn truth_reads_back_to_the_same_parameters() {
        let mut c = SimConfig::default();
        c.schedule.days = 1;
        c.schedule.trials_per_day = 5;
        c.td.representation = Representation::parse("microstimulus").unwrap();
        c.photometry = Some(PhotometryParams {
            bleaching: Some(Bleaching {
                fraction: 0.3,
                tau_s: 900.0,
            }),
            motion: Some(Motion {
                per_minute: 1.0,
                max_depth: 0.2,
                duration_s: 1.0,
            }),
            ..Default::default()
        });
        c.faults.rates = vec![
            (crate::simulate::FaultKind::ValveFailure, 0.1),
            (crate::simulate::FaultKind::Dropout, 0.0),
        ];
        let truth = Truth::of(&simulate(&c).unwrap());
        let back: Truth = toml::from_str(&truth.to_toml()).unwrap();
        assert_eq!(back, truth);
        // Only the faults that were on are listed.
        let rates = &back.faults.as_ref().unwrap().rates;
        assert_eq!(rates.keys().collect::<Vec<_>>(), ["valve_failure"]);
        assert_eq!(back.model.microstimulus_m, Some(20));
        assert_eq!(back.units.unit.len(), 6);
    }
}

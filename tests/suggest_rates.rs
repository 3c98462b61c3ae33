//! Each suggestion rule scored on simulated subjects with faults of its kind injected
//! (`trialdesk simulate --fault`): hit rate = injected trials the rule flags / injected trials;
//! false-alarm rate = other eligible trials it flags / other eligible trials. The simulator
//! records every injected fault, so the answer is known. Run with `--nocapture` to see the
//! measured figures; the asserted bounds are what we can honestly hold across random seeds,
//! stated beside each case.

use std::collections::BTreeSet;
use trialdesk::data::Session;
use trialdesk::simulate::photometry::Bleaching;
use trialdesk::simulate::{simulate, FaultKind, PhotometryParams, SimConfig, Simulated};
use trialdesk::suggest::{suggest_session, RuleSet};

/// Which trials a rule can judge at all.
#[derive(Clone, Copy)]
enum Eligible {
    All,
    Rewarded,
}

struct Score {
    hits: usize,
    injected: usize,
    false_alarms: usize,
    clean: usize,
}

impl Score {
    fn hit_rate(&self) -> f64 {
        self.hits as f64 / self.injected.max(1) as f64
    }
    fn fa_rate(&self) -> f64 {
        self.false_alarms as f64 / self.clean.max(1) as f64
    }
}

fn eligible(session: &Session, e: Eligible) -> Vec<i64> {
    session
        .trials
        .iter()
        .filter(|t| match e {
            Eligible::All => true,
            Eligible::Rewarded => t.reward_s.is_some(),
        })
        .map(|t| t.number)
        .collect()
}

/// Score `rule` against the injected faults of `kinds` (a session-level fault counts on every
/// trial of its session).
fn score(sim: &Simulated, rule: &str, kinds: &[FaultKind], e: Eligible) -> Score {
    let rules = RuleSet::default();
    let mut s = Score {
        hits: 0,
        injected: 0,
        false_alarms: 0,
        clean: 0,
    };
    for (si, session) in sim.subject.sessions.iter().enumerate() {
        let mut truth: BTreeSet<i64> = BTreeSet::new();
        for f in sim
            .faults
            .iter()
            .filter(|f| f.session == si && kinds.contains(&f.kind))
        {
            match f.trial {
                Some(t) => {
                    truth.insert(t);
                }
                None => truth.extend(session.trials.iter().map(|t| t.number)),
            }
        }
        let flagged: BTreeSet<i64> = suggest_session(session, &rules)
            .into_iter()
            .filter(|x| x.rule == rule)
            .map(|x| x.trial)
            .collect();
        for t in eligible(session, e) {
            match (truth.contains(&t), flagged.contains(&t)) {
                (true, hit) => {
                    s.injected += 1;
                    s.hits += hit as usize;
                }
                (false, fa) => {
                    s.clean += 1;
                    s.false_alarms += fa as usize;
                }
            }
        }
    }
    eprintln!(
        "{rule:>16}: hit {}/{} = {:.3}, false alarm {}/{} = {:.4}",
        s.hits,
        s.injected,
        s.hit_rate(),
        s.false_alarms,
        s.clean,
        s.fa_rate()
    );
    s
}

fn config(seed: u64, days: usize, faults: &[(FaultKind, f64)]) -> SimConfig {
    let mut c = SimConfig {
        seed,
        ..Default::default()
    };
    c.schedule.days = days;
    c.units.count = 0;
    c.faults.rates = faults.to_vec();
    c
}

fn with_photometry(mut c: SimConfig) -> SimConfig {
    c.photometry = Some(PhotometryParams {
        // Real recordings bleach; the control-fit rule needs the drift to judge the fit.
        bleaching: Some(Bleaching {
            fraction: 0.3,
            tau_s: 900.0,
        }),
        ..Default::default()
    });
    c
}

#[test]
fn baseline_licks_rule() {
    let sim = simulate(&config(11, 6, &[(FaultKind::BaselineLicks, 0.1)])).unwrap();
    let s = score(
        &sim,
        "baseline_licks",
        &[FaultKind::BaselineLicks],
        Eligible::All,
    );
    // An injected burst puts ≥ 3 licks in the 1 s window; 2 spontaneous licks (0.05/s) in one
    // second have probability ≈ 0.001.
    assert!(s.injected >= 50);
    assert!(s.hit_rate() >= 0.98, "hit {}", s.hit_rate());
    assert!(s.fa_rate() <= 0.01, "fa {}", s.fa_rate());
}

#[test]
fn no_consumption_rule() {
    let sim = simulate(&config(12, 6, &[(FaultKind::ValveFailure, 0.1)])).unwrap();
    let s = score(
        &sim,
        "no_consumption",
        &[FaultKind::ValveFailure],
        Eligible::Rewarded,
    );
    // Without a bout only spontaneous licks remain (≥ 3 in 2 s: probability ≈ 1.5e-4).
    assert!(s.injected >= 30);
    assert!(s.hit_rate() >= 0.98, "hit {}", s.hit_rate());
    assert!(s.fa_rate() <= 0.01, "fa {}", s.fa_rate());
}

#[test]
fn late_first_lick_rule() {
    let sim = simulate(&config(13, 6, &[(FaultKind::LateFirstLick, 0.1)])).unwrap();
    let s = score(
        &sim,
        "late_first_lick",
        &[FaultKind::LateFirstLick],
        Eligible::Rewarded,
    );
    eprintln!(
        "late_first_lick: hit {:.3} ({} injected), false alarms {:.4} ({} clean)",
        s.hit_rate(),
        s.injected,
        s.fa_rate(),
        s.clean
    );
    // Injected: no lick for 0.4-1.2 s after the reward. The simulator's own first lick comes
    // 0.05 s + exponential(mean 0.1 s) after it, so the injected gaps overlap the clean tail:
    // even a known-distribution limit with < 2 % false alarms (0.44 s, closed form) misses
    // ~5 %. Estimated per type from 10-40 trials (median + 5 robust SDs), a Monte Carlo study
    // (tests/fixtures/suggest/late_lick_limits.py) gives false alarms 0.8-1.7 % and hits
    // 0.73-0.83; uncued rewards here (~6 a session, under min_trials) are not judged at all,
    // which lowers the overall hit rate further (measured 0.67).
    assert!(s.injected >= 30);
    assert!(s.hit_rate() >= 0.6, "hit {}", s.hit_rate());
    assert!(s.fa_rate() <= 0.02, "fa {}", s.fa_rate());
}

#[test]
fn reward_too_soon_rule() {
    let sim = simulate(&config(14, 6, &[(FaultKind::RewardTooSoon, 0.3)])).unwrap();
    let s = score(
        &sim,
        "reward_too_soon",
        &[FaultKind::RewardTooSoon],
        Eligible::Rewarded,
    );
    // The schedule's ITI is ≥ 6 s, so only injected rewards come < 3 s after another.
    assert!(s.injected >= 20);
    assert_eq!(s.hit_rate(), 1.0);
    assert_eq!(s.false_alarms, 0);
}

#[test]
fn unit_drift_rule() {
    let mut c = config(15, 12, &[(FaultKind::UnitLost, 1.0)]);
    c.units.count = 8;
    let sim = simulate(&c).unwrap();
    let s = score(&sim, "unit_drift", &[FaultKind::UnitLost], Eligible::All);
    // The smoothing window (5 trials) blurs the loss point, so the trial or two on either
    // side of it can be missed or flagged early.
    assert!(s.injected >= 200);
    assert!(s.hit_rate() >= 0.9, "hit {}", s.hit_rate());
    assert!(s.fa_rate() <= 0.02, "fa {}", s.fa_rate());
}

#[test]
fn control_motion_rule() {
    let sim = simulate(&with_photometry(config(
        16,
        4,
        &[(FaultKind::TrialMotion, 0.1)],
    )))
    .unwrap();
    let s = score(
        &sim,
        "control_motion",
        &[FaultKind::TrialMotion],
        Eligible::All,
    );
    // Dips of 3-20 % against a 2 % limit and 0.4 % sample noise.
    assert!(s.injected >= 30);
    assert!(s.hit_rate() >= 0.95, "hit {}", s.hit_rate());
    assert!(s.fa_rate() <= 0.01, "fa {}", s.fa_rate());
}

#[test]
fn control_fit_poor_rule() {
    let sim = simulate(&with_photometry(config(
        17,
        10,
        &[(FaultKind::ControlDecoupled, 0.4)],
    )))
    .unwrap();
    let s = score(
        &sim,
        "control_fit_poor",
        &[FaultKind::ControlDecoupled],
        Eligible::All,
    );
    // Session level: every trial of a decoupled session, none of a healthy one.
    assert!(s.injected >= 120 && s.clean >= 120);
    assert_eq!(s.hit_rate(), 1.0);
    assert_eq!(s.false_alarms, 0);
}

#[test]
fn signal_clipped_rule() {
    let faults = [(FaultKind::Saturation, 0.05), (FaultKind::Dropout, 0.05)];
    let sim = simulate(&with_photometry(config(18, 4, &faults))).unwrap();
    let s = score(
        &sim,
        "signal_clipped",
        &[FaultKind::Saturation, FaultKind::Dropout],
        Eligible::All,
    );
    // Flat runs of ≥ 4 identical 5-decimal samples do not occur in 0.4 % noise.
    assert!(s.injected >= 30);
    assert!(s.hit_rate() >= 0.95, "hit {}", s.hit_rate());
    assert!(s.fa_rate() <= 0.01, "fa {}", s.fa_rate());
}

/// Every rule on clean subjects (no faults, photometry with bleaching, 6 units; three seeds,
/// one with a larger share of uncued rewards): the false-alarm floor a reviewer sees on good
/// data. The target is under 2 % for every rule; the figures are printed.
#[test]
fn clean_subject_false_alarms() {
    let rules = [
        ("baseline_licks", Eligible::All),
        ("no_consumption", Eligible::Rewarded),
        ("late_first_lick", Eligible::Rewarded),
        ("reward_too_soon", Eligible::Rewarded),
        ("unit_drift", Eligible::All),
        ("control_motion", Eligible::All),
        ("control_fit_poor", Eligible::All),
        ("signal_clipped", Eligible::All),
    ];
    let mut totals = vec![(0usize, 0usize); rules.len()];
    for (seed, uncued) in [(19, None), (20, None), (21, Some(0.25))] {
        let mut c = with_photometry(config(seed, 4, &[]));
        c.units.count = 6;
        if let Some(p) = uncued {
            c.schedule.uncued_fraction = p;
        }
        let sim = simulate(&c).unwrap();
        for (i, (rule, e)) in rules.iter().enumerate() {
            let s = score(&sim, rule, &[], *e);
            totals[i].0 += s.false_alarms;
            totals[i].1 += s.clean;
        }
    }
    for ((rule, _), (fa, n)) in rules.iter().zip(&totals) {
        let rate = *fa as f64 / (*n).max(1) as f64;
        eprintln!("clean subjects: {rule}: {fa} of {n} trials flagged ({rate:.4})");
        assert!(*n >= 300, "{rule}: only {n} eligible trials");
        assert!(
            rate < 0.02,
            "{rule}: false-alarm rate {rate:.4} (target < 0.02)"
        );
    }
}

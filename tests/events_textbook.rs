//! Trials with several cues and rewards (the "Trial events" extension) against published
//! results: Rescorla–Wagner closed forms for blocking, overexpectation and conditioned
//! inhibition, and the CSC TD fixed point on the same designs. Each check names its source.
//! Subjects are built in memory and run through the same layout, TD and RW code as
//! `trialdesk model` and `fit`.

mod model_support;

use model_support::*;
use trialdesk::data::{EventKind, Subject, Trial, TrialEvent};
use trialdesk::model::{layout_subject, run, rw, Representation, TdParams};

const DT: f64 = 0.05;

/// A trial made only of events: cues (cue index, onset s after the trial start) and rewards
/// (time s after the start, size). Trials are 20 s apart.
fn trial(number: i64, cues: &[(usize, f64)], rewards: &[(f64, f64)]) -> Trial {
    let t = 20.0 * number as f64;
    let mut events: Vec<TrialEvent> = cues
        .iter()
        .map(|&(c, at)| TrialEvent {
            kind: EventKind::Cue,
            cue: Some(c),
            onset_s: t + at,
            offset_s: None,
            size: 0.0,
        })
        .collect();
    events.extend(rewards.iter().map(|&(at, size)| TrialEvent {
        kind: EventKind::Reward,
        cue: None,
        onset_s: t + at,
        offset_s: None,
        size,
    }));
    Trial {
        number,
        events,
        ..Default::default()
    }
}

/// A block of trials: cues (index, onset s), rewards (time s, size), repetitions.
type Phase = (&'static [(usize, f64)], &'static [(f64, f64)], usize);

/// One session of the given phases, in order: (cues, rewards, repetitions). Cues A, B, X
/// (indices 0, 1, 2), A and B rewarded 1 s after onset, X never.
fn design(phases: &[Phase]) -> Subject {
    let mut trials = Vec::new();
    for &(cues, rewards, n) in phases {
        for _ in 0..n {
            trials.push(trial(trials.len() as i64 + 1, cues, rewards));
        }
    }
    let cues = vec![
        cue("tone-a", Some(1.0)),
        cue("light-b", Some(1.0)),
        cue("noise-x", None),
    ];
    subject(vec![session("2026-05-01", "2026-05-01", cues, trials)])
}

const A: &[(usize, f64)] = &[(0, 0.0)];
const B: &[(usize, f64)] = &[(1, 0.0)];
const AB: &[(usize, f64)] = &[(0, 0.0), (1, 0.0)];
const AX: &[(usize, f64)] = &[(0, 0.0), (2, 0.0)];
const BX: &[(usize, f64)] = &[(1, 0.0), (2, 0.0)];
const REWARD: &[(f64, f64)] = &[(1.0, 1.0)];
const NONE: &[(f64, f64)] = &[];

/// Σ V of the last trial's cues before its update (rw::run's `value`).
fn rw_last_value(s: &Subject, rate: f64) -> f64 {
    let spans = layout_subject(s, DT);
    rw::run(&spans, 3, rate).last().unwrap().value
}

// ---------- Rescorla & Wagner (1972): closed forms of ΔV_X = α(λ − Σ V_present) ----------

/// A alone n times: V_A = λ(1 − (1 − α)^n). A compound trial moves Σ by 2α(λ − Σ), so after m
/// compound trials λ − Σ_m = (1 − 2α)^m (λ − Σ_0) and each cue has gained half of Σ_m − Σ_0.
fn compound_gain(sum0: f64, alpha: f64, m: i32) -> f64 {
    (1.0 - sum0) * (1.0 - (1.0 - 2.0 * alpha).powi(m)) / 2.0
}

#[test]
fn rw_blocking_b_gains_nothing_after_a_is_trained() {
    // Rescorla & Wagner (1972), blocking (Kamin 1969): A+ then AB+, test B.
    let (alpha, n, m): (f64, i32, usize) = (0.2, 60, 30);
    let v_a: f64 = 1.0 - (1.0 - alpha).powi(n);
    let blocked = design(&[(A, REWARD, n as usize), (AB, REWARD, m), (B, NONE, 1)]);
    let control = design(&[(AB, REWARD, m), (B, NONE, 1)]);
    let want_blocked = compound_gain(v_a, alpha, m as i32);
    let want_control = compound_gain(0.0, alpha, m as i32);
    assert!((rw_last_value(&blocked, alpha) - want_blocked).abs() < 1e-12);
    assert!((rw_last_value(&control, alpha) - want_control).abs() < 1e-12);
    // Exact values: B ≈ 7e-7 blocked, ≈ λ/2 without the A+ phase.
    assert!(want_blocked < 1e-6, "{want_blocked}");
    assert!((want_control - 0.5).abs() < 1e-6, "{want_control}");
}

#[test]
fn rw_overexpectation_drives_both_cues_toward_half_lambda() {
    // Rescorla & Wagner (1972), overexpectation: A+ and B+ to asymptote, then AB+ → λ/2 each.
    let (alpha, n, m): (f64, i32, usize) = (0.2, 60, 40);
    let v0: f64 = 1.0 - (1.0 - alpha).powi(n);
    let s = design(&[
        (A, REWARD, n as usize),
        (B, REWARD, n as usize),
        (AB, REWARD, m),
        (A, NONE, 1),
    ]);
    // Σ_0 = 2·v0 > λ: the compound gain is negative, the same for both cues.
    let want = v0 + compound_gain(2.0 * v0, alpha, m as i32);
    let got = rw_last_value(&s, alpha);
    assert!((got - want).abs() < 1e-12, "{got} vs {want}");
    assert!(got < v0 - 0.4, "A lost strength: {got}");
    assert!((got - 0.5).abs() < 1e-6, "toward λ/2: {got}");
}

#[test]
fn rw_conditioned_inhibition_makes_x_negative_and_bx_below_b() {
    // Rescorla & Wagner (1972), conditioned inhibition: A+ / AX− alternating, B+ apart;
    // summation probe BX < B. Exact values from the recurrences, iterated by hand here.
    let alpha = 0.1;
    let (mut a, mut b, mut x) = (0.0f64, 0.0f64, 0.0f64);
    let mut phases: Vec<Phase> = Vec::new();
    for _ in 0..100 {
        a += alpha * (1.0 - a);
        let e = 0.0 - (a + x);
        a += alpha * e;
        x += alpha * e;
        b += alpha * (1.0 - b);
        phases.extend([(A, REWARD, 1), (AX, NONE, 1), (B, REWARD, 1)]);
    }
    let mut probe_bx = phases.clone();
    probe_bx.push((BX, NONE, 1));
    let mut probe_b = phases;
    probe_b.push((B, NONE, 1));
    let bx = rw_last_value(&design(&probe_bx), alpha);
    let b_alone = rw_last_value(&design(&probe_b), alpha);
    assert!((bx - (b + x)).abs() < 1e-12, "{bx} vs {}", b + x);
    assert!((b_alone - b).abs() < 1e-12);
    assert!(x < -0.5, "X is an inhibitor: {x}");
    assert!(bx < b_alone - 0.5, "summation: BX {bx} < B {b_alone}");
}

// ---------- TD, CSC, λ = 0 (Sutton & Barto 2018 ch. 14 convention) ----------

fn td_last_delta(s: &Subject, gamma: f64) -> Vec<f64> {
    let spans = layout_subject(s, DT);
    let p = TdParams {
        alpha: 0.5,
        gamma,
        lambda: 0.0,
        dt: DT,
        representation: Representation::Csc,
    };
    let r = run(&spans, 3, &p);
    r.trial_delta(spans.len() - 1).to_vec()
}

#[test]
fn td_blocked_cue_onset_stays_near_zero_while_a_control_cue_reaches_gamma_n_r() {
    // CSC fixed point: with reward r in bin n after the cue, V_k = γ^(n−1−k)·r, so the onset
    // δ_0 = γ·V_0 = γ^n·r (closed form). Blocking in TD (Sutton & Barto 1990 account): once A
    // predicts the reward, AB trials leave no error for B to learn from.
    let gamma: f64 = 0.9;
    let blocked = design(&[(A, REWARD, 300), (AB, REWARD, 300), (B, NONE, 1)]);
    let control = design(&[(B, REWARD, 300), (B, NONE, 1)]);
    let want = gamma.powi(20); // reward 1.0 s = 20 bins after onset, r = 1
    let c = td_last_delta(&control, gamma)[0];
    assert!(
        (c - want).abs() < 1e-9,
        "control onset δ {c} vs γ^20 = {want}"
    );
    let b = td_last_delta(&blocked, gamma)[0];
    assert!(b.abs() < 1e-3 * want, "blocked onset δ {b}");
}

#[test]
fn td_two_drops_give_the_sum_of_discounted_sizes_at_the_cue() {
    // Closed form of the CSC fixed point (Sutton & Barto 2018 ch. 14 convention): drops r1 at
    // n1 bins and r2 at n2 bins after the cue → onset δ = γ^n1·r1 + γ^n2·r2.
    let gamma: f64 = 0.9;
    let drops: &[(f64, f64)] = &[(0.5, 1.0), (1.0, 2.0)];
    let s = design(&[(A, drops, 400)]);
    let want = gamma.powi(10) * 1.0 + gamma.powi(20) * 2.0;
    let d = td_last_delta(&s, gamma);
    assert!((d[0] - want).abs() < 1e-9, "{} vs {want}", d[0]);
    // Both drops fully predicted at asymptote.
    assert!(
        d[10].abs() < 1e-9 && d[20].abs() < 1e-9,
        "{} {}",
        d[10],
        d[20]
    );
}

#[test]
fn td_second_order_conditioning_gives_b_a_positive_onset_delta() {
    // Second-order conditioning (Sutton & Barto 1990 account): after A+, B → A pairings
    // without reward make B predict A's value, so B alone now has a positive onset δ. The
    // control has the same B → A pairings without the A+ phase: B's onset δ stays 0.
    let gamma: f64 = 0.9;
    let serial: &[(usize, f64)] = &[(1, 0.0), (0, 0.25)];
    let trained = design(&[(A, REWARD, 300), (serial, NONE, 12), (B, NONE, 1)]);
    let untrained = design(&[(serial, NONE, 12), (B, NONE, 1)]);
    let d = td_last_delta(&trained, gamma)[0];
    assert!(d > 0.05, "B's onset δ after B → A pairings: {d}");
    assert_eq!(td_last_delta(&untrained, gamma)[0], 0.0);
}

//! The TD learner against published results: a textbook tabular task driven through the very
//! same `Learner` that `trialdesk model` uses, and the established dopamine findings reproduced
//! by the trial-span model. Each check names its source.

mod model_support;

use model_support::*;
use rand::{Rng, SeedableRng};
use rand_chacha::ChaCha8Rng;
use trialdesk::model::{layout_subject, run, Learner, Representation, TdParams, TdRun, TrialSpan};

// ---------- Sutton & Barto (2018), Example 6.2: the five-state random walk ----------

/// States A..E as one-hot features 0..4; the walk starts at C; stepping off the left end pays
/// 0, off the right end 1; γ = 1. Returns the learner after `episodes` episodes.
fn random_walk(learner: &mut Learner, episodes: usize, rng: &mut ChaCha8Rng) {
    for _ in 0..episodes {
        learner.reset_trace();
        let mut s: i32 = 2;
        loop {
            let next = if rng.random_bool(0.5) { s + 1 } else { s - 1 };
            let x_prev = [(s as u32, 1.0)];
            match next {
                -1 => {
                    learner.step(&x_prev, &[], 0.0);
                    break;
                }
                5 => {
                    learner.step(&x_prev, &[], 1.0);
                    break;
                }
                _ => {
                    learner.step(&x_prev, &[(next as u32, 1.0)], 0.0);
                    s = next;
                }
            }
        }
    }
}

/// Tabular TD(0): λ = 0, one-hot features, values initialised to 0.5 through the weights.
fn walk_learner(alpha: f64) -> Learner {
    Learner::with_weights(vec![0.5; 5], alpha, 1.0, 0.0)
}

const TRUE_VALUES: [f64; 5] = [1.0 / 6.0, 2.0 / 6.0, 3.0 / 6.0, 4.0 / 6.0, 5.0 / 6.0];

fn rms_error(w: &[f64]) -> f64 {
    let ss: f64 = w
        .iter()
        .zip(TRUE_VALUES)
        .map(|(v, t)| (v - t).powi(2))
        .sum();
    (ss / 5.0).sqrt()
}

#[test]
fn random_walk_initial_rms_is_sqrt_one_eighteenth() {
    // S&B 2018 Example 6.2: values start at 0.5, true values 1/6..5/6; the RMS error of the
    // starting estimate is √((4+1+0+1+4)/36/5) = √(1/18) = 0.2357 (closed form).
    let learner = walk_learner(0.1);
    assert!((rms_error(learner.weights()) - (1.0f64 / 18.0).sqrt()).abs() < 1e-15);
}

#[test]
fn random_walk_first_episode_moves_exactly_one_value() {
    // S&B 2018 Example 6.2 / Exercise 6.3: with every V = 0.5 and r = 0 inside the walk, every
    // δ inside is 0 + 0.5 − 0.5 = 0; only the exit step has δ = ±0.5, so at α = 0.1 exactly
    // one value moves, by ±0.05: V(A) = 0.45 (left exit) or V(E) = 0.55 (right exit).
    let (mut left, mut right) = (0, 0);
    for seed in 0..200u64 {
        let mut rng = ChaCha8Rng::seed_from_u64(seed);
        let mut learner = walk_learner(0.1);
        random_walk(&mut learner, 1, &mut rng);
        let w = learner.weights();
        let moved: Vec<usize> = (0..5).filter(|&i| w[i] != 0.5).collect();
        assert_eq!(moved.len(), 1, "seed {seed}: {w:?}");
        match moved[0] {
            0 => {
                assert!((w[0] - 0.45).abs() < 1e-15);
                left += 1;
            }
            4 => {
                assert!((w[4] - 0.55).abs() < 1e-15);
                right += 1;
            }
            i => panic!("seed {seed}: state {i} moved: {w:?}"),
        }
    }
    // Both exits occur (p = ½ each); 200 episodes make either count < 60 very unlikely.
    assert!(left > 60 && right > 60, "left {left}, right {right}");
}

#[test]
fn random_walk_values_approach_one_sixth_to_five_sixths() {
    // S&B 2018 Example 6.2: TD(0) estimates approach the true values 1/6..5/6. With constant
    // α the estimate keeps fluctuating, but its mean over runs follows the expected TD update,
    // whose fixed point is the true value. 1000 runs × 200 episodes at α = 0.05: the standard
    // error of each mean is about 0.002, so we hold 0.015.
    let runs = 1000;
    let mut mean = [0.0; 5];
    let mut rms_at_100 = 0.0;
    for seed in 0..runs {
        let mut rng = ChaCha8Rng::seed_from_u64(1000 + seed as u64);
        let mut learner = walk_learner(0.05);
        random_walk(&mut learner, 100, &mut rng);
        rms_at_100 += rms_error(learner.weights()) / runs as f64;
        random_walk(&mut learner, 100, &mut rng);
        for (m, w) in mean.iter_mut().zip(learner.weights()) {
            *m += w / runs as f64;
        }
    }
    for (i, (m, t)) in mean.iter().zip(TRUE_VALUES).enumerate() {
        assert!((m - t).abs() < 0.015, "state {i}: mean {m}, true {t}");
    }
    // S&B 2018 Fig. in Example 6.2 (from memory): TD α = 0.05 is at RMS ≈ 0.05–0.1 after 100
    // episodes, down from 0.236. A band only, not a reproduction of the curve.
    assert!(
        rms_at_100 > 0.02 && rms_at_100 < 0.1,
        "RMS after 100: {rms_at_100}"
    );
}

// ---------- the trial-span model ----------

fn params(repr: Representation, alpha: f64, gamma: f64, lambda: f64) -> TdParams {
    TdParams {
        alpha,
        gamma,
        lambda,
        dt: 0.05,
        representation: repr,
    }
}

fn model(subject: &trialdesk::data::Subject, p: &TdParams) -> (Vec<TrialSpan>, TdRun) {
    let spans = layout_subject(subject, p.dt);
    let traces = run(&spans, subject.cue_names().len(), p);
    (spans, traces)
}

#[test]
fn csc_asymptote_is_discounted_reward() {
    // CSC asymptote (Sutton & Barto 1990; values as in methods.md §3.3). A cue at onset bin 0,
    // a certain reward r entering δ at bin R (here 1.5 s / 0.05 = bin 30, on the bin edge).
    // At the fixed point every δ inside the trial is 0, so for bins k < R:
    //   V(k) = r_{k+1} + γ·V(k+1), with V(R) = 0 (nothing follows the reward)
    //   ⇒ V(k) = γ^(R−1−k)·r: the last bin before the reward holds r itself.
    // Seen from the transition, γ·V(k) = γ^n·r with n = R − k bins to the reward; in
    // particular the cue δ (x₋₁ = 0) is δ_0 = γ·V(0) = γ^R·r. We assert exactly that.
    let (r, gamma) = (2.5, 0.9);
    let subject = one_cue_session(1.5, r, 400, |_| true);
    for lambda in [0.0, 0.9] {
        // Deterministic task: the λ-return equals the one-step target, same fixed point.
        let p = params(Representation::Csc, 0.5, gamma, lambda);
        let (spans, traces) = model(&subject, &p);
        let last = spans.len() - 1;
        assert_eq!(spans[last].reward_bin, Some(30));
        let (v, d) = (traces.trial_value(last), traces.trial_delta(last));
        for (k, vk) in v.iter().enumerate().take(30) {
            let want = gamma.powi(29 - k as i32) * r;
            assert!(
                (vk - want).abs() < 1e-9,
                "λ {lambda} bin {k}: {vk} vs {want}"
            );
        }
        assert!((d[0] - gamma.powi(30) * r).abs() < 1e-9);
        for (k, dk) in d.iter().enumerate().skip(1) {
            assert!(dk.abs() < 1e-9, "λ {lambda}: δ at bin {k} is {dk}");
        }
        assert!(v[30..].iter().all(|x| x.abs() < 1e-9));
    }
}

#[test]
fn schultz_dayan_montague_1997_transfer_and_omission() {
    // Schultz, Dayan & Montague 1997 (Science 275:1593), Fig. 1: before learning the dopamine
    // response (δ) is at the reward; after learning it is at the cue, a predicted reward gives
    // none, and an omitted reward gives a dip at the expected time.
    let n = 300;
    // All rewarded, except the very last trial (an omission probe).
    let subject = one_cue_session(1.0, 1.0, n, |i| i + 1 < n);
    let p = params(Representation::Csc, 0.3, 0.98, 0.0);
    let (spans, traces) = model(&subject, &p);
    let rb = 20;
    // Before learning: δ = 1 at the reward bin, 0 elsewhere.
    let first = traces.trial_delta(0);
    assert_eq!(first[rb], 1.0);
    assert!(first.iter().enumerate().all(|(k, &d)| k == rb || d == 0.0));
    // After learning: δ at the cue ≈ γ^20 = 0.668, at the predicted reward ≈ 0.
    let trained = traces.trial_delta(n - 2);
    assert!(trained[0] > 0.6, "cue δ {}", trained[0]);
    assert!(trained[rb].abs() < 0.01, "reward δ {}", trained[rb]);
    // Omission: a negative δ at the expected reward bin, ≈ −1 under CSC (methods.md §7.2).
    let omitted = traces.trial_delta(n - 1);
    assert_eq!(spans[n - 1].reward_bin, None);
    assert!(omitted[rb] < -0.9, "omission δ {}", omitted[rb]);
    assert!(omitted[0] > 0.6);
}

#[test]
fn schultz_transfer_holds_for_microstimuli() {
    // Same findings under the microstimulus representation (Ludvig, Sutton & Kehoe 2008,
    // Neural Comput 20:3034): cue δ grows, reward δ shrinks, omission gives a dip — shallower
    // and spread out compared with CSC (their Fig. on omission; methods.md §7.2).
    let n = 1500;
    let subject = one_cue_session(1.0, 1.0, n, |i| i + 1 < n);
    let p = params(
        Representation::Microstimulus(Default::default()),
        0.05,
        0.98,
        0.9,
    );
    let (_, traces) = model(&subject, &p);
    let rb = 20;
    let first = traces.trial_delta(0);
    assert_eq!(first[rb], 1.0);
    assert_eq!(first[0], 0.0);
    let trained = traces.trial_delta(n - 2);
    assert!(trained[0] > 0.3, "cue δ {}", trained[0]);
    assert!(trained[rb] < 0.3, "reward δ {}", trained[rb]);
    let omitted = traces.trial_delta(n - 1);
    let dip = omitted[rb - 2..rb + 6]
        .iter()
        .cloned()
        .fold(f64::MAX, f64::min);
    assert!(dip < -0.05 && dip > -0.9, "omission dip {dip}");
}

#[test]
fn fiorillo_tobler_schultz_2003_graded_by_probability() {
    // Fiorillo, Tobler & Schultz 2003 (Science 299:1898): cue responses rise and reward
    // responses fall with reward probability P = 0, .25, .5, .75, 1. Plain TD predicts
    // cue δ = P·γ^n·r and reward δ = (1 − P)·r at asymptote (methods.md §3.3, computed).
    // Five cues, interleaved; each cue's rewards follow a fixed 4-trial pattern (no RNG).
    let probs = [0.0, 0.25, 0.5, 0.75, 1.0];
    let (delay, gamma, r) = (1.0, 0.98, 1.0);
    let cues: Vec<_> = (0..5)
        .map(|c| cue(&format!("tone-{c}"), Some(delay)))
        .collect();
    let mut trials = Vec::new();
    for block in 0..800 {
        for (c, p) in probs.iter().enumerate() {
            let t = 5.0 + 10.0 * trials.len() as f64;
            let hit = (block % 4) < (p * 4.0) as usize;
            trials.push(cued(
                trials.len() as i64 + 1,
                c,
                t,
                hit.then_some((t + delay, r)),
            ));
        }
    }
    let subject = subject(vec![session("2026-03-02", "2026-03-02", cues, trials)]);
    // Small α so values average over the pattern rather than chase each outcome; λ = 0.9 so
    // the value reaches the cue in 800 blocks (tabular TD(λ) has the same fixed point).
    let p = params(Representation::Csc, 0.02, gamma, 0.9);
    let (spans, traces) = model(&subject, &p);
    let (mut cue_d, mut rew_d) = ([0.0; 5], [0.0; 5]);
    let (mut cue_n, mut rew_n) = ([0.0; 5], [0.0; 5]);
    for (i, s) in spans.iter().enumerate().skip(spans.len() - 200) {
        let c = s.cue.unwrap();
        let d = traces.trial_delta(i);
        cue_d[c] += d[0];
        cue_n[c] += 1.0;
        if let Some(rb) = s.reward_bin {
            rew_d[c] += d[rb];
            rew_n[c] += 1.0;
        }
    }
    let expected_cue = |p: f64| p * gamma.powi(20) * r;
    for c in 0..5 {
        let cd = cue_d[c] / cue_n[c];
        assert!(
            (cd - expected_cue(probs[c])).abs() < 0.01,
            "P {}: cue δ {cd}",
            probs[c]
        );
        if c > 0 {
            assert!(
                cd > cue_d[c - 1] / cue_n[c - 1],
                "cue δ not rising at P {}",
                probs[c]
            );
        }
    }
    for c in 1..5 {
        let rd = rew_d[c] / rew_n[c];
        assert!(
            (rd - (1.0 - probs[c]) * r).abs() < 0.01,
            "P {}: reward δ {rd}",
            probs[c]
        );
        if c > 1 {
            assert!(
                rd < rew_d[c - 1] / rew_n[c - 1],
                "reward δ not falling at P {}",
                probs[c]
            );
        }
    }
}

#[test]
fn weights_carry_across_sessions_in_date_order() {
    // Design brief: weights carry across sessions in (date, start_time, folder) order. The
    // same trials split over two sessions — handed over in the wrong order — must give the
    // same traces as one session.
    let all = one_cue_session(1.5, 2.0, 40, |i| i % 5 != 3);
    let trials = all.sessions[0].trials.clone();
    let cues = all.sessions[0].meta.cues.clone();
    let day1 = session("b-day1", "2026-03-02", cues.clone(), trials[..25].to_vec());
    let day2 = session("a-day2", "2026-03-03", cues, trials[25..].to_vec());
    let split = subject(vec![day2, day1]);
    let p = params(Representation::Csc, 0.2, 0.95, 0.8);
    let (_, one) = model(&all, &p);
    let (spans, two) = model(&split, &p);
    assert_eq!(spans[0].session, 1, "day 1 first");
    assert_eq!(one.value, two.value);
    assert_eq!(one.delta, two.delta);
}

#[test]
fn uncued_reward_stays_fully_surprising() {
    // Schultz 1997/2016: an unpredicted reward gives a full response. An uncued reward has no
    // cue features under CSC, so after any amount of cued training its δ is the reward itself.
    let mut s = one_cue_session(1.0, 1.0, 100, |_| true);
    s.sessions[0].trials.push(uncued(101, 2000.0, 3.0));
    let p = params(Representation::Csc, 0.3, 0.98, 0.0);
    let (spans, traces) = model(&s, &p);
    let last = spans.len() - 1;
    assert_eq!(spans[last].reward_bin, Some(0));
    assert_eq!(traces.trial_delta(last)[0], 3.0);
}

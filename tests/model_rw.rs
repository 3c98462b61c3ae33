//! The Rescorla–Wagner baseline against its closed forms and the classic findings
//! (Rescorla & Wagner 1972, Classical Conditioning II pp. 64–99).

mod model_support;

use model_support::*;
use trialdesk::model::rw::{self, RwLearner};
use trialdesk::model::{layout_subject, run, Representation, TdParams};

#[test]
fn acquisition_matches_closed_form_and_worked_values() {
    // Rescorla & Wagner 1972: from V_0 = 0, V_n = λ(1 − (1 − αβ)^n). Worked values from
    // methods.md §3.4 (computed from that closed form).
    let table: [(f64, &[(usize, f64)]); 2] = [
        (
            0.1,
            &[
                (1, 0.1),
                (2, 0.19),
                (3, 0.271),
                (5, 0.40951),
                (10, 0.65132),
                (20, 0.87842),
            ],
        ),
        (
            0.25,
            &[(1, 0.25), (2, 0.4375), (3, 0.578125), (10, 0.94369)],
        ),
    ];
    for (rate, checks) in table {
        let mut l = RwLearner::new(1, rate);
        let mut v = vec![0.0];
        for _ in 0..20 {
            l.trial(&[0], 1.0);
            v.push(l.values()[0]);
        }
        for &(n, want) in checks {
            assert!((v[n] - want).abs() < 5e-6, "αβ {rate} V_{n} = {}", v[n]);
        }
        for (n, vn) in v.iter().enumerate() {
            let closed = 1.0 - (1.0 - rate).powi(n as i32);
            assert!((vn - closed).abs() < 1e-12);
        }
    }
    // A course worked example with λ = 100, αβ = 0.25: 25, 43.75, 57.81 (methods.md §3.4 [R]).
    let mut l = RwLearner::new(1, 0.25);
    let got: Vec<f64> = (0..3)
        .map(|_| {
            l.trial(&[0], 100.0);
            l.values()[0]
        })
        .collect();
    assert_eq!(got[..2], [25.0, 43.75]);
    assert!((got[2] - 57.81).abs() < 0.005);
}

#[test]
fn extinction_matches_closed_form() {
    // Rescorla & Wagner 1972: with the US omitted (λ = 0), V_n = V_0(1 − αβ)^n.
    let (v0, rate) = (0.8, 0.15);
    let mut l = RwLearner::with_values(vec![v0], rate);
    for n in 1..=30 {
        let s = l.trial(&[0], 0.0);
        assert!(
            (s.error + s.prediction).abs() < 1e-15,
            "error is −prediction"
        );
        let closed = v0 * (1.0 - rate).powi(n);
        assert!((l.values()[0] - closed).abs() < 1e-12, "n {n}");
    }
}

#[test]
fn blocking() {
    // Rescorla & Wagner 1972 (Kamin's blocking): after A+ to asymptote, on AB+ trials
    // ΔV_B = αβ(λ − V_A − V_B) ≈ 0, so B gains little; a control B trained from scratch in
    // the compound with a novel C gains about half of λ.
    let rate = 0.2;
    let mut blocked = RwLearner::new(2, rate);
    for _ in 0..100 {
        blocked.trial(&[0], 1.0);
    }
    for _ in 0..20 {
        blocked.trial(&[0, 1], 1.0);
    }
    let mut control = RwLearner::new(2, rate);
    for _ in 0..20 {
        control.trial(&[0, 1], 1.0);
    }
    assert!(
        blocked.values()[1] < 0.01,
        "blocked V_B {}",
        blocked.values()[1]
    );
    assert!(
        control.values()[1] > 0.45,
        "control V_B {}",
        control.values()[1]
    );
}

#[test]
fn probability_asymptote_over_trial_spans() {
    // methods.md §2: at asymptote with reward probability p (λ = 1), V = p, δ_reward = 1 − p,
    // δ_omission = −p. Driven through the same ordered spans as the TD model, p = 0.5 with an
    // alternating pattern and a small rate so V settles near p.
    let subject = one_cue_session(1.5, 1.0, 2000, |i| i % 2 == 0);
    let spans = layout_subject(&subject, 0.05);
    let out = rw::run(&spans, 1, 0.01);
    assert_eq!(out.len(), spans.len());
    let tail = &out[out.len() - 2..];
    // Rewarded then omitted; V oscillates by ±rate/2 around p.
    assert!((tail[0].value - 0.5).abs() < 0.01);
    assert!((tail[0].delta_reward - 0.5).abs() < 0.01);
    assert!((tail[1].delta_reward + 0.5).abs() < 0.01);
    assert_eq!(tail[1].delta_cue, tail[1].value);
}

#[test]
fn uncued_trials_neither_predict_nor_learn() {
    // Decision documented in model::rw: no cue present ⇒ prediction 0, the whole reward is
    // the error, no V changes.
    let mut subject = one_cue_session(1.0, 2.0, 3, |_| true);
    // Trial number 0: layout puts it first, whatever its place in the list.
    subject.sessions[0].trials.insert(1, uncued(0, 2.0, 4.0));
    let spans = layout_subject(&subject, 0.05);
    let out = rw::run(&spans, 1, 0.5);
    assert_eq!(spans[0].cue, None);
    assert_eq!(out[0].value, 0.0);
    assert_eq!(out[0].delta_cue, 0.0);
    assert_eq!(out[0].delta_reward, 4.0);
    // Cued trials: 0 → 1 → 1.5 (λ_US = 2, rate 0.5), untouched by the uncued trial.
    let v: Vec<f64> = out[1..].iter().map(|t| t.value).collect();
    assert_eq!(v, vec![0.0, 1.0, 1.5]);
}

#[test]
fn td_with_one_step_per_trial_and_no_discount_is_rw() {
    // Common practice (methods.md §2; Sutton & Barto 1990): TD with one step per trial and
    // γ = 0 reduces to RW. A two-bin CSC span with the reward entering bin 1 is that one step:
    // δ_1 = r − w·x_0 updates w_0 by α·δ_1, RW's rule with αβ = α.
    let subject = one_cue_session(0.05, 1.0, 50, |i| i % 3 != 1);
    let mut spans = layout_subject(&subject, 0.05);
    for s in &mut spans {
        assert!(s.reward_bin.is_none() || s.reward_bin == Some(1));
        s.n_bins = 2;
    }
    let p = TdParams {
        alpha: 0.3,
        gamma: 0.0,
        lambda: 0.0,
        dt: 0.05,
        representation: Representation::Csc,
    };
    let td = run(&spans, 1, &p);
    let rw = rw::run(&spans, 1, 0.3);
    for (i, t) in rw.iter().enumerate() {
        assert!(
            (td.trial_delta(i)[1] - t.delta_reward).abs() < 1e-15,
            "trial {i}"
        );
    }
}

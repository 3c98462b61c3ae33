//! Day rows on hand-built data: marks, counts, means; CSV cell safety; cohort averaging.

use std::collections::BTreeMap;
use trialdesk::data::{CueDef, Session, SessionMeta, Spikes, Subject, Trial};
use trialdesk::marks::{MarkKind, MarkState, TrialMark};
use trialdesk::obs::{observe, ObsOptions};
use trialdesk::summary::cohort::cohort_rows;
use trialdesk::summary::render::{self, safe_cell, Format, SubjectSummary};
use trialdesk::summary::{day_rows, Mean};

fn trial(number: i64, cue: Option<usize>, cue_s: Option<f64>, reward_s: Option<f64>) -> Trial {
    Trial {
        number,
        cue,
        cue_s,
        reward_s,
        reward_ul: if reward_s.is_some() { 2.0 } else { 0.0 },
        ..Default::default()
    }
}

/// Three rewarded tone-hi trials at 10, 20, 30 s whose cue windows hold 3, 6 and 9 spikes
/// (10, 20, 30 spikes/s; empty baselines), one omission at 40 s and one uncued reward at 50 s.
fn session() -> Session {
    let mut spikes = Vec::new();
    for (t0, n) in [(10.0, 3), (20.0, 6), (30.0, 9)] {
        for i in 0..n {
            spikes.push(t0 + 0.06 + 0.03 * i as f64);
        }
    }
    Session {
        dir: "d1".into(),
        name: "2026-05-01".into(),
        meta: SessionMeta {
            subject: "m-010".into(),
            date: "2026-05-01".into(),
            start_time: None,
            rig: None,
            cues: vec![CueDef {
                name: "tone-hi".into(),
                reward_delay_s: Some(1.0),
            }],
        },
        trials: vec![
            trial(1, Some(0), Some(10.0), Some(11.0)),
            trial(2, Some(0), Some(20.0), Some(21.0)),
            trial(3, Some(0), Some(30.0), Some(31.0)),
            trial(4, Some(0), Some(40.0), None),
            trial(5, None, None, Some(50.0)),
        ],
        spikes: Some(Spikes {
            units: vec!["u1".into()],
            times: vec![spikes],
        }),
        licks: None,
        photometry: None,
    }
}

fn mark(kind: MarkKind, reason: &str) -> TrialMark {
    TrialMark {
        kind,
        reason: reason.into(),
        note: String::new(),
        reviewer: "ak".into(),
        at: "2026-05-02T08:00:00Z".into(),
    }
}

fn close(m: &Mean, want: f64, n: usize) -> bool {
    m.n == n && matches!(m.value, Some(v) if (v - want).abs() < 1e-9)
}

#[test]
fn excluded_trials_count_but_leave_the_means() {
    let subject = Subject {
        root: "m-010".into(),
        sessions: vec![session()],
    };
    let obs = observe(&subject, &ObsOptions::default()).unwrap();
    let mut marks = BTreeMap::new();
    marks.insert(3, mark(MarkKind::Exclude, "artifact"));
    marks.insert(2, mark(MarkKind::Suspect, "valve"));
    // A mark for a trial the session does not have is not counted.
    marks.insert(99, mark(MarkKind::Exclude, "typo"));
    let state = MarkState {
        marks,
        notes: Vec::new(),
    };
    let rows = day_rows(&subject, &obs, &[state], None);
    assert_eq!(rows.len(), 1);
    let r = &rows[0];
    assert_eq!((r.trials, r.excluded, r.suspect), (5, 1, 1));
    assert_eq!(
        (
            r.counts.rewarded,
            r.counts.omission,
            r.counts.unrewarded_cue,
            r.counts.uncued_reward
        ),
        (3, 1, 0, 1)
    );
    // Cue response over trials 1, 2 and the omission trial 4 (0 spikes/s): (10 + 20 + 0)/3;
    // trial 3 (30/s) is excluded. The suspect trial stays in.
    assert_eq!(r.cues.len(), 1);
    assert_eq!(r.cues[0].trials, 4);
    assert!(
        close(&r.cues[0].response, 10.0, 3),
        "{:?}",
        r.cues[0].response
    );
    assert!(close(&r.reward_response, 0.0, 2));
    assert!(close(&r.omission_dip, 0.0, 1));
    assert!(close(&r.uncued_reward_response, 0.0, 1));
    assert_eq!(r.lick_rate, Mean { value: None, n: 0 });
    assert!(r.model.is_none() && r.cues[0].model_delta.is_none());

    // Without marks every trial counts: (10 + 20 + 30 + 0)/4.
    let rows = day_rows(&subject, &obs, &[], None);
    assert!(close(&rows[0].cues[0].response, 15.0, 4));
    assert_eq!(rows[0].excluded, 0);
}

fn summary_with_names(subject: &str, session_name: &str, cue: &str) -> SubjectSummary {
    let mut s = session();
    s.name = session_name.into();
    s.meta.cues[0].name = cue.into();
    let subj = Subject {
        root: "x".into(),
        sessions: vec![s],
    };
    let obs = observe(&subj, &ObsOptions::default()).unwrap();
    SubjectSummary {
        subject: subject.into(),
        rows: day_rows(&subj, &obs, &[], None),
        notes: vec!["a | b".into()],
    }
}

/// OWASP "CSV injection": text cells starting with = + - @ are neutralised; numbers are not.
#[test]
fn csv_text_cells_cannot_become_formulas() {
    assert_eq!(safe_cell("=1+1"), "'=1+1");
    assert_eq!(safe_cell("+SUM(A1)"), "'+SUM(A1)");
    assert_eq!(safe_cell("-2+3"), "'-2+3");
    assert_eq!(safe_cell("@cmd"), "'@cmd");
    assert_eq!(safe_cell("tone-hi"), "tone-hi");
    let s = summary_with_names("=HYPERLINK(\"x\")", "+day1", "@tone");
    let csv = render::render(Format::Csv, &[s], None).unwrap();
    let mut r = csv::Reader::from_reader(csv.as_bytes());
    let recs: Vec<csv::StringRecord> = r.records().map(Result::unwrap).collect();
    assert!(recs
        .iter()
        .all(|r| &r[0] == "'=HYPERLINK(\"x\")" && &r[1] == "'+day1"));
    let cue = recs.iter().find(|r| &r[4] == "cue_response").unwrap();
    assert_eq!(&cue[5], "'@tone");
    assert!(
        (cue[6].parse::<f64>().unwrap() - 15.0).abs() < 1e-9,
        "{cue:?}"
    );
    // Negative values stay numbers.
    let s = summary_with_names("m", "d", "c");
    let mut s2 = s.clone();
    s2.rows[0].omission_dip = Mean {
        value: Some(-1.5),
        n: 1,
    };
    let csv = render::render(Format::Csv, &[s2], None).unwrap();
    assert!(csv.contains(",omission_response,,-1.5,1\n"), "{csv}");
}

#[test]
fn markdown_escapes_pipes() {
    let s = summary_with_names("m|1", "d", "tone|x");
    let md = render::render(Format::Markdown, &[s], None).unwrap();
    assert!(md.contains("## Subject m\\|1"), "{md}");
    assert!(md.contains("cue:tone\\|x"), "{md}");
    assert!(md.contains("- a \\| b"), "{md}");
}

#[test]
fn cohort_averages_subject_day_means() {
    let a = summary_with_names("a", "d", "tone-hi"); // day 1 cue response 15
    let mut b = a.clone();
    b.rows[0].cues[0].response = Mean {
        value: Some(5.0),
        n: 4,
    };
    let mut b2 = b.rows[0].clone();
    b2.day = 2;
    b.rows.push(b2);
    let rows = cohort_rows(&[&a.rows, &b.rows]);
    assert_eq!(rows.len(), 2);
    assert_eq!((rows[0].day, rows[0].subjects), (1, 2));
    assert_eq!(rows[0].cues[0].0, "tone-hi");
    assert!(close(&rows[0].cues[0].1, 10.0, 2));
    assert_eq!((rows[1].day, rows[1].subjects), (2, 1));
    assert!(close(&rows[1].cues[0].1, 5.0, 1));
}

//! The SVG pictures are well-formed XML (parsed with roxmltree), draw one marker or cell per
//! data point, and keep hostile labels (markup, quotes, control characters) as plain text.

use trialdesk::fit::WindowKind;
use trialdesk::obs::{TrialKind, TrialObs, WindowDeltas};
use trialdesk::plots::fit_trials::{FitTrialRow, PREDICTED};
use trialdesk::plots::{self, HeatMap, TrialCurves};
use trialdesk::summary::{CueDay, DayRow, KindCounts, Mean, ModelDay};

const HOSTILE: &str = "tone<hi>&\"'\u{1}]]><script>x</script>";

fn parse(svg: &str) -> roxmltree::Document<'_> {
    roxmltree::Document::parse(svg).unwrap_or_else(|e| panic!("not well-formed XML: {e}"))
}

fn count(doc: &roxmltree::Document, tag: &str) -> usize {
    doc.descendants()
        .filter(|n| n.tag_name().name() == tag)
        .count()
}

/// All text content of `<text>` and `<title>` elements, unescaped by the parser.
fn texts(doc: &roxmltree::Document) -> Vec<String> {
    doc.descendants()
        .filter(|n| matches!(n.tag_name().name(), "text" | "title"))
        .filter_map(|n| n.text())
        .map(|t| t.trim().to_string())
        .collect()
}

fn mean(v: f64) -> Mean {
    Mean {
        value: Some(v),
        n: 10,
    }
}

fn day(d: usize, cue: &str, with_value: bool) -> DayRow {
    DayRow {
        session: format!("2026-03-0{d}"),
        date: format!("2026-03-0{d}"),
        day: d,
        trials: 40,
        counts: KindCounts::default(),
        excluded: 0,
        suspect: 0,
        cues: vec![CueDay {
            cue: cue.to_string(),
            trials: 30,
            response: if with_value {
                mean(d as f64)
            } else {
                Mean::default()
            },
            lick_rate: mean(1.0),
            model_delta: Some(mean(0.1 * d as f64)),
        }],
        reward_response: mean(5.0 - d as f64),
        uncued_reward_response: mean(5.0),
        omission_dip: Mean::default(),
        lick_rate: mean(2.0),
        model: Some(ModelDay {
            reward: mean(1.0 - 0.1 * d as f64),
            uncued_reward: mean(1.0),
            omission: mean(-0.2),
        }),
        event_trials: 0,
        types: Vec::new(),
    }
}

fn trial(session: usize, trial: usize, kind: TrialKind) -> TrialObs {
    let cued = kind != TrialKind::UncuedReward;
    TrialObs {
        session,
        trial,
        cue: cued.then_some(trial as f64 * 0.1),
        reward: Some(1.0 - trial as f64 * 0.05),
        omission: kind == TrialKind::Omission,
        anticipatory_lick_rate: None,
        kind,
        events: Vec::new(),
    }
}

#[test]
fn learning_curves_draw_one_circle_per_value_and_keep_hostile_cue_names() {
    // Day 2's cue response is missing: 3 days × (cue, cued reward, uncued reward) observed
    // minus one gap; no omission dip; model: 3 × (cue, reward, uncued, omission).
    let days = vec![
        day(1, HOSTILE, true),
        day(2, HOSTILE, false),
        day(3, HOSTILE, true),
    ];
    let kinds = [
        TrialKind::Rewarded,
        TrialKind::Omission,
        TrialKind::UncuedReward,
        TrialKind::Rewarded,
    ];
    let obs: Vec<TrialObs> = (0..8).map(|i| trial(i / 4, i, kinds[i % 4])).collect();
    // Per trial: 6 cued trials give a cue response, all 8 a reward response.
    let deltas: Vec<Option<WindowDeltas>> = obs
        .iter()
        .map(|o| {
            Some(WindowDeltas {
                cue: o.cue.map(|c| c * 0.5),
                reward: o.reward,
            })
        })
        .collect();
    let t = TrialCurves {
        obs: &obs,
        deltas: Some(&deltas),
        unit: "spikes/s",
    };
    let svg = plots::learning_curves(HOSTILE, &days, &t).unwrap();
    let doc = parse(&svg);
    let day_points = (3 * 3 - 1) + 3 * 4;
    let trial_points = (6 + 8) * 2;
    assert_eq!(count(&doc, "circle"), day_points + trial_points);
    let all = texts(&doc);
    let clean = "tone<hi>&\"' ]]><script>x</script>";
    assert!(all.iter().any(|t| t == &format!("cue {clean}")), "{all:?}");
    assert!(all
        .iter()
        .any(|t| t == &format!("Learning curves: {clean}")));
    // No element was smuggled in through a label.
    assert_eq!(count(&doc, "script"), 0);

    let svg = plots::day_curves("m-1", &days, "spikes/s").unwrap();
    assert_eq!(count(&parse(&svg), "circle"), day_points);
    let svg = plots::trial_curves("m-1", &t).unwrap();
    assert_eq!(count(&parse(&svg), "circle"), trial_points);
}

#[test]
fn without_model_the_delta_panels_say_why() {
    let days: Vec<DayRow> = (1..=2)
        .map(|d| DayRow {
            model: None,
            ..day(d, "tone-hi", true)
        })
        .map(|mut r| {
            r.cues[0].model_delta = None;
            r
        })
        .collect();
    let obs = vec![trial(0, 0, TrialKind::Rewarded)];
    let t = TrialCurves {
        obs: &obs,
        deltas: None,
        unit: "ΔF/F",
    };
    let doc_text = plots::learning_curves("m-2", &days, &t).unwrap();
    let doc = parse(&doc_text);
    assert_eq!(count(&doc, "circle"), 2 * 3 + 2);
    let notes = texts(&doc)
        .iter()
        .filter(|t| t.starts_with("no model δ"))
        .count();
    assert_eq!(notes, 2);
}

#[test]
fn fit_trials_has_a_prediction_per_window_and_excluded_dots_are_hollow() {
    let mut rows = Vec::new();
    for (s, session) in ["d1", HOSTILE].iter().enumerate() {
        for t in 0..5i64 {
            for window in WindowKind::ALL {
                rows.push(FitTrialRow {
                    session: session.to_string(),
                    trial: t + 1,
                    window,
                    observed: (t + s as i64) as f64,
                    predicted: 0.5 * t as f64,
                    excluded: t == 2,
                });
            }
        }
    }
    let svg = plots::fit_trials(HOSTILE, &rows, "spikes/s").unwrap();
    let doc = parse(&svg);
    assert_eq!(
        count(&doc, "circle"),
        2 * rows.len(),
        "observed + predicted"
    );
    let hollow = doc
        .descendants()
        .filter(|n| n.tag_name().name() == "circle" && n.attribute("fill") == Some("none"))
        .count();
    assert_eq!(hollow, 4, "2 sessions × 2 windows of the excluded trial 3");
    let black = format!("#{:02X}{:02X}{:02X}", PREDICTED.0, PREDICTED.1, PREDICTED.2);
    let predicted = doc
        .descendants()
        .filter(|n| n.tag_name().name() == "circle" && n.attribute("fill") == Some(&black))
        .count();
    assert_eq!(predicted, rows.len(), "one prediction dot per window");
}

#[test]
fn heatmap_has_one_rect_per_cell_and_clean_row_labels() {
    let rows: Vec<Vec<f64>> = (0..7)
        .map(|i| {
            (0..12)
                .map(|j| if j == 3 { f64::NAN } else { (i * j) as f64 })
                .collect()
        })
        .collect();
    let map = HeatMap {
        title: format!("session {HOSTILE}"),
        row_labels: (0..7).map(|i| format!("{i} {HOSTILE}")).collect(),
        rows,
        from_s: -1.0,
        bin_s: 0.25,
        groups: vec![("rewarded".into(), 7)],
        row_events: (0..7)
            .map(|_| vec![(0.0, "cue".into()), (1.5, "reward <expected>".into())])
            .collect(),
        unit: "spikes/s".into(),
    };
    let empty = HeatMap {
        rows: Vec::new(),
        row_labels: Vec::new(),
        row_events: Vec::new(),
        groups: Vec::new(),
        ..map.clone()
    };
    let base = count(&parse(&plots::heatmap(&empty).unwrap()), "rect");
    let svg = plots::heatmap(&map).unwrap();
    let doc = parse(&svg);
    assert_eq!(count(&doc, "rect") - base, 7 * 12);
    let all = texts(&doc);
    assert!(all.iter().any(|t| t == "reward <expected>"));
    assert_eq!(
        all.iter()
            .filter(|t| t.ends_with("<script>x</script>"))
            .count(),
        7 + 2,
        "seven row labels, the caption and the title"
    );
}

/// Day axes: tick labels are whole days, each at most once along an axis (half-day ticks
/// rounded to whole numbers used to print "1 2 2 2 3 4 4").
#[test]
fn day_axis_ticks_are_whole_distinct_days() {
    for n in [2usize, 5, 7, 8, 14] {
        let days: Vec<DayRow> = (1..=n).map(|d| day(d, "tone-hi", true)).collect();
        let svg = plots::day_curves("m-1", &days, "spikes/s").unwrap();
        let doc = parse(&svg);
        // Tick labels of one x axis share a y coordinate; the two panels sit side by side.
        let width: f64 = doc
            .root_element()
            .attribute("width")
            .and_then(|v| v.parse().ok())
            .unwrap();
        let mut rows: std::collections::BTreeMap<(i64, bool), Vec<String>> = Default::default();
        for t in doc.descendants().filter(|n| n.tag_name().name() == "text") {
            let y: f64 = t
                .attribute("y")
                .and_then(|v| v.parse().ok())
                .unwrap_or(f64::NAN);
            let x: f64 = t
                .attribute("x")
                .and_then(|v| v.parse().ok())
                .unwrap_or(f64::NAN);
            let text = t.text().unwrap_or("").trim().to_string();
            if !text.is_empty() && y.is_finite() && x.is_finite() {
                rows.entry((y.round() as i64, x < width / 2.0))
                    .or_default()
                    .push(text);
            }
        }
        let axes: Vec<&Vec<String>> = rows.values().filter(|v| v.len() >= 2).collect();
        assert!(!axes.is_empty(), "{n} days: no x axis found");
        for labels in axes {
            // Only rows of plain numbers are tick rows.
            if !labels.iter().all(|l| l.parse::<f64>().is_ok()) {
                continue;
            }
            let mut seen = std::collections::HashSet::new();
            for l in labels {
                assert!(
                    !l.contains('.'),
                    "{n} days: tick label {l} is not a whole day"
                );
                assert!(
                    seen.insert(l.clone()),
                    "{n} days: tick {l} twice in {labels:?}"
                );
            }
        }
    }
}

//! Labels and legends sit off the data, read back from the SVG geometry (roxmltree): no legend
//! box of the learning curves covers a data point or a data line, and no text of a heat map
//! (title, axis labels, group and event names) lies on its cells. Checked on pictures where the
//! largest values come first (the upper left, where the legend goes): built in memory, and
//! drawn by `trialdesk plot` from the shipped demo subject and a simulated one.

use std::path::{Path, PathBuf};
use trialdesk::obs::{TrialKind, TrialObs, WindowDeltas};
use trialdesk::plots::{self, TrialCurves};
use trialdesk::summary::{CueDay, DayRow, KindCounts, Mean, ModelDay};

#[derive(Debug, Clone, Copy)]
struct Box2 {
    x0: f64,
    y0: f64,
    x1: f64,
    y1: f64,
}

impl Box2 {
    fn overlaps(&self, o: &Box2) -> bool {
        self.x0 < o.x1 && o.x0 < self.x1 && self.y0 < o.y1 && o.y0 < self.y1
    }
    fn contains(&self, (x, y): (f64, f64)) -> bool {
        x > self.x0 && x < self.x1 && y > self.y0 && y < self.y1
    }
}

fn num(n: &roxmltree::Node, name: &str) -> f64 {
    n.attribute(name)
        .and_then(|v| v.parse().ok())
        .unwrap_or(f64::NAN)
}

fn points(n: &roxmltree::Node) -> Vec<(f64, f64)> {
    n.attribute("points")
        .unwrap_or("")
        .split_whitespace()
        .filter_map(|p| {
            let (a, b) = p.split_once(',')?;
            Some((a.parse().ok()?, b.parse().ok()?))
        })
        .collect()
}

/// Does the segment a–b pass through the inside of `r`? (Sampled every 0.25 px: the
/// coordinates are whole pixels, so nothing thinner than that can be missed.)
fn crosses(a: (f64, f64), b: (f64, f64), r: &Box2) -> bool {
    let len = ((b.0 - a.0).powi(2) + (b.1 - a.1).powi(2)).sqrt();
    let steps = (len / 0.25).ceil().max(1.0) as usize;
    (0..=steps).any(|i| {
        let t = i as f64 / steps as f64;
        r.contains((a.0 + t * (b.0 - a.0), a.1 + t * (b.1 - a.1)))
    })
}

/// Every legend box of `svg` (plotters draws its border as an unfilled grey rect) against
/// every data marker (circles) and every data line (polylines of stroke width 2). Returns
/// the number of legend boxes checked.
fn assert_legends_off_the_data(what: &str, svg: &str) -> usize {
    let doc = roxmltree::Document::parse(svg).unwrap();
    let nodes: Vec<roxmltree::Node> = doc.descendants().collect();
    let legends: Vec<Box2> = nodes
        .iter()
        .filter(|n| n.tag_name().name() == "rect")
        .filter(|n| n.attribute("fill") == Some("none") && n.attribute("stroke") == Some("#AAAAAA"))
        .map(|n| Box2 {
            x0: num(n, "x"),
            y0: num(n, "y"),
            x1: num(n, "x") + num(n, "width"),
            y1: num(n, "y") + num(n, "height"),
        })
        .collect();
    let mut bad = Vec::new();
    let mut markers = 0;
    let mut vertices = 0;
    for n in &nodes {
        match n.tag_name().name() {
            "circle" => {
                markers += 1;
                let (cx, cy, r) = (num(n, "cx"), num(n, "cy"), num(n, "r"));
                let b = Box2 {
                    x0: cx - r,
                    y0: cy - r,
                    x1: cx + r,
                    y1: cy + r,
                };
                for l in legends.iter().filter(|l| l.overlaps(&b)) {
                    bad.push(format!("marker at ({cx}, {cy}) r {r} under legend {l:?}"));
                }
            }
            "polyline" if n.attribute("stroke-width") == Some("2") => {
                let p = points(n);
                vertices += p.len();
                for w in p.windows(2) {
                    for l in legends.iter().filter(|l| crosses(w[0], w[1], l)) {
                        bad.push(format!(
                            "data line {:?}-{:?} ({}) under legend {l:?}",
                            w[0],
                            w[1],
                            n.attribute("stroke").unwrap_or("")
                        ));
                    }
                }
            }
            _ => {}
        }
    }
    assert!(markers + vertices > 0, "{what}: no data drawn");
    assert!(
        bad.is_empty(),
        "{what}: {} overlap(s):\n{}",
        bad.len(),
        bad.join("\n")
    );
    legends.len()
}

/// The approximate box of a `<text>` (plotters writes its anchor, `dy` and font size; a
/// sans-serif character is taken as 0.6 em wide, an upper bound for digits and lower case).
/// `None` for rotated text (the y-axis title, at the far left).
fn text_box(n: &roxmltree::Node) -> Option<Box2> {
    if n.attribute("transform").is_some() {
        return None;
    }
    let text = n.text().unwrap_or("").trim();
    let (x, y, fs) = (num(n, "x"), num(n, "y"), num(n, "font-size"));
    let w = 0.6 * fs * text.chars().count() as f64;
    let (x0, x1) = match n.attribute("text-anchor") {
        Some("middle") => (x - w / 2.0, x + w / 2.0),
        Some("end") => (x - w, x),
        _ => (x, x + w),
    };
    // dy 0.76em: the top of the text at y; -0.5ex: the baseline half an x-height above y;
    // none: the baseline at y. Ascent 0.8 em, descent 0.2 em.
    let baseline = match n.attribute("dy") {
        Some("0.76em") => y + 0.76 * fs,
        Some("-0.5ex") => y - 0.25 * fs,
        _ => y,
    };
    Some(Box2 {
        x0,
        y0: baseline - 0.8 * fs,
        x1,
        y1: baseline + 0.2 * fs,
    })
}

/// The heat map's cells (rects narrower than the picture, left of the colour bar) and every
/// text box: none overlaps the map.
fn assert_heatmap_text_off_the_map(what: &str, svg: &str) {
    let doc = roxmltree::Document::parse(svg).unwrap();
    let width = doc
        .root_element()
        .attribute("width")
        .and_then(|w| w.parse::<f64>().ok())
        .unwrap_or(f64::INFINITY);
    let cells: Vec<Box2> = doc
        .descendants()
        .filter(|n| n.tag_name().name() == "rect")
        .map(|n| Box2 {
            x0: num(&n, "x"),
            y0: num(&n, "y"),
            x1: num(&n, "x") + num(&n, "width"),
            y1: num(&n, "y") + num(&n, "height"),
        })
        .filter(|r| r.x1 - r.x0 < width / 2.0 && r.x0 < 880.0)
        .collect();
    assert!(cells.len() > 10, "{what}: {} cells", cells.len());
    let map = Box2 {
        x0: cells.iter().map(|c| c.x0).fold(f64::INFINITY, f64::min),
        y0: cells.iter().map(|c| c.y0).fold(f64::INFINITY, f64::min),
        x1: cells.iter().map(|c| c.x1).fold(f64::NEG_INFINITY, f64::max),
        y1: cells.iter().map(|c| c.y1).fold(f64::NEG_INFINITY, f64::max),
    };
    let mut bad = Vec::new();
    let mut title = false;
    for n in doc.descendants().filter(|n| n.tag_name().name() == "text") {
        let text = n.text().unwrap_or("").trim().to_string();
        let Some(b) = text_box(&n) else { continue };
        // The first text plotters writes is the caption (the title).
        title |= b.y1 <= map.y0 && !text.is_empty();
        if b.overlaps(&map) {
            bad.push(format!("`{text}` {b:?} on the map {map:?}"));
        }
    }
    assert!(title, "{what}: no text above the map");
    assert!(bad.is_empty(), "{what}:\n{}", bad.join("\n"));
}

fn mean(v: f64) -> Mean {
    Mean {
        value: Some(v),
        n: 10,
    }
}

/// Day `d` of a subject whose reward response and model δ fall from their highest value on
/// day 1 (the upper left of each panel) while the cue response rises.
fn day(d: usize) -> DayRow {
    DayRow {
        session: format!("2026-03-0{d}"),
        date: format!("2026-03-0{d}"),
        day: d,
        trials: 40,
        counts: KindCounts::default(),
        excluded: 0,
        suspect: 0,
        cues: vec![CueDay {
            cue: "tone-hi".to_string(),
            trials: 30,
            response: mean(d as f64),
            lick_rate: mean(9.0 - d as f64),
            model_delta: Some(mean(0.1 * d as f64)),
        }],
        reward_response: mean(10.0 - d as f64),
        uncued_reward_response: mean(9.5),
        omission_dip: mean(-1.0),
        lick_rate: mean(8.0 - d as f64),
        model: Some(ModelDay {
            reward: mean(1.0 - 0.1 * d as f64),
            uncued_reward: mean(1.0),
            omission: mean(-0.2),
        }),
        event_trials: 0,
        types: Vec::new(),
    }
}

#[test]
fn legends_of_curves_whose_highest_values_come_first_cover_no_data() {
    let days: Vec<DayRow> = (1..=8).map(day).collect();
    let kinds = [
        TrialKind::Rewarded,
        TrialKind::Omission,
        TrialKind::UncuedReward,
        TrialKind::Rewarded,
    ];
    let obs: Vec<TrialObs> = (0..64)
        .map(|i| TrialObs {
            session: i / 8,
            trial: i,
            cue: (kinds[i % 4] != TrialKind::UncuedReward).then_some(i as f64 * 0.1),
            reward: Some(10.0 - i as f64 * 0.15),
            omission: kinds[i % 4] == TrialKind::Omission,
            anticipatory_lick_rate: None,
            kind: kinds[i % 4],
            events: Vec::new(),
        })
        .collect();
    let deltas: Vec<Option<WindowDeltas>> = obs
        .iter()
        .map(|o| {
            Some(WindowDeltas {
                cue: o.cue.map(|c| c * 0.05),
                reward: o.reward.map(|r| r * 0.1),
            })
        })
        .collect();
    let t = TrialCurves {
        obs: &obs,
        deltas: Some(&deltas),
        unit: "spikes/s",
    };
    let svg = plots::learning_curves("m-1", &days, &t).unwrap();
    let n = assert_legends_off_the_data("learning curves in memory", &svg);
    assert!(n >= 2, "{n} legend boxes");
}

fn plot(subject: &Path, out: &Path) {
    let o = std::process::Command::new(env!("CARGO_BIN_EXE_trialdesk"))
        .arg("plot")
        .arg(subject)
        .arg("--out")
        .arg(out)
        .output()
        .unwrap();
    assert!(o.status.success(), "{}", String::from_utf8_lossy(&o.stderr));
}

fn heatmaps(dir: &Path) -> Vec<PathBuf> {
    let mut v: Vec<PathBuf> = std::fs::read_dir(dir)
        .unwrap()
        .filter_map(Result::ok)
        .map(|e| e.path())
        .filter(|p| {
            p.file_name()
                .unwrap()
                .to_string_lossy()
                .starts_with("heatmap_")
        })
        .collect();
    v.sort();
    v
}

#[test]
fn plots_of_the_demo_keep_legends_and_titles_off_the_data() {
    let demo = Path::new(env!("CARGO_MANIFEST_DIR")).join("demo_data/m-041");
    let tmp = tempfile::tempdir().unwrap();
    let out = tmp.path().join("plots");
    plot(&demo, &out);
    let svg = std::fs::read_to_string(out.join("learning_curves.svg")).unwrap();
    assert!(assert_legends_off_the_data("demo learning_curves.svg", &svg) >= 1);
    let maps = heatmaps(&out);
    assert_eq!(maps.len(), 8, "{maps:?}");
    for m in maps {
        let svg = std::fs::read_to_string(&m).unwrap();
        assert_heatmap_text_off_the_map(&m.display().to_string(), &svg);
    }
}

#[test]
fn plots_of_a_fitted_photometry_subject_keep_legends_and_titles_off_the_data() {
    // With a saved fit the model panels and fit_trials.svg are drawn too.
    let tmp = tempfile::tempdir().unwrap();
    let subject = tmp.path().join("m-081");
    let run = |args: &[&str]| {
        let o = std::process::Command::new(env!("CARGO_BIN_EXE_trialdesk"))
            .args(args)
            .output()
            .unwrap();
        assert!(
            o.status.success(),
            "{args:?}: {}",
            String::from_utf8_lossy(&o.stderr)
        );
    };
    let s = subject.to_str().unwrap();
    run(&[
        "simulate",
        s,
        "--days",
        "3",
        "--trials-per-day",
        "40",
        "--units",
        "0",
        "--photometry",
        "on",
        "--seed",
        "8",
    ]);
    run(&[
        "fit",
        s,
        "--bootstrap",
        "0",
        "--no-compare",
        "--no-sensitivity",
    ]);
    let out = tmp.path().join("plots");
    plot(&subject, &out);
    for name in ["learning_curves.svg", "fit_trials.svg"] {
        let svg = std::fs::read_to_string(out.join(name)).unwrap();
        assert_legends_off_the_data(name, &svg);
    }
    for m in heatmaps(&out) {
        let svg = std::fs::read_to_string(&m).unwrap();
        assert_heatmap_text_off_the_map(&m.display().to_string(), &svg);
    }
}

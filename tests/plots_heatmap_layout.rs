//! Heat map geometry, read back from the SVG: rows come grouped as given, event lines cross
//! only the rows that have the event, signed data get a diverging ramp with white at zero,
//! and no label is drawn over the data cells.

use trialdesk::plots::{self, HeatMap};

struct Rect {
    x: f64,
    y: f64,
    w: f64,
    h: f64,
    fill: String,
}

fn attr(n: &roxmltree::Node, name: &str) -> f64 {
    n.attribute(name)
        .and_then(|v| v.parse().ok())
        .unwrap_or(f64::NAN)
}

/// Two groups of three rows: CS+ rows with a cue at 0 and a reward at 1.5 s, CS− rows with
/// only a cue. Values run from −2 to 3 (signed), one cell exactly 0.
fn map() -> HeatMap {
    let rows: Vec<Vec<f64>> = (0..6)
        .map(|i| {
            (0..20)
                .map(|j| (i as f64 - 2.0) + 0.05 * j as f64)
                .collect()
        })
        .collect();
    let ev = |reward: bool| {
        let mut v = vec![(0.0, "cue".to_string())];
        if reward {
            v.push((1.5, "reward".to_string()));
        }
        v
    };
    let mut rows = rows;
    rows[2][0] = 0.0;
    HeatMap {
        title: "2026-03-02".into(),
        row_labels: (1..=6).map(|i| i.to_string()).collect(),
        rows,
        groups: vec![
            ("tone-hi rewarded".into(), 3),
            ("tone-lo unrewarded_cue".into(), 3),
        ],
        from_s: -1.0,
        bin_s: 0.2,
        row_events: (0..6).map(|i| ev(i < 3)).collect(),
        unit: "spikes/s".into(),
    }
}

#[test]
fn heatmap_layout_keeps_labels_off_the_data_and_events_on_their_rows() {
    let svg = plots::heatmap(&map()).unwrap();
    let doc = roxmltree::Document::parse(&svg).unwrap();
    // Data cells: the rects of the map area (not the background, not the colour bar at
    // x ≥ 880).
    let cells: Vec<Rect> = doc
        .descendants()
        .filter(|n| n.tag_name().name() == "rect")
        .map(|n| Rect {
            x: attr(&n, "x"),
            y: attr(&n, "y"),
            w: attr(&n, "width"),
            h: attr(&n, "height"),
            fill: n.attribute("fill").unwrap_or("").to_ascii_lowercase(),
        })
        .filter(|r| r.x < 880.0 && r.w < 500.0)
        .collect();
    assert_eq!(cells.len(), 6 * 20);
    let x0 = cells.iter().map(|r| r.x).fold(f64::INFINITY, f64::min);
    let x1 = cells.iter().map(|r| r.x + r.w).fold(0.0, f64::max);
    let y0 = cells.iter().map(|r| r.y).fold(f64::INFINITY, f64::min);
    let y1 = cells.iter().map(|r| r.y + r.h).fold(0.0, f64::max);
    let row_h = (y1 - y0) / 6.0;

    // No text anchor inside the data area.
    let texts: Vec<(String, f64, f64)> = doc
        .descendants()
        .filter(|n| n.tag_name().name() == "text")
        .map(|n| {
            (
                n.text().unwrap_or("").trim().to_string(),
                attr(&n, "x"),
                attr(&n, "y"),
            )
        })
        .collect();
    for (t, x, y) in &texts {
        let inside = *x > x0 + 1.0 && *x < x1 - 1.0 && *y > y0 + 1.0 && *y < y1 - 1.0;
        assert!(
            !inside,
            "label `{t}` at ({x}, {y}) lies on the data [{x0}, {x1}] × [{y0}, {y1}]"
        );
    }
    // Group names are written, left of the map, at their first row.
    for (name, row) in [("tone-hi rewarded", 0.0), ("tone-lo unrewarded_cue", 3.0)] {
        let (_, x, y) = texts.iter().find(|t| t.0 == name).expect(name);
        assert!(*x < x0, "{name} at x {x}");
        assert!(
            (*y - (y0 + (row + 0.5) * row_h)).abs() < row_h,
            "{name} at y {y}"
        );
    }
    // Each event label exactly once, above the map.
    for name in ["cue", "reward"] {
        let found: Vec<_> = texts.iter().filter(|t| t.0 == name).collect();
        assert_eq!(found.len(), 1, "{name}: {found:?}");
        assert!(found[0].2 < y0, "{name} label at y {}", found[0].2);
    }

    // Event lines: vertical two-point paths inside the map; each spans one row.
    let px = |t: f64| x0 + (t + 1.0) / 4.0 * (x1 - x0);
    let mut lines: Vec<(f64, f64, f64)> = Vec::new();
    for n in doc
        .descendants()
        .filter(|n| n.tag_name().name() == "polyline")
    {
        let pts: Vec<(f64, f64)> = n
            .attribute("points")
            .unwrap_or("")
            .split_whitespace()
            .filter_map(|p| {
                let (a, b) = p.split_once(',')?;
                Some((a.parse().ok()?, b.parse().ok()?))
            })
            .collect();
        if pts.len() != 2 {
            continue;
        }
        let (top, bottom) = (pts[0].1.min(pts[1].1), pts[0].1.max(pts[1].1));
        // Vertical, inside the map (axis tick marks hang below it).
        if (pts[0].0 - pts[1].0).abs() < 0.5
            && pts[0].0 > x0
            && pts[0].0 < x1
            && top >= y0 - 1.0
            && bottom <= y1 + 1.0
        {
            lines.push((pts[0].0, top, bottom));
        }
    }
    let at = |t: f64| -> Vec<&(f64, f64, f64)> {
        lines.iter().filter(|l| (l.0 - px(t)).abs() < 2.0).collect()
    };
    assert_eq!(at(0.0).len(), 6, "a cue line on every row: {lines:?}");
    let reward = at(1.5);
    assert_eq!(
        reward.len(),
        3,
        "reward lines only on the rewarded rows: {lines:?}"
    );
    for l in reward {
        assert!(l.2 - l.1 <= row_h + 1.0, "one row tall: {l:?}");
        assert!(
            l.2 <= y0 + 3.0 * row_h + 1.0,
            "in the rewarded group: {l:?}"
        );
    }

    // Signed data: white is zero (the cell set to 0), and the two ends differ in hue.
    let white = cells.iter().filter(|r| r.fill == "#ffffff").count();
    assert!(white >= 1, "zero is white on a diverging ramp");
}

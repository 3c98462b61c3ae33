//! The session heat map: one row per trial, rows grouped by trial type (each group in trial
//! order, groups separated by a line and named in the left margin), one cell per time bin
//! around the alignment time, colour = activity. Colours span the 2nd–98th percentile of the
//! finite cells so one artefact does not wash out the map (common practice); signed data
//! (values on both sides of zero, e.g. baseline-subtracted activity) get a diverging ramp
//! centred on zero, so zero is white and sign reads as hue. Cells without a value are grey.
//! Event lines are drawn only across the rows that have the event; every label and the colour
//! bar sit outside the data area.

use super::panel::GUIDE;
use super::{with_title, PlotError};
use plotters::prelude::*;
use plotters::style::text_anchor::{HPos, Pos, VPos};

/// What the heat map shows.
#[derive(Debug, Clone, PartialEq)]
pub struct HeatMap {
    /// Picture title (session folder name and signal).
    pub title: String,
    /// One label per row (trial number, mark).
    pub row_labels: Vec<String>,
    /// `rows[i][j]`: activity of row i in bin j; NaN for no value. Rows may differ in length.
    pub rows: Vec<Vec<f64>>,
    /// Consecutive row groups, top to bottom: (trial type, number of rows). Empty: one
    /// unnamed group.
    pub groups: Vec<(String, usize)>,
    /// Start of bin 0 relative to the alignment time, seconds.
    pub from_s: f64,
    pub bin_s: f64,
    /// Events of each row: (time relative to alignment, event name), e.g. (0, "cue"),
    /// (1.5, "reward"). A line is drawn across that row only.
    pub row_events: Vec<Vec<(f64, String)>>,
    /// Unit of the colour scale.
    pub unit: String,
}

/// A sequential colour scale from dark blue through teal to light yellow (lightness rises
/// monotonically, so the order reads in grey print too).
pub fn color_of(t: f64) -> RGBColor {
    const STOPS: [(f64, f64, f64); 4] = [
        (30.0, 30.0, 90.0),
        (40.0, 110.0, 140.0),
        (110.0, 190.0, 120.0),
        (250.0, 235.0, 150.0),
    ];
    ramp(&STOPS, t)
}

/// A diverging scale: blue (t = 0) through white (t = 0.5) to red (t = 1); lightness is
/// symmetric about the centre, so equal magnitudes of either sign look equally strong.
pub fn diverging_of(t: f64) -> RGBColor {
    const STOPS: [(f64, f64, f64); 5] = [
        (40.0, 70.0, 150.0),
        (140.0, 175.0, 215.0),
        (255.0, 255.0, 255.0),
        (225.0, 150.0, 130.0),
        (160.0, 40.0, 40.0),
    ];
    ramp(&STOPS, t)
}

fn ramp(stops: &[(f64, f64, f64)], t: f64) -> RGBColor {
    let t = t.clamp(0.0, 1.0) * (stops.len() - 1) as f64;
    let i = (t.floor() as usize).min(stops.len() - 2);
    let f = t - i as f64;
    let (a, b) = (stops[i], stops[i + 1]);
    let mix = |x: f64, y: f64| (x + (y - x) * f).round() as u8;
    RGBColor(mix(a.0, b.0), mix(a.1, b.1), mix(a.2, b.2))
}

/// The colour scale of a map with limits (lo, hi): diverging, centred on zero with limits
/// ±max(|lo|, |hi|), when the data lie on both sides of zero; sequential otherwise.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Scale {
    pub lo: f64,
    pub hi: f64,
    pub diverging: bool,
}

impl Scale {
    pub fn of(lo: f64, hi: f64) -> Scale {
        if lo < 0.0 && hi > 0.0 {
            let m = lo.abs().max(hi.abs());
            Scale {
                lo: -m,
                hi: m,
                diverging: true,
            }
        } else {
            Scale {
                lo,
                hi,
                diverging: false,
            }
        }
    }

    pub fn color(&self, v: f64) -> RGBColor {
        let t = (v - self.lo) / (self.hi - self.lo);
        if self.diverging {
            diverging_of(t)
        } else {
            color_of(t)
        }
    }
}

/// The q-quantile (0..=1) of sorted values, nearest rank.
fn quantile(sorted: &[f64], q: f64) -> f64 {
    let i = ((sorted.len() - 1) as f64 * q).round() as usize;
    sorted[i]
}

/// Colour limits: 2nd and 98th percentile of the finite cells (0..1 when there are none).
pub fn color_limits(rows: &[Vec<f64>]) -> (f64, f64) {
    let mut v: Vec<f64> = rows
        .iter()
        .flatten()
        .copied()
        .filter(|x| x.is_finite())
        .collect();
    if v.is_empty() {
        return (0.0, 1.0);
    }
    v.sort_by(f64::total_cmp);
    let (lo, hi) = (quantile(&v, 0.02), quantile(&v, 0.98));
    if hi > lo {
        (lo, hi)
    } else {
        (lo - 0.5, lo + 0.5)
    }
}

/// Event labels above the map: one per distinct event name at its most common time, and
/// names whose positions fall within `min_gap` of each other share one label ("cue / reward"),
/// so labels never overlap.
pub fn event_labels(row_events: &[Vec<(f64, String)>], min_gap: f64) -> Vec<(f64, String)> {
    let mut names: Vec<&str> = Vec::new();
    for (_, n) in row_events.iter().flatten() {
        if !names.contains(&n.as_str()) {
            names.push(n);
        }
    }
    let mut placed: Vec<(f64, String)> = names
        .iter()
        .map(|&name| {
            // Most common time of this event (times rounded to 1 ms).
            let mut counts: Vec<(i64, usize)> = Vec::new();
            for (t, n) in row_events.iter().flatten() {
                if n == name {
                    let key = (t * 1000.0).round() as i64;
                    match counts.iter_mut().find(|c| c.0 == key) {
                        Some(c) => c.1 += 1,
                        None => counts.push((key, 1)),
                    }
                }
            }
            let best = counts.iter().max_by_key(|c| (c.1, -c.0)).map_or(0, |c| c.0);
            (best as f64 / 1000.0, name.to_string())
        })
        .collect();
    placed.sort_by(|a, b| a.0.total_cmp(&b.0));
    let mut out: Vec<(f64, String)> = Vec::new();
    for (t, name) in placed {
        match out.last_mut() {
            Some(last) if t - last.0 < min_gap => {
                last.1 = format!("{} / {name}", last.1);
            }
            _ => out.push((t, name)),
        }
    }
    out
}

/// Draw the heat map. Each cell is one SVG `<rect>`; rows are labelled (every k-th row when
/// there are more than 40) at their middle, group names in the margin left of them.
pub fn heatmap(map: &HeatMap) -> Result<String, PlotError> {
    let n_rows = map.rows.len();
    let n_bins = map.rows.iter().map(Vec::len).max().unwrap_or(0);
    let height = (190 + 6 * n_rows as u32).clamp(390, 2430);
    let (lo, hi) = color_limits(&map.rows);
    let scale = Scale::of(lo, hi);
    let x0 = map.from_s;
    let x1 = map.from_s + map.bin_s * n_bins.max(1) as f64;
    let y1 = n_rows.max(1) as f64;
    let mut svg = String::new();
    {
        let root = SVGBackend::with_string(&mut svg, (1000, height)).into_drawing_area();
        root.fill(&WHITE)?;
        let (main, bar) = root.split_horizontally(880);
        let mut chart = ChartBuilder::on(&main)
            .caption(crate::text::svg_label(&map.title), ("sans-serif", 17))
            .margin(12)
            // Room above the map for the event labels.
            .margin_top(34)
            .x_label_area_size(38)
            .y_label_area_size(190)
            .build_cartesian_2d(x0..x1, 0.0..y1)?;
        chart
            .configure_mesh()
            .disable_mesh()
            .y_labels(0)
            .x_desc("time from cue onset (uncued trials: from the reward), s")
            .y_desc("trials by type, each in trial order")
            .label_style(("sans-serif", 12))
            .axis_desc_style(("sans-serif", 13))
            .draw()?;
        // Row i spans y in [n − i − 1, n − i]: the first row at the top.
        let top = |i: usize| (n_rows - i) as f64;
        chart.draw_series(map.rows.iter().enumerate().flat_map(|(i, row)| {
            row.iter().enumerate().map(move |(j, &v)| {
                let color = if v.is_finite() { scale.color(v) } else { GUIDE };
                let xa = x0 + j as f64 * map.bin_s;
                Rectangle::new(
                    [(xa, top(i) - 1.0), (xa + map.bin_s, top(i))],
                    color.filled(),
                )
            })
        }))?;
        let step = n_rows.div_ceil(40).max(1);
        let label_style = ("sans-serif", 11)
            .into_font()
            .color(&BLACK)
            .pos(Pos::new(HPos::Right, VPos::Center));
        chart.draw_series((0..n_rows).step_by(step).map(|i| {
            EmptyElement::at((x0, top(i) - 0.5))
                + Text::new(
                    crate::text::svg_label(map.row_labels.get(i).map(String::as_str).unwrap_or("")),
                    (-4, 0),
                    label_style.clone(),
                )
        }))?;
        // Event lines, each across its own row only; black on a diverging map (white is its
        // zero), white on the sequential one.
        let line = if scale.diverging { BLACK } else { WHITE };
        chart.draw_series(map.row_events.iter().enumerate().flat_map(|(i, evs)| {
            evs.iter()
                .filter(|(t, _)| (x0..=x1).contains(t))
                .map(move |(t, _)| {
                    PathElement::new([(*t, top(i) - 1.0), (*t, top(i))], line.stroke_width(2))
                })
        }))?;
        // Groups: a separating line and the group's name, left of the row labels.
        let group_style = ("sans-serif", 12)
            .into_font()
            .color(&BLACK)
            .pos(Pos::new(HPos::Left, VPos::Center));
        let mut first = 0usize;
        for (gi, (name, n)) in map.groups.iter().enumerate() {
            if *n == 0 {
                continue;
            }
            if gi > 0 && first < n_rows {
                chart.draw_series(std::iter::once(PathElement::new(
                    [(x0, top(first)), (x1, top(first))],
                    BLACK.stroke_width(2),
                )))?;
            }
            chart.draw_series(std::iter::once(
                EmptyElement::at((x0, top(first) - 0.5))
                    + Text::new(crate::text::svg_label(name), (-186, 0), group_style.clone()),
            ))?;
            first += n;
        }
        // Event labels above the map, merged where they would overlap.
        let min_gap = (x1 - x0) * 0.08;
        for (t, name) in event_labels(&map.row_events, min_gap) {
            if t < x0 || t > x1 {
                continue;
            }
            chart.draw_series(std::iter::once(
                EmptyElement::at((t, y1))
                    + Text::new(
                        crate::text::svg_label(&name),
                        (0, -6),
                        ("sans-serif", 12)
                            .into_font()
                            .color(&BLACK)
                            .pos(Pos::new(HPos::Center, VPos::Bottom)),
                    ),
            ))?;
        }
        draw_color_bar(&bar, scale, &map.unit)?;
        root.present()?;
    }
    Ok(with_title(svg, &map.title))
}

fn draw_color_bar(
    area: &DrawingArea<SVGBackend, plotters::coord::Shift>,
    scale: Scale,
    unit: &str,
) -> Result<(), PlotError> {
    let steps = 50;
    let (top, bottom, left) = (80i32, 320i32, 20i32);
    let h = (bottom - top) as f64 / steps as f64;
    for s in 0..steps {
        let t = 1.0 - (s as f64 + 0.5) / steps as f64;
        let y = top + (s as f64 * h) as i32;
        area.draw(&Rectangle::new(
            [(left, y), (left + 20, top + ((s + 1) as f64 * h) as i32)],
            scale.color(scale.lo + t * (scale.hi - scale.lo)).filled(),
        ))?;
    }
    let font = ("sans-serif", 11).into_font().color(&BLACK);
    area.draw(&Text::new(
        format!("{:.3}", scale.hi),
        (left, top - 16),
        font.clone(),
    ))?;
    if scale.diverging {
        area.draw(&Text::new(
            "0",
            (left + 24, (top + bottom) / 2 - 6),
            font.clone(),
        ))?;
    }
    area.draw(&Text::new(
        format!("{:.3}", scale.lo),
        (left, bottom + 4),
        font.clone(),
    ))?;
    area.draw(&Text::new(
        crate::text::svg_label(unit),
        (left - 10, bottom + 22),
        font,
    ))?;
    Ok(())
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn scale_runs_from_dark_to_light() {
        let lum = |c: RGBColor| 0.3 * c.0 as f64 + 0.59 * c.1 as f64 + 0.11 * c.2 as f64;
        let l: Vec<f64> = (0..=10).map(|i| lum(color_of(i as f64 / 10.0))).collect();
        assert!(l.windows(2).all(|w| w[1] > w[0]), "{l:?}");
        assert_eq!(color_of(-1.0), color_of(0.0));
        assert_eq!(color_of(2.0), color_of(1.0));
    }

    /// The diverging ramp is white at zero and equally light at ±m.
    #[test]
    fn diverging_scale_is_centred_on_zero() {
        let s = Scale::of(-1.0, 3.0);
        assert!(s.diverging);
        assert_eq!((s.lo, s.hi), (-3.0, 3.0));
        assert_eq!(s.color(0.0), RGBColor(255, 255, 255));
        let lum = |c: RGBColor| 0.3 * c.0 as f64 + 0.59 * c.1 as f64 + 0.11 * c.2 as f64;
        assert!((lum(s.color(-3.0)) - lum(s.color(3.0))).abs() < 20.0);
        assert!(!Scale::of(0.5, 3.0).diverging);
    }

    #[test]
    fn overlapping_event_labels_are_merged() {
        let ev = |v: &[(f64, &str)]| v.iter().map(|(t, n)| (*t, n.to_string())).collect();
        let rows = vec![
            ev(&[(0.0, "cue"), (1.5, "reward")]),
            ev(&[(0.0, "cue"), (1.5, "reward")]),
            ev(&[(0.0, "reward")]),
        ];
        // "reward" is most often at 1.5 s: its own label, far from "cue".
        assert_eq!(
            event_labels(&rows, 0.3),
            vec![(0.0, "cue".to_string()), (1.5, "reward".to_string())]
        );
        let close = vec![ev(&[(0.0, "cue"), (0.1, "reward")])];
        assert_eq!(
            event_labels(&close, 0.3),
            vec![(0.0, "cue / reward".to_string())]
        );
    }

    #[test]
    fn limits_ignore_non_finite_and_spread_flat_maps() {
        let rows = vec![vec![f64::NAN, 1.0, 1.0], vec![1.0]];
        assert_eq!(color_limits(&rows), (0.5, 1.5));
        let rows = vec![(0..=100).map(f64::from).collect::<Vec<_>>()];
        assert_eq!(color_limits(&rows), (2.0, 98.0));
    }
}

//! The session heat map: one row per trial (top = first), one cell per time bin around the
//! alignment time, colour = activity. Colours span the 2nd–98th percentile of the finite
//! cells so one artefact does not wash out the map (common practice); cells without a value
//! (no photometry samples there) are grey.

use super::panel::GUIDE;
use super::{clean_label, with_title, PlotError};
use plotters::prelude::*;
use plotters::style::text_anchor::{HPos, Pos, VPos};

/// What the heat map shows.
#[derive(Debug, Clone, PartialEq)]
pub struct HeatMap {
    /// Picture title (session folder name and signal).
    pub title: String,
    /// One label per row (trial number, kind, mark).
    pub row_labels: Vec<String>,
    /// `rows[i][j]`: activity of row i in bin j; NaN for no value. Rows may differ in length.
    pub rows: Vec<Vec<f64>>,
    /// Start of bin 0 relative to the alignment time, seconds.
    pub from_s: f64,
    pub bin_s: f64,
    /// Vertical marks: (time relative to alignment, label), e.g. (0, "cue"), (1.5, "reward").
    pub events: Vec<(f64, String)>,
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
    let t = t.clamp(0.0, 1.0) * (STOPS.len() - 1) as f64;
    let i = (t.floor() as usize).min(STOPS.len() - 2);
    let f = t - i as f64;
    let (a, b) = (STOPS[i], STOPS[i + 1]);
    let mix = |x: f64, y: f64| (x + (y - x) * f).round() as u8;
    RGBColor(mix(a.0, b.0), mix(a.1, b.1), mix(a.2, b.2))
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

/// Draw the heat map. Each cell is one SVG `<rect>`; rows are labelled (every k-th row when
/// there are more than 40) at their middle.
pub fn heatmap(map: &HeatMap) -> Result<String, PlotError> {
    let n_rows = map.rows.len();
    let n_bins = map.rows.iter().map(Vec::len).max().unwrap_or(0);
    let height = (160 + 6 * n_rows as u32).clamp(360, 2400);
    let (lo, hi) = color_limits(&map.rows);
    let x0 = map.from_s;
    let x1 = map.from_s + map.bin_s * n_bins.max(1) as f64;
    let y1 = n_rows.max(1) as f64;
    let mut svg = String::new();
    {
        let root = SVGBackend::with_string(&mut svg, (1000, height)).into_drawing_area();
        root.fill(&WHITE)?;
        let (main, bar) = root.split_horizontally(880);
        let mut chart = ChartBuilder::on(&main)
            .caption(clean_label(&map.title), ("sans-serif", 17))
            .margin(12)
            .x_label_area_size(38)
            .y_label_area_size(150)
            .build_cartesian_2d(x0..x1, 0.0..y1)?;
        chart
            .configure_mesh()
            .disable_mesh()
            .y_labels(0)
            .x_desc("time from cue onset (uncued trials: from the reward), s")
            .y_desc("trial (first at top)")
            .label_style(("sans-serif", 12))
            .axis_desc_style(("sans-serif", 13))
            .draw()?;
        // Row i spans y in [n − i − 1, n − i]: the first trial at the top.
        let top = |i: usize| (n_rows - i) as f64;
        chart.draw_series(map.rows.iter().enumerate().flat_map(|(i, row)| {
            row.iter().enumerate().map(move |(j, &v)| {
                let color = if v.is_finite() {
                    color_of((v - lo) / (hi - lo))
                } else {
                    GUIDE
                };
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
                    clean_label(map.row_labels.get(i).map(String::as_str).unwrap_or("")),
                    (-4, 0),
                    label_style.clone(),
                )
        }))?;
        for (t, name) in &map.events {
            if *t < x0 || *t > x1 {
                continue;
            }
            chart.draw_series(std::iter::once(PathElement::new(
                [(*t, 0.0), (*t, y1)],
                WHITE.stroke_width(2),
            )))?;
            chart.draw_series(std::iter::once(
                EmptyElement::at((*t, y1))
                    + Text::new(
                        clean_label(name),
                        (3, 2),
                        ("sans-serif", 12).into_font().color(&BLACK),
                    ),
            ))?;
        }
        draw_color_bar(&bar, lo, hi, &map.unit)?;
        root.present()?;
    }
    Ok(with_title(svg, &map.title))
}

fn draw_color_bar(
    area: &DrawingArea<SVGBackend, plotters::coord::Shift>,
    lo: f64,
    hi: f64,
    unit: &str,
) -> Result<(), PlotError> {
    let steps = 50;
    let (top, bottom, left) = (60i32, 300i32, 20i32);
    let h = (bottom - top) as f64 / steps as f64;
    for s in 0..steps {
        let t = 1.0 - (s as f64 + 0.5) / steps as f64;
        let y = top + (s as f64 * h) as i32;
        area.draw(&Rectangle::new(
            [(left, y), (left + 20, top + ((s + 1) as f64 * h) as i32)],
            color_of(t).filled(),
        ))?;
    }
    let font = ("sans-serif", 11).into_font().color(&BLACK);
    area.draw(&Text::new(
        format!("{hi:.3}"),
        (left, top - 16),
        font.clone(),
    ))?;
    area.draw(&Text::new(
        format!("{lo:.3}"),
        (left, bottom + 4),
        font.clone(),
    ))?;
    area.draw(&Text::new(
        clean_label(unit),
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

    #[test]
    fn limits_ignore_non_finite_and_spread_flat_maps() {
        let rows = vec![vec![f64::NAN, 1.0, 1.0], vec![1.0]];
        assert_eq!(color_limits(&rows), (0.5, 1.5));
        let rows = vec![(0..=100).map(f64::from).collect::<Vec<_>>()];
        assert_eq!(color_limits(&rows), (2.0, 98.0));
    }
}

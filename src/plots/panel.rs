//! One chart panel: axes, named series (line, markers or both, gaps where a value is missing),
//! vertical guide lines, a legend. Shared by every picture of this module.

use super::PlotError;
use plotters::coord::Shift;
use plotters::prelude::*;

/// The Okabe–Ito palette, distinguishable with the common colour-vision deficiencies
/// (Okabe & Ito 2008, "Color Universal Design"); black last, as it is kept for predictions.
pub const PALETTE: [RGBColor; 7] = [
    RGBColor(0, 114, 178),
    RGBColor(213, 94, 0),
    RGBColor(0, 158, 115),
    RGBColor(204, 121, 167),
    RGBColor(230, 159, 0),
    RGBColor(86, 180, 233),
    RGBColor(0, 0, 0),
];

/// Light grey for guide lines (session boundaries, zero, events) and excluded points.
pub const GUIDE: RGBColor = RGBColor(170, 170, 170);

pub type Area<'a> = DrawingArea<SVGBackend<'a>, Shift>;

/// A named series: one y per x, `None` (or a non-finite value) leaves a gap.
#[derive(Debug, Clone, PartialEq)]
pub struct Series {
    pub name: String,
    pub color: RGBColor,
    pub points: Vec<(f64, Option<f64>)>,
    /// Join consecutive points with a line.
    pub line: bool,
    /// Marker radius in pixels (0: none). Each present point is one SVG `<circle>`.
    pub marker: u32,
    /// Hollow markers (excluded observations).
    pub hollow: bool,
}

impl Series {
    pub fn new(name: impl Into<String>, color: RGBColor, points: Vec<(f64, Option<f64>)>) -> Self {
        Series {
            name: name.into(),
            color,
            points,
            line: true,
            marker: 3,
            hollow: false,
        }
    }

    /// The points that are drawn.
    pub fn present(&self) -> impl Iterator<Item = (f64, f64)> + '_ {
        self.points
            .iter()
            .filter_map(|&(x, y)| Some((x, y?)))
            .filter(|(x, y)| x.is_finite() && y.is_finite())
    }
}

/// What a panel shows.
pub struct Panel<'s> {
    pub title: &'s str,
    pub x_desc: &'s str,
    pub y_desc: &'s str,
    pub series: &'s [Series],
    /// Vertical guide lines at these x (session boundaries).
    pub vlines: &'s [f64],
    /// Shown in place of the chart when no series has a point.
    pub empty_note: &'s str,
    /// x counts days or trials: tick labels without decimals.
    pub integer_x: bool,
}

/// Range of `values` padded by 5 %, always containing 0 (responses are relative to baseline).
fn padded(values: impl Iterator<Item = f64>, with_zero: bool) -> Option<(f64, f64)> {
    let (mut lo, mut hi) = (f64::INFINITY, f64::NEG_INFINITY);
    for v in values {
        lo = lo.min(v);
        hi = hi.max(v);
    }
    if !lo.is_finite() {
        return None;
    }
    if with_zero {
        lo = lo.min(0.0);
        hi = hi.max(0.0);
    }
    let span = hi - lo;
    let pad = if span > 0.0 { span * 0.05 } else { 1.0 };
    Some((lo - pad, hi + pad))
}

fn caption_font() -> TextStyle<'static> {
    ("sans-serif", 17).into_font().color(&BLACK)
}

/// Draw `panel` into `area`.
pub fn draw(area: &Area, panel: &Panel) -> Result<(), PlotError> {
    let title = crate::text::svg_label(panel.title);
    let xs = || panel.series.iter().flat_map(|s| s.present().map(|p| p.0));
    let ys = || panel.series.iter().flat_map(|s| s.present().map(|p| p.1));
    let (Some((x0, x1)), Some((y0, y1))) = (padded(xs(), false), padded(ys(), true)) else {
        let (w, h) = area.dim_in_pixel();
        area.draw(&Text::new(title, (10, 8), caption_font()))?;
        area.draw(&Text::new(
            crate::text::svg_label(panel.empty_note),
            (w as i32 / 6, h as i32 / 2),
            ("sans-serif", 14).into_font().color(&GUIDE.mix(1.0)),
        ))?;
        return Ok(());
    };
    // Headroom for the legend (upper left), so it never covers a data point: the legend's
    // height in pixels becomes the same share of the y range above the highest value.
    let n_legend = panel
        .series
        .iter()
        .filter(|s| s.present().next().is_some())
        .count();
    let (_, h) = area.dim_in_pixel();
    let plot_px = (h as f64 - 25.0 - 38.0 - 24.0).max(40.0);
    let legend_px = (n_legend as f64 * 19.0 + 16.0).min(plot_px * 0.6);
    let y1 = y1 + (y1 - y0) * legend_px / (plot_px - legend_px);
    let mut chart = ChartBuilder::on(area)
        .caption(title, caption_font())
        .margin(12)
        .x_label_area_size(38)
        .y_label_area_size(62)
        .build_cartesian_2d(x0..x1, y0..y1)?;
    // Days and trials are whole numbers: at most one tick per unit, and a label only on whole
    // values (a tick at 2.5 would read "2" or "3").
    let n_x_labels = if panel.integer_x {
        ((x1 - x0).floor() as usize + 1).clamp(2, 12)
    } else {
        10
    };
    chart
        .configure_mesh()
        .x_labels(n_x_labels)
        .x_desc(crate::text::svg_label(panel.x_desc))
        .y_desc(crate::text::svg_label(panel.y_desc))
        .light_line_style(WHITE)
        .bold_line_style(RGBColor(235, 235, 235))
        .label_style(("sans-serif", 12))
        .axis_desc_style(("sans-serif", 13))
        .x_label_formatter(&|x: &f64| match panel.integer_x {
            true if (x - x.round()).abs() > 1e-9 => String::new(),
            true => format!("{x:.0}"),
            false => format!("{x}"),
        })
        .draw()?;
    let guide = GUIDE.stroke_width(1);
    for &x in panel.vlines {
        chart.draw_series(std::iter::once(PathElement::new([(x, y0), (x, y1)], guide)))?;
    }
    chart.draw_series(std::iter::once(PathElement::new(
        [(x0, 0.0), (x1, 0.0)],
        BLACK.mix(0.4).stroke_width(1),
    )))?;

    let mut any_legend = false;
    for s in panel.series {
        if s.present().next().is_none() {
            continue;
        }
        let color = s.color;
        if s.line {
            // One polyline per run of present points: a missing value is a gap, not a bridge.
            let mut run: Vec<(f64, f64)> = Vec::new();
            let mut runs: Vec<Vec<(f64, f64)>> = Vec::new();
            for &(x, y) in &s.points {
                match y.filter(|v| v.is_finite() && x.is_finite()) {
                    Some(y) => run.push((x, y)),
                    None if !run.is_empty() => runs.push(std::mem::take(&mut run)),
                    None => {}
                }
            }
            runs.push(run);
            for r in runs.into_iter().filter(|r| r.len() >= 2) {
                chart.draw_series(LineSeries::new(r, color.stroke_width(2)))?;
            }
        }
        let anno = if s.marker > 0 {
            let style = if s.hollow {
                color.stroke_width(1)
            } else {
                color.filled()
            };
            let r = s.marker;
            chart.draw_series(s.present().map(move |p| Circle::new(p, r, style)))?
        } else {
            chart.draw_series(std::iter::empty::<Circle<(f64, f64), u32>>())?
        };
        anno.label(crate::text::svg_label(&s.name))
            .legend(move |(x, y)| Rectangle::new([(x, y - 4), (x + 14, y + 4)], color.filled()));
        any_legend = true;
    }
    if any_legend {
        chart
            .configure_series_labels()
            .position(SeriesLabelPosition::UpperLeft)
            .background_style(WHITE.mix(0.85))
            .border_style(GUIDE)
            .label_font(("sans-serif", 12))
            .draw()?;
    }
    Ok(())
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn range_contains_zero_and_pads_flat_data() {
        assert_eq!(padded([2.0, 2.0].into_iter(), false), Some((1.0, 3.0)));
        let (lo, hi) = padded([1.0, 3.0].into_iter(), true).unwrap();
        assert!(lo < 0.0 && hi > 3.0);
        assert_eq!(padded(std::iter::empty(), true), None);
    }
}

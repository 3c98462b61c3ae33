//! A trace as a small text plot: a title row, then one dot per column at the value's height,
//! a faint zero line, and guides at the cue and reward columns.

use super::{put, TimeAxis};
use crate::tui::theme::{Role, Theme};
use ratatui::buffer::Buffer;
use ratatui::layout::Rect;

/// One plotted series, already one value per column (NaN = nothing to draw there).
pub struct Trace<'a> {
    pub title: &'a str,
    pub cols: &'a [f64],
    pub role: Role,
    /// Keep 0 inside the scale (rates, model traces); off for signals far from zero.
    pub include_zero: bool,
}

/// Draw `trace` into `area`: `gutter` label columns (the scale), then the plot.
pub fn render(
    buf: &mut Buffer,
    area: Rect,
    trace: &Trace,
    theme: &Theme,
    guides: &[(u16, &str, Role)],
    gutter: u16,
) {
    if area.height == 0 {
        return;
    }
    let finite = trace.cols.iter().copied().filter(|v| v.is_finite());
    let start = if trace.include_zero {
        (0.0_f64, 0.0_f64)
    } else {
        (f64::INFINITY, f64::NEG_INFINITY)
    };
    let (mut lo, mut hi) = finite.fold(start, |(l, h), v| (l.min(v), h.max(v)));
    if !lo.is_finite() {
        (lo, hi) = (0.0, 1.0);
    }
    if hi - lo < 1e-12 {
        hi = lo + 1.0;
    }
    let title = format!("{}  [{}, {}]", trace.title, short(lo), short(hi));
    put(buf, area, gutter, 0, &title, theme.style(Role::Title));
    let h = area.height - 1;
    if h == 0 {
        return;
    }
    let plot = Rect::new(
        area.x + gutter,
        area.y + 1,
        area.width.saturating_sub(gutter),
        h,
    );
    let row_of = |v: f64| {
        (((hi - v) / (hi - lo)) * (h - 1) as f64)
            .round()
            .clamp(0.0, (h - 1) as f64) as u16
    };
    let w = gutter.saturating_sub(1) as usize;
    put(
        buf,
        area,
        0,
        1,
        &format!("{:>w$}", short(hi)),
        theme.style(Role::Dim),
    );
    if h > 1 {
        put(
            buf,
            area,
            0,
            h,
            &format!("{:>w$}", short(lo)),
            theme.style(Role::Dim),
        );
    }
    if lo < 0.0 && hi > 0.0 {
        let z = row_of(0.0);
        for c in 0..plot.width {
            put(buf, plot, c, z, theme.rule(), theme.style(Role::Dim));
        }
    }
    for &(c, _, role) in guides {
        for r in 0..h {
            put(buf, plot, c, r, theme.guide(), theme.style(role));
        }
    }
    for (c, v) in trace.cols.iter().enumerate().take(plot.width as usize) {
        if v.is_finite() {
            put(
                buf,
                plot,
                c as u16,
                row_of(*v),
                theme.dot(),
                theme.style(trace.role),
            );
        }
    }
}

/// A number in at most ~6 characters for scale labels.
pub fn short(v: f64) -> String {
    let a = v.abs();
    if a == 0.0 {
        "0".to_string()
    } else if a >= 1000.0 {
        format!("{v:.0}")
    } else if a >= 10.0 {
        format!("{v:.1}")
    } else if a >= 0.01 {
        format!("{v:.2}")
    } else {
        format!("{v:.0e}")
    }
}

/// Columns of a trial-aligned plot for a model series (bins of `dt` from the alignment time).
pub fn model_cols(axis: &TimeAxis, values: &[f64], dt: f64) -> Vec<f64> {
    axis.resample_peak(values, dt)
}

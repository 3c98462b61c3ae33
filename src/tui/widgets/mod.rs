//! Widgets: each draws one region from `&State` (or from slices borrowed from it) into a
//! buffer, and mutates nothing. Shared here: writing clipped text and the time axis that keeps
//! raster, licks and traces lined up column for column.

pub mod confirm;
pub mod heat;
pub mod mark_picker;
pub mod note_editor;
pub mod raster;
pub mod status_bar;
pub mod tabs;
pub mod trace;
pub mod trial_list;
pub mod type_rows;

use ratatui::buffer::Buffer;
use ratatui::layout::Rect;
use ratatui::style::Style;

/// Write `text` at (`dx`, `dy`) inside `area`, cut at the area's right edge; returns the width
/// written. Text must already be clean (see `theme::clean`).
pub fn put(buf: &mut Buffer, area: Rect, dx: u16, dy: u16, text: &str, style: Style) -> u16 {
    if dy >= area.height || dx >= area.width {
        return 0;
    }
    let max = (area.width - dx) as usize;
    let (x, _) = buf.set_stringn(area.x + dx, area.y + dy, text, max, style);
    x - (area.x + dx)
}

/// Fill one row of `area` with `style` (used for the current-row highlight).
pub fn fill_row(buf: &mut Buffer, area: Rect, dy: u16, style: Style) {
    if dy < area.height {
        buf.set_style(Rect::new(area.x, area.y + dy, area.width, 1), style);
    }
}

/// Seconds relative to the trial's alignment time ↔ plot columns.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct TimeAxis {
    pub from: f64,
    pub to: f64,
    pub width: u16,
}

impl TimeAxis {
    fn per_col(&self) -> f64 {
        (self.to - self.from) / self.width.max(1) as f64
    }

    /// The column a time falls in, if it is on the plot.
    pub fn col(&self, t: f64) -> Option<u16> {
        if !(t >= self.from && t < self.to) || self.width == 0 {
            return None;
        }
        Some((((t - self.from) / self.per_col()) as u16).min(self.width - 1))
    }

    /// The time span [start, end) a column covers.
    pub fn span(&self, c: u16) -> (f64, f64) {
        let w = self.per_col();
        (self.from + c as f64 * w, self.from + (c + 1) as f64 * w)
    }

    /// Observed bins (width `bin_s`, first starting at `start`) averaged per column.
    pub fn resample_mean(&self, values: &[f64], start: f64, bin_s: f64) -> Vec<f64> {
        (0..self.width)
            .map(|c| {
                let (a, b) = self.span(c);
                let first = ((a - start) / bin_s).ceil().max(0.0) as usize;
                let mut sum = 0.0;
                let mut n = 0;
                let mut k = first;
                while k < values.len() && start + (k as f64 + 0.5) * bin_s < b {
                    if start + (k as f64 + 0.5) * bin_s >= a && values[k].is_finite() {
                        sum += values[k];
                        n += 1;
                    }
                    k += 1;
                }
                if n > 0 {
                    return sum / n as f64;
                }
                let mid = ((a + b) / 2.0 - start) / bin_s;
                if mid >= 0.0 && (mid as usize) < values.len() {
                    values[mid as usize]
                } else {
                    f64::NAN
                }
            })
            .collect()
    }

    /// Model bins (bin k covers [k·dt, (k+1)·dt)) per column, keeping the value of largest
    /// magnitude so a one-bin δ at the reward never disappears when columns are wider than bins.
    pub fn resample_peak(&self, values: &[f64], dt: f64) -> Vec<f64> {
        (0..self.width)
            .map(|c| {
                let (a, b) = self.span(c);
                let lo = (a / dt).floor().max(0.0) as usize;
                let hi = ((b / dt).ceil().max(0.0) as usize).min(values.len());
                if b <= 0.0 || lo >= hi {
                    return f64::NAN;
                }
                values[lo..hi].iter().copied().fold(f64::NAN, |m, v| {
                    if m.is_nan() || v.abs() > m.abs() {
                        v
                    } else {
                        m
                    }
                })
            })
            .collect()
    }
}

/// A number for a table cell: fixed decimals, "-" when absent.
pub fn num(x: Option<f64>, decimals: usize) -> String {
    match x {
        Some(v) if v.is_finite() => format!("{v:.decimals$}"),
        _ => "-".to_string(),
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn axis_maps_times_to_columns() {
        let ax = TimeAxis {
            from: -1.0,
            to: 3.0,
            width: 40,
        };
        assert_eq!(ax.col(-1.0), Some(0));
        assert_eq!(ax.col(0.0), Some(10));
        assert_eq!(ax.col(2.99), Some(39));
        assert_eq!(ax.col(3.0), None);
        // A lone δ in bin 30 (1.5 s) survives 0.1 s columns.
        let mut d = vec![0.0; 50];
        d[30] = 1.0;
        let cols = ax.resample_peak(&d, 0.05);
        assert_eq!(cols[ax.col(1.5).unwrap() as usize], 1.0);
        assert!(cols[0].is_nan());
        assert_eq!(cols.iter().filter(|v| **v == 1.0).count(), 1);
    }
}

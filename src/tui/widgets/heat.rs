//! Session heat rows: one row per trial, one cell per time column, shaded by the trial's
//! binned activity; grouped by cue and outcome, marks in the left margin and pending
//! suggestions in its last column, next to the row.

use super::{put, TimeAxis};
use crate::tui::state::State;
use crate::tui::theme::{Role, Theme};
use ratatui::buffer::Buffer;
use ratatui::layout::Rect;

/// A display line of the session screen: a group heading or a trial.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum Line {
    Heading(usize),
    Trial(usize),
}

/// All display lines in order: each group's heading then its trials.
pub fn lines(state: &State) -> Vec<Line> {
    let mut out = Vec::new();
    for (g, group) in state.view.groups.iter().enumerate() {
        out.push(Line::Heading(g));
        out.extend(group.trials.iter().map(|&t| Line::Trial(t)));
    }
    out
}

/// The shade index (0 = empty) of a value in the view's robust range.
pub fn shade(v: f64, range: (f64, f64), levels: usize) -> usize {
    if !v.is_finite() {
        return 0;
    }
    let f = ((v - range.0) / (range.1 - range.0)).clamp(0.0, 1.0);
    (f * (levels - 1) as f64).round() as usize
}

/// Draw heat rows into `area`: margin (mark + trial number, `gutter` wide), then cells.
pub fn render(
    buf: &mut Buffer,
    area: Rect,
    state: &State,
    theme: &Theme,
    axis: &TimeAxis,
    gutter: u16,
) {
    if area.height == 0 {
        return;
    }
    let all = lines(state);
    let rows = area.height as usize;
    let at = all
        .iter()
        .position(|l| *l == Line::Trial(state.trial))
        .unwrap_or(0);
    let first = at
        .saturating_sub(rows / 2)
        .min(all.len().saturating_sub(rows));
    let plot = Rect::new(
        area.x + gutter,
        area.y,
        area.width.saturating_sub(gutter),
        area.height,
    );
    let shades = theme.shades();
    let session = state.current_session();
    let zero_col = axis.col(0.0);
    for (dy, line) in all.iter().skip(first).take(rows).enumerate() {
        let dy = dy as u16;
        match *line {
            Line::Heading(g) => {
                let group = &state.view.groups[g];
                let text = format!("{} ({})", theme.clean(&group.label), group.trials.len());
                for c in 0..area.width {
                    put(buf, area, c, dy, theme.rule(), theme.style(Role::Dim));
                }
                put(
                    buf,
                    area,
                    1,
                    dy,
                    &format!(" {text} "),
                    theme.style(Role::Title),
                );
            }
            Line::Trial(t) => {
                let trial = &session.trials[t];
                let (glyph, role) = theme.mark_glyph(state.mark_of(trial.number).map(|m| m.kind));
                put(buf, area, 0, dy, glyph, theme.style(role));
                let current = t == state.trial;
                let num_style = if current {
                    theme.style(Role::Current)
                } else {
                    theme.style(Role::Dim)
                };
                let w = gutter.saturating_sub(2) as usize;
                put(
                    buf,
                    area,
                    1,
                    dy,
                    &format!("{:>w$}", trial.number),
                    num_style,
                );
                if current {
                    put(buf, area, 1, dy, theme.pointer(), num_style);
                }
                if !state.suggestions_of(trial.number).is_empty() {
                    let col = gutter.saturating_sub(1);
                    put(
                        buf,
                        area,
                        col,
                        dy,
                        theme.suggest_glyph(),
                        theme.style(Role::Suggest),
                    );
                }
                let trace = &state.view.traces[t];
                let cols = axis.resample_mean(trace, state.view.from_s, state.view.bin_s);
                for (c, v) in cols.iter().enumerate() {
                    let s = shade(*v, state.view.range, shades.len());
                    let glyph = if s == 0 && Some(c as u16) == zero_col {
                        theme.guide()
                    } else {
                        shades[s]
                    };
                    put(buf, plot, c as u16, dy, glyph, theme.style(Role::Plain));
                }
            }
        }
    }
}

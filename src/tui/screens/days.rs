//! The days screen: one row per session in training order (counts, exclusions, responses,
//! omission dip, anticipatory licking, model δ at cue and reward), then learning curves
//! across days and across all trials.

use crate::marks::MarkKind;
use crate::tui::derived::DayLine;
use crate::tui::state::State;
use crate::tui::theme::{Role, Theme};
use crate::tui::widgets::{fill_row, num, put};
use ratatui::buffer::Buffer;
use ratatui::layout::Rect;

const HEADER: &str = "session         trials excl susp   cue  reward  omit  licks  dcue  drew";

fn row_text(state: &State, theme: &Theme, d: &DayLine) -> String {
    let s = &state.subject.sessions[d.session];
    let marks = &state.marks[d.session].state.marks;
    let count = |k: MarkKind| marks.values().filter(|m| m.kind == k).count();
    let name: String = theme.clean(&s.name).chars().take(15).collect();
    format!(
        "{:<15} {:>6} {:>4} {:>4} {:>5} {:>7} {:>5} {:>6} {:>5} {:>5}",
        name,
        d.n_trials,
        count(MarkKind::Exclude),
        count(MarkKind::Suspect),
        num(d.cue_response, 1),
        num(d.reward_response, 1),
        num(d.omission_dip, 1),
        num(d.lick_rate, 1),
        num(d.delta_cue, 2),
        num(d.delta_reward, 2),
    )
}

/// Values as one character per column (blocks, or ASCII levels), NaN as a blank.
pub fn spark(values: &[f64], width: usize, theme: &Theme) -> String {
    let levels: &[&str] = if theme.ascii {
        &["_", ".", "-", "~", "=", "*", "#"]
    } else {
        &["▁", "▂", "▃", "▄", "▅", "▆", "▇", "█"]
    };
    if values.is_empty() || width == 0 {
        return String::new();
    }
    // Average values into at most `width` columns.
    let cols = values.len().min(width);
    let per = values.len() as f64 / cols as f64;
    let col_vals: Vec<f64> = (0..cols)
        .map(|c| {
            let a = (c as f64 * per) as usize;
            let b = (((c + 1) as f64 * per) as usize)
                .max(a + 1)
                .min(values.len());
            let fin: Vec<f64> = values[a..b]
                .iter()
                .copied()
                .filter(|v| v.is_finite())
                .collect();
            if fin.is_empty() {
                f64::NAN
            } else {
                fin.iter().sum::<f64>() / fin.len() as f64
            }
        })
        .collect();
    let fin = col_vals.iter().copied().filter(|v| v.is_finite());
    let (lo, hi) = fin.fold((f64::INFINITY, f64::NEG_INFINITY), |(l, h), v| {
        (l.min(v), h.max(v))
    });
    col_vals
        .iter()
        .map(|v| {
            if !v.is_finite() {
                " "
            } else if hi - lo < 1e-12 {
                levels[levels.len() / 2]
            } else {
                levels[(((v - lo) / (hi - lo)) * (levels.len() - 1) as f64).round() as usize]
            }
        })
        .collect()
}

pub fn render(buf: &mut Buffer, area: Rect, state: &State, theme: &Theme) {
    put(buf, area, 1, 0, HEADER, theme.style(Role::Title));
    let curves = 5u16.min(area.height.saturating_sub(3));
    let table_h = area.height.saturating_sub(1 + curves);
    let rows = table_h as usize;
    let n = state.days.len();
    let first = state
        .session
        .saturating_sub(rows / 2)
        .min(n.saturating_sub(rows));
    let table = Rect::new(area.x, area.y + 1, area.width, table_h);
    for (dy, d) in state.days.iter().skip(first).take(rows).enumerate() {
        let dy = dy as u16;
        let current = d.session == state.session;
        if current {
            fill_row(buf, table, dy, theme.style(Role::Current));
        }
        let style = if current {
            theme.style(Role::Current)
        } else {
            theme.style(Role::Plain)
        };
        put(buf, table, 1, dy, &row_text(state, theme, d), style);
    }
    if curves == 0 {
        return;
    }
    let cy = area.y + 1 + table_h;
    let box_area = Rect::new(area.x, cy, area.width, curves);
    let w = area.width.saturating_sub(24) as usize;
    let by_day = |f: fn(&DayLine) -> Option<f64>| -> Vec<f64> {
        state
            .days
            .iter()
            .map(|d| f(d).unwrap_or(f64::NAN))
            .collect()
    };
    let per_trial_cue: Vec<f64> = state
        .obs
        .iter()
        .map(|o| o.as_ref().and_then(|o| o.cue).unwrap_or(f64::NAN))
        .collect();
    let per_trial_rew: Vec<f64> = state
        .obs
        .iter()
        .map(|o| o.as_ref().and_then(|o| o.reward).unwrap_or(f64::NAN))
        .collect();
    let lines: [(&str, Vec<f64>); 5] = [
        ("cue by day", by_day(|d| d.cue_response)),
        ("reward by day", by_day(|d| d.reward_response)),
        ("licks by day", by_day(|d| d.lick_rate)),
        ("cue, all trials", per_trial_cue),
        ("reward, all trials", per_trial_rew),
    ];
    for (dy, (label, values)) in lines.iter().enumerate().take(curves as usize) {
        put(
            buf,
            box_area,
            1,
            dy as u16,
            &format!("{label:>20} "),
            theme.style(Role::Dim),
        );
        put(
            buf,
            box_area,
            22,
            dy as u16,
            &spark(values, w, theme),
            theme.style(Role::Plain),
        );
    }
}

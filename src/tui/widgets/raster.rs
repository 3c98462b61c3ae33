//! The spike raster as text, plus the lick, event and seconds rows under it.
//!
//! All units: one row per unit for the current trial. One chosen unit: one row per trial
//! around the current one (current trial highlighted), the usual single-unit raster. A heading
//! row names the mode and what the rows are. Cue and
//! reward columns get a faint guide line so the eye can follow them down to the traces.

use super::{fill_row, put, TimeAxis};
use crate::data::{EventKind, Session, Trial};
use crate::obs::{self, alignment_time, expected_reward_time, TrialKind};
use crate::tui::state::State;
use crate::tui::theme::{Role, Theme};
use ratatui::buffer::Buffer;
use ratatui::layout::Rect;

/// Columns (relative to `plot`) of the current trial's cue, reward and expected reward.
pub fn event_cols(state: &State, axis: &TimeAxis) -> Vec<(u16, &'static str, Role)> {
    let session = state.current_session();
    let Some(trial) = state.current_trial() else {
        return Vec::new();
    };
    let Some(t0) = alignment_time(trial) else {
        return Vec::new();
    };
    if trial.has_events() {
        return event_list_cols(session, trial, t0, axis);
    }
    let mut out = Vec::new();
    if let Some(cs) = trial.cue_s.filter(|_| trial.cue.is_some()) {
        out.extend(axis.col(cs - t0).map(|c| (c, "C", Role::Cue)));
    }
    match (trial.reward_s, expected_reward_time(session, trial)) {
        (Some(r), e) => {
            let rc = axis.col(r - t0);
            out.extend(rc.map(|c| (c, "R", Role::Reward)));
            // A reward off its schedule: show where it was expected too.
            if let Some(ec) = e
                .and_then(|e| axis.col(e - t0))
                .filter(|ec| Some(*ec) != rc)
            {
                out.push((ec, "e", Role::Reward));
            }
        }
        // Omission: where the reward should have come.
        (None, Some(e)) => out.extend(axis.col(e - t0).map(|c| (c, "o", Role::Reward))),
        _ => {}
    }
    out
}

/// A trial with an event list: every cue's onset (C) and offset (]), every reward (R), and on
/// an omission trial every expected reward time (o).
fn event_list_cols(
    session: &Session,
    trial: &Trial,
    t0: f64,
    axis: &TimeAxis,
) -> Vec<(u16, &'static str, Role)> {
    let events = trial.all_events();
    let mut out = Vec::new();
    for e in &events {
        match e.kind {
            EventKind::Cue if e.cue.is_some() => {
                out.extend(axis.col(e.onset_s - t0).map(|c| (c, "C", Role::Cue)));
                if let Some(off) = e.offset_s {
                    out.extend(axis.col(off - t0).map(|c| (c, "]", Role::Cue)));
                }
            }
            EventKind::Cue => {}
            EventKind::Reward => {
                out.extend(axis.col(e.onset_s - t0).map(|c| (c, "R", Role::Reward)));
            }
        }
    }
    if TrialKind::of(session, trial) == Some(TrialKind::Omission) {
        for (_, at) in obs::events::expected_times(session, &events) {
            out.extend(axis.col(at - t0).map(|c| (c, "o", Role::Reward)));
        }
    }
    out
}

/// Spike counts per column for one unit's sorted times, on a trial aligned at `t0`.
fn row_counts(times: &[f64], t0: f64, axis: &TimeAxis) -> Vec<usize> {
    let mut counts = vec![0usize; axis.width as usize];
    let lo = t0 + axis.from;
    let hi = t0 + axis.to;
    let a = times.partition_point(|&t| t < lo);
    for &t in times[a..].iter().take_while(|&&t| t < hi) {
        if let Some(c) = axis.col(t - t0) {
            counts[c as usize] += 1;
        }
    }
    counts
}

/// Draw the raster rows into `area` (`gutter` columns of labels, then the plot).
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
    let session = state.current_session();
    let Some(spikes) = session.spikes.as_ref().filter(|s| !s.units.is_empty()) else {
        put(
            buf,
            area,
            gutter,
            0,
            "no spikes.csv in this session",
            theme.style(Role::Dim),
        );
        return;
    };
    // A heading names the mode and what a row is, so the switch by the next-unit key from
    // "units of this trial" to "one unit across trials" cannot go unnoticed.
    let area = if area.height >= 3 {
        let key = state.keymap.keys_for(crate::tui::action::Action::NextUnit);
        let trial_no = state.current_trial().map_or(0, |t| t.number);
        let heading = match state.unit {
            None => {
                format!("spikes: units of trial {trial_no} (row = unit; {key} one unit)")
            }
            Some(u) => format!(
                "spikes: unit {} across trials (row = trial no.; {key} next)",
                spikes.units.get(u).map_or("?", String::as_str)
            ),
        };
        put(
            buf,
            area,
            0,
            0,
            &theme.clean(&heading),
            theme.style(Role::Dim),
        );
        Rect::new(area.x, area.y + 1, area.width, area.height - 1)
    } else {
        area
    };
    let guides = event_cols(state, axis);
    let plot = Rect::new(
        area.x + gutter,
        area.y,
        area.width.saturating_sub(gutter),
        area.height,
    );
    let draw_row = |buf: &mut Buffer, dy: u16, label: &str, counts: &[usize], current: bool| {
        let label_style = if current {
            theme.style(Role::Current)
        } else {
            theme.style(Role::Dim)
        };
        let label = theme.clean(label);
        let shown: String = label
            .chars()
            .take(gutter.saturating_sub(1) as usize)
            .collect();
        put(
            buf,
            area,
            0,
            dy,
            &format!("{shown:>w$}", w = gutter.saturating_sub(1) as usize),
            label_style,
        );
        for (c, &n) in counts.iter().enumerate() {
            let c = c as u16;
            if n > 0 {
                put(buf, plot, c, dy, theme.spike(n), theme.style(Role::Plain));
            } else if let Some((_, _, role)) = guides.iter().find(|g| g.0 == c) {
                put(buf, plot, c, dy, theme.guide(), theme.style(*role));
            }
        }
    };
    match state.unit {
        None => {
            let rows = area.height as usize;
            let Some(t0) = state.current_trial().and_then(alignment_time) else {
                return;
            };
            let n = spikes.units.len();
            let shown = if n > rows { rows - 1 } else { n };
            for (u, times) in spikes.times.iter().enumerate().take(shown) {
                draw_row(
                    buf,
                    u as u16,
                    &spikes.units[u],
                    &row_counts(times, t0, axis),
                    false,
                );
            }
            if n > shown {
                let more = format!(
                    "+{} more units; {} picks one",
                    n - shown,
                    state.keymap.keys_for(crate::tui::action::Action::NextUnit)
                );
                put(
                    buf,
                    plot,
                    0,
                    shown as u16,
                    &theme.clean(&more),
                    theme.style(Role::Dim),
                );
            }
        }
        Some(u) => {
            let times = &spikes.times[u];
            let rows = area.height as usize;
            let first = state.trial.saturating_sub(rows / 2);
            let last = (first + rows).min(session.trials.len());
            let first = last.saturating_sub(rows);
            for (dy, ti) in (first..last).enumerate() {
                let trial = &session.trials[ti];
                let Some(t0) = alignment_time(trial) else {
                    continue;
                };
                let current = ti == state.trial;
                draw_row(
                    buf,
                    dy as u16,
                    &trial.number.to_string(),
                    &row_counts(times, t0, axis),
                    current,
                );
                if current {
                    fill_row(buf, plot, dy as u16, theme.style(Role::Title));
                }
            }
        }
    }
}

/// The lick row: a tick per column holding at least one lick.
pub fn render_licks(
    buf: &mut Buffer,
    area: Rect,
    state: &State,
    theme: &Theme,
    axis: &TimeAxis,
    gutter: u16,
) {
    put(
        buf,
        area,
        0,
        0,
        &format!("{:>w$}", "licks", w = gutter.saturating_sub(1) as usize),
        theme.style(Role::Dim),
    );
    let session = state.current_session();
    let plot = Rect::new(
        area.x + gutter,
        area.y,
        area.width.saturating_sub(gutter),
        1,
    );
    let (Some(licks), Some(t0)) = (
        session.licks.as_deref(),
        state.current_trial().and_then(alignment_time),
    ) else {
        put(buf, plot, 0, 0, "(none recorded)", theme.style(Role::Dim));
        return;
    };
    for (c, n) in row_counts(licks, t0, axis).into_iter().enumerate() {
        if n > 0 {
            put(
                buf,
                plot,
                c as u16,
                0,
                theme.lick(),
                theme.style(Role::Plain),
            );
        }
    }
}

/// The event row (C cue onset, ] cue offset, R reward, o omitted reward, e expected reward
/// when the delivery was off schedule) and the seconds row under it.
pub fn render_events(
    buf: &mut Buffer,
    area: Rect,
    state: &State,
    theme: &Theme,
    axis: &TimeAxis,
    gutter: u16,
) {
    let w = gutter.saturating_sub(1) as usize;
    let plot = Rect::new(
        area.x + gutter,
        area.y,
        area.width.saturating_sub(gutter),
        area.height,
    );
    put(
        buf,
        area,
        0,
        0,
        &format!("{:>w$}", "events"),
        theme.style(Role::Dim),
    );
    for c in 0..plot.width {
        put(buf, plot, c, 0, theme.rule(), theme.style(Role::Dim));
    }
    for (c, glyph, role) in event_cols(state, axis) {
        put(
            buf,
            plot,
            c,
            0,
            glyph,
            theme
                .style(role)
                .add_modifier(ratatui::style::Modifier::BOLD),
        );
    }
    if area.height < 2 {
        return;
    }
    put(
        buf,
        area,
        0,
        1,
        &format!("{:>w$}", "s"),
        theme.style(Role::Dim),
    );
    let mut next_free = 0u16;
    let first = axis.from.ceil() as i64;
    for s in first..=axis.to.floor() as i64 {
        if let Some(c) = axis.col(s as f64) {
            if c >= next_free {
                let label = s.to_string();
                next_free = c + put(buf, plot, c, 1, &label, theme.style(Role::Dim)) + 1;
            }
        }
    }
}

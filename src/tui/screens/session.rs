//! The session screen: every trial as a row of shaded activity on a shared time axis, grouped
//! by cue and outcome, marks and suggestions in the margin, the current trial highlighted and
//! its pending suggestion spelled out under the rows.

use crate::tui::state::State;
use crate::tui::theme::{Role, Theme};
use crate::tui::widgets::trace::short;
use crate::tui::widgets::{heat, put, raster, TimeAxis};
use ratatui::buffer::Buffer;
use ratatui::layout::Rect;

const GUTTER: u16 = 7;

pub fn render(buf: &mut Buffer, area: Rect, state: &State, theme: &Theme) {
    let view = &state.view;
    let axis = TimeAxis {
        from: view.from_s,
        to: view.to_s,
        width: area.width.saturating_sub(GUTTER + 1),
    };
    let title = match &view.missing {
        Some(why) => theme.clean(why),
        None => format!(
            "{} per trial, aligned on cue onset (uncued: reward)",
            theme.clean(&view.label)
        ),
    };
    put(buf, area, 1, 0, &title, theme.style(Role::Title));
    if area.height < 7 {
        return;
    }
    let rows = Rect::new(area.x, area.y + 1, area.width, area.height - 6);
    heat::render(buf, rows, state, theme, &axis, GUTTER);
    let foot = Rect::new(area.x, area.y + area.height - 5, area.width, 2);
    raster::render_events(buf, foot, state, theme, &axis, GUTTER);
    render_current(buf, area, state, theme, area.height - 3);
    let shades: String = theme.shades().concat();
    let legend = format!(
        "shade {} = {} .. {}   margin: {} excluded  ? suspect  {} suggested",
        shades,
        short(view.range.0),
        short(view.range.1),
        theme.mark_glyph(Some(crate::marks::MarkKind::Exclude)).0,
        theme.suggest_glyph(),
    );
    put(
        buf,
        area,
        1,
        area.height - 2,
        &legend,
        theme.style(Role::Dim),
    );
    let notes: Vec<String> = state
        .notes_of(None)
        .map(|r| format!("{}: {}", theme.clean(&r.reviewer), theme.clean(&r.note)))
        .collect();
    let notes = if notes.is_empty() {
        "session notes: none".to_string()
    } else {
        format!("session notes: {}", notes.join(" | "))
    };
    put(
        buf,
        area,
        1,
        area.height - 1,
        &notes,
        theme.style(Role::Plain),
    );
}

/// One line on the current trial's pending suggestion (the rule's reason), at row `dy`.
fn render_current(buf: &mut Buffer, area: Rect, state: &State, theme: &Theme, dy: u16) {
    let Some(trial) = state.current_trial() else {
        return;
    };
    let pending = state.suggestions_of(trial.number);
    let (text, role) = match pending.first() {
        None => (
            format!(
                "trial {}: no pending suggestion ({} in this session)",
                trial.number,
                state.pending_suggestions().len()
            ),
            Role::Dim,
        ),
        Some(s) => (
            format!(
                "trial {}: {} {}: {}{}",
                trial.number,
                theme.suggest_glyph(),
                s.rule,
                theme.clean(&s.reason),
                if pending.len() > 1 {
                    format!(" (+{} more)", pending.len() - 1)
                } else {
                    String::new()
                }
            ),
            Role::Suggest,
        ),
    };
    let room = area.width.saturating_sub(1) as usize;
    let text = if text.chars().count() > room {
        text.chars()
            .take(room.saturating_sub(1))
            .collect::<String>()
            + theme.ellipsis()
    } else {
        text
    };
    put(buf, area, 1, dy, &text, theme.style(role));
}

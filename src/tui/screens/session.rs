//! The session screen: every trial as a row of shaded activity on a shared time axis, grouped
//! by cue and outcome, marks in the margin, the current trial highlighted.

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
            view.label
        ),
    };
    put(buf, area, 1, 0, &title, theme.style(Role::Title));
    if area.height < 6 {
        return;
    }
    let rows = Rect::new(area.x, area.y + 1, area.width, area.height - 5);
    heat::render(buf, rows, state, theme, &axis, GUTTER);
    let foot = Rect::new(area.x, area.y + area.height - 4, area.width, 2);
    raster::render_events(buf, foot, state, theme, &axis, GUTTER);
    let shades: String = theme.shades().concat();
    let legend = format!(
        "shade {} = {} .. {}   margin: {} excluded  ? suspect",
        shades,
        short(view.range.0),
        short(view.range.1),
        theme.mark_glyph(Some(crate::marks::MarkKind::Exclude)).0,
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

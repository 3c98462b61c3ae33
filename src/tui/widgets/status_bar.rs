//! The status line: the last outcome ("saved: ..." only after the append returned), journal
//! problems, unsaved rows, who is reviewing, and where help is.

use super::put;
use crate::tui::action::Action;
use crate::tui::state::{State, Tone};
use crate::tui::theme::{Role, Theme};
use ratatui::buffer::Buffer;
use ratatui::layout::Rect;

pub fn render(buf: &mut Buffer, area: Rect, state: &State, theme: &Theme) {
    let unsaved: usize = state.sessions.iter().map(|s| s.marks.unsaved.len()).sum();
    let right = format!(
        " {}{} | {} help ",
        if unsaved > 0 {
            format!("{unsaved} UNSAVED | ")
        } else {
            String::new()
        },
        theme.clean(&state.opts.reviewer),
        state
            .keymap
            .keys_for(Action::ToggleHelp)
            .split(", ")
            .next()
            .unwrap_or("")
    );
    let rw = right.chars().count() as u16;
    let problem = state
        .sessions
        .get(state.session)
        .and_then(|s| s.marks.problem.as_ref());
    let (text, tone) = match problem {
        Some(p) if state.status.tone == Tone::Info => (p.clone(), Tone::Warn),
        _ => (state.status.text.clone(), state.status.tone),
    };
    let left_w = area.width.saturating_sub(rw);
    let left = Rect::new(area.x, area.y, left_w, 1);
    put(
        buf,
        left,
        0,
        0,
        &theme.clean(&text),
        theme.style(Role::Tone(tone)),
    );
    let style = if unsaved > 0 {
        theme.style(Role::Tone(Tone::Error))
    } else {
        theme.style(Role::Dim)
    };
    put(buf, area, left_w, 0, &right, style);
}

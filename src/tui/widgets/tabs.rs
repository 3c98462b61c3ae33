//! The top line: subject, session (n of N), and the screens with the current one marked.

use super::put;
use crate::tui::action::Action;
use crate::tui::state::{Screen, State};
use crate::tui::theme::{Role, Theme};
use ratatui::buffer::Buffer;
use ratatui::layout::Rect;

pub fn render(buf: &mut Buffer, area: Rect, state: &State, theme: &Theme) {
    let s = state.current_session();
    let head = format!(
        " {} {} {} ({}/{}) ",
        theme.clean(&s.meta.subject),
        theme.bar(),
        theme.clean(&s.name),
        state.session + 1,
        state.subject.sessions.len()
    );
    let mut x = put(buf, area, 0, 0, &head, theme.style(Role::Title));
    for (i, screen) in Screen::ALL.iter().enumerate() {
        let action = [
            Action::ShowTrial,
            Action::ShowSession,
            Action::ShowDays,
            Action::ShowFit,
        ][i];
        let keys = state.keymap.keys_for(action);
        let key = keys.split(", ").next().unwrap_or("");
        let label = format!(" {key} {} ", screen.title());
        let style = if *screen == state.screen {
            theme.style(Role::Current)
        } else {
            theme.style(Role::Dim)
        };
        x += put(buf, area, x, 0, &label, style);
    }
}

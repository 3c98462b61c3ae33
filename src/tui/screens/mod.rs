//! Screens: each draws the body of the window for one [`Screen`]; this file lays out the frame
//! (top line, body, status line), draws the overlay, and refuses sizes too small to be useful.

pub mod days;
pub mod fit;
pub mod help;
pub mod session;
pub mod trial;

use super::state::{Overlay, Screen, State};
use super::theme::{Role, Theme};
use super::widgets::{confirm, mark_picker, note_editor, put, status_bar, tabs};
use ratatui::buffer::Buffer;
use ratatui::layout::Rect;

/// Smallest window the screens are drawn in; below it a plain notice is shown instead.
pub const MIN_WIDTH: u16 = 60;
pub const MIN_HEIGHT: u16 = 16;

/// Draw the whole frame from the state. Never mutates it.
pub fn render(buf: &mut Buffer, area: Rect, state: &State) {
    let theme = Theme::from_options(&state.opts);
    if area.width < MIN_WIDTH || area.height < MIN_HEIGHT {
        let msg = format!(
            "terminal too small ({}x{}, need {MIN_WIDTH}x{MIN_HEIGHT})",
            area.width, area.height
        );
        for (i, chunk) in msg
            .as_bytes()
            .chunks(area.width.max(1) as usize)
            .enumerate()
        {
            let text = std::str::from_utf8(chunk).unwrap_or("");
            put(buf, area, 0, i as u16, text, theme.style(Role::Plain));
        }
        return;
    }
    let top = Rect::new(area.x, area.y, area.width, 1);
    let body = Rect::new(area.x, area.y + 1, area.width, area.height - 2);
    let bottom = Rect::new(area.x, area.bottom() - 1, area.width, 1);
    tabs::render(buf, top, state, &theme);
    match state.screen {
        Screen::Trial => trial::render(buf, body, state, &theme),
        Screen::Session => session::render(buf, body, state, &theme),
        Screen::Days => days::render(buf, body, state, &theme),
        Screen::Fit => fit::render(buf, body, state, &theme),
    }
    status_bar::render(buf, bottom, state, &theme);
    match &state.overlay {
        Overlay::None => {}
        Overlay::Help => help::render(buf, area, state, &theme),
        Overlay::Picker { kind, selected } => {
            mark_picker::render(buf, area, state, &theme, *kind, *selected)
        }
        Overlay::Editor {
            target,
            text,
            cursor,
        } => note_editor::render(buf, area, state, &theme, target, text, *cursor),
        Overlay::ConfirmAcceptAll { rule, count } => {
            confirm::render(buf, area, state, &theme, rule, *count)
        }
    }
}

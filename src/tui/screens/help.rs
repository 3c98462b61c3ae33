//! The help overlay, generated from the keymap in force so it cannot drift from it.

use crate::tui::action::Action;
use crate::tui::state::State;
use crate::tui::theme::{Role, Theme};
use crate::tui::widgets::put;
use ratatui::buffer::Buffer;
use ratatui::layout::Rect;
use ratatui::widgets::{Block, Clear, Widget};

/// The help lines: "keys  what", one per bindable action, then the fixed keys.
pub fn lines(state: &State) -> Vec<String> {
    let mut out: Vec<String> = state
        .keymap
        .bindings
        .iter()
        .map(|(a, _)| format!("{:<12} {}", state.keymap.keys_for(*a), a.describe()))
        .collect();
    out.push(format!("{:<12} {}", "ctrl-c", "quit (always)"));
    out.push(format!("{:<12} {}", "in picker", "1-9, or up/down + enter"));
    out.push(format!("{:<12} {}", "in editor", "enter saves, esc drops"));
    out.push(format!("{:<12} {}", "in question", "y yes, n or esc no"));
    out.push(format!("{:<12} {}", "events", "C cue, ] cue off, R reward"));
    out.push(format!("{:<12} {}", "", "o omitted, e R's due time"));
    let excluded = Theme::from_options(&state.opts)
        .mark_glyph(Some(crate::marks::MarkKind::Exclude))
        .0;
    let theme = Theme::from_options(&state.opts);
    out.push(format!(
        "{:<12} {excluded} excl. ? suspect + note",
        "margin"
    ));
    out.push(format!(
        "{:<12} {} suggested mark",
        "",
        theme.suggest_glyph()
    ));
    out
}

pub fn render(buf: &mut Buffer, screen: Rect, state: &State, theme: &Theme) {
    let lines = lines(state);
    let col_w = 39u16;
    let cols = if screen.width >= 2 * col_w + 2 { 2 } else { 1 };
    let per_col = lines.len().div_ceil(cols);
    let w = (col_w * cols as u16 + 2).min(screen.width);
    let h = (per_col as u16 + 3).min(screen.height);
    let area = Rect::new(
        screen.x + (screen.width - w) / 2,
        screen.y + (screen.height - h) / 2,
        w,
        h,
    );
    Clear.render(area, buf);
    let title = format!(
        " keys ({}) ",
        theme.clean(&state.keymap.sources.join(" + "))
    );
    let block = Block::bordered().border_set(theme.border()).title(title);
    let inner = block.inner(area);
    block.render(area, buf);
    for (i, l) in lines.iter().enumerate() {
        let (c, r) = (i / per_col, i % per_col);
        put(
            buf,
            inner,
            c as u16 * col_w,
            r as u16,
            &theme.clean(l),
            theme.style(Role::Plain),
        );
    }
    let close = state.keymap.keys_for(Action::ToggleHelp);
    put(
        buf,
        inner,
        0,
        inner.height.saturating_sub(1),
        &format!("{close} or esc closes"),
        theme.style(Role::Dim),
    );
}

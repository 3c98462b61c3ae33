//! The reason picker: a small box listing the configured reasons, numbered.

use super::put;
use crate::marks::MarkKind;
use crate::tui::state::State;
use crate::tui::theme::{Role, Theme};
use ratatui::buffer::Buffer;
use ratatui::layout::Rect;
use ratatui::widgets::{Block, Clear, Widget};

pub fn render(
    buf: &mut Buffer,
    screen: Rect,
    state: &State,
    theme: &Theme,
    kind: MarkKind,
    selected: usize,
) {
    let reasons = &state.opts.reasons;
    let w = 40.min(screen.width);
    let h = (reasons.len() as u16 + 4).min(screen.height);
    let area = Rect::new(
        screen.x + (screen.width - w) / 2,
        screen.y + (screen.height - h) / 2,
        w,
        h,
    );
    Clear.render(area, buf);
    let trial = state.current_trial().map_or(0, |t| t.number);
    let title = format!(" {} trial {trial}: why? ", kind.as_str());
    let block = Block::bordered().border_set(theme.border()).title(title);
    let inner = block.inner(area);
    block.render(area, buf);
    for (i, r) in reasons.iter().enumerate() {
        let style = if i == selected {
            theme.style(Role::Current)
        } else {
            theme.style(Role::Plain)
        };
        let line = format!(" {}  {}", i + 1, theme.clean(r));
        put(
            buf,
            inner,
            0,
            i as u16,
            &format!("{line:<w$}", w = inner.width as usize),
            style,
        );
    }
    put(
        buf,
        inner,
        0,
        inner.height.saturating_sub(1),
        " 1-9 or enter picks, esc cancels",
        theme.style(Role::Dim),
    );
}

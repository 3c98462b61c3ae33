//! The accept-all question: how many trials one rule's suggestions would mark, answered y/n.

use super::put;
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
    rule: &str,
    count: usize,
) {
    let w = 52.min(screen.width);
    let h = 7.min(screen.height);
    let area = Rect::new(
        screen.x + (screen.width - w) / 2,
        screen.y + (screen.height - h) / 2,
        w,
        h,
    );
    Clear.render(area, buf);
    let block = Block::bordered()
        .border_set(theme.border())
        .title(" accept all? ");
    let inner = block.inner(area);
    block.render(area, buf);
    let kind = state.rules.accept_as.as_str();
    let session = theme.clean(&state.current_session().name);
    let lines = [
        format!(" {count} pending {rule} suggestion(s)"),
        format!(" in session {session}:"),
        format!(" mark them all {kind}, reason {rule}?"),
        String::new(),
        " y accepts all, n or esc keeps them pending".to_string(),
    ];
    for (i, l) in lines.iter().enumerate() {
        let role = if i == 4 { Role::Dim } else { Role::Plain };
        put(buf, inner, 0, i as u16, l, theme.style(role));
    }
}

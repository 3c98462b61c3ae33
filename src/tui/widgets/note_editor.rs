//! The one-line note editor, in a box over the screen; long text scrolls to keep the cursor
//! in view.

use super::put;
use crate::tui::state::{NoteTarget, State};
use crate::tui::theme::{Role, Theme};
use ratatui::buffer::Buffer;
use ratatui::layout::Rect;
use ratatui::widgets::{Block, Clear, Widget};

pub fn render(
    buf: &mut Buffer,
    screen: Rect,
    state: &State,
    theme: &Theme,
    target: &NoteTarget,
    text: &str,
    cursor: usize,
) {
    let w = 70.min(screen.width);
    let h = 4.min(screen.height);
    let area = Rect::new(
        screen.x + (screen.width - w) / 2,
        screen.y + (screen.height - h) / 2,
        w,
        h,
    );
    Clear.render(area, buf);
    let title = match target {
        NoteTarget::Trial(t) => format!(" note on trial {t} "),
        NoteTarget::Session => format!(
            " note on session {} ",
            theme.clean(&state.current_session().name)
        ),
        NoteTarget::MarkNote { kind, .. } => format!(" {} (other): say why ", kind.as_str()),
        NoteTarget::TrialNumber => " go to trial number (enter: go, esc: stay) ".to_string(),
    };
    let block = Block::bordered()
        .border_set(theme.border())
        .title(theme.clean(&title));
    let inner = block.inner(area);
    block.render(area, buf);
    let chars: Vec<char> = theme.clean(text).chars().collect();
    let room = inner.width.saturating_sub(1) as usize;
    let start = cursor.saturating_sub(room);
    let shown: String = chars.iter().skip(start).take(room).collect();
    put(buf, inner, 0, 0, &shown, theme.style(Role::Plain));
    let cx = (cursor - start) as u16;
    let under = chars.get(cursor).map_or(" ".to_string(), |c| c.to_string());
    put(buf, inner, cx, 0, &under, theme.style(Role::Current));
    put(
        buf,
        inner,
        0,
        1,
        "enter saves, esc discards",
        theme.style(Role::Dim),
    );
}

//! The trial list: number, cue, outcome, the standing mark (first column) and a pending
//! suggestion (after the number), current trial highlighted, scrolled to keep it in view.

use super::{fill_row, put};
use crate::obs::TrialKind;
use crate::tui::state::State;
use crate::tui::theme::{Role, Theme};
use ratatui::buffer::Buffer;
use ratatui::layout::Rect;

/// Short outcome tag for a trial.
pub fn outcome_tag(kind: Option<TrialKind>) -> &'static str {
    match kind {
        Some(TrialKind::Rewarded) => "rew",
        Some(TrialKind::Omission) => "omit",
        Some(TrialKind::UnrewardedCue) => "cs-",
        Some(TrialKind::UncuedReward) => "free",
        None => "?",
    }
}

pub fn render(buf: &mut Buffer, area: Rect, state: &State, theme: &Theme) {
    if area.height == 0 {
        return;
    }
    let session = state.current_session();
    let rows = area.height as usize;
    let n = session.trials.len();
    let first = state
        .trial
        .saturating_sub(rows / 2)
        .min(n.saturating_sub(rows));
    let cue_w = area.width.saturating_sub(14) as usize;
    for (dy, i) in (first..n.min(first + rows)).enumerate() {
        let dy = dy as u16;
        let trial = &session.trials[i];
        let mark = state.mark_of(trial.number);
        let (glyph, role) = theme.mark_glyph(mark.map(|m| m.kind));
        // A compound lists its cues joined by "+" (cut to the column like any long name).
        let cues = crate::obs::trial_type::cues_presented(trial);
        let cue = match cues.len() {
            0 | 1 => theme.clean(session.cue_name(trial).unwrap_or("-")),
            _ => {
                let names: Vec<&str> = cues
                    .iter()
                    .filter_map(|&c| session.meta.cues.get(c))
                    .map(|c| c.name.as_str())
                    .collect();
                theme.clean(&names.join("+"))
            }
        };
        let cue: String = if cue.chars().count() > cue_w {
            cue.chars()
                .take(cue_w.saturating_sub(1))
                .collect::<String>()
                + theme.ellipsis()
        } else {
            cue
        };
        let has_note = state.notes_of(Some(trial.number)).next().is_some();
        let suggested = !state.suggestions_of(trial.number).is_empty();
        let text = format!(
            "{:>5}  {:<cue_w$} {:<4}{}",
            trial.number,
            cue,
            outcome_tag(TrialKind::of(session, trial)),
            if has_note { "+" } else { " " },
        );
        if i == state.trial {
            fill_row(buf, area, dy, theme.style(Role::Current));
            put(
                buf,
                area,
                0,
                dy,
                glyph,
                theme.style(role).patch(theme.style(Role::Current)),
            );
            put(buf, area, 1, dy, &text, theme.style(Role::Current));
            // A visible pointer as well as reverse video, for NO_COLOR and screen readers.
            put(
                buf,
                area,
                1,
                dy,
                theme.pointer(),
                theme.style(Role::Current),
            );
        } else {
            put(buf, area, 0, dy, glyph, theme.style(role));
            put(buf, area, 1, dy, &text, theme.style(Role::Plain));
        }
        if suggested {
            let style = theme.style(Role::Suggest);
            let style = if i == state.trial {
                style.patch(theme.style(Role::Current))
            } else {
                style
            };
            put(buf, area, 6, dy, theme.suggest_glyph(), style);
        }
    }
}

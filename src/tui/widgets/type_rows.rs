//! The days screen's block by trial type: for the current session, one row per set of cues
//! presented and outcome (trials, cue and reward responses, licks), so that a blocking probe
//! reads at a glance beside its control. Only for subjects with event lists.

use super::{num, put};
use crate::summary::DayRow;
use crate::tui::theme::{Role, Theme};
use crate::util::decimals_for;
use ratatui::buffer::Buffer;
use ratatui::layout::Rect;

/// Rows the block needs for `day` (heading + one per type); 0 without event lists.
pub fn height(days: &[DayRow], day: Option<&DayRow>) -> u16 {
    if days.iter().all(|d| d.event_trials == 0) {
        return 0;
    }
    day.map_or(0, |d| d.types.len() as u16 + 1)
}

pub fn render(buf: &mut Buffer, area: Rect, day: &DayRow, theme: &Theme) {
    let heading = format!(
        "{} by trial type          trials     cue  reward  licks",
        theme.clean(&day.session)
    );
    put(buf, area, 1, 0, &heading, theme.style(Role::Title));
    let dec = decimals_for(
        day.types
            .iter()
            .flat_map(|t| [t.cue_response.value, t.reward_response.value])
            .flatten(),
    );
    let licks = decimals_for(day.types.iter().filter_map(|t| t.lick_rate.value));
    let label_w = day.session.chars().count().min(15) + 24;
    for (i, t) in day.types.iter().enumerate() {
        let label: String = theme.clean(&t.label).chars().take(label_w).collect();
        let text = format!(
            "  {label:<w$} {:>6} {:>7} {:>7} {:>6}",
            t.trials,
            num(t.cue_response.value, dec),
            num(t.reward_response.value, dec),
            num(t.lick_rate.value, licks),
            w = label_w.saturating_sub(2),
        );
        put(buf, area, 1, i as u16 + 1, &text, theme.style(Role::Plain));
    }
}

//! The days screen: one row per session in training order (counts, exclusions, responses,
//! omission dip, anticipatory licking, model δ at cue and reward), then learning curves
//! across days and across all trials.

use crate::summary::{CueDay, DayRow};
use crate::tui::state::State;
use crate::tui::theme::{Role, Theme};
use crate::tui::widgets::{fill_row, num, put, type_rows};
use crate::util::decimals_for;
use ratatui::buffer::Buffer;
use ratatui::layout::Rect;

const HEADER: &str =
    "session         trials excl susp     cue  reward    omit  licks   dcue   drew";

/// The cue the cue columns follow: the first cue with a reward delay (the predictive one).
pub fn main_cue(state: &State) -> Option<String> {
    let cues = state
        .subject
        .sessions
        .iter()
        .flat_map(|s| s.meta.cues.iter());
    cues.clone()
        .find(|c| c.reward_delay_s.is_some())
        .or_else(|| cues.clone().next())
        .map(|c| c.name.clone())
}

/// The cue the days screen follows: the one chosen with next_cue, else [`main_cue`].
pub fn followed_cue(state: &State) -> Option<String> {
    state.days_cue.clone().or_else(|| main_cue(state))
}

fn cue_day<'a>(d: &'a DayRow, cue: Option<&str>) -> Option<&'a CueDay> {
    d.cues.iter().find(|c| Some(c.cue.as_str()) == cue)
}

/// Decimals per column group, from the magnitude of every day's values (ΔF/F of 0.004 and
/// firing rates of 12 both keep about three significant digits).
struct Decimals {
    response: usize,
    licks: usize,
    model: usize,
}

impl Decimals {
    fn of(days: &[DayRow], cue: Option<&str>) -> Self {
        let responses = days.iter().flat_map(|d| {
            [
                cue_day(d, cue).and_then(|c| c.response.value),
                d.reward_response.value,
                d.omission_dip.value,
            ]
        });
        let model = days.iter().flat_map(|d| {
            [
                cue_day(d, cue)
                    .and_then(|c| c.model_delta)
                    .and_then(|m| m.value),
                d.model.and_then(|m| m.reward.value),
            ]
        });
        Decimals {
            response: decimals_for(responses.flatten()),
            licks: decimals_for(days.iter().filter_map(|d| d.lick_rate.value)),
            model: decimals_for(model.flatten()),
        }
    }
}

fn row_text(theme: &Theme, d: &DayRow, cue: Option<&str>, dec: &Decimals) -> String {
    let name: String = theme.clean(&d.session).chars().take(15).collect();
    let c = cue_day(d, cue);
    format!(
        "{:<15} {:>6} {:>4} {:>4} {:>7} {:>7} {:>7} {:>6} {:>6} {:>6}",
        name,
        d.trials,
        d.excluded,
        d.suspect,
        num(c.and_then(|c| c.response.value), dec.response),
        num(d.reward_response.value, dec.response),
        num(d.omission_dip.value, dec.response),
        num(d.lick_rate.value, dec.licks),
        num(
            c.and_then(|c| c.model_delta).and_then(|m| m.value),
            dec.model
        ),
        num(d.model.and_then(|m| m.reward.value), dec.model),
    )
}

/// Values as one character per column (blocks, or ASCII levels), NaN as a blank.
pub fn spark(values: &[f64], width: usize, theme: &Theme) -> String {
    let levels: &[&str] = if theme.ascii {
        &["_", ".", "-", "~", "=", "*", "#"]
    } else {
        &["▁", "▂", "▃", "▄", "▅", "▆", "▇", "█"]
    };
    if values.is_empty() || width == 0 {
        return String::new();
    }
    // Average values into at most `width` columns.
    let cols = values.len().min(width);
    let per = values.len() as f64 / cols as f64;
    let col_vals: Vec<f64> = (0..cols)
        .map(|c| {
            let a = (c as f64 * per) as usize;
            let b = (((c + 1) as f64 * per) as usize)
                .max(a + 1)
                .min(values.len());
            let fin: Vec<f64> = values[a..b]
                .iter()
                .copied()
                .filter(|v| v.is_finite())
                .collect();
            if fin.is_empty() {
                f64::NAN
            } else {
                fin.iter().sum::<f64>() / fin.len() as f64
            }
        })
        .collect();
    let fin = col_vals.iter().copied().filter(|v| v.is_finite());
    let (lo, hi) = fin.fold((f64::INFINITY, f64::NEG_INFINITY), |(l, h), v| {
        (l.min(v), h.max(v))
    });
    col_vals
        .iter()
        .map(|v| {
            if !v.is_finite() {
                " "
            } else if hi - lo < 1e-12 {
                levels[levels.len() / 2]
            } else {
                levels[(((v - lo) / (hi - lo)) * (levels.len() - 1) as f64).round() as usize]
            }
        })
        .collect()
}

/// What the columns hold: which cue, in which unit, and what d is.
fn caption(state: &State, cue: Option<&str>) -> String {
    let unit = match state.model.measurement.obs.signal {
        crate::obs::Signal::Photometry => "ΔF/F",
        crate::obs::Signal::Spikes { .. } => "spikes/s",
    };
    format!(
        "cue {} | responses: {unit} above baseline | licks/s | d: model δ sum",
        cue.unwrap_or("-")
    )
}

pub fn render(buf: &mut Buffer, area: Rect, state: &State, theme: &Theme) {
    put(buf, area, 1, 0, HEADER, theme.style(Role::Title));
    let cue = followed_cue(state);
    put(
        buf,
        area,
        1,
        1,
        &theme.clean(&caption(state, cue.as_deref())),
        theme.style(Role::Dim),
    );
    let curves = 5u16.min(area.height.saturating_sub(4));
    // With event lists, the current session by trial type, between the table and the curves
    // (when there is room for at least three table rows as well).
    let current = state.days.get(state.session);
    let types_h = type_rows::height(&state.days, current);
    let types_h = if area.height >= 2 + curves + types_h + 3 {
        types_h
    } else {
        0
    };
    let mut table_h = area.height.saturating_sub(2 + curves + types_h);
    if types_h > 0 {
        // The block sits right under the sessions.
        table_h = table_h.min(state.days.len() as u16);
    }
    let rows = table_h as usize;
    let n = state.days.len();
    let first = state
        .session
        .saturating_sub(rows / 2)
        .min(n.saturating_sub(rows));
    let table = Rect::new(area.x, area.y + 2, area.width, table_h);
    let dec = Decimals::of(&state.days, cue.as_deref());
    for (dy, (si, d)) in state
        .days
        .iter()
        .enumerate()
        .skip(first)
        .take(rows)
        .enumerate()
    {
        let dy = dy as u16;
        let current = si == state.session;
        if current {
            fill_row(buf, table, dy, theme.style(Role::Current));
        }
        let style = if current {
            theme.style(Role::Current)
        } else {
            theme.style(Role::Plain)
        };
        put(
            buf,
            table,
            1,
            dy,
            &row_text(theme, d, cue.as_deref(), &dec),
            style,
        );
    }
    if let (Some(day), true) = (current, types_h > 0) {
        let at = Rect::new(area.x, area.y + 2 + table_h, area.width, types_h);
        type_rows::render(buf, at, day, theme);
    }
    if curves == 0 {
        return;
    }
    let cy = area.y + 2 + table_h + types_h;
    let box_area = Rect::new(area.x, cy, area.width, curves);
    let w = area.width.saturating_sub(24) as usize;
    let by_day = |f: &dyn Fn(&DayRow) -> Option<f64>| -> Vec<f64> {
        state
            .days
            .iter()
            .map(|d| f(d).unwrap_or(f64::NAN))
            .collect()
    };
    // Excluded trials are gaps, as in the day means.
    let per_trial = |f: &dyn Fn(&crate::obs::TrialObs) -> Option<f64>| -> Vec<f64> {
        state
            .obs
            .iter()
            .map(|o| {
                o.as_ref()
                    .filter(|o| {
                        let number = state.subject.sessions[o.session].trials[o.trial].number;
                        !state.sessions[o.session].marks.state.is_excluded(number)
                    })
                    .and_then(f)
                    .unwrap_or(f64::NAN)
            })
            .collect()
    };
    // Every presentation of the followed cue, alone or in a compound.
    let per_trial_cue = per_trial(&|o| {
        let session = &state.subject.sessions[o.session];
        crate::obs::trial_type::cue_presentation(session, o, cue.as_deref()?)?.response
    });
    let per_trial_rew = per_trial(&|o| o.reward);
    let lines: [(&str, Vec<f64>); 5] = [
        (
            "cue by day",
            by_day(&|d| cue_day(d, cue.as_deref()).and_then(|c| c.response.value)),
        ),
        ("reward by day", by_day(&|d| d.reward_response.value)),
        ("licks by day", by_day(&|d| d.lick_rate.value)),
        ("cue, per trial", per_trial_cue),
        ("reward, per trial", per_trial_rew),
    ];
    for (dy, (label, values)) in lines.iter().enumerate().take(curves as usize) {
        put(
            buf,
            box_area,
            1,
            dy as u16,
            &format!("{label:>20} "),
            theme.style(Role::Dim),
        );
        put(
            buf,
            box_area,
            22,
            dy as u16,
            &spark(values, w, theme),
            theme.style(Role::Plain),
        );
    }
}

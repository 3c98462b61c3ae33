//! The trial screen: trial list on the left; on the right the current trial's raster, licks,
//! events, and the observed activity trace above the model's value and δ for the same trial,
//! all on one time axis so the columns line up. Under the trial's header, its pending
//! suggested mark with the rule's reason.

use crate::obs::TrialType;
use crate::tui::action::Action;
use crate::tui::state::{SignalKind, State};
use crate::tui::theme::{Role, Theme};
use crate::tui::widgets::trace::{self, Trace};
use crate::tui::widgets::{put, raster, trial_list, TimeAxis};
use ratatui::buffer::Buffer;
use ratatui::layout::Rect;

/// Label columns left of every plot on the right-hand side.
const GUTTER: u16 = 7;

pub fn render(buf: &mut Buffer, area: Rect, state: &State, theme: &Theme) {
    let list_w = if area.width >= 100 { 26 } else { 22 };
    let list = Rect::new(area.x, area.y, list_w, area.height);
    trial_list::render(buf, list, state, theme);
    for dy in 0..area.height {
        put(buf, area, list_w, dy, theme.bar(), theme.style(Role::Dim));
    }
    let right = Rect::new(
        area.x + list_w + 1,
        area.y,
        area.width.saturating_sub(list_w + 1),
        area.height,
    );
    render_detail(buf, right, state, theme);
}

/// Row heights of the right-hand side for a given height and the raster rows wanted:
/// (raster, each trace incl. its title). Rows the raster does not need go to the traces.
fn heights(h: u16, wanted: u16) -> (u16, u16) {
    // Fixed rows: info, suggestion, licks, events, seconds, notes.
    let fixed = 6;
    let mut trace_h = match h {
        34.. => 7,
        26.. => 5,
        _ => 4,
    };
    let raster = h
        .saturating_sub(fixed + 3 * trace_h)
        .clamp(1, wanted.max(1));
    let spare = h.saturating_sub(fixed + 3 * trace_h + raster);
    trace_h += spare / 3;
    (raster, trace_h)
}

fn render_detail(buf: &mut Buffer, area: Rect, state: &State, theme: &Theme) {
    let Some(trial) = state.current_trial() else {
        put(
            buf,
            area,
            1,
            0,
            "this session has no trials",
            theme.style(Role::Dim),
        );
        return;
    };
    let session = state.current_session();
    let view = &state.view;
    let axis = TimeAxis {
        from: view.from_s,
        to: view.to_s,
        width: area.width.saturating_sub(GUTTER),
    };
    let wanted = match (state.unit, &session.spikes) {
        // One row per unit plus the raster's heading.
        (None, Some(sp)) => sp.units.len().max(1) as u16 + 1,
        (None, None) => 1,
        (Some(_), _) => u16::MAX,
    };
    let (raster_h, trace_h) = heights(area.height, wanted);
    let mut y = area.y;
    let row = |y: u16, h: u16| {
        Rect::new(
            area.x,
            y,
            area.width,
            h.min(area.bottom().saturating_sub(y)),
        )
    };

    render_info(buf, row(y, 1), state, theme);
    y += 1;
    render_suggestion(buf, row(y, 1), state, theme, trial.number);
    y += 1;
    raster::render(buf, row(y, raster_h), state, theme, &axis, GUTTER);
    y += raster_h;
    raster::render_licks(buf, row(y, 1), state, theme, &axis, GUTTER);
    y += 1;
    raster::render_events(buf, row(y, 2), state, theme, &axis, GUTTER);
    y += 2;

    let guides = raster::event_cols(state, &axis);
    let observed = match &view.missing {
        Some(_) => vec![f64::NAN; axis.width as usize],
        None => axis.resample_mean(&view.traces[state.trial], view.from_s, view.bin_s),
    };
    let obs_title = match &view.missing {
        Some(why) => format!("observed: {}", theme.clean(why)),
        None => format!("observed {}", theme.clean(&view.label)),
    };
    trace::render(
        buf,
        row(y, trace_h),
        &Trace {
            title: &obs_title,
            cols: &observed,
            role: Role::Plain,
            include_zero: state.signal != SignalKind::Photometry,
        },
        theme,
        &guides,
        GUTTER,
    );
    y += trace_h;
    let source = state.model.source.label();
    match state.span_of(state.trial) {
        Some(i) => {
            let dt = state.model.params.dt;
            let value = trace::model_cols(&axis, state.model.run.trial_value(i), dt);
            let delta = trace::model_cols(&axis, state.model.run.trial_delta(i), dt);
            let vt = format!("model value, {source}");
            trace::render(
                buf,
                row(y, trace_h),
                &Trace {
                    title: &vt,
                    cols: &value,
                    role: Role::Cue,
                    include_zero: true,
                },
                theme,
                &guides,
                GUTTER,
            );
            y += trace_h;
            let dtitle = "model prediction error (delta)".to_string();
            trace::render(
                buf,
                row(y, trace_h),
                &Trace {
                    title: &dtitle,
                    cols: &delta,
                    role: Role::Reward,
                    include_zero: true,
                },
                theme,
                &guides,
                GUTTER,
            );
            y += trace_h;
        }
        None => {
            put(
                buf,
                row(y, 1),
                GUTTER,
                0,
                "the model skips this trial (no cue and no reward)",
                theme.style(Role::Dim),
            );
            y += 2 * trace_h;
        }
    }
    let notes: Vec<String> = state
        .notes_of(Some(trial.number))
        .map(|r| format!("{}: {}", theme.clean(&r.reviewer), theme.clean(&r.note)))
        .collect();
    if y < area.bottom() {
        let text = if notes.is_empty() {
            "notes: none".to_string()
        } else {
            format!("notes: {}", notes.join(" | "))
        };
        put(buf, row(y, 1), 1, 0, &text, theme.style(Role::Dim));
    }
}

/// The trial's pending suggestion (the first by rule order, with how many more) and its keys.
fn render_suggestion(buf: &mut Buffer, area: Rect, state: &State, theme: &Theme, trial: i64) {
    if state.sessions[state.session].suggested.is_none() {
        // The first frame comes before the rules have run (see `update::finish_startup`).
        put(
            buf,
            area,
            1,
            0,
            "suggested: checking",
            theme.style(Role::Dim),
        );
        return;
    }
    let pending = state.suggestions_of(trial);
    let Some(first) = pending.first() else {
        put(buf, area, 1, 0, "suggested: none", theme.style(Role::Dim));
        return;
    };
    let key = |a| {
        let k = state.keymap.keys_for(a);
        k.split(", ").next().unwrap_or("").to_string()
    };
    let more = match pending.len() {
        1 => String::new(),
        n => format!(" (+{} more)", n - 1),
    };
    let mut text = format!(
        "{} {}: {}{more}",
        theme.suggest_glyph(),
        first.rule,
        theme.clean(&first.reason),
    );
    let hint = format!(
        "  [{} accept {} reject {} all]",
        key(Action::AcceptSuggestion),
        key(Action::RejectSuggestion),
        key(Action::AcceptRuleSuggestions),
    );
    // The reason matters more than the key hint (help lists the keys): the hint only if both
    // fit, and a cut reason ends in an ellipsis.
    let room = area.width.saturating_sub(1) as usize;
    let len = text.chars().count();
    if len + hint.chars().count() <= room {
        text.push_str(&hint);
    } else if len > room {
        text = text
            .chars()
            .take(room.saturating_sub(1))
            .collect::<String>()
            + theme.ellipsis();
    }
    put(buf, area, 1, 0, &text, theme.style(Role::Suggest));
}

fn render_info(buf: &mut Buffer, area: Rect, state: &State, theme: &Theme) {
    let session = state.current_session();
    let Some(trial) = state.current_trial() else {
        return;
    };
    // A compound names every cue it presents ("tone-a + light-b").
    let ty = TrialType::of(session, trial);
    let cue = match ty.as_ref().map(|t| t.cue_label(session)) {
        Some(label) if !label.is_empty() => theme.clean(&label),
        _ => "no cue".to_string(),
    };
    let kind = ty.map_or("?", |t| t.kind.name());
    let mut text = format!(
        "trial {} {} {} {}",
        trial.number,
        theme.bar(),
        cue,
        kind.replace('_', " ")
    );
    if trial.reward_ul > 0.0 {
        text.push_str(&format!(" {}ul", trial.reward_ul));
    }
    let x = put(buf, area, 1, 0, &text, theme.style(Role::Title));
    let (mark, role) = match state.mark_of(trial.number) {
        Some(m) => (
            format!(
                "  {} ({}, {})",
                m.kind.as_str().to_uppercase(),
                theme.clean(&m.reason),
                theme.clean(&m.reviewer)
            ),
            if m.kind == crate::marks::MarkKind::Exclude {
                Role::Exclude
            } else {
                Role::Suspect
            },
        ),
        None => ("  unmarked".to_string(), Role::Dim),
    };
    put(buf, area, 1 + x, 0, &mark, theme.style(role));
}

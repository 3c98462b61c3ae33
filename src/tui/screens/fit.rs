//! The fit screen: the parameters in force and where they came from, what the fit said about
//! itself, the caution about marking after looking at a fit, and observed vs predicted per
//! trial of the current session.

use crate::marks::MarkKind;
use crate::tui::screens::days::spark;
use crate::tui::state::State;
use crate::tui::theme::{Role, Theme};
use crate::tui::widgets::trial_list::outcome_tag;
use crate::tui::widgets::{fill_row, num, put};
use crate::util::{decimals_for, fmt_sig};
use ratatui::buffer::Buffer;
use ratatui::layout::Rect;

pub const CAUTION: &str = "Caution: marking trials after seeing a fit can bias it.";
pub const CAUTION_2: &str =
    "Decide marks on the data alone, and compare fits made with and without them.";

pub fn render(buf: &mut Buffer, area: Rect, state: &State, theme: &Theme) {
    let m = &state.model;
    let p = &m.params;
    let mut y = 0u16;
    let line = |buf: &mut Buffer, y: &mut u16, text: &str, role: Role| {
        put(buf, area, 1, *y, text, theme.style(role));
        *y += 1;
    };
    line(
        buf,
        &mut y,
        &format!("parameters: {}", m.source.label()),
        Role::Title,
    );
    line(
        buf,
        &mut y,
        &format!(
            "alpha {}  gamma {} per {} s bin  lambda {}  representation {}",
            fmt_sig(p.alpha, 4),
            fmt_sig(p.gamma, 4),
            p.dt,
            fmt_sig(p.lambda, 4),
            p.representation.name()
        ),
        Role::Plain,
    );
    for l in &m.fit_lines {
        line(buf, &mut y, &theme.clean(l), Role::Plain);
    }
    let excluded: usize = state
        .sessions
        .iter()
        .map(|s| {
            s.marks
                .state
                .marks
                .values()
                .filter(|t| t.kind == MarkKind::Exclude)
                .count()
        })
        .sum();
    line(
        buf,
        &mut y,
        &format!("excluded trials now marked across the subject: {excluded}"),
        Role::Plain,
    );
    if let (Some(_), Some((r2, n))) = (&m.readout, r_squared(state)) {
        line(
            buf,
            &mut y,
            &theme.clean(&format!(
                "R² {} over {n} response windows (observed vs predicted, today's marks)",
                crate::util::fmt_sig(r2, 3)
            )),
            Role::Plain,
        );
    }
    line(
        buf,
        &mut y,
        CAUTION,
        Role::Tone(crate::tui::state::Tone::Warn),
    );
    line(
        buf,
        &mut y,
        CAUTION_2,
        Role::Tone(crate::tui::state::Tone::Warn),
    );
    let readout = &m.readout;
    let pred_head = if readout.is_some() { "pred" } else { "sum d" };
    // With a saved fit its predicted responses; without one the raw Σδ (`ModelView::predicted`).
    y += 1;
    if m.readout.is_none() {
        line(
            buf,
            &mut y,
            "no gain/baseline without a fit: 'sum d' is the model's delta summed over",
            Role::Dim,
        );
        line(
            buf,
            &mut y,
            "each observation window, beside the observed response",
            Role::Dim,
        );
    }
    if area.height >= 30 {
        render_sparks(buf, area, &mut y, state, theme);
    }
    let header = format!(
        "{:>6} {:<7} {:>9} {:>9}   {:>9} {:>9}",
        "trial",
        "outcome",
        "cue obs",
        format!("cue {pred_head}"),
        "rew obs",
        format!("rew {pred_head}")
    );
    put(buf, area, 1, y, &header, theme.style(Role::Title));
    y += 1;
    let table = Rect::new(
        area.x,
        area.y + y,
        area.width,
        area.height.saturating_sub(y),
    );
    let session = state.current_session();
    let rows = table.height as usize;
    let n = session.trials.len();
    let first = state
        .trial
        .saturating_sub(rows / 2)
        .min(n.saturating_sub(rows));
    // Decimals from the magnitude of the rows on screen (ΔF/F of 0.004, rates of 12).
    let shown = |ti: usize| {
        state.span_of(ti).into_iter().flat_map(move |i| {
            let o = state.obs[i].as_ref();
            let w = m.predicted[i];
            [
                o.and_then(|o| o.cue),
                o.and_then(|o| o.reward),
                w.cue,
                w.reward,
            ]
        })
    };
    let dec = decimals_for((first..n.min(first + rows)).flat_map(shown).flatten());
    for (dy, ti) in (first..n.min(first + rows)).enumerate() {
        let trial = &session.trials[ti];
        let dy = dy as u16;
        let (obs, wd) = match state.span_of(ti) {
            Some(i) => (state.obs[i].as_ref(), Some(m.predicted[i])),
            None => (None, None),
        };
        let (glyph, role) = theme.mark_glyph(state.mark_of(trial.number).map(|t| t.kind));
        let text = format!(
            "{:>5} {:<7} {:>9} {:>9}   {:>9} {:>9}",
            trial.number,
            outcome_tag(crate::obs::TrialKind::of(session, trial)),
            num(obs.and_then(|o| o.cue), dec),
            num(wd.and_then(|w| w.cue), dec),
            num(obs.and_then(|o| o.reward), dec),
            num(wd.and_then(|w| w.reward), dec),
        );
        let current = ti == state.trial;
        if current {
            fill_row(buf, table, dy, theme.style(Role::Current));
        }
        let style = if current {
            theme.style(Role::Current)
        } else {
            theme.style(Role::Plain)
        };
        put(buf, table, 0, dy, glyph, theme.style(role).patch(style));
        put(buf, table, 1, dy, &text, style);
    }
}

/// Observed and predicted responses across the session's trials, one line each (excluded
/// trials are gaps; each line is scaled to its own range, so compare shapes, not heights).
fn render_sparks(buf: &mut Buffer, area: Rect, y: &mut u16, state: &State, theme: &Theme) {
    let session = state.current_session();
    let n = session.trials.len();
    let series = |f: &dyn Fn(usize) -> Option<f64>| -> Vec<f64> {
        (0..n)
            .map(|ti| {
                let excluded = state.sessions[state.session]
                    .marks
                    .state
                    .is_excluded(session.trials[ti].number);
                if excluded {
                    f64::NAN
                } else {
                    f(ti).unwrap_or(f64::NAN)
                }
            })
            .collect()
    };
    let obs = |ti: usize, cue: bool| {
        let o = state.obs[state.span_of(ti)?].as_ref()?;
        if cue {
            o.cue
        } else {
            o.reward
        }
    };
    let pred = |ti: usize, cue: bool| {
        let w = state.model.predicted[state.span_of(ti)?];
        if cue {
            w.cue
        } else {
            w.reward
        }
    };
    let width = area.width.saturating_sub(18) as usize;
    let lines: [(&str, Vec<f64>); 4] = [
        ("cue observed", series(&|t| obs(t, true))),
        ("cue model", series(&|t| pred(t, true))),
        ("reward observed", series(&|t| obs(t, false))),
        ("reward model", series(&|t| pred(t, false))),
    ];
    *y += 1;
    for (label, values) in lines {
        put(
            buf,
            area,
            1,
            *y,
            &format!("{label:>15}"),
            theme.style(Role::Dim),
        );
        put(
            buf,
            area,
            17,
            *y,
            &spark(&values, width, theme),
            theme.style(Role::Plain),
        );
        *y += 1;
    }
    *y += 1;
}

/// R² of the saved fit's predictions against the observed responses, over every window of the
/// subject whose trial is not marked exclude now: 1 − Σ(obs − pred)² / Σ(obs − mean)².
fn r_squared(state: &State) -> Option<(f64, usize)> {
    let m = &state.model;
    let mut pairs = Vec::new();
    for (si, per_trial) in m.span_of.iter().enumerate() {
        let session = &state.subject.sessions[si];
        let marks = &state.sessions[si].marks.state;
        for (ti, span) in per_trial.iter().enumerate() {
            let Some(i) = *span else { continue };
            if marks.is_excluded(session.trials[ti].number) {
                continue;
            }
            let (Some(o), p) = (state.obs[i].as_ref(), m.predicted[i]) else {
                continue;
            };
            for (obs, pred) in [(o.cue, p.cue), (o.reward, p.reward)] {
                if let (Some(a), Some(b)) = (obs, pred) {
                    if a.is_finite() && b.is_finite() {
                        pairs.push((a, b));
                    }
                }
            }
        }
    }
    let n = pairs.len();
    if n < 3 {
        return None;
    }
    let mean = pairs.iter().map(|p| p.0).sum::<f64>() / n as f64;
    let ss_tot: f64 = pairs.iter().map(|p| (p.0 - mean).powi(2)).sum();
    let ss_res: f64 = pairs.iter().map(|p| (p.0 - p.1).powi(2)).sum();
    (ss_tot > 0.0).then(|| (1.0 - ss_res / ss_tot, n))
}

//! The event loop: keys → actions → `update`, redraw, and a journal refresh (and, with
//! `--follow`, a poll of the recording session) every second.
//! It routes and nothing more; what an action means lives in `update`, how things look in
//! `screens`.

use super::action::Action;
use super::derived::{ModelSettings, ModelView, SessionView};
use super::follow::Follower;
use super::input::{Input, TtyInput};
use super::keymap::{confirm_action, editor_action, picker_action};
use super::state::{Options, Overlay, Screen, SessionState, SignalKind, State, Status, Tone};
use super::{screens, update};
use crate::data::Subject;
use crate::suggest::RuleSet;
use crossterm::event::{KeyCode, KeyEvent, KeyModifiers};
use ratatui::backend::Backend;
use ratatui::Terminal;
use std::sync::atomic::{AtomicBool, Ordering};
use std::time::{Duration, Instant};

use super::keymap::Keymap;

/// How long the reviewer waits for another process's lock on a journal before keeping a mark
/// in memory (retried every second) or skipping one refresh: a stuck writer must not freeze
/// the screen, and a normal writer holds the lock for milliseconds.
pub const LOCK_WAIT: Duration = Duration::from_millis(250);

/// How often other reviewers' rows are looked for.
pub const REFRESH_EVERY: Duration = Duration::from_secs(1);

/// [`build_state_with_rules`] with the shipped suggestion rules.
pub fn build_state(
    subject: Subject,
    opts: Options,
    keymap: Keymap,
    settings: &ModelSettings,
) -> State {
    build_state_with_rules(subject, opts, keymap, settings, RuleSet::default())
}

/// Build the reviewer's state for a loaded subject: model run at the given parameters, the
/// first session's traces and suggested marks, every session's journal. The subject must hold
/// at least one session (`trialdesk review` says so before getting here).
pub fn build_state_with_rules(
    subject: Subject,
    opts: Options,
    keymap: Keymap,
    settings: &ModelSettings,
    rules: RuleSet,
) -> State {
    let mut state = start_state(subject, opts, keymap, settings, rules);
    update::finish_startup(&mut state);
    state
}

/// What the first frame draws and no more: the model run, every journal, the current trial's
/// trace. [`run_loop`] completes the rest right after that frame (`update::finish_startup`);
/// on a large session binning every trial and running the suggestion rules would otherwise
/// hold the first frame back.
pub fn start_state(
    subject: Subject,
    opts: Options,
    keymap: Keymap,
    settings: &ModelSettings,
    rules: RuleSet,
) -> State {
    let m = settings.measurement(&subject);
    let model = ModelView::build(&subject, settings, &m);
    // Filled by `finish_startup`; only the fit screen reads them.
    let obs = vec![None; model.spans.len()];
    let first = subject
        .sessions
        .first()
        .expect("build_state needs a subject with at least one session");
    // The planned signal where this session has it, else whatever it has.
    let has_spikes = first.spikes.as_ref().is_some_and(|s| !s.units.is_empty());
    let signal = match (&m.obs.signal, has_spikes, first.photometry.is_some()) {
        (crate::obs::Signal::Photometry, _, true) => SignalKind::Photometry,
        (_, true, _) => SignalKind::Spikes,
        (_, false, true) => SignalKind::Photometry,
        _ => SignalKind::Licks,
    };
    let view = SessionView::build_for(first, signal, None, Some(0));
    let n = subject.sessions.len();
    let mut state = State {
        subject,
        opts,
        keymap,
        screen: Screen::Trial,
        overlay: Overlay::None,
        session: 0,
        trial: 0,
        unit: None,
        signal,
        days_cue: None,
        sessions: vec![SessionState::default(); n],
        undo: Vec::new(),
        status: Status {
            text: String::new(),
            tone: Tone::Info,
        },
        model,
        view,
        obs,
        days: Vec::new(),
        rules,
        startup_pending: true,
        quit: false,
    };
    for si in 0..n {
        update::reread_journal(&mut state, si);
    }
    let trials: usize = state.subject.sessions.iter().map(|s| s.trials.len()).sum();
    let opening = format!(
        "{n} session(s), {trials} trials; model: {}",
        state.model.source.label()
    );
    update::notice(&mut state, opening, Tone::Info);
    // The plan's words, as every command prints them, when sessions lack the signal.
    if let Some(note) = state.model.measurement.choice.missing_note() {
        let text = format!("{note}; their responses are left blank");
        update::notice(&mut state, text, Tone::Warn);
    }
    state
}

/// The action a key means in the state's current mode. ctrl-c always quits.
pub fn key_to_action(state: &State, key: &KeyEvent) -> Option<Action> {
    if key.code == KeyCode::Char('c') && key.modifiers.contains(KeyModifiers::CONTROL) {
        return Some(Action::Quit);
    }
    match state.overlay {
        Overlay::Picker { .. } => picker_action(key),
        Overlay::Editor { .. } => editor_action(key),
        Overlay::ConfirmAcceptAll { .. } => confirm_action(key),
        Overlay::Help if key.code == KeyCode::Esc => Some(Action::Cancel),
        Overlay::Help | Overlay::None => state.keymap.lookup(key),
    }
}

/// Feed a key to the state (what the loop does per key press; tests and benches call it too).
pub fn handle_key(state: &mut State, key: &KeyEvent) {
    if let Some(action) = key_to_action(state, key) {
        update::update(state, action);
    }
}

/// Draw one frame.
pub fn draw<B: Backend>(terminal: &mut Terminal<B>, state: &State) -> Result<(), B::Error> {
    terminal.draw(|f| {
        let area = f.area();
        screens::render(f.buffer_mut(), area, state)
    })?;
    Ok(())
}

/// Why the reviewer's loop ended early: the terminal could not be drawn on or read.
#[derive(Debug, thiserror::Error)]
pub enum LoopError {
    #[error("terminal: {0}")]
    Draw(String),
    #[error(transparent)]
    Input(super::input::Gone),
}

/// Run until quit, until `stop` is raised (SIGTERM/SIGHUP), or until the terminal goes away
/// (its input hangs up, ends or fails; drawing fails). Waits for input at most a quarter of a
/// second at a time, so the stop flag is seen promptly, and never retries a failing terminal.
pub fn run_loop<B: Backend>(
    terminal: &mut Terminal<B>,
    input: &mut TtyInput,
    state: &mut State,
    stop: &AtomicBool,
    mut follower: Option<Follower>,
) -> Result<(), LoopError>
where
    B::Error: std::fmt::Display,
{
    let err = |e: &dyn std::fmt::Display| LoopError::Draw(e.to_string());
    draw(terminal, state).map_err(|e| err(&e))?;
    if update::finish_startup(state) {
        draw(terminal, state).map_err(|e| err(&e))?;
    }
    let mut last_refresh = Instant::now();
    while !state.quit && !stop.load(Ordering::Relaxed) {
        let wait = REFRESH_EVERY
            .saturating_sub(last_refresh.elapsed())
            .min(Duration::from_millis(250));
        let mut dirty = false;
        match input.wait(wait).map_err(LoopError::Input)? {
            Input::Keys(keys) => {
                for key in &keys {
                    handle_key(state, key);
                    if state.quit {
                        break;
                    }
                }
                dirty = true;
            }
            Input::Resized => dirty = true,
            Input::Nothing => {}
        }
        if last_refresh.elapsed() >= REFRESH_EVERY {
            update::update(state, Action::RefreshMarks);
            if let Some(f) = follower.as_mut() {
                f.poll_into(state);
            }
            last_refresh = Instant::now();
            dirty = true;
        }
        if dirty && !state.quit && !stop.load(Ordering::Relaxed) {
            draw(terminal, state).map_err(|e| err(&e))?;
        }
    }
    Ok(())
}

//! The reviewer's two-step start (issue 23): the first frame is drawn from a partial state
//! (`app::start_state`: the current trial's trace only, no suggestions yet), the rest is built
//! right after it (`update::finish_startup`). The finished state must draw every screen
//! exactly as the state built in one step, and the first frame must not claim what it has not
//! computed.

mod tui_support;

use trialdesk::suggest::RuleSet;
use trialdesk::tui::app;
use trialdesk::tui::derived::ModelSettings;
use trialdesk::tui::keymap::Keymap;
use trialdesk::tui::update;
use tui_support::*;

fn started(dir: &std::path::Path) -> trialdesk::tui::state::State {
    let loaded = trialdesk::data::load(dir).unwrap_or_else(|f| panic!("{:?}", f.diagnostics));
    app::start_state(
        loaded.subject,
        options(),
        Keymap::build(&[]).unwrap(),
        &ModelSettings::defaults(),
        RuleSet::default(),
    )
}

#[test]
fn the_finished_start_draws_every_screen_as_the_one_step_build() {
    let (_tmp, dir) = fixture_copy();
    let mut two_step = started(&dir);
    assert!(two_step.startup_pending && two_step.view.partial);
    assert!(update::finish_startup(&mut two_step));
    assert!(!update::finish_startup(&mut two_step), "runs once");
    let mut one_step = state(&dir);
    for screen in ["1", "2", "3", "4", "1jjj", "2"] {
        press(&mut two_step, screen);
        press(&mut one_step, screen);
        assert_eq!(
            frame_text(100, 30, &two_step),
            frame_text(100, 30, &one_step),
            "after {screen}"
        );
    }
}

#[test]
fn the_first_frame_shows_the_trial_and_says_the_suggestions_are_coming() {
    let (_tmp, dir) = fixture_copy();
    let first = started(&dir);
    let text = frame_text(100, 30, &first);
    assert!(text.contains("suggested: checking"), "{text}");
    // The current trial's trace is the one the full build computes.
    let full = state(&dir);
    assert_eq!(first.view.traces[0], full.view.traces[0]);
    assert!(first.view.traces.iter().skip(1).all(Vec::is_empty));
    // Any key first completes the start: no action meets the partial state.
    let mut st = first;
    press(&mut st, "j");
    assert!(!st.startup_pending && !st.view.partial);
    assert_eq!(frame_text(100, 30, &st), {
        let mut f = full;
        press(&mut f, "j");
        frame_text(100, 30, &f)
    });
}

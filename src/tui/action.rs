//! Every user intent as one enum.
//!
//! The bindable actions' snake_case names are the keymap file's vocabulary and the help
//! overlay's text, so the three cannot drift apart. The remaining variants come from the fixed
//! keys of the reason picker and the note editor (typing is not rebindable).

/// One thing the reviewer asked for. [`crate::tui::update::update`] is the one place it
/// changes state.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash)]
pub enum Action {
    /// Step to the next trial.
    NextTrial,
    /// Step to the previous trial.
    PrevTrial,
    /// Jump ten trials forward.
    JumpForward,
    /// Jump ten trials back.
    JumpBack,
    /// Go to the first trial of the session.
    FirstTrial,
    /// Go to the last trial of the session.
    LastTrial,
    /// Go to the next trial that carries no mark yet.
    NextUnmarked,
    /// Open the next session in date order.
    NextSession,
    /// Open the previous session in date order.
    PrevSession,
    /// Show the trial screen (raster, licks, traces).
    ShowTrial,
    /// Show the session screen (trial × time heat rows).
    ShowSession,
    /// Show the days screen (one row per session, learning curves).
    ShowDays,
    /// Show the fit screen (parameters, observed vs predicted).
    ShowFit,
    /// Cycle trial → session → days → fit.
    CycleScreen,
    /// Choose the next unit (after the last: all units pooled).
    NextUnit,
    /// Choose the previous unit.
    PrevUnit,
    /// Switch the activity source: spikes, photometry, licks.
    CycleSignal,
    /// Jump to the next trial of the current trial's type (same cues, same outcome), wrapping.
    NextSameType,
    /// The days screen follows the next cue (a blocking design has several worth following).
    NextCue,
    /// Mark the current trial excluded (asks for a reason).
    MarkExclude,
    /// Mark the current trial suspect (asks for a reason).
    MarkSuspect,
    /// Clear the current trial's mark.
    MarkClear,
    /// Write a note on the current trial.
    NoteTrial,
    /// Write a note on the whole session.
    NoteSession,
    /// Undo your last mark by appending a row that restores the one before it.
    UndoMark,
    /// Accept the current trial's suggested mark (an ordinary mark, reason = the rule id).
    AcceptSuggestion,
    /// Reject the current trial's suggested mark (recorded, so it is not suggested again).
    RejectSuggestion,
    /// Accept every pending suggestion of the current trial's rule in this session (asks first).
    AcceptRuleSuggestions,
    /// Go to the next trial with a pending suggestion.
    NextSuggestion,
    /// Type a trial number and go to it.
    GoToTrial,
    /// Re-read the marks journals now (they are also re-read every second).
    RefreshMarks,
    /// Show or hide this help.
    ToggleHelp,
    /// Leave the reviewer (marks are already on disk).
    Quit,

    // Fixed keys of the picker and the editor; never named in a keymap file.
    /// Move the picker's highlight up.
    PickerUp,
    /// Move the picker's highlight down.
    PickerDown,
    /// Pick the n-th reason directly (0-based).
    PickReason(usize),
    /// Accept the picker's choice, the editor's text, or answer yes to a question.
    Confirm,
    /// Close the picker, editor, question or help without doing anything.
    Cancel,
    /// Type one character into the editor.
    TypeChar(char),
    /// Delete the character before the editor's cursor.
    DeleteBack,
    /// Move the editor's cursor one character left.
    CursorLeft,
    /// Move the editor's cursor one character right.
    CursorRight,
    /// Move the editor's cursor to the start.
    CursorHome,
    /// Move the editor's cursor to the end.
    CursorEnd,
}

/// The bindable actions, in help-overlay order, with their keymap names.
pub const BINDABLE: &[(Action, &str)] = &[
    (Action::NextTrial, "next_trial"),
    (Action::PrevTrial, "prev_trial"),
    (Action::JumpForward, "jump_forward"),
    (Action::JumpBack, "jump_back"),
    (Action::FirstTrial, "first_trial"),
    (Action::LastTrial, "last_trial"),
    (Action::NextUnmarked, "next_unmarked"),
    (Action::NextSession, "next_session"),
    (Action::PrevSession, "prev_session"),
    (Action::ShowTrial, "show_trial"),
    (Action::ShowSession, "show_session"),
    (Action::ShowDays, "show_days"),
    (Action::ShowFit, "show_fit"),
    (Action::CycleScreen, "cycle_screen"),
    (Action::NextUnit, "next_unit"),
    (Action::PrevUnit, "prev_unit"),
    (Action::CycleSignal, "cycle_signal"),
    (Action::NextCue, "next_cue"),
    (Action::NextSameType, "next_same_type"),
    (Action::MarkExclude, "mark_exclude"),
    (Action::MarkSuspect, "mark_suspect"),
    (Action::MarkClear, "mark_clear"),
    (Action::NoteTrial, "note_trial"),
    (Action::NoteSession, "note_session"),
    (Action::UndoMark, "undo_mark"),
    (Action::AcceptSuggestion, "accept_suggestion"),
    (Action::RejectSuggestion, "reject_suggestion"),
    (Action::AcceptRuleSuggestions, "accept_rule_suggestions"),
    (Action::NextSuggestion, "next_suggestion"),
    (Action::GoToTrial, "go_to_trial"),
    (Action::RefreshMarks, "refresh_marks"),
    (Action::ToggleHelp, "toggle_help"),
    (Action::Quit, "quit"),
];

impl Action {
    /// The keymap name of a bindable action.
    pub fn name(self) -> Option<&'static str> {
        BINDABLE.iter().find(|(a, _)| *a == self).map(|(_, n)| *n)
    }

    /// The bindable action with this keymap name.
    pub fn from_name(name: &str) -> Option<Action> {
        BINDABLE.iter().find(|(_, n)| *n == name).map(|(a, _)| *a)
    }

    /// One line for the help overlay (the doc comments above, kept short).
    pub fn describe(self) -> &'static str {
        match self {
            Action::NextTrial => "next trial",
            Action::PrevTrial => "previous trial",
            Action::JumpForward => "ten trials forward",
            Action::JumpBack => "ten trials back",
            Action::FirstTrial => "first trial",
            Action::LastTrial => "last trial",
            Action::NextUnmarked => "next trial without a mark",
            Action::NextSession => "next session",
            Action::PrevSession => "previous session",
            Action::ShowTrial => "trial screen",
            Action::ShowSession => "session screen",
            Action::ShowDays => "days screen",
            Action::ShowFit => "fit screen",
            Action::CycleScreen => "cycle screens",
            Action::NextUnit => "next unit (then all)",
            Action::PrevUnit => "previous unit",
            Action::CycleSignal => "spikes/photometry/licks",
            Action::NextCue => "days: follow next cue",
            Action::NextSameType => "next trial of this type",
            Action::MarkExclude => "exclude (pick a reason)",
            Action::MarkSuspect => "suspect (pick a reason)",
            Action::MarkClear => "clear trial's mark",
            Action::NoteTrial => "note on this trial",
            Action::NoteSession => "note on the session",
            Action::UndoMark => "undo my last mark",
            Action::AcceptSuggestion => "accept suggested mark",
            Action::RejectSuggestion => "reject suggested mark",
            Action::AcceptRuleSuggestions => "accept all of its rule",
            Action::NextSuggestion => "next suggested trial",
            Action::GoToTrial => "go to trial number",
            Action::RefreshMarks => "re-read marks now",
            Action::ToggleHelp => "this help",
            Action::Quit => "quit",
            Action::PickerUp => "picker up",
            Action::PickerDown => "picker down",
            Action::PickReason(_) => "pick reason",
            Action::Confirm => "accept",
            Action::Cancel => "cancel",
            Action::TypeChar(_) => "type",
            Action::DeleteBack => "delete",
            Action::CursorLeft => "cursor left",
            Action::CursorRight => "cursor right",
            Action::CursorHome => "cursor to start",
            Action::CursorEnd => "cursor to end",
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn names_round_trip_and_are_snake_case() {
        for (a, n) in BINDABLE {
            assert_eq!(Action::from_name(n), Some(*a));
            assert_eq!(a.name(), Some(*n));
            assert!(n.chars().all(|c| c.is_ascii_lowercase() || c == '_'), "{n}");
        }
        assert_eq!(Action::from_name("next_trail"), None);
        assert_eq!(Action::Confirm.name(), None);
    }
}

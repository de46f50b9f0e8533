//! What the regions ask for: each region draws and pushes commands; the workbench applies
//! them in one place at the end of the frame.

use std::path::PathBuf;

/// A request from a region or a key.
#[derive(Debug, Clone, PartialEq)]
pub enum Command {
    /// Open the campaign in this folder.
    Open(PathBuf),
    /// Ask for a folder with the system dialog.
    PickFolder,
    /// Cancel all background work.
    CancelWork,
    /// Select a round by number.
    SelectRound(u32),
    /// Select an episode by its index in the round's table.
    SelectEpisode(usize),
    /// Select the episode this many places further in the shelf's order.
    ShelfMove(i32),
    /// Put the playhead on this step offset of the episode.
    SetStep(usize),
    /// Move the playhead by this many steps.
    StepBy(i64),
    /// Move the playhead to the first or the last step.
    StepToEnd(bool),
    /// Jump to the next (true) or previous (false) excursion onset.
    NextExcursion(bool),
    /// Start or stop playback.
    TogglePlay,
    /// Stop playback.
    Pause,
    /// Double (true) or halve (false) the playback speed.
    Speed(bool),
    /// Show or hide the help overlay.
    ToggleHelp,
    /// The annotator has read the desk's safety caution: hide it until their next day.
    PutCautionAway,
    /// Save the desk's action as a correction of the step on the desk, then go to the next
    /// open entry.
    SaveAction,
    /// Put the suggested action in the desk and save it as a correction, then go to the next
    /// open entry.
    SaveSuggestion,
    /// Record `skip` for the step on the desk, then go to the next open entry.
    Skip,
    /// Record `unrecoverable` for the step on the desk, then go to the next open entry.
    Unrecoverable,
    /// Retract the annotator's latest standing correction and go back to its step.
    Undo,
    /// Go to the highest-ranked open entry of the review list.
    NextOpen,
    /// Put the playhead on this row of the round's table.
    GoToRow(usize),
    /// Make the next (1) or previous (-1) action channel the active one.
    CycleChannel(i32),
    /// Move the active channel's value by this many keyboard steps.
    Nudge(i32),
    /// Pick the active channel's choice with this index (discrete channels only).
    Choose(usize),
    /// Set a channel's value in the desk (channel, value).
    SetValue(usize, f32),
    /// Put the suggested action (the experts nearby) in the desk.
    TakeSuggestion,
    /// Put the learner's action in the desk.
    TakeLearner,
    /// Move the keyboard focus to a field of the desk or the list.
    Focus(FocusTarget),
    /// Plan the review list again with the budget in the list's field.
    Replan,
    /// Show the episode shelf (false) or the review list (true).
    ShowReviewList(bool),
    /// Switch between the episode shelf and the review list.
    ToggleShelfTab,
    /// Ask for the annotator's name again.
    AskAnnotator,
    /// Use this annotator name (opens their ledger).
    SetAnnotator(String),
    /// Show or hide the export window.
    ToggleExport,
    /// Open or close the trend window (figures per round).
    ToggleTrend,
    /// Choose the export target with the system save dialog.
    PickExportTarget,
    /// Run the export with the window's options.
    RunExport,
}

/// Fields that a key can move the keyboard focus to.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum FocusTarget {
    /// The exact-number field of the active channel.
    Exact,
    /// The note field.
    Note,
    /// The review list's budget field.
    Budget,
}

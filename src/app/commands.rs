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
}

//! User-facing strings of the window, in one place.

/// Window title.
pub const TITLE: &str = "countersteer";
/// Shown in the map and strip before a campaign is open.
pub const NOTHING_OPEN: &str =
    "No campaign open. Use \"Open folder...\" or run `countersteer open DIR`.";
/// Shown in the strip while a round has no scores.
pub const NOT_SCORED: &str = "Novelty appears here once the round is scored.";
/// Shown when the selected round has no episodes.
pub const NO_EPISODES: &str = "This round has no episodes.";
/// Caption of the map's density.
pub const DENSITY: &str = "demonstrations (density)";
/// Caption of the episode path when coloured by time.
pub const PATH_BY_TIME: &str = "path (colour: time, early dark to late light)";
/// Caption of the episode path when coloured by novelty.
pub const PATH_BY_NOVELTY: &str = "path (colour: novelty, dark low to light high)";
/// Caption of the playhead's position on the map.
pub const CURRENT_STEP: &str = "current step";
/// Caption of the nearest demonstration states.
pub const NEIGHBOURS: &str = "nearest demonstration states";
/// The help overlay's account of what each region shows, one paragraph per region.
pub const HELP_VIEWS: &[&str] = &[
    "Map: demonstrations as a grey density; the episode's path coloured with the cividis scale; the current step as a ring; its nearest demonstration states as diamonds.",
    "Drift strip: novelty against time with the flag threshold; excursions shaded yellow, expert control shaded blue; below, each action channel: learner (blue) and the demonstrations nearby (orange). Click or drag in the strip to move the playhead.",
    "Correction desk (right): the step's state with each feature's share of the novelty; per action channel the learner's value (blue), the experts' values nearby and the suggestion (orange), and the value you enter. Enter saves it to your ledger and moves to the next open entry of the review list (Shift Enter takes the suggestion and saves it); Up and Down set the active channel's value; S skips, U marks the step unrecoverable, Ctrl Z retracts your latest verdict. Nothing is ever rewritten: undo appends a retraction.",
    "Review list (F2, beside the episodes): the steps planned for you with their reasons and status; it is planned again after every verdict so ground already covered is not asked twice.",
];

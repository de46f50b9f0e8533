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

//! The window's own state, persisted through eframe storage: what is selected, where the
//! playhead is, the layout, recent campaigns and the annotator's name. Domain data (the
//! campaign, scores, corrections) never lives here.

use std::collections::BTreeMap;
use std::path::{Path, PathBuf};

use serde::{Deserialize, Serialize};

/// Key under which [`UiState`] is stored.
pub const STORAGE_KEY: &str = "countersteer.workbench";
/// How many recent campaigns are remembered.
pub const RECENT_CAP: usize = 8;

/// How the episode shelf orders episodes.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default, Serialize, Deserialize)]
pub enum ShelfSort {
    /// Highest peak novelty first (falls back to name order until scores exist).
    #[default]
    WorstNovelty,
    /// Largest flagged share first.
    MostFlagged,
    /// Most intervention steps first.
    MostInterventions,
    /// By name.
    Name,
}

impl ShelfSort {
    /// Every order, in menu order.
    pub const ALL: [ShelfSort; 4] = [
        ShelfSort::WorstNovelty,
        ShelfSort::MostFlagged,
        ShelfSort::MostInterventions,
        ShelfSort::Name,
    ];

    /// The order's caption.
    pub fn caption(self) -> &'static str {
        match self {
            ShelfSort::WorstNovelty => "worst novelty",
            ShelfSort::MostFlagged => "most flagged",
            ShelfSort::MostInterventions => "most interventions",
            ShelfSort::Name => "name",
        }
    }
}

/// Sizes and visibility of the window's regions.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(default)]
pub struct Layout {
    /// Width of the episode shelf, in points.
    pub shelf_width: f32,
    /// Height of the drift strip, in points.
    pub strip_height: f32,
    /// Whether the frame image is shown beside the map when the step has one.
    pub show_frame: bool,
    /// Share of the centre given to the frame image when shown.
    pub frame_share: f32,
}

impl Default for Layout {
    fn default() -> Self {
        Layout {
            shelf_width: 300.0,
            strip_height: 340.0,
            show_frame: true,
            frame_share: 0.4,
        }
    }
}

/// Everything the window remembers between sessions.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(default)]
pub struct UiState {
    /// The campaign open when the window last closed.
    pub campaign: Option<PathBuf>,
    /// Recently opened campaigns, newest first.
    pub recent: Vec<PathBuf>,
    /// The annotator's name (used by ledgers).
    pub annotator: String,
    /// Selected round number.
    pub round: Option<u32>,
    /// Selected episode name.
    pub episode: Option<String>,
    /// Playhead: step offset within the selected episode.
    pub step: usize,
    /// Playback speed multiplier.
    pub speed: f32,
    /// Shelf order.
    pub sort: ShelfSort,
    /// Shelf filter text (episode names containing it).
    pub filter: String,
    /// Region sizes.
    pub layout: Layout,
    /// Entries of the review list (done and open).
    pub budget: usize,
    /// Whether the left panel shows the review list instead of the episodes.
    pub review_tab: bool,
    /// Per annotator, the day (UTC, `YYYY-MM-DD`) they last put the desk's safety caution
    /// away: it is shown again on their next day, and to every other annotator.
    pub caution_read: BTreeMap<String, String>,
}

impl Default for UiState {
    fn default() -> Self {
        UiState {
            campaign: None,
            recent: Vec::new(),
            annotator: String::new(),
            round: None,
            episode: None,
            step: 0,
            speed: 1.0,
            sort: ShelfSort::default(),
            filter: String::new(),
            layout: Layout::default(),
            budget: crate::review::DEFAULT_BUDGET,
            review_tab: false,
            caution_read: BTreeMap::new(),
        }
    }
}

impl UiState {
    /// Records `dir` as the open campaign and the newest recent one.
    pub fn remember_campaign(&mut self, dir: &Path) {
        if self.campaign.as_deref() != Some(dir) {
            self.round = None;
            self.episode = None;
            self.step = 0;
        }
        self.campaign = Some(dir.to_path_buf());
        self.recent.retain(|p| p != dir);
        self.recent.insert(0, dir.to_path_buf());
        self.recent.truncate(RECENT_CAP);
    }

    /// Whether the desk shows the safety caution to `annotator` on `day`: until they put it
    /// away that day.
    pub fn caution_due(&self, annotator: &str, day: &str) -> bool {
        self.caution_read.get(annotator).map(String::as_str) != Some(day)
    }

    /// Records that `annotator` put the caution away on `day` (one entry per annotator).
    pub fn caution_put_away(&mut self, annotator: &str, day: &str) {
        self.caution_read.insert(annotator.into(), day.into());
    }
}

/// Today's date in UTC as `YYYY-MM-DD`, the day the desk's caution is remembered for.
pub fn today() -> String {
    crate::ledger::utc_timestamp()
        .get(..10)
        .unwrap_or_default()
        .to_string()
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn recent_list_is_newest_first_without_repeats() {
        let mut s = UiState::default();
        for d in ["a", "b", "a", "c"] {
            s.remember_campaign(Path::new(d));
        }
        let names: Vec<_> = s.recent.iter().map(|p| p.to_string_lossy()).collect();
        assert_eq!(names, ["c", "a", "b"]);
        assert_eq!(s.campaign.as_deref(), Some(Path::new("c")));
    }

    #[test]
    fn the_caution_returns_on_a_new_day_and_for_another_annotator() {
        let mut s = UiState::default();
        assert!(s.caution_due("ana", "2026-12-02"));
        s.caution_put_away("ana", "2026-12-02");
        assert!(!s.caution_due("ana", "2026-12-02"));
        assert!(s.caution_due("ana", "2026-12-03"));
        assert!(s.caution_due("ben", "2026-12-02"));
        s.caution_put_away("ana", "2026-12-03");
        assert_eq!(s.caution_read.len(), 1, "one entry per annotator");
        let back: UiState = serde_json::from_str(&serde_json::to_string(&s).unwrap()).unwrap();
        assert!(!back.caution_due("ana", "2026-12-03"));
    }

    #[test]
    fn today_is_a_calendar_date() {
        let d = today();
        assert_eq!(d.len(), 10, "{d}");
        assert_eq!((&d[4..5], &d[7..8]), ("-", "-"), "{d}");
    }

    #[test]
    fn old_storage_without_new_fields_still_loads() {
        let s: UiState = serde_json::from_str(r#"{"annotator":"ana","speed":2.0}"#).unwrap();
        assert_eq!(s.annotator, "ana");
        assert_eq!(s.layout, Layout::default());
    }
}

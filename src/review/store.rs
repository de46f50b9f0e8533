//! Saved review lists: `analysis/<round>/review-list.jsonl` in the campaign folder.
//!
//! One JSON object per line, by priority: `{"rank": 1, "pick": 4, "episode": "...", "t": 12,
//! "reasons": ["onset", "peak"], "priority": 1.73, "novelty": 2.41, "p_value": 0.0012,
//! "action_gap": 0.31, "distance": 3.2}`. `pick` is the order of the diversity selection;
//! `distance` is the scaled distance to the nearest
//! correction or earlier entry when the entry was picked (`null` for a first pick with no
//! correction). Planning again replaces the file through [`crate::durable`].

use std::io::Write;
use std::path::{Path, PathBuf};

use serde_json::json;

use super::plan::{Reason, ReviewList};
use crate::campaign::StepTable;
use crate::novelty::NoveltyError;
use crate::novelty::store::{real_round_dir, round_dir};

/// File name of a round's review list.
pub const REVIEW_LIST_FILE: &str = "review-list.jsonl";

/// `analysis/<round>/review-list.jsonl` of a campaign.
pub fn review_list_path(root: &Path, round: u32) -> PathBuf {
    round_dir(root, round).join(REVIEW_LIST_FILE)
}

fn finite(x: f32) -> serde_json::Value {
    if x.is_finite() {
        json!(x)
    } else {
        serde_json::Value::Null
    }
}

/// Writes the list as JSON Lines to any writer.
pub fn write_review_list<W: Write>(
    steps: &StepTable,
    list: &ReviewList,
    mut w: W,
) -> std::io::Result<()> {
    for (i, e) in list.entries.iter().enumerate() {
        let line = json!({
            "rank": i + 1,
            "pick": e.pick,
            "episode": steps.episodes[e.episode].name,
            "t": e.t,
            "reasons": e.reasons.iter().map(|r| r.as_str()).collect::<Vec<_>>(),
            "priority": finite(e.priority),
            "novelty": finite(e.novelty),
            "p_value": finite(e.p_value),
            "action_gap": finite(e.action_gap),
            "distance": finite(e.distance),
            "inclusion": e.inclusion,
        });
        serde_json::to_writer(&mut w, &line)?;
        w.write_all(b"\n")?;
    }
    w.flush()
}

/// Saves a round's review list and returns the path.
pub fn save_review_list(
    root: &Path,
    round: u32,
    steps: &StepTable,
    list: &ReviewList,
) -> Result<PathBuf, NoveltyError> {
    let path = real_round_dir(root, round)?.join(REVIEW_LIST_FILE);
    crate::durable::write_file(&path, |w| write_review_list(steps, list, w)).map_err(|e| {
        NoveltyError::Store {
            path: path.clone(),
            message: e.to_string(),
        }
    })?;
    Ok(path)
}

/// One entry of a saved review list, located in the round's table.
#[derive(Debug, Clone, PartialEq)]
pub struct SavedEntry {
    /// Row of the round's step table.
    pub row: usize,
    /// Why it is on the list.
    pub reasons: Vec<Reason>,
}

#[derive(serde::Deserialize)]
struct SavedLine {
    episode: String,
    t: i64,
    #[serde(default)]
    reasons: Vec<String>,
}

fn reason_named(name: &str) -> Option<Reason> {
    Reason::named(name)
}

/// Reads a round's saved review list (in rank order) and finds each entry in `steps`; refuses
/// a line that is not an entry, names an unknown reason, or names a step the round does not
/// hold (the round changed since the list was planned), naming the file, line and field.
pub fn load_review_list(
    root: &Path,
    round: u32,
    steps: &StepTable,
) -> Result<Vec<SavedEntry>, NoveltyError> {
    let path = review_list_path(root, round);
    let fail = |line: usize, message: String| NoveltyError::Store {
        path: path.clone(),
        message: format!("line {line}: {message}"),
    };
    let text = std::fs::read_to_string(&path).map_err(|e| NoveltyError::Store {
        path: path.clone(),
        message: e.to_string(),
    })?;
    let mut out = Vec::new();
    for (i, line) in text
        .lines()
        .enumerate()
        .filter(|(_, l)| !l.trim().is_empty())
    {
        let n = i + 1;
        let l: SavedLine = serde_json::from_str(line).map_err(|e| fail(n, e.to_string()))?;
        let row = steps.find(&l.episode, l.t).ok_or_else(|| {
            let msg = format!("fields `episode`, `t`: no step `{}` t {}", l.episode, l.t);
            fail(n, msg)
        })?;
        let reasons = l
            .reasons
            .iter()
            .map(|r| reason_named(r).ok_or_else(|| fail(n, format!("field `reasons`: `{r}`"))))
            .collect::<Result<Vec<_>, _>>()?;
        out.push(SavedEntry { row, reasons });
    }
    Ok(out)
}

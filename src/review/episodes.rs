//! Per-episode figures of a round: steps, interventions, and once scored the flagged steps
//! and the highest novelty. The command line's worst-episode list and the window's episode
//! shelf both read them from here.

use crate::campaign::StepTable;
use crate::novelty::RoundScores;

/// Figures of one episode of a round.
#[derive(Debug, Clone, PartialEq)]
pub struct EpisodeStats {
    /// Episode index in the round's table.
    pub episode: usize,
    /// Number of steps.
    pub steps: usize,
    /// Steps where the expert had taken over.
    pub interventions: usize,
    /// Flagged steps (once scored).
    pub flagged: Option<usize>,
    /// Highest novelty (once scored; 0 for an episode without steps).
    pub peak_novelty: Option<f32>,
}

impl EpisodeStats {
    /// Share of the episode's steps that are flagged (once scored).
    pub fn flagged_share(&self) -> Option<f32> {
        self.flagged.map(|f| f as f32 / self.steps.max(1) as f32)
    }
}

/// Figures of every episode of `steps`, in table order; the scored figures only when `scores`
/// cover the table.
pub fn episode_stats(steps: &StepTable, scores: Option<&RoundScores>) -> Vec<EpisodeStats> {
    steps
        .episodes
        .iter()
        .enumerate()
        .map(|(episode, e)| {
            let rows = e.rows();
            let count = |v: &[bool]| {
                v.get(rows.clone())
                    .map_or(0, |v| v.iter().filter(|&&b| b).count())
            };
            let scored =
                scores.filter(|s| s.novelty.len() >= rows.end && s.flagged.len() >= rows.end);
            EpisodeStats {
                episode,
                steps: e.len,
                interventions: count(&steps.interventions),
                flagged: scored.map(|s| count(&s.flagged)),
                peak_novelty: scored
                    .map(|s| s.novelty[rows.clone()].iter().copied().fold(0.0, f32::max)),
            }
        })
        .collect()
}

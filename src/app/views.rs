//! Data prepared off the UI thread for drawing: the map projection of the demonstrations and
//! their density, the projected paths of a round, and per-episode summaries for the shelf.

use std::sync::Arc;

use crate::campaign::{Campaign, StepTable};
use crate::plotting::{Density, Projection};
use crate::progress::Progress;
use crate::review::episode_stats;

use super::signals::RoundSignals;

/// Cells per side of the demonstration density grid.
pub const DENSITY_BINS: usize = 160;
/// Buckets in a shelf sparkline.
pub const SPARK_BUCKETS: usize = 40;

/// The map's view of the demonstrations.
#[derive(Debug)]
pub struct DemoView {
    /// The map axes.
    pub projection: Projection,
    /// Map coordinates of every demonstration row.
    pub points: Vec<[f32; 2]>,
    /// Binned density of `points`.
    pub density: Density,
}

impl DemoView {
    /// Fits the projection and bins the demonstrations; `None` when cancelled.
    pub fn build(campaign: &Campaign, progress: &Progress) -> Option<DemoView> {
        let projection = Projection::fit(campaign.spec(), &campaign.demonstrations, progress);
        let points = projection.project_all(&campaign.demonstrations, progress);
        if progress.is_cancelled() {
            return None;
        }
        let density = Density::of(&points, DENSITY_BINS, DENSITY_BINS);
        Some(DemoView {
            projection,
            points,
            density,
        })
    }
}

/// Map coordinates of one round's rows.
#[derive(Debug)]
pub struct RoundView {
    /// The round.
    pub round: u32,
    /// Map coordinates of every row of the round's table.
    pub points: Vec<[f32; 2]>,
}

impl RoundView {
    /// Projects a round; `None` when cancelled or when the round does not exist.
    pub fn build(
        campaign: &Campaign,
        demo: &DemoView,
        round: u32,
        progress: &Progress,
    ) -> Option<RoundView> {
        let table = &campaign.round(round)?.steps;
        let points = demo.projection.project_all(table, progress);
        (!progress.is_cancelled()).then_some(RoundView { round, points })
    }
}

/// What the shelf shows of one episode.
#[derive(Debug, Clone, PartialEq)]
pub struct EpisodeSummary {
    /// Episode index in the round's table.
    pub index: usize,
    /// Episode name.
    pub name: String,
    /// Number of steps.
    pub steps: usize,
    /// Steps where the expert had taken over.
    pub interventions: usize,
    /// Share of flagged steps, once scored.
    pub flagged_share: Option<f32>,
    /// Highest novelty, once scored.
    pub peak_novelty: Option<f32>,
    /// Highest novelty per time bucket, once scored.
    pub sparkline: Vec<f32>,
}

/// Summaries of every episode of a round.
pub fn summarize(table: &StepTable, signals: Option<&RoundSignals>) -> Arc<Vec<EpisodeSummary>> {
    let scores = signals.map(|s| &s.scores);
    let out = episode_stats(table, scores)
        .into_iter()
        .map(|st| {
            let e = &table.episodes[st.episode];
            let rows = e.rows();
            EpisodeSummary {
                index: st.episode,
                name: e.name.clone(),
                steps: st.steps,
                interventions: st.interventions,
                flagged_share: st.flagged_share(),
                peak_novelty: st.peak_novelty,
                sparkline: scores
                    .filter(|_| st.peak_novelty.is_some())
                    .map(|s| sparkline(&s.novelty[rows]))
                    .unwrap_or_default(),
            }
        })
        .collect();
    Arc::new(out)
}

/// Highest value per bucket, at most [`SPARK_BUCKETS`] buckets.
pub fn sparkline(values: &[f32]) -> Vec<f32> {
    if values.is_empty() {
        return Vec::new();
    }
    let buckets = SPARK_BUCKETS.min(values.len());
    (0..buckets)
        .map(|b| {
            let (lo, hi) = (b * values.len() / buckets, (b + 1) * values.len() / buckets);
            values[lo..hi.max(lo + 1)]
                .iter()
                .copied()
                .fold(0.0, f32::max)
        })
        .collect()
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn sparkline_keeps_each_bucket_peak() {
        let v: Vec<f32> = (0..80).map(|i| if i == 41 { 9.0 } else { 1.0 }).collect();
        let s = sparkline(&v);
        assert_eq!(s.len(), SPARK_BUCKETS);
        assert_eq!(s[20], 9.0);
        assert_eq!(s.iter().filter(|&&x| x == 9.0).count(), 1);
    }
}

//! The trend across rounds: per round, the figures that show whether aggregation converges
//! (the learner's steps flagged less often, fewer excursions, interventions and failures per
//! episode, lower novelty) and what it cost (labels spent).
//!
//! [`round_trend`] reads nothing from disk: give it a round's steps, its scores and the
//! ledgers' tally. [`campaign_trend`] gathers them for every round of a campaign.
//! Novelty quantiles use linear interpolation between order statistics (numpy's default;
//! Hyndman & Fan 1996, definition 7).

use serde::Serialize;

use crate::campaign::{Campaign, StepTable};
use crate::consensus::{RoundTally, tally};
use crate::ledger::{LedgerError, read_ledgers};
use crate::novelty::RoundScores;
use crate::novelty::scale::quantile_sorted;
use crate::progress::Progress;
use crate::review::{ExcursionSettings, excursions};
use crate::workflow::WorkflowError;
use crate::workflow::analysis::{AnalysisOptions, analyse};

/// Novelty quantiles reported per round.
pub const NOVELTY_QUANTILES: [f64; 3] = [0.5, 0.9, 0.99];

/// One round's figures.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct RoundTrend {
    /// Round number.
    pub round: u32,
    /// Episodes in the round.
    pub episodes: usize,
    /// Steps in the round.
    pub steps: usize,
    /// Flagged steps.
    pub flagged: usize,
    /// Excursions (runs of flagged steps, with hysteresis).
    pub excursions: usize,
    /// Interventions: runs of consecutive steps under expert control (takeovers).
    pub interventions: usize,
    /// Episodes whose outcome is a failure; `None` when no episode of the round has an outcome.
    pub failures: Option<usize>,
    /// Novelty at [`NOVELTY_QUANTILES`].
    pub novelty_quantiles: Vec<f32>,
    /// Steps of the round with at least one standing verdict.
    pub judged: usize,
    /// Standing verdicts on the round's steps (labels spent), over every annotator.
    pub labels: usize,
}

impl RoundTrend {
    /// Share of the round's steps that are flagged.
    pub fn flagged_share(&self) -> f64 {
        self.flagged as f64 / self.steps.max(1) as f64
    }

    /// A count divided by the round's episodes.
    pub fn per_episode(&self, count: usize) -> f64 {
        count as f64 / self.episodes.max(1) as f64
    }
}

/// Runs of consecutive intervention steps within episodes.
pub fn takeovers(steps: &StepTable) -> usize {
    if steps.interventions.is_empty() {
        return 0;
    }
    steps
        .episodes
        .iter()
        .map(|e| {
            e.rows()
                .filter(|&r| steps.intervention(r) && (r == e.start || !steps.intervention(r - 1)))
                .count()
        })
        .sum()
}

/// The figures of one round from its steps, scores and (if any ledger judged it) its tally
/// counts. `failures` is the number of failed episodes, when outcomes are known.
pub fn round_trend(
    round: u32,
    steps: &StepTable,
    scores: &RoundScores,
    tally: Option<&RoundTally>,
    failures: Option<usize>,
) -> RoundTrend {
    let mut sorted: Vec<f64> = scores.novelty.iter().map(|&v| f64::from(v)).collect();
    sorted.sort_by(f64::total_cmp);
    RoundTrend {
        round,
        episodes: steps.episodes.len(),
        steps: steps.len(),
        flagged: scores.flagged_count(),
        excursions: excursions(steps, scores, &ExcursionSettings::default()).len(),
        interventions: takeovers(steps),
        failures,
        novelty_quantiles: NOVELTY_QUANTILES
            .iter()
            .map(|&q| quantile_sorted(&sorted, q) as f32)
            .collect(),
        judged: tally.map_or(0, |t| t.judged),
        labels: tally.map_or(0, |t| t.action_votes + t.skip_votes + t.unrecoverable_votes),
    }
}

/// Episodes of a table whose outcome is a failure under the campaign's spec; `None` when no
/// episode has an outcome.
pub fn failed_episodes(c: &Campaign, steps: &StepTable) -> Option<usize> {
    if steps.outcomes.iter().all(Option::is_none) {
        return None;
    }
    let failures = c.spec().failure_indices();
    let failed = (0..steps.episodes.len())
        .filter(|&e| steps.outcome(e).is_some_and(|o| failures.contains(&o)))
        .count();
    Some(failed)
}

/// Why the trend of a campaign could not be made.
#[derive(Debug, thiserror::Error)]
pub enum TrendError {
    /// Obtaining a round's scores failed.
    #[error(transparent)]
    Workflow(#[from] WorkflowError),
    /// The ledgers could not be read.
    #[error(transparent)]
    Ledger(#[from] LedgerError),
}

/// The trend of every round of a campaign, in round order; rounds without saved scores (or
/// all, with `rescore`) are scored and their scores saved.
pub fn campaign_trend(
    c: &Campaign,
    rescore: bool,
    progress: &Progress,
) -> Result<Vec<RoundTrend>, TrendError> {
    let t = tally(c, &read_ledgers(&c.root)?);
    let mut model = None;
    let mut out = Vec::new();
    for r in &c.rounds {
        // The one analysis path: saved scores when they still fit, else scored and saved.
        let options = AnalysisOptions {
            model: model.clone(),
            rescore,
            save: true,
        };
        let a = analyse(c, r.number, options, progress)?;
        model = a.model.or(model);
        let s = a.scores;
        let counts = t.rounds.iter().find(|x| x.round == r.number);
        let failures = failed_episodes(c, &r.steps);
        out.push(round_trend(r.number, &r.steps, &s, counts, failures));
    }
    Ok(out)
}

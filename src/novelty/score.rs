//! Scoring a round: every step's novelty, conformal p-value, flag, explanation and action
//! signals.

use rayon::prelude::*;

use super::NoveltyError;
use super::index::Hit;
use super::model::NoveltyModel;
use super::query::seeded_knn;
use super::scale::ScaleOrigin;
use super::signals::{channel_gap, consensus, contributions, ensemble_spread, rms, weights};
use crate::campaign::{ActionChannel, Campaign, StepTable};
use crate::progress::Progress;

/// Per-step signals of one round; every vector has one entry (or one block) per row of the
/// scored [`StepTable`].
#[derive(Debug, Clone, Default, PartialEq)]
pub struct RoundScores {
    /// State dimension (width of a `contributions` block).
    pub state_dim: usize,
    /// Action dimension (width of a `neighbour_action` block).
    pub action_dim: usize,
    /// Neighbours per step (width of a `neighbours` block).
    pub k: usize,
    /// Distance to the k-th nearest demonstration state, in scaled units.
    pub novelty: Vec<f32>,
    /// Conformal p-value of the novelty.
    pub p_value: Vec<f32>,
    /// `p_value <= alpha`.
    pub flagged: Vec<bool>,
    /// `n * state_dim`: each feature's share of the squared distance to the nearest
    /// demonstration state (sums to 1; all zeros when the state equals a demonstration state).
    pub contributions: Vec<f32>,
    /// Learner action vs. the neighbours' consensus, in channel-range units (RMS over channels).
    pub action_gap: Vec<f32>,
    /// `n * action_dim`: the neighbours' consensus action (inverse-distance weighted mean;
    /// weighted plurality for discrete channels).
    pub neighbour_action: Vec<f32>,
    /// The neighbours' own spread, in channel-range units (RMS over channels).
    pub neighbour_spread: Vec<f32>,
    /// Spread of the step's ensemble samples in range units; NaN where there are none.
    pub ensemble_spread: Vec<f32>,
    /// `n * k`: demonstration rows of the k nearest neighbours, nearest first.
    pub neighbours: Vec<u32>,
    /// The novelty above which steps of the last phase (the bulk of an episode) are flagged.
    pub threshold: f32,
    /// First position (steps from the episode's start) of each calibration phase.
    pub phase_start: Vec<usize>,
    /// The flag threshold of each phase (see `novelty::phase`).
    pub phase_threshold: Vec<f32>,
    /// The flag level.
    pub alpha: f64,
    /// The per-feature scales the novelty was measured with (`state_dim` values).
    pub scale: Vec<f32>,
    /// Where each scale came from (`state_dim` values).
    pub scale_origin: Vec<ScaleOrigin>,
}

impl RoundScores {
    /// Number of scored steps.
    pub fn len(&self) -> usize {
        self.novelty.len()
    }

    /// True when no step was scored.
    pub fn is_empty(&self) -> bool {
        self.novelty.is_empty()
    }

    /// The contribution block of a row.
    pub fn contribution(&self, row: usize) -> &[f32] {
        &self.contributions[row * self.state_dim..(row + 1) * self.state_dim]
    }

    /// The neighbour consensus action of a row.
    pub fn consensus_action(&self, row: usize) -> &[f32] {
        &self.neighbour_action[row * self.action_dim..(row + 1) * self.action_dim]
    }

    /// The neighbour rows of a row.
    pub fn neighbour_rows(&self, row: usize) -> &[u32] {
        &self.neighbours[row * self.k..(row + 1) * self.k]
    }

    /// The flag threshold at a position in an episode (the last phase's past the phases, or
    /// `threshold` when no phases were saved).
    pub fn threshold_at(&self, position: usize) -> f32 {
        let i = self.phase_start.partition_point(|&s| s <= position);
        i.checked_sub(1)
            .and_then(|i| self.phase_threshold.get(i))
            .copied()
            .unwrap_or(self.threshold)
    }

    /// Number of flagged steps.
    pub fn flagged_count(&self) -> usize {
        self.flagged.iter().filter(|&&f| f).count()
    }

    fn empty_like(m: &NoveltyModel, steps: &StepTable) -> Self {
        RoundScores {
            state_dim: steps.state_dim,
            action_dim: steps.action_dim,
            k: m.k().min(m.index().len()),
            threshold: m.threshold(),
            phase_start: m.phased().starts().to_vec(),
            phase_threshold: m.phased().thresholds(),
            alpha: m.alpha(),
            scale: m.scale().to_vec(),
            scale_origin: m.scale_origin().to_vec(),
            ..Default::default()
        }
    }

    fn append(&mut self, o: RoundScores) {
        self.novelty.extend(o.novelty);
        self.p_value.extend(o.p_value);
        self.flagged.extend(o.flagged);
        self.contributions.extend(o.contributions);
        self.action_gap.extend(o.action_gap);
        self.neighbour_action.extend(o.neighbour_action);
        self.neighbour_spread.extend(o.neighbour_spread);
        self.ensemble_spread.extend(o.ensemble_spread);
        self.neighbours.extend(o.neighbours);
    }
}

/// Scores every step of `steps` (a round of `campaign`) against the model.
pub fn score_round(
    model: &NoveltyModel,
    campaign: &Campaign,
    steps: &StepTable,
    progress: &Progress,
) -> Result<RoundScores, NoveltyError> {
    score_steps(
        model,
        &campaign.demonstrations,
        &campaign.spec().actions,
        steps,
        progress,
    )
}

/// Scores `steps` against the model built from `demos`, with the spec's action channels.
pub fn score_steps(
    model: &NoveltyModel,
    demos: &StepTable,
    channels: &[ActionChannel],
    steps: &StepTable,
    progress: &Progress,
) -> Result<RoundScores, NoveltyError> {
    score_steps_from(model, demos, channels, (steps, 0), progress)
}

/// [`score_steps`] for a table whose first episode starts `lead` steps into its episode (a
/// shard of a round cut inside an episode): positions in that episode, which choose the
/// calibration phase, are counted from the episode's real start.
pub fn score_steps_from(
    model: &NoveltyModel,
    demos: &StepTable,
    channels: &[ActionChannel],
    (steps, lead): (&StepTable, usize),
    progress: &Progress,
) -> Result<RoundScores, NoveltyError> {
    if steps.state_dim != demos.state_dim || steps.action_dim != demos.action_dim {
        return Err(NoveltyError::DimensionMismatch {
            expected: demos.state_dim,
            found: steps.state_dim,
        });
    }
    let rows: Vec<usize> = (0..steps.len()).collect();
    let k = model.k().min(model.index().len());
    let hits = seeded_knn(
        model.index(),
        model.inv_scale(),
        steps,
        &rows,
        k,
        "scoring",
        progress,
    )?;
    let ctx = Ctx {
        model,
        demos,
        channels,
        steps,
        k,
        lead,
    };
    let parts: Vec<RoundScores> = rows
        .par_chunks(4096)
        .map(|chunk| ctx.signals(chunk, &hits))
        .collect();
    let mut out = RoundScores::empty_like(model, steps);
    for p in parts {
        out.append(p);
    }
    Ok(out)
}

struct Ctx<'a> {
    model: &'a NoveltyModel,
    demos: &'a StepTable,
    channels: &'a [ActionChannel],
    steps: &'a StepTable,
    k: usize,
    lead: usize,
}

impl Ctx<'_> {
    fn signals(&self, rows: &[usize], hits: &[Hit]) -> RoundScores {
        let mut s = RoundScores::empty_like(self.model, self.steps);
        let (d, a) = (self.steps.state_dim, self.steps.action_dim);
        let (mut x, mut near) = (Vec::with_capacity(d), Vec::with_capacity(d));
        let mut share = vec![0.0f32; d];
        for &row in rows {
            let h = &hits[row * self.k..(row + 1) * self.k];
            let novelty = h.last().map_or(f32::INFINITY, |h| h.1.max(0.0).sqrt());
            let lead = if self.steps.episode_of(row) == 0 {
                self.lead
            } else {
                0
            };
            let p = self.model.p_value(novelty, self.steps.position(row) + lead);
            s.novelty.push(novelty);
            s.p_value.push(p as f32);
            s.flagged.push(p <= self.model.alpha());
            self.model.scale_into(self.steps.state(row), &mut x);
            self.model
                .scale_into(self.demos.state(h[0].0 as usize), &mut near);
            contributions(&x, &near, &mut share);
            s.contributions.extend_from_slice(&share);
            s.neighbours.extend(h.iter().map(|h| h.0));
            let w = weights(h);
            let mut gaps = Vec::with_capacity(a);
            let mut spreads = Vec::with_capacity(a);
            for (c, ch) in self.channels.iter().enumerate() {
                let values: Vec<f32> = h
                    .iter()
                    .map(|h| self.demos.action(h.0 as usize)[c])
                    .collect();
                let (m, spread) = consensus(ch, &values, &w);
                s.neighbour_action.push(m);
                gaps.push(channel_gap(ch, self.steps.action(row)[c], m));
                spreads.push(spread);
            }
            s.action_gap.push(rms(gaps.into_iter()));
            s.neighbour_spread.push(rms(spreads.into_iter()));
            s.ensemble_spread
                .push(ensemble_spread(self.channels, self.steps.samples(row)));
        }
        s
    }
}

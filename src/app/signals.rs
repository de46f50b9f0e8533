//! The per-step novelty signals of the selected round, as the shelf, the map and the drift
//! strip read them. Until novelty scoring is part of the library this holds nothing and the
//! regions draw what needs no scores; the real scores fill [`RoundSignals`] in one place
//! ([`compute`]).

use std::sync::Arc;

use crate::campaign::Campaign;
use crate::progress::Progress;

/// One excursion: a maximal run of flagged steps, as table rows of the round.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct ExcursionRows {
    /// Episode index in the round's table.
    pub episode: usize,
    /// First flagged row.
    pub onset: usize,
    /// Row of the highest novelty.
    pub peak: usize,
    /// Last flagged row (inclusive).
    pub end: usize,
}

/// Novelty signals for every row of one round's table.
#[derive(Debug, Clone, Default, PartialEq)]
pub struct RoundSignals {
    /// The round these belong to.
    pub round: u32,
    /// Neighbours per step.
    pub k: usize,
    /// Novelty per row (k-th neighbour distance in scaled units).
    pub novelty: Vec<f32>,
    /// Conformal p-value per row.
    pub p_value: Vec<f32>,
    /// Flagged per row.
    pub flagged: Vec<bool>,
    /// Novelty at which a step is flagged.
    pub threshold: f32,
    /// Flag level.
    pub alpha: f64,
    /// Per-feature share of the novelty, `state_dim` values per row.
    pub contributions: Vec<f32>,
    /// Distance-weighted mean of the neighbours' expert actions, `action_dim` values per row.
    pub neighbour_action: Vec<f32>,
    /// Demonstration rows of the k nearest neighbours, `k` per row.
    pub neighbours: Vec<u32>,
    /// Excursions of the round.
    pub excursions: Vec<ExcursionRows>,
}

impl RoundSignals {
    /// Novelty of a row.
    pub fn novelty(&self, row: usize) -> Option<f32> {
        self.novelty.get(row).copied()
    }

    /// Whether a row is flagged.
    pub fn flagged(&self, row: usize) -> bool {
        self.flagged.get(row).copied().unwrap_or(false)
    }

    /// Demonstration rows nearest to a row.
    pub fn neighbours(&self, row: usize) -> &[u32] {
        self.neighbours
            .get(row * self.k..(row + 1) * self.k)
            .unwrap_or(&[])
    }

    /// The neighbours' expert action at a row.
    pub fn neighbour_action(&self, row: usize, action_dim: usize) -> Option<&[f32]> {
        self.neighbour_action
            .get(row * action_dim..(row + 1) * action_dim)
    }

    /// Excursions of one episode, in time order.
    pub fn excursions_of(&self, episode: usize) -> impl Iterator<Item = &ExcursionRows> {
        self.excursions.iter().filter(move |e| e.episode == episode)
    }
}

/// What the window currently knows of the round's signals.
#[derive(Debug, Clone, Default)]
pub struct Signals {
    /// The scores, once computed for the selected round.
    pub current: Option<Arc<RoundSignals>>,
}

impl Signals {
    /// The scores, when they belong to `round`.
    pub fn for_round(&self, round: u32) -> Option<&RoundSignals> {
        self.current.as_deref().filter(|s| s.round == round)
    }
}

/// Scores one round of a campaign (runs on a background thread). Returns `Ok(None)` while
/// the library has no novelty scoring.
pub fn compute(
    _campaign: &Campaign,
    _round: u32,
    _progress: &Progress,
) -> Result<Option<RoundSignals>, String> {
    Ok(None)
}

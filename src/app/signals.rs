//! The per-step novelty signals of the selected round, as the shelf, the map and the drift
//! strip read them: the library's [`RoundScores`] and excursions, scored on a background
//! thread by [`compute`]. Until a round is scored the regions draw what needs no scores.

use std::sync::Arc;

use crate::campaign::Campaign;
use crate::novelty::{NoveltyModel, RoundScores};
use crate::progress::Progress;
use crate::review::Excursion;
use crate::workflow::{AnalysisOptions, ScoreSource, WorkflowError, analyse};

/// Novelty signals for every row of one round's table: the library's [`RoundScores`] (read
/// through `Deref`, so `signals.novelty` is the scores' vector) and the round's excursions.
#[derive(Debug, Clone, Default, PartialEq)]
pub struct RoundSignals {
    /// The round these belong to.
    pub round: u32,
    /// The library's per-step scores of the round.
    pub scores: RoundScores,
    /// Excursions of the round.
    pub excursions: Vec<Excursion>,
    /// Where the scores came from (decides whether the saved review list fits them).
    pub source: ScoreSource,
}

impl std::ops::Deref for RoundSignals {
    type Target = RoundScores;
    fn deref(&self) -> &RoundScores {
        &self.scores
    }
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
    pub fn excursions_of(&self, episode: usize) -> impl Iterator<Item = &Excursion> {
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

/// Result of a scoring job: the model (kept for the next round) and the round's signals.
pub struct Scored {
    /// The novelty model of the campaign's demonstrations (none when saved scores were read).
    pub model: Option<Arc<NoveltyModel>>,
    /// Where the scores came from, for the status line.
    pub source: String,
    /// The round's signals.
    pub signals: RoundSignals,
}

impl RoundSignals {
    /// Takes the library's scores of a round and its excursions.
    pub fn from_scores(round: u32, s: RoundScores, excursions: &[Excursion]) -> RoundSignals {
        RoundSignals {
            round,
            source: ScoreSource::Scored(None),
            scores: s,
            excursions: excursions.to_vec(),
        }
    }
}

/// Scores one round of a campaign (runs on a background thread) through the library's
/// [`analyse`]: the round's saved scores when the saved scores' one reuse rule allows, else
/// scored now with the given model or one built now; then finds the excursions. `Ok(None)`
/// when cancelled or the round does not exist.
pub fn compute(
    campaign: &Campaign,
    model: Option<Arc<NoveltyModel>>,
    round: u32,
    progress: &Progress,
) -> Result<Option<Scored>, String> {
    let options = AnalysisOptions {
        model,
        ..Default::default()
    };
    let a = match analyse(campaign, round, options, progress) {
        Ok(a) => a,
        Err(e) if e.is_cancelled() => return Ok(None),
        Err(WorkflowError::NoRound(_)) => return Ok(None),
        Err(e) => return Err(e.to_string()),
    };
    let mut source = match (&a.source, &a.stale) {
        (ScoreSource::Scored(_), Some(why)) => format!("scored now ({why})"),
        (s, _) => s.describe(),
    };
    if let (ScoreSource::Scored(_), Some(m)) = (&a.source, &a.model) {
        for w in m.warnings() {
            source.push_str(&format!("; warning: {w}"));
        }
    }
    let mut signals = RoundSignals::from_scores(round, a.scores, &a.excursions);
    signals.source = a.source;
    Ok(Some(Scored {
        model: a.model,
        signals,
        source,
    }))
}

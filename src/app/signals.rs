//! The per-step novelty signals of the selected round, as the shelf, the map and the drift
//! strip read them: the library's [`RoundScores`] and excursions, scored on a background
//! thread by [`compute`]. Until a round is scored the regions draw what needs no scores.

use std::sync::Arc;

use crate::campaign::Campaign;
use crate::novelty::store::NotReusable;
use crate::novelty::{self, NoveltyError, NoveltyModel, RoundScores};
use crate::progress::Progress;
use crate::review::{self, Excursion, ExcursionSettings};

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

/// Novelty signals for every row of one round's table: the library's [`RoundScores`] (read
/// through `Deref`, so `signals.novelty` is the scores' vector) and the round's excursions.
#[derive(Debug, Clone, Default, PartialEq)]
pub struct RoundSignals {
    /// The round these belong to.
    pub round: u32,
    /// The library's per-step scores of the round.
    pub scores: RoundScores,
    /// Excursions of the round.
    pub excursions: Vec<ExcursionRows>,
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
            scores: s,
            excursions: excursions
                .iter()
                .map(|e| ExcursionRows {
                    episode: e.episode,
                    onset: e.onset,
                    peak: e.peak,
                    end: e.end,
                })
                .collect(),
        }
    }
}

/// Scores one round of a campaign (runs on a background thread): reads the round's saved
/// scores (`countersteer score`) when [`novelty::store::reusable_scores`] allows, else
/// builds the novelty model (unless one is given) and scores every step; then finds the
/// excursions. `Ok(None)` when cancelled or the round does not exist.
pub fn compute(
    campaign: &Campaign,
    model: Option<Arc<NoveltyModel>>,
    round: u32,
    progress: &Progress,
) -> Result<Option<Scored>, String> {
    let Some(r) = campaign.round(round) else {
        return Ok(None);
    };
    let saved = novelty::store::reusable_scores(campaign, round, &r.steps);
    let (scores, model, source) = match saved {
        Ok(s) => {
            let path = novelty::store::scores_path(&campaign.root, round);
            (s, model, format!("saved scores {}", path.display()))
        }
        Err(why) => {
            let model = match model {
                Some(m) => m,
                None => match novelty::build_model(campaign, progress) {
                    Ok(m) => Arc::new(m),
                    Err(NoveltyError::Cancelled) => return Ok(None),
                    Err(e) => return Err(e.to_string()),
                },
            };
            let mut source = match why {
                NotReusable::Missing => "scored now".to_string(),
                why => format!("scored now ({why})"),
            };
            for w in model.warnings() {
                source.push_str(&format!("; warning: {w}"));
            }
            match novelty::score_round(&model, campaign, &r.steps, progress) {
                Ok(s) => (s, Some(model), source),
                Err(NoveltyError::Cancelled) => return Ok(None),
                Err(e) => return Err(e.to_string()),
            }
        }
    };
    let found = review::excursions(&r.steps, &scores, &ExcursionSettings::default());
    let signals = RoundSignals::from_scores(round, scores, &found);
    Ok(Some(Scored {
        model,
        signals,
        source,
    }))
}

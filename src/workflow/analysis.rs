//! A round's analysis: its per-step scores and excursions, read from the saved scores when
//! they still fit the campaign, otherwise scored now.
//!
//! Every front-end obtains a round's scores here (the window, `countersteer plan`, the study),
//! so they all follow the one reuse rule of the saved scores,
//! [`crate::novelty::store::reusable_scores`] (the campaign's model settings and the round
//! data's fingerprint, and the file's checksum).

use std::path::PathBuf;
use std::sync::Arc;

use super::WorkflowError;
use crate::campaign::{Campaign, StepTable};
use crate::novelty::store::{NotReusable, ScoresKey, reusable_scores, save_scores, scores_path};
use crate::novelty::{NoveltyError, NoveltyModel, RoundScores, build_model, score_round};
use crate::progress::Progress;
use crate::review::{Excursion, ExcursionSettings, excursions};

/// Where a round's scores came from.
#[derive(Debug, Clone, PartialEq)]
pub enum ScoreSource {
    /// Read from the saved scores at this path.
    Saved(PathBuf),
    /// Scored now (and written to this path when asked to save).
    Scored(Option<PathBuf>),
}

impl ScoreSource {
    /// The source in words, for a status line.
    pub fn describe(&self) -> String {
        match self {
            ScoreSource::Saved(p) => format!("saved scores {}", p.display()),
            ScoreSource::Scored(_) => "scored now".to_string(),
        }
    }
}

impl Default for ScoreSource {
    fn default() -> Self {
        ScoreSource::Scored(None)
    }
}

/// How [`analyse`] obtains the scores.
#[derive(Clone, Default)]
pub struct AnalysisOptions {
    /// A novelty model already built for the campaign (built when needed otherwise).
    pub model: Option<Arc<NoveltyModel>>,
    /// Score again even when the saved scores fit.
    pub rescore: bool,
    /// Write scores made now to `analysis/<round>/scores.npz`.
    pub save: bool,
}

/// A round's scores, excursions and where they came from.
#[derive(Debug, Clone)]
pub struct Analysis {
    /// The round.
    pub round: u32,
    /// Per-step scores of the round's table.
    pub scores: RoundScores,
    /// The round's excursions.
    pub excursions: Vec<Excursion>,
    /// Where the scores came from.
    pub source: ScoreSource,
    /// The novelty model, when one was built or given (none when saved scores were read).
    pub model: Option<Arc<NoveltyModel>>,
    /// Why saved scores were not used, when they existed.
    pub stale: Option<String>,
}

/// Obtains a round's analysis: the saved scores when [`reusable_scores`] accepts them (and no
/// rescore is asked), else a novelty model (given or built) scores every step; then the
/// excursions are found. `Err(WorkflowError::Novelty(NoveltyError::Cancelled))` when cancelled.
pub fn analyse(
    campaign: &Campaign,
    round: u32,
    options: AnalysisOptions,
    progress: &Progress,
) -> Result<Analysis, WorkflowError> {
    let steps = &campaign
        .round(round)
        .ok_or(WorkflowError::NoRound(round))?
        .steps;
    let reuse = if options.rescore {
        Err(NotReusable::Missing)
    } else {
        reusable_scores(campaign, round, steps)
    };
    let (scores, source, model, stale) = match reuse {
        Ok(s) => {
            let path = scores_path(&campaign.root, round);
            (s, ScoreSource::Saved(path), options.model, None)
        }
        Err(NotReusable::Missing) => score_now(campaign, round, steps, &options, progress, None)?,
        Err(why) => {
            let why = Some(why.to_string());
            score_now(campaign, round, steps, &options, progress, why)?
        }
    };
    let found = excursions(steps, &scores, &ExcursionSettings::default());
    Ok(Analysis {
        round,
        scores,
        excursions: found,
        source,
        model,
        stale,
    })
}

type Obtained = (
    RoundScores,
    ScoreSource,
    Option<Arc<NoveltyModel>>,
    Option<String>,
);

fn score_now(
    campaign: &Campaign,
    round: u32,
    steps: &StepTable,
    options: &AnalysisOptions,
    progress: &Progress,
    stale: Option<String>,
) -> Result<Obtained, WorkflowError> {
    let model = match &options.model {
        Some(m) => m.clone(),
        None => Arc::new(build_model(campaign, progress)?),
    };
    let scores = score_round(&model, campaign, steps, progress)?;
    let saved = if options.save {
        let key = ScoresKey::of(campaign, steps);
        Some(save_scores(&campaign.root, round, steps, &scores, &key)?)
    } else {
        None
    };
    Ok((scores, ScoreSource::Scored(saved), Some(model), stale))
}

/// True when `scores` hold a value for every step of `steps` (the scores belong to them).
pub fn covers(scores: &RoundScores, steps: &StepTable) -> bool {
    let n = steps.len();
    [
        scores.novelty.len(),
        scores.p_value.len(),
        scores.action_gap.len(),
    ] == [n; 3]
        && scores.scale.len() == steps.state_dim
}

impl From<NoveltyError> for WorkflowError {
    fn from(e: NoveltyError) -> Self {
        WorkflowError::Novelty(e)
    }
}

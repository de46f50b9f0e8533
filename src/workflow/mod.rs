//! The pipeline's driver: what every front-end (the window, the command line, the study, the
//! Python module) calls to take a round from its data to the expert's verdicts.
//!
//! - [`analysis`]: a round's scores and excursions, reused from the saved scores under their
//!   one rule ([`crate::novelty::store::reusable_scores`]) or scored now.
//! - [`tally`]: the campaign's ledgers read and their consensus.
//! - [`sitting`]: the review list one annotator works through: the list `countersteer plan`
//!   saved when fresh, verdicts, undo, the next open entry, the steps others judged.

pub mod analysis;
pub mod sitting;
pub mod tally;

pub use analysis::{Analysis, AnalysisOptions, ScoreSource, analyse};
pub use sitting::{
    Judgement, ListOrigin, Planned, Sitting, SittingEntry, Status, judged_rows, judgements,
    planned_list, verdict_for,
};
pub use tally::{Tallied, tally_campaign};

use crate::ledger::LedgerError;
use crate::novelty::NoveltyError;

/// Why a step of the pipeline failed.
#[derive(Debug, thiserror::Error)]
pub enum WorkflowError {
    /// The campaign has no such round.
    #[error("no round {0} in rounds/")]
    NoRound(u32),
    /// Scoring, or reading or writing saved scores, failed.
    #[error(transparent)]
    Novelty(NoveltyError),
    /// A ledger could not be read.
    #[error(transparent)]
    Ledger(#[from] LedgerError),
}

impl WorkflowError {
    /// True when the work was cancelled (not a failure to report).
    pub fn is_cancelled(&self) -> bool {
        matches!(self, WorkflowError::Novelty(NoveltyError::Cancelled))
    }
}

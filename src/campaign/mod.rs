//! Campaigns: the spec, the folder layout, the step loaders and their located errors.
//!
//! Actions outside a continuous channel's bounds are **clipped and reported** as warnings
//! (a learner's raw output often overshoots by a little, and refusing the whole rollout would
//! hide the rest of it); `check --strict` and [`LoadOptions::strict`] turn them into errors.
//! Every other fault is an error.

mod accept;
pub mod arrays;
pub mod confine;
pub mod csv;
pub mod digest;
pub mod error;
pub mod folder;
pub mod frame;
pub mod jsonl;
pub mod npz;
pub mod numpy;
pub mod outcome;
pub mod spec;
pub mod steps;
pub mod summary;
pub mod validate;
pub mod write;

use std::path::PathBuf;

pub use error::{CampaignError, Location, Problem, ProblemKind, Severity};
pub use folder::{CheckReport, LoadOptions, check_campaign, load_campaign};
pub use spec::{
    ActionChannel, CampaignFile, ChannelKind, Feature, FeatureKind, NoveltySettings, Outcome, Spec,
};
pub use steps::{Episode, StepTable};

/// One aggregation round: the rollouts of one learner version.
#[derive(Debug, Clone, PartialEq)]
pub struct Round {
    /// The round's number (its folder name under `rounds/`).
    pub number: u32,
    /// The learner's steps (the actions are the learner's).
    pub steps: StepTable,
}

/// A loaded campaign.
#[derive(Debug, Clone, PartialEq)]
pub struct Campaign {
    /// The campaign folder.
    pub root: PathBuf,
    /// The contents of `campaign.json`.
    pub file: CampaignFile,
    /// The expert demonstrations (the actions are the expert's).
    pub demonstrations: StepTable,
    /// The rounds, by ascending number.
    pub rounds: Vec<Round>,
    /// Digests of the files loaded (`campaign.json` and every data file), taken from the bytes
    /// read while loading; empty for a campaign built in memory.
    pub inputs: Vec<digest::FileDigest>,
}

impl Campaign {
    /// The spec.
    pub fn spec(&self) -> &Spec {
        &self.file.spec
    }

    /// The round with this number.
    pub fn round(&self, number: u32) -> Option<&Round> {
        self.rounds.iter().find(|r| r.number == number)
    }
}

//! The merged set in memory: demonstrations plus consensus corrections, one row per state.

use serde::{Deserialize, Serialize};

use super::{ExportOptions, Weighting};
use crate::campaign::{Campaign, StepTable};
use crate::consensus::Tally;

/// Where a row of the merged set comes from.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Deserialize)]
#[serde(rename_all = "lowercase")]
pub enum RowSource {
    /// An expert demonstration step (the expert's own action).
    Demonstration,
    /// A learner state with the annotators' consensus action.
    Correction,
}

impl RowSource {
    /// The word written in the `source` column.
    pub fn name(self) -> &'static str {
        match self {
            RowSource::Demonstration => "demonstration",
            RowSource::Correction => "correction",
        }
    }

    /// Parses the `source` column.
    pub fn parse(s: &str) -> Option<RowSource> {
        match s {
            "demonstration" => Some(RowSource::Demonstration),
            "correction" => Some(RowSource::Correction),
            _ => None,
        }
    }
}

/// The merged training set, column by column (row `i` of each column is one state).
#[derive(Debug, Clone, Default, PartialEq)]
pub struct MergedSet {
    /// State feature names, in state-vector order.
    pub state_names: Vec<String>,
    /// Action channel names, in action-vector order.
    pub action_names: Vec<String>,
    /// Source of each row.
    pub source: Vec<RowSource>,
    /// Round of each correction row; `None` for demonstrations.
    pub round: Vec<Option<u32>>,
    /// Episode name of each row.
    pub episode: Vec<String>,
    /// Time index of each row.
    pub t: Vec<i64>,
    /// Row-major states, `len() * state_names.len()` values.
    pub states: Vec<f32>,
    /// Row-major actions (choice indices for discrete channels).
    pub actions: Vec<f32>,
    /// Training weight of each row.
    pub weight: Vec<f32>,
    /// Annotators whose action entered the consensus (0 for demonstrations).
    pub annotators: Vec<u32>,
    /// Per-step agreement (`1 - max channel spread`) when two or more annotators gave an
    /// action; `None` otherwise.
    pub agreement: Vec<Option<f32>>,
}

impl MergedSet {
    /// Number of rows.
    pub fn len(&self) -> usize {
        self.t.len()
    }

    /// True when the set has no row.
    pub fn is_empty(&self) -> bool {
        self.t.is_empty()
    }

    /// State of a row.
    pub fn state(&self, row: usize) -> &[f32] {
        let d = self.state_names.len();
        &self.states[row * d..(row + 1) * d]
    }

    /// Action of a row.
    pub fn action(&self, row: usize) -> &[f32] {
        let a = self.action_names.len();
        &self.actions[row * a..(row + 1) * a]
    }

    fn push_table_row(&mut self, table: &StepTable, row: usize, episode: &str) {
        self.episode.push(episode.to_string());
        self.t.push(table.t[row]);
        self.states.extend_from_slice(table.state(row));
    }
}

/// Corrections left out of the merged set, by reason.
#[derive(Debug, Clone, Default, PartialEq, Eq, Serialize, Deserialize)]
pub struct Excluded {
    /// Steps with verdicts but no consensus action (only `skip`, or `unrecoverable` not
    /// outnumbered by actions).
    pub no_consensus_action: usize,
    /// Steps whose agreement is below `min_agreement`.
    pub below_agreement: usize,
    /// Steps with fewer action verdicts than `min_annotators`.
    pub too_few_annotators: usize,
}

/// Builds the merged set: every demonstration step, then every step with a consensus action
/// that passes the options' filters, by round and row.
pub fn merge(campaign: &Campaign, tally: &Tally, opts: &ExportOptions) -> (MergedSet, Excluded) {
    let spec = campaign.spec();
    let mut m = MergedSet {
        state_names: spec.features.iter().map(|f| f.name.clone()).collect(),
        action_names: spec.actions.iter().map(|c| c.name.clone()).collect(),
        ..Default::default()
    };
    let demos = &campaign.demonstrations;
    for e in &demos.episodes {
        for row in e.rows() {
            m.push_table_row(demos, row, &e.name);
            m.source.push(RowSource::Demonstration);
            m.round.push(None);
            m.actions.extend_from_slice(demos.action(row));
            m.weight.push(1.0);
            m.annotators.push(0);
            m.agreement.push(None);
        }
    }
    let mut excluded = Excluded::default();
    for s in &tally.steps {
        let Some(action) = &s.action else {
            excluded.no_consensus_action += 1;
            continue;
        };
        if s.actions < opts.min_annotators {
            excluded.too_few_annotators += 1;
            continue;
        }
        if let (Some(min), Some(a)) = (opts.min_agreement, s.agreement)
            && a < min
        {
            excluded.below_agreement += 1;
            continue;
        }
        let Some(round) = campaign.round(s.round) else {
            continue;
        };
        m.push_table_row(&round.steps, s.row, &s.episode);
        m.source.push(RowSource::Correction);
        m.round.push(Some(s.round));
        m.actions.extend_from_slice(action);
        let w = match opts.weighting {
            Weighting::Uniform => 1.0,
            Weighting::Agreement => s.agreement.unwrap_or(1.0),
        };
        m.weight.push((opts.correction_weight * w) as f32);
        m.annotators.push(s.actions as u32);
        m.agreement.push(s.agreement.map(|a| a as f32));
    }
    (m, excluded)
}

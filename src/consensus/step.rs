//! The consensus of one step: the action the annotators agree on, and how far apart they are.
//!
//! - Continuous channels: the **median** of the annotators' values (the mean of the two middle
//!   values for an even count). The median keeps one far-off verdict from dragging the
//!   consensus into a place no annotator chose.
//! - Discrete channels: the **plurality** choice; a tie goes to the tied choice listed first
//!   in the spec (spec authors can list the more cautious choices first).
//! - `skip` abstains. `unrecoverable` is counted, never averaged into an action: a step gets a
//!   consensus action only when action verdicts outnumber `unrecoverable` verdicts.
//! - Spread per channel (two or more action verdicts): `(max - min) / (high - low)` for a
//!   continuous channel, `1 - plurality share` for a discrete one. The step's agreement is
//!   `1 - ` its largest channel spread, in `0..=1`.

use super::resolve::{Judged, Vote};
use crate::campaign::{ChannelKind, Spec};

/// The consensus of one step.
#[derive(Debug, Clone, PartialEq)]
pub struct StepConsensus {
    /// Round.
    pub round: u32,
    /// Row in the round's step table.
    pub row: usize,
    /// Episode name.
    pub episode: String,
    /// Time index.
    pub t: i64,
    /// Each annotator's standing verdict, by annotator name.
    pub votes: Vec<Vote>,
    /// Number of action verdicts.
    pub actions: usize,
    /// Number of `skip` verdicts.
    pub skips: usize,
    /// Number of `unrecoverable` verdicts.
    pub unrecoverable: usize,
    /// The consensus action (choice indices for discrete channels), when there is one.
    pub action: Option<Vec<f32>>,
    /// Spread per channel, when two or more annotators gave an action.
    pub spread: Option<Vec<f64>>,
    /// `1 - max spread`, when two or more annotators gave an action.
    pub agreement: Option<f64>,
}

impl StepConsensus {
    /// Builds the consensus of one step from its votes.
    pub(crate) fn new(
        spec: &Spec,
        round: u32,
        row: usize,
        episode: &str,
        t: i64,
        votes: Vec<Vote>,
    ) -> Self {
        let actions: Vec<&[f32]> = votes
            .iter()
            .filter_map(|v| match &v.judged {
                Judged::Action(a) => Some(a.as_slice()),
                _ => None,
            })
            .collect();
        let count = |j: &Judged| votes.iter().filter(|v| &v.judged == j).count();
        let (skips, unrecoverable) = (count(&Judged::Skip), count(&Judged::Unrecoverable));
        let action = (actions.len() > unrecoverable).then(|| consensus_action(spec, &actions));
        let spread = (actions.len() >= 2).then(|| channel_spread(spec, &actions));
        let agreement = spread
            .as_ref()
            .map(|s| (1.0 - s.iter().copied().fold(0.0, f64::max)).clamp(0.0, 1.0));
        StepConsensus {
            round,
            row,
            episode: episode.to_string(),
            t,
            actions: actions.len(),
            skips,
            unrecoverable,
            action,
            spread,
            agreement,
            votes,
        }
    }
}

fn column(actions: &[&[f32]], c: usize) -> Vec<f64> {
    actions.iter().map(|a| f64::from(a[c])).collect()
}

/// Median of non-empty values.
pub fn median(values: &[f64]) -> f64 {
    let mut v = values.to_vec();
    v.sort_by(f64::total_cmp);
    let n = v.len();
    if n % 2 == 1 {
        v[n / 2]
    } else {
        (v[n / 2 - 1] + v[n / 2]) / 2.0
    }
}

/// Plurality choice index and its count; ties go to the lowest index.
pub fn plurality(choices: &[f64]) -> (f64, usize) {
    let mut v = choices.to_vec();
    v.sort_by(f64::total_cmp);
    let mut best = (f64::NAN, 0);
    for run in v.chunk_by(|a, b| a == b) {
        if run.len() > best.1 {
            best = (run[0], run.len());
        }
    }
    best
}

fn consensus_action(spec: &Spec, actions: &[&[f32]]) -> Vec<f32> {
    spec.actions
        .iter()
        .enumerate()
        .map(|(c, ch)| {
            let col = column(actions, c);
            match ch.kind {
                ChannelKind::Continuous { .. } => median(&col) as f32,
                ChannelKind::Discrete { .. } => plurality(&col).0 as f32,
            }
        })
        .collect()
}

fn channel_spread(spec: &Spec, actions: &[&[f32]]) -> Vec<f64> {
    spec.actions
        .iter()
        .enumerate()
        .map(|(c, ch)| {
            let col = column(actions, c);
            match ch.kind {
                ChannelKind::Continuous { .. } => {
                    let (lo, hi) = col
                        .iter()
                        .fold((f64::INFINITY, f64::NEG_INFINITY), |(l, h), &x| {
                            (l.min(x), h.max(x))
                        });
                    ((hi - lo) / ch.range()).min(1.0)
                }
                ChannelKind::Discrete { .. } => 1.0 - plurality(&col).1 as f64 / col.len() as f64,
            }
        })
        .collect()
}

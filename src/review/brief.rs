//! What the expert needs to judge one step: its state features with their share of the
//! novelty, the learner's action beside the actions the experts took in the nearest
//! demonstration states, and the suggested recovery action (the neighbours' inverse-distance
//! weighted consensus, see [`crate::novelty::signals`]).

use crate::campaign::{ActionChannel, Campaign, ChannelKind};
use crate::ledger::{Correction, Verdict, fingerprint, fingerprint_v1};
use crate::novelty::RoundScores;

/// One state feature of a step.
#[derive(Debug, Clone, PartialEq)]
pub struct FeatureLine {
    /// Feature name.
    pub name: String,
    /// Unit.
    pub unit: String,
    /// The step's value.
    pub value: f32,
    /// Share of the squared scaled distance to the nearest demonstration state (NaN unscored).
    pub share: f32,
}

/// One action channel of a step.
#[derive(Debug, Clone, PartialEq)]
pub struct ChannelLine {
    /// The channel as declared in the spec.
    pub channel: ActionChannel,
    /// The learner's action.
    pub learner: f32,
    /// The suggested value: the neighbours' consensus (the learner's action when unscored).
    pub suggested: f32,
    /// The experts' actions in the nearest demonstration states, nearest first.
    pub neighbours: Vec<f32>,
}

/// Everything the correction desk shows of one step.
#[derive(Debug, Clone, PartialEq)]
pub struct StepBrief {
    /// Round.
    pub round: u32,
    /// Row of the round's step table.
    pub row: usize,
    /// Episode name.
    pub episode: String,
    /// Time index.
    pub t: i64,
    /// The step's fingerprint now.
    pub fingerprint: String,
    /// The step's fingerprint now in the first version, for verdicts recorded with it.
    pub fingerprint_v1: String,
    /// Novelty, p-value and flag, once scored.
    pub novelty: Option<(f32, f32, bool)>,
    /// The learner's action gap (range units), once scored.
    pub action_gap: Option<f32>,
    /// The state features, in spec order.
    pub features: Vec<FeatureLine>,
    /// The action channels, in spec order.
    pub channels: Vec<ChannelLine>,
}

impl StepBrief {
    /// The brief of one row of a round; `None` when the round or row does not exist.
    pub fn of(
        campaign: &Campaign,
        round: u32,
        row: usize,
        scores: Option<&RoundScores>,
    ) -> Option<StepBrief> {
        let steps = &campaign.round(round)?.steps;
        if row >= steps.len() {
            return None;
        }
        let scores = scores.filter(|s| s.len() == steps.len());
        let spec = campaign.spec();
        let features = spec
            .features
            .iter()
            .enumerate()
            .map(|(i, f)| FeatureLine {
                name: f.name.clone(),
                unit: f.unit.clone(),
                value: steps.state(row)[i],
                share: scores
                    .and_then(|s| s.contributions.get(row * steps.state_dim + i))
                    .copied()
                    .unwrap_or(f32::NAN),
            })
            .collect();
        let demos = &campaign.demonstrations;
        let near: Vec<usize> = scores
            .and_then(|s| s.neighbours.get(row * s.k..(row + 1) * s.k))
            .map_or(Vec::new(), |n| n.iter().map(|&r| r as usize).collect());
        let a = steps.action_dim;
        let channels = spec
            .actions
            .iter()
            .enumerate()
            .map(|(c, ch)| ChannelLine {
                channel: ch.clone(),
                learner: steps.action(row)[c],
                suggested: scores
                    .and_then(|s| s.neighbour_action.get(row * a + c))
                    .copied()
                    .unwrap_or(steps.action(row)[c]),
                neighbours: near
                    .iter()
                    .filter(|&&r| r < demos.len())
                    .map(|&r| demos.action(r)[c])
                    .collect(),
            })
            .collect();
        Some(StepBrief {
            round,
            row,
            episode: steps.episodes[steps.episode_of(row)].name.clone(),
            t: steps.t[row],
            fingerprint: fingerprint(steps, row),
            fingerprint_v1: fingerprint_v1(steps, row),
            novelty: scores.and_then(|s| {
                Some((
                    *s.novelty.get(row)?,
                    *s.p_value.get(row)?,
                    *s.flagged.get(row)?,
                ))
            }),
            action_gap: scores.and_then(|s| s.action_gap.get(row).copied()),
            features,
            channels,
        })
    }

    /// The suggested action, one value per channel (within each channel's bounds).
    pub fn suggestion(&self) -> Vec<f32> {
        self.channels
            .iter()
            .map(|c| clamp(&c.channel, c.suggested))
            .collect()
    }

    /// A correction of this step with the given verdict and note (an empty note is none).
    pub fn correction(&self, verdict: Verdict, note: &str) -> Correction {
        let note = note.trim();
        Correction {
            round: self.round,
            episode: self.episode.clone(),
            t: self.t,
            fingerprint: self.fingerprint.clone(),
            verdict,
            note: (!note.is_empty()).then(|| note.to_string()),
        }
    }

    /// True when a verdict given with `recorded` was given for other data than the step holds
    /// now.
    pub fn is_stale(&self, recorded: &str) -> bool {
        if recorded.starts_with(crate::ledger::fingerprint::V2_PREFIX) {
            recorded != self.fingerprint
        } else {
            recorded != self.fingerprint_v1
        }
    }
}

/// A channel's bounds: `low..=high`, or the choice indices of a discrete channel.
pub fn bounds(channel: &ActionChannel) -> (f32, f32) {
    match &channel.kind {
        ChannelKind::Continuous { low, high } => (*low as f32, *high as f32),
        ChannelKind::Discrete { choices } => (0.0, choices.len().saturating_sub(1) as f32),
    }
}

/// A value brought within the channel's bounds (rounded to a choice for discrete channels).
pub fn clamp(channel: &ActionChannel, v: f32) -> f32 {
    let (lo, hi) = bounds(channel);
    let v = if v.is_finite() { v } else { lo };
    match channel.kind {
        ChannelKind::Continuous { .. } => v.clamp(lo, hi),
        ChannelKind::Discrete { .. } => v.round().clamp(lo, hi),
    }
}

/// Moves a value by `steps` keyboard steps: 1/50 of the range for a continuous channel (so
/// 50 presses cross it), one choice for a discrete one; the result stays within bounds.
pub fn nudge(channel: &ActionChannel, v: f32, steps: i32) -> f32 {
    let delta = match channel.kind {
        ChannelKind::Continuous { .. } => channel.range() as f32 / 50.0,
        ChannelKind::Discrete { .. } => 1.0,
    };
    clamp(channel, v + delta * steps as f32)
}

#[cfg(test)]
mod tests {
    use super::*;

    fn steer() -> ActionChannel {
        ActionChannel {
            name: "steer".into(),
            unit: "rad".into(),
            kind: ChannelKind::Continuous {
                low: -0.5,
                high: 0.5,
            },
        }
    }

    #[test]
    fn nudges_stay_within_bounds_and_snap_choices() {
        assert!((nudge(&steer(), 0.0, 5) - 0.1).abs() < 1e-6);
        assert_eq!(nudge(&steer(), 0.45, 10), 0.5);
        let gear = ActionChannel {
            name: "gear".into(),
            unit: String::new(),
            kind: ChannelKind::Discrete {
                choices: vec!["low".into(), "high".into()],
            },
        };
        assert_eq!(nudge(&gear, 0.0, 1), 1.0);
        assert_eq!(nudge(&gear, 1.0, 3), 1.0);
        assert_eq!(clamp(&gear, 0.6), 1.0);
        assert_eq!(clamp(&steer(), f32::NAN), -0.5);
    }
}

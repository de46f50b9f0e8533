//! Consensus across annotators: per-step consensus actions, verdict counts, spreads and
//! Krippendorff's alpha per action channel.
//!
//! [`tally`] reads nothing from disk: give it the campaign and the ledgers (from
//! [`crate::ledger::read_ledgers`]). Rules for one step are in [`step`]; which records count
//! (retractions, latest wins, fingerprints) is in [`resolve`].

pub mod alpha;
pub mod resolve;
pub mod step;

pub use alpha::{Metric, krippendorff_alpha};
pub use resolve::{Judged, Mismatch, Unapplied, Vote};
pub use step::StepConsensus;

use crate::campaign::{Campaign, ChannelKind};
use crate::ledger::{AnnotatorLedger, LedgerProblem};

/// Agreement on one action channel (or on the verdict kind) over steps with two or more
/// verdicts.
#[derive(Debug, Clone, PartialEq)]
pub struct ChannelAgreement {
    /// Channel name (`verdict` for the action-versus-unrecoverable agreement).
    pub channel: String,
    /// Interval for continuous channels, nominal for discrete ones and for the verdict kind.
    pub metric: Metric,
    /// Krippendorff's alpha; `None` when undefined (too few values, or no variation).
    pub alpha: Option<f64>,
    /// Steps that entered the statistic.
    pub units: usize,
    /// Values that entered the statistic.
    pub values: usize,
}

/// Counts for one round.
#[derive(Debug, Clone, Default, PartialEq, Eq)]
pub struct RoundTally {
    /// Round number.
    pub round: u32,
    /// Steps in the round.
    pub steps: usize,
    /// Steps with at least one standing verdict.
    pub judged: usize,
    /// Steps with a consensus action.
    pub with_action: usize,
    /// Steps with verdicts from two or more annotators.
    pub multi: usize,
    /// Action verdicts.
    pub action_votes: usize,
    /// `skip` verdicts.
    pub skip_votes: usize,
    /// `unrecoverable` verdicts.
    pub unrecoverable_votes: usize,
}

/// A ledger that went into a tally, for provenance.
#[derive(Debug, Clone, PartialEq)]
pub struct LedgerSource {
    /// The annotator.
    pub annotator: String,
    /// The ledger file.
    pub path: std::path::PathBuf,
    /// SHA-256 (hex) of the bytes that were read.
    pub sha256: String,
    /// How many bytes were read.
    pub bytes: u64,
    /// Well-formed records read.
    pub records: usize,
}

/// Everything the annotators said about a campaign, aggregated.
#[derive(Debug, Clone, PartialEq)]
pub struct Tally {
    /// The ledgers read, sorted by annotator.
    pub ledgers: Vec<LedgerSource>,
    /// Steps with at least one standing verdict, by (round, row).
    pub steps: Vec<StepConsensus>,
    /// Counts per round, by round number (every round of the campaign).
    pub rounds: Vec<RoundTally>,
    /// Agreement per action channel, in spec order.
    pub channels: Vec<ChannelAgreement>,
    /// Agreement on action versus `unrecoverable` (nominal; `skip` abstains).
    pub verdicts: ChannelAgreement,
    /// Corrections whose step data changed since: reported, not applied.
    pub mismatches: Vec<Mismatch>,
    /// Corrections that fit no step or no spec: reported, not applied.
    pub unapplied: Vec<Unapplied>,
    /// Malformed ledger lines.
    pub ledger_problems: Vec<LedgerProblem>,
}

impl Tally {
    /// The consensus of a step, if it has any verdict.
    pub fn step(&self, round: u32, row: usize) -> Option<&StepConsensus> {
        self.steps
            .binary_search_by_key(&(round, row), |s| (s.round, s.row))
            .ok()
            .map(|i| &self.steps[i])
    }
}

/// Aggregates the ledgers of a campaign. The result does not depend on the order of
/// `ledgers` (they are taken in annotator order), so an export is the same bytes however
/// its ledgers were listed.
pub fn tally(campaign: &Campaign, ledgers: &[AnnotatorLedger]) -> Tally {
    if !ledgers.is_sorted_by(|a, b| a.annotator <= b.annotator) {
        let mut sorted = ledgers.to_vec();
        sorted.sort_by(|a, b| a.annotator.cmp(&b.annotator));
        return tally(campaign, &sorted);
    }
    let resolved = resolve::resolve(campaign, ledgers);
    let spec = campaign.spec();
    let steps: Vec<StepConsensus> = resolved
        .votes
        .into_iter()
        .filter_map(|((round, row), votes)| {
            let table = &campaign.round(round)?.steps;
            let episode = &table.episodes[table.episode_of(row)].name;
            Some(StepConsensus::new(
                spec,
                round,
                row,
                episode,
                table.t[row],
                votes,
            ))
        })
        .collect();
    let channels = spec
        .actions
        .iter()
        .enumerate()
        .map(|(c, ch)| {
            let metric = match ch.kind {
                ChannelKind::Continuous { .. } => Metric::Interval,
                ChannelKind::Discrete { .. } => Metric::Nominal,
            };
            let units = steps.iter().map(|s| channel_values(s, c)).collect();
            agreement(&ch.name, metric, units)
        })
        .collect();
    let kinds = steps.iter().map(verdict_values).collect();
    Tally {
        ledgers: ledgers
            .iter()
            .map(|l| LedgerSource {
                annotator: l.annotator.clone(),
                path: l.path.clone(),
                sha256: l.sha256.clone(),
                bytes: l.bytes,
                records: l.records.len(),
            })
            .collect(),
        rounds: round_counts(campaign, &steps),
        channels,
        verdicts: agreement("verdict", Metric::Nominal, kinds),
        steps,
        mismatches: resolved.mismatches,
        unapplied: resolved.unapplied,
        ledger_problems: ledgers.iter().flat_map(|l| l.problems.clone()).collect(),
    }
}

fn channel_values(s: &StepConsensus, c: usize) -> Vec<f64> {
    s.votes
        .iter()
        .filter_map(|v| match &v.judged {
            Judged::Action(a) => Some(f64::from(a[c])),
            _ => None,
        })
        .collect()
}

/// 1 for an action, 0 for `unrecoverable`; `skip` is missing.
fn verdict_values(s: &StepConsensus) -> Vec<f64> {
    s.votes
        .iter()
        .filter_map(|v| match v.judged {
            Judged::Action(_) => Some(1.0),
            Judged::Unrecoverable => Some(0.0),
            Judged::Skip => None,
        })
        .collect()
}

fn agreement(channel: &str, metric: Metric, units: Vec<Vec<f64>>) -> ChannelAgreement {
    let pairable: Vec<Vec<f64>> = units.into_iter().filter(|u| u.len() >= 2).collect();
    ChannelAgreement {
        channel: channel.to_string(),
        metric,
        alpha: krippendorff_alpha(&pairable, metric),
        units: pairable.len(),
        values: pairable.iter().map(Vec::len).sum(),
    }
}

fn round_counts(campaign: &Campaign, steps: &[StepConsensus]) -> Vec<RoundTally> {
    campaign
        .rounds
        .iter()
        .map(|r| {
            let mut t = RoundTally {
                round: r.number,
                steps: r.steps.len(),
                ..Default::default()
            };
            for s in steps.iter().filter(|s| s.round == r.number) {
                t.judged += 1;
                t.with_action += usize::from(s.action.is_some());
                t.multi += usize::from(s.votes.len() >= 2);
                t.action_votes += s.actions;
                t.skip_votes += s.skips;
                t.unrecoverable_votes += s.unrecoverable;
            }
            t
        })
        .collect()
}

#[cfg(test)]
mod tests;

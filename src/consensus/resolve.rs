//! From ledgers to the verdicts that count: retractions applied, the latest record of an
//! annotator for a step wins, and records that no longer fit the campaign are set apart.

use std::collections::BTreeMap;

use crate::campaign::Campaign;
use crate::ledger::{AnnotatorLedger, Verdict, fingerprint, fingerprint_matches, standing};

/// A verdict in the campaign's terms.
#[derive(Debug, Clone, PartialEq)]
pub enum Judged {
    /// A recovery action as a stored vector (choice indices for discrete channels).
    Action(Vec<f32>),
    /// The annotator passed on the step.
    Skip,
    /// The annotator judged the state unrecoverable.
    Unrecoverable,
}

/// One annotator's standing verdict on one step.
#[derive(Debug, Clone, PartialEq)]
pub struct Vote {
    /// The annotator.
    pub annotator: String,
    /// Sequence number of the record in the annotator's ledger.
    pub seq: u64,
    /// The verdict.
    pub judged: Judged,
}

/// A correction whose step fingerprint differs from the campaign's data now: reported,
/// not applied.
#[derive(Debug, Clone, PartialEq)]
pub struct Mismatch {
    /// The annotator.
    pub annotator: String,
    /// Sequence number in the annotator's ledger.
    pub seq: u64,
    /// Round.
    pub round: u32,
    /// Episode.
    pub episode: String,
    /// Time index.
    pub t: i64,
    /// Fingerprint written in the ledger.
    pub recorded: String,
    /// Fingerprint of the step in the campaign as loaded.
    pub current: String,
}

/// A correction that cannot be applied for another reason (unknown round or step, an action
/// that does not fit the spec).
#[derive(Debug, Clone, PartialEq)]
pub struct Unapplied {
    /// The annotator.
    pub annotator: String,
    /// Sequence number in the annotator's ledger.
    pub seq: u64,
    /// Why, naming the field.
    pub reason: String,
}

/// The standing verdicts by (round, row), and what was set apart.
#[derive(Debug, Default)]
pub(crate) struct Resolved {
    pub votes: BTreeMap<(u32, usize), Vec<Vote>>,
    pub mismatches: Vec<Mismatch>,
    pub unapplied: Vec<Unapplied>,
}

pub(crate) fn resolve(campaign: &Campaign, ledgers: &[AnnotatorLedger]) -> Resolved {
    let mut out = Resolved::default();
    for l in ledgers {
        for (seq, c) in standing(&l.records) {
            let unapplied = |reason: String| Unapplied {
                annotator: l.annotator.clone(),
                seq,
                reason,
            };
            let Some(round) = campaign.round(c.round) else {
                let reason = format!("field `round`: the campaign has no round {}", c.round);
                out.unapplied.push(unapplied(reason));
                continue;
            };
            let Some(row) = round.steps.find(&c.episode, c.t) else {
                let reason = format!(
                    "fields `episode`, `t`: round {} has no step `{}` t {}",
                    c.round, c.episode, c.t
                );
                out.unapplied.push(unapplied(reason));
                continue;
            };
            if !fingerprint_matches(&round.steps, row, &c.fingerprint) {
                let current = fingerprint(&round.steps, row);
                out.mismatches.push(Mismatch {
                    annotator: l.annotator.clone(),
                    seq,
                    round: c.round,
                    episode: c.episode.clone(),
                    t: c.t,
                    recorded: c.fingerprint.clone(),
                    current,
                });
                continue;
            }
            let judged = match &c.verdict {
                Verdict::Skip => Judged::Skip,
                Verdict::Unrecoverable => Judged::Unrecoverable,
                v @ Verdict::Action(_) => match v.action_vector(campaign.spec()) {
                    Some(Ok(a)) => Judged::Action(a),
                    Some(Err(e)) => {
                        out.unapplied
                            .push(unapplied(format!("field `verdict.action`: {e}")));
                        continue;
                    }
                    None => continue,
                },
            };
            out.votes.entry((c.round, row)).or_default().push(Vote {
                annotator: l.annotator.clone(),
                seq,
                judged,
            });
        }
    }
    out
}

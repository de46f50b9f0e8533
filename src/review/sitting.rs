//! A review sitting: the review list as one annotator works through it.
//!
//! Nothing of a sitting is stored apart from the ledgers, so closing the window and opening it
//! again gives the same list. The steps of the round the annotator has judged are the done
//! entries, in the order they were judged; the rest of the budget is planned by the
//! [`Planner`] seeded with every judged state (this annotator's and the other annotators'),
//! so ground already covered is not asked again. Calling [`Sitting::update`] after each
//! verdict re-ranks the open entries.

use std::collections::{HashMap, HashSet};

use super::plan::{PlanSettings, Planner, Reason, states_of_rows};
use crate::campaign::StepTable;
use crate::ledger::{Entry, Record, Verdict};
use crate::novelty::RoundScores;

/// Where an entry of the review list stands for the annotator.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash)]
pub enum Status {
    /// Not judged yet.
    Open,
    /// A recovery action was saved.
    Corrected,
    /// The annotator passed on it.
    Skipped,
    /// Judged unrecoverable.
    Unrecoverable,
}

impl Status {
    /// The status a verdict gives.
    pub fn of(verdict: &Verdict) -> Status {
        match verdict {
            Verdict::Action(_) => Status::Corrected,
            Verdict::Skip => Status::Skipped,
            Verdict::Unrecoverable => Status::Unrecoverable,
        }
    }

    /// The status in words.
    pub fn as_str(self) -> &'static str {
        match self {
            Status::Open => "open",
            Status::Corrected => "corrected",
            Status::Skipped => "skipped",
            Status::Unrecoverable => "unrecoverable",
        }
    }
}

/// One entry of a sitting's list.
#[derive(Debug, Clone, PartialEq)]
pub struct SittingEntry {
    /// Row of the round's step table.
    pub row: usize,
    /// Episode index.
    pub episode: usize,
    /// Time index.
    pub t: i64,
    /// Why it is (or would have been) on the list; empty for a step judged off the list.
    pub reasons: Vec<Reason>,
    /// Novelty of the step.
    pub novelty: f32,
    /// Where it stands.
    pub status: Status,
    /// Sequence number of the standing record in the annotator's ledger (done entries).
    pub seq: Option<u64>,
}

/// One annotator's standing verdict on a row of the round.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct Judgement {
    /// Row of the round's step table.
    pub row: usize,
    /// What the verdict says.
    pub status: Status,
    /// Sequence number of the record.
    pub seq: u64,
}

/// The standing verdicts of one ledger's records on a round, in the order they were given
/// (latest record per step wins; retracted corrections do not stand; steps the table does not
/// hold are left out).
pub fn judgements(steps: &StepTable, round: u32, records: &[Record]) -> Vec<Judgement> {
    let retracted: HashSet<u64> = records
        .iter()
        .filter_map(|r| match r.entry {
            Entry::Retraction(x) => Some(x.retracts),
            Entry::Correction(_) => None,
        })
        .collect();
    let mut latest: HashMap<usize, Judgement> = HashMap::new();
    for r in records.iter().filter(|r| !retracted.contains(&r.seq)) {
        let Some(c) = r.correction().filter(|c| c.round == round) else {
            continue;
        };
        if let Some(row) = steps.find(&c.episode, c.t) {
            let status = Status::of(&c.verdict);
            latest.insert(
                row,
                Judgement {
                    row,
                    status,
                    seq: r.seq,
                },
            );
        }
    }
    let mut out: Vec<Judgement> = latest.into_values().collect();
    out.sort_by_key(|j| j.seq);
    out
}

/// The review list of one round as an annotator works through it.
#[derive(Debug, Clone)]
pub struct Sitting {
    planner: Planner,
    /// The round.
    pub round: u32,
    /// Most entries (done and open).
    pub budget: usize,
    /// Done entries in the order judged, then open entries by priority.
    pub entries: Vec<SittingEntry>,
    /// Largest scaled distance from a remaining candidate to the nearest judged step or entry.
    pub covering_radius: f32,
}

impl Sitting {
    /// Finds the round's candidates (the scores-only part); the list is empty until
    /// [`Sitting::update`].
    pub fn new(steps: &StepTable, scores: &RoundScores, round: u32, s: &PlanSettings) -> Self {
        Sitting {
            planner: Planner::new(steps, scores, s),
            round,
            budget: s.budget,
            entries: Vec::new(),
            covering_radius: f32::INFINITY,
        }
    }

    /// Rebuilds the list: `own` (this annotator's judgements, in order) are the done entries;
    /// the rest of the budget is planned with every judged row (`own` and `others`) as seeds.
    pub fn update(
        &mut self,
        steps: &StepTable,
        scores: &RoundScores,
        own: &[Judgement],
        others: &[usize],
    ) {
        let mut seeds: Vec<usize> = own.iter().map(|j| j.row).collect();
        seeds.extend_from_slice(others);
        let states = states_of_rows(steps, &seeds);
        let limit = self.budget.saturating_sub(own.len());
        let list = self.planner.plan_up_to(steps, scores, &states, limit);
        self.covering_radius = list.covering_radius;
        let done = own.iter().map(|j| SittingEntry {
            row: j.row,
            episode: steps.episode_of(j.row),
            t: steps.t[j.row],
            reasons: self.planner.reasons_of(j.row).to_vec(),
            novelty: scores.novelty.get(j.row).copied().unwrap_or(f32::NAN),
            status: j.status,
            seq: Some(j.seq),
        });
        let open = list.entries.into_iter().map(|e| SittingEntry {
            row: e.row,
            episode: e.episode,
            t: e.t,
            reasons: e.reasons,
            novelty: e.novelty,
            status: Status::Open,
            seq: None,
        });
        self.entries = done.chain(open).collect();
    }

    /// Entries with a verdict.
    pub fn done(&self) -> usize {
        self.entries
            .iter()
            .filter(|e| e.status != Status::Open)
            .count()
    }

    /// The highest-ranked open entry that is not on `row` (the step on the desk).
    pub fn next_open(&self, row: Option<usize>) -> Option<&SittingEntry> {
        self.entries
            .iter()
            .find(|e| e.status == Status::Open && Some(e.row) != row)
    }

    /// The entry on a row, if the row is on the list.
    pub fn entry_at(&self, row: usize) -> Option<&SittingEntry> {
        self.entries.iter().find(|e| e.row == row)
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::ledger::{Correction, Retraction};

    fn record(seq: u64, entry: Entry) -> Record {
        Record {
            seq,
            entry,
            annotator: "ana".into(),
            time: String::new(),
            tool: String::new(),
        }
    }

    fn correction(t: i64, verdict: Verdict) -> Entry {
        Entry::Correction(Correction {
            round: 1,
            episode: "e".into(),
            t,
            fingerprint: String::new(),
            verdict,
            note: None,
        })
    }

    #[test]
    fn judgements_follow_the_latest_standing_record_in_ledger_order() {
        let steps = StepTable {
            state_dim: 1,
            states: vec![0.0; 5],
            t: (0..5).collect(),
            episodes: vec![crate::campaign::Episode {
                name: "e".into(),
                start: 0,
                len: 5,
                source: 0,
            }],
            ..Default::default()
        };
        let records = [
            record(1, correction(3, Verdict::Skip)),
            record(2, correction(1, Verdict::Unrecoverable)),
            record(3, correction(3, Verdict::Action(vec![]))),
            record(4, correction(4, Verdict::Skip)),
            record(5, Entry::Retraction(Retraction { retracts: 4 })),
            record(6, correction(9, Verdict::Skip)),
        ];
        let j = judgements(&steps, 1, &records);
        let got: Vec<(usize, Status, u64)> = j.iter().map(|j| (j.row, j.status, j.seq)).collect();
        assert_eq!(
            got,
            [(1, Status::Unrecoverable, 2), (3, Status::Corrected, 3)]
        );
        assert!(judgements(&steps, 2, &records).is_empty());
    }
}

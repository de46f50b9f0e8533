//! A review sitting: the review list as one annotator works through it.
//!
//! The list is the one `countersteer plan` saved (`analysis/<round>/review-list.jsonl`) when
//! it is still fresh (see [`planned_list`]); otherwise it is planned now, the same way. The
//! steps of the round the annotator has judged are the done entries, in the order they were
//! judged; the open entries follow. For a list planned now, the rest of the budget is planned
//! by the [`Planner`] seeded with every judged state (this annotator's and the other
//! annotators'), so ground already covered is not asked again, and [`Sitting::update`]
//! re-ranks the open entries after each verdict. A saved list keeps its order: its entries
//! this annotator has not judged are the open ones.
//!
//! Nothing of a sitting is stored apart from the ledgers and the saved list, so closing the
//! window and opening it again gives the same list.

use std::collections::HashMap;
use std::path::{Path, PathBuf};

use super::analysis::ScoreSource;
use crate::campaign::{Spec, StepTable};
use crate::ledger::{AnnotatorLedger, Record, Verdict, standing};
use crate::novelty::RoundScores;
use crate::review::store::{SavedEntry, load_review_list, review_list_path};
use crate::review::{PlanSettings, Planner, Reason};

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
    let mut latest: HashMap<usize, Judgement> = HashMap::new();
    for (seq, c) in standing(records)
        .into_iter()
        .filter(|(_, c)| c.round == round)
    {
        if let Some(row) = steps.find(&c.episode, c.t) {
            let status = Status::of(&c.verdict);
            latest.insert(row, Judgement { row, status, seq });
        }
    }
    let mut out: Vec<Judgement> = latest.into_values().collect();
    out.sort_by_key(|j| j.seq);
    out
}

/// Rows of the round with a standing verdict in any of `ledgers` except `except`'s, each once
/// and in row order: the ground a list planned now avoids.
pub fn judged_rows(
    steps: &StepTable,
    round: u32,
    ledgers: &[AnnotatorLedger],
    except: Option<&str>,
) -> Vec<usize> {
    let mut rows: Vec<usize> = ledgers
        .iter()
        .filter(|l| Some(l.annotator.as_str()) != except)
        .flat_map(|l| judgements(steps, round, &l.records))
        .map(|j| j.row)
        .collect();
    rows.sort_unstable();
    rows.dedup();
    rows
}

/// The verdict a kind of judgement gives: a skip, unrecoverable, or the `draft` action.
pub fn verdict_for(kind: Status, spec: &Spec, draft: &[f32]) -> Verdict {
    match kind {
        Status::Skipped => Verdict::Skip,
        Status::Unrecoverable => Verdict::Unrecoverable,
        Status::Corrected | Status::Open => Verdict::from_action(spec, draft),
    }
}

/// What the saved review list of a round is worth to a sitting.
#[derive(Debug)]
pub enum Planned {
    /// No saved list.
    Missing,
    /// The saved list, planned from the scores in use.
    Fresh(Vec<SavedEntry>),
    /// A saved list that cannot be used, and why.
    Stale(String),
}

/// The saved review list of a round, when it is fresh: it was written no earlier than the saved
/// scores, and those scores are the ones in use (`source`), and every entry names a step of the
/// round. A list planned before the round was scored again is stale.
pub fn planned_list(root: &Path, round: u32, steps: &StepTable, source: &ScoreSource) -> Planned {
    let path = review_list_path(root, round);
    if !path.is_file() {
        return Planned::Missing;
    }
    let scores = match source {
        ScoreSource::Saved(p) | ScoreSource::Scored(Some(p)) => p,
        ScoreSource::Scored(None) => {
            return Planned::Stale(format!(
                "{}: the round was scored again since it was planned",
                path.display()
            ));
        }
    };
    let modified = |p: &Path| std::fs::metadata(p).and_then(|m| m.modified()).ok();
    match (modified(&path), modified(scores)) {
        (Some(list), Some(s)) if list >= s => {}
        _ => {
            return Planned::Stale(format!(
                "{}: older than the scores {}",
                path.display(),
                scores.display()
            ));
        }
    }
    match load_review_list(root, round, steps) {
        Ok(entries) => Planned::Fresh(entries),
        Err(e) => Planned::Stale(e.to_string()),
    }
}

/// Where a sitting's list comes from.
#[derive(Debug, Clone, PartialEq)]
pub enum ListOrigin {
    /// The list saved by `countersteer plan`, at this path.
    Saved(PathBuf),
    /// Planned now (no fresh saved list, or another budget was asked for).
    PlannedNow,
}

/// The review list of one round as an annotator works through it.
#[derive(Debug, Clone)]
pub struct Sitting {
    planner: Planner,
    saved: Option<Vec<SavedEntry>>,
    /// Where the list comes from.
    pub origin: ListOrigin,
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
            saved: None,
            origin: ListOrigin::PlannedNow,
            round,
            budget: s.budget,
            entries: Vec::new(),
            covering_radius: f32::INFINITY,
        }
    }

    /// A sitting over the list `countersteer plan` saved at `path`: its entries keep their
    /// order; the budget is the list's length.
    pub fn saved(
        steps: &StepTable,
        scores: &RoundScores,
        round: u32,
        path: PathBuf,
        entries: Vec<SavedEntry>,
    ) -> Self {
        let settings = PlanSettings {
            budget: entries.len().max(1),
            ..Default::default()
        };
        let mut s = Sitting::new(steps, scores, round, &settings);
        s.saved = Some(entries);
        s.origin = ListOrigin::Saved(path);
        s
    }

    /// The sitting of a round: with `saved` (where the scores in use came from), over the
    /// saved list when [`planned_list`] finds it fresh; otherwise planned now with `budget`.
    pub fn open(
        root: &Path,
        steps: &StepTable,
        scores: &RoundScores,
        round: u32,
        saved: Option<&ScoreSource>,
        budget: usize,
    ) -> Self {
        if let Some(source) = saved
            && let Planned::Fresh(entries) = planned_list(root, round, steps, source)
        {
            let path = review_list_path(root, round);
            return Sitting::saved(steps, scores, round, path, entries);
        }
        let settings = PlanSettings {
            budget: budget.max(1),
            ..Default::default()
        };
        Sitting::new(steps, scores, round, &settings)
    }

    /// Rebuilds the list: `own` (this annotator's judgements, in order) are the done entries;
    /// the open entries are the saved list's others, or (planned now) the rest of the budget
    /// planned with every judged row (`own` and `others`) as seeds.
    pub fn update(
        &mut self,
        steps: &StepTable,
        scores: &RoundScores,
        own: &[Judgement],
        others: &[usize],
    ) {
        let done: Vec<SittingEntry> = own
            .iter()
            .map(|j| SittingEntry {
                row: j.row,
                episode: steps.episode_of(j.row),
                t: steps.t[j.row],
                reasons: self.reasons_of(j.row),
                novelty: scores.novelty.get(j.row).copied().unwrap_or(f32::NAN),
                status: j.status,
                seq: Some(j.seq),
            })
            .collect();
        let open = match &self.saved {
            Some(saved) => self.saved_open(steps, scores, saved, own),
            None => self.plan_open(steps, scores, own, others),
        };
        self.entries = done.into_iter().chain(open).collect();
    }

    fn reasons_of(&self, row: usize) -> Vec<Reason> {
        let saved = self
            .saved
            .as_ref()
            .and_then(|s| s.iter().find(|e| e.row == row));
        match saved {
            Some(e) => e.reasons.clone(),
            None => self.planner.reasons_of(row).to_vec(),
        }
    }

    fn saved_open(
        &self,
        steps: &StepTable,
        scores: &RoundScores,
        saved: &[SavedEntry],
        own: &[Judgement],
    ) -> Vec<SittingEntry> {
        saved
            .iter()
            .filter(|e| own.iter().all(|j| j.row != e.row))
            .map(|e| SittingEntry {
                row: e.row,
                episode: steps.episode_of(e.row),
                t: steps.t[e.row],
                reasons: e.reasons.clone(),
                novelty: scores.novelty.get(e.row).copied().unwrap_or(f32::NAN),
                status: Status::Open,
                seq: None,
            })
            .collect()
    }

    fn plan_open(
        &mut self,
        steps: &StepTable,
        scores: &RoundScores,
        own: &[Judgement],
        others: &[usize],
    ) -> Vec<SittingEntry> {
        let mut seeds: Vec<usize> = own.iter().map(|j| j.row).collect();
        seeds.extend_from_slice(others);
        let limit = self.budget.saturating_sub(own.len());
        let list = self.planner.plan_judged(steps, scores, &seeds, limit);
        self.covering_radius = list.covering_radius;
        list.entries
            .into_iter()
            .map(|e| SittingEntry {
                row: e.row,
                episode: e.episode,
                t: e.t,
                reasons: e.reasons,
                novelty: e.novelty,
                status: Status::Open,
                seq: None,
            })
            .collect()
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
    use crate::ledger::standing_kit::{fix as correction, record, undo};

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
            record(5, undo(4)),
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
